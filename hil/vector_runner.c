/*
 * vector_runner.c - run one golden vector on a target build of the
 * firmware:
 *
 *     vector-runner SETUP TAPS SAMPLES OUT
 *
 * SETUP is a run setup record (firmware/tl_link.h), TAPS a coefficient
 * table image (firmware/tl_taps.h) or "-" for the built-in table, SAMPLES
 * the ADC words as int16 big-endian, inputs interleaved (one input: s0 s1
 * ...; two: a0 b0 a1 b1 ...). The transfer frame stream goes to OUT,
 * written as OUT.part and renamed when the run succeeded (removed when it
 * did not). Errors are one line naming the file, and the exit status is 1;
 * a usage error exits with 2. Platform calls go through runner_io.h, so the
 * same file runs on the host, under qemu-ppc and on the bare Cortex-M7.
 *
 * Memory: everything is static and sized by the build's maxima.
 */
#include <stddef.h>
#include <stdint.h>
#include "hil_run.h"
#include "runner_io.h"
#include "tl_bytes.h"
#include "tl_link.h"
#include "tl_taps.h"

#define PROG "vector-runner"
#define BLOCK 2048u /* samples per input read at a time */
#define OUT_BUFFER 16384u

static hil_run run;
static uint8_t raw[BLOCK * 2u * TL_MAX_INPUTS];
static int16_t in0[BLOCK], in1[BLOCK];

/* ---- one-line messages without stdio ---------------------------------- */

typedef struct line {
    char text[320];
    size_t n;
} line;

static void put_s(line *l, const char *s)
{
    while (*s != '\0' && l->n + 1u < sizeof l->text)
        l->text[l->n++] = *s++;
    l->text[l->n] = '\0';
}

static void put_u(line *l, uint64_t v)
{
    char d[21];
    size_t k = 0;
    do {
        d[k++] = (char)('0' + (int)(v % 10u));
        v /= 10u;
    } while (v != 0u);
    while (k > 0u && l->n + 1u < sizeof l->text)
        l->text[l->n++] = d[--k];
    l->text[l->n] = '\0';
}

static int fail(const char *file, const char *what, tl_status st)
{
    line l = { { 0 }, 0 };
    put_s(&l, PROG ": ");
    put_s(&l, file);
    put_s(&l, ": ");
    put_s(&l, what);
    if (st != TL_OK) {
        put_s(&l, ": ");
        put_s(&l, tl_status_text(st));
        put_s(&l, " (");
        put_s(&l, tl_status_name(st));
        put_s(&l, ")");
    }
    rio_say(l.text);
    return 1;
}

/* ---- output: buffered, then renamed into place ------------------------- */

typedef struct out_file {
    long h;
    int failed;
    size_t fill;
    uint8_t buf[OUT_BUFFER];
} out_file;

static out_file out;

static void out_flush(out_file *o)
{
    if (!o->failed && o->fill > 0u && rio_write(o->h, o->buf, o->fill) != 0)
        o->failed = 1;
    o->fill = 0;
}

static void frame_sink(void *user, const uint8_t *wire, size_t len)
{
    out_file *o = user;
    while (len > 0u) {
        size_t take = OUT_BUFFER - o->fill;
        if (take > len)
            take = len;
        for (size_t i = 0; i < take; i++)
            o->buf[o->fill + i] = wire[i];
        o->fill += take;
        wire += take;
        len -= take;
        if (o->fill == OUT_BUFFER)
            out_flush(o);
    }
}

/* Read a whole file of at most cap octets; returns its length or -1 (the
 * message is printed). */
static long read_whole(const char *path, const char *what, uint8_t *dst, size_t cap, tl_status too_big)
{
    const long h = rio_open(path, 0);
    if (h < 0) {
        fail(path, "cannot open", TL_OK);
        return -1;
    }
    const long len = rio_length(h);
    if (len < 0 || (unsigned long)len > cap) {
        line l = { { 0 }, 0 };
        put_s(&l, what);
        put_s(&l, " of ");
        put_u(&l, len < 0 ? 0u : (uint64_t)len);
        put_s(&l, " octets: this build holds at most ");
        put_u(&l, cap);
        rio_close(h);
        fail(path, l.text, too_big);
        return -1;
    }
    long got = 0;
    while (got < len) {
        const long n = rio_read(h, dst + got, (size_t)(len - got));
        if (n <= 0) {
            rio_close(h);
            fail(path, "read error", TL_OK);
            return -1;
        }
        got += n;
    }
    rio_close(h);
    return len;
}

static int run_vector(const char *setup_path, const char *taps_path, const char *samples_path, const char *part)
{
    uint8_t rec[TL_LINK_SETUP_OCTETS + 1u];
    const long rl = read_whole(setup_path, "setup record", rec, sizeof rec, TL_E_FORMAT);
    if (rl < 0)
        return 1;
    tl_link_setup setup;
    uint32_t bad = 0;
    tl_status st = tl_link_setup_decode(rec, (size_t)rl, &setup, &bad);
    if (st != TL_OK) {
        line l = { { 0 }, 0 };
        put_s(&l, "field ");
        put_s(&l, tl_link_setup_field_name(bad));
        put_s(&l, " (octet ");
        put_u(&l, bad);
        put_s(&l, st == TL_E_FORMAT ? "): must be a record of " : "): must be 0 .. ");
        put_u(&l, st == TL_E_FORMAT ? TL_LINK_SETUP_OCTETS : tl_link_setup_field_max(bad));
        if (st == TL_E_FORMAT)
            put_s(&l, " octets, version 1");
        return fail(setup_path, l.text, st);
    }
    /* this build's maxima first: a table for more points or taps would not
     * even fit the buffer, and the limit is the better message */
    if (setup.chain.points > TL_MAX_POINTS || setup.chain.taps > TL_MAX_TAPS) {
        const int pts = setup.chain.points > TL_MAX_POINTS;
        line l = { { 0 }, 0 };
        put_s(&l, pts ? "points " : "taps ");
        put_u(&l, pts ? setup.chain.points : setup.chain.taps);
        put_s(&l, ": this build holds at most ");
        put_u(&l, pts ? TL_MAX_POINTS : TL_MAX_TAPS);
        return fail(setup_path, l.text, pts ? TL_E_POINTS : TL_E_TAPS);
    }
    long tl = 0;
    if (!(taps_path[0] == '-' && taps_path[1] == '\0')) {
        tl = read_whole(taps_path, "table image", run.u.taps_image, sizeof run.u.taps_image, TL_E_TABLE_SIZE);
        if (tl < 0)
            return 1;
    }
    const long h = rio_open(samples_path, 0);
    if (h < 0)
        return fail(samples_path, "cannot open", TL_OK);
    const long total = rio_length(h);
    const uint32_t inputs = setup.chain.inputs;
    const size_t frame_octets = 2u * (inputs >= 1u && inputs <= TL_MAX_INPUTS ? inputs : 1u);
    if (total < 0 || (unsigned long)total % frame_octets != 0u) {
        rio_close(h);
        return fail(samples_path, inputs == 2u ? "length must be a multiple of 4 octets (two int16 inputs)"
                                               : "length must be a multiple of 2 octets (int16 samples)",
                    TL_OK);
    }
    out.h = rio_open(part, 1);
    out.failed = 0;
    out.fill = 0;
    if (out.h < 0) {
        rio_close(h);
        return fail(part, "cannot create", TL_OK);
    }
    st = hil_run_start(&run, &setup, tl > 0 ? run.u.taps_image : NULL, (size_t)tl, frame_sink, &out);
    if (st != TL_OK) {
        rio_close(h);
        rio_close(out.h);
        return fail(tl > 0 ? taps_path : setup_path, "configuration refused", st);
    }
    unsigned long left = (unsigned long)total / frame_octets;
    while (left > 0u && st == TL_OK) {
        const size_t n = left < BLOCK ? (size_t)left : BLOCK;
        const size_t want = n * frame_octets;
        size_t got = 0;
        while (got < want) {
            const long r = rio_read(h, raw + got, want - got);
            if (r <= 0)
                break;
            got += (size_t)r;
        }
        if (got != want) {
            rio_close(h);
            rio_close(out.h);
            return fail(samples_path, "read error", TL_OK);
        }
        for (size_t i = 0; i < n; i++) {
            in0[i] = (int16_t)tl_get_be16(raw + i * frame_octets);
            if (inputs == 2u)
                in1[i] = (int16_t)tl_get_be16(raw + i * frame_octets + 2u);
        }
        st = hil_run_push(&run, in0, inputs == 2u ? in1 : NULL, n);
        left -= n;
    }
    rio_close(h);
    if (st == TL_OK)
        st = hil_run_finish(&run);
    out_flush(&out);
    const int closed = rio_close(out.h);
    if (st != TL_OK)
        return fail(samples_path, "run failed", st);
    if (out.failed || closed != 0)
        return fail(part, "write error", TL_OK);
    line l = { { 0 }, 0 };
    put_s(&l, PROG ": ");
    put_u(&l, run.products);
    put_s(&l, " integrations, ");
    put_u(&l, run.fb.frames);
    put_s(&l, " frames, ");
    put_u(&l, run.octets_out);
    put_s(&l, " octets");
    rio_say(l.text);
    return 0;
}

int runner_main(int argc, char **argv)
{
    if (argc != 5) {
        rio_say("usage: " PROG " SETUP TAPS|- SAMPLES OUT");
        return 2;
    }
    static char part[512];
    line p = { { 0 }, 0 };
    put_s(&p, argv[4]);
    put_s(&p, ".part");
    if (p.n + 1u >= sizeof p.text) {
        rio_say(PROG ": output path too long");
        return 2;
    }
    for (size_t i = 0; i <= p.n; i++)
        part[i] = p.text[i];
    const int rc = run_vector(argv[1], argv[2], argv[3], part);
    if (rc != 0) {
        rio_remove(part);
        return rc;
    }
    if (rio_rename(part, argv[4]) != 0) {
        rio_remove(part);
        return fail(argv[4], "cannot rename the finished output into place", TL_OK);
    }
    return 0;
}
