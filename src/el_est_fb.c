/* el_est_fb: forward-backward DMD (Dawson, Hemati, Williams & Rowley 2016)
 * and total-least-squares DMD (Hemati, Rowley, Deem & Cattafesta 2017) in
 * the reduced coordinates of the SVD basis of X, with their bootstrap
 * providers; both fit every kept direction as dynamics and share the rank
 * rule below. */
#include <complex.h>

#include "el_est_common.h"
#include "el_estimator.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* fb: a square-root branch is called poorly determined when the distance
 * from the forward eigenvalue to the chosen root exceeds half its distance
 * to the other root. */
#define EST_FB_BRANCH_WARN 0.5

/* fb: imaginary part of Q R Q^H tolerated relative to its real part
 * (rounding of the complex Schur method on a well-conditioned root is
 * ~1e-15; a wrong branch pairing gives O(1)). */
#define EST_FB_REAL_TOL 1e-8

/* ------------------------------------------------------------------ */
/* Forward-backward DMD (Dawson, Hemati, Williams & Rowley 2016). */

static size_t sqrt_branch_work(size_t n)
{
    return 8 * n * n + 8 * n + n;
}

/* root = the square root of M (n x n) whose eigenvalues are, one by one,
 * the roots nearest to those of the guide G (the forward estimate), by the
 * complex Schur method (Bjorck & Hammarling 1983): M = Q T Q^H (LAPACK
 * zgees), R upper triangular with R_ii = +-sqrt(T_ii) chosen against
 * (Q^H G Q)_ii, R_ij = (T_ij - sum_{i<k<j} R_ik R_kj) / (R_ii + R_jj),
 * root = Re(Q R Q^H). Returns 0; 2 when zgees fails, R_ii + R_jj vanishes
 * (a repeated eigenvalue given two different branches) or the result is
 * not real. *ambiguous (may be NULL) counts the eigenvalues whose branch
 * is poorly determined. */
static int sqrt_branch(size_t n, const double *m, const double *g, double *root,
                       double *work, int *ambiguous)
{
    double *pool = work;
    double complex *t = (double complex *)(void *)el_est_take(&pool, 2 * n * n);
    double complex *q = (double complex *)(void *)el_est_take(&pool, 2 * n * n);
    double complex *rr = (double complex *)(void *)el_est_take(&pool, 2 * n * n);
    double complex *tmp = (double complex *)(void *)el_est_take(&pool, 2 * n * n);
    double complex *w = (double complex *)(void *)el_est_take(&pool, 2 * n);
    double complex *zw = (double complex *)(void *)el_est_take(&pool, 4 * n);
    double complex *gq = (double complex *)(void *)el_est_take(&pool, 2 * n);
    double *rwork = el_est_take(&pool, n);
    for (size_t i = 0; i < n * n; i++)
        t[i] = m[i];
    lapack_int sdim = 0;
    lapack_int info = LAPACKE_zgees_work(LAPACK_COL_MAJOR, 'V', 'N', NULL, (lapack_int)n,
                                         t, (lapack_int)n, &sdim, w, q, (lapack_int)n,
                                         zw, (lapack_int)(2 * n), rwork, NULL);
    if (info != 0)
        return 2;
    for (size_t i = 0; i < n * n; i++)
        rr[i] = 0.0;
    double rmax = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double complex *qi = q + i * n;
        for (size_t a = 0; a < n; a++) {
            double complex s = 0.0;
            for (size_t b = 0; b < n; b++)
                s += g[a + b * n] * qi[b];
            gq[a] = s;
        }
        double complex f = 0.0;
        for (size_t a = 0; a < n; a++)
            f += conj(qi[a]) * gq[a];
        double complex s = csqrt(t[i + i * n]);
        double dp = cabs(s - f), dm = cabs(-s - f);
        if (dm < dp) {
            s = -s;
            double x = dp;
            dp = dm;
            dm = x;
        }
        if (ambiguous != NULL && dm > 0.0 && dp > EST_FB_BRANCH_WARN * dm)
            (*ambiguous)++;
        rr[i + i * n] = s;
        rmax = fmax(rmax, cabs(s));
    }
    for (size_t j = 0; j < n; j++)
        for (size_t ii = j; ii-- > 0;) {
            double complex num = t[ii + j * n];
            for (size_t k = ii + 1; k < j; k++)
                num -= rr[ii + k * n] * rr[k + j * n];
            double complex den = rr[ii + ii * n] + rr[j + j * n];
            if (!(cabs(den) > 1e-8 * rmax))
                return 2;
            rr[ii + j * n] = num / den;
        }
    /* tmp = Q R, root = Re(tmp Q^H). */
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double complex s = 0.0;
            for (size_t k = 0; k <= j; k++)
                s += q[i + k * n] * rr[k + j * n];
            tmp[i + j * n] = s;
        }
    double re_max = 0.0, im_max = 0.0;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double complex s = 0.0;
            for (size_t k = 0; k < n; k++)
                s += tmp[i + k * n] * conj(q[j + k * n]);
            root[i + j * n] = creal(s);
            re_max = fmax(re_max, fabs(creal(s)));
            im_max = fmax(im_max, fabs(cimag(s)));
        }
    if (!isfinite(re_max) || im_max > EST_FB_REAL_TOL * re_max + DBL_MIN)
        return 2;
    return 0;
}

static size_t fb_core_work(size_t r)
{
    return 6 * r * r + sqrt_branch_work(r);
}

/* cov: centred cross-products of [x; y] (2r x 2r). A_f = Syx Sxx^-1,
 * M = A_f A_b^-1 = A_f Syy Sxy^-1, A = M^(1/2) guided by A_f. Returns 0,
 * 1 (Sxx or Sxy singular) or 2 (no real square root). */
static int fb_core(size_t r, const double *cov, size_t ld, double *a, double *work,
                   int *ambiguous)
{
    double *pool = work;
    double *sxx = el_est_take(&pool, r * r), *aft = el_est_take(&pool, r * r);
    double *af = el_est_take(&pool, r * r), *pt = el_est_take(&pool, r * r);
    double *syx = el_est_take(&pool, r * r), *mm = el_est_take(&pool, r * r);
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++) {
            sxx[i + j * r] = cov[i + j * ld];
            aft[i + j * r] = cov[i + (r + j) * ld];      /* Sxy */
            syx[i + j * r] = cov[(r + i) + j * ld];      /* Syx */
        }
    if (el_est_gauss_solve(r, sxx, r, aft, r, r))               /* aft = Sxx^-1 Sxy = A_f' */
        return 1;
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++)
            af[i + j * r] = aft[j + i * r];
    /* pt = Syy A_f'; M' = Syx^-1 pt. */
    el_est_gemm(0, 0, r, r, r, cov + r + r * ld, ld, aft, r, pt, r);
    if (el_est_gauss_solve(r, syx, r, pt, r, r))
        return 1;
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++)
            mm[i + j * r] = pt[j + i * r];
    return sqrt_branch(r, mm, af, a, pool, ambiguous);
}

/* ------------------------------------------------------------------ */
/* Total-least-squares DMD (Hemati, Rowley, Deem & Cattafesta 2017). */

static size_t tls_core_work(size_t r)
{
    return 6 * r * r + 8 * r + 1;
}

/* cov: centred Gram of [x; y]. Its r leading eigenvectors [E1; E2] span
 * the total-least-squares fit of the pairs; A = E2 E1^-1. Returns 1 when
 * the r-th and (r+1)-th eigenvalues tie (no unique fit) or E1 is singular. */
static int tls_core(size_t r, const double *cov, size_t ld, double *a, double *work)
{
    size_t n2 = 2 * r;
    double *pool = work;
    double *v = el_est_take(&pool, n2 * n2), *lam = el_est_take(&pool, n2), *lw = el_est_take(&pool, 3 * n2 + 1);
    double *e1t = el_est_take(&pool, r * r), *e2t = el_est_take(&pool, r * r);
    if (el_est_sym_eig(n2, cov, ld, v, lam, lw))
        return 1;
    if (!(lam[n2 - r] - lam[n2 - r - 1] > 1e-12 * fabs(lam[n2 - 1])))
        return 1;
    for (size_t c = 0; c < r; c++) {
        const double *e = v + (n2 - r + c) * n2;
        for (size_t i = 0; i < r; i++) {
            e1t[c + i * r] = e[i];
            e2t[c + i * r] = e[r + i];
        }
    }
    if (el_est_gauss_solve(r, e1t, r, e2t, r, r))     /* e2t = E1'^-1 E2' = A' */
        return 1;
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++)
            a[i + j * r] = e2t[j + i * r];
    return 0;
}

static size_t fb_work(const el_boot_dims *dims)
{
    size_t solve = el_est_pair_work(dims->r) + fb_core_work(dims->r), acc = el_est_gram_work(2 * dims->r);
    return solve > acc ? solve : acc;
}

static size_t tls_work(const el_boot_dims *dims)
{
    size_t solve = el_est_pair_work(dims->r) + tls_core_work(dims->r), acc = el_est_gram_work(2 * dims->r);
    return solve > acc ? solve : acc;
}

static int fb_core_plain(size_t r, const double *cov, size_t ld, double *a, double *work)
{
    return fb_core(r, cov, ld, a, work, NULL);
}

static int fb_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                    double *offset, double *work)
{
    (void)b;
    return el_est_solve_plain(dims, 2, fb_core_plain, sum, a, offset, work);
}

static int tls_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                     double *offset, double *work)
{
    (void)b;
    return el_est_solve_plain(dims, 2, tls_core, sum, a, offset, work);
}

static const el_boot_provider fb_provider = {
    "forward-backward", el_est_pair_span, el_est_pair_nf, fb_work, el_est_pair_features, el_est_pair_accumulate, fb_solve
};

static const el_boot_provider tls_provider = {
    "total least squares", el_est_pair_span, el_est_pair_nf, tls_work, el_est_pair_features, el_est_pair_accumulate, tls_solve
};

/* Uniform cores for step 2 (el_est_core). */
static size_t fb_core_size(size_t r, size_t nu)
{
    (void)nu;
    return fb_core_work(r);
}

static int fb_core_step(size_t r, size_t nu, const double *cov, size_t ld, double *a,
                        double *b, double *work, int *ambiguous)
{
    (void)nu;
    (void)b;
    return fb_core(r, cov, ld, a, work, ambiguous);
}

static el_status fb_failure(int code, el_error *err)
{
    if (code == 1) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "fb: the backward model is singular (Sxy or Sxx has no "
                     "inverse): a state direction does not carry over from one "
                     "sample to the next");
        el_error_hint(err, "lower --rank (or --rank auto), or use --method ls");
    } else {
        el_error_set(err, EL_ERR_NUMERIC,
                     "fb: the forward-backward product A_f A_b^-1 has no real "
                     "square root consistent with the forward estimate (a repeated "
                     "eigenvalue, such as a mode at a quarter of the sampling rate, "
                     "takes two branches)");
        el_error_hint(err, "use --method tls, or sample at another rate");
    }
    return EL_ERR_NUMERIC;
}

static size_t tls_core_size(size_t r, size_t nu)
{
    (void)nu;
    return tls_core_work(r);
}

static int tls_core_step(size_t r, size_t nu, const double *cov, size_t ld, double *a,
                         double *b, double *work, int *ambiguous)
{
    (void)nu;
    (void)b;
    (void)ambiguous;
    return tls_core(r, cov, ld, a, work);
}

static el_status tls_failure(int code, el_error *err)
{
    (void)code;
    el_error_set(err, EL_ERR_NUMERIC,
                 "tls: the total-least-squares problem has no unique solution "
                 "(the leading eigenvectors of the stacked snapshots do not "
                 "determine the model)");
    el_error_hint(err, "lower --rank (or --rank auto), or use --method fb or ls");
    return EL_ERR_NUMERIC;
}

static const el_est_core fb_step = {
    "fb", 0, 0, 0, fb_core_size, fb_core_step, fb_failure
};

static const el_est_core tls_step = {
    "tls", 0, 1, 0, tls_core_size, tls_core_step, tls_failure
};

/* ------------------------------------------------------------------ */
/* The fit: the SVD basis of X with the rank rule of ls, or for --rank
 * auto the number of directions the past predicts. */


/* fb and tls fit every kept direction as dynamics: a direction holding
 * only sensor noise gets an arbitrary eigenvalue (the backward model of
 * noise is not invertible, total least squares of noise has no preferred
 * fit), so say so when the optimal hard threshold keeps fewer. */
static el_status warn_noise_directions(el_fit_plan *plan, el_model *m, el_warnings *w,
                                       el_error *err)
{
    if (plan->rank_opt != EL_RANK_FULL && plan->rank_opt != EL_RANK_ALL)
        return EL_OK;
    size_t r_gd = el_fit_hard_threshold_rank(m->singular_values, plan->state_dim,
                                             plan->state_dim, plan->n_pairs);
    if (r_gd >= m->rank)
        return EL_OK;
    el_status st = el_warnings_add(
        w,
        "%s at full rank %zu: only %zu singular values of the snapshots stand above "
        "the optimal hard threshold (Gavish & Donoho 2014); directions that hold "
        "only noise get arbitrary eigenvalues with this estimator: use --rank auto "
        "or --rank %zu",
        el_method_name(plan->method), m->rank, r_gd, r_gd);
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    return EL_OK;
}


/* --rank auto for fb and tls: the number of state directions the past
 * measurements predict (the instrument step's test), capped at the
 * numerical rank of X; the hard threshold when the record is too short
 * for the test. */
static el_status predictable_rank(el_fit_plan *plan, const el_series *series,
                                  el_model *m, el_warnings *w, el_error *err)
{
    size_t r = 0, d = plan->state_dim;
    el_status st = el_est_predictable_rank(plan->est, series, m, &r, err);
    if (st != EL_OK)
        return st;
    if (r == 0)
        return el_fit_choose_rank(plan, m, w, err);
    const double *sv = m->singular_values;
    double cut = (double)(plan->n_pairs > d ? plan->n_pairs : d) * DBL_EPSILON * sv[0];
    size_t r_num = 0;
    while (r_num < d && sv[r_num] > cut)
        r_num++;
    if (r > r_num)
        r = r_num;
    if (r == 0) {
        el_error_set(err, EL_ERR_DATA, "the snapshots do not vary: nothing to fit");
        el_error_hint(err, "choose a window where the channels move");
        return EL_ERR_DATA;
    }
    m->rank = r;
    m->rank_was_auto = 1;
    if (r < d) {
        st = el_warnings_add(
            w,
            "%s: rank %zu of %zu, the number of state directions the past measurements "
            "predict (canonical correlations %.3g down to %.3g, tested at 0.1%%); "
            "the other directions are treated as noise",
            el_method_name(plan->method), r, d, m->canonical_corr[0],
            m->canonical_corr[r - 1]);
        if (st != EL_OK)
            return el_error_set(err, st, "out of memory for a warning");
    }
    return EL_OK;
}

static el_status fb_tls_fit(el_fit_plan *plan, const el_series *series,
                            const el_series *inputs, el_model *model,
                            el_warnings *warnings, el_error *err)
{
    el_status st;
    if (plan->rank_opt == EL_RANK_AUTO) {
        st = predictable_rank(plan, series, model, warnings, err);
    } else {
        st = el_fit_choose_rank(plan, model, warnings, err);
        if (st == EL_OK)
            st = warn_noise_directions(plan, model, warnings, err);
    }
    if (st != EL_OK)
        return st;
    el_fit_svd_basis(plan, model);
    st = el_est_reduced_fit(plan->est, series, inputs, model, plan->bred, warnings, err);
    if (st == EL_OK)
        el_fit_projected_model(plan, model, 0);
    return st;
}

static el_status fb_plan_create(const el_fit_options *opt, size_t n_samples,
                                size_t n_channels, size_t n_inputs, void **state,
                                el_error *err)
{
    return el_est_plan_create(&fb_step, opt, n_samples, n_channels, n_inputs,
                              (el_est_plan **)state, err);
}

static el_status tls_plan_create(const el_fit_options *opt, size_t n_samples,
                                 size_t n_channels, size_t n_inputs, void **state,
                                 el_error *err)
{
    return el_est_plan_create(&tls_step, opt, n_samples, n_channels, n_inputs,
                              (el_est_plan **)state, err);
}

static void est_plan_destroy(void *state)
{
    el_est_plan_destroy(state);
}

const el_estimator_type el_estimator_fb = {
    EL_METHOD_FB, "fb", "forward-backward DMD", 0, 0,
    fb_plan_create, est_plan_destroy, fb_tls_fit, &fb_provider, el_est_boot_states, 0, NULL, NULL
};

const el_estimator_type el_estimator_tls = {
    EL_METHOD_TLS, "tls", "total-least-squares DMD", 0, 0,
    tls_plan_create, est_plan_destroy, fb_tls_fit, &tls_provider,
    el_est_boot_states_isotropic, 1, NULL, NULL
};
