/* el_advice: reason, next step, support and cautions of a verdict. */
#include "el_advice.h"

#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

/* The general caution of a track, which spans many windows (the assess
 * caution speaks of "this window only"). */
static const char track_general[] =
    "Each window's result is a statistical, local, linear estimate from logged "
    "data: it describes small motions near that window's operating point. It is "
    "not a substitute for the equipment maker's limits, local codes and licensed "
    "engineering judgement.";

const char *el_advice_excitation_caution(void)
{
    return "Tests that excite running plant (a test signal, a step, an impact) need "
           "site authorisation.";
}


/* A duration in seconds as a log's own unit would read it. */
static void duration(double seconds, char *buf, size_t size)
{
    if (seconds >= 2.0 * 86400.0)
        snprintf(buf, size, "%.3g days", seconds / 86400.0);
    else if (seconds >= 2.0 * 3600.0)
        snprintf(buf, size, "%.3g h", seconds / 3600.0);
    else if (seconds >= 120.0)
        snprintf(buf, size, "%.3g min", seconds / 60.0);
    else
        snprintf(buf, size, "%.3g s", seconds);
}

static size_t replicates(const el_assessment *r)
{
    return r->boot.bounds != NULL ? r->boot.replicates : 0;
}

static void support(const el_assessment *r, el_advice *a)
{
    size_t n = replicates(r);
    const el_verdict *v = &r->verdict;
    if (v->cause == EL_CAUSE_METHOD_INCONSISTENT) {
        snprintf(a->support, sizeof a->support,
                 "no bootstrap support: the replicates of this method do not bound the "
                 "truth on this log");
        return;
    }
    if (n == 0 || !isfinite(v->p_stable)) {
        snprintf(a->support, sizeof a->support,
                 "no bootstrap support (no replicates ran): the point estimate alone");
        return;
    }
    size_t n_stable = (size_t)llround(v->p_stable * (double)n);
    if (v->stability == EL_UNSTABLE)
        snprintf(a->support, sizeof a->support,
                 "bootstrap support %zu of %zu replicates (model error not included)",
                 n - n_stable, n);
    else if (v->stability == EL_STABLE)
        snprintf(a->support, sizeof a->support,
                 "bootstrap support %zu of %zu replicates (model error not included)",
                 n_stable, n);
    else
        snprintf(a->support, sizeof a->support,
                 "stable in %zu of %zu bootstrap replicates (model error not included)",
                 n_stable, n);
}

/* Reason for a class that holds (cause none). */
static void reason_decided(const el_assessment *r, double level, el_advice *a)
{
    const el_verdict *v = &r->verdict;
    const char *side = v->stability == EL_STABLE ? "decays" : "grows";
    /* A least-squares cross-check that leans stable beside a growing mode
     * is not counted against it (sensor noise biases least squares towards
     * stability), but it does not agree either: say which. */
    const char *cross = !r->cross_ran ? ""
                        : el_assess_ls_stable_beside_growth(r)
                            ? "; the least-squares cross-check leans stable, which sensor "
                              "noise alone can cause, so it is not counted against growth"
                            : "; the cross-check agrees";
    snprintf(a->reason, sizeof a->reason,
             "the least damped mode %s in at least %.0f%% of the bootstrap replicates%s",
             side, 100.0 * level, cross);
    if (v->stability == EL_STABLE)
        snprintf(a->next_step, sizeof a->next_step,
                 "none for this window; to follow the margin over time, run `eigenlog "
                 "track` on a longer log");
    else
        snprintf(a->next_step, sizeof a->next_step,
                 "act on the cautions below; `eigenlog track` shows when the margin was "
                 "lost");
}

static void few_cycles(const el_assessment *r, el_advice *a)
{
    const el_mode *m = &r->modes.modes[0];
    const el_series *s = &r->series;
    double span_s = (double)s->n_samples * s->dt;
    char have[48], need[48];
    duration(span_s, have, sizeof have);
    if (m->pair && !m->at_nyquist && m->frequency_hz > 0.0) {
        duration(EL_ASSESS_FEW_CYCLES / m->frequency_hz, need, sizeof need);
        snprintf(a->reason, sizeof a->reason,
                 "too few cycles: the least damped mode (%.3g Hz) completes %.3g cycles in "
                 "the %s window, and its replicates fall on both sides of Re lambda = 0",
                 m->frequency_hz, m->frequency_hz * span_s, have);
        snprintf(a->next_step, sizeof a->next_step,
                 "a longer log: at least %.0f cycles (%s) of this mode, more if it is "
                 "lightly damped", EL_ASSESS_FEW_CYCLES, need);
    } else {
        snprintf(a->reason, sizeof a->reason,
                 "too few time constants: the least damped mode is real and slow against "
                 "the %s window, and its replicates fall on both sides of Re lambda = 0",
                 have);
        snprintf(a->next_step, sizeof a->next_step,
                 "a longer log (several times the slowest time constant), or --detrend "
                 "linear if the slow motion is a drift of the level");
    }
}

/* The estimator to try when the two families disagree. */
static void disagree(const el_assessment *r, el_advice *a)
{
    const char *main_m = el_method_name(r->model.method);
    const char *cross_m = el_method_name(r->cross_method);
    if (r->state_check.withdraws) {
        snprintf(a->reason, sizeof a->reason,
                 "the estimators disagree: iv over a %zu-sample horizon says unstable and "
                 "iv on the plain state says stable (P = %.2f)", r->model.lags + 1,
                 r->state_check.p_stable);
        snprintf(a->next_step, sizeof a->next_step,
                 "compare `--method ssi`, or iv on the plain state (`--method iv "
                 "--depth %d`); a longer log helps every estimator", EL_STATE_CHECK_DEPTH);
        return;
    }
    if (r->envelope_check.withdraws) {
        snprintf(a->reason, sizeof a->reason,
                 "the estimators disagree: %s's fastest mode grows at %.3g 1/s, but the "
                 "log's own envelope grows at most at %.3g 1/s", main_m,
                 r->envelope_check.model_rate, r->envelope_check.rate_hi);
        snprintf(a->next_step, sizeof a->next_step,
                 "compare `--method ssi`; a growing mode the log does not show can be "
                 "sensor noise with its own dynamics (coloured noise) taken for a mode");
        return;
    }
    snprintf(a->reason, sizeof a->reason,
             "the estimators disagree: %s and the independent cross-check by %s lean to "
             "different sides of the stability boundary", main_m, cross_m);
    /* Subspace identification is the family neither of the pair belongs to. */
    const char *third = "ssi";
    const char *why = r->cross_method == EL_METHOD_LS
                          ? "least squares reads sensor noise as damping"
                          : "forward-backward DMD can spread an already decayed mode "
                            "up to zero";
    snprintf(a->next_step, sizeof a->next_step,
             "try a third family, `--method %s`, and compare (%s); a longer log helps "
             "every estimator", third, why);
}

/* No verdict from nothing: the data looks like white noise and the model
 * explains next to nothing of it (el_dynamics). */
static void no_dynamics(const el_assessment *r, el_advice *a)
{
    const el_dynamics_test *t = &r->dynamics;
    snprintf(a->reason, sizeof a->reason,
             "no dynamics: no channel's own past predicts it (Ljung-Box over %zu lags, "
             "family p = %.2f) and the model's one-step R2 is %.3f, so the data cannot "
             "be told from white noise and no fixed point type or stability is given",
             t->lags, t->p_family, r->model.fit_r2);
    snprintf(a->next_step, sizeof a->next_step,
             "check that the channels are the ones that move and that the log is sampled "
             "fast enough for the motion of interest (a mode much faster than the "
             "sampling looks like noise); or add excitation (see the cautions)");
}

/* The chosen estimator cannot be right on this log, however long
 * (el_verdict_method_fault): its estimate is shown, its class is not. */
static void method_inconsistent(const el_assessment *r, el_advice *a)
{
    const char *m = el_method_name(r->model.method);
    if (r->model.method == EL_METHOD_LS)
        snprintf(a->reason, sizeof a->reason,
                 "%s is pulled off the truth on this log: its model cannot regenerate "
                 "data like it, the mark of noisy sensors, so its bounds and P(stable) "
                 "are not given as such and no class is claimed", m);
    else
        snprintf(a->reason, sizeof a->reason,
                 "%s does not settle on the truth for a log of ongoing random motion "
                 "(no free decay or growth), so its bounds and P(stable) are not given "
                 "as such and no class is claimed", m);
    snprintf(a->next_step, sizeof a->next_step,
             "run again with --method auto (the default) or --method iv");
}

static void reason_cause(const el_assessment *r, double level, el_advice *a)
{
    const el_verdict *v = &r->verdict;
    const el_regime *g = r->regime;
    const el_split_check *sc = &r->split;
    const el_series *s = &r->series;
    char t1[80], t2[80];
    switch (v->cause) {
    case EL_CAUSE_NONE:
        reason_decided(r, level, a);
        return;
    case EL_CAUSE_ON_BOUNDARY:
        snprintf(a->reason, sizeof a->reason,
                 "the least damped mode sits on the stability boundary: |Re lambda| is "
                 "within the numerical tolerance %.3g 1/s of zero", v->marginal_tolerance);
        snprintf(a->next_step, sizeof a->next_step,
                 "run with the bootstrap (--boot 1000, the default) to see whether the data "
                 "can tell either side");
        return;
    case EL_CAUSE_RANK_FORCED:
        snprintf(a->reason, sizeof a->reason,
                 "the growth is not that of one mode the data determine, in a model of "
                 "rank %zu where the rank test supports %zu: the extra directions describe "
                 "noise",
                 r->model.rank, r->model.tested_rank);
        snprintf(a->next_step, sizeof a->next_step,
                 "run without --rank (the tested rank), or with --method auto");
        return;
    case EL_CAUSE_NEAR_UNIT_ROOT:
        snprintf(a->reason, sizeof a->reason,
                 "the least damped mode is real and slow (Re lambda %.3g 1/s, %.2g bootstrap "
                 "standard deviations below zero, where a random walk is rejected only "
                 "beyond %.2f): the data cannot tell it from a slow wander that never "
                 "returns", r->modes.modes[0].lambda_re, -v->unit_root_t,
                 -el_verdict_unit_root_critical(level));
        snprintf(a->next_step, sizeof a->next_step,
                 "a longer log (many of the slow mode's time constants) decides it; "
                 "`eigenlog track` shows whether the level keeps wandering");
        return;
    case EL_CAUSE_NO_BOOTSTRAP:
        snprintf(a->reason, sizeof a->reason,
                 "the point estimate alone (no bootstrap ran): no bounds, no support");
        snprintf(a->next_step, sizeof a->next_step,
                 "run with the bootstrap (--boot 1000, the default) before relying on the "
                 "word");
        return;
    case EL_CAUSE_BOUNDS:
        snprintf(a->reason, sizeof a->reason,
                 "the bootstrap replicates of the least damped mode fall on both sides of "
                 "Re lambda = 0");
        snprintf(a->next_step, sizeof a->next_step,
                 "a longer log or more excitation (see the cautions); fewer lags or a "
                 "lower rank");
        return;
    case EL_CAUSE_FEW_CYCLES:
        few_cycles(r, a);
        return;
    case EL_CAUSE_LOW_EXCITATION:
        snprintf(a->reason, sizeof a->reason,
                 "low excitation: the model explains little of the data (one-step R2 %.2f), "
                 "so the motion is weak against the noise", r->model.fit_r2);
        snprintf(a->next_step, sizeof a->next_step,
                 "more excitation (log a test signal or a disturbance with --input; see "
                 "the cautions), or --band around the mode of interest");
        return;
    case EL_CAUSE_ESTIMATORS_DISAGREE:
        disagree(r, a);
        return;
    case EL_CAUSE_DRIFT:
        snprintf(a->reason, sizeof a->reason,
                 "the dynamics drift inside the window: the least damped mode decays at "
                 "%.3g 1/s in the first half and %.3g 1/s in the second (z = %.1f)",
                 sc->decay_rate[0], sc->decay_rate[1], sc->z_decay);
        snprintf(a->next_step, sizeof a->next_step,
                 "run `eigenlog track` to follow the change, or assess a shorter window "
                 "(e.g. the second half: --from %s)",
                 el_table_format_time(&r->table, sc->half_t[1][0], t1, sizeof t1));
        return;
    case EL_CAUSE_LEVEL_SHIFT:
        snprintf(a->reason, sizeof a->reason,
                 "the level of %s steps at about %s: the window holds two operating "
                 "points", s->names[g->level_channel],
                 el_table_format_when(&r->table, g->level_step_t, t1, sizeof t1));
        snprintf(a->next_step, sizeof a->next_step,
                 "assess a window after the step (--from %s) or before it, or run "
                 "`eigenlog track`",
                 el_table_format_time(&r->table, g->level_step_t, t2, sizeof t2));
        return;
    case EL_CAUSE_LEVEL_TREND:
        snprintf(a->reason, sizeof a->reason,
                 "the level of %s moves steadily from %s to %s: the operating point is "
                 "not fixed",
                 s->names[g->level_channel], el_table_format_when(&r->table, s->t0, t1, sizeof t1),
                 el_table_format_when(&r->table, s->t0 + (double)(s->n_samples - 1) * s->dt, t2,
                                      sizeof t2));
        snprintf(a->next_step, sizeof a->next_step,
                 "remove the trend with --detrend linear, or follow it with `eigenlog "
                 "track`");
        return;
    case EL_CAUSE_GROWTH:
        snprintf(a->reason, sizeof a->reason,
                 "the amplitude grows %.3gx over the window (model-free test) while the "
                 "model says stable", g != NULL ? g->growth_factor : NAN);
        snprintf(a->next_step, sizeof a->next_step,
                 "run `eigenlog track` to see whether the dynamics change, or assess a "
                 "shorter window");
        return;
    case EL_CAUSE_TOO_FEW_REPLICATES:
        snprintf(a->reason, sizeof a->reason,
                 "fewer than %d bootstrap replicates were asked: no bounds, no class",
                 EL_BOOT_MIN_REPLICATES);
        snprintf(a->next_step, sizeof a->next_step,
                 "use --boot %d or more (the default is 1000)", EL_BOOT_MIN_REPLICATES);
        return;
    case EL_CAUSE_NO_BOUNDS:
        snprintf(a->reason, sizeof a->reason,
                 "no bootstrap bounds could be computed for this model");
        snprintf(a->next_step, sizeof a->next_step,
                 "run without --input (if the inputs are small) or with another --method");
        return;
    case EL_CAUSE_NYQUIST:
        /* Set only when the class holds (el_verdict): say so, so that an
         * UNSTABLE or STABLE above this line does not read as caused by it. */
        snprintf(a->reason, sizeof a->reason,
                 "the stability class holds, but a mode sits at the Nyquist limit: its "
                 "frequency and damping, and so the fixed point's type, are unknown");
        snprintf(a->next_step, sizeof a->next_step,
                 "sample faster, or low-pass filter before logging");
        return;
    case EL_CAUSE_NO_DYNAMICS:
        no_dynamics(r, a);
        return;
    case EL_CAUSE_METHOD_INCONSISTENT:
        method_inconsistent(r, a);
        return;
    case EL_CAUSE_TYPE_OPEN:
        snprintf(a->reason, sizeof a->reason,
                 "the stability class holds, but the fixed point type does not (the bounds "
                 "straddle a boundary of the trace-determinant plane)");
        snprintf(a->next_step, sizeof a->next_step,
                 "a longer log or more excitation (see the cautions) narrows the bounds");
        return;
    }
    snprintf(a->reason, sizeof a->reason, "unknown cause");
    snprintf(a->next_step, sizeof a->next_step, "see the warnings");
}

static void add_caution(el_advice *a, const char *text)
{
    if (a->n_cautions < EL_ADVICE_MAX_CAUTIONS)
        snprintf(a->cautions[a->n_cautions++], EL_ADVICE_TEXT_MAX, "%s", text);
}

void el_advice_assess(const el_assessment *r, double level, el_advice *out)
{
    if (r == NULL || out == NULL)
        return;
    if (!isfinite(level))
        level = r->boot.replicates > 0 && isfinite(r->boot.level) ? r->boot.level : 0.95;
    memset(out, 0, sizeof *out);
    if (r->modes.n_modes == 0)
        snprintf(out->reason, sizeof out->reason, "no model was fitted");
    else
        reason_cause(r, level, out);
    support(r, out);
    const el_verdict *v = &r->verdict;
    if (v->stability == EL_UNSTABLE)
        add_caution(out, "Unstable: follow your site's procedures and inform the "
                         "responsible engineer.");
    else if (v->stability == EL_STABLE)
        add_caution(out, "Stable is not a licence to raise load, change settings or "
                         "bypass protection.");
    else if (v->stability == EL_MARGINAL)
        add_caution(out, "Marginal is not stable: treat the margin as zero until a log "
                         "with bounds says more.");
    else
        add_caution(out, "Undecided is not stable: treat the margin as unknown until a "
                         "log decides it.");
    int excite = r->has_inputs || v->cause == EL_CAUSE_BOUNDS ||
                 v->cause == EL_CAUSE_LOW_EXCITATION || v->cause == EL_CAUSE_TYPE_OPEN ||
                 v->cause == EL_CAUSE_NO_DYNAMICS;
    if (excite)
        add_caution(out, el_advice_excitation_caution());
    add_caution(out, el_assess_caution());
}

size_t el_advice_track_cautions(int shrinking, int time_is_iso, double zero_unix_s,
                                char out[][EL_ADVICE_TEXT_MAX])
{
    size_t n = 0;
    snprintf(out[n++], EL_ADVICE_TEXT_MAX,
             "The track covers the windows shown only: what happened before, between "
             "or after them is not assessed.");
    if (shrinking) {
        char clock[64] = "";
        if (time_is_iso && isfinite(zero_unix_s) && fabs(zero_unix_s) < 1e15) {
            time_t t = (time_t)floor(zero_unix_s);
            struct tm tm;
            if (gmtime_r(&t, &tm) != NULL)
                strftime(clock, sizeof clock, " (the line reaches zero at %Y-%m-%dT%H:%M:%SZ)",
                         &tm);
        }
        snprintf(out[n++], EL_ADVICE_TEXT_MAX,
                 "Time to zero is a straight-line extrapolation%s: the margin may be lost "
                 "sooner.", clock);
    }
    snprintf(out[n++], EL_ADVICE_TEXT_MAX, "%s", track_general);
    return n;
}
