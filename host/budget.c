/* budget.c - the downlink budget of a scenario (budget.h). */
#include "budget.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "acquisition.h"
#include "atomic_file.h"
#include "rng.h"
#include "run.h"
#include "tl_frame.h"

static uint64_t draw_u64(double mean, double sigma, tl_rng *r)
{
    const double v = mean + sigma * tl_rng_normal(r);
    if (!(v > 0.0))
        return 0u;
    if (v >= 18446744073709551615.0)
        return UINT64_MAX;
    return (uint64_t)llround(v);
}

static int64_t draw_i64(double mean, double sigma, tl_rng *r)
{
    const double v = mean + sigma * tl_rng_normal(r);
    if (v >= 9223372036854775807.0)
        return INT64_MAX;
    if (v <= -9223372036854775807.0)
        return -INT64_MAX;
    return (int64_t)llround(v);
}

/* Running mean over TL_BUDGET_SMOOTH channels (fewer at the ends) of
 * v[k] / n: the mean spectrum per spectrum with the simulated noise
 * averaged down (budget.h). */
static void smooth(const double *v, uint32_t channels, double *out)
{
    const uint32_t h = TL_BUDGET_SMOOTH / 2u;
    double acc = 0.0;
    uint32_t lo = 0, hi = 0; /* window [lo, hi) */
    for (uint32_t k = 0; k < channels; k++) {
        const uint32_t want_lo = k > h ? k - h : 0u, want_hi = k + h + 1u < channels ? k + h + 1u : channels;
        while (hi < want_hi)
            acc += v[hi++];
        while (lo < want_lo)
            acc -= v[lo++];
        out[k] = acc / (double)(hi - lo);
    }
}

/* The flight-length product from the simulated one (budget.h). */
static int flight_product(const tl_scenario *s, const tl_product *p, uint32_t m_flight, tl_product *f)
{
    *f = *p;
    tl_config c = s->cfg;
    c.integration = m_flight;
    f->det_shift = tl_config_det_shift(&c);
    const double rescale = ldexp(1.0, (int)p->det_shift - (int)f->det_shift);
    const double k = (double)m_flight / (double)p->spectra;
    f->spectra = m_flight;
    f->discarded = (uint32_t)llround(p->discarded * k);
    tl_rng r;
    tl_rng_seed(&r, s->sky.seed ^ 0x6275646765740000ull); /* "budget" */
    const uint32_t states = p->switch_steps ? 3u : 1u;
    for (uint32_t st = 0; st < states; st++) {
        const uint32_t n = st == 0 ? p->antenna_spectra : p->cal[st - 1].spectra;
        const uint32_t nf = (uint32_t)llround(n * k);
        if (st == 0)
            f->antenna_spectra = nf;
        else
            f->cal[st - 1].spectra = nf;
        if (n == 0u)
            continue;
        const uint64_t *a0 = st == 0 ? p->auto_power[0] : p->cal[st - 1].auto_power[0];
        const uint64_t *a1 = st == 0 ? p->auto_power[1] : p->cal[st - 1].auto_power[1];
        const int64_t *re = st == 0 ? p->cross_re : p->cal[st - 1].cross_re;
        const int64_t *im = st == 0 ? p->cross_im : p->cal[st - 1].cross_im;
        uint64_t *fa0 = st == 0 ? f->auto_power[0] : f->cal[st - 1].auto_power[0];
        uint64_t *fa1 = st == 0 ? f->auto_power[1] : f->cal[st - 1].auto_power[1];
        int64_t *fre = st == 0 ? f->cross_re : f->cal[st - 1].cross_re;
        int64_t *fim = st == 0 ? f->cross_im : f->cal[st - 1].cross_im;
        uint8_t *fl = st == 0 ? f->flags : f->cal[st - 1].flags;
        const double sq = sqrt((double)nf);
        const uint32_t C = p->channels;
        double *raw = malloc(sizeof *raw * C), *mean = malloc(sizeof *mean * C * 4u);
        if (raw == NULL || mean == NULL) {
            free(raw);
            free(mean);
            return -1;
        }
        for (uint32_t q = 0; q < (p->inputs == 2u ? 4u : 1u); q++) {
            for (uint32_t ch = 0; ch < C; ch++)
                raw[ch] = (q == 0 ? (double)a0[ch] : q == 1 ? (double)a1[ch] : q == 2 ? (double)re[ch] : (double)im[ch]) /
                          n * rescale;
            smooth(raw, C, mean + (size_t)q * C);
        }
        for (uint32_t ch = 0; ch < C; ch++) {
            const double m0 = mean[ch];
            fa0[ch] = draw_u64(m0 * nf, m0 * sq, &r);
            fl[ch] = 0;
            if (p->inputs == 2u) {
                const double m1 = mean[C + ch];
                const double mr = mean[2u * C + ch], mi = mean[3u * C + ch];
                fa1[ch] = draw_u64(m1 * nf, m1 * sq, &r);
                const double vr = fmax(0.5 * (m0 * m1 + mr * mr - mi * mi), 0.0);
                const double vi = fmax(0.5 * (m0 * m1 - mr * mr + mi * mi), 0.0);
                fre[ch] = draw_i64(mr * nf, sqrt(vr) * sq, &r);
                fim[ch] = draw_i64(mi * nf, sqrt(vi) * sq, &r);
            }
        }
        free(raw);
        free(mean);
    }
    return 0;
}

int tl_budget_compute(const tl_scenario *s, tl_budget *b, char *err, size_t cap)
{
    memset(b, 0, sizeof *b);
    tl_product *p = malloc(sizeof *p), *f = malloc(sizeof *f);
    int rc = -1;
    if (p == NULL || f == NULL) {
        snprintf(err, cap, "budget: out of memory");
        goto out;
    }
    tl_run_result *rr = calloc(1, sizeof *rr); /* only its kurtosis part is used */
    if (rr == NULL) {
        snprintf(err, cap, "budget: out of memory");
        goto out;
    }
    const tl_status st = s->cfg.sk_spectra ? tl_run_kurtosis(s, p, &rr->sk) : tl_run_firmware(s, p);
    if (st != TL_OK) {
        snprintf(err, cap, "budget: scenario %s: %s (%s)", s->name, tl_status_text(st), tl_status_name(st));
        free(rr);
        goto out;
    }
    b->sim_spectra = s->spectra;
    b->flight_spectra = s->flight_spectra ? s->flight_spectra : s->spectra;
    const int mk = tl_downlink_out_make_all(s, p, rr->sk.blocks, rr->sk.nblocks, &b->sim, NULL, NULL, NULL, NULL, err,
                                            cap);
    const uint32_t sim_blocks = rr->sk.nblocks;
    tl_run_release(rr);
    free(rr);
    if (mk != 0)
        goto out;
    if (flight_product(s, p, b->flight_spectra, f) != 0) {
        snprintf(err, cap, "budget: out of memory");
        goto out;
    }

    if (tl_downlink_out_make(s, f, &b->flight, NULL, NULL, NULL, NULL, err, cap) != 0)
        goto out;
    /* kurtosis blocks of the flight integration: the simulated blocks'
     * octets per block (an upper bound: the flight's larger detection shift
     * leaves fewer bits in P) times the flight's blocks */
    if (s->cfg.sk_spectra > 0u && sim_blocks > 0u) {
        b->sk_blocks_flight = f->antenna_spectra / (s->cfg.sk_spectra * (s->cfg.sk_accumulate ? s->cfg.sk_accumulate : 1u));
        b->sk_octets_per_block = (double)b->sim.octets_sk / sim_blocks;
    }
    const double pk = (double)(b->flight.octets_science + b->flight.octets_hk) +
                      b->sk_octets_per_block * b->sk_blocks_flight;
    /* in a continuous stream the frames carry packets back to back: the
     * link octets are the packet octets times wire length over data length */
    b->link_octets = pk * (double)TL_FRAME_WIRE_LEN(s->dl_frame_len) / (double)TL_FRAME_DATA_LEN(s->dl_frame_len);
    b->frame_efficiency = pk / b->link_octets;
    b->product_s = (double)b->flight_spectra * s->cfg.points / s->sky.sample_rate_hz;
    b->rate_bps = 8.0 * b->link_octets / b->product_s;
    b->per_hour = b->link_octets * 3600.0 / b->product_s;
    const double half = 0.5 * TL_SYNODIC_MONTH_DAYS * 86400.0;
    b->per_night = b->link_octets / b->product_s * half * s->bud_night_fraction;
    b->per_day = b->link_octets / b->product_s * half * s->bud_day_fraction;
    b->per_lunation = b->per_night + b->per_day;
    const double peak_fraction = fmax(s->bud_night_fraction, s->bud_day_fraction);
    b->peak_per_earth_day = b->link_octets / b->product_s * 86400.0 * peak_fraction;
    b->mean_per_earth_day = b->per_lunation / TL_SYNODIC_MONTH_DAYS;
    const double passes_per_day = 24.0 / s->bud_contact_h;
    b->capacity_per_earth_day = s->bud_rate_bps / 8.0 * s->bud_pass_h * 3600.0 * passes_per_day;
    b->link_hours_needed = b->peak_per_earth_day * 8.0 / s->bud_rate_bps / 3600.0;
    b->storage_needed = b->link_octets / b->product_s * s->bud_contact_h * 3600.0 * peak_fraction;
    b->margin_allocation = (s->bud_alloc_bytes_day - b->peak_per_earth_day) / s->bud_alloc_bytes_day;
    b->margin_link = (b->capacity_per_earth_day - b->peak_per_earth_day) / b->capacity_per_earth_day;
    b->margin_storage = (s->bud_storage_bytes - b->storage_needed) / s->bud_storage_bytes;
    tl_budget_processing(s, b);
    b->closed = b->margin_allocation >= 0.0 && b->margin_link >= 0.0 && b->margin_storage >= 0.0 && b->headroom >= 0.0;
    rc = 0;
out:
    free(p);
    free(f);
    return rc;
}

void tl_budget_processing(const tl_scenario *s, tl_budget *b)
{
    b->ips_total = 0.0;
    for (uint32_t i = 0; i < TL_ACQ_STAGES; i++) {
        b->ips[i] = s->proc_ips[i];
        b->ips_total += s->proc_ips[i];
    }
    b->instr_per_s = b->ips_total * s->sky.sample_rate_hz;
    b->cycles_per_s = b->instr_per_s * s->proc_cpi;
    b->clock_hz = s->proc_clock_hz;
    b->load = b->cycles_per_s / b->clock_hz;
    b->realtime_fraction = b->load > 1.0 ? 1.0 / b->load : 1.0;
    b->headroom = 1.0 - b->load;
}

static double ratio(const tl_dl_result *d)
{
    return d->octets_science ? (double)d->octets_raw / (double)d->octets_science : 0.0;
}

void tl_budget_print(FILE *out, const tl_scenario *s, const tl_budget *b)
{
    fprintf(out, "tidelock budget: scenario %s\n", s->name);
    fprintf(out, "downlink: %s encoding%s, packets <= %u octets, frames of %u + 4 octets\n",
            s->dl_encoding ? "noise-bounded" : "lossless", s->dl_encoding ? "" : " (every bit of the sums)",
            s->dl_max_packet, s->dl_frame_len);
    fprintf(out, "product, simulated (%u spectra): %u + %u packets, %llu octets, compression x%.2f\n", b->sim_spectra,
            b->sim.packets_science, b->sim.packets_hk,
            (unsigned long long)b->sim.octets_science + b->sim.octets_hk, ratio(&b->sim));
    fprintf(out, "product, flight (%u spectra = %.1f s; the measured spectrum with the flight's noise): %u + %u "
                 "packets, %llu octets, compression x%.2f\n",
            b->flight_spectra, b->product_s, b->flight.packets_science, b->flight.packets_hk,
            (unsigned long long)b->flight.octets_science + b->flight.octets_hk, ratio(&b->flight));
    if (b->sk_blocks_flight)
        fprintf(out, "spectral kurtosis: %u blocks of %u x %u spectra per flight integration x %.0f octets = %.0f "
                     "octets (measured on the %u-spectrum simulation: an upper bound)\n",
                b->sk_blocks_flight, s->cfg.sk_spectra, s->cfg.sk_accumulate, b->sk_octets_per_block,
                b->sk_octets_per_block * b->sk_blocks_flight, b->sim_spectra);
    fprintf(out, "on the link: %.0f octets per product (frames %.1f%% efficient), %.1f bit/s while observing\n",
            b->link_octets, 100.0 * b->frame_efficiency, b->rate_bps);
    fprintf(out, "volume: %.3f MB per hour observing; %.2f MB per lunar night (%.0f%% observing), %.2f MB per lunar "
                 "day (%.0f%%), %.2f MB per lunation; %.2f MB per Earth day at the peak, %.2f on average\n",
            b->per_hour / 1e6, b->per_night / 1e6, 100.0 * s->bud_night_fraction, b->per_day / 1e6,
            100.0 * s->bud_day_fraction, b->per_lunation / 1e6, b->peak_per_earth_day / 1e6,
            b->mean_per_earth_day / 1e6);
    fprintf(out, "  %-34s %12s %12s %8s\n", "item", "need", "available", "margin");
    fprintf(out, "  %-34s %9.2f MB %9.2f MB %+7.1f%%\n", "downlink per Earth day (peak)", b->peak_per_earth_day / 1e6,
            s->bud_alloc_bytes_day / 1e6, 100.0 * b->margin_allocation);
    fprintf(out, "  %-34s %10.3f h %10.3f h %+7.1f%%\n", "link time per Earth day", b->link_hours_needed,
            s->bud_pass_h * 24.0 / s->bud_contact_h, 100.0 * b->margin_link);
    fprintf(out, "  %-34s %9.2f MB %9.2f MB %+7.1f%%\n", "storage between passes", b->storage_needed / 1e6,
            s->bud_storage_bytes / 1e6, 100.0 * b->margin_storage);
    fprintf(out, "  (link %.1f kbit/s, a %.2f h pass every %.1f h)\n", s->bud_rate_bps / 1e3, s->bud_pass_h,
            s->bud_contact_h);
    fprintf(out, "processing at %.3f Msample/s (instructions per sample instant, all inputs; [processor]):\n",
            s->sky.sample_rate_hz / 1e6);
    for (uint32_t i = 0; i < TL_ACQ_STAGES; i++)
        fprintf(out, "  %-12s %10.3f instructions/sample %8.1f%%\n", tl_acq_stage_names[i], b->ips[i],
                b->ips_total > 0.0 ? 100.0 * b->ips[i] / b->ips_total : 0.0);
    fprintf(out, "  %-12s %10.3f instructions/sample = %.4g instructions/s x CPI %.2f = %.4g cycles/s\n", "total",
            b->ips_total, b->instr_per_s, s->proc_cpi, b->cycles_per_s);
    fprintf(out, "  %-34s %9.4g Hz %9.4g Hz %+7.1f%%\n", "processor cycles per second", b->cycles_per_s, b->clock_hz,
            100.0 * b->headroom);
    fprintf(out, "  load %.4f: sustainable real-time fraction %.4f, headroom %+.1f%%\n", b->load,
            b->realtime_fraction, 100.0 * b->headroom);
    if (b->closed)
        fprintf(out, "budget: CLOSED (every margin >= 0)\n");
    else
        fprintf(out, "budget: OPEN (a negative margin above)\n");
}

static json_t *dl_json(const tl_dl_result *d)
{
    return json_pack("{s:i, s:i, s:I, s:I, s:I, s:f}", "packets_science", (json_int_t)d->packets_science,
                     "packets_housekeeping", (json_int_t)d->packets_hk, "octets_science",
                     (json_int_t)d->octets_science, "octets_housekeeping", (json_int_t)d->octets_hk,
                     "octets_uncompressed", (json_int_t)d->octets_raw, "compression", ratio(d));
}

static int dump(FILE *f, void *root)
{
    return json_dumpf((json_t *)root, f, JSON_INDENT(2) | JSON_REAL_PRECISION(10)) == 0 ? 0 : -1;
}

int tl_budget_write_json(const char *path, const tl_scenario *s, const tl_budget *b, char *err, size_t cap)
{
    json_t *root = json_object();
    json_object_set_new(root, "scenario", json_string(s->name));
    json_object_set_new(root, "encoding", json_string(s->dl_encoding ? "bounded" : "lossless"));
    json_object_set_new(root, "simulated_spectra", json_integer(b->sim_spectra));
    json_object_set_new(root, "flight_spectra", json_integer(b->flight_spectra));
    json_object_set_new(root, "product_s", json_real(b->product_s));
    json_object_set_new(root, "simulated", dl_json(&b->sim));
    json_object_set_new(root, "flight", dl_json(&b->flight));
    json_object_set_new(root, "kurtosis_blocks_per_product", json_integer(b->sk_blocks_flight));
    json_object_set_new(root, "kurtosis_octets_per_block", json_real(b->sk_octets_per_block));
    json_object_set_new(root, "link_octets_per_product", json_real(b->link_octets));
    json_t *pr = json_object(), *st = json_object();
    for (uint32_t i = 0; i < TL_ACQ_STAGES; i++)
        json_object_set_new(st, tl_acq_stage_names[i], json_real(b->ips[i]));
    json_object_set_new(pr, "instructions_per_sample", st);
    json_object_set_new(pr, "instructions_per_sample_total", json_real(b->ips_total));
    json_object_set_new(pr, "instructions_per_s", json_real(b->instr_per_s));
    json_object_set_new(pr, "cycles_per_s", json_real(b->cycles_per_s));
    json_object_set_new(pr, "clock_hz", json_real(b->clock_hz));
    json_object_set_new(pr, "load", json_real(b->load));
    json_object_set_new(pr, "realtime_fraction", json_real(b->realtime_fraction));
    json_object_set_new(pr, "headroom", json_real(b->headroom));
    json_object_set_new(root, "processing", pr);
    json_object_set_new(root, "frame_efficiency", json_real(b->frame_efficiency));
    json_object_set_new(root, "rate_bps", json_real(b->rate_bps));
    json_object_set_new(root, "octets_per_hour", json_real(b->per_hour));
    json_object_set_new(root, "octets_per_lunar_night", json_real(b->per_night));
    json_object_set_new(root, "octets_per_lunar_day", json_real(b->per_day));
    json_object_set_new(root, "octets_per_lunation", json_real(b->per_lunation));
    json_object_set_new(root, "octets_per_earth_day_peak", json_real(b->peak_per_earth_day));
    json_object_set_new(root, "octets_per_earth_day_mean", json_real(b->mean_per_earth_day));
    json_object_set_new(root, "link_capacity_octets_per_earth_day", json_real(b->capacity_per_earth_day));
    json_object_set_new(root, "link_hours_needed_per_earth_day", json_real(b->link_hours_needed));
    json_object_set_new(root, "storage_needed_octets", json_real(b->storage_needed));
    json_object_set_new(root, "margins", json_pack("{s:f, s:f, s:f}", "allocation", b->margin_allocation, "link",
                                                   b->margin_link, "storage", b->margin_storage));
    json_object_set_new(root, "closed", json_boolean(b->closed));
    const int rc = tl_atomic_write(path, dump, root, err, cap);
    json_decref(root);
    return rc;
}
