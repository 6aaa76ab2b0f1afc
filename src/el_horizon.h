/* el_horizon: how the automatic horizon of the block-Hankel stage
 * (el_subspace_choose_horizon) reads the data: the channels' mean
 * autocorrelation, and the test that tells the zero crossing of an
 * oscillation from the noise of a positive, decaying autocorrelation
 * (docs/method.md section 14; docs/uncertainty.md, "The automatic horizon
 * (z, 2026-12-05)"). */
#ifndef EL_HORIZON_H
#define EL_HORIZON_H

#include <stddef.h>

#include "el_timebase.h"

/* A zero crossing counts as an oscillation when its negative lobe reaches
 * this many standard errors of r below zero (el_horizon_crossing). */
#define EL_HORIZON_LOBE_SE 3.0

/* The mean over the channels of s of their autocorrelations r(k) =
 * sum_t (x_t - mean)(x_t-k - mean) / sum_t (x_t - mean)^2, for the lags
 * k = k_first .. k_last, written to r[k] (r indexed by lag; entries
 * outside the range untouched); g is scratch of k_last - k_first + 1
 * doubles. Each lag's value is the same bit for bit whatever range it is
 * computed in (el_stats_lagged_products). Returns 1 when a channel is
 * constant or not finite (r then partly written), else 0. s, r and g
 * must not be NULL; k_first <= k_last. Can't fail otherwise. */
int el_horizon_mean_acf(const el_series *s, size_t k_first, size_t k_last, double *r,
                        double *g);

/* The first lag k0 in 1 .. lmax with r(k0) <= 0 (returned; 0 when there
 * is none) and the depth of the negative lobe that starts there, read up
 * to the next lag with r > 0 or to lread (>= lmax): *lobe_se = the
 * largest -r(k) / se(k) over the lobe, with Bartlett's (1946) standard
 * error of r(k) for a process whose correlation has died out from lag k
 * on, se(k)^2 = (1 + 2 sum_{j=1}^{k-1} r(j)^2) / n; *open = 1 when the
 * lobe is still at or below zero at lread (its bottom may lie further
 * out). r holds r(0 .. lread) of a record of n samples. Pointers must not
 * be NULL. Can't fail. */
size_t el_horizon_crossing(const double *r, size_t lmax, size_t lread, size_t n,
                           double *lobe_se, int *open);

#endif
