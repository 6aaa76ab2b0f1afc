/* el_follow: a live log followed row by row; each window assessed by
 * el_track's window routine as soon as its last row is in. */
#include "el_follow.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "el_channels.h"
#include "el_datecols.h"
#include "el_dedup.h"
#include "el_timebase.h"

/* The interval is the median step of this many first rows (plus one): a
 * median over 64 steps ignores a few late or doubled rows at the start. */
#define FOLLOW_PLAN_STEPS 64
/* As el_track: a window shorter than this cannot carry a fit. */
#define FOLLOW_MIN_WINDOW_SAMPLES 20
#define FOLLOW_READ_BYTES 65536
#define FOLLOW_DEFAULT_TREND_WINDOWS 100

/* ------------------------------------------------------------------ */
/* Ring. */

el_status el_follow_ring_init(el_follow_ring *ring, size_t width, size_t capacity,
                              el_error *err)
{
    memset(ring, 0, sizeof *ring);
    if (capacity < 1)
        capacity = 1;
    ring->width = width;
    ring->time = malloc(capacity * sizeof(double));
    ring->values = malloc(capacity * (width > 0 ? width : 1) * sizeof(double));
    ring->line = malloc(capacity * sizeof(long));
    if (ring->time == NULL || ring->values == NULL || ring->line == NULL) {
        el_follow_ring_free(ring);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (row buffer)");
    }
    ring->capacity = capacity;
    return EL_OK;
}

/* Doubles the storage, the rows put in order from slot 0. */
static el_status ring_grow(el_follow_ring *ring, el_error *err)
{
    el_follow_ring bigger;
    el_status st = el_follow_ring_init(&bigger, ring->width, 2 * ring->capacity, err);
    if (st != EL_OK)
        return st;
    for (size_t i = 0; i < ring->count; i++) {
        bigger.time[i] = el_follow_ring_time(ring, i);
        bigger.line[i] = el_follow_ring_line(ring, i);
        memcpy(bigger.values + i * ring->width, el_follow_ring_row(ring, i),
               ring->width * sizeof(double));
    }
    bigger.count = ring->count;
    el_follow_ring_free(ring);
    *ring = bigger;
    return EL_OK;
}

el_status el_follow_ring_push(el_follow_ring *ring, double time, const double *values,
                              long line, el_error *err)
{
    if (ring->count == ring->capacity) {
        el_status st = ring_grow(ring, err);
        if (st != EL_OK)
            return st;
    }
    size_t slot = (ring->head + ring->count) % ring->capacity;
    ring->time[slot] = time;
    ring->line[slot] = line;
    memcpy(ring->values + slot * ring->width, values, ring->width * sizeof(double));
    ring->count++;
    return EL_OK;
}

void el_follow_ring_drop(el_follow_ring *ring, size_t n)
{
    if (n >= ring->count) {
        ring->count = 0;
        ring->head = 0;
        return;
    }
    ring->head = (ring->head + n) % ring->capacity;
    ring->count -= n;
}

double el_follow_ring_time(const el_follow_ring *ring, size_t i)
{
    return ring->time[(ring->head + i) % ring->capacity];
}

const double *el_follow_ring_row(const el_follow_ring *ring, size_t i)
{
    return ring->values + ((ring->head + i) % ring->capacity) * ring->width;
}

long el_follow_ring_line(const el_follow_ring *ring, size_t i)
{
    return ring->line[(ring->head + i) % ring->capacity];
}

void el_follow_ring_free(el_follow_ring *ring)
{
    if (ring == NULL)
        return;
    free(ring->time);
    free(ring->values);
    free(ring->line);
    memset(ring, 0, sizeof *ring);
}

/* ------------------------------------------------------------------ */
/* Reader. */

static el_status reader_attach(el_follow_reader *r, el_error *err)
{
    struct stat sb;
    if (strcmp(r->path, "-") == 0) {
        r->fd = STDIN_FILENO;
        r->own_fd = 0;
    } else {
        r->fd = open(r->path, O_RDONLY);
        if (r->fd < 0) {
            el_error_set(err, EL_ERR_IO, "cannot open %s: %s", r->path, strerror(errno));
            el_error_at(err, r->path, 0, 0);
            return EL_ERR_IO;
        }
        r->own_fd = 1;
    }
    if (fstat(r->fd, &sb) != 0)
        memset(&sb, 0, sizeof sb);
    /* Standard input is read to its end whatever it is (a file
     * redirected in too): only a named file is polled. */
    r->is_stream = !S_ISREG(sb.st_mode) || !r->own_fd;
    r->dev = sb.st_dev;
    r->ino = sb.st_ino;
    r->offset = 0;
    r->lines_done = 0;
    r->pending.length = 0;
    return EL_OK;
}

el_status el_follow_reader_open(el_follow_reader *r, const char *path, el_error *err)
{
    memset(r, 0, sizeof *r);
    r->fd = -1;
    if (strlen(path) >= sizeof r->path) {
        el_error_set(err, EL_ERR_USAGE, "the path is too long to follow");
        return EL_ERR_USAGE;
    }
    snprintf(r->path, sizeof r->path, "%s", path);
    return reader_attach(r, err);
}

void el_follow_reader_close(el_follow_reader *r)
{
    if (r == NULL)
        return;
    if (r->own_fd && r->fd >= 0)
        close(r->fd);
    r->fd = -1;
    el_buf_free(&r->pending);
    el_buf_free(&r->chunk);
}

/* Moves the complete lines of pending into chunk (CR before LF dropped);
 * at the end of a stream also a last line without LF. */
static size_t take_lines(el_follow_reader *r, int final)
{
    size_t n = 0, start = 0, cut = 0;
    const char *p = r->pending.data;
    r->chunk.length = 0;
    if (p == NULL)
        return 0;
    if (r->chunk.data != NULL)
        r->chunk.data[0] = '\0';
    for (size_t i = 0; i < r->pending.length; i++) {
        if (p[i] != '\n')
            continue;
        size_t end = i > start && p[i - 1] == '\r' ? i - 1 : i;
        el_buf_append(&r->chunk, p + start, end - start);
        el_buf_append(&r->chunk, "\n", 1);
        n++;
        start = cut = i + 1;
    }
    if (final && start < r->pending.length) {
        size_t end = r->pending.length;
        if (p[end - 1] == '\r')
            end--;
        el_buf_append(&r->chunk, p + start, end - start);
        el_buf_append(&r->chunk, "\n", 1);
        n++;
        cut = r->pending.length;
    }
    memmove(r->pending.data, p + cut, r->pending.length - cut);
    r->pending.length -= cut;
    r->pending.data[r->pending.length] = '\0';
    return n;
}

/* At the end of a regular file: has it been truncated or replaced? */
static el_status check_path(el_follow_reader *r, el_follow_event *event, el_error *err)
{
    struct stat sb;
    *event = EL_FOLLOW_NOTHING;
    if (r->fd < 0) {
        /* Rotated away earlier and not yet recreated: try again. */
        if (stat(r->path, &sb) != 0)
            return EL_OK;
        el_status st = reader_attach(r, err);
        if (st == EL_OK)
            *event = EL_FOLLOW_ROTATED;
        return st == EL_ERR_IO ? EL_OK : st;
    }
    if (stat(r->path, &sb) != 0) {
        /* The old name is gone (moved away); a new file comes later. */
        return EL_OK;
    }
    if (sb.st_dev != r->dev || sb.st_ino != r->ino) {
        if (r->own_fd)
            close(r->fd);
        r->fd = -1;
        el_status st = reader_attach(r, err);
        if (st == EL_OK)
            *event = EL_FOLLOW_ROTATED;
        return st == EL_ERR_IO ? EL_OK : st;
    }
    if (sb.st_size < r->offset) {
        if (lseek(r->fd, 0, SEEK_SET) < 0)
            return el_error_set(err, EL_ERR_IO, "cannot rewind %s: %s", r->path,
                                strerror(errno));
        r->offset = 0;
        r->lines_done = 0;
        r->pending.length = 0;
        *event = EL_FOLLOW_TRUNCATED;
    }
    return EL_OK;
}

el_status el_follow_reader_poll(el_follow_reader *r, size_t max_bytes, el_follow_event *event,
                                const char **lines, size_t *len, size_t *n_lines,
                                long *first_line, el_error *err)
{
    *event = EL_FOLLOW_NOTHING;
    *lines = NULL;
    *len = *n_lines = 0;
    *first_line = 0;
    if (r->ended) {
        *event = EL_FOLLOW_END;
        return EL_OK;
    }
    if (r->fd < 0)
        return check_path(r, event, err);
    char buf[FOLLOW_READ_BYTES];
    size_t want = max_bytes == 0 || max_bytes > sizeof buf ? sizeof buf : max_bytes;
    ssize_t got = read(r->fd, buf, want);
    if (got < 0) {
        if (errno == EINTR || errno == EAGAIN)
            return EL_OK;
        el_error_set(err, EL_ERR_IO, "cannot read %s: %s", r->path, strerror(errno));
        el_error_at(err, r->path, 0, 0);
        return EL_ERR_IO;
    }
    if (got == 0 && !r->is_stream)
        return check_path(r, event, err);
    int final = got == 0;
    if (got > 0) {
        r->offset += got;
        if (el_buf_append(&r->pending, buf, (size_t)got) != EL_OK)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (reading %s)", r->path);
    }
    size_t n = take_lines(r, final);
    if (r->chunk.failed || r->pending.failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (reading %s)", r->path);
    if (final)
        r->ended = 1;
    if (n == 0) {
        *event = final ? EL_FOLLOW_END : EL_FOLLOW_NOTHING;
        return EL_OK;
    }
    *event = EL_FOLLOW_LINES;
    *lines = r->chunk.data;
    *len = r->chunk.length;
    *n_lines = n;
    *first_line = r->lines_done + 1;
    r->lines_done += (long)n;
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Follower. */

struct el_follow {
    el_follow_options opt;
    el_ingest_options ingest;
    el_buf header;                /* the first file's header line (no LF) */
    int have_header, expect_header;
    el_buf units;                 /* its row of units under the header (no LF), if any */
    int has_units, units_decided; /* units holds one; the first file's is judged */
    int expect_units;             /* the next line may be the units row */
    char source[256];             /* current file, for messages */
    el_table ref;                 /* the first parsed rows: columns, units, time kind */
    int have_ref;
    size_t *cols;                 /* table columns kept: channels, then inputs */
    size_t nc, ni;
    el_follow_ring ring;
    int have_last;
    double last_t;                /* time of the newest kept row */
    double *last_row;             /* its cells in every column of ref (el_dedup's rule) */
    size_t repeats_dropped;       /* rows equal to the row before, left out */
    /* Windowing, fixed at the first window. */
    int planned;
    double dt, t_start;           /* interval; time of the first row (window 0 starts) */
    size_t len, step, next_index;
    el_assess_plan *plan;
    /* A window as a table of its rows (el_series_build's input). */
    el_table wt;
    size_t wt_rows;               /* rows wt's arrays can hold */
    el_track_result res;          /* kept windows and their trend */
    el_warnings notes;
    el_buf parse;                 /* header + the lines of one parse */
    long *parse_lines;            /* line number of each data line in parse */
    size_t parse_cap;
};

void el_follow_defaults(el_follow_options *opt)
{
    memset(opt, 0, sizeof *opt);
    el_track_defaults(&opt->track);
    opt->trend_windows = FOLLOW_DEFAULT_TREND_WINDOWS;
}

el_status el_follow_create(const el_follow_options *opt, el_follow **out, el_error *err)
{
    *out = NULL;
    el_status st = el_track_check_options(&opt->track, err);
    if (st != EL_OK)
        return st;
    if (opt->track.assess.from_text != NULL || opt->track.assess.to_text != NULL) {
        el_error_set(err, EL_ERR_USAGE, "--from and --to do not apply to a followed log");
        el_error_option(err, opt->track.assess.from_text != NULL ? "--from" : "--to");
        el_error_hint(err, "drop them: --follow assesses every window from the first row on");
        return EL_ERR_USAGE;
    }
    if (!(opt->track.window > 0.0)) {
        el_error_set(err, EL_ERR_USAGE, "a followed log needs a window length");
        el_error_option(err, "--window");
        el_error_hint(err, "give --window LEN in the log's own time unit, e.g. --window 60");
        return EL_ERR_USAGE;
    }
    el_follow *f = calloc(1, sizeof *f);
    if (f == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    f->opt = *opt;
    const el_assess_options *a = &opt->track.assess;
    /* Rows that repeat the row before exactly are judged here, row by row,
     * not per parse (a parse may hold a single row). */
    el_ingest_options in = {.time_column = a->time_column,
                            .time_unit = a->time_unit,
                            .decimal = a->decimal,
                            .date_order = a->date_order,
                            .channels = a->channels,
                            .inputs = a->inputs,
                            .keep_repeats = 1};
    f->ingest = in;
    f->expect_header = 1;
    *out = f;
    return EL_OK;
}

void el_follow_destroy(el_follow *f)
{
    if (f == NULL)
        return;
    el_buf_free(&f->header);
    el_buf_free(&f->units);
    el_table_free(&f->ref);
    free(f->cols);
    free(f->last_row);
    el_follow_ring_free(&f->ring);
    el_assess_plan_destroy(f->plan);
    free(f->wt.values);
    free(f->wt.source_line);
    free(f->wt.names);
    free(f->wt.units);
    free(f->wt.missing);
    el_track_free(&f->res);
    el_warnings_free(&f->notes);
    el_buf_free(&f->parse);
    free(f->parse_lines);
    free(f);
}

void el_follow_new_file(el_follow *f, const char *source)
{
    snprintf(f->source, sizeof f->source, "%s", source);
    f->expect_header = 1;
}

const el_track_result *el_follow_result(const el_follow *f)
{
    return &f->res;
}

el_warnings *el_follow_notes(el_follow *f)
{
    return &f->notes;
}

size_t el_follow_rows_held(const el_follow *f)
{
    return f->ring.count;
}

static int blank_or_comment(const char *s, size_t n)
{
    size_t i = 0;
    while (i < n && (s[i] == ' ' || s[i] == '\t'))
        i++;
    return i == n || s[i] == '#';
}

/* The first file's header is kept; a later file's must be the same. */
static el_status take_header(el_follow *f, const char *s, size_t n, long line, el_error *err)
{
    f->expect_header = 0;
    if (n >= 2 && (unsigned char)s[0] == 0x1f && (unsigned char)s[1] == 0x8b) {
        el_error_set(err, EL_ERR_DATA, "gzip-compressed data cannot be followed");
        el_error_at(err, f->source, line, 1);
        el_error_hint(err, "follow the uncompressed log, or decompress into a pipe: "
                           "zcat LOG.gz | eigenlog track - --follow ...");
        return EL_ERR_DATA;
    }
    if (!f->have_header) {
        f->have_header = 1;
        if (el_buf_append(&f->header, s, n) != EL_OK)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
        return EL_OK;
    }
    if (n == f->header.length && memcmp(s, f->header.data, n) == 0)
        return EL_OK;
    el_error_set(err, EL_ERR_DATA, "the header of %s differs from the first file's",
                 f->source);
    el_error_at(err, f->source, line, 1);
    el_error_hint(err, "a followed log must keep its columns; start a new run for the new "
                       "columns");
    return EL_ERR_DATA;
}

/* Line in a parse (header, units row if any, data lines) of its first
 * data line. */
static long header_rows(const el_follow *f)
{
    return f->has_units ? 3 : 2;
}

/* 1 when the line s under the kept header is a row of units by ingest's
 * own rule. */
static int probe_units(const el_follow *f, const char *s, size_t n)
{
    el_buf probe = {0};
    el_buf_append(&probe, f->header.data, f->header.length);
    el_buf_append(&probe, "\n", 1);
    el_buf_append(&probe, s, n);
    el_buf_append(&probe, "\n", 1);
    int yes = !probe.failed && el_ingest_units_row(probe.data, probe.length, &f->ingest);
    el_buf_free(&probe);
    return yes;
}

/* Whether the line after a header is the log's row of units (*is), kept
 * then with the header for every parse (ingest reads it as units, not as
 * a row). The first file's is judged by ingest's own rule; a later file's
 * must be the same line to be taken as its units, and a row of units that
 * is not (other units, or one the first file did not have) is an error at
 * it, as a changed header is, not a data row with a bad time. */
static el_status units_row(el_follow *f, const char *s, size_t n, long line, int *is,
                           el_error *err)
{
    *is = 0;
    if (!f->units_decided) {
        f->units_decided = 1;
        if (probe_units(f, s, n) && el_buf_append(&f->units, s, n) == EL_OK
            && !f->units.failed)
            f->has_units = 1;
        *is = f->has_units;
        return EL_OK;
    }
    *is = f->has_units && n == f->units.length && memcmp(s, f->units.data, n) == 0;
    if (*is || !probe_units(f, s, n))
        return EL_OK;
    el_error_set(err, EL_ERR_DATA, "the row of units of %s differs from the first file's%s",
                 f->source, f->has_units ? "" : ", which had none");
    el_error_at(err, f->source, line, 1);
    el_error_hint(err, "a followed log must keep its columns and their units; start a new "
                       "run for the new units");
    return EL_ERR_DATA;
}

/* The channels and inputs as table columns, from the first parsed rows. */
static el_status choose_columns(el_follow *f, el_error *err)
{
    const el_assess_options *a = &f->opt.track.assess;
    size_t n = f->ref.n_columns;
    size_t *ch = malloc(2 * n * sizeof *ch);
    if (ch == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    size_t *in = ch + n, nc = 0, ni = 0;
    el_status st = EL_OK;
    if (a->inputs != NULL)
        st = el_channels_select(&f->ref, a->inputs, "--input", NULL, 0, in, &ni, err);
    if (st == EL_OK)
        st = el_channels_select(&f->ref, a->channels, "--channels", in, ni, ch, &nc, err);
    if (st == EL_OK) {
        memmove(ch + nc, in, ni * sizeof *ch);
        f->cols = ch;
        f->nc = nc;
        f->ni = ni;
        f->last_row = calloc(n, sizeof *f->last_row);
        st = f->last_row != NULL ? el_follow_ring_init(&f->ring, nc + ni, 1024, err)
                                 : el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    } else {
        free(ch);
    }
    return st;
}

/* Same columns as the first rows (text columns are skipped by what the
 * first value of a parse holds, so a change shows here). */
static int same_columns(const el_table *a, const el_table *b)
{
    if (a->n_columns != b->n_columns || a->time_column != b->time_column
        || a->time_is_iso != b->time_is_iso || a->time_is_clock != b->time_is_clock)
        return 0;
    for (size_t c = 0; c < a->n_columns; c++)
        if (strcmp(a->names[c], b->names[c]) != 0)
            return 0;
    return 1;
}

/* A bad row: noted and skipped, or the run stops. err holds the message
 * with its location. Returns EL_OK to skip. */
static el_status bad_row(el_follow *f, el_error *err)
{
    if (!f->opt.skip_bad_rows)
        return EL_ERR_DATA;
    if (el_warnings_add(&f->notes, "%s:%ld:%ld: %s (row skipped)", err->file, err->line,
                        err->column, err->message) != EL_OK)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    el_error_clear(err);
    return EL_OK;
}

/* Row r of t equals the last kept row in every column but the time (which
 * the caller compared after its shift), a missing cell equal to a missing
 * cell: a row the logger wrote twice (el_dedup.h). */
static int repeats_last(const el_follow *f, const el_table *t, size_t r)
{
    for (size_t c = 0; c < t->n_columns; c++) {
        if (c != t->time_column &&
            !el_dedup_same_cell(t->values[c * t->n_rows + r], f->last_row[c]))
            return 0;
    }
    return 1;
}

/* The first row left out as a repeat gets a note; the count goes on. */
static el_status note_repeat(el_follow *f, long line, el_error *err)
{
    if (f->repeats_dropped++ > 0)
        return EL_OK;
    if (el_warnings_add(&f->notes, "%s:%ld: the row repeats the row before exactly (same "
                                   "time, same values) and is left out, as later such rows "
                                   "will be", f->source, line) != EL_OK)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    return EL_OK;
}

/* Appends the rows of a parsed table to the ring. */
static el_status keep_rows(el_follow *f, const el_table *t, el_error *err)
{
    double shift = t->time_is_iso ? (double)(t->time_origin_unix_s - f->ref.time_origin_unix_s)
                                  : 0.0;
    if (t->time_is_clock && f->have_last && t->n_rows > 0)
        shift = (double)(t->clock_origin_s - f->ref.clock_origin_s) +
                el_clock_shift(f->last_t + (double)f->ref.clock_origin_s,
                               t->values[t->time_column * t->n_rows] +
                                   (double)t->clock_origin_s);
    size_t width = f->nc + f->ni;
    double row[256];
    double *vals = width <= 256 ? row : malloc(width * sizeof(double));
    if (vals == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    el_status st = EL_OK;
    for (size_t r = 0; st == EL_OK && r < t->n_rows; r++) {
        double time = t->values[t->time_column * t->n_rows + r] + shift;
        long line = f->parse_lines[t->source_line[r] - header_rows(f)];
        if (f->have_last && time == f->last_t && repeats_last(f, t, r)) {
            st = note_repeat(f, line, err);
            continue;
        }
        if (f->have_last && !(time > f->last_t)) {
            el_error_set(err, EL_ERR_DATA, "time %s after the previous row's",
                         time == f->last_t ? "repeats" : "goes back");
            el_error_at(err, f->source, line, (long)t->time_column + 1);
            el_error_hint(err, "a followed log must be written in time order");
            st = bad_row(f, err);
            continue;
        }
        for (size_t c = 0; c < width; c++)
            vals[c] = t->values[f->cols[c] * t->n_rows + r];
        st = el_follow_ring_push(&f->ring, time, vals, line, err);
        f->have_last = 1;
        f->last_t = time;
        for (size_t c = 0; c < t->n_columns; c++)
            f->last_row[c] = t->values[c * t->n_rows + r];
    }
    if (vals != row)
        free(vals);
    return st;
}

/* Parses parse (header + k data lines) with ingest; on a bad row at a
 * known line, that line is dropped (skip) and the rest parsed again. */
static el_status parse_rows(el_follow *f, size_t k, el_error *err)
{
    while (k > 0) {
        el_table t;
        memset(&t, 0, sizeof t);
        FILE *fp = fmemopen(f->parse.data, f->parse.length, "r");
        if (fp == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
        el_error e;
        el_error_clear(&e);
        el_status st = el_table_read_stream(fp, f->source, &f->ingest, &t, &e);
        fclose(fp);
        if (st == EL_OK && f->have_ref && !same_columns(&f->ref, &t)) {
            el_error_set(&e, EL_ERR_DATA, "the rows from here on hold other columns");
            el_error_at(&e, f->source, f->parse_lines[0], 1);
            el_error_hint(&e, "a column that held numbers holds text (or the reverse)");
            st = EL_ERR_DATA;
        }
        if (st == EL_OK) {
            if (!f->have_ref) {
                f->ref = t;
                f->have_ref = 1;
                f->ingest.decimal = t.decimal;
                if (t.date_order != 0)
                    f->ingest.date_order = t.date_order;
                st = choose_columns(f, err);
                if (st == EL_OK)
                    st = keep_rows(f, &f->ref, err);
                return st;
            }
            st = keep_rows(f, &t, err);
            el_table_free(&t);
            return st;
        }
        el_table_free(&t);
        /* A bad data line: its place in parse, then its line in the file. */
        long first = header_rows(f);
        if (st != EL_ERR_DATA || e.line < first || (size_t)(e.line - first) >= k) {
            *err = e;
            return st;
        }
        size_t bad = (size_t)(e.line - first);
        e.line = f->parse_lines[bad];
        *err = e;
        if ((st = bad_row(f, err)) != EL_OK)
            return st;
        /* Cut the line out of parse and its number out of parse_lines. */
        char *p = f->parse.data;
        char *line = strchr(p, '\n') + 1;
        if (f->has_units)
            line = strchr(line, '\n') + 1;
        for (size_t i = 0; i < bad; i++)
            line = strchr(line, '\n') + 1;
        char *next = strchr(line, '\n') + 1;
        memmove(line, next, (size_t)(p + f->parse.length - next) + 1);
        f->parse.length -= (size_t)(next - line);
        memmove(f->parse_lines + bad, f->parse_lines + bad + 1,
                (k - bad - 1) * sizeof(long));
        k--;
    }
    return EL_OK;
}

el_status el_follow_add_lines(el_follow *f, const char *text, size_t len, size_t n_lines,
                              long first_line, el_error *err)
{
    if (f->parse_cap < n_lines) {
        long *p = realloc(f->parse_lines, n_lines * sizeof(long));
        if (p == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
        f->parse_lines = p;
        f->parse_cap = n_lines;
    }
    f->parse.length = 0;
    size_t k = 0;
    const char *s = text, *end = text + len;
    for (long line = first_line; s < end; line++) {
        const char *lf = memchr(s, '\n', (size_t)(end - s));
        size_t n = lf != NULL ? (size_t)(lf - s) : (size_t)(end - s);
        if (!blank_or_comment(s, n)) {
            el_status st = EL_OK;
            int is_units = 0;
            if (f->expect_header) {
                st = take_header(f, s, n, line, err);
                f->expect_units = st == EL_OK;
            } else if (f->expect_units
                       && ((st = units_row(f, s, n, line, &is_units, err)) != EL_OK
                           || is_units)) {
                f->expect_units = 0;
            } else {
                f->expect_units = 0;
                if (k == 0) {
                    el_buf_append(&f->parse, f->header.data, f->header.length);
                    el_buf_append(&f->parse, "\n", 1);
                    if (f->has_units) {
                        el_buf_append(&f->parse, f->units.data, f->units.length);
                        el_buf_append(&f->parse, "\n", 1);
                    }
                }
                el_buf_append(&f->parse, s, n);
                el_buf_append(&f->parse, "\n", 1);
                f->parse_lines[k++] = line;
            }
            if (st != EL_OK)
                return st;
        }
        s = lf != NULL ? lf + 1 : end;
    }
    if (f->parse.failed)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    return parse_rows(f, k, err);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* The interval (median step of the first rows), window and step in
 * samples, as el_track rounds them. */
static el_status plan_windows(el_follow *f, int at_end, el_error *err)
{
    size_t n = f->ring.count;
    if (n < FOLLOW_PLAN_STEPS + 1 && !(at_end && n >= 3))
        return EL_OK;
    size_t m = (n < FOLLOW_PLAN_STEPS + 1 ? n : FOLLOW_PLAN_STEPS + 1) - 1;
    double steps[FOLLOW_PLAN_STEPS];
    for (size_t i = 0; i < m; i++)
        steps[i] = el_follow_ring_time(&f->ring, i + 1) - el_follow_ring_time(&f->ring, i);
    qsort(steps, m, sizeof(double), cmp_double);
    f->dt = m % 2 ? steps[m / 2] : 0.5 * (steps[m / 2 - 1] + steps[m / 2]);
    double scale = f->ref.time_is_iso || f->ref.time_scale_s == 0.0 ? 1.0
                                                                      : f->ref.time_scale_s;
    double window = f->opt.track.window * scale;
    f->len = (size_t)llround(window / f->dt);
    double step_t = f->opt.track.step > 0.0 ? f->opt.track.step * scale
                                            : (double)f->len * f->dt;
    f->step = (size_t)llround(step_t / f->dt);
    if (f->step < 1)
        f->step = 1;
    if (f->len < FOLLOW_MIN_WINDOW_SAMPLES) {
        el_error_set(err, EL_ERR_USAGE, "a window of %g holds only %zu samples",
                     f->opt.track.window, f->len);
        el_error_option(err, "--window");
        el_error_hint(err, "give a window of at least %d samples (%g)",
                      FOLLOW_MIN_WINDOW_SAMPLES, FOLLOW_MIN_WINDOW_SAMPLES * f->dt / scale);
        return EL_ERR_USAGE;
    }
    f->t_start = el_follow_ring_time(&f->ring, 0);
    f->planned = 1;
    f->res.window = (double)f->len * f->dt;
    f->res.step = (double)f->step * f->dt;
    f->res.span_from = f->t_start;
    size_t w = 1 + f->nc + f->ni;
    f->wt = f->ref;
    memset(&f->wt.notes, 0, sizeof f->wt.notes);
    f->wt.n_columns = w;
    f->wt.time_column = 0;
    f->wt.n_rows = 0;
    f->wt.values = NULL;
    f->wt.source_line = NULL;
    f->wt.sources = NULL;
    f->wt.source_file = NULL;
    f->wt.n_sources = 1;
    f->wt.names = calloc(w, sizeof(char *));
    f->wt.units = calloc(w, sizeof(char *));
    f->wt.missing = calloc(w, sizeof(size_t));
    if (f->wt.names == NULL || f->wt.units == NULL || f->wt.missing == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    f->wt.names[0] = f->ref.names[f->ref.time_column];
    f->wt.units[0] = f->ref.units[f->ref.time_column];
    for (size_t c = 0; c + 1 < w; c++) {
        f->wt.names[c + 1] = f->ref.names[f->cols[c]];
        f->wt.units[c + 1] = f->ref.units[f->cols[c]];
    }
    return el_assess_plan_create(f->len, f->nc, f->ni, &f->plan, err);
}

/* Fills wt with ring rows a .. b - 1. */
static el_status fill_window_table(el_follow *f, size_t a, size_t b, el_error *err)
{
    size_t n = b - a, w = f->wt.n_columns;
    if (n > f->wt_rows) {
        double *v = realloc(f->wt.values, n * w * sizeof(double));
        if (v != NULL)
            f->wt.values = v;
        long *l = realloc(f->wt.source_line, n * sizeof(long));
        if (l != NULL)
            f->wt.source_line = l;
        if (v == NULL || l == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
        f->wt_rows = n;
    }
    f->wt.n_rows = n;
    memset(f->wt.missing, 0, w * sizeof(size_t));
    for (size_t r = 0; r < n; r++) {
        f->wt.values[r] = el_follow_ring_time(&f->ring, a + r);
        f->wt.source_line[r] = el_follow_ring_line(&f->ring, a + r);
        const double *row = el_follow_ring_row(&f->ring, a + r);
        for (size_t c = 1; c < w; c++) {
            f->wt.values[c * n + r] = row[c - 1];
            f->wt.missing[c] += isnan(row[c - 1]) ? 1 : 0;
        }
    }
    snprintf(f->wt.source, sizeof f->wt.source, "%s", f->source);
    return EL_OK;
}

/* Keeps window w as the newest of the trend's windows (the oldest goes
 * when trend_windows are kept) and refits the trend. */
static el_status keep_window(el_follow *f, el_track_window *w, el_error *err)
{
    el_track_result *r = &f->res;
    size_t cap = f->opt.trend_windows;
    if (cap > 0 && r->n_windows == cap) {
        r->n_ok -= r->windows[0].ok ? 1 : 0;
        el_track_window_free(&r->windows[0]);
        memmove(r->windows, r->windows + 1, (cap - 1) * sizeof *r->windows);
        r->n_windows--;
    } else {
        el_track_window *grown = realloc(r->windows, (r->n_windows + 1) * sizeof *grown);
        if (grown == NULL) {
            el_track_window_free(w);
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
        }
        r->windows = grown;
    }
    r->windows[r->n_windows++] = *w;
    r->n_ok += w->ok ? 1 : 0;
    r->span_from = r->windows[0].t_from;
    r->span_to = w->t_to;
    el_warnings_free(&r->warnings);
    el_status st = el_track_describe(r, &f->ref, (const char *const *)f->wt.names + 1, f->nc,
                                    f->opt.track.assess.boot.level,
                                    f->opt.track.assess.boot.replicates == 0, err);
    return st == EL_OK ? el_track_fit_trend(r, err) : st;
}

/* Window i from ring rows a .. b - 1: series, inputs, assessment. */
static el_status assess_rows(el_follow *f, size_t a, size_t b, double ts,
                             el_track_window *w, el_error *err)
{
    el_status st = fill_window_table(f, a, b, err);
    if (st != EL_OK)
        return st;
    el_timebase_options tb;
    el_timebase_defaults(&tb);
    tb.max_gap = f->opt.track.assess.max_gap;
    size_t idx[256 + 1];
    size_t *ix = f->nc + f->ni <= 256 ? idx : malloc((f->nc + f->ni) * sizeof(size_t));
    if (ix == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow)");
    for (size_t c = 0; c < f->nc + f->ni; c++)
        ix[c] = c + 1;
    el_series s, in;
    memset(&s, 0, sizeof s);
    memset(&in, 0, sizeof in);
    el_error werr;
    el_error_clear(&werr);
    st = el_series_build(&f->wt, ix, f->nc, &tb, &s, NULL, &werr);
    if (st == EL_OK && f->ni > 0 && (st = el_series_build(&f->wt, ix + f->nc, f->ni, &tb, &in,
                                                          NULL, &werr)) != EL_OK)
        el_series_free(&s);
    if (ix != idx)
        free(ix);
    if (st == EL_ERR_DATA || st == EL_ERR_USAGE) {
        /* The rows cannot make a series (a long gap): the window failed,
         * as a window whose fit fails. */
        w->ok = 0;
        w->t_from = ts;
        w->t_to = ts + (double)f->len * f->dt;
        el_table_format_time(&f->wt, w->t_from, w->from_text, sizeof w->from_text);
        el_table_format_time(&f->wt, w->t_to, w->to_text, sizeof w->to_text);
        w->margin = w->margin_lo = w->margin_hi = w->margin_sd = NAN;
        w->p_stable = w->frequency_hz = w->damping_ratio = NAN;
        snprintf(w->error, sizeof w->error, "%s", werr.message);
        return EL_OK;
    }
    if (st != EL_OK) {
        *err = werr;
        return st;
    }
    return el_track_assess_window(&f->opt.track, f->plan, &f->wt, f->next_index, &s,
                                  f->ni > 0 ? &in : NULL, w, err);
}

el_status el_follow_next(el_follow *f, int at_end, const el_track_window **out, size_t *index,
                         el_error *err)
{
    *out = NULL;
    if (!f->have_ref)
        return EL_OK;
    el_status st;
    if (!f->planned && ((st = plan_windows(f, at_end, err)) != EL_OK || !f->planned))
        return st;
    double half = 0.5 * f->dt;
    double ts = f->t_start + (double)(f->next_index * f->step) * f->dt;
    double te = f->t_start + (double)(f->next_index * f->step + f->len - 1) * f->dt;
    /* Rows before this window belong to no later window either. */
    size_t a = 0;
    while (a < f->ring.count && el_follow_ring_time(&f->ring, a) < ts - half)
        a++;
    el_follow_ring_drop(&f->ring, a);
    if (f->ring.count == 0 || el_follow_ring_time(&f->ring, f->ring.count - 1) < te - half)
        return EL_OK;
    size_t b = 0;
    while (b < f->ring.count && el_follow_ring_time(&f->ring, b) <= te + half)
        b++;
    el_track_window w;
    memset(&w, 0, sizeof w);
    st = assess_rows(f, 0, b, ts, &w, err);
    if (st != EL_OK) {
        el_track_window_free(&w);
        return st;
    }
    *index = f->next_index++;
    if ((st = keep_window(f, &w, err)) != EL_OK)
        return st;
    *out = &f->res.windows[f->res.n_windows - 1];
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Alarms. */

static const char *const ALARM_NAMES[] = {"shrinking", "unstable", "undecided",
                                          "margin-below"};

el_status el_follow_alarm_parse(el_follow_alarm *a, const char *text, el_error *err)
{
    const char *s = text;
    while (1) {
        size_t n = strcspn(s, ",");
        unsigned bit = 0;
        for (unsigned k = 0; k < 3; k++)
            if (n == strlen(ALARM_NAMES[k]) && strncmp(s, ALARM_NAMES[k], n) == 0)
                bit = 1u << k;
        if (bit == 0 && n > 13 && strncmp(s, "margin-below=", 13) == 0) {
            char num[64];
            char *end = NULL;
            snprintf(num, sizeof num, "%.*s", (int)(n - 13 < 63 ? n - 13 : 63), s + 13);
            double x = strtod(num, &end);
            if (end != num && *end == '\0' && isfinite(x)) {
                bit = EL_ALARM_MARGIN_BELOW;
                a->margin_below = x;
            }
        }
        if (bit == 0) {
            el_error_set(err, EL_ERR_USAGE, "'%.*s' is not an alarm condition", (int)n, s);
            el_error_option(err, "--alarm");
            el_error_hint(err, "give shrinking, unstable, undecided or margin-below=X (X in "
                               "1/s), several with commas");
            return EL_ERR_USAGE;
        }
        a->conditions |= bit;
        if (s[n] == '\0')
            return EL_OK;
        s += n + 1;
    }
}

unsigned el_follow_alarm_test(const el_follow_alarm *a, const el_track_window *w,
                              const el_track_result *r)
{
    unsigned hits = 0;
    if (r != NULL && r->has_trend && r->trend == EL_TREND_SHRINKING)
        hits |= EL_ALARM_SHRINKING;
    if (w->ok && w->stability == EL_UNSTABLE)
        hits |= EL_ALARM_UNSTABLE;
    if (!w->ok || w->ambiguous)
        hits |= EL_ALARM_UNDECIDED;
    if (w->ok && w->margin < a->margin_below)
        hits |= EL_ALARM_MARGIN_BELOW;
    return hits & a->conditions;
}

int el_follow_alarm_update(el_follow_alarm *a, unsigned hits)
{
    size_t k = a->after > 0 ? a->after : 1;
    if (hits != 0) {
        a->run_alarm++;
        a->run_clear = 0;
    } else {
        a->run_clear++;
        a->run_alarm = 0;
    }
    if (!a->active && a->run_alarm >= k) {
        a->active = 1;
        a->episodes++;
        return 1;
    }
    if (a->active && a->run_clear >= k) {
        a->active = 0;
        return -1;
    }
    return 0;
}

char *el_follow_alarm_names(unsigned bits, char *buf, size_t size)
{
    size_t used = 0;
    buf[0] = '\0';
    for (unsigned k = 0; k < 4; k++) {
        if (!(bits & (1u << k)))
            continue;
        int n = snprintf(buf + used, size - used, "%s%s", used > 0 ? "," : "",
                         ALARM_NAMES[k]);
        if (n < 0 || (size_t)n >= size - used)
            break;
        used += (size_t)n;
    }
    return buf;
}

void el_follow_json_line(el_buf *json)
{
    if (json->data == NULL)
        return;
    size_t o = 0;
    for (size_t i = 0; i < json->length; i++) {
        if (json->data[i] == '\n') {
            while (i + 1 < json->length && json->data[i + 1] == ' ')
                i++;
            continue;
        }
        json->data[o++] = json->data[i];
    }
    json->length = o;
    json->data[o] = '\0';
    el_buf_append(json, "\n", 1);
}
