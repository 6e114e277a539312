/* fidelity.c - firmware against the double reference (see fidelity.h). */
#include "fidelity.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "noise_model.h"
#include "reference.h"
#include "taps_design.h"

/* Per-block sums, [product][block][channel], as doubles. */
typedef struct block_sums {
    uint32_t blocks, channels;
    double *v[TL_FID_PRODUCTS];
} block_sums;

static int sums_alloc(block_sums *b, uint32_t blocks, uint32_t channels)
{
    b->blocks = blocks;
    b->channels = channels;
    for (int i = 0; i < TL_FID_PRODUCTS; i++) {
        b->v[i] = calloc((size_t)blocks * channels, sizeof(double));
        if (b->v[i] == NULL)
            return -1;
    }
    return 0;
}

static void sums_free(block_sums *b)
{
    for (int i = 0; i < TL_FID_PRODUCTS; i++)
        free(b->v[i]);
}

static double *at(const block_sums *b, int prod, uint32_t j)
{
    return &b->v[prod][(size_t)j * b->channels];
}

static uint32_t shift_for(uint32_t m)
{
    uint32_t s = 0;
    while (((uint64_t)1 << s) < m)
        s++;
    return s;
}

static void store_product(block_sums *b, uint32_t j, const tl_product *p)
{
    for (uint32_t k = 0; k < b->channels; k++) {
        at(b, TL_FID_AUTO0, j)[k] = (double)p->auto_power[0][k];
        at(b, TL_FID_AUTO1, j)[k] = (double)p->auto_power[1][k];
        at(b, TL_FID_CROSS_RE, j)[k] = (double)p->cross_re[k];
        at(b, TL_FID_CROSS_IM, j)[k] = (double)p->cross_im[k];
    }
}

/* Fold one block product into the M-spectrum product (first: copy). */
static void add_product(tl_product *t, const tl_product *p, int first)
{
    if (first) {
        memcpy(t, p, sizeof *t);
        return;
    }
    for (uint32_t k = 0; k < p->channels; k++) {
        uint32_t sat = 0;
        for (uint32_t i = 0; i < p->inputs; i++) {
            sat = 0;
            t->auto_power[i][k] = tl_sat_add_u64(t->auto_power[i][k], p->auto_power[i][k], &sat);
            if (sat)
                t->flags[k] = (uint8_t)(t->flags[k] | (i == 0 ? TL_FLAG_SAT_AUTO0 : TL_FLAG_SAT_AUTO1));
        }
        sat = 0;
        t->cross_re[k] = tl_sat_add_s64(t->cross_re[k], p->cross_re[k], &sat);
        if (sat)
            t->flags[k] = (uint8_t)(t->flags[k] | TL_FLAG_SAT_CROSS_RE);
        sat = 0;
        t->cross_im[k] = tl_sat_add_s64(t->cross_im[k], p->cross_im[k], &sat);
        if (sat)
            t->flags[k] = (uint8_t)(t->flags[k] | TL_FLAG_SAT_CROSS_IM);
        t->flags[k] = (uint8_t)(t->flags[k] | p->flags[k]);
        for (uint32_t b = 0; b + 1u < TL_STATES; b++) {
            tl_cal_sums *tc = &t->cal[b];
            const tl_cal_sums *pc = &p->cal[b];
            for (uint32_t i = 0; i < p->inputs; i++) {
                sat = 0;
                tc->auto_power[i][k] = tl_sat_add_u64(tc->auto_power[i][k], pc->auto_power[i][k], &sat);
                if (sat)
                    tc->flags[k] = (uint8_t)(tc->flags[k] | (i == 0 ? TL_FLAG_SAT_AUTO0 : TL_FLAG_SAT_AUTO1));
            }
            sat = 0;
            tc->cross_re[k] = tl_sat_add_s64(tc->cross_re[k], pc->cross_re[k], &sat);
            if (sat)
                tc->flags[k] = (uint8_t)(tc->flags[k] | TL_FLAG_SAT_CROSS_RE);
            sat = 0;
            tc->cross_im[k] = tl_sat_add_s64(tc->cross_im[k], pc->cross_im[k], &sat);
            if (sat)
                tc->flags[k] = (uint8_t)(tc->flags[k] | TL_FLAG_SAT_CROSS_IM);
            tc->flags[k] = (uint8_t)(tc->flags[k] | pc->flags[k]);
        }
    }
    t->antenna_spectra += p->antenna_spectra;
    t->discarded += p->discarded;
    for (uint32_t b = 0; b + 1u < TL_STATES; b++) {
        t->cal[b].spectra += p->cal[b].spectra;
        for (unsigned i = 0; i < 4; i++)
            tl_count_add(&t->cal[b].acc_sat[i], p->cal[b].acc_sat[i]);
    }
}

static void add_stats(tl_stats *t, const tl_stats *s)
{
    for (unsigned i = 0; i < TL_MAX_INPUTS; i++) {
        tl_count_add(&t->adc_clips[i], s->adc_clips[i]);
        tl_count_add(&t->pfb_sat[i], s->pfb_sat[i]);
        for (unsigned st = 0; st <= TL_MAX_FFT_STAGES; st++)
            tl_count_add(&t->fft_sat[i][st], s->fft_sat[i][st]);
        for (unsigned b = 0; b < TL_ADC_HIST_BINS; b++)
            tl_count_add(&t->adc_hist[i][b], s->adc_hist[i][b]);
        t->adc_sumsq[i] = (UINT64_MAX - t->adc_sumsq[i] < s->adc_sumsq[i]) ? UINT64_MAX
                                                                            : t->adc_sumsq[i] + s->adc_sumsq[i];
    }
    for (unsigned i = 0; i < 4; i++)
        tl_count_add(&t->acc_sat[i], s->acc_sat[i]);
}

/* Channel totals over blocks. */
static double total(const block_sums *b, int prod, uint32_t k, double scale)
{
    double s = 0.0;
    for (uint32_t j = 0; j < b->blocks; j++)
        s += at(b, prod, j)[k];
    return s * scale;
}

/* Denominator of d_k for a product, from reference totals. */
static double denom(const block_sums *ref, int prod, uint32_t k, double scale)
{
    if (prod == TL_FID_AUTO0 || prod == TL_FID_AUTO1)
        return total(ref, prod, k, scale);
    return sqrt(total(ref, TL_FID_AUTO0, k, scale) * total(ref, TL_FID_AUTO1, k, scale) / 2.0);
}

/* Metrics of fix against ref (ref scaled by rscale into fix's units). */
static void metrics(const block_sums *fix, const block_sums *ref, double rscale, int prod, uint32_t lo, uint32_t hi,
                    uint32_t M, double expected_delta_per_spectrum, const double *gain_err, tl_fid_metrics *m)
{
    const uint32_t J = fix->blocks, K = hi - lo;
    double *beta = calloc(J, sizeof(double));
    double *d = calloc(K, sizeof(double));
    double *se = calloc(K, sizeof(double));
    double *pk = calloc(K, sizeof(double));
    if (beta == NULL || d == NULL || se == NULL || pk == NULL) {
        free(beta);
        free(d);
        free(se);
        free(pk);
        return;
    }
    double pred = 0.0;
    for (uint32_t i = 0; i < K; i++) {
        const uint32_t k = lo + i;
        const double den = denom(ref, prod, k, rscale);
        double s = 0.0, s2 = 0.0;
        for (uint32_t j = 0; j < J; j++) {
            const double u = (at(fix, prod, j)[k] - at(ref, prod, j)[k] * rscale) / den;
            s += u;
            s2 += u * u;
            beta[j] += u / K;
        }
        d[i] = s;
        const double var = (s2 - s * s / J) / (J - 1);
        se[i] = sqrt(J * (var > 0.0 ? var : 0.0));
        /* additive round-off, plus the channel's multiplicative twiddle gain
         * error: auto sums scale by (1 + g_k), cross sums too (both inputs
         * share it) */
        pk[i] = (M * expected_delta_per_spectrum + gain_err[k] * total(ref, prod, k, rscale)) / den;
        pred += pk[i];
    }
    double b = 0.0, bs = 0.0, bs2 = 0.0;
    for (uint32_t j = 0; j < J; j++) {
        b += beta[j];
        bs += beta[j];
        bs2 += beta[j] * beta[j];
    }
    const double bvar = (bs2 - bs * bs / J) / (J - 1);
    m->present = 1;
    m->bias = b;
    m->bias_se = sqrt(J * (bvar > 0.0 ? bvar : 0.0));
    m->bias_pred = pred / K;
    /* consistency: each channel against its own prediction, after removing
     * the band's common residual (b - bias_pred) */
    const double common = b - m->bias_pred;
    double ms = 0.0, mx = 0.0, dev = 0.0, chi2 = 0.0;
    for (uint32_t i = 0; i < K; i++) {
        ms += se[i] * se[i];
        if (fabs(d[i]) > mx)
            mx = fabs(d[i]);
        if (fabs(d[i] - b) > dev)
            dev = fabs(d[i] - b);
        const double r = d[i] - pk[i] - common;
        if (se[i] > 0.0)
            chi2 += r * r / (se[i] * se[i]);
    }
    const double sqm = sqrt((double)M);
    m->scatter1 = sqrt(ms / K) * sqm;
    m->margin = mx * sqm;
    m->max_dev = dev * sqm;
    m->chi2 = chi2;
    m->chi2_dof = K;
    const double nu = J - 1.0;
    const double et2 = nu / (nu - 2.0);
    const double vt2 = 3.0 * nu * nu / ((nu - 2.0) * (nu - 4.0)) - et2 * et2;
    m->chi2_z = (chi2 - K * et2) / sqrt(K * vt2);
    const double bound = fabs(b) + 2.0 * m->bias_se;
    m->m_reach = bound > 0.0 ? (0.01 / bound) * (0.01 / bound) : INFINITY;
    free(beta);
    free(d);
    free(se);
    free(pk);
}

/* Bias and max of fix against the ideal reference. */
static void ideal_metrics(const block_sums *fix, const block_sums *ideal, int prod, uint32_t lo, uint32_t hi,
                          uint32_t M, tl_fid_metrics *m)
{
    double sum = 0.0, mx = 0.0;
    for (uint32_t k = lo; k < hi; k++) {
        const double d = (total(fix, prod, k, 1.0) - total(ideal, prod, k, 1.0)) / denom(ideal, prod, k, 1.0);
        sum += d;
        if (fabs(d) > mx)
            mx = fabs(d);
    }
    m->ideal_bias = sum / (hi - lo);
    m->ideal_max = mx * sqrt((double)M);
}

tl_status tl_fidelity_run(const tl_fid_setup *su, tl_fid_result *res)
{
    memset(res, 0, sizeof *res);
    const tl_config *c0 = &su->cfg;
    const uint32_t N = c0->points, K = N / 2u;
    if (su->blocks < 6 || su->spectra % su->blocks != 0 || su->band_lo >= su->band_hi || su->band_hi > K ||
        su->source == NULL)
        return res->status = TL_E_INTEGRATION;
    const uint32_t M = su->spectra, J = su->blocks, Mb = M / J;
    const uint32_t sA = (c0->det_shift == TL_DET_SHIFT_AUTO) ? shift_for(M) : c0->det_shift;
    const int flight = su->flight_spectra > 0;
    const uint32_t sB = flight ? shift_for(su->flight_spectra) : sA;

    tl_chain *chA = malloc(sizeof *chA), *chB = malloc(sizeof *chB);
    tl_product *prod = malloc(sizeof *prod);
    tl_taps *ideal_taps = malloc(sizeof *ideal_taps);
    double *cq = malloc(sizeof(double) * TL_TAPS_MAX_COEFS), *ci = malloc(sizeof(double) * TL_TAPS_MAX_COEFS);
    int16_t *in0 = malloc(sizeof(int16_t) * N), *in1 = malloc(sizeof(int16_t) * N);
    double *prod_tmp0 = calloc(K, sizeof(double)), *prod_tmp1 = calloc(K, sizeof(double));
    block_sums fa = { 0 }, fb = { 0 }, rq = { 0 }, ri = { 0 };
    tl_ref *refq = NULL, *refi = NULL;
    tl_status st = TL_E_NULL;
    if (!chA || !chB || !prod || !ideal_taps || !cq || !ci || !in0 || !in1 || !prod_tmp0 || !prod_tmp1 || sums_alloc(&fa, J, K) ||
        sums_alloc(&fb, J, K) || sums_alloc(&rq, J, K) || sums_alloc(&ri, J, K))
        goto out;

    tl_config cfg = *c0;
    cfg.integration = Mb;
    cfg.det_shift = sA;
    if ((st = tl_chain_init(chA, &cfg, su->taps_image, su->taps_len)) != TL_OK)
        goto out;
    cfg.det_shift = sB;
    if ((st = tl_chain_init(chB, &cfg, su->taps_image, su->taps_len)) != TL_OK)
        goto out;

    /* quantized coefficients as doubles; ideal from the same design */
    const tl_taps *tq = &chA->taps;
    const size_t ncoef = (size_t)tq->taps * tq->points;
    for (size_t n = 0; n < ncoef; n++)
        cq[n] = tq->coef[n];
    int have_ideal = tl_taps_design(su->window, tq->taps, tq->points, ideal_taps, ci) == 0 &&
                     ideal_taps->shift == tq->shift;
    if (!have_ideal)
        memcpy(ci, cq, sizeof(double) * ncoef);
    refq = tl_ref_open(cq, tq->taps, tq->points, tq->shift, cfg.inputs, chA->fft.total_shift, sA);
    refi = tl_ref_open(ci, tq->taps, tq->points, tq->shift, cfg.inputs, chA->fft.total_shift, sA);
    if (!refq || !refi) {
        st = TL_E_NULL;
        goto out;
    }
    const int two = cfg.inputs == 2u;
    /* the harness follows the firmware's sequence for the reference */
    tl_switch sw;
    if ((st = tl_switch_init(&sw, cfg.switch_steps, cfg.switch_state, cfg.switch_dwell, cfg.switch_discard)) != TL_OK)
        goto out;
    for (uint32_t j = 0; j < J;) {
        const uint32_t sw_state = tl_switch_state(&sw);
        const int sw_keep = tl_switch_keep(&sw);
        tl_switch_advance(&sw);
        if (su->set_state != NULL)
            su->set_state(su->source_state, sw_state);
        su->source(su->source_state, in0, two ? in1 : NULL, N);
        size_t used = 0;
        if ((st = tl_chain_push(chA, in0, two ? in1 : NULL, N, &used)) != TL_OK)
            goto out;
        if ((st = tl_chain_push(chB, in0, two ? in1 : NULL, N, &used)) != TL_OK)
            goto out;
        tl_ref_push_frame_state(refq, in0, in1, sw_state, sw_keep);
        tl_ref_push_frame_state(refi, in0, in1, sw_state, sw_keep);
        if (!tl_chain_ready(chA))
            continue;
        tl_chain_take(chA, prod);
        store_product(&fa, j, prod);
        add_product(&res->product, prod, j == 0);
        add_stats(&res->stats, &prod->stats);
        for (uint32_t k = 0; k < K; k++)
            res->sat_flags += prod->flags[k] != 0u;
        tl_chain_take(chB, prod);
        store_product(&fb, j, prod);
        if (j < TL_FID_STATS_BLOCKS)
            res->block_stats[j] = prod->stats;
        res->ref_spectra[0] += tl_ref_take(refq, at(&rq, 0, j), at(&rq, 1, j), at(&rq, 2, j), at(&rq, 3, j));
        tl_ref_take(refi, at(&ri, 0, j), at(&ri, 1, j), at(&ri, 2, j), at(&ri, 3, j));
        for (uint32_t k = 0; k < K; k++) {
            res->ref_auto[0][0][k] += at(&rq, 0, j)[k];
            res->ref_auto[0][1][k] += at(&rq, 1, j)[k];
        }
        for (unsigned b = 1; b < TL_STATES; b++) { /* calibration states: not part of the fidelity figures,
                                                      kept for the calibrated comparison */
            res->ref_spectra[b] += tl_ref_take_state(refq, b, prod_tmp0, two ? prod_tmp1 : NULL, NULL, NULL);
            for (uint32_t k = 0; k < K; k++) {
                res->ref_auto[b][0][k] += prod_tmp0[k];
                res->ref_auto[b][1][k] += two ? prod_tmp1[k] : 0.0;
            }
            tl_ref_take_state(refi, b, NULL, NULL, NULL, NULL);
        }
        j++;
        if (su->progress != NULL)
            su->progress(su->progress_ctx, j, J);
    }
    res->product.spectra = M;
    res->product.stats = res->stats;

    tl_noise_prediction np;
    tl_noise_predict(N, chA->fft.scale_mask, (tl_rounding)cfg.rounding, tq->shift - 15u, sA, &np);
    /* the twiddles' per-channel power gain error (noise-free simulation) */
    double *tw_gain = calloc(K, sizeof(double));
    if (tw_gain == NULL || tl_twiddle_gain_channels(N, chA->fft.scale_mask, 256u, tw_gain) != 0) {
        free(tw_gain);
        st = TL_E_NULL;
        goto out;
    }
    double tw_mean = 0.0;
    for (uint32_t k = su->band_lo; k < su->band_hi; k++)
        tw_mean += tw_gain[k] / (su->band_hi - su->band_lo);
    res->twiddle_gain = tw_mean;
    res->noise_pred_lsb2 = np.total_noise;
    res->spectra = M;
    res->blocks = J;
    res->channels = K;
    res->band_lo = su->band_lo;
    res->band_hi = su->band_hi;
    res->det_shift = sA;
    res->flight_det_shift = sB;
    res->flight_spectra = su->flight_spectra;
    for (uint32_t i = 0; i < cfg.inputs; i++) {
        double s = 0.0;
        for (uint32_t k = su->band_lo; k < su->band_hi; k++)
            s += total(&rq, (int)i, k, 1.0);
        res->mean_power_lsb2[i] = s / (su->band_hi - su->band_lo) / res->product.antenna_spectra * ldexp(1.0, (int)sA);
    }
    tl_noise_prediction npB;
    tl_noise_predict(N, chA->fft.scale_mask, (tl_rounding)cfg.rounding, tq->shift - 15u, sB, &npB);
    const double rscaleB = ldexp(1.0, (int)sA - (int)sB);
    /* with switching only the antenna's spectra are in the compared sums */
    const uint32_t Ma = res->product.antenna_spectra;
    for (int p = 0; p < TL_FID_PRODUCTS; p++) {
        if (!two && p != TL_FID_AUTO0)
            continue;
        const int is_auto = p == TL_FID_AUTO0 || p == TL_FID_AUTO1;
        /* expected firmware-minus-reference per spectrum, firmware units */
        const double eA = (is_auto ? np.total_noise : 0.0) * ldexp(1.0, -(int)sA) + np.det_mean * ldexp(1.0, -(int)sA);
        const double eB = (is_auto ? npB.total_noise : 0.0) * ldexp(1.0, -(int)sB) + npB.det_mean * ldexp(1.0, -(int)sB);
        metrics(&fa, &rq, 1.0, p, su->band_lo, su->band_hi, Ma, eA, tw_gain, &res->main[p]);
        ideal_metrics(&fa, &ri, p, su->band_lo, su->band_hi, Ma, &res->main[p]);
        if (flight) {
            metrics(&fb, &rq, rscaleB, p, su->band_lo, su->band_hi, Ma, eB, tw_gain, &res->flight[p]);
            /* Both passes see identical FFT outputs; they differ only in the
             * detection shift, whose mean rounding error is analytic (and the
             * flight pass must agree with it). Bias at M': the precisely
             * measured main-pass bias plus that analytic difference. */
            const tl_fid_metrics *a = &res->main[p], *f = &res->flight[p];
            const double det_delta = f->bias_pred - a->bias_pred;
            res->margin_ext[p] = (fabs(a->bias) + 3.0 * a->bias_se + fabs(det_delta)) * sqrt((double)su->flight_spectra) +
                                 f->max_dev;
        }
    }
    free(tw_gain);
out:
    tl_ref_close(refq);
    tl_ref_close(refi);
    sums_free(&fa);
    sums_free(&fb);
    sums_free(&rq);
    sums_free(&ri);
    free(chA);
    free(chB);
    free(prod);
    free(ideal_taps);
    free(cq);
    free(ci);
    free(in0);
    free(in1);
    free(prod_tmp0);
    free(prod_tmp1);
    res->status = st;
    return st;
}

static const char *const product_names[TL_FID_PRODUCTS] = { "auto0", "auto1", "cross_re", "cross_im" };

const char *tl_fidelity_product_name(int p)
{
    return (p >= 0 && p < TL_FID_PRODUCTS) ? product_names[p] : "?";
}

int tl_fidelity_verdict(const tl_fid_result *r, char *why, size_t cap)
{
    int fails = 0;
    size_t used = 0;
    if (why != NULL && cap > 0)
        why[0] = '\0';
#define FAIL(...)                                                                                                     \
    do {                                                                                                              \
        fails++;                                                                                                      \
        if (why != NULL && used < cap) {                                                                              \
            int w = snprintf(why + used, cap - used, __VA_ARGS__);                                                     \
            used += (w > 0) ? (size_t)w : 0u;                                                                         \
        }                                                                                                             \
    } while (0)
    if (r->status != TL_OK)
        FAIL("run failed: %s\n", tl_status_text(r->status));
    for (int p = 0; p < TL_FID_PRODUCTS; p++) {
        const tl_fid_metrics *m = &r->main[p];
        if (!m->present)
            continue;
        const char *n = product_names[p];
        if (!(m->margin < TL_FID_MARGIN_MAX))
            FAIL("%s: margin %.3g at M=%u is not below %.3g\n", n, m->margin, r->spectra, TL_FID_MARGIN_MAX);
        if (!(fabs(m->bias) < TL_FID_BIAS_MAX))
            FAIL("%s: |bias| %.3g is not below %.3g\n", n, fabs(m->bias), TL_FID_BIAS_MAX);
        if (!(m->bias_se < TL_FID_BIAS_SE_MAX))
            FAIL("%s: bias standard error %.3g is not below %.3g\n", n, m->bias_se, TL_FID_BIAS_SE_MAX);
        if (!(fabs(m->chi2_z) < TL_FID_CHI2_Z_MAX))
            FAIL("%s: per-channel biases inconsistent: chi2/K %.4f, z %.2f\n", n, m->chi2 / m->chi2_dof, m->chi2_z);
        if (!(fabs(m->bias - m->bias_pred) <= TL_FID_PRED_SIGMAS * m->bias_se + 0.05 * fabs(m->bias_pred)))
            FAIL("%s: bias %.3g disagrees with the prediction %.3g (se %.3g)\n", n, m->bias, m->bias_pred, m->bias_se);
        const tl_fid_metrics *f = &r->flight[p];
        if (r->flight_spectra > 0 &&
            !(fabs(f->bias - f->bias_pred) <= TL_FID_PRED_SIGMAS * f->bias_se + 0.05 * fabs(f->bias_pred)))
            FAIL("%s: flight-shift bias %.3g disagrees with the prediction %.3g (se %.3g)\n", n, f->bias, f->bias_pred,
                 f->bias_se);
        if (r->flight_spectra > 0 && !(r->margin_ext[p] < TL_FID_MARGIN_MAX))
            FAIL("%s: extrapolated margin %.3g at M=%u is not below %.3g\n", n, r->margin_ext[p], r->flight_spectra,
                 TL_FID_MARGIN_MAX);
    }
#undef FAIL
    return fails;
}
