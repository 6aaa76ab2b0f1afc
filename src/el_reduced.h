/* el_reduced: reduced coordinates of a fitted model.
 *
 * For a model with basis U_r (state_dim x r), the reduced state of sample
 * k is w[k] = sqrt(m) L^-1 U_r' (z[k] - mean(X)), where G = L L' is the
 * Cholesky factor of sum_k p[k] p[k]' over the m snapshot pairs and
 * p[k] = U_r' (z[k] - mean(X)). Over the full sample sum w w' = m I, so w
 * is O(1) per pair, and the eigenvalues of a matrix fitted in w equal
 * those fitted in U_r coordinates (a similarity by L). Below the
 * estimators and the bootstrap, which both start from these states. */
#ifndef EL_REDUCED_H
#define EL_REDUCED_H

#include <stddef.h>

#include "el_error.h"
#include "el_model.h"
#include "el_timebase.h"

/* In-place lower Cholesky of the n x n column-major s (upper part is left
 * as it was). Returns 1 when a pivot is not above rel_tol times the largest
 * diagonal entry: the matrix is singular to the precision that matters.
 * No LAPACK, so that nothing allocates and every thread runs the same
 * instruction sequence. */
int el_reduced_cholesky(size_t n, double *s, double rel_tol);

/* Solves L x = b in place (L lower, from el_reduced_cholesky). From order
 * 128 on by BLAS (dtrsv; the same solution to rounding, several times
 * faster there); below it by plain loops, the same bits on every CPU. */
void el_reduced_forward_subst(size_t n, const double *l, double *x);

/* Solves L' x = b in place (BLAS from order 128 on, as above). */
void el_reduced_backward_subst(size_t n, const double *l, double *x);

/* The projection that reduced states start from: p[t] = U_r' (z[t] -
 * mean(X)) for t = 0 .. n_pairs (z[t] the scaled state of sample lags + t
 * as the fit builds it, mean(X) over the pairs' first states) into p
 * (rank x (n_pairs + 1), column-major, state t at p + t rank; caller-owned),
 * and gram = sum over the n_pairs pairs of p p' (rank x rank, lower
 * triangle; the upper holds no meaning). Done in fixed chunks of states on
 * up to threads threads (>= 1), the Gram summed in chunk order, so the
 * numbers do not depend on the thread count. Errors: EL_ERR_INTERNAL when
 * the series does not fit the model; EL_ERR_NOMEM. */
el_status el_boot_project_states(const el_series *series, const el_model *model,
                                 size_t threads, double *p, double *gram, el_error *err);

/* states (r x n_states, column-major) = scale L^-1 states in place, L the
 * lower triangle of chol (r x r, column-major), in the same fixed chunks
 * on up to threads threads. Returns EL_ERR_INTERNAL for a NULL pointer or
 * a zero size, else EL_OK. */
el_status el_boot_whiten_states(const double *chol, size_t r, size_t n_states, double scale,
                                size_t threads, double *states);

/* Builds the reduced state sequence of el_boot_run (see above) for the
 * model fitted to series: states receives (model->n_pairs + 1) * rank
 * doubles (allocated, owned by the caller, free()). EL_ERR_INTERNAL when
 * the series does not fit the model; EL_ERR_NUMERIC when the projected
 * snapshots are rank-deficient; EL_ERR_NOMEM. */
el_status el_boot_reduced_states(const el_series *series,
                                 const el_model *model, double **states,
                                 el_error *err);


/* el_boot_reduced_states on up to threads threads (the same numbers). */
el_status el_boot_reduced_states_threads(const el_series *series, const el_model *model,
                                         size_t threads, double **states, el_error *err);

#endif
