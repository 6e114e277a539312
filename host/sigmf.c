/* sigmf.c - SigMF recordings: writer and streaming reader (see sigmf.h). */
#include "sigmf.h"

#include <errno.h>
#include <jansson.h>
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "atomic_file.h"
#include "version.h"

_Static_assert(sizeof(float) == 4, "rf32_le needs a 32-bit float");

#define HB_W (2u * TL_SIGMF_HALFBAND_L) /* complex samples in the interpolator's window */

static void say(char *err, size_t cap, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void say(char *err, size_t cap, const char *fmt, ...)
{
    if (err == NULL || cap == 0)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err, cap, fmt, ap);
    va_end(ap);
    /* one line whatever the file holds: a control character quoted from the
     * meta (a field name with "\n" in it) becomes '?' (found by
     * tests/fuzz/fuzz_sigmf.c; test_sigmf.c test_error_one_line) */
    for (char *c = err; *c != '\0'; c++)
        if ((unsigned char)*c < 0x20u || *c == 0x7F)
            *c = '?';
}

static int ends_with(const char *s, const char *suffix)
{
    const size_t n = strlen(s), m = strlen(suffix);
    return n >= m && strcmp(s + n - m, suffix) == 0;
}

/* ---- datatype strings ---------------------------------------------------------- */

int tl_sigmf_datatype_parse(const char *s, int *is_complex, unsigned *component_bytes)
{
    /* SigMF core v1.2.x, "SigMF Dataset Format" (ABNF):
     *   dataset-format = (real / complex) ((type endianness) / byte)
     *   type = "f32" / "f64" / "i32" / "i16" / "u32" / "u16"
     *   endianness = "_le" / "_be";  byte = "i8" / "u8" */
    static const struct {
        const char *name;
        unsigned bytes;
    } typed[] = { { "f32", 4 }, { "f64", 8 }, { "i32", 4 }, { "i16", 2 }, { "u32", 4 }, { "u16", 2 } };
    if (s == NULL || (s[0] != 'r' && s[0] != 'c'))
        return 0;
    const char *t = s + 1;
    unsigned bytes = 0;
    if (strcmp(t, "i8") == 0 || strcmp(t, "u8") == 0)
        bytes = 1;
    for (size_t i = 0; bytes == 0 && i < sizeof typed / sizeof typed[0]; i++)
        if (strncmp(t, typed[i].name, 3) == 0 && (strcmp(t + 3, "_le") == 0 || strcmp(t + 3, "_be") == 0))
            bytes = typed[i].bytes;
    if (bytes == 0)
        return 0;
    if (is_complex != NULL)
        *is_complex = s[0] == 'c';
    if (component_bytes != NULL)
        *component_bytes = bytes;
    return 1;
}

/* ---- the complex interpolator -------------------------------------------------- */

void tl_sigmf_halfband(double c[TL_SIGMF_HALFBAND_L])
{
    /* Half-band interpolator by 2: h[k] = sinc(k/2) w(k) for |k| < K = 2L,
     * w the Blackman window over [-K, K]; h[0] = 1 and h[even] = 0, so the
     * even outputs are the input samples. Odd taps k = 2i+1 are c[i],
     * normalised so that sum_k h[odd k] = 2 sum_i c[i] = 1 (DC gain 1). */
    const double K = 2.0 * TL_SIGMF_HALFBAND_L;
    double sum = 0.0;
    for (unsigned i = 0; i < TL_SIGMF_HALFBAND_L; i++) {
        const double k = 2.0 * i + 1.0, x = M_PI * k / 2.0;
        const double w = 0.42 + 0.5 * cos(M_PI * k / K) + 0.08 * cos(2.0 * M_PI * k / K);
        c[i] = sin(x) / x * w;
        sum += 2.0 * c[i];
    }
    for (unsigned i = 0; i < TL_SIGMF_HALFBAND_L; i++)
        c[i] /= sum;
}

/* ---- writing ----------------------------------------------------------------------- */

typedef struct data_job {
    const tl_sigmf_desc *d;
    tl_sigmf_source source;
    void *state;
} data_job;

static int write_data(FILE *f, void *ctx)
{
    const data_job *j = ctx;
    const unsigned ni = j->d->inputs;
    const size_t chunk = 32768;
    int16_t *a = calloc(chunk, sizeof(int16_t)), *b = calloc(chunk, sizeof(int16_t));
    uint8_t *bytes = malloc(chunk * 2u * ni);
    int rc = (a && b && bytes) ? 0 : -1;
    for (uint64_t left = j->d->samples; rc == 0 && left > 0;) {
        const size_t n = left < chunk ? (size_t)left : chunk;
        j->source(j->state, a, ni == 2 ? b : NULL, n);
        size_t o = 0;
        for (size_t i = 0; i < n; i++) {
            for (unsigned c = 0; c < ni; c++) { /* ri16_le, byte by byte */
                const uint16_t u = (uint16_t)(c == 0 ? a[i] : b[i]);
                bytes[o++] = (uint8_t)(u & 0xFFu);
                bytes[o++] = (uint8_t)(u >> 8);
            }
        }
        if (fwrite(bytes, 1, o, f) != o)
            rc = -1;
        left -= n;
    }
    free(a);
    free(b);
    free(bytes);
    return rc;
}

/* "key = value" lines of one [section] of an INI text, as a JSON object
 * (numbers where the value parses whole as one); NULL when the text has no
 * such section. */
static json_t *ini_section(const char *text, const char *section)
{
    json_t *o = json_object();
    int seen = 0;
    int in = 0;
    for (const char *p = text; p != NULL && *p != '\0';) {
        const char *e = strchr(p, '\n');
        const size_t len = e ? (size_t)(e - p) : strlen(p);
        char line[256];
        if (len < sizeof line) {
            memcpy(line, p, len);
            line[len] = '\0';
            if (line[0] == '[') {
                const char *close = strchr(line, ']');
                in = close != NULL && (size_t)(close - line - 1) == strlen(section) &&
                     strncmp(line + 1, section, strlen(section)) == 0;
                seen |= in;
            } else if (in && line[0] != '#' && line[0] != ';') {
                char *eq = strstr(line, " = ");
                if (eq != NULL) {
                    *eq = '\0';
                    const char *v = eq + 3;
                    char *end = NULL;
                    errno = 0;
                    const long long iv = strtoll(v, &end, 10);
                    json_t *jv;
                    if (*v != '\0' && *end == '\0' && errno == 0) {
                        jv = json_integer(iv);
                    } else {
                        const double dv = strtod(v, &end);
                        jv = (*v != '\0' && *end == '\0' && isfinite(dv)) ? json_real(dv) : json_string(v);
                    }
                    json_object_set_new(o, line, jv);
                }
            }
        }
        p = e ? e + 1 : NULL;
    }
    if (!seen) {
        json_decref(o);
        return NULL;
    }
    return o;
}

/* The voltage model: the scenario's [sky], [interference] and [switching]
 * sections (the last sets the load and noise-source states). */
static json_t *model_of(const char *text)
{
    json_t *m = json_object();
    const char *sections[] = { "sky", "interference", "switching" };
    for (size_t i = 0; i < 3; i++) {
        json_t *o = ini_section(text, sections[i]);
        if (o != NULL)
            json_object_set_new(m, sections[i], o);
    }
    return m;
}

static json_t *build_meta(const tl_sigmf_desc *d)
{
    json_t *g = json_object();
    json_object_set_new(g, "core:datatype", json_string("ri16_le"));
    json_object_set_new(g, "core:version", json_string(TL_SIGMF_VERSION));
    json_object_set_new(g, "core:sample_rate", json_real(d->sample_rate_hz));
    json_object_set_new(g, "core:num_channels", json_integer(d->inputs));
    json_object_set_new(g, "core:recorder", json_string("tidelock " TL_TOOL_VERSION " simulate"));
    if (d->description != NULL)
        json_object_set_new(g, "core:description", json_string(d->description));
    if (d->hw != NULL)
        json_object_set_new(g, "core:hw", json_string(d->hw));
    json_object_set_new(g, "core:extensions",
                        json_pack("[{s:s, s:s, s:b}]", "name", "tidelock", "version", TL_SIGMF_EXT_VERSION,
                                  "optional", 1));
    json_object_set_new(g, "tidelock:samples", json_integer((json_int_t)d->samples));
    json_object_set_new(g, "tidelock:adc_bits", json_integer(d->adc_bits));
    if (d->adc_full_scale_v > 0.0)
        json_object_set_new(g, "tidelock:adc_full_scale_v", json_real(d->adc_full_scale_v));
    json_object_set_new(g, "tidelock:seed", json_integer((json_int_t)d->seed));
    if (d->scenario_text != NULL) {
        json_object_set_new(g, "tidelock:scenario", json_string(d->scenario_text));
        json_object_set_new(g, "tidelock:model", model_of(d->scenario_text));
    }
    json_t *cap0 = json_pack("{s:I}", "core:sample_start", (json_int_t)0);
    if (d->datetime != NULL)
        json_object_set_new(cap0, "core:datetime", json_string(d->datetime));
    json_t *root = json_object();
    json_object_set_new(root, "global", g);
    json_object_set_new(root, "captures", json_pack("[o]", cap0));
    json_object_set_new(root, "annotations", json_array());
    return root;
}

static int write_meta(FILE *f, void *ctx)
{
    if (json_dumpf((const json_t *)ctx, f, JSON_INDENT(2) | JSON_REAL_PRECISION(15)) != 0)
        return -1;
    return fputc('\n', f) == EOF ? -1 : 0;
}

int tl_sigmf_write(const char *base, const tl_sigmf_desc *d, tl_sigmf_source source, void *state, char *err,
                   size_t cap)
{
    char data[4200], meta[4200], sdata[4300], smeta[4300];
    const long pid = (long)getpid();
    if (snprintf(data, sizeof data, "%s.sigmf-data", base) >= (int)sizeof data ||
        snprintf(meta, sizeof meta, "%s.sigmf-meta", base) >= (int)sizeof meta) {
        say(err, cap, "%s: name too long", base);
        return -1;
    }
    snprintf(sdata, sizeof sdata, "%s.staged.%ld", data, pid);
    snprintf(smeta, sizeof smeta, "%s.staged.%ld", meta, pid);
    if (d == NULL || source == NULL || !(d->sample_rate_hz > 0.0) || d->inputs < 1 || d->inputs > 2 ||
        d->adc_bits < 8 || d->adc_bits > 16 || d->samples < 1 || d->samples > (uint64_t)INT64_MAX / 4u) {
        say(err, cap, "%s: bad recording description (rate > 0, inputs 1 or 2, ADC 8 to 16 bits, samples >= 1)",
            meta);
        return -1;
    }
    json_t *root = build_meta(d);
    if (root == NULL) {
        say(err, cap, "%s: out of memory", meta);
        return -1;
    }
    char why[4400];
    data_job job = { d, source, state };
    int rc = 0;
    if (tl_atomic_write(sdata, write_data, &job, why, sizeof why) != 0 ||
        tl_atomic_write(smeta, write_meta, root, why, sizeof why) != 0) {
        /* the staged name in the message is ours; name the file the user asked for */
        const int is_meta = strncmp(why, smeta, strlen(smeta)) == 0, is_data = strncmp(why, sdata, strlen(sdata)) == 0;
        say(err, cap, "%s%s", is_meta ? meta : data,
            is_meta ? why + strlen(smeta) : is_data ? why + strlen(sdata) : ": write failed");
        rc = -1;
    } else if (rename(sdata, data) != 0 || rename(smeta, meta) != 0) {
        say(err, cap, "%s: cannot rename into place: %s", data, strerror(errno));
        rc = -1;
    }
    remove(sdata);
    remove(smeta);
    json_decref(root);
    return rc;
}

/* ---- meta validation ----------------------------------------------------------- */

static const char *const core_global[] = { "datatype", "sample_rate", "version", "num_channels", "sha512",
                                           "offset", "description", "author", "meta_doi", "data_doi",
                                           "recorder", "license", "hw", "dataset", "trailing_bytes",
                                           "metadata_only", "geolocation", "extensions", "collection", NULL };
static const char *const core_capture[] = { "sample_start", "global_index", "header_bytes", "frequency",
                                            "datetime", "geolocation", NULL };
static const char *const core_annotation[] = { "sample_start", "sample_count", "generator", "label", "comment",
                                               "freq_lower_edge", "freq_upper_edge", "uuid", NULL };
static const char *const ours_global[] = { "samples", "adc_bits", "adc_full_scale_v", "seed", "scenario", "model",
                                           NULL };

typedef struct vctx {
    const char *path;
    char *err;
    size_t cap;
} vctx;

static int bad(const vctx *v, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static int bad(const vctx *v, const char *fmt, ...)
{
    char msg[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    say(v->err, v->cap, "%s: %s", v->path, msg);
    return -1;
}

/* A short rendering of a JSON value for messages. */
static const char *shown(const json_t *j, char *buf, size_t n)
{
    if (json_is_string(j))
        snprintf(buf, n, "'%.60s'", json_string_value(j));
    else if (json_is_integer(j))
        snprintf(buf, n, "%lld", (long long)json_integer_value(j));
    else if (json_is_real(j))
        snprintf(buf, n, "%.17g", json_real_value(j));
    else
        snprintf(buf, n, "%s", json_is_object(j)   ? "an object"
                               : json_is_array(j)  ? "an array"
                               : json_is_boolean(j) ? (json_is_true(j) ? "true" : "false")
                                                    : "null");
    return buf;
}

static int in_list(const char *const *list, const char *s)
{
    for (; *list != NULL; list++)
        if (strcmp(*list, s) == 0)
            return 1;
    return 0;
}

static int word_ok(const char *s, size_t n)
{
    if (n == 0 || (s[0] >= '0' && s[0] <= '9'))
        return 0;
    for (size_t i = 0; i < n; i++)
        if (!((s[i] >= 'a' && s[i] <= 'z') || (s[i] >= 'A' && s[i] <= 'Z') || (s[i] >= '0' && s[i] <= '9') ||
              s[i] == '_'))
            return 0;
    return 1;
}

/* Field names: "namespace:name" (SigMF 1.2 "SigMF Metadata Format"); a
 * core: name must be one the specification defines for this object. */
static int check_names(const vctx *v, const char *where, const json_t *obj, const char *const *core,
                       const char *const *ours)
{
    const char *key;
    json_t *val;
    json_object_foreach((json_t *)obj, key, val) {
        const char *colon = strchr(key, ':');
        if (colon == NULL || !word_ok(key, (size_t)(colon - key)) || !word_ok(colon + 1, strlen(colon + 1)))
            return bad(v, "%s field '%.60s': a field name must be namespace:name, each of letters, digits and '_' "
                          "not starting with a digit (SigMF 1.2)",
                       where, key);
        if (strncmp(key, "core:", 5) == 0 && !in_list(core, key + 5))
            return bad(v, "%s field '%.60s': not a field of the SigMF 1.2 core namespace here", where, key);
        if (ours != NULL && strncmp(key, "tidelock:", 9) == 0 && !in_list(ours, key + 9))
            return bad(v, "%s field '%.60s': not a tidelock field (tidelock:samples, adc_bits, adc_full_scale_v, "
                          "seed, scenario, model)",
                       where, key);
    }
    return 0;
}

/* Optional non-negative integer field; *out untouched when absent. */
static int get_count(const vctx *v, const char *where, const json_t *obj, const char *key, uint64_t *out,
                     int *present)
{
    const json_t *j = json_object_get(obj, key);
    if (present != NULL)
        *present = j != NULL;
    if (j == NULL)
        return 0;
    char b[96];
    if (!json_is_integer(j) || json_integer_value(j) < 0)
        return bad(v, "%s %s = %s: must be an integer >= 0", where, key, shown(j, b, sizeof b));
    *out = (uint64_t)json_integer_value(j);
    return 0;
}

static int digits(const char *s, int n)
{
    for (int i = 0; i < n; i++)
        if (s[i] < '0' || s[i] > '9')
            return 0;
    return 1;
}

/* The value of two decimal digits (checked by digits() first). */
static int two_digits(const char *s)
{
    return (s[0] - '0') * 10 + (s[1] - '0');
}

/* RFC 3339 date-time with the only offset SigMF allows, "Z". */
static int datetime_ok(const char *s)
{
    if (strlen(s) < 20 || !digits(s, 4) || s[4] != '-' || !digits(s + 5, 2) || s[7] != '-' || !digits(s + 8, 2) ||
        s[10] != 'T' || !digits(s + 11, 2) || s[13] != ':' || !digits(s + 14, 2) || s[16] != ':' ||
        !digits(s + 17, 2))
        return 0;
    const int mo = two_digits(s + 5), d = two_digits(s + 8), h = two_digits(s + 11), mi = two_digits(s + 14),
              se = two_digits(s + 17);
    if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59 || se > 60)
        return 0;
    const char *p = s + 19;
    if (*p == '.') {
        p++;
        if (!digits(p, 1))
            return 0;
        while (*p >= '0' && *p <= '9')
            p++;
    }
    return strcmp(p, "Z") == 0;
}

/* "X.Y.Z", each a run of digits: X, or -1 when s is not of that form. */
static long version_major(const char *s)
{
    long major = -1;
    for (int part = 0; part < 3; part++) {
        if (!(*s >= '0' && *s <= '9'))
            return -1;
        if (part == 0)
            major = strtol(s, NULL, 10);
        while (*s >= '0' && *s <= '9')
            s++;
        if (*s != (part < 2 ? '.' : '\0'))
            return -1;
        s += part < 2;
    }
    return major;
}

/* captures or annotations: objects with ascending core:sample_start. */
static int check_segments(const vctx *v, const char *name, const json_t *arr, const char *const *core,
                          uint64_t *need)
{
    uint64_t prev = 0;
    size_t i;
    json_t *seg;
    json_array_foreach((json_t *)arr, i, seg) {
        char where[64], b[96];
        snprintf(where, sizeof where, "%s[%zu]", name, i);
        if (!json_is_object(seg))
            return bad(v, "%s = %s: must be an object", where, shown(seg, b, sizeof b));
        if (check_names(v, where, seg, core, NULL) != 0)
            return -1;
        uint64_t start = 0, count = 0;
        int has_start = 0, has_count = 0;
        if (get_count(v, where, seg, "core:sample_start", &start, &has_start) != 0 ||
            get_count(v, where, seg, "core:sample_count", &count, &has_count) != 0 ||
            get_count(v, where, seg, "core:global_index", &(uint64_t){ 0 }, NULL) != 0)
            return -1;
        if (!has_start)
            return bad(v, "%s: required field core:sample_start is missing (SigMF 1.2 core)", where);
        if (i > 0 && start < prev)
            return bad(v, "%s core:sample_start = %llu: %s must be sorted by core:sample_start (previous %llu)",
                       where, (unsigned long long)start, name, (unsigned long long)prev);
        prev = start;
        uint64_t hb = 0;
        if (get_count(v, where, seg, "core:header_bytes", &hb, NULL) != 0)
            return -1;
        if (hb != 0)
            return bad(v, "%s core:header_bytes = %llu: non-conforming datasets with header bytes are not supported "
                          "(allowed: 0)",
                       where, (unsigned long long)hb);
        const json_t *dt = json_object_get(seg, "core:datetime");
        if (dt != NULL && (!json_is_string(dt) || !datetime_ok(json_string_value(dt))))
            return bad(v, "%s core:datetime = %s: must be YYYY-MM-DDTHH:MM:SS[.fraction]Z (RFC 3339, UTC)", where,
                       shown(dt, b, sizeof b));
        const char *numeric[] = { "core:frequency", "core:freq_lower_edge", "core:freq_upper_edge" };
        for (size_t k = 0; k < 3; k++) {
            const json_t *f = json_object_get(seg, numeric[k]);
            if (f != NULL && !json_is_number(f))
                return bad(v, "%s %s = %s: must be a number (Hz)", where, numeric[k], shown(f, b, sizeof b));
        }
        if ((json_object_get(seg, "core:freq_lower_edge") == NULL) !=
            (json_object_get(seg, "core:freq_upper_edge") == NULL))
            return bad(v, "%s: core:freq_lower_edge and core:freq_upper_edge come together or not at all", where);
        const char *texts[] = { "core:label", "core:comment", "core:generator", "core:uuid" };
        for (size_t k = 0; k < 4; k++) {
            const json_t *t = json_object_get(seg, texts[k]);
            if (t != NULL && !json_is_string(t))
                return bad(v, "%s %s = %s: must be a string", where, texts[k], shown(t, b, sizeof b));
        }
        /* samples the file must hold for this segment */
        const uint64_t end = has_count ? start + count : start + (strcmp(name, "captures") == 0 ? 1u : 0u);
        if (end > *need)
            *need = end;
    }
    return 0;
}

struct tl_sigmf_reader {
    tl_sigmf_info info;
    char *scenario;
    FILE *f;
    uint8_t *buf;
    size_t buf_cap, len, pos;
    uint64_t frames_left;      /* frames still in the file, not yet in buf */
    uint64_t bytes_read;
    uint64_t frames_used;      /* frames taken from buf */
    unsigned bits;
    int failed;
    uint64_t *rails, *clipped, *rounded;
    /* ci16_le */
    double hb[TL_SIGMF_HALFBAND_L];
    double *ring_i, *ring_q;   /* per channel: 2 W values (the window stored twice) */
    unsigned ring_pos;
    uint64_t pushed, pairs;
    double *pend;              /* per channel: the 2 outputs of the current pair */
    unsigned pend_at, pend_n;
};

static const char *type_names[] = { "ri16_le", "ci16_le", "ri8", "rf32_le" };

/* Everything the meta says, validated; fills r->info and r->scenario. */
static int read_meta(tl_sigmf_reader *r, const char *meta, uint64_t *need, int *has_samples, uint64_t *stated,
                     char *err, size_t cap)
{
    vctx v = { meta, err, cap };
    tl_sigmf_info *in = &r->info;
    struct stat st;
    if (!ends_with(meta, ".sigmf-meta"))
        return bad(&v, "a SigMF meta file's name ends in .sigmf-meta (SigMF 1.2)");
    if (stat(meta, &st) != 0)
        return bad(&v, "cannot open: %s", strerror(errno));
    if (!S_ISREG(st.st_mode))
        return bad(&v, "not a regular file");
    if (st.st_size > (off_t)TL_SIGMF_META_MAX)
        return bad(&v, "%lld bytes: larger than the %u bytes a meta file may have here", (long long)st.st_size,
                   TL_SIGMF_META_MAX);
    json_error_t je;
    json_t *root = json_load_file(meta, JSON_REJECT_DUPLICATES, &je);
    if (root == NULL) {
        if (je.line > 0)
            say(err, cap, "%s:%d:%d: not valid JSON: %s", meta, je.line, je.column, je.text);
        else
            say(err, cap, "%s: not valid JSON: %s", meta, je.text);
        return -1;
    }
    int rc = -1;
    char b[96];
    const char *key;
    json_t *val;
    json_object_foreach(root, key, val) {
        if (strcmp(key, "global") != 0 && strcmp(key, "captures") != 0 && strcmp(key, "annotations") != 0) {
            bad(&v, "top-level field '%.60s': the top level holds only global, captures and annotations (SigMF 1.2)",
                key);
            goto out;
        }
    }
    const json_t *g = json_object_get(root, "global"), *caps = json_object_get(root, "captures"),
                 *anns = json_object_get(root, "annotations");
    if (g == NULL || caps == NULL || anns == NULL) {
        bad(&v, "required top-level field %s is missing (SigMF 1.2 core: global, captures, annotations)",
            g == NULL ? "global" : caps == NULL ? "captures" : "annotations");
        goto out;
    }
    if (!json_is_object(g) || !json_is_array(caps) || !json_is_array(anns)) {
        bad(&v, "%s must be %s (SigMF 1.2 core)",
            !json_is_object(g) ? "global" : !json_is_array(caps) ? "captures" : "annotations",
            !json_is_object(g) ? "an object" : "an array");
        goto out;
    }
    if (check_names(&v, "global", g, core_global, ours_global) != 0)
        goto out;
    /* core:datatype */
    const json_t *dt = json_object_get(g, "core:datatype");
    if (dt == NULL) {
        bad(&v, "global: required field core:datatype is missing (SigMF 1.2 core; supported: " TL_SIGMF_SUPPORTED ")");
        goto out;
    }
    int cx = 0;
    unsigned cb = 0;
    if (!json_is_string(dt) || !tl_sigmf_datatype_parse(json_string_value(dt), &cx, &cb)) {
        bad(&v, "global core:datatype = %s: not a SigMF datatype ((r|c)(f32|f64|i32|i16|u32|u16)(_le|_be) or "
                "(r|c)(i8|u8), SigMF 1.2; supported: " TL_SIGMF_SUPPORTED ")",
            shown(dt, b, sizeof b));
        goto out;
    }
    int type = -1;
    for (int t = 0; t < 4; t++)
        if (strcmp(json_string_value(dt), type_names[t]) == 0)
            type = t;
    if (type < 0) {
        bad(&v, "global core:datatype = %s: not supported (supported: " TL_SIGMF_SUPPORTED ")",
            shown(dt, b, sizeof b));
        goto out;
    }
    snprintf(in->datatype, sizeof in->datatype, "%s", json_string_value(dt));
    in->type = (tl_sigmf_type)type;
    in->is_complex = cx;
    /* core:version */
    const json_t *ver = json_object_get(g, "core:version");
    if (ver == NULL) {
        bad(&v, "global: required field core:version is missing (SigMF 1.2 core; \"X.Y.Z\", 1.x read here)");
        goto out;
    }
    const long vx = version_major(json_is_string(ver) ? json_string_value(ver) : "");
    if (vx < 0) {
        bad(&v, "global core:version = %s: must be a version string X.Y.Z (SigMF 1.2 core)", shown(ver, b, sizeof b));
        goto out;
    }
    if (vx != 1) {
        bad(&v, "global core:version = %s: this reader follows SigMF 1.x (allowed: 1.Y.Z)", shown(ver, b, sizeof b));
        goto out;
    }
    /* core:num_channels, core:sample_rate, core:offset */
    uint64_t ch = 1, offset = 0;
    const json_t *nc = json_object_get(g, "core:num_channels");
    if (nc != NULL && (!json_is_integer(nc) || json_integer_value(nc) < 1 ||
                       json_integer_value(nc) > (json_int_t)TL_SIGMF_MAX_CHANNELS)) {
        bad(&v, "global core:num_channels = %s: must be an integer from 1 to %u (SigMF 1.2 schema)",
            shown(nc, b, sizeof b), TL_SIGMF_MAX_CHANNELS);
        goto out;
    }
    if (nc != NULL)
        ch = (uint64_t)json_integer_value(nc);
    in->channels = (unsigned)ch;
    in->frame_bytes = in->channels * cb * (cx ? 2u : 1u);
    const json_t *sr = json_object_get(g, "core:sample_rate");
    if (sr != NULL && (!json_is_number(sr) || !(json_number_value(sr) > 0.0 && json_number_value(sr) <= 1e12))) {
        bad(&v, "global core:sample_rate = %s: must be a number of samples per second, above 0 and at most 1e12",
            shown(sr, b, sizeof b));
        goto out;
    }
    in->sample_rate_hz = sr != NULL ? json_number_value(sr) : 0.0;
    if (get_count(&v, "global", g, "core:offset", &offset, NULL) != 0)
        goto out;
    /* non-conforming and metadata-only recordings */
    uint64_t trailing = 0;
    if (get_count(&v, "global", g, "core:trailing_bytes", &trailing, NULL) != 0)
        goto out;
    if (trailing != 0) {
        bad(&v, "global core:trailing_bytes = %llu: non-conforming datasets with trailing bytes are not supported "
                "(allowed: 0)",
            (unsigned long long)trailing);
        goto out;
    }
    const json_t *mo = json_object_get(g, "core:metadata_only");
    if (mo != NULL && !json_is_boolean(mo)) {
        bad(&v, "global core:metadata_only = %s: must be true or false", shown(mo, b, sizeof b));
        goto out;
    }
    if (json_is_true(mo)) {
        bad(&v, "global core:metadata_only = true: the recording has no samples to read");
        goto out;
    }
    const char *text_fields[] = { "core:sha512", "core:description", "core:author", "core:recorder", "core:hw",
                                  "core:license", "core:meta_doi", "core:data_doi", "core:collection",
                                  "core:dataset", "tidelock:scenario" };
    for (size_t k = 0; k < sizeof text_fields / sizeof text_fields[0]; k++) {
        const json_t *t = json_object_get(g, text_fields[k]);
        if (t != NULL && !json_is_string(t)) {
            bad(&v, "global %s = %s: must be a string", text_fields[k], shown(t, b, sizeof b));
            goto out;
        }
    }
    /* the data file */
    const json_t *ds = json_object_get(g, "core:dataset");
    if (ds != NULL) {
        const char *name = json_string_value(ds);
        if (*name == '\0' || strpbrk(name, "/\\:*?\"<>|") != NULL) {
            bad(&v, "global core:dataset = %s: must be a file name in the meta file's folder, without a folder part",
                shown(ds, b, sizeof b));
            goto out;
        }
        const char *slash = strrchr(meta, '/');
        const int dirlen = slash ? (int)(slash - meta + 1) : 0;
        if (snprintf(in->data_path, sizeof in->data_path, "%.*s%s", dirlen, meta, name) >= (int)sizeof in->data_path) {
            bad(&v, "data file name too long");
            goto out;
        }
    } else {
        snprintf(in->data_path, sizeof in->data_path, "%.*s.sigmf-data", (int)(strlen(meta) - strlen(".sigmf-meta")),
                 meta);
    }
    /* core:extensions */
    const json_t *ext = json_object_get(g, "core:extensions");
    if (ext != NULL) {
        if (!json_is_array(ext)) {
            bad(&v, "global core:extensions = %s: must be an array of {name, version, optional}",
                shown(ext, b, sizeof b));
            goto out;
        }
        size_t i;
        json_t *e;
        json_array_foreach((json_t *)ext, i, e) {
            const json_t *n = json_object_get(e, "name"), *vv = json_object_get(e, "version"),
                         *op = json_object_get(e, "optional");
            if (!json_is_object(e) || json_object_size(e) != 3 || !json_is_string(n) || !json_is_string(vv) ||
                !json_is_boolean(op)) {
                bad(&v, "global core:extensions[%zu]: must hold exactly name (string), version (string) and optional "
                        "(true or false) (SigMF 1.2 core)",
                    i);
                goto out;
            }
            if (json_is_false(op) && strcmp(json_string_value(n), "tidelock") != 0) {
                bad(&v, "global core:extensions[%zu]: the recording requires extension '%.40s' %.20s, which this "
                        "reader does not support (supported: tidelock)",
                    i, json_string_value(n), json_string_value(vv));
                goto out;
            }
        }
    }
    /* our namespace */
    const json_t *j;
    *has_samples = 0;
    if (get_count(&v, "global", g, "tidelock:samples", stated, has_samples) != 0)
        goto out;
    if ((j = json_object_get(g, "tidelock:adc_bits")) != NULL) {
        if (!json_is_integer(j) || json_integer_value(j) < 8 || json_integer_value(j) > 16) {
            bad(&v, "global tidelock:adc_bits = %s: must be an integer from 8 to 16", shown(j, b, sizeof b));
            goto out;
        }
        in->adc_bits = (unsigned)json_integer_value(j);
    }
    if (get_count(&v, "global", g, "tidelock:seed", &in->seed, &in->has_seed) != 0)
        goto out;
    j = json_object_get(g, "tidelock:adc_full_scale_v");
    if (j != NULL && !(json_is_number(j) && json_number_value(j) > 0.0)) {
        bad(&v, "global tidelock:adc_full_scale_v = %s: must be a number of volts above 0", shown(j, b, sizeof b));
        goto out;
    }
    if ((j = json_object_get(g, "tidelock:model")) != NULL && !json_is_object(j)) {
        bad(&v, "global tidelock:model = %s: must be an object", shown(j, b, sizeof b));
        goto out;
    }
    if ((j = json_object_get(g, "tidelock:scenario")) != NULL) {
        r->scenario = strdup(json_string_value(j));
        if (r->scenario == NULL) {
            bad(&v, "out of memory");
            goto out;
        }
        in->scenario = r->scenario;
    }
    /* captures and annotations */
    uint64_t need_cap = 0, need_ann = 0;
    if (check_segments(&v, "captures", caps, core_capture, &need_cap) != 0 ||
        check_segments(&v, "annotations", anns, core_annotation, &need_ann) != 0)
        goto out;
    /* annotation indices are absolute (core:offset), capture ones relative to the file */
    need_ann = need_ann > offset ? need_ann - offset : 0;
    *need = need_cap > need_ann ? need_cap : need_ann;
    const json_t *c0 = json_array_get(caps, 0);
    const json_t *fr = c0 ? json_object_get(c0, "core:frequency") : NULL;
    if (fr != NULL) {
        in->has_frequency = 1;
        in->frequency_hz = json_number_value(fr);
    }
    rc = 0;
out:
    json_decref(root);
    return rc;
}

/* ---- reading ----------------------------------------------------------------------- */

tl_sigmf_reader *tl_sigmf_open(const char *meta, size_t block_bytes, char *err, size_t cap)
{
    if (block_bytes == 0)
        block_bytes = TL_SIGMF_BLOCK_DEFAULT;
    if (block_bytes < TL_SIGMF_BLOCK_MIN || block_bytes > TL_SIGMF_BLOCK_MAX) {
        say(err, cap, "%s: block of %zu bytes: must be from %u to %u", meta, block_bytes, TL_SIGMF_BLOCK_MIN,
            TL_SIGMF_BLOCK_MAX);
        return NULL;
    }
    tl_sigmf_reader *r = calloc(1, sizeof *r);
    if (r == NULL) {
        say(err, cap, "%s: out of memory", meta);
        return NULL;
    }
    tl_sigmf_info *in = &r->info;
    r->bits = 16;
    snprintf(in->meta_path, sizeof in->meta_path, "%s", meta);
    uint64_t need = 0, stated = 0;
    int has_samples = 0;
    if (read_meta(r, meta, &need, &has_samples, &stated, err, cap) != 0)
        goto fail;
    /* the data file against the meta */
    r->f = fopen(in->data_path, "rb");
    struct stat st;
    if (r->f == NULL || fstat(fileno(r->f), &st) != 0) {
        say(err, cap, "%s: cannot open the data file of %s: %s", in->data_path, meta, strerror(errno));
        goto fail;
    }
    if (!S_ISREG(st.st_mode)) {
        say(err, cap, "%s: not a regular file", in->data_path);
        goto fail;
    }
    const uint64_t size = (uint64_t)st.st_size;
    if (size % in->frame_bytes != 0) {
        say(err, cap, "%s: size %llu bytes is not a multiple of %u (%u channel%s x %u bytes per %s sample, from %s)",
            in->data_path, (unsigned long long)size, in->frame_bytes, in->channels, in->channels == 1 ? "" : "s",
            in->frame_bytes / in->channels, in->datatype, meta);
        goto fail;
    }
    in->samples = size / in->frame_bytes;
    if (has_samples && stated != in->samples) {
        say(err, cap, "%s: %llu samples per channel (%llu bytes), but %s global tidelock:samples = %llu: %s",
            in->data_path, (unsigned long long)in->samples, (unsigned long long)size, meta,
            (unsigned long long)stated,
            in->samples < stated ? "the data file is truncated" : "the data file is longer than stated");
        goto fail;
    }
    if (need > in->samples) {
        say(err, cap, "%s: %llu samples per channel (%llu bytes), but the captures or annotations of %s reach sample "
                      "%llu: the data file is truncated",
            in->data_path, (unsigned long long)in->samples, (unsigned long long)size, meta,
            (unsigned long long)need);
        goto fail;
    }
    if (in->is_complex)
        in->real_samples = in->samples >= HB_W ? 2u * (in->samples - HB_W + 1u) : 0u;
    else
        in->real_samples = in->samples;
    /* streaming state */
    r->buf_cap = block_bytes - block_bytes % in->frame_bytes;
    if (r->buf_cap == 0)
        r->buf_cap = in->frame_bytes;
    r->buf = malloc(r->buf_cap);
    r->rails = calloc(in->channels, sizeof(uint64_t));
    r->clipped = calloc(in->channels, sizeof(uint64_t));
    r->rounded = calloc(in->channels, sizeof(uint64_t));
    if (in->is_complex) {
        r->ring_i = calloc((size_t)in->channels * 2u * HB_W, sizeof(double));
        r->ring_q = calloc((size_t)in->channels * 2u * HB_W, sizeof(double));
        r->pend = calloc((size_t)in->channels * 2u, sizeof(double));
        tl_sigmf_halfband(r->hb);
    }
    if (r->buf == NULL || r->rails == NULL || r->clipped == NULL || r->rounded == NULL ||
        (in->is_complex && (r->ring_i == NULL || r->ring_q == NULL || r->pend == NULL))) {
        say(err, cap, "%s: out of memory for a block of %zu bytes", meta, r->buf_cap);
        goto fail;
    }
    r->frames_left = in->samples;
    return r;
fail:
    tl_sigmf_close(r);
    return NULL;
}

const tl_sigmf_info *tl_sigmf_info_of(const tl_sigmf_reader *r)
{
    return &r->info;
}

int tl_sigmf_set_adc_bits(tl_sigmf_reader *r, unsigned bits)
{
    if (r == NULL || bits < 8 || bits > 16)
        return -1;
    r->bits = bits;
    return 0;
}

uint64_t tl_sigmf_rails(const tl_sigmf_reader *r, unsigned c)
{
    return c < r->info.channels ? r->rails[c] : 0;
}

uint64_t tl_sigmf_clipped(const tl_sigmf_reader *r, unsigned c)
{
    return c < r->info.channels ? r->clipped[c] : 0;
}

uint64_t tl_sigmf_rounded(const tl_sigmf_reader *r, unsigned c)
{
    return c < r->info.channels ? r->rounded[c] : 0;
}

uint64_t tl_sigmf_bytes_read(const tl_sigmf_reader *r)
{
    return r->bytes_read;
}

void tl_sigmf_close(tl_sigmf_reader *r)
{
    if (r == NULL)
        return;
    if (r->f != NULL)
        fclose(r->f);
    free(r->scenario);
    free(r->buf);
    free(r->rails);
    free(r->clipped);
    free(r->rounded);
    free(r->ring_i);
    free(r->ring_q);
    free(r->pend);
    free(r);
}

/* The next frame's bytes, reading a block when the buffer is empty. */
static const uint8_t *next_frame(tl_sigmf_reader *r, char *err, size_t cap)
{
    if (r->pos == r->len) {
        if (r->frames_left == 0) {
            say(err, cap, "%s: no samples left after %llu per channel", r->info.data_path,
                (unsigned long long)r->frames_used);
            return NULL;
        }
        const uint64_t whole = r->frames_left * r->info.frame_bytes;
        const size_t want = whole < r->buf_cap ? (size_t)whole : r->buf_cap;
        const size_t got = fread(r->buf, 1, want, r->f);
        r->bytes_read += got;
        if (got != want) {
            say(err, cap, "%s: %s after %llu bytes (expected %llu): the file changed while being read?",
                r->info.data_path, ferror(r->f) ? "read error" : "ends early", (unsigned long long)r->bytes_read,
                (unsigned long long)r->info.samples * r->info.frame_bytes);
            return NULL;
        }
        r->frames_left -= want / r->info.frame_bytes;
        r->len = want;
        r->pos = 0;
    }
    const uint8_t *p = r->buf + r->pos;
    r->pos += r->info.frame_bytes;
    r->frames_used++;
    return p;
}

static int32_t le16s(const uint8_t *p)
{
    const int32_t u = (int32_t)p[0] | ((int32_t)p[1] << 8);
    return u >= 32768 ? u - 65536 : u;
}

static double le_f32(const uint8_t *p)
{
    const uint32_t u = (uint32_t)p[0] | ((uint32_t)p[1] << 8) | ((uint32_t)p[2] << 16) | ((uint32_t)p[3] << 24);
    float x;
    memcpy(&x, &u, sizeof x);
    return (double)x;
}

/* Clip a code to the target ADC's range and left-align it; count clips and rails. */
static int16_t finish(tl_sigmf_reader *r, unsigned c, long code)
{
    const long hi = (1L << (r->bits - 1u)) - 1L, lo = -(1L << (r->bits - 1u));
    if (code > hi || code < lo) {
        r->clipped[c]++;
        code = code > hi ? hi : lo;
    }
    if (code == hi || code == lo)
        r->rails[c]++;
    return (int16_t)(code * (1L << (16u - r->bits)));
}

/* A left-aligned 16-bit value q (full scale 32768) to the target ADC. */
static int16_t from_q15(tl_sigmf_reader *r, unsigned c, int32_t q)
{
    const unsigned s = 16u - r->bits;
    if (s == 0)
        return finish(r, c, q);
    const uint32_t m = (uint32_t)(q < 0 ? -q : q);
    const uint32_t k = (m + (1u << (s - 1u))) >> s; /* nearest, ties away from zero */
    if ((k << s) != m)
        r->rounded[c]++;
    return finish(r, c, q < 0 ? -(long)k : (long)k);
}

/* A value x in units of full scale (1.0) to the target ADC; -1 if not finite. */
static int from_real(tl_sigmf_reader *r, unsigned c, double x, int16_t *out)
{
    if (!isfinite(x))
        return -1;
    double y = x * ldexp(1.0, (int)r->bits - 1);
    y = y > 65536.0 ? 65536.0 : y < -65536.0 ? -65536.0 : y;
    const long code = lround(y);
    if ((double)code != y)
        r->rounded[c]++;
    *out = finish(r, c, code);
    return 0;
}

/* ci16_le: push one complex frame into every channel's window; when the
 * window is full, form the next pair of real outputs (in full-scale units). */
static int complex_step(tl_sigmf_reader *r, char *err, size_t cap)
{
    const uint8_t *p = next_frame(r, err, cap);
    if (p == NULL)
        return -1;
    const unsigned nc = r->info.channels, L = TL_SIGMF_HALFBAND_L;
    const unsigned at = r->ring_pos;
    for (unsigned c = 0; c < nc; c++) {
        double *ri = r->ring_i + (size_t)c * 2u * HB_W, *rq = r->ring_q + (size_t)c * 2u * HB_W;
        ri[at] = ri[at + HB_W] = le16s(p + 4u * c) / 32768.0;
        rq[at] = rq[at + HB_W] = le16s(p + 4u * c + 2u) / 32768.0;
    }
    r->ring_pos = (at + 1u) % HB_W;
    r->pushed++;
    if (r->pushed < HB_W)
        return 0; /* window not full yet: no output */
    /* window w[j] = z[n - L + 1 + j], j = 0 .. 2L-1, oldest at ring_pos */
    const double sign = (r->pairs & 1u) ? -1.0 : 1.0;
    for (unsigned c = 0; c < nc; c++) {
        const double *wi = r->ring_i + (size_t)c * 2u * HB_W + r->ring_pos;
        const double *wq = r->ring_q + (size_t)c * 2u * HB_W + r->ring_pos;
        double q = 0.0;
        for (unsigned i = 0; i < L; i++)
            q += r->hb[i] * (wq[L - 1u - i] + wq[L + i]);
        r->pend[2u * c] = sign * wi[L - 1u];      /* y[2p]   = (-1)^p I[n] */
        r->pend[2u * c + 1u] = -sign * q;         /* y[2p+1] = (-1)^(p+1) Q[n + 1/2] */
    }
    r->pairs++;
    r->pend_at = 0;
    r->pend_n = 2;
    return 0;
}

int tl_sigmf_read(tl_sigmf_reader *r, int16_t *const *out, size_t n, char *err, size_t cap)
{
    if (r == NULL || out == NULL)
        return -1;
    if (r->failed) {
        say(err, cap, "%s: reading stopped at an earlier error", r->info.data_path);
        return -1;
    }
    const unsigned nc = r->info.channels;
    for (size_t k = 0; k < n; k++) {
        if (r->info.is_complex) {
            while (r->pend_n == 0)
                if (complex_step(r, err, cap) != 0)
                    goto fail;
            for (unsigned c = 0; c < nc; c++) {
                int16_t v = 0;
                from_real(r, c, r->pend[2u * c + r->pend_at], &v); /* finite: from int16 */
                if (out[c] != NULL)
                    out[c][k] = v;
            }
            r->pend_at++;
            r->pend_n--;
            continue;
        }
        const uint8_t *p = next_frame(r, err, cap);
        if (p == NULL)
            goto fail;
        for (unsigned c = 0; c < nc; c++) {
            int16_t v = 0;
            switch (r->info.type) {
            case TL_SIGMF_RI16_LE: v = from_q15(r, c, le16s(p + 2u * c)); break;
            case TL_SIGMF_RI8: v = from_q15(r, c, (p[c] >= 128u ? (int32_t)p[c] - 256 : (int32_t)p[c]) * 256); break;
            default:
                if (from_real(r, c, le_f32(p + 4u * c), &v) != 0) {
                    say(err, cap, "%s: sample %llu of channel %u is not a finite number (rf32_le)", r->info.data_path,
                        (unsigned long long)(r->frames_used - 1u), c);
                    goto fail;
                }
                break;
            }
            if (out[c] != NULL)
                out[c][k] = v;
        }
    }
    return 0;
fail:
    r->failed = 1;
    return -1;
}

int tl_sigmf_skip(tl_sigmf_reader *r, uint64_t n, char *err, size_t cap)
{
    if (r == NULL)
        return -1;
    if (r->failed) {
        say(err, cap, "%s: reading stopped at an earlier error", r->info.data_path);
        return -1;
    }
    const unsigned nc = r->info.channels;
    if (r->info.is_complex) {
        int16_t **none = calloc(nc, sizeof *none);
        if (none == NULL) {
            say(err, cap, "%s: out of memory", r->info.data_path);
            r->failed = 1;
            return -1;
        }
        int rc = 0;
        for (uint64_t left = n; left > 0 && rc == 0;) {
            const size_t k = left < (1u << 16) ? (size_t)left : (size_t)1 << 16;
            rc = tl_sigmf_read(r, none, k, err, cap);
            left -= k;
        }
        free(none);
        return rc;
    }
    const uint64_t fb = r->info.frame_bytes;
    const uint64_t in_buf = (r->len - r->pos) / fb;
    const uint64_t here = n < in_buf ? n : in_buf;
    r->pos += (size_t)(here * fb);
    r->frames_used += here;
    n -= here;
    if (n == 0)
        return 0;
    if (n > r->frames_left) {
        say(err, cap, "%s: cannot skip %llu more samples per channel: %llu left after %llu", r->info.data_path,
            (unsigned long long)n, (unsigned long long)r->frames_left, (unsigned long long)r->frames_used);
        r->failed = 1;
        return -1;
    }
    const uint64_t bytes = n * fb;
    if (bytes > (uint64_t)INT64_MAX || fseeko(r->f, (off_t)bytes, SEEK_CUR) != 0) {
        say(err, cap, "%s: cannot seek %llu bytes forward: %s", r->info.data_path, (unsigned long long)bytes,
            strerror(errno));
        r->failed = 1;
        return -1;
    }
    r->frames_left -= n;
    r->frames_used += n;
    return 0;
}
