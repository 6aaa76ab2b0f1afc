/* el_io: growable text buffer and whole-or-nothing file output. */
#include "el_io.h"

#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static el_status buf_reserve(el_buf *b, size_t extra)
{
    if (b->failed)
        return EL_ERR_NOMEM;
    size_t need = b->length + extra + 1;
    if (need <= b->capacity)
        return EL_OK;
    size_t cap = b->capacity ? b->capacity : 256;
    while (cap < need)
        cap *= 2;
    char *grown = realloc(b->data, cap);
    if (grown == NULL) {
        b->failed = 1;
        return EL_ERR_NOMEM;
    }
    b->data = grown;
    b->capacity = cap;
    return EL_OK;
}

el_status el_buf_append(el_buf *b, const char *bytes, size_t n)
{
    el_status st = buf_reserve(b, n);
    if (st != EL_OK)
        return st;
    memcpy(b->data + b->length, bytes, n);
    b->length += n;
    b->data[b->length] = '\0';
    return EL_OK;
}

el_status el_buf_printf(el_buf *b, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    if (n < 0)
        return EL_ERR_INTERNAL;
    el_status st = buf_reserve(b, (size_t)n);
    if (st != EL_OK)
        return st;
    va_start(ap, fmt);
    vsnprintf(b->data + b->length, (size_t)n + 1, fmt, ap);
    va_end(ap);
    b->length += (size_t)n;
    return EL_OK;
}

void el_buf_free(el_buf *b)
{
    if (b == NULL)
        return;
    free(b->data);
    memset(b, 0, sizeof *b);
}

/* The folder part of path ("." when it has none). */
static void folder_of(const char *path, char *dir, size_t size)
{
    const char *slash = strrchr(path, '/');
    if (slash == NULL)
        snprintf(dir, size, ".");
    else if (slash == path)
        snprintf(dir, size, "/");
    else
        snprintf(dir, size, "%.*s", (int)(slash - path), path);
}

static el_status io_fail(el_error *err, const char *path, int errnum,
                         const char *what)
{
    el_error_set(err, EL_ERR_IO, "cannot %s: %s", what, strerror(errnum));
    el_error_at(err, path, 0, 0);
    el_error_hint(err, "check that the folder exists and is writable, or give another path");
    return EL_ERR_IO;
}

el_status el_check_writable(const char *path, el_error *err)
{
    if (path == NULL || strcmp(path, "-") == 0)
        return EL_OK;
    char dir[4096];
    folder_of(path, dir, sizeof dir);
    if (access(dir, W_OK | X_OK) != 0)
        return io_fail(err, path, errno, "write into its folder");
    if (access(path, F_OK) == 0 && access(path, W_OK) != 0)
        return io_fail(err, path, errno, "overwrite it");
    return EL_OK;
}

el_status el_write_file_atomic(const char *path, const char *data,
                               size_t length, el_error *err)
{
    if (path == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "no output path");
    if (strcmp(path, "-") == 0) {
        if (fwrite(data, 1, length, stdout) != length || fflush(stdout) != 0)
            return io_fail(err, "<stdout>", errno, "write");
        return EL_OK;
    }
    size_t tmp_size = strlen(path) + 16;
    char *tmp = malloc(tmp_size);
    if (tmp == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    snprintf(tmp, tmp_size, "%s.tmpXXXXXX", path);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        int e = errno;
        free(tmp);
        return io_fail(err, path, e, "create a file beside it");
    }
    FILE *out = fdopen(fd, "wb");
    if (out == NULL) {
        int e = errno;
        close(fd);
        unlink(tmp);
        free(tmp);
        return io_fail(err, path, e, "open it");
    }
    int ok = fwrite(data, 1, length, out) == length && fflush(out) == 0 &&
             fsync(fileno(out)) == 0;
    int e = errno;
    if (fclose(out) != 0 && ok) {
        ok = 0;
        e = errno;
    }
    /* mkstemp makes the file 0600; an output file should be as readable as
     * any file the user creates. */
    if (ok) {
        mode_t mask = umask(0);
        umask(mask);
        chmod(tmp, 0666 & ~mask);
    }
    if (!ok || rename(tmp, path) != 0) {
        if (ok)
            e = errno;
        unlink(tmp);
        free(tmp);
        return io_fail(err, path, e, "write it");
    }
    free(tmp);
    return EL_OK;
}
