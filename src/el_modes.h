/* el_modes: eigen-analysis of a fitted model: discrete eigenvalues mu,
 * continuous lambda = ln(mu)/dt, frequency, damping, time constants and
 * each mode's shape per channel in physical units. */
#ifndef EL_MODES_H
#define EL_MODES_H

#include <stddef.h>

#include "el_error.h"
#include "el_fit.h"

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
    double *shape_magnitude;      /* n_channels, largest = 1 */
    double *shape_phase_deg;      /* n_channels, relative to the largest, (-180, 180] */
} el_mode;

typedef struct {
    size_t n_modes;               /* one per real eigenvalue or conjugate pair */
    size_t n_eigenvalues;         /* counting both members of each pair */
    size_t n_channels;
    el_mode *modes;               /* least damped first (largest Re lambda first) */
} el_modes;

/* Continuous eigenvalue of a discrete one: lambda = ln(mu)/dt (principal
 * branch). Sets *at_nyquist when mu lies on the negative real axis within
 * a relative 1e-12, and returns re = -INFINITY for mu == 0. */
void el_modes_lambda(double mu_re, double mu_im, double dt, double *lambda_re,
                     double *lambda_im, int *at_nyquist);

/* Computes the modes of the model (eigenvalues of a_reduced by LAPACK
 * dgeev; shapes from the exact DMD modes lift * W, taken at lag 0, in
 * physical units). *modes must be zero-initialised or freed. Adds a
 * warning for each mode at the Nyquist limit. EL_ERR_NUMERIC when the
 * eigenvalue solver fails. */
el_status el_modes_compute(const el_model *model, el_modes *modes,
                           el_warnings *warnings, el_error *err);

/* Frees the modes and zeroes the struct. NULL is a no-op. */
void el_modes_free(el_modes *modes);

#endif
