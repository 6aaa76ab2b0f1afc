/* el_spikes: isolated one-sample spikes in a channel (a sensor glitch, a
 * dropped bit, a transmission error): a sample far from both neighbours
 * while the neighbours agree with each other. A least-squares fit follows
 * such samples, so the report names them; the data are not changed. */
#ifndef EL_SPIKES_H
#define EL_SPIKES_H

#include <stddef.h>

/* How many times the robust spread of the sample-to-sample change a
 * spike stands out by (both of its steps). Under Gaussian changes a step
 * beyond 20 robust standard deviations has probability below 1e-80; two
 * in a row of opposite sign that nearly cancel are the mark of a glitch,
 * not of a ringing response, whose next samples go on moving. */
#define EL_SPIKES_THRESHOLD_SD 20.0

/* What el_spikes_find found in one channel. */
typedef struct {
    size_t count;        /* isolated spikes */
    size_t first;        /* sample of the first (count > 0) */
    double largest_sd;   /* largest step of a spike over the robust spread */
} el_spikes;

/* Looks for isolated spikes in x[0..n): sample k (0 < k < n-1) with steps
 * a = x[k] - x[k-1] and b = x[k+1] - x[k] both beyond T in size, of
 * opposite signs, |x[k+1] - x[k-1]| below T / 4, and the neighbours' other
 * steps (x[k-1] - x[k-2], x[k+2] - x[k+1]) within T, where T is
 * EL_SPIKES_THRESHOLD_SD times the robust spread of the steps (1.4826
 * times the median absolute step, from at most 4,097 steps evenly spread
 * over the series: the scale only sets the threshold). A series whose
 * median step is 0 (quantised, or flat most of the time) has no scale and
 * gives no spikes. One pass; no allocation beyond a fixed stack array;
 * cannot fail. */
el_spikes el_spikes_find(const double *x, size_t n);

#endif
