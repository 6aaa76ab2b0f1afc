/* el_bigmem: large working buffers in 2 MiB pages (transparent huge
 * pages) where the system offers them. */
/* madvise and MADV_HUGEPAGE (Linux) are outside strict POSIX: ask glibc
 * for them before any header. */
#define _DEFAULT_SOURCE 1
#include "el_bigmem.h"

#include <stdlib.h>
#include <sys/mman.h>

#define BIGMEM_PAGE ((size_t)2 << 20)

void *el_bigmem_alloc(size_t bytes)
{
    if (bytes == 0)
        return NULL;
    if (bytes < EL_BIGMEM_MIN_BYTES)
        return malloc(bytes);
    void *p = NULL;
    if (posix_memalign(&p, BIGMEM_PAGE, bytes) != 0)
        return NULL;
#if defined(MADV_HUGEPAGE)
    /* Advice only (a refusal leaves ordinary pages); the last part of a
     * 2 MiB page past the end keeps ordinary pages, so the buffer takes no
     * more memory than malloc's would. */
    (void)madvise(p, bytes, MADV_HUGEPAGE);
#endif
    return p;
}
