/* el_rng: xoshiro256** pseudo-random generator (Blackman & Vigna 2018),
 * seeded through splitmix64, with uniform and standard normal draws.
 * Independent streams come from one seed and a stream index, so results do
 * not depend on how work is split between threads. */
#ifndef EL_RNG_H
#define EL_RNG_H

#include <stdint.h>

typedef struct {
    uint64_t s[4];
    int has_spare;        /* Marsaglia polar method keeps its second draw */
    double spare;
} el_rng;

/* Seeds stream `stream` of seed `seed`: the four state words are the
 * first four outputs of splitmix64 started from
 * seed ^ mix64(stream * golden-ratio constant), where mix64 is the
 * splitmix64 output function (mix64(0) = 0, so stream 0 is the plain
 * splitmix64 seeding that Blackman & Vigna recommend). Mixing the stream
 * index keeps two streams from starting at neighbouring splitmix64
 * states, which would make their state words overlap. The result depends
 * only on (seed, stream), never on threads. Clears the spare normal draw.
 * Can't fail. */
void el_rng_seed(el_rng *rng, uint64_t seed, uint64_t stream);

/* Next 64 random bits (xoshiro256** 1.0 reference step). Can't fail. */
uint64_t el_rng_next(el_rng *rng);

/* Uniform double in [0, 1) with 53 random bits (the top 53 bits of
 * el_rng_next times 2^-53). Can't fail. */
double el_rng_uniform(el_rng *rng);

/* Uniform integer in [0, n) without modulo bias, by rejecting the lowest
 * 2^64 mod n raw values. n = 0 returns 0. Can't fail. */
uint64_t el_rng_below(el_rng *rng, uint64_t n);

/* Standard normal draw (Marsaglia polar method). Uses only IEEE arithmetic,
 * sqrt and a logarithm written here (not libm's log, whose last bit may
 * differ between libm versions and CPUs), so a seed gives the same draws
 * on every machine. Can't fail. */
double el_rng_normal(el_rng *rng);

#endif
