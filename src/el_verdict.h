/* el_verdict: the fixed point's type (trace-determinant plane for two
 * states, eigenvalue signs for n states), stability class, margin and the
 * ambiguity judgement, from the modes and (when computed) their bootstrap
 * distribution. */
#ifndef EL_VERDICT_H
#define EL_VERDICT_H

#include <stddef.h>

#include "el_error.h"
#include "el_modes.h"
#include "el_plane.h"

struct el_boot_result;

typedef enum { EL_STABLE = 0, EL_UNSTABLE, EL_MARGINAL } el_stability;

typedef struct {
    el_stability stability;
    const char *stability_name;   /* "stable" | "unstable" | "marginal" (static) */
    char type[96];                /* fixed point type, e.g. "spiral sink", "saddle" */
    int ambiguous;                /* 1: the class does not hold with prob >= level */
    double p_stable;              /* NaN when no bootstrap was run (-> JSON null) */
    double marginal_tolerance;    /* |Re lambda| under which a mode counts as marginal
                                     when no bootstrap bounds exist (1/time unit) */
    double margin_decay_rate;     /* -Re lambda of the least damped mode */
    double margin_damping_ratio;  /* damping ratio of the least damped mode */
    /* counts of eigenvalues (pairs count 2) by side and kind */
    size_t n_stable_real, n_stable_oscillatory;
    size_t n_unstable_real, n_unstable_oscillatory;
    size_t n_marginal_real, n_marginal_oscillatory;
    int has_plane;                /* 1 for a 2-state model with two eigenvalues */
    double trace, determinant, discriminant;   /* of the continuous-time matrix */
    el_region region;
} el_verdict;

/* Classifies. Without a bootstrap (boot == NULL or boot->replicates == 0):
 * a mode is marginal when |Re lambda| <= marginal_tolerance = 1e-9 / dt
 * (numerical tolerance), stability follows from the least damped mode, and
 * a warning says bounds are not computed. With a bootstrap: stable or
 * unstable only when that class holds with probability >= level
 * (p_stable = boot->p_stable), otherwise marginal and ambiguous with
 * warnings naming the boundary the bounds straddle and what would resolve
 * it; each mode counts as stable/unstable when the fraction of its matched
 * replicates (boot->lambda_re, or else its bounds) on that side is >= level,
 * else marginal. For two states the region is the point estimate's; when
 * the bootstrap gives it a probability below level the result is ambiguous
 * with a warning naming the plane boundary (det = 0, the discriminant line
 * or trace = 0). A warning also flags a mode whose bounds are too wide to
 * determine it (damping ratio interval wider than 0.5, or a frequency
 * interval wider than the frequency). Type: for state_dim 2 (two
 * eigenvalues, none at the Nyquist limit or instantaneous) the plane region
 * from the continuous eigenvalues (trace = sum, det = product) with
 * el_verdict_plane_tolerances(marginal_tolerance, max |lambda|); else
 * "sink"/"spiral sink" (all stable, without/with oscillatory modes),
 * "source"/"spiral source", "saddle" (both sides), or "marginal". A mode at
 * the Nyquist limit counts as oscillatory; its modes add a warning and make
 * the result ambiguous. trace, determinant, discriminant are NaN without a
 * plane. Returns EL_OK; EL_ERR_USAGE (option "--level") for a level
 * outside (0.5, 1) when a bootstrap is given; EL_ERR_INTERNAL for missing
 * arguments, a model without modes or a bootstrap of another model;
 * EL_ERR_NOMEM when a warning cannot be stored. */
el_status el_verdict_compute(const el_modes *modes, const el_model *model,
                             const struct el_boot_result *boot, double level,
                             el_verdict *verdict, el_warnings *warnings,
                             el_error *err);

#endif
