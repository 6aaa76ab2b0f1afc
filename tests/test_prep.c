/* Tests of el_prep: detrending against numpy.polyfit
 * (tests/data/make_validate_fixture.py) and least-squares identities; the
 * zero-phase band limit against closed forms (raised-cosine mask values,
 * a sinusoid passed or removed, Parseval's variance of band-limited white
 * noise) and its exact symmetries (time reversal, linearity, the mean);
 * option parsing; the warning for band edges near modes. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_fit.h"
#include "el_prep.h"
#include "el_stats.h"
#include "el_rng.h"
#include "data/validate_fixture.h"

#define COUNT(a) (sizeof(a) / sizeof((a)[0]))

static char *names2[2] = { "level", "temp" };

static el_series make_series(size_t n, size_t channels, double dt)
{
    el_series s;
    memset(&s, 0, sizeof s);
    s.n_samples = n;
    s.n_channels = channels;
    s.dt = dt;
    s.values = calloc(n * channels, sizeof(double));
    s.names = names2;
    assert_non_null(s.values);
    return s;
}

static int has_warning(const el_warnings *w, const char *text)
{
    for (size_t i = 0; i < w->count; i++)
        if (strstr(w->items[i], text) != NULL)
            return 1;
    return 0;
}

/* ---- detrend --------------------------------------------------------------- */

static void test_parse_detrend(void **state)
{
    (void)state;
    el_detrend m = EL_DETREND_NONE;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_parse_detrend("linear", &m, &err), EL_OK);
    assert_int_equal(m, EL_DETREND_LINEAR);
    assert_int_equal(el_prep_parse_detrend("mean", &m, &err), EL_OK);
    assert_int_equal(m, EL_DETREND_MEAN);
    assert_int_equal(el_prep_parse_detrend("none", &m, &err), EL_OK);
    assert_int_equal(m, EL_DETREND_NONE);
    assert_int_equal(el_prep_parse_detrend("Linear", &m, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--detrend");
    assert_true(strlen(err.hint) > 0);
    assert_int_equal(el_prep_parse_detrend(NULL, &m, &err), EL_ERR_USAGE);
    assert_int_equal(m, EL_DETREND_NONE);
    assert_string_equal(el_prep_detrend_name(EL_DETREND_LINEAR), "linear");
}

/* Linear detrend of a noisy ramp against numpy.polyfit: slope and the
 * line's value at the window centre to 1e-12 relative (both are ratios of
 * sums over 101 samples, computed in a different order: rounding ~1e-14).
 * Afterwards the residual is orthogonal to 1 and to centred time (the
 * normal equations), to 1e-12 of the data's scale. */
static void test_detrend_linear_against_polyfit(void **state)
{
    (void)state;
    size_t n = COUNT(fx_ramp);
    el_series s = make_series(n, 1, fx_ramp_dt);
    s.t0 = fx_ramp_t0;
    memcpy(s.values, fx_ramp, sizeof fx_ramp);
    double level, slope;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_detrend(&s, EL_DETREND_LINEAR, &level, &slope, &err), EL_OK);
    assert_close(slope, fx_ramp_slope, 1e-12, 0.0);
    assert_close(level, fx_ramp_level, 1e-12, 0.0);
    double s0 = 0.0, s1 = 0.0;
    for (size_t k = 0; k < n; k++) {
        s0 += s.values[k];
        s1 += ((double)k - 0.5 * (double)(n - 1)) * s.values[k];
        /* what was removed plus what is left is the data */
        double t = fx_ramp_t0 + (double)k * fx_ramp_dt;
        double tc = fx_ramp_t0 + 0.5 * (double)(n - 1) * fx_ramp_dt;
        assert_close(s.values[k] + level + slope * (t - tc), fx_ramp[k], 1e-12, 1e-12);
    }
    assert_close(s0, 0.0, 0.0, 1e-12 * (double)n * fabs(level));
    assert_close(s1, 0.0, 0.0, 1e-12 * (double)(n * n) * fabs(level));
    free(s.values);
}

/* Mean detrend: the affine fit is invariant to a constant shift per
 * channel, so Ad is unchanged and the physical operating point is level +
 * the detrended one (the contract's reading rule). Two-channel damped
 * rotation with noise; agreement to 1e-9 (two least-squares solutions of
 * the same problem: the data shift changes only rounding). */
static void test_detrend_mean_keeps_model(void **state)
{
    (void)state;
    size_t n = 400;
    el_series a = make_series(n, 2, 0.05), b = make_series(n, 2, 0.05);
    el_rng rng;
    el_rng_seed(&rng, 5, 0);
    double x = 3.0, y = 0.0;
    for (size_t k = 0; k < n; k++) {
        a.values[k] = 100.0 + x;
        a.values[n + k] = -20.0 + y;
        double nx = 0.95 * (0.9 * x - 0.3 * y) + 0.1 * el_rng_normal(&rng);
        double ny = 0.95 * (0.3 * x + 0.9 * y) + 0.1 * el_rng_normal(&rng);
        x = nx;
        y = ny;
    }
    memcpy(b.values, a.values, 2 * n * sizeof(double));
    double level[2], slope[2];
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_detrend(&b, EL_DETREND_MEAN, level, slope, &err), EL_OK);
    assert_close(slope[0], 0.0, 0.0, 0.0);
    el_fit_options opt;
    el_fit_defaults(&opt);
    el_model ma, mb;
    memset(&ma, 0, sizeof ma);
    memset(&mb, 0, sizeof mb);
    assert_int_equal(el_fit(&a, &opt, &ma, NULL, &err), EL_OK);
    assert_int_equal(el_fit(&b, &opt, &mb, NULL, &err), EL_OK);
    assert_close_array(mb.ad, ma.ad, 4, 1e-9, 1e-12);
    assert_int_equal(ma.operating_point_ok, 1);
    assert_int_equal(mb.operating_point_ok, 1);
    for (size_t c = 0; c < 2; c++)
        assert_close(level[c] + mb.operating_point[c], ma.operating_point[c], 1e-9, 1e-9);
    el_model_free(&ma);
    el_model_free(&mb);
    free(a.values);
    free(b.values);
}

static void test_detrend_none_and_errors(void **state)
{
    (void)state;
    el_series s = make_series(5, 1, 1.0);
    for (size_t k = 0; k < 5; k++)
        s.values[k] = (double)(k * k);
    double level = 9.0, slope = 9.0;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_detrend(&s, EL_DETREND_NONE, &level, &slope, &err), EL_OK);
    assert_close(level, 0.0, 0.0, 0.0);
    assert_close(slope, 0.0, 0.0, 0.0);
    assert_close(s.values[4], 16.0, 0.0, 0.0);
    assert_int_equal(el_prep_detrend(&s, (el_detrend)7, NULL, NULL, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_prep_detrend(NULL, EL_DETREND_MEAN, NULL, NULL, &err), EL_ERR_INTERNAL);
    /* mean of 0, 1, 4, 9, 16 is 6 (exact in binary) */
    assert_int_equal(el_prep_detrend(&s, EL_DETREND_MEAN, &level, NULL, &err), EL_OK);
    assert_close(level, 6.0, 0.0, 0.0);
    assert_close(s.values[0], -6.0, 0.0, 0.0);
    free(s.values);
}

/* ---- band: parsing and mask ------------------------------------------------ */

static void expect_band_error(const char *text, double dt)
{
    double lo = -7.0, hi = -7.0;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_parse_band(text, dt, &lo, &hi, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--band");
    assert_true(strlen(err.hint) > 0);
    assert_close(lo, -7.0, 0.0, 0.0);
}

static void test_parse_band(void **state)
{
    (void)state;
    double lo, hi;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_parse_band("0.5:10", 0.01, &lo, &hi, &err), EL_OK);
    assert_close(lo, 0.5, 0.0, 0.0);
    assert_close(hi, 10.0, 0.0, 0.0);
    assert_int_equal(el_prep_parse_band("0:50", 0.01, &lo, &hi, &err), EL_OK);
    /* rounding of a refined dt above the Nyquist frequency is forgiven */
    assert_int_equal(el_prep_parse_band("1:50.00000001", 0.01, &lo, &hi, &err), EL_OK);
    assert_close(hi, 50.0, 0.0, 0.0);
    expect_band_error("10:5", 0.01);
    expect_band_error("5:5", 0.01);
    expect_band_error("-1:5", 0.01);
    expect_band_error("0:60", 0.01);
    expect_band_error("abc", 0.01);
    expect_band_error("1:", 0.01);
    expect_band_error(":2", 0.01);
    expect_band_error("1:2:3", 0.01);
    expect_band_error("1:2x", 0.01);
    expect_band_error("nan:2", 0.01);
    expect_band_error(NULL, 0.01);
}

/* Closed form of the raised-cosine edge: 0 and 1 at the ends of the
 * transition, 1/2 at the edge, 0.5 (1 - cos(3 pi / 4)) = 0.85355 a quarter
 * width above it; exact to rounding (1e-15). */
static void test_band_mask(void **state)
{
    (void)state;
    el_prep_band_plan *p = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_band_plan_create(2000, 0.01, 0.5, 10.0, &p, NULL, &err), EL_OK);
    el_prep_band b = el_prep_band_plan_band(p);
    /* W = max(4 / 20 s, 0.1 * 9.5) = 0.95 */
    assert_close(b.transition_hz, 0.95, 1e-15, 0.0);
    assert_close(b.nyquist_hz, 50.0, 1e-15, 0.0);
    assert_close(b.settle, 2.0 / 0.95, 1e-15, 0.0);
    assert_close(el_prep_band_gain(&b, 0.5), 0.5, 1e-15, 0.0);
    assert_close(el_prep_band_gain(&b, 10.0), 0.5, 1e-15, 0.0);
    assert_close(el_prep_band_gain(&b, 0.5 + 0.95 / 4), 0.5 * (1 + sqrt(0.5)), 1e-15, 0.0);
    assert_close(el_prep_band_gain(&b, 5.0), 1.0, 0.0, 0.0);
    assert_close(el_prep_band_gain(&b, 0.0), 0.0, 0.0, 0.0);
    assert_close(el_prep_band_gain(&b, 0.5 - 0.95 / 2), 0.0, 0.0, 1e-15);
    assert_close(el_prep_band_gain(&b, 10.0 + 0.95 / 2), 0.0, 0.0, 1e-15);
    assert_close(el_prep_band_gain(&b, 30.0), 0.0, 0.0, 0.0);
    el_prep_band_plan_destroy(p);
}

/* ---- band: application ----------------------------------------------------- */

static el_prep_band_plan *plan_for(size_t n, double dt, double lo, double hi)
{
    el_prep_band_plan *p = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_band_plan_create(n, dt, lo, hi, &p, NULL, &err), EL_OK);
    return p;
}

static void apply(el_prep_band_plan *p, el_series *s)
{
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_band_apply(p, s, &err), EL_OK);
}

/* A sum of a slow drift (0.1 Hz), an in-band oscillation (3.1 Hz) and a
 * fast one (23 Hz) through --band 0.5:10: at least settle = 2/W from both
 * ends each component is scaled by the mask's gain at its frequency (1 for
 * 3.1 Hz, 0.015 for the drift inside the low edge's transition, 0 for
 * 23 Hz), in phase (zero phase: a delay would show as an error of 2 pi f
 * delay). Tolerance 0.02 of the unit amplitude: the truncated components'
 * spectral leakage reaches the interior below 1% (measured 0.3%). Within
 * settle of the ends the error stays below the amplitude of one component
 * (the transient the contract describes; measured 0.67). Two channels
 * share the plan. */
static void test_band_passes_and_removes(void **state)
{
    (void)state;
    size_t n = 2000;
    double dt = 0.01;
    el_series s = make_series(n, 2, dt);
    for (size_t k = 0; k < n; k++) {
        double t = (double)k * dt;
        s.values[k] = 4.0 + sin(2 * M_PI * 0.1 * t) + sin(2 * M_PI * 3.1 * t + 0.7)
            + sin(2 * M_PI * 23.0 * t + 0.2);
        s.values[n + k] = -1.0 + 0.5 * sin(2 * M_PI * 7.7 * t + 1.0);
    }
    el_prep_band_plan *p = plan_for(n, dt, 0.5, 10.0);
    el_prep_band b = el_prep_band_plan_band(p);
    double mean0 = 0.0, mean1 = 0.0;
    for (size_t k = 0; k < n; k++) {
        mean0 += s.values[k] / (double)n;
        mean1 += s.values[n + k] / (double)n;
    }
    apply(p, &s);
    size_t settle = (size_t)ceil(b.settle / dt);
    double out0 = 0.0, out1 = 0.0;
    for (size_t k = 0; k < n; k++) {
        double t = (double)k * dt;
        /* the drift lies in the low edge's transition: gain(0.1) = 0.015 */
        double want0 = mean0 + sin(2 * M_PI * 3.1 * t + 0.7)
            + el_prep_band_gain(&b, 0.1) * sin(2 * M_PI * 0.1 * t)
            + el_prep_band_gain(&b, 23.0) * sin(2 * M_PI * 23.0 * t + 0.2);
        double want1 = mean1 + 0.5 * sin(2 * M_PI * 7.7 * t + 1.0);
        int inner = k >= settle && k + settle < n;
        assert_close(s.values[k], want0, 0.0, inner ? 0.02 : 1.0);
        assert_close(s.values[n + k], want1, 0.0, inner ? 0.01 : 0.5);
        out0 += s.values[k] / (double)n;
        out1 += s.values[n + k] / (double)n;
    }
    /* the mean passes exactly (set, up to the rounding of two sums) */
    assert_close(out0, mean0, 1e-13, 0.0);
    assert_close(out1, mean1, 1e-13, 0.0);
    el_prep_band_plan_destroy(p);
    free(s.values);
}

/* Low-pass only (LO = 0): odd reflection alone; an in-band sinusoid is
 * kept everywhere to 2% and to 1e-3 beyond settle (measured 2e-4: value
 * and slope are continuous at the ends). */
static void test_band_low_pass(void **state)
{
    (void)state;
    size_t n = 2000;
    double dt = 0.01;
    el_series s = make_series(n, 1, dt);
    for (size_t k = 0; k < n; k++)
        s.values[k] = sin(2 * M_PI * 1.37 * (double)k * dt + 0.7)
            + 0.3 * sin(2 * M_PI * 31.0 * (double)k * dt);
    double mean = 0.0;
    for (size_t k = 0; k < n; k++)
        mean += s.values[k] / (double)n;
    el_prep_band_plan *p = plan_for(n, dt, 0.0, 10.0);
    el_prep_band b = el_prep_band_plan_band(p);
    apply(p, &s);
    size_t settle = (size_t)ceil(b.settle / dt);
    double m1 = 0.0;
    for (size_t k = 0; k < n; k++)
        m1 += sin(2 * M_PI * 1.37 * (double)k * dt + 0.7) / (double)n;
    for (size_t k = 0; k < n; k++) {
        double want = sin(2 * M_PI * 1.37 * (double)k * dt + 0.7) - m1 + mean;
        int inner = k >= settle && k + settle < n;
        assert_close(s.values[k], want, 0.0, inner ? 1e-3 : 0.3);
    }
    el_prep_band_plan_destroy(p);
    free(s.values);
}

/* Exact properties of a zero-phase linear filter with symmetric edge
 * handling, to rounding (1e-12 of the data's scale): reversing time in
 * the input reverses the output; the filter is linear; 0:Nyquist is the
 * identity. */
static void test_band_symmetries(void **state)
{
    (void)state;
    size_t n = 777;
    double dt = 0.02;
    el_series a = make_series(n, 1, dt), r = make_series(n, 1, dt),
              b = make_series(n, 1, dt), c = make_series(n, 1, dt);
    el_rng rng;
    el_rng_seed(&rng, 99, 0);
    for (size_t k = 0; k < n; k++) {
        a.values[k] = 3.0 + el_rng_normal(&rng);
        b.values[k] = el_rng_normal(&rng) + 0.01 * (double)k;
    }
    for (size_t k = 0; k < n; k++) {
        r.values[n - 1 - k] = a.values[k];
        c.values[k] = 2.0 * a.values[k] - 3.0 * b.values[k];
    }
    el_prep_band_plan *p = plan_for(n, dt, 1.0, 12.0);
    apply(p, &a);
    apply(p, &r);
    apply(p, &b);
    apply(p, &c);
    for (size_t k = 0; k < n; k++) {
        assert_close(r.values[n - 1 - k], a.values[k], 0.0, 1e-12);
        assert_close(c.values[k], 2.0 * a.values[k] - 3.0 * b.values[k], 0.0, 1e-11);
    }
    el_prep_band_plan_destroy(p);
    /* the whole band: nothing changes */
    memcpy(c.values, b.values, n * sizeof(double));
    p = plan_for(n, dt, 0.0, 0.5 / dt);
    apply(p, &c);
    assert_close_array(c.values, b.values, n, 0.0, 1e-12);
    el_prep_band_plan_destroy(p);
    free(a.values);
    free(r.values);
    free(b.values);
    free(c.values);
}

/* Parseval: unit white noise through the mask keeps the variance fraction
 * (1 / Nyquist) integral of gain^2 = (B - W/4) / Nyquist, since a
 * raised-cosine edge of width W has integral of r^2 = 3 W / 8 (closed
 * form). Band 5:20 at dt = 0.01 (Nyquist 50): (15 - 0.375) / 50 = 0.2925.
 * Over 40000 samples the band-limited noise has ~2 B T = 12000 degrees
 * of freedom: relative standard error of the variance sqrt(2/12000) =
 * 1.3%; tolerance 5% (about 4 standard errors). */
static void test_band_white_noise_variance(void **state)
{
    (void)state;
    size_t n = 40000;
    double dt = 0.01;
    el_series s = make_series(n, 1, dt);
    el_rng rng;
    el_rng_seed(&rng, 2024, 0);
    for (size_t k = 0; k < n; k++)
        s.values[k] = el_rng_normal(&rng);
    el_prep_band_plan *p = plan_for(n, dt, 5.0, 20.0);
    el_prep_band b = el_prep_band_plan_band(p);
    assert_close(b.transition_hz, 1.5, 1e-15, 0.0);
    apply(p, &s);
    double m = 0.0, v = 0.0;
    for (size_t k = 0; k < n; k++)
        m += s.values[k] / (double)n;
    for (size_t k = 0; k < n; k++)
        v += (s.values[k] - m) * (s.values[k] - m) / (double)n;
    assert_close(v, (15.0 - 1.5 / 4.0) / 50.0, 0.05, 0.0);
    el_prep_band_plan_destroy(p);
    free(s.values);
}

static void test_band_plan_errors(void **state)
{
    (void)state;
    el_prep_band_plan *p = NULL;
    el_error err;
    el_error_clear(&err);
    el_warnings w = { 0 };
    /* 10 s window: resolution 0.1, W = 0.4; a 0.2-wide band has no flat part */
    assert_int_equal(el_prep_band_plan_create(1000, 0.01, 1.0, 1.2, &p, &w, &err),
                     EL_ERR_USAGE);
    assert_null(p);
    assert_string_equal(err.option, "--band");
    assert_true(strlen(err.hint) > 0);
    /* a 0.5-wide band is allowed, with the warning about edge transients
     * (settle = 2 / 0.4 = 5 s at each end of a 10 s window) */
    assert_int_equal(el_prep_band_plan_create(1000, 0.01, 1.0, 1.5, &p, &w, &err), EL_OK);
    assert_true(has_warning(&w, "edge transients"));
    el_warnings_free(&w);
    el_series s = make_series(999, 1, 0.01);
    assert_int_equal(el_prep_band_apply(p, &s, &err), EL_ERR_INTERNAL);
    free(s.values);
    el_prep_band_plan_destroy(p);
    assert_int_equal(el_prep_band_plan_create(1000, 0.01, 2.0, 1.0, &p, &w, &err),
                     EL_ERR_INTERNAL);
    assert_int_equal(el_prep_band_plan_create(1000, 0.01, 0.0, 51.0, &p, &w, &err),
                     EL_ERR_INTERNAL);
    /* a wide band on a long window: no warning */
    assert_int_equal(el_prep_band_plan_create(1000, 0.01, 1.0, 30.0, &p, &w, &err), EL_OK);
    assert_int_equal(w.count, 0);
    el_prep_band_plan_destroy(p);
    el_prep_band_plan_destroy(NULL);
}

/* ---- band edges near modes -------------------------------------------------- */

static el_mode pair_mode(double f_hz, double zeta)
{
    el_mode m;
    memset(&m, 0, sizeof m);
    double wn = 2 * M_PI * f_hz / sqrt(1 - zeta * zeta);
    m.pair = 1;
    m.frequency_hz = f_hz;
    m.damping_ratio = zeta;
    m.lambda_re = -zeta * wn;
    m.lambda_im = 2 * M_PI * f_hz;
    return m;
}

/* Band 0.5:10 (W = 0.95, reach = 0.475 + max(4 b, 0.1 f) with b = zeta
 * f_n): a 3 Hz mode with zeta 0.02 is clear of both edges (reach 0.78 <
 * 2.5); a 9.5 Hz mode with zeta 0.01 is within reach of 10 (0.5 < 0.475 +
 * 0.95); a 12 Hz mode lies outside; a 1.2 Hz mode with zeta 0.1 reaches
 * the low edge (0.7 < 0.475 + 0.48); a real mode is always cut by a low
 * edge. */
static void test_check_modes(void **state)
{
    (void)state;
    el_mode m[6];
    m[0] = pair_mode(3.0, 0.02);
    m[1] = pair_mode(9.5, 0.01);
    m[2] = pair_mode(12.0, 0.05);
    m[3] = pair_mode(1.2, 0.1);
    memset(&m[4], 0, sizeof m[4]);
    m[4].lambda_re = -0.3;
    m[4].damping_ratio = 1.0;
    memset(&m[5], 0, sizeof m[5]);
    m[5].instantaneous = 1;
    m[5].lambda_re = -INFINITY;
    el_modes modes = { 6, 10, 1, m };
    el_prep_band band = { 0.5, 10.0, 0.95, 50.0, 2.0 / 0.95 };
    el_warnings w = { 0 };
    size_t flagged = 99;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prep_band_check_modes(&band, &modes, &w, &flagged, &err), EL_OK);
    assert_int_equal(flagged, 4);
    assert_int_equal(w.count, 4);
    assert_false(has_warning(&w, "mode at 3 "));
    assert_true(has_warning(&w, "the mode at 9.5 (damping ratio 0.01) lies close to the "
                                "--band edge 10"));
    assert_true(has_warning(&w, "the mode at 12 (damping ratio 0.05) lies outside"));
    assert_true(has_warning(&w, "the mode at 1.2 (damping ratio 0.1) lies close to the "
                                "--band edge 0.5"));
    assert_true(has_warning(&w, "non-oscillatory mode"));
    el_warnings_free(&w);
    /* without edges nothing is cut */
    el_prep_band all = { 0.0, 50.0, 0.95, 50.0, 2.0 / 0.95 };
    assert_int_equal(el_prep_band_check_modes(&all, &modes, &w, &flagged, &err), EL_OK);
    assert_int_equal(flagged, 0);
    assert_int_equal(w.count, 0);
    assert_int_equal(el_prep_band_check_modes(NULL, &modes, &w, &flagged, &err),
                     EL_ERR_INTERNAL);
}


/* el_stats_spread: closed forms. Values +a and -a in equal numbers have
 * mean 0 and population standard deviation exactly a, at any scale: at
 * 1e-170 the squares (1e-340) would underflow, at 1e200 overflow. */
static void test_spread_any_scale(void **state)
{
    (void)state;
    static const double scales[] = {1.0, 1e-170, 1e-300, 1e200, 1e300};
    double x[6];
    for (size_t i = 0; i < sizeof scales / sizeof scales[0]; i++) {
        for (size_t k = 0; k < 6; k++)
            x[k] = k % 2 ? -scales[i] : scales[i];
        double mean, sd;
        assert_false(el_stats_spread(x, 6, &mean, &sd));
        assert_close(mean, 0.0, 0, 0);
        assert_close(sd, scales[i], 1e-15, 0);
    }
    /* Constant: no deviation at all, at any scale; or a spread at the
     * rounding level of the mean (1e-13 relative <= 1e-12). */
    double c1[] = {1e-170, 1e-170, 1e-170}, c2[] = {5.0, 5.0, 5.0},
           c3[] = {1.0, 1.0 + 1e-13, 1.0}, c4[] = {1.0, 1.0 + 1e-9, 1.0};
    double mean, sd;
    assert_true(el_stats_spread(c1, 3, &mean, &sd));
    assert_true(el_stats_spread(c2, 3, &mean, &sd));
    assert_true(el_stats_spread(c3, 3, &mean, &sd));
    assert_false(el_stats_spread(c4, 3, &mean, &sd));
    /* Not finite: not constant, and the caller sees it. */
    double c5[] = {1.0, INFINITY};
    assert_false(el_stats_spread(c5, 2, &mean, &sd));
    assert_false(isfinite(mean) && isfinite(sd));
}

/* A channel that varies at 1e-170 is a channel (issue 9: it was called
 * constant). Scaling channel 2 by s makes Ad' = D Ad D^-1, D = diag(1, s),
 * a similarity: trace and determinant are unchanged (closed form). The fit
 * standardises each channel, so the two problems differ only in rounding:
 * 1e-9 relative. */
static void test_fit_tiny_channel(void **state)
{
    (void)state;
    size_t n = 400;
    el_series a = make_series(n, 2, 0.05), b = make_series(n, 2, 0.05);
    el_rng rng;
    el_rng_seed(&rng, 9, 0);
    double x = 3.0, y = 0.0;
    for (size_t k = 0; k < n; k++) {
        a.values[k] = b.values[k] = x;
        a.values[n + k] = y;
        b.values[n + k] = 1e-170 * y;
        double nx = 0.95 * (0.9 * x - 0.3 * y) + 0.1 * el_rng_normal(&rng);
        double ny = 0.95 * (0.3 * x + 0.9 * y) + 0.1 * el_rng_normal(&rng);
        x = nx;
        y = ny;
    }
    el_fit_options opt;
    el_fit_defaults(&opt);
    el_model ma, mb;
    memset(&ma, 0, sizeof ma);
    memset(&mb, 0, sizeof mb);
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&a, &opt, &ma, NULL, &err), EL_OK);
    if (el_fit(&b, &opt, &mb, NULL, &err) != EL_OK)
        fail_msg("fit of the 1e-170 channel: %s", err.message);
    assert_close(mb.ad[0] + mb.ad[3], ma.ad[0] + ma.ad[3], 1e-9, 0);
    assert_close(mb.ad[0] * mb.ad[3] - mb.ad[1] * mb.ad[2],
                 ma.ad[0] * ma.ad[3] - ma.ad[1] * ma.ad[2], 1e-9, 0);
    el_model_free(&ma);
    el_model_free(&mb);
    free(a.values);
    free(b.values);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_parse_detrend),
        cmocka_unit_test(test_spread_any_scale),
        cmocka_unit_test(test_fit_tiny_channel),
        cmocka_unit_test(test_detrend_linear_against_polyfit),
        cmocka_unit_test(test_detrend_mean_keeps_model),
        cmocka_unit_test(test_detrend_none_and_errors),
        cmocka_unit_test(test_parse_band),
        cmocka_unit_test(test_band_mask),
        cmocka_unit_test(test_band_passes_and_removes),
        cmocka_unit_test(test_band_low_pass),
        cmocka_unit_test(test_band_symmetries),
        cmocka_unit_test(test_band_white_noise_variance),
        cmocka_unit_test(test_band_plan_errors),
        cmocka_unit_test(test_check_modes),
    };
    return cmocka_run_group_tests_name("prep", tests, NULL, NULL);
}
