/* el_io: growable text buffer, whole-or-nothing file output and path
 * identities. */
#include "el_io.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
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

static void set_identity(el_path_id *id, const struct stat *st)
{
    id->exists = 1;
    id->regular = S_ISREG(st->st_mode) ? 1 : 0;
    id->dev = (unsigned long long)st->st_dev;
    id->ino = (unsigned long long)st->st_ino;
}

/* Follows the chain of symbolic links from path to the name at its end,
 * which does not exist (path itself failed stat with ENOENT): a dangling
 * link is written by creating the file it names, as a shell's > does.
 * A relative link target is relative to the link's folder. */
static el_status follow_dangling(const char *path, char *out, size_t size,
                                 el_error *err)
{
    char cur[EL_PATH_MAX], link[EL_PATH_MAX];
    snprintf(cur, sizeof cur, "%s", path);
    for (int hops = 0; hops < 40; hops++) {
        struct stat st;
        if (lstat(cur, &st) != 0 || !S_ISLNK(st.st_mode)) {
            snprintf(out, size, "%s", cur);
            return EL_OK;
        }
        ssize_t len = readlink(cur, link, sizeof link - 1);
        if (len < 0)
            return io_fail(err, path, errno, "follow its symbolic link");
        link[len] = '\0';
        if (link[0] == '/') {
            snprintf(cur, sizeof cur, "%s", link);
        } else {
            char dir[EL_PATH_MAX];
            folder_of(cur, dir, sizeof dir);
            if ((size_t)snprintf(cur, sizeof cur, "%s/%s", dir, link) >= sizeof cur)
                return io_fail(err, path, ENAMETOOLONG, "follow its symbolic link");
        }
    }
    return io_fail(err, path, ELOOP, "follow its symbolic links");
}

/* canonical = realpath(folder of name) + "/" + last part of name, for a
 * name that does not exist yet; name as given when its folder cannot be
 * resolved (writing it will then fail with the reason). */
static void canonical_new(const char *name, char *canonical, size_t size)
{
    char dir[EL_PATH_MAX], real[PATH_MAX];
    folder_of(name, dir, sizeof dir);
    const char *slash = strrchr(name, '/');
    const char *base = slash != NULL ? slash + 1 : name;
    if (realpath(dir, real) == NULL ||
        (size_t)snprintf(canonical, size, "%s%s%s", real,
                         strcmp(real, "/") == 0 ? "" : "/", base) >= size)
        snprintf(canonical, size, "%s", name);
}

el_status el_output_resolve(const char *path, el_path_id *id, el_error *err)
{
    if (path == NULL || id == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_output_resolve: NULL argument");
    memset(id, 0, sizeof *id);
    struct stat st;
    if (strcmp(path, "-") == 0) {
        id->kind = EL_OUT_STDOUT;
        if (fstat(STDOUT_FILENO, &st) == 0)
            set_identity(id, &st);
        return EL_OK;
    }
    if (stat(path, &st) == 0) {
        set_identity(id, &st);
        char real[PATH_MAX];
        if (realpath(path, real) != NULL)
            snprintf(id->canonical, sizeof id->canonical, "%s", real);
        if (S_ISREG(st.st_mode)) {
            if (id->canonical[0] == '\0')
                return io_fail(err, path, errno, "resolve its path");
            id->kind = EL_OUT_REGULAR;
            snprintf(id->target, sizeof id->target, "%s", id->canonical);
            return EL_OK;
        }
        if (S_ISCHR(st.st_mode) || S_ISFIFO(st.st_mode)) {
            /* Opened by the name given: /dev/stdout and other /proc links
             * to pipes have no path of their own to resolve to. */
            id->kind = EL_OUT_STREAM;
            snprintf(id->target, sizeof id->target, "%s", path);
            return EL_OK;
        }
        el_error_set(err, EL_ERR_IO, "cannot write to a %s",
                     S_ISDIR(st.st_mode) ? "folder" : S_ISBLK(st.st_mode) ? "block device"
                                                                            : "socket");
        el_error_at(err, path, 0, 0);
        el_error_hint(err, "give a file name (eigenlog writes files, character devices "
                           "such as /dev/null, and FIFOs)");
        return EL_ERR_IO;
    }
    if (errno != ENOENT)
        return io_fail(err, path, errno, "look it up");
    char name[EL_PATH_MAX];
    el_status st_follow = follow_dangling(path, name, sizeof name, err);
    if (st_follow != EL_OK)
        return st_follow;
    id->kind = EL_OUT_NEW;
    canonical_new(name, id->canonical, sizeof id->canonical);
    snprintf(id->target, sizeof id->target, "%s", id->canonical);
    return EL_OK;
}

void el_input_identify(const char *path, el_path_id *id)
{
    memset(id, 0, sizeof *id);
    if (path == NULL)
        return;
    struct stat st;
    if (strcmp(path, "-") == 0) {
        if (fstat(STDIN_FILENO, &st) == 0)
            set_identity(id, &st);
        return;
    }
    if (stat(path, &st) == 0)
        set_identity(id, &st);
    char real[PATH_MAX];
    if (realpath(path, real) != NULL)
        snprintf(id->canonical, sizeof id->canonical, "%s", real);
}

int el_path_same(const el_path_id *a, const el_path_id *b)
{
    /* Standard input/output have no canonical path: compared only when a
     * regular file, so a terminal or pipe on both ends is no clash. */
    int a_std = a->canonical[0] == '\0', b_std = b->canonical[0] == '\0';
    if (a->exists && b->exists && a->dev == b->dev && a->ino == b->ino &&
        ((!a_std && !b_std) || (a->regular && b->regular)))
        return 1;
    return !a_std && !b_std && strcmp(a->canonical, b->canonical) == 0;
}

/* Writes all of data to fd, retrying short writes and interrupts. Returns
 * 0 or an errno value (EFBIG past a file size limit, ENOSPC, ...). */
static int write_all(int fd, const char *data, size_t length)
{
    while (length > 0) {
        ssize_t got = write(fd, data, length);
        if (got < 0) {
            if (errno == EINTR)
                continue;
            return errno;
        }
        data += got;
        length -= (size_t)got;
    }
    return 0;
}

typedef struct {
    el_path_id id;
    char *tmp;                /* temporary file written, not yet renamed */
} pending_out;

static void remove_temps(pending_out *p, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        if (p[i].tmp != NULL) {
            unlink(p[i].tmp);
            free(p[i].tmp);
            p[i].tmp = NULL;
        }
    }
}

/* Writes a temporary file beside the target with the whole content, with
 * the permissions (and, where allowed, owner) of the file it replaces, or
 * 0666 less the umask for a new one (mkstemp itself makes 0600). */
static el_status write_temp(pending_out *p, const el_out_file *f, el_error *err)
{
    size_t size = strlen(p->id.target) + 16;
    p->tmp = malloc(size);
    if (p->tmp == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    snprintf(p->tmp, size, "%s.tmpXXXXXX", p->id.target);
    int fd = mkstemp(p->tmp);
    if (fd < 0) {
        int e = errno;
        free(p->tmp);
        p->tmp = NULL;
        return io_fail(err, f->path, e, "create a file beside it");
    }
    struct stat old;
    if (p->id.kind == EL_OUT_REGULAR && stat(p->id.target, &old) == 0) {
        if (fchown(fd, old.st_uid, old.st_gid) != 0) {
            /* Not the owner and not root: the new file stays ours. */
        }
        fchmod(fd, old.st_mode & 07777);
    } else {
        mode_t mask = umask(0);
        umask(mask);
        fchmod(fd, 0666 & ~mask);
    }
    int e = write_all(fd, f->data, f->length);
    if (e == 0 && fsync(fd) != 0)
        e = errno;
    if (close(fd) != 0 && e == 0)
        e = errno;
    if (e != 0)
        return io_fail(err, f->path, e, "write it");
    return EL_OK;
}

/* Writes a character device or FIFO in place (no O_CREAT, no O_TRUNC: it
 * is never replaced), or standard output. */
static el_status write_stream(const pending_out *p, const el_out_file *f, el_error *err)
{
    if (p->id.kind == EL_OUT_STDOUT) {
        if (fwrite(f->data, 1, f->length, stdout) != f->length || fflush(stdout) != 0)
            return io_fail(err, "<stdout>", errno, "write");
        return EL_OK;
    }
    int fd = open(p->id.target, O_WRONLY | O_NOCTTY);
    if (fd < 0)
        return io_fail(err, f->path, errno, "open it for writing");
    int e = write_all(fd, f->data, f->length);
    if (close(fd) != 0 && e == 0)
        e = errno;
    return e != 0 ? io_fail(err, f->path, e, "write it") : EL_OK;
}

static int is_file_kind(el_out_kind kind)
{
    return kind == EL_OUT_NEW || kind == EL_OUT_REGULAR;
}

el_status el_write_files(const el_out_file *files, size_t n, el_error *err)
{
    if (n == 0)
        return EL_OK;
    if (files == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_write_files: files is NULL");
    pending_out *p = calloc(n, sizeof *p);
    if (p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    el_status st = EL_OK;
    for (size_t i = 0; i < n && st == EL_OK; i++)
        if (files[i].path != NULL)
            st = el_output_resolve(files[i].path, &p[i].id, err);
    for (size_t i = 0; i < n && st == EL_OK; i++)
        if (files[i].path != NULL && is_file_kind(p[i].id.kind))
            st = write_temp(&p[i], &files[i], err);
    for (size_t i = 0; i < n && st == EL_OK; i++)
        if (files[i].path != NULL && !is_file_kind(p[i].id.kind))
            st = write_stream(&p[i], &files[i], err);
    for (size_t i = 0; i < n && st == EL_OK; i++) {
        if (p[i].tmp == NULL)
            continue;
        if (rename(p[i].tmp, p[i].id.target) != 0) {
            st = io_fail(err, files[i].path, errno, "put it in place");
            if (i > 0)
                el_error_hint(err, "the outputs before it were already written; "
                                   "check the folder and run again");
            break;
        }
        free(p[i].tmp);
        p[i].tmp = NULL;
    }
    remove_temps(p, n);
    free(p);
    return st;
}

el_status el_write_file_atomic(const char *path, const char *data,
                               size_t length, el_error *err)
{
    if (path == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "no output path");
    el_out_file f = {path, data, length};
    return el_write_files(&f, 1, err);
}

el_status el_check_writable(const char *path, el_error *err)
{
    if (path == NULL || strcmp(path, "-") == 0)
        return EL_OK;
    el_path_id id;
    el_status st = el_output_resolve(path, &id, err);
    if (st != EL_OK)
        return st;
    if (id.kind == EL_OUT_STREAM) {
        if (access(id.target, W_OK) != 0)
            return io_fail(err, path, errno, "write to it");
        return EL_OK;
    }
    char dir[EL_PATH_MAX];
    folder_of(id.target, dir, sizeof dir);
    if (access(dir, W_OK | X_OK) != 0)
        return io_fail(err, path, errno, "write into its folder");
    if (id.kind == EL_OUT_REGULAR && access(id.target, W_OK) != 0)
        return io_fail(err, path, errno, "overwrite it");
    return EL_OK;
}

el_status el_make_folders(const char *path, el_error *err)
{
    if (path == NULL || path[0] == '\0')
        return el_error_set(err, EL_ERR_INTERNAL, "el_make_folders: no path");
    char part[EL_PATH_MAX];
    size_t len = strlen(path);
    if (len >= sizeof part)
        return io_fail(err, path, ENAMETOOLONG, "create the folder");
    memcpy(part, path, len + 1);
    /* Every prefix that ends before a '/', then the whole path. */
    for (size_t i = 1; i <= len; i++) {
        if (i < len && part[i] != '/')
            continue;
        char keep = part[i];
        part[i] = '\0';
        struct stat st;
        if (mkdir(part, 0777) != 0) {
            int e = errno;
            if (stat(part, &st) != 0 || !S_ISDIR(st.st_mode)) {
                el_error_set(err, EL_ERR_IO, "cannot create the folder %s: %s", part,
                             e == EEXIST ? "a file of that name is in the way" : strerror(e));
                el_error_at(err, path, 0, 0);
                el_error_hint(err, "give a folder you can write to, e.g. -o /tmp/demo");
                return EL_ERR_IO;
            }
        }
        part[i] = keep;
    }
    return EL_OK;
}
