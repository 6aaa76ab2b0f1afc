/* test_fit_chunks: the fit of a window longer than one chunk of snapshot
 * rows (el_fit reduces the snapshots chunk by chunk) against an
 * independent solution of the same least-squares problem, and the size of
 * a fit plan for a long window. */
/* mallinfo2 is a glibc extension. */
#define _GNU_SOURCE 1
#include "el_test.h"

#include <malloc.h>
#include <stdlib.h>
#include <string.h>

#include "el_assess.h"
#include "el_fit.h"
#include "el_regime.h"
#include "el_table.h"

#define TEST_PI 3.14159265358979323846

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

/* Three chunks of 4096 rows and a partial fourth: every join of the
 * chunked factorisation is crossed. */
#define N_SAMPLES (3 * 4096 + 123)
#define NC 2
#define NU 1

/* x[k+1] = A x[k] + b u[k] + c + w[k], u and w white: a well-conditioned
 * regression (the regressors' correlation matrix has condition ~10). */
static void simulate(double *x, double *u)
{
    const double a[NC][NC] = {{0.9, 0.2}, {-0.1, 0.8}}, b[NC] = {0.5, -0.3};
    const double c[NC] = {1.0, 2.0};
    uint64_t seed = 20261204;
    double s[NC] = {10.0, 10.0};
    for (size_t k = 0; k < N_SAMPLES; k++) {
        u[k] = 3.0 + test_normal(&seed);
        for (size_t i = 0; i < NC; i++)
            x[i * N_SAMPLES + k] = s[i];
        double next[NC];
        for (size_t i = 0; i < NC; i++) {
            next[i] = c[i] + b[i] * u[k] + 0.2 * test_normal(&seed);
            for (size_t j = 0; j < NC; j++)
                next[i] += a[i][j] * s[j];
        }
        memcpy(s, next, sizeof s);
    }
}

/* The reference: y[k+1] regressed on z = [x[k]; u[k]; 1] by the normal
 * equations accumulated and solved (Gaussian elimination, partial
 * pivoting) in long double, an independent route to the least-squares
 * solution. w (NC + nu + 1) x NC receives [Ad B c]'; r2 the R^2 of each
 * channel's one-step residuals. */
static void reference(const double *x, const double *u, size_t nu, double *w, double *r2)
{
    enum { P = NC + NU + 1 };
    size_t p = NC + nu + 1;
    long double g[P][P + NC];
    memset(g, 0, sizeof g);
    for (size_t k = 0; k + 1 < N_SAMPLES; k++) {
        long double z[P];
        for (size_t i = 0; i < NC; i++)
            z[i] = x[i * N_SAMPLES + k];
        if (nu > 0)
            z[NC] = u[k];
        z[p - 1] = 1.0L;
        for (size_t i = 0; i < p; i++) {
            for (size_t j = 0; j < p; j++)
                g[i][j] += z[i] * z[j];
            for (size_t j = 0; j < NC; j++)
                g[i][p + j] += z[i] * (long double)x[j * N_SAMPLES + k + 1];
        }
    }
    for (size_t col = 0; col < p; col++) {
        size_t piv = col;
        for (size_t i = col + 1; i < p; i++)
            if (fabsl(g[i][col]) > fabsl(g[piv][col]))
                piv = i;
        for (size_t j = 0; j < p + NC; j++) {
            long double t = g[col][j];
            g[col][j] = g[piv][j];
            g[piv][j] = t;
        }
        for (size_t i = 0; i < p; i++) {
            if (i == col)
                continue;
            long double f = g[i][col] / g[col][col];
            for (size_t j = col; j < p + NC; j++)
                g[i][j] -= f * g[col][j];
        }
    }
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j < NC; j++)
            w[i * NC + j] = (double)(g[i][p + j] / g[i][i]);
    for (size_t j = 0; j < NC; j++) {
        long double mean = 0.0L, ss_res = 0.0L, ss_tot = 0.0L;
        for (size_t k = 1; k < N_SAMPLES; k++)
            mean += x[j * N_SAMPLES + k];
        mean /= (long double)(N_SAMPLES - 1);
        for (size_t k = 0; k + 1 < N_SAMPLES; k++) {
            long double y = x[j * N_SAMPLES + k + 1], e = y - w[(p - 1) * NC + j];
            for (size_t i = 0; i < NC; i++)
                e -= w[i * NC + j] * (long double)x[i * N_SAMPLES + k];
            if (nu > 0)
                e -= w[NC * NC + j] * (long double)u[k];
            ss_res += e * e;
            ss_tot += (y - mean) * (y - mean);
        }
        r2[j] = (double)(1.0L - ss_res / ss_tot);
    }
}

/* Tolerance 1e-9 relative to the largest coefficient: both routes solve a
 * problem of condition ~1e2 (raw regressors with their offsets), the
 * Householder route to ~1e-14 and the long-double normal equations to
 * ~cond^2 * 1e-19; a wrong join of two chunks (a row lost, counted twice
 * or centred by the wrong mean) moves the coefficients by ~1e-4 or more. */
static void check_ls(size_t nu)
{
    double *x = malloc(N_SAMPLES * NC * sizeof *x), *u = malloc(N_SAMPLES * sizeof *u);
    assert_non_null(x);
    assert_non_null(u);
    simulate(x, u);
    double w[(NC + NU + 1) * NC], r2[NC];
    reference(x, u, nu, w, r2);
    test_series ts, tu;
    ts_init(&ts, N_SAMPLES, NC, 0.01, x);
    ts_init(&tu, N_SAMPLES, 1, 0.01, u);
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.method = EL_METHOD_LS;
    opt.inputs = nu > 0 ? &tu.s : NULL;
    el_model m = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&ts.s, &opt, &m, NULL, &err), EL_OK);
    double scale = 0.0;
    for (size_t i = 0; i < (NC + nu + 1) * NC; i++)
        scale = fmax(scale, fabs(w[i]));
    for (size_t i = 0; i < NC; i++) {
        for (size_t j = 0; j < NC; j++)
            assert_close(m.ad[i + NC * j], w[j * NC + i], 0.0, 1e-9 * scale);
        if (nu > 0)
            assert_close(m.input_b[i], w[NC * NC + i], 0.0, 1e-9 * scale);
        assert_close(m.offset[i], w[(NC + nu) * NC + i], 0.0, 1e-9 * scale);
        /* R^2 from the streamed residuals: the same sums, 1e-9. */
        assert_close(m.channel_r2[i], r2[i], 0.0, 1e-9);
    }
    el_model_free(&m);
    ts_free(&ts);
    ts_free(&tu);
}

static void test_ls_chunks(void **state)
{
    (void)state;
    check_ls(0);
}

static void test_ls_inputs_chunks(void **state)
{
    (void)state;
    check_ls(NU);
}

/* A fit plan for a window of 1e6 samples x 8 channels holds no matrix of
 * the window's length (the snapshots are built and reduced a chunk at a
 * time): the heap it takes stays under 8 MB, an eighth of the raw data
 * (64 MB); a plan with the whole snapshot matrix and its SVD would take
 * over 200 MB. glibc's mallinfo2 counts the heap in use. */
static void test_plan_memory(void **state)
{
    (void)state;
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.method = EL_METHOD_LS;
    opt.lags = 1;
    struct mallinfo2 before = mallinfo2();
    el_fit_plan *plan = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit_plan_create(1000000, 8, &opt, &plan, &err), EL_OK);
    struct mallinfo2 after = mallinfo2();
    size_t used = (after.uordblks + after.hblkhd) - (before.uordblks + before.hblkhd);
    el_fit_plan_destroy(plan);
    assert_true(used < ((size_t)8 << 20));
}

/* The regime plan's transforms freed after a run are made again by the
 * next run, which gives the same outputs bit for bit. */
static void test_regime_release(void **state)
{
    (void)state;
    size_t n = 3000;
    double *x = malloc(n * sizeof *x);
    assert_non_null(x);
    uint64_t seed = 7;
    for (size_t k = 0; k < n; k++)
        x[k] = sin(0.05 * (double)k) + 0.1 * test_normal(&seed);
    test_series ts;
    ts_init(&ts, n, 1, 0.01, x);
    el_regime *r = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_regime_create(n, 1, &r, &err), EL_OK);
    assert_int_equal(el_regime_run(r, &ts.s, NULL, NULL, &err), EL_OK);
    el_regime_class first = r->regime;
    double z = r->envelope_z[0], p = r->change_p[0];
    el_regime_release_work(r);
    assert_null(r->work);
    /* The outputs of the run stay. */
    assert_int_equal(r->regime, first);
    assert_true(r->envelope_z[0] == z);
    assert_int_equal(el_regime_run(r, &ts.s, NULL, NULL, &err), EL_OK);
    assert_non_null(r->work);
    assert_int_equal(r->regime, first);
    assert_true(r->envelope_z[0] == z && r->change_p[0] == p);
    el_regime_destroy(r);
    ts_free(&ts);
}

/* el_table_release_rows keeps the log's description and drops its rows;
 * assess's reports after el_assess_run name the file and count the rows
 * as before. */
static void test_table_release(void **state)
{
    (void)state;
    const char *csv = "t [s],a,b\n0,1,2\n1,2,3\n2,4,1\n3,1,0\n";
    FILE *f = fmemopen((void *)csv, strlen(csv), "r");
    assert_non_null(f);
    el_table t = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_table_read_stream(f, "small.csv", NULL, &t, &err), EL_OK);
    fclose(f);
    el_table_release_rows(&t);
    assert_null(t.values);
    assert_null(t.source_line);
    assert_int_equal(t.n_rows, 4);
    assert_int_equal(t.n_columns, 3);
    assert_string_equal(t.names[1], "a");
    assert_string_equal(t.source, "small.csv");
    el_table_free(&t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_ls_chunks),
        cmocka_unit_test(test_ls_inputs_chunks),
        cmocka_unit_test(test_plan_memory),
        cmocka_unit_test(test_regime_release),
        cmocka_unit_test(test_table_release),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
