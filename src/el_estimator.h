/* el_estimator: what an estimator is. One const el_estimator_type per
 * family (least squares / exact DMD; forward-backward; total least squares;
 * instrumental variables; subspace identification), each in its own file
 * (el_est_ls.c, el_est_fb.c, el_est_iv.c, el_est_ssi.c), registered in the
 * one table of el_estimator.c. The fit (el_fit) and the bootstrap
 * (el_resample) know estimators only through this interface: a plan of
 * private workspace, the fit of the reduced system into a model, and the
 * bootstrap statistics provider (per-pair features that add, their fast
 * sum over a run of pairs, and the replicate solve). Adding an estimator
 * is one new file and one row of the table (DEVELOPERS.md). */
#ifndef EL_ESTIMATOR_H
#define EL_ESTIMATOR_H

#include <stddef.h>

#include "el_error.h"
#include "el_model.h"
#include "el_timebase.h"

/* Declared in el_modes.h, el_resample.h and el_boot_bounds.h (which
 * include this header): only pointers pass here. */
struct el_modes;
struct el_boot_options;
struct el_boot_result;

/* The shape of the reduced data a provider reads and solves for.
 *   r:        reduced dimension (the solve writes an r x r matrix);
 *   n_inputs: measured input values stored after the r state values of
 *             every state (so a state is r + n_inputs doubles): the scaled
 *             input u[k] of the sample of that state (fixed regressors);
 *   lags:     K of the model (the window positions of iv and ssi). */
typedef struct {
    size_t r, n_inputs, lags;
} el_boot_dims;

/* A statistics provider: turns the reduced state sequence (n_states states
 * of dims->r + dims->n_inputs doubles, contiguous) into one additive
 * feature vector per snapshot pair, and a sum of such vectors over any
 * multiset of pairs into the reduced system matrix. Because features add,
 * a bootstrap replicate of any estimator that is a function of lagged
 * cross-products (least squares uses sum X X', Y X', X, Y and the count,
 * with inputs the products with U too; instrumental variables,
 * forward-backward, total least squares and covariance-driven subspace
 * identification add Y Y' or products at further lags, span > 2) is
 * assembled from per-block sums without touching the data again.
 *   span:        pair k reads states k .. k+span-1 (2 for one-step models)
 *   n_features:  feature vector length
 *   work_doubles: scratch doubles solve() needs
 *   features:    writes the features of one pair; states points at its
 *                span consecutive states
 *   accumulate:  may be NULL; adds the features of n_pairs consecutive
 *                pairs (the first at states) to acc, a plain sum, what
 *                features() summed pair by pair gives up to rounding, but
 *                fast (matrix products): the engine's one pass over the data
 *                and the full-sample refit use it when it is there; work
 *                holds work_doubles doubles
 *   solve:       from the summed features writes a (r x r, column-major),
 *                when b != NULL the input matrix (r x n_inputs; nothing
 *                without inputs) and, when offset != NULL, the intercept
 *                (r); returns 0, or 1 when the system is singular (the
 *                replicate fails).
 * Providers hold no state: they are safe to share between threads. Every
 * function takes the dims the engine was made with; a provider that takes
 * no inputs requires dims->n_inputs == 0. */
typedef struct {
    const char *name;
    size_t (*span)(const el_boot_dims *dims);
    size_t (*n_features)(const el_boot_dims *dims);
    size_t (*work_doubles)(const el_boot_dims *dims);
    void (*features)(const el_boot_dims *dims, const double *states, double *out);
    void (*accumulate)(const el_boot_dims *dims, const double *states, size_t n_pairs,
                       double *acc, double *work);
    int (*solve)(const el_boot_dims *dims, const double *sum, double *a, double *b,
                 double *offset, double *work);
} el_boot_provider;

/* Affine least squares in reduced coordinates, with inputs DMD with
 * control: regressor xi_k = [w_k; u_k] (r + n_inputs), response w_k+1;
 * features [1, xi_k, w_k+1, lower triangle of xi_k xi_k', w_k+1 xi_k'] and
 * [A B] = Syxi Sxixi^-1 from the centred cross-products, solved by a
 * Cholesky factorisation. Without inputs the layout is that of the plain
 * regression of w_k+1 on w_k. Span 2 for any lags. Never NULL. Defined
 * with the ls estimator (el_est_ls.c); the same as
 * el_estimator_provider(EL_METHOD_LS). */
const el_boot_provider *el_boot_provider_ls(void);

/* An estimator family. Every field is set (NULL only where it says so).
 *   method:           its value of el_method (model->method, JSON);
 *   name:             the --method spelling ("ls", ...);
 *   description:      its name for people ("instrumental variables", ...);
 *   takes_inputs:     1 when it fits measured inputs (--input);
 *   model_resampling: EL_MODEL_RESAMPLING_FULL (1) when the bootstrap may
 *                     regenerate one-step pairs through its model
 *                     (--resample model and the bias round: one-step
 *                     regression estimators only);
 *                     EL_MODEL_RESAMPLING_SPREAD when the bootstrap's
 *                     model round regenerates the states its provider
 *                     reads through the estimator's own full-sample fit
 *                     and widens the moving-block replicates to that
 *                     spread, with no bias shift and no --resample model
 *                     (el_resample.c, "spread round"); 0 (NONE) for
 *                     neither;
 *   plan_create:      sizes and allocates its private workspace for series
 *                     of n_samples x n_channels with n_inputs inputs and
 *                     the options (checks the options it alone knows;
 *                     EL_ERR_USAGE/EL_ERR_DATA with the option and a hint);
 *                     *state may be left NULL when it needs none;
 *   plan_destroy:     frees that workspace (NULL is a no-op);
 *   fit:              with the fit's workspace filled (el_model.h: centred
 *                     scaled snapshots, their SVD, inputs) and plan->est its
 *                     own workspace, chooses basis and rank, writes
 *                     model->a_reduced and the full-state model (lift,
 *                     ad_scaled, offset_scaled, input_b_scaled); the fit
 *                     does the rest (physical units, fixed point, R^2);
 *   provider:         its bootstrap statistics (see above), whose solve on
 *                     the states of boot_states over all pairs reproduces
 *                     model->a_reduced;
 *   boot_states:      the reduced states its provider reads
 *                     (el_estimator_boot_states);
 *   own_boot_states:  1 when those states differ from the reference
 *                     estimator's (el_estimator_reference) whitened states,
 *                     so the bootstrap must build them (tls: a scalar
 *                     scale); 0 when the reference states serve as they
 *                     are;
 *   prepare:          may be NULL; called by el_estimator_prepare before
 *                     the fit is planned, it may change the fit options
 *                     from the data (hankel: the lags its model's state
 *                     needs for the order the data support); errors as
 *                     the fit's;
 *   boot_run:         may be NULL; a bootstrap of its own that replaces
 *                     the engine of provider and boot_states (hankel:
 *                     block sums of the subspace stage, el_est_hankel.h),
 *                     with el_boot_run's contract (el_resample.h), which
 *                     calls it. */
/* Values of el_estimator_type.model_resampling. */
#define EL_MODEL_RESAMPLING_NONE 0
#define EL_MODEL_RESAMPLING_FULL 1
#define EL_MODEL_RESAMPLING_SPREAD 2

typedef struct el_estimator_type {
    el_method method;
    const char *name;
    const char *description;
    int takes_inputs;
    int model_resampling;
    el_status (*plan_create)(const el_fit_options *opt, size_t n_samples,
                             size_t n_channels, size_t n_inputs, void **state,
                             el_error *err);
    void (*plan_destroy)(void *state);
    el_status (*fit)(el_fit_plan *plan, const el_series *series, const el_series *inputs,
                     el_model *model, el_warnings *warnings, el_error *err);
    const el_boot_provider *provider;
    el_status (*boot_states)(const el_series *series, const el_series *inputs,
                             const el_model *model, double **states, size_t *n_states,
                             el_error *err);
    int own_boot_states;
    el_status (*prepare)(const el_series *series, el_fit_options *opt, el_error *err);
    el_status (*boot_run)(const el_series *series, const el_fit_options *opt_fit,
                          const el_model *model, const struct el_modes *modes,
                          const struct el_boot_options *opt,
                          struct el_boot_result *result, el_warnings *warnings,
                          el_error *err);
} el_estimator_type;

/* Runs the method's prepare hook on opt (nothing when it has none or
 * the method is unknown: the fit reports that). */
el_status el_estimator_prepare(const el_series *series, el_fit_options *opt,
                               el_error *err);

/* The estimator of a method, NULL for a value outside the table. */
const el_estimator_type *el_estimator_for(el_method m);

/* The estimator named as --method spells it, NULL for an unknown name. */
const el_estimator_type *el_estimator_find(const char *name);

/* The names of the table's estimators as --method spells them, in table
 * order, separated by ", " ("ls, fb, tls, iv, ssi"), into buf (cut short
 * at an entry that does not fit; "" for size 1). Returns buf. */
const char *el_estimator_names(char *buf, size_t size);

/* The estimator whose one-step residuals the bootstrap reads for the block
 * length and regenerates in model-based replicates (affine least squares:
 * the regression every method's data dependence is measured with). Never
 * NULL. */
const el_estimator_type *el_estimator_reference(void);

/* Short name of a method as the command line spells it ("ls", "fb", "tls",
 * "iv", "ssi"); "?" for a value outside the enum. Never NULL. */
const char *el_method_name(el_method m);

/* The method's name for people ("instrumental variables", ...). Static
 * text, never NULL. */
const char *el_method_description(el_method m);

/* Parses a method name as written after --method (exact, lower case).
 * Returns EL_OK and sets *m, or EL_ERR_USAGE (option "--method", hint
 * listing the names) for an unknown name. */
el_status el_method_parse(const char *text, el_method *m, el_error *err);

/* The statistics provider of method m (el_estimator_for(m)->provider);
 * NULL for a value outside the table. */
const el_boot_provider *el_estimator_provider(el_method m);

/* The provider that reproduces model's reduced matrix from the states of
 * el_estimator_boot_states with the dims of el_estimator_boot_dims: by
 * model->method. NULL for a NULL model, or for a model with inputs whose
 * method takes none. */
const el_boot_provider *el_estimator_provider_for(const el_model *model);

/* The dims of a fitted model for its provider: r = model->rank, n_inputs =
 * model->n_inputs, lags = model->lags (all 0 for NULL). */
el_boot_dims el_estimator_boot_dims(const el_model *model);

/* The reduced state sequence a model's provider expects: (model->n_pairs
 * + 1) states of sw = model->rank + model->n_inputs doubles (state t at
 * states[t * sw]): first w[t] = T U_r' (z[K+t] - mean(X)), with T the
 * Cholesky whitening of el_boot_reduced_states (same numbers to rounding)
 * for ls, fb, iv and ssi and the scalar sqrt(n_pairs * r / trace(G)) for
 * tls; then, with inputs, the scaled inputs of sample K + t,
 * (u_j - input_mean[j]) / input_scale[j], as the fit scales them. inputs
 * is the series the model was fitted with (NULL without inputs). *states
 * is allocated (free()); *n_states receives n_pairs + 1. Dispatches to the
 * model's estimator (boot_states). Errors: EL_ERR_INTERNAL when the series
 * or the inputs do not fit the model or the method is unknown;
 * EL_ERR_NUMERIC when the projected snapshots have no spread along a basis
 * direction; EL_ERR_NOMEM. */
el_status el_estimator_boot_states(const el_series *series, const el_series *inputs,
                                   const el_model *model, double **states,
                                   size_t *n_states, el_error *err);

#endif
