/* cmd_decode.c - `tidelock decode`: a recorded downlink (transfer frames or raw
 * space packets) back into one spectra folder per integration, with a log of
 * what happened to every frame and packet (ground.h). */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "atomic_file.h"
#include "commands.h"
#include "ground.h"
#include "run.h"
#include "run_outputs.h"
#include "scenario.h"
#include "spectra_out.h"
#include "tl_frame.h"

static const char *const decode_help =
    "usage: tidelock decode INPUT [SCENARIO.ini] -o DIR [--raw] [--frame-length L] [-q]\n"
    "\n"
    "Rebuild the integrated spectra from a recorded downlink. INPUT holds CCSDS TM transfer frames,\n"
    "each behind the sync marker 1ACFFC1D (frames.bin of `tidelock run`), or with --raw space packets\n"
    "back to back (packets.bin). Frames and packets are checked (FECF, CRC-16, frame and sequence\n"
    "counts); lost, bad, repeated and reordered ones are reported. Each integration goes to\n"
    "DIR/integration-NNNNNN as `tidelock run` writes spectra (CSV and .npy as the scenario's [output]\n"
    "asks, calibrated.* when the load and noise states arrived). An integration with missing channels\n"
    "is written too: those channels are 0, carry flag 0x80 in flags.npy, and are listed in its\n"
    "missing.json. DIR/decode-log.json tells the fate of every frame and packet.\n"
    "The scenario (default: the built-in one) gives the frame length, spacecraft id, virtual channel\n"
    "and APIDs ([downlink]), the sample rate, and the load and noise temperatures. INPUT is read in\n"
    "blocks, so memory stays bounded whatever its size.\n"
    "\n"
    "options:\n"
    "  -o, --output DIR       output folder (created when missing)\n"
    "      --raw              INPUT is space packets back to back, not transfer frames\n"
    "      --frame-length L   transfer frame length in octets, marker excluded, from 128 to 2048\n"
    "                         (default: the scenario's [downlink] frame_length)\n"
    "  -q, --quiet            print nothing but errors; the exit status tells the verdict\n"
    "  -h, --help             this text\n"
    "exit status: 0 everything decoded, 1 something lost or corrupt (what decoded is still written)\n"
    "or an error, 2 usage\n"
    "example: tidelock run my.ini -o out && tidelock decode out/frames.bin my.ini -o decoded\n";

/* ---- folder names already used in this run (a small hash set) ---------------- */

typedef struct name_set {
    uint64_t *slot; /* key + 1; 0 is empty */
    size_t cap, n;
} name_set;

static int set_has(const name_set *h, uint64_t k)
{
    if (h->cap == 0u)
        return 0;
    for (size_t i = (size_t)(k * 0x9E3779B97F4A7C15ull) & (h->cap - 1u);; i = (i + 1u) & (h->cap - 1u)) {
        if (h->slot[i] == 0u)
            return 0;
        if (h->slot[i] == k + 1u)
            return 1;
    }
}

/* NOLINTNEXTLINE(misc-no-recursion): one level only, the rehash fills a set that never grows again */
static int set_add(name_set *h, uint64_t k)
{
    if (2u * (h->n + 1u) > h->cap) {
        name_set b = { NULL, h->cap ? 2u * h->cap : 64u, 0 };
        b.slot = calloc(b.cap, sizeof *b.slot);
        if (b.slot == NULL)
            return -1;
        for (size_t i = 0; i < h->cap; i++)
            if (h->slot[i] != 0u)
                set_add(&b, h->slot[i] - 1u);
        free(h->slot);
        *h = b;
    }
    size_t i = (size_t)(k * 0x9E3779B97F4A7C15ull) & (h->cap - 1u);
    while (h->slot[i] != 0u && h->slot[i] != k + 1u)
        i = (i + 1u) & (h->cap - 1u);
    if (h->slot[i] == 0u) {
        h->slot[i] = k + 1u;
        h->n++;
    }
    return 0;
}

/* ---- writing each product ---------------------------------------------------------- */

typedef struct decode_out {
    const char *dir;
    const tl_scenario *s;
    tl_cal_report *cal;
    name_set used;
    uint64_t folders, calibrated, renamed;
    char first[64], last[64];
} decode_out;

static int write_text(FILE *f, void *ctx)
{
    return fputs((const char *)ctx, f) == EOF || fputc('\n', f) == EOF ? -1 : 0;
}

static int on_product(void *user, const tl_product *p, const tl_ground_product_info *in, tl_ground_product_note *note)
{
    decode_out *o = user;
    char name[64], folder[4400], err[4600];
    /* integration-NNNNNN; the configuration id is added if that index was written already */
    const uint64_t plain = in->index, with_cfg = ((uint64_t)1u << 63) | ((uint64_t)in->config_id << 32) | in->index;
    if (!set_has(&o->used, plain)) {
        snprintf(name, sizeof name, "integration-%06u", in->index);
        if (set_add(&o->used, plain) != 0)
            goto oom;
    } else if (!set_has(&o->used, with_cfg)) {
        snprintf(name, sizeof name, "integration-%06u-config-%08x", in->index, in->config_id);
        if (set_add(&o->used, with_cfg) != 0)
            goto oom;
        o->renamed++;
    } else {
        snprintf(name, sizeof name, "integration-%06u-config-%08x-again-%llu", in->index, in->config_id,
                 (unsigned long long)++o->renamed);
    }
    snprintf(folder, sizeof folder, "%s/%s", o->dir, name);
    snprintf(note->folder, sizeof note->folder, "%s", name);
    if (tl_run_outputs_folder(folder, err, sizeof err) != 0 ||
        tl_spectra_write(folder, p, o->s->sky.sample_rate_hz, (int)o->s->write_csv, (int)o->s->write_npy, err,
                         sizeof err) != 0) {
        snprintf(note->note, sizeof note->note, "%.500s", err);
        return -1;
    }
    char path[4500];
    snprintf(path, sizeof path, "%s/missing.json", folder);
    if (in->complete) {
        remove(path); /* from an earlier decode into the same folder */
    } else {
        char *js = tl_ground_product_json(in);
        if (js == NULL)
            goto oom;
        const int rc = tl_atomic_write(path, write_text, js, err, sizeof err);
        free(js);
        if (rc != 0) {
            snprintf(note->note, sizeof note->note, "%.500s", err);
            return -1;
        }
    }
    const char *why = NULL;
    int lacks_auto = 0;
    for (uint32_t s = 0; s < in->states; s++)
        for (uint32_t q = 0; q < in->quantities && q < 2u; q++)
            lacks_auto |= in->missing[s][q] != 0u;
    char why_buf[160];
    if (in->states == 3u) {
        if (lacks_auto)
            why = "not calibrated: auto-power channels are missing";
        else if (p->channels != o->s->cfg.points / 2u) {
            snprintf(why_buf, sizeof why_buf, "not calibrated: %u channels, the scenario has %u", p->channels,
                     o->s->cfg.points / 2u);
            why = why_buf;
        } else if (tl_run_calibrate_masked(o->s, p, in->sk_mask, o->cal) != 0)
            why = "not calibrated: a switch state has no spectra";
        else if (tl_run_outputs_calibrated(folder, o->s, p, o->cal, err, sizeof err) != 0) {
            snprintf(note->note, sizeof note->note, "%.500s", err);
            return -1;
        } else
            o->calibrated++;
    }
    if (why != NULL || in->states != 3u) { /* no calibration now: none may stay from an earlier decode */
        static const char *const cal_files[] = { "calibrated.csv", "calibrated.npy" };
        for (size_t i = 0; i < 2u; i++) {
            snprintf(path, sizeof path, "%s/%s", folder, cal_files[i]);
            remove(path);
        }
    }
    snprintf(note->note, sizeof note->note, "%s%s%s", why ? why : "", why && in->bounded ? "; " : "",
             in->bounded ? "noise-bounded: the values are dequantized, within step/2 of the sums" : "");
    if (o->folders++ == 0u)
        snprintf(o->first, sizeof o->first, "%s", name);
    snprintf(o->last, sizeof o->last, "%s", name);
    return 0;
oom:
    snprintf(note->note, sizeof note->note, "out of memory");
    return -1;
}

/* ---- the command ----------------------------------------------------------------------- */

int tl_cmd_decode(int argc, char **argv)
{
    static const struct option opts[] = { { "output", required_argument, NULL, 'o' },
                                          { "raw", no_argument, NULL, 'r' },
                                          { "frame-length", required_argument, NULL, 'L' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *dir = NULL, *flen = NULL;
    int quiet = 0, raw = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'o': dir = optarg; break;
        case 'r': raw = 1; break;
        case 'L': flen = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(decode_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("decode", argv, c);
        }
    }
    if (optind >= argc)
        return tl_cli_usage("decode", "give the input file, INPUT%s", "");
    if (argc - optind > 2)
        return tl_cli_usage("decode", "expected an input and at most one scenario file, got also '%s'",
                            argv[optind + 2]);
    if (dir == NULL)
        return tl_cli_usage("decode", "give the output folder with -o DIR%s", "");
    uint32_t frame_len = 0;
    if (flen != NULL) {
        if (raw)
            return tl_cli_usage("decode", "--frame-length '%s' does not apply to --raw input", flen);
        char *end = NULL;
        errno = 0;
        const unsigned long long v = strtoull(flen, &end, 10);
        if (end == flen || *end != '\0' || flen[0] == '-' || errno != 0 || v < TL_FRAME_MIN_LEN ||
            v > TL_FRAME_MAX_LEN)
            return tl_cli_usage("decode", "--frame-length: '%s' is not a whole number of octets from 128 to 2048",
                                flen);
        frame_len = (uint32_t)v;
    }
    const char *input = argv[optind];
    char err[8192];
    tl_scenario s;
    tl_scenario_default(&s);
    if (argc - optind > 1 && tl_scenario_load(argv[optind + 1], &s, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock decode: %s\n", err);
        return EXIT_FAIL;
    }
    /* the input must be a readable file before anything is written */
    struct stat st;
    FILE *probe = fopen(input, "rb");
    if (probe == NULL) {
        fprintf(stderr, "tidelock decode: %s: cannot open: %s\n", input, strerror(errno));
        return EXIT_FAIL;
    }
    const int is_dir = fstat(fileno(probe), &st) == 0 && S_ISDIR(st.st_mode);
    fclose(probe);
    if (is_dir) {
        fprintf(stderr, "tidelock decode: %s: is a folder, not a file of frames or packets\n", input);
        return EXIT_FAIL;
    }
    if (tl_run_outputs_folder(dir, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock decode: %s\n", err);
        return EXIT_FAIL;
    }
    tl_ground_config gc;
    tl_ground_config_default(&gc);
    gc.raw = raw;
    gc.frame_len = frame_len ? frame_len : s.dl_frame_len;
    gc.scid = (uint16_t)s.dl_scid;
    gc.vcid = (uint16_t)s.dl_vcid;
    gc.apid_science = (uint16_t)s.dl_apid_science;
    gc.apid_hk = (uint16_t)s.dl_apid_hk;
    gc.apid_sk = (uint16_t)s.dl_apid_sk;
    gc.sk_false_alarm = s.sk_false_alarm;
    decode_out out;
    memset(&out, 0, sizeof out);
    out.dir = dir;
    out.s = &s;
    out.cal = malloc(sizeof *out.cal);
    tl_ground *g = out.cal ? tl_ground_open(&gc, on_product, &out, err, sizeof err) : NULL;
    if (g == NULL) {
        if (out.cal == NULL)
            snprintf(err, sizeof err, "out of memory");
        fprintf(stderr, "tidelock decode: %s\n", err);
        free(out.cal);
        return EXIT_FAIL;
    }
    const int drc = tl_ground_decode_file(g, input, err, sizeof err);
    char log_path[4400], log_err[4600];
    snprintf(log_path, sizeof log_path, "%s/decode-log.json", dir);
    const int lrc = tl_ground_write_log(g, log_path, input, log_err, sizeof log_err);
    if (!quiet) {
        char text[4096];
        tl_ground_summary(g, input, text, sizeof text);
        fputs(text, stdout);
        printf("  wrote %llu folder%s", (unsigned long long)out.folders, out.folders == 1u ? "" : "s");
        if (out.folders > 1u)
            printf(" (%s .. %s)", out.first, out.last);
        else if (out.folders == 1u)
            printf(" (%s)", out.first);
        if (out.calibrated)
            printf(", %llu calibrated", (unsigned long long)out.calibrated);
        printf("%s in %s/\n", lrc == 0 ? " and decode-log.json" : "", dir);
        printf("  verdict: %s\n", drc == 0 && lrc == 0 && tl_ground_clean(g)
                                      ? "everything decoded"
                                      : "something was lost or corrupt (see decode-log.json)");
        fflush(stdout);
    }
    int rc = EXIT_OK;
    if (drc != 0) {
        fprintf(stderr, "tidelock decode: %s\n", err);
        rc = EXIT_FAIL;
    } else if (lrc != 0) {
        fprintf(stderr, "tidelock decode: %s\n", log_err);
        rc = EXIT_FAIL;
    } else if (!tl_ground_clean(g)) {
        rc = EXIT_FAIL;
    }
    tl_ground_close(g);
    free(out.used.slot);
    free(out.cal);
    return rc;
}
