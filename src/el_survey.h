/* el_survey: the library part of `eigenlog survey` (many logs at once):
 * listing the logs of folders and manifests, content hashing, the per-log
 * record a run keeps for resuming, the table row built from a log's assess
 * JSON, the table's CSV (written and read back, for merging shards) and
 * the JSON-lines file. No processes and no printing here: cli_survey.c
 * runs the logs. */
#ifndef EL_SURVEY_H
#define EL_SURVEY_H

#include <stddef.h>
#include <stdint.h>

#include "el_error.h"
#include "el_io.h"

/* FNV-1a, 64-bit (Fowler, Noll, Vo; published parameters: offset basis
 * 14695981039346656037, prime 1099511628211). */
#define EL_FNV1A64_OFFSET 0xcbf29ce484222325ULL

/* Continues an FNV-1a 64 hash h (start with EL_FNV1A64_OFFSET) over
 * data[0..n). Pure; cannot fail. */
uint64_t el_fnv1a64(uint64_t h, const void *data, size_t n);

/* FNV-1a 64 of the whole content of file path (read in blocks; no
 * allocation). EL_ERR_IO with the file named when it cannot be read. */
el_status el_survey_hash_file(const char *path, uint64_t *hash, el_error *err);

/* One log of a survey: its path as listed (the table's `file`) and the
 * per-log options a manifest gave it, each one argument ("--name=value",
 * or "--name" for a flag), applied after and instead of the survey's own
 * option of the same name. Owned by the list. */
typedef struct {
    char *path;
    char **args;
    size_t n_args;
} el_survey_log;

/* The logs of a survey in their order: inputs in the order given, a
 * folder's logs sorted by path (byte order), a manifest's in its order;
 * a path listed twice is kept once (first place). Zero-initialise; set
 * skip_folder to the canonical path (realpath) of the survey's own output
 * folder, so a folder search never takes the survey's tables for logs. */
typedef struct {
    el_survey_log *logs;
    size_t count;
    size_t capacity;
    const char *skip_folder;    /* borrowed; NULL: none */
} el_survey_list;

/* 1 when path names a log by its name: ends in ".csv" or ".csv.gz". */
int el_survey_is_log_name(const char *path);

/* 1 when path ends in ".gz" (the log is read through gzip -dc). */
int el_survey_is_gzip_name(const char *path);

/* Adds one INPUT of the command line to list: a folder (recursing; every
 * file named *.csv or *.csv.gz, hidden entries skipped), a file named as
 * a log, or any other file as a manifest (el_survey_parse_manifest); the
 * folder list->skip_folder and everything under it is left out.
 * EL_ERR_IO naming the input when it does not exist or cannot be read;
 * EL_ERR_USAGE (file and line set) for a bad manifest; EL_ERR_NOMEM. */
el_status el_survey_list_add_input(el_survey_list *list, const char *input, el_error *err);

/* Parses manifest text (from file name, used for messages and to resolve
 * relative paths: a relative log path is relative to the manifest's
 * folder). One log per line: PATH [--option VALUE | --option=VALUE ...];
 * blank lines and lines starting with # are skipped; a token may be
 * "double-quoted" to hold spaces. Options allowed per log: time, channels,
 * from, to, max-gap, detrend, band, input, lags, rank, method, depth.
 * EL_ERR_USAGE with file, line, column and a hint for an unknown option,
 * a missing value or an unclosed quote; EL_ERR_NOMEM. */
el_status el_survey_parse_manifest(el_survey_list *list, const char *name,
                                   const char *text, el_error *err);

/* Appends one log (path and per-log args copied) unless its path is
 * already listed. EL_OK or EL_ERR_NOMEM. */
el_status el_survey_list_append(el_survey_list *list, const char *path,
                                char *const *args, size_t n_args, el_error *err);

/* Frees every log and empties the list. NULL is a no-op. */
void el_survey_list_free(el_survey_list *list);

/* Shard k (1-based) of n_shards over count logs: the contiguous range
 * [*begin, *end) of the list, so the shards in order are the list in
 * order and their sizes differ by at most one. */
void el_survey_shard_range(size_t count, size_t k, size_t n_shards, size_t *begin,
                           size_t *end);

/* The record a survey keeps per log in DIR/cache/ to resume: the log's
 * path, size, modification time and content hash, the hash of the
 * options it was assessed with, whether its HTML report was written, the
 * assess exit status, the first line of its error (empty when none) and
 * the compact assess JSON (empty when it failed). Strings are owned. */
typedef struct {
    char *path;
    long long size;
    long long mtime_ns;
    uint64_t content_hash;
    uint64_t options_hash;
    int has_report;
    int exit_code;
    char *error;
    char *json;
} el_survey_record;

/* Formats a record as text (one "key value" per line; error and json hold
 * no newline). EL_OK or EL_ERR_NOMEM. */
el_status el_survey_record_format(const el_survey_record *r, el_buf *out);

/* Parses text made by el_survey_record_format into *r (fills every field,
 * allocating the strings; free with el_survey_record_free). EL_ERR_DATA
 * when the text is not a complete record (then *r holds nothing to free). */
el_status el_survey_record_parse(const char *text, el_survey_record *r, el_error *err);

/* Frees the strings of r and zeroes it. NULL is a no-op. */
void el_survey_record_free(el_survey_record *r);

/* Copies JSON text to out without the whitespace outside strings (one
 * line, same values and same number texts). EL_ERR_DATA when a string is
 * not closed; EL_ERR_NOMEM. */
el_status el_survey_json_compact(const char *text, size_t length, el_buf *out,
                                 el_error *err);

/* The columns of survey.csv in order (docs/cli.md documents each). */
typedef enum {
    EL_SC_FILE, EL_SC_STATUS, EL_SC_EXIT_CODE, EL_SC_ERROR, EL_SC_ROWS_USED,
    EL_SC_VERDICT, EL_SC_AMBIGUOUS, EL_SC_TYPE,
    EL_SC_FREQUENCY, EL_SC_FREQUENCY_LO, EL_SC_FREQUENCY_HI,
    EL_SC_DAMPING, EL_SC_DAMPING_LO, EL_SC_DAMPING_HI,
    EL_SC_DECAY, EL_SC_DECAY_LO, EL_SC_DECAY_HI,
    EL_SC_P_STABLE, EL_SC_WARNINGS, EL_SC_ESTIMATOR,
    EL_SC_COUNT
} el_survey_column;

/* The header name of column c. Never NULL. */
const char *el_survey_column_name(el_survey_column c);

/* One row of the table: every column as text ("" = no value; numbers are
 * the JSON's own number texts, so no rounding happens between a log's
 * JSON and its row). Owned strings. */
typedef struct {
    char *field[EL_SC_COUNT];
} el_survey_row;

/* Builds the row of one log from its record: status "ok" with the values
 * of the compact assess JSON when exit_code is 0, else "error" with the
 * exit code and error line. The least damped mode is the first of
 * "modes" (the report sorts them least damped first); warnings counts
 * input.warnings and verdict.warnings. EL_ERR_DATA when the JSON cannot
 * be read; EL_ERR_NOMEM. */
el_status el_survey_row_build(const el_survey_record *rec, el_survey_row *row,
                              el_error *err);

/* The survey.jsonl line of a record (without newline): its compact assess
 * JSON, or for a failed log {"survey_error":{"file":..,"exit_code":..,
 * "message":..}} so line k is always the log of row k. EL_ERR_NOMEM. */
el_status el_survey_jsonl_line(const el_survey_record *rec, el_buf *out);

/* Frees the strings of row and zeroes it. */
void el_survey_row_free(el_survey_row *row);

/* The rows of a table. Zero-initialise. */
typedef struct {
    el_survey_row *rows;
    size_t count;
    size_t capacity;
} el_survey_table;

/* Appends row to t, taking ownership of its strings (row is zeroed).
 * EL_OK or EL_ERR_NOMEM (then row is left as it was). */
el_status el_survey_table_push(el_survey_table *t, el_survey_row *row);

/* Frees every row. NULL is a no-op. */
void el_survey_table_free(el_survey_table *t);

/* Writes t as CSV (RFC 4180: header line, a field quoted when it holds a
 * comma, quote or line break, quotes doubled, "\n" line ends). EL_OK or
 * EL_ERR_NOMEM. */
el_status el_survey_csv(const el_survey_table *t, el_buf *out);

/* Reads CSV text written by el_survey_csv (name for messages) and appends
 * its rows to t; reading what el_survey_csv wrote and writing it again
 * gives the same bytes. EL_ERR_DATA (file and line set) when the header
 * differs from this version's columns or a row has the wrong number of
 * fields; EL_ERR_NOMEM. */
el_status el_survey_csv_read(const char *name, const char *text, el_survey_table *t,
                             el_error *err);

/* The number in column c of row (NaN when empty or not a number). */
double el_survey_row_number(const el_survey_row *row, el_survey_column c);

/* Whether row matches --fail-on: fail_on 1 "unstable" (verdict unstable),
 * 2 "ambiguous" (ambiguous or not stable), 0 never. A failed log never
 * matches (it is counted as failed). Same rule as `assess --fail-on`. */
int el_survey_row_fails(const el_survey_row *row, int fail_on);

/* A file name for the HTML report of log path: its base name without
 * .csv/.csv.gz (characters other than letters, digits, '-', '_' and '.'
 * replaced by '_') followed by '-' and 8 hex digits of the path's FNV-1a
 * hash, so two logs of the same name in different folders do not clash.
 * Writes into out (size bytes, at least 32). */
void el_survey_report_name(const char *path, char *out, size_t size);

#endif
