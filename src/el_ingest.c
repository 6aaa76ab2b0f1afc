/* el_ingest: streaming CSV reader (RFC 4180 quoting, header with units,
 * delimiter detection, number and ISO 8601 time cells) from a byte source
 * (el_source) into a table (el_table). */
/* madvise and MADV_DONTNEED (Linux, BSD) are outside strict POSIX: ask
 * glibc for them; used only when defined. */
#define _DEFAULT_SOURCE 1
#include "el_ingest.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>

#include "el_chunks.h"
#include "el_datecols.h"
#include "el_dedup.h"
#include "el_number.h"
#include "el_record.h"
#include "el_rows.h"
#include "el_source.h"
#include "el_text.h"
#include "el_timefmt.h"
#include "el_units.h"

/* A mapped file is read by several threads only when each gets at least
 * this many bytes: below, starting threads costs more than it saves. */
#define MIN_CHUNK_BYTES ((size_t)1 << 20)
/* At most this many parts (el_chunks runs at most 16 threads). */
#define MAX_CHUNKS 16

/* How much of an offending cell an error message quotes. */
#define CELL_SHOW_MAX 40
#define NONE ((size_t)-1)

/* ------------------------------------------------------------------ */
/* Reading records                                                    */


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

enum { TIME_UNKNOWN, TIME_NUMBER, TIME_ISO, TIME_LOCAL, TIME_CLOCK };

typedef struct {
    el_source rd;
    const char *name;
    el_error *err;
    char delim;
    size_t n_columns;
    long header_line;
    span *spans;
    size_t spans_cap;
    char *scratch;      /* unescaped quoted fields of one record */
    size_t scratch_cap;
    el_table *t;
    size_t cap_rows;
    int time_kind;
    char decimal;       /* '.', ',' or 0 = not decided yet (first number with
                           a separator decides; a comma only when the
                           delimiter is not a comma) */
    int zone_seen;      /* ISO: the first row had a zone */
    char date_order;    /* dates with the year last: EL_DATE_DMY, EL_DATE_MDY, 0 not
                           settled yet (--date-order, else the first date that can) */
    unsigned char *col_kind;  /* n_columns: COL_UNKNOWN, COL_NUMBER, COL_TEXT */
    unsigned char *wanted;    /* n_columns: asked for with --channels/--input */
    long *text_line;          /* n_columns: line of the first text cell, 0 = none */
    int channels_listed;      /* 1: --channels named the state columns */
    long time_header_column;  /* character column of the time column's name */
    el_error skip_error;      /* the error the first skipped text cell would have
                                 been: given when no number column is left */
    int skipped_any;
    int time_unit_from_row;   /* 1: the time column's unit came from a units row */
    size_t first_row_bytes;   /* length of the first data row (size estimates) */
    size_t threads;           /* el_ingest_options.threads, 0 resolved */
    int chunks_tried;         /* 1: the parallel read was considered */
    el_row_part chunks[MAX_CHUNKS]; /* parts 1..n_chunks (part 0 is the reader's own),
                                       read by threads into their rows of the table */
    size_t n_chunks, next_chunk;
    size_t text_released;     /* bytes of the mapped text given back (release_text) */
    size_t clock_column1;     /* 1 + the column holding the time of day when the time
                                 column holds dates only (el_datecols); 0 none */
    char joined[128];         /* that row's date and time of day, joined */
    el_clock_run clock;       /* TIME_CLOCK: the midnights crossed so far */
} ingest;

enum { COL_UNKNOWN, COL_NUMBER, COL_TEXT };


static el_status no_memory(ingest *g)
{
    el_error_set(g->err, EL_ERR_NOMEM, "out of memory while reading the log");
    el_error_at(g->err, g->name, 0, 0);
    el_error_hint(g->err, "the log is too large for this machine; cut it into parts");
    return EL_ERR_NOMEM;
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
    el_source *rd = &g->rd;
    for (;;) {
        el_record_scan_state s = {0, EL_RECORD_UNKNOWN, 0, 0, 0, 0, NONE};
        size_t stop = 0;
        int terminated;
        for (;;) {
            terminated = el_record_scan(rd->buf + rd->beg, rd->end - rd->beg, &s, &stop);
            if (terminated || rd->eof)
                break;
            el_status st = el_source_refill(rd);
            if (st != EL_OK)
                return st;
        }
        size_t avail = rd->end - rd->beg;
        if (!terminated) {
            if (avail == 0 || s.kind == EL_RECORD_UNKNOWN) {
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
        if (s.kind != EL_RECORD_DATA)
            continue;
        if (r.length > 0 && r.text[r.length - 1] == '\r')
            r.length--;
        *rec = r;
        *found = 1;
        return EL_OK;
    }
}

/* ------------------------------------------------------------------ */
/* Fields                                                             */

static el_status push_span(ingest *g, size_t *n, const char *text, size_t length,
                           size_t raw, int quoted)
{
    void *p = g->spans;
    if (!el_source_reserve(&p, &g->spans_cap, *n + 1, sizeof *g->spans))
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
    while (i < r->length && el_text_is_blank(p[i]) && p[i] != g->delim)
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
    if (!el_source_reserve((void **)&g->scratch, &g->scratch_cap, r->length + 1, 1))
        return no_memory(g);
    const char *p = r->text;
    size_t i = 0, n = 0, w = 0;
    for (;;) {
        size_t j = i;
        while (j < r->length && el_text_is_blank(p[j]) && p[j] != g->delim)
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

/* Copies a cell for a message: control bytes escaped, long cells cut. */
static void show_cell(const char *s, size_t n, char *out, size_t size)
{
    el_text_show(s, n, CELL_SHOW_MAX, out, size);
}

/* ------------------------------------------------------------------ */
/* Numbers                                                            */

/* Header                                                             */

/* Splits "name [unit]" into its trimmed parts (unit "" when absent). */
static el_status add_column(ingest *g, size_t c, const char *s, size_t n)
{
    el_text_trim(&s, &n);
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
            el_text_trim(&unit, &unit_n);
            /* "[s]" alone names the column by its unit: keep it whole. */
            size_t name_n = (size_t)(open - s);
            el_text_trim(&s, &name_n);
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
        el_text_trim(&s, &n);
        if (el_number_parse(s, n, &g->decimal, g->delim, &v) != EL_NUM_OK) {
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
    el_table_list_columns(t, 1, 1, names, sizeof names);
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
        el_text_trim(&name, &len);
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
    g->delim = el_record_delimiter(r.text, r.length);
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
/* A row of units under the header                                    */

/* The split record's cells as the units row stage takes them (a row of
 * n_fields; 0 when it is not a row of the header's width). */
static el_units_cell *units_cells(ingest *g, size_t n_fields)
{
    if (n_fields != g->n_columns)
        return NULL;
    el_units_cell *cells = malloc(n_fields * sizeof *cells);
    for (size_t c = 0; cells != NULL && c < n_fields; c++)
        cells[c] = (el_units_cell){g->spans[c].text, g->spans[c].length};
    return cells;
}

/* Takes the units of a row of units; a unit that differs from its
 * header's is an error at its cell. */
static el_status take_units(ingest *g, const record *r, const el_units_cell *cells)
{
    el_table *t = g->t;
    size_t c = 0;
    el_status st = el_units_row_take(t, cells, g->n_columns, &c, &g->time_unit_from_row, g->err);
    if (st != EL_ERR_DATA) {
        t->units_line = r->line;
        return st;
    }
    const char *s;
    size_t n;
    char shown[CELL_SHOW_MAX * 4 + 8];
    el_units_row_unit(&cells[c], &s, &n);
    show_cell(s, n, shown, sizeof shown);
    return fail_at(g, r, g->spans[c].raw,
                   "write each unit once: in the header as \"name [unit]\" or in the row "
                   "of units under it",
                   "the row of units gives \"%s\" for \"%.100s\", whose header says "
                   "\"%.40s\"",
                   shown, t->names[c], t->units[c]);
}

static el_status parse_row(ingest *g, const record *r, size_t n_fields);

/* Reads the first record after the header: a row of units (many loggers
 * write one: "s,bar,l/min") is taken as the columns' units, anything else
 * is the first data row, read as read_rows reads every row. */
static el_status first_row(ingest *g)
{
    record r;
    int found;
    size_t n;
    el_status st = next_record(g, &r, &found);
    if (st != EL_OK || !found)
        return st;
    if ((st = split_record(g, &r, &n)) != EL_OK)
        return st;
    el_units_cell *cells = units_cells(g, n);
    if (cells == NULL && n == g->n_columns)
        return no_memory(g);
    if (cells != NULL && el_units_row_is(cells, n, g->t->time_column, g->delim, g->decimal))
        st = take_units(g, &r, cells);
    else
        st = parse_row(g, &r, n);
    free(cells);
    return st;
}

/* ------------------------------------------------------------------ */
/* Data rows                                                          */

/* Rows the rest of a mapped file will give beside those read, from its
 * size and the first row's bytes (+1/8 as margin for rows that grow
 * longer): the columns are allocated once instead of moved at every
 * doubling (when the parallel read does not count them exactly). */
static size_t estimate_rows(const ingest *g)
{
    size_t row_bytes = g->first_row_bytes + 1;
    size_t rows = (g->rd.end - g->rd.beg) / row_bytes;
    return g->t->n_rows + rows + rows / 8 + 256;
}

/* Gives the table a capacity of exactly cap rows per column (cap >=
 * n_rows): a new block with the rows read so far copied over. Used when
 * few rows are read (the size is decided after the first row), so the
 * copy is small. */
static el_status resize_rows(ingest *g, size_t cap)
{
    el_table *t = g->t;
    size_t ncol = g->n_columns;
    if (cap > SIZE_MAX / sizeof(double) / ncol)
        return no_memory(g);
    double *v = malloc(cap * ncol * sizeof *v);
    if (v == NULL)
        return no_memory(g);
    el_rows_advise_large(v, cap * ncol * sizeof *v);
    for (size_t c = 0; c < ncol && t->n_rows > 0; c++)
        memcpy(v + c * cap, t->values + c * g->cap_rows, t->n_rows * sizeof *v);
    long *lines = realloc(t->source_line, cap * sizeof *lines);
    if (lines == NULL) {
        free(v);
        return no_memory(g);
    }
    /* The line numbers too: 8 MB at a million rows, 2,000 faults in
     * small pages. */
    el_rows_advise_large(lines, cap * sizeof *lines);
    free(t->values);
    t->values = v;
    t->source_line = lines;
    g->cap_rows = cap;
    return EL_OK;
}

/* Makes room for one more row: the column-major block keeps a capacity of
 * cap rows per column and is reshaped in place when it doubles. It starts
 * at 256 rows; a mapped file's table is sized once its first row is read
 * (read_in_parts). */
static el_status grow_rows(ingest *g)
{
    el_table *t = g->t;
    if (t->n_rows < g->cap_rows)
        return EL_OK;
    /* Parts not yet taken hold rows beyond n_rows that a move would lose:
     * they are read again by the reader instead (it never comes here
     * before the last part is taken: a part's rows were counted in). */
    g->next_chunk = g->n_chunks;
    size_t cap = g->cap_rows ? 2 * g->cap_rows : 256;
    size_t ncol = g->n_columns;
    if (cap > SIZE_MAX / sizeof(double) / ncol)
        return no_memory(g);
    double *v = realloc(t->values, cap * ncol * sizeof *v);
    if (v == NULL)
        return no_memory(g);
    el_rows_advise_large(v, cap * ncol * sizeof *v);
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
    /* A date joined with its time of day lies outside the record. */
    size_t off = s == g->joined ? value_offset(f, f->text) : value_offset(f, s);
    return fail_at(g, r, off, hint, "time cell \"%s\": %s", shown, what);
}

/* At the first data row: a time column of dates alone followed by a
 * column of times of day (spreadsheet exports) makes the two one time
 * (el_datecols), named by both; the second is then no channel, and is
 * dropped by el_table_finish without a note (text_line -1). */
static void find_clock_column(ingest *g)
{
    size_t tc = g->t->time_column;
    if (g->t->n_rows > 0 || tc + 1 >= g->n_columns)
        return;
    const char *d = g->spans[tc].text, *c = g->spans[tc + 1].text;
    size_t nd = g->spans[tc].length, nc = g->spans[tc + 1].length;
    el_text_trim(&d, &nd);
    el_text_trim(&c, &nc);
    char *both;
    if (!el_datecols_is_date(d, nd) || !el_datecols_is_clock(c, nc)
        || (both = el_datecols_name(g->t->names[tc], g->t->names[tc + 1])) == NULL)
        return;
    free(g->t->names[tc]);
    g->t->names[tc] = both;
    g->clock_column1 = tc + 2;
    g->col_kind[tc + 1] = COL_TEXT;
    g->text_line[tc + 1] = -1;
}

/* A time of day without a date (el_table.h, time_is_clock). */
static el_status clock_time(ingest *g, const record *r, const span *f, const char *s,
                            size_t n, double *out)
{
    long whole = 0;
    double frac = 0.0;
    const char *why = el_datecols_clock_seconds(s, n, &whole, &frac);
    if (why != NULL)
        return time_error(g, r, f, s, n, why,
                          "write every time as a time of day like the first row's "
                          "(HH:MM:SS, a fraction after a point or comma), or give each "
                          "row its date");
    *out = el_clock_run_next(&g->clock, whole, frac);
    g->t->time_is_clock = 1;
    g->t->clock_origin_s = g->clock.origin_s;
    g->t->clock_midnights = g->clock.midnights;
    return EL_OK;
}

static el_status parse_time_cell(ingest *g, const record *r, const span *f, double *out)
{
    el_table *t = g->t;
    const char *s = f->text;
    size_t n = f->length;
    el_text_trim(&s, &n);
    if (el_number_is_missing(s, n))
        return time_error(g, r, f, s, n, "the time is missing",
                          "every row needs a time; remove the row or fill in its time");
    if (g->clock_column1 > 0) {
        const span *cf = &g->spans[g->clock_column1 - 1];
        const char *c = cf->text, *hint;
        size_t nc = cf->length, nj = 0;
        int at_clock;
        el_text_trim(&c, &nc);
        const char *why = el_datecols_row_time(s, n, c, nc, g->joined, sizeof g->joined, &nj,
                                               &at_clock, &hint);
        if (why != NULL)
            return at_clock ? time_error(g, r, cf, c, nc, why, hint)
                            : time_error(g, r, f, s, n, why, hint);
        n = nj;
        s = g->joined; /* errors below point at the date's cell (time_error) */
    }
    int iso = el_iso_looks(s, n), local = !iso && el_local_looks(s, n);
    if (g->time_kind == TIME_UNKNOWN)
        g->time_kind = iso     ? TIME_ISO
                       : local ? TIME_LOCAL
                       : g->clock_column1 == 0 && el_datecols_is_clock(s, n) ? TIME_CLOCK
                                                                             : TIME_NUMBER;
    if (g->time_kind == TIME_CLOCK)
        return clock_time(g, r, f, s, n, out);
    if (g->time_kind == TIME_NUMBER) {
        int rc = el_number_parse(s, n, &g->decimal, g->delim, out);
        if (rc == EL_NUM_OK)
            return EL_OK;
        if (iso || local)
            return time_error(g, r, f, s, n,
                              "a date-time where the first row's time was a number",
                              "write every time in the same form as the first row");
        double scale;
        const char *unit;
        if (t->n_rows == 0 && el_time_unit_lookup(s, n, &scale, &unit))
            return time_error(g, r, f, s, n, "a unit of time, but the row is no row of units",
                              "a row of units under the header is read only when none of "
                              "its cells is a number: write a unit of 1 as - or leave it empty");
        if (rc != EL_NUM_RANGE && el_number_numeral_like(s, n) &&
            (memchr(s, ',', n) != NULL || (g->decimal == ',' && memchr(s, '.', n) != NULL)))
            return time_error(g, r, f, s, n, "not a number as this log writes numbers",
                              el_number_hint(s, n, g->delim, g->decimal, 0));
        return time_error(g, r, f, s, n,
                          rc == EL_NUM_RANGE ? "out of range" : "neither a number nor a date-time",
                          "write the time as a number (e.g. seconds) or as an ISO 8601 "
                          "date-time like 2026-03-14T08:00:00.250+01:00 (also read: "
                          "14.03.2026 08:00:00); a row of units under the header is read "
                          "when its time cell names a unit of time (s, ms, min, h)");
    }
    if (!(g->time_kind == TIME_ISO ? iso : local)) {
        double v;
        return time_error(g, r, f, s, n,
                          el_number_parse(s, n, &g->decimal, g->delim, &v) == EL_NUM_OK
                              ? "a number where the first row's time was a date-time"
                              : "not a date-time like the first row's",
                          "write every time in the first row's form");
    }
    el_iso_time it;
    const char *hint;
    const char *why = el_datetime_read(g->time_kind == TIME_LOCAL, &g->date_order, s, n, &it,
                                       &hint);
    if (why != NULL)
        return time_error(g, r, f, s, n, why, hint);
    if (t->n_rows == 0) {
        t->time_is_iso = 1;
        t->date_order = g->time_kind == TIME_LOCAL ? g->date_order : 0;
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
    if (g->t->n_rows == 0)
        g->first_row_bytes = r->length;
    el_status st = grow_rows(g);
    if (st != EL_OK)
        return st;
    el_table *t = g->t;
    size_t row = t->n_rows, cap = g->cap_rows;
    find_clock_column(g);
    for (size_t c = 0; c < g->n_columns; c++) {
        const span *f = &g->spans[c];
        double *dst = t->values + c * cap + row;
        if (c + 1 == g->clock_column1) {
            *dst = NAN; /* part of the time: read with the time column */
            continue;
        }
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
        el_text_trim(&s, &n);
        int rc = el_number_parse(s, n, &g->decimal, g->delim, dst);
        if (rc == EL_NUM_OK) {
            if (kind == COL_UNKNOWN)
                g->col_kind[c] = COL_NUMBER;
            continue;
        }
        if (rc == EL_NUM_SYNTAX && el_number_is_missing(s, n)) {
            *dst = NAN;
            t->missing[c]++;
            continue;
        }
        /* A status or alarm column nobody asked for is skipped (with a
         * note), not a reason to refuse the log. A column that began with
         * numbers is a channel with a bad cell unless --channels left it
         * out: that stays an error, so a typo never drops a channel. */
        int skip = rc == EL_NUM_SYNTAX && !g->wanted[c] &&
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
                     el_number_hint(s, n, g->delim, g->decimal, rc == EL_NUM_RANGE),
                     "cell \"%s\" in column \"%.100s\" is %s", shown, t->names[c],
                     rc == EL_NUM_RANGE ? "out of range" : "not a number");
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

/* The fused fast path. A row of plain numbers (the common case of a
 * logger's export) is read in one pass: the number scan's stop byte says
 * whether the cell ends at the delimiter, the line end or something else.
 * Anything else (quotes, blanks, missing or text cells, comments, blank
 * lines, a ragged row, an ISO time, a number the scan refuses) leaves the
 * row untouched for the general reader (next_record, split_record,
 * parse_row), which then gives the same values or the same error it
 * always gave: the fast path stores only what parse_row would store. */

/* 1 when rows may take the fast path: the first row decided the time
 * column holds numbers and every other column holds numbers (parse_row
 * then only calls el_number_parse on each trimmed cell). */
static int fast_rows_ok(const ingest *g)
{
    if (g->time_kind != TIME_NUMBER || g->n_columns == 0)
        return 0;
    for (size_t c = 0; c < g->n_columns; c++)
        if (c != g->t->time_column && g->col_kind[c] != COL_NUMBER)
            return 0;
    return 1;
}

/* Reads rows on the fast path from the source's unconsumed bytes up to
 * its last complete line, until a row needs the general reader. */
static el_status fast_rows(ingest *g)
{
    el_source *rd = &g->rd;
    if (rd->beg >= rd->end || !fast_rows_ok(g))
        return EL_OK;
    /* The last line end is near the end: a short backward search. */
    const char *first = rd->buf + rd->beg, *lim = rd->buf + rd->end, *stop = lim;
    while (stop > first && stop[-1] != '\n')
        stop--;
    if (stop == first)
        return EL_OK;
    /* Not past a part being read by another thread: it is taken there. */
    if (g->next_chunk < g->n_chunks && g->chunks[g->next_chunk].begin < stop)
        stop = g->chunks[g->next_chunk].begin;
    el_table *t = g->t;
    const char *p = first;
    while (p < stop) {
        if (t->n_rows == g->cap_rows) {
            el_status st = grow_rows(g);
            if (st != EL_OK)
                return st;
        }
        size_t room = g->cap_rows - t->n_rows, rows = 0;
        p = el_number_scan_rows(p, stop, lim, g->n_columns, g->delim, &g->decimal,
                                t->values + t->n_rows, g->cap_rows, room, &rows);
        for (size_t i = 0; i < rows; i++)
            t->source_line[t->n_rows + i] = rd->line + (long)i;
        t->n_rows += rows;
        rd->line += (long)rows;
        if (rows < room)
            break; /* stop, or a row for the general reader */
    }
    rd->beg = (size_t)(p - rd->buf);
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Parts of a mapped file read by several threads                     */

typedef struct {
    ingest *g;
    size_t lines0;    /* line ends in part 0 */
    el_status status; /* of part 0 */
} chunk_run;

/* Text of part `chunk` (0: the reader's own, from where it stands). */
static void part_text(const ingest *g, size_t chunk, const char **begin, const char **end)
{
    *begin = chunk == 0 ? g->rd.buf + g->rd.beg : g->chunks[chunk - 1].begin;
    *end = chunk == 0 ? g->chunks[0].begin : g->chunks[chunk - 1].end;
}

static void count_chunk(void *ctx, size_t chunk, size_t slot)
{
    (void)slot;
    chunk_run *run = ctx;
    const char *begin, *end;
    part_text(run->g, chunk, &begin, &end);
    size_t lines = el_rows_count_lines(begin, end);
    if (chunk == 0)
        run->lines0 = lines;
    else
        run->g->chunks[chunk - 1].lines = lines;
}

static void run_chunk(void *ctx, size_t chunk, size_t slot)
{
    (void)slot;
    chunk_run *run = ctx;
    ingest *g = run->g;
    if (chunk == 0) {
        run->status = fast_rows(g); /* stops at part 1's begin */
        return;
    }
    el_row_part *k = &g->chunks[chunk - 1];
    el_rows_read_part(k, g->rd.buf + g->rd.end, g->n_columns, g->delim, g->decimal);
    for (size_t i = 0; i < k->rows; i++)
        g->t->source_line[k->base + i] = k->line + (long)i;
}

/* Sizes the table of a mapped file from its size once (the estimate),
 * while the parallel read cannot start yet. */
static el_status reserve_estimate(ingest *g)
{
    size_t rows = estimate_rows(g);
    return g->cap_rows < rows ? resize_rows(g, rows) : EL_OK;
}

/* Once, when the rows after the first are plain numbers of a mapped file
 * with the decimal separator decided: splits the rest at line ends into
 * parts of at least MIN_CHUNK_BYTES, one per thread, counts their line
 * ends (threads), sizes the table to exactly the rows read plus one per
 * line end (plus one for a last line without one), and reads the parts
 * at once on the fast path straight into their rows of the table: part
 * 0 by the reader itself, part j from the row after all the lines of the
 * parts before it. A row ends at a line end, so no part can run into the
 * next one's rows, nor the reader going on after a part stopped early.
 * take_chunks then takes each part where it lies, or moves it up to
 * close the gap a part that stopped early (a comment, a quote) left. A
 * part whose text holds a quote, a comment or anything else the fast
 * path does not take simply stops there; the sequential reader goes on
 * from there. Before the parallel read can start, and when it does not
 * (a small file, one thread), the table gets the size estimate. */
static el_status read_in_parts(ingest *g)
{
    el_source *rd = &g->rd;
    if (g->chunks_tried || !rd->mapped || g->t->n_rows == 0)
        return EL_OK;
    if (g->decimal == 0 || !fast_rows_ok(g))
        return reserve_estimate(g);
    g->chunks_tried = 1;
    size_t left = rd->end - rd->beg;
    size_t parts = left / MIN_CHUNK_BYTES;
    parts = parts < g->threads ? parts : g->threads;
    parts = parts < MAX_CHUNKS + 1 ? parts : MAX_CHUNKS + 1;
    size_t n = parts < 2 ? 0 : el_rows_split(rd->buf + rd->beg, left, parts, g->chunks);
    if (n == 0)
        return reserve_estimate(g);
    chunk_run run = {g, 0, EL_OK};
    el_chunks_run(n + 1, n + 1, count_chunk, &run);
    size_t base = g->t->n_rows + run.lines0;
    long line = rd->line + (long)run.lines0;
    for (size_t j = 0; j < n; j++) {
        g->chunks[j].base = base;
        g->chunks[j].line = line;
        g->chunks[j].max_rows = g->chunks[j].lines;
        base += g->chunks[j].lines;
        line += (long)g->chunks[j].lines;
    }
    /* A last line without a line end may be one more row. */
    size_t cap = base + (g->chunks[n - 1].end < rd->buf + rd->end);
    el_status st = resize_rows(g, cap);
    if (st != EL_OK)
        return st;
    for (size_t j = 0; j < n; j++) {
        g->chunks[j].values = g->t->values + g->chunks[j].base;
        g->chunks[j].stride = g->cap_rows;
    }
    g->n_chunks = n;
    g->next_chunk = 0;
    el_chunks_run(n + 1, n + 1, run_chunk, &run);
    return run.status;
}

/* Gives the whole pages of the mapped text before buf + upto back to the
 * page cache: text already turned into rows is not read again (and would
 * be read back from the file if it were: the mapping is a read-only view
 * of it), so the file does not count in the process's memory beside the
 * rows it became while the later parts are copied in. Mapped files only;
 * a no-op where MADV_DONTNEED is not defined. */
static void release_text(ingest *g, size_t upto)
{
#if defined(MADV_DONTNEED)
    long page = sysconf(_SC_PAGESIZE);
    if (!g->rd.mapped || page <= 0)
        return;
    uintptr_t base = (uintptr_t)g->rd.buf, mask = (uintptr_t)page - 1;
    uintptr_t a = (base + g->text_released + mask) & ~mask;
    uintptr_t b = (base + upto) & ~mask;
    if (b > a && madvise((void *)a, (size_t)(b - a), MADV_DONTNEED) == 0)
        g->text_released = (size_t)(b - base);
#else
    (void)g;
    (void)upto;
#endif
}

/* Takes the parts the sequential reader has reached: a part is taken
 * when the reader stands exactly at its first byte (a record starts
 * there) and the state its rows were read with still holds; then its
 * rows are the rows the reader would have read. They lie in the table
 * already, at the row after all lines before the part: moved up when the
 * reader stands at an earlier row (lines before that were no rows). A
 * part the reader went past (a quoted line end, a skipped line) or whose
 * state changed is dropped and read again the ordinary way (over its
 * rows: nothing else is stored there). */
static el_status take_chunks(ingest *g)
{
    el_source *rd = &g->rd;
    el_table *t = g->t;
    while (g->next_chunk < g->n_chunks) {
        el_row_part *k = &g->chunks[g->next_chunk];
        const char *at = rd->buf + rd->beg;
        if (at < k->begin)
            return EL_OK;
        if (at == k->begin && fast_rows_ok(g) && k->rows > 0) {
            /* The reader never goes back before the part's end. */
            release_text(g, (size_t)(k->stop - rd->buf));
            if (t->n_rows != k->base) {
                for (size_t c = 0; c < g->n_columns; c++)
                    memmove(t->values + c * g->cap_rows + t->n_rows,
                            t->values + c * g->cap_rows + k->base, k->rows * sizeof *t->values);
                memmove(t->source_line + t->n_rows, t->source_line + k->base,
                        k->rows * sizeof *t->source_line);
            }
            t->n_rows += k->rows;
            rd->line += (long)k->rows;
            rd->beg = (size_t)(k->stop - rd->buf);
        }
        g->next_chunk++;
    }
    return EL_OK;
}

static el_status read_rows(ingest *g)
{
    for (;;) {
        record r;
        int found;
        size_t n;
        el_status st = read_in_parts(g);
        if (st == EL_OK)
            st = take_chunks(g);
        if (st == EL_OK)
            st = fast_rows(g);
        if (st != EL_OK)
            return st;
        st = next_record(g, &r, &found);
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
    if (g->cap_rows == t->n_rows)
        return; /* sized exactly (read_in_parts): nothing to move */
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

/* What one file's read leaves beside its table. */
typedef struct {
    long *text_line;    /* n_columns: line of the first text cell of a skipped
                           column, 0 = a number column (owned) */
    long header_line;
} file_info;

/* Reads one stream into *table, every column kept (text columns as NaN),
 * times as written. */
static el_status read_one(FILE *stream, const char *name, const el_ingest_options *opt,
                          size_t threads, el_table *table, file_info *info, el_error *err)
{
    memset(table, 0, sizeof *table);
    memset(info, 0, sizeof *info);
    snprintf(table->source, sizeof table->source, "%s", name);
    ingest g;
    memset(&g, 0, sizeof g);
    el_source_init(&g.rd, stream, table->source, err);
    g.name = table->source;
    g.err = err;
    g.t = table;
    if (opt != NULL && (opt->decimal == '.' || opt->decimal == ','))
        g.decimal = opt->decimal;
    if (opt != NULL && (opt->date_order == EL_DATE_DMY || opt->date_order == EL_DATE_MDY))
        g.date_order = opt->date_order;
    g.threads = threads;
    if (g.threads == 0) {
        long cores = sysconf(_SC_NPROCESSORS_ONLN);
        g.threads = cores > 0 ? (size_t)cores : 1;
    }
    el_status st = el_source_start(&g.rd);
    if (st == EL_OK)
        st = read_header(&g, opt);
    if (st == EL_OK)
        st = first_row(&g);
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
        st = el_units_decide_time(table, opt != NULL ? opt->time_unit : NULL,
                                  g.time_unit_from_row, g.header_line,
                                  g.time_header_column, err);
    /* A mapped file cut short while it was read: whatever the read made of
     * the zeros of its last page, the cut is the error. */
    if (el_source_check_size(&g.rd) != EL_OK)
        st = EL_ERR_IO;
    table->decimal = g.decimal ? g.decimal : '.';
    info->header_line = g.header_line;
    el_source_close(&g.rd);
    free(g.spans);
    free(g.scratch);
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

int el_ingest_units_row(const char *text, size_t n, const el_ingest_options *opt)
{
    FILE *fp = fmemopen((void *)(uintptr_t)text, n, "r");
    if (fp == NULL)
        return 0;
    el_table t;
    memset(&t, 0, sizeof t);
    el_error err;
    el_error_clear(&err);
    ingest g;
    memset(&g, 0, sizeof g);
    el_source_init(&g.rd, fp, "units probe", &err);
    g.name = "units probe";
    g.err = &err;
    g.t = &t;
    g.threads = 1;
    if (opt != NULL && (opt->decimal == '.' || opt->decimal == ','))
        g.decimal = opt->decimal;
    int yes = 0;
    if (el_source_start(&g.rd) == EL_OK && read_header(&g, opt) == EL_OK) {
        record r;
        int found;
        size_t fields;
        el_units_cell *cells = NULL;
        if (next_record(&g, &r, &found) == EL_OK && found
            && split_record(&g, &r, &fields) == EL_OK
            && (cells = units_cells(&g, fields)) != NULL)
            yes = el_units_row_is(cells, fields, t.time_column, g.delim, g.decimal);
        free(cells);
    }
    el_source_close(&g.rd);
    free(g.spans);
    free(g.scratch);
    free(g.col_kind);
    free(g.wanted);
    free(g.text_line);
    el_table_free(&t);
    fclose(fp);
    return yes;
}

/* el_table_read_stream with a thread count (el_table_read_threads). */
static el_status read_stream(FILE *stream, const char *name, const el_ingest_options *opt,
                             size_t threads, el_table *table, el_error *err)
{
    el_error local;
    if (err == NULL)
        err = &local;
    el_error_clear(err);
    if (table == NULL || stream == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_read_stream: NULL argument");
    file_info info;
    el_status st = read_one(stream, name != NULL ? name : "<stream>", opt, threads, table, &info,
                            err);
    if (st != EL_OK)
        return st;
    table->n_sources = 1;
    st = el_table_finish(table, info.text_line, err);
    free(info.text_line);
    if (st == EL_OK && (opt == NULL || !opt->keep_repeats))
        st = el_table_drop_repeats(table, err);
    if (st != EL_OK)
        el_table_free(table);
    return st;
}

el_status el_table_read_stream(FILE *stream, const char *name,
                               const el_ingest_options *opt, el_table *table,
                               el_error *err)
{
    return read_stream(stream, name, opt, 0, table, err);
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

el_status el_table_read_threads(const char *path, const el_ingest_options *opt,
                                size_t threads, el_table *table, el_error *err)
{
    if (path == NULL || table == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_table_read: NULL argument");
    memset(table, 0, sizeof *table);
    FILE *fp;
    el_status st = open_log(path, &fp, err);
    if (st != EL_OK)
        return st;
    int is_stdin = fp == stdin;
    st = read_stream(fp, is_stdin ? "<stdin>" : path, opt, threads, table, err);
    if (!is_stdin)
        fclose(fp);
    return st;
}

el_status el_table_read(const char *path, const el_ingest_options *opt,
                        el_table *table, el_error *err)
{
    return el_table_read_threads(path, opt, 0, table, err);
}

/* ------------------------------------------------------------------ */
/* Several files as one log                                           */

static el_status table_no_memory(el_error *err, const char *name)
{
    el_error_set(err, EL_ERR_NOMEM, "out of memory while reading the log");
    el_error_at(err, name, 0, 0);
    el_error_hint(err, "the log is too large for this machine; cut it into parts");
    return EL_ERR_NOMEM;
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
    /* One log has one date form: the day or month first settled by an
     * earlier file's dates reads a later file's, whose first date may
     * read both ways (01/04/2026 after 31/03/2026). */
    el_ingest_options each = {0};
    if (opt != NULL)
        each = *opt;
    for (size_t i = 0; st == EL_OK && i < n_paths; i++) {
        FILE *fp;
        file_info info = {0};
        if ((st = open_log(paths[i], &fp, err)) != EL_OK)
            break;
        int is_stdin = fp == stdin;
        st = read_one(fp, is_stdin ? "<stdin>" : paths[i], &each, 0, &parts[i], &info, err);
        if (st == EL_OK && each.date_order == 0)
            each.date_order = parts[i].date_order;
        if (!is_stdin)
            fclose(fp);
        lines[i] = info.text_line;
        if (st == EL_OK && i > 0)
            st = el_table_check_same(&parts[0], &parts[i], info.header_line, err);
    }
    if (st == EL_OK && (text_line = calloc(parts[0].n_columns, sizeof *text_line)) == NULL)
        st = table_no_memory(err, paths[0]);
    if (st == EL_OK)
        st = el_table_join(parts, lines, n_paths, paths, table, text_line, err);
    if (st == EL_OK)
        st = el_table_finish(table, text_line, err);
    if (st == EL_OK && (opt == NULL || !opt->keep_repeats))
        st = el_table_drop_repeats(table, err);
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

