/* el_stats: small statistics every stage may use. */
#include "el_stats.h"

#include <math.h>

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
    double largest = 0.0;
    for (size_t k = 0; k < n; k++) {
        double d = fabs(x[k] - mean);
        if (d > largest || isnan(d))
            largest = d;
    }
    double sd = largest;
    if (largest > 1e-150 && largest < 1e150) {
        /* Squares of n deviations this size neither underflow nor
         * overflow: the plain sum, bit for bit the former result. */
        double ss = 0.0;
        for (size_t k = 0; k < n; k++)
            ss += (x[k] - mean) * (x[k] - mean);
        sd = sqrt(ss / (double)n);
    } else if (largest > 0.0 && isfinite(largest)) {
        double ss = 0.0;
        for (size_t k = 0; k < n; k++) {
            double d = (x[k] - mean) / largest;
            ss += d * d;
        }
        sd = largest * sqrt(ss / (double)n);
    }
    *mean_out = mean;
    *sd_out = sd;
    if (!isfinite(mean) || !isfinite(sd))
        return 0;
    return largest == 0.0 || sd <= 1e-12 * fabs(mean);
}
