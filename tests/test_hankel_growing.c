/* test_hankel_growing: the modes --method hankel keeps on short
 * multi-sensor logs that hold one growing mode beside decaying ones.
 * Truth from the simulation: modal oscillators driven by white noise,
 * discretised exactly (el_discretise, Van Loan 1978), the growing one
 * started from a set amplitude, seen by a few sensors through a fixed
 * mixing with white sensor noise. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_fit.h"
#include "el_linalg.h"
#include "el_modes.h"
#include "el_rng.h"

#define TEST_PI 3.14159265358979323846
#define HG_MODES 3
#define HG_SENSORS 4

/* Sensor r sees mode m's displacement with weight mix_q[r][m] and its
 * velocity / w_m with mix_v[r][m] (a displacement, a strain, a velocity
 * and a mixed sensor). */
static const double mix_q[HG_SENSORS][HG_MODES] = {
    { 1.00, 0.60, -0.40 }, { -0.50, 0.90, 0.70 }, { 0.00, 0.00, 0.00 }, { 0.40, -0.70, 1.00 },
};
static const double mix_v[HG_SENSORS][HG_MODES] = {
    { 0.00, 0.00, 0.00 }, { 0.00, 0.00, 0.00 }, { 0.80, -0.60, 0.90 }, { 0.50, 0.40, -0.30 },
};

typedef struct {
    size_t n_modes, n_sensors, n;
    double dt, snr_db;
    double fn[HG_MODES], zeta[HG_MODES];
    size_t growing;     /* index of the growing mode */
    double amp;         /* its starting velocity amplitude */
} hg_case;

/* y (n x p, column-major, malloc'd). Each mode: q'' + 2 zeta w q' + w^2 q
 * = f, f white of intensity 4 max(|zeta|, 0.01) w (a unit velocity
 * variance for a decaying mode); the decaying modes start from their
 * stationary state (a burn-in of 10 decay times of the slowest), the
 * growing one from velocity amp (its forcing on top). Sensor noise:
 * 10^(-snr/20) times each clean channel's standard deviation. */
static double *hg_simulate(const hg_case *c, uint64_t seed)
{
    size_t nm = c->n_modes, ns = 2 * nm, p = c->n_sensors, n = c->n;
    double a[36] = { 0 }, q[36] = { 0 }, ad[36], qd[36], g[36];
    double slow = INFINITY;
    for (size_t m = 0; m < nm; m++) {
        double w = 2.0 * TEST_PI * c->fn[m];
        size_t o = 2 * m;
        a[o + (o + 1) * ns] = 1.0;
        a[o + 1 + o * ns] = -w * w;
        a[o + 1 + (o + 1) * ns] = -2.0 * c->zeta[m] * w;
        q[o + 1 + (o + 1) * ns] = 4.0 * fmax(fabs(c->zeta[m]), 0.01) * w;
        if (m != c->growing)
            slow = fmin(slow, c->zeta[m] * w);
    }
    double work[32 * 36 + 12];
    int iwork[12];
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_discretise(ns, a, q, c->dt, ad, qd, g, work, iwork, &err), EL_OK);
    double *y = malloc(n * p * sizeof *y);
    assert_non_null(y);
    el_rng rs;
    el_rng_seed(&rs, seed, 0);
    double x[6] = { 0 }, xn[6], z[6];
    long burn = (long)ceil(10.0 / slow / c->dt);
    for (long k = -burn; k < (long)n; k++) {
        if (k == 0) {   /* the growing mode starts here, at a set amplitude */
            x[2 * c->growing] = 0.0;
            x[2 * c->growing + 1] = c->amp;
        }
        if (k >= 0)
            for (size_t r = 0; r < p; r++) {
                double v = 0.0;
                for (size_t m = 0; m < nm; m++)
                    v += mix_q[r][m] * x[2 * m] * 2.0 * TEST_PI * c->fn[m] +
                         mix_v[r][m] * x[2 * m + 1];
                y[(size_t)k + r * n] = v;
            }
        for (size_t i = 0; i < ns; i++)
            z[i] = el_rng_normal(&rs);
        for (size_t i = 0; i < ns; i++) {
            double v = 0.0;
            for (size_t j = 0; j < ns; j++)
                v += ad[i + j * ns] * x[j] + g[i + j * ns] * z[j];
            xn[i] = v;
        }
        memcpy(x, xn, ns * sizeof(double));
    }
    for (size_t r = 0; r < p; r++) {
        double mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < n; k++)
            mean += y[k + r * n];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            ss += (y[k + r * n] - mean) * (y[k + r * n] - mean);
        double sd = sqrt(ss / (double)n) * pow(10.0, -c->snr_db / 20.0);
        for (size_t k = 0; k < n; k++)
            y[k + r * n] += 5.0 * (double)r + sd * el_rng_normal(&rs);
    }
    return y;
}

/* How many of seeds 1..n_seeds give a hankel model (default options)
 * with every true mode within tol_f (relative) in natural frequency and
 * tol_z in damping ratio. */
static size_t hg_found(const hg_case *c, size_t n_seeds, double tol_f, double tol_z)
{
    size_t all = 0;
    for (uint64_t seed = 1; seed <= n_seeds; seed++) {
        test_series ts;
        ts_init(&ts, c->n, c->n_sensors, c->dt, hg_simulate(c, 1000 * seed + 7));
        el_fit_options fo;
        el_fit_defaults(&fo);
        fo.method = EL_METHOD_HANKEL;
        el_model md;
        el_modes ms;
        memset(&md, 0, sizeof md);
        memset(&ms, 0, sizeof ms);
        el_error err;
        el_error_clear(&err);
        assert_int_equal(el_fit(&ts.s, &fo, &md, NULL, &err), EL_OK);
        assert_int_equal(el_modes_compute(&md, &ms, NULL, &err), EL_OK);
        size_t hit = 0;
        for (size_t m = 0; m < c->n_modes; m++) {
            int found = 0;
            for (size_t k = 0; k < ms.n_modes; k++) {
                double re = ms.modes[k].lambda_re, im = ms.modes[k].lambda_im;
                double f = hypot(re, im) / (2.0 * TEST_PI), zr = -re / hypot(re, im);
                found |= fabs(f - c->fn[m]) <= tol_f * c->fn[m] &&
                         fabs(zr - c->zeta[m]) <= tol_z;
            }
            hit += (size_t)found;
        }
        if (hit < c->n_modes)
            print_message("seed %u: %zu modes in the model, %zu of %zu true modes found\n",
                          (unsigned)seed, ms.n_modes, hit, c->n_modes);
        all += (size_t)(hit == c->n_modes);
        el_modes_free(&ms);
        el_model_free(&md);
        ts_free(&ts);
    }
    return all;
}

/* Three modes, 4 sensors, 5,000 samples at 500 Hz (25 periods of the
 * slowest mode), 20 dB: 2.0 Hz zeta 0.10 and 6.8 Hz zeta 0.18 decaying,
 * 4.4 Hz growing 12-fold over the log (zeta -0.0090, set from the
 * growth). The growing mode carries 0.97-0.99 of the block Hankel's modal
 * contributions and the decaying ones 0.3-1 % of it: enough for the
 * stabilisation (their chains persist over many orders) but below the
 * floor of 1 % of the strongest pole that hankel measured against the
 * growing mode until 2026-12-05, which then left one or both decaying
 * modes out in 6 of these 8 logs (the pattern of the fresh family's
 * growing logs s076 and s005). A presence check: natural frequency
 * within 10 % and damping ratio within 0.1 of the simulation's, about
 * 1.7 times the largest errors of the 8 logs with the change (6.0 % and
 * 0.053: the spread of 25 periods of a mode at zeta 0.1-0.2, not the
 * rule; the fresh family's 5 % / 0.05 is met by 5 of the 8). */
static void test_growing_beside_damped(void **state)
{
    (void)state;
    hg_case c;
    memset(&c, 0, sizeof c);
    c.n_modes = 3;
    c.n_sensors = 4;
    c.n = 5000;
    c.dt = 0.002;
    c.snr_db = 20.0;
    c.fn[0] = 2.0;
    c.fn[1] = 4.4;
    c.fn[2] = 6.8;
    c.zeta[0] = 0.10;
    c.zeta[2] = 0.18;
    c.growing = 1;
    c.amp = 2.0;
    double growth = 12.0;
    c.zeta[1] = -log(growth) / ((double)c.n * c.dt) / (2.0 * TEST_PI * c.fn[1]);
    size_t ok = hg_found(&c, 8, 0.10, 0.10);
    print_message("every mode found in %zu of 8 logs\n", ok);
    assert_int_equal(ok, 8);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_growing_beside_damped),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
