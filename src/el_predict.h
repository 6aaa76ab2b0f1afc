/* el_predict: what a fitted model says the channels should have done over
 * its window: one-step predictions (from each measured state) and the free
 * run (simulated from the first state with no correction), in physical
 * units, with their errors relative to each channel's spread. */
#ifndef EL_PREDICT_H
#define EL_PREDICT_H

#include <stddef.h>

#include "el_error.h"
#include "el_fit.h"
#include "el_timebase.h"

/* A free run stops when a simulated channel leaves its measured range by
 * more than this many times the range: past that the run says nothing
 * more than "it diverges", and going on would overflow to inf. */
#define EL_PREDICT_DIVERGENCE_FACTOR 1e6

/* Plan and result in one. Sample indices k count from 0 at the series'
 * first sample; K = lags. Storage is per channel, contiguous: value i of
 * channel c is array[c * count + i] with the count of that array.
 *
 * one_step: x_hat[k+1] = first n_channels rows of (Ad z[k] + c) with z[k]
 *   the measured state [x[k]; x[k-1]; ...; x[k-K]], for k = K .. N-2, i.e.
 *   samples one_step_first = K+1 .. N-1, one_step_count = N - K - 1 values.
 * free_run: z[K] measured, then z[k+1] = Ad z[k] + c with no correction;
 *   samples free_first = K .. K + free_count - 1 (free_run value 0 is the
 *   measured x[K]). free_count = N - K unless the run diverged.
 * Divergence: after each step, when a channel's simulated value is not
 *   finite or lies farther than EL_PREDICT_DIVERGENCE_FACTOR * range from
 *   the middle of the measured range (range = max - min of that channel
 *   over the whole window; 1 when the channel is constant), the run stops:
 *   free_diverged = 1, free_diverged_at = that sample (not stored), and
 *   free_count < N - K. Every stored value is finite.
 * Errors, per channel, as a fraction of the channel's population standard
 *   deviation (divide by n) over the same samples: 1.0 is no better than
 *   predicting the mean, 0 is perfect.
 *   one_step_nrmse over samples K+1 .. N-1;
 *   free_nrmse over samples K .. N-1; it is NaN (report "n/a"/null, the
 *   flag free_diverged says why) when the run diverged, because the
 *   error of a diverging run is unbounded, not the RMS of its finite part;
 *   either is NaN as well when the channel is constant over those samples
 *   (std 0: no scale to compare with). */
typedef struct {
    size_t n_channels;
    size_t lags;
    size_t state_dim;
    size_t max_samples;       /* capacity given at creation */
    size_t n_samples;         /* N of the last run */
    size_t one_step_first, one_step_count;
    double *one_step;         /* n_channels * one_step_count */
    size_t free_first, free_count;
    int free_diverged;
    size_t free_diverged_at;  /* sample index; meaningful when free_diverged */
    double *free_run;         /* n_channels * free_count */
    double *one_step_nrmse;   /* n_channels */
    double *free_nrmse;       /* n_channels */
    double *work;             /* scratch: current and next state, divergence bands */
    const el_series *inputs;  /* measured inputs (el_prediction_set_inputs), NULL = none */
    int traces;               /* 1: one_step and free_run are kept (el_prediction_create);
                                 0: they are NULL, only the errors and the divergence
                                 are filled (el_prediction_create_errors) */
    int skip_one_step;        /* 1: el_prediction_run makes the free run only
                                 (el_prediction_skip_one_step) */
} el_prediction;

/* Plans predictions for models of n_channels channels with lags delay
 * copies over series of at most max_samples samples: allocates every
 * output and the state workspace once, so el_prediction_run allocates
 * nothing and can be repeated (tracking windows). *out receives the plan
 * (free with el_prediction_destroy). Errors: EL_ERR_INTERNAL when
 * n_channels == 0, out is NULL, or max_samples < lags + 2 (no one-step
 * prediction would exist); EL_ERR_NOMEM. */
el_status el_prediction_create(size_t n_channels, size_t lags,
                               size_t max_samples, el_prediction **out,
                               el_error *err);

/* As el_prediction_create, but keeps no traces: one_step and free_run
 * stay NULL (their counts and first samples are still set), and
 * el_prediction_run computes the errors and the divergence from running
 * sums as it goes, the same doubles as with traces (the same additions in
 * the same order). Memory O(state), not O(samples): what el_validation
 * uses, which needs no trace. Errors as el_prediction_create. */
el_status el_prediction_create_errors(size_t n_channels, size_t lags, size_t max_samples,
                                      el_prediction **out, el_error *err);

/* The one-step prediction of sample k + 1 from the measured state at
 * sample k (lags <= k <= n_samples - 2 of series): a pointer to the
 * plan's scratch whose first n_channels values are the channels'
 * predictions (valid until the next call with this plan): the numbers
 * el_prediction_run stores in one_step. The plan's inputs are used as
 * there; the caller has checked model and series against the plan (as
 * el_prediction_run does). Can't fail. */
const double *el_prediction_one_step(el_prediction *plan, const el_model *model,
                                     const el_series *series, size_t k);

/* Fills the plan's outputs from model (uses n_channels, lags, state_dim,
 * ad and offset, all in physical units) over series (values, n_samples,
 * n_channels); see el_prediction for the definitions. A diverging free
 * run is not an error (flagged in the plan). Errors: EL_ERR_INTERNAL when
 * the model's or series' channel count or lags differ from the plan,
 * state_dim != n_channels * (lags + 1), a pointer is NULL, or n_samples is
 * outside [lags + 2, max_samples]. Reads model and series only; a plan
 * must not be shared by two threads at once. */
el_status el_prediction_run(el_prediction *plan, const el_model *model,
                            const el_series *series, el_error *err);

/* Gives the plan the measured inputs u of a model fitted with inputs
 * (same grid as the series it will run on): each step then adds
 * input_b u[k]. NULL (the default) means none; a model with inputs run
 * without them is refused by el_prediction_run (EL_ERR_INTERNAL). The
 * series is borrowed and must outlive the runs. Can't fail. */
void el_prediction_set_inputs(el_prediction *plan, const el_series *inputs);

/* On a plan without traces (el_prediction_create_errors), skip != 0 makes
 * el_prediction_run leave out its pass of one-step predictions: only the
 * free run is made, and one_step_nrmse is left to the caller, which has
 * the one-step errors from a pass of its own (el_validation: from its
 * residual sums, the same doubles). A pass over the window fewer. No
 * effect on a plan with traces. Can't fail; NULL is a no-op. */
void el_prediction_skip_one_step(el_prediction *plan, int skip);

/* Frees the plan and its outputs. NULL is a no-op. */
void el_prediction_destroy(el_prediction *plan);

#endif
