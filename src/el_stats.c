/* el_stats: small statistics every stage may use. */
#include "el_stats.h"

#include <math.h>
#include <stddef.h>

int el_stats_spread(const double *x, size_t n, double *mean_out, double *sd_out)
{
    double sum = 0.0;
    for (size_t k = 0; k < n; k++)
        sum += x[k];
    double mean = sum / (double)n;
    if (!isfinite(mean)) {
        /* The sum overflowed (or a value is not finite): a mean from the
         * scaled values, unless a value itself is not finite. */
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
    /* The largest deviation and the plain sum of squares in one pass
     * (the sum is used only when the largest allows it). */
    double largest = 0.0, ss = 0.0;
    for (size_t k = 0; k < n; k++) {
        double d = fabs(x[k] - mean);
        if (d > largest || isnan(d))
            largest = d;
        ss += (x[k] - mean) * (x[k] - mean);
    }
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

/* Lags per pass of el_stats_lagged_products: sixteen sums are eight SSE2
 * registers, each updated once per sample, so a pass is bound by the
 * adds' throughput rather than by the latency of fewer, longer chains
 * (eight lags a pass: 1.5 times the time per lag). A last block of at
 * most eight lags takes the eight-wide pass. */
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
