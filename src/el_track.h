/* el_track: the margin of a long log over sliding windows, and whether it
 * is shrinking. Each window is assessed as `assess` would assess it alone
 * (regime, estimator, bootstrap, verdict); the trend of the least-damped
 * mode's decay rate over the windows is then fitted with bounds drawn
 * from the windows' own bootstrap replicates. */
#ifndef EL_TRACK_H
#define EL_TRACK_H

#include <stddef.h>

#include "el_advice.h"
#include "el_assess.h"
#include "el_error.h"
#include "el_io.h"
#include "el_json.h"

typedef struct {
    el_assess_options assess;     /* per window; from/to bound the span tracked;
                                     replicates 0 turns bounds off (bounds_off);
                                     1..99 are refused (too few for bounds) */
    double window;                /* window length, log's own time unit; 0 = span / 8 */
    double step;                  /* start-to-start distance; 0 = window (no overlap) */
    /* Called from the calling thread after each window; may be NULL. */
    void (*progress)(void *ctx, size_t done, size_t total);
    void *progress_ctx;
    /* A second caution shown after the usual one in the HTML page (`track
     * --follow` says there what an alarm is not); NULL = none. */
    const char *caution_extra;
} el_track_options;

/* Fills opt with the defaults: el_assess_defaults, automatic window and
 * step, no progress callback. */
void el_track_defaults(el_track_options *opt);

typedef enum {
    EL_TREND_UNDECIDED = 0,       /* neither direction holds with probability >= level */
    EL_TREND_SHRINKING,           /* the margin falls: P(slope < 0) >= level */
    EL_TREND_GROWING              /* the margin rises: P(slope > 0) >= level */
} el_trend_class;

/* "undecided", "shrinking" or "growing" (static text). */
const char *el_trend_name(el_trend_class trend);

/* One window. The margin is the decay rate of the least-damped mode,
 * -max Re lambda (1/time unit): positive for a stable operating point,
 * zero at the stability boundary. */
typedef struct {
    double t_from, t_to;          /* s (ISO logs: seconds from time_origin_s)        */
    char from_text[48], to_text[48];  /* as the log writes times (ISO 8601 or a number) */
    int ok;                       /* 0: the assessment failed; error says why */
    char error[EL_ERROR_TEXT_MAX];
    el_method method;             /* estimator used (auto's choice) */
    el_stability stability;
    int ambiguous;
    double p_stable;
    double margin;                /* point estimate */
    double margin_lo, margin_hi;  /* bootstrap bounds at the level */
    double margin_sd;             /* spread of the replicates (IQR / 1.349) */
    double frequency_hz;          /* least-damped mode (0 for a real mode) */
    double damping_ratio;         /* NaN when not defined */
    size_t n_replicates;
    double *margin_samples;       /* n_replicates replicate margins (owned) */
    size_t n_warnings;            /* warnings of the window's assessment */
    int no_dynamics;              /* 1: the window's data cannot be told from white
                                     noise (verdict withheld, cause no_dynamics): its
                                     margin describes noise and stays out of the trend */
    /* Default channels constant over this window while another moved (a
     * sensor that sticks part-way through the log), left out of its fit
     * as assess leaves them out: their names, ", "-separated ("" none;
     * cut at a name that does not fit), and how many. */
    char left_out[EL_ERROR_TEXT_MAX];
    size_t n_left_out;
} el_track_window;

typedef struct {
    size_t n_windows, n_ok;
    el_track_window *windows;     /* n_windows, owned */
    double window, step;          /* as used */
    double span_from, span_to;    /* the tracked span */
    int time_is_iso;              /* 1: the time column held ISO 8601 date-times */
    char time_unit[32];           /* "s" for ISO times, else the time column's unit as
                                     its header gives it ("" when it gives none) */
    double time_origin_s;         /* ISO: the Unix time (s) that time 0 stands for */
    size_t n_channels;
    el_warnings channel_names;    /* the channels' names (a list of strings, owned) */
    int bounds_off;               /* --boot 0: no bounds; the trend is an unweighted
                                     least-squares line, not classified */
    double level;
    /* Trend of the margin over the windows' mid times (weighted least
     * squares, weights 1 / margin_sd^2). */
    int has_trend;                /* 0: fewer than 3 windows gave a margin */
    double slope;                 /* 1/time unit per time unit */
    double slope_lo, slope_hi;    /* bounds at the level */
    double p_shrinking;           /* fraction of replicate slopes below 0 */
    el_trend_class trend;
    double scatter_ratio;         /* chi^2 / dof of the margins about the line */
    double widening;              /* factor the replicate slopes' spread was widened by */
    double margin_now;            /* the line at the last window's mid time */
    double time_to_zero;          /* from the last window's mid time; NaN unless shrinking */
    double time_to_zero_lo, time_to_zero_hi;   /* hi = +inf: not bounded */
    el_warnings warnings;
} el_track_result;

/* Reads the log, builds the series over the span, cuts it into windows of
 * opt->window every opt->step and assesses each (seed of window i: the
 * seed plus i times a fixed odd constant, so windows do not share their
 * resampling), then fits the trend (el_track_fit_trend). A window whose
 * assessment fails is kept with ok = 0 and its message; the others carry
 * on. *result must be zero-initialised (free with el_track_free, also on
 * error). Replicates 0 (--boot 0) turns bounds off: the windows' point
 * margins only, and the trend as el_track_fit_trend says for bounds_off.
 * Errors: those of el_assess_load; EL_ERR_USAGE (option "--window",
 * "--step" or "--boot") for a window longer than the span or under 20
 * samples, a negative step, fewer than 3 windows, or 1 to 99 replicates;
 * EL_ERR_NUMERIC when fewer than 3 windows give a margin; EL_ERR_NOMEM. */
el_status el_track_run(const el_track_options *opt, el_track_result *result,
                       el_error *err);

/* The trend of result->windows (those with ok and replicates), filled into
 * the trend fields of *result. Point slope: weighted least squares of the
 * margins on the windows' mid times, weights 1 / margin_sd^2. Replicate
 * slope r: the same weights on replicate r of every window (index r modulo
 * its count), so its spread is the one the windows' bootstrap implies.
 * When the point margins scatter about the line more than their spread
 * explains (scatter_ratio > 1) or the windows overlap (step < window: the
 * windows then share data), the replicate slopes are widened about their
 * median by sqrt(scatter_ratio) times sqrt(window / step). Bounds and
 * p_shrinking come from the replicate slopes; the class needs p_shrinking
 * >= level (or <= 1 - level); time_to_zero is the line's margin at the
 * last window divided by -slope when shrinking, its bounds from the
 * replicate slopes (+inf when some do not fall). Adds warnings for
 * widening, extrapolation, and windows fitted by different estimators
 * (--method auto chooses per window; their biases differ). With
 * result->bounds_off (no replicates): an ordinary (unweighted) least-squares
 * line through the windows' point margins gives slope and margin_now only;
 * bounds, p_shrinking, scatter_ratio and time_to_zero stay NaN, the class
 * stays undecided, and a warning says so. Fewer than 3 usable windows:
 * has_trend = 0 and EL_OK. EL_ERR_NOMEM. */
el_status el_track_fit_trend(el_track_result *result, el_error *err);

/* The cautions of a track report (el_advice_track_cautions) into out:
 * the time-to-zero note when the margin is shrinking, with its clock time
 * (UTC) for ISO logs: the last usable window's middle plus time_to_zero.
 * Returns the count (<= EL_ADVICE_MAX_CAUTIONS). Can't fail. */
size_t el_track_cautions(const el_track_result *r, char out[][EL_ADVICE_TEXT_MAX]);

/* Text report (terminal) and JSON report of a track run. EL_OK or
 * EL_ERR_NOMEM. */
el_status el_track_report_text(const el_track_result *r, const el_track_options *opt,
                               el_buf *out);
el_status el_track_report_json(const el_track_result *r, const el_track_options *opt,
                               el_buf *out);

/* The checks el_track_run makes of its options before any work: the
 * bootstrap must be on with at least EL_BOOT_MIN_REPLICATES replicates.
 * EL_OK, or EL_ERR_USAGE with option "--boot" and a hint. */
el_status el_track_check_options(const el_track_options *opt, el_error *err);

/* Assesses one window, the routine el_track_run runs for each of its
 * windows and `track --follow` (el_follow) for each completed window:
 * el_assess_execute through plan on *series (and *inputs when not NULL)
 * with the bootstrap seed opt->assess.boot.seed + index times a fixed odd
 * constant, then the window's summary into *w (zero-initialised by the
 * caller): t_from = series->t0, t_to = t_from + n_samples dt, their texts
 * written as the log writes times (el_table_format_time on times, whose
 * other parts may be empty), the margin, its bounds and replicates. The
 * series (and inputs) are taken over and freed, also on error (they are
 * left zeroed). Without --channels (opt->assess.channels NULL or ""), a
 * channel constant over the window while another moves is left out of
 * the window's fit, as el_assess_load leaves it out of a log, and named in
 * w->left_out; that window is then fitted through a plan of its own for
 * the channels kept (plan serves the full set). A window whose assessment
 * fails for its own data (too
 * flat, singular) gives w->ok = 0 with the message and EL_OK; EL_ERR_USAGE,
 * EL_ERR_NOMEM and EL_ERR_INTERNAL stop (err says why). Free w with
 * el_track_window_free. */
el_status el_track_assess_window(const el_track_options *opt, el_assess_plan *plan,
                                 const el_table *times, size_t index, el_series *series,
                                 el_series *inputs, el_track_window *w, el_error *err);

/* Frees what the window owns (its replicate margins) and zeroes it. NULL
 * is a no-op. */
void el_track_window_free(el_track_window *w);

/* Fills the log's description into *result: n_channels, channel_names
 * (names[0..n_channels), replacing any names already there), time_is_iso,
 * time_unit (from the table's time column), time_origin_s, level,
 * bounds_off, and the table's ingest notes as warnings (appended: the
 * caller empties result->warnings first when it describes again). EL_OK
 * or EL_ERR_NOMEM. */
el_status el_track_describe(el_track_result *result, const el_table *t,
                            const char *const *names, size_t n_channels, double level,
                            int bounds_off, el_error *err);

/* The pieces of the reports, for a caller that writes windows one at a
 * time (`track --follow`): one window's line of the text table (columns
 * width wide for the times), the trend lines of the text report, one
 * window's JSON object under key (NULL inside an array; times plus origin:
 * Unix seconds for ISO logs) and
 * the "trend" object. Out-of-memory sticks in the buffer (out->failed) or
 * the writer (j->failed). */
void el_track_window_text(el_buf *out, const el_track_window *w, int width);
void el_track_trend_text(el_buf *out, const el_track_result *r);
void el_track_window_json(el_json *j, const char *key, const el_track_window *w,
                          double origin);
void el_track_trend_json(el_json *j, const el_track_result *r);

/* 1 when window w enters the trend: assessed, its data shows dynamics
 * (no_dynamics 0: a white window's margin describes noise), a finite
 * margin, and replicates unless bounds_off (--boot 0). The trend, the
 * reports and the HTML figure share this rule. */
int el_track_window_in_trend(const el_track_window *w, int bounds_off);

/* The track's warnings for a person to read, appended to out as "  ! "
 * lines: warnings of one kind about many channels or modes are folded
 * into one line (el_warnlines_fold), as the assess report does; JSON
 * keeps every warning. Nothing is written when there are none. EL_OK,
 * or EL_ERR_NOMEM (out may then hold part of the lines). */
el_status el_track_warnings_text(el_buf *out, const el_track_result *r);

/* Frees what the result owns and zeroes it. NULL is a no-op. */
void el_track_free(el_track_result *result);

#endif
