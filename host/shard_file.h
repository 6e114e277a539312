/*
 * shard_file.h - one machine's share of a sweep or a long replay, in a file
 * that `tidelock merge` combines with the others (docs/cluster.md gives the
 * layout byte by byte).
 *
 * A shard file (NAME: DIR/shard-IIII-of-NNNN.tlshard) is, big-endian:
 *   0   4  magic "TLSH"
 *   4   1  version, TL_SHARD_VERSION
 *   5   1  kind: TL_SHARD_SWEEP (rows of a sweep table) or
 *          TL_SHARD_REPLAY (a segment's integer accumulators)
 *   6   2  0 (reserved)
 *   8  32  job digest: SHA-256 of what the shards must share (the resolved
 *          scenario, the grid or the recording); see sweep.h, replay_shard.h
 *  40   4  shard index i, 0 .. n - 1
 *  44   4  shard count n, 1 .. TL_SHARD_MAX
 *  48   8  payload length L
 *  56   L  payload (its layout is the kind's)
 *  56+L 4  CRC-32C (firmware/tl_crc32c.h) of octets 0 .. 55 + L
 * Nothing follows the CRC.
 */
#ifndef TL_HOST_SHARD_FILE_H
#define TL_HOST_SHARD_FILE_H

#include <stddef.h>
#include <stdint.h>

#define TL_SHARD_VERSION 1u
#define TL_SHARD_HEADER 56u
#define TL_SHARD_MAX 100000u /* shards of one job */
#define TL_SHARD_MAX_PAYLOAD (UINT64_C(1) << 32)

enum { TL_SHARD_SWEEP = 1, TL_SHARD_REPLAY = 2 };

typedef struct tl_shard {
    unsigned kind;
    uint8_t job[32];
    uint32_t index, count;
    uint8_t *payload; /* malloc'd by tl_shard_read; the caller's for tl_shard_write */
    size_t len;
} tl_shard;

/* "i/n" with 0 <= i < n <= TL_SHARD_MAX. Returns 0, or -1 with one line in
 * err naming the value and the allowed range. */
int tl_shard_parse(const char *arg, uint32_t *i, uint32_t *n, char *err, size_t cap);

/* The shard of this task when no --shard is given: SLURM_ARRAY_TASK_ID
 * (i) and SLURM_ARRAY_TASK_COUNT (n) from the environment. *have = 0 when
 * neither is set. Both must be set, decimal, with 0 <= i < n <= TL_SHARD_MAX
 * (an array --array=0-(n-1)). Returns 0, or -1 with one line in err. */
int tl_shard_from_env(int *have, uint32_t *i, uint32_t *n, char *err, size_t cap);

/* DIR/shard-IIII-of-NNNN.tlshard (at least 4 digits each). */
void tl_shard_path(char *out, size_t cap, const char *dir, uint32_t i, uint32_t n);

/* Write sh atomically (atomic_file.h). Returns 0 or -1 with one line in err. */
int tl_shard_write(const char *path, const tl_shard *sh, char *err, size_t cap);

/* Read and check one file: magic, version, kind, index < count, length and
 * CRC. Returns 0 (sh->payload malloc'd), or -1 with one line in err naming
 * the file and the field. */
int tl_shard_read(const char *path, tl_shard *sh, char *err, size_t cap);

/* Check that files[0..nfiles) are one whole job: one kind, one job digest,
 * one count n, and every index 0 .. n - 1 exactly once. Returns 0, or -1
 * with one line in err naming the file (or the missing index). */
int tl_shard_check_set(const char *const *paths, const tl_shard *sh, size_t nfiles, char *err, size_t cap);

void tl_shard_free(tl_shard *sh);

/* Payload helpers: big-endian appends into a tl_bytebuf, and a reader
 * that stops (sets failed) at the end instead of reading past it. */
#include "bytebuf.h"
void tl_shard_put_u32(tl_bytebuf *b, uint32_t v);
void tl_shard_put_u64(tl_bytebuf *b, uint64_t v);
void tl_shard_put_f64(tl_bytebuf *b, double v); /* IEEE 754 bits, big-endian */
void tl_shard_put_text(tl_bytebuf *b, const char *t); /* u32 length, octets */

typedef struct tl_shard_cursor {
    const uint8_t *p;
    size_t len, at;
    int failed;
} tl_shard_cursor;
uint32_t tl_shard_get_u32(tl_shard_cursor *c);
uint64_t tl_shard_get_u64(tl_shard_cursor *c);
double tl_shard_get_f64(tl_shard_cursor *c);
/* Copies the text into out (cap bytes, NUL-terminated); failed when it does not fit. */
void tl_shard_get_text(tl_shard_cursor *c, char *out, size_t cap);

#endif
