/* test_subspace: block-Hankel subspace identification (el_subspace)
 * against closed forms (exactly known discrete systems, mu = exp(lambda
 * dt); the autocorrelation of a first-order process), an independent
 * numpy implementation (tests/data/make_subspace_fixture.py), the
 * 6-sensor example of issue 10, the stabilisation labels and the block
 * bootstrap's building blocks. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_fit.h"
#include "el_linalg.h"
#include "el_modes.h"
#include "el_subspace.h"

#include <lapacke.h>

#include "data/subspace_fixture.h"

#define TEST_PI 3.14159265358979323846
#define MAX_ST 8
#define MAX_SEN 8

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

/* Continuous modal form: pairs (natural frequency Hz, damping ratio). */
static void modal_a(size_t npair, const double *fn_hz, const double *zeta, double *a)
{
    size_t n = 2 * npair;
    memset(a, 0, n * n * sizeof(double));
    for (size_t b = 0; b < npair; b++) {
        double w = 2.0 * TEST_PI * fn_hz[b], re = -zeta[b] * w;
        double im = w * sqrt(1.0 - zeta[b] * zeta[b]);
        size_t o = 2 * b;
        a[o + o * n] = re;
        a[o + (o + 1) * n] = im;
        a[o + 1 + o * n] = -im;
        a[o + 1 + (o + 1) * n] = re;
    }
}

/* The 6 x 4 sensor mixing (rows: sensors), well conditioned. */
static const double mix6[6][4] = {
    { 1.00, 0.20, 0.50, -0.30 }, { 0.40, 0.90, -0.20, 0.60 },
    { -0.30, 0.50, 1.00, 0.20 }, { 0.70, -0.40, 0.30, 0.90 },
    { 0.20, 0.60, -0.70, 0.40 }, { 0.50, 0.30, 0.40, -0.80 },
};

/* y (n x 6, column-major, malloc'd): the 4-state system x' = A x + w
 * sampled exactly (el_discretise, Van Loan 1978), stationary (burn-in of
 * 20 s) when process != 0, else the noise-free transient from x0 = 1;
 * channel offsets 10 + 3c (an operating point); sensor noise of standard
 * deviation 10^(-snr_db/20) times each clean channel's (snr_db < 0:
 * none). */
static double *simulate6(const double *a, double dt, size_t n, int process,
                         double snr_db, uint64_t seed)
{
    size_t ns = 4, p = 6;
    double q[16] = { 0 }, ad[16], qd[16], g[16];
    for (size_t i = 0; i < ns; i++)
        q[i + i * ns] = 1.0;
    double work[32 * 16 + 8 + 64];
    int iwork[16];
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_discretise(ns, a, q, dt, ad, qd, g, work, iwork, &err), EL_OK);
    double *y = malloc(n * p * sizeof *y);
    assert_non_null(y);
    uint64_t rs = seed;
    double x[4], xn[4];
    for (size_t i = 0; i < ns; i++)
        x[i] = process ? 0.0 : 1.0;
    long burn = process ? (long)(20.0 / dt) : 0;
    for (long k = -burn; k < (long)n; k++) {
        if (k >= 0)
            for (size_t r = 0; r < p; r++) {
                double v = 0.0;
                for (size_t j = 0; j < ns; j++)
                    v += mix6[r][j] * x[j];
                y[(size_t)k + r * n] = v;
            }
        double z[4];
        for (size_t j = 0; j < ns; j++)
            z[j] = process ? test_normal(&rs) : 0.0;
        for (size_t i = 0; i < ns; i++) {
            double v = 0.0;
            for (size_t j = 0; j < ns; j++)
                v += ad[i + j * ns] * x[j] + g[i + j * ns] * z[j];
            xn[i] = v;
        }
        memcpy(x, xn, sizeof x);
    }
    for (size_t r = 0; r < p; r++) {
        double m = 0.0, ss = 0.0;
        for (size_t k = 0; k < n; k++)
            m += y[k + r * n];
        m /= (double)n;
        for (size_t k = 0; k < n; k++)
            ss += (y[k + r * n] - m) * (y[k + r * n] - m);
        double sd = snr_db >= 0.0 ? sqrt(ss / (double)n) * pow(10.0, -snr_db / 20.0) : 0.0;
        for (size_t k = 0; k < n; k++)
            y[k + r * n] += 10.0 + 3.0 * (double)r + (sd > 0.0 ? sd * test_normal(&rs) : 0.0);
    }
    return y;
}

/* Runs choose_horizon (or the given horizon time), plan and execute. */
typedef struct {
    el_subspace_plan *plan;
    el_subspace_result res;
    el_subspace_horizon hz;
} run_t;

static void run_subspace(const el_series *s, const el_subspace_options *opt, run_t *r)
{
    el_error err;
    el_error_clear(&err);
    memset(r, 0, sizeof *r);
    assert_int_equal(el_subspace_choose_horizon(s, opt, &r->hz, &err), EL_OK);
    assert_int_equal(el_subspace_plan_create(s->n_channels, s->n_samples, r->hz.rows,
                                             opt->max_order, &r->plan, &err),
                     EL_OK);
    el_status st = el_subspace_execute(r->plan, s, opt, &r->res, &err);
    if (st != EL_OK)
        print_error("%s\n", err.message);
    assert_int_equal(st, EL_OK);
}

/* The pole of the chosen order nearest to lambda (complex plane). */
static const el_subspace_pole *nearest(const el_subspace_result *res, double lre,
                                       double lim)
{
    const el_subspace_pole *best = NULL;
    double bd = INFINITY;
    for (size_t k = 0; k < res->n_order_poles; k++) {
        const el_subspace_pole *q = &res->poles[res->first_pole + k];
        double d = hypot(q->lambda_re - lre, q->lambda_im - lim);
        if (d < bd) {
            bd = d;
            best = q;
        }
    }
    return best;
}

static int cmp_mu(const void *x, const void *y)
{
    const double *a = x, *b = y;
    if (a[1] != b[1])
        return a[1] > b[1] ? -1 : 1;
    return (a[0] > b[0]) - (a[0] < b[0]);
}

/* ------------------------------------------------------------------ */
/* (a) noise-free closed form                                         */
/* ------------------------------------------------------------------ */

/* Two damped modes (1.30 Hz zeta 0.03, 0.384 Hz zeta 0.252, the issue's
 * system) seen through 6 sensors, noise-free transient, 100 Hz, 10 s.
 * Closed form: mu = exp(lambda dt), lambda = -zeta w +- i w sqrt(1 -
 * zeta^2). H has rank 4 exactly (the centring of the window vectors
 * removes the operating point exactly), so the order-4 model is exact up
 * to rounding: the sums carry ~1e-16 relative error, amplified by s1 / s4
 * (about 1e3 here) in the subspace and by the eigenvalue condition
 * (modest: distinct, well separated modes); 1e-8 relative on lambda
 * leaves a wide margin over that and still fails for any real error. */
static void noise_free_case(el_subspace_weighting weighting)
{
    double fn[2] = { 1.30, 0.384 }, zeta[2] = { 0.03, 0.252 }, a[16], dt = 0.01;
    modal_a(2, fn, zeta, a);
    size_t n = 1000;
    test_series ts;
    ts_init(&ts, n, 6, dt, simulate6(a, dt, n, 0, -1.0, 1));
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    opt.weighting = weighting;
    opt.horizon_time = 0.2;   /* 20 block rows */
    opt.max_order = 12;
    /* CVA on noise-free data: the window Grams have rank 4, so no order
     * above 4 has a model (its shift equations are rank deficient) and no
     * chain can span 5 orders; the poles of the last solvable order count
     * as persistent then (without that rule the order was 0). */
    run_t r;
    run_subspace(&ts.s, &opt, &r);
    assert_int_equal(r.res.horizon, 20);
    assert_int_equal(r.res.order, 4);
    assert_int_equal(r.res.order_was_auto, 1);
    assert_int_equal(r.res.n_physical, 2);
    if (weighting == EL_SUBSPACE_UNWEIGHTED) {
        /* rank 4: the fifth singular value is rounding (below 1e-12 of s1) */
        assert_true(r.res.singular[4] < 1e-12 * r.res.singular[0]);
        assert_true(r.res.singular[3] > 1e-6 * r.res.singular[0]);
    } else {
        /* noise-free: the 4 canonical correlations of future and past are
         * 1 (the state is a function of either), the rest 0 */
        for (size_t k = 0; k < 4; k++)
            assert_close(r.res.singular[k], 1.0, 0.0, 1e-8);
        assert_true(r.res.singular[4] < 1e-6);
    }
    for (size_t m = 0; m < 2; m++) {
        double w = 2.0 * TEST_PI * fn[m];
        double lre = -zeta[m] * w, lim = w * sqrt(1.0 - zeta[m] * zeta[m]);
        const el_subspace_pole *q = nearest(&r.res, lre, lim);
        assert_non_null(q);
        assert_close(q->lambda_re, lre, 1e-8, 1e-8 * w);
        assert_close(q->lambda_im, lim, 1e-8, 0.0);
        assert_close(q->mu_re, exp(lre * dt) * cos(lim * dt), 1e-10, 1e-12);
        assert_close(q->mu_im, exp(lre * dt) * sin(lim * dt), 1e-10, 1e-12);
        assert_close(q->natural_hz, fn[m], 1e-8, 0.0);
        assert_close(q->damping_ratio, zeta[m], 1e-7, 0.0);
        assert_int_equal(q->physical, 1);
    }
    /* C in raw units is C scaled times each channel's standard deviation */
    for (size_t j = 0; j < 4; j++)
        for (size_t c = 0; c < 6; c++)
            assert_close(r.res.c_raw[c + j * 6],
                         r.res.c_scaled[c + j * 6] * r.res.channel_scale[c], 1e-15, 0.0);
    assert_close(r.res.channel_mean[2], 16.0, 0.05, 0.0);   /* operating point 10 + 3c */
    el_subspace_plan_destroy(r.plan);
    ts_free(&ts);
}

static void test_noise_free_exact(void **state)
{
    (void)state;
    noise_free_case(EL_SUBSPACE_UNWEIGHTED);
    noise_free_case(EL_SUBSPACE_CVA);
}

/* ------------------------------------------------------------------ */
/* (b) numpy fixture                                                  */
/* ------------------------------------------------------------------ */

/* Same data, same horizon: the singular values of H agree with numpy's
 * SVD of the explicit window matrices to rounding (singular values are
 * perfectly conditioned: an absolute error of a few eps ||H||; the sums
 * differ in order, so 1e-10 relative to s1). Eigenvalues of orders 4 and
 * 6: the subspace is conditioned by the gap s_n - s_n+1 (s6 - s7 is 4e-4
 * of s1 here), so rounding reaches ~1e-12; 1e-9 absolute on mu (|mu| ~ 1)
 * leaves a margin and fails on any difference of method. */
static void fixture_case(const test_series *ts, el_subspace_weighting weighting)
{
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    opt.weighting = weighting;
    opt.horizon_time = SUB_FIX_H * SUB_FIX_DT;
    opt.order = 4;
    run_t r;
    run_subspace(&ts->s, &opt, &r);
    assert_int_equal(r.res.horizon, SUB_FIX_H);
    assert_int_equal(r.res.n_singular, SUB_FIX_H * SUB_FIX_P);
    int cva = weighting == EL_SUBSPACE_CVA;
    const double *sv = cva ? sub_fix_cc : sub_fix_sv;
    for (size_t k = 0; k < r.res.n_singular; k++)
        assert_close(r.res.singular[k], sv[k], 0.0, 1e-10 * sv[0]);
    const double *want[2] = { cva ? sub_fix_cva_mu4 : sub_fix_mu4,
                              cva ? sub_fix_cva_mu6 : sub_fix_mu6 };
    for (size_t oi = 0; oi < 2; oi++) {
        size_t order = oi == 0 ? 4 : 6;
        double mu[12];
        size_t nm = 0;
        for (size_t k = 0; k < r.res.n_poles; k++) {
            const el_subspace_pole *q = &r.res.poles[k];
            if (q->order != order)
                continue;
            mu[2 * nm] = q->mu_re;
            mu[2 * nm + 1] = q->mu_im;
            nm++;
            if (q->mu_im > 0.0) {
                mu[2 * nm] = q->mu_re;
                mu[2 * nm + 1] = -q->mu_im;
                nm++;
            }
        }
        assert_int_equal(nm, order);
        qsort(mu, nm, 2 * sizeof(double), cmp_mu);
        assert_close_array(mu, want[oi], 2 * order, 0.0, 1e-9);
    }
    el_subspace_plan_destroy(r.plan);
}

static void test_numpy_fixture(void **state)
{
    (void)state;
    double *v = malloc(sizeof sub_fix_y);
    assert_non_null(v);
    memcpy(v, sub_fix_y, sizeof sub_fix_y);
    test_series ts;
    ts_init(&ts, SUB_FIX_N, SUB_FIX_P, SUB_FIX_DT, v);
    fixture_case(&ts, EL_SUBSPACE_UNWEIGHTED);
    fixture_case(&ts, EL_SUBSPACE_CVA);
    /* the order-4 models are the system within the scatter of 2000
     * samples at 20 dB (|mu - mu_true| ~ 5e-3 for this record: numpy's
     * values; the check that the data hold the system, 1e-2) */
    assert_close_array(sub_fix_mu4, sub_fix_mu_true, 8, 0.0, 1e-2);
    assert_close_array(sub_fix_cva_mu4, sub_fix_mu_true, 8, 0.0, 1e-2);

    /* the automatic horizon, as numpy computes the rule */
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    el_subspace_horizon hz;
    el_error err;
    assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_OK);
    assert_int_equal(hz.rows, SUB_FIX_H_AUTO);
    assert_int_equal(hz.scale_lags, SUB_FIX_SCALE_LAGS);
    ts_free(&ts);
}

/* ------------------------------------------------------------------ */
/* The block Hankel from lagged products: the definition               */
/* ------------------------------------------------------------------ */

/* el_subspace takes H from lagged products over a core range plus each
 * block's own ends (docs/method.md, section 14). Against the definition,
 * window by window: H = (1/m) sum_w (f_w - fbar)(p_w - pbar)' of the
 * channels centred and scaled to unit population spread, its singular
 * values by LAPACK (unweighted: the stage's singular values are H's).
 * Short records put m on both sides of 2h - 1, where the core is empty
 * or absent, and a longer one exercises several chunks. Tolerance 1e-12
 * of the largest: sums of at most 600 products of order-1 numbers carry
 * rounding near 1e-14. */
static void check_hankel_definition(size_t n, size_t p, size_t h, uint64_t seed)
{
    double *x = malloc(n * p * sizeof *x), *y = malloc(n * p * sizeof *y);
    size_t hp = h * p, m = n - 2 * h + 1;
    double *hk = calloc(hp * hp, sizeof *hk), *fb = calloc(hp, sizeof *fb);
    double *pb = calloc(hp, sizeof *pb), *sv = malloc(hp * sizeof *sv);
    assert_true(x && y && hk && fb && pb && sv);
    uint64_t rs = seed;
    for (size_t i = 0; i < n * p; i++)
        x[i] = 5.0 + test_normal(&rs);
    for (size_t k = 1; k < n; k++)      /* some memory, so H is not noise alone */
        for (size_t c = 0; c < p; c++)
            x[k + c * n] += 0.8 * x[k - 1 + c * n] - 4.0;
    for (size_t c = 0; c < p; c++) {
        double mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < n; k++)
            mean += x[k + c * n];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            ss += (x[k + c * n] - mean) * (x[k + c * n] - mean);
        for (size_t k = 0; k < n; k++)
            y[k * p + c] = (x[k + c * n] - mean) / sqrt(ss / (double)n);
    }
    for (size_t w = 0; w < m; w++)
        for (size_t i = 0; i < hp; i++) {
            fb[i] += y[(w + h) * p + i] / (double)m;
            pb[i] += y[w * p + i] / (double)m;
        }
    for (size_t w = 0; w < m; w++)
        for (size_t j = 0; j < hp; j++)
            for (size_t i = 0; i < hp; i++)
                hk[i + j * hp] += (y[(w + h) * p + i] - fb[i]) * (y[w * p + j] - pb[j]) /
                                  (double)m;
    double dummy = 0.0, *superb = malloc(hp * sizeof *superb);
    assert_non_null(superb);
    assert_int_equal(LAPACKE_dgesvd(LAPACK_COL_MAJOR, 'N', 'N', (lapack_int)hp,
                                    (lapack_int)hp, hk, (lapack_int)hp, sv, &dummy, 1,
                                    &dummy, 1, superb),
                     0);
    free(superb);
    el_series s;
    memset(&s, 0, sizeof s);
    s.n_samples = n;
    s.n_channels = p;
    s.dt = 0.01;
    s.values = x;
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    opt.weighting = EL_SUBSPACE_UNWEIGHTED;
    el_subspace_plan *plan = NULL;
    el_subspace_result res;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_subspace_plan_create(p, n, h, 0, &plan, &err), EL_OK);
    assert_int_equal(el_subspace_execute(plan, &s, &opt, &res, &err), EL_OK);
    assert_int_equal(res.n_singular, hp);
    assert_close_array(res.singular, sv, hp, 0.0, 1e-12 * sv[0]);
    el_subspace_plan_destroy(plan);
    free(x);
    free(y);
    free(hk);
    free(fb);
    free(pb);
    free(sv);
}

static void test_hankel_definition(void **state)
{
    (void)state;
    const size_t h = 6, p = 2;
    /* m = n - 2h + 1 from 2 to 2h + 3: around 2h - 1 = 11 */
    for (size_t n = 2 * h + 1; n <= 4 * h + 2; n++)
        check_hankel_definition(n, p, h, 1000 + n);
    check_hankel_definition(600, 3, 4, 77);
}

/* ------------------------------------------------------------------ */
/* Horizon rule: closed form                                          */
/* ------------------------------------------------------------------ */

/* A first-order process x[k+1] = phi x[k] + e, phi = exp(-1/20), seen by
 * two sensors without noise: r(k) = phi^k (closed form), below 1/e from
 * k = 21 on, no zero crossing; so the horizon is 21 samples. The sample
 * autocorrelation at lag 20 has standard deviation ~0.024 for 20000
 * samples (Bartlett's 1946 formula) and r falls by ~0.018 per lag there:
 * +-5 lags is about 3.7 standard deviations. */
static void test_horizon_first_order(void **state)
{
    (void)state;
    size_t n = 20000;
    double *v = malloc(2 * n * sizeof *v);
    assert_non_null(v);
    uint64_t rs = 5;
    double phi = exp(-1.0 / 20.0), x = 0.0;
    for (size_t k = 0; k < 200; k++)
        x = phi * x + test_normal(&rs);
    for (size_t k = 0; k < n; k++) {
        v[k] = x;
        v[k + n] = 3.0 - 0.5 * x;
        x = phi * x + test_normal(&rs);
    }
    test_series ts;
    ts_init(&ts, n, 2, 0.1, v);
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    el_subspace_horizon hz;
    el_error err;
    assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_OK);
    assert_true(hz.rows >= 16 && hz.rows <= 26);
    assert_int_equal(hz.capped, 0);
    assert_close(hz.time, (double)hz.rows * 0.1, 1e-15, 0.0);
    /* the cap: at most max_rows / p block rows */
    opt.max_rows = 30;
    assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_OK);
    assert_int_equal(hz.rows, 15);
    assert_int_equal(hz.capped, 1);
    ts_free(&ts);
}

/* The channels' mean sample autocorrelation r(0 .. lmax) by the plain
 * definition (centred, divided by the lag-0 sum), written out here apart
 * from the library's lagged products. */
static void plain_mean_acf(const double *v, size_t n, size_t p, size_t lmax, double *r)
{
    for (size_t k = 0; k <= lmax; k++)
        r[k] = 0.0;
    for (size_t c = 0; c < p; c++) {
        const double *x = v + c * n;
        double m = 0.0, g0 = 0.0;
        for (size_t t = 0; t < n; t++)
            m += x[t];
        m /= (double)n;
        for (size_t t = 0; t < n; t++)
            g0 += (x[t] - m) * (x[t] - m);
        for (size_t k = 0; k <= lmax; k++) {
            double g = 0.0;
            for (size_t t = k; t < n; t++)
                g += (x[t] - m) * (x[t - k] - m);
            r[k] += g / g0 / (double)p;
        }
    }
}

/* Rule (b) against a noise crossing (docs/uncertainty.md, "The automatic
 * horizon (z)"). A first-order process x[k+1] = phi x[k] + e, phi =
 * exp(-1/15) (the correlation time of calibrate's degenerate node), seen
 * by two sensors without noise: r(k) = phi^k > 0 at every lag (closed
 * form), below 1/e from k = 16 on. Its estimate at 20,000 samples has a
 * standard error of about sqrt((1 + 2 sum phi^2j) / n) = 0.027 at large
 * lags (Bartlett 1946), so on many logs it wanders below zero within the
 * 101 lags the horizon reads, and the old rule (b) took four times that
 * crossing for an oscillation's period: 100 rows, the cost cap. The
 * horizon must be the envelope's 16 +- 5 on every log (+-5 lags: r falls
 * by 0.0245 per lag at 1/e, so 5 lags are 4.5 standard errors), capped or
 * not, and the crossing must still be reported (its lag as the plain
 * autocorrelation has it, its lobe under 3 standard errors). The test
 * checks that many of the 24 logs do cross (at least 10: 19 do with
 * these seeds), so that it fails with the old rule (measured: built with
 * every crossing counted, it fails at the first crossing log). */
static void test_horizon_noise_crossing(void **state)
{
    (void)state;
    size_t n = 20000, lmax = 101, crossed = 0;
    double *r = malloc((lmax + 1) * sizeof *r);
    assert_non_null(r);
    for (uint64_t seed = 1; seed <= 24; seed++) {
        double *v = malloc(2 * n * sizeof *v);
        assert_non_null(v);
        uint64_t rs = 1000 + seed;
        double phi = exp(-1.0 / 15.0), x = 0.0;
        for (size_t k = 0; k < 300; k++)
            x = phi * x + test_normal(&rs);
        for (size_t k = 0; k < n; k++) {
            v[k] = x;
            v[k + n] = 3.0 - 0.5 * x;
            x = phi * x + test_normal(&rs);
        }
        plain_mean_acf(v, n, 2, lmax, r);
        size_t k0 = 0;
        for (size_t k = 1; k <= lmax && k0 == 0; k++)
            if (r[k] <= 0.0)
                k0 = k;
        crossed += k0 > 0;
        test_series ts;
        ts_init(&ts, n, 2, 0.1, v);
        el_subspace_options opt;
        el_subspace_defaults(&opt);
        el_subspace_horizon hz;
        el_error err;
        /* hankel's rule (the default) counts every crossing: a longer horizon */
        assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_OK);
        if (k0 > 0)
            assert_true(hz.rows > 21);
        opt.crossing_test = 1; /* iv's */
        assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_OK);
        assert_true(hz.rows >= 11 && hz.rows <= 21);
        assert_int_equal(hz.capped, 0);
        assert_int_equal(hz.crossing_lags, k0);
        assert_true(hz.crossing_se < 3.0);
        /* iv's cap (120 rows: 60 block rows, 61 lags) likewise */
        opt.max_rows = 120;
        assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_OK);
        assert_true(hz.rows >= 11 && hz.rows <= 21);
        ts_free(&ts);
    }
    assert_true(crossed >= 10);
    free(r);
}

/* Rule (b) keeps a real oscillation. A rotation with decay, x[k+1] =
 * g R(theta) x[k] + e (2 states, white e of unit variance), seen directly
 * by two sensors: the stationary covariance is I / (1 - g^2) (R is
 * orthogonal), so each channel's autocorrelation is g^k cos(k theta)
 * (closed form). With g = exp(-0.06), theta = 0.2 rad per sample: the
 * first zero crossing is at k0 = ceil(pi / (2 theta)) = 8 (7.85), the
 * lobe's bottom at pi / theta = 15.7 is g^15.7 = 0.39 deep, about 6
 * standard errors at 2,000 samples (Bartlett: se = sqrt((1 + 2 sum_{j <
 * 16} r(j)^2) / n) ~ 0.06), while the envelope g^k falls below 1/e at
 * k = 17. So the horizon is four times the crossing, 32 rows, not the
 * envelope's 17; the sample crossing moves by under a lag (r's slope at
 * the crossing is g^8 theta = 0.12 per lag against an error of ~0.05), so
 * 4 x (8 +- 1) on each of 12 logs, and the lobe counted (>= 3 standard
 * errors). */
static void test_horizon_keeps_oscillation(void **state)
{
    (void)state;
    size_t n = 2000;
    double g = exp(-0.06), th = 0.2;
    for (uint64_t seed = 1; seed <= 12; seed++) {
        double *v = malloc(2 * n * sizeof *v);
        assert_non_null(v);
        uint64_t rs = 2000 + seed;
        double x0 = 0.0, x1 = 0.0;
        for (size_t k = 0; k < 300 + n; k++) {
            if (k >= 300) {
                v[k - 300] = x0;
                v[k - 300 + n] = x1;
            }
            double y0 = g * (cos(th) * x0 - sin(th) * x1) + test_normal(&rs);
            double y1 = g * (sin(th) * x0 + cos(th) * x1) + test_normal(&rs);
            x0 = y0;
            x1 = y1;
        }
        test_series ts;
        ts_init(&ts, n, 2, 0.1, v);
        el_subspace_options opt;
        el_subspace_defaults(&opt);
        opt.crossing_test = 1;
        el_subspace_horizon hz;
        el_error err;
        assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_OK);
        assert_true(hz.crossing_lags >= 7 && hz.crossing_lags <= 9);
        assert_true(hz.crossing_se >= 3.0);
        assert_int_equal(hz.rows, 4 * hz.crossing_lags);
        ts_free(&ts);
    }
}

/* The shared autocorrelation (el_subspace_acf_compute, issue 13 item 3:
 * computed once per window instead of once per horizon choice) gives the
 * horizon the direct computation gives, bit for bit (exact equality: the
 * same sums in the same order), at the default cap and at a smaller one
 * (iv's, which reads a prefix); it is read only for the series it was
 * computed from. The series: the first-order process above. */
static void test_shared_autocorrelation(void **state)
{
    (void)state;
    size_t n = 20000;
    double *v = malloc(4 * n * sizeof *v);
    assert_non_null(v);
    uint64_t rs = 5;
    double phi = exp(-1.0 / 20.0), x = 0.0;
    for (size_t k = 0; k < n; k++) {
        v[k] = x;
        v[k + n] = 3.0 - 0.5 * x;
        v[k + 2 * n] = test_normal(&rs);   /* another series: white noise */
        v[k + 3 * n] = test_normal(&rs);
        x = phi * x + test_normal(&rs);
    }
    test_series ts, other;
    ts_init(&ts, n, 2, 0.1, v);
    ts_init(&other, n, 2, 0.1, v + 2 * n);
    el_subspace_acf acf;
    memset(&acf, 0, sizeof acf);
    el_error err;
    assert_int_equal(el_subspace_acf_compute(&ts.s, 0, &acf, &err), EL_OK);
    assert_int_equal(acf.unusable, 0);
    static const size_t caps[] = {0, 30, 120};
    for (size_t i = 0; i < sizeof caps / sizeof caps[0]; i++) {
        el_subspace_options opt;
        el_subspace_defaults(&opt);
        opt.max_rows = caps[i];
        el_subspace_horizon direct, shared, plain_other, shared_other;
        assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &direct, &err), EL_OK);
        assert_int_equal(el_subspace_choose_horizon(&other.s, &opt, &plain_other, &err), EL_OK);
        opt.acf = &acf;
        assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &shared, &err), EL_OK);
        assert_int_equal(el_subspace_choose_horizon(&other.s, &opt, &shared_other, &err),
                         EL_OK);
        assert_int_equal(shared.rows, direct.rows);
        assert_int_equal(shared.scale_lags, direct.scale_lags);
        assert_int_equal(shared.capped, direct.capped);
        assert_string_equal(shared.reason, direct.reason);
        /* white noise: the shortest horizon, not the AR(1) one's */
        assert_int_equal(shared_other.rows, plain_other.rows);
        assert_int_equal(shared_other.scale_lags, plain_other.scale_lags);
        assert_true(shared_other.scale_lags < direct.scale_lags);
    }
    /* It is what the choice reads: marked unusable, it gives the error of a
     * constant channel. */
    acf.unusable = 1;
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    opt.acf = &acf;
    el_subspace_horizon hz;
    assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_ERR_DATA);
    el_subspace_acf_free(&acf);
    el_subspace_acf_free(NULL);
    assert_null(acf.r);
    ts_free(&ts);   /* frees v, which other borrowed too */
}

/* A stage kept by the series' shared autocorrelation (el_subspace_keep /
 * el_subspace_take, issue 13 item 3: hankel's preparation and fit ran the
 * same stage twice) is given back as a fresh execute gives it, bit for bit
 * (exact equality: the same computation, kept), and at the order the
 * execute chose even after the keeper moved it (el_subspace_set_order);
 * only for the same series and options, once; a new autocorrelation drops
 * it. The series: the noisy 6-sensor system above, 6000 samples. */
static void test_kept_stage(void **state)
{
    (void)state;
    double fn[2] = { 1.30, 0.384 }, zeta[2] = { 0.03, 0.252 }, a[16], dt = 0.01;
    modal_a(2, fn, zeta, a);
    size_t n = 6000;
    test_series ts;
    ts_init(&ts, n, 6, dt, simulate6(a, dt, n, 1, 20.0, 42));
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    run_t fresh, kept;
    run_subspace(&ts.s, &opt, &fresh);
    assert_true(fresh.res.order >= 2);
    el_subspace_acf acf;
    memset(&acf, 0, sizeof acf);
    el_error err;
    el_error_clear(&err);
    /* no autocorrelation of this series: nothing is kept */
    run_subspace(&ts.s, &opt, &kept);
    assert_int_equal(el_subspace_keep(&acf, &ts.s, 0.0, 0, kept.plan, &kept.res, &kept.hz), 0);
    assert_int_equal(el_subspace_keep(NULL, &ts.s, 0.0, 0, kept.plan, &kept.res, &kept.hz), 0);
    assert_int_equal(el_subspace_acf_compute(&ts.s, 0, &acf, &err), EL_OK);
    size_t order = kept.res.order;
    assert_int_equal(el_subspace_set_order(kept.plan, 1, &kept.res, &err), EL_OK);
    assert_int_equal(el_subspace_keep(&acf, &ts.s, 0.0, 0, kept.plan, &kept.res, &kept.hz), 1);
    /* other options or another record: not given */
    el_subspace_plan *pl = NULL;
    el_subspace_result res;
    el_subspace_horizon hz;
    assert_int_equal(el_subspace_take(&acf, &ts.s, 0.0, 3, &pl, &res, &hz), 0);
    assert_int_equal(el_subspace_take(&acf, &ts.s, 0.5, 0, &pl, &res, &hz), 0);
    double *hv = malloc(6 * (n / 2) * sizeof *hv);
    assert_non_null(hv);
    for (size_t c = 0; c < 6; c++)
        memcpy(hv + c * (n / 2), ts.s.values + c * n, n / 2 * sizeof(double));
    test_series half;
    ts_init(&half, n / 2, 6, dt, hv);
    assert_int_equal(el_subspace_take(&acf, &half.s, 0.0, 0, &pl, &res, &hz), 0);
    assert_null(pl);
    /* the same: the fresh execute's stage */
    assert_int_equal(el_subspace_take(&acf, &ts.s, 0.0, 0, &pl, &res, &hz), 1);
    assert_true(pl == kept.plan);
    assert_int_equal(res.order, order);
    assert_int_equal(res.order, fresh.res.order);
    assert_int_equal(hz.rows, fresh.hz.rows);
    assert_int_equal(res.n_poles, fresh.res.n_poles);
    assert_int_equal(res.first_pole, fresh.res.first_pole);
    assert_int_equal(res.n_order_poles, fresh.res.n_order_poles);
    assert_memory_equal(res.singular, fresh.res.singular, res.n_singular * sizeof(double));
    assert_memory_equal(res.a, fresh.res.a, order * order * sizeof(double));
    assert_memory_equal(res.c_raw, fresh.res.c_raw, 6 * order * sizeof(double));
    for (size_t k = 0; k < res.n_poles; k++) {
        assert_memory_equal(&res.poles[k].mu_re, &fresh.res.poles[k].mu_re, sizeof(double));
        assert_memory_equal(&res.poles[k].mu_im, &fresh.res.poles[k].mu_im, sizeof(double));
        assert_int_equal(res.poles[k].physical, fresh.res.poles[k].physical);
    }
    /* given once */
    el_subspace_plan *again = NULL;
    assert_int_equal(el_subspace_take(&acf, &ts.s, 0.0, 0, &again, &res, &hz), 0);
    /* kept again, then a new autocorrelation: dropped (ASan: no leak) */
    assert_int_equal(el_subspace_keep(&acf, &ts.s, 0.0, 0, pl, &res, &hz), 1);
    assert_int_equal(el_subspace_acf_compute(&ts.s, 0, &acf, &err), EL_OK);
    assert_int_equal(el_subspace_take(&acf, &ts.s, 0.0, 0, &again, &res, &hz), 0);
    run_subspace(&ts.s, &opt, &kept);
    assert_int_equal(el_subspace_keep(&acf, &ts.s, 0.0, 0, kept.plan, &kept.res, &kept.hz), 1);
    el_subspace_acf_free(&acf);   /* frees the kept plan */
    el_subspace_plan_destroy(fresh.plan);
    ts_free(&half);
    ts_free(&ts);
}

/* ------------------------------------------------------------------ */
/* (c) the 6-sensor example of issue 10, (d) stabilisation labels     */
/* ------------------------------------------------------------------ */

/* 4 states through 6 sensors at 20 dB, 100 Hz, modes 1.30 Hz (zeta
 * 0.030) and 0.384 Hz (zeta 0.252), stationary (driven by process
 * noise), 60,000 samples (10 minutes: ~230 periods of the slow mode). The
 * issue's target: both modes within 5 % in frequency and 0.05 in damping
 * ratio (the study's criterion; natural frequency). Default options: the
 * horizon is automatic (capped at 200 / 6 = 33 rows) and the order comes
 * from the stabilisation. */
static void test_six_sensor_example(void **state)
{
    (void)state;
    double fn[2] = { 1.30, 0.384 }, zeta[2] = { 0.03, 0.252 }, a[16], dt = 0.01;
    modal_a(2, fn, zeta, a);
    size_t n = 60000;
    test_series ts;
    ts_init(&ts, n, 6, dt, simulate6(a, dt, n, 1, 20.0, 42));
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    run_t r;
    run_subspace(&ts.s, &opt, &r);
    assert_int_equal(r.hz.rows, 33);
    assert_int_equal(r.hz.capped, 1);
    assert_true(r.res.order >= 4);
    for (size_t m = 0; m < 2; m++) {
        double w = 2.0 * TEST_PI * fn[m];
        const el_subspace_pole *q =
            nearest(&r.res, -zeta[m] * w, w * sqrt(1.0 - zeta[m] * zeta[m]));
        assert_non_null(q);
        print_message("mode %zu: %.4f Hz zeta %.4f (order %zu)\n", m, q->natural_hz,
                      q->damping_ratio, r.res.order);
        assert_close(q->natural_hz, fn[m], 0.05, 0.0);
        assert_close(q->damping_ratio, zeta[m], 0.0, 0.05);
        assert_int_equal(q->physical, 1);
    }
    /* (d) every other pole of that order is labelled spurious, and at a
     * forced order 12 the 8 (or more) states past the system's 4 are all
     * spurious too: noise directions do not persist across orders. */
    size_t phys = 0;
    for (size_t k = 0; k < r.res.n_order_poles; k++)
        phys += r.res.poles[r.res.first_pole + k].physical != 0;
    assert_int_equal(phys, 2);
    assert_int_equal(r.res.n_physical, 2);
    size_t spurious12 = 0, phys12 = 0;
    for (size_t k = 0; k < r.res.n_poles; k++) {
        const el_subspace_pole *q = &r.res.poles[k];
        if (q->order != 12)
            continue;
        if (q->physical)
            phys12++;
        else
            spurious12++;
    }
    assert_int_equal(phys12, 2);
    assert_true(spurious12 >= 1);
    el_subspace_plan_destroy(r.plan);
    ts_free(&ts);
}

/* The same system through the estimator (el_fit, --method hankel, every
 * option automatic), 20,000 samples (200 s, 77 periods of the slow mode),
 * logs of seeds 1-16: every model holds both modes. The heavily damped
 * mode's damping ratio moves between consecutive orders by more than the
 * stabilisation's 5 % relative (0.238 -> 0.225), and the estimator dated
 * its chain from the order where that happened; the late-chain rule then
 * left it out: before the change in el_est_hankel.c's `continues`, seeds
 * 1, 8 and 16 gave a model of the 1.30 Hz mode alone. Tolerance: a
 * presence check, natural frequency within 12 % and damping ratio within
 * 0.12, about 4.5 standard deviations of the estimates over 40 such logs
 * (0.0102 Hz = 2.7 % and 0.027; the study's 5 % / 0.05 is met by 34 of
 * those 40: the spread at this length, not the rule). */
static void test_six_sensor_hankel_keeps_both(void **state)
{
    (void)state;
    double fn[2] = { 1.30, 0.384 }, zeta[2] = { 0.03, 0.252 }, a[16], dt = 0.01;
    modal_a(2, fn, zeta, a);
    size_t n = 20000, both = 0;
    for (uint64_t seed = 1; seed <= 16; seed++) {
        test_series ts;
        ts_init(&ts, n, 6, dt, simulate6(a, dt, n, 1, 20.0, seed));
        el_fit_options fo;
        el_fit_defaults(&fo);
        fo.method = EL_METHOD_HANKEL;
        el_model m;
        el_modes md;
        memset(&m, 0, sizeof m);
        memset(&md, 0, sizeof md);
        el_error err;
        el_error_clear(&err);
        assert_int_equal(el_fit(&ts.s, &fo, &m, NULL, &err), EL_OK);
        assert_int_equal(el_modes_compute(&m, &md, NULL, &err), EL_OK);
        int found[2] = { 0, 0 };
        for (size_t q = 0; q < md.n_modes; q++) {
            double re = md.modes[q].lambda_re, im = md.modes[q].lambda_im;
            double f = hypot(re, im) / (2.0 * TEST_PI), z = -re / hypot(re, im);
            for (int k = 0; k < 2; k++)
                found[k] |= fabs(f - fn[k]) <= 0.12 * fn[k] && fabs(z - zeta[k]) <= 0.12;
        }
        if (!(found[0] && found[1]))
            print_message("seed %u: %zu modes, fast %d slow %d\n", (unsigned)seed, md.n_modes,
                          found[0], found[1]);
        both += (size_t)(found[0] && found[1]);
        el_modes_free(&md);
        el_model_free(&m);
        ts_free(&ts);
    }
    assert_int_equal(both, 16);
}

/* Transients at 20 dB (deterministic, from x0 = 1, no process noise;
 * sensor noise 1/100 of each channel's power): the ring-down of the same
 * system over 10 s, and a growing variant whose 1.30 Hz pair has Re lambda
 * = +0.04 1/s (damping ratio -0.0049) over 30 s. The window vectors share
 * one range of t, so the shift structure is exact for transients too:
 * both modes within the 5 % / 0.05, and the growing pair must come
 * out growing (Re lambda > 0, within 0.02 1/s: half its size, so the sign
 * is settled). */
static void test_transients(void **state)
{
    (void)state;
    double fn[2] = { 1.30, 0.384 }, dt = 0.01;
    for (int grow = 0; grow < 2; grow++) {
        double zeta[2] = { grow ? -0.04 / (2.0 * TEST_PI * 1.30) : 0.03, 0.252 }, a[16];
        modal_a(2, fn, zeta, a);
        size_t n = grow ? 3000 : 1000;
        test_series ts;
        ts_init(&ts, n, 6, dt, simulate6(a, dt, n, 0, 20.0, 11 + (uint64_t)grow));
        el_subspace_options opt;
        el_subspace_defaults(&opt);
        run_t r;
        run_subspace(&ts.s, &opt, &r);
        assert_true(r.res.order >= 4);
        for (size_t m = 0; m < 2; m++) {
            double w = 2.0 * TEST_PI * fn[m];
            const el_subspace_pole *q =
                nearest(&r.res, -zeta[m] * w, w * sqrt(1.0 - zeta[m] * zeta[m]));
            assert_non_null(q);
            print_message("%s mode %zu: %.4f Hz zeta %.4f Re %.4f (order %zu)\n",
                          grow ? "growing" : "ring-down", m, q->natural_hz,
                          q->damping_ratio, q->lambda_re, r.res.order);
            assert_close(q->natural_hz, fn[m], 0.05, 0.0);
            assert_close(q->damping_ratio, zeta[m], 0.0, 0.05);
            assert_int_equal(q->physical, 1);
            if (grow && m == 0)
                assert_close(q->lambda_re, 0.04, 0.0, 0.02);
        }
        el_subspace_plan_destroy(r.plan);
        ts_free(&ts);
    }
}

/* (d) white noise: no pole persists, no order is chosen (no model from
 * nothing). 4 independent white channels, 5000 samples. */
static void test_white_noise_no_mode(void **state)
{
    (void)state;
    size_t n = 5000, p = 4;
    double *v = malloc(n * p * sizeof *v);
    assert_non_null(v);
    uint64_t rs = 99;
    for (size_t i = 0; i < n * p; i++)
        v[i] = test_normal(&rs);
    test_series ts;
    ts_init(&ts, n, p, 0.01, v);
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    opt.horizon_time = 0.1;
    run_t r;
    run_subspace(&ts.s, &opt, &r);
    assert_int_equal(r.res.order, 0);
    assert_int_equal(r.res.n_physical, 0);
    for (size_t k = 0; k < r.res.n_poles; k++)
        assert_int_equal(r.res.poles[k].physical, 0);
    el_subspace_plan_destroy(r.plan);
    ts_free(&ts);
}

/* ------------------------------------------------------------------ */
/* (e) block sums and replicate solve; bad arguments                  */
/* ------------------------------------------------------------------ */

/* The records of blocks that cover every window once add up to the
 * record of all windows, and the replicate solve on it reproduces the
 * point estimate: H V = U S on the point data (an SVD identity), so the
 * singular values and the eigenvalues agree to rounding (1e-10: the two
 * routes sum in different orders; the eigenvalues here are well
 * conditioned). */
static void test_replicate_reproduces_point(void **state)
{
    (void)state;
    double fn[2] = { 1.30, 0.384 }, zeta[2] = { 0.03, 0.252 }, a[16], dt = 0.01;
    modal_a(2, fn, zeta, a);
    size_t n = 6000;
    test_series ts;
    ts_init(&ts, n, 6, dt, simulate6(a, dt, n, 1, 20.0, 7));
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    opt.horizon_time = 0.1;
    opt.order = 4;
    opt.max_order = 10;
    run_t r;
    run_subspace(&ts.s, &opt, &r);
    el_error err;
    el_error_clear(&err);
    size_t nd = el_subspace_sum_doubles(r.plan), m = r.res.n_windows;
    /* hp = 60: the record carries all 60 past directions (hp * hp within
     * the budget of el_subspace_sum_doubles), not only max_order = 10 */
    assert_int_equal(nd, 1 + 60 + 60 + 60 * 60);
    double *all = malloc(nd * sizeof *all), *blk = malloc(nd * sizeof *blk);
    double *acc = calloc(nd, sizeof *acc);
    double *work = malloc(el_subspace_replicate_work(r.plan) * sizeof *work);
    assert_true(all && blk && acc && work);
    assert_int_equal(el_subspace_block_sums(r.plan, 0, m, all, &err), EL_OK);
    assert_close(all[0], (double)m, 0.0, 0.0);
    size_t cuts[] = { 0, 1, 500, 1234, 3000, 3001, m };
    for (size_t b = 0; b + 1 < sizeof cuts / sizeof cuts[0]; b++) {
        assert_int_equal(el_subspace_block_sums(r.plan, cuts[b], cuts[b + 1], blk, &err),
                         EL_OK);
        for (size_t i = 0; i < nd; i++)
            acc[i] += blk[i];
    }
    for (size_t i = 0; i < nd; i++)
        assert_close(acc[i], all[i], 1e-11, 1e-9);
    double mu_re[4], mu_im[4], arep[16];
    assert_int_equal(el_subspace_replicate_solve(r.plan, acc, 4, arep, mu_re, mu_im, work,
                                                 &err),
                     EL_OK);
    double got[8], want[8];
    for (size_t k = 0; k < 4; k++) {
        got[2 * k] = mu_re[k];
        got[2 * k + 1] = mu_im[k];
    }
    size_t nm = 0;
    for (size_t k = 0; k < r.res.n_order_poles; k++) {
        const el_subspace_pole *q = &r.res.poles[r.res.first_pole + k];
        want[2 * nm] = q->mu_re;
        want[2 * nm + 1] = q->mu_im;
        nm++;
        if (q->mu_im > 0.0) {
            want[2 * nm] = q->mu_re;
            want[2 * nm + 1] = -q->mu_im;
            nm++;
        }
    }
    assert_int_equal(nm, 4);
    qsort(got, 4, 2 * sizeof(double), cmp_mu);
    qsort(want, 4, 2 * sizeof(double), cmp_mu);
    assert_close_array(got, want, 8, 0.0, 1e-10);
    /* A itself up to a diagonal sign similarity: |A_rep| = |A_point| */
    for (size_t i = 0; i < 16; i++)
        assert_close(fabs(arep[i]), fabs(r.res.a[i]), 0.0, 1e-9);
    /* a replicate on half the windows differs (it is a resample, not a copy) */
    assert_int_equal(el_subspace_block_sums(r.plan, 0, m / 2, blk, &err), EL_OK);
    assert_int_equal(el_subspace_replicate_solve(r.plan, blk, 4, NULL, mu_re, mu_im, work,
                                                 &err),
                     EL_OK);
    double d = 0.0;
    qsort(want, 4, 2 * sizeof(double), cmp_mu);
    for (size_t k = 0; k < 4; k++) {
        got[2 * k] = mu_re[k];
        got[2 * k + 1] = mu_im[k];
    }
    qsort(got, 4, 2 * sizeof(double), cmp_mu);
    for (size_t i = 0; i < 8; i++)
        d = fmax(d, fabs(got[i] - want[i]));
    assert_true(d > 1e-6);
    /* bad arguments */
    assert_int_equal(el_subspace_block_sums(r.plan, 5, 4, blk, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_subspace_block_sums(r.plan, 0, m + 1, blk, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_subspace_replicate_solve(r.plan, acc, 11, NULL, NULL, NULL, work,
                                                 &err),
                     EL_ERR_INTERNAL);
    blk[0] = 0.0;
    assert_int_equal(el_subspace_replicate_solve(r.plan, blk, 4, NULL, NULL, NULL, work,
                                                 &err),
                     EL_ERR_NUMERIC);
    free(all);
    free(blk);
    free(acc);
    free(work);
    el_subspace_plan_destroy(r.plan);
    ts_free(&ts);
}

/* out = S^power for the symmetric positive definite S (hp x hp, both
 * triangles), by its eigen-decomposition (the definition of the CVA
 * weights, el_subspace.h). */
static void spd_power(size_t n, const double *sm, double power, double *out)
{
    double *vec = malloc(n * n * sizeof *vec), *lam = malloc(n * sizeof *lam);
    assert_true(vec && lam);
    memcpy(vec, sm, n * n * sizeof *vec);
    assert_int_equal(LAPACKE_dsyev(LAPACK_COL_MAJOR, 'V', 'L', (lapack_int)n, vec,
                                   (lapack_int)n, lam),
                     0);
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double acc = 0.0;
            for (size_t k = 0; k < n; k++)
                acc += vec[i + k * n] * pow(lam[k], power) * vec[j + k * n];
            out[i + j * n] = acc;
        }
    free(vec);
    free(lam);
}

/* C (r x c) = A (r x k) B (k x c), column-major, plain loops. */
static void mat_mul(size_t r, size_t k, size_t c, const double *a, const double *b,
                    double *out)
{
    for (size_t j = 0; j < c; j++)
        for (size_t i = 0; i < r; i++) {
            double acc = 0.0;
            for (size_t q = 0; q < k; q++)
                acc += a[i + q * r] * b[q + j * k];
            out[i + j * r] = acc;
        }
}

/* A replicate is the model of its resampled windows under the point's
 * weights: the SVD of W1 H* W2 (H* the windows' centred cross-product,
 * W1 = Sff^-1/2, W2 = Spp^-1/2 of every window), O = W1^-1 U_n S_n^1/2,
 * A = O_up^+ O_down (el_subspace.h's definition, computed here from the
 * windows by plain loops and LAPACK's dsyev, dgesvd and dgels). A record
 * carries the past through n_v weighted directions; with n_v = max_order
 * (12 of the 26 here, as before 2026-12-05) the replicate saw only those,
 * and its eigenvalues differed from the definition's by about 1e-4 on
 * this log; with the whole past (n_v = hp: hp = 26 >= 0.5 sqrt(1,975
 * windows) and a small record, el_subspace_sum_doubles) they agree to
 * rounding. Tolerance 1e-9 on mu: both routes sum ~1,500
 * products of unit-scale values (relative rounding ~1e-13) and the
 * replicate squares its matrix before the eigen-solve, which costs
 * accuracy only in proportion to s_1 / s_n (about 10 here), far below
 * the gap this test detects. A pair at 0.5 Hz, damping 0.1, 2 sensors,
 * 2,000 samples at 10 Hz, horizon 13 (the smallest for 2 sensors); the
 * replicate takes the middle half of the windows. */
static void test_replicate_whole_past(void **state)
{
    (void)state;
    const size_t n = 2000, p = 2, h = 13, hp = h * p, order = 2;
    const double dt = 0.1;
    double fn = 0.5, zeta = 0.1, ac[4], ad[4];
    modal_a(1, &fn, &zeta, ac);
    /* mu = exp(lambda dt) of the real modal block [[s, w], [-w, s]] */
    double sg = ac[0], om = ac[2], g = exp(sg * dt);
    ad[0] = g * cos(om * dt);
    ad[1] = -g * sin(om * dt);
    ad[2] = g * sin(om * dt);
    ad[3] = g * cos(om * dt);
    double *x = malloc(n * p * sizeof *x), *y = malloc(n * p * sizeof *y);
    assert_true(x && y);
    uint64_t rs = 4242;
    double st[2] = { 0.0, 0.0 };
    for (size_t k = 0; k < 500 + n; k++) {
        double e0 = test_normal(&rs), e1 = test_normal(&rs);
        double n0 = ad[0] * st[0] + ad[2] * st[1] + e0;
        double n1 = ad[1] * st[0] + ad[3] * st[1] + e1;
        st[0] = n0;
        st[1] = n1;
        if (k >= 500) {
            x[(k - 500)] = st[0] + 0.3 * st[1];
            x[(k - 500) + n] = st[1];
        }
    }
    el_series s;
    memset(&s, 0, sizeof s);
    s.n_samples = n;
    s.n_channels = p;
    s.dt = dt;
    s.values = x;
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    opt.horizon_time = (double)h * dt;
    opt.order = order;
    run_t r;
    run_subspace(&s, &opt, &r);
    assert_int_equal(r.res.horizon, h);
    el_error err;
    el_error_clear(&err);
    size_t nd = el_subspace_sum_doubles(r.plan), m = r.res.n_windows;
    assert_int_equal(nd, 1 + hp + hp + hp * hp);
    double *rec = malloc(nd * sizeof *rec);
    double *work = malloc(el_subspace_replicate_work(r.plan) * sizeof *work);
    assert_true(rec && work);
    size_t w0 = m / 4, w1 = 3 * m / 4;
    assert_int_equal(el_subspace_block_sums(r.plan, w0, w1, rec, &err), EL_OK);
    double mu_re[2], mu_im[2];
    assert_int_equal(el_subspace_replicate_solve(r.plan, rec, order, NULL, mu_re, mu_im,
                                                 work, &err),
                     EL_OK);
    /* The definition: scaled channels (mean, population spread), future
     * f_w = y[w+h .. w+2h-1], past y[w .. w+h-1] (any order of the past's
     * rows gives the same left singular vectors). */
    for (size_t c = 0; c < p; c++) {
        double mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < n; k++)
            mean += x[k + c * n];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            ss += (x[k + c * n] - mean) * (x[k + c * n] - mean);
        for (size_t k = 0; k < n; k++)
            y[k * p + c] = (x[k + c * n] - mean) / sqrt(ss / (double)n);
    }
    double *fb = calloc(hp, sizeof *fb), *pb = calloc(hp, sizeof *pb);
    double *fr = calloc(hp, sizeof *fr), *pr = calloc(hp, sizeof *pr);
    double *sff = calloc(hp * hp, sizeof *sff), *spp = calloc(hp * hp, sizeof *spp);
    double *hr = calloc(hp * hp, sizeof *hr), *w1m = malloc(hp * hp * sizeof *w1m);
    double *w1i = malloc(hp * hp * sizeof *w1i), *w2m = malloc(hp * hp * sizeof *w2m);
    double *t1 = malloc(hp * hp * sizeof *t1), *t2 = malloc(hp * hp * sizeof *t2);
    double *sv = malloc(hp * sizeof *sv), *u = malloc(hp * hp * sizeof *u);
    double *superb = malloc(hp * sizeof *superb);
    assert_true(fb && pb && fr && pr && sff && spp && hr && w1m && w1i && w2m && t1 && t2 &&
                sv && u && superb);
    for (size_t w = 0; w < m; w++)
        for (size_t i = 0; i < hp; i++) {
            fb[i] += y[(w + h) * p + i] / (double)m;
            pb[i] += y[w * p + i] / (double)m;
        }
    for (size_t w = w0; w < w1; w++)
        for (size_t i = 0; i < hp; i++) {
            fr[i] += y[(w + h) * p + i] / (double)(w1 - w0);
            pr[i] += y[w * p + i] / (double)(w1 - w0);
        }
    for (size_t w = 0; w < m; w++)
        for (size_t j = 0; j < hp; j++)
            for (size_t i = 0; i < hp; i++) {
                sff[i + j * hp] += (y[(w + h) * p + i] - fb[i]) *
                                   (y[(w + h) * p + j] - fb[j]) / (double)m;
                spp[i + j * hp] += (y[w * p + i] - pb[i]) * (y[w * p + j] - pb[j]) /
                                   (double)m;
            }
    for (size_t w = w0; w < w1; w++)
        for (size_t j = 0; j < hp; j++)
            for (size_t i = 0; i < hp; i++)
                hr[i + j * hp] += (y[(w + h) * p + i] - fr[i]) * (y[w * p + j] - pr[j]) /
                                  (double)(w1 - w0);
    spd_power(hp, sff, -0.5, w1m);
    spd_power(hp, sff, 0.5, w1i);
    spd_power(hp, spp, -0.5, w2m);
    mat_mul(hp, hp, hp, w1m, hr, t1);
    mat_mul(hp, hp, hp, t1, w2m, t2);
    double dummy = 0.0;
    assert_int_equal(LAPACKE_dgesvd(LAPACK_COL_MAJOR, 'S', 'N', (lapack_int)hp,
                                    (lapack_int)hp, t2, (lapack_int)hp, sv, u,
                                    (lapack_int)hp, &dummy, 1, superb),
                     0);
    for (size_t j = 0; j < order; j++)
        for (size_t i = 0; i < hp; i++)
            u[i + j * hp] *= sqrt(sv[j]);
    double o[2 * 26];
    mat_mul(hp, hp, order, w1i, u, o);
    size_t rows = (h - 1) * p;
    double oup[2 * 24], odown[2 * 24];
    for (size_t j = 0; j < order; j++)
        for (size_t i = 0; i < rows; i++) {
            oup[i + j * rows] = o[i + j * hp];
            odown[i + j * rows] = o[i + p + j * hp];
        }
    assert_int_equal(LAPACKE_dgels(LAPACK_COL_MAJOR, 'N', (lapack_int)rows,
                                   (lapack_int)order, (lapack_int)order, oup,
                                   (lapack_int)rows, odown, (lapack_int)rows),
                     0);
    double aref[4] = { odown[0], odown[1], odown[rows], odown[rows + 1] };
    double wr[2], wi[2];
    assert_int_equal(LAPACKE_dgeev(LAPACK_COL_MAJOR, 'N', 'N', 2, aref, 2, wr, wi, &dummy,
                                   1, &dummy, 1),
                     0);
    double got[4] = { mu_re[0], mu_im[0], mu_re[1], mu_im[1] };
    double want[4] = { wr[0], wi[0], wr[1], wi[1] };
    qsort(got, 2, 2 * sizeof(double), cmp_mu);
    qsort(want, 2, 2 * sizeof(double), cmp_mu);
    assert_close_array(got, want, 4, 0.0, 1e-9);
    free(fb);
    free(pb);
    free(fr);
    free(pr);
    free(sff);
    free(spp);
    free(hr);
    free(w1m);
    free(w1i);
    free(w2m);
    free(t1);
    free(t2);
    free(sv);
    free(u);
    free(superb);
    free(rec);
    free(work);
    free(x);
    free(y);
    el_subspace_plan_destroy(r.plan);
}

static void test_bad_arguments(void **state)
{
    (void)state;
    el_error err;
    el_error_clear(&err);
    el_subspace_plan *pl = NULL;
    assert_int_equal(el_subspace_plan_create(0, 100, 5, 0, &pl, &err), EL_ERR_INTERNAL);
    assert_null(pl);
    assert_int_equal(el_subspace_plan_create(2, 100, 1, 0, &pl, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_subspace_plan_create(2, 10, 5, 0, &pl, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_subspace_plan_create(2, 100, 5, 0, NULL, &err), EL_ERR_INTERNAL);

    size_t n = 400;
    double *v = malloc(2 * n * sizeof *v);
    assert_non_null(v);
    uint64_t rs = 3;
    for (size_t k = 0; k < n; k++) {
        v[k] = test_normal(&rs);
        v[k + n] = 2.5;   /* constant channel */
    }
    test_series ts;
    ts_init(&ts, n, 2, 0.1, v);
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    el_subspace_horizon hz;
    assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_ERR_DATA);
    assert_int_equal(el_subspace_plan_create(2, n, 5, 0, &pl, &err), EL_OK);
    assert_int_equal(el_subspace_block_sums(pl, 0, 1, v, &err), EL_ERR_INTERNAL);
    double *rw = malloc(el_subspace_replicate_work(pl) * sizeof *rw);
    assert_non_null(rw);
    assert_int_equal(el_subspace_replicate_solve(pl, v, 1, NULL, NULL, NULL, rw, &err),
                     EL_ERR_INTERNAL);   /* before any execute */
    free(rw);
    el_subspace_result res;
    assert_int_equal(el_subspace_execute(pl, &ts.s, &opt, &res, &err), EL_ERR_DATA);
    assert_non_null(strstr(err.message, "constant"));
    for (size_t k = 0; k < n; k++)
        v[k + n] = test_normal(&rs);
    opt.order = 5;   /* above (h - 1) p / 2 = 4 */
    assert_int_equal(el_subspace_execute(pl, &ts.s, &opt, &res, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--order");
    opt.order = 0;
    assert_int_equal(el_subspace_execute(NULL, &ts.s, &opt, &res, &err), EL_ERR_INTERNAL);
    el_subspace_plan_destroy(pl);
    /* a plan for one channel does not take two */
    assert_int_equal(el_subspace_plan_create(1, n, 5, 0, &pl, &err), EL_OK);
    assert_int_equal(el_subspace_execute(pl, &ts.s, &opt, &res, &err), EL_ERR_INTERNAL);
    el_subspace_plan_destroy(pl);
    /* a manual horizon that leaves too few windows: m >= 4 h p */
    opt.horizon_time = 8.0;   /* 80 rows of 400 samples */
    assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--horizon");
    /* a record too short for any horizon */
    ts.s.n_samples = 20;
    opt.horizon_time = 0.0;
    assert_int_equal(el_subspace_choose_horizon(&ts.s, &opt, &hz, &err), EL_ERR_DATA);
    assert_non_null(strstr(err.hint, "longer"));
    ts.s.n_samples = n;
    el_subspace_plan_destroy(NULL);
    ts_free(&ts);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_noise_free_exact),
        cmocka_unit_test(test_numpy_fixture),
        cmocka_unit_test(test_hankel_definition),
        cmocka_unit_test(test_horizon_first_order),
        cmocka_unit_test(test_shared_autocorrelation),
        cmocka_unit_test(test_six_sensor_example),
        cmocka_unit_test(test_six_sensor_hankel_keeps_both),
        cmocka_unit_test(test_transients),
        cmocka_unit_test(test_white_noise_no_mode),
        cmocka_unit_test(test_replicate_reproduces_point),
        cmocka_unit_test(test_replicate_whole_past),
        cmocka_unit_test(test_bad_arguments),
        cmocka_unit_test(test_kept_stage),
        cmocka_unit_test(test_horizon_noise_crossing),
        cmocka_unit_test(test_horizon_keeps_oscillation),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
