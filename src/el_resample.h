/* el_resample: bootstrap replicates of the fit (moving-block resampling of
 * snapshot pairs, or model-based residual resampling) and the distributions
 * of the modes they give: percentile bounds, p_stable, region fractions. */
#ifndef EL_RESAMPLE_H
#define EL_RESAMPLE_H

#include <stddef.h>
#include <stdint.h>

#include "el_error.h"
#include "el_boot_bounds.h"
#include "el_boot_engine.h"
#include "el_boot_match.h"
#include "el_estimator.h"
#include "el_model.h"
#include "el_modes.h"
#include "el_reduced.h"
#include "el_timebase.h"

/* Most blocks one moving-block replicate is made of when the block length
 * is automatic: the Politis-White length is raised to ceil(pairs / this)
 * when it is shorter, so a replicate costs O(EL_BOOT_MAX_BLOCKS) block
 * sums whatever the log length (a block longer than the optimum keeps the
 * moving-block variance estimate consistent: its bias falls as 1/L and its
 * variance grows as L/n = 1/EL_BOOT_MAX_BLOCKS; Kunsch 1989). */
#define EL_BOOT_MAX_BLOCKS 400

/* The bias round (el_boot_options.bias_correct) in full, 200 model-based
 * replicates applied at full weight, up to this many snapshot pairs; above
 * it the round tapers smoothly (el_boot_bias_rule, docs/uncertainty.md,
 * "Bias round on long logs"): the least-squares bias falls like 1/n while
 * the bootstrap spread falls like 1/sqrt(n), so the share of the interval
 * the bias moves falls like 1/sqrt(n) and its effect on coverage like 1/n,
 * while every model-based replicate regenerates the whole log (cost n).
 * In the calibration the correction changed nothing measurable from 5,000
 * samples on. */
#define EL_BOOT_BIAS_FULL_PAIRS 5000

/* The bias round for a log of n_pairs snapshot pairs: replicates
 * B(n) = 200 for n <= EL_BOOT_BIAS_FULL_PAIRS, else
 * floor(200 (EL_BOOT_BIAS_FULL_PAIRS / n)^2), and the weight B / 200 the
 * measured bias is applied with. The round's cost B(n) n is at most
 * 200 EL_BOOT_BIAS_FULL_PAIRS regenerated pairs, falls like 1/n above it
 * and reaches zero (B = 0: no round) above about 70,700 pairs; adjacent n
 * differ by at most one replicate and 1/200 of weight (no cliff). Can't
 * fail. */
typedef struct {
    size_t replicates;            /* model-based replicates; 0 = no bias round */
    double weight;                /* 0..1: share of the measured bias applied */
} el_boot_bias_plan;

el_boot_bias_plan el_boot_bias_rule(size_t n_pairs);

/* The factor by which the moving-block replicates of one quantity are
 * widened about their median, given that quantity's spread (IQR / 1.349)
 * among the bias round's n_model accepted model-based replicates, its
 * spread among the block replicates, and the round's weight
 * (el_boot_bias_rule; the run passes it times el_boot_growth_weight of
 * the quantity's mode): 1 + weight (f - 1) with f = model / blocks when
 * f > 1, else 1; also 1 with fewer than 20 model replicates (too noisy a
 * spread to widen by) or a non-finite or non-positive spread. Never
 * narrows; continuous in the weight, so bounds do not jump where the round
 * starts to taper. Pure function. */
double el_boot_widen_factor(double model_spread, double blocks_spread, double weight,
                            size_t n_model);

/* Growth over the log, in e-foldings (Re lambda of a mode times the log's
 * duration), below which the widening of el_boot_widen_factor applies in
 * full, and from which it does not apply at all (linear in between). On a
 * log that grows, the model-based replicates regenerate the whole growth
 * from its first state, and the size of the growth's envelope (the
 * regressors' sum of squares, which sets the estimate's precision) then
 * differs from replicate to replicate by orders of magnitude: their spread
 * is that of the estimate over every envelope the model could have made,
 * while the log has one. Conditional on it (the explosive autoregression's
 * estimate is mixed normal: Anderson 1959, Ann. Math. Statist. 30(3);
 * recalled from memory) the pairs' spread is the right one, and widening
 * to the model-based spread over-covered (spiral source, 5,000 samples,
 * least squares: 0.969 on 480 fresh logs, bounds 15 % too wide;
 * docs/uncertainty.md, "Growing logs"). The ends are a rule of thumb: a
 * log that starts at rest and grows by c e-foldings has an expected sum
 * of squares (e^(2c) - 1 - 2c) / (2 c^2) times a random walk's: 2.2 at
 * c = 1, still near a unit root (where the estimate given the envelope is
 * not normal and the model-based spread is the better one), 22 at c = 3,
 * where the growth dominates. */
#define EL_BOOT_GROWTH_WIDEN_FULL 1.0
#define EL_BOOT_GROWTH_WIDEN_NONE 3.0

/* The share (0..1) of the widening (el_boot_widen_factor's weight) a
 * quantity keeps when the mode it belongs to grows by efolds e-foldings
 * over the log: 1 up to EL_BOOT_GROWTH_WIDEN_FULL (every decaying mode),
 * 0 from EL_BOOT_GROWTH_WIDEN_NONE, linear in between, so bounds do not
 * jump where a log starts to count as growing; 1 for a non-finite efolds
 * (the widening as before). Pure function. */
double el_boot_growth_weight(double efolds);

/* Default el_boot_options.wide_states: above the IV_MAX_ROWS = 120 rows
 * the automatic horizon builds, so only logs of about 128 channels or
 * more take the wide path and narrower ones keep their bits. */
#define EL_BOOT_WIDE_STATES 128

/* Fewest replicates from which the pipeline (el_assess, el_track) reports
 * bounds and P(stable). Below it the 2.5% tail of a 95% percentile
 * interval holds fewer than 2.5 replicates and P(stable) moves in steps of
 * more than 1%: common practice asks for at least a hundred replicates for
 * standard errors and about a thousand for percentile intervals (Efron &
 * Tibshirani 1993, "An Introduction to the Bootstrap", ch. 6 and 13;
 * recalled from memory). el_boot_run itself runs any count. */
#define EL_BOOT_MIN_REPLICATES 100

typedef struct el_boot_options {
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
    /* Reduced states from which a model-based replicate simulates the
     * whole series first and sums its features by the provider's matrix
     * products (EL_BOOT_WIDE_STATES when 0): the same sums to rounding,
     * several times faster for wide states; below it the pair-by-pair
     * path keeps the bits it always gave. Tests set 1 to compare them.
     * From it on, moving blocks also use the wide engine
     * (el_boot_engine_create_wide: float block tables, no prefix table). */
    size_t wide_states;
    /* Most residual cells (pairs x reduced states) stored for the
     * automatic block length when no model-based replicate reads them
     * (2^21, 16 MiB, when 0); above it each component is made again for
     * its Politis-White length, the same doubles without the array (a
     * 1e6 x 8 log: 64 MB less). Tests set 1 to compare the two. */
    size_t resid_store_cells;
} el_boot_options;

/* Fills opt with the defaults listed above. */
void el_boot_defaults(el_boot_options *opt);

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

#endif
