/* el_est_iv: instrumental variables with lagged measurements as
 * instruments (Soderstrom & Stoica 1983), with measured inputs; basis and
 * rank from the canonical correlations of the state with the past
 * (el_est_common, step 1). */
#include <complex.h>

#include "el_est_common.h"
#include "el_estimator.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ */
/* Instrumental variables (Soderstrom & Stoica 1983), extended form. */

static size_t iv_core_work(size_t r, size_t nu)
{
    size_t e = 2 * r + nu, g = r + nu;
    return 2 * e * e + el_est_sym_fun_work(e) + 2 * g * e + r * e + g * g + g * r;
}

/* cov: centred cross-products of v = [x; y; zeta (2r); u (nu)].
 * Regressor xi = [x; u], instruments eta = [zeta; u], W = Seta^+:
 * [A B] = Syeta W Sxieta' (Sxieta W Sxieta')^-1. Returns 1 when the
 * instruments do not determine the regressors. */
static int iv_core(size_t r, size_t nu, const double *cov, size_t ld, double *a,
                   double *b, double *work)
{
    size_t e = 2 * r + nu, g = r + nu;
    double *pool = work;
    double *see = el_est_take(&pool, e * e), *wm = el_est_take(&pool, e * e);
    double *sw = el_est_take(&pool, el_est_sym_fun_work(e));
    double *sxe = el_est_take(&pool, g * e), *sye = el_est_take(&pool, r * e);
    double *t = el_est_take(&pool, g * e), *mx = el_est_take(&pool, g * g), *nyt = el_est_take(&pool, g * r);
    for (size_t j = 0; j < e; j++) {
        size_t cj = j < 2 * r ? 2 * r + j : 4 * r + (j - 2 * r);
        for (size_t i = 0; i < e; i++) {
            size_t ci = i < 2 * r ? 2 * r + i : 4 * r + (i - 2 * r);
            see[i + j * e] = cov[ci + cj * ld];
        }
        for (size_t i = 0; i < g; i++) {
            size_t ci = i < r ? i : 4 * r + (i - r);
            sxe[i + j * g] = cov[ci + cj * ld];
        }
        for (size_t i = 0; i < r; i++)
            sye[i + j * r] = cov[(r + i) + cj * ld];
    }
    if (el_est_sym_fun(e, see, e, -1.0, wm, e, sw) <= 0)
        return 1;
    el_est_gemm(0, 0, g, e, e, sxe, g, wm, e, t, g);          /* t = Sxe W */
    el_est_gemm(0, 1, g, g, e, t, g, sxe, g, mx, g);          /* mx = Sxe W Sxe' */
    el_est_gemm(0, 1, g, r, e, t, g, sye, r, nyt, g);         /* nyt = Sxe W Sye' */
    if (el_est_gauss_solve(g, mx, g, nyt, g, r))              /* nyt = [A B]' */
        return 1;
    for (size_t i = 0; i < r; i++) {
        for (size_t j = 0; j < r; j++)
            a[i + j * r] = nyt[j + i * g];
        for (size_t j = 0; j < nu; j++)
            b[i + j * r] = nyt[r + j + i * g];
    }
    return 0;
}

static size_t iv_work(const el_boot_dims *dims)
{
    size_t dim = 4 * dims->r + dims->n_inputs;
    size_t solve = dim + dim * dim + iv_core_work(dims->r, dims->n_inputs);
    return solve > el_est_gram_work(dim) ? solve : el_est_gram_work(dim);
}

/* B is solved for with A whether or not the caller wants it. */
static int iv_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                    double *offset, double *work)
{
    size_t r = dims->r, nu = dims->n_inputs, dim = 4 * r + nu;
    double *mean = work, *cov = work + dim, *core = cov + dim * dim;
    if (el_est_too_few(sum[0], dim))
        return 1;
    el_est_unpack_cov(dim, sum, mean, cov);
    /* Without a caller's b, B goes where the covariance was: iv_core has
     * copied what it needs from cov before it writes a and b. */
    double *bb = b != NULL ? b : cov;
    if (iv_core(r, nu, cov, dim, a, bb, core))
        return 1;
    if (offset != NULL)
        el_est_offset_from(r, nu, mean, mean + r, mean + 4 * r, a, bb, offset);
    return 0;
}

static const el_boot_provider iv_provider = {
    "instrumental variables", el_est_win_span, el_est_win_nf, iv_work, el_est_window_features, el_est_window_accumulate, iv_solve
};

static int iv_core_step(size_t r, size_t nu, const double *cov, size_t ld, double *a,
                        double *b, double *work, int *ambiguous)
{
    (void)ambiguous;
    return iv_core(r, nu, cov, ld, a, b, work);
}

static el_status iv_failure(int code, el_error *err)
{
    (void)code;
    el_error_set(err, EL_ERR_NUMERIC,
                 "iv: the instruments do not determine the model (their "
                 "correlation with the state is singular)");
    el_error_hint(err, "lower --rank, or leave --rank out for the rank the "
                       "instruments support");
    return EL_ERR_NUMERIC;
}

static const el_est_core iv_step = {
    "iv", 1, 0, 1, iv_core_work, iv_core_step, iv_failure
};

static el_status iv_fit(el_fit_plan *plan, const el_series *series,
                        const el_series *inputs, el_model *model,
                        el_warnings *warnings, el_error *err)
{
    return el_est_instrument_fit(plan, series, inputs, model, 0, warnings, err);
}

static el_status iv_plan_create(const el_fit_options *opt, size_t n_samples,
                                size_t n_channels, size_t n_inputs, void **state,
                                el_error *err)
{
    return el_est_plan_create(&iv_step, opt, n_samples, n_channels, n_inputs,
                              (el_est_plan **)state, err);
}


const el_estimator_type el_estimator_iv = {
    EL_METHOD_IV, "iv", "instrumental variables", 1, 0,
    iv_plan_create, el_est_plan_destroy_state, iv_fit, &iv_provider, el_est_boot_states, 0, NULL, NULL
};
