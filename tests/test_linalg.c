/* test_linalg: matrix product, matrix exponential and Van Loan
 * discretisation against numpy/scipy fixtures and closed forms. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_linalg.h"
#include "data/linalg_fixture.h"

/* Fixtures: tests/data/linalg_fixture.h, written by
 * tests/data/make_linalg_fixture.py with /usr/bin/python3 (numpy/scipy;
 * scipy.linalg.expm is Al-Mohy & Higham 2009, an implementation
 * independent of this one). */

#define U_ROUND 1.1102230246251565e-16   /* unit roundoff 2^-53 */

static double max_abs(size_t n, const double *x)
{
    double m = 0.0;
    for (size_t i = 0; i < n; i++)
        if (fabs(x[i]) > m)
            m = fabs(x[i]);
    return m;
}

/* Normwise check: every |got - want| <= tol * max|want|. Elementwise
 * relative error means little for small entries beside large ones. */
static void assert_normwise(const double *got, const double *want, size_t count,
                            double tol)
{
    assert_close_array(got, want, count, 0.0, tol * max_abs(count, want));
}

static void expm_or_fail(size_t n, const double *a, double *e)
{
    double *work = malloc(6 * n * n * sizeof *work);
    int *ipiv = malloc(n * sizeof *ipiv);
    assert_non_null(work);
    assert_non_null(ipiv);
    el_error err;
    el_error_clear(&err);
    el_status st = el_expm(n, a, e, work, ipiv, &err);
    if (st != EL_OK)
        fail_msg("el_expm failed: %s", err.message);
    free(work);
    free(ipiv);
}

static void test_matmul_against_numpy(void **state)
{
    (void)state;
    double c[6];
    el_matmul(3, 4, 2, fx_mm_a, fx_mm_b, c);
    /* A dot product of 4 terms has rounding error <= 4u sum|a_i b_i|; with
     * entries of order 1 that is below 1e-15: tolerance 1e-14 normwise. */
    assert_normwise(c, fx_mm_c, 6, 1e-14);

    double z[6] = {1, 2, 3, 4, 5, 6};
    el_matmul(3, 0, 2, fx_mm_a, fx_mm_b, z);   /* empty inner dimension */
    for (int i = 0; i < 6; i++)
        assert_close(z[i], 0.0, 0.0, 0.0);
}

static void test_expm_random_every_pade_degree(void **state)
{
    (void)state;
    /* Higham (2005) picks the degree so the backward error is at most u;
     * the forward error is then about cond(expm, A) * u, and fx_random_cond
     * (scipy.linalg.expm_cond) is at most 34 here: 34 * 1.1e-16 = 4e-15.
     * The matrix products add a few n*u. Two such implementations agree
     * well within 1e-12 normwise; a wrong Pade coefficient or theta gives
     * errors of 1e-6 or more. */
    for (int k = 0; k < FX_RANDOM_COUNT; k++) {
        assert_true(fx_random_cond[k] * U_ROUND < 1e-14);
        double e[16];
        expm_or_fail(4, &fx_random_a[16 * k], e);
        assert_normwise(e, &fx_random_expm[16 * k], 16, 1e-12);
    }
}

static void test_expm_stiff(void **state)
{
    (void)state;
    /* Eigenvalues -1 .. -1000 under a similarity: 1-norm 2.2e3, 9
     * squarings, and cond(expm, A) = 2.6e3 (fixture): the forward error of
     * each implementation is about 2.6e3 * 1.1e-16 = 3e-13 (a first-order
     * estimate, not a rigorous bound), so the two can differ by twice
     * that; 1e-11 normwise leaves a factor 15 over the estimate (observed
     * difference 2.4e-14). */
    double e[16];
    expm_or_fail(4, fx_stiff_a, e);
    assert_normwise(e, fx_stiff_expm, 16, 1e-11);
    assert_true(fx_stiff_cond * U_ROUND < 1e-12);
}

static void rotation_check(double w, const double *scipy_ref)
{
    double a[4] = {0.0, w, -w, 0.0};   /* column-major [[0, -w], [w, 0]] */
    double e[4];
    expm_or_fail(2, a, e);
    /* Closed form: exp([[0, -w], [w, 0]]) = [[cos w, -sin w], [sin w, cos w]].
     * For this normal matrix cond(expm) = ||A||_F = w sqrt 2 <= 43, and the
     * 3 squarings for w = 30 add a few u each: 1e-12 absolute on entries
     * of size <= 1 (libm cos/sin are within 1 ulp). */
    double want[4] = {cos(w), sin(w), -sin(w), cos(w)};
    assert_close_array(e, want, 4, 0.0, 1e-12);
    assert_normwise(e, scipy_ref, 4, 1e-12);
}

static void test_expm_rotation_closed_form(void **state)
{
    (void)state;
    rotation_check(fx_rot_small_w, fx_rot_small_expm);
    rotation_check(fx_rot_large_w, fx_rot_large_expm);
}

static void test_expm_nilpotent_closed_form(void **state)
{
    (void)state;
    /* N^4 = 0, so exp(N) = I + N + N^2/2 + N^3/6 exactly; the sum is
     * formed here with plain loops, independent of the library. */
    const size_t n = 4;
    double p2[16] = {0}, p3[16] = {0}, want[16];
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++)
            for (size_t k = 0; k < n; k++)
                p2[i + j * n] += fx_nil_a[i + k * n] * fx_nil_a[k + j * n];
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++)
            for (size_t k = 0; k < n; k++)
                p3[i + j * n] += p2[i + k * n] * fx_nil_a[k + j * n];
    for (size_t idx = 0; idx < n * n; idx++)
        want[idx] = fx_nil_a[idx] + p2[idx] / 2.0 + p3[idx] / 6.0
                    + (idx % (n + 1) == 0 ? 1.0 : 0.0);
    double e[16];
    expm_or_fail(n, fx_nil_a, e);
    /* 1-norm 14: degree 13 with 2 squarings; entries up to 30. The
     * relative forward error is a few hundred u at most (the exact result
     * has integer-ratio entries and no cancellation between large terms):
     * 1e-12 normwise. */
    assert_normwise(e, want, 16, 1e-12);
    assert_normwise(e, fx_nil_expm, 16, 1e-12);
}

static void test_expm_zero_is_identity(void **state)
{
    (void)state;
    /* Pade approximant at 0: U = 0, V = b0 I, so R = I exactly. */
    double z[9] = {0}, e[9];
    expm_or_fail(3, z, e);
    for (size_t i = 0; i < 3; i++)
        for (size_t j = 0; j < 3; j++)
            assert_close(e[i + j * 3], i == j ? 1.0 : 0.0, 0.0, 0.0);
}

static void test_expm_errors(void **state)
{
    (void)state;
    double work[6 * 4], e[4];
    int ipiv[2];
    el_error err;
    double a_nan[4] = {0.0, NAN, 0.0, 0.0};
    el_error_clear(&err);
    assert_int_equal(el_expm(2, a_nan, e, work, ipiv, &err), EL_ERR_NUMERIC);
    assert_true(err.message[0] != '\0');

    /* e^800 exceeds the largest double (about e^709.8). */
    double a_big[1] = {800.0};
    el_error_clear(&err);
    assert_int_equal(el_expm(1, a_big, e, work, ipiv, &err), EL_ERR_NUMERIC);
    assert_true(err.hint[0] != '\0');

    el_error_clear(&err);
    assert_int_equal(el_expm(0, a_big, e, work, ipiv, &err), EL_ERR_INTERNAL);
}

static el_status discretise(size_t n, const double *a, const double *q, double dt,
                            double *ad, double *qd, double *g, el_error *err)
{
    double *work = malloc(el_discretise_work_size(n) * sizeof *work);
    int *iwork = malloc(2 * n * sizeof *iwork);
    assert_non_null(work);
    assert_non_null(iwork);
    el_error_clear(err);
    el_status st = el_discretise(n, a, q, dt, ad, qd, g, work, iwork, err);
    free(work);
    free(iwork);
    return st;
}

static void test_discretise_scalar_closed_form(void **state)
{
    (void)state;
    /* dx = a x dt + dW with intensity q: Ad = e^{a dt},
     * Qd = int_0^dt e^{2as} q ds = q (e^{2 a dt} - 1) / (2a)
     * (written with expm1 to avoid cancellation in the reference). Cases:
     * a decaying mode and the slowly growing one of the rig demo. The
     * 2x2 Van Loan exponential is accurate to a few u relative:
     * tolerance 1e-13. */
    const double cases[][3] = {{-0.7, 0.3, 0.5}, {0.03, 2e-4, 0.01},
                               {-5.0, 1.0, 2.0}};
    for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
        double a = cases[c][0], q = cases[c][1], dt = cases[c][2];
        double ad, qd, g;
        el_error err;
        assert_int_equal(discretise(1, &a, &q, dt, &ad, &qd, &g, &err), EL_OK);
        assert_close(ad, exp(a * dt), 1e-13, 0.0);
        double want = q * expm1(2.0 * a * dt) / (2.0 * a);
        assert_close(qd, want, 1e-13, 0.0);
        assert_close(g * g, qd, 1e-14, 0.0);   /* sqrt is correctly rounded */
    }
}

static void test_discretise_2x2_against_quadrature(void **state)
{
    (void)state;
    for (int k = 0; k < 2; k++) {
        double ad[4], qd[4], g[4];
        el_error err;
        assert_int_equal(discretise(2, fx_vl_a, fx_vl_q, fx_vl_dt[k], ad, qd, g,
                                    &err), EL_OK);
        /* Ad against scipy expm: as for the random matrices, 1e-12. */
        assert_normwise(ad, &fx_vl_ad[4 * k], 4, 1e-12);
        /* Qd against adaptive quadrature run at epsrel 1e-13: the
         * quadrature error dominates; 1e-11 normwise is 100 times that. */
        assert_normwise(qd, &fx_vl_qd[4 * k], 4, 1e-11);
        assert_close(qd[1], qd[2], 0.0, 0.0);   /* returned symmetric */
        /* G G' = Qd: Cholesky is backward stable, error of order
         * n u ||Qd||: 1e-14 normwise. */
        double ggt[4] = {0};
        for (size_t i = 0; i < 2; i++)
            for (size_t j = 0; j < 2; j++)
                for (size_t l = 0; l < 2; l++)
                    ggt[i + 2 * j] += g[i + 2 * l] * g[j + 2 * l];
        assert_normwise(ggt, qd, 4, 1e-14);
    }
}

static void test_discretise_semidefinite_noise(void **state)
{
    (void)state;
    /* A = 0 and Q = [[1, 1], [1, 1]] (rank 1): Qd = Q dt exactly in closed
     * form, and its factor must have one zero column. */
    double a[4] = {0}, q[4] = {1, 1, 1, 1}, ad[4], qd[4], g[4];
    el_error err;
    assert_int_equal(discretise(2, a, q, 0.25, ad, qd, g, &err), EL_OK);
    double want_qd[4] = {0.25, 0.25, 0.25, 0.25}, eye[4] = {1, 0, 0, 1};
    assert_close_array(ad, eye, 4, 0.0, 1e-15);
    assert_close_array(qd, want_qd, 4, 1e-14, 1e-15);
    assert_close(g[2], 0.0, 0.0, 0.0);
    assert_close(g[3], 0.0, 0.0, 0.0);
    assert_close(g[0] * g[0], 0.25, 1e-14, 0.0);
    assert_close(g[0] * g[1], 0.25, 1e-14, 0.0);

    /* No noise at all: Qd = 0 and G = 0, no failure. */
    double q0[4] = {0}, a2[4] = {-1, 2, -3, -0.5};
    assert_int_equal(discretise(2, a2, q0, 0.1, ad, qd, g, &err), EL_OK);
    for (int i = 0; i < 4; i++) {
        assert_close(qd[i], 0.0, 0.0, 0.0);
        assert_close(g[i], 0.0, 0.0, 0.0);
    }
}

static void test_discretise_factor_is_unpivoted_cholesky(void **state)
{
    (void)state;
    /* The factor must not depend on which diagonal entry of Qd is larger
     * (with isotropic noise they tie up to the last bits, and a pivoted
     * factor then changes with the BLAS kernel). A = 0, Q = diag(1, 2):
     * Qd = Q dt exactly; a pivoted factor would start with the larger
     * second entry and put a nonzero in G's upper triangle. The plain
     * Cholesky factor is diag(sqrt(dt), sqrt(2 dt)) (Golub & Van Loan,
     * Algorithm 4.2.1): sqrt is correctly rounded, so 1 ulp (2.2e-16
     * relative) is the whole error; 1e-15 allows the product dt * q. */
    double a[4] = {0}, q[4] = {1, 0, 0, 2}, ad[4], qd[4], g[4];
    el_error err;
    assert_int_equal(discretise(2, a, q, 0.5, ad, qd, g, &err), EL_OK);
    assert_close(g[2], 0.0, 0.0, 0.0);   /* upper triangle exactly zero */
    assert_close(g[1], 0.0, 0.0, 1e-16);
    assert_close(g[0], sqrt(0.5), 1e-15, 0.0);
    assert_close(g[3], 1.0, 1e-15, 0.0);

    /* A full 2x2 Qd (the fixture system): closed-form Cholesky
     * g00 = sqrt(q00), g10 = q10 / g00, g11 = sqrt(q11 - g10^2), computed
     * here from the returned Qd; the same few roundings: 1e-14 relative. */
    double g2[4];
    assert_int_equal(discretise(2, fx_vl_a, fx_vl_q, fx_vl_dt[0], ad, qd, g2, &err),
                     EL_OK);
    double g00 = sqrt(qd[0]), g10 = qd[1] / g00;
    double g11 = sqrt(qd[3] - g10 * g10);
    assert_close(g2[2], 0.0, 0.0, 0.0);
    assert_close(g2[0], g00, 1e-14, 0.0);
    assert_close(g2[1], g10, 1e-14, 0.0);
    assert_close(g2[3], g11, 1e-14, 0.0);
}

static void test_discretise_indefinite_noise_is_refused(void **state)
{
    (void)state;
    /* Q = diag(1, -1) is symmetric but not positive semi-definite: no real
     * G with G G' = Qd exists, so a factor must not be returned. */
    double a[4] = {0}, q[4] = {1, 0, 0, -1}, ad[4], qd[4], g[4];
    el_error err;
    assert_int_equal(discretise(2, a, q, 0.1, ad, qd, g, &err), EL_ERR_NUMERIC);
    assert_non_null(strstr(err.message, "semi-definite"));
    /* Without a factor asked for, Qd alone is still computed. */
    assert_int_equal(discretise(2, a, q, 0.1, ad, qd, NULL, &err), EL_OK);
}

static void test_discretise_bad_arguments(void **state)
{
    (void)state;
    double a[4] = {0}, q_bad[4] = {1, 0.5, 0.0, 1}, q[4] = {1, 0, 0, 1};
    double ad[4], qd[4];
    el_error err;
    assert_int_equal(discretise(2, a, q_bad, 0.1, ad, qd, NULL, &err),
                     EL_ERR_INTERNAL);
    assert_int_equal(discretise(2, a, q, 0.0, ad, qd, NULL, &err), EL_ERR_INTERNAL);
    assert_int_equal(discretise(2, a, q, NAN, ad, qd, NULL, &err), EL_ERR_INTERNAL);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_matmul_against_numpy),
        cmocka_unit_test(test_expm_random_every_pade_degree),
        cmocka_unit_test(test_expm_stiff),
        cmocka_unit_test(test_expm_rotation_closed_form),
        cmocka_unit_test(test_expm_nilpotent_closed_form),
        cmocka_unit_test(test_expm_zero_is_identity),
        cmocka_unit_test(test_expm_errors),
        cmocka_unit_test(test_discretise_scalar_closed_form),
        cmocka_unit_test(test_discretise_2x2_against_quadrature),
        cmocka_unit_test(test_discretise_semidefinite_noise),
        cmocka_unit_test(test_discretise_factor_is_unpivoted_cholesky),
        cmocka_unit_test(test_discretise_indefinite_noise_is_refused),
        cmocka_unit_test(test_discretise_bad_arguments),
    };
    return cmocka_run_group_tests_name("linalg", tests, NULL, NULL);
}
