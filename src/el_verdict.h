/* el_verdict: the fixed point's type (trace-determinant plane for two
 * states, eigenvalue signs for n states), stability class, margin and the
 * ambiguity judgement, from the modes and (when computed) their bootstrap
 * distribution. */
#ifndef EL_VERDICT_H
#define EL_VERDICT_H

#include <stddef.h>

#include "el_error.h"
#include "el_model.h"
#include "el_modes.h"
#include "el_plane.h"

struct el_boot_result;

/* The stability word. marginal: the point estimate sits on the boundary
 * (|Re lambda| within the numerical tolerance); undecided: the bounds, the
 * estimators or a broken one-operating-point assumption leave the class
 * open. New values are only appended (callers store the number). */
typedef enum { EL_STABLE = 0, EL_UNSTABLE, EL_MARGINAL, EL_UNDECIDED } el_stability;

/* Why the verdict is what it is (JSON verdict.cause, the reason and next
 * step lines of the reports). Values are only appended. */
typedef enum {
    EL_CAUSE_NONE = 0,           /* the class holds at the level */
    EL_CAUSE_ON_BOUNDARY,        /* point estimate within tolerance of Re lambda = 0 */
    EL_CAUSE_BOUNDS,             /* the replicates fall on both sides */
    EL_CAUSE_FEW_CYCLES,         /* ... because the window holds too few time constants */
    EL_CAUSE_LOW_EXCITATION,     /* ... because the model explains little of the data */
    EL_CAUSE_ESTIMATORS_DISAGREE,/* the cross-check estimator leans the other way */
    EL_CAUSE_DRIFT,              /* the dynamics drift inside the window (split halves) */
    EL_CAUSE_LEVEL_TREND,        /* the level trends through the window */
    EL_CAUSE_LEVEL_SHIFT,        /* the level steps inside the window */
    EL_CAUSE_GROWTH,             /* the amplitude grows while the model says stable */
    EL_CAUSE_TOO_FEW_REPLICATES, /* --boot below the minimum: no bounds */
    EL_CAUSE_NO_BOUNDS,          /* bounds asked for but none could be computed */
    EL_CAUSE_NYQUIST,            /* a mode at the Nyquist limit */
    EL_CAUSE_TYPE_OPEN,          /* stability holds, the fixed point type does not */
    EL_CAUSE_NO_BOOTSTRAP,       /* --boot 0: the point estimate alone */
    EL_CAUSE_NO_DYNAMICS,        /* the data cannot be told from white noise: no
                                    type, no class (el_dynamics) */
    EL_CAUSE_METHOD_INCONSISTENT,/* the chosen estimator is known not to converge to
                                    the truth on what this log shows: its bounds are
                                    no bounds at their level (el_verdict_method_fault) */
    EL_CAUSE_NEAR_UNIT_ROOT,     /* the least damped mode is real and the data cannot
                                    tell it from a random walk (el_verdict_unit_root) */
    EL_CAUSE_RANK_FORCED         /* an "unstable" rests on a mode the data do not
                                    determine, in a model given more states (--rank)
                                    than the rank test supports */
} el_verdict_cause;

/* "stable", "unstable", "marginal", "undecided"; "unknown" else. Static. */
const char *el_stability_name(el_stability s);

/* The cause's code for JSON: "none", "on_boundary", "bounds", "few_cycles",
 * "low_excitation", "estimators_disagree", "drift", "level_trend",
 * "level_shift", "growth", "too_few_replicates", "no_bounds", "nyquist",
 * "type_open", "no_bootstrap", "no_dynamics", "method_inconsistent"; "unknown"
 * else. Static text. */
const char *el_verdict_cause_code(el_verdict_cause cause);

typedef struct {
    el_stability stability;
    const char *stability_name;   /* el_stability_name(stability) (static) */
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
    el_verdict_cause cause;       /* why (EL_CAUSE_NONE: the class holds) */
    double unit_root_t;           /* el_verdict_unit_root_t of a "stable" resting on a
                                     real least damped mode; NaN when not computed
                                     (JSON verdict.unit_root_t, null then) */
} el_verdict;

/* Sets the word to undecided (ambiguous) for cause. The pipeline's later
 * checks (cross-check, growth veto, drift) use it to withhold a class.
 * Can't fail; NULL v is a no-op. */
void el_verdict_set_undecided(el_verdict *v, el_verdict_cause cause);

/* The type written when no type is given because the log shows no
 * dynamics (el_verdict_withhold_type). Static text. */
#define EL_VERDICT_TYPE_WITHHELD "not given (no dynamics)"

/* Withholds the word and the fixed point type: undecided (ambiguous) for
 * EL_CAUSE_NO_DYNAMICS, and type = EL_VERDICT_TYPE_WITHHELD. The
 * eigenvalues, counts and plane numbers stay (they describe the fitted
 * model, which describes noise). Can't fail; NULL v is a no-op. */
void el_verdict_withhold_type(el_verdict *v);

/* Why an estimator's bounds cannot be read as bounds at their level on a
 * log, found from what the pipeline already measured. */
typedef enum {
    EL_METHOD_FAULT_NONE = 0,
    EL_METHOD_FAULT_BACKWARD,     /* fb or tls on a stationary (disturbance-driven)
                                     log: the backward model of a stationary process
                                     is not the inverse of the forward one, so both
                                     estimate another matrix (docs/uncertainty.md,
                                     "Per method": 16 to 2000 spreads off) */
    EL_METHOD_FAULT_SENSOR_NOISE  /* ls whose bias round was refused by a wide margin:
                                     the model does not reproduce its own data, as with
                                     sensor noise (errors in variables: 8 to 59 spreads
                                     off) */
} el_method_fault;

/* A least-squares model whose bias round was refused (el_boot_result
 * bias_refused) counts as pulled off by sensor noise when the refused
 * shift is at least this many spreads of its model-based replicates: a
 * 95 % interval that far off the truth covers it at most about 0.68 of
 * the time (Phi(1.96 - 1.5) - Phi(-1.96 - 1.5)). Measured
 * (bench/calibrate.c, 60 logs per cell, 2026-12-04): refusals on logs
 * without sensor noise shifted 0.50-1.22 spreads (38 of 1,440 logs), on
 * the 30 % sensor-noise case 1.25-6.0 (all 60 of each length from 500 to
 * 5,000 samples, 4 of the 500-sample ones below 1.5). A project
 * threshold set between the two. */
#define EL_VERDICT_SENSOR_SHIFT_SPREADS 1.5

/* The fault of method on a log: EL_METHOD_FAULT_BACKWARD for EL_METHOD_FB
 * or EL_METHOD_TLS when stationary is 1 (el_regime's class
 * EL_REGIME_STATIONARY: no free transient); EL_METHOD_FAULT_SENSOR_NOISE
 * for EL_METHOD_LS when refused_spreads (el_boot_result
 * bias_refused_spreads: 0 when the bias round did not refuse) is at least
 * EL_VERDICT_SENSOR_SHIFT_SPREADS; else EL_METHOD_FAULT_NONE (iv, ssi,
 * hankel: consistent in both cases). Pure function, can't fail. */
el_method_fault el_verdict_method_fault(el_method method, int stationary,
                                        double refused_spreads);

/* A "stable" that rests on a slow real mode the data cannot tell from a
 * random walk. Least-squares and instrument estimates of a real root
 * near 1 (per sample) are biased towards stability and their bootstrap
 * is not consistent there (Dickey & Fuller 1979; Basawa et al. 1991),
 * so a near-unit root can come out "stable" with bounds that exclude a
 * slightly growing truth (measured: `calibrate --method auto`, saddle
 * with its unstable root at +0.03 1/s over 200 s, one log of 60 called
 * stable with P(stable) 0.99). The Dickey-Fuller test of a unit root
 * with a constant rejects at 5% when t = (rho - 1) / se < -2.86
 * (MacKinnon 2010, asymptotic value, recalled from memory); here t is
 * approximated by the least damped mode's Re lambda over the robust
 * standard deviation (IQR / 1.349) of its matched bootstrap replicates:
 * Re lambda = ln(rho) / dt ~ (rho - 1) / dt near rho = 1, and both scale
 * by the same dt. */
#define EL_VERDICT_UNIT_ROOT_T (-2.86)

/* The critical value for the bounds' level: -3.43 at level >= 0.99 (the
 * 1% value), -2.86 (EL_VERDICT_UNIT_ROOT_T) at >= 0.95, -2.57 (10%)
 * below (MacKinnon 2010, asymptotic, with a constant; recalled from
 * memory). Pure. */
double el_verdict_unit_root_critical(double level);
/* The rule applies while the window spans fewer than this many time
 * constants of the root (n (1 - rho) in the local-to-unity terms of
 * Phillips 1987): there the estimate's bias and the bootstrap's failure
 * are of the order of the root itself. Farther from the unit root the
 * bootstrap's own P(stable) is trusted, since the Dickey-Fuller value,
 * being the null's, would then withhold many right answers of short logs
 * (measured on `calibrate --method auto`, sink -0.5 and -2 1/s at 500
 * samples, 25 time constants: 31 of 60 logs withheld with no limit, 10
 * with 20, 3 with 15). A rule of thumb of ours, set between the wrong
 * saddle (11 time constants) and that case. */
#define EL_VERDICT_UNIT_ROOT_SPAN 15.0

/* The unit-root statistic of the least damped mode when it is real
 * (lambda_im == 0), the model's window (n_pairs x dt) spans fewer than
 * EL_VERDICT_UNIT_ROOT_SPAN of its time constants, and the bootstrap kept
 * its matched replicates: t = Re lambda / (IQR / 1.349) of the
 * replicates' Re lambda; NaN otherwise (a pair, a root far from the unit
 * root, no bootstrap, a zero spread). Allocates a scratch copy;
 * EL_ERR_NOMEM when it cannot. */
el_status el_verdict_unit_root_t(const el_modes *modes, const el_model *model,
                                 const struct el_boot_result *boot, double *t, el_error *err);

/* Withholds the class for a method fault (fault != EL_METHOD_FAULT_NONE;
 * NONE is a no-op returning EL_OK): undecided (ambiguous) with cause
 * EL_CAUSE_METHOD_INCONSISTENT and p_stable NaN (JSON null); the type, the
 * eigenvalues and their bounds stay (they describe the estimate), and one
 * warning (code method_inconsistent) says why the bounds are not bounds at
 * level and names --method auto or iv. Errors: EL_ERR_INTERNAL for a NULL
 * v; EL_ERR_NOMEM when the warning cannot be stored (warnings may be NULL:
 * no warning). */
el_status el_verdict_withhold_method(el_verdict *v, el_method_fault fault, el_method method,
                                     double level, el_warnings *warnings, el_error *err);

/* Classifies. Without a bootstrap (boot == NULL or boot->replicates == 0):
 * a mode is marginal when |Re lambda| <= marginal_tolerance = 1e-9 / dt
 * (numerical tolerance), stability follows from the least damped mode
 * (marginal, cause EL_CAUSE_ON_BOUNDARY, when it is marginal; else cause
 * EL_CAUSE_NO_BOOTSTRAP), and a warning says bounds are not computed. With a bootstrap: stable or
 * unstable only when that class holds with probability >= level
 * (p_stable = boot->p_stable), otherwise undecided (cause
 * EL_CAUSE_BOUNDS) and ambiguous with
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
 * the result ambiguous (cause EL_CAUSE_NYQUIST unless another is set). A
 * decided class with an ambiguous plane region keeps its word, with cause
 * EL_CAUSE_TYPE_OPEN. trace, determinant, discriminant are NaN without a
 * plane. Returns EL_OK; EL_ERR_USAGE (option "--level") for a level
 * outside (0.5, 1) when a bootstrap is given; EL_ERR_INTERNAL for missing
 * arguments, a model without modes or a bootstrap of another model;
 * EL_ERR_NOMEM when a warning cannot be stored. */
el_status el_verdict_compute(const el_modes *modes, const el_model *model,
                             const struct el_boot_result *boot, double level,
                             el_verdict *verdict, el_warnings *warnings,
                             el_error *err);

#endif
