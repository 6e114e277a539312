/*
 * sweep.h - a grid of configurations run into one table (`tidelock sweep`).
 *
 * A plan is a base scenario and up to TL_SWEEP_MAX_AXES axes, each a scenario
 * key ("section.key") and its values. The grid is the cartesian product in a
 * fixed order: the first axis given varies slowest and the last fastest
 * (nested loops in the order of the --vary options), so point p has, on
 * axis a, value index (p / (n[a+1] x ... x n[last])) mod n[a].
 *
 * The scenario of a point is the base with the axes' values set as a file
 * line would set them (tl_scenario_set), then checked whole
 * (tl_scenario_check); tl_sweep_plan_check does this for every point before
 * anything runs. Its noise seed ([sky] seed) is then replaced by the first
 * four octets, big-endian, of
 *   SHA-256("tidelock sweep seed 1\n" + base scenario as resolved
 *           (tl_scenario_write) + "section.key=value\n" for each axis)
 * a pure function of the scenario and the point's parameters: never of the
 * shard or the machine. Varying sky.seed gives independent realisations.
 * With common_noise set (`--common-noise`) only the sky.seed axis, if any,
 * enters the hash: every configuration then draws the same noise
 * realisation (common random numbers), so differences between points are
 * not blurred by different noise.
 *
 * The table has one row per point: the point index, each axis' value, the
 * seed, then the columns of tl_sweep_columns (name, unit, meaning; each is
 * filled from the run's result by one function, so a column is one line of
 * sweep.c). A sharded sweep runs the points with p mod n = i
 * (round robin, so slow and fast points spread over the shards).
 *
 * The job digest (tl_sweep_plan.job) is SHA-256 of the tool and arithmetic
 * versions, the resolved base scenario and the axes: shards of one sweep
 * share it and `tidelock merge` refuses others.
 */
#ifndef TL_HOST_SWEEP_H
#define TL_HOST_SWEEP_H

#include <stddef.h>
#include <stdint.h>

#include "scenario.h"
#include "shard_file.h"

#define TL_SWEEP_MAX_AXES 8u
#define TL_SWEEP_MAX_VALUES 64u     /* per axis */
#define TL_SWEEP_VALUE_MAX 64u      /* characters per value, NUL included */
#define TL_SWEEP_MAX_POINTS 100000u
#define TL_SWEEP_MAX_COLUMNS 40u

typedef struct tl_sweep_axis {
    char section[32], key[48];
    uint32_t n;
    char value[TL_SWEEP_MAX_VALUES][TL_SWEEP_VALUE_MAX];
} tl_sweep_axis;

typedef struct tl_sweep_plan {
    tl_scenario base;
    char origin[256];            /* the scenario file, for messages */
    uint32_t naxes, points;
    uint32_t common_noise;       /* 1: every point's seed ignores all axes but sky.seed */
    tl_sweep_axis axis[TL_SWEEP_MAX_AXES];
    uint8_t job[32];
} tl_sweep_plan;

/* One table column. kind 'u': a count, printed as an integer; 'g': a number. */
typedef struct tl_sweep_column {
    const char *name, *unit, *help;
    char kind;
} tl_sweep_column;

typedef struct tl_sweep_row {
    uint32_t index;
    uint32_t seed;
    double v[TL_SWEEP_MAX_COLUMNS]; /* one per column; NAN where undefined */
} tl_sweep_row;

/* The columns, in table order; *n receives their number. */
const tl_sweep_column *tl_sweep_columns(uint32_t *n);

/* Start a plan on the scenario base (already loaded and checked); origin
 * names it in messages. */
void tl_sweep_plan_init(tl_sweep_plan *p, const tl_scenario *base, const char *origin);

/* Add the axis of one --vary argument, "section.key=a,b,c": the key must be
 * a scenario key (else one line naming it and the allowed keys), not given
 * twice, with 1 to TL_SWEEP_MAX_VALUES non-empty values shorter than
 * TL_SWEEP_VALUE_MAX. Values are checked by tl_sweep_plan_check. Returns 0
 * or -1 with one line in err. */
int tl_sweep_add_axis(tl_sweep_plan *p, const char *arg, char *err, size_t cap);

/* Count the points (at most TL_SWEEP_MAX_POINTS), build every point's
 * scenario and check it, and compute the job digest. Returns 0, or -1 with
 * one line in err naming the key, the value and the allowed range. */
int tl_sweep_plan_check(tl_sweep_plan *p, char *err, size_t cap);

/* The scenario of point `index`, its seed derived (see above). Returns 0,
 * or -1 with one line in err. */
int tl_sweep_point(const tl_sweep_plan *p, uint32_t index, tl_scenario *s, char *err, size_t cap);

/* Run point `index`: tl_run_scenario and tl_budget_compute on its
 * scenario, and fill the row. Returns 0, or -1 with one line in err. */
int tl_sweep_run_point(const tl_sweep_plan *p, uint32_t index, tl_sweep_row *row, char *err, size_t cap);

/* DIR/sweep.csv and DIR/sweep.json from rows[0 .. p->points) in point
 * order (each file atomic). Returns 0 or -1 with one line in err. */
int tl_sweep_write_tables(const char *dir, const tl_sweep_plan *p, const tl_sweep_row *rows, char *err, size_t cap);

/* The shard payload: the plan (base scenario text and axes) and the rows
 * of the points this shard ran (nrows of them). Returns 0 or -1. */
int tl_sweep_shard_payload(const tl_sweep_plan *p, const tl_sweep_row *rows, uint32_t nrows, tl_bytebuf *out);

/* Merge a checked set of sweep shards (tl_shard_check_set) into the tables
 * in DIR. Every shard must carry exactly its points (p mod n = i), the
 * plans must agree, and the column list must be this build's. Returns 0,
 * or -1 with one line in err naming the file. */
int tl_sweep_merge(const char *const *paths, const tl_shard *sh, size_t nfiles, const char *dir, char *err,
                   size_t cap);

#endif
