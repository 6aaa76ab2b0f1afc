/* el_html_spectrum: the spectrum page (Welch PSD per channel with its
 * peaks and their half-power bands), from the el_svg primitives. */
#include "el_html_spectrum.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "el_html.h"
#include "el_svg.h"

/* The band, marker and label colours (presentation attributes: the shared
 * style sheet in the head has no class for them). */
#define PEAK_COLOUR "#2f6f9f"

static void page_head(el_html_ctx *c, const el_spectra *s)
{
    const el_assessment *r = c->r;
    const el_series *se = &r->series;
    char a[64], b[64];
    el_table_format_time(&r->table, se->t0, a, sizeof a);
    el_table_format_time(&r->table, se->t0 + (double)(se->n_samples - 1) * se->dt, b,
                         sizeof b);
    el_svg_page_open(c, "spectrum", r->table.source);
    el_svg_put(c, "window ");
    el_svg_esc(c, a);
    el_svg_put(c, " to ");
    el_svg_esc(c, b);
    el_buf_printf(c->o, " &middot; %zu samples every ", se->n_samples);
    el_svg_put_num(c, se->dt, 6);
    el_buf_printf(c->o, " s &middot; %zu channel%s</span></header>\n", se->n_channels,
                  se->n_channels == 1 ? "" : "s");
    el_buf_printf(c->o, "<p class=\"layout\">Welch spectra: %zu segment%s of %zu samples "
                        "(Hann window, 50 %% overlap", s->n_segments,
                  s->n_segments == 1 ? "" : "s", s->segment_length);
    if (s->n_segments > 1 && s->last_start != (s->n_segments - 1) * s->hop)
        el_buf_printf(c->o, "; the last moved back to end at the last sample, %.0f %% overlap",
                      100.0 * s->last_overlap);
    el_buf_printf(c->o, "), all %zu samples used; resolution ", s->n_samples);
    el_svg_put_num(c, s->df_hz, 4);
    el_svg_put(c, " Hz, ");
    el_svg_put_num(c, s->dof, 3);
    el_svg_put(c, " degrees of freedom per bin.</p>\n");
}

/* The PSD as one path over bins 1..n-1 on a log scale: every bin, or the
 * minimum and maximum of each run of bins when there are more than
 * EL_HTML_MAX_LINE_POINTS (peaks stay visible). Returns the point count. */
static size_t psd_path(el_html_ctx *c, const el_svg_frame *f, const el_spectra *s,
                       const double *psd, double floor_v, const char *clip)
{
    size_t n = s->n_bins - 1, runs = EL_HTML_MAX_LINE_POINTS / 2;
    size_t per = n > EL_HTML_MAX_LINE_POINTS ? (n + runs - 1) / runs : 1, points = 0;
    el_buf_printf(c->o, "<path class=\"line psd\" clip-path=\"url(#%s)\" d=\"", clip);
    for (size_t k0 = 1; k0 < s->n_bins; k0 += per) {
        size_t k1 = k0 + per < s->n_bins ? k0 + per : s->n_bins, kmin = k0, kmax = k0;
        for (size_t k = k0; k < k1; k++) {
            kmin = psd[k] < psd[kmin] ? k : kmin;
            kmax = psd[k] > psd[kmax] ? k : kmax;
        }
        size_t ks[2] = {kmin < kmax ? kmin : kmax, kmin < kmax ? kmax : kmin};
        for (int q = 0; q < (per > 1 && kmin != kmax ? 2 : 1); q++) {
            double v = log10(fmax(psd[ks[q]], floor_v));
            el_buf_printf(c->o, "%s%.1f %.1f", points == 0 ? "M" : " L",
                          el_svg_fx(f, s->frequency_hz[ks[q]]), el_svg_fy(f, v));
            points++;
        }
    }
    el_buf_printf(c->o, "\" data-points=\"%zu\"/>", points);
    return points;
}

static void peak_marks(el_html_ctx *c, const el_svg_frame *f, const el_peaks *p, size_t ch)
{
    for (size_t i = 0; i < p->count[ch]; i++) {
        const el_peak *pk = &p->items[ch * p->max_per_channel + i];
        if (pk->band_ok) {
            double x0 = el_svg_fx_clamped(f, pk->band_low_hz);
            double x1 = el_svg_fx_clamped(f, pk->band_high_hz);
            el_buf_printf(c->o, "<rect class=\"peak-band\" data-peak=\"%zu\" fill=\"" PEAK_COLOUR "\" "
                                "fill-opacity=\"0.16\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                                "height=\"%.1f\"/>",
                          i + 1, x0, f->top, fmax(x1 - x0, 1.0), f->height);
        }
        double x = el_svg_fx(f, pk->frequency_hz);
        el_buf_printf(c->o, "<line class=\"peak-line\" data-peak=\"%zu\" stroke=\"" PEAK_COLOUR "\" "
                            "stroke-width=\"1.4\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" "
                            "y2=\"%.1f\"/><text class=\"peak-label\" fill=\"" PEAK_COLOUR "\" "
                            "style=\"fill:" PEAK_COLOUR ";font-weight:700\" x=\"%.1f\" "
                            "y=\"%.1f\" text-anchor=\"middle\">%zu</text>",
                      i + 1, x, x, f->top, f->top + f->height, x, f->top - 6, i + 1);
    }
}

/* The channel's unit squared per Hz ("1/Hz" without a unit), escaped. */
static void psd_unit(el_html_ctx *c, size_t ch)
{
    char u[80];
    el_spectrum_unit(c->r->series.units[ch], 1, u, sizeof u);
    el_svg_esc(c, u[0] ? u : "1/Hz");
}

static void psd_figure(el_html_ctx *c, const el_spectra *s, const el_peaks *p, size_t ch)
{
    const double *psd = s->psd + ch * s->n_bins;
    double top = 0.0, lo = INFINITY;
    for (size_t k = 1; k < s->n_bins; k++)
        top = fmax(top, psd[k]);
    /* Below 1e-12 of the top is FFT rounding, as in the peak picking. */
    double floor_v = top * 1e-12;
    for (size_t k = 1; k < s->n_bins; k++)
        if (psd[k] > floor_v)
            lo = fmin(lo, psd[k]);
    int ok = top > 0.0 && isfinite(lo);
    double f_top = s->frequency_hz[s->n_bins - 1];
    el_svg_frame f = {.left = 84, .top = 26, .width = 852, .height = 220, .xlo = 0,
                      .xhi = f_top > 0 ? f_top : 1, .ylog = 1,
                      .ylo = ok ? floor(log10(lo)) : -1,
                      .yhi = ok ? ceil(log10(top) + 0.05) : 0};
    if (f.yhi - f.ylo < 1)
        f.ylo = f.yhi - 1;
    char clip[40];
    snprintf(clip, sizeof clip, "clip-psd-%zu", ch + 1);
    el_buf_printf(c->o, "<figure id=\"fig-psd-%zu\">", ch + 1);
    el_svg_begin(c, 960, 300, c->r->series.names[ch]);
    el_svg_clip_def(c, clip, &f);
    el_svg_x_ticks(c, &f);
    el_svg_y_ticks(c, &f);
    peak_marks(c, &f, p, ch);
    if (ok)
        psd_path(c, &f, s, psd, floor_v, clip);
    el_svg_frame_box(c, &f);
    el_buf_printf(c->o, "<text x=\"%.1f\" y=\"%.1f\" font-weight=\"600\" text-anchor=\"end\">",
                  f.left + f.width, f.top - 8);
    el_svg_esc(c, c->r->series.names[ch]);
    el_svg_put(c, "</text>");
    el_svg_x_title_begin(c, &f);
    el_svg_put(c, "frequency [Hz]</text>");
    el_svg_y_title_begin(c, &f);
    el_svg_put(c, "PSD [");
    psd_unit(c, ch);
    el_svg_put(c, "]</text></svg>\n");
    el_svg_caption_begin(c, "Power spectral density (Welch), log scale.");
    el_buf_printf(c->o, "%zu peak%s marked and numbered as in the table; shaded: each peak's "
                        "half-power band on the smoothed spectrum.",
                  p->count[ch], p->count[ch] == 1 ? "" : "s");
    el_svg_put(c, "</figcaption></figure>\n");
}

static void peak_table(el_html_ctx *c, const el_peaks *p, size_t ch)
{
    if (p->count[ch] == 0) {
        el_svg_put(c, "<p class=\"note\">No peak stands out in this channel (10 times the "
                      "median level and above the estimator's noise).</p>\n");
        return;
    }
    const el_svg_column cols[] = {{"#", NULL}, {"frequency", "Hz"},
                                  {"half-power band", "Hz"}, {"PSD", NULL},
                                  {"&times; median", NULL}};
    char id[40];
    snprintf(id, sizeof id, "peaks-%zu", ch + 1);
    el_svg_table_open(c, id, "modes", cols, sizeof cols / sizeof cols[0]);
    for (size_t i = 0; i < p->count[ch]; i++) {
        const el_peak *pk = &p->items[ch * p->max_per_channel + i];
        el_buf_printf(c->o, "<tr><td>%zu</td><td class=\"n\">", i + 1);
        el_svg_put_num(c, pk->frequency_hz, 4);
        el_svg_put(c, " &plusmn; ");
        el_svg_put_num(c, 0.5 * pk->resolution_hz, 2);
        el_svg_put(c, "</td><td class=\"n\">");
        if (pk->band_ok)
            el_svg_put_pair(c, pk->band_low_hz, pk->band_high_hz, 4, NULL);
        else
            el_svg_put(c, "n/a");
        el_svg_put(c, "</td><td class=\"n\">");
        el_svg_put_num(c, pk->height, 4);
        el_svg_put(c, " ");
        psd_unit(c, ch);
        el_svg_put(c, "</td><td class=\"n\">");
        el_svg_put_num(c, pk->ratio_to_median, 3);
        el_svg_put(c, "</td></tr>\n");
    }
    el_svg_put(c, "</tbody></table></figure>\n");
}

el_status el_html_spectrum_report(const el_assessment *r, const el_spectra *s,
                                  const el_peaks *p, el_buf *out, el_error *err)
{
    if (r == NULL || s == NULL || p == NULL || s->n_bins < 3 || s->psd == NULL ||
        s->n_channels != r->series.n_channels || p->count == NULL)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_html_spectrum_report: spectra and log do not match");
    el_html_ctx c = {.r = r, .o = out, .level = NAN};
    el_svg_set_units(&c, "s");
    page_head(&c, s);
    const el_warnings *lists[2] = {&r->input_warnings, &r->warnings};
    el_svg_warnings_box(&c, lists, 2);
    el_svg_caution_section(&c);
    el_svg_put(&c, "<h2 class=\"section\">Spectra and peaks</h2>\n");
    for (size_t ch = 0; ch < s->n_channels; ch++) {
        psd_figure(&c, s, p, ch);
        peak_table(&c, p, ch);
    }
    el_svg_page_end(&c);
    if (out->failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory while writing the HTML page");
    return EL_OK;
}
