/* el_spectrum: Welch PSD with FFTW, peak picking and the mode cross-check
 * (formulas and sources in docs/method-spectrum.md). */
#include "el_spectrum.h"

#include <fftw3.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* The Hann window's worst-case scalloping loss, 1.42 dB (Harris 1978,
 * Table 1): a tone half-way between two bins is this much below its true
 * height, and never more, so a parabola that reaches higher is
 * extrapolating. Power factor 1 / |W(1/2) / W(0)|^2 = (3 pi / 8)^2 for the
 * Hann kernel W(d) = sinc(d) / (1 - d^2). */
#define EL_HANN_SCALLOP_POWER 1.3879131244

/* Largest PSD dynamic range taken as real: FFT rounding in double
 * precision sits near 1e-30 of the peak power, so anything below 1e-12 of
 * a channel's maximum is not a peak. */
#define EL_PSD_FLOOR_RATIO 1e-12

/* Bins on each side of a peak that hold its Hann main lobe and most of its
 * leakage (the Hann main lobe is +-2 bins; the side lobes fall as d^-6 in
 * power, Harris 1978: ~1e-5 at 4 bins, < 1e-6 at 8) for the band powers. */
#define EL_BAND_MIN_BINS 4

struct el_spectrum_plan {
    size_t segment_length;
    size_t hop;
    size_t n_bins;
    double *window;       /* periodic Hann, L values */
    double sum_w;
    double sum_w2;
    double rho1;          /* correlation of the window with itself shifted by hop */
    double *in;           /* fftw_malloc'ed, L */
    fftw_complex *out;    /* fftw_malloc'ed, n_bins */
    fftw_plan fft;
};

void el_spectrum_defaults(el_spectrum_options *opt)
{
    opt->segment_length = 0;
    opt->max_peaks = 5;
    opt->threshold_ratio = 10.0;
    opt->significance = 5.0;
}

void el_spectrum_check_defaults(el_spectrum_check_options *opt)
{
    opt->strong_ratio = 100.0;
    opt->match_bins = 2.0;
    opt->match_relative = 0.02;
    opt->narrow_factor = 1.0 / 3.0;
    opt->narrow_min_bins = 9.0;
    opt->narrow_contrast = 2.0;
    opt->amplitude_rule = 1;
    opt->transient_ratio = 0.25;
    opt->decay_power_ratio = 0.25;
    opt->persist_ratio = 0.5;
}

el_status el_spectrum_choose_segment(size_t requested, size_t n_samples,
                                     size_t *segment_length, el_error *err)
{
    if (n_samples < EL_SPECTRUM_MIN_SEGMENT) {
        el_error_set(err, EL_ERR_DATA,
                     "the window has %zu samples; a spectrum needs at least %d",
                     n_samples, EL_SPECTRUM_MIN_SEGMENT);
        el_error_hint(err, "widen the window (--from/--to) or use a longer log");
        return EL_ERR_DATA;
    }
    if (requested != 0) {
        if (requested < EL_SPECTRUM_MIN_SEGMENT || requested > n_samples) {
            el_error_set(err, EL_ERR_USAGE,
                         "segment length %zu is outside %d..%zu (the samples in the window)",
                         requested, EL_SPECTRUM_MIN_SEGMENT, n_samples);
            el_error_option(err, "--segment");
            el_error_hint(err,
                          "give --segment between %d and %zu; longer segments resolve finer "
                          "frequencies, shorter ones average more segments",
                          EL_SPECTRUM_MIN_SEGMENT, n_samples);
            return EL_ERR_USAGE;
        }
        *segment_length = requested;
        return EL_OK;
    }
    size_t quarter = n_samples / 4;
    size_t p2 = 1;
    while (p2 <= quarter / 2)
        p2 *= 2;
    if (p2 < 64)
        p2 = 64;
    *segment_length = p2 < n_samples ? p2 : n_samples;
    return EL_OK;
}

el_status el_spectrum_plan_create(size_t segment_length,
                                  el_spectrum_plan **plan, el_error *err)
{
    *plan = NULL;
    if (segment_length < EL_SPECTRUM_MIN_SEGMENT || segment_length > (size_t)INT_MAX)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "spectrum plan: segment length %zu out of range", segment_length);
    el_spectrum_plan *p = calloc(1, sizeof *p);
    if (p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a spectrum plan");
    size_t L = segment_length;
    p->segment_length = L;
    p->hop = L - L / 2;
    p->n_bins = L / 2 + 1;
    p->window = malloc(L * sizeof *p->window);
    p->in = fftw_malloc(L * sizeof *p->in);
    p->out = fftw_malloc(p->n_bins * sizeof *p->out);
    if (p->window == NULL || p->in == NULL || p->out == NULL) {
        el_spectrum_plan_destroy(p);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a spectrum plan of %zu samples", L);
    }
    /* Periodic (DFT-even) Hann: its DFT is exactly zero beyond +-1 bin, so
     * a tone on a bin leaks into its two neighbours only (Harris 1978). */
    const double two_pi = 6.283185307179586476925;
    for (size_t n = 0; n < L; n++) {
        double w = 0.5 - 0.5 * cos(two_pi * (double)n / (double)L);
        p->window[n] = w;
        p->sum_w += w;
        p->sum_w2 += w * w;
    }
    double overlap = 0.0;
    for (size_t n = 0; n + p->hop < L; n++)
        overlap += p->window[n] * p->window[n + p->hop];
    p->rho1 = overlap / p->sum_w2;
    p->fft = fftw_plan_dft_r2c_1d((int)L, p->in, p->out, FFTW_ESTIMATE);
    if (p->fft == NULL) {
        el_spectrum_plan_destroy(p);
        return el_error_set(err, EL_ERR_NUMERIC, "FFTW could not plan a transform of %zu samples", L);
    }
    *plan = p;
    return EL_OK;
}

void el_spectrum_plan_destroy(el_spectrum_plan *plan)
{
    if (plan == NULL)
        return;
    if (plan->fft != NULL)
        fftw_destroy_plan(plan->fft);
    fftw_free(plan->in);
    fftw_free(plan->out);
    free(plan->window);
    free(plan);
}

size_t el_spectrum_plan_segment(const el_spectrum_plan *plan)
{
    return plan->segment_length;
}

size_t el_spectrum_plan_bins(const el_spectrum_plan *plan)
{
    return plan->n_bins;
}

el_status el_spectra_create(const el_spectrum_plan *plan, size_t n_channels,
                            el_spectra *spectra, el_error *err)
{
    memset(spectra, 0, sizeof *spectra);
    if (plan == NULL || n_channels == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "spectra: no plan or no channels");
    size_t nb = plan->n_bins;
    if (n_channels > ((size_t)-1) / sizeof(double) / nb)
        return el_error_set(err, EL_ERR_NOMEM, "spectra of %zu channels are too large", n_channels);
    spectra->frequency_hz = calloc(nb, sizeof(double));
    spectra->psd = calloc(nb * n_channels, sizeof(double));
    spectra->psd_first = calloc(nb * n_channels, sizeof(double));
    spectra->psd_second = calloc(nb * n_channels, sizeof(double));
    spectra->total_power = calloc(n_channels, sizeof(double));
    if (spectra->frequency_hz == NULL || spectra->psd == NULL || spectra->psd_first == NULL
        || spectra->psd_second == NULL || spectra->total_power == NULL) {
        el_spectra_free(spectra);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for spectra");
    }
    spectra->n_channels = n_channels;
    spectra->n_bins = nb;
    spectra->segment_length = plan->segment_length;
    spectra->hop = plan->hop;
    return EL_OK;
}

void el_spectra_free(el_spectra *spectra)
{
    if (spectra == NULL)
        return;
    free(spectra->frequency_hz);
    free(spectra->psd);
    free(spectra->psd_first);
    free(spectra->psd_second);
    free(spectra->total_power);
    memset(spectra, 0, sizeof *spectra);
}

/* Number of segments for n samples: the regular ones at multiples of the
 * hop, plus one moved back to end at the last sample when the regular ones
 * leave samples over, so that no sample is dropped. */
static size_t count_segments(size_t n_samples, size_t L, size_t hop)
{
    size_t regular = (n_samples - L) / hop + 1;
    size_t end = (regular - 1) * hop + L;
    return regular + (end < n_samples ? 1 : 0);
}

/* Start of segment s (of count_segments): s * hop, except the moved-back
 * last one, which starts at n - L. */
static size_t segment_start(size_t s, size_t n_segments, size_t n_samples, size_t L,
                            size_t hop)
{
    size_t start = s * hop;
    if (s + 1 == n_segments && start + L != n_samples)
        start = n_samples - L;
    return start;
}

/* Correlation of the window with itself shifted by d samples. */
static double window_correlation(const el_spectrum_plan *plan, size_t d)
{
    double sum = 0.0;
    for (size_t n = 0; n + d < plan->segment_length; n++)
        sum += plan->window[n] * plan->window[n + d];
    return sum / plan->sum_w2;
}

/* Equivalent degrees of freedom of a Welch average of K segments
 * (Welch 1967; Percival & Walden 1993, ch. 6): for a white-ish spectrum
 * the variance of the average relative to one segment's is
 * (1/K^2) sum_i sum_j rho(s_i - s_j)^2, rho the window's correlation at
 * the distance of the two starts, so nu = 2 K^2 / sum_i sum_j rho^2. With
 * every segment at 50 % overlap this is 2K / (1 + 2 (1 - 1/K) rho1^2);
 * the moved-back last segment overlaps its neighbour by more. */
static double welch_dof(const el_spectrum_plan *plan, size_t n_segments, size_t n_samples)
{
    size_t L = plan->segment_length, hop = plan->hop;
    double sum = (double)n_segments; /* i == j */
    for (size_t i = 0; i < n_segments; i++) {
        size_t si = segment_start(i, n_segments, n_samples, L, hop);
        for (size_t j = i + 1; j < n_segments; j++) {
            size_t sj = segment_start(j, n_segments, n_samples, L, hop);
            if (sj - si >= L)
                break;
            double r = sj - si == hop ? plan->rho1 : window_correlation(plan, sj - si);
            sum += 2.0 * r * r;
        }
    }
    double k = (double)n_segments;
    return 2.0 * k * k / sum;
}

/* A segment belongs to the first half when its centre lies before the
 * record's centre. */
static int segment_in_first_half(size_t start, size_t L, size_t n_samples)
{
    return 2 * start + L < n_samples;
}

/* Adds |X_k|^2 of every segment of x to acc_first or acc_second (each
 * n_bins, zeroed by the caller). */
static void accumulate_segments(el_spectrum_plan *plan, const double *x,
                                size_t n_samples, size_t n_segments,
                                double *acc_first, double *acc_second)
{
    size_t L = plan->segment_length;
    for (size_t s = 0; s < n_segments; s++) {
        size_t start = segment_start(s, n_segments, n_samples, L, plan->hop);
        const double *seg = x + start;
        double mean = 0.0;
        for (size_t n = 0; n < L; n++)
            mean += seg[n];
        mean /= (double)L;
        for (size_t n = 0; n < L; n++)
            plan->in[n] = (seg[n] - mean) * plan->window[n];
        fftw_execute(plan->fft);
        double *acc = segment_in_first_half(start, L, n_samples) ? acc_first : acc_second;
        for (size_t k = 0; k < plan->n_bins; k++) {
            double re = plan->out[k][0], im = plan->out[k][1];
            acc[k] += re * re + im * im;
        }
    }
}

static el_status check_channel_finite(const el_series *series, size_t c, el_error *err)
{
    const double *x = series->values + c * series->n_samples;
    for (size_t k = 0; k < series->n_samples; k++) {
        if (!isfinite(x[k])) {
            const char *name = series->names != NULL ? series->names[c] : NULL;
            el_error_set(err, EL_ERR_DATA, "channel %s%s%zu has a non-finite value at sample %zu",
                         name != NULL ? name : "", name != NULL ? " / " : "#", c + 1, k);
            el_error_hint(err, "the series must be cleaned before its spectrum is taken");
            return EL_ERR_DATA;
        }
    }
    return EL_OK;
}

static el_status check_execute_args(const el_spectrum_plan *plan, const el_series *series,
                                    const el_spectra *spectra, el_error *err)
{
    if (plan == NULL || series == NULL || spectra == NULL || series->values == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "spectrum: NULL argument");
    if (spectra->segment_length != plan->segment_length || spectra->n_bins != plan->n_bins
        || spectra->n_channels != series->n_channels)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "spectrum: spectra made for %zu channels x L=%zu, series has %zu channels, plan L=%zu",
                            spectra->n_channels, spectra->segment_length, series->n_channels,
                            plan->segment_length);
    if (!(isfinite(series->dt) && series->dt > 0.0))
        return el_error_set(err, EL_ERR_DATA, "spectrum: sample interval %g is not positive", series->dt);
    if (series->n_samples < plan->segment_length) {
        el_error_set(err, EL_ERR_DATA, "the window has %zu samples, fewer than the segment length %zu",
                     series->n_samples, plan->segment_length);
        el_error_option(err, "--segment");
        el_error_hint(err, "give --segment of at most %zu, or widen the window", series->n_samples);
        return EL_ERR_DATA;
    }
    return EL_OK;
}

/* Fills the per-record fields of spectra (segment counts, halves, dof,
 * frequencies) that do not depend on the channel. */
static void fill_layout(const el_spectrum_plan *plan, const el_series *series, el_spectra *sp)
{
    size_t L = plan->segment_length, n = series->n_samples;
    sp->dt = series->dt;
    sp->n_samples = n;
    sp->n_segments = count_segments(n, L, plan->hop);
    sp->last_start = segment_start(sp->n_segments - 1, sp->n_segments, n, L, plan->hop);
    sp->last_overlap = 0.0;
    if (sp->n_segments > 1) {
        size_t before = segment_start(sp->n_segments - 2, sp->n_segments, n, L, plan->hop);
        sp->last_overlap = (double)(before + L - sp->last_start) / (double)L;
    }
    sp->df_hz = 1.0 / ((double)L * series->dt);
    sp->enbw_hz = sp->df_hz * (double)L * plan->sum_w2 / (plan->sum_w * plan->sum_w);
    sp->dof = welch_dof(plan, sp->n_segments, n);
    for (size_t k = 0; k < sp->n_bins; k++)
        sp->frequency_hz[k] = (double)k * sp->df_hz;
    size_t n1 = 0, n2 = 0;
    double centre1 = 0.0, centre2 = 0.0;
    for (size_t s = 0; s < sp->n_segments; s++) {
        size_t start = segment_start(s, sp->n_segments, n, L, plan->hop);
        double centre = (double)start + 0.5 * (double)(L - 1);
        if (segment_in_first_half(start, L, n)) {
            n1++;
            centre1 += centre;
        } else {
            n2++;
            centre2 += centre;
        }
    }
    sp->n_segments_first = n1;
    sp->n_segments_second = n2;
    sp->halves_ok = n1 > 0 && n2 > 0;
    sp->half_separation = sp->halves_ok
        ? (centre2 / (double)n2 - centre1 / (double)n1) * series->dt : 0.0;
}

el_status el_spectrum_execute(el_spectrum_plan *plan, const el_series *series,
                              el_spectra *spectra, el_error *err)
{
    el_status st = check_execute_args(plan, series, spectra, err);
    if (st != EL_OK)
        return st;
    for (size_t c = 0; c < series->n_channels; c++) {
        st = check_channel_finite(series, c, err);
        if (st != EL_OK)
            return st;
    }
    fill_layout(plan, series, spectra);
    size_t nb = plan->n_bins, L = plan->segment_length;
    double n1 = (double)spectra->n_segments_first, n2 = (double)spectra->n_segments_second;
    double nk = (double)spectra->n_segments;
    for (size_t c = 0; c < series->n_channels; c++) {
        double *first = spectra->psd_first + c * nb;
        double *second = spectra->psd_second + c * nb;
        double *psd = spectra->psd + c * nb;
        memset(first, 0, nb * sizeof *first);
        memset(second, 0, nb * sizeof *second);
        accumulate_segments(plan, series->values + c * series->n_samples, series->n_samples,
                            spectra->n_segments, first, second);
        double power = 0.0;
        for (size_t k = 0; k < nb; k++) {
            /* One-sided density: the negative-frequency half is folded onto
             * bins 1..; bin 0 and (even L) bin L/2 have no mirror. */
            int unmirrored = k == 0 || (L % 2 == 0 && k == L / 2);
            double scale = (unmirrored ? 1.0 : 2.0) * series->dt / plan->sum_w2;
            psd[k] = scale * (first[k] + second[k]) / nk;
            first[k] = n1 > 0 ? scale * first[k] / n1 : 0.0;
            second[k] = n2 > 0 ? scale * second[k] / n2 : 0.0;
            power += psd[k];
        }
        if (!spectra->halves_ok) {
            memset(first, 0, nb * sizeof *first);
            memset(second, 0, nb * sizeof *second);
        }
        spectra->total_power[c] = power * spectra->df_hz;
    }
    return EL_OK;
}

el_status el_peaks_create(size_t n_channels, size_t n_bins, size_t max_per_channel,
                          el_peaks *peaks, el_error *err)
{
    memset(peaks, 0, sizeof *peaks);
    if (n_channels == 0 || n_bins == 0 || max_per_channel == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "peaks: zero size");
    if (max_per_channel > ((size_t)-1) / sizeof(el_peak) / n_channels
        || n_bins > ((size_t)-1) / sizeof(double) / n_channels)
        return el_error_set(err, EL_ERR_NOMEM, "peaks: too many");
    peaks->count = calloc(n_channels, sizeof *peaks->count);
    peaks->items = calloc(n_channels * max_per_channel, sizeof *peaks->items);
    peaks->median_psd = calloc(n_channels, sizeof *peaks->median_psd);
    peaks->min_ratio = calloc(n_channels, sizeof *peaks->min_ratio);
    peaks->smoothed = calloc(n_channels * n_bins, sizeof *peaks->smoothed);
    peaks->scratch = calloc(n_bins, sizeof *peaks->scratch);
    peaks->candidates = calloc(n_bins, sizeof *peaks->candidates);
    if (peaks->count == NULL || peaks->items == NULL || peaks->median_psd == NULL
        || peaks->min_ratio == NULL || peaks->smoothed == NULL || peaks->scratch == NULL
        || peaks->candidates == NULL) {
        el_peaks_free(peaks);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for spectral peaks");
    }
    peaks->n_channels = n_channels;
    peaks->n_bins = n_bins;
    peaks->max_per_channel = max_per_channel;
    return EL_OK;
}

void el_peaks_free(el_peaks *peaks)
{
    if (peaks == NULL)
        return;
    free(peaks->count);
    free(peaks->items);
    free(peaks->median_psd);
    free(peaks->min_ratio);
    free(peaks->smoothed);
    free(peaks->scratch);
    free(peaks->candidates);
    memset(peaks, 0, sizeof *peaks);
}


/* Tallest first; equal heights by bin so the order never depends on qsort. */
static int compare_peak_height(const void *a, const void *b)
{
    const el_peak *p = a, *q = b;
    if (p->height != q->height)
        return p->height < q->height ? 1 : -1;
    return (p->bin > q->bin) - (p->bin < q->bin);
}

/* Puts the k-th smallest of a[0..n) at a[k], nothing larger before it
 * and nothing smaller after it (Hoare's selection, "Find", 1961, with the
 * median of three as pivot): expected O(n), where a sort is O(n log n).
 * The values are only moved, so the order statistic is the same double a
 * sort gives. */
static void select_kth(double *a, size_t n, size_t k)
{
    size_t lo = 0, hi = n - 1;
    while (hi > lo) {
        size_t mid = lo + (hi - lo) / 2;
        double x = a[lo], y = a[mid], z = a[hi];
        double pivot = x < y ? (y < z ? y : (x < z ? z : x)) : (x < z ? x : (y < z ? z : y));
        size_t i = lo, j = hi;
        while (i <= j) {
            while (a[i] < pivot)
                i++;
            while (a[j] > pivot)
                j--;
            if (i <= j) {
                double t = a[i];
                a[i] = a[j];
                a[j] = t;
                i++;
                if (j == 0)
                    break;
                j--;
            }
        }
        if (k <= j)
            hi = j;
        else if (k >= i)
            lo = i;
        else
            return;
    }
}

static double median_of(const double *x, size_t n, double *scratch)
{
    memcpy(scratch, x, n * sizeof *scratch);
    select_kth(scratch, n, n / 2);
    if (n % 2)
        return scratch[n / 2];
    /* the lower middle value: the largest of those before n / 2 */
    double lower = scratch[0];
    for (size_t i = 1; i < n / 2; i++)
        lower = scratch[i] > lower ? scratch[i] : lower;
    return 0.5 * (lower + scratch[n / 2]);
}

/* Mean of the bins j-1, j, j+1 that lie in 1..nb-1. */
static double mean3(const double *P, size_t nb, size_t j)
{
    double sum = P[j];
    size_t m = 1;
    if (j > 1) {
        sum += P[j - 1];
        m++;
    }
    if (j + 1 < nb) {
        sum += P[j + 1];
        m++;
    }
    return sum / (double)m;
}

/* Topographic prominence bases: on each side, the lowest bin before the
 * first bin higher than P[k] (or the end; bin 0, the removed mean, is not
 * part of the spectrum's shape). *base is the higher of the two lows (the
 * prominence is P[k] - *base). *smooth_base is the same with each bin
 * replaced by the mean of it and its two neighbours: the minimum over a
 * long flank picks the deepest dip of the estimator's scatter, whose lower
 * tail is long in log scale, and three-bin means shorten it; the
 * significance test uses this one. */
static void prominence_bases(const double *P, const double *m3, size_t nb, size_t k,
                             double *base, double *smooth_base)
{
    /* Plain comparisons, not fmin: the bins are finite (fmin differs
     * only for NaN) and they compile to a min instruction, not a call. */
    double left = P[k], right = P[k], left_s = P[k], right_s = P[k];
    for (size_t j = k; j-- > 1 && P[j] <= P[k];) {
        left = P[j] < left ? P[j] : left;
        left_s = m3[j] < left_s ? m3[j] : left_s;
    }
    for (size_t j = k + 1; j < nb && P[j] <= P[k]; j++) {
        right = P[j] < right ? P[j] : right;
        right_s = m3[j] < right_s ? m3[j] : right_s;
    }
    *base = fmax(left, right);
    *smooth_base = fmax(left_s, right_s);
}

/* Vertex of the parabola through (k-1, k, k+1) of ln P (the usual
 * quadratic peak interpolation on a log spectrum, Smith & Serra 1987). */
static void refine_peak(const double *P, size_t k, double *offset_bins, double *height)
{
    *offset_bins = 0.0;
    *height = P[k];
    if (!(P[k - 1] > 0.0 && P[k + 1] > 0.0))
        return;
    double a = log(P[k - 1]), b = log(P[k]), c = log(P[k + 1]);
    double curvature = a - 2.0 * b + c;
    if (!(curvature < 0.0))
        return;
    double p = 0.5 * (a - c) / curvature;
    if (p > 0.5)
        p = 0.5;
    if (p < -0.5)
        p = -0.5;
    double h = exp(b - 0.25 * (a - c) * p);
    *offset_bins = p;
    *height = h < P[k] * EL_HANN_SCALLOP_POWER ? h : P[k] * EL_HANN_SCALLOP_POWER;
}

/* Full width at half height in bins, by linear interpolation between the
 * bins on each side where P crosses height / 2; 0 when it does not cross
 * before an end. */
static int half_height_width(const double *P, size_t nb, size_t k, double height,
                             double *width_bins)
{
    double half = 0.5 * height;
    size_t j = k;
    while (j > 0 && P[j] >= half)
        j--;
    if (P[j] >= half)
        return 0;
    double left = (double)j + (half - P[j]) / (P[j + 1] - P[j]);
    j = k;
    while (j + 1 < nb && P[j] >= half)
        j++;
    if (P[j] >= half)
        return 0;
    double right = (double)(j - 1) + (P[j - 1] - half) / (P[j - 1] - P[j]);
    *width_bins = right - left;
    return 1;
}

/* S[k] = weighted mean of P over bins k-2..k+2 (weights 1 2 3 2 1) that lie
 * in 1..nb-1; S[0] = P[0]. A short triangular kernel: its half-power width
 * (3 bins) is that of the Hann main lobe, so a line widens from about 1.5
 * to 3.5 bins, while the scatter of a bin falls by more than half in
 * variance. */
static void smooth_spectrum(const double *P, size_t nb, double *S)
{
    static const double weight[5] = {1.0, 2.0, 3.0, 2.0, 1.0};
    S[0] = P[0];
    for (size_t k = 1; k < nb; k++) {
        double sum = 0.0, total = 0.0;
        for (size_t i = 0; i < 5; i++) {
            if (k + i < 3 || k + i - 2 >= nb)
                continue;
            sum += weight[i] * P[k + i - 2];
            total += weight[i];
        }
        S[k] = sum / total;
    }
}

/* From bin k, steps to the higher neighbour while S rises: the top of the
 * hump k lies on. */
static size_t climb(const double *S, size_t nb, size_t k)
{
    for (;;) {
        if (k + 1 < nb && S[k + 1] > S[k])
            k++;
        else if (k > 1 && S[k - 1] > S[k])
            k--;
        else
            return k;
    }
}

/* Half-power band of the hump whose top is bin m of S, in fractional bins
 * by linear interpolation where S crosses S[m] / 2. Returns 0 (open) when
 * S reaches an end of the spectrum (bin 0 excluded) or rises above S[m]
 * before falling to half: the hump is not resolved from a taller one. */
static int half_power_band(const double *S, size_t nb, size_t m, double *low, double *high)
{
    double half = 0.5 * S[m];
    size_t j = m;
    while (j >= 1 && S[j] >= half) {
        if (S[j] > S[m])
            return 0;
        j--;
    }
    if (j < 1)
        return 0;
    *low = (double)j + (half - S[j]) / (S[j + 1] - S[j]);
    j = m;
    while (j < nb && S[j] >= half) {
        if (S[j] > S[m])
            return 0;
        j++;
    }
    if (j >= nb)
        return 0;
    *high = (double)(j - 1) + (S[j - 1] - half) / (S[j - 1] - S[j]);
    return 1;
}

/* Keeps one candidate per hump of S (the tallest in P; ties by bin) and
 * compacts the list. Returns the new count. */
static size_t one_per_hump(el_peak *cand, size_t n_cand)
{
    size_t kept = 0;
    for (size_t i = 0; i < n_cand; i++) {
        size_t j = 0;
        while (j < kept && cand[j].smoothed_bin != cand[i].smoothed_bin)
            j++;
        if (j == kept)
            cand[kept++] = cand[i];
        else if (cand[i].height > cand[j].height)
            cand[j] = cand[i];
    }
    return kept;
}

/* Frequency and half-power band of each kept peak (see
 * el_spectrum_find_peaks). */
static void place_peaks(const double *S, size_t nb, double df, el_peak *cand, size_t n_cand)
{
    for (size_t i = 0; i < n_cand; i++) {
        el_peak *pk = &cand[i];
        double low = 0.0, high = 0.0;
        int ok = half_power_band(S, nb, pk->smoothed_bin, &low, &high);
        for (size_t j = 0; ok && j < n_cand; j++)
            if (j != i && (double)cand[j].smoothed_bin >= low
                && (double)cand[j].smoothed_bin <= high)
                ok = 0;
        pk->band_ok = ok;
        pk->band_low_hz = ok ? low * df : 0.0;
        pk->band_high_hz = ok ? high * df : 0.0;
        if (ok)
            pk->frequency_hz = 0.5 * (low + high) * df;
    }
}

static size_t channel_peaks(const el_spectra *sp, const el_spectrum_options *opt,
                            el_peaks *peaks, size_t c)
{
    size_t nb = sp->n_bins;
    const double *P = sp->psd + c * nb;
    double median = median_of(P + 1, nb - 1, peaks->scratch);
    double largest = 0.0;
    for (size_t k = 1; k < nb; k++)
        largest = P[k] > largest ? P[k] : largest;
    double q = exp(2.0 * opt->significance / sqrt(sp->dof));
    q = q > 2.0 ? q : 2.0;
    peaks->median_psd[c] = median;
    peaks->min_ratio[c] = q;
    double *S = peaks->smoothed + c * nb;
    smooth_spectrum(P, nb, S);
    double threshold = opt->threshold_ratio * median;
    double floor_psd = EL_PSD_FLOOR_RATIO * largest;
    threshold = threshold > floor_psd ? threshold : floor_psd;
    if (!(largest > 0.0) || nb < 4)
        return 0;
    /* The three-bin means once per bin (the scratch is free after the
     * median), not once per step of every candidate's flank walk. */
    double *m3 = peaks->scratch;
    for (size_t j = 1; j < nb; j++)
        m3[j] = mean3(P, nb, j);
    size_t n_cand = 0;
    for (size_t k = 2; k + 1 < nb; k++) {
        if (!(P[k] > P[k - 1] && P[k] >= P[k + 1] && P[k] >= threshold && P[k] > 0.0))
            continue;
        double base, smooth_base;
        prominence_bases(P, m3, nb, k, &base, &smooth_base);
        if (P[k] < q * smooth_base)
            continue;
        el_peak *pk = &peaks->candidates[n_cand++];
        double offset, width_bins = 0.0;
        refine_peak(P, k, &offset, &pk->height);
        pk->channel = c;
        pk->bin = k;
        pk->frequency_hz = ((double)k + offset) * sp->df_hz;
        pk->ratio_to_median = pk->height / fmax(median, floor_psd);
        pk->prominence = P[k] - base;
        pk->width_ok = half_height_width(P, nb, k, pk->height, &width_bins);
        pk->width_hz = pk->width_ok ? width_bins * sp->df_hz : 0.0;
        pk->resolution_hz = sp->df_hz;
        pk->smoothed_bin = climb(S, nb, k);
        pk->smoothed_height = S[pk->smoothed_bin];
    }
    n_cand = one_per_hump(peaks->candidates, n_cand);
    place_peaks(S, nb, sp->df_hz, peaks->candidates, n_cand);
    qsort(peaks->candidates, n_cand, sizeof *peaks->candidates, compare_peak_height);
    size_t keep = n_cand;
    if (keep > opt->max_peaks)
        keep = opt->max_peaks;
    if (keep > peaks->max_per_channel)
        keep = peaks->max_per_channel;
    memcpy(peaks->items + c * peaks->max_per_channel, peaks->candidates, keep * sizeof(el_peak));
    return keep;
}

el_status el_spectrum_find_peaks(const el_spectra *spectra, const el_spectrum_options *opt,
                                 el_peaks *peaks, el_error *err)
{
    if (spectra == NULL || opt == NULL || peaks == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "peaks: NULL argument");
    if (peaks->n_channels != spectra->n_channels || peaks->n_bins < spectra->n_bins)
        return el_error_set(err, EL_ERR_INTERNAL, "peaks: made for %zu channels x %zu bins, spectra have %zu x %zu",
                            peaks->n_channels, peaks->n_bins, spectra->n_channels, spectra->n_bins);
    if (!(opt->threshold_ratio >= 0.0) || !(opt->significance >= 0.0) || spectra->n_segments == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "peaks: threshold %g or significance %g out of range, or no spectrum",
                            opt->threshold_ratio, opt->significance);
    for (size_t c = 0; c < spectra->n_channels; c++)
        peaks->count[c] = channel_peaks(spectra, opt, peaks, c);
    return EL_OK;
}

/* ---- cross-check ---------------------------------------------------- */

static int mode_is_oscillatory(const el_mode *m, double nyquist_hz)
{
    return m->pair && !m->at_nyquist && !m->instantaneous && isfinite(m->frequency_hz)
           && m->frequency_hz > 0.0 && m->frequency_hz < nyquist_hz && isfinite(m->decay_rate);
}

/* Half-power width of a lightly damped mode's PSD peak: 2 zeta f_n =
 * decay_rate / pi (common practice). A mode that does not decay has no
 * stationary peak width. */
static double mode_width_hz(const el_mode *m)
{
    return m->decay_rate > 0.0 ? m->decay_rate / 3.14159265358979323846 : 0.0;
}

/* How far a peak may lie from a mode and still be its peak: the bins the
 * Welch estimate cannot resolve, the error of a fitted frequency, and the
 * mode's half-power width W = 2 gamma: the top of a noisy estimate of a
 * Lorentzian wanders over the part within the scatter of the top, which
 * with few segments reaches gamma and beyond. */
static double mode_tolerance_hz(const el_mode *m, const el_spectra *sp,
                                const el_spectrum_check_options *opt)
{
    double tol = opt->match_bins * sp->df_hz;
    double rel = opt->match_relative * m->frequency_hz;
    double width = mode_width_hz(m);
    tol = rel > tol ? rel : tol;
    return width > tol ? width : tol;
}

static void check_one_mode(const el_mode *m, const el_spectra *sp, const el_peaks *pk,
                           const el_spectrum_check_options *opt, el_spectrum_mode_check *out)
{
    memset(out, 0, sizeof *out);
    out->oscillatory = mode_is_oscillatory(m, 0.5 / sp->dt);
    if (!out->oscillatory)
        return;
    out->predicted_width_hz = mode_width_hz(m);
    out->tolerance_hz = mode_tolerance_hz(m, sp, opt);
    double best = HUGE_VAL, best_height = 0.0;
    for (size_t c = 0; c < pk->n_channels; c++) {
        for (size_t j = 0; j < pk->count[c]; j++) {
            size_t idx = c * pk->max_per_channel + j;
            const el_peak *p = &pk->items[idx];
            double d = fabs(p->frequency_hz - m->frequency_hz);
            if (d < best || (d == best && p->height > best_height)) {
                best = d;
                best_height = p->height;
                out->has_peak = 1;
                out->peak_index = idx;
                out->peak_channel = c;
                out->peak_frequency_hz = p->frequency_hz;
            }
        }
    }
    if (out->has_peak) {
        out->relative_distance = best / m->frequency_hz;
        out->matched = best <= out->tolerance_hz;
    }
}

/* Mean PSD over the bins j with 3 <= |j - k| <= reach (bins 1.. only;
 * from 3 bins out a tone's Hann leakage is below 1e-3 of its peak). 0 when
 * there is no such bin (*ok = 0). */
static double ring_level(const double *P, size_t nb, size_t k, size_t reach, int *ok)
{
    double sum = 0.0;
    size_t m = 0;
    for (size_t d = 3; d <= reach; d++) {
        if (k > d && k - d >= 1) {
            sum += P[k - d];
            m++;
        }
        if (k + d < nb) {
            sum += P[k + d];
            m++;
        }
    }
    *ok = m > 0;
    return m > 0 ? sum / (double)m : 0.0;
}

/* The narrowness rule. The half-height width alone is not enough: with few
 * segments the estimator's scatter puts dips next to the top of a broad
 * mode peak, so the peak must also stand clear of the mean PSD within a
 * third of the implied width, where a mode of that width would still be
 * at >= 0.69 of its height (Lorentzian: 1 / (1 + (2/3)^2)). */
static int is_narrow(const el_peak *p, double implied_hz, const el_spectra *sp,
                     const el_peaks *pk, const el_spectrum_check_options *opt)
{
    double df = sp->df_hz;
    if (!(implied_hz > 0.0) || implied_hz < opt->narrow_min_bins * df || !p->width_ok
        || !(p->width_hz < opt->narrow_factor * implied_hz))
        return 0;
    double reach = floor(implied_hz / (3.0 * df));
    size_t reach_bins = reach < (double)sp->n_bins ? (size_t)reach : sp->n_bins;
    int ok;
    double ring = ring_level(sp->psd + p->channel * sp->n_bins, sp->n_bins, p->bin, reach_bins, &ok);
    return ok && ring * opt->narrow_contrast * pk->min_ratio[p->channel] <= p->height;
}

/* Band of a peak for the half-record powers: its main lobe and leakage
 * (>= EL_BAND_MIN_BINS) or the mode's half-power width if wider. */
static size_t band_half_bins(const el_mode *m, const el_spectra *sp)
{
    double w_bins = ceil(mode_width_hz(m) / sp->df_hz);
    if (w_bins <= EL_BAND_MIN_BINS)
        return EL_BAND_MIN_BINS;
    return w_bins < (double)sp->n_bins ? (size_t)w_bins : sp->n_bins;
}

/* Sums P over |j - k| <= band (in band) and over |j - k| > band + guard
 * (outside), bins 1.. (bin 0 is the removed mean). */
static void band_powers(const double *P, size_t nb, size_t k, size_t band, size_t guard,
                        double *in_band, double *outside)
{
    *in_band = 0.0;
    *outside = 0.0;
    for (size_t j = 1; j < nb; j++) {
        size_t d = j > k ? j - k : k - j;
        if (d <= band)
            *in_band += P[j];
        else if (d > band + guard)
            *outside += P[j];
    }
}

/* The persistence rule. A stationary noise-driven mode keeps constant
 * power however strongly it is damped, so the rule is only applied when the
 * record itself is a transient: the power outside the peak's band (past a
 * guard of EL_BAND_MIN_BINS more bins, where a tone's leakage is < 1e-6)
 * falls by transient_ratio between the halves. A record whose only content
 * is the peak gives no such evidence and the rule stays silent. */
static void amplitude_rule(const el_peak *p, const el_mode *m, const el_spectra *sp,
                           const el_spectrum_check_options *opt, el_spectrum_peak_check *out)
{
    if (!opt->amplitude_rule || !sp->halves_ok || sp->n_segments_first < 2
        || sp->n_segments_second < 2 || !(m->decay_rate > 0.0))
        return;
    size_t nb = sp->n_bins, band = band_half_bins(m, sp);
    double band1, out1, band2, out2;
    band_powers(sp->psd_first + p->channel * nb, nb, p->bin, band, EL_BAND_MIN_BINS, &band1, &out1);
    band_powers(sp->psd_second + p->channel * nb, nb, p->bin, band, EL_BAND_MIN_BINS, &band2, &out2);
    if (!(band1 > 0.0 && out1 > 0.0))
        return;
    out->amplitude_ok = 1;
    out->band_power_ratio = band2 / band1;
    out->outside_power_ratio = out2 / out1;
    out->predicted_power_ratio = exp(-2.0 * m->decay_rate * sp->half_separation);
    out->persistent = out->outside_power_ratio <= opt->transient_ratio
                      && out->predicted_power_ratio <= opt->decay_power_ratio
                      && out->band_power_ratio >= opt->persist_ratio;
}

/* Fills the flags of one peak. */
static void check_one_peak(const el_peak *p, const el_modes *modes, const el_spectra *sp,
                           const el_peaks *pk, const el_spectrum_check_options *opt,
                           el_spectrum_peak_check *out)
{
    memset(out, 0, sizeof *out);
    double nyquist = 0.5 / sp->dt;
    size_t near_best = modes->n_modes, any_best = modes->n_modes;
    int near_growing = 0, any_growing = 0;
    for (size_t i = 0; i < modes->n_modes; i++) {
        const el_mode *m = &modes->modes[i];
        if (!mode_is_oscillatory(m, nyquist))
            continue;
        int decays = m->decay_rate > 0.0;
        any_growing |= !decays;
        if (any_best == modes->n_modes || m->decay_rate < modes->modes[any_best].decay_rate)
            any_best = i;
        if (fabs(p->frequency_hz - m->frequency_hz) > mode_tolerance_hz(m, sp, opt))
            continue;
        near_growing |= !decays;
        if (near_best == modes->n_modes || m->decay_rate < modes->modes[near_best].decay_rate)
            near_best = i;
    }
    out->has_mode = near_best < modes->n_modes;
    out->mode_index = out->has_mode ? near_best : 0;
    out->strong = p->ratio_to_median >= opt->strong_ratio;
    out->no_mode = out->strong && !out->has_mode;
    size_t used = out->has_mode ? near_best : any_best;
    int growing = out->has_mode ? near_growing : any_growing;
    out->has_implied_mode = used < modes->n_modes;
    out->implied_mode_index = out->has_implied_mode ? used : 0;
    if (used < modes->n_modes && !growing)
        out->implied_width_hz = mode_width_hz(&modes->modes[used]);
    out->narrow = is_narrow(p, out->implied_width_hz, sp, pk, opt);
    if (out->has_mode)
        amplitude_rule(p, &modes->modes[near_best], sp, opt, out);
}

static int flags_equal(const el_spectrum_peak_check *a, const el_spectrum_peak_check *b)
{
    return a->no_mode == b->no_mode && a->narrow == b->narrow && a->persistent == b->persistent;
}

static int has_warning(const el_spectrum_peak_check *a)
{
    return a->no_mode || a->narrow || a->persistent;
}

static void channel_label(const char *const *names, size_t c, char *buf, size_t size)
{
    if (names != NULL && names[c] != NULL)
        snprintf(buf, size, "%s", names[c]);
    else
        snprintf(buf, size, "channel %zu", c + 1);
}

static el_status warn_peak(const el_peak *p, const el_spectrum_peak_check *chk, size_t others,
                           const el_modes *modes, const el_spectra *sp,
                           const char *const *names, el_warnings *warnings)
{
    char label[128], text[1024];
    size_t used = 0;
    channel_label(names, p->channel, label, sizeof label);
#define EL_PUT(...)                                                              \
    do {                                                                         \
        if (used < sizeof text) {                                                \
            int n_ = snprintf(text + used, sizeof text - used, __VA_ARGS__);     \
            used += n_ > 0 ? (size_t)n_ : 0;                                     \
        }                                                                        \
    } while (0)
    EL_PUT("spectrum: %s", label);
    if (others > 0)
        EL_PUT(" (and %zu other channel%s)", others, others > 1 ? "s" : "");
    EL_PUT(": peak at %.4g Hz (%.3g x the median level)", p->frequency_hz, p->ratio_to_median);
    if (chk->no_mode) {
        size_t nearest = modes->n_modes;
        for (size_t i = 0; i < modes->n_modes; i++) {
            if (!mode_is_oscillatory(&modes->modes[i], 0.5 / sp->dt))
                continue;
            if (nearest == modes->n_modes
                || fabs(modes->modes[i].frequency_hz - p->frequency_hz)
                       < fabs(modes->modes[nearest].frequency_hz - p->frequency_hz))
                nearest = i;
        }
        if (nearest < modes->n_modes)
            EL_PUT(" has no mode of the model near it (nearest mode %.4g Hz)",
                   modes->modes[nearest].frequency_hz);
        else
            EL_PUT(" has no mode of the model near it (the model has no oscillatory mode)");
        EL_PUT(": unmodelled dynamics, too few lags (try --lags), or a forced oscillation");
    }
    if (chk->narrow && chk->has_implied_mode) {
        const el_mode *m = &modes->modes[chk->implied_mode_index];
        EL_PUT("; it is %.3g Hz wide, narrower than the %.3g Hz half-power width that %s "
               "(%.4g Hz, damping ratio %.3g) implies",
               p->width_hz, chk->implied_width_hz,
               chk->has_mode ? "the damping of its mode" : "even the least damped mode",
               m->frequency_hz, m->damping_ratio);
    }
    if (chk->persistent) {
        const el_mode *m = &modes->modes[chk->mode_index];
        EL_PUT("; its power in the second half of the record is %.3g %% of the first half "
               "while the record decays and its mode (%.4g Hz, decay rate %.3g /s) predicts %.3g %%",
               100.0 * chk->band_power_ratio, m->frequency_hz, m->decay_rate,
               100.0 * chk->predicted_power_ratio);
    }
    if (chk->narrow || chk->persistent)
        EL_PUT(": possibly a forced oscillation, not a property of the operating point");
#undef EL_PUT
    return el_warnings_add(warnings, "%s", text);
}

/* A flagged peak repeats an earlier one when an earlier peak (in peak
 * order) has the same flags within match_bins bins. */
static int repeats_earlier(const el_peaks *pk, const el_spectrum_peak_check *checks,
                           size_t idx, double tol_hz)
{
    for (size_t c = 0; c < pk->n_channels; c++) {
        for (size_t j = 0; j < pk->count[c]; j++) {
            size_t other = c * pk->max_per_channel + j;
            if (other == idx)
                return 0;
            if (has_warning(&checks[other]) && flags_equal(&checks[other], &checks[idx])
                && fabs(pk->items[other].frequency_hz - pk->items[idx].frequency_hz) <= tol_hz)
                return 1;
        }
    }
    return 0;
}

static size_t later_repeats(const el_peaks *pk, const el_spectrum_peak_check *checks,
                            size_t idx, double tol_hz)
{
    size_t n = 0, first_channel = pk->items[idx].channel;
    for (size_t c = first_channel + 1; c < pk->n_channels; c++) {
        for (size_t j = 0; j < pk->count[c]; j++) {
            size_t other = c * pk->max_per_channel + j;
            if (has_warning(&checks[other]) && flags_equal(&checks[other], &checks[idx])
                && fabs(pk->items[other].frequency_hz - pk->items[idx].frequency_hz) <= tol_hz) {
                n++;
                break;
            }
        }
    }
    return n;
}

el_status el_spectrum_crosscheck(const el_modes *modes, const el_spectra *spectra,
                                 const el_peaks *peaks, const char *const *channel_names,
                                 const el_spectrum_check_options *opt,
                                 el_spectrum_mode_check *mode_checks,
                                 el_spectrum_peak_check *peak_checks,
                                 el_warnings *warnings, el_error *err)
{
    if (modes == NULL || spectra == NULL || peaks == NULL || peak_checks == NULL
        || spectra->n_segments == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "cross-check: NULL argument or empty spectra");
    if (peaks->n_channels != spectra->n_channels || peaks->n_bins < spectra->n_bins)
        return el_error_set(err, EL_ERR_INTERNAL, "cross-check: peaks do not belong to these spectra");
    if (modes->n_modes > 0 && (modes->modes == NULL || mode_checks == NULL))
        return el_error_set(err, EL_ERR_INTERNAL, "cross-check: no mode or mode_checks array");
    el_spectrum_check_options defaults;
    if (opt == NULL) {
        el_spectrum_check_defaults(&defaults);
        opt = &defaults;
    }
    for (size_t i = 0; i < modes->n_modes; i++)
        check_one_mode(&modes->modes[i], spectra, peaks, opt, &mode_checks[i]);
    el_spectrum_peak_check *checks = peak_checks;
    for (size_t c = 0; c < peaks->n_channels; c++)
        for (size_t j = 0; j < peaks->count[c]; j++) {
            size_t idx = c * peaks->max_per_channel + j;
            check_one_peak(&peaks->items[idx], modes, spectra, peaks, opt, &checks[idx]);
        }
    el_status st = EL_OK;
    double tol_hz = opt->match_bins * spectra->df_hz;
    for (size_t c = 0; c < peaks->n_channels && st == EL_OK; c++)
        for (size_t j = 0; j < peaks->count[c] && st == EL_OK; j++) {
            size_t idx = c * peaks->max_per_channel + j;
            if (!has_warning(&checks[idx]) || repeats_earlier(peaks, checks, idx, tol_hz))
                continue;
            st = warn_peak(&peaks->items[idx], &checks[idx], later_repeats(peaks, checks, idx, tol_hz),
                           modes, spectra, channel_names, warnings);
        }
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    return EL_OK;
}

void el_spectrum_unit(const char *unit, int per_hz, char *out, size_t size)
{
    const char *per = per_hz ? "/Hz" : "";
    if (unit == NULL || unit[0] == '\0') {
        snprintf(out, size, "%s", per_hz ? "1/Hz" : "");
        return;
    }
    int letters_only = 1;
    for (const char *p = unit; *p != '\0'; p++)
        if (!((*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z')))
            letters_only = 0;
    if (letters_only)
        snprintf(out, size, "%s^2%s", unit, per);
    else
        snprintf(out, size, "(%s)^2%s", unit, per);
}

el_status el_spectrum_compute(const el_series *series, const el_spectrum_options *opt,
                              el_spectra *spectra, el_peaks *peaks, el_warnings *warnings,
                              el_error *err)
{
    memset(spectra, 0, sizeof *spectra);
    memset(peaks, 0, sizeof *peaks);
    el_spectrum_options defaults;
    if (opt == NULL) {
        el_spectrum_defaults(&defaults);
        opt = &defaults;
    }
    if (series == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "spectrum: NULL series");
    if (opt->max_peaks == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "spectrum: max_peaks must be at least 1");
    size_t L;
    el_status st = el_spectrum_choose_segment(opt->segment_length, series->n_samples, &L, err);
    if (st != EL_OK)
        return st;
    el_spectrum_plan *plan = NULL;
    st = el_spectrum_plan_create(L, &plan, err);
    if (st == EL_OK)
        st = el_spectra_create(plan, series->n_channels, spectra, err);
    if (st == EL_OK)
        st = el_spectrum_execute(plan, series, spectra, err);
    if (st == EL_OK)
        st = el_peaks_create(series->n_channels, spectra->n_bins, opt->max_peaks, peaks, err);
    if (st == EL_OK)
        st = el_spectrum_find_peaks(spectra, opt, peaks, err);
    el_spectrum_plan_destroy(plan);
    if (st == EL_OK && spectra->n_segments < 7) {
        st = el_warnings_add(warnings,
                             "spectrum: only %zu segment%s of %zu samples averaged: each bin "
                             "scatters by about %.0f %%; a shorter --segment averages more "
                             "segments at a coarser resolution",
                             spectra->n_segments, spectra->n_segments > 1 ? "s" : "", L,
                             100.0 * sqrt(2.0 / spectra->dof));
        if (st != EL_OK)
            el_error_set(err, st, "out of memory for a warning");
    }
    if (st != EL_OK) {
        el_spectra_free(spectra);
        el_peaks_free(peaks);
    }
    return st;
}
