/* kw_rng.h: a small seeded random generator that gives the same stream on
 * every machine and compiler: xoshiro256** 1.0 (Blackman & Vigna 2018,
 * "Scrambled linear pseudorandom number generators"), seeded through
 * splitmix64 (Steele, Lea & Flood 2014). Not for cryptography. Each
 * kw_rng is independent; use one per thread. */
#ifndef KW_RNG_H
#define KW_RNG_H

#include <stdint.h>

#include "kw_base.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct kw_rng {
    uint64_t s[4];
    int have_spare; /* normal(): the second value of the last pair */
    double spare;
} kw_rng;

/*! kw_rng_seed(): initialise from a 64-bit seed (any value, 0 included). */
KW_API void kw_rng_seed(kw_rng *r, uint64_t seed);

/*! kw_rng_u64(): next 64 random bits. */
KW_API uint64_t kw_rng_u64(kw_rng *r);

/*! kw_rng_uniform(): uniform double in [0, 1) with 53 random bits. */
KW_API double kw_rng_uniform(kw_rng *r);

/*! kw_rng_below(): uniform integer in [0, n) without modulo bias (n >= 1). */
KW_API uint64_t kw_rng_below(kw_rng *r, uint64_t n);

/*! kw_rng_normal(): standard normal deviate (Marsaglia polar method, 1964). */
KW_API double kw_rng_normal(kw_rng *r);

/*! kw_rng_mix(): combine a seed with a stream index (e.g. a coil or an
 * experiment number) into a new, well-spread seed. */
KW_API uint64_t kw_rng_mix(uint64_t seed, uint64_t stream);

#ifdef __cplusplus
}
#endif
#endif
