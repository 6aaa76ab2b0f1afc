/* el_error: status codes, the error record every library call fills, and the
 * list of warnings that a run collects for the report. */
#ifndef EL_ERROR_H
#define EL_ERROR_H

#include <stddef.h>

/* One status enum for the whole library. The first values equal the exit
 * status the command-line program uses for them (see DESIGN.md). */
typedef enum {
    EL_OK = 0,
    EL_ERR_USAGE = 1,    /* bad option or argument given by the user */
    EL_ERR_DATA = 2,     /* the input data cannot be used as it is */
    EL_ERR_NUMERIC = 3,  /* a numerical method failed (LAPACK info > 0, singular, ...) */
    EL_ERR_IO = 4,       /* a file could not be opened, read or written */
    EL_ERR_NOMEM = 6,    /* out of memory */
    EL_ERR_INTERNAL = 7  /* a library function was called wrongly: a bug */
} el_status;

#define EL_ERROR_TEXT_MAX 512

/* Where and what went wrong. file/line/column are set when the problem is
 * in an input file (1-based; 0 = not known); option names the command-line
 * option at fault ("" = none). message says what is wrong, hint what the
 * user can do about it ("" = no hint). */
typedef struct {
    el_status status;
    char file[256];
    long line;
    long column;
    char option[64];
    char message[EL_ERROR_TEXT_MAX];
    char hint[EL_ERROR_TEXT_MAX];
} el_error;

/* Resets err to EL_OK with every field empty. err may be NULL (no-op). */
void el_error_clear(el_error *err);

/* Sets err->status and err->message (printf format) and returns status, so a
 * caller writes `return el_error_set(err, EL_ERR_DATA, "...", ...);`.
 * Location and hint are left as they were; set them with el_error_at and
 * el_error_hint. err may be NULL: then only the status is returned. */
el_status el_error_set(el_error *err, el_status status, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* Records the input location of the error: file (may be NULL), line and
 * column (0 when not known). Can't fail. */
void el_error_at(el_error *err, const char *file, long line, long column);

/* Records the command-line option the error is about. Can't fail. */
void el_error_option(el_error *err, const char *option);

/* Records what the user can do about it (printf format). Can't fail. */
void el_error_hint(el_error *err, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Formats the error for a person into buf (always NUL-terminated):
 * "FILE:LINE:COL: MESSAGE\n  hint: HINT\n" (parts that are unset are left
 * out; the option is shown as "option --x: "). Returns buf. */
char *el_error_format(const el_error *err, char *buf, size_t size);

/* A short fixed name of a status ("bad input data", ...). Never NULL. */
const char *el_strerror(el_status status);

/* The process exit status that goes with a status (DESIGN.md: 0 done,
 * 1 usage, 2 bad data, 3 numerical failure, 4 I/O; out of memory and
 * internal errors exit 4 and 3). */
int el_exit_code(el_status status);

/* A growing list of warning sentences collected during a run; they go to
 * every report. Zero-initialise (`el_warnings w = {0};`) before use. */
typedef struct {
    char **items;
    size_t count;
    size_t capacity;
} el_warnings;

/* Appends one warning (printf format; the text is copied). Returns EL_OK or
 * EL_ERR_NOMEM. w may be NULL (the warning is dropped, EL_OK returned). */
el_status el_warnings_add(el_warnings *w, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));

/* Frees every item and leaves w empty and reusable. NULL is a no-op. */
void el_warnings_free(el_warnings *w);

#endif
