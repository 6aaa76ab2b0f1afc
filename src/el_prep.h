/* el_prep: preparation of a uniform series before the fit: per-channel
 * detrending (none, mean, least-squares line) and a zero-phase band limit
 * by FFT (FFTW) applied the same way to every channel, with a check that
 * warns when a band edge cuts near a reported mode. */
#ifndef EL_PREP_H
#define EL_PREP_H

#include <stddef.h>

#include "el_error.h"
#include "el_modes.h"
#include "el_timebase.h"

typedef enum {
    EL_DETREND_NONE = 0,
    EL_DETREND_MEAN,
    EL_DETREND_LINEAR
} el_detrend;


/* "none", "mean" or "linear"; "unknown" for any other value. Static text. */
const char *el_prep_detrend_name(el_detrend mode);

/* Parses the --detrend argument ("none", "mean", "linear"; exact, lower
 * case) into *mode. Errors: EL_ERR_USAGE with option "--detrend" and a hint
 * listing the choices for anything else (NULL included); *mode is then
 * unchanged. */
el_status el_prep_parse_detrend(const char *text, el_detrend *mode, el_error *err);

/* Removes from every channel of series, in place, the least-squares
 * constant (mean) or line (linear) over the window; none leaves the values
 * alone. The line is fitted on centred time tau_k = (k - (N-1)/2) dt:
 * level = mean(x), slope = sum tau_k (x_k - level) / sum tau_k^2 with
 * sum tau_k^2 = dt^2 N (N^2 - 1) / 12 in closed form; the centred
 * abscissa makes level and slope uncorrelated and avoids the cancellation
 * of the textbook normal equations on raw times. x_k -= level + slope
 * tau_k (mean: slope = 0).
 * Outputs (each may be NULL): level[c] (physical units) is the value of the
 * removed line at the window centre t_c = t0 + (N-1) dt / 2, i.e. the
 * channel mean; slope[c] is in physical units per time unit of the series
 * (0 unless linear). With none both are 0.
 * How to read the model afterwards: the fit sees deviations from the
 * removed line. A fixed point z* found in those coordinates is reported in
 * physical units as level[c] + z*[j n + c] for every lag j. After mean this
 * is exact (the affine fit is invariant to a constant shift, so Ad, the
 * modes and the physical operating point are the same as without it).
 * After linear the drift slope[c] is not part of the dynamics any more: the
 * physical operating point is the equilibrium level about which the
 * detrended motion settles, taken at the window centre t_c (at time t it
 * is level + slope (t - t_c) + z*); report slope beside it.
 * Errors: EL_ERR_INTERNAL for a NULL series or values, fewer than 2
 * samples, or an unknown mode. Allocates nothing; thread-safe on distinct
 * series. */
el_status el_prep_detrend(el_series *series, el_detrend mode, double *level,
                          double *slope, el_error *err);

/* The band of a band limit, in cycles per time unit of the series ("Hz"
 * when time is in seconds). lo_hz and hi_hz are the half-amplitude (-6 dB)
 * points of the mask; transition_hz is the full width of each raised-cosine
 * edge; nyquist_hz = 1 / (2 dt). lo_hz == 0 means no low edge, hi_hz ==
 * nyquist_hz no high edge. */
typedef struct {
    double lo_hz, hi_hz;
    double transition_hz;
    double nyquist_hz;
    double settle;            /* 2 / transition_hz: length of the edge transients */
} el_prep_band;

/* Parses the --band argument "LO:HI" (two numbers, strtod consuming each
 * whole, no other text) for a series with sample interval dt. Requires
 * 0 <= LO < HI <= Nyquist = 1/(2 dt), all finite; a HI above the Nyquist
 * frequency by no more than a relative 1e-9 (rounding of a refined dt) is
 * taken as the Nyquist frequency. Outputs *lo_hz, *hi_hz. Errors:
 * EL_ERR_USAGE with option "--band" and a hint that gives the form and the
 * Nyquist frequency; EL_ERR_INTERNAL for NULL pointers or dt <= 0. */
el_status el_prep_parse_band(const char *text, double dt, double *lo_hz,
                             double *hi_hz, el_error *err);

/* Plan of a zero-phase band limit for series of exactly n_samples samples
 * at interval dt: the FFTW r2c and c2r plans (FFTW_ESTIMATE: deterministic,
 * no timing runs), the padded buffer and the mask are made once and reused
 * for every channel and every window of this length. Opaque. */
typedef struct el_prep_band_plan el_prep_band_plan;

/* Creates the plan for the band [lo_hz, hi_hz] (as parsed by
 * el_prep_parse_band) and stores it in *plan (NULL on error).
 * Mask: 1 inside, 0 outside, with raised-cosine edges of full width W
 * centred on each edge: r(f) = 0.5 (1 - cos(pi (f - LO + W/2) / W)) rising
 * through LO, 1 - r(f) with HI in place of LO falling through HI (gain 1/2
 * at an edge), W = max(4 / (N dt), 0.1 (HI - LO)): a smooth
 * edge keeps the time-domain ringing short (about 1/W) where a brick wall
 * would ring over the whole window; four frequency bins of the window at
 * least, the resolution the window has.
 * Method, per channel: subtract the channel mean; then one zero-phase stage
 * per edge that exists, each: extend the signal at both ends by reflection
 * over N - 1 samples, the outer half of each extension tapered to zero by
 * a half cosine (so the wrap-around of the circular transform is
 * continuous), FFT, multiply by that edge's real mask, inverse FFT, keep
 * the data part. The low edge (removing slow motion) uses even reflection
 * x[-k] = x[k], which keeps the local level continuous at the ends; the
 * high edge (removing fast motion) uses odd reflection x[-k] = 2 x[0] -
 * x[k], which keeps value and slope continuous. Each reflection puts its
 * own defect (a slope kink, a level step) where its mask passes it
 * unchanged. The product of the two real masks is the band's: zero phase,
 * no delay. The channel mean always passes unchanged (it is the operating
 * point, not dynamics), whatever LO: the output's mean over the window is
 * set to the input's exactly.
 * Edge transients: within about settle = 2/W (time units) of each end of
 * the window the result departs from the ideal band-limited signal (by up
 * to tens of percent of an in-band component's amplitude at the very end;
 * beyond settle by a few percent, see tests/test_prep.c). A warning (to
 * *warnings, may be NULL) says so when the two ends' settle times cover
 * more than 20% of the window: widen the band or analyse a longer window.
 * Errors: EL_ERR_USAGE (option "--band", hint) when the mask would have no
 * frequency at full gain: LO + W/2 > HI - W/2 (edges that do not exist
 * count as 0 and Nyquist), i.e. the band is narrower than about four
 * frequency bins of the window; EL_ERR_INTERNAL for n_samples < 3,
 * dt <= 0, or a band outside [0, Nyquist] or with lo >= hi; EL_ERR_NUMERIC
 * when FFTW returns no plan; EL_ERR_NOMEM. NOT thread-safe: FFTW's planner
 * keeps global state, so create and destroy plans from one thread at a time
 * (execution of distinct plans may run in parallel). */
el_status el_prep_band_plan_create(size_t n_samples, double dt, double lo_hz,
                                   double hi_hz, el_prep_band_plan **plan,
                                   el_warnings *warnings, el_error *err);

/* The band the plan applies (with its transition width). Can't fail. */
el_prep_band el_prep_band_plan_band(const el_prep_band_plan *plan);

/* Gain of the plan's mask at frequency f_hz >= 0 (cycles per time unit);
 * the value every Fourier component at that frequency is multiplied by
 * (the mean excepted, which always passes). Can't fail. */
double el_prep_band_gain(const el_prep_band *band, double f_hz);

/* Applies the band limit in place to every channel of series (n_samples
 * must be the plan's, else EL_ERR_INTERNAL; dt is taken from the plan).
 * Allocates nothing. One thread per plan at a time. */
el_status el_prep_band_apply(el_prep_band_plan *plan, el_series *series,
                             el_error *err);

/* Frees the plan (FFTW planner call: same thread rule as creation). NULL
 * is a no-op. */
void el_prep_band_plan_destroy(el_prep_band_plan *plan);

/* Warns about each mode that a band edge may distort. A mode occupies the
 * frequencies around f = frequency_hz within its half-power half-width
 * b = |Re lambda| / (2 pi) (= zeta f_n for a lightly damped pair; the
 * corner frequency of a real mode, f = 0). An edge at E cuts near the mode
 * when |f - E| < W/2 + max(4 b, 0.1 f), i.e. within the edge's transition
 * half-width plus twice the mode's half-power bandwidth 2 b or 10% of its
 * frequency, whichever is larger (common practice: a resonance peak extends
 * a few bandwidths either side); a mode beyond an edge (outside the band)
 * is reported as well. Only edges that exist count (lo_hz > 0, hi_hz <
 * nyquist_hz). A mode at the Nyquist limit is outside any band with
 * hi_hz < nyquist_hz; an instantaneous mode (mu = 0) is skipped. Warnings
 * name the mode's frequency, damping ratio and the edge, and say what to
 * do (widen --band). *n_flagged (may be NULL) receives the number of modes
 * warned about. Errors: EL_ERR_INTERNAL for NULL band or modes;
 * EL_ERR_NOMEM when a warning cannot be stored. */
el_status el_prep_band_check_modes(const el_prep_band *band, const el_modes *modes,
                                   el_warnings *warnings, size_t *n_flagged,
                                   el_error *err);

#endif
