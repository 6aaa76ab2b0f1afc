/* el_track: windows of a long log assessed one by one, and the trend of
 * the margin over them with bounds from the windows' bootstrap. */
#include "el_track.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_channels.h"
#include "el_json.h"
#include "el_report.h"
#include "el_warnlines.h"

/* A window shorter than this cannot carry a fit, a bootstrap and a
 * spectrum; refuse it before any work. */
#define TRACK_MIN_WINDOW_SAMPLES 20
#define TRACK_MIN_WINDOWS 3
#define TRACK_DEFAULT_WINDOWS 8
/* Window i's bootstrap seed is the run's seed plus i times this odd
 * constant (2^64 / golden ratio): windows draw unrelated streams. */
#define TRACK_SEED_STEP UINT64_C(0x9E3779B97F4A7C15)

void el_track_defaults(el_track_options *opt)
{
    memset(opt, 0, sizeof *opt);
    el_assess_defaults(&opt->assess);
}

const char *el_trend_name(el_trend_class trend)
{
    switch (trend) {
    case EL_TREND_SHRINKING:
        return "shrinking";
    case EL_TREND_GROWING:
        return "growing";
    default:
        return "undecided";
    }
}

static const char *stability_name(el_stability s)
{
    return el_stability_name(s);
}

int el_track_window_in_trend(const el_track_window *w, int bounds_off)
{
    return w->ok && !w->no_dynamics && (w->n_replicates > 0 || bounds_off) &&
           isfinite(w->margin);
}

size_t el_track_cautions(const el_track_result *r, char out[][EL_ADVICE_TEXT_MAX])
{
    double mid = NAN;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (el_track_window_in_trend(w, 0))
            mid = 0.5 * (w->t_from + w->t_to);
    }
    double zero = r->time_is_iso ? r->time_origin_s + mid + r->time_to_zero : NAN;
    return el_advice_track_cautions(r->trend == EL_TREND_SHRINKING, r->time_is_iso, zero,
                                    out);
}

void el_track_window_free(el_track_window *w)
{
    if (w == NULL)
        return;
    free(w->margin_samples);
    memset(w, 0, sizeof *w);
}

void el_track_free(el_track_result *result)
{
    if (result == NULL)
        return;
    for (size_t i = 0; i < result->n_windows; i++)
        free(result->windows[i].margin_samples);
    free(result->windows);
    el_warnings_free(&result->warnings);
    el_warnings_free(&result->channel_names);
    memset(result, 0, sizeof *result);
}

/* ------------------------------------------------------------------ */
/* Windows. */

/* dst = samples k0 .. k0 + n - 1 of src, as a series of its own. */
static el_status slice_series(const el_series *src, size_t k0, size_t n, el_series *dst,
                              el_error *err)
{
    size_t nc = src->n_channels;
    memset(dst, 0, sizeof *dst);
    dst->n_samples = n;
    dst->n_channels = nc;
    dst->dt = src->dt;
    dst->t0 = src->t0 + (double)k0 * src->dt;
    dst->rows_used = n;
    dst->resampled = src->resampled;
    dst->jitter = src->jitter;
    dst->values = malloc(n * nc * sizeof(double));
    dst->names = calloc(nc, sizeof(char *));
    dst->units = calloc(nc, sizeof(char *));
    dst->source_column = malloc(nc * sizeof(size_t));
    int ok = dst->values && dst->names && dst->units && dst->source_column;
    for (size_t c = 0; ok && c < nc; c++) {
        memcpy(dst->values + c * n, src->values + c * src->n_samples + k0,
               n * sizeof(double));
        dst->names[c] = strdup(src->names[c] ? src->names[c] : "");
        dst->units[c] = strdup(src->units[c] ? src->units[c] : "");
        dst->source_column[c] = src->source_column ? src->source_column[c] : c;
        ok = dst->names[c] != NULL && dst->units[c] != NULL;
    }
    if (!ok) {
        el_series_free(dst);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (tracking window)");
    }
    return EL_OK;
}

/* Window length and step in samples, and the count. */
static el_status plan_windows(const el_track_options *opt, const el_series *s,
                              size_t *len, size_t *step, size_t *count, el_error *err)
{
    double span = (double)s->n_samples * s->dt;
    double window = opt->window > 0.0 ? opt->window : span / TRACK_DEFAULT_WINDOWS;
    if (!(opt->step >= 0.0) || !(opt->window >= 0.0)) {
        el_error_set(err, EL_ERR_USAGE, "the window and the step must be positive");
        el_error_option(err, opt->step < 0.0 ? "--step" : "--window");
        el_error_hint(err, "give lengths in the time column's units, e.g. --window 60");
        return EL_ERR_USAGE;
    }
    *len = (size_t)llround(window / s->dt);
    double step_t = opt->step > 0.0 ? opt->step : (double)*len * s->dt;
    *step = (size_t)llround(step_t / s->dt);
    if (*step < 1)
        *step = 1;
    if (*len > s->n_samples) {
        el_error_set(err, EL_ERR_USAGE, "a window of %g is longer than the log (%g)", window,
                     span);
        el_error_option(err, "--window");
        el_error_hint(err, "give --window at most %g, or track a longer log", span / 3.0);
        return EL_ERR_USAGE;
    }
    if (*len < TRACK_MIN_WINDOW_SAMPLES) {
        el_error_set(err, EL_ERR_USAGE, "a window of %g holds only %zu samples", window, *len);
        el_error_option(err, "--window");
        el_error_hint(err, "give a window of at least %d samples (%g)",
                      TRACK_MIN_WINDOW_SAMPLES, TRACK_MIN_WINDOW_SAMPLES * s->dt);
        return EL_ERR_USAGE;
    }
    *count = (s->n_samples - *len) / *step + 1;
    if (*count < TRACK_MIN_WINDOWS) {
        el_error_set(err, EL_ERR_USAGE,
                     "%zu window%s of %g every %g fit in the log (%g): a trend needs %d",
                     *count, *count == 1 ? "" : "s", (double)*len * s->dt,
                     (double)*step * s->dt, span, TRACK_MIN_WINDOWS);
        el_error_option(err, "--window");
        el_error_hint(err, "give a shorter --window (or --step), e.g. --window %g",
                      span / TRACK_DEFAULT_WINDOWS);
        return EL_ERR_USAGE;
    }
    return EL_OK;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* The window's summary from its assessment: the least-damped mode, the
 * verdict, and every replicate's margin (-max Re lambda over its modes). */
static el_status summarise(const el_assessment *a, double level, el_track_window *w,
                           el_error *err)
{
    w->ok = 1;
    w->method = a->model.method;
    w->stability = a->verdict.stability;
    w->ambiguous = a->verdict.ambiguous;
    w->p_stable = a->verdict.p_stable;
    w->margin = a->verdict.margin_decay_rate;
    w->frequency_hz = a->modes.n_modes > 0 ? a->modes.modes[0].frequency_hz : NAN;
    w->damping_ratio = a->verdict.margin_damping_ratio;
    w->n_warnings = a->warnings.count;
    w->no_dynamics = a->verdict.cause == EL_CAUSE_NO_DYNAMICS;
    w->margin_lo = w->margin_hi = w->margin_sd = NAN;
    size_t n = a->boot.replicates, nm = a->boot.n_modes;
    if (n == 0 || nm == 0 || a->boot.lambda_re == NULL)
        return EL_OK;
    w->margin_samples = malloc(2 * n * sizeof(double));
    if (w->margin_samples == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (tracking window)");
    double *sorted = w->margin_samples + n;
    for (size_t r = 0; r < n; r++) {
        double top = -INFINITY;
        for (size_t q = 0; q < nm; q++)
            top = fmax(top, a->boot.lambda_re[r * nm + q]);
        w->margin_samples[r] = -top;
        sorted[r] = -top;
    }
    qsort(sorted, n, sizeof(double), cmp_double);
    w->margin_lo = el_boot_quantile(sorted, n, 0.5 * (1.0 - level));
    w->margin_hi = el_boot_quantile(sorted, n, 0.5 * (1.0 + level));
    w->margin_sd = (el_boot_quantile(sorted, n, 0.75) - el_boot_quantile(sorted, n, 0.25))
                   / 1.349;
    w->n_replicates = n;
    if (!isfinite(w->margin_lo) || !isfinite(w->margin_hi) || !(w->margin_sd > 0.0)
        || !isfinite(w->margin_sd))
        w->n_replicates = 0; /* no usable spread: left out of the trend */
    return EL_OK;
}

/* Channel c of series moved down to position k (k < c): values, name,
 * unit and source column; the slots it leaves are reused or freed by the
 * caller. */
static void move_channel(el_series *s, size_t c, size_t k)
{
    size_t n = s->n_samples;
    memmove(s->values + k * n, s->values + c * n, n * sizeof(double));
    free(s->names[k]);
    free(s->units[k]);
    s->names[k] = s->names[c];
    s->units[k] = s->units[c];
    s->names[c] = s->units[c] = NULL;
    if (s->source_column != NULL)
        s->source_column[k] = s->source_column[c];
}

/* The window's default channels that are constant over it while another
 * moves (el_channels_drop_constant, the rule assess applies to a log) are
 * taken out of the series, and their names written to w. A sensor that
 * sticks part-way through a long log would otherwise fail every window
 * after it, though assess on any of those windows fits the rest. */
static el_status leave_out_stuck(const el_track_options *opt, el_series *s,
                                 el_track_window *w, el_error *err)
{
    size_t nc = s->n_channels, kept = nc;
    if ((opt->assess.channels != NULL && opt->assess.channels[0] != '\0') || nc < 2)
        return EL_OK;
    size_t *keep = malloc(nc * sizeof *keep);
    if (keep == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (tracking window)");
    for (size_t c = 0; c < nc; c++)
        keep[c] = c;
    el_warnings said = {0};
    el_status st = el_channels_drop_constant(s, keep, &kept, &said, err);
    el_warnings_free(&said);
    if (st != EL_OK || kept == nc) {
        free(keep);
        return st;
    }
    size_t k = 0, used = 0;
    for (size_t c = 0; c < nc; c++) {
        if (k < kept && keep[k] == c) {
            if (k != c)
                move_channel(s, c, k);
            k++;
            continue;
        }
        int wrote = snprintf(w->left_out + used, sizeof w->left_out - used, "%s%s",
                             used > 0 ? ", " : "", s->names[c]);
        if (wrote > 0 && (size_t)wrote < sizeof w->left_out - used)
            used += (size_t)wrote;
        else
            w->left_out[used] = '\0'; /* cut at the name that does not fit */
        w->n_left_out++;
    }
    for (size_t c = kept; c < nc; c++) {
        free(s->names[c]);
        free(s->units[c]);
        s->names[c] = s->units[c] = NULL;
    }
    s->n_channels = kept;
    free(keep);
    return EL_OK;
}

el_status el_track_assess_window(const el_track_options *opt, el_assess_plan *plan,
                                 const el_table *times, size_t index, el_series *series,
                                 el_series *inputs, el_track_window *w, el_error *err)
{
    el_assessment a;
    memset(&a, 0, sizeof a);
    el_assess_plan *own_plan = NULL;
    el_status st = leave_out_stuck(opt, series, w, err);
    if (st == EL_OK && w->n_left_out > 0)
        st = el_assess_plan_create(series->n_samples, series->n_channels,
                                   inputs != NULL ? inputs->n_channels : 0, &own_plan, err);
    if (st != EL_OK) {
        el_series_free(series);
        if (inputs != NULL)
            el_series_free(inputs);
        return st;
    }
    if (own_plan != NULL)
        plan = own_plan;
    /* The assessment owns the series from here on (freed with it). */
    a.series = *series;
    memset(series, 0, sizeof *series);
    if (inputs != NULL) {
        a.inputs = *inputs;
        memset(inputs, 0, sizeof *inputs);
        a.has_inputs = 1;
    }
    w->t_from = a.series.t0;
    w->t_to = w->t_from + (double)a.series.n_samples * a.series.dt;
    el_table_format_time(times, w->t_from, w->from_text, sizeof w->from_text);
    el_table_format_time(times, w->t_to, w->to_text, sizeof w->to_text);
    el_assess_options o = opt->assess;
    o.boot.seed = opt->assess.boot.seed + (uint64_t)index * TRACK_SEED_STEP;
    o.boot.progress = NULL;
    o.stage_progress = NULL;      /* the run reports windows, not their stages */
    el_error werr;
    el_error_clear(&werr);
    st = el_assess_execute(plan, &o, &a, &werr);
    if (st == EL_OK) {
        st = summarise(&a, opt->assess.boot.level, w, err);
    } else if (st != EL_ERR_NOMEM && st != EL_ERR_INTERNAL && st != EL_ERR_USAGE) {
        /* The window's own trouble (too flat, singular): noted, not fatal.
         * A usage error (an option that cannot apply) would fail every
         * window alike: it stops the run and is reported as it is. */
        w->ok = 0;
        snprintf(w->error, sizeof w->error, "%s", werr.message);
        st = EL_OK;
    } else {
        *err = werr;
    }
    el_assessment_free(&a);
    el_assess_plan_destroy(own_plan); /* after the result that borrowed from it */
    return st;
}

/* Assesses window i (samples k0 .. k0 + len - 1 of the loaded series)
 * through the run's assessment plan. */
static el_status assess_window(const el_track_options *opt, const el_assessment *all,
                               el_assess_plan *plan, size_t i, size_t k0, size_t len,
                               el_track_window *w, el_error *err)
{
    el_series s, in;
    memset(&in, 0, sizeof in);
    el_status st = slice_series(&all->series, k0, len, &s, err);
    if (st == EL_OK && all->has_inputs && (st = slice_series(&all->inputs, k0, len, &in, err)))
        el_series_free(&s);
    if (st != EL_OK)
        return st;
    return el_track_assess_window(opt, plan, &all->table, i, &s,
                                  all->has_inputs ? &in : NULL, w, err);
}

el_status el_track_check_options(const el_track_options *opt, el_error *err)
{
    if (opt->assess.boot.replicates > 0 &&
        opt->assess.boot.replicates < EL_BOOT_MIN_REPLICATES) {
        el_error_set(err, EL_ERR_USAGE,
                     "tracking needs bounds in every window, but %zu bootstrap "
                     "replicates are too few for them (at least %d)",
                     opt->assess.boot.replicates, EL_BOOT_MIN_REPLICATES);
        el_error_option(err, "--boot");
        el_error_hint(err, "use --boot %d or more (a few hundred per window are enough, "
                           "e.g. --boot 300)", EL_BOOT_MIN_REPLICATES);
        return EL_ERR_USAGE;
    }
    return EL_OK;
}

el_status el_track_describe(el_track_result *result, const el_table *t,
                            const char *const *names, size_t n_channels, double level,
                            int bounds_off, el_error *err)
{
    result->n_channels = n_channels;
    result->time_is_iso = t->time_is_iso;
    const char *unit = t->time_is_iso ? "s"
                       : t->units != NULL && t->time_column < t->n_columns
                               && t->units[t->time_column] != NULL
                           ? t->units[t->time_column]
                           : "";
    snprintf(result->time_unit, sizeof result->time_unit, "%s", unit);
    result->time_origin_s = t->time_is_iso ? (double)t->time_origin_unix_s : 0.0;
    result->level = level;
    result->bounds_off = bounds_off;
    /* Called again after every window in follow mode: refill, not append. */
    el_warnings_free(&result->channel_names);
    for (size_t c = 0; c < n_channels; c++)
        if (el_warnings_add(&result->channel_names, "%s", names[c]) != EL_OK)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (tracking)");
    /* What ingest decided (text columns skipped, seconds assumed). */
    for (size_t i = 0; i < t->notes.count; i++)
        if (el_warnings_add(&result->warnings, "%s", t->notes.items[i]) != EL_OK)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (tracking)");
    return EL_OK;
}

el_status el_track_run(const el_track_options *opt, el_track_result *result,
                       el_error *err)
{
    memset(result, 0, sizeof *result);
    el_status st = el_track_check_options(opt, err);
    if (st != EL_OK)
        return st;
    el_assessment all;
    memset(&all, 0, sizeof all);
    st = el_assess_load(&opt->assess, &all, err);
    size_t len = 0, step = 0, count = 0;
    el_track_options in_s = *opt; /* --window/--step come in the log's own time unit */
    in_s.window *= el_table_time_unit_s(&all.table);
    in_s.step *= el_table_time_unit_s(&all.table);
    if (st == EL_OK)
        st = plan_windows(&in_s, &all.series, &len, &step, &count, err);
    if (st == EL_OK) {
        result->windows = calloc(count, sizeof(el_track_window));
        if (result->windows == NULL)
            st = el_error_set(err, EL_ERR_NOMEM, "out of memory (tracking)");
    }
    if (st == EL_OK) {
        result->window = (double)len * all.series.dt;
        result->step = (double)step * all.series.dt;
        result->span_from = all.series.t0;
        result->span_to = all.series.t0 + (double)all.series.n_samples * all.series.dt;
        st = el_track_describe(result, &all.table, (const char *const *)all.series.names,
                               all.series.n_channels, opt->assess.boot.level,
                               opt->assess.boot.replicates == 0, err);
    }
    /* One plan for every window: they all have len samples of the same
     * channels, so the fit and band workspaces are made once. */
    el_assess_plan *plan = NULL;
    if (st == EL_OK)
        st = el_assess_plan_create(len, all.series.n_channels,
                                   all.has_inputs ? all.inputs.n_channels : 0, &plan, err);
    for (size_t i = 0; st == EL_OK && i < count; i++) {
        st = assess_window(opt, &all, plan, i, i * step, len, &result->windows[i], err);
        result->n_windows = i + 1;
        if (st == EL_OK && result->windows[i].ok)
            result->n_ok++;
        if (opt->progress != NULL)
            opt->progress(opt->progress_ctx, i + 1, count);
    }
    el_assess_plan_destroy(plan);
    if (st == EL_OK)
        st = el_track_fit_trend(result, err);
    size_t n_none = 0;
    for (size_t i = 0; i < result->n_windows; i++)
        n_none += result->windows[i].ok && result->windows[i].no_dynamics;
    if (st == EL_OK && !result->has_trend && n_none > 0) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "%zu of %zu windows show no dynamics (their data cannot be told from "
                     "white noise) and %zu gave a margin with bounds: no trend",
                     n_none, result->n_windows, result->n_ok - n_none);
        el_error_hint(err, "run eigenlog assess on the log: its whiteness test names the "
                           "channels without dynamics; check them and the sampling rate");
        st = EL_ERR_NUMERIC;
    } else if (st == EL_OK && !result->has_trend) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "only %zu of %zu windows gave a margin with bounds: no trend",
                     result->n_ok, result->n_windows);
        el_error_hint(err, "use longer windows (--window), or check the channels with "
                           "eigenlog assess on part of the log");
        st = EL_ERR_NUMERIC;
    }
    if (st != EL_OK && err->file[0] == '\0' && err->option[0] == '\0')
        el_error_at(err, all.table.source[0] ? all.table.source : opt->assess.path, 0, 0);
    el_assessment_free(&all);
    return st;
}

/* ------------------------------------------------------------------ */
/* Trend. */

/* Weighted least-squares slope coefficients: slope = sum c[i] y[i] for
 * any y, c[i] = w[i] (t[i] - tw) / sum w (t - tw)^2, tw the weighted mean
 * time. Returns 0 when the times do not spread. */
static int slope_coefficients(size_t n, const double *t, const double *w, double *c,
                              double *tw_out)
{
    double sw = 0.0, tw = 0.0;
    for (size_t i = 0; i < n; i++) {
        sw += w[i];
        tw += w[i] * t[i];
    }
    tw /= sw;
    double stt = 0.0;
    for (size_t i = 0; i < n; i++)
        stt += w[i] * (t[i] - tw) * (t[i] - tw);
    if (!(stt > 0.0))
        return 0;
    for (size_t i = 0; i < n; i++)
        c[i] = w[i] * (t[i] - tw) / stt;
    *tw_out = tw;
    return 1;
}

typedef struct {
    size_t n;
    double *t, *w, *c, *y;        /* n each */
    const el_track_window **win;  /* n usable windows */
} trend_data;

static void trend_data_free(trend_data *d)
{
    free(d->t);
    free(d->win);
    memset(d, 0, sizeof *d);
}

static el_status trend_data_make(const el_track_result *r, trend_data *d, el_error *err)
{
    memset(d, 0, sizeof *d);
    d->t = malloc(4 * (r->n_windows + 1) * sizeof(double));
    d->win = malloc((r->n_windows + 1) * sizeof *d->win);
    if (d->t == NULL || d->win == NULL) {
        trend_data_free(d);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (trend)");
    }
    d->w = d->t + r->n_windows + 1;
    d->c = d->w + r->n_windows + 1;
    d->y = d->c + r->n_windows + 1;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (!el_track_window_in_trend(w, r->bounds_off))
            continue;
        d->win[d->n] = w;
        d->t[d->n] = 0.5 * (w->t_from + w->t_to);
        /* Bounds off: no spread to weight by, so equal weights. */
        d->w[d->n] = r->bounds_off ? 1.0 : 1.0 / (w->margin_sd * w->margin_sd);
        d->y[d->n] = w->margin;
        d->n++;
    }
    return EL_OK;
}

/* Scatter of the point margins about the weighted line: chi^2 / dof. */
static double scatter_ratio(const trend_data *d, double slope, double tw)
{
    double sw = 0.0, yw = 0.0;
    for (size_t i = 0; i < d->n; i++) {
        sw += d->w[i];
        yw += d->w[i] * d->y[i];
    }
    yw /= sw;
    double chi2 = 0.0;
    for (size_t i = 0; i < d->n; i++) {
        double e = d->y[i] - (yw + slope * (d->t[i] - tw));
        chi2 += d->w[i] * e * e;
    }
    return chi2 / (double)(d->n - 2);
}

/* The line's value at time t: weighted mean plus slope times (t - tw). */
static double line_at(const trend_data *d, const double *y, double slope, double tw,
                      double t)
{
    double sw = 0.0, yw = 0.0;
    for (size_t i = 0; i < d->n; i++) {
        sw += d->w[i];
        yw += d->w[i] * y[i];
    }
    return yw / sw + slope * (t - tw);
}

static void time_to_zero(el_track_result *r, const trend_data *d, const double *slopes,
                         const double *now, size_t n_rep, double *tmp)
{
    r->time_to_zero = r->time_to_zero_lo = r->time_to_zero_hi = NAN;
    if (r->trend != EL_TREND_SHRINKING || !(r->margin_now > 0.0))
        return;
    r->time_to_zero = r->margin_now / -r->slope;
    for (size_t k = 0; k < n_rep; k++)
        tmp[k] = slopes[k] < 0.0 && now[k] > 0.0 ? now[k] / -slopes[k]
                 : now[k] <= 0.0                  ? 0.0
                                                  : INFINITY;
    qsort(tmp, n_rep, sizeof(double), cmp_double);
    r->time_to_zero_lo = el_boot_quantile(tmp, n_rep, 0.5 * (1.0 - r->level));
    /* Interpolating toward +inf would give inf or NaN: take the order
     * statistic instead when the upper end is not finite. */
    double hi = el_boot_quantile(tmp, n_rep, 0.5 * (1.0 + r->level));
    r->time_to_zero_hi = isfinite(hi) ? hi : INFINITY;
    (void)d;
}

/* --method auto chooses per window: windows in different regimes can get
 * different estimators, whose margins carry different biases, and a trend
 * across them can come from the change of estimator. Say so. */
static el_status warn_mixed_methods(el_track_result *r, el_error *err)
{
    const el_track_window *first = NULL;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (!w->ok)
            continue;
        if (first == NULL) {
            first = w;
        } else if (w->method != first->method) {
            el_status st = el_warnings_add(
                &r->warnings,
                "the windows were not all fitted by the same estimator (%s from %s, %s "
                "from %s): their margins can differ by the estimators' biases, not only "
                "by the system; --method %s fits every window alike",
                el_method_name(first->method), first->from_text, el_method_name(w->method),
                w->from_text, el_method_name(first->method));
            return st == EL_OK ? EL_OK : el_error_set(err, st, "out of memory (track)");
        }
    }
    return EL_OK;
}

/* --boot 0: the least-squares line through the point margins (equal
 * weights: d->w is 1) and nothing that needs replicates. */
static el_status unweighted_trend(el_track_result *r, const trend_data *d, double tw)
{
    r->slope = 0.0;
    for (size_t i = 0; i < d->n; i++)
        r->slope += d->c[i] * d->y[i];
    r->margin_now = line_at(d, d->y, r->slope, tw, d->t[d->n - 1]);
    r->has_trend = 1;
    return el_warnings_add(&r->warnings,
                           "bounds are off (--boot 0): the trend is an unweighted "
                           "least-squares line through the windows' point margins, with "
                           "no bounds, no P(shrinking), no class and no time to zero");
}

/* Windows whose data cannot be told from white noise have a withheld
 * verdict, and their margins (-ln|eigenvalue| / dt of a fit to noise:
 * hundreds per second) describe the noise; a line through them would
 * track noise. They stay out of the trend (el_track_window_in_trend);
 * say so, as the table only shows "no dynamics" per window. */
static el_status warn_no_dynamics(el_track_result *r, el_error *err)
{
    size_t n_none = 0;
    for (size_t i = 0; i < r->n_windows; i++)
        n_none += r->windows[i].ok && r->windows[i].no_dynamics;
    if (n_none == 0)
        return EL_OK;
    el_status st = el_warnings_add(
        &r->warnings,
        "%zu of %zu assessed windows show no dynamics (their data cannot be told from "
        "white noise): their margins describe the noise, not the system, and are left "
        "out of the trend",
        n_none, r->n_ok);
    return st == EL_OK ? EL_OK : el_error_set(err, st, "out of memory (trend)");
}

/* A channel left out of some windows (el_track_window.left_out): the
 * windows' margins then rest on different channel sets, and a stuck sensor
 * is itself worth knowing. One warning per channel name, in the order
 * first seen, with its count and its first window. */
static el_status warn_left_out(el_track_result *r, el_error *err)
{
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (!w->ok || w->n_left_out == 0)
            continue;
        const char *p = w->left_out;
        while (*p != '\0') {
            size_t len = strcspn(p, ",");
            int seen = 0;
            size_t count = 0;
            for (size_t k = 0; k < r->n_windows && !seen; k++) {
                const el_track_window *v = &r->windows[k];
                if (!v->ok || v->n_left_out == 0)
                    continue;
                const char *q = v->left_out;
                while (*q != '\0') {
                    size_t lq = strcspn(q, ",");
                    if (lq == len && strncmp(p, q, len) == 0) {
                        seen = k < i;
                        count++;
                        break;
                    }
                    q += lq;
                    q += strspn(q, ", ");
                }
            }
            el_status st = EL_OK;
            if (!seen && count < r->n_ok)
                st = el_warnings_add(
                    &r->warnings,
                    "channel '%.*s' was constant in %zu of %zu assessed windows (from %s): "
                    "a stuck or disconnected sensor? Those windows were fitted without it, "
                    "so their margins rest on fewer channels than the others'",
                    (int)len, p, count, r->n_ok, w->from_text);
            else if (!seen)
                st = el_warnings_add(&r->warnings,
                                     "channel '%.*s' was constant in every assessed window: a "
                                     "stuck or disconnected sensor? The windows were fitted "
                                     "without it", (int)len, p);
            if (st != EL_OK)
                return el_error_set(err, EL_ERR_NOMEM, "out of memory (trend)");
            p += len;
            p += strspn(p, ", ");
        }
    }
    return EL_OK;
}

el_status el_track_fit_trend(el_track_result *r, el_error *err)
{
    r->has_trend = 0;
    r->trend = EL_TREND_UNDECIDED;
    r->slope = r->slope_lo = r->slope_hi = r->p_shrinking = NAN;
    r->scatter_ratio = r->margin_now = NAN;
    r->time_to_zero = r->time_to_zero_lo = r->time_to_zero_hi = NAN;
    r->widening = 1.0;
    el_status st = warn_no_dynamics(r, err);
    if (st == EL_OK)
        st = warn_left_out(r, err);
    if (st != EL_OK)
        return st;
    trend_data d;
    st = trend_data_make(r, &d, err);
    if (st != EL_OK)
        return st;
    double tw = 0.0;
    if (d.n < TRACK_MIN_WINDOWS || !slope_coefficients(d.n, d.t, d.w, d.c, &tw)) {
        trend_data_free(&d);
        return EL_OK;
    }
    if (r->bounds_off) {
        st = unweighted_trend(r, &d, tw);
        trend_data_free(&d);
        return st == EL_OK ? warn_mixed_methods(r, err) : el_error_set(err, st, "out of memory (trend)");
    }
    size_t n_rep = 0;
    for (size_t i = 0; i < d.n; i++)
        n_rep = d.win[i]->n_replicates > n_rep ? d.win[i]->n_replicates : n_rep;
    double *slopes = malloc(3 * n_rep * sizeof(double));
    if (slopes == NULL) {
        trend_data_free(&d);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (trend)");
    }
    double *now = slopes + n_rep, *tmp = now + n_rep;
    double t_last = d.t[d.n - 1];
    r->slope = 0.0;
    for (size_t i = 0; i < d.n; i++)
        r->slope += d.c[i] * d.y[i];
    r->margin_now = line_at(&d, d.y, r->slope, tw, t_last);
    r->scatter_ratio = d.n > 2 ? scatter_ratio(&d, r->slope, tw) : NAN;
    double *y = malloc(d.n * sizeof(double));
    if (y == NULL) {
        free(slopes);
        trend_data_free(&d);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (trend)");
    }
    for (size_t k = 0; k < n_rep; k++) {
        double s = 0.0;
        for (size_t i = 0; i < d.n; i++) {
            y[i] = d.win[i]->margin_samples[k % d.win[i]->n_replicates];
            s += d.c[i] * y[i];
        }
        slopes[k] = s;
        now[k] = line_at(&d, y, s, tw, t_last);
    }
    free(y);
    /* Widen about the median: the windows' bootstrap does not see a
     * scatter beyond it, nor that overlapping windows share their data. */
    double widen = 1.0;
    if (isfinite(r->scatter_ratio) && r->scatter_ratio > 1.0)
        widen *= sqrt(r->scatter_ratio);
    if (r->step < r->window && r->step > 0.0)
        widen *= sqrt(r->window / r->step);
    r->widening = widen;
    if (widen > 1.0) {
        memcpy(tmp, slopes, n_rep * sizeof(double));
        qsort(tmp, n_rep, sizeof(double), cmp_double);
        double med_s = el_boot_quantile(tmp, n_rep, 0.5);
        memcpy(tmp, now, n_rep * sizeof(double));
        qsort(tmp, n_rep, sizeof(double), cmp_double);
        double med_n = el_boot_quantile(tmp, n_rep, 0.5);
        for (size_t k = 0; k < n_rep; k++) {
            slopes[k] = med_s + widen * (slopes[k] - med_s);
            now[k] = med_n + widen * (now[k] - med_n);
        }
    }
    size_t below = 0;
    for (size_t k = 0; k < n_rep; k++)
        below += slopes[k] < 0.0;
    r->p_shrinking = (double)below / (double)n_rep;
    memcpy(tmp, slopes, n_rep * sizeof(double));
    qsort(tmp, n_rep, sizeof(double), cmp_double);
    r->slope_lo = el_boot_quantile(tmp, n_rep, 0.5 * (1.0 - r->level));
    r->slope_hi = el_boot_quantile(tmp, n_rep, 0.5 * (1.0 + r->level));
    if (r->p_shrinking >= r->level)
        r->trend = EL_TREND_SHRINKING;
    else if (1.0 - r->p_shrinking >= r->level)
        r->trend = EL_TREND_GROWING;
    r->has_trend = 1;
    time_to_zero(r, &d, slopes, now, n_rep, tmp);
    free(slopes);
    st = EL_OK;
    if (widen > 1.0)
        st = el_warnings_add(&r->warnings,
                             "the trend's bounds were widened %.2fx: %s%s%s", widen,
                             r->scatter_ratio > 1.0 ? "the margins scatter about the line "
                                                      "more than their bounds explain"
                                                    : "",
                             r->scatter_ratio > 1.0 && r->step < r->window ? "; " : "",
                             r->step < r->window ? "the windows overlap and share data"
                                                 : "");
    if (st == EL_OK && isfinite(r->scatter_ratio) && r->scatter_ratio > 4.0)
        st = el_warnings_add(&r->warnings,
                             "the margin does not follow a straight line (scatter %.1f times "
                             "what its bounds allow): look at the windows, not the trend",
                             r->scatter_ratio);
    if (st == EL_OK && isfinite(r->time_to_zero))
        st = el_warnings_add(&r->warnings,
                             "the time to zero margin is a straight-line extrapolation of "
                             "the trend beyond the log, which assumes the margin keeps "
                             "falling at the same rate: it may be lost sooner");
    trend_data_free(&d);
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory (trend)");
    return warn_mixed_methods(r, err);
}

/* ------------------------------------------------------------------ */
/* Reports. */

void el_track_window_text(el_buf *out, const el_track_window *w, int width)
{
    el_buf_printf(out, "  %*s %*s  ", width, w->from_text, width, w->to_text);
    if (!w->ok) {
        el_buf_printf(out, "failed: %s\n", w->error);
        return;
    }
    el_buf_printf(out, "%10.4g  ", w->margin);
    if (isfinite(w->margin_lo))
        el_buf_printf(out, "[%9.4g, %9.4g]  ", w->margin_lo, w->margin_hi);
    else
        el_buf_printf(out, "%-22s  ", "n/a");
    if (isfinite(w->damping_ratio))
        el_buf_printf(out, "%7.3f  ", w->damping_ratio);
    else
        el_buf_printf(out, "%7s  ", "n/a");
    if (isfinite(w->frequency_hz))
        el_buf_printf(out, "%8.4g  ", w->frequency_hz);
    else
        el_buf_printf(out, "%8s  ", "n/a");
    if (isfinite(w->p_stable))
        el_buf_printf(out, "%6.3f  ", w->p_stable);
    else
        el_buf_printf(out, "%6s  ", "n/a");
    el_buf_printf(out, "%s%s  %s%s%s%s\n",
                  w->no_dynamics ? "no dynamics" : stability_name(w->stability),
                  w->ambiguous && w->stability != EL_UNDECIDED ? " (ambiguous)" : "",
                  el_method_name(w->method), w->n_left_out > 0 ? ", without " : "",
                  w->left_out, w->n_left_out > 0 && w->left_out[0] == '\0' ? "?" : "");
}

/* The time unit, "time unit" when the log does not say. */
static const char *unit_of(const el_track_result *r)
{
    return r->time_unit[0] != '\0' ? r->time_unit : "time unit";
}

/* "%.4g" of v, or "n/a" when it does not exist. */
static const char *num_or_na(char *buf, size_t size, double v)
{
    if (isfinite(v))
        snprintf(buf, size, "%.4g", v);
    else
        snprintf(buf, size, "n/a");
    return buf;
}

void el_track_trend_text(el_buf *out, const el_track_result *r)
{
    double pct = 100.0 * r->level;
    const char *u = unit_of(r);
    char lo[32], hi[32], p[32];
    el_buf_printf(out, "Trend         margin changes by %.4g 1/%s per %s, %.0f%% bounds "
                       "[%s, %s]\n", r->slope, u, u, pct,
                  num_or_na(lo, sizeof lo, r->slope_lo), num_or_na(hi, sizeof hi, r->slope_hi));
    if (isfinite(r->p_shrinking))
        snprintf(p, sizeof p, "%.3f", r->p_shrinking);
    else
        snprintf(p, sizeof p, "n/a");
    el_buf_printf(out, "              P(shrinking) = %s; margin at the last window "
                       "(on the line) %.4g 1/%s\n", p, r->margin_now, u);
    if (isfinite(r->time_to_zero)) {
        el_buf_printf(out, "              at this rate it reaches zero %.4g %s after "
                           "the last window's middle, %.0f%% bounds [%.4g, ",
                      r->time_to_zero, r->time_unit[0] != '\0' ? u : "time units", pct,
                      r->time_to_zero_lo);
        if (isfinite(r->time_to_zero_hi))
            el_buf_printf(out, "%.4g]\n", r->time_to_zero_hi);
        else
            el_buf_printf(out, "not bounded]\n");
    }
    if (r->trend == EL_TREND_SHRINKING)
        el_buf_printf(out, "Verdict       SHRINKING MARGIN  (P(shrinking) %.3f >= %.3g)\n",
                      r->p_shrinking, r->level);
    else if (r->trend == EL_TREND_GROWING)
        el_buf_printf(out, "Verdict       GROWING MARGIN  (P(shrinking) %.3f <= %.3g)\n",
                      r->p_shrinking, 1.0 - r->level);
    else if (r->bounds_off)
        el_buf_printf(out, "Verdict       NOT CLASSIFIED  (bounds are off: --boot 0)\n");
    else
        el_buf_printf(out, "Verdict       NO CLEAR TREND  (a call needs P(shrinking) >= %.3g "
                           "or <= %.3g)\n", r->level, 1.0 - r->level);
}

el_status el_track_warnings_text(el_buf *out, const el_track_result *r)
{
    if (r->warnings.count == 0)
        return EL_OK;
    const el_warnings *lists[1] = {&r->warnings};
    el_warnings lines = {0};
    el_status st = el_warnlines_fold(lists, 1, &lines, NULL);
    for (size_t i = 0; st == EL_OK && i < lines.count; i++)
        el_buf_printf(out, "  ! %s\n", lines.items[i]);
    el_warnings_free(&lines);
    return st == EL_OK && out->failed ? EL_ERR_NOMEM : st;
}

el_status el_track_report_text(const el_track_result *r, const el_track_options *opt,
                               el_buf *out)
{
    el_buf_printf(out, "eigenlog %s track  %s\n", EL_VERSION,
                  opt->assess.path ? opt->assess.path : "");
    const char *wu = r->time_unit[0] != '\0' ? r->time_unit : "time units";
    el_buf_printf(out, "Windows       %zu, each %.6g %s long, starting every %.6g %s "
                       "from %s; %zu assessed\n",
                  r->n_windows, r->window, wu, r->step, wu,
                  r->n_windows > 0 ? r->windows[0].from_text : "", r->n_ok);
    el_buf_printf(out, "Margin = decay rate of the least-damped mode (1/%s; "
                       "below 0: growing)\n", unit_of(r));
    int width = 10;
    for (size_t i = 0; i < r->n_windows; i++) {
        int len = (int)strlen(r->windows[i].to_text);
        width = len > width ? len : width;
    }
    el_buf_printf(out, "  %*s %*s  %10s  %-22s  %7s  %8s  %6s  %s\n", width, "from", width,
                  "to", "margin", "bounds", "zeta", "f Hz", "P(st)", "verdict, method");
    for (size_t i = 0; i < r->n_windows; i++)
        el_track_window_text(out, &r->windows[i], width);
    if (r->has_trend)
        el_track_trend_text(out, r);
    if (el_track_warnings_text(out, r) != EL_OK)
        return EL_ERR_NOMEM;
    char cautions[EL_ADVICE_MAX_CAUTIONS][EL_ADVICE_TEXT_MAX];
    size_t n_cautions = el_track_cautions(r, cautions);
    el_buf_printf(out, "Cautions\n");
    for (size_t i = 0; i < n_cautions; i++)
        el_buf_printf(out, "  - %s\n", cautions[i]);
    return out->failed ? EL_ERR_NOMEM : EL_OK;
}

static void json_interval(el_json *j, const char *key, double lo, double hi)
{
    if (isfinite(lo) || isfinite(hi))
        el_json_pair(j, key, lo, isfinite(hi) ? hi : NAN);
    else
        el_json_null(j, key);
}

/* from/to: table time, for ISO logs Unix seconds (as assess's window). */
void el_track_window_json(el_json *j, const char *key, const el_track_window *w,
                          double origin)
{
    el_json_object_begin(j, key);
    el_json_number(j, "from", origin + w->t_from);
    el_json_number(j, "to", origin + w->t_to);
    el_json_string(j, "from_text", w->from_text);
    el_json_string(j, "to_text", w->to_text);
    el_json_bool(j, "ok", w->ok);
    if (!w->ok) {
        el_json_string(j, "error", w->error);
        el_json_object_end(j);
        return;
    }
    el_json_string(j, "method", el_method_name(w->method));
    el_json_number(j, "margin", w->margin);
    json_interval(j, "margin_bounds", w->margin_lo, w->margin_hi);
    el_json_number(j, "damping_ratio", w->damping_ratio);
    el_json_number(j, "frequency_hz", w->frequency_hz);
    el_json_number(j, "p_stable", w->p_stable);
    el_json_string(j, "stability", stability_name(w->stability));
    el_json_bool(j, "ambiguous", w->ambiguous);
    el_json_bool(j, "no_dynamics", w->no_dynamics);
    el_json_int(j, "replicates", (long long)w->n_replicates);
    el_json_int(j, "warnings", (long long)w->n_warnings);
    el_json_array_begin(j, "channels_left_out");
    for (const char *p = w->left_out; *p != '\0';) {
        size_t len = strcspn(p, ",");
        char name[EL_ERROR_TEXT_MAX];
        snprintf(name, sizeof name, "%.*s", (int)len, p);
        el_json_string(j, NULL, name);
        p += len;
        p += strspn(p, ", ");
    }
    el_json_array_end(j);
    el_json_object_end(j);
}

void el_track_trend_json(el_json *j, const el_track_result *r)
{
    el_json_object_begin(j, "trend");
    el_json_string(j, "class", el_trend_name(r->trend));
    el_json_number(j, "level", r->level);
    el_json_number(j, "slope", r->slope);
    json_interval(j, "slope_bounds", r->slope_lo, r->slope_hi);
    el_json_number(j, "p_shrinking", r->p_shrinking);
    el_json_number(j, "margin_now", r->margin_now);
    el_json_number(j, "scatter_ratio", r->scatter_ratio);
    el_json_number(j, "widening", r->widening);
    el_json_number(j, "time_to_zero", r->time_to_zero);
    json_interval(j, "time_to_zero_bounds", r->time_to_zero_lo, r->time_to_zero_hi);
    el_json_object_end(j);
}

el_status el_track_report_json(const el_track_result *r, const el_track_options *opt,
                               el_buf *out)
{
    el_json j;
    el_json_init(&j, out);
    el_json_object_begin(&j, NULL);
    el_json_string(&j, "eigenlog", EL_VERSION);
    el_envelope_head(&j, "track");
    el_json_object_begin(&j, "input");
    el_json_string(&j, "file", opt->assess.path ? opt->assess.path : "");
    el_json_int(&j, "channels", (long long)r->n_channels);
    el_envelope_input(&j, opt->assess.path, opt->assess.paths, opt->assess.n_paths,
                      r->channel_names.items, r->channel_names.count);
    el_json_string(&j, "time_format", r->time_is_iso ? "iso8601" : "number");
    el_json_string(&j, "time_unit", r->time_unit);
    el_json_pair(&j, "span", r->time_origin_s + r->span_from, r->time_origin_s + r->span_to);
    el_json_object_end(&j);
    el_json_object_begin(&j, "windowing");
    el_json_number(&j, "length", r->window);
    el_json_number(&j, "step", r->step);
    el_json_int(&j, "count", (long long)r->n_windows);
    el_json_int(&j, "assessed", (long long)r->n_ok);
    el_json_object_end(&j);
    el_json_array_begin(&j, "windows");
    for (size_t i = 0; i < r->n_windows; i++)
        el_track_window_json(&j, NULL, &r->windows[i], r->time_origin_s);
    el_json_array_end(&j);
    el_track_trend_json(&j, r);
    el_json_array_begin(&j, "warnings");
    for (size_t i = 0; i < r->warnings.count; i++)
        el_json_string(&j, NULL, r->warnings.items[i]);
    el_json_array_end(&j);
    const el_warnings *lists[1] = {&r->warnings};
    el_envelope_warnings(&j, "warning_details", lists, 1);
    /* The general caution of many windows (the last of the track's
     * cautions), not the single window's "this window only". */
    char cautions[EL_ADVICE_MAX_CAUTIONS][EL_ADVICE_TEXT_MAX];
    size_t n_cautions = el_track_cautions(r, cautions);
    el_json_string(&j, "caution", cautions[n_cautions - 1]);
    el_json_array_begin(&j, "cautions");
    for (size_t i = 0; i < n_cautions; i++)
        el_json_string(&j, NULL, cautions[i]);
    el_json_array_end(&j);
    el_json_object_end(&j);
    return el_json_finish(&j);
}
