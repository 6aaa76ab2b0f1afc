/* el_stats: small statistics every stage may use (no dependencies, so
 * any stage can include it without making an include cycle). */
#ifndef EL_STATS_H
#define EL_STATS_H

#include <stddef.h>

/* Mean and population standard deviation of x[0..n) (n >= 1), free of
 * underflow and overflow in the squares: the deviations are divided by
 * their largest magnitude before squaring (the scaling of LAPACK's dnrm2),
 * so a channel that varies at 1e-170 gets its true spread, not 0. Returns
 * 1 when the channel is constant, a test that depends on no scale: no
 * deviation at all, or a spread at or below 1e-12 of |mean| (below that
 * it is the rounding of the stored values themselves, about 1e-16
 * relative each, grown by the summation). Returns 0 otherwise, and for
 * non-finite data (then *mean or *sd is not finite; the caller reports
 * it). Can't fail otherwise. */
int el_stats_spread(const double *x, size_t n, double *mean, double *sd);

/* el_stats_spread of count channels of n samples each, channel c at
 * x + c n: mean[c], sd[c] and constant[c] (its return value), bit for bit
 * el_stats_spread's, with four channels' sums taken side by side in one
 * pass (independent chains of adds, each in el_stats_spread's order).
 * No allocation; can't fail. */
void el_stats_spread_many(const double *x, size_t n, size_t count, double *mean,
                          double *sd, int *constant);

/* Lagged products of the centred x[0..n): out[j] = sum_{t=k}^{n-1}
 * (x[t] - mean)(x[t-k] - mean) for the lags k = k_first + j, j = 0 ..
 * count - 1 (0 for k >= n), the sums of the sample autocovariance. Each
 * lag's sum is one accumulator added in ascending t, the order of the
 * plain double loop, so the result is that loop's bit for bit on any CPU
 * (no reassociation, no BLAS); several lags share a pass over x (sixteen
 * independent sums per pass: the adds then overlap instead of waiting on
 * one another, and x is read once per sixteen lags). No allocation;
 * x must not be NULL when n > 0. Can't fail. */
void el_stats_lagged_products(const double *x, size_t n, double mean, size_t k_first,
                              size_t count, double *out);

/* Adds n_rows rows of n doubles to sum, in row order: for every j,
 * sum[j] = (...((sum[j] + rows[0][j]) + rows[1][j]) ...) + rows[n_rows-1][j],
 * each addition rounded on its own, which is bit for bit what one
 * cblas_daxpy of weight 1 per row does (x + 1.0 * y is x + y exactly,
 * fused multiply-add or not) on any kernel. Eight rows a pass over sum,
 * so sum is read and written once per eight rows instead of once per row
 * (the bootstrap's block sums: rows of thousands of doubles scattered over
 * a table larger than the cache). The rows must not overlap sum. No
 * allocation; can't fail. */
void el_stats_add_rows(double *sum, size_t n, const double *const *rows, size_t n_rows);

#endif
