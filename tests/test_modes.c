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

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_lambda_principal),
        cmocka_unit_test(test_lambda_nyquist),
        cmocka_unit_test(test_pair_quantities_and_shape),
        cmocka_unit_test(test_real_modes_order_and_nyquist),
        cmocka_unit_test(test_instantaneous_mode),
        cmocka_unit_test(test_shape_oscillator),
    };
    return cmocka_run_group_tests_name("modes", tests, NULL, NULL);
}
