/* el_html_spectrum: the `spectrum --html` page: a self-contained HTML page
 * (inline CSS and SVG, no script) of the Welch spectra and their peaks,
 * built from the shared page pieces and SVG primitives of el_svg. */
#ifndef EL_HTML_SPECTRUM_H
#define EL_HTML_SPECTRUM_H

#include "el_assess.h"
#include "el_error.h"
#include "el_io.h"
#include "el_spectrum.h"

/* Appends the spectrum page of the loaded log r (el_assess_load: table,
 * series, warnings) with spectra s and peaks p to out: a head with the
 * file, window, samples and Welch layout; the warnings (r's input
 * warnings and warnings) and the caution; one figure per channel
 * (<figure id="fig-psd-K">, K from 1) with the PSD on a log scale (path
 * class "psd", data-points its point count; lines over
 * EL_HTML_MAX_LINE_POINTS bins are drawn as the minimum and maximum of
 * runs of bins), each peak's half-power band shaded (rect class
 * "peak-band", data-peak its number) and its frequency marked (line
 * class "peak-line"); and a table of the peaks (frequency +- half a bin,
 * band, PSD, ratio to the median) under each figure. Text is escaped,
 * values that do not exist are "n/a", the same input gives the same
 * bytes. Errors: EL_ERR_INTERNAL when r, s or p is NULL or their channel
 * counts differ or s has fewer than 3 bins; EL_ERR_NOMEM. Reads its
 * inputs only. */
el_status el_html_spectrum_report(const el_assessment *r, const el_spectra *s,
                                  const el_peaks *p, el_buf *out, el_error *err);

#endif
