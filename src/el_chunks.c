/* el_chunks: work shared by threads in fixed chunks. */
#include "el_chunks.h"

#include <pthread.h>
#include <stdatomic.h>

/* ------------------------------------------------------------------ */
/* Work shared by threads in fixed chunks. Which thread takes a chunk does
 * not matter: every chunk is computed the same way, and whatever is
 * combined across chunks is combined in chunk order afterwards, so the
 * numbers do not depend on the thread count. */

/* fn(ctx, chunk, slot): slot (< the thread count) names the thread, so
 * that scratch space can be per thread. */

#define BOOT_CHUNK_THREADS 16

typedef struct {
    el_chunk_fn fn;
    void *ctx;
    size_t n_chunks;
    atomic_size_t next;
} chunk_pool;

typedef struct {
    chunk_pool *pool;
    size_t slot;
} chunk_worker;

static void *chunk_pool_work(void *arg)
{
    chunk_worker *w = arg;
    for (;;) {
        size_t c = atomic_fetch_add(&w->pool->next, 1);
        if (c >= w->pool->n_chunks)
            return NULL;
        w->pool->fn(w->pool->ctx, c, w->slot);
    }
}

/* Threads el_chunks_run uses for n_chunks chunks when threads are asked. */
size_t el_chunks_threads(size_t n_chunks, size_t threads)
{
    size_t t = threads < n_chunks ? threads : n_chunks;
    t = t > BOOT_CHUNK_THREADS ? BOOT_CHUNK_THREADS : t;
    return t < 1 ? 1 : t;
}

/* Runs fn for chunks 0 .. n_chunks - 1 on el_chunks_threads(n_chunks, threads)
 * threads at most (the calling thread is slot 0; fewer when a thread
 * cannot be made). */
void el_chunks_run(size_t n_chunks, size_t threads, el_chunk_fn fn, void *ctx)
{
    chunk_pool pool = { fn, ctx, n_chunks, 0 };
    atomic_init(&pool.next, 0);
    size_t t = el_chunks_threads(n_chunks, threads);
    pthread_t tid[BOOT_CHUNK_THREADS];
    chunk_worker workers[BOOT_CHUNK_THREADS];
    size_t started = 1;
    for (; started < t; started++) {
        workers[started] = (chunk_worker){ &pool, started };
        if (pthread_create(&tid[started], NULL, chunk_pool_work, &workers[started]) != 0)
            break;
    }
    workers[0] = (chunk_worker){ &pool, 0 };
    chunk_pool_work(&workers[0]);
    for (size_t i = 1; i < started; i++)
        pthread_join(tid[i], NULL);
}
