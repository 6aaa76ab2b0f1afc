/* el_state_check: the plain-state check of an "unstable" from iv's
 * multi-step state (docs/method.md, "Plain-state check").
 *
 * Without --lags, iv on two or more channels stacks each channel over a
 * horizon set in time (el_est_iv, iv_prepare) so that slow modes are seen
 * over their own time scale. A fast mode that has died out within a few
 * samples is then carried by few rows of that state, and the shift
 * between consecutive windows can give it a spurious positive real part
 * with tight bounds: the bootstrap keeps the point fit's basis, so every
 * replicate repeats the error (measured on `calibrate --method auto`: two
 * of 60 sink logs, true roots -0.5 and -2 1/s, called unstable with the
 * fast root at +1.2 and +1.6 1/s). iv on the plain state (no lags, the
 * past two samples as instruments) is consistent for the same logs and
 * sees such a mode in every row. When the multi-step model has no more
 * modes than the plain state holds (rank <= channels), an "unstable" the
 * plain state confidently contradicts is withdrawn: two consistent
 * estimators disagree. Least squares cannot play this part: sensor noise
 * biases it towards stability, so its "stable" contradicted growing
 * systems that were right (docs/accuracy.md). */
#ifndef EL_STATE_CHECK_H
#define EL_STATE_CHECK_H

#include <stddef.h>

#include "el_error.h"
#include "el_model.h"
#include "el_resample.h"
#include "el_timebase.h"

/* Bootstrap replicates of the plain-state fit: the check asks only
 * whether P(stable) reaches the bounds' level (0.95 by default), which
 * 200 replicates resolve to about +-0.015 (binomial standard error at
 * 0.95); the cost is a fifth of a default bootstrap. */
#define EL_STATE_CHECK_REPLICATES 200

/* Instrument depth of the plain-state fit: the past one and two samples
 * before the regressor, iv's classic form (Soderstrom & Stoica 1983). */
#define EL_STATE_CHECK_DEPTH 2

typedef struct {
    int ran;             /* 1: the plain-state fit and its bootstrap ran */
    double p_stable;     /* its bootstrap P(stable); NaN when it did not run */
    double re_max;       /* Re lambda of its least damped mode, 1/s; NaN if not run */
    double im_max;       /* Im lambda of that mode, 1/s */
    size_t replicates;   /* replicates behind p_stable */
    int withdraws;       /* 1: p_stable >= the level: the "unstable" is withdrawn */
} el_state_check;

/* 1 when the check applies to a fit: iv with a multi-step state chosen by
 * the automatic horizon (fit_asked: the options as the caller gave them,
 * before the estimator's preparation: no lags, no depth, no rank, no
 * inputs), on two or more channels, whose rank is at most the number of
 * channels (so the plain state can hold every mode kept). Pure. */
int el_state_check_applies(const el_fit_options *fit_asked, const el_model *model);

/* Fits iv on the plain state of series (the options of fit_asked with no
 * lags and depth EL_STATE_CHECK_DEPTH), bootstraps it with the resampling
 * of boot (replicates capped at EL_STATE_CHECK_REPLICATES, no progress,
 * one thread per boot->threads) and fills *out; out->withdraws is set
 * when its P(stable) >= boot->level. A fit or bootstrap that fails for
 * the data (too short, instruments too weak) is not an error: out->ran
 * stays 0 and the caller's verdict stands. Errors: EL_ERR_NOMEM,
 * EL_ERR_INTERNAL for NULL arguments. Allocates nothing the caller must
 * free. Thread-safe (no shared state). */
el_status el_state_check_run(const el_series *series, const el_fit_options *fit_asked,
                             const el_boot_options *boot, el_state_check *out,
                             el_error *err);

#endif
