/* el_boot_engine: moving blocks of snapshot pairs and the engine that sums
 * a statistics provider's features over them (el_estimator.h defines the
 * provider), and the automatic block length. */
#ifndef EL_BOOT_ENGINE_H
#define EL_BOOT_ENGINE_H

#include <stddef.h>

#include "el_error.h"
#include "el_estimator.h"
#include "el_rng.h"

/* Memory the prefix table of an engine may take by default (256 MiB). */
#define EL_BOOT_DEFAULT_MAX_BYTES ((size_t)256 << 20)

/* A block of consecutive snapshot pairs [start, start + length). */
typedef struct {
    size_t start, length;
} el_boot_block;

/* Number of blocks of a moving-block replicate: ceil(n_pairs / length).
 * Returns 0 when either argument is 0. */
size_t el_boot_block_count(size_t n_pairs, size_t block_length);

/* Draws one moving-block replicate (Kunsch 1989): el_boot_block_count
 * blocks whose starts are uniform over the n_pairs - block_length + 1
 * possible starts; the last block is cut so that the lengths add up to
 * n_pairs exactly. blocks must hold el_boot_block_count(...) entries.
 * Requires 1 <= block_length <= n_pairs. Returns the number of blocks. */
size_t el_boot_draw_blocks(el_rng *rng, size_t n_pairs, size_t block_length,
                           el_boot_block *blocks);

/* As el_boot_draw_blocks with block starts on a grid: uniform over the
 * multiples of grid in [0, n_pairs - block_length] (block_length must be a
 * multiple of grid, grid >= 1; grid 1 is el_boot_draw_blocks). Every block
 * but the cut last one then starts and ends on the grid, so an engine with
 * prefix stride grid sums it from two stored prefixes, without re-adding
 * pairs, from a table grid times smaller (one that stays in cache). It is
 * the moving-block bootstrap with starts thinned by grid: between it
 * (grid 1) and the non-overlapping block bootstrap (grid = L), both
 * consistent (Lahiri 2003, "Resampling Methods for Dependent Data", ch. 2
 * and 3; recalled from memory). */
size_t el_boot_draw_blocks_grid(el_rng *rng, size_t n_pairs, size_t block_length,
                                size_t grid, el_boot_block *blocks);

typedef struct el_boot_engine el_boot_engine;

/* Plans the engine for one reduced state sequence (n_states states of
 * dims->r + dims->n_inputs doubles; dims is copied, the states are not:
 * they must stay valid and unchanged while the engine is used, which
 * saves a copy of the whole sequence): one pass over the
 * pairs computes the mean feature vector and prefix sums of the centred
 * features (runs of pairs summed plainly, by the provider's accumulate
 * when it has one, the runs compensated), kept at every stride-th pair,
 * where stride is the smallest that keeps the prefix table under
 * max_bytes (0 = 256 MiB); between two kept prefixes the engine re-adds at
 * most stride - 1 pairs from the states. Any block's sums are then
 * a difference of two prefixes, O(stride * n_features) work, whatever the
 * log length. Centring first keeps the prefixes a random walk of size
 * O(sqrt(n_pairs)) instead of O(n_pairs), so their difference loses about
 * eps * sqrt(n_pairs) rather than eps * n_pairs. *engine receives the new
 * engine (free with el_boot_engine_destroy). Errors: EL_ERR_INTERNAL for a
 * NULL argument, dims->r == 0 or fewer than span states; EL_ERR_NOMEM. */
el_status el_boot_engine_create(const el_boot_provider *provider,
                                const el_boot_dims *dims, const double *states,
                                size_t n_states, size_t max_bytes,
                                el_boot_engine **engine, el_error *err);

/* As el_boot_engine_create with the prefix stride given (>= 1) instead of
 * derived from a memory cap: blocks drawn on a grid of the same size are
 * then summed from stored prefixes only. */
el_status el_boot_engine_create_strided(const el_boot_provider *provider,
                                        const el_boot_dims *dims,
                                        const double *states, size_t n_states,
                                        size_t stride, el_boot_engine **engine,
                                        el_error *err);

/* An engine for wide states (hundreds of reduced states, where one pair's
 * features are hundreds of thousands of doubles; the provider must have
 * accumulate): no prefix table, only the mean feature vector from one
 * compensated pass, and after el_boot_engine_plan_blocks a table of the
 * centred sums of every block of the planned length, and of the cut last
 * block of a replicate, that starts on the stride, in single precision
 * (half the memory of the prefix table it replaces and a quarter of a
 * replicate's memory traffic: one float row per block instead of two
 * double prefix rows). Any other block is summed from the states by the
 * provider's accumulate. The stride is the one el_boot_engine_create
 * would take under its default memory cap, or the one given when larger,
 * so that blocks drawn on it are the same draws. Sums differ from the
 * prefix engine's by the float rounding of the table (about 1e-7 of a
 * block's deviation from its mean, far below the bootstrap's spread:
 * docs/uncertainty.md). Errors as el_boot_engine_create, and
 * EL_ERR_INTERNAL for a provider without accumulate. */
el_status el_boot_engine_create_wide(const el_boot_provider *provider,
                                     const el_boot_dims *dims, const double *states,
                                     size_t n_states, size_t stride,
                                     el_boot_engine **engine, el_error *err);

/* Sets how el_boot_engine_sum re-adds the pairs between a block's end and
 * the stored prefix before it: 0 (default) one feature vector per pair,
 * 1 runs of pairs by the provider's accumulate (its matrix products; a
 * provider without one keeps the pairs). The same sums to rounding; runs
 * are far faster for wide states, where one pair's features are
 * hundreds of thousands of products (el_resample sets 1 from
 * EL_BOOT_WIDE_STATES reduced states on, so narrower ones keep their
 * bits). NULL and wide engines (always in runs) are a no-op. */
void el_boot_engine_set_runs(el_boot_engine *engine, int runs);

/* Lets el_boot_engine_sum add the stored block rows four features a step
 * on CPUs with AVX2 (allow 1, the default where the CPU has it) or
 * forbids it (0: the plain loop, for tests that compare the two; both
 * give the same doubles). NULL is a no-op. */
void el_boot_engine_set_vector(el_boot_engine *engine, int allow);

/* Frees the engine. NULL is a no-op. */
void el_boot_engine_destroy(el_boot_engine *engine);

/* Number of snapshot pairs (n_states - span + 1), prefix stride, feature
 * length, and the doubles of scratch el_boot_engine_assemble needs. */
size_t el_boot_engine_pairs(const el_boot_engine *engine);
size_t el_boot_engine_stride(const el_boot_engine *engine);
size_t el_boot_engine_features(const el_boot_engine *engine);
size_t el_boot_engine_work_doubles(const el_boot_engine *engine);

/* Stores the centred feature sum of every block of block_length pairs
 * that starts on a stored prefix (block_length must be a multiple of the
 * stride, at most the pairs): el_boot_engine_sum then reads one row for
 * such a block instead of the difference of two, the same numbers to the
 * last bit (the difference is the one it would take) at half the memory
 * traffic, which is what a replicate's cost is made of. The table has as
 * many rows as the prefix table. A later call replaces the table. On a
 * wide engine (el_boot_engine_create_wide) it builds that engine's
 * tables (block_length any length up to the pairs).
 * Errors: EL_ERR_INTERNAL for a NULL engine or a bad length;
 * EL_ERR_NOMEM. */
el_status el_boot_engine_plan_blocks(el_boot_engine *engine, size_t block_length,
                                     el_error *err);

/* Sum of the features over the blocks (a pair drawn twice counts twice)
 * into sum (el_boot_engine_features doubles); work needs 2 * features
 * doubles (with el_boot_engine_set_runs on, el_boot_engine_work_doubles
 * minus features). Blocks must lie inside [0, pairs). Reads the engine only, so
 * several threads may call it at once with their own buffers. */
void el_boot_engine_sum(const el_boot_engine *engine,
                        const el_boot_block *blocks, size_t n_blocks,
                        double *sum, double *work);

/* el_boot_engine_sum for count replicates at once: replicate k's blocks
 * blocks[k] (n_blocks[k] of them) summed into sums[k] (features doubles
 * each), every sum the same to the last bit as el_boot_engine_sum gives
 * it (each feature adds the same terms in the same order). On a wide
 * engine the table rows are read a tile of features at a time for all
 * replicates, so a row is fetched from memory once per call instead of
 * once per replicate that draws it (a replicate's rows are megabytes each
 * at 200 states, and their loads were most of its time). work as for
 * el_boot_engine_sum. Reads the engine only (threads as there). */
void el_boot_engine_sum_many(const el_boot_engine *engine,
                             const el_boot_block *const *blocks, const size_t *n_blocks,
                             size_t count, double *const *sums, double *work);
/* The provider's solve on a sum from el_boot_engine_sum(_many): a (r x r)
 * and, when offset != NULL, the intercept; el_boot_engine_assemble is the
 * sum and then this. work holds el_boot_engine_work_doubles doubles.
 * Returns 0, or 1 when the replicate's system is singular. */
int el_boot_engine_solve(const el_boot_engine *engine, const double *sum, double *a,
                         double *offset, double *work);
/* 1 for an engine of el_boot_engine_create_wide, else 0 (NULL: 0). */
int el_boot_engine_is_wide(const el_boot_engine *engine);
/* Sum over the blocks, then the provider's solve: a (r x r) and, when
 * offset != NULL, the intercept (r). work holds el_boot_engine_work_doubles
 * doubles. Returns 0, or 1 when the replicate's system is singular. */
int el_boot_engine_assemble(const el_boot_engine *engine,
                            const el_boot_block *blocks, size_t n_blocks,
                            double *a, double *offset, double *work);

/* Optimal block length for the moving/circular block bootstrap of the
 * series x[0..n) (Politis & White 2004 with the correction of Patton,
 * Politis & White 2009): b = (2 G^2 / D)^(1/3) n^(1/3) with
 * G = sum_k lambda(k/M) |k| R(k), D = (4/3) g^2, g = sum_k lambda(k/M) R(k),
 * R the sample autocovariance, lambda the flat-top (trapezoid) window and
 * M = 2 m_hat from the first lag after which K_N = max(5, sqrt(log10 n))
 * autocorrelations stay below 2 sqrt(log10(n) / n). b is capped at
 * min(3 sqrt(n), n / 3) and is 1 for a series too short (n < 8), constant
 * or with g <= 0. *b_out is the real-valued b. EL_ERR_NOMEM. */
el_status el_boot_pw_block_length(const double *x, size_t n, double *b_out,
                                  el_error *err);

/* el_boot_pw_block_length on x itself: x is demeaned in place (the same
 * doubles the copy would hold), which saves a copy of the series. */
el_status el_boot_pw_block_length_inplace(double *x, size_t n, double *b_out,
                                          el_error *err);

/* el_boot_pw_block_length of a series already demeaned as it demeans:
 * y[t] = x[t] - el_boot_pw_mean(x, n) (so the caller may demean while it
 * copies). The same *b_out to the last bit. Errors as there. */
el_status el_boot_pw_block_length_centred(const double *y, size_t n, double *b_out,
                                          el_error *err);

/* The mean el_boot_pw_block_length takes: x[0] + x[1] + ... in order,
 * divided by n (n >= 1). */
double el_boot_pw_mean(const double *x, size_t n);

/* The block length's sample autocovariances of the demeaned x (divisor n)
 * at lags k0 .. k0 + count - 1 (all below n) into out: four partial sums
 * (the products of t = 0, 1, 2, 3 mod 4 in ascending t, the last few into
 * the first), ((s0 + s1) + (s2 + s3)) / n. With allow_vector on a CPU with
 * AVX2, four lags a pass over x, the same doubles (tests compare the two). */
void el_boot_autocov_lags(const double *x, size_t n, size_t k0, size_t count,
                          int allow_vector, double *out);

/* The provider's solve on the sum of the features of every pair (the
 * full-sample refit), in one compensated pass. work holds 4 d +
 * prov->work_doubles doubles (d = prov->n_features). Returns 0, or 1 when
 * singular. */
int el_boot_full_sample_solve(const el_boot_provider *prov, const el_boot_dims *dims,
                              const double *states, size_t n_states, double *a,
                              double *bm, double *offset, double *work);

#endif
