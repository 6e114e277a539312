/* clang_tidy_probe.c - deliberately wrong code: the clang-tidy gate must
 * report both findings, or the gate itself is broken (tests/fuzz/fuzz.mk,
 * `make clang-tidy`). Never compiled into anything. */
#include <stddef.h>

int probe_depth(int n);
int probe_depth(int n)
{
    return n <= 0 ? 0 : 1 + probe_depth(n - 1); /* misc-no-recursion: flight code never recurses */
}

int probe_null(int k);
int probe_null(int k)
{
    int *p = NULL;
    if (k > 3)
        p = &k;
    return *p; /* clang-analyzer-core.NullDereference when k <= 3 */
}
