/* el_est_common: the machinery the estimators other than least squares
 * share: small dense linear algebra, window vectors and their additive
 * features (the bootstrap providers' building blocks), the reduced states,
 * and the two steps of a fit.
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
#ifndef EL_EST_COMMON_H
#define EL_EST_COMMON_H

#include <stddef.h>

#include "el_error.h"
#include "el_estimator.h"
#include "el_model.h"
#include "el_timebase.h"

/* Most lags the rank test's overlap correction looks at (s1_from_gram in
 * el_est_common.c: autocorrelations up to this lag). The providers take
 * any lags (el_boot_dims carries K). */
#define EL_EST_PROVIDER_MAX_LAGS 63

/* What step 2 needs from an estimator (its file fills one):
 *   name:        the --method spelling, for messages;
 *   instrument:  1 when basis and rank come from step 1 and the window
 *                vector is [x; y; w[t-K-1]; w[t-2K-2]] (+ inputs), span
 *                2K + 4 (iv, ssi); 0 for the pair [x; y] (fb, tls);
 *   isotropic:   1 when the states are scaled by one scalar instead of
 *                whitened (an answer that depends on the metric: tls);
 *   takes_inputs: 1 when measured inputs enter the window vector (iv);
 *   core_work:   doubles of scratch core needs for rank r, n_inputs inputs;
 *   core:        from the centred cross-products cov (ld x ld) of the
 *                window vectors writes a (r x r) and, with inputs, b
 *                (r x n_inputs); *ambiguous may receive a count of poorly
 *                determined eigenvalues (fb); returns 0 or a failure code;
 *   failure:     sets err for a failure code of core, returns
 *                EL_ERR_NUMERIC. */
typedef struct {
    const char *name;
    int instrument;
    int isotropic;
    int takes_inputs;
    size_t (*core_work)(size_t r, size_t n_inputs);
    int (*core)(size_t r, size_t n_inputs, const double *cov, size_t ld, double *a,
                double *b, double *work, int *ambiguous);
    el_status (*failure)(int code, el_error *err);
} el_est_core;

/* ---- small dense linear algebra (column-major; 0 = success) ---------- */

/* Takes n doubles from the front of *pool and advances it. */
double *el_est_take(double **pool, size_t n);

/* Order from which el_est_gauss_solve updates by BLAS (the same pivots,
 * the solution to rounding): above the 120 + inputs of any state the
 * automatic horizon of iv builds, so narrower logs keep their bits. */
#define EL_EST_WIDE_GAUSS 128

/* Solves A X = B in place by Gaussian elimination, row swaps applied to A
 * and B together. A (n x n) is destroyed, B (n x k) receives X. Returns 1
 * when a pivot is at rounding level of the largest entry or the solution
 * is not finite. From order EL_EST_WIDE_GAUSS the updates are BLAS
 * rank-one updates and a triangular solve. */
int el_est_gauss_solve(size_t n, double *a, size_t lda, double *b, size_t ldb,
                       size_t k);

/* X = Bm A^-1 (Bm k x n, A n x n, X k x n with leading dimension ldx) by
 * solving A' X' = Bm'. work: n * n + n * k. Returns 1 when A is singular. */
int el_est_right_solve(size_t n, size_t k, const double *a, size_t lda,
                       const double *bm, size_t ldb, double *x, size_t ldx,
                       double *work);

/* Order from which el_est_sym_fun inverts by Cholesky (power -1, well
 * conditioned): above every state the automatic horizon of iv builds
 * (IV_MAX_ROWS = 120 rows, 2 x 120 instruments), so only logs of about
 * 128 channels or more take it and narrower ones keep their bits. */
#define EL_EST_WIDE_ORDER 256

/* The inverse of the symmetric positive definite S (lower triangle read,
 * leading dimension lds) by Cholesky into out (full, leading dimension
 * ldo), when LAPACK's condition estimate says the inverse is what
 * el_est_sym_fun's pseudo-inverse would give (reciprocal condition at
 * least 1e-7, every eigenvalue far above its cut). Returns n, or 0 when S
 * is not positive definite, too ill conditioned or not finite (out is
 * then undefined: use el_est_sym_fun). work: 3 n doubles and n LAPACK
 * integers after them (el_est_sym_fun_work(n) holds both). */
int el_est_sym_inverse_chol(size_t n, const double *s, size_t lds, double *out,
                            size_t ldo, double *work);

/* Scratch doubles of el_est_sym_fun for order n. */
size_t el_est_sym_fun_work(size_t n);

/* Eigenvectors v (n x n) and ascending eigenvalues lam (n) of the
 * symmetric s (lower triangle, leading dimension lds); lw: 3 n + 1
 * doubles. Returns 0, or 1 when LAPACK fails. */
int el_est_sym_eig(size_t n, const double *s, size_t lds, double *v, double *lam,
                   double *lw);

/* out = V f(Lambda) V' for the symmetric S = V Lambda V' (lower triangle
 * read), f(l) = l^power on the eigenvalues above 1e-10 times the largest
 * and 0 below (a pseudo-inverse for negative powers). Returns the number
 * of eigenvalues kept, or -1 when LAPACK dsyev fails. From order
 * EL_EST_WIDE_ORDER, power -1 of a well conditioned S is the inverse by
 * Cholesky (el_est_sym_inverse_chol; the same matrix to rounding). work:
 * el_est_sym_fun_work(n). */
int el_est_sym_fun(size_t n, const double *s, size_t lds, double power, double *out,
                   size_t ldo, double *work);

/* el_est_sym_fun's second step on a decomposition el_est_sym_eig made (v,
 * lam): out = V f(Lambda) V' as there, the same doubles, so one dsyev
 * serves several powers of the same matrix (ssi takes S^-1/2 and S^1/2
 * of one Sxx in every bootstrap replicate). Returns the number of
 * eigenvalues kept. */
int el_est_sym_fun_from_eig(size_t n, const double *v, const double *lam, double power,
                            double *out, size_t ldo);

/* C (m x n, ldc) = A (m x k, lda) * B (k x n, ldb), with transposes
 * (ta, tb: 1 = transposed). */
void el_est_gemm(int ta, int tb, size_t m, size_t n, size_t k, const double *a,
                 size_t lda, const double *b, size_t ldb, double *c, size_t ldc);

/* ---- window vectors and features -------------------------------------- */

/* Feature length of a window vector of dim numbers: 1 + dim + dim (dim + 1) / 2. */
size_t el_est_nf_of(size_t dim);

/* Features [1, v, lower triangle of v v' by columns]: out[1..dim] must
 * already hold v; writes out[0] and the products. */
void el_est_gram_products(size_t dim, double *out);

/* Means and centred cross-products (sum over windows of (v - mean)(v -
 * mean)', not divided by the count) from a feature sum. Returns the count. */
double el_est_unpack_cov(size_t dim, const double *sum, double *mean, double *cov);

/* Window vector of the instrument methods: [x; y; zeta1; zeta2] from the
 * span 2K + 4 states of sw doubles each (the first r the reduced state)
 * starting at st (x = st[2K+2], y = st[2K+3], zeta1 = st[K+1], zeta2 =
 * st[0]). */
void el_est_win_vector(size_t r, size_t sw, size_t lags, const double *st, double *v);

/* c = mean(y) - A mean(x) - B mean(u) (B, u absent when nu == 0). */
void el_est_offset_from(size_t r, size_t nu, const double *mean_x,
                        const double *mean_y, const double *mean_u, const double *a,
                        const double *b, double *offset);

/* Provider pieces: span, feature length, features and accumulate of the
 * pair [x; y] (fb, tls) and of the instrument window (iv, ssi; + inputs). */
size_t el_est_pair_span(const el_boot_dims *dims);
size_t el_est_win_span(const el_boot_dims *dims);
size_t el_est_pair_nf(const el_boot_dims *dims);
size_t el_est_win_nf(const el_boot_dims *dims);
void el_est_pair_features(const el_boot_dims *dims, const double *states, double *out);
void el_est_window_features(const el_boot_dims *dims, const double *states, double *out);
void el_est_pair_accumulate(const el_boot_dims *dims, const double *states, size_t n,
                            double *acc, double *work);
void el_est_window_accumulate(const el_boot_dims *dims, const double *states, size_t n,
                              double *acc, double *work);

/* Scratch of the accumulate for window vectors of dim numbers; of a pair
 * solve's unpacking for rank r. */
size_t el_est_gram_work(size_t dim);
size_t el_est_pair_work(size_t r);

/* 1 when n windows are too few for dim unknowns per row. */
int el_est_too_few(double n, size_t dim);

/* The core of an estimator without inputs (see el_est_core). */
typedef int (*el_est_plain_core)(size_t r, const double *cov, size_t ld, double *a,
                                 double *work);

/* Shared solve of fb, tls and ssi: unpacks the summed features of a window
 * vector of dim_per_r * r numbers, runs core, adds the intercept. Returns
 * 0, or 1 when singular. */
int el_est_solve_plain(const el_boot_dims *dims, size_t dim_per_r, el_est_plain_core core,
                       const double *sum, double *a, double *offset, double *work);

/* ---- reduced states ---------------------------------------------------- */

/* el_estimator_boot_states (el_estimator.h) with the Cholesky whitening
 * (ls, fb, iv, ssi) and with the scalar scale (tls). */
el_status el_est_boot_states(const el_series *series, const el_series *inputs,
                             const el_model *model, double **states, size_t *n_states,
                             el_error *err);
el_status el_est_boot_states_isotropic(const el_series *series, const el_series *inputs,
                                       const el_model *model, double **states,
                                       size_t *n_states, el_error *err);

/* ---- step 1 kernels (also for el_ssi_covariance) -------------------- */

/* The rank test's outcome. */
typedef struct {
    size_t rank;               /* chosen */
    size_t test_rank;          /* by Bartlett's test (0 when not run) */
    size_t numeric_rank;       /* canonical correlations above EST_RHO_NUMERICAL */
    int lowered;               /* a given rank was above the numerical rank */
    double inflation;          /* variance inflation of the test (1 without lags) */
} el_est_s1_result;

/* Doubles of scratch el_est_s1_from_gram needs; rows: the rows its data
 * holds (0 when data will be NULL: the rows are then not stored). */
size_t el_est_s1_work_size(size_t d, size_t q, size_t rows);

/* From the Gram of [z, pi] ((d + q)^2, centred, both triangles set):
 * canonical correlations into rho (min(d, q)), rank and basis (d x rank,
 * leading dimension d). data (rows x (d + q), the centred rows behind the
 * Gram) serves the rank test; NULL with rows = 0 for exact covariances
 * (rank_opt must then be > 0). Without lags (lags = 0) the rows are not
 * read (consecutive rows share no sample: no overlap correction), so
 * data may be NULL with rows the count behind the Gram, and work then
 * needs el_est_s1_work_size(d, q, 0).
 * The test: the rows overlap (z[k] and z[k+1] share K samples), so the
 * noise part of a state direction is a moving average of order K and the
 * sample cross-correlations with the (autocorrelated) past vary more than
 * for independent rows, by Bartlett's (1946) formula
 * f = sum_{|h|<=K} rho_u(h) rho_v(h) for the canonical variates u, v of
 * a pair. f is taken as the median over the trailing half of the pairs
 * (the directions most likely to be noise), bounded by 1 and by K + 1
 * (the largest f a moving average of white noise of order K can have, by
 * Cauchy-Schwarz on its spectrum), and the test uses m / f rows.
 * work: el_est_s1_work_size(d, q, rows). Returns 0, or 1 when LAPACK fails. */
int el_est_s1_from_gram(size_t d, size_t q, const double *gram, const double *data,
                         size_t rows, size_t lags, long rank_opt, double *rho,
                        double *basis, el_est_s1_result *res, double *work);

/* ---- the two steps of a fit ---------------------------------------------- */

/* Workspace of the estimators for one fit plan. Opaque. */
typedef struct el_est_plan el_est_plan;

/* Sizes and allocates everything the fit of the estimator whose core is
 * given (fb, tls, iv or ssi) needs for series of n_samples x n_channels with n_inputs
 * inputs, so that the two steps below allocate nothing. Checks the depth
 * and, for iv and ssi, that there are at least 2 (state_dim + 1)
 * instrument windows and 2 (state_dim + past dimension + 1) rows
 * (EL_ERR_DATA, hint: longer window or fewer lags) and that depth leaves
 * room (EL_ERR_USAGE, option "--depth"); fb and tls with --rank auto get
 * step 1 when the record is long enough for it.
 * *out is NULL on error. EL_ERR_NOMEM. */
el_status el_est_plan_create(const el_est_core *core,
                             const el_fit_options *opt, size_t n_samples,
                             size_t n_channels, size_t n_inputs,
                             el_est_plan **out, el_error *err);

/* Frees the workspace. NULL is a no-op. */
void el_est_plan_destroy(el_est_plan *plan);

/* Step 1 for iv and ssi: the canonical correlations of z[k] with the past
 * pi[k] over k = K+depth .. N-1 (centred), the rank (rank_opt > 0: as
 * given, capped at the numerical rank; otherwise the sequential test of
 * el_est_s1_from_gram: Bartlett's (1938) statistic with the
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

/* The whole fit of an estimator whose basis comes from the instruments
 * (iv, ssi): el_est_instrument_basis, el_est_reduced_fit, then the model in
 * the channels' coordinates (el_fit_projected_model; zero_offset 1 for an
 * estimator that takes the channel means as the operating point). plan is
 * the fit plan whose est is an el_est_plan. Errors as those two steps. */
el_status el_est_instrument_fit(el_fit_plan *plan, const el_series *series,
                                const el_series *inputs, el_model *model,
                                int zero_offset, el_warnings *warnings, el_error *err);

/* Destroys an el_est_plan passed as an estimator type's opaque state. */
void el_est_plan_destroy_state(void *state);

#endif
