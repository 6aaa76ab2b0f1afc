/* el_dynamics: is there any dynamics in the window to describe? A
 * portmanteau test of each channel's own data against white noise, and the
 * rule that withholds the fixed point type and the stability verdict when
 * neither the data nor the fitted model shows any (docs/method.md, "No
 * verdict from nothing"). */
#ifndef EL_DYNAMICS_H
#define EL_DYNAMICS_H

#include <stddef.h>

#include "el_error.h"
#include "el_timebase.h"

/* Family-wise level of the whiteness test over all channels: a channel's
 * data counts as not white when its Ljung-Box p-value is below this
 * divided by the number of channels tested (Bonferroni), so a log of pure
 * white noise keeps "no dynamics" with probability >= 0.99 whatever the
 * channel count (calibrated in docs/method.md with bench/verdict_study.c). */
#define EL_DYNAMICS_ALPHA 0.01

/* One-step R^2 of the fitted model at or above which a log is never called
 * "no dynamics", whatever the whiteness test says: a model with measured
 * inputs can explain an output whose own past predicts nothing (a static
 * or pure-delay response to a white input). Under white noise a fit with p
 * coefficients per channel reaches R^2 of about p / n (a few per cent for
 * the logs of the study), so 0.2 leaves room for short logs; a project
 * convention, checked by the calibration study. */
#define EL_DYNAMICS_R2_MAX 0.2

/* The test's result. tested = 0 when no channel could be tested (fewer
 * than 10 samples, or every channel constant): then nothing is withheld. */
typedef struct {
    int tested;               /* 1: at least one channel was tested */
    size_t n_samples;         /* samples per channel */
    size_t lags;              /* h = el_validate_ljung_box_lags(n, 0): min(20, n/5) */
    size_t n_tested;          /* channels tested (constant ones are skipped) */
    size_t channel;           /* the channel with the smallest p-value */
    double q;                 /* its Ljung-Box statistic (NaN when !tested) */
    double p_min;             /* its p-value (chi-square, h degrees of freedom) */
    double p_family;          /* min(1, n_tested * p_min): Bonferroni-adjusted */
    int white;                /* 1: tested and p_family >= EL_DYNAMICS_ALPHA */
} el_dynamics_test;

/* Tests each channel of series (values as they are: the caller passes the
 * detrended, not yet band-limited series) against white noise with the
 * Ljung-Box statistic (Ljung & Box 1978) at lags 1..h, h = min(20, n/5),
 * h degrees of freedom (nothing was fitted to the data), and fills *out.
 * O(n h) per channel; allocates nothing. EL_ERR_INTERNAL for NULL
 * arguments; a series too short or all constant is not an error (tested
 * = 0). */
el_status el_dynamics_test_series(const el_series *series, el_dynamics_test *out,
                                  el_error *err);

/* The same test, also writing each channel's figures for the reports:
 * q[c] its Ljung-Box statistic and p[c] its p-value (h degrees of freedom)
 * for c < series->n_channels, NaN for a channel not tested (constant, or a
 * series too short for any lag). q and p are the caller's arrays of
 * series->n_channels doubles, or both NULL (then exactly
 * el_dynamics_test_series). Errors as el_dynamics_test_series. */
el_status el_dynamics_test_channels(const el_series *series, el_dynamics_test *out,
                                    double *q, double *p, el_error *err);

/* The rule: 1 when the log shows no dynamics, i.e. the test was made, no
 * channel's data differs from white noise at the family-wise level
 * EL_DYNAMICS_ALPHA, and the fitted model's one-step R^2 fit_r2 is below
 * EL_DYNAMICS_R2_MAX (a NaN fit_r2 counts as below: a model with no R^2
 * shows nothing either). 0 otherwise; 0 for NULL t. */
int el_dynamics_none(const el_dynamics_test *t, double fit_r2);

#endif
