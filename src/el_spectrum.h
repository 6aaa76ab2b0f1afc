/* el_spectrum: Welch power spectral density of each channel (FFTW), peak
 * picking, and the cross-check of the model's modes against the peaks. */
#ifndef EL_SPECTRUM_H
#define EL_SPECTRUM_H

#include <stddef.h>

#include "el_error.h"
#include "el_modes.h"
#include "el_timebase.h"

/* Frequencies are in cycles per time unit of the series (Hz when the time
 * column is in seconds); the PSD is in units^2 per (cycle per time unit). */

/* Smallest segment length accepted (shorter segments resolve too little). */
#define EL_SPECTRUM_MIN_SEGMENT 16

/* Options of the spectrum and of peak picking. */
typedef struct {
    size_t segment_length;        /* samples per Welch segment; 0 = default rule
                                     (el_spectrum_choose_segment) */
    size_t max_peaks;             /* at most this many peaks per channel (5) */
    double threshold_ratio;       /* a peak is at least this many times the
                                     channel's median PSD (10) */
    double significance;          /* z: a peak stands above the higher of its
                                     two prominence bases by a factor of at least
                                     max(2, exp(2 z / sqrt(dof))) (5) */
} el_spectrum_options;

/* Fills opt with the defaults: default segment rule, 5 peaks, threshold
 * 10 x median, significance 5. Can't fail. */
void el_spectrum_defaults(el_spectrum_options *opt);

/* Picks the segment length for a series of n_samples samples. requested
 * == 0 picks the default: the largest power of two <= n_samples / 4, but at
 * least 64 and at most n_samples. requested > 0 (the `--segment N` option)
 * is used as given. Errors: n_samples < EL_SPECTRUM_MIN_SEGMENT is
 * EL_ERR_DATA (hint: widen the window); requested < 16 or > n_samples is
 * EL_ERR_USAGE with option "--segment" and a hint giving the valid range.
 * On success *segment_length is set. */
el_status el_spectrum_choose_segment(size_t requested, size_t n_samples,
                                     size_t *segment_length, el_error *err);

/* What can be decided once for a segment length L: the periodic Hann
 * window, its power and overlap correlation, the FFTW r2c plan and its
 * aligned buffers. Opaque. */
typedef struct el_spectrum_plan el_spectrum_plan;

/* Creates *plan for segments of segment_length samples (>= 16 and <=
 * INT_MAX, else EL_ERR_INTERNAL: callers validate with
 * el_spectrum_choose_segment). The FFTW plan is made with FFTW_ESTIMATE
 * (deterministic, no timing runs). NOT thread-safe: FFTW's planner keeps
 * global state, so create and destroy plans from one thread at a time (or
 * under a lock); executing distinct plans in parallel is fine. On failure
 * *plan is NULL and EL_ERR_NOMEM (or EL_ERR_NUMERIC when FFTW returns no
 * plan) is returned. The caller owns the plan. */
el_status el_spectrum_plan_create(size_t segment_length,
                                  el_spectrum_plan **plan, el_error *err);

/* Frees the plan (FFTW planner call: same thread rule as creation). NULL
 * is a no-op. */
void el_spectrum_plan_destroy(el_spectrum_plan *plan);

/* The plan's segment length L and number of one-sided bins L/2 + 1. */
size_t el_spectrum_plan_segment(const el_spectrum_plan *plan);
size_t el_spectrum_plan_bins(const el_spectrum_plan *plan);

/* Welch spectra of every channel of one series. Column-major: bin k of
 * channel c is psd[c * n_bins + k] (the same for psd_first, psd_second). */
typedef struct {
    size_t n_channels;
    size_t n_bins;                /* L/2 + 1 (integer division) */
    size_t segment_length;        /* L */
    size_t hop;                   /* L - L/2: 50 % overlap */
    size_t n_segments;            /* K = floor((n - L) / hop) + 1, plus one when
                                     those leave samples over (see last_start) */
    size_t n_samples;             /* n: samples of the series, all of them used */
    size_t last_start;            /* start of the last segment: (K-1) hop, or n - L
                                     when it was moved back to end at the last
                                     sample so that no sample is dropped */
    double last_overlap;          /* fraction of L the last segment shares with
                                     the one before (0.5 when regular; 0 for K = 1) */
    size_t n_segments_first;      /* segments whose centre lies in the first half */
    size_t n_segments_second;     /* the others */
    int halves_ok;                /* 1 when both halves have >= 1 segment; else
                                     psd_first/psd_second are all zero, unusable */
    double dt;                    /* sample interval of the series */
    double df_hz;                 /* bin spacing 1 / (L dt) */
    double enbw_hz;               /* equivalent noise bandwidth of the window
                                     (1.5 df for Hann) */
    double dof;                   /* equivalent degrees of freedom nu of each
                                     bin's estimate (Welch 1967, any overlap);
                                     relative standard deviation sqrt(2 / nu) */
    double half_separation;       /* time between the mean centres of the two
                                     halves' segments (0 when !halves_ok) */
    double *frequency_hz;         /* n_bins: k / (L dt) */
    double *psd;                  /* n_bins * n_channels: one-sided PSD, all segments */
    double *psd_first;            /* same, averaged over the first-half segments */
    double *psd_second;           /* same, averaged over the second-half segments */
    double *total_power;          /* n_channels: sum_k psd[k] * df (~ variance) */
} el_spectra;

/* Allocates *spectra (which must be zero-initialised or freed) for n_channels
 * channels at the plan's segment length, so that el_spectrum_execute
 * allocates nothing. EL_ERR_NOMEM; EL_ERR_INTERNAL when n_channels == 0 or
 * plan is NULL. On error *spectra is left empty. */
el_status el_spectra_create(const el_spectrum_plan *plan, size_t n_channels,
                            el_spectra *spectra, el_error *err);

/* Frees what the spectra own and zeroes the struct. NULL is a no-op. */
void el_spectra_free(el_spectra *spectra);

/* Welch's method (Welch 1967) on each channel of series: segments of L
 * samples with 50 % overlap (hop L - L/2) starting at sample 0; when they
 * leave samples over at the end, one more segment ends at the last sample
 * (overlapping its neighbour by more than half), so every sample is used
 * and the end of the record weighs like its middle; in each segment the segment's
 * mean is removed, the periodic Hann window applied and |FFT|^2 taken;
 * the average over segments is scaled to a one-sided density,
 * P[k] = c_k dt |X_k|^2 / sum(w^2), c_k = 2 except c = 1 at k = 0 and at
 * k = L/2 for even L, so that sum_k P[k] df equals the window-weighted mean
 * square of the data (~ the variance). Also fills psd_first/psd_second
 * from the segments of each half of the record. Allocates nothing. The
 * plan's buffers are used, so one plan serves one thread at a time.
 * Errors: EL_ERR_INTERNAL when spectra was not created for this plan's L
 * and the series' channel count; EL_ERR_DATA when the series has fewer
 * samples than L (hint: --segment) or dt is not finite and positive or a
 * value is not finite (names the channel). */
el_status el_spectrum_execute(el_spectrum_plan *plan, const el_series *series,
                              el_spectra *spectra, el_error *err);

/* One spectral peak: one hump of the smoothed spectrum (see
 * el_spectrum_find_peaks), described by its tallest bin in the PSD. */
typedef struct {
    size_t channel;
    size_t bin;                   /* bin of the local maximum of the PSD */
    double frequency_hz;          /* the centre of the half-power band on the
                                     smoothed spectrum when band_ok; else
                                     refined by a parabola through the log
                                     PSD of bins bin-1, bin, bin+1 */
    double resolution_hz;         /* bin width 1 / (L dt): the frequency is
                                     known to about +- half of it at best */
    int band_ok;                  /* 1: the half-power band below is closed on
                                     both sides and holds no other peak */
    double band_low_hz;           /* half-power band of the smoothed spectrum */
    double band_high_hz;          /* around the peak (0 when !band_ok: null) */
    size_t smoothed_bin;          /* bin of the hump's top in the smoothed spectrum */
    double smoothed_height;       /* smoothed PSD there, units^2/Hz */
    double height;                /* PSD at the parabola's vertex, units^2/Hz */
    double ratio_to_median;       /* height / median PSD of the channel (the
                                     median raised to 1e-12 of the largest
                                     PSD value when below it: always finite) */
    double prominence;            /* PSD[bin] minus the higher of its two bases
                                     (topographic prominence), units^2/Hz */
    double width_hz;              /* full width at half height (linear
                                     interpolation between bins); valid only
                                     when width_ok */
    int width_ok;                 /* 0 when the PSD does not fall to half the
                                     height before an end of the spectrum
                                     (width_hz is then 0: report null) */
} el_peak;

/* Peaks of every channel. Channel c's peaks are items[c * max_per_channel
 * + i] for i < count[c], tallest first. */
typedef struct {
    size_t n_channels;
    size_t n_bins;
    size_t max_per_channel;
    size_t *count;                /* n_channels */
    el_peak *items;               /* n_channels * max_per_channel */
    double *median_psd;           /* n_channels: median of bins 1..n_bins-1 */
    double *min_ratio;            /* n_channels: height / base factor required */
    double *smoothed;             /* n_bins * n_channels: each channel's PSD
                                     smoothed over 5 bins (weights 1 2 3 2 1) */
    double *scratch;              /* n_bins: workspace for the median */
    el_peak *candidates;          /* n_bins: workspace for local maxima */
} el_peaks;

/* Allocates *peaks (zero-initialised or freed) for spectra of n_channels
 * channels and n_bins bins with at most max_per_channel (>= 1) peaks per
 * channel. EL_ERR_NOMEM; EL_ERR_INTERNAL for a zero size. */
el_status el_peaks_create(size_t n_channels, size_t n_bins,
                          size_t max_per_channel, el_peaks *peaks,
                          el_error *err);

/* Frees what the peaks own and zeroes the struct. NULL is a no-op. */
void el_peaks_free(el_peaks *peaks);

/* Finds the peaks of each channel's PSD. Candidates are bins k with
 * 2 <= k <= n_bins - 2 (bins 0 and 1 lie in the window's main lobe around
 * the removed mean) that are local maxima (P[k] > P[k-1], P[k] >= P[k+1]),
 * whose height is at least opt->threshold_ratio times the channel's median
 * PSD and at least 1e-12 times its largest value (below that is FFT
 * rounding), and that stand out from the estimator's noise: P[k] >= q *
 * base, base the higher of the two prominence bases taken on three-bin
 * means of the PSD, q = max(2, exp(2 z / sqrt(dof))), z =
 * opt->significance (calibrated by tests/data/spectrum_peak_calibration.py).
 * Then on the smoothed spectrum S (P over 5 bins, weights 1 2 3 2 1):
 * each candidate climbs S to the top of its hump; candidates on the same
 * hump are one peak, the tallest in P (on a broad, noisy hump the tallest
 * bin is a draw of the estimator's scatter, not the resonance). The peak's
 * half-power band is where S stays above half its top; when it closes on
 * both sides (before an end, before S exceeds the top) and holds no other
 * peak's top, the frequency is the band's centre (tests/data/
 * spectrum_peak_location.py: on noise-driven damped modes it scatters
 * about half as much as the tallest bin), else the parabola through the
 * log PSD at the tallest bin. Keeps the opt->max_peaks tallest (by
 * interpolated height), capped at peaks->max_per_channel. Fills
 * peaks->smoothed. Allocates nothing. Errors:
 * EL_ERR_INTERNAL when the sizes of spectra and peaks differ or an option
 * is out of range (threshold_ratio < 0, significance < 0). */
el_status el_spectrum_find_peaks(const el_spectra *spectra,
                                 const el_spectrum_options *opt,
                                 el_peaks *peaks, el_error *err);

/* Thresholds of the mode/peak cross-check (see docs/method-spectrum.md). */
typedef struct {
    double strong_ratio;          /* a peak this many times the median PSD
                                     needs a mode (100) */
    double match_bins;            /* match tolerance, at least this many bins (2) */
    double match_relative;        /* ... and this fraction of the mode's
                                     frequency (0.02), and the mode's
                                     half-power width decay_rate / pi */
    double narrow_factor;         /* a peak narrower than this times the
                                     predicted width is narrow (1/3) ... */
    double narrow_contrast;       /* ... and at least this times the peak
                                     significance factor q above the mean PSD
                                     from 3 bins out to a third of the
                                     predicted width (2) ... */
    double narrow_min_bins;       /* ... judged only when the predicted width
                                     spans this many bins (9) */
    int amplitude_rule;           /* 1: apply the persistence rule (1) */
    double transient_ratio;       /* the record decays: power outside the peak's
                                     band in the second half <= this times the
                                     first (0.25) */
    double decay_power_ratio;     /* the mode predicts the band power to fall
                                     below this ratio across the halves (0.25) */
    double persist_ratio;         /* ... but it stays at least this ratio (0.5) */
} el_spectrum_check_options;

/* Fills opt with the defaults given beside the fields. Can't fail. */
void el_spectrum_check_defaults(el_spectrum_check_options *opt);

/* Result of the cross-check for one mode. */
typedef struct {
    int oscillatory;              /* 1: a complex pair with 0 < f < Nyquist;
                                     otherwise nothing else is set */
    int has_peak;                 /* 1: some channel has a peak; else the
                                     peak_* fields and relative_distance are
                                     0 (report null) */
    size_t peak_index;            /* nearest peak: index into peaks->items */
    size_t peak_channel;
    double peak_frequency_hz;     /* nearest peak's frequency */
    double relative_distance;     /* |f_peak - f_mode| / f_mode */
    double tolerance_hz;          /* match tolerance used for this mode */
    int matched;                  /* 1: nearest peak within tolerance */
    double predicted_width_hz;    /* half-power width decay_rate / pi = 2 zeta f_n;
                                     0 when the mode does not decay */
} el_spectrum_mode_check;

/* Result of the cross-check for one peak (same indexing as peaks->items). */
typedef struct {
    int has_mode;                 /* 1: an oscillatory mode within its tolerance */
    size_t mode_index;            /* the least damped such mode (when has_mode) */
    int strong;                   /* ratio_to_median >= strong_ratio */
    int no_mode;                  /* strong && !has_mode: warned */
    int narrow;                   /* narrower than the damping allows: warned */
    int persistent;               /* constant amplitude in a decaying record: warned */
    double implied_width_hz;      /* width the model implies (0 = none) */
    int has_implied_mode;         /* 1: implied_mode_index names the mode used */
    size_t implied_mode_index;    /* the nearby (else the least damped) mode */
    int amplitude_ok;             /* 1: the persistence rule could be evaluated */
    double band_power_ratio;      /* second/first half band power (when amplitude_ok) */
    double outside_power_ratio;   /* same for the power outside the band */
    double predicted_power_ratio; /* what the mode predicts (when amplitude_ok) */
} el_spectrum_peak_check;

/* Cross-checks the modes against the spectra and their peaks.
 * For each mode fills mode_checks[i] (i < modes->n_modes; the caller
 * provides the array; may be NULL when n_modes is 0). For each peak fills
 * peak_checks[c * max_per_channel + j] (the caller provides
 * n_channels * max_per_channel records) and appends warnings:
 * a strong peak with no oscillatory mode within tolerance (unmodelled
 * dynamics, too few lags, or a forced oscillation); a peak narrower than
 * narrow_factor times the half-power width W its nearby modes (or, without
 * one, every decaying mode) imply and standing narrow_contrast * q above
 * the mean PSD within W/3, judged only when W spans narrow_min_bins bins; a
 * peak whose band power persists across the two halves of a record whose
 * power outside that band decays, while the matched mode predicts the band
 * to decay (possible forced oscillation). A warning found in
 * several channels at the same frequency is given once. channel_names
 * (n_channels strings, may be NULL: "channel N") name channels in warnings.
 * opt NULL = defaults. Allocates nothing but warnings. Errors: EL_ERR_INTERNAL
 * when peaks and spectra do not match or an argument is NULL; EL_ERR_NOMEM
 * from the warning list. */
el_status el_spectrum_crosscheck(const el_modes *modes,
                                 const el_spectra *spectra,
                                 const el_peaks *peaks,
                                 const char *const *channel_names,
                                 const el_spectrum_check_options *opt,
                                 el_spectrum_mode_check *mode_checks,
                                 el_spectrum_peak_check *peak_checks,
                                 el_warnings *warnings, el_error *err);

/* Writes the unit of a power (per_hz 0) or of a power spectral density
 * (per_hz 1) of a channel measured in unit, squared with the unit in
 * parentheses unless it is letters only: "m/s2" -> "(m/s2)^2/Hz", "mm" ->
 * "mm^2/Hz", "" (no unit) -> "1/Hz" or "" (1 for a power). Frequencies
 * are in cycles per time unit, written Hz. Truncates to size (>= 1).
 * Can't fail. */
void el_spectrum_unit(const char *unit, int per_hz, char *out, size_t size);

/* One call for the command line: chooses the segment length (opt NULL =
 * defaults; errors as el_spectrum_choose_segment), creates a plan, fills
 * *spectra and *peaks (both zero-initialised or freed; the caller frees
 * them), destroys the plan. Planner rule: not thread-safe (see
 * el_spectrum_plan_create). Adds a warning when fewer than 7 segments are
 * averaged (a noisy estimate; the default segment length gives >= 7 from
 * 256 samples on). On error both outputs are left empty. */
el_status el_spectrum_compute(const el_series *series,
                              const el_spectrum_options *opt,
                              el_spectra *spectra, el_peaks *peaks,
                              el_warnings *warnings, el_error *err);

#endif
