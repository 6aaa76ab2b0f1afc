/* el_boot_model: the rules of the bootstrap's model rounds (how many
 * model-based replicates, the weight and the widening they give) and the
 * regeneration of a provider's reduced states through a model of them
 * (the spread round of iv and ssi). el_resample runs the rounds. */
#ifndef EL_BOOT_MODEL_H
#define EL_BOOT_MODEL_H

#include <stddef.h>

#include "el_boot_engine.h"
#include "el_error.h"
#include "el_estimator.h"
#include "el_modes.h"

/* Model-based replicates of a full round (the bias round of least
 * squares, the spread round of iv and ssi): a median and an IQR of a few
 * hundred replicates leave a Monte Carlo error far below the bootstrap
 * spread. */
#define EL_BOOT_BIAS_REPLICATES 200

/* Fewest model-based replicates whose spread may refuse the bias
 * correction or widen the block replicates (a quartile of fewer is mostly
 * noise; the tapers weight such rounds by at most 20 / 200). */
#define EL_BOOT_BIAS_MIN_JUDGED 20

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

/* Budget of the spread round (EL_MODEL_RESAMPLING_SPREAD: iv, ssi) in
 * replicates x regenerated windows x features (the provider's feature
 * count, 1 + dim + dim (dim + 1) / 2 for a window vector of dim numbers,
 * 4 r + inputs for iv and ssi): a replicate regenerates every window and
 * sums its features, so its cost is about windows x features
 * multiply-adds. 200 x 5,000 x 45 is the full round of a two-channel log
 * of 5,000 samples (r = 2), the longest the round runs in full; a wider
 * reduced state or a longer log gets fewer replicates
 * (el_boot_spread_rule), so the round costs at most about that whatever
 * the log (bench_boot's 100,000 x 8 log and a track window of 10,000 x 8
 * samples at r = 8 get none). */
#define EL_BOOT_SPREAD_BUDGET 45000000.0

/* The spread round for a log of n_pairs snapshot pairs, windows windows
 * of the method's provider with features features each: replicates
 * B = min(el_boot_bias_rule(n_pairs).replicates,
 * floor(EL_BOOT_SPREAD_BUDGET / (windows features))), weight B / 200 (the
 * widening of el_boot_widen_factor applied with that share: fewer
 * replicates give a noisier spread, and the weight keeps the bounds
 * continuous as B falls), and no round (B = 0, weight 0) below 20
 * replicates, whose spread el_boot_widen_factor would not use. Can't fail;
 * 0 windows or features give no round. */
el_boot_bias_plan el_boot_spread_rule(size_t n_pairs, size_t windows, size_t features);

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

/* The share of the widening (el_boot_growth_weight) that quantity k of
 * a model round's records keeps: Re and Im of mode q (k = q, n_modes + q)
 * by that mode's growth over the log, Re lambda_q duration_s of the point
 * estimate; trace and determinant (k >= 2 n_modes) by the least growing
 * mode's, whose spread is the larger part of theirs. A decaying mode keeps
 * the widening whatever the others do (a saddle's stable mode). Pure
 * function. */
double el_boot_growth_share(const el_modes *point, size_t k, double duration_s);

/* A model of the reduced states a provider reads (the spread round):
 * s[k+1] = c + A s[k] + B u[k] + e[k] on the r state numbers of each
 * state, the n_inputs input numbers after them kept as measured.
 *   prov, dims: the method's provider and its dims (r, n_inputs, lags);
 *   states:     n_pairs + 1 measured states of r + n_inputs doubles (the
 *               first starts a regenerated path, the inputs of all drive
 *               it), borrowed;
 *   a, b, c:    A (r x r), B (r x n_inputs), c (r), column-major;
 *   resid:      n_pairs x r centred residuals of that fit.
 * el_boot_state_model_fit fills a, b, c and resid. */
typedef struct {
    const el_boot_provider *prov;
    el_boot_dims dims;
    const double *states;
    size_t n_pairs;
    const double *a, *b, *c, *resid;
} el_boot_state_model;

/* The model of m->states through the provider's own full-sample fit
 * (el_boot_full_sample_solve: A, B and c as the provider solves them)
 * and its centred one-step residuals on those states
 * (el_boot_reduced_residuals). prov, dims, states and n_pairs must be
 * set. *store is allocated (free()) and holds a, b, c and resid, which m
 * then points into; *fitted is 1, or 0 when the fit is singular (then m
 * is not usable and *store may be NULL). EL_ERR_NOMEM. */
el_status el_boot_state_model_fit(el_boot_state_model *m, double **store, int *fitted,
                                  el_error *err);

/* One model-based replicate's feature sum: the path of n_pairs + 1
 * states regenerated from states[0] with the residuals of the given
 * blocks in order (their lengths add up to n_pairs; moving blocks keep
 * the residuals' short-range dependence: on a multi-step window state the
 * one-step residuals are a moving average over the window), then the
 * provider's features summed over the path's windows (its accumulate, or
 * features window by window) into sum (n_features doubles, overwritten).
 * path: (n_pairs + 1) (r + n_inputs) doubles; feat: n_features doubles;
 * work: prov->work_doubles. Returns 0, or 1 when a sum is not finite or
 * the path is shorter than one window. */
int el_boot_state_model_sum(const el_boot_state_model *m, const el_boot_block *blocks,
                            size_t n_blocks, double *path, double *sum, double *feat,
                            double *work);

/* One step of a model-based replicate's state: next[i] = c[i] + e[i] +
 * sum_j a[i + j r] prev[j] + sum_j b[i + j r] prev[r + j], i < r (a: r x r,
 * b: r x nu, column-major; prev holds the state then the nu inputs). The
 * one arithmetic of every regenerated path (the bias round and iv's spread
 * round), in this order, so both give the bits they gave. Can't fail. */
static inline void el_boot_model_step(size_t r, size_t nu, const double *a, const double *b,
                                      const double *c, const double *e, const double *prev,
                                      double *next)
{
    for (size_t i = 0; i < r; i++) {
        double v = c[i] + e[i];
        for (size_t j = 0; j < r; j++)
            v += a[i + j * r] * prev[j];
        for (size_t j = 0; j < nu; j++)
            v += b[i + j * r] * prev[r + j];
        next[i] = v;
    }
}

#endif
