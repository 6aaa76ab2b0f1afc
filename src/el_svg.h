/* el_svg: the building blocks of eigenlog's HTML pages: the page being
 * written (el_html_ctx), text and numbers ("n/a" for values that do not
 * exist, everything HTML-escaped), the page frame (style sheet, head,
 * verdict tiles and meters, warnings, caution, footer, captions) and the
 * SVG primitives (plot frames and scales, ticks and axis titles, dots,
 * markers, colours, robust ranges). A page (el_html.c: assess,
 * el_html_track.c: track; a new one in its own file) fills an el_html_ctx
 * and draws with these. All output goes to ctx->o (an el_buf that records
 * a failed allocation); nothing here fails otherwise. */
#ifndef EL_SVG_H
#define EL_SVG_H

#include <stddef.h>

#include "el_assess.h"
#include "el_error.h"
#include "el_io.h"
#include "el_track.h"
#include "el_verdict.h"

/* Appends text to out with &, <, >, " and ' replaced by entities, so
 * it is safe in element content and in quoted attributes. NULL appends
 * nothing. Returns EL_OK or EL_ERR_NOMEM. */
el_status el_html_escape(el_buf *out, const char *text);

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
} el_html_ctx;

/* Plot area in viewBox pixels and the data range it shows. For a log
 * axis the range and the values passed in are log10 of the data. */
typedef struct {
    double left, top, width, height;
    double xlo, xhi, ylo, yhi;
    int ylog;
} el_svg_frame;

/* Colour of mode m (cycles through 8 colours distinct in hue and lightness,
 * so clouds stay apart in greyscale print). Static text. */
const char *el_svg_mode_colour(size_t m);

/* Appends s to the page as it is (markup). */
void el_svg_put(el_html_ctx *c, const char *s);

/* Appends s to the page HTML-escaped (el_html_escape); NULL appends nothing. */
void el_svg_esc(el_html_ctx *c, const char *s);

/* "%.4g" (sig significant digits) or "n/a" for a value that does not
 * exist; never "nan" or "inf". */
const char *el_svg_num(char *buf, size_t size, double v, int sig);

/* Appends v with sig significant digits (el_svg_num): "n/a" when v is
 * not finite. */
void el_svg_put_num(el_html_ctx *c, double v, int sig);

/* Unit texts from the time unit u ("" when the log does not say). */
void el_svg_set_units(el_html_ctx *c, const char *u);

/* Everything up to the header line's "when" text, which the caller
 * writes and closes with </span></header>. kind is static markup. */
void el_svg_page_open(el_html_ctx *c, const char *kind, const char *source);

/* The assess page's head: el_svg_page_open with c->r's source, then its
 * window, sample count and interval and channel count; c->r must be set. */
void el_svg_page_begin(el_html_ctx *c);

/* Closes the page: footer, </main>, </body>, </html>. */
void el_svg_page_end(el_html_ctx *c);

/* ------------------------------------------------------------ verdict */
const char *el_svg_verdict_colour(const el_verdict *v);

/* A 0..1 bar of a probability (name: P(stable), P(shrinking)) with
 * 1 - level and level marked: a call is made only outside the band
 * between them. */
void el_svg_p_meter(el_html_ctx *c, double p, const char *name);

/* Opens a verdict tile with label (static markup) and its value box;
 * the caller writes the value and closes both divs. */
void el_svg_tile_begin(el_html_ctx *c, const char *label);

/* A tile's value with its unit, then the start of its small print. */
void el_svg_tile_value(el_html_ctx *c, const char *label, double v, const char *unit);

/* Opens the verdict box and its head with the big word (upper-cased);
 * the caller adds the head's lines, closes it and adds the tiles. */
void el_svg_verdict_open(el_html_ctx *c, const char *colour, const char *text);

/* The warnings of n_lists lists, in order, as one box. */
void el_svg_warnings_box(el_html_ctx *c, const el_warnings *const *lists, size_t n_lists);

/* The caution box (el_assess_caution), escaped. */
void el_svg_caution_section(el_html_ctx *c);

/* ------------------------------------------------------------ plotting */
double el_svg_fx(const el_svg_frame *f, double x);

/* Pixel y, held within a band around the plot so that a far-off value
 * (clipped anyway) does not write huge coordinates. */
double el_svg_fy(const el_svg_frame *f, double y);

/* el_svg_fx clamped to 40 px beyond either side of the plot area, so a
 * far-off value still draws at the edge. */
double el_svg_fx_clamped(const el_svg_frame *f, double x);

/* 1, 2 or 5 times a power of ten, giving about target steps over span. */
double el_svg_nice_step(double span, int target);

/* Writes tick value v for ticks step apart: as many decimals as the step
 * needs (0 for steps >= 1), %.3g beyond 6 decimals or above 1e6; a value
 * within 1e-9 steps of 0 prints as 0. */
void el_svg_tick_text(char *buf, size_t size, double v, double step);

/* Opens a figure's SVG; label (escaped) is its accessible name. */
void el_svg_begin(el_html_ctx *c, double w, double h, const char *label);

/* A clip path of the plot area: lines and clouds that leave the view
 * stay inside the frame. */
void el_svg_clip_def(el_html_ctx *c, const char *id, const el_svg_frame *f);

/* Grid lines and labels of the x axis at el_svg_nice_step steps, about
 * one label per 105 px (at least 3). */
void el_svg_x_ticks(el_html_ctx *c, const el_svg_frame *f);

/* Grid lines and labels of the y axis: about 5 steps, or for a log axis
 * the powers of ten (at most about 7 labels). */
void el_svg_y_ticks(el_html_ctx *c, const el_svg_frame *f);

/* Axis titles are written by the callers (they hold escaped names and
 * entities); this draws the frame around the plot area. */
void el_svg_frame_box(el_html_ctx *c, const el_svg_frame *f);

/* Opens the x axis title's <text> below the frame, centred; the caller
 * writes the title and </text>. */
void el_svg_x_title_begin(el_html_ctx *c, const el_svg_frame *f);

/* Opens the y axis title's <text> left of the frame, rotated; the caller
 * writes the title and </text>. */
void el_svg_y_title_begin(el_html_ctx *c, const el_svg_frame *f);

/* Appends one point of a cloud (a dot: zero-length subpath, round caps). */
void el_svg_dot(el_html_ctx *c, const el_svg_frame *f, double x, double y);

/* A circle of radius 6 px and class cls at data point (x, y). */
void el_svg_marker(el_html_ctx *c, const el_svg_frame *f, double x, double y, const char *cls);

/* The q and 1 - q quantiles (el_boot_quantile) of the finite values
 * v[off + k stride], k < n, into *lo and *hi (scratch: n doubles).
 * Returns the count of finite values (0: *lo, *hi untouched). */
size_t el_svg_robust_span(const double *v, size_t stride, size_t off, size_t n,
                          double q, double *scratch, double *lo, double *hi);

/* Widens [*lo, *hi] to hold v; a value that is not finite changes nothing. */
void el_svg_widen(double *lo, double *hi, double v);

/* Opens a <figcaption> with the next figure number and title (static
 * markup); the caller writes the text and </figcaption>. */
void el_svg_caption_begin(el_html_ctx *c, const char *title);

/* v clamped to [lo, hi]. */
double el_svg_clampd(double v, double lo, double hi);

/* "[lo, hi]"; open_end (static markup) stands for an upper end of +inf
 * when given, else such an end is "n/a" like any value that does not
 * exist. */
void el_svg_put_pair(el_html_ctx *c, double lo, double hi, int sig, const char *open_end);

/* A table column: its name (static markup) and unit (escaped; NULL:
 * none). */
typedef struct {
    const char *name;
    const char *unit;
} el_svg_column;

/* "[lo, hi]" under a value, or nothing without a bootstrap. */
void el_svg_put_bounds(el_html_ctx *c, const char *prefix, const el_interval *iv, int sig);

/* Opens <figure id=ID><table class=CLS> with a header row and <tbody>. */
void el_svg_table_open(el_html_ctx *c, const char *id, const char *cls, const el_svg_column *cols, size_t n);

/* ------------------------------------------------------------ details */
void el_svg_detail_row_begin(el_html_ctx *c, const char *name);

#endif
