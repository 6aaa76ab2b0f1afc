/* el_ingest: streaming CSV reader that turns a logger export into a table of
 * float64 columns with names, units and a missing-cell mask. The table
 * itself and what works on it (find, times, scan) are in el_table.h; the
 * units of time in el_timefmt.h (both included here). */
#ifndef EL_INGEST_H
#define EL_INGEST_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "el_error.h"
#include "el_table.h"
#include "el_timefmt.h"

typedef struct {
    /* Name of the time column; NULL = the first column. */
    const char *time_column;
    /* --time-unit: the unit of the log's time numbers (el_time_unit_parse
     * names); NULL = from the header, else seconds (with a note). */
    const char *time_unit;
    /* --decimal: 0 = detect (a comma in a number of a file separated by
     * semicolons or tabs makes it a decimal comma), '.' or ','. */
    char decimal;
    /* --date-order: how a date with the year last (05.12.2026, 12/05/2026)
     * is read: EL_DATE_DMY (day first), EL_DATE_MDY (month first), or 0 =
     * as the first date that settles it says (a dot, or a field above 12);
     * a date that cannot settle it before one did is an error. */
    char date_order;
    /* The comma-separated columns asked for (--channels, --input); NULL =
     * none named. A column holding text (a cell that is neither a number
     * nor missing) is skipped with a note when it was not asked for: with
     * channels NULL, a column whose first value is text; with a channels
     * list, any column not in either list. An asked column with text is an
     * error at that cell. */
    const char *channels;
    const char *inputs;
    /* 1: keep rows that repeat the row before exactly (el_dedup); 0 (the
     * default): drop them with a note, as el_table_drop_repeats says.
     * el_follow sets it and judges each row against the last one kept. */
    int keep_repeats;
} el_ingest_options;

/* Reads one log from each of paths[0..n_paths) as ONE log (daily files):
 * each file is read as el_table_read does; every file must have the same
 * columns (names and units, in the same order) else EL_ERR_DATA naming
 * the file and the first column that differs; the files are put in order
 * of their first time and their rows concatenated, so a join that goes
 * back in time or leaves a gap is found by el_series_build like any other
 * (its error names the file and line). ISO times are put on the first
 * file's origin. Times of day without a date (el_table.h, time_is_clock)
 * carry nothing to order by: the files are taken in the order given, each
 * after the one before across midnight (el_clock_shift). Text columns
 * skipped in any file are skipped in all. "-"
 * may be one of the paths. n_paths == 1 is el_table_read. Errors as
 * el_table_read; EL_ERR_USAGE for n_paths == 0. */
el_status el_table_read_files(const char *const *paths, size_t n_paths,
                              const el_ingest_options *opt, el_table *table,
                              el_error *err);

/* Reads a CSV log from path ("-" = stdin) into *table (which must be
 * zero-initialised or freed). A regular uncompressed file is mapped into
 * memory and, when large, its rows are read by one thread per core (see
 * el_table_read_threads; the table does not depend on it); anything else
 * is streamed. Rules: gzip-compressed input (by its magic
 * bytes; also several gzip members one after another) is decompressed as
 * it is read (zlib); RFC 4180 quoting; first non-comment
 * row is the header, each name optionally followed by a unit written
 * "name [unit]" (a header cell that is only "[unit]" keeps it all as its
 * name); a row of units right under the header (its time cell names a
 * unit of time, no cell is a number: el_ingest_units_row) gives the
 * columns their units (one the header also gives must be the same, else
 * EL_ERR_DATA at that cell) and is no data row; delimiter detected among
 * comma, semicolon and tab from the header row; decimal comma as opt->decimal says; lines whose first
 * non-blank character is '#' are comments and blank lines are skipped,
 * anywhere; LF, CRLF and CR-only line ends (CR-only when the first line
 * end is a lone CR); a UTF-8 byte-order mark is skipped; no line-length
 * limit. Text columns not asked for are skipped (see el_ingest_options).
 * The time unit comes from opt->time_unit, else the time column's header
 * or units row (el_time_unit_parse on its "[unit]", a "(unit)" or "/unit" or "_unit"
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

/* As el_table_read with a thread count for the rows of a large regular
 * file (mapped; at least 1 MiB per thread): 0 = one per online core (what
 * el_table_read and el_table_read_stream use), 1 = none. The table is the
 * same whatever the count: a part read by a thread is taken only where
 * the sequential reader stands at its first byte with the same state, so
 * its rows are the rows the sequential reader would have read. */
el_status el_table_read_threads(const char *path, const el_ingest_options *opt,
                                size_t threads, el_table *table, el_error *err);

/* 1 when text (n bytes: a header line, then one more line) has under its
 * header a row of units, as el_table_read takes one: the time cell names
 * a unit of time and no cell holds a number; 0 otherwise, also when the
 * header itself cannot be read (the read of the log then says why). For
 * a reader that gets a log line by line (track --follow) and must keep
 * that row with the header. opt as for el_table_read (may be NULL). */
int el_ingest_units_row(const char *text, size_t n, const el_ingest_options *opt);

/* As el_table_read, from an open stream; name is used in messages. The
 * stream is read to its end (a regular file at offset 0 is mapped, and
 * the stream then left at the end of what was read) and not closed. */
el_status el_table_read_stream(FILE *stream, const char *name,
                               const el_ingest_options *opt, el_table *table,
                               el_error *err);

#endif
