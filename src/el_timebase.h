/* el_timebase: from a table to a uniform series of the chosen channels
 * over the chosen window (gap fill, resampling, window selection). */
#ifndef EL_TIMEBASE_H
#define EL_TIMEBASE_H

#include <stddef.h>

#include "el_error.h"
#include "el_ingest.h"

typedef struct {
    double from, to;          /* window in table time units; -INFINITY/+INFINITY = open */
    size_t max_gap;           /* longest run of missing samples filled (default 5) */
    double jitter_limit;      /* relative step variation that triggers resampling (0.01) */
} el_timebase_options;

/* Fills opt with the defaults: open window, max_gap 5, jitter_limit 0.01. */
void el_timebase_defaults(el_timebase_options *opt);

/* Uniformly sampled channels. Column-major: sample k of channel c is
 * values[c * n_samples + k]. No NaN: every missing cell was filled or the
 * build was refused. */
typedef struct {
    size_t n_samples;
    size_t n_channels;
    double dt;                /* sample interval, table time units */
    double t0;                /* time of sample 0, table time units */
    double *values;           /* n_samples * n_channels, owned */
    char **names;             /* n_channels, owned copies */
    char **units;             /* n_channels, owned copies ("" = none) */
    size_t *source_column;    /* n_channels: table column of each channel */
    size_t rows_used;         /* table rows inside the window */
    size_t filled_cells;      /* cells filled by linear interpolation */
    int resampled;            /* 1: rows were put on a uniform grid by interpolation */
    double jitter;            /* max |step - dt| / dt among rows in the window */
} el_series;

/* Builds *series (zero-initialised) from the table columns listed in
 * channels[0..n_channels) (table column indices, never the time column).
 * Steps: select rows with from <= t <= to; time must increase strictly
 * (else EL_ERR_DATA at the offending line, hint); dt = median step; if any
 * step differs from dt by more than jitter_limit*dt, interpolate linearly
 * onto the grid t0 + k*dt (and add a warning saying so); runs of up to
 * max_gap missing samples per channel (missing cells, or time steps longer
 * than dt that leave grid points without rows) are filled by linear
 * interpolation and counted; a longer run is EL_ERR_DATA naming its time
 * range (formatted with el_table_format_time) and suggesting --from/--to
 * or --max-gap. Missing cells at the very start or end of the window cannot
 * be interpolated: EL_ERR_DATA with a hint to move the window. Fewer than
 * 3 samples in the window: EL_ERR_DATA. */
el_status el_series_build(const el_table *table, const size_t *channels,
                          size_t n_channels, const el_timebase_options *opt,
                          el_series *series, el_warnings *warnings,
                          el_error *err);

/* Frees everything the series owns and zeroes it. NULL is a no-op. */
void el_series_free(el_series *series);

#endif
