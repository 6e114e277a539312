/*
 * sigmf.h - SigMF recordings of ADC voltages: write one, stream one back.
 *
 * A recording is NAME.sigmf-meta (JSON) beside NAME.sigmf-data (the samples),
 * as the SigMF core specification v1.2.x defines it (github.com/sigmf/SigMF;
 * ../shared/sources.md "SigMF core specification").
 *
 * WRITING (tl_sigmf_write): datatype "ri16_le", core:version "1.2.0", one
 * channel per antenna input, interleaved: sample 0 of input 0, sample 0 of
 * input 1, sample 1 of input 0, ... Each value is the ADC code left-aligned
 * in 16 bits, exactly the word the firmware receives (tl_chain.h), so the
 * int16 full scale is the ADC full scale. The meta holds
 *   global      core:datatype, core:version, core:sample_rate,
 *               core:num_channels, core:recorder, core:description, core:hw,
 *               core:extensions = [{name "tidelock", version "1.0.0",
 *               optional true}], and the fields of our own namespace:
 *               tidelock:samples      samples per channel in the data file
 *               tidelock:adc_bits     ADC resolution, 8 .. 16
 *               tidelock:adc_full_scale_v  volts at positive full scale
 *               tidelock:seed         the noise generator's seed
 *               tidelock:scenario     the scenario file as resolved (text)
 *               tidelock:model        the voltage model: {"sky": {...},
 *                                     "interference": {...}, "switching":
 *                                     {...}}, the keys of those scenario
 *                                     sections (numbers where they parse)
 *   captures    [{core:sample_start 0}] (+ core:datetime when given)
 *   annotations []
 * The data file is streamed in blocks; both files are first written whole
 * under staging names (through tl_atomic_write), then renamed into place,
 * data first, only when both were written, so a failed write leaves any
 * previous recording of that name as it was and no partial file.
 *
 * READING (tl_sigmf_open, tl_sigmf_read): the meta is validated against the
 * core specification before a sample is read:
 *   - valid JSON (ECMA-404), at most TL_SIGMF_META_MAX bytes, one object
 *     holding exactly the objects global, captures and annotations;
 *   - global: core:datatype (required) follows the grammar
 *       (r|c) ((f32|f64|i32|i16|u32|u16) (_le|_be) | i8 | u8),
 *     core:version (required) is "1.Y.Z"; core:sample_rate a number in
 *     (0, 1e12]; core:num_channels an integer 1 .. 1000; core:extensions
 *     objects of exactly name, version, optional (a required extension
 *     other than ours is refused); core:metadata_only, core:header_bytes
 *     and core:trailing_bytes (non-conforming data) are refused;
 *     core:dataset names the data file (no folder part) instead of
 *     NAME.sigmf-data;
 *   - every field name is "namespace:name" of letters, digits and '_', not
 *     starting with a digit; a core: name the specification does not define
 *     is an error (it is usually a typo);
 *   - captures and annotations: objects with an integer core:sample_start
 *     >= 0, in ascending order; core:sample_count an integer >= 0;
 *     core:datetime of the form YYYY-MM-DDTHH:MM:SS[.frac]Z; the
 *     annotation frequency edges both or neither.
 * core:sha512 is accepted but not checked. Then the data file: its size must
 * be a whole number of frames (channels x bytes per sample) and must hold
 * every sample the meta states (tidelock:samples, which must match exactly;
 * the end of each annotation with a core:sample_count; each capture's
 * core:sample_start). Every error is one line naming the file, the field
 * and the allowed values.
 *
 * Datatypes read, and what a value means (the ADC full scale is the full
 * scale of the datatype):
 *   ri16_le  int16 v: the left-aligned ADC word v (full scale 32768)
 *   ri8      int8 v: v x 256 (full scale 128)
 *   rf32_le  IEEE-754 binary32 x: x x 32768 (full scale 1.0); NaN or an
 *            infinity is an error naming the sample
 *   ci16_le  complex baseband I + jQ at rate fs (full scale |z| = 32768),
 *            read as the real signal at rate 2 fs whose spectrum from 0 to
 *            fs is the recording's band from -fs/2 to +fs/2 (so channel k of
 *            the firmware lies at core:frequency - fs/2 + k x 2 fs / points):
 *              y[2p]   = (-1)^p       I[n]
 *              y[2p+1] = (-1)^(p+1)   Q[n + 1/2]
 *            that is y[m] = Re{ u[m] e^(j pi m / 2) } with u the recording
 *            interpolated by 2 (a half-band filter: even outputs are the
 *            recorded samples exactly, odd outputs interpolate Q halfway by
 *            a Blackman-windowed sinc of 2 x TL_SIGMF_HALFBAND_L taps, DC
 *            gain exactly 1). n runs from L-1 to C-L-1 for C complex samples
 *            (full filter support only, no start-up transient), so C complex
 *            samples give 2 (C - 2L + 1) real ones. A complex tone of
 *            amplitude A becomes a real cosine of amplitude A.
 * Every other datatype that the grammar allows is refused with one line
 * naming the file, core:datatype and the supported list.
 *
 * The values are then brought to the codes of the target ADC (default 16
 * bits; tl_sigmf_set_adc_bits): rounded to the nearest code, ties away from
 * zero, clipped to the ADC's range, and left-aligned in int16 as the
 * firmware expects. A recording at the target resolution passes unchanged.
 * The reader counts samples that had to be rounded, samples clipped, and
 * samples at a rail (the firmware's definition of an ADC clip).
 *
 * Memory: one block of block_bytes (TL_SIGMF_BLOCK_MIN .. _MAX, default
 * 1 MiB) plus a few kB of state per channel, whatever the file's size; the
 * data file is never mapped or read whole.
 */
#ifndef TL_HOST_SIGMF_H
#define TL_HOST_SIGMF_H

#include <stddef.h>
#include <stdint.h>

#define TL_SIGMF_VERSION "1.2.0"        /* core:version written */
#define TL_SIGMF_EXT_VERSION "1.0.0"    /* version of our tidelock: namespace */
#define TL_SIGMF_BLOCK_DEFAULT (1u << 20)
#define TL_SIGMF_BLOCK_MIN 4096u
#define TL_SIGMF_BLOCK_MAX (64u << 20)
#define TL_SIGMF_META_MAX (16u << 20)   /* largest meta file read */
#define TL_SIGMF_MAX_CHANNELS 1000u     /* core:num_channels range (SigMF 1.2 schema) */
#define TL_SIGMF_HALFBAND_L 32u         /* complex interpolator: 2 L taps on the odd phase */
#define TL_SIGMF_SUPPORTED "ri16_le, ci16_le, ri8, rf32_le"

typedef enum tl_sigmf_type {
    TL_SIGMF_RI16_LE = 0,
    TL_SIGMF_CI16_LE = 1,
    TL_SIGMF_RI8 = 2,
    TL_SIGMF_RF32_LE = 3
} tl_sigmf_type;

/* ---- datatype strings ------------------------------------------------------ */

/* Parse a SigMF datatype string by the core grammar. Returns 1 when it is a
 * core datatype (then *is_complex and *component_bytes are set, if not
 * NULL), 0 when it is not. */
int tl_sigmf_datatype_parse(const char *s, int *is_complex, unsigned *component_bytes);

/* ---- writing --------------------------------------------------------------- */

/* Sample source: n samples per input (in1 is NULL for one input). */
typedef void (*tl_sigmf_source)(void *state, int16_t *in0, int16_t *in1, size_t n);

typedef struct tl_sigmf_desc {
    double sample_rate_hz;     /* > 0 */
    unsigned inputs;           /* 1 or 2 */
    unsigned adc_bits;         /* 8 .. 16 */
    double adc_full_scale_v;   /* written as tidelock:adc_full_scale_v when > 0 */
    uint64_t samples;          /* per input, >= 1 */
    uint64_t seed;
    const char *description;   /* core:description; may be NULL */
    const char *hw;            /* core:hw; may be NULL */
    const char *scenario_text; /* tidelock:scenario (and tidelock:model from it); may be NULL */
    const char *datetime;      /* captures[0] core:datetime, RFC 3339 with Z; may be NULL */
} tl_sigmf_desc;

/* Write BASE.sigmf-data (samples pulled from source in blocks) and
 * BASE.sigmf-meta. Returns 0, or -1 with one line in err (cap bytes) naming
 * the file and the reason; on failure neither file is changed. */
int tl_sigmf_write(const char *base, const tl_sigmf_desc *d, tl_sigmf_source source, void *state, char *err,
                   size_t cap);

/* ---- reading --------------------------------------------------------------- */

typedef struct tl_sigmf_info {
    char meta_path[4096];
    char data_path[4096];
    char datatype[16];
    tl_sigmf_type type;
    int is_complex;
    unsigned channels;         /* core:num_channels (default 1) */
    unsigned frame_bytes;      /* bytes of one sample of every channel */
    double sample_rate_hz;     /* core:sample_rate; 0 when absent */
    int has_frequency;
    double frequency_hz;       /* captures[0] core:frequency */
    uint64_t samples;          /* per channel in the data file */
    uint64_t real_samples;     /* per channel as read (complex: 2 (C - 2L + 1), or 0) */
    unsigned adc_bits;         /* tidelock:adc_bits; 0 when absent */
    int has_seed;
    uint64_t seed;             /* tidelock:seed */
    const char *scenario;      /* tidelock:scenario; NULL when absent (owned by the reader) */
} tl_sigmf_info;

typedef struct tl_sigmf_reader tl_sigmf_reader;

/* Validate META (a path ending in .sigmf-meta) and its data file, and open
 * the data for streaming with blocks of block_bytes (0: the default; else
 * TL_SIGMF_BLOCK_MIN .. TL_SIGMF_BLOCK_MAX). Returns the reader, or NULL
 * with one line in err (cap bytes). */
tl_sigmf_reader *tl_sigmf_open(const char *meta, size_t block_bytes, char *err, size_t cap);

const tl_sigmf_info *tl_sigmf_info_of(const tl_sigmf_reader *r);

/* Target ADC resolution of the values read, 8 .. 16 (default 16).
 * Returns 0, or -1 for a value out of range. Call before the first read. */
int tl_sigmf_set_adc_bits(tl_sigmf_reader *r, unsigned bits);

/* Read the next n samples of every channel, as left-aligned ADC codes, into
 * out[0 .. channels-1] (an entry may be NULL: that channel is read and
 * dropped). Returns 0, or -1 with one line in err naming the data file:
 * fewer than n samples left, a read error, or a non-finite float. After an
 * error the reader only returns errors. */
int tl_sigmf_read(tl_sigmf_reader *r, int16_t *const *out, size_t n, char *err, size_t cap);

/* Skip the next n samples of every channel without converting them. For the
 * fixed-size real datatypes (ri16_le, ri8, rf32_le) the samples still in the
 * block are dropped and the rest is passed over with one seek of the data
 * file, so skipping costs no reading; ci16_le (whose interpolator needs
 * every sample) reads and drops them. Skipped samples are not counted by
 * tl_sigmf_rails/_clipped/_rounded, and a non-finite rf32_le value among
 * them is not detected. Returns 0, or -1 with one line in err naming the
 * data file (fewer than n samples left, a seek or read error); after an
 * error the reader only returns errors. */
int tl_sigmf_skip(tl_sigmf_reader *r, uint64_t n, char *err, size_t cap);

/* Counts over the samples read so far, per channel: at a rail of the target
 * ADC (the firmware's clip definition), clipped by the conversion (beyond
 * the ADC's range), rounded (not on the ADC's code grid). */
uint64_t tl_sigmf_rails(const tl_sigmf_reader *r, unsigned channel);
uint64_t tl_sigmf_clipped(const tl_sigmf_reader *r, unsigned channel);
uint64_t tl_sigmf_rounded(const tl_sigmf_reader *r, unsigned channel);

/* Data bytes read from the file so far. */
uint64_t tl_sigmf_bytes_read(const tl_sigmf_reader *r);

void tl_sigmf_close(tl_sigmf_reader *r);

/* The odd-phase coefficients c[0 .. L-1] of the complex interpolator
 * (Q[n + 1/2] = sum_i c[i] (Q[n - i] + Q[n + 1 + i])), for tests. */
void tl_sigmf_halfband(double c[TL_SIGMF_HALFBAND_L]);

#endif
