/* el_regime: which regime the window is in (a transient after a
 * disturbance, a stationary motion driven by unmeasured random
 * disturbances, or driven by measured inputs), from the data alone, and the
 * model-free cross-check that an amplitude envelope growing by a significant
 * factor can never be reported as a stable operating point. */
#ifndef EL_REGIME_H
#define EL_REGIME_H

#include <stddef.h>

#include "el_error.h"
#include "el_timebase.h"

typedef enum {
    EL_REGIME_STATIONARY = 0, /* no significant trend of amplitude or level */
    EL_REGIME_TRANSIENT,      /* amplitude or level changes significantly: a free
                                 decay or growth after a disturbance */
    EL_REGIME_DRIVEN,         /* the caller said measured inputs drive the system */
    EL_REGIME_UNDETERMINED    /* window too short, or no channel varies */
} el_regime_class;

/* Which test found the growth behind the veto. */
typedef enum {
    EL_REGIME_GROWTH_ENVELOPE = 0, /* the amplitude envelope's slope (oscillatory) */
    EL_REGIME_GROWTH_DRIFT         /* the drift test: the deviation from a fitted
                                      level runs away (monotone, non-oscillatory) */
} el_regime_growth_test;

/* What the level check found (el_regime_run, step 7). */
typedef enum {
    EL_REGIME_LEVEL_NONE = 0,
    EL_REGIME_LEVEL_SHIFT,        /* the level steps once inside the window */
    EL_REGIME_LEVEL_TREND         /* the level follows a straight line */
} el_regime_level;

/* Thresholds of the level check, project conventions calibrated by
 * tests/data/level_check_calibration.py (docs/method.md): |z| of the step
 * or slope against the block-to-block noise, the share of the channel's
 * variance the movement explains, and the share of the block means'
 * variance it explains (a steady movement, not a wandering one). */
#define EL_REGIME_LEVEL_Z 4.0
#define EL_REGIME_LEVEL_SHARE 0.25
#define EL_REGIME_LEVEL_BLOCK_R2 0.75

/* "stationary", "transient", "driven", "undetermined"; "unknown" else.
 * Static text. */
const char *el_regime_name(el_regime_class regime);

typedef struct {
    double level;             /* family-wise false-alarm level of each decision
                                 (transient, growth) under the stationary null */
    size_t segments;          /* M: segments of the envelope (>= 6) */
    double min_growth_factor; /* a significant growth below this factor over the
                                 window does not veto (convention) */
    int driven;               /* 1: measured inputs were given (set by the caller) */
} el_regime_options;

/* Fills opt with the defaults: level 0.01, 16 segments, min_growth_factor
 * 1.25 (growth of less than 25% over the window is too small to overrule a
 * model: it can come from a slowly changing disturbance intensity), not
 * driven. Can't fail. */
void el_regime_defaults(el_regime_options *opt);

/* Plan and result in one. Per-channel arrays have n_channels entries; a
 * value that does not exist is NaN (JSON null) with tested[c] == 0.
 *
 * The method, per channel x (N samples, interval dt):
 * 1. Envelope and level: the window is cut into M segments of L = N / M
 *    samples (M = min(segments, N / 8): at least 8 samples each; the
 *    N - M L samples left over are split between both ends). Segment a has
 *    mean-square ms_a = mean over the segment of (x - xbar)^2, with xbar
 *    the mean over the whole window, log-amplitude y_a = ln(ms_a) / 2, and
 *    standardised level m_a = mean over the segment of (x - xbar) / s, s^2
 *    the window variance.
 * 2. Trends: least-squares slopes of y and of m against the segment centre
 *    times t_a: envelope_rate (1/time unit: the growth rate of the
 *    amplitude, comparable to Re lambda of a dominant mode) and level_rate
 *    (standard deviations per time unit). envelope_factor =
 *    exp(envelope_rate (t_last - t_first)): the fitted amplitude ratio
 *    between the last and the first segment centre.
 * 3. Significance against the stationary Gaussian null: if x were a
 *    stationary Gaussian process with autocorrelation rho, then by
 *    Isserlis' theorem (Isserlis 1918, Biometrika 12) cov(x_i^2, x_j^2) =
 *    2 gamma(i - j)^2, so cov(y_a, y_{a+k}) = (1 / (2 L^2)) sum_{|u| < L}
 *    (L - |u|) rho(k L + u)^2 to first order (delta method), and
 *    cov(m_a, m_{a+k}) = (1 / L^2) sum_{|u| < L} (L - |u|) rho(k L + u)
 *    (the large-sample moments of Bartlett 1946, J. R. Statist. Soc.
 *    Suppl. 8). rho is the sample autocorrelation of the whole window
 *    (divisor N, by FFT). The variance of each slope under the null is
 *    w' C w with w the least-squares slope weights; z = slope / sqrt(w' C
 *    w) is referred to the standard normal distribution. Because C comes
 *    from the signal's own correlation, slow envelope fluctuations of a
 *    lightly damped random motion (envelope correlation time 1/(zeta
 *    omega)) widen the null exactly as much as they should, and a
 *    deterministic decay or growth, whose envelope moves far more than a
 *    stationary process with the same correlation could, is significant.
 *    A constant offset in the noise of C cancels because the weights sum
 *    to zero.
 * 4. Contrasts: besides the slope (contrast 0), "mean of the first s
 *    segments minus mean of the rest" for s in {1, 2, M/4, M/2, 3M/4,
 *    M-2, M-1} (K = 8 contrasts for M = 16), each applied to y and to m
 *    and tested the same way (z = c'v / sqrt(c' C c)). The slope is the
 *    most powerful linear test of a steady exponential trend; the steps
 *    catch a transient that is over early (a fast decay into the noise
 *    floor: an L-shaped envelope, which a slope dilutes) or starts late.
 *    change_p[c] = smallest two-sided p of the channel's 2 K tests times
 *    2 K (Bonferroni).
 * 5. Drift (monotone growth), when N >= 256: the window's central
 *    32 L' samples (L' = N / 32) give 32 block means b_a; the regression
 *    b_a = mu + rho b_{a-1} + u_a (Dickey & Fuller 1979, J. Amer.
 *    Statist. Assoc. 74) with the Phillips-Perron correction of its t
 *    statistic for correlated residuals (Phillips & Perron 1988,
 *    Biometrika 75; Bartlett window of 3 lags). A deviation running away
 *    from a level x* like e^(r t) gives rho = e^(r L' dt) > 1 whatever x*:
 *    the reference level is fitted, not the window mean that the runaway
 *    drags. A stationary process reverts to its mean (rho < 1). drift_z
 *    is referred to its distribution under a random walk (the boundary of
 *    stationarity, by Monte Carlo: tests/data/make_regime_drift_table.py),
 *    which is conservative for any stationary process. drift_rate =
 *    ln(rho) / (L' dt), drift_factor = rho^31: the fitted ratio of the
 *    deviation from x* between the first and last block. The envelope
 *    test misses such a runaway: the window's sample autocorrelation of a
 *    smooth monotone signal is near 1 at every lag, which makes any trend
 *    of segment statistics look like stationary wandering.
 * 6. Decisions, over the m tested channels: growth (the veto) when
 *    growth_p = 2 m x the smallest one-sided p of the envelope slope test
 *    (envelope_p_growth: growth must be steady, and a single test keeps
 *    its power) and of the drift test (drift_p_growth), over channels
 *    (Bonferroni over the 2 m tests), is < level and that test's factor
 *    (envelope_factor or drift_factor) >= min_growth_factor; transient
 *    when trend_p = m min_c change_p[c] < level, or growth (a window whose
 *    growth vetoes "stable" is never called stationary); direction is +1
 *    whenever growth is found. Under the null the growth decision raises
 *    a false alarm with probability <= level and the transient decision
 *    <= 2 level (union bound), up to the normal approximation and the
 *    Monte Carlo table; measured in tests/test_regime.c.
 * 7. Level check (one operating point), per tested channel, on the M
 *    segment means b_a (raw units): the block noise v (variance of one
 *    block mean under stationarity) is estimated from successive
 *    differences, v = median((b_{a+1} - b_a)^2) / (2 x 0.4549) (the
 *    median of a chi-square with 1 degree of freedom; successive
 *    differences after von Neumann 1941, Ann. Math. Statist. 12, so a
 *    steady trend or a single step hardly enters). Trend: the
 *    least-squares slope of b against a, z = slope / sqrt(v / sum (a -
 *    abar)^2). Shift: the split k in [2, M - 2] with the largest |z| =
 *    |mean(b_a, a >= k) - mean(b_a, a < k)| / sqrt(v (1/k + 1/(M - k))),
 *    then located to the sample by least squares (the split j within one
 *    segment of k maximising j (N - j) (mean after - mean before)^2). A
 *    movement is found when |z| >= EL_REGIME_LEVEL_Z, it explains at least
 *    EL_REGIME_LEVEL_SHARE of the channel's variance over the segments and
 *    at least EL_REGIME_LEVEL_BLOCK_R2 of the block means' variance; when
 *    both qualify, the one with the larger block R^2 is named; over
 *    channels, the one with the largest share. A stationary motion slower
 *    than about a sixteenth of the window can pass for a level movement
 *    (measured rates in docs/method.md): one window cannot tell them apart.
 * Limits: these are second-order tests of one window. A change slower
 *    than about a quarter of the window (a non-oscillatory return with a
 *    time constant of T/4 or more, a growth by less than about 5x over a
 *    lightly damped oscillation's window) looks like the slow wandering of
 *    a stationary process with long correlation, whose sample
 *    autocorrelation it shares: then the window is called stationary and
 *    the envelope growth is not significant. A longer window resolves it.
 *    The drift test is calibrated for stationary processes of first order
 *    (any time constant: an AR(1) with tau = T/3 alarms on under 0.1%) and
 *    of second order with 1/wn <= T/4; a slower second-order swing (wn T =
 *    3: about 1% at the 1% level, wn T = 1: more) can pass for a runaway,
 *    as can any accelerating drift. A single runaway is found from a
 *    growth of about e^1.5 = 4.5x over the window; mixed with a faster
 *    decaying mode of similar size (a saddle), from about that, not from
 *    e^1 (the early decay reads as mean reversion). The envelope test
 *    alarms on about 2-2.5% of windows of slow second-order stationary
 *    motion (1/wn of T/6 to T/18 with any damping, three or fewer periods
 *    in the window), above its nominal 1% (measured on 1000-2000 seeds).
 * Why not the residuals of the envelope fit: an autocorrelation estimated
 * from 16 segment residuals cannot tell an exponential decay into a noise
 * floor (whose residuals about a line are strongly correlated) from slow
 * random fluctuations; a prototype with a lag-1 adjusted t-test (as in
 * Santer et al. 2000, J. Geophys. Res. 105) missed clear ring-downs at
 * 20 dB SNR. And the autocorrelation is not taken after removing a line:
 * that removes exactly the slow power that makes slopes of a long-memory
 * stationary process large, and the level test then raised false alarms
 * on 10-40% of stationary windows in the prototype. */
typedef struct {
    size_t n_samples, n_channels;
    size_t segments;            /* M used in the last run (0: not testable) */
    size_t segment_length;      /* L */
    el_regime_class regime;
    const char *regime_name;    /* static */
    int direction;              /* +1 amplitude grows, -1 decays, 0 none or only the
                                   level moves (the most significant test decides) */
    double trend_p;             /* Bonferroni-adjusted p of "no change" (NaN: untested) */
    int growth;                 /* 1: the envelope grows significantly (veto) */
    double growth_p;            /* Bonferroni-adjusted one-sided p of the growth test */
    double growth_factor;       /* envelope_factor or drift_factor (per growth_test)
                                   of growth_channel */
    size_t growth_channel;      /* channel with the smallest growth p */
    el_regime_growth_test growth_test; /* the test with the smallest growth p */
    int *tested;                /* 0: channel constant (nothing to test) */
    double *envelope_rate;      /* 1/time unit */
    double *envelope_factor;
    double *envelope_z;
    double *envelope_p_growth;  /* one-sided, per channel, unadjusted */
    double *level_rate;         /* standard deviations per time unit */
    double *level_z;
    double *change_p;           /* per channel: smallest two-sided p of all its
                                   contrasts, times their count (Bonferroni) */
    int *change_direction;      /* per channel: sign of that test (+1 grows,
                                   -1 decays, 0 the level moved) */
    double *drift_rate;         /* 1/time unit: ln(rho) per time (NaN: N < 256, or
                                   rho <= 0: block means alternate, no drift) */
    double *drift_factor;       /* rho^31 (NaN as drift_rate) */
    double *drift_z;            /* Phillips-Perron statistic (NaN: N < 256) */
    double *drift_p_growth;     /* one-sided, per channel, unadjusted (NaN: N < 256) */
    /* The level check (docs/method.md, "A level that moves"): the channel
     * whose level moves most, as a step or a straight line; see
     * el_regime_run, step 7. */
    el_regime_level level_kind;  /* EL_REGIME_LEVEL_NONE when nothing is found */
    size_t level_channel;
    double level_step_t;        /* shift: halfway between the last sample of the old
                                   level and the first of the new (table time); NaN else */
    double level_change;        /* shift: mean after the located step minus mean
                                   before it (whole window); trend: the block line's
                                   rise over the window (channel units); NaN: none */
    double level_move_z;        /* the step's or the slope's z against the block noise */
    double level_share;         /* fraction of the channel's variance it explains */
    double level_fit_r2;        /* fraction of the block means' variance it explains */
    size_t level_explained;     /* channels whose movement another explanation fits
                                   better (el_regime_level_recheck); 0 after a run */
    size_t transform_rows;      /* 0: the autocorrelation by one transform; else by
                                   the blocked one on a grid of this many rows
                                   (el_regime_create_using) */
    struct el_regime_work *work;/* FFT plans and scratch */
} el_regime;

/* Plans regime detection for series of exactly n_samples x n_channels: the
 * FFTW plans of the autocorrelation (length >= 2 N - 1, FFTW_ESTIMATE) and
 * every output are allocated once; el_regime_run allocates nothing.
 * *out receives the plan (NULL on error). Errors: EL_ERR_INTERNAL for a
 * NULL out, n_samples < 3 or n_channels == 0; EL_ERR_DATA when n_samples
 * is beyond FFTW's int sizes; EL_ERR_NUMERIC when FFTW returns no plan;
 * EL_ERR_NOMEM. NOT thread-safe: FFTW's planner keeps global state, so
 * create and destroy plans from one thread at a time. */
el_status el_regime_create(size_t n_samples, size_t n_channels, el_regime **out,
                           el_error *err);

/* el_regime_create with the autocorrelation's transform chosen: rows 0
 * the single zero-padded transform of length >= 2 N - 1; a power of two
 * rows >= 2 (at most 2 N) the blocked one: two channels at once as one
 * complex series on a grid of rows x cols points (cols a multiple of 8,
 * rows x cols >= 2 N - 1), transformed down the columns a batch at a time
 * and then along the rows, so every transform works in cache.
 * el_regime_create picks the single transform below 2^22 points (the
 * results bit for bit those of every earlier version) and the blocked one
 * with 2048 rows from there, where the single transform is memory-bound;
 * the two agree to rounding (tests/test_regime.c). Other arguments,
 * outputs and errors as el_regime_create; EL_ERR_INTERNAL for other rows. */
el_status el_regime_create_using(size_t n_samples, size_t n_channels, size_t rows,
                                 el_regime **out, el_error *err);

/* Classifies series (the prepared series the model will be fitted to; its
 * sizes must be the plan's, else EL_ERR_INTERNAL) with opt (NULL =
 * defaults); fills every field of *r (see el_regime). regime is DRIVEN when
 * opt->driven, whatever the tests say (they are still computed, and growth
 * is still reported); UNDETERMINED when fewer than 6 segments of 8 samples
 * fit (N < 48) or no channel varies, with a warning saying why. Errors:
 * EL_ERR_USAGE (option "--level") for a level outside (0, 0.5);
 * EL_ERR_INTERNAL for bad arguments or segments < 6; EL_ERR_NOMEM when a
 * warning cannot be stored. One thread per plan at a time. */
el_status el_regime_run(el_regime *r, const el_series *series,
                        const el_regime_options *opt, el_warnings *warnings,
                        el_error *err);

/* The level check (el_regime_run, step 7) made again on the same series,
 * with another explanation of each channel beside the step and the line:
 * rms_error[c] (n_channels entries, NULL: none) is its RMS error in
 * standard deviations of channel c, so it leaves a fraction rms_error[c]^2
 * of the variance (NaN: no explanation). A channel whose movement explains
 * a share s with rms_error[c]^2 < 1 - s is left out (counted in
 * level_explained), and level_kind and the level_* fields name the
 * largest movement of the channels left (NONE when none is). For the model's free run: a free decay towards the
 * operating point looks like a step or a line in the block means, and
 * the run explains it better than either (docs/method.md, "A level that
 * moves"). series must be the one of the last run (sizes checked: a
 * mismatch or NULL argument does nothing). Allocates nothing; can't
 * fail. */
void el_regime_level_recheck(el_regime *r, const el_series *series,
                             const double *rms_error);

/* The model-free veto: returns 1 when the last run found the amplitude
 * envelope growing significantly (r->growth), else 0. factor, p_value and
 * channel (each may be NULL) receive growth_factor, growth_p and
 * growth_channel (NaN, NaN, 0 when nothing was tested). The verdict stage
 * must not report "stable" when this returns 1. Can't fail. */
int el_regime_growth_veto(const el_regime *r, double *factor, double *p_value,
                          size_t *channel);

/* Whether the amplitude envelope of some tested channel of the last run
 * grows by at least min_factor over the window (envelope_factor) with a
 * one-sided, per-channel p of at most max_p (envelope_p_growth, not
 * adjusted over channels): a weaker question than the veto's, for choices
 * that must not rest on a steady envelope but claim nothing about
 * stability (--method auto keeps the block-Hankel estimator off such a
 * log: el_assess.c, choose_subspace). Returns 1 and sets channel, factor
 * and p_value (each may be NULL) to the qualifying channel with the
 * smallest p; else 0 and leaves them alone. 0 for a NULL r. Can't fail. */
int el_regime_envelope_grows(const el_regime *r, double min_factor, double max_p,
                             size_t *channel, double *factor, double *p_value);

/* Adds the veto's sentence when el_regime_growth_veto is 1: "the amplitude
 * of channel X grows by a factor F over the window (p = P, model-free
 * envelope test): the operating point cannot be called stable", or for
 * the drift test "the deviation from its level of channel X grows by a
 * factor F over the window (p = P, model-free drift test): ...". Does
 * nothing otherwise. EL_ERR_NOMEM when the warning cannot be stored;
 * EL_ERR_INTERNAL for NULL r or series. */
el_status el_regime_growth_warning(const el_regime *r, const el_series *series,
                                   el_warnings *warnings, el_error *err);

/* Frees the plan's transforms and scratch (about 5 N doubles: the
 * zero-padded autocorrelation buffer, its spectrum, the autocorrelation)
 * and keeps every output of the last run, which the later stages read
 * (el_regime_growth_veto, el_regime_growth_warning, the reports); the next
 * el_regime_run makes them again (and may then fail with the errors of
 * el_regime_create). For a single assessment, whose regime stage is over
 * before the fit. FFTW planner call: same thread rule as creation. NULL is
 * a no-op. */
void el_regime_release_work(el_regime *r);

/* Frees the plan and its outputs (FFTW planner call: same thread rule as
 * creation). NULL is a no-op. */
void el_regime_destroy(el_regime *r);

#endif
