/* el_html: an assessment, or a track run, as one self-contained HTML page
 * with inline SVG figures (no script, no network), laid out for a laptop
 * screen and for paper. */
#include "el_html.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_predict.h"
#include "el_report.h"

/* ------------------------------------------------------------ context */

/* One page being written. Exactly one of r and t is set: the page helpers
 * below serve both reports, the figure code reads its own input. */
typedef struct {
    const el_assessment *r;       /* assess page */
    const el_track_result *t;     /* track page */
    el_buf *o;
    char time_unit[48];       /* "s" or the time column's unit */
    char rate_unit[64];       /* "1/s" */
    char freq_unit[64];       /* "Hz" */
    char slope_unit[80];      /* track: unit of the margin's slope */
    double level;             /* bounds level, NaN when unknown */
    int boot;                 /* 1: a bootstrap ran */
    int figure;               /* figure counter for captions */
} ctx;

/* Mode colours: distinct in hue and lightness so that clouds stay apart
 * in greyscale print as well. */
static const char *const MODE_COLOUR[] = {"#2f6f9f", "#c2762a", "#3f8f6b", "#8a5aa8",
                                          "#a8434f", "#6b7a2a", "#4b8fb0", "#9a6b3a"};
#define N_MODE_COLOURS (sizeof MODE_COLOUR / sizeof MODE_COLOUR[0])

static const char *mode_colour(size_t m)
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

static void put(ctx *c, const char *s)
{
    el_buf_append(c->o, s, strlen(s));
}

static void esc(ctx *c, const char *s)
{
    el_html_escape(c->o, s);
}

/* "%.4g" (sig significant digits) or "n/a" for a value that does not
 * exist; never "nan" or "inf". */
static const char *num(char *buf, size_t size, double v, int sig)
{
    if (!isfinite(v))
        snprintf(buf, size, "n/a");
    else
        snprintf(buf, size, "%.*g", sig, v == 0 ? 0.0 : v);
    return buf;
}

static void put_num(ctx *c, double v, int sig)
{
    char b[40];
    put(c, num(b, sizeof b, v, sig));
}

static int boot_ran(const el_assessment *r)
{
    return r->boot.replicates > 0 && r->boot.bounds != NULL;
}

/* Unit texts from the time unit u ("" when the log does not say). */
static void set_units(ctx *c, const char *u)
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
    esc(c, s->names[ch]);
    if (s->units != NULL && s->units[ch] != NULL && s->units[ch][0] != '\0') {
        put(c, " [");
        esc(c, s->units[ch]);
        put(c, "]");
    }
}

static const char *channel_unit(const ctx *c, size_t ch)
{
    const el_series *s = &c->r->series;
    return s->units != NULL && s->units[ch] != NULL ? s->units[ch] : "";
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
static void page_open(ctx *c, const char *kind, const char *source)
{
    put(c, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
           "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
           "<title>eigenlog: ");
    esc(c, source);
    put(c, "</title>\n<style>\n");
    for (size_t i = 0; i < N_CSS; i++)
        put(c, CSS[i]);
    put(c, "</style>\n</head>\n<body>\n<main>\n");
    put(c, "<header class=\"top\"><span class=\"brand\">eigenlog " EL_VERSION " &middot; ");
    put(c, kind);
    put(c, "</span><span class=\"file\">");
    esc(c, source);
    put(c, "</span><span class=\"when\">");
}

static void page_begin(ctx *c)
{
    const el_assessment *r = c->r;
    page_open(c, "stability report", r->table.source);
    const el_series *s = &r->series;
    char a[64], b[64];
    el_table_format_time(&r->table, s->t0, a, sizeof a);
    el_table_format_time(&r->table, s->t0 + (double)(s->n_samples - 1) * s->dt, b, sizeof b);
    put(c, "window ");
    esc(c, a);
    put(c, " to ");
    esc(c, b);
    el_buf_printf(c->o, " &middot; %zu samples every ", s->n_samples);
    put_num(c, s->dt, 6);
    put(c, " ");
    esc(c, c->time_unit);
    el_buf_printf(c->o, " &middot; %zu channel%s</span></header>\n", s->n_channels,
                  s->n_channels == 1 ? "" : "s");
}

static void page_end(ctx *c)
{
    put(c, "<footer>Written by eigenlog " EL_VERSION
           ". Self-contained page: no script, no network. Figures are SVG; "
           "print or save as PDF from the browser.</footer>\n</main>\n</body>\n</html>\n");
}

/* ------------------------------------------------------------ verdict */

static const char *verdict_colour(const el_verdict *v)
{
    if (v->ambiguous || v->stability == EL_MARGINAL)
        return "var(--unsure)";
    return v->stability == EL_STABLE ? "var(--stable)" : "var(--unstable)";
}

/* A 0..1 bar of a probability (name: P(stable), P(shrinking)) with
 * 1 - level and level marked: a call is made only outside the band
 * between them. */
static void p_meter(ctx *c, double p, const char *name)
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
                          x, x, x, num(l, sizeof l, marks[i], 3));
        }
    }
    put(c, "</svg>");
}

static void tile_begin(ctx *c, const char *label)
{
    el_buf_printf(c->o, "<div class=\"tile\"><div class=\"tl\">%s</div><div class=\"tv\">",
                  label);
}

/* A tile's value with its unit, then the start of its small print. */
static void tile_value(ctx *c, const char *label, double v, const char *unit)
{
    tile_begin(c, label);
    put_num(c, v, 3);
    put(c, " <small>");
    esc(c, unit);
    put(c, "</small></div><div class=\"ts\">");
}

static void verdict_tiles(ctx *c)
{
    const el_assessment *r = c->r;
    const el_verdict *v = &r->verdict;
    put(c, "<div class=\"tiles\">");
    tile_begin(c, "P(stable)");
    if (isfinite(v->p_stable)) {
        el_buf_printf(c->o, "%.3f</div><div class=\"ts\">share of %zu bootstrap replicates "
                      "whose least damped mode decays</div>", v->p_stable, r->boot.replicates);
        p_meter(c, v->p_stable, "P(stable)");
    } else {
        put(c, "n/a</div><div class=\"ts\">no bootstrap was run: no bounds</div>");
    }
    put(c, "</div>");
    tile_value(c, "decay rate", v->margin_decay_rate, c->rate_unit);
    put(c, "&minus;Re &lambda; of the least damped mode; "
           "negative means growing</div></div>");
    tile_begin(c, "damping ratio");
    put_num(c, v->margin_damping_ratio, 3);
    put(c, "</div><div class=\"ts\">of the least damped mode</div></div>");
    const el_mode *m = r->modes.n_modes ? &r->modes.modes[0] : NULL;
    tile_value(c, m && m->decay_rate < 0 ? "doubling time" : "time constant",
               m ? m->time_constant_s : NAN, c->time_unit);
    if (m != NULL && m->pair && !m->at_nyquist && isfinite(m->frequency_hz)) {
        put(c, "mode 1 rings at ");
        put_num(c, m->frequency_hz, 3);
        put(c, " ");
        esc(c, c->freq_unit);
    } else {
        put(c, "mode 1 does not oscillate");
    }
    put(c, "</div></div></div>\n");
}

/* Opens the verdict box and its head with the big word (upper-cased);
 * the caller adds the head's lines, closes it and adds the tiles. */
static void verdict_open(ctx *c, const char *colour, const char *text)
{
    char word[40];
    snprintf(word, sizeof word, "%s", text);
    for (char *p = word; *p; p++)
        if (*p >= 'a' && *p <= 'z')
            *p = (char)(*p - 'a' + 'A');
    el_buf_printf(c->o, "<section class=\"verdict\" id=\"verdict\" style=\"--v:%s\">\n",
                  colour);
    put(c, "<div class=\"vhead\"><div class=\"vword\">");
    esc(c, word);
    put(c, "</div>");
}

static void verdict_section(ctx *c)
{
    const el_verdict *v = &c->r->verdict;
    verdict_open(c, verdict_colour(v), v->stability_name ? v->stability_name : "n/a");
    if (v->ambiguous)
        put(c, "<span class=\"vtag\">ambiguous</span>");
    put(c, "<div class=\"vtype\">fixed point: <b>");
    esc(c, v->type[0] ? v->type : "n/a");
    put(c, "</b></div>");
    if (v->ambiguous && isfinite(c->level))
        el_buf_printf(c->o, "<div class=\"ts\">the data do not decide at the %.3g %% level"
                      "</div>", 100.0 * c->level);
    put(c, "</div>\n");
    verdict_tiles(c);
    put(c, "</section>\n");
}

/* The warnings of n_lists lists, in order, as one box. */
static void warnings_box(ctx *c, const el_warnings *const *lists, size_t n_lists)
{
    size_t n = 0;
    for (size_t l = 0; l < n_lists; l++)
        n += lists[l]->count;
    if (n == 0) {
        put(c, "<p class=\"nowarn\" id=\"warnings\">No warnings.</p>\n");
        return;
    }
    el_buf_printf(c->o, "<section class=\"warnings\" id=\"warnings\"><h2>Warnings (%zu)</h2><ul>\n",
                  n);
    for (size_t l = 0; l < n_lists; l++) {
        for (size_t i = 0; i < lists[l]->count; i++) {
            put(c, "<li>");
            esc(c, lists[l]->items[i]);
            put(c, "</li>\n");
        }
    }
    put(c, "</ul></section>\n");
}

static void warnings_section(ctx *c)
{
    const el_warnings *lists[] = {&c->r->input_warnings, &c->r->warnings};
    warnings_box(c, lists, 2);
}

static void caution_section(ctx *c)
{
    put(c, "<aside class=\"caution\" id=\"caution\"><b>Caution.</b> ");
    esc(c, el_assess_caution());
    put(c, "</aside>\n");
}

/* ------------------------------------------------------------ plotting */

/* Plot area in viewBox pixels and the data range it shows. For a log
 * axis the range and the values passed in are log10 of the data. */
typedef struct {
    double left, top, width, height;
    double xlo, xhi, ylo, yhi;
    int ylog;
} frame;

static double fx(const frame *f, double x)
{
    return f->left + (x - f->xlo) / (f->xhi - f->xlo) * f->width;
}

/* Pixel y, held within a band around the plot so that a far-off value
 * (clipped anyway) does not write huge coordinates. */
static double fy(const frame *f, double y)
{
    double p = f->top + (f->yhi - y) / (f->yhi - f->ylo) * f->height;
    double lo = f->top - 40, hi = f->top + f->height + 40;
    return p < lo ? lo : p > hi ? hi : p;
}

static double fx_clamped(const frame *f, double x)
{
    double p = fx(f, x);
    double lo = f->left - 40, hi = f->left + f->width + 40;
    return p < lo ? lo : p > hi ? hi : p;
}

/* 1, 2 or 5 times a power of ten, giving about target steps over span. */
static double nice_step(double span, int target)
{
    double raw = span / target;
    double mag = pow(10.0, floor(log10(raw)));
    double q = raw / mag;
    return (q < 1.5 ? 1.0 : q < 3.5 ? 2.0 : q < 7.5 ? 5.0 : 10.0) * mag;
}

static void tick_text(char *buf, size_t size, double v, double step)
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
static void svg_begin(ctx *c, double w, double h, const char *label)
{
    el_buf_printf(c->o, "<svg class=\"plot\" viewBox=\"0 0 %.0f %.0f\" role=\"img\" "
                  "aria-label=\"", w, h);
    esc(c, label);
    put(c, "\">");
}

/* A clip path of the plot area: lines and clouds that leave the view
 * stay inside the frame. */
static void clip_def(ctx *c, const char *id, const frame *f)
{
    el_buf_printf(c->o, "<defs><clipPath id=\"%s\"><rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/></clipPath></defs>", id, f->left, f->top, f->width,
                  f->height);
}

static void x_ticks(ctx *c, const frame *f)
{
    /* About one label per 105 px, so a narrow panel stays legible. */
    int target = (int)(f->width / 105.0);
    double step = nice_step(f->xhi - f->xlo, target < 3 ? 3 : target);
    for (double t = ceil(f->xlo / step) * step; t <= f->xhi + step * 1e-9; t += step) {
        double x = fx(f, t);
        char b[32];
        tick_text(b, sizeof b, t, step);
        el_buf_printf(c->o, "<line class=\"grid\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                      "y2=\"%.1f\"/>", x, x, f->top, f->top + f->height);
        el_buf_printf(c->o, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                      "text-anchor=\"middle\">%s</text>", x, f->top + f->height + 17, b);
    }
}

static void y_ticks(ctx *c, const frame *f)
{
    if (f->ylog) {
        double lo = ceil(f->ylo - 1e-9), hi = floor(f->yhi + 1e-9);
        double stride = ceil((hi - lo + 1) / 7.0);
        for (double k = lo; k <= hi; k += stride) {
            double y = fy(f, k);
            el_buf_printf(c->o, "<line class=\"grid\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                          "y2=\"%.1f\"/>", f->left, f->left + f->width, y, y);
            el_buf_printf(c->o, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                          "text-anchor=\"end\">10<tspan dy=\"-6\" font-size=\"9.5\">%.0f"
                          "</tspan></text>", f->left - 8, y + 4, k == 0 ? 0.0 : k);
        }
        return;
    }
    double step = nice_step(f->yhi - f->ylo, 5);
    for (double t = ceil(f->ylo / step) * step; t <= f->yhi + step * 1e-9; t += step) {
        double y = fy(f, t);
        char b[32];
        tick_text(b, sizeof b, t, step);
        el_buf_printf(c->o, "<line class=\"grid\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                      "y2=\"%.1f\"/>", f->left, f->left + f->width, y, y);
        el_buf_printf(c->o, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                      "text-anchor=\"end\">%s</text>", f->left - 8, y + 4, b);
    }
}

/* Axis titles are written by the callers (they hold escaped names and
 * entities); this draws the frame around the plot area. */
static void frame_box(ctx *c, const frame *f)
{
    el_buf_printf(c->o, "<rect class=\"frame\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f->left, f->top, f->width, f->height);
}

static void x_title_begin(ctx *c, const frame *f)
{
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">",
                  f->left + f->width / 2, f->top + f->height + 40);
}

static void y_title_begin(ctx *c, const frame *f)
{
    double x = f->left - 58, y = f->top + f->height / 2;
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\" "
                  "transform=\"rotate(-90 %.1f %.1f)\">", x, y, x, y);
}

/* Appends one point of a cloud (a dot: zero-length subpath, round caps). */
static void dot(ctx *c, const frame *f, double x, double y)
{
    el_buf_printf(c->o, "M%.1f %.1fh0", fx_clamped(f, x), fy(f, y));
}

static void marker(ctx *c, const frame *f, double x, double y, const char *cls)
{
    el_buf_printf(c->o, "<circle class=\"%s\" cx=\"%.1f\" cy=\"%.1f\" r=\"6\"/>", cls,
                  fx(f, x), fy(f, y));
}

/* Quantiles q and 1 - q of the finite values v[off + k * stride],
 * k < n (scratch holds n doubles). Returns the number of finite values. */
static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static size_t robust_span(const double *v, size_t stride, size_t off, size_t n,
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

/* Replicate stride of the cloud downsampling rule (el_html.h). */
static size_t cloud_stride(size_t replicates, size_t per_replicate)
{
    size_t total = replicates * per_replicate;
    if (total <= EL_HTML_MAX_CLOUD_POINTS)
        return 1;
    return (total + EL_HTML_MAX_CLOUD_POINTS - 1) / EL_HTML_MAX_CLOUD_POINTS;
}

static void widen(double *lo, double *hi, double v)
{
    if (!isfinite(v))
        return;
    *lo = v < *lo ? v : *lo;
    *hi = v > *hi ? v : *hi;
}

static void caption_begin(ctx *c, const char *title)
{
    c->figure++;
    el_buf_printf(c->o, "<figcaption><b>Figure %d. %s</b> ", c->figure, title);
}

typedef struct {
    double lo, hi;
} span;

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
        widen(&lo, &hi, md->modes[m].lambda_re);
        if (isfinite(md->modes[m].lambda_im))
            ymax = fmax(ymax, fabs(md->modes[m].lambda_im));
    }
    if (c->boot) {
        /* 0.5 % .. 99.5 % of each cloud: one wild replicate must not
         * squeeze the rest into a corner (it is counted as outside). */
        for (size_t m = 0; m < b->n_modes; m++) {
            double a, z;
            if (robust_span(b->lambda_re, b->n_modes, m, b->replicates, 0.005, scratch, &a, &z)) {
                widen(&lo, &hi, a);
                widen(&lo, &hi, z);
            }
            if (robust_span(b->lambda_im, b->n_modes, m, b->replicates, 0.005, scratch, &a, &z))
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

static int in_view(const frame *f, double x, double y)
{
    return x >= f->xlo && x <= f->xhi && y >= f->ylo && y <= f->yhi;
}

/* One cloud per mode (upper half, as matched) and its mirror image. */
static void eig_clouds(ctx *c, const frame *f, eig_view *v, size_t *drawn, size_t *skipped)
{
    const el_boot_result *b = &c->r->boot;
    size_t stride = cloud_stride(b->replicates, b->n_modes);
    put(c, "<g clip-path=\"url(#clip-eig)\">");
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
                              mode_colour(m));
            } else {
                el_buf_printf(c->o, "<path class=\"cloud\" data-mode=\"%zu\" data-points=\"%zu\" "
                              "stroke=\"%s\" d=\"", m + 1, count, mode_colour(m));
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
                dot(c, f, re, mirror ? -im : im);
                if (!mirror) {
                    (*drawn)++;
                    v->outside += !in_view(f, re, im);
                }
            }
            put(c, "\"/>");
        }
    }
    put(c, "</g>");
}

static void eig_estimates(ctx *c, const frame *f, size_t *not_drawn)
{
    const el_modes *md = &c->r->modes;
    for (size_t m = 0; m < md->n_modes; m++) {
        const el_mode *e = &md->modes[m];
        if (e->instantaneous || !isfinite(e->lambda_re) || !isfinite(e->lambda_im)) {
            (*not_drawn)++;
            continue;
        }
        if (e->pair)
            marker(c, f, e->lambda_re, -e->lambda_im, "est-mirror");
        marker(c, f, e->lambda_re, e->lambda_im, "est");
        el_buf_printf(c->o, "<text class=\"estlabel\" x=\"%.1f\" y=\"%.1f\">%zu</text>",
                      fx(f, e->lambda_re) + 9, fy(f, e->lambda_im) - 8, m + 1);
    }
}

static void eig_legend(ctx *c, const frame *f, size_t replicates)
{
    double x = f->left + f->width - (replicates ? 560 : 230), y = f->top - 14;
    el_buf_printf(c->o, "<g class=\"legend\"><circle class=\"est\" cx=\"%.1f\" cy=\"%.1f\" "
                  "r=\"5\"/><text x=\"%.1f\" y=\"%.1f\">estimate (dashed: conjugate)</text>",
                  x + 6, y, x + 18, y + 4);
    if (replicates) {
        x += 240;
        put(c, "<path class=\"cloud-key\" d=\"");
        for (size_t m = 0; m < 3; m++)
            el_buf_printf(c->o, "M%.1f %.1fh0", x + 2 + 7.0 * (double)m, y + (m == 1 ? -3 : 2));
        put(c, "\" stroke=\"#2f6f9f\"/>");
        el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\">bootstrap replicates, a colour per "
                      "mode</text>", x + 24, y + 4);
    }
    put(c, "</g>");
}

static void fig_eigenvalues(ctx *c, double *scratch)
{
    eig_view v;
    eig_bounds(c, scratch, &v);
    frame f = {.left = 84, .top = 34, .width = 852, .height = 360, .xlo = v.xlo, .xhi = v.xhi,
               .ylo = -v.ymax, .yhi = v.ymax};
    put(c, "<figure id=\"fig-eigenvalues\">");
    svg_begin(c, 960, 450, "eigenvalues in the complex plane");
    clip_def(c, "clip-eig", &f);
    el_buf_printf(c->o, "<rect class=\"stable-side\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f.left, f.top, fx(&f, 0.0) - f.left, f.height);
    x_ticks(c, &f);
    y_ticks(c, &f);
    el_buf_printf(c->o, "<line class=\"zero\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>",
                  f.left, f.left + f.width, fy(&f, 0), fy(&f, 0));
    el_buf_printf(c->o, "<line class=\"boundary\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/>", fx(&f, 0), fx(&f, 0), f.top, f.top + f.height);
    /* Labels go where there is room: a narrow stable side (an unstable
     * estimate far out) gets the short names on the wide side. */
    int roomy = fx(&f, 0) - f.left > 220;
    el_buf_printf(c->o, "<text class=\"region\" x=\"%.1f\" y=\"%.1f\">%s</text>"
                  "<text class=\"region\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"%s\">"
                  "boundary Re &lambda; = 0</text><text class=\"region\" x=\"%.1f\" "
                  "y=\"%.1f\">unstable</text>", f.left + 10, f.top + 20,
                  roomy ? "stable side (Re &lambda; &lt; 0)" : "stable",
                  fx(&f, 0) + (roomy ? -8 : 8), f.top + f.height - 10, roomy ? "end" : "start",
                  fx(&f, 0) + 8, f.top + 20);
    size_t drawn = 0, skipped = 0, not_drawn = 0;
    if (c->boot)
        eig_clouds(c, &f, &v, &drawn, &skipped);
    eig_estimates(c, &f, &not_drawn);
    eig_legend(c, &f, c->boot ? c->r->boot.replicates : 0);
    frame_box(c, &f);
    x_title_begin(c, &f);
    put(c, "Re &lambda; (growth rate) [");
    esc(c, c->rate_unit);
    put(c, "]</text>");
    y_title_begin(c, &f);
    put(c, "Im &lambda; = 2&pi; f [");
    esc(c, c->rate_unit);
    put(c, "]</text></svg>\n");
    caption_begin(c, "Continuous-time eigenvalues.");
    put(c, "Each mode's &lambda; = ln(&mu;)/&Delta;t is a white circle numbered as in the "
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
        put(c, "), matched to the estimate; the faint mirror below the axis is the "
               "conjugate half.");
        if (v.outside)
            el_buf_printf(c->o, " %zu replicate point%s outside the view (beyond the 0.5-99.5 "
                          "%% range of the cloud) %s drawn at the edge.", v.outside,
                          v.outside == 1 ? " lies" : "s lie", v.outside == 1 ? "is" : "are");
        if (skipped)
            el_buf_printf(c->o, " %zu replicate value%s without a finite eigenvalue left out.",
                          skipped, skipped == 1 ? "" : "s");
    } else {
        put(c, "No bootstrap was run, so there are no clouds.");
    }
    if (not_drawn)
        el_buf_printf(c->o, " %zu mode%s with &mu; = 0 (Re &lambda; = &minus;&infin;) not drawn.",
                      not_drawn, not_drawn == 1 ? "" : "s");
    put(c, "</figcaption></figure>\n");
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
    if (robust_span(b->trace_samples, 1, 0, b->replicates, 0.005, scratch, &lo, &hi)) {
        widen(&t->lo, &t->hi, lo);
        widen(&t->lo, &t->hi, hi);
        any = 1;
    }
    if (robust_span(b->det_samples, 1, 0, b->replicates, 0.005, scratch, &lo, &hi)) {
        widen(&d->lo, &d->hi, lo);
        widen(&d->lo, &d->hi, hi);
    }
    return any;
}

/* Whole plane: symmetric in trace; the trace axis reaches at least to
 * where the parabola passes the highest determinant, so every region
 * shows at a readable size. */
static void plane_bounds(span t, span d, frame *f)
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
static void zoom_bounds(span t, span d, const frame *whole, frame *f)
{
    double wt = t.hi - t.lo, wd = d.hi - d.lo;
    if (!(wt > 0))
        wt = 0.05 * (whole->xhi - whole->xlo);
    if (!(wd > 0))
        wd = 0.05 * (whole->yhi - whole->ylo);
    if (fabs(0.5 * (t.lo + t.hi)) <= 3 * wt)
        widen(&t.lo, &t.hi, 0.0);
    if (fabs(0.5 * (d.lo + d.hi)) <= 3 * wd)
        widen(&d.lo, &d.hi, 0.0);
    wt = t.hi - t.lo > 0 ? t.hi - t.lo : wt;
    wd = d.hi - d.lo > 0 ? d.hi - d.lo : wd;
    f->xlo = t.lo - 0.2 * wt;
    f->xhi = t.hi + 0.2 * wt;
    f->ylo = d.lo - 0.2 * wd;
    f->yhi = d.hi + 0.2 * wd;
}

static double clampd(double v, double lo, double hi)
{
    return v < lo ? lo : v > hi ? hi : v;
}

/* Stable quadrant, axes, ticks and the parabola of one panel. */
static void plane_background(ctx *c, const frame *f, const char *clip)
{
    double right = f->left + f->width, bottom = f->top + f->height;
    double x0 = clampd(fx(f, 0), f->left, right), y0 = clampd(fy(f, 0), f->top, bottom);
    el_buf_printf(c->o, "<rect class=\"stable-side\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f->left, f->top, x0 - f->left, y0 - f->top);
    x_ticks(c, f);
    y_ticks(c, f);
    el_buf_printf(c->o, "<g clip-path=\"url(#%s)\"><line class=\"zero\" x1=\"%.1f\" x2=\"%.1f\" "
                  "y1=\"%.1f\" y2=\"%.1f\"/><line class=\"zero\" x1=\"%.1f\" x2=\"%.1f\" "
                  "y1=\"%.1f\" y2=\"%.1f\"/>", clip, f->left, right, fy(f, 0), fy(f, 0),
                  fx(f, 0), fx(f, 0), f->top, bottom);
    put(c, "<path class=\"parabola\" d=\"");
    for (int i = 0; i <= 160; i++) {
        double t = f->xlo + (f->xhi - f->xlo) * i / 160.0;
        el_buf_printf(c->o, "%s%.1f %.1f", i == 0 ? "M" : " ", fx(f, t), fy(f, t * t / 4.0));
    }
    put(c, "\"/></g>");
}

static void plane_labels(ctx *c, const frame *f)
{
    double X = f->xhi, top = f->yhi, x0 = fx(f, 0), y0 = fy(f, 0);
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
                      "text-anchor=\"middle\">%s</text>", fx(f, lab[i].t), fy(f, lab[i].d) + 4,
                      lab[i].name);
    el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"start\" "
                  "transform=\"rotate(-90 %.1f %.1f)\">center (&tau; = 0)</text>",
                  x0 - 6, y0 - 14, x0 - 6, y0 - 14);
    el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">"
                  "&Delta; = &tau;&sup2;/4</text>", fx(f, 0.9 * X) - 10,
                  fy(f, 0.81 * X * X / 4.0) + 4);
    el_buf_printf(c->o, "<text class=\"region\" x=\"%.1f\" y=\"%.1f\">stable</text>",
                  f->left + 8, f->top + 18);
}

/* The plane cloud as one path; returns points drawn, counts outside. */
static size_t plane_cloud(ctx *c, const frame *f, const char *cls, const char *clip,
                          size_t *outside)
{
    const el_boot_result *b = &c->r->boot;
    size_t stride = cloud_stride(b->replicates, 1), count = 0, drawn = 0;
    for (size_t k = 0; k < b->replicates; k += stride)
        count += isfinite(b->trace_samples[k]) && isfinite(b->det_samples[k]);
    el_buf_printf(c->o, "<path class=\"%s\" clip-path=\"url(#%s)\" data-points=\"%zu\" "
                  "stroke=\"%s\" d=\"", cls, clip, count, mode_colour(0));
    for (size_t k = 0; k < b->replicates; k += stride) {
        double t = b->trace_samples[k], d = b->det_samples[k];
        if (!isfinite(t) || !isfinite(d))
            continue;
        dot(c, f, t, d);
        drawn++;
        if (outside)
            *outside += !in_view(f, t, d);
    }
    put(c, "\"/>");
    return drawn;
}

static void plane_estimate(ctx *c, const frame *f, int label)
{
    const el_verdict *v = &c->r->verdict;
    if (!isfinite(v->trace) || !isfinite(v->determinant))
        return;
    marker(c, f, v->trace, v->determinant, "est");
    if (label)
        el_buf_printf(c->o, "<text class=\"estlabel\" x=\"%.1f\" y=\"%.1f\">estimate</text>",
                      fx(f, v->trace) + 10, fy(f, v->determinant) - 9);
}

static void plane_titles(ctx *c, const frame *f, int full)
{
    x_title_begin(c, f);
    put(c, full ? "trace &tau; = &lambda;&#8321; + &lambda;&#8322; [" : "&tau; [");
    esc(c, c->rate_unit);
    put(c, "]</text>");
    y_title_begin(c, f);
    put(c, full ? "determinant &Delta; = &lambda;&#8321;&lambda;&#8322; [" : "&Delta; [");
    esc(c, c->rate_unit);
    put(c, "&sup2;]</text>");
}

static void plane_caption(ctx *c, size_t drawn, size_t outside)
{
    const el_verdict *v = &c->r->verdict;
    const el_boot_result *b = &c->r->boot;
    caption_begin(c, "Trace-determinant plane of the continuous-time model.");
    put(c, "Left, the whole plane: the parabola &Delta; = &tau;&sup2;/4 separates nodes "
           "(below) from spirals (above); &Delta; &lt; 0 is a saddle; the shaded quadrant "
           "(&tau; &lt; 0, &Delta; &gt; 0) is stable. Right, a close-up of the box drawn on the "
           "left. Estimate: &tau; = ");
    put_num(c, v->trace, 4);
    put(c, ", &Delta; = ");
    put_num(c, v->determinant, 4);
    put(c, ", discriminant &tau;&sup2; &minus; 4&Delta; = ");
    put_num(c, v->discriminant, 4);
    put(c, ", region <b>");
    esc(c, v->region == EL_REGION_NONE ? "n/a" : el_region_name(v->region));
    put(c, "</b>.");
    if (c->boot && b->has_plane) {
        el_buf_printf(c->o, " Dots: %zu bootstrap replicates. Region shares:", drawn);
        int any = 0;
        for (int k = 0; k < EL_REGION_COUNT; k++) {
            if (b->region_probability[k] > 0) {
                el_buf_printf(c->o, "%s %s ", any ? "," : "", el_region_name((el_region)k));
                put_num(c, b->region_probability[k], 3);
                any = 1;
            }
        }
        put(c, any ? "." : " n/a.");
        if (outside)
            el_buf_printf(c->o, " %zu replicate%s outside the left view.", outside,
                          outside == 1 ? "" : "s");
    } else {
        put(c, " No bootstrap was run, so there is no cloud.");
    }
    put(c, "</figcaption></figure>\n");
}

static void fig_plane(ctx *c, double *scratch)
{
    span t, d;
    int cloud = plane_cloud_span(c, scratch, &t, &d);
    frame f = {.left = 76, .top = 24, .width = 500, .height = 370};
    frame z = {.left = 668, .top = 24, .width = 272, .height = 370};
    plane_bounds(t, d, &f);
    zoom_bounds(t, d, &f, &z);
    put(c, "<figure id=\"fig-plane\">");
    svg_begin(c, 960, 450, "trace-determinant plane");
    clip_def(c, "clip-plane", &f);
    clip_def(c, "clip-zoom", &z);
    plane_background(c, &f, "clip-plane");
    plane_labels(c, &f);
    size_t drawn = 0, outside = 0;
    if (cloud)
        drawn = plane_cloud(c, &f, "cloud", "clip-plane", &outside);
    plane_estimate(c, &f, 1);
    /* The close-up's extent, outlined on the whole plane. */
    double bx0 = clampd(fx(&f, z.xlo), f.left, f.left + f.width);
    double bx1 = clampd(fx(&f, z.xhi), f.left, f.left + f.width);
    double by0 = clampd(fy(&f, z.yhi), f.top, f.top + f.height);
    double by1 = clampd(fy(&f, z.ylo), f.top, f.top + f.height);
    el_buf_printf(c->o, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"none\" "
                  "stroke=\"#1d2327\" stroke-width=\"1\" stroke-dasharray=\"3 2\"/>",
                  bx0 - 3, by0 - 3, bx1 - bx0 + 6, by1 - by0 + 6);
    frame_box(c, &f);
    plane_titles(c, &f, 1);
    plane_background(c, &z, "clip-zoom");
    if (cloud)
        plane_cloud(c, &z, "cloud-zoom", "clip-zoom", NULL);
    plane_estimate(c, &z, 0);
    el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\">close-up</text>", z.left,
                  z.top - 8);
    if (z.xlo < 0 && z.xhi > 0)
        el_buf_printf(c->o, "<text class=\"note\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\" "
                      "transform=\"rotate(-90 %.1f %.1f)\">&tau; = 0</text>", fx(&z, 0) - 5,
                      z.top + 6, fx(&z, 0) - 5, z.top + 6);
    frame_box(c, &z);
    plane_titles(c, &z, 0);
    put(c, "</svg>\n");
    plane_caption(c, drawn, outside);
}

/* ------------------------------------------------------------ lines */

/* Appends a polyline of y[0..n) at x = x0 + i dx, downsampled by the
 * min/max rule of el_html.h, as path data ("M x y x y ..."; a
 * non-finite value breaks the line and the next point moves). Returns
 * the number of points written. */
static size_t line_points(ctx *c, const frame *f, double x0, double dx, const double *y,
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
                      fx_clamped(f, x0 + dx * (double)first), fy(f, v_first));
        written++;
        pen_down = 1;
        if (second != first) {
            el_buf_printf(c->o, " %.1f %.1f", fx_clamped(f, x0 + dx * (double)second),
                          fy(f, v_second));
            written++;
        }
    }
    return written;
}

/* Writes <path class="line CLS" d="..." data-points="N"/>. */
static void line_path(ctx *c, const frame *f, const char *cls, double x0, double dx,
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
        widen(&m.lo, &m.hi, x[k]);
    span all = m;
    if (p != NULL) {
        size_t i0, n = overlap(w, p->one_step_first, p->one_step_count, &i0);
        for (size_t i = i0; i < i0 + n; i++)
            widen(&all.lo, &all.hi, p->one_step[ch * p->one_step_count + i]);
        n = overlap(w, p->free_first, p->free_count, &i0);
        for (size_t i = i0; i < i0 + n; i++)
            widen(&all.lo, &all.hi, p->free_run[ch * p->free_count + i]);
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

static void ts_legend(ctx *c, const frame *f, int with_model)
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
    put(c, "</g>");
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

static void ts_lines(ctx *c, const frame *f, size_t ch, const el_prediction *p,
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
                      fx(f, ts_time(c, p->free_first + last)),
                      fy(f, p->free_run[ch * p->free_count + last]));
    }
}

static void ts_panel(ctx *c, frame *f, size_t ch, const el_prediction *p, sample_range w,
                     const char *clip_id)
{
    span y = series_span(&c->r->series, ch, p, w);
    f->xlo = ts_time(c, w.k0);
    f->xhi = ts_time(c, w.k1 - 1) > f->xlo ? ts_time(c, w.k1 - 1) : f->xlo + 1;
    f->ylo = y.lo;
    f->yhi = y.hi > y.lo ? y.hi : y.lo + 1;
    clip_def(c, clip_id, f);
    x_ticks(c, f);
    y_ticks(c, f);
    ts_lines(c, f, ch, p, w, clip_id);
    frame_box(c, f);
    x_title_begin(c, f);
    put(c, c->r->table.time_is_iso ? "time from window start [" : "time [");
    esc(c, c->time_unit);
    put(c, "]</text>");
    y_title_begin(c, f);
    put_channel_label(c, ch);
    put(c, "</text>");
}

static void ts_caption(ctx *c, size_t ch, const el_prediction *p, size_t detail)
{
    const el_series *s = &c->r->series;
    c->figure++;
    el_buf_printf(c->o, "<figcaption><b>Figure %d. ", c->figure);
    put_channel_label(c, ch);
    put(c, ": measured and model.</b> ");
    if (p == NULL) {
        put(c, "Model predictions n/a.</figcaption></figure>\n");
        return;
    }
    put(c, "The one-step prediction starts from each measured state; the free run starts "
           "from the first state of the window and is never corrected. Error relative to "
           "the channel's standard deviation (0 perfect, 1 no better than its mean): one-step <b>");
    put_num(c, p->one_step_nrmse[ch], 3);
    put(c, "</b>, free run <b>");
    put_num(c, p->free_nrmse[ch], 3);
    put(c, "</b>.");
    if (p->free_diverged) {
        put(c, " The free run diverged at ");
        put_num(c, ts_time(c, p->free_diverged_at), 6);
        put(c, " ");
        esc(c, c->time_unit);
        put(c, " (left the measured range by more than 10&#8310; times it) and stops there "
               "(dot).");
    }
    if (detail > 0) {
        put(c, " Lower panel: the first ");
        put_num(c, (double)(detail - 1) * s->dt, 4);
        put(c, " ");
        esc(c, c->time_unit);
        el_buf_printf(c->o, " (shaded above) at full resolution. The upper panel shows the "
                      "minimum and maximum of each of %d runs of consecutive samples.",
                      EL_HTML_MAX_LINE_POINTS / 2);
    }
    put(c, "</figcaption></figure>\n");
}

static void fig_timeseries(ctx *c, size_t ch, const el_prediction *p)
{
    const el_series *s = &c->r->series;
    size_t detail = detail_samples(s->n_samples);
    frame f = {.left = 84, .top = 34, .width = 852, .height = 190};
    frame z = {.left = 84, .top = 290, .width = 852, .height = 150};
    el_buf_printf(c->o, "<figure id=\"fig-timeseries-%zu\">", ch);
    svg_begin(c, 960, detail ? 496 : 280, s->names[ch]);
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
    put(c, "</svg>\n");
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
    frame f = {.left = 84, .top = 24, .width = 852, .height = 170, .xlo = 0,
               .xhi = f_top > 0 ? f_top : 1, .ylog = 1,
               .ylo = ok ? floor(log10(lo)) : -1, .yhi = ok ? ceil(log10(top) + 0.05) : 0};
    if (f.yhi - f.ylo < 1)
        f.ylo = f.yhi - 1;
    char clip[32];
    snprintf(clip, sizeof clip, "clip-psd-%zu", ch);
    svg_begin(c, 960, 246, c->r->series.names[ch]);
    clip_def(c, clip, &f);
    x_ticks(c, &f);
    y_ticks(c, &f);
    if (ok)
        line_path(c, &f, "psd", sp->frequency_hz[1], sp->df_hz, psd + 1, sp->n_bins - 1, 1, clip);
    const el_modes *md = &c->r->modes;
    for (size_t m = 0; m < md->n_modes; m++) {
        if (!mode_in_spectrum(&md->modes[m], f.xhi))
            continue;
        double x = fx(&f, md->modes[m].frequency_hz);
        el_buf_printf(c->o, "<line class=\"modeline\" data-mode=\"%zu\" stroke=\"%s\" "
                      "x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/><text class=\"estlabel\" "
                      "fill=\"%s\" style=\"fill:%s\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"middle\">"
                      "%zu</text>", m + 1, mode_colour(m), x, x, f.top, f.top + f.height,
                      mode_colour(m), mode_colour(m), x, f.top - 6, m + 1);
    }
    frame_box(c, &f);
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" font-weight=\"600\" "
                  "text-anchor=\"end\">", f.left + f.width, f.top - 8);
    put_channel_label(c, ch);
    put(c, "</text>");
    x_title_begin(c, &f);
    put(c, "frequency [");
    esc(c, c->freq_unit);
    put(c, "]</text>");
    y_title_begin(c, &f);
    put(c, "PSD [");
    const char *u = channel_unit(c, ch);
    if (u[0] != '\0') {
        put(c, "(");
        esc(c, u);
        put(c, ")&sup2;/");
    } else {
        put(c, "1/");
    }
    esc(c, c->freq_unit);
    put(c, "]</text></svg>\n");
}

static void fig_spectrum(ctx *c, const el_spectra *sp)
{
    put(c, "<figure id=\"fig-spectrum\">");
    for (size_t ch = 0; ch < sp->n_channels; ch++)
        spectrum_panel(c, sp, ch);
    caption_begin(c, "Power spectra (Welch).");
    el_buf_printf(c->o, "Segments of %zu samples with 50 %% overlap, Hann window, %zu segments "
                  "averaged; bin spacing ", sp->segment_length, sp->n_segments);
    put_num(c, sp->df_hz, 4);
    put(c, " ");
    esc(c, c->freq_unit);
    put(c, ". Dashed vertical lines: the frequencies of the model's oscillatory modes, "
           "numbered as in the mode table; a mode the data support should sit on a peak.");
    if (sp->n_bins - 1 > EL_HTML_MAX_LINE_POINTS)
        el_buf_printf(c->o, " Lines show the minimum and maximum of each of %d runs of bins.",
                      EL_HTML_MAX_LINE_POINTS / 2);
    put(c, "</figcaption></figure>\n");
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
    put(c, "<svg class=\"dial\" width=\"24\" height=\"24\" viewBox=\"0 0 24 24\">"
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
    put(c, "</svg>");
}

static void mode_shape_cell(ctx *c, const el_mode *m, size_t index)
{
    const el_series *s = &c->r->series;
    put(c, "<td><table class=\"shape\">");
    for (size_t ch = 0; ch < c->r->modes.n_channels; ch++) {
        put(c, "<tr><td class=\"ch\">");
        esc(c, s->names[ch]);
        put(c, "</td><td>");
        shape_bar(c, m->shape_magnitude[ch], mode_colour(index));
        put(c, "</td><td>");
        shape_dial(c, m->shape_magnitude[ch], m->shape_phase_deg[ch], mode_colour(index));
        put(c, "</td><td class=\"n\">");
        put_num(c, m->shape_magnitude[ch], 2);
        put(c, " &ang; ");
        put_num(c, m->shape_phase_deg[ch], 3);
        put(c, "&deg;</td></tr>");
    }
    put(c, "</table></td>");
}

/* "[lo, hi]"; open_end (static markup) stands for an upper end of +inf
 * when given, else such an end is "n/a" like any value that does not
 * exist. */
static void put_pair(ctx *c, double lo, double hi, int sig, const char *open_end)
{
    put(c, "[");
    put_num(c, lo, sig);
    put(c, ", ");
    if (open_end != NULL && isinf(hi) && hi > 0)
        put(c, open_end);
    else
        put_num(c, hi, sig);
    put(c, "]");
}

/* "[lo, hi]" under a value, or nothing without a bootstrap. */
static void put_bounds(ctx *c, const char *prefix, const el_interval *iv, int sig)
{
    put(c, "<div class=\"iv\">");
    put(c, prefix);
    put_pair(c, iv->lo, iv->hi, sig, NULL);
    put(c, "</div>");
}

static const el_mode_bounds *bounds_of(const ctx *c, size_t i)
{
    return c->boot && i < c->r->boot.n_modes ? &c->r->boot.bounds[i] : NULL;
}

static void mode_lambda_cell(ctx *c, const el_mode *m, const el_mode_bounds *b)
{
    put(c, "<td class=\"n\">");
    if (m->instantaneous) {
        put(c, "&minus;&infin; (&mu; = 0)");
    } else {
        put_num(c, m->lambda_re, 4);
        if (m->pair) {
            put(c, " &plusmn; ");
            put_num(c, m->lambda_im, 4);
            put(c, "i");
        }
    }
    if (b != NULL) {
        put_bounds(c, "Re ", &b->re, 3);
        if (m->pair)
            put_bounds(c, "Im ", &b->im, 4);
    }
    put(c, "</td>");
}

static void mode_value_cell(ctx *c, double v, const el_interval *iv)
{
    put(c, "<td class=\"n\">");
    put_num(c, v, 4);
    if (iv != NULL)
        put_bounds(c, "", iv, 3);
    put(c, "</td>");
}

static void mode_row(ctx *c, size_t i)
{
    const el_mode *m = &c->r->modes.modes[i];
    const el_mode_bounds *b = bounds_of(c, i);
    el_buf_printf(c->o, "<tr id=\"mode-%zu\"><td class=\"n\"><span class=\"swatch\" "
                  "style=\"background:%s\"></span><b>%zu</b></td>", i + 1, mode_colour(i), i + 1);
    mode_lambda_cell(c, m, b);
    if (m->at_nyquist)
        put(c, "<td class=\"n\">n/a<div class=\"iv\">at Nyquist: aliased</div></td>");
    else
        mode_value_cell(c, m->frequency_hz, b ? &b->frequency_hz : NULL);
    mode_value_cell(c, m->damping_ratio, b ? &b->damping_ratio : NULL);
    mode_value_cell(c, m->decay_rate, b ? &b->decay_rate : NULL);
    put(c, "<td class=\"n\">");
    put_num(c, m->time_constant_s, 4);
    if (isfinite(m->time_constant_s))
        el_buf_printf(c->o, "<div class=\"iv\">%s</div>", m->decay_rate < 0 ? "doubling" : "decay");
    put(c, "</td>");
    mode_shape_cell(c, m, i);
    put(c, "</tr>\n");
}

/* A table column: its name (static markup) and unit (escaped; NULL:
 * none). */
typedef struct {
    const char *name;
    const char *unit;
} column;

/* Opens <figure id=ID><table class=CLS> with a header row and <tbody>. */
static void table_open(ctx *c, const char *id, const char *cls, const column *cols, size_t n)
{
    el_buf_printf(c->o, "<figure id=\"%s\"><table class=\"%s\"><thead><tr>", id, cls);
    for (size_t i = 0; i < n; i++) {
        put(c, "<th>");
        put(c, cols[i].name);
        if (cols[i].unit != NULL) {
            put(c, " [");
            esc(c, cols[i].unit);
            put(c, "]");
        }
        put(c, "</th>");
    }
    put(c, "</tr></thead>\n<tbody>\n");
}

static void fig_modes(ctx *c)
{
    const column cols[] = {{"#", NULL},
                           {"&lambda;", c->rate_unit},
                           {"frequency", c->freq_unit},
                           {"damping &zeta;", NULL},
                           {"decay rate", c->rate_unit},
                           {"time constant", c->time_unit},
                           {"shape: magnitude, phase", NULL}};
    table_open(c, "fig-modes", "modes", cols, sizeof cols / sizeof cols[0]);
    for (size_t i = 0; i < c->r->modes.n_modes; i++)
        mode_row(c, i);
    put(c, "</tbody></table>\n");
    caption_begin(c, "Modes, least damped first.");
    if (c->boot && isfinite(c->level))
        el_buf_printf(c->o, "Grey brackets: %.3g %% bootstrap bounds. ", 100.0 * c->level);
    put(c, "Frequency f = Im &lambda; / 2&pi;; damping ratio &zeta; = &minus;Re &lambda; / "
           "|&lambda;|; decay rate &minus;Re &lambda; (negative: growing); time constant "
           "1/|Re &lambda;| (decay) or ln 2 / Re &lambda; (doubling). Shape: how much each "
           "channel takes part (bar, largest = 1, in the channels' own units) and its phase "
           "relative to the largest (arrow angle, counter-clockwise).");
    if (!c->boot)
        put(c, " Bounds n/a: no bootstrap was run.");
    put(c, "</figcaption></figure>\n");
}

/* ------------------------------------------------------------ details */

static void detail_row_begin(ctx *c, const char *name)
{
    el_buf_printf(c->o, "<tr><th>%s</th><td>", name);
}

static void details_section(ctx *c)
{
    const el_assessment *r = c->r;
    const el_series *s = &r->series;
    const el_model *m = &r->model;
    put(c, "<h2 class=\"section\">Data, model and resampling</h2>\n"
           "<table class=\"details\" id=\"details\">");
    detail_row_begin(c, "log");
    esc(c, r->table.source);
    el_buf_printf(c->o, ", %zu rows, %zu used%s, %zu cells filled</td></tr>", r->table.n_rows,
                  s->rows_used, s->resampled ? " (resampled to a uniform grid)" : "",
                  s->filled_cells);
    detail_row_begin(c, "model");
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
    if (r->method_was_auto) {
        detail_row_begin(c, "estimator choice");
        esc(c, r->method_reason);
        if (r->cross_ran) {
            el_buf_printf(c->o, "; cross-check by %s %s", el_method_name(r->cross_method),
                          r->cross_agrees ? "agrees" : "disagrees");
            if (isfinite(r->cross_p_stable))
                el_buf_printf(c->o, " (P(stable) %.3f)", r->cross_p_stable);
        }
        put(c, "</td></tr>");
    }
    detail_row_begin(c, "one-step R&sup2;");
    put_num(c, m->fit_r2, 4);
    put(c, " overall");
    for (size_t ch = 0; ch < s->n_channels && m->channel_r2; ch++) {
        put(c, "; ");
        esc(c, s->names[ch]);
        put(c, " ");
        put_num(c, m->channel_r2[ch], 4);
    }
    put(c, "</td></tr>");
    detail_row_begin(c, "operating point");
    for (size_t ch = 0; ch < s->n_channels; ch++) {
        put(c, ch ? "; " : "");
        esc(c, s->names[ch]);
        put(c, " ");
        put_num(c, r->operating_point_ok && r->operating_point ? r->operating_point[ch] : NAN, 6);
        put(c, " ");
        esc(c, channel_unit(c, ch));
    }
    if (!m->operating_point_ok)
        put(c, " (I &minus; A<sub>d</sub> is singular: no isolated fixed point)");
    put(c, "</td></tr>");
    detail_row_begin(c, "bootstrap");
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
        put(c, "not run (bounds and P(stable) n/a)");
    }
    put(c, "</td></tr></table>\n");
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
    set_units(&c, table_time_unit(&r->table));
    el_prediction *pred = NULL;
    if ((st = make_prediction(r, &pred, err)) != EL_OK)
        return st;
    double *scratch = malloc((r->boot.replicates + 1) * sizeof *scratch);
    if (scratch == NULL) {
        el_prediction_destroy(pred);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    page_begin(&c);
    verdict_section(&c);
    warnings_section(&c);
    caution_section(&c);
    put(&c, "<h2 class=\"section\">Eigenvalues</h2>\n");
    fig_eigenvalues(&c, scratch);
    if (r->verdict.has_plane)
        fig_plane(&c, scratch);
    put(&c, "<h2 class=\"section\">Measured and model</h2>\n");
    for (size_t ch = 0; ch < r->series.n_channels; ch++)
        fig_timeseries(&c, ch, pred);
    if (spectra != NULL) {
        put(&c, "<h2 class=\"section\">Spectra</h2>\n");
        fig_spectrum(&c, spectra);
    }
    put(&c, "<h2 class=\"section\">Modes</h2>\n");
    fig_modes(&c);
    details_section(&c);
    page_end(&c);
    free(scratch);
    el_prediction_destroy(pred);
    if (out->failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory while writing the HTML report");
    return EL_OK;
}

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
    return w->ok && w->n_replicates > 0 && isfinite(w->margin);
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
        widen(&a->from, &a->to, w->t_from - a->x0);
        widen(&a->from, &a->to, w->t_to - a->x0);
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
static void margin_range(const el_track_result *r, const track_axis *a, frame *f)
{
    double lo = 0.0, hi = 0.0;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (!w->ok)
            continue;
        widen(&lo, &hi, w->margin);
        widen(&lo, &hi, w->margin_lo);
        widen(&lo, &hi, w->margin_hi);
    }
    const double slopes[3] = {r->slope, r->slope_lo, r->slope_hi};
    for (int k = 0; k < 3 && a->line; k++) {
        widen(&lo, &hi, on_line(r, a, slopes[k], a->from));
        widen(&lo, &hi, on_line(r, a, slopes[k], a->to));
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
static void margin_background(ctx *c, const frame *f)
{
    double y0 = fy(f, 0.0), bottom = f->top + f->height;
    el_buf_printf(c->o, "<rect class=\"unstable-side\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                  "height=\"%.1f\"/>", f->left, y0, f->width, bottom - y0);
    x_ticks(c, f);
    y_ticks(c, f);
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
    esc(c, w->from_text);
    put(c, " to ");
    esc(c, w->to_text);
}

static void window_data(ctx *c, const char *cls, const el_track_window *w)
{
    el_buf_printf(c->o, "<g class=\"%s\" data-from=\"", cls);
    esc(c, w->from_text);
    put(c, "\" data-to=\"");
    esc(c, w->to_text);
    put(c, "\"");
}

/* A failed window: a triangle on the bottom edge, its message on hover. */
static void failed_marker(ctx *c, const frame *f, double x, const el_track_window *w)
{
    window_data(c, "window-failed", w);
    put(c, "><title>");
    put_window_span(c, w);
    put(c, ": failed: ");
    esc(c, w->error);
    el_buf_printf(c->o, "</title><path d=\"M%.1f %.1fl-6 0 6 -11 6 11z\"/></g>", x,
                  f->top + f->height - 2);
}

static void margin_windows(ctx *c, const frame *f, const track_axis *a)
{
    const el_track_result *r = c->t;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        double x = fx(f, mid_x(a, w));
        if (!w->ok) {
            failed_marker(c, f, x, w);
            continue;
        }
        char b[40];
        window_data(c, "window", w);
        el_buf_printf(c->o, " data-margin=\"%s\"><title>", num(b, sizeof b, w->margin, 6));
        put_window_span(c, w);
        put(c, ": margin ");
        put_num(c, w->margin, 4);
        put(c, " ");
        put_pair(c, w->margin_lo, w->margin_hi, 4, NULL);
        put(c, "</title>");
        if (isfinite(w->margin_lo) && isfinite(w->margin_hi))
            el_buf_printf(c->o, "<line class=\"wbar\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                          "y2=\"%.1f\"/>", x, x, fy(f, w->margin_lo), fy(f, w->margin_hi));
        if (isfinite(w->margin))
            el_buf_printf(c->o, "<circle class=\"wdot\" cx=\"%.1f\" cy=\"%.1f\" r=\"4.5\"/>", x,
                          fy(f, w->margin));
        put(c, "</g>");
    }
}

static void slope_line(ctx *c, const frame *f, const track_axis *a, const char *cls,
                       double slope)
{
    const el_track_result *r = c->t;
    if (!isfinite(slope))
        return;
    el_buf_printf(c->o, "<line class=\"%s\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>",
                  cls, fx(f, a->from), fx(f, a->to), fy(f, on_line(r, a, slope, a->from)),
                  fy(f, on_line(r, a, slope, a->to)));
}

/* The dashed way from the last window to zero and, on the zero line, the
 * bounds of the time to zero (an open end runs to the edge). */
static void margin_extrapolation(ctx *c, const frame *f, const track_axis *a)
{
    const el_track_result *r = c->t;
    double x1 = a->t_last + r->time_to_zero, y1 = 0.0;
    if (x1 > f->xhi) {
        x1 = f->xhi;
        y1 = on_line(r, a, r->slope, x1);
    }
    el_buf_printf(c->o, "<line class=\"extrapolation\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                  "y2=\"%.1f\"/>", fx(f, a->t_last), fx(f, x1), fy(f, r->margin_now), fy(f, y1));
    double lo = clampd(a->t_last + r->time_to_zero_lo, f->xlo, f->xhi);
    double hi = isfinite(r->time_to_zero_hi) ? a->t_last + r->time_to_zero_hi : INFINITY;
    double y0 = fy(f, 0.0), xl = fx(f, lo), xh = fx(f, clampd(hi, f->xlo, f->xhi));
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
                      fx(f, x1), y0);
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
static void margin_legend(ctx *c, const frame *f, const track_axis *a, size_t failed)
{
    double x = f->left, y = f->top - 14;
    put(c, "<g class=\"legend\">");
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
    put(c, "</g>");
}

static void margin_titles(ctx *c, const frame *f)
{
    x_title_begin(c, f);
    put(c, c->t->time_is_iso ? "time from the first window's start [" : "time [");
    esc(c, c->time_unit);
    put(c, "]</text>");
    y_title_begin(c, f);
    put(c, "margin &minus;max Re &lambda; [");
    esc(c, c->rate_unit);
    put(c, "]</text>");
}

/* "BEFORE 95 % AFTER" (static markup around the level), nothing when the
 * level is unknown. */
static void put_level_phrase(ctx *c, const char *before, const char *after)
{
    if (!isfinite(c->level))
        return;
    put(c, before);
    el_buf_printf(c->o, "%.3g %%", 100.0 * c->level);
    put(c, after);
}

/* A duration in prose: "300 s", "300 time units". */
static void put_duration(ctx *c, double v)
{
    put_num(c, v, 4);
    put(c, " ");
    if (c->t->time_unit[0] != '\0')
        esc(c, c->time_unit);
    else
        put(c, "time units");
}

static size_t failed_windows(const el_track_result *r)
{
    return r->n_windows - r->n_ok;
}

static void margin_caption(ctx *c, const track_axis *a)
{
    const el_track_result *r = c->t;
    caption_begin(c, "Margin over time.");
    put(c, "Each window's margin, the decay rate &minus;max Re &lambda; of its least damped "
           "mode, at the window's middle (dot)");
    put_level_phrase(c, " with its ", " bootstrap bounds (bar)");
    put(c, ". Above the green zero line the operating point is stable; the shaded side "
           "below it is unstable (a mode grows).");
    if (a->line) {
        put(c, " Solid line: the margins' weighted least-squares line, slope ");
        put_num(c, r->slope, 4);
        put(c, " ");
        esc(c, c->slope_unit);
        put(c, "; thin lines: the slopes at its bounds, through the line's value at the last "
               "window.");
    } else {
        put(c, " No line: fewer than 3 windows gave a margin.");
    }
    if (a->extrapolate) {
        put(c, " Dashed: a straight-line extrapolation, not a prediction; at this rate the "
               "margin reaches zero ");
        put_duration(c, r->time_to_zero);
        put(c, " after the last window's middle; the thick stretch of the zero line spans its "
               "bounds ");
        put_pair(c, r->time_to_zero_lo, r->time_to_zero_hi, 4, "not bounded");
        put(c, ".");
        if (extrapolation_end(r, a) > margin_reach(a))
            put(c, " The view is cut at twice the windows' span after their end.");
    }
    size_t failed = failed_windows(r);
    if (failed > 0)
        el_buf_printf(c->o, " %zu failed window%s marked at the bottom (see the table).",
                      failed, failed == 1 ? "" : "s");
    if (r->time_is_iso) {
        put(c, " Time in seconds from ");
        esc(c, r->windows[0].from_text);
        put(c, ".");
    }
    put(c, "</figcaption></figure>\n");
}

static void fig_margin(ctx *c, const track_axis *a)
{
    frame f = {.left = 84, .top = 40, .width = 852, .height = 340};
    margin_range(c->t, a, &f);
    put(c, "<figure id=\"fig-margin\">");
    svg_begin(c, 960, 436, "margin of each window over time");
    clip_def(c, "clip-margin", &f);
    margin_background(c, &f);
    put(c, "<g clip-path=\"url(#clip-margin)\">");
    if (a->line) {
        slope_line(c, &f, a, "trend-bound", c->t->slope_lo);
        slope_line(c, &f, a, "trend-bound", c->t->slope_hi);
    }
    if (a->extrapolate)
        margin_extrapolation(c, &f, a);
    if (a->line)
        slope_line(c, &f, a, "trend", c->t->slope);
    put(c, "</g>");
    margin_windows(c, &f, a);
    margin_legend(c, &f, a, failed_windows(c->t));
    frame_box(c, &f);
    margin_titles(c, &f);
    put(c, "</svg>\n");
    margin_caption(c, a);
}

/* ------------------------------------------------------------ track: modes */

static double window_value(const el_track_window *w, int freq)
{
    return freq ? w->frequency_hz : w->damping_ratio;
}

/* y range of one panel: the finite values; the damping ratio keeps 0 in
 * view, since its distance to 0 is the point. Returns the count. */
static size_t panel_range(const el_track_result *r, int freq, frame *f)
{
    double lo = INFINITY, hi = -INFINITY;
    size_t n = 0;
    if (!freq)
        lo = hi = 0.0;
    for (size_t i = 0; i < r->n_windows; i++) {
        double v = window_value(&r->windows[i], freq);
        if (r->windows[i].ok && isfinite(v)) {
            widen(&lo, &hi, v);
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
static void window_panel(ctx *c, frame *f, const track_axis *a, int freq)
{
    const el_track_result *r = c->t;
    double pad = 0.03 * (a->to - a->from);
    f->xlo = a->from - pad;
    f->xhi = a->to + pad;
    panel_range(r, freq, f);
    x_ticks(c, f);
    y_ticks(c, f);
    const char *cls = freq ? "freq" : "zeta";
    el_buf_printf(c->o, "<path class=\"join\" d=\"");
    int pen = 0;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (!w->ok || !isfinite(window_value(w, freq)))
            continue;
        el_buf_printf(c->o, "%s%.1f %.1f", pen ? " " : "M", fx(f, mid_x(a, w)),
                      fy(f, window_value(w, freq)));
        pen = 1;
    }
    put(c, "\"/>");
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (w->ok && isfinite(window_value(w, freq)))
            el_buf_printf(c->o, "<circle class=\"%s\" cx=\"%.1f\" cy=\"%.1f\" r=\"4\"/>", cls,
                          fx(f, mid_x(a, w)), fy(f, window_value(w, freq)));
    }
    frame_box(c, f);
    x_title_begin(c, f);
    put(c, r->time_is_iso ? "time from the first window's start [" : "time [");
    esc(c, c->time_unit);
    put(c, "]</text>");
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" font-weight=\"600\">", f->left, f->top - 10);
    if (freq) {
        put(c, "frequency f [");
        esc(c, c->freq_unit);
        put(c, "]</text>");
    } else {
        put(c, "damping ratio &zeta;</text>");
    }
}

static void fig_damping(ctx *c, const track_axis *a)
{
    frame z = {.left = 70, .top = 30, .width = 370, .height = 170};
    frame q = {.left = 566, .top = 30, .width = 370, .height = 170};
    size_t no_zeta = 0;
    for (size_t i = 0; i < c->t->n_windows; i++)
        no_zeta += c->t->windows[i].ok && !isfinite(c->t->windows[i].damping_ratio);
    put(c, "<figure id=\"fig-damping\">");
    svg_begin(c, 960, 250, "damping ratio and frequency of each window");
    window_panel(c, &z, a, 0);
    window_panel(c, &q, a, 1);
    put(c, "</svg>\n");
    caption_begin(c, "Damping ratio and frequency of the least damped mode per window.");
    put(c, "One dot per assessed window at its middle. &zeta; = &minus;Re &lambda; / "
           "|&lambda;|: a falling &zeta; at a steady frequency is a mode losing its damping; "
           "a real mode has frequency 0.");
    if (no_zeta > 0)
        el_buf_printf(c->o, " %zu window%s without a defined damping ratio left out.", no_zeta,
                      no_zeta == 1 ? "" : "s");
    put(c, "</figcaption></figure>\n");
}

/* ------------------------------------------------------------ track: table */

static const char *stability_word(el_stability s)
{
    return s == EL_STABLE ? "stable" : s == EL_UNSTABLE ? "unstable" : "marginal";
}

static void num_cell(ctx *c, double v, int sig)
{
    put(c, "<td class=\"n\">");
    put_num(c, v, sig);
    put(c, "</td>");
}

static void window_row(ctx *c, size_t i)
{
    const el_track_window *w = &c->t->windows[i];
    el_buf_printf(c->o, "<tr%s><td class=\"n\">%zu</td><td class=\"n\">",
                  w->ok ? "" : " class=\"failed\"", i + 1);
    esc(c, w->from_text);
    put(c, "</td><td class=\"n\">");
    esc(c, w->to_text);
    put(c, "</td>");
    if (!w->ok) {
        put(c, "<td colspan=\"6\">failed: ");
        esc(c, w->error);
        put(c, "</td></tr>\n");
        return;
    }
    el_interval iv = {w->margin_lo, w->margin_hi};
    put(c, "<td class=\"n\">");
    put_num(c, w->margin, 4);
    put_bounds(c, "", &iv, 3);
    put(c, "</td>");
    num_cell(c, w->damping_ratio, 3);
    num_cell(c, w->frequency_hz, 4);
    put(c, "<td class=\"n\">");
    if (isfinite(w->p_stable))
        el_buf_printf(c->o, "%.3f", w->p_stable);
    else
        put(c, "n/a");
    put(c, "</td>");
    el_buf_printf(c->o, "<td>%s%s", stability_word(w->stability),
                  w->ambiguous ? " (ambiguous)" : "");
    if (w->n_warnings > 0)
        el_buf_printf(c->o, "<div class=\"iv\">%zu warning%s</div>", w->n_warnings,
                      w->n_warnings == 1 ? "" : "s");
    el_buf_printf(c->o, "</td><td>%s</td></tr>\n", el_method_name(w->method));
}

static void fig_windows(ctx *c)
{
    const column cols[] = {{"#", NULL},
                           {"from", NULL},
                           {"to", NULL},
                           {"margin", c->rate_unit},
                           {"damping &zeta;", NULL},
                           {"f", c->freq_unit},
                           {"P(stable)", NULL},
                           {"verdict", NULL},
                           {"method", NULL}};
    table_open(c, "fig-windows", "modes windows", cols, sizeof cols / sizeof cols[0]);
    for (size_t i = 0; i < c->t->n_windows; i++)
        window_row(c, i);
    put(c, "</tbody></table>\n");
    caption_begin(c, "Windows in time order.");
    put(c, "Each window assessed on its own as <i>assess</i> would. Margin: decay rate of the "
           "least damped mode");
    put_level_phrase(c, ", grey brackets its ", " bootstrap bounds");
    put(c, "; P(stable): share of the window's replicates whose least damped mode decays; "
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
    verdict_open(c, trend_colour(r->trend), trend_word(r->trend));
    if (!r->has_trend)
        put(c, "<span class=\"vtag\">no trend fitted</span>");
    el_buf_printf(c->o, "<div class=\"vtype\">margin of the least damped mode over <b>%zu</b> "
                  "window%s</div>", r->n_ok, r->n_ok == 1 ? "" : "s");
    if (!r->has_trend)
        put(c, "<div class=\"ts\">fewer than 3 windows gave a margin</div>");
    else if (r->trend == EL_TREND_UNDECIDED && isfinite(c->level))
        el_buf_printf(c->o, "<div class=\"ts\">a call needs P(shrinking) &ge; %.3g or "
                      "&le; %.3g</div>", c->level, 1.0 - c->level);
    put(c, "</div>\n");
}

static void level_bounds(ctx *c, double lo, double hi)
{
    put(c, ";");
    put_level_phrase(c, " ", "");
    put(c, " bounds ");
    put_pair(c, lo, hi, 3, "not bounded");
}

static void track_tiles(ctx *c)
{
    const el_track_result *r = c->t;
    put(c, "<div class=\"tiles\">");
    tile_begin(c, "P(shrinking)");
    if (r->has_trend && isfinite(r->p_shrinking)) {
        el_buf_printf(c->o, "%.3f</div><div class=\"ts\">share of the replicate slopes below "
                      "zero</div>", r->p_shrinking);
        p_meter(c, r->p_shrinking, "P(shrinking)");
    } else {
        put(c, "n/a</div><div class=\"ts\">no trend fitted</div>");
    }
    put(c, "</div>");
    tile_value(c, "slope", r->has_trend ? r->slope : NAN, c->slope_unit);
    put(c, "change of the margin per ");
    esc(c, c->time_unit);
    level_bounds(c, r->slope_lo, r->slope_hi);
    put(c, "</div></div>");
    tile_value(c, "margin now", r->has_trend ? r->margin_now : NAN, c->rate_unit);
    put(c, "on the fitted line at the last window's middle</div></div>");
    if (isfinite(r->time_to_zero)) {
        tile_value(c, "time to zero margin", r->time_to_zero,
                   r->time_unit[0] != '\0' ? c->time_unit : "time units");
        put(c, "after the last window's middle, a <b>straight-line extrapolation</b>, not a "
               "prediction");
        level_bounds(c, r->time_to_zero_lo, r->time_to_zero_hi);
        put(c, "</div></div>");
    }
    put(c, "</div>\n");
}

static void track_details(ctx *c)
{
    const el_track_result *r = c->t;
    size_t reps = 0;
    for (size_t i = 0; i < r->n_windows; i++)
        reps = r->windows[i].n_replicates > reps ? r->windows[i].n_replicates : reps;
    put(c, "<h2 class=\"section\">Windows and trend</h2>\n<table class=\"details\" "
           "id=\"details\">");
    detail_row_begin(c, "windows");
    el_buf_printf(c->o, "%zu of ", r->n_windows);
    put_duration(c, r->window);
    put(c, " every ");
    put_duration(c, r->step);
    el_buf_printf(c->o, "%s; %zu assessed, %zu failed; %zu channel%s</td></tr>",
                  r->step < r->window ? " (overlapping)" : "", r->n_ok, failed_windows(r),
                  r->n_channels, r->n_channels == 1 ? "" : "s");
    detail_row_begin(c, "trend fit");
    put(c, "weighted least squares of the margins on the windows' middle times, weights "
           "1 / spread&sup2;; replicate slopes from the windows' own bootstrap");
    el_buf_printf(c->o, " (%zu replicates per window)</td></tr>", reps);
    detail_row_begin(c, "scatter about the line");
    put_num(c, r->scatter_ratio, 3);
    put(c, " &times; what the bounds explain (&chi;&sup2; / dof); bounds widened ");
    put_num(c, r->widening, 3);
    put(c, " &times;</td></tr>");
    detail_row_begin(c, "level");
    put_num(c, c->level, 3);
    put(c, "</td></tr></table>\n");
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
    page_open(c, "margin tracking report", track_source(opt));
    put(c, "from ");
    esc(c, r->windows[0].from_text);
    put(c, " to ");
    esc(c, r->windows[r->n_windows - 1].to_text);
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
    set_units(&c, r->time_unit);
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
    put(&c, "</section>\n");
    warnings_box(&c, (const el_warnings *const[]){&r->warnings}, 1);
    caution_section(&c);
    put(&c, "<h2 class=\"section\">Margin over time</h2>\n");
    fig_margin(&c, &a);
    put(&c, "<h2 class=\"section\">Damping and frequency</h2>\n");
    fig_damping(&c, &a);
    put(&c, "<h2 class=\"section\">Windows</h2>\n");
    fig_windows(&c);
    track_details(&c);
    page_end(&c);
    if (out->failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory while writing the HTML report");
    return EL_OK;
}
