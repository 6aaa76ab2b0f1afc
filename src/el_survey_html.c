/* el_survey_html: the survey's overview page (inline SVG, no script). */
#include "el_survey_html.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_assess.h"

#define FIG_W 240.0     /* figure width in CSS pixels */
#define FIG_H 22.0
#define FIG_PAD 8.0     /* room at both ends for the marker */

static void put(el_buf *out, const char *text)
{
    el_buf_append(out, text, strlen(text));
}

/* Escapes text for HTML element content and attribute values. */
static void esc(el_buf *out, const char *s)
{
    for (; *s != '\0'; s++) {
        switch (*s) {
        case '&': put(out, "&amp;"); break;
        case '<': put(out, "&lt;"); break;
        case '>': put(out, "&gt;"); break;
        case '"': put(out, "&quot;"); break;
        case '\'': put(out, "&#39;"); break;
        default: el_buf_append(out, s, 1);
        }
    }
}

static int is_ok(const el_survey_row *r)
{
    return strcmp(r->field[EL_SC_STATUS], "ok") == 0;
}

/* Undecided: the bootstrap cannot tell, or the verdict is marginal. */
static int is_undecided(const el_survey_row *r)
{
    return strcmp(r->field[EL_SC_AMBIGUOUS], "true") == 0 ||
           (strcmp(r->field[EL_SC_VERDICT], "stable") != 0 &&
            strcmp(r->field[EL_SC_VERDICT], "unstable") != 0);
}

/* The shared axis of the figures: [lo, hi] holding zero and every finite
 * margin and bound. */
typedef struct {
    double lo, hi;
} axis;

static void widen(axis *a, double v)
{
    if (isfinite(v)) {
        a->lo = fmin(a->lo, v);
        a->hi = fmax(a->hi, v);
    }
}

static axis make_axis(const el_survey_table *t)
{
    axis a = {0.0, 0.0};
    for (size_t i = 0; i < t->count; i++) {
        if (!is_ok(&t->rows[i]))
            continue;
        widen(&a, el_survey_row_number(&t->rows[i], EL_SC_DECAY));
        widen(&a, el_survey_row_number(&t->rows[i], EL_SC_DECAY_LO));
        widen(&a, el_survey_row_number(&t->rows[i], EL_SC_DECAY_HI));
    }
    if (a.hi - a.lo <= 0.0) {
        a.lo = -1.0;
        a.hi = 1.0;
    }
    double pad = 0.05 * (a.hi - a.lo);
    a.lo -= pad;
    a.hi += pad;
    return a;
}

static double px(const axis *a, double v)
{
    return FIG_PAD + (v - a->lo) / (a->hi - a->lo) * (FIG_W - 2.0 * FIG_PAD);
}

/* Ranking: least margin first; logs without a margin after; then by name. */
static int rank_order(const void *pa, const void *pb)
{
    const el_survey_row *a = *(const el_survey_row *const *)pa;
    const el_survey_row *b = *(const el_survey_row *const *)pb;
    double x = el_survey_row_number(a, EL_SC_DECAY), y = el_survey_row_number(b, EL_SC_DECAY);
    if (isfinite(x) != isfinite(y))
        return isfinite(x) ? -1 : 1;
    if (isfinite(x) && x != y)
        return x < y ? -1 : 1;
    return strcmp(a->field[EL_SC_FILE], b->field[EL_SC_FILE]);
}

static const char *verdict_colour(const el_survey_row *r)
{
    if (is_undecided(r))
        return "#b7791f";
    return strcmp(r->field[EL_SC_VERDICT], "stable") == 0 ? "#2f855a" : "#c53030";
}

static void figure(el_buf *out, const axis *a, const el_survey_row *r)
{
    double v = el_survey_row_number(r, EL_SC_DECAY);
    double lo = el_survey_row_number(r, EL_SC_DECAY_LO);
    double hi = el_survey_row_number(r, EL_SC_DECAY_HI);
    el_buf_printf(out, "<svg class=\"fig\" width=\"%.0f\" height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" "
                       "role=\"img\" aria-label=\"margin %s, bounds %s to %s\">",
                  FIG_W, FIG_H, FIG_W, FIG_H, r->field[EL_SC_DECAY],
                  lo == lo ? r->field[EL_SC_DECAY_LO] : "n/a",
                  hi == hi ? r->field[EL_SC_DECAY_HI] : "n/a");
    el_buf_printf(out, "<rect x=\"%.1f\" y=\"2\" width=\"%.1f\" height=\"%.0f\" fill=\"#fdecec\"/>",
                  FIG_PAD / 2, px(a, 0.0) - FIG_PAD / 2, FIG_H - 4);
    el_buf_printf(out, "<line x1=\"%.1f\" y1=\"1\" x2=\"%.1f\" y2=\"%.0f\" stroke=\"#555\" "
                       "stroke-dasharray=\"3 2\"/>",
                  px(a, 0.0), px(a, 0.0), FIG_H - 1);
    const char *colour = verdict_colour(r);
    if (isfinite(lo) && isfinite(hi))
        el_buf_printf(out, "<line class=\"bounds\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                           "stroke=\"%s\" stroke-width=\"4\" stroke-opacity=\"0.45\"/>",
                      px(a, lo), FIG_H / 2, px(a, hi), FIG_H / 2, colour);
    if (isfinite(v))
        el_buf_printf(out, "<circle class=\"margin\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\" fill=\"%s\"/>",
                      px(a, v), FIG_H / 2, colour);
    put(out, "</svg>");
}

/* The shared axis above the figures: its ends and zero, each labelled
 * unless it would overlap another label. */
static void axis_figure(el_buf *out, const axis *a)
{
    el_buf_printf(out, "<svg class=\"fig\" width=\"%.0f\" height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\">",
                  FIG_W, FIG_H, FIG_W, FIG_H);
    double ticks[3] = {a->lo, a->hi, 0.0};
    const char *anchor[3] = {"start", "end", "middle"};
    double x_zero = px(a, 0.0);
    int zero_fits = x_zero - px(a, a->lo) > 50.0 && px(a, a->hi) - x_zero > 50.0;
    for (int i = 0; i < (zero_fits ? 3 : 2); i++)
        el_buf_printf(out, "<text x=\"%.1f\" y=\"15\" font-size=\"11\" text-anchor=\"%s\">%.3g</text>",
                      i == 2 ? x_zero : i == 0 ? 0.0 : FIG_W, anchor[i], ticks[i]);
    el_buf_printf(out, "<line x1=\"%.1f\" y1=\"17\" x2=\"%.1f\" y2=\"%.0f\" stroke=\"#555\"/>",
                  x_zero, x_zero, FIG_H);
    put(out, "</svg>");
}

static void style(el_buf *out)
{
    el_buf_printf(out, "<style>\n"
        "body{font-family:'DejaVu Sans',sans-serif;margin:1.5em;color:#222;max-width:80em}\n"
        "table{border-collapse:collapse;font-size:0.9em}\n"
        "th,td{padding:2px 8px;border-bottom:1px solid #ddd;text-align:left;vertical-align:middle}\n"
        "td.n{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}\n"
        ".flag{font-weight:bold;color:#8a5a00;background:#fff3d6;padding:0 4px;border-radius:3px}\n"
        ".failed{font-weight:bold;color:#fff;background:#c53030;padding:0 4px;border-radius:3px}\n"
        ".caution{border-left:4px solid #b7791f;padding:4px 10px;background:#fffaf0}\n"
        "@media print{body{margin:0}}\n"
        "</style>\n");
}

static void cell(el_buf *out, const char *cls, const char *text)
{
    el_buf_printf(out, "<td%s%s%s>", cls ? " class=\"" : "", cls ? cls : "", cls ? "\"" : "");
    esc(out, text[0] ? text : "n/a");
    put(out, "</td>");
}

static void file_cell(el_buf *out, const el_survey_row *r, const char *reports_prefix)
{
    put(out, "<td>");
    if (reports_prefix != NULL && is_ok(r)) {
        char name[128];
        el_survey_report_name(r->field[EL_SC_FILE], name, sizeof name);
        put(out, "<a href=\"");
        esc(out, reports_prefix);
        esc(out, name);
        put(out, ".html\">");
        esc(out, r->field[EL_SC_FILE]);
        put(out, "</a>");
    } else {
        esc(out, r->field[EL_SC_FILE]);
    }
    put(out, "</td>");
}

/* A value with its bounds, to 4 significant digits (the CSV keeps all). */
static void bounds_cell(el_buf *out, const el_survey_row *r, int c)
{
    double v = el_survey_row_number(r, (el_survey_column)c);
    double lo = el_survey_row_number(r, (el_survey_column)(c + 1));
    double hi = el_survey_row_number(r, (el_survey_column)(c + 2));
    put(out, "<td class=\"n\">");
    if (isfinite(v))
        el_buf_printf(out, "%.4g", v);
    else
        put(out, "n/a");
    if (isfinite(lo) && isfinite(hi))
        el_buf_printf(out, " [%.4g, %.4g]", lo, hi);
    put(out, "</td>");
}

static void failed_table(el_buf *out, const el_survey_table *t, size_t n_failed)
{
    if (n_failed == 0)
        return;
    el_buf_printf(out, "<h2 id=\"failed\">Logs that could not be assessed (%zu)</h2>\n"
                       "<table><tr><th>file</th><th>exit status</th><th>error</th></tr>\n",
                  n_failed);
    for (size_t i = 0; i < t->count; i++) {
        const el_survey_row *r = &t->rows[i];
        if (is_ok(r))
            continue;
        put(out, "<tr class=\"failed-row\">");
        cell(out, NULL, r->field[EL_SC_FILE]);
        put(out, "<td class=\"n\"><span class=\"failed\">");
        esc(out, r->field[EL_SC_EXIT_CODE]);
        put(out, "</span></td>");
        cell(out, NULL, r->field[EL_SC_ERROR]);
        put(out, "</tr>\n");
    }
    put(out, "</table>\n");
}

static void ranked_row(el_buf *out, const el_survey_row *r, size_t rank, const axis *a,
                       const char *reports_prefix)
{
    el_buf_printf(out, "<tr class=\"log\"><td class=\"n\">%zu</td>", rank);
    file_cell(out, r, reports_prefix);
    put(out, "<td>");
    esc(out, r->field[EL_SC_VERDICT]);
    if (is_undecided(r))
        put(out, " <span class=\"flag\">undecided</span>");
    put(out, "</td>");
    cell(out, NULL, r->field[EL_SC_TYPE]);
    cell(out, "n", r->field[EL_SC_P_STABLE]);
    bounds_cell(out, r, EL_SC_DECAY);
    put(out, "<td>");
    figure(out, a, r);
    put(out, "</td>");
    bounds_cell(out, r, EL_SC_DAMPING);
    bounds_cell(out, r, EL_SC_FREQUENCY);
    cell(out, "n", r->field[EL_SC_WARNINGS]);
    cell(out, NULL, r->field[EL_SC_ESTIMATOR]);
    put(out, "</tr>\n");
}

static void summary(el_buf *out, const el_survey_table *t, size_t n_failed)
{
    size_t stable = 0, unstable = 0, undecided = 0;
    for (size_t i = 0; i < t->count; i++) {
        const el_survey_row *r = &t->rows[i];
        if (!is_ok(r))
            continue;
        if (is_undecided(r))
            undecided++;
        else if (strcmp(r->field[EL_SC_VERDICT], "stable") == 0)
            stable++;
        else
            unstable++;
    }
    el_buf_printf(out, "<p class=\"summary\">%zu logs: %zu stable, %zu unstable, "
                       "%zu undecided, %zu could not be assessed.</p>\n",
                  t->count, stable, unstable, undecided, n_failed);
}

el_status el_survey_html(const el_survey_table *t, const char *reports_prefix,
                         el_buf *out, el_error *err)
{
    size_t n_failed = 0;
    const el_survey_row **ranked = malloc((t->count + 1) * sizeof *ranked);
    if (ranked == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    size_t n_ranked = 0;
    for (size_t i = 0; i < t->count; i++) {
        if (is_ok(&t->rows[i]))
            ranked[n_ranked++] = &t->rows[i];
        else
            n_failed++;
    }
    qsort(ranked, n_ranked, sizeof *ranked, rank_order);
    axis a = make_axis(t);
    el_buf_printf(out, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
                       "<title>eigenlog survey: %zu logs</title>\n", t->count);
    style(out);
    el_buf_printf(out, "</head>\n<body>\n<h1>Survey of %zu logs</h1>\n", t->count);
    summary(out, t, n_failed);
    put(out, "<p class=\"caution\">");
    esc(out, el_assess_caution());
    put(out, "</p>\n");
    failed_table(out, t, n_failed);
    el_buf_printf(out, "<h2 id=\"ranked\">Logs ranked by margin, least first (%zu)</h2>\n"
                       "<p>Margin: decay rate of the least damped mode (1/time unit; below 0 "
                       "the mode grows), with its bootstrap bounds. The figures share one axis; "
                       "the shaded part is unstable. <span class=\"flag\">undecided</span>: "
                       "the data cannot tell, or the verdict is marginal.</p>\n",
                  n_ranked);
    put(out, "<table>\n<tr><th>#</th><th>file</th><th>verdict</th><th>type</th>"
                       "<th>P(stable)</th><th>decay rate [bounds]</th><th>");
    axis_figure(out, &a);
    put(out, "</th><th>damping ratio [bounds]</th><th>frequency, Hz [bounds]</th>"
                       "<th>warnings</th><th>estimator</th></tr>\n");
    for (size_t i = 0; i < n_ranked; i++)
        ranked_row(out, ranked[i], i + 1, &a, reports_prefix);
    put(out, "</table>\n</body>\n</html>\n");
    free(ranked);
    if (out->failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    return EL_OK;
}
