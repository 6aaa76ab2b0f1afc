/* Coverage of the bootstrap bounds on simulated logs of a known system: a
 * small fixed-seed version of bench/calibrate.c (docs/uncertainty.md) on
 * its cheapest failing case, an overdamped two-state node (eigenvalues
 * -0.5 and -2 1/s) sampled 20 times per time constant of the slow mode,
 * 500 samples (25 time constants). The truth is set by the simulation, so
 * the check is against the nominal level, not against the program. */
#include "el_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_boot_bounds.h"
#include "el_fit.h"
#include "el_modes.h"
#include "el_resample.h"
#include "el_rng.h"

#define COV_LOGS 240
#define COV_SAMPLES 500
#define COV_DT 0.1
#define COV_SLOW (-0.5)
#define COV_FAST (-2.0)

/* x[k+1] = Ad x[k] + e[k], e ~ N(0, I), Ad = T diag(e^(-0.5 dt), e^(-2 dt))
 * T^-1 with T = [[1, 0.4], [-0.3, 1]] (det 1.12), from a stationary start
 * (a burn-in of 3000 steps, 150 time constants of the slow mode). */
static void simulate_node(size_t n, uint64_t stream, double *values)
{
    double g1 = exp(COV_SLOW * COV_DT), g2 = exp(COV_FAST * COV_DT);
    double t[4] = { 1.0, -0.3, 0.4, 1.0 };                       /* column-major */
    double ti[4] = { 1.0 / 1.12, 0.3 / 1.12, -0.4 / 1.12, 1.0 / 1.12 };
    double ad[4];
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++)
            ad[i + 2 * j] = t[i] * g1 * ti[2 * j] + t[i + 2] * g2 * ti[1 + 2 * j];
    el_rng rng;
    el_rng_seed(&rng, 20261204u, stream);
    double x0 = 0.0, x1 = 0.0;
    for (size_t k = 0; k < 3000 + n; k++) {
        if (k >= 3000) {
            values[k - 3000] = x0;
            values[n + k - 3000] = x1;
        }
        double y0 = ad[0] * x0 + ad[2] * x1 + el_rng_normal(&rng);
        double y1 = ad[1] * x0 + ad[3] * x1 + el_rng_normal(&rng);
        x0 = y0;
        x1 = y1;
    }
}

static void series_of(el_series *s, double *values, size_t n)
{
    static char *names[] = { "a", "b" };
    static char *units[] = { "", "" };
    memset(s, 0, sizeof *s);
    s->n_samples = n;
    s->n_channels = 2;
    s->dt = COV_DT;
    s->values = values;
    s->names = names;
    s->units = units;
    s->rows_used = n;
}

/* One log's fit, modes and (bo not NULL) bootstrap, zeroed first. */
typedef struct {
    el_model model;
    el_modes modes;
    el_boot_result br;
} fitted_log;

/* 1 when the fit, the modes and the bootstrap (when bo is given) all ran;
 * f holds what ran either way: free it with fitted_log_free. */
static int fit_log(const el_series *s, const el_fit_options *fo, const el_boot_options *bo,
                   fitted_log *f)
{
    memset(f, 0, sizeof *f);
    el_error err;
    el_error_clear(&err);
    return el_fit(s, fo, &f->model, NULL, &err) == EL_OK &&
           el_modes_compute(&f->model, &f->modes, NULL, &err) == EL_OK &&
           (bo == NULL ||
            el_boot_run(s, fo, &f->model, &f->modes, bo, &f->br, NULL, &err) == EL_OK);
}

static void fitted_log_free(fitted_log *f)
{
    el_boot_free(&f->br);
    el_modes_free(&f->modes);
    el_model_free(&f->model);
}

typedef struct {
    size_t ok, covered, above;
} cov_count;

/* Fits least squares to COV_LOGS logs, bootstraps each with the given
 * resampling (200 replicates, bias correction on: the defaults otherwise)
 * and counts how often the 95% bounds of Re lambda of the slow mode hold
 * the truth, and how often the truth lies above them. */
static cov_count run_study(el_resample_kind kind)
{
    cov_count c = { 0, 0, 0 };
    double *values = malloc(2 * COV_SAMPLES * sizeof(double));
    assert_non_null(values);
    for (size_t log = 0; log < COV_LOGS; log++) {
        simulate_node(COV_SAMPLES, log, values);
        el_series s;
        series_of(&s, values, COV_SAMPLES);
        el_fit_options fo;
        el_fit_defaults(&fo);
        el_boot_options bo;
        el_boot_defaults(&bo);
        bo.replicates = 200;
        bo.threads = 1;
        bo.kind = kind;
        bo.seed = 1 + log;
        fitted_log f;
        if (fit_log(&s, &fo, &bo, &f)) {
            const el_modes *modes = &f.modes;
            size_t best = 0;
            for (size_t q = 1; q < modes->n_modes; q++)
                if (fabs(modes->modes[q].lambda_re - COV_SLOW)
                    < fabs(modes->modes[best].lambda_re - COV_SLOW))
                    best = q;
            const el_interval *re = &f.br.bounds[best].re;
            c.ok++;
            c.covered += re->lo <= COV_SLOW && COV_SLOW <= re->hi;
            c.above += COV_SLOW > re->hi;
        }
        fitted_log_free(&f);
    }
    free(values);
    return c;
}

/* Tolerances. With N = 240 logs a coverage estimate has a binomial
 * standard error sqrt(p (1 - p) / N) = 0.014 at p = 0.95; a one-sided
 * miss rate at its nominal 0.025 has 0.010. Passing needs coverage >=
 * 0.92 (the target band's floor, about 2 standard errors below 0.95) and
 * misses above the bounds <= 0.055 (3 standard errors above 0.025).
 * Before the bounds were recentred on the bias-corrected estimate and
 * widened to the model-based spread (docs/uncertainty.md) these logs gave
 * 0.90 coverage with moving blocks and 0.89 with model-based replicates,
 * whose misses all lay above the bounds (0.11). */
static void test_coverage_blocks(void **state)
{
    (void)state;
    cov_count c = run_study(EL_RESAMPLE_BLOCKS);
    double n = (double)c.ok;
    print_message("blocks: %zu logs, coverage %.3f, above %.3f\n", c.ok, c.covered / n,
                  c.above / n);
    assert_true(c.ok >= COV_LOGS - 2);
    assert_true(c.covered / n >= 0.92);
    assert_true(c.above / n <= 0.055);
}

static void test_coverage_model(void **state)
{
    (void)state;
    cov_count c = run_study(EL_RESAMPLE_MODEL);
    double n = (double)c.ok;
    print_message("model: %zu logs, coverage %.3f, above %.3f\n", c.ok, c.covered / n,
                  c.above / n);
    assert_true(c.ok >= COV_LOGS - 2);
    assert_true(c.covered / n >= 0.92);
    assert_true(c.above / n <= 0.055);
}

/* x[k+1] = Ad x[k] + e[k] for a 2 x 2 Ad (column-major), e ~ N(0, I),
 * from a stationary start (3000 steps of burn-in), plus independent
 * sensor noise of sd sensor_rel times each channel's sd when > 0. */
static void simulate_2x2(const double *ad, size_t n, uint64_t seed, uint64_t stream,
                         double sensor_rel, double *values)
{
    el_rng rng;
    el_rng_seed(&rng, seed, stream);
    double x0 = 0.0, x1 = 0.0;
    for (size_t k = 0; k < 3000 + n; k++) {
        if (k >= 3000) {
            values[k - 3000] = x0;
            values[n + k - 3000] = x1;
        }
        double y0 = ad[0] * x0 + ad[2] * x1 + el_rng_normal(&rng);
        double y1 = ad[1] * x0 + ad[3] * x1 + el_rng_normal(&rng);
        x0 = y0;
        x1 = y1;
    }
    if (!(sensor_rel > 0.0))
        return;
    for (size_t c = 0; c < 2; c++) {
        double *v = values + c * n, mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < n; k++)
            mean += v[k];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            ss += (v[k] - mean) * (v[k] - mean);
        double sd = sqrt(ss / (double)n) * sensor_rel;
        for (size_t k = 0; k < n; k++)
            v[k] += sd * el_rng_normal(&rng);
    }
}

/* Ad of a spiral sink, lambda = -0.3 +- 2i 1/s, exactly discretised at
 * COV_DT and mixed by T = [[1, 0.4], [-0.3, 1]]. */
static void spiral_sink_ad(double *ad)
{
    double g = exp(-0.3 * COV_DT), c = g * cos(2.0 * COV_DT), sn = g * sin(2.0 * COV_DT);
    double b[4] = { c, sn, -sn, c };
    double t[4] = { 1.0, -0.3, 0.4, 1.0 };
    double ti[4] = { 1.0 / 1.12, 0.3 / 1.12, -0.4 / 1.12, 1.0 / 1.12 };
    double tb[4];
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++)
            tb[i + 2 * j] = t[i] * b[2 * j] + t[i + 2] * b[1 + 2 * j];
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++)
            ad[i + 2 * j] = tb[i] * ti[2 * j] + tb[i + 2] * ti[1 + 2 * j];
}

/* Least squares with its bias round on COV_LONG-sample logs of the spiral
 * sink, with or without 30 % sensor noise; counts the logs whose round
 * was refused by at least 1.5 spreads (the rule by which
 * el_verdict_method_fault withholds least squares). */
#define COV_LONG 20000
static size_t count_refused(size_t logs, double sensor_rel, size_t *n_ok)
{
    double ad[4];
    spiral_sink_ad(ad);
    double *values = malloc(2 * COV_LONG * sizeof(double));
    assert_non_null(values);
    size_t refused = 0;
    *n_ok = 0;
    for (size_t log = 0; log < logs; log++) {
        simulate_2x2(ad, COV_LONG, 20261205u, log, sensor_rel, values);
        el_series s;
        series_of(&s, values, COV_LONG);
        el_fit_options fo;
        el_fit_defaults(&fo);
        el_boot_options bo;
        el_boot_defaults(&bo);
        bo.replicates = 200;
        bo.threads = 1;
        bo.seed = 1 + log;
        fitted_log f;
        if (fit_log(&s, &fo, &bo, &f)) {
            (*n_ok)++;
            refused += f.br.bias_refused && f.br.bias_refused_spreads >= 1.5;
        }
        fitted_log_free(&f);
    }
    free(values);
    return refused;
}

/* Least squares under 30 % sensor noise at 20,000 samples: its estimate
 * sits 4 to 12 spreads of its replicates off the truth (errors in
 * variables; bench/calibrate.c covered 0 of 60 such logs). The tapered
 * bias round has 12 replicates there, fewer than the 20 that may judge a
 * spread of their own, so the refusal that withholds such a fit was never
 * made and the logs kept bounds that cannot cover. Now the round is
 * judged against the replicates' spread (el_resample.c,
 * judge_small_round). Tolerance: every one of 6 noisy logs must be
 * refused (calibrate: 60 of 60; a shift of 4 spreads against a threshold
 * of about 1.1 leaves no room for chance), and none of 6 logs without
 * sensor noise (its false-refusal rate is below 0.3 % a log: three Monte
 * Carlo standard errors of a median of 12). Without the change the first
 * count is 0. */
static void test_sensor_noise_long_log_refused(void **state)
{
    (void)state;
    size_t ok_noisy = 0, ok_clean = 0;
    size_t noisy = count_refused(6, 0.3, &ok_noisy);
    size_t clean = count_refused(6, 0.0, &ok_clean);
    print_message("20000 samples: refused %zu of %zu noisy logs, %zu of %zu clean\n", noisy,
                  ok_noisy, clean, ok_clean);
    assert_int_equal(ok_noisy, 6);
    assert_int_equal(ok_clean, 6);
    assert_int_equal(noisy, 6);
    assert_int_equal(clean, 0);
}

/* hankel on an overdamped node at COV_HK_SAMPLES: counts, of `logs` logs
 * from random streams first, first + 1, ..., the logs whose automatic
 * model holds a real pole within 20 % of the slow one (the least-damped
 * mode, whose bounds the coverage is about); *n_ok receives the logs that
 * gave a model at all. ad NULL: simulate_node; else simulate_2x2 of that
 * Ad with the given seed. */
#define COV_HK_SAMPLES 20000
#define COV_HK_LOGS 16
static size_t count_slow_kept(const double *ad, uint64_t seed, uint64_t first, size_t logs,
                              size_t *n_ok)
{
    double *values = malloc(2 * COV_HK_SAMPLES * sizeof(double));
    assert_non_null(values);
    size_t kept = 0;
    *n_ok = 0;
    for (size_t log = 0; log < logs; log++) {
        if (ad == NULL)
            simulate_node(COV_HK_SAMPLES, first + log, values);
        else
            simulate_2x2(ad, COV_HK_SAMPLES, seed, first + log, 0.0, values);
        el_series s;
        series_of(&s, values, COV_HK_SAMPLES);
        el_fit_options fo;
        el_fit_defaults(&fo);
        fo.method = EL_METHOD_HANKEL;
        fitted_log f;
        if (fit_log(&s, &fo, NULL, &f)) {
            (*n_ok)++;
            int found = 0;
            for (size_t q = 0; q < f.modes.n_modes; q++)
                found |= !f.modes.modes[q].pair &&
                         fabs(f.modes.modes[q].lambda_re - COV_SLOW) <= 0.2 * fabs(COV_SLOW);
            kept += (size_t)found;
        }
        fitted_log_free(&f);
    }
    free(values);
    return kept;
}

/* The block-Hankel estimator (the default on multi-sensor logs) dropped
 * the slow real pole of an overdamped node: the stabilisation asked 1 %
 * in natural frequency between consecutive orders of every pole, and the
 * late-chain rule dated a chain broken once by a noise pole of the same
 * frequency from where it restarted (docs/uncertainty.md, "Round of
 * 2026-12-05"; calibrate: 31 of 60 sink logs at 20,000 samples gave a
 * model, 57 after). No bootstrap of a model without the slow pole covers
 * it. Tolerance: at least 12 of the 16 logs must give a model holding the
 * slow pole within 20 % (calibrate after the change: 51 of 60 do, 0.85:
 * 57 with a model, 6 of them holding only the fast pole;
 * 12 of 16 is 1.1 binomial standard errors below that rate; before the
 * change 9 of 16 did, and 16 of 16 after). */
static void test_hankel_keeps_slow_pole(void **state)
{
    (void)state;
    size_t ok = 0;
    size_t kept = count_slow_kept(NULL, 0, 1000, COV_HK_LOGS, &ok);
    print_message("hankel, overdamped node, 20000 samples: %zu of %d logs with a model, "
                  "%zu with the slow pole\n", ok, COV_HK_LOGS, kept);
    assert_true(kept >= 12);
}

/* Ad of bench/calibrate.c's "sink" case (eigenvalues -0.5 and -2 1/s,
 * dt 0.1, mixing T = I + 0.35 sin(1 + 3 i + 7 j) off the diagonal, i, j
 * from 0), so that simulate_2x2 with calibrate's seed for that case and
 * length (20240601 + 20000: case 0) draws calibrate's logs. */
static void calibrate_sink_ad(double *ad)
{
    double b0 = exp(COV_SLOW * COV_DT), b1 = exp(COV_FAST * COV_DT);
    double t10 = 0.35 * sin(4.0), t01 = 0.35 * sin(8.0);
    double det = 1.0 - t01 * t10;
    double t[4] = { 1.0, t10, t01, 1.0 };                       /* column-major */
    double ti[4] = { 1.0 / det, -t10 / det, -t01 / det, 1.0 / det };
    for (int i = 0; i < 2; i++)
        for (int j = 0; j < 2; j++)
            ad[i + 2 * j] = t[i] * b0 * ti[2 * j] + t[i + 2] * b1 * ti[1 + 2 * j];
}

/* The automatic model took its poles from the stage's automatic order
 * only, the smallest with the most physical poles at once, noise chains
 * included. On overdamped nodes a noise pole entering at order 8-14 broke
 * the slow pole's chain there; both were then dated late and the model
 * kept only the fast pole, while the orders below held both (calibrate
 * --method hankel --case sink --misses: logs 25, 38, 47, 55, 57, 59 of 60
 * at 20,000 samples; coverage 0.877). Now the order whose physical poles
 * give the most eigenvalues is taken (kept_poles in el_est_hankel.c).
 * Calibrate's logs 40-59 of that cell: before, 16 of the 20 held the slow
 * pole (47, 55, 57 and 59 did not); after, 18 (the other two hold a slow
 * pole no order of their stage places within 20 %). The truth is the
 * simulated system's -0.5 1/s; 20 % is the distance at which a pole is
 * the slow one and not the fast one (-2 1/s, 300 % away); at least 17 of
 * 20: one log of margin for a log changed by rounding in the simulation
 * (Ad here is a closed-form inverse, calibrate's an LU solve), and still
 * one more than before the change. */
static void test_hankel_slow_pole_from_lower_orders(void **state)
{
    (void)state;
    double ad[4];
    calibrate_sink_ad(ad);
    size_t ok = 0;
    size_t kept = count_slow_kept(ad, 20240601u + 20000u, 40, 20, &ok);
    print_message("hankel, calibrate's sink logs 40-59 at 20000 samples: %zu with a model, "
                  "%zu with the slow pole\n", ok, kept);
    assert_true(kept >= 17);
}

/* P(X <= x) of binomial(n, p) by the product form of each term (the
 * test's own arithmetic, not the library's lgamma sums). */
static double binom_cdf_products(size_t x, size_t n, double p)
{
    double s = 0.0;
    for (size_t k = 0; k <= x; k++) {
        double t = 1.0;
        for (size_t i = 0; i < k; i++)
            t *= (double)(n - i) / (double)(i + 1) * p;
        for (size_t i = k; i < n; i++)
            t *= 1.0 - p;
        s += t;
    }
    return s;
}

/* calibrate's per-cell judgement (el_boot_coverage_interval, _judge,
 * _chance). Checks: (1) the exact interval's closed forms at the ends
 * (x = 0: upper end 1 - 0.025^(1/n); x = n: lower end 0.025^(1/n), from
 * P(X = 0) = (1 - p)^n and P(X = n) = p^n); (2) inside, each end of the
 * interval of 57 of 60 puts 2.5 % in its tail, by the test's own product
 * sums; (3) the judge of 60 logs against 0.95 says low exactly where
 * P(X <= x) < 0.025 (x <= 52: coverage 0.867 and below, by the product
 * sums; 53 of 60 gives 0.0297) and never high (P(X = 60) = 0.95^60 =
 * 0.046); (4) the chance that a method covering exactly 0.95 puts a
 * 60-log cell outside 0.92-0.98 is P(X <= 55) + P(X >= 59) = 0.1803 +
 * 0.1916 = 0.3719 (hand sums of the binomial terms). Tolerances: 1e-9 for
 * the interval (bisection to 2^-60; the sums' rounding is near 1e-15 per
 * term) and for the tails; 5e-4 for 0.3719 (its four digits). */
static void test_coverage_binomial_judgement(void **state)
{
    (void)state;
    double lo, hi;
    el_boot_coverage_interval(0, 60, 0.95, &lo, &hi);
    assert_close(lo, 0.0, 0.0, 1e-12);
    assert_close(hi, 1.0 - pow(0.025, 1.0 / 60.0), 0.0, 1e-9);
    el_boot_coverage_interval(60, 60, 0.95, &lo, &hi);
    assert_close(lo, pow(0.025, 1.0 / 60.0), 0.0, 1e-9);
    assert_close(hi, 1.0, 0.0, 1e-12);
    el_boot_coverage_interval(57, 60, 0.95, &lo, &hi);
    assert_close(1.0 - binom_cdf_products(56, 60, lo), 0.025, 0.0, 1e-9);
    assert_close(binom_cdf_products(57, 60, hi), 0.025, 0.0, 1e-9);
    for (size_t x = 40; x <= 60; x++) {
        int expect = binom_cdf_products(x, 60, 0.95) < 0.025 ? -1 : 0;
        assert_int_equal(el_boot_coverage_judge(x, 60, 0.95, 0.95), expect);
    }
    assert_int_equal(el_boot_coverage_judge(52, 60, 0.95, 0.95), -1);
    assert_int_equal(el_boot_coverage_judge(53, 60, 0.95, 0.95), 0);
    assert_int_equal(el_boot_coverage_judge(240, 240, 0.95, 0.95), 1);
    double out_band, reject;
    el_boot_coverage_chance(60, 0.95, 0.92, 0.98, 0.95, &out_band, &reject);
    assert_close(out_band, 0.3719, 0.0, 5e-4);
    assert_close(reject, binom_cdf_products(52, 60, 0.95), 0.0, 1e-9);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_coverage_blocks),
        cmocka_unit_test(test_coverage_model),
        cmocka_unit_test(test_sensor_noise_long_log_refused),
        cmocka_unit_test(test_hankel_keeps_slow_pole),
        cmocka_unit_test(test_hankel_slow_pole_from_lower_orders),
        cmocka_unit_test(test_coverage_binomial_judgement),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
