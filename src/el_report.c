/* el_report: text and JSON reports of an assessment. */
#include "el_report.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "el_advice.h"
#include "el_json.h"
#include "el_warnlines.h"

static const char *resample_name(el_resample_kind k)
{
    return k == EL_RESAMPLE_MODEL ? "model" : "blocks";
}

static int boot_ran(const el_assessment *r)
{
    return r->boot.replicates > 0 && r->boot.bounds != NULL;
}

/* "%.4g" or "n/a" for a value that does not exist. */
static const char *num(char *buf, size_t size, double v)
{
    if (!isfinite(v))
        snprintf(buf, size, "n/a");
    else
        snprintf(buf, size, "%.4g", v);
    return buf;
}

static const char *unit_of(const el_series *s, size_t c)
{
    return s->units[c][0] != '\0' ? s->units[c] : "";
}

/* ---------------------------------------------------------------- text */

static void text_header(const el_assessment *r, el_buf *out)
{
    const el_table *t = &r->table;
    const el_series *s = &r->series;
    char a[64], b[64];
    el_table_format_time(t, s->t0, a, sizeof a);
    el_table_format_time(t, s->t0 + (double)(s->n_samples - 1) * s->dt, b, sizeof b);
    el_buf_printf(out, "eigenlog %s  %s\n\n", EL_VERSION, t->source);
    el_buf_printf(out, "Data\n");
    int bare = t->time_is_iso || t->time_is_clock;
    el_buf_printf(out, "  window       %s .. %s%s%s\n", a, b, bare ? "" : " ",
                  bare ? "" : t->time_unit[0] ? t->time_unit : "s");
    el_buf_printf(out, "  samples      %zu at dt = %.6g s (%zu rows of %zu used)%s\n",
                  s->n_samples, s->dt, s->rows_used, t->n_rows,
                  s->resampled ? ", resampled" : "");
    if (t->time_is_iso)
        el_buf_printf(out, "  time         %s, %s\n",
                      t->date_order == EL_DATE_DMY   ? "date-times written day first"
                      : t->date_order == EL_DATE_MDY ? "date-times written month first"
                                                     : "ISO 8601 date-times",
                      t->time_zone_known ? "with zone" : "local time of an unknown zone");
    else if (t->time_is_clock)
        el_buf_printf(out, "  time         times of day without a date, %zu midnight "
                      "crossing%s counted\n", t->clock_midnights,
                      t->clock_midnights == 1 ? "" : "s");
    else if (strcmp(t->time_unit_source, "assumed") == 0 || t->time_unit_source[0] == '\0')
        el_buf_printf(out, "  time unit    s (assumed: the log gives no unit)\n");
    else
        el_buf_printf(out, "  time unit    %s (from the %s)\n", t->time_unit,
                      strcmp(t->time_unit_source, "--time-unit") == 0 ? "option --time-unit"
                                                                       : t->time_unit_source);
    el_buf_printf(out, "  channels    ");
    for (size_t c = 0; c < s->n_channels; c++)
        el_buf_printf(out, " %s%s%s%s%s", s->names[c], s->units[c][0] ? " [" : "",
                      unit_of(s, c), s->units[c][0] ? "]" : "",
                      c + 1 < s->n_channels ? "," : "");
    el_buf_printf(out, "\n  filled cells %zu\n\n", s->filled_cells);
}

static void text_model(const el_assessment *r, el_buf *out)
{
    const el_model *m = &r->model;
    const el_series *s = &r->series;
    el_buf_printf(out, "Model  z[k+1] = Ad z[k]%s + c  (%s%s)\n",
                  m->n_inputs > 0 ? " + B u[k]" : "", el_method_description(m->method),
                  m->rank < m->state_dim ? ", rank-truncated" : "");
    if (r->method_was_auto) {
        el_buf_printf(out, "  estimator    %s, chosen for %s\n", el_method_name(m->method),
                      r->method_reason);
        if (r->cross_ran) {
            char p[80] = "";
            if (isfinite(r->cross_p_stable))
                snprintf(p, sizeof p, ", stable in %.0f of its %zu bootstrap replicates",
                         r->cross_p_stable * (double)r->cross_boot.replicates,
                         r->cross_boot.replicates);
            if (el_assess_ls_stable_beside_growth(r))
                el_buf_printf(out,
                              "  cross-check  ls leans stable (stable in %.0f of its %zu "
                              "bootstrap replicates),\n"
                              "               not counted against growth: sensor noise "
                              "biases least squares\n"
                              "               towards stability\n",
                              r->cross_p_stable * (double)r->cross_boot.replicates,
                              r->cross_boot.replicates);
            else
                el_buf_printf(out, "  cross-check  %s %s%s\n", el_method_name(r->cross_method),
                              r->cross_agrees ? "agrees" : "DISAGREES", p);
        }
    }
    else if (r->method_stood_in)
        el_buf_printf(out, "  estimator    %s, %s\n", el_method_name(m->method),
                      r->method_reason);
    if (r->state_check.ran)
        el_buf_printf(out,
                      "  plain state  iv without lags: stable in %.0f of its %zu bootstrap "
                      "replicates%s\n",
                      r->state_check.p_stable * (double)r->state_check.replicates,
                      r->state_check.replicates,
                      r->state_check.withdraws ? ": the \"unstable\" is withdrawn"
                                               : ": the growth stands");
    if (r->lags_were_auto)
        el_buf_printf(out, "  lags         %zu chosen automatically%s: %s\n", m->lags,
                      r->lags_for_one_channel
                          ? " (one channel and no --lags: one sample of one sensor cannot "
                            "show an oscillation)"
                          : "",
                      r->lags_choice.reason);
    if (m->depth > 0)
        el_buf_printf(out, "  depth        %zu block rows of past measurements\n", m->depth);
    for (size_t i = 0; i < m->n_inputs; i++) {
        el_buf_printf(out, "  input        %s, B column:", r->inputs.names[i]);
        for (size_t c = 0; c < m->n_channels; c++)
            el_buf_printf(out, " %.4g", m->input_b[i * m->state_dim + c]);
        el_buf_printf(out, " (channel units per input unit; held at its mean %.6g)\n",
                      m->input_mean[i]);
    }
    if (m->lags == 0)
        el_buf_printf(out, "  states       %zu (%zu channel%s, no lags)\n", m->state_dim,
                      m->n_channels, m->n_channels == 1 ? "" : "s");
    else
        el_buf_printf(out, "  states       %zu (%zu channel%s, each at lags 0..%zu)\n",
                      m->state_dim, m->n_channels, m->n_channels == 1 ? "" : "s", m->lags);
    el_buf_printf(out, "  rank         %zu%s\n", m->rank,
                  !m->rank_was_auto ? ""
                  : m->method == EL_METHOD_LS ? " (optimal hard threshold)"
                                              : " (canonical-correlation rank test)");
    el_buf_printf(out, "  pairs        %zu\n", m->n_pairs);
    el_buf_printf(out, "  one-step R2  %.4f overall;", m->fit_r2);
    for (size_t c = 0; c < s->n_channels; c++)
        el_buf_printf(out, " %s %.4f%s", s->names[c], m->channel_r2[c],
                      c + 1 < s->n_channels ? "," : "");
    el_buf_printf(out, "\n\nOperating point\n");
    for (size_t c = 0; c < s->n_channels; c++) {
        if (r->operating_point_ok)
            el_buf_printf(out, "  %-20s %12.6g %s", s->names[c], r->operating_point[c],
                          unit_of(s, c));
        else
            el_buf_printf(out, "  %-20s %12s (I - Ad is singular)", s->names[c], "n/a");
        if (r->detrend_slope[c] != 0.0)
            el_buf_printf(out, "  (at the window centre; drift %.4g %s per s removed)",
                          r->detrend_slope[c], unit_of(s, c));
        el_buf_printf(out, "\n");
    }
    el_buf_printf(out, "\n");
}

static void text_mode(const el_assessment *r, size_t i, el_buf *out)
{
    const el_mode *md = &r->modes.modes[i];
    char f[32], z[32], d[32], tc[32];
    char lam[64];
    if (md->instantaneous)
        snprintf(lam, sizeof lam, "-inf (mu = 0)");
    else if (md->pair)
        snprintf(lam, sizeof lam, "%.4g +/- %.4gi", md->lambda_re, md->lambda_im);
    else
        snprintf(lam, sizeof lam, "%.4g", md->lambda_re);
    const char *tc_kind = md->decay_rate < 0 ? "doubling" : "decay";
    /* 79 columns (80 with the report's wrapping): lambda gets 24. */
    el_buf_printf(out, "  %-2zu %-24s %9s %9s %10s %9s %-8s\n", i + 1, lam,
                  md->at_nyquist ? "Nyquist" : num(f, sizeof f, md->frequency_hz),
                  num(z, sizeof z, md->damping_ratio), num(d, sizeof d, md->decay_rate),
                  num(tc, sizeof tc, md->time_constant_s),
                  isfinite(md->time_constant_s) ? tc_kind : "");
    if (boot_ran(r) && i < r->boot.n_modes) {
        const el_mode_bounds *b = &r->boot.bounds[i];
        char l1[32], h1[32], l2[32], h2[32], l3[32], h3[32];
        el_buf_printf(out, "     %.0f%% bounds: Re [%s, %s]  f [%s, %s] Hz  zeta [%s, %s]\n",
                      100.0 * r->boot.level, num(l1, 32, b->re.lo), num(h1, 32, b->re.hi),
                      num(l2, 32, b->frequency_hz.lo), num(h2, 32, b->frequency_hz.hi),
                      num(l3, 32, b->damping_ratio.lo), num(h3, 32, b->damping_ratio.hi));
    }
    /* The shape in units of each channel's standard deviation leads: in
     * raw units a channel logged in small units (microstrain) would look
     * as if it carried the mode alone. The raw shape is in the JSON. */
    size_t nc = r->modes.n_channels;
    el_buf_printf(out, "     shape (x channel std):");
    for (size_t c = 0; c < nc; c++) {
        if (md->shape_scaled_magnitude != NULL && md->shape_scaled_phase_deg != NULL)
            el_buf_printf(out, " %s %.2f@%.0fdeg%s", r->series.names[c],
                          md->shape_scaled_magnitude[c], md->shape_scaled_phase_deg[c],
                          c + 1 < nc ? "," : "");
        else
            el_buf_printf(out, " %s n/a%s", r->series.names[c], c + 1 < nc ? "," : "");
    }
    el_buf_printf(out, "\n     participation:");
    for (size_t c = 0; c < nc; c++) {
        char pf[32];
        el_buf_printf(out, " %s %s%s", r->series.names[c],
                      md->participation != NULL && isfinite(md->participation[c])
                          ? (snprintf(pf, sizeof pf, "%.2f", md->participation[c]), pf)
                          : "n/a",
                      c + 1 < nc ? "," : "");
    }
    el_buf_printf(out, "\n");
}

static void text_modes(const el_assessment *r, el_buf *out)
{
    el_buf_printf(out, "Modes, least damped first (lambda in 1/s, time constant in s)\n");
    if (r->method_stood_in)
        el_buf_printf(out, "  (fitted by ls in place of %s: these modes describe noise, not "
                      "the system)\n", el_method_name(r->method_refused));
    el_buf_printf(out, "  %-2s %-24s %9s %9s %10s %9s\n", "#", "lambda", "freq Hz",
                  "damping", "decay 1/s", "time");
    for (size_t i = 0; i < r->modes.n_modes; i++)
        text_mode(r, i, out);
    el_buf_printf(out, "\n");
}

static void text_wrapped(el_buf *out, const char *prefix, const char *text);

/* Bonferroni: the p-value a single channel must reach to count as white
 * (EL_DYNAMICS_ALPHA over the channels tested); NaN when none was. */
static double whiteness_threshold(const el_dynamics_test *t)
{
    return t->tested && t->n_tested > 0 ? EL_DYNAMICS_ALPHA / (double)t->n_tested : NAN;
}

/* One line with the whiteness test's figures under a verdict withheld for
 * no dynamics (the full table is in JSON, "whiteness"). */
static void text_whiteness(const el_assessment *r, el_buf *out)
{
    const el_dynamics_test *t = &r->dynamics;
    char line[512], a[32], b[32];
    snprintf(line, sizeof line,
             "Ljung-Box over %zu lags on %zu channel%s: smallest p %s (%s) >= %s "
             "(%.2g / %zu, Bonferroni), so every channel is white; one-step R2 %.3f "
             "< %.2g", t->lags, t->n_tested, t->n_tested == 1 ? "" : "s",
             num(a, sizeof a, t->p_min), r->series.names[t->channel],
             num(b, sizeof b, whiteness_threshold(t)), EL_DYNAMICS_ALPHA, t->n_tested,
             r->model.fit_r2, EL_DYNAMICS_R2_MAX);
    text_wrapped(out, "  whiteness   ", line);
}

static void text_verdict(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out)
{
    const el_verdict *v = &r->verdict;
    char a[32], b[32], c[32];
    if (v->has_plane)
        el_buf_printf(out, "Fixed point   %s  (trace %s, determinant %s, discriminant %s)\n",
                      v->type, num(a, 32, v->trace), num(b, 32, v->determinant),
                      num(c, 32, v->discriminant));
    else
        el_buf_printf(out, "Fixed point   %s  (%zu stable, %zu unstable, %zu marginal eigenvalues)\n",
                      v->type, v->n_stable_real + v->n_stable_oscillatory,
                      v->n_unstable_real + v->n_unstable_oscillatory,
                      v->n_marginal_real + v->n_marginal_oscillatory);
    if (v->has_plane && boot_ran(r) && r->boot.has_plane) {
        el_buf_printf(out, "  region probabilities:");
        for (int k = 0; k < EL_REGION_COUNT; k++)
            if (r->boot.region_probability[k] > 0)
                el_buf_printf(out, " %s %.3f", el_region_name((el_region)k),
                              r->boot.region_probability[k]);
        el_buf_printf(out, "\n");
    }
    /* The word leads; then one line of reason, one of next step, the
     * support in words (docs/method.md, "Verdict words"). */
    el_advice adv;
    el_advice_assess(r, opt != NULL ? opt->boot.level : NAN, &adv);
    char verdict_word[32];
    snprintf(verdict_word, sizeof verdict_word, "%s", v->stability_name);
    for (char *p = verdict_word; *p; p++)
        *p = (char)(*p >= 'a' && *p <= 'z' ? *p - 32 : *p);
    el_buf_printf(out, "Verdict       %s\n", verdict_word);
    text_wrapped(out, "  reason      ", adv.reason);
    text_wrapped(out, "  next step   ", adv.next_step);
    text_wrapped(out, "  support     ", adv.support);
    if (v->cause == EL_CAUSE_NO_DYNAMICS)
        text_whiteness(r, out);
    el_buf_printf(out, "Margin        decay rate %s 1/s, damping ratio %s (least damped mode)\n\n",
                  num(a, 32, v->margin_decay_rate), num(b, 32, v->margin_damping_ratio));
}

/* The warnings as lines (el_warnlines_fold: one line for many
 * modes with the same warning); the count is of warnings, as in JSON. */
static el_status text_warnings(const el_assessment *r, el_buf *out)
{
    size_t n = r->input_warnings.count + r->warnings.count;
    if (n == 0)
        return EL_OK;
    const el_warnings *lists[2] = {&r->input_warnings, &r->warnings};
    el_warnings lines = {0};
    size_t folded = 0;
    el_status st = el_warnlines_fold(lists, 2, &lines, &folded);
    if (st != EL_OK)
        return st;
    char heading[80];
    el_buf_printf(out, "%s\n", el_warnlines_heading(n, lines.count, folded, heading,
                                                    sizeof heading));
    for (size_t i = 0; i < lines.count; i++)
        el_buf_printf(out, "  ! %s\n", lines.items[i]);
    el_buf_printf(out, "\n");
    el_warnings_free(&lines);
    return EL_OK;
}

static void text_checks(const el_assessment *r, el_buf *out)
{
    const el_regime *g = r->regime;
    const el_validation *v = r->validation;
    char a[32];
    if (g != NULL) {
        el_buf_printf(out, "Regime        %s", g->regime_name);
        if (g->regime == EL_REGIME_TRANSIENT)
            el_buf_printf(out, " (amplitude %s)", g->direction > 0 ? "grows"
                                                 : g->direction < 0 ? "decays" : "level moves");
        if (g->growth)
            el_buf_printf(out, "; %s of %s grows %.3gx over the window (p %s)",
                          g->growth_test == EL_REGIME_GROWTH_DRIFT
                              ? "deviation from its level" : "envelope",
                          r->series.names[g->growth_channel], g->growth_factor,
                          num(a, 32, g->growth_p));
        else if (isfinite(g->trend_p)) {
            /* Say which way the test went: a p of 0.0146 beside "stationary"
             * read as a contradiction without the level it is held to. */
            el_regime_options ro;
            el_regime_defaults(&ro);
            el_buf_printf(out, "; amplitude-change test p = %s (%s p < %g)",
                          num(a, 32, g->trend_p),
                          g->trend_p < ro.level ? "a change:" : "no change shown: a change needs",
                          ro.level);
        }
        if (g->level_kind != EL_REGIME_LEVEL_NONE)
            el_buf_printf(out, "; but the level of %s %s", r->series.names[g->level_channel],
                          g->level_kind == EL_REGIME_LEVEL_SHIFT ? "steps" : "trends");
        el_buf_printf(out, "\n");
    }
    if (v != NULL) {
        el_buf_printf(out, "Validation    free-run error");
        for (size_t c = 0; c < v->n_channels; c++)
            el_buf_printf(out, " %s %s%s", r->series.names[c], num(a, 32, v->free_nrmse[c]),
                          c + 1 < v->n_channels ? "," : "");
        el_buf_printf(out, " (x std)\n              residuals %s",
                      !v->lb_tested ? "not tested for whiteness"
                      : v->residuals_white ? "white (Ljung-Box)" : "correlated (Ljung-Box)");
        el_buf_printf(out, "%s\n", v->free_diverges ? "; free run diverges" : "");
    }
    el_buf_printf(out, "\n");
}

/* Appends prefix + text, wrapped at 78 columns with a hanging indent. */
static void text_wrapped(el_buf *out, const char *prefix, const char *text)
{
    size_t indent = strlen(prefix), column = indent;
    el_buf_printf(out, "%s", prefix);
    const char *p = text;
    while (*p != '\0') {
        const char *end = strchr(p, ' ');
        size_t len = end ? (size_t)(end - p) : strlen(p);
        if (column > indent && column + 1 + len > 78) {
            el_buf_printf(out, "\n%*s", (int)indent, "");
            column = indent;
        } else if (column > indent) {
            el_buf_printf(out, " ");
            column++;
        }
        el_buf_printf(out, "%.*s", (int)len, p);
        column += len;
        p += len;
        while (*p == ' ')
            p++;
    }
    el_buf_printf(out, "\n");
}

el_status el_report_text(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out)
{
    text_header(r, out);
    text_model(r, out);
    text_modes(r, out);
    text_verdict(r, opt, out);
    text_checks(r, out);
    if (text_warnings(r, out) != EL_OK)
        return EL_ERR_NOMEM;
    el_advice adv;
    el_advice_assess(r, opt != NULL ? opt->boot.level : NAN, &adv);
    el_buf_printf(out, "Cautions\n");
    for (size_t i = 0; i < adv.n_cautions; i++)
        text_wrapped(out, "  - ", adv.cautions[i]);
    return out->failed ? EL_ERR_NOMEM : EL_OK;
}

/* ---------------------------------------------------------------- JSON */

static void json_strings(el_json *j, const char *key, char *const *items, size_t n)
{
    el_json_array_begin(j, key);
    for (size_t i = 0; i < n; i++)
        el_json_string(j, NULL, items[i]);
    el_json_array_end(j);
}

/* Table time -> the time base of input.window (Unix seconds for ISO logs). */
static double json_time(const el_assessment *r, double t)
{
    return r->table.time_is_iso ? (double)r->table.time_origin_unix_s + t : t;
}

/* input.nonstationarity: what breaks the one-operating-point assumption,
 * and the split-half check behind "drift" (docs/cli.md). */
static void json_nonstationarity(el_json *j, const el_assessment *r)
{
    const el_split_check *sc = &r->split;
    char when[64];
    el_json_object_begin(j, "nonstationarity");
    el_json_string(j, "kind", el_nonstat_name(r->nonstat));
    el_json_number(j, "where_s", r->nonstat == EL_NONSTAT_NONE ? NAN
                                 : json_time(r, r->nonstat_t));
    el_json_string(j, "where_text", r->nonstat == EL_NONSTAT_NONE || !isfinite(r->nonstat_t)
                                        ? NULL
                                        : el_table_format_time(&r->table, r->nonstat_t,
                                                               when, sizeof when));
    el_json_string(j, "channel", r->nonstat == EL_NONSTAT_LEVEL_SHIFT ||
                                         r->nonstat == EL_NONSTAT_LEVEL_TREND
                                     ? r->series.names[r->nonstat_channel]
                                     : NULL);
    const el_regime *g = r->regime;
    if (g != NULL && g->level_kind != EL_REGIME_LEVEL_NONE) {
        el_json_object_begin(j, "level");
        el_json_string(j, "kind", g->level_kind == EL_REGIME_LEVEL_SHIFT ? "shift" : "trend");
        el_json_string(j, "channel", r->series.names[g->level_channel]);
        el_json_number(j, "change", g->level_change);
        el_json_number(j, "z", g->level_move_z);
        el_json_number(j, "share", g->level_share);
        el_json_number(j, "block_r2", g->level_fit_r2);
        el_json_object_end(j);
    } else {
        el_json_null(j, "level");
    }
    el_json_int(j, "level_explained", g != NULL ? (long long)g->level_explained : 0);
    el_json_object_begin(j, "split_halves");
    el_json_bool(j, "tested", sc->tested);
    el_json_string(j, "not_tested", sc->tested ? NULL : sc->not_tested);
    el_json_number(j, "split_s", sc->tested ? json_time(r, sc->split_t) : NAN);
    el_json_pair(j, "decay_rate", sc->tested ? sc->decay_rate[0] : NAN,
                 sc->tested ? sc->decay_rate[1] : NAN);
    el_json_pair(j, "decay_rate_sd", sc->tested ? sc->decay_sd[0] : NAN,
                 sc->tested ? sc->decay_sd[1] : NAN);
    el_json_pair(j, "frequency_hz", sc->tested ? sc->frequency_hz[0] : NAN,
                 sc->tested ? sc->frequency_hz[1] : NAN);
    el_json_pair(j, "frequency_hz_sd", sc->tested ? sc->frequency_sd[0] : NAN,
                 sc->tested ? sc->frequency_sd[1] : NAN);
    el_json_number(j, "z_decay_rate", sc->z_decay);
    el_json_number(j, "z_frequency", sc->z_frequency);
    el_json_number(j, "z_threshold", EL_ASSESS_SPLIT_Z);
    el_json_bool(j, "drift", sc->drift);
    el_json_object_end(j);
    el_json_object_end(j);
}

static void json_input(el_json *j, const el_assessment *r, const el_assess_options *opt)
{
    const el_table *t = &r->table;
    const el_series *s = &r->series;
    double origin = t->time_is_iso     ? (double)t->time_origin_unix_s
                    : t->time_is_clock ? (double)t->clock_origin_s : 0.0;
    double t1 = s->t0 + (double)(s->n_samples - 1) * s->dt;
    char a[64], b[64];
    el_json_object_begin(j, "input");
    el_json_string(j, "file", t->source);
    el_envelope_input(j, opt->path, opt->paths, opt->n_paths, s->names, s->n_channels);
    el_json_int(j, "rows_read", (long long)t->n_rows);
    el_json_int(j, "rows_used", (long long)s->rows_used);
    json_strings(j, "channels", s->names, s->n_channels);
    json_strings(j, "units", s->units, s->n_channels);
    el_json_string(j, "time_column", t->names[t->time_column]);
    el_json_string(j, "time_format", t->time_is_iso ? "iso8601" : "number");
    /* The unit the log's times were written in and how it was found;
     * every time and rate in this report is in s, 1/s and Hz. */
    el_json_string(j, "time_unit", t->time_is_iso ? "s" : t->time_unit[0] ? t->time_unit : "s");
    el_json_string(j, "time_unit_source", t->time_unit_source[0] ? t->time_unit_source
                                                                 : "assumed");
    if (t->time_is_iso)
        el_json_bool(j, "time_zone_known", t->time_zone_known);
    if (t->date_order != 0)
        el_json_string(j, "date_order", t->date_order == EL_DATE_DMY ? "dmy" : "mdy");
    if (t->time_is_clock) {
        /* Times in seconds after the first row's midnight. */
        el_json_bool(j, "time_of_day", 1);
        el_json_int(j, "midnight_crossings", (long long)t->clock_midnights);
    }
    el_json_number(j, "dt", s->dt);
    el_json_int(j, "samples", (long long)s->n_samples);
    /* ISO logs: the window in Unix seconds, so machines get absolute time. */
    el_json_pair(j, "window", origin + s->t0, origin + t1);
    el_json_array_begin(j, "window_text");
    el_json_string(j, NULL, el_table_format_time(t, s->t0, a, sizeof a));
    el_json_string(j, NULL, el_table_format_time(t, t1, b, sizeof b));
    el_json_array_end(j);
    el_json_bool(j, "resampled", s->resampled);
    el_json_number(j, "step_jitter", s->jitter);
    el_json_number(j, "stamp_step", s->stamp_step > 0.0 ? s->stamp_step : NAN);
    el_json_int(j, "filled_cells", (long long)s->filled_cells);
    json_strings(j, "warnings", r->input_warnings.items, r->input_warnings.count);
    json_nonstationarity(j, r);
    el_json_object_end(j);
}

static void json_numbers(el_json *j, const char *key, const double *v, size_t n)
{
    el_json_array_begin(j, key);
    for (size_t i = 0; i < n; i++)
        el_json_number(j, NULL, v[i]);
    el_json_array_end(j);
}

/* model.subspace.max_order and poles_by_order (docs/json.md): every
 * order 1 .. max_order with its poles (an order whose shift equations
 * had no solution has none). */
static void json_poles_by_order(el_json *j, const el_model *m)
{
    el_json_int(j, "max_order", (long long)m->subspace_max_order);
    el_json_array_begin(j, "poles_by_order");
    size_t k = 0;
    for (size_t n = 1; n <= m->subspace_max_order; n++) {
        el_json_object_begin(j, NULL);
        el_json_int(j, "order", (long long)n);
        el_json_array_begin(j, "poles");
        for (; k < m->subspace_n_poles && m->subspace_poles[k].order == n; k++) {
            const el_model_pole *q = &m->subspace_poles[k];
            el_json_object_begin(j, NULL);
            el_json_number(j, "frequency_hz", q->frequency_hz);
            el_json_number(j, "natural_frequency_hz", q->natural_hz);
            el_json_number(j, "damping_ratio", q->damping_ratio);
            el_json_number(j, "contribution", q->contribution);
            el_json_bool(j, "matches_previous_order", q->stable);
            el_json_bool(j, "persistent", q->physical);
            el_json_bool(j, "in_model", q->in_model);
            el_json_object_end(j);
        }
        el_json_array_end(j);
        el_json_object_end(j);
    }
    el_json_array_end(j);
}

static void json_model(el_json *j, const el_assessment *r)
{
    const el_model *m = &r->model;
    el_json_object_begin(j, "model");
    el_json_string(j, "method", el_method_name(m->method));
    el_json_int(j, "lags", (long long)m->lags);
    el_json_int(j, "rank", (long long)m->rank);
    el_json_bool(j, "rank_auto", m->rank_was_auto);
    el_json_int(j, "state_dim", (long long)m->state_dim);
    el_json_int(j, "pairs", (long long)m->n_pairs);
    el_json_number(j, "fit_r2", m->fit_r2);
    json_numbers(j, "channel_r2", m->channel_r2, m->n_channels);
    json_numbers(j, "residual_rms", m->residual_rms, m->n_channels);
    json_numbers(j, "singular_values", m->singular_values, m->state_dim);
    el_json_number(j, "rcond_i_minus_a", m->rcond_i_minus_a);
    if (m->depth > 0)
        el_json_int(j, "depth", (long long)m->depth);
    else
        el_json_null(j, "depth");
    if (m->n_canonical > 0 && m->canonical_corr != NULL)
        json_numbers(j, "canonical_correlations", m->canonical_corr, m->n_canonical);
    else
        el_json_null(j, "canonical_correlations");
    if (m->method == EL_METHOD_HANKEL) {
        /* Only for hankel: the other methods' JSON stays as it was. */
        el_json_object_begin(j, "subspace");
        el_json_int(j, "order", (long long)m->subspace_order);
        el_json_int(j, "horizon_rows", (long long)m->subspace_rows);
        el_json_number(j, "horizon_time", m->subspace_horizon_time);
        el_json_int(j, "physical_modes", (long long)m->subspace_physical);
        json_poles_by_order(j, m);
        el_json_object_end(j);
    }
    el_json_array_begin(j, "inputs");
    for (size_t i = 0; i < m->n_inputs; i++) {
        el_json_object_begin(j, NULL);
        el_json_string(j, "name", r->inputs.names[i]);
        el_json_string(j, "unit", r->inputs.units[i]);
        el_json_number(j, "mean", m->input_mean[i]);
        json_numbers(j, "b", m->input_b + i * m->state_dim, m->n_channels);
        el_json_object_end(j);
    }
    el_json_array_end(j);
    el_json_object_begin(j, "method_choice");
    el_json_bool(j, "auto", r->method_was_auto);
    el_json_string(j, "regime", r->regime ? r->regime->regime_name : NULL);
    el_json_string(j, "reason", r->method_was_auto || r->method_stood_in ? r->method_reason
                                                                         : NULL);
    el_json_string(j, "requested", r->method_was_auto ? "auto"
                                   : el_method_name(r->method_stood_in ? r->method_refused
                                                                       : m->method));
    if (r->method_stood_in) {
        el_json_object_begin(j, "stand_in");
        el_json_string(j, "refused", el_method_name(r->method_refused));
        el_json_string(j, "fitted", el_method_name(m->method));
        el_json_string(j, "cause", "no_dynamics");
        el_json_string(j, "message", r->method_refusal);
        el_json_object_end(j);
    } else {
        el_json_null(j, "stand_in");
    }
    if (r->state_check.ran) {
        el_json_object_begin(j, "plain_state_check");
        el_json_string(j, "method", "iv");
        el_json_int(j, "lags", 0);
        el_json_int(j, "depth", EL_STATE_CHECK_DEPTH);
        el_json_int(j, "replicates", (long long)r->state_check.replicates);
        el_json_number(j, "p_stable", r->state_check.p_stable);
        el_json_object_begin(j, "least_damped");
        el_json_number(j, "re", r->state_check.re_max);
        el_json_number(j, "im", r->state_check.im_max);
        el_json_object_end(j);
        el_json_bool(j, "withdrew_unstable", r->state_check.withdraws);
        el_json_object_end(j);
    } else {
        el_json_null(j, "plain_state_check");
    }
    if (r->cross_ran) {
        el_json_object_begin(j, "cross_check");
        el_json_string(j, "method", el_method_name(r->cross_method));
        el_json_number(j, "p_stable", r->cross_p_stable);
        el_json_bool(j, "agrees", r->cross_agrees);
        if (r->cross_modes.n_modes > 0) {
            const el_mode *cm = &r->cross_modes.modes[0];
            el_json_object_begin(j, "least_damped");
            el_json_number(j, "re", cm->lambda_re);
            el_json_number(j, "im", cm->lambda_im);
            el_json_number(j, "frequency_hz", cm->at_nyquist ? NAN : cm->frequency_hz);
            el_json_number(j, "damping_ratio", cm->damping_ratio);
            el_json_object_end(j);
        } else {
            el_json_null(j, "least_damped");
        }
        el_json_object_end(j);
    } else {
        el_json_null(j, "cross_check");
    }
    el_json_object_end(j);
    if (r->lags_were_auto) {
        el_json_object_begin(j, "lags_auto");
        el_json_int(j, "lags", (long long)r->lags_choice.lags);
        el_json_int(j, "max_lags", (long long)r->lags_choice.max_lags);
        el_json_bool(j, "exact", r->lags_choice.exact);
        el_json_number(j, "bic", r->lags_choice.bic);
        el_json_string(j, "reason", r->lags_choice.reason);
        el_json_bool(j, "one_channel_default", r->lags_for_one_channel);
        el_json_object_end(j);
    } else {
        el_json_null(j, "lags_auto");
    }
    el_json_object_end(j);

    el_json_array_begin(j, "operating_point");
    for (size_t c = 0; c < m->n_channels; c++)
        el_json_number(j, NULL, r->operating_point_ok ? r->operating_point[c] : NAN);
    el_json_array_end(j);
}

static void json_mode_bounds(el_json *j, const el_assessment *r, size_t i)
{
    if (!boot_ran(r) || i >= r->boot.n_modes) {
        el_json_null(j, "bounds");
        return;
    }
    const el_mode_bounds *b = &r->boot.bounds[i];
    el_json_object_begin(j, "bounds");
    el_json_pair(j, "re", b->re.lo, b->re.hi);
    el_json_pair(j, "im", b->im.lo, b->im.hi);
    el_json_pair(j, "frequency_hz", b->frequency_hz.lo, b->frequency_hz.hi);
    el_json_pair(j, "damping_ratio", b->damping_ratio.lo, b->damping_ratio.hi);
    el_json_pair(j, "decay_rate", b->decay_rate.lo, b->decay_rate.hi);
    el_json_bool(j, "repeated_root", b->repeated_root);
    el_json_object_end(j);
}

static void json_modes(el_json *j, const el_assessment *r)
{
    el_json_array_begin(j, "modes");
    for (size_t i = 0; i < r->modes.n_modes; i++) {
        const el_mode *md = &r->modes.modes[i];
        el_json_object_begin(j, NULL);
        el_json_object_begin(j, "lambda");
        el_json_number(j, "re", md->lambda_re);
        el_json_number(j, "im", md->lambda_im);
        el_json_object_end(j);
        el_json_object_begin(j, "mu");
        el_json_number(j, "re", md->mu_re);
        el_json_number(j, "im", md->mu_im);
        el_json_object_end(j);
        el_json_bool(j, "pair", md->pair);
        el_json_bool(j, "at_nyquist", md->at_nyquist);
        el_json_number(j, "frequency_hz", md->at_nyquist ? NAN : md->frequency_hz);
        el_json_number(j, "damping_ratio", md->damping_ratio);
        el_json_number(j, "decay_rate", md->decay_rate);
        el_json_number(j, "time_constant_s", md->time_constant_s);
        el_json_string(j, "time_constant_kind",
                       !isfinite(md->time_constant_s) ? NULL
                       : md->decay_rate < 0 ? "doubling" : "decay");
        el_json_array_begin(j, "shape");
        for (size_t c = 0; c < r->modes.n_channels; c++) {
            el_json_object_begin(j, NULL);
            el_json_string(j, "channel", r->series.names[c]);
            el_json_number(j, "magnitude", md->shape_magnitude[c]);
            el_json_number(j, "phase_deg", md->shape_phase_deg[c]);
            el_json_object_end(j);
        }
        el_json_array_end(j);
        /* Added keys (docs/json.md): the shape in units of each channel's
         * standard deviation and the participation factors. */
        el_json_array_begin(j, "shape_scaled");
        for (size_t c = 0; c < r->modes.n_channels; c++) {
            el_json_object_begin(j, NULL);
            el_json_string(j, "channel", r->series.names[c]);
            el_json_number(j, "magnitude", md->shape_scaled_magnitude != NULL
                                               ? md->shape_scaled_magnitude[c] : NAN);
            el_json_number(j, "phase_deg", md->shape_scaled_phase_deg != NULL
                                               ? md->shape_scaled_phase_deg[c] : NAN);
            el_json_number(j, "participation",
                           md->participation != NULL ? md->participation[c] : NAN);
            el_json_object_end(j);
        }
        el_json_array_end(j);
        json_mode_bounds(j, r, i);
        el_json_object_end(j);
    }
    el_json_array_end(j);
}

static void json_plane(el_json *j, const el_assessment *r)
{
    const el_verdict *v = &r->verdict;
    if (!v->has_plane)
        return;
    el_json_object_begin(j, "plane");
    el_json_number(j, "trace", v->trace);
    el_json_number(j, "determinant", v->determinant);
    el_json_number(j, "discriminant", v->discriminant);
    if (boot_ran(r) && r->boot.has_plane) {
        el_json_object_begin(j, "bounds");
        el_json_pair(j, "trace", r->boot.trace.lo, r->boot.trace.hi);
        el_json_pair(j, "determinant", r->boot.determinant.lo, r->boot.determinant.hi);
        el_json_pair(j, "discriminant", r->boot.discriminant.lo, r->boot.discriminant.hi);
        el_json_object_end(j);
    } else {
        el_json_null(j, "bounds");
    }
    el_json_string(j, "region", v->region == EL_REGION_NONE ? NULL : el_region_name(v->region));
    if (boot_ran(r) && r->boot.has_plane) {
        el_json_object_begin(j, "region_probability");
        for (int k = 0; k < EL_REGION_COUNT; k++)
            el_json_number(j, el_region_name((el_region)k), r->boot.region_probability[k]);
        el_json_object_end(j);
    } else {
        el_json_null(j, "region_probability");
    }
    el_json_object_end(j);
}

static void json_verdict(el_json *j, const el_assessment *r, const el_assess_options *opt)
{
    const el_verdict *v = &r->verdict;
    el_json_object_begin(j, "verdict");
    el_json_string(j, "stability", v->stability_name);
    el_json_string(j, "type", v->type);
    el_json_number(j, "p_stable", v->p_stable);
    el_json_bool(j, "ambiguous", v->ambiguous);
    el_json_bool(j, "bounds_computed", boot_ran(r));
    el_json_object_begin(j, "margin");
    el_json_number(j, "decay_rate", v->margin_decay_rate);
    el_json_number(j, "damping_ratio", v->margin_damping_ratio);
    el_json_object_end(j);
    if (!boot_ran(r))
        el_json_number(j, "marginal_tolerance", v->marginal_tolerance);
    el_json_object_begin(j, "eigenvalue_counts");
    el_json_int(j, "stable_real", (long long)v->n_stable_real);
    el_json_int(j, "stable_oscillatory", (long long)v->n_stable_oscillatory);
    el_json_int(j, "unstable_real", (long long)v->n_unstable_real);
    el_json_int(j, "unstable_oscillatory", (long long)v->n_unstable_oscillatory);
    el_json_int(j, "marginal_real", (long long)v->n_marginal_real);
    el_json_int(j, "marginal_oscillatory", (long long)v->n_marginal_oscillatory);
    el_json_object_end(j);
    json_strings(j, "warnings", r->warnings.items, r->warnings.count);
    el_json_string(j, "caution", el_assess_caution());
    el_advice adv;
    el_advice_assess(r, opt != NULL ? opt->boot.level : NAN, &adv);
    el_json_string(j, "cause", el_verdict_cause_code(v->cause));
    el_json_number(j, "unit_root_t", v->unit_root_t);
    el_json_string(j, "reason", adv.reason);
    el_json_string(j, "next_step", adv.next_step);
    el_json_string(j, "support", adv.support);
    el_json_array_begin(j, "cautions");
    for (size_t i = 0; i < adv.n_cautions; i++)
        el_json_string(j, NULL, adv.cautions[i]);
    el_json_array_end(j);
    el_json_object_end(j);
}

static void json_prep(el_json *j, const el_assessment *r, const el_assess_options *opt)
{
    size_t n = r->series.n_channels;
    el_json_object_begin(j, "prep");
    el_json_string(j, "detrend", el_prep_detrend_name(opt->detrend));
    json_numbers(j, "level", r->detrend_level, n);
    json_numbers(j, "slope", r->detrend_slope, n);
    if (r->has_band) {
        el_json_pair(j, "band", r->band.lo_hz, r->band.hi_hz);
        el_json_number(j, "transition_hz", r->band.transition_hz);
        el_json_number(j, "settle", r->band.settle);
    } else {
        el_json_null(j, "band");
    }
    el_json_object_end(j);
}

static void json_regime(el_json *j, const el_assessment *r)
{
    const el_regime *g = r->regime;
    if (g == NULL) {
        el_json_null(j, "regime");
        return;
    }
    size_t n = g->n_channels;
    el_json_object_begin(j, "regime");
    el_json_string(j, "class", g->regime_name);
    el_json_int(j, "direction", g->direction);
    el_json_number(j, "trend_p", g->trend_p);
    el_json_bool(j, "growth", g->growth);
    el_json_number(j, "growth_factor", g->growth ? g->growth_factor : NAN);
    el_json_number(j, "growth_p", g->growth_p);
    if (g->growth)
        el_json_string(j, "growth_channel", r->series.names[g->growth_channel]);
    else
        el_json_null(j, "growth_channel");
    el_json_string(j, "growth_test", !g->growth ? NULL
                                     : g->growth_test == EL_REGIME_GROWTH_DRIFT ? "drift"
                                                                              : "envelope");
    el_json_bool(j, "vetoed_stable", r->growth_veto);
    el_json_int(j, "segments", (long long)g->segments);
    json_numbers(j, "envelope_rate", g->envelope_rate, n);
    json_numbers(j, "envelope_factor", g->envelope_factor, n);
    json_numbers(j, "envelope_z", g->envelope_z, n);
    json_numbers(j, "level_rate", g->level_rate, n);
    json_numbers(j, "change_p", g->change_p, n);
    json_numbers(j, "drift_rate", g->drift_rate, n);
    json_numbers(j, "drift_factor", g->drift_factor, n);
    json_numbers(j, "drift_z", g->drift_z, n);
    json_numbers(j, "drift_p_growth", g->drift_p_growth, n);
    el_json_object_end(j);
}

static void json_validation(el_json *j, const el_assessment *r)
{
    const el_validation *v = r->validation;
    if (v == NULL) {
        el_json_null(j, "validation");
        return;
    }
    size_t n = v->n_channels;
    el_json_object_begin(j, "validation");
    json_numbers(j, "r2_one_step", v->r2_one_step, n);
    json_numbers(j, "free_nrmse", v->free_nrmse, n);
    el_json_bool(j, "free_diverges", v->free_diverges);
    json_numbers(j, "residual_ratio", v->residual_ratio, n);
    if (v->lb_tested) {
        el_json_object_begin(j, "ljung_box");
        el_json_int(j, "lags", (long long)v->lb_lags);
        el_json_int(j, "params", (long long)v->lb_params);
        el_json_int(j, "dof", (long long)v->lb_dof);
        json_numbers(j, "q", v->ljung_box_q, n);
        json_numbers(j, "p", v->ljung_box_p, n);
        el_json_object_end(j);
    } else {
        el_json_null(j, "ljung_box");
    }
    el_json_bool(j, "residuals_white", v->residuals_white);
    el_json_bool(j, "explains_little", v->explains_little);
    el_json_object_end(j);
}

static void json_resampling(el_json *j, const el_assessment *r,
                            const el_assess_options *opt)
{
    el_json_object_begin(j, "resampling");
    el_json_int(j, "replicates", (long long)(boot_ran(r) ? r->boot.replicates : 0));
    if (boot_ran(r)) {
        el_json_int(j, "block_length", (long long)r->boot.block_length);
        el_json_bool(j, "block_auto", r->boot.block_was_auto);
        if (r->boot.block_was_auto)
            el_json_int(j, "block_length_politis_white", (long long)r->boot.block_length_pw);
        else
            el_json_null(j, "block_length_politis_white");
        el_json_bool(j, "bias_corrected", r->boot.bias_corrected);
        el_json_string(j, "kind", resample_name(r->boot.kind));
        el_json_int(j, "failed_replicates", (long long)r->boot.failed_replicates);
        el_json_int(j, "ambiguous_matches", (long long)r->boot.ambiguous_matches);
        el_json_int(j, "threads", (long long)r->boot.threads_used);
    } else {
        el_json_null(j, "block_length");
    }
    el_json_number(j, "level", opt->boot.level);
    el_json_int(j, "seed", (long long)opt->boot.seed);
    el_json_object_end(j);
}

/* whiteness (docs/json.md): the no-dynamics test's figures, per channel
 * and for the family, and the rule's decision. */
static void json_whiteness(el_json *j, const el_assessment *r)
{
    const el_dynamics_test *t = &r->dynamics;
    const el_series *s = &r->series;
    double threshold = whiteness_threshold(t);
    int none = el_dynamics_none(t, r->model.fit_r2);
    el_json_object_begin(j, "whiteness");
    el_json_string(j, "test", "ljung_box");
    el_json_bool(j, "tested", t->tested);
    el_json_int(j, "samples", (long long)t->n_samples);
    el_json_int(j, "lags", (long long)t->lags);
    el_json_int(j, "dof", (long long)t->lags);
    el_json_int(j, "channels_tested", (long long)t->n_tested);
    el_json_number(j, "family_level", EL_DYNAMICS_ALPHA);
    el_json_number(j, "threshold", threshold);
    el_json_number(j, "p_min", t->tested ? t->p_min : NAN);
    el_json_string(j, "p_min_channel", t->tested ? s->names[t->channel] : NULL);
    el_json_number(j, "p_family", t->tested ? t->p_family : NAN);
    el_json_bool(j, "white", t->tested && t->white);
    el_json_number(j, "fit_r2", r->model.fit_r2);
    el_json_number(j, "r2_max", EL_DYNAMICS_R2_MAX);
    el_json_bool(j, "no_dynamics", none);
    el_json_string(j, "decision", !t->tested ? "not_tested" : none ? "no_dynamics"
                                                                  : "dynamics");
    el_json_array_begin(j, "channels");
    for (size_t c = 0; c < s->n_channels; c++) {
        double q = r->dynamics_q != NULL ? r->dynamics_q[c] : NAN;
        double p = r->dynamics_p != NULL ? r->dynamics_p[c] : NAN;
        int tested = isfinite(q) && isfinite(p);
        el_json_object_begin(j, NULL);
        el_json_string(j, "channel", s->names[c]);
        el_json_bool(j, "tested", tested);
        el_json_number(j, "q", q);
        el_json_int(j, "lags", (long long)t->lags);
        el_json_number(j, "p", p);
        el_json_number(j, "threshold", threshold);
        if (tested)
            el_json_bool(j, "white", p >= threshold);
        else
            el_json_null(j, "white");
        el_json_number(j, "one_step_r2",
                       r->model.channel_r2 != NULL && c < r->model.n_channels
                           ? r->model.channel_r2[c] : NAN);
        el_json_object_end(j);
    }
    el_json_array_end(j);
    el_json_object_end(j);
}

el_status el_report_json(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out)
{
    el_json j;
    el_json_init(&j, out);
    el_json_object_begin(&j, NULL);
    el_json_string(&j, "eigenlog", EL_VERSION);
    el_envelope_head(&j, "assess");
    json_input(&j, r, opt);
    const el_warnings *lists[2] = {&r->input_warnings, &r->warnings};
    el_envelope_warnings(&j, "warnings", lists, 2);
    el_envelope_warnings(&j, "warning_details", lists, 2);
    json_model(&j, r);
    json_modes(&j, r);
    json_plane(&j, r);
    json_verdict(&j, r, opt);
    json_resampling(&j, r, opt);
    json_prep(&j, r, opt);
    json_regime(&j, r);
    json_validation(&j, r);
    json_whiteness(&j, r);
    el_json_object_end(&j);
    return el_json_finish(&j);
}

el_status el_report_replicates_csv(const el_assessment *r, el_buf *out,
                                   el_error *err)
{
    if (!boot_ran(r))
        return el_error_set(err, EL_ERR_USAGE,
                            "no bootstrap replicates to write (--boot is 0)");
    const el_boot_result *b = &r->boot;
    el_buf_printf(out, "replicate,mode,lambda_re,lambda_im,frequency_hz,damping_ratio\n");
    for (size_t k = 0; k < b->replicates; k++) {
        for (size_t m = 0; m < b->n_modes; m++) {
            double re = b->lambda_re[k * b->n_modes + m];
            double im = b->lambda_im[k * b->n_modes + m];
            double mag = hypot(re, im);
            el_buf_printf(out, "%zu,%zu,%.10g,%.10g,%.10g,", k + 1, m + 1, re, im,
                          fabs(im) / (2.0 * M_PI));
            if (mag > 0)
                el_buf_printf(out, "%.10g\n", -re / mag);
            else
                el_buf_printf(out, "\n");
        }
    }
    if (out->failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    return EL_OK;
}

/* ------------------------------------------------------------ modes CSV */

/* ",%.10g", or "," alone for a value that does not exist. */
static void csv_number(el_buf *out, double v)
{
    if (isfinite(v))
        el_buf_printf(out, ",%.10g", v);
    else
        el_buf_printf(out, ",");
}

/* ",PREFIX<name>" as one CSV field, quoted (RFC 4180: doubled quotes)
 * when the channel name holds a comma, quote or line break. */
static void csv_channel_header(el_buf *out, const char *prefix, const char *name)
{
    int quote = strpbrk(name, ",\"\r\n") != NULL;
    el_buf_printf(out, ",%s%s", quote ? "\"" : "", prefix);
    for (const char *p = name; *p != '\0'; p++)
        el_buf_printf(out, *p == '"' ? "\"\"" : "%c", *p);
    if (quote)
        el_buf_printf(out, "\"");
}

/* The columns appended per channel (docs/cli.md): scaled shape and
 * participation. */
static void csv_shape_columns(const el_mode *md, size_t nc, el_buf *out)
{
    for (size_t c = 0; c < nc; c++)
        csv_number(out, md->shape_scaled_magnitude ? md->shape_scaled_magnitude[c] : NAN);
    for (size_t c = 0; c < nc; c++)
        csv_number(out, md->shape_scaled_phase_deg ? md->shape_scaled_phase_deg[c] : NAN);
    for (size_t c = 0; c < nc; c++)
        csv_number(out, md->participation ? md->participation[c] : NAN);
}

el_status el_report_modes_csv(const el_assessment *r, el_buf *out)
{
    el_buf_printf(out, "mode,lambda_re,lambda_im,frequency_hz,damping_ratio,decay_rate,"
                       "time_constant_s,time_constant_kind,level,re_lo,re_hi,"
                       "frequency_hz_lo,frequency_hz_hi,damping_ratio_lo,damping_ratio_hi,"
                       "decay_rate_lo,decay_rate_hi");
    /* New columns only at the end: readers of the first 17 keep working. */
    size_t nc = r->modes.n_channels;
    for (size_t c = 0; c < nc; c++)
        csv_channel_header(out, "shape_scaled_magnitude_", r->series.names[c]);
    for (size_t c = 0; c < nc; c++)
        csv_channel_header(out, "shape_scaled_phase_deg_", r->series.names[c]);
    for (size_t c = 0; c < nc; c++)
        csv_channel_header(out, "participation_", r->series.names[c]);
    el_buf_printf(out, "\n");
    for (size_t i = 0; i < r->modes.n_modes; i++) {
        const el_mode *md = &r->modes.modes[i];
        el_buf_printf(out, "%zu", i + 1);
        csv_number(out, md->instantaneous ? -INFINITY : md->lambda_re);
        csv_number(out, md->lambda_im);
        csv_number(out, md->at_nyquist ? NAN : md->frequency_hz);
        csv_number(out, md->damping_ratio);
        csv_number(out, md->decay_rate);
        csv_number(out, md->time_constant_s);
        el_buf_printf(out, ",%s", !isfinite(md->time_constant_s) ? ""
                                  : md->decay_rate < 0 ? "doubling" : "decay");
        int has = boot_ran(r) && i < r->boot.n_modes;
        const el_mode_bounds *b = has ? &r->boot.bounds[i] : NULL;
        csv_number(out, has ? r->boot.level : NAN);
        csv_number(out, has ? b->re.lo : NAN);
        csv_number(out, has ? b->re.hi : NAN);
        csv_number(out, has ? b->frequency_hz.lo : NAN);
        csv_number(out, has ? b->frequency_hz.hi : NAN);
        csv_number(out, has ? b->damping_ratio.lo : NAN);
        csv_number(out, has ? b->damping_ratio.hi : NAN);
        csv_number(out, has ? b->decay_rate.lo : NAN);
        csv_number(out, has ? b->decay_rate.hi : NAN);
        csv_shape_columns(md, nc, out);
        el_buf_printf(out, "\n");
    }
    return out->failed ? EL_ERR_NOMEM : EL_OK;
}

/* ------------------------------------------------------------ envelope */

/* Warning codes: the first row whose phrase the message contains. The
 * phrases are fragments of the messages written by the stages (el_ingest,
 * el_timebase, el_regime, el_fit, el_verdict, ...); a new warning gets a
 * row here and a line in docs/json.md, and tests/e2e_schema.sh fails when a
 * demo log's warning falls through to "other". More specific rows first. */
static const struct {
    const char *code;
    const char *phrase;
} WARNING_CODES[] = {
    {"method_inconsistent", "withheld for this method"},
    {"near_unit_root", "cannot tell it from a random walk"},
    {"rank_forced", "more states than the rank test supports"},
    {"no_dynamics", "cannot be told from white noise"},
    {"no_dynamics", "the data shows no dynamics"},
    {"sustained_oscillation", "possible sustained nonlinear oscillation"},
    {"forced_oscillation", "forced oscillation"},
    {"drift", "the dynamics drift inside the window"},
    {"level_shift", "steps by"},
    {"level_trend", "trends by"},
    {"time_unit_assumed", "names no unit"},
    {"time_zone_unknown", "carry no zone"},
    {"time_unit_not_seconds", "the log's time is in"},
    {"text_columns_skipped", "holding text that no option asked"},
    {"resampled", "resampled onto a uniform grid"},
    {"gaps_filled", "missing sample"},
    {"repeated_rows_dropped", "the row before exactly"},
    {"constant_channel_dropped", "was left out: a stuck"},
    {"constant_channel_windows", "was constant in"},
    {"spikes", "isolated one-sample spike"},
    {"few_samples", "too few to tell a"},
    {"no_variation", "no channel varies"},
    {"growth", "grows by a factor"},
    {"few_segments", "spectrum: only"},
    {"spectral_check_skipped", "spectral cross-check skipped"},
    {"estimators_disagree", "the estimators disagree"},
    {"cross_check_failed", "could not be run"},
    {"no_bounds", "no bounds could be computed"},
    {"no_bounds", "bootstrap replicates cannot support"},
    {"no_bounds", "bounds not yet computed"},
    {"no_bounds", "bounds are off"},
    {"bootstrap_basis_fixed", "keep the rank-"},
    {"bootstrap_failed_replicates", "singular refit"},
    {"mode_swap", "modes could swap"},
    {"repeated_root", "may be one repeated real root"},
    {"bootstrap_not_bias_corrected", "not bias-corrected"},
    {"bootstrap_reduced", "does not reproduce the point estimate"},
    {"band_edge", "--band"},
    {"nyquist", "Nyquist"},
    {"near_integrator", "nearly singular"},
    {"few_pairs", "snapshot pairs for"},
    {"fb_branch", "square-root branch"},
    /* Before "rank": its remedy suggests a lower rank. */
    {"ambiguous", "not determined by the data"},
    /* Before "rank": its cause may be the lowered rank. */
    {"residuals_correlated", "residuals strongly correlated"},
    {"estimator_fallback", "gave no model ("},
    {"rank_limited", "rank"},
    {"free_run_diverges", "free run diverges"},
    {"explains_little", "explains little"},
    {"ambiguous", "ambiguous"},
    {"mixed_estimators", "not all fitted by the same estimator"},
    {"trend_widened", "widened"},
    {"trend_not_linear", "does not follow a straight line"},
    {"extrapolation", "straight-line extrapolation"},
};

const char *el_warning_code(const char *message)
{
    if (message == NULL)
        return "other";
    for (size_t i = 0; i < sizeof WARNING_CODES / sizeof WARNING_CODES[0]; i++)
        if (strstr(message, WARNING_CODES[i].phrase) != NULL)
            return WARNING_CODES[i].code;
    return "other";
}

void el_envelope_head(el_json *j, const char *command)
{
    el_json_string(j, "tool", "eigenlog");
    el_json_string(j, "version", EL_VERSION);
    el_json_string(j, "command", command);
}

void el_envelope_input(el_json *j, const char *first, const char *const *paths, size_t n,
                       char *const *names, size_t n_names)
{
    el_json_array_begin(j, "files");
    if (n == 0)
        el_json_string(j, NULL, first ? first : "");
    for (size_t i = 0; i < n; i++)
        el_json_string(j, NULL, paths[i]);
    el_json_array_end(j);
    json_strings(j, "channel_names", names, n_names);
}

void el_envelope_warnings(el_json *j, const char *key, const el_warnings *const *lists,
                          size_t n)
{
    el_json_array_begin(j, key);
    for (size_t l = 0; l < n; l++) {
        if (lists[l] == NULL)
            continue;
        for (size_t i = 0; i < lists[l]->count; i++) {
            el_json_object_begin(j, NULL);
            el_json_string(j, "code", el_warning_code(lists[l]->items[i]));
            el_json_string(j, "message", lists[l]->items[i]);
            el_json_object_end(j);
        }
    }
    el_json_array_end(j);
}
