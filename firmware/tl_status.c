/* tl_status.c - names and one-line texts for tl_status values. */
#include "tl_status.h"

const char *tl_status_name(tl_status st)
{
    switch (st) {
    case TL_OK: return "TL_OK";
    case TL_E_NULL: return "TL_E_NULL";
    case TL_E_POINTS: return "TL_E_POINTS";
    case TL_E_TAPS: return "TL_E_TAPS";
    case TL_E_INPUTS: return "TL_E_INPUTS";
    case TL_E_ADC_BITS: return "TL_E_ADC_BITS";
    case TL_E_INTEGRATION: return "TL_E_INTEGRATION";
    case TL_E_SCALING: return "TL_E_SCALING";
    case TL_E_ROUNDING: return "TL_E_ROUNDING";
    case TL_E_DET_SHIFT: return "TL_E_DET_SHIFT";
    case TL_E_TABLE_SIZE: return "TL_E_TABLE_SIZE";
    case TL_E_TABLE_FORMAT: return "TL_E_TABLE_FORMAT";
    case TL_E_TABLE_CRC: return "TL_E_TABLE_CRC";
    case TL_E_TABLE_RANGE: return "TL_E_TABLE_RANGE";
    case TL_E_TABLE_MISMATCH: return "TL_E_TABLE_MISMATCH";
    case TL_E_BUSY: return "TL_E_BUSY";
    case TL_E_EMPTY: return "TL_E_EMPTY";
    case TL_E_NOT_INIT: return "TL_E_NOT_INIT";
    case TL_E_SWITCH: return "TL_E_SWITCH";
    case TL_E_PACKET_LEN: return "TL_E_PACKET_LEN";
    case TL_E_APID: return "TL_E_APID";
    case TL_E_SPACE: return "TL_E_SPACE";
    case TL_E_FRAME_LEN: return "TL_E_FRAME_LEN";
    case TL_E_ENCODING: return "TL_E_ENCODING";
    case TL_E_NOISE_FRACTION: return "TL_E_NOISE_FRACTION";
    case TL_E_FORMAT: return "TL_E_FORMAT";
    case TL_E_APID_FULL: return "TL_E_APID_FULL";
    case TL_E_TIME_RANGE: return "TL_E_TIME_RANGE";
    case TL_E_FIELD_RANGE: return "TL_E_FIELD_RANGE";
    case TL_E_SK: return "TL_E_SK";
    case TL_E_SCRUB: return "TL_E_SCRUB";
    }
    return "TL_E_UNKNOWN";
}

const char *tl_status_text(tl_status st)
{
    switch (st) {
    case TL_OK: return "success";
    case TL_E_NULL: return "a required pointer was NULL";
    case TL_E_POINTS: return "transform points must be a power of two from 256 to the build maximum";
    case TL_E_TAPS: return "taps per channel must be from 1 to the build maximum";
    case TL_E_INPUTS: return "inputs must be 1 or 2";
    case TL_E_ADC_BITS: return "ADC bits must be from 8 to 16";
    case TL_E_INTEGRATION: return "spectra per integration must be from 1 to 16777216";
    case TL_E_SCALING: return "FFT scaling mask has bits above the split stage";
    case TL_E_ROUNDING: return "rounding must be truncate, half-up or half-even";
    case TL_E_DET_SHIFT: return "detection shift must be from 0 to 40, or auto";
    case TL_E_TABLE_SIZE: return "coefficient table length does not match its header";
    case TL_E_TABLE_FORMAT: return "coefficient table has a bad magic, version, bit width or shift";
    case TL_E_TABLE_CRC: return "coefficient table CRC-32C does not match";
    case TL_E_TABLE_RANGE: return "coefficient table holds a value outside the signed 18-bit range";
    case TL_E_TABLE_MISMATCH: return "coefficient table taps or points differ from the configuration";
    case TL_E_BUSY: return "a finished integration is waiting to be taken";
    case TL_E_EMPTY: return "no finished integration is waiting";
    case TL_E_NOT_INIT: return "context used before a successful init";
    case TL_E_SWITCH: return "switch sequence needs 0 to 8 steps, states 0 to 2, dwells of at least 1 spectrum and a discard below every dwell";
    case TL_E_PACKET_LEN: return "maximum space packet length outside its allowed range";
    case TL_E_APID: return "APID outside 0 to 2046 (2047 is reserved for idle packets)";
    case TL_E_SPACE: return "output buffer too small for the result";
    case TL_E_FRAME_LEN: return "transfer frame length outside its allowed range";
    case TL_E_ENCODING: return "spectral encoding or its parameters not supported";
    case TL_E_NOISE_FRACTION: return "noise fraction outside its allowed range";
    case TL_E_FORMAT: return "received bytes do not follow the format (length, header or CRC)";
    case TL_E_APID_FULL: return "packet writer: no free sequence counter for another APID";
    case TL_E_TIME_RANGE: return "time code: sample rate 0, or a time beyond 2^32 - 1 coarse seconds";
    case TL_E_FIELD_RANGE: return "a header field is wider than its bits (APID, SCID, VCID, count or flag)";
    case TL_E_SK: return "spectral kurtosis block must be 0 (off) or 16 to 65536 spectra, at most the integration";
    case TL_E_SCRUB: return "scrub period must be 0 (default) to 65536 frames";
    }
    return "unknown status";
}
