/* el_fit: the fit of z[k+1] = Ad z[k] + B u[k] + c: centred scaled
 * snapshots, their SVD, the method's estimator through its type
 * (el_estimator.h), then physical units, the fixed point and one-step fit
 * statistics. */
#include "el_fit.h"
#include "el_stats.h"
#include "el_subspace.h"

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

/* Rows of snapshots built and reduced at a time: large enough that the
 * QR of a chunk stacked under the previous factor runs at matrix speed,
 * small enough that a chunk of [X' U' Y'] stays in the cache (4096 rows x
 * 32 columns x 8 bytes = 1 MiB). Results do not depend on it but for
 * rounding. */
#define FIT_CHUNK_ROWS 4096

/* Largest workspace of the SVD drivers (dgesdd first, dgesvd as fallback)
 * for the d x d factor, and of dgeqrf for a stacked chunk, by LAPACK's own
 * query (lwork = -1). */
static el_status query_work(lapack_int d, lapack_int qr_rows, lapack_int qr_cols,
                            lapack_int *lwork, lapack_int *qr_lwork, el_error *err)
{
    double q1 = 0.0, q2 = 0.0, q3 = 0.0, dummy = 0.0;
    lapack_int idummy = 0;
    lapack_int info = LAPACKE_dgesdd_work(LAPACK_COL_MAJOR, 'S', d, d, &dummy, d,
                                          &dummy, &dummy, d, &dummy, d, &q1, -1,
                                          &idummy);
    if (info != 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "dgesdd workspace query failed (info %d)", (int)info);
    info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'S', d, d, &dummy, d, &dummy,
                               &dummy, d, &dummy, d, &q2, -1);
    if (info != 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "dgesvd workspace query failed (info %d)", (int)info);
    info = LAPACKE_dgeqrf_work(LAPACK_COL_MAJOR, qr_rows, qr_cols, &dummy, qr_rows,
                               &dummy, &q3, -1);
    if (info != 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "dgeqrf workspace query failed (info %d)", (int)info);
    double q = q1 > q2 ? q1 : q2;
    if (!(q < (double)INT_MAX) || !(q3 < (double)INT_MAX))
        return el_error_set(err, EL_ERR_DATA, "the SVD workspace is too large");
    /* The query answers in a double; round up so a value like 1e5-eps
     * cannot lose one element. */
    *lwork = (lapack_int)ceil(q) + 1;
    *qr_lwork = (lapack_int)ceil(q3) + 1;
    return EL_OK;
}

void el_fit_plan_destroy(el_fit_plan *plan)
{
    if (plan == NULL)
        return;
    free(plan->rfac);
    free(plan->svd_vt);
    free(plan->svd_ur);
    free(plan->yv);
    free(plan->qr_buf);
    free(plan->qr_tau);
    free(plan->qr_work);
    free(plan->chunk);
    free(plan->chunk_res);
    free(plan->stats);
    free(plan->xmean);
    free(plan->ymean);
    free(plan->lu);
    free(plan->rhs);
    free(plan->con_work);
    free(plan->ipiv);
    free(plan->iwork);
    free(plan->work);
    free(plan->umean);
    free(plan->bred);
    if (plan->type != NULL)
        plan->type->plan_destroy(plan->est);
    free(plan);
}

/* The workspace arrays (sizes set in plan); 0 when one is missing. */
static int plan_alloc(el_fit_plan *plan)
{
    size_t d = plan->state_dim, nu = plan->n_inputs, g = plan->rcols;
    size_t c = plan->chunk_rows, nc = plan->n_channels;
    plan->rfac = calloc(g * g, sizeof(double));
    plan->svd_vt = malloc(d * d * sizeof(double));
    plan->svd_ur = malloc(d * d * sizeof(double));
    plan->yv = malloc(d * d * sizeof(double));
    plan->qr_buf = malloc((g + c) * g * sizeof(double));
    plan->qr_tau = malloc(g * sizeof(double));
    plan->qr_work = malloc((size_t)plan->qr_lwork * sizeof(double));
    plan->chunk = malloc(c * (2 * d + nu) * sizeof(double));
    plan->chunk_res = malloc(c * nc * sizeof(double));
    plan->stats = malloc(3 * nc * sizeof(double));
    plan->xmean = malloc(d * sizeof(double));
    plan->ymean = malloc(d * sizeof(double));
    plan->lu = malloc(d * d * sizeof(double));
    plan->rhs = malloc(d * sizeof(double));
    plan->con_work = malloc(4 * d * sizeof(double));
    plan->ipiv = malloc(d * sizeof(lapack_int));
    plan->iwork = malloc(8 * d * sizeof(lapack_int));
    plan->work = malloc((size_t)plan->lwork * sizeof(double));
    int ok = plan->rfac && plan->svd_vt && plan->svd_ur && plan->yv && plan->qr_buf &&
             plan->qr_tau && plan->qr_work && plan->chunk && plan->chunk_res && plan->stats &&
             plan->xmean && plan->ymean && plan->lu && plan->rhs && plan->con_work &&
             plan->ipiv && plan->iwork && plan->work;
    if (nu > 0) {
        plan->umean = malloc(nu * sizeof(double));
        plan->bred = malloc(d * nu * sizeof(double));
        ok = ok && plan->umean && plan->bred;
    }
    return ok;
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
    /* Least squares regresses Y on [X; U]: its factor carries them too. */
    size_t g = opt->method == EL_METHOD_LS ? 2 * d + nu : d;
    size_t c = p < FIT_CHUNK_ROWS ? p : FIT_CHUNK_ROWS;
    lapack_int lwork = 0, qr_lwork = 0;
    st = query_work((lapack_int)d, (lapack_int)(g + c), (lapack_int)g, &lwork, &qr_lwork,
                    err);
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
    plan->qr_lwork = qr_lwork;
    plan->rcols = g;
    plan->chunk_rows = c;
    if (!plan_alloc(plan)) {
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
    /* Four channels a pass (el_stats_spread_many: the same doubles). */
    int constant_of[4];
    for (size_t c = 0; c < s->n_channels; c++) {
        if (c % 4 == 0)
            el_stats_spread_many(s->values + c * n, n,
                                 s->n_channels - c < 4 ? s->n_channels - c : 4,
                                 mean_out + c, scale_out + c, constant_of);
        double mean = mean_out[c], sd = scale_out[c];
        int constant = constant_of[c % 4];
        const char *name = s->names != NULL && s->names[c] != NULL ? s->names[c] : "?";
        /* The option that named the column, for the hint. */
        const char *option = strcmp(kind, "input") == 0 ? "--input" : "--channels";
        if (!isfinite(mean) || !isfinite(sd)) {
            el_error_set(err, EL_ERR_DATA,
                         "%s '%s' has values that are not finite or too "
                         "large to fit (its mean or spread overflows)", kind, name);
            el_error_hint(err, "rescale the %s, or leave it out with %s", kind, option);
            return EL_ERR_DATA;
        }
        /* Scale-free (el_stats_spread): relative 1e-12 of the mean. */
        if (constant) {
            el_error_set(err, EL_ERR_DATA,
                         "%s '%s' is constant over the window "
                         "(value %.9g): it has no dynamics to fit", kind, name, mean);
            el_error_hint(err, "leave it out with %s, or choose a window where it moves",
                          option);
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

/* Mean over the pairs of one scaled column, x[k0 + q] for q < p, summed
 * in order (the snapshots are centred by it). */
static double scaled_mean(const double *x, size_t p, double mean, double inv)
{
    double acc = 0.0;
    for (size_t q = 0; q < p; q++)
        acc += (x[q] - mean) * inv;
    return acc / (double)p;
}

/* Means of the centred, scaled X', Y' (and of the inputs) over the pairs,
 * one pass per column: every column is a contiguous stretch of one
 * channel, so the lag embedding is an offset. */
static void snapshot_means(el_fit_plan *plan, const el_series *s, const el_series *u,
                           const el_model *m)
{
    size_t n = plan->n_samples, p = plan->n_pairs, nc = plan->n_channels;
    size_t k0 = plan->lags;
    for (size_t j = 0; j <= plan->lags; j++)
        for (size_t c = 0; c < nc; c++) {
            size_t i = j * nc + c;
            const double *x = s->values + c * n;
            double mean = m->channel_mean[c], inv = 1.0 / m->channel_scale[c];
            plan->xmean[i] = scaled_mean(x + k0 - j, p, mean, inv);
            plan->ymean[i] = scaled_mean(x + k0 + 1 - j, p, mean, inv);
        }
    for (size_t j = 0; j < plan->n_inputs; j++)
        plan->umean[j] = scaled_mean(u->values + j * n + k0, p, m->input_mean[j],
                                     1.0 / m->input_scale[j]);
}

/* Rows q0 .. q0 + rows - 1 of the centred scaled snapshots [X' U' Y']
 * (columns 0..d-1 X', then the inputs, then Y'; only the first cols
 * columns) into out, column-major with leading dimension ld. */
static void fill_chunk(const el_fit_plan *plan, const el_series *s, const el_series *u,
                       const el_model *m, size_t q0, size_t rows, size_t cols,
                       double *out, size_t ld)
{
    size_t n = plan->n_samples, nc = plan->n_channels, d = plan->state_dim;
    size_t nu = plan->n_inputs, k0 = plan->lags;
    for (size_t col = 0; col < cols; col++) {
        const double *x;
        double mean, inv, centre;
        if (col < d || col >= d + nu) {
            int is_y = col >= d + nu;
            size_t i = is_y ? col - d - nu : col, j = i / nc, c = i % nc;
            x = s->values + c * n + k0 - j + (is_y ? 1 : 0) + q0;
            mean = m->channel_mean[c];
            inv = 1.0 / m->channel_scale[c];
            centre = is_y ? plan->ymean[i] : plan->xmean[i];
        } else {
            size_t j = col - d;
            x = u->values + j * n + k0 + q0;
            mean = m->input_mean[j];
            inv = 1.0 / m->input_scale[j];
            centre = plan->umean[j];
        }
        double *o = out + col * ld;
        for (size_t q = 0; q < rows; q++)
            o[q] = (x[q] - mean) * inv - centre;
    }
}

/* The triangular factor of the snapshots, chunk by chunk (a tall-skinny
 * QR: the factor so far stacked over the next chunk of rows is factored
 * again by Householder QR, dgeqrf; Demmel et al. 2012, "Communication-
 * optimal parallel and sequential QR and LU factorizations", SIAM J. Sci.
 * Comput. 34(1)). An orthogonal method throughout: X' is never squared
 * into a Gram matrix. */
static el_status chunked_qr(el_fit_plan *plan, const el_series *s, const el_series *u,
                            const el_model *m, el_error *err)
{
    size_t g = plan->rcols, p = plan->n_pairs, cr = plan->chunk_rows;
    size_t ld = g + cr, top = 0;
    double *buf = plan->qr_buf, *r = plan->rfac;
    for (size_t q0 = 0; q0 < p; q0 += cr) {
        size_t rows = p - q0 < cr ? p - q0 : cr;
        /* The factor so far (upper triangle, zeros below) on top. */
        for (size_t j = 0; j < g && top > 0; j++)
            memcpy(buf + j * ld, r + j * g, g * sizeof(double));
        fill_chunk(plan, s, u, m, q0, rows, g, buf + top, ld);
        size_t mrows = top + rows;
        lapack_int info = LAPACKE_dgeqrf_work(LAPACK_COL_MAJOR, (lapack_int)mrows,
                                              (lapack_int)g, buf, (lapack_int)ld,
                                              plan->qr_tau, plan->qr_work,
                                              plan->qr_lwork);
        if (info != 0)
            return el_error_set(err, EL_ERR_INTERNAL, "dgeqrf failed (info %d)",
                                (int)info);
        for (size_t j = 0; j < g; j++)
            for (size_t i = 0; i < g; i++)
                r[i + j * g] = i <= j && i < mrows ? buf[i + j * ld] : 0.0;
        top = g;
    }
    return EL_OK;
}

/* Singular values and vectors of X' from its factor: X' = Q_x R_x and
 * R_x = svd_ur diag(sv) svd_vt. dgesdd is the fast driver; in the rare
 * case its divide and conquer does not converge, the QR-iteration driver
 * dgesvd gets a fresh copy (both are backward stable). */
static el_status factor_svd(el_fit_plan *plan, el_model *m, el_error *err)
{
    size_t d = plan->state_dim, g = plan->rcols;
    lapack_int di = (lapack_int)d;
    double *a = plan->lu;   /* d x d scratch until the operating point */
    for (size_t j = 0; j < d; j++)
        memcpy(a + j * d, plan->rfac + j * g, d * sizeof(double));
    lapack_int info = LAPACKE_dgesdd_work(LAPACK_COL_MAJOR, 'S', di, di, a, di,
                                          m->singular_values, plan->svd_ur, di,
                                          plan->svd_vt, di, plan->work, plan->lwork,
                                          plan->iwork);
    if (info > 0) {
        for (size_t j = 0; j < d; j++)
            memcpy(a + j * d, plan->rfac + j * g, d * sizeof(double));
        info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'S', di, di, a, di,
                                   m->singular_values, plan->svd_ur, di, plan->svd_vt,
                                   di, plan->work, plan->lwork);
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

/* The snapshots' means, factor and singular value decomposition. */
static el_status snapshot_svd(el_fit_plan *plan, const el_series *s, const el_series *u,
                              el_model *m, el_error *err)
{
    snapshot_means(plan, s, u, m);
    el_status st = chunked_qr(plan, s, u, m, err);
    return st != EL_OK ? st : factor_svd(plan, m, err);
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

/* R^2 and residual RMS per channel of any model, streamed over chunks of
 * the snapshots: the lag-0 residuals y - Ad_s x - B_s u - c_s, i.e.
 * Yc - Ad_s Xc - B_s Uc + (mean(Y) - Ad_s mean(X) - B_s mean(U) - c_s),
 * summed in pair order. */
static void fit_statistics(el_fit_plan *plan, const el_series *s, const el_series *u,
                           el_model *m)
{
    int d = (int)plan->state_dim, nc = (int)plan->n_channels, nu = (int)plan->n_inputs;
    size_t p = plan->n_pairs, cr = plan->chunk_rows, cols = 2 * (size_t)d + (size_t)nu;
    double *ss_res = plan->stats, *ss_tot = ss_res + nc, *delta = ss_tot + nc;
    for (int c = 0; c < nc; c++) {
        double v = plan->ymean[c] - m->offset_scaled[c];
        for (int k = 0; k < d; k++)
            v -= m->ad_scaled[c + (size_t)d * k] * plan->xmean[k];
        for (int j = 0; j < nu; j++)
            v -= m->input_b_scaled[c + (size_t)d * j] * plan->umean[j];
        delta[c] = v;
        ss_res[c] = ss_tot[c] = 0.0;
    }
    for (size_t q0 = 0; q0 < p; q0 += cr) {
        int rows = (int)(p - q0 < cr ? p - q0 : cr);
        double *x = plan->chunk, *uc = x + cr * (size_t)d, *y = uc + cr * (size_t)nu;
        double *res = plan->chunk_res;
        fill_chunk(plan, s, u, m, q0, (size_t)rows, cols, x, cr);
        for (int c = 0; c < nc; c++)
            memcpy(res + cr * (size_t)c, y + cr * (size_t)c, (size_t)rows * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, rows, nc, d, -1.0, x,
                    (int)cr, m->ad_scaled, d, 1.0, res, (int)cr);
        if (nu > 0)
            cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, rows, nc, nu, -1.0, uc,
                        (int)cr, m->input_b_scaled, d, 1.0, res, (int)cr);
        for (int c = 0; c < nc; c++) {
            const double *rc = res + cr * (size_t)c, *yc = y + cr * (size_t)c;
            double sr = ss_res[c], st = ss_tot[c];
            for (int q = 0; q < rows; q++) {
                double e = rc[q] + delta[c];
                sr += e * e;
                st += yc[q] * yc[q];
            }
            ss_res[c] = sr;
            ss_tot[c] = st;
        }
    }
    double ss_res_all = 0.0, ss_tot_all = 0.0;
    for (int c = 0; c < nc; c++) {
        ss_res_all += ss_res[c];
        ss_tot_all += ss_tot[c];
        /* A channel flat over samples K+1..N-1 (it moved only before) has
         * no variance to explain: its R^2 does not exist. */
        m->channel_r2[c] = ss_tot[c] > 0.0 ? 1.0 - ss_res[c] / ss_tot[c] : NAN;
        m->residual_rms[c] = m->channel_scale[c] * sqrt(ss_res[c] / (double)p);
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
    model->tested_rank = 0;   /* a reused model must not keep an earlier iv fit's */
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
    }
    if ((st = snapshot_svd(plan, series, inputs, model, err)) != EL_OK)
        return st;
    if ((st = fit_system(plan, series, inputs, model, warnings, err)) != EL_OK)
        return st;
    to_physical(model);
    if ((st = operating_point(plan, model, warnings, err)) != EL_OK)
        return st;
    fit_statistics(plan, series, inputs, model);
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
    /* A stage the preparation kept for the fit (el_subspace_keep) and the
     * fit did not take is dropped. */
    el_subspace_drop_kept(prepared.acf);
    el_fit_plan_destroy(plan);
    if (st != EL_OK)
        el_model_free(model);
    return st;
}
