/* el_validate: model validation (one-step R^2, free run, Ljung-Box
 * whiteness, residual variance) and the incomplete gamma function. */
#include "el_validate.h"

#include <float.h>
#include <stddef.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_stats.h"

/* Lags of the whiteness test summed per call of el_stats_lagged_products
 * (a multiple of its eight-lag pass; a stack array of this size). */
#define EL_VALIDATE_LAG_CHUNK 64

/* ---- distribution functions ------------------------------------------ */

/* ln Gamma(a), a > 0: Lanczos approximation with g = 7 and nine
 * coefficients (the widely published set; recalled from memory, checked
 * against scipy.special.gammaln through the gamma_q fixture). Written here
 * because libm's lgamma writes the global signgam. */
static double log_gamma(double a)
{
    static const double coef[9] = {
        0.99999999999980993, 676.5203681218851, -1259.1392167224028,
        771.32342877765313, -176.61502916214059, 12.507343278686905,
        -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7
    };
    if (a < 0.5)                 /* the series is accurate for a >= 0.5 */
        return log_gamma(a + 1.0) - log(a);
    double z = a - 1.0;
    double sum = coef[0];
    for (int i = 1; i < 9; i++)
        sum += coef[i] / (z + i);
    double t = z + 7.5;
    return 0.91893853320467274178 + (z + 0.5) * log(t) - t + log(sum);
}

/* exp(-x + a ln x - ln Gamma(a)): the common factor of both expansions. */
static double gamma_prefactor(double a, double x)
{
    return exp(-x + a * log(x) - log_gamma(a));
}

/* P(a, x) by its power series (Numerical Recipes 3rd ed., gser); converges
 * quickly for x < a + 1. */
static double gamma_p_series(double a, double x)
{
    double ap = a, term = 1.0 / a, sum = term;
    for (int i = 0; i < 100000; i++) {
        ap += 1.0;
        term *= x / ap;
        sum += term;
        if (fabs(term) < fabs(sum) * DBL_EPSILON)
            break;
    }
    return sum * gamma_prefactor(a, x);
}

/* Q(a, x) by its continued fraction, modified Lentz (Numerical Recipes
 * 3rd ed., gcf); converges quickly for x >= a + 1 and keeps full relative
 * accuracy in the far tail, where 1 - P would cancel. */
static double gamma_q_fraction(double a, double x)
{
    const double tiny = DBL_MIN / DBL_EPSILON;
    double b = x + 1.0 - a, c = 1.0 / tiny, d = 1.0 / b, h = d;
    for (int i = 1; i < 100000; i++) {
        double an = -i * (i - a);
        b += 2.0;
        d = an * d + b;
        if (fabs(d) < tiny)
            d = tiny;
        c = b + an / c;
        if (fabs(c) < tiny)
            c = tiny;
        d = 1.0 / d;
        double del = d * c;
        h *= del;
        if (fabs(del - 1.0) <= DBL_EPSILON)
            break;
    }
    return h * gamma_prefactor(a, x);
}

double el_validate_gamma_q(double a, double x)
{
    if (!(a > 0.0) || !(x >= 0.0) || isinf(a))
        return NAN;
    if (x == 0.0)
        return 1.0;
    if (isinf(x))
        return 0.0;
    if (x < a + 1.0)
        return 1.0 - gamma_p_series(a, x);
    return gamma_q_fraction(a, x);
}

double el_validate_chi2_sf(double q, double dof)
{
    if (!(dof > 0.0) || isnan(q))
        return NAN;
    if (q <= 0.0)
        return 1.0;
    return el_validate_gamma_q(0.5 * dof, 0.5 * q);
}

/* sum + the Ljung-Box terms r_k^2 / (n - k) of the lags k0 .. k0 + count
 * - 1, r_k = ck[k - k0] / c0, added in ascending k. */
static double ljung_box_add(double sum, size_t n, size_t k0, size_t count, double c0,
                            const double *ck)
{
    for (size_t j = 0; j < count; j++) {
        double r = ck[j] / c0;
        sum += r * r / (double)(n - (k0 + j));
    }
    return sum;
}

double el_validate_ljung_box(const double *e, size_t n, size_t h)
{
    if (e == NULL || h == 0 || h >= n)
        return NAN;
    double mean = 0.0;
    for (size_t t = 0; t < n; t++)
        mean += e[t];
    mean /= (double)n;
    double c0 = 0.0;
    for (size_t t = 0; t < n; t++)
        c0 += (e[t] - mean) * (e[t] - mean);
    if (!(c0 > 0.0) || !isfinite(c0))
        return NAN;
    /* The sums of the plain loop over t, bit for bit, sixteen lags a pass
     * (el_stats_lagged_products); a block at a time keeps this free of
     * allocation. */
    double ck[EL_VALIDATE_LAG_CHUNK];
    double sum = 0.0;
    for (size_t k0 = 1; k0 <= h; k0 += EL_VALIDATE_LAG_CHUNK) {
        size_t count = h + 1 - k0 < EL_VALIDATE_LAG_CHUNK ? h + 1 - k0 : EL_VALIDATE_LAG_CHUNK;
        el_stats_lagged_products(e, n, mean, k0, count, ck);
        sum = ljung_box_add(sum, n, k0, count, c0, ck);
    }
    return (double)n * ((double)n + 2.0) * sum;
}

size_t el_validate_ljung_box_lags(size_t n, size_t p)
{
    size_t cap = n / 5;
    size_t h = p + 10 > 20 ? p + 10 : 20;
    return h < cap ? h : cap;
}

/* ---- validation plan ---------------------------------------------------- */

el_status el_validation_create(size_t n_channels, size_t lags, size_t max_samples,
                               el_validation **out, el_error *err)
{
    if (out == NULL || n_channels == 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_validation_create: no output or no channels");
    *out = NULL;
    if (max_samples < lags + 2)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_validation_create: %zu samples leave no residual "
                            "with %zu lags", max_samples, lags);
    el_validation *v = calloc(1, sizeof *v);
    if (v == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    v->n_channels = n_channels;
    v->lags = lags;
    v->max_samples = max_samples;
    v->r2_one_step = malloc(n_channels * sizeof *v->r2_one_step);
    v->residual_ratio = malloc(n_channels * sizeof *v->residual_ratio);
    v->free_nrmse = malloc(n_channels * sizeof *v->free_nrmse);
    v->ljung_box_q = malloc(n_channels * sizeof *v->ljung_box_q);
    v->ljung_box_p = malloc(n_channels * sizeof *v->ljung_box_p);
    /* The streamed residual statistics: per channel the means of x and e,
     * ss_tot, ss_res, ss_e, the lag sums and a ring of the last lags + 1
     * centred residuals, stored twice (the most lags any window of this
     * plan tests). */
    v->max_lb_lags = el_validate_ljung_box_lags(max_samples, lags + 1);
    v->residual = malloc(n_channels * (5 + 3 * v->max_lb_lags + 2) * sizeof *v->residual);
    v->residual_exact = malloc(n_channels * sizeof *v->residual_exact);
    if (!v->residual_exact || !v->r2_one_step || !v->residual_ratio || !v->free_nrmse || !v->ljung_box_q
        || !v->ljung_box_p || !v->residual) {
        el_validation_destroy(v);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    el_status st = el_prediction_create_errors(n_channels, lags, max_samples, &v->prediction,
                                               err);
    if (st != EL_OK) {
        el_validation_destroy(v);
        return st;
    }
    /* The residual passes make the one-step predictions anyway: the
     * prediction's own one-step pass would repeat them (residual_passes
     * fills its one-step errors from the same sums). */
    el_prediction_skip_one_step(v->prediction, 1);
    *out = v;
    return EL_OK;
}

void el_validation_destroy(el_validation *v)
{
    if (v == NULL)
        return;
    el_prediction_destroy(v->prediction);
    free(v->r2_one_step);
    free(v->residual_ratio);
    free(v->free_nrmse);
    free(v->ljung_box_q);
    free(v->ljung_box_p);
    free(v->residual);
    free(v->residual_exact);
    free(v);
}

static const char *channel_name(const el_series *s, size_t c, char *buf, size_t size)
{
    if (s->names != NULL && s->names[c] != NULL && s->names[c][0] != '\0')
        return s->names[c];
    snprintf(buf, size, "%zu", c + 1);
    return buf;
}

/* The residual statistics of every channel from two passes of one-step
 * predictions (nothing of the window's length is stored): the first sums
 * x and e = x - prediction, the second the squares about those means and
 * the lag products of the centred residuals, each lag's terms in
 * ascending time. Per channel these are the additions, in the order, of
 * the former loops over a stored residual array and of
 * el_validate_ljung_box, so the same doubles. Fills r2_one_step,
 * residual_ratio, and the Ljung-Box c0 (= ss_e) and lag sums (h lags) in
 * v->residual. */
typedef struct {
    double *xmean, *emean, *ss_tot, *ss_res, *ss_e, *ck, *ring;
} residual_sums;

static residual_sums sums_of(el_validation *v)
{
    size_t nc = v->n_channels;
    residual_sums r;
    r.xmean = v->residual;
    r.emean = r.xmean + nc;
    r.ss_tot = r.emean + nc;
    r.ss_res = r.ss_tot + nc;
    r.ss_e = r.ss_res + nc;
    r.ck = r.ss_e + nc;                      /* nc x max_lb_lags */
    r.ring = r.ck + nc * v->max_lb_lags;     /* nc x 2 (max_lb_lags + 1) */
    return r;
}

static void residual_passes(el_validation *v, const el_model *model, const el_series *s,
                            size_t h)
{
    el_prediction *p = v->prediction;
    size_t nc = v->n_channels, n = p->one_step_count, first = p->one_step_first;
    size_t len = s->n_samples, ring = h + 1;
    residual_sums r = sums_of(v);
    for (size_t c = 0; c < nc; c++)
        r.xmean[c] = r.emean[c] = r.ss_tot[c] = r.ss_res[c] = r.ss_e[c] = 0.0;
    for (size_t c = 0; c < nc * h; c++)
        r.ck[c] = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double *xhat = el_prediction_one_step(p, model, s, v->lags + i);
        for (size_t c = 0; c < nc; c++) {
            double x = s->values[c * len + first + i];
            r.xmean[c] += x;
            r.emean[c] += x - xhat[c];
        }
    }
    for (size_t c = 0; c < nc; c++) {
        r.xmean[c] /= (double)n;
        r.emean[c] /= (double)n;
    }
    size_t slot = 0;   /* i mod ring */
    for (size_t i = 0; i < n; i++) {
        const double *xhat = el_prediction_one_step(p, model, s, v->lags + i);
        for (size_t c = 0; c < nc; c++) {
            double x = s->values[c * len + first + i];
            double e = x - xhat[c];
            r.ss_tot[c] += (x - r.xmean[c]) * (x - r.xmean[c]);
            r.ss_res[c] += e * e;
            double a = e - r.emean[c];
            r.ss_e[c] += a * a;
            /* past[slot + ring - k] is a of sample i - k: each value is
             * stored twice, ring apart, so the last h are one run */
            double *ck = r.ck + c * h, *past = r.ring + c * 2 * ring;
            const double *back = past + slot + ring;
            size_t kmax = i < h ? i : h;
            for (size_t k = 1; k <= kmax; k++)
                ck[k - 1] += a * back[-(ptrdiff_t)k];
            past[slot] = past[slot + ring] = a;
        }
        slot = slot + 1 == ring ? 0 : slot + 1;
    }
    for (size_t c = 0; c < nc; c++) {
        /* The prediction's one-step error, which it was told not to make
         * (el_prediction_skip_one_step): its sums are ss_res (its squared
         * errors, (xhat - x)^2 = (x - xhat)^2 exactly) and ss_tot (the
         * squares about the same mean, summed in the same order), so the
         * same double. */
        p->one_step_nrmse[c] = r.ss_tot[c] > 0.0 ? sqrt(r.ss_res[c] / r.ss_tot[c]) : NAN;
        /* A channel that does not vary over the residual samples has no
         * scale to compare with (the same rule as el_predict's nrmse). */
        if (!(r.ss_tot[c] > 0.0)) {
            v->r2_one_step[c] = NAN;
            v->residual_ratio[c] = NAN;
            continue;
        }
        v->r2_one_step[c] = 1.0 - r.ss_res[c] / r.ss_tot[c];
        v->residual_ratio[c] = r.ss_e[c] / r.ss_tot[c];
    }
}

/* el_validate_ljung_box of channel c's residuals from the streamed sums. */
static double streamed_ljung_box(el_validation *v, size_t c, size_t n, size_t h)
{
    residual_sums r = sums_of(v);
    if (h == 0 || h >= n)
        return NAN;
    double c0 = r.ss_e[c];
    if (!(c0 > 0.0) || !isfinite(c0))
        return NAN;
    return (double)n * ((double)n + 2.0) * ljung_box_add(0.0, n, 1, h, c0, r.ck + c * h);
}

/* Why the residuals may be correlated other than missing lags, for the
 * warning's advice ("" when nothing the tool did explains it). */
static void correlation_cause(const el_validation *v, const el_model *model, char *out,
                              size_t size)
{
    if (model->rank < model->state_dim)
        snprintf(out, size, ", which the lowered rank (%zu of %zu states: the directions "
                 "left out stay in the residuals) can cause by itself: no sign of missing "
                 "lags", model->rank, model->state_dim);
    else if (v->band_limited)
        snprintf(out, size, ", which the band limit can cause by itself (the filter colours "
                 "what the model does not explain): no sign of missing lags");
    else
        snprintf(out, size, ": add lags");
}

static el_status add_warnings(const el_validation *v, const el_model *model,
                              const el_series *s, const el_stability *stability,
                              el_warnings *w, el_error *err)
{
    char buf[32], cause[256];
    correlation_cause(v, model, cause, sizeof cause);
    el_status st = EL_OK;
    double alpha = EL_VALIDATE_WHITENESS_ALPHA / (double)v->n_channels;
    for (size_t c = 0; c < v->n_channels && st == EL_OK; c++) {
        double p = v->ljung_box_p[c];
        if (!(p < alpha))
            continue;
        const char *name = channel_name(s, c, buf, sizeof buf);
        /* below 1e-16 the tail probability carries no meaning beyond "zero" */
        if (p < 1e-16)
            st = el_warnings_add(w, "residuals strongly correlated (Ljung-Box p < 1e-16 "
                                 "on channel %s)%s", name, cause);
        else
            st = el_warnings_add(w, "residuals strongly correlated (Ljung-Box p = %.2g "
                                 "on channel %s)%s", p, name, cause);
    }
    if (st == EL_OK && v->free_diverges && stability != NULL && *stability == EL_STABLE)
        st = el_warnings_add(w, "free run diverges although the verdict is stable: "
                             "do not trust it");
    for (size_t c = 0; c < v->n_channels && st == EL_OK; c++) {
        double ratio = v->residual_ratio[c];
        if (ratio > EL_VALIDATE_EXPLAINS_LITTLE)
            st = el_warnings_add(w, "residual variance is %.0f%% of the signal on channel "
                                 "%s: the model explains little", 100.0 * ratio,
                                 channel_name(s, c, buf, sizeof buf));
    }
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory");
    return EL_OK;
}

void el_validation_set_band_limited(el_validation *v, int band_limited)
{
    if (v != NULL)
        v->band_limited = band_limited != 0;
}

void el_validation_set_inputs(el_validation *v, const el_series *inputs)
{
    if (v != NULL)
        el_prediction_set_inputs(v->prediction, inputs);
}

el_status el_validation_run(el_validation *v, const el_model *model,
                            const el_series *series, const el_stability *stability,
                            el_warnings *warnings, el_error *err)
{
    if (v == NULL || model == NULL || series == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_validation_run: missing argument");
    el_status st = el_prediction_run(v->prediction, model, series, err);
    if (st != EL_OK)
        return st;
    const el_prediction *p = v->prediction;
    size_t n = p->one_step_count;
    v->n_residuals = n;
    v->lb_params = v->lags + 1;
    v->lb_lags = el_validate_ljung_box_lags(n, v->lb_params);
    residual_passes(v, model, series, v->lb_lags);
    v->lb_tested = v->lb_lags > v->lb_params;
    v->lb_dof = v->lb_tested ? v->lb_lags - v->lb_params : 0;
    v->free_diverges = p->free_diverged;
    v->residuals_white = 1;
    v->explains_little = 0;
    double alpha = EL_VALIDATE_WHITENESS_ALPHA / (double)v->n_channels;
    for (size_t c = 0; c < v->n_channels; c++) {
        v->free_nrmse[c] = p->free_nrmse[c];
        if (v->free_nrmse[c] > EL_VALIDATE_DIVERGENCE_NRMSE)
            v->free_diverges = 1;
        v->ljung_box_q[c] = NAN;
        v->ljung_box_p[c] = NAN;
        v->residual_exact[c] = v->residual_ratio[c] <= EL_VALIDATE_EXACT_RMS * EL_VALIDATE_EXACT_RMS;
        if (v->lb_tested && !v->residual_exact[c]) {
            double q = streamed_ljung_box(v, c, n, v->lb_lags);
            if (!isnan(q)) {
                v->ljung_box_q[c] = q;
                v->ljung_box_p[c] = el_validate_chi2_sf(q, (double)v->lb_dof);
            }
        }
        if (v->ljung_box_p[c] < alpha)
            v->residuals_white = 0;
        if (v->residual_ratio[c] > EL_VALIDATE_EXPLAINS_LITTLE)
            v->explains_little = 1;
    }
    return add_warnings(v, model, series, stability, warnings, err);
}
