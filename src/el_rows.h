/* el_rows: rows of plain numbers read in one pass (the fused fast path of
 * el_ingest), and parts of a mapped text read that way by threads. */
#ifndef EL_ROWS_H
#define EL_ROWS_H

#include <stddef.h>

/* Asks the system for large pages for a block of at least 4 MiB of
 * column values (a table of tens of MB otherwise costs a page fault and
 * a page clear per 4 KiB). A hint: nothing happens where it is not
 * supported. */
void el_rows_advise_large(void *block, size_t bytes);

/* One part of a text read by a thread: rows from begin (a line start) up
 * to end (after a '\n'), straight into their place in the caller's
 * column-major block: row i of column c goes to values[c * stride + i].
 * A row ends at a '\n', so a part gives at most as many rows as its text
 * has line ends (el_rows_count_lines): the caller reserves that many. */
typedef struct {
    const char *begin, *end;
    double *values;       /* the part's first row in the caller's block (not owned) */
    size_t stride;        /* rows per column of that block */
    size_t max_rows;      /* rows reserved: the line ends in [begin, end) */
    size_t base;          /* caller's: row index of values in its block */
    long line;            /* caller's: 1-based line number of begin */
    size_t lines;         /* caller's: line ends in [begin, end) */
    size_t rows;          /* rows read */
    const char *stop;     /* where the fast path stopped (end: all read) */
} el_row_part;

/* Cuts text[0..n) at line ends into `pieces` parts of about equal size
 * and describes parts 1..pieces-1 in parts[0..) (the first piece,
 * text[0..parts[0].begin), stays the caller's): each begins after a '\n'
 * and ends after the last '\n' before the next one (the last: after the
 * text's last '\n'), so the parts are contiguous. Returns how many were
 * described (fewer when the text has too few lines; 0 for pieces < 2).
 * Sets begin and end only (the rest zero). */
size_t el_rows_split(const char *text, size_t n, size_t pieces, el_row_part *parts);

/* The number of '\n' bytes in [begin, end). */
size_t el_rows_count_lines(const char *begin, const char *end);

/* The same count with the AVX2 loop allowed (1: where the CPU has it,
 * chosen at run time) or not (0: the SSE2 loop of any x86-64): tests
 * compare both. */
size_t el_rows_count_lines_using(int allow_avx2, const char *begin, const char *end);

/* Reads part k with el_number_scan_row's rule (n_columns, delim, decimal decided or
 * 0) into k->values (stride k->stride), at most k->max_rows rows, until
 * its end or the first row that needs the general reader; sets rows and
 * stop. Reads the text only up to lim and writes nothing but the part's
 * rows: parts may be read by threads at once. */
void el_rows_read_part(el_row_part *k, const char *lim, size_t n_columns, char delim,
                       char decimal);

#endif
