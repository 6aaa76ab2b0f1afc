/* el_predict: one-step and free-run predictions of a fitted model over its
 * window, and their errors relative to each channel's spread. */
#include "el_predict.h"

#include <cblas.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

static el_status create(size_t n_channels, size_t lags, size_t max_samples, int traces,
                        el_prediction **out, el_error *err);

el_status el_prediction_create(size_t n_channels, size_t lags,
                               size_t max_samples, el_prediction **out,
                               el_error *err)
{
    return create(n_channels, lags, max_samples, 1, out, err);
}

el_status el_prediction_create_errors(size_t n_channels, size_t lags, size_t max_samples,
                                      el_prediction **out, el_error *err)
{
    return create(n_channels, lags, max_samples, 0, out, err);
}

static el_status create(size_t n_channels, size_t lags, size_t max_samples, int traces,
                        el_prediction **out, el_error *err)
{
    if (out == NULL || n_channels == 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_prediction_create: no output or no channels");
    *out = NULL;
    if (max_samples < lags + 2)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_prediction_create: %zu samples leave no prediction "
                            "with %zu lags", max_samples, lags);
    el_prediction *p = calloc(1, sizeof *p);
    if (p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    p->n_channels = n_channels;
    p->lags = lags;
    p->state_dim = n_channels * (lags + 1);
    p->max_samples = max_samples;
    p->traces = traces;
    size_t values = traces ? n_channels * (max_samples - lags) : 1;
    p->one_step = traces ? malloc(values * sizeof *p->one_step) : NULL;
    p->free_run = traces ? malloc(values * sizeof *p->free_run) : NULL;
    p->one_step_nrmse = malloc(n_channels * sizeof *p->one_step_nrmse);
    p->free_nrmse = malloc(n_channels * sizeof *p->free_nrmse);
    /* z, next, the divergence bands; without traces also the running sums
     * of the errors (mean, var, sq per channel) */
    p->work = malloc((2 * p->state_dim + 2 * n_channels + (traces ? 0 : 3 * n_channels)) *
                     sizeof *p->work);
    if ((traces && (!p->one_step || !p->free_run)) || !p->one_step_nrmse ||
        !p->free_nrmse || !p->work) {
        el_prediction_destroy(p);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    *out = p;
    return EL_OK;
}

void el_prediction_destroy(el_prediction *p)
{
    if (p == NULL)
        return;
    free(p->one_step);
    free(p->free_run);
    free(p->one_step_nrmse);
    free(p->free_nrmse);
    free(p->work);
    free(p);
}

/* z = [x[k]; x[k-1]; ...; x[k-K]] from the series (k >= K). */
static void measured_state(const el_series *s, size_t lags, size_t k, double *z)
{
    size_t n = s->n_channels, len = s->n_samples;
    for (size_t j = 0; j <= lags; j++)
        for (size_t c = 0; c < n; c++)
            z[j * n + c] = s->values[c * len + (k - j)];
}

/* next = Ad z + B u[k] + c (the input term only for a model with inputs). */
static void step(const el_model *m, const el_series *u, size_t k, const double *z,
                 double *next)
{
    int d = (int)m->state_dim;
    memcpy(next, m->offset, m->state_dim * sizeof *next);
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, d, 1.0, m->ad, d, z, 1, 1.0, next, 1);
    if (m->n_inputs > 0 && u != NULL)
        for (size_t i = 0; i < m->n_inputs; i++) {
            double ui = u->values[i * u->n_samples + k];
            for (size_t r = 0; r < m->state_dim; r++)
                next[r] += m->input_b[i * m->state_dim + r] * ui;
        }
}

void el_prediction_skip_one_step(el_prediction *p, int skip)
{
    if (p != NULL)
        p->skip_one_step = skip != 0 && !p->traces;
}

void el_prediction_set_inputs(el_prediction *p, const el_series *inputs)
{
    if (p != NULL)
        p->inputs = inputs;
}

static void run_one_step(el_prediction *p, const el_model *m, const el_series *s)
{
    double *z = p->work, *next = p->work + p->state_dim;
    size_t count = p->one_step_count;
    for (size_t k = p->lags; k + 1 < s->n_samples; k++) {
        measured_state(s, p->lags, k, z);
        step(m, p->inputs, k, z, next);
        for (size_t c = 0; c < p->n_channels; c++)
            p->one_step[c * count + (k - p->lags)] = next[c];
    }
}

/* Middle and half-width limit of the divergence test for channel c. */
static void divergence_band(const el_series *s, size_t c, double *mid, double *limit)
{
    const double *x = s->values + c * s->n_samples;
    double lo = x[0], hi = x[0];
    for (size_t k = 1; k < s->n_samples; k++) {
        lo = x[k] < lo ? x[k] : lo;
        hi = x[k] > hi ? x[k] : hi;
    }
    double range = hi - lo > 0 ? hi - lo : 1.0;
    *mid = 0.5 * (lo + hi);
    *limit = EL_PREDICT_DIVERGENCE_FACTOR * range;
}

/* band holds (mid, limit) per channel. */
static int out_of_band(size_t n_channels, const double *band, const double *x)
{
    for (size_t c = 0; c < n_channels; c++)
        if (!isfinite(x[c]) || fabs(x[c] - band[2 * c]) > band[2 * c + 1])
            return 1;
    return 0;
}

/* Simulates into a buffer laid out for the full count N - K, then packs it
 * to free_count when the run stopped early. */
static void run_free(el_prediction *p, const el_model *m, const el_series *s)
{
    size_t full = s->n_samples - p->lags;
    double *z = p->work, *next = p->work + p->state_dim;
    double *band = p->work + 2 * p->state_dim;
    for (size_t c = 0; c < p->n_channels; c++)
        divergence_band(s, c, &band[2 * c], &band[2 * c + 1]);
    measured_state(s, p->lags, p->lags, z);
    size_t count = 1;
    for (size_t c = 0; c < p->n_channels; c++)
        p->free_run[c * full] = z[c];
    p->free_diverged = 0;
    p->free_diverged_at = 0;
    while (count < full) {
        step(m, p->inputs, p->lags + count - 1, z, next);
        if (out_of_band(p->n_channels, band, next)) {
            p->free_diverged = 1;
            p->free_diverged_at = p->lags + count;
            break;
        }
        for (size_t c = 0; c < p->n_channels; c++)
            p->free_run[c * full + count] = next[c];
        memcpy(z, next, p->state_dim * sizeof *z);
        count++;
    }
    if (count < full)
        for (size_t c = 1; c < p->n_channels; c++)
            memmove(p->free_run + c * count, p->free_run + c * full,
                    count * sizeof *p->free_run);
    p->free_count = count;
}

/* RMS(pred - x) / std(x) over samples first .. first + count - 1;
 * NaN when the measured channel is constant there. */
static double nrmse(const double *x, const double *pred, size_t count)
{
    double mean = 0;
    for (size_t i = 0; i < count; i++)
        mean += x[i];
    mean /= (double)count;
    double var = 0, sq = 0;
    for (size_t i = 0; i < count; i++) {
        var += (x[i] - mean) * (x[i] - mean);
        sq += (pred[i] - x[i]) * (pred[i] - x[i]);
    }
    return var > 0 ? sqrt(sq / var) : NAN;
}

static void errors(el_prediction *p, const el_series *s)
{
    for (size_t c = 0; c < p->n_channels; c++) {
        const double *x = s->values + c * s->n_samples;
        p->one_step_nrmse[c] = nrmse(x + p->one_step_first,
                                     p->one_step + c * p->one_step_count,
                                     p->one_step_count);
        p->free_nrmse[c] = p->free_diverged
                               ? NAN
                               : nrmse(x + p->free_first, p->free_run + c * p->free_count,
                                       p->free_count);
    }
}

const double *el_prediction_one_step(el_prediction *p, const el_model *m,
                                     const el_series *s, size_t k)
{
    double *z = p->work, *next = p->work + p->state_dim;
    measured_state(s, p->lags, k, z);
    step(m, p->inputs, k, z, next);
    return next;
}

/* Without traces: the errors of errors() from running sums, the same
 * additions in the same order per channel (the mean of the measured
 * samples first, then var and sq sample by sample), so the same doubles. */
static void streamed_one_step(el_prediction *p, const el_model *m, const el_series *s)
{
    size_t nc = p->n_channels, first = p->one_step_first, count = p->one_step_count;
    double *mean = p->work + 2 * p->state_dim + 2 * nc, *var = mean + nc, *sq = var + nc;
    for (size_t c = 0; c < nc; c++) {
        const double *x = s->values + c * s->n_samples + first;
        mean[c] = 0;
        for (size_t i = 0; i < count; i++)
            mean[c] += x[i];
        mean[c] /= (double)count;
        var[c] = sq[c] = 0;
    }
    for (size_t i = 0; i < count; i++) {
        const double *next = el_prediction_one_step(p, m, s, p->lags + i);
        for (size_t c = 0; c < nc; c++) {
            double x = s->values[c * s->n_samples + first + i];
            var[c] += (x - mean[c]) * (x - mean[c]);
            sq[c] += (next[c] - x) * (next[c] - x);
        }
    }
    for (size_t c = 0; c < nc; c++)
        p->one_step_nrmse[c] = var[c] > 0 ? sqrt(sq[c] / var[c]) : NAN;
}

static void streamed_free(el_prediction *p, const el_model *m, const el_series *s)
{
    size_t nc = p->n_channels, full = s->n_samples - p->lags, len = s->n_samples;
    double *z = p->work, *next = p->work + p->state_dim;
    double *band = p->work + 2 * p->state_dim;
    double *mean = band + 2 * nc, *var = mean + nc, *sq = var + nc;
    for (size_t c = 0; c < nc; c++) {
        divergence_band(s, c, &band[2 * c], &band[2 * c + 1]);
        const double *x = s->values + c * len + p->lags;
        mean[c] = 0;
        for (size_t i = 0; i < full; i++)
            mean[c] += x[i];
        mean[c] /= (double)full;
        var[c] = sq[c] = 0;
    }
    measured_state(s, p->lags, p->lags, z);
    /* value 0 is the measured x[K]: its error is 0 */
    for (size_t c = 0; c < nc; c++) {
        double x = s->values[c * len + p->lags];
        var[c] += (x - mean[c]) * (x - mean[c]);
        sq[c] += (z[c] - x) * (z[c] - x);
    }
    size_t count = 1;
    p->free_diverged = 0;
    p->free_diverged_at = 0;
    while (count < full) {
        step(m, p->inputs, p->lags + count - 1, z, next);
        if (out_of_band(nc, band, next)) {
            p->free_diverged = 1;
            p->free_diverged_at = p->lags + count;
            break;
        }
        for (size_t c = 0; c < nc; c++) {
            double x = s->values[c * len + p->lags + count];
            var[c] += (x - mean[c]) * (x - mean[c]);
            sq[c] += (next[c] - x) * (next[c] - x);
        }
        memcpy(z, next, p->state_dim * sizeof *z);
        count++;
    }
    p->free_count = count;
    for (size_t c = 0; c < nc; c++)
        p->free_nrmse[c] = p->free_diverged ? NAN : var[c] > 0 ? sqrt(sq[c] / var[c]) : NAN;
}

el_status el_prediction_run(el_prediction *p, const el_model *m,
                            const el_series *s, el_error *err)
{
    if (p == NULL || m == NULL || s == NULL || m->ad == NULL || m->offset == NULL ||
        s->values == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_prediction_run: NULL argument");
    if (m->n_inputs > 0 &&
        (p->inputs == NULL || p->inputs->n_channels != m->n_inputs ||
         p->inputs->n_samples != s->n_samples || m->input_b == NULL))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_prediction_run: the model has %zu inputs but the plan "
                            "has no matching input series", m->n_inputs);
    if (m->n_channels != p->n_channels || s->n_channels != p->n_channels ||
        m->lags != p->lags || m->state_dim != p->state_dim)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_prediction_run: model (%zu channels, %zu lags, state %zu) "
                            "or series (%zu channels) does not match the plan "
                            "(%zu channels, %zu lags)", m->n_channels, m->lags,
                            m->state_dim, s->n_channels, p->n_channels, p->lags);
    if (s->n_samples < p->lags + 2 || s->n_samples > p->max_samples)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_prediction_run: %zu samples outside the plan's [%zu, %zu]",
                            s->n_samples, p->lags + 2, p->max_samples);
    p->n_samples = s->n_samples;
    p->one_step_first = p->lags + 1;
    p->one_step_count = s->n_samples - p->lags - 1;
    p->free_first = p->lags;
    if (!p->traces) {
        if (!p->skip_one_step)
            streamed_one_step(p, m, s);
        streamed_free(p, m, s);
        return EL_OK;
    }
    run_one_step(p, m, s);
    run_free(p, m, s);
    errors(p, s);
    return EL_OK;
}
