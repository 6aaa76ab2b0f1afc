/* Tests of el_predict against closed-form solutions of noise-free linear
 * systems: a sampled damped oscillation is an exact solution of its
 * discretised recursion, so the one-step and free-run predictions of the
 * true model must reproduce it to rounding error. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_predict.h"
#include "el_validate.h"

/* Hand-made model and series: only the fields el_predict reads. */
typedef struct {
    el_model model;
    el_series series;
} fixture;

static void fixture_init(fixture *f, size_t n_channels, size_t lags, size_t n_samples)
{
    memset(f, 0, sizeof *f);
    size_t d = n_channels * (lags + 1);
    f->model.n_channels = n_channels;
    f->model.lags = lags;
    f->model.state_dim = d;
    f->model.ad = calloc(d * d, sizeof(double));
    f->model.offset = calloc(d, sizeof(double));
    f->series.n_channels = n_channels;
    f->series.n_samples = n_samples;
    f->series.dt = 1.0;
    f->series.values = calloc(n_channels * n_samples, sizeof(double));
    assert_non_null(f->model.ad);
    assert_non_null(f->model.offset);
    assert_non_null(f->series.values);
}

static void fixture_free(fixture *f)
{
    free(f->model.ad);
    free(f->model.offset);
    free(f->series.values);
}

static double *X(fixture *f, size_t c, size_t k)
{
    return &f->series.values[c * f->series.n_samples + k];
}

/* Largest |x| of a channel: the scale the relative tolerances refer to. */
static double channel_scale(fixture *f, size_t c)
{
    double m = 0;
    for (size_t k = 0; k < f->series.n_samples; k++)
        m = fmax(m, fabs(*X(f, c, k)));
    return m;
}

static el_prediction *run(fixture *f)
{
    el_prediction *p = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prediction_create(f->model.n_channels, f->model.lags,
                                          f->series.n_samples, &p, &err), EL_OK);
    assert_int_equal(el_prediction_run(p, &f->model, &f->series, &err), EL_OK);
    return p;
}

/* Checks that both predictions equal the measured (= exact) series to
 * rtol of each channel's scale. */
static void assert_reproduces(fixture *f, const el_prediction *p, double rtol)
{
    size_t n = f->series.n_samples, K = f->model.lags;
    assert_int_equal(p->one_step_first, K + 1);
    assert_int_equal(p->one_step_count, n - K - 1);
    assert_int_equal(p->free_first, K);
    assert_int_equal(p->free_count, n - K);
    assert_int_equal(p->free_diverged, 0);
    for (size_t c = 0; c < f->model.n_channels; c++) {
        double scale = channel_scale(f, c);
        assert_close_array(p->one_step + c * p->one_step_count, X(f, c, K + 1),
                           p->one_step_count, 0.0, rtol * scale);
        assert_close_array(p->free_run + c * p->free_count, X(f, c, K),
                           p->free_count, 0.0, rtol * scale);
        /* NRMSE of an exact model: rounding over the channel's own spread. */
        assert_true(p->one_step_nrmse[c] < rtol * 100);
        assert_true(p->free_nrmse[c] < rtol * 100);
    }
}

/* Two coupled states, no lags. Continuous A = T [s w; -w s] T^-1, so
 * exp(A t) = T e^{s t} [cos wt, sin wt; -sin wt, cos wt] T^-1 (closed form
 * of the exponential of a real 2x2 block with eigenvalues s +/- i w).
 * x(t) = x* + exp(A t) (x0 - x*) sampled at t = k dt is the exact solution
 * of x[k+1] = Ad x[k] + c with Ad = exp(A dt), c = (I - Ad) x*.
 * Tolerance 1e-10 of the channel scale: one step is one 2x2 product
 * (error ~ 1e-16 relative); the free run accumulates rounding over 600
 * steps, damped by rho = e^{s dt} ~ 0.985, so at most ~ cond(T) eps /
 * (1 - rho) ~ 1e-13; the closed-form truth itself loses ~ eps * w t ~ 1e-14
 * in the cosine's argument. An index slip by one sample would be O(1). */
static void rotation(double s, double w, double t, double *r)
{
    double g = exp(s * t);
    r[0] = g * cos(w * t);   /* column-major [r0 r2; r1 r3] = g [c s; -s c] */
    r[1] = -g * sin(w * t);
    r[2] = g * sin(w * t);
    r[3] = g * cos(w * t);
}

static void mul2(const double *a, const double *b, double *c)
{
    c[0] = a[0] * b[0] + a[2] * b[1];
    c[1] = a[1] * b[0] + a[3] * b[1];
    c[2] = a[0] * b[2] + a[2] * b[3];
    c[3] = a[1] * b[2] + a[3] * b[3];
}

static void exp_at(double s, double w, double t, double *e)
{
    static const double T[4] = {1.0, 0.4, -0.7, 1.3};   /* cond ~ 2.7 */
    double det = T[0] * T[3] - T[1] * T[2];
    double Ti[4] = {T[3] / det, -T[1] / det, -T[2] / det, T[0] / det};
    double r[4], tmp[4];
    rotation(s, w, t, r);
    mul2(T, r, tmp);
    mul2(tmp, Ti, e);
}

static void test_two_states_no_lags(void **state)
{
    (void)state;
    const double s = -0.3, w = 2 * M_PI * 0.8, dt = 0.05;
    const double xs[2] = {4.0, -2.5}, x0[2] = {6.0, 1.0};
    const size_t n = 600;
    fixture f;
    fixture_init(&f, 2, 0, n);
    exp_at(s, w, dt, f.model.ad);
    for (int i = 0; i < 2; i++)
        f.model.offset[i] = xs[i] - (f.model.ad[i] * xs[0] + f.model.ad[i + 2] * xs[1]);
    for (size_t k = 0; k < n; k++) {
        double e[4];
        exp_at(s, w, (double)k * dt, e);
        double d0 = x0[0] - xs[0], d1 = x0[1] - xs[1];
        *X(&f, 0, k) = xs[0] + e[0] * d0 + e[2] * d1;
        *X(&f, 1, k) = xs[1] + e[1] * d0 + e[3] * d1;
    }
    el_prediction *p = run(&f);
    assert_reproduces(&f, p, 1e-10);
    el_prediction_destroy(p);
    fixture_free(&f);
}

/* Delay embedding, two channels, one lag. Channel c is a sampled damped
 * cosine x[k] = m + r^k cos(th k + ph), which satisfies exactly
 * x[k+1] = 2 r cos(th) x[k] - r^2 x[k-1] + m (1 - 2 r cos th + r^2)
 * (the characteristic roots are r e^{+/- i th}). The channels have
 * different r, th, so swapping the state's order (lag-major
 * z[j * n + c] vs channel-major) gives a wrong prediction. Lag rows of Ad
 * carry the shift x[k] -> x[k-1]. Tolerance as above (1e-10 of the scale;
 * rounding is ~1e-13 over 500 steps with r >= 0.99). */
static void test_two_channels_one_lag(void **state)
{
    (void)state;
    const double r[2] = {0.995, 0.99}, th[2] = {0.21, 0.07};
    const double m[2] = {10.0, -3.0}, ph[2] = {0.3, 1.1}, amp[2] = {2.0, 0.5};
    const size_t n = 500, nc = 2, d = 4;
    fixture f;
    fixture_init(&f, nc, 1, n);
    double *ad = f.model.ad;
    for (size_t c = 0; c < nc; c++) {
        ad[c * d + c] = 2 * r[c] * cos(th[c]);          /* x[k] block */
        ad[(nc + c) * d + c] = -r[c] * r[c];            /* x[k-1] block */
        ad[c * d + (nc + c)] = 1.0;                     /* shift row */
        f.model.offset[c] = m[c] * (1 - 2 * r[c] * cos(th[c]) + r[c] * r[c]);
        for (size_t k = 0; k < n; k++)
            *X(&f, c, k) = m[c] + amp[c] * pow(r[c], (double)k) * cos(th[c] * (double)k + ph[c]);
    }
    el_prediction *p = run(&f);
    assert_reproduces(&f, p, 1e-10);
    el_prediction_destroy(p);
    fixture_free(&f);
}

/* Predicting the mean: with Ad = 0 and c = the mean of samples 1..N-1,
 * every one-step prediction is that mean, so RMS(error) = population std
 * and one_step_nrmse = 1 by definition (identity; 1e-12 covers the
 * rounding of two sums over 200 terms). The free run is c from sample 1 on
 * and x[0] at sample 0, so its NRMSE is not 1: it is computed here
 * directly from the definition. */
static void test_nrmse_definition(void **state)
{
    (void)state;
    const size_t n = 200;
    fixture f;
    fixture_init(&f, 1, 0, n);
    for (size_t k = 0; k < n; k++)
        *X(&f, 0, k) = sin(0.37 * (double)k) + 0.01 * (double)k;
    double mean1 = 0;
    for (size_t k = 1; k < n; k++)
        mean1 += *X(&f, 0, k);
    mean1 /= (double)(n - 1);
    f.model.offset[0] = mean1;
    el_prediction *p = run(&f);
    assert_close(p->one_step_nrmse[0], 1.0, 1e-12, 0);
    double mean0 = 0, var = 0, sq = 0;
    for (size_t k = 0; k < n; k++)
        mean0 += *X(&f, 0, k) / (double)n;
    for (size_t k = 0; k < n; k++) {
        double pred = k == 0 ? *X(&f, 0, 0) : mean1;
        var += (*X(&f, 0, k) - mean0) * (*X(&f, 0, k) - mean0);
        sq += (pred - *X(&f, 0, k)) * (pred - *X(&f, 0, k));
    }
    assert_close(p->free_nrmse[0], sqrt(sq / var), 1e-12, 0);
    el_prediction_destroy(p);
    fixture_free(&f);
}

/* A wrong, unstable model: channel 0 doubles each step, channel 1 halves.
 * The run must stop at the first sample where channel 0 leaves
 * mid +/- 1e6 * range of its data, keep every stored value finite, keep
 * channel 1's values correct after packing, and flag the error as NaN.
 * Expected values from the closed forms 2^i x0 and 0.5^i x1. */
static void test_divergence_flagged(void **state)
{
    (void)state;
    const size_t n = 300;
    fixture f;
    fixture_init(&f, 2, 0, n);
    f.model.ad[0] = 2.0;
    f.model.ad[3] = 0.5;
    double lo = INFINITY, hi = -INFINITY;
    for (size_t k = 0; k < n; k++) {
        *X(&f, 0, k) = 1.0 + 0.5 * sin(0.1 * (double)k);
        *X(&f, 1, k) = 3.0 + cos(0.05 * (double)k);
        lo = fmin(lo, *X(&f, 0, k));
        hi = fmax(hi, *X(&f, 0, k));
    }
    double mid = 0.5 * (lo + hi), limit = EL_PREDICT_DIVERGENCE_FACTOR * (hi - lo);
    size_t stop = 1;
    while (fabs(ldexp(*X(&f, 0, 0), (int)stop) - mid) <= limit)
        stop++;
    el_prediction *p = run(&f);
    assert_int_equal(p->free_diverged, 1);
    assert_int_equal(p->free_diverged_at, stop);
    assert_int_equal(p->free_count, stop);
    assert_true(p->free_count < n);
    for (size_t i = 0; i < p->free_count; i++) {
        /* Powers of two times a double: exact, so exact equality is the
         * right test for channel 0; 1e-15 relative for channel 1. */
        assert_true(p->free_run[i] == ldexp(*X(&f, 0, 0), (int)i));
        assert_close(p->free_run[p->free_count + i], *X(&f, 1, 0) * pow(0.5, (double)i),
                     1e-15, 0);
    }
    assert_true(isnan(p->free_nrmse[0]) && isnan(p->free_nrmse[1]));
    assert_true(isfinite(p->one_step_nrmse[0]) && isfinite(p->one_step_nrmse[1]));
    el_prediction_destroy(p);
    fixture_free(&f);
}

/* Without traces (el_prediction_create_errors, what el_validation uses):
 * the same errors, counts and divergence as with traces, bit for bit (the
 * contract: the same additions in the same order), on a closed-form
 * damped rotation with one lag and an offset, and on the diverging model
 * above; one_step and free_run stay NULL. */
static void errors_match(fixture *f)
{
    el_prediction *with = run(f), *without = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_prediction_create_errors(f->model.n_channels, f->model.lags,
                                                 f->series.n_samples, &without, &err),
                     EL_OK);
    assert_int_equal(el_prediction_run(without, &f->model, &f->series, &err), EL_OK);
    assert_null(without->one_step);
    assert_null(without->free_run);
    assert_int_equal(without->free_diverged, with->free_diverged);
    assert_int_equal(without->free_count, with->free_count);
    assert_int_equal(without->one_step_count, with->one_step_count);
    for (size_t c = 0; c < f->model.n_channels; c++) {
        assert_memory_equal(&without->one_step_nrmse[c], &with->one_step_nrmse[c],
                            sizeof(double));
        assert_memory_equal(&without->free_nrmse[c], &with->free_nrmse[c], sizeof(double));
    }
    /* el_validation's plan skips the one-step pass (el_prediction_skip_one_step)
     * and fills the one-step errors from its residual sums: the same
     * doubles again (issue 13 item 3: one pass over the window fewer). */
    el_validation *v = NULL;
    assert_int_equal(el_validation_create(f->model.n_channels, f->model.lags,
                                          f->series.n_samples, &v, &err),
                     EL_OK);
    el_warnings w = {0};
    assert_int_equal(el_validation_run(v, &f->model, &f->series, NULL, &w, &err), EL_OK);
    assert_int_equal(v->prediction->skip_one_step, 1);
    for (size_t c = 0; c < f->model.n_channels; c++) {
        assert_memory_equal(&v->prediction->one_step_nrmse[c], &with->one_step_nrmse[c],
                            sizeof(double));
        assert_memory_equal(&v->free_nrmse[c], &with->free_nrmse[c], sizeof(double));
    }
    el_warnings_free(&w);
    el_validation_destroy(v);
    el_prediction_destroy(with);
    el_prediction_destroy(without);
}

static void test_errors_without_traces(void **state)
{
    (void)state;
    const size_t n = 500;
    fixture f;
    fixture_init(&f, 2, 1, n);
    /* x[k+1] = 0.95 R(0.3) x[k] + 0.01 x[k-1] + offset, measured with a
     * small disturbance so that the errors are not zero */
    double a = 0.95 * cos(0.3), b = 0.95 * sin(0.3);
    size_t d = 4;
    f.model.ad[0 + 0 * d] = a;
    f.model.ad[0 + 1 * d] = -b;
    f.model.ad[1 + 0 * d] = b;
    f.model.ad[1 + 1 * d] = a;
    f.model.ad[0 + 2 * d] = 0.01;
    f.model.ad[1 + 3 * d] = 0.01;
    f.model.ad[2 + 0 * d] = 1.0;
    f.model.ad[3 + 1 * d] = 1.0;
    f.model.offset[0] = 0.2;
    f.model.offset[1] = -0.1;
    *X(&f, 0, 0) = *X(&f, 0, 1) = 1.0;
    *X(&f, 1, 0) = *X(&f, 1, 1) = 0.5;
    for (size_t k = 1; k + 1 < n; k++) {
        double x0 = *X(&f, 0, k), x1 = *X(&f, 1, k);
        *X(&f, 0, k + 1) = a * x0 - b * x1 + 0.01 * *X(&f, 0, k - 1) + 0.2 +
                           0.05 * sin(1.7 * (double)k);
        *X(&f, 1, k + 1) = b * x0 + a * x1 + 0.01 * *X(&f, 1, k - 1) - 0.1 +
                           0.05 * cos(2.3 * (double)k);
    }
    errors_match(&f);
    fixture_free(&f);
    fixture g;
    fixture_init(&g, 2, 0, 300);
    g.model.ad[0] = 2.0;
    g.model.ad[3] = 0.5;
    for (size_t k = 0; k < 300; k++) {
        *X(&g, 0, k) = 1.0 + 0.5 * sin(0.1 * (double)k);
        *X(&g, 1, k) = 3.0 + cos(0.05 * (double)k);
    }
    errors_match(&g);
    fixture_free(&g);
}

/* A plan made for a longer series is reused for a shorter one and gives
 * the same numbers as a fresh plan (no state leaks between runs). */
static void test_plan_reuse(void **state)
{
    (void)state;
    fixture f;
    fixture_init(&f, 1, 1, 120);
    f.model.ad[0] = 1.2;
    f.model.ad[2] = -0.5;
    f.model.ad[1] = 1.0;
    f.model.offset[0] = 0.3;
    for (size_t k = 0; k < 120; k++)
        *X(&f, 0, k) = cos(0.3 * (double)k) + 0.2 * sin(1.7 * (double)k);
    el_error err;
    el_prediction *big = NULL;
    assert_int_equal(el_prediction_create(1, 1, 400, &big, &err), EL_OK);
    assert_int_equal(el_prediction_run(big, &f.model, &f.series, &err), EL_OK);
    el_prediction *fresh = run(&f);
    assert_int_equal(big->free_count, fresh->free_count);
    assert_memory_equal(big->free_run, fresh->free_run, fresh->free_count * sizeof(double));
    assert_memory_equal(big->one_step, fresh->one_step,
                        fresh->one_step_count * sizeof(double));
    el_prediction_destroy(fresh);
    el_prediction_destroy(big);
    fixture_free(&f);
}

static void test_bad_arguments(void **state)
{
    (void)state;
    el_error err;
    el_prediction *p = NULL;
    assert_int_equal(el_prediction_create(0, 0, 10, &p, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_prediction_create(1, 3, 4, &p, &err), EL_ERR_INTERNAL);
    assert_null(p);
    fixture f;
    fixture_init(&f, 2, 0, 50);
    assert_int_equal(el_prediction_create(1, 0, 50, &p, &err), EL_OK);
    assert_int_equal(el_prediction_run(p, &f.model, &f.series, &err), EL_ERR_INTERNAL);
    el_prediction_destroy(p);
    assert_int_equal(el_prediction_create(2, 0, 40, &p, &err), EL_OK);
    assert_int_equal(el_prediction_run(p, &f.model, &f.series, &err), EL_ERR_INTERNAL);
    el_prediction_destroy(p);
    el_prediction_destroy(NULL);
    fixture_free(&f);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_two_states_no_lags),
        cmocka_unit_test(test_two_channels_one_lag),
        cmocka_unit_test(test_nrmse_definition),
        cmocka_unit_test(test_divergence_flagged),
        cmocka_unit_test(test_plan_reuse),
        cmocka_unit_test(test_errors_without_traces),
        cmocka_unit_test(test_bad_arguments),
    };
    return cmocka_run_group_tests_name("el_predict", tests, NULL, NULL);
}
