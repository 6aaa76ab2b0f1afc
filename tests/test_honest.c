/* test_honest: the honest-verdict rules of issue 10, item 7. el_dynamics
 * (no verdict from nothing: the whiteness test of the data and its rule),
 * el_cycle (harmonics with a steady envelope: a possible limit cycle), and
 * both through the whole pipeline for every --method. Sources: Ljung &
 * Box 1978 (the statistic), van der Pol 1926 (the oscillator, simulated
 * here by fourth-order Runge-Kutta), Welch 1967 (the spectra el_cycle
 * reads), Rice 1944 (the envelope of narrow-band noise). */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_assess.h"
#include "el_cycle.h"
#include "el_dynamics.h"
#include "el_linalg.h"
#include "el_rng.h"
#include "el_spectrum.h"
#include "el_validate.h"

#define T_PI 3.14159265358979323846

/* ---- helpers ---------------------------------------------------------- */

static void white(el_series *s, uint64_t stream)
{
    el_rng rng;
    el_rng_seed(&rng, 10, stream);
    for (size_t i = 0; i < s->n_samples * s->n_channels; i++)
        s->values[i] = 1.0 + el_rng_normal(&rng);
}

/* van der Pol (1926), x'' - mu (1 - x^2) x' + x = 0, by fourth-order
 * Runge-Kutta with 10 steps per sample after 50 periods of settling from
 * x = 2, v = 0; channels x and v with white sensor noise of standard
 * deviation noise_sd. */
static void van_der_pol(el_series *s, double mu, double noise_sd, uint64_t stream)
{
    el_rng rng;
    el_rng_seed(&rng, 11, stream);
    const int sub = 10;
    double h = s->dt / sub, x = 2.0, v = 0.0;
    size_t n = s->n_samples;
    long settle = (long)ceil(50.0 * 2.0 * T_PI / s->dt);
    for (long k = -settle; k < (long)n; k++) {
        for (int i = 0; i < sub; i++) {
            double k1x = v, k1v = mu * (1 - x * x) * v - x;
            double x2 = x + 0.5 * h * k1x, v2 = v + 0.5 * h * k1v;
            double k2x = v2, k2v = mu * (1 - x2 * x2) * v2 - x2;
            double x3 = x + 0.5 * h * k2x, v3 = v + 0.5 * h * k2v;
            double k3x = v3, k3v = mu * (1 - x3 * x3) * v3 - x3;
            double x4 = x + h * k3x, v4 = v + h * k3v;
            double k4x = v4, k4v = mu * (1 - x4 * x4) * v4 - x4;
            x += h / 6.0 * (k1x + 2 * k2x + 2 * k3x + k4x);
            v += h / 6.0 * (k1v + 2 * k2v + 2 * k3v + k4v);
        }
        if (k >= 0) {
            s->values[(size_t)k] = x + noise_sd * el_rng_normal(&rng);
            s->values[(size_t)k + n] = v + noise_sd * el_rng_normal(&rng);
        }
    }
}

/* Linear modes at frequencies f_hz[i] (Hz) with damping ratio zeta,
 * exactly discretised (el_discretise), two channels: the sum and the
 * difference of the modes' first states. stationary: driven by white
 * noise after a burn-in; else a ring-down from unit states. Plus white
 * sensor noise of noise_sd. */
static void linear_modes(el_series *s, size_t n_modes, const double *f_hz, double zeta,
                         int stationary, double noise_sd, uint64_t stream)
{
    enum { NS = 6 };
    size_t n = 2 * n_modes;
    double a[NS * NS] = {0}, q[NS * NS] = {0};
    for (size_t m = 0; m < n_modes; m++) {
        double w = 2 * T_PI * f_hz[m], re = -zeta * w, im = w * sqrt(1 - zeta * zeta);
        size_t o = 2 * m;
        a[o + o * n] = a[o + 1 + (o + 1) * n] = re;
        a[o + (o + 1) * n] = im;
        a[o + 1 + o * n] = -im;
        q[o + 1 + (o + 1) * n] = -2.0 * re;
    }
    double ad[NS * NS], qd[NS * NS], g[NS * NS];
    double work[32 * NS * NS + 2 * NS + 64];
    int iwork[2 * NS + 2];
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_discretise(n, a, q, s->dt, ad, qd, g, work, iwork, &err), EL_OK);
    el_rng rng;
    el_rng_seed(&rng, 12, stream);
    double x[NS], xn[NS];
    for (size_t i = 0; i < n; i++)
        x[i] = stationary ? 0.0 : 1.0;
    long burn = stationary ? (long)ceil(10.0 / (zeta * 2 * T_PI * f_hz[0]) / s->dt) : 0;
    size_t N = s->n_samples;
    for (long k = -burn; k < (long)N; k++) {
        if (k >= 0) {
            double sum = 0.0, diff = 0.0;
            for (size_t m = 0; m < n_modes; m++) {
                sum += x[2 * m];
                diff += (m % 2 ? -1.0 : 1.0) * x[2 * m];
            }
            s->values[(size_t)k] = sum + noise_sd * el_rng_normal(&rng);
            s->values[(size_t)k + N] = diff + noise_sd * el_rng_normal(&rng);
        }
        double z[NS];
        for (size_t j = 0; j < n; j++)
            z[j] = stationary ? el_rng_normal(&rng) : 0.0;
        for (size_t i = 0; i < n; i++) {
            double v = 0.0;
            for (size_t j = 0; j < n; j++)
                v += ad[i + j * n] * x[j] + g[i + j * n] * z[j];
            xn[i] = v;
        }
        memcpy(x, xn, n * sizeof *x);
    }
}

static void cycle_of(const el_series *s, el_cycle *c)
{
    el_spectra sp;
    el_peaks pk;
    memset(&sp, 0, sizeof sp);
    memset(&pk, 0, sizeof pk);
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_spectrum_compute(s, NULL, &sp, &pk, NULL, &err), EL_OK);
    assert_int_equal(el_cycle_detect(s, &pk, c, &err), EL_OK);
    el_spectra_free(&sp);
    el_peaks_free(&pk);
}

static int has_warning(const el_warnings *w, const char *needle)
{
    for (size_t i = 0; i < w->count; i++)
        if (strstr(w->items[i], needle) != NULL)
            return 1;
    return 0;
}

/* ---- el_dynamics -------------------------------------------------------- */

/* The alternating series +1, -1, ... has sample autocorrelation r_k =
 * (-1)^k (n - k) / n exactly (mean 0, divisor-n autocovariance), so
 * Ljung & Box's Q = n (n + 2) sum_{k=1}^{h} r_k^2 / (n - k) has a closed
 * form; h = min(20, n / 5) = 20 here. Tolerance 1e-12 relative: a sum of
 * 20 terms in double. */
static void test_dynamics_closed_form(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 400, 1, 1.0);
    for (size_t k = 0; k < 400; k++)
        s.values[k] = k % 2 ? -1.0 : 1.0;
    el_dynamics_test t;
    assert_int_equal(el_dynamics_test_series(&s, &t, NULL), EL_OK);
    double n = 400.0, q = 0.0;
    for (size_t k = 1; k <= 20; k++) {
        double r = (n - (double)k) / n;
        q += r * r / (n - (double)k);
    }
    q *= n * (n + 2.0);
    assert_int_equal(t.lags, 20);
    assert_int_equal(t.tested, 1);
    assert_close(t.q, q, 1e-12, 0.0);
    assert_close(t.p_min, el_validate_chi2_sf(q, 20.0), 1e-12, 0.0);
    assert_int_equal(t.white, 0);
    el_series_free(&s);
}

/* White noise: no channel rejects (the family level is 0.01, so this
 * seed's draw passes with probability 0.99; the seed is fixed) and
 * p_family is the Bonferroni product, capped at 1. A constant channel is
 * not tested. An AR(1) channel with phi = 0.5 beside white ones is
 * found: Q is about n sum phi^(2k) = 1000 / 3 (Box & Jenkins), far
 * beyond any chi-square quantile with 20 degrees of freedom. */
static void test_dynamics_white_and_ar(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 1000, 3, 0.01);
    white(&s, 1);
    for (size_t k = 0; k < 1000; k++)
        s.values[2000 + k] = 4.0;
    el_dynamics_test t;
    assert_int_equal(el_dynamics_test_series(&s, &t, NULL), EL_OK);
    assert_int_equal(t.n_tested, 2);
    assert_int_equal(t.white, 1);
    assert_close(t.p_family, fmin(1.0, 2.0 * t.p_min), 1e-15, 0.0);
    assert_int_equal(el_dynamics_none(&t, 0.01), 1);
    /* the R2 gate: a model that explains a fifth or more is never "none" */
    assert_int_equal(el_dynamics_none(&t, EL_DYNAMICS_R2_MAX), 0);
    assert_int_equal(el_dynamics_none(&t, NAN), 1);
    el_rng rng;
    el_rng_seed(&rng, 13, 0);
    double x = 0.0;
    for (size_t k = 0; k < 1000; k++) {
        x = 0.5 * x + el_rng_normal(&rng);
        s.values[2000 + k] = x;
    }
    assert_int_equal(el_dynamics_test_series(&s, &t, NULL), EL_OK);
    assert_int_equal(t.n_tested, 3);
    assert_int_equal(t.channel, 2);
    assert_true(t.q > 200.0);
    assert_int_equal(t.white, 0);
    assert_int_equal(el_dynamics_none(&t, 0.01), 0);
    el_series_free(&s);
}

/* Too short for any lag (n / 5 = 0) or all constant: not tested, never
 * "none". */
static void test_dynamics_untestable(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 4, 1, 1.0);
    white(&s, 2);
    el_dynamics_test t;
    assert_int_equal(el_dynamics_test_series(&s, &t, NULL), EL_OK);
    assert_int_equal(t.tested, 0);
    assert_int_equal(el_dynamics_none(&t, 0.0), 0);
    el_series_free(&s);
    el_test_series_alloc(&s, 100, 2, 1.0);
    for (size_t i = 0; i < 200; i++)
        s.values[i] = 3.0;
    assert_int_equal(el_dynamics_test_series(&s, &t, NULL), EL_OK);
    assert_int_equal(t.tested, 0);
    assert_int_equal(el_dynamics_none(&t, 0.0), 0);
    assert_int_equal(el_dynamics_test_series(NULL, &t, NULL), EL_ERR_INTERNAL);
    el_series_free(&s);
}

/* Each channel's figures (el_dynamics_test_channels, the JSON's
 * whiteness.channels): the alternating channel's Q is the closed form of
 * test_dynamics_closed_form (Ljung & Box 1978), the constant channel is
 * not tested (NaN), and the smallest p over the channels, its channel and
 * the family figures equal what el_dynamics_test_series reports. The
 * white channel's Q is recomputed by el_validate_ljung_box, the statistic
 * the test calls. Tolerance 1e-12 relative: a sum of 20 terms in double. */
static void test_dynamics_channels(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 400, 3, 1.0);
    white(&s, 21);
    for (size_t k = 0; k < 400; k++) {
        s.values[k] = k % 2 ? -1.0 : 1.0;
        s.values[800 + k] = 2.5;
    }
    double q[3], p[3];
    el_dynamics_test t, u;
    assert_int_equal(el_dynamics_test_channels(&s, &t, q, p, NULL), EL_OK);
    assert_int_equal(el_dynamics_test_series(&s, &u, NULL), EL_OK);
    double n = 400.0, q0 = 0.0;
    for (size_t k = 1; k <= 20; k++) {
        double r = (n - (double)k) / n;
        q0 += r * r / (n - (double)k);
    }
    q0 *= n * (n + 2.0);
    assert_close(q[0], q0, 1e-12, 0.0);
    assert_close(p[0], el_validate_chi2_sf(q0, 20.0), 1e-12, 0.0);
    assert_close(q[1], el_validate_ljung_box(s.values + 400, 400, 20), 1e-12, 0.0);
    assert_close(p[1], el_validate_chi2_sf(q[1], 20.0), 1e-12, 0.0);
    assert_true(isnan(q[2]) && isnan(p[2]));
    assert_int_equal(t.n_tested, 2);
    assert_int_equal(t.channel, u.channel);
    assert_close(t.p_min, fmin(p[0], p[1]), 0.0, 0.0);
    assert_close(t.p_family, u.p_family, 0.0, 0.0);
    assert_int_equal(t.white, u.white);
    assert_int_equal(el_dynamics_test_channels(&s, &t, q, NULL, NULL), EL_ERR_INTERNAL);
    el_series_free(&s);
}

/* ---- el_cycle --------------------------------------------------------- */

/* van der Pol at mu = 1: period 6.6633 (the classic value for mu = 1,
 * recalled from memory), so f0 = 0.15008 Hz; the equation is unchanged by
 * x -> -x, so its waveform has odd harmonics only: peaks at 3 f0 and 5 f0,
 * none at 2 f0 or 4 f0. The frequency is checked within one bin (the peak
 * is known to half a bin, the recalled period to four digits); the
 * envelope of a periodic wave over 3-period windows varies by a few per
 * cent at most (EL_CYCLE_WINDOW_PERIODS), the sensor noise adds little. */
static void test_cycle_van_der_pol(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 6000, 2, 0.05);
    van_der_pol(&s, 1.0, 0.02, 3);
    el_cycle c;
    cycle_of(&s, &c);
    assert_int_equal(c.tested, 1);
    assert_int_equal(c.flagged, 1);
    double df = 1.0 / (1024.0 * 0.05);   /* Welch segment 1024 = largest 2^k <= n/4 */
    assert_close(c.fundamental_hz, 1.0 / 6.6633, 0.0, df);
    assert_true(c.harmonics & (1u << 3));
    assert_true(c.harmonics & (1u << 5));
    assert_false(c.harmonics & (1u << 2));
    assert_false(c.harmonics & (1u << 4));
    assert_true(c.envelope_cv < 0.05);
    char text[64];
    el_cycle_orders_text(&c, text, sizeof text);
    assert_string_equal(text, "1, 3 and 5");
    el_series_free(&s);
}

/* A steady periodic wave built by hand: sin + 0.3 sin(3 w t), 40 periods
 * of 100 samples, no noise. The RMS over any window of exactly 3 periods
 * is sqrt((1 + 0.09) / 2) (Parseval), so with windows of exactly 300
 * samples the coefficient of variation is at rounding level (1e-12). */
static void test_cycle_periodic_closed_form(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 4000, 1, 0.01);
    for (size_t k = 0; k < 4000; k++) {
        double ph = 2 * T_PI * (double)k / 100.0;
        s.values[k] = sin(ph) + 0.3 * sin(3 * ph);
    }
    el_cycle c;
    cycle_of(&s, &c);
    assert_int_equal(c.flagged, 1);
    assert_close(c.fundamental_hz, 1.0, 0.0, 1.0 / (1024 * 0.01));
    if (c.window_samples == 300)
        assert_close(c.envelope_cv, 0.0, 0.0, 1e-12);
    assert_true(c.envelope_cv < 0.01);
    assert_int_equal(c.n_harmonics, 1);
    el_series_free(&s);
}

/* A lightly damped linear mode at the same fundamental, driven by noise:
 * one resonance, no harmonics, no flag. */
static void test_cycle_linear_noise_driven(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 6000, 2, 0.05);
    double f[1] = {1.0 / 6.6633};
    linear_modes(&s, 1, f, 0.02, 1, 0.05, 4);
    el_cycle c;
    cycle_of(&s, &c);
    assert_int_equal(c.flagged, 0);
    el_series_free(&s);
}

/* Linear modes at f0 and 3 f0 (noise-driven) and at f0, 3 f0, 5 f0 (a
 * ring-down) have peaks at whole multiples, like a limit cycle; their
 * envelopes are not steady (Rayleigh-like for noise, decaying for the
 * ring-down), so the envelope test keeps the flag off: these fail
 * without it. */
static void test_cycle_envelope_rule(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 12000, 2, 0.05);
    double f[3] = {0.15, 0.45, 0.75};
    linear_modes(&s, 2, f, 0.02, 1, 0.01, 5);
    el_cycle c;
    cycle_of(&s, &c);
    assert_int_equal(c.tested, 1);
    assert_true(c.harmonics & (1u << 3));
    assert_true(c.envelope_cv > EL_CYCLE_ENVELOPE_CV_MAX);
    assert_int_equal(c.flagged, 0);
    el_series_free(&s);
    el_test_series_alloc(&s, 4000, 2, 0.05);
    linear_modes(&s, 3, f, 0.01, 0, 0.001, 6);
    cycle_of(&s, &c);
    assert_int_equal(c.tested, 1);
    assert_true(c.n_harmonics >= 1);
    assert_int_equal(c.flagged, 0);
    el_series_free(&s);
}

/* ---- the pipeline ------------------------------------------------------ */

static el_status assess(const el_series *src, int method, size_t boot, el_assessment *r,
                        el_error *err)
{
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.path = "simulated";
    opt.boot.replicates = boot;
    opt.boot.threads = 1;
    opt.method_auto = method < 0;
    if (method >= 0)
        opt.fit.method = (el_method)method;
    memset(r, 0, sizeof *r);
    el_test_series_alloc(&r->series, src->n_samples, src->n_channels, src->dt);
    memcpy(r->series.values, src->values, src->n_samples * src->n_channels * sizeof(double));
    el_error_clear(err);
    return el_assess_analyse(&opt, r, err);
}

/* White noise, 3 channels: every estimator has its word and type
 * withheld with cause no_dynamics and the warning (ls reported STABLE
 * before the rule); iv and ssi refuse to fit on their own (nothing
 * predicts the state), and least squares stands in for them to report it,
 * as for auto, whose estimators refuse. With the bootstrap for ls and
 * auto, as the default runs. */
static void test_pipeline_white_withheld(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 2000, 3, 0.01);
    white(&s, 7);
    static const int methods[] = {EL_METHOD_LS, EL_METHOD_FB, EL_METHOD_TLS, EL_METHOD_IV,
                                  EL_METHOD_SSI, EL_METHOD_HANKEL, -1};
    for (size_t i = 0; i < sizeof methods / sizeof methods[0]; i++) {
        el_assessment r;
        el_error err;
        size_t boot = methods[i] == EL_METHOD_LS || methods[i] < 0 ? 200 : 0;
        el_status st = assess(&s, methods[i], boot, &r, &err);
        assert_int_equal(st, EL_OK);
        assert_int_equal(r.verdict.cause, EL_CAUSE_NO_DYNAMICS);
        assert_int_equal(r.verdict.stability, EL_UNDECIDED);
        assert_string_equal(r.verdict.type, EL_VERDICT_TYPE_WITHHELD);
        assert_true(has_warning(&r.warnings, "cannot be told from white noise"));
        if (methods[i] == EL_METHOD_IV || methods[i] == EL_METHOD_SSI)
            assert_int_equal(r.method_stood_in, 1);
        el_assessment_free(&r);
    }
    el_series_free(&s);
}

/* No verdict from nothing for every explicit --method (issue 10, item
 * 7): white noise on 1, 2 and 6 channels gives a result, never an error,
 * with the word and type withheld (cause no_dynamics). An estimator that
 * refuses (iv and ssi always do on white data: nothing predicts the
 * state) has least squares stand in, labelled: method_stood_in, the
 * refused method named, model.method ls and a warning that says why.
 * Before the stand-in iv and ssi returned EL_ERR_DATA here. */
static void test_pipeline_explicit_methods_white(void **state)
{
    (void)state;
    static const size_t channels[] = {1, 2, 6};
    static const el_method methods[] = {EL_METHOD_LS, EL_METHOD_FB, EL_METHOD_TLS,
                                        EL_METHOD_IV, EL_METHOD_SSI, EL_METHOD_HANKEL};
    for (size_t c = 0; c < 3; c++) {
        el_series s;
        el_test_series_alloc(&s, 2000, channels[c], 0.01);
        white(&s, 30 + c);
        for (size_t i = 0; i < sizeof methods / sizeof methods[0]; i++) {
            el_assessment r;
            el_error err;
            assert_int_equal(assess(&s, (int)methods[i], 0, &r, &err), EL_OK);
            assert_int_equal(r.verdict.cause, EL_CAUSE_NO_DYNAMICS);
            assert_int_equal(r.verdict.stability, EL_UNDECIDED);
            assert_string_equal(r.verdict.type, EL_VERDICT_TYPE_WITHHELD);
            if (methods[i] == EL_METHOD_IV || methods[i] == EL_METHOD_SSI)
                assert_int_equal(r.method_stood_in, 1);
            if (r.method_stood_in) {
                assert_int_equal(r.method_refused, methods[i]);
                assert_int_equal(r.model.method, EL_METHOD_LS);
                assert_true(has_warning(&r.warnings, "could not fit a model: the data "
                                                     "shows no dynamics to fit"));
            } else {
                assert_int_equal(r.model.method, methods[i]);
            }
            el_assessment_free(&r);
        }
        el_series_free(&s);
    }
}

/* The stand-in answers only "there is nothing to judge": a white output
 * that a measured input drives one sample later (y[k+1] = 2 u[k] + noise)
 * passes the whiteness test but least squares explains it (one-step R2
 * near 0.98, far above EL_DYNAMICS_R2_MAX), so a verdict would come from
 * an estimator the user did not ask for. --method iv keeps its own error
 * there, as before; --method ls gives its verdict. */
static void test_pipeline_stand_in_needs_no_dynamics(void **state)
{
    (void)state;
    el_rng rng;
    el_rng_seed(&rng, 31, 0);
    el_series y;
    el_test_series_alloc(&y, 3000, 1, 1.0);
    double *u = calloc(3000, sizeof *u);
    assert_non_null(u);
    for (size_t k = 0; k < 3000; k++)
        u[k] = el_rng_normal(&rng);
    for (size_t k = 0; k < 3000; k++)
        y.values[k] = (k > 0 ? 2.0 * u[k - 1] : 0.0) + 0.3 * el_rng_normal(&rng);
    for (int m = 0; m < 2; m++) {
        el_assess_options opt;
        el_assess_defaults(&opt);
        opt.path = "simulated";
        opt.boot.replicates = 0;
        opt.method_auto = 0;
        opt.fit.method = m == 0 ? EL_METHOD_IV : EL_METHOD_LS;
        el_assessment r;
        memset(&r, 0, sizeof r);
        el_test_series_alloc(&r.series, 3000, 1, 1.0);
        memcpy(r.series.values, y.values, 3000 * sizeof(double));
        el_test_series_alloc(&r.inputs, 3000, 1, 1.0);
        memcpy(r.inputs.values, u, 3000 * sizeof(double));
        r.has_inputs = 1;
        el_error err;
        el_error_clear(&err);
        el_status st = el_assess_analyse(&opt, &r, &err);
        assert_int_equal(r.dynamics.white, 1);
        if (m == 0) {
            assert_int_not_equal(st, EL_OK);
            assert_non_null(strstr(err.message, "iv"));
        } else {
            assert_int_equal(st, EL_OK);
            assert_true(r.model.fit_r2 > EL_DYNAMICS_R2_MAX);
            assert_int_not_equal(r.verdict.cause, EL_CAUSE_NO_DYNAMICS);
        }
        assert_int_equal(r.method_stood_in, 0);
        el_assessment_free(&r);
    }
    free(u);
    el_series_free(&y);
}

/* Real dynamics at low SNR: a damped oscillator (zeta 0.05) driven by
 * noise, 10 dB sensor noise (a tenth of the signal's variance), and a slow
 * overdamped process close to a random walk (time constant 2,000 samples
 * in a log of 4,000): neither is withheld, with ls or auto. */
static void test_pipeline_dynamics_kept(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 4000, 2, 0.05);
    double f[1] = {0.5};
    linear_modes(&s, 1, f, 0.05, 1, 0.0, 8);
    el_rng rng;
    el_rng_seed(&rng, 14, 0);
    for (size_t c = 0; c < 2; c++) {
        double ss = 0.0;
        for (size_t k = 0; k < 4000; k++)
            ss += s.values[c * 4000 + k] * s.values[c * 4000 + k];
        double sd = sqrt(ss / 4000.0 / 10.0);
        for (size_t k = 0; k < 4000; k++)
            s.values[c * 4000 + k] += sd * el_rng_normal(&rng);
    }
    el_series slow;
    el_test_series_alloc(&slow, 4000, 1, 1.0);
    double x = 0.0, phi = exp(-1.0 / 2000.0);
    for (size_t k = 0; k < 4000; k++) {
        x = phi * x + el_rng_normal(&rng);
        slow.values[k] = x + 0.3 * el_rng_normal(&rng);
    }
    const el_series *logs[2] = {&s, &slow};
    for (size_t l = 0; l < 2; l++)
        for (int m = -1; m <= EL_METHOD_LS; m++) {
            el_assessment r;
            el_error err;
            assert_int_equal(assess(logs[l], m, 0, &r, &err), EL_OK);
            assert_int_equal(r.dynamics.white, 0);
            assert_int_not_equal(r.verdict.cause, EL_CAUSE_NO_DYNAMICS);
            assert_string_not_equal(r.verdict.type, EL_VERDICT_TYPE_WITHHELD);
            assert_false(has_warning(&r.warnings, "white noise"));
            el_assessment_free(&r);
        }
    el_series_free(&s);
    el_series_free(&slow);
}

/* The limit-cycle warning through the pipeline: van der Pol (mu 1.5)
 * gets it, the noise-driven linear mode at the same fundamental does not. */
static void test_pipeline_cycle_warning(void **state)
{
    (void)state;
    el_series s;
    el_test_series_alloc(&s, 6000, 2, 0.05);
    van_der_pol(&s, 1.5, 0.02, 9);
    el_assessment r;
    el_error err;
    assert_int_equal(assess(&s, -1, 0, &r, &err), EL_OK);
    assert_int_equal(r.cycle.flagged, 1);
    assert_true(has_warning(&r.warnings, "possible sustained nonlinear oscillation: a "
                                         "linear verdict does not describe it"));
    el_assessment_free(&r);
    double f[1] = {1.0 / 7.0};
    linear_modes(&s, 1, f, 0.02, 1, 0.05, 10);
    assert_int_equal(assess(&s, -1, 0, &r, &err), EL_OK);
    assert_int_equal(r.cycle.flagged, 0);
    assert_false(has_warning(&r.warnings, "sustained nonlinear oscillation"));
    el_assessment_free(&r);
    el_series_free(&s);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_dynamics_closed_form),
        cmocka_unit_test(test_dynamics_white_and_ar),
        cmocka_unit_test(test_dynamics_untestable),
        cmocka_unit_test(test_dynamics_channels),
        cmocka_unit_test(test_cycle_van_der_pol),
        cmocka_unit_test(test_cycle_periodic_closed_form),
        cmocka_unit_test(test_cycle_linear_noise_driven),
        cmocka_unit_test(test_cycle_envelope_rule),
        cmocka_unit_test(test_pipeline_white_withheld),
        cmocka_unit_test(test_pipeline_explicit_methods_white),
        cmocka_unit_test(test_pipeline_stand_in_needs_no_dynamics),
        cmocka_unit_test(test_pipeline_dynamics_kept),
        cmocka_unit_test(test_pipeline_cycle_warning),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
