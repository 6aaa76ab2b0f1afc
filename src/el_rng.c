/* el_rng: xoshiro256** with splitmix64 seeding, uniform, bounded and
 * normal draws that are identical on every machine for a given seed. */
#include "el_rng.h"

#include <math.h>

/* Keeps clang from fusing a*b+c into one rounding on CPUs with FMA, which
 * would change the last bit of the normal draws between machines (gcc in
 * ISO C mode already compiles with -ffp-contract=off). */
#if defined(__clang__)
#pragma STDC FP_CONTRACT OFF
#endif

/* 2^64 / golden ratio, the splitmix64 increment (Steele, Lea & Flood 2014). */
#define EL_GOLDEN 0x9e3779b97f4a7c15ULL

static uint64_t splitmix64_mix(uint64_t z)
{
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

static uint64_t splitmix64_next(uint64_t *x)
{
    *x += EL_GOLDEN;
    return splitmix64_mix(*x);
}

static uint64_t rotl(uint64_t x, int k)
{
    return (x << k) | (x >> (64 - k));
}

void el_rng_seed(el_rng *rng, uint64_t seed, uint64_t stream)
{
    uint64_t x = seed ^ splitmix64_mix(stream * EL_GOLDEN);
    for (int i = 0; i < 4; i++)
        rng->s[i] = splitmix64_next(&x);
    /* splitmix64 is a bijection of its counter, so four consecutive outputs
     * are never all zero: the xoshiro state cannot be the stuck zero state. */
    rng->has_spare = 0;
    rng->spare = 0.0;
}

uint64_t el_rng_next(el_rng *rng)
{
    uint64_t *s = rng->s;
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

double el_rng_uniform(el_rng *rng)
{
    return (double)(el_rng_next(rng) >> 11) * 0x1.0p-53;
}

uint64_t el_rng_below(el_rng *rng, uint64_t n)
{
    if (n <= 1)
        return 0;
    /* (2^64 - n) mod n = 2^64 mod n: the raw values below it are the
     * surplus that a plain r % n would map onto the small results. */
    const uint64_t threshold = (0 - n) % n;
    for (;;) {
        uint64_t r = el_rng_next(rng);
        if (r >= threshold)
            return r % n;
    }
}

/* Natural logarithm of a positive finite x from frexp and the series
 * ln m = 2 atanh((m-1)/(m+1)) with m in [sqrt(1/2), sqrt(2)), so
 * |f| <= 0.1716 and f^2 <= 0.0295; the terms past g^11/23 are below
 * 1e-18 relative. ln 2 is split into a head with trailing zero bits (exact
 * products with the exponent) and a tail, as in fdlibm's e_log.c.
 * Accurate to a few units in the last place; the point is that it uses only
 * correctly rounded IEEE operations, so it is the same everywhere. */
static double portable_log(double x)
{
    static const double ln2_hi = 6.93147180369123816490e-01;
    static const double ln2_lo = 1.90821492927058770002e-10;
    int e;
    double m = frexp(x, &e);
    if (m < 0.70710678118654752440) {
        m *= 2.0;
        e -= 1;
    }
    const double f = (m - 1.0) / (m + 1.0);
    const double g = f * f;
    double series = 1.0 / 23.0;
    for (int k = 10; k >= 0; k--)
        series = series * g + 1.0 / (double)(2 * k + 1);
    const double de = (double)e;
    return de * ln2_hi + (de * ln2_lo + 2.0 * f * series);
}

double el_rng_normal(el_rng *rng)
{
    if (rng->has_spare) {
        rng->has_spare = 0;
        return rng->spare;
    }
    double u, v, s;
    do {
        u = 2.0 * el_rng_uniform(rng) - 1.0;
        v = 2.0 * el_rng_uniform(rng) - 1.0;
        s = u * u + v * v;
    } while (s >= 1.0 || s == 0.0);
    const double factor = sqrt(-2.0 * portable_log(s) / s);
    rng->spare = v * factor;
    rng->has_spare = 1;
    return u * factor;
}
