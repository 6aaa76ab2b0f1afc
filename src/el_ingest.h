/* el_ingest: streaming CSV reader that turns a logger export into a table of
 * float64 columns with names, units and a missing-cell mask. */
#ifndef EL_INGEST_H
#define EL_INGEST_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "el_error.h"

/* A log in memory. Column-major: the value of row r in column c is
 * values[c * n_rows + r]. A missing cell (empty, NA, NaN) is stored as NaN;
 * no other cell can be NaN or infinite (ingest refuses them). The time
 * column holds seconds relative to time_origin_unix_s when the file had
 * ISO 8601 date-times, or the file's own numbers (any real) otherwise. */
typedef struct {
    size_t n_rows;
    size_t n_columns;          /* including the time column */
    size_t time_column;        /* index of the time column */
    char **names;              /* n_columns names, owned */
    char **units;              /* n_columns units, owned; "" when none given */
    double *values;            /* n_rows * n_columns, column-major, owned */
    long *source_line;         /* n_rows: 1-based line of each row in the file */
    size_t *missing;           /* n_columns: missing cells per column */
    int time_is_iso;           /* 1: the time column held ISO 8601 date-times */
    int64_t time_origin_unix_s;/* ISO: Unix time (s) that time value 0 stands for */
    int time_zone_minutes;     /* ISO: offset of the first timestamp (for display) */
    char delimiter;            /* ',', ';' or '\t' as detected */
    char source[256];          /* path as given, or "<stdin>" */
} el_table;

typedef struct {
    /* Name of the time column; NULL = the first column. */
    const char *time_column;
} el_ingest_options;

/* Reads a CSV log from path ("-" = stdin) into *table (which must be
 * zero-initialised or freed). Rules: RFC 4180 quoting; first non-comment
 * row is the header, each name optionally followed by a unit written
 * "name [unit]"; delimiter detected among comma, semicolon and tab from
 * the header row; lines whose first non-blank character is '#' are
 * comments and blank lines are skipped, anywhere; CRLF and LF; a UTF-8
 * byte-order mark is skipped; no line-length limit. Empty, NA and NaN
 * cells (any case, blanks trimmed) are missing; any other cell must be a
 * finite plain decimal number in full (no inf, hex or trailing text), or,
 * in the time column, an ISO 8601 date-time
 * YYYY-MM-DD(T| )HH:MM[:SS[.fff]][Z|+HH:MM|-HH:MM|+HHMM] (no zone = UTC);
 * the first data row decides which kind the time column holds. Errors
 * are EL_ERR_DATA with file, line and column (1-based character column
 * where the offending cell starts) set and a hint: empty file, header
 * only, ragged row, duplicate or empty column name, a header row made of
 * numbers only (missing header), missing time cell, mixed time kinds,
 * invalid date, binary content, unterminated quote, bad cell.
 * EL_ERR_USAGE with option "--time" and the column list in the hint when
 * opt->time_column names no column. EL_ERR_IO when the file cannot be
 * opened or read; EL_ERR_NOMEM. On error *table is left empty (nothing
 * to free, but el_table_free is harmless). opt may be NULL. */
el_status el_table_read(const char *path, const el_ingest_options *opt,
                        el_table *table, el_error *err);

/* As el_table_read, from an open stream; name is used in messages. The
 * stream is read to its end and not closed. */
el_status el_table_read_stream(FILE *stream, const char *name,
                               const el_ingest_options *opt, el_table *table,
                               el_error *err);

/* Frees everything the table owns and zeroes it. NULL is a no-op. */
void el_table_free(el_table *table);

/* Index of the column called name, or -1 when there is none. */
long el_table_find(const el_table *table, const char *name);

/* Parses a time as written on the command line (--from/--to) in the
 * table's time units: a plain number (seconds, or the file's own unit),
 * or for an ISO table also an ISO 8601 date-time (as in the file, or a
 * date alone = midnight); a date-time without zone is read in the zone of
 * the file's first row. EL_ERR_USAGE with a hint when it is neither (the
 * caller sets the option name). */
el_status el_table_parse_time(const el_table *table, const char *text,
                              double *time_out, el_error *err);

/* Writes the table time t as text into buf: ISO 8601 with milliseconds and
 * the zone offset of the file's first row for ISO tables
 * ("2026-03-14T08:00:00.250+01:00"; "+00:00" for UTC or no zone), else
 * "%.9g" (also for a non-finite t). Returns buf, always NUL-terminated. */
char *el_table_format_time(const el_table *table, double t, char *buf, size_t size);

/* Per-column summary for `eigenlog scan`. */
typedef struct {
    size_t present;            /* non-missing cells */
    size_t missing;
    double min, mean, std, max;/* over present cells; std with n-1; NaN-free:
                                  all 0 when present == 0 */
} el_column_stats;

typedef struct {
    size_t n_rows;
    double time_first, time_last;   /* table time units */
    double dt_median;               /* median step between rows */
    double dt_min, dt_max;
    double jitter;                  /* max |step - dt_median| / dt_median */
    size_t long_steps;              /* steps > 1.5 * dt_median (gaps in time) */
    size_t nonpositive_steps;       /* steps <= 0 (time repeats or goes back) */
    el_column_stats *columns;       /* n_columns, owned */
} el_scan;

/* Fills *scan (zero-initialised) from the table: time span, median step
 * (median of the sorted steps) and its jitter, per-column (time column
 * included) present/missing counts and min/mean/std/max. EL_ERR_DATA
 * when the table has fewer than 2 rows, or when the median step is not
 * positive (the time column does not increase; line of the first such
 * step). The caller frees with el_scan_free; on error nothing to free. */
el_status el_scan_table(const el_table *table, el_scan *scan, el_error *err);

/* Frees what el_scan_table allocated. NULL is a no-op. */
void el_scan_free(el_scan *scan);

#endif
