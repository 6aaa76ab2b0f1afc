/* el_est_ssi: covariance-driven stochastic subspace identification (Van
 * Overschee & De Moor 1996; Peeters & De Roeck 1999): basis and rank from
 * step 1, the system matrix by shift invariance of the observability
 * matrix of the weighted block Hankel; and the same estimator on an exactly
 * known output covariance sequence (el_ssi_covariance). */
#include <complex.h>

#include "el_est_common.h"
#include "el_est_ssi.h"
#include "el_estimator.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ */
/* Covariance-driven stochastic subspace identification (Van Overschee &
 * De Moor 1996; Peeters & De Roeck 1999), reduced step. */

static size_t ssi_core_work(size_t r)
{
    return 34 * r * r + 32 * r + 16;
}

/* cov: centred cross-products of [x; y; zeta]. The block Hankel
 * H = [Sxz; Syz] (future [x; y] against past zeta) is weighted by
 * diag(Sxx^-1/2, Sxx^-1/2) on the left (the same weight on both future
 * blocks keeps the shift structure) and Szz^+1/2 on the right; its r
 * leading left singular vectors U_r give the observability matrix
 * O = diag(Sxx^1/2, Sxx^1/2) U_r = [O1; O2] and A = O2 O1^-1. Returns 1
 * when Sxx is singular, the Hankel has rank below r, or O1 is singular. */
static int ssi_core(size_t r, const double *cov, size_t ld, double *a, double *work)
{
    size_t n2 = 2 * r;
    double *pool = work;
    double *wx = el_est_take(&pool, r * r), *wxi = el_est_take(&pool, r * r);
    double *sw = el_est_take(&pool, el_est_sym_fun_work(n2));
    double *wz = el_est_take(&pool, n2 * n2), *h = el_est_take(&pool, n2 * n2);
    double *t1 = el_est_take(&pool, n2 * n2), *hw = el_est_take(&pool, n2 * n2);
    double *u = el_est_take(&pool, n2 * n2), *s = el_est_take(&pool, n2);
    double *svw = el_est_take(&pool, 10 * n2 + 8), *o1 = el_est_take(&pool, r * r);
    double *o2 = el_est_take(&pool, r * r), *rw = el_est_take(&pool, 2 * r * r);
    /* Sxx^-1/2 and Sxx^1/2 from one decomposition of Sxx (the same
     * doubles as two el_est_sym_fun calls: dsyev gives the same bits for
     * the same matrix; a replicate spent a sixth of its solve on the
     * second one). */
    double *sv = sw, *slam = sv + r * r;
    if (el_est_sym_eig(r, cov, ld, sv, slam, slam + r))
        return 1;
    if (el_est_sym_fun_from_eig(r, sv, slam, -0.5, wx, r) < (int)r)
        return 1;
    if (el_est_sym_fun_from_eig(r, sv, slam, 0.5, wxi, r) < (int)r)
        return 1;
    if (el_est_sym_fun(n2, cov + 2 * r + 2 * r * ld, ld, -0.5, wz, n2, sw) < (int)r)
        return 1;
    for (size_t j = 0; j < n2; j++)
        for (size_t i = 0; i < n2; i++)
            h[i + j * n2] = cov[i + (2 * r + j) * ld];
    el_est_gemm(0, 0, n2, n2, n2, h, n2, wz, n2, t1, n2);
    el_est_gemm(0, 0, r, n2, r, wx, r, t1, n2, hw, n2);
    el_est_gemm(0, 0, r, n2, r, wx, r, t1 + r, n2, hw + r, n2);
    double dummy = 0.0;
    lapack_int info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'N', (lapack_int)n2,
                                          (lapack_int)n2, hw, (lapack_int)n2, s, u,
                                          (lapack_int)n2, &dummy, 1, svw,
                                          (lapack_int)(10 * n2 + 8));
    if (info != 0)
        return 1;
    if (!(s[r - 1] > 1e-12 * s[0]))
        return 1;
    el_est_gemm(0, 0, r, r, r, wxi, r, u, n2, o1, r);
    el_est_gemm(0, 0, r, r, r, wxi, r, u + r, n2, o2, r);
    return el_est_right_solve(r, r, o1, r, o2, r, a, r, rw);
}

static size_t ssi_work(const el_boot_dims *dims)
{
    size_t dim = 4 * dims->r;
    size_t solve = dim + dim * dim + ssi_core_work(dims->r);
    return solve > el_est_gram_work(dim) ? solve : el_est_gram_work(dim);
}

static int ssi_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                     double *offset, double *work)
{
    (void)b;
    return el_est_solve_plain(dims, 4, ssi_core, sum, a, offset, work);
}

static const el_boot_provider ssi_provider = {
    "stochastic subspace", el_est_win_span, el_est_win_nf, ssi_work, el_est_window_features, el_est_window_accumulate, ssi_solve
};

/* ------------------------------------------------------------------ */
/* ssi on an exact covariance sequence. */

/* E[x[k-h1] x[k-h2]'] = R_{h2-h1} (transposed when h2 < h1), written at
 * out (nc x nc block, leading dimension ld). */
static void cov_block(size_t nc, const double *cov, long h1, long h2, double *out,
                      size_t ld)
{
    long lag = h2 - h1;
    const double *rj = cov + (size_t)(lag >= 0 ? lag : -lag) * nc * nc;
    for (size_t j = 0; j < nc; j++)
        for (size_t i = 0; i < nc; i++)
            out[i + j * ld] = lag >= 0 ? rj[i + j * nc] : rj[j + i * nc];
}

el_status el_ssi_covariance(size_t n_channels, size_t n_cov, const double *cov,
                            size_t lags, size_t depth, size_t order, double *mu_re,
                            double *mu_im, el_error *err)
{
    size_t nc = n_channels, d = nc * (lags + 1), q = nc * depth;
    if (cov == NULL || mu_re == NULL || mu_im == NULL || nc == 0 || depth == 0 ||
        order == 0 || order > d || order > q || n_cov < 3 * lags + 4 ||
        n_cov < lags + depth + 1)
        return el_error_set(err, EL_ERR_INTERNAL, "el_ssi_covariance: bad sizes");
    size_t cols = d + q, dim = 4 * order;
    double *gram = malloc(cols * cols * sizeof(double));
    double *rho = malloc((d < q ? d : q) * sizeof(double));
    double *basis = malloc(d * order * sizeof(double));
    double *s1w = malloc(el_est_s1_work_size(d, q, 0) * sizeof(double));
    double *zz = malloc(4 * d * 4 * d * sizeof(double));
    double *vv = malloc(dim * dim * sizeof(double));
    double *tmp = malloc(4 * d * dim * sizeof(double));
    double *a = malloc(order * order * sizeof(double));
    double *cw = malloc(ssi_core_work(order) * sizeof(double));
    el_status st = EL_OK;
    if (!gram || !rho || !basis || !s1w || !zz || !vv || !tmp || !a || !cw) {
        st = el_error_set(err, EL_ERR_NOMEM, "out of memory (ssi covariance)");
        goto done;
    }
    /* The Gram of x[k], ..., x[k-K-depth]: block Toeplitz of R. */
    for (size_t bj = 0; bj < lags + 1 + depth; bj++)
        for (size_t bi = 0; bi < lags + 1 + depth; bi++)
            cov_block(nc, cov, (long)bi, (long)bj, gram + bi * nc + bj * nc * cols, cols);
    el_est_s1_result res;
    if (el_est_s1_from_gram(d, q, gram, NULL, 0, lags, (long)order, rho, basis, &res, s1w) ||
        res.rank != order) {
        st = el_error_set(err, EL_ERR_NUMERIC,
                          "ssi: the state-past covariance has rank %zu, below the "
                          "order %zu", res.rank, order);
        goto done;
    }
    /* Window [z[k]; z[k+1]; z[k-K-1]; z[k-2K-2]]: z[k - o] for
     * o = 0, -1, K+1, 2K+2, each K+1 blocks of x at lags o .. o+K. */
    long offs[4] = {0, -1, (long)lags + 1, 2 * (long)lags + 2};
    size_t d4 = 4 * d;
    for (size_t wj = 0; wj < 4; wj++)
        for (size_t bj = 0; bj <= lags; bj++)
            for (size_t wi = 0; wi < 4; wi++)
                for (size_t bi = 0; bi <= lags; bi++)
                    cov_block(nc, cov, offs[wi] + (long)bi, offs[wj] + (long)bj,
                              zz + (wi * d + bi * nc) + (wj * d + bj * nc) * d4, d4);
    /* vv = (I4 kron B)' zz (I4 kron B). */
    for (size_t wj = 0; wj < 4; wj++)
        for (size_t wi = 0; wi < 4; wi++) {
            el_est_gemm(0, 0, d, order, d, zz + wi * d + wj * d * d4, d4, basis, d, tmp, d);
            el_est_gemm(1, 0, order, order, d, basis, d, tmp, d,
                 vv + wi * order + wj * order * dim, dim);
        }
    if (ssi_core(order, vv, dim, a, cw)) {
        st = el_error_set(err, EL_ERR_NUMERIC, "ssi: the reduced realisation is singular");
        goto done;
    }
    lapack_int info = LAPACKE_dgeev(LAPACK_COL_MAJOR, 'N', 'N', (lapack_int)order, a,
                                    (lapack_int)order, mu_re, mu_im, NULL, 1, NULL, 1);
    if (info != 0)
        st = el_error_set(err, EL_ERR_NUMERIC, "ssi: the eigenvalue solver failed");
done:
    free(gram);
    free(rho);
    free(basis);
    free(s1w);
    free(zz);
    free(vv);
    free(tmp);
    free(a);
    free(cw);
    return st;
}

static size_t ssi_core_size(size_t r, size_t nu)
{
    (void)nu;
    return ssi_core_work(r);
}

static int ssi_core_step(size_t r, size_t nu, const double *cov, size_t ld, double *a,
                         double *b, double *work, int *ambiguous)
{
    (void)nu;
    (void)b;
    (void)ambiguous;
    return ssi_core(r, cov, ld, a, work);
}

static el_status ssi_failure(int code, el_error *err)
{
    (void)code;
    el_error_set(err, EL_ERR_NUMERIC,
                 "ssi: the block Hankel of the reduced correlations has rank "
                 "below the model order, or its observability matrix is singular");
    el_error_hint(err, "lower --rank, or leave --rank out for the rank the "
                       "past measurements support");
    return EL_ERR_NUMERIC;
}

static const el_est_core ssi_step = {
    "ssi", 1, 0, 0, ssi_core_size, ssi_core_step, ssi_failure
};

/* ssi assumes a stationary signal whose operating point is the channel
 * mean: its intercept is zero in the scaled coordinates. */
static el_status ssi_fit(el_fit_plan *plan, const el_series *series,
                        const el_series *inputs, el_model *model,
                        el_warnings *warnings, el_error *err)
{
    return el_est_instrument_fit(plan, series, inputs, model, 1, warnings, err);
}

static el_status ssi_plan_create(const el_fit_options *opt, size_t n_samples,
                                size_t n_channels, size_t n_inputs, void **state,
                                el_error *err)
{
    return el_est_plan_create(&ssi_step, opt, n_samples, n_channels, n_inputs,
                              (el_est_plan **)state, err);
}


const el_estimator_type el_estimator_ssi = {
    EL_METHOD_SSI, "ssi", "covariance-driven subspace identification", 0, 0,
    ssi_plan_create, el_est_plan_destroy_state, ssi_fit, &ssi_provider, el_est_boot_states, 0, NULL, NULL
};
