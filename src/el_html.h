/* el_html: an assessment, or a track run, as one self-contained HTML page
 * for people: inline CSS and SVG figures, no script, no network,
 * printable. */
#ifndef EL_HTML_H
#define EL_HTML_H

#include <stddef.h>

#include "el_assess.h"
#include "el_error.h"
#include "el_io.h"
#include "el_spectrum.h"
#include "el_svg.h"
#include "el_track.h"

/* Most points one line of a time-series or spectrum plot carries. A
 * longer line is cut into EL_HTML_MAX_LINE_POINTS / 2 runs of consecutive
 * samples (run b holds samples floor(b n / B) .. floor((b+1) n / B) - 1)
 * and each run contributes its minimum and its maximum, in sample order,
 * so peaks survive and a 12,000-sample log stays small. */
#define EL_HTML_MAX_LINE_POINTS 1500

/* Most bootstrap points one eigenvalue plot carries, over all modes.
 * With R replicates and M modes, every s-th replicate is drawn
 * (r = 0, s, 2s, ...), s = ceil(R * M / EL_HTML_MAX_CLOUD_POINTS): all of
 * them when R * M <= EL_HTML_MAX_CLOUD_POINTS. Each drawn replicate adds
 * one point per mode (the same rule for the trace-determinant cloud, one
 * point per drawn replicate); replicates with a non-finite value are left
 * out and counted in the caption. */
#define EL_HTML_MAX_CLOUD_POINTS 4000

/* Appends the HTML report of the assessment r to out: verdict, P(stable)
 * and warnings at the top; the caution (el_assess_caution); the figures,
 * each a <figure> with an id: "fig-eigenvalues" (continuous eigenvalues
 * with their bootstrap clouds, the stable half-plane shaded and the
 * boundary Re = 0), "fig-plane" (trace-determinant plane with the
 * parabola det = trace^2/4, region names and a close-up of the cloud;
 * only when r->verdict.has_plane), "fig-timeseries-<c>" for channel
 * c = 0.. (measured, one-step and free run of the model, computed here
 * with el_prediction; logs longer than EL_HTML_MAX_LINE_POINTS get a
 * full-resolution detail panel of their first twelfth, >= 200 samples),
 * "fig-spectrum" (only when spectra != NULL; Welch PSD per channel, log
 * scale, the oscillatory modes' frequencies as vertical lines) and
 * "fig-modes" (mode table with bounds and shapes); then the data, model
 * and resampling details. Machine-checkable structure: each mode's
 * bootstrap cloud is one <path class="cloud" data-mode="m"> whose dots
 * are the "M" commands of its d attribute (count also in data-points;
 * the conjugate mirror is class "cloud-mirror", the plane's close-up
 * "cloud-zoom", neither counted); lines are <path class="line KIND">
 * (KIND measured, one-step, free-run, psd) with data-points = the
 * coordinate pairs of d. All text is HTML-escaped; values that do not
 * exist show as "n/a"; the output is the same bytes for the same input
 * (no date, no thread count, no randomness). opt supplies the bounds
 * level shown (NULL: r->boot.level). spectra: one spectrum per series
 * channel, normally r->has_spectra ? &r->spectra : NULL (NULL: no
 * spectrum figure). Errors: EL_ERR_INTERNAL when r is NULL or incomplete
 * (no series, model or modes; spectra of another channel count);
 * EL_ERR_NOMEM (out is then marked failed); errors of
 * el_prediction_create/run. Reads r only; out receives the whole page. */
el_status el_html_report(const el_assessment *r, const el_assess_options *opt,
                         const el_spectra *spectra, el_buf *out, el_error *err);

/* Appends the HTML report of the track run r to out, in this order: the
 * trend call (SHRINKING MARGIN, GROWING MARGIN or NO CLEAR TREND) with
 * P(shrinking), the slope and its bounds, the margin on the line at the
 * last window and, when r->time_to_zero is finite, the time to zero
 * margin with its bounds (an upper end of +inf shows as "not bounded"),
 * labelled a straight-line extrapolation; r->warnings and the caution
 * (el_assess_caution); the figures "fig-margin" (margin against the
 * windows' middle times; ISO logs: seconds from windows[0].t_from),
 * "fig-damping" (damping ratio and frequency per window) and
 * "fig-windows" (table of every window, failed ones with their
 * message); then the windowing and trend details. Machine-checkable
 * structure of fig-margin: one <g class="window" data-from=...
 * data-to=... data-margin=...> per window with ok set (dot at the
 * margin, bar from margin_lo to margin_hi), one element of class
 * "window-failed" per failed window; the zero line (class "boundary")
 * with the side below it shaded (class "unstable-side"); when
 * r->has_trend, the fitted line (class "trend") over the windows' span
 * and two lines of slopes slope_lo and slope_hi through the line's value
 * at the last trend window's middle (class "trend-bound"); when the
 * trend is EL_TREND_SHRINKING with a finite time to zero, the dashed
 * extrapolation to zero (class "extrapolation") and the time-to-zero
 * interval on the zero line (class "zero-interval"). The y range holds
 * 0, every finite margin and bound and the lines over the windows' span;
 * the x range reaches out to the upper time to zero (an open end: a
 * quarter past the crossing) but never further than twice the windows'
 * span beyond their end, which the caption then says. All text is
 * HTML-escaped; values that do not exist show as "n/a"; the same input
 * gives the same bytes. opt supplies the file name shown
 * (opt->assess.path, "-" shown as standard input) and the level when
 * r->level is not in (0, 1); it may be NULL. Times and rates use
 * r->time_unit ("time unit" when it is empty). Errors: EL_ERR_INTERNAL when r is NULL or
 * has no windows; EL_ERR_NOMEM (out is then marked failed). Reads r
 * only; out receives the whole page. */
el_status el_html_track_report(const el_track_result *r, const el_track_options *opt,
                               el_buf *out, el_error *err);

/* el_html_escape is declared in el_svg.h (with the other page pieces). */

#endif
