/* el_horizon: the autocorrelation reading of the automatic horizon: the
 * channels' mean autocorrelation and the depth of its first negative lobe
 * in standard errors. */
#include "el_horizon.h"

#include "el_stats.h"

#include <math.h>

int el_horizon_mean_acf(const el_series *s, size_t k_first, size_t k_last, double *r,
                        double *g)
{
    size_t n = s->n_samples, p = s->n_channels, count = k_last - k_first + 1;
    for (size_t k = k_first; k <= k_last; k++)
        r[k] = 0.0;
    for (size_t c = 0; c < p; c++) {
        const double *x = s->values + c * n;
        double mean = 0.0;
        for (size_t t = 0; t < n; t++)
            mean += x[t];
        mean /= (double)n;
        double g0 = 0.0;
        for (size_t t = 0; t < n; t++)
            g0 += (x[t] - mean) * (x[t] - mean);
        if (!(g0 > 0.0) || !isfinite(g0))
            return 1;
        /* The sums of the plain loop, bit for bit, sixteen lags a pass. */
        el_stats_lagged_products(x, n, mean, k_first, count, g);
        for (size_t j = 0; j < count; j++)
            r[k_first + j] += g[j] / g0 / (double)p;
    }
    return 0;
}

/* Why a lobe and Bartlett's error: a positive, decaying autocorrelation
 * (an overdamped log) is estimated with errors strongly correlated from
 * lag to lag, so once it is within the noise its estimate wanders below
 * zero for many lags; on calibrate's degenerate node at 20,000 samples
 * four times such a crossing set iv's horizon at the cost cap on 95 of
 * 240 logs. Over 480 logs of each overdamped cell and length such lobes
 * reached 3 standard errors on at most one log, while the first lobe of a
 * damped oscillation is about e^(-zeta pi / sqrt(1 - zeta^2)) of r(0)
 * deep (0.37 at zeta 0.3): 7-30 standard errors on the oscillatory cells
 * at 2,000 samples and more, 2.3 at the least at 500. r is the channels'
 * mean; its error is at most one channel's (channels share their modes),
 * so one channel's formula is the conservative one. */
size_t el_horizon_crossing(const double *r, size_t lmax, size_t lread, size_t n,
                           double *lobe_se, int *open)
{
    double sum_sq = 0.0, depth = 0.0;
    size_t k0 = 0;
    *open = 0;
    for (size_t k = 1; k <= lread; k++) {
        if (k0 == 0 && k > lmax)
            break;
        if (k0 == 0 && r[k] <= 0.0)
            k0 = k;
        if (k0 > 0) {
            if (r[k] > 0.0)
                break;
            double se = sqrt((1.0 + 2.0 * sum_sq) / (double)n);
            depth = fmax(depth, -r[k] / se);
            *open = k == lread;
        }
        sum_sq += r[k] * r[k];
    }
    *lobe_se = depth;
    return k0;
}
