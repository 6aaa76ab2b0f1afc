/* el_assess: the main job as one library call. */
#include "el_assess.h"
#include "el_channels.h"
#include "el_spikes.h"
#include "el_subspace.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Fit plans an assessment plan keeps: the primary and the cross-check
 * estimator, with room for --method auto choosing other pairs in other
 * windows. */
#define ASSESS_FIT_PLANS 4

/* One fit plan and what it was made for. */
typedef struct {
    el_fit_plan *plan;
    el_method method;
    size_t lags, depth, n_samples, n_channels, n_inputs;
    long rank;
    unsigned long used;           /* last use (the least recent is replaced) */
} fit_slot;

struct el_assess_plan {
    size_t n_samples, n_channels, n_inputs;
    fit_slot fits[ASSESS_FIT_PLANS];
    unsigned long uses;
    el_prep_band_plan *band;      /* the band limit of the last window, or NULL */
    size_t band_samples;
    double band_dt, band_lo, band_hi;
    el_warnings band_warnings;    /* what making it said, repeated for every window */
    el_regime *regime;            /* lent to the results (parts_borrowed) */
    size_t regime_samples, regime_channels;
    el_validation *validation;    /* lent to the results (parts_borrowed) */
    size_t validation_channels, validation_lags, validation_samples;
    double *half_values;          /* the split-half check's copy of one half */
    const char *split_stage;      /* the stage the split-half check runs in (progress) */
    size_t half_capacity;         /* doubles in half_values */
    el_subspace_acf acf;          /* the window's mean autocorrelation, computed once
                                     for every automatic horizon of the window (auto's
                                     choice, the hankel and iv preparations) */
    int one_shot;                 /* 1: one window only (el_assess_analyse): each
                                     stage's workspace is freed when the stage is
                                     done, so the stages' memory does not add up */
};

void el_assess_defaults(el_assess_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->max_gap = 5;
    opt->method_auto = 1;
    el_fit_defaults(&opt->fit);
    el_boot_defaults(&opt->boot);
}

const char *el_assess_caution(void)
{
    return "This is a statistical, local, linear estimate from logged data: it "
           "describes small motions near the operating point seen in this "
           "window only. It is not a substitute for the equipment maker's "
           "limits, local codes and licensed engineering judgement.";
}


/* One warning per channel with isolated one-sample spikes (el_spikes):
 * the fit follows them, so the reader must know they are there. */
static el_status note_spikes(el_assessment *r, el_error *err)
{
    const el_series *s = &r->series;
    for (size_t c = 0; c < s->n_channels; c++) {
        el_spikes sp = el_spikes_find(s->values + c * s->n_samples, s->n_samples);
        if (sp.count == 0)
            continue;
        char at[80];
        el_table_format_when(&r->table, s->t0 + (double)sp.first * s->dt, at, sizeof at);
        if (el_warnings_add(&r->input_warnings,
                            "channel '%s' has %zu isolated one-sample spike%s (the first at "
                            "%s, up to %.0f times the typical sample-to-sample change): "
                            "sensor glitches? The fit follows them; if they are not real, "
                            "cut them out of the log or choose a window without them",
                            s->names[c], sp.count, sp.count == 1 ? "" : "s", at,
                            sp.largest_sd) != EL_OK)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    return EL_OK;
}

static el_status build_series(const el_assess_options *opt, el_assessment *r,
                              el_error *err)
{
    el_timebase_options tb;
    el_timebase_defaults(&tb);
    tb.max_gap = opt->max_gap;
    el_status st;
    if (opt->from_text != NULL &&
        (st = el_table_parse_time(&r->table, opt->from_text, &tb.from, err)) != EL_OK) {
        el_error_option(err, "--from");
        return st;
    }
    if (opt->to_text != NULL &&
        (st = el_table_parse_time(&r->table, opt->to_text, &tb.to, err)) != EL_OK) {
        el_error_option(err, "--to");
        return st;
    }
    if (tb.from > tb.to) {
        el_error_set(err, EL_ERR_USAGE, "the window starts after it ends");
        el_error_option(err, "--from");
        el_error_hint(err, "give --from earlier than --to");
        return EL_ERR_USAGE;
    }
    size_t n_cols = r->table.n_columns;
    size_t *channels = malloc(2 * n_cols * sizeof *channels);
    if (channels == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    size_t *inputs = channels + n_cols;
    size_t n_channels = 0, n_inputs = 0;
    st = EL_OK;
    if (opt->inputs != NULL)
        st = el_channels_select(&r->table, opt->inputs, "--input", NULL, 0, inputs,
                                &n_inputs, err);
    if (st == EL_OK)
        st = el_channels_select(&r->table, opt->channels, "--channels", inputs,
                                n_inputs, channels, &n_channels, err);
    /* The build's notes are kept aside: when constant channels of the
     * default set are left out, the series is built again and only that
     * build's notes stand (the first one's may count the channels left out). */
    el_warnings built = {0};
    if (st == EL_OK)
        st = el_series_build(&r->table, channels, n_channels, &tb, &r->series, &built, err);
    if (st == EL_OK && (opt->channels == NULL || opt->channels[0] == '\0')) {
        size_t kept = n_channels;
        st = el_channels_drop_constant(&r->series, channels, &kept, &r->input_warnings, err);
        if (st == EL_OK && kept < n_channels) {
            el_warnings_free(&built);
            el_series_free(&r->series);
            st = el_series_build(&r->table, channels, kept, &tb, &r->series, &built, err);
        }
    }
    for (size_t i = 0; st == EL_OK && i < built.count; i++)
        if (el_warnings_add(&r->input_warnings, "%s", built.items[i]) != EL_OK)
            st = el_error_set(err, EL_ERR_NOMEM, "out of memory");
    el_warnings_free(&built);
    if (st == EL_OK)
        st = note_spikes(r, err);
    /* The inputs share the time column, hence the grid, of the channels. */
    if (st == EL_OK && n_inputs > 0) {
        st = el_series_build(&r->table, inputs, n_inputs, &tb, &r->inputs, NULL, err);
        r->has_inputs = st == EL_OK;
    }
    free(channels);
    return st;
}

static el_status assess_load(const el_assess_options *opt, el_assessment *r,
                             el_error *err);

/* Stage progress: begin (done 0) and end (done 1) of a named stage. */
static void stage(const el_assess_options *opt, const char *name, int end)
{
    if (opt->stage_progress != NULL)
        opt->stage_progress(opt->stage_ctx, name, end ? 1 : 0, 1);
}

/* The replicates of a check's bootstrap counted under the check's stage
 * (a 200-channel log's cross-check and split halves run for a minute
 * each): done is offset by the replicates of earlier runs of the stage,
 * out of total for all of them. */
typedef struct {
    const el_assess_options *opt;
    const char *name;
    size_t offset, total;
} stage_count;

static void stage_count_relay(void *ctx, size_t done, size_t total)
{
    const stage_count *c = ctx;
    (void)total;
    c->opt->stage_progress(c->opt->stage_ctx, c->name, c->offset + done, c->total);
}

/* Points the bootstrap options' progress at the relay (none without a
 * stage callback). */
static void count_under_stage(el_boot_options *bo, stage_count *c)
{
    bo->progress = c->opt->stage_progress != NULL ? stage_count_relay : NULL;
    bo->progress_ctx = c;
}

el_status el_assess_load(const el_assess_options *opt, el_assessment *r,
                         el_error *err)
{
    stage(opt, "reading the log", 0);
    el_status loaded = assess_load(opt, r, err);
    stage(opt, "reading the log", 1);
    return loaded;
}

static el_status assess_load(const el_assess_options *opt, el_assessment *r,
                             el_error *err)
{
    el_ingest_options in = {.time_column = opt->time_column,
                            .time_unit = opt->time_unit,
                            .decimal = opt->decimal,
                            .date_order = opt->date_order,
                            .channels = opt->channels,
                            .inputs = opt->inputs};
    el_status st = opt->stream != NULL
                       ? el_table_read_stream(opt->stream, opt->path ? opt->path : "<stream>",
                                              &in, &r->table, err)
                   : opt->n_paths > 1 ? el_table_read_files(opt->paths, opt->n_paths, &in,
                                                            &r->table, err)
                                      : el_table_read(opt->path, &in, &r->table, err);
    /* What ingest decided (skipped columns, assumed unit) leads the warnings. */
    for (size_t i = 0; st == EL_OK && i < r->table.notes.count; i++)
        if ((st = el_warnings_add(&r->input_warnings, "%s", r->table.notes.items[i])))
            el_error_set(err, st, "out of memory for a warning");
    if (st == EL_OK)
        st = build_series(opt, r, err);
    return st;
}

/* Welch spectra of the window and the mode/peak cross-check. A window too
 * short for a spectrum is not an error for assess: the cross-check is then
 * skipped and the report says so. */
static el_status crosscheck_spectra(el_assessment *r, el_error *err)
{
    el_error local;
    el_error_clear(&local);
    el_status st = el_spectrum_compute(&r->series, NULL, &r->spectra, &r->peaks,
                                       NULL, &local);
    if (st == EL_ERR_DATA || st == EL_ERR_USAGE)
        return el_warnings_add(&r->warnings,
                               "spectral cross-check skipped: %s", local.message);
    if (st != EL_OK) {
        *err = local;
        return st;
    }
    r->has_spectra = 1;
    size_t n_slots = r->peaks.n_channels * r->peaks.max_per_channel;
    r->mode_checks = calloc(r->modes.n_modes + 1, sizeof *r->mode_checks);
    r->peak_checks = calloc(n_slots + 1, sizeof *r->peak_checks);
    if (r->mode_checks == NULL || r->peak_checks == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    return el_spectrum_crosscheck(&r->modes, &r->spectra, &r->peaks,
                                  (const char *const *)r->series.names, NULL,
                                  r->mode_checks, r->peak_checks, &r->warnings, err);
}

/* Detrend and band limit, in place on the series, before anything looks at
 * its dynamics. The band edges are checked against the series' Nyquist
 * frequency, so --band is parsed here, once dt is known. */
static el_status band_plan(el_assess_plan *ap, const el_series *s, double lo, double hi,
                           el_warnings *input_warnings, el_prep_band_plan **out,
                           el_error *err);

static el_status prepare(el_assess_plan *ap, const el_assess_options *opt,
                         el_assessment *r, el_error *err)
{
    size_t n = r->series.n_channels;
    r->detrend_level = calloc(n, sizeof *r->detrend_level);
    r->detrend_slope = calloc(n, sizeof *r->detrend_slope);
    r->operating_point = calloc(n, sizeof *r->operating_point);
    r->dynamics_q = calloc(n, sizeof *r->dynamics_q);
    r->dynamics_p = calloc(n, sizeof *r->dynamics_p);
    if (r->detrend_level == NULL || r->detrend_slope == NULL || r->operating_point == NULL ||
        r->dynamics_q == NULL || r->dynamics_p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    el_status st = el_prep_detrend(&r->series, opt->detrend, r->detrend_level,
                                   r->detrend_slope, err);
    /* Inputs get the same detrend so a drift in an input is not read as
     * the system's response to it; their removed levels are not needed. */
    if (st == EL_OK && r->has_inputs)
        st = el_prep_detrend(&r->inputs, opt->detrend, NULL, NULL, err);
    /* Whiteness of the data before any band limit, which would colour
     * white noise (no verdict from nothing: el_dynamics). */
    if (st == EL_OK)
        st = el_dynamics_test_channels(&r->series, &r->dynamics, r->dynamics_q,
                                       r->dynamics_p, err);
    if (st != EL_OK || opt->band_text == NULL)
        return st;
    double lo = 0, hi = 0;
    st = el_prep_parse_band(opt->band_text, r->series.dt, &lo, &hi, err);
    el_prep_band_plan *plan = NULL;
    if (st == EL_OK)
        st = band_plan(ap, &r->series, lo, hi, &r->input_warnings, &plan, err);
    if (st == EL_OK)
        st = el_prep_band_apply(plan, &r->series, err);
    /* The same band on the inputs: a model relating a filtered output to an
     * unfiltered input would attribute the filter to the system. */
    if (st == EL_OK && r->has_inputs)
        st = el_prep_band_apply(plan, &r->inputs, err);
    if (st == EL_OK) {
        r->band = el_prep_band_plan_band(plan);
        r->has_band = 1;
    }
    return st;
}

/* The plan's regime detector for this window's size (made or remade
 * here), lent to the result. */
static el_status detect_regime(el_assess_plan *ap, const el_assess_options *opt,
                               el_assessment *r, el_error *err)
{
    el_regime_options ro;
    el_regime_defaults(&ro);
    ro.driven = opt->inputs != NULL;
    el_status st = EL_OK;
    if (ap->regime == NULL || ap->regime_samples != r->series.n_samples ||
        ap->regime_channels != r->series.n_channels) {
        el_regime_destroy(ap->regime);
        ap->regime = NULL;
        st = el_regime_create(r->series.n_samples, r->series.n_channels, &ap->regime,
                              err);
        ap->regime_samples = r->series.n_samples;
        ap->regime_channels = r->series.n_channels;
    }
    r->regime = ap->regime;
    r->parts_borrowed = 1;
    if (st == EL_OK)
        st = el_regime_run(r->regime, &r->series, &ro, &r->warnings, err);
    if (ap->one_shot)
        el_regime_release_work(r->regime);
    return st;
}

/* The operating point in physical units: the model's fixed point (lag-0
 * block) plus the level that detrending removed. */
static void operating_point(el_assessment *r)
{
    r->operating_point_ok = r->model.operating_point_ok;
    for (size_t c = 0; c < r->series.n_channels; c++)
        r->operating_point[c] = r->model.operating_point_ok
                                    ? r->model.operating_point[c] + r->detrend_level[c]
                                    : NAN;
}

/* Model-free cross-check: an envelope that grows significantly over the
 * window can never be reported as a stable operating point, whatever the
 * fitted model says (a model can be biased; the envelope is not a model). */
static el_status veto_growth(el_assessment *r, el_error *err)
{
    double factor = 0, p = 1;
    size_t channel = 0;
    if (!el_regime_growth_veto(r->regime, &factor, &p, &channel) ||
        r->verdict.stability != EL_STABLE)
        return EL_OK;
    r->growth_veto = 1;
    el_verdict_set_undecided(&r->verdict, EL_CAUSE_GROWTH);
    return el_regime_growth_warning(r->regime, &r->series, &r->warnings, err);
}

/* The plan's validation for this window's size and lags (made or remade
 * here), lent to the result. */
static el_status validate(el_assess_plan *ap, el_assessment *r, el_error *err)
{
    el_status st = EL_OK;
    if (ap->validation == NULL || ap->validation_channels != r->series.n_channels ||
        ap->validation_lags != r->model.lags ||
        ap->validation_samples != r->series.n_samples) {
        el_validation_destroy(ap->validation);
        ap->validation = NULL;
        st = el_validation_create(r->series.n_channels, r->model.lags,
                                  r->series.n_samples, &ap->validation, err);
        ap->validation_channels = r->series.n_channels;
        ap->validation_lags = r->model.lags;
        ap->validation_samples = r->series.n_samples;
    }
    r->validation = ap->validation;
    r->parts_borrowed = 1;
    if (st == EL_OK) {
        el_validation_set_inputs(r->validation, r->has_inputs ? &r->inputs : NULL);
        el_validation_set_band_limited(r->validation, r->has_band);
    }
    if (st == EL_OK)
        st = el_validation_run(r->validation, &r->model, &r->series,
                               &r->verdict.stability, &r->warnings, err);
    return st;
}

void el_assess_choose_method(el_regime_class regime, int has_inputs,
                             el_method *primary, el_method *cross,
                             char *reason, size_t reason_size)
{
    /* Measured on simulated logs of known systems (docs/accuracy.md):
     * plain least squares reads sensor noise as damping in every regime;
     * fb and tls recover free transients but report neutral stability for
     * a stationary, disturbance-driven log; instrumental variables with
     * lagged instruments (white sensor noise is uncorrelated with them)
     * are consistent in both regimes. So iv leads, and the regime picks
     * the independent family that checks it. */
    switch (regime) {
    case EL_REGIME_DRIVEN:
        /* Least squares with inputs (DMD with control) reads sensor noise
         * as damping like plain least squares (docs/accuracy.md, input
         * cases: +223% damping error at 20 dB against -1% for iv). */
        *primary = EL_METHOD_IV;
        *cross = EL_METHOD_LS;
        snprintf(reason, reason_size,
                 "measured inputs: instrumental variables with inputs, cross-checked "
                 "by least squares with inputs (DMD with control)");
        return;
    case EL_REGIME_TRANSIENT:
        *primary = EL_METHOD_IV;
        *cross = EL_METHOD_FB;
        snprintf(reason, reason_size,
                 "transient data (the amplitude changes over the window): instrumental "
                 "variables, cross-checked by forward-backward DMD, which is unbiased "
                 "for free transients under sensor noise");
        return;
    case EL_REGIME_STATIONARY:
    case EL_REGIME_UNDETERMINED:
        break;
    }
    (void)has_inputs;
    *primary = EL_METHOD_IV;
    *cross = EL_METHOD_LS;
    snprintf(reason, reason_size,
             "%s data: instrumental variables (consistent for disturbance-driven "
             "logs, where forward-backward and total least squares are not), "
             "cross-checked by least squares",
             regime == EL_REGIME_STATIONARY ? "stationary" : "short or flat");
}

/* Stability class a p_stable supports at level: +1 stable, -1 unstable,
 * 0 undecided. Without bootstrap the point estimate's class counts. */
static int decided_class(double p_stable, double level, const el_modes *modes,
                         double tol)
{
    if (isfinite(p_stable))
        return p_stable >= level ? 1 : 1.0 - p_stable >= level ? -1 : 0;
    double top = modes->n_modes > 0 ? modes->modes[0].lambda_re : 0.0;
    return top < -tol ? 1 : top > tol ? -1 : 0;
}

/* Bounds were asked for but could not be computed (every replicate
 * failed, or an estimator without a bootstrap): the point estimate's class
 * is reported in a warning, but it is not a verdict that holds at the
 * asked level (docs/accuracy.md, D2: point estimates of two estimators
 * agreed on "stable" for a growing driven system at 10 dB). */
static el_status withhold_unbounded(el_assessment *r, el_error *err)
{
    (void)err;
    const char *point = r->verdict.stability_name;
    el_verdict_set_undecided(&r->verdict, EL_CAUSE_NO_BOUNDS);
    return el_warnings_add(&r->warnings,
                           "no bounds could be computed, so no class is confirmed at the "
                           "asked level: the point estimate alone says %s; run without "
                           "--input (if the inputs are small) for bounds",
                           point);
}

/* Bootstrap replicates were asked for, but fewer than EL_BOOT_MIN_REPLICATES:
 * no bootstrap ran (bounds and P(stable) are n/a, null in JSON) and the
 * point estimate's class is not presented as a verdict that holds. */
static el_status withhold_too_few(const el_assess_options *opt, el_assessment *r,
                                  el_error *err)
{
    const char *point = r->verdict.stability_name;
    el_verdict_set_undecided(&r->verdict, EL_CAUSE_TOO_FEW_REPLICATES);
    if (el_warnings_add(&r->warnings,
                        "--boot %zu: fewer than %d bootstrap replicates cannot support "
                        "bounds or a probability, so none are given (n/a) and no class "
                        "is confirmed: the point estimate alone says %s; use --boot %d "
                        "or more (the default is 1000)",
                        opt->boot.replicates, EL_BOOT_MIN_REPLICATES, point,
                        EL_BOOT_MIN_REPLICATES) != EL_OK)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    return EL_OK;
}

/* el_verdict_compute; without the bootstrap because too few replicates
 * were asked, its "bounds not yet computed" warning is left out: it reads
 * 'marginal' as a numerical tolerance, while withhold_too_few makes the
 * result marginal for want of replicates and says so itself. */
static el_status verdict(const el_assess_options *opt, int boot_run, el_assessment *r,
                         el_error *err)
{
    if (boot_run || opt->boot.replicates == 0)
        return el_verdict_compute(&r->modes, &r->model, boot_run ? &r->boot : NULL,
                                  opt->boot.level, &r->verdict, &r->warnings, err);
    static const char no_bounds[] = "bounds not yet computed";
    el_warnings vw = {0};
    el_status st = el_verdict_compute(&r->modes, &r->model, NULL, opt->boot.level,
                                      &r->verdict, &vw, err);
    for (size_t i = 0; st == EL_OK && i < vw.count; i++)
        if (strncmp(vw.items[i], no_bounds, sizeof no_bounds - 1) != 0 &&
            el_warnings_add(&r->warnings, "%s", vw.items[i]) != EL_OK)
            st = el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    el_warnings_free(&vw);
    return st;
}

/* Fits the cross-check estimator on the same prepared data and compares
 * its stability class with the verdict. Asymmetric on purpose: the most
 * harmful answer is a confident "stable" for a system that is not, so a
 * "stable" becomes ambiguous as soon as the second family leans the other
 * way (P(stable) below one half, or its point estimate unstable without a
 * bootstrap), while an "unstable" is only withdrawn when the second family
 * confidently says stable. Requiring the second family to confirm "stable"
 * at the full level instead withheld right answers on decaying logs, where
 * forward-backward DMD spreads a fast, already decayed mode up to zero
 * (docs/accuracy.md, D4). Its own warnings stay out of the report but one
 * summary. */
static el_status plan_fit(el_assess_plan *ap, const el_series *s,
                          const el_fit_options *fit, el_model *model,
                          el_warnings *warnings, el_error *err);

static el_status cross_check(el_assess_plan *ap, const el_assess_options *opt,
                             const el_fit_options *fit, el_assessment *r, el_error *err)
{
    el_fit_options cf = *fit;
    cf.method = r->cross_method;
    /* fb and tls give arbitrary eigenvalues to pure-noise directions, so
     * they keep only the directions that carry signal. */
    if (cf.method == EL_METHOD_FB || cf.method == EL_METHOD_TLS)
        cf.rank = EL_RANK_AUTO;
    el_warnings quiet = {0};
    el_error local;
    el_error_clear(&local);
    el_status st = plan_fit(ap, &r->series, &cf, &r->cross_model, &quiet, &local);
    if (st == EL_OK)
        st = el_modes_compute(&r->cross_model, &r->cross_modes, &quiet, &local);
    if (st == EL_OK && opt->boot.replicates >= EL_BOOT_MIN_REPLICATES) {
        el_boot_options bo = opt->boot;
        bo.progress = NULL;
        /* Of a least-squares cross-check only P(stable) < 1/2 counts
         * (cross_biased_stable below): a median test, which
         * EL_ASSESS_CROSS_LS_REPLICATES resolve as well as a thousand
         * except within a few hundredths of 1/2, at a fifth of the cost
         * (it was two thirds of a `track` window's time). */
        if (cf.method == EL_METHOD_LS && bo.replicates > EL_ASSESS_CROSS_LS_REPLICATES)
            bo.replicates = EL_ASSESS_CROSS_LS_REPLICATES;
        stage_count count = { opt, "cross-check fit", 0, bo.replicates };
        count_under_stage(&bo, &count);
        st = el_boot_run(&r->series, &cf, &r->cross_model, &r->cross_modes, &bo,
                         &r->cross_boot, &quiet, &local);
    }
    el_warnings_free(&quiet);
    if (st == EL_ERR_NOMEM || st == EL_ERR_INTERNAL) {
        *err = local;
        return st;
    }
    if (st != EL_OK)
        return el_warnings_add(&r->warnings,
                               "cross-check by %s could not be run (%s): the verdict rests "
                               "on %s alone", el_method_name(cf.method), local.message,
                               el_method_name(r->model.method));
    r->cross_ran = 1;
    r->cross_p_stable = r->cross_boot.replicates > 0 ? r->cross_boot.p_stable : NAN;
    double level = opt->boot.level, tol = r->verdict.marginal_tolerance;
    int main_class = r->verdict.ambiguous ? 0
                     : r->verdict.stability == EL_STABLE ? 1
                     : r->verdict.stability == EL_UNSTABLE ? -1 : 0;
    int cross_class = decided_class(r->cross_p_stable, level, &r->cross_modes, tol);
    int cross_leans_unstable = isfinite(r->cross_p_stable)
                                   ? r->cross_p_stable < 0.5
                                   : decided_class(NAN, level, &r->cross_modes, tol) < 0;
    /* Sensor noise biases least squares towards stability in every
     * regime (Dawson et al. 2016): its confident "stable" is weak evidence
     * against "unstable" (measured: it said stable for growing systems in
     * 10/10 logs at 30 dB and below, docs/accuracy.md), while its lean
     * towards "unstable" still counts against a "stable". */
    int cross_biased_stable = r->cross_method == EL_METHOD_LS;
    r->cross_agrees = main_class == 0 || (main_class == 1 && !cross_leans_unstable) ||
                      (main_class == -1 && (cross_class != 1 || cross_biased_stable));
    if (r->cross_agrees)
        return EL_OK;
    const el_mode *m = r->cross_modes.n_modes > 0 ? &r->cross_modes.modes[0] : NULL;
    el_verdict_set_undecided(&r->verdict, EL_CAUSE_ESTIMATORS_DISAGREE);
    char p_text[80] = "no bootstrap";
    if (isfinite(r->cross_p_stable))
        snprintf(p_text, sizeof p_text, "stable in %.0f of its %zu bootstrap replicates",
                 r->cross_p_stable * (double)r->cross_boot.replicates,
                 r->cross_boot.replicates);
    return el_warnings_add(&r->warnings,
                           "the estimators disagree: %s says %s, but the independent "
                           "cross-check by %s leans the other way (%s; its least damped "
                           "mode has Re lambda %.4g 1/s): the data cannot tell which is "
                           "right (sensor noise, too short a log, or a model that does "
                           "not fit); the verdict is ambiguous",
                           el_method_name(r->model.method),
                           main_class == 1 ? "stable" : "unstable",
                           el_method_name(cf.method), p_text, m ? m->lambda_re : NAN);
}

int el_assess_ls_stable_beside_growth(const el_assessment *r)
{
    return r != NULL && r->cross_ran && r->cross_agrees && r->cross_method == EL_METHOD_LS &&
           isfinite(r->cross_p_stable) && r->cross_p_stable >= 0.5 && r->modes.n_modes > 0 &&
           r->modes.modes[0].lambda_re > 0.0;
}

/* An "unstable" from iv's automatic multi-step state is withdrawn when iv
 * on the plain state confidently says stable (el_state_check.h says why
 * this estimator and not least squares). Only "unstable" is checked: a
 * spurious growing root of a died-out fast mode is the failure seen; a
 * "stable" has the cross-check and the growth veto. */
static el_status plain_state_check(const el_assess_options *opt, const el_fit_options *fit,
                                   el_assessment *r, el_error *err)
{
    if (r->verdict.ambiguous || r->verdict.stability != EL_UNSTABLE ||
        !el_state_check_applies(fit, &r->model))
        return EL_OK;
    el_status st = el_state_check_run(&r->series, fit, &opt->boot, &r->state_check, err);
    if (st != EL_OK || !r->state_check.withdraws)
        return st;
    el_verdict_set_undecided(&r->verdict, EL_CAUSE_ESTIMATORS_DISAGREE);
    return el_warnings_add(&r->warnings,
                           "the estimators disagree: iv over a %zu-sample horizon says "
                           "unstable, but iv on the plain state (no lags) says stable in "
                           "%.0f of its %zu bootstrap replicates (its least damped mode "
                           "has Re lambda %.4g 1/s): a fast mode that dies out within a "
                           "few samples can look growing over a long horizon; the "
                           "verdict is ambiguous",
                           r->model.lags + 1,
                           r->state_check.p_stable * (double)r->state_check.replicates,
                           r->state_check.replicates, r->state_check.re_max);
}

/* ---- one operating point: split halves, level shift and trend ------- */

const char *el_nonstat_name(el_nonstat_kind kind)
{
    static const char *const names[] = {"none", "drift", "level_shift", "level_trend"};
    return (unsigned)kind < sizeof names / sizeof names[0] ? names[kind] : "unknown";
}

/* Fits and bootstraps one half; EL_OK with sc->not_tested set when the
 * half cannot be fitted (too short for the model): the check is then not
 * made. Only memory and internal errors stop the assessment. */
static el_status fit_half(el_assess_plan *ap, const el_assess_options *opt,
                          el_fit_options *fit, const el_series *half, size_t h,
                          const double ref[2], el_split_check *sc, el_error *err)
{
    el_model model = {0};
    el_modes modes = {0};
    el_boot_result boot = {0};
    el_warnings quiet = {0};
    el_error local;
    el_error_clear(&local);
    el_status st = plan_fit(ap, half, fit, &model, &quiet, &local);
    if (st == EL_OK)
        st = el_modes_compute(&model, &modes, &quiet, &local);
    if (st == EL_OK) {
        el_boot_options bo = opt->boot;
        bo.replicates = EL_ASSESS_SPLIT_REPLICATES;
        stage_count count = { opt, ap->split_stage, h * EL_ASSESS_SPLIT_REPLICATES,
                              2 * EL_ASSESS_SPLIT_REPLICATES };
        count_under_stage(&bo, &count);
        st = el_boot_run(half, fit, &model, &modes, &bo, &boot, &quiet, &local);
    }
    if (st == EL_OK && (boot.replicates < 2 || boot.lambda_re == NULL))
        snprintf(sc->not_tested, sizeof sc->not_tested,
                 "the bootstrap of half %zu gave no replicates", h + 1);
    else if (st == EL_OK)
        el_split_take_mode(sc, h, &modes, el_split_mode(&modes, ref), &boot);
    el_model_free(&model);
    el_modes_free(&modes);
    el_boot_free(&boot);
    el_warnings_free(&quiet);
    if (st == EL_ERR_NOMEM || st == EL_ERR_INTERNAL) {
        *err = local;
        return st;
    }
    if (st != EL_OK)
        snprintf(sc->not_tested, sizeof sc->not_tested, "half %zu could not be fitted: %.100s",
                 h + 1, local.message);
    return EL_OK;
}

/* Fits and bootstraps both halves with fit (its inputs are set here);
 * sc->not_tested says why when a half could not be fitted. */
static el_status fit_halves(el_assess_plan *ap, const el_assess_options *opt,
                            el_fit_options *fit, el_assessment *r, size_t m, size_t nu,
                            el_error *err)
{
    el_split_check *sc = &r->split;
    const el_series *s = &r->series;
    el_status st = EL_OK;
    for (size_t h = 0; h < 2 && st == EL_OK && sc->not_tested[0] == '\0'; h++) {
        el_series half, half_inputs;
        el_split_half_series(s, h, ap->half_values, &half);
        fit->inputs = NULL;
        if (nu > 0) {
            el_split_half_series(&r->inputs, h, ap->half_values + m * s->n_channels,
                                 &half_inputs);
            fit->inputs = &half_inputs;
        }
        sc->half_t[h][0] = half.t0;
        sc->half_t[h][1] = half.t0 + (double)(m - 1) * s->dt;
        /* The mode compared: the window's least damped when the window
         * is fitted already, else (hankel, whose halves decide the
         * window's estimator) the first half's least damped. */
        double ref[2] = {NAN, NAN};
        if (r->modes.n_modes > 0) {
            ref[0] = r->modes.modes[0].lambda_re;
            ref[1] = fabs(r->modes.modes[0].lambda_im);
        } else if (h == 1) {
            ref[0] = sc->lambda_half[0][0];
            ref[1] = fabs(sc->lambda_half[0][1]);
        }
        st = fit_half(ap, opt, fit, &half, h, ref, sc, err);
    }
    return st;
}

/* The split-half check (el_split_check in el_assess.h). Needs the
 * bootstrap (its spread is the yardstick) and inputs cut the same way. */
static el_status split_halves(el_assess_plan *ap, const el_assess_options *opt,
                              const el_fit_options *window_fit, el_assessment *r,
                              el_error *err);

/* The split-half check; a single window's copy of its halves is freed
 * when it is done. */
static el_status split_check(el_assess_plan *ap, const el_assess_options *opt,
                             const el_fit_options *window_fit, el_assessment *r,
                             el_error *err)
{
    el_status st = split_halves(ap, opt, window_fit, r, err);
    if (ap->one_shot) {
        free(ap->half_values);
        ap->half_values = NULL;
        ap->half_capacity = 0;
    }
    return st;
}

static el_status split_halves(el_assess_plan *ap, const el_assess_options *opt,
                              const el_fit_options *window_fit, el_assessment *r,
                              el_error *err)
{
    el_split_check *sc = &r->split;
    const el_series *s = &r->series;
    size_t m = s->n_samples / 2, nu = r->has_inputs ? r->inputs.n_channels : 0;
    sc->z_decay = sc->z_frequency = NAN;
    sc->split_t = s->t0 + 0.5 * (double)(s->n_samples - 1) * s->dt;
    if (opt->boot.replicates < EL_BOOT_MIN_REPLICATES) {
        snprintf(sc->not_tested, sizeof sc->not_tested,
                 "no bootstrap, whose spread the check needs");
        return EL_OK;
    }
    el_status st = EL_OK;
    size_t need = m * (s->n_channels + nu);
    if (ap->half_capacity < need) {
        free(ap->half_values);
        ap->half_capacity = 0;
        ap->half_values = malloc(need * sizeof *ap->half_values);
        if (ap->half_values == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory");
        ap->half_capacity = need;
    }
    if (nu == 0) {
        st = el_split_white_half(s, ap->half_values, sc, err);
        if (st != EL_OK || sc->not_tested[0] != '\0')
            return st;
    }
    el_fit_options fit = *window_fit;
    if (fit.method != EL_METHOD_HANKEL) {
        fit.rank = (long)r->model.rank;   /* the same modes in both halves */
        fit.lags = r->model.lags;
    }
    st = fit_halves(ap, opt, &fit, r, m, nu, err);
    if (st == EL_OK && sc->not_tested[0] != '\0' && fit.method == EL_METHOD_HANKEL) {
        /* A half of a drifting log may hold no mode that persists across
         * model orders, and the check needs both halves: both are then
         * fitted by iv, the estimator auto falls back to, each at the rank
         * its test gives. */
        sc->not_tested[0] = '\0';
        sc->halves_by_iv = 1;
        fit.method = EL_METHOD_IV;
        fit.lags = 0;
        fit.rank = EL_RANK_AUTO;
        st = fit_halves(ap, opt, &fit, r, m, nu, err);
    }
    if (st != EL_OK || sc->not_tested[0] != '\0')
        return st;
    el_split_decide(sc);
    return EL_OK;
}


/* A free decay towards the operating point reads as a level step or line
 * in the block means (sink-decay in docs/accuracy.md: the fast mode's
 * first seconds "step" the level of y1). The model's own free run from
 * the first state is the other explanation: when the model's slowest
 * mode settles inside the window (EL_ASSESS_SETTLE_TIME_CONSTANTS of it
 * span the window) and the free run leaves less of a channel's variance
 * than the step or line does (el_regime_level_recheck), that channel's
 * movement is the decay, not a second operating point. A run that
 * diverged explains nothing (its errors are NaN), nor does a slow mode
 * that has not settled: a level that is still moving at the window's end
 * is the moving operating point the check is for, whatever its shape. */
static void level_by_free_run(el_assessment *r)
{
    el_regime *g = r->regime;
    if (g == NULL || g->level_kind == EL_REGIME_LEVEL_NONE || r->validation == NULL ||
        r->modes.n_modes == 0)
        return;
    const el_series *s = &r->series;
    double span_s = (double)(s->n_samples - 1) * s->dt;
    if (!(r->modes.modes[0].decay_rate * span_s >= EL_ASSESS_SETTLE_TIME_CONSTANTS))
        return;
    el_regime_level_recheck(g, s, r->validation->free_nrmse);
}

/* What breaks one operating point, first found of a level shift, a level
 * trend (either can make the halves differ) and drift,
 * with a warning that names it; a "stable" (or a class withheld for a
 * reason this explains) becomes undecided for that cause. An "unstable"
 * stays: the conservative answer needs no second look before acting. */
static el_status judge_one_point(el_assessment *r, el_error *err)
{
    const el_regime *g = r->regime;
    const el_split_check *sc = &r->split;
    el_verdict_cause cause = EL_CAUSE_NONE;
    el_status st = EL_OK;
    char a[64], b[64];
    r->nonstat_t = NAN;
    if (g != NULL && g->level_kind == EL_REGIME_LEVEL_SHIFT) {
        r->nonstat = EL_NONSTAT_LEVEL_SHIFT;
        r->nonstat_t = g->level_step_t;
        r->nonstat_channel = g->level_channel;
        cause = EL_CAUSE_LEVEL_SHIFT;
        st = el_warnings_add(
            &r->warnings,
            "the level of %s steps by %.4g%s%s at about %s (z = %.2f; the step explains "
            "%.0f%% of its variance): the window holds two operating points",
            r->series.names[g->level_channel], g->level_change,
            r->series.units[g->level_channel][0] ? " " : "", r->series.units[g->level_channel],
            el_table_format_when(&r->table, g->level_step_t, a, sizeof a), g->level_move_z,
            100.0 * g->level_share);
    } else if (g != NULL && g->level_kind == EL_REGIME_LEVEL_TREND) {
        r->nonstat = EL_NONSTAT_LEVEL_TREND;
        r->nonstat_channel = g->level_channel;
        cause = EL_CAUSE_LEVEL_TREND;
        const el_series *s = &r->series;
        st = el_warnings_add(
            &r->warnings,
            "the level of %s trends by %.4g%s%s from %s to %s (z = %.2f; the line explains "
            "%.0f%% of its variance): the operating point moves through the window",
            s->names[g->level_channel], g->level_change,
            s->units[g->level_channel][0] ? " " : "", s->units[g->level_channel],
            el_table_format_when(&r->table, s->t0, a, sizeof a),
            el_table_format_when(&r->table, s->t0 + (double)(s->n_samples - 1) * s->dt, b,
                                 sizeof b),
            g->level_move_z, 100.0 * g->level_share);
    } else if (sc->drift) {
        r->nonstat = EL_NONSTAT_DRIFT;
        r->nonstat_t = sc->split_t;
        cause = EL_CAUSE_DRIFT;
        st = el_warnings_add(
            &r->warnings,
            "the dynamics drift inside the window: the least damped mode decays at %.4g "
            "1/s in the first half and %.4g 1/s in the second (z = %.2f), at %.4g and "
            "%.4g Hz (z = %.2f), split at %s; one linear model cannot describe both "
            "halves (split-half check, |z| >= %.3g)",
            sc->decay_rate[0], sc->decay_rate[1], sc->z_decay, sc->frequency_hz[0],
            sc->frequency_hz[1], sc->z_frequency,
            el_table_format_when(&r->table, sc->split_t, a, sizeof a), EL_ASSESS_SPLIT_Z);
    }
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    if (cause != EL_CAUSE_NONE && r->verdict.stability != EL_UNSTABLE)
        el_verdict_set_undecided(&r->verdict, cause);
    return EL_OK;
}

/* Why the bounds could not decide, once the validation is known: too few
 * cycles of the least damped mode in the window, or too little of the
 * data explained by the model (docs/method.md, "Verdict words"). */
static void refine_bounds_cause(el_assessment *r)
{
    if (r->verdict.cause != EL_CAUSE_BOUNDS || r->modes.n_modes == 0)
        return;
    const el_mode *m = &r->modes.modes[0];
    const el_series *s = &r->series;
    double span_s = (double)s->n_samples * s->dt;
    double cycles = m->pair && !m->at_nyquist ? m->frequency_hz * span_s : 0.0;
    if (r->validation != NULL && r->validation->explains_little)
        r->verdict.cause = EL_CAUSE_LOW_EXCITATION;
    else if (cycles < EL_ASSESS_FEW_CYCLES)
        r->verdict.cause = EL_CAUSE_FEW_CYCLES;
}

/* No verdict from nothing: when no channel's data differs from white
 * noise and the model explains next to nothing, the word and the type are
 * withheld whatever the fit says, "unstable" included: a class read from
 * noise is no answer either way (docs/method.md, "No verdict from
 * nothing"). */
static el_status withhold_no_dynamics(el_assessment *r, el_error *err)
{
    const el_dynamics_test *t = &r->dynamics;
    if (!el_dynamics_none(t, r->model.fit_r2))
        return EL_OK;
    el_verdict_withhold_type(&r->verdict);
    if (el_warnings_add(&r->warnings,
                        "no dynamics found: no channel's own past predicts it (Ljung-Box "
                        "over %zu lags on %zu channels, smallest p = %.3g on %s, family "
                        "level %.2g) and the model's one-step R2 is %.3f, so the data "
                        "cannot be told from white noise: no fixed point type or "
                        "stability is given",
                        t->lags, t->n_tested, t->p_min, r->series.names[t->channel],
                        EL_DYNAMICS_ALPHA, r->model.fit_r2) != EL_OK)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    return EL_OK;
}

/* A possible limit cycle: harmonics of one frequency with a steady
 * envelope (el_cycle). A warning only: the linear fit is still reported. */
static el_status check_cycle(el_assessment *r, el_error *err)
{
    el_status st = el_cycle_detect(&r->series, &r->peaks, &r->cycle, err);
    if (st != EL_OK || !r->cycle.flagged)
        return st;
    const el_cycle *c = &r->cycle;
    char orders[64];
    el_cycle_orders_text(c, orders, sizeof orders);
    if (el_warnings_add(&r->warnings,
                        "possible sustained nonlinear oscillation: a linear verdict does "
                        "not describe it (%s: spectral peaks at %s times %.4g Hz, and its "
                        "amplitude varies by only %.1f%% between %zu windows of %.3g "
                        "periods)",
                        r->series.names[c->channel], orders, c->fundamental_hz,
                        100.0 * c->envelope_cv, c->n_windows,
                        EL_CYCLE_WINDOW_PERIODS) != EL_OK)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    return EL_OK;
}

el_status el_assess_run(const el_assess_options *opt, el_assessment *r,
                        el_error *err)
{
    el_status st = el_assess_load(opt, r, err);
    /* The series holds what the analysis reads: the rows are not kept
     * through the fit (the reports use the table's description only). */
    if (st == EL_OK)
        el_table_release_rows(&r->table);
    if (st == EL_OK)
        st = el_assess_analyse(opt, r, err);
    return st;
}

/* ---- plan / execute -------------------------------------------------- */

el_status el_assess_plan_create(size_t n_samples, size_t n_channels, size_t n_inputs,
                                el_assess_plan **out, el_error *err)
{
    if (out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_assess_plan_create: no output");
    *out = calloc(1, sizeof **out);
    if (*out == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    (*out)->n_samples = n_samples;
    (*out)->n_channels = n_channels;
    (*out)->n_inputs = n_inputs;
    return EL_OK;
}

void el_assess_plan_destroy(el_assess_plan *ap)
{
    if (ap == NULL)
        return;
    for (size_t i = 0; i < ASSESS_FIT_PLANS; i++)
        el_fit_plan_destroy(ap->fits[i].plan);
    el_prep_band_plan_destroy(ap->band);
    el_warnings_free(&ap->band_warnings);
    el_regime_destroy(ap->regime);
    el_validation_destroy(ap->validation);
    free(ap->half_values);
    el_subspace_acf_free(&ap->acf);
    free(ap);
}

/* The band plan for this window: the one kept when the length, interval
 * and edges are the same (with the warnings its making gave, so every
 * window reports them alike), else a new one that replaces it. */
static el_status band_plan(el_assess_plan *ap, const el_series *s, double lo, double hi,
                           el_warnings *input_warnings, el_prep_band_plan **out,
                           el_error *err)
{
    if (ap->band != NULL && ap->band_samples == s->n_samples && ap->band_dt == s->dt &&
        ap->band_lo == lo && ap->band_hi == hi) {
        for (size_t i = 0; i < ap->band_warnings.count; i++)
            if (el_warnings_add(input_warnings, "%s", ap->band_warnings.items[i]) != EL_OK)
                return el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
        *out = ap->band;
        return EL_OK;
    }
    el_prep_band_plan_destroy(ap->band);
    ap->band = NULL;
    el_warnings_free(&ap->band_warnings);
    el_prep_band_plan *plan = NULL;
    el_status st = el_prep_band_plan_create(s->n_samples, s->dt, lo, hi, &plan,
                                            &ap->band_warnings, err);
    for (size_t i = 0; st == EL_OK && i < ap->band_warnings.count; i++)
        if (el_warnings_add(input_warnings, "%s", ap->band_warnings.items[i]) != EL_OK)
            st = el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    if (st != EL_OK) {
        el_prep_band_plan_destroy(plan);
        el_warnings_free(&ap->band_warnings);
        return st;
    }
    ap->band = plan;
    ap->band_samples = s->n_samples;
    ap->band_dt = s->dt;
    ap->band_lo = lo;
    ap->band_hi = hi;
    *out = plan;
    return EL_OK;
}

/* el_fit through a kept plan of the same sizes and options (made on first
 * use: the same results, warnings and errors as el_fit, and like el_fit
 * the model is freed on error). */
static el_status plan_fit_kept(el_assess_plan *ap, const el_series *s,
                               const el_fit_options *fit_in, el_model *model,
                               el_warnings *warnings, el_error *err);

static el_status plan_fit(el_assess_plan *ap, const el_series *s,
                          const el_fit_options *fit_in, el_model *model,
                          el_warnings *warnings, el_error *err)
{
    el_status st = plan_fit_kept(ap, s, fit_in, model, warnings, err);
    /* A subspace stage the preparation kept for the fit (el_subspace_keep)
     * is the fit's to take; whatever the fit left is dropped here. */
    el_subspace_drop_kept(fit_in->acf);
    return st;
}

/* plan_fit's work; a stage the preparation keeps may be left kept. */
static el_status plan_fit_kept(el_assess_plan *ap, const el_series *s,
                               const el_fit_options *fit_in, el_model *model,
                               el_warnings *warnings, el_error *err)
{
    /* An estimator may size its model from the data (hankel: the lags). */
    el_fit_options prepared = *fit_in;
    const el_fit_options *fit = &prepared;
    el_status pst = el_estimator_prepare(s, &prepared, err);
    if (pst != EL_OK)
        return pst;
    size_t nu = fit->inputs != NULL ? fit->inputs->n_channels : 0;
    fit_slot *slot = NULL, *oldest = &ap->fits[0];
    for (size_t i = 0; i < ASSESS_FIT_PLANS && slot == NULL; i++) {
        fit_slot *f = &ap->fits[i];
        if (f->plan != NULL && f->method == fit->method && f->lags == fit->lags &&
            f->depth == fit->depth && f->rank == fit->rank &&
            f->n_samples == s->n_samples && f->n_channels == s->n_channels &&
            f->n_inputs == nu)
            slot = f;
        else if (f->plan == NULL || (oldest->plan != NULL && f->used < oldest->used))
            oldest = f;
    }
    el_status st = EL_OK;
    if (slot == NULL) {
        el_fit_plan *plan = NULL;
        st = el_fit_plan_create(s->n_samples, s->n_channels, fit, &plan, err);
        if (st != EL_OK)
            return st;
        el_fit_plan_destroy(oldest->plan);
        slot = oldest;
        slot->plan = plan;
        slot->method = fit->method;
        slot->lags = fit->lags;
        slot->depth = fit->depth;
        slot->rank = fit->rank;
        slot->n_samples = s->n_samples;
        slot->n_channels = s->n_channels;
        slot->n_inputs = nu;
    }
    slot->used = ++ap->uses;
    st = el_fit_plan_execute_inputs(slot->plan, s, fit->inputs, model, warnings, err);
    if (st != EL_OK)
        el_model_free(model);
    if (ap->one_shot) {
        el_fit_plan_destroy(slot->plan);
        slot->plan = NULL;
    }
    return st;
}

el_status el_assess_analyse(const el_assess_options *opt, el_assessment *r,
                            el_error *err)
{
    el_assess_plan *ap = NULL;
    el_status st = el_assess_plan_create(r->series.n_samples, r->series.n_channels,
                                         r->has_inputs ? r->inputs.n_channels : 0, &ap,
                                         err);
    if (st == EL_OK) {
        ap->one_shot = 1;
        st = el_assess_execute(ap, opt, r, err);
    }
    /* The result keeps what the plan lent it. */
    if (ap != NULL && r->parts_borrowed) {
        if (r->regime == ap->regime)
            ap->regime = NULL;
        if (r->validation == ap->validation)
            ap->validation = NULL;
        r->parts_borrowed = 0;
    }
    el_assess_plan_destroy(ap);
    return st;
}

/* --method auto takes the subspace estimator only when the window holds
 * at least this many windows of the block Hankel per row of it: on fewer
 * the sample cross-products are too noisy for a steady order and the
 * block bootstrap has too few blocks (measured: 100-s two-sensor windows
 * of a drifting oscillator, 9 windows per row, gave one window in eight a
 * spurious growing mode with bounds [-0.42, 3.2] 1/s; tests/test_track.c),
 * where iv's local lagged statistics stay steady. A rule of thumb of
 * ours, set from that case and the 6-sensor example (151 per row). */
#define EL_ASSESS_SUBSPACE_WINDOWS_PER_ROW 20

/* --method auto on a multi-sensor log without measured inputs: the
 * block-Hankel subspace estimator leads (docs/accuracy.md, family M: every
 * mode within 5 % / 0.05 in far more logs than iv at the default lags,
 * because its horizon covers the slow modes' time scale); the regime's
 * cross-check stays. One channel, measured inputs or a growing envelope
 * (EL_ASSESS_HANKEL_GROWTH_FACTOR, el_assess.h says why) keep iv. */
static void choose_subspace(el_assess_plan *ap, el_assessment *r, el_fit_options *fit)
{
    if (r->has_inputs || r->series.n_channels < 2 || fit->lags > 0)
        return;
    size_t grow_channel = 0;
    double grow_factor = NAN, grow_p = NAN;
    if (el_regime_envelope_grows(r->regime, EL_ASSESS_HANKEL_GROWTH_FACTOR,
                                 EL_ASSESS_HANKEL_GROWTH_P, &grow_channel, &grow_factor,
                                 &grow_p)) {
        snprintf(r->method_reason, sizeof r->method_reason,
                 "the amplitude of %.40s grows %.3g-fold over the window (one-sided p "
                 "%.2g): instrumental variables, cross-checked by %s; not hankel, whose "
                 "block bootstrap takes every window as alike",
                 r->series.names != NULL && r->series.names[grow_channel] != NULL
                     ? r->series.names[grow_channel] : "a channel",
                 grow_factor, grow_p, el_method_name(r->cross_method));
        return;
    }
    /* The autocorrelation every automatic horizon of this window reads
     * (here, then the hankel or iv preparation): computed once. */
    el_error local;
    el_error_clear(&local);
    if (!(fit->horizon_time > 0.0) &&
        el_subspace_acf_compute(&r->series, EL_SUBSPACE_MAX_ROWS, &ap->acf, &local) == EL_OK)
        fit->acf = &ap->acf;
    /* Enough windows per row of the block Hankel at the automatic horizon
     * (EL_ASSESS_SUBSPACE_WINDOWS_PER_ROW); a short window keeps iv. */
    el_subspace_options so;
    el_subspace_defaults(&so);
    so.horizon_time = fit->horizon_time;
    so.acf = fit->acf;
    el_subspace_horizon hz;
    if (el_subspace_choose_horizon(&r->series, &so, &hz, &local) != EL_OK)
        return;
    size_t rows = hz.rows * r->series.n_channels;
    size_t windows = r->series.n_samples + 1 - 2 * hz.rows;
    if (windows < EL_ASSESS_SUBSPACE_WINDOWS_PER_ROW * rows)
        return;
    fit->method = EL_METHOD_HANKEL;
    snprintf(r->method_reason, sizeof r->method_reason,
             "%zu sensors, no measured input: block-Hankel subspace identification "
             "(horizon and order from the data), cross-checked by %s",
             r->series.n_channels, el_method_name(r->cross_method));
}

/* Moves err's message into why (cut to fit) and clears err: a fallback
 * names what the refused estimator said, then goes on as if it had not. */
static void take_message(el_error *err, char *why, size_t size)
{
    if (err == NULL)
        return;
    snprintf(why, size, "%.150s", err->message);
    el_error_clear(err);
}

/* The subspace stage found nothing it could tell from noise, or its model
 * does not fit the lagged state: iv as before, with a note. Other errors
 * (memory, internal) stand. */
static el_status subspace_fallback(el_assess_plan *ap, el_fit_options *fit,
                                   el_assessment *r, el_status st, el_error *err)
{
    if (st != EL_ERR_NUMERIC && st != EL_ERR_DATA && st != EL_ERR_USAGE)
        return st;
    char why[160] = "";
    take_message(err, why, sizeof why);
    fit->method = EL_METHOD_IV;
    fit->lags = 0;
    st = el_warnings_add(&r->warnings,
                         "the subspace estimator gave no model (%s): instrumental "
                         "variables instead", why);
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory for a warning");
    return plan_fit(ap, &r->series, fit, &r->model, &r->warnings, err);
}

/* A log whose data cannot be told from white noise: the instrument and
 * subspace estimators (and fb on some logs) refuse to fit, since nothing
 * predicts the state, which left no report at all. Least squares, which
 * fits any data, stands in so the report can say that there is nothing to
 * judge (withhold_no_dynamics then withholds the word and the type), for
 * --method auto and for an explicitly chosen method alike (no verdict from
 * nothing, for every method). The stand-in is labelled: a warning, the
 * estimator line of the reports and model.method_choice.stand_in in JSON.
 * For an explicit method the stand-in must end in the withheld verdict:
 * when least squares explains the data after all (measured inputs that
 * drive a white output), the chosen method's own error stands, since a
 * verdict from an estimator the user did not ask for would be no answer
 * to the question asked. Other errors, and data with dynamics, keep the
 * estimator's error. */
static el_status white_fallback(el_assess_plan *ap, el_fit_options *fit,
                                el_assessment *r, el_status st, el_error *err)
{
    if ((st != EL_ERR_NUMERIC && st != EL_ERR_DATA) || !r->dynamics.tested ||
        !r->dynamics.white || fit->method == EL_METHOD_LS)
        return st;
    el_error refused_err;
    if (err != NULL)
        refused_err = *err;
    char why[160] = "";
    take_message(err, why, sizeof why);
    el_method refused_m = fit->method;
    const char *refused = el_method_name(refused_m);
    el_fit_options ls = *fit;
    ls.method = EL_METHOD_LS;
    ls.rank = EL_RANK_AUTO;
    el_status fs = plan_fit(ap, &r->series, &ls, &r->model, &r->warnings, err);
    if (fs == EL_OK && !r->method_was_auto && !el_dynamics_none(&r->dynamics, r->model.fit_r2)) {
        el_model_free(&r->model);
        fs = EL_ERR_NUMERIC;
    }
    if (fs != EL_OK && !r->method_was_auto) {
        if (err != NULL)
            *err = refused_err;     /* the chosen method's error, as before */
        return st;
    }
    if (fs != EL_OK)
        return fs;
    *fit = ls;
    r->method_stood_in = 1;
    r->method_refused = refused_m;
    snprintf(r->method_refusal, sizeof r->method_refusal, "%s", why);
    if (r->method_was_auto)
        fs = el_warnings_add(&r->warnings,
                             "%s gave no model (%s); the data shows no dynamics, so least "
                             "squares is fitted only to report that",
                             refused, why);
    else
        fs = el_warnings_add(&r->warnings,
                             "--method %s could not fit a model: the data shows no dynamics "
                             "to fit (%s); least squares is fitted in its place only to "
                             "report that, and its modes describe noise, not the system",
                             refused, why);
    if (fs != EL_OK)
        return el_error_set(err, fs, "out of memory for a warning");
    if (r->method_was_auto)
        snprintf(r->method_reason, sizeof r->method_reason,
                 "the data shows no dynamics, and %s gave no model: least squares fits any "
                 "data, so it reports that", refused);
    else
        snprintf(r->method_reason, sizeof r->method_reason,
                 "in place of %s (--method %s), which could not fit a model: the data shows "
                 "no dynamics to fit; least squares fits any data, so it reports that",
                 refused, refused);
    return EL_OK;
}

el_status el_assess_execute(el_assess_plan *ap, const el_assess_options *opt,
                            el_assessment *r, el_error *err)
{
    if (ap == NULL || opt == NULL || r == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_assess_execute: NULL argument");
    stage(opt, "fitting the model", 0);
    el_status st = prepare(ap, opt, r, err);
    if (st == EL_OK)
        st = detect_regime(ap, opt, r, err);
    el_fit_options fit = opt->fit;
    fit.inputs = r->has_inputs ? &r->inputs : NULL;
    fit.acf = NULL;   /* set for this window's series by choose_subspace */
    r->cross_p_stable = NAN;
    if (st == EL_OK && opt->method_auto) {
        r->method_was_auto = 1;
        el_assess_choose_method(r->regime->regime, r->has_inputs, &fit.method,
                                &r->cross_method, r->method_reason,
                                sizeof r->method_reason);
    }
    /* One channel and no lags asked for: a state of one sample can hold
     * only one real mode, so an oscillation (a ringing shaft seen by one
     * accelerometer) would be reported as a decay with full support. The
     * delay depth is then chosen as --lags auto chooses it (docs/method.md,
     * "Delay depth"), for every method; --lags 0 keeps one sample. */
    int one_channel = !opt->lags_auto && !opt->lags_fixed && opt->fit.lags == 0 &&
                      r->series.n_channels == 1;
    if (st == EL_OK && (opt->lags_auto || one_channel)) {
        st = el_lags_auto(&r->series, fit.inputs, 0, &r->lags_choice, err);
        if (st == EL_OK) {
            r->lags_were_auto = 1;
            r->lags_for_one_channel = one_channel;
            fit.lags = r->lags_choice.lags;
        }
    }
    char regime_reason[sizeof r->method_reason];
    snprintf(regime_reason, sizeof regime_reason, "%s", r->method_reason);
    if (st == EL_OK && r->method_was_auto)
        choose_subspace(ap, r, &fit);
    /* The block-Hankel estimator assumes one stationary operating point.
     * When it cannot fit a half of the window and the halves, fitted by iv
     * instead, disagree, auto keeps iv, which does not assume it; the drift
     * is then the verdict's cause either way. */
    int split_done = 0;
    if (st == EL_OK && r->method_was_auto && fit.method == EL_METHOD_HANKEL &&
        opt->boot.replicates >= EL_BOOT_MIN_REPLICATES) {
        ap->split_stage = "fitting the model";
        st = split_check(ap, opt, &fit, r, err);
        split_done = 1;
        if (st == EL_OK && r->split.drift && r->split.halves_by_iv) {
            fit.method = EL_METHOD_IV;
            snprintf(r->method_reason, sizeof r->method_reason,
                     "%.200s; not hankel: the dynamics drift between the halves",
                     regime_reason);
        }
    }
    if (st == EL_OK)
        st = plan_fit(ap, &r->series, &fit, &r->model, &r->warnings, err);
    if (st != EL_OK && r->method_was_auto && fit.method == EL_METHOD_HANKEL)
        st = subspace_fallback(ap, &fit, r, st, err);
    if (st != EL_OK)
        st = white_fallback(ap, &fit, r, st, err);
    if (st == EL_OK)
        operating_point(r);
    if (st == EL_OK)
        st = el_modes_compute(&r->model, &r->modes, &r->warnings, err);
    if (st == EL_OK && r->has_band)
        st = el_prep_band_check_modes(&r->band, &r->modes, &r->warnings, NULL, err);
    if (st == EL_OK)
        st = crosscheck_spectra(r, err);
    if (st == EL_OK && r->has_spectra)
        st = check_cycle(r, err);
    stage(opt, "fitting the model", 1);
    /* Below the minimum count no bootstrap runs: its bounds and P(stable)
     * would claim a precision a handful of replicates does not have. */
    int boot_run = opt->boot.replicates >= EL_BOOT_MIN_REPLICATES;
    /* The bootstrap's stage begins before its bias round, which reports
     * no counts; boot.progress continues it under the same label. */
    if (st == EL_OK && boot_run)
        stage(opt, "bootstrap replicates", 0);
    if (st == EL_OK && boot_run)
        st = el_boot_run(&r->series, &fit, &r->model, &r->modes, &opt->boot,
                         &r->boot, &r->warnings, err);
    if (st == EL_OK && boot_run)
        st = el_boot_warn_repeated(&r->boot, &r->warnings, err);
    if (st == EL_OK)
        st = verdict(opt, boot_run, r, err);
    if (st == EL_OK && opt->boot.replicates > 0 && !boot_run)
        st = withhold_too_few(opt, r, err);
    else if (st == EL_OK && boot_run && r->boot.replicates == 0)
        st = withhold_unbounded(r, err);
    if (st == EL_OK && r->method_was_auto) {
        stage(opt, "cross-check fit", 0);
        st = cross_check(ap, opt, &fit, r, err);
        stage(opt, "cross-check fit", 1);
    }
    if (st == EL_OK && boot_run)
        st = plain_state_check(opt, &fit, r, err);
    if (st == EL_OK && boot_run)
        st = el_envelope_check_verdict(r->regime, &r->series, &r->modes, &r->boot,
                                       r->model.method, opt->boot.level, &r->verdict,
                                       &r->envelope_check, &r->warnings, err);
    stage(opt, "checking the model", 0);
    if (st == EL_OK)
        st = veto_growth(r, err);
    ap->split_stage = "checking the model";
    if (st == EL_OK && !split_done)
        st = split_check(ap, opt, &fit, r, err);
    /* The validation's free run comes first: the level check weighs it
     * against the step or line it found (level_by_free_run). */
    if (st == EL_OK)
        st = validate(ap, r, err);
    if (st == EL_OK)
        level_by_free_run(r);
    if (st == EL_OK)
        st = judge_one_point(r, err);
    if (st == EL_OK)
        refine_bounds_cause(r);
    if (st == EL_OK)
        st = withhold_no_dynamics(r, err);
    /* An estimator known to miss the truth on what this log shows (fb/tls
     * on a stationary log, ls under sensor noise): no class from its bounds
     * (el_verdict_method_fault, docs/uncertainty.md "Per method"). */
    if (st == EL_OK && r->verdict.cause != EL_CAUSE_NO_DYNAMICS)
        st = el_verdict_withhold_method(
            &r->verdict,
            el_verdict_method_fault(r->model.method,
                                    r->regime != NULL &&
                                        r->regime->regime == EL_REGIME_STATIONARY,
                                    boot_run && r->boot.bias_refused
                                        ? r->boot.bias_refused_spreads : 0.0),
            r->model.method, opt->boot.level, &r->warnings, err);
    stage(opt, "checking the model", 1);
    /* Problems found after ingest (constant channel, too short a window)
     * are still about this file: name it when the stage could not. */
    if (st != EL_OK && err != NULL && err->file[0] == '\0' && err->option[0] == '\0')
        el_error_at(err, r->table.source[0] ? r->table.source : opt->path, 0, 0);
    return st;
}

void el_assessment_free(el_assessment *r)
{
    if (r == NULL)
        return;
    el_table_free(&r->table);
    el_series_free(&r->series);
    el_series_free(&r->inputs);
    el_model_free(&r->model);
    el_model_free(&r->cross_model);
    el_modes_free(&r->cross_modes);
    el_boot_free(&r->cross_boot);
    el_modes_free(&r->modes);
    el_boot_free(&r->boot);
    el_spectra_free(&r->spectra);
    el_peaks_free(&r->peaks);
    free(r->mode_checks);
    free(r->peak_checks);
    free(r->detrend_level);
    free(r->detrend_slope);
    free(r->operating_point);
    free(r->dynamics_q);
    free(r->dynamics_p);
    if (!r->parts_borrowed) {
        el_regime_destroy(r->regime);
        el_validation_destroy(r->validation);
    }
    el_warnings_free(&r->input_warnings);
    el_warnings_free(&r->warnings);
    memset(r, 0, sizeof *r);
}
