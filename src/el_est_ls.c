/* el_est_ls: affine least squares / exact DMD (Tu et al. 2014), with
 * measured inputs DMD with control (Proctor, Brunton & Kutz 2016): the fit
 * on the SVD of the snapshots and the bootstrap provider (the regression in
 * reduced coordinates, which the bootstrap also uses as its reference for
 * residuals and model-based replicates). */
#include "el_est_common.h"
#include "el_estimator.h"
#include "el_reduced.h"

#include <cblas.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ */
/* Least-squares statistics provider (with inputs: DMD with control). */

static size_t ls_span(const el_boot_dims *dims)
{
    (void)dims;
    return 2;
}

static size_t ls_n_features(const el_boot_dims *dims)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    return 1 + g + r + g * (g + 1) / 2 + r * g;
}

static size_t ls_work_doubles(const el_boot_dims *dims)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    return g * g + r * g + g + r + g;
}

/* Regressor xi = [w_k; u_k] (the state's stored values), response
 * y = w_k+1 (the next state's first r values). */
/* ls_features' layout for r states and g regressors: inlined with
 * constant r and g for the common small sizes (ls_features), so the
 * compiler unrolls the loops and stores the products in vectors; the same
 * products either way (each one rounded multiplication). restrict: out
 * never overlaps the states. */
static inline void ls_features_rg(size_t r, size_t g, const double *restrict states,
                                  double *restrict out)
{
    const double *restrict xi = states, *restrict v = states + g;
    out[0] = 1.0;
    for (size_t i = 0; i < g; i++)
        out[1 + i] = xi[i];
    for (size_t i = 0; i < r; i++)
        out[1 + g + i] = v[i];
    double *restrict o = out + 1 + g + r;
    for (size_t j = 0; j < g; j++) {
        double xj = xi[j];
        for (size_t i = j; i < g; i++)
            o[i - j] = xi[i] * xj;
        o += g - j;
    }
    for (size_t j = 0; j < g; j++) {
        double xj = xi[j];
        for (size_t i = 0; i < r; i++)
            o[i] = v[i] * xj;
        o += r;
    }
}

static void ls_features(const el_boot_dims *dims, const double *restrict states,
                        double *restrict out)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    if (r == g) {
        switch (r) {
        case 2: ls_features_rg(2, 2, states, out); return;
        case 3: ls_features_rg(3, 3, states, out); return;
        case 4: ls_features_rg(4, 4, states, out); return;
        case 6: ls_features_rg(6, 6, states, out); return;
        case 8: ls_features_rg(8, 8, states, out); return;
        default: break;
        }
    }
    ls_features_rg(r, g, states, out);
}

/* [A B] = Syxi Sxixi^-1 with the centred cross-products. In the reduced
 * coordinates the state block of Sxixi over the full sample is m I
 * (orthonormal projection, then whitening) and the scaled inputs have
 * unit variance, so a replicate's Sxixi stays well conditioned unless an
 * input follows the state (which the point fit refuses), and a Cholesky
 * factorisation loses nothing that a QR of the weighted regression would
 * keep; the pivot test only catches a replicate that really lost a
 * direction. */
static int ls_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                    double *offset, double *work)
{
    size_t r = dims->r, nu = dims->n_inputs, g = r + nu;
    double n = sum[0];
    if (!(n >= (double)(g + 2)))
        return 1;
    double *xbar = work, *vbar = work + g, *x = vbar + r;
    double *sxx = x + g, *syx = sxx + g * g;
    for (size_t i = 0; i < g; i++)
        xbar[i] = sum[1 + i] / n;
    for (size_t i = 0; i < r; i++)
        vbar[i] = sum[1 + g + i] / n;
    size_t idx = 1 + g + r;
    for (size_t j = 0; j < g; j++)
        for (size_t i = j; i < g; i++) {
            double v = sum[idx++] - n * xbar[i] * xbar[j];
            sxx[i + j * g] = v;
            sxx[j + i * g] = v;
        }
    for (size_t j = 0; j < g; j++)
        for (size_t i = 0; i < r; i++)
            syx[i + j * r] = sum[idx++] - n * vbar[i] * xbar[j];
    if (el_reduced_cholesky(g, sxx, 1e-12))
        return 1;
    /* Row i of [A B] solves Sxixi c_i' = (row i of Syxi)'. */
    for (size_t i = 0; i < r; i++) {
        for (size_t j = 0; j < g; j++)
            x[j] = syx[i + j * r];
        el_reduced_forward_subst(g, sxx, x);
        el_reduced_backward_subst(g, sxx, x);
        for (size_t j = 0; j < g; j++)
            if (!isfinite(x[j]))
                return 1;
        for (size_t j = 0; j < r; j++)
            a[i + j * r] = x[j];
        if (b != NULL)
            for (size_t j = 0; j < nu; j++)
                b[i + j * r] = x[r + j];
        if (offset != NULL) {
            double v = vbar[i];
            for (size_t j = 0; j < g; j++)
                v -= x[j] * xbar[j];
            offset[i] = v;
        }
    }
    return 0;
}

/* ls_features summed over n_pairs consecutive pairs by two matrix
 * products (the states of the run are a g x n_pairs matrix X with leading
 * dimension g, the responses the r x n_pairs matrix one state further):
 * five times faster than adding per-pair feature vectors. */
static void ls_accumulate(const el_boot_dims *dims, const double *states, size_t n_pairs,
                          double *acc, double *work)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    double *sx = acc + 1, *sy = acc + 1 + g, *sxx = acc + 1 + g + r;
    double *syx = sxx + g * (g + 1) / 2;
    acc[0] += (double)n_pairs;
    /* Four pairs a pass: each sum still adds its terms one after the
     * other in pair order (the same doubles), but is loaded and stored once
     * per four pairs; the response of pair k is the regressor's first r
     * values one state further. */
    double *restrict ax = sx, *restrict ay = sy;
    size_t k = 0;
    for (; k + 4 <= n_pairs; k += 4) {
        const double *restrict x0 = states + k * g, *restrict x1 = x0 + g;
        const double *restrict x2 = x1 + g, *restrict x3 = x2 + g, *restrict x4 = x3 + g;
        for (size_t i = 0; i < g; i++) {
            double v = ax[i];
            v += x0[i];
            v += x1[i];
            v += x2[i];
            v += x3[i];
            ax[i] = v;
        }
        for (size_t i = 0; i < r; i++) {
            double v = ay[i];
            v += x1[i];
            v += x2[i];
            v += x3[i];
            v += x4[i];
            ay[i] = v;
        }
    }
    for (; k < n_pairs; k++) {
        const double *xi = states + k * g;
        for (size_t i = 0; i < g; i++)
            ax[i] += xi[i];
        for (size_t i = 0; i < r; i++)
            ay[i] += xi[g + i];
    }
    /* Lower triangle of X X' into work, then packed column by column as
     * ls_features lays it out. */
    cblas_dsyrk(CblasColMajor, CblasLower, CblasNoTrans, (int)g, (int)n_pairs, 1.0, states,
                (int)g, 0.0, work, (int)g);
    size_t idx = 0;
    for (size_t j = 0; j < g; j++)
        for (size_t i = j; i < g; i++)
            sxx[idx++] += work[i + j * g];
    /* Y X' is r x g column-major, the layout of the features. */
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, (int)r, (int)g, (int)n_pairs, 1.0,
                states + g, (int)g, states, (int)g, 1.0, syx, (int)r);
}

static const el_boot_provider ls_provider = {
    "least squares", ls_span, ls_n_features, ls_work_doubles, ls_features, ls_accumulate,
    ls_solve
};

const el_boot_provider *el_boot_provider_ls(void)
{
    return &ls_provider;
}

/* ------------------------------------------------------------------ */
/* The fit. */

/* Workspace of the input regression (with inputs only): small, d + nu
 * rows, because the regression runs on the snapshots' triangular factor
 * (el_fit_plan: [X' U' Y'] = Q R), never on the window's rows. */
typedef struct {
    double *uperp;     /* (d + nu) x nu: Uc minus its part in span(V_r), in Q's basis */
    double *ybuf;      /* (d + nu) x d: Y' in Q's basis, then Y' - Uc B_s' projected */
    double *gels_work;
    lapack_int gels_lwork;
} ls_state;


/* Workspace of dgels for the input regression (ls with inputs). */
static el_status query_gels_work(lapack_int rows, lapack_int nu, lapack_int d,
                                 lapack_int *lwork, el_error *err)
{
    double q = 0.0, dummy = 0.0;
    lapack_int info = LAPACKE_dgels_work(LAPACK_COL_MAJOR, 'N', rows, nu, d, &dummy, rows,
                                         &dummy, rows, &q, -1);
    if (info != 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "dgels workspace query failed (info %d)", (int)info);
    *lwork = (lapack_int)ceil(q) + 1;
    return EL_OK;
}

static void ls_plan_destroy(void *state)
{
    ls_state *ls = state;
    if (ls == NULL)
        return;
    free(ls->uperp);
    free(ls->ybuf);
    free(ls->gels_work);
    free(ls);
}

static el_status ls_plan_create(const el_fit_options *opt, size_t n_samples,
                                size_t n_channels, size_t n_inputs, void **state,
                                el_error *err)
{
    (void)n_samples;
    *state = NULL;
    if (n_inputs == 0)
        return EL_OK;
    size_t d = n_channels * (opt->lags + 1), rows = d + n_inputs;
    lapack_int gels_lwork = 0;
    el_status st = query_gels_work((lapack_int)rows, (lapack_int)n_inputs, (lapack_int)d,
                                   &gels_lwork, err);
    if (st != EL_OK)
        return st;
    ls_state *ls = calloc(1, sizeof *ls);
    if (ls == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    ls->gels_lwork = gels_lwork;
    ls->uperp = malloc(rows * n_inputs * sizeof(double));
    ls->ybuf = malloc(rows * d * sizeof(double));
    ls->gels_work = malloc((size_t)gels_lwork * sizeof(double));
    if (!ls->uperp || !ls->ybuf || !ls->gels_work) {
        ls_plan_destroy(ls);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    *state = ls;
    return EL_OK;
}


/* Exact DMD (Tu et al. 2014) on the centred scaled snapshots: lift = Yc
 * V_r S_r^-1, a_reduced = U_r' lift, Ad_s = lift U_r', c_s = mean(Y) -
 * Ad_s mean(X). The right singular vectors of X are V = Q_x svd_ur
 * (el_fit_plan), so Yc V_r = M' svd_ur_r with M = Q_x' Y' (d x d, leading
 * dimension ldm): the block R_xy of the factor, or R_xy - R_xu B_s' with
 * inputs. */
static void exact_dmd(el_fit_plan *plan, el_model *m, const double *mq, int ldm)
{
    int d = (int)plan->state_dim, r = (int)m->rank;
    cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, d, r, d, 1.0, mq, ldm,
                plan->svd_ur, d, 0.0, plan->yv, d);
    for (int q = 0; q < r; q++) {
        double inv = 1.0 / m->singular_values[q];
        for (int i = 0; i < d; i++) {
            m->lift[i + (size_t)d * q] = plan->yv[i + (size_t)d * q] * inv;
            /* U = (svd_vt)': row q of svd_vt is column q of U. */
            m->basis[i + (size_t)d * q] = plan->svd_vt[q + (size_t)d * i];
        }
    }
    cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, r, r, d, 1.0, m->basis, d,
                m->lift, d, 0.0, m->a_reduced, r);
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, d, d, r, 1.0, m->lift, d,
                m->basis, d, 0.0, m->ad_scaled, d);
    memcpy(m->offset_scaled, plan->ymean, (size_t)d * sizeof(double));
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, d, -1.0, m->ad_scaled, d,
                plan->xmean, 1, 1.0, m->offset_scaled, 1);
}


/* DMD with control (Proctor, Brunton & Kutz 2016) on the exact-DMD basis:
 * Y' = V_r G1 + Uc B_s' + residual, solved as two orthogonal steps (V_r is
 * orthonormal): B_s' = Uperp^+ Y' with Uperp = Uc - V_r V_r' Uc (Householder
 * QR, dgels), then G1 = V_r' (Y' - Uc B_s'); lift = G1' S_r^-1. Without
 * truncation this is the least-squares [Ad B] of Y on [X; U]. With the
 * factor [X' U' Y'] = [Q_x Q_u Q_y] R the whole regression lives in the
 * orthonormal basis: Uc = Q_x R_xu + Q_u R_uu, Y' = Q_x R_xy + Q_u R_uy +
 * Q_y R_yy, V_r = Q_x svd_ur_r; Uperp has no Q_y part, so the rows of R_yy
 * drop out of the least-squares problem and it has d + nu rows. */
static el_status exact_dmd_inputs(el_fit_plan *plan, ls_state *ls, el_model *m,
                                  el_error *err)
{
    int d = (int)plan->state_dim, r = (int)m->rank, nu = (int)plan->n_inputs;
    int g = (int)plan->rcols, rows = d + nu;
    const double *rxu = plan->rfac + (size_t)g * d, *rxy = plan->rfac + (size_t)g * (d + nu);
    /* bred (r x nu) holds V_r' Uc = svd_ur_r' R_xu for now. */
    cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, r, nu, d, 1.0, plan->svd_ur, d,
                rxu, g, 0.0, plan->bred, r);
    for (int j = 0; j < nu; j++) {
        memcpy(ls->uperp + (size_t)rows * j, rxu + (size_t)g * j, (size_t)rows * sizeof(double));
    }
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, d, nu, r, -1.0, plan->svd_ur,
                d, plan->bred, r, 1.0, ls->uperp, rows);
    for (int i = 0; i < d; i++)
        memcpy(ls->ybuf + (size_t)rows * i, rxy + (size_t)g * i, (size_t)rows * sizeof(double));
    lapack_int info = LAPACKE_dgels_work(LAPACK_COL_MAJOR, 'N', rows, nu, d, ls->uperp,
                                         rows, ls->ybuf, rows, ls->gels_work,
                                         ls->gels_lwork);
    int collinear = info > 0;
    /* R of the QR of Uperp sits in its upper triangle: a diagonal at
     * 1e-10 of the input's own spread (the norm of its column of the
     * factor, = ||Uc_j||) means that input is (nearly) a combination of
     * the state and the other inputs. */
    for (int j = 0; j < nu && !collinear; j++) {
        double ref = cblas_dnrm2(rows, rxu + (size_t)g * j, 1);
        if (!(fabs(ls->uperp[j + (size_t)rows * j]) > 1e-10 * ref))
            collinear = 1;
    }
    if (info < 0)
        return el_error_set(err, EL_ERR_INTERNAL, "dgels called wrongly (info %d)",
                            (int)info);
    if (collinear) {
        el_error_set(err, EL_ERR_DATA,
                     "an input is (nearly) a linear combination of the state channels "
                     "and the other inputs over the window: its effect B cannot be "
                     "told apart from the dynamics");
        el_error_option(err, "--input");
        el_error_hint(err, "leave that input out, or do not list a state channel as "
                           "an input");
        return EL_ERR_DATA;
    }
    /* ybuf rows 0..nu-1 hold B_s' (nu x d). */
    for (int j = 0; j < nu; j++)
        for (int i = 0; i < d; i++)
            m->input_b_scaled[i + (size_t)d * j] = ls->ybuf[j + (size_t)rows * i];
    /* Q_x' (Y' - Uc B_s') = R_xy - R_xu B_s' into ybuf (d x d). */
    for (int i = 0; i < d; i++)
        memcpy(ls->ybuf + (size_t)d * i, rxy + (size_t)g * i, (size_t)d * sizeof(double));
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, d, d, nu, -1.0, rxu, g,
                m->input_b_scaled, d, 1.0, ls->ybuf, d);
    exact_dmd(plan, m, ls->ybuf, d);
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, nu, -1.0, m->input_b_scaled, d,
                plan->umean, 1, 1.0, m->offset_scaled, 1);
    return EL_OK;
}

static el_status ls_fit(el_fit_plan *plan, const el_series *series,
                        const el_series *inputs, el_model *model,
                        el_warnings *warnings, el_error *err)
{
    (void)series;
    (void)inputs;
    el_status st = el_fit_choose_rank(plan, model, warnings, err);
    if (st != EL_OK)
        return st;
    if (plan->n_inputs > 0)
        return exact_dmd_inputs(plan, plan->est, model, err);
    exact_dmd(plan, model, plan->rfac + plan->rcols * plan->state_dim,
              (int)plan->rcols);
    return EL_OK;
}

const el_estimator_type el_estimator_ls = {
    EL_METHOD_LS, "ls", "affine least squares", 1, 1,
    ls_plan_create, ls_plan_destroy, ls_fit, &ls_provider, el_est_boot_states, 0, NULL, NULL
};
