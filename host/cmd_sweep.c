/* cmd_sweep.c - `tidelock sweep` (a grid of configurations into one table)
 * and `tidelock merge` (shards of a sweep or a long replay into the outputs
 * one machine writes). docs/cluster.md describes both and the recipes. */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "replay_shard.h"
#include "run_outputs.h"
#include "scenario.h"
#include "shard_file.h"
#include "sweep.h"

static const char *const sweep_help =
    "usage: tidelock sweep [SCENARIO.ini] --vary SECTION.KEY=V1,V2,... [--vary ...] --out DIR [--shard I/N]\n"
    "                      [--common-noise] [-q]\n"
    "\n"
    "Run every point of the grid the --vary options span over the scenario (the built-in default when no\n"
    "file is given) and write one table, DIR/sweep.csv and DIR/sweep.json: per point its values, its seed\n"
    "and the fidelity margin, bias, saturation counts, compression, data volume and budget figures.\n"
    "Order: the first --vary varies slowest, the last fastest. Every point is checked before any runs.\n"
    "Each point's [sky] seed is derived from the scenario and the point's values (never from the shard);\n"
    "vary sky.seed for independent realisations. --common-noise derives it from the scenario and\n"
    "sky.seed only, so every configuration sees the same noise (common random numbers).\n"
    "With --shard I/N (or SLURM_ARRAY_TASK_ID and SLURM_ARRAY_TASK_COUNT in the environment) only the\n"
    "points p with p mod N = I run, into DIR/shard-IIII-of-NNNN.tlshard; `tidelock merge` makes the table.\n"
    "\n"
    "options:\n"
    "      --vary K=V,...  a scenario key (as in tidelock scenario --print: section.key) and its values;\n"
    "                      up to 8 keys, 64 values each, 100000 points\n"
    "  -o, --out DIR       output folder (created when missing)\n"
    "      --shard I/N     run shard I of N (0 <= I < N)\n"
    "      --common-noise  the same noise realisation at every point (per sky.seed value)\n"
    "  -q, --quiet         print nothing but errors\n"
    "  -h, --help          this text\n"
    "exit status: 0 done, 1 error (bad value, run or I/O error), 2 usage\n"
    "example: tidelock sweep my.ini --vary instrument.channels=1024,2048 --vary downlink.encoding=lossless,bounded "
    "--out grid\n";

static const char *const merge_help =
    "usage: tidelock merge SHARD.tlshard... --out DIR [-q]\n"
    "\n"
    "Combine the shard files of one sweep (tidelock sweep --shard) into DIR/sweep.csv and DIR/sweep.json,\n"
    "or of one long replay (tidelock replay --shard) into the spectra files replay --threads writes: the\n"
    "same bytes one machine writes. Refused with one line: a damaged file (CRC-32C), another version,\n"
    "shards of different jobs (scenario, grid or recording), a shard missing or given twice.\n"
    "\n"
    "options:\n"
    "  -o, --out DIR   output folder (created when missing)\n"
    "  -q, --quiet     print nothing but errors\n"
    "  -h, --help      this text\n"
    "exit status: 0 done, 1 error, 2 usage\n"
    "example: tidelock merge grid/shard-*.tlshard --out grid\n";

int tl_cmd_sweep(int argc, char **argv)
{
    static const struct option opts[] = { { "vary", required_argument, NULL, 'v' },
                                          { "out", required_argument, NULL, 'o' },
                                          { "output", required_argument, NULL, 'o' },
                                          { "shard", required_argument, NULL, 's' },
                                          { "common-noise", no_argument, NULL, 'c' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *dir = NULL, *shard = NULL;
    int common = 0;
    const char *vary[TL_SWEEP_MAX_AXES + 1];
    unsigned nvary = 0;
    int quiet = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'v':
            if (nvary > TL_SWEEP_MAX_AXES)
                return tl_cli_usage("sweep", "--vary: at most 8 keys (got also '%s')", optarg);
            vary[nvary++] = optarg;
            break;
        case 'o': dir = optarg; break;
        case 's': shard = optarg; break;
        case 'c': common = 1; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(sweep_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("sweep", argv, c);
        }
    }
    if (argc - optind > 1)
        return tl_cli_usage("sweep", "expected at most one scenario file, got also '%s'", argv[optind + 1]);
    if (dir == NULL)
        return tl_cli_usage("sweep", "give the output folder, --out DIR%s", "");
    if (nvary == 0)
        return tl_cli_usage("sweep", "give at least one --vary SECTION.KEY=V1,V2,...%s", "");
    char err[4096];
    uint32_t si = 0, sn = 0;
    int sharded = 0;
    if (shard != NULL) {
        if (tl_shard_parse(shard, &si, &sn, err, sizeof err) != 0)
            return tl_cli_usage("sweep", "%s", err);
        sharded = 1;
    } else if (tl_shard_from_env(&sharded, &si, &sn, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock sweep: %s\n", err);
        return EXIT_USAGE;
    }
    tl_scenario s;
    tl_scenario_default(&s);
    const char *origin = optind < argc ? argv[optind] : "the built-in default scenario";
    if (optind < argc && tl_scenario_load(argv[optind], &s, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock sweep: %s\n", err);
        return EXIT_FAIL;
    }
    tl_sweep_plan *p = malloc(sizeof *p);
    tl_sweep_row *rows = NULL;
    int rc = EXIT_FAIL;
    if (p == NULL) {
        fprintf(stderr, "tidelock sweep: out of memory\n");
        return EXIT_FAIL;
    }
    tl_sweep_plan_init(p, &s, origin);
    p->common_noise = (uint32_t)common;
    for (unsigned k = 0; k < nvary; k++)
        if (tl_sweep_add_axis(p, vary[k], err, sizeof err) != 0)
            goto fail;
    if (tl_sweep_plan_check(p, err, sizeof err) != 0)
        goto fail;
    if (!sharded) {
        si = 0;
        sn = 1;
    }
    const uint32_t mine = p->points > si ? (p->points - si + sn - 1u) / sn : 0u;
    rows = calloc(mine ? mine : 1u, sizeof *rows);
    if (rows == NULL) {
        snprintf(err, sizeof err, "out of memory");
        goto fail;
    }
    if (tl_run_outputs_folder(dir, err, sizeof err) != 0)
        goto fail;
    if (!quiet) {
        printf("sweep: %u point%s from %s", p->points, p->points == 1 ? "" : "s", origin);
        if (sharded)
            printf("; shard %u of %u runs %u of them", si, sn, mine);
        printf("\n");
        fflush(stdout);
    }
    uint32_t done = 0;
    for (uint32_t i = si; i < p->points; i += sn) {
        if (tl_sweep_run_point(p, i, &rows[done], err, sizeof err) != 0)
            goto fail;
        done++;
        if (!quiet) {
            printf("sweep: point %u done (%u of %u)\n", i, done, mine);
            fflush(stdout);
        }
    }
    if (sharded) {
        tl_bytebuf b = { 0 };
        if (tl_sweep_shard_payload(p, rows, done, &b) != 0) {
            free(b.p);
            snprintf(err, sizeof err, "out of memory");
            goto fail;
        }
        tl_shard sh;
        memset(&sh, 0, sizeof sh);
        sh.kind = TL_SHARD_SWEEP;
        memcpy(sh.job, p->job, 32);
        sh.index = si;
        sh.count = sn;
        sh.payload = b.p;
        sh.len = b.len;
        char path[4300];
        tl_shard_path(path, sizeof path, dir, si, sn);
        const int w = tl_shard_write(path, &sh, err, sizeof err);
        free(b.p);
        if (w != 0)
            goto fail;
        if (!quiet)
            printf("sweep: wrote %s (merge all %u shards with tidelock merge)\n", path, sn);
    } else {
        if (tl_sweep_write_tables(dir, p, rows, err, sizeof err) != 0)
            goto fail;
        if (!quiet)
            printf("sweep: wrote %s/sweep.csv and %s/sweep.json\n", dir, dir);
    }
    rc = EXIT_OK;
    free(rows);
    free(p);
    return rc;
fail:
    fprintf(stderr, "tidelock sweep: %s\n", err);
    free(rows);
    free(p);
    return EXIT_FAIL;
}

int tl_cmd_merge(int argc, char **argv)
{
    static const struct option opts[] = { { "out", required_argument, NULL, 'o' },
                                          { "output", required_argument, NULL, 'o' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *dir = NULL;
    int quiet = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'o': dir = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(merge_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("merge", argv, c);
        }
    }
    if (dir == NULL)
        return tl_cli_usage("merge", "give the output folder, --out DIR%s", "");
    if (optind >= argc)
        return tl_cli_usage("merge", "give the shard files, SHARD.tlshard...%s", "");
    const size_t n = (size_t)(argc - optind);
    const char *const *paths = (const char *const *)argv + optind;
    tl_shard *sh = calloc(n, sizeof *sh);
    char err[4096];
    int rc = EXIT_FAIL;
    if (sh == NULL) {
        fprintf(stderr, "tidelock merge: out of memory\n");
        return EXIT_FAIL;
    }
    for (size_t k = 0; k < n; k++)
        if (tl_shard_read(paths[k], &sh[k], err, sizeof err) != 0)
            goto out;
    if (tl_shard_check_set(paths, sh, n, err, sizeof err) != 0 || tl_run_outputs_folder(dir, err, sizeof err) != 0)
        goto out;
    if (sh[0].kind == TL_SHARD_SWEEP) {
        if (tl_sweep_merge(paths, sh, n, dir, err, sizeof err) != 0)
            goto out;
        if (!quiet)
            printf("merge: %zu sweep shard%s into %s/sweep.csv and %s/sweep.json\n", n, n == 1 ? "" : "s", dir, dir);
    } else {
        if (tl_replay_shard_merge(paths, sh, n, dir, err, sizeof err) != 0)
            goto out;
        if (!quiet)
            printf("merge: %zu replay shard%s into the spectra files in %s/\n", n, n == 1 ? "" : "s", dir);
    }
    rc = EXIT_OK;
out:
    if (rc != EXIT_OK)
        fprintf(stderr, "tidelock merge: %s\n", err);
    for (size_t k = 0; k < n; k++)
        tl_shard_free(&sh[k]);
    free(sh);
    return rc;
}
