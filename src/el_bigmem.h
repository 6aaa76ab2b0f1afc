/* el_bigmem: large working buffers in 2 MiB pages where the system offers
 * them. */
#ifndef EL_BIGMEM_H
#define EL_BIGMEM_H

#include <stddef.h>

/* Allocates bytes of uninitialised memory, freed with free(). Buffers of
 * EL_BIGMEM_MIN_BYTES and more start on a 2 MiB boundary and are marked
 * for transparent huge pages (Linux madvise
 * MADV_HUGEPAGE; elsewhere, or when refused, plain pages): the first touch
 * of each page then costs one fault per 2 MiB instead of one per 4 KiB,
 * which on a virtual machine was a quarter of the bootstrap's CPU time
 * (DEVELOPERS.md, "Speed of the bootstrap"). Smaller buffers are plain
 * malloc. Returns NULL when out of memory or bytes is 0. */
void *el_bigmem_alloc(size_t bytes);

/* Buffers from this size on get huge pages (one whole 2 MiB page). */
#define EL_BIGMEM_MIN_BYTES ((size_t)2 << 20)

#endif
