/* el_html: the assessment as one self-contained HTML page with inline SVG
 * figures (no script, no network), laid out for a laptop screen and for
 * paper; built from el_svg. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_advice.h"
#include "el_html.h"
#include "el_html_stab.h"
#include "el_predict.h"
#include "el_report.h"
#include "el_svg.h"

typedef el_html_ctx ctx;

typedef struct {
    double lo, hi;
} span;

static int boot_ran(const el_assessment *r)
{
    return r->boot.replicates > 0 && r->boot.bounds != NULL;
}

static const char *table_time_unit(const el_table *t)
{
    if (t->time_is_iso)
        return "s";
    if (t->units != NULL && t->time_column < t->n_columns && t->units[t->time_column])
        return t->units[t->time_column];
    return "";
}

/* "name [unit]" of channel ch, escaped. */
static void put_channel_label(ctx *c, size_t ch)
{
    const el_series *s = &c->r->series;
    el_svg_esc(c, s->names[ch]);
    if (s->units != NULL && s->units[ch] != NULL && s->units[ch][0] != '\0') {
        el_svg_put(c, " [");
        el_svg_esc(c, s->units[ch]);
        el_svg_put(c, "]");
    }
}

static const char *channel_unit(const ctx *c, size_t ch)
{
    const el_series *s = &c->r->series;
    return s->units != NULL && s->units[ch] != NULL ? s->units[ch] : "";
}

static void verdict_tiles(ctx *c)
{
    const el_assessment *r = c->r;
    const el_verdict *v = &r->verdict;
    el_svg_put(c, "<div class=\"tiles\">");
    /* Words for the number: a count of replicates, not a bare
     * probability (docs/method.md, "Verdict words"). */
    el_svg_tile_begin(c, "bootstrap support");
    if (isfinite(v->p_stable)) {
        size_t n = r->boot.replicates, n_stable = (size_t)llround(v->p_stable * (double)n);
        el_buf_printf(c->o, "%zu <small>of %zu</small></div><div class=\"ts\">replicates "
                      "whose least damped mode decays (model error not included)</div>",
                      n_stable, n);
        el_svg_p_meter(c, v->p_stable, "P(stable)");
    } else {
        el_svg_put(c, "n/a</div><div class=\"ts\">no bootstrap was run: no bounds</div>");
    }
    el_svg_put(c, "</div>");
    el_svg_tile_value(c, "decay rate", v->margin_decay_rate, c->rate_unit);
    el_svg_put(c, "&minus;Re &lambda; of the least damped mode; "
           "negative means growing</div></div>");
    el_svg_tile_begin(c, "damping ratio");
    el_svg_put_num(c, v->margin_damping_ratio, 3);
    el_svg_put(c, "</div><div class=\"ts\">of the least damped mode</div></div>");
    const el_mode *m = r->modes.n_modes ? &r->modes.modes[0] : NULL;
    el_svg_tile_value(c, m && m->decay_rate < 0 ? "doubling time" : "time constant",
               m ? m->time_constant_s : NAN, c->time_unit);
    if (m != NULL && m->pair && !m->at_nyquist && isfinite(m->frequency_hz)) {
        el_svg_put(c, "mode 1 rings at ");
        el_svg_put_num(c, m->frequency_hz, 3);
        el_svg_put(c, " ");
        el_svg_esc(c, c->freq_unit);
    } else {
        el_svg_put(c, "mode 1 does not oscillate");
    }
    el_svg_put(c, "</div></div></div>\n");
}

static void verdict_section(ctx *c)
{
    const el_verdict *v = &c->r->verdict;
    el_svg_verdict_open(c, el_svg_verdict_colour(v), v->stability_name ? v->stability_name : "n/a");
    /* The word leads, then one line of reason and one of next step. An
     * undecided word says "ambiguous" itself; a decided one with an open
     * type keeps the tag. */
    if (v->ambiguous && v->stability != EL_UNDECIDED)
        el_svg_put(c, "<span class=\"vtag\">ambiguous</span>");
    el_advice adv;
    el_advice_assess(c->r, c->level, &adv);
    el_svg_put(c, "<div class=\"vtype\"><b>Reason:</b> ");
    el_svg_esc(c, adv.reason);
    el_svg_put(c, "</div><div class=\"vtype\"><b>Next step:</b> ");
    el_svg_esc(c, adv.next_step);
    el_svg_put(c, "</div><div class=\"vtype\">fixed point: <b>");
    el_svg_esc(c, v->type[0] ? v->type : "n/a");
    el_svg_put(c, "</b></div><div class=\"ts\">");
    el_svg_esc(c, adv.support);
    el_svg_put(c, "</div></div>\n");
    verdict_tiles(c);
    el_svg_put(c, "</section>\n");
}

/* The cautions by verdict (el_advice), the general one last. */
static void cautions_section(ctx *c)
{
    el_advice adv;
    el_advice_assess(c->r, c->level, &adv);
    el_svg_put(c, "<aside class=\"caution\" id=\"caution\"><b>Cautions.</b>");
    for (size_t i = 0; i < adv.n_cautions; i++) {
        el_svg_put(c, " ");
        el_svg_esc(c, adv.cautions[i]);
    }
    el_svg_put(c, "</aside>\n");
}

static void warnings_section(ctx *c)
{
    const el_warnings *lists[] = {&c->r->input_warnings, &c->r->warnings};
    el_svg_warnings_box(c, lists, 2);
}

/* Replicate stride of the cloud downsampling rule (el_html.h). */
static size_t cloud_stride(size_t replicates, size_t per_replicate)
{
    size_t total = replicates * per_replicate;
    if (total <= EL_HTML_MAX_CLOUD_POINTS)
        return 1;
    return (total + EL_HTML_MAX_CLOUD_POINTS - 1) / EL_HTML_MAX_CLOUD_POINTS;
}

/* ------------------------------------------------------------ eigenvalues */

typedef struct {
    double xlo, xhi, ymax;
    size_t outside;            /* replicate points outside the view */
} eig_view;

static void eig_bounds(const ctx *c, double *scratch, eig_view *v)
{
    const el_modes *md = &c->r->modes;
    const el_boot_result *b = &c->r->boot;
    double lo = 0.0, hi = 0.0, ymax = 0.0;
    for (size_t m = 0; m < md->n_modes; m++) {
        if (md->modes[m].instantaneous)
            continue;
        el_svg_widen(&lo, &hi, md->modes[m].lambda_re);
        if (isfinite(md->modes[m].lambda_im))
            ymax = fmax(ymax, fabs(md->modes[m].lambda_im));
    }
    if (c->boot) {
        /* 0.5 % .. 99.5 % of each cloud: one wild replicate must not
         * squeeze the rest into a corner (it is counted as outside). */
        for (size_t m = 0; m < b->n_modes; m++) {
            double a, z;
            if (el_svg_robust_span(b->lambda_re, b->n_modes, m, b->replicates, 0.005, scratch, &a, &z)) {
                el_svg_widen(&lo, &hi, a);
                el_svg_widen(&lo, &hi, z);
            }
            if (el_svg_robust_span(b->lambda_im, b->n_modes, m, b->replicates, 0.005, scratch, &a, &z))
                ymax = fmax(ymax, fmax(fabs(a), fabs(z)));
        }
    }
    double width = hi - lo > 0 ? hi - lo : fmax(fabs(lo), 1.0);
    lo -= 0.08 * width;
    hi += 0.08 * width;
    /* Both sides of the boundary stay in view: at least a tenth of the
     * width on each side of Re = 0. */
    if (hi < -lo / 9.0)
        hi = -lo / 9.0;
    if (lo > -hi / 9.0)
        lo = -hi / 9.0;
    if (ymax <= 0)
        ymax = 0.3 * (hi - lo);
    v->xlo = lo;
    v->xhi = hi;
    /* Headroom above the highest cloud keeps the side labels clear. */
    v->ymax = 1.3 * ymax;
    v->outside = 0;
}

static int in_view(const el_svg_frame *f, double x, double y)
{
    return x >= f->xlo && x <= f->xhi && y >= f->ylo && y <= f->yhi;
}

/* One cloud per mode (upper half, as matched) and its mirror image. */
static void eig_clouds(ctx *c, const el_svg_frame *f, eig_view *v, size_t *drawn, size_t *skipped)
{
    const el_boot_result *b = &c->r->boot;
    size_t stride = cloud_stride(b->replicates, b->n_modes);
    el_svg_put(c, "<g clip-path=\"url(#clip-eig)\">");
    for (int mirror = 1; mirror >= 0; mirror--) {
        for (size_t m = 0; m < b->n_modes; m++) {
            size_t count = 0;
            for (size_t k = 0; k < b->replicates; k += stride) {
                double re = b->lambda_re[k * b->n_modes + m], im = b->lambda_im[k * b->n_modes + m];
                if (isfinite(re) && isfinite(im))
                    count++;
            }
            if (mirror) {
                el_buf_printf(c->o, "<path class=\"cloud-mirror\" stroke=\"%s\" d=\"",
                              el_svg_mode_colour(m));
            } else {
                el_buf_printf(c->o, "<path class=\"cloud\" data-mode=\"%zu\" data-points=\"%zu\" "
                              "stroke=\"%s\" d=\"", m + 1, count, el_svg_mode_colour(m));
            }
            for (size_t k = 0; k < b->replicates; k += stride) {
                double re = b->lambda_re[k * b->n_modes + m], im = b->lambda_im[k * b->n_modes + m];
                if (!isfinite(re) || !isfinite(im)) {
                    if (!mirror)
                        (*skipped)++;
                    continue;
                }
                if (mirror && im == 0)
                    continue;
                el_svg_dot(c, f, re, mirror ? -im : im);
                if (!mirror) {
                    (*drawn)++;
                    v->outside += !in_view(f, re, im);
                }
            }
            el_svg_put(c, "\"/>");
        }
    }
    el_svg_put(c, "</g>");
}

static void eig_estimates(ctx *c, const el_svg_frame *f, size_t *not_drawn)
{
    const el_modes *md = &c->r->modes;
    for (size_t m = 0; m < md->n_modes; m++) {
        const el_mode *e = &md->modes[m];
        if (e->instantaneous || !isfinite(e->lambda_re) || !isfinite(e->lambda_im)) {
            (*not_drawn)++;
            continue;
        }
        if (e->pair)
            el_svg_marker(c, f, e->lambda_re, -e->lambda_im, "est-mirror");
        el_svg_marker(c, f, e->lambda_re, e->lambda_im, "est");
        el_buf_printf(c->o, "<text class=\"estlabel\" x=\"%.1f\" y=\"%.1f\">%zu</text>",
                      el_svg_fx(f, e->lambda_re) + 9, el_svg_fy(f, e->lambda_im) - 8, m + 1);
    }
}

static void eig_legend(ctx *c, const el_svg_frame *f, size_t replicates)
{
    double x = f->left + f->width - (replicates ? 560 : 230), y = f->top - 14;
    el_buf_printf(c->o, "<g class=\"legend\"><circle class=\"est\" cx=\"%.1f\" cy=\"%.1f\" "
                  "r=\"5\"/><text x=\"%.1f\" y=\"%.1f\">estimate (dashed: conjugate)</text>",
                  x + 6, y, x + 18, y + 4);
    if (replicates) {
        x += 240;
        el_svg_put(c, "<path class=\"cloud-key\" d=\"");
        for (size_t m = 0; m < 3; m++)
            el_buf_printf(c->o, "M%.1f %.1fh0", x + 2 + 7.0 * (double)m, y + (m == 1 ? -3 : 2));
        el_svg_put(c, "\" stroke=\"#2f6f9f\"/>");
        el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\">bootstrap replicates, a colour per "
                      "mode</text>", x + 24, y + 4);
    }
    el_svg_put(c, "</g>");
}

static void fig_eigenvalues(ctx *c, double *scratch)
{
    eig_view v;
    eig_bounds(c, scratch, &v);
    el_svg_frame f = {.left = 84, .top = 34, .width = 852, .height = 360, .xlo = v.xlo, .xhi = v.xhi,
               .ylo = -v.ymax, .yhi = v.ymax};
    el_svg_put(c, "<figure id=\"fig-eigenvalues\">");
    el_svg_begin(c, 960, 450, "eigenvalues in the complex plane");
    el_svg_clip_def(c, "clip-eig", &f);
    el_buf_printf(c->o, "<rect class=\"stable-side\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f.left, f.top, el_svg_fx(&f, 0.0) - f.left, f.height);
    el_svg_x_ticks(c, &f);
    el_svg_y_ticks(c, &f);
    el_buf_printf(c->o, "<line class=\"zero\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>",
                  f.left, f.left + f.width, el_svg_fy(&f, 0), el_svg_fy(&f, 0));
    el_buf_printf(c->o, "<line class=\"boundary\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/>", el_svg_fx(&f, 0), el_svg_fx(&f, 0), f.top, f.top + f.height);
    /* Labels go where there is room: a narrow stable side (an unstable
     * estimate far out) gets the short names on the wide side. */
    int roomy = el_svg_fx(&f, 0) - f.left > 220;
    el_buf_printf(c->o, "<text class=\"region\" x=\"%.1f\" y=\"%.1f\">%s</text>"
                  "<text class=\"region\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"%s\">"
                  "boundary Re &lambda; = 0</text><text class=\"region\" x=\"%.1f\" "
                  "y=\"%.1f\">unstable</text>", f.left + 10, f.top + 20,
                  roomy ? "stable side (Re &lambda; &lt; 0)" : "stable",
                  el_svg_fx(&f, 0) + (roomy ? -8 : 8), f.top + f.height - 10, roomy ? "end" : "start",
                  el_svg_fx(&f, 0) + 8, f.top + 20);
    size_t drawn = 0, skipped = 0, not_drawn = 0;
    if (c->boot)
        eig_clouds(c, &f, &v, &drawn, &skipped);
    eig_estimates(c, &f, &not_drawn);
    eig_legend(c, &f, c->boot ? c->r->boot.replicates : 0);
    el_svg_frame_box(c, &f);
    el_svg_x_title_begin(c, &f);
    el_svg_put(c, "Re &lambda; (growth rate) [");
    el_svg_esc(c, c->rate_unit);
    el_svg_put(c, "]</text>");
    el_svg_y_title_begin(c, &f);
    el_svg_put(c, "Im &lambda; = 2&pi; f [");
    el_svg_esc(c, c->rate_unit);
    el_svg_put(c, "]</text></svg>\n");
    el_svg_caption_begin(c, "Continuous-time eigenvalues.");
    el_svg_put(c, "Each mode's &lambda; = ln(&mu;)/&Delta;t is a white circle numbered as in the "
           "mode table; a pair shows both conjugates. The shaded left half-plane is the "
           "stable side; the green line Re &lambda; = 0 is the stability boundary. ");
    if (c->boot) {
        const el_boot_result *b = &c->r->boot;
        size_t stride = cloud_stride(b->replicates, b->n_modes);
        el_buf_printf(c->o, "Dots: %zu bootstrap replicate eigenvalues (%zu replicates x %zu "
                      "mode%s", drawn, b->replicates, b->n_modes, b->n_modes == 1 ? "" : "s");
        if (stride > 1)
            el_buf_printf(c->o, ", every %zu%s replicate drawn", stride,
                          stride == 2 ? "nd" : stride == 3 ? "rd" : "th");
        el_svg_put(c, "), matched to the estimate; the faint mirror below the axis is the "
               "conjugate half.");
        if (v.outside)
            el_buf_printf(c->o, " %zu replicate point%s outside the view (beyond the 0.5-99.5 "
                          "%% range of the cloud) %s drawn at the edge.", v.outside,
                          v.outside == 1 ? " lies" : "s lie", v.outside == 1 ? "is" : "are");
        if (skipped)
            el_buf_printf(c->o, " %zu replicate value%s without a finite eigenvalue left out.",
                          skipped, skipped == 1 ? "" : "s");
    } else {
        el_svg_put(c, "No bootstrap was run, so there are no clouds.");
    }
    if (not_drawn)
        el_buf_printf(c->o, " %zu mode%s with &mu; = 0 (Re &lambda; = &minus;&infin;) not drawn.",
                      not_drawn, not_drawn == 1 ? "" : "s");
    el_svg_put(c, "</figcaption></figure>\n");
}

/* ------------------------------------------------------------ plane */

/* Robust extent of the plane cloud (0.5 .. 99.5 %), or the estimate
 * alone. Returns 1 when a cloud exists. */
static int plane_cloud_span(const ctx *c, double *scratch, span *t, span *d)
{
    const el_verdict *v = &c->r->verdict;
    const el_boot_result *b = &c->r->boot;
    t->lo = t->hi = v->trace;
    d->lo = d->hi = v->determinant;
    if (!(c->boot && b->has_plane && b->trace_samples && b->det_samples))
        return 0;
    double lo, hi;
    int any = 0;
    if (el_svg_robust_span(b->trace_samples, 1, 0, b->replicates, 0.005, scratch, &lo, &hi)) {
        el_svg_widen(&t->lo, &t->hi, lo);
        el_svg_widen(&t->lo, &t->hi, hi);
        any = 1;
    }
    if (el_svg_robust_span(b->det_samples, 1, 0, b->replicates, 0.005, scratch, &lo, &hi)) {
        el_svg_widen(&d->lo, &d->hi, lo);
        el_svg_widen(&d->lo, &d->hi, hi);
    }
    return any;
}

/* Whole plane: symmetric in trace; the trace axis reaches at least to
 * where the parabola passes the highest determinant, so every region
 * shows at a readable size. */
static void plane_bounds(span t, span d, el_svg_frame *f)
{
    double x = fmax(fmax(fabs(t.lo), fabs(t.hi)), 2.0 * sqrt(fmax(d.hi, 0)));
    if (!(x > 0))
        x = 1.0;
    x *= 1.15;
    double top = fmax(fmax(d.hi, 0), x * x / 4.0) * 1.08;
    f->xlo = -x;
    f->xhi = x;
    f->ylo = fmin(-0.28 * top, d.lo * 1.12);
    f->yhi = top;
}

/* Close-up around the cloud; it takes in the axis tau = 0 (or
 * Delta = 0) when that boundary lies within three cloud widths, since
 * the distance to it is the question the plot answers. */
static void zoom_bounds(span t, span d, const el_svg_frame *whole, el_svg_frame *f)
{
    double wt = t.hi - t.lo, wd = d.hi - d.lo;
    if (!(wt > 0))
        wt = 0.05 * (whole->xhi - whole->xlo);
    if (!(wd > 0))
        wd = 0.05 * (whole->yhi - whole->ylo);
    if (fabs(0.5 * (t.lo + t.hi)) <= 3 * wt)
        el_svg_widen(&t.lo, &t.hi, 0.0);
    if (fabs(0.5 * (d.lo + d.hi)) <= 3 * wd)
        el_svg_widen(&d.lo, &d.hi, 0.0);
    wt = t.hi - t.lo > 0 ? t.hi - t.lo : wt;
    wd = d.hi - d.lo > 0 ? d.hi - d.lo : wd;
    f->xlo = t.lo - 0.2 * wt;
    f->xhi = t.hi + 0.2 * wt;
    f->ylo = d.lo - 0.2 * wd;
    f->yhi = d.hi + 0.2 * wd;
}

/* Stable quadrant, axes, ticks and the parabola of one panel. */
static void plane_background(ctx *c, const el_svg_frame *f, const char *clip)
{
    double right = f->left + f->width, bottom = f->top + f->height;
    double x0 = el_svg_clampd(el_svg_fx(f, 0), f->left, right), y0 = el_svg_clampd(el_svg_fy(f, 0), f->top, bottom);
    el_buf_printf(c->o, "<rect class=\"stable-side\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f->left, f->top, x0 - f->left, y0 - f->top);
    el_svg_x_ticks(c, f);
    el_svg_y_ticks(c, f);
    el_buf_printf(c->o, "<g clip-path=\"url(#%s)\"><line class=\"zero\" x1=\"%.1f\" x2=\"%.1f\" "
                  "y1=\"%.1f\" y2=\"%.1f\"/><line class=\"zero\" x1=\"%.1f\" x2=\"%.1f\" "
                  "y1=\"%.1f\" y2=\"%.1f\"/>", clip, f->left, right, el_svg_fy(f, 0), el_svg_fy(f, 0),
                  el_svg_fx(f, 0), el_svg_fx(f, 0), f->top, bottom);
    el_svg_put(c, "<path class=\"parabola\" d=\"");
    for (int i = 0; i <= 160; i++) {
        double t = f->xlo + (f->xhi - f->xlo) * i / 160.0;
        el_buf_printf(c->o, "%s%.1f %.1f", i == 0 ? "M" : " ", el_svg_fx(f, t), el_svg_fy(f, t * t / 4.0));
    }
    el_svg_put(c, "\"/></g>");
}

static void plane_labels(ctx *c, const el_svg_frame *f)
{
    double X = f->xhi, top = f->yhi, x0 = el_svg_fx(f, 0), y0 = el_svg_fy(f, 0);
    /* Region names where each region is widest. */
    struct { double t, d; const char *name; } lab[] = {
        {-0.55 * X, 0.80 * top, "spiral sink"},
        {0.55 * X, 0.80 * top, "spiral source"},
        {-0.80 * X, 0.5 * 0.64 * X * X / 4.0, "sink"},
        {0.80 * X, 0.5 * 0.64 * X * X / 4.0, "source"},
        {0.0, 0.5 * f->ylo, "saddle"},
    };
    for (size_t i = 0; i < sizeof lab / sizeof lab[0]; i++)
        el_buf_printf(c->o, "<text class=\"region\" x=\"%.1f\" y=\"%.1f\" "
                      "text-anchor=\"middle\">%s</text>", el_svg_fx(f, lab[i].t), el_svg_fy(f, lab[i].d) + 4,
                      lab[i].name);
    el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"start\" "
                  "transform=\"rotate(-90 %.1f %.1f)\">center (&tau; = 0)</text>",
                  x0 - 6, y0 - 14, x0 - 6, y0 - 14);
    el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">"
                  "&Delta; = &tau;&sup2;/4</text>", el_svg_fx(f, 0.9 * X) - 10,
                  el_svg_fy(f, 0.81 * X * X / 4.0) + 4);
    el_buf_printf(c->o, "<text class=\"region\" x=\"%.1f\" y=\"%.1f\">stable</text>",
                  f->left + 8, f->top + 18);
}

/* The plane cloud as one path; returns points drawn, counts outside. */
static size_t plane_cloud(ctx *c, const el_svg_frame *f, const char *cls, const char *clip,
                          size_t *outside)
{
    const el_boot_result *b = &c->r->boot;
    size_t stride = cloud_stride(b->replicates, 1), count = 0, drawn = 0;
    for (size_t k = 0; k < b->replicates; k += stride)
        count += isfinite(b->trace_samples[k]) && isfinite(b->det_samples[k]);
    el_buf_printf(c->o, "<path class=\"%s\" clip-path=\"url(#%s)\" data-points=\"%zu\" "
                  "stroke=\"%s\" d=\"", cls, clip, count, el_svg_mode_colour(0));
    for (size_t k = 0; k < b->replicates; k += stride) {
        double t = b->trace_samples[k], d = b->det_samples[k];
        if (!isfinite(t) || !isfinite(d))
            continue;
        el_svg_dot(c, f, t, d);
        drawn++;
        if (outside)
            *outside += !in_view(f, t, d);
    }
    el_svg_put(c, "\"/>");
    return drawn;
}

static void plane_estimate(ctx *c, const el_svg_frame *f, int label)
{
    const el_verdict *v = &c->r->verdict;
    if (!isfinite(v->trace) || !isfinite(v->determinant))
        return;
    el_svg_marker(c, f, v->trace, v->determinant, "est");
    if (label)
        el_buf_printf(c->o, "<text class=\"estlabel\" x=\"%.1f\" y=\"%.1f\">estimate</text>",
                      el_svg_fx(f, v->trace) + 10, el_svg_fy(f, v->determinant) - 9);
}

static void plane_titles(ctx *c, const el_svg_frame *f, int full)
{
    el_svg_x_title_begin(c, f);
    el_svg_put(c, full ? "trace &tau; = &lambda;&#8321; + &lambda;&#8322; [" : "&tau; [");
    el_svg_esc(c, c->rate_unit);
    el_svg_put(c, "]</text>");
    el_svg_y_title_begin(c, f);
    el_svg_put(c, full ? "determinant &Delta; = &lambda;&#8321;&lambda;&#8322; [" : "&Delta; [");
    el_svg_esc(c, c->rate_unit);
    el_svg_put(c, "&sup2;]</text>");
}

static void plane_caption(ctx *c, size_t drawn, size_t outside)
{
    const el_verdict *v = &c->r->verdict;
    const el_boot_result *b = &c->r->boot;
    el_svg_caption_begin(c, "Trace-determinant plane of the continuous-time model.");
    el_svg_put(c, "Left, the whole plane: the parabola &Delta; = &tau;&sup2;/4 separates nodes "
           "(below) from spirals (above); &Delta; &lt; 0 is a saddle; the shaded quadrant "
           "(&tau; &lt; 0, &Delta; &gt; 0) is stable. Right, a close-up of the box drawn on the "
           "left. Estimate: &tau; = ");
    el_svg_put_num(c, v->trace, 4);
    el_svg_put(c, ", &Delta; = ");
    el_svg_put_num(c, v->determinant, 4);
    el_svg_put(c, ", discriminant &tau;&sup2; &minus; 4&Delta; = ");
    el_svg_put_num(c, v->discriminant, 4);
    el_svg_put(c, ", region <b>");
    el_svg_esc(c, v->region == EL_REGION_NONE ? "n/a" : el_region_name(v->region));
    el_svg_put(c, "</b>.");
    if (c->boot && b->has_plane) {
        el_buf_printf(c->o, " Dots: %zu bootstrap replicates. Region shares:", drawn);
        int any = 0;
        for (int k = 0; k < EL_REGION_COUNT; k++) {
            if (b->region_probability[k] > 0) {
                el_buf_printf(c->o, "%s %s ", any ? "," : "", el_region_name((el_region)k));
                el_svg_put_num(c, b->region_probability[k], 3);
                any = 1;
            }
        }
        el_svg_put(c, any ? "." : " n/a.");
        if (outside)
            el_buf_printf(c->o, " %zu replicate%s outside the left view.", outside,
                          outside == 1 ? "" : "s");
    } else {
        el_svg_put(c, " No bootstrap was run, so there is no cloud.");
    }
    el_svg_put(c, "</figcaption></figure>\n");
}

static void fig_plane(ctx *c, double *scratch)
{
    span t, d;
    int cloud = plane_cloud_span(c, scratch, &t, &d);
    el_svg_frame f = {.left = 76, .top = 24, .width = 500, .height = 370};
    el_svg_frame z = {.left = 668, .top = 24, .width = 272, .height = 370};
    plane_bounds(t, d, &f);
    zoom_bounds(t, d, &f, &z);
    el_svg_put(c, "<figure id=\"fig-plane\">");
    el_svg_begin(c, 960, 450, "trace-determinant plane");
    el_svg_clip_def(c, "clip-plane", &f);
    el_svg_clip_def(c, "clip-zoom", &z);
    plane_background(c, &f, "clip-plane");
    plane_labels(c, &f);
    size_t drawn = 0, outside = 0;
    if (cloud)
        drawn = plane_cloud(c, &f, "cloud", "clip-plane", &outside);
    plane_estimate(c, &f, 1);
    /* The close-up's extent, outlined on the whole plane. */
    double bx0 = el_svg_clampd(el_svg_fx(&f, z.xlo), f.left, f.left + f.width);
    double bx1 = el_svg_clampd(el_svg_fx(&f, z.xhi), f.left, f.left + f.width);
    double by0 = el_svg_clampd(el_svg_fy(&f, z.yhi), f.top, f.top + f.height);
    double by1 = el_svg_clampd(el_svg_fy(&f, z.ylo), f.top, f.top + f.height);
    el_buf_printf(c->o, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"none\" "
                  "stroke=\"#1d2327\" stroke-width=\"1\" stroke-dasharray=\"3 2\"/>",
                  bx0 - 3, by0 - 3, bx1 - bx0 + 6, by1 - by0 + 6);
    el_svg_frame_box(c, &f);
    plane_titles(c, &f, 1);
    plane_background(c, &z, "clip-zoom");
    if (cloud)
        plane_cloud(c, &z, "cloud-zoom", "clip-zoom", NULL);
    plane_estimate(c, &z, 0);
    el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\">close-up</text>", z.left,
                  z.top - 8);
    if (z.xlo < 0 && z.xhi > 0)
        el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\" "
                      "transform=\"rotate(-90 %.1f %.1f)\">&tau; = 0</text>", el_svg_fx(&z, 0) - 5,
                      z.top + 6, el_svg_fx(&z, 0) - 5, z.top + 6);
    el_svg_frame_box(c, &z);
    plane_titles(c, &z, 0);
    el_svg_put(c, "</svg>\n");
    plane_caption(c, drawn, outside);
}

/* ------------------------------------------------------------ lines */

/* Appends a polyline of y[0..n) at x = x0 + i dx, downsampled by the
 * min/max rule of el_html.h, as path data ("M x y x y ..."; a
 * non-finite value breaks the line and the next point moves). Returns
 * the number of points written. */
static size_t line_points(ctx *c, const el_svg_frame *f, double x0, double dx, const double *y,
                          size_t n, int log_y)
{
    size_t buckets = n > EL_HTML_MAX_LINE_POINTS ? EL_HTML_MAX_LINE_POINTS / 2 : n;
    size_t written = 0;
    int pen_down = 0;
    for (size_t b = 0; b < buckets; b++) {
        size_t from = b * n / buckets, to = (b + 1) * n / buckets;
        size_t imin = 0, imax = 0;
        double vmin = INFINITY, vmax = -INFINITY;
        for (size_t i = from; i < to; i++) {
            double v = log_y ? log10(y[i]) : y[i];
            if (!isfinite(v))
                continue;
            if (v < vmin) {
                vmin = v;
                imin = i;
            }
            if (v > vmax) {
                vmax = v;
                imax = i;
            }
        }
        if (!isfinite(vmin)) {
            pen_down = 0;
            continue;
        }
        size_t first = imin < imax ? imin : imax, second = imin < imax ? imax : imin;
        double v_first = imin < imax ? vmin : vmax, v_second = imin < imax ? vmax : vmin;
        el_buf_printf(c->o, "%s%.1f %.1f", pen_down ? " " : "M",
                      el_svg_fx_clamped(f, x0 + dx * (double)first), el_svg_fy(f, v_first));
        written++;
        pen_down = 1;
        if (second != first) {
            el_buf_printf(c->o, " %.1f %.1f", el_svg_fx_clamped(f, x0 + dx * (double)second),
                          el_svg_fy(f, v_second));
            written++;
        }
    }
    return written;
}

/* Writes <path class="line CLS" d="..." data-points="N"/>. */
static void line_path(ctx *c, const el_svg_frame *f, const char *cls, double x0, double dx,
                      const double *y, size_t n, int log_y, const char *clip)
{
    el_buf_printf(c->o, "<path class=\"line %s\" clip-path=\"url(#%s)\" d=\"", cls, clip);
    size_t points = line_points(c, f, x0, dx, y, n, log_y);
    el_buf_printf(c->o, "\" data-points=\"%zu\"/>", points);
}

/* ------------------------------------------------------------ time series */

/* Samples [k0, k1) of one channel's measured and model lines. */
typedef struct {
    size_t k0, k1;
} sample_range;

/* The part of a model line (first sample `first`, count values) that
 * falls in the range: *i0 is its index into the line, returns the count. */
static size_t overlap(sample_range w, size_t first, size_t count, size_t *i0)
{
    size_t a = w.k0 > first ? w.k0 : first, b = w.k1 < first + count ? w.k1 : first + count;
    *i0 = a - first;
    return b > a ? b - a : 0;
}

static span series_span(const el_series *s, size_t ch, const el_prediction *p, sample_range w)
{
    const double *x = s->values + ch * s->n_samples;
    span m = {x[w.k0], x[w.k0]};
    for (size_t k = w.k0; k < w.k1; k++)
        el_svg_widen(&m.lo, &m.hi, x[k]);
    span all = m;
    if (p != NULL) {
        size_t i0, n = overlap(w, p->one_step_first, p->one_step_count, &i0);
        for (size_t i = i0; i < i0 + n; i++)
            el_svg_widen(&all.lo, &all.hi, p->one_step[ch * p->one_step_count + i]);
        n = overlap(w, p->free_first, p->free_count, &i0);
        for (size_t i = i0; i < i0 + n; i++)
            el_svg_widen(&all.lo, &all.hi, p->free_run[ch * p->free_count + i]);
    }
    /* Model lines may leave the measured range by half of it at most;
     * beyond that they are clipped, so the data keep their scale. */
    double r = m.hi - m.lo > 0 ? m.hi - m.lo : fmax(fabs(m.hi), 1.0);
    all.lo = fmax(all.lo, m.lo - 0.5 * r);
    all.hi = fmin(all.hi, m.hi + 0.5 * r);
    double pad = 0.06 * (all.hi - all.lo > 0 ? all.hi - all.lo : r);
    all.lo -= pad;
    all.hi += pad;
    return all;
}

static void ts_legend(ctx *c, const el_svg_frame *f, int with_model)
{
    double x = f->left + f->width - 400, y = f->top - 14;
    el_buf_printf(c->o, "<g class=\"legend\">"
                  "<line class=\"line measured\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\" "
                  "stroke-width=\"2.2\"/><text x=\"%.1f\" y=\"%.1f\">measured</text>",
                  x, x + 24, y, y, x + 30, y + 4);
    if (with_model)
        el_buf_printf(c->o, "<line class=\"line one-step\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                      "y2=\"%.1f\" stroke-width=\"2.4\"/><text x=\"%.1f\" y=\"%.1f\">one-step "
                      "prediction</text><line class=\"line free-run\" x1=\"%.1f\" x2=\"%.1f\" "
                      "y1=\"%.1f\" y2=\"%.1f\"/><text x=\"%.1f\" y=\"%.1f\">free run</text>",
                      x + 112, x + 136, y, y, x + 142, y + 4, x + 296, x + 330, y, y,
                      x + 336, y + 4);
    el_svg_put(c, "</g>");
}

/* Time shown on the x axis: seconds from the window start for ISO logs
 * (absolute date-times make poor tick labels), the file's own time else. */
static double ts_x0(const ctx *c)
{
    return c->r->table.time_is_iso ? 0.0 : c->r->series.t0;
}

static double ts_time(const ctx *c, size_t k)
{
    return ts_x0(c) + (double)k * c->r->series.dt;
}

/* Samples shown again in the detail panel, from the window start, when
 * the whole window is too long to show single oscillations: a twelfth
 * of the window, at least 200 samples. 0 = no detail panel. */
static size_t detail_samples(size_t n)
{
    if (n <= EL_HTML_MAX_LINE_POINTS)
        return 0;
    return n / 12 > 200 ? n / 12 : 200;
}

static void ts_lines(ctx *c, const el_svg_frame *f, size_t ch, const el_prediction *p,
                     sample_range w, const char *clip)
{
    const el_series *s = &c->r->series;
    line_path(c, f, "measured", ts_time(c, w.k0), s->dt, s->values + ch * s->n_samples + w.k0,
              w.k1 - w.k0, 0, clip);
    if (p == NULL)
        return;
    size_t i0, n = overlap(w, p->one_step_first, p->one_step_count, &i0);
    if (n > 0)
        line_path(c, f, "one-step", ts_time(c, p->one_step_first + i0), s->dt,
                  p->one_step + ch * p->one_step_count + i0, n, 0, clip);
    n = overlap(w, p->free_first, p->free_count, &i0);
    if (n > 0)
        line_path(c, f, "free-run", ts_time(c, p->free_first + i0), s->dt,
                  p->free_run + ch * p->free_count + i0, n, 0, clip);
    if (p->free_diverged && p->free_first + p->free_count <= w.k1) {
        size_t last = p->free_count - 1;
        el_buf_printf(c->o, "<circle class=\"stop\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\"/>",
                      el_svg_fx(f, ts_time(c, p->free_first + last)),
                      el_svg_fy(f, p->free_run[ch * p->free_count + last]));
    }
}

static void ts_panel(ctx *c, el_svg_frame *f, size_t ch, const el_prediction *p, sample_range w,
                     const char *clip_id)
{
    span y = series_span(&c->r->series, ch, p, w);
    f->xlo = ts_time(c, w.k0);
    f->xhi = ts_time(c, w.k1 - 1) > f->xlo ? ts_time(c, w.k1 - 1) : f->xlo + 1;
    f->ylo = y.lo;
    f->yhi = y.hi > y.lo ? y.hi : y.lo + 1;
    el_svg_clip_def(c, clip_id, f);
    el_svg_x_ticks(c, f);
    el_svg_y_ticks(c, f);
    ts_lines(c, f, ch, p, w, clip_id);
    el_svg_frame_box(c, f);
    el_svg_x_title_begin(c, f);
    el_svg_put(c, c->r->table.time_is_iso ? "time from window start [" : "time [");
    el_svg_esc(c, c->time_unit);
    el_svg_put(c, "]</text>");
    el_svg_y_title_begin(c, f);
    put_channel_label(c, ch);
    el_svg_put(c, "</text>");
}

static void ts_caption(ctx *c, size_t ch, const el_prediction *p, size_t detail)
{
    const el_series *s = &c->r->series;
    c->figure++;
    el_buf_printf(c->o, "<figcaption><b>Figure %d. ", c->figure);
    put_channel_label(c, ch);
    el_svg_put(c, ": measured and model.</b> ");
    if (p == NULL) {
        el_svg_put(c, "Model predictions n/a.</figcaption></figure>\n");
        return;
    }
    el_svg_put(c, "The one-step prediction starts from each measured state; the free run starts "
           "from the first state of the window and is never corrected. Error relative to "
           "the channel's standard deviation (0 perfect, 1 no better than its mean): one-step <b>");
    el_svg_put_num(c, p->one_step_nrmse[ch], 3);
    el_svg_put(c, "</b>, free run <b>");
    el_svg_put_num(c, p->free_nrmse[ch], 3);
    el_svg_put(c, "</b>.");
    if (p->free_diverged) {
        el_svg_put(c, " The free run diverged at ");
        el_svg_put_num(c, ts_time(c, p->free_diverged_at), 6);
        el_svg_put(c, " ");
        el_svg_esc(c, c->time_unit);
        el_svg_put(c, " (left the measured range by more than 10&#8310; times it) and stops there "
               "(dot).");
    }
    if (detail > 0) {
        el_svg_put(c, " Lower panel: the first ");
        el_svg_put_num(c, (double)(detail - 1) * s->dt, 4);
        el_svg_put(c, " ");
        el_svg_esc(c, c->time_unit);
        el_buf_printf(c->o, " (shaded above) at full resolution. The upper panel shows the "
                      "minimum and maximum of each of %d runs of consecutive samples.",
                      EL_HTML_MAX_LINE_POINTS / 2);
    }
    el_svg_put(c, "</figcaption></figure>\n");
}

static void fig_timeseries(ctx *c, size_t ch, const el_prediction *p)
{
    const el_series *s = &c->r->series;
    size_t detail = detail_samples(s->n_samples);
    el_svg_frame f = {.left = 84, .top = 34, .width = 852, .height = 190};
    el_svg_frame z = {.left = 84, .top = 290, .width = 852, .height = 150};
    el_buf_printf(c->o, "<figure id=\"fig-timeseries-%zu\">", ch);
    el_svg_begin(c, 960, detail ? 496 : 280, s->names[ch]);
    char clip[48];
    snprintf(clip, sizeof clip, "clip-ts-%zu", ch);
    sample_range all = {0, s->n_samples};
    if (detail) {
        /* The detail's span, shaded on the whole window before the lines. */
        double t1 = ts_time(c, detail - 1), t0 = ts_time(c, 0);
        double x1 = f.left + (t1 - t0) / (ts_time(c, s->n_samples - 1) - t0) * f.width;
        el_buf_printf(c->o, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" "
                      "fill=\"#efece4\"/>", f.left, f.top, x1 - f.left, f.height);
    }
    ts_panel(c, &f, ch, p, all, clip);
    ts_legend(c, &f, p != NULL);
    if (detail) {
        snprintf(clip, sizeof clip, "clip-ts-%zu-detail", ch);
        sample_range first = {0, detail};
        ts_panel(c, &z, ch, p, first, clip);
        el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\">detail: the start of "
                      "the window</text>", z.left, z.top - 8);
    }
    el_svg_put(c, "</svg>\n");
    ts_caption(c, ch, p, detail);
}

/* ------------------------------------------------------------ spectrum */

static int mode_in_spectrum(const el_mode *m, double fmax)
{
    return m->pair && !m->at_nyquist && isfinite(m->frequency_hz) && m->frequency_hz > 0 &&
           m->frequency_hz <= fmax;
}

static void spectrum_panel(ctx *c, const el_spectra *sp, size_t ch)
{
    const double *psd = sp->psd + ch * sp->n_bins;
    double f_top = sp->frequency_hz[sp->n_bins - 1];
    double top = 0;
    for (size_t k = 1; k < sp->n_bins; k++)
        top = fmax(top, psd[k]);
    /* Below 1e-12 of the peak is FFT rounding (as in peak picking). */
    double floor_v = top * 1e-12, lo = INFINITY;
    for (size_t k = 1; k < sp->n_bins; k++)
        if (psd[k] > floor_v)
            lo = fmin(lo, psd[k]);
    int ok = top > 0 && isfinite(lo);
    el_svg_frame f = {.left = 84, .top = 24, .width = 852, .height = 170, .xlo = 0,
               .xhi = f_top > 0 ? f_top : 1, .ylog = 1,
               .ylo = ok ? floor(log10(lo)) : -1, .yhi = ok ? ceil(log10(top) + 0.05) : 0};
    if (f.yhi - f.ylo < 1)
        f.ylo = f.yhi - 1;
    char clip[32];
    snprintf(clip, sizeof clip, "clip-psd-%zu", ch);
    el_svg_begin(c, 960, 246, c->r->series.names[ch]);
    el_svg_clip_def(c, clip, &f);
    el_svg_x_ticks(c, &f);
    el_svg_y_ticks(c, &f);
    if (ok)
        line_path(c, &f, "psd", sp->frequency_hz[1], sp->df_hz, psd + 1, sp->n_bins - 1, 1, clip);
    const el_modes *md = &c->r->modes;
    for (size_t m = 0; m < md->n_modes; m++) {
        if (!mode_in_spectrum(&md->modes[m], f.xhi))
            continue;
        double x = el_svg_fx(&f, md->modes[m].frequency_hz);
        el_buf_printf(c->o, "<line class=\"modeline\" data-mode=\"%zu\" stroke=\"%s\" "
                      "x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/><text class=\"estlabel\" "
                      "fill=\"%s\" style=\"fill:%s\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">"
                      "%zu</text>", m + 1, el_svg_mode_colour(m), x, x, f.top, f.top + f.height,
                      el_svg_mode_colour(m), el_svg_mode_colour(m), x, f.top - 6, m + 1);
    }
    el_svg_frame_box(c, &f);
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" font-weight=\"600\" "
                  "text-anchor=\"end\">", f.left + f.width, f.top - 8);
    put_channel_label(c, ch);
    el_svg_put(c, "</text>");
    el_svg_x_title_begin(c, &f);
    el_svg_put(c, "frequency [");
    el_svg_esc(c, c->freq_unit);
    el_svg_put(c, "]</text>");
    el_svg_y_title_begin(c, &f);
    el_svg_put(c, "PSD [");
    const char *u = channel_unit(c, ch);
    if (u[0] != '\0') {
        el_svg_put(c, "(");
        el_svg_esc(c, u);
        el_svg_put(c, ")&sup2;/");
    } else {
        el_svg_put(c, "1/");
    }
    el_svg_esc(c, c->freq_unit);
    el_svg_put(c, "]</text></svg>\n");
}

static void fig_spectrum(ctx *c, const el_spectra *sp)
{
    el_svg_put(c, "<figure id=\"fig-spectrum\">");
    for (size_t ch = 0; ch < sp->n_channels; ch++)
        spectrum_panel(c, sp, ch);
    el_svg_caption_begin(c, "Power spectra (Welch).");
    el_buf_printf(c->o, "Segments of %zu samples with 50 %% overlap, Hann window, %zu segments "
                  "averaged; bin spacing ", sp->segment_length, sp->n_segments);
    el_svg_put_num(c, sp->df_hz, 4);
    el_svg_put(c, " ");
    el_svg_esc(c, c->freq_unit);
    el_svg_put(c, ". Dashed vertical lines: the frequencies of the model's oscillatory modes, "
           "numbered as in the mode table; a mode the data support should sit on a peak.");
    if (sp->n_bins - 1 > EL_HTML_MAX_LINE_POINTS)
        el_buf_printf(c->o, " Lines show the minimum and maximum of each of %d runs of bins.",
                      EL_HTML_MAX_LINE_POINTS / 2);
    el_svg_put(c, "</figcaption></figure>\n");
}

/* ------------------------------------------------------------ modes */

static void shape_bar(ctx *c, double mag, const char *colour)
{
    double w = isfinite(mag) ? fmax(0, fmin(1, mag)) * 64 : 0;
    el_buf_printf(c->o, "<svg class=\"bar\" width=\"64\" height=\"12\" viewBox=\"0 0 64 12\">"
                  "<rect x=\"0\" y=\"2\" width=\"64\" height=\"8\" rx=\"2\" fill=\"#ebe7de\"/>"
                  "<rect x=\"0\" y=\"2\" width=\"%.1f\" height=\"8\" rx=\"2\" fill=\"%s\"/></svg>",
                  w, colour);
}

/* Phase dial: an arrow at the channel's phase (counter-clockwise from
 * the right). */
static void shape_dial(ctx *c, double mag, double phase_deg, const char *colour)
{
    el_svg_put(c, "<svg class=\"dial\" width=\"24\" height=\"24\" viewBox=\"0 0 24 24\">"
           "<circle cx=\"12\" cy=\"12\" r=\"10\" fill=\"none\" stroke=\"#cfc8bb\"/>"
           "<line x1=\"2\" x2=\"22\" y1=\"12\" y2=\"12\" stroke=\"#ebe7de\"/>");
    if (isfinite(mag) && isfinite(phase_deg)) {
        /* Unit length: the bar beside it carries the magnitude, and a
         * short arrow would hide the phase of a small share. */
        double a = phase_deg * M_PI / 180.0, len = 9;
        double x = 12 + len * cos(a), y = 12 - len * sin(a);
        el_buf_printf(c->o, "<line x1=\"12\" y1=\"12\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"%s\" "
                      "stroke-width=\"2\" stroke-linecap=\"round\"/><circle cx=\"%.1f\" "
                      "cy=\"%.1f\" r=\"1.8\" fill=\"%s\"/>", x, y, colour, x, y, colour);
    }
    el_svg_put(c, "</svg>");
}

/* The shape in units of each channel's standard deviation (the raw-unit
 * shape is in the JSON) and the participation factors; hand-built modes
 * without them show n/a. */
static void mode_shape_cell(ctx *c, const el_mode *m, size_t index)
{
    const el_series *s = &c->r->series;
    const char *colour = el_svg_mode_colour(index);
    el_svg_put(c, "<td><table class=\"shape\">");
    for (size_t ch = 0; ch < c->r->modes.n_channels; ch++) {
        double mag = m->shape_scaled_magnitude ? m->shape_scaled_magnitude[ch] : NAN;
        double ph = m->shape_scaled_phase_deg ? m->shape_scaled_phase_deg[ch] : NAN;
        el_svg_put(c, "<tr><td class=\"ch\">");
        el_svg_esc(c, s->names[ch]);
        el_svg_put(c, "</td><td>");
        shape_bar(c, mag, colour);
        el_svg_put(c, "</td><td>");
        shape_dial(c, mag, ph, colour);
        el_svg_put(c, "</td><td class=\"n\">");
        el_svg_put_num(c, mag, 2);
        el_svg_put(c, " &ang; ");
        el_svg_put_num(c, ph, 3);
        el_svg_put(c, "&deg;</td><td class=\"n pf\">");
        el_svg_put_num(c, m->participation ? m->participation[ch] : NAN, 2);
        el_svg_put(c, "</td></tr>");
    }
    el_svg_put(c, "</table></td>");
}

static const el_mode_bounds *bounds_of(const ctx *c, size_t i)
{
    return c->boot && i < c->r->boot.n_modes ? &c->r->boot.bounds[i] : NULL;
}

static void mode_lambda_cell(ctx *c, const el_mode *m, const el_mode_bounds *b)
{
    el_svg_put(c, "<td class=\"n\">");
    if (m->instantaneous) {
        el_svg_put(c, "&minus;&infin; (&mu; = 0)");
    } else {
        el_svg_put_num(c, m->lambda_re, 4);
        if (m->pair) {
            el_svg_put(c, " &plusmn; ");
            el_svg_put_num(c, m->lambda_im, 4);
            el_svg_put(c, "i");
        }
    }
    if (b != NULL) {
        el_svg_put_bounds(c, "Re ", &b->re, 3);
        if (m->pair)
            el_svg_put_bounds(c, "Im ", &b->im, 4);
    }
    el_svg_put(c, "</td>");
}

static void mode_value_cell(ctx *c, double v, const el_interval *iv)
{
    el_svg_put(c, "<td class=\"n\">");
    el_svg_put_num(c, v, 4);
    if (iv != NULL)
        el_svg_put_bounds(c, "", iv, 3);
    el_svg_put(c, "</td>");
}

static void mode_row(ctx *c, size_t i)
{
    const el_mode *m = &c->r->modes.modes[i];
    const el_mode_bounds *b = bounds_of(c, i);
    el_buf_printf(c->o, "<tr id=\"mode-%zu\"><td class=\"n\"><span class=\"swatch\" "
                  "style=\"background:%s\"></span><b>%zu</b></td>", i + 1, el_svg_mode_colour(i), i + 1);
    mode_lambda_cell(c, m, b);
    if (m->at_nyquist)
        el_svg_put(c, "<td class=\"n\">n/a<div class=\"iv\">at Nyquist: aliased</div></td>");
    else
        mode_value_cell(c, m->frequency_hz, b ? &b->frequency_hz : NULL);
    mode_value_cell(c, m->damping_ratio, b ? &b->damping_ratio : NULL);
    mode_value_cell(c, m->decay_rate, b ? &b->decay_rate : NULL);
    el_svg_put(c, "<td class=\"n\">");
    el_svg_put_num(c, m->time_constant_s, 4);
    if (isfinite(m->time_constant_s))
        el_buf_printf(c->o, "<div class=\"iv\">%s</div>", m->decay_rate < 0 ? "doubling" : "decay");
    el_svg_put(c, "</td>");
    mode_shape_cell(c, m, i);
    el_svg_put(c, "</tr>\n");
}

static void fig_modes(ctx *c)
{
    const el_svg_column cols[] = {{"#", NULL},
                           {"&lambda;", c->rate_unit},
                           {"frequency", c->freq_unit},
                           {"damping &zeta;", NULL},
                           {"decay rate", c->rate_unit},
                           {"time constant", c->time_unit},
                           {"shape (&times; std) &middot; participation", NULL}};
    el_svg_table_open(c, "fig-modes", "modes", cols, sizeof cols / sizeof cols[0]);
    for (size_t i = 0; i < c->r->modes.n_modes; i++)
        mode_row(c, i);
    el_svg_put(c, "</tbody></table>\n");
    el_svg_caption_begin(c, "Modes, least damped first.");
    if (c->r->method_stood_in) {
        el_svg_put(c, " <b>Fitted by least squares in place of ");
        el_svg_esc(c, el_method_name(c->r->method_refused));
        el_svg_put(c, ", which could not fit a model: these modes describe noise, not the "
                      "system.</b> ");
    }
    if (c->boot && isfinite(c->level))
        el_buf_printf(c->o, "Grey brackets: %.3g %% bootstrap bounds. ", 100.0 * c->level);
    el_svg_put(c, "Frequency f = Im &lambda; / 2&pi;; damping ratio &zeta; = &minus;Re &lambda; / "
           "|&lambda;|; decay rate &minus;Re &lambda; (negative: growing); time constant "
           "1/|Re &lambda;| (decay) or ln 2 / Re &lambda; (doubling). Shape: how much each "
           "channel moves in the mode in units of its own standard deviation over the "
           "window (bar, largest = 1), and its phase relative to the largest (arrow angle, "
           "counter-clockwise); the shape in the channels' own units is in the JSON. Last "
           "number: the channel's participation factor (Perez-Arriaga, Verghese &amp; "
           "Schweppe 1982; the channels' shares sum to 1, units do not change it).");
    if (!c->boot)
        el_svg_put(c, " Bounds n/a: no bootstrap was run.");
    el_svg_put(c, "</figcaption></figure>\n");
}

static void details_section(ctx *c)
{
    const el_assessment *r = c->r;
    const el_series *s = &r->series;
    const el_model *m = &r->model;
    el_svg_put(c, "<h2 class=\"section\">Data, model and resampling</h2>\n"
           "<table class=\"details\" id=\"details\">");
    el_svg_detail_row_begin(c, "log");
    el_svg_esc(c, r->table.source);
    el_buf_printf(c->o, ", %zu rows, %zu used%s, %zu cells filled</td></tr>", r->table.n_rows,
                  s->rows_used, s->resampled ? " (resampled to a uniform grid)" : "",
                  s->filled_cells);
    el_svg_detail_row_begin(c, "model");
    el_buf_printf(c->o, "z[k+1] = A<sub>d</sub> z[k]%s + c, %s%s; %zu state%s "
                  "(%zu channel%s, %zu lag%s), rank %zu%s, %zu snapshot pairs</td></tr>",
                  m->n_inputs > 0 ? " + B u[k]" : "", el_method_description(m->method),
                  m->rank < m->state_dim ? " (rank-truncated)" : "", m->state_dim,
                  m->state_dim == 1 ? "" : "s", m->n_channels, m->n_channels == 1 ? "" : "s",
                  m->lags, m->lags == 1 ? "" : "s", m->rank,
                  !m->rank_was_auto ? ""
                  : m->method == EL_METHOD_LS ? " (optimal hard threshold)"
                                              : " (canonical-correlation rank test)",
                  m->n_pairs);
    if (r->method_stood_in && !r->method_was_auto) {
        el_svg_detail_row_begin(c, "estimator choice");
        el_svg_esc(c, el_method_name(m->method));
        el_svg_put(c, ", ");
        el_svg_esc(c, r->method_reason);
        el_svg_put(c, "</td></tr>");
    }
    if (r->method_was_auto) {
        el_svg_detail_row_begin(c, "estimator choice");
        el_svg_esc(c, r->method_reason);
        if (r->cross_ran) {
            el_buf_printf(c->o, "; cross-check by %s %s", el_method_name(r->cross_method),
                          el_assess_ls_stable_beside_growth(r)
                              ? "leans stable, not counted against growth (sensor noise "
                                "biases least squares towards stability)"
                          : r->cross_agrees ? "agrees" : "disagrees");
            if (isfinite(r->cross_p_stable))
                el_buf_printf(c->o, " (stable in %.0f of its %zu bootstrap replicates)",
                              r->cross_p_stable * (double)r->cross_boot.replicates,
                              r->cross_boot.replicates);
        }
        el_svg_put(c, "</td></tr>");
    }
    if (r->state_check.ran) {
        el_svg_detail_row_begin(c, "plain-state check");
        el_buf_printf(c->o,
                      "iv without lags: stable in %.0f of its %zu bootstrap replicates; %s",
                      r->state_check.p_stable * (double)r->state_check.replicates,
                      r->state_check.replicates,
                      r->state_check.withdraws ? "the &ldquo;unstable&rdquo; is withdrawn"
                                               : "the growth stands");
        el_svg_put(c, "</td></tr>");
    }
    el_svg_detail_row_begin(c, "one-step R&sup2;");
    el_svg_put_num(c, m->fit_r2, 4);
    el_svg_put(c, " overall");
    for (size_t ch = 0; ch < s->n_channels && m->channel_r2; ch++) {
        el_svg_put(c, "; ");
        el_svg_esc(c, s->names[ch]);
        el_svg_put(c, " ");
        el_svg_put_num(c, m->channel_r2[ch], 4);
    }
    el_svg_put(c, "</td></tr>");
    el_svg_detail_row_begin(c, "operating point");
    for (size_t ch = 0; ch < s->n_channels; ch++) {
        el_svg_put(c, ch ? "; " : "");
        el_svg_esc(c, s->names[ch]);
        el_svg_put(c, " ");
        el_svg_put_num(c, r->operating_point_ok && r->operating_point ? r->operating_point[ch] : NAN, 6);
        el_svg_put(c, " ");
        el_svg_esc(c, channel_unit(c, ch));
    }
    if (!m->operating_point_ok)
        el_svg_put(c, " (I &minus; A<sub>d</sub> is singular: no isolated fixed point)");
    el_svg_put(c, "</td></tr>");
    el_svg_detail_row_begin(c, "bootstrap");
    if (c->boot) {
        const el_boot_result *b = &r->boot;
        el_buf_printf(c->o, "%zu replicates (%zu failed), %s resampling", b->replicates,
                      b->failed_replicates,
                      b->kind == EL_RESAMPLE_MODEL ? "model-based residual" : "moving-block");
        if (b->kind != EL_RESAMPLE_MODEL)
            el_buf_printf(c->o, ", block length %zu%s", b->block_length,
                          b->block_was_auto ? " (automatic)" : "");
        el_buf_printf(c->o, ", seed %llu", (unsigned long long)b->seed);
    } else {
        el_svg_put(c, "not run (bounds and P(stable) n/a)");
    }
    el_svg_put(c, "</td></tr></table>\n");
}

/* ------------------------------------------------------------ entry */

static el_status check_input(const el_assessment *r, const el_spectra *sp, el_error *err)
{
    if (r == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_html_report: no assessment");
    const el_series *s = &r->series;
    if (s->values == NULL || s->names == NULL || s->n_channels == 0 || s->n_samples < 2 ||
        r->modes.modes == NULL || r->modes.n_channels != s->n_channels ||
        r->model.n_channels != s->n_channels)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_html_report: the assessment is incomplete (series, model "
                            "or modes missing)");
    if (sp != NULL && (sp->n_channels != s->n_channels || sp->n_bins < 3 ||
                       sp->psd == NULL || sp->frequency_hz == NULL))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_html_report: spectra of %zu channels for %zu series channels",
                            sp->n_channels, s->n_channels);
    return EL_OK;
}

/* Predictions for the time-series figures; NULL (figures without model
 * lines) when the model has no matrices or the window is too short. */
static el_status make_prediction(const el_assessment *r, el_prediction **p, el_error *err)
{
    const el_model *m = &r->model;
    *p = NULL;
    if (m->ad == NULL || m->offset == NULL || r->series.n_samples < m->lags + 2)
        return EL_OK;
    el_status st = el_prediction_create(m->n_channels, m->lags, r->series.n_samples, p, err);
    if (st == EL_OK) {
        el_prediction_set_inputs(*p, r->has_inputs ? &r->inputs : NULL);
        st = el_prediction_run(*p, m, &r->series, err);
    }
    if (st != EL_OK) {
        el_prediction_destroy(*p);
        *p = NULL;
    }
    return st;
}

el_status el_html_report(const el_assessment *r, const el_assess_options *opt,
                         const el_spectra *spectra, el_buf *out, el_error *err)
{
    el_status st = check_input(r, spectra, err);
    if (st != EL_OK)
        return st;
    ctx c = {.r = r, .o = out, .boot = boot_ran(r)};
    c.level = opt != NULL ? opt->boot.level : c.boot ? r->boot.level : NAN;
    el_svg_set_units(&c, table_time_unit(&r->table));
    el_prediction *pred = NULL;
    if ((st = make_prediction(r, &pred, err)) != EL_OK)
        return st;
    double *scratch = malloc((r->boot.replicates + 1) * sizeof *scratch);
    if (scratch == NULL) {
        el_prediction_destroy(pred);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    el_svg_page_begin(&c);
    verdict_section(&c);
    warnings_section(&c);
    cautions_section(&c);
    el_svg_put(&c, "<h2 class=\"section\">Eigenvalues</h2>\n");
    fig_eigenvalues(&c, scratch);
    if (r->verdict.has_plane)
        fig_plane(&c, scratch);
    el_svg_put(&c, "<h2 class=\"section\">Measured and model</h2>\n");
    for (size_t ch = 0; ch < r->series.n_channels; ch++)
        fig_timeseries(&c, ch, pred);
    if (spectra != NULL) {
        el_svg_put(&c, "<h2 class=\"section\">Spectra</h2>\n");
        fig_spectrum(&c, spectra);
    }
    el_svg_put(&c, "<h2 class=\"section\">Modes</h2>\n");
    fig_modes(&c);
    if (el_html_stab_present(&c)) {
        el_svg_put(&c, "<h2 class=\"section\">Model order</h2>\n");
        el_html_stab_figure(&c);
    }
    details_section(&c);
    el_svg_page_end(&c);
    free(scratch);
    el_prediction_destroy(pred);
    if (out->failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory while writing the HTML report");
    return EL_OK;
}
