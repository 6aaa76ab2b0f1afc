/* el_verdict: fixed-point type, stability class, margin and ambiguity
 * judgement from the modes and, when run, their bootstrap distribution. */
#include "el_verdict.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_boot_bounds.h"
#include "el_estimator.h"

/* Numerical tolerance on Re lambda without bootstrap, times 1/dt: a mode
 * this close to the imaginary axis cannot be told from it by a fit whose
 * discrete eigenvalues carry rounding of order 1e-12 or more. */
#define EL_VERDICT_MARGINAL_REL 1e-9

/* Project choice for "bounds too wide to say anything": a damping-ratio
 * interval wider than 0.5 spans from lightly damped to heavily damped (or
 * across zero), and a frequency interval wider than the frequency itself
 * does not fix even its order of magnitude. */
#define EL_VERDICT_WIDE_DAMPING 0.5
#define EL_VERDICT_WIDE_FREQUENCY_REL 1.0

#define EL_VERDICT_REMEDY                                                   \
    "a longer log, more excitation of the system, fewer lags or a lower "    \
    "rank would narrow the bounds"

typedef enum { SIDE_STABLE = 0, SIDE_UNSTABLE, SIDE_MARGINAL } side;

/* ---- per-mode sides ---------------------------------------------------- */

static side side_without_boot(const el_mode *m, double tol)
{
    if (m->instantaneous || m->lambda_re < -tol)
        return SIDE_STABLE;
    if (m->lambda_re > tol)
        return SIDE_UNSTABLE;
    return SIDE_MARGINAL;
}

/* A side holds when at least `level` of the matched replicates are on it;
 * with only bounds at hand, when the whole interval is on it. */
static side side_with_boot(const el_boot_result *b, size_t i, double level)
{
    if (b->lambda_re != NULL) {
        size_t neg = 0, pos = 0;
        for (size_t r = 0; r < b->replicates; r++) {
            double re = b->lambda_re[r * b->n_modes + i];
            neg += re < 0.0;
            pos += re > 0.0;
        }
        double n = (double)b->replicates;
        if ((double)neg >= level * n)
            return SIDE_STABLE;
        if ((double)pos >= level * n)
            return SIDE_UNSTABLE;
        return SIDE_MARGINAL;
    }
    if (b->bounds[i].re.hi < 0.0)
        return SIDE_STABLE;
    if (b->bounds[i].re.lo > 0.0)
        return SIDE_UNSTABLE;
    return SIDE_MARGINAL;
}

static void count_mode(el_verdict *v, const el_mode *m, side s)
{
    size_t weight = m->pair ? 2 : 1;
    int osc = m->pair || m->at_nyquist;
    size_t *slot;
    if (s == SIDE_STABLE)
        slot = osc ? &v->n_stable_oscillatory : &v->n_stable_real;
    else if (s == SIDE_UNSTABLE)
        slot = osc ? &v->n_unstable_oscillatory : &v->n_unstable_real;
    else
        slot = osc ? &v->n_marginal_oscillatory : &v->n_marginal_real;
    *slot += weight;
}

static void type_from_counts(el_verdict *v)
{
    size_t n_stable = v->n_stable_real + v->n_stable_oscillatory;
    size_t n_unstable = v->n_unstable_real + v->n_unstable_oscillatory;
    size_t n_marginal = v->n_marginal_real + v->n_marginal_oscillatory;
    const char *t;
    if (n_stable > 0 && n_unstable > 0)
        t = "saddle";
    else if (n_marginal > 0)
        t = "marginal";
    else if (n_unstable == 0)
        t = v->n_stable_oscillatory > 0 ? "spiral sink" : "sink";
    else
        t = v->n_unstable_oscillatory > 0 ? "spiral source" : "source";
    snprintf(v->type, sizeof v->type, "%s", t);
}

/* The plane of a two-state model, from its continuous eigenvalues. */
static void plane(el_verdict *v, const el_modes *modes, const el_model *model)
{
    v->trace = v->determinant = v->discriminant = NAN;
    if (model->state_dim != 2 || modes->n_eigenvalues != 2)
        return;
    for (size_t i = 0; i < modes->n_modes; i++)
        if (modes->modes[i].at_nyquist || modes->modes[i].instantaneous)
            return;  /* no real continuous-time matrix: ln(mu) leaves the reals */
    double scale;
    if (modes->n_modes == 1 && modes->modes[0].pair) {
        double re = modes->modes[0].lambda_re, im = modes->modes[0].lambda_im;
        v->trace = 2.0 * re;
        v->determinant = re * re + im * im;
        scale = hypot(re, im);
    } else if (modes->n_modes == 2) {
        double l1 = modes->modes[0].lambda_re, l2 = modes->modes[1].lambda_re;
        v->trace = l1 + l2;
        v->determinant = l1 * l2;
        scale = fmax(fabs(l1), fabs(l2));
    } else {
        return;
    }
    v->discriminant = v->trace * v->trace - 4.0 * v->determinant;
    double tol_trace, tol_quad;
    el_verdict_plane_tolerances(v->marginal_tolerance, scale, &tol_trace, &tol_quad);
    v->has_plane = 1;
    v->region = el_verdict_plane_region_tols(v->trace, v->determinant, tol_trace,
                                             tol_quad);
    snprintf(v->type, sizeof v->type, "%s", el_region_name(v->region));
}

/* ---- warnings --------------------------------------------------------- */

static el_status checked(el_error *err, el_status st)
{
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    return EL_OK;
}

/* "mode 2 (0.513 Hz)" / "mode 1 (real)" / "mode 3 (at the Nyquist limit)". */
static void describe_mode(const el_modes *modes, size_t i, char *buf, size_t size)
{
    const el_mode *m = &modes->modes[i];
    if (m->at_nyquist)
        snprintf(buf, size, "mode %zu (at the Nyquist limit)", i + 1);
    else if (m->pair)
        snprintf(buf, size, "mode %zu (%.3g Hz)", i + 1, m->frequency_hz);
    else
        snprintf(buf, size, "mode %zu (real)", i + 1);
}

static el_status warn_nyquist(const el_modes *modes, el_verdict *v, el_warnings *w,
                              el_error *err)
{
    for (size_t i = 0; i < modes->n_modes; i++) {
        if (!modes->modes[i].at_nyquist)
            continue;
        v->ambiguous = 1;
        el_status st = el_warnings_add(
            w,
            "the verdict is ambiguous: mode %zu sits at the Nyquist limit, so its "
            "frequency and damping are unknown and faster dynamics may be folded "
            "into the model; sample faster or low-pass filter before logging",
            i + 1);
        if (st != EL_OK)
            return checked(err, st);
    }
    return EL_OK;
}

/* Stability could not be settled: name the modes whose replicates fall on
 * both sides of Re lambda = 0 (the least damped one when no single mode
 * does, e.g. when two modes take turns being the least damped). */
static el_status warn_stability(const el_modes *modes, const el_boot_result *b,
                                double level, el_warnings *w, el_error *err)
{
    char list[400] = "";
    size_t used = 0, named = 0;
    for (size_t pass = 0; pass < 2 && named == 0; pass++) {
        for (size_t i = 0; i < modes->n_modes && named < 4; i++) {
            if (pass == 0 && side_with_boot(b, i, level) != SIDE_MARGINAL)
                continue;
            if (pass == 1 && i > 0)
                break;
            char name[64];
            describe_mode(modes, i, name, sizeof name);
            int n = snprintf(list + used, sizeof list - used,
                             "%s%s, Re lambda bounds [%.3g, %.3g]",
                             named ? "; " : "", name, b->bounds[i].re.lo,
                             b->bounds[i].re.hi);
            if (n < 0 || (size_t)n >= sizeof list - used)
                break;
            used += (size_t)n;
            named++;
        }
    }
    return checked(err, el_warnings_add(w,
                                "stability is undecided: the least damped mode "
                                "decays in %.0f of %zu bootstrap replicates, so "
                                "neither stable nor unstable holds in %.3g%% of "
                                "them; the replicates fall on both sides of the "
                                "stability boundary Re lambda = 0 for %s; %s",
                                b->p_stable * (double)b->replicates, b->replicates,
                                100.0 * level, list, EL_VERDICT_REMEDY));
}

#define BOUNDARY_DET "det = 0 (the line between saddles and nodes)"
#define BOUNDARY_DISC "the discriminant line trace^2 = 4 det (between nodes and spirals)"
#define BOUNDARY_TRACE "trace = 0 (the center line between sinks and sources)"

/* The plane boundary between two regions (for the warning text). */
static const char *boundary_between(el_region a, el_region b)
{
    if (a == EL_REGION_SADDLE || b == EL_REGION_SADDLE || a == EL_REGION_NON_ISOLATED ||
        b == EL_REGION_NON_ISOLATED)
        return BOUNDARY_DET;
    if (a == EL_REGION_CENTER || b == EL_REGION_CENTER ||
        (a == EL_REGION_SPIRAL_SINK && b == EL_REGION_SPIRAL_SOURCE) ||
        (a == EL_REGION_SPIRAL_SOURCE && b == EL_REGION_SPIRAL_SINK))
        return BOUNDARY_TRACE;
    int a_sinkish = a == EL_REGION_SINK || a == EL_REGION_SPIRAL_SINK;
    int b_sinkish = b == EL_REGION_SINK || b == EL_REGION_SPIRAL_SINK;
    if (a != EL_REGION_DEGENERATE_NODE && b != EL_REGION_DEGENERATE_NODE &&
        a_sinkish != b_sinkish)
        return "trace = 0 and the discriminant line trace^2 = 4 det";
    return BOUNDARY_DISC;
}

static int straddles(el_interval iv)
{
    return iv.lo <= 0.0 && iv.hi >= 0.0;
}

static el_status warn_plane(el_verdict *v, const el_boot_result *b, double level,
                            el_warnings *w, el_error *err)
{
    double p = b->region_probability[v->region];
    if (p >= level)
        return EL_OK;
    v->ambiguous = 1;
    el_region alt = EL_REGION_NONE;
    double p_alt = -1.0;
    for (int r = 0; r < EL_REGION_COUNT; r++)
        if ((el_region)r != v->region && b->region_probability[r] > p_alt) {
            p_alt = b->region_probability[r];
            alt = (el_region)r;
        }
    char lines[256] = "";
    size_t used = 0;
    const char *names[3] = {BOUNDARY_DET, BOUNDARY_DISC, BOUNDARY_TRACE};
    int hit[3] = {straddles(b->determinant), straddles(b->discriminant),
                  straddles(b->trace)};
    for (int k = 0; k < 3; k++) {
        if (!hit[k])
            continue;
        int n = snprintf(lines + used, sizeof lines - used, "%s%s", used ? " and " : "",
                         names[k]);
        if (n < 0 || (size_t)n >= sizeof lines - used)
            break;
        used += (size_t)n;
    }
    if (used == 0)
        snprintf(lines, sizeof lines, "%s", boundary_between(v->region, alt));
    return checked(err, el_warnings_add(w,
                                "the fixed point type is ambiguous: P(%s) = %.3f is "
                                "below the level %.3g (next most likely: %s, P = "
                                "%.3f); the bounds straddle %s; %s",
                                el_region_name(v->region), p, level,
                                el_region_name(alt), p_alt > 0.0 ? p_alt : 0.0, lines,
                                EL_VERDICT_REMEDY));
}

/* Mode i is not determined by the data: its damping-ratio bounds span
 * more than EL_VERDICT_WIDE_DAMPING (*wide_z), or a pair's frequency
 * bounds are wider than EL_VERDICT_WIDE_FREQUENCY_REL of its frequency
 * (*wide_f). */
static int mode_undetermined(const el_modes *modes, const el_boot_result *b, size_t i,
                             int *wide_z, int *wide_f)
{
    const el_mode *m = &modes->modes[i];
    const el_mode_bounds *bd = &b->bounds[i];
    double dz = bd->damping_ratio.hi - bd->damping_ratio.lo;
    double df = bd->frequency_hz.hi - bd->frequency_hz.lo;
    *wide_z = isfinite(dz) && dz > EL_VERDICT_WIDE_DAMPING;
    *wide_f = m->pair && !m->at_nyquist && isfinite(df) &&
              df > EL_VERDICT_WIDE_FREQUENCY_REL * m->frequency_hz;
    return *wide_z || *wide_f;
}

static el_status warn_wide(const el_modes *modes, const el_boot_result *b,
                           el_warnings *w, el_error *err)
{
    for (size_t i = 0; i < modes->n_modes; i++) {
        int wide_z, wide_f;
        if (!mode_undetermined(modes, b, i, &wide_z, &wide_f))
            continue;
        char name[64];
        describe_mode(modes, i, name, sizeof name);
        el_status st = el_warnings_add(
            w,
            "%s is not determined by the data: %s%s%s; read its frequency and "
            "damping as unknown; %s",
            name,
            wide_f ? "its frequency bounds are wider than the frequency" : "",
            wide_f && wide_z ? " and " : "",
            wide_z ? "its damping-ratio bounds span more than 0.5" : "",
            EL_VERDICT_REMEDY);
        if (st != EL_OK)
            return checked(err, st);
    }
    return EL_OK;
}

/* ---- compute ----------------------------------------------------------- */

static el_status check_args(const el_modes *modes, const el_model *model,
                            const el_boot_result *boot, double level,
                            const el_verdict *v, el_error *err)
{
    if (modes == NULL || model == NULL || v == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_verdict_compute: NULL argument");
    if (modes->n_modes == 0 || modes->modes == NULL || !(model->dt > 0.0))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_verdict_compute: no modes or no sample interval");
    if (boot == NULL || boot->replicates == 0)
        return EL_OK;
    if (!(level > 0.5 && level < 1.0)) {
        el_error_set(err, EL_ERR_USAGE, "level %g is outside (0.5, 1)", level);
        el_error_option(err, "--level");
        el_error_hint(err, "give a probability such as 0.9 or 0.95");
        return EL_ERR_USAGE;
    }
    if (boot->n_modes != modes->n_modes || boot->bounds == NULL)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_verdict_compute: the bootstrap has %zu modes, the "
                            "model %zu", boot->n_modes, modes->n_modes);
    return EL_OK;
}

const char *el_stability_name(el_stability s)
{
    static const char *const names[] = {"stable", "unstable", "marginal", "undecided"};
    return (unsigned)s < sizeof names / sizeof names[0] ? names[s] : "unknown";
}

const char *el_verdict_cause_code(el_verdict_cause cause)
{
    static const char *const codes[] = {
        "none", "on_boundary", "bounds", "few_cycles", "low_excitation",
        "estimators_disagree", "drift", "level_trend", "level_shift", "growth",
        "too_few_replicates", "no_bounds", "nyquist", "type_open", "no_bootstrap",
        "no_dynamics", "method_inconsistent", "near_unit_root",
        "rank_forced"};
    return (unsigned)cause < sizeof codes / sizeof codes[0] ? codes[cause] : "unknown";
}

static void set_stability(el_verdict *v, el_stability s)
{
    v->stability = s;
    v->stability_name = el_stability_name(s);
}

void el_verdict_set_undecided(el_verdict *v, el_verdict_cause cause)
{
    if (v == NULL)
        return;
    set_stability(v, EL_UNDECIDED);
    v->ambiguous = 1;
    v->cause = cause;
}

void el_verdict_withhold_type(el_verdict *v)
{
    if (v == NULL)
        return;
    el_verdict_set_undecided(v, EL_CAUSE_NO_DYNAMICS);
    snprintf(v->type, sizeof v->type, "%s", EL_VERDICT_TYPE_WITHHELD);
}

el_method_fault el_verdict_method_fault(el_method method, int stationary,
                                        double refused_spreads)
{
    if ((method == EL_METHOD_FB || method == EL_METHOD_TLS) && stationary)
        return EL_METHOD_FAULT_BACKWARD;
    if (method == EL_METHOD_LS && refused_spreads >= EL_VERDICT_SENSOR_SHIFT_SPREADS)
        return EL_METHOD_FAULT_SENSOR_NOISE;
    return EL_METHOD_FAULT_NONE;
}

el_status el_verdict_withhold_method(el_verdict *v, el_method_fault fault, el_method method,
                                     double level, el_warnings *warnings, el_error *err)
{
    if (v == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_verdict_withhold_method: NULL verdict");
    if (fault == EL_METHOD_FAULT_NONE)
        return EL_OK;
    el_verdict_set_undecided(v, EL_CAUSE_METHOD_INCONSISTENT);
    v->p_stable = NAN;
    if (warnings == NULL)
        return EL_OK;
    double pct = isfinite(level) ? 100.0 * level : 95.0;
    el_status st;
    if (fault == EL_METHOD_FAULT_BACKWARD)
        st = el_warnings_add(warnings,
                             "--method %s fits this log's ongoing random motion with a "
                             "model that runs backward in time too, and for such motion "
                             "the two directions describe different systems: the estimate "
                             "does not settle on the truth however long the log, its "
                             "bounds are no %.3g%% bounds, and stability and P(stable) are "
                             "withheld for this method; use --method auto (the default) "
                             "or --method iv (%s suits free decays or growth after a "
                             "disturbance)",
                             el_method_name(method), pct, el_method_name(method));
    else
        st = el_warnings_add(warnings,
                             "--method %s: the model cannot regenerate data like the log "
                             "(its bias round was refused: its replicates drift more than "
                             "1.5 spreads off the estimate), the mark of noisy sensors, "
                             "which pull least squares away from the truth however long "
                             "the log: its bounds are no %.3g%% bounds, and stability and "
                             "P(stable) are withheld for this method; use --method auto "
                             "(the default) or --method iv",
                             el_method_name(method), pct);
    if (st != EL_OK)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    return EL_OK;
}

double el_verdict_unit_root_critical(double level)
{
    return level >= 0.99 ? -3.43 : level >= 0.95 ? EL_VERDICT_UNIT_ROOT_T : -2.57;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

el_status el_verdict_unit_root_t(const el_modes *modes, const el_model *model,
                                 const el_boot_result *boot, double *t, el_error *err)
{
    *t = NAN;
    if (modes == NULL || model == NULL || boot == NULL || modes->n_modes == 0 ||
        boot->lambda_re == NULL || boot->replicates < 4 || modes->modes[0].lambda_im != 0.0)
        return EL_OK;
    double span_tc = (double)model->n_pairs * model->dt * fabs(modes->modes[0].lambda_re);
    if (!(span_tc < EL_VERDICT_UNIT_ROOT_SPAN))
        return EL_OK;
    double *re = malloc(boot->replicates * sizeof *re);
    if (re == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for the unit-root check");
    size_t n = 0;
    for (size_t r = 0; r < boot->replicates; r++) {
        double x = boot->lambda_re[r * boot->n_modes];
        if (isfinite(x))
            re[n++] = x;
    }
    if (n >= 4) {
        qsort(re, n, sizeof *re, cmp_double);
        double sd = (el_boot_quantile(re, n, 0.75) - el_boot_quantile(re, n, 0.25)) / 1.349;
        if (sd > 0.0)
            *t = modes->modes[0].lambda_re / sd;
    }
    free(re);
    return EL_OK;
}

/* An "unstable" from a model given more states than the rank test of the
 * canonical correlations supports (iv or ssi with --rank full or a number)
 * is withheld unless its least damped mode is determined by the data and
 * grows at the level by its own replicates: the directions beyond the
 * tested rank are noise, whose eigenvalues fall anywhere, outside the unit
 * circle too, in nearly every replicate, though not as the same mode
 * (measured: ssi --rank full --lags 4 on calibrate's spiral sink at 2,000
 * samples, a stable system, called unstable with full support in 183 of
 * 240 logs; the "growing" mode +6.6 1/s with damping bounds -1 to -0.2 on
 * one log, a 4.8 Hz pair with Re bounds -6.5 to +8.8 on another). A
 * "stable" is left alone: when noise directions are the least damped, the
 * real modes are more damped still. */
static el_status rank_forced_check(const el_modes *modes, const el_model *model,
                                   const el_boot_result *boot, double level, el_verdict *v,
                                   el_warnings *warnings, el_error *err)
{
    int wide_z, wide_f;
    if (model->rank_was_auto || model->tested_rank == 0 ||
        model->rank <= model->tested_rank ||
        (!mode_undetermined(modes, boot, 0, &wide_z, &wide_f) &&
         side_with_boot(boot, 0, level) == SIDE_UNSTABLE))
        return EL_OK;
    el_verdict_set_undecided(v, EL_CAUSE_RANK_FORCED);
    return checked(err, el_warnings_add(warnings,
        "stability is undecided: the growth is not that of one mode the data determine "
        "(mode 1's own bounds), in a model of rank %zu where the rank test supports %zu: "
        "the model "
        "has more states than the rank test supports, and the eigenvalues of the "
        "directions beyond it describe noise; leave --rank out",
        model->rank, model->tested_rank));
}

el_status el_verdict_compute(const el_modes *modes, const el_model *model,
                             const struct el_boot_result *boot, double level,
                             el_verdict *v, el_warnings *warnings, el_error *err)
{
    el_status st = check_args(modes, model, boot, level, v, err);
    if (st != EL_OK)
        return st;
    int use_boot = boot != NULL && boot->replicates > 0;
    memset(v, 0, sizeof *v);
    v->region = EL_REGION_NONE;
    v->unit_root_t = NAN;
    v->p_stable = use_boot ? boot->p_stable : NAN;
    v->marginal_tolerance = EL_VERDICT_MARGINAL_REL / model->dt;
    v->margin_decay_rate = modes->modes[0].decay_rate;
    v->margin_damping_ratio = modes->modes[0].damping_ratio;

    side first = SIDE_MARGINAL;
    for (size_t i = 0; i < modes->n_modes; i++) {
        side s = use_boot ? side_with_boot(boot, i, level)
                          : side_without_boot(&modes->modes[i], v->marginal_tolerance);
        if (i == 0)
            first = s;
        count_mode(v, &modes->modes[i], s);
    }

    if (!use_boot) {
        set_stability(v, first == SIDE_STABLE     ? EL_STABLE
                         : first == SIDE_UNSTABLE ? EL_UNSTABLE
                                                  : EL_MARGINAL);
        v->cause = first == SIDE_MARGINAL ? EL_CAUSE_ON_BOUNDARY : EL_CAUSE_NO_BOOTSTRAP;
    } else if (boot->p_stable >= level) {
        set_stability(v, EL_STABLE);
        double t_ur = NAN;
        st = el_verdict_unit_root_t(modes, model, boot, &t_ur, err);
        if (st != EL_OK)
            return st;
        v->unit_root_t = t_ur;
        double t_crit = el_verdict_unit_root_critical(level);
        if (t_ur > t_crit) {
            el_verdict_set_undecided(v, EL_CAUSE_NEAR_UNIT_ROOT);
            st = checked(err, el_warnings_add(warnings,
                "stability is undecided: the least damped mode is real and slow "
                "(Re lambda %.3g 1/s, %.2g bootstrap standard deviations below zero; "
                "a random walk is rejected only beyond %.2f): the data cannot tell it "
                "from a random walk, and estimates of such a root lean towards "
                "stability", modes->modes[0].lambda_re, -t_ur, -t_crit));
            if (st != EL_OK)
                return st;
        }
    } else if (1.0 - boot->p_stable >= level) {
        set_stability(v, EL_UNSTABLE);
        st = rank_forced_check(modes, model, boot, level, v, warnings, err);
        if (st != EL_OK)
            return st;
    } else {
        el_verdict_set_undecided(v, EL_CAUSE_BOUNDS);
    }

    type_from_counts(v);
    plane(v, modes, model);

    if (!use_boot) {
        st = checked(err, el_warnings_add(warnings,
                                  "bounds not yet computed (no bootstrap): the "
                                  "verdict rests on the point estimate alone, and "
                                  "'marginal' only means |Re lambda| <= %.3g per "
                                  "time unit, a numerical tolerance, not a "
                                  "statistical judgement; run the bootstrap for "
                                  "bounds and P(stable)",
                                  v->marginal_tolerance));
    } else {
        if (v->ambiguous && v->cause == EL_CAUSE_BOUNDS)
            st = warn_stability(modes, boot, level, warnings, err);
        if (st == EL_OK && v->has_plane && boot->has_plane)
            st = warn_plane(v, boot, level, warnings, err);
        if (st == EL_OK)
            st = warn_wide(modes, boot, warnings, err);
    }
    if (st == EL_OK)
        st = warn_nyquist(modes, v, warnings, err);
    /* A class that holds with an open type or a mode at the Nyquist limit
     * keeps its word; the cause says what is open. */
    if (v->ambiguous && (v->cause == EL_CAUSE_NONE || v->cause == EL_CAUSE_NO_BOOTSTRAP)) {
        int nyquist = 0;
        for (size_t i = 0; i < modes->n_modes; i++)
            nyquist |= modes->modes[i].at_nyquist;
        v->cause = nyquist ? EL_CAUSE_NYQUIST : EL_CAUSE_TYPE_OPEN;
    }
    return st;
}
