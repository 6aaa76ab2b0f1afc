/* el_dedup: rows a logger wrote twice (el_dedup.h). */
#include "el_dedup.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

static int same_row(const el_table *t, size_t r)
{
    size_t n = t->n_rows;
    for (size_t c = 0; c < t->n_columns; c++)
        if (!el_dedup_same_cell(t->values[c * n + r], t->values[c * n + r - 1]))
            return 0;
    return 1;
}

/* Moves the kept rows of every per-row array down; keep[r] says which. */
static void compact(el_table *t, const unsigned char *keep, size_t n_kept)
{
    size_t n = t->n_rows;
    for (size_t c = 0; c < t->n_columns; c++) {
        const double *src = t->values + c * n;
        double *dst = t->values + c * n_kept; /* <= src: forward copy is safe */
        size_t w = 0;
        for (size_t r = 0; r < n; r++) {
            if (!keep[r]) {
                t->missing[c] -= isnan(src[r]) ? 1 : 0;
                continue;
            }
            dst[w++] = src[r];
        }
    }
    size_t w = 0;
    for (size_t r = 0; r < n; r++) {
        if (!keep[r])
            continue;
        if (t->source_line != NULL)
            t->source_line[w] = t->source_line[r];
        if (t->source_file != NULL)
            t->source_file[w] = t->source_file[r];
        w++;
    }
    t->n_rows = n_kept;
}

el_status el_table_drop_repeats(el_table *t, el_error *err)
{
    if (t == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_drop_repeats: NULL table");
    size_t n = t->n_rows;
    if (n < 2)
        return EL_OK;
    const double *time = t->values + t->time_column * n;
    size_t repeats = 0;
    for (size_t r = 1; r < n; r++)
        repeats += time[r] == time[r - 1];
    if (repeats == 0 || (double)repeats > EL_DEDUP_MAX_SHARE * (double)(n - 1))
        return EL_OK;
    /* Marked against the row before in the original order, so a run of
     * three identical rows keeps one. */
    size_t same = 0, first = 0;
    unsigned char *keep = NULL;
    for (size_t r = 1; r < n; r++) {
        if (!(time[r] == time[r - 1] && same_row(t, r)))
            continue;
        if (keep == NULL) {
            if ((keep = malloc(n)) == NULL) {
                el_error_set(err, EL_ERR_NOMEM, "out of memory while reading the log");
                return EL_ERR_NOMEM;
            }
            memset(keep, 1, n);
            first = r;
        }
        keep[r] = 0;
        same++;
    }
    if (same == 0)
        return EL_OK;
    long line = t->source_line != NULL ? t->source_line[first] : 0;
    const char *file = el_table_row_source(t, first);
    el_status st = el_warnings_add(&t->notes,
                                   "%zu row%s repeat%s the row before exactly (same time, same "
                                   "values) and %s left out, the first at line %ld of %s",
                                   same, same == 1 ? "" : "s", same == 1 ? "s" : "",
                                   same == 1 ? "was" : "were", line, file);
    if (st != EL_OK) {
        free(keep);
        el_error_set(err, EL_ERR_NOMEM, "out of memory while reading the log");
        return EL_ERR_NOMEM;
    }
    compact(t, keep, n - same);
    free(keep);
    return EL_OK;
}
