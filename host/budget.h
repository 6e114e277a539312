/*
 * budget.h - the downlink budget of a scenario (`tidelock budget`).
 *
 * Nothing is assumed about compression: the scenario is simulated through
 * the firmware chain (tl_run_firmware) and its product is packetised and
 * framed with the firmware's own downlink code. Two products are measured:
 *   simulated   the integration the scenario simulates (M spectra);
 *   flight      one integration of the flight length M' ([fidelity]
 *               extrapolate_to, or M when 0): per switch state, each
 *               channel's mean per spectrum is taken from the simulated
 *               product, averaged over TL_BUDGET_SMOOTH channels around
 *               it (so the simulation's own noise, 1/sqrt(M) per channel,
 *               moves the channel-to-channel differences by at most
 *               sqrt(2)/(sqrt(M) x 257): 9e-5 relative for the default,
 *               below the flight noise, 1/sqrt(8.0e6) = 3.5e-4 for the
 *               default's antenna state), rescaled to
 *               the flight detection shift, and
 *               the flight sum is drawn as mean x n' + sqrt(n') x sigma x z
 *               (sigma = the single-spectrum standard deviation: the mean
 *               for a power, sqrt((P0 P1 + Re^2 - Im^2) / 2) for the real
 *               and sqrt((P0 P1 - Re^2 + Im^2) / 2) for the imaginary part
 *               of a cross-power of complex Gaussian voltages), z standard
 *               normal from the scenario's seed. Lossless compression
 *               depends on those noise bits, so this is the product the
 *               budget uses.
 * The volumes follow from the flight product's link octets (packets in
 * frames, with the frame overhead), its duration M' x points / rate, and
 * the observing fractions of the lunar night and day (a synodic month of
 * 29.530589 days, common practice, no source; night and day half each).
 * The budget closes when the peak volume per Earth day fits the allocation
 * and the link time, and the volume between passes fits the storage.
 *
 * Processing budget (tl_budget_processing, no simulation): the
 * instructions per sample instant of each stage ([processor], measured on
 * the Cortex-M7 build, docs/performance.md) times the sample rate give the
 * instructions per second the chain needs; times cycles per instruction,
 * the cycles per second; against the clock, the load rho = need / clock,
 * the sustainable real-time fraction min(1, 1 / rho) and the headroom
 * 1 - rho (negative: the processor cannot keep up). The budget closes only
 * when the headroom is >= 0 as well.
 */
#ifndef TL_HOST_BUDGET_H
#define TL_HOST_BUDGET_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include "downlink_out.h"
#include "scenario.h"

#define TL_SYNODIC_MONTH_DAYS 29.530589
#define TL_BUDGET_SMOOTH 257u /* channels in the running mean of the flight product's spectrum */

typedef struct tl_budget {
    uint32_t sim_spectra, flight_spectra;
    double product_s;              /* one flight integration, s */
    tl_dl_result sim, flight;      /* packets of the two products */
    uint32_t sk_blocks_flight;     /* spectral kurtosis blocks per flight integration (0: off) */
    double sk_octets_per_block;    /* their packets, measured on the simulated blocks */
    double link_octets;            /* flight product on the link: packets in frames incl. sync markers */
    double frame_efficiency;       /* packet octets / link octets */
    double rate_bps;               /* while observing */
    double per_hour, per_night, per_day, per_lunation; /* octets */
    double peak_per_earth_day, mean_per_earth_day;     /* octets */
    double capacity_per_earth_day; /* link octets the passes carry per Earth day */
    double link_hours_needed;      /* per Earth day at the peak */
    double storage_needed;         /* octets accumulated between passes at the peak rate */
    double margin_allocation, margin_link, margin_storage; /* (available - need) / available */
    /* processing */
    double ips[6];                 /* instructions per sample instant by stage (acquisition.h names) */
    double ips_total;
    double instr_per_s, cycles_per_s, clock_hz;
    double load;                   /* cycles per second needed / clock */
    double realtime_fraction;      /* min(1, 1 / load) */
    double headroom;               /* 1 - load */
    int closed;
} tl_budget;

/* The processing figures of s into b (the fields under "processing"). */
void tl_budget_processing(const tl_scenario *s, tl_budget *b);

/* Simulate, packetise and compute. Returns 0, or -1 with one line in err. */
int tl_budget_compute(const tl_scenario *s, tl_budget *b, char *err, size_t cap);

/* The table. */
void tl_budget_print(FILE *out, const tl_scenario *s, const tl_budget *b);

/* DIR/budget.json (atomic). Returns 0 or -1 with one line in err. */
int tl_budget_write_json(const char *path, const tl_scenario *s, const tl_budget *b, char *err, size_t cap);

#endif
