/* cmd_upset.c - `tidelock upset`: flip bits in a live chain, count what the
 * scrubber catches and what reaches the downlink (upset.h). */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "atomic_file.h"
#include "commands.h"
#include "upset.h"

static const char *const upset_help =
    "usage: tidelock upset [--trials N] [--target LIST] [--seed S] [--flips K] [--scrub-period P]\n"
    "                      [--integration M] [--products J] [--json FILE] [-q]\n"
    "\n"
    "Upset injection: runs a small built-in scene (256 points, 4 taps, two noise inputs,\n"
    "a three-state switch sequence) through the firmware chain once clean, then N times per\n"
    "target with K random single-bit flips into that target of the live chain context, each\n"
    "at a random moment, and compares every product and downlink packet with the clean run.\n"
    "Per target it counts trials detected by the scrubber, flagged upset, with a changed\n"
    "spectrum, changed silently (no flag), only housekeeping changed, no effect, stopped\n"
    "(fewer products) and watchdog (a hang). docs/faults.md explains the regions.\n"
    "\n"
    "options:\n"
    "  --trials N         trials per target, 1 .. 10000000 (default 2000)\n"
    "  --target LIST      comma-separated: taps, twiddles, config, accumulators, state,\n"
    "                     scrubber, anywhere; or tables (taps,twiddles), or all (default)\n"
    "  --seed S           random seed, 0 .. 2^64-1 (default 1)\n"
    "  --flips K          flips per trial, 1 .. 64 (default 1)\n"
    "  --scrub-period P   frames per scrubbed table slice, 0 (default 1) .. 65536\n"
    "  --integration M    spectra per product, 16 .. 4096 (default 16)\n"
    "  --products J       products per run, 1 .. 16 (default 3)\n"
    "  --json FILE        also write the tallies as JSON\n"
    "  -q, --quiet        print only errors\n"
    "  -h, --help         this text\n"
    "exit status: 0 no silent change of tables or configuration and no hang, 1 otherwise\n"
    "(or an error), 2 usage\n"
    "example: tidelock upset --trials 2000 --target tables,config --json upset.json\n";

static int number(const char *s, unsigned long long max, unsigned long long *v)
{
    if (s == NULL || *s == '\0' || *s == '-')
        return -1;
    char *e = NULL;
    errno = 0;
    const unsigned long long x = strtoull(s, &e, 10);
    if (errno != 0 || *e != '\0' || x > max)
        return -1;
    *v = x;
    return 0;
}

typedef struct json_ctx {
    const tl_upset_opts *o;
    const tl_upset_tally *t;
} json_ctx;

static int write_json(FILE *f, void *ctx)
{
    const json_ctx *j = ctx;
    return tl_upset_write_json(f, j->o, j->t);
}

int tl_cmd_upset(int argc, char **argv)
{
    static const struct option opts[] = { { "trials", required_argument, NULL, 'n' },
                                          { "target", required_argument, NULL, 't' },
                                          { "seed", required_argument, NULL, 's' },
                                          { "flips", required_argument, NULL, 'k' },
                                          { "scrub-period", required_argument, NULL, 'p' },
                                          { "integration", required_argument, NULL, 'm' },
                                          { "products", required_argument, NULL, 'j' },
                                          { "json", required_argument, NULL, 'J' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    tl_upset_opts o;
    tl_upset_defaults(&o);
    const char *json = NULL;
    int quiet = 0, c;
    unsigned long long v = 0;
    opterr = 0;
    optind = 1;
    while ((c = getopt_long(argc, argv, ":qh", opts, NULL)) != -1) {
        switch (c) {
        case 'n':
            if (number(optarg, 10000000u, &v) != 0 || v < 1u)
                return tl_cli_usage("upset", "--trials '%s': must be an integer from 1 to 10000000", optarg);
            o.trials = (uint32_t)v;
            break;
        case 't': {
            const char *bad = NULL;
            o.targets = tl_upset_parse_targets(optarg, &bad);
            if (o.targets == 0u)
                return tl_cli_usage("upset",
                                    "--target '%s': names are taps, twiddles, config, accumulators, state, "
                                    "scrubber, anywhere, tables, all",
                                    optarg);
            break;
        }
        case 's':
            if (number(optarg, ~0ull, &v) != 0)
                return tl_cli_usage("upset", "--seed '%s': must be an integer from 0 to 2^64-1", optarg);
            o.seed = v;
            break;
        case 'k':
            if (number(optarg, 64u, &v) != 0 || v < 1u)
                return tl_cli_usage("upset", "--flips '%s': must be an integer from 1 to 64", optarg);
            o.flips = (uint32_t)v;
            break;
        case 'p':
            if (number(optarg, 65536u, &v) != 0)
                return tl_cli_usage("upset", "--scrub-period '%s': must be an integer from 0 to 65536", optarg);
            o.period = (uint32_t)v;
            break;
        case 'm':
            if (number(optarg, 4096u, &v) != 0 || v < 16u)
                return tl_cli_usage("upset", "--integration '%s': must be an integer from 16 to 4096", optarg);
            o.integration = (uint32_t)v;
            break;
        case 'j':
            if (number(optarg, 16u, &v) != 0 || v < 1u)
                return tl_cli_usage("upset", "--products '%s': must be an integer from 1 to 16", optarg);
            o.products = (uint32_t)v;
            break;
        case 'J': json = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(upset_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("upset", argv, c);
        }
    }
    if (optind < argc)
        return tl_cli_usage("upset", "takes no file argument, got '%s'", argv[optind]);
    tl_upset_tally t[TL_UPSET_TARGETS];
    char err[1024];
    if (tl_upset_run(&o, t, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock %s\n", err);
        return EXIT_FAIL;
    }
    if (!quiet)
        tl_upset_print(stdout, &o, t);
    if (json != NULL) {
        json_ctx j = { &o, t };
        if (tl_atomic_write(json, write_json, &j, err, sizeof err) != 0) {
            fprintf(stderr, "tidelock upset: %s\n", err);
            return EXIT_FAIL;
        }
    }
    uint64_t bad = 0;
    for (unsigned k = 0; k < TL_UPSET_TARGETS; k++)
        bad += t[k].watchdog + (k <= TL_UPSET_CONFIG ? t[k].silent : 0u);
    return bad == 0u ? EXIT_OK : EXIT_FAIL;
}
