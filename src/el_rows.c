/* el_rows: the fused one-pass reading of rows of plain numbers, and the
 * parts of a mapped text read that way by threads (for el_ingest). */
/* madvise and MADV_HUGEPAGE (Linux) are outside strict POSIX: ask glibc
 * for them; used only when defined. */
#define _DEFAULT_SOURCE 1
#include "el_rows.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "el_number.h"

const char *el_rows_scan(const char *p, const char *lim, size_t n, char delim,
                         char *decimal, double *dst, size_t stride)
{
    return el_number_scan_row(p, lim, n, delim, decimal, dst, stride);
}

void el_rows_advise_large(void *block, size_t bytes)
{
#if defined(MADV_HUGEPAGE)
    /* Only the whole pages inside the block are advised. */
    const uintptr_t page = 4096;
    uintptr_t a = ((uintptr_t)block + page - 1) & ~(page - 1);
    uintptr_t b = ((uintptr_t)block + bytes) & ~(page - 1);
    if (bytes >= ((size_t)4 << 20) && b > a)
        (void)madvise((void *)a, (size_t)(b - a), MADV_HUGEPAGE);
#else
    (void)block;
    (void)bytes;
#endif
}

size_t el_rows_split(const char *text, size_t n, size_t pieces, el_row_part *parts)
{
    const char *end = text + n;
    size_t k = 0;
    for (size_t j = 1; j < pieces; j++) {
        const char *at = text + n / pieces * j;
        const char *nl = memchr(at, '\n', (size_t)(end - at));
        if (nl == NULL || nl + 1 >= end || (k > 0 && nl + 1 <= parts[k - 1].begin))
            break;
        parts[k] = (el_row_part){nl + 1, NULL, NULL, 0, 0, NULL, 0};
        k++;
    }
    for (size_t j = 0; j < k; j++) {
        const char *e = j + 1 < k ? parts[j + 1].begin : end;
        while (e > parts[j].begin && e[-1] != '\n')
            e--;
        parts[j].end = e;
    }
    return k;
}

/* Grows a part's block to twice its rows per column (columns moved up). */
static int grow_part(el_row_part *k, size_t n_columns)
{
    size_t cap = 2 * k->cap;
    if (cap > SIZE_MAX / sizeof(double) / n_columns)
        return 0;
    double *v = realloc(k->values, cap * n_columns * sizeof *v);
    if (v == NULL)
        return 0;
    for (size_t c = n_columns; c-- > 1;)
        memmove(v + c * cap, v + c * k->cap, k->rows * sizeof *v);
    k->values = v;
    k->cap = cap;
    return 1;
}

void el_rows_read_part(el_row_part *k, const char *lim, size_t n_columns, char delim,
                       char decimal, size_t row_bytes)
{
    size_t n = n_columns;
    /* Rows from the part's size and a typical row, +1/8 as margin. */
    k->cap = (size_t)(k->end - k->begin) / (row_bytes + 1);
    k->cap += k->cap / 8 + 256;
    k->rows = 0;
    k->values = k->cap <= SIZE_MAX / sizeof(double) / n ? malloc(k->cap * n * sizeof(double))
                                                        : NULL;
    if (k->values != NULL)
        el_rows_advise_large(k->values, k->cap * n * sizeof(double));
    const char *p = k->begin;
    k->failed = k->values == NULL;
    while (!k->failed && p < k->end) {
        if (k->rows == k->cap && !grow_part(k, n)) {
            k->failed = 1;
            break;
        }
        const char *next = el_rows_scan(p, lim, n, delim, &decimal, k->values + k->rows, k->cap);
        if (next == NULL)
            break;
        p = next;
        k->rows++;
    }
    k->stop = p;
}

void el_rows_free_parts(el_row_part *parts, size_t n)
{
    for (size_t j = 0; j < n; j++) {
        free(parts[j].values);
        parts[j].values = NULL;
    }
}
