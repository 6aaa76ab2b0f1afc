/* el_channels: which columns of a log are the state channels (el_channels.h). */
#include "el_channels.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_stats.h"

static el_status channel_error(el_error *err, const el_table *table,
                               const char *option, const char *fmt_name,
                               const char *why)
{
    char names[EL_ERROR_TEXT_MAX - 32];
    el_table_list_columns(table, 0, 0, names, sizeof names);
    el_error_set(err, EL_ERR_USAGE, "column '%s' %s", fmt_name, why);
    el_error_option(err, option);
    el_error_hint(err, "channels in this log: %s", names);
    return EL_ERR_USAGE;
}

static int listed(const size_t *set, size_t n, size_t c)
{
    for (size_t i = 0; i < n; i++)
        if (set[i] == c)
            return 1;
    return 0;
}

el_status el_channels_select(const el_table *table, const char *list, const char *option,
                             const size_t *exclude, size_t n_exclude, size_t *out,
                             size_t *n_out, el_error *err)
{
    *n_out = 0;
    if (list == NULL || list[0] == '\0') {
        for (size_t c = 0; c < table->n_columns; c++)
            if (c != table->time_column && !listed(exclude, n_exclude, c))
                out[(*n_out)++] = c;
        if (*n_out == 0) {
            el_error_set(err, EL_ERR_DATA, "the log has a time column only");
            el_error_at(err, table->source, 0, 0);
            el_error_hint(err, "a log needs at least one channel besides time");
            return EL_ERR_DATA;
        }
        return EL_OK;
    }
    const char *p = list;
    while (*p != '\0') {
        const char *end = strchr(p, ',');
        size_t len = end ? (size_t)(end - p) : strlen(p);
        char name[256];
        snprintf(name, sizeof name, "%.*s", (int)(len < 255 ? len : 255), p);
        long idx = el_table_find(table, name);
        if (idx < 0)
            return channel_error(err, table, option, name, "is not in the log");
        if ((size_t)idx == table->time_column)
            return channel_error(err, table, option, name, "is the time column");
        if (listed(out, *n_out, (size_t)idx))
            return channel_error(err, table, option, name, "is listed twice");
        if (listed(exclude, n_exclude, (size_t)idx))
            return channel_error(err, table, option, name,
                                 "is both a state channel and a measured input");
        if (*n_out >= table->n_columns)
            return channel_error(err, table, option, name, "is one too many");
        out[(*n_out)++] = (size_t)idx;
        p += len;
        if (*p == ',')
            p++;
    }
    if (*n_out == 0)
        return channel_error(err, table, option, "", "list is empty");
    return EL_OK;
}

el_status el_channels_drop_constant(const el_series *series, size_t *columns, size_t *n_kept,
                                    el_warnings *warnings, el_error *err)
{
    size_t n = series->n_samples, n_channels = *n_kept, kept = 0;
    char *constant = calloc(n_channels, 1);
    double *value = malloc(n_channels * sizeof *value);
    el_status st = constant != NULL && value != NULL
                       ? EL_OK
                       : el_error_set(err, EL_ERR_NOMEM, "out of memory");
    for (size_t c = 0; st == EL_OK && c < n_channels; c++) {
        double sd;
        constant[c] = (char)el_stats_spread(series->values + c * n, n, &value[c], &sd);
        kept += !constant[c];
    }
    if (st == EL_OK && kept > 0 && kept < n_channels) {
        size_t k = 0;
        for (size_t c = 0; c < n_channels; c++) {
            if (!constant[c]) {
                columns[k++] = columns[c];
                continue;
            }
            if (el_warnings_add(warnings,
                                "channel '%s' is constant over the window (value %.9g) and "
                                "was left out: a stuck or disconnected sensor has no "
                                "dynamics to fit (name it in --channels to stop instead)",
                                series->names[c], value[c]) != EL_OK)
                st = el_error_set(err, EL_ERR_NOMEM, "out of memory");
        }
        *n_kept = kept;
    }
    free(constant);
    free(value);
    return st;
}
