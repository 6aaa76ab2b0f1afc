/* el_html_track: a track run as one self-contained HTML page (margin over
 * time with its trend, damping and frequency per window, the windows'
 * table); built from el_svg. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_html.h"
#include "el_predict.h"
#include "el_report.h"
#include "el_svg.h"

typedef el_html_ctx ctx;

/* ------------------------------------------------------------ track */

/* The windows' time axis, x = t - x0: ISO logs count seconds from the
 * first window's start (whose date-time the caption gives), since
 * absolute Unix seconds make poor tick labels. */
typedef struct {
    double x0;
    double from, to;          /* the windows' span on the axis */
    double t_last;            /* middle of the last window in the trend */
    int line;                 /* 1: a trend line to draw */
    int extrapolate;          /* 1: shrinking with a time to zero */
} track_axis;

/* The windows el_track_fit_trend uses: the line passes through the last
 * of them at margin_now. */
static int in_trend(const el_track_window *w)
{
    return el_track_window_in_trend(w, 0);
}

static double mid_x(const track_axis *a, const el_track_window *w)
{
    return 0.5 * (w->t_from + w->t_to) - a->x0;
}

static void track_axis_make(const el_track_result *r, track_axis *a)
{
    a->x0 = r->time_is_iso ? r->windows[0].t_from : 0.0;
    a->from = INFINITY;
    a->to = -INFINITY;
    a->t_last = NAN;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        el_svg_widen(&a->from, &a->to, w->t_from - a->x0);
        el_svg_widen(&a->from, &a->to, w->t_to - a->x0);
        if (in_trend(w))
            a->t_last = mid_x(a, w);
    }
    if (!(a->to > a->from)) {
        /* Windows of no length (or no finite time): one unit around them. */
        double m = isfinite(a->from) ? a->from : 0.0;
        a->from = m - 0.5;
        a->to = m + 0.5;
    }
    a->line = r->has_trend && isfinite(a->t_last) && isfinite(r->slope) &&
              isfinite(r->margin_now);
    a->extrapolate = a->line && r->trend == EL_TREND_SHRINKING &&
                     isfinite(r->time_to_zero) && r->time_to_zero > 0;
}

/* The margin on a line of this slope through the fitted line's value at
 * the last trend window (the trend-bound lines pivot there too). */
static double on_line(const el_track_result *r, const track_axis *a, double slope, double x)
{
    return r->margin_now + slope * (x - a->t_last);
}

/* Extrapolations are cut at twice the windows' span beyond their end:
 * further out the windows would shrink to a sliver of the figure. */
static double margin_reach(const track_axis *a)
{
    return a->to + 2.0 * (a->to - a->from);
}

/* Where the figure wants to show the way to zero up to: the upper time
 * to zero, or a quarter past the crossing when that end is open. */
static double extrapolation_end(const el_track_result *r, const track_axis *a)
{
    double end = isfinite(r->time_to_zero_hi) ? r->time_to_zero_hi : 1.25 * r->time_to_zero;
    return a->t_last + end;
}

/* Range of fig-margin: 0, every margin and bound, the trend lines over
 * the span and, when shrinking, the way to zero (within the reach). */
static void margin_range(const el_track_result *r, const track_axis *a, el_svg_frame *f)
{
    double lo = 0.0, hi = 0.0;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (!w->ok)
            continue;
        el_svg_widen(&lo, &hi, w->margin);
        el_svg_widen(&lo, &hi, w->margin_lo);
        el_svg_widen(&lo, &hi, w->margin_hi);
    }
    const double slopes[3] = {r->slope, r->slope_lo, r->slope_hi};
    for (int k = 0; k < 3 && a->line; k++) {
        el_svg_widen(&lo, &hi, on_line(r, a, slopes[k], a->from));
        el_svg_widen(&lo, &hi, on_line(r, a, slopes[k], a->to));
    }
    double right = a->to;
    if (a->extrapolate)
        right = fmax(right, fmin(extrapolation_end(r, a), margin_reach(a)));
    double pad = 0.03 * (right - a->from), h = hi - lo > 0 ? hi - lo : 1.0;
    f->xlo = a->from - pad;
    f->xhi = right + pad;
    f->ylo = lo - 0.08 * h;
    f->yhi = hi + 0.08 * h;
}

/* Stable side above the zero line, unstable side (shaded) below it. */
static void margin_background(ctx *c, const el_svg_frame *f)
{
    double y0 = el_svg_fy(f, 0.0), bottom = f->top + f->height;
    el_buf_printf(c->o, "<rect class=\"unstable-side\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f->left, y0, f->width, bottom - y0);
    el_svg_x_ticks(c, f);
    el_svg_y_ticks(c, f);
    el_buf_printf(c->o, "<line class=\"boundary\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/>", f->left, f->left + f->width, y0, y0);
    if (y0 - f->top > 24)
        el_buf_printf(c->o, "<text class=\"region\" x=\"%.1f\" y=\"%.1f\">stable side "
                      "(margin &gt; 0)</text>", f->left + 10, f->top + 20);
    if (bottom - y0 > 24)
        el_buf_printf(c->o, "<text class=\"region\" x=\"%.1f\" y=\"%.1f\">unstable side: a "
                      "mode grows</text>", f->left + 10, bottom - 10);
}

/* "FROM to TO" of a window, escaped. */
static void put_window_span(ctx *c, const el_track_window *w)
{
    el_svg_esc(c, w->from_text);
    el_svg_put(c, " to ");
    el_svg_esc(c, w->to_text);
}

static void window_data(ctx *c, const char *cls, const el_track_window *w)
{
    el_buf_printf(c->o, "<g class=\"%s\" data-from=\"", cls);
    el_svg_esc(c, w->from_text);
    el_svg_put(c, "\" data-to=\"");
    el_svg_esc(c, w->to_text);
    el_svg_put(c, "\"");
}

/* A failed window: a triangle on the bottom edge, its message on hover. */
static void failed_marker(ctx *c, const el_svg_frame *f, double x, const el_track_window *w)
{
    window_data(c, "window-failed", w);
    el_svg_put(c, "><title>");
    put_window_span(c, w);
    el_svg_put(c, ": failed: ");
    el_svg_esc(c, w->error);
    el_buf_printf(c->o, "</title><path d=\"M%.1f %.1fl-6 0 6 -11 6 11z\"/></g>", x,
                  f->top + f->height - 2);
}

static void margin_windows(ctx *c, const el_svg_frame *f, const track_axis *a)
{
    const el_track_result *r = c->t;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        double x = el_svg_fx(f, mid_x(a, w));
        if (!w->ok) {
            failed_marker(c, f, x, w);
            continue;
        }
        char b[40];
        window_data(c, "window", w);
        el_buf_printf(c->o, " data-margin=\"%s\"><title>", el_svg_num(b, sizeof b, w->margin, 6));
        put_window_span(c, w);
        el_svg_put(c, ": margin ");
        el_svg_put_num(c, w->margin, 4);
        el_svg_put(c, " ");
        el_svg_put_pair(c, w->margin_lo, w->margin_hi, 4, NULL);
        el_svg_put(c, "</title>");
        if (isfinite(w->margin_lo) && isfinite(w->margin_hi))
            el_buf_printf(c->o, "<line class=\"wbar\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                          "y2=\"%.1f\"/>", x, x, el_svg_fy(f, w->margin_lo), el_svg_fy(f, w->margin_hi));
        if (isfinite(w->margin))
            el_buf_printf(c->o, "<circle class=\"wdot\" cx=\"%.1f\" cy=\"%.1f\" r=\"4.5\"/>", x,
                          el_svg_fy(f, w->margin));
        el_svg_put(c, "</g>");
    }
}

static void slope_line(ctx *c, const el_svg_frame *f, const track_axis *a, const char *cls,
                       double slope)
{
    const el_track_result *r = c->t;
    if (!isfinite(slope))
        return;
    el_buf_printf(c->o, "<line class=\"%s\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>",
                  cls, el_svg_fx(f, a->from), el_svg_fx(f, a->to), el_svg_fy(f, on_line(r, a, slope, a->from)),
                  el_svg_fy(f, on_line(r, a, slope, a->to)));
}

/* The dashed way from the last window to zero and, on the zero line, the
 * bounds of the time to zero (an open end runs to the edge). */
static void margin_extrapolation(ctx *c, const el_svg_frame *f, const track_axis *a)
{
    const el_track_result *r = c->t;
    double x1 = a->t_last + r->time_to_zero, y1 = 0.0;
    if (x1 > f->xhi) {
        x1 = f->xhi;
        y1 = on_line(r, a, r->slope, x1);
    }
    el_buf_printf(c->o, "<line class=\"extrapolation\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/>", el_svg_fx(f, a->t_last), el_svg_fx(f, x1), el_svg_fy(f, r->margin_now), el_svg_fy(f, y1));
    double lo = el_svg_clampd(a->t_last + r->time_to_zero_lo, f->xlo, f->xhi);
    double hi = isfinite(r->time_to_zero_hi) ? a->t_last + r->time_to_zero_hi : INFINITY;
    double y0 = el_svg_fy(f, 0.0), xl = el_svg_fx(f, lo), xh = el_svg_fx(f, el_svg_clampd(hi, f->xlo, f->xhi));
    el_buf_printf(c->o, "<line class=\"zero-interval\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/><line class=\"zero-cap\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/>", xl, xh, y0, y0, xl, xl, y0 - 7, y0 + 7);
    if (hi <= f->xhi)
        el_buf_printf(c->o, "<line class=\"zero-cap\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                      "y2=\"%.1f\"/>", xh, xh, y0 - 7, y0 + 7);
    else
        el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">%s "
                      "&rarr;</text>", xh - 4, y0 - 10,
                      isfinite(hi) ? "beyond the view" : "not bounded");
    if (y1 == 0.0)
        el_buf_printf(c->o, "<circle class=\"zero-cross\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\"/>",
                      el_svg_fx(f, x1), y0);
}

/* The words of a legend key after its drawing at x; returns where the
 * next key starts (12.5 px DejaVu Sans: about 7.4 px a character). */
static double key_words(ctx *c, double x, double y, const char *words)
{
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\">%s</text>", x + 28, y + 4, words);
    return x + 48 + 7.4 * (double)strlen(words);
}

static double key_line(ctx *c, double x, double y, const char *cls, const char *words)
{
    el_buf_printf(c->o, "<line class=\"key %s\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/>", cls, x, x + 22, y, y);
    return key_words(c, x, y, words);
}

/* Keys use class "key ..." so that the figure's own elements can be
 * counted by their exact class attribute. */
static void margin_legend(ctx *c, const el_svg_frame *f, const track_axis *a, size_t failed)
{
    double x = f->left, y = f->top - 14;
    el_svg_put(c, "<g class=\"legend\">");
    el_buf_printf(c->o, "<line class=\"key wbar\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/><circle class=\"key wdot\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\"/>",
                  x + 11, x + 11, y - 7, y + 7, x + 11, y);
    x = key_words(c, x, y, "window: margin and bounds");
    if (a->line) {
        x = key_line(c, x, y, "trend", "fitted line");
        x = key_line(c, x, y, "trend-bound", "slopes at the bounds");
    }
    if (a->extrapolate)
        x = key_line(c, x, y, "extrapolation", "straight on to zero");
    if (failed > 0) {
        el_buf_printf(c->o, "<path class=\"key window-failed\" d=\"M%.1f %.1fl-6 0 6 -11 6 11z\"/>",
                      x + 11, y + 5);
        key_words(c, x, y, "failed window");
    }
    el_svg_put(c, "</g>");
}

static void margin_titles(ctx *c, const el_svg_frame *f)
{
    el_svg_x_title_begin(c, f);
    el_svg_put(c, c->t->time_is_iso ? "time from the first window's start [" : "time [");
    el_svg_esc(c, c->time_unit);
    el_svg_put(c, "]</text>");
    el_svg_y_title_begin(c, f);
    el_svg_put(c, "margin &minus;max Re &lambda; [");
    el_svg_esc(c, c->rate_unit);
    el_svg_put(c, "]</text>");
}

/* "BEFORE 95 % AFTER" (static markup around the level), nothing when the
 * level is unknown. */
static void put_level_phrase(ctx *c, const char *before, const char *after)
{
    if (!isfinite(c->level))
        return;
    el_svg_put(c, before);
    el_buf_printf(c->o, "%.3g %%", 100.0 * c->level);
    el_svg_put(c, after);
}

/* A duration in prose: "300 s", "300 time units". */
static void put_duration(ctx *c, double v)
{
    el_svg_put_num(c, v, 4);
    el_svg_put(c, " ");
    if (c->t->time_unit[0] != '\0')
        el_svg_esc(c, c->time_unit);
    else
        el_svg_put(c, "time units");
}

static size_t failed_windows(const el_track_result *r)
{
    return r->n_windows - r->n_ok;
}

static void margin_caption(ctx *c, const track_axis *a)
{
    const el_track_result *r = c->t;
    el_svg_caption_begin(c, "Margin over time.");
    el_svg_put(c, "Each window's margin, the decay rate &minus;max Re &lambda; of its least damped "
           "mode, at the window's middle (dot)");
    put_level_phrase(c, " with its ", " bootstrap bounds (bar)");
    el_svg_put(c, ". Above the green zero line the operating point is stable; the shaded side "
           "below it is unstable (a mode grows).");
    if (a->line) {
        el_svg_put(c, " Solid line: the margins' weighted least-squares line, slope ");
        el_svg_put_num(c, r->slope, 4);
        el_svg_put(c, " ");
        el_svg_esc(c, c->slope_unit);
        el_svg_put(c, "; thin lines: the slopes at its bounds, through the line's value at the last "
               "window.");
    } else {
        el_svg_put(c, " No line: fewer than 3 windows gave a margin.");
    }
    if (a->extrapolate) {
        el_svg_put(c, " Dashed: a straight-line extrapolation, not a prediction; at this rate the "
               "margin reaches zero ");
        put_duration(c, r->time_to_zero);
        el_svg_put(c, " after the last window's middle; the thick stretch of the zero line spans its "
               "bounds ");
        el_svg_put_pair(c, r->time_to_zero_lo, r->time_to_zero_hi, 4, "not bounded");
        el_svg_put(c, ".");
        if (extrapolation_end(r, a) > margin_reach(a))
            el_svg_put(c, " The view is cut at twice the windows' span after their end.");
    }
    size_t failed = failed_windows(r);
    if (failed > 0)
        el_buf_printf(c->o, " %zu failed window%s marked at the bottom (see the table).",
                      failed, failed == 1 ? "" : "s");
    if (r->time_is_iso) {
        el_svg_put(c, " Time in seconds from ");
        el_svg_esc(c, r->windows[0].from_text);
        el_svg_put(c, ".");
    }
    el_svg_put(c, "</figcaption></figure>\n");
}

static void fig_margin(ctx *c, const track_axis *a)
{
    el_svg_frame f = {.left = 84, .top = 40, .width = 852, .height = 340};
    margin_range(c->t, a, &f);
    el_svg_put(c, "<figure id=\"fig-margin\">");
    el_svg_begin(c, 960, 436, "margin of each window over time");
    el_svg_clip_def(c, "clip-margin", &f);
    margin_background(c, &f);
    el_svg_put(c, "<g clip-path=\"url(#clip-margin)\">");
    if (a->line) {
        slope_line(c, &f, a, "trend-bound", c->t->slope_lo);
        slope_line(c, &f, a, "trend-bound", c->t->slope_hi);
    }
    if (a->extrapolate)
        margin_extrapolation(c, &f, a);
    if (a->line)
        slope_line(c, &f, a, "trend", c->t->slope);
    el_svg_put(c, "</g>");
    margin_windows(c, &f, a);
    margin_legend(c, &f, a, failed_windows(c->t));
    el_svg_frame_box(c, &f);
    margin_titles(c, &f);
    el_svg_put(c, "</svg>\n");
    margin_caption(c, a);
}

/* ------------------------------------------------------------ track: modes */

static double window_value(const el_track_window *w, int freq)
{
    return freq ? w->frequency_hz : w->damping_ratio;
}

/* y range of one panel: the finite values; the damping ratio keeps 0 in
 * view, since its distance to 0 is the point. Returns the count. */
static size_t panel_range(const el_track_result *r, int freq, el_svg_frame *f)
{
    double lo = INFINITY, hi = -INFINITY;
    size_t n = 0;
    if (!freq)
        lo = hi = 0.0;
    for (size_t i = 0; i < r->n_windows; i++) {
        double v = window_value(&r->windows[i], freq);
        if (r->windows[i].ok && isfinite(v)) {
            el_svg_widen(&lo, &hi, v);
            n++;
        }
    }
    if (!isfinite(lo))
        lo = hi = 0.0;
    double h = hi - lo > 0 ? hi - lo : fmax(0.1 * fabs(hi), 0.5);
    f->ylo = lo - 0.1 * h;
    f->yhi = hi + 0.1 * h;
    return n;
}

/* One small panel: a dot per assessed window with a value, joined in
 * time order. */
static void window_panel(ctx *c, el_svg_frame *f, const track_axis *a, int freq)
{
    const el_track_result *r = c->t;
    double pad = 0.03 * (a->to - a->from);
    f->xlo = a->from - pad;
    f->xhi = a->to + pad;
    panel_range(r, freq, f);
    el_svg_x_ticks(c, f);
    el_svg_y_ticks(c, f);
    const char *cls = freq ? "freq" : "zeta";
    el_buf_printf(c->o, "<path class=\"join\" d=\"");
    int pen = 0;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (!w->ok || !isfinite(window_value(w, freq)))
            continue;
        el_buf_printf(c->o, "%s%.1f %.1f", pen ? " " : "M", el_svg_fx(f, mid_x(a, w)),
                      el_svg_fy(f, window_value(w, freq)));
        pen = 1;
    }
    el_svg_put(c, "\"/>");
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (w->ok && isfinite(window_value(w, freq)))
            el_buf_printf(c->o, "<circle class=\"%s\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\"/>", cls,
                          el_svg_fx(f, mid_x(a, w)), el_svg_fy(f, window_value(w, freq)));
    }
    el_svg_frame_box(c, f);
    el_svg_x_title_begin(c, f);
    el_svg_put(c, r->time_is_iso ? "time from the first window's start [" : "time [");
    el_svg_esc(c, c->time_unit);
    el_svg_put(c, "]</text>");
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" font-weight=\"600\">", f->left, f->top - 10);
    if (freq) {
        el_svg_put(c, "frequency f [");
        el_svg_esc(c, c->freq_unit);
        el_svg_put(c, "]</text>");
    } else {
        el_svg_put(c, "damping ratio &zeta;</text>");
    }
}

static void fig_damping(ctx *c, const track_axis *a)
{
    el_svg_frame z = {.left = 70, .top = 30, .width = 370, .height = 170};
    el_svg_frame q = {.left = 566, .top = 30, .width = 370, .height = 170};
    size_t no_zeta = 0;
    for (size_t i = 0; i < c->t->n_windows; i++)
        no_zeta += c->t->windows[i].ok && !isfinite(c->t->windows[i].damping_ratio);
    el_svg_put(c, "<figure id=\"fig-damping\">");
    el_svg_begin(c, 960, 250, "damping ratio and frequency of each window");
    window_panel(c, &z, a, 0);
    window_panel(c, &q, a, 1);
    el_svg_put(c, "</svg>\n");
    el_svg_caption_begin(c, "Damping ratio and frequency of the least damped mode per window.");
    el_svg_put(c, "One dot per assessed window at its middle. &zeta; = &minus;Re &lambda; / "
           "|&lambda;|: a falling &zeta; at a steady frequency is a mode losing its damping; "
           "a real mode has frequency 0.");
    if (no_zeta > 0)
        el_buf_printf(c->o, " %zu window%s without a defined damping ratio left out.", no_zeta,
                      no_zeta == 1 ? "" : "s");
    el_svg_put(c, "</figcaption></figure>\n");
}

/* ------------------------------------------------------------ track: table */

static const char *stability_word(el_stability s)
{
    return el_stability_name(s);
}

static void num_cell(ctx *c, double v, int sig)
{
    el_svg_put(c, "<td class=\"n\">");
    el_svg_put_num(c, v, sig);
    el_svg_put(c, "</td>");
}

static void window_row(ctx *c, size_t i)
{
    const el_track_window *w = &c->t->windows[i];
    el_buf_printf(c->o, "<tr%s><td class=\"n\">%zu</td><td class=\"n\">",
                  w->ok ? "" : " class=\"failed\"", i + 1);
    el_svg_esc(c, w->from_text);
    el_svg_put(c, "</td><td class=\"n\">");
    el_svg_esc(c, w->to_text);
    el_svg_put(c, "</td>");
    if (!w->ok) {
        el_svg_put(c, "<td colspan=\"6\">failed: ");
        el_svg_esc(c, w->error);
        el_svg_put(c, "</td></tr>\n");
        return;
    }
    el_interval iv = {w->margin_lo, w->margin_hi};
    el_svg_put(c, "<td class=\"n\">");
    el_svg_put_num(c, w->margin, 4);
    el_svg_put_bounds(c, "", &iv, 3);
    el_svg_put(c, "</td>");
    num_cell(c, w->damping_ratio, 3);
    num_cell(c, w->frequency_hz, 4);
    el_svg_put(c, "<td class=\"n\">");
    if (isfinite(w->p_stable))
        el_buf_printf(c->o, "%.3f", w->p_stable);
    else
        el_svg_put(c, "n/a");
    el_svg_put(c, "</td>");
    el_buf_printf(c->o, "<td>%s%s", w->no_dynamics ? "no dynamics" : stability_word(w->stability),
                  w->ambiguous && w->stability != EL_UNDECIDED ? " (ambiguous)" : "");
    if (w->n_warnings > 0)
        el_buf_printf(c->o, "<div class=\"iv\">%zu warning%s</div>", w->n_warnings,
                      w->n_warnings == 1 ? "" : "s");
    el_buf_printf(c->o, "</td><td>%s</td></tr>\n", el_method_name(w->method));
}

static void fig_windows(ctx *c)
{
    const el_svg_column cols[] = {{"#", NULL},
                           {"from", NULL},
                           {"to", NULL},
                           {"margin", c->rate_unit},
                           {"damping &zeta;", NULL},
                           {"f", c->freq_unit},
                           {"P(stable)", NULL},
                           {"verdict", NULL},
                           {"method", NULL}};
    el_svg_table_open(c, "fig-windows", "modes windows", cols, sizeof cols / sizeof cols[0]);
    for (size_t i = 0; i < c->t->n_windows; i++)
        window_row(c, i);
    el_svg_put(c, "</tbody></table>\n");
    el_svg_caption_begin(c, "Windows in time order.");
    el_svg_put(c, "Each window assessed on its own as <i>assess</i> would. Margin: decay rate of the "
           "least damped mode");
    put_level_phrase(c, ", grey brackets its ", " bootstrap bounds");
    el_svg_put(c, "; P(stable): share of the window's replicates whose least damped mode decays; "
           "method: the estimator the window's own data chose. Failed windows are left out "
           "of the trend.</figcaption></figure>\n");
}

/* ------------------------------------------------------------ track: text */

static const char *trend_colour(el_trend_class t)
{
    return t == EL_TREND_SHRINKING ? "var(--unstable)"
           : t == EL_TREND_GROWING ? "var(--stable)"
                                   : "var(--unsure)";
}

static const char *trend_word(el_trend_class t)
{
    return t == EL_TREND_SHRINKING ? "shrinking margin"
           : t == EL_TREND_GROWING ? "growing margin"
                                   : "no clear trend";
}

static void track_head(ctx *c)
{
    const el_track_result *r = c->t;
    el_svg_verdict_open(c, trend_colour(r->trend), trend_word(r->trend));
    if (!r->has_trend)
        el_svg_put(c, "<span class=\"vtag\">no trend fitted</span>");
    el_buf_printf(c->o, "<div class=\"vtype\">margin of the least damped mode over <b>%zu</b> "
                  "window%s</div>", r->n_ok, r->n_ok == 1 ? "" : "s");
    if (!r->has_trend)
        el_svg_put(c, "<div class=\"ts\">fewer than 3 windows gave a margin</div>");
    else if (r->trend == EL_TREND_UNDECIDED && isfinite(c->level))
        el_buf_printf(c->o, "<div class=\"ts\">a call needs P(shrinking) &ge; %.3g or "
                      "&le; %.3g</div>", c->level, 1.0 - c->level);
    el_svg_put(c, "</div>\n");
}

static void level_bounds(ctx *c, double lo, double hi)
{
    el_svg_put(c, ";");
    put_level_phrase(c, " ", "");
    el_svg_put(c, " bounds ");
    el_svg_put_pair(c, lo, hi, 3, "not bounded");
}

static void track_tiles(ctx *c)
{
    const el_track_result *r = c->t;
    el_svg_put(c, "<div class=\"tiles\">");
    el_svg_tile_begin(c, "P(shrinking)");
    if (r->has_trend && isfinite(r->p_shrinking)) {
        el_buf_printf(c->o, "%.3f</div><div class=\"ts\">share of the replicate slopes below "
                      "zero</div>", r->p_shrinking);
        el_svg_p_meter(c, r->p_shrinking, "P(shrinking)");
    } else {
        el_svg_put(c, "n/a</div><div class=\"ts\">no trend fitted</div>");
    }
    el_svg_put(c, "</div>");
    el_svg_tile_value(c, "slope", r->has_trend ? r->slope : NAN, c->slope_unit);
    el_svg_put(c, "change of the margin per ");
    el_svg_esc(c, c->time_unit);
    level_bounds(c, r->slope_lo, r->slope_hi);
    el_svg_put(c, "</div></div>");
    el_svg_tile_value(c, "margin now", r->has_trend ? r->margin_now : NAN, c->rate_unit);
    el_svg_put(c, "on the fitted line at the last window's middle</div></div>");
    if (isfinite(r->time_to_zero)) {
        el_svg_tile_value(c, "time to zero margin", r->time_to_zero,
                   r->time_unit[0] != '\0' ? c->time_unit : "time units");
        el_svg_put(c, "after the last window's middle, on a <b>straight-line extrapolation</b>: "
               "the margin may be lost sooner");
        level_bounds(c, r->time_to_zero_lo, r->time_to_zero_hi);
        el_svg_put(c, "</div></div>");
    }
    el_svg_put(c, "</div>\n");
}

static void track_details(ctx *c)
{
    const el_track_result *r = c->t;
    size_t reps = 0;
    for (size_t i = 0; i < r->n_windows; i++)
        reps = r->windows[i].n_replicates > reps ? r->windows[i].n_replicates : reps;
    el_svg_put(c, "<h2 class=\"section\">Windows and trend</h2>\n<table class=\"details\" "
           "id=\"details\">");
    el_svg_detail_row_begin(c, "windows");
    el_buf_printf(c->o, "%zu of ", r->n_windows);
    put_duration(c, r->window);
    el_svg_put(c, " every ");
    put_duration(c, r->step);
    el_buf_printf(c->o, "%s; %zu assessed, %zu failed; %zu channel%s</td></tr>",
                  r->step < r->window ? " (overlapping)" : "", r->n_ok, failed_windows(r),
                  r->n_channels, r->n_channels == 1 ? "" : "s");
    el_svg_detail_row_begin(c, "trend fit");
    el_svg_put(c, "weighted least squares of the margins on the windows' middle times, weights "
           "1 / spread&sup2;; replicate slopes from the windows' own bootstrap");
    el_buf_printf(c->o, " (%zu replicates per window)</td></tr>", reps);
    el_svg_detail_row_begin(c, "scatter about the line");
    el_svg_put_num(c, r->scatter_ratio, 3);
    el_svg_put(c, " &times; what the bounds explain (&chi;&sup2; / dof); bounds widened ");
    el_svg_put_num(c, r->widening, 3);
    el_svg_put(c, " &times;</td></tr>");
    el_svg_detail_row_begin(c, "level");
    el_svg_put_num(c, c->level, 3);
    el_svg_put(c, "</td></tr></table>\n");
}

/* ------------------------------------------------------------ track: entry */

static const char *track_source(const el_track_options *opt)
{
    if (opt == NULL || opt->assess.path == NULL || opt->assess.path[0] == '\0')
        return "n/a";
    return strcmp(opt->assess.path, "-") == 0 ? "standard input" : opt->assess.path;
}

static void track_page_begin(ctx *c, const el_track_options *opt)
{
    const el_track_result *r = c->t;
    el_svg_page_open(c, "margin tracking report", track_source(opt));
    el_svg_put(c, "from ");
    el_svg_esc(c, r->windows[0].from_text);
    el_svg_put(c, " to ");
    el_svg_esc(c, r->windows[r->n_windows - 1].to_text);
    el_buf_printf(c->o, " &middot; %zu window%s of ", r->n_windows, r->n_windows == 1 ? "" : "s");
    put_duration(c, r->window);
    el_buf_printf(c->o, " &middot; %zu assessed &middot; %zu channel%s</span></header>\n",
                  r->n_ok, r->n_channels, r->n_channels == 1 ? "" : "s");
}

el_status el_html_track_report(const el_track_result *r, const el_track_options *opt,
                               el_buf *out, el_error *err)
{
    if (r == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_html_track_report: no track result");
    if (r->n_windows == 0 || r->windows == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_html_track_report: the track result "
                                                  "has no windows");
    ctx c = {.t = r, .o = out};
    c.level = r->level > 0 && r->level < 1 ? r->level : opt != NULL ? opt->assess.boot.level : NAN;
    el_svg_set_units(&c, r->time_unit);
    /* The text report's wording: "1/s per s", or "per time unit" when the
     * log does not say its time unit. */
    if (r->time_unit[0] != '\0')
        snprintf(c.slope_unit, sizeof c.slope_unit, "1/%s per %s", r->time_unit,
                 r->time_unit);
    else
        snprintf(c.slope_unit, sizeof c.slope_unit, "per time unit");
    track_axis a;
    track_axis_make(r, &a);
    track_page_begin(&c, opt);
    track_head(&c);
    track_tiles(&c);
    el_svg_put(&c, "</section>\n");
    el_svg_warnings_box(&c, (const el_warnings *const[]){&r->warnings}, 1);
    char cautions[EL_ADVICE_MAX_CAUTIONS][EL_ADVICE_TEXT_MAX];
    size_t n_cautions = el_track_cautions(r, cautions);
    el_svg_put(&c, "<aside class=\"caution\" id=\"caution\"><b>Cautions.</b>");
    for (size_t i = 0; i < n_cautions; i++) {
        el_svg_put(&c, " ");
        el_svg_esc(&c, cautions[i]);
    }
    el_svg_put(&c, "</aside>\n");
    if (opt != NULL && opt->caution_extra != NULL) {
        el_svg_put(&c, "<aside class=\"caution\" id=\"caution-follow\"><b>Watching.</b> ");
        el_svg_esc(&c, opt->caution_extra);
        el_svg_put(&c, "</aside>\n");
    }
    el_svg_put(&c, "<h2 class=\"section\">Margin over time</h2>\n");
    fig_margin(&c, &a);
    el_svg_put(&c, "<h2 class=\"section\">Damping and frequency</h2>\n");
    fig_damping(&c, &a);
    el_svg_put(&c, "<h2 class=\"section\">Windows</h2>\n");
    fig_windows(&c);
    track_details(&c);
    el_svg_page_end(&c);
    if (out->failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory while writing the HTML report");
    return EL_OK;
}
