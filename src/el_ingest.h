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
 * column holds SECONDS: relative to time_origin_unix_s when the file had
 * ISO 8601 date-times, else the file's own numbers times time_scale_s (so
 * a log written in ms, min or years is in seconds from here on, and every
 * rate downstream is per second, every frequency in Hz). units[time_column]
 * is then "s"; the unit the log was written in is time_unit. */
typedef struct {
    size_t n_rows;
    size_t n_columns;          /* including the time column */
    size_t time_column;        /* index of the time column */
    char **names;              /* n_columns names, owned */
    char **units;              /* n_columns units, owned; "" when none given */
    double *values;            /* n_rows * n_columns, column-major, owned */
    long *source_line;         /* n_rows: 1-based line of each row in its file */
    size_t *missing;           /* n_columns: missing cells per column */
    int time_is_iso;           /* 1: the time column held ISO 8601 date-times */
    int64_t time_origin_unix_s;/* ISO: Unix time (s) that time value 0 stands for */
    int time_zone_minutes;     /* ISO: offset of the first timestamp (for display) */
    int time_zone_known;       /* ISO: 1 when the date-times carry a zone (Z, +01:00);
                                  0: local time of an unknown zone */
    double time_scale_s;       /* seconds per unit of the log's time numbers (1 for
                                  ISO); 0 in a table not made by ingest means 1 */
    char time_unit[16];        /* unit the log's times were written in: "s", "ms",
                                  "us", "ns", "min", "h", "d" or "year" */
    char time_unit_source[24]; /* how it was found: "header" (time [ms], t (s), t/s),
                                  "column name" (time_s, hours), "--time-unit",
                                  "assumed" (no unit anywhere: seconds), "iso8601" */
    char delimiter;            /* ',', ';' or '\t' as detected */
    char decimal;              /* '.' or ',' (decimal comma, detected or --decimal) */
    char source[256];          /* path as given, or "<stdin>"; several files:
                                  "first.csv (+N files)" */
    size_t n_sources;          /* files read as one log (1 for a single file) */
    char **sources;            /* n_sources paths (owned; NULL for a single file) */
    unsigned *source_file;     /* n_rows: index into sources (NULL for a single file) */
    el_warnings notes;         /* what ingest decided that a report must say (text
                                  columns skipped, seconds assumed, unknown zone) */
} el_table;

typedef struct {
    /* Name of the time column; NULL = the first column. */
    const char *time_column;
    /* --time-unit: the unit of the log's time numbers (el_time_unit_parse
     * names); NULL = from the header, else seconds (with a note). */
    const char *time_unit;
    /* --decimal: 0 = detect (a comma in a number of a file separated by
     * semicolons or tabs makes it a decimal comma), '.' or ','. */
    char decimal;
    /* The comma-separated columns asked for (--channels, --input); NULL =
     * none named. A column holding text (a cell that is neither a number
     * nor missing) is skipped with a note when it was not asked for: with
     * channels NULL, a column whose first value is text; with a channels
     * list, any column not in either list. An asked column with text is an
     * error at that cell. */
    const char *channels;
    const char *inputs;
} el_ingest_options;

/* Reads a unit of time: s, sec, second(s), ms, msec, millisecond(s), us,
 * \u00b5s, usec, microsecond(s), ns, min, minute(s), h, hr, hour(s), d, day(s),
 * y, yr, year(s) (Julian year, 365.25 d), any case. On success *scale_s is
 * seconds per unit and *name the canonical name ("s", "ms", "us", "ns",
 * "min", "h", "d", "year"; static) and returns 1; 0 when text is not a
 * unit of time (outputs untouched). NULL text: 0. */
int el_time_unit_parse(const char *text, double *scale_s, const char **name);

/* Reads one log from each of paths[0..n_paths) as ONE log (daily files):
 * each file is read as el_table_read does; every file must have the same
 * columns (names and units, in the same order) else EL_ERR_DATA naming
 * the file and the first column that differs; the files are put in order
 * of their first time and their rows concatenated, so a join that goes
 * back in time or leaves a gap is found by el_series_build like any other
 * (its error names the file and line). ISO times are put on the first
 * file's origin. Text columns skipped in any file are skipped in all. "-"
 * may be one of the paths. n_paths == 1 is el_table_read. Errors as
 * el_table_read; EL_ERR_USAGE for n_paths == 0. */
el_status el_table_read_files(const char *const *paths, size_t n_paths,
                              const el_ingest_options *opt, el_table *table,
                              el_error *err);

/* Seconds per unit of the log's own time numbers: time_scale_s, or 1 for
 * ISO tables and tables not made by ingest (time_scale_s 0). NULL: 1. */
double el_table_time_unit_s(const el_table *table);

/* The file row r of the table came from (table->source for one file). */
const char *el_table_row_source(const el_table *table, size_t row);

/* Reads a CSV log from path ("-" = stdin) into *table (which must be
 * zero-initialised or freed). Rules: gzip-compressed input (by its magic
 * bytes; also several gzip members one after another) is decompressed as
 * it is read (zlib); RFC 4180 quoting; first non-comment
 * row is the header, each name optionally followed by a unit written
 * "name [unit]" (a header cell that is only "[unit]" keeps it all as its
 * name); delimiter detected among comma, semicolon and tab from
 * the header row; decimal comma as opt->decimal says; lines whose first
 * non-blank character is '#' are comments and blank lines are skipped,
 * anywhere; LF, CRLF and CR-only line ends (CR-only when the first line
 * end is a lone CR); a UTF-8 byte-order mark is skipped; no line-length
 * limit. Text columns not asked for are skipped (see el_ingest_options).
 * The time unit comes from opt->time_unit, else the time column's header
 * (el_time_unit_parse on its "[unit]", a "(unit)" or "/unit" or "_unit"
 * ending of its name, or a name that is a unit such as "hours" or
 * "year"), else seconds; the time numbers are converted to seconds. Empty, NA and NaN
 * cells (any case, blanks trimmed) are missing; any other cell must be a
 * finite plain decimal number in full (no inf, hex or trailing text), or,
 * in the time column, an ISO 8601 date-time
 * YYYY-MM-DD(T| )HH:MM[:SS[.fff]][Z|+HH:MM|-HH:MM|+HHMM] (no zone: local
 * time of an unknown zone, computed as if UTC, with a note; every row must
 * then lack a zone); the first data row decides which kind the time
 * column holds. Errors
 * are EL_ERR_DATA with file, line and column (1-based character column
 * where the offending cell starts) set and a hint: empty file, header
 * only, ragged row, duplicate or empty column name, a header row made of
 * numbers only (missing header), missing time cell, mixed time kinds,
 * invalid date, binary content, unterminated quote, bad cell, a "[unit]"
 * on a numeric time column that is not a unit of time, corrupt or cut
 * gzip data.
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

/* Index of the column called name, or -1 when there is none. name may be
 * the bare name or the name with its unit as the header writes it
 * ("accel_a [m/s2]"). */
long el_table_find(const el_table *table, const char *name);

/* Parses a time as written on the command line (--from/--to): a plain
 * number in the log's own time unit (converted to seconds as the time
 * column was; for an ISO table: seconds from the first row),
 * or for an ISO table also an ISO 8601 date-time (as in the file, or a
 * date alone = midnight); a date-time without zone is read in the zone of
 * the file's first row (a zone is refused when the log's times have none).
 * EL_ERR_USAGE with a hint when it is neither (the
 * caller sets the option name). */
el_status el_table_parse_time(const el_table *table, const char *text,
                              double *time_out, el_error *err);

/* Writes the table time t (seconds) as the log writes times into buf: ISO
 * 8601 with milliseconds and the zone offset of the file's first row for
 * ISO tables ("2026-03-14T08:00:00.250+01:00"; "+00:00" for UTC; no offset
 * when the log gives no zone), else "%.9g" of t in the log's own unit
 * (t / time_scale_s; also for a non-finite t). Returns buf, always NUL-terminated. */
char *el_table_format_time(const el_table *table, double t, char *buf, size_t size);

/* Per-column summary for `eigenlog scan`. */
typedef struct {
    size_t present;            /* non-missing cells */
    size_t missing;
    double min, mean, std, max;/* over present cells; std with n-1; NaN-free:
                                  all 0 when present == 0 */
    int constant;              /* 1: no spread a fit could use (the rule of
                                  el_prep_spread: std <= 1e-12 |mean|, any scale) */
} el_column_stats;

typedef struct {
    size_t n_rows;
    double time_first, time_last;   /* seconds (table time) */
    double dt_median;               /* median step between rows, s */
    double dt_min, dt_max;
    double jitter;                  /* max |step - dt_median| / dt_median */
    size_t long_steps;              /* steps > 1.5 * dt_median (gaps in time) */
    size_t nonpositive_steps;       /* steps <= 0 (time repeats or goes back) */
    size_t backward_steps;          /* steps < 0 */
    size_t repeated_steps;          /* steps == 0 */
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
