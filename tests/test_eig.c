/* test_eig: the allocation-free eigenvalue solver against LAPACK (dgeevx,
 * dsyev, dstev), closed forms and classical test matrices. */
#include "el_test.h"

#include <float.h>
#include <stdlib.h>
#include <string.h>

#include <lapacke.h>
#include <pthread.h>

#include "el_eig.h"
#include "el_rng.h"

/* References used here, none of which shares code with src/el_eig.c:
 * - LAPACK (OpenBLAS build, via LAPACKE): dgeevx gives reference
 *   eigenvalues and, with sense = 'E', the reciprocal condition number
 *   s_i of each eigenvalue and the 1-norm of the balanced matrix, which
 *   size the tolerances; dsyev and dstev are symmetric solvers (a
 *   different algorithm) for symmetric inputs.
 * - Closed forms, each named beside its test.
 *
 * Tolerances. A backward stable method returns the exact eigenvalues of
 * A + E with ||E|| <= p(n) eps ||A||; to first order an eigenvalue then
 * moves by at most ||E|| / s_i (LAPACK Users' Guide, 3rd ed., SIAM 1999,
 * "Error Bounds for the Nonsymmetric Eigenproblem", section 4.8, section
 * number recalled from memory: error bound eps ||A_balanced|| / s_i).
 * Here p(n) is taken as C_NORMWISE n: Wilkinson's worst-case bound for
 * Householder reductions is O(n^2) eps but the observed growth is at most
 * linear. With two solvers under comparison the differences add. Normal
 * matrices (symmetric, circulant, rotation blocks) have s_i = 1 and use
 * ||A||_F (Bauer-Fike); defective ones get a k-th root bound, derived
 * where it is used. */

#define EPS DBL_EPSILON
#define NMAX 64

/* Comparisons with LAPACK or a closed form use tol_i = C_NORMWISE n eps
 * ||A_bal||_1 / s_i, with ||A_bal||_1 and s_i from dgeevx. Over 20 000
 * random matrices of sizes 1..64 (Gaussian, graded, small integers) the
 * largest observed |ours - dgeevx| / (n eps ||A_bal||_1 / s_i) was 3.5,
 * at n = 3 (both solvers equally far from an extended-precision root);
 * in this file's cases it is 1.7. 10 leaves a factor 3 for other seeds. A
 * wrong shift, a too-loose deflation or a lost balancing step gives errors
 * orders of magnitude larger (each was tried: every one fails here). */
#define C_NORMWISE 10.0

/* ---- helpers ------------------------------------------------------------ */

static double gauss(el_rng *rng)
{
    return el_rng_normal(rng);
}

static double frobenius(size_t n, const double *a)
{
    double s = 0.0;
    for (size_t i = 0; i < n * n; i++)
        s += a[i] * a[i];
    return sqrt(s);
}

/* Fails unless every nonzero wi starts an exact conjugate pair: wi > 0,
 * the next entry has the same wr bit for bit and exactly -wi (the API
 * promises this so that callers can group pairs by equality). */
static void assert_pair_layout(size_t n, const double *wr, const double *wi)
{
    for (size_t i = 0; i < n; i++) {
        if (wi[i] == 0.0)
            continue;
        if (!(wi[i] > 0.0) || i + 1 >= n || wr[i + 1] != wr[i] || wi[i + 1] != -wi[i])
            fail_msg("n = %zu: eigenvalue %zu = %.17g%+.17gi does not start an "
                     "exact conjugate pair", n, i, wr[i], wi[i]);
        i++;
    }
}

/* el_eig_values on a (leading dimension lda) with a workspace of exactly
 * el_eig_work_doubles(n) doubles (AddressSanitizer flags any access past
 * it). Fails unless it returns 0, leaves a unchanged and lays out the
 * pairs as documented. */
static void eig_ok(size_t n, const double *a, size_t lda, double *wr, double *wi)
{
    size_t nw = el_eig_work_doubles(n), na = lda * n;
    double *work = malloc((nw > 0 ? nw : 1) * sizeof *work);
    double *before = malloc((na > 0 ? na : 1) * sizeof *before);
    assert_non_null(work);
    assert_non_null(before);
    if (na > 0)
        memcpy(before, a, na * sizeof *a);
    int rc = el_eig_values(n, a, lda, wr, wi, work);
    if (rc != 0)
        fail_msg("el_eig_values returned %d for n = %zu", rc, n);
    if (na > 0)
        assert_memory_equal(before, a, na * sizeof *a);
    assert_pair_layout(n, wr, wi);
    free(work);
    free(before);
}

/* LAPACK's answer for a square matrix: eigenvalues, reciprocal condition
 * numbers s_i and the 1-norm of the balanced matrix (balanc = 'S': the
 * diagonal scaling that el_eig also does). */
typedef struct {
    double wr[NMAX], wi[NMAX], rcond[NMAX], abnrm;
} lapack_ref;

static void lapack_eig(size_t n, const double *a, lapack_ref *r)
{
    assert_true(n >= 1 && n <= NMAX);
    double *b = malloc(n * n * sizeof *b), *vl = malloc(n * n * sizeof *vl);
    double *vr = malloc(n * n * sizeof *vr), scale[NMAX], rcondv[NMAX];
    assert_true(b != NULL && vl != NULL && vr != NULL);
    memcpy(b, a, n * n * sizeof *a);
    lapack_int ilo, ihi, ln = (lapack_int)n;
    lapack_int info = LAPACKE_dgeevx(LAPACK_COL_MAJOR, 'S', 'V', 'V', 'E', ln, b, ln,
                                     r->wr, r->wi, vl, ln, vr, ln, &ilo, &ihi, scale,
                                     &r->abnrm, r->rcond, rcondv);
    assert_int_equal(info, 0);
    free(b);
    free(vl);
    free(vr);
}

/* tol_i = c n eps ||A_bal||_1 / s_i for each of LAPACK's eigenvalues. */
static void condition_tolerances(size_t n, const lapack_ref *r, double c, double *tol)
{
    for (size_t i = 0; i < n; i++) {
        /* Below this the first-order bound is no longer a bound (the
         * eigenvalue is close to defective); such matrices need their
         * own, sharper argument (see the Jordan tests). */
        assert_true(r->rcond[i] > 1e-7);
        tol[i] = c * (double)n * EPS * r->abnrm / r->rcond[i];
    }
}

/* Matches each wanted eigenvalue (want_re, want_im) to the nearest unused
 * computed one and fails when the distance exceeds tol[i]. The wanted
 * values are taken in order of increasing tolerance so that
 * well-conditioned eigenvalues choose first. */
static void assert_spectrum(size_t n, const double *gr, const double *gi,
                            const double *want_re, const double *want_im,
                            const double *tol, const char *what)
{
    int used[NMAX] = {0}, done[NMAX] = {0};
    assert_true(n <= NMAX);
    for (size_t step = 0; step < n; step++) {
        size_t w = n;
        for (size_t i = 0; i < n; i++)
            if (!done[i] && (w == n || tol[i] < tol[w]))
                w = i;
        done[w] = 1;
        size_t best = n;
        double dbest = INFINITY;
        for (size_t j = 0; j < n; j++) {
            double d = hypot(gr[j] - want_re[w], gi[j] - want_im[w]);
            if (!used[j] && d < dbest) {
                dbest = d;
                best = j;
            }
        }
        used[best] = 1;
        if (!(dbest <= tol[w]))
            fail_msg("%s (n = %zu): eigenvalue %.17g%+.17gi: nearest computed "
                     "%.17g%+.17gi, distance %.3g > tolerance %.3g", what, n,
                     want_re[w], want_im[w], gr[best], gi[best], dbest, tol[w]);
    }
}

/* Ours against dgeevx with tol_i = C_NORMWISE n eps ||A_bal|| / s_i. */
static void check_against_lapack(size_t n, const double *a, const char *what)
{
    double wr[NMAX], wi[NMAX], tol[NMAX];
    lapack_ref ref;
    eig_ok(n, a, n, wr, wi);
    lapack_eig(n, a, &ref);
    condition_tolerances(n, &ref, C_NORMWISE, tol);
    assert_spectrum(n, wr, wi, ref.wr, ref.wi, tol, what);
}

/* Ours against known eigenvalues (want_re, want_im) with the tolerance of
 * check_against_lapack, each known value taking s_i of LAPACK's nearest
 * eigenvalue (LAPACK only sizes the tolerance here). */
static void check_against_known(size_t n, const double *a, const double *want_re,
                                const double *want_im, const char *what)
{
    double wr[NMAX], wi[NMAX], tol_ref[NMAX], tol[NMAX];
    lapack_ref ref;
    eig_ok(n, a, n, wr, wi);
    lapack_eig(n, a, &ref);
    condition_tolerances(n, &ref, C_NORMWISE, tol_ref);
    for (size_t i = 0; i < n; i++) {
        size_t near = 0;
        for (size_t j = 1; j < n; j++)
            if (hypot(ref.wr[j] - want_re[i], ref.wi[j] - want_im[i])
                < hypot(ref.wr[near] - want_re[i], ref.wi[near] - want_im[i]))
                near = j;
        tol[i] = tol_ref[near];
    }
    assert_spectrum(n, wr, wi, want_re, want_im, tol, what);
}

/* Random orthogonal n x n matrix: the Q factor of a Gaussian matrix
 * (LAPACK dgeqrf + dorgqr). */
static void random_orthogonal(size_t n, el_rng *rng, double *q)
{
    double tau[NMAX];
    for (size_t i = 0; i < n * n; i++)
        q[i] = gauss(rng);
    lapack_int ln = (lapack_int)n;
    assert_int_equal(LAPACKE_dgeqrf(LAPACK_COL_MAJOR, ln, ln, q, ln, tau), 0);
    assert_int_equal(LAPACKE_dorgqr(LAPACK_COL_MAJOR, ln, ln, ln, q, ln, tau), 0);
}

/* a = q t q' by plain loops (q orthogonal, so the similarity keeps the
 * eigenvalues and, to rounding, their conditioning). */
static void orthogonal_similarity(size_t n, const double *q, const double *t, double *a)
{
    double *qt = calloc(n * n, sizeof *qt);
    assert_non_null(qt);
    for (size_t j = 0; j < n; j++)
        for (size_t k = 0; k < n; k++)
            for (size_t i = 0; i < n; i++)
                qt[i + j * n] += q[i + k * n] * t[k + j * n];
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double s = 0.0;
            for (size_t k = 0; k < n; k++)
                s += qt[i + k * n] * q[j + k * n];
            a[i + j * n] = s;
        }
    free(qt);
}

/* ---- 1. agreement with LAPACK dgeevx ------------------------------------ */

static void test_random_gaussian_vs_dgeev(void **state)
{
    (void)state;
    el_rng rng;
    el_rng_seed(&rng, 20260401, 1);
    static double a[NMAX * NMAX];
    char what[64];
    for (size_t n = 1; n <= 20; n++)
        for (int rep = 0; rep < 12; rep++) {
            for (size_t i = 0; i < n * n; i++)
                a[i] = gauss(&rng);
            snprintf(what, sizeof what, "gaussian rep %d", rep);
            check_against_lapack(n, a, what);
        }
    const size_t big[] = {32, 32, 64, 64};
    for (size_t k = 0; k < sizeof big / sizeof big[0]; k++) {
        for (size_t i = 0; i < big[k] * big[k]; i++)
            a[i] = gauss(&rng);
        check_against_lapack(big[k], a, "gaussian large");
    }
}

static void test_small_integer_entries_vs_dgeev(void **state)
{
    (void)state;
    /* Entries in {-3..3}: many exact zeros, repeated values and rational
     * structure, unlike Gaussian matrices. A matrix with a repeated or
     * nearly defective eigenvalue trips the s_i check in
     * condition_tolerances; with this seed none does. */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 2);
    double a[16 * 16];
    for (size_t n = 3; n <= 16; n++)
        for (int rep = 0; rep < 4; rep++) {
            for (size_t i = 0; i < n * n; i++)
                a[i] = (double)el_rng_below(&rng, 7) - 3.0;
            check_against_lapack(n, a, "integer entries");
        }
}

static void test_graded_needs_balancing(void **state)
{
    (void)state;
    /* A = D B D^-1 with B Gaussian and D = diag(10^u_i), u_i uniform in
     * [-5, 5]: entries span about 20 orders of magnitude while the
     * eigenvalues are those of B. Without balancing the backward error
     * would be of order eps ||A|| ~ eps 1e10 ||B||; with it, eps ||B||. So
     * the check is against LAPACK's eigenvalues of B with tolerance
     * C_NORMWISE n eps ||B_bal|| / s_i(B); forming A rounds each entry
     * once (relative 2 eps, a perturbation of B well inside that). */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 3);
    double a[24 * 24], b[24 * 24], d[24], wr[24], wi[24], tol[24];
    const size_t sizes[] = {3, 5, 8, 12, 16, 24};
    for (size_t s = 0; s < sizeof sizes / sizeof sizes[0]; s++) {
        size_t n = sizes[s];
        for (int rep = 0; rep < 3; rep++) {
            for (size_t i = 0; i < n; i++)
                d[i] = pow(10.0, 10.0 * el_rng_uniform(&rng) - 5.0);
            for (size_t j = 0; j < n; j++)
                for (size_t i = 0; i < n; i++) {
                    b[i + j * n] = gauss(&rng);
                    a[i + j * n] = d[i] * b[i + j * n] / d[j];
                }
            lapack_ref ref;
            lapack_eig(n, b, &ref);
            condition_tolerances(n, &ref, C_NORMWISE, tol);
            eig_ok(n, a, n, wr, wi);
            assert_spectrum(n, wr, wi, ref.wr, ref.wi, tol, "graded D B D^-1");
        }
    }
}

static void test_symmetric_vs_dsyev(void **state)
{
    (void)state;
    /* Symmetric matrices: eigenvalues are perfectly conditioned (s_i = 1),
     * and dsyev (tridiagonal QL/QR) is a different algorithm. Tolerance
     * C_NORMWISE n eps ||A||_F for each eigenvalue (Bauer-Fike for a
     * normal matrix: |d lambda| <= ||E||_2). Close eigenvalues may come
     * out as a pair with an imaginary part of that size, which the
     * distance check allows. */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 4);
    double a[20 * 20], b[20 * 20], w[20], zero[20] = {0}, wr[20], wi[20], tol[20];
    for (size_t n = 2; n <= 20; n += 3)
        for (int rep = 0; rep < 3; rep++) {
            for (size_t j = 0; j < n; j++)
                for (size_t i = 0; i <= j; i++)
                    a[i + j * n] = a[j + i * n] = gauss(&rng);
            memcpy(b, a, n * n * sizeof *a);
            assert_int_equal(LAPACKE_dsyev(LAPACK_COL_MAJOR, 'N', 'U', (lapack_int)n, b,
                                           (lapack_int)n, w), 0);
            for (size_t i = 0; i < n; i++)
                tol[i] = C_NORMWISE * (double)n * EPS * frobenius(n, a);
            eig_ok(n, a, n, wr, wi);
            assert_spectrum(n, wr, wi, w, zero, tol, "symmetric vs dsyev");
        }
}

/* ---- structured matrices with exactly known spectra --------------------- */

static void test_diagonal_triangular_zero_identity_exact(void **state)
{
    (void)state;
    /* Exact results by design: balancing scales by powers of two (the
     * diagonal does not change), a triangular matrix has nothing below
     * the subdiagonal for a reflector to remove, and every subdiagonal
     * entry is zero, so each diagonal entry deflates untouched. Tolerance
     * 0. */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 5);
    double a[12 * 12], wr[12], wi[12], want[12], zero[12] = {0}, tol[12] = {0};
    for (size_t n = 1; n <= 12; n++) {
        for (int kind = 0; kind < 4; kind++) {
            for (size_t j = 0; j < n; j++)
                for (size_t i = 0; i < n; i++) {
                    double v = 0.0;
                    if (kind == 0 && i == j)
                        v = gauss(&rng);              /* diagonal */
                    else if (kind == 1 && i <= j)
                        v = gauss(&rng);              /* upper triangular */
                    else if (kind == 3 && i == j)
                        v = 1.0;                      /* identity */
                    a[i + j * n] = v;                 /* kind 2: zero */
                }
            for (size_t i = 0; i < n; i++)
                want[i] = a[i + i * n];
            eig_ok(n, a, n, wr, wi);
            assert_spectrum(n, wr, wi, want, zero, tol, "diagonal/triangular/zero/id");
            for (size_t i = 0; i < n; i++)
                assert_true(wi[i] == 0.0);
        }
    }
}

static void test_rotation_blocks_conjugate_pairs(void **state)
{
    (void)state;
    /* Block diagonal of r_k [[cos t_k, -sin t_k], [sin t_k, cos t_k]]:
     * eigenvalues r_k (cos t_k +- i sin t_k) in closed form. The matrix is
     * normal (s_i = 1), and so is Q T Q' for orthogonal Q: tolerance
     * C_NORMWISE n eps ||A||_F (Bauer-Fike). Every pair must come out
     * complex (|Im| >= 0.3 r_k, far above the tolerance) and exactly
     * conjugate. */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 6);
    double t[12 * 12], q[12 * 12], a[12 * 12], re[12], im[12], wr[12], wi[12], tol[12];
    const size_t nb = 6, n = 2 * nb;
    memset(t, 0, sizeof t);
    for (size_t k = 0; k < nb; k++) {
        double r = 0.5 + 2.0 * el_rng_uniform(&rng);
        double th = 0.3 + 2.5 * el_rng_uniform(&rng);   /* sin th >= 0.29 */
        double c = r * cos(th), s = r * sin(th);
        size_t o = 2 * k;
        t[o + o * n] = c;
        t[(o + 1) + o * n] = s;
        t[o + (o + 1) * n] = -s;
        t[(o + 1) + (o + 1) * n] = c;
        re[o] = re[o + 1] = c;
        im[o] = s;
        im[o + 1] = -s;
    }
    for (int pass = 0; pass < 2; pass++) {
        if (pass == 0) {
            memcpy(a, t, sizeof t);
        } else {
            random_orthogonal(n, &rng, q);
            orthogonal_similarity(n, q, t, a);
        }
        for (size_t i = 0; i < n; i++)
            tol[i] = C_NORMWISE * (double)n * EPS * frobenius(n, a);
        eig_ok(n, a, n, wr, wi);
        assert_spectrum(n, wr, wi, re, im, tol, "rotation blocks");
        for (size_t i = 0; i < n; i++)
            assert_true(wi[i] != 0.0);
    }
}

/* Lower bidiagonal Jordan block J_k(lambda) at rows/columns o..o+k-1 of
 * the n x n matrix t (lambda on the diagonal, ones below it). */
static void put_jordan(size_t n, double *t, size_t o, size_t k, double lambda)
{
    for (size_t i = 0; i < k; i++) {
        t[(o + i) + (o + i) * n] = lambda;
        if (i + 1 < k)
            t[(o + i + 1) + (o + i) * n] = 1.0;
    }
}

static void test_jordan_blocks_defective(void **state)
{
    (void)state;
    /* A Jordan block of size k is defective: a perturbation E moves its
     * eigenvalue by up to about ||E||^(1/k), not ||E|| (Puiseux expansion).
     * Precisely, for J = lambda I + N (N nilpotent, ||N|| = 1) any
     * eigenvalue mu of J + E with |mu - lambda| < 1 satisfies
     * |mu - lambda|^k <= k ||E|| (bound the resolvent of N by its Neumann
     * series). With the backward error ||E|| <= C_NORMWISE n eps ||A||_F
     * the tolerance is (k C_NORMWISE n eps ||A||_F)^(1/k): about 1e-7 for
     * k = 2 and 8e-3 for k = 6 here (observed: at most a third of that).
     * The mean of the k eigenvalues of a matrix that is one block is its
     * trace / k, which E moves by at most ||E||_F / sqrt(k): that is
     * checked at the normwise tolerance. The plain block is already
     * Hessenberg with a stagnating standard shift (N^2 e1 = e3), so the
     * exceptional shifts are exercised; Q J Q' is a full matrix. */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 7);
    double t[8 * 8], q[8 * 8], a[8 * 8], wr[8], wi[8], tol[8], want[8], zero[8] = {0};
    const double lambdas[] = {0.0, 0.5, -2.0};
    for (size_t k = 2; k <= 6; k++)
        for (size_t li = 0; li < 3; li++)
            for (int pass = 0; pass < 2; pass++) {
                memset(t, 0, sizeof t);
                put_jordan(k, t, 0, k, lambdas[li]);
                if (pass == 0) {
                    memcpy(a, t, k * k * sizeof *t);
                } else {
                    random_orthogonal(k, &rng, q);
                    orthogonal_similarity(k, q, t, a);
                }
                double norm = frobenius(k, a);
                double e = C_NORMWISE * (double)k * EPS * norm;
                for (size_t i = 0; i < k; i++) {
                    want[i] = lambdas[li];
                    tol[i] = pow((double)k * e, 1.0 / (double)k);
                }
                eig_ok(k, a, k, wr, wi);
                assert_spectrum(k, wr, wi, want, zero, tol, "Jordan block");
                double mean = 0.0, mean_im = 0.0;
                for (size_t i = 0; i < k; i++) {
                    mean += wr[i] / (double)k;
                    mean_im += wi[i] / (double)k;
                }
                assert_close(mean, lambdas[li], 0.0, e);
                assert_close(mean_im, 0.0, 0.0, e);
            }
}

static void test_jordan_mixture(void **state)
{
    (void)state;
    /* J_3(2) + J_2(-1) + [0.5] under an orthogonal similarity: blocks at
     * distance >= 1.5 from each other, so each cluster keeps its own
     * k-th root bound (same tolerance as above with k = 3, the largest
     * block, generous for the others). */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 8);
    const size_t n = 6;
    double t[36] = {0}, q[36], a[36], wr[6], wi[6], tol[6], zero[6] = {0};
    put_jordan(n, t, 0, 3, 2.0);
    put_jordan(n, t, 3, 2, -1.0);
    put_jordan(n, t, 5, 1, 0.5);
    const double want[6] = {2.0, 2.0, 2.0, -1.0, -1.0, 0.5};
    random_orthogonal(n, &rng, q);
    orthogonal_similarity(n, q, t, a);
    double e = C_NORMWISE * (double)n * EPS * frobenius(n, a);
    for (size_t i = 0; i < n; i++)
        tol[i] = pow(3.0 * e, 1.0 / 3.0);
    eig_ok(n, a, n, wr, wi);
    assert_spectrum(n, wr, wi, want, zero, tol, "Jordan mixture");
}

/* Companion matrix (first row -c[1..n], ones below the diagonal) of the
 * monic polynomial x^n + c[1] x^(n-1) + ... + c[n]. */
static void companion(size_t n, const double *c, double *a)
{
    memset(a, 0, n * n * sizeof *a);
    for (size_t j = 0; j < n; j++)
        a[0 + j * n] = -c[j + 1];
    for (size_t i = 1; i < n; i++)
        a[i + (i - 1) * n] = 1.0;
}

/* Multiplies the monic polynomial c (degree *deg) by x^2 - s x + p. All
 * the coefficients here are small integers or dyadic fractions, so the
 * products are exact in double. */
static void poly_mul_quadratic(double *c, size_t *deg, double s, double p)
{
    double out[NMAX + 1] = {0};
    for (size_t i = 0; i <= *deg; i++) {
        out[i] += c[i];
        out[i + 1] += -s * c[i];
        out[i + 2] += p * c[i];
    }
    *deg += 2;
    memcpy(c, out, (*deg + 1) * sizeof *c);
}

static void poly_mul_linear(double *c, size_t *deg, double root)
{
    double out[NMAX + 1] = {0};
    for (size_t i = 0; i <= *deg; i++) {
        out[i] += c[i];
        out[i + 1] += -root * c[i];
    }
    *deg += 1;
    memcpy(c, out, (*deg + 1) * sizeof *c);
}

static void test_companion_known_roots(void **state)
{
    (void)state;
    /* Companion matrices of polynomials built from chosen roots; the
     * coefficients are exact (small integers, dyadic fractions), so the
     * roots are exact eigenvalues. Companion matrices are badly scaled
     * (balancing matters) and non-normal; tolerance from s_i as in
     * check_against_known. */
    double c[NMAX + 1], a[8 * 8], re[8], im[8];
    size_t deg;

    /* Roots 1..6 (integer coefficients up to 1764). */
    c[0] = 1.0;
    deg = 0;
    for (int r = 1; r <= 6; r++) {
        poly_mul_linear(c, &deg, (double)r);
        re[r - 1] = (double)r;
        im[r - 1] = 0.0;
    }
    companion(deg, c, a);
    check_against_known(deg, a, re, im, "companion, roots 1..6");

    /* (x^2 + 1)(x^2 - 2x + 5)(x + 3): roots +-i, 1 +- 2i, -3. */
    c[0] = 1.0;
    deg = 0;
    poly_mul_quadratic(c, &deg, 0.0, 1.0);
    poly_mul_quadratic(c, &deg, 2.0, 5.0);
    poly_mul_linear(c, &deg, -3.0);
    const double re2[5] = {0, 0, 1, 1, -3}, im2[5] = {1, -1, 2, -2, 0};
    companion(deg, c, a);
    check_against_known(deg, a, re2, im2, "companion, complex roots");

    /* Roots of mixed size: 0.125, -0.25, 0.5, 4, -8 and 0.75 +- 0.5i
     * (x^2 - 1.5 x + 0.8125). */
    c[0] = 1.0;
    deg = 0;
    const double rr[5] = {0.125, -0.25, 0.5, 4.0, -8.0};
    for (int k = 0; k < 5; k++)
        poly_mul_linear(c, &deg, rr[k]);
    poly_mul_quadratic(c, &deg, 1.5, 0.8125);
    const double re3[7] = {0.125, -0.25, 0.5, 4.0, -8.0, 0.75, 0.75};
    const double im3[7] = {0, 0, 0, 0, 0, 0.5, -0.5};
    companion(deg, c, a);
    check_against_known(deg, a, re3, im3, "companion, mixed roots");
}

static void test_companion_triple_root(void **state)
{
    (void)state;
    /* (x - 1)^3 (x + 2) = x^4 - x^3 - 3x^2 + 5x - 2: a triple root at 1
     * in a nonderogatory matrix, i.e. one Jordan block of size 3. The
     * companion matrix is not J itself, so the cube-root bound of
     * test_jordan_blocks_defective holds only up to the conditioning of
     * its Jordan basis; a factor 10 on (3 C_NORMWISE n eps ||A||_F)^(1/3)
     * covers that (5.6e-4 here; observed error 4e-5). The simple
     * root -2 gets the usual normwise tolerance with LAPACK's s_i. */
    double c[5] = {1.0, -1.0, -3.0, 5.0, -2.0}, a[16], wr[4], wi[4], tol[4];
    companion(4, c, a);
    eig_ok(4, a, 4, wr, wi);
    lapack_ref ref;
    lapack_eig(4, a, &ref);
    size_t simple = 0;
    for (size_t i = 1; i < 4; i++)
        if (fabs(ref.wr[i] + 2.0) < fabs(ref.wr[simple] + 2.0))
            simple = i;
    double e = C_NORMWISE * 4.0 * EPS * frobenius(4, a);
    const double want_re[4] = {1.0, 1.0, 1.0, -2.0}, want_im[4] = {0};
    for (int i = 0; i < 3; i++)
        tol[i] = 10.0 * pow(3.0 * e, 1.0 / 3.0);
    tol[3] = C_NORMWISE * 4.0 * EPS * ref.abnrm / ref.rcond[simple];
    assert_spectrum(4, wr, wi, want_re, want_im, tol, "companion, triple root");
}

static void test_cyclic_permutation_roots_of_unity(void **state)
{
    (void)state;
    /* The cyclic shift P (ones below the diagonal and P[0, n-1] = 1) is
     * the companion matrix of x^n - 1: eigenvalues exp(2 pi i k / n) in
     * closed form (a circulant is diagonalised by the Fourier matrix:
     * Davis, Circulant Matrices, Wiley 1979, chapter 3, chapter recalled
     * from memory). It is the
     * classical case where the standard Francis shift makes no progress
     * (every shift is 0 and the QR step only permutes), so it needs the
     * exceptional shifts. P is orthogonal, hence normal: tolerance
     * C_NORMWISE n eps ||P||_F. */
    double a[16 * 16], re[16], im[16], tol[16], wr[16], wi[16];
    for (size_t n = 2; n <= 16; n++) {
        memset(a, 0, n * n * sizeof *a);
        for (size_t i = 1; i < n; i++)
            a[i + (i - 1) * n] = 1.0;
        a[0 + (n - 1) * n] = 1.0;
        for (size_t k = 0; k < n; k++) {
            double th = 2.0 * M_PI * (double)k / (double)n;
            re[k] = cos(th);
            im[k] = sin(th);
            tol[k] = C_NORMWISE * (double)n * EPS * sqrt((double)n);
        }
        eig_ok(n, a, n, wr, wi);
        assert_spectrum(n, wr, wi, re, im, tol, "cyclic permutation");
    }
}

static void test_circulant_dft(void **state)
{
    (void)state;
    /* A circulant C[i, j] = c[(i - j) mod n] has eigenvalues
     * sum_j c[j] w^(jk), w = exp(-2 pi i / n), k = 0..n-1 (Davis 1979,
     * chapter 3, recalled from memory; derivable in one line: the vector
     * (w^(-ik))_i is an eigenvector). The DFT is summed here in
     * long double. Circulants are normal: tolerance C_NORMWISE n eps
     * ||C||_F. */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 9);
    double c[20], a[20 * 20], re[20], im[20], tol[20], wr[20], wi[20];
    const size_t sizes[] = {3, 4, 7, 12, 20};
    for (size_t s = 0; s < sizeof sizes / sizeof sizes[0]; s++) {
        size_t n = sizes[s];
        for (size_t j = 0; j < n; j++)
            c[j] = gauss(&rng);
        for (size_t j = 0; j < n; j++)
            for (size_t i = 0; i < n; i++)
                a[i + j * n] = c[(i + n - j) % n];
        for (size_t k = 0; k < n; k++) {
            long double sr = 0.0L, si = 0.0L;
            for (size_t j = 0; j < n; j++) {
                long double th = -2.0L * 3.14159265358979323846264338327950288L
                                 * (long double)((j * k) % n) / (long double)n;
                sr += (long double)c[j] * cosl(th);
                si += (long double)c[j] * sinl(th);
            }
            re[k] = (double)sr;
            im[k] = (double)si;
            tol[k] = C_NORMWISE * (double)n * EPS * frobenius(n, a);
        }
        eig_ok(n, a, n, wr, wi);
        assert_spectrum(n, wr, wi, re, im, tol, "circulant");
    }
}

/* Tridiagonal Toeplitz matrix: diag d, superdiagonal b, subdiagonal c. */
static void tridiag_toeplitz(size_t n, double d, double b, double c, double *a)
{
    memset(a, 0, n * n * sizeof *a);
    for (size_t i = 0; i < n; i++) {
        a[i + i * n] = d;
        if (i + 1 < n) {
            a[i + (i + 1) * n] = b;
            a[(i + 1) + i * n] = c;
        }
    }
}

static void test_tridiagonal_toeplitz_closed_form(void **state)
{
    (void)state;
    /* Eigenvalues of tridiag(c, d, b) of order n: d + 2 sqrt(b c)
     * cos(k pi / (n + 1)), k = 1..n (e.g. Meyer, Matrix Analysis and
     * Applied Linear Algebra, SIAM 2000, Example 7.2.5; example number
     * recalled from memory). For b c < 0 the square root is imaginary:
     * d +- 2 i sqrt(|b c|) cos(k pi / (n + 1)), conjugate pairs (k and
     * n + 1 - k), plus the real d when n is odd. b != c makes the matrix
     * non-normal (similar to a symmetric one through diag((c/b)^(i/2))),
     * so the tolerance uses s_i (check_against_known). */
    double a[15 * 15], re[15], im[15];
    const struct { size_t n; double d, b, c; } cases[] = {
        {10, 0.5, 2.0, 0.5},    /* b c = 1: real, cos spectrum */
        {15, -1.0, 1.0, 0.25},
        {10, 0.5, 2.0, -0.5},   /* b c = -1: +- i pairs */
        {9, 2.0, -1.0, 3.0},    /* odd n: the middle eigenvalue is d */
    };
    for (size_t t = 0; t < sizeof cases / sizeof cases[0]; t++) {
        size_t n = cases[t].n;
        double bc = cases[t].b * cases[t].c;
        tridiag_toeplitz(n, cases[t].d, cases[t].b, cases[t].c, a);
        for (size_t k = 1; k <= n; k++) {
            double cs = cos((double)k * M_PI / (double)(n + 1));
            if (2 * k == n + 1)
                cs = 0.0;   /* exactly, where cos(pi/2) rounds to 6e-17 */
            double amp = 2.0 * sqrt(fabs(bc)) * cs;
            re[k - 1] = cases[t].d + (bc > 0.0 ? amp : 0.0);
            im[k - 1] = bc > 0.0 ? 0.0 : amp;
        }
        check_against_known(n, a, re, im, "tridiagonal Toeplitz");
    }
}

/* ---- classical test matrices -------------------------------------------- */

static void test_frank_matrix(void **state)
{
    (void)state;
    /* Frank matrix F_n, F[i, j] = n + 1 - max(i, j) for j >= i - 1 (1-based),
     * 0 otherwise: upper Hessenberg, det 1, eigenvalues real, positive and in
     * reciprocal pairs lambda, 1/lambda, so 1 is an eigenvalue for odd n
     * (Frank, J. SIAM 6(4), 1958, 378-392, citation recalled from memory; the
     * pairing as stated in Higham's Test Matrix Toolbox documentation of
     * `frank`, also recalled from memory). The small eigenvalues are
     * ill-conditioned, which is why the orders are kept small. Checks: against
     * dgeevx; every wi = 0; sorted, lambda_i lambda_(n+1-i) = 1 within the sum
     * of the two relative tolerances; 1 in the spectrum for n odd. */
    double a[9 * 9], wr[9], wi[9], tol[9];
    for (size_t n = 5; n <= 9; n++) {
        for (size_t j = 1; j <= n; j++)
            for (size_t i = 1; i <= n; i++)
                a[(i - 1) + (j - 1) * n] =
                    j + 1 >= i ? (double)(n + 1 - (i > j ? i : j)) : 0.0;
        check_against_lapack(n, a, "Frank");
        lapack_ref ref;
        lapack_eig(n, a, &ref);
        condition_tolerances(n, &ref, C_NORMWISE, tol);
        eig_ok(n, a, n, wr, wi);
        /* Sort ours ascending (insertion sort, n <= 9); tolerances are
         * taken from LAPACK's eigenvalue nearest each of ours. */
        double t_of[9];
        for (size_t i = 0; i < n; i++) {
            assert_true(wi[i] == 0.0);
            size_t near = 0;
            for (size_t j = 1; j < n; j++)
                if (fabs(ref.wr[j] - wr[i]) < fabs(ref.wr[near] - wr[i]))
                    near = j;
            t_of[i] = tol[near];
        }
        for (size_t i = 1; i < n; i++)
            for (size_t j = i; j > 0 && wr[j - 1] > wr[j]; j--) {
                double x = wr[j]; wr[j] = wr[j - 1]; wr[j - 1] = x;
                x = t_of[j]; t_of[j] = t_of[j - 1]; t_of[j - 1] = x;
            }
        for (size_t i = 0; i < n; i++) {
            size_t j = n - 1 - i;
            assert_true(wr[i] > 0.0);
            double bound = t_of[i] / wr[i] + t_of[j] / wr[j];   /* relative */
            assert_close(wr[i] * wr[j], 1.0, 0.0, bound);
        }
        if (n % 2 == 1)
            assert_close(wr[n / 2], 1.0, 0.0, t_of[n / 2]);
    }
}

static void test_rosser_matrix(void **state)
{
    (void)state;
    /* Rosser's 8x8 symmetric test matrix (Rosser, Lanczos, Hestenes and
     * Karush, J. Res. Nat. Bur. Standards 47, 1951, 291-297; citation, entries
     * and closed-form eigenvalues recalled from memory, so the eigenvalues are
     * also re-derived here by dsyev): +-10 sqrt(10405), 0, 1000 (double),
     * 1020, 510 +- 100 sqrt(26) -- three close eigenvalues near 1020, a double
     * one and a zero. Symmetric, so s_i = 1: tolerance C_NORMWISE n eps
     * ||A||_F = 4.4e-11 absolute on eigenvalues of size 1000 (Bauer-Fike). */
    static const int rosser[8][8] = {
        {611, 196, -192, 407, -8, -52, -49, 29},
        {196, 899, 113, -192, -71, -43, -8, -44},
        {-192, 113, 899, 196, 61, 49, 8, 52},
        {407, -192, 196, 611, 8, 44, 59, -23},
        {-8, -71, 61, 8, 411, -599, 208, 208},
        {-52, -43, 49, 44, -599, 411, 208, 208},
        {-49, -8, 8, 59, 208, 208, 99, -911},
        {29, -44, 52, -23, 208, 208, -911, 99},
    };
    double a[64], b[64], w[8], wr[8], wi[8], tol[8], zero[8] = {0};
    for (size_t i = 0; i < 8; i++)
        for (size_t j = 0; j < 8; j++)
            a[i + j * 8] = rosser[i][j];
    double r1 = 10.0 * sqrt(10405.0), r2 = 100.0 * sqrt(26.0);
    /* 510 - 100 sqrt(26) = 100 / (510 + 100 sqrt(26)) without cancellation. */
    const double want[8] = {-r1, 0.0, 100.0 / (510.0 + r2), 1000.0, 1000.0,
                            510.0 + r2, 1020.0, r1};
    for (size_t i = 0; i < 8; i++)
        tol[i] = C_NORMWISE * 8.0 * EPS * frobenius(8, a);
    eig_ok(8, a, 8, wr, wi);
    assert_spectrum(8, wr, wi, want, zero, tol, "Rosser, closed form");
    memcpy(b, a, sizeof a);
    assert_int_equal(LAPACKE_dsyev(LAPACK_COL_MAJOR, 'N', 'U', 8, b, 8, w), 0);
    assert_spectrum(8, wr, wi, w, zero, tol, "Rosser vs dsyev");
}

static void test_wilkinson_w21(void **state)
{
    (void)state;
    /* Wilkinson's W21+ (The Algebraic Eigenvalue Problem, OUP 1965, ch. 5,
     * chapter recalled from memory): symmetric tridiagonal, diagonal |10 - i|
     * (i = 0..20), ones off the diagonal. Its largest eigenvalues form a pair
     * that agrees to 7e-14: 10.746194182903322 and 10.746194182903393
     * (recalled from memory). W21- (diagonal i - 10) has a spectrum symmetric
     * about 0 (the reversal-and-sign similarity maps W21- to -W21-), so 0 is
     * an eigenvalue (odd order). Reference: dstev (symmetric tridiagonal
     * QL/QR). Tolerance C_NORMWISE n eps ||W||_F = 1.3e-12 (symmetric,
     * s_i = 1); the pair is not resolved at that level, only located. */
    const size_t n = 21;
    double a[21 * 21], d[21], e[20], wr[21], wi[21], tol[21], zero[21] = {0};
    for (int sign = 0; sign < 2; sign++) {
        memset(a, 0, sizeof a);
        for (size_t i = 0; i < n; i++) {
            double v = (double)i - 10.0;
            d[i] = sign == 0 ? fabs(v) : v;
            a[i + i * n] = d[i];
            if (i + 1 < n) {
                e[i] = 1.0;
                a[i + (i + 1) * n] = a[(i + 1) + i * n] = 1.0;
            }
        }
        double norm = frobenius(n, a);
        for (size_t i = 0; i < n; i++)
            tol[i] = C_NORMWISE * (double)n * EPS * norm;
        assert_int_equal(LAPACKE_dstev(LAPACK_COL_MAJOR, 'N', (lapack_int)n, d, e,
                                       NULL, 1), 0);
        eig_ok(n, a, n, wr, wi);
        assert_spectrum(n, wr, wi, d, zero, tol, sign == 0 ? "W21+" : "W21-");
        double top = -INFINITY, low_abs = INFINITY;
        size_t near_top = 0;
        for (size_t i = 0; i < n; i++) {
            if (wr[i] > top)
                top = wr[i];
            if (fabs(wr[i] - 10.7461941829033) < 1e-9)
                near_top++;
            if (hypot(wr[i], wi[i]) < low_abs)
                low_abs = hypot(wr[i], wi[i]);
        }
        assert_close(top, 10.746194182903393, 0.0, tol[0]);
        if (sign == 0)
            assert_int_equal(near_top, 2);
        else
            assert_close(low_abs, 0.0, 0.0, tol[0]);
    }
}

static void test_clement_matrix(void **state)
{
    (void)state;
    /* Clement's (Kac-Sylvester) matrix of order n + 1: zero diagonal,
     * subdiagonal 1, 2, ..., n, superdiagonal n, ..., 2, 1; eigenvalues the
     * integers -n, -n + 2, ..., n - 2, n (Clement, SIAM Review 1(1), 1959,
     * 50-52; citation recalled from memory). Non-symmetric, similar to a
     * symmetric matrix; the tolerance uses s_i (check_against_known). */
    double a[12 * 12], re[12], im[12] = {0};
    for (size_t n = 2; n <= 11; n++) {
        size_t m = n + 1;
        memset(a, 0, m * m * sizeof *a);
        for (size_t i = 0; i < n; i++) {
            a[(i + 1) + i * m] = (double)(i + 1);
            a[i + (i + 1) * m] = (double)(n - i);
        }
        for (size_t k = 0; k < m; k++)
            re[k] = -(double)n + 2.0 * (double)k;
        check_against_known(m, a, re, im, "Clement");
    }
}

/* ---- 1x1, 2x2 and scaling ------------------------------------------------ */

static void test_small_closed_forms(void **state)
{
    (void)state;
    double wr[2], wi[2];
    double one[1] = {-3.25};
    eig_ok(1, one, 1, wr, wi);
    assert_true(wr[0] == -3.25 && wi[0] == 0.0);   /* copied, no arithmetic */

    /* [[1, 2], [3, 4]]: (5 +- sqrt(33)) / 2 (characteristic polynomial
     * x^2 - 5x - 2). The 2x2 formula is a few operations, each
     * correctly rounded: 4 eps relative. */
    double m1[4] = {1.0, 3.0, 2.0, 4.0};
    eig_ok(2, m1, 2, wr, wi);
    double hi = (5.0 + sqrt(33.0)) / 2.0, lo = -2.0 / hi;   /* product -2 */
    assert_close(fmax(wr[0], wr[1]), hi, 4 * EPS, 0.0);
    assert_close(fmin(wr[0], wr[1]), lo, 4 * EPS, 0.0);

    /* [[1e8, 1], [1, 0]]: roots 1e8 + 1e-8 and -1 / (1e8 + 1e-8). The
     * small one is 1e16 times smaller than the large one; the textbook
     * formula (a + d)/2 - sqrt(...) would lose all its digits to
     * cancellation. The sign-aware formula keeps it to a few eps
     * relative: 8 eps. */
    double m2[4] = {1e8, 1.0, 1.0, 0.0};
    eig_ok(2, m2, 2, wr, wi);
    double big = 5e7 + sqrt(2.5e15 + 1.0);
    assert_close(fmax(wr[0], wr[1]), big, 4 * EPS, 0.0);
    assert_close(fmin(wr[0], wr[1]), -1.0 / big, 8 * EPS, 0.0);

    /* [[0, 1], [-1, 0]]: +-i exactly (p = 0, b c = -1: no rounding). */
    double m3[4] = {0.0, -1.0, 1.0, 0.0};
    eig_ok(2, m3, 2, wr, wi);
    assert_true(wr[0] == 0.0 && wr[1] == 0.0 && wi[0] == 1.0 && wi[1] == -1.0);

    /* b = 1e-160, c = +-1e160: b c = +-1, eigenvalues +-1 or +-i. Dividing
     * the smaller of b and c by max(|p|, |b|, |c|) would make 1e-320, a
     * subnormal with only a few bits; the discriminant is formed by
     * dividing the larger one. Relative 8 eps (the entries are rounded
     * decimal constants: b c = 1 to 2 eps). */
    double m4[4] = {0.0, 1e160, 1e-160, 0.0};
    eig_ok(2, m4, 2, wr, wi);
    double root = sqrt(1e160 * 1e-160);
    assert_close(fmax(wr[0], wr[1]), root, 8 * EPS, 0.0);
    assert_close(fmin(wr[0], wr[1]), -root, 8 * EPS, 0.0);
    double m5[4] = {0.0, -1e160, 1e-160, 0.0};
    eig_ok(2, m5, 2, wr, wi);
    assert_close(wi[0], root, 8 * EPS, 0.0);
}

static void test_extreme_magnitudes(void **state)
{
    (void)state;
    /* A Gaussian matrix times 2^600, 2^-600 and 1e300 / max|a|: products
     * of two entries overflow or underflow unless the solver rescales.
     * Scaling by a power of two commutes with everything, so ours on
     * 2^k A is compared with 2^k times LAPACK on A at the usual relative
     * tolerance; 1e300 is not a power of two (one more rounding per
     * entry, inside the tolerance). */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 10);
    double a[10 * 10], s[10 * 10], wr[10], wi[10], tol[10], re[10], im[10];
    const size_t n = 10;
    for (size_t i = 0; i < n * n; i++)
        a[i] = gauss(&rng);
    lapack_ref ref;
    lapack_eig(n, a, &ref);
    condition_tolerances(n, &ref, C_NORMWISE, tol);
    double maxabs = 0.0;
    for (size_t i = 0; i < n * n; i++)
        maxabs = fmax(maxabs, fabs(a[i]));
    const double factors[] = {0x1p600, 0x1p-600, 1e300 / maxabs};
    for (size_t f = 0; f < 3; f++) {
        for (size_t i = 0; i < n * n; i++)
            s[i] = a[i] * factors[f];
        eig_ok(n, s, n, wr, wi);
        double t2[10];
        for (size_t i = 0; i < n; i++) {
            re[i] = ref.wr[i] * factors[f];
            im[i] = ref.wi[i] * factors[f];
            t2[i] = tol[i] * factors[f];
        }
        assert_spectrum(n, wr, wi, re, im, t2, "scaled");
    }
}

/* ---- 3. conjugate pairs -------------------------------------------------- */

static void test_pairs_exact_and_complete(void **state)
{
    (void)state;
    /* eig_ok already checks the layout on every call; here also that
     * ours and LAPACK agree on which eigenvalues are complex whenever
     * that is decided far above rounding (|Im| of LAPACK's greater than
     * 1e3 times its tolerance, or exactly 0 and every other eigenvalue
     * farther than that). */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 11);
    double a[16 * 16], wr[16], wi[16], tol[16];
    for (size_t n = 3; n <= 16; n++)
        for (int rep = 0; rep < 10; rep++) {
            for (size_t i = 0; i < n * n; i++)
                a[i] = gauss(&rng);
            lapack_ref ref;
            lapack_eig(n, a, &ref);
            condition_tolerances(n, &ref, C_NORMWISE, tol);
            eig_ok(n, a, n, wr, wi);
            size_t ours_cplx = 0, ref_cplx = 0, decided = 1;
            for (size_t i = 0; i < n; i++) {
                ours_cplx += wi[i] != 0.0;
                ref_cplx += ref.wi[i] != 0.0;
                if (ref.wi[i] != 0.0 && fabs(ref.wi[i]) < 1e3 * tol[i])
                    decided = 0;
                for (size_t j = 0; j < n; j++)
                    if (j != i && ref.wi[i] == 0.0
                        && hypot(ref.wr[j] - ref.wr[i], ref.wi[j]) < 1e3 * tol[i])
                        decided = 0;
            }
            if (decided)
                assert_int_equal(ours_cplx, ref_cplx);
        }
}

/* ---- 4. arguments, leading dimension, input untouched ------------------- */

static void test_nonfinite_input_fails(void **state)
{
    (void)state;
    const double bad[] = {NAN, INFINITY, -INFINITY};
    double a[25], work[30], wr[5], wi[5];
    for (size_t n = 1; n <= 5; n++)
        for (size_t b = 0; b < 3; b++)
            for (size_t pos = 0; pos < n * n; pos += (n > 2 ? n + 1 : 1)) {
                for (size_t i = 0; i < n * n; i++)
                    a[i] = (double)(i % 3) - 1.0;
                a[pos] = bad[b];
                assert_true(el_eig_work_doubles(n) <= 30);
                assert_int_equal(el_eig_values(n, a, n, wr, wi, work), 1);
            }
}

static void test_empty_matrix(void **state)
{
    (void)state;
    assert_int_equal(el_eig_values(0, NULL, 0, NULL, NULL, NULL), 0);
    assert_int_equal(el_eig_work_doubles(0), 0);
}

static void test_leading_dimension(void **state)
{
    (void)state;
    /* The same 7x7 matrix stored with lda = 7 and lda = 10, the padding
     * rows filled with NaN (which must never be read): identical results,
     * bit for bit, since the solver copies the n x n part and never looks
     * at lda again. */
    el_rng rng;
    el_rng_seed(&rng, 20260401, 12);
    const size_t n = 7, lda = 10;
    double a[49], p[70], wr1[7], wi1[7], wr2[7], wi2[7];
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < lda; i++) {
            double v = i < n ? gauss(&rng) : NAN;
            p[i + j * lda] = v;
            if (i < n)
                a[i + j * n] = v;
        }
    eig_ok(n, a, n, wr1, wi1);
    eig_ok(n, p, lda, wr2, wi2);   /* also checks p is unchanged */
    assert_memory_equal(wr1, wr2, sizeof wr1);
    assert_memory_equal(wi1, wi2, sizeof wi1);
}

/* ---- thread safety ------------------------------------------------------ */

#define THR_N 8
#define THR_COUNT 200
#define THR_THREADS 4

typedef struct {
    const double *mats;   /* THR_COUNT matrices of THR_N x THR_N */
    double wr[THR_COUNT][THR_N], wi[THR_COUNT][THR_N];
    int rc;
} thread_job;

static void *thread_solve(void *arg)
{
    thread_job *job = arg;
    double work[THR_N * THR_N + THR_N];
    job->rc = 0;
    for (size_t m = 0; m < THR_COUNT; m++)
        job->rc |= el_eig_values(THR_N, job->mats + m * THR_N * THR_N, THR_N, job->wr[m],
                                 job->wi[m], work);
    return NULL;
}

static void test_threads_agree_with_serial(void **state)
{
    (void)state;
    /* Several threads on the same inputs, each with its own workspace,
     * must give bit-identical results to a serial run: any hidden shared
     * state would show up as a difference (or as a report under the
     * sanitizers). */
    assert_true(el_eig_work_doubles(THR_N) <= THR_N * THR_N + THR_N);
    el_rng rng;
    el_rng_seed(&rng, 20260401, 13);
    static double mats[THR_COUNT * THR_N * THR_N];
    for (size_t i = 0; i < THR_COUNT * THR_N * THR_N; i++)
        mats[i] = gauss(&rng);
    static thread_job serial, jobs[THR_THREADS];
    serial.mats = mats;
    thread_solve(&serial);
    assert_int_equal(serial.rc, 0);
    pthread_t tid[THR_THREADS];
    for (int t = 0; t < THR_THREADS; t++) {
        jobs[t].mats = mats;
        assert_int_equal(pthread_create(&tid[t], NULL, thread_solve, &jobs[t]), 0);
    }
    for (int t = 0; t < THR_THREADS; t++) {
        assert_int_equal(pthread_join(tid[t], NULL), 0);
        assert_int_equal(jobs[t].rc, 0);
        assert_memory_equal(jobs[t].wr, serial.wr, sizeof serial.wr);
        assert_memory_equal(jobs[t].wi, serial.wi, sizeof serial.wi);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_random_gaussian_vs_dgeev),
        cmocka_unit_test(test_small_integer_entries_vs_dgeev),
        cmocka_unit_test(test_graded_needs_balancing),
        cmocka_unit_test(test_symmetric_vs_dsyev),
        cmocka_unit_test(test_diagonal_triangular_zero_identity_exact),
        cmocka_unit_test(test_rotation_blocks_conjugate_pairs),
        cmocka_unit_test(test_jordan_blocks_defective),
        cmocka_unit_test(test_jordan_mixture),
        cmocka_unit_test(test_companion_known_roots),
        cmocka_unit_test(test_companion_triple_root),
        cmocka_unit_test(test_cyclic_permutation_roots_of_unity),
        cmocka_unit_test(test_circulant_dft),
        cmocka_unit_test(test_tridiagonal_toeplitz_closed_form),
        cmocka_unit_test(test_frank_matrix),
        cmocka_unit_test(test_rosser_matrix),
        cmocka_unit_test(test_wilkinson_w21),
        cmocka_unit_test(test_clement_matrix),
        cmocka_unit_test(test_small_closed_forms),
        cmocka_unit_test(test_extreme_magnitudes),
        cmocka_unit_test(test_pairs_exact_and_complete),
        cmocka_unit_test(test_nonfinite_input_fails),
        cmocka_unit_test(test_empty_matrix),
        cmocka_unit_test(test_leading_dimension),
        cmocka_unit_test(test_threads_agree_with_serial),
    };
    return cmocka_run_group_tests_name("eig", tests, NULL, NULL);
}
