/* el_timebase: from a table to a uniform series of the chosen channels
 * over the chosen window (gap fill, resampling, window selection). */
#ifndef EL_TIMEBASE_H
#define EL_TIMEBASE_H

#include <stddef.h>

#include "el_error.h"
#include "el_ingest.h"

typedef struct {
    double from, to;          /* window in table time (s); -INFINITY/+INFINITY = open */
    size_t max_gap;           /* longest run of missing samples filled (default 5) */
    double jitter_limit;      /* relative step variation that triggers resampling (0.01) */
} el_timebase_options;

/* Fills opt with the defaults: open window, max_gap 5, jitter_limit 0.01.
 * opt must not be NULL. Can't fail. */
void el_timebase_defaults(el_timebase_options *opt);

/* Uniformly sampled channels. Column-major: sample k of channel c is
 * values[c * n_samples + k]. No NaN: every missing cell was filled or the
 * build was refused. */
typedef struct {
    size_t n_samples;
    size_t n_channels;
    double dt;                /* sample interval, s */
    double t0;                /* time of sample 0, table time (s) */
    double *values;           /* n_samples * n_channels, owned */
    char **names;             /* n_channels, owned copies */
    char **units;             /* n_channels, owned copies ("" = none) */
    size_t *source_column;    /* n_channels: table column of each channel */
    size_t rows_used;         /* table rows inside the window */
    size_t filled_cells;      /* cells filled by linear interpolation */
    int resampled;            /* 1: rows were put on a uniform grid by interpolation */
    double jitter;            /* max |step - m dt| / dt among rows in the window,
                                 m = the whole number of intervals the step spans
                                 (1 for an ordinary step; a time gap of m - 1
                                 missing rows is not jitter; with stamp_step > 0,
                                 max deviation of a stamp from the uniform grid) */
    double stamp_step;        /* > 0: the time stamps' resolution, when rounding to it
                                 alone made the steps vary (a 300 Hz log stamped in
                                 whole ms); the rows were then read as the grid, not
                                 resampled. 0 otherwise */
} el_series;

/* Builds *series from the table columns listed in channels[0..n_channels)
 * (table column indices, never the time column; n_channels >= 1). Whatever
 * *series held is overwritten, not freed. opt NULL means the defaults.
 *
 * Steps, in this order:
 * 1. Time must be finite and increase strictly over the whole table (a
 *    disordered log makes window selection by value meaningless): else
 *    EL_ERR_DATA "time goes backwards" / "time repeats" at the offending
 *    row's source line, column time_column + 1, with a hint.
 * 2. Rows with from <= t <= to are selected (both ends inclusive). None:
 *    EL_ERR_USAGE with option "--from" or "--to" and a hint giving the
 *    log's time span. from > to or NaN: EL_ERR_USAGE. Fewer than 3 rows:
 *    EL_ERR_DATA.
 * 3. dt = median step in the window. A step spanning m whole intervals
 *    with m - 1 > max_gap (rounded to the nearest whole number) is a time
 *    gap too long to fill: EL_ERR_DATA naming its time range. If every step
 *    is within jitter_limit * dt of a whole multiple m >= 1 of dt, the rows
 *    are the grid: t0 = first row time, values kept as they are, a step of
 *    m > 1 intervals inserts m - 1 missing samples, and dt is refined to
 *    (last time - t0) / (n_samples - 1) so rounding of the written time
 *    stamps averages out. Otherwise every channel is interpolated linearly
 *    onto t0 + k dt (t0 = first row time, last grid point <= last row
 *    time), resampled = 1, and a warning says by how much the interval
 *    varies.
 * 4. Per channel, a run of missing samples (missing cells, rows lacking
 *    because of a time gap; after resampling: round(span / dt) - 1 between
 *    two rows with values, or the missing cells between them if more) of
 *    length <= max_gap is filled by linear interpolation between the
 *    neighbouring values and counted in filled_cells (one warning sums them
 *    up). A longer run: EL_ERR_DATA naming the channel, the run length in
 *    samples and its time range (the times of the values around it, with
 *    el_table_format_time), located at the first missing cell (or at the row
 *    after a time gap), hint --from/--to or --max-gap. A channel without a
 *    value at the first or last sample of the window: EL_ERR_DATA located at
 *    that cell, hint to move --from or --to. A channel with no value in the
 *    window at all: EL_ERR_DATA.
 * Fewer than 3 samples: EL_ERR_DATA. Bad arguments (NULL pointers, channel
 * out of range or the time column, jitter_limit < 0): EL_ERR_INTERNAL. Out
 * of memory: EL_ERR_NOMEM. On any error *series is left zeroed (nothing to
 * free) and no warning is added; on success the caller frees it with
 * el_series_free. Warnings go to *warnings (may be NULL: dropped).
 * Cost: linear in rows and samples; the output is allocated once, plus one
 * scratch array of the window's steps (for the median). */
el_status el_series_build(const el_table *table, const size_t *channels,
                          size_t n_channels, const el_timebase_options *opt,
                          el_series *series, el_warnings *warnings,
                          el_error *err);

/* What el_series_build would make of the whole log, for `scan`: the same
 * rules (time order, median step, jitter judged against whole multiples of
 * the interval, time gaps) so that scan and assess never disagree. */
typedef struct {
    size_t backward_steps;    /* steps where time goes back */
    size_t repeated_steps;    /* steps where time repeats */
    int usable;               /* 1: the time column is in order (rules 1 of el_series_build);
                                 0: refusal says why assess refuses the log */
    el_error refusal;         /* usable == 0: the error el_series_build gives */
    double dt_step;           /* median step, s (usable) */
    double jitter;            /* as el_series.jitter over the whole log */
    double dt_grid;           /* the interval assess uses for the whole log, s */
    double stamp_step;        /* as el_series.stamp_step over the whole log */
    int resample;             /* 1: assess resamples the whole log onto a grid */
    double longest_gap;       /* samples missing in the longest time gap */
    size_t gap_row;           /* first row after a time gap longer than opt->max_gap
                                 (assess refuses a window across it); 0 = none */
} el_time_survey;

/* Fills *out for the whole table with the rules of el_series_build (opt
 * NULL: the defaults; from/to are ignored). A log that el_series_build
 * would refuse for its time order is not an error here: usable = 0 and
 * out->refusal holds that error (with its location and hint). EL_OK, or
 * EL_ERR_INTERNAL for NULL arguments, EL_ERR_NOMEM. Nothing to free. */
el_status el_timebase_survey(const el_table *table, const el_timebase_options *opt,
                             el_time_survey *out, el_error *err);

/* As el_timebase_survey, with the median step of the whole table given:
 * dt_step from el_scan_table of the same table (el_scan.dt_step), so
 * `scan` selects the median of a million steps once, not twice. The
 * result is el_timebase_survey's, bit for bit. dt_step not > 0 (or NaN):
 * computed as el_timebase_survey does. */
el_status el_timebase_survey_step(const el_table *table, const el_timebase_options *opt,
                                  double dt_step, el_time_survey *out, el_error *err);

/* What the steps of the increasing times time[first..last] say about a
 * grid of interval dt (el_series_build and el_timebase_survey judge a log
 * by it): intervals, the whole intervals m = floor(step / dt + 0.5) summed
 * in row order; jitter, the largest |step - max(m, 1) dt| / dt; on_grid,
 * every m >= 1 and no deviation above jitter_limit; gap_row, the first row
 * whose step has m - 1 > max_gap (0: none) and gap_missing its m - 1;
 * longest_gap, the largest m - 1 (at least 0). allow_avx2 = 0 keeps to
 * the plain loop; otherwise, on CPUs with AVX2 (checked at run time),
 * four steps at a time with the same doubles bit for bit (the test
 * compares the two). No allocation; can't fail. */
typedef struct {
    double intervals;
    double jitter;
    int on_grid;
    size_t gap_row;
    double gap_missing;
    double longest_gap;
} el_step_survey;

void el_timebase_step_survey(const double *time, size_t first, size_t last, double dt,
                             size_t max_gap, double jitter_limit, int allow_avx2,
                             el_step_survey *out);


/* Frees everything the series owns and zeroes it. NULL is a no-op. */
void el_series_free(el_series *series);

#endif
