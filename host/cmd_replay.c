/* cmd_replay.c - `tidelock replay`: a SigMF recording (simulated, or captured
 * on a bench ADC) through the firmware chain and the double references,
 * exactly as `tidelock run` does with the simulated sky. */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "commands.h"
#include "fidelity.h"
#include "replay_shard.h"
#include "replay_threads.h"
#include "report.h"
#include "run.h"
#include "run_outputs.h"
#include "scenario.h"
#include "shard_file.h"
#include "sigmf.h"
#include "spectra_out.h"
#include "taps_design.h"


static const char *const replay_help =
    "usage: tidelock replay RECORDING.sigmf-meta [SCENARIO.ini] [-o DIR] [--block-kib N] [--threads N | --shard I/N] [-q]\n"
    "\n"
    "Run a SigMF recording through the firmware chain and the FFTW double references, print the\n"
    "same report as `tidelock run` and write the same files into DIR. The scenario gives the\n"
    "instrument: SCENARIO.ini when given, else the one the recording carries (tidelock:scenario,\n"
    "written by `tidelock simulate`), else the built-in default. The recording's core:sample_rate\n"
    "and core:num_channels must match the scenario's sample rate and inputs, and it must hold\n"
    "(taps - 1 + spectra) x 2 x channels samples per input; the first ones are used.\n"
    "Datatypes read: ri16_le, ri8, rf32_le (full scale of the type = ADC full scale; float 1.0)\n"
    "and ci16_le (complex baseband at rate fs, read as the real signal at 2 fs whose 0..fs holds\n"
    "the band -fs/2..+fs/2). Values are rounded to the scenario's ADC codes. The data file is\n"
    "read in blocks, so memory stays bounded whatever its size.\n"
    "\n"
    "options:\n"
    "  -o, --output DIR    output folder (default: the scenario's [output] folder)\n"
    "      --block-kib N   read block in KiB, from 4 to 65536 (default 1024)\n"
    "      --threads N     the firmware chain only, in N segments run in parallel (1 to 64): writes the\n"
    "                      antenna state's spectra files (auto*, cross, flags; the bytes the serial\n"
    "                      chain gives), no references, report or calibration. Refused with one line\n"
    "                      when a split cannot be exact (spectral kurtosis blocks, a detection shift\n"
    "                      below ceil(log2 spectra)). Memory: N x (chain + product + read block)\n"
    "      --shard I/N     the firmware chain only, segment I of N of the integration (with the filterbank's\n"
    "                      overlap): writes its integer sums to DIR/shard-IIII-of-NNNN.tlshard; `tidelock\n"
    "                      merge` adds the N shards into the files --threads writes, byte for byte. Also\n"
    "                      read from SLURM_ARRAY_TASK_ID and SLURM_ARRAY_TASK_COUNT. Same refusals as --threads\n"
    "  -q, --quiet         print nothing but errors; the exit status tells the verdict\n"
    "  -h, --help          this text\n"
    "exit status: 0 PASS, 1 FAIL or error (bad recording, scenario mismatch, I/O), 2 usage\n"
    "example: tidelock simulate my.ini -o rec && tidelock replay rec.sigmf-meta my.ini -o out\n";


/* ---- the recording as the harness's sample source ---------------------------- */

typedef struct recording_src {
    tl_sigmf_reader *rd;
    int failed;
    char err[2048];
} recording_src;

static void recording_source(void *state, int16_t *in0, int16_t *in1, size_t n)
{
    recording_src *rs = state;
    int16_t *const out[2] = { in0, in1 };
    if (!rs->failed && tl_sigmf_read(rs->rd, out, n, rs->err, sizeof rs->err) == 0)
        return;
    rs->failed = 1; /* the run finishes on zeros; its result is discarded */
    memset(in0, 0, n * sizeof *in0);
    if (in1 != NULL)
        memset(in1, 0, n * sizeof *in1);
}

/* tl_run_with_source (run.c) with the recording as the source. A recording
 * holds whatever the switch selected when it was made: no set_state. */
static tl_status replay_run(const tl_scenario *s, recording_src *src, tl_run_result *r, int *bar)
{
    tl_status st = tl_run_with_source(s, recording_source, NULL, src, r, tl_run_progress_bar, bar);
    for (unsigned i = 0; i < s->cfg.inputs && i < 2u; i++)
        r->generator_clips[i] = tl_sigmf_rails(src->rd, i);
    return st;
}

/* ---- the scenario a recording carries ---------------------------------------- */

/* Load the scenario text of the recording's tidelock:scenario through a
 * temporary file; messages name META [tidelock:scenario] and the line. */
static int load_carried(const char *meta, const char *text, tl_scenario *s, char *err, size_t cap)
{
    const char *tmpdir = getenv("TMPDIR");
    char tmp[4096];
    snprintf(tmp, sizeof tmp, "%s/tidelock-carried-XXXXXX", tmpdir && *tmpdir ? tmpdir : "/tmp");
    const int fd = mkstemp(tmp);
    FILE *f = fd >= 0 ? fdopen(fd, "w") : NULL;
    if (f == NULL) {
        snprintf(err, cap, "%s: tidelock:scenario: cannot make a temporary file: %s", meta, strerror(errno));
        if (fd >= 0) {
            close(fd);
            remove(tmp);
        }
        return -1;
    }
    const int wrote = fputs(text, f) != EOF;
    const int closed = fclose(f) == 0;
    char why[2048];
    int rc = 0;
    if (!wrote || !closed) {
        snprintf(err, cap, "%s: tidelock:scenario: cannot write a temporary copy", meta);
        rc = -1;
    } else if (tl_scenario_load(tmp, s, why, sizeof why) != 0) {
        const size_t tl = strlen(tmp);
        snprintf(err, cap, "%s [tidelock:scenario]%s", meta, strncmp(why, tmp, tl) == 0 ? why + tl : why);
        rc = -1;
    }
    remove(tmp);
    return rc;
}

/* ---- the command ----------------------------------------------------------------- */

/* DIR exists as a folder, or can be made (its parent is a folder). */
static int folder_possible(const char *dir, char *err, size_t cap)
{
    struct stat st;
    if (stat(dir, &st) == 0) {
        if (!S_ISDIR(st.st_mode)) {
            snprintf(err, cap, "%s: not a folder", dir);
            return -1;
        }
        return 0;
    }
    char parent[4096];
    snprintf(parent, sizeof parent, "%s", dir);
    size_t n = strlen(parent);
    while (n > 1 && parent[n - 1] == '/')
        parent[--n] = '\0';
    char *slash = strrchr(parent, '/');
    if (slash == NULL)
        snprintf(parent, sizeof parent, ".");
    else if (slash == parent)
        parent[1] = '\0';
    else
        *slash = '\0';
    if (stat(parent, &st) != 0 || !S_ISDIR(st.st_mode) || access(parent, W_OK | X_OK) != 0) {
        snprintf(err, cap, "%s: cannot create output folder: %s is not a writable folder", dir, parent);
        return -1;
    }
    return 0;
}

int tl_cmd_replay(int argc, char **argv)
{
    static const struct option opts[] = { { "output", required_argument, NULL, 'o' },
                                          { "block-kib", required_argument, NULL, 'b' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "threads", required_argument, NULL, 't' },
                                          { "shard", required_argument, NULL, 's' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *dir = NULL, *block = NULL, *threads_arg = NULL, *shard_arg = NULL;
    int quiet = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'o': dir = optarg; break;
        case 'b': block = optarg; break;
        case 't': threads_arg = optarg; break;
        case 's': shard_arg = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(replay_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("replay", argv, c);
        }
    }
    if (optind >= argc)
        return tl_cli_usage("replay", "give the recording, RECORDING.sigmf-meta%s", "");
    if (argc - optind > 2)
        return tl_cli_usage("replay", "expected a recording and at most one scenario file, got also '%s'", argv[optind + 2]);
    size_t block_bytes = TL_SIGMF_BLOCK_DEFAULT;
    if (block != NULL) {
        char *end = NULL;
        const unsigned long long v = strtoull(block, &end, 10);
        if (end == block || *end != '\0' || block[0] == '-' || v < 4 || v > 65536)
            return tl_cli_usage("replay", "--block-kib: '%s' is not a whole number from 4 to 65536", block);
        block_bytes = (size_t)v * 1024u;
    }
    unsigned threads = 0;
    if (threads_arg != NULL) {
        char *end = NULL;
        const unsigned long long v = strtoull(threads_arg, &end, 10);
        if (end == threads_arg || *end != '\0' || threads_arg[0] == '-' || v < 1 || v > TL_REPLAY_MAX_THREADS)
            return tl_cli_usage("replay", "--threads: '%s' is not a whole number from 1 to 64", threads_arg);
        threads = (unsigned)v;
    }
    uint32_t shard_i = 0, shard_n = 0;
    int sharded = 0;
    {
        char why[512];
        if (shard_arg != NULL) {
            if (tl_shard_parse(shard_arg, &shard_i, &shard_n, why, sizeof why) != 0)
                return tl_cli_usage("replay", "%s", why);
            sharded = 1;
        } else if (threads_arg == NULL && tl_shard_from_env(&sharded, &shard_i, &shard_n, why, sizeof why) != 0) {
            fprintf(stderr, "tidelock replay: %s\n", why);
            return EXIT_USAGE;
        }
        if (sharded && threads_arg != NULL)
            return tl_cli_usage("replay", "give --threads or --shard, not both%s", "");
    }
    /* NAME, NAME.sigmf-data and NAME.sigmf-meta all name the recording */
    char meta[4096];
    const char *arg = argv[optind];
    const size_t al = strlen(arg), sl = strlen(".sigmf-data");
    if (al > sl && strcmp(arg + al - sl, ".sigmf-data") == 0)
        snprintf(meta, sizeof meta, "%.*s.sigmf-meta", (int)(al - sl), arg);
    else if (al > sl && strcmp(arg + al - sl, ".sigmf-meta") == 0)
        snprintf(meta, sizeof meta, "%s", arg);
    else
        snprintf(meta, sizeof meta, "%s.sigmf-meta", arg);

    char err[16384];
    tl_sigmf_reader *rd = tl_sigmf_open(meta, block_bytes, err, sizeof err);
    if (rd == NULL) {
        fprintf(stderr, "tidelock replay: %s\n", err);
        return EXIT_FAIL;
    }
    const tl_sigmf_info *in = tl_sigmf_info_of(rd);
    int rc = EXIT_FAIL;
    tl_run_result *r = NULL;
    tl_scenario s;
    tl_scenario_default(&s);
    const char *scen_path = argc - optind > 1 ? argv[optind + 1] : NULL;
    char origin[4200];
    if (scen_path != NULL) {
        snprintf(origin, sizeof origin, "%s", scen_path);
        if (tl_scenario_load(scen_path, &s, err, sizeof err) != 0)
            goto fail;
    } else if (in->scenario != NULL) {
        snprintf(origin, sizeof origin, "%s [tidelock:scenario]", meta);
        if (load_carried(meta, in->scenario, &s, err, sizeof err) != 0)
            goto fail;
    } else {
        snprintf(origin, sizeof origin, "the built-in default scenario");
    }
    /* the recording must be the instrument the scenario describes */
    if (in->channels != s.cfg.inputs) {
        snprintf(err, sizeof err, "%s: global core:num_channels = %u disagrees with %s: [instrument] inputs = %u "
                 "(one channel per input)", meta, in->channels, origin, s.cfg.inputs);
        goto fail;
    }
    const double rate = in->sample_rate_hz * (in->is_complex ? 2.0 : 1.0);
    if (in->sample_rate_hz > 0.0 && fabs(rate - s.sky.sample_rate_hz) > 1e-9 * s.sky.sample_rate_hz) {
        snprintf(err, sizeof err, "%s: global core:sample_rate = %.10g Hz%s disagrees with %s: [instrument] "
                 "sample_rate_mhz = %.10g",
                 meta, in->sample_rate_hz, in->is_complex ? " (ci16_le: read at twice the rate)" : "", origin,
                 s.sky.sample_rate_hz / 1e6);
        goto fail;
    }
    const uint64_t needed = ((uint64_t)s.cfg.taps - 1u + s.spectra) * s.cfg.points;
    if (in->real_samples < needed) {
        char have[256];
        if (in->is_complex)
            snprintf(have, sizeof have, "%s, %llu complex samples per channel (%llu real samples at twice the rate)",
                     in->datatype, (unsigned long long)in->samples, (unsigned long long)in->real_samples);
        else
            snprintf(have, sizeof have, "%s, %llu samples per channel", in->datatype, (unsigned long long)in->samples);
        snprintf(err, sizeof err, "%s: %s, but %s needs (taps - 1 + spectra) x points = (%u - 1 + %u) x %u = %llu "
                 "samples per input",
                 meta, have, origin, s.cfg.taps, s.spectra, s.cfg.points, (unsigned long long)needed);
        goto fail;
    }
    tl_sigmf_set_adc_bits(rd, s.cfg.adc_bits);
    if (dir == NULL)
        dir = s.folder;
    if (folder_possible(dir, err, sizeof err) != 0)
        goto fail;
    if (!quiet) {
        printf("replay: %s: %s, %u channel%s at %.6g MHz, %llu samples per channel; scenario from %s; using the "
               "first %llu%s\n",
               meta, in->datatype, in->channels, in->channels == 1 ? "" : "s", in->sample_rate_hz / 1e6,
               (unsigned long long)in->samples, origin, (unsigned long long)needed,
               in->is_complex ? " real samples (at twice the rate)" : "");
        if (in->sample_rate_hz <= 0.0)
            printf("replay: note: the recording states no core:sample_rate; the scenario's %.6g MHz is assumed\n",
                   s.sky.sample_rate_hz / 1e6);
        fflush(stdout);
    }
    if (sharded) {
        tl_product *p = malloc(sizeof *p);
        uint8_t job[32];
        char path[4300];
        if (p == NULL) {
            snprintf(err, sizeof err, "out of memory");
            goto fail;
        }
        char why[4096];
        if (tl_replay_shard_job(meta, in->datatype, in->samples, &s, job, why, sizeof why) != 0 ||
            tl_run_outputs_folder(dir, why, sizeof why) != 0 ||
            tl_replay_shard_run(meta, block_bytes, &s, job, shard_i, shard_n, dir, path, sizeof path, p, why,
                                sizeof why) != 0) {
            snprintf(err, sizeof err, "%s", why);
            free(p);
            goto fail;
        }
        if (!quiet)
            printf("replay: shard %u of %u: spectra [%u, %u) of %u; wrote %s (merge all %u with tidelock merge)\n",
                   shard_i, shard_n, (uint32_t)((uint64_t)s.spectra * shard_i / shard_n),
                   (uint32_t)((uint64_t)s.spectra * (shard_i + 1u) / shard_n), s.spectra, path, shard_n);
        free(p);
        tl_sigmf_close(rd);
        return EXIT_OK;
    }
    if (threads > 0u) {
        tl_product *p = malloc(sizeof *p);
        if (p == NULL) {
            snprintf(err, sizeof err, "out of memory");
            goto fail;
        }
        char why[4096];
        if (tl_replay_threads_product(meta, block_bytes, &s, threads, p, why, sizeof why) != 0) {
            snprintf(err, sizeof err, "%s", why);
            free(p);
            goto fail;
        }
        if (tl_run_outputs_folder(dir, err, sizeof err) != 0 ||
            tl_spectra_write(dir, p, s.sky.sample_rate_hz, (int)s.write_csv, (int)s.write_npy, err, sizeof err) != 0) {
            free(p);
            goto fail;
        }
        if (!quiet)
            printf("replay: firmware chain in %u thread%s: %u spectra (antenna %u, discarded %u); spectra files in "
                   "%s/\n",
                   threads, threads == 1u ? "" : "s", p->spectra, p->antenna_spectra, p->discarded, dir);
        free(p);
        tl_sigmf_close(rd);
        return EXIT_OK;
    }
    r = malloc(sizeof *r);
    if (r == NULL) {
        snprintf(err, sizeof err, "out of memory");
        goto fail;
    }
    recording_src src = { rd, 0, "" };
    int bar = !quiet && isatty(STDERR_FILENO);
    const tl_status rs = replay_run(&s, &src, r, &bar);
    if (src.failed) {
        snprintf(err, sizeof err, "%s", src.err);
        goto fail;
    }
    if (rs != TL_OK) {
        snprintf(err, sizeof err, "%s: %s (%s)", origin, tl_status_text(rs), tl_status_name(rs));
        goto fail;
    }
    if (!quiet) {
        uint64_t rounded = 0, clipped = 0;
        for (unsigned i = 0; i < in->channels; i++) {
            rounded += tl_sigmf_rounded(rd, i);
            clipped += tl_sigmf_clipped(rd, i);
        }
        if (rounded != 0 || clipped != 0)
            printf("replay: note: %llu samples rounded to the %u-bit ADC's codes, %llu clipped at its range\n",
                   (unsigned long long)rounded, s.cfg.adc_bits, (unsigned long long)clipped);
        tl_report_print(stdout, "replay", &s, r);
    }
    if (tl_run_outputs_folder(dir, err, sizeof err) != 0 || tl_run_outputs_write(dir, &s, r, err, sizeof err) != 0)
        goto fail;
    if (!quiet)
        tl_run_outputs_say(stdout, dir, &s);
    rc = tl_fidelity_verdict(&r->fid, NULL, 0) ? EXIT_FAIL : EXIT_OK;
    free(r);
    tl_sigmf_close(rd);
    return rc;
fail:
    fprintf(stderr, "tidelock replay: %s\n", err);
    free(r);
    tl_sigmf_close(rd);
    return EXIT_FAIL;
}
