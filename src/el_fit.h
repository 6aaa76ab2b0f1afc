/* el_fit: the local linear model z[k+1] = Ad z[k] + B u[k] + c fitted to
 * snapshot pairs of a uniform series (affine least squares / exact DMD with
 * rank truncation, DMD with control, and the noise-robust estimators of
 * el_estimator.h), its fixed point, and one-step fit statistics. */
#ifndef EL_FIT_H
#define EL_FIT_H

#include <stddef.h>

#include "el_error.h"
#include "el_estimator.h"
#include "el_model.h"
#include "el_timebase.h"

/* el_fit_defaults, el_method, el_fit_options, el_model, el_model_free and
 * the hard threshold are in el_model.h; el_method_name, _description and
 * _parse in el_estimator.h (the table of estimators). */

/* Fits the model to the series. Centres X (z[k], k = K..N-2) and Y (z[k+1])
 * by their means (affine least squares == regression of centred Y on
 * centred X), takes the thin SVD of the centred scaled X by LAPACK (an
 * orthogonal method, never normal equations), truncates to the rank asked
 * for (or the Gavish-Donoho threshold), and sets Ad = Yc V S^-1 U', c =
 * mean(Y) - Ad mean(X), z* = (I - Ad)^-1 c. Singular values at or below
 * max(n_pairs, state_dim) * DBL_EPSILON * the largest (the numpy lstsq
 * cut-off) are never inverted: the rank is lowered to the numerical rank
 * with a warning (linearly dependent channels or lags), so a full-rank fit
 * is the minimum-norm least-squares solution. Adds warnings for: I - Ad
 * near singular (rcond < 1e-8: an eigenvalue near 1), rank truncated, few
 * pairs per parameter (< 10 per coefficient of a row, common practice).
 * The operating point is not reported (operating_point_ok = 0, values 0)
 * when I - Ad is singular to working precision: rcond below 1e3 * state_dim
 * * DBL_EPSILON * cond(X_r), where rounding alone can move z* by more than
 * 0.1%.
 * Other methods (opt->method): fb and tls use the same basis U_r and rank
 * rule and replace the regression by their estimator in the reduced
 * coordinates; iv and ssi choose basis and rank from the canonical
 * correlations of the state with the past measurements; see el_est_common.h
 * for each estimator, its warnings and its failures. The reduced matrix is
 * computed exactly as the bootstrap provider of el_estimator.h would from
 * the reduced states, so a bootstrap replicate over all pairs reproduces it.
 * Inputs (opt->inputs, ls and iv): each input is scaled like a channel;
 * ls regresses Y on [X_r; U] (DMD with control, Proctor et al. 2016: exact
 * DMD when there is no input), B and c are reported in physical units and
 * the operating point holds the inputs at their mean.
 * Errors: EL_ERR_DATA when a channel or input is constant (std == 0 or
 * std <= 1e-12 |mean|; names it; hint: leave it out with --channels) or not
 * finite, an input is a linear combination of the state, the instruments
 * predict nothing (iv, ssi), or there are fewer snapshot pairs than
 * 2 * (state_dim + 1) (iv, ssi: fewer instrument windows; hint: longer
 * window, fewer lags); EL_ERR_USAGE (option "--rank", "--lags", "--method",
 * "--depth" or "--input") when rank > state_dim, rank < -1, the method is
 * unknown, depth is too large for the series, or inputs are given to a
 * method that takes none or do not match the series; EL_ERR_NUMERIC when
 * LAPACK fails or the estimator's system is singular (fb: backward model
 * not invertible or no real square root; tls: no total-least-squares
 * solution; iv/ssi: instruments too weak); EL_ERR_NOMEM. *model must be
 * zero-initialised or freed; on error it is left empty. */
el_status el_fit(const el_series *series, const el_fit_options *opt,
                 el_model *model, el_warnings *warnings, el_error *err);


/* Plan for fitting many series of the same size with the same options
 * (tracking windows): sizes, checks and every LAPACK workspace (queried
 * with lwork = -1) are fixed at creation; execute allocates nothing when
 * it refills a model it filled before (its fields: el_model.h, for the
 * estimators). A plan may be used by one
 * thread at a time; separate plans are independent. */

/* Creates a plan for series of n_samples x n_channels fitted with opt
 * (NULL = defaults) and stores it in *plan (NULL on error). The plan keeps
 * opt->inputs (a pointer: the input series must outlive the plan; use
 * el_fit_plan_execute_inputs to pass another window's inputs of the same
 * size). Errors as el_fit for the sizes and options: EL_ERR_DATA for too
 * few snapshot pairs, EL_ERR_USAGE for a bad rank, depth, method or
 * inputs, EL_ERR_DATA when the sizes exceed LAPACK's integer range,
 * EL_ERR_NOMEM. Free with el_fit_plan_destroy. */
el_status el_fit_plan_create(size_t n_samples, size_t n_channels,
                             const el_fit_options *opt, el_fit_plan **plan,
                             el_error *err);

/* Fits series (which must have the plan's n_samples and n_channels, else
 * EL_ERR_INTERNAL) into *model: a zero-initialised model is allocated, a
 * model filled before by this plan or another of the same sizes is
 * overwritten in place without allocating. Same results, warnings and
 * errors as el_fit. On error the model keeps its allocation with
 * unspecified contents (refill or free it). */
el_status el_fit_plan_execute(el_fit_plan *plan, const el_series *series,
                              el_model *model, el_warnings *warnings,
                              el_error *err);

/* As el_fit_plan_execute, with the measured inputs of this window (same
 * n_samples as series, as many channels as the plan's inputs; NULL only
 * when the plan has none). EL_ERR_INTERNAL when the sizes differ. */
el_status el_fit_plan_execute_inputs(el_fit_plan *plan, const el_series *series,
                                     const el_series *inputs, el_model *model,
                                     el_warnings *warnings, el_error *err);

/* Frees the plan. NULL is a no-op. */
void el_fit_plan_destroy(el_fit_plan *plan);

#endif
