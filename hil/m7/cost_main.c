/*
 * cost_main.c - processing cost of each firmware stage on the Cortex-M7
 * build, for the processing budget (docs/performance.md, `make
 * processing-budget`).
 *
 * Runs the default scenario's configuration (8192 points, 4 taps, two
 * 14-bit inputs, detection shift 13, round half to even, the built-in
 * coefficient table) on a fixed pseudo-random workload and times each stage
 * with the SysTick counter on the processor clock. Under QEMU with
 * `-icount shift=0` virtual time advances exactly 1 ns per instruction, so
 * the elapsed time is an instruction count that repeats exactly from run to
 * run. The program first times a loop of known length to find how many
 * instructions one SysTick tick is (QEMU's mps2-an500 clocks SysTick at
 * 25 MHz: 40), then prints per stage the instructions per sample instant
 * (one sample of every input):
 *
 *   filterbank   tl_pfb_commit of both inputs, plus the chain's own work
 *                outside the four stages (input copy, ADC statistics,
 *                switch control): whole chain - fft - detection - integration
 *   fft          tl_fft_execute of both inputs
 *   detection    tl_detect_power of both inputs and tl_detect_cross
 *   integration  tl_integrate_power of both inputs and tl_integrate_cross
 *   encoding     tl_encode_lossless of the product's four quantities in
 *                pieces of TL_ENCODE_MAX_CHANNELS (instructions per product)
 *   packets      tl_downlink_product of the same product minus encoding:
 *                headers, CRC-16, time, the encoder's retries (per product)
 *
 * Encoding and packets are per product; the host divides them by the
 * samples of an integration (spectra x points). The SysTick counter is 24
 * bits: every timed piece is one frame or one product, far below 2^24 ticks.
 * No interrupt is used (the counter is polled).
 */
#include <stdint.h>
#include <string.h>
#include "semihost.h"
#include "tl_chain.h"
#include "tl_detect.h"
#include "tl_downlink.h"
#include "tl_encode.h"
#include "tl_fft.h"
#include "tl_integrate.h"
#include "tl_pfb.h"
#include "tl_taps.h"

#define SYST_CSR (*(volatile uint32_t *)0xE000E010u)
#define SYST_RVR (*(volatile uint32_t *)0xE000E014u)
#define SYST_CVR (*(volatile uint32_t *)0xE000E018u)

#define POINTS 8192u
#define CHANNELS (POINTS / 2u)
#define TAPS 4u
#define FRAMES 8u       /* timed frames */
#define DET_SHIFT 13u   /* ceil(log2(8192 spectra)) */
#define CAL_LOOPS 100000u

static tl_chain chain;
static tl_product product;
static tl_taps taps;
static tl_pfb pfb[2];
static tl_fft fft;
static tl_integrator integ;
static tl_encode enc;
static tl_downlink dl;
static int16_t x[2][(TAPS - 1u + FRAMES) * POINTS];
static int32_t y[POINTS], X[2][POINTS];
static uint64_t P[CHANNELS];
static int64_t cre[CHANNELS], cim[CHANNELS];
static uint8_t out[TL_ENCODE_LOSSLESS_BOUND(TL_ENCODE_MAX_CHANNELS)];
static uint32_t fft_sat[TL_MAX_FFT_STAGES + 1u], pfb_sat;

static void tick_start(void)
{
    SYST_CSR = 0u;
    SYST_RVR = 0x00FFFFFFu;
    SYST_CVR = 0u;
    SYST_CSR = 5u; /* enable, processor clock, no interrupt */
}

static uint32_t now(void)
{
    return SYST_CVR;
}

static uint32_t since(uint32_t t0)
{
    return (t0 - now()) & 0x00FFFFFFu; /* counts down */
}

/* A loop of exactly 2 instructions per turn (subs, bne). */
__attribute__((noinline)) static void known_loop(uint32_t n)
{
    __asm__ volatile("1: subs %0, %0, #1\n\tbne 1b" : "+r"(n) : : "cc");
}

static void put_u64(char *q, uint64_t v)
{
    char tmp[24];
    int n = 0;
    do {
        tmp[n++] = (char)('0' + (int)(v % 10u));
        v /= 10u;
    } while (v != 0u);
    while (n > 0)
        *q++ = tmp[--n];
    *q = '\0';
}

static void say_pair(const char *name, uint64_t total, uint64_t per)
{
    char line[128];
    char *q = line;
    const char *parts[] = { "cost ", name, " " };
    for (unsigned i = 0; i < 3u; i++)
        for (const char *s = parts[i]; *s != '\0'; s++)
            *q++ = *s;
    put_u64(q, total);
    while (*q != '\0')
        q++;
    *q++ = ' ';
    put_u64(q, per);
    semihost_say(line);
}

static void sink(void *user, const uint8_t *packet, size_t len)
{
    (void)packet;
    *(uint32_t *)user += (uint32_t)len;
}

int main(void)
{
    /* workload: a sum of four uniforms at about 1/8 of full scale, 14-bit codes left-aligned */
    uint64_t st = 0x9E3779B97F4A7C15u;
    for (uint32_t i = 0; i < 2u; i++)
        for (uint32_t n = 0; n < (TAPS - 1u + FRAMES) * POINTS; n++) {
            int32_t v = 0;
            for (int k = 0; k < 4; k++) {
                st ^= st << 13;
                st ^= st >> 7;
                st ^= st << 17;
                v += (int32_t)(st >> 53) - 1024;
            }
            x[i][n] = (int16_t)((v / 2) * 4);
        }
    tick_start();
    uint32_t t0 = now();
    known_loop(CAL_LOOPS);
    const uint32_t cal_ticks = since(t0);
    /* instructions per tick, rounded: the loop is 2 x CAL_LOOPS instructions plus the call */
    const uint32_t ipt = cal_ticks ? (2u * CAL_LOOPS + cal_ticks / 2u) / cal_ticks : 0u;
    say_pair("calibration_ticks", cal_ticks, ipt);
    if (ipt == 0u)
        return 2;

    tl_config cfg;
    tl_config_default(&cfg);
    cfg.integration = FRAMES; /* the product of the timed frames */
    cfg.det_shift = DET_SHIFT;
    if (tl_chain_init(&chain, &cfg, NULL, 0) != TL_OK || tl_taps_default(&taps) != TL_OK ||
        tl_pfb_init(&pfb[0], &taps, TL_ROUND_HALF_EVEN) != TL_OK ||
        tl_pfb_init(&pfb[1], &taps, TL_ROUND_HALF_EVEN) != TL_OK ||
        tl_fft_init(&fft, POINTS, TL_FFT_SCALE_AUTO, TL_ROUND_HALF_EVEN) != TL_OK)
        return 2;
    tl_integrate_reset(&integ, CHANNELS);

    /* the whole chain: prime the filterbank, then FRAMES timed frames */
    const size_t warm = (size_t)(TAPS - 1u) * POINTS;
    size_t used = 0;
    if (tl_chain_push(&chain, x[0], x[1], warm, &used) != TL_OK || used != warm)
        return 2;
    uint64_t chain_ticks = 0;
    for (uint32_t f = 0; f < FRAMES; f++) {
        t0 = now();
        (void)tl_chain_push(&chain, x[0] + warm + f * POINTS, x[1] + warm + f * POINTS, POINTS, &used);
        chain_ticks += since(t0);
    }

    /* the stages alone, as the chain calls them */
    uint64_t ticks[4] = { 0, 0, 0, 0 };
    for (uint32_t f = 0; f < TAPS - 1u; f++)
        for (uint32_t i = 0; i < 2u; i++) {
            memcpy(tl_pfb_next_frame(&pfb[i]), x[i] + f * POINTS, POINTS * sizeof x[0][0]);
            (void)tl_pfb_commit(&pfb[i], y, &pfb_sat);
        }
    for (uint32_t f = TAPS - 1u; f < TAPS - 1u + FRAMES; f++) {
        for (uint32_t i = 0; i < 2u; i++) {
            memcpy(tl_pfb_next_frame(&pfb[i]), x[i] + f * POINTS, POINTS * sizeof x[0][0]);
            t0 = now();
            (void)tl_pfb_commit(&pfb[i], y, &pfb_sat);
            ticks[0] += since(t0);
            t0 = now();
            tl_fft_execute(&fft, y, X[i], fft_sat);
            ticks[1] += since(t0);
        }
        for (uint32_t i = 0; i < 2u; i++) {
            t0 = now();
            tl_detect_power(X[i], CHANNELS, DET_SHIFT, TL_ROUND_HALF_EVEN, P);
            ticks[2] += since(t0);
            t0 = now();
            tl_integrate_power(&integ, i, P);
            ticks[3] += since(t0);
        }
        t0 = now();
        tl_detect_cross(X[0], X[1], CHANNELS, DET_SHIFT, TL_ROUND_HALF_EVEN, cre, cim);
        ticks[2] += since(t0);
        t0 = now();
        tl_integrate_cross(&integ, cre, cim);
        ticks[3] += since(t0);
    }

    /* the product of the timed frames: encoding, then the whole downlink */
    const uint64_t samples = (uint64_t)FRAMES * POINTS;
    if (!tl_chain_ready(&chain) || tl_chain_take(&chain, &product) != TL_OK)
        return 2;
    uint64_t enc_ticks = 0;
    size_t written = 0;
    for (uint32_t q = 0; q < 4u; q++)
        for (uint32_t c0 = 0; c0 < CHANNELS; c0 += TL_ENCODE_MAX_CHANNELS) {
            tl_status e;
            t0 = now();
            if (q < 2u)
                e = tl_encode_lossless_u64(&enc, &product.auto_power[q][c0], TL_ENCODE_MAX_CHANNELS,
                                           TL_ENCODE_BIT_PLANES, out, sizeof out, &written);
            else
                e = tl_encode_lossless_i64(&enc, q == 2u ? &product.cross_re[c0] : &product.cross_im[c0],
                                           TL_ENCODE_MAX_CHANNELS, TL_ENCODE_BIT_PLANES, out, sizeof out, &written);
            enc_ticks += since(t0);
            if (e != TL_OK)
                return 2;
        }
    tl_downlink_config dc;
    tl_downlink_config_default(&dc);
    if (tl_downlink_init(&dl, &dc) != TL_OK)
        return 2;
    uint32_t octets = 0;
    t0 = now();
    const tl_status ds = tl_downlink_product(&dl, &product, 1, sink, &octets);
    const uint64_t dl_ticks = since(t0);
    if (ds != TL_OK)
        return 2;

    const uint64_t stage_sum = ticks[1] + ticks[2] + ticks[3];
    const uint64_t fb = chain_ticks > stage_sum ? chain_ticks - stage_sum : 0u;
    const uint64_t pk = dl_ticks > enc_ticks ? dl_ticks - enc_ticks : 0u;
    /* instructions x 1000 per sample instant */
    say_pair("samples", samples, FRAMES);
    say_pair("chain", chain_ticks * ipt, chain_ticks * ipt * 1000u / samples);
    say_pair("filterbank_alone", ticks[0] * ipt, ticks[0] * ipt * 1000u / samples);
    say_pair("filterbank", fb * ipt, fb * ipt * 1000u / samples);
    say_pair("fft", ticks[1] * ipt, ticks[1] * ipt * 1000u / samples);
    say_pair("detection", ticks[2] * ipt, ticks[2] * ipt * 1000u / samples);
    say_pair("integration", ticks[3] * ipt, ticks[3] * ipt * 1000u / samples);
    say_pair("encoding_per_product", enc_ticks * ipt, 0u);
    say_pair("packets_per_product", pk * ipt, octets);
    return 0;
}
