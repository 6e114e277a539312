/* shard_file.c - shard files for sweeps and long replays (shard_file.h). */
#include "shard_file.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "atomic_file.h"
#include "tl_bytes.h"
#include "tl_crc32c.h"

static int parse_u32(const char *t, uint32_t *out)
{
    if (t == NULL || *t < '0' || *t > '9')
        return -1;
    char *end = NULL;
    errno = 0;
    const unsigned long long v = strtoull(t, &end, 10);
    if (errno != 0 || *end != '\0' || v > UINT32_MAX)
        return -1;
    *out = (uint32_t)v;
    return 0;
}

int tl_shard_parse(const char *arg, uint32_t *i, uint32_t *n, char *err, size_t cap)
{
    char a[64];
    const char *slash = strchr(arg, '/');
    if (slash == NULL || (size_t)(slash - arg) >= sizeof a) {
        snprintf(err, cap, "--shard '%s': must be I/N with 0 <= I < N <= %u", arg, TL_SHARD_MAX);
        return -1;
    }
    memcpy(a, arg, (size_t)(slash - arg));
    a[slash - arg] = '\0';
    if (parse_u32(a, i) != 0 || parse_u32(slash + 1, n) != 0 || *n < 1u || *n > TL_SHARD_MAX || *i >= *n) {
        snprintf(err, cap, "--shard '%s': must be I/N with 0 <= I < N <= %u", arg, TL_SHARD_MAX);
        return -1;
    }
    return 0;
}

int tl_shard_from_env(int *have, uint32_t *i, uint32_t *n, char *err, size_t cap)
{
    const char *id = getenv("SLURM_ARRAY_TASK_ID"), *count = getenv("SLURM_ARRAY_TASK_COUNT");
    *have = 0;
    if (id == NULL && count == NULL)
        return 0;
    if (id == NULL || count == NULL) {
        snprintf(err, cap, "SLURM_ARRAY_TASK_%s is set but SLURM_ARRAY_TASK_%s is not: set both (a Slurm array "
                 "job does) or give --shard I/N",
                 id ? "ID" : "COUNT", id ? "COUNT" : "ID");
        return -1;
    }
    if (parse_u32(count, n) != 0 || *n < 1u || *n > TL_SHARD_MAX) {
        snprintf(err, cap, "SLURM_ARRAY_TASK_COUNT = '%s': must be a whole number from 1 to %u", count,
                 TL_SHARD_MAX);
        return -1;
    }
    if (parse_u32(id, i) != 0 || *i >= *n) {
        snprintf(err, cap, "SLURM_ARRAY_TASK_ID = '%s': must be a whole number from 0 to %u "
                 "(SLURM_ARRAY_TASK_COUNT - 1; submit with --array=0-%u)",
                 id, *n - 1u, *n - 1u);
        return -1;
    }
    *have = 1;
    return 0;
}

void tl_shard_path(char *out, size_t cap, const char *dir, uint32_t i, uint32_t n)
{
    snprintf(out, cap, "%s/shard-%04u-of-%04u.tlshard", dir, i, n);
}

typedef struct write_ctx {
    const tl_shard *sh;
} write_ctx;

static int write_body(FILE *f, void *ctx)
{
    const tl_shard *sh = ((write_ctx *)ctx)->sh;
    uint8_t h[TL_SHARD_HEADER];
    memcpy(h, "TLSH", 4);
    h[4] = (uint8_t)TL_SHARD_VERSION;
    h[5] = (uint8_t)sh->kind;
    h[6] = h[7] = 0;
    memcpy(h + 8, sh->job, 32);
    tl_put_be32(h + 40, sh->index);
    tl_put_be32(h + 44, sh->count);
    tl_put_be64(h + 48, (uint64_t)sh->len);
    uint32_t crc = tl_crc32c_update(TL_CRC32C_INIT, h, sizeof h);
    crc = tl_crc32c_update(crc, sh->payload, sh->len);
    uint8_t t[4];
    tl_put_be32(t, tl_crc32c_final(crc));
    if (fwrite(h, 1, sizeof h, f) != sizeof h || (sh->len && fwrite(sh->payload, 1, sh->len, f) != sh->len) ||
        fwrite(t, 1, 4, f) != 4)
        return -1;
    return 0;
}

int tl_shard_write(const char *path, const tl_shard *sh, char *err, size_t cap)
{
    write_ctx c = { sh };
    return tl_atomic_write(path, write_body, &c, err, cap);
}

int tl_shard_read(const char *path, tl_shard *sh, char *err, size_t cap)
{
    memset(sh, 0, sizeof *sh);
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        snprintf(err, cap, "%s: cannot open: %s", path, strerror(errno));
        return -1;
    }
    uint8_t h[TL_SHARD_HEADER];
    const size_t got = fread(h, 1, sizeof h, f);
    int rc = -1;
    if (got < 4 || memcmp(h, "TLSH", 4) != 0) {
        snprintf(err, cap, "%s: magic: not a tidelock shard file (expected \"TLSH\" at offset 0)", path);
        goto out;
    }
    if (got < sizeof h) {
        snprintf(err, cap, "%s: header: truncated (%zu of %u octets)", path, got, TL_SHARD_HEADER);
        goto out;
    }
    if (h[4] != TL_SHARD_VERSION) {
        snprintf(err, cap, "%s: version = %u: this tidelock reads shard version %u only", path, h[4],
                 TL_SHARD_VERSION);
        goto out;
    }
    if (h[5] != TL_SHARD_SWEEP && h[5] != TL_SHARD_REPLAY) {
        snprintf(err, cap, "%s: kind = %u: must be %u (sweep) or %u (replay)", path, h[5], (unsigned)TL_SHARD_SWEEP,
                 (unsigned)TL_SHARD_REPLAY);
        goto out;
    }
    sh->kind = h[5];
    memcpy(sh->job, h + 8, 32);
    sh->index = tl_get_be32(h + 40);
    sh->count = tl_get_be32(h + 44);
    const uint64_t len = tl_get_be64(h + 48);
    if (sh->count < 1u || sh->count > TL_SHARD_MAX || sh->index >= sh->count) {
        snprintf(err, cap, "%s: shard %u of %u: must have 0 <= index < count <= %u", path, sh->index, sh->count,
                 TL_SHARD_MAX);
        goto out;
    }
    long size = -1;
    if (fseek(f, 0, SEEK_END) == 0)
        size = ftell(f);
    if (size < 0 || fseek(f, (long)TL_SHARD_HEADER, SEEK_SET) != 0) {
        snprintf(err, cap, "%s: cannot seek: %s", path, strerror(errno));
        goto out;
    }
    if (len > TL_SHARD_MAX_PAYLOAD || (uint64_t)size != TL_SHARD_HEADER + len + 4u) {
        snprintf(err, cap, "%s: length: the file has %ld octets, its header says %llu (header + payload of %llu + "
                 "CRC)",
                 path, size, (unsigned long long)(TL_SHARD_HEADER + len + 4u), (unsigned long long)len);
        goto out;
    }
    if (len > TL_SHARD_MAX_PAYLOAD) {
        snprintf(err, cap, "%s: payload length = %llu: must be at most %llu octets", path, (unsigned long long)len,
                 (unsigned long long)TL_SHARD_MAX_PAYLOAD);
        goto out;
    }
    sh->payload = malloc(len ? (size_t)len : 1u);
    if (sh->payload == NULL) {
        snprintf(err, cap, "%s: out of memory for a %llu-octet payload", path, (unsigned long long)len);
        goto out;
    }
    sh->len = (size_t)len;
    uint8_t t[5];
    if (fread(sh->payload, 1, sh->len, f) != sh->len || fread(t, 1, 5, f) != 4) {
        snprintf(err, cap, "%s: length: the file is not %llu octets long (header + payload of %llu + CRC)", path,
                 (unsigned long long)(TL_SHARD_HEADER + len + 4u), (unsigned long long)len);
        goto out;
    }
    uint32_t crc = tl_crc32c_update(TL_CRC32C_INIT, h, sizeof h);
    crc = tl_crc32c_update(crc, sh->payload, sh->len);
    if (tl_crc32c_final(crc) != tl_get_be32(t)) {
        snprintf(err, cap, "%s: CRC-32C: 0x%08X stored, 0x%08X computed (the file is damaged)", path,
                 tl_get_be32(t), tl_crc32c_final(crc));
        goto out;
    }
    rc = 0;
out:
    fclose(f);
    if (rc != 0)
        tl_shard_free(sh);
    return rc;
}

int tl_shard_check_set(const char *const *paths, const tl_shard *sh, size_t nfiles, char *err, size_t cap)
{
    if (nfiles == 0) {
        snprintf(err, cap, "no shard files");
        return -1;
    }
    const uint32_t n = sh[0].count;
    for (size_t k = 1; k < nfiles; k++) {
        if (sh[k].kind != sh[0].kind) {
            snprintf(err, cap, "%s: kind = %s, but %s is a %s shard: merge shards of one job", paths[k],
                     sh[k].kind == TL_SHARD_SWEEP ? "sweep" : "replay", paths[0],
                     sh[0].kind == TL_SHARD_SWEEP ? "sweep" : "replay");
            return -1;
        }
        if (memcmp(sh[k].job, sh[0].job, 32) != 0) {
            snprintf(err, cap, "%s: job digest differs from %s's (another scenario, grid or recording): merge shards "
                     "of one job",
                     paths[k], paths[0]);
            return -1;
        }
        if (sh[k].count != n) {
            snprintf(err, cap, "%s: shard count = %u, but %s has %u", paths[k], sh[k].count, paths[0], n);
            return -1;
        }
    }
    size_t *seen = calloc(n, sizeof *seen);
    if (seen == NULL) {
        snprintf(err, cap, "out of memory");
        return -1;
    }
    int rc = 0;
    for (size_t k = 0; k < nfiles && rc == 0; k++) {
        if (seen[sh[k].index] != 0) {
            snprintf(err, cap, "%s: shard %u of %u given twice (also %s)", paths[k], sh[k].index, n,
                     paths[seen[sh[k].index] - 1u]);
            rc = -1;
        }
        seen[sh[k].index] = k + 1u;
    }
    for (uint32_t i = 0; i < n && rc == 0; i++)
        if (seen[i] == 0) {
            snprintf(err, cap, "shard %u of %u is missing (shard-%04u-of-%04u.tlshard): give all %u", i, n, i, n, n);
            rc = -1;
        }
    free(seen);
    return rc;
}

void tl_shard_free(tl_shard *sh)
{
    free(sh->payload);
    sh->payload = NULL;
    sh->len = 0;
}

void tl_shard_put_u32(tl_bytebuf *b, uint32_t v)
{
    uint8_t o[4];
    tl_put_be32(o, v);
    tl_bytebuf_put(b, o, 4);
}

void tl_shard_put_u64(tl_bytebuf *b, uint64_t v)
{
    uint8_t o[8];
    tl_put_be64(o, v);
    tl_bytebuf_put(b, o, 8);
}

void tl_shard_put_f64(tl_bytebuf *b, double v)
{
    uint64_t bits;
    memcpy(&bits, &v, sizeof bits);
    tl_shard_put_u64(b, bits);
}

void tl_shard_put_text(tl_bytebuf *b, const char *t)
{
    const size_t n = strlen(t);
    tl_shard_put_u32(b, (uint32_t)n);
    tl_bytebuf_put(b, (const uint8_t *)t, n);
}

static const uint8_t *take(tl_shard_cursor *c, size_t n)
{
    if (c->failed || c->len - c->at < n) {
        c->failed = 1;
        return NULL;
    }
    const uint8_t *p = c->p + c->at;
    c->at += n;
    return p;
}

uint32_t tl_shard_get_u32(tl_shard_cursor *c)
{
    const uint8_t *p = take(c, 4);
    return p ? tl_get_be32(p) : 0u;
}

uint64_t tl_shard_get_u64(tl_shard_cursor *c)
{
    const uint8_t *p = take(c, 8);
    return p ? tl_get_be64(p) : 0u;
}

double tl_shard_get_f64(tl_shard_cursor *c)
{
    const uint64_t bits = tl_shard_get_u64(c);
    double v;
    memcpy(&v, &bits, sizeof v);
    return v;
}

void tl_shard_get_text(tl_shard_cursor *c, char *out, size_t cap)
{
    const uint32_t n = tl_shard_get_u32(c);
    out[0] = '\0';
    if (c->failed || n >= cap) {
        c->failed = 1;
        return;
    }
    const uint8_t *p = take(c, n);
    if (p == NULL)
        return;
    memcpy(out, p, n);
    out[n] = '\0';
}
