/* Coverage of the bootstrap bounds on simulated logs of a known system: a
 * small fixed-seed version of bench/calibrate.c (docs/uncertainty.md) on
 * its cheapest failing case, an overdamped two-state node (eigenvalues
 * -0.5 and -2 1/s) sampled 20 times per time constant of the slow mode,
 * 500 samples (25 time constants). The truth is set by the simulation, so
 * the check is against the nominal level, not against the program. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

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

typedef struct {
    size_t ok, covered, above;
} cov_count;

/* Fits least squares to COV_LOGS logs, bootstraps each with the given
 * resampling (200 replicates, bias correction on: the defaults otherwise)
 * and counts how often the 95% bounds of Re lambda of the slow mode hold
 * the truth, and how often the truth lies above them. */
static cov_count run_study(el_resample_kind kind)
{
    static char *names[] = { "a", "b" };
    static char *units[] = { "", "" };
    cov_count c = { 0, 0, 0 };
    double *values = malloc(2 * COV_SAMPLES * sizeof(double));
    assert_non_null(values);
    for (size_t log = 0; log < COV_LOGS; log++) {
        simulate_node(COV_SAMPLES, log, values);
        el_series s;
        memset(&s, 0, sizeof s);
        s.n_samples = COV_SAMPLES;
        s.n_channels = 2;
        s.dt = COV_DT;
        s.values = values;
        s.names = names;
        s.units = units;
        s.rows_used = COV_SAMPLES;
        el_fit_options fo;
        el_fit_defaults(&fo);
        el_model model;
        memset(&model, 0, sizeof model);
        el_modes modes;
        memset(&modes, 0, sizeof modes);
        el_boot_result br;
        memset(&br, 0, sizeof br);
        el_boot_options bo;
        el_boot_defaults(&bo);
        bo.replicates = 200;
        bo.threads = 1;
        bo.kind = kind;
        bo.seed = 1 + log;
        el_error err;
        el_error_clear(&err);
        if (el_fit(&s, &fo, &model, NULL, &err) == EL_OK
            && el_modes_compute(&model, &modes, NULL, &err) == EL_OK
            && el_boot_run(&s, &fo, &model, &modes, &bo, &br, NULL, &err) == EL_OK) {
            size_t best = 0;
            for (size_t q = 1; q < modes.n_modes; q++)
                if (fabs(modes.modes[q].lambda_re - COV_SLOW)
                    < fabs(modes.modes[best].lambda_re - COV_SLOW))
                    best = q;
            const el_interval *re = &br.bounds[best].re;
            c.ok++;
            c.covered += re->lo <= COV_SLOW && COV_SLOW <= re->hi;
            c.above += COV_SLOW > re->hi;
        }
        el_boot_free(&br);
        el_modes_free(&modes);
        el_model_free(&model);
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

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_coverage_blocks),
        cmocka_unit_test(test_coverage_model),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
