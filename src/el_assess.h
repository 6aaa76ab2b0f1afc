/* el_assess: the main job as one library call: read a log, build the time
 * base, fit the local linear model, compute modes, bootstrap them and
 * classify the operating point. The CLI and the tests both use it. */
#ifndef EL_ASSESS_H
#define EL_ASSESS_H

#include <stddef.h>
#include <stdio.h>

#include "el_cycle.h"
#include "el_dynamics.h"
#include "el_envelope_check.h"
#include "el_error.h"
#include "el_estimator.h"
#include "el_lags.h"
#include "el_fit.h"
#include "el_ingest.h"
#include "el_modes.h"
#include "el_prep.h"
#include "el_regime.h"
#include "el_resample.h"
#include "el_spectrum.h"
#include "el_split.h"
#include "el_state_check.h"
#include "el_timebase.h"
#include "el_validate.h"
#include "el_verdict.h"

/* --method auto keeps the block-Hankel estimator off a window whose
 * amplitude envelope grows by at least this factor over the window with a
 * one-sided p of at most EL_ASSESS_HANKEL_GROWTH_P on some channel
 * (el_regime_envelope_grows; el_assess.c, choose_subspace). Why: hankel's
 * bootstrap draws moving blocks of windows as if every window were alike,
 * and re-solves the weighted SVD of each replicate's sums with the point
 * fit's weights; on a growing log the late windows carry most of those
 * sums (an amplitude ratio of 3 is an energy ratio of 9: the last quarter
 * of the windows then holds about half the sums, against a quarter for a
 * steady envelope), and a replicate's eigenvalues depend on how many late
 * windows it drew, not only on the noise. Measured on a 4-sensor log
 * growing 6.9-fold (bench/fresh_family.py, system 13 at 30 dB, 12 redraws
 * of the same system): hankel's point estimate of Re lambda was 0.06-0.11
 * 1/s (true 0.094) in 10 of 12 draws, but its 95 % bounds reached -5 to
 * -18 1/s and P(stable) was 0.38-0.53 in 7 of them; of the tuning log's
 * replicates, those with under a tenth of late windows (a quarter
 * expected) were stable in 65 %, those with over a third in 2 %, and the
 * block length (44 to 1000 windows) did not change P(stable). iv's bounds
 * ([0.065, 0.121] on a draw with 0.092) matched the spread of the draws.
 * The weaker test than the veto's (per channel, unadjusted, a factor of at
 * least 3) suffices because the choice claims nothing about stability: iv
 * is consistent for stationary logs too, so a stationary window taken for
 * a growing one keeps a valid estimator (iv is the default for every short
 * or single-channel log); the factor keeps the slow envelope wander of
 * stationary multi-sensor logs out (at most 2.1 on the 221 stationary logs
 * of that family). */
#define EL_ASSESS_HANKEL_GROWTH_FACTOR 3.0
#define EL_ASSESS_HANKEL_GROWTH_P 0.05

typedef struct {
    const char *path;             /* CSV file, "-" = stdin; the name used in messages */
    FILE *stream;                 /* when not NULL: read the log from this open stream
                                     instead of opening path (e.g. fmemopen) */
    const char *const *paths;     /* n_paths > 1: files read as one log (el_table_read_files;
                                     path is then paths[0]); else path alone */
    size_t n_paths;
    const char *time_unit;        /* --time-unit: unit of the log's time numbers; NULL =
                                     from the header, else seconds */
    char decimal;                 /* --decimal: 0 detect, '.' or ',' */
    char date_order;              /* --date-order: 0 settled by the dates, EL_DATE_DMY or
                                     EL_DATE_MDY (el_ingest_options.date_order) */
    const char *time_column;      /* NULL = first column */
    const char *channels;         /* comma-separated names; NULL = all but time and inputs */
    const char *inputs;           /* --input: comma-separated measured input columns, NULL = none */
    int lags_auto;                /* 1: --lags auto (BIC), fit.lags is then chosen */
    int lags_fixed;               /* 1: fit.lags is the caller's even when 0 (--lags 0
                                     given). 0, with fit.lags 0 and lags_auto 0: a log of
                                     one channel gets its depth as with --lags auto (one
                                     sample of one sensor cannot show an oscillation) */
    int method_auto;              /* 1: --method auto (default): the estimator is chosen
                                     by the data's regime and cross-checked by a second,
                                     independent one (fit.method is then ignored) */
    const char *from_text;        /* window start as written (number or ISO), NULL = open */
    const char *to_text;
    size_t max_gap;               /* default 5 */
    el_detrend detrend;           /* --detrend (default none) */
    const char *band_text;        /* --band LO:HI as written; NULL = no band limit */
    el_fit_options fit;
    el_boot_options boot;         /* boot.replicates == 0: no bootstrap */
    /* Stage progress (may be NULL; the library never prints, a front end
     * draws): called on the calling thread with done 0 when a stage
     * begins and done == total (1) when it ends. Stages: "reading the
     * log", "fitting the model", "bootstrap replicates" (begun here
     * with total 1, then continued by boot.progress with the replicate
     * counts: a front end should report both under this label),
     * "cross-check fit" (--method auto), "checking the model". */
    void (*stage_progress)(void *ctx, const char *stage, size_t done, size_t total);
    void *stage_ctx;
} el_assess_options;

/* Fills opt with the defaults (all channels, open window, max_gap 5, the
 * fit and bootstrap defaults). */
void el_assess_defaults(el_assess_options *opt);

/* Bootstrap replicates of a least-squares cross-check (--method auto on
 * stationary data or with inputs) when more are asked: it only tests
 * whether P(stable) < 1/2, whose Monte Carlo standard error at 1/2 is
 * sqrt(0.25 / 200) = 0.035 (the test can flip only for a true P(stable)
 * within about 0.07 of 1/2, where ls leans neither way). fb's cross-check
 * keeps every replicate: it can withdraw an "unstable" at P(stable) >=
 * level, a tail that needs them. */
#define EL_ASSESS_CROSS_LS_REPLICATES 200

/* Bounds that straddle the boundary are put down to "too few cycles" when
 * the least damped mode is real or completes fewer than this many cycles
 * in the window (project convention: with 20 cycles a lightly damped mode's
 * decay is usually resolved, docs/method.md "Verdict words"). */
#define EL_ASSESS_FEW_CYCLES 20.0

/* Time constants of the model's slowest mode the window must span before
 * the model's free run may explain a level step or line (docs/method.md,
 * "A level that moves"): after 3 time constants a first-order decay is
 * within 5% of its end (the usual settling-time rule, common practice in
 * control engineering), so the window holds the operating point the decay
 * reaches; a slower mode is a level still on its way. */
#define EL_ASSESS_SETTLE_TIME_CONSTANTS 3.0


/* What breaks the one-operating-point assumption (JSON
 * input.nonstationarity): the first found of drift (split halves), a level
 * shift and a level trend (el_regime). */
typedef enum {
    EL_NONSTAT_NONE = 0,
    EL_NONSTAT_DRIFT,
    EL_NONSTAT_LEVEL_SHIFT,
    EL_NONSTAT_LEVEL_TREND
} el_nonstat_kind;

/* "none", "drift", "level_shift", "level_trend". Static text. */
const char *el_nonstat_name(el_nonstat_kind kind);

/* Everything a report needs. Zero-initialise before el_assess_run. */
typedef struct {
    el_table table;
    el_series series;
    el_series inputs;             /* measured inputs on the same grid (has_inputs) */
    int has_inputs;
    int lags_were_auto;           /* 1: lags_choice says how --lags auto chose */
    int lags_for_one_channel;     /* 1: chosen so because the log has one channel and
                                     no --lags was given (lags_were_auto is then 1) */
    el_lags_choice lags_choice;
    el_model model;
    el_modes modes;
    int method_was_auto;          /* 1: the estimator was chosen by --method auto */
    char method_reason[256];      /* why this estimator (auto), for the reports */
    int cross_ran;                /* 1: the cross-check below was run */
    el_method cross_method;       /* the second, independent estimator */
    el_model cross_model;
    el_modes cross_modes;
    el_boot_result cross_boot;
    double cross_p_stable;        /* NaN without bootstrap */
    int cross_agrees;             /* 1: the cross-check supports the verdict */
    el_state_check state_check;   /* iv's plain-state check of an "unstable" from the
                                     automatic multi-step state (ran 0 when not made) */
    el_envelope_check envelope_check; /* an "unstable" against the log's envelope
                                     (el_envelope_check; made 0 when not run) */
    el_boot_result boot;          /* boot.replicates == 0 when not run */
    el_verdict verdict;
    double *detrend_level;        /* n_channels: removed level (0 without detrend) */
    double *detrend_slope;        /* n_channels: removed drift per time unit */
    int has_band;                 /* 1: the series was band-limited to band */
    el_prep_band band;
    double *operating_point;      /* n_channels, physical units (detrend level added back) */
    int operating_point_ok;       /* 0: I - Ad singular: no operating point */
    el_regime *regime;            /* data regime of the prepared window (owned, or the
                                     plan's when parts_borrowed) */
    int growth_veto;              /* 1: the envelope grows: "stable" was withheld */
    el_validation *validation;    /* one-step, free run, Ljung-Box (owned, or the plan's
                                     when parts_borrowed) */
    int parts_borrowed;           /* 1: regime and validation belong to the
                                     el_assess_plan that filled this result */
    int has_spectra;              /* 1: spectra and peaks below are filled */
    el_spectra spectra;           /* Welch spectra of the window (cross-check, report) */
    el_peaks peaks;
    el_spectrum_mode_check *mode_checks;   /* modes.n_modes, owned (NULL without spectra) */
    el_spectrum_peak_check *peak_checks;   /* per peak slot, owned */
    el_split_check split;         /* the split-half drift check */
    el_dynamics_test dynamics;    /* whiteness of the detrended data (no verdict from
                                     nothing: el_dynamics) */
    double *dynamics_q;           /* n_channels: each channel's Ljung-Box statistic of
                                     that test (NaN: constant, not tested); owned */
    double *dynamics_p;           /* n_channels: its p-value (NaN: not tested); owned */
    int method_stood_in;          /* 1: method_refused gave no model on data with no
                                     dynamics, and least squares (model.method) was
                                     fitted in its place only to report that */
    el_method method_refused;     /* the estimator that gave no model (method_stood_in) */
    char method_refusal[192];     /* what it said (method_stood_in), for the reports */
    el_cycle cycle;               /* harmonics with a steady envelope: a possible
                                     limit cycle (el_cycle) */
    el_nonstat_kind nonstat;      /* what breaks one operating point (NONE: nothing found) */
    double nonstat_t;             /* table time: the split (drift), the step (shift);
                                     NaN for a trend (it runs through the window) */
    size_t nonstat_channel;       /* channel of a level shift or trend */
    el_warnings input_warnings;   /* about the data: resampling, filled gaps */
    el_warnings warnings;         /* about the model and the verdict */
} el_assessment;

/* The first two stages only: reads the log and builds the uniform series
 * of the chosen channels over the window (result->table, result->series,
 * result->input_warnings). Used by subcommands that need the data but no
 * model. Errors as el_table_read and el_series_build, plus EL_ERR_USAGE
 * for --from/--to/--channels. */
el_status el_assess_load(const el_assess_options *opt, el_assessment *result,
                         el_error *err);

/* --method auto's choice (docs/method.md, "Choosing the estimator"): the
 * estimator for data in the given regime and the independent one that
 * cross-checks it; reason receives one sentence. Can't fail. */
void el_assess_choose_method(el_regime_class regime, int has_inputs,
                             el_method *primary, el_method *cross,
                             char *reason, size_t reason_size);

/* Runs the whole pipeline. On success every part of *result is filled;
 * on error the parts done so far stay in *result (free it either way with
 * el_assessment_free) and err says what went wrong and where. */
el_status el_assess_run(const el_assess_options *opt, el_assessment *result,
                        el_error *err);

/* Everything after el_assess_load, on the series (and inputs, when
 * has_inputs) already in *result: prepare, regime (with the level check),
 * fit, modes, spectra, bootstrap, verdict, cross-check, growth veto, the
 * split-half drift check (result->split), what breaks one operating point
 * (result->nonstat: a level shift, a level trend or drift, each making a
 * "stable" undecided with that cause, never an "unstable"), validation,
 * and the cause of bounds that straddle zero (few cycles, low
 * excitation). el_assess_run
 * is el_assess_load then this; a caller that builds the series itself
 * (el_track, one window at a time) fills result->series, result->inputs
 * and has_inputs (owned by the result from then on) and calls this. The
 * table may be left empty: error messages then name opt->path. Errors as
 * el_assess_run. */
el_status el_assess_analyse(const el_assess_options *opt, el_assessment *result,
                            el_error *err);

/* Plan for assessing many windows of the same size (el_track): the fit
 * workspaces (el_fit_plan: snapshot matrices, SVD and estimator
 * workspaces), the band-limit plan (FFTW), the regime detector (its FFTW
 * plans) and the validation (prediction plan) are made at the first window
 * that needs them and reused for every later window of the same sizes and
 * options (a window with other sizes or another method gets its own; of
 * the fit plans the least recently used of 4 is replaced). Made per window
 * still: the spectra (an output the result owns) and the bootstrap (its
 * engine holds prefix sums of the window's own data). Opaque; one thread
 * at a time (FFTW planning is not thread-safe). */
typedef struct el_assess_plan el_assess_plan;

/* Creates an empty plan for windows of n_samples x n_channels with
 * n_inputs measured inputs (sizes of the first window; the plan adapts to
 * others) into *plan. EL_ERR_NOMEM; EL_ERR_INTERNAL for a NULL plan. Free
 * with el_assess_plan_destroy. */
el_status el_assess_plan_create(size_t n_samples, size_t n_channels, size_t n_inputs,
                                el_assess_plan **plan, el_error *err);

/* el_assess_analyse through the plan: the same results, warnings and
 * errors, bit for bit, as el_assess_analyse on the same result and
 * options, without remaking the plan's workspaces. The result's regime and
 * validation are the plan's (result->parts_borrowed = 1): they hold this
 * window's numbers until the next el_assess_execute with the plan or
 * el_assess_plan_destroy; el_assessment_free leaves them to the plan.
 * EL_ERR_INTERNAL for a NULL argument. */
el_status el_assess_execute(el_assess_plan *plan, const el_assess_options *opt,
                            el_assessment *result, el_error *err);

/* Frees the plan. NULL is a no-op. */
void el_assess_plan_destroy(el_assess_plan *plan);

/* Frees everything the result owns and zeroes it. NULL is a no-op. */
void el_assessment_free(el_assessment *result);

/* The caution that goes with every report. Static text. */
const char *el_assess_caution(void);

/* 1 when r's least-squares cross-check leans stable (P(stable) >= 1/2)
 * beside a growing least damped mode and was not counted against it
 * (sensor noise biases least squares towards stability): the reports
 * then say so instead of "agrees". Pure; r must be a filled result. */
int el_assess_ls_stable_beside_growth(const el_assessment *r);

#endif
