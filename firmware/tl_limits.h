/*
 * tl_limits.h - compile-time maxima that size every static buffer.
 *
 * A build may lower TL_MAX_POINTS and TL_MAX_TAPS (-DTL_MAX_POINTS=8192) to fit
 * a target's RAM; the #error lines reject values the arithmetic was not
 * analysed for. Context and product sizes follow from these (see tl_chain.h).
 */
#ifndef TL_LIMITS_H
#define TL_LIMITS_H

#define TL_MIN_POINTS 256u       /* smallest real transform (128 channels) */
#ifndef TL_MAX_POINTS
#define TL_MAX_POINTS 32768u     /* largest real transform (16384 channels) */
#endif
#ifndef TL_MAX_TAPS
#define TL_MAX_TAPS 16u          /* largest polyphase taps per channel */
#endif
#define TL_MAX_INPUTS 2u         /* antenna inputs */
#define TL_MIN_ADC_BITS 8u
#define TL_MAX_ADC_BITS 16u
#define TL_MAX_INTEGRATION (1ul << 24) /* spectra per integration */
#define TL_MAX_DET_SHIFT 40u     /* largest detection shift a config may ask for */

/* The twiddle table covers one full turn of TL_TWIDDLE_TURN steps; every
 * supported real transform size divides it. Fixed by the arithmetic spec. */
#define TL_TWIDDLE_TURN 32768u
#define TL_TWIDDLE_QUARTER (TL_TWIDDLE_TURN / 4u)

#define TL_MAX_CHANNELS (TL_MAX_POINTS / 2u)

#if (TL_MAX_POINTS & (TL_MAX_POINTS - 1u)) != 0 || TL_MAX_POINTS < TL_MIN_POINTS || TL_MAX_POINTS > TL_TWIDDLE_TURN
#error "TL_MAX_POINTS must be a power of two from 256 to 32768"
#endif
#if TL_MAX_TAPS < 1 || TL_MAX_TAPS > 16
#error "TL_MAX_TAPS must be from 1 to 16"
#endif

/* Largest number of butterfly stages of the complex FFT (log2(TL_MAX_POINTS/2)
 * binary stages, grouped in radix-4 pairs plus one radix-2) plus the split. */
#define TL_MAX_FFT_STAGES 8u

#endif
