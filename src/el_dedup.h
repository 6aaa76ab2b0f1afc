/* el_dedup: rows a logger wrote twice.
 *
 * Historian exports and loggers that retry a write often repeat a row
 * exactly: the same time and the same value in every column. Such a row
 * carries no information, and refusing the whole log for it ("time
 * repeats") sends the user to an editor for nothing. A row whose time
 * repeats with any value changed is still an error (el_timebase): two
 * different readings at one time cannot both be the sample.
 *
 * Logs whose stamps are coarser than their sampling (several rows per
 * stamp, el_timebase's repeated-stamp grid) repeat the time in most steps,
 * and a quantised channel can then repeat its value too: there an
 * identical row is a real sample, and nothing is dropped. The line between
 * the two is EL_DEDUP_MAX_SHARE of the steps. */
#ifndef EL_DEDUP_H
#define EL_DEDUP_H

#include <math.h>
#include <stddef.h>

#include "el_error.h"
#include "el_table.h"

/* Above this share of steps that repeat the time, a log is read as one
 * with coarse stamps (two rows per stamp already repeat in half of the
 * steps) and its identical rows are kept. */
#define EL_DEDUP_MAX_SHARE 0.25

/* Two cells hold the same reading: equal, or both missing (NaN). The rule
 * of el_table_drop_repeats, also applied row by row by el_follow. */
static inline int el_dedup_same_cell(double a, double b)
{
    return a == b || (isnan(a) && isnan(b));
}

/* Drops from *t every row equal to the row before it in the time column
 * and in every other column (el_dedup_same_cell), unless more than
 * EL_DEDUP_MAX_SHARE of the steps repeat the time. Columns, source lines,
 * source files and missing counts are compacted in place (no allocation
 * beyond a byte per row while rows are dropped); one note in t->notes
 * gives the count and the first such line. EL_ERR_NOMEM (err set, the
 * table unchanged) when the note or the scratch cannot be allocated;
 * EL_ERR_INTERNAL for a NULL table. */
el_status el_table_drop_repeats(el_table *t, el_error *err);

#endif
