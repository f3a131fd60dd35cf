/* rng.c: xoshiro256** seeded by splitmix64; Marsaglia polar normals. */
#include "kw_rng.h"

#include <math.h>

static uint64_t splitmix64(uint64_t *x)
{
    uint64_t z = (*x += 0x9e3779b97f4a7c15ULL);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

static uint64_t rotl(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

void kw_rng_seed(kw_rng *r, uint64_t seed)
{
    uint64_t x = seed;
    for (int i = 0; i < 4; i++)
        r->s[i] = splitmix64(&x);
    r->have_spare = 0;
    r->spare = 0;
}

uint64_t kw_rng_u64(kw_rng *r)
{
    uint64_t *s = r->s;
    const uint64_t result = rotl(s[1] * 5, 7) * 9;
    const uint64_t t = s[1] << 17;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 45);
    return result;
}

double kw_rng_uniform(kw_rng *r) { return (double)(kw_rng_u64(r) >> 11) * 0x1.0p-53; }

uint64_t kw_rng_below(kw_rng *r, uint64_t n)
{
    if (n <= 1)
        return 0;
    uint64_t limit = UINT64_MAX - UINT64_MAX % n;
    uint64_t v;
    do
        v = kw_rng_u64(r);
    while (v >= limit);
    return v % n;
}

double kw_rng_normal(kw_rng *r)
{
    if (r->have_spare) {
        r->have_spare = 0;
        return r->spare;
    }
    double u, v, s;
    do {
        u = 2.0 * kw_rng_uniform(r) - 1.0;
        v = 2.0 * kw_rng_uniform(r) - 1.0;
        s = u * u + v * v;
    } while (s >= 1.0 || s == 0.0);
    double m = sqrt(-2.0 * log(s) / s);
    r->spare = v * m;
    r->have_spare = 1;
    return u * m;
}

uint64_t kw_rng_mix(uint64_t seed, uint64_t stream)
{
    uint64_t x = seed ^ (stream * 0xd1b54a32d192ed03ULL);
    splitmix64(&x);
    return splitmix64(&x);
}
