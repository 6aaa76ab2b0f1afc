/* el_chunks: work shared by threads in fixed chunks. Which thread takes a
 * chunk does not matter: every chunk is computed the same way, and whatever
 * is combined across chunks is combined in chunk order afterwards by the
 * caller, so the numbers do not depend on the thread count. */
#ifndef EL_CHUNKS_H
#define EL_CHUNKS_H

#include <stddef.h>

/* fn(ctx, chunk, slot): slot (< the thread count) names the thread, so
 * that scratch space can be per thread. */
typedef void (*el_chunk_fn)(void *ctx, size_t chunk, size_t slot);

/* Threads el_chunks_run uses for n_chunks chunks when threads are asked:
 * min(threads, n_chunks, 16), at least 1. */
size_t el_chunks_threads(size_t n_chunks, size_t threads);

/* Runs fn for chunks 0 .. n_chunks - 1 on el_chunks_threads(n_chunks,
 * threads) threads at most (the calling thread is slot 0; fewer when a
 * thread cannot be made). Can't fail. */
void el_chunks_run(size_t n_chunks, size_t threads, el_chunk_fn fn, void *ctx);

#endif
