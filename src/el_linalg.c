/* el_linalg: matrix product, matrix exponential and exact discretisation
 * on column-major matrices, in plain C loops with a fixed order. */
#include "el_linalg.h"

#include <float.h>
#include <math.h>
#include <string.h>

/* The demo logs must be the same bytes on every machine, so nothing here
 * calls BLAS or LAPACK: their kernels are chosen at run time by CPU
 * (OPENBLAS_CORETYPE) and differ in the last bits, and a pivoted Cholesky
 * factor even changes its pivot order with them. Every sum below runs in a
 * fixed order of plain IEEE operations, which gives the same doubles on any
 * x86-64 CPU. No fused multiply-add where the source has two roundings
 * (gcc in ISO C mode already compiles with -ffp-contract=off). The
 * matrices are small (2n x 2n for n states), so speed does not matter. */
#if defined(__clang__)
#pragma STDC FP_CONTRACT OFF
#endif

void el_matmul(size_t m, size_t k, size_t n, const double *a, const double *b,
               double *c)
{
    if (m == 0 || n == 0)
        return;
    if (k == 0) {
        memset(c, 0, m * n * sizeof *c);
        return;
    }
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < m; i++) {
            double s = 0.0;
            for (size_t l = 0; l < k; l++)
                s += a[i + l * m] * b[l + j * k];
            c[i + j * m] = s;
        }
}

/* Largest 1-norm of A / 2^0 for which the degree-m approximant has
 * backward error at most the unit roundoff 2^-53, m = 3, 5, 7, 9, 13
 * (Higham 2005, Table 2.3; the values MATLAB's expm uses). */
static const double expm_theta[5] = {
    1.495585217958292e-2, 2.539398330063230e-1, 9.504178996162932e-1,
    2.097847961257068e0, 5.371920351148152e0,
};

/* Coefficients b_j of the numerator p_m(x) = sum b_j x^j of the [m/m]
 * Pade approximant of e^x, scaled so b_m = 1: b_j is proportional to
 * (2m-j)! m! / ((2m)! j! (m-j)!) (Higham 2005, eq. 2.2 and Alg. 2.3). */
static const double pade3[4] = {120.0, 60.0, 12.0, 1.0};
static const double pade5[6] = {30240.0, 15120.0, 3360.0, 420.0, 30.0, 1.0};
static const double pade7[8] = {17297280.0, 8648640.0, 1995840.0, 277200.0,
                                25200.0, 1512.0, 56.0, 1.0};
static const double pade9[10] = {17643225600.0, 8821612800.0, 2075673600.0,
                                 302702400.0, 30270240.0, 2162160.0,
                                 110880.0, 3960.0, 90.0, 1.0};
static const double pade13[14] = {
    64764752532480000.0, 32382376266240000.0, 7771770303897600.0,
    1187353796428800.0, 129060195264000.0, 10559470521600.0,
    670442572800.0, 33522128640.0, 1323241920.0, 40840800.0,
    960960.0, 16380.0, 182.0, 1.0,
};

static double norm1(size_t n, const double *a)
{
    double best = 0.0;
    for (size_t j = 0; j < n; j++) {
        double s = 0.0;
        for (size_t i = 0; i < n; i++)
            s += fabs(a[i + j * n]);
        if (isnan(s))
            return s;   /* the caller reports non-finite input */
        if (s > best)
            best = s;
    }
    return best;
}

/* out (+)= c[0] I + sum_{i=1}^{count-1} c[i] p[i]; p[0] is unused (the
 * identity). out must not alias any p[i]. */
static void combine(size_t n, double *out, int accumulate, const double *c,
                    const double *const *p, size_t count)
{
    const size_t nn = n * n;
    for (size_t idx = 0; idx < nn; idx++) {
        double s = accumulate ? out[idx] : 0.0;
        for (size_t i = 1; i < count; i++)
            s += c[i] * p[i][idx];
        out[idx] = s;
    }
    for (size_t j = 0; j < n; j++)
        out[j + j * n] += c[0];
}

static int all_finite(size_t count, const double *x)
{
    for (size_t i = 0; i < count; i++)
        if (!isfinite(x[i]))
            return 0;
    return 1;
}

/* LU factorisation with partial pivoting of the n x n matrix f in place
 * (Golub & Van Loan, Matrix Computations, outer-product Gaussian
 * elimination with partial pivoting), then solves F X = B for the n
 * columns of b in place. The pivot is the first entry of largest
 * magnitude in its column: a fixed rule on deterministic numbers. Returns
 * the 1-based index of a zero pivot, or 0. */
static size_t lu_solve(size_t n, double *f, int *ipiv, double *b)
{
    for (size_t k = 0; k < n; k++) {
        size_t p = k;
        for (size_t i = k + 1; i < n; i++)
            if (fabs(f[i + k * n]) > fabs(f[p + k * n]))
                p = i;
        ipiv[k] = (int)p;
        if (f[p + k * n] == 0.0)
            return k + 1;
        if (p != k) {
            for (size_t j = 0; j < n; j++) {
                double t = f[k + j * n];
                f[k + j * n] = f[p + j * n];
                f[p + j * n] = t;
                t = b[k + j * n];
                b[k + j * n] = b[p + j * n];
                b[p + j * n] = t;
            }
        }
        const double pivot = f[k + k * n];
        for (size_t i = k + 1; i < n; i++)
            f[i + k * n] /= pivot;
        for (size_t j = k + 1; j < n; j++)
            for (size_t i = k + 1; i < n; i++)
                f[i + j * n] -= f[i + k * n] * f[k + j * n];
    }
    for (size_t c = 0; c < n; c++) {
        double *x = b + c * n;
        for (size_t i = 1; i < n; i++) {          /* L y = b, unit diagonal */
            double s = x[i];
            for (size_t l = 0; l < i; l++)
                s -= f[i + l * n] * x[l];
            x[i] = s;
        }
        for (size_t i = n; i-- > 0;) {            /* U x = y */
            double s = x[i];
            for (size_t l = i + 1; l < n; l++)
                s -= f[i + l * n] * x[l];
            x[i] = s / f[i + i * n];
        }
    }
    return 0;
}

/* Solves (V - U) R = (V + U) with U in u and V in v; R goes to u and v is
 * overwritten by the LU factors. */
static el_status pade_solve(size_t n, double *u, double *v, int *ipiv,
                            el_error *err)
{
    const size_t nn = n * n;
    for (size_t i = 0; i < nn; i++) {
        double vi = v[i], ui = u[i];
        v[i] = vi - ui;
        u[i] = vi + ui;
    }
    size_t zero = lu_solve(n, v, ipiv, u);
    if (zero > 0 || !all_finite(nn, u)) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "matrix exponential: the Pade denominator is singular "
                     "(pivot %zu is zero)", zero);
        el_error_hint(err, "check the matrix for huge or non-finite entries");
        return EL_ERR_NUMERIC;
    }
    return EL_OK;
}

/* Degree m = 3, 5, 7 or 9 without scaling: U = A * sum_odd b_j A^(j-1),
 * V = sum_even b_j A^j, with the even powers A^2 .. A^(m-1) in work. U goes
 * to e, V to v. */
static void pade_low(size_t n, const double *a, int m, double *e, double *work,
                     double *v)
{
    const size_t nn = n * n;
    const double *b = m == 3 ? pade3 : m == 5 ? pade5 : m == 7 ? pade7 : pade9;
    double *pw[5] = {NULL, work, work + nn, work + 2 * nn, work + 3 * nn};
    el_matmul(n, n, n, a, a, pw[1]);
    const size_t half = (size_t)m / 2;      /* highest even power is 2*half */
    for (size_t i = 2; i <= half; i++)
        el_matmul(n, n, n, pw[i - 1], pw[1], pw[i]);
    double odd[5], even[5];
    for (size_t i = 0; i <= half; i++) {
        odd[i] = b[2 * i + 1];
        even[i] = b[2 * i];
    }
    double *sum = work + 4 * nn;
    combine(n, sum, 0, odd, (const double *const *)pw, half + 1);
    el_matmul(n, n, n, a, sum, e);
    combine(n, v, 0, even, (const double *const *)pw, half + 1);
}

el_status el_expm(size_t n, const double *a, double *e, double *work, int *ipiv,
                  el_error *err)
{
    if (n == 0 || a == NULL || e == NULL || work == NULL || ipiv == NULL)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_expm: n must be >= 1 and no pointer NULL");
    const size_t nn = n * n;
    const double nrm = norm1(n, a);
    if (!isfinite(nrm)) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "matrix exponential of a matrix with non-finite entries");
        el_error_hint(err, "check the model for NaN or infinite values");
        return EL_ERR_NUMERIC;
    }
    static const int low_degree[4] = {3, 5, 7, 9};
    for (int i = 0; i < 4; i++) {
        if (nrm <= expm_theta[i]) {
            double *v = work + 5 * nn;
            pade_low(n, a, low_degree[i], e, work, v);
            return pade_solve(n, e, v, ipiv, err);
        }
    }

    /* Smallest s with ||A||_1 / 2^s <= theta_13, found with exact powers of
     * two (no log2/ceil, whose results could differ between libms). */
    int s = 0;
    while (nrm > ldexp(expm_theta[4], s))
        s++;
    double *as = work, *a2 = work + nn, *a4 = work + 2 * nn,
           *a6 = work + 3 * nn, *w4 = work + 4 * nn, *w5 = work + 5 * nn;
    for (size_t i = 0; i < nn; i++)
        as[i] = ldexp(a[i], -s);
    el_matmul(n, n, n, as, as, a2);
    el_matmul(n, n, n, a2, a2, a4);
    el_matmul(n, n, n, a4, a2, a6);
    const double *pw[4] = {NULL, a2, a4, a6};
    const double *b = pade13;

    /* U = A [A6 (b13 A6 + b11 A4 + b9 A2) + b7 A6 + b5 A4 + b3 A2 + b1 I] */
    const double c_hi_odd[4] = {0.0, b[9], b[11], b[13]};
    const double c_lo_odd[4] = {b[1], b[3], b[5], b[7]};
    combine(n, e, 0, c_hi_odd, pw, 4);
    el_matmul(n, n, n, a6, e, w4);
    combine(n, w4, 1, c_lo_odd, pw, 4);
    el_matmul(n, n, n, as, w4, e);
    /* V = A6 (b12 A6 + b10 A4 + b8 A2) + b6 A6 + b4 A4 + b2 A2 + b0 I */
    const double c_hi_even[4] = {0.0, b[8], b[10], b[12]};
    const double c_lo_even[4] = {b[0], b[2], b[4], b[6]};
    combine(n, w5, 0, c_hi_even, pw, 4);
    el_matmul(n, n, n, a6, w5, w4);
    combine(n, w4, 1, c_lo_even, pw, 4);

    el_status st = pade_solve(n, e, w4, ipiv, err);
    if (st != EL_OK)
        return st;

    double *cur = e, *other = work;
    for (int k = 0; k < s; k++) {
        el_matmul(n, n, n, cur, cur, other);
        double *t = cur;
        cur = other;
        other = t;
    }
    if (cur != e)
        memcpy(e, cur, nn * sizeof *e);
    if (!all_finite(nn, e)) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "matrix exponential overflows (1-norm of the matrix %.3g)",
                     nrm);
        el_error_hint(err, "a shorter time step or a smaller growth rate "
                           "keeps exp(A dt) finite");
        return EL_ERR_NUMERIC;
    }
    return EL_OK;
}

size_t el_discretise_work_size(size_t n)
{
    return 32 * n * n + 2 * n;
}

static int is_symmetric(size_t n, const double *q)
{
    double scale = 0.0;
    for (size_t i = 0; i < n * n; i++)
        if (fabs(q[i]) > scale)
            scale = fabs(q[i]);
    for (size_t j = 0; j < n; j++)
        for (size_t i = j + 1; i < n; i++)
            if (!(fabs(q[i + j * n] - q[j + i * n]) <= 1e-12 * scale))
                return 0;
    return 1;
}

/* Lower Cholesky factor G of the symmetric positive semi-definite n x n
 * matrix f (in place: f holds Qd on entry, G on exit, upper part zero),
 * unpivoted, column by column in a fixed order (Golub & Van Loan, Matrix
 * Computations, Algorithm 4.2.1), so G does not depend on ties between
 * diagonal entries. Semi-definite rule: a column whose remaining diagonal
 * d = f_kk - sum_j g_kj^2 is at most tol = 4 n eps max_i f_ii (rounding
 * level) has no independent noise left and is set to zero; in exact
 * arithmetic a positive semi-definite matrix with d = 0 has the whole
 * column of its Schur complement zero (|s_ik| <= sqrt(s_ii s_kk)), and with
 * rounding the dropped part is at most sqrt(tol max_i f_ii) per entry of
 * G G'. d < -tol means f is not positive semi-definite: EL_ERR_NUMERIC. */
static el_status cholesky_psd(size_t n, double *f, el_error *err)
{
    double max_diag = 0.0;
    for (size_t i = 0; i < n; i++)
        if (f[i + i * n] > max_diag)
            max_diag = f[i + i * n];
    const double tol = 4.0 * (double)n * DBL_EPSILON * max_diag;
    for (size_t k = 0; k < n; k++) {
        double d = f[k + k * n];
        for (size_t j = 0; j < k; j++)
            d -= f[k + j * n] * f[k + j * n];
        if (d < -tol) {
            el_error_set(err, EL_ERR_NUMERIC,
                         "the discrete noise covariance is not positive "
                         "semi-definite (pivot %zu is %.3g)", k + 1, d);
            el_error_hint(err, "the noise intensity Q must be positive semi-definite");
            return EL_ERR_NUMERIC;
        }
        if (d <= tol) {
            for (size_t i = k; i < n; i++)
                f[i + k * n] = 0.0;
        } else {
            const double g = sqrt(d);
            f[k + k * n] = g;
            for (size_t i = k + 1; i < n; i++) {
                double s = f[i + k * n];
                for (size_t j = 0; j < k; j++)
                    s -= f[i + j * n] * f[k + j * n];
                f[i + k * n] = s / g;
            }
        }
        for (size_t i = 0; i < k; i++)     /* the upper part is not G */
            f[i + k * n] = 0.0;
    }
    return EL_OK;
}

el_status el_discretise(size_t n, const double *a, const double *q, double dt_s,
                        double *ad, double *qd, double *qd_factor,
                        double *work, int *iwork, el_error *err)
{
    if (n == 0 || a == NULL || q == NULL || ad == NULL || qd == NULL ||
        work == NULL || iwork == NULL)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_discretise: n must be >= 1 and no pointer NULL");
    if (!(dt_s > 0.0) || !isfinite(dt_s))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_discretise: time step %g is not positive and finite",
                            dt_s);
    if (!is_symmetric(n, q))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_discretise: the noise intensity Q is not symmetric");

    const size_t nn = n * n, big = 2 * n;
    double *m = work, *ex = work + 4 * nn, *ew = work + 8 * nn;
    memset(m, 0, 4 * nn * sizeof *m);
    for (size_t j = 0; j < n; j++) {
        for (size_t i = 0; i < n; i++) {
            m[i + j * big] = -a[i + j * n] * dt_s;
            m[i + (n + j) * big] = 0.5 * (q[i + j * n] + q[j + i * n]) * dt_s;
            m[(n + i) + (n + j) * big] = a[j + i * n] * dt_s;
        }
    }
    el_status st = el_expm(big, m, ex, ew, iwork, err);
    if (st != EL_OK)
        return st;

    double *f12 = m;   /* m is free again */
    for (size_t j = 0; j < n; j++) {
        for (size_t i = 0; i < n; i++) {
            ad[i + j * n] = ex[(n + j) + (n + i) * big];
            f12[i + j * n] = ex[i + (n + j) * big];
        }
    }
    el_matmul(n, n, n, ad, f12, qd);
    for (size_t j = 0; j < n; j++) {
        for (size_t i = j + 1; i < n; i++) {
            double s = 0.5 * (qd[i + j * n] + qd[j + i * n]);
            qd[i + j * n] = s;
            qd[j + i * n] = s;
        }
    }
    if (qd_factor == NULL)
        return EL_OK;
    memcpy(qd_factor, qd, nn * sizeof *qd);
    return cholesky_psd(n, qd_factor, err);
}
