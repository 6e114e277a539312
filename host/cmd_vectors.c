/* cmd_vectors.c - `tidelock vectors make|check [DIR]`: the golden vectors
 * (vectors.h). */
#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "commands.h"
#include "vectors.h"

static const char *const vectors_help =
    "usage: tidelock vectors make [DIR] [-q]\n"
    "       tidelock vectors check [DIR]\n"
    "\n"
    "Golden vectors: small inputs and the exact transfer frame stream the firmware sends for\n"
    "them, on every target. make writes each vector into DIR/NAME (scenario.ini, setup.bin,\n"
    "taps.bin, samples.bin, frames.bin) and DIR/manifest.json (purpose, scenario, seed,\n"
    "arithmetic spec version, SHA-256 of every file). check regenerates them in a temporary\n"
    "folder and compares byte for byte: one line per file that differs, is missing or is not\n"
    "expected, naming the first differing frame, packet, field and channel of a frame stream.\n"
    "DIR defaults to vectors.\n"
    "\n"
    "options:\n"
    "  -q, --quiet   make: print nothing but errors\n"
    "  -h, --help    this text\n"
    "exit status: 0 written / identical, 1 error or any difference, 2 usage\n"
    "example: tidelock vectors check && tidelock vectors make /tmp/v\n";

int tl_cmd_vectors(int argc, char **argv)
{
    static const struct option opts[] = { { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    int quiet = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":qh", opts, NULL)) != -1) {
        switch (c) {
        case 'q': quiet = 1; break;
        case 'h': fputs(vectors_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("vectors", argv, c);
        }
    }
    if (optind >= argc)
        return tl_cli_usage("vectors", "expected make or check%s", "");
    const char *verb = argv[optind];
    if (strcmp(verb, "make") != 0 && strcmp(verb, "check") != 0)
        return tl_cli_usage("vectors", "unknown action '%s' (make or check)", verb);
    if (argc - optind > 2)
        return tl_cli_usage("vectors", "expected at most one folder, got also '%s'", argv[optind + 2]);
    const char *dir = argc - optind == 2 ? argv[optind + 1] : "vectors";
    char err[1024];
    if (verb[0] == 'm') {
        if (tl_vectors_make(dir, quiet ? NULL : stdout, err, sizeof err) != 0) {
            fprintf(stderr, "tidelock vectors make: %s\n", err);
            return EXIT_FAIL;
        }
        if (!quiet)
            printf("%zu vectors and %s/manifest.json written\n", tl_vectors_count(), dir);
        return EXIT_OK;
    }
    const long bad = tl_vectors_check(dir, stdout, err, sizeof err);
    if (bad < 0) {
        fprintf(stderr, "tidelock vectors check: %s\n", err);
        return EXIT_FAIL;
    }
    printf("vectors check %s: %zu vectors, %ld mismatch%s\n", dir, tl_vectors_count(), bad, bad == 1 ? "" : "es");
    return bad == 0 ? EXIT_OK : EXIT_FAIL;
}
