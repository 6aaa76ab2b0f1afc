/* el_ingest: streaming CSV reader (RFC 4180 quoting, header with units,
 * delimiter detection, ISO 8601 time) and the per-column scan summary. */
#include "el_ingest.h"

#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <zlib.h>

/* Bytes asked of the stream per read. The buffer holds the unconsumed part
 * of the current record plus at least one chunk, so it only grows past this
 * for records longer than a chunk: memory grows with the data, no limit. */
#define READ_CHUNK ((size_t)64 * 1024)
/* How many leading bytes are checked for binary content. */
#define SNIFF_BYTES ((size_t)4096)
/* How much of an offending cell an error message quotes. */
#define CELL_SHOW_MAX 40
#define NONE ((size_t)-1)

/* ------------------------------------------------------------------ */
/* Reading records                                                    */

typedef struct {
    FILE *stream;
    char *buf;
    size_t cap;       /* bytes allocated; one is kept spare */
    size_t beg, end;  /* unconsumed data is buf[beg, end) */
    int eof;
    long line;        /* 1-based line number of buf[beg] */
    int cr_only;      /* 1: line ends are lone CRs, turned into LFs as read */
    /* Raw bytes from the stream; decompressed from here when gzip. */
    int started;      /* 0 until the first raw bytes were looked at */
    int gz;           /* 1: the stream is gzip data */
    int gz_open;      /* 1: z holds an inflate state (inflateEnd needed) */
    int gz_done;      /* 1: the last gzip member ended */
    z_stream z;
    unsigned char *raw;
    size_t raw_beg, raw_end;
    int raw_eof;
} reader;

enum { KIND_UNKNOWN, KIND_BLANK, KIND_COMMENT, KIND_DATA };

/* Resumable state of the search for the end of the record at buf[beg]:
 * offsets are relative to beg so they survive the buffer being moved. */
typedef struct {
    size_t scan;        /* bytes examined so far */
    int kind;
    int in_quote;
    int has_quote;
    long newlines;      /* newlines inside quoted fields */
    size_t open_quote;  /* quote that opened the field still open */
    size_t last_close;  /* offset just past the last closing quote */
} record_scan;

typedef struct {
    const char *text;   /* not NUL-terminated; valid until the next read */
    size_t length;      /* without the line end */
    long line;          /* line of its first byte */
    int has_quote;
} record;

typedef struct {
    const char *text;   /* cell content (quotes removed, unescaped) */
    size_t length;
    size_t raw;         /* offset in the record where the field starts */
    int quoted;         /* 1: text lies in the scratch buffer */
} span;

enum { TIME_UNKNOWN, TIME_NUMBER, TIME_ISO };

typedef struct {
    reader rd;
    const char *name;
    el_error *err;
    char delim;
    size_t n_columns;
    long header_line;
    span *spans;
    size_t spans_cap;
    char *scratch;      /* unescaped quoted fields of one record */
    size_t scratch_cap;
    char *numtext;      /* NUL-terminated copy of a long number for strtod */
    size_t numtext_cap;
    el_table *t;
    size_t cap_rows;
    int time_kind;
    char decimal;       /* '.', ',' or 0 = not decided yet (first number with
                           a separator decides; a comma only when the
                           delimiter is not a comma) */
    int zone_seen;      /* ISO: the first row had a zone */
    unsigned char *col_kind;  /* n_columns: COL_UNKNOWN, COL_NUMBER, COL_TEXT */
    unsigned char *wanted;    /* n_columns: asked for with --channels/--input */
    long *text_line;          /* n_columns: line of the first text cell, 0 = none */
    int channels_listed;      /* 1: --channels named the state columns */
    long time_header_column;  /* character column of the time column's name */
    el_error skip_error;      /* the error the first skipped text cell would have
                                 been: given when no number column is left */
    int skipped_any;
} ingest;

enum { COL_UNKNOWN, COL_NUMBER, COL_TEXT };

/* Reserves a buffer of at least need bytes, growing geometrically. */
static int reserve(void **p, size_t *cap, size_t need, size_t elem)
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

static el_status no_memory(ingest *g)
{
    el_error_set(g->err, EL_ERR_NOMEM, "out of memory while reading the log");
    el_error_at(g->err, g->name, 0, 0);
    el_error_hint(g->err, "the log is too large for this machine; cut it into parts");
    return EL_ERR_NOMEM;
}

static el_status read_error(ingest *g)
{
    char why[128] = "unknown reason";
    if (errno != 0)
        strerror_r(errno, why, sizeof why);
    el_error_set(g->err, EL_ERR_IO, "cannot read %s: %s", g->name, why);
    el_error_at(g->err, g->name, g->rd.line, 0);
    el_error_hint(g->err, "check that the path names a readable file, not a folder");
    return EL_ERR_IO;
}

/* Reads more raw bytes into rd->raw (empty before the call). */
static el_status raw_fill(ingest *g)
{
    reader *rd = &g->rd;
    errno = 0;
    rd->raw_beg = 0;
    rd->raw_end = fread(rd->raw, 1, READ_CHUNK, rd->stream);
    if (rd->raw_end < READ_CHUNK) {
        if (ferror(rd->stream))
            return read_error(g);
        rd->raw_eof = 1;
    }
    return EL_OK;
}

static el_status gz_error(ingest *g, const char *what)
{
    el_error_set(g->err, EL_ERR_DATA, "the gzip data %s", what);
    el_error_at(g->err, g->name, g->rd.line, 0);
    el_error_hint(g->err, "check the file with gzip -t; a file still being written or "
                          "cut in transfer ends early");
    return EL_ERR_DATA;
}

/* Decompresses into dst[0..want) until some output or the end; several
 * gzip members one after another (gzip a >x; gzip b >>x) are one stream,
 * and bytes after the last member that do not start another are ignored,
 * as gzip itself does. */
static el_status gz_read(ingest *g, char *dst, size_t want, size_t *got)
{
    reader *rd = &g->rd;
    *got = 0;
    while (*got == 0 && !rd->gz_done) {
        if (rd->raw_beg == rd->raw_end) {
            if (rd->raw_eof)
                return gz_error(g, "ends before the end of the compressed stream");
            el_status st = raw_fill(g);
            if (st != EL_OK)
                return st;
            if (rd->raw_end == 0)
                continue;
        }
        rd->z.next_in = rd->raw + rd->raw_beg;
        rd->z.avail_in = (uInt)(rd->raw_end - rd->raw_beg);
        rd->z.next_out = (unsigned char *)dst;
        rd->z.avail_out = (uInt)want;
        int rc = inflate(&rd->z, Z_NO_FLUSH);
        rd->raw_beg = rd->raw_end - rd->z.avail_in;
        *got = want - rd->z.avail_out;
        if (rc == Z_STREAM_END) {
            if (rd->raw_beg == rd->raw_end && !rd->raw_eof) {
                el_status st = raw_fill(g);
                if (st != EL_OK)
                    return st;
            }
            size_t left = rd->raw_end - rd->raw_beg;
            if (left >= 2 && rd->raw[rd->raw_beg] == 0x1f && rd->raw[rd->raw_beg + 1] == 0x8b)
                inflateReset(&rd->z);
            else
                rd->gz_done = 1;
        } else if (rc == Z_MEM_ERROR) {
            return no_memory(g);
        } else if (rc != Z_OK && rc != Z_BUF_ERROR) {
            return gz_error(g, "is corrupt");
        }
    }
    return EL_OK;
}

/* Reads up to want bytes of text into dst: the stream's bytes, or their
 * decompression when the stream starts with the gzip magic bytes. */
static el_status raw_read(ingest *g, char *dst, size_t want, size_t *got)
{
    reader *rd = &g->rd;
    if (!rd->started) {
        rd->started = 1;
        rd->raw = malloc(READ_CHUNK);
        if (rd->raw == NULL)
            return no_memory(g);
        el_status st = raw_fill(g);
        if (st != EL_OK)
            return st;
        rd->gz = rd->raw_end >= 2 && rd->raw[0] == 0x1f && rd->raw[1] == 0x8b;
        if (rd->gz) {
            memset(&rd->z, 0, sizeof rd->z);
            /* 15 + 16: gzip wrapper only, largest window. */
            if (inflateInit2(&rd->z, 15 + 16) != Z_OK)
                return no_memory(g);
            rd->gz_open = 1;
        }
    }
    if (rd->gz)
        return gz_read(g, dst, want, got);
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
            return read_error(g);
        rd->raw_eof = 1;
    }
    return EL_OK;
}

/* Moves the unconsumed bytes to the front and reads one more chunk. */
static el_status refill(ingest *g)
{
    reader *rd = &g->rd;
    if (rd->beg > 0) {
        memmove(rd->buf, rd->buf + rd->beg, rd->end - rd->beg);
        rd->end -= rd->beg;
        rd->beg = 0;
    }
    if (rd->cap < rd->end + READ_CHUNK + 1) {
        void *p = rd->buf;
        if (!reserve(&p, &rd->cap, rd->end + READ_CHUNK + 1, 1))
            return no_memory(g);
        rd->buf = p;
    }
    size_t want = rd->cap - 1 - rd->end, got = 0;
    el_status st = raw_read(g, rd->buf + rd->end, want, &got);
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

/* Finds the end of the record at p[0..n): returns 1 and its '\n' offset in
 * *stop, or 0 when more data is needed. A '"' toggles quoting wherever it
 * stands (so a doubled quote leaves quoting on), which is how RFC 4180
 * fields delimit; stray quotes inside unquoted fields are refused later by
 * the field splitter, so the two never disagree about a valid file. */
static int scan_record(const char *p, size_t n, record_scan *s, size_t *stop)
{
    size_t i = s->scan;
    if (s->kind == KIND_UNKNOWN) {
        while (i < n && (p[i] == ' ' || p[i] == '\t' || p[i] == '\r'))
            i++;
        if (i == n) {
            s->scan = n;
            return 0;
        }
        if (p[i] == '\n') {
            s->kind = KIND_BLANK;
            *stop = i;
            return 1;
        }
        /* Comment lines are skipped without looking at quotes, so a stray
         * quote in a comment cannot swallow the lines after it. */
        s->kind = p[i] == '#' ? KIND_COMMENT : KIND_DATA;
    }
    if (s->kind == KIND_COMMENT || (s->kind == KIND_DATA && !s->has_quote)) {
        const char *nl = memchr(p + i, '\n', n - i);
        size_t end = nl != NULL ? (size_t)(nl - p) : n;
        const char *q = s->kind == KIND_DATA ? memchr(p + i, '"', end - i) : NULL;
        if (q == NULL) {
            if (nl != NULL) {
                *stop = end;
                return 1;
            }
            s->scan = n;
            return 0;
        }
        /* Quoted records are rare in logs: take the byte loop from here. */
        i = (size_t)(q - p);
        s->has_quote = 1;
    }
    for (; i < n; i++) {
        char c = p[i];
        if (s->in_quote) {
            if (c == '"') {
                s->in_quote = 0;
                s->last_close = i + 1;
            } else if (c == '\n') {
                s->newlines++;
            }
        } else if (c == '"') {
            s->in_quote = 1;
            if (s->last_close != i) /* not the second half of a "" pair */
                s->open_quote = i;
        } else if (c == '\n') {
            *stop = i;
            return 1;
        }
    }
    s->scan = n;
    return 0;
}

/* Line and 1-based character column (UTF-8 code points) of byte off of
 * the record; computed only for error messages. */
static void locate(const record *r, size_t off, long *line, long *column)
{
    long ln = r->line, col = 1;
    for (size_t i = 0; i < off && i < r->length; i++) {
        unsigned char c = (unsigned char)r->text[i];
        if (c == '\n') {
            ln++;
            col = 1;
        } else if ((c & 0xC0) != 0x80) {
            col++;
        }
    }
    *line = ln;
    *column = col;
}

static void error_at_offset(ingest *g, const record *r, size_t off)
{
    long line, column;
    locate(r, off, &line, &column);
    el_error_at(g->err, g->name, line, column);
}

/* Sets message (printf), location (byte off of record r) and hint. */
static el_status fail_at(ingest *g, const record *r, size_t off, const char *hint,
                         const char *fmt, ...) __attribute__((format(printf, 5, 6)));

static el_status fail_at(ingest *g, const record *r, size_t off, const char *hint,
                         const char *fmt, ...)
{
    g->err->status = EL_ERR_DATA;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(g->err->message, sizeof g->err->message, fmt, ap);
    va_end(ap);
    error_at_offset(g, r, off);
    el_error_hint(g->err, "%s", hint);
    return EL_ERR_DATA;
}

/* A quote left open at the end of the file: either a quoted field that is
 * never closed, or a stray quote inside an unquoted field (which opened
 * quoting in the record scan). The delimiter is not known yet for the
 * header row, so there any candidate delimiter counts as a field start. */
static el_status unterminated(ingest *g, const record *r, size_t q)
{
    size_t i = q;
    while (i > 0 && (r->text[i - 1] == ' ' || r->text[i - 1] == '\t') &&
           r->text[i - 1] != g->delim)
        i--;
    char before = i > 0 ? r->text[i - 1] : '\n';
    int field_start = before == '\n' || before == g->delim ||
                      (g->delim == 0 && (before == ',' || before == ';' || before == '\t'));
    if (!field_start)
        return fail_at(g, r, q,
                       "enclose a field that holds a quote in double quotes and write "
                       "the quote twice (\"\")",
                       "quote inside an unquoted field");
    return fail_at(g, r, q,
                   "close the quoted field with a double quote; a quote inside a "
                   "quoted field is written twice (\"\")",
                   "quoted field is not closed before the end of the file");
}

/* Reads the next header or data record, skipping blank and comment lines.
 * *found is 0 at the end of the input. */
static el_status next_record(ingest *g, record *rec, int *found)
{
    reader *rd = &g->rd;
    for (;;) {
        record_scan s = {0, KIND_UNKNOWN, 0, 0, 0, 0, NONE};
        size_t stop = 0;
        int terminated;
        for (;;) {
            terminated = scan_record(rd->buf + rd->beg, rd->end - rd->beg, &s, &stop);
            if (terminated || rd->eof)
                break;
            el_status st = refill(g);
            if (st != EL_OK)
                return st;
        }
        size_t avail = rd->end - rd->beg;
        if (!terminated) {
            if (avail == 0 || s.kind == KIND_UNKNOWN) {
                rd->beg = rd->end;
                *found = 0;
                return EL_OK;
            }
            stop = avail;
        }
        record r = {rd->buf + rd->beg, stop, rd->line, s.has_quote};
        if (!terminated && s.in_quote)
            return unterminated(g, &r, s.open_quote);
        rd->beg += terminated ? stop + 1 : stop;
        rd->line += 1 + s.newlines;
        if (s.kind != KIND_DATA)
            continue;
        if (r.length > 0 && r.text[r.length - 1] == '\r')
            r.length--;
        *rec = r;
        *found = 1;
        return EL_OK;
    }
}

/* ------------------------------------------------------------------ */
/* Start of the stream: byte-order mark and binary content             */

/* Fills the first chunk, skips a UTF-8 byte-order mark and refuses data
 * that is not text: a NUL byte or a control character other than tab, CR
 * and LF within the first bytes means a binary or UTF-16 file, which would
 * otherwise produce confusing errors about cells. */
static el_status check_start(ingest *g)
{
    reader *rd = &g->rd;
    while (!rd->eof && rd->end < SNIFF_BYTES) {
        el_status st = refill(g);
        if (st != EL_OK)
            return st;
    }
    const unsigned char *p = (const unsigned char *)rd->buf;
    size_t n = rd->end;
    if (n >= 3 && p[0] == 0xEF && p[1] == 0xBB && p[2] == 0xBF)
        rd->beg = 3;
    int utf16 = n >= 2 && ((p[0] == 0xFF && p[1] == 0xFE) || (p[0] == 0xFE && p[1] == 0xFF));
    /* Old Mac exports end lines with a lone CR: read as one giant line,
     * such a file gives a baffling error, so its CRs become line ends. */
    const char *cr = memchr(rd->buf + rd->beg, '\r', n - rd->beg);
    const char *lf = memchr(rd->buf + rd->beg, '\n', n - rd->beg);
    if (cr != NULL && (lf == NULL || cr < lf) && (cr + 1 == rd->buf + n || cr[1] != '\n')) {
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
            el_error_set(g->err, EL_ERR_DATA,
                         "not a CSV text file: byte 0x%02X is a control character", c);
            el_error_at(g->err, g->name, line, column);
            el_error_hint(g->err, "%s",
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

/* ------------------------------------------------------------------ */
/* Fields                                                             */

static int is_blank(char c)
{
    return c == ' ' || c == '\t';
}

/* The delimiter is the one of comma, semicolon and tab that occurs most
 * often outside quotes in the header row (names rarely contain any of
 * them, while the delimiter occurs n_columns - 1 times). On a tie the tab
 * wins, then the semicolon: a tab in a name is almost unheard of, and a
 * semicolon-separated file may carry a comma inside a unit ("[m,s]")
 * whereas the reverse is rarer. No candidate at all means one column. */
static char detect_delimiter(const record *r)
{
    size_t comma = 0, semi = 0, tab = 0;
    int in_quote = 0;
    for (size_t i = 0; i < r->length; i++) {
        char c = r->text[i];
        if (c == '"')
            in_quote = !in_quote;
        else if (in_quote)
            continue;
        else if (c == ',')
            comma++;
        else if (c == ';')
            semi++;
        else if (c == '\t')
            tab++;
    }
    if (tab > 0 && tab >= semi && tab >= comma)
        return '\t';
    if (semi > 0 && semi >= comma)
        return ';';
    return ',';
}

static el_status push_span(ingest *g, size_t *n, const char *text, size_t length,
                           size_t raw, int quoted)
{
    void *p = g->spans;
    if (!reserve(&p, &g->spans_cap, *n + 1, sizeof *g->spans))
        return no_memory(g);
    g->spans = p;
    g->spans[*n] = (span){text, length, raw, quoted};
    (*n)++;
    return EL_OK;
}

/* Splits a record that holds no quote: cells point into the record. */
static el_status split_plain(ingest *g, const record *r, size_t *n_fields)
{
    const char *p = r->text;
    size_t i = 0, n = 0;
    for (;;) {
        const char *d = memchr(p + i, g->delim, r->length - i);
        size_t e = d != NULL ? (size_t)(d - p) : r->length;
        if (n < g->spans_cap) {
            g->spans[n++] = (span){p + i, e - i, i, 0};
        } else {
            el_status st = push_span(g, &n, p + i, e - i, i, 0);
            if (st != EL_OK)
                return st;
        }
        if (d == NULL)
            break;
        i = e + 1;
    }
    *n_fields = n;
    return EL_OK;
}

/* Reads the quoted field whose opening quote is at q; unescapes "" into
 * the scratch buffer (reserved to the record's length). *next is the
 * offset of the delimiter after it, or the record's end. */
static el_status split_quoted(ingest *g, const record *r, size_t q, size_t *w,
                              span *out, size_t *next)
{
    const char *p = r->text;
    size_t i = q + 1, start = *w;
    for (;;) {
        const char *c = memchr(p + i, '"', r->length - i);
        if (c == NULL) /* the record scan ended inside quotes only at EOF */
            return fail_at(g, r, q, "close the quoted field with a double quote",
                           "quoted field is not closed");
        size_t k = (size_t)(c - p);
        memcpy(g->scratch + *w, p + i, k - i);
        *w += k - i;
        if (k + 1 < r->length && p[k + 1] == '"') {
            g->scratch[(*w)++] = '"';
            i = k + 2;
            continue;
        }
        i = k + 1;
        break;
    }
    while (i < r->length && is_blank(p[i]) && p[i] != g->delim)
        i++;
    if (i < r->length && p[i] != g->delim)
        return fail_at(g, r, i,
                       "put the whole field inside the quotes; a quote inside a quoted "
                       "field is written twice (\"\")",
                       "unexpected text after the closing quote of a field");
    out->text = g->scratch + start;
    out->length = *w - start;
    out->quoted = 1;
    *next = i;
    return EL_OK;
}

/* Splits a record that holds quotes (RFC 4180). */
static el_status split_quoting(ingest *g, const record *r, size_t *n_fields)
{
    if (!reserve((void **)&g->scratch, &g->scratch_cap, r->length + 1, 1))
        return no_memory(g);
    const char *p = r->text;
    size_t i = 0, n = 0, w = 0;
    for (;;) {
        size_t j = i;
        while (j < r->length && is_blank(p[j]) && p[j] != g->delim)
            j++;
        span f = {NULL, 0, i, 0};
        size_t next = 0;
        if (j < r->length && p[j] == '"') {
            el_status st = split_quoted(g, r, j, &w, &f, &next);
            if (st != EL_OK)
                return st;
        } else {
            const char *d = memchr(p + i, g->delim, r->length - i);
            next = d != NULL ? (size_t)(d - p) : r->length;
            const char *q = memchr(p + i, '"', next - i);
            if (q != NULL)
                return fail_at(g, r, (size_t)(q - p),
                               "enclose a field that holds a quote in double quotes and "
                               "write the quote twice (\"\")",
                               "quote inside an unquoted field");
            f.text = p + i;
            f.length = next - i;
        }
        el_status st = push_span(g, &n, f.text, f.length, f.raw, f.quoted);
        if (st != EL_OK)
            return st;
        if (next >= r->length)
            break;
        i = next + 1;
    }
    *n_fields = n;
    return EL_OK;
}

static el_status split_record(ingest *g, const record *r, size_t *n_fields)
{
    return r->has_quote ? split_quoting(g, r, n_fields) : split_plain(g, r, n_fields);
}

static void trim(const char **s, size_t *n)
{
    while (*n > 0 && is_blank(**s)) {
        (*s)++;
        (*n)--;
    }
    while (*n > 0 && is_blank((*s)[*n - 1]))
        (*n)--;
}

/* Copies a cell for a message: control bytes escaped, long cells cut. */
static void show_cell(const char *s, size_t n, char *out, size_t size)
{
    size_t w = 0;
    for (size_t i = 0; i < n && w + 8 < size; i++) {
        unsigned char c = (unsigned char)s[i];
        if (i >= CELL_SHOW_MAX) {
            w += (size_t)snprintf(out + w, size - w, "...");
            break;
        }
        if (c < 0x20 || c == 0x7F || c == '"' || c == '\\')
            w += (size_t)snprintf(out + w, size - w, c == '"' || c == '\\' ? "\\%c" : "\\x%02X", c);
        else
            out[w++] = (char)c;
    }
    out[w] = '\0';
}

/* ------------------------------------------------------------------ */
/* Numbers                                                            */

static int lower(char c)
{
    return c >= 'A' && c <= 'Z' ? c + ('a' - 'A') : c;
}

static int equals_nocase(const char *s, size_t n, const char *word)
{
    size_t k = strlen(word);
    if (n != k)
        return 0;
    for (size_t i = 0; i < n; i++)
        if (lower(s[i]) != word[i])
            return 0;
    return 1;
}

/* Empty, NA and NaN (any case) after trimming are missing cells. */
static int is_missing(const char *s, size_t n)
{
    return n == 0 || equals_nocase(s, n, "na") || equals_nocase(s, n, "nan");
}

static int is_digit(char c)
{
    return c >= '0' && c <= '9';
}

enum { NUM_OK, NUM_SYNTAX, NUM_RANGE };

/* Parses a plain decimal [+-]digits[.digits][(e|E)[+-]digits] spanning all
 * of s[0..n). Hex, inf, nan and anything else are syntax errors: strtod
 * alone would accept them. Clinger's fast path gives the correctly rounded
 * result without strtod when the significand fits in 53 bits and the
 * power of ten is exact (|e| <= 22): one IEEE operation on exact operands.
 * Otherwise strtod (which the syntax check has made safe) does the work;
 * it assumes the C locale's decimal point, the library never changes it. */
static int parse_number(ingest *g, const char *s, size_t n, double *out)
{
    static const double pow10[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                   1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                   1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
    size_t i = 0;
    int negative = 0;
    if (i < n && (s[i] == '+' || s[i] == '-'))
        negative = s[i++] == '-';
    /* Digits accumulate without checks (uint64 wraps, which is defined);
     * the count of significant digits below says whether mant is exact. */
    uint64_t mant = 0;
    size_t first = i;
    for (; i < n && is_digit(s[i]); i++)
        mant = mant * 10 + (uint64_t)(s[i] - '0');
    size_t digits = i - first;
    long exp10 = 0;
    char point = 0;
    if (i < n && (s[i] == g->decimal ||
                  (g->decimal == 0 && (s[i] == '.' || (s[i] == ',' && g->delim != ',' &&
                                                       g->delim != 0))))) {
        point = s[i];
        size_t frac = ++i;
        for (; i < n && is_digit(s[i]); i++)
            mant = mant * 10 + (uint64_t)(s[i] - '0');
        digits += i - frac;
        exp10 = -(long)(i - frac);
    }
    if (digits == 0)
        return NUM_SYNTAX;
    int exact = 1;
    if (digits > 19) {
        size_t zeros = 0;
        for (size_t k = first; k < i && (s[k] == '0' || s[k] == '.'); k++)
            zeros += s[k] == '0';
        exact = digits - zeros <= 19;
    }
    if (i < n && (s[i] == 'e' || s[i] == 'E')) {
        i++;
        int eneg = 0;
        if (i < n && (s[i] == '+' || s[i] == '-'))
            eneg = s[i++] == '-';
        if (i == n || !is_digit(s[i]))
            return NUM_SYNTAX;
        long e = 0;
        for (; i < n && is_digit(s[i]); i++)
            if (e < 100000)
                e = e * 10 + (s[i] - '0');
        exp10 += eneg ? -e : e;
    }
    if (i != n)
        return NUM_SYNTAX;
    if (point != 0 && g->decimal == 0)
        g->decimal = point;
#if FLT_EVAL_METHOD == 0
    if (mant == 0) {
        *out = negative ? -0.0 : 0.0;
        return NUM_OK;
    }
    if (exact && mant <= ((uint64_t)1 << 53) && exp10 >= -22 && exp10 <= 22) {
        double v = (double)mant;
        v = exp10 < 0 ? v / pow10[-exp10] : v * pow10[exp10];
        *out = negative ? -v : v;
        return NUM_OK;
    }
#else
    (void)exact;
    (void)pow10;
#endif
    if (!reserve((void **)&g->numtext, &g->numtext_cap, n + 1, 1))
        return NUM_RANGE;
    memcpy(g->numtext, s, n);
    g->numtext[n] = '\0';
    if (point == ',')
        *strchr(g->numtext, ',') = '.';
    errno = 0;
    char *end;
    double v = strtod(g->numtext, &end);
    if (end != g->numtext + n || !isfinite(v))
        return NUM_RANGE;
    /* Underflow (ERANGE with a tiny result) keeps the nearest value, 0 or
     * subnormal: a reading that small is zero for every later stage. */
    *out = v;
    return NUM_OK;
}

/* Says why a cell that is not a plain decimal was refused. */
static const char *number_hint(const char *s, size_t n, char delim, char decimal, int range)
{
    if (range)
        return "the value is beyond the range of a double (about 1.8e308); "
               "check the cell, or write NA for a missing value";
    size_t i = (n > 0 && (s[0] == '+' || s[0] == '-')) ? 1 : 0;
    if (equals_nocase(s + i, n - i, "inf") || equals_nocase(s + i, n - i, "infinity"))
        return "infinite values are not allowed; write NA for a missing or invalid "
               "reading";
    if (n - i >= 2 && s[i] == '0' && lower(s[i + 1]) == 'x')
        return "hexadecimal numbers are not accepted; write the value in decimal";
    if (equals_nocase(s + i, n - i, "nan") || (n - i > 3 && equals_nocase(s + i, 4, "nan(")))
        return "write NA (or NaN, without sign or payload) for a missing value";
    if (decimal == ',' && memchr(s, '.', n) != NULL)
        return "this log's numbers use a decimal comma (found in an earlier cell): write "
               "1,5, not 1.5, or give --decimal . if the point is right";
    if (delim != ',' && memchr(s, ',', n) != NULL)
        return "an earlier cell used a decimal point: write every number alike, or give "
               "--decimal , for a decimal comma";
    if (delim == ',' && memchr(s, ',', n) != NULL)
        return "with commas between cells a decimal comma needs the cell in quotes "
               "(\"1,5\") and --decimal ,";
    if (i < n && (is_digit(s[i]) || s[i] == '.'))
        return "remove the text after the number (units belong in the header as "
               "\"name [unit]\"), or write NA for a missing value";
    return "use NA for a missing value; any other cell must be a decimal number "
           "such as 1.5 or -2e-3";
}

/* ------------------------------------------------------------------ */
/* ISO 8601 date-times                                                */

typedef struct {
    int64_t unix_s;     /* whole seconds, zone applied */
    double frac_s;      /* [0, 1) */
    int zone_minutes;
    int has_zone;
} iso_time;

/* Days since 1970-01-01 of a proleptic Gregorian date (the days-from-civil
 * algorithm of H. Hinnant, "chrono-Compatible Low-Level Date Algorithms"):
 * pure integer arithmetic, valid for any year, no timegm or locale. */
static int64_t days_from_civil(int64_t y, int m, int d)
{
    y -= m <= 2;
    int64_t era = (y >= 0 ? y : y - 399) / 400;
    int64_t yoe = y - era * 400;
    int64_t doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
    int64_t doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146097 + doe - 719468;
}

/* Inverse of days_from_civil (same source). */
static void civil_from_days(int64_t z, int64_t *y, int *m, int *d)
{
    z += 719468;
    int64_t era = (z >= 0 ? z : z - 146096) / 146097;
    int64_t doe = z - era * 146097;
    int64_t yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
    int64_t doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    int64_t mp = (5 * doy + 2) / 153;
    *d = (int)(doy - (153 * mp + 2) / 5 + 1);
    *m = (int)(mp < 10 ? mp + 3 : mp - 9);
    *y = era * 400 + yoe + (*m <= 2);
}

static int days_in_month(int64_t y, int m)
{
    static const int days[] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    int leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    return m == 2 && leap ? 29 : days[m - 1];
}

/* Reads count digits at s[*i]; 0 when they are not there. */
static int read_digits(const char *s, size_t n, size_t *i, int count, int *value)
{
    int v = 0;
    for (int k = 0; k < count; k++, (*i)++) {
        if (*i >= n || !is_digit(s[*i]))
            return 0;
        v = v * 10 + (s[*i] - '0');
    }
    *value = v;
    return 1;
}

/* A cell that starts like a date (YYYY-M) is taken for a date-time, so
 * that its errors speak of dates rather than of numbers. */
static int looks_iso(const char *s, size_t n)
{
    return n >= 6 && is_digit(s[0]) && is_digit(s[1]) && is_digit(s[2]) &&
           is_digit(s[3]) && s[4] == '-' && is_digit(s[5]);
}

static const char *parse_zone(const char *s, size_t n, size_t *i, iso_time *out)
{
    if (*i == n)
        return NULL;
    if (s[*i] == 'Z' || s[*i] == 'z') {
        (*i)++;
        out->has_zone = 1;
        return NULL;
    }
    if (s[*i] != '+' && s[*i] != '-')
        return "unexpected text after the seconds";
    int sign = s[(*i)++] == '-' ? -1 : 1, hh, mm;
    if (!read_digits(s, n, i, 2, &hh))
        return "zone offset must be +HH:MM, -HH:MM or +HHMM";
    if (*i < n && s[*i] == ':')
        (*i)++;
    if (!read_digits(s, n, i, 2, &mm))
        return "zone offset must be +HH:MM, -HH:MM or +HHMM";
    if (hh > 23 || mm > 59)
        return "zone offset out of range (hours 0-23, minutes 0-59)";
    out->zone_minutes = sign * (hh * 60 + mm);
    out->has_zone = 1;
    return NULL;
}

/* Parses YYYY-MM-DD(T| )HH:MM[:SS[.fraction]][Z|+HH:MM|-HH:MM|+HHMM] over
 * all of s[0..n). Returns NULL or what is wrong. A time without zone is
 * taken as UTC: the file's clock is used as written, with no local-time
 * rules (which would make the result depend on the machine). Second 60 (a
 * leap second) is accepted and, as in Unix time, lands on the next
 * minute's second 0. */
static const char *parse_iso(const char *s, size_t n, iso_time *out)
{
    const char *const shape = "expected a date-time like 2026-03-14T08:00:00.250+01:00";
    size_t i = 0;
    int year, month, day, hour, minute, second = 0;
    if (!read_digits(s, n, &i, 4, &year) || i >= n || s[i++] != '-' ||
        !read_digits(s, n, &i, 2, &month) || i >= n || s[i++] != '-' ||
        !read_digits(s, n, &i, 2, &day) || i >= n)
        return shape;
    char sep = s[i++];
    if ((sep != 'T' && sep != 't' && sep != ' ') || !read_digits(s, n, &i, 2, &hour) ||
        i >= n || s[i++] != ':' || !read_digits(s, n, &i, 2, &minute))
        return shape;
    if (month < 1 || month > 12)
        return "month out of range 1-12";
    if (day < 1 || day > days_in_month(year, month))
        return "day does not exist in that month";
    if (hour > 23)
        return "hour out of range 0-23";
    if (minute > 59)
        return "minute out of range 0-59";
    out->frac_s = 0.0;
    out->zone_minutes = 0;
    out->has_zone = 0;
    if (i < n && s[i] == ':') {
        i++;
        if (!read_digits(s, n, &i, 2, &second))
            return shape;
        if (second > 60)
            return "second out of range 0-60";
        /* ISO 8601 allows a comma before the fraction too. Up to 18
         * digits count (exact in uint64; 1e18 is exact in a double). */
        if (i < n && (s[i] == '.' || s[i] == ',')) {
            size_t f = ++i;
            uint64_t num = 0;
            double scale = 1.0;
            for (; i < n && is_digit(s[i]); i++)
                if (i - f < 18) {
                    num = num * 10 + (uint64_t)(s[i] - '0');
                    scale *= 10.0;
                }
            if (i == f)
                return "expected digits after the decimal point of the seconds";
            out->frac_s = (double)num / scale;
        }
    }
    const char *why = parse_zone(s, n, &i, out);
    if (why != NULL)
        return why;
    if (i != n)
        return shape;
    out->unix_s = days_from_civil(year, month, day) * 86400 + hour * 3600 +
                  minute * 60 + second - (int64_t)out->zone_minutes * 60;
    return NULL;
}

/* ------------------------------------------------------------------ */
/* Header                                                             */

/* Splits "name [unit]" into its trimmed parts (unit "" when absent). */
static el_status add_column(ingest *g, size_t c, const char *s, size_t n)
{
    trim(&s, &n);
    const char *unit = s + n;
    size_t unit_n = 0;
    if (n > 0 && s[n - 1] == ']') {
        const char *open = NULL;
        for (size_t i = n - 1; i-- > 0;)
            if (s[i] == '[') {
                open = s + i;
                break;
            }
        if (open != NULL) {
            unit = open + 1;
            unit_n = (size_t)(s + n - 1 - unit);
            trim(&unit, &unit_n);
            /* "[s]" alone names the column by its unit: keep it whole. */
            size_t name_n = (size_t)(open - s);
            trim(&s, &name_n);
            if (name_n > 0 || unit_n == 0)
                n = name_n;
        }
    }
    char *name = malloc(n + 1), *u = malloc(unit_n + 1);
    if (name == NULL || u == NULL) {
        free(name);
        free(u);
        return no_memory(g);
    }
    memcpy(name, s, n);
    name[n] = '\0';
    memcpy(u, unit, unit_n);
    u[unit_n] = '\0';
    g->t->names[c] = name;
    g->t->units[c] = u;
    return EL_OK;
}

static void list_columns(const el_table *t, char *out, size_t size)
{
    size_t w = 0;
    out[0] = '\0';
    for (size_t c = 0; c < t->n_columns && w < size; c++) {
        int k = snprintf(out + w, size - w, "%s\"%s\"", c ? ", " : "", t->names[c]);
        if (k < 0)
            break;
        w += (size_t)k;
    }
    if (w >= size && size > 4)
        memcpy(out + size - 4, "...", 4);
}

typedef struct {
    const char *name;
    size_t index;
} named_column;

/* Orders columns by name, equal names by index. */
static int compare_names(const void *a, const void *b)
{
    const named_column *x = a, *y = b;
    int c = strcmp(x->name, y->name);
    return c != 0 ? c : (x->index > y->index) - (x->index < y->index);
}

/* Empty and duplicate names. Duplicates are found by sorting the indices
 * by name (n log n: a header of 100,000 columns is checked in
 * milliseconds, where comparing every pair took most of a minute); the
 * one reported is the earliest column that repeats an earlier name, as a
 * reader scanning the header from the left would find it. */
static el_status check_names(ingest *g, const record *r)
{
    el_table *t = g->t;
    for (size_t c = 0; c < t->n_columns; c++)
        if (t->names[c][0] == '\0')
            return fail_at(g, r, g->spans[c].raw,
                           "give every column a name in the header row (a trailing "
                           "delimiter makes an empty one)",
                           "column %zu has an empty name", c + 1);
    named_column *order = malloc(t->n_columns * sizeof *order);
    if (order == NULL)
        return no_memory(g);
    for (size_t c = 0; c < t->n_columns; c++)
        order[c] = (named_column){t->names[c], c};
    qsort(order, t->n_columns, sizeof *order, compare_names);
    size_t first = NONE, second = NONE, group = 0;
    for (size_t i = 1; i < t->n_columns; i++) {
        if (strcmp(order[i - 1].name, order[i].name) != 0) {
            group = i;
            continue;
        }
        /* order[group] is the earliest column of this name. */
        if (second == NONE || order[i].index < second) {
            first = order[group].index;
            second = order[i].index;
        }
    }
    free(order);
    if (second == NONE)
        return EL_OK;
    long line, col;
    locate(r, g->spans[first].raw, &line, &col);
    char hint[EL_ERROR_TEXT_MAX];
    snprintf(hint, sizeof hint,
             "rename one of the two columns; the first is column %zu (character %ld)",
             first + 1, col);
    return fail_at(g, r, g->spans[second].raw, hint, "duplicate column name \"%.100s\"",
                   t->names[second]);
}

/* A header whose every name reads as a number is the first data row of a
 * file without header: refusing it beats silently losing that row. */
static el_status check_not_data(ingest *g, const record *r)
{
    el_table *t = g->t;
    /* A header cell must not decide the decimal separator. */
    char decimal = g->decimal;
    for (size_t c = 0; c < t->n_columns; c++) {
        double v;
        const char *s = g->spans[c].text;
        size_t n = g->spans[c].length;
        trim(&s, &n);
        if (parse_number(g, s, n, &v) != NUM_OK) {
            g->decimal = decimal;
            return EL_OK;
        }
    }
    g->decimal = decimal;
    return fail_at(g, r, 0,
                   "add a header row with one name per column, e.g. time,x,y "
                   "(a unit may follow a name as \"x [m]\")",
                   "the first row holds numbers, not column names");
}

static el_status find_time_column(ingest *g, const el_ingest_options *opt)
{
    el_table *t = g->t;
    if (opt == NULL || opt->time_column == NULL) {
        t->time_column = 0;
        return EL_OK;
    }
    long c = el_table_find(t, opt->time_column);
    if (c >= 0) {
        t->time_column = (size_t)c;
        return EL_OK;
    }
    char names[EL_ERROR_TEXT_MAX - 32];
    list_columns(t, names, sizeof names);
    el_error_set(g->err, EL_ERR_USAGE, "no column \"%.200s\" for the time", opt->time_column);
    el_error_option(g->err, "--time");
    el_error_at(g->err, g->name, g->header_line, 0);
    el_error_hint(g->err, "the columns are: %s", names);
    return EL_ERR_USAGE;
}

/* Marks the columns of a comma-separated list as asked for. Names that
 * are not in the header are left for the caller's selection to report. */
static el_status mark_list(ingest *g, const char *list)
{
    if (list == NULL)
        return EL_OK;
    size_t n = strlen(list);
    char *copy = malloc(n + 1);
    if (copy == NULL)
        return no_memory(g);
    memcpy(copy, list, n + 1);
    for (char *item = copy, *next; item != NULL; item = next) {
        next = strchr(item, ',');
        if (next != NULL)
            *next++ = '\0';
        const char *name = item;
        size_t len = strlen(item);
        trim(&name, &len);
        item[name - item + (long)len] = '\0';
        long c = el_table_find(g->t, name);
        if (c >= 0)
            g->wanted[c] = 1;
    }
    free(copy);
    return EL_OK;
}

static el_status mark_wanted(ingest *g, const el_ingest_options *opt)
{
    size_t n = g->n_columns;
    g->col_kind = calloc(n, sizeof *g->col_kind);
    g->wanted = calloc(n, sizeof *g->wanted);
    g->text_line = calloc(n, sizeof *g->text_line);
    if (g->col_kind == NULL || g->wanted == NULL || g->text_line == NULL)
        return no_memory(g);
    g->wanted[g->t->time_column] = 1;
    if (opt == NULL)
        return EL_OK;
    g->channels_listed = opt->channels != NULL && opt->channels[0] != '\0';
    el_status st = mark_list(g, opt->channels);
    return st == EL_OK ? mark_list(g, opt->inputs) : st;
}

static el_status read_header(ingest *g, const el_ingest_options *opt)
{
    record r;
    int found;
    el_status st = next_record(g, &r, &found);
    if (st != EL_OK)
        return st;
    if (!found) {
        el_error_set(g->err, EL_ERR_DATA, "the file is empty: no header row");
        el_error_at(g->err, g->name, g->rd.line, 1);
        el_error_hint(g->err, "give a CSV file whose first row names the columns "
                              "(time first), followed by one row per sample");
        return EL_ERR_DATA;
    }
    g->header_line = r.line;
    g->delim = detect_delimiter(&r);
    g->t->delimiter = g->delim;
    size_t n;
    if ((st = split_record(g, &r, &n)) != EL_OK)
        return st;
    el_table *t = g->t;
    t->names = calloc(n, sizeof *t->names);
    t->units = calloc(n, sizeof *t->units);
    t->missing = calloc(n, sizeof *t->missing);
    if (t->names == NULL || t->units == NULL || t->missing == NULL)
        return no_memory(g);
    t->n_columns = g->n_columns = n;
    for (size_t c = 0; c < n; c++)
        if ((st = add_column(g, c, g->spans[c].text, g->spans[c].length)) != EL_OK)
            return st;
    if ((st = check_names(g, &r)) != EL_OK || (st = check_not_data(g, &r)) != EL_OK)
        return st;
    if ((st = find_time_column(g, opt)) != EL_OK)
        return st;
    long line;
    locate(&r, g->spans[t->time_column].raw, &line, &g->time_header_column);
    return mark_wanted(g, opt);
}

/* ------------------------------------------------------------------ */
/* Data rows                                                          */

/* Makes room for one more row: the column-major block keeps a capacity of
 * cap rows per column and is reshaped in place when it doubles. */
static el_status grow_rows(ingest *g)
{
    el_table *t = g->t;
    if (t->n_rows < g->cap_rows)
        return EL_OK;
    size_t cap = g->cap_rows ? 2 * g->cap_rows : 256;
    size_t ncol = g->n_columns;
    if (cap > SIZE_MAX / sizeof(double) / ncol)
        return no_memory(g);
    double *v = realloc(t->values, cap * ncol * sizeof *v);
    if (v == NULL)
        return no_memory(g);
    t->values = v;
    for (size_t c = ncol; c-- > 1;)
        memmove(v + c * cap, v + c * g->cap_rows, t->n_rows * sizeof *v);
    long *lines = realloc(t->source_line, cap * sizeof *lines);
    if (lines == NULL)
        return no_memory(g);
    t->source_line = lines;
    g->cap_rows = cap;
    return EL_OK;
}

static el_status ragged(ingest *g, const record *r, size_t found)
{
    size_t off = found > g->n_columns ? g->spans[g->n_columns].raw : r->length;
    char hint[EL_ERROR_TEXT_MAX];
    snprintf(hint, sizeof hint,
             found > g->n_columns
                 ? "every row needs one cell per header column; check for a decimal "
                   "comma or a delimiter inside a cell (quote such cells)"
                 : "every row needs one cell per header column; write an empty cell "
                   "or NA for a missing value");
    return fail_at(g, r, off, hint,
                   "row has %zu fields, expected %zu as in the header (line %ld)", found,
                   g->n_columns, g->header_line);
}

/* Offset in the record where the value of field f starts (after leading
 * blanks when the cell lies in the record itself). */
static size_t value_offset(const span *f, const char *s)
{
    return f->quoted ? f->raw : f->raw + (size_t)(s - f->text);
}

static el_status time_error(ingest *g, const record *r, const span *f, const char *s,
                            size_t n, const char *what, const char *hint)
{
    char shown[CELL_SHOW_MAX * 4 + 8];
    show_cell(s, n, shown, sizeof shown);
    return fail_at(g, r, value_offset(f, s), hint, "time cell \"%s\": %s", shown, what);
}

static el_status parse_time_cell(ingest *g, const record *r, const span *f, double *out)
{
    el_table *t = g->t;
    const char *s = f->text;
    size_t n = f->length;
    trim(&s, &n);
    if (is_missing(s, n))
        return time_error(g, r, f, s, n, "the time is missing",
                          "every row needs a time; remove the row or fill in its time");
    int iso = looks_iso(s, n);
    if (g->time_kind == TIME_UNKNOWN)
        g->time_kind = iso ? TIME_ISO : TIME_NUMBER;
    if (g->time_kind == TIME_NUMBER) {
        int rc = parse_number(g, s, n, out);
        if (rc == NUM_OK)
            return EL_OK;
        if (iso)
            return time_error(g, r, f, s, n,
                              "a date-time where the first row's time was a number",
                              "write every time in the same form as the first row");
        return time_error(g, r, f, s, n,
                          rc == NUM_RANGE ? "out of range" : "neither a number nor a date-time",
                          "write the time as a number (e.g. seconds) or as an ISO 8601 "
                          "date-time like 2026-03-14T08:00:00.250+01:00");
    }
    iso_time it;
    const char *why = iso ? parse_iso(s, n, &it) : NULL;
    if (!iso) {
        double v;
        return time_error(g, r, f, s, n,
                          parse_number(g, s, n, &v) == NUM_OK
                              ? "a number where the first row's time was a date-time"
                              : "not an ISO 8601 date-time",
                          "write every time as a date-time like the first row's, e.g. "
                          "2026-03-14T08:00:00.250+01:00");
    }
    if (why != NULL)
        return time_error(g, r, f, s, n, why,
                          "write the time as YYYY-MM-DDTHH:MM:SS[.fff][Z|+HH:MM] with a "
                          "real calendar date");
    if (t->n_rows == 0) {
        t->time_is_iso = 1;
        t->time_origin_unix_s = it.unix_s;
        t->time_zone_minutes = it.zone_minutes;
        t->time_zone_known = it.has_zone;
    } else if (it.has_zone != t->time_zone_known) {
        /* Zoned and unzoned times cannot be ordered against each other. */
        return time_error(g, r, f, s, n,
                          it.has_zone ? "a date-time with a zone where the first row's had none"
                                      : "a date-time without a zone where the first row's had one",
                          "write every time alike: all with a zone (Z, +01:00) or all "
                          "without");
    }
    /* The whole-second difference is exact; adding the fraction rounds once,
     * so sub-microsecond steps survive for logs spanning years. */
    *out = (double)(it.unix_s - t->time_origin_unix_s) + it.frac_s;
    return EL_OK;
}

static el_status parse_row(ingest *g, const record *r, size_t n_fields)
{
    if (n_fields != g->n_columns)
        return ragged(g, r, n_fields);
    el_status st = grow_rows(g);
    if (st != EL_OK)
        return st;
    el_table *t = g->t;
    size_t row = t->n_rows, cap = g->cap_rows;
    for (size_t c = 0; c < g->n_columns; c++) {
        const span *f = &g->spans[c];
        double *dst = t->values + c * cap + row;
        if (c == t->time_column) {
            if ((st = parse_time_cell(g, r, f, dst)) != EL_OK)
                return st;
            continue;
        }
        unsigned char kind = g->col_kind[c];
        if (kind == COL_TEXT) {
            *dst = NAN;
            continue;
        }
        const char *s = f->text;
        size_t n = f->length;
        trim(&s, &n);
        int rc = parse_number(g, s, n, dst);
        if (rc == NUM_OK) {
            if (kind == COL_UNKNOWN)
                g->col_kind[c] = COL_NUMBER;
            continue;
        }
        if (rc == NUM_SYNTAX && is_missing(s, n)) {
            *dst = NAN;
            t->missing[c]++;
            continue;
        }
        /* A status or alarm column nobody asked for is skipped (with a
         * note), not a reason to refuse the log. A column that began with
         * numbers is a channel with a bad cell unless --channels left it
         * out: that stays an error, so a typo never drops a channel. */
        int skip = rc == NUM_SYNTAX && !g->wanted[c] &&
                   (g->channels_listed || g->col_kind[c] == COL_UNKNOWN);
        if (skip && g->skipped_any) {
            g->col_kind[c] = COL_TEXT;
            g->text_line[c] = r->line;
            *dst = NAN;
            continue;
        }
        char shown[CELL_SHOW_MAX * 4 + 8];
        show_cell(s, n, shown, sizeof shown);
        st = fail_at(g, r, value_offset(f, s),
                     number_hint(s, n, g->delim, g->decimal, rc == NUM_RANGE),
                     "cell \"%s\" in column \"%.100s\" is %s", shown, t->names[c],
                     rc == NUM_RANGE ? "out of range" : "not a number");
        if (!skip)
            return st;
        g->skip_error = *g->err;
        el_error_clear(g->err);
        g->skipped_any = 1;
        g->col_kind[c] = COL_TEXT;
        g->text_line[c] = r->line;
        *dst = NAN;
    }
    t->source_line[row] = r->line;
    t->n_rows++;
    return EL_OK;
}

static el_status read_rows(ingest *g)
{
    for (;;) {
        record r;
        int found;
        size_t n;
        el_status st = next_record(g, &r, &found);
        if (st != EL_OK)
            return st;
        if (!found)
            break;
        if ((st = split_record(g, &r, &n)) != EL_OK || (st = parse_row(g, &r, n)) != EL_OK)
            return st;
    }
    if (g->t->n_rows == 0) {
        el_error_set(g->err, EL_ERR_DATA, "the file has a header but no data rows");
        el_error_at(g->err, g->name, g->header_line, 1);
        el_error_hint(g->err, "add one row per sample below the header; rows starting "
                              "with # are comments");
        return EL_ERR_DATA;
    }
    return EL_OK;
}

/* Moves the columns together (capacity -> n_rows per column) and gives
 * back the unused memory. */
static void compact(ingest *g)
{
    el_table *t = g->t;
    for (size_t c = 1; c < g->n_columns; c++)
        memmove(t->values + c * t->n_rows, t->values + c * g->cap_rows,
                t->n_rows * sizeof *t->values);
    double *v = realloc(t->values, t->n_rows * g->n_columns * sizeof *v);
    if (v != NULL)
        t->values = v;
    long *lines = realloc(t->source_line, t->n_rows * sizeof *lines);
    if (lines != NULL)
        t->source_line = lines;
}

static int unit_from_name(const char *name, double *scale_s, const char **unit,
                          const char **how);

/* Decides the unit of the time numbers: --time-unit, the header's
 * "[unit]", a unit in or as the column name, else seconds (assumed). */
static el_status decide_time_unit(ingest *g, const el_ingest_options *opt)
{
    el_table *t = g->t;
    const char *unit = "s", *how = "assumed";
    double scale = 1.0;
    size_t tc = t->time_column;
    if (t->time_is_iso) {
        how = "iso8601";
    } else if (opt != NULL && opt->time_unit != NULL) {
        if (!el_time_unit_parse(opt->time_unit, &scale, &unit)) {
            el_error_set(g->err, EL_ERR_USAGE, "\"%.60s\" is not a unit of time",
                         opt->time_unit);
            el_error_option(g->err, "--time-unit");
            el_error_hint(g->err, "give s, ms, us, ns, min, h, d or year");
            return EL_ERR_USAGE;
        }
        how = "--time-unit";
    } else if (t->units[tc][0] != '\0') {
        if (!el_time_unit_parse(t->units[tc], &scale, &unit)) {
            el_error_set(g->err, EL_ERR_DATA,
                         "the time column \"%.100s\" has the unit \"%.40s\", which is not a "
                         "unit of time", t->names[tc], t->units[tc]);
            el_error_at(g->err, g->name, g->header_line, g->time_header_column);
            el_error_hint(g->err, "give the unit with --time-unit (s, ms, us, min, h, d or "
                                  "year), or choose the time column with --time");
            return EL_ERR_DATA;
        }
        how = "header";
    } else if (!unit_from_name(t->names[tc], &scale, &unit, &how)) {
        unit = "s";
        scale = 1.0;
        how = "assumed";
    }
    t->time_scale_s = scale;
    snprintf(t->time_unit, sizeof t->time_unit, "%s", unit);
    snprintf(t->time_unit_source, sizeof t->time_unit_source, "%s", how);
    return EL_OK;
}

/* What one file's read leaves beside its table. */
typedef struct {
    long *text_line;    /* n_columns: line of the first text cell of a skipped
                           column, 0 = a number column (owned) */
    long header_line;
} file_info;

/* Reads one stream into *table, every column kept (text columns as NaN),
 * times as written. */
static el_status read_one(FILE *stream, const char *name, const el_ingest_options *opt,
                          el_table *table, file_info *info, el_error *err)
{
    memset(table, 0, sizeof *table);
    memset(info, 0, sizeof *info);
    snprintf(table->source, sizeof table->source, "%s", name);
    ingest g;
    memset(&g, 0, sizeof g);
    g.rd.stream = stream;
    g.rd.line = 1;
    g.name = table->source;
    g.err = err;
    g.t = table;
    if (opt != NULL && (opt->decimal == '.' || opt->decimal == ','))
        g.decimal = opt->decimal;
    el_status st = check_start(&g);
    if (st == EL_OK)
        st = read_header(&g, opt);
    if (st == EL_OK)
        st = read_rows(&g);
    if (st == EL_OK)
        compact(&g);
    if (st == EL_OK && g.skipped_any) {
        /* Only text beside the time: the first text cell is the error. */
        size_t numbers = 0;
        for (size_t c = 0; c < g.n_columns; c++)
            numbers += c != table->time_column && g.col_kind[c] != COL_TEXT;
        if (numbers == 0) {
            *err = g.skip_error;
            st = EL_ERR_DATA;
        }
    }
    if (st == EL_OK)
        st = decide_time_unit(&g, opt);
    table->decimal = g.decimal ? g.decimal : '.';
    info->header_line = g.header_line;
    free(g.rd.buf);
    free(g.rd.raw);
    if (g.rd.gz_open)
        inflateEnd(&g.rd.z);
    free(g.spans);
    free(g.scratch);
    free(g.numtext);
    free(g.col_kind);
    free(g.wanted);
    if (st != EL_OK) {
        free(g.text_line);
        el_table_free(table);
        if (err->file[0] == '\0')
            el_error_at(err, name, err->line, err->column);
        return st;
    }
    info->text_line = g.text_line;
    return EL_OK;
}

static el_status table_no_memory(el_error *err, const char *name)
{
    el_error_set(err, EL_ERR_NOMEM, "out of memory while reading the log");
    el_error_at(err, name, 0, 0);
    el_error_hint(err, "the log is too large for this machine; cut it into parts");
    return EL_ERR_NOMEM;
}

/* Removes the skipped text columns and says so in one note. */
static el_status drop_text_columns(el_table *t, const long *text_line, el_error *err)
{
    size_t skipped = 0;
    char list[400] = "";
    size_t w = 0;
    for (size_t c = 0; c < t->n_columns; c++) {
        if (text_line[c] == 0)
            continue;
        if (skipped < 5 && w < sizeof list) {
            int k = snprintf(list + w, sizeof list - w, "%s\"%.60s\" (text from line %ld)",
                             skipped ? ", " : "", t->names[c], text_line[c]);
            w += k > 0 ? (size_t)k : 0;
        }
        skipped++;
    }
    if (skipped == 0)
        return EL_OK;
    if (skipped == t->n_columns - 1) {
        el_error_set(err, EL_ERR_DATA, "no column but the time holds numbers: %s", list);
        el_error_at(err, t->source, 0, 0);
        el_error_hint(err, "check the delimiter and the decimal separator (--decimal)");
        return EL_ERR_DATA;
    }
    el_status st = el_warnings_add(&t->notes,
                                   "skipped %zu column%s holding text that no option asked "
                                   "for: %s%s", skipped, skipped == 1 ? "" : "s", list,
                                   skipped > 5 ? ", ..." : "");
    if (st != EL_OK)
        return table_no_memory(err, t->source);
    size_t n = t->n_rows, kept = 0;
    for (size_t c = 0; c < t->n_columns; c++) {
        if (text_line[c] != 0) {
            free(t->names[c]);
            free(t->units[c]);
            continue;
        }
        if (c == t->time_column)
            t->time_column = kept;
        t->names[kept] = t->names[c];
        t->units[kept] = t->units[c];
        t->missing[kept] = t->missing[c];
        memmove(t->values + kept * n, t->values + c * n, n * sizeof *t->values);
        kept++;
    }
    t->n_columns = kept;
    return EL_OK;
}

/* Converts the time column to seconds and writes the notes about time. */
static el_status finish_table(el_table *t, const long *text_line, el_error *err)
{
    el_status st = drop_text_columns(t, text_line, err);
    if (st != EL_OK)
        return st;
    size_t tc = t->time_column;
    if (t->time_scale_s != 1.0) {
        double *time = t->values + tc * t->n_rows;
        for (size_t r = 0; r < t->n_rows; r++)
            time[r] *= t->time_scale_s;
    }
    if (!t->time_is_iso) {
        char *unit = malloc(2);
        if (unit == NULL)
            return table_no_memory(err, t->source);
        memcpy(unit, "s", 2);
        free(t->units[tc]);
        t->units[tc] = unit;
    }
    if (strcmp(t->time_unit_source, "assumed") == 0)
        st = el_warnings_add(&t->notes,
                             "the time column \"%.100s\" names no unit: its numbers are taken "
                             "as seconds (give --time-unit, or write the unit in the header "
                             "as \"%.60s [ms]\")", t->names[tc], t->names[tc]);
    if (st == EL_OK && t->time_is_iso && !t->time_zone_known)
        st = el_warnings_add(&t->notes,
                             "the date-times carry no zone (Z or +01:00): they are read as "
                             "local time of an unknown zone and shown without an offset; "
                             "Unix times in JSON count them as if they were UTC");
    if (st == EL_OK && t->time_scale_s >= 86400.0)
        st = el_warnings_add(&t->notes,
                             "the log's time is in %s: rates below are per second and "
                             "frequencies in Hz (once per %s = %.6g Hz)",
                             strcmp(t->time_unit, "d") == 0 ? "days" : "years",
                             strcmp(t->time_unit, "d") == 0 ? "day" : "year",
                             1.0 / t->time_scale_s);
    return st == EL_OK ? EL_OK : table_no_memory(err, t->source);
}

el_status el_table_read_stream(FILE *stream, const char *name,
                               const el_ingest_options *opt, el_table *table,
                               el_error *err)
{
    el_error local;
    if (err == NULL)
        err = &local;
    el_error_clear(err);
    if (table == NULL || stream == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_read_stream: NULL argument");
    file_info info;
    el_status st = read_one(stream, name != NULL ? name : "<stream>", opt, table, &info, err);
    if (st != EL_OK)
        return st;
    table->n_sources = 1;
    st = finish_table(table, info.text_line, err);
    free(info.text_line);
    if (st != EL_OK)
        el_table_free(table);
    return st;
}

static el_status open_log(const char *path, FILE **fp, el_error *err)
{
    if (strcmp(path, "-") == 0) {
        *fp = stdin;
        return EL_OK;
    }
    *fp = fopen(path, "rb");
    if (*fp != NULL)
        return EL_OK;
    char why[128] = "unknown reason";
    strerror_r(errno, why, sizeof why);
    el_error_clear(err);
    el_error_set(err, EL_ERR_IO, "cannot open %s: %s", path, why);
    el_error_at(err, path, 0, 0);
    el_error_hint(err, "check the path and that the file is readable; use - to read "
                       "standard input");
    return EL_ERR_IO;
}

el_status el_table_read(const char *path, const el_ingest_options *opt,
                        el_table *table, el_error *err)
{
    if (path == NULL || table == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_read: NULL argument");
    memset(table, 0, sizeof *table);
    FILE *fp;
    el_status st = open_log(path, &fp, err);
    if (st != EL_OK)
        return st;
    int is_stdin = fp == stdin;
    st = el_table_read_stream(fp, is_stdin ? "<stdin>" : path, opt, table, err);
    if (!is_stdin)
        fclose(fp);
    return st;
}

/* ------------------------------------------------------------------ */
/* Several files as one log                                           */

static el_status differs(el_error *err, const el_table *a, const el_table *b,
                         long line, const char *what, size_t column)
{
    el_error_set(err, EL_ERR_DATA, "%s differs from %s: %s", b->source, a->source, what);
    el_error_at(err, b->source, line, (long)column + 1);
    el_error_hint(err, "files read as one log need the same columns in the same order "
                       "(same names and units) and the same kind of time");
    return EL_ERR_DATA;
}

static el_status check_same_columns(const el_table *a, const el_table *b, long line,
                                    el_error *err)
{
    char what[EL_ERROR_TEXT_MAX];
    if (a->n_columns != b->n_columns) {
        snprintf(what, sizeof what, "it has %zu columns, the first file %zu", b->n_columns,
                 a->n_columns);
        return differs(err, a, b, line, what, 0);
    }
    for (size_t c = 0; c < a->n_columns; c++)
        if (strcmp(a->names[c], b->names[c]) != 0 || strcmp(a->units[c], b->units[c]) != 0) {
            snprintf(what, sizeof what, "column %zu is \"%.100s [%.30s]\", not \"%.100s [%.30s]\"",
                     c + 1, b->names[c], b->units[c], a->names[c], a->units[c]);
            return differs(err, a, b, line, what, c);
        }
    if (a->time_column != b->time_column || a->time_is_iso != b->time_is_iso ||
        a->time_zone_known != b->time_zone_known)
        return differs(err, a, b, line,
                       a->time_is_iso != b->time_is_iso
                           ? "one writes times as date-times, the other as numbers"
                           : "one writes date-times with a zone, the other without",
                       b->time_column);
    return EL_OK;
}

/* First time of table i on the common clock (ISO: Unix seconds). */
static double first_time(const el_table *t)
{
    double t0 = t->values[t->time_column * t->n_rows];
    return t->time_is_iso ? (double)t->time_origin_unix_s + t0 : t0;
}

/* Joins the parts (in order of their first time) into *out. */
static el_status join_tables(el_table *parts, long **text_lines, size_t n,
                             const char *const *paths, el_table *out, long *text_line,
                             el_error *err)
{
    size_t *order = malloc(n * sizeof *order);
    if (order == NULL)
        return table_no_memory(err, paths[0]);
    for (size_t i = 0; i < n; i++)
        order[i] = i;
    for (size_t i = 1; i < n; i++) /* insertion sort: stable, n is small */
        for (size_t k = i; k > 0 && first_time(&parts[order[k]]) < first_time(&parts[order[k - 1]]); k--) {
            size_t tmp = order[k];
            order[k] = order[k - 1];
            order[k - 1] = tmp;
        }
    const el_table *ref = &parts[order[0]];
    size_t rows = 0, nc = ref->n_columns;
    for (size_t i = 0; i < n; i++)
        rows += parts[i].n_rows;
    memset(out, 0, sizeof *out);
    out->values = malloc(rows * nc * sizeof *out->values);
    out->source_line = malloc(rows * sizeof *out->source_line);
    out->source_file = malloc(rows * sizeof *out->source_file);
    out->sources = calloc(n, sizeof *out->sources);
    out->missing = calloc(nc, sizeof *out->missing);
    out->names = calloc(nc, sizeof *out->names);
    out->units = calloc(nc, sizeof *out->units);
    int ok = out->values && out->source_line && out->source_file && out->sources &&
             out->missing && out->names && out->units;
    for (size_t i = 0; ok && i < n; i++)
        ok = (out->sources[i] = strdup(paths[i])) != NULL;
    out->n_sources = n;
    if (!ok) {
        free(order);
        return table_no_memory(err, paths[0]);
    }
    /* Names and units move from the reference part. */
    out->n_columns = nc;
    for (size_t c = 0; c < nc; c++) {
        out->names[c] = parts[order[0]].names[c];
        out->units[c] = parts[order[0]].units[c];
        parts[order[0]].names[c] = parts[order[0]].units[c] = NULL;
    }
    size_t row = 0;
    for (size_t k = 0; k < n; k++) {
        const el_table *p = &parts[order[k]];
        double shift = p->time_is_iso ? (double)(p->time_origin_unix_s - ref->time_origin_unix_s)
                                      : 0.0;
        for (size_t c = 0; c < nc; c++) {
            double *dst = out->values + c * rows + row;
            memcpy(dst, p->values + c * p->n_rows, p->n_rows * sizeof *dst);
            if (c == ref->time_column && shift != 0.0)
                for (size_t r = 0; r < p->n_rows; r++)
                    dst[r] += shift;
            out->missing[c] += p->missing[c];
            if (text_line[c] == 0)
                text_line[c] = text_lines[order[k]][c];
        }
        memcpy(out->source_line + row, p->source_line, p->n_rows * sizeof *out->source_line);
        for (size_t r = 0; r < p->n_rows; r++)
            out->source_file[row + r] = (unsigned)order[k];
        row += p->n_rows;
    }
    out->n_rows = rows;
    out->time_column = ref->time_column;
    out->time_is_iso = ref->time_is_iso;
    out->time_origin_unix_s = ref->time_origin_unix_s;
    out->time_zone_minutes = ref->time_zone_minutes;
    out->time_zone_known = ref->time_zone_known;
    out->time_scale_s = ref->time_scale_s;
    memcpy(out->time_unit, ref->time_unit, sizeof out->time_unit);
    memcpy(out->time_unit_source, ref->time_unit_source, sizeof out->time_unit_source);
    out->delimiter = ref->delimiter;
    out->decimal = ref->decimal;
    snprintf(out->source, sizeof out->source, "%.200s (+%zu file%s)", paths[0], n - 1,
             n == 2 ? "" : "s");
    free(order);
    return EL_OK;
}

el_status el_table_read_files(const char *const *paths, size_t n_paths,
                              const el_ingest_options *opt, el_table *table,
                              el_error *err)
{
    el_error local;
    if (err == NULL)
        err = &local;
    el_error_clear(err);
    if (table == NULL || (paths == NULL && n_paths > 0))
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_read_files: NULL argument");
    memset(table, 0, sizeof *table);
    if (n_paths == 0) {
        el_error_set(err, EL_ERR_USAGE, "no log file given");
        el_error_hint(err, "give one or more CSV files, or - for standard input");
        return EL_ERR_USAGE;
    }
    if (n_paths == 1)
        return el_table_read(paths[0], opt, table, err);
    el_table *parts = calloc(n_paths, sizeof *parts);
    long **lines = calloc(n_paths, sizeof *lines);
    long *text_line = NULL;
    el_status st = parts != NULL && lines != NULL ? EL_OK : table_no_memory(err, paths[0]);
    for (size_t i = 0; st == EL_OK && i < n_paths; i++) {
        FILE *fp;
        file_info info = {0};
        if ((st = open_log(paths[i], &fp, err)) != EL_OK)
            break;
        int is_stdin = fp == stdin;
        st = read_one(fp, is_stdin ? "<stdin>" : paths[i], opt, &parts[i], &info, err);
        if (!is_stdin)
            fclose(fp);
        lines[i] = info.text_line;
        if (st == EL_OK && i > 0)
            st = check_same_columns(&parts[0], &parts[i], info.header_line, err);
    }
    if (st == EL_OK && (text_line = calloc(parts[0].n_columns, sizeof *text_line)) == NULL)
        st = table_no_memory(err, paths[0]);
    if (st == EL_OK)
        st = join_tables(parts, lines, n_paths, paths, table, text_line, err);
    if (st == EL_OK)
        st = finish_table(table, text_line, err);
    for (size_t i = 0; parts != NULL && i < n_paths; i++) {
        el_table_free(&parts[i]);
        free(lines[i]);
    }
    free(parts);
    free(lines);
    free(text_line);
    if (st != EL_OK)
        el_table_free(table);
    return st;
}

double el_table_time_unit_s(const el_table *table)
{
    if (table == NULL || table->time_is_iso || table->time_scale_s == 0.0)
        return 1.0;
    return table->time_scale_s;
}

const char *el_table_row_source(const el_table *table, size_t row)
{
    if (table == NULL)
        return "";
    if (table->n_sources > 1 && table->source_file != NULL && table->sources != NULL &&
        row < table->n_rows)
        return table->sources[table->source_file[row]];
    return table->source;
}

void el_table_free(el_table *table)
{
    if (table == NULL)
        return;
    for (size_t c = 0; c < table->n_columns; c++) {
        if (table->names != NULL)
            free(table->names[c]);
        if (table->units != NULL)
            free(table->units[c]);
    }
    for (size_t i = 0; table->sources != NULL && i < table->n_sources; i++)
        free(table->sources[i]);
    free(table->sources);
    free(table->source_file);
    free(table->names);
    free(table->units);
    free(table->values);
    free(table->source_line);
    free(table->missing);
    el_warnings_free(&table->notes);
    memset(table, 0, sizeof *table);
}

/* Splits text into a trimmed name and the trimmed unit of a trailing
 * "[unit]", as the header reader does ("" unit when there is none). */
static void split_name_unit(const char *text, const char **name, size_t *name_n,
                            const char **unit, size_t *unit_n)
{
    const char *s = text;
    size_t n = strlen(text);
    trim(&s, &n);
    *name = s;
    *name_n = n;
    *unit = s + n;
    *unit_n = 0;
    if (n == 0 || s[n - 1] != ']')
        return;
    for (size_t i = n - 1; i-- > 0;)
        if (s[i] == '[') {
            const char *u = s + i + 1;
            size_t un = n - 1 - (i + 1), nn = i;
            trim(&u, &un);
            trim(&s, &nn);
            *name_n = nn;
            *unit = u;
            *unit_n = un;
            return;
        }
}

long el_table_find(const el_table *table, const char *name)
{
    if (table == NULL || name == NULL || table->names == NULL)
        return -1;
    for (size_t c = 0; c < table->n_columns; c++)
        if (strcmp(table->names[c], name) == 0)
            return (long)c;
    /* "accel_a [m/s2]" as the header writes it: name and unit both match
     * (spacing before the bracket may differ). */
    const char *qn, *qu;
    size_t qn_n, qu_n;
    split_name_unit(name, &qn, &qn_n, &qu, &qu_n);
    if (qu_n == 0 && qn_n == strlen(name))
        return -1;
    for (size_t c = 0; c < table->n_columns; c++) {
        const char *u = table->units != NULL && table->units[c] != NULL ? table->units[c] : "";
        if (strlen(table->names[c]) == qn_n && memcmp(table->names[c], qn, qn_n) == 0 &&
            strlen(u) == qu_n && memcmp(u, qu, qu_n) == 0)
            return (long)c;
    }
    return -1;
}

/* ------------------------------------------------------------------ */
/* Units of time                                                      */

typedef struct {
    const char *spelling;
    const char *name;
    double scale_s;
} time_unit_word;

/* The Julian year (365.25 d = 31,557,600 s) is the year of astronomy (IAU
 * 1976) and the mean length of a calendar year to 3 in 10^5 (the
 * Gregorian mean is 365.2425 d): a monthly or yearly series in decimal
 * years is converted with it. */
static const time_unit_word TIME_UNITS[] = {
    {"s", "s", 1.0},           {"sec", "s", 1.0},          {"secs", "s", 1.0},
    {"second", "s", 1.0},      {"seconds", "s", 1.0},
    {"ms", "ms", 1e-3},        {"msec", "ms", 1e-3},       {"msecs", "ms", 1e-3},
    {"millisecond", "ms", 1e-3}, {"milliseconds", "ms", 1e-3},
    {"us", "us", 1e-6},        {"\xc2\xb5s", "us", 1e-6},  {"\xce\xbcs", "us", 1e-6},
    {"usec", "us", 1e-6},      {"usecs", "us", 1e-6},
    {"microsecond", "us", 1e-6}, {"microseconds", "us", 1e-6},
    {"ns", "ns", 1e-9},        {"nsec", "ns", 1e-9},
    {"nanosecond", "ns", 1e-9}, {"nanoseconds", "ns", 1e-9},
    {"min", "min", 60.0},      {"mins", "min", 60.0},      {"minute", "min", 60.0},
    {"minutes", "min", 60.0},
    {"h", "h", 3600.0},        {"hr", "h", 3600.0},        {"hrs", "h", 3600.0},
    {"hour", "h", 3600.0},     {"hours", "h", 3600.0},
    {"d", "d", 86400.0},       {"day", "d", 86400.0},      {"days", "d", 86400.0},
    {"y", "year", 31557600.0}, {"yr", "year", 31557600.0}, {"yrs", "year", 31557600.0},
    {"year", "year", 31557600.0}, {"years", "year", 31557600.0},
};

static int unit_lookup(const char *s, size_t n, double *scale_s, const char **name)
{
    for (size_t i = 0; i < sizeof TIME_UNITS / sizeof TIME_UNITS[0]; i++)
        if (equals_nocase(s, n, TIME_UNITS[i].spelling)) {
            *scale_s = TIME_UNITS[i].scale_s;
            *name = TIME_UNITS[i].name;
            return 1;
        }
    return 0;
}

int el_time_unit_parse(const char *text, double *scale_s, const char **name)
{
    if (text == NULL)
        return 0;
    const char *s = text;
    size_t n = strlen(text);
    trim(&s, &n);
    return unit_lookup(s, n, scale_s, name);
}

/* The unit a numeric time column's name carries: "t (s)", "time/ms",
 * "time_s", or a name that is itself a unit ("hours", "year", "ms").
 * Returns 1 and how it was found ("header" for a written unit, "column
 * name" for a name that only suggests one), else 0. */
static int unit_from_name(const char *name, double *scale_s, const char **unit,
                          const char **how)
{
    size_t n = strlen(name);
    if (n > 2 && name[n - 1] == ')') {
        const char *open = NULL;
        for (size_t i = n - 1; i-- > 1;)
            if (name[i] == '(') {
                open = name + i;
                break;
            }
        if (open != NULL) {
            const char *u = open + 1;
            size_t un = (size_t)(name + n - 1 - u);
            trim(&u, &un);
            if (unit_lookup(u, un, scale_s, unit)) {
                *how = "header";
                return 1;
            }
        }
    }
    const char *slash = strrchr(name, '/');
    if (slash != NULL && slash > name) {
        const char *u = slash + 1;
        size_t un = strlen(u);
        trim(&u, &un);
        if (unit_lookup(u, un, scale_s, unit)) {
            *how = "header";
            return 1;
        }
    }
    const char *under = strrchr(name, '_');
    if (under != NULL && under > name && unit_lookup(under + 1, strlen(under + 1), scale_s, unit)) {
        *how = "column name";
        return 1;
    }
    if (unit_lookup(name, n, scale_s, unit)) {
        *how = "column name";
        return 1;
    }
    return 0;
}

/* ------------------------------------------------------------------ */
/* Times on the command line                                          */

/* Reads "YYYY-MM-DD" alone as midnight, so --from 2026-03-14 works. */
static const char *parse_iso_or_date(const char *s, size_t n, iso_time *out)
{
    if (n == 10) {
        char full[20];
        memcpy(full, s, 10);
        memcpy(full + 10, "T00:00:00", 9);
        return parse_iso(full, 19, out);
    }
    return parse_iso(s, n, out);
}

el_status el_table_parse_time(const el_table *table, const char *text,
                              double *time_out, el_error *err)
{
    if (table == NULL || text == NULL || time_out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_parse_time: NULL argument");
    ingest g;
    memset(&g, 0, sizeof g);
    g.decimal = '.';
    const char *s = text;
    size_t n = strlen(text);
    trim(&s, &n);
    double v;
    int rc = parse_number(&g, s, n, &v);
    iso_time it;
    const char *why = rc == NUM_OK || !table->time_is_iso ? "" : parse_iso_or_date(s, n, &it);
    free(g.numtext);
    if (rc == NUM_OK) {
        /* A number is in the log's own unit (ISO: seconds from the start). */
        *time_out = v * el_table_time_unit_s(table);
        return EL_OK;
    }
    if (why == NULL && it.has_zone && !table->time_zone_known) {
        el_error_set(err, EL_ERR_USAGE, "the time \"%.100s\" has a zone, the log's times have none",
                     text);
        el_error_hint(err, "give the time without a zone, on the log's own clock");
        return EL_ERR_USAGE;
    }
    if (why == NULL) {
        /* Without a zone, the time is read on the clock of the file's first
         * row, which is what a person copying a time from the log means. */
        if (!it.has_zone)
            it.unix_s -= (int64_t)table->time_zone_minutes * 60;
        *time_out = (double)(it.unix_s - table->time_origin_unix_s) + it.frac_s;
        return EL_OK;
    }
    el_error_set(err, EL_ERR_USAGE, "cannot read the time \"%.100s\"%s%s", text,
                 *why ? ": " : "", why);
    if (table->time_is_iso)
        el_error_hint(err, "give a date-time like 2026-03-14T08:00:00 (zone optional, "
                           "default that of the log) or seconds from the log's start");
    else
        el_error_hint(err, "give a number in the unit of the time column \"%.100s\" (%s)%s",
                      table->names != NULL ? table->names[table->time_column] : "",
                      table->time_unit[0] ? table->time_unit : "s",
                      looks_iso(s, n) ? "; this log's time is a plain number, not a date-time"
                                      : "");
    return EL_ERR_USAGE;
}

static int64_t floor_div(int64_t a, int64_t b)
{
    int64_t q = a / b;
    return (a % b != 0 && (a < 0) != (b < 0)) ? q - 1 : q;
}

char *el_table_format_time(const el_table *table, double t, char *buf, size_t size)
{
    if (buf == NULL || size == 0)
        return buf;
    /* 1e14 s is far beyond year 9999 and keeps t * 1000 exact in int64. */
    if (table == NULL || !table->time_is_iso || !isfinite(t) || fabs(t) > 1e14) {
        snprintf(buf, size, "%.9g", t / el_table_time_unit_s(table));
        return buf;
    }
    int zone = table->time_zone_minutes;
    int64_t ms = (int64_t)floor(t * 1000.0 + 0.5) +
                 (table->time_origin_unix_s + (int64_t)zone * 60) * 1000;
    int64_t days = floor_div(ms, 86400000);
    int64_t in_day = ms - days * 86400000;
    int64_t y;
    int m, d;
    civil_from_days(days, &y, &m, &d);
    int za = zone < 0 ? -zone : zone;
    int k = snprintf(buf, size, "%04lld-%02d-%02dT%02d:%02d:%02d.%03d", (long long)y, m, d,
                     (int)(in_day / 3600000), (int)(in_day / 60000 % 60),
                     (int)(in_day / 1000 % 60), (int)(in_day % 1000));
    /* No offset for a log without zone: it is not UTC, only unknown. */
    if (table->time_zone_known && k > 0 && (size_t)k < size)
        snprintf(buf + k, size - (size_t)k, "%c%02d:%02d", zone < 0 ? '-' : '+', za / 60,
                 za % 60);
    return buf;
}

/* ------------------------------------------------------------------ */
/* Scan                                                               */

static int compare_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static void column_stats(const double *v, size_t n, el_column_stats *s)
{
    double sum = 0.0, lo = INFINITY, hi = -INFINITY;
    size_t present = 0;
    for (size_t r = 0; r < n; r++) {
        if (isnan(v[r]))
            continue;
        present++;
        sum += v[r];
        lo = v[r] < lo ? v[r] : lo;
        hi = v[r] > hi ? v[r] : hi;
    }
    memset(s, 0, sizeof *s);
    s->present = present;
    s->missing = n - present;
    if (present == 0)
        return;
    double mean = sum / (double)present, ss = 0.0;
    if (!isfinite(mean))
        mean = lo / 2 + hi / 2; /* the sum overflowed: any value inside will do */
    /* Second pass on deviations scaled by the largest (no cancellation for
     * large offsets, and no underflow: a channel varying at 1e-170 has a
     * spread, squares of 1e-170 would not). */
    double largest = fmax(hi - mean, mean - lo);
    if (largest > 0.0)
        for (size_t r = 0; r < n; r++)
            if (!isnan(v[r])) {
                double d = (v[r] - mean) / largest;
                ss += d * d;
            }
    s->mean = mean;
    s->min = lo;
    s->max = hi;
    s->std = present > 1 && largest > 0.0 ? largest * sqrt(ss / (double)(present - 1)) : 0.0;
    /* The rule of el_stats_spread, which refuses such a channel in a fit. */
    s->constant = lo == hi || s->std <= 1e-12 * fabs(mean);
}

el_status el_scan_table(const el_table *table, el_scan *scan, el_error *err)
{
    if (table == NULL || scan == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_scan_table: NULL argument");
    memset(scan, 0, sizeof *scan);
    size_t n = table->n_rows;
    if (n < 2) {
        el_error_set(err, EL_ERR_DATA, "the log has %zu row%s; a scan needs at least 2", n,
                     n == 1 ? "" : "s");
        el_error_at(err, table->source, n == 1 ? table->source_line[0] : 0, 0);
        el_error_hint(err, "give a log with at least two samples");
        return EL_ERR_DATA;
    }
    const double *t = table->values + table->time_column * n;
    double *steps = malloc((n - 1) * sizeof *steps);
    el_column_stats *cols = calloc(table->n_columns, sizeof *cols);
    if (steps == NULL || cols == NULL) {
        free(steps);
        free(cols);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory in scan");
    }
    size_t first_back = 0;
    for (size_t r = 0; r + 1 < n; r++) {
        steps[r] = t[r + 1] - t[r];
        if (steps[r] <= 0.0 && scan->nonpositive_steps++ == 0)
            first_back = r + 1;
        scan->backward_steps += steps[r] < 0.0;
        scan->repeated_steps += steps[r] == 0.0;
    }
    qsort(steps, n - 1, sizeof *steps, compare_double);
    size_t m = n - 1;
    double median = m % 2 ? steps[m / 2] : 0.5 * (steps[m / 2 - 1] + steps[m / 2]);
    if (!(median > 0.0)) {
        free(steps);
        free(cols);
        el_error_set(err, EL_ERR_DATA,
                     "the time column \"%.100s\" does not increase (median step %.9g)",
                     table->names[table->time_column], median);
        el_error_at(err, el_table_row_source(table, first_back), table->source_line[first_back],
                    0);
        el_error_hint(err, "sort the rows by time, or choose the time column with --time");
        memset(scan, 0, sizeof *scan);
        return EL_ERR_DATA;
    }
    scan->n_rows = n;
    scan->time_first = t[0];
    scan->time_last = t[n - 1];
    scan->dt_median = median;
    scan->dt_min = steps[0];
    scan->dt_max = steps[m - 1];
    for (size_t r = 0; r < m; r++) {
        double dev = fabs(steps[r] - median) / median;
        scan->jitter = dev > scan->jitter ? dev : scan->jitter;
        scan->long_steps += steps[r] > 1.5 * median;
    }
    free(steps);
    for (size_t c = 0; c < table->n_columns; c++)
        column_stats(table->values + c * n, n, &cols[c]);
    scan->columns = cols;
    return EL_OK;
}

void el_scan_free(el_scan *scan)
{
    if (scan == NULL)
        return;
    free(scan->columns);
    memset(scan, 0, sizeof *scan);
}
