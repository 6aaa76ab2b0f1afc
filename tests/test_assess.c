/* Tests of the whole assess pipeline on the bundled demo logs: the verdict
 * and the recovered dynamics must match the documented truth of each
 * invented scenario (datasets/README.md, simulated by exact discretisation
 * from known matrices, so the truth is known independently of the fit).
 * Also the Moran (1953) lynx check end to end through ingest, and the JSON
 * contract's NaN-free rule. Tests run from the repository root. */
#include "el_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_assess.h"
#include "el_report.h"

static el_assessment run(const char *path, size_t lags, size_t replicates)
{
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.path = path;
    opt.fit.lags = lags;
    opt.boot.replicates = replicates;
    opt.boot.threads = 2;
    opt.boot.seed = 7;
    el_assessment r;
    memset(&r, 0, sizeof r);
    el_error err;
    el_error_clear(&err);
    el_status st = el_assess_run(&opt, &r, &err);
    if (st != EL_OK) {
        char text[1024];
        print_error("%s\n", el_error_format(&err, text, sizeof text));
    }
    assert_int_equal(st, EL_OK);
    return r;
}

/* booster_pump.csv truth (datasets/README.md): lambda = -0.131947 +/-
 * 2.195155i 1/s, f_d = 0.3493698 Hz, spiral sink, stable, operating point
 * 6.2 bar / 42.0 m3/h. Tolerances from the README's Monte Carlo of 200
 * logs: sd(Re) = 0.0136 1/s -> 3 sd = 0.041; frequency within 1% (sd of Im
 * is 0.0129 1/s = 0.6% of 2.195). Operating point: the mean of a lightly
 * damped process of std 0.041 bar / 0.65 m3/h over 600 s with time constant
 * 7.6 s has sd about std * sqrt(2 tau / T) = 0.0065 bar / 0.10 m3/h; we
 * allow 3 sd. */
static void test_booster_pump_truth(void **state)
{
    (void)state;
    el_assessment r = run("datasets/booster_pump.csv", 0, 300);
    assert_int_equal(r.model.state_dim, 2);
    assert_int_equal(r.modes.n_modes, 1);
    const el_mode *m = &r.modes.modes[0];
    assert_true(m->pair);
    assert_close(m->lambda_re, -0.131947, 0.0, 0.041);
    assert_close(m->frequency_hz, 0.3493698, 0.01, 0.0);
    assert_close(m->damping_ratio, 0.06, 0.0, 0.019);
    assert_close(r.model.operating_point[0], 6.2, 0.0, 0.02);
    assert_close(r.model.operating_point[1], 42.0, 0.0, 0.3);
    assert_int_equal(r.verdict.stability, EL_STABLE);
    assert_false(r.verdict.ambiguous);
    assert_true(r.verdict.has_plane);
    assert_int_equal(r.verdict.region, EL_REGION_SPIRAL_SINK);
    assert_true(r.verdict.p_stable >= 0.95);
    /* The true Re lambda should sit inside the 95% bounds; it is the
     * statistical promise of the bounds, checked on this one log. */
    assert_true(r.boot.bounds[0].re.lo <= -0.131947 && -0.131947 <= r.boot.bounds[0].re.hi);
    el_assessment_free(&r);
}

/* rig_test.csv truth (datasets/README.md): growing mode lambda = +0.0300007
 * +/- 5.026552i (0.8000007 Hz), stable mode -0.7539937 +/- 15.06078i
 * (2.396998 Hz); unstable. Tolerances from the README's Monte Carlo: growing
 * Re sd 0.0034 -> 3 sd = 0.0102; stable Re sd 0.088 -> 0.27; frequencies
 * within 1%. */
static void test_rig_test_truth(void **state)
{
    (void)state;
    el_assessment r = run("datasets/rig_test.csv", 0, 300);
    assert_int_equal(r.model.state_dim, 4);
    assert_int_equal(r.modes.n_modes, 2);
    const el_mode *grow = &r.modes.modes[0];
    const el_mode *stable = &r.modes.modes[1];
    assert_close(grow->lambda_re, 0.0300007, 0.0, 0.0102);
    assert_close(grow->frequency_hz, 0.8000007, 0.01, 0.0);
    assert_true(grow->time_constant_s > 0);
    assert_close(stable->lambda_re, -0.7539937, 0.0, 0.27);
    assert_close(stable->frequency_hz, 2.396998, 0.01, 0.0);
    assert_int_equal(r.verdict.stability, EL_UNSTABLE);
    assert_false(r.verdict.ambiguous);
    assert_true(r.verdict.p_stable <= 0.05);
    assert_int_equal(r.verdict.n_unstable_oscillatory, 2);
    assert_int_equal(r.verdict.n_stable_oscillatory, 2);
    el_assessment_free(&r);
}

/* Moran, P.A.P. (1953), Australian Journal of Zoology 1, 163-173: AR(2) on
 * log10 lynx trappings, x_t = 1.05 + 1.41 x_{t-1} - 0.77 x_{t-2}, complex
 * roots (spiral sink) with period near 9.8 years. Through the whole
 * pipeline from a CSV with a prepared log10 column; the tolerances (0.03 on
 * coefficients, 0.3 years on the period) are justified in
 * ../shared/reference/README.md: least squares on this file differs from
 * Moran's estimator by up to 0.026 in the coefficients and 0.04 years. */
static void test_lynx_moran_end_to_end(void **state)
{
    (void)state;
    FILE *in = fopen("tests/data/lynx_1821_1934.csv", "r");
    assert_non_null(in);
    char path[] = "/tmp/eigenlog_lynxXXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *out = fdopen(fd, "w");
    char line[256];
    assert_non_null(fgets(line, sizeof line, in));
    fprintf(out, "year [yr],log10_trappings\n");
    int year, count;
    while (fscanf(in, "%d,%d", &year, &count) == 2)
        fprintf(out, "%d,%.17g\n", year, log10((double)count));
    fclose(in);
    fclose(out);
    el_assessment r = run(path, 1, 0);
    remove(path);
    /* Ad's first row holds the AR coefficients of x_{t-1} and x_{t-2}. */
    assert_close(r.model.ad[0], 1.41, 0.0, 0.03);
    assert_close(r.model.ad[2], -0.77, 0.0, 0.03);
    assert_close(r.model.offset[0], 1.05, 0.0, 0.03);
    const el_mode *m = &r.modes.modes[0];
    assert_true(m->pair);
    assert_close(1.0 / m->frequency_hz, 9.8, 0.0, 0.3);
    assert_int_equal(r.verdict.region, EL_REGION_SPIRAL_SINK);
    el_assessment_free(&r);
}

/* DESIGN.md: "a value that does not exist is null, never NaN". Without a
 * bootstrap p_stable does not exist; the JSON must say null and contain no
 * nan/inf token anywhere. */
static void test_json_has_no_nan(void **state)
{
    (void)state;
    el_assessment r = run("datasets/booster_pump.csv", 0, 0);
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.boot.replicates = 0;
    el_buf out = {0};
    assert_int_equal(el_report_json(&r, &opt, &out), EL_OK);
    assert_non_null(strstr(out.data, "\"p_stable\": null"));
    /* A JSON number follows ": ", ", " or "[" (el_json's layout); words
     * inside strings such as "information" never follow those. */
    static const char *const bad[] = {"nan", "-nan", "inf", "-inf", "NaN", "Inf", "-Inf"};
    static const char *const before[] = {": ", ", ", "["};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        for (size_t k = 0; k < sizeof before / sizeof before[0]; k++) {
            char token[16];
            snprintf(token, sizeof token, "%s%s", before[k], bad[i]);
            assert_null(strstr(out.data, token));
        }
    el_buf_free(&out);
    el_assessment_free(&r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_booster_pump_truth),
        cmocka_unit_test(test_rig_test_truth),
        cmocka_unit_test(test_lynx_moran_end_to_end),
        cmocka_unit_test(test_json_has_no_nan),
    };
    return cmocka_run_group_tests_name("assess", tests, NULL, NULL);
}
