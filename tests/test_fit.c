/* test_fit: the affine least-squares / exact DMD fit against closed forms,
 * numpy, a published regression and the Gavish-Donoho paper. */
#include "el_test.h"

#include <float.h>
#include <stdlib.h>
#include <string.h>

#include "el_fit.h"
#include "el_modes.h"

#include "data/fixture_fit.h"

#define TEST_PI 3.14159265358979323846

/* test_series, ts_init and ts_free come from el_test.h. */

static double *alloc_values(size_t n, size_t nc)
{
    double *v = calloc(n * nc, sizeof *v);
    assert_non_null(v);
    return v;
}

/* splitmix64 + Box-Muller: a seeded normal source local to the tests. */
static double test_normal(uint64_t *state)
{
    double u[2];
    for (int i = 0; i < 2; i++) {
        uint64_t z = (*state += 0x9E3779B97F4A7C15ull);
        z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
        z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
        z ^= z >> 31;
        u[i] = ((double)(z >> 11) + 0.5) * 0x1.0p-53;
    }
    return sqrt(-2.0 * log(u[0])) * cos(2.0 * TEST_PI * u[1]);
}

static int has_warning(const el_warnings *w, const char *needle)
{
    for (size_t i = 0; i < w->count; i++)
        if (strstr(w->items[i], needle) != NULL)
            return 1;
    return 0;
}

/* Damped oscillator x'' + 2 zeta w x' + w^2 (x - x_eq) = 0, exact solution
 * (closed form of any ODE text): x = x_eq + e^{-zeta w t}(A cos wd t +
 * B sin wd t), wd = w sqrt(1 - zeta^2), and its derivative. */
static void oscillator(double t, double zeta, double w, double x_eq, double *x,
                       double *v)
{
    double wd = w * sqrt(1.0 - zeta * zeta), a = 1.0, b = 0.3;
    double e = exp(-zeta * w * t), cs = cos(wd * t), sn = sin(wd * t);
    *x = x_eq + e * (a * cs + b * sn);
    *v = e * (-zeta * w * (a * cs + b * sn) + wd * (-a * sn + b * cs));
}

/* Checks the fitted pair against lambda = -zeta w +/- i w sqrt(1-zeta^2). */
static void check_oscillator_modes(const el_model *m, double zeta, double w)
{
    el_modes modes = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_modes_compute(m, &modes, NULL, &err), EL_OK);
    assert_int_equal(modes.n_modes, 1);
    assert_true(modes.modes[0].pair);
    /* 1e-8 relative to |lambda| = w (the accuracy asked of this check):
     * the samples are exact to rounding, the SVD-based least squares is
     * backward stable, so mu is off by ~eps * cond(X) ~ 1e-14; ln(mu)/dt
     * multiplies that by 1/dt = 100: ~1e-12, four orders below. */
    assert_close(modes.modes[0].lambda_re, -zeta * w, 0.0, 1e-8 * w);
    assert_close(modes.modes[0].lambda_im, w * sqrt(1.0 - zeta * zeta), 0.0, 1e-8 * w);
    /* Derived quantities follow from lambda by definition; same tolerance. */
    assert_close(modes.modes[0].damping_ratio, zeta, 0.0, 1e-8);
    assert_close(modes.modes[0].frequency_hz, w * sqrt(1.0 - zeta * zeta) / (2 * TEST_PI),
                 1e-8, 0.0);
    el_modes_free(&modes);
}

static void test_oscillator_two_channels(void **state)
{
    (void)state;
    const double zeta = 0.1, w = 2 * TEST_PI, dt = 0.01, x_eq = 1.5;
    const size_t n = 300;
    double *v = alloc_values(n, 2);
    for (size_t k = 0; k < n; k++)
        oscillator((double)k * dt, zeta, w, x_eq, &v[k], &v[n + k]);
    test_series ts;
    ts_init(&ts, n, 2, dt, v);
    el_fit_options opt;
    el_fit_defaults(&opt);
    el_model m = {0};
    el_warnings warn = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, &m, &warn, &err), EL_OK);
    assert_int_equal(m.rank, 2);
    assert_int_equal(m.state_dim, 2);
    assert_int_equal(m.n_pairs, n - 1);
    check_oscillator_modes(&m, zeta, w);
    /* Equilibrium (x_eq, 0) of the ODE: the model is exact, so z* is too,
     * up to rounding amplified by 1/rcond(I - Ad) (about 1e3 here): 1e-9
     * of the amplitude (1) keeps a wide margin. */
    assert_true(m.operating_point_ok);
    assert_close(m.operating_point[0], x_eq, 0.0, 1e-9);
    assert_close(m.operating_point[1], 0.0, 0.0, 1e-9 * w);
    /* Noise-free: the one-step fit is exact (R^2 = 1 to rounding). */
    assert_close(m.fit_r2, 1.0, 0.0, 1e-12);
    assert_close(m.channel_r2[0], 1.0, 0.0, 1e-12);
    assert_true(m.residual_rms[0] < 1e-10);
    el_model_free(&m);
    el_warnings_free(&warn);
    ts_free(&ts);
}

static void test_oscillator_position_lags(void **state)
{
    (void)state;
    const double zeta = 0.05, w = 3.0, dt = 0.02, x_eq = -4.0;
    const size_t n = 400;
    double *v = alloc_values(n, 1);
    double dummy;
    for (size_t k = 0; k < n; k++)
        oscillator((double)k * dt, zeta, w, x_eq, &v[k], &dummy);
    test_series ts;
    ts_init(&ts, n, 1, dt, v);
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.lags = 1;
    el_model m = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, &m, NULL, &err), EL_OK);
    assert_int_equal(m.state_dim, 2);
    assert_int_equal(m.n_pairs, n - 2);
    check_oscillator_modes(&m, zeta, w);
    /* The lag row of Ad is the exact shift [1 0] (least squares reproduces
     * a row of Y that is a row of X); rounding only: 1e-12. */
    assert_close(m.ad[1], 1.0, 0.0, 1e-12);
    assert_close(m.ad[3], 0.0, 0.0, 1e-12);
    /* Both lag copies of the fixed point are the equilibrium (1e-9: as in
     * the two-channel case). */
    assert_true(m.operating_point_ok);
    assert_close(m.operating_point[0], x_eq, 0.0, 1e-9);
    assert_close(m.operating_point[1], x_eq, 0.0, 1e-9);
    el_model_free(&m);
    ts_free(&ts);
}

/* Largest |a_i| of an array, to scale a normwise tolerance. */
static double max_abs(const double *a, size_t n)
{
    double m = 0.0;
    for (size_t i = 0; i < n; i++)
        m = fmax(m, fabs(a[i]));
    return m;
}

/* Every numpy eigenvalue must have one of ours within tol (as a set: the
 * two solvers list them in different orders). */
static void check_eigenvalues(const el_modes *modes, const double *want_re,
                              const double *want_im, size_t n, double rtol)
{
    assert_int_equal(modes->n_eigenvalues, n);
    for (size_t i = 0; i < n; i++) {
        double best = INFINITY;
        for (size_t j = 0; j < modes->n_modes; j++) {
            const el_mode *m = &modes->modes[j];
            for (int s = -1; s <= 1; s += 2) {
                if (s < 0 && !m->pair)
                    continue;
                double d = hypot(m->mu_re - want_re[i], s * m->mu_im - want_im[i]);
                best = fmin(best, d);
            }
        }
        assert_close(best, 0.0, 0.0, rtol * hypot(want_re[i], want_im[i]));
    }
}

static void fit_fixture(size_t nc, size_t lags, el_model *m)
{
    double *v = alloc_values(FX_SYS_N, nc);
    memcpy(v, fx_sys_x, FX_SYS_N * nc * sizeof *v);  /* channels 1..nc */
    test_series ts;
    ts_init(&ts, FX_SYS_N, nc, 1.0, v);
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.lags = lags;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, m, NULL, &err), EL_OK);
    ts_free(&ts);
}

/* numpy fixture (tests/data/make_fixtures.py): numpy.linalg.lstsq on the
 * raw design [X, 1] and numpy.linalg.eig. Tolerance 1e-9 relative
 * (normwise, to the largest entry): both are backward-stable orthogonal
 * solvers (SVD) of a well-conditioned problem, so they differ by rounding,
 * about 1e-13; a mistake in scaling, centring or the lag order would show
 * at 1e-2 or more. */
static void test_numpy_fixture_four_channels(void **state)
{
    (void)state;
    el_model m = {0};
    fit_fixture(4, 0, &m);
    assert_int_equal(m.rank, 4);
    double s_ad = max_abs(fx_sys_ad, 16), s_c = max_abs(fx_sys_c, 4);
    assert_close_array(m.ad, fx_sys_ad, 16, 0.0, 1e-9 * s_ad);
    assert_close_array(m.offset, fx_sys_c, 4, 0.0, 1e-9 * s_c);
    el_modes modes = {0};
    assert_int_equal(el_modes_compute(&m, &modes, NULL, NULL), EL_OK);
    check_eigenvalues(&modes, fx_sys_mu_re, fx_sys_mu_im, 4, 1e-9);
    el_modes_free(&modes);
    el_model_free(&m);
}

static void test_numpy_fixture_lags(void **state)
{
    (void)state;
    el_model m = {0};
    fit_fixture(2, 1, &m);
    assert_int_equal(m.state_dim, 4);
    double s_ad = max_abs(fx_lag_ad, 16), s_c = max_abs(fx_lag_c, 4);
    /* Same reasoning and tolerance as the four-channel case. */
    assert_close_array(m.ad, fx_lag_ad, 16, 0.0, 1e-9 * s_ad);
    assert_close_array(m.offset, fx_lag_c, 4, 0.0, 1e-9 * s_c);
    el_modes modes = {0};
    assert_int_equal(el_modes_compute(&m, &modes, NULL, NULL), EL_OK);
    check_eigenvalues(&modes, fx_lag_mu_re, fx_lag_mu_im, 4, 1e-9);
    el_modes_free(&modes);
    el_model_free(&m);
}

/* Plan/execute: the second execute reuses every array of the model (no
 * allocation) and gives the same numbers as el_fit. */
static void test_plan_reuse(void **state)
{
    (void)state;
    el_fit_options opt;
    el_fit_defaults(&opt);
    el_fit_plan *plan = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit_plan_create(200, 4, &opt, &plan, &err), EL_OK);
    el_model m = {0};
    double *v1 = alloc_values(200, 4), *v2 = alloc_values(200, 4);
    for (size_t c = 0; c < 4; c++) {
        memcpy(v1 + 200 * c, fx_sys_x + FX_SYS_N * c, 200 * sizeof(double));
        memcpy(v2 + 200 * c, fx_sys_x + FX_SYS_N * c + 200, 200 * sizeof(double));
    }
    test_series t1, t2;
    ts_init(&t1, 200, 4, 1.0, v1);
    ts_init(&t2, 200, 4, 1.0, v2);
    assert_int_equal(el_fit_plan_execute(plan, &t1.s, &m, NULL, &err), EL_OK);
    double *ad_before = m.ad, *lift_before = m.lift;
    assert_int_equal(el_fit_plan_execute(plan, &t2.s, &m, NULL, &err), EL_OK);
    assert_ptr_equal(m.ad, ad_before);
    assert_ptr_equal(m.lift, lift_before);
    el_model ref = {0};
    assert_int_equal(el_fit(&t2.s, &opt, &ref, NULL, &err), EL_OK);
    /* Identical arithmetic in the same order: equal to the last bit. */
    assert_close_array(m.ad, ref.ad, 16, 0.0, 0.0);
    assert_close_array(m.offset, ref.offset, 4, 0.0, 0.0);
    /* A series of another size is refused. */
    test_series t3;
    ts_init(&t3, 199, 4, 1.0, alloc_values(199, 4));
    assert_int_equal(el_fit_plan_execute(plan, &t3.s, &m, NULL, &err), EL_ERR_INTERNAL);
    ts_free(&t3);
    el_model_free(&ref);
    el_model_free(&m);
    el_fit_plan_destroy(plan);
    ts_free(&t1);
    ts_free(&t2);
}

/* Gavish & Donoho (2014): the paper's cubic omega(beta) against omega from
 * the Marchenko-Pastur law (numpy/scipy fixture; the closed form of
 * lambda*(beta) there is recalled from memory) and against the paper's
 * table value omega(1) ~ 2.858 (recalled from memory). 0.02: the paper
 * presents the cubic as an approximation; the fixture shows it within
 * 0.005 on [0.05, 1], so 0.02 fails only for a wrong coefficient. */
static void test_gd_omega(void **state)
{
    (void)state;
    assert_close(el_fit_hard_threshold_omega(1.0), 2.858, 0.0, 0.02);
    for (size_t i = 0; i < FX_GD_N; i++)
        assert_close(el_fit_hard_threshold_omega(fx_gd_beta[i]), fx_gd_omega[i], 0.0,
                     0.02);
    /* The MP fixture agrees with the recalled table value too (0.002: the
     * table gives four digits). */
    assert_close(fx_gd_omega[FX_GD_N - 1], 2.858, 0.0, 0.002);
}

/* The rank rule itself on singular values worked by hand: beta = 6/1000,
 * omega = 1.4409, median of {10, 9, 1.1, 1, 0.9, 0.8} = 0.95, tau = 1.369:
 * two values above. */
static void test_gd_rank_by_hand(void **state)
{
    (void)state;
    const double sv[6] = {10.0, 9.0, 1.1, 1.0, 0.9, 0.8};
    assert_int_equal(el_fit_hard_threshold_rank(sv, 6, 6, 1000), 2);
    assert_int_equal(el_fit_hard_threshold_rank(sv, 6, 1000, 6), 2);
    const double flat[4] = {1.0, 1.0, 1.0, 1.0};
    assert_int_equal(el_fit_hard_threshold_rank(flat, 4, 4, 100), 1);  /* at least 1 */
}

/* A rank-2 signal (a sustained rotation seen through 6 channels of equal
 * gain) plus white noise: the optimal hard threshold keeps 2. */
static void test_gd_auto_rank(void **state)
{
    (void)state;
    const size_t n = 1000, nc = 6;
    const double theta = 2 * TEST_PI * 0.05, sigma = 0.05;
    double *v = alloc_values(n, nc);
    uint64_t seed = 12345;
    for (size_t c = 0; c < nc; c++)
        for (size_t k = 0; k < n; k++)
            v[c * n + k] = 3.0 + cos(theta * (double)k - (double)c * TEST_PI / 6.0) +
                           sigma * test_normal(&seed);
    test_series ts;
    ts_init(&ts, n, nc, 1.0, v);
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.rank = EL_RANK_AUTO;
    el_model m = {0};
    el_warnings warn = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, &m, &warn, &err), EL_OK);
    assert_int_equal(m.rank, 2);
    assert_true(m.rank_was_auto);
    assert_true(has_warning(&warn, "Gavish"));
    assert_false(has_warning(&warn, "the choice is rough"));
    el_modes modes = {0};
    assert_int_equal(el_modes_compute(&m, &modes, NULL, &err), EL_OK);
    assert_int_equal(modes.n_modes, 1);
    /* Frequency 0.05 cycles/sample: with noise 0.05 on unit amplitude over
     * 1000 samples the estimate scatters by ~1e-5 (a sinusoid's frequency
     * error ~ sigma / (A N^1.5)); 1% only catches a wrong model. */
    assert_close(modes.modes[0].frequency_hz, 0.05, 0.01, 0.0);
    el_modes_free(&modes);
    el_model_free(&m);
    el_warnings_free(&warn);
    ts_free(&ts);
}

/* Two nearly collinear channels (d = 2): the threshold keeps one
 * direction, and the warning says that with so few states the median
 * singular value is no noise estimate (Gavish & Donoho's setting has the
 * signal rank well below the dimension). */
static void test_gd_auto_rank_few_states(void **state)
{
    (void)state;
    const size_t n = 500;
    double *v = alloc_values(n, 2);
    uint64_t seed = 99;
    for (size_t k = 0; k < n; k++) {
        v[k] = sin(0.2 * (double)k);
        v[n + k] = v[k] + 0.01 * test_normal(&seed);
    }
    test_series ts;
    ts_init(&ts, n, 2, 1.0, v);
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.rank = EL_RANK_AUTO;
    el_model m = {0};
    el_warnings warn = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, &m, &warn, &err), EL_OK);
    assert_int_equal(m.rank, 1);
    assert_true(has_warning(&warn, "the choice is rough"));
    el_model_free(&m);
    el_warnings_free(&warn);
    ts_free(&ts);
}

/* A known rank-2 system q[k+1] = A2 q[k] (mu = 0.95 e^{+-0.3i}) seen
 * through 6 channels: the rank-2 DMD eigenvalues are A2's. */
static void fill_rank2(double *v, size_t n)
{
    const double r = 0.95, th = 0.3;
    const double a2[4] = {r * cos(th), r * sin(th), -r * sin(th), r * cos(th)};
    const double mix[6][2] = {{1, 0}, {0.5, 1}, {-1, 2}, {0.3, -0.7}, {2, 1}, {-0.4, -1}};
    double q[2] = {1.0, 0.5};
    for (size_t k = 0; k < n; k++) {
        for (size_t c = 0; c < 6; c++)
            v[c * n + k] = 10.0 * (double)c + mix[c][0] * q[0] + mix[c][1] * q[1];
        double q0 = a2[0] * q[0] + a2[2] * q[1], q1 = a2[1] * q[0] + a2[3] * q[1];
        q[0] = q0;
        q[1] = q1;
    }
}

static void test_rank_truncation(void **state)
{
    (void)state;
    const size_t n = 120;
    double *v = alloc_values(n, 6);
    fill_rank2(v, n);
    test_series ts;
    ts_init(&ts, n, 6, 1.0, v);
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.rank = 2;
    el_model m = {0};
    el_warnings warn = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, &m, &warn, &err), EL_OK);
    assert_int_equal(m.rank, 2);
    assert_true(has_warning(&warn, "rank truncated"));
    el_modes modes = {0};
    assert_int_equal(el_modes_compute(&m, &modes, NULL, &err), EL_OK);
    assert_int_equal(modes.n_modes, 1);
    /* Closed form of the rotation-scaling matrix: mu = r e^{i th}. Noise-
     * free data, exact rank 2, 1e-10: rounding (~1e-14) with a wide margin. */
    assert_close(modes.modes[0].mu_re, 0.95 * cos(0.3), 0.0, 1e-10);
    assert_close(modes.modes[0].mu_im, 0.95 * sin(0.3), 0.0, 1e-10);
    el_modes_free(&modes);
    el_model_free(&m);
    el_warnings_free(&warn);

    /* Full rank on the same data: the 4 empty directions are not inverted;
     * the rank drops to the numerical rank 2 with a warning. */
    opt.rank = EL_RANK_FULL;
    warn = (el_warnings){0};
    assert_int_equal(el_fit(&ts.s, &opt, &m, &warn, &err), EL_OK);
    assert_int_equal(m.rank, 2);
    assert_true(has_warning(&warn, "numerical rank 2 of 6"));
    el_model_free(&m);
    el_warnings_free(&warn);

    /* rank > state_dim is a usage error naming --rank. */
    opt.rank = 7;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, &m, NULL, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--rank");
    assert_null(m.ad);
    ts_free(&ts);
}

static void test_constant_channel(void **state)
{
    (void)state;
    const size_t n = 100;
    double *v = alloc_values(n, 3);
    for (size_t k = 0; k < n; k++) {
        v[k] = sin(0.1 * (double)k);
        v[n + k] = 5.0;                                  /* exactly constant */
        v[2 * n + k] = cos(0.2 * (double)k);
    }
    test_series ts;
    ts_init(&ts, n, 3, 1.0, v);
    el_model m = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, NULL, &m, NULL, &err), EL_ERR_DATA);
    assert_non_null(strstr(err.message, "ch2"));
    assert_non_null(strstr(err.hint, "--channels"));
    assert_null(m.ad);
    /* Constant to working precision: spread 1e-7 on a level of 1e6 is
     * below 1e-12 relative. */
    for (size_t k = 0; k < n; k++)
        v[n + k] = 1e6 + 1e-7 * sin(0.3 * (double)k);
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, NULL, &m, NULL, &err), EL_ERR_DATA);
    assert_non_null(strstr(err.message, "ch2"));
    ts_free(&ts);
}

static void test_too_few_pairs(void **state)
{
    (void)state;
    /* One channel, lags 0: d = 1 needs 2 (d + 1) = 4 pairs, i.e. 5 samples. */
    double *v = alloc_values(5, 1);
    for (size_t k = 0; k < 5; k++)
        v[k] = pow(0.5, (double)k) + 1.0;
    test_series ts;
    ts_init(&ts, 5, 1, 1.0, v);
    el_model m = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, NULL, &m, NULL, &err), EL_OK);
    /* x[k+1] = 0.5 x[k] + 0.5 exactly (closed form): 1e-12, rounding. */
    assert_close(m.ad[0], 0.5, 0.0, 1e-12);
    assert_close(m.offset[0], 0.5, 0.0, 1e-12);
    assert_close(m.operating_point[0], 1.0, 0.0, 1e-12);
    el_model_free(&m);
    ts.s.n_samples = 4;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, NULL, &m, NULL, &err), EL_ERR_DATA);
    assert_non_null(strstr(err.hint, "lags"));
    /* With a lag: d = 2 needs 6 pairs = 8 samples. */
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.lags = 1;
    ts.s.n_samples = 5;
    assert_int_equal(el_fit(&ts.s, &opt, &m, NULL, &err), EL_ERR_DATA);
    ts_free(&ts);
}

/* An integrator with drift, x1' = x2 + 1, x2' = -x2 (exact solution
 * x2 = x2(0) e^{-t}, x1 = x1(0) + t + x2(0)(1 - e^{-t})): Ad has an
 * eigenvalue exactly 1, so I - Ad is singular and there is no fixed point. */
static void test_integrator_warning(void **state)
{
    (void)state;
    const size_t n = 200;
    const double dt = 0.05;
    double *v = alloc_values(n, 2);
    for (size_t k = 0; k < n; k++) {
        double t = (double)k * dt, e = exp(-t);
        v[k] = 2.0 + t + 1.0 * (1.0 - e);
        v[n + k] = 1.0 * e;
    }
    test_series ts;
    ts_init(&ts, n, 2, dt, v);
    el_model m = {0};
    el_warnings warn = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, NULL, &m, &warn, &err), EL_OK);
    assert_true(m.rcond_i_minus_a < 1e-8);
    assert_true(has_warning(&warn, "eigenvalue near 1"));
    assert_false(m.operating_point_ok);
    assert_close(m.operating_point[0], 0.0, 0.0, 0.0);
    el_modes modes = {0};
    assert_int_equal(el_modes_compute(&m, &modes, NULL, &err), EL_OK);
    /* lambda = 0 and -1 (eigenvalues of [[0,1],[0,-1]]); rounding on noise-
     * free data amplified by 1/dt: 1e-8. */
    assert_close(modes.modes[0].lambda_re, 0.0, 0.0, 1e-8);
    assert_close(modes.modes[1].lambda_re, -1.0, 0.0, 1e-8);
    el_modes_free(&modes);
    el_model_free(&m);
    el_warnings_free(&warn);
    ts_free(&ts);
}

static void test_bad_options(void **state)
{
    (void)state;
    el_fit_plan *plan = NULL;
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.rank = -5;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit_plan_create(100, 2, &opt, &plan, &err), EL_ERR_USAGE);
    assert_null(plan);
    opt.rank = EL_RANK_FULL;
    opt.method = (el_method)9;
    assert_int_equal(el_fit_plan_create(100, 2, &opt, &plan, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--method");
    el_fit_plan_destroy(NULL);
    el_model_free(NULL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_oscillator_two_channels),
        cmocka_unit_test(test_oscillator_position_lags),
        cmocka_unit_test(test_numpy_fixture_four_channels),
        cmocka_unit_test(test_numpy_fixture_lags),
        cmocka_unit_test(test_plan_reuse),
        cmocka_unit_test(test_gd_omega),
        cmocka_unit_test(test_gd_rank_by_hand),
        cmocka_unit_test(test_gd_auto_rank),
        cmocka_unit_test(test_gd_auto_rank_few_states),
        cmocka_unit_test(test_rank_truncation),
        cmocka_unit_test(test_constant_channel),
        cmocka_unit_test(test_too_few_pairs),
        cmocka_unit_test(test_integrator_warning),
        cmocka_unit_test(test_bad_options),
    };
    return cmocka_run_group_tests_name("fit", tests, NULL, NULL);
}
