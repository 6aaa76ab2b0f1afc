/* el_spikes: isolated one-sample spikes (el_spikes.h). */
#include "el_spikes.h"

#include <math.h>
#include <stdlib.h>

#define SCALE_STEPS 4097

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* 1.4826 x the median absolute step of up to SCALE_STEPS steps evenly
 * spread over x: the standard deviation of Gaussian steps, robust to the
 * spikes it is used to find (Hampel 1974, J. Amer. Statist. Assoc. 69). */
static double step_scale(const double *x, size_t n)
{
    double steps[SCALE_STEPS];
    size_t m = n - 1 < SCALE_STEPS ? n - 1 : SCALE_STEPS;
    for (size_t i = 0; i < m; i++) {
        size_t k = m == n - 1 ? i : (size_t)((double)i * (double)(n - 2) / (double)(m - 1));
        steps[i] = fabs(x[k + 1] - x[k]);
    }
    qsort(steps, m, sizeof *steps, cmp_double);
    double median = m % 2 ? steps[m / 2] : 0.5 * (steps[m / 2 - 1] + steps[m / 2]);
    return 1.4826 * median;
}

el_spikes el_spikes_find(const double *x, size_t n)
{
    el_spikes found = {0, 0, 0.0};
    if (x == NULL || n < 5)
        return found;
    double scale = step_scale(x, n);
    if (!(scale > 0.0) || !isfinite(scale))
        return found;
    double t = EL_SPIKES_THRESHOLD_SD * scale;
    for (size_t k = 1; k + 1 < n; k++) {
        double a = x[k] - x[k - 1];
        if (fabs(a) <= t)
            continue; /* the common case: one compare a sample */
        double b = x[k + 1] - x[k];
        if (fabs(b) <= t || (a > 0.0) == (b > 0.0) || fabs(x[k + 1] - x[k - 1]) >= 0.25 * t)
            continue;
        /* Isolated: the neighbours move as usual on their other sides. A
         * burst of chatter or the peaks of a growing oscillation have
         * neighbours that jump as far, and are no glitch. */
        if ((k >= 2 && fabs(x[k - 1] - x[k - 2]) > t)
            || (k + 2 < n && fabs(x[k + 2] - x[k + 1]) > t))
            continue;
        if (found.count == 0)
            found.first = k;
        found.count++;
        double size = fmin(fabs(a), fabs(b)) / scale;
        if (size > found.largest_sd)
            found.largest_sd = size;
    }
    return found;
}
