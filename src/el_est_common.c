/* el_est_common: what the estimators other than least squares share
 * (docs/method-estimators.md): small dense linear algebra, the window
 * vectors and their additive features for the bootstrap providers, the
 * reduced states, step 1 (basis and rank from the canonical correlations
 * of the state with the past measurements) and step 2 (the reduced system
 * matrix through an estimator's core). Knows no estimator by name: each
 * passes its core (el_est_core). */
#include <complex.h>

#include "el_est_common.h"

#include "el_reduced.h"

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

/* Smallest reciprocal condition number (LAPACK's 1-norm estimate) at
 * which el_est_sym_inverse_chol inverts: the 2-norm condition of a
 * symmetric matrix is at most its 1-norm condition, and the estimate is
 * within a small factor of the true value (rarely 10; Higham 2002,
 * "Accuracy and Stability of Numerical Algorithms", ch. 15, recalled from
 * memory), so 1e-7 keeps every eigenvalue a thousand times above the
 * pseudo-inverse's cut EST_PINV_TOL: the inverse is then the
 * pseudo-inverse. */
#define EST_CHOL_RCOND 1e-7

/* Upper 0.001 quantile of the standard normal (recalled from memory,
 * 3.0902323; checked against scipy in the tests through the chi-square
 * quantile): Bartlett's test of the canonical correlations runs at level
 * 0.001, so that a noise direction is kept in about 1 fit in 1000. */
#define EST_BARTLETT_Z 3.090232306167813

/* A canonical correlation below this is zero to working precision (the
 * pseudo-inverse weights leave exactly dependent directions near 1e-8 or
 * below). */
#define EST_RHO_NUMERICAL 1e-6

/* Rows of window vectors centred and multiplied at a time (bounded scratch
 * whatever the log length). */
#define EST_CHUNK 256

/* Rows of the instrument step's chunk when its rows are not kept (lags
 * 0): 4096 rows of a few dozen columns stay in the cache and make
 * products large enough for the BLAS kernels. */
#define S1_CHUNK 4096

/* ------------------------------------------------------------------ */
/* Small dense helpers (column-major). */

double *el_est_take(double **pool, size_t n)
{
    double *p = *pool;
    *pool += n;
    return p;
}

/* Solves A X = B in place by Gaussian elimination, row swaps applied to A
 * and B together (no pivot array, so the provider work stays all doubles).
 * A (n x n) is destroyed, B (n x k) receives X. Returns 1 when a pivot is
 * at rounding level of the largest entry or the solution is not finite. */
/* Partial pivoting: the row at or below j with the largest |a(i, j)| (the
 * first of equals, so the choice does not depend on the BLAS kernel). */
static size_t pivot_row(size_t n, const double *a, size_t lda, size_t j, double *best)
{
    size_t p = j;
    *best = fabs(a[j + j * lda]);
    for (size_t i = j + 1; i < n; i++)
        if (fabs(a[i + j * lda]) > *best) {
            *best = fabs(a[i + j * lda]);
            p = i;
        }
    return p;
}

/* el_est_gauss_solve from order EL_EST_WIDE_GAUSS: the same elimination
 * and pivots, each step's update a BLAS rank-one update and the back
 * substitution one triangular solve (BLAS), several times faster at
 * n = 200 (the same solution to rounding). */
static int gauss_solve_wide(size_t n, double *a, size_t lda, double *b, size_t ldb,
                            size_t k, double tiny)
{
    for (size_t j = 0; j < n; j++) {
        double best;
        size_t p = pivot_row(n, a, lda, j, &best);
        if (!(best > tiny))
            return 1;
        if (p != j) {
            cblas_dswap((int)n, a + j, (int)lda, a + p, (int)lda);
            if (k > 0)
                cblas_dswap((int)k, b + j, (int)ldb, b + p, (int)ldb);
        }
        size_t below = n - j - 1;
        if (below == 0)
            continue;
        double *f = a + (j + 1) + j * lda;
        cblas_dscal((int)below, 1.0 / a[j + j * lda], f, 1);
        cblas_dger(CblasColMajor, (int)below, (int)below, -1.0, f, 1, a + j + (j + 1) * lda,
                   (int)lda, a + (j + 1) + (j + 1) * lda, (int)lda);
        if (k > 0)
            cblas_dger(CblasColMajor, (int)below, (int)k, -1.0, f, 1, b + j, (int)ldb,
                       b + j + 1, (int)ldb);
    }
    if (k > 0)
        cblas_dtrsm(CblasColMajor, CblasLeft, CblasUpper, CblasNoTrans, CblasNonUnit, (int)n,
                    (int)k, 1.0, a, (int)lda, b, (int)ldb);
    for (size_t c = 0; c < k; c++)
        for (size_t i = 0; i < n; i++)
            if (!isfinite(b[i + c * ldb]))
                return 1;
    return 0;
}

int el_est_gauss_solve(size_t n, double *a, size_t lda, double *b, size_t ldb,
                       size_t k)
{
    double amax = 0.0;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            amax = fmax(amax, fabs(a[i + j * lda]));
    if (!(amax > 0.0) || !isfinite(amax))
        return 1;
    double tiny = (double)n * DBL_EPSILON * amax;
    if (n >= EL_EST_WIDE_GAUSS)
        return gauss_solve_wide(n, a, lda, b, ldb, k, tiny);
    for (size_t j = 0; j < n; j++) {
        double best;
        size_t p = pivot_row(n, a, lda, j, &best);
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
        /* The multipliers go where column j's eliminated entries were
         * (never read again), then each column is updated down its
         * contiguous length: the same operations on every entry in the
         * same order as row by row (the same bits), but along memory, not
         * across it (5x faster at n = 200). */
        double piv = a[j + j * lda];
        double *f = a + j * lda;
        for (size_t i = j + 1; i < n; i++)
            f[i] = f[i] / piv;
        for (size_t c = j + 1; c < n; c++) {
            double *ac = a + c * lda, ajc = ac[j];
            for (size_t i = j + 1; i < n; i++)
                if (f[i] != 0.0)
                    ac[i] -= f[i] * ajc;
        }
        for (size_t c = 0; c < k; c++) {
            double *bc = b + c * ldb, bjc = bc[j];
            for (size_t i = j + 1; i < n; i++)
                if (f[i] != 0.0)
                    bc[i] -= f[i] * bjc;
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
int el_est_right_solve(size_t n, size_t k, const double *a, size_t lda,
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
    if (el_est_gauss_solve(n, at, n, bt, n, k))
        return 1;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < k; i++)
            x[i + j * ldx] = bt[j + i * n];
    return 0;
}

size_t el_est_sym_fun_work(size_t n)
{
    return n * n + 4 * n + 1;
}

/* Eigenvectors v (n x n) and ascending eigenvalues lam (n) of the
 * symmetric s (lower triangle, leading dimension lds); lw: 3 n + 1
 * doubles. Returns 0, or 1 when LAPACK fails. */
int el_est_sym_eig(size_t n, const double *s, size_t lds, double *v, double *lam, double *lw)
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
int el_est_sym_inverse_chol(size_t n, const double *s, size_t lds, double *out,
                            size_t ldo, double *work)
{
    if (n == 0)
        return 0;
    double anorm = 0.0;
    for (size_t j = 0; j < n; j++) {
        /* 1-norm of the symmetric S from its lower triangle: column j is
         * s[j.., j] below and s[j, ..j] (row j) above the diagonal. */
        double col = 0.0;
        for (size_t i = 0; i < j; i++)
            col += fabs(s[j + i * lds]);
        for (size_t i = j; i < n; i++) {
            col += fabs(s[i + j * lds]);
            out[i + j * ldo] = s[i + j * lds];
        }
        anorm = fmax(anorm, col);
    }
    if (!(anorm > 0.0) || !isfinite(anorm))
        return 0;
    lapack_int info = LAPACKE_dpotrf_work(LAPACK_COL_MAJOR, 'L', (lapack_int)n, out,
                                          (lapack_int)ldo);
    if (info != 0)
        return 0;
    double rcond = 0.0;
    lapack_int *iw = (lapack_int *)(work + 3 * n);
    info = LAPACKE_dpocon_work(LAPACK_COL_MAJOR, 'L', (lapack_int)n, out, (lapack_int)ldo,
                               anorm, &rcond, work, iw);
    if (info != 0 || !(rcond >= EST_CHOL_RCOND))
        return 0;
    info = LAPACKE_dpotri_work(LAPACK_COL_MAJOR, 'L', (lapack_int)n, out, (lapack_int)ldo);
    if (info != 0)
        return 0;
    for (size_t j = 0; j < n; j++)
        for (size_t i = j + 1; i < n; i++) {
            if (!isfinite(out[i + j * ldo]))
                return 0;
            out[j + i * ldo] = out[i + j * ldo];
        }
    return (int)n;
}

int el_est_sym_fun(size_t n, const double *s, size_t lds, double power, double *out,
                   size_t ldo, double *work)
{
    /* Wide states: the inverse by Cholesky (n^3 / 3 flops in blocked
     * BLAS) instead of the eigenvectors (dsyev's QR sweeps, 30x slower at
     * n = 400), when it is well conditioned enough that the
     * pseudo-inverse would keep every eigenvalue (then both are the
     * inverse; el_est_sym_inverse_chol). Below EL_EST_WIDE_ORDER the
     * eigenvector path stays, bit for bit as before. */
    if (power == -1.0 && n >= EL_EST_WIDE_ORDER
        && el_est_sym_inverse_chol(n, s, lds, out, ldo, work) == (int)n)
        return (int)n;
    double *v = work, *lam = v + n * n, *lw = lam + n;
    if (el_est_sym_eig(n, s, lds, v, lam, lw))
        return -1;
    return el_est_sym_fun_from_eig(n, v, lam, power, out, ldo);
}

int el_est_sym_fun_from_eig(size_t n, const double *v, const double *lam, double power,
                            double *out, size_t ldo)
{
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
void el_est_gemm(int ta, int tb, size_t m, size_t n, size_t k, const double *a,
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

size_t el_est_nf_of(size_t dim)
{
    return 1 + dim + dim * (dim + 1) / 2;
}

/* out[1..dim] must already hold v. */
void el_est_gram_products(size_t dim, double *out)
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
double el_est_unpack_cov(size_t dim, const double *sum, double *mean, double *cov)
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
void el_est_win_vector(size_t r, size_t sw, size_t lags, const double *st, double *v)
{
    /* Plain loops, not memcpy: r is a few doubles and this runs for every
     * window of the fit (a library call per run cost more than the copy). */
    const double *x = st + (2 * lags + 2) * sw, *y = st + (2 * lags + 3) * sw;
    const double *z1 = st + (lags + 1) * sw;
    for (size_t i = 0; i < r; i++) {
        v[i] = x[i];
        v[r + i] = y[i];
        v[2 * r + i] = z1[i];
        v[3 * r + i] = st[i];
    }
}

/* c = mean(y) - A mean(x) - B mean(u) (B, u absent when nu == 0). */
void el_est_offset_from(size_t r, size_t nu, const double *mean_x,
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
/* Providers for the bootstrap engine (el_boot_engine.h; the provider type is in el_estimator.h). fb, tls and ssi
 * take no inputs (dims->n_inputs is 0 for their models); iv appends the
 * input values of the sample of x to its window vector, as the point fit
 * does (point_window). */

size_t el_est_pair_span(const el_boot_dims *dims)
{
    (void)dims;
    return 2;
}

size_t el_est_win_span(const el_boot_dims *dims)
{
    return 2 * dims->lags + 4;
}

size_t el_est_pair_nf(const el_boot_dims *dims)
{
    return el_est_nf_of(2 * dims->r);
}

size_t el_est_win_nf(const el_boot_dims *dims)
{
    return el_est_nf_of(4 * dims->r + dims->n_inputs);
}

void el_est_pair_features(const el_boot_dims *dims, const double *states, double *out)
{
    memcpy(out + 1, states, 2 * dims->r * sizeof(double));
    el_est_gram_products(2 * dims->r, out);
}

static void window_gather_iv(const el_boot_dims *dims, const double *states, double *v);

void el_est_window_features(const el_boot_dims *dims, const double *states, double *out)
{
    window_gather_iv(dims, states, out + 1);
    el_est_gram_products(4 * dims->r + dims->n_inputs, out);
}

/* Windows gathered per product in the providers' accumulate. */
#define EST_ACC_RUN 64

/* Doubles of scratch gram_accumulate needs for window vectors of dim. */
size_t el_est_gram_work(size_t dim)
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
    el_est_win_vector(r, sw, dims->lags, states, v);
    memcpy(v + 4 * r, states + (2 * dims->lags + 2) * sw + r, nu * sizeof(double));
}

void el_est_pair_accumulate(const el_boot_dims *dims, const double *states, size_t n,
                            double *acc, double *work)
{
    gram_accumulate(dims, 2 * dims->r, pair_gather, states, n, acc, work);
}

void el_est_window_accumulate(const el_boot_dims *dims, const double *states, size_t n,
                              double *acc, double *work)
{
    gram_accumulate(dims, 4 * dims->r + dims->n_inputs, window_gather_iv, states, n, acc,
                    work);
}

size_t el_est_pair_work(size_t r)
{
    return 2 * r + 4 * r * r;
}

/* The engine's sums need at least a few more windows than unknowns per
 * row before a replicate means anything. */
int el_est_too_few(double n, size_t dim)
{
    return !(n >= (double)(dim + 2));
}

/* The core of an estimator without inputs: cov holds the centred
 * cross-products (ld x ld) of its window vector; writes a (r x r). */
typedef int (*el_est_plain_core)(size_t r, const double *cov, size_t ld, double *a, double *work);

/* Shared solve of fb, tls and ssi: unpack the summed features of a window
 * vector of dim_per_r * r numbers, run the core, add the intercept. */
int el_est_solve_plain(const el_boot_dims *dims, size_t dim_per_r, el_est_plain_core core,
                       const double *sum, double *a, double *offset, double *work)
{
    size_t r = dims->r, dim = dim_per_r * r;
    double *mean = work, *cov = work + dim;
    if (el_est_too_few(sum[0], dim))
        return 1;
    el_est_unpack_cov(dim, sum, mean, cov);
    if (core(r, cov, dim, a, cov + dim * dim))
        return 1;
    if (offset != NULL)
        el_est_offset_from(r, 0, mean, mean + r, NULL, a, NULL, offset);
    return 0;
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
    /* p[t] = U_r'(z[K+t] - zbar) and G = sum p p' (el_reduced: the same
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

/* el_estimator_boot_states with the whitening (isotropic = 0) or the
 * scalar scale (isotropic = 1). */
static el_status boot_states(const el_series *series, const el_series *inputs,
                             const el_model *model, int isotropic, double **states,
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
        st = build_states(series, model, isotropic, w, chol, &iso, err);
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
    const el_est_core *core;    /* the estimator's step 2 */
    size_t n_samples, n_channels, n_inputs, lags, depth, state_dim, n_pairs;
    size_t s1_rows, s1_q;       /* instrument step: rows k = K+depth..N-1, past dim */
    double *s1_data;            /* s1_data_rows x (d + q): a chunk of at most
                                   S1_CHUNK rows (the Gram is summed chunk by chunk) */
    size_t s1_data_rows;
    double *s1_colmean;         /* d + q: the columns' means */
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

size_t el_est_s1_work_size(size_t d, size_t q, size_t rows)
{
    size_t mx = d > q ? d : q, mn = d < q ? d : q;
    return d * d + q * q + 3 * d * q + 2 * mn + 2 * d * mn + mn * q + el_est_sym_fun_work(mx) +
           (5 * (d + q) + 8) + d + q + 2 * rows;
}

void el_est_plan_destroy(el_est_plan *plan)
{
    if (plan == NULL)
        return;
    free(plan->s1_data);
    free(plan->s1_colmean);
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


static el_status check_est_options(const el_est_core *core,
                                   const el_fit_options *opt, size_t n_samples,
                                   size_t n_channels, size_t n_inputs, size_t *depth,
                                   el_error *err)
{
    if (n_inputs > 0 && !core->takes_inputs) {
        el_error_set(err, EL_ERR_USAGE,
                     "--method %s does not take measured inputs", core->name);
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
    int optional = !core->instrument;
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
                     core->name, lags + dep, rows, d, q, windows, d);
        if (opt->depth > 0)
            el_error_option(err, "--depth");
        el_error_hint(err, "use a longer window (--from/--to), fewer lags, a smaller "
                           "--depth, or --method ls");
        return opt->depth > 0 ? EL_ERR_USAGE : EL_ERR_DATA;
    }
    *depth = dep;
    return EL_OK;
}

el_status el_est_plan_create(const el_est_core *core,
                             const el_fit_options *opt, size_t n_samples,
                             size_t n_channels, size_t n_inputs, el_est_plan **out,
                             el_error *err)
{
    if (out == NULL || core == NULL || opt == NULL || n_channels == 0 || n_samples < opt->lags + 3)
        return el_error_set(err, EL_ERR_INTERNAL, "el_est_plan_create: bad arguments");
    *out = NULL;
    size_t depth = 0;
    el_status st = check_est_options(core, opt, n_samples, n_channels, n_inputs, &depth, err);
    if (st != EL_OK)
        return st;
    el_est_plan *p = calloc(1, sizeof *p);
    if (p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    p->core = core;
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
        /* The rows are made a chunk at a time, for the Gram and again for
         * the rank test of a delay state (lags > 0), which keeps only two
         * projections of them (keep doubles each): no matrix of the
         * window's length, which was 2 (K + 1) times the series. */
        size_t keep = opt->lags > 0 ? p->s1_rows : 0;
        p->s1_data_rows = p->s1_rows < S1_CHUNK ? p->s1_rows : S1_CHUNK;
        p->s1_data = malloc(p->s1_data_rows * cols * sizeof(double));
        p->s1_colmean = malloc(cols * sizeof(double));
        p->s1_gram = malloc(cols * cols * sizeof(double));
        p->s1_work = malloc(el_est_s1_work_size(d, p->s1_q, keep) * sizeof(double));
        ok = p->s1_data && p->s1_colmean && p->s1_gram && p->s1_work;
    }
    p->dim_max = core->instrument ? 4 * d + n_inputs : 2 * d;
    size_t work = core->core_work(d, n_inputs);
    size_t dm = p->dim_max, nu = n_inputs;
    p->states = malloc((m + 1) * d * sizeof(double));
    p->chol = malloc(d * d * sizeof(double));
    p->vbuf = malloc(EST_CHUNK * dm * sizeof(double));
    p->mean = malloc(dm * sizeof(double));
    p->cov = malloc(dm * dm * sizeof(double));
    p->core_work = malloc(work * sizeof(double));
    p->aw = malloc(d * d * sizeof(double));
    p->bw = malloc((d * nu + 1) * sizeof(double));
    p->row = malloc(dm * sizeof(double));
    if (!ok || !p->states || !p->chol || !p->vbuf || !p->mean || !p->cov ||
        !p->core_work || !p->aw || !p->bw || !p->row) {
        el_est_plan_destroy(p);
        return el_error_set(err, EL_ERR_NOMEM,
                            "out of memory for the %s estimator (%zu states)",
                            core->name, d);
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
 * work: el_est_s1_work_size(d, q, rows). Returns 0, or 1 when LAPACK fails. */
/* The rows behind a Gram made on demand: project writes us = Z av and
 * vs = P cp (rows each) for the state part Z and past part P of the
 * centred rows. */
typedef struct {
    void (*project)(void *ctx, const double *av, const double *cp, double *us, double *vs);
    void *ctx;
} s1_rows;

static int s1_core(size_t d, size_t q, const double *gram, const double *data,
                   const s1_rows *src, size_t rows, size_t lags, long rank_opt, double *rho,
                   double *basis, el_est_s1_result *res, double *work);

int el_est_s1_from_gram(size_t d, size_t q, const double *gram, const double *data,
                         size_t rows, size_t lags, long rank_opt, double *rho,
                        double *basis, el_est_s1_result *res, double *work)
{
    return s1_core(d, q, gram, data, NULL, rows, lags, rank_opt, rho, basis, res, work);
}

static int s1_core(size_t d, size_t q, const double *gram, const double *data,
                   const s1_rows *src, size_t rows, size_t lags, long rank_opt, double *rho,
                   double *basis, el_est_s1_result *res, double *work)
{
    size_t ld = d + q, mn = d < q ? d : q, mx = d > q ? d : q;
    double *pool = work;
    double *wz = el_est_take(&pool, d * d), *wp = el_est_take(&pool, q * q);
    double *t = el_est_take(&pool, d * q), *kc = el_est_take(&pool, d * q);
    double *sv = el_est_take(&pool, mn), *u = el_est_take(&pool, d * mn);
    double *ucan = el_est_take(&pool, d * mn), *vtcan = el_est_take(&pool, mn * q);
    double *fval = el_est_take(&pool, mn);
    double *cp = el_est_take(&pool, d * q), *sw = el_est_take(&pool, el_est_sym_fun_work(mx));
    double *svw = el_est_take(&pool, 5 * (d + q) + 8);
    double *av = el_est_take(&pool, d), *bv = el_est_take(&pool, q);
    /* the rank test's canonical variates: only with the rows themselves */
    int have_rows = data != NULL || src != NULL;
    double *us = have_rows ? el_est_take(&pool, rows) : NULL;
    double *vs = have_rows ? el_est_take(&pool, rows) : NULL;
    int rz = el_est_sym_fun(d, gram, ld, -0.5, wz, d, sw);
    int rp = el_est_sym_fun(q, gram + d + d * ld, ld, -0.5, wp, q, sw);
    if (rz < 0 || rp < 0)
        return 1;
    el_est_gemm(0, 0, d, q, q, gram + d * ld, ld, wp, q, t, d);   /* t = Szp Wp */
    el_est_gemm(0, 0, d, q, d, wz, d, t, d, kc, d);               /* kc = Wz Szp Wp */
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
    if (have_rows && lags > 0 && num > 0 && rows > lags + 2) {
        size_t nf = 0;
        double acu[EL_EST_PROVIDER_MAX_LAGS + 2], acv[EL_EST_PROVIDER_MAX_LAGS + 2];
        size_t hmax = lags <= EL_EST_PROVIDER_MAX_LAGS ? lags : EL_EST_PROVIDER_MAX_LAGS;
        for (size_t j = num / 2; j < num; j++) {
            el_est_gemm(0, 0, d, 1, d, wz, d, ucan + j * d, d, av, d);
            for (size_t i = 0; i < q; i++)
                bv[i] = vtcan[j + i * mn];
            el_est_gemm(0, 0, q, 1, q, wp, q, bv, q, cp, q);
            if (src != NULL) {
                src->project(src->ctx, av, cp, us, vs);
            } else {
                el_est_gemm(0, 0, rows, 1, d, data, rows, av, d, us, rows);
                el_est_gemm(0, 0, rows, 1, q, data + d * rows, rows, cp, q, vs, rows);
            }
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

/* Centred rows i0 .. i0 + len - 1 of the instrument step into s1_data
 * (len x (d + q), column-major). Row i is sample k = K + depth + i: the
 * state lags 0..K, then the past x[k-K-1] .. x[k-K-depth]. */
static void s1_fill(el_est_plan *plan, const el_series *series, const el_model *model,
                    size_t i0, size_t len)
{
    size_t nn = plan->n_samples, nc = plan->n_channels, lags = plan->lags;
    size_t d = plan->state_dim, cols = d + plan->s1_q, dep = plan->depth;
    for (size_t col = 0; col < cols; col++) {
        size_t back = col < d ? col / nc : lags + 1 + (col - d) / nc;
        size_t c = col % nc;
        double mean = model->channel_mean[c], inv = 1.0 / model->channel_scale[c];
        double cm = plan->s1_colmean[col];
        const double *src = series->values + c * nn + lags + dep - back + i0;
        double *dst = plan->s1_data + col * len;
        for (size_t i = 0; i < len; i++)
            dst[i] = (src[i] - mean) * inv - cm;
    }
}

typedef struct {
    el_est_plan *plan;
    const el_series *series;
    const el_model *model;
} s1_ctx;

/* s1_rows.project: the rows made again a chunk at a time. */
static void s1_project(void *ctx, const double *av, const double *cp, double *us,
                       double *vs)
{
    s1_ctx *x = ctx;
    el_est_plan *plan = x->plan;
    size_t rows = plan->s1_rows, chunk = plan->s1_data_rows, d = plan->state_dim;
    size_t q = plan->s1_q;
    for (size_t i0 = 0; i0 < rows; i0 += chunk) {
        size_t len = rows - i0 < chunk ? rows - i0 : chunk;
        s1_fill(plan, x->series, x->model, i0, len);
        el_est_gemm(0, 0, len, 1, d, plan->s1_data, len, av, d, us + i0, rows);
        el_est_gemm(0, 0, len, 1, q, plan->s1_data + d * len, len, cp, q, vs + i0, rows);
    }
}

/* Step 1 proper: the rows, their Gram, the canonical correlations, the
 * rank (and the basis into model->basis). The columns' means first (the
 * same sums as over stored rows), then the centred rows a chunk at a
 * time, their Gram summed chunk by chunk; the rank test makes the rows
 * again (s1_project) instead of keeping them. */
static el_status stage1_run(el_est_plan *plan, const el_series *series, long rank_opt,
                            el_model *model, el_est_s1_result *res, el_error *err)
{
    size_t nn = plan->n_samples, nc = plan->n_channels, lags = plan->lags;
    size_t d = plan->state_dim, q = plan->s1_q, rows = plan->s1_rows, dep = plan->depth;
    size_t cols = d + q;
    const double *x = series->values;
    for (size_t col = 0; col < cols; col++) {
        size_t back = col < d ? col / nc : lags + 1 + (col - d) / nc;
        size_t c = col % nc;
        double mean = model->channel_mean[c], inv = 1.0 / model->channel_scale[c];
        const double *src = x + c * nn + lags + dep - back;
        double acc = 0.0;
        for (size_t i = 0; i < rows; i++)
            acc += (src[i] - mean) * inv;
        plan->s1_colmean[col] = acc / (double)rows;
    }
    size_t chunk = plan->s1_data_rows;
    for (size_t i0 = 0; i0 < rows; i0 += chunk) {
        size_t len = rows - i0 < chunk ? rows - i0 : chunk;
        s1_fill(plan, series, model, i0, len);
        cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, (int)cols, (int)len, 1.0,
                    plan->s1_data, (int)len, i0 == 0 ? 0.0 : 1.0, plan->s1_gram, (int)cols);
    }
    for (size_t j = 0; j < cols; j++)
        for (size_t i = 0; i < j; i++)
            plan->s1_gram[i + j * cols] = plan->s1_gram[j + i * cols];
    s1_ctx ctx = {plan, series, model};
    s1_rows src = {s1_project, &ctx};
    if (s1_core(d, q, plan->s1_gram, NULL, lags > 0 ? &src : NULL, rows, lags, rank_opt,
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
                     plan->core->name, lags + 1,
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
        !plan->core->instrument || plan->depth == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "el_est_instrument_basis: bad arguments");
    size_t d = plan->state_dim;
    /* --rank full given: every state, as if that rank had been asked; the
     * test still runs and a warning says when it supports fewer. */
    int all = rank_opt == EL_RANK_ALL;
    if (all)
        rank_opt = (long)d;
    el_est_s1_result res;
    el_status st = stage1_run(plan, series, rank_opt, model, &res, err);
    if (st != EL_OK)
        return st;
    model->rank_was_auto = rank_opt <= 0;
    model->rank = res.rank;
    model->tested_rank = res.test_rank;
    if (rank_opt <= 0 && res.rank < d)
        st = el_warnings_add(warnings,
                             "%s: the past measurements predict %zu of the %zu state "
                             "directions (canonical correlations %.3g down to %.3g; "
                             "tested at 0.1%% on %.0f effective rows): rank %zu, the "
                             "other directions are treated as noise",
                             plan->core->name, res.rank, d,
                             model->canonical_corr[0],
                             model->canonical_corr[res.rank - 1],
                             (double)plan->s1_rows / res.inflation, res.rank);
    else if (res.lowered)
        st = el_warnings_add(warnings,
                             "%s: only %zu canonical correlations of the state with the "
                             "past are above rounding: rank lowered from %ld to %zu",
                             plan->core->name, res.numeric_rank, rank_opt,
                             res.rank);
    else if (all && res.rank > res.test_rank)
        st = el_warnings_add(warnings,
                             "%s: every state kept as --rank full asks (rank %zu), but the "
                             "rank test of the canonical correlations supports only %zu "
                             "(tested at 0.1%%): the other directions are poorly "
                             "determined and their eigenvalues may describe noise; leave "
                             "--rank out for the tested rank",
                             plan->core->name, res.rank, res.test_rank);
    else if (rank_opt > 0 && res.rank > res.test_rank)
        st = el_warnings_add(warnings,
                             "%s: rank %zu asked, but only %zu directions are predicted "
                             "by the past measurements significantly (tested at 0.1%%): "
                             "the others are poorly determined",
                             plan->core->name, res.rank, res.test_rank);
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
    el_est_s1_result res;
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
    if (p->core->instrument) {
        el_est_win_vector(r, r, p->lags, states + u * r, v);
        sample = p->lags + u + 2 * p->lags + 2;
        for (size_t j = 0; j < nu; j++)
            v[4 * r + j] = (inputs->values[j * p->n_samples + sample] -
                            mdl->input_mean[j]) / mdl->input_scale[j];
    } else {
        const double *st = states + u * r;
        for (size_t i = 0; i < 2 * r; i++)
            v[i] = st[i];
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
    int iso_method = plan->core->isotropic;
    double iso = 1.0;
    el_status st = build_states(series, model, iso_method, plan->states, plan->chol, &iso,
                                err);
    if (st != EL_OK)
        return st;
    size_t dim, n_win;
    if (plan->core->instrument) {
        dim = 4 * r + nu;
        n_win = m + 1 - (2 * lags + 4) + 1;
    } else {
        dim = 2 * r;
        n_win = m;
    }
    window_moments(plan, r, dim, n_win, inputs, model);
    int ambiguous = 0;
    int code = plan->core->core(r, nu, plan->cov, dim, plan->aw, plan->bw,
                                plan->core_work, &ambiguous);
    if (code != 0)
        return plan->core->failure(code, err);
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
el_status el_est_boot_states(const el_series *series, const el_series *inputs,
                             const el_model *model, double **states, size_t *n_states,
                             el_error *err)
{
    return boot_states(series, inputs, model, 0, states, n_states, err);
}

el_status el_est_boot_states_isotropic(const el_series *series, const el_series *inputs,
                                       const el_model *model, double **states,
                                       size_t *n_states, el_error *err)
{
    return boot_states(series, inputs, model, 1, states, n_states, err);
}

el_status el_est_instrument_fit(el_fit_plan *plan, const el_series *series,
                                const el_series *inputs, el_model *model,
                                int zero_offset, el_warnings *warnings, el_error *err)
{
    el_status st = el_est_instrument_basis(plan->est, series, plan->rank_opt, model,
                                           warnings, err);
    if (st != EL_OK)
        return st;
    st = el_est_reduced_fit(plan->est, series, inputs, model, plan->bred, warnings, err);
    if (st == EL_OK)
        el_fit_projected_model(plan, model, zero_offset);
    return st;
}

void el_est_plan_destroy_state(void *state)
{
    el_est_plan_destroy(state);
}
