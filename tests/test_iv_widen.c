/* Tests of the spread round of the bootstrap (el_resample.c,
 * EL_MODEL_RESAMPLING_SPREAD): iv's moving-block replicates widened to the
 * spread of model-based replicates that regenerate iv's reduced states
 * through its own fit. On iv's automatic multi-step state the blocks keep
 * about 0.8-0.9 of the estimate's spread (docs/uncertainty.md, "iv's basis
 * in the replicates" and "Model-based widening for iv"). The truth here is
 * the simulated system itself (a closed-form discretisation of known
 * continuous eigenvalues), outside the project's estimators. */
#include "el_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_fit.h"
#include "el_modes.h"
#include "el_resample.h"
#include "el_rng.h"

static char *names2[] = { "a", "b" };
static char *units2[] = { "", "" };

/* x[k+1] = Ad x[k] + e[k], e ~ N(0, I), two channels, after a burn-in of
 * 500 steps from rest (a stationary log); Ad has the continuous
 * eigenvalues re +- i im exactly: Ad = T exp(dt [[re, -im], [im, re]])
 * T^-1 with T = [[1, 0.4], [-0.3, 1]] (det 1.12), and the exponential of
 * that block is e^(re dt) times a rotation by im dt. */
static void simulate_pair(double re, double im, double dt, size_t n, uint64_t seed,
                          double *values)
{
    double g = exp(re * dt), c = cos(im * dt), s = sin(im * dt);
    double b[4] = { g * c, g * s, -g * s, g * c }; /* column-major */
    double t[4] = { 1.0, -0.3, 0.4, 1.0 };
    double ti[4] = { 1.0 / 1.12, 0.3 / 1.12, -0.4 / 1.12, 1.0 / 1.12 };
    double tb[4], ad[4];
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++)
            tb[i + 2 * j] = t[i] * b[2 * j] + t[i + 2] * b[1 + 2 * j];
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++)
            ad[i + 2 * j] = tb[i] * ti[2 * j] + tb[i + 2] * ti[1 + 2 * j];
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    double x0 = 0.0, x1 = 0.0;
    for (size_t k = 0; k < n + 500; k++) {
        if (k >= 500) {
            values[k - 500] = x0;
            values[n + k - 500] = x1;
        }
        double y0 = ad[0] * x0 + ad[2] * x1 + el_rng_normal(&rng);
        double y1 = ad[1] * x0 + ad[3] * x1 + el_rng_normal(&rng);
        x0 = y0;
        x1 = y1;
    }
}

/* One log fitted by iv with the defaults (its automatic multi-step state)
 * and bootstrapped with the defaults (moving blocks; bias_correct runs the
 * spread round), replicates as given. Returns 0 and the point Re lambda
 * of the least-damped mode and its bounds, or 1 when the fit or the
 * bootstrap fails. */
static int boot_one(double re, double im, double dt, size_t n, uint64_t seed,
                    size_t replicates, int spread_round, double *point, double *lo,
                    double *hi)
{
    double *values = malloc(2 * n * sizeof(double));
    assert_non_null(values);
    simulate_pair(re, im, dt, n, seed, values);
    el_series s;
    memset(&s, 0, sizeof s);
    s.n_samples = n;
    s.n_channels = 2;
    s.dt = dt;
    s.values = values;
    s.names = names2;
    s.units = units2;
    s.rows_used = n;
    el_fit_options fo;
    el_fit_defaults(&fo);
    fo.method = EL_METHOD_IV;
    el_model model;
    el_modes modes;
    memset(&model, 0, sizeof model);
    memset(&modes, 0, sizeof modes);
    el_error err;
    el_error_clear(&err);
    int fail = el_fit(&s, &fo, &model, NULL, &err) != EL_OK
               || el_modes_compute(&model, &modes, NULL, &err) != EL_OK;
    el_boot_result res;
    memset(&res, 0, sizeof res);
    if (!fail) {
        el_boot_options bo;
        el_boot_defaults(&bo);
        bo.replicates = replicates;
        bo.threads = 2;
        bo.seed = seed;
        bo.bias_correct = spread_round;
        fail = el_boot_run(&s, &fo, &model, &modes, &bo, &res, NULL, &err) != EL_OK;
    }
    if (!fail) {
        size_t best = 0;
        for (size_t q = 1; q < modes.n_modes; q++)
            if (modes.modes[q].lambda_re > modes.modes[best].lambda_re)
                best = q;
        *point = modes.modes[best].lambda_re;
        *lo = res.bounds[best].re.lo;
        *hi = res.bounds[best].re.hi;
        fail = !(*hi > *lo);
    }
    el_boot_free(&res);
    el_modes_free(&modes);
    el_model_free(&model);
    free(values);
    return fail;
}

static void sort_doubles(double *v, size_t n)
{
    for (size_t i = 1; i < n; i++)
        for (size_t j = i; j > 0 && v[j - 1] > v[j]; j--) {
            double t = v[j];
            v[j] = v[j - 1];
            v[j - 1] = t;
        }
}

/* The round's size (el_boot_spread_rule): the full 200 replicates at
 * weight 1 for a two-channel log of 5,000 samples (r = 2: 45 features a
 * window, about 4,950 windows; the calibration's longest full round), a
 * share of the budget for wider states or longer logs, never more than
 * the bias rule's taper, none below 20 replicates; its cost (replicates x
 * windows x features) never above the budget. */
static void test_spread_rule(void **state)
{
    (void)state;
    el_boot_bias_plan p = el_boot_spread_rule(4985, 4955, 45);
    assert_int_equal(p.replicates, 200);
    assert_true(p.weight == 1.0);
    /* Rank 8 (4 r = 32 numbers a window: 561 features), 10,000 pairs: a
     * track window of eight channels gets no round (floor(45e6 / (9,960
     * x 561)) = 8 < 20). */
    p = el_boot_spread_rule(10000, 9960, 561);
    assert_int_equal(p.replicates, 0);
    assert_true(p.weight == 0.0);
    /* Rank 4 (153 features), 2,000 windows: floor(45e6 / 306,000) = 147,
     * weight 147 / 200. */
    p = el_boot_spread_rule(2000, 2000, 153);
    assert_int_equal(p.replicates, 147);
    assert_true(fabs(p.weight - 0.735) < 1e-15);
    /* Long logs: the bias rule's taper (12 replicates at 20,000 pairs:
     * below 20, no round). */
    assert_int_equal(el_boot_spread_rule(20000, 19900, 45).replicates, 0);
    assert_int_equal(el_boot_spread_rule(0, 0, 45).replicates, 0);
    for (size_t n = 100; n <= 80000; n += 100) {
        el_boot_bias_plan q = el_boot_spread_rule(n, n, 45);
        assert_true(q.replicates <= el_boot_bias_rule(n).replicates);
        assert_true((double)q.replicates * (double)n * 45.0 <= EL_BOOT_SPREAD_BUDGET);
        assert_true(q.replicates == 0 || q.replicates >= 20);
    }
}

/* The spread round widens, never narrows: on one log, iv's Re bounds with
 * the round hold the bounds without it (the factor el_boot_widen_factor
 * is at least 1 and the replicates are widened about their median, which
 * recentre puts at the point estimate either way), and on this log they
 * are wider (the round's spread exceeds the blocks': a log of the kind of
 * the test below, where the blocks keep about 0.9 of the spread; this
 * one's factor is 1.11). Without the round the two runs are the same. */
static void test_spread_round_widens(void **state)
{
    (void)state;
    double p0, lo0, hi0, p1, lo1, hi1;
    assert_int_equal(boot_one(-0.3, 2.0, 0.1, 500, 9001, 400, 0, &p0, &lo0, &hi0), 0);
    assert_int_equal(boot_one(-0.3, 2.0, 0.1, 500, 9001, 400, 1, &p1, &lo1, &hi1), 0);
    printf("one log: without the round [%.4f, %.4f], with it [%.4f, %.4f]\n", lo0, hi0,
           lo1, hi1);
    assert_true(p0 == p1);
    /* Widened about the same median: each bound moves outward (to
     * rounding: 1e-12 of a bound of order 1). */
    assert_true(lo1 <= lo0 + 1e-12);
    assert_true(hi1 >= hi0 - 1e-12);
    /* Wider by at least 5 % (this log: 0.3371 / 0.3035 = 1.11; the
     * round's 200-replicate IQR spread has a Monte Carlo error of about
     * 8 %, so a factor measured near 1.1 stays above 1.05 for this fixed
     * seed; its bounds are printed above). */
    assert_true(hi1 - lo1 >= 1.05 * (hi0 - lo0));
}

/* A spiral sink (-0.3 +- 2i 1/s, dt 0.1 s: the calibration's case) of
 * IW_SAMPLES samples, IW_LOGS logs of fixed seeds, 200 replicates each:
 * per log the standardised error z = (estimate - truth) / (width / 3.92)
 * of Re lambda of the pair, whose spread is 1 for bounds of the right
 * width (percentile bounds of a normal law are 3.92 standard deviations
 * wide). Figures of this test's logs (printed when it runs): without the
 * round (bias_correct 0, or the library before the round) the spread of z
 * is 1.127 and the coverage 0.887 (both checks below fail), with it 1.038
 * and 0.925. The check asks a spread of at most 1.10: the IQR-based
 * spread of K normal values has a standard error of about sqrt(1.36 / K)
 * = 0.075 at K = 240 (the IQR estimate of a standard deviation has a
 * relative efficiency of about 0.37 against the sample's, whose variance
 * is 1 / (2 K); common practice, recalled from memory), so 1.10 lies 1.3
 * standard errors above the right width (a calibrated bootstrap fails it
 * with a chance of about 10 %; the fixed seeds make the outcome the same
 * on every run and thread count), and at least 0.85, two standard errors
 * below 1: the round must not make the bounds too wide. */
#define IW_LOGS 240
#define IW_SAMPLES 500
static void test_iv_bounds_width(void **state)
{
    (void)state;
    double truth = -0.3;
    double z[IW_LOGS];
    size_t got = 0, covered = 0;
    for (size_t i = 0; i < IW_LOGS; i++) {
        double point = 0.0, lo = 0.0, hi = 0.0;
        if (boot_one(truth, 2.0, 0.1, IW_SAMPLES, 8000 + i, 200, 1, &point, &lo, &hi))
            continue;
        z[got++] = (point - truth) / ((hi - lo) / 3.92);
        covered += lo <= truth && truth <= hi;
    }
    assert_true(got >= IW_LOGS - 2);
    sort_doubles(z, got);
    double q1 = el_boot_quantile(z, got, 0.25), q3 = el_boot_quantile(z, got, 0.75);
    double spread = (q3 - q1) / 1.349;
    double coverage = (double)covered / (double)got;
    printf("iv, spiral sink, %zu samples, %zu logs: spread of z %.3f (1 = right width), "
           "coverage %.3f\n", (size_t)IW_SAMPLES, got, spread, coverage);
    assert_true(spread <= 1.10);
    assert_true(spread >= 0.85);
    /* Coverage within 3 binomial standard errors of 0.95 (0.014 at 240
     * logs): at least 0.91. */
    assert_true(coverage >= 0.91);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_spread_rule),
        cmocka_unit_test(test_spread_round_widens),
        cmocka_unit_test(test_iv_bounds_width),
    };
    return cmocka_run_group_tests_name("iv_widen", tests, NULL, NULL);
}
