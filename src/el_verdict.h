/* el_verdict: the fixed point's type (trace-determinant plane for two
 * states, eigenvalue signs for n states), stability class, margin and the
 * ambiguity judgement, from the modes and (when computed) their bootstrap
 * distribution. */
#ifndef EL_VERDICT_H
#define EL_VERDICT_H

#include <stddef.h>

#include "el_error.h"
#include "el_modes.h"

struct el_boot_result;

typedef enum { EL_STABLE = 0, EL_UNSTABLE, EL_MARGINAL } el_stability;

typedef enum {
    EL_REGION_SADDLE = 0,
    EL_REGION_SINK,
    EL_REGION_SPIRAL_SINK,
    EL_REGION_CENTER,
    EL_REGION_SPIRAL_SOURCE,
    EL_REGION_SOURCE,
    EL_REGION_DEGENERATE_NODE,
    EL_REGION_NON_ISOLATED,
    EL_REGION_COUNT,
    EL_REGION_NONE = EL_REGION_COUNT  /* not a 2-state model / not defined */
} el_region;

/* "saddle", "sink", "spiral sink", "center", "spiral source", "source",
 * "degenerate node", "non-isolated" (DESIGN.md spelling); "none" else. */
const char *el_region_name(el_region region);

/* Region of the trace-determinant plane of a real 2x2 continuous-time
 * matrix. tol is the absolute tolerance under which det, the discriminant
 * trace^2 - 4 det, and the trace count as zero (boundary cases); pass a
 * scale-aware value (see el_verdict_plane_tolerances).
 * det < -tol: saddle; |det| <= tol: non-isolated; |disc| <= tol:
 * degenerate node (a star or improper node; sign of trace says sink or
 * source, and |trace| <= tol as well means the zero matrix, non-isolated);
 * disc < 0: |trace| <= tol center, trace < 0 spiral sink, else spiral
 * source; disc > 0: trace < 0 sink, else source. Can't fail. */
el_region el_verdict_plane_region(double trace, double det, double tol);

/* The same with separate tolerances: tol_trace (1/time unit) for the
 * trace, tol_quad (1/time unit^2) for det and the discriminant. Use it
 * with el_verdict_plane_tolerances so that the region agrees with the
 * stability class of the same eigenvalues. Can't fail. */
el_region el_verdict_plane_region_tols(double trace, double det, double tol_trace,
                                       double tol_quad);

/* Tolerances for the plane that match a marginal tolerance delta on each
 * eigenvalue (el_verdict_compute: delta = 1e-9/dt) for eigenvalues of
 * modulus up to lambda_scale: perturbing lambda_1, lambda_2 by up to delta
 * moves the trace by 2 delta, det = lambda_1 lambda_2 by up to
 * 2 L delta + delta^2 and the discriminant (lambda_1 - lambda_2)^2 by up
 * to 8 L delta + 4 delta^2 (L = lambda_scale); *tol_trace = 2 delta,
 * *tol_quad = 8 L delta + 4 delta^2. Then a center is exactly a pair with
 * |Re lambda| <= delta. Can't fail. */
void el_verdict_plane_tolerances(double delta, double lambda_scale,
                                 double *tol_trace, double *tol_quad);

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
