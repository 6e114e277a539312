/*
 * acquisition.h - the processor-speed model: which ADC capture blocks the
 * firmware processes and which arrive while it is busy and are dropped
 * (docs/acquisition.md).
 *
 * The ADC delivers capture blocks of B samples per input at the sample
 * rate fs: block k (from 0) is complete at a_k = (k + 1) B / fs. The
 * processor spends c = B x I x CPI cycles on a block, I the instructions
 * per input sample summed over the stages ([processor] in the scenario),
 * so it is busy for S = c / f_clk seconds per block. K capture buffers
 * hold a block from its arrival until its processing ends; blocks are
 * processed in arrival order; a block that arrives when all K buffers are
 * taken is dropped. A buffer freed at the same instant as an arrival is
 * free for it.
 *
 * Every time is an exact integer (unsigned 128-bit) in units of
 * 1 / (fs x f_clk x 10^6) s, with I and CPI taken in thousandths, so the
 * simulation and the closed form agree to the block.
 *
 * Closed form, load rho = S / (B / fs) = fs x I x CPI / f_clk:
 *   rho <= 1:         every block is processed (duty 1);
 *   rho > 1, K >= 2:  the processor never idles; of n blocks,
 *                     min(n, K + floor((n - 1) / rho)) are processed
 *                     (duty -> 1 / rho);
 *   rho > 1, K = 1:   the processor takes a block only when idle: blocks
 *                     0, m, 2m, ... with m = ceil(rho): ceil(n / m)
 *                     processed (duty -> 1 / m).
 */
#ifndef TL_HOST_ACQUISITION_H
#define TL_HOST_ACQUISITION_H

#include <stdint.h>
#include "scenario.h"
#include "tl_chain.h"

#define TL_ACQ_STAGES 6u /* filterbank, fft, detection, integration, encoding, packets */

extern const char *const tl_acq_stage_names[TL_ACQ_STAGES];

/* The model's integers. */
typedef struct tl_acq_model {
    uint64_t fs_hz;          /* sample rate, Hz (rounded to an integer) */
    uint64_t clock_hz;       /* processor clock, Hz (rounded) */
    uint64_t cpi_milli;      /* cycles per instruction x 1000 (rounded) */
    uint64_t ips_milli;      /* instructions per input sample x 1000, all stages (each rounded) */
    uint32_t block;          /* B, samples per input */
    uint32_t buffers;        /* K */
    unsigned __int128 T;     /* block period, in model units */
    unsigned __int128 S;     /* processing time of one block, in model units */
} tl_acq_model;

/* Set up the model from s ([processor] and the sample rate). Returns 0, or
 * -1 when a value is zero or out of range (tl_scenario_check catches it
 * first). */
int tl_acq_model_init(tl_acq_model *m, const tl_scenario *s);

/* rho = S / T as a double (for reports). */
double tl_acq_load(const tl_acq_model *m);

/* Closed form: blocks processed among the first n (see above). */
uint64_t tl_acq_predicted_kept(const tl_acq_model *m, uint64_t n);

/* Steady-state duty cycle predicted by the closed form (processed fraction
 * as n grows): 1, 1 / rho (K >= 2) or 1 / ceil(rho) (K = 1). */
double tl_acq_predicted_duty(const tl_acq_model *m);

/* The steady-state duty cycle of s's processor (closed form, as
 * tl_acq_predicted_duty), whether or not s drives the chain through the
 * model: the fraction of the ADC's samples the firmware processes. Returns
 * it in (0, 1], or -1 when s's [processor] values are out of range. */
double tl_acq_scenario_duty(const tl_scenario *s);

/* The event simulation, one block at a time. */
typedef struct tl_acq_sim {
    const tl_acq_model *m;
    uint64_t k;               /* next block */
    unsigned __int128 busy_until; /* end of the block in service (valid when busy) */
    int busy;
    uint32_t waiting;         /* blocks in buffers waiting for the processor */
    uint64_t kept, dropped;
} tl_acq_sim;

void tl_acq_sim_start(tl_acq_sim *q, const tl_acq_model *m);

/* Block q->k arrives: returns 1 when it finds a buffer (it will be
 * processed), 0 when it is dropped. */
int tl_acq_sim_next(tl_acq_sim *q);

/* What a run through the model experienced. */
typedef struct tl_acq_report {
    int done;
    double load;              /* rho */
    double predicted_duty;    /* steady state, closed form */
    uint64_t blocks;          /* arrived during the integration */
    uint64_t kept, dropped;   /* of them (the chain's counters agree) */
    uint64_t predicted_kept;  /* closed form for `blocks` */
    double experienced_duty;  /* kept / blocks */
    uint32_t gap_discarded;   /* spectra discarded because their history straddled a gap */
    uint32_t antenna_spectra; /* spectra integrated in the antenna state */
    double effective_s;       /* antenna_spectra x points / fs */
    double span_s;            /* blocks x B / fs: the time the integration took */
} tl_acq_report;

/* Run the chain alone on s's sky over one integration, the blocks going
 * through the model: a processed block is pushed (tl_chain_push) and
 * counted (tl_chain_block_kept), a dropped one is generated (the sky stays
 * continuous) and reported lost (tl_chain_gap). *p receives the product;
 * *r the figures. Spectral kurtosis is off in this pass. Returns TL_OK or
 * the first error. */
tl_status tl_acq_run(const tl_scenario *s, tl_product *p, tl_acq_report *r);

#endif
