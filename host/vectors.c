/* vectors.c - the golden vectors: definitions, generation, check (vectors.h). */
#include "vectors.h"

#include <dirent.h>
#include <errno.h>
#include <jansson.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "atomic_file.h"
#include "scenario.h"
#include "bytebuf.h"
#include "sha256.h"
#include "sky_noise.h"
#include "spectral_decode.h"
#include "taps_design.h"
#include "tl_bytes.h"
#include "tl_chain.h"
#include "tl_downlink.h"
#include "tl_fft.h"
#include "tl_frame.h"
#include "tl_link.h"
#include "tl_packet.h"

/* ---- definitions ----------------------------------------------------------- */

/* The epoch every vector's packet times count from: 2 100 000 000 s and a
 * half after the CCSDS epoch, so the CUC fields are not zero. */
#define VEC_EPOCH_COARSE 2100000000u
#define VEC_EPOCH_FINE 0x8000u

typedef struct vec_def {
    const char *name;
    const char *purpose;
    uint64_t seed;
    uint32_t integrations;
    int builtin_table;           /* 1: no taps.bin, the firmware's built-in table */
    void (*define)(tl_scenario *s);
} vec_def;

/* Common ground: the nominal scenario cut down to a few small spectra. */
static void small(tl_scenario *s, uint32_t channels, uint32_t taps, uint32_t inputs, uint32_t spectra)
{
    tl_scenario_nominal(s);
    s->cfg.points = 2u * channels;
    s->cfg.taps = taps;
    s->cfg.inputs = inputs;
    s->sky.inputs = inputs;
    s->spectra = spectra;
    s->cfg.integration = spectra;
    s->blocks = 8u;
    s->dl_frame_len = 1024u;
    s->dl_max_packet = 1024u;
}

static void white_tone(tl_scenario *s, double hz, double dbfs)
{
    small(s, 256u, 4u, 1u, 8u);
    s->sky.white = 1;
    s->sky.carrier_hz.n = 1;
    s->sky.carrier_hz.v[0] = hz;
    s->sky.carrier_dbfs.n = 1;
    s->sky.carrier_dbfs.v[0] = dbfs;
}

/* 256 channels of 200 kHz at 102.4 Msample/s: channel 100 is centred on
 * 20 MHz, and 20.1 MHz lies half-way between channels 100 and 101. */
static void d_noise(tl_scenario *s)
{
    small(s, 256u, 4u, 2u, 8u);
}
static void d_tone_centre(tl_scenario *s)
{
    white_tone(s, 20.0e6, -20.0);
}
static void d_tone_between(tl_scenario *s)
{
    white_tone(s, 20.1e6, -20.0);
}
static void d_tone_saturating(tl_scenario *s)
{
    white_tone(s, 20.0e6, 0.0);
    s->cfg.fft_scale_mask = 0u; /* no scaling: the FFT stages saturate */
    s->cfg.det_shift = 0u;      /* no detection shift: the sums saturate */
}
static void d_switching(tl_scenario *s)
{
    small(s, 256u, 4u, 2u, 24u);
    s->cfg.switch_steps = 3u;
    s->cfg.switch_state[0] = (uint8_t)TL_STATE_ANTENNA;
    s->cfg.switch_dwell[0] = 8u;
    s->cfg.switch_state[1] = (uint8_t)TL_STATE_LOAD;
    s->cfg.switch_dwell[1] = 4u;
    s->cfg.switch_state[2] = (uint8_t)TL_STATE_NOISE;
    s->cfg.switch_dwell[2] = 4u;
    s->cfg.switch_discard = 2u;
    s->sky.load_k = 300.0;
    s->sky.noise_excess_k = 3000.0;
}
static void d_burst(tl_scenario *s)
{
    small(s, 256u, 4u, 1u, 16u);
    s->sky.burst_hz = 30.0e6;
    s->sky.burst_dbfs = -12.0;
    s->sky.burst_duty = 0.25;
    s->sky.burst_period_us = 40.0; /* 8 spectra of 5 us: on for 2 of every 8 */
}
static void d_kurtosis(tl_scenario *s)
{
    d_burst(s);
    s->spectra = 64u;
    s->cfg.integration = 64u;
    s->cfg.sk_spectra = 32u; /* two blocks per integration: the burst raises SK at 30 MHz */
    s->cfg.sk_accumulate = 1u;
}
static void d_correlated(tl_scenario *s)
{
    small(s, 256u, 4u, 2u, 8u);
    s->sky.coherence = 0.95;
}
static void d_bounded_bit_planes(tl_scenario *s)
{
    small(s, 512u, 4u, 2u, 8u);
    s->dl_encoding = 1;
    s->dl_transpose = 1;
    s->dl_fraction = 0.125;
    s->dl_block = 32u;
}
static void d_bounded_byte_shuffle(tl_scenario *s)
{
    small(s, 512u, 4u, 1u, 16u);
    s->dl_encoding = 1;
    s->dl_transpose = 0;
    s->dl_fraction = 0.5;
    s->dl_block = 16u;
}
static void d_lossless_byte_shuffle(tl_scenario *s)
{
    small(s, 512u, 4u, 2u, 8u);
    s->dl_encoding = 0;
    s->dl_transpose = 0;
    s->dl_max_packet = TL_DL_MIN_PACKET;
    s->dl_frame_len = TL_FRAME_MIN_LEN;
}
static void d_channels_min(tl_scenario *s)
{
    small(s, TL_MIN_POINTS / 2u, 1u, 1u, 8u);
    s->dl_frame_len = TL_FRAME_MIN_LEN;
}
static void d_channels_m7_max(tl_scenario *s)
{
    small(s, TL_VECTORS_M7_MAX_POINTS / 2u, TL_VECTORS_M7_MAX_TAPS, 2u, 8u);
    s->dl_max_packet = TL_PACKET_MAX_LEN;
    s->dl_frame_len = TL_FRAME_MAX_LEN;
}
static void d_channels_host_max(tl_scenario *s)
{
    small(s, TL_MAX_POINTS / 2u, 2u, 1u, 8u);
    s->dl_max_packet = TL_PACKET_MAX_LEN;
    s->dl_frame_len = TL_FRAME_MAX_LEN;
}
static void d_taps_host_max(tl_scenario *s)
{
    small(s, TL_MIN_POINTS / 2u, TL_MAX_TAPS, 1u, 8u);
    s->window = TL_WINDOW_BLACKMAN_HARRIS4;
}
static void d_builtin_table(tl_scenario *s)
{
    small(s, TL_TAPS_DEFAULT_POINTS / 2u, TL_TAPS_DEFAULT_TAPS, 1u, 8u);
    s->window = TL_WINDOW_HANN;
    s->dl_max_packet = TL_PACKET_MAX_LEN;
}

static const vec_def defs[] = {
    { "noise-nominal", "Gaussian sky noise at the nominal level (RMS 1/8 of full scale), two inputs, two integrations",
      101, 2, 0, d_noise },
    { "tone-centre", "a -20 dBFS tone on the centre of channel 100 over white noise", 102, 1, 0, d_tone_centre },
    { "tone-between", "a -20 dBFS tone half-way between channels 100 and 101 (scalloping)", 103, 1, 0,
      d_tone_between },
    { "tone-saturating", "a full-scale tone with no FFT scaling and no detection shift: ADC clips, FFT and "
                         "accumulator saturation, the saturation bitmap",
      104, 1, 0, d_tone_saturating },
    { "switching", "switch sequence antenna 8, load 4, noise 4 with 2 spectra discarded after each change, "
                   "two integrations",
      105, 2, 0, d_switching },
    { "burst", "a -12 dBFS burst at 30 MHz, on a quarter of every 40 us", 106, 1, 0, d_burst },
    { "kurtosis", "spectral kurtosis blocks of 32 spectra over the burst of the vector 'burst'", 116, 1, 0,
      d_kurtosis },
    { "correlated-sky", "two inputs whose sky is 95 % common: a strong cross-power", 107, 1, 0, d_correlated },
    { "bounded-bit-planes", "noise-bounded encoding, f = 1/8, steps per 32 channels, bit-plane transpose", 108, 1, 0,
      d_bounded_bit_planes },
    { "bounded-byte-shuffle", "noise-bounded encoding, f = 1/2, steps per 16 channels, byte shuffle", 109, 1, 0,
      d_bounded_byte_shuffle },
    { "lossless-byte-shuffle", "lossless encoding with byte shuffle, the smallest packets (512) and frames (128)",
      110, 1, 0, d_lossless_byte_shuffle },
    { "channels-min", "the fewest channels (128), a windowed FFT (1 tap)", 111, 1, 0, d_channels_min },
    { "channels-m7-max", "the most channels and taps of the Cortex-M7 build (2048 channels, 4 taps), largest "
                         "packets and frames",
      112, 1, 0, d_channels_m7_max },
    { "channels-host-max", "the most channels of the host build (16384), beyond the Cortex-M7's maxima", 113, 1, 0,
      d_channels_host_max },
    { "taps-host-max", "the most taps of the host build (16, Blackman-Harris), beyond the Cortex-M7's maxima", 114,
      1, 0, d_taps_host_max },
    { "builtin-table", "the firmware's built-in coefficient table (4096 channels, 4 taps; no table image)", 115, 1,
      1, d_builtin_table },
};

#define NDEFS (sizeof defs / sizeof defs[0])

size_t tl_vectors_count(void)
{
    return NDEFS;
}

const char *tl_vectors_name(size_t i)
{
    return i < NDEFS ? defs[i].name : NULL;
}

/* ---- generation ---------------------------------------------------------------- */

typedef struct vec_out {
    tl_scenario s;
    tl_link_setup setup;
    uint8_t setup_rec[TL_LINK_SETUP_OCTETS];
    uint8_t *taps;
    size_t taps_len;
    tl_bytebuf samples, frames;
    char *scenario_text;
    uint32_t products, sk_blocks, frame_count;
} vec_out;

typedef struct gen_ctx {
    tl_frame_builder fb;
    tl_status frame_st;
    tl_bytebuf *frames;
} gen_ctx;

static void gen_frame(void *user, const uint8_t *wire, size_t len)
{
    tl_bytebuf_put(((gen_ctx *)user)->frames, wire, len);
}

static void gen_packet(void *user, const uint8_t *pkt, size_t len)
{
    gen_ctx *g = user;
    const tl_status st = tl_frame_put_packet(&g->fb, pkt, len);
    if (st != TL_OK && g->frame_st == TL_OK)
        g->frame_st = st;
}

static void vec_out_free(vec_out *o)
{
    free(o->taps);
    free(o->samples.p);
    free(o->frames.p);
    free(o->scenario_text);
    memset(o, 0, sizeof *o);
}

static char *write_text(const tl_scenario *s)
{
    char *text = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&text, &len);
    if (m == NULL)
        return NULL;
    const int rc = tl_scenario_write(m, s);
    if (fclose(m) != 0 || rc != 0) {
        free(text);
        return NULL;
    }
    return text;
}

/* Does `text` (a scenario file) hold the line `line` (len octets, newline
 * included) in section `section`? */
static int has_line(const char *text, const char *section, const char *line, size_t len)
{
    char cur[64] = "";
    for (const char *p = text; *p != '\0';) {
        const char *end = strchr(p, '\n');
        const size_t ll = end != NULL ? (size_t)(end - p) + 1u : strlen(p);
        if (p[0] == '[')
            snprintf(cur, sizeof cur, "%.*s", (int)(ll - 1u), p);
        else if (ll == len && strncmp(p, line, len) == 0 && strcmp(cur, section) == 0)
            return 1;
        p += ll;
    }
    return 0;
}

/* The scenario as the keys whose values differ from the built-in default
 * (tidelock scenario --check FILE resolves and prints the whole of it): a
 * key added to the scenario files, or a comment changed, leaves the
 * vectors as they are. */
static char *scenario_text(const tl_scenario *s)
{
    tl_scenario def;
    tl_scenario_default(&def);
    char *text = write_text(s), *base = write_text(&def);
    static const char head[] = "# golden vector scenario: the keys that differ from the built-in default\n";
    char *out = text != NULL && base != NULL ? malloc(strlen(head) + 2u * strlen(text) + 1u) : NULL;
    if (out == NULL) {
        free(text);
        free(base);
        free(out);
        return NULL;
    }
    memcpy(out, head, sizeof head);
    size_t n = strlen(head);
    char section[64] = "";
    int section_out = 0;
    for (char *line = text; *line != '\0';) {
        char *end = strchr(line, '\n');
        const size_t ll = end != NULL ? (size_t)(end - line) + 1u : strlen(line);
        if (line[0] == '[') {
            snprintf(section, sizeof section, "%.*s", (int)(ll - 1u), line);
            section_out = 0;
        } else if (line[0] != '#' && line[0] != '\n' && !has_line(base, section, line, ll)) {
            if (!section_out) {
                n += (size_t)sprintf(out + n, "\n%s\n", section);
                section_out = 1;
            }
            memcpy(out + n, line, ll);
            n += ll;
        }
        line += ll;
    }
    out[n] = '\0';
    free(text);
    free(base);
    return out;
}

static int fail_st(char *err, size_t cap, const char *name, const char *what, tl_status st)
{
    snprintf(err, cap, "vector %s: %s: %s (%s)", name, what, tl_status_text(st), tl_status_name(st));
    return -1;
}

static int generate(const vec_def *d, vec_out *o, char *err, size_t cap)
{
    memset(o, 0, sizeof *o);
    tl_scenario *s = &o->s;
    d->define(s);
    snprintf(s->name, sizeof s->name, "%s", d->name);
    snprintf(s->description, sizeof s->description, "golden vector: %.140s", d->purpose);
    s->sky.seed = d->seed;
    if (tl_scenario_check(s, d->name, err, cap) != 0)
        return -1;
    o->scenario_text = scenario_text(s);
    if (o->scenario_text == NULL) {
        snprintf(err, cap, "vector %s: cannot write its scenario (out of memory?)", d->name);
        return -1;
    }

    /* the setup record, then the record as a target decodes it */
    tl_link_setup su;
    memset(&su, 0, sizeof su);
    su.chain = s->cfg;
    su.chain.integration = s->spectra;
    tl_downlink_config_default(&su.dl);
    su.dl.apid_science = (uint16_t)s->dl_apid_science;
    su.dl.apid_hk = (uint16_t)s->dl_apid_hk;
    su.dl.apid_sk = (uint16_t)s->dl_apid_sk;
    su.dl.max_packet = s->dl_max_packet;
    su.dl.encoding = s->dl_encoding ? TL_ENCODE_ID_BOUNDED : TL_ENCODE_ID_LOSSLESS;
    su.dl.transpose = s->dl_transpose ? TL_ENCODE_BIT_PLANES : TL_ENCODE_BYTE_SHUFFLE;
    su.dl.fraction_q16 = (uint32_t)lround(s->dl_fraction * 65536.0);
    su.dl.block = s->dl_block;
    su.dl.mode = (uint8_t)s->dl_mode;
    su.dl.sample_rate_hz = (uint32_t)lround(s->sky.sample_rate_hz);
    su.dl.epoch.coarse = VEC_EPOCH_COARSE;
    su.dl.epoch.fine = VEC_EPOCH_FINE;
    su.frame_len = s->dl_frame_len;
    su.scid = (uint16_t)s->dl_scid;
    su.vcid = (uint8_t)s->dl_vcid;
    tl_status st = tl_link_setup_encode(&su, o->setup_rec, sizeof o->setup_rec);
    if (st == TL_OK)
        st = tl_link_setup_decode(o->setup_rec, sizeof o->setup_rec, &o->setup, NULL);
    if (st != TL_OK)
        return fail_st(err, cap, d->name, "setup record", st);

    /* the coefficient table */
    if (d->builtin_table) {
        if (s->cfg.points != tl_taps_default_points || s->cfg.taps != tl_taps_default_taps ||
            s->window != tl_taps_default_window) {
            snprintf(err, cap, "vector %s: the built-in table has %u points and %u taps", d->name,
                     (unsigned)tl_taps_default_points, (unsigned)tl_taps_default_taps);
            return -1;
        }
    } else {
        if (tl_scenario_taps_image(s, 1, &o->taps, &o->taps_len) != 0) {
            snprintf(err, cap, "vector %s: cannot design its %u-tap %s table of %u points", d->name, s->cfg.taps,
                     tl_window_name(s->window), s->cfg.points);
            return -1;
        }
    }

    /* the simulator as `tidelock run` sets it up, and the firmware */
    tl_sky *sky = tl_scenario_sky(s);
    tl_chain *c = malloc(sizeof *c);
    tl_product *p = malloc(sizeof *p);
    tl_sk_block *skb = malloc(sizeof *skb);
    tl_downlink *dl = malloc(sizeof *dl);
    gen_ctx *g = malloc(sizeof *g);
    const uint32_t N = s->cfg.points;
    int16_t *a = malloc(sizeof *a * N), *b = malloc(sizeof *b * N);
    uint8_t *raw = malloc(4u * (size_t)N);
    int rc = -1;
    if (sky == NULL || c == NULL || p == NULL || skb == NULL || dl == NULL || g == NULL || a == NULL || b == NULL || raw == NULL) {
        snprintf(err, cap, "vector %s: cannot start the simulator (out of memory?)", d->name);
        goto out;
    }
    memset(g, 0, sizeof *g);
    g->frames = &o->frames;
    st = tl_chain_init(c, &o->setup.chain, o->taps, o->taps_len);
    if (st != TL_OK) {
        fail_st(err, cap, d->name, "chain", st);
        goto out;
    }
    tl_downlink_config dc = o->setup.dl;
    dc.config_id = tl_downlink_config_id(&c->cfg, c->taps.crc);
    st = tl_downlink_init(dl, &dc);
    if (st == TL_OK)
        st = tl_frame_builder_init(&g->fb, o->setup.frame_len, o->setup.scid, o->setup.vcid, gen_frame, g);
    if (st != TL_OK) {
        fail_st(err, cap, d->name, "downlink", st);
        goto out;
    }
    const uint32_t inputs = s->cfg.inputs;
    const uint64_t frames = (uint64_t)s->cfg.taps - 1u + (uint64_t)s->spectra * d->integrations;
    for (uint64_t f = 0; f < frames; f++) {
        if (s->cfg.switch_steps > 0u)
            tl_sky_set_state(sky, tl_chain_state(c));
        tl_sky_fill(sky, a, inputs == 2u ? b : NULL, N);
        for (uint32_t i = 0; i < N; i++) {
            tl_put_be16(raw + (size_t)i * 2u * inputs, (uint16_t)a[i]);
            if (inputs == 2u)
                tl_put_be16(raw + (size_t)i * 4u + 2u, (uint16_t)b[i]);
        }
        tl_bytebuf_put(&o->samples, raw, (size_t)N * 2u * inputs);
        for (size_t done = 0; done < N && st == TL_OK;) {
            size_t used = 0;
            st = tl_chain_push(c, a + done, inputs == 2u ? b + done : NULL, N - done, &used);
            done += used;
            if (st == TL_OK && tl_chain_sk_ready(c)) {
                st = tl_chain_take_sk(c, skb);
                if (st == TL_OK)
                    st = tl_downlink_sk(dl, skb, gen_packet, g);
                if (st == TL_OK)
                    st = g->frame_st;
                o->sk_blocks++;
            }
            if (st == TL_OK && tl_chain_ready(c)) {
                st = tl_chain_take(c, p);
                if (st == TL_OK)
                    st = tl_downlink_product(dl, p, 1, gen_packet, g);
                if (st == TL_OK)
                    st = g->frame_st;
                o->products++;
            }
        }
        if (st != TL_OK) {
            fail_st(err, cap, d->name, "firmware", st);
            goto out;
        }
    }
    st = tl_frame_flush(&g->fb);
    if (st != TL_OK) {
        fail_st(err, cap, d->name, "frame flush", st);
        goto out;
    }
    if (o->products != d->integrations) {
        snprintf(err, cap, "vector %s: %u integrations finished, %u expected", d->name, o->products,
                 d->integrations);
        goto out;
    }
    if (o->samples.failed || o->frames.failed) {
        snprintf(err, cap, "vector %s: out of memory", d->name);
        goto out;
    }
    o->frame_count = g->fb.frames;
    rc = 0;
out:
    tl_sky_close(sky);
    free(c);
    free(p);
    free(skb);
    free(dl);
    free(g);
    free(a);
    free(b);
    free(raw);
    return rc;
}

/* ---- writing --------------------------------------------------------------------- */

typedef struct bytes {
    const void *p;
    size_t n;
} bytes;

static int write_bytes(FILE *f, void *ctx)
{
    const bytes *b = ctx;
    return fwrite(b->p, 1, b->n, f) == b->n ? 0 : -1;
}

static int write_file(const char *dir, const char *name, const char *file, const void *p, size_t n, char *err,
                      size_t cap)
{
    char path[4400];
    snprintf(path, sizeof path, "%s/%s/%s", dir, name, file);
    bytes b = { p, n };
    return tl_atomic_write(path, write_bytes, &b, err, cap);
}

static int make_dir(const char *path, char *err, size_t cap)
{
    if (mkdir(path, 0755) != 0 && errno != EEXIST) {
        snprintf(err, cap, "%s: cannot create the folder: %s", path, strerror(errno));
        return -1;
    }
    struct stat st;
    if (stat(path, &st) != 0 || !S_ISDIR(st.st_mode)) {
        snprintf(err, cap, "%s: exists and is not a folder", path);
        return -1;
    }
    return 0;
}

static json_t *file_entry(const void *p, size_t n)
{
    char hex[2 * TL_SHA256_OCTETS + 1];
    tl_sha256_hex(p, n, hex);
    return json_pack("{s:I, s:s}", "octets", (json_int_t)n, "sha256", hex);
}

static const char *const encoding_name[] = { "lossless", "bounded" };
static const char *const transpose_name[] = { "byte-shuffle", "bit-planes" };

static int write_manifest(FILE *f, void *ctx)
{
    char *text = json_dumps((json_t *)ctx, JSON_INDENT(2) | JSON_PRESERVE_ORDER);
    if (text == NULL)
        return -1;
    const int rc = fputs(text, f) >= 0 && fputc('\n', f) != EOF ? 0 : -1;
    free(text);
    return rc;
}

int tl_vectors_make(const char *dir, FILE *progress, char *err, size_t cap)
{
    if (make_dir(dir, err, cap) != 0)
        return -1;
    json_t *list = json_array();
    json_t *man = json_pack("{s:s, s:I, s:I, s:I, s:I, s:s, s:s, s:o}", "format", TL_VECTORS_FORMAT,
                            "arith_version", (json_int_t)TL_ARITH_VERSION, "downlink_version",
                            (json_int_t)TL_DL_VERSION, "encode_version", (json_int_t)TL_ENCODE_VERSION,
                            "setup_version", (json_int_t)TL_LINK_SETUP_VERSION, "regenerate",
                            "tidelock vectors make DIR; tidelock vectors check DIR compares", "samples",
                            "int16 big-endian, inputs interleaved", "vectors", list);
    if (man == NULL) {
        snprintf(err, cap, "%s: out of memory", dir);
        return -1;
    }
    int rc = 0;
    for (size_t i = 0; i < NDEFS && rc == 0; i++) {
        const vec_def *d = &defs[i];
        vec_out *o = malloc(sizeof *o);
        if (o == NULL) {
            snprintf(err, cap, "vector %s: out of memory", d->name);
            rc = -1;
            break;
        }
        if (generate(d, o, err, cap) != 0) {
            vec_out_free(o);
            free(o);
            rc = -1;
            break;
        }
        char sub[4400];
        snprintf(sub, sizeof sub, "%s/%s", dir, d->name);
        const tl_scenario *s = &o->s;
        json_t *files = json_object();
        rc = make_dir(sub, err, cap);
        if (rc == 0)
            rc = write_file(dir, d->name, "scenario.ini", o->scenario_text, strlen(o->scenario_text), err, cap);
        json_object_set_new(files, "scenario.ini", file_entry(o->scenario_text, strlen(o->scenario_text)));
        if (rc == 0)
            rc = write_file(dir, d->name, "setup.bin", o->setup_rec, sizeof o->setup_rec, err, cap);
        json_object_set_new(files, "setup.bin", file_entry(o->setup_rec, sizeof o->setup_rec));
        if (o->taps != NULL) {
            if (rc == 0)
                rc = write_file(dir, d->name, "taps.bin", o->taps, o->taps_len, err, cap);
            json_object_set_new(files, "taps.bin", file_entry(o->taps, o->taps_len));
        }
        if (rc == 0)
            rc = write_file(dir, d->name, "samples.bin", o->samples.p, o->samples.len, err, cap);
        json_object_set_new(files, "samples.bin", file_entry(o->samples.p, o->samples.len));
        if (rc == 0)
            rc = write_file(dir, d->name, "frames.bin", o->frames.p, o->frames.len, err, cap);
        json_object_set_new(files, "frames.bin", file_entry(o->frames.p, o->frames.len));
        const int m7 = s->cfg.points <= TL_VECTORS_M7_MAX_POINTS && s->cfg.taps <= TL_VECTORS_M7_MAX_TAPS;
        json_t *targets = m7 ? json_pack("[s, s, s]", "host", "cortex-m7", "powerpc")
                             : json_pack("[s, s]", "host", "powerpc");
        json_t *v = json_pack(
            "{s:s, s:s, s:s, s:I, s:I, s:I, s:I, s:I, s:I, s:I, s:s, s:s, s:I, s:I, s:I, s:I, s:I, s:o, s:o}", "name",
            d->name, "purpose", d->purpose, "scenario", "scenario.ini", "seed", (json_int_t)d->seed,
            "arith_version", (json_int_t)TL_ARITH_VERSION, "channels", (json_int_t)(s->cfg.points / 2u), "taps",
            (json_int_t)s->cfg.taps, "inputs", (json_int_t)s->cfg.inputs, "spectra_per_integration",
            (json_int_t)s->spectra, "integrations", (json_int_t)d->integrations, "encoding",
            encoding_name[s->dl_encoding ? 1 : 0], "transpose", transpose_name[s->dl_transpose ? 1 : 0],
            "max_packet", (json_int_t)s->dl_max_packet, "frame_length", (json_int_t)o->setup.frame_len,
            "sk_blocks", (json_int_t)o->sk_blocks, "frames", (json_int_t)o->frame_count, "table", (json_int_t)(o->taps != NULL ? 1 : 0), "targets", targets, "files",
            files);
        json_array_append_new(list, v);
        if (rc == 0 && progress != NULL)
            fprintf(progress, "vector %-22s %5u channels, %u input%s, %u frames, %zu octets in, %zu octets out\n",
                    d->name, s->cfg.points / 2u, s->cfg.inputs, s->cfg.inputs == 1u ? "" : "s", o->frame_count,
                    o->samples.len, o->frames.len);
        vec_out_free(o);
        free(o);
    }
    if (rc == 0) {
        char path[4400];
        snprintf(path, sizeof path, "%s/%s", dir, TL_VECTORS_MANIFEST);
        rc = tl_atomic_write(path, write_manifest, man, err, cap);
    }
    json_decref(man);
    return rc;
}

/* ---- comparing ----------------------------------------------------------------------- */

static int read_file(const char *path, uint8_t **p, size_t *n)
{
    *p = NULL;
    *n = 0;
    FILE *f = fopen(path, "rb");
    if (f == NULL)
        return -1;
    tl_bytebuf b = { 0 };
    uint8_t chunk[65536];
    size_t r;
    while ((r = fread(chunk, 1, sizeof chunk, f)) > 0)
        tl_bytebuf_put(&b, chunk, r);
    const int bad = ferror(f) || b.failed;
    fclose(f);
    if (bad) {
        free(b.p);
        return -1;
    }
    *p = b.p;
    *n = b.len;
    return 0;
}

static const char *const science_fields[TL_DL_HEADER_OCTETS] = {
    "header version", "kind", "instrument mode", "switch state", "quantity", "arithmetic spec version",
    "detection shift", "FFT total shift", "configuration id", "configuration id", "configuration id",
    "configuration id", "integration index", "integration index", "integration index", "integration index",
    "spectra in this state", "spectra in this state", "spectra in this state", "spectra in this state",
    "spectra in the integration", "spectra in the integration", "spectra in the integration",
    "spectra in the integration", "spectra discarded", "spectra discarded", "spectra discarded",
    "spectra discarded", "channels", "channels", "first channel", "first channel", "channel count",
    "channel count", "flags", "flags", "table CRC-32C", "table CRC-32C", "table CRC-32C", "table CRC-32C",
};

/* The packet stream carried by a frame stream: data fields concatenated. */
static void data_fields(const uint8_t *w, size_t n, uint32_t L, tl_bytebuf *out)
{
    const size_t wire = TL_FRAME_WIRE_LEN(L);
    for (size_t f = 0; (f + 1u) * wire <= n; f++)
        tl_bytebuf_put(out, w + f * wire + TL_FRAME_ASM_OCTETS + TL_FRAME_OFF_DATA, TL_FRAME_DATA_LEN(L));
}

/* Where, inside a science packet's user data, the two first differ. */
static void describe_science(const uint8_t *ue, size_t le, const uint8_t *ug, size_t lg, size_t u, char *out,
                             size_t cap)
{
    tl_dl_science ve, vg;
    if (u < TL_DL_HEADER_OCTETS) {
        snprintf(out, cap, "science header field '%s' (user octet %zu)", science_fields[u], u);
        return;
    }
    if (tl_downlink_parse_science(ue, le, &ve) != TL_OK) {
        snprintf(out, cap, "user data octet %zu (the expected packet does not parse)", u);
        return;
    }
    const size_t bitmap = (ve.flags & TL_DL_F_BITMAP) ? ((size_t)ve.count + 7u) / 8u : 0u;
    if (u < TL_DL_HEADER_OCTETS + bitmap) {
        const size_t o = u - TL_DL_HEADER_OCTETS;
        unsigned bit = 0;
        const uint8_t x = (uint8_t)(ue[u] ^ (u < lg ? ug[u] : 0u));
        while (bit < 7u && !(x & (0x80u >> bit)))
            bit++;
        snprintf(out, cap, "saturation bitmap, channel %zu", (size_t)ve.first + 8u * o + bit);
        return;
    }
    if (tl_downlink_parse_science(ug, lg, &vg) != TL_OK) {
        snprintf(out, cap, "payload (user octet %zu; the packet received does not parse)", u);
        return;
    }
    static uint64_t ae[TL_ENCODE_FORMAT_MAX_CHANNELS], ag[TL_ENCODE_FORMAT_MAX_CHANNELS];
    const int sgn = ve.qty >= TL_DL_QTY_CROSS_RE;
    tl_status s1, s2;
    if (sgn) {
        s1 = tl_spectral_decode_i64(ve.payload, ve.payload_len, (int64_t *)ae, NULL, TL_ENCODE_FORMAT_MAX_CHANNELS,
                                    NULL);
        s2 = tl_spectral_decode_i64(vg.payload, vg.payload_len, (int64_t *)ag, NULL, TL_ENCODE_FORMAT_MAX_CHANNELS,
                                    NULL);
    } else {
        s1 = tl_spectral_decode_u64(ve.payload, ve.payload_len, ae, NULL, TL_ENCODE_FORMAT_MAX_CHANNELS, NULL);
        s2 = tl_spectral_decode_u64(vg.payload, vg.payload_len, ag, NULL, TL_ENCODE_FORMAT_MAX_CHANNELS, NULL);
    }
    if (s1 != TL_OK || s2 != TL_OK || ve.count != vg.count) {
        snprintf(out, cap, "payload (user octet %zu; %s)", u,
                 s2 != TL_OK ? "the payload received does not decode" : "channel counts differ");
        return;
    }
    for (uint32_t i = 0; i < ve.count; i++) {
        if (ae[i] != ag[i]) {
            if (sgn)
                snprintf(out, cap, "payload, channel %u: expected %lld, got %lld", ve.first + i,
                         (long long)(int64_t)ae[i], (long long)(int64_t)ag[i]);
            else
                snprintf(out, cap, "payload, channel %u: expected %llu, got %llu", ve.first + i,
                         (unsigned long long)ae[i], (unsigned long long)ag[i]);
            return;
        }
    }
    snprintf(out, cap, "payload octet %zu (same values, different encoding)", u);
}

void tl_vectors_describe(const uint8_t *e, size_t el, const uint8_t *g, size_t gl, uint32_t L, char *out, size_t cap)
{
    size_t d = 0;
    while (d < el && d < gl && e[d] == g[d])
        d++;
    if (d == el && d == gl) {
        snprintf(out, cap, "identical");
        return;
    }
    const size_t wire = TL_FRAME_WIRE_LEN(L);
    const size_t frame = d / wire, fo = d % wire;
    char where[512];
    if (d == el || d == gl) {
        snprintf(out, cap, "%zu octets, %zu expected (%zu frames of %zu): identical up to octet %zu", gl, el,
                 el / wire, wire, d);
        return;
    }
    if (fo < TL_FRAME_ASM_OCTETS) {
        snprintf(out, cap, "frame %zu: sync marker octet %zu", frame, fo);
        return;
    }
    const size_t fi = fo - TL_FRAME_ASM_OCTETS;
    if (fi < TL_FRAME_OFF_DATA || fi >= L - TL_FRAME_FECF_OCTETS) {
        const char *field = fi < 2u ? "version, spacecraft id, virtual channel id"
                            : fi == TL_FRAME_OFF_MC_COUNT ? "master channel frame count"
                            : fi == TL_FRAME_OFF_VC_COUNT ? "virtual channel frame count"
                            : fi < TL_FRAME_OFF_DATA      ? "data field status (first header pointer)"
                                                          : "frame error control (CRC-16)";
        snprintf(out, cap, "frame %zu octet %zu: frame header field '%s'", frame, fi, field);
        return;
    }
    /* inside a data field: find the packet in the expected packet stream */
    tl_bytebuf pe = { 0 }, pg = { 0 };
    data_fields(e, el, L, &pe);
    data_fields(g, gl, L, &pg);
    const size_t pos = frame * TL_FRAME_DATA_LEN(L) + (fi - TL_FRAME_OFF_DATA);
    size_t q = 0, k = 0;
    snprintf(where, sizeof where, "fill after the last packet");
    while (!pe.failed && q + TL_PACKET_PRIMARY_OCTETS <= pe.len && (pe.p[q] & 0xE0u) == 0u) {
        const size_t plen = (size_t)tl_get_be16(pe.p + q + TL_PACKET_OFF_LENGTH) + 7u;
        if (pos < q + plen) {
            const size_t o = pos - q;
            tl_packet_header h;
            tl_packet_header_decode(pe.p + q, pe.len - q, &h);
            char field[400];
            if (o < TL_PACKET_PRIMARY_OCTETS)
                snprintf(field, sizeof field, "primary header %s",
                         o < 2u ? "(version, type, APID)" : o < 4u ? "(sequence count)" : "(data length)");
            else if (h.apid == TL_PACKET_APID_IDLE)
                snprintf(field, sizeof field, "idle data octet %zu", o);
            else if (o < TL_PACKET_OFF_USER)
                snprintf(field, sizeof field, "time code (CUC) octet %zu", o - TL_PACKET_OFF_TIME);
            else if (o >= plen - TL_PACKET_PEC_OCTETS)
                snprintf(field, sizeof field, "packet error control (CRC-16)");
            else if (plen > TL_PACKET_OVERHEAD && pe.p[q + TL_PACKET_OFF_USER + 1u] == TL_DL_KIND_SPECTRUM) {
                const size_t ulen = plen - TL_PACKET_OVERHEAD;
                const uint8_t *ug = q + plen <= pg.len ? pg.p + q + TL_PACKET_OFF_USER : NULL;
                size_t ulen_g = 0;
                if (ug != NULL && q + TL_PACKET_PRIMARY_OCTETS <= pg.len) {
                    const size_t glen = (size_t)tl_get_be16(pg.p + q + TL_PACKET_OFF_LENGTH) + 7u;
                    if (q + glen <= pg.len && glen > TL_PACKET_OVERHEAD)
                        ulen_g = glen - TL_PACKET_OVERHEAD;
                }
                describe_science(pe.p + q + TL_PACKET_OFF_USER, ulen, ug != NULL ? ug : pe.p, ulen_g,
                                 o - TL_PACKET_OFF_USER, field, sizeof field);
            } else
                snprintf(field, sizeof field, "housekeeping user octet %zu", o - TL_PACKET_OFF_USER);
            snprintf(where, sizeof where, "packet %zu (APID %u, count %u): %s", k, (unsigned)h.apid,
                     (unsigned)h.count, field);
            break;
        }
        q += plen;
        k++;
    }
    snprintf(out, cap, "frame %zu octet %zu (data field): %s", frame, fi, where);
    free(pe.p);
    free(pg.p);
}

/* NOLINTNEXTLINE(misc-no-recursion): host only; as deep as the folder tree it removes, which it wrote itself */
static int remove_tree(const char *path)
{
    DIR *dp = opendir(path);
    if (dp == NULL)
        return unlink(path);
    struct dirent *de;
    int rc = 0;
    while ((de = readdir(dp)) != NULL) {
        if (strcmp(de->d_name, ".") == 0 || strcmp(de->d_name, "..") == 0)
            continue;
        char sub[4400];
        snprintf(sub, sizeof sub, "%s/%s", path, de->d_name);
        rc |= remove_tree(sub);
    }
    closedir(dp);
    return rmdir(path) | rc;
}

static const char *const vec_files[] = { "scenario.ini", "setup.bin", "taps.bin", "samples.bin", "frames.bin" };

static int is_vector_name(const char *n)
{
    for (size_t i = 0; i < NDEFS; i++)
        if (strcmp(defs[i].name, n) == 0)
            return 1;
    return 0;
}

long tl_vectors_check(const char *dir, FILE *out, char *err, size_t cap)
{
    const char *tmp = getenv("TMPDIR");
    char fresh[1024];
    if (snprintf(fresh, sizeof fresh, "%s/tidelock-vectors-XXXXXX", tmp != NULL && tmp[0] != '\0' ? tmp : "/tmp") >=
        (int)sizeof fresh) {
        snprintf(err, cap, "TMPDIR: the path '%.900s' is too long", tmp);
        return -1;
    }
    if (mkdtemp(fresh) == NULL) {
        snprintf(err, cap, "%s: cannot create a temporary folder: %s", fresh, strerror(errno));
        return -1;
    }
    if (tl_vectors_make(fresh, NULL, err, cap) != 0) {
        remove_tree(fresh);
        return -1;
    }
    long bad = 0;
    for (size_t i = 0; i < NDEFS; i++) {
        uint32_t frame_len = 0;
        for (size_t j = 0; j < sizeof vec_files / sizeof vec_files[0]; j++) {
            char pf[4400], pd[4400];
            snprintf(pf, sizeof pf, "%s/%s/%s", fresh, defs[i].name, vec_files[j]);
            snprintf(pd, sizeof pd, "%s/%s/%s", dir, defs[i].name, vec_files[j]);
            uint8_t *a = NULL, *b = NULL;
            size_t an = 0, bn = 0;
            const int have_f = read_file(pf, &a, &an) == 0, have_d = read_file(pd, &b, &bn) == 0;
            if (j == 1 && have_f && an == TL_LINK_SETUP_OCTETS)
                frame_len = tl_get_be32(a + TL_LINK_SETUP_OFF_FRAME_LEN);
            if (have_f && !have_d) {
                fprintf(out, "%s: missing\n", pd);
                bad++;
            } else if (!have_f && have_d) {
                fprintf(out, "%s: not expected (this vector has no such file)\n", pd);
                bad++;
            } else if (have_f && (an != bn || memcmp(a, b, an) != 0)) {
                char why[1024];
                if (j == 4)
                    tl_vectors_describe(a, an, b, bn, frame_len, why, sizeof why);
                else {
                    size_t k = 0;
                    while (k < an && k < bn && a[k] == b[k])
                        k++;
                    snprintf(why, sizeof why, "%zu octets, %zu expected: first difference at octet %zu", bn, an, k);
                }
                fprintf(out, "%s: differs: %s\n", pd, why);
                bad++;
            }
            free(a);
            free(b);
        }
    }
    /* the manifest, and anything that should not be there */
    char pf[4400], pd[4400];
    snprintf(pf, sizeof pf, "%s/%s", fresh, TL_VECTORS_MANIFEST);
    snprintf(pd, sizeof pd, "%s/%s", dir, TL_VECTORS_MANIFEST);
    uint8_t *a = NULL, *b = NULL;
    size_t an = 0, bn = 0;
    if (read_file(pf, &a, &an) != 0) {
        snprintf(err, cap, "%s: cannot read the regenerated manifest", pf);
        remove_tree(fresh);
        return -1;
    }
    if (read_file(pd, &b, &bn) != 0) {
        fprintf(out, "%s: missing\n", pd);
        bad++;
    } else if (an != bn || memcmp(a, b, an) != 0) {
        size_t k = 0, line = 1;
        while (k < an && k < bn && a[k] == b[k])
            line += a[k++] == '\n';
        fprintf(out, "%s: differs: first at line %zu\n", pd, line);
        bad++;
    }
    free(a);
    free(b);
    DIR *dp = opendir(dir);
    if (dp != NULL) {
        struct dirent *de;
        while ((de = readdir(dp)) != NULL) {
            const char *n = de->d_name;
            if (n[0] == '.' || strcmp(n, TL_VECTORS_MANIFEST) == 0)
                continue;
            char sub[4400];
            snprintf(sub, sizeof sub, "%s/%s", dir, n);
            if (!is_vector_name(n)) {
                fprintf(out, "%s: not expected (no vector of that name)\n", sub);
                bad++;
                continue;
            }
            DIR *vp = opendir(sub);
            struct dirent *ve;
            while (vp != NULL && (ve = readdir(vp)) != NULL) {
                int known = ve->d_name[0] == '.';
                for (size_t j = 0; j < sizeof vec_files / sizeof vec_files[0]; j++)
                    known |= strcmp(ve->d_name, vec_files[j]) == 0;
                if (!known) {
                    fprintf(out, "%s/%s: not expected (not a vector file)\n", sub, ve->d_name);
                    bad++;
                }
            }
            if (vp != NULL)
                closedir(vp);
        }
        closedir(dp);
    }
    remove_tree(fresh);
    return bad;
}
