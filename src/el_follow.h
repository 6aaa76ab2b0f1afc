/* el_follow: `track --follow` on a live log. An incremental line reader
 * (a file that grows, is truncated or rotated, or a stream), a ring of
 * the rows the current window needs, the windowing that assesses each
 * window as soon as its last row is in (with el_track's window routine
 * and one el_assess plan, so a window's result is the offline `track`
 * result on the same rows), the trend over the recent windows, and the
 * alarm state machine with hysteresis. Library code: nothing is printed;
 * the caller (cli_track.c) loops, sleeps, prints and runs commands. */
#ifndef EL_FOLLOW_H
#define EL_FOLLOW_H

#include <stddef.h>
#include <sys/types.h>

#include "el_error.h"
#include "el_io.h"
#include "el_track.h"

/* ------------------------------------------------------------------ */
/* Ring buffer of rows. */

/* Rows in arrival order: a time (table seconds), width values and the
 * row's line in its file. Grows by doubling only when a push finds it
 * full, so its size follows the most rows held at once (a window plus
 * what one read brought in), not the length of the stream. */
typedef struct {
    size_t width;                 /* values per row */
    size_t capacity;              /* rows it can hold now */
    size_t head;                  /* slot of the oldest row */
    size_t count;                 /* rows held */
    double *time;                 /* capacity */
    double *values;               /* capacity * width, row after row */
    long *line;                   /* capacity */
} el_follow_ring;

/* Makes an empty ring for rows of width values with room for capacity
 * rows (at least 1) into *ring. EL_ERR_NOMEM (ring left empty). Free with
 * el_follow_ring_free. */
el_status el_follow_ring_init(el_follow_ring *ring, size_t width, size_t capacity,
                              el_error *err);

/* Appends a row (time, values[0..width), line) as the newest. EL_OK, or
 * EL_ERR_NOMEM when a full ring cannot grow (the ring is unchanged). */
el_status el_follow_ring_push(el_follow_ring *ring, double time, const double *values,
                              long line, el_error *err);

/* Drops the n oldest rows (all when n >= count). */
void el_follow_ring_drop(el_follow_ring *ring, size_t n);

/* Row i (0 = oldest, i < count): its time, values (width, valid until the
 * next push) and line. */
double el_follow_ring_time(const el_follow_ring *ring, size_t i);
const double *el_follow_ring_row(const el_follow_ring *ring, size_t i);
long el_follow_ring_line(const el_follow_ring *ring, size_t i);

/* Frees the ring's storage and zeroes it. NULL is a no-op. */
void el_follow_ring_free(el_follow_ring *ring);

/* ------------------------------------------------------------------ */
/* Incremental line reader. */

typedef enum {
    EL_FOLLOW_NOTHING = 0,        /* no new complete line now (a file: poll again later) */
    EL_FOLLOW_LINES,              /* lines returned */
    EL_FOLLOW_TRUNCATED,          /* the file got shorter: read again from its start */
    EL_FOLLOW_ROTATED,            /* the path names another file now: reopened */
    EL_FOLLOW_END                 /* a stream ended (pipe closed, end of standard input) */
} el_follow_event;

/* Reads a path ("-" = standard input) as it grows. A regular file is read
 * to its current end, then polled: when its size falls below what was read
 * it was truncated (read again from the start), when the path names a
 * different file (device and inode) after the old one was read to its end
 * it was rotated (the new file is opened). A pipe, FIFO or terminal, and
 * standard input whatever it is, are read until they end. Lines end at LF (a CR before it is dropped); a stream's
 * last line may lack its LF; in a file a line is returned only when its LF
 * is written. */
typedef struct {
    char path[4096];
    int fd;                       /* -1: not open (a rotated path not yet recreated) */
    int is_stream;                /* 1: pipe/FIFO/terminal/stdin: no polling, no rotation */
    int own_fd;                   /* 1: fd was opened here (not standard input) */
    dev_t dev;
    ino_t ino;
    off_t offset;                 /* bytes read from the current file */
    long lines_done;              /* complete lines returned from the current file */
    el_buf pending;               /* bytes after the last LF */
    el_buf chunk;                 /* the lines of the last EL_FOLLOW_LINES */
    int ended;
} el_follow_reader;

/* Opens path for following into *r. EL_ERR_IO (path and errno text) when
 * it cannot be opened. Free with el_follow_reader_close. */
el_status el_follow_reader_open(el_follow_reader *r, const char *path, el_error *err);

/* Reads what is there now, at most max_bytes (0: 64 KiB), without
 * blocking on a regular file (a stream blocks until some bytes come, a
 * signal interrupts it: EL_FOLLOW_NOTHING). EL_FOLLOW_LINES: *lines (owned
 * by the reader, valid until the next call) holds *n_lines complete lines,
 * each ended by '\n', the first being line *first_line of the current
 * file (1-based; blank and comment lines included, the count is physical).
 * The other events carry no lines. EL_ERR_IO on a read error. */
el_status el_follow_reader_poll(el_follow_reader *r, size_t max_bytes, el_follow_event *event,
                                const char **lines, size_t *len, size_t *n_lines,
                                long *first_line, el_error *err);

/* Closes the file (not standard input) and frees the buffers. */
void el_follow_reader_close(el_follow_reader *r);

/* ------------------------------------------------------------------ */
/* Windows on a live log. */

typedef struct {
    el_track_options track;       /* as offline track (window, step, assess options);
                                     assess.from_text/to_text must be NULL */
    size_t trend_windows;         /* the trend is fitted over the last this many windows
                                     (memory stays bounded); 0 = every window */
    int skip_bad_rows;            /* 1: a malformed row is noted and skipped; 0: it stops */
} el_follow_options;

/* Defaults: el_track_defaults, trend over the last 100 windows, stop on a
 * bad row. */
void el_follow_defaults(el_follow_options *opt);

typedef struct el_follow el_follow;

/* Checks the options (el_track_check_options; --from/--to refused, a
 * window length must be given: a live log has no span to divide) and
 * makes the follower into *out. EL_ERR_USAGE, EL_ERR_NOMEM. The options
 * (and the strings they point to) must outlive the follower. Free with
 * el_follow_destroy. */
el_status el_follow_create(const el_follow_options *opt, el_follow **out, el_error *err);

/* Frees the follower. NULL is a no-op. */
void el_follow_destroy(el_follow *f);

/* The reader opened a new file (source: its name for messages; also the
 * first file): its first line that is neither blank nor a comment is
 * its header, which must equal the first file's header (else EL_ERR_DATA
 * at that line). Rows keep their order across files: a row whose time does
 * not come after the last row's is a bad row. */
void el_follow_new_file(el_follow *f, const char *source);

/* Parses n_lines lines (text, len bytes, each ended by '\n'; the first is
 * line first_line of the current file) with the log's ingest rules (units,
 * ISO times, delimiter and decimal as the header decides) and keeps their
 * rows. A malformed row (bad cell, wrong number of cells, time not after
 * the previous row's): with skip_bad_rows it is left out and a note
 * "file:line:column: message" is added to el_follow_notes; else EL_ERR_DATA
 * with file, line and column. Rows before the first window's start are
 * never kept. Other errors: EL_ERR_DATA for a header that differs, gzip
 * data (not followed), EL_ERR_NOMEM. */
el_status el_follow_add_lines(el_follow *f, const char *text, size_t len, size_t n_lines,
                              long first_line, el_error *err);

/* Assesses the next window whose rows are all in, if any: *w (owned by the
 * follower, valid until the next call) and *index (0-based, as offline
 * track numbers windows and seeds them), and the trend (el_follow_result)
 * refitted over the kept windows. *w = NULL when no window is complete.
 * at_end: the input has ended (the interval can then be estimated from
 * fewer rows). The window's interval and length in samples are fixed at
 * the first window: the median step of its first rows, window length and
 * step rounded to whole samples as track does. Errors: those of
 * el_track_assess_window that stop a run (EL_ERR_USAGE, EL_ERR_NOMEM);
 * EL_ERR_USAGE for a window under 20 samples. */
el_status el_follow_next(el_follow *f, int at_end, const el_track_window **w, size_t *index,
                         el_error *err);

/* The run so far: the kept windows (the last trend_windows), the trend
 * over them, the log's description; window and step as used. */
const el_track_result *el_follow_result(const el_follow *f);

/* Notes of skipped rows and files, oldest first; the caller prints and
 * clears them (el_warnings_free). */
el_warnings *el_follow_notes(el_follow *f);

/* Rows held now (for the memory check of the tests and the bench). */
size_t el_follow_rows_held(const el_follow *f);

/* ------------------------------------------------------------------ */
/* Alarms. */

enum {
    EL_ALARM_SHRINKING = 1u,      /* the trend is called shrinking */
    EL_ALARM_UNSTABLE = 2u,       /* the window's verdict is unstable */
    EL_ALARM_UNDECIDED = 4u,      /* the window's verdict is ambiguous, or it failed */
    EL_ALARM_MARGIN_BELOW = 8u    /* the window's margin (point estimate) is below X */
};

typedef struct {
    unsigned conditions;          /* EL_ALARM_* bits watched */
    double margin_below;          /* X of margin-below=X (1/s) */
    size_t after;                 /* K: windows in a row to start or end an episode */
    size_t run_alarm, run_clear;  /* current runs of alarming / clear windows */
    int active;                   /* 1: inside an episode */
    size_t episodes;              /* episodes started so far */
} el_follow_alarm;

/* Parses one alarm condition ("shrinking", "unstable", "undecided",
 * "margin-below=X", X a finite number in 1/s) or a comma list of them
 * into a (bits added; margin_below set). EL_ERR_USAGE with option
 * "--alarm" and a hint. */
el_status el_follow_alarm_parse(el_follow_alarm *a, const char *text, el_error *err);

/* The watched conditions that hold for window w and the trend r (r may be
 * NULL: no trend yet). */
unsigned el_follow_alarm_test(const el_follow_alarm *a, const el_track_window *w,
                              const el_track_result *r);

/* Feeds one window's hits. Returns +1 when an episode starts (after K
 * alarming windows in a row), -1 when it ends (after K clear ones), else
 * 0. K = 0 is taken as 1. */
int el_follow_alarm_update(el_follow_alarm *a, unsigned hits);

/* "shrinking,margin-below" style names of the bits into buf (static
 * order); "" for none. Returns buf. */
char *el_follow_alarm_names(unsigned bits, char *buf, size_t size);

/* One JSON Lines record: the pretty JSON of el_json made one line (the
 * writer's newlines and indentation dropped; strings never hold a raw
 * newline), ended by '\n', in place. */
void el_follow_json_line(el_buf *json);

#endif
