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

#endif
