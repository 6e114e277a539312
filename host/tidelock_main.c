/* tidelock_main.c - the `tidelock` command line.
 *
 * Exit status, for every command: 0 success; 1 failure (a bad scenario file,
 * an I/O error, a fidelity verdict of FAIL); 2 usage (bad command line). */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "atomic_file.h"
#include "commands.h"
#include "html_report.h"
#include "report.h"
#include "run.h"
#include "run_outputs.h"
#include "scenario.h"
#include "spectra_out.h"
#include "tables_gen.h"
#include "taps_design.h"
#include "tl_fft.h"
#include "version.h"
#if defined(__x86_64__) && defined(__GNUC__)
#include "x86/tl_simd_x86.h"
#endif




static const char *const main_help =
    "usage: tidelock COMMAND [options]\n"
    "       tidelock --version | --help\n"
    "\n"
    "Verify a spectrometer's fixed-point firmware against a floating-point reference.\n"
    "\n"
    "commands:\n"
    "  run       run a scenario: firmware chain, FFTW reference, fidelity figures, outputs\n"
    "  scenario  print the default scenario file, or check one\n"
    "  simulate  write a scenario's ADC voltages as a SigMF recording (ri16_le)\n"
    "  replay    run a SigMF recording through the chain and the reference, as run does\n"
    "  decode    rebuild the spectra from recorded transfer frames or space packets, with a log\n"
    "  budget    the downlink budget: volumes, link time, storage and their margins\n"
    "  tables    write a filterbank coefficient table image, or the committed table sources\n"
    "  vectors   make or check the golden vectors (input and expected frame stream)\n"
    "  hil       run golden vectors on a target over the link protocol and compare\n"
    "  upset     flip bits in the live chain: what the scrubber catches, what reaches the downlink\n"
    "  sweep     run a grid of configurations into one table (CSV, JSON); shardable\n"
    "  merge     combine sweep or replay shards into the outputs one machine writes\n"
    "  help      help on a command (tidelock help run)\n"
    "\n"
    "exit status: 0 success, 1 failure (bad scenario file, I/O error, fidelity FAIL), 2 usage\n"
    "example: tidelock scenario --print > my.ini && tidelock run my.ini -o out\n";

static const char *const run_help =
    "usage: tidelock run [SCENARIO.ini] [-o DIR] [--drive DB] [-q]\n"
    "\n"
    "Run a scenario (the built-in default when no file is given): feed its ADC voltages to\n"
    "the firmware chain and to the FFTW double reference, print the fidelity figures, and\n"
    "write DIR/summary.json, DIR/scenario.ini (as resolved), and the integrated spectra as\n"
    "CSV and .npy. Then predict the feature's detection significance after [sensitivity] hours,\n"
    "and write DIR/report.html with its figures (PNG and SVG). Every file is written whole or\n"
    "not at all.\n"
    "\n"
    "options:\n"
    "  -o, --output DIR   output folder (default: the scenario's [output] folder)\n"
    "      --drive DB     override [sky] drive_db, from -40 to 12 dB\n"
    "  -q, --quiet        print nothing but errors; the exit status tells the verdict\n"
    "  -h, --help         this text\n"
    "exit status: 0 PASS, 1 FAIL or error, 2 usage\n"
    "example: tidelock run docs/scenario-default.ini -o out --drive -20\n";

static const char *const scenario_help =
    "usage: tidelock scenario --print\n"
    "       tidelock scenario --check SCENARIO.ini [-q]\n"
    "\n"
    "--print writes the built-in default scenario, every key commented with its unit,\n"
    "range and default, to standard output: a file to start from. --check reads a\n"
    "scenario and prints it as resolved (defaults filled in), or one error line.\n"
    "\n"
    "options:\n"
    "  -p, --print        write the default scenario\n"
    "  -c, --check FILE   check FILE and print it resolved\n"
    "  -q, --quiet        with --check, print nothing on success\n"
    "  -h, --help         this text\n"
    "example: tidelock scenario --print > my.ini && tidelock scenario --check my.ini\n";

static const char *const tables_help =
    "usage: tidelock tables [SCENARIO.ini] -o FILE\n"
    "       tidelock tables --twiddle-source FILE | --taps-source FILE\n"
    "\n"
    "Write the filterbank coefficient table image the firmware loads (window, taps and\n"
    "channels from the scenario; header and CRC-32C as in firmware/tl_taps.h), or the C\n"
    "sources of the committed firmware tables.\n"
    "\n"
    "options:\n"
    "  -o, --output FILE        the table image\n"
    "      --twiddle-source FILE  firmware/tl_twiddle_table.c\n"
    "      --taps-source FILE     firmware/tl_taps_default.c\n"
    "  -h, --help               this text\n"
    "example: tidelock tables my.ini -o taps.bin\n";


/* ---- run ------------------------------------------------------------------- */

static int cmd_run(int argc, char **argv)
{
    static const struct option opts[] = { { "output", required_argument, NULL, 'o' },
                                          { "drive", required_argument, NULL, 'd' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *dir = NULL, *drive = NULL;
    int quiet = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'o': dir = optarg; break;
        case 'd': drive = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(run_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("run", argv, c);
        }
    }
    if (argc - optind > 1)
        return tl_cli_usage("run", "expected at most one scenario file, got also '%s'", argv[optind + 1]);
    tl_scenario s;
    tl_scenario_default(&s);
    char err[1024];
    if (optind < argc && tl_scenario_load(argv[optind], &s, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock run: %s\n", err);
        return EXIT_FAIL;
    }
    if (drive != NULL) {
        char *end = NULL;
        const double v = strtod(drive, &end);
        if (end == drive || *end != '\0' || !(v >= -40.0 && v <= 12.0))
            return tl_cli_usage("run", "--drive: '%s' is not a number of dB from -40 to 12", drive);
        s.drive_db = v;
    }
    if (dir == NULL)
        dir = s.folder;
    if (tl_run_outputs_folder(dir, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock run: %s\n", err);
        return EXIT_FAIL;
    }
    tl_run_result *r = malloc(sizeof *r);
    if (r == NULL) {
        fprintf(stderr, "tidelock run: out of memory\n");
        return EXIT_FAIL;
    }
    int bar = !quiet && isatty(STDERR_FILENO);
    const tl_status rs = tl_run_scenario(&s, r, tl_run_progress_bar, &bar);
    if (rs != TL_OK) {
        fprintf(stderr, "tidelock run: scenario %s: %s (%s)\n", s.name, tl_status_text(rs), tl_status_name(rs));
        tl_run_release(r);
        free(r);
        return EXIT_FAIL;
    }
    if (!quiet)
        tl_report_print(stdout, "run", &s, r);
    if (tl_run_outputs_write(dir, &s, r, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock run: %s\n", err);
        tl_run_release(r);
        free(r);
        return EXIT_FAIL;
    }
    if (tl_html_report_run(dir, &s, r, quiet ? NULL : stdout, err, sizeof err) != 0) { /* html_report.h */
        fprintf(stderr, "tidelock run: %s\n", err);
        tl_run_release(r);
        free(r);
        return EXIT_FAIL;
    }
    if (!quiet)
        tl_run_outputs_say(stdout, dir, &s);
    const int fails = tl_fidelity_verdict(&r->fid, NULL, 0);
    tl_run_release(r);
    free(r);
    return fails ? EXIT_FAIL : EXIT_OK;
}

/* ---- scenario ------------------------------------------------------------ */

static int cmd_scenario(int argc, char **argv)
{
    static const struct option opts[] = { { "print", no_argument, NULL, 'p' },
                                          { "check", required_argument, NULL, 'c' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    int print = 0, quiet = 0, c;
    const char *check = NULL;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":pc:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'p': print = 1; break;
        case 'c': check = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(scenario_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("scenario", argv, c);
        }
    }
    if (optind < argc)
        return tl_cli_usage("scenario", "unexpected argument '%s'", argv[optind]);
    if (print == (check != NULL))
        return tl_cli_usage("scenario", "give exactly one of --print or --check FILE%s", "");
    tl_scenario s;
    tl_scenario_default(&s);
    if (check != NULL) {
        char err[1024];
        if (tl_scenario_load(check, &s, err, sizeof err) != 0) {
            fprintf(stderr, "tidelock scenario: %s\n", err);
            return EXIT_FAIL;
        }
        if (quiet)
            return EXIT_OK;
    }
    return tl_scenario_write(stdout, &s) == 0 ? EXIT_OK : EXIT_FAIL;
}

/* ---- tables -------------------------------------------------------------- */

typedef struct image_out {
    const uint8_t *bytes;
    size_t len;
} image_out;

static int write_image(FILE *f, void *ctx)
{
    const image_out *im = ctx;
    return fwrite(im->bytes, 1, im->len, f) == im->len ? 0 : -1;
}

static int cmd_tables(int argc, char **argv)
{
    static const struct option opts[] = { { "output", required_argument, NULL, 'o' },
                                          { "twiddle-source", required_argument, NULL, 'w' },
                                          { "taps-source", required_argument, NULL, 't' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *out = NULL, *tw = NULL, *ts = NULL;
    int c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:h", opts, NULL)) != -1) {
        switch (c) {
        case 'o': out = optarg; break;
        case 'w': tw = optarg; break;
        case 't': ts = optarg; break;
        case 'h': fputs(tables_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("tables", argv, c);
        }
    }
    if ((out != NULL) + (tw != NULL) + (ts != NULL) != 1)
        return tl_cli_usage("tables", "give exactly one of -o FILE, --twiddle-source FILE, --taps-source FILE%s", "");
    char err[1024];
    if (tw != NULL || ts != NULL) {
        if (optind < argc)
            return tl_cli_usage("tables", "unexpected argument '%s'", argv[optind]);
        if (tl_gen_write_file(tw ? tw : ts, tw ? tl_gen_twiddle_source : tl_gen_default_taps_source, err,
                              sizeof err) != 0) {
            fprintf(stderr, "tidelock tables: %s\n", err);
            return EXIT_FAIL;
        }
        return EXIT_OK;
    }
    if (argc - optind > 1)
        return tl_cli_usage("tables", "expected at most one scenario file, got also '%s'", argv[optind + 1]);
    tl_scenario s;
    tl_scenario_default(&s);
    if (optind < argc && tl_scenario_load(argv[optind], &s, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock tables: %s\n", err);
        return EXIT_FAIL;
    }
    tl_taps *t = malloc(sizeof *t);
    const size_t cap = TL_TAPS_IMAGE_BYTES(s.cfg.taps, s.cfg.points);
    uint8_t *img = malloc(cap);
    size_t len = 0;
    int rc = EXIT_FAIL;
    if (t == NULL || img == NULL) {
        fprintf(stderr, "tidelock tables: out of memory\n");
    } else if (tl_taps_design(s.window, s.cfg.taps, s.cfg.points, t, NULL) != 0 ||
               tl_taps_write_image(t, img, cap, &len) != TL_OK) {
        fprintf(stderr, "tidelock tables: cannot design a %u-tap %s table of %u points\n", s.cfg.taps,
                tl_window_name(s.window), s.cfg.points);
    } else {
        image_out im = { img, len };
        if (tl_atomic_write(out, write_image, &im, err, sizeof err) != 0)
            fprintf(stderr, "tidelock tables: %s\n", err);
        else
            rc = EXIT_OK;
    }
    free(t);
    free(img);
    return rc;
}

/* ---- dispatch -------------------------------------------------------------- */

int main(int argc, char **argv)
{
#if defined(__x86_64__) && defined(__GNUC__)
    /* TIDELOCK_SIMD=off: the portable firmware instead of the AVX2 twins
     * (same bytes; for comparisons and benchmarks) */
    const char *simd = getenv("TIDELOCK_SIMD");
    if (simd != NULL && strcmp(simd, "off") == 0)
        tl_simd_x86_enable(0);
#endif
    if (argc < 2) {
        fputs(main_help, stderr);
        return EXIT_USAGE;
    }
    const char *cmd = argv[1];
    if (strcmp(cmd, "--help") == 0 || strcmp(cmd, "-h") == 0) {
        fputs(main_help, stdout);
        return EXIT_OK;
    }
    if (strcmp(cmd, "--version") == 0 || strcmp(cmd, "-V") == 0) {
        printf("tidelock %s (arithmetic spec %u)\n", TL_TOOL_VERSION, (unsigned)TL_ARITH_VERSION);
        return EXIT_OK;
    }
    if (strcmp(cmd, "help") == 0) {
        const char *topic = argc > 2 ? argv[2] : "";
        if (strcmp(topic, "simulate") == 0 || strcmp(topic, "replay") == 0)
            return (topic[0] == 's' ? tl_cmd_simulate : tl_cmd_replay)(2, (char *[]){ argv[2], "--help", NULL });
        if (strcmp(topic, "budget") == 0)
            return tl_cmd_budget(2, (char *[]){ argv[2], "--help", NULL });
        if (strcmp(topic, "decode") == 0)
            return tl_cmd_decode(2, (char *[]){ argv[2], "--help", NULL });
        if (strcmp(topic, "vectors") == 0)
            return tl_cmd_vectors(2, (char *[]){ argv[2], "--help", NULL });
        if (strcmp(topic, "hil") == 0)
            return tl_cmd_hil(2, (char *[]){ argv[2], "--help", NULL });
        if (strcmp(topic, "upset") == 0)
            return tl_cmd_upset(2, (char *[]){ argv[2], "--help", NULL });
        if (strcmp(topic, "sweep") == 0)
            return tl_cmd_sweep(2, (char *[]){ argv[2], "--help", NULL });
        if (strcmp(topic, "merge") == 0)
            return tl_cmd_merge(2, (char *[]){ argv[2], "--help", NULL });
        fputs(strcmp(topic, "run") == 0        ? run_help
              : strcmp(topic, "scenario") == 0 ? scenario_help
              : strcmp(topic, "tables") == 0   ? tables_help
                                               : main_help,
              stdout);
        return EXIT_OK;
    }
    if (strcmp(cmd, "run") == 0)
        return cmd_run(argc - 1, argv + 1);
    if (strcmp(cmd, "scenario") == 0)
        return cmd_scenario(argc - 1, argv + 1);
    if (strcmp(cmd, "simulate") == 0)
        return tl_cmd_simulate(argc - 1, argv + 1);
    if (strcmp(cmd, "replay") == 0)
        return tl_cmd_replay(argc - 1, argv + 1);
    if (strcmp(cmd, "decode") == 0)
        return tl_cmd_decode(argc - 1, argv + 1);
    if (strcmp(cmd, "budget") == 0)
        return tl_cmd_budget(argc - 1, argv + 1);
    if (strcmp(cmd, "tables") == 0)
        return cmd_tables(argc - 1, argv + 1);
    if (strcmp(cmd, "vectors") == 0)
        return tl_cmd_vectors(argc - 1, argv + 1);
    if (strcmp(cmd, "hil") == 0)
        return tl_cmd_hil(argc - 1, argv + 1);
    if (strcmp(cmd, "upset") == 0)
        return tl_cmd_upset(argc - 1, argv + 1);
    if (strcmp(cmd, "sweep") == 0)
        return tl_cmd_sweep(argc - 1, argv + 1);
    if (strcmp(cmd, "merge") == 0)
        return tl_cmd_merge(argc - 1, argv + 1);
    fprintf(stderr,
            "tidelock: unknown command '%s' (commands: run, scenario, simulate, replay, decode, budget, tables, "
            "vectors, hil, upset, sweep, merge, help; "
            "see tidelock --help)\n",
            cmd);
    return EXIT_USAGE;
}
