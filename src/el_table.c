/* el_table: a log in memory once read: several files joined as one log,
 * the finishing touches of a read (text columns dropped, time in seconds,
 * notes), accessors, times on the command line, and the scan summary. */
#include "el_table.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_datecols.h"
#include "el_number.h"
#if defined(__SSE2__)
#include <emmintrin.h>
#define EL_STATS_SSE2 1
#else
#define EL_STATS_SSE2 0
#endif
#include "el_text.h"
#include "el_timefmt.h"

static el_status table_no_memory(el_error *err, const char *name)
{
    el_error_set(err, EL_ERR_NOMEM, "out of memory while reading the log");
    el_error_at(err, name, 0, 0);
    el_error_hint(err, "the log is too large for this machine; cut it into parts");
    return EL_ERR_NOMEM;
}

/* Removes the skipped text columns and says so in one note. */
static el_status drop_text_columns(el_table *t, const long *text_line, el_error *err)
{
    size_t skipped = 0;
    char list[400] = "";
    size_t w = 0;
    size_t time_parts = 0;
    for (size_t c = 0; c < t->n_columns; c++) {
        if (text_line[c] < 0)
            time_parts++; /* the time of day beside a date: part of the time */
        if (text_line[c] <= 0)
            continue;
        if (skipped < 5 && w < sizeof list) {
            int k = snprintf(list + w, sizeof list - w, "%s\"%.60s\" (text from line %ld)",
                             skipped ? ", " : "", t->names[c], text_line[c]);
            w += k > 0 ? (size_t)k : 0;
        }
        skipped++;
    }
    if (skipped == 0 && time_parts == 0)
        return EL_OK;
    if (skipped > 0 && skipped + time_parts == t->n_columns - 1) {
        el_error_set(err, EL_ERR_DATA, "no column but the time holds numbers: %s", list);
        el_error_at(err, t->source, 0, 0);
        el_error_hint(err, "check the delimiter and the decimal separator (--decimal)");
        return EL_ERR_DATA;
    }
    el_status st = EL_OK;
    if (skipped > 0)
        st = el_warnings_add(&t->notes,
                             "skipped %zu column%s holding text that no option asked "
                             "for: %s%s", skipped, skipped == 1 ? "" : "s", list,
                             skipped > 5 ? ", ..." : "");
    if (st != EL_OK)
        return table_no_memory(err, t->source);
    size_t n = t->n_rows, kept = 0;
    for (size_t c = 0; c < t->n_columns; c++) {
        if (text_line[c] != 0) {
            free(t->names[c]);
            free(t->units[c]);
            continue;
        }
        if (c == t->time_column)
            t->time_column = kept;
        t->names[kept] = t->names[c];
        t->units[kept] = t->units[c];
        t->missing[kept] = t->missing[c];
        memmove(t->values + kept * n, t->values + c * n, n * sizeof *t->values);
        kept++;
    }
    t->n_columns = kept;
    return EL_OK;
}

/* Converts the time column to seconds and writes the notes about time. */
/* Times that read as spreadsheet day numbers of the years 2000-2050
 * (36,526 = 2000-01-01 .. 55,153 = 2050-12-31 in days since 1899-12-30,
 * the count spreadsheets keep dates in; recalled from memory) stepping by
 * less than 100 s as days: a date column exported without its format. As
 * seconds the same steps would be a sampling above 800 Hz at 10-15 h into
 * a day, which is why the note says "if so". */
static int looks_like_day_numbers(const el_table *t)
{
    if (t->n_rows < 2)
        return 0;
    const double *time = t->values + t->time_column * t->n_rows;
    double first = time[0], last = time[t->n_rows - 1];
    double step = (last - first) / (double)(t->n_rows - 1);
    return first >= 36526.0 && last <= 55153.0 && step > 0.0 && step < 100.0 / 86400.0;
}

el_status el_table_finish(el_table *t, const long *text_line, el_error *err)
{
    el_status st = drop_text_columns(t, text_line, err);
    if (st != EL_OK)
        return st;
    size_t tc = t->time_column;
    if (t->time_scale_s != 1.0) {
        double *time = t->values + tc * t->n_rows;
        for (size_t r = 0; r < t->n_rows; r++)
            time[r] *= t->time_scale_s;
    }
    if (!t->time_is_iso) {
        char *unit = malloc(2);
        if (unit == NULL)
            return table_no_memory(err, t->source);
        memcpy(unit, "s", 2);
        free(t->units[tc]);
        t->units[tc] = unit;
    }
    if (strcmp(t->time_unit_source, "assumed") == 0)
        st = el_warnings_add(&t->notes,
                             "the time column \"%.100s\" names no unit: its numbers are taken "
                             "as seconds (give --time-unit, or write the unit in the header "
                             "as \"%.60s [ms]\")%s", t->names[tc], t->names[tc],
                             looks_like_day_numbers(t)
                                 ? "; they look like spreadsheet day numbers (days since "
                                   "1899-12-30, dates of 2000-2050 with fractions for the "
                                   "time of day): if so, give --time-unit d"
                                 : "");
    if (st == EL_OK && t->time_is_iso && !t->time_zone_known)
        st = el_warnings_add(&t->notes,
                             "the date-times carry no zone (Z or +01:00): they are read as "
                             "local time of an unknown zone and shown without an offset; "
                             "Unix times in JSON count them as if they were UTC");
    if (st == EL_OK && t->time_scale_s >= 86400.0)
        st = el_warnings_add(&t->notes,
                             "the log's time is in %s: rates below are per second and "
                             "frequencies in Hz (once per %s = %.6g Hz)",
                             strcmp(t->time_unit, "d") == 0 ? "days" : "years",
                             strcmp(t->time_unit, "d") == 0 ? "day" : "year",
                             1.0 / t->time_scale_s);
    return st == EL_OK ? EL_OK : table_no_memory(err, t->source);
}

/* ------------------------------------------------------------------ */
/* Several files as one log                                           */

static el_status differs(el_error *err, const el_table *a, const el_table *b,
                         long line, const char *what, size_t column)
{
    el_error_set(err, EL_ERR_DATA, "%s differs from %s: %s", b->source, a->source, what);
    el_error_at(err, b->source, line, (long)column + 1);
    el_error_hint(err, "files read as one log need the same columns in the same order "
                       "(same names and units) and the same kind of time");
    return EL_ERR_DATA;
}

el_status el_table_check_same(const el_table *a, const el_table *b, long line,
                              el_error *err)
{
    char what[EL_ERROR_TEXT_MAX];
    if (a->n_columns != b->n_columns) {
        snprintf(what, sizeof what, "it has %zu columns, the first file %zu", b->n_columns,
                 a->n_columns);
        return differs(err, a, b, line, what, 0);
    }
    for (size_t c = 0; c < a->n_columns; c++)
        if (strcmp(a->names[c], b->names[c]) != 0 || strcmp(a->units[c], b->units[c]) != 0) {
            snprintf(what, sizeof what,
                     "column %zu is \"%.100s\" %s%.30s%s, not \"%.100s\" %s%.30s%s", c + 1,
                     b->names[c], b->units[c][0] ? "[" : "(no unit", b->units[c],
                     b->units[c][0] ? "]" : ")", a->names[c], a->units[c][0] ? "[" : "(no unit",
                     a->units[c], a->units[c][0] ? "]" : ")");
            /* Same name, other unit: the unit is on b's row of units if it has one. */
            int at_units = strcmp(a->names[c], b->names[c]) == 0 && b->units_line > 0;
            return differs(err, a, b, at_units ? b->units_line : line, what, c);
        }
    if (a->time_column != b->time_column || a->time_is_iso != b->time_is_iso ||
        a->time_zone_known != b->time_zone_known || a->time_is_clock != b->time_is_clock)
        return differs(err, a, b, line,
                       a->time_is_iso != b->time_is_iso
                           ? "one writes times as date-times, the other as numbers"
                       : a->time_is_clock != b->time_is_clock
                           ? "one writes times of day, the other numbers"
                           : "one writes date-times with a zone, the other without",
                       b->time_column);
    return EL_OK;
}

/* First time of table i on the common clock (ISO: Unix seconds). */
static double first_time(const el_table *t)
{
    double t0 = t->values[t->time_column * t->n_rows];
    return t->time_is_iso ? (double)t->time_origin_unix_s + t0 : t0;
}

/* Joins the parts (in order of their first time) into *out. */
el_status el_table_join(el_table *parts, long *const *text_lines, size_t n,
                        const char *const *paths, el_table *out, long *text_line,
                        el_error *err)
{
    if (parts == NULL || text_lines == NULL || paths == NULL || out == NULL || n == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_join: nothing to join");
    size_t *order = malloc(n * sizeof *order);
    if (order == NULL)
        return table_no_memory(err, paths[0]);
    for (size_t i = 0; i < n; i++)
        order[i] = i;
    /* Times of day carry no date to order files by: they are taken in the
     * order given, each after the one before (below). */
    for (size_t i = 1; i < n && !parts[0].time_is_clock; i++) /* insertion sort: stable */
        for (size_t k = i; k > 0 && first_time(&parts[order[k]]) < first_time(&parts[order[k - 1]]); k--) {
            size_t tmp = order[k];
            order[k] = order[k - 1];
            order[k - 1] = tmp;
        }
    const el_table *ref = &parts[order[0]];
    size_t rows = 0, nc = ref->n_columns;
    for (size_t i = 0; i < n; i++)
        rows += parts[i].n_rows;
    memset(out, 0, sizeof *out);
    out->values = malloc(rows * nc * sizeof *out->values);
    out->source_line = malloc(rows * sizeof *out->source_line);
    out->source_file = malloc(rows * sizeof *out->source_file);
    out->sources = calloc(n, sizeof *out->sources);
    out->missing = calloc(nc, sizeof *out->missing);
    out->names = calloc(nc, sizeof *out->names);
    out->units = calloc(nc, sizeof *out->units);
    int ok = out->values && out->source_line && out->source_file && out->sources &&
             out->missing && out->names && out->units;
    for (size_t i = 0; ok && i < n; i++)
        ok = (out->sources[i] = strdup(paths[i])) != NULL;
    out->n_sources = n;
    if (!ok) {
        free(order);
        return table_no_memory(err, paths[0]);
    }
    /* Names and units move from the reference part. */
    out->n_columns = nc;
    for (size_t c = 0; c < nc; c++) {
        out->names[c] = parts[order[0]].names[c];
        out->units[c] = parts[order[0]].units[c];
        parts[order[0]].names[c] = parts[order[0]].units[c] = NULL;
    }
    size_t row = 0;
    for (size_t k = 0; k < n; k++) {
        const el_table *p = &parts[order[k]];
        double shift = p->time_is_iso ? (double)(p->time_origin_unix_s - ref->time_origin_unix_s)
                                      : 0.0;
        if (p->time_is_clock && row > 0) /* each file restarts at its first midnight */
            shift = (double)(p->clock_origin_s - ref->clock_origin_s) +
                    el_clock_shift(out->values[ref->time_column * rows + row - 1] +
                                       (double)ref->clock_origin_s,
                                   p->values[ref->time_column * p->n_rows] +
                                       (double)p->clock_origin_s);
        for (size_t c = 0; c < nc; c++) {
            double *dst = out->values + c * rows + row;
            memcpy(dst, p->values + c * p->n_rows, p->n_rows * sizeof *dst);
            if (c == ref->time_column && shift != 0.0)
                for (size_t r = 0; r < p->n_rows; r++)
                    dst[r] += shift;
            out->missing[c] += p->missing[c];
            if (text_line[c] == 0)
                text_line[c] = text_lines[order[k]][c];
        }
        memcpy(out->source_line + row, p->source_line, p->n_rows * sizeof *out->source_line);
        for (size_t r = 0; r < p->n_rows; r++)
            out->source_file[row + r] = (unsigned)order[k];
        row += p->n_rows;
    }
    out->n_rows = rows;
    out->time_column = ref->time_column;
    out->time_is_iso = ref->time_is_iso;
    out->time_is_clock = ref->time_is_clock;
    out->clock_origin_s = ref->clock_origin_s;
    if (out->time_is_clock && rows > 0)
        out->clock_midnights = (size_t)floor((out->values[out->time_column * rows + rows - 1] +
                                              (double)ref->clock_origin_s) / 86400.0);
    out->time_origin_unix_s = ref->time_origin_unix_s;
    out->time_zone_minutes = ref->time_zone_minutes;
    out->time_zone_known = ref->time_zone_known;
    /* An ISO file may come first in time: the form of any file's dates
     * with the year last reads --from/--to and names the form in reports. */
    for (size_t k = 0; k < n && out->date_order == 0; k++)
        out->date_order = parts[order[k]].date_order;
    out->time_scale_s = ref->time_scale_s;
    memcpy(out->time_unit, ref->time_unit, sizeof out->time_unit);
    memcpy(out->time_unit_source, ref->time_unit_source, sizeof out->time_unit_source);
    out->delimiter = ref->delimiter;
    out->decimal = ref->decimal;
    snprintf(out->source, sizeof out->source, "%.200s (+%zu file%s)", paths[0], n - 1,
             n == 2 ? "" : "s");
    free(order);
    return EL_OK;
}

double el_table_time_unit_s(const el_table *table)
{
    if (table == NULL || table->time_is_iso || table->time_scale_s == 0.0)
        return 1.0;
    return table->time_scale_s;
}

const char *el_table_row_source(const el_table *table, size_t row)
{
    if (table == NULL)
        return "";
    if (table->n_sources > 1 && table->source_file != NULL && table->sources != NULL &&
        row < table->n_rows)
        return table->sources[table->source_file[row]];
    return table->source;
}

void el_table_release_rows(el_table *table)
{
    if (table == NULL)
        return;
    free(table->values);
    free(table->source_line);
    free(table->source_file);
    table->values = NULL;
    table->source_line = NULL;
    table->source_file = NULL;
}

void el_table_free(el_table *table)
{
    if (table == NULL)
        return;
    for (size_t c = 0; c < table->n_columns; c++) {
        if (table->names != NULL)
            free(table->names[c]);
        if (table->units != NULL)
            free(table->units[c]);
    }
    for (size_t i = 0; table->sources != NULL && i < table->n_sources; i++)
        free(table->sources[i]);
    free(table->sources);
    free(table->source_file);
    free(table->names);
    free(table->units);
    free(table->values);
    free(table->source_line);
    free(table->missing);
    el_warnings_free(&table->notes);
    memset(table, 0, sizeof *table);
}

/* Splits text into a trimmed name and the trimmed unit of a trailing
 * "[unit]", as the header reader does ("" unit when there is none). */
static void split_name_unit(const char *text, const char **name, size_t *name_n,
                            const char **unit, size_t *unit_n)
{
    const char *s = text;
    size_t n = strlen(text);
    el_text_trim(&s, &n);
    *name = s;
    *name_n = n;
    *unit = s + n;
    *unit_n = 0;
    if (n == 0 || s[n - 1] != ']')
        return;
    for (size_t i = n - 1; i-- > 0;)
        if (s[i] == '[') {
            const char *u = s + i + 1;
            size_t un = n - 1 - (i + 1), nn = i;
            el_text_trim(&u, &un);
            el_text_trim(&s, &nn);
            *name_n = nn;
            *unit = u;
            *unit_n = un;
            return;
        }
}

void el_table_list_columns(const el_table *table, int with_time, int quoted, char *out,
                           size_t size)
{
    size_t w = 0;
    if (size == 0)
        return;
    out[0] = '\0';
    for (size_t c = 0; c < table->n_columns && w < size; c++) {
        if (c == table->time_column && !with_time)
            continue;
        int k = snprintf(out + w, size - w, quoted ? "%s\"%s\"" : "%s%s", w ? ", " : "",
                         table->names[c]);
        if (k < 0)
            break;
        w += (size_t)k;
    }
    if (w >= size && size > 4)
        memcpy(out + size - 4, "...", 4);
}

long el_table_find(const el_table *table, const char *name)
{
    if (table == NULL || name == NULL || table->names == NULL)
        return -1;
    for (size_t c = 0; c < table->n_columns; c++)
        if (strcmp(table->names[c], name) == 0)
            return (long)c;
    /* "accel_a [m/s2]" as the header writes it: name and unit both match
     * (spacing before the bracket may differ). */
    const char *qn, *qu;
    size_t qn_n, qu_n;
    split_name_unit(name, &qn, &qn_n, &qu, &qu_n);
    if (qu_n == 0 && qn_n == strlen(name))
        return -1;
    for (size_t c = 0; c < table->n_columns; c++) {
        const char *u = table->units != NULL && table->units[c] != NULL ? table->units[c] : "";
        if (strlen(table->names[c]) == qn_n && memcmp(table->names[c], qn, qn_n) == 0 &&
            strlen(u) == qu_n && memcmp(u, qu, qu_n) == 0)
            return (long)c;
    }
    return -1;
}

/* ------------------------------------------------------------------ */

/* ------------------------------------------------------------------ */
/* Times on the command line                                          */

/* A time of day on the command line for a log of times of day: its first
 * occurrence at or after the log's first row (a log that crosses
 * midnight is cut where the person reading its times means). */
static el_status clock_option_time(const el_table *table, const char *text, const char *s,
                                   size_t n, double *time_out, el_error *err)
{
    long whole = 0;
    double frac = 0.0;
    const char *why = el_datecols_clock_seconds(s, n, &whole, &frac);
    if (why != NULL) {
        el_error_set(err, EL_ERR_USAGE, "cannot read the time \"%.100s\": %s", text, why);
        el_error_hint(err, "give a time of day like 08:30:00, as the log writes its times, "
                           "or seconds from the log's start");
        return EL_ERR_USAGE;
    }
    double first = table->n_rows > 0 && table->values != NULL
                       ? table->values[table->time_column * table->n_rows] : 0.0;
    double t = (double)(whole - table->clock_origin_s) + frac;
    while (t < first - 1e-9)
        t += 86400.0;
    *time_out = t;
    return EL_OK;
}

el_status el_table_parse_time(const el_table *table, const char *text,
                              double *time_out, el_error *err)
{
    if (table == NULL || text == NULL || time_out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_parse_time: NULL argument");
    char decimal = '.';
    const char *s = text;
    size_t n = strlen(text);
    el_text_trim(&s, &n);
    double v;
    int rc = el_number_parse(s, n, &decimal, 0, &v);
    el_iso_time it;
    const char *why = "";
    if (rc != EL_NUM_OK && table->time_is_iso)
        why = el_local_looks(s, n) ? el_local_parse_or_date(s, n, table->date_order, &it)
                                   : el_iso_parse_or_date(s, n, &it);
    if (rc != EL_NUM_OK && table->time_is_clock)
        return clock_option_time(table, text, s, n, time_out, err);
    if (rc == EL_NUM_OK) {
        /* A number is in the log's own unit (ISO: seconds from the start). */
        *time_out = v * el_table_time_unit_s(table);
        return EL_OK;
    }
    if (why == NULL && it.has_zone && !table->time_zone_known) {
        el_error_set(err, EL_ERR_USAGE, "the time \"%.100s\" has a zone, the log's times have none",
                     text);
        el_error_hint(err, "give the time without a zone, on the log's own clock");
        return EL_ERR_USAGE;
    }
    if (why == NULL) {
        /* Without a zone, the time is read on the clock of the file's first
         * row, which is what a person copying a time from the log means. */
        if (!it.has_zone)
            it.unix_s -= (int64_t)table->time_zone_minutes * 60;
        *time_out = (double)(it.unix_s - table->time_origin_unix_s) + it.frac_s;
        return EL_OK;
    }
    el_error_set(err, EL_ERR_USAGE, "cannot read the time \"%.100s\"%s%s", text,
                 *why ? ": " : "", why);
    if (table->time_is_iso)
        el_error_hint(err, "give a date-time like 2026-03-14T08:00:00 (zone optional, "
                           "default that of the log) or seconds from the log's start");
    else
        el_error_hint(err, "give a number in the unit of the time column \"%.100s\" (%s)%s",
                      table->names != NULL ? table->names[table->time_column] : "",
                      table->time_unit[0] ? table->time_unit : "s",
                      el_iso_looks(s, n) ? "; this log's time is a plain number, not a date-time"
                                      : "");
    return EL_ERR_USAGE;
}

const char *el_table_format_when(const el_table *table, double t, char *buf, size_t size)
{
    char num[64];
    el_table_format_time(table, t, num, sizeof num);
    int bare = table != NULL && (table->time_is_iso || table->time_is_clock);
    snprintf(buf, size, "%.40s%s%.15s", num, bare ? "" : " ",
             bare ? "" : table != NULL && table->time_unit[0] ? table->time_unit : "s");
    return buf;
}

char *el_table_format_time(const el_table *table, double t, char *buf, size_t size)
{
    if (buf == NULL || size == 0)
        return buf;
    int64_t ms = table != NULL && table->time_is_clock && isfinite(t) && fabs(t) < 1e12
                     ? (int64_t)floor(t * 1000.0 + 0.5) + (int64_t)table->clock_origin_s * 1000
                     : -1;
    if (ms >= 0) {
        /* Milliseconds rounded once, so 59.9996 s shows as the next minute. */
        int64_t day = ms / 86400000;
        int64_t in_day = ms % 86400000;
        snprintf(buf, size, "%02d:%02d:%02d.%03d", (int)(in_day / 3600000),
                 (int)(in_day / 60000 % 60), (int)(in_day / 1000 % 60), (int)(in_day % 1000));
        if (day > 0)
            snprintf(buf + strlen(buf), size - strlen(buf), " (+%dd)", (int)day);
        return buf;
    }
    /* 1e14 s is far beyond year 9999 and keeps t * 1000 exact in int64. */
    if (table == NULL || !table->time_is_iso || !isfinite(t) || fabs(t) > 1e14) {
        snprintf(buf, size, "%.9g", t / el_table_time_unit_s(table));
        return buf;
    }
    int zone = table->time_zone_minutes;
    ms = (int64_t)floor(t * 1000.0 + 0.5) +
         (table->time_origin_unix_s + (int64_t)zone * 60) * 1000;
    el_iso_format(ms, zone, table->time_zone_known, buf, size);
    return buf;
}

/* ------------------------------------------------------------------ */
/* Scan                                                               */

/* The k-th smallest of a[0..n) (k < n; no NaN), found by selection in
 * linear expected time (Hoare's FIND with a median-of-three pivot): a
 * moves around, the multiset stays, so the result is the value a full
 * sort would put at index k. */
static double select_kth(double *a, size_t n, size_t k)
{
    size_t lo = 0, hi = n - 1;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        double x = a[lo], y = a[mid], z = a[hi];
        double pivot = x < y ? (y < z ? y : (x < z ? z : x)) : (x < z ? x : (y < z ? z : y));
        size_t i = lo, j = hi;
        for (;;) {
            while (a[i] < pivot)
                i++;
            while (pivot < a[j])
                j--;
            if (i >= j)
                break;
            double t = a[i];
            a[i] = a[j];
            a[j] = t;
            i++;
            j--;
        }
        /* a[lo..j] <= pivot <= a[j+1..hi] */
        if (k <= j)
            hi = j;
        else
            lo = j + 1;
    }
    return a[k];
}

/* Median of a[0..n) (n >= 1, no NaN); reorders a. For even n the mean of
 * the two middle values: after selecting the upper one, the lower is the
 * largest of the part below it. *as_timebase: the same median as
 * el_timebase computes it (lower + (upper - lower) / 2), so a caller of
 * both needs one selection. */
static double median_select(double *a, size_t n, double *as_timebase)
{
    size_t h = n / 2;
    double upper = select_kth(a, n, h);
    *as_timebase = upper;
    if (n % 2)
        return upper;
    double lower = a[0];
    for (size_t i = 1; i < h; i++)
        lower = a[i] > lower ? a[i] : lower;
    *as_timebase = lower + (upper - lower) / 2;
    return 0.5 * (lower + upper);
}

/* The median step without the array of all steps, on the long logs
 * where that array (8 bytes a row, fresh pages) and the selection's
 * passes over it cost more than the rest of scan's statistics: the steps
 * of an evenly spaced sample of BRACKET_SAMPLE rows, sorted, give a
 * bracket [lo, hi] about the middle; one pass (the one that finds the
 * smallest and largest step anyway) counts the steps below lo, equal to
 * lo, strictly between, equal to hi and above. A rank that falls on lo
 * or hi has its value then; one that falls strictly between is found by
 * selection among only those steps (a second pass gathers them: a few
 * percent of the steps on jittery stamps, none on regular ones, whose
 * steps take few distinct values). The counts are ranks in the whole
 * multiset of steps, so the value is the one selection over all steps
 * gives, bit for bit; when a rank falls outside the bracket, or a step
 * is NaN, scan falls back to that selection. */
#define BRACKET_SAMPLE 1023
#define BRACKET_HALF_WIDTH 48
#define BRACKET_MIN_STEPS (16 * BRACKET_SAMPLE)

typedef struct {
    double lo, hi;                   /* the bracket, lo <= hi */
    size_t below, at_lo, mid, at_hi; /* < lo, == lo, in (lo, hi), == hi when hi > lo */
    size_t nan;                      /* steps that are NaN */
} step_bracket;

static int compare_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* The bracket from the sample of the m >= BRACKET_MIN_STEPS steps of t;
 * 0 when a sampled step is NaN. */
static int bracket_from_sample(const double *t, size_t m, step_bracket *b)
{
    double sample[BRACKET_SAMPLE];
    for (size_t i = 0; i < BRACKET_SAMPLE; i++) {
        size_t r = i * (m / BRACKET_SAMPLE);
        sample[i] = t[r + 1] - t[r];
        if (isnan(sample[i]))
            return 0;
    }
    qsort(sample, BRACKET_SAMPLE, sizeof sample[0], compare_double);
    memset(b, 0, sizeof *b);
    b->lo = sample[BRACKET_SAMPLE / 2 - BRACKET_HALF_WIDTH];
    b->hi = sample[BRACKET_SAMPLE / 2 + BRACKET_HALF_WIDTH];
    return 1;
}

/* Where rank k (0-based) of the steps lies: 1 on lo, 2 strictly
 * between, 3 on hi, 0 outside the bracket. */
static int bracket_zone(const step_bracket *b, size_t k)
{
    if (k < b->below)
        return 0;
    k -= b->below;
    if (k < b->at_lo)
        return 1;
    k -= b->at_lo;
    if (k < b->mid)
        return 2;
    k -= b->mid;
    return k < b->at_hi ? 3 : 0;
}

/* The steps of t strictly inside (lo, hi), gathered into a new array of
 * b->mid values; NULL when out of memory. */
static double *bracket_gather(const double *t, size_t m, const step_bracket *b)
{
    double *a = malloc((b->mid > 0 ? b->mid : 1) * sizeof *a);
    if (a == NULL)
        return NULL;
    size_t k = 0;
    for (size_t r = 0; r < m; r++) {
        double step = t[r + 1] - t[r];
        if (step > b->lo && step < b->hi)
            a[k++] = step;
    }
    return a;
}

/* Ranks k (and k - 1 when both is set) of the steps from the bracket:
 * 1 with *upper (rank k) and *lower (rank k - 1) set; 0 when one lies
 * outside it or there is no memory (then the caller selects over all). */
static int bracket_ranks(const double *t, size_t m, const step_bracket *b, size_t k, int both,
                         double *upper, double *lower)
{
    int zu = bracket_zone(b, k), zl = both ? bracket_zone(b, k - 1) : 1;
    if (b->nan > 0 || zu == 0 || zl == 0)
        return 0;
    double *a = NULL;
    if (zu == 2 || (both && zl == 2)) {
        a = bracket_gather(t, m, b);
        if (a == NULL)
            return 0;
    }
    size_t off = b->below + b->at_lo;
    *upper = zu == 1 ? b->lo : zu == 3 ? b->hi : select_kth(a, b->mid, k - off);
    if (both)
        *lower = zl == 1 ? b->lo : zl == 3 ? b->hi : select_kth(a, b->mid, k - 1 - off);
    free(a);
    return 1;
}

/* One cell into a lane of column_stats: a missing cell (NaN) adds 0
 * and fails both comparisons. */
static inline void stat_lane(double x, double *sum, double *lo, double *hi, size_t *present)
{
    int ok = !isnan(x);
    *present += (size_t)ok;
    *sum += ok ? x : 0.0;
    *lo = x < *lo ? x : *lo;
    *hi = x > *hi ? x : *hi;
}

#if EL_STATS_SSE2 && defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define EL_STATS_AVX2 1
/* column_stats's two vector loops four lanes to a register on CPUs with
 * AVX2 (chosen at run time): lane i is the same lane as in the pair of
 * SSE2 registers (sa: lanes 0 and 1, sb: 2 and 3), with the same
 * operations in the same order, so the same sums, extremes and counts
 * bit for bit; half the instructions of the SSE2 loop. Both take the
 * SSE2 registers' values, run the whole blocks of four from r and give
 * the registers back, returning the next r. */
__attribute__((target("avx2"))) static size_t
stats_blocks_avx2(const double *v, size_t r, size_t n, __m128d *sa, __m128d *sb, __m128d *la,
                  __m128d *lb, __m128d *ha, __m128d *hb, __m128i *pa, __m128i *pb)
{
    __m256d s4 = _mm256_set_m128d(*sb, *sa), l4 = _mm256_set_m128d(*lb, *la);
    __m256d h4 = _mm256_set_m128d(*hb, *ha);
    __m256i p4 = _mm256_set_m128i(*pb, *pa);
    for (; r + 4 <= n; r += 4) {
        __m256d x = _mm256_loadu_pd(v + r);
        __m256d ok = _mm256_cmp_pd(x, x, _CMP_ORD_Q);
        s4 = _mm256_add_pd(s4, _mm256_and_pd(x, ok));
        l4 = _mm256_min_pd(x, l4);
        h4 = _mm256_max_pd(x, h4);
        p4 = _mm256_sub_epi64(p4, _mm256_castpd_si256(ok));
    }
    *sa = _mm256_castpd256_pd128(s4);
    *sb = _mm256_extractf128_pd(s4, 1);
    *la = _mm256_castpd256_pd128(l4);
    *lb = _mm256_extractf128_pd(l4, 1);
    *ha = _mm256_castpd256_pd128(h4);
    *hb = _mm256_extractf128_pd(h4, 1);
    *pa = _mm256_castsi256_si128(p4);
    *pb = _mm256_extracti128_si256(p4, 1);
    return r;
}

__attribute__((target("avx2"))) static size_t
squares_blocks_avx2(const double *v, size_t r, size_t n, double mean, double scale, __m128d *qa,
                    __m128d *qb)
{
    const __m256d m4 = _mm256_set1_pd(mean), k4 = _mm256_set1_pd(scale);
    __m256d q4 = _mm256_set_m128d(*qb, *qa);
    for (; r + 4 <= n; r += 4) {
        __m256d d = _mm256_mul_pd(_mm256_sub_pd(_mm256_loadu_pd(v + r), m4), k4);
        q4 = _mm256_add_pd(q4, _mm256_and_pd(_mm256_mul_pd(d, d), _mm256_cmp_pd(d, d, _CMP_ORD_Q)));
    }
    *qa = _mm256_castpd256_pd128(q4);
    *qb = _mm256_extractf128_pd(q4, 1);
    return r;
}

static int stats_avx2(void)
{
    return __builtin_cpu_supports("avx2");
}
#else
#define EL_STATS_AVX2 0
#endif

/* Four lanes (cells r, r+1, r+2, r+3 go to lanes 0..3): four independent
 * chains of additions, so a pass runs at the speed of its loads rather
 * than of one addition's latency (one chain with a division per cell was
 * a sixth of `scan`'s CPU time on 1e6 x 8). With SSE2 (every x86-64) the
 * lanes are two per register: the same operations on the same values in
 * the same order, so the same sums bit for bit (minpd and maxpd are
 * x < lo ? x : lo and x > hi ? x : hi, NaN-blind as the C; a NaN's lane
 * adds the +0.0 of its cleared bits). */
void el_scan_column_stats(const double *v, size_t n, int allow_avx2, el_column_stats *s)
{
    (void)allow_avx2;
    double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0;
    double l0 = INFINITY, l1 = INFINITY, l2 = INFINITY, l3 = INFINITY;
    double h0 = -INFINITY, h1 = -INFINITY, h2 = -INFINITY, h3 = -INFINITY;
    size_t p0 = 0, p1 = 0, p2 = 0, p3 = 0, r = 0;
#if EL_STATS_SSE2
    {
        __m128d sa = _mm_setzero_pd(), sb = _mm_setzero_pd();
        __m128d la = _mm_set1_pd(INFINITY), lb = la, ha = _mm_set1_pd(-INFINITY), hb = ha;
        __m128i pa = _mm_setzero_si128(), pb = _mm_setzero_si128();
#if EL_STATS_AVX2
        if (allow_avx2 && stats_avx2())
            r = stats_blocks_avx2(v, r, n, &sa, &sb, &la, &lb, &ha, &hb, &pa, &pb);
#endif
        for (; r + 4 <= n; r += 4) {
            __m128d xa = _mm_loadu_pd(v + r), xb = _mm_loadu_pd(v + r + 2);
            __m128d oka = _mm_cmpord_pd(xa, xa), okb = _mm_cmpord_pd(xb, xb);
            sa = _mm_add_pd(sa, _mm_and_pd(xa, oka));
            sb = _mm_add_pd(sb, _mm_and_pd(xb, okb));
            la = _mm_min_pd(xa, la);
            lb = _mm_min_pd(xb, lb);
            ha = _mm_max_pd(xa, ha);
            hb = _mm_max_pd(xb, hb);
            pa = _mm_sub_epi64(pa, _mm_castpd_si128(oka));
            pb = _mm_sub_epi64(pb, _mm_castpd_si128(okb));
        }
        s0 = _mm_cvtsd_f64(sa);
        s1 = _mm_cvtsd_f64(_mm_unpackhi_pd(sa, sa));
        s2 = _mm_cvtsd_f64(sb);
        s3 = _mm_cvtsd_f64(_mm_unpackhi_pd(sb, sb));
        l0 = _mm_cvtsd_f64(la);
        l1 = _mm_cvtsd_f64(_mm_unpackhi_pd(la, la));
        l2 = _mm_cvtsd_f64(lb);
        l3 = _mm_cvtsd_f64(_mm_unpackhi_pd(lb, lb));
        h0 = _mm_cvtsd_f64(ha);
        h1 = _mm_cvtsd_f64(_mm_unpackhi_pd(ha, ha));
        h2 = _mm_cvtsd_f64(hb);
        h3 = _mm_cvtsd_f64(_mm_unpackhi_pd(hb, hb));
        uint64_t c[4];
        _mm_storeu_si128((__m128i *)(void *)c, pa);
        _mm_storeu_si128((__m128i *)(void *)(c + 2), pb);
        p0 = (size_t)c[0];
        p1 = (size_t)c[1];
        p2 = (size_t)c[2];
        p3 = (size_t)c[3];
    }
#else
    for (; r + 4 <= n; r += 4) {
        stat_lane(v[r], &s0, &l0, &h0, &p0);
        stat_lane(v[r + 1], &s1, &l1, &h1, &p1);
        stat_lane(v[r + 2], &s2, &l2, &h2, &p2);
        stat_lane(v[r + 3], &s3, &l3, &h3, &p3);
    }
#endif
    for (; r < n; r++)
        stat_lane(v[r], &s0, &l0, &h0, &p0);
    double sum = (s0 + s1) + (s2 + s3);
    double lo = fmin(fmin(l0, l1), fmin(l2, l3)), hi = fmax(fmax(h0, h1), fmax(h2, h3));
    size_t present = p0 + p1 + p2 + p3;
    memset(s, 0, sizeof *s);
    s->present = present;
    s->missing = n - present;
    if (present == 0)
        return;
    double mean = sum / (double)present;
    if (!isfinite(mean))
        mean = lo / 2 + hi / 2; /* the sum overflowed: any value inside will do */
    /* Second pass on deviations scaled by a power of two near the largest
     * (exact, unlike a division; no cancellation for large offsets, and
     * no underflow: a channel varying at 1e-170 has a spread, squares of
     * 1e-170 would not). */
    double largest = fmax(hi - mean, mean - lo);
    int e2 = 0;
    double ss = 0.0;
    if (largest > 0.0) {
        (void)frexp(largest, &e2);
        double scale = ldexp(1.0, -e2);
        double q0 = 0.0, q1 = 0.0, q2 = 0.0, q3 = 0.0;
        r = 0;
#if EL_STATS_SSE2
        {
            const __m128d m2 = _mm_set1_pd(mean), k2 = _mm_set1_pd(scale);
            __m128d qa = _mm_setzero_pd(), qb = _mm_setzero_pd();
#if EL_STATS_AVX2
            if (allow_avx2 && stats_avx2())
                r = squares_blocks_avx2(v, r, n, mean, scale, &qa, &qb);
#endif
            for (; r + 4 <= n; r += 4) {
                __m128d da = _mm_mul_pd(_mm_sub_pd(_mm_loadu_pd(v + r), m2), k2);
                __m128d db = _mm_mul_pd(_mm_sub_pd(_mm_loadu_pd(v + r + 2), m2), k2);
                qa = _mm_add_pd(qa, _mm_and_pd(_mm_mul_pd(da, da), _mm_cmpord_pd(da, da)));
                qb = _mm_add_pd(qb, _mm_and_pd(_mm_mul_pd(db, db), _mm_cmpord_pd(db, db)));
            }
            q0 = _mm_cvtsd_f64(qa);
            q1 = _mm_cvtsd_f64(_mm_unpackhi_pd(qa, qa));
            q2 = _mm_cvtsd_f64(qb);
            q3 = _mm_cvtsd_f64(_mm_unpackhi_pd(qb, qb));
        }
#endif
        for (; r + 4 <= n; r += 4) {
            double d0 = (v[r] - mean) * scale, d1 = (v[r + 1] - mean) * scale;
            double d2 = (v[r + 2] - mean) * scale, d3 = (v[r + 3] - mean) * scale;
            q0 += isnan(d0) ? 0.0 : d0 * d0;
            q1 += isnan(d1) ? 0.0 : d1 * d1;
            q2 += isnan(d2) ? 0.0 : d2 * d2;
            q3 += isnan(d3) ? 0.0 : d3 * d3;
        }
        for (; r < n; r++) {
            double d = (v[r] - mean) * scale;
            q0 += isnan(d) ? 0.0 : d * d;
        }
        ss = (q0 + q1) + (q2 + q3);
    }
    s->mean = mean;
    s->min = lo;
    s->max = hi;
    s->std = present > 1 && largest > 0.0 ? ldexp(sqrt(ss / (double)(present - 1)), e2) : 0.0;
    /* The rule of el_stats_spread, which refuses such a channel in a fit. */
    s->constant = lo == hi || s->std <= 1e-12 * fabs(mean);
}

/* What the bracketed scan counts over the steps of t (one pass). */
typedef struct {
    size_t first_back, nonpositive, backward, repeated;
    size_t below, at_lo, mid, at_hi, nan;
    double lo, hi;
} step_counts;

/* The plain loop over the steps ending at rows r + 1 .. n - 1 (the
 * definition; the AVX2 blocks below give the same counts and extremes). */
static void count_steps_plain(const double *t, size_t r, size_t n, const step_bracket *br,
                              step_counts *c)
{
    /* Counts in locals: c's fields could alias t for the compiler, which
     * then stored and reloaded them at every step. */
    size_t first_back = c->first_back, nonpositive = c->nonpositive, backward = c->backward;
    size_t repeated = c->repeated, below = c->below, at_lo = c->at_lo, mid = c->mid;
    size_t at_hi = c->at_hi, nan = c->nan;
    double lo = c->lo, hi = c->hi;
    for (; r + 1 < n; r++) {
        double step = t[r + 1] - t[r];
        if (step <= 0.0 && nonpositive++ == 0)
            first_back = r + 1;
        backward += step < 0.0;
        repeated += step == 0.0;
        lo = step < lo ? step : lo;
        hi = step > hi ? step : hi;
        below += step < br->lo;
        at_lo += step == br->lo;
        mid += step > br->lo && step < br->hi;
        at_hi += step == br->hi && br->hi > br->lo;
        nan += isnan(step);
    }
    *c = (step_counts){first_back, nonpositive, backward, repeated, below, at_lo, mid, at_hi,
                       nan, lo, hi};
}

#if EL_STATS_AVX2
static inline __attribute__((target("avx2"))) size_t lanes_sum(__m256i v)
{
    uint64_t a[4];
    _mm256_storeu_si256((__m256i *)(void *)a, v);
    return (size_t)(a[0] + a[1] + a[2] + a[3]);
}

/* count_steps_plain's counts four steps at a time (whole blocks from row
 * 0; returns the next r): every count is a number of steps that pass a
 * test, whatever their order, and first_back the first such step in row
 * order. The extremes lo and hi are taken per lane and then across the
 * lanes, which gives the plain loop's value unless the extreme is a
 * zero (+0.0 and -0.0 compare equal, and the plain loop keeps the first
 * it meets): then the caller takes them again in order (*zero_ends). */
__attribute__((target("avx2"))) static size_t count_steps_avx2(const double *t, size_t n,
                                                                const step_bracket *br,
                                                                step_counts *c)
{
    size_t r = 0;
    const __m256d blo = _mm256_set1_pd(br->lo), bhi = _mm256_set1_pd(br->hi);
    const __m256d zero = _mm256_setzero_pd();
    const __m256d hi_on = br->hi > br->lo ? _mm256_castsi256_pd(_mm256_set1_epi64x(-1)) : zero;
    __m256d lo4 = _mm256_set1_pd(INFINITY), hi4 = _mm256_set1_pd(-INFINITY);
    __m256i nonpos = _mm256_setzero_si256(), back = nonpos, rep = nonpos, below = nonpos;
    __m256i at_lo = nonpos, mid = nonpos, at_hi = nonpos, nan = nonpos;
    size_t first_back = 0;
    int any_back = 0;
    for (; r + 4 < n; r += 4) {
        __m256d step = _mm256_sub_pd(_mm256_loadu_pd(t + r + 1), _mm256_loadu_pd(t + r));
        __m256d le0 = _mm256_cmp_pd(step, zero, _CMP_LE_OQ);
        if (!any_back) {
            int bits = _mm256_movemask_pd(le0);
            if (bits != 0) {
                any_back = 1;
                first_back = r + 1 + (size_t)__builtin_ctz((unsigned)bits);
            }
        }
        nonpos = _mm256_sub_epi64(nonpos, _mm256_castpd_si256(le0));
        back = _mm256_sub_epi64(back, _mm256_castpd_si256(_mm256_cmp_pd(step, zero, _CMP_LT_OQ)));
        rep = _mm256_sub_epi64(rep, _mm256_castpd_si256(_mm256_cmp_pd(step, zero, _CMP_EQ_OQ)));
        lo4 = _mm256_blendv_pd(lo4, step, _mm256_cmp_pd(step, lo4, _CMP_LT_OQ));
        hi4 = _mm256_blendv_pd(hi4, step, _mm256_cmp_pd(step, hi4, _CMP_GT_OQ));
        below = _mm256_sub_epi64(below, _mm256_castpd_si256(_mm256_cmp_pd(step, blo, _CMP_LT_OQ)));
        at_lo = _mm256_sub_epi64(at_lo, _mm256_castpd_si256(_mm256_cmp_pd(step, blo, _CMP_EQ_OQ)));
        __m256d in = _mm256_and_pd(_mm256_cmp_pd(step, blo, _CMP_GT_OQ),
                                   _mm256_cmp_pd(step, bhi, _CMP_LT_OQ));
        mid = _mm256_sub_epi64(mid, _mm256_castpd_si256(in));
        __m256d top = _mm256_and_pd(_mm256_cmp_pd(step, bhi, _CMP_EQ_OQ), hi_on);
        at_hi = _mm256_sub_epi64(at_hi, _mm256_castpd_si256(top));
        nan = _mm256_sub_epi64(nan, _mm256_castpd_si256(_mm256_cmp_pd(step, step, _CMP_UNORD_Q)));
    }
    double l[4], h[4];
    _mm256_storeu_pd(l, lo4);
    _mm256_storeu_pd(h, hi4);
    double lo = INFINITY, hi = -INFINITY;
    for (int i = 0; i < 4; i++) {
        lo = l[i] < lo ? l[i] : lo;
        hi = h[i] > hi ? h[i] : hi;
    }
    *c = (step_counts){first_back, lanes_sum(nonpos), lanes_sum(back), lanes_sum(rep),
                       lanes_sum(below), lanes_sum(at_lo), lanes_sum(mid), lanes_sum(at_hi),
                       lanes_sum(nan), lo, hi};
    return r;
}
#endif

/* The bracketed scan's one pass over the steps: counts, the first step
 * that does not go forward, the smallest and largest step. allow_avx2 as
 * for el_scan_column_stats. */
static void count_steps(const double *t, size_t n, const step_bracket *br, int allow_avx2,
                        step_counts *c)
{
    *c = (step_counts){0, 0, 0, 0, 0, 0, 0, 0, 0, INFINITY, -INFINITY};
    size_t r = 0;
    (void)allow_avx2;
#if EL_STATS_AVX2
    if (allow_avx2 && stats_avx2()) {
        r = count_steps_avx2(t, n, br, c);
        if (c->lo == 0.0 || c->hi == 0.0) {
            /* a zero extreme: its sign as the plain loop meets it */
            double lo = INFINITY, hi = -INFINITY;
            for (size_t q = 0; q < r; q++) {
                double step = t[q + 1] - t[q];
                lo = step < lo ? step : lo;
                hi = step > hi ? step : hi;
            }
            c->lo = lo;
            c->hi = hi;
        }
    }
#endif
    count_steps_plain(t, r, n, br, c);
}

el_status el_scan_table_using(const el_table *table, int allow_avx2, el_scan *scan,
                              el_error *err)
{
    if (table == NULL || scan == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_scan_table: NULL argument");
    memset(scan, 0, sizeof *scan);
    size_t n = table->n_rows;
    if (n < 2) {
        el_error_set(err, EL_ERR_DATA, "the log has %zu row%s; a scan needs at least 2", n,
                     n == 1 ? "" : "s");
        el_error_at(err, table->source, n == 1 ? table->source_line[0] : 0, 0);
        el_error_hint(err, "give a log with at least two samples");
        return EL_ERR_DATA;
    }
    const double *t = table->values + table->time_column * n;
    size_t m = n - 1;
    step_bracket br;
    int bracketed = m >= BRACKET_MIN_STEPS && bracket_from_sample(t, m, &br);
    el_column_stats *cols = calloc(table->n_columns, sizeof *cols);
    double *steps = bracketed ? NULL : malloc(m * sizeof *steps);
    if ((steps == NULL && !bracketed) || cols == NULL) {
        free(steps);
        free(cols);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory in scan");
    }
    size_t first_back = 0, nonpositive = 0, backward = 0, repeated = 0;
    double lo = INFINITY, hi = -INFINITY;
    /* Counts in locals: scan's fields could alias steps for the compiler,
     * which then stored and reloaded them at every step. */
    if (bracketed) {
        step_counts c;
        count_steps(t, n, &br, allow_avx2, &c);
        first_back = c.first_back;
        nonpositive = c.nonpositive;
        backward = c.backward;
        repeated = c.repeated;
        lo = c.lo;
        hi = c.hi;
        br.below = c.below;
        br.at_lo = c.at_lo;
        br.mid = c.mid;
        br.at_hi = c.at_hi;
        br.nan = c.nan;
    } else {
        for (size_t r = 0; r + 1 < n; r++) {
            double step = t[r + 1] - t[r];
            steps[r] = step;
            if (step <= 0.0 && nonpositive++ == 0)
                first_back = r + 1;
            backward += step < 0.0;
            repeated += step == 0.0;
            lo = step < lo ? step : lo;
            hi = step > hi ? step : hi;
        }
    }
    scan->nonpositive_steps = nonpositive;
    scan->backward_steps = backward;
    scan->repeated_steps = repeated;
    double dt_step, median, upper, lower = 0.0;
    if (bracketed && bracket_ranks(t, m, &br, m / 2, m % 2 == 0, &upper, &lower)) {
        /* median_select's arithmetic on the same two values */
        median = dt_step = upper;
        if (m % 2 == 0) {
            dt_step = lower + (upper - lower) / 2;
            median = 0.5 * (lower + upper);
        }
    } else {
        if (steps == NULL && (steps = malloc(m * sizeof *steps)) != NULL)
            for (size_t r = 0; r < m; r++)
                steps[r] = t[r + 1] - t[r];
        if (steps == NULL) {
            free(cols);
            return el_error_set(err, EL_ERR_NOMEM, "out of memory in scan");
        }
        median = median_select(steps, m, &dt_step);
    }
    /* Stamps coarser than the sampling (10 Hz stamped in whole seconds):
     * most steps are 0; the mean step stands for the interval, and
     * el_timebase_survey says whether assess reads the rows as a grid. */
    if (median == 0.0 && scan->backward_steps == 0 && t[n - 1] > t[0]) {
        median = dt_step = (t[n - 1] - t[0]) / (double)m;
        scan->dt_is_mean = 1;
    }
    if (!(median > 0.0)) {
        free(steps);
        free(cols);
        el_error_set(err, EL_ERR_DATA,
                     "the time column \"%.100s\" does not increase (median step %.9g)",
                     table->names[table->time_column], median);
        el_error_at(err, el_table_row_source(table, first_back), table->source_line[first_back],
                    0);
        el_error_hint(err, "sort the rows by time, or choose the time column with --time");
        memset(scan, 0, sizeof *scan);
        return EL_ERR_DATA;
    }
    scan->n_rows = n;
    scan->time_first = t[0];
    scan->time_last = t[n - 1];
    scan->dt_median = median;
    scan->dt_step = dt_step;
    scan->dt_min = lo;
    scan->dt_max = hi;
    double jitter = 0.0;
    size_t long_steps = 0;
    if (steps != NULL) {
        for (size_t r = 0; r < m; r++) {
            double dev = fabs(steps[r] - median) / median;
            jitter = dev > jitter ? dev : jitter;
            long_steps += steps[r] > 1.5 * median;
        }
    } else {
        /* |step - median| / median grows with the distance from the
         * median on either side (each operation rounds monotonically), so
         * its largest value is at the smallest or the largest step: the
         * same maximum as the loop above. No step is NaN here. */
        double ends[2] = {lo, hi};
        for (int i = 0; i < 2; i++) {
            double dev = fabs(ends[i] - median) / median;
            jitter = dev > jitter ? dev : jitter;
        }
        if (hi > 1.5 * median)
            for (size_t r = 0; r < m; r++)
                long_steps += t[r + 1] - t[r] > 1.5 * median;
    }
    scan->jitter = jitter;
    scan->long_steps = long_steps;
    free(steps);
    for (size_t c = 0; c < table->n_columns; c++)
        el_scan_column_stats(table->values + c * n, n, allow_avx2, &cols[c]);
    scan->columns = cols;
    return EL_OK;
}

el_status el_scan_table(const el_table *table, el_scan *scan, el_error *err)
{
    return el_scan_table_using(table, 1, scan, err);
}

void el_scan_free(el_scan *scan)
{
    if (scan == NULL)
        return;
    free(scan->columns);
    memset(scan, 0, sizeof *scan);
}
