/* el_html_stab: the poles of every model order of the subspace stage as
 * one figure of the assess page: order across, frequency up, persistent
 * poles joined along their chains, spurious ones as faint rings, the
 * model's order as a band. */
#include "el_html_stab.h"

#include <math.h>
#include <stdio.h>

/* Headroom above the highest persistent pole: spurious poles just above
 * it stay in view, the far ones (up to Nyquist) do not squeeze the
 * plot. */
#define STAB_HEADROOM 1.5

int el_html_stab_present(const el_html_ctx *c)
{
    const el_model *m = &c->r->model;
    return m->method == EL_METHOD_HANKEL && m->subspace_n_poles > 0 &&
           m->subspace_poles != NULL && m->subspace_max_order > 0;
}

static const char *pole_kind(const el_model_pole *q)
{
    return q->in_model ? "in-model" : q->physical ? "persistent" : "spurious";
}

/* Top of the frequency axis: STAB_HEADROOM times the highest persistent
 * pole (every pole when none persists), at most Nyquist; a positive
 * value even when every pole is real. */
static double stab_ymax(const el_model *m)
{
    double nyq = 0.5 / m->dt, top = 0.0, any = 0.0;
    for (size_t k = 0; k < m->subspace_n_poles; k++) {
        double f = m->subspace_poles[k].frequency_hz;
        if (!isfinite(f))
            continue;
        any = fmax(any, f);
        if (m->subspace_poles[k].physical)
            top = fmax(top, f);
    }
    double y = STAB_HEADROOM * (top > 0.0 ? top : any);
    if (!(y > 0.0) || y > nyq)
        y = nyq;
    return y;
}

static int drawable(const el_svg_frame *f, const el_model_pole *q)
{
    return isfinite(q->frequency_hz) && q->frequency_hz <= f->yhi;
}

/* One path per chain of persistent poles over two or more orders. */
static void stab_chains(el_html_ctx *c, const el_svg_frame *f)
{
    const el_model *m = &c->r->model;
    size_t n = m->subspace_n_poles;
    for (size_t k = 0; k < n; k++) {
        const el_model_pole *q = &m->subspace_poles[k];
        if (!q->physical || !drawable(f, q))
            continue;
        /* Start a path at the chain's first drawable pole only. */
        int first = 1;
        for (size_t j = 0; j < k && first; j++)
            first = !(m->subspace_poles[j].chain == q->chain &&
                      m->subspace_poles[j].physical && drawable(f, &m->subspace_poles[j]));
        size_t count = 0;
        for (size_t j = k; first && j < n; j++)
            count += m->subspace_poles[j].chain == q->chain &&
                     m->subspace_poles[j].physical && drawable(f, &m->subspace_poles[j]);
        if (!first || count < 2)
            continue;
        el_buf_printf(c->o, "<path class=\"chain%s\" d=\"", q->in_model ? " in-model" : "");
        const char *cmd = "M";
        for (size_t j = k; j < n; j++) {
            const el_model_pole *p = &m->subspace_poles[j];
            if (p->chain != q->chain || !p->physical || !drawable(f, p))
                continue;
            el_buf_printf(c->o, "%s%.1f %.1f", cmd, el_svg_fx(f, (double)p->order),
                          el_svg_fy(f, p->frequency_hz));
            cmd = "L";
        }
        el_svg_put(c, "\"/>");
    }
}

/* Every pole with its tooltip; spurious ones first so persistent ones
 * are drawn on top. Counts the poles left out. */
static void stab_poles(el_html_ctx *c, const el_svg_frame *f, size_t *above, size_t *no_freq)
{
    const el_model *m = &c->r->model;
    for (int pass = 0; pass < 2; pass++) {
        for (size_t k = 0; k < m->subspace_n_poles; k++) {
            const el_model_pole *q = &m->subspace_poles[k];
            if ((q->physical != 0) != (pass == 1))
                continue;
            if (!isfinite(q->frequency_hz)) {
                *no_freq += 1;
                continue;
            }
            if (q->frequency_hz > f->yhi) {
                *above += 1;
                continue;
            }
            el_buf_printf(c->o, "<circle class=\"pole %s\" data-order=\"%zu\" cx=\"%.1f\" "
                          "cy=\"%.1f\" r=\"%s\"><title>order %zu: ", pole_kind(q), q->order,
                          el_svg_fx(f, (double)q->order), el_svg_fy(f, q->frequency_hz),
                          q->in_model ? "5" : q->physical ? "4" : "3", q->order);
            el_svg_put_num(c, q->frequency_hz, 4);
            el_svg_put(c, " ");
            el_svg_esc(c, c->freq_unit);
            el_svg_put(c, ", damping ratio ");
            el_svg_put_num(c, q->damping_ratio, 3);
            el_svg_put(c, ", contribution ");
            el_svg_put_num(c, 100.0 * q->contribution, 3);
            el_buf_printf(c->o, " %%, %s%s</title></circle>",
                          q->physical ? "persistent" : "spurious",
                          q->in_model ? " (in the model)" : "");
        }
    }
}

/* The reported mode nearest in frequency to a kept pole (1-based; 0
 * when there is none). */
static size_t nearest_mode(const el_html_ctx *c, const el_model_pole *q)
{
    const el_modes *md = &c->r->modes;
    size_t best = 0;
    double bd = INFINITY;
    for (size_t i = 0; i < md->n_modes; i++) {
        double f = md->modes[i].at_nyquist ? NAN : md->modes[i].frequency_hz;
        double d = fabs(f - q->frequency_hz);
        if (isfinite(d) && d < bd) {
            bd = d;
            best = i + 1;
        }
    }
    return best;
}

/* The model's order as a band, and the numbers of its modes. */
static void stab_chosen(el_html_ctx *c, const el_svg_frame *f)
{
    const el_model *m = &c->r->model;
    double x = el_svg_fx(f, (double)m->subspace_order);
    double half = 0.5 * f->width / (f->xhi - f->xlo);
    el_buf_printf(c->o, "<rect class=\"chosen-order\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/><text class=\"region\" x=\"%.1f\" y=\"%.1f\" "
                  "text-anchor=\"middle\">model order %zu</text>", x - half, f->top, 2 * half,
                  f->height, x, f->top - 6, m->subspace_order);
}

static void stab_labels(el_html_ctx *c, const el_svg_frame *f)
{
    const el_model *m = &c->r->model;
    for (size_t k = 0; k < m->subspace_n_poles; k++) {
        const el_model_pole *q = &m->subspace_poles[k];
        if (q->order != m->subspace_order || !q->in_model || !drawable(f, q))
            continue;
        size_t mode = nearest_mode(c, q);
        if (mode == 0)
            continue;
        el_buf_printf(c->o, "<text class=\"estlabel\" x=\"%.1f\" y=\"%.1f\">%zu</text>",
                      el_svg_fx(f, (double)q->order) + 8, el_svg_fy(f, q->frequency_hz) - 7,
                      mode);
    }
}

static void stab_legend(el_html_ctx *c, const el_svg_frame *f)
{
    double x = f->left + f->width - 600, y = f->top - 20;
    el_buf_printf(c->o, "<g class=\"legend\">"
                  "<circle class=\"key in-model\" cx=\"%.1f\" cy=\"%.1f\" r=\"5\"/>"
                  "<text x=\"%.1f\" y=\"%.1f\">kept in the model</text>"
                  "<circle class=\"key persistent\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\"/>"
                  "<text x=\"%.1f\" y=\"%.1f\">persistent, not kept</text>"
                  "<circle class=\"key spurious\" cx=\"%.1f\" cy=\"%.1f\" r=\"3\"/>"
                  "<text x=\"%.1f\" y=\"%.1f\">spurious</text>"
                  "<path class=\"chain\" d=\"M%.1f %.1fh22\"/>"
                  "<text x=\"%.1f\" y=\"%.1f\">same pole across orders</text></g>",
                  x, y, x + 10, y + 4, x + 150, y, x + 160, y + 4, x + 320, y, x + 330, y + 4,
                  x + 410, y, x + 438, y + 4);
}

static void stab_caption(el_html_ctx *c, size_t above, size_t no_freq)
{
    const el_model *m = &c->r->model;
    size_t n_pers = 0;
    for (size_t k = 0; k < m->subspace_n_poles; k++)
        n_pers += m->subspace_poles[k].physical != 0;
    el_svg_caption_begin(c, "Poles across model orders.");
    el_buf_printf(c->o, "Each column is the subspace model of one order (1 to %zu, all from "
                  "one SVD); a dot is one pole (a complex pair once) at its damped "
                  "frequency. A pole is persistent when it reappears at consecutive orders "
                  "within 1 %% in frequency, 5 %% in damping ratio and a shape correlation "
                  "(MAC) of 0.98 over at least 5 orders, and carries at least 0.3 %% of its "
                  "order's modal contributions; the others are spurious (noise or "
                  "over-fitting). Lines join the same persistent pole across orders. The band "
                  "marks the model's order %zu; its kept poles are numbered as in the mode "
                  "table. Hover a dot for its damping ratio and contribution. %zu poles, %zu "
                  "persistent.", m->subspace_max_order, m->subspace_order,
                  m->subspace_n_poles, n_pers);
    if (above > 0)
        el_buf_printf(c->o, " %zu pole%s above the view not drawn.", above,
                      above == 1 ? "" : "s");
    if (no_freq > 0)
        el_buf_printf(c->o, " %zu pole%s at the Nyquist limit (no frequency) not drawn.",
                      no_freq, no_freq == 1 ? "" : "s");
    el_svg_put(c, "</figcaption></figure>\n");
}

void el_html_stab_figure(el_html_ctx *c)
{
    if (!el_html_stab_present(c))
        return;
    const el_model *m = &c->r->model;
    /* A little room below 0 Hz: the real poles sit on the axis whole. */
    double ymax = stab_ymax(m);
    el_svg_frame f = {.left = 84, .top = 44, .width = 852, .height = 330, .xlo = 0.5,
                      .xhi = (double)m->subspace_max_order + 0.5, .ylo = -0.03 * ymax,
                      .yhi = ymax};
    el_svg_put(c, "<figure id=\"fig-orders\">");
    el_svg_begin(c, 960, 430, "poles of every model order");
    el_svg_clip_def(c, "clip-orders", &f);
    el_svg_x_ticks(c, &f);
    el_svg_y_ticks(c, &f);
    stab_chosen(c, &f);
    size_t above = 0, no_freq = 0;
    el_svg_put(c, "<g clip-path=\"url(#clip-orders)\">");
    stab_chains(c, &f);
    stab_poles(c, &f, &above, &no_freq);
    el_svg_put(c, "</g>");
    stab_labels(c, &f);
    stab_legend(c, &f);
    el_svg_frame_box(c, &f);
    el_svg_x_title_begin(c, &f);
    el_svg_put(c, "model order</text>");
    el_svg_y_title_begin(c, &f);
    el_svg_put(c, "damped frequency [");
    el_svg_esc(c, c->freq_unit);
    el_svg_put(c, "]</text></svg>\n");
    stab_caption(c, above, no_freq);
}
