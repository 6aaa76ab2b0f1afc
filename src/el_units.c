/* el_units: the units of a log's columns (el_units.h). */
#include "el_units.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_number.h"
#include "el_text.h"
#include "el_timefmt.h"

void el_units_row_unit(const el_units_cell *c, const char **unit, size_t *n)
{
    *unit = c->text;
    *n = c->length;
    el_text_trim(unit, n);
    if (*n >= 2 && (((*unit)[0] == '[' && (*unit)[*n - 1] == ']')
                    || ((*unit)[0] == '(' && (*unit)[*n - 1] == ')'))) {
        (*unit)++;
        *n -= 2;
        el_text_trim(unit, n);
    }
}

/* A zone's name a logger writes above its date-times: UTC, GMT or Z,
 * optionally with an offset (UTC+01:00), or a common abbreviation. */
static int zone_label(const char *s, size_t n)
{
    static const char *const zones[] = {"utc",  "gmt",  "z",    "local", "local time",
                                        "cet",  "cest", "eet",  "eest",  "wet",
                                        "west", "bst",  "est",  "edt",   "cst",
                                        "cdt",  "mst",  "mdt",  "pst",   "pdt",
                                        "jst",  "aest", "aedt"};
    for (size_t i = 0; i < sizeof zones / sizeof zones[0]; i++)
        if (el_text_equals_nocase(s, n, zones[i]))
            return 1;
    if (n < 5 || !(el_text_equals_nocase(s, 3, "utc") || el_text_equals_nocase(s, 3, "gmt"))
        || (s[3] != '+' && s[3] != '-'))
        return 0;
    for (size_t i = 4; i < n; i++)
        if ((s[i] < '0' || s[i] > '9') && s[i] != ':')
            return 0;
    return 1;
}

/* A pattern of a date-time's fields ("hh:mm:ss", "YYYY-MM-DD hh:mm:ss.fff",
 * "DD.MM.YYYY HH:MM"): field letters and separators only, with at least two
 * different fields. */
static int format_label(const char *s, size_t n)
{
    int fields = 0;
    for (size_t i = 0; i < n; i++) {
        char c = (char)el_text_lower(s[i]);
        const char *f = strchr("ymdhsf", c);
        if (c != '\0' && f != NULL)
            fields |= 1 << (f - "ymdhsf");
        else if (strchr(" -/:.,_t", c) == NULL && !(c == 'a' || c == 'p'))
            return 0;
    }
    int distinct = 0;
    for (int b = 0; b < 6; b++)
        distinct += (fields >> b) & 1;
    return distinct >= 2;
}

/* 1 when the time cell of a units row labels a column of date-times
 * instead of naming a unit: its zone or its pattern, or a word for it. */
static int time_label(const char *s, size_t n)
{
    static const char *const words[] = {"date",      "time",     "date/time", "date time",
                                        "datetime",  "timestamp", "iso 8601", "iso8601"};
    if (n == 0 || n > 40 || el_iso_looks(s, n) || el_local_looks(s, n))
        return 0;
    for (size_t i = 0; i < sizeof words / sizeof words[0]; i++)
        if (el_text_equals_nocase(s, n, words[i]))
            return 1;
    return zone_label(s, n) || format_label(s, n);
}

/* 1 when a time column's unit (from a units row) says its date-times are
 * UTC: UTC, GMT or Z in any case, or UTC+00:00. */
static int label_is_utc(const char *unit)
{
    static const char *const utc[] = {"utc", "gmt", "z", "utc+00:00", "utc+0", "gmt+0"};
    size_t n = unit != NULL ? strlen(unit) : 0;
    for (size_t i = 0; n > 0 && i < sizeof utc / sizeof utc[0]; i++)
        if (el_text_equals_nocase(unit, n, utc[i]))
            return 1;
    return 0;
}

int el_units_row_is(const el_units_cell *cells, size_t n, size_t time_column, char delim,
                    char decimal)
{
    const char *s, *name;
    size_t len;
    double scale, v;
    if (time_column >= n)
        return 0;
    el_units_row_unit(&cells[time_column], &s, &len);
    int labelled = len > 0 && !el_time_unit_lookup(s, len, &scale, &name);
    if (labelled && !time_label(s, len))
        return 0;
    int time_empty = len == 0 || labelled, a_unit = 0;
    for (size_t c = 0; c < n; c++) {
        s = cells[c].text;
        len = cells[c].length;
        el_text_trim(&s, &len);
        char d = decimal; /* a unit must not decide the separator */
        if (len > 0 && el_number_parse(s, len, &d, delim, &v) == EL_NUM_OK)
            return 0;
        a_unit |= c != time_column && len > 0 && !el_number_is_missing(s, len);
    }
    /* An empty or labelling time cell (a date-time column has no unit)
     * needs a unit beside it: a row with no time and no units is a broken
     * data row. */
    return !time_empty || a_unit;
}

el_status el_units_row_take(el_table *t, const el_units_cell *cells, size_t n,
                            size_t *conflict, int *time_unit_taken, el_error *err)
{
    *time_unit_taken = 0;
    for (size_t c = 0; c < n && c < t->n_columns; c++) {
        const char *s;
        size_t len;
        el_units_row_unit(&cells[c], &s, &len);
        if (len == 0 || el_number_is_missing(s, len))
            continue; /* "", NA: no unit written */
        if (t->units[c][0] != '\0') {
            if (strlen(t->units[c]) == len && memcmp(t->units[c], s, len) == 0)
                continue;
            *conflict = c;
            return EL_ERR_DATA;
        }
        char *u = malloc(len + 1);
        if (u == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (units row)");
        memcpy(u, s, len);
        u[len] = '\0';
        free(t->units[c]);
        t->units[c] = u;
        *time_unit_taken |= c == t->time_column;
    }
    return EL_OK;
}

el_status el_units_decide_time(el_table *t, const char *opt_unit, int from_row,
                               long header_line, long header_column, el_error *err)
{
    const char *unit = "s", *how = "assumed";
    double scale = 1.0;
    size_t tc = t->time_column;
    if (t->time_is_clock) {
        /* Times of day are seconds already; a label over them is a label. */
        how = "time of day";
        if (opt_unit != NULL) {
            el_error_set(err, EL_ERR_USAGE, "--time-unit %.60s: this log's times are times "
                         "of day (HH:MM:SS), not numbers", opt_unit);
            el_error_option(err, "--time-unit");
            el_error_hint(err, "leave --time-unit out: times of day are read in seconds");
            return EL_ERR_USAGE;
        }
    } else if (t->time_is_iso) {
        how = "iso8601";
        /* Loggers that write zone-less times say their zone in this row. */
        if (!t->time_zone_known && label_is_utc(t->units[tc]))
            t->time_zone_known = 1;
    } else if (opt_unit != NULL) {
        if (!el_time_unit_parse(opt_unit, &scale, &unit)) {
            el_error_set(err, EL_ERR_USAGE, "\"%.60s\" is not a unit of time", opt_unit);
            el_error_option(err, "--time-unit");
            el_error_hint(err, "give s, ms, us, ns, min, h, d or year");
            return EL_ERR_USAGE;
        }
        how = "--time-unit";
    } else if (t->units[tc][0] != '\0') {
        if (!el_time_unit_parse(t->units[tc], &scale, &unit)) {
            el_error_set(err, EL_ERR_DATA,
                         "the time column \"%.100s\" has the unit \"%.40s\"%s, which is not "
                         "a unit of time", t->names[tc], t->units[tc],
                         from_row ? " in the units row" : "");
            el_error_at(err, t->source, from_row && t->units_line > 0 ? t->units_line
                                                                      : header_line,
                        header_column);
            el_error_hint(err, "give the unit with --time-unit (s, ms, us, min, h, d or "
                               "year), or choose the time column with --time%s",
                          from_row ? "; a zone or a pattern (UTC, hh:mm:ss) labels a column "
                                     "of date-times, and these times are numbers"
                                   : "");
            return EL_ERR_DATA;
        }
        how = from_row ? "units row" : "header";
    } else if (!el_time_unit_from_name(t->names[tc], &scale, &unit, &how)) {
        unit = "s";
        scale = 1.0;
        how = "assumed";
    }
    t->time_scale_s = scale;
    snprintf(t->time_unit, sizeof t->time_unit, "%s", unit);
    snprintf(t->time_unit_source, sizeof t->time_unit_source, "%s", how);
    return EL_OK;
}
