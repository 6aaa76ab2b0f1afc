/* Tests of el_stats_lagged_products (the sums of the sample
 * autocovariance that the subspace horizon, the whiteness test of the
 * data and the Ljung-Box test of the residuals share): closed forms of
 * alternating and constant-plus-step sequences, and bit-for-bit equality
 * with the plain double loop it replaces, whose order of additions it
 * promises to keep (so no decision that reads these sums can change). */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_rng.h"
#include "el_stats.h"
#include <cblas.h>
#include <math.h>

/* The plain loop of the contract: one accumulator per lag, ascending t. */
static double plain_lag(const double *x, size_t n, double mean, size_t k)
{
    double g = 0.0;
    for (size_t t = k; t < n; t++)
        g += (x[t] - mean) * (x[t - k] - mean);
    return g;
}

/* x_t = (-1)^t: sum_{t=k}^{n-1} x_t x_{t-k} = (-1)^k (n - k) (closed
 * form: every term is (-1)^k), 0 for k >= n. Small integers: exact in
 * doubles, so the comparison is exact (tolerance 0). Lags 0 .. 40 cross
 * every block of eight and the end of the data (n = 21), with a first lag
 * that is not a multiple of eight. */
static void test_lagged_alternating(void **state)
{
    (void)state;
    double x[21];
    for (size_t t = 0; t < 21; t++)
        x[t] = t % 2 ? -1.0 : 1.0;
    double out[41];
    el_stats_lagged_products(x, 21, 0.0, 0, 41, out);
    for (size_t k = 0; k <= 40; k++) {
        double want = k >= 21 ? 0.0 : (k % 2 ? -1.0 : 1.0) * (double)(21 - k);
        assert_close(out[k], want, 0.0, 0.0);
    }
    double part[5];
    el_stats_lagged_products(x, 21, 0.0, 3, 5, part);
    for (size_t j = 0; j < 5; j++)
        assert_close(part[j], out[3 + j], 0.0, 0.0);
}

/* Centring: x = 2 on the first half, 0 on the second, mean 1 (n = 10),
 * so x - mean = +1, ..., +1, -1, ..., -1: the lag-k sum is the number of
 * pairs (t, t - k) on one side minus those across the step; by hand:
 * k = 0: 10, k = 1: 7, k = 2: 4, k = 3: 1, k = 4: -2, k = 5: -5,
 * k = 6: -4, k = 7: -3, k = 8: -2, k = 9: -1 (terms across the step are
 * -1, the others +1). Exact integers: tolerance 0. */
static void test_lagged_centring(void **state)
{
    (void)state;
    double x[10] = {2, 2, 2, 2, 2, 0, 0, 0, 0, 0};
    const double want[10] = {10, 7, 4, 1, -2, -5, -4, -3, -2, -1};
    double out[10];
    el_stats_lagged_products(x, 10, 1.0, 0, 10, out);
    for (size_t k = 0; k < 10; k++)
        assert_close(out[k], want[k], 0.0, 0.0);
}

/* Random data of several lengths (below, at and above a block of lags,
 * and long; around the 1024-sample chunks of centred values): every lag
 * equals the plain loop bit for bit (==, not a
 * tolerance: the contract is the same additions in the same order). */
static void test_lagged_bitwise(void **state)
{
    (void)state;
    const size_t lens[] = {1, 2, 7, 8, 9, 15, 33, 1000, 1031, 1032, 2092, 100003};
    el_rng rng;
    el_rng_seed(&rng, 20261204u, 0);
    for (size_t i = 0; i < sizeof lens / sizeof lens[0]; i++) {
        size_t n = lens[i];
        double *x = malloc(n * sizeof *x);
        assert_non_null(x);
        for (size_t t = 0; t < n; t++)
            x[t] = 3.0 + el_rng_normal(&rng);
        double mean = 3.0 + 1e-3;
        for (size_t k0 = 0; k0 < 4; k0++) {
            double out[45];
            el_stats_lagged_products(x, n, mean, k0, 45, out);
            for (size_t j = 0; j < 45; j++) {
                double want = plain_lag(x, n, mean, k0 + j);
                if (memcmp(&out[j], &want, sizeof want) != 0)
                    fail_msg("n %zu lag %zu: %.17g, plain loop %.17g", n, k0 + j, out[j],
                             want);
            }
        }
        free(x);
    }
}

/* el_stats_spread_many against el_stats_spread channel by channel, bit
 * for bit (tolerance 0: the contract promises the same additions in the
 * same order), on seven channels (a group of four and a remainder of
 * three): normal noise on a large level, a constant channel, one at
 * 1e-170 (the scaled path of the squares), one near 1e300 (the overflowed
 * sum's path), one with a NaN, a short ramp, noise again; closed forms
 * for two: the constant channel is constant with sd 0, the ramp 0..n-1
 * has mean (n-1)/2 (exact in doubles for n = 1001). */
static void test_spread_many_bitwise(void **state)
{
    (void)state;
    size_t n = 1001, nc = 7;
    double *x = malloc(n * nc * sizeof *x);
    assert_non_null(x);
    el_rng rng;
    el_rng_seed(&rng, 11, 0);
    for (size_t k = 0; k < n; k++) {
        x[k] = 1e5 + el_rng_normal(&rng);
        x[n + k] = 2.5;
        x[2 * n + k] = 1e-170 * el_rng_normal(&rng);
        x[3 * n + k] = 1e300 * (1.0 + 0.5 * el_rng_normal(&rng));
        x[4 * n + k] = el_rng_normal(&rng);
        x[5 * n + k] = (double)k;
        x[6 * n + k] = -3.0 + 1e-3 * el_rng_normal(&rng);
    }
    x[4 * n + 500] = NAN;
    double mean[7], sd[7];
    int constant[7];
    el_stats_spread_many(x, n, nc, mean, sd, constant);
    for (size_t c = 0; c < nc; c++) {
        double m1, s1;
        int k1 = el_stats_spread(x + c * n, n, &m1, &s1);
        assert_int_equal(constant[c], k1);
        assert_memory_equal(&mean[c], &m1, sizeof m1);
        assert_memory_equal(&sd[c], &s1, sizeof s1);
    }
    assert_int_equal(constant[1], 1);
    assert_true(sd[1] == 0.0);
    assert_true(mean[5] == 500.0);
    assert_true(sd[2] > 0.0 && constant[2] == 0);
    assert_true(isnan(mean[4]) || isnan(sd[4]));
    /* fewer than four channels: the single path */
    el_stats_spread_many(x + 5 * n, n, 2, mean, sd, constant);
    assert_true(mean[0] == 500.0 && constant[1] == 0);
    free(x);
}

/* el_stats_add_rows against one cblas_daxpy of weight 1 per row (what the
 * hankel bootstrap's replicate sums did before), bit for bit: rows of
 * wide dynamic range, so that any other order of the additions shows in
 * the result, row counts around the eight-row pass (0 .. 19) and lengths
 * off the vector width. Closed form (IEEE 754 doubles, round to nearest
 * even): 1e16 + 1 rounds to 1e16 (the spacing there is 2), so the rows
 * 1e16, 1, -1e16 in this order sum to 0, not 1. */
static void test_add_rows_bitwise(void **state)
{
    (void)state;
    enum { N_ROWS = 19, LEN = 131 };
    double *rows = malloc(N_ROWS * LEN * sizeof *rows);
    double a[LEN], b[LEN];
    assert_non_null(rows);
    el_rng rng;
    el_rng_seed(&rng, 12, 0);
    for (size_t k = 0; k < N_ROWS * LEN; k++)
        rows[k] = el_rng_normal(&rng) * pow(10.0, (double)(k % 33) - 16.0);
    const double *ptr[N_ROWS];
    for (size_t r = 0; r < N_ROWS; r++)
        ptr[r] = rows + ((r * 7) % N_ROWS) * LEN;  /* not in memory order */
    for (size_t nr = 0; nr <= N_ROWS; nr++) {
        for (size_t len = 1; len <= LEN; len += 13) {
            for (size_t j = 0; j < len; j++)
                a[j] = b[j] = 0.25 * (double)j - 3.0;
            el_stats_add_rows(a, len, ptr, nr);
            for (size_t r = 0; r < nr; r++)
                cblas_daxpy((int)len, 1.0, ptr[r], 1, b, 1);
            assert_memory_equal(a, b, len * sizeof *a);
        }
    }
    double big = 1e16, one = 1.0, minus = -1e16, s = 0.0;
    const double *seq[3] = {&big, &one, &minus};
    el_stats_add_rows(&s, 1, seq, 3);
    assert_true(s == 0.0);
    free(rows);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_lagged_alternating),
        cmocka_unit_test(test_lagged_centring),
        cmocka_unit_test(test_lagged_bitwise),
        cmocka_unit_test(test_spread_many_bitwise),
        cmocka_unit_test(test_add_rows_bitwise),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
