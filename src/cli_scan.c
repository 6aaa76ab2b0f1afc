/* cli_scan: `eigenlog scan FILE`: what is in a log before assessing it. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "el_ingest.h"

static const cli_option OPTIONS[] = {
    {"time", "COL", "time column (default: the first column)"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

static void print_scan(const el_table *t, const el_scan *s)
{
    char a[64], b[64];
    printf("%s\n", t->source);
    printf("  rows         %zu\n", t->n_rows);
    printf("  delimiter    %s\n", t->delimiter == '\t' ? "tab"
                                  : t->delimiter == ';' ? "semicolon" : "comma");
    printf("  time column  %s (%s)\n", t->names[t->time_column],
           t->time_is_iso ? "ISO 8601 date-times" : "numbers");
    printf("  time span    %s .. %s (%.6g %s)\n",
           el_table_format_time(t, s->time_first, a, sizeof a),
           el_table_format_time(t, s->time_last, b, sizeof b),
           s->time_last - s->time_first, t->time_is_iso ? "s" : "time units");
    printf("  interval     %.6g (median step; min %.6g, max %.6g)\n", s->dt_median,
           s->dt_min, s->dt_max);
    printf("  jitter       %.3g%% of the interval (largest deviation)%s\n",
           100.0 * s->jitter, s->jitter > 0.01 ? ": assess will resample" : "");
    if (s->long_steps > 0)
        printf("  time gaps    %zu steps longer than 1.5 intervals\n", s->long_steps);
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
               cs->std == 0.0 ? "  constant" : "");
    }
}

int cli_scan(int argc, char **argv)
{
    cli_args a;
    el_error err;
    el_error_clear(&err);
    el_status st = cli_parse(argc, argv, OPTIONS, N_OPTIONS, &a, &err);
    if (st == EL_OK && a.help) {
        cli_print_help("eigenlog scan FILE [--time COL]",
                       "Lists a log's channels and units, rows, time span, sample interval\n"
                       "and its jitter, missing cells, and min/mean/std/max per channel.",
                       OPTIONS, N_OPTIONS);
        return 0;
    }
    if (st == EL_OK && a.n_positional != 1) {
        st = el_error_set(&err, EL_ERR_USAGE, "give exactly one log file");
        el_error_hint(&err, "eigenlog scan FILE; FILE may be - for stdin");
    }
    el_table table;
    el_scan scan;
    memset(&table, 0, sizeof table);
    memset(&scan, 0, sizeof scan);
    if (st == EL_OK) {
        el_ingest_options in = {.time_column = a.value[0]};
        st = el_table_read(a.positional[0], &in, &table, &err);
    }
    if (st == EL_OK)
        st = el_scan_table(&table, &scan, &err);
    if (st == EL_OK)
        print_scan(&table, &scan);
    else
        cli_print_error(&err);
    el_scan_free(&scan);
    el_table_free(&table);
    return el_exit_code(st);
}
