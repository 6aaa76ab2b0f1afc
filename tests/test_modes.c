/* test_modes: continuous eigenvalues, frequency, damping, time constants,
 * Nyquist and instantaneous flags, order, and mode shapes. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_fit.h"
#include "el_modes.h"

#define TEST_PI 3.14159265358979323846
#define MAX_D 4

/* A hand-built model: only what el_modes_compute reads. */
typedef struct {
    el_model m;
    double a_reduced[MAX_D * MAX_D], lift[MAX_D * MAX_D], basis[MAX_D * MAX_D];
    double scale[MAX_D];
} test_model;

static void tm_init(test_model *t, size_t d, double dt, const double *a_reduced,
                    const double *scale)
{
    memset(t, 0, sizeof *t);
    for (size_t i = 0; i < d; i++) {
        t->lift[i + d * i] = 1.0;
        t->basis[i + d * i] = 1.0;
        t->scale[i] = scale != NULL ? scale[i] : 1.0;
    }
    memcpy(t->a_reduced, a_reduced, d * d * sizeof(double));
    t->m.n_channels = d;
    t->m.state_dim = d;
    t->m.rank = d;
    t->m.dt = dt;
    t->m.a_reduced = t->a_reduced;
    t->m.lift = t->lift;
    t->m.basis = t->basis;
    t->m.channel_scale = t->scale;
}

/* lambda = ln(mu)/dt on the principal branch: ln(r e^{i th}) = ln r + i th
 * for th in (-pi, pi] (definition of the principal logarithm). Exact
 * formulas evaluated two ways: 1e-14 relative is rounding only. */
static void test_lambda_principal(void **state)
{
    (void)state;
    double re, im;
    int nyq = -1;
    const double r = 0.9, th = 2.5, dt = 0.25;
    el_modes_lambda(r * cos(th), r * sin(th), dt, &re, &im, &nyq);
    assert_close(re, log(r) / dt, 1e-14, 0.0);
    assert_close(im, th / dt, 1e-14, 0.0);
    assert_int_equal(nyq, 0);
    el_modes_lambda(r * cos(th), -r * sin(th), dt, &re, &im, &nyq);
    assert_close(im, -th / dt, 1e-14, 0.0);
    el_modes_lambda(1.0, 0.0, dt, &re, &im, &nyq);
    assert_close(re, 0.0, 0.0, 0.0);
    assert_close(im, 0.0, 0.0, 0.0);
    el_modes_lambda(0.0, 0.0, dt, &re, &im, &nyq);
    assert_true(isinf(re) && re < 0.0);
    assert_int_equal(nyq, 0);
    el_modes_lambda(0.5, 0.0, dt, &re, &im, NULL);  /* NULL flag is allowed */
    assert_close(re, log(0.5) / dt, 1e-14, 0.0);
}

/* The negative real axis is the Nyquist frequency: Im lambda = pi/dt,
 * whatever the sign of a rounding-sized Im mu (relative 1e-12, the rule in
 * the header); a genuinely complex mu just off the axis is not flagged. */
static void test_lambda_nyquist(void **state)
{
    (void)state;
    double re, im;
    int nyq = 0;
    const double dt = 0.5;
    el_modes_lambda(-0.5, 0.0, dt, &re, &im, &nyq);
    assert_int_equal(nyq, 1);
    assert_close(re, log(0.5) / dt, 1e-14, 0.0);
    assert_close(im, TEST_PI / dt, 1e-14, 0.0);
    el_modes_lambda(-0.5, -4e-13, dt, &re, &im, &nyq);
    assert_int_equal(nyq, 1);
    assert_close(im, TEST_PI / dt, 1e-14, 0.0);
    el_modes_lambda(-0.5, 1e-9, dt, &re, &im, &nyq);
    assert_int_equal(nyq, 0);
}

/* Rotation-scaling matrix [[a,-b],[b,a]], a + ib = 0.9 e^{0.4i}: one pair,
 * eigenvector (1, -i) for a + ib (A (1,-i)' = (a+ib)(1,-i)', by hand).
 * With channel scales (1, 3) the physical shape is (1, -3i): channel 2 is
 * the largest (magnitude 1), channel 1 has 1/3 and leads by +90 degrees. */
static void test_pair_quantities_and_shape(void **state)
{
    (void)state;
    const double r = 0.9, th = 0.4, dt = 0.1;
    const double a = r * cos(th), b = r * sin(th);
    const double ar[4] = {a, b, -b, a}, scale[2] = {1.0, 3.0};
    test_model t;
    tm_init(&t, 2, dt, ar, scale);
    el_modes modes = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_modes_compute(&t.m, &modes, NULL, &err), EL_OK);
    assert_int_equal(modes.n_modes, 1);
    assert_int_equal(modes.n_eigenvalues, 2);
    const el_mode *m = &modes.modes[0];
    assert_true(m->pair);
    assert_false(m->at_nyquist);
    double re = log(r) / dt, im = th / dt;
    /* dgeev on a 2x2: eigenvalues to rounding (1e-13 relative, the
     * backward error of the QR algorithm is a few eps times ||A||). */
    assert_close(m->mu_re, a, 0.0, 1e-13);
    assert_close(m->mu_im, b, 0.0, 1e-13);
    assert_close(m->lambda_re, re, 1e-12, 0.0);
    assert_close(m->lambda_im, im, 1e-12, 0.0);
    /* Definitions in the header: f = Im/(2 pi), zeta = -Re/|lambda|,
     * decay = -Re, time constant 1/|Re|. */
    assert_close(m->frequency_hz, im / (2 * TEST_PI), 1e-12, 0.0);
    assert_close(m->damping_ratio, -re / hypot(re, im), 1e-12, 0.0);
    assert_close(m->decay_rate, -re, 1e-12, 0.0);
    assert_close(m->time_constant_s, 1.0 / -re, 1e-12, 0.0);
    /* Shape worked by hand above; 1e-12 (rounding of the eigenvector). */
    assert_close(m->shape_magnitude[0], 1.0 / 3.0, 0.0, 1e-12);
    assert_close(m->shape_magnitude[1], 1.0, 0.0, 1e-12);
    assert_close(m->shape_phase_deg[0], 90.0, 0.0, 1e-10);
    assert_close(m->shape_phase_deg[1], 0.0, 0.0, 0.0);
    el_modes_free(&modes);
    el_modes_free(NULL);
}

/* diag(0.5, 1.2, -0.5): a decaying real mode, a growing one (doubling time
 * ln 2 / Re) and one at the Nyquist limit with the same Re lambda as the
 * first; order: largest Re first, the tie by frequency (NaN last). */
static void test_real_modes_order_and_nyquist(void **state)
{
    (void)state;
    const double dt = 2.0;
    const double ar[9] = {0.5, 0, 0, 0, 1.2, 0, 0, 0, -0.5};
    test_model t;
    tm_init(&t, 3, dt, ar, NULL);
    el_modes modes = {0};
    el_warnings warn = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_modes_compute(&t.m, &modes, &warn, &err), EL_OK);
    assert_int_equal(modes.n_modes, 3);
    const el_mode *g = &modes.modes[0], *d = &modes.modes[1], *q = &modes.modes[2];
    /* Exact diagonal input: the eigenvalues are the entries (1e-15). */
    assert_close(g->mu_re, 1.2, 0.0, 1e-15);
    assert_close(d->mu_re, 0.5, 0.0, 1e-15);
    assert_close(q->mu_re, -0.5, 0.0, 1e-15);
    /* Growing: doubling time ln2 / Re (definition), damping ratio -1. */
    assert_close(g->time_constant_s, log(2.0) / (log(1.2) / dt), 1e-13, 0.0);
    assert_close(g->damping_ratio, -1.0, 0.0, 1e-15);
    assert_close(g->frequency_hz, 0.0, 0.0, 0.0);
    assert_close(d->damping_ratio, 1.0, 0.0, 1e-15);
    assert_close(d->time_constant_s, dt / -log(0.5), 1e-13, 0.0);
    assert_true(q->at_nyquist);
    assert_true(isnan(q->frequency_hz));
    assert_true(isnan(q->damping_ratio));
    /* |mu| is measured whatever the alias: same decay as mu = 0.5. */
    assert_close(q->decay_rate, d->decay_rate, 1e-15, 0.0);
    assert_int_equal(warn.count, 1);
    assert_non_null(strstr(warn.items[0], "mode 3"));
    assert_non_null(strstr(warn.items[0], "Nyquist"));
    /* Shapes of a diagonal system: unit vectors. */
    assert_close(g->shape_magnitude[1], 1.0, 0.0, 0.0);
    assert_close(g->shape_magnitude[0], 0.0, 0.0, 0.0);
    assert_close(q->shape_magnitude[2], 1.0, 0.0, 0.0);
    el_warnings_free(&warn);
    el_modes_free(&modes);
}

/* mu = 0: instantaneous; the exact mode lift * w vanishes when lift has
 * a zero column (Tu et al. 2014: use the projected mode then). */
static void test_instantaneous_mode(void **state)
{
    (void)state;
    const double ar[4] = {0.5, 0, 0, 0};
    test_model t;
    tm_init(&t, 2, 1.0, ar, NULL);
    t.lift[3] = 0.0;
    el_modes modes = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_modes_compute(&t.m, &modes, NULL, &err), EL_OK);
    const el_mode *z = &modes.modes[1];
    assert_true(z->instantaneous);
    assert_true(isinf(z->lambda_re) && z->lambda_re < 0.0);
    assert_true(isnan(z->decay_rate));
    assert_close(z->time_constant_s, 0.0, 0.0, 0.0);
    assert_close(z->shape_magnitude[1], 1.0, 0.0, 0.0);
    assert_close(z->shape_magnitude[0], 0.0, 0.0, 0.0);
    el_modes_free(&modes);
    /* A model that was never fitted is a caller bug. */
    el_model empty = {0};
    assert_int_equal(el_modes_compute(&empty, &modes, NULL, &err), EL_ERR_INTERNAL);
}

/* Shapes in physical units from a real fit: for x = Re(C e^{lambda t}) the
 * velocity is Re(lambda C e^{lambda t}), so the velocity/position shape
 * ratio is lambda itself (closed form of the damped oscillator): with
 * |lambda| = w = 2 pi > 1 velocity is the largest, position has magnitude
 * 1/w and phase -arg(lambda) relative to velocity. */
static void test_shape_oscillator(void **state)
{
    (void)state;
    const double zeta = 0.2, w = 2 * TEST_PI, dt = 0.01;
    const size_t n = 300;
    double wd = w * sqrt(1 - zeta * zeta);
    double *v = malloc(2 * n * sizeof *v);
    assert_non_null(v);
    for (size_t k = 0; k < n; k++) {
        double tt = (double)k * dt, e = exp(-zeta * w * tt);
        double cs = cos(wd * tt), sn = sin(wd * tt);
        v[k] = 7.0 + e * (cs + 0.3 * sn);
        v[n + k] = e * (-zeta * w * (cs + 0.3 * sn) + wd * (-sn + 0.3 * cs));
    }
    char n1[] = "x", n2[] = "v", u[] = "";
    char *names[2] = {n1, n2}, *units[2] = {u, u};
    el_series s = {.n_samples = n, .n_channels = 2, .dt = dt, .values = v,
                   .names = names, .units = units};
    el_model m = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&s, NULL, &m, NULL, &err), EL_OK);
    el_modes modes = {0};
    assert_int_equal(el_modes_compute(&m, &modes, NULL, &err), EL_OK);
    const el_mode *md = &modes.modes[0];
    double arg_deg = atan2(wd, -zeta * w) * 180.0 / TEST_PI;
    /* Noise-free exact fit: shapes to rounding amplified by the fit's
     * conditioning; 1e-8 (relative and in degrees) is generous. */
    assert_close(md->shape_magnitude[1], 1.0, 0.0, 1e-8);
    assert_close(md->shape_magnitude[0], 1.0 / w, 1e-8, 0.0);
    assert_close(md->shape_phase_deg[0], -arg_deg, 0.0, 1e-8);
    el_modes_free(&modes);
    el_model_free(&m);
    free(v);
}

/* Participation factors of a 2 x 2 system, closed form (Perez-Arriaga,
 * Verghese & Schweppe 1982; the 2 x 2 case worked by hand): for
 * A = [[a, b], [c, d]] with eigenvalues mu1 != mu2, state 1's factor in
 * mode mu1 is p11 = (a - mu2) / (mu1 - mu2) and state 2's is 1 - p11.
 * A = [[0.9, 0.2], [0.1, 0.5]]: mu = 0.7 +/- sqrt(0.06), real, so both
 * factors are real and positive (0.908 and 0.092). The channel scales
 * (1, 1e4) leave the factors and the scaled shape alone while the raw
 * shape is multiplied by them. */
static void test_participation_two_by_two(void **state)
{
    (void)state;
    const double ar[4] = {0.9, 0.1, 0.2, 0.5};   /* column-major */
    const double scale[2] = {1.0, 1e4};
    double root = sqrt(0.06), mu1 = 0.7 + root, mu2 = 0.7 - root;
    double p11 = (0.9 - mu2) / (mu1 - mu2), p12 = (0.9 - mu1) / (mu2 - mu1);
    for (int pass = 0; pass < 2; pass++) {
        test_model t;
        tm_init(&t, 2, 0.1, ar, pass ? scale : NULL);
        el_modes modes = {0};
        el_error err;
        el_error_clear(&err);
        assert_int_equal(el_modes_compute(&t.m, &modes, NULL, &err), EL_OK);
        assert_int_equal(modes.n_modes, 2);
        const el_mode *m1 = &modes.modes[0], *m2 = &modes.modes[1];
        /* Largest Re lambda first: mode 1 is mu1. 1e-13: the rounding of
         * a 2 x 2 eigen-decomposition (a few eps times ||A||). */
        assert_close(m1->mu_re, mu1, 0.0, 1e-13);
        assert_close(m1->participation[0], p11, 0.0, 1e-13);
        assert_close(m1->participation[1], 1.0 - p11, 0.0, 1e-13);
        assert_close(m2->participation[0], p12, 0.0, 1e-13);
        assert_close(m2->participation[1], 1.0 - p12, 0.0, 1e-13);
        /* Right eigenvector of mu1: (b, mu1 - a) up to a factor, so the
         * scaled shape is |b| : |mu1 - a| whatever the channel scales. */
        double r0 = 0.2, r1 = fabs(mu1 - 0.9), big = fmax(r0, r1);
        assert_close(m1->shape_scaled_magnitude[0], r0 / big, 0.0, 1e-12);
        assert_close(m1->shape_scaled_magnitude[1], r1 / big, 0.0, 1e-12);
        double raw0 = r0, raw1 = r1 * (pass ? 1e4 : 1.0), rbig = fmax(raw0, raw1);
        assert_close(m1->shape_magnitude[0], raw0 / rbig, 1e-12, 1e-15);
        assert_close(m1->shape_magnitude[1], raw1 / rbig, 1e-12, 1e-15);
        el_modes_free(&modes);
    }
}

/* Block-triangular A = [[R, b], [0, d]] with R a rotation-scaling block
 * (a pair) and d real: the pair's right vector has no third entry and the
 * real mode's left vector no first two (by hand: (l1, l2) (R - d I) = 0
 * with d not an eigenvalue of R), so state 3 takes no part in the pair
 * and is the whole of the real mode. The pair's two states share
 * equally: |p| is the same for a conjugate pair's two real states of a
 * rotation block (its eigenvectors (1, -i) have equal moduli). */
static void test_participation_block_triangular(void **state)
{
    (void)state;
    const double a = 0.9 * cos(0.4), b = 0.9 * sin(0.4);
    /* column-major 3 x 3: [[a, -b, 0.3], [b, a, -0.2], [0, 0, 0.5]] */
    const double ar[9] = {a, b, 0.0, -b, a, 0.0, 0.3, -0.2, 0.5};
    test_model t;
    tm_init(&t, 3, 0.1, ar, NULL);
    el_modes modes = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_modes_compute(&t.m, &modes, NULL, &err), EL_OK);
    assert_int_equal(modes.n_modes, 2);
    const el_mode *pair = &modes.modes[0], *real = &modes.modes[1];
    assert_true(pair->pair);
    assert_false(real->pair);
    /* Exact zeros up to the rounding of dgeev's vectors (1e-13). */
    assert_close(pair->participation[0], 0.5, 0.0, 1e-13);
    assert_close(pair->participation[1], 0.5, 0.0, 1e-13);
    assert_close(pair->participation[2], 0.0, 0.0, 1e-13);
    assert_close(real->participation[0], 0.0, 0.0, 1e-13);
    assert_close(real->participation[1], 0.0, 0.0, 1e-13);
    assert_close(real->participation[2], 1.0, 0.0, 1e-13);
    el_modes_free(&modes);
}

/* One damped oscillation logged twice: in metres and in micrometres-
 * like units 1e4 times larger (the same signal in two units). Fitted by
 * ls with one lag (the two states of the oscillator from one signal):
 * in units of each channel's standard deviation the channels are the
 * same, so the scaled shape is (1, 1) at phase 0 and the participation
 * (1/2, 1/2), while the raw shape is (1e-4, 1). Tolerance 1e-8: the
 * channels are equal only to rounding after scaling, and the fit drops
 * the duplicate directions at its numerical-rank floor (1e-7 of the
 * largest singular value), so the shapes carry rounding amplified by
 * the fit's conditioning; 1e-8 is far above it and far below any real
 * difference. */
static void test_scaled_shape_two_units(void **state)
{
    (void)state;
    const double zeta = 0.05, w = 2 * TEST_PI, dt = 0.01;
    const size_t n = 400;
    double wd = w * sqrt(1 - zeta * zeta);
    double *v = malloc(2 * n * sizeof *v);
    assert_non_null(v);
    for (size_t k = 0; k < n; k++) {
        double tt = (double)k * dt;
        double x = 0.002 * exp(-zeta * w * tt) * cos(wd * tt + 0.3);
        v[k] = x;
        v[n + k] = 1e4 * x;
    }
    char n1[] = "x_m", n2[] = "x_small", u[] = "";
    char *names[2] = {n1, n2}, *units[2] = {u, u};
    el_series s = {.n_samples = n, .n_channels = 2, .dt = dt, .values = v,
                   .names = names, .units = units};
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.lags = 1;
    el_model m = {0};
    el_warnings warn = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&s, &opt, &m, &warn, &err), EL_OK);
    el_modes modes = {0};
    assert_int_equal(el_modes_compute(&m, &modes, NULL, &err), EL_OK);
    assert_int_equal(modes.n_modes, 1);
    const el_mode *md = &modes.modes[0];
    assert_true(md->pair);
    assert_close(md->frequency_hz, wd / (2 * TEST_PI), 1e-8, 0.0);
    assert_close(md->shape_scaled_magnitude[0], 1.0, 0.0, 1e-8);
    assert_close(md->shape_scaled_magnitude[1], 1.0, 0.0, 1e-8);
    assert_close(md->shape_scaled_phase_deg[0], 0.0, 0.0, 1e-6);
    assert_close(md->shape_scaled_phase_deg[1], 0.0, 0.0, 1e-6);
    assert_close(md->participation[0], 0.5, 0.0, 1e-8);
    assert_close(md->participation[1], 0.5, 0.0, 1e-8);
    /* Raw units: the second channel is 1e4 times the first. */
    assert_close(md->shape_magnitude[1], 1.0, 0.0, 1e-12);
    assert_close(md->shape_magnitude[0], 1e-4, 1e-8, 0.0);
    el_modes_free(&modes);
    el_warnings_free(&warn);
    el_model_free(&m);
    free(v);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_lambda_principal),
        cmocka_unit_test(test_lambda_nyquist),
        cmocka_unit_test(test_pair_quantities_and_shape),
        cmocka_unit_test(test_real_modes_order_and_nyquist),
        cmocka_unit_test(test_instantaneous_mode),
        cmocka_unit_test(test_shape_oscillator),
        cmocka_unit_test(test_participation_two_by_two),
        cmocka_unit_test(test_participation_block_triangular),
        cmocka_unit_test(test_scaled_shape_two_units),
    };
    return cmocka_run_group_tests_name("modes", tests, NULL, NULL);
}
