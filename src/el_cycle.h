/* el_cycle: a possible limit cycle. Spectral peaks at whole multiples of
 * one fundamental frequency together with a steady amplitude envelope are
 * the mark of a sustained nonlinear oscillation (a hunting loop, a relay
 * cycle, a van der Pol oscillator), which a linear model around a fixed
 * point does not describe (docs/method.md, "Limit-cycle flag"). */
#ifndef EL_CYCLE_H
#define EL_CYCLE_H

#include <stddef.h>

#include "el_error.h"
#include "el_spectrum.h"
#include "el_timebase.h"

/* Harmonics looked for: k f0 for k = 2 .. EL_CYCLE_MAX_ORDER. */
#define EL_CYCLE_MAX_ORDER 5

/* The envelope is the RMS about the mean over windows of this many
 * fundamental periods (long enough that the RMS of a periodic wave over a
 * window that is not a whole number of periods differs from the true RMS
 * by at most about 1/(4 pi 3) = 3 %, short enough for many windows). */
#define EL_CYCLE_WINDOW_PERIODS 3.0

/* At least this many envelope windows (24 periods) or no test. */
#define EL_CYCLE_MIN_WINDOWS 8

/* Largest coefficient of variation (standard deviation / mean) of the
 * window RMS values that counts as a steady envelope. A narrow-band
 * Gaussian process (a linear mode driven by noise) has a Rayleigh
 * envelope, whose coefficient of variation is sqrt(4/pi - 1) = 0.52
 * (Rice 1944); the 3-period RMS averages some of that away. Measured by
 * bench/verdict_study.c (docs/method.md, "Limit-cycle flag"): van der Pol
 * cycles with sensor and process noise 0.002-0.015; linear modes at f0
 * and 3 f0 driven by noise (peaks at whole multiples, the hardest linear
 * case) 0.127 and above; ring-downs 0.27 and above. 0.06 sits between,
 * about 4 times the cycles' largest and half the linear cases' smallest. */
#define EL_CYCLE_ENVELOPE_CV_MAX 0.06

/* The result: the best candidate fundamental over all channels (most
 * harmonics, then the steadiest envelope). */
typedef struct {
    int tested;               /* 1: some channel had a peak with a harmonic peak and
                                 enough samples for EL_CYCLE_MIN_WINDOWS windows */
    int flagged;              /* 1: harmonics and a steady envelope: warn */
    size_t channel;           /* channel of the candidate */
    double fundamental_hz;    /* its fundamental (cycles per time unit) */
    unsigned harmonics;       /* bit k set (k = 2 .. EL_CYCLE_MAX_ORDER): a peak at k f0 */
    size_t n_harmonics;       /* bits set */
    size_t window_samples;    /* samples per envelope window */
    size_t n_windows;
    double envelope_cv;       /* coefficient of variation of the window RMS values */
} el_cycle;

/* Looks in peaks (el_spectrum_find_peaks of the Welch spectra of series)
 * for a channel whose peaks include one at f0 and one or more at k f0,
 * k = 2 .. EL_CYCLE_MAX_ORDER, within (k + 1) / 2 bin widths (f0 is known
 * to about half a bin, so k f0 to k halves; the harmonic's own peak to
 * another half); for each such candidate the envelope of that channel of
 * series (the RMS about the mean over consecutive windows of
 * EL_CYCLE_WINDOW_PERIODS periods of f0) and its coefficient of variation;
 * flagged when that is at most EL_CYCLE_ENVELOPE_CV_MAX. Fills *out
 * (tested = 0 when no candidate had enough windows). Allocates nothing.
 * EL_ERR_INTERNAL for NULL arguments or peaks of another channel count. */
el_status el_cycle_detect(const el_series *series, const el_peaks *peaks, el_cycle *out,
                          el_error *err);

/* The multiples found as text, e.g. "1, 3 and 5", into buf (always
 * terminated). Can't fail. */
void el_cycle_orders_text(const el_cycle *c, char *buf, size_t size);

#endif
