/* el_svg: what every HTML page of eigenlog is built from: text and number
 * output, the page frame (style sheet, head, verdict tiles, warnings,
 * caution, captions), and the SVG primitives (scales, axes, ticks, dots,
 * markers, lines, colours). The pages (el_html.c: assess; el_html_track.c:
 * track) each build their figures from these. */
#include "el_svg.h"

#include "el_report.h"
#include "el_warnlines.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Mode colours: distinct in hue and lightness so that clouds stay apart
 * in greyscale print as well. */
static const char *const MODE_COLOUR[] = {"#2f6f9f", "#c2762a", "#3f8f6b", "#8a5aa8",
                                          "#a8434f", "#6b7a2a", "#4b8fb0", "#9a6b3a"};
#define N_MODE_COLOURS (sizeof MODE_COLOUR / sizeof MODE_COLOUR[0])

const char *el_svg_mode_colour(size_t m)
{
    return MODE_COLOUR[m % N_MODE_COLOURS];
}

/* ------------------------------------------------------------ text */

el_status el_html_escape(el_buf *out, const char *text)
{
    if (text == NULL)
        return out->failed ? EL_ERR_NOMEM : EL_OK;
    const char *run = text;
    for (const char *p = text; *p != '\0'; p++) {
        const char *entity = NULL;
        switch (*p) {
        case '&': entity = "&amp;"; break;
        case '<': entity = "&lt;"; break;
        case '>': entity = "&gt;"; break;
        case '"': entity = "&quot;"; break;
        case '\'': entity = "&#39;"; break;
        default: continue;
        }
        el_buf_append(out, run, (size_t)(p - run));
        el_buf_append(out, entity, strlen(entity));
        run = p + 1;
    }
    el_buf_append(out, run, strlen(run));
    return out->failed ? EL_ERR_NOMEM : EL_OK;
}

void el_svg_put(el_html_ctx *c, const char *s)
{
    el_buf_append(c->o, s, strlen(s));
}

void el_svg_esc(el_html_ctx *c, const char *s)
{
    el_html_escape(c->o, s);
}

/* "%.4g" (sig significant digits) or "n/a" for a value that does not
 * exist; never "nan" or "inf". */
const char *el_svg_num(char *buf, size_t size, double v, int sig)
{
    if (!isfinite(v))
        snprintf(buf, size, "n/a");
    else
        snprintf(buf, size, "%.*g", sig, v == 0 ? 0.0 : v);
    return buf;
}

void el_svg_put_num(el_html_ctx *c, double v, int sig)
{
    char b[40];
    el_svg_put(c, el_svg_num(b, sizeof b, v, sig));
}

/* Unit texts from the time unit u ("" when the log does not say). */
void el_svg_set_units(el_html_ctx *c, const char *u)
{
    if (u[0] == '\0')
        u = "time unit";
    snprintf(c->time_unit, sizeof c->time_unit, "%s", u);
    snprintf(c->rate_unit, sizeof c->rate_unit, "1/%s", u);
    if (strcmp(u, "s") == 0)
        snprintf(c->freq_unit, sizeof c->freq_unit, "Hz");
    else
        snprintf(c->freq_unit, sizeof c->freq_unit, "cycles/%s", u);
}

/* ------------------------------------------------------------ page */

/* One string per rule group: ISO C caps a literal at 4095 bytes. */
static const char *const CSS[] = {
    ":root{--paper:#f4f2ec;--card:#fff;--ink:#1d2327;--muted:#62686f;--rule:#ddd7cc;"
    "--soft:#ebe7de;--stable:#3b7752;--unstable:#ae4330;--unsure:#a97418;"
    "--meas:#93a6ba;--one:#b8620c;--free:#5b3a8c;--est:#b8323f}\n",
    "*{box-sizing:border-box}\n",
    "html{-webkit-text-size-adjust:100%}\n",
    "body{margin:0;background:var(--paper);color:var(--ink);"
    "font:15px/1.5 \"DejaVu Sans\",\"Segoe UI\",Helvetica,Arial,sans-serif}\n",
    "main{max-width:1080px;margin:0 auto;padding:26px 26px 40px}\n",
    ".top{display:flex;flex-wrap:wrap;justify-content:space-between;align-items:baseline;"
    "gap:4px 24px;border-bottom:2px solid var(--ink);padding-bottom:6px;margin-bottom:18px}\n",
    ".brand{font-weight:700;letter-spacing:.12em;font-size:13px;text-transform:uppercase}\n",
    ".top .file{font-size:18px;font-weight:600;word-break:break-all}\n",
    ".top .when{color:var(--muted);font-size:13px;width:100%}\n",
    ".verdict{display:flex;flex-wrap:wrap;gap:14px 30px;align-items:center;"
    "background:var(--card);border:1px solid var(--rule);border-left:12px solid var(--v);"
    "border-radius:8px;padding:18px 22px}\n",
    ".vhead{min-width:210px}\n",
    ".vword{font-size:40px;line-height:1.05;font-weight:700;color:var(--v);letter-spacing:.05em}\n",
    ".vtag{display:inline-block;margin:6px 0 2px;font-size:12px;font-weight:700;"
    "letter-spacing:.1em;text-transform:uppercase;color:#fff;background:var(--v);"
    "border-radius:3px;padding:1px 8px}\n",
    ".vtype{font-size:15px;margin-top:4px}\n",
    ".tiles{flex:1;display:grid;grid-template-columns:repeat(auto-fit,minmax(150px,1fr));"
    "gap:10px;min-width:300px}\n",
    ".tile{border-left:1px solid var(--rule);padding:2px 4px 2px 14px}\n",
    ".tl{font-size:11.5px;letter-spacing:.1em;text-transform:uppercase;color:var(--muted)}\n",
    ".tv{font-size:24px;font-weight:700;font-variant-numeric:tabular-nums;line-height:1.25}\n",
    ".tv small{font-size:13px;font-weight:400;color:var(--muted)}\n",
    ".ts{font-size:12px;color:var(--muted);line-height:1.35}\n",
    ".meter{display:block;width:200px;max-width:100%;height:auto;margin:5px 0 0}\n",
    ".warnings{margin:14px 0 0;background:#fbf6ea;border:1px solid #e8d9b5;border-radius:8px;"
    "padding:10px 18px}\n",
    ".warnings h2{font-size:14px;margin:0 0 4px;letter-spacing:.06em;text-transform:uppercase;"
    "color:#7d5a12}\n",
    ".warnings ul{margin:0;padding-left:20px}.warnings li{margin:2px 0}\n",
    ".nowarn{margin:14px 0 0;color:var(--muted)}\n",
    ".caution{margin:14px 0 0;padding:10px 18px;border-left:4px solid var(--muted);"
    "background:var(--soft);border-radius:0 8px 8px 0;font-size:14px}\n",
    "h2.section{font-size:13px;letter-spacing:.12em;text-transform:uppercase;color:var(--muted);"
    "margin:30px 0 8px;border-bottom:1px solid var(--rule);padding-bottom:3px}\n",
    "figure{margin:14px 0 18px;background:var(--card);border:1px solid var(--rule);"
    "border-radius:8px;padding:14px 16px 10px;break-inside:avoid;page-break-inside:avoid}\n",
    "figcaption{color:var(--muted);font-size:13.5px;margin-top:6px}\n",
    "figcaption b{color:var(--ink)}\n",
    "svg.plot{display:block;width:100%;height:auto}\n",
    ".plot text{font-family:inherit;font-size:13px;fill:var(--ink)}\n",
    ".plot .tick{font-size:12px;fill:var(--muted)}\n",
    ".plot .note{font-size:12.5px;fill:var(--muted);font-style:italic}\n",
    ".plot .region{font-size:13px;fill:#4a5057;font-style:italic}\n",
    ".plot .grid{stroke:#ece8df;stroke-width:1}\n",
    ".plot .frame{fill:none;stroke:#b9b3a8;stroke-width:1}\n",
    ".plot .zero{stroke:#8d949b;stroke-width:1}\n",
    ".plot .boundary{stroke:var(--stable);stroke-width:2.4}\n",
    ".plot .stable-side{fill:#e6efe2}\n",
    ".plot .parabola{fill:none;stroke:#5b6168;stroke-width:1.8}\n",
    ".plot .cloud,.plot .cloud-zoom,.plot .cloud-key{fill:none;stroke-width:3.6;stroke-linecap:round;"
    "stroke-opacity:.45}\n",
    ".plot .cloud-mirror{fill:none;stroke-width:3.4;stroke-linecap:round;stroke-opacity:.12}\n",
    ".plot .est{fill:#fff;fill-opacity:.35;stroke:var(--est);stroke-width:2.4}\n",
    ".plot .est-mirror{fill:#fff;stroke:var(--est);stroke-width:1.4;stroke-dasharray:2 2}\n",
    ".plot .estlabel{font-size:13px;font-weight:700;fill:var(--est)}\n",
    ".plot .line{fill:none;stroke-linejoin:round}\n",
    ".plot .measured{stroke:var(--meas);stroke-width:2.6}\n",
    ".plot .one-step{stroke:var(--one);stroke-width:.9}\n",
    ".plot .free-run{stroke:var(--free);stroke-width:1.7;stroke-dasharray:7 4}\n",
    ".plot .psd{stroke:#27313b;stroke-width:1.2}\n",
    ".plot .modeline{stroke-width:1.6;stroke-dasharray:5 4}\n",
    ".plot .stop{fill:var(--free)}\n",
    ".plot .unstable-side{fill:#f6e4df}\n",
    ".plot .wbar{stroke:#2f6f9f;stroke-width:2.2}\n",
    ".plot .wdot{fill:#fff;stroke:#2f6f9f;stroke-width:2.4}\n",
    ".plot .window-failed{fill:var(--unstable)}\n",
    ".plot .trend{stroke:var(--ink);stroke-width:2.2}\n",
    ".plot .trend-bound{stroke:#7c838a;stroke-width:1}\n",
    ".plot .extrapolation{stroke:var(--unstable);stroke-width:1.8;stroke-dasharray:7 5}\n",
    ".plot .zero-interval{stroke:var(--unstable);stroke-width:6;stroke-opacity:.45}\n",
    ".plot .zero-cap{stroke:var(--unstable);stroke-width:1.6}\n",
    ".plot .zero-cross{fill:var(--unstable)}\n",
    ".plot .join{fill:none;stroke:#b9b3a8;stroke-width:1.2}\n",
    ".plot .zeta,.plot .freq{fill:#2f6f9f}\n",
    ".plot circle.spurious{fill:none;stroke:#a29d92;stroke-width:1.1}\n",
    ".plot circle.persistent{fill:#2f6f9f;stroke:#fff;stroke-width:.8}\n",
    ".plot circle.in-model{fill:var(--est);stroke:#fff;stroke-width:1}\n",
    ".plot path.chain{fill:none;stroke:#2f6f9f;stroke-width:1.4;stroke-opacity:.5}\n",
    ".plot path.chain.in-model{stroke:var(--est);stroke-opacity:.75}\n",
    ".plot .chosen-order{fill:#efe6cf}\n",
    "table.windows tr.failed td{color:var(--unstable)}\n",
    "table.modes{border-collapse:collapse;width:100%;font-size:13.5px}\n",
    "table.modes th{text-align:left;font-weight:600;color:var(--muted);font-size:12px;"
    "white-space:nowrap;"
    "letter-spacing:.04em;border-bottom:1.5px solid var(--ink);padding:4px 6px;vertical-align:bottom}\n",
    "table.modes td{border-bottom:1px solid var(--rule);padding:7px 6px;vertical-align:top}\n",
    "table.modes td.n{font-variant-numeric:tabular-nums;white-space:nowrap}\n",
    ".swatch{display:inline-block;width:11px;height:11px;border-radius:50%;margin-right:6px;"
    "vertical-align:-1px}\n",
    ".iv{color:var(--muted);font-size:12px;line-height:1.35}\n",
    "table.shape{border-collapse:collapse}\n",
    "table.shape td{border:0;padding:1px 6px 1px 0;vertical-align:middle;font-size:12.5px}\n",
    "table.shape td.ch{max-width:150px;overflow:hidden;text-overflow:ellipsis;white-space:nowrap}\n",
    "svg.bar,svg.dial{display:block}\n",
    "table.details{border-collapse:collapse;font-size:13.5px;width:100%}\n",
    "table.details th{text-align:left;font-weight:600;width:210px;color:var(--muted);"
    "padding:3px 10px 3px 0;vertical-align:top}\n",
    "table.details td{padding:3px 0;font-variant-numeric:tabular-nums}\n",
    ".legend{font-size:12.5px}\n",
    "footer{margin-top:26px;color:var(--muted);font-size:12px;border-top:1px solid var(--rule);"
    "padding-top:6px}\n",
    "@media print{@page{size:A4;margin:13mm}"
    "body{background:#fff;font-size:10.5pt}main{max-width:none;padding:0}"
    "figure,.verdict,.warnings,.caution,table.modes tr,table.details{break-inside:avoid;"
    "page-break-inside:avoid}"
    "figure,.verdict{border-color:#bbb}"
    "h2.section{break-after:avoid;page-break-after:avoid}"
    "table.modes{font-size:9pt}table.modes th{white-space:normal}"
    "table.shape td{font-size:8.5pt}table.shape td.ch{max-width:90px}"
    "*{-webkit-print-color-adjust:exact;print-color-adjust:exact}}\n",
};
#define N_CSS (sizeof CSS / sizeof CSS[0])

/* Everything up to the header line's "when" text, which the caller
 * writes and closes with </span></header>. kind is static markup. */
void el_svg_page_open(el_html_ctx *c, const char *kind, const char *source)
{
    el_svg_put(c, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
           "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
           "<title>eigenlog: ");
    el_svg_esc(c, source);
    el_svg_put(c, "</title>\n<style>\n");
    for (size_t i = 0; i < N_CSS; i++)
        el_svg_put(c, CSS[i]);
    el_svg_put(c, "</style>\n</head>\n<body>\n<main>\n");
    el_svg_put(c, "<header class=\"top\"><span class=\"brand\">eigenlog " EL_VERSION " &middot; ");
    el_svg_put(c, kind);
    el_svg_put(c, "</span><span class=\"file\">");
    el_svg_esc(c, source);
    el_svg_put(c, "</span><span class=\"when\">");
}

void el_svg_page_begin(el_html_ctx *c)
{
    const el_assessment *r = c->r;
    el_svg_page_open(c, "stability report", r->table.source);
    const el_series *s = &r->series;
    char a[64], b[64];
    el_table_format_time(&r->table, s->t0, a, sizeof a);
    el_table_format_time(&r->table, s->t0 + (double)(s->n_samples - 1) * s->dt, b, sizeof b);
    el_svg_put(c, "window ");
    el_svg_esc(c, a);
    el_svg_put(c, " to ");
    el_svg_esc(c, b);
    el_buf_printf(c->o, " &middot; %zu samples every ", s->n_samples);
    el_svg_put_num(c, s->dt, 6);
    el_svg_put(c, " ");
    el_svg_esc(c, c->time_unit);
    el_buf_printf(c->o, " &middot; %zu channel%s</span></header>\n", s->n_channels,
                  s->n_channels == 1 ? "" : "s");
}

void el_svg_page_end(el_html_ctx *c)
{
    el_svg_put(c, "<footer>Written by eigenlog " EL_VERSION
           ". Self-contained page: no script, no network. Figures are SVG; "
           "print or save as PDF from the browser.</footer>\n</main>\n</body>\n</html>\n");
}

/* ------------------------------------------------------------ verdict */

const char *el_svg_verdict_colour(const el_verdict *v)
{
    if (v->ambiguous || v->stability == EL_MARGINAL)
        return "var(--unsure)";
    return v->stability == EL_STABLE ? "var(--stable)" : "var(--unstable)";
}

/* A 0..1 bar of a probability (name: P(stable), P(shrinking)) with
 * 1 - level and level marked: a call is made only outside the band
 * between them. */
void el_svg_p_meter(el_html_ctx *c, double p, const char *name)
{
    const double x0 = 2, x1 = 198;
    el_buf_printf(c->o, "<svg class=\"meter\" viewBox=\"0 0 200 30\" role=\"img\" "
                  "aria-label=\"%s on a scale from 0 to 1\">", name);
    el_buf_printf(c->o, "<rect x=\"%.0f\" y=\"4\" width=\"%.0f\" height=\"9\" rx=\"4.5\" "
                  "fill=\"#ebe7de\"/><rect x=\"%.0f\" y=\"4\" width=\"%.1f\" height=\"9\" "
                  "rx=\"4.5\" fill=\"var(--v)\"/>", x0, x1 - x0, x0, (x1 - x0) * p);
    if (isfinite(c->level)) {
        double marks[2] = {1.0 - c->level, c->level};
        for (int i = 0; i < 2; i++) {
            double x = x0 + (x1 - x0) * marks[i];
            char l[32];
            el_buf_printf(c->o, "<line x1=\"%.1f\" x2=\"%.1f\" y1=\"1\" y2=\"16\" "
                          "stroke=\"#1d2327\" stroke-width=\"1.2\"/><text x=\"%.1f\" y=\"27\" "
                          "font-size=\"10.5\" fill=\"#62686f\" text-anchor=\"middle\">%s</text>",
                          x, x, x, el_svg_num(l, sizeof l, marks[i], 3));
        }
    }
    el_svg_put(c, "</svg>");
}

void el_svg_tile_begin(el_html_ctx *c, const char *label)
{
    el_buf_printf(c->o, "<div class=\"tile\"><div class=\"tl\">%s</div><div class=\"tv\">",
                  label);
}

/* A tile's value with its unit, then the start of its small print. */
void el_svg_tile_value(el_html_ctx *c, const char *label, double v, const char *unit)
{
    el_svg_tile_begin(c, label);
    el_svg_put_num(c, v, 3);
    el_svg_put(c, " <small>");
    el_svg_esc(c, unit);
    el_svg_put(c, "</small></div><div class=\"ts\">");
}

/* Opens the verdict box and its head with the big word (upper-cased);
 * the caller adds the head's lines, closes it and adds the tiles. */
void el_svg_verdict_open(el_html_ctx *c, const char *colour, const char *text)
{
    char word[40];
    snprintf(word, sizeof word, "%s", text);
    for (char *p = word; *p; p++)
        if (*p >= 'a' && *p <= 'z')
            *p = (char)(*p - 'a' + 'A');
    el_buf_printf(c->o, "<section class=\"verdict\" id=\"verdict\" style=\"--v:%s\">\n",
                  colour);
    el_svg_put(c, "<div class=\"vhead\"><div class=\"vword\">");
    el_svg_esc(c, word);
    el_svg_put(c, "</div>");
}

/* The warnings of n_lists lists, in order, as one box. */
void el_svg_warnings_box(el_html_ctx *c, const el_warnings *const *lists, size_t n_lists)
{
    size_t n = 0;
    for (size_t l = 0; l < n_lists; l++)
        n += lists[l]->count;
    if (n == 0) {
        el_svg_put(c, "<p class=\"nowarn\" id=\"warnings\">No warnings.</p>\n");
        return;
    }
    /* One line for many modes with the same warning, as in the text
     * report; out of memory leaves them one by one. */
    el_warnings lines = {0};
    size_t folded = 0;
    int joined = el_warnlines_fold(lists, n_lists, &lines, &folded) == EL_OK;
    char heading[80];
    el_warnlines_heading(n, joined ? lines.count : n, joined ? folded : 0, heading,
                         sizeof heading);
    el_buf_printf(c->o, "<section class=\"warnings\" id=\"warnings\"><h2>%s</h2><ul>\n",
                  heading);
    if (joined) {
        for (size_t i = 0; i < lines.count; i++) {
            el_svg_put(c, "<li>");
            el_svg_esc(c, lines.items[i]);
            el_svg_put(c, "</li>\n");
        }
    } else {
        for (size_t l = 0; l < n_lists; l++) {
            for (size_t i = 0; i < lists[l]->count; i++) {
                el_svg_put(c, "<li>");
                el_svg_esc(c, lists[l]->items[i]);
                el_svg_put(c, "</li>\n");
            }
        }
    }
    el_warnings_free(&lines);
    el_svg_put(c, "</ul></section>\n");
}

void el_svg_caution_section(el_html_ctx *c)
{
    el_svg_put(c, "<aside class=\"caution\" id=\"caution\"><b>Caution.</b> ");
    el_svg_esc(c, el_assess_caution());
    el_svg_put(c, "</aside>\n");
}

/* ------------------------------------------------------------ plotting */


double el_svg_fx(const el_svg_frame *f, double x)
{
    return f->left + (x - f->xlo) / (f->xhi - f->xlo) * f->width;
}

/* Pixel y, held within a band around the plot so that a far-off value
 * (clipped anyway) does not write huge coordinates. */
double el_svg_fy(const el_svg_frame *f, double y)
{
    double p = f->top + (f->yhi - y) / (f->yhi - f->ylo) * f->height;
    double lo = f->top - 40, hi = f->top + f->height + 40;
    return p < lo ? lo : p > hi ? hi : p;
}

double el_svg_fx_clamped(const el_svg_frame *f, double x)
{
    double p = el_svg_fx(f, x);
    double lo = f->left - 40, hi = f->left + f->width + 40;
    return p < lo ? lo : p > hi ? hi : p;
}

/* 1, 2 or 5 times a power of ten, giving about target steps over span. */
double el_svg_nice_step(double span, int target)
{
    double raw = span / target;
    double mag = pow(10.0, floor(log10(raw)));
    double q = raw / mag;
    return (q < 1.5 ? 1.0 : q < 3.5 ? 2.0 : q < 7.5 ? 5.0 : 10.0) * mag;
}

void el_svg_tick_text(char *buf, size_t size, double v, double step)
{
    if (fabs(v) < step * 1e-9)
        v = 0.0;
    int decimals = step >= 1.0 ? 0 : (int)ceil(-log10(step) - 1e-9);
    if (decimals > 6 || fabs(v) >= 1e6 || step >= 1e6)
        snprintf(buf, size, "%.3g", v);
    else
        snprintf(buf, size, "%.*f", decimals, v);
}

/* Opens a figure's SVG; label (escaped) is its accessible name. */
void el_svg_begin(el_html_ctx *c, double w, double h, const char *label)
{
    el_buf_printf(c->o, "<svg class=\"plot\" viewBox=\"0 0 %.0f %.0f\" role=\"img\" "
                  "aria-label=\"", w, h);
    el_svg_esc(c, label);
    el_svg_put(c, "\">");
}

/* A clip path of the plot area: lines and clouds that leave the view
 * stay inside the frame. */
void el_svg_clip_def(el_html_ctx *c, const char *id, const el_svg_frame *f)
{
    el_buf_printf(c->o, "<defs><clipPath id=\"%s\"><rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/></clipPath></defs>", id, f->left, f->top, f->width,
                  f->height);
}

void el_svg_x_ticks(el_html_ctx *c, const el_svg_frame *f)
{
    /* About one label per 105 px, so a narrow panel stays legible. */
    int target = (int)(f->width / 105.0);
    double step = el_svg_nice_step(f->xhi - f->xlo, target < 3 ? 3 : target);
    for (double t = ceil(f->xlo / step) * step; t <= f->xhi + step * 1e-9; t += step) {
        double x = el_svg_fx(f, t);
        char b[32];
        el_svg_tick_text(b, sizeof b, t, step);
        el_buf_printf(c->o, "<line class=\"grid\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                      "y2=\"%.1f\"/>", x, x, f->top, f->top + f->height);
        el_buf_printf(c->o, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                      "text-anchor=\"middle\">%s</text>", x, f->top + f->height + 17, b);
    }
}

void el_svg_y_ticks(el_html_ctx *c, const el_svg_frame *f)
{
    if (f->ylog) {
        double lo = ceil(f->ylo - 1e-9), hi = floor(f->yhi + 1e-9);
        double stride = ceil((hi - lo + 1) / 7.0);
        for (double k = lo; k <= hi; k += stride) {
            double y = el_svg_fy(f, k);
            el_buf_printf(c->o, "<line class=\"grid\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                          "y2=\"%.1f\"/>", f->left, f->left + f->width, y, y);
            el_buf_printf(c->o, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                          "text-anchor=\"end\">10<tspan dy=\"-6\" font-size=\"9.5\">%.0f"
                          "</tspan></text>", f->left - 8, y + 4, k == 0 ? 0.0 : k);
        }
        return;
    }
    double step = el_svg_nice_step(f->yhi - f->ylo, 5);
    for (double t = ceil(f->ylo / step) * step; t <= f->yhi + step * 1e-9; t += step) {
        double y = el_svg_fy(f, t);
        char b[32];
        el_svg_tick_text(b, sizeof b, t, step);
        el_buf_printf(c->o, "<line class=\"grid\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                      "y2=\"%.1f\"/>", f->left, f->left + f->width, y, y);
        el_buf_printf(c->o, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                      "text-anchor=\"end\">%s</text>", f->left - 8, y + 4, b);
    }
}

/* Axis titles are written by the callers (they hold escaped names and
 * entities); this draws the frame around the plot area. */
void el_svg_frame_box(el_html_ctx *c, const el_svg_frame *f)
{
    el_buf_printf(c->o, "<rect class=\"frame\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f->left, f->top, f->width, f->height);
}

void el_svg_x_title_begin(el_html_ctx *c, const el_svg_frame *f)
{
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">",
                  f->left + f->width / 2, f->top + f->height + 40);
}

void el_svg_y_title_begin(el_html_ctx *c, const el_svg_frame *f)
{
    double x = f->left - 58, y = f->top + f->height / 2;
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\" "
                  "transform=\"rotate(-90 %.1f %.1f)\">", x, y, x, y);
}

/* Appends one point of a cloud (a dot: zero-length subpath, round caps). */
void el_svg_dot(el_html_ctx *c, const el_svg_frame *f, double x, double y)
{
    el_buf_printf(c->o, "M%.1f %.1fh0", el_svg_fx_clamped(f, x), el_svg_fy(f, y));
}

void el_svg_marker(el_html_ctx *c, const el_svg_frame *f, double x, double y, const char *cls)
{
    el_buf_printf(c->o, "<circle class=\"%s\" cx=\"%.1f\" cy=\"%.1f\" r=\"6\"/>", cls,
                  el_svg_fx(f, x), el_svg_fy(f, y));
}

/* Quantiles q and 1 - q of the finite values v[off + k * stride],
 * k < n (scratch holds n doubles). Returns the number of finite values. */
static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

size_t el_svg_robust_span(const double *v, size_t stride, size_t off, size_t n,
                          double q, double *scratch, double *lo, double *hi)
{
    size_t m = 0;
    for (size_t k = 0; k < n; k++)
        if (isfinite(v[off + k * stride]))
            scratch[m++] = v[off + k * stride];
    if (m == 0)
        return 0;
    qsort(scratch, m, sizeof *scratch, cmp_double);
    *lo = el_boot_quantile(scratch, m, q);
    *hi = el_boot_quantile(scratch, m, 1.0 - q);
    return m;
}

void el_svg_widen(double *lo, double *hi, double v)
{
    if (!isfinite(v))
        return;
    *lo = v < *lo ? v : *lo;
    *hi = v > *hi ? v : *hi;
}

void el_svg_caption_begin(el_html_ctx *c, const char *title)
{
    c->figure++;
    el_buf_printf(c->o, "<figcaption><b>Figure %d. %s</b> ", c->figure, title);
}

double el_svg_clampd(double v, double lo, double hi)
{
    return v < lo ? lo : v > hi ? hi : v;
}

/* "[lo, hi]"; open_end (static markup) stands for an upper end of +inf
 * when given, else such an end is "n/a" like any value that does not
 * exist. */
void el_svg_put_pair(el_html_ctx *c, double lo, double hi, int sig, const char *open_end)
{
    el_svg_put(c, "[");
    el_svg_put_num(c, lo, sig);
    el_svg_put(c, ", ");
    if (open_end != NULL && isinf(hi) && hi > 0)
        el_svg_put(c, open_end);
    else
        el_svg_put_num(c, hi, sig);
    el_svg_put(c, "]");
}

/* "[lo, hi]" under a value, or nothing without a bootstrap. */
void el_svg_put_bounds(el_html_ctx *c, const char *prefix, const el_interval *iv, int sig)
{
    el_svg_put(c, "<div class=\"iv\">");
    el_svg_put(c, prefix);
    el_svg_put_pair(c, iv->lo, iv->hi, sig, NULL);
    el_svg_put(c, "</div>");
}


/* Opens <figure id=ID><table class=CLS> with a header row and <tbody>. */
void el_svg_table_open(el_html_ctx *c, const char *id, const char *cls, const el_svg_column *cols, size_t n)
{
    el_buf_printf(c->o, "<figure id=\"%s\"><table class=\"%s\"><thead><tr>", id, cls);
    for (size_t i = 0; i < n; i++) {
        el_svg_put(c, "<th>");
        el_svg_put(c, cols[i].name);
        if (cols[i].unit != NULL) {
            el_svg_put(c, " [");
            el_svg_esc(c, cols[i].unit);
            el_svg_put(c, "]");
        }
        el_svg_put(c, "</th>");
    }
    el_svg_put(c, "</tr></thead>\n<tbody>\n");
}

/* ------------------------------------------------------------ details */

void el_svg_detail_row_begin(el_html_ctx *c, const char *name)
{
    el_buf_printf(c->o, "<tr><th>%s</th><td>", name);
}
