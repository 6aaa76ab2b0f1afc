/* el_est_iv: instrumental variables with lagged measurements as
 * instruments (Soderstrom & Stoica 1983), with measured inputs; basis and
 * rank from the canonical correlations of the state with the past
 * (el_est_common, step 1). Without --lags the prepare hook sets the delay
 * state to cover a horizon set in time (the subspace stage's rule,
 * el_subspace_choose_horizon): the state is then a multi-step future of h
 * samples, the instrument step's past the h samples before it, and A
 * relates consecutive h-sample windows (docs/method.md, "Instrumental
 * variables"). */
#include <complex.h>

#include "el_est_common.h"
#include "el_estimator.h"
#include "el_subspace.h"

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
/* Index in v of the i-th instrument (eta = [zeta; u]) and of the i-th
 * regressor (xi = [x; u]). */
static size_t iv_eta_index(size_t r, size_t i)
{
    return i < 2 * r ? 2 * r + i : 4 * r + (i - 2 * r);
}

static size_t iv_xi_index(size_t r, size_t i)
{
    return i < r ? i : 4 * r + (i - r);
}

/* iv_core's blocks (Seta, Sxieta, Syeta) in its work, where iv_core_blocks
 * reads them. */
static void iv_blocks(size_t r, size_t nu, double **see, double **sxe, double **sye,
                      double *work)
{
    size_t e = 2 * r + nu, g = r + nu;
    double *pool = work;
    *see = el_est_take(&pool, e * e);
    (void)el_est_take(&pool, e * e);
    (void)el_est_take(&pool, el_est_sym_fun_work(e));
    *sxe = el_est_take(&pool, g * e);
    *sye = el_est_take(&pool, r * e);
}

/* iv_core once its blocks are in its work (iv_blocks). */
static int iv_core_blocks(size_t r, size_t nu, double *a, double *b, double *work)
{
    size_t e = 2 * r + nu, g = r + nu;
    double *pool = work;
    double *see = el_est_take(&pool, e * e), *wm = el_est_take(&pool, e * e);
    double *sw = el_est_take(&pool, el_est_sym_fun_work(e));
    double *sxe = el_est_take(&pool, g * e), *sye = el_est_take(&pool, r * e);
    double *t = el_est_take(&pool, g * e), *mx = el_est_take(&pool, g * g), *nyt = el_est_take(&pool, g * r);
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

static int iv_core(size_t r, size_t nu, const double *cov, size_t ld, double *a,
                   double *b, double *work)
{
    size_t e = 2 * r + nu, g = r + nu;
    double *see, *sxe, *sye;
    iv_blocks(r, nu, &see, &sxe, &sye, work);
    for (size_t j = 0; j < e; j++) {
        size_t cj = iv_eta_index(r, j);
        for (size_t i = 0; i < e; i++)
            see[i + j * e] = cov[iv_eta_index(r, i) + cj * ld];
        for (size_t i = 0; i < g; i++)
            sxe[i + j * g] = cov[iv_xi_index(r, i) + cj * ld];
        for (size_t i = 0; i < r; i++)
            sye[i + j * r] = cov[(r + i) + cj * ld];
    }
    return iv_core_blocks(r, nu, a, b, work);
}

/* Entry (i, j) of the centred cross-products from a feature sum, as
 * el_est_unpack_cov makes it (the same doubles): sum of v_i v_j minus
 * n mean_max mean_min, from the packed lower triangle. */
static double iv_cov_entry(size_t dim, const double *sum, const double *mean, double n,
                           size_t i, size_t j)
{
    size_t lo = i < j ? i : j, hi = i < j ? j : i;
    /* Columns c < lo hold dim - c entries each: lo dim - lo (lo - 1) / 2. */
    size_t idx = 1 + dim + lo * dim - (lo * (lo - (lo > 0))) / 2 + (hi - lo);
    return sum[idx] - n * mean[hi] * mean[lo];
}

static size_t iv_work(const el_boot_dims *dims)
{
    size_t dim = 4 * dims->r + dims->n_inputs;
    /* The means, a B for a caller that wants none, the solve's blocks. */
    size_t solve = dim + dims->r * dims->n_inputs + iv_core_work(dims->r, dims->n_inputs);
    return solve > el_est_gram_work(dim) ? solve : el_est_gram_work(dim);
}

/* B is solved for with A whether or not the caller wants it. */
static int iv_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                    double *offset, double *work)
{
    size_t r = dims->r, nu = dims->n_inputs, dim = 4 * r + nu;
    double *mean = work, *b_unused = work + dim, *core = b_unused + r * nu;
    if (el_est_too_few(sum[0], dim))
        return 1;
    /* Only the blocks iv_core reads, straight from the packed sums (the
     * same doubles as el_est_unpack_cov's, in place): at 200 states the
     * whole 800 x 800 matrix, written twice over by its symmetry, cost
     * more than the blocks' use of it. */
    double n = sum[0];
    for (size_t i = 0; i < dim; i++)
        mean[i] = sum[1 + i] / n;
    size_t e = 2 * r + nu, g = r + nu;
    double *see, *sxe, *sye;
    iv_blocks(r, nu, &see, &sxe, &sye, core);
    for (size_t j = 0; j < e; j++) {
        size_t cj = iv_eta_index(r, j);
        for (size_t i = 0; i < e; i++)
            see[i + j * e] = iv_cov_entry(dim, sum, mean, n, iv_eta_index(r, i), cj);
        for (size_t i = 0; i < g; i++)
            sxe[i + j * g] = iv_cov_entry(dim, sum, mean, n, iv_xi_index(r, i), cj);
        for (size_t i = 0; i < r; i++)
            sye[i + j * r] = iv_cov_entry(dim, sum, mean, n, r + i, cj);
    }
    double *bb = b != NULL ? b : b_unused;
    if (iv_core_blocks(r, nu, a, bb, core))
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

/* Cost cap of the automatic horizon of iv: h * n_channels <= this, the
 * state dimension (K + 1) p and the past's alike. The instrument step
 * keeps its rows (n_samples x 2 h p doubles) for the rank test and the
 * fit an SVD of the snapshots (n_samples x h p), so the cap bounds memory
 * and time per fit; the figure is ours, chosen on family M of the
 * accuracy study (docs/accuracy.md). */
#define IV_MAX_ROWS 120

/* Most cells (samples x state dimension) the long horizon may give the
 * instrument step, which holds a few matrices of that size: 8e6 cells is
 * 64 MB each, the size of a 1e6-row x 8-channel log. A longer log keeps a
 * shorter horizon (down to the plain delay state), so assess's memory stays
 * a small multiple of the data's (measured at 1e6 x 8 with no cap: 1.5 GB
 * peak, 13 s CPU, against 0.3 GB and 3.2 s with the plain state). The
 * multi-sensor logs of the accuracy study (8,000-40,000 samples, a state of
 * at most IV_MAX_ROWS: 4.8e6 cells) keep their full horizon. */
#define IV_MAX_STATE_CELLS 8000000u

/* 1 when the instrument step and its windows have room for K lags of p
 * channels with depth K + 1 in n samples: el_est_plan_create's counts
 * (2 (d + q + 1) rows, 2 (d + 1) windows), with the rows counted as the
 * rank test counts them at its largest overlap correction, rows / (K + 1)
 * (el_est_s1_from_gram: consecutive delay states share K samples). Below
 * that even a canonical correlation of 1 can fail the test (measured: a
 * noise-free 2-channel log of 400 samples at K = 59 was refused). */
static int iv_room(size_t n, size_t p, size_t lags)
{
    size_t d = p * (lags + 1), dep = lags + 1;
    if (n < lags + dep + 3 || n < 2 * lags + 4)
        return 0;
    size_t rows = n - lags - dep, pairs = n - lags - 1;
    size_t windows = pairs > 2 * lags + 2 ? pairs - 2 * lags - 2 : 0;
    return rows / (lags + 1) >= 2 * (2 * d + 1) && windows >= 2 * (d + 1);
}

/* Without lags (K = 0), without --depth and without inputs, on two or
 * more channels: K + 1 = h, the horizon of the
 * subspace stage's rule (el_subspace_choose_horizon, capped at
 * IV_MAX_ROWS rows, or --horizon when given), lowered until the
 * instrument step has room. The state z[k] = [y_k; ...; y_k-h+1] is then a
 * multi-step window over about the correlation time of the slowest mode,
 * and the instrument step's past (depth K + 1 unless --depth) the h
 * samples before it: a slow mode that one step of a fast sampling barely
 * moves is seen over its whole time scale. A record too short for the
 * rule keeps K = 0 (the fit then says what is missing). Given lags
 * (--lags K or --lags auto), a given --depth and a given --rank (a
 * number or full: a rank of the state the user has in mind, checked
 * against it) keep the state as given
 * (iv as before: instruments one and two states back); one channel keeps
 * its route through --lags auto (auto's choice for single-sensor logs),
 * so single-channel results are unchanged. */
static el_status iv_prepare(const el_series *series, el_fit_options *opt, el_error *err)
{
    if (series == NULL || opt == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "iv: NULL argument");
    if (opt->lags > 0 || opt->depth > 0 || opt->rank > 0 || opt->rank == EL_RANK_ALL ||
        opt->inputs != NULL || series->n_channels < 2)
        return EL_OK;
    el_subspace_options so;
    el_subspace_defaults(&so);
    so.horizon_time = opt->horizon_time;
    so.max_rows = IV_MAX_ROWS;
    so.crossing_test = 1; /* a noise crossing would set a state of up to 120 rows */
    so.acf = opt->acf;
    el_subspace_horizon hz;
    el_error e2;
    el_error_clear(&e2);
    if (el_subspace_choose_horizon(series, &so, &hz, &e2) != EL_OK)
        return EL_OK;
    size_t n = series->n_samples, p = series->n_channels;
    size_t k = hz.rows > 1 ? hz.rows - 1 : 0;
    if (opt->horizon_time <= 0.0 && (k + 1) * p > IV_MAX_ROWS)
        k = IV_MAX_ROWS / p > 0 ? IV_MAX_ROWS / p - 1 : 0;
    while (k > 0 && (!iv_room(n, p, k) || n * (k + 1) * p > IV_MAX_STATE_CELLS))
        k--;
    opt->lags = k;
    return EL_OK;
}

const el_estimator_type el_estimator_iv = {
    EL_METHOD_IV, "iv", "instrumental variables", 1, EL_MODEL_RESAMPLING_SPREAD,
    iv_plan_create, el_est_plan_destroy_state, iv_fit, &iv_provider, el_est_boot_states, 0,
    iv_prepare, NULL
};
