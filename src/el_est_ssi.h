/* el_est_ssi: the subspace estimator's realisation of an exactly known
 * output covariance sequence (its fit is the type el_estimator_ssi,
 * reached through el_estimator.h). */
#ifndef EL_EST_SSI_H
#define EL_EST_SSI_H

#include <stddef.h>

#include "el_error.h"

/* The ssi estimator on an exactly known output covariance sequence:
 * cov holds R_0 .. R_{n_cov-1} (n_channels x n_channels column-major each,
 * consecutive, R_j = E[x[k+j] x[k]']). Runs the same two steps as the fit
 * (basis from the state-past covariance with `lags` and `depth`, the given
 * order; system matrix from the ssi provider's solve on the reduced
 * covariances, with the data's feature sums replaced by covariances) and
 * writes the order eigenvalues of the system matrix (mu_re, mu_im, in
 * LAPACK dgeev order). R_0 may hold white sensor noise: it enters only the
 * weights. Needs n_cov >= max(3 lags + 4, lags + depth + 1). Errors:
 * EL_ERR_INTERNAL for bad sizes; EL_ERR_NUMERIC when the realisation is
 * singular or LAPACK fails; EL_ERR_NOMEM. */
el_status el_ssi_covariance(size_t n_channels, size_t n_cov, const double *cov,
                            size_t lags, size_t depth, size_t order,
                            double *mu_re, double *mu_im, el_error *err);

#endif
