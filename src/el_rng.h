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

/* Seeds stream `stream` of seed `seed` (stream 0, 1, 2, ... are
 * independent sequences: the state is filled by splitmix64 from
 * seed ^ (stream * golden-ratio constant)). Can't fail. */
void el_rng_seed(el_rng *rng, uint64_t seed, uint64_t stream);

/* Next 64 random bits. */
uint64_t el_rng_next(el_rng *rng);

/* Uniform double in [0, 1) with 53 random bits. */
double el_rng_uniform(el_rng *rng);

/* Uniform integer in [0, n) without modulo bias (n >= 1). */
uint64_t el_rng_below(el_rng *rng, uint64_t n);

/* Standard normal draw (Marsaglia polar method). */
double el_rng_normal(el_rng *rng);

#endif
