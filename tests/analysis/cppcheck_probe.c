/* cppcheck_probe.c - deliberately wrong code: the cppcheck gate must
 * report both findings, or the gate itself is broken (tests/fuzz/fuzz.mk,
 * `make cppcheck`). Never compiled into anything. */
#include <stdint.h>

int probe_overrun(void);
int probe_overrun(void)
{
    int32_t a[4];
    for (int i = 0; i <= 4; i++) /* arrayIndexOutOfBounds: a[4] */
        a[i] = i;
    return a[0];
}

int probe_uninit(int k);
int probe_uninit(int k)
{
    int v;
    if (k > 3)
        v = 1;
    return v; /* uninitvar when k <= 3 */
}
