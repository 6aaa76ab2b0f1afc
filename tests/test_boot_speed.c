/* test_boot_speed: the bootstrap's speed paths of issue 10 keep their
 * numbers. ssi takes Sxx^-1/2 and Sxx^1/2 of one replicate from one
 * eigendecomposition (el_est_sym_fun_from_eig): the same doubles as two
 * el_est_sym_fun calls, and the two matrices are what they claim (an
 * inverse square root and a square root: W S W = I, R R = S, checked
 * against S itself). The engine's build adds its compensated sums four
 * features a step on AVX2 CPUs: a block over every pair must give the
 * plain sum of the features, here against a sum in long double (64-bit
 * mantissa) of the provider's own per-pair features. */
#include "el_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_boot_engine.h"
#include "el_est_common.h"
#include "el_estimator.h"
#include "el_rng.h"

/* S = M M' / k + ridge I from a random n x k matrix M. */
static double *random_spd(size_t n, size_t k, double ridge, uint64_t seed)
{
    double *m = malloc(n * k * sizeof(double)), *s = malloc(n * n * sizeof(double));
    assert_non_null(m);
    assert_non_null(s);
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    for (size_t i = 0; i < n * k; i++)
        m[i] = el_rng_normal(&rng);
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double v = 0.0;
            for (size_t q = 0; q < k; q++)
                v += m[i + q * n] * m[j + q * n];
            s[i + j * n] = v / (double)k + (i == j ? ridge : 0.0);
        }
    free(m);
    return s;
}

/* c = a b (n x n). */
static void matmul(size_t n, const double *a, const double *b, double *c)
{
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double v = 0.0;
            for (size_t q = 0; q < n; q++)
                v += a[i + q * n] * b[q + j * n];
            c[i + j * n] = v;
        }
}

static void test_sym_fun_from_eig_same_doubles(void **state)
{
    (void)state;
    size_t n = 8;
    double *s = random_spd(n, 20, 0.05, 3);
    double *work = malloc(el_est_sym_fun_work(n) * sizeof(double));
    double *v = malloc((n * n + 4 * n + 1) * sizeof(double));
    double *w_ref = malloc(n * n * sizeof(double)), *r_ref = malloc(n * n * sizeof(double));
    double *w = malloc(n * n * sizeof(double)), *r = malloc(n * n * sizeof(double));
    double *t = malloc(n * n * sizeof(double)), *u = malloc(n * n * sizeof(double));
    assert_true(work && v && w_ref && r_ref && w && r && t && u);
    assert_int_equal(el_est_sym_fun(n, s, n, -0.5, w_ref, n, work), (int)n);
    assert_int_equal(el_est_sym_fun(n, s, n, 0.5, r_ref, n, work), (int)n);
    double *lam = v + n * n;
    assert_int_equal(el_est_sym_eig(n, s, n, v, lam, lam + n), 0);
    assert_int_equal(el_est_sym_fun_from_eig(n, v, lam, -0.5, w, n), (int)n);
    assert_int_equal(el_est_sym_fun_from_eig(n, v, lam, 0.5, r, n), (int)n);
    assert_memory_equal(w, w_ref, n * n * sizeof(double));
    assert_memory_equal(r, r_ref, n * n * sizeof(double));
    /* W S W = I and R R = S. The eigenvalues of S lie in about
     * [0.05, 4] (Wishart(20)/20 of order 8 plus the ridge), so cond(S)
     * is below 100 and the products carry about cond n eps = 2e-13;
     * 1e-11 leaves a factor 50. */
    matmul(n, w, s, t);
    matmul(n, t, w, u);
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            assert_close(u[i + j * n], i == j ? 1.0 : 0.0, 0.0, 1e-11);
    matmul(n, r, r, t);
    for (size_t i = 0; i < n * n; i++)
        assert_close(t[i], s[i], 0.0, 1e-11);
    free(s);
    free(work);
    free(v);
    free(w_ref);
    free(r_ref);
    free(w);
    free(r);
    free(t);
    free(u);
}

/* A singular S: both paths keep the same eigenvalues. */
static void test_sym_fun_from_eig_singular(void **state)
{
    (void)state;
    size_t n = 6;
    double *s = random_spd(n, 3, 0.0, 5);
    double *work = malloc(el_est_sym_fun_work(n) * sizeof(double));
    double *v = malloc((n * n + 4 * n + 1) * sizeof(double));
    double *a = malloc(n * n * sizeof(double)), *b = malloc(n * n * sizeof(double));
    assert_true(work && v && a && b);
    int kept = el_est_sym_fun(n, s, n, -0.5, a, n, work);
    assert_int_equal(kept, 3);
    double *lam = v + n * n;
    assert_int_equal(el_est_sym_eig(n, s, n, v, lam, lam + n), 0);
    assert_int_equal(el_est_sym_fun_from_eig(n, v, lam, -0.5, b, n), kept);
    assert_memory_equal(a, b, n * n * sizeof(double));
    free(s);
    free(work);
    free(v);
    free(a);
    free(b);
}

/* An engine over a random walk of reduced states (far from zero mean, so
 * the centring and the compensation matter): one block over every pair
 * against the long double sum of the provider's features. */
static void test_engine_full_block_sum(void **state)
{
    (void)state;
    const el_boot_provider *prov = el_estimator_for(EL_METHOD_FB)->provider;
    el_boot_dims dims = {4, 0, 0};
    size_t n_states = 20001, sw = 4, d = prov->n_features(&dims);
    double *states = malloc(n_states * sw * sizeof(double));
    double *g = malloc((d + prov->work_doubles(&dims)) * sizeof(double));
    long double *ref = calloc(d, sizeof(long double));
    assert_true(states && g && ref);
    el_rng rng;
    el_rng_seed(&rng, 17, 0);
    double x[4] = {3.0, -2.0, 5.0, 1.0};
    for (size_t t = 0; t < n_states; t++)
        for (size_t i = 0; i < sw; i++) {
            x[i] = 0.98 * x[i] + 0.2 * el_rng_normal(&rng) + 0.02 * (double)(i + 1);
            states[t * sw + i] = x[i];
        }
    size_t pairs = n_states - prov->span(&dims) + 1;
    for (size_t k = 0; k < pairs; k++) {
        prov->features(&dims, states + k * sw, g);
        for (size_t f = 0; f < d; f++)
            ref[f] += (long double)g[f];
    }
    for (size_t stride = 1; stride <= 37; stride += 36) {
        el_boot_engine *e = NULL;
        el_error err;
        el_error_clear(&err);
        assert_int_equal(el_boot_engine_create_strided(prov, &dims, states, n_states, stride,
                                                       &e, &err), EL_OK);
        double *sum = malloc(d * sizeof(double));
        double *work = malloc(el_boot_engine_work_doubles(e) * sizeof(double));
        assert_true(sum && work);
        /* The whole range as one block. */
        el_boot_block all = {0, pairs};
        el_boot_engine_sum(e, &all, 1, sum, work);
        /* Features are O(100) (states up to about 10), a sum of 2e4 of
         * them O(2e6); the compensated prefixes and the plain runs of at
         * most 256 pairs lose a few hundred eps of a run's sum: 1e-9
         * relative is a factor 1e3 above that. */
        for (size_t f = 0; f < d; f++)
            assert_close(sum[f], (double)ref[f], 1e-9, 1e-9);
        free(sum);
        free(work);
        el_boot_engine_destroy(e);
    }
    free(states);
    free(g);
    free(ref);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_sym_fun_from_eig_same_doubles),
        cmocka_unit_test(test_sym_fun_from_eig_singular),
        cmocka_unit_test(test_engine_full_block_sum),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
