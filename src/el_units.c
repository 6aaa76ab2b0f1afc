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

int el_units_row_is(const el_units_cell *cells, size_t n, size_t time_column, char delim,
                    char decimal)
{
    const char *s, *name;
    size_t len;
    double scale, v;
    if (time_column >= n)
        return 0;
    el_units_row_unit(&cells[time_column], &s, &len);
    if (len > 0 && !el_time_unit_lookup(s, len, &scale, &name))
        return 0;
    int time_empty = len == 0, a_unit = 0;
    for (size_t c = 0; c < n; c++) {
        s = cells[c].text;
        len = cells[c].length;
        el_text_trim(&s, &len);
        char d = decimal; /* a unit must not decide the separator */
        if (len > 0 && el_number_parse(s, len, &d, delim, &v) == EL_NUM_OK)
            return 0;
        a_unit |= c != time_column && len > 0 && !el_number_is_missing(s, len);
    }
    /* An empty time cell (a date-time column has no unit) needs a unit
     * beside it: a row with no time and no units is a broken data row. */
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
    if (t->time_is_iso) {
        how = "iso8601";
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
                         "the time column \"%.100s\" has the unit \"%.40s\", which is not a "
                         "unit of time", t->names[tc], t->units[tc]);
            el_error_at(err, t->source, header_line, header_column);
            el_error_hint(err, "give the unit with --time-unit (s, ms, us, min, h, d or "
                               "year), or choose the time column with --time");
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
