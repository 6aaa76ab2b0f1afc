/* el_lags: the automatic delay depth (--lags auto) by the Bayesian
 * information criterion of nested least-squares delay models. */
#ifndef EL_LAGS_H
#define EL_LAGS_H

#include <stddef.h>

#include "el_error.h"
#include "el_timebase.h"

/* Largest delay depth --lags auto tries by default. */
#define EL_LAGS_AUTO_MAX 48

/* The choice of --lags auto. */
typedef struct {
    size_t lags;              /* chosen K */
    size_t max_lags;          /* largest K tried */
    size_t n_pairs;           /* snapshot pairs used for every K (the same pairs) */
    int exact;                /* 1: a delay model fits the data to rounding */
    double bic;               /* criterion at the chosen K (NaN when exact) */
    char reason[256];         /* one sentence for the report */
} el_lags_choice;

/* Chooses the delay depth K by the Bayesian information criterion
 * (Schwarz 1978, Ann. Statist. 6(2)) of the one-step residuals of the
 * affine least-squares delay model: for K = 0..K_max, on the same pairs
 * (k = K_max .. N-2), BIC(K) = m ln det(S_K / m) + p ln m with S_K the
 * residual cross-product of the lag-0 channels regressed on [z_K[k]; u[k];
 * 1] and p = n_channels (n_channels (K + 1) + n_inputs + 1); all fits come
 * from one Householder QR of [U, x[k], ..., x[k-K_max], Y] (nested
 * regressions). The smallest K whose residual is at rounding level (every
 * channel's residual sum of squares below 1e-20 of its total: noise-free
 * data) is taken at once. K_max = max_lags (0: EL_LAGS_AUTO_MAX), lowered
 * until the pairs are at least ten per coefficient of a row (common
 * practice). inputs may be NULL. Errors: EL_ERR_DATA for a constant
 * channel or a series too short for even K = 0 (hint: longer window);
 * EL_ERR_INTERNAL for NULL or mismatched arguments; EL_ERR_NUMERIC when
 * LAPACK fails; EL_ERR_NOMEM. */
el_status el_lags_auto(const el_series *series, const el_series *inputs,
                       size_t max_lags, el_lags_choice *choice, el_error *err);

#endif
