/* el_units: the units of a log's columns beyond the header's "[unit]":
 * the row of units many data loggers write under a CSV header
 * ("s,bar,l/min"), whether a row is one and giving its units to the
 * columns (the reader splits the row; this stage judges and takes its
 * cells), and the unit the time numbers are written in. */
#ifndef EL_UNITS_H
#define EL_UNITS_H

#include <stddef.h>

#include "el_error.h"
#include "el_table.h"

/* One cell of a split row: text[0..length), not NUL-terminated. */
typedef struct {
    const char *text;
    size_t length;
} el_units_cell;

/* The unit cell c holds: trimmed of blanks, without one pair of enclosing
 * brackets or parentheses ("[bar]", "(s)" give "bar", "s"). */
void el_units_row_unit(const el_units_cell *c, const char **unit, size_t *n);

/* 1 when cells[0..n) are a row of units: the cell of time_column names a
 * unit of time (el_time_unit_lookup), or is empty or labels date-times
 * (a zone: UTC, UTC+01:00, CET, local; a pattern: hh:mm:ss,
 * YYYY-MM-DD hh:mm:ss; a word: date, timestamp) while another cell names
 * a unit (a column of date-times has none), and no cell is a number
 * (as el_number_parse reads it with this delimiter and decimal separator,
 * 0 = not decided yet). A data row's time cell is a number or a
 * date-time, never a unit of time, and a data row without its time is an
 * error anyway, so no valid data row is ever taken for one. */
int el_units_row_is(const el_units_cell *cells, size_t n, size_t time_column, char delim,
                    char decimal);

/* Gives column c of t (c < n, n == t->n_columns) the unit cells[c] holds;
 * an empty cell or NA leaves the column as it is. A column whose header already
 * named a unit must name the same one: else EL_ERR_DATA with *conflict =
 * c and nothing of that column changed (the caller, who knows where the
 * cell lies, words the error). EL_ERR_NOMEM with err set. *time_unit_taken
 * is 1 when the time column's unit came from the row. The table owns the
 * new unit strings. */
el_status el_units_row_take(el_table *t, const el_units_cell *cells, size_t n,
                            size_t *conflict, int *time_unit_taken, el_error *err);

/* Decides the unit of t's time numbers and sets t->time_scale_s,
 * time_unit and time_unit_source: "iso8601" for date-times (whose
 * time_zone_known it sets when they carry no zone and the time column's
 * unit, from a units row, says UTC, GMT or Z: called after the rows,
 * which are read as written, without a zone); else
 * opt_unit (--time-unit, "--time-unit"); else the time column's unit
 * ("units row" when from_row, else "header"); else a unit in or as the
 * column's name (el_time_unit_from_name); else seconds ("assumed").
 * EL_ERR_USAGE for an opt_unit that is no unit of time (option named);
 * EL_ERR_DATA at t->source, header_line, header_column for a column unit
 * that is not one. */
el_status el_units_decide_time(el_table *t, const char *opt_unit, int from_row,
                               long header_line, long header_column, el_error *err);

#endif
