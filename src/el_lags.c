/* el_lags: --lags auto, the delay depth whose least-squares delay model
 * has the smallest Bayesian information criterion (Schwarz 1978). */
#include "el_lags.h"
#include "el_stats.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ */
/* --lags auto. */

static el_status scale_columns(const el_series *s, double *mean, double *scale,
                               el_error *err)
{
    size_t n = s->n_samples;
    for (size_t c = 0; c < s->n_channels; c++) {
        double mu, sd;
        if (el_stats_spread(s->values + c * n, n, &mu, &sd) || !isfinite(mu) || !isfinite(sd)) {
            const char *name = s->names != NULL && s->names[c] != NULL ? s->names[c] : "?";
            el_error_set(err, EL_ERR_DATA,
                         "channel '%s' is constant or not finite over the window: it "
                         "has no dynamics", name);
            el_error_hint(err, "leave it out with --channels");
            return EL_ERR_DATA;
        }
        mean[c] = mu;
        scale[c] = sd;
    }
    return EL_OK;
}

/* ln det of the symmetric positive definite nc x nc matrix (lower read) by
 * Cholesky; -INFINITY when it is not positive definite (an exact fit). */
static double log_det_spd(size_t n, double *a)
{
    double ld = 0.0;
    for (size_t j = 0; j < n; j++) {
        double s = a[j + j * n];
        for (size_t k = 0; k < j; k++)
            s -= a[j + k * n] * a[j + k * n];
        if (!(s > 0.0))
            return -INFINITY;
        double l = sqrt(s);
        a[j + j * n] = l;
        ld += 2.0 * log(l);
        for (size_t i = j + 1; i < n; i++) {
            double t = a[i + j * n];
            for (size_t k = 0; k < j; k++)
                t -= a[i + k * n] * a[j + k * n];
            a[i + j * n] = t / l;
        }
    }
    return ld;
}

el_status el_lags_auto(const el_series *series, const el_series *inputs,
                       size_t max_lags, el_lags_choice *choice, el_error *err)
{
    if (series == NULL || choice == NULL || series->values == NULL ||
        series->n_channels == 0 ||
        (inputs != NULL && (inputs->values == NULL ||
                            inputs->n_samples != series->n_samples)))
        return el_error_set(err, EL_ERR_INTERNAL, "el_lags_auto: bad arguments");
    memset(choice, 0, sizeof *choice);
    size_t n = series->n_samples, nc = series->n_channels;
    size_t nu = inputs != NULL ? inputs->n_channels : 0;
    size_t kmax = max_lags > 0 ? max_lags : EL_LAGS_AUTO_MAX;
    /* Ten pairs per coefficient of a row (common practice) for the largest K. */
    while (1) {
        size_t coeff = nc * (kmax + 1) + nu + 1;
        if (n > kmax + 1 && n - kmax - 1 >= 10 * coeff)
            break;
        if (kmax == 0) {
            el_error_set(err, EL_ERR_DATA,
                         "%zu samples are too few to choose a delay depth (ten pairs "
                         "per coefficient are wanted even without lags)", n);
            el_error_hint(err, "use a longer window, or give --lags");
            return EL_ERR_DATA;
        }
        kmax--;
    }
    size_t m = n - kmax - 1, dmax = nc * (kmax + 1), cols = nu + dmax + nc;
    double *mean = malloc((nc + nu + 1) * sizeof(double));
    double *scale = malloc((nc + nu + 1) * sizeof(double));
    double *a = malloc(m * cols * sizeof(double));
    double *tau = malloc(cols * sizeof(double));
    double *s = malloc(nc * nc * sizeof(double));
    double *tot = malloc(nc * sizeof(double));
    el_status st = EL_OK;
    if (!mean || !scale || !a || !tau || !s || !tot) {
        st = el_error_set(err, EL_ERR_NOMEM, "out of memory (--lags auto)");
        goto done;
    }
    if ((st = scale_columns(series, mean, scale, err)) != EL_OK)
        goto done;
    if (inputs != NULL && (st = scale_columns(inputs, mean + nc, scale + nc, err)) != EL_OK)
        goto done;
    /* Columns: inputs at k, x[k-j] for j = 0..K_max, then Y = x[k+1];
     * rows k = K_max .. N-2; every column centred (the intercept). */
    for (size_t col = 0; col < cols; col++) {
        const double *src;
        double mu, inv;
        long shift;
        if (col < nu) {
            src = inputs->values + col * n;
            mu = mean[nc + col];
            inv = 1.0 / scale[nc + col];
            shift = 0;
        } else if (col < nu + dmax) {
            size_t c = (col - nu) % nc, j = (col - nu) / nc;
            src = series->values + c * n;
            mu = mean[c];
            inv = 1.0 / scale[c];
            shift = -(long)j;
        } else {
            size_t c = col - nu - dmax;
            src = series->values + c * n;
            mu = mean[c];
            inv = 1.0 / scale[c];
            shift = 1;
        }
        double *dst = a + col * m, acc = 0.0;
        for (size_t i = 0; i < m; i++) {
            dst[i] = (src[(size_t)((long)(kmax + i) + shift)] - mu) * inv;
            acc += dst[i];
        }
        acc /= (double)m;
        for (size_t i = 0; i < m; i++)
            dst[i] -= acc;
    }
    size_t yc = nu + dmax;
    for (size_t c = 0; c < nc; c++) {
        double acc = 0.0;
        for (size_t i = 0; i < m; i++)
            acc += a[i + (yc + c) * m] * a[i + (yc + c) * m];
        tot[c] = acc;
    }
    lapack_int info = LAPACKE_dgeqrf(LAPACK_COL_MAJOR, (lapack_int)m, (lapack_int)cols, a,
                                     (lapack_int)m, tau);
    if (info != 0) {
        st = el_error_set(err, EL_ERR_NUMERIC, "--lags auto: QR factorisation failed");
        goto done;
    }
    /* Regressing Y on the first j columns leaves the residual cross-product
     * R(j:cols, Y)' R(j:cols, Y) (R upper triangular, Q orthogonal). */
    size_t best = 0;
    double best_bic = INFINITY;
    int exact = 0;
    for (size_t k = 0; k <= kmax && !exact; k++) {
        size_t j0 = nu + nc * (k + 1);
        for (size_t b = 0; b < nc; b++)
            for (size_t c2 = b; c2 < nc; c2++) {
                double acc = 0.0;
                for (size_t i = j0; i < cols && i <= yc + c2; i++)
                    acc += a[i + (yc + c2) * m] * (i <= yc + b ? a[i + (yc + b) * m] : 0.0);
                s[c2 + b * nc] = acc;
            }
        int all_tiny = 1;
        for (size_t c = 0; c < nc; c++)
            if (!(s[c + c * nc] <= 1e-20 * tot[c]))
                all_tiny = 0;
        if (all_tiny) {
            best = k;
            exact = 1;
            break;
        }
        for (size_t i = 0; i < nc * nc; i++)
            s[i] /= (double)m;
        double ld = log_det_spd(nc, s);
        double p = (double)nc * (double)(nc * (k + 1) + nu + 1);
        double bic = (double)m * ld + p * log((double)m);
        if (bic < best_bic) {
            best_bic = bic;
            best = k;
        }
    }
    choice->lags = best;
    choice->max_lags = kmax;
    choice->n_pairs = m;
    choice->exact = exact;
    choice->bic = exact ? NAN : best_bic;
    if (exact)
        snprintf(choice->reason, sizeof choice->reason,
                 "lags %zu: the smallest delay depth whose least-squares delay model "
                 "fits the %zu pairs to rounding (noise-free data)", best, m);
    else
        snprintf(choice->reason, sizeof choice->reason,
                 "lags %zu: smallest Bayesian information criterion (Schwarz 1978) of "
                 "the one-step least-squares residuals over 0..%zu lags (the same %zu "
                 "pairs for each)", best, kmax, m);
done:
    free(mean);
    free(scale);
    free(a);
    free(tau);
    free(s);
    free(tot);
    return st;
}
