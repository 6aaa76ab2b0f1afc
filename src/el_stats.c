/* el_stats: small statistics every stage may use. */
#include "el_stats.h"

#include <math.h>
#include <stddef.h>

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

/* The mean from the plain sum of x[0..n); when the sum overflowed (or a
 * value is not finite) a mean from the scaled values, unless a value
 * itself is not finite. */
static double mean_of(const double *x, size_t n, double sum)
{
    double mean = sum / (double)n;
    if (!isfinite(mean)) {
        double big = 0.0;
        for (size_t k = 0; k < n; k++)
            big = fabs(x[k]) > big || isnan(x[k]) ? fabs(x[k]) : big;
        mean = big;
        if (isfinite(big) && big > 0.0) {
            double s = 0.0;
            for (size_t k = 0; k < n; k++)
                s += x[k] / big;
            mean = s / (double)n * big;
        }
    }
    return mean;
}

/* The spread from the largest deviation and the plain sum of squares (the
 * sum is used only when the largest allows it), and the result of
 * el_stats_spread. */
static int spread_finish(const double *x, size_t n, double mean, double largest, double ss,
                         double *mean_out, double *sd_out)
{
    double sd = largest;
    if (largest > 1e-150 && largest < 1e150) {
        /* Squares of n deviations this size neither underflow nor
         * overflow: the plain sum, bit for bit the former result. */
        sd = sqrt(ss / (double)n);
    } else if (largest > 0.0 && isfinite(largest)) {
        double scaled = 0.0;
        for (size_t k = 0; k < n; k++) {
            double d = (x[k] - mean) / largest;
            scaled += d * d;
        }
        sd = largest * sqrt(scaled / (double)n);
    }
    *mean_out = mean;
    *sd_out = sd;
    if (!isfinite(mean) || !isfinite(sd))
        return 0;
    return largest == 0.0 || sd <= 1e-12 * fabs(mean);
}

int el_stats_spread(const double *x, size_t n, double *mean_out, double *sd_out)
{
    double sum = 0.0;
    for (size_t k = 0; k < n; k++)
        sum += x[k];
    double mean = mean_of(x, n, sum);
    /* The largest deviation and the plain sum of squares in one pass. */
    double largest = 0.0, ss = 0.0;
    for (size_t k = 0; k < n; k++) {
        double d = fabs(x[k] - mean);
        if (d > largest || isnan(d))
            largest = d;
        ss += (x[k] - mean) * (x[k] - mean);
    }
    return spread_finish(x, n, mean, largest, ss, mean_out, sd_out);
}

/* Channels summed side by side in el_stats_spread_many: four independent
 * chains of adds overlap where one chain waits on each add's latency. */
#define STATS_SPREAD_GROUP 4

void el_stats_spread_many(const double *x, size_t n, size_t count, double *mean_out,
                          double *sd_out, int *constant)
{
    for (size_t c0 = 0; c0 < count; c0 += STATS_SPREAD_GROUP) {
        size_t g = count - c0 < STATS_SPREAD_GROUP ? count - c0 : STATS_SPREAD_GROUP;
        if (g < STATS_SPREAD_GROUP) {
            for (size_t j = 0; j < g; j++)
                constant[c0 + j] = el_stats_spread(x + (c0 + j) * n, n, mean_out + c0 + j,
                                                   sd_out + c0 + j);
            continue;
        }
        const double *x0 = x + c0 * n, *x1 = x0 + n, *x2 = x1 + n, *x3 = x2 + n;
        double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0;
        for (size_t k = 0; k < n; k++) {
            s0 += x0[k];
            s1 += x1[k];
            s2 += x2[k];
            s3 += x3[k];
        }
        double m[STATS_SPREAD_GROUP] = { mean_of(x0, n, s0), mean_of(x1, n, s1),
                                         mean_of(x2, n, s2), mean_of(x3, n, s3) };
        double big[STATS_SPREAD_GROUP] = { 0.0 }, ss[STATS_SPREAD_GROUP] = { 0.0 };
        for (size_t k = 0; k < n; k++) {
            double d0 = x0[k] - m[0], d1 = x1[k] - m[1], d2 = x2[k] - m[2],
                   d3 = x3[k] - m[3];
            double a0 = fabs(d0), a1 = fabs(d1), a2 = fabs(d2), a3 = fabs(d3);
            if (a0 > big[0] || isnan(a0))
                big[0] = a0;
            if (a1 > big[1] || isnan(a1))
                big[1] = a1;
            if (a2 > big[2] || isnan(a2))
                big[2] = a2;
            if (a3 > big[3] || isnan(a3))
                big[3] = a3;
            ss[0] += d0 * d0;
            ss[1] += d1 * d1;
            ss[2] += d2 * d2;
            ss[3] += d3 * d3;
        }
        for (size_t j = 0; j < STATS_SPREAD_GROUP; j++)
            constant[c0 + j] = spread_finish(x + (c0 + j) * n, n, m[j], big[j], ss[j],
                                             mean_out + c0 + j, sd_out + c0 + j);
    }
}

/* Lags per pass of el_stats_lagged_products: sixteen sums are eight SSE2
 * registers, each updated once per sample, so a pass is bound by the
 * adds' throughput rather than by the latency of fewer, longer chains
 * (eight lags a pass took about 1.4 times as long per lag: 0.109 s
 * against 0.075 s for 52 lags of 8 channels x 1e6 samples, with the SSE2
 * registers of lag_pass). A last block of at most eight lags takes the
 * eight-wide pass. */
#define STATS_LAG_WIDE 16
#define STATS_LAG_BLOCK 8
/* Samples centred per chunk in lag_pass (two stack buffers of about this
 * many doubles, 16 KiB: they stay in the first-level cache). */
#define STATS_CENTRED_CHUNK 1024

/* One pass of `wide` (8 or 16: a constant after inlining, so the inner
 * loop vectorises) sums over s = 0 .. common - 1 for the lags k0 ..
 * k0 + b - 1 (b <= wide), written with s = t - k: term s of lag k is
 * (x[s] - mean)(x[s + k] - mean), the plain loop's product with its
 * factors swapped (the same double). The centred values are made a chunk
 * at a time, each subtraction once instead of once per lag; lanes beyond
 * b multiply zeros and are not read. */
static inline void lag_pass(const double *x, size_t common, double mean, size_t k0,
                            size_t b, size_t wide, double *acc)
{
    double da[STATS_CENTRED_CHUNK], dy[STATS_CENTRED_CHUNK + STATS_LAG_WIDE];
    for (size_t s0 = 0; s0 < common; s0 += STATS_CENTRED_CHUNK) {
        size_t len = common - s0 < STATS_CENTRED_CHUNK ? common - s0 : STATS_CENTRED_CHUNK;
        size_t need = len + b - 1;
        for (size_t i = 0; i < len; i++)
            da[i] = x[s0 + i] - mean;
        for (size_t i = 0; i + 1 < len + wide; i++)
            dy[i] = i < need ? x[s0 + k0 + i] - mean : 0.0;
#if defined(__SSE2__)
        if (wide == STATS_LAG_WIDE) {
            /* The same products and sums as the loop below, lane j of
             * register j / 2 for lag j, in registers instead of memory
             * (the compiler spills the sixteen sums of the plain loop). */
            __m128d r0 = _mm_loadu_pd(acc), r1 = _mm_loadu_pd(acc + 2),
                    r2 = _mm_loadu_pd(acc + 4), r3 = _mm_loadu_pd(acc + 6),
                    r4 = _mm_loadu_pd(acc + 8), r5 = _mm_loadu_pd(acc + 10),
                    r6 = _mm_loadu_pd(acc + 12), r7 = _mm_loadu_pd(acc + 14);
            for (size_t i = 0; i < len; i++) {
                __m128d a = _mm_set1_pd(da[i]);
                const double *y = dy + i;
                r0 = _mm_add_pd(r0, _mm_mul_pd(a, _mm_loadu_pd(y)));
                r1 = _mm_add_pd(r1, _mm_mul_pd(a, _mm_loadu_pd(y + 2)));
                r2 = _mm_add_pd(r2, _mm_mul_pd(a, _mm_loadu_pd(y + 4)));
                r3 = _mm_add_pd(r3, _mm_mul_pd(a, _mm_loadu_pd(y + 6)));
                r4 = _mm_add_pd(r4, _mm_mul_pd(a, _mm_loadu_pd(y + 8)));
                r5 = _mm_add_pd(r5, _mm_mul_pd(a, _mm_loadu_pd(y + 10)));
                r6 = _mm_add_pd(r6, _mm_mul_pd(a, _mm_loadu_pd(y + 12)));
                r7 = _mm_add_pd(r7, _mm_mul_pd(a, _mm_loadu_pd(y + 14)));
            }
            _mm_storeu_pd(acc, r0);
            _mm_storeu_pd(acc + 2, r1);
            _mm_storeu_pd(acc + 4, r2);
            _mm_storeu_pd(acc + 6, r3);
            _mm_storeu_pd(acc + 8, r4);
            _mm_storeu_pd(acc + 10, r5);
            _mm_storeu_pd(acc + 12, r6);
            _mm_storeu_pd(acc + 14, r7);
            continue;
        }
#endif
        for (size_t i = 0; i < len; i++) {
            double a = da[i];
            const double *y = dy + i;
            for (size_t j = 0; j < wide; j++)
                acc[j] += a * y[j];
        }
    }
}

/* The lags k0 .. k0 + b - 1 (b <= STATS_LAG_WIDE): every lag takes s = 0
 * .. n - 1 - kb together (kb the block's largest lag: one broadcast of
 * x[s] times a contiguous run of x), then its own last terms up to
 * s = n - 1 - k: for each lag the terms arrive in ascending s, as in the
 * plain loop, so each lag's sum is bit for bit the plain loop's whatever
 * block it falls in. */
static void lag_block(const double *x, size_t n, double mean, size_t k0, size_t b,
                      double *out)
{
    double acc[STATS_LAG_WIDE] = {0.0};
    size_t kb = k0 + b - 1;
    size_t common = n > kb ? n - kb : 0;
    if (b > STATS_LAG_BLOCK)
        lag_pass(x, common, mean, k0, b, STATS_LAG_WIDE, acc);
    else
        lag_pass(x, common, mean, k0, b, STATS_LAG_BLOCK, acc);
    for (size_t j = 0; j < b; j++)
        for (size_t s = common; s + k0 + j < n; s++)
            acc[j] += (x[s] - mean) * (x[s + k0 + j] - mean);
    for (size_t j = 0; j < b; j++)
        out[j] = acc[j];
}

void el_stats_lagged_products(const double *x, size_t n, double mean, size_t k_first,
                              size_t count, double *out)
{
    for (size_t j0 = 0; j0 < count; j0 += STATS_LAG_WIDE) {
        size_t b = count - j0 < STATS_LAG_WIDE ? count - j0 : STATS_LAG_WIDE;
        lag_block(x, n, mean, k_first + j0, b, out + j0);
    }
}

/* Eight rows a pass: each element's additions are one chain in row order
 * (the compiler may not reassociate them), and the eight row streams and
 * the sum are each read once per pass. Measured on the hankel bootstrap's
 * sums (39 rows of 3,007 doubles from a 9 MB table): 56 us a replicate
 * against 66-76 us for one daxpy per row. */
void el_stats_add_rows(double *sum, size_t n, const double *const *rows, size_t n_rows)
{
    double *restrict s = sum;
    size_t r = 0, n8 = n_rows - n_rows % 8;
    for (; r < n8; r += 8) {
        const double *restrict x0 = rows[r], *restrict x1 = rows[r + 1];
        const double *restrict x2 = rows[r + 2], *restrict x3 = rows[r + 3];
        const double *restrict x4 = rows[r + 4], *restrict x5 = rows[r + 5];
        const double *restrict x6 = rows[r + 6], *restrict x7 = rows[r + 7];
        for (size_t j = 0; j < n; j++)
            s[j] = ((((((((s[j] + x0[j]) + x1[j]) + x2[j]) + x3[j]) + x4[j]) + x5[j]) + x6[j]) +
                    x7[j]);
    }
    for (; r < n_rows; r++) {
        const double *restrict x = rows[r];
        for (size_t j = 0; j < n; j++)
            s[j] += x[j];
    }
}
