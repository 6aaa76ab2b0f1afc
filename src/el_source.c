/* el_source: the bytes of a log: a regular file mapped into memory whole,
 * else read chunk by chunk from a stream and decompressed on the fly when
 * they are gzip data. */
/* MAP_POPULATE (Linux) is outside POSIX: ask glibc for it; used only when
 * defined. */
#define _DEFAULT_SOURCE 1
#include "el_source.h"

#include <errno.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <zlib.h>

/* Bytes asked of the stream per read. The buffer holds the unconsumed part
 * of the current record plus at least one chunk, so it only grows past this
 * for records longer than a chunk: memory grows with the data, no limit. */
#define READ_CHUNK ((size_t)64 * 1024)
/* How many leading bytes are checked for binary content. */
#define SNIFF_BYTES ((size_t)4096)

void el_source_init(el_source *src, FILE *stream, const char *name, el_error *err)
{
    memset(src, 0, sizeof *src);
    src->stream = stream;
    src->name = name;
    src->err = err;
    src->line = 1;
}

void el_source_close(el_source *src)
{
    if (src == NULL)
        return;
    if (src->mapped)
        munmap(src->buf, src->cap);
    else
        free(src->buf);
    src->mapped = 0;
    free(src->raw);
    if (src->z != NULL) {
        inflateEnd(src->z);
        free(src->z);
    }
    src->buf = NULL;
    src->raw = NULL;
    src->z = NULL;
}

int el_source_reserve(void **p, size_t *cap, size_t need, size_t elem)
{
    if (need <= *cap)
        return 1;
    size_t n = *cap ? *cap : 16;
    while (n < need)
        n *= 2;
    void *q = realloc(*p, n * elem);
    if (q == NULL)
        return 0;
    *p = q;
    *cap = n;
    return 1;
}

static el_status no_memory(el_source *rd)
{
    el_error_set(rd->err, EL_ERR_NOMEM, "out of memory while reading the log");
    el_error_at(rd->err, rd->name, 0, 0);
    el_error_hint(rd->err, "the log is too large for this machine; cut it into parts");
    return EL_ERR_NOMEM;
}

static el_status read_error(el_source *rd)
{
    char why[128] = "unknown reason";
    if (errno != 0)
        strerror_r(errno, why, sizeof why);
    el_error_set(rd->err, EL_ERR_IO, "cannot read %s: %s", rd->name, why);
    el_error_at(rd->err, rd->name, rd->line, 0);
    el_error_hint(rd->err, "check that the path names a readable file, not a folder");
    return EL_ERR_IO;
}

/* Reads more raw bytes into rd->raw (empty before the call). */
static el_status raw_fill(el_source *rd)
{
        errno = 0;
    rd->raw_beg = 0;
    rd->raw_end = fread(rd->raw, 1, READ_CHUNK, rd->stream);
    if (rd->raw_end < READ_CHUNK) {
    if (ferror(rd->stream))
            return read_error(rd);
        rd->raw_eof = 1;
    }
    return EL_OK;
}

static el_status gz_error(el_source *rd, const char *what)
{
    el_error_set(rd->err, EL_ERR_DATA, "the gzip data %s", what);
    el_error_at(rd->err, rd->name, rd->line, 0);
    el_error_hint(rd->err, "check the file with gzip -t; a file still being written or "
                          "cut in transfer ends early");
    return EL_ERR_DATA;
}

/* Decompresses into dst[0..want) until some output or the end; several
 * gzip members one after another (gzip a >x; gzip b >>x) are one stream,
 * and bytes after the last member that do not start another are ignored,
 * as gzip itself does. */
static el_status gz_read(el_source *rd, char *dst, size_t want, size_t *got)
{
        *got = 0;
    while (*got == 0 && !rd->gz_done) {
    if (rd->raw_beg == rd->raw_end) {
            if (rd->raw_eof)
                return gz_error(rd, "ends before the end of the compressed stream");
            el_status st = raw_fill(rd);
            if (st != EL_OK)
                return st;
            if (rd->raw_end == 0)
                continue;
        }
        rd->z->next_in = rd->raw + rd->raw_beg;
        rd->z->avail_in = (uInt)(rd->raw_end - rd->raw_beg);
        rd->z->next_out = (unsigned char *)dst;
        rd->z->avail_out = (uInt)want;
        int rc = inflate(rd->z, Z_NO_FLUSH);
        rd->raw_beg = rd->raw_end - rd->z->avail_in;
        *got = want - rd->z->avail_out;
        if (rc == Z_STREAM_END) {
            if (rd->raw_beg == rd->raw_end && !rd->raw_eof) {
                el_status st = raw_fill(rd);
                if (st != EL_OK)
                    return st;
            }
            size_t left = rd->raw_end - rd->raw_beg;
            if (left >= 2 && rd->raw[rd->raw_beg] == 0x1f && rd->raw[rd->raw_beg + 1] == 0x8b)
                inflateReset(rd->z);
            else
                rd->gz_done = 1;
        } else if (rc == Z_MEM_ERROR) {
            return no_memory(rd);
        } else if (rc != Z_OK && rc != Z_BUF_ERROR) {
            return gz_error(rd, "is corrupt");
        }
    }
    return EL_OK;
}

/* Reads up to want bytes of text into dst: the stream's bytes, or their
 * decompression when the stream starts with the gzip magic bytes. */
static el_status raw_read(el_source *rd, char *dst, size_t want, size_t *got)
{
    if (!rd->started) {
        rd->started = 1;
        rd->raw = malloc(READ_CHUNK);
        if (rd->raw == NULL)
            return no_memory(rd);
        el_status st = raw_fill(rd);
        if (st != EL_OK)
            return st;
        rd->gz = rd->raw_end >= 2 && rd->raw[0] == 0x1f && rd->raw[1] == 0x8b;
        if (rd->gz) {
            rd->z = calloc(1, sizeof *rd->z);
            if (rd->z == NULL)
                return no_memory(rd);
            /* 15 + 16: gzip wrapper only, largest window. */
            if (inflateInit2(rd->z, 15 + 16) != Z_OK) {
                free(rd->z);
                rd->z = NULL;
                return no_memory(rd);
            }
        }
    }
    if (rd->gz)
        return gz_read(rd, dst, want, got);
    if (rd->raw_beg < rd->raw_end) {
        size_t n = rd->raw_end - rd->raw_beg < want ? rd->raw_end - rd->raw_beg : want;
        memcpy(dst, rd->raw + rd->raw_beg, n);
        rd->raw_beg += n;
        *got = n;
        return EL_OK;
    }
    if (rd->raw_eof) {
        *got = 0;
        return EL_OK;
    }
    errno = 0;
    *got = fread(dst, 1, want, rd->stream);
    if (*got < want) {
    if (ferror(rd->stream))
            return read_error(rd);
        rd->raw_eof = 1;
    }
    return EL_OK;
}

/* Moves the unconsumed bytes to the front and reads one more chunk. */
el_status el_source_refill(el_source *rd)
{
    if (rd->mapped) {
        rd->eof = 1; /* the whole file is there already */
        return EL_OK;
    }
    if (rd->beg > 0) {
        memmove(rd->buf, rd->buf + rd->beg, rd->end - rd->beg);
        rd->end -= rd->beg;
        rd->beg = 0;
    }
    if (rd->cap < rd->end + READ_CHUNK + 1) {
        void *p = rd->buf;
        if (!el_source_reserve(&p, &rd->cap, rd->end + READ_CHUNK + 1, 1))
            return no_memory(rd);
        rd->buf = p;
    }
    size_t want = rd->cap - 1 - rd->end, got = 0;
    el_status st = raw_read(rd, rd->buf + rd->end, want, &got);
    if (st != EL_OK)
        return st;
    if (rd->cr_only)
        for (char *p = rd->buf + rd->end, *e = p + got; (p = memchr(p, '\r', (size_t)(e - p)));)
            *p++ = '\n';
    rd->end += got;
    if (got == 0)
        rd->eof = 1;
    return EL_OK;
}

/* Old Mac exports end lines with a lone CR: read as one giant line, such
 * a file gives a baffling error, so its CRs become line ends. Decided on
 * the first chunk text[beg, n): its first CR comes before any LF and is
 * not followed by one. */
static int cr_only_text(const char *text, size_t beg, size_t n)
{
    const char *cr = memchr(text + beg, '\r', n - beg);
    const char *lf = memchr(text + beg, '\n', n - beg);
    return cr != NULL && (lf == NULL || cr < lf) && (cr + 1 == text + n || cr[1] != '\n');
}

/* Maps a regular file that is neither gzip data nor a CR-only text whole
 * (read-only, private): the bytes are read where the page cache holds
 * them, with no copy and no chunk bookkeeping. Anything else (pipes,
 * stdin from a terminal, a stream already partly read, gzip, an empty
 * file, a failed mmap) keeps the streaming reader: returns 0 and leaves
 * the stream untouched. CR-only files stream because their CRs are
 * rewritten as read, which a read-only map cannot take. A file cut short
 * while mapped would fault; a log being appended to is read up to the
 * size it had here, as the streaming reader would read a snapshot. */
static int try_map(el_source *rd)
{
    int fd = fileno(rd->stream);
    struct stat sb;
    if (fd < 0 || fstat(fd, &sb) != 0 || !S_ISREG(sb.st_mode) || sb.st_size <= 0 ||
        (uintmax_t)sb.st_size > (uintmax_t)SIZE_MAX || ftello(rd->stream) != 0)
        return 0;
    size_t size = (size_t)sb.st_size;
    int flags = MAP_PRIVATE;
#ifdef MAP_POPULATE
    /* Page-table entries for the whole (cached) file in one call instead
     * of a fault every few pages; read-only, so nothing is copied. */
    flags |= MAP_POPULATE;
#endif
    void *map = mmap(NULL, size, PROT_READ, flags, fd, 0);
    if (map == MAP_FAILED)
        return 0;
    const unsigned char *p = map;
    size_t bom = size >= 3 && p[0] == 0xEF && p[1] == 0xBB && p[2] == 0xBF ? 3 : 0;
    if ((size >= 2 && p[0] == 0x1f && p[1] == 0x8b) ||
        cr_only_text(map, bom, size < READ_CHUNK ? size : READ_CHUNK)) {
        munmap(map, size);
        return 0;
    }
    /* Read-ahead of the whole file: the reader goes through it once. */
    posix_madvise(map, size, POSIX_MADV_SEQUENTIAL);
    /* The stream ends where a streaming read would have left it: at the
     * end of what was read (a caller may go on from there). */
    (void)fseeko(rd->stream, (off_t)size, SEEK_SET);
    rd->buf = map;
    rd->cap = size;
    rd->beg = 0;
    rd->end = size;
    rd->eof = 1;
    rd->mapped = 1;
    rd->started = 1;
    rd->raw_eof = 1;
    return 1;
}

el_status el_source_check_size(el_source *src)
{
    struct stat sb;
    int fd = src->mapped ? fileno(src->stream) : -1;
    if (fd < 0 || fstat(fd, &sb) != 0 || sb.st_size < 0 || (uintmax_t)sb.st_size >= src->cap)
        return EL_OK;
    el_error_clear(src->err);
    el_error_set(src->err, EL_ERR_IO,
                 "the file shrank while it was being read (cut short or rewritten by another "
                 "program)");
    el_error_at(src->err, src->name, 0, 0);
    el_error_hint(src->err, "read the log when the program writing it has finished with it, "
                            "or read a copy of it; for a log that is still being written, use "
                            "track --follow");
    return EL_ERR_IO;
}

/* Fills the first chunk, skips a UTF-8 byte-order mark and refuses data
 * that is not text: a NUL byte or a control character other than tab, CR
 * and LF within the first bytes means a binary or UTF-16 file, which would
 * otherwise produce confusing errors about cells. */
el_status el_source_start(el_source *rd)
{
    try_map(rd);
    while (!rd->eof && rd->end < SNIFF_BYTES) {
        el_status st = el_source_refill(rd);
        if (st != EL_OK)
            return st;
    }
    const unsigned char *p = (const unsigned char *)rd->buf;
    size_t n = rd->end;
    if (n >= 3 && p[0] == 0xEF && p[1] == 0xBB && p[2] == 0xBF)
        rd->beg = 3;
    int utf16 = n >= 2 && ((p[0] == 0xFF && p[1] == 0xFE) || (p[0] == 0xFE && p[1] == 0xFF));
    /* A mapped file is never CR-only (try_map refused it, deciding on
     * the same first chunk a stream would have read). */
    if (!rd->mapped && cr_only_text(rd->buf, rd->beg, n)) {
        rd->cr_only = 1;
        for (char *q = rd->buf + rd->beg; (q = memchr(q, '\r', (size_t)(rd->buf + n - q)));)
            *q++ = '\n';
    }
    long line = 1, column = 1;
    for (size_t i = rd->beg; i < n && i < SNIFF_BYTES; i++) {
        unsigned char c = p[i];
        if (c == '\n') {
            line++;
            column = 1;
            continue;
        }
        if (c == 0 || (c < 0x20 && c != '\t' && c != '\r') || c == 0x7F) {
            el_error_set(rd->err, EL_ERR_DATA,
                         "not a CSV text file: byte 0x%02X is a control character", c);
            el_error_at(rd->err, rd->name, line, column);
            el_error_hint(rd->err, "%s",
                          utf16 ? "the file is UTF-16 text; save it as UTF-8 CSV"
                                : "give a CSV text file (exported as text, not a "
                                  "spreadsheet or binary log)");
            return EL_ERR_DATA;
        }
        if ((c & 0xC0) != 0x80)
            column++;
    }
    return EL_OK;
}

