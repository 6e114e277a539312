/* acquisition.c - the processor-speed model (see acquisition.h). */
#include "acquisition.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "sky_noise.h"

const char *const tl_acq_stage_names[TL_ACQ_STAGES] = { "filterbank", "fft",      "detection",
                                                        "integration", "encoding", "packets" };

typedef unsigned __int128 u128;

static uint64_t round_u64(double x)
{
    return (x <= 0.0 || !isfinite(x)) ? 0u : (uint64_t)llround(x);
}

int tl_acq_model_init(tl_acq_model *m, const tl_scenario *s)
{
    memset(m, 0, sizeof *m);
    m->fs_hz = round_u64(s->sky.sample_rate_hz);
    m->clock_hz = round_u64(s->proc_clock_hz);
    m->cpi_milli = round_u64(s->proc_cpi * 1000.0);
    for (uint32_t i = 0; i < TL_ACQ_STAGES; i++)
        m->ips_milli += round_u64(s->proc_ips[i] * 1000.0);
    m->block = s->proc_block;
    m->buffers = s->proc_buffers;
    if (m->fs_hz == 0u || m->clock_hz == 0u || m->cpi_milli == 0u || m->block == 0u || m->buffers == 0u)
        return -1;
    /* unit: 1 / (fs x f_clk x 10^6) s.  T = B / fs; S = B x I x CPI / f_clk */
    m->T = (u128)m->block * m->clock_hz * 1000000u;
    m->S = (u128)m->block * m->ips_milli * m->cpi_milli * m->fs_hz;
    return 0;
}

double tl_acq_load(const tl_acq_model *m)
{
    return m->T == 0u ? 0.0 : (double)m->S / (double)m->T;
}

uint64_t tl_acq_predicted_kept(const tl_acq_model *m, uint64_t n)
{
    if (n == 0u || m->S <= m->T)
        return n;
    if (m->buffers == 1u) {
        const u128 step = (m->S + m->T - 1u) / m->T; /* ceil(rho) */
        return (uint64_t)(((u128)n + step - 1u) / step);
    }
    const u128 k = (u128)m->buffers + (u128)(n - 1u) * m->T / m->S;
    return k < n ? (uint64_t)k : n;
}

double tl_acq_predicted_duty(const tl_acq_model *m)
{
    if (m->S <= m->T)
        return 1.0;
    if (m->buffers == 1u)
    {
        const unsigned __int128 every = (m->S + m->T - 1u) / m->T; /* m = ceil(rho), an integer */
        return 1.0 / (double)every;
    }
    return (double)m->T / (double)m->S;
}

void tl_acq_sim_start(tl_acq_sim *q, const tl_acq_model *m)
{
    memset(q, 0, sizeof *q);
    q->m = m;
}

int tl_acq_sim_next(tl_acq_sim *q)
{
    const u128 t = (u128)(q->k + 1u) * q->m->T; /* the block is complete */
    q->k++;
    /* blocks finished by now: the next waiting one starts where the last ended */
    while (q->busy && q->busy_until <= t) {
        if (q->waiting > 0u) {
            q->waiting--;
            q->busy_until += q->m->S;
        } else {
            q->busy = 0;
        }
    }
    const uint32_t in_buffers = (uint32_t)q->busy + q->waiting;
    if (in_buffers >= q->m->buffers) {
        q->dropped++;
        return 0;
    }
    if (!q->busy) {
        q->busy = 1;
        q->busy_until = t + q->m->S;
    } else {
        q->waiting++;
    }
    q->kept++;
    return 1;
}

tl_status tl_acq_run(const tl_scenario *s, tl_product *p, tl_acq_report *r)
{
    memset(r, 0, sizeof *r);
    tl_acq_model m;
    if (tl_acq_model_init(&m, s) != 0)
        return TL_E_INTEGRATION;
    uint8_t *img = NULL;
    size_t img_len = 0;
    if (tl_scenario_taps_image(s, 0, &img, &img_len) != 0)
        return TL_E_TABLE_FORMAT;
    tl_sky *sky = tl_scenario_sky(s);
    tl_chain *c = malloc(sizeof *c);
    const size_t B = m.block;
    int16_t *a = malloc(sizeof *a * B), *b = malloc(sizeof *b * B);
    tl_status st = TL_E_NULL;
    if (sky != NULL && c != NULL && a != NULL && b != NULL) {
        tl_config cfg = s->cfg;
        cfg.integration = s->spectra;
        cfg.sk_spectra = 0;
        st = tl_chain_init(c, &cfg, img, img_len);
        const uint32_t N = cfg.points;
        tl_acq_sim q;
        tl_acq_sim_start(&q, &m);
        while (st == TL_OK && !tl_chain_ready(c)) {
            const int keep = tl_acq_sim_next(&q);
            /* the sky runs on whether or not the block is processed; the
             * switch state is the chain's (it holds while blocks are lost) */
            for (size_t f = 0; f < B; f += N) {
                if (s->cfg.switch_steps > 0u)
                    tl_sky_set_state(sky, tl_chain_state(c));
                tl_sky_fill(sky, a + f, b + f, N);
                if (!keep)
                    continue;
                size_t used = 0;
                st = tl_chain_push(c, a + f, b + f, N, &used);
                if (st != TL_OK || tl_chain_ready(c))
                    break;
            }
            if (st != TL_OK)
                break;
            st = keep ? tl_chain_block_kept(c) : tl_chain_gap(c, 1u, B);
        }
        if (st == TL_OK)
            st = tl_chain_take(c, p);
        if (st == TL_OK) {
            r->done = 1;
            r->load = tl_acq_load(&m);
            r->predicted_duty = tl_acq_predicted_duty(&m);
            r->blocks = q.k;
            r->kept = q.kept;
            r->dropped = q.dropped;
            r->predicted_kept = tl_acq_predicted_kept(&m, q.k);
            r->experienced_duty = q.k ? (double)q.kept / (double)q.k : 1.0;
            r->gap_discarded = p->acq.gap_discarded;
            r->antenna_spectra = p->antenna_spectra;
            r->effective_s = (double)p->antenna_spectra * N / (double)m.fs_hz;
            r->span_s = (double)q.k * (double)B / (double)m.fs_hz;
        }
    }
    tl_sky_close(sky);
    free(c);
    free(a);
    free(b);
    free(img);
    return st;
}

double tl_acq_scenario_duty(const tl_scenario *s)
{
    tl_acq_model m;
    if (tl_acq_model_init(&m, s) != 0)
        return -1.0;
    return tl_acq_predicted_duty(&m);
}
