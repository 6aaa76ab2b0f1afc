/* el_model: the model type's storage, the fit defaults, and the pieces
 * every estimator shares: the rank rules (numerical rank, Gavish-Donoho
 * hard threshold), the SVD basis and the full-state model of a reduced
 * one. */
#include "el_model.h"

#include <cblas.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Smallest singular value, relative to the largest, a fitted direction may
 * have (el_fit_choose_rank). */
#define FIT_RANK_FLOOR 1e-7


void el_fit_defaults(el_fit_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->lags = 0;
    opt->rank = EL_RANK_FULL;
    opt->method = EL_METHOD_LS;
    opt->depth = 0;
    opt->inputs = NULL;
}


double el_fit_hard_threshold_omega(double beta)
{
    /* Gavish & Donoho (2014), IEEE Trans. Inf. Theory 60(8): the paper's
     * cubic approximation, for unknown noise, of lambda*(beta)/sqrt(mu_beta)
     * (mu_beta: median of the Marchenko-Pastur law). */
    return ((0.56 * beta - 0.95) * beta + 1.82) * beta + 1.43;
}


size_t el_fit_hard_threshold_rank(const double *sv, size_t n, size_t rows,
                                  size_t cols)
{
    if (n == 0 || rows == 0 || cols == 0)
        return 0;
    double lo = (double)(rows < cols ? rows : cols);
    double hi = (double)(rows < cols ? cols : rows);
    /* sv is sorted (descending by contract), so the median is the middle. */
    double med = n % 2 == 1 ? sv[n / 2] : 0.5 * (sv[n / 2 - 1] + sv[n / 2]);
    double tau = el_fit_hard_threshold_omega(lo / hi) * med;
    size_t r = 0;
    for (size_t i = 0; i < n; i++)
        if (sv[i] > tau)
            r++;
    return r > 0 ? r : 1;
}


/* ---- model storage ---------------------------------------------------- */

void el_model_free(el_model *model)
{
    if (model == NULL)
        return;
    free(model->channel_mean);
    free(model->channel_scale);
    free(model->singular_values);
    free(model->basis);
    free(model->a_reduced);
    free(model->lift);
    free(model->ad_scaled);
    free(model->offset_scaled);
    free(model->ad);
    free(model->offset);
    free(model->operating_point);
    free(model->channel_r2);
    free(model->residual_rms);
    free(model->canonical_corr);
    free(model->input_mean);
    free(model->input_scale);
    free(model->input_b_scaled);
    free(model->input_b);
    free(model->subspace_poles);
    memset(model, 0, sizeof *model);
}


/* Chooses the rank from the option and the singular values; never above
 * the numerical rank, where 1/sigma would amplify rounding into the model. */
el_status el_fit_choose_rank(el_fit_plan *plan, el_model *m, el_warnings *w,
                             el_error *err)
{
    size_t d = plan->state_dim, p = plan->n_pairs;
    const double *sv = m->singular_values;
    if (!(sv[0] > 0.0)) {
        el_error_set(err, EL_ERR_DATA, "the snapshots do not vary: nothing to fit");
        el_error_hint(err, "choose a window where the channels move");
        return EL_ERR_DATA;
    }
    /* Below 1e-7 of the largest singular value (140 dB) a direction is
     * under the resolution of any logger (24 bits: 144 dB) and its 1/sigma
     * amplifies rounding, not motion; the bootstrap's whitening, whose
     * Gram matrix holds sigma^2, refuses exactly those directions (pivot
     * test 1e-14), so the fit drops them first (docs/accuracy.md, D5). */
    double rel = (double)(p > d ? p : d) * DBL_EPSILON;
    double cut = (rel > FIT_RANK_FLOOR ? rel : FIT_RANK_FLOOR) * sv[0];
    size_t r_num = 0;
    while (r_num < d && sv[r_num] > cut)
        r_num++;
    size_t r;
    m->rank_was_auto = 0;
    if (plan->rank_opt == EL_RANK_FULL || plan->rank_opt == EL_RANK_ALL) {
        r = d;
    } else if (plan->rank_opt == EL_RANK_AUTO) {
        r = el_fit_hard_threshold_rank(sv, d, d, p);
        m->rank_was_auto = 1;
    } else {
        r = (size_t)plan->rank_opt;
    }
    el_status st = EL_OK;
    if (r > r_num) {
        st = el_warnings_add(w,
                             "the snapshot matrix has numerical rank %zu of %zu "
                             "(channels or lags are linearly dependent, or the "
                             "record shows fewer independent motions than "
                             "states): rank lowered from %zu to %zu",
                             r_num, d, r, r_num);
        r = r_num;
    } else if (r < d && m->rank_was_auto) {
        /* The threshold scales the median singular value as a noise level;
         * when the kept rank reaches half the dimension the median is a
         * signal value and the threshold is set too high. */
        st = el_warnings_add(w,
                             "rank %zu of %zu chosen by the optimal hard "
                             "threshold (Gavish & Donoho 2014): the other "
                             "directions are treated as noise%s",
                             r, d,
                             2 * r >= d
                                 ? "; with so few states the median singular "
                                   "value is not a noise level and the choice is "
                                   "rough: add lags or give --rank"
                                 : "");
    } else if (r < d) {
        st = el_warnings_add(w,
                             "rank truncated to %zu of %zu as asked: the model "
                             "has %zu modes",
                             r, d, r);
    }
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    m->rank = r;
    return EL_OK;
}


/* The basis of the SVD of X (fb, tls use it as ls does). */
void el_fit_svd_basis(el_fit_plan *plan, el_model *m)
{
    size_t d = plan->state_dim;
    for (size_t q = 0; q < m->rank; q++)
        for (size_t i = 0; i < d; i++)
            m->basis[i + d * q] = plan->svd_vt[q + d * i];
}


/* The full-state model of a reduced one (fb, tls, iv, ssi): projected
 * modes lift = U_r A_r, Ad_s = lift U_r', B_s = U_r B_r, and the
 * intercept c_s = mean(Y) - Ad_s mean(X) - B_s mean(U); ssi assumes a
 * stationary signal whose operating point is the channel mean, c_s = (I -
 * Ad_s) 0 = 0 in the scaled coordinates. */
void el_fit_projected_model(el_fit_plan *plan, el_model *m, int zero_offset)
{
    int d = (int)plan->state_dim, r = (int)m->rank, nu = (int)plan->n_inputs;
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, d, r, r, 1.0, m->basis, d,
                m->a_reduced, r, 0.0, m->lift, d);
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, d, d, r, 1.0, m->lift, d,
                m->basis, d, 0.0, m->ad_scaled, d);
    if (nu > 0)
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, d, nu, r, 1.0, m->basis,
                    d, plan->bred, r, 0.0, m->input_b_scaled, d);
    if (zero_offset) {
        memset(m->offset_scaled, 0, (size_t)d * sizeof(double));
        return;
    }
    memcpy(m->offset_scaled, plan->ymean, (size_t)d * sizeof(double));
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, d, -1.0, m->ad_scaled, d, plan->xmean, 1,
                1.0, m->offset_scaled, 1);
    if (nu > 0)
        cblas_dgemv(CblasColMajor, CblasNoTrans, d, nu, -1.0, m->input_b_scaled, d,
                    plan->umean, 1, 1.0, m->offset_scaled, 1);
}
