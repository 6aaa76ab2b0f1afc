/* el_reduced: the reduced coordinates of a fitted model that the
 * estimators' statistics and the bootstrap share: the projection of the
 * snapshots on the model's basis, their Gram and its whitening, in fixed
 * chunks on threads; and the small Cholesky kernels. */
#include "el_reduced.h"
#include "el_bigmem.h"

#include "el_chunks.h"

#include <cblas.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>


/* ------------------------------------------------------------------ */
/* Small dense kernels (r is small; no LAPACK so that nothing allocates
 * and every thread runs the same instruction sequence). */

/* In-place lower Cholesky of the n x n column-major s (upper part is left
 * as it was). Returns 1 when a pivot is not above rel_tol times the largest
 * diagonal entry: the matrix is singular to the precision that matters. */
int el_reduced_cholesky(size_t n, double *s, double rel_tol)
{
    double dmax = 0.0;
    for (size_t j = 0; j < n; j++)
        if (s[j + j * n] > dmax)
            dmax = s[j + j * n];
    if (!(dmax > 0.0) || !isfinite(dmax))
        return 1;
    for (size_t j = 0; j < n; j++) {
        double d = s[j + j * n];
        for (size_t k = 0; k < j; k++)
            d -= s[j + k * n] * s[j + k * n];
        if (!(d > rel_tol * dmax))
            return 1;
        d = sqrt(d);
        s[j + j * n] = d;
        for (size_t i = j + 1; i < n; i++) {
            double v = s[i + j * n];
            for (size_t k = 0; k < j; k++)
                v -= s[i + k * n] * s[j + k * n];
            s[i + j * n] = v / d;
        }
    }
    return 0;
}

/* From this order the two solves go to BLAS (dtrsv): the plain forward
 * loop reads a row of the column-major L, one cache line per entry, and
 * least squares with 200 reduced states solves 200 such systems per
 * bootstrap replicate. Below it (every narrow log) the plain loops keep
 * their bits on every CPU. */
#define REDUCED_BLAS_ORDER 128

/* Solves L x = b in place (L lower, from cholesky_lower). */
void el_reduced_forward_subst(size_t n, const double *l, double *x)
{
    if (n >= REDUCED_BLAS_ORDER) {
        cblas_dtrsv(CblasColMajor, CblasLower, CblasNoTrans, CblasNonUnit, (int)n, l, (int)n,
                    x, 1);
        return;
    }
    for (size_t i = 0; i < n; i++) {
        double v = x[i];
        for (size_t k = 0; k < i; k++)
            v -= l[i + k * n] * x[k];
        x[i] = v / l[i + i * n];
    }
}

/* Solves L' x = b in place. */
void el_reduced_backward_subst(size_t n, const double *l, double *x)
{
    if (n >= REDUCED_BLAS_ORDER) {
        cblas_dtrsv(CblasColMajor, CblasLower, CblasTrans, CblasNonUnit, (int)n, l, (int)n, x,
                    1);
        return;
    }
    for (size_t ii = n; ii-- > 0;) {
        double v = x[ii];
        for (size_t k = ii + 1; k < n; k++)
            v -= l[k + ii * n] * x[k];
        x[ii] = v / l[ii + ii * n];
    }
}

/* ------------------------------------------------------------------ */
/* Reduced states. */

/* Snapshots built and projected per chunk: a chunk of states (sd x rows)
 * stays in cache while one product projects it. */
#define BOOT_STATE_CHUNK 2048

/* Centred scaled snapshots z[t] of states t0 .. t0 + rows - 1 into z
 * (sd x rows, column-major): z[t] stacks the channels at lags 0..K of
 * sample lags + t, scaled as in the fit and centred on zbar. */
static void build_state_chunk(const el_series *series, const el_model *model,
                              const double *zbar, size_t t0, size_t rows, double *z)
{
    size_t nn = series->n_samples, nc = model->n_channels, sd = model->state_dim;
    for (size_t j = 0; j <= model->lags; j++)
        for (size_t c = 0; c < nc; c++) {
            const double *x = series->values + c * nn + model->lags + t0 - j;
            double mean = model->channel_mean[c], inv = 1.0 / model->channel_scale[c];
            double zb = zbar[j * nc + c];
            double *out = z + j * nc + c;
            for (size_t t = 0; t < rows; t++)
                out[t * sd] = (x[t] - mean) * inv - zb;
        }
}

typedef struct {
    const el_series *series;
    const el_model *model;
    const double *zbar;
    double *p, *grams;            /* grams: one r x r Gram per chunk */
    double *scratch;              /* one sd x BOOT_STATE_CHUNK block per thread */
    const double *chol;           /* whitening: L of G (r x r), then scale */
    double scale;
    size_t m;
} states_ctx;

static size_t chunk_rows(size_t m, size_t c)
{
    size_t t0 = c * BOOT_STATE_CHUNK;
    return m + 1 - t0 < BOOT_STATE_CHUNK ? m + 1 - t0 : BOOT_STATE_CHUNK;
}

/* Chunk c: p = U_r' z and its Gram over the pairs it holds. */
static void project_chunk(void *arg, size_t c, size_t slot)
{
    states_ctx *x = arg;
    const el_model *md = x->model;
    size_t r = md->rank, sd = md->state_dim, t0 = c * BOOT_STATE_CHUNK;
    size_t rows = chunk_rows(x->m, c);
    double *z = x->scratch + slot * sd * BOOT_STATE_CHUNK, *g = x->grams + c * r * r;
    build_state_chunk(x->series, md, x->zbar, t0, rows, z);
    cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, (int)r, (int)rows, (int)sd, 1.0,
                md->basis, (int)sd, z, (int)sd, 0.0, x->p + t0 * r, (int)r);
    size_t in_pairs = t0 + rows <= x->m ? rows : x->m - t0;
    memset(g, 0, r * r * sizeof(double));
    if (in_pairs > 0)
        cblas_dsyrk(CblasColMajor, CblasLower, CblasNoTrans, (int)r, (int)in_pairs, 1.0,
                    x->p + t0 * r, (int)r, 0.0, g, (int)r);
}

/* Chunk c: w = scale L^-1 p in place. */
static void whiten_chunk(void *arg, size_t c, size_t slot)
{
    (void)slot;
    states_ctx *x = arg;
    size_t r = x->model->rank;
    cblas_dtrsm(CblasColMajor, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, (int)r,
                (int)chunk_rows(x->m, c), x->scale, x->chol, (int)r,
                x->p + c * BOOT_STATE_CHUNK * r, (int)r);
}

static int model_fits(const el_series *series, const el_model *model)
{
    size_t nn = series->n_samples, nc = model->n_channels, lags = model->lags;
    size_t sd = model->state_dim, r = model->rank;
    return series->n_channels == nc && sd == nc * (lags + 1) && nn >= lags + 3 && r > 0
           && r <= sd && model->basis != NULL && model->channel_mean != NULL
           && model->channel_scale != NULL && nn - 1 - lags == model->n_pairs;
}

el_status el_boot_project_states(const el_series *series, const el_model *model,
                                 size_t threads, double *p, double *gram, el_error *err)
{
    if (series == NULL || model == NULL || p == NULL || gram == NULL
        || !model_fits(series, model))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "bootstrap: the series does not fit the model (%zu pairs, "
                            "rank %zu)", model != NULL ? model->n_pairs : 0,
                            model != NULL ? model->rank : 0);
    size_t nn = series->n_samples, nc = model->n_channels, lags = model->lags;
    size_t sd = model->state_dim, r = model->rank, m = model->n_pairs;
    size_t n_chunks = m / BOOT_STATE_CHUNK + 1;
    size_t slots = el_chunks_threads(n_chunks, threads);
    double *zbar = malloc(sd * sizeof(double));
    double *grams = malloc(n_chunks * r * r * sizeof(double));
    double *scratch = malloc(slots * sd * BOOT_STATE_CHUNK * sizeof(double));
    if (zbar == NULL || grams == NULL || scratch == NULL) {
        free(zbar);
        free(grams);
        free(scratch);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap states)");
    }
    const double *x = series->values;
    for (size_t j = 0; j <= lags; j++)
        for (size_t c = 0; c < nc; c++) {
            double s = 0.0, inv = 1.0 / model->channel_scale[c];
            for (size_t k = lags; k + 1 < nn; k++)
                s += (x[c * nn + k - j] - model->channel_mean[c]) * inv;
            zbar[j * nc + c] = s / (double)m;
        }
    states_ctx ctx = { series, model, zbar, p, grams, scratch, NULL, 1.0, m };
    el_chunks_run(n_chunks, slots, project_chunk, &ctx);
    memset(gram, 0, r * r * sizeof(double));
    for (size_t c = 0; c < n_chunks; c++)
        for (size_t i = 0; i < r * r; i++)
            gram[i] += grams[c * r * r + i];
    free(zbar);
    free(grams);
    free(scratch);
    return EL_OK;
}

el_status el_boot_whiten_states(const double *chol, size_t r, size_t n_states, double scale,
                                size_t threads, double *states)
{
    if (chol == NULL || states == NULL || r == 0 || n_states == 0)
        return EL_ERR_INTERNAL;
    el_model shape;
    memset(&shape, 0, sizeof shape);
    shape.rank = r;
    states_ctx ctx = { NULL, &shape, NULL, states, NULL, NULL, chol, scale, n_states - 1 };
    el_chunks_run((n_states - 1) / BOOT_STATE_CHUNK + 1, threads, whiten_chunk, &ctx);
    return EL_OK;
}

el_status el_boot_reduced_states_threads(const el_series *series, const el_model *model,
                                size_t threads, double **states, el_error *err)
{
    *states = NULL;
    if (series == NULL || model == NULL || !model_fits(series, model))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "bootstrap: the series (%zu samples, %zu channels) does "
                            "not fit the model (%zu pairs, rank %zu)",
                            series != NULL ? series->n_samples : 0,
                            series != NULL ? series->n_channels : 0,
                            model != NULL ? model->n_pairs : 0,
                            model != NULL ? model->rank : 0);
    size_t r = model->rank, m = model->n_pairs;
    double *g = malloc(r * r * sizeof(double));
    double *w = el_bigmem_alloc((m + 1) * r * sizeof(double));
    if (g == NULL || w == NULL) {
        free(g);
        free(w);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap states)");
    }
    el_status st = el_boot_project_states(series, model, threads, w, g, err);
    if (st == EL_OK && el_reduced_cholesky(r, g, 1e-14)) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "bootstrap: the snapshots have no spread along a basis direction");
        el_error_hint(err, "use a lower --rank");
        st = EL_ERR_NUMERIC;
    }
    if (st == EL_OK)
        st = el_boot_whiten_states(g, r, m + 1, sqrt((double)m), threads, w);
    free(g);
    if (st != EL_OK) {
        free(w);
        return st;
    }
    *states = w;
    return EL_OK;
}

el_status el_boot_reduced_states(const el_series *series, const el_model *model,
                                 double **states, el_error *err)
{
    return el_boot_reduced_states_threads(series, model, 1, states, err);
}
