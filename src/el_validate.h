/* el_validate: does the fitted model explain the window? One-step R^2,
 * free-run error, residual whiteness (Ljung-Box) and residual-to-signal
 * variance per channel, with plain-word warnings when the model fails them;
 * and the distribution functions those tests need. */
#ifndef EL_VALIDATE_H
#define EL_VALIDATE_H

#include <stddef.h>

#include "el_error.h"
#include "el_fit.h"
#include "el_predict.h"
#include "el_timebase.h"
#include "el_verdict.h"

/* Family-wise level of the whiteness test over all channels: a channel is
 * flagged when its Ljung-Box p-value is below this divided by the number
 * of channels (Bonferroni), so a correct model raises the warning on at
 * most 1% of windows whatever the channel count. */
#define EL_VALIDATE_WHITENESS_ALPHA 0.01

/* A free run whose RMS error exceeds this many channel standard deviations
 * has left the data (a convention of this project: the measured signal
 * itself never strays more than a few standard deviations). */
#define EL_VALIDATE_DIVERGENCE_NRMSE 10.0

/* Residual-to-signal variance ratio above which the model "explains little"
 * (a convention of this project: less than half the variance explained). */
#define EL_VALIDATE_EXPLAINS_LITTLE 0.5

/* Residual RMS, relative to the channel's standard deviation, at or below
 * which a model counts as exact (rounding errors of double arithmetic on
 * data with an offset up to 1e5 standard deviations stay below this). */
#define EL_VALIDATE_EXACT_RMS 1e-9

/* Regularised upper incomplete gamma function Q(a, x) = Gamma(a, x) /
 * Gamma(a) for a > 0, x >= 0, by the series for P = 1 - Q when
 * x < a + 1 and the continued fraction for Q (modified Lentz) otherwise
 * (Press, Teukolsky, Vetterling & Flannery 2007, Numerical Recipes, 3rd
 * ed., section 6.2); ln Gamma by the Lanczos (1964) approximation, g = 7,
 * nine coefficients. Relative accuracy about 1e-13 for a <= 500 (limited
 * by rounding in the exponent -x + a ln x - ln Gamma(a)). Q(a, 0) = 1,
 * Q(a, +inf) = 0. Returns NaN for a <= 0, x < 0 or NaN arguments (never
 * for valid ones). Thread-safe (no lgamma, whose sign global races). */
double el_validate_gamma_q(double a, double x);

/* Upper tail of the chi-square distribution with dof > 0 degrees of
 * freedom: P(X >= q) = Q(dof/2, q/2). q <= 0 gives 1. NaN for dof <= 0 or
 * NaN arguments. */
double el_validate_chi2_sf(double q, double dof);

/* Ljung-Box statistic (Ljung & Box 1978, Biometrika 65(2), 297-303) of
 * e[0..n) at lags 1..h: Q = n (n + 2) sum_{k=1}^{h} r_k^2 / (n - k), with
 * r_k = sum_{t=k}^{n-1} d_t d_{t-k} / sum_t d_t^2 and d = e - mean(e) (the
 * sample autocorrelation with the usual divisor-n autocovariance).
 * Returns NaN when h == 0, h >= n, e is NULL, or e does not vary (no
 * correlation is defined). O(n h), no allocation. */
double el_validate_ljung_box(const double *e, size_t n, size_t h);

/* Number of lags h of the whiteness test for n residuals and p fitted
 * autoregressive parameters per channel: min(20, n/5) (common practice;
 * Ljung & Box used up to 20-30 lags), raised to min(p + 10, n/5) when
 * p >= 10 so a deep lag model still leaves degrees of freedom; n/5 is
 * rounded down. The test exists only when the result exceeds p. */
size_t el_validate_ljung_box_lags(size_t n, size_t p);

/* Plan and result in one (as el_prediction). Every per-channel array has
 * n_channels entries; a value that does not exist is NaN (the JSON writer
 * prints null) and the flag beside it says why.
 *
 * Samples: K = lags, N = n_samples; residuals e[k] = x[k] - one-step
 * prediction for k = K+1 .. N-1 (n_residuals = N - K - 1), physical units.
 * r2_one_step = 1 - sum e^2 / sum (x - mean x)^2 over those samples; it
 *   must equal the model's channel_r2 when the model was fitted to this
 *   series (a cross-check of the fit); NaN when the channel is constant.
 * residual_ratio = var(e) / var(x) over the same samples (population
 *   variances, e about its own mean); NaN when the channel is constant.
 * free_nrmse: el_prediction's free-run RMS error over samples K .. N-1 in
 *   channel standard deviations; NaN when the run diverged (el_predict
 *   stops it) or the channel is constant.
 * free_diverges = 1 when el_predict stopped the run, or some channel's
 *   free_nrmse exceeds EL_VALIDATE_DIVERGENCE_NRMSE.
 * Ljung-Box per channel on e with lb_lags = el_validate_ljung_box_lags(n,
 *   p), where p = lb_params = lags + 1 is the order of each channel's own
 *   autoregression in the model (the lag depth; cross-channel and
 *   intercept terms are not counted: the univariate convention of Box &
 *   Pierce 1970 for an AR(p) fit applied per channel), lb_dof = h - p.
 *   lb_tested = 0 (q and p NaN) when h <= p. A channel's q and p are NaN
 *   as well when its residuals are at rounding level, residual_exact[c] =
 *   1: residual RMS <= EL_VALIDATE_EXACT_RMS times the channel's standard
 *   deviation (an exact model of noise-free data; the correlation of
 *   rounding errors says nothing about the model).
 *   A channel fails when ljung_box_p < EL_VALIDATE_WHITENESS_ALPHA /
 *   n_channels; residuals_white = 1 when none fails.
 * explains_little = 1 when some channel's residual_ratio exceeds
 *   EL_VALIDATE_EXPLAINS_LITTLE. */
typedef struct {
    size_t n_channels;
    size_t lags;
    size_t max_samples;
    size_t n_residuals;
    double *r2_one_step;
    double *residual_ratio;
    double *free_nrmse;
    int free_diverges;
    int lb_tested;
    size_t lb_lags, lb_params, lb_dof;
    double *ljung_box_q;
    double *ljung_box_p;
    int *residual_exact;
    int residuals_white;
    int explains_little;
    int band_limited;            /* the series was band-limited (el_validation_set_band_limited) */
    el_prediction *prediction;   /* owned: the free-run error (no traces are kept:
                                    el_prediction_create_errors) */
    double *residual;            /* scratch: the streamed residual sums per channel
                                    (means, squares, lag products, a ring of the last
                                    max_lb_lags + 1 residuals), no array of the
                                    window's length */
    size_t max_lb_lags;          /* most Ljung-Box lags of this plan's windows */
} el_validation;

/* Plans validation of models with n_channels channels and lags delay
 * copies over series of at most max_samples samples: allocates every
 * output, the el_prediction plan (without traces) and the scratch of the
 * streamed residual statistics (O(channels x lags), nothing of the
 * window's length: the residuals are made twice, by two passes of
 * one-step predictions, instead of stored) once, so
 * el_validation_run allocates nothing. *out receives the plan (NULL on
 * error). Errors: EL_ERR_INTERNAL when out is NULL, n_channels == 0 or
 * max_samples < lags + 2; EL_ERR_NOMEM. Free with el_validation_destroy. */
el_status el_validation_create(size_t n_channels, size_t lags, size_t max_samples,
                               el_validation **out, el_error *err);

/* Runs the predictions of model over series (the same prepared series the
 * model was fitted to) and fills every number of *v (see el_validation).
 * stability is the verdict's class, or NULL when there is no verdict yet
 * (then the divergence warning is not given). Adds to *warnings (NULL:
 * dropped), naming channels by series->names when present:
 *   "residuals strongly correlated (Ljung-Box p = P on channel X): add
 *    lags" for each failing channel;
 *   "free run diverges although the verdict is stable: do not trust it"
 *    when free_diverges and *stability == EL_STABLE;
 *   "residual variance is N% of the signal on channel X: the model
 *    explains little" for each channel over EL_VALIDATE_EXPLAINS_LITTLE.
 * The "add lags" advice is given only when the correlation can come from
 * missing lags: when the model keeps fewer directions than states (rank <
 * state_dim: the dropped directions stay in the residuals) or the series
 * was band-limited (the filter colours what the model does not explain),
 * the warning says that instead and advises no lags.
 * Errors: as el_prediction_run (EL_ERR_INTERNAL for a model or series that
 * does not match the plan); EL_ERR_NOMEM when a warning cannot be stored.
 * Reads model and series only. One thread per plan at a time. */
/* Gives the validation the measured inputs of a model fitted with inputs
 * (see el_prediction_set_inputs). Can't fail. */
void el_validation_set_inputs(el_validation *v, const el_series *inputs);

/* Tells the validation that the series it will run on was band-limited
 * (1) or not (0, the default), for the advice above. Can't fail. */
void el_validation_set_band_limited(el_validation *v, int band_limited);

el_status el_validation_run(el_validation *v, const el_model *model,
                            const el_series *series, const el_stability *stability,
                            el_warnings *warnings, el_error *err);

/* Frees the plan and everything it owns. NULL is a no-op. */
void el_validation_destroy(el_validation *v);

#endif
