/* el_io: a growable text buffer and whole-or-nothing file output
 * (temporary files in the targets' folders, then renames; devices and
 * FIFOs written in place), and path identities for clash checks. */
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

/* Longest path el_io handles (resolved targets, temporary names). */
#define EL_PATH_MAX 4096

/* What an output path leads to once symbolic links are followed. */
typedef enum {
    EL_OUT_STDOUT,    /* "-": standard output */
    EL_OUT_NEW,       /* nothing there yet: created by temp file + rename */
    EL_OUT_REGULAR,   /* an existing regular file: replaced by temp file + rename */
    EL_OUT_STREAM     /* a character device or FIFO: opened and written, never replaced */
} el_out_kind;

/* Identity of a path, for telling whether two paths are one file and for
 * writing through symbolic links. exists: the file is there (dev, ino and
 * regular are then set; for "-" they describe standard input or output);
 * canonical: the absolute path with every symbolic link resolved ("" when
 * unknown, and always for "-"); for an output, target is where it is
 * written (canonical for EL_OUT_NEW and EL_OUT_REGULAR, the path as given
 * for a stream). */
typedef struct {
    el_out_kind kind;
    int exists;
    int regular;
    unsigned long long dev, ino;
    char canonical[EL_PATH_MAX];
    char target[EL_PATH_MAX];
} el_path_id;

/* Resolves an output path: "-" is standard output; otherwise symbolic
 * links are followed to the final file (a dangling link leads to the file
 * it names, which will be created). Outputs: *id. EL_ERR_IO (file and hint
 * set) when the path leads to a folder, a block device or a socket, when a
 * link loops or a folder on the way cannot be searched; EL_ERR_INTERNAL for
 * NULL. */
el_status el_output_resolve(const char *path, el_path_id *id, el_error *err);

/* The identity of an input path ("-": standard input); never fails: what
 * cannot be found is left unknown (exists 0, canonical "" or the path as
 * far as it resolves). */
void el_input_identify(const char *path, el_path_id *id);

/* 1 when a and b are certainly one file: both exist with the same device
 * and inode (for standard input/output only when it is a regular file, so
 * a terminal on both is not a clash), or their canonical paths are equal
 * and not empty. 0 otherwise. */
int el_path_same(const el_path_id *a, const el_path_id *b);

/* One output of el_write_files: path NULL (not asked, skipped), "-"
 * (standard output) or a file path; data[0..length) its whole content. */
typedef struct {
    const char *path;
    const char *data;
    size_t length;
} el_out_file;

/* Writes every output whole, or none of the files it would create or
 * replace. A regular file (or a new one) is written to a temporary file in
 * its target's folder (symbolic links followed, so a link stays a link and
 * its target is updated), flushed and synced, keeping an existing file's
 * permissions; a character device or FIFO is opened and written in place
 * (never replaced: /dev/null stays a device); "-" goes to standard output.
 * Order: resolve every path, write every temporary file, write the streams,
 * then rename the temporary files over their targets as the last step.
 * Any failure before the renames removes every temporary file, so no new
 * or changed file is left (a stream may have received part of its data).
 * Remaining window: if a rename fails (rare: the folder changed under us),
 * the outputs renamed before it stay; the error says so. Replacing a file
 * breaks its hard links (the other names keep the old content).
 * EL_ERR_IO (file and hint set) for the first failure; EL_ERR_NOMEM;
 * EL_ERR_INTERNAL for files == NULL with n > 0. */
el_status el_write_files(const el_out_file *files, size_t n, el_error *err);

/* el_write_files for one output (path, data, length). */
el_status el_write_file_atomic(const char *path, const char *data,
                               size_t length, el_error *err);

/* Checks before long work that path can be written (after following links:
 * its folder exists and is writable, an existing file is writable, a
 * device or FIFO is writable), so a run fails early instead of after
 * minutes of work. "-" and NULL always pass. EL_ERR_IO with file and hint
 * set. */
el_status el_check_writable(const char *path, el_error *err);

/* Creates the folder path and every missing parent (like mkdir -p; mode
 * 0777 less the umask); an existing folder is fine. EL_ERR_IO with file and
 * hint set when a part of it is not a folder or cannot be created;
 * EL_ERR_INTERNAL for NULL or "". */
el_status el_make_folders(const char *path, el_error *err);

#endif
