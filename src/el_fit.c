/* el_fit: the fit of z[k+1] = Ad z[k] + B u[k] + c: centred scaled
 * snapshots, their SVD, the method's estimator through its type
 * (el_estimator.h), then physical units, the fixed point and one-step fit
 * statistics. */
#include "el_fit.h"
#include "el_stats.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* Reciprocal condition numbers of I - Ad below this draw the "eigenvalue
 * near 1" warning: z* then moves by more than 1e8 times the relative error
 * of Ad, and a fitted Ad seldom carries more than a few correct digits. */
#define EL_FIT_RCOND_WARN 1e-8

/* Fewer pairs than this many per coefficient of one row of [Ad c] draws a
 * warning (common practice: about ten observations per parameter). */
#define EL_FIT_PAIRS_PER_PARAM_WARN 10

/* el_fit_plan keeps LAPACK's integers as int (el_model.h does not pull in
 * LAPACKE's headers, whose complex.h would reach every module). */
_Static_assert(sizeof(lapack_int) == sizeof(int), "lapack_int must be int (LP64 LAPACK)");

/* ---- plan ------------------------------------------------------------ */

static el_status check_options(size_t n_samples, size_t n_channels,
                               const el_fit_options *opt, el_error *err)
{
    const el_estimator_type *type = el_estimator_for(opt->method);
    if (type == NULL) {
        el_error_set(err, EL_ERR_USAGE, "unknown fit method %d", (int)opt->method);
        el_error_option(err, "--method");
        char names[128];
        el_error_hint(err, "use one of %s", el_estimator_names(names, sizeof names));
        return EL_ERR_USAGE;
    }
    if (opt->inputs != NULL) {
        const el_series *u = opt->inputs;
        if (u->n_channels == 0 || u->values == NULL || u->n_samples != n_samples) {
            el_error_set(err, EL_ERR_USAGE,
                         "the inputs (%zu samples, %zu channels) do not match the "
                         "series (%zu samples)", u->n_samples, u->n_channels, n_samples);
            el_error_option(err, "--input");
            el_error_hint(err, "take the inputs from the same log and window");
            return EL_ERR_USAGE;
        }
        if (!type->takes_inputs) {
            el_error_set(err, EL_ERR_USAGE, "--method %s does not take measured inputs",
                         el_method_name(opt->method));
            el_error_option(err, "--input");
            el_error_hint(err, "use --method ls (DMD with control) or --method iv with "
                               "--input, or leave --input out");
            return EL_ERR_USAGE;
        }
    }
    if (n_channels == 0) {
        return el_error_set(err, EL_ERR_INTERNAL, "el_fit: a series with no channel");
    }
    if (opt->lags >= SIZE_MAX / 2 / n_channels) {
        el_error_set(err, EL_ERR_USAGE, "%zu lags is far too many", opt->lags);
        el_error_option(err, "--lags");
        el_error_hint(err, "use fewer lags");
        return EL_ERR_USAGE;
    }
    size_t d = n_channels * (opt->lags + 1);
    size_t nu = opt->inputs != NULL ? opt->inputs->n_channels : 0;
    if (opt->rank < EL_RANK_ALL) {
        el_error_set(err, EL_ERR_USAGE, "rank %ld is not valid", opt->rank);
        el_error_option(err, "--rank");
        el_error_hint(err, "give a positive rank, or 'auto', or leave --rank out "
                           "for full rank");
        return EL_ERR_USAGE;
    }
    if (opt->rank > 0 && (size_t)opt->rank > d) {
        el_error_set(err, EL_ERR_USAGE,
                     "rank %ld is larger than the state dimension %zu "
                     "(%zu channel%s x %zu lag%s + current)",
                     opt->rank, d, n_channels, n_channels == 1 ? "" : "s",
                     opt->lags, opt->lags == 1 ? "" : "s");
        el_error_option(err, "--rank");
        el_error_hint(err, "give a rank between 1 and %zu, or add lags", d);
        return EL_ERR_USAGE;
    }
    /* Pairs k = K..N-2 exist only when N >= K + 2. */
    size_t pairs = n_samples >= opt->lags + 2 ? n_samples - opt->lags - 1 : 0;
    if (pairs < 2 * (d + nu + 1)) {
        el_error_set(err, EL_ERR_DATA,
                     "%zu snapshot pair%s for a state of dimension %zu: at "
                     "least %zu are needed (twice the %zu coefficients of "
                     "each row of [Ad B c])",
                     pairs, pairs == 1 ? "" : "s", d, 2 * (d + nu + 1), d + nu + 1);
        el_error_hint(err, "use a longer window (--from/--to) or fewer lags "
                           "(--lags) or fewer channels (--channels)");
        return EL_ERR_DATA;
    }
    if (pairs > (size_t)INT_MAX || d > (size_t)INT_MAX ||
        pairs > (size_t)INT_MAX / d) {
        el_error_set(err, EL_ERR_DATA,
                     "%zu pairs x %zu states exceed what LAPACK can index",
                     pairs, d);
        el_error_hint(err, "use a shorter window (--from/--to)");
        return EL_ERR_DATA;
    }
    return EL_OK;
}

/* Largest workspace of the SVD drivers (dgesdd first, dgesvd as fallback)
 * for an n_pairs x d matrix, by LAPACK's own query (lwork = -1). */
static el_status query_svd_work(lapack_int p, lapack_int d, lapack_int *lwork,
                                el_error *err)
{
    double q1 = 0.0, q2 = 0.0, dummy = 0.0;
    lapack_int idummy = 0;
    lapack_int info = LAPACKE_dgesdd_work(LAPACK_COL_MAJOR, 'S', p, d, &dummy, p,
                                          &dummy, &dummy, p, &dummy, d, &q1, -1,
                                          &idummy);
    if (info != 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "dgesdd workspace query failed (info %d)", (int)info);
    info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'S', p, d, &dummy, p, &dummy,
                               &dummy, p, &dummy, d, &q2, -1);
    if (info != 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "dgesvd workspace query failed (info %d)", (int)info);
    double q = q1 > q2 ? q1 : q2;
    if (!(q < (double)INT_MAX))
        return el_error_set(err, EL_ERR_DATA, "the SVD workspace is too large");
    /* The query answers in a double; round up so a value like 1e5-eps
     * cannot lose one element. */
    *lwork = (lapack_int)ceil(q) + 1;
    return EL_OK;
}

void el_fit_plan_destroy(el_fit_plan *plan)
{
    if (plan == NULL)
        return;
    free(plan->xt);
    free(plan->ytc);
    free(plan->svd_u);
    free(plan->svd_vt);
    free(plan->yv);
    free(plan->resid);
    free(plan->xmean);
    free(plan->ymean);
    free(plan->lu);
    free(plan->rhs);
    free(plan->con_work);
    free(plan->ipiv);
    free(plan->iwork);
    free(plan->work);
    free(plan->uc);
    free(plan->umean);
    free(plan->bred);
    if (plan->type != NULL)
        plan->type->plan_destroy(plan->est);
    free(plan);
}

el_status el_fit_plan_create(size_t n_samples, size_t n_channels,
                             const el_fit_options *opt, el_fit_plan **out,
                             el_error *err)
{
    el_fit_options defaults;
    if (out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_fit_plan_create: no output");
    *out = NULL;
    if (opt == NULL) {
        el_fit_defaults(&defaults);
        opt = &defaults;
    }
    el_status st = check_options(n_samples, n_channels, opt, err);
    if (st != EL_OK)
        return st;
    size_t d = n_channels * (opt->lags + 1);
    size_t p = n_samples - opt->lags - 1;
    size_t nu = opt->inputs != NULL ? opt->inputs->n_channels : 0;
    lapack_int lwork = 0;
    st = query_svd_work((lapack_int)p, (lapack_int)d, &lwork, err);
    if (st != EL_OK)
        return st;
    const el_estimator_type *type = el_estimator_for(opt->method);
    void *est = NULL;
    if ((st = type->plan_create(opt, n_samples, n_channels, nu, &est, err)) != EL_OK)
        return st;

    el_fit_plan *plan = calloc(1, sizeof *plan);
    if (plan == NULL) {
        type->plan_destroy(est);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    plan->type = type;
    plan->est = est;
    plan->n_inputs = nu;
    plan->inputs = opt->inputs;
    plan->n_samples = n_samples;
    plan->n_channels = n_channels;
    plan->lags = opt->lags;
    plan->state_dim = d;
    plan->n_pairs = p;
    plan->rank_opt = opt->rank;
    plan->method = opt->method;
    plan->lwork = lwork;
    plan->xt = malloc(p * d * sizeof(double));
    plan->ytc = malloc(p * d * sizeof(double));
    plan->svd_u = malloc(p * d * sizeof(double));
    plan->svd_vt = malloc(d * d * sizeof(double));
    plan->yv = malloc(d * d * sizeof(double));
    plan->resid = malloc(p * n_channels * sizeof(double));
    plan->xmean = malloc(d * sizeof(double));
    plan->ymean = malloc(d * sizeof(double));
    plan->lu = malloc(d * d * sizeof(double));
    plan->rhs = malloc(d * sizeof(double));
    plan->con_work = malloc(4 * d * sizeof(double));
    plan->ipiv = malloc(d * sizeof(lapack_int));
    plan->iwork = malloc(8 * d * sizeof(lapack_int));
    plan->work = malloc((size_t)lwork * sizeof(double));
    int ok = 1;
    if (nu > 0) {
        plan->uc = malloc(p * nu * sizeof(double));
        plan->umean = malloc(nu * sizeof(double));
        plan->bred = malloc(d * nu * sizeof(double));
        ok = plan->uc && plan->umean && plan->bred;
    }
    if (!ok || !plan->xt || !plan->ytc || !plan->svd_u || !plan->svd_vt || !plan->yv ||
        !plan->resid || !plan->xmean || !plan->ymean || !plan->lu || !plan->rhs ||
        !plan->con_work || !plan->ipiv || !plan->iwork || !plan->work) {
        el_fit_plan_destroy(plan);
        return el_error_set(err, EL_ERR_NOMEM,
                            "out of memory for a fit of %zu pairs x %zu states", p, d);
    }
    *out = plan;
    return EL_OK;
}

/* Allocates every array for rank up to d, or checks that an earlier fill
 * left arrays of the right size. */
static el_status model_storage(el_model *m, size_t n_channels, size_t d, size_t nu,
                               el_error *err)
{
    if (m->channel_mean != NULL) {
        if (m->n_channels == n_channels && m->state_dim == d && m->n_inputs == nu)
            return EL_OK;
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_fit: the model holds a fit of another size; "
                            "free it first");
    }
    memset(m, 0, sizeof *m);
    m->channel_mean = calloc(n_channels, sizeof(double));
    m->channel_scale = calloc(n_channels, sizeof(double));
    m->singular_values = calloc(d, sizeof(double));
    m->basis = calloc(d * d, sizeof(double));
    m->a_reduced = calloc(d * d, sizeof(double));
    m->lift = calloc(d * d, sizeof(double));
    m->ad_scaled = calloc(d * d, sizeof(double));
    m->offset_scaled = calloc(d, sizeof(double));
    m->ad = calloc(d * d, sizeof(double));
    m->offset = calloc(d, sizeof(double));
    m->operating_point = calloc(d, sizeof(double));
    m->channel_r2 = calloc(n_channels, sizeof(double));
    m->residual_rms = calloc(n_channels, sizeof(double));
    m->canonical_corr = calloc(d, sizeof(double));
    int ok = 1;
    if (nu > 0) {
        m->input_mean = calloc(nu, sizeof(double));
        m->input_scale = calloc(nu, sizeof(double));
        m->input_b_scaled = calloc(d * nu, sizeof(double));
        m->input_b = calloc(d * nu, sizeof(double));
        ok = m->input_mean && m->input_scale && m->input_b_scaled && m->input_b;
    }
    if (!ok || !m->channel_mean || !m->channel_scale || !m->singular_values ||
        !m->basis || !m->a_reduced || !m->lift || !m->ad_scaled || !m->offset_scaled ||
        !m->ad || !m->offset || !m->operating_point || !m->channel_r2 ||
        !m->residual_rms || !m->canonical_corr) {
        el_model_free(m);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for the model");
    }
    m->n_channels = n_channels;
    m->state_dim = d;
    m->n_inputs = nu;
    return EL_OK;
}

/* ---- execute ----------------------------------------------------------- */

/* Mean and population standard deviation of every channel (two passes:
 * the one-pass formula loses digits when the mean dwarfs the spread, which
 * is the usual case for a sensor sitting at its operating point). */
static el_status series_scaling(const el_series *s, double *mean_out,
                                double *scale_out, const char *kind, el_error *err)
{
    size_t n = s->n_samples;
    for (size_t c = 0; c < s->n_channels; c++) {
        double mean, sd;
        int constant = el_stats_spread(s->values + c * n, n, &mean, &sd);
        const char *name = s->names != NULL && s->names[c] != NULL ? s->names[c] : "?";
        if (!isfinite(mean) || !isfinite(sd)) {
            el_error_set(err, EL_ERR_DATA,
                         "%s '%s' has values that are not finite or too "
                         "large to fit (its mean or spread overflows)", kind, name);
            el_error_hint(err, "rescale the channel, or leave it out with --channels");
            return EL_ERR_DATA;
        }
        /* Scale-free (el_stats_spread): relative 1e-12 of the mean. */
        if (constant) {
            el_error_set(err, EL_ERR_DATA,
                         "%s '%s' is constant over the window "
                         "(value %.9g): it has no dynamics to fit", kind, name, mean);
            el_error_hint(err, "leave it out with --channels, or choose a "
                               "window where it moves");
            return EL_ERR_DATA;
        }
        mean_out[c] = mean;
        scale_out[c] = sd;
    }
    return EL_OK;
}

static el_status channel_scaling(const el_series *s, el_model *m, el_error *err)
{
    return series_scaling(s, m->channel_mean, m->channel_scale, "channel", err);
}

/* Fills plan->xt and plan->ytc with the centred, scaled X' and Y' (pairs
 * in rows, states in columns: every column is a contiguous stretch of one
 * channel, so the lag embedding is a strided copy) and their means. */
static void build_snapshots(el_fit_plan *plan, const el_series *s,
                            const el_model *m)
{
    size_t n = plan->n_samples, p = plan->n_pairs, nc = plan->n_channels;
    size_t k0 = plan->lags;
    for (size_t j = 0; j <= plan->lags; j++) {
        for (size_t c = 0; c < nc; c++) {
            size_t i = j * nc + c;
            const double *x = s->values + c * n;
            double mean = m->channel_mean[c], inv = 1.0 / m->channel_scale[c];
            double *xcol = plan->xt + i * p, *ycol = plan->ytc + i * p;
            double xs = 0.0, ys = 0.0;
            for (size_t q = 0; q < p; q++) {
                xcol[q] = (x[k0 - j + q] - mean) * inv;
                ycol[q] = (x[k0 + 1 - j + q] - mean) * inv;
                xs += xcol[q];
                ys += ycol[q];
            }
            xs /= (double)p;
            ys /= (double)p;
            for (size_t q = 0; q < p; q++) {
                xcol[q] -= xs;
                ycol[q] -= ys;
            }
            plan->xmean[i] = xs;
            plan->ymean[i] = ys;
        }
    }
}

/* Thin SVD X' = svd_u diag(sv) svd_vt. dgesdd is the fast driver; in the
 * rare case its divide and conquer does not converge, the QR-iteration
 * driver dgesvd gets a rebuilt copy (both are backward stable). */
static el_status thin_svd(el_fit_plan *plan, const el_series *s, el_model *m,
                          el_error *err)
{
    lapack_int p = (lapack_int)plan->n_pairs, d = (lapack_int)plan->state_dim;
    lapack_int info = LAPACKE_dgesdd_work(LAPACK_COL_MAJOR, 'S', p, d, plan->xt, p,
                                          m->singular_values, plan->svd_u, p,
                                          plan->svd_vt, d, plan->work, plan->lwork,
                                          plan->iwork);
    if (info > 0) {
        build_snapshots(plan, s, m);
        info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'S', p, d, plan->xt, p,
                                   m->singular_values, plan->svd_u, p, plan->svd_vt,
                                   d, plan->work, plan->lwork);
    }
    if (info < 0)
        return el_error_set(err, EL_ERR_INTERNAL, "SVD called wrongly (info %d)",
                            (int)info);
    if (info > 0) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "the SVD of the snapshot matrix did not converge");
        el_error_hint(err, "check the data for extreme values; a shorter window "
                           "or fewer lags may help");
        return EL_ERR_NUMERIC;
    }
    return EL_OK;
}


/* Scaled inputs over the pairs (u[k], k = K..N-2, the sample of X),
 * centred by their means; model->input_mean/scale set first. */
static void build_input_snapshots(el_fit_plan *plan, const el_series *u,
                                  const el_model *m)
{
    size_t n = plan->n_samples, p = plan->n_pairs;
    for (size_t j = 0; j < plan->n_inputs; j++) {
        const double *x = u->values + j * n;
        double mean = m->input_mean[j], inv = 1.0 / m->input_scale[j];
        double *col = plan->uc + j * p, acc = 0.0;
        for (size_t q = 0; q < p; q++) {
            col[q] = (x[plan->lags + q] - mean) * inv;
            acc += col[q];
        }
        acc /= (double)p;
        for (size_t q = 0; q < p; q++)
            col[q] -= acc;
        plan->umean[j] = acc;
    }
}

/* Physical units: z = m + D s with D = diag(scale) per lag block and the
 * inputs u = m_u + D_u v, so Ad = D Ad_s D^-1, B = D B_s D_u^-1 and
 * c = D c_s + (I - Ad) m - B m_u. */
static void to_physical(el_model *m)
{
    size_t d = m->state_dim, nc = m->n_channels, nu = m->n_inputs;
    for (size_t k = 0; k < d; k++)
        for (size_t i = 0; i < d; i++)
            m->ad[i + d * k] = m->channel_scale[i % nc] * m->ad_scaled[i + d * k] /
                               m->channel_scale[k % nc];
    for (size_t j = 0; j < nu; j++)
        for (size_t i = 0; i < d; i++)
            m->input_b[i + d * j] = m->channel_scale[i % nc] *
                                    m->input_b_scaled[i + d * j] / m->input_scale[j];
    for (size_t i = 0; i < d; i++) {
        double ci = m->channel_scale[i % nc] * m->offset_scaled[i] +
                    m->channel_mean[i % nc];
        for (size_t k = 0; k < d; k++)
            ci -= m->ad[i + d * k] * m->channel_mean[k % nc];
        for (size_t j = 0; j < nu; j++)
            ci -= m->input_b[i + d * j] * m->input_mean[j];
        m->offset[i] = ci;
    }
}

/* z* = (I - Ad)^-1 c, solved in scaled coordinates (same solution,
 * better balanced matrix) by LU with partial pivoting (dgesv), with the
 * reciprocal condition number from dgecon. */
static el_status operating_point(el_fit_plan *plan, el_model *m, el_warnings *w,
                                 el_error *err)
{
    size_t d = m->state_dim, nc = m->n_channels;
    double anorm = 0.0;
    for (size_t k = 0; k < d; k++) {
        double col = 0.0;
        for (size_t i = 0; i < d; i++) {
            double v = (i == k ? 1.0 : 0.0) - m->ad_scaled[i + d * k];
            plan->lu[i + d * k] = v;
            col += fabs(v);
        }
        anorm = col > anorm ? col : anorm;
    }
    memcpy(plan->rhs, m->offset_scaled, d * sizeof(double));
    lapack_int info = LAPACKE_dgesv_work(LAPACK_COL_MAJOR, (lapack_int)d, 1, plan->lu,
                                         (lapack_int)d, plan->ipiv, plan->rhs,
                                         (lapack_int)d);
    if (info < 0)
        return el_error_set(err, EL_ERR_INTERNAL, "dgesv called wrongly (info %d)",
                            (int)info);
    double rcond = 0.0;
    if (info == 0) {
        lapack_int cinfo = LAPACKE_dgecon_work(LAPACK_COL_MAJOR, '1', (lapack_int)d,
                                               plan->lu, (lapack_int)d, anorm, &rcond,
                                               plan->con_work, plan->iwork);
        if (cinfo != 0)
            return el_error_set(err, EL_ERR_INTERNAL,
                                "dgecon called wrongly (info %d)", (int)cinfo);
    }
    m->rcond_i_minus_a = rcond;
    /* Rounding in the fit moves Ad by about eps * cond(X_r) relative; the
     * operating point moves by that over rcond. Below the floor even the
     * rounding alone leaves z* uncertain by more than 0.1%. */
    double cond_x = m->singular_values[0] / m->singular_values[m->rank - 1];
    double rcond_floor = 1e3 * (double)d * DBL_EPSILON * cond_x;
    m->operating_point_ok = info == 0 && rcond > rcond_floor && isfinite(rcond);
    for (size_t i = 0; i < d; i++)
        m->operating_point[i] = m->operating_point_ok
            ? m->channel_mean[i % nc] + m->channel_scale[i % nc] * plan->rhs[i]
            : 0.0;
    if (rcond < EL_FIT_RCOND_WARN || !m->operating_point_ok) {
        el_status st = el_warnings_add(
            w,
            "I - Ad is nearly singular (reciprocal condition number %.2g): an "
            "eigenvalue near 1: integrating or very slow mode; the operating "
            "point is poorly determined%s",
            rcond, m->operating_point_ok ? "" : " and is not reported");
        if (st != EL_OK)
            return el_error_set(err, st, "out of memory for a warning");
    }
    return EL_OK;
}

/* One-step residuals of the lag-0 rows: Yc - Ad_s Xc = Yc (I - V_r V_r'),
 * because U_r' Xc = S_r V_r'; no copy of X needs to survive the SVD. */
static void residual_statistics(el_fit_plan *plan, el_model *m);

static void fit_statistics(el_fit_plan *plan, el_model *m)
{
    int p = (int)plan->n_pairs, d = (int)plan->state_dim;
    int nc = (int)plan->n_channels, r = (int)m->rank;
    memcpy(plan->resid, plan->ytc, (size_t)p * (size_t)nc * sizeof(double));
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, p, nc, r, -1.0, plan->svd_u,
                p, plan->yv, d, 1.0, plan->resid, p);
    residual_statistics(plan, m);
}

/* The residuals of any model, from the snapshots themselves (rebuilt:
 * the SVD destroyed X): y - Ad_s x - B_s u - c_s on the lag-0 rows, i.e.
 * Yc - Ad_s Xc - B_s Uc + (mean(Y) - Ad_s mean(X) - B_s mean(U) - c_s). */
static void direct_fit_statistics(el_fit_plan *plan, const el_series *s, el_model *m)
{
    int p = (int)plan->n_pairs, d = (int)plan->state_dim;
    int nc = (int)plan->n_channels, nu = (int)plan->n_inputs;
    build_snapshots(plan, s, m);
    memcpy(plan->resid, plan->ytc, (size_t)p * (size_t)nc * sizeof(double));
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, p, nc, d, -1.0, plan->xt, p,
                m->ad_scaled, d, 1.0, plan->resid, p);
    if (nu > 0)
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, p, nc, nu, -1.0, plan->uc,
                    p, m->input_b_scaled, d, 1.0, plan->resid, p);
    for (int c = 0; c < nc; c++) {
        double delta = plan->ymean[c] - m->offset_scaled[c];
        for (int k = 0; k < d; k++)
            delta -= m->ad_scaled[c + (size_t)d * k] * plan->xmean[k];
        for (int j = 0; j < nu; j++)
            delta -= m->input_b_scaled[c + (size_t)d * j] * plan->umean[j];
        double *res = plan->resid + (size_t)p * c;
        for (int q = 0; q < p; q++)
            res[q] += delta;
    }
    residual_statistics(plan, m);
}

/* R^2 and residual RMS per channel from plan->resid (lag-0 rows). */
static void residual_statistics(el_fit_plan *plan, el_model *m)
{
    int p = (int)plan->n_pairs, nc = (int)plan->n_channels;
    double ss_res_all = 0.0, ss_tot_all = 0.0;
    for (int c = 0; c < nc; c++) {
        const double *res = plan->resid + (size_t)p * c;
        const double *y = plan->ytc + (size_t)p * c;
        double ss_res = 0.0, ss_tot = 0.0;
        for (int q = 0; q < p; q++) {
            ss_res += res[q] * res[q];
            ss_tot += y[q] * y[q];
        }
        ss_res_all += ss_res;
        ss_tot_all += ss_tot;
        /* A channel flat over samples K+1..N-1 (it moved only before) has
         * no variance to explain: its R^2 does not exist. */
        m->channel_r2[c] = ss_tot > 0.0 ? 1.0 - ss_res / ss_tot : NAN;
        m->residual_rms[c] = m->channel_scale[c] * sqrt(ss_res / (double)p);
    }
    m->fit_r2 = ss_tot_all > 0.0 ? 1.0 - ss_res_all / ss_tot_all : NAN;
}

static el_status warn_few_pairs(const el_model *m, el_warnings *w, el_error *err)
{
    size_t params = m->state_dim + m->n_inputs + 1;
    if (m->n_pairs >= EL_FIT_PAIRS_PER_PARAM_WARN * params)
        return EL_OK;
    el_status st = el_warnings_add(
        w,
        "only %zu snapshot pairs for %zu coefficients per row of [Ad B c] "
        "(%.1f per coefficient; about %d is common practice): the model is "
        "loosely determined; a longer window or fewer lags would help",
        m->n_pairs, params, (double)m->n_pairs / (double)params,
        EL_FIT_PAIRS_PER_PARAM_WARN);
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    return EL_OK;
}

el_status el_fit_plan_execute(el_fit_plan *plan, const el_series *series,
                              el_model *model, el_warnings *warnings,
                              el_error *err)
{
    if (plan == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_fit_plan_execute: NULL argument");
    return el_fit_plan_execute_inputs(plan, series, plan->inputs, model, warnings, err);
}

/* The model proper once the snapshots, their SVD and the scaling are in
 * place: basis, rank and the (reduced) system by the method's estimator. */
static el_status fit_system(el_fit_plan *plan, const el_series *series,
                            const el_series *inputs, el_model *model,
                            el_warnings *warnings, el_error *err)
{
    plan->lift_residuals = 0;
    return plan->type->fit(plan, series, inputs, model, warnings, err);
}

el_status el_fit_plan_execute_inputs(el_fit_plan *plan, const el_series *series,
                                     const el_series *inputs, el_model *model,
                                     el_warnings *warnings, el_error *err)
{
    if (plan == NULL || series == NULL || model == NULL || series->values == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_fit_plan_execute: NULL argument");
    if ((plan->n_inputs > 0) != (inputs != NULL) ||
        (inputs != NULL && (inputs->values == NULL ||
                            inputs->n_samples != plan->n_samples ||
                            inputs->n_channels != plan->n_inputs)))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_fit_plan_execute: the inputs do not match the plan "
                            "(%zu input channels)", plan->n_inputs);
    if (series->n_samples != plan->n_samples || series->n_channels != plan->n_channels)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_fit_plan_execute: the plan is for %zu x %zu, the "
                            "series is %zu x %zu",
                            plan->n_samples, plan->n_channels, series->n_samples,
                            series->n_channels);
    if (!(series->dt > 0.0) || !isfinite(series->dt))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_fit_plan_execute: sample interval %g is not positive",
                            series->dt);
    el_status st = model_storage(model, plan->n_channels, plan->state_dim,
                                 plan->n_inputs, err);
    if (st != EL_OK)
        return st;
    model->lags = plan->lags;
    model->n_pairs = plan->n_pairs;
    model->method = plan->method;
    model->dt = series->dt;
    model->depth = 0;
    model->n_canonical = 0;
    model->subspace_order = 0;
    model->subspace_rows = 0;
    model->subspace_physical = 0;
    model->subspace_horizon_time = 0.0;
    if ((st = channel_scaling(series, model, err)) != EL_OK)
        return st;
    if (inputs != NULL) {
        st = series_scaling(inputs, model->input_mean, model->input_scale, "input", err);
        if (st != EL_OK)
            return st;
        build_input_snapshots(plan, inputs, model);
    }
    build_snapshots(plan, series, model);
    if ((st = thin_svd(plan, series, model, err)) != EL_OK)
        return st;
    if ((st = fit_system(plan, series, inputs, model, warnings, err)) != EL_OK)
        return st;
    to_physical(model);
    if ((st = operating_point(plan, model, warnings, err)) != EL_OK)
        return st;
    if (plan->lift_residuals)
        fit_statistics(plan, model);
    else
        direct_fit_statistics(plan, series, model);
    return warn_few_pairs(model, warnings, err);
}

el_status el_fit(const el_series *series, const el_fit_options *opt,
                 el_model *model, el_warnings *warnings, el_error *err)
{
    if (series == NULL || model == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_fit: NULL argument");
    el_fit_plan *plan = NULL;
    el_fit_options prepared;
    if (opt == NULL)
        el_fit_defaults(&prepared);
    else
        prepared = *opt;
    /* An estimator may size its model from the data (hankel: the lags). */
    el_status st = el_estimator_prepare(series, &prepared, err);
    if (st == EL_OK)
        st = el_fit_plan_create(series->n_samples, series->n_channels, &prepared,
                                &plan, err);
    if (st == EL_OK)
        st = el_fit_plan_execute(plan, series, model, warnings, err);
    el_fit_plan_destroy(plan);
    if (st != EL_OK)
        el_model_free(model);
    return st;
}
