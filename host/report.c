/* report.c - text and JSON summaries of a run (see report.h). */
#include "report.h"

#include <errno.h>
#include <jansson.h>
#include <math.h>
#include <string.h>
#include <unistd.h>
#include "atomic_file.h"
#include "taps_design.h"

static const char *rounding_name(uint32_t r)
{
    return r == TL_ROUND_TRUNCATE ? "truncate" : r == TL_ROUND_HALF_UP ? "half-up" : "half-even";
}

static double hours_of(const tl_scenario *s, double spectra)
{
    return spectra * s->cfg.points / s->sky.sample_rate_hz / 3600.0;
}

void tl_report_print(FILE *out, const char *command, const tl_scenario *s, const tl_run_result *r)
{
    const tl_fid_result *f = &r->fid;
    const tl_config *c = &s->cfg;
    const double df = tl_scenario_channel_hz(s);
    fprintf(out, "tidelock %s: scenario %s\n  %s\n", command, s->name, s->description);
    fprintf(out, "configuration: %u points (%u channels of %.3f kHz), %u taps %s, %u input%s, %u-bit ADC,\n"
                 "  FFT scaling mask 0x%04x, rounding %s, detection shift %u (flight %u for %u spectra), arithmetic spec v%u\n",
            c->points, c->points / 2u, df / 1e3, c->taps, tl_window_name(s->window), c->inputs, c->inputs > 1 ? "s" : "",
            c->adc_bits, c->fft_scale_mask == TL_FFT_SCALE_AUTO ? tl_fft_default_mask(c->points) : c->fft_scale_mask,
            rounding_name(c->rounding), f->det_shift, f->flight_det_shift, f->flight_spectra, (unsigned)TL_ARITH_VERSION);
    const double spectrum_s = c->points / s->sky.sample_rate_hz;
    fprintf(out, "run: %u spectra (%.3f s of data) in %u blocks, sample rate %.3f MHz, science band %.3f-%.3f MHz "
                 "(channels %u-%u), drive %+.1f dB (RMS %.4f of full scale), %.1f s wall time\n",
            f->spectra, f->spectra * spectrum_s, f->blocks, s->sky.sample_rate_hz / 1e6, f->band_lo * df / 1e6,
            f->band_hi * df / 1e6, f->band_lo, f->band_hi - 1u, s->drive_db,
            s->sky.rms_fs * pow(10.0, s->drive_db / 20.0), r->seconds);
    fprintf(out, "counters (all integrations):\n");
    for (uint32_t i = 0; i < c->inputs; i++) {
        fprintf(out, "  input %u: ADC clips %u samples (generator %llu), PFB saturations %u samples, "
                     "FFT saturations per stage [", i,
                f->stats.adc_clips[i], (unsigned long long)r->generator_clips[i], f->stats.pfb_sat[i]);
        for (unsigned st = 0; st <= TL_MAX_FFT_STAGES; st++)
            fprintf(out, "%s%u", st ? " " : "", f->stats.fft_sat[i][st]);
        fprintf(out, "] values (entry %u: split)\n", f->product.fft_stages);
    }
    fprintf(out, "  accumulator saturations (channels): auto0 %u, auto1 %u, cross re %u, cross im %u; "
                 "flagged channels %u\n",
            f->stats.acc_sat[0], f->stats.acc_sat[1], f->stats.acc_sat[2], f->stats.acc_sat[3], f->sat_flags);
    fprintf(out, "  mean channel power |X|^2 %.4g LSB^2 (input 0); predicted round-off E|e|^2 %.4g LSB^2 "
                 "(SQNR %.1f dB)\n",
            f->mean_power_lsb2[0], f->noise_pred_lsb2, 10.0 * log10(f->mean_power_lsb2[0] / f->noise_pred_lsb2));
    fprintf(out, "  predicted power gain error of the Q29 twiddles over the band: %.3e (a fixed per-channel gain, "
                 "removed by calibration)\n", f->twiddle_gain);
    fprintf(out, "fidelity against the FFTW double reference, M = %u, M' = %u spectra\n"
                 "  ([rel]: relative to the channel's power; [noise]: units of the radiometer noise of M spectra, "
                 "d*sqrt(M))\n",
            f->spectra, f->flight_spectra);
    fprintf(out, "  %-8s %11s %10s %11s %12s %11s %13s %9s %11s\n", "product", "bias", "std.err", "predicted",
            "scatter/spec", "margin@M", "margin@M'ext", "chi2 z", "coef q.max");
    fprintf(out, "  %-8s %11s %10s %11s %12s %11s %13s %9s %11s\n", "", "[rel]", "[rel]", "[rel]", "[rel]", "[noise]",
            "[noise]", "[sigma]", "[noise]");
    for (int p = 0; p < TL_FID_PRODUCTS; p++) {
        const tl_fid_metrics *m = &f->main[p];
        if (!m->present)
            continue;
        fprintf(out, "  %-8s %11.3e %10.2e %11.3e %12.3e %11.3e %13.3e %9.2f %11.3e\n", tl_fidelity_product_name(p),
                m->bias, m->bias_se, m->bias_pred, m->scatter1, m->margin, f->margin_ext[p], m->chi2_z, m->ideal_max);
    }
    const tl_fid_metrics *a = &f->main[TL_FID_AUTO0];
    fprintf(out, "  bias bound |b|+2se reaches 0.01 of the noise after %.3g spectra (%.3g hours of co-adding)\n",
            a->m_reach, hours_of(s, a->m_reach));
    if (r->cal.done) {
        const tl_cal_report *cr = &r->cal;
        const tl_product *p = &f->product;
        fprintf(out, "calibration (two-point: load %.1f K, load + noise source %.1f K; spectra antenna %u, load %u, "
                     "noise %u, discarded %u):\n",
                s->sky.load_k, s->sky.load_k + s->sky.noise_excess_k, p->antenna_spectra, p->cal[0].spectra,
                p->cal[1].spectra, p->discarded);
        for (uint32_t i = 0; i < p->inputs; i++) {
            const uint32_t mid = f->band_lo + (f->band_hi - f->band_lo) / 2u;
            fprintf(out, "  input %u: calibrated vs model over %u channels: chi2/channel %.3f, beyond 3 sigma %u "
                         "(%.2f%%, Gaussian 0.27%%); at %.3f MHz %.1f +- %.1f K (model %.1f K)\n",
                    i, cr->channels, cr->chi2_red[i], cr->beyond3[i], 100.0 * cr->beyond3[i] / cr->channels,
                    mid * df / 1e6, cr->t_ant[i][mid], cr->sigma[i][mid], cr->t_model[mid]);
            if (cr->fit[i].ok)
                fprintf(out, "  input %u: trough fit: depth %.4g +- %.2g K (%.1f sigma; model %.4g K), centre %.3f +- "
                             "%.3f MHz (model %.3f MHz), chi2/dof %.3f\n",
                        i, cr->fit[i].depth, cr->fit[i].depth_sigma, cr->fit[i].significance, s->sky.trough_depth_k,
                        cr->fit[i].centre / 1e6, cr->fit[i].centre_sigma / 1e6, s->sky.trough_centre_hz / 1e6,
                        cr->fit[i].chi2 / cr->fit[i].dof);
        }
    }
    if (r->sk.done) {
        const tl_sk_report *k = &r->sk;
        const double chw = tl_scenario_channel_hz(s);
        fprintf(out, "spectral kurtosis (blocks of M = %u values of N = %u antenna spectra, %u blocks, %u spectra "
                     "dropped at the end; false alarm %.2g: SK outside [%.4f, %.4f]; a channel is masked when flagged "
                     "in >= %u blocks):\n",
                k->m, k->n, k->nblocks, k->dropped, k->false_alarm, k->lo, k->hi, k->mask_blocks);
        for (uint32_t i = 0; i < k->inputs; i++)
            fprintf(out, "  input %u: flagged %llu low + %llu high of %llu channel-blocks (%.3f%%; Gaussian noise "
                         "%.3f%%); in the science band %.3f%%\n",
                    i, (unsigned long long)k->flagged_low[i], (unsigned long long)k->flagged_high[i],
                    (unsigned long long)k->values[i],
                    k->values[i] ? 100.0 * (double)(k->flagged_low[i] + k->flagged_high[i]) / (double)k->values[i] : 0.0,
                    100.0 * k->false_alarm,
                    k->band_values[i] ? 100.0 * (double)k->band_flagged[i] / (double)k->band_values[i] : 0.0);
        fprintf(out, "  masked channels: %u (%u in the science band, left out of the calibration)", k->masked,
                k->masked_in_band);
        unsigned shown = 0;
        for (uint32_t ch = 0; ch < k->channels && shown < 8u; ch++) {
            if (!k->mask[ch] || (ch > 0u && k->mask[ch - 1u]))
                continue;
            uint32_t e = ch;
            while (e + 1u < k->channels && k->mask[e + 1u])
                e++;
            fprintf(out, "%s%.3f-%.3f MHz", shown ? ", " : ": ", ch * chw / 1e6, e * chw / 1e6);
            shown++;
        }
        fprintf(out, "%s\n", shown == 8u ? ", ..." : "");
    }
    if (r->acq.done) {
        const tl_acq_report *aq = &r->acq;
        fprintf(out, "acquisition (%.0f MHz clock, CPI %.2f, %.2f instructions/sample, blocks of %u samples, %u buffers):\n",
                s->proc_clock_hz / 1e6, s->proc_cpi,
                s->proc_ips[0] + s->proc_ips[1] + s->proc_ips[2] + s->proc_ips[3] + s->proc_ips[4] + s->proc_ips[5],
                s->proc_block, s->proc_buffers);
        fprintf(out, "  load %.4f; duty cycle predicted %.4f (closed form %llu of %llu blocks), experienced %.4f "
                     "(%llu processed, %llu dropped)\n",
                aq->load, aq->predicted_duty, (unsigned long long)aq->predicted_kept, (unsigned long long)aq->blocks,
                aq->experienced_duty, (unsigned long long)aq->kept, (unsigned long long)aq->dropped);
        fprintf(out, "  %u antenna spectra integrated (%.4f s effective of %.4f s), %u discarded at gaps%s\n",
                aq->antenna_spectra, aq->effective_s, aq->span_s, aq->gap_discarded,
                aq->dropped ? "; the packets carry this product" : "");
    } else {
        tl_acq_model m;
        if (tl_acq_model_init(&m, s) == 0)
            fprintf(out,
                    "processor (%.0f MHz clock, CPI %.2f, %.2f instructions/sample): load %.4g, predicted duty cycle %.4g "
                    "of the samples (closed form; [processor] model = false, so this run integrated every sample)\n",
                    s->proc_clock_hz / 1e6, s->proc_cpi,
                    s->proc_ips[0] + s->proc_ips[1] + s->proc_ips[2] + s->proc_ips[3] + s->proc_ips[4] + s->proc_ips[5],
                    tl_acq_load(&m), tl_acq_predicted_duty(&m));
    }
    if (r->dl.done) {
        const tl_dl_result *d = &r->dl;
        const uint64_t pk = d->octets_science + d->octets_hk + d->octets_sk;
        fprintf(out, "downlink (%s%s, packets <= %u octets, frames of %u + 4 octets, config id 0x%08X):\n",
                s->dl_encoding ? "noise-bounded" : "lossless", s->dl_transpose ? ", bit planes" : ", byte shuffle",
                s->dl_max_packet, s->dl_frame_len, d->config_id);
        fprintf(out, "  %u science packets (%llu octets) + %u housekeeping (%llu octets)", d->packets_science,
                (unsigned long long)d->octets_science, d->packets_hk, (unsigned long long)d->octets_hk);
        if (d->packets_sk)
            fprintf(out, " + %u spectral kurtosis (%llu octets)", d->packets_sk, (unsigned long long)d->octets_sk);
        fprintf(out, " = %llu octets; sums uncompressed %llu octets, compression x%.2f\n", (unsigned long long)pk,
                (unsigned long long)d->octets_raw,
                d->octets_science ? (double)d->octets_raw / (double)d->octets_science : 0.0);
        fprintf(out, "  %u transfer frames, %llu octets on the link (%.1f%% frame overhead and fill)\n", d->frames,
                (unsigned long long)d->octets_frames,
                pk ? 100.0 * ((double)d->octets_frames - (double)pk) / (double)d->octets_frames : 0.0);
    }
    char why[4096];
    const int fails = tl_fidelity_verdict(f, why, sizeof why);
    if (fails == 0)
        fprintf(out, "verdict: PASS (margin < %.2g at M and M', |bias| < %.0e, se < %.0e, chi2 |z| < %.0f, bias as predicted)\n",
                TL_FID_MARGIN_MAX, TL_FID_BIAS_MAX, TL_FID_BIAS_SE_MAX, TL_FID_CHI2_Z_MAX);
    else
        fprintf(out, "verdict: FAIL (%d checks)\n%s", fails, why);
}

static int dump_json(FILE *f, void *root)
{
    return json_dumpf((json_t *)root, f, JSON_INDENT(2) | JSON_REAL_PRECISION(10)) == 0 ? 0 : -1;
}

static json_t *metrics_json(const tl_fid_metrics *m, double margin_ext)
{
    return json_pack("{s:f, s:f, s:f, s:f, s:f, s:f, s:f, s:f, s:f, s:f, s:f, s:f}", "bias", m->bias, "bias_se",
                     m->bias_se, "bias_predicted", m->bias_pred, "scatter_per_spectrum", m->scatter1, "margin",
                     m->margin, "margin_extrapolated", margin_ext, "chi2", m->chi2, "chi2_dof", m->chi2_dof,
                     "chi2_z", m->chi2_z, "coef_quant_bias", m->ideal_bias, "coef_quant_max", m->ideal_max,
                     "spectra_to_reach_0.01", isfinite(m->m_reach) ? m->m_reach : -1.0);
}

static json_t *u32_array(const uint32_t *v, unsigned n)
{
    json_t *a = json_array();
    for (unsigned i = 0; i < n; i++)
        json_array_append_new(a, json_integer(v[i]));
    return a;
}

int tl_report_write_json(const char *path, const tl_scenario *s, const tl_run_result *r, char *err, size_t cap)
{
    const tl_fid_result *f = &r->fid;
    const tl_config *c = &s->cfg;
    json_t *root = json_object();
    json_object_set_new(root, "tool", json_string("tidelock"));
    json_object_set_new(root, "arith_version", json_integer(TL_ARITH_VERSION));
    json_object_set_new(root, "scenario", json_pack("{s:s, s:s, s:f, s:f, s:f, s:f}", "name", s->name, "description",
                                                    s->description, "sample_rate_hz", s->sky.sample_rate_hz,
                                                    "drive_db", s->drive_db, "band_lo_hz", s->band_lo_hz,
                                                    "band_hi_hz", s->band_hi_hz));
    json_object_set_new(root, "config",
                        json_pack("{s:i, s:i, s:i, s:i, s:s, s:i, s:s, s:i, s:i, s:i}", "points", (json_int_t)c->points,
                                  "channels", (json_int_t)(c->points / 2u), "taps", (json_int_t)c->taps, "inputs",
                                  (json_int_t)c->inputs, "window", tl_window_name(s->window), "adc_bits",
                                  (json_int_t)c->adc_bits, "rounding", rounding_name(c->rounding), "fft_scale_mask",
                                  (json_int_t)(c->fft_scale_mask == TL_FFT_SCALE_AUTO ? tl_fft_default_mask(c->points)
                                                                                       : c->fft_scale_mask),
                                  "det_shift", (json_int_t)f->det_shift, "flight_det_shift",
                                  (json_int_t)f->flight_det_shift));
    /* firmware power counts to volts^2 at the ADC: P = |DFT(y)|^2 2^(60 - 2T - s) with y in full-scale units */
    const double v2 = s->adc_full_scale_v * s->adc_full_scale_v *
                      ldexp(1.0, 2 * (int)f->product.fft_total_shift + (int)f->det_shift - 60);
    json_object_set_new(root, "units", json_pack("{s:f, s:s, s:s}", "volts2_per_count", v2, "power",
                                                 "sum over the integration of |X|^2 / 2^det_shift, firmware counts",
                                                 "frequency", "channel k at k * sample_rate / points"));
    json_object_set_new(root, "run", json_pack("{s:i, s:i, s:i, s:i, s:i, s:f}", "spectra", (json_int_t)f->spectra,
                                               "blocks", (json_int_t)f->blocks, "flight_spectra",
                                               (json_int_t)f->flight_spectra, "band_lo_channel",
                                               (json_int_t)f->band_lo, "band_hi_channel", (json_int_t)f->band_hi,
                                               "seconds", r->seconds));
    json_t *cnt = json_object();
    json_t *inputs = json_array();
    for (uint32_t i = 0; i < c->inputs; i++)
        json_array_append_new(inputs, json_pack("{s:i, s:I, s:i, s:o}", "adc_clips", (json_int_t)f->stats.adc_clips[i],
                                                "generator_clips", (json_int_t)r->generator_clips[i], "pfb_saturations",
                                                (json_int_t)f->stats.pfb_sat[i], "fft_saturations_per_stage",
                                                u32_array(f->stats.fft_sat[i], TL_MAX_FFT_STAGES + 1u)));
    json_object_set_new(cnt, "inputs", inputs);
    json_object_set_new(cnt, "accumulator_saturations", u32_array(f->stats.acc_sat, 4));
    json_object_set_new(cnt, "flagged_channels", json_integer(f->sat_flags));
    json_object_set_new(root, "counters", cnt);
    json_object_set_new(root, "noise", json_pack("{s:f, s:f, s:f}", "mean_power_lsb2", f->mean_power_lsb2[0],
                                                 "predicted_roundoff_lsb2", f->noise_pred_lsb2,
                                                 "predicted_twiddle_gain_error", f->twiddle_gain));
    json_t *fid = json_object();
    for (int p = 0; p < TL_FID_PRODUCTS; p++)
        if (f->main[p].present)
            json_object_set_new(fid, tl_fidelity_product_name(p), metrics_json(&f->main[p], f->margin_ext[p]));
    json_object_set_new(root, "fidelity", fid);
    if (r->cal.done) {
        const tl_cal_report *cr = &r->cal;
        json_t *cal = json_object();
        json_object_set_new(cal, "load_k", json_real(s->sky.load_k));
        json_object_set_new(cal, "noise_excess_k", json_real(s->sky.noise_excess_k));
        json_object_set_new(cal, "radiometer_factor", json_real(cr->radiometer_factor));
        json_t *ins = json_array();
        for (uint32_t i = 0; i < f->product.inputs; i++) {
            json_t *o = json_pack("{s:f, s:i, s:i}", "chi2_per_channel", cr->chi2_red[i], "channels",
                                  (json_int_t)cr->channels, "beyond_3_sigma", (json_int_t)cr->beyond3[i]);
            if (cr->fit[i].ok)
                json_object_set_new(o, "trough_fit",
                                    json_pack("{s:f, s:f, s:f, s:f, s:f, s:f}", "depth_k", cr->fit[i].depth,
                                              "depth_sigma_k", cr->fit[i].depth_sigma, "centre_hz", cr->fit[i].centre,
                                              "centre_sigma_hz", cr->fit[i].centre_sigma, "significance",
                                              cr->fit[i].significance, "chi2_per_dof", cr->fit[i].chi2 / cr->fit[i].dof));
            json_array_append_new(ins, o);
        }
        json_object_set_new(cal, "inputs", ins);
        json_object_set_new(root, "calibration", cal);
    }
    if (r->sk.done) {
        const tl_sk_report *k = &r->sk;
        json_t *o = json_object();
        json_object_set_new(o, "block_values", json_integer(k->m));
        json_object_set_new(o, "spectra_per_value", json_integer(k->n));
        json_object_set_new(o, "blocks", json_integer(k->nblocks));
        json_object_set_new(o, "dropped_spectra", json_integer(k->dropped));
        json_object_set_new(o, "false_alarm", json_real(k->false_alarm));
        json_object_set_new(o, "lower_threshold", json_real(k->lo));
        json_object_set_new(o, "upper_threshold", json_real(k->hi));
        json_object_set_new(o, "mask_min_blocks", json_integer(k->mask_blocks));
        json_t *ins = json_array();
        for (uint32_t i = 0; i < k->inputs; i++)
            json_array_append_new(ins, json_pack("{s:I, s:I, s:I, s:I, s:I}", "flagged_low",
                                                 (json_int_t)k->flagged_low[i], "flagged_high",
                                                 (json_int_t)k->flagged_high[i], "channel_blocks",
                                                 (json_int_t)k->values[i], "band_flagged",
                                                 (json_int_t)k->band_flagged[i], "band_channel_blocks",
                                                 (json_int_t)k->band_values[i]));
        json_object_set_new(o, "inputs", ins);
        json_t *chs = json_array(), *mhz = json_array();
        const double chw = tl_scenario_channel_hz(s);
        for (uint32_t ch = 0; ch < k->channels; ch++)
            if (k->mask[ch]) {
                json_array_append_new(chs, json_integer(ch));
                json_array_append_new(mhz, json_real(ch * chw / 1e6));
            }
        json_object_set_new(o, "masked_channels", chs);
        json_object_set_new(o, "masked_mhz", mhz);
        json_object_set_new(root, "spectral_kurtosis", o);
    }
    if (r->acq.done) {
        const tl_acq_report *a = &r->acq;
        json_t *o = json_object();
        json_object_set_new(o, "load", json_real(a->load));
        json_object_set_new(o, "duty_predicted", json_real(a->predicted_duty));
        json_object_set_new(o, "duty_experienced", json_real(a->experienced_duty));
        json_object_set_new(o, "blocks", json_integer((json_int_t)a->blocks));
        json_object_set_new(o, "blocks_processed", json_integer((json_int_t)a->kept));
        json_object_set_new(o, "blocks_dropped", json_integer((json_int_t)a->dropped));
        json_object_set_new(o, "blocks_processed_predicted", json_integer((json_int_t)a->predicted_kept));
        json_object_set_new(o, "gap_discarded_spectra", json_integer((json_int_t)a->gap_discarded));
        json_object_set_new(o, "antenna_spectra", json_integer((json_int_t)a->antenna_spectra));
        json_object_set_new(o, "effective_integration_s", json_real(a->effective_s));
        json_object_set_new(o, "span_s", json_real(a->span_s));
        json_object_set_new(root, "acquisition", o);
    }
    if (r->dl.done) {
        const tl_dl_result *d = &r->dl;
        json_t *dl = json_object();
        json_object_set_new(dl, "encoding", json_string(s->dl_encoding ? "bounded" : "lossless"));
        json_object_set_new(dl, "config_id", json_integer((json_int_t)d->config_id));
        json_object_set_new(dl, "packets_science", json_integer((json_int_t)d->packets_science));
        json_object_set_new(dl, "packets_housekeeping", json_integer((json_int_t)d->packets_hk));
        json_object_set_new(dl, "octets_science", json_integer((json_int_t)d->octets_science));
        json_object_set_new(dl, "octets_housekeeping", json_integer((json_int_t)d->octets_hk));
        json_object_set_new(dl, "octets_uncompressed", json_integer((json_int_t)d->octets_raw));
        json_object_set_new(dl, "compression",
                            json_real(d->octets_science ? (double)d->octets_raw / (double)d->octets_science : 0.0));
        json_object_set_new(dl, "packets_kurtosis", json_integer((json_int_t)d->packets_sk));
        json_object_set_new(dl, "octets_kurtosis", json_integer((json_int_t)d->octets_sk));
        json_object_set_new(dl, "frames", json_integer((json_int_t)d->frames));
        json_object_set_new(dl, "octets_frames", json_integer((json_int_t)d->octets_frames));
        json_object_set_new(dl, "packet_file", json_string("packets.bin"));
        json_object_set_new(dl, "frame_file", json_string("frames.bin"));
        json_object_set_new(root, "downlink", dl);
    }
    char why[4096];
    const int fails = tl_fidelity_verdict(f, why, sizeof why);
    json_object_set_new(root, "verdict", json_pack("{s:s, s:i, s:s}", "result", fails ? "FAIL" : "PASS", "failures",
                                                   fails, "reasons", why));
    const int rc = tl_atomic_write(path, dump_json, root, err, cap);
    json_decref(root);
    return rc;
}
