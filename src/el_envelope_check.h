/* el_envelope_check: an "unstable" checked against the growth the log
 * itself shows.
 *
 * A linear model with a mode growing at Re lambda = g > 0 predicts that
 * the mode's part of the data grows by e^(g T) over a window of span T,
 * whatever else the data hold: the disturbances keep exciting it, so it
 * cannot stay small. The regime test's envelope slope (el_regime, steps
 * 1-3) is a model-free estimate of that growth rate per channel, with a
 * standard error under the stationary null that comes from the channel's
 * own autocorrelation. When the model's growth exceeds the fastest growth
 * the envelope allows on any channel by several e-folds over the window,
 * the data contradict the model: measured on a fresh log with AR(1) sensor
 * noise (s026 at 20 dB, a stable 1 Hz mode), iv over a 30-lag state gave a
 * real root of +4.1 1/s (doubling every 0.17 s over a 157-s log) and
 * "unstable" with P(stable) 0.019, while every channel's envelope rate was
 * -0.0002 +- 0.0013 1/s. The envelope is information the bootstrap did
 * not use, so it is applied to the replicates: a replicate that says
 * "unstable" only through modes growing faster than the envelope allows
 * describes a model the log rules out and is set aside; the others keep
 * their class. The "unstable" is withdrawn when the point model's own
 * growth is ruled out and "unstable" no longer holds at the level among
 * the replicates kept (or too few are kept). A truly growing system keeps
 * its verdict: its log's envelope grows with it, and a spurious fast root
 * beside a true slow growth (fresh logs s034 at 10 dB, s083 at 20 and
 * 30 dB) leaves the replicates that hold the true growth. The least
 * squares cross-check cannot play this part (sensor noise biases it
 * towards stability), nor can iv on the plain state when the model holds
 * more modes than there are channels. */
#ifndef EL_ENVELOPE_CHECK_H
#define EL_ENVELOPE_CHECK_H

#include <stddef.h>

#include "el_boot_bounds.h"
#include "el_error.h"
#include "el_model.h"
#include "el_modes.h"
#include "el_regime.h"
#include "el_resample.h"
#include "el_timebase.h"
#include "el_verdict.h"

/* Family-wise level of the envelope's upper bounds over the channels:
 * each channel's bound is one-sided at this level divided by the number
 * of channels tested (Bonferroni), the regime test's own level (0.01). */
#define EL_ENVELOPE_CHECK_ALPHA 0.01

/* Slack, in e-folds over the envelope's span, between the fastest growth
 * the envelope allows and a growth that contradicts it: a mode growing
 * ln(100) = 4.6 e-folds faster than the envelope's bound would have to
 * start 40 dB below the channel's amplitude to stay hidden in it, below
 * the sensor noise of the logs whose modes the estimators resolve (issue
 * 10's family: SNR 10-30 dB). On the fresh tuning set the point models of
 * growing logs with no spurious root sit 1.2 e-folds or more below the
 * envelope's bound. A project convention. */
#define EL_ENVELOPE_CHECK_SLACK_EFOLDS 4.605170185988091

/* Replicates that must stay within the envelope for their share to
 * count: the bootstrap's own minimum (EL_BOOT_MIN_REPLICATES is 100; a
 * share of 0.95 is then resolved to about +-0.02). */
#define EL_ENVELOPE_CHECK_MIN_KEPT EL_BOOT_MIN_REPLICATES

typedef struct {
    int made;              /* 1: the envelope and the replicates were compared */
    size_t channels;       /* channels whose envelope bound entered */
    size_t channel;        /* the channel with the largest bound */
    double span;           /* time between the first and last segment centre */
    double rate_hi;        /* largest one-sided upper bound of the envelope rate, 1/time */
    double allowed_rate;   /* rate_hi + slack / span: the fastest growth allowed */
    double model_rate;     /* the point model's largest Re lambda */
    size_t kept;           /* replicates whose every mode has Re lambda <= allowed_rate */
    double p_allowed;      /* share of the kept replicates with a mode of Re lambda >= 0
                              (0 when none is kept) */
    int withdraws;         /* 1: model_rate > allowed_rate, and kept <
                              EL_ENVELOPE_CHECK_MIN_KEPT or p_allowed < level */
} el_envelope_check;

/* The one-sided upper normal quantile z with P(Z > z) = p, 0 < p < 1, by
 * bisection on erfc to 1e-10; NaN for p outside (0, 1). Pure. */
double el_envelope_check_z(double p);

/* Compares the growth of the model (modes, the point estimate, and boot,
 * its bootstrap: replicates x n_modes matched Re lambda) with the envelope
 * of the log (regime, after el_regime_run on the same series) and fills
 * *out. Per tested channel c with a finite envelope z: se = |rate / z|,
 * bound = rate + z_a se with z_a the one-sided quantile at
 * EL_ENVELOPE_CHECK_ALPHA / channels; span = (segments - 1) x segment
 * length x dt. Nothing is compared (made 0) when the regime has fewer than
 * 3 segments, no channel has a finite bound, or boot has no replicates.
 * Can't fail; NULL arguments leave made 0. */
void el_envelope_check_run(const el_regime *regime, const el_series *series,
                           const el_modes *modes, const el_boot_result *boot, double level,
                           el_envelope_check *out);

/* The verdict stage: when v says "unstable" (not ambiguous), runs the
 * check into *out and, when it withdraws, sets v undecided for
 * EL_CAUSE_ESTIMATORS_DISAGREE and adds a warning that names the model's
 * growth (method: its estimator) and the envelope's bound. Errors:
 * EL_ERR_NOMEM for the warning. */
el_status el_envelope_check_verdict(const el_regime *regime, const el_series *series,
                                    const el_modes *modes, const el_boot_result *boot,
                                    el_method method, double level, el_verdict *v,
                                    el_envelope_check *out, el_warnings *warnings,
                                    el_error *err);

#endif
