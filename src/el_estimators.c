/* el_estimators: forward-backward, total-least-squares, instrumental-
 * variable and covariance-driven subspace estimators in reduced
 * coordinates, their bootstrap statistics providers, --lags auto, and the
 * subspace realisation of an output covariance sequence. */
#include <complex.h>

#include "el_estimators.h"
#include "el_prep.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <limits.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Eigenvalues of a Gram matrix below this fraction of the largest are
 * treated as zero in its (pseudo-)inverse and roots: noise-free data make
 * some Grams exactly singular (two instrument states that are functions of
 * the same state), and rounding leaves those eigenvalues near
 * eps * largest, eight orders below this cut; sensor noise of any
 * realistic level keeps real directions far above it. */
#define EST_PINV_TOL 1e-10

/* Upper 0.001 quantile of the standard normal (recalled from memory,
 * 3.0902323; checked against scipy in the tests through the chi-square
 * quantile): Bartlett's test of the canonical correlations runs at level
 * 0.001, so that a noise direction is kept in about 1 fit in 1000. */
#define EST_BARTLETT_Z 3.090232306167813

/* A canonical correlation below this is zero to working precision (the
 * pseudo-inverse weights leave exactly dependent directions near 1e-8 or
 * below). */
#define EST_RHO_NUMERICAL 1e-6

/* fb: a square-root branch is called poorly determined when the distance
 * from the forward eigenvalue to the chosen root exceeds half its distance
 * to the other root. */
#define EST_FB_BRANCH_WARN 0.5

/* fb: imaginary part of Q R Q^H tolerated relative to its real part
 * (rounding of the complex Schur method on a well-conditioned root is
 * ~1e-15; a wrong branch pairing gives O(1)). */
#define EST_FB_REAL_TOL 1e-8

/* Rows of window vectors centred and multiplied at a time (bounded scratch
 * whatever the log length). */
#define EST_CHUNK 256

/* ------------------------------------------------------------------ */
/* Small dense helpers (column-major). */

static double *take(double **pool, size_t n)
{
    double *p = *pool;
    *pool += n;
    return p;
}

/* Solves A X = B in place by Gaussian elimination, row swaps applied to A
 * and B together (no pivot array, so the provider work stays all doubles).
 * A (n x n) is destroyed, B (n x k) receives X. Returns 1 when a pivot is
 * at rounding level of the largest entry or the solution is not finite. */
static int gauss_solve(size_t n, double *a, size_t lda, double *b, size_t ldb,
                       size_t k)
{
    double amax = 0.0;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            amax = fmax(amax, fabs(a[i + j * lda]));
    if (!(amax > 0.0) || !isfinite(amax))
        return 1;
    double tiny = (double)n * DBL_EPSILON * amax;
    for (size_t j = 0; j < n; j++) {
        size_t p = j;
        double best = fabs(a[j + j * lda]);
        for (size_t i = j + 1; i < n; i++)
            if (fabs(a[i + j * lda]) > best) {
                best = fabs(a[i + j * lda]);
                p = i;
            }
        if (!(best > tiny))
            return 1;
        if (p != j) {
            for (size_t c = 0; c < n; c++) {
                double t = a[j + c * lda];
                a[j + c * lda] = a[p + c * lda];
                a[p + c * lda] = t;
            }
            for (size_t c = 0; c < k; c++) {
                double t = b[j + c * ldb];
                b[j + c * ldb] = b[p + c * ldb];
                b[p + c * ldb] = t;
            }
        }
        double piv = a[j + j * lda];
        for (size_t i = j + 1; i < n; i++) {
            double f = a[i + j * lda] / piv;
            if (f == 0.0)
                continue;
            for (size_t c = j + 1; c < n; c++)
                a[i + c * lda] -= f * a[j + c * lda];
            for (size_t c = 0; c < k; c++)
                b[i + c * ldb] -= f * b[j + c * ldb];
        }
    }
    for (size_t c = 0; c < k; c++)
        for (size_t ii = n; ii-- > 0;) {
            double s = b[ii + c * ldb];
            for (size_t l = ii + 1; l < n; l++)
                s -= a[ii + l * lda] * b[l + c * ldb];
            s /= a[ii + ii * lda];
            if (!isfinite(s))
                return 1;
            b[ii + c * ldb] = s;
        }
    return 0;
}

/* X = Bm A^-1 (Bm k x n, A n x n, X k x n with leading dimension ldx) by
 * solving A' X' = Bm'. work: n * n + n * k. Returns 1 when A is singular. */
static int right_solve(size_t n, size_t k, const double *a, size_t lda,
                       const double *bm, size_t ldb, double *x, size_t ldx,
                       double *work)
{
    double *at = work, *bt = work + n * n;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            at[j + i * n] = a[i + j * lda];
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < k; i++)
            bt[j + i * n] = bm[i + j * ldb];
    if (gauss_solve(n, at, n, bt, n, k))
        return 1;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < k; i++)
            x[i + j * ldx] = bt[j + i * n];
    return 0;
}

static size_t sym_fun_work(size_t n)
{
    return n * n + 4 * n + 1;
}

/* Eigenvectors v (n x n) and ascending eigenvalues lam (n) of the
 * symmetric s (lower triangle, leading dimension lds); lw: 3 n + 1
 * doubles. Returns 0, or 1 when LAPACK fails. */
static int sym_eig(size_t n, const double *s, size_t lds, double *v, double *lam, double *lw)
{
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            v[i + j * n] = s[i + j * lds];
    lapack_int info = LAPACKE_dsyev_work(LAPACK_COL_MAJOR, 'V', 'L', (lapack_int)n, v,
                                         (lapack_int)n, lam, lw, (lapack_int)(3 * n + 1));
    return info != 0;
}

/* out = V f(Lambda) V' for the symmetric S = V Lambda V' (lower triangle
 * read), f(l) = l^power on the eigenvalues above EST_PINV_TOL times the
 * largest and 0 below (a pseudo-inverse for negative powers). Returns the
 * number of eigenvalues kept, or -1 when LAPACK dsyev fails. work:
 * sym_fun_work(n). */
static int sym_fun(size_t n, const double *s, size_t lds, double power, double *out,
                   size_t ldo, double *work)
{
    double *v = work, *lam = v + n * n, *lw = lam + n;
    if (sym_eig(n, s, lds, v, lam, lw))
        return -1;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            out[i + j * ldo] = 0.0;
    double top = lam[n - 1];
    if (!(top > 0.0) || !isfinite(top))
        return 0;
    int kept = 0;
    for (size_t q = 0; q < n; q++) {
        if (!(lam[q] > EST_PINV_TOL * top))
            continue;
        kept++;
        double f = pow(lam[q], power);
        const double *vq = v + q * n;
        for (size_t j = 0; j < n; j++) {
            double fj = f * vq[j];
            for (size_t i = 0; i < n; i++)
                out[i + j * ldo] += vq[i] * fj;
        }
    }
    return kept;
}

/* C (m x n, ldc) = A (m x k, lda) * B (k x n, ldb), with transposes. */
static void gemm(int ta, int tb, size_t m, size_t n, size_t k, const double *a,
                 size_t lda, const double *b, size_t ldb, double *c, size_t ldc)
{
    if (m == 0 || n == 0)
        return;
    if (k == 0) {
        for (size_t j = 0; j < n; j++)
            for (size_t i = 0; i < m; i++)
                c[i + j * ldc] = 0.0;
        return;
    }
    cblas_dgemm(CblasColMajor, ta ? CblasTrans : CblasNoTrans,
                tb ? CblasTrans : CblasNoTrans, (int)m, (int)n, (int)k, 1.0, a,
                (int)lda, b, (int)ldb, 0.0, c, (int)ldc);
}

/* ------------------------------------------------------------------ */
/* Features: [1, v, lower triangle of v v' by columns]. */

static size_t nf_of(size_t dim)
{
    return 1 + dim + dim * (dim + 1) / 2;
}

/* out[1..dim] must already hold v. */
static void gram_products(size_t dim, double *out)
{
    const double *v = out + 1;
    size_t idx = 1 + dim;
    out[0] = 1.0;
    for (size_t j = 0; j < dim; j++)
        for (size_t i = j; i < dim; i++)
            out[idx++] = v[i] * v[j];
}

/* Means and centred cross-products (sum over windows of (v - mean)(v -
 * mean)', not divided by the count) from a feature sum. Returns the count. */
static double unpack_cov(size_t dim, const double *sum, double *mean, double *cov)
{
    double n = sum[0];
    for (size_t i = 0; i < dim; i++)
        mean[i] = sum[1 + i] / n;
    size_t idx = 1 + dim;
    for (size_t j = 0; j < dim; j++)
        for (size_t i = j; i < dim; i++) {
            double v = sum[idx++] - n * mean[i] * mean[j];
            cov[i + j * dim] = v;
            cov[j + i * dim] = v;
        }
    return n;
}

/* Window vector of the instrument methods: [x; y; zeta1; zeta2] from the
 * span 2K + 4 states of sw doubles each (the first r the reduced state)
 * starting at st (x = st[2K+2], y = st[2K+3], zeta1 = st[K+1], zeta2 =
 * st[0]). */
static void win_vector(size_t r, size_t sw, size_t lags, const double *st, double *v)
{
    memcpy(v, st + (2 * lags + 2) * sw, r * sizeof(double));
    memcpy(v + r, st + (2 * lags + 3) * sw, r * sizeof(double));
    memcpy(v + 2 * r, st + (lags + 1) * sw, r * sizeof(double));
    memcpy(v + 3 * r, st, r * sizeof(double));
}

/* c = mean(y) - A mean(x) - B mean(u) (B, u absent when nu == 0). */
static void offset_from(size_t r, size_t nu, const double *mean_x,
                        const double *mean_y, const double *mean_u, const double *a,
                        const double *b, double *offset)
{
    for (size_t i = 0; i < r; i++) {
        double c = mean_y[i];
        for (size_t j = 0; j < r; j++)
            c -= a[i + j * r] * mean_x[j];
        for (size_t j = 0; j < nu; j++)
            c -= b[i + j * r] * mean_u[j];
        offset[i] = c;
    }
}

/* ------------------------------------------------------------------ */
/* Forward-backward DMD (Dawson, Hemati, Williams & Rowley 2016). */

static size_t sqrt_branch_work(size_t n)
{
    return 8 * n * n + 8 * n + n;
}

/* root = the square root of M (n x n) whose eigenvalues are, one by one,
 * the roots nearest to those of the guide G (the forward estimate), by the
 * complex Schur method (Bjorck & Hammarling 1983): M = Q T Q^H (LAPACK
 * zgees), R upper triangular with R_ii = +-sqrt(T_ii) chosen against
 * (Q^H G Q)_ii, R_ij = (T_ij - sum_{i<k<j} R_ik R_kj) / (R_ii + R_jj),
 * root = Re(Q R Q^H). Returns 0; 2 when zgees fails, R_ii + R_jj vanishes
 * (a repeated eigenvalue given two different branches) or the result is
 * not real. *ambiguous (may be NULL) counts the eigenvalues whose branch
 * is poorly determined. */
static int sqrt_branch(size_t n, const double *m, const double *g, double *root,
                       double *work, int *ambiguous)
{
    double *pool = work;
    double complex *t = (double complex *)(void *)take(&pool, 2 * n * n);
    double complex *q = (double complex *)(void *)take(&pool, 2 * n * n);
    double complex *rr = (double complex *)(void *)take(&pool, 2 * n * n);
    double complex *tmp = (double complex *)(void *)take(&pool, 2 * n * n);
    double complex *w = (double complex *)(void *)take(&pool, 2 * n);
    double complex *zw = (double complex *)(void *)take(&pool, 4 * n);
    double complex *gq = (double complex *)(void *)take(&pool, 2 * n);
    double *rwork = take(&pool, n);
    for (size_t i = 0; i < n * n; i++)
        t[i] = m[i];
    lapack_int sdim = 0;
    lapack_int info = LAPACKE_zgees_work(LAPACK_COL_MAJOR, 'V', 'N', NULL, (lapack_int)n,
                                         t, (lapack_int)n, &sdim, w, q, (lapack_int)n,
                                         zw, (lapack_int)(2 * n), rwork, NULL);
    if (info != 0)
        return 2;
    for (size_t i = 0; i < n * n; i++)
        rr[i] = 0.0;
    double rmax = 0.0;
    for (size_t i = 0; i < n; i++) {
        const double complex *qi = q + i * n;
        for (size_t a = 0; a < n; a++) {
            double complex s = 0.0;
            for (size_t b = 0; b < n; b++)
                s += g[a + b * n] * qi[b];
            gq[a] = s;
        }
        double complex f = 0.0;
        for (size_t a = 0; a < n; a++)
            f += conj(qi[a]) * gq[a];
        double complex s = csqrt(t[i + i * n]);
        double dp = cabs(s - f), dm = cabs(-s - f);
        if (dm < dp) {
            s = -s;
            double x = dp;
            dp = dm;
            dm = x;
        }
        if (ambiguous != NULL && dm > 0.0 && dp > EST_FB_BRANCH_WARN * dm)
            (*ambiguous)++;
        rr[i + i * n] = s;
        rmax = fmax(rmax, cabs(s));
    }
    for (size_t j = 0; j < n; j++)
        for (size_t ii = j; ii-- > 0;) {
            double complex num = t[ii + j * n];
            for (size_t k = ii + 1; k < j; k++)
                num -= rr[ii + k * n] * rr[k + j * n];
            double complex den = rr[ii + ii * n] + rr[j + j * n];
            if (!(cabs(den) > 1e-8 * rmax))
                return 2;
            rr[ii + j * n] = num / den;
        }
    /* tmp = Q R, root = Re(tmp Q^H). */
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double complex s = 0.0;
            for (size_t k = 0; k <= j; k++)
                s += q[i + k * n] * rr[k + j * n];
            tmp[i + j * n] = s;
        }
    double re_max = 0.0, im_max = 0.0;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double complex s = 0.0;
            for (size_t k = 0; k < n; k++)
                s += tmp[i + k * n] * conj(q[j + k * n]);
            root[i + j * n] = creal(s);
            re_max = fmax(re_max, fabs(creal(s)));
            im_max = fmax(im_max, fabs(cimag(s)));
        }
    if (!isfinite(re_max) || im_max > EST_FB_REAL_TOL * re_max + DBL_MIN)
        return 2;
    return 0;
}

static size_t fb_core_work(size_t r)
{
    return 6 * r * r + sqrt_branch_work(r);
}

/* cov: centred cross-products of [x; y] (2r x 2r). A_f = Syx Sxx^-1,
 * M = A_f A_b^-1 = A_f Syy Sxy^-1, A = M^(1/2) guided by A_f. Returns 0,
 * 1 (Sxx or Sxy singular) or 2 (no real square root). */
static int fb_core(size_t r, const double *cov, size_t ld, double *a, double *work,
                   int *ambiguous)
{
    double *pool = work;
    double *sxx = take(&pool, r * r), *aft = take(&pool, r * r);
    double *af = take(&pool, r * r), *pt = take(&pool, r * r);
    double *syx = take(&pool, r * r), *mm = take(&pool, r * r);
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++) {
            sxx[i + j * r] = cov[i + j * ld];
            aft[i + j * r] = cov[i + (r + j) * ld];      /* Sxy */
            syx[i + j * r] = cov[(r + i) + j * ld];      /* Syx */
        }
    if (gauss_solve(r, sxx, r, aft, r, r))               /* aft = Sxx^-1 Sxy = A_f' */
        return 1;
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++)
            af[i + j * r] = aft[j + i * r];
    /* pt = Syy A_f'; M' = Syx^-1 pt. */
    gemm(0, 0, r, r, r, cov + r + r * ld, ld, aft, r, pt, r);
    if (gauss_solve(r, syx, r, pt, r, r))
        return 1;
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++)
            mm[i + j * r] = pt[j + i * r];
    return sqrt_branch(r, mm, af, a, pool, ambiguous);
}

/* ------------------------------------------------------------------ */
/* Total-least-squares DMD (Hemati, Rowley, Deem & Cattafesta 2017). */

static size_t tls_core_work(size_t r)
{
    return 6 * r * r + 8 * r + 1;
}

/* cov: centred Gram of [x; y]. Its r leading eigenvectors [E1; E2] span
 * the total-least-squares fit of the pairs; A = E2 E1^-1. Returns 1 when
 * the r-th and (r+1)-th eigenvalues tie (no unique fit) or E1 is singular. */
static int tls_core(size_t r, const double *cov, size_t ld, double *a, double *work)
{
    size_t n2 = 2 * r;
    double *pool = work;
    double *v = take(&pool, n2 * n2), *lam = take(&pool, n2), *lw = take(&pool, 3 * n2 + 1);
    double *e1t = take(&pool, r * r), *e2t = take(&pool, r * r);
    if (sym_eig(n2, cov, ld, v, lam, lw))
        return 1;
    if (!(lam[n2 - r] - lam[n2 - r - 1] > 1e-12 * fabs(lam[n2 - 1])))
        return 1;
    for (size_t c = 0; c < r; c++) {
        const double *e = v + (n2 - r + c) * n2;
        for (size_t i = 0; i < r; i++) {
            e1t[c + i * r] = e[i];
            e2t[c + i * r] = e[r + i];
        }
    }
    if (gauss_solve(r, e1t, r, e2t, r, r))     /* e2t = E1'^-1 E2' = A' */
        return 1;
    for (size_t j = 0; j < r; j++)
        for (size_t i = 0; i < r; i++)
            a[i + j * r] = e2t[j + i * r];
    return 0;
}

/* ------------------------------------------------------------------ */
/* Instrumental variables (Soderstrom & Stoica 1983), extended form. */

static size_t iv_core_work(size_t r, size_t nu)
{
    size_t e = 2 * r + nu, g = r + nu;
    return 2 * e * e + sym_fun_work(e) + 2 * g * e + r * e + g * g + g * r;
}

/* cov: centred cross-products of v = [x; y; zeta (2r); u (nu)].
 * Regressor xi = [x; u], instruments eta = [zeta; u], W = Seta^+:
 * [A B] = Syeta W Sxieta' (Sxieta W Sxieta')^-1. Returns 1 when the
 * instruments do not determine the regressors. */
static int iv_core(size_t r, size_t nu, const double *cov, size_t ld, double *a,
                   double *b, double *work)
{
    size_t e = 2 * r + nu, g = r + nu;
    double *pool = work;
    double *see = take(&pool, e * e), *wm = take(&pool, e * e);
    double *sw = take(&pool, sym_fun_work(e));
    double *sxe = take(&pool, g * e), *sye = take(&pool, r * e);
    double *t = take(&pool, g * e), *mx = take(&pool, g * g), *nyt = take(&pool, g * r);
    for (size_t j = 0; j < e; j++) {
        size_t cj = j < 2 * r ? 2 * r + j : 4 * r + (j - 2 * r);
        for (size_t i = 0; i < e; i++) {
            size_t ci = i < 2 * r ? 2 * r + i : 4 * r + (i - 2 * r);
            see[i + j * e] = cov[ci + cj * ld];
        }
        for (size_t i = 0; i < g; i++) {
            size_t ci = i < r ? i : 4 * r + (i - r);
            sxe[i + j * g] = cov[ci + cj * ld];
        }
        for (size_t i = 0; i < r; i++)
            sye[i + j * r] = cov[(r + i) + cj * ld];
    }
    if (sym_fun(e, see, e, -1.0, wm, e, sw) <= 0)
        return 1;
    gemm(0, 0, g, e, e, sxe, g, wm, e, t, g);          /* t = Sxe W */
    gemm(0, 1, g, g, e, t, g, sxe, g, mx, g);          /* mx = Sxe W Sxe' */
    gemm(0, 1, g, r, e, t, g, sye, r, nyt, g);         /* nyt = Sxe W Sye' */
    if (gauss_solve(g, mx, g, nyt, g, r))              /* nyt = [A B]' */
        return 1;
    for (size_t i = 0; i < r; i++) {
        for (size_t j = 0; j < r; j++)
            a[i + j * r] = nyt[j + i * g];
        for (size_t j = 0; j < nu; j++)
            b[i + j * r] = nyt[r + j + i * g];
    }
    return 0;
}

/* ------------------------------------------------------------------ */
/* Covariance-driven stochastic subspace identification (Van Overschee &
 * De Moor 1996; Peeters & De Roeck 1999), reduced step. */

static size_t ssi_core_work(size_t r)
{
    return 34 * r * r + 32 * r + 16;
}

/* cov: centred cross-products of [x; y; zeta]. The block Hankel
 * H = [Sxz; Syz] (future [x; y] against past zeta) is weighted by
 * diag(Sxx^-1/2, Sxx^-1/2) on the left (the same weight on both future
 * blocks keeps the shift structure) and Szz^+1/2 on the right; its r
 * leading left singular vectors U_r give the observability matrix
 * O = diag(Sxx^1/2, Sxx^1/2) U_r = [O1; O2] and A = O2 O1^-1. Returns 1
 * when Sxx is singular, the Hankel has rank below r, or O1 is singular. */
static int ssi_core(size_t r, const double *cov, size_t ld, double *a, double *work)
{
    size_t n2 = 2 * r;
    double *pool = work;
    double *wx = take(&pool, r * r), *wxi = take(&pool, r * r);
    double *sw = take(&pool, sym_fun_work(n2));
    double *wz = take(&pool, n2 * n2), *h = take(&pool, n2 * n2);
    double *t1 = take(&pool, n2 * n2), *hw = take(&pool, n2 * n2);
    double *u = take(&pool, n2 * n2), *s = take(&pool, n2);
    double *svw = take(&pool, 10 * n2 + 8), *o1 = take(&pool, r * r);
    double *o2 = take(&pool, r * r), *rw = take(&pool, 2 * r * r);
    if (sym_fun(r, cov, ld, -0.5, wx, r, sw) < (int)r)
        return 1;
    if (sym_fun(r, cov, ld, 0.5, wxi, r, sw) < (int)r)
        return 1;
    if (sym_fun(n2, cov + 2 * r + 2 * r * ld, ld, -0.5, wz, n2, sw) < (int)r)
        return 1;
    for (size_t j = 0; j < n2; j++)
        for (size_t i = 0; i < n2; i++)
            h[i + j * n2] = cov[i + (2 * r + j) * ld];
    gemm(0, 0, n2, n2, n2, h, n2, wz, n2, t1, n2);
    gemm(0, 0, r, n2, r, wx, r, t1, n2, hw, n2);
    gemm(0, 0, r, n2, r, wx, r, t1 + r, n2, hw + r, n2);
    double dummy = 0.0;
    lapack_int info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'N', (lapack_int)n2,
                                          (lapack_int)n2, hw, (lapack_int)n2, s, u,
                                          (lapack_int)n2, &dummy, 1, svw,
                                          (lapack_int)(10 * n2 + 8));
    if (info != 0)
        return 1;
    if (!(s[r - 1] > 1e-12 * s[0]))
        return 1;
    gemm(0, 0, r, r, r, wxi, r, u, n2, o1, r);
    gemm(0, 0, r, r, r, wxi, r, u + r, n2, o2, r);
    return right_solve(r, r, o1, r, o2, r, a, r, rw);
}

/* ------------------------------------------------------------------ */
/* Providers for the bootstrap engine (el_resample.h). fb, tls and ssi
 * take no inputs (dims->n_inputs is 0 for their models); iv appends the
 * input values of the sample of x to its window vector, as the point fit
 * does (point_window). */

static size_t pair_span(const el_boot_dims *dims)
{
    (void)dims;
    return 2;
}

static size_t win_span(const el_boot_dims *dims)
{
    return 2 * dims->lags + 4;
}

static size_t pair_nf(const el_boot_dims *dims)
{
    return nf_of(2 * dims->r);
}

static size_t win_nf(const el_boot_dims *dims)
{
    return nf_of(4 * dims->r + dims->n_inputs);
}

static void pair_features(const el_boot_dims *dims, const double *states, double *out)
{
    memcpy(out + 1, states, 2 * dims->r * sizeof(double));
    gram_products(2 * dims->r, out);
}

static void window_gather_iv(const el_boot_dims *dims, const double *states, double *v);

static void window_features(const el_boot_dims *dims, const double *states, double *out)
{
    window_gather_iv(dims, states, out + 1);
    gram_products(4 * dims->r + dims->n_inputs, out);
}

/* Windows gathered per product in the providers' accumulate. */
#define EST_ACC_RUN 64

/* Doubles of scratch gram_accumulate needs for window vectors of dim. */
static size_t gram_work(size_t dim)
{
    return dim * dim + dim * EST_ACC_RUN;
}

/* Writes window k's vector (dim doubles) into v. */
typedef void (*window_gather)(const el_boot_dims *dims, const double *states, double *v);

/* Adds [1, v, lower triangle of v v'] summed over n consecutive windows to
 * acc: the windows' vectors are gathered EST_ACC_RUN at a time into a
 * matrix V and V V' is one symmetric rank update, several times faster
 * than per-window feature vectors. work: gram_work(dim). */
static void gram_accumulate(const el_boot_dims *dims, size_t dim, window_gather gather,
                            const double *states, size_t n, double *acc, double *work)
{
    size_t sw = dims->r + dims->n_inputs;
    double *g = work, *v = work + dim * dim;
    acc[0] += (double)n;
    for (size_t k0 = 0; k0 < n; k0 += EST_ACC_RUN) {
        size_t cnt = n - k0 < EST_ACC_RUN ? n - k0 : EST_ACC_RUN;
        for (size_t k = 0; k < cnt; k++) {
            gather(dims, states + (k0 + k) * sw, v + k * dim);
            for (size_t i = 0; i < dim; i++)
                acc[1 + i] += v[k * dim + i];
        }
        cblas_dsyrk(CblasColMajor, CblasLower, CblasNoTrans, (int)dim, (int)cnt, 1.0, v,
                    (int)dim, 0.0, g, (int)dim);
        size_t idx = 1 + dim;
        for (size_t j = 0; j < dim; j++)
            for (size_t i = j; i < dim; i++)
                acc[idx++] += g[i + j * dim];
    }
}

static void pair_gather(const el_boot_dims *dims, const double *states, double *v)
{
    memcpy(v, states, 2 * dims->r * sizeof(double));
}

static void window_gather_iv(const el_boot_dims *dims, const double *states, double *v)
{
    size_t r = dims->r, nu = dims->n_inputs, sw = r + nu;
    win_vector(r, sw, dims->lags, states, v);
    memcpy(v + 4 * r, states + (2 * dims->lags + 2) * sw + r, nu * sizeof(double));
}

static void pair_accumulate(const el_boot_dims *dims, const double *states, size_t n,
                            double *acc, double *work)
{
    gram_accumulate(dims, 2 * dims->r, pair_gather, states, n, acc, work);
}

static void window_accumulate(const el_boot_dims *dims, const double *states, size_t n,
                              double *acc, double *work)
{
    gram_accumulate(dims, 4 * dims->r + dims->n_inputs, window_gather_iv, states, n, acc,
                    work);
}

static size_t pair_work(size_t r)
{
    return 2 * r + 4 * r * r;
}

static size_t fb_work(const el_boot_dims *dims)
{
    size_t solve = pair_work(dims->r) + fb_core_work(dims->r), acc = gram_work(2 * dims->r);
    return solve > acc ? solve : acc;
}

static size_t tls_work(const el_boot_dims *dims)
{
    size_t solve = pair_work(dims->r) + tls_core_work(dims->r), acc = gram_work(2 * dims->r);
    return solve > acc ? solve : acc;
}

static size_t iv_work(const el_boot_dims *dims)
{
    size_t dim = 4 * dims->r + dims->n_inputs;
    size_t solve = dim + dim * dim + iv_core_work(dims->r, dims->n_inputs);
    return solve > gram_work(dim) ? solve : gram_work(dim);
}

static size_t ssi_work(const el_boot_dims *dims)
{
    size_t dim = 4 * dims->r;
    size_t solve = dim + dim * dim + ssi_core_work(dims->r);
    return solve > gram_work(dim) ? solve : gram_work(dim);
}

/* The engine's sums need at least a few more windows than unknowns per
 * row before a replicate means anything. */
static int too_few(double n, size_t dim)
{
    return !(n >= (double)(dim + 2));
}

/* The core of an estimator without inputs: cov holds the centred
 * cross-products (ld x ld) of its window vector; writes a (r x r). */
typedef int (*plain_core)(size_t r, const double *cov, size_t ld, double *a, double *work);

static int fb_core_plain(size_t r, const double *cov, size_t ld, double *a, double *work)
{
    return fb_core(r, cov, ld, a, work, NULL);
}

/* Shared solve of fb, tls and ssi: unpack the summed features of a window
 * vector of dim_per_r * r numbers, run the core, add the intercept. */
static int solve_plain(const el_boot_dims *dims, size_t dim_per_r, plain_core core,
                       const double *sum, double *a, double *offset, double *work)
{
    size_t r = dims->r, dim = dim_per_r * r;
    double *mean = work, *cov = work + dim;
    if (too_few(sum[0], dim))
        return 1;
    unpack_cov(dim, sum, mean, cov);
    if (core(r, cov, dim, a, cov + dim * dim))
        return 1;
    if (offset != NULL)
        offset_from(r, 0, mean, mean + r, NULL, a, NULL, offset);
    return 0;
}

static int fb_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                    double *offset, double *work)
{
    (void)b;
    return solve_plain(dims, 2, fb_core_plain, sum, a, offset, work);
}

static int tls_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                     double *offset, double *work)
{
    (void)b;
    return solve_plain(dims, 2, tls_core, sum, a, offset, work);
}

/* B is solved for with A whether or not the caller wants it. */
static int iv_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                    double *offset, double *work)
{
    size_t r = dims->r, nu = dims->n_inputs, dim = 4 * r + nu;
    double *mean = work, *cov = work + dim, *core = cov + dim * dim;
    if (too_few(sum[0], dim))
        return 1;
    unpack_cov(dim, sum, mean, cov);
    /* Without a caller's b, B goes where the covariance was: iv_core has
     * copied what it needs from cov before it writes a and b. */
    double *bb = b != NULL ? b : cov;
    if (iv_core(r, nu, cov, dim, a, bb, core))
        return 1;
    if (offset != NULL)
        offset_from(r, nu, mean, mean + r, mean + 4 * r, a, bb, offset);
    return 0;
}

static int ssi_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                     double *offset, double *work)
{
    (void)b;
    return solve_plain(dims, 4, ssi_core, sum, a, offset, work);
}

static const el_boot_provider fb_provider = {
    "forward-backward", pair_span, pair_nf, fb_work, pair_features, pair_accumulate, fb_solve
};

static const el_boot_provider tls_provider = {
    "total least squares", pair_span, pair_nf, tls_work, pair_features, pair_accumulate, tls_solve
};

static const el_boot_provider iv_provider = {
    "instrumental variables", win_span, win_nf, iv_work, window_features, window_accumulate, iv_solve
};

static const el_boot_provider ssi_provider = {
    "stochastic subspace", win_span, win_nf, ssi_work, window_features, window_accumulate, ssi_solve
};

const el_boot_provider *el_estimator_provider(el_method m)
{
    switch (m) {
    case EL_METHOD_LS:
        return el_boot_provider_ls();
    case EL_METHOD_FB:
        return &fb_provider;
    case EL_METHOD_TLS:
        return &tls_provider;
    case EL_METHOD_IV:
        return &iv_provider;
    case EL_METHOD_SSI:
        return &ssi_provider;
    }
    return NULL;
}

const el_boot_provider *el_estimator_provider_for(const el_model *model)
{
    if (model == NULL)
        return NULL;
    if (model->n_inputs > 0 && model->method != EL_METHOD_LS &&
        model->method != EL_METHOD_IV)
        return NULL;
    return el_estimator_provider(model->method);
}

el_boot_dims el_estimator_boot_dims(const el_model *model)
{
    el_boot_dims dims = {0, 0, 0};
    if (model != NULL) {
        dims.r = model->rank;
        dims.n_inputs = model->n_inputs;
        dims.lags = model->lags;
    }
    return dims;
}

/* ------------------------------------------------------------------ */
/* Reduced states. */

/* Writes the n_pairs + 1 reduced states of the model (r each): p[t] =
 * U_r'(z[K+t] - zbar) with zbar the mean state over the X range, then
 * w = sqrt(m) L^-1 p (L L' = sum_{t<m} p p', returned in chol, r x r) or,
 * isotropic, w = s p with s = sqrt(m r / trace G) (returned in *iso).
 * work: 2 * state_dim. */
static el_status build_states(const el_series *s, const el_model *mdl, int isotropic,
                              double *states, double *chol, double *iso, el_error *err)
{
    size_t r = mdl->rank, m = mdl->n_pairs;
    /* p[t] = U_r'(z[K+t] - zbar) and G = sum p p' (el_resample: the same
     * projection the bootstrap's own states start from). */
    el_status st = el_boot_project_states(s, mdl, 1, states, chol, err);
    if (st != EL_OK)
        return st;
    if (isotropic) {
        double tr = 0.0;
        for (size_t q = 0; q < r; q++)
            tr += chol[q + q * r];
        if (!(tr > 0.0) || !isfinite(tr)) {
            el_error_set(err, EL_ERR_NUMERIC,
                         "the projected snapshots do not vary: nothing to fit");
            el_error_hint(err, "use a lower --rank");
            return EL_ERR_NUMERIC;
        }
        double sc = sqrt((double)m * (double)r / tr);
        for (size_t i = 0; i < (m + 1) * r; i++)
            states[i] *= sc;
        *iso = sc;
        return EL_OK;
    }
    double dmax = 0.0;
    for (size_t q = 0; q < r; q++)
        dmax = fmax(dmax, chol[q + q * r]);
    lapack_int info = LAPACKE_dpotrf_work(LAPACK_COL_MAJOR, 'L', (lapack_int)r, chol,
                                          (lapack_int)r);
    int bad = info != 0;
    /* Same rule as the bootstrap's own Cholesky: a pivot below 1e-14 of the
     * largest Gram diagonal is a direction without spread. */
    for (size_t q = 0; q < r && !bad; q++)
        bad = !(chol[q + q * r] * chol[q + q * r] > 1e-14 * dmax);
    if (bad) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "the projected snapshots have no spread along a basis direction");
        el_error_hint(err, "use a lower --rank");
        return EL_ERR_NUMERIC;
    }
    for (size_t b = 0; b < r; b++)
        for (size_t a = 0; a < b; a++)
            chol[a + b * r] = 0.0;
    cblas_dtrsm(CblasColMajor, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit,
                (int)r, (int)(m + 1), sqrt((double)m), chol, (int)r, states, (int)r);
    return EL_OK;
}

static int model_fits_series(const el_series *s, const el_model *m)
{
    return s != NULL && m != NULL && s->values != NULL && m->basis != NULL &&
           m->channel_mean != NULL && m->channel_scale != NULL && m->rank > 0 &&
           m->rank <= m->state_dim && s->n_channels == m->n_channels &&
           m->state_dim == m->n_channels * (m->lags + 1) &&
           s->n_samples >= m->lags + 3 && s->n_samples - 1 - m->lags == m->n_pairs;
}

el_status el_estimator_boot_states(const el_series *series, const el_series *inputs,
                                   const el_model *model, double **states,
                                   size_t *n_states, el_error *err)
{
    if (states == NULL || n_states == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_estimator_boot_states: NULL output");
    *states = NULL;
    *n_states = 0;
    if (!model_fits_series(series, model))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_estimator_boot_states: the series does not fit the model");
    size_t nu = model->n_inputs;
    if (nu > 0 && (inputs == NULL || inputs->values == NULL ||
                   inputs->n_channels != nu || inputs->n_samples != series->n_samples ||
                   model->input_mean == NULL || model->input_scale == NULL))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_estimator_boot_states: the inputs do not fit the model");
    size_t r = model->rank, m = model->n_pairs, sw = r + nu;
    double *w = malloc((m + 1) * r * sizeof(double));
    double *chol = malloc(r * r * sizeof(double));
    double *out = nu > 0 ? malloc((m + 1) * sw * sizeof(double)) : w;
    el_status st = EL_ERR_NOMEM;
    if (w != NULL && chol != NULL && out != NULL) {
        double iso = 1.0;
        st = build_states(series, model, model->method == EL_METHOD_TLS, w, chol, &iso, err);
    } else {
        el_error_set(err, EL_ERR_NOMEM, "out of memory (reduced states)");
    }
    free(chol);
    if (st == EL_OK && nu > 0) {
        /* State t belongs to sample K + t; its inputs are scaled as the
         * point fit scales them (point_window). */
        size_t nn = series->n_samples;
        for (size_t t = 0; t <= m; t++) {
            memcpy(out + t * sw, w + t * r, r * sizeof(double));
            for (size_t j = 0; j < nu; j++)
                out[t * sw + r + j] =
                    (inputs->values[j * nn + model->lags + t] - model->input_mean[j]) /
                    model->input_scale[j];
        }
    }
    if (out != w)
        free(w);
    if (st != EL_OK) {
        free(out);
        return st;
    }
    *states = out;
    *n_states = m + 1;
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* The plan of the fit. */

struct el_est_plan {
    el_method method;
    size_t n_samples, n_channels, n_inputs, lags, depth, state_dim, n_pairs;
    size_t s1_rows, s1_q;       /* instrument step: rows k = K+depth..N-1, past dim */
    double *s1_data;            /* s1_rows x (d + q) */
    double *s1_gram;            /* (d + q)^2 */
    double *s1_work;
    double *states;             /* (n_pairs + 1) * d */
    double *chol;               /* d * d */
    double *vbuf;               /* EST_CHUNK x dim_max */
    double *mean, *cov;         /* dim_max, dim_max^2 */
    double *core_work;
    double *row;                /* dim_max: one window vector */
    double *aw, *bw;            /* d^2, d * nu */
    size_t dim_max;
};

static size_t s1_work_size(size_t d, size_t q, size_t rows)
{
    size_t mx = d > q ? d : q, mn = d < q ? d : q;
    return d * d + q * q + 3 * d * q + 2 * mn + 2 * d * mn + mn * q + sym_fun_work(mx) +
           (5 * (d + q) + 8) + d + q + 2 * rows;
}

void el_est_plan_destroy(el_est_plan *plan)
{
    if (plan == NULL)
        return;
    free(plan->s1_data);
    free(plan->s1_gram);
    free(plan->s1_work);
    free(plan->states);
    free(plan->chol);
    free(plan->vbuf);
    free(plan->mean);
    free(plan->cov);
    free(plan->core_work);
    free(plan->row);
    free(plan->aw);
    free(plan->bw);
    free(plan);
}

static int is_instrument_method(el_method m)
{
    return m == EL_METHOD_IV || m == EL_METHOD_SSI;
}

static el_status check_est_options(const el_fit_options *opt, size_t n_samples,
                                   size_t n_channels, size_t n_inputs, size_t *depth,
                                   el_error *err)
{
    el_method m = opt->method;
    if (m != EL_METHOD_FB && m != EL_METHOD_TLS && m != EL_METHOD_IV &&
        m != EL_METHOD_SSI) {
        el_error_set(err, EL_ERR_INTERNAL, "el_est_plan_create: method %d has no "
                     "estimator plan", (int)m);
        return EL_ERR_INTERNAL;
    }
    if (n_inputs > 0 && m != EL_METHOD_IV) {
        el_error_set(err, EL_ERR_USAGE,
                     "--method %s does not take measured inputs", el_method_name(m));
        el_error_option(err, "--input");
        el_error_hint(err, "use --method ls (DMD with control) or --method iv with "
                           "--input, or leave --input out");
        return EL_ERR_USAGE;
    }
    size_t lags = opt->lags, d = n_channels * (lags + 1);
    size_t m_pairs = n_samples - lags - 1;
    *depth = 0;
    /* fb and tls use the instrument step only to choose --rank auto, and
     * fall back to the hard threshold when the record is too short for it. */
    int optional = !is_instrument_method(m);
    if (optional && opt->rank != EL_RANK_AUTO)
        return EL_OK;
    size_t dep = opt->depth > 0 ? opt->depth : lags + 1;
    if (dep >= n_samples || lags + dep >= n_samples ||
        dep > SIZE_MAX / 4 / n_channels) {
        el_error_set(err, EL_ERR_USAGE, "depth %zu is too large for %zu samples",
                     dep, n_samples);
        el_error_option(err, "--depth");
        el_error_hint(err, "give a smaller --depth, or leave it out for lags + 1");
        return EL_ERR_USAGE;
    }
    size_t q = n_channels * dep, rows = n_samples - lags - dep;
    size_t windows = m_pairs > 2 * lags + 2 ? m_pairs - 2 * lags - 2 : 0;
    if (optional && opt->depth == 0 && rows < 2 * (d + q + 1))
        return EL_OK;
    if (optional)
        windows = 2 * (d + 1);
    if (rows < 2 * (d + q + 1) || windows < 2 * (d + 1)) {
        el_error_set(err, opt->depth > 0 ? EL_ERR_USAGE : EL_ERR_DATA,
                     "%s needs past measurements %zu samples deep: %zu instrument "
                     "rows for %zu state and %zu past coordinates, and %zu "
                     "instrument windows for a state of dimension %zu, are too few",
                     el_method_name(m), lags + dep, rows, d, q, windows, d);
        if (opt->depth > 0)
            el_error_option(err, "--depth");
        el_error_hint(err, "use a longer window (--from/--to), fewer lags, a smaller "
                           "--depth, or --method ls");
        return opt->depth > 0 ? EL_ERR_USAGE : EL_ERR_DATA;
    }
    *depth = dep;
    return EL_OK;
}

el_status el_est_plan_create(const el_fit_options *opt, size_t n_samples,
                             size_t n_channels, size_t n_inputs, el_est_plan **out,
                             el_error *err)
{
    if (out == NULL || opt == NULL || n_channels == 0 || n_samples < opt->lags + 3)
        return el_error_set(err, EL_ERR_INTERNAL, "el_est_plan_create: bad arguments");
    *out = NULL;
    size_t depth = 0;
    el_status st = check_est_options(opt, n_samples, n_channels, n_inputs, &depth, err);
    if (st != EL_OK)
        return st;
    el_est_plan *p = calloc(1, sizeof *p);
    if (p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    p->method = opt->method;
    p->n_samples = n_samples;
    p->n_channels = n_channels;
    p->n_inputs = n_inputs;
    p->lags = opt->lags;
    p->depth = depth;
    size_t d = n_channels * (opt->lags + 1), m = n_samples - opt->lags - 1;
    p->state_dim = d;
    p->n_pairs = m;
    int ok = 1;
    if (depth > 0) {
        p->s1_q = n_channels * depth;
        p->s1_rows = n_samples - opt->lags - depth;
        size_t cols = d + p->s1_q;
        p->s1_data = malloc(p->s1_rows * cols * sizeof(double));
        p->s1_gram = malloc(cols * cols * sizeof(double));
        p->s1_work = malloc(s1_work_size(d, p->s1_q, p->s1_rows) * sizeof(double));
        ok = p->s1_data && p->s1_gram && p->s1_work;
    }
    p->dim_max = is_instrument_method(opt->method) ? 4 * d + n_inputs : 2 * d;
    size_t core = 0;
    switch (opt->method) {
    case EL_METHOD_FB:
        core = fb_core_work(d);
        break;
    case EL_METHOD_TLS:
        core = tls_core_work(d);
        break;
    case EL_METHOD_IV:
        core = iv_core_work(d, n_inputs);
        break;
    default:
        core = ssi_core_work(d);
        break;
    }
    size_t dm = p->dim_max, nu = n_inputs;
    p->states = malloc((m + 1) * d * sizeof(double));
    p->chol = malloc(d * d * sizeof(double));
    p->vbuf = malloc(EST_CHUNK * dm * sizeof(double));
    p->mean = malloc(dm * sizeof(double));
    p->cov = malloc(dm * dm * sizeof(double));
    p->core_work = malloc(core * sizeof(double));
    p->aw = malloc(d * d * sizeof(double));
    p->bw = malloc((d * nu + 1) * sizeof(double));
    p->row = malloc(dm * sizeof(double));
    if (!ok || !p->states || !p->chol || !p->vbuf || !p->mean || !p->cov ||
        !p->core_work || !p->aw || !p->bw || !p->row) {
        el_est_plan_destroy(p);
        return el_error_set(err, EL_ERR_NOMEM,
                            "out of memory for the %s estimator (%zu states)",
                            el_method_name(opt->method), d);
    }
    *out = p;
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Step 1 of iv and ssi: canonical correlations, rank and basis. */

/* Upper 0.001 quantile of chi-square with nu degrees of freedom by the
 * cube-root normal approximation of Wilson & Hilferty (1931, PNAS 17). */
static double chi2_upper(double nu)
{
    double h = 2.0 / (9.0 * nu);
    double c = 1.0 - h + EST_BARTLETT_Z * sqrt(h);
    return nu * c * c * c;
}

/* The sequential test of the canonical correlations: the smallest k such
 * that rho_k, rho_k+1, ... are compatible with zero by both
 *  - Bartlett's (1938) statistic, powerful when several weak directions
 *    remain: -(m_eff - 1 - (p + q + 1)/2) sum_{j>=k} ln(1 - rho_j^2)
 *    <= chi2_{0.001}((p-k)(q-k));
 *  - a largest-root bound, powerful against one more direction among many
 *    noise dimensions (there the omnibus statistic spreads its power over
 *    (p-k)(q-k) degrees of freedom): under the null the whitened cross-
 *    covariance of the remaining (p-k) x (q-k) directions has entries of
 *    variance ~1/m_eff, and the largest singular value of a p x q matrix of
 *    independent standard normals exceeds sqrt(p) + sqrt(q) + t with
 *    probability at most exp(-t^2/2) (Davidson & Szarek 2001, Handbook of
 *    the Geometry of Banach Spaces, thm II.13; recalled from memory); so
 *    rho_k > (sqrt(p-k) + sqrt(q-k) + t) / sqrt(m_eff), t = sqrt(2 ln 1000),
 *    rejects at level 0.001.
 * A direction is kept when either rejects (level <= 0.002 in all). */
static size_t bartlett_rank(const double *rho, size_t n_rho, size_t p, size_t q,
                            double m_eff)
{
    double factor = m_eff - 1.0 - 0.5 * (double)(p + q + 1);
    double t = sqrt(2.0 * log(1000.0));
    size_t k = 0;
    while (k < n_rho) {
        int reject = 0;
        if (factor > 0.0) {
            double stat = 0.0;
            for (size_t j = k; j < n_rho; j++) {
                double u = (1.0 - rho[j]) * (1.0 + rho[j]);
                stat -= log(u > 1e-300 ? u : 1e-300);
            }
            stat *= factor;
            reject = stat > chi2_upper((double)(p - k) * (double)(q - k));
        }
        double edge = (sqrt((double)(p - k)) + sqrt((double)(q - k)) + t) / sqrt(m_eff);
        if (rho[k] > edge)
            reject = 1;
        if (!reject)
            break;
        k++;
    }
    return k;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Lag-h autocorrelations of x[0..n) for h = 0..lags into ac (ac[0] = 1). */
static void autocorr(const double *x, size_t n, size_t lags, double *ac)
{
    double g0 = 0.0;
    for (size_t i = 0; i < n; i++)
        g0 += x[i] * x[i];
    for (size_t h = 0; h <= lags; h++) {
        double g = 0.0;
        for (size_t i = h; i < n; i++)
            g += x[i] * x[i - h];
        ac[h] = g0 > 0.0 ? g / g0 : 0.0;
    }
}

typedef struct {
    size_t rank;               /* chosen */
    size_t test_rank;          /* by Bartlett's test (0 when not run) */
    size_t numeric_rank;       /* canonical correlations above EST_RHO_NUMERICAL */
    int lowered;               /* a given rank was above the numerical rank */
    double inflation;          /* variance inflation of the test (1 without lags) */
} s1_result;

/* From the Gram of [z, pi] ((d + q)^2, centred, both triangles set):
 * canonical correlations into rho (min(d, q)), rank and basis (d x rank,
 * leading dimension d). data (rows x (d + q), the centred rows behind the
 * Gram) serves the rank test; NULL with rows = 0 for exact covariances
 * (rank_opt must then be > 0).
 * The test: the rows overlap (z[k] and z[k+1] share K samples), so the
 * noise part of a state direction is a moving average of order K and the
 * sample cross-correlations with the (autocorrelated) past vary more than
 * for independent rows, by Bartlett's (1946) formula
 * f = sum_{|h|<=K} rho_u(h) rho_v(h) for the canonical variates u, v of
 * a pair. f is taken as the median over the trailing half of the pairs
 * (the directions most likely to be noise), bounded by 1 and by K + 1
 * (the largest f a moving average of white noise of order K can have, by
 * Cauchy-Schwarz on its spectrum), and the test uses m / f rows.
 * work: s1_work_size(d, q, rows). Returns 0, or 1 when LAPACK fails. */
static int s1_from_gram(size_t d, size_t q, const double *gram, const double *data,
                        size_t rows, size_t lags, long rank_opt, double *rho,
                        double *basis, s1_result *res, double *work)
{
    size_t ld = d + q, mn = d < q ? d : q, mx = d > q ? d : q;
    double *pool = work;
    double *wz = take(&pool, d * d), *wp = take(&pool, q * q);
    double *t = take(&pool, d * q), *kc = take(&pool, d * q);
    double *sv = take(&pool, mn), *u = take(&pool, d * mn);
    double *ucan = take(&pool, d * mn), *vtcan = take(&pool, mn * q);
    double *fval = take(&pool, mn);
    double *cp = take(&pool, d * q), *sw = take(&pool, sym_fun_work(mx));
    double *svw = take(&pool, 5 * (d + q) + 8);
    double *av = take(&pool, d), *bv = take(&pool, q);
    double *us = take(&pool, rows), *vs = take(&pool, rows);
    int rz = sym_fun(d, gram, ld, -0.5, wz, d, sw);
    int rp = sym_fun(q, gram + d + d * ld, ld, -0.5, wp, q, sw);
    if (rz < 0 || rp < 0)
        return 1;
    gemm(0, 0, d, q, q, gram + d * ld, ld, wp, q, t, d);   /* t = Szp Wp */
    gemm(0, 0, d, q, d, wz, d, t, d, kc, d);               /* kc = Wz Szp Wp */
    lapack_int info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'S', (lapack_int)d,
                                          (lapack_int)q, kc, (lapack_int)d, rho, ucan,
                                          (lapack_int)d, vtcan, (lapack_int)mn, svw,
                                          (lapack_int)(5 * (d + q) + 8));
    if (info != 0)
        return 1;
    size_t num = 0;
    for (size_t j = 0; j < mn; j++) {
        rho[j] = fmin(fmax(rho[j], 0.0), 1.0);
        if (rho[j] > EST_RHO_NUMERICAL)
            num++;
    }
    res->numeric_rank = num;
    res->test_rank = 0;
    res->lowered = 0;
    res->inflation = 1.0;
    if (data != NULL && lags > 0 && num > 0 && rows > lags + 2) {
        size_t nf = 0;
        double acu[EL_EST_PROVIDER_MAX_LAGS + 2], acv[EL_EST_PROVIDER_MAX_LAGS + 2];
        size_t hmax = lags <= EL_EST_PROVIDER_MAX_LAGS ? lags : EL_EST_PROVIDER_MAX_LAGS;
        for (size_t j = num / 2; j < num; j++) {
            gemm(0, 0, d, 1, d, wz, d, ucan + j * d, d, av, d);
            for (size_t i = 0; i < q; i++)
                bv[i] = vtcan[j + i * mn];
            gemm(0, 0, q, 1, q, wp, q, bv, q, cp, q);
            gemm(0, 0, rows, 1, d, data, rows, av, d, us, rows);
            gemm(0, 0, rows, 1, q, data + d * rows, rows, cp, q, vs, rows);
            autocorr(us, rows, hmax, acu);
            autocorr(vs, rows, hmax, acv);
            double f = 1.0;
            for (size_t h = 1; h <= hmax; h++)
                f += 2.0 * acu[h] * acv[h];
            fval[nf++] = f;
        }
        qsort(fval, nf, sizeof(double), cmp_double);
        double med = nf % 2 ? fval[nf / 2] : 0.5 * (fval[nf / 2 - 1] + fval[nf / 2]);
        res->inflation = fmin(fmax(med, 1.0), (double)(lags + 1));
    }
    double m_eff = (double)rows / res->inflation;
    size_t r;
    if (rank_opt > 0) {
        r = (size_t)rank_opt;
        if (r > num) {
            r = num;
            res->lowered = 1;
        }
        if (rows > 0)
            res->test_rank = bartlett_rank(rho, num, (size_t)rz, (size_t)rp, m_eff);
    } else {
        res->test_rank = bartlett_rank(rho, num, (size_t)rz, (size_t)rp, m_eff);
        r = res->test_rank;
    }
    res->rank = r;
    if (r == 0)
        return 0;
    memcpy(cp, t, d * q * sizeof(double));
    double dummy = 0.0;
    info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'N', (lapack_int)d, (lapack_int)q,
                               cp, (lapack_int)d, sv, u, (lapack_int)d, &dummy, 1, svw,
                               (lapack_int)(5 * (d + q) + 8));
    if (info != 0)
        return 1;
    memcpy(basis, u, d * r * sizeof(double));
    return 0;
}

/* Step 1 proper: the rows, their Gram, the canonical correlations, the
 * rank (and the basis into model->basis). */
static el_status stage1_run(el_est_plan *plan, const el_series *series, long rank_opt,
                            el_model *model, s1_result *res, el_error *err)
{
    size_t nn = plan->n_samples, nc = plan->n_channels, lags = plan->lags;
    size_t d = plan->state_dim, q = plan->s1_q, rows = plan->s1_rows, dep = plan->depth;
    size_t cols = d + q;
    const double *x = series->values;
    /* Row i is sample k = K + depth + i: the state lags 0..K, then the past
     * x[k-K-1] .. x[k-K-depth]. */
    for (size_t col = 0; col < cols; col++) {
        size_t back = col < d ? col / nc : lags + 1 + (col - d) / nc;
        size_t c = col % nc;
        double mean = model->channel_mean[c], inv = 1.0 / model->channel_scale[c];
        double *dst = plan->s1_data + col * rows, acc = 0.0;
        for (size_t i = 0; i < rows; i++) {
            size_t k = lags + dep + i;
            dst[i] = (x[c * nn + k - back] - mean) * inv;
            acc += dst[i];
        }
        acc /= (double)rows;
        for (size_t i = 0; i < rows; i++)
            dst[i] -= acc;
    }
    cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, (int)cols, (int)rows, 1.0,
                plan->s1_data, (int)rows, 0.0, plan->s1_gram, (int)cols);
    for (size_t j = 0; j < cols; j++)
        for (size_t i = 0; i < j; i++)
            plan->s1_gram[i + j * cols] = plan->s1_gram[j + i * cols];
    if (s1_from_gram(d, q, plan->s1_gram, plan->s1_data, rows, lags, rank_opt,
                     model->canonical_corr, model->basis, res, plan->s1_work)) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "the canonical correlations of the state with the past did not "
                     "converge");
        el_error_hint(err, "check the data for extreme values");
        return EL_ERR_NUMERIC;
    }
    model->n_canonical = d < q ? d : q;
    model->depth = dep;
    if (res->rank == 0) {
        el_error_set(err, EL_ERR_DATA,
                     "%s: the past measurements (%zu samples back and more) do not "
                     "predict the state: largest canonical correlation %.3g, not "
                     "significant at 0.1%%",
                     el_method_name(plan->method), lags + 1,
                     model->n_canonical > 0 ? model->canonical_corr[0] : 0.0);
        el_error_hint(err, "the log may hold only noise at this sampling; use "
                           "--method ls, fewer lags, or a longer window");
        return EL_ERR_DATA;
    }
    return EL_OK;
}

el_status el_est_instrument_basis(el_est_plan *plan, const el_series *series,
                                  long rank_opt, el_model *model,
                                  el_warnings *warnings, el_error *err)
{
    if (plan == NULL || series == NULL || model == NULL ||
        !is_instrument_method(plan->method) || plan->depth == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "el_est_instrument_basis: bad arguments");
    size_t d = plan->state_dim;
    s1_result res;
    el_status st = stage1_run(plan, series, rank_opt, model, &res, err);
    if (st != EL_OK)
        return st;
    model->rank_was_auto = rank_opt <= 0;
    model->rank = res.rank;
    if (rank_opt <= 0 && res.rank < d)
        st = el_warnings_add(warnings,
                             "%s: the past measurements predict %zu of the %zu state "
                             "directions (canonical correlations %.3g down to %.3g; "
                             "tested at 0.1%% on %.0f effective rows): rank %zu, the "
                             "other directions are treated as noise",
                             el_method_name(plan->method), res.rank, d,
                             model->canonical_corr[0],
                             model->canonical_corr[res.rank - 1],
                             (double)plan->s1_rows / res.inflation, res.rank);
    else if (res.lowered)
        st = el_warnings_add(warnings,
                             "%s: only %zu canonical correlations of the state with the "
                             "past are above rounding: rank lowered from %ld to %zu",
                             el_method_name(plan->method), res.numeric_rank, rank_opt,
                             res.rank);
    else if (rank_opt > 0 && res.rank > res.test_rank)
        st = el_warnings_add(warnings,
                             "%s: rank %zu asked, but only %zu directions are predicted "
                             "by the past measurements significantly (tested at 0.1%%): "
                             "the others are poorly determined",
                             el_method_name(plan->method), res.rank, res.test_rank);
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    return EL_OK;
}

el_status el_est_predictable_rank(el_est_plan *plan, const el_series *series,
                                  el_model *model, size_t *rank, el_error *err)
{
    if (plan == NULL || series == NULL || model == NULL || rank == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_est_predictable_rank: bad arguments");
    *rank = 0;
    if (plan->depth == 0)
        return EL_OK;
    s1_result res;
    el_status st = stage1_run(plan, series, EL_RANK_AUTO, model, &res, err);
    if (st == EL_OK)
        *rank = res.rank;
    return st;
}

/* ------------------------------------------------------------------ */
/* Step 2: the reduced system matrix. */

/* Window vector number u (full dimension: + inputs) into v. */
static void point_window(const el_est_plan *p, size_t r, const double *states,
                         const el_series *inputs, const el_model *mdl, size_t u,
                         double *v)
{
    size_t nu = p->n_inputs, sample;
    if (is_instrument_method(p->method)) {
        win_vector(r, r, p->lags, states + u * r, v);
        sample = p->lags + u + 2 * p->lags + 2;
        for (size_t j = 0; j < nu; j++)
            v[4 * r + j] = (inputs->values[j * p->n_samples + sample] -
                            mdl->input_mean[j]) / mdl->input_scale[j];
    } else {
        memcpy(v, states + u * r, 2 * r * sizeof(double));
    }
}

/* Means and centred cross-products of the window vectors, in chunks. */
static void window_moments(el_est_plan *p, size_t r, size_t dim, size_t n_win,
                           const el_series *inputs, const el_model *mdl)
{
    double *v = p->vbuf;
    for (size_t i = 0; i < dim; i++)
        p->mean[i] = 0.0;
    for (size_t u = 0; u < n_win; u++) {
        point_window(p, r, p->states, inputs, mdl, u, v);
        for (size_t i = 0; i < dim; i++)
            p->mean[i] += v[i];
    }
    for (size_t i = 0; i < dim; i++)
        p->mean[i] /= (double)n_win;
    double beta = 0.0;
    for (size_t u0 = 0; u0 < n_win; u0 += EST_CHUNK) {
        size_t rows = n_win - u0 < EST_CHUNK ? n_win - u0 : EST_CHUNK;
        for (size_t i = 0; i < rows; i++) {
            /* Row i of the chunk, stored column-major (rows x dim). */
            double *row = p->row;
            point_window(p, r, p->states, inputs, mdl, u0 + i, row);
            for (size_t c = 0; c < dim; c++)
                v[i + c * rows] = row[c] - p->mean[c];
        }
        cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, (int)dim, (int)rows, 1.0, v,
                    (int)rows, beta, p->cov, (int)dim);
        beta = 1.0;
    }
    for (size_t j = 0; j < dim; j++)
        for (size_t i = 0; i < j; i++)
            p->cov[i + j * dim] = p->cov[j + i * dim];
}

static el_status core_failure(el_method m, int code, el_error *err)
{
    switch (m) {
    case EL_METHOD_FB:
        if (code == 1) {
            el_error_set(err, EL_ERR_NUMERIC,
                         "fb: the backward model is singular (Sxy or Sxx has no "
                         "inverse): a state direction does not carry over from one "
                         "sample to the next");
            el_error_hint(err, "lower --rank (or --rank auto), or use --method ls");
        } else {
            el_error_set(err, EL_ERR_NUMERIC,
                         "fb: the forward-backward product A_f A_b^-1 has no real "
                         "square root consistent with the forward estimate (a repeated "
                         "eigenvalue, such as a mode at a quarter of the sampling rate, "
                         "takes two branches)");
            el_error_hint(err, "use --method tls, or sample at another rate");
        }
        break;
    case EL_METHOD_TLS:
        el_error_set(err, EL_ERR_NUMERIC,
                     "tls: the total-least-squares problem has no unique solution "
                     "(the leading eigenvectors of the stacked snapshots do not "
                     "determine the model)");
        el_error_hint(err, "lower --rank (or --rank auto), or use --method fb or ls");
        break;
    case EL_METHOD_IV:
        el_error_set(err, EL_ERR_NUMERIC,
                     "iv: the instruments do not determine the model (their "
                     "correlation with the state is singular)");
        el_error_hint(err, "lower --rank, or leave --rank out for the rank the "
                           "instruments support");
        break;
    default:
        el_error_set(err, EL_ERR_NUMERIC,
                     "ssi: the block Hankel of the reduced correlations has rank "
                     "below the model order, or its observability matrix is singular");
        el_error_hint(err, "lower --rank, or leave --rank out for the rank the "
                           "past measurements support");
        break;
    }
    return EL_ERR_NUMERIC;
}

el_status el_est_reduced_fit(el_est_plan *plan, const el_series *series,
                             const el_series *inputs, el_model *model,
                             double *b_reduced, el_warnings *warnings, el_error *err)
{
    if (plan == NULL || model == NULL || !model_fits_series(series, model) ||
        model->state_dim != plan->state_dim ||
        (plan->n_inputs > 0 && (inputs == NULL || inputs->n_samples != plan->n_samples ||
                                inputs->n_channels != plan->n_inputs)))
        return el_error_set(err, EL_ERR_INTERNAL, "el_est_reduced_fit: bad arguments");
    size_t r = model->rank, m = plan->n_pairs, nu = plan->n_inputs, lags = plan->lags;
    int iso_method = plan->method == EL_METHOD_TLS;
    double iso = 1.0;
    el_status st = build_states(series, model, iso_method, plan->states, plan->chol, &iso,
                                err);
    if (st != EL_OK)
        return st;
    size_t dim, n_win;
    if (is_instrument_method(plan->method)) {
        dim = 4 * r + nu;
        n_win = m + 1 - (2 * lags + 4) + 1;
    } else {
        dim = 2 * r;
        n_win = m;
    }
    window_moments(plan, r, dim, n_win, inputs, model);
    int code = 0, ambiguous = 0;
    switch (plan->method) {
    case EL_METHOD_FB:
        code = fb_core(r, plan->cov, dim, plan->aw, plan->core_work, &ambiguous);
        break;
    case EL_METHOD_TLS:
        code = tls_core(r, plan->cov, dim, plan->aw, plan->core_work);
        break;
    case EL_METHOD_IV:
        code = iv_core(r, nu, plan->cov, dim, plan->aw, plan->bw, plan->core_work);
        break;
    default:
        code = ssi_core(r, plan->cov, dim, plan->aw, plan->core_work);
        break;
    }
    if (code != 0)
        return core_failure(plan->method, code, err);
    /* Back to basis coordinates: p = L w / sqrt(m) (or w / s), so
     * A_p = L A_w L^-1 and B_p = L B_w / sqrt(m). */
    double *a = model->a_reduced;
    memcpy(a, plan->aw, r * r * sizeof(double));
    if (!iso_method) {
        cblas_dtrsm(CblasColMajor, CblasRight, CblasLower, CblasNoTrans, CblasNonUnit,
                    (int)r, (int)r, 1.0, plan->chol, (int)r, a, (int)r);
        cblas_dtrmm(CblasColMajor, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit,
                    (int)r, (int)r, 1.0, plan->chol, (int)r, a, (int)r);
    }
    if (nu > 0 && b_reduced != NULL) {
        memcpy(b_reduced, plan->bw, r * nu * sizeof(double));
        if (!iso_method)
            cblas_dtrmm(CblasColMajor, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit,
                        (int)r, (int)nu, 1.0 / sqrt((double)m), plan->chol, (int)r,
                        b_reduced, (int)r);
        else
            for (size_t i = 0; i < r * nu; i++)
                b_reduced[i] /= iso;
    }
    if (ambiguous > 0) {
        st = el_warnings_add(warnings,
                             "fb: the square-root branch of %d eigenvalue%s is poorly "
                             "determined (the forward estimate lies nearly as close to "
                             "the other root): the forward-backward estimate of %s is "
                             "unreliable; compare with --method tls",
                             ambiguous, ambiguous == 1 ? "" : "s",
                             ambiguous == 1 ? "that mode" : "those modes");
        if (st != EL_OK)
            return el_error_set(err, st, "out of memory for a warning");
    }
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* --lags auto. */

static el_status scale_columns(const el_series *s, double *mean, double *scale,
                               el_error *err)
{
    size_t n = s->n_samples;
    for (size_t c = 0; c < s->n_channels; c++) {
        double mu, sd;
        if (el_prep_spread(s->values + c * n, n, &mu, &sd) || !isfinite(mu) || !isfinite(sd)) {
            const char *name = s->names != NULL && s->names[c] != NULL ? s->names[c] : "?";
            el_error_set(err, EL_ERR_DATA,
                         "channel '%s' is constant or not finite over the window: it "
                         "has no dynamics", name);
            el_error_hint(err, "leave it out with --channels");
            return EL_ERR_DATA;
        }
        mean[c] = mu;
        scale[c] = sd;
    }
    return EL_OK;
}

/* ln det of the symmetric positive definite nc x nc matrix (lower read) by
 * Cholesky; -INFINITY when it is not positive definite (an exact fit). */
static double log_det_spd(size_t n, double *a)
{
    double ld = 0.0;
    for (size_t j = 0; j < n; j++) {
        double s = a[j + j * n];
        for (size_t k = 0; k < j; k++)
            s -= a[j + k * n] * a[j + k * n];
        if (!(s > 0.0))
            return -INFINITY;
        double l = sqrt(s);
        a[j + j * n] = l;
        ld += 2.0 * log(l);
        for (size_t i = j + 1; i < n; i++) {
            double t = a[i + j * n];
            for (size_t k = 0; k < j; k++)
                t -= a[i + k * n] * a[j + k * n];
            a[i + j * n] = t / l;
        }
    }
    return ld;
}

el_status el_lags_auto(const el_series *series, const el_series *inputs,
                       size_t max_lags, el_lags_choice *choice, el_error *err)
{
    if (series == NULL || choice == NULL || series->values == NULL ||
        series->n_channels == 0 ||
        (inputs != NULL && (inputs->values == NULL ||
                            inputs->n_samples != series->n_samples)))
        return el_error_set(err, EL_ERR_INTERNAL, "el_lags_auto: bad arguments");
    memset(choice, 0, sizeof *choice);
    size_t n = series->n_samples, nc = series->n_channels;
    size_t nu = inputs != NULL ? inputs->n_channels : 0;
    size_t kmax = max_lags > 0 ? max_lags : EL_LAGS_AUTO_MAX;
    /* Ten pairs per coefficient of a row (common practice) for the largest K. */
    while (1) {
        size_t coeff = nc * (kmax + 1) + nu + 1;
        if (n > kmax + 1 && n - kmax - 1 >= 10 * coeff)
            break;
        if (kmax == 0) {
            el_error_set(err, EL_ERR_DATA,
                         "%zu samples are too few to choose a delay depth (ten pairs "
                         "per coefficient are wanted even without lags)", n);
            el_error_hint(err, "use a longer window, or give --lags");
            return EL_ERR_DATA;
        }
        kmax--;
    }
    size_t m = n - kmax - 1, dmax = nc * (kmax + 1), cols = nu + dmax + nc;
    double *mean = malloc((nc + nu + 1) * sizeof(double));
    double *scale = malloc((nc + nu + 1) * sizeof(double));
    double *a = malloc(m * cols * sizeof(double));
    double *tau = malloc(cols * sizeof(double));
    double *s = malloc(nc * nc * sizeof(double));
    double *tot = malloc(nc * sizeof(double));
    el_status st = EL_OK;
    if (!mean || !scale || !a || !tau || !s || !tot) {
        st = el_error_set(err, EL_ERR_NOMEM, "out of memory (--lags auto)");
        goto done;
    }
    if ((st = scale_columns(series, mean, scale, err)) != EL_OK)
        goto done;
    if (inputs != NULL && (st = scale_columns(inputs, mean + nc, scale + nc, err)) != EL_OK)
        goto done;
    /* Columns: inputs at k, x[k-j] for j = 0..K_max, then Y = x[k+1];
     * rows k = K_max .. N-2; every column centred (the intercept). */
    for (size_t col = 0; col < cols; col++) {
        const double *src;
        double mu, inv;
        long shift;
        if (col < nu) {
            src = inputs->values + col * n;
            mu = mean[nc + col];
            inv = 1.0 / scale[nc + col];
            shift = 0;
        } else if (col < nu + dmax) {
            size_t c = (col - nu) % nc, j = (col - nu) / nc;
            src = series->values + c * n;
            mu = mean[c];
            inv = 1.0 / scale[c];
            shift = -(long)j;
        } else {
            size_t c = col - nu - dmax;
            src = series->values + c * n;
            mu = mean[c];
            inv = 1.0 / scale[c];
            shift = 1;
        }
        double *dst = a + col * m, acc = 0.0;
        for (size_t i = 0; i < m; i++) {
            dst[i] = (src[(size_t)((long)(kmax + i) + shift)] - mu) * inv;
            acc += dst[i];
        }
        acc /= (double)m;
        for (size_t i = 0; i < m; i++)
            dst[i] -= acc;
    }
    size_t yc = nu + dmax;
    for (size_t c = 0; c < nc; c++) {
        double acc = 0.0;
        for (size_t i = 0; i < m; i++)
            acc += a[i + (yc + c) * m] * a[i + (yc + c) * m];
        tot[c] = acc;
    }
    lapack_int info = LAPACKE_dgeqrf(LAPACK_COL_MAJOR, (lapack_int)m, (lapack_int)cols, a,
                                     (lapack_int)m, tau);
    if (info != 0) {
        st = el_error_set(err, EL_ERR_NUMERIC, "--lags auto: QR factorisation failed");
        goto done;
    }
    /* Regressing Y on the first j columns leaves the residual cross-product
     * R(j:cols, Y)' R(j:cols, Y) (R upper triangular, Q orthogonal). */
    size_t best = 0;
    double best_bic = INFINITY;
    int exact = 0;
    for (size_t k = 0; k <= kmax && !exact; k++) {
        size_t j0 = nu + nc * (k + 1);
        for (size_t b = 0; b < nc; b++)
            for (size_t c2 = b; c2 < nc; c2++) {
                double acc = 0.0;
                for (size_t i = j0; i < cols && i <= yc + c2; i++)
                    acc += a[i + (yc + c2) * m] * (i <= yc + b ? a[i + (yc + b) * m] : 0.0);
                s[c2 + b * nc] = acc;
            }
        int all_tiny = 1;
        for (size_t c = 0; c < nc; c++)
            if (!(s[c + c * nc] <= 1e-20 * tot[c]))
                all_tiny = 0;
        if (all_tiny) {
            best = k;
            exact = 1;
            break;
        }
        for (size_t i = 0; i < nc * nc; i++)
            s[i] /= (double)m;
        double ld = log_det_spd(nc, s);
        double p = (double)nc * (double)(nc * (k + 1) + nu + 1);
        double bic = (double)m * ld + p * log((double)m);
        if (bic < best_bic) {
            best_bic = bic;
            best = k;
        }
    }
    choice->lags = best;
    choice->max_lags = kmax;
    choice->n_pairs = m;
    choice->exact = exact;
    choice->bic = exact ? NAN : best_bic;
    if (exact)
        snprintf(choice->reason, sizeof choice->reason,
                 "lags %zu: the smallest delay depth whose least-squares delay model "
                 "fits the %zu pairs to rounding (noise-free data)", best, m);
    else
        snprintf(choice->reason, sizeof choice->reason,
                 "lags %zu: smallest Bayesian information criterion (Schwarz 1978) of "
                 "the one-step least-squares residuals over 0..%zu lags (the same %zu "
                 "pairs for each)", best, kmax, m);
done:
    free(mean);
    free(scale);
    free(a);
    free(tau);
    free(s);
    free(tot);
    return st;
}

/* ------------------------------------------------------------------ */
/* ssi on an exact covariance sequence. */

/* E[x[k-h1] x[k-h2]'] = R_{h2-h1} (transposed when h2 < h1), written at
 * out (nc x nc block, leading dimension ld). */
static void cov_block(size_t nc, const double *cov, long h1, long h2, double *out,
                      size_t ld)
{
    long lag = h2 - h1;
    const double *rj = cov + (size_t)(lag >= 0 ? lag : -lag) * nc * nc;
    for (size_t j = 0; j < nc; j++)
        for (size_t i = 0; i < nc; i++)
            out[i + j * ld] = lag >= 0 ? rj[i + j * nc] : rj[j + i * nc];
}

el_status el_ssi_covariance(size_t n_channels, size_t n_cov, const double *cov,
                            size_t lags, size_t depth, size_t order, double *mu_re,
                            double *mu_im, el_error *err)
{
    size_t nc = n_channels, d = nc * (lags + 1), q = nc * depth;
    if (cov == NULL || mu_re == NULL || mu_im == NULL || nc == 0 || depth == 0 ||
        order == 0 || order > d || order > q || n_cov < 3 * lags + 4 ||
        n_cov < lags + depth + 1)
        return el_error_set(err, EL_ERR_INTERNAL, "el_ssi_covariance: bad sizes");
    size_t cols = d + q, dim = 4 * order;
    double *gram = malloc(cols * cols * sizeof(double));
    double *rho = malloc((d < q ? d : q) * sizeof(double));
    double *basis = malloc(d * order * sizeof(double));
    double *s1w = malloc(s1_work_size(d, q, 0) * sizeof(double));
    double *zz = malloc(4 * d * 4 * d * sizeof(double));
    double *vv = malloc(dim * dim * sizeof(double));
    double *tmp = malloc(4 * d * dim * sizeof(double));
    double *a = malloc(order * order * sizeof(double));
    double *cw = malloc(ssi_core_work(order) * sizeof(double));
    el_status st = EL_OK;
    if (!gram || !rho || !basis || !s1w || !zz || !vv || !tmp || !a || !cw) {
        st = el_error_set(err, EL_ERR_NOMEM, "out of memory (ssi covariance)");
        goto done;
    }
    /* The Gram of x[k], ..., x[k-K-depth]: block Toeplitz of R. */
    for (size_t bj = 0; bj < lags + 1 + depth; bj++)
        for (size_t bi = 0; bi < lags + 1 + depth; bi++)
            cov_block(nc, cov, (long)bi, (long)bj, gram + bi * nc + bj * nc * cols, cols);
    s1_result res;
    if (s1_from_gram(d, q, gram, NULL, 0, lags, (long)order, rho, basis, &res, s1w) ||
        res.rank != order) {
        st = el_error_set(err, EL_ERR_NUMERIC,
                          "ssi: the state-past covariance has rank %zu, below the "
                          "order %zu", res.rank, order);
        goto done;
    }
    /* Window [z[k]; z[k+1]; z[k-K-1]; z[k-2K-2]]: z[k - o] for
     * o = 0, -1, K+1, 2K+2, each K+1 blocks of x at lags o .. o+K. */
    long offs[4] = {0, -1, (long)lags + 1, 2 * (long)lags + 2};
    size_t d4 = 4 * d;
    for (size_t wj = 0; wj < 4; wj++)
        for (size_t bj = 0; bj <= lags; bj++)
            for (size_t wi = 0; wi < 4; wi++)
                for (size_t bi = 0; bi <= lags; bi++)
                    cov_block(nc, cov, offs[wi] + (long)bi, offs[wj] + (long)bj,
                              zz + (wi * d + bi * nc) + (wj * d + bj * nc) * d4, d4);
    /* vv = (I4 kron B)' zz (I4 kron B). */
    for (size_t wj = 0; wj < 4; wj++)
        for (size_t wi = 0; wi < 4; wi++) {
            gemm(0, 0, d, order, d, zz + wi * d + wj * d * d4, d4, basis, d, tmp, d);
            gemm(1, 0, order, order, d, basis, d, tmp, d,
                 vv + wi * order + wj * order * dim, dim);
        }
    if (ssi_core(order, vv, dim, a, cw)) {
        st = el_error_set(err, EL_ERR_NUMERIC, "ssi: the reduced realisation is singular");
        goto done;
    }
    lapack_int info = LAPACKE_dgeev(LAPACK_COL_MAJOR, 'N', 'N', (lapack_int)order, a,
                                    (lapack_int)order, mu_re, mu_im, NULL, 1, NULL, 1);
    if (info != 0)
        st = el_error_set(err, EL_ERR_NUMERIC, "ssi: the eigenvalue solver failed");
done:
    free(gram);
    free(rho);
    free(basis);
    free(s1w);
    free(zz);
    free(vv);
    free(tmp);
    free(a);
    free(cw);
    return st;
}
