/* el_channels: which columns of a log are the state channels and which
 * are measured inputs (--channels, --input), and which of the default
 * channels are left out because they do not move. */
#ifndef EL_CHANNELS_H
#define EL_CHANNELS_H

#include <stddef.h>

#include "el_error.h"
#include "el_table.h"
#include "el_timebase.h"

/* Parses a comma-separated list of column names given with option
 * ("--channels", "--input") against the table into table column indices
 * (out must hold table->n_columns entries). NULL or "" selects every
 * column but the time column and the exclude[0..n_exclude) columns.
 * EL_ERR_USAGE (option named, hint listing the columns) for an unknown,
 * repeated or time column name, or one also in exclude; EL_ERR_DATA for
 * a log with a time column only. */
el_status el_channels_select(const el_table *table, const char *list, const char *option,
                             const size_t *exclude, size_t n_exclude, size_t *out,
                             size_t *n_out, el_error *err);

/* Of the *n_kept channels of series (built from the table columns
 * columns[0..*n_kept), in order), those constant over the window (a stuck
 * or disconnected sensor; el_stats_spread's test, the fit's) are left
 * out when at least one other moves: columns is compacted to the rest,
 * *n_kept set, and one warning per channel left out is added to warnings.
 * Nothing changes when none or all are constant (the fit then says why).
 * The caller builds the series again from the columns kept. EL_ERR_NOMEM. */
el_status el_channels_drop_constant(const el_series *series, size_t *columns, size_t *n_kept,
                                    el_warnings *warnings, el_error *err);

#endif
