/* el_cycle: harmonics of one fundamental with a steady envelope (a
 * possible limit cycle). */
#include "el_cycle.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

/* Coefficient of variation of the RMS about the mean of consecutive
 * windows of m samples of x[0..n); the window count in *n_windows. NaN
 * when the mean RMS is zero. */
static double envelope_cv(const double *x, size_t n, size_t m, size_t *n_windows)
{
    size_t w_count = n / m;
    double sum = 0.0, sum_sq = 0.0;
    for (size_t w = 0; w < w_count; w++) {
        const double *v = x + w * m;
        double mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < m; k++)
            mean += v[k];
        mean /= (double)m;
        for (size_t k = 0; k < m; k++)
            ss += (v[k] - mean) * (v[k] - mean);
        double rms = sqrt(ss / (double)m);
        sum += rms;
        sum_sq += rms * rms;
    }
    *n_windows = w_count;
    double mean_rms = sum / (double)w_count;
    if (!(mean_rms > 0.0))
        return NAN;
    double var = (sum_sq - (double)w_count * mean_rms * mean_rms) / (double)(w_count - 1);
    return sqrt(fmax(var, 0.0)) / mean_rms;
}

/* Bits k (2 .. EL_CYCLE_MAX_ORDER) of the channel's peaks that lie at k
 * times the frequency of peak i. */
static unsigned harmonics_of(const el_peak *p, size_t count, size_t i)
{
    unsigned bits = 0;
    double f0 = p[i].frequency_hz;
    if (!(f0 > 0.0))
        return 0;
    for (unsigned k = 2; k <= EL_CYCLE_MAX_ORDER; k++) {
        double tol = 0.5 * (double)(k + 1) * p[i].resolution_hz;
        for (size_t j = 0; j < count; j++)
            if (j != i && fabs(p[j].frequency_hz - (double)k * f0) <= tol)
                bits |= 1u << k;
    }
    return bits;
}

static size_t count_bits(unsigned bits)
{
    size_t n = 0;
    for (; bits != 0; bits &= bits - 1)
        n++;
    return n;
}

el_status el_cycle_detect(const el_series *series, const el_peaks *peaks, el_cycle *out,
                          el_error *err)
{
    if (series == NULL || peaks == NULL || out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_cycle_detect: NULL argument");
    if (peaks->n_channels != series->n_channels)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_cycle_detect: peaks of %zu channels for %zu",
                            peaks->n_channels, series->n_channels);
    memset(out, 0, sizeof *out);
    out->fundamental_hz = out->envelope_cv = NAN;
    size_t n = series->n_samples;
    if (!(series->dt > 0.0) || series->values == NULL)
        return EL_OK;
    for (size_t c = 0; c < series->n_channels; c++) {
        const el_peak *p = peaks->items + c * peaks->max_per_channel;
        size_t count = peaks->count[c];
        for (size_t i = 0; i < count; i++) {
            unsigned bits = harmonics_of(p, count, i);
            if (bits == 0)
                continue;
            double m_real = EL_CYCLE_WINDOW_PERIODS / (p[i].frequency_hz * series->dt);
            size_t m = (size_t)llround(m_real);
            if (!(m_real < (double)n) || m < 4 || n / m < EL_CYCLE_MIN_WINDOWS)
                continue;
            size_t n_windows = 0;
            double cv = envelope_cv(series->values + c * n, n, m, &n_windows);
            if (!isfinite(cv))
                continue;
            size_t nh = count_bits(bits);
            /* A steady candidate first, then the most harmonics, then the
             * steadiest envelope. */
            int steady = cv <= EL_CYCLE_ENVELOPE_CV_MAX;
            int was_steady = out->tested && out->envelope_cv <= EL_CYCLE_ENVELOPE_CV_MAX;
            int better = !out->tested || steady > was_steady ||
                         (steady == was_steady &&
                          (nh > out->n_harmonics ||
                           (nh == out->n_harmonics && cv < out->envelope_cv)));
            if (!better)
                continue;
            out->tested = 1;
            out->channel = c;
            out->fundamental_hz = p[i].frequency_hz;
            out->harmonics = bits;
            out->n_harmonics = nh;
            out->window_samples = m;
            out->n_windows = n_windows;
            out->envelope_cv = cv;
        }
    }
    out->flagged = out->tested && out->envelope_cv <= EL_CYCLE_ENVELOPE_CV_MAX;
    return EL_OK;
}

void el_cycle_orders_text(const el_cycle *c, char *buf, size_t size)
{
    if (size == 0)
        return;
    size_t len = (size_t)snprintf(buf, size, "1");
    size_t left = c != NULL ? c->n_harmonics : 0;
    for (unsigned k = 2; c != NULL && k <= EL_CYCLE_MAX_ORDER && len < size; k++) {
        if (!(c->harmonics & (1u << k)))
            continue;
        left--;
        len += (size_t)snprintf(buf + len, size - len, "%s%u", left == 0 ? " and " : ", ", k);
    }
}
