/* cli_scan: `eigenlog scan FILE`: what is in a log before assessing it. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "el_ingest.h"
#include "el_json.h"
#include "el_report.h"
#include "el_timebase.h"

static const cli_option OPTIONS[] = {
    CLI_INPUT_OPTION_ROWS,
    {"max-gap", "N", "longest run of missing samples assess fills (default 5)"},
    {"json", "FILE", "write what scan found as JSON (- = standard output)"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

/* "%.6g unit" of a time in seconds, written in the log's own unit. */
static const char *in_log_unit(const el_table *t, double seconds, char *buf, size_t size)
{
    snprintf(buf, size, "%.6g %s", seconds / el_table_time_unit_s(t),
             t->time_is_iso ? "s" : t->time_unit);
    return buf;
}

/* The interval the sample rate is given for: assess's grid when the time
 * stamps were read through their rounding (the median step is then not
 * the interval), else the median step. */
static double rate_interval(const el_scan *s, const el_time_survey *v)
{
    return v->usable && v->stamp_step > 0.0 ? v->dt_grid : s->dt_median;
}

static void print_time(FILE *o, const el_table *t, const el_scan *s, const el_time_survey *v)
{
    char a[64], b[64], c[64];
    fprintf(o, "  time column  %s (%s", t->names[t->time_column],
           t->date_order == EL_DATE_DMY   ? "date-times, day first"
           : t->date_order == EL_DATE_MDY ? "date-times, month first"
           : t->time_is_iso               ? "ISO 8601 date-times"
           : t->time_is_clock             ? "times of day without a date"
                                          : "numbers");
    if (t->time_is_clock)
        fprintf(o, ", %zu midnight crossing%s counted)\n", t->clock_midnights,
                t->clock_midnights == 1 ? "" : "s");
    else if (t->time_is_iso)
        fprintf(o, ", %s)\n", t->time_zone_known ? "with zone" : "no zone: local time, zone unknown");
    else
        fprintf(o, " in %s, %s)\n", t->time_unit,
               strcmp(t->time_unit_source, "assumed") == 0 ? "assumed: no unit given"
                                                           : t->time_unit_source);
    fprintf(o, "  time span    %s .. %s (%s)\n",
           el_table_format_time(t, s->time_first, a, sizeof a),
           el_table_format_time(t, s->time_last, b, sizeof b),
           in_log_unit(t, s->time_last - s->time_first, c, sizeof c));
    fprintf(o, "  interval     %s (%s step; min %s, max %s)\n",
           in_log_unit(t, s->dt_median, a, sizeof a), s->dt_is_mean ? "mean" : "median",
           in_log_unit(t, s->dt_min, b, sizeof b), in_log_unit(t, s->dt_max, c, sizeof c));
    double dt_rate = rate_interval(s, v);
    fprintf(o, "  sample rate  %.6g Hz", 1.0 / dt_rate);
    if (!t->time_is_iso && strcmp(t->time_unit, "s") != 0)
        fprintf(o, " (%.6g per %s)", t->time_scale_s / dt_rate, t->time_unit);
    fprintf(o, "\n");
}

/* What assess will do with the time column: the rules of el_series_build
 * (el_timebase_survey), so the two never disagree. */
static void print_order(FILE *o, const el_table *t, const el_scan *s, const el_time_survey *v,
                        size_t max_gap)
{
    if (v->backward_steps + v->repeated_steps > 0)
        fprintf(o, "  time order   %zu step%s back, %zu repeated\n", v->backward_steps,
               v->backward_steps == 1 ? "" : "s", v->repeated_steps);
    if (!v->usable) {
        char text[1024];
        el_error_format(&v->refusal, text, sizeof text);
        fprintf(o, "  assess       refuses this log: %s\n", text);
        return;
    }
    if (v->stamp_step > 0.0) {
        char a[64], b[64];
        if (v->repeated_steps > 0)
            fprintf(o, "  stamps       written to %s, coarser than the sampling: assess reads "
                   "each row as the next sample of a uniform grid of %s (%.6g Hz)\n",
                   in_log_unit(t, v->stamp_step, a, sizeof a),
                   in_log_unit(t, v->dt_grid, b, sizeof b), 1.0 / v->dt_grid);
        else
            fprintf(o, "  stamps       written to %s: the steps vary by that rounding alone; "
                   "assess reads the rows as a uniform grid of %s (%.6g Hz), not resampled\n",
                   in_log_unit(t, v->stamp_step, a, sizeof a),
                   in_log_unit(t, v->dt_grid, b, sizeof b), 1.0 / v->dt_grid);
        fprintf(o, "  jitter       %.3g%% of the interval (largest deviation from that grid)\n",
               100.0 * v->jitter);
    } else {
        fprintf(o, "  jitter       %.3g%% of the interval (largest deviation from a whole number "
               "of intervals)%s\n", 100.0 * v->jitter, v->resample ? ": assess will resample" : "");
    }
    if (s->long_steps > 0)
        fprintf(o, "  time gaps    %zu steps longer than 1.5 intervals; longest %.0f missing "
               "sample%s%s\n", s->long_steps, v->longest_gap, v->longest_gap == 1 ? "" : "s",
               v->gap_row != 0 ? "" : " (assess fills them)");
    if (v->gap_row != 0)
        fprintf(o, "  assess       refuses a window across the gap before line %ld of %s (more "
               "than --max-gap %zu samples): choose --from/--to beside it\n",
               t->source_line[v->gap_row], el_table_row_source(t, v->gap_row), max_gap);
}

static void print_scan(FILE *o, const el_table *t, const el_scan *s, const el_time_survey *v,
                       size_t max_gap)
{
    fprintf(o, "%s\n", t->source);
    if (t->n_sources > 1)
        fprintf(o, "  files        %zu, read as one log in order of time\n", t->n_sources);
    fprintf(o, "  rows         %zu\n", t->n_rows);
    fprintf(o, "  delimiter    %s%s\n", t->delimiter == '\t' ? "tab"
                                  : t->delimiter == ';' ? "semicolon" : "comma",
           t->decimal == ',' ? ", decimal comma" : "");
    print_time(o, t, s, v);
    print_order(o, t, s, v, max_gap);
    for (size_t i = 0; i < t->notes.count; i++)
        fprintf(o, "  ! %s\n", t->notes.items[i]);
    /* 79 columns with names up to 16 characters: fits 80 unwrapped. */
    fprintf(o, "\n  %-16s %-8s %7s %10s %10s %10s %10s\n", "channel", "unit", "missing",
           "min", "mean", "std", "max");
    for (size_t c = 0; c < t->n_columns; c++) {
        if (c == t->time_column)
            continue;
        const el_column_stats *cs = &s->columns[c];
        if (cs->present == 0) {
            fprintf(o, "  %-16s %-8s %7zu %10s %10s %10s %10s\n", t->names[c], t->units[c],
                   cs->missing, "-", "-", "-", "-");
            continue;
        }
        fprintf(o, "  %-16s %-8s %7zu %10.4g %10.4g %10.4g %10.4g%s\n", t->names[c],
               t->units[c], cs->missing, cs->min, cs->mean, cs->std, cs->max,
               cs->constant ? "  constant" : "");
    }
}

/* The text report, wrapped to the terminal (cli_print_text). */
static void print_wrapped(const el_table *t, const el_scan *s, const el_time_survey *v,
                          size_t max_gap)
{
    char *text = NULL;
    size_t size = 0;
    FILE *o = open_memstream(&text, &size);
    if (o == NULL) {
        print_scan(stdout, t, s, v, max_gap);
        return;
    }
    print_scan(o, t, s, v, max_gap);
    if (fclose(o) == 0 && text != NULL)
        cli_print_text(text);
    free(text);
}

/* The data channels' names (every column but time), pointing into t. */
static char **channel_names(const el_table *t, size_t *n)
{
    char **names = malloc((t->n_columns + 1) * sizeof *names);
    *n = 0;
    for (size_t c = 0; names != NULL && c < t->n_columns; c++)
        if (c != t->time_column)
            names[(*n)++] = t->names[c];
    return names;
}

static void json_scan_input(el_json *j, const el_table *t, const el_assess_options *files,
                            char **names, size_t n_names)
{
    el_json_object_begin(j, "input");
    el_json_string(j, "file", t->source);
    el_envelope_input(j, files->path, files->paths, files->n_paths, names, n_names);
    el_json_array_begin(j, "channels");
    for (size_t i = 0; i < n_names; i++)
        el_json_string(j, NULL, names[i]);
    el_json_array_end(j);
    el_json_string(j, "time_column", t->names[t->time_column]);
    el_json_string(j, "time_format", t->time_is_iso ? "iso8601" : "number");
    el_json_string(j, "time_unit", t->time_is_iso ? "s" : t->time_unit);
    el_json_string(j, "time_unit_source", t->time_unit_source);
    if (t->time_is_iso)
        el_json_bool(j, "time_zone_known", t->time_zone_known);
    if (t->date_order != 0)
        el_json_string(j, "date_order", t->date_order == EL_DATE_DMY ? "dmy" : "mdy");
    if (t->time_is_clock) {
        el_json_bool(j, "time_of_day", 1);
        el_json_int(j, "midnight_crossings", (long long)t->clock_midnights);
    }
    el_json_object_end(j);
}

static void json_scan_time(el_json *j, const el_table *t, const el_scan *s,
                           const el_time_survey *v, size_t max_gap)
{
    double origin = t->time_is_iso     ? (double)t->time_origin_unix_s
                    : t->time_is_clock ? (double)t->clock_origin_s : 0.0;
    char a[64], b[64];
    el_json_object_begin(j, "time");
    el_json_pair(j, "span", origin + s->time_first, origin + s->time_last);
    el_json_array_begin(j, "span_text");
    el_json_string(j, NULL, el_table_format_time(t, s->time_first, a, sizeof a));
    el_json_string(j, NULL, el_table_format_time(t, s->time_last, b, sizeof b));
    el_json_array_end(j);
    el_json_number(j, "dt_median", s->dt_median);
    el_json_number(j, "dt_min", s->dt_min);
    el_json_number(j, "dt_max", s->dt_max);
    el_json_number(j, "sample_rate_hz", 1.0 / rate_interval(s, v));
    el_json_int(j, "backward_steps", (long long)v->backward_steps);
    el_json_int(j, "repeated_steps", (long long)v->repeated_steps);
    el_json_int(j, "long_steps", (long long)s->long_steps);
    el_json_object_end(j);
    el_json_object_begin(j, "assess_would");
    el_json_bool(j, "usable", v->usable);
    char text[1024];
    if (!v->usable)
        el_error_format(&v->refusal, text, sizeof text);
    el_json_string(j, "refusal", v->usable ? NULL : text);
    el_json_number(j, "jitter", v->usable ? v->jitter : NAN);
    el_json_bool(j, "resample", v->usable && v->resample);
    el_json_number(j, "dt", v->usable ? v->dt_grid : NAN);
    el_json_number(j, "stamp_step", v->usable && v->stamp_step > 0.0 ? v->stamp_step : NAN);
    el_json_number(j, "longest_gap_samples", v->usable ? v->longest_gap : NAN);
    el_json_int(j, "max_gap", (long long)max_gap);
    if (v->usable && v->gap_row != 0)
        el_json_int(j, "refuses_gap_before_line", t->source_line[v->gap_row]);
    else
        el_json_null(j, "refuses_gap_before_line");
    el_json_object_end(j);
}

static void json_scan_channels(el_json *j, const el_table *t, const el_scan *s)
{
    el_json_array_begin(j, "columns");
    for (size_t c = 0; c < t->n_columns; c++) {
        if (c == t->time_column)
            continue;
        const el_column_stats *cs = &s->columns[c];
        int any = cs->present > 0;
        el_json_object_begin(j, NULL);
        el_json_string(j, "name", t->names[c]);
        el_json_string(j, "unit", t->units[c]);
        el_json_int(j, "present", (long long)cs->present);
        el_json_int(j, "missing", (long long)cs->missing);
        el_json_number(j, "min", any ? cs->min : NAN);
        el_json_number(j, "mean", any ? cs->mean : NAN);
        el_json_number(j, "std", any ? cs->std : NAN);
        el_json_number(j, "max", any ? cs->max : NAN);
        el_json_bool(j, "constant", any && cs->constant);
        el_json_object_end(j);
    }
    el_json_array_end(j);
}

/* scan's JSON document (docs/json.md): the envelope, then rows, format,
 * time, what assess would do, and one object per column. */
static el_status scan_json(const el_table *t, const el_scan *s, const el_time_survey *v,
                           size_t max_gap, const el_assess_options *files, el_buf *out)
{
    size_t n_names = 0;
    char **names = channel_names(t, &n_names);
    if (names == NULL)
        return EL_ERR_NOMEM;
    el_json j;
    el_json_init(&j, out);
    el_json_object_begin(&j, NULL);
    el_envelope_head(&j, "scan");
    json_scan_input(&j, t, files, names, n_names);
    const el_warnings *lists[1] = {&t->notes};
    el_envelope_warnings(&j, "warnings", lists, 1);
    el_envelope_warnings(&j, "warning_details", lists, 1);
    el_json_int(&j, "rows", (long long)t->n_rows);
    el_json_int(&j, "files_read", (long long)t->n_sources);
    el_json_string(&j, "delimiter", t->delimiter == '\t' ? "tab"
                                    : t->delimiter == ';' ? "semicolon" : "comma");
    el_json_string(&j, "decimal", t->decimal == ',' ? "comma" : "point");
    json_scan_time(&j, t, s, v, max_gap);
    json_scan_channels(&j, t, s);
    el_json_object_end(&j);
    free(names);
    return el_json_finish(&j);
}

int cli_scan(int argc, char **argv)
{
    cli_args a;
    el_error err;
    el_error_clear(&err);
    el_status st = cli_parse(argc, argv, OPTIONS, N_OPTIONS, &a, &err);
    if (st == EL_OK && a.help) {
        cli_print_help("eigenlog scan FILE... [options]",
                       "Lists a log's channels and units, rows, time span and unit, sample\n"
                       "interval and rate, its jitter, steps back or repeated in time, gaps,\n"
                       "missing cells, and min/mean/std/max per channel; and whether assess\n"
                       "will resample or refuse the log. Several files are read as one log.",
                       OPTIONS, N_OPTIONS);
        return 0;
    }
    el_assess_options files;
    memset(&files, 0, sizeof files);
    el_ingest_options in = {0};
    el_timebase_options tb;
    el_timebase_defaults(&tb);
    if (st == EL_OK)
        st = cli_log_files(&a, "eigenlog scan FILE... [options]", &files, &err);
    if (st == EL_OK)
        st = cli_input_options(&a, OPTIONS, N_OPTIONS, &in.time_unit, &in.decimal,
                               &in.date_order, &err);
    if (st == EL_OK) {
        const cli_output_path outs[1] = {{"json", cli_value(&a, OPTIONS, N_OPTIONS, "json")}};
        st = cli_check_output_paths(files.paths, files.n_paths ? files.n_paths : 1, outs, 1,
                                    &err);
    }
    const char *v = cli_value(&a, OPTIONS, N_OPTIONS, "max-gap");
    if (st == EL_OK && v != NULL)
        st = cli_size("max-gap", v, 0, 1000000, &tb.max_gap, &err);
    el_table table;
    el_scan scan;
    el_time_survey survey;
    memset(&table, 0, sizeof table);
    memset(&scan, 0, sizeof scan);
    const char *json = cli_value(&a, OPTIONS, N_OPTIONS, "json");
    cli_progress *progress = cli_progress_start(st == EL_OK && cli_progress_wanted(0) &&
                                                !cli_is_stdout(json));
    if (st == EL_OK) {
        in.time_column = cli_value(&a, OPTIONS, N_OPTIONS, "time");
        cli_progress_stage(progress, "reading the log", 0, 1);
        st = el_table_read_files(files.paths, files.n_paths, &in, &table, &err);
        cli_progress_stage(progress, "reading the log", 1, 1);
    }
    cli_progress_stage(progress, "scanning", 0, 1);
    if (st == EL_OK)
        st = el_scan_table(&table, &scan, &err);
    if (st == EL_OK)
        st = el_timebase_survey_step(&table, &tb, scan.dt_step, &survey, &err);
    cli_progress_stage(progress, "scanning", 1, 1);
    cli_progress_stop(progress);
    if (st == EL_OK && json != NULL) {
        cli_output out[1] = {{json, {0}}};
        el_status built = scan_json(&table, &scan, &survey, tb.max_gap, &files, &out[0].text);
        if (built != EL_OK)
            el_error_set(&err, built, "could not build the JSON document");
        st = cli_write_outputs(out, 1, built, &err);
    }
    if (st == EL_OK && !cli_is_stdout(json))
        print_wrapped(&table, &scan, &survey, tb.max_gap);
    else if (st != EL_OK)
        cli_print_error(&err);
    el_scan_free(&scan);
    el_table_free(&table);
    return el_exit_code(st);
}
