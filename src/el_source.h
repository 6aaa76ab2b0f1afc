/* el_source: the bytes of a log: a regular file mapped whole, else read
 * chunk by chunk from a stream (pipe, terminal, gzip data decompressed on
 * the fly). The CSV reader (el_ingest) consumes them record by record. */
#ifndef EL_SOURCE_H
#define EL_SOURCE_H

#include <stddef.h>
#include <stdio.h>

#include "el_error.h"

struct z_stream_s; /* zlib's inflate state, kept opaque here */

/* A byte source. The unconsumed text is buf[beg, end); the reader moves
 * beg forward as it consumes records and calls el_source_refill for more.
 * Fields are read by el_ingest; only el_source functions change them
 * except beg and line, which the consumer advances. */
typedef struct {
    FILE *stream;
    const char *name;   /* for messages (not owned) */
    el_error *err;      /* where errors go (not owned) */
    char *buf;
    size_t cap;         /* bytes allocated; one is kept spare */
    size_t beg, end;    /* unconsumed data is buf[beg, end) */
    int eof;            /* 1: the stream has no more bytes */
    long line;          /* 1-based line number of buf[beg] */
    int cr_only;        /* 1: line ends are lone CRs, turned into LFs as read */
    /* Raw bytes from the stream; decompressed from here when gzip. */
    int mapped;         /* 1: buf is the whole file mapped read-only (eof set) */
    int started;        /* 0 until the first raw bytes were looked at */
    int gz;             /* 1: the stream is gzip data */
    int gz_done;        /* 1: the last gzip member ended */
    struct z_stream_s *z; /* inflate state when gz (owned) */
    unsigned char *raw;
    size_t raw_beg, raw_end;
    int raw_eof;
} el_source;

/* Sets *src up to read stream (not owned, not closed); name and err (not
 * owned) must outlive it. Can't fail; nothing is read yet. */
void el_source_init(el_source *src, FILE *stream, const char *name, el_error *err);

/* Maps the stream's file whole when it is a regular file at offset 0 that
 * is neither gzip data nor CR-only text (buf is then read-only, eof set);
 * else reads the first bytes (at least 4 KiB or all there is). Skips a UTF-8
 * byte-order mark (beg = 3), detects CR-only line ends (turned into LFs
 * from here on) and refuses binary content: EL_ERR_DATA with line and
 * column of the first control byte (NUL, or < 0x20 other than tab, CR,
 * LF, or 0x7F) in those bytes and a hint (UTF-16 named). Also the errors
 * of el_source_refill. Call once, first. */
el_status el_source_start(el_source *src);

/* Moves the unconsumed bytes to the front of buf and appends the next
 * chunk (sets eof when the stream gave nothing). EL_ERR_IO when the
 * stream cannot be read, EL_ERR_DATA for corrupt or cut gzip data,
 * EL_ERR_NOMEM; all with src->name and a hint in *src->err. */
el_status el_source_refill(el_source *src);

/* For a mapped file: EL_ERR_IO ("the file shrank while it was being
 * read", with src->name and a hint; replaces what *src->err held) when
 * the file is now shorter than when it was mapped, else EL_OK (also for
 * a source that is not mapped). Called after the read, whatever its
 * outcome: the bytes of a cut file's last page read as zeros, so a read
 * may end in a bogus data error or a short table instead of a fault.
 * Touching a page past the new end raises SIGBUS, which a library cannot
 * handle without process-wide state: a program that may read files other
 * programs cut short installs a SIGBUS handler (eigenlog's main.c reports
 * the file mapped at the faulting address and exits with status 4). */
el_status el_source_check_size(el_source *src);

/* Frees what the source allocated (not the stream). NULL is a no-op;
 * calling it twice is harmless. */
void el_source_close(el_source *src);

/* Grows the buffer *p of *cap elements of elem bytes to hold at least need
 * elements, doubling (from 16) so repeated growth costs amortised O(1).
 * Returns 1, or 0 when realloc fails (then *p and *cap are unchanged and
 * the caller still owns *p). */
int el_source_reserve(void **p, size_t *cap, size_t need, size_t elem);

#endif
