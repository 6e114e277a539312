/*
 * tl_status.h - the one status enum shared by the firmware and the host.
 *
 * Every tidelock function that can fail returns a tl_status. TL_OK is zero,
 * every error is a distinct positive value, so `if (st != TL_OK)` is the only
 * test a caller needs. Values are part of the link protocol later on: never
 * renumber, only append.
 */
#ifndef TL_STATUS_H
#define TL_STATUS_H

typedef enum tl_status {
    TL_OK = 0,            /* success */
    TL_E_NULL = 1,        /* a required pointer argument was NULL */
    TL_E_POINTS = 2,      /* transform size not a power of two in [TL_MIN_POINTS, TL_MAX_POINTS] */
    TL_E_TAPS = 3,        /* taps per channel outside [1, TL_MAX_TAPS] */
    TL_E_INPUTS = 4,      /* number of inputs outside [1, TL_MAX_INPUTS] */
    TL_E_ADC_BITS = 5,    /* ADC bits outside [TL_MIN_ADC_BITS, 16] */
    TL_E_INTEGRATION = 6, /* spectra per integration outside [1, TL_MAX_INTEGRATION] */
    TL_E_SCALING = 7,     /* FFT scaling mask has bits above the last stage */
    TL_E_ROUNDING = 8,    /* rounding mode is not one of tl_rounding */
    TL_E_DET_SHIFT = 9,   /* detection shift outside [0, TL_MAX_DET_SHIFT] and not TL_DET_SHIFT_AUTO */
    TL_E_TABLE_SIZE = 10, /* coefficient table image length does not match its header */
    TL_E_TABLE_FORMAT = 11, /* coefficient table image: bad magic, version, bits or shift */
    TL_E_TABLE_CRC = 12,  /* coefficient table image: CRC-32C mismatch */
    TL_E_TABLE_RANGE = 13, /* coefficient table image: a coefficient outside 18-bit range */
    TL_E_TABLE_MISMATCH = 14, /* coefficient table taps/points differ from the configuration */
    TL_E_BUSY = 15,       /* a finished integration is waiting: take it before pushing more */
    TL_E_EMPTY = 16,      /* no finished integration to take */
    TL_E_NOT_INIT = 17,   /* context used before a successful init */
    TL_E_SWITCH = 18,     /* switch sequence: steps 0..8, state 0..2, dwell >= 1, discard below every dwell */
    TL_E_PACKET_LEN = 19, /* maximum space packet length outside its allowed range */
    TL_E_APID = 20,       /* APID outside 0..2046 (2047 is reserved for idle packets) */
    TL_E_SPACE = 21,      /* the caller's output buffer is too small for the result */
    TL_E_FRAME_LEN = 22,  /* transfer frame length outside its allowed range */
    TL_E_ENCODING = 23,   /* spectral encoding or its parameters not supported */
    TL_E_NOISE_FRACTION = 24, /* noise-bounded encoding: noise fraction outside its allowed range */
    TL_E_FORMAT = 25,     /* received bytes do not follow the format (length, header or CRC) */
    TL_E_APID_FULL = 26,  /* packet writer: every one of its TL_PACKET_MAX_APIDS counters is in use */
    TL_E_TIME_RANGE = 27, /* time code: sample rate 0, or a time beyond the 32-bit coarse seconds */
    TL_E_FIELD_RANGE = 28, /* a header field (APID, SCID, VCID, count, flag) wider than its bits */
    TL_E_SK = 29,         /* spectral kurtosis block: 0 (off) or 16 .. 65536 spectra, at most the integration */
    TL_E_SCRUB = 30       /* scrub period outside 0 (default) .. 65536 frames */
} tl_status;

/* Short constant name of a status ("TL_E_POINTS"); never NULL. */
const char *tl_status_name(tl_status st);

/* One-line English description of a status, without trailing newline; never NULL. */
const char *tl_status_text(tl_status st);

#endif
