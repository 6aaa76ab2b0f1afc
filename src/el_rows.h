/* el_rows: rows of plain numbers read in one pass (the fused fast path of
 * el_ingest), and parts of a mapped text read that way by threads. */
#ifndef EL_ROWS_H
#define EL_ROWS_H

#include <stddef.h>

/* Reads the row of n numbers at p, separated by delim and ended by LF or
 * CRLF, each with el_number_scan (a '\n' must lie at or after p before
 * lim), into dst[0], dst[stride], ... Returns the byte after the line end,
 * or NULL when the row is anything else (blanks, quotes, missing or text
 * cells, too few or too many cells; dst then holds junk and *decimal is
 * unchanged). *decimal as in el_number_parse: 0 = not decided, then set
 * by the first separator met, cell by cell from the left. Touches nothing
 * else, so threads may call it at once. */
const char *el_rows_scan(const char *p, const char *lim, size_t n, char delim,
                         char *decimal, double *dst, size_t stride);

/* Asks the system for large pages for a block of at least 4 MiB of
 * column values (a table of tens of MB otherwise costs a page fault and
 * a page clear per 4 KiB). A hint: nothing happens where it is not
 * supported. */
void el_rows_advise_large(void *block, size_t bytes);

/* One part of a text read by a thread: rows from begin (a line start) up
 * to end (after a '\n'), into a column-major block of its own. */
typedef struct {
    const char *begin, *end;
    double *values;       /* cap rows per column, owned (el_rows_free_parts) */
    size_t cap, rows;
    const char *stop;     /* where the fast path stopped (end: all read) */
    int failed;           /* 1: no memory (the part must be read again) */
} el_row_part;

/* Cuts text[0..n) at line ends into `pieces` parts of about equal size
 * and describes parts 1..pieces-1 in parts[0..) (the first piece,
 * text[0..parts[0].begin), stays the caller's): each begins after a '\n'
 * and ends after the last '\n' before the next one (the last: before the
 * end of the text's last full line). Returns how many were described
 * (fewer when the text has too few lines; 0 for pieces < 2). */
size_t el_rows_split(const char *text, size_t n, size_t pieces, el_row_part *parts);

/* Reads part k with el_rows_scan (n_columns, delim, decimal decided or
 * 0) into its own block, sized from row_bytes (bytes of a typical row)
 * and grown when needed, until its end or the first row that needs the
 * general reader; sets values, cap, rows, stop and failed. Reads the text
 * only up to lim: parts may be read by threads at once. */
void el_rows_read_part(el_row_part *k, const char *lim, size_t n_columns, char delim,
                       char decimal, size_t row_bytes);

/* Frees the blocks of parts[0..n). Harmless on parts already freed. */
void el_rows_free_parts(el_row_part *parts, size_t n);

#endif
