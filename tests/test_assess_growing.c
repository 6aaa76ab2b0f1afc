/* Tests of --method auto on short growing multi-sensor logs: the block-
 * Hankel estimator's moving-block bootstrap takes every window of the log
 * as alike, which a growing envelope breaks (the late windows carry most
 * of the cross-product sums), so auto keeps iv on a log whose envelope
 * grows 3-fold or more (el_assess.c, choose_subspace; docs/method.md,
 * "Estimator choice"). The logs are simulated here from known modes, so
 * the truth is the simulation's, not a fit's. */
#include "el_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "el_assess.h"
#include "el_linalg.h"
#include "el_regime.h"
#include "el_rng.h"

#define N_MODES 2
#define N_SENSORS 4

/* System 13 of bench/fresh_family.py's tuning set (seed 5120512): two
 * oscillators q'' + 2 zeta w q' + w^2 q = f, 3.404 Hz at zeta -0.00438
 * (Re lambda +0.0936 1/s: growing 6.9-fold over the 20.7-s log) and
 * 5.753 Hz at zeta 0.187, seen by two strain gauges (q), an
 * accelerometer (q'') and a velocity sensor (q'), 200 Hz, 4,133 samples.
 * The growing mode starts from an amplitude of 2 (velocity) at a seeded
 * phase; the process noise has about unit velocity variance per mode as
 * in the family (intensity 4 max(|zeta|, 0.01) w), the sensor noise is
 * white at snr_db of each channel's standard deviation. Exact
 * discretisation of each mode (el_discretise, Van Loan 1978), so the
 * sampled eigenvalues are exactly exp(lambda dt). */
static const double fn_hz[N_MODES] = { 3.404028545, 5.752612797 };
static const double zeta[N_MODES] = { -0.004376633, 0.186959980 };
static const double phi[N_SENSORS][N_MODES] = {
    { 0.0170777, 0.0658929 }, { 1.9561369, 0.9506478 },
    { 0.8385318, -0.3761031 }, { 1.0386246, 0.5250411 },
};

static void write_growing(const char *path, size_t n, double snr_db, uint64_t seed)
{
    const double dt = 0.005;
    double ad[N_MODES][4], g[N_MODES][4];
    double *work = malloc(el_discretise_work_size(2) * sizeof *work);
    assert_non_null(work);
    int iwork[4];
    for (size_t m = 0; m < N_MODES; m++) {
        double w = 2.0 * M_PI * fn_hz[m];
        double a[4] = { 0.0, -w * w, 1.0, -2.0 * zeta[m] * w };   /* column-major */
        double q[4] = { 0.0, 0.0, 0.0, 4.0 * fmax(fabs(zeta[m]), 0.01) * w };
        double qd[4];
        el_error err;
        el_error_clear(&err);
        assert_int_equal(el_discretise(2, a, q, dt, ad[m], qd, g[m], work, iwork, &err),
                         EL_OK);
    }
    free(work);
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    double x[N_MODES][2];
    for (size_t m = 0; m < N_MODES; m++) {
        double w = 2.0 * M_PI * fn_hz[m], ph = 2.0 * M_PI * el_rng_uniform(&rng);
        x[m][0] = 2.0 * cos(ph) / w;
        x[m][1] = 2.0 * sin(ph);
    }
    double *y = malloc(N_SENSORS * n * sizeof *y);
    assert_non_null(y);
    for (size_t k = 0; k < n; k++) {
        double q[N_MODES], qdot[N_MODES], acc[N_MODES];
        for (size_t m = 0; m < N_MODES; m++) {
            double w = 2.0 * M_PI * fn_hz[m];
            q[m] = x[m][0];
            qdot[m] = x[m][1];
            acc[m] = -w * w * q[m] - 2.0 * zeta[m] * w * qdot[m];
        }
        for (size_t r = 0; r < N_SENSORS; r++) {
            const double *kind = r < 2 ? q : r == 2 ? acc : qdot;
            double v = 0.0;
            for (size_t m = 0; m < N_MODES; m++)
                v += phi[r][m] * kind[m];
            y[k * N_SENSORS + r] = v;
        }
        for (size_t m = 0; m < N_MODES; m++) {
            double z0 = el_rng_normal(&rng), z1 = el_rng_normal(&rng);
            double t0 = ad[m][0] * x[m][0] + ad[m][2] * x[m][1] + g[m][0] * z0 + g[m][2] * z1;
            double t1 = ad[m][1] * x[m][0] + ad[m][3] * x[m][1] + g[m][1] * z0 + g[m][3] * z1;
            x[m][0] = t0;
            x[m][1] = t1;
        }
    }
    double sd[N_SENSORS];
    for (size_t r = 0; r < N_SENSORS; r++) {
        double mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < n; k++)
            mean += y[k * N_SENSORS + r];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            ss += (y[k * N_SENSORS + r] - mean) * (y[k * N_SENSORS + r] - mean);
        sd[r] = sqrt(ss / (double)n) * pow(10.0, -snr_db / 20.0);
    }
    FILE *out = fopen(path, "w");
    assert_non_null(out);
    fprintf(out, "t [s],strain_1,strain_2,acc_3,vel_4\n");
    for (size_t k = 0; k < n; k++) {
        fprintf(out, "%.3f", (double)k * dt);
        for (size_t r = 0; r < N_SENSORS; r++)
            fprintf(out, ",%.9g", 100.0 * (double)r + y[k * N_SENSORS + r] +
                                      sd[r] * el_rng_normal(&rng));
        fprintf(out, "\n");
    }
    fclose(out);
    free(y);
}

/* The default options; method_auto 0 fits the given method alone. */
static el_assessment run_default(const char *path, int method_auto, el_method method)
{
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.path = path;
    opt.boot.threads = 2;
    if (!method_auto) {
        opt.method_auto = 0;
        opt.fit.method = method;
    }
    el_assessment r;
    memset(&r, 0, sizeof r);
    el_error err;
    el_error_clear(&err);
    el_status st = el_assess_run(&opt, &r, &err);
    if (st != EL_OK)
        print_error("%s\n", err.message);
    assert_int_equal(st, EL_OK);
    return r;
}

/* The mode of r nearest the growing mode in frequency. */
static const el_mode *growing_mode(const el_assessment *r)
{
    const el_mode *best = NULL;
    for (size_t q = 0; q < r->modes.n_modes; q++) {
        const el_mode *md = &r->modes.modes[q];
        if (best == NULL || fabs(md->frequency_hz - fn_hz[0]) <
                                fabs(best->frequency_hz - fn_hz[0]))
            best = md;
    }
    return best;
}

/* The default pipeline on four seeded 30-dB logs of the growing system.
 * Where the envelope gate fires (a factor >= 3 on some channel at a
 * per-channel p <= 0.05), auto keeps iv, the growing mode is found within
 * 5 % in frequency and 0.05 in damping ratio (the accuracy study's
 * criterion) and the verdict is "unstable" at the default level; the
 * gate must fire on at least 3 of the 4 (it fired on 7 of seeds 1-8; on
 * seed 2 the envelope grew 2.9-fold at z 1.8, hankel was taken and said
 * unstable at P(stable) 0.014). Whatever the estimator, no log of this
 * growing system may be called stable. Before auto kept iv here it took
 * hankel on every one, whose point estimate was as good but whose bounds
 * reached several 1/s below zero (seed 1: P(stable) 0.51, undecided).
 * Since hankel keeps the damped mode beside the growing one
 * (el_hankel_keep), hankel alone decides seed 1 too (P(stable) 0.002);
 * the gate still decides more growing logs at 30 and 20 dB on both fresh
 * sets (docs/accuracy.md, round 6), so it stays, and hankel alone is no
 * longer asserted here. */
static void test_growing_log_keeps_iv(void **state)
{
    (void)state;
    char path[] = "/tmp/eigenlog_growing4XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    close(fd);
    double true_re = -zeta[0] * 2.0 * M_PI * fn_hz[0];
    size_t gated = 0;
    for (uint64_t seed = 1; seed <= 4; seed++) {
        write_growing(path, 4133, 30.0, seed);
        el_assessment r = run_default(path, 1, EL_METHOD_IV);
        size_t ch = 0;
        double factor = NAN, p = NAN;
        int grows = el_regime_envelope_grows(r.regime, 3.0, 0.05, &ch, &factor, &p);
        const el_mode *md = growing_mode(&r);
        assert_non_null(md);
        print_message("seed %u: %s, Re %.4f (true %.4f), zeta %.5f, P(stable) %.3f, %s; "
                      "envelope gate %d (%.3g-fold, p %.2g)\n", (unsigned)seed,
                      el_method_name(r.model.method), md->lambda_re, true_re,
                      md->damping_ratio, r.verdict.p_stable, r.verdict.stability_name,
                      grows, factor, p);
        assert_int_not_equal(r.verdict.stability, EL_STABLE);
        if (grows) {
            gated++;
            assert_int_equal(r.model.method, EL_METHOD_IV);
            assert_true(fabs(md->frequency_hz - fn_hz[0]) <= 0.05 * fn_hz[0]);
            assert_true(fabs(md->damping_ratio - zeta[0]) <= 0.05);
            assert_int_equal(r.verdict.stability, EL_UNSTABLE);
            assert_true(r.verdict.p_stable <= 0.05);
        }
        el_assessment_free(&r);
    }
    assert_true(gated >= 3);
    remove(path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_growing_log_keeps_iv),
    };
    return cmocka_run_group_tests_name("assess_growing", tests, NULL, NULL);
}
