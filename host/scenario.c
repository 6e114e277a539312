/* scenario.c - scenario files: defaults, parsing with inih, checks, writing.
 * One table (keys[]) drives all four, so the example file, the parser and
 * the error messages cannot disagree. */
#include "scenario.h"

#include <ctype.h>
#include <errno.h>
#include <ini.h>
#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

#include "spectral_kurtosis.h"
#include "taps_design.h"
#include "tl_downlink.h"
#include "tl_frame.h"

typedef enum {
    K_TEXT,     /* free text, char[size] */
    K_NAME,     /* [A-Za-z0-9._-]{1,63}, char[size] */
    K_U32,      /* unsigned integer in [min, max] */
    K_U64,      /* unsigned integer in [min, max], stored in uint64_t */
    K_REAL,     /* finite number in [min, max], stored x scale as double */
    K_CHANNELS, /* power of two in [min, max], stored as points = 2 x value */
    K_CHOICE,   /* one of choices[], stored as its index (unsigned) */
    K_AUTO_U32, /* "auto" (stored as auto_value) or an integer in [min, max] */
    K_MASK,     /* "auto" or an integer (0x... allowed) in [min, max] */
    K_BOOL,     /* true or false, stored as unsigned 0/1 */
    K_LIST,     /* "none" or 1 to TL_SKY_MAX_CARRIERS numbers in [min, max] separated by commas,
                   stored x scale in a tl_sky_list */
    K_SEQUENCE  /* "off" or up to TL_MAX_SWITCH_STEPS "state dwell" pairs separated by commas,
                   stored in the tl_config at the offset (switch_steps, switch_state, switch_dwell) */
} key_kind;

typedef struct key_def {
    const char *section, *key;
    key_kind kind;
    size_t offset, size;
    double min, max, scale;
    const char *const *choices;
    uint32_t auto_value;
    const char *unit, *help;
} key_def;

static const char *const window_names[] = { "rectangular", "hann", "hamming", "blackman", "blackman-harris4", NULL };
static const char *const rounding_names[] = { "truncate", "half-up", "half-even", NULL };
static const char *const switch_state_names[] = { "antenna", "load", "noise", NULL };
static const char *const shape_names[] = { "sky", "white", NULL };
static const char *const encoding_names[] = { "lossless", "bounded", NULL };
static const char *const transpose_names[] = { "byte-shuffle", "bit-planes", NULL };

#define OFF(m) offsetof(tl_scenario, m)
#define SZ(m) sizeof(((tl_scenario *)0)->m)

static const key_def keys[] = {
    { "scenario", "name", K_NAME, OFF(name), SZ(name), 1, 63, 1, NULL, 0, "",
      "Short name used in reports: letters, digits, '.', '_' or '-'." },
    { "scenario", "description", K_TEXT, OFF(description), SZ(description), 0, TL_SCENARIO_TEXT_MAX - 1, 1, NULL, 0,
      "", "One line describing the instrument and the observation." },
    { "instrument", "sample_rate_mhz", K_REAL, OFF(sky.sample_rate_hz), 0, 1, 1000, 1e6, NULL, 0, "MHz",
      "ADC sample rate; channel k is centred on k x rate / (2 x channels)." },
    { "instrument", "adc_bits", K_U32, OFF(cfg.adc_bits), 0, 8, 16, 1, NULL, 0, "bits",
      "ADC resolution; codes arrive left-aligned in 16-bit words." },
    { "instrument", "adc_full_scale_v", K_REAL, OFF(adc_full_scale_v), 0, 0.001, 100, 1, NULL, 0, "V",
      "Voltage at the ADC's positive full scale (converts firmware counts to volts^2)." },
    { "instrument", "dc_offset_lsb", K_REAL, OFF(sky.dc_offset_lsb), 0, -1000, 1000, 1, NULL, 0, "LSB",
      "DC offset added to every sample before the ADC rounds it, in codes." },
    { "instrument", "inputs", K_U32, OFF(cfg.inputs), 0, 1, 2, 1, NULL, 0, "",
      "Antenna inputs; with 2 the firmware also forms the cross-power." },
    /* NOLINTNEXTLINE(bugprone-integer-division): TL_MAX_CHANNELS = TL_MAX_POINTS / 2 is exact */
    { "instrument", "channels", K_CHANNELS, OFF(cfg.points), 0, 128, TL_MAX_CHANNELS, 1, NULL, 0, "",
      "Frequency channels (a power of two); the real FFT has twice as many points." },
    { "instrument", "taps", K_U32, OFF(cfg.taps), 0, 1, TL_MAX_TAPS, 1, NULL, 0, "",
      "Polyphase filterbank taps per channel; 1 is a plain windowed FFT." },
    { "instrument", "window", K_CHOICE, OFF(window), 0, 0, 0, 1, window_names, 0, "",
      "Window weighting the prototype filter." },
    { "instrument", "fft_scaling", K_MASK, OFF(cfg.fft_scale_mask), 0, 0, 65535, 1, NULL, TL_FFT_SCALE_AUTO, "",
      "FFT scaling: bit b halves binary stage b, bit log2(channels) the split; auto halves every stage." },
    { "instrument", "rounding", K_CHOICE, OFF(cfg.rounding), 0, 0, 0, 1, rounding_names, 0, "",
      "Rounding at every rounding point; truncate biases the spectra." },
    { "instrument", "detection_shift", K_AUTO_U32, OFF(cfg.det_shift), 0, 0, TL_MAX_DET_SHIFT, 1, NULL,
      TL_DET_SHIFT_AUTO, "bits", "Right shift after |X|^2; auto = ceil(log2(spectra)), which cannot overflow." },
    { "integration", "spectra", K_U32, OFF(spectra), 0, 1, TL_MAX_INTEGRATION, 1, NULL, 0, "spectra",
      "Spectra integrated into one product (each lasts 2 x channels / sample rate)." },
    { "sky", "seed", K_U64, OFF(sky.seed), 0, 0, 4294967295.0, 1, NULL, 0, "",
      "Seed of the noise generator (the same seed gives the same voltages)." },
    { "sky", "shape", K_CHOICE, OFF(sky.white), 0, 0, 0, 1, shape_names, 0, "",
      "sky: the model below (sky, receiver, bandpass); white: flat spectra, no turnover, trough or bandpass." },
    { "sky", "rms_fraction", K_REAL, OFF(sky.rms_fs), 0, 0.0001, 1, 1, NULL, 0, "of full scale",
      "RMS of the antenna state's noise at the ADC (no interferers) over full scale; one gain serves every state." },
    { "sky", "drive_db", K_REAL, OFF(drive_db), 0, -40, 12, 1, NULL, 0, "dB",
      "Drive relative to rms_fraction (the fidelity tests use -20, 0 and +6)." },
    { "sky", "sky_t0_k", K_REAL, OFF(sky.sky_t0_k), 0, 0, 1e8, 1, NULL, 0, "K",
      "Sky brightness temperature at sky_f0_mhz." },
    { "sky", "sky_f0_mhz", K_REAL, OFF(sky.sky_f0_hz), 0, 0.1, 10000, 1e6, NULL, 0, "MHz",
      "Reference frequency of the sky power law." },
    { "sky", "sky_index", K_REAL, OFF(sky.sky_index), 0, -1, 5, 1, NULL, 0, "",
      "Spectral index: T = sky_t0_k x (f / sky_f0_mhz)^-sky_index." },
    { "sky", "turnover_mhz", K_REAL, OFF(sky.turnover_hz), 0, 0, 1000, 1e6, NULL, 0, "MHz",
      "Free-free turnover: T x (1 - exp(-tau)) / tau with tau = (f / turnover_mhz)^-2.1; 0 = none." },
    { "sky", "trough_depth_k", K_REAL, OFF(sky.trough_depth_k), 0, 0, 1e6, 1, NULL, 0, "K",
      "Depth of the 21-cm absorption trough subtracted from the sky (antenna state only); 0 = none." },
    { "sky", "trough_centre_mhz", K_REAL, OFF(sky.trough_centre_hz), 0, 0.001, 1000, 1e6, NULL, 0, "MHz",
      "Centre frequency of the trough." },
    { "sky", "trough_width_mhz", K_REAL, OFF(sky.trough_width_hz), 0, 0.001, 1000, 1e6, NULL, 0, "MHz",
      "Full width of the trough at half depth." },
    { "sky", "trough_flatness", K_REAL, OFF(sky.trough_flatness), 0, 1, 10, 1, NULL, 0, "",
      "Trough shape: 1 Gaussian; above 1 a flatter bottom and steeper sides (super-Gaussian exponent)." },
    { "sky", "receiver_k", K_REAL, OFF(sky.receiver_k), 0, 0, 1e6, 1, NULL, 0, "K",
      "Receiver noise temperature." },
    { "sky", "highpass_mhz", K_REAL, OFF(sky.highpass_hz), 0, 0.001, 1000, 1e6, NULL, 0, "MHz",
      "Corner of the front end's Butterworth high-pass." },
    { "sky", "highpass_order", K_U32, OFF(sky.highpass_order), 0, 1, 16, 1, NULL, 0, "", "Order of the high-pass." },
    { "sky", "lowpass_mhz", K_REAL, OFF(sky.lowpass_hz), 0, 0.001, 1000, 1e6, NULL, 0, "MHz",
      "Corner of the anti-alias Butterworth low-pass." },
    { "sky", "lowpass_order", K_U32, OFF(sky.lowpass_order), 0, 1, 16, 1, NULL, 0, "", "Order of the low-pass." },
    { "sky", "resonance_mhz", K_REAL, OFF(sky.resonance_hz), 0, 0, 1000, 1e6, NULL, 0, "MHz",
      "Antenna resonance in the front-end gain (power response of a second-order resonator); 0 = none." },
    { "sky", "resonance_q", K_REAL, OFF(sky.resonance_q), 0, 0.1, 100, 1, NULL, 0, "",
      "Quality factor of the resonance (centre frequency / 3-dB width)." },
    { "sky", "coherence", K_REAL, OFF(sky.coherence), 0, 0, 1, 1, NULL, 0, "",
      "Correlation of the sky between the two inputs (makes the cross-power non-zero); receivers are independent." },
    { "interference", "carrier_mhz", K_LIST, OFF(sky.carrier_hz), 0, 0.001, 1000, 1e6, NULL, 0, "MHz",
      "Steady carriers added to the antenna state's voltage at the ADC: none, or their frequencies." },
    { "interference", "carrier_dbfs", K_LIST, OFF(sky.carrier_dbfs), 0, -150, 0, 1, NULL, 0, "dBFS",
      "Power of each carrier relative to a full-scale sine, one value per carrier." },
    { "interference", "burst_mhz", K_REAL, OFF(sky.burst_hz), 0, 0, 1000, 1e6, NULL, 0, "MHz",
      "Frequency of an intermittent carrier (burst) in the antenna state; 0 = none." },
    { "interference", "burst_dbfs", K_REAL, OFF(sky.burst_dbfs), 0, -150, 0, 1, NULL, 0, "dBFS",
      "Power of the burst while it is on, relative to a full-scale sine." },
    { "interference", "burst_duty", K_REAL, OFF(sky.burst_duty), 0, 0, 1, 1, NULL, 0, "",
      "Fraction of each period the burst is on." },
    { "interference", "burst_period_us", K_REAL, OFF(sky.burst_period_us), 0, 0.01, 1e7, 1, NULL, 0, "us",
      "Burst period: on for burst_duty of it, then off; the first period starts at a seeded offset." },
    { "fidelity", "band_low_mhz", K_REAL, OFF(band_lo_hz), 0, 0, 1000, 1e6, NULL, 0, "MHz",
      "Lower edge of the science band where fidelity is measured." },
    { "fidelity", "band_high_mhz", K_REAL, OFF(band_hi_hz), 0, 0, 1000, 1e6, NULL, 0, "MHz",
      "Upper edge of the science band (at most half the sample rate)." },
    { "fidelity", "blocks", K_U32, OFF(blocks), 0, 8, 1024, 1, NULL, 0, "",
      "Blocks the spectra are split into to estimate standard errors (must divide spectra)." },
    { "fidelity", "extrapolate_to", K_U32, OFF(flight_spectra), 0, 0, TL_MAX_INTEGRATION, 1, NULL, 0, "spectra",
      "Integration length to extrapolate the fidelity margin to; 0 for none." },
    { "switching", "sequence", K_SEQUENCE, OFF(cfg), 0, 1, TL_MAX_INTEGRATION, 1, NULL, 0, "",
      "Calibration switch sequence, repeated: 'off', or steps 'state frames' (antenna, load, noise)." },
    { "switching", "discard", K_U32, OFF(cfg.switch_discard), 0, 0, TL_MAX_INTEGRATION - 1, 1, NULL, 0, "spectra",
      "Spectra dropped after each change of state (at least taps - 1 keeps states apart)." },
    { "switching", "load_k", K_REAL, OFF(sky.load_k), 0, 1, 10000, 1, NULL, 0, "K",
      "Physical temperature of the reference load." },
    { "switching", "noise_excess_k", K_REAL, OFF(sky.noise_excess_k), 0, 1, 1e7, 1, NULL, 0, "K",
      "Excess noise temperature the noise source adds to the load." },
    { "fit", "foreground_order", K_U32, OFF(fit_order), 0, 1, 8, 1, NULL, 0, "",
      "Order of the log-polynomial foreground fitted under a trough." },
    { "flagging", "sk_block", K_U32, OFF(cfg.sk_spectra), 0, 0, TL_SK_MAX_SPECTRA, 1, NULL, 0, "values",
      "Spectral kurtosis: power values M per block of on-board sums (0 = off, else 16 or more)." },
    { "flagging", "sk_accumulate", K_U32, OFF(cfg.sk_accumulate), 0, 1, TL_SK_MAX_ACCUMULATE, 1, NULL, 0, "spectra",
      "Antenna spectra N summed into each value: a block spans M x N spectra (fewer blocks, slower interference only)." },
    { "flagging", "false_alarm", K_REAL, OFF(sk_false_alarm), 0, 1e-6, 0.2, 1, NULL, 0, "",
      "Probability that Gaussian noise is flagged in one channel and block (both tails together)." },
    { "downlink", "encoding", K_CHOICE, OFF(dl_encoding), 0, 0, 0, 1, encoding_names, 0, "",
      "Spectral encoding: lossless, or bounded (each value quantized to noise_fraction of its radiometer noise)." },
    { "downlink", "noise_fraction", K_REAL, OFF(dl_fraction), 0, 0.015625, 1, 1, NULL, 0, "",
      "Bounded encoding: step at most this fraction of sigma = P / sqrt(M); adds step^2/12 of variance." },
    { "downlink", "step_block", K_U32, OFF(dl_block), 0, 1, 255, 1, NULL, 0, "channels",
      "Bounded encoding: channels sharing one quantization step." },
    { "downlink", "transpose", K_CHOICE, OFF(dl_transpose), 0, 0, 0, 1, transpose_names, 0, "",
      "Regrouping of the zigzag words before LZ4." },
    { "downlink", "max_packet", K_U32, OFF(dl_max_packet), 0, TL_DL_MIN_PACKET, TL_PACKET_MAX_LEN, 1, NULL, 0,
      "octets", "Longest space packet, headers and CRC included." },
    { "downlink", "frame_length", K_U32, OFF(dl_frame_len), 0, TL_FRAME_MIN_LEN, TL_FRAME_MAX_LEN, 1, NULL, 0,
      "octets", "Transfer frame length without the 4-octet sync marker." },
    { "downlink", "apid_science", K_U32, OFF(dl_apid_science), 0, 0, TL_PACKET_APID_MAX, 1, NULL, 0, "",
      "APID of the spectra packets." },
    { "downlink", "apid_housekeeping", K_U32, OFF(dl_apid_hk), 0, 0, TL_PACKET_APID_MAX, 1, NULL, 0, "",
      "APID of the housekeeping packets." },
    { "downlink", "spacecraft_id", K_U32, OFF(dl_scid), 0, 0, 1023, 1, NULL, 0, "", "Spacecraft id in the frame header." },
    { "downlink", "virtual_channel", K_U32, OFF(dl_vcid), 0, 0, 7, 1, NULL, 0, "", "Virtual channel id of the frames." },
    { "downlink", "apid_kurtosis", K_U32, OFF(dl_apid_sk), 0, 0, TL_PACKET_APID_MAX, 1, NULL, 0, "",
      "APID of the spectral kurtosis packets." },
    { "downlink", "mode", K_U32, OFF(dl_mode), 0, 0, 255, 1, NULL, 0, "", "Instrument mode copied into every packet." },
    { "budget", "link_rate_kbps", K_REAL, OFF(bud_rate_bps), 0, 0.1, 1e5, 1e3, NULL, 0, "kbit/s",
      "Relay link rate available to the instrument during a pass." },
    { "budget", "contact_interval_h", K_REAL, OFF(bud_contact_h), 0, 0.1, 720, 1, NULL, 0, "h",
      "Time between relay passes: the storage must hold this much data." },
    { "budget", "pass_h", K_REAL, OFF(bud_pass_h), 0, 0.01, 24, 1, NULL, 0, "h", "Link time per pass." },
    { "budget", "allocation_mb_per_day", K_REAL, OFF(bud_alloc_bytes_day), 0, 0.001, 1e6, 1e6, NULL, 0, "MB",
      "Data volume allocated to the instrument per Earth day (1 MB = 10^6 octets)." },
    { "budget", "storage_mb", K_REAL, OFF(bud_storage_bytes), 0, 0.001, 1e6, 1e6, NULL, 0, "MB",
      "Onboard storage available to the instrument." },
    { "budget", "night_fraction", K_REAL, OFF(bud_night_fraction), 0, 0, 1, 1, NULL, 0, "",
      "Fraction of the lunar night spent observing." },
    { "budget", "day_fraction", K_REAL, OFF(bud_day_fraction), 0, 0, 1, 1, NULL, 0, "",
      "Fraction of the lunar day spent observing." },
    { "processor", "model", K_BOOL, OFF(proc_model), 0, 0, 1, 1, NULL, 0, "",
      "Drive the chain through the processor-speed model: blocks that arrive while it is busy are dropped." },
    { "processor", "clock_mhz", K_REAL, OFF(proc_clock_hz), 0, 1, 1e7, 1e6, NULL, 0, "MHz",
      "Processor clock (or the equivalent instruction rate of several cores at CPI 1)." },
    { "processor", "cycles_per_instruction", K_REAL, OFF(proc_cpi), 0, 0.1, 100, 1, NULL, 0, "",
      "Average cycles per instruction of the target (1 = one instruction per cycle)." },
    { "processor", "capture_block", K_U32, OFF(proc_block), 0, 256, 1048576, 1, NULL, 0, "samples",
      "Samples per input in one ADC capture block (a multiple of 2 x channels)." },
    { "processor", "buffers", K_U32, OFF(proc_buffers), 0, 1, 64, 1, NULL, 0, "",
      "Capture buffers: a block that arrives when all are taken is dropped." },
    { "processor", "filterbank_ips", K_REAL, OFF(proc_ips[0]), 0, 0, 1e6, 1, NULL, 0, "instructions/sample",
      "Filterbank instructions per sample instant, all inputs (docs/performance.md, Cortex-M7 figures)." },
    { "processor", "fft_ips", K_REAL, OFF(proc_ips[1]), 0, 0, 1e6, 1, NULL, 0, "instructions/sample",
      "FFT instructions per sample instant, all inputs." },
    { "processor", "detection_ips", K_REAL, OFF(proc_ips[2]), 0, 0, 1e6, 1, NULL, 0, "instructions/sample",
      "Detection (power and cross-power) instructions per sample instant." },
    { "processor", "integration_ips", K_REAL, OFF(proc_ips[3]), 0, 0, 1e6, 1, NULL, 0, "instructions/sample",
      "Integration instructions per sample instant." },
    { "processor", "encoding_ips", K_REAL, OFF(proc_ips[4]), 0, 0, 1e6, 1, NULL, 0, "instructions/sample",
      "Payload encoding instructions per sample instant (one product's encoding over its samples)." },
    { "processor", "packets_ips", K_REAL, OFF(proc_ips[5]), 0, 0, 1e6, 1, NULL, 0, "instructions/sample",
      "Packet writing instructions per sample instant (headers, CRC, time; over the product's samples)." },
    { "sensitivity", "hours", K_REAL, OFF(sens_hours), 0, 0.001, 1e7, 1, NULL, 0, "h",
      "Co-added observing time the sensitivity budget and the fidelity margin are stated for." },
    { "sensitivity", "duty_cycle", K_REAL, OFF(sens_duty), 0, 0.001, 1, 1, NULL, 0, "",
      "Fraction of the observing time the spectrometer observes; the budget multiplies it by the processor's duty cycle." },
    { "output", "folder", K_TEXT, OFF(folder), SZ(folder), 1, TL_SCENARIO_PATH_MAX - 1, 1, NULL, 0, "",
      "Folder for the outputs (created if missing; -o overrides)." },
    { "output", "csv", K_BOOL, OFF(write_csv), 0, 0, 1, 1, NULL, 0, "", "Write the spectra as CSV." },
    { "output", "npy", K_BOOL, OFF(write_npy), 0, 0, 1, 1, NULL, 0, "", "Write the spectra as NumPy .npy." },
};
#define NKEYS (sizeof keys / sizeof keys[0])

static const char *const sections[] = { "scenario", "instrument", "integration", "sky",      "interference",
                                        "fidelity", "switching",   "fit",         "flagging", "downlink",
                                        "budget",   "processor", "sensitivity", "output" };
#define NSECTIONS (sizeof sections / sizeof sections[0])

/* Fields that other keys determine. */
static void sync_derived(tl_scenario *s)
{
    s->cfg.integration = s->spectra;
    s->sky.adc_bits = s->cfg.adc_bits;
    s->sky.inputs = s->cfg.inputs;
}

void tl_scenario_nominal(tl_scenario *s)
{
    memset(s, 0, sizeof *s);
    snprintf(s->name, sizeof s->name, "hushfield-nominal");
    snprintf(s->description, sizeof s->description,
             "Hushfield lander (invented), HLS-1 low-band spectrometer: two crossed dipoles, 14-bit ADCs");
    tl_config_default(&s->cfg);
    s->cfg.integration = 4096u;
    s->window = TL_WINDOW_HANN; /* as the built-in table */
    s->adc_full_scale_v = 1.0;
    tl_sky_default(&s->sky);
    s->drive_db = 0.0;
    s->spectra = 4096u;
    s->blocks = 64u;
    s->flight_spectra = 1u << 24;
    s->band_lo_hz = 10e6;
    s->band_hi_hz = 40e6;
    snprintf(s->folder, sizeof s->folder, "out");
    s->write_csv = 1;
    s->write_npy = 1;
    s->fit_order = 5;
    s->dl_encoding = 0;
    s->dl_fraction = 0.125;
    s->dl_block = 32;
    s->dl_transpose = 1;
    s->dl_max_packet = TL_PACKET_MAX_LEN;
    s->dl_frame_len = 1024;
    s->dl_apid_science = 0x101;
    s->dl_apid_hk = 0x102;
    s->dl_apid_sk = 0x103;
    s->sk_false_alarm = 0.0027;
    s->dl_scid = 421;
    s->dl_vcid = 1;
    s->dl_mode = 0;
    s->bud_rate_bps = 64e3;
    s->bud_contact_h = 24.0;
    s->bud_pass_h = 1.0;
    s->bud_alloc_bytes_day = 20e6;
    s->bud_storage_bytes = 256e6;
    s->bud_night_fraction = 1.0;
    s->bud_day_fraction = 0.0;
    /* The default processor is the flight board of the invented lander: one
     * Cortex-M7 class core at 600 MHz. CPI 1 is a planning figure, not a
     * measurement (from memory: the M7 issues up to two instructions per
     * cycle, and these stages are dominated by 64-bit multiply-accumulates
     * and loads). At 102.4 Msample/s it sustains well under 1 % of the
     * samples (docs/acquisition.md): `tidelock budget` reports the load,
     * and the sensitivity budget takes the predicted duty cycle. The
     * experienced pass (model = true) is off here, because at that load one
     * integration would need about a hundred times the samples the run
     * simulates; docs/scenario-slow-processor.ini runs it. */
    s->proc_model = 0;
    s->proc_clock_hz = 600e6;
    s->proc_cpi = 1.0;
    s->proc_block = 65536u;
    s->proc_buffers = 2u;
    /* PROC_IPS_BEGIN: measured on the Cortex-M7 build (make processing-budget ->
     * docs/m7-stage-cost.txt: the per-sample figures / 1000; encoding and
     * packets: instructions per product / (8192 spectra x 8192 points)) */
    s->proc_ips[0] = 131.763;
    s->proc_ips[1] = 522.925;
    s->proc_ips[2] = 68.014;
    s->proc_ips[3] = 33.016;
    s->proc_ips[4] = 0.332;
    s->proc_ips[5] = 1.846;
    /* PROC_IPS_END */
    s->sens_hours = 1000.0;
    s->sens_duty = 1.0;
    sync_derived(s);
}

void tl_scenario_default(tl_scenario *s)
{
    tl_scenario_nominal(s);
    snprintf(s->name, sizeof s->name, "hushfield-dark-ages");
    snprintf(s->description, sizeof s->description,
             "Hushfield lander (invented), HLS-1: dark-ages band, sky with turnover, a 40 mK trough, "
             "switched-load calibration");
    s->spectra = 8192u;
    s->sky.turnover_hz = 3e6;
    s->sky.trough_depth_k = 0.04;
    s->sky.trough_centre_hz = 17e6;
    s->sky.trough_width_hz = 8e6;
    s->sky.noise_excess_k = 100000.0;
    s->band_lo_hz = 5e6;
    s->band_hi_hz = 30e6;
    /* antenna 64, load 32, noise 32 spectra, 3 discarded after each change */
    s->cfg.switch_steps = 3u;
    s->cfg.switch_state[0] = TL_STATE_ANTENNA;
    s->cfg.switch_dwell[0] = 64u;
    s->cfg.switch_state[1] = TL_STATE_LOAD;
    s->cfg.switch_dwell[1] = 32u;
    s->cfg.switch_state[2] = TL_STATE_NOISE;
    s->cfg.switch_dwell[2] = 32u;
    s->cfg.switch_discard = 3u;
    sync_derived(s);
}

tl_sky *tl_scenario_sky(const tl_scenario *s)
{
    tl_sky_params sp = s->sky;
    sp.rms_fs *= pow(10.0, s->drive_db / 20.0);
    sp.adc_bits = s->cfg.adc_bits;
    sp.inputs = s->cfg.inputs;
    return tl_sky_open(&sp);
}

int tl_scenario_taps_image(const tl_scenario *s, int always, uint8_t **img, size_t *img_len)
{
    *img = NULL;
    *img_len = 0;
    if (!always && s->cfg.points == tl_taps_default_points && s->cfg.taps == tl_taps_default_taps &&
        s->window == tl_taps_default_window)
        return 0;
    tl_taps *t = malloc(sizeof *t);
    *img = malloc(TL_TAPS_IMAGE_BYTES(s->cfg.taps, s->cfg.points));
    if (t == NULL || *img == NULL || tl_taps_design(s->window, s->cfg.taps, s->cfg.points, t, NULL) != 0 ||
        tl_taps_write_image(t, *img, TL_TAPS_IMAGE_BYTES(s->cfg.taps, s->cfg.points), img_len) != TL_OK) {
        free(t);
        free(*img);
        *img = NULL;
        return -1;
    }
    free(t);
    return 0;
}

double tl_scenario_channel_hz(const tl_scenario *s)
{
    return s->sky.sample_rate_hz / s->cfg.points;
}

void tl_scenario_band(const tl_scenario *s, uint32_t *lo, uint32_t *hi)
{
    const double df = tl_scenario_channel_hz(s);
    *lo = (uint32_t)ceil(s->band_lo_hz / df - 1e-9);
    *hi = (uint32_t)floor(s->band_hi_hz / df + 1e-9);
    if (*hi > s->cfg.points / 2u)
        *hi = s->cfg.points / 2u;
}

/* ---- values: formatting ------------------------------------------------ */

static void *field(const tl_scenario *s, const key_def *k)
{
    return (char *)s + k->offset;
}

static void format_value(const tl_scenario *s, const key_def *k, char *out, size_t cap)
{
    const void *p = field(s, k);
    switch (k->kind) {
    case K_TEXT:
    case K_NAME:
        snprintf(out, cap, "%s", (const char *)p);
        break;
    case K_U32:
        snprintf(out, cap, "%u", *(const uint32_t *)p);
        break;
    case K_U64:
        snprintf(out, cap, "%llu", (unsigned long long)*(const uint64_t *)p);
        break;
    case K_REAL: {
        /* the shortest text that reads back as the same double */
        const double v = *(const double *)p / k->scale;
        for (int prec = 10; prec <= 17; prec++) {
            snprintf(out, cap, "%.*g", prec, v);
            if (strtod(out, NULL) == v)
                break;
        }
        break;
    }
    case K_CHANNELS:
        snprintf(out, cap, "%u", *(const uint32_t *)p / 2u);
        break;
    case K_CHOICE: {
        const unsigned v = *(const unsigned *)p;
        unsigned n = 0;
        while (k->choices[n] != NULL)
            n++;
        snprintf(out, cap, "%s", v < n ? k->choices[v] : "?");
        break;
    }
    case K_AUTO_U32:
    case K_MASK: {
        const uint32_t v = *(const uint32_t *)p;
        if (v == k->auto_value)
            snprintf(out, cap, "auto");
        else
            snprintf(out, cap, k->kind == K_MASK ? "0x%X" : "%u", v);
        break;
    }
    case K_BOOL:
        snprintf(out, cap, "%s", *(const unsigned *)p ? "true" : "false");
        break;
    case K_SEQUENCE: {
        const tl_config *cf = p;
        size_t used = (size_t)snprintf(out, cap, "off");
        if (cf->switch_steps > 0u)
            used = 0;
        for (uint32_t i = 0; i < cf->switch_steps && i < TL_MAX_SWITCH_STEPS && used < cap; i++)
            used += (size_t)snprintf(out + used, cap - used, "%s%s %u", i ? ", " : "",
                                     cf->switch_state[i] < 3u ? switch_state_names[cf->switch_state[i]] : "?",
                                     cf->switch_dwell[i]);
        break;
    }
    case K_LIST: {
        const tl_sky_list *l = p;
        size_t used = 0;
        snprintf(out, cap, "none");
        for (unsigned i = 0; i < l->n && i < TL_SKY_MAX_CARRIERS && used < cap; i++) {
            char one[32]; /* the shortest text that reads back as the same double, as K_REAL */
            const double v = l->v[i] / k->scale;
            for (int prec = 10; prec <= 17; prec++) {
                snprintf(one, sizeof one, "%.*g", prec, v);
                if (strtod(one, NULL) == v)
                    break;
            }
            used += (size_t)snprintf(out + used, cap - used, "%s%s", i ? ", " : "", one);
        }
        break;
    }
    }
}

static void format_range(const key_def *k, char *out, size_t cap)
{
    switch (k->kind) {
    case K_TEXT:
        snprintf(out, cap, "text of %.0f to %.0f characters", k->min, k->max);
        break;
    case K_NAME:
        snprintf(out, cap, "1 to 63 of letters, digits, '.', '_', '-'");
        break;
    case K_CHANNELS:
        snprintf(out, cap, "a power of two from %.0f to %.0f", k->min, k->max);
        break;
    case K_CHOICE: {
        size_t used = (size_t)snprintf(out, cap, "one of ");
        for (unsigned i = 0; k->choices[i] != NULL && used < cap; i++)
            used += (size_t)snprintf(out + used, cap - used, "%s%s", i ? ", " : "", k->choices[i]);
        break;
    }
    case K_AUTO_U32:
        snprintf(out, cap, "auto, or an integer from %.0f to %.0f", k->min, k->max);
        break;
    case K_MASK:
        snprintf(out, cap, "auto, or a mask from 0 to 2^(log2(channels)+1) - 1 (decimal or 0x hex)");
        break;
    case K_BOOL:
        snprintf(out, cap, "true or false");
        break;
    case K_SEQUENCE:
        snprintf(out, cap, "off, or 1 to %u steps 'antenna|load|noise FRAMES' (1 to %.0f) separated by commas",
                 (unsigned)TL_MAX_SWITCH_STEPS, k->max);
        break;
    case K_U32:
    case K_U64:
        snprintf(out, cap, "an integer from %.0f to %.0f", k->min, k->max);
        break;
    case K_REAL:
        snprintf(out, cap, "a number from %g to %g", k->min, k->max);
        break;
    case K_LIST:
        snprintf(out, cap, "none, or 1 to %u comma-separated numbers from %g to %g", TL_SKY_MAX_CARRIERS, k->min,
                 k->max);
        break;
    }
}

/* ---- values: parsing ----------------------------------------------------- */

static int parse_uint(const char *v, int base, unsigned long long *out)
{
    if (*v == '\0' || *v == '-' || *v == '+' || isspace((unsigned char)*v))
        return -1;
    char *end = NULL;
    errno = 0;
    const unsigned long long x = strtoull(v, &end, base);
    if (errno != 0 || end == v || *end != '\0')
        return -1;
    *out = x;
    return 0;
}

/* Set key k from text v. Returns 0, or -1 with the reason in why. */
/* One switch step "NAME FRAMES" at q: a state name (lower-case letters,
 * up to 15) and a decimal count that fits an unsigned long long; *used
 * receives the octets read. Returns 1, or 0 when q does not start so. */
static int switch_step(const char *q, char name[16], unsigned long long *frames, int *used)
{
    int n = 0;
    if (sscanf(q, " %15[a-z]%n", name, &n) != 1)
        return 0;
    const char *p = q + n;
    p += strspn(p, " \t");
    if (*p < '0' || *p > '9')
        return 0;
    char *end = NULL;
    errno = 0;
    *frames = strtoull(p, &end, 10);
    if (errno != 0)
        return 0;
    *used = (int)(end - q);
    return 1;
}

static int set_value(tl_scenario *s, const key_def *k, const char *v, char *why, size_t cap)
{
    void *p = field(s, k);
    char range[200];
    format_range(k, range, sizeof range);
    switch (k->kind) {
    case K_TEXT:
    case K_NAME: {
        const size_t n = strlen(v);
        if (n < (size_t)k->min || n > (size_t)k->max) {
            snprintf(why, cap, "must be %s", range);
            return -1;
        }
        /* inih would cut a value at ' ;' (an inline comment): such text could
         * not be written and read back, nor could control characters */
        for (size_t i = 0; k->kind == K_TEXT && i < n; i++)
            if ((unsigned char)v[i] < 0x20 || v[i] == 0x7F ||
                (v[i] == ';' && (i == 0 || v[i - 1] == ' ' || v[i - 1] == '\t'))) {
                snprintf(why, cap, "must be %s, without control characters or a ';' after a space", range);
                return -1;
            }
        if (n > 0 && (isspace((unsigned char)v[0]) || isspace((unsigned char)v[n - 1]))) {
            snprintf(why, cap, "must not start or end with a space");
            return -1;
        }
        if (k->kind == K_NAME)
            for (size_t i = 0; i < n; i++)
                if (!isalnum((unsigned char)v[i]) && v[i] != '.' && v[i] != '_' && v[i] != '-') {
                    snprintf(why, cap, "must be %s", range);
                    return -1;
                }
        memcpy(p, v, n + 1u);
        return 0;
    }
    case K_U32:
    case K_U64:
    case K_CHANNELS:
    case K_AUTO_U32:
    case K_MASK: {
        if ((k->kind == K_AUTO_U32 || k->kind == K_MASK) && strcmp(v, "auto") == 0) {
            *(uint32_t *)p = k->auto_value;
            return 0;
        }
        unsigned long long x = 0;
        const int hex = k->kind == K_MASK && v[0] == '0' && (v[1] == 'x' || v[1] == 'X');
        if (parse_uint(v, hex ? 16 : 10, &x) != 0 || (double)x < k->min || (double)x > k->max ||
            (k->kind == K_CHANNELS && (x & (x - 1u)) != 0u)) {
            snprintf(why, cap, "must be %s%s%s", range, *k->unit ? " " : "", k->unit);
            return -1;
        }
        if (k->kind == K_U64)
            *(uint64_t *)p = x;
        else if (k->kind == K_CHANNELS)
            *(uint32_t *)p = (uint32_t)(2u * x);
        else
            *(uint32_t *)p = (uint32_t)x;
        return 0;
    }
    case K_REAL: {
        char *end = NULL;
        errno = 0;
        const double x = strtod(v, &end);
        if (*v == '\0' || strpbrk(v, "xX") != NULL || errno != 0 || end == v || *end != '\0' || !isfinite(x) ||
            x < k->min || x > k->max) {
            snprintf(why, cap, "must be %s%s%s", range, *k->unit ? " " : "", k->unit);
            return -1;
        }
        *(double *)p = x * k->scale;
        return 0;
    }
    case K_CHOICE:
        for (unsigned i = 0; k->choices[i] != NULL; i++)
            if (strcmp(v, k->choices[i]) == 0) {
                *(unsigned *)p = i;
                return 0;
            }
        snprintf(why, cap, "must be %s", range);
        return -1;
    case K_BOOL:
        if (strcmp(v, "true") == 0 || strcmp(v, "false") == 0) {
            *(unsigned *)p = v[0] == 't';
            return 0;
        }
        snprintf(why, cap, "must be %s", range);
        return -1;
    case K_SEQUENCE: {
        tl_config *cf = p;
        uint32_t steps = 0;
        uint8_t st[TL_MAX_SWITCH_STEPS];
        uint32_t dw[TL_MAX_SWITCH_STEPS];
        if (strcmp(v, "off") != 0) {
            const char *q = v;
            for (;;) {
                char name[16];
                unsigned long long frames = 0;
                int used = 0;
                if (steps == TL_MAX_SWITCH_STEPS || !switch_step(q, name, &frames, &used) ||
                    frames < (unsigned long long)k->min || frames > (unsigned long long)k->max) {
                    snprintf(why, cap, "must be %s", range);
                    return -1;
                }
                unsigned idx = 3;
                for (unsigned i = 0; i < 3u; i++)
                    if (strcmp(name, switch_state_names[i]) == 0)
                        idx = i;
                if (idx == 3u) {
                    snprintf(why, cap, "must be %s", range);
                    return -1;
                }
                st[steps] = (uint8_t)idx;
                dw[steps] = (uint32_t)frames;
                steps++;
                q += used;
                q += strspn(q, " \t");
                if (*q == '\0')
                    break;
                if (*q != ',') {
                    snprintf(why, cap, "must be %s", range);
                    return -1;
                }
                q++;
            }
        }
        cf->switch_steps = steps;
        for (uint32_t i = 0; i < TL_MAX_SWITCH_STEPS; i++) {
            cf->switch_state[i] = i < steps ? st[i] : (uint8_t)TL_STATE_ANTENNA;
            cf->switch_dwell[i] = i < steps ? dw[i] : 0u;
        }
        return 0;
    }
    case K_LIST: {
        tl_sky_list l;
        memset(&l, 0, sizeof l);
        for (const char *q = v; strcmp(v, "none") != 0;) {
            const char *comma = strchr(q, ',');
            size_t len = comma != NULL ? (size_t)(comma - q) : strlen(q);
            while (len > 0 && isspace((unsigned char)q[0])) {
                q++;
                len--;
            }
            while (len > 0 && isspace((unsigned char)q[len - 1]))
                len--;
            char item[64], *end = NULL;
            if (len > 0 && len < sizeof item) {
                memcpy(item, q, len);
                item[len] = '\0';
            } else {
                item[0] = '\0';
            }
            errno = 0;
            const double x = strtod(item, &end);
            if (l.n == TL_SKY_MAX_CARRIERS || item[0] == '\0' || strpbrk(item, "xX") != NULL || errno != 0 ||
                end == item || *end != '\0' || !isfinite(x) || x < k->min || x > k->max) {
                snprintf(why, cap, "must be %s%s%s", range, *k->unit ? " " : "", k->unit);
                return -1;
            }
            l.v[l.n++] = x * k->scale;
            if (comma == NULL)
                break;
            q = comma + 1;
        }
        *(tl_sky_list *)p = l;
        return 0;
    }
    }
    return -1;
}

/* ---- parsing with inih ---------------------------------------------------- */

typedef struct parse_ctx {
    tl_scenario *s;
    FILE *f;
    const char *path;
    int line;               /* line the reader handed to inih last */
    int key_line[NKEYS];    /* where each key was given, 0 = default */
    int failed;             /* an error is in err */
    int fail_line;          /* its line */
    char *err;
    size_t cap;
} parse_ctx;

static int fail_at(parse_ctx *c, const char *fmt, ...)
{
    if (c->failed)
        return 0;
    c->failed = 1;
    c->fail_line = c->line;
    int used = snprintf(c->err, c->cap, "%s:%d: ", c->path, c->line);
    if (used < 0 || (size_t)used >= c->cap)
        return 0;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(c->err + used, c->cap - (size_t)used, fmt, ap);
    va_end(ap);
    return 0;
}

static int known_section(const char *name)
{
    for (size_t i = 0; i < NSECTIONS; i++)
        if (strcmp(name, sections[i]) == 0)
            return 1;
    return 0;
}

static void section_list(char *out, size_t cap)
{
    size_t used = 0;
    for (size_t i = 0; i < NSECTIONS && used < cap; i++)
        used += (size_t)snprintf(out + used, cap - used, "%s%s", i ? ", " : "", sections[i]);
}

static void key_list(const char *section, char *out, size_t cap)
{
    size_t used = 0;
    out[0] = '\0';
    for (size_t i = 0; i < NKEYS && used < cap; i++)
        if (strcmp(keys[i].section, section) == 0)
            used += (size_t)snprintf(out + used, cap - used, "%s%s", used ? ", " : "", keys[i].key);
}

/* inih reader: one line at a time, so the handler knows the line number.
 * It also rejects what inih would accept silently or mangle: long lines,
 * indented (continuation) lines, unknown sections, text after a section
 * header, "key: value", and " ;" inside a value (inih would cut the value
 * there as an inline comment). The line is handed over without its newline. */
static char *reader(char *str, int num, void *stream)
{
    parse_ctx *c = stream;
    char buf[1024];
    if (c->failed || fgets(buf, sizeof buf, c->f) == NULL)
        return NULL;
    c->line++;
    size_t n = strlen(buf);
    const int complete = (n > 0 && buf[n - 1] == '\n') || feof(c->f);
    while (n > 0 && (buf[n - 1] == '\n' || buf[n - 1] == '\r'))
        buf[--n] = '\0';
    if (!complete || n > (size_t)(num - 1) || n > TL_SCENARIO_LINE_MAX) {
        fail_at(c, "line longer than %d characters", TL_SCENARIO_LINE_MAX);
        return NULL;
    }
    const char *t = buf;
    if (c->line == 1 && (unsigned char)t[0] == 0xEF && (unsigned char)t[1] == 0xBB && (unsigned char)t[2] == 0xBF)
        t += 3; /* UTF-8 byte order mark */
    const char *first = t + strspn(t, " \t");
    const int blank = *first == '\0', comment = *first == '#' || *first == ';';
    if ((*t == ' ' || *t == '\t') && !blank && !comment) {
        fail_at(c, "indented line: continuation lines are not allowed (start every key at the first column)");
        return NULL;
    }
    if (*first == '[') {
        const char *end = strchr(first, ']');
        if (end != NULL) {
            const char *after = end + 1 + strspn(end + 1, " \t");
            if (*after != '\0' && *after != '#' && *after != ';') {
                fail_at(c, "text after the section header '%.*s'", (int)(end - first + 1), first);
                return NULL;
            }
            const size_t len = (size_t)(end - first - 1);
            char name[TL_SCENARIO_LINE_MAX + 1];
            memcpy(name, first + 1, len);
            name[len] = '\0';
            if (!known_section(name)) {
                char list[200];
                section_list(list, sizeof list);
                fail_at(c, "[%s]: unknown section (sections: %s)", name, list);
                return NULL;
            }
        }
    } else if (!blank && !comment) {
        const char *eq = strchr(first, '='), *colon = strchr(first, ':');
        if (eq == NULL || (colon != NULL && colon < eq)) {
            fail_at(c, "expected 'key = value', '[section]' or a '#' comment");
            return NULL;
        }
        if (strstr(eq, " ;") != NULL || strstr(eq, "\t;") != NULL) {
            fail_at(c, "' ;' inside a value would start a comment; remove the ';'");
            return NULL;
        }
    }
    memcpy(str, buf, n + 1u);
    return str;
}

static int handler(void *user, const char *section, const char *name, const char *value)
{
    parse_ctx *c = user;
    if (c->failed)
        return 0;
    for (size_t i = 0; i < NKEYS; i++) {
        if (strcmp(keys[i].section, section) != 0 || strcmp(keys[i].key, name) != 0)
            continue;
        if (c->key_line[i] != 0)
            return fail_at(c, "[%s] %s: given twice (first on line %d)", section, name, c->key_line[i]);
        char why[300];
        if (set_value(c->s, &keys[i], value, why, sizeof why) != 0)
            return fail_at(c, "[%s] %s = '%s': %s", section, name, value, why);
        c->key_line[i] = c->line;
        return 1;
    }
    if (section[0] == '\0') {
        char sections_text[200];
        section_list(sections_text, sizeof sections_text);
        return fail_at(c, "%s: key outside any section (sections: %s)", name, sections_text);
    }
    char list[600];
    key_list(section, list, sizeof list);
    return fail_at(c, "[%s] %s: unknown key (keys of [%s]: %s)", section, name, section, list);
}

/* ---- relations between keys ------------------------------------------------ */

static const key_def *key_by_name(const char *section, const char *name, size_t *index)
{
    for (size_t i = 0; i < NKEYS; i++)
        if (strcmp(keys[i].section, section) == 0 && strcmp(keys[i].key, name) == 0) {
            *index = i;
            return &keys[i];
        }
    return NULL;
}

/* One-line error about key (section, name), with its line when known. */
static int fail_key(const tl_scenario *s, const char *path, const int *lines, const char *section, const char *name,
                    char *err, size_t cap, const char *fmt, ...)
{
    size_t i = 0;
    const key_def *k = key_by_name(section, name, &i);
    char val[200] = "?";
    if (k != NULL)
        format_value(s, k, val, sizeof val);
    const int line = (lines != NULL && k != NULL) ? lines[i] : 0;
    int used;
    if (line > 0)
        used = snprintf(err, cap, "%s:%d: [%s] %s = '%s': ", path, line, section, name, val);
    else if (lines != NULL)
        used = snprintf(err, cap, "%s: [%s] %s = '%s' (default): ", path, section, name, val);
    else
        used = snprintf(err, cap, "%s: [%s] %s = '%s': ", path, section, name, val);
    if (used >= 0 && (size_t)used < cap) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(err + used, cap - (size_t)used, fmt, ap);
        va_end(ap);
    }
    return -1;
}

/* The simulator's keys: a level to set, a sky that stays above 0 K,
 * interferers below half the sample rate, one power per carrier. */
static int check_sky_relations(const tl_scenario *s, const char *path, const int *lines, char *err, size_t cap)
{
    const tl_sky_params *p = &s->sky;
    const double nyq_mhz = p->sample_rate_hz / 2e6;
    if (p->sky_t0_k == 0.0 && p->receiver_k == 0.0)
        return fail_key(s, path, lines, "sky", "receiver_k", err, cap,
                        "must be above 0 when sky_t0_k = 0 (the antenna state's power sets the ADC level)");
    double at = 0.0;
    const double tmin = tl_sky_antenna_min_k(p, &at);
    if (p->trough_depth_k > 0.0 && tmin < 0.0)
        return fail_key(s, path, lines, "sky", "trough_depth_k", err, cap,
                        "digs the sky below 0 K (%.4g K at %.6g MHz); it must be shallower than the sky", tmin,
                        at / 1e6);
    for (unsigned i = 0; i < p->carrier_hz.n; i++)
        if (p->carrier_hz.v[i] / 1e6 >= nyq_mhz)
            return fail_key(s, path, lines, "interference", "carrier_mhz", err, cap,
                            "every carrier must be below half the sample rate, %g MHz", nyq_mhz);
    if (p->carrier_dbfs.n != p->carrier_hz.n)
        return fail_key(s, path, lines, "interference", "carrier_dbfs", err, cap,
                        "must give one power per carrier: %u for carrier_mhz", p->carrier_hz.n);
    if (p->burst_hz > 0.0 && p->burst_hz / 1e6 >= nyq_mhz)
        return fail_key(s, path, lines, "interference", "burst_mhz", err, cap,
                        "must be below half the sample rate, %g MHz (or 0 for none)", nyq_mhz);
    if (p->burst_hz > 0.0 && p->burst_period_us * 1e-6 * p->sample_rate_hz < 2.0)
        return fail_key(s, path, lines, "interference", "burst_period_us", err, cap,
                        "must span at least 2 samples, %g us at %g MHz", 2e6 / p->sample_rate_hz,
                        p->sample_rate_hz / 1e6);
    return 0;
}

static int check_relations(const tl_scenario *s, const char *path, const int *lines, char *err, size_t cap)
{
    const double nyq_mhz = s->sky.sample_rate_hz / 2e6;
    const uint32_t channels = s->cfg.points / 2u;
    uint32_t m = 0;
    while ((1u << m) < channels)
        m++;
    if (s->cfg.fft_scale_mask != TL_FFT_SCALE_AUTO && (s->cfg.fft_scale_mask >> (m + 1u)) != 0u)
        return fail_key(s, path, lines, "instrument", "fft_scaling", err, cap,
                        "must be auto or at most 0x%X for %u channels (one bit per binary stage plus the split)",
                        (1u << (m + 1u)) - 1u, channels);
    if (s->proc_block % s->cfg.points != 0u)
        return fail_key(s, path, lines, "processor", "capture_block", err, cap,
                        "must be a multiple of 2 x channels = %u samples", s->cfg.points);
    if (s->sky.lowpass_hz <= s->sky.highpass_hz)
        return fail_key(s, path, lines, "sky", "lowpass_mhz", err, cap, "must be above highpass_mhz = %g MHz",
                        s->sky.highpass_hz / 1e6);
    if (s->band_hi_hz / 1e6 > nyq_mhz + 1e-9)
        return fail_key(s, path, lines, "fidelity", "band_high_mhz", err, cap,
                        "must be at most half the sample rate, %g MHz", nyq_mhz);
    if (s->band_lo_hz >= s->band_hi_hz)
        return fail_key(s, path, lines, "fidelity", "band_low_mhz", err, cap, "must be below band_high_mhz = %g MHz",
                        s->band_hi_hz / 1e6);
    uint32_t lo, hi;
    tl_scenario_band(s, &lo, &hi);
    if (hi < lo + 16u)
        return fail_key(s, path, lines, "fidelity", "band_high_mhz", err, cap,
                        "the band must span at least 16 channels of %g kHz (it spans %d)",
                        tl_scenario_channel_hz(s) / 1e3, (int)hi - (int)lo);
    if (s->spectra < s->blocks || s->spectra % s->blocks != 0u)
        return fail_key(s, path, lines, "integration", "spectra", err, cap,
                        "must be a multiple of [fidelity] blocks = %u", s->blocks);
    if (s->flight_spectra != 0u && s->flight_spectra < s->spectra)
        return fail_key(s, path, lines, "fidelity", "extrapolate_to", err, cap,
                        "must be 0 or at least [integration] spectra = %u", s->spectra);
    if (s->cfg.switch_steps == 0u && s->cfg.switch_discard != 0u)
        return fail_key(s, path, lines, "switching", "discard", err, cap, "must be 0 when the sequence is off");
    if (s->cfg.switch_steps > 0u) {
        unsigned seen = 0;
        uint32_t cycle = 0, shortest = UINT32_MAX;
        for (uint32_t i = 0; i < s->cfg.switch_steps; i++) {
            seen |= 1u << s->cfg.switch_state[i];
            cycle += s->cfg.switch_dwell[i];
            if (s->cfg.switch_dwell[i] < shortest)
                shortest = s->cfg.switch_dwell[i];
        }
        if (seen != 7u)
            return fail_key(s, path, lines, "switching", "sequence", err, cap,
                            "must visit antenna, load and noise (calibration needs all three)");
        if (s->cfg.switch_discard >= shortest)
            return fail_key(s, path, lines, "switching", "discard", err, cap,
                            "must be below the shortest dwell, %u frames", shortest);
        if (s->spectra < cycle + s->cfg.taps)
            return fail_key(s, path, lines, "integration", "spectra", err, cap,
                            "must cover a whole switch cycle: at least %u spectra", cycle + s->cfg.taps);
    }
    if (s->dl_apid_science == s->dl_apid_hk)
        return fail_key(s, path, lines, "downlink", "apid_housekeeping", err, cap,
                        "must differ from apid_science = %u", s->dl_apid_science);
    if (s->dl_apid_sk == s->dl_apid_science || s->dl_apid_sk == s->dl_apid_hk)
        return fail_key(s, path, lines, "downlink", "apid_kurtosis", err, cap,
                        "must differ from apid_science = %u and apid_housekeeping = %u", s->dl_apid_science,
                        s->dl_apid_hk);
    if (s->cfg.sk_spectra != 0u && s->cfg.sk_spectra < TL_SK_MIN_SPECTRA)
        return fail_key(s, path, lines, "flagging", "sk_block", err, cap, "must be 0 (off) or at least %u spectra",
                        TL_SK_MIN_SPECTRA);
    double sk_lo, sk_hi;
    if (s->cfg.sk_spectra != 0u &&
        tl_sk_thresholds(s->cfg.sk_spectra, s->cfg.sk_accumulate, s->sk_false_alarm, &sk_lo, &sk_hi) != 0)
        return fail_key(s, path, lines, "flagging", "sk_block", err, cap,
                        "no flagging thresholds exist for M = %u values of N = %u spectra (N = 1 needs M >= 24; "
                        "docs/spectral-kurtosis.md lists the limits)",
                        s->cfg.sk_spectra, s->cfg.sk_accumulate);
    if ((uint64_t)s->cfg.sk_spectra * s->cfg.sk_accumulate > s->spectra)
        return fail_key(s, path, lines, "flagging", "sk_block", err, cap,
                        "times sk_accumulate = %u must be at most [integration] spectra = %u", s->cfg.sk_accumulate,
                        s->spectra);
    return check_sky_relations(s, path, lines, err, cap);
}

/* Is the stored value of k inside its range? (A struct built in code may
 * hold what no file could: check the raw field, not its formatted text.) */
static int raw_ok(const tl_scenario *s, const key_def *k)
{
    const void *p = field(s, k);
    switch (k->kind) {
    case K_TEXT:
    case K_NAME: {
        const char *t = p;
        if (memchr(t, '\0', k->size) == NULL)
            return 0;
        tl_scenario copy = *s;
        char why[300];
        return set_value(&copy, k, t, why, sizeof why) == 0;
    }
    case K_U32:
        return *(const uint32_t *)p >= k->min && *(const uint32_t *)p <= k->max;
    case K_U64:
        return (double)*(const uint64_t *)p >= k->min && (double)*(const uint64_t *)p <= k->max;
    case K_REAL: {
        const double v = *(const double *)p / k->scale;
        return isfinite(v) && v >= k->min && v <= k->max;
    }
    case K_CHANNELS: {
        const uint32_t pts = *(const uint32_t *)p, ch = pts / 2u;
        return (pts & 1u) == 0u && ch >= k->min && ch <= k->max && (ch & (ch - 1u)) == 0u;
    }
    case K_CHOICE: {
        unsigned n = 0;
        while (k->choices[n] != NULL)
            n++;
        return *(const unsigned *)p < n;
    }
    case K_AUTO_U32:
    case K_MASK:
        return *(const uint32_t *)p == k->auto_value || (*(const uint32_t *)p >= k->min && *(const uint32_t *)p <= k->max);
    case K_BOOL:
        return *(const unsigned *)p <= 1u;
    case K_SEQUENCE: {
        const tl_config *cf = p;
        if (cf->switch_steps > TL_MAX_SWITCH_STEPS)
            return 0;
        for (uint32_t i = 0; i < cf->switch_steps; i++)
            if (cf->switch_state[i] >= 3u || cf->switch_dwell[i] < k->min || cf->switch_dwell[i] > k->max)
                return 0;
        return 1;
    }
    case K_LIST: {
        const tl_sky_list *l = p;
        if (l->n > TL_SKY_MAX_CARRIERS)
            return 0;
        for (unsigned i = 0; i < l->n; i++) {
            const double v = l->v[i] / k->scale;
            if (!(isfinite(v) && v >= k->min && v <= k->max))
                return 0;
        }
        return 1;
    }
    }
    return 0;
}

int tl_scenario_check(const tl_scenario *s, const char *path, char *err, size_t cap)
{
    if (path == NULL)
        path = "scenario";
    for (size_t i = 0; i < NKEYS; i++) {
        if (raw_ok(s, &keys[i]))
            continue;
        char range[200];
        format_range(&keys[i], range, sizeof range);
        return fail_key(s, path, NULL, keys[i].section, keys[i].key, err, cap, "must be %s%s%s", range,
                        *keys[i].unit ? " " : "", keys[i].unit);
    }
    return check_relations(s, path, NULL, err, cap);
}

int tl_scenario_load(const char *path, tl_scenario *s, char *err, size_t cap)
{
    parse_ctx c;
    memset(&c, 0, sizeof c);
    c.s = s;
    c.path = path;
    c.err = err;
    c.cap = cap;
    c.f = fopen(path, "r");
    if (c.f == NULL) {
        snprintf(err, cap, "%s: cannot open: %s", path, strerror(errno));
        return -1;
    }
    const int rc = ini_parse_stream(reader, &c, handler, &c);
    const int read_error = ferror(c.f);
    fclose(c.f);
    if (rc > 0 && (!c.failed || rc < c.fail_line)) { /* inih's syntax error came first */
        snprintf(err, cap, "%s:%d: expected 'key = value', '[section]' or a '#' comment", path, rc);
        return -1;
    }
    if (c.failed)
        return -1;
    if (read_error) {
        snprintf(err, cap, "%s: read error", path);
        return -1;
    }
    if (rc > 0) {
        snprintf(err, cap, "%s:%d: expected 'key = value', '[section]' or a '#' comment", path, rc);
        return -1;
    }
    if (rc < 0) {
        snprintf(err, cap, "%s: cannot parse (out of memory)", path);
        return -1;
    }
    sync_derived(s);
    return check_relations(s, path, c.key_line, err, cap);
}

/* ---- one key from outside a file (sweeps) ------------------------------------ */

int tl_scenario_set(tl_scenario *s, const char *section, const char *key, const char *value, char *err, size_t cap)
{
    if (!known_section(section)) {
        char list[200];
        section_list(list, sizeof list);
        snprintf(err, cap, "[%s] %s: unknown section [%s] (sections: %s)", section, key, section, list);
        return -1;
    }
    size_t i = 0;
    const key_def *k = key_by_name(section, key, &i);
    if (k == NULL) {
        char list[600];
        key_list(section, list, sizeof list);
        snprintf(err, cap, "[%s] %s: unknown key (keys of [%s]: %s)", section, key, section, list);
        return -1;
    }
    char why[300];
    if (set_value(s, k, value, why, sizeof why) != 0) {
        snprintf(err, cap, "[%s] %s = '%s': %s", section, key, value, why);
        return -1;
    }
    sync_derived(s);
    return 0;
}

/* ---- writing ---------------------------------------------------------------- */

int tl_scenario_write(FILE *out, const tl_scenario *s)
{
    tl_scenario def;
    tl_scenario_default(&def);
    fprintf(out, "# tidelock scenario file (INI).\n"
                 "# Every key is optional: a missing key takes the default shown in its comment.\n"
                 "# Comments start with '#'. Do not indent lines; at most 199 characters per line.\n"
                 "# Unknown sections and keys are errors, so a typo never falls back to a default.\n");
    const char *current = "";
    for (size_t i = 0; i < NKEYS; i++) {
        const key_def *k = &keys[i];
        if (strcmp(k->section, current) != 0) {
            fprintf(out, "\n[%s]\n", k->section);
            current = k->section;
        }
        char val[200], dval[200], range[200];
        format_value(s, k, val, sizeof val);
        format_value(&def, k, dval, sizeof dval);
        format_range(k, range, sizeof range);
        if (k->kind == K_TEXT) /* the default text is the value of the default file */
            fprintf(out, "# %s\n#   %s\n%s = %s\n", k->help, range, k->key, val);
        else
            fprintf(out, "# %s\n#   %s%s%s; default %s\n%s = %s\n", k->help, range, *k->unit ? " " : "", k->unit,
                    dval, k->key, val);
    }
    return ferror(out) ? -1 : 0;
}
