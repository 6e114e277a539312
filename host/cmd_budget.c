/* cmd_budget.c - `tidelock budget`: does the scenario's downlink fit the
 * link, the allocation and the storage? (budget.h) */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "budget.h"
#include "commands.h"
#include "html_report.h"
#include "run_outputs.h"
#include "scenario.h"

static const char *const budget_help =
    "usage: tidelock budget [SCENARIO.ini] [-o DIR] [-q]\n"
    "\n"
    "The downlink budget of a scenario (the built-in default when no file is given). The\n"
    "scenario is simulated through the firmware chain; its product, and one of the flight\n"
    "integration length ([fidelity] extrapolate_to), are packetised and framed by the firmware's\n"
    "own downlink code, so the sizes and the compression are measured, not assumed. From them:\n"
    "data volume per product, per hour, per lunar night and day ([budget] night_fraction,\n"
    "day_fraction), the frame overhead, the link time per Earth day at [budget] link_rate_kbps,\n"
    "the storage needed between passes, and the margin of each against [budget]. Beside them the\n"
    "processing budget: instructions per sample by stage ([processor], measured on the Cortex-M7\n"
    "build, docs/performance.md), cycles per second at the sample rate, the load against\n"
    "[processor] clock_mhz, the sustainable real-time fraction and the headroom.\n"
    "\n"
    "options:\n"
    "  -o, --output DIR   also write DIR/budget.json, DIR/budget.html and its figure budget.png/.svg\n"
    "                     (the folder is created if missing)\n"
    "  -q, --quiet        print nothing but errors; the exit status tells whether it closes\n"
    "  -h, --help         this text\n"
    "exit status: 0 the budget closes, 1 it does not (or an error), 2 usage\n"
    "example: tidelock budget docs/scenario-default.ini -o out\n";

int tl_cmd_budget(int argc, char **argv)
{
    static const struct option opts[] = { { "output", required_argument, NULL, 'o' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *dir = NULL;
    int quiet = 0, c;
    opterr = 0;
    optind = 1;
    while ((c = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'o': dir = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(budget_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("budget", argv, c);
        }
    }
    if (argc - optind > 1)
        return tl_cli_usage("budget", "expected at most one scenario file, got also '%s'", argv[optind + 1]);
    tl_scenario s;
    tl_scenario_default(&s);
    char err[1024];
    if (optind < argc && tl_scenario_load(argv[optind], &s, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock budget: %s\n", err);
        return EXIT_FAIL;
    }
    if (dir != NULL && tl_run_outputs_folder(dir, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock budget: %s\n", err);
        return EXIT_FAIL;
    }
    tl_budget b;
    if (tl_budget_compute(&s, &b, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock budget: %s\n", err);
        return EXIT_FAIL;
    }
    if (!quiet)
        tl_budget_print(stdout, &s, &b);
    if (dir != NULL) {
        char path[4400];
        snprintf(path, sizeof path, "%s/budget.json", dir);
        if (tl_budget_write_json(path, &s, &b, err, sizeof err) != 0) {
            fprintf(stderr, "tidelock budget: %s\n", err);
            return EXIT_FAIL;
        }
        if (!quiet)
            printf("wrote %s\n", path);
        if (tl_html_report_budget(dir, &s, &b, quiet ? NULL : stdout, err, sizeof err) != 0) { /* budget.html */
            fprintf(stderr, "tidelock budget: %s\n", err);
            return EXIT_FAIL;
        }
    }
    return b.closed ? EXIT_OK : EXIT_FAIL;
}
