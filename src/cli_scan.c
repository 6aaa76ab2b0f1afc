/* cli_scan: `eigenlog scan FILE`: what is in a log before assessing it. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "el_ingest.h"
#include "el_timebase.h"

static const cli_option OPTIONS[] = {
    CLI_INPUT_OPTION_ROWS,
    {"max-gap", "N", "longest run of missing samples assess fills (default 5)"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

/* "%.6g unit" of a time in seconds, written in the log's own unit. */
static const char *in_log_unit(const el_table *t, double seconds, char *buf, size_t size)
{
    snprintf(buf, size, "%.6g %s", seconds / el_table_time_unit_s(t),
             t->time_is_iso ? "s" : t->time_unit);
    return buf;
}

static void print_time(const el_table *t, const el_scan *s)
{
    char a[64], b[64], c[64];
    printf("  time column  %s (%s", t->names[t->time_column],
           t->time_is_iso ? "ISO 8601 date-times" : "numbers");
    if (t->time_is_iso)
        printf(", %s)\n", t->time_zone_known ? "with zone" : "no zone: local time, zone unknown");
    else
        printf(" in %s, %s)\n", t->time_unit,
               strcmp(t->time_unit_source, "assumed") == 0 ? "assumed: no unit given"
                                                           : t->time_unit_source);
    printf("  time span    %s .. %s (%s)\n",
           el_table_format_time(t, s->time_first, a, sizeof a),
           el_table_format_time(t, s->time_last, b, sizeof b),
           in_log_unit(t, s->time_last - s->time_first, c, sizeof c));
    printf("  interval     %s (median step; min %s, max %s)\n",
           in_log_unit(t, s->dt_median, a, sizeof a), in_log_unit(t, s->dt_min, b, sizeof b),
           in_log_unit(t, s->dt_max, c, sizeof c));
    printf("  sample rate  %.6g Hz", 1.0 / s->dt_median);
    if (!t->time_is_iso && strcmp(t->time_unit, "s") != 0)
        printf(" (%.6g per %s)", t->time_scale_s / s->dt_median, t->time_unit);
    printf("\n");
}

/* What assess will do with the time column: the rules of el_series_build
 * (el_timebase_survey), so the two never disagree. */
static void print_order(const el_table *t, const el_scan *s, const el_time_survey *v,
                        size_t max_gap)
{
    if (v->backward_steps + v->repeated_steps > 0)
        printf("  time order   %zu step%s back, %zu repeated\n", v->backward_steps,
               v->backward_steps == 1 ? "" : "s", v->repeated_steps);
    if (!v->usable) {
        char text[1024];
        el_error_format(&v->refusal, text, sizeof text);
        printf("  assess       refuses this log: %s\n", text);
        return;
    }
    printf("  jitter       %.3g%% of the interval (largest deviation from a whole number of "
           "intervals)%s\n", 100.0 * v->jitter, v->resample ? ": assess will resample" : "");
    if (s->long_steps > 0)
        printf("  time gaps    %zu steps longer than 1.5 intervals; longest %.0f missing "
               "sample%s%s\n", s->long_steps, v->longest_gap, v->longest_gap == 1 ? "" : "s",
               v->gap_row != 0 ? "" : " (assess fills them)");
    if (v->gap_row != 0)
        printf("  assess       refuses a window across the gap before line %ld of %s (more "
               "than --max-gap %zu samples): choose --from/--to beside it\n",
               t->source_line[v->gap_row], el_table_row_source(t, v->gap_row), max_gap);
}

static void print_scan(const el_table *t, const el_scan *s, const el_time_survey *v,
                       size_t max_gap)
{
    printf("%s\n", t->source);
    if (t->n_sources > 1)
        printf("  files        %zu, read as one log in order of time\n", t->n_sources);
    printf("  rows         %zu\n", t->n_rows);
    printf("  delimiter    %s%s\n", t->delimiter == '\t' ? "tab"
                                  : t->delimiter == ';' ? "semicolon" : "comma",
           t->decimal == ',' ? ", decimal comma" : "");
    print_time(t, s);
    print_order(t, s, v, max_gap);
    for (size_t i = 0; i < t->notes.count; i++)
        printf("  ! %s\n", t->notes.items[i]);
    printf("\n  %-24s %-10s %8s %12s %12s %12s %12s\n", "channel", "unit", "missing",
           "min", "mean", "std", "max");
    for (size_t c = 0; c < t->n_columns; c++) {
        if (c == t->time_column)
            continue;
        const el_column_stats *cs = &s->columns[c];
        if (cs->present == 0) {
            printf("  %-24s %-10s %8zu %12s %12s %12s %12s\n", t->names[c], t->units[c],
                   cs->missing, "-", "-", "-", "-");
            continue;
        }
        printf("  %-24s %-10s %8zu %12.6g %12.6g %12.6g %12.6g%s\n", t->names[c],
               t->units[c], cs->missing, cs->min, cs->mean, cs->std, cs->max,
               cs->constant ? "  constant" : "");
    }
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
        st = cli_input_options(&a, OPTIONS, N_OPTIONS, &in.time_unit, &in.decimal, &err);
    const char *v = cli_value(&a, OPTIONS, N_OPTIONS, "max-gap");
    if (st == EL_OK && v != NULL)
        st = cli_size("max-gap", v, 0, 1000000, &tb.max_gap, &err);
    el_table table;
    el_scan scan;
    el_time_survey survey;
    memset(&table, 0, sizeof table);
    memset(&scan, 0, sizeof scan);
    if (st == EL_OK) {
        in.time_column = cli_value(&a, OPTIONS, N_OPTIONS, "time");
        st = el_table_read_files(files.paths, files.n_paths, &in, &table, &err);
    }
    if (st == EL_OK)
        st = el_scan_table(&table, &scan, &err);
    if (st == EL_OK)
        st = el_timebase_survey(&table, &tb, &survey, &err);
    if (st == EL_OK)
        print_scan(&table, &scan, &survey, tb.max_gap);
    else
        cli_print_error(&err);
    el_scan_free(&scan);
    el_table_free(&table);
    return el_exit_code(st);
}
