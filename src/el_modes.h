/* el_modes: eigen-analysis of a fitted model: discrete eigenvalues mu,
 * continuous lambda = ln(mu)/dt, frequency, damping, time constants and
 * each mode's shape per channel in physical units. */
#ifndef EL_MODES_H
#define EL_MODES_H

#include <stddef.h>

#include "el_error.h"
#include "el_fit.h"

/* Values that do not exist are NaN (the JSON writer prints null):
 * - at_nyquist: frequency_hz and damping_ratio are NaN (the true frequency
 *   is any alias (2n+1)/(2 dt); |mu|, hence Re lambda, decay_rate and
 *   time_constant_s, is measured correctly whatever the alias);
 * - instantaneous (mu == 0): lambda_re = -INFINITY, decay_rate NaN,
 *   time_constant_s 0 (gone within one sample), damping_ratio 1, frequency 0;
 * - lambda == 0 exactly: damping_ratio NaN; Re lambda == 0: time_constant_s
 *   NaN. */
typedef struct {
    double mu_re, mu_im;          /* discrete-time eigenvalue */
    double lambda_re, lambda_im;  /* continuous, 1/time unit; im >= 0 for a pair */
    int pair;                     /* 1: stands for a complex-conjugate pair (im > 0 shown) */
    int at_nyquist;               /* 1: mu on the negative real axis (aliased or unresolved);
                                     frequency_hz is then NaN and must be reported as null */
    int instantaneous;            /* 1: mu == 0 (lambda = -inf); rates are NaN -> null */
    double frequency_hz;          /* lambda_im / (2 pi); 0 for a real mode */
    double damping_ratio;         /* -Re lambda / |lambda| */
    double decay_rate;            /* -Re lambda (negative when growing) */
    double time_constant_s;       /* 1/|Re lambda| when decaying; ln 2 / Re lambda
                                     (doubling time) when growing; NaN at Re = 0 */
    double *shape_magnitude;      /* n_channels, largest = 1 (physical units) */
    double *shape_phase_deg;      /* n_channels, relative to the largest, (-180, 180] */
    double *shape_scaled_magnitude; /* n_channels: the shape with each channel divided
                                     by its standard deviation over the fitted window
                                     (model->channel_scale), largest = 1; unit-free */
    double *shape_scaled_phase_deg; /* n_channels, relative to the largest scaled
                                     entry, (-180, 180] */
    double *participation;        /* n_channels: participation factors (Perez-Arriaga,
                                     Verghese & Schweppe 1982) of the model's states,
                                     |l_i r_i| normalised to sum 1 over the states,
                                     summed over each channel's lagged copies: the
                                     channels' shares, sum 1; NaN when the mode's
                                     left and right vectors are orthogonal */
} el_mode;

typedef struct el_modes {
    size_t n_modes;               /* one per real eigenvalue or conjugate pair */
    size_t n_eigenvalues;         /* counting both members of each pair */
    size_t n_channels;
    el_mode *modes;               /* least damped first (largest Re lambda first) */
} el_modes;

/* Continuous eigenvalue of a discrete one: lambda = ln(mu)/dt (principal
 * branch). Sets *at_nyquist (may be NULL) when mu lies on the negative real
 * axis within a relative 1e-12 (|Im mu| <= 1e-12 |mu| and Re mu < 0); then
 * lambda_im = +pi/dt whatever the sign of Im mu. Returns re = -INFINITY,
 * im = 0 for mu == 0. Can't fail. */
void el_modes_lambda(double mu_re, double mu_im, double dt, double *lambda_re,
                     double *lambda_im, int *at_nyquist);

/* Computes the modes of the model (eigenvalues of a_reduced by LAPACK
 * dgeev; shapes from the exact DMD modes lift * W (Tu et al. 2014), taken
 * at lag 0, times channel_scale, in physical units; the scaled shapes are
 * the same vectors without channel_scale, i.e. in units of each channel's
 * standard deviation). Where the exact mode vanishes (mu == 0, or lift * w
 * below rounding) the projected mode basis * w is used instead.
 * Participation factors: with r the mode vector above (state_dim
 * entries, the scaled lagged channels) and l = basis * v (v the left
 * eigenvector of a_reduced; l is the left eigenvector of
 * Ad_s = lift basis'), p_i = |conj(l_i) r_i| / sum_k |conj(l_k) r_k|, and
 * channel c's participation is the sum of p_i over its lags. The products
 * do not change when a state is rescaled (l_i r_i is invariant under a
 * diagonal similarity), so they are the same in physical units. Modes are sorted by Re lambda, largest first;
 * ties by frequency, lowest first (NaN last), then by LAPACK's order. A
 * conjugate pair is one mode (Im lambda > 0 shown); a pair whose mu lies on
 * the negative real axis within 1e-12 is flagged at_nyquist as well.
 * *modes must be zero-initialised or freed. Adds a warning for each mode
 * at the Nyquist limit. EL_ERR_NUMERIC when the eigenvalue solver fails;
 * EL_ERR_INTERNAL for a model without a fit; EL_ERR_NOMEM. On error *modes
 * is left empty. */
el_status el_modes_compute(const el_model *model, el_modes *modes,
                           el_warnings *warnings, el_error *err);

/* Frees the modes and zeroes the struct. NULL is a no-op. */
void el_modes_free(el_modes *modes);

#endif
