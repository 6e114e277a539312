/*
 * test_link.c - the link protocol (firmware/tl_link.h, docs/icd.md "Link
 * protocol") and `tidelock hil`:
 *  - COBS against the worked examples that accompany the method, and
 *    round trips of random data;
 *  - the link frame octet by octet, with the CRC-32C recomputed bitwise
 *    here; every single-octet corruption of a frame rejected; the
 *    receiver's framing through garbage and overlong frames;
 *  - `tidelock hil` against the link target as a host process, as a
 *    big-endian PowerPC process (qemu-ppc) and on the emulated Cortex-M7's
 *    UART; with a corrupted octet each way (NAK and resend; a damaged
 *    frame stream run again), garbage on the line, a target that restarts,
 *    one that never answers, one in flight or locked mode, and a vector
 *    whose expected frames are wrong; the JUnit report.
 * The targets are in BUILD/hil next to this binary's folder.
 */
#include "tl_test.h"

#include <libgen.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "rng.h"
#include "tl_bytes.h"
#include "tl_link.h"

static char hil_dir[4096];
static const char *argv0;

/* ---- COBS ------------------------------------------------------------------------ */

static void check_cobs(const uint8_t *in, size_t n, const uint8_t *want, size_t wn)
{
    uint8_t out[600], back[600];
    const size_t e = tl_cobs_encode(in, n, out, sizeof out);
    assert_int_equal(e, wn);
    assert_memory_equal(out, want, wn);
    size_t bl = 0;
    assert_int_equal(tl_cobs_decode(out, e, back, sizeof back, &bl), TL_OK);
    assert_int_equal(bl, n);
    if (n > 0)
        assert_memory_equal(back, in, n);
}

static void cobs_examples(void **state)
{
    (void)state;
    /* The worked examples given with COBS (S. Cheshire and M. Baker,
     * "Consistent Overhead Byte Stuffing", IEEE/ACM Trans. Networking 7(2),
     * 1999, as reproduced in reference texts) [memory], without the
     * trailing 0x00 delimiter. */
    check_cobs((const uint8_t[]){ 0x00 }, 1, (const uint8_t[]){ 0x01, 0x01 }, 2);
    check_cobs((const uint8_t[]){ 0x00, 0x00 }, 2, (const uint8_t[]){ 0x01, 0x01, 0x01 }, 3);
    check_cobs((const uint8_t[]){ 0x00, 0x11, 0x00 }, 3, (const uint8_t[]){ 0x01, 0x02, 0x11, 0x01 }, 4);
    check_cobs((const uint8_t[]){ 0x11, 0x22, 0x00, 0x33 }, 4, (const uint8_t[]){ 0x03, 0x11, 0x22, 0x02, 0x33 }, 5);
    check_cobs((const uint8_t[]){ 0x11, 0x22, 0x33, 0x44 }, 4, (const uint8_t[]){ 0x05, 0x11, 0x22, 0x33, 0x44 }, 5);
    check_cobs((const uint8_t[]){ 0x11, 0x00, 0x00, 0x00 }, 4, (const uint8_t[]){ 0x02, 0x11, 0x01, 0x01, 0x01 }, 5);
    uint8_t in[300], want[300];
    /* 01 .. FE (254 octets) -> FF 01 .. FE */
    for (int i = 0; i < 254; i++)
        in[i] = (uint8_t)(i + 1);
    want[0] = 0xFF;
    memcpy(want + 1, in, 254);
    check_cobs(in, 254, want, 255);
    /* 00 01 .. FE (255 octets) -> 01 FF 01 .. FE */
    in[0] = 0;
    for (int i = 1; i < 255; i++)
        in[i] = (uint8_t)i;
    want[0] = 0x01;
    want[1] = 0xFF;
    memcpy(want + 2, in + 1, 254);
    check_cobs(in, 255, want, 256);
    /* 01 .. FF (255 octets) -> FF 01 .. FE 02 FF */
    for (int i = 0; i < 255; i++)
        in[i] = (uint8_t)(i + 1);
    want[0] = 0xFF;
    memcpy(want + 1, in, 254);
    want[255] = 0x02;
    want[256] = 0xFF;
    check_cobs(in, 255, want, 257);
    /* 02 .. FF 00 (255 octets) -> FF 02 .. FF 01 01 */
    for (int i = 0; i < 254; i++)
        in[i] = (uint8_t)(i + 2);
    in[254] = 0;
    want[0] = 0xFF;
    memcpy(want + 1, in, 254);
    want[255] = 0x01;
    want[256] = 0x01;
    check_cobs(in, 255, want, 257);
    /* 03 .. FF 00 01 (255 octets) -> FE 03 .. FF 02 01 */
    for (int i = 0; i < 253; i++)
        in[i] = (uint8_t)(i + 3);
    in[253] = 0;
    in[254] = 1;
    want[0] = 0xFE;
    memcpy(want + 1, in, 253);
    want[254] = 0x02;
    want[255] = 0x01;
    check_cobs(in, 255, want, 256);
    /* refusals: a 0x00 inside, a code running past the end, no room */
    uint8_t out[8];
    size_t ol = 0;
    assert_int_equal(tl_cobs_decode((const uint8_t[]){ 0x03, 0x11, 0x00 }, 3, out, sizeof out, &ol), TL_E_FORMAT);
    assert_int_equal(tl_cobs_decode((const uint8_t[]){ 0x05, 0x11, 0x22 }, 3, out, sizeof out, &ol), TL_E_FORMAT);
    assert_int_equal(tl_cobs_decode((const uint8_t[]){ 0x00 }, 1, out, sizeof out, &ol), TL_E_FORMAT);
    assert_int_equal(tl_cobs_decode((const uint8_t[]){ 0x05, 0x11, 0x22, 0x33, 0x44 }, 5, out, 3, &ol), TL_E_SPACE);
    assert_int_equal(tl_cobs_encode((const uint8_t[]){ 0x11, 0x22 }, 2, out, 2), 0u);
}

static void cobs_round_trips(void **state)
{
    (void)state;
    const uint64_t seed = tl_test_seed("cobs_round_trips", 11);
    tl_rng r;
    tl_rng_seed(&r, seed);
    static uint8_t in[5000], enc[5100], back[5000];
    for (int t = 0; t < 400; t++) {
        const size_t n = (size_t)(tl_rng_u64(&r) % 5000u);
        const unsigned zeros = (unsigned)(tl_rng_u64(&r) % 4u); /* none, few, many, all */
        for (size_t i = 0; i < n; i++) {
            const uint64_t x = tl_rng_u64(&r);
            in[i] = zeros == 3u ? 0u : (uint8_t)(x % (zeros == 0u ? 255u : zeros == 1u ? 4096u : 3u) + (zeros == 0u));
        }
        const size_t e = tl_cobs_encode(in, n, enc, sizeof enc);
        assert_true(e >= n + 1u && e <= TL_COBS_BOUND(n));
        for (size_t i = 0; i < e; i++)
            if (enc[i] == 0u)
                fail_msg("a 0x00 at %zu of %zu (seed %llu)", i, e, (unsigned long long)seed);
        size_t bl = 0;
        assert_int_equal(tl_cobs_decode(enc, e, back, sizeof back, &bl), TL_OK);
        assert_int_equal(bl, n);
        if (n > 0 && memcmp(in, back, n) != 0)
            fail_msg("round trip of %zu octets differs (seed %llu)", n, (unsigned long long)seed);
    }
}

/* ---- link frames --------------------------------------------------------------------- */

/* CRC-32C bitwise: reflected polynomial 0x82F63B78, initial and final
 * xor 0xFFFFFFFF; check value of "123456789" 0xE3069283
 * (../shared/sources.md [computed]). */
static uint32_t ref_crc32c(const uint8_t *p, size_t n)
{
    uint32_t c = 0xFFFFFFFFu;
    for (size_t i = 0; i < n; i++) {
        c ^= p[i];
        for (int b = 0; b < 8; b++)
            c = (c & 1u) ? (c >> 1) ^ 0x82F63B78u : c >> 1;
    }
    return c ^ 0xFFFFFFFFu;
}

static void link_frame_layout(void **state)
{
    (void)state;
    assert_int_equal(ref_crc32c((const uint8_t *)"123456789", 9), 0xE3069283u);
    static uint8_t work[TL_LINK_MAX_BODY], wire[TL_LINK_MAX_WIRE], body[TL_LINK_MAX_BODY];
    const uint8_t payload[3] = { 0x00, 0xAB, 0x00 };
    size_t wl = 0;
    assert_int_equal(tl_link_encode(TL_LINK_T_SAMPLES, 0x1234, payload, 3, work, sizeof work, wire, sizeof wire, &wl),
                     TL_OK);
    assert_int_equal(wire[wl - 1u], 0x00);     /* the delimiter */
    assert_null(memchr(wire, 0, wl - 1u));     /* none inside */
    size_t bl = 0;
    assert_int_equal(tl_cobs_decode(wire, wl - 1u, body, sizeof body, &bl), TL_OK);
    /* version 1, type 0x04, sequence 0x1234, length 3, payload, CRC-32C of the 9 octets before it */
    const uint8_t head[9] = { 0x01, 0x04, 0x12, 0x34, 0x00, 0x03, 0x00, 0xAB, 0x00 };
    assert_int_equal(bl, 13u);
    assert_memory_equal(body, head, 9);
    assert_int_equal(tl_get_be32(body + 9), ref_crc32c(head, 9));
    tl_link_msg m;
    assert_int_equal(tl_link_decode(wire, wl - 1u, body, sizeof body, &m), TL_OK);
    assert_int_equal(m.type, TL_LINK_T_SAMPLES);
    assert_int_equal(m.seq, 0x1234);
    assert_int_equal(m.len, 3);
    assert_memory_equal(m.payload, payload, 3);
    /* the largest payload fits TL_LINK_MAX_WIRE; one more octet is refused */
    static uint8_t big[TL_LINK_MAX_PAYLOAD + 1];
    memset(big, 0x5A, sizeof big);
    assert_int_equal(tl_link_encode(TL_LINK_T_FRAMES, 1, big, TL_LINK_MAX_PAYLOAD, work, sizeof work, wire,
                                    sizeof wire, &wl),
                     TL_OK);
    assert_true(wl <= TL_LINK_MAX_WIRE);
    assert_int_equal(tl_link_encode(TL_LINK_T_FRAMES, 1, big, TL_LINK_MAX_PAYLOAD + 1u, work, sizeof work, wire,
                                    sizeof wire, &wl),
                     TL_E_FORMAT);
}

/* Every single-octet substitution of a frame (all 255 other values at every
 * position) is rejected: pieces between 0x00 octets never decode. */
static void every_corrupted_octet_rejected(void **state)
{
    (void)state;
    const uint64_t seed = tl_test_seed("every_corrupted_octet_rejected", 5);
    tl_rng r;
    tl_rng_seed(&r, seed);
    uint8_t payload[120], work[TL_LINK_MAX_BODY], wire[300], bad[300];
    for (size_t i = 0; i < sizeof payload; i++)
        payload[i] = (uint8_t)(tl_rng_u64(&r) % 4u == 0u ? 0u : tl_rng_u64(&r));
    size_t wl = 0;
    assert_int_equal(tl_link_encode(TL_LINK_T_FRAMES, 7, payload, sizeof payload, work, sizeof work, wire,
                                    sizeof wire, &wl),
                     TL_OK);
    unsigned tried = 0;
    for (size_t pos = 0; pos + 1u < wl; pos++) {
        for (unsigned v = 0; v < 256u; v++) {
            if (v == wire[pos])
                continue;
            memcpy(bad, wire, wl);
            bad[pos] = (uint8_t)v;
            size_t start = 0;
            for (size_t i = 0; i < wl; i++) {
                if (bad[i] != 0u)
                    continue;
                tl_link_msg m;
                if (i > start && tl_link_decode(bad + start, i - start, work, sizeof work, &m) == TL_OK)
                    fail_msg("octet %zu set to 0x%02x: a frame still decodes (seed %llu)", pos, v,
                             (unsigned long long)seed);
                start = i + 1u;
            }
            tried++;
        }
    }
    assert_int_equal(tried, 255u * (unsigned)(wl - 1u));
}

static void receiver_framing(void **state)
{
    (void)state;
    static tl_link_rx rx;
    static uint8_t work[TL_LINK_MAX_BODY], wire[TL_LINK_MAX_WIRE];
    tl_link_rx_reset(&rx);
    size_t wl = 0;
    assert_int_equal(tl_link_encode(TL_LINK_T_ACK, 9, (const uint8_t[]){ 1, 2, 3 }, 3, work, sizeof work, wire,
                                    sizeof wire, &wl),
                     TL_OK);
    /* garbage, an empty frame, then the frame: exactly one frame delivered, the garbage as its own (bad) frame */
    const uint8_t junk[] = { 0x13, 0x37, 0x00, 0x00 };
    int frames = 0, good = 0;
    for (size_t i = 0; i < sizeof junk; i++)
        if (tl_link_rx_put(&rx, junk[i])) {
            tl_link_msg m;
            frames++;
            good += tl_link_decode(rx.buf, rx.fill, work, sizeof work, &m) == TL_OK;
        }
    for (size_t i = 0; i < wl; i++)
        if (tl_link_rx_put(&rx, wire[i])) {
            tl_link_msg m;
            frames++;
            assert_int_equal(tl_link_decode(rx.buf, rx.fill, work, sizeof work, &m), TL_OK);
            assert_int_equal(m.seq, 9);
            good++;
        }
    assert_int_equal(frames, 2);
    assert_int_equal(good, 1);
    /* a frame longer than the buffer is dropped whole, the next one survives */
    for (size_t i = 0; i < TL_LINK_MAX_WIRE + 10u; i++)
        assert_int_equal(tl_link_rx_put(&rx, 0x42), 0);
    assert_int_equal(tl_link_rx_put(&rx, 0x00), 0);
    int got = 0;
    for (size_t i = 0; i < wl; i++)
        got += tl_link_rx_put(&rx, wire[i]);
    assert_int_equal(got, 1);
}

/* ---- tidelock hil --------------------------------------------------------------------- */

static char out[65536];

static int hil(const char *args)
{
    char a[8300];
    snprintf(a, sizeof a, "hil %s", args);
    return tl_test_tool(argv0, a, out, sizeof out);
}

static void expect_in(const char *what)
{
    if (strstr(out, what) == NULL)
        fail_msg("expected '%s' in:\n%s", what, out);
}

static void hil_host_and_powerpc(void **state)
{
    (void)state;
    char args[8192], junit[] = "/tmp/tidelock-junit-XXXXXX";
    const int fd = mkstemp(junit);
    assert_true(fd >= 0);
    close(fd);
    snprintf(args, sizeof args, "--target exec:%s/host/link-target --junit %s vectors", hil_dir, junit);
    assert_int_equal(hil(args), 0);
    expect_in("hil: 16 passed, 0 failed, 0 not applicable");
    expect_in("PASS channels-host-max");
    size_t n = 0;
    FILE *f = fopen(junit, "r");
    assert_non_null(f);
    static char x[65536];
    n = fread(x, 1, sizeof x - 1u, f);
    x[n] = '\0';
    fclose(f);
    unlink(junit);
    assert_non_null(strstr(x, "tests=\"16\" failures=\"0\" errors=\"0\" skipped=\"0\""));
    assert_non_null(strstr(x, "<testcase classname=\"hil\" name=\"switching\""));
    snprintf(args, sizeof args, "-q --target 'exec:qemu-ppc %s/ppc/link-target' vectors", hil_dir);
    assert_int_equal(hil(args), 0);
    expect_in("hil: 16 passed, 0 failed, 0 not applicable");
}

/* Three vectors sized for the emulated UART: one and two inputs, both encodings. */
static void hil_cortex_m7_uart(void **state)
{
    (void)state;
    char args[8192];
    snprintf(args, sizeof args,
             "--target qemu-m7:%s/m7/link-target.elf vectors/channels-min vectors/noise-nominal "
             "vectors/bounded-bit-planes vectors/channels-host-max",
             hil_dir);
    assert_int_equal(hil(args), 0);
    expect_in("at most 4096 points and 4 taps");
    expect_in("PASS channels-min");
    expect_in("PASS noise-nominal");
    expect_in("PASS bounded-bit-planes");
    expect_in("N/A  channels-host-max        needs 32768 points and 2 taps; the target holds 4096 and 4");
    expect_in("hil: 3 passed, 0 failed, 1 not applicable");
    printf("%s", out); /* the timing line */
}

static void hil_link_faults(void **state)
{
    (void)state;
    char args[8192];
    /* one flipped bit in the 300th octet sent: the target's CRC catches it, a NAK, the message again */
    snprintf(args, sizeof args, "-q --target exec:%s/host/link-target --inject-error 300 vectors/noise-nominal",
             hil_dir);
    assert_int_equal(hil(args), 0);
    expect_in("hil: 1 passed, 0 failed, 0 not applicable");
    expect_in("(link: 1 NAKs, 0 timeouts");
    /* one flipped bit in the target's 14th message, a FRAMES message: the vector runs again */
    snprintf(args, sizeof args, "--timeout 0.5 --target 'exec:%s/host/link-target --corrupt-at 14' vectors/noise-nominal",
             hil_dir);
    assert_int_equal(hil(args), 0);
    expect_in("PASS noise-nominal              14 frames");
    expect_in("(run again after a damaged stream)");
    expect_in("1 damaged frames skipped");
    /* garbage before every third answer: skipped, nothing lost */
    snprintf(args, sizeof args, "-q --target 'exec:%s/host/link-target --garbage-every 3' vectors/noise-nominal "
                                "vectors/switching",
             hil_dir);
    assert_int_equal(hil(args), 0);
    expect_in("hil: 2 passed, 0 failed");
    assert_null(strstr(out, " 0 damaged frames"));
    /* a target that starts up again in the middle of a vector */
    snprintf(args, sizeof args, "--target 'exec:%s/host/link-target --reset-at 6' vectors/noise-nominal", hil_dir);
    assert_int_equal(hil(args), 0);
    expect_in("1 target restarts");
    expect_in("(run again after a damaged stream)");
}

static void hil_refusals(void **state)
{
    (void)state;
    char args[8192];
    snprintf(args, sizeof args, "--target 'exec:%s/host/link-target --mode flight' vectors", hil_dir);
    assert_int_equal(hil(args), 1);
    expect_in("the unit reports flight mode: refusing");
    snprintf(args, sizeof args, "--target 'exec:%s/host/link-target --mode locked' vectors", hil_dir);
    assert_int_equal(hil(args), 1);
    expect_in("the unit reports locked mode: refusing");
    /* silence: reported, no hang (6 waits of 0.2 s) */
    assert_int_equal(hil("--timeout 0.2 --target 'exec:sleep 30' vectors/noise-nominal"), 1);
    expect_in("no status from the target (no answer within 0.2 s, 6 times)");
    assert_int_equal(hil("--target serial:/dev/null:115200 vectors/noise-nominal"), 1);
    expect_in("add --allow-hardware");
    assert_int_equal(hil("--target exec:true"), 2);
    assert_int_equal(hil("vectors"), 2);
    assert_int_equal(hil("--target exec:true --timeout 0 vectors"), 2);
    assert_int_equal(hil("--target bogus vectors"), 2);
    expect_in("expected exec:COMMAND, qemu-m7:ELF, tcp:HOST:PORT or serial:DEVICE:BAUD");
    assert_int_equal(hil("--target exec:true /nonexistent"), 1);
    expect_in("/nonexistent: neither a vector");
    /* a vector whose expected frames are wrong: FAIL naming where, exit 1 */
    char dir[] = "/tmp/tidelock-hilv-XXXXXX", cmd[1024], sh[256];
    assert_non_null(mkdtemp(dir));
    snprintf(cmd, sizeof cmd,
             "cp -r vectors/tone-centre %s/ && printf '\\001' | dd of=%s/tone-centre/frames.bin bs=1 seek=53 "
             "conv=notrunc 2>/dev/null",
             dir, dir);
    assert_int_equal(tl_test_shell(cmd, sh, sizeof sh), 0);
    snprintf(args, sizeof args, "--target exec:%s/host/link-target %s/tone-centre", hil_dir, dir);
    assert_int_equal(hil(args), 1);
    expect_in("FAIL tone-centre");
    expect_in("frame 0 octet 49 (data field): packet 0 (APID 257, count 0): science header field 'first channel'");
    expect_in("hil: 0 passed, 1 failed");
    snprintf(cmd, sizeof cmd, "rm -r %s", dir);
    assert_int_equal(tl_test_shell(cmd, sh, sizeof sh), 0);
}

int main(int argc, char **argv)
{
    (void)argc;
    argv0 = argv[0];
    char self[4096];
    snprintf(self, sizeof self, "%s", argv[0]);
    snprintf(hil_dir, sizeof hil_dir, "%s/../hil", dirname(self));
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(cobs_examples),
        cmocka_unit_test(cobs_round_trips),
        cmocka_unit_test(link_frame_layout),
        cmocka_unit_test(every_corrupted_octet_rejected),
        cmocka_unit_test(receiver_framing),
        cmocka_unit_test(hil_host_and_powerpc),
        cmocka_unit_test(hil_cortex_m7_uart),
        cmocka_unit_test(hil_link_faults),
        cmocka_unit_test(hil_refusals),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
