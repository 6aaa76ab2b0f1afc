/* el_sort: a stable radix sort of finite doubles, the order qsort gives
 * with a three-way comparator. */
#include "el_sort.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* Up to this many values are sorted by insertion (stable: a value moves
 * left only past larger ones). */
#define SORT_SMALL 24

typedef struct {
    uint64_t key;
    double value;
} sort_item;

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* An unsigned key whose order is that of the finite doubles, equal for
 * -0.0 and +0.0 (they compare equal). */
static uint64_t sort_key(double x)
{
    uint64_t u = 0;
    if (x != 0.0)
        memcpy(&u, &x, sizeof u);
    return (u >> 63) != 0 ? ~u : u | ((uint64_t)1 << 63);
}

static void insertion_sort(double *v, size_t n)
{
    for (size_t i = 1; i < n; i++) {
        double x = v[i];
        size_t j = i;
        while (j > 0 && v[j - 1] > x) {
            v[j] = v[j - 1];
            j--;
        }
        v[j] = x;
    }
}

void el_sort_finite(double *v, size_t n)
{
    if (n <= SORT_SMALL) {
        insertion_sort(v, n);
        return;
    }
    sort_item *a = malloc(2 * n * sizeof(sort_item));
    if (a == NULL) {
        qsort(v, n, sizeof(double), cmp_double);
        return;
    }
    sort_item *b = a + n;
    for (size_t i = 0; i < n; i++) {
        a[i].key = sort_key(v[i]);
        a[i].value = v[i];
    }
    /* Least significant byte first; each pass is a stable counting sort,
     * so values of equal key keep their order throughout. */
    for (unsigned shift = 0; shift < 64; shift += 8) {
        size_t count[256] = { 0 };
        for (size_t i = 0; i < n; i++)
            count[(a[i].key >> shift) & 0xFF]++;
        if (count[(a[0].key >> shift) & 0xFF] == n)
            continue; /* every value shares this byte */
        size_t pos = 0;
        for (size_t d = 0; d < 256; d++) {
            size_t c = count[d];
            count[d] = pos;
            pos += c;
        }
        for (size_t i = 0; i < n; i++)
            b[count[(a[i].key >> shift) & 0xFF]++] = a[i];
        sort_item *t = a;
        a = b;
        b = t;
    }
    for (size_t i = 0; i < n; i++)
        v[i] = a[i].value;
    free(a < b ? a : b);
}
