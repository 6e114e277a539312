/*
 * test_cross.c - every golden vector on every target, byte for byte.
 *
 * For each vector of vectors/manifest.json and each target (the host
 * build, the bare-metal Cortex-M7 under qemu-system-arm with semihosting,
 * 32-bit big-endian PowerPC under qemu-ppc), the vector runner of
 * hil/targets.mk reads setup.bin, taps.bin and samples.bin and writes a
 * frame stream; it must equal the committed frames.bin exactly (a failure
 * names the first differing frame, packet, field and channel). A target
 * whose maxima do not hold a vector must refuse it with the status that
 * names the limit, exit 1 and leave no output. Both error paths (a damaged
 * setup record, a sample file cut mid-sample) must give the same one-line
 * refusal on every target.
 *
 * The runners sit in BUILD/hil, next to this binary's folder (BUILD/rel or
 * BUILD/san); the vectors in vectors/ (TL_VECTORS_DIR overrides). The time
 * per target is printed, never asserted.
 */
#include "tl_test.h"

#include <jansson.h>
#include <libgen.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "tl_bytes.h"
#include "tl_frame.h"
#include "tl_link.h"
#include "vectors.h"

enum { T_HOST, T_M7, T_PPC, T_COUNT };
static const char *const target_name[T_COUNT] = { "host", "cortex-m7", "powerpc" };

static char hil_dir[4096];   /* BUILD/hil */
static char tmp_dir[4096];
static const char *vec_dir = "vectors";
static double seconds[T_COUNT];
static unsigned runs[T_COUNT];

typedef struct cross_case {
    char vector[64];
    int target;
    int listed;        /* the manifest lists this target for the vector */
} cross_case;

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* Run the vector runner of `target` on the given files; its messages go to
 * msg. Returns the exit status (-1: did not exit normally). */
static int run_target(int target, const char *setup, const char *taps, const char *samples, const char *out,
                      char *msg, size_t cap)
{
    char cmd[16384];
    if (target == T_HOST)
        snprintf(cmd, sizeof cmd, "timeout 300 %s/host/vector-runner %s %s %s %s 2>&1", hil_dir, setup, taps, samples,
                 out);
    else if (target == T_PPC)
        snprintf(cmd, sizeof cmd, "timeout 300 qemu-ppc %s/ppc/vector-runner %s %s %s %s 2>&1", hil_dir, setup, taps,
                 samples, out);
    else
        snprintf(cmd, sizeof cmd,
                 "timeout 300 qemu-system-arm -M mps2-an500 -semihosting-config "
                 "enable=on,target=native,arg=vector-runner,arg=%s,arg=%s,arg=%s,arg=%s "
                 "-display none -monitor none -serial null -kernel %s/m7/vector-runner.elf 2>&1",
                 setup, taps, samples, out, hil_dir);
    const double t0 = now();
    FILE *p = popen(cmd, "r");
    if (p == NULL)
        fail_msg("cannot run: %s", cmd);
    size_t n = fread(msg, 1, cap - 1u, p);
    msg[n] = '\0';
    const int st = pclose(p);
    seconds[target] += now() - t0;
    runs[target]++;
    return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

static uint8_t *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return NULL;
    fseek(f, 0, SEEK_END);
    const long n = ftell(f);
    fseek(f, 0, SEEK_SET);
    uint8_t *b = malloc(n > 0 ? (size_t)n : 1u);
    if (b == NULL || fread(b, 1, (size_t)n, f) != (size_t)n) {
        free(b);
        fclose(f);
        return NULL;
    }
    fclose(f);
    *len = (size_t)n;
    return b;
}

static int exists(const char *path)
{
    struct stat st;
    return stat(path, &st) == 0;
}

static void vector_case(void **state)
{
    const cross_case *cc = *state;
    char setup[4400], taps[4400], samples[4400], expect[4400], out[4400], part[4500];
    snprintf(setup, sizeof setup, "%s/%s/setup.bin", vec_dir, cc->vector);
    snprintf(taps, sizeof taps, "%s/%s/taps.bin", vec_dir, cc->vector);
    snprintf(samples, sizeof samples, "%s/%s/samples.bin", vec_dir, cc->vector);
    snprintf(expect, sizeof expect, "%s/%s/frames.bin", vec_dir, cc->vector);
    snprintf(out, sizeof out, "%s/%s-%s.bin", tmp_dir, target_name[cc->target], cc->vector);
    snprintf(part, sizeof part, "%s.part", out);
    if (!exists(taps))
        snprintf(taps, sizeof taps, "-");
    unlink(out);
    char msg[4096];
    const int rc = run_target(cc->target, setup, taps, samples, out, msg, sizeof msg);
    if (!cc->listed) {
        /* beyond this target's maxima: refused by name, nothing written */
        if (rc != 1 || exists(out) || exists(part))
            fail_msg("%s %s: exit %d, expected a refusal (exit 1, no output): %s", target_name[cc->target],
                     cc->vector, rc, msg);
        if (strstr(msg, "TL_E_POINTS") == NULL && strstr(msg, "TL_E_TAPS") == NULL)
            fail_msg("%s %s: the refusal does not name TL_E_POINTS or TL_E_TAPS: %s", target_name[cc->target],
                     cc->vector, msg);
        return;
    }
    if (rc != 0)
        fail_msg("%s %s: exit %d: %s", target_name[cc->target], cc->vector, rc, msg);
    size_t el = 0, gl = 0, sl = 0;
    uint8_t *e = slurp(expect, &el), *g = slurp(out, &gl), *s = slurp(setup, &sl);
    if (e == NULL || g == NULL || s == NULL || sl != TL_LINK_SETUP_OCTETS)
        fail_msg("%s %s: cannot read %s, %s or %s", target_name[cc->target], cc->vector, expect, out, setup);
    /* the expected stream is whole frames; a vector is never empty */
    const uint32_t frame_len = tl_get_be32(s + TL_LINK_SETUP_OFF_FRAME_LEN);
    assert_true(el > 0u);
    assert_int_equal(el % TL_FRAME_WIRE_LEN(frame_len), 0);
    if (el != gl || memcmp(e, g, el) != 0) {
        char why[1024];
        tl_vectors_describe(e, el, g, gl, frame_len, why, sizeof why);
        fail_msg("%s %s: frame stream differs from %s: %s", target_name[cc->target], cc->vector, expect, why);
    }
    free(e);
    free(g);
    free(s);
    unlink(out);
}

/* A damaged input gives the same one-line refusal on every target. */
static void refusals_agree(void **state)
{
    (void)state;
    const char *v = "channels-min";
    char setup[4400], bad_setup[4400], samples[4400], cut[4400], taps[4400], out[4400];
    snprintf(setup, sizeof setup, "%s/%s/setup.bin", vec_dir, v);
    snprintf(taps, sizeof taps, "%s/%s/taps.bin", vec_dir, v);
    snprintf(samples, sizeof samples, "%s/%s/samples.bin", vec_dir, v);
    snprintf(bad_setup, sizeof bad_setup, "%s/bad-setup.bin", tmp_dir);
    snprintf(cut, sizeof cut, "%s/cut-samples.bin", tmp_dir);
    snprintf(out, sizeof out, "%s/refused.bin", tmp_dir);
    size_t sl = 0, nl = 0;
    uint8_t *s = slurp(setup, &sl), *x = slurp(samples, &nl);
    assert_non_null(s);
    assert_non_null(x);
    tl_put_be32(s + TL_LINK_SETUP_OFF_VCID, 256u); /* the VCID goes into an octet */
    FILE *f = fopen(bad_setup, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(s, 1, sl, f), sl);
    fclose(f);
    f = fopen(cut, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(x, 1, nl - 1u, f), nl - 1u); /* one octet short of a whole sample */
    fclose(f);
    free(s);
    free(x);
    char first[2][4096];
    for (int t = 0; t < T_COUNT; t++) {
        char msg[4096];
        int rc = run_target(t, bad_setup, taps, samples, out, msg, sizeof msg);
        if (rc != 1 || strstr(msg, "field vcid (octet 160): must be 0 .. 255") == NULL || exists(out))
            fail_msg("%s: damaged setup: exit %d, message: %s", target_name[t], rc, msg);
        if (t == 0)
            snprintf(first[0], sizeof first[0], "%s", msg);
        else
            assert_string_equal(msg, first[0]);
        rc = run_target(t, setup, taps, cut, out, msg, sizeof msg);
        if (rc != 1 || strstr(msg, "length must be a multiple of 2 octets") == NULL || exists(out))
            fail_msg("%s: cut samples: exit %d, message: %s", target_name[t], rc, msg);
        if (t == 0)
            snprintf(first[1], sizeof first[1], "%s", msg);
        else
            assert_string_equal(msg, first[1]);
    }
    unlink(bad_setup);
    unlink(cut);
}

int main(int argc, char **argv)
{
    (void)argc;
    char self[4096];
    snprintf(self, sizeof self, "%s", argv[0]);
    snprintf(hil_dir, sizeof hil_dir, "%s/../hil", dirname(self));
    if (getenv("TL_VECTORS_DIR") != NULL)
        vec_dir = getenv("TL_VECTORS_DIR");
    snprintf(tmp_dir, sizeof tmp_dir, "%s/tidelock-cross-XXXXXX", getenv("TMPDIR") ? getenv("TMPDIR") : "/tmp");
    if (mkdtemp(tmp_dir) == NULL) {
        fprintf(stderr, "test_cross: cannot create a temporary folder\n");
        return 1;
    }
    char path[4400];
    snprintf(path, sizeof path, "%s/%s", vec_dir, TL_VECTORS_MANIFEST);
    json_error_t je;
    json_t *man = json_load_file(path, 0, &je);
    json_t *list = man != NULL ? json_object_get(man, "vectors") : NULL;
    if (!json_is_array(list) || json_array_size(list) == 0) {
        fprintf(stderr, "test_cross: %s: no vector list (%s)\n", path, man == NULL ? je.text : "no \"vectors\" array");
        return 1;
    }
    const size_t nv = json_array_size(list);
    struct CMUnitTest *tests = calloc(nv * T_COUNT + 1u, sizeof *tests);
    cross_case *cases = calloc(nv * T_COUNT, sizeof *cases);
    char (*names)[128] = calloc(nv * T_COUNT, sizeof *names);
    if (tests == NULL || cases == NULL || names == NULL)
        return 1;
    size_t k = 0;
    for (size_t i = 0; i < nv; i++) {
        json_t *v = json_array_get(list, i);
        const char *name = json_string_value(json_object_get(v, "name"));
        json_t *targets = json_object_get(v, "targets");
        if (name == NULL || !json_is_array(targets)) {
            fprintf(stderr, "test_cross: %s: vector %zu has no name or targets\n", path, i);
            return 1;
        }
        for (int t = 0; t < T_COUNT; t++) {
            cross_case *cc = &cases[k];
            snprintf(cc->vector, sizeof cc->vector, "%s", name);
            cc->target = t;
            for (size_t j = 0; j < json_array_size(targets); j++)
                cc->listed |= strcmp(json_string_value(json_array_get(targets, j)), target_name[t]) == 0;
            snprintf(names[k], sizeof names[k], "%s %s%s", target_name[t], name, cc->listed ? "" : " (refused)");
            tests[k].name = names[k];
            tests[k].test_func = vector_case;
            tests[k].initial_state = cc;
            k++;
        }
    }
    tests[k].name = "damaged inputs refused alike on every target";
    tests[k].test_func = refusals_agree;
    k++;
    const int failed = _cmocka_run_group_tests("cross-target vectors", tests, k, NULL, NULL);
    printf("cross-target time for %zu vectors: host %.2f s, cortex-m7 %.2f s, powerpc %.2f s (%u, %u, %u runs)\n", nv,
           seconds[T_HOST], seconds[T_M7], seconds[T_PPC], runs[T_HOST], runs[T_M7], runs[T_PPC]);
    rmdir(tmp_dir);
    json_decref(man);
    free(tests);
    free(cases);
    free(names);
    return failed == 0 ? 0 : 1;
}
