/* tidelock_main.c - the `tidelock` command line. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include "report.h"
#include "run.h"
#include "scenario.h"
#include "tables_gen.h"

static void usage(FILE *out)
{
    fprintf(out, "usage: tidelock COMMAND [options]\n"
                 "commands:\n"
                 "  run [-o DIR] [--drive DB]     run the built-in scenario; print the summary and write DIR/summary.json\n"
                 "  tables twiddle-source FILE    write the firmware twiddle table source\n"
                 "  tables taps-source FILE       write the firmware default coefficient table source\n"
                 "  help                          this text\n");
}

static int cmd_run(int argc, char **argv)
{
    const char *dir = "out";
    tl_scenario s;
    tl_scenario_default(&s);
    for (int i = 0; i < argc; i++) {
        if (strcmp(argv[i], "-o") == 0 && i + 1 < argc) {
            dir = argv[++i];
        } else if (strcmp(argv[i], "--drive") == 0 && i + 1 < argc) {
            char *end = NULL;
            const double v = strtod(argv[++i], &end);
            if (end == argv[i] || *end != '\0' || !(v >= -40.0 && v <= 12.0)) {
                fprintf(stderr, "tidelock run: --drive: '%s' is not a number of dB from -40 to 12\n", argv[i]);
                return 2;
            }
            s.drive_db = v;
        } else if (strcmp(argv[i], "-o") == 0 || strcmp(argv[i], "--drive") == 0) {
            fprintf(stderr, "tidelock run: %s needs a value (-o DIR, --drive DB from -40 to 12)\n", argv[i]);
            return 2;
        } else {
            fprintf(stderr, "tidelock run: unknown option '%s' (allowed: -o DIR, --drive DB)\n", argv[i]);
            return 2;
        }
    }
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        fprintf(stderr, "tidelock run: %s: cannot create output folder: %s\n", dir, strerror(errno));
        return 1;
    }
    tl_run_result *r = malloc(sizeof *r);
    if (r == NULL) {
        fprintf(stderr, "tidelock run: out of memory\n");
        return 1;
    }
    const tl_status st = tl_run_scenario(&s, r);
    if (st != TL_OK) {
        fprintf(stderr, "tidelock run: scenario %s: %s (%s)\n", s.name, tl_status_text(st), tl_status_name(st));
        free(r);
        return 1;
    }
    tl_report_print(stdout, &s, r);
    char path[4096], err[4400];
    snprintf(path, sizeof path, "%s/summary.json", dir);
    if (tl_report_write_json(path, &s, r, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock run: %s\n", err);
        free(r);
        return 1;
    }
    printf("wrote %s\n", path);
    const int fails = tl_fidelity_verdict(&r->fid, NULL, 0);
    free(r);
    return fails ? 3 : 0;
}

static int cmd_tables(int argc, char **argv)
{
    if (argc != 2 || (strcmp(argv[0], "twiddle-source") != 0 && strcmp(argv[0], "taps-source") != 0)) {
        fprintf(stderr, "tidelock tables: expected 'twiddle-source FILE' or 'taps-source FILE'\n");
        return 2;
    }
    char err[4400];
    if (tl_gen_write_file(argv[1], strcmp(argv[0], "twiddle-source") == 0 ? tl_gen_twiddle_source
                                                                         : tl_gen_default_taps_source,
                          err, sizeof err) != 0) {
        fprintf(stderr, "tidelock tables: %s\n", err);
        return 1;
    }
    return 0;
}

int main(int argc, char **argv)
{
    if (argc < 2 || strcmp(argv[1], "help") == 0 || strcmp(argv[1], "--help") == 0) {
        usage(argc < 2 ? stderr : stdout);
        return argc < 2 ? 2 : 0;
    }
    if (strcmp(argv[1], "run") == 0)
        return cmd_run(argc - 2, argv + 2);
    if (strcmp(argv[1], "tables") == 0)
        return cmd_tables(argc - 2, argv + 2);
    fprintf(stderr, "tidelock: unknown command '%s' (commands: run, tables, help)\n", argv[1]);
    return 2;
}
