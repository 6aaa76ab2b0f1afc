/* el_eig: eigenvalues of small real matrices by balancing, Householder
 * Hessenberg reduction and Francis double-shift QR, allocation-free. */
#include "el_eig.h"

#include <float.h>
#include <math.h>

/* Relative spacing of doubles: a subdiagonal entry this small against its
 * diagonal neighbours is below the rounding already committed there. */
#define EIG_EPS DBL_EPSILON

/* The whole matrix is rescaled by a power of two when its largest entry
 * lies outside [2^-300, 2^300], onto the nearer end of that range: the QR
 * step forms products of two entries, which must neither overflow nor
 * underflow, and moving no further than needed keeps the small entries
 * out of the subnormal range. */
#define EIG_RANGE_EXP 300

/* Balancing factors stay within [2^-500, 2^500] so that no scaled entry
 * can overflow even for a column whose norm is barely above zero. */
#define EIG_BAL_LIMIT 0x1p500

/* Passes of balancing; it converges in a handful, the cap is a guard. */
#define EIG_BAL_PASSES 64

/* Sweeps without a deflation after which an exceptional shift is used. */
#define EIG_EXCEPTIONAL_EVERY 10

/* Wilkinson's ad hoc shift: the shifts are the eigenvalues of
 * [[x + 0.75 s, -0.4375 s], [s, x + 0.75 s]], i.e. x + 0.75 s +- i s
 * sqrt(0.4375); the constants only need to break a cycle of the standard
 * shift, their exact values are not critical. */
#define EIG_ADHOC_RE 0.75
#define EIG_ADHOC_IM 0.66143782776614764763   /* sqrt(0.4375) = sqrt(7) / 4 */

size_t el_eig_work_doubles(size_t n)
{
    return n * n + n;
}

/* Copies a into h (leading dimension n). Returns 0 when an entry is not
 * finite, else 1 with *maxabs the largest magnitude. */
static int copy_checked(size_t n, const double *a, size_t lda, double *h,
                        double *maxabs)
{
    double m = 0.0;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double v = a[i + j * lda];
            if (!isfinite(v))
                return 0;
            if (fabs(v) > m)
                m = fabs(v);
            h[i + j * n] = v;
        }
    *maxabs = m;
    return 1;
}

/* Exponent e such that multiplying by 2^-e brings maxabs into the safe
 * range; 0 when it is already there (or the matrix is zero). */
static int range_exponent(double maxabs)
{
    if (maxabs == 0.0)
        return 0;
    int e;
    (void)frexp(maxabs, &e);   /* maxabs = f 2^e, 0.5 <= f < 1 */
    if (e > EIG_RANGE_EXP)
        return e - EIG_RANGE_EXP;
    if (e < -EIG_RANGE_EXP)
        return e + EIG_RANGE_EXP;
    return 0;
}

static void scale_by_pow2(size_t count, double *x, int e)
{
    for (size_t i = 0; i < count; i++)
        x[i] = ldexp(x[i], e);
}

/* Power of two f for the similarity that scales column i by f and row i by
 * 1/f, given the off-diagonal 1-norms c (column) and r (row); 1.0 when it
 * would not reduce c + r by at least 5 %, the threshold that keeps the
 * passes from cycling on rounding-level gains. */
static double balance_factor(double c, double r)
{
    const double before = c + r;
    double f = 1.0;
    double cf2 = c;   /* c f^2: the scaled column norm times f */
    while (cf2 < 0.5 * r && f < EIG_BAL_LIMIT) {
        f *= 2.0;
        cf2 *= 4.0;
    }
    while (cf2 >= 2.0 * r && f > 1.0 / EIG_BAL_LIMIT) {
        f *= 0.5;
        cf2 *= 0.25;
    }
    return (cf2 + r) / f < 0.95 * before ? f : 1.0;
}

/* One pass of Parlett-Reinsch balancing over every row/column pair.
 * Powers of two make the similarity exact. Returns 1 when anything
 * changed. Rows or columns that are zero off the diagonal are left alone
 * (they already isolate an eigenvalue). */
static int balance_pass(size_t n, double *h)
{
    int changed = 0;
    for (size_t i = 0; i < n; i++) {
        double c = 0.0, r = 0.0;
        for (size_t j = 0; j < n; j++)
            if (j != i) {
                c += fabs(h[j + i * n]);
                r += fabs(h[i + j * n]);
            }
        if (c == 0.0 || r == 0.0)
            continue;
        double f = balance_factor(c, r);
        if (f == 1.0)
            continue;
        for (size_t j = 0; j < n; j++) {
            h[j + i * n] *= f;
            h[i + j * n] /= f;
        }
        changed = 1;
    }
    return changed;
}

static void balance(size_t n, double *h)
{
    for (int pass = 0; pass < EIG_BAL_PASSES; pass++)
        if (!balance_pass(n, h))
            return;
}

static double max2(double x, double y)
{
    return x > y ? x : y;
}

/* Householder vector for x (length m >= 2): on return x[1..m-1] holds the
 * tail of v (v[0] = 1 implied), *tau and *alpha are such that
 * (I - tau v v') x = alpha e1. Returns 0, leaving x alone, when x[1..]
 * is already zero. The norm is formed on x / max|x| so that squaring can
 * neither overflow nor underflow; alpha takes the sign opposite to x[0]
 * so that x[0] - alpha does not cancel. */
static int make_reflector(size_t m, double *x, double *tau, double *alpha)
{
    double tail = 0.0;
    for (size_t i = 1; i < m; i++)
        tail = max2(tail, fabs(x[i]));
    if (tail == 0.0)
        return 0;
    double sc = max2(tail, fabs(x[0])), inv = 1.0 / sc, ss = 0.0;
    for (size_t i = 0; i < m; i++)
        ss += (x[i] * inv) * (x[i] * inv);
    double al = -copysign(sc * sqrt(ss), x[0]);
    double dinv = 1.0 / (x[0] - al);
    for (size_t i = 1; i < m; i++)
        x[i] *= dinv;
    *tau = (al - x[0]) / al;
    *alpha = al;
    return 1;
}

/* Applies I - tau v v' (v = [1, v[1..m-1]]) from the left to rows
 * r0 .. r0+m-1 of columns c0 .. n-1. */
static void reflect_rows(size_t n, double *h, size_t r0, size_t c0, size_t m,
                         const double *v, double tau)
{
    for (size_t j = c0; j < n; j++) {
        double *col = h + r0 + j * n;
        double s = col[0];
        for (size_t i = 1; i < m; i++)
            s += v[i] * col[i];
        s *= tau;
        col[0] -= s;
        for (size_t i = 1; i < m; i++)
            col[i] -= s * v[i];
    }
}

/* Applies I - tau v v' from the right to columns c0 .. c0+m-1 of every
 * row, through w (n doubles) so that the inner loops run down columns. */
static void reflect_cols(size_t n, double *h, size_t c0, size_t m,
                         const double *v, double tau, double *w)
{
    for (size_t i = 0; i < n; i++)
        w[i] = h[i + c0 * n];
    for (size_t p = 1; p < m; p++)
        for (size_t i = 0; i < n; i++)
            w[i] += v[p] * h[i + (c0 + p) * n];
    for (size_t i = 0; i < n; i++)
        h[i + c0 * n] -= tau * w[i];
    for (size_t p = 1; p < m; p++)
        for (size_t i = 0; i < n; i++)
            h[i + (c0 + p) * n] -= tau * v[p] * w[i];
}

/* Orthogonal similarity to upper Hessenberg form; w holds n doubles of
 * scratch. The reflector of column k lives in that column below the
 * subdiagonal while it is applied, and is then replaced by the zeros it
 * creates. */
static void hessenberg(size_t n, double *h, double *w)
{
    for (size_t k = 0; k + 2 < n; k++) {
        size_t m = n - k - 1;
        double *x = h + (k + 1) + k * n;
        double tau, alpha;
        if (!make_reflector(m, x, &tau, &alpha))
            continue;
        reflect_rows(n, h, k + 1, k + 1, m, x, tau);
        reflect_cols(n, h, k + 1, m, x, tau, w);
        x[0] = alpha;
        for (size_t i = 1; i < m; i++)
            x[i] = 0.0;
    }
}

/* Eigenvalues of [[a, b], [c, d]] into re[0..1], im[0..1]: a complex pair
 * as (a + d)/2 +- i w with im[0] = w > 0, otherwise two reals with im 0.
 * With p = (a - d)/2 the eigenvalues are d + p +- sqrt(p^2 + b c). The
 * discriminant is formed divided by s = max(|p|, |b|, |c|), dividing the
 * larger of b and c, so that it neither overflows nor loses b c to
 * underflow; its sign is the real/complex decision. In the real case the
 * root of the shifted quadratic mu^2 - 2 p mu - b c = 0 (mu = lambda - d)
 * that adds magnitudes is taken first and the other follows from the
 * product of the roots, -b c, so neither suffers cancellation. */
static void eig2x2(double a, double b, double c, double d, double *re, double *im)
{
    im[0] = im[1] = 0.0;
    re[0] = a;
    re[1] = d;
    if (b == 0.0 || c == 0.0)
        return;
    double p = 0.5 * (a - d);
    double big = fabs(b) >= fabs(c) ? b : c;
    double small = fabs(b) >= fabs(c) ? c : b;
    double s = max2(fabs(p), fabs(big)), inv = 1.0 / s;
    double z = p * (p * inv) + (big * inv) * small;
    if (z >= 0.0) {
        double t = p + copysign(sqrt(s) * sqrt(z), p);
        if (t == 0.0)
            return;   /* p = 0 and b c underflowed: a double root at a = d */
        re[0] = d + t;
        re[1] = d - (big / t) * small;
        return;
    }
    double w = sqrt(s) * sqrt(-z);
    re[0] = re[1] = 0.5 * (a + d);
    if (w > 0.0) {
        im[0] = w;
        im[1] = -w;
    }
}

/* Whether subdiagonal entry H(k, k-1) is negligible: small against its
 * diagonal neighbours (against the next subdiagonal entries when those
 * are zero, as in a nilpotent block), or below the underflow level. */
static int negligible(size_t n, const double *h, size_t k, size_t hi,
                      double smallnum)
{
    double sub = fabs(h[k + (k - 1) * n]);
    if (sub <= smallnum)
        return 1;
    double ref = fabs(h[(k - 1) + (k - 1) * n]) + fabs(h[k + k * n]);
    if (ref == 0.0) {
        if (k >= 2)
            ref += fabs(h[(k - 1) + (k - 2) * n]);
        if (k + 1 <= hi)
            ref += fabs(h[(k + 1) + k * n]);
    }
    return sub <= EIG_EPS * ref;
}

/* Top l of the unreduced block that ends at row hi; the negligible entry
 * above it is set to zero so later sweeps see the split. */
static size_t split_point(size_t n, double *h, size_t hi, double smallnum)
{
    for (size_t k = hi; k > 0; k--)
        if (negligible(n, h, k, hi, smallnum)) {
            h[k + (k - 1) * n] = 0.0;
            return k;
        }
    return 0;
}

/* The two shifts (re[i] + i im[i]) of the next sweep on block l..hi
 * (hi >= l + 2): the eigenvalues of the trailing 2x2 block, or, when
 * they are real, the one nearer H(hi, hi) twice (it converges faster than
 * the pair). After every EIG_EXCEPTIONAL_EVERY sweeps without a
 * deflation, an ad hoc shift from the size of the subdiagonal instead,
 * alternately at the bottom and at the top of the block, to leave a cycle
 * of the standard shift (e.g. a cyclic permutation matrix). */
static void choose_shifts(size_t n, const double *h, size_t l, size_t hi,
                          size_t its, double *re, double *im)
{
    if (its % EIG_EXCEPTIONAL_EVERY == 0) {
        int top = (its / EIG_EXCEPTIONAL_EVERY) % 2 == 1;
        size_t k = top ? l : hi;
        double s = top ? fabs(h[(l + 1) + l * n]) + fabs(h[(l + 2) + (l + 1) * n])
                       : fabs(h[hi + (hi - 1) * n]) + fabs(h[(hi - 1) + (hi - 2) * n]);
        re[0] = re[1] = h[k + k * n] + EIG_ADHOC_RE * s;
        im[0] = EIG_ADHOC_IM * s;
        im[1] = -im[0];
        return;
    }
    eig2x2(h[(hi - 1) + (hi - 1) * n], h[(hi - 1) + hi * n], h[hi + (hi - 1) * n],
           h[hi + hi * n], re, im);
    if (im[0] == 0.0) {
        double last = h[hi + hi * n];
        double nearer = fabs(re[0] - last) <= fabs(re[1] - last) ? re[0] : re[1];
        re[0] = re[1] = nearer;
    }
}

/* First column of (H - s1 I)(H - s2 I) restricted to rows m..m+2, times
 * a positive factor (only its direction matters, to the reflector and to
 * bulge_start alike). With s1, s2 real or a conjugate pair, its first
 * entry is Re[(h11 - s1)(h11 - s2)] + h12 h21; the factor 1/(|h11 - re2|
 * + |im2| + |h21|) keeps every product in range. */
static void first_column(size_t n, const double *h, size_t m, const double *re,
                         const double *im, double *v)
{
    double h11 = h[m + m * n], h21 = h[(m + 1) + m * n];
    double h12 = h[m + (m + 1) * n], h22 = h[(m + 1) + (m + 1) * n];
    double h32 = h[(m + 2) + (m + 1) * n];
    double inv = 1.0 / (fabs(h11 - re[1]) + fabs(im[1]) + fabs(h21));
    double h21s = h21 * inv;
    v[0] = h21s * h12 + (h11 - re[0]) * ((h11 - re[1]) * inv) - im[0] * (im[1] * inv);
    v[1] = h21s * (h11 + h22 - re[0] - re[1]);
    v[2] = h21s * h32;
}

/* Row m where the sweep on l..hi starts: the lowest m (searching upwards
 * from hi - 2) at which the bulge the first reflector would put at
 * H(m+1, m-1), H(m+2, m-1) is negligible against the diagonal, so two
 * small consecutive subdiagonal entries split the work. v receives the
 * first column for that m. */
static size_t bulge_start(size_t n, const double *h, size_t l, size_t hi,
                          const double *re, const double *im, double *v)
{
    for (size_t m = hi - 2;; m--) {
        first_column(n, h, m, re, im, v);
        if (m == l)
            return m;
        double lhs = fabs(h[m + (m - 1) * n]) * (fabs(v[1]) + fabs(v[2]));
        double rhs = EIG_EPS * fabs(v[0])
                     * (fabs(h[(m - 1) + (m - 1) * n]) + fabs(h[m + m * n])
                        + fabs(h[(m + 1) + (m + 1) * n]));
        if (lhs <= rhs)
            return m;
    }
}

/* Squared norms inside (EIG_SQ_LO, EIG_SQ_HI) are formed without
 * scaling: no square of an entry can have underflowed to the point of
 * losing the norm, nor can alpha (x0 - alpha) overflow. */
#define EIG_SQ_LO 0x1p-900
#define EIG_SQ_HI 0x1p900

/* Reflector for the 3-vector x (x[2] = 0 for a 2-vector): u[1..2] and
 * *tau with (I - tau u u') x = *alpha e1, u[0] = 1; tau = 0 when the tail
 * is zero. It runs once per bulge step, and its chain of dependent
 * divisions and the square root dominates a sweep on a small matrix, so
 * it takes one reciprocal q = 1 / (alpha (x0 - alpha)) for both
 * 1 / (x0 - alpha) = q alpha and tau = (alpha - x0) / alpha =
 * -(x0 - alpha)^2 q, and only rescales when the squared norm is out of
 * the safe range. */
static void small_reflector(const double *x, double *u, double *tau, double *alpha)
{
    u[1] = u[2] = 0.0;
    *tau = 0.0;
    *alpha = x[0];
    if (x[1] == 0.0 && x[2] == 0.0)
        return;
    double y0 = x[0], y1 = x[1], y2 = x[2], sc = 1.0;
    double ss = y0 * y0 + y1 * y1 + y2 * y2;
    if (!(ss > EIG_SQ_LO && ss < EIG_SQ_HI)) {
        sc = fabs(y0) + fabs(y1) + fabs(y2);
        double inv = 1.0 / sc;
        y0 *= inv;
        y1 *= inv;
        y2 *= inv;
        ss = y0 * y0 + y1 * y1 + y2 * y2;
    }
    double al = -copysign(sqrt(ss), y0);
    double d = y0 - al;
    double q = 1.0 / (al * d);
    u[1] = y1 * (q * al);
    u[2] = y2 * (q * al);
    *tau = -(d * d) * q;
    *alpha = al * sc;
}

/* Applies I - tau u u' (u = [1, u1, u2]) to rows k..k+2 of columns k..hi
 * and to columns k..k+2 of rows l..min(k+3, hi): only the active block
 * l..hi matters for eigenvalues, so the rest is not updated. */
static void apply3(size_t n, double *h, size_t l, size_t k, size_t hi,
                   const double *u, double tau)
{
    const double u1 = u[1], u2 = u[2];
    for (size_t j = k; j <= hi; j++) {
        double *col = h + k + j * n;
        double s = tau * (col[0] + u1 * col[1] + u2 * col[2]);
        col[0] -= s;
        col[1] -= s * u1;
        col[2] -= s * u2;
    }
    size_t last = k + 3 < hi ? k + 3 : hi;
    double *c0 = h + k * n, *c1 = c0 + n, *c2 = c1 + n;
    for (size_t i = l; i <= last; i++) {
        double s = tau * (c0[i] + u1 * c1[i] + u2 * c2[i]);
        c0[i] -= s;
        c1[i] -= s * u1;
        c2[i] -= s * u2;
    }
}

/* The same for the last step of a sweep, a 2-reflector on rows and
 * columns hi-1, hi (k = hi - 1). */
static void apply2(size_t n, double *h, size_t l, size_t k, size_t hi,
                   const double *u, double tau)
{
    const double u1 = u[1];
    for (size_t j = k; j <= hi; j++) {
        double *col = h + k + j * n;
        double s = tau * (col[0] + u1 * col[1]);
        col[0] -= s;
        col[1] -= s * u1;
    }
    double *c0 = h + k * n, *c1 = c0 + n;
    for (size_t i = l; i <= hi; i++) {
        double s = tau * (c0[i] + u1 * c1[i]);
        c0[i] -= s;
        c1[i] -= s * u1;
    }
}

/* One implicit double-shift sweep on rows/columns m..hi of the block
 * l..hi, chasing the bulge that v (the first column of the shift
 * polynomial) creates down to the bottom. */
static void francis_sweep(size_t n, double *h, size_t l, size_t m, size_t hi,
                          const double *v)
{
    for (size_t k = m; k < hi; k++) {
        int three = k + 1 < hi;
        double x[3] = {v[0], v[1], v[2]}, u[3], tau, alpha;
        if (k > m) {
            x[0] = h[k + (k - 1) * n];
            x[1] = h[(k + 1) + (k - 1) * n];
            x[2] = three ? h[(k + 2) + (k - 1) * n] : 0.0;
        }
        small_reflector(x, u, &tau, &alpha);
        if (k > m) {
            h[k + (k - 1) * n] = alpha;
            h[(k + 1) + (k - 1) * n] = 0.0;
            if (three)
                h[(k + 2) + (k - 1) * n] = 0.0;
        } else if (m > l) {
            /* The reflector also acts on H(m, m-1); what it would put
             * below that entry is negligible by the choice of m. */
            h[m + (m - 1) * n] *= 1.0 - tau;
        }
        if (tau == 0.0)
            continue;
        if (three)
            apply3(n, h, l, k, hi, u, tau);
        else
            apply2(n, h, l, k, hi, u, tau);
    }
}

/* Eigenvalues of the upper Hessenberg h (n >= 3) into wr, wi, each at the
 * position of its 1x1 or 2x2 diagonal block. Returns 0, or 1 when 30 n
 * sweeps in total do not suffice. */
static int francis_qr(size_t n, double *h, double *wr, double *wi)
{
    const size_t max_sweeps = 30 * n;
    const double smallnum = DBL_MIN * ((double)n / EIG_EPS);
    size_t sweeps = 0, its = 0, hi = n - 1;
    for (;;) {
        size_t l = split_point(n, h, hi, smallnum);
        if (l + 1 >= hi) {
            if (l == hi) {
                wr[hi] = h[hi + hi * n];
                wi[hi] = 0.0;
            } else {
                double re[2], im[2];
                eig2x2(h[l + l * n], h[l + hi * n], h[hi + l * n], h[hi + hi * n], re, im);
                wr[l] = re[0];
                wi[l] = im[0];
                wr[hi] = re[1];
                wi[hi] = im[1];
            }
            if (l == 0)
                return 0;
            hi = l - 1;
            its = 0;
            continue;
        }
        if (sweeps == max_sweeps)
            return 1;
        sweeps++;
        its++;
        double re[2], im[2], v[3];
        choose_shifts(n, h, l, hi, its, re, im);
        size_t m = bulge_start(n, h, l, hi, re, im, v);
        francis_sweep(n, h, l, m, hi, v);
    }
}

static int all_finite(size_t n, const double *x)
{
    for (size_t i = 0; i < n; i++)
        if (!isfinite(x[i]))
            return 0;
    return 1;
}

int el_eig_values(size_t n, const double *a, size_t lda, double *wr, double *wi,
                  double *work)
{
    if (n == 0)
        return 0;
    double *h = work, maxabs;
    if (!copy_checked(n, a, lda, h, &maxabs))
        return 1;
    int e = range_exponent(maxabs);
    if (e != 0)
        scale_by_pow2(n * n, h, -e);
    if (n == 1) {
        wr[0] = h[0];
        wi[0] = 0.0;
    } else if (n == 2) {
        eig2x2(h[0], h[2], h[1], h[3], wr, wi);
    } else {
        balance(n, h);
        hessenberg(n, h, work + n * n);
        if (francis_qr(n, h, wr, wi) != 0)
            return 1;
    }
    if (e != 0) {
        scale_by_pow2(n, wr, e);
        scale_by_pow2(n, wi, e);
    }
    return all_finite(n, wr) && all_finite(n, wi) ? 0 : 1;
}
