/* el_table: a log in memory (float64 columns with names, units and a
 * missing-cell mask) once el_ingest has read it: joining several files,
 * accessors, times as the log writes them, and the per-column scan. */
#ifndef EL_TABLE_H
#define EL_TABLE_H

#include <stddef.h>
#include <stdint.h>

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
    int time_is_iso;           /* 1: the time column held date-times (ISO 8601, or
                                  dates with the year last: date_order) */
    int time_is_clock;         /* 1: times of day without a date (08:30:00): the time
                                  column holds seconds after clock_origin_s, a
                                  midnight crossing counted wherever the clock goes
                                  back by more than 12 h (time_is_iso 0, unit "s",
                                  time_unit_source "time of day") */
    long clock_origin_s;       /* clock: the first row's whole seconds after midnight */
    size_t clock_midnights;    /* clock: the midnight crossings counted so */
    char date_order;           /* 0: ISO 8601 or numbers; EL_DATE_DMY / EL_DATE_MDY:
                                  dates with the year last, read day / month first */
    int64_t time_origin_unix_s;/* ISO: Unix time (s) that time value 0 stands for */
    int time_zone_minutes;     /* ISO: offset of the first timestamp (for display) */
    int time_zone_known;       /* ISO: 1 when the date-times carry a zone (Z, +01:00);
                                  0: local time of an unknown zone */
    double time_scale_s;       /* seconds per unit of the log's time numbers (1 for
                                  ISO); 0 in a table not made by ingest means 1 */
    char time_unit[16];        /* unit the log's times were written in: "s", "ms",
                                  "us", "ns", "min", "h", "d" or "year" */
    char time_unit_source[24]; /* how it was found: "header" (time [ms], t (s), t/s),
                                  "units row" (a row of units under the header),
                                  "column name" (time_s, hours), "--time-unit",
                                  "assumed" (no unit anywhere: seconds), "iso8601" */
    long units_line;           /* line of a row of units under the header (its units
                                  are in units[]), 0 when the file has none */
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

/* Seconds per unit of the log's own time numbers: time_scale_s, or 1 for
 * ISO tables and tables not made by ingest (time_scale_s 0). NULL: 1. */
double el_table_time_unit_s(const el_table *table);

/* The file row r of the table came from (table->source for one file). */
const char *el_table_row_source(const el_table *table, size_t row);

/* Frees everything the table owns and zeroes it. NULL is a no-op. */
void el_table_free(el_table *table);

/* Frees the table's rows (values, source_line, source_file; set to NULL)
 * and keeps what describes the log: n_rows, names, units, missing counts,
 * the time's kind, origin and unit, sources and notes. For a caller done
 * with the rows once its series is built (el_assess_run): the reports
 * still name the log, format its times and count its rows, and the rows'
 * memory is not held through the fit. Every accessor of rows (el_table_get,
 * el_table_find_time, el_series_build, el_scan_table) must not be called
 * afterwards. NULL is a no-op. */
void el_table_release_rows(el_table *table);

/* Index of the column called name, or -1 when there is none. name may be
 * the bare name or the name with its unit as the header writes it
 * ("accel_a [m/s2]"). */
long el_table_find(const el_table *table, const char *name);

/* The table's column names for a hint, ", "-separated into out (size
 * bytes, NUL-terminated), each in double quotes when quoted, the time
 * column left out unless with_time; a list that does not fit ends in
 * "...". */
void el_table_list_columns(const el_table *table, int with_time, int quoted, char *out,
                           size_t size);

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

/* A table time as the reports write it: el_table_format_time's text, and
 * for a log of time numbers a blank and the log's time unit ("12.5 min";
 * "s" when none). Returns buf (size > 0, always NUL-terminated). */
const char *el_table_format_when(const el_table *table, double t, char *buf, size_t size);

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
    double dt_median;               /* median step between rows, s; when more than half
                                       the steps repeat a time (stamps coarser than the
                                       sampling) and none goes back: the mean step, and
                                       dt_is_mean is 1 */
    int dt_is_mean;
    double dt_step;                 /* the same median as el_series_build computes it
                                       (an even count: lower + (upper - lower) / 2, which
                                       may differ from dt_median in the last bit): for
                                       el_timebase_survey_step */
    double dt_min, dt_max;
    double jitter;                  /* max |step - dt_median| / dt_median */
    size_t long_steps;              /* steps > 1.5 * dt_median (gaps in time) */
    size_t nonpositive_steps;       /* steps <= 0 (time repeats or goes back) */
    size_t backward_steps;          /* steps < 0 */
    size_t repeated_steps;          /* steps == 0 */
    el_column_stats *columns;       /* n_columns, owned */
} el_scan;

/* Fills *scan (zero-initialised) from the table: time span, median step
 * (median of the sorted steps; also as dt_step) and its jitter, per-column (time column
 * included) present/missing counts and min/mean/std/max. EL_ERR_DATA
 * when the table has fewer than 2 rows, or when the median step is not
 * positive (the time column does not increase; line of the first such
 * step). The caller frees with el_scan_free; on error nothing to free. */
el_status el_scan_table(const el_table *table, el_scan *scan, el_error *err);

/* el_scan_table with the AVX2 loops (on CPUs that have them) allowed
 * (allow_avx2 = 1, what el_scan_table does) or not (0: the plain loop
 * over the steps, SSE2 column sums): the same scan bit for bit (tests
 * compare the two). */
el_status el_scan_table_using(const el_table *table, int allow_avx2, el_scan *scan,
                              el_error *err);

/* The statistics of one column v[0..n) as el_scan_table gives them
 * (present and missing cells, mean, min, max, sample std, constant):
 * sums in four lanes (cell r into lane r % 4, the last n % 4 cells into
 * lane 0, then (l0 + l1) + (l2 + l3)), fixed whatever the CPU. allow_avx2:
 * 1 lets the loops take four lanes to a register where the CPU has AVX2,
 * 0 keeps two (SSE2): the same numbers bit for bit (tests compare). */
void el_scan_column_stats(const double *v, size_t n, int allow_avx2, el_column_stats *s);

/* Frees what el_scan_table allocated. NULL is a no-op. */
void el_scan_free(el_scan *scan);

/* The steps of reading (el_ingest), kept here because they work on whole
 * tables. */

/* Finishes a table read with every column kept and times as written:
 * removes the columns with text_line[c] != 0 (text columns nobody asked
 * for; text_line holds the line of their first text cell) with one note
 * naming up to five, converts the time column to seconds (time_scale_s;
 * its unit becomes "s"), and adds the notes about an assumed unit, an
 * unknown zone and day/year time units. EL_ERR_DATA when only the time
 * column would be left; EL_ERR_NOMEM. On error the caller frees t. */
el_status el_table_finish(el_table *t, const long *text_line, el_error *err);

/* EL_OK when the table other has the same columns (names and units, in
 * order), time column and kind of time (numbers, ISO with or without
 * zone) as first; else EL_ERR_DATA naming both sources, located at
 * other's header line (header_line) and the first column that differs. */
el_status el_table_check_same(const el_table *first, const el_table *other,
                              long header_line, el_error *err);

/* Joins n tables read from paths[0..n) (checked with el_table_check_same)
 * into *out, in order of their first time (stable): rows concatenated,
 * ISO times put on the origin of the earliest part, names and units moved
 * out of that part, sources and per-row source files recorded, and
 * text_line[c] (n_columns, zeroed by the caller) set from the parts'
 * text_lines[i][c] (the first non-zero). The parts stay the caller's to
 * free. EL_ERR_NOMEM (then *out may hold some allocations: el_table_free). */
el_status el_table_join(el_table *parts, long *const *text_lines, size_t n,
                        const char *const *paths, el_table *out, long *text_line,
                        el_error *err);

#endif
