/* el_prep: detrending and the zero-phase FFT band limit of a series, and
 * the check that a band edge does not cut near a reported mode. */
#include "el_prep.h"

#include <errno.h>
#include <fftw3.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- detrending ---------------------------------------------------------- */

const char *el_prep_detrend_name(el_detrend mode)
{
    switch (mode) {
    case EL_DETREND_NONE: return "none";
    case EL_DETREND_MEAN: return "mean";
    case EL_DETREND_LINEAR: return "linear";
    }
    return "unknown";
}


el_status el_prep_parse_detrend(const char *text, el_detrend *mode, el_error *err)
{
    static const el_detrend modes[] = { EL_DETREND_NONE, EL_DETREND_MEAN, EL_DETREND_LINEAR };
    if (mode == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_prep_parse_detrend: no output");
    for (size_t i = 0; text != NULL && i < sizeof modes / sizeof modes[0]; i++) {
        if (strcmp(text, el_prep_detrend_name(modes[i])) == 0) {
            *mode = modes[i];
            return EL_OK;
        }
    }
    el_error_set(err, EL_ERR_USAGE, "unknown detrend mode '%s'", text ? text : "");
    el_error_option(err, "--detrend");
    el_error_hint(err, "use --detrend none, --detrend mean or --detrend linear");
    return EL_ERR_USAGE;
}

el_status el_prep_detrend(el_series *series, el_detrend mode, double *level,
                          double *slope, el_error *err)
{
    if (series == NULL || series->values == NULL || series->n_samples < 2)
        return el_error_set(err, EL_ERR_INTERNAL, "el_prep_detrend: no series");
    if (mode != EL_DETREND_NONE && mode != EL_DETREND_MEAN && mode != EL_DETREND_LINEAR)
        return el_error_set(err, EL_ERR_INTERNAL, "el_prep_detrend: unknown mode %d", (int)mode);
    size_t n = series->n_samples;
    double centre = 0.5 * (double)(n - 1);
    double nd = (double)n;
    /* sum over k of (k - centre)^2, in sample units */
    double sum_tau2 = nd * (nd * nd - 1.0) / 12.0;
    for (size_t c = 0; c < series->n_channels; c++) {
        double *x = series->values + c * n;
        double a = 0.0, b = 0.0;   /* level, slope per sample */
        if (mode != EL_DETREND_NONE) {
            for (size_t k = 0; k < n; k++)
                a += x[k];
            a /= nd;
        }
        if (mode == EL_DETREND_LINEAR) {
            for (size_t k = 0; k < n; k++)
                b += ((double)k - centre) * (x[k] - a);
            b /= sum_tau2;
        }
        if (mode != EL_DETREND_NONE)
            for (size_t k = 0; k < n; k++)
                x[k] -= a + b * ((double)k - centre);
        if (level != NULL)
            level[c] = a;
        if (slope != NULL)
            slope[c] = b / series->dt;
    }
    return EL_OK;
}

/* ---- band limit ---------------------------------------------------------- */

struct el_prep_band_plan {
    size_t n_samples;
    size_t pad;            /* P: samples of reflection at each end */
    size_t length;         /* L: transform length >= N + 2 P */
    size_t n_bins;         /* L/2 + 1 */
    el_prep_band band;
    double dt;
    double *buffer;        /* fftw_malloc'ed, L */
    fftw_complex *spectrum;/* fftw_malloc'ed, n_bins */
    double *high_pass;     /* n_bins: mask of the low edge (NULL: no low edge) */
    double *low_pass;      /* n_bins: mask of the high edge (NULL: no high edge) */
    double *taper;         /* P: weight of padding sample k + 1 away from the data */
    fftw_plan forward, inverse;
};

static int parse_number(const char *begin, const char *end, double *out)
{
    char buf[64];
    size_t len = (size_t)(end - begin);
    if (len == 0 || len >= sizeof buf)
        return 0;
    memcpy(buf, begin, len);
    buf[len] = '\0';
    char *stop = NULL;
    errno = 0;
    double v = strtod(buf, &stop);
    if (stop != buf + len || errno == ERANGE || !isfinite(v))
        return 0;
    *out = v;
    return 1;
}

el_status el_prep_parse_band(const char *text, double dt, double *lo_hz,
                             double *hi_hz, el_error *err)
{
    if (lo_hz == NULL || hi_hz == NULL || !(dt > 0.0) || !isfinite(dt))
        return el_error_set(err, EL_ERR_INTERNAL, "el_prep_parse_band: bad arguments");
    double nyquist = 0.5 / dt;
    const char *problem = NULL;
    const char *colon = text != NULL ? strchr(text, ':') : NULL;
    double lo = 0.0, hi = 0.0;
    if (colon == NULL || strchr(colon + 1, ':') != NULL)
        problem = "is not of the form LO:HI";
    else if (!parse_number(text, colon, &lo) || !parse_number(colon + 1, colon + strlen(colon), &hi))
        problem = "is not two numbers LO:HI";
    else if (lo < 0.0)
        problem = "has a negative low edge";
    else if (hi > nyquist * (1.0 + 1e-9))
        problem = "has its high edge above the Nyquist frequency";
    else if (!(lo < fmin(hi, nyquist)))
        problem = "has its low edge not below the high edge";
    if (problem != NULL) {
        el_error_set(err, EL_ERR_USAGE, "band '%s' %s", text != NULL ? text : "", problem);
        el_error_option(err, "--band");
        el_error_hint(err, "give --band LO:HI in cycles per time unit with 0 <= LO < HI <= %g "
                      "(the Nyquist frequency of this log), e.g. --band 0:%g", nyquist,
                      0.5 * nyquist);
        return EL_ERR_USAGE;
    }
    *lo_hz = lo;
    *hi_hz = fmin(hi, nyquist);
    return EL_OK;
}

/* Raised-cosine step from 0 (f <= edge - w/2) to 1 (f >= edge + w/2). */
static double rising_edge(double f, double edge, double w)
{
    double u = (f - edge + 0.5 * w) / w;
    if (u <= 0.0)
        return 0.0;
    if (u >= 1.0)
        return 1.0;
    return 0.5 * (1.0 - cos(M_PI * u));
}

double el_prep_band_gain(const el_prep_band *band, double f_hz)
{
    double g = 1.0;
    if (band->lo_hz > 0.0)
        g *= rising_edge(f_hz, band->lo_hz, band->transition_hz);
    if (band->hi_hz < band->nyquist_hz)
        g *= 1.0 - rising_edge(f_hz, band->hi_hz, band->transition_hz);
    return g;
}

/* Smallest 2^a 3^b 5^c 7^d >= n: FFTW's fast sizes. */
static size_t smooth_size(size_t n)
{
    for (size_t m = n;; m++) {
        size_t r = m;
        static const size_t primes[] = { 2, 3, 5, 7 };
        for (size_t i = 0; i < 4; i++)
            while (r % primes[i] == 0)
                r /= primes[i];
        if (r == 1)
            return m;
    }
}

el_prep_band el_prep_band_plan_band(const el_prep_band_plan *plan)
{
    return plan->band;
}

void el_prep_band_plan_destroy(el_prep_band_plan *plan)
{
    if (plan == NULL)
        return;
    if (plan->forward)
        fftw_destroy_plan(plan->forward);
    if (plan->inverse)
        fftw_destroy_plan(plan->inverse);
    fftw_free(plan->buffer);
    fftw_free(plan->spectrum);
    free(plan->high_pass);
    free(plan->low_pass);
    free(plan->taper);
    free(plan);
}

el_status el_prep_band_plan_create(size_t n_samples, double dt, double lo_hz,
                                   double hi_hz, el_prep_band_plan **plan,
                                   el_warnings *warnings, el_error *err)
{
    if (plan == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_prep_band_plan_create: no output");
    *plan = NULL;
    double nyquist = 0.5 / dt;
    if (n_samples < 3 || !(dt > 0.0) || !isfinite(dt) || !(lo_hz >= 0.0) || !(lo_hz < hi_hz)
        || !(hi_hz <= nyquist))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_prep_band_plan_create: bad size, interval or band");
    /* FFTW takes int sizes */
    if (n_samples > (size_t)(0x7fffffff / 4))
        return el_error_set(err, EL_ERR_DATA, "%zu samples are too many for the band "
                            "limit's transform", n_samples);
    el_prep_band band = { lo_hz, hi_hz, 0.0, nyquist, 0.0 };
    double window = (double)n_samples * dt;
    band.transition_hz = fmax(4.0 / window, 0.1 * (hi_hz - lo_hz));
    band.settle = 2.0 / band.transition_hz;
    double flat_lo = lo_hz > 0.0 ? lo_hz + 0.5 * band.transition_hz : 0.0;
    double flat_hi = hi_hz < nyquist ? hi_hz - 0.5 * band.transition_hz : nyquist;
    if (flat_lo > flat_hi) {
        el_error_set(err, EL_ERR_USAGE, "the band %g:%g is narrower than the window can "
                     "resolve (its edges are %g wide)", lo_hz, hi_hz, band.transition_hz);
        el_error_option(err, "--band");
        el_error_hint(err, "widen the band to at least %g, or analyse a longer window "
                      "(the resolution is 1/(window length))", band.transition_hz *
                      (lo_hz > 0.0 && hi_hz < nyquist ? 1.0 : 0.5));
        return EL_ERR_USAGE;
    }

    el_prep_band_plan *p = calloc(1, sizeof *p);
    if (p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    p->n_samples = n_samples;
    p->pad = n_samples - 1;
    p->length = smooth_size(n_samples + 2 * p->pad);
    p->n_bins = p->length / 2 + 1;
    p->band = band;
    p->dt = dt;
    p->buffer = fftw_malloc(p->length * sizeof *p->buffer);
    p->spectrum = fftw_malloc(p->n_bins * sizeof *p->spectrum);
    int has_lo = lo_hz > 0.0, has_hi = hi_hz < nyquist;
    p->high_pass = has_lo ? malloc(p->n_bins * sizeof *p->high_pass) : NULL;
    p->low_pass = has_hi ? malloc(p->n_bins * sizeof *p->low_pass) : NULL;
    p->taper = malloc(p->pad * sizeof *p->taper);
    if (!p->buffer || !p->spectrum || (has_lo && !p->high_pass) || (has_hi && !p->low_pass)
        || !p->taper) {
        el_prep_band_plan_destroy(p);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    for (size_t k = 0; k < p->n_bins; k++) {
        double f = (double)k / ((double)p->length * dt);
        if (has_lo)
            p->high_pass[k] = rising_edge(f, lo_hz, band.transition_hz);
        if (has_hi)
            p->low_pass[k] = 1.0 - rising_edge(f, hi_hz, band.transition_hz);
    }
    /* inner half of the padding kept whole (the filter's response near the
     * data sees the reflection), outer half brought down to zero */
    size_t inner = p->pad / 2, outer = p->pad - inner;
    for (size_t k = 0; k < p->pad; k++)
        p->taper[k] = k < inner ? 1.0
            : 0.5 * (1.0 + cos(M_PI * (double)(k - inner + 1) / (double)(outer + 1)));
    p->forward = fftw_plan_dft_r2c_1d((int)p->length, p->buffer, p->spectrum, FFTW_ESTIMATE);
    p->inverse = fftw_plan_dft_c2r_1d((int)p->length, p->spectrum, p->buffer, FFTW_ESTIMATE);
    if (p->forward == NULL || p->inverse == NULL) {
        el_prep_band_plan_destroy(p);
        return el_error_set(err, EL_ERR_NUMERIC, "FFTW could not plan a transform of %zu "
                            "samples", n_samples);
    }
    if (2.0 * band.settle > 0.2 * window
        && el_warnings_add(warnings, "--band %g:%g: its edge transients last about %.3g at "
                           "each end of the %.3g-long window; widen the band or analyse a "
                           "longer window", lo_hz, hi_hz, band.settle, window) != EL_OK) {
        el_prep_band_plan_destroy(p);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    *plan = p;
    return EL_OK;
}

typedef enum { REFLECT_EVEN, REFLECT_ODD } reflection;

/* Fills the transform buffer: padding, data, padding, zeros. Even
 * reflection x[-k] = x[k] keeps the local level continuous; odd reflection
 * x[-k] = 2 x[0] - x[k] keeps the value and the slope continuous. */
static void fill_padded(el_prep_band_plan *p, const double *x, reflection kind)
{
    size_t n = p->n_samples, pad = p->pad;
    double *data = p->buffer + pad;
    memcpy(data, x, n * sizeof *x);
    double first = kind == REFLECT_ODD ? 2.0 * x[0] : 0.0;
    double last = kind == REFLECT_ODD ? 2.0 * x[n - 1] : 0.0;
    double sign = kind == REFLECT_ODD ? -1.0 : 1.0;
    for (size_t k = 1; k <= pad; k++) {
        double w = p->taper[k - 1];
        data[-(ptrdiff_t)k] = w * (first + sign * x[k]);
        data[n - 1 + k] = w * (last + sign * x[n - 1 - k]);
    }
    for (size_t k = n + 2 * pad; k < p->length; k++)
        p->buffer[k] = 0.0;
}

/* One zero-phase stage: x (n samples, in place) times mask in frequency. */
static void filter_stage(el_prep_band_plan *p, double *x, const double *mask,
                         reflection kind)
{
    double scale = 1.0 / (double)p->length;   /* FFTW transforms are unnormalised */
    fill_padded(p, x, kind);
    fftw_execute(p->forward);
    for (size_t k = 0; k < p->n_bins; k++) {
        p->spectrum[k][0] *= mask[k] * scale;
        p->spectrum[k][1] *= mask[k] * scale;
    }
    fftw_execute(p->inverse);
    memcpy(x, p->buffer + p->pad, p->n_samples * sizeof *x);
}

static double mean_of(const double *x, size_t n)
{
    double m = 0.0;
    for (size_t k = 0; k < n; k++)
        m += x[k];
    return m / (double)n;
}

el_status el_prep_band_apply(el_prep_band_plan *plan, el_series *series, el_error *err)
{
    if (plan == NULL || series == NULL || series->values == NULL
        || series->n_samples != plan->n_samples)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_prep_band_apply: series does not match the plan");
    size_t n = plan->n_samples;
    for (size_t c = 0; c < series->n_channels; c++) {
        double *x = series->values + c * n;
        double mean = mean_of(x, n);
        for (size_t k = 0; k < n; k++)
            x[k] -= mean;
        /* The two edges are applied as two stages, each with the padding
         * whose edge error falls where its mask does not look: removing
         * slow motion needs the local level continuous at the ends (even
         * reflection: odd reflection would put a step of level 2 x[0]
         * there, which a high-pass turns into a transient as large as the
         * signal); removing fast motion needs value and slope continuous
         * (odd reflection: an even reflection's kink spreads over every
         * frequency). The product of the two masks is the band's mask. */
        if (plan->high_pass != NULL)
            filter_stage(plan, x, plan->high_pass, REFLECT_EVEN);
        if (plan->low_pass != NULL)
            filter_stage(plan, x, plan->low_pass, REFLECT_ODD);
        double out_mean = mean_of(x, n);
        for (size_t k = 0; k < n; k++)
            x[k] += mean - out_mean;
    }
    return EL_OK;
}

/* ---- band edges near modes ------------------------------------------------ */

el_status el_prep_band_check_modes(const el_prep_band *band, const el_modes *modes,
                                   el_warnings *warnings, size_t *n_flagged,
                                   el_error *err)
{
    if (n_flagged != NULL)
        *n_flagged = 0;
    if (band == NULL || modes == NULL || (modes->n_modes > 0 && modes->modes == NULL))
        return el_error_set(err, EL_ERR_INTERNAL, "el_prep_band_check_modes: missing argument");
    int has_lo = band->lo_hz > 0.0, has_hi = band->hi_hz < band->nyquist_hz;
    size_t count = 0;
    for (size_t i = 0; i < modes->n_modes; i++) {
        const el_mode *m = &modes->modes[i];
        if (m->instantaneous)
            continue;
        el_status st = EL_OK;
        if (m->at_nyquist) {
            if (has_hi)
                st = el_warnings_add(warnings, "a mode at the Nyquist frequency %g lies above "
                                     "--band %g:%g: it may be an artefact of the band limit; "
                                     "look at it with a wider band", band->nyquist_hz,
                                     band->lo_hz, band->hi_hz);
            count += has_hi;
            if (st != EL_OK)
                return el_error_set(err, st, "out of memory");
            continue;
        }
        double f = m->frequency_hz;
        double b = fabs(m->lambda_re) / (2.0 * M_PI);
        double reach = 0.5 * band->transition_hz + fmax(4.0 * b, 0.1 * f);
        double edge = NAN;
        if (has_lo && f - band->lo_hz < reach)
            edge = band->lo_hz;
        else if (has_hi && band->hi_hz - f < reach)
            edge = band->hi_hz;
        if (isnan(edge))
            continue;
        count++;
        int outside = f < band->lo_hz || f > band->hi_hz;
        if (m->pair)
            st = el_warnings_add(warnings, "the mode at %.4g (damping ratio %.3g) lies %s the "
                                 "--band edge %g: the band limit reshapes its peak, so its "
                                 "frequency and damping are biased; widen --band", f,
                                 m->damping_ratio, outside ? "outside" : "close to", edge);
        else
            st = el_warnings_add(warnings, "the non-oscillatory mode (rate %.4g) reaches the "
                                 "--band edge %g: the band limit distorts slow motion, so "
                                 "its rate is biased; lower LO (0 keeps slow motion)",
                                 m->lambda_re, edge);
        if (st != EL_OK)
            return el_error_set(err, st, "out of memory");
    }
    if (n_flagged != NULL)
        *n_flagged = count;
    return EL_OK;
}
