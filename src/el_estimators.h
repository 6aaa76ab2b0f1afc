/* el_estimators: the noise-robust estimators (forward-backward, total least
 * squares, instrumental variables, covariance-driven stochastic subspace
 * identification) in the reduced coordinates of a model, their bootstrap
 * statistics providers, the automatic delay depth (--lags auto) and the
 * subspace realisation of an output covariance sequence.
 *
 * Every estimator works in two steps (docs/method-estimators.md):
 *  1. a basis U_r (state_dim x r, orthonormal, scaled coordinates) and the
 *     rank r: ls, fb and tls take the leading left singular vectors of the
 *     centred snapshot matrix X (el_fit); iv and ssi take the leading left
 *     singular vectors of the cross-covariance of the state z[k] with the
 *     past measurements pi[k] = [x[k-K-1]; ...; x[k-K-depth]] weighted by
 *     Cov(pi)^-1/2, with r from a sequential test of the canonical
 *     correlations (el_est_instrument_basis; fb and tls use the same test
 *     for --rank auto);
 *  2. the r x r system matrix from the reduced state sequence
 *     w[t] = T U_r' (z[K+t] - mean(X)), t = 0..n_pairs, through the
 *     statistics provider of the method: per-window feature vectors
 *     [1, v, lower triangle of v v'] are summed over all windows and the
 *     provider's solve turns the sum into the matrix. T is the whitening of
 *     el_boot_reduced_states (sqrt(n_pairs) L^-1, L L' = sum over the pairs
 *     of U_r'(z - mean) (z - mean)'U_r) for fb, iv and ssi, whose answers do
 *     not depend on the coordinates, and a scalar for tls, whose answer
 *     depends on the metric (el_estimator_boot_states).
 * The point estimate is that computation over all windows, so a bootstrap
 * replicate with unit weights on every window reproduces it.
 *
 * Window vectors v (x = w[t], y = w[t+1]):
 *   fb, tls  span 2:       v = [x; y]
 *   iv, ssi  span 2K + 4:  v = [x; y; w[t-K-1]; w[t-2K-2]]
 *                          (iv with inputs: [...; u[K+t]], the inputs of
 *                          the sample of x)
 * The two instrument states of iv and ssi hold samples x[k-K-1..k-3K-2],
 * none of which appears in x or y (whose samples are x[k+1..k-K]), so white
 * sensor noise is uncorrelated with them. */
#ifndef EL_ESTIMATORS_H
#define EL_ESTIMATORS_H

#include <stddef.h>

#include "el_error.h"
#include "el_fit.h"
#include "el_resample.h"
#include "el_timebase.h"

/* Most lags the rank test's overlap correction looks at (s1_from_gram in
 * el_estimators.c: autocorrelations up to this lag). The providers take
 * any lags (el_boot_dims carries K). */
#define EL_EST_PROVIDER_MAX_LAGS 63

/* Largest delay depth --lags auto tries by default. */
#define EL_LAGS_AUTO_MAX 48

/* The statistics provider of method m (for a fitted model, use it with
 * the dims of el_estimator_boot_dims: the iv and ssi spans, 2K + 4, and the
 * input columns come from there). ls returns el_boot_provider_ls().
 * Providers (all stateless, shareable):
 *   fb  features of [x; y]; solve: A_f = Syx Sxx^-1, A_b = Sxy Syy^-1,
 *       A = (A_f A_b^-1)^(1/2) with the branch of each eigenvalue nearest
 *       to the forward estimate's; fails (returns 1) when Sxx or Sxy is
 *       singular or the root is not real;
 *   tls features of [x; y]; solve: the r leading eigenvectors [E1; E2] of
 *       the centred Gram of [x; y], A = E2 E1^-1; fails when E1 is singular;
 *   iv  features of [x; y; zeta; u] (u: the inputs of x's sample, none
 *       without inputs); solve: with xi = [x; u] and eta = [zeta; u],
 *       [A B] = Syeta W Sxieta' (Sxieta W Sxieta')^-1, W = Seta^+
 *       (eigenvalues below 1e-10 of the largest dropped);
 *   ssi features of [x; y; zeta]; solve: SVD of the weighted block Hankel
 *       diag(Sxx^-1/2, Sxx^-1/2) [Sxz; Syz] Szz^+1/2, observability
 *       O = diag(Sxx^1/2, Sxx^1/2) U_r, A = O2 O1^-1 (shift invariance);
 * all with the intercept offset = mean(y) - A mean(x) (- B mean(u)). fb,
 * tls and ssi require dims->n_inputs == 0. Returns NULL for a
 * value outside the enum. */
const el_boot_provider *el_estimator_provider(el_method m);

/* The provider that reproduces model's reduced matrix from the states of
 * el_estimator_boot_states with the dims of el_estimator_boot_dims: by
 * model->method. NULL for a NULL model, or for a model with inputs whose
 * method takes none (only ls and iv take inputs). */
const el_boot_provider *el_estimator_provider_for(const el_model *model);

/* The dims of a fitted model for its provider: r = model->rank, n_inputs =
 * model->n_inputs, lags = model->lags (all 0 for NULL). */
el_boot_dims el_estimator_boot_dims(const el_model *model);

/* The reduced state sequence a model's provider expects: (model->n_pairs
 * + 1) states of sw = model->rank + model->n_inputs doubles (state t at
 * states[t * sw]): first w[t] = T U_r' (z[K+t] - mean(X)), with T the
 * Cholesky whitening of el_boot_reduced_states (same numbers to rounding)
 * for ls, fb, iv and ssi and the scalar sqrt(n_pairs * r / trace(G)) for
 * tls; then, with inputs, the scaled inputs of sample K + t,
 * (u_j - input_mean[j]) / input_scale[j], as the fit scales them. inputs
 * is the series the model was fitted with (NULL without inputs). *states
 * is allocated (free()); *n_states receives n_pairs + 1. Errors:
 * EL_ERR_INTERNAL when the series or the inputs do not fit the model;
 * EL_ERR_NUMERIC when the projected snapshots have no spread along a basis
 * direction; EL_ERR_NOMEM. */
el_status el_estimator_boot_states(const el_series *series, const el_series *inputs,
                                   const el_model *model, double **states,
                                   size_t *n_states, el_error *err);

/* The choice of --lags auto. */
typedef struct {
    size_t lags;              /* chosen K */
    size_t max_lags;          /* largest K tried */
    size_t n_pairs;           /* snapshot pairs used for every K (the same pairs) */
    int exact;                /* 1: a delay model fits the data to rounding */
    double bic;               /* criterion at the chosen K (NaN when exact) */
    char reason[256];         /* one sentence for the report */
} el_lags_choice;

/* Chooses the delay depth K by the Bayesian information criterion
 * (Schwarz 1978, Ann. Statist. 6(2)) of the one-step residuals of the
 * affine least-squares delay model: for K = 0..K_max, on the same pairs
 * (k = K_max .. N-2), BIC(K) = m ln det(S_K / m) + p ln m with S_K the
 * residual cross-product of the lag-0 channels regressed on [z_K[k]; u[k];
 * 1] and p = n_channels (n_channels (K + 1) + n_inputs + 1); all fits come
 * from one Householder QR of [U, x[k], ..., x[k-K_max], Y] (nested
 * regressions). The smallest K whose residual is at rounding level (every
 * channel's residual sum of squares below 1e-20 of its total: noise-free
 * data) is taken at once. K_max = max_lags (0: EL_LAGS_AUTO_MAX), lowered
 * until the pairs are at least ten per coefficient of a row (common
 * practice). inputs may be NULL. Errors: EL_ERR_DATA for a constant
 * channel or a series too short for even K = 0 (hint: longer window);
 * EL_ERR_INTERNAL for NULL or mismatched arguments; EL_ERR_NUMERIC when
 * LAPACK fails; EL_ERR_NOMEM. */
el_status el_lags_auto(const el_series *series, const el_series *inputs,
                       size_t max_lags, el_lags_choice *choice, el_error *err);

/* The ssi estimator on an exactly known output covariance sequence:
 * cov holds R_0 .. R_{n_cov-1} (n_channels x n_channels column-major each,
 * consecutive, R_j = E[x[k+j] x[k]']). Runs the same two steps as the fit
 * (basis from the state-past covariance with `lags` and `depth`, the given
 * order; system matrix from the ssi provider's solve on the reduced
 * covariances, with the data's feature sums replaced by covariances) and
 * writes the order eigenvalues of the system matrix (mu_re, mu_im, in
 * LAPACK dgeev order). R_0 may hold white sensor noise: it enters only the
 * weights. Needs n_cov >= max(3 lags + 4, lags + depth + 1). Errors:
 * EL_ERR_INTERNAL for bad sizes; EL_ERR_NUMERIC when the realisation is
 * singular or LAPACK fails; EL_ERR_NOMEM. */
el_status el_ssi_covariance(size_t n_channels, size_t n_cov, const double *cov,
                            size_t lags, size_t depth, size_t order,
                            double *mu_re, double *mu_im, el_error *err);

/* ---------------------------------------------------------------------
 * Used by el_fit (public so that the fit and the tests share them).
 * ------------------------------------------------------------------- */

/* Workspace of the estimators for one fit plan. Opaque. */
typedef struct el_est_plan el_est_plan;

/* Sizes and allocates everything the fit of method opt->method (fb, tls,
 * iv or ssi) needs for series of n_samples x n_channels with n_inputs
 * inputs, so that the two steps below allocate nothing. Checks the depth
 * and, for iv and ssi, that there are at least 2 (state_dim + 1)
 * instrument windows and 2 (state_dim + past dimension + 1) rows
 * (EL_ERR_DATA, hint: longer window or fewer lags) and that depth leaves
 * room (EL_ERR_USAGE, option "--depth"); fb and tls with --rank auto get
 * step 1 when the record is long enough for it.
 * *out is NULL on error. EL_ERR_NOMEM. */
el_status el_est_plan_create(const el_fit_options *opt, size_t n_samples,
                             size_t n_channels, size_t n_inputs,
                             el_est_plan **out, el_error *err);

/* Frees the workspace. NULL is a no-op. */
void el_est_plan_destroy(el_est_plan *plan);

/* Step 1 for iv and ssi: the canonical correlations of z[k] with the past
 * pi[k] over k = K+depth .. N-1 (centred), the rank (rank_opt > 0: as
 * given, capped at the numerical rank; otherwise the sequential test of
 * s1_from_gram in el_estimators.c: Bartlett's (1938) statistic with the
 * Wilson-Hilferty (1931) chi-square quantile, or a largest-root bound,
 * each at level 0.001, on an effective number of rows corrected for the
 * overlap of lagged states) and the basis into model->basis, model->rank,
 * model->rank_was_auto, model->canonical_corr, model->n_canonical,
 * model->depth. model->channel_mean/scale must be set. Warns when the rank
 * is lowered below the state dimension or a given rank exceeds what the
 * test supports. EL_ERR_DATA when no direction is predicted (hint: another
 * method); EL_ERR_NUMERIC when LAPACK fails. */
el_status el_est_instrument_basis(el_est_plan *plan, const el_series *series,
                                  long rank_opt, el_model *model,
                                  el_warnings *warnings, el_error *err);

/* --rank auto for fb and tls: the rank of step 1's test (the number of
 * state directions the past measurements predict), because the hard
 * threshold reads the median singular value as noise and undercounts when
 * most directions carry signal. *rank = 0 when the plan has no step 1 (the
 * record is too short for it, or the rank is not auto): the caller falls
 * back to the hard threshold. Fills model->canonical_corr, n_canonical and
 * depth; overwrites model->basis (scratch). Errors as
 * el_est_instrument_basis. */
el_status el_est_predictable_rank(el_est_plan *plan, const el_series *series,
                                  el_model *model, size_t *rank, el_error *err);

/* Step 2 for fb, tls, iv and ssi: from model->basis and model->rank (and
 * the channel and input scaling in model), the reduced states, the window
 * sums and the method's solve; writes model->a_reduced (rank x rank, basis
 * coordinates) and, with inputs (iv), b_reduced (rank x n_inputs, basis
 * coordinates; ignored when NULL). EL_ERR_NUMERIC with the reason when the
 * estimator's system is singular; warns (fb) when a square-root branch is
 * poorly determined. */
el_status el_est_reduced_fit(el_est_plan *plan, const el_series *series,
                             const el_series *inputs, el_model *model,
                             double *b_reduced, el_warnings *warnings,
                             el_error *err);

#endif
