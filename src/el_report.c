/* el_report: text and JSON reports of an assessment. */
#include "el_report.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "el_json.h"

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
    el_buf_printf(out, "  window       %s .. %s%s%s\n", a, b, t->time_is_iso ? "" : " ",
                  t->time_is_iso ? "" : t->time_unit[0] ? t->time_unit : "s");
    el_buf_printf(out, "  samples      %zu at dt = %.6g s (%zu rows of %zu used)%s\n",
                  s->n_samples, s->dt, s->rows_used, t->n_rows,
                  s->resampled ? ", resampled" : "");
    if (t->time_is_iso)
        el_buf_printf(out, "  time         ISO 8601 date-times, %s\n",
                      t->time_zone_known ? "with zone" : "local time of an unknown zone");
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
            char p[48] = "";
            if (isfinite(r->cross_p_stable))
                snprintf(p, sizeof p, ", P(stable) %.3f", r->cross_p_stable);
            el_buf_printf(out, "  cross-check  %s %s%s\n", el_method_name(r->cross_method),
                          r->cross_agrees ? "agrees" : "DISAGREES", p);
        }
    }
    if (r->lags_were_auto)
        el_buf_printf(out, "  lags         %zu chosen automatically: %s\n", m->lags,
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
    el_buf_printf(out, "  %-2zu %-26s %9s %9s %10s %9s %-8s\n", i + 1, lam,
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
    el_buf_printf(out, "     shape:");
    for (size_t c = 0; c < r->modes.n_channels; c++)
        el_buf_printf(out, " %s %.2f@%.0fdeg%s", r->series.names[c], md->shape_magnitude[c],
                      md->shape_phase_deg[c], c + 1 < r->modes.n_channels ? "," : "");
    el_buf_printf(out, "\n");
}

static void text_modes(const el_assessment *r, el_buf *out)
{
    el_buf_printf(out, "Modes, least damped first (lambda in 1/s, time constant in s)\n");
    el_buf_printf(out, "  %-2s %-26s %9s %9s %10s %9s\n", "#", "lambda", "freq Hz",
                  "damping", "decay 1/s", "time");
    for (size_t i = 0; i < r->modes.n_modes; i++)
        text_mode(r, i, out);
    el_buf_printf(out, "\n");
}

static void text_verdict(const el_assessment *r, el_buf *out)
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
    char verdict_word[32];
    snprintf(verdict_word, sizeof verdict_word, "%s", v->stability_name);
    for (char *p = verdict_word; *p; p++)
        *p = (char)(*p >= 'a' && *p <= 'z' ? *p - 32 : *p);
    el_buf_printf(out, "Verdict       %s%s", verdict_word, v->ambiguous ? " (AMBIGUOUS)" : "");
    if (isfinite(v->p_stable))
        el_buf_printf(out, "   P(stable) = %.3f from %zu replicates", v->p_stable,
                      r->boot.replicates);
    else
        el_buf_printf(out, "   P(stable) n/a (no bootstrap ran)");
    el_buf_printf(out, "\nMargin        decay rate %s 1/s, damping ratio %s (least damped mode)\n\n",
                  num(a, 32, v->margin_decay_rate), num(b, 32, v->margin_damping_ratio));
}

static void text_warnings(const el_assessment *r, el_buf *out)
{
    size_t n = r->input_warnings.count + r->warnings.count;
    if (n == 0)
        return;
    el_buf_printf(out, "Warnings (%zu)\n", n);
    for (size_t i = 0; i < r->input_warnings.count; i++)
        el_buf_printf(out, "  ! %s\n", r->input_warnings.items[i]);
    for (size_t i = 0; i < r->warnings.count; i++)
        el_buf_printf(out, "  ! %s\n", r->warnings.items[i]);
    el_buf_printf(out, "\n");
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
        else if (isfinite(g->trend_p))
            el_buf_printf(out, "; p of no amplitude change %s", num(a, 32, g->trend_p));
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
    (void)opt;
    text_header(r, out);
    text_model(r, out);
    text_modes(r, out);
    text_verdict(r, out);
    text_checks(r, out);
    text_warnings(r, out);
    text_wrapped(out, "Caution: ", el_assess_caution());
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

static void json_input(el_json *j, const el_assessment *r)
{
    const el_table *t = &r->table;
    const el_series *s = &r->series;
    double origin = t->time_is_iso ? (double)t->time_origin_unix_s : 0.0;
    double t1 = s->t0 + (double)(s->n_samples - 1) * s->dt;
    char a[64], b[64];
    el_json_object_begin(j, "input");
    el_json_string(j, "file", t->source);
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
    el_json_int(j, "filled_cells", (long long)s->filled_cells);
    json_strings(j, "warnings", r->input_warnings.items, r->input_warnings.count);
    el_json_object_end(j);
}

static void json_numbers(el_json *j, const char *key, const double *v, size_t n)
{
    el_json_array_begin(j, key);
    for (size_t i = 0; i < n; i++)
        el_json_number(j, NULL, v[i]);
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
    el_json_string(j, "reason", r->method_was_auto ? r->method_reason : NULL);
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

static void json_verdict(el_json *j, const el_assessment *r)
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

el_status el_report_json(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out)
{
    el_json j;
    el_json_init(&j, out);
    el_json_object_begin(&j, NULL);
    el_json_string(&j, "eigenlog", EL_VERSION);
    json_input(&j, r);
    json_model(&j, r);
    json_modes(&j, r);
    json_plane(&j, r);
    json_verdict(&j, r);
    json_resampling(&j, r, opt);
    json_prep(&j, r, opt);
    json_regime(&j, r);
    json_validation(&j, r);
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
