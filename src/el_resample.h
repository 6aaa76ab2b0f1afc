/* el_resample: bootstrap replicates of the fit (moving-block resampling of
 * snapshot pairs, or model-based residual resampling) and the distributions
 * of the modes they give: percentile bounds, p_stable, region fractions. */
#ifndef EL_RESAMPLE_H
#define EL_RESAMPLE_H

#include <stddef.h>
#include <stdint.h>

#include "el_error.h"
#include "el_fit.h"
#include "el_modes.h"
#include "el_rng.h"
#include "el_timebase.h"
#include "el_verdict.h"

typedef enum { EL_RESAMPLE_BLOCKS = 0, EL_RESAMPLE_MODEL } el_resample_kind;

/* Most blocks one moving-block replicate is made of when the block length
 * is automatic: the Politis-White length is raised to ceil(pairs / this)
 * when it is shorter, so a replicate costs O(EL_BOOT_MAX_BLOCKS) block
 * sums whatever the log length (a block longer than the optimum keeps the
 * moving-block variance estimate consistent: its bias falls as 1/L and its
 * variance grows as L/n = 1/EL_BOOT_MAX_BLOCKS; Kunsch 1989). */
#define EL_BOOT_MAX_BLOCKS 400

/* The bias round (el_boot_options.bias_correct) runs only for logs with
 * fewer snapshot pairs than this: the least-squares bias falls like 1/n
 * while the bootstrap spread falls like 1/sqrt(n), and in the calibration
 * (docs/uncertainty.md) the correction changed nothing measurable from
 * 5,000 samples on, while its 200 model-based replicates regenerate the
 * whole log each (the one part of a run whose cost grows with n). */
#define EL_BOOT_BIAS_MAX_PAIRS 10000

typedef struct {
    size_t replicates;            /* 0 = no bootstrap (default 1000) */
    el_resample_kind kind;        /* default EL_RESAMPLE_BLOCKS */
    size_t block_length;          /* 0 = automatic (Politis & White 2004, corrected 2009) */
    double level;                 /* two-sided level of the bounds (default 0.95) */
    uint64_t seed;                /* default 1 */
    size_t threads;               /* 0 = all cores */
    /* Called from the calling thread now and then; may be NULL. */
    void (*progress)(void *ctx, size_t done, size_t total);
    void *progress_ctx;
    /* 1 (default): bias-correct every replicate's reduced matrix by the
     * bias that a first round of model-based replicates measures
     * (bootstrap-after-bootstrap, Kilian 1998); see docs/uncertainty.md. */
    int bias_correct;
} el_boot_options;

/* Fills opt with the defaults listed above. */
void el_boot_defaults(el_boot_options *opt);

typedef struct {
    double lo, hi;
} el_interval;

typedef struct {
    el_interval re, im, frequency_hz, damping_ratio, decay_rate;
} el_mode_bounds;

typedef struct el_boot_result {
    size_t replicates;            /* replicates that gave a model */
    size_t failed_replicates;     /* replicates whose refit failed (left out) */
    el_resample_kind kind;
    size_t block_length;
    int block_was_auto;
    double level;
    uint64_t seed;
    size_t threads_used;
    size_t n_modes;               /* == the point estimate's n_modes */
    el_mode_bounds *bounds;       /* n_modes, owned */
    double p_stable;              /* fraction with least-damped Re lambda < 0 */
    size_t ambiguous_matches;     /* replicates in which two modes could swap */
    double *lambda_re;            /* replicates * n_modes: matched lambda, [r * n_modes + m] */
    double *lambda_im;
    int has_plane;
    el_interval trace, determinant, discriminant;
    double region_probability[EL_REGION_COUNT];
    double *trace_samples;        /* replicates (only when has_plane) */
    double *det_samples;
    int bias_corrected;           /* 1: replicates were bias-corrected */
    size_t bias_replicates;       /* model-based replicates that measured the bias */
    size_t block_length_pw;       /* automatic: the Politis-White length before the
                                     EL_BOOT_MAX_BLOCKS floor (0 when given) */
    double setup_seconds;         /* wall time: states, full-sample refit, block
                                     length, engine (the one pass over the data) */
    double bias_seconds;          /* wall time of the bias round (0 when none) */
    double replicate_seconds;     /* wall time of the replicates themselves */
} el_boot_result;

/* Runs the bootstrap for the model fitted to series with opt_fit (the same
 * lags, rank and method go through every replicate; the model records
 * them) and fills *result (zero-initialised or freed). A model with
 * measured inputs (ls, iv) takes them from opt_fit->inputs: every
 * replicate refits A and B together on resampled pairs, the inputs staying
 * attached to their pairs (model-based replicates keep the inputs as
 * measured and regenerate the state through A, B and c). Replicate r draws
 * from random stream r of the seed, so the numbers do not depend on the
 * thread count. Errors: EL_ERR_USAGE for a block length longer than the
 * series, or model-based resampling with a method other than ls;
 * EL_ERR_NUMERIC when fewer than half of the replicates give a model;
 * EL_ERR_INTERNAL when the model has inputs and opt_fit gives none (or
 * other ones); EL_ERR_NOMEM. */
el_status el_boot_run(const el_series *series, const el_fit_options *opt_fit,
                      const el_model *model, const el_modes *modes,
                      const el_boot_options *opt, el_boot_result *result,
                      el_warnings *warnings, el_error *err);

/* Frees what the result owns and zeroes it. NULL is a no-op. */
void el_boot_free(el_boot_result *result);

/* ---------------------------------------------------------------------
 * The replicate engine. Everything below is used by el_boot_run and is
 * public so that the tests (and later estimators) can reach it.
 *
 * Reduced coordinates. For a model with basis U_r (state_dim x r), the
 * reduced state of sample k is w[k] = sqrt(m) L^-1 U_r' (z[k] - mean(X)),
 * where G = L L' is the Cholesky factor of sum_k p[k] p[k]' over the m
 * snapshot pairs and p[k] = U_r' (z[k] - mean(X)). Over the full sample
 * sum w w' = m I, so w is O(1) per pair, and the eigenvalues of a matrix
 * fitted in w equal those fitted in U_r coordinates (a similarity by L).
 * ------------------------------------------------------------------- */

/* The shape of the reduced data a provider reads and solves for.
 *   r:        reduced dimension (the solve writes an r x r matrix);
 *   n_inputs: measured input values stored after the r state values of
 *             every state (so a state is r + n_inputs doubles): the scaled
 *             input u[k] of the sample of that state (fixed regressors);
 *   lags:     K of the model (the window positions of iv and ssi). */
typedef struct {
    size_t r, n_inputs, lags;
} el_boot_dims;

/* A statistics provider: turns the reduced state sequence (n_states states
 * of dims->r + dims->n_inputs doubles, contiguous) into one additive
 * feature vector per snapshot pair, and a sum of such vectors over any
 * multiset of pairs into the reduced system matrix. Because features add,
 * a bootstrap replicate of any estimator that is a function of lagged
 * cross-products (least squares uses sum X X', Y X', X, Y and the count,
 * with inputs the products with U too; instrumental variables,
 * forward-backward, total least squares and covariance-driven subspace
 * identification add Y Y' or products at further lags, span > 2) is
 * assembled from per-block sums without touching the data again.
 *   span:        pair k reads states k .. k+span-1 (2 for one-step models)
 *   n_features:  feature vector length
 *   work_doubles: scratch doubles solve() needs
 *   features:    writes the features of one pair; states points at its
 *                span consecutive states
 *   accumulate:  may be NULL; adds the features of n_pairs consecutive
 *                pairs (the first at states) to acc, a plain sum, what
 *                features() summed pair by pair gives up to rounding, but
 *                fast (matrix products): the engine's one pass over the data
 *                and the full-sample refit use it when it is there; work
 *                holds work_doubles doubles
 *   solve:       from the summed features writes a (r x r, column-major),
 *                when b != NULL the input matrix (r x n_inputs; nothing
 *                without inputs) and, when offset != NULL, the intercept
 *                (r); returns 0, or 1 when the system is singular (the
 *                replicate fails).
 * Providers hold no state: they are safe to share between threads. Every
 * function takes the dims the engine was made with; a provider that takes
 * no inputs requires dims->n_inputs == 0. */
typedef struct {
    const char *name;
    size_t (*span)(const el_boot_dims *dims);
    size_t (*n_features)(const el_boot_dims *dims);
    size_t (*work_doubles)(const el_boot_dims *dims);
    void (*features)(const el_boot_dims *dims, const double *states, double *out);
    void (*accumulate)(const el_boot_dims *dims, const double *states, size_t n_pairs,
                       double *acc, double *work);
    int (*solve)(const el_boot_dims *dims, const double *sum, double *a, double *b,
                 double *offset, double *work);
} el_boot_provider;

/* Affine least squares in reduced coordinates, with inputs DMD with
 * control: regressor xi_k = [w_k; u_k] (r + n_inputs), response w_k+1;
 * features [1, xi_k, w_k+1, lower triangle of xi_k xi_k', w_k+1 xi_k'] and
 * [A B] = Syxi Sxixi^-1 from the centred cross-products, solved by a
 * Cholesky factorisation. Without inputs the layout is that of the plain
 * regression of w_k+1 on w_k. Span 2 for any lags. Never NULL. */
const el_boot_provider *el_boot_provider_ls(void);

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
 * many rows as the prefix table. A later call replaces the table.
 * Errors: EL_ERR_INTERNAL for a NULL engine or a bad length;
 * EL_ERR_NOMEM. */
el_status el_boot_engine_plan_blocks(el_boot_engine *engine, size_t block_length,
                                     el_error *err);

/* Sum of the features over the blocks (a pair drawn twice counts twice)
 * into sum (el_boot_engine_features doubles); work needs 2 * features
 * doubles. Blocks must lie inside [0, pairs). Reads the engine only, so
 * several threads may call it at once with their own buffers. */
void el_boot_engine_sum(const el_boot_engine *engine,
                        const el_boot_block *blocks, size_t n_blocks,
                        double *sum, double *work);

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

/* Matching replicate eigenvalues to the point estimate's modes. */
typedef struct el_boot_matcher el_boot_matcher;

/* Plans a matcher for the point estimate (its lambdas and which modes are
 * pairs). Each mode stands for one eigenvalue slot, a pair for two; a
 * replicate's eigenvalues are folded to Im >= 0 (a conjugate pair gives two
 * equal slots) and assigned to the slots by the Hungarian algorithm on the
 * distance in the lambda plane, so a pair that splits into two real
 * eigenvalues (or two reals that merge into a pair) is still matched. The
 * matcher holds scratch space: one per thread. Errors: EL_ERR_INTERNAL
 * for an empty point estimate; EL_ERR_NOMEM. */
el_status el_boot_matcher_create(const el_modes *point,
                                 el_boot_matcher **matcher, el_error *err);

/* Frees the matcher. NULL is a no-op. */
void el_boot_matcher_destroy(el_boot_matcher *matcher);

/* Matches the n_eig eigenvalues lambda_re/im (both members of each pair,
 * in any order; finite) to the point modes. mode_re/mode_im (n_modes)
 * receive, for each point mode, the mean of the folded replicate
 * eigenvalues assigned to its slots (Im >= 0). *ambiguous is set to 1 when
 * the second-best assignment (best among those that take away one of the
 * best assignment's mode-to-mode links) costs at most 10% more than the
 * best (C2 <= 1.1 C1): the replicate could as well be read with two modes
 * swapped. Above 12 eigenvalues C2 is bounded by the best exchange of two
 * links (O(n^2) instead of n extra Hungarian runs). Returns 0, or -1 when
 * n_eig differs from the point estimate's number of eigenvalues. */
int el_boot_match(el_boot_matcher *matcher, const double *lambda_re,
                  const double *lambda_im, size_t n_eig, double *mode_re,
                  double *mode_im, int *ambiguous);

/* Quantile p in [0, 1] of sorted[0..n) (ascending, n >= 1) by linear
 * interpolation between order statistics (Hyndman & Fan 1996, type 7:
 * h = (n - 1) p, x[floor h] + (h - floor h) (x[floor h + 1] - x[floor h])). */
double el_boot_quantile(const double *sorted, size_t n, double p);

/* The projection that reduced states start from: p[t] = U_r' (z[t] -
 * mean(X)) for t = 0 .. n_pairs (z[t] the scaled state of sample lags + t
 * as the fit builds it, mean(X) over the pairs' first states) into p
 * (rank x (n_pairs + 1), column-major, state t at p + t rank; caller-owned),
 * and gram = sum over the n_pairs pairs of p p' (rank x rank, lower
 * triangle; the upper holds no meaning). Done in fixed chunks of states on
 * up to threads threads (>= 1), the Gram summed in chunk order, so the
 * numbers do not depend on the thread count. Errors: EL_ERR_INTERNAL when
 * the series does not fit the model; EL_ERR_NOMEM. */
el_status el_boot_project_states(const el_series *series, const el_model *model,
                                 size_t threads, double *p, double *gram, el_error *err);

/* states (r x n_states, column-major) = scale L^-1 states in place, L the
 * lower triangle of chol (r x r, column-major), in the same fixed chunks
 * on up to threads threads. Returns EL_ERR_INTERNAL for a NULL pointer or
 * a zero size, else EL_OK. */
el_status el_boot_whiten_states(const double *chol, size_t r, size_t n_states, double scale,
                                size_t threads, double *states);

/* Builds the reduced state sequence of el_boot_run (see above) for the
 * model fitted to series: states receives (model->n_pairs + 1) * rank
 * doubles (allocated, owned by the caller, free()). EL_ERR_INTERNAL when
 * the series does not fit the model; EL_ERR_NUMERIC when the projected
 * snapshots are rank-deficient; EL_ERR_NOMEM. */
el_status el_boot_reduced_states(const el_series *series,
                                 const el_model *model, double **states,
                                 el_error *err);

#endif
