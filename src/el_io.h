/* el_io: a growable text buffer and whole-or-nothing file output
 * (temporary file in the target's folder, then rename). */
#ifndef EL_IO_H
#define EL_IO_H

#include <stddef.h>

#include "el_error.h"

/* A growable NUL-terminated text buffer. Zero-initialise before use. */
typedef struct {
    char *data;
    size_t length;
    size_t capacity;
    int failed;               /* 1 after an allocation failed: later appends do nothing */
} el_buf;

/* Appends n bytes. Returns EL_OK or EL_ERR_NOMEM (then b->failed is set and
 * every later append is a no-op returning EL_ERR_NOMEM). */
el_status el_buf_append(el_buf *b, const char *bytes, size_t n);

/* Appends printf-formatted text; same errors as el_buf_append. */
el_status el_buf_printf(el_buf *b, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Frees the buffer and zeroes it. NULL is a no-op. */
void el_buf_free(el_buf *b);

/* Writes data[0..length) to path as a whole: to a temporary file in the
 * same folder, flushed and synced, then renamed over path, so a reader
 * never sees a partial file and a failure leaves no file behind. path "-"
 * writes to standard output. EL_ERR_IO (file and hint set) when the folder
 * is missing or not writable or the write fails. */
el_status el_write_file_atomic(const char *path, const char *data,
                               size_t length, el_error *err);

/* Checks before long work that path can be written (its folder exists and
 * is writable), so a run fails early instead of after minutes of work.
 * "-" and NULL always pass. EL_ERR_IO with file and hint set. */
el_status el_check_writable(const char *path, el_error *err);

#endif
