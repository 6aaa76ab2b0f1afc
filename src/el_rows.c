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
        memset(&parts[k], 0, sizeof parts[k]);
        parts[k].begin = nl + 1;
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

/* A plain byte loop: the compiler turns it into vector compares, so a
 * pass costs about what reading the text costs. Counted in blocks of at
 * most 255 bytes into a byte-wide sum (no overflow) so the inner loop
 * stays on bytes. */
static inline size_t count_lines(const char *begin, const char *end)
{
    size_t count = 0;
    const unsigned char *p = (const unsigned char *)begin, *e = (const unsigned char *)end;
    while (p < e) {
        size_t n = (size_t)(e - p) < 255 ? (size_t)(e - p) : 255;
        unsigned char c = 0;
        for (size_t i = 0; i < n; i++)
            c = (unsigned char)(c + (p[i] == '\n'));
        count += c;
        p += n;
    }
    return count;
}

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define EL_ROWS_COUNT_AVX2 1
/* On AVX2 CPUs (chosen at run time; every one has POPCNT): 64 bytes a
 * step, the line ends' bits of two compares counted with popcount (about
 * a third of the byte-sum loop's instructions), the rest by the loop
 * above. A count is a count, whatever the method. */
__attribute__((target("avx2,popcnt"))) static size_t count_lines_avx2(const char *begin,
                                                                      const char *end)
{
    const __m256i nl = _mm256_set1_epi8('\n');
    size_t count = 0;
    const char *p = begin;
    for (; end - p >= 64; p += 64) {
        __m256i a = _mm256_loadu_si256((const __m256i *)(const void *)p);
        __m256i b = _mm256_loadu_si256((const __m256i *)(const void *)(p + 32));
        uint64_t m = (uint32_t)_mm256_movemask_epi8(_mm256_cmpeq_epi8(a, nl)) |
                     (uint64_t)(uint32_t)_mm256_movemask_epi8(_mm256_cmpeq_epi8(b, nl)) << 32;
        count += (size_t)_mm_popcnt_u64(m);
    }
    return count + count_lines(p, end);
}
#else
#define EL_ROWS_COUNT_AVX2 0
#endif

size_t el_rows_count_lines_using(int allow_avx2, const char *begin, const char *end)
{
#if EL_ROWS_COUNT_AVX2
    if (allow_avx2 && __builtin_cpu_supports("avx2") && __builtin_cpu_supports("popcnt"))
        return count_lines_avx2(begin, end);
#else
    (void)allow_avx2;
#endif
    return count_lines(begin, end);
}

size_t el_rows_count_lines(const char *begin, const char *end)
{
    return el_rows_count_lines_using(1, begin, end);
}

void el_rows_read_part(el_row_part *k, const char *lim, size_t n_columns, char delim,
                       char decimal)
{
    k->stop = el_number_scan_rows(k->begin, k->end, lim, n_columns, delim, &decimal, k->values,
                                  k->stride, k->max_rows, &k->rows);
}
