/* el_html: the assessment as one self-contained HTML page for people:
 * inline CSS and SVG figures, no script, no network, printable. */
#ifndef EL_HTML_H
#define EL_HTML_H

#include <stddef.h>

#include "el_assess.h"
#include "el_error.h"
#include "el_io.h"
#include "el_spectrum.h"

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

/* Appends text to out with &, <, >, " and ' replaced by entities, so
 * it is safe in element content and in quoted attributes. NULL appends
 * nothing. Returns EL_OK or EL_ERR_NOMEM. */
el_status el_html_escape(el_buf *out, const char *text);

#endif
