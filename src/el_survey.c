/* el_survey: listing, hashing, per-log records and the table of
 * `eigenlog survey` (many logs at once). */
#include "el_survey.h"

#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "el_json.h"

/* ---------------------------------------------------------------- hashing */

uint64_t el_fnv1a64(uint64_t h, const void *data, size_t n)
{
    const unsigned char *p = data;
    for (size_t i = 0; i < n; i++) {
        h ^= p[i];
        h *= 0x100000001b3ULL;   /* the published 64-bit FNV prime */
    }
    return h;
}

el_status el_survey_hash_file(const char *path, uint64_t *hash, el_error *err)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        el_error_set(err, EL_ERR_IO, "cannot open: %s", strerror(errno));
        el_error_at(err, path, 0, 0);
        return EL_ERR_IO;
    }
    unsigned char block[65536];
    uint64_t h = EL_FNV1A64_OFFSET;
    size_t n;
    while ((n = fread(block, 1, sizeof block, f)) > 0)
        h = el_fnv1a64(h, block, n);
    int bad = ferror(f);
    fclose(f);
    if (bad) {
        el_error_set(err, EL_ERR_IO, "read error");
        el_error_at(err, path, 0, 0);
        return EL_ERR_IO;
    }
    *hash = h;
    return EL_OK;
}

/* ---------------------------------------------------------------- listing */

static int ends_with(const char *s, const char *tail)
{
    size_t n = strlen(s), m = strlen(tail);
    return n >= m && strcmp(s + n - m, tail) == 0;
}

int el_survey_is_log_name(const char *path)
{
    return ends_with(path, ".csv") || ends_with(path, ".csv.gz");
}

int el_survey_is_gzip_name(const char *path)
{
    return ends_with(path, ".gz");
}

static char *dup_text(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    if (d != NULL)
        memcpy(d, s, n);
    return d;
}

static el_status nomem(el_error *err)
{
    return el_error_set(err, EL_ERR_NOMEM, "out of memory");
}

el_status el_survey_list_append(el_survey_list *list, const char *path,
                                char *const *args, size_t n_args, el_error *err)
{
    for (size_t i = 0; i < list->count; i++)
        if (strcmp(list->logs[i].path, path) == 0)
            return EL_OK;
    if (list->count == list->capacity) {
        size_t cap = list->capacity ? 2 * list->capacity : 16;
        el_survey_log *grown = realloc(list->logs, cap * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        list->logs = grown;
        list->capacity = cap;
    }
    el_survey_log log = {dup_text(path), NULL, 0};
    if (log.path == NULL)
        return nomem(err);
    if (n_args > 0) {
        log.args = calloc(n_args, sizeof *log.args);
        if (log.args == NULL) {
            free(log.path);
            return nomem(err);
        }
        for (size_t i = 0; i < n_args; i++) {
            log.args[i] = dup_text(args[i]);
            log.n_args = i + 1;
            if (log.args[i] == NULL) {
                list->logs[list->count++] = log;
                return nomem(err);
            }
        }
    }
    list->logs[list->count++] = log;
    return EL_OK;
}

void el_survey_list_free(el_survey_list *list)
{
    if (list == NULL)
        return;
    const char *skip = list->skip_folder;
    for (size_t i = 0; i < list->count; i++) {
        for (size_t k = 0; k < list->logs[i].n_args; k++)
            free(list->logs[i].args[k]);
        free(list->logs[i].args);
        free(list->logs[i].path);
    }
    free(list->logs);
    memset(list, 0, sizeof *list);
    list->skip_folder = skip;
}

static int compare_names(const void *a, const void *b)
{
    return strcmp(*(char *const *)a, *(char *const *)b);
}

static char *join_path(const char *dir, const char *name)
{
    size_t n = strlen(dir), m = strlen(name);
    char *p = malloc(n + m + 2);
    if (p == NULL)
        return NULL;
    memcpy(p, dir, n);
    size_t k = n;
    if (n > 0 && dir[n - 1] != '/')
        p[k++] = '/';
    memcpy(p + k, name, m + 1);
    return p;
}

/* The entries of folder dir (hidden ones skipped), sorted, as full paths. */
static el_status read_folder(const char *dir, char ***names, size_t *count, el_error *err)
{
    *names = NULL;
    *count = 0;
    DIR *d = opendir(dir);
    if (d == NULL) {
        el_error_set(err, EL_ERR_IO, "cannot read the folder: %s", strerror(errno));
        el_error_at(err, dir, 0, 0);
        return EL_ERR_IO;
    }
    size_t cap = 0;
    el_status st = EL_OK;
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        if (e->d_name[0] == '.')
            continue;
        if (*count == cap) {
            cap = cap ? 2 * cap : 32;
            char **grown = realloc(*names, cap * sizeof *grown);
            if (grown == NULL) {
                st = nomem(err);
                break;
            }
            *names = grown;
        }
        if (((*names)[*count] = join_path(dir, e->d_name)) == NULL) {
            st = nomem(err);
            break;
        }
        (*count)++;
    }
    closedir(d);
    if (*count > 1)
        qsort(*names, *count, sizeof **names, compare_names);
    return st;
}

static void free_names(char **names, size_t count)
{
    for (size_t i = 0; i < count; i++)
        free(names[i]);
    free(names);
}

/* 1 when folder dir is the list's skip_folder (the survey's own outputs). */
static int skipped_folder(const el_survey_list *list, const char *dir)
{
    if (list->skip_folder == NULL)
        return 0;
    char *real = realpath(dir, NULL);
    int same = real != NULL && strcmp(real, list->skip_folder) == 0;
    free(real);
    return same;
}

/* Adds the logs under folder dir; depth guards against symbolic-link loops. */
static el_status add_folder(el_survey_list *list, const char *dir, int depth, el_error *err)
{
    if (depth > 64) {
        el_error_set(err, EL_ERR_IO, "folders nested more than 64 deep (a link loop?)");
        el_error_at(err, dir, 0, 0);
        return EL_ERR_IO;
    }
    char **names = NULL;
    size_t count = 0;
    el_status st = read_folder(dir, &names, &count, err);
    for (size_t i = 0; st == EL_OK && i < count; i++) {
        struct stat s;
        if (stat(names[i], &s) != 0)
            continue;   /* a dangling link: not a log */
        if (S_ISDIR(s.st_mode)) {
            if (!skipped_folder(list, names[i]))
                st = add_folder(list, names[i], depth + 1, err);
        }
        else if (S_ISREG(s.st_mode) && el_survey_is_log_name(names[i]))
            st = el_survey_list_append(list, names[i], NULL, 0, err);
    }
    free_names(names, count);
    return st;
}

static el_status read_text_file(const char *path, char **text, el_error *err)
{
    *text = NULL;
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        el_error_set(err, EL_ERR_IO, "cannot open: %s", strerror(errno));
        el_error_at(err, path, 0, 0);
        return EL_ERR_IO;
    }
    el_buf b = {0};
    char block[8192];
    size_t n;
    el_status st = EL_OK;
    while (st == EL_OK && (n = fread(block, 1, sizeof block, f)) > 0)
        st = el_buf_append(&b, block, n);
    int bad = ferror(f);
    fclose(f);
    if (st == EL_OK && b.data == NULL)
        st = el_buf_append(&b, "", 0);
    if (st != EL_OK || bad) {
        el_buf_free(&b);
        if (st != EL_OK)
            return nomem(err);
        el_error_set(err, EL_ERR_IO, "read error");
        el_error_at(err, path, 0, 0);
        return EL_ERR_IO;
    }
    *text = b.data;
    return EL_OK;
}

el_status el_survey_list_add_input(el_survey_list *list, const char *input, el_error *err)
{
    struct stat s;
    if (stat(input, &s) != 0) {
        el_error_set(err, EL_ERR_IO, "no such log, folder or manifest: %s", strerror(errno));
        el_error_at(err, input, 0, 0);
        el_error_hint(err, "check the path; folders are searched for *.csv and *.csv.gz");
        return EL_ERR_IO;
    }
    if (S_ISDIR(s.st_mode))
        return skipped_folder(list, input) ? EL_OK : add_folder(list, input, 0, err);
    if (el_survey_is_log_name(input))
        return el_survey_list_append(list, input, NULL, 0, err);
    char *text = NULL;
    el_status st = read_text_file(input, &text, err);
    if (st == EL_OK)
        st = el_survey_parse_manifest(list, input, text, err);
    free(text);
    return st;
}

/* ---------------------------------------------------------------- manifest */

static const char *const PER_LOG_OPTIONS[] = {
    "time", "channels", "from", "to", "max-gap", "detrend", "band", "input",
    "lags", "rank", "method", "depth", "time-unit", "decimal", "date-order",
};
#define N_PER_LOG (sizeof PER_LOG_OPTIONS / sizeof PER_LOG_OPTIONS[0])

/* One whitespace-separated token of a manifest line (quotes removed). */
typedef struct {
    char text[4096];
    long column;        /* 1-based column where it starts */
} token;

static int is_blank(char c)
{
    return c == ' ' || c == '\t' || c == '\r';
}

/* Reads the next token of line from *pos; returns 1 when one was read, 0
 * at the line's end, -1 for an unclosed quote or a too long token. */
static int next_token(const char *line, size_t length, size_t *pos, token *t)
{
    size_t i = *pos, n = 0;
    while (i < length && is_blank(line[i]))
        i++;
    if (i >= length)
        return 0;
    t->column = (long)i + 1;
    int quoted = 0;
    while (i < length && (quoted || !is_blank(line[i]))) {
        if (line[i] == '"') {
            quoted = !quoted;
            i++;
            continue;
        }
        if (n + 1 >= sizeof t->text)
            return -1;
        t->text[n++] = line[i++];
    }
    t->text[n] = '\0';
    *pos = i;
    return quoted ? -1 : 1;
}

static int per_log_option(const char *name, size_t len)
{
    for (size_t i = 0; i < N_PER_LOG; i++)
        if (strlen(PER_LOG_OPTIONS[i]) == len && strncmp(PER_LOG_OPTIONS[i], name, len) == 0)
            return 1;
    return 0;
}

static el_status manifest_error(el_error *err, const char *name, long line, long column,
                                const char *message, const char *hint)
{
    el_error_set(err, EL_ERR_USAGE, "%s", message);
    el_error_at(err, name, line, column);
    el_error_hint(err, "%s", hint);
    return EL_ERR_USAGE;
}

/* Resolves a manifest's relative log path against the manifest's folder. */
static char *manifest_path(const char *manifest, const char *path)
{
    const char *slash = strrchr(manifest, '/');
    if (path[0] == '/' || slash == NULL)
        return dup_text(path);
    size_t n = (size_t)(slash - manifest) + 1, m = strlen(path);
    char *p = malloc(n + m + 1);
    if (p != NULL) {
        memcpy(p, manifest, n);
        memcpy(p + n, path, m + 1);
    }
    return p;
}

#define MAX_LOG_ARGS 24

static el_status manifest_line(el_survey_list *list, const char *name, long line_no,
                               const char *line, size_t length, el_error *err)
{
    static const char hint_opts[] =
        "per-log options: --time --channels --from --to --max-gap --detrend --band "
        "--input --lags --rank --method --depth --time-unit --decimal --date-order, each "
        "with a value";
    size_t pos = 0;
    token t;
    int got = next_token(line, length, &pos, &t);
    if (got == 0 || t.text[0] == '#')
        return EL_OK;
    if (got < 0)
        return manifest_error(err, name, line_no, t.column, "unclosed quote or path too long",
                              "close the \"quote\" on the same line");
    char *path = manifest_path(name, t.text);
    if (path == NULL)
        return nomem(err);
    char *args[MAX_LOG_ARGS];
    size_t n_args = 0;
    el_status st = EL_OK;
    while (st == EL_OK && (got = next_token(line, length, &pos, &t)) != 0) {
        if (got < 0) {
            st = manifest_error(err, name, line_no, t.column, "unclosed quote or value too long",
                                "close the \"quote\" on the same line");
            break;
        }
        const char *eq = strchr(t.text, '=');
        size_t len = eq ? (size_t)(eq - t.text - 2) : strlen(t.text) - 2;
        if (strncmp(t.text, "--", 2) != 0 || !per_log_option(t.text + 2, len)) {
            st = manifest_error(err, name, line_no, t.column,
                                t.text[0] == '-' ? "not a per-log option"
                                                 : "a second path on one line",
                                hint_opts);
            break;
        }
        if (n_args == MAX_LOG_ARGS) {
            st = manifest_error(err, name, line_no, t.column, "too many options on one line",
                                "give each option once");
            break;
        }
        char arg[8192];
        if (eq != NULL) {
            snprintf(arg, sizeof arg, "%s", t.text);
        } else {
            long column = t.column;
            char option[4096];
            snprintf(option, sizeof option, "%s", t.text);
            if ((got = next_token(line, length, &pos, &t)) <= 0) {
                st = manifest_error(err, name, line_no, column, "option needs a value", hint_opts);
                break;
            }
            snprintf(arg, sizeof arg, "%s=%s", option, t.text);
        }
        if ((args[n_args] = dup_text(arg)) == NULL) {
            st = nomem(err);
            break;
        }
        n_args++;
    }
    if (st == EL_OK)
        st = el_survey_list_append(list, path, args, n_args, err);
    for (size_t i = 0; i < n_args; i++)
        free(args[i]);
    free(path);
    return st;
}

el_status el_survey_parse_manifest(el_survey_list *list, const char *name,
                                   const char *text, el_error *err)
{
    long line_no = 0;
    const char *p = text;
    while (*p != '\0') {
        const char *end = strchr(p, '\n');
        size_t length = end ? (size_t)(end - p) : strlen(p);
        line_no++;
        el_status st = manifest_line(list, name, line_no, p, length, err);
        if (st != EL_OK)
            return st;
        p += length + (end != NULL);
    }
    return EL_OK;
}

void el_survey_shard_range(size_t count, size_t k, size_t n_shards, size_t *begin,
                           size_t *end)
{
    if (n_shards == 0 || k == 0 || k > n_shards) {
        *begin = *end = 0;
        return;
    }
    *begin = count * (k - 1) / n_shards;
    *end = count * k / n_shards;
}

/* ---------------------------------------------------------------- records */

static const char RECORD_MAGIC[] = "eigenlog-survey-record 1";

el_status el_survey_record_format(const el_survey_record *r, el_buf *out)
{
    el_buf_printf(out, "%s\n", RECORD_MAGIC);
    el_buf_printf(out, "path %s\n", r->path);
    el_buf_printf(out, "size %lld\n", r->size);
    el_buf_printf(out, "mtime_ns %lld\n", r->mtime_ns);
    el_buf_printf(out, "content_fnv1a64 %016llx\n", (unsigned long long)r->content_hash);
    el_buf_printf(out, "options_fnv1a64 %016llx\n", (unsigned long long)r->options_hash);
    el_buf_printf(out, "report %d\n", r->has_report);
    el_buf_printf(out, "exit %d\n", r->exit_code);
    el_buf_printf(out, "error %s\n", r->error ? r->error : "");
    return el_buf_printf(out, "json %s\nend\n", r->json ? r->json : "");
}

void el_survey_record_free(el_survey_record *r)
{
    if (r == NULL)
        return;
    free(r->path);
    free(r->error);
    free(r->json);
    memset(r, 0, sizeof *r);
}

/* The rest of the line after "key " at *p, copied; advances *p past it. */
static char *record_field(const char **p, const char *key)
{
    size_t n = strlen(key);
    if (strncmp(*p, key, n) != 0 || (*p)[n] != ' ')
        return NULL;
    const char *v = *p + n + 1;
    const char *end = strchr(v, '\n');
    if (end == NULL)
        return NULL;
    char *s = malloc((size_t)(end - v) + 1);
    if (s != NULL) {
        memcpy(s, v, (size_t)(end - v));
        s[end - v] = '\0';
    }
    *p = end + 1;
    return s;
}

static int parse_ll(const char *s, long long *out)
{
    char *end = NULL;
    errno = 0;
    long long v = strtoll(s, &end, 10);
    if (s[0] == '\0' || *end != '\0' || errno != 0)
        return 0;
    *out = v;
    return 1;
}

static int parse_hex(const char *s, uint64_t *out)
{
    char *end = NULL;
    errno = 0;
    unsigned long long v = strtoull(s, &end, 16);
    if (strlen(s) != 16 || *end != '\0' || errno != 0)
        return 0;
    *out = (uint64_t)v;
    return 1;
}

el_status el_survey_record_parse(const char *text, el_survey_record *r, el_error *err)
{
    static const char *const keys[] = {"path", "size", "mtime_ns", "content_fnv1a64",
                                       "options_fnv1a64", "report", "exit", "error", "json"};
    memset(r, 0, sizeof *r);
    size_t n = strlen(RECORD_MAGIC);
    const char *p = text;
    char *v[9] = {0};
    int ok = strncmp(p, RECORD_MAGIC, n) == 0 && p[n] == '\n';
    p += ok ? n + 1 : 0;
    for (size_t i = 0; ok && i < 9; i++)
        ok = (v[i] = record_field(&p, keys[i])) != NULL;
    long long report = 0, code = 0;
    ok = ok && strcmp(p, "end\n") == 0 && parse_ll(v[1], &r->size) &&
         parse_ll(v[2], &r->mtime_ns) && parse_hex(v[3], &r->content_hash) &&
         parse_hex(v[4], &r->options_hash) && parse_ll(v[5], &report) &&
         parse_ll(v[6], &code) && code >= 0 && code < 256;
    if (ok) {
        r->path = v[0];
        r->has_report = report != 0;
        r->exit_code = (int)code;
        r->error = v[7];
        r->json = v[8];
        v[0] = v[7] = v[8] = NULL;
    }
    for (size_t i = 0; i < 9; i++)
        free(v[i]);
    if (!ok) {
        memset(r, 0, sizeof *r);
        return el_error_set(err, EL_ERR_DATA, "not a complete survey record");
    }
    return EL_OK;
}

/* ---------------------------------------------------------------- JSON */

el_status el_survey_json_compact(const char *text, size_t length, el_buf *out,
                                 el_error *err)
{
    size_t i = 0;
    while (i < length) {
        char c = text[i];
        if (c == ' ' || c == '\n' || c == '\t' || c == '\r') {
            i++;
            continue;
        }
        if (c != '"') {
            size_t j = i;
            while (j < length && strchr(" \n\t\r\"", text[j]) == NULL)
                j++;
            el_buf_append(out, text + i, j - i);
            i = j;
            continue;
        }
        size_t j = i + 1;
        while (j < length && text[j] != '"')
            j += text[j] == '\\' ? 2 : 1;
        if (j >= length)
            return el_error_set(err, EL_ERR_DATA, "JSON string not closed");
        el_buf_append(out, text + i, j + 1 - i);
        i = j + 1;
    }
    if (el_buf_append(out, "", 0) != EL_OK)
        return nomem(err);
    return EL_OK;
}

/* A minimal reader over JSON text: finds values by key and index and
 * skips values; enough for the few fields of a row. */
static const char *skip_ws(const char *p)
{
    while (*p == ' ' || *p == '\n' || *p == '\t' || *p == '\r')
        p++;
    return p;
}

static const char *skip_string(const char *p)
{
    for (p++; *p != '\0' && *p != '"'; p++)
        if (*p == '\\' && p[1] != '\0')
            p++;
    return *p == '"' ? p + 1 : NULL;
}

/* End of the value starting at p (after whitespace), NULL when malformed. */
static const char *skip_value(const char *p, int depth)
{
    p = skip_ws(p);
    if (depth > 64)
        return NULL;
    if (*p == '"')
        return skip_string(p);
    if (*p == '{' || *p == '[') {
        char close = *p == '{' ? '}' : ']';
        p = skip_ws(p + 1);
        if (*p == close)
            return p + 1;
        for (;;) {
            if (close == '}') {
                if (*p != '"' || (p = skip_string(p)) == NULL)
                    return NULL;
                p = skip_ws(p);
                if (*p++ != ':')
                    return NULL;
            }
            if ((p = skip_value(p, depth + 1)) == NULL)
                return NULL;
            p = skip_ws(p);
            if (*p == close)
                return p + 1;
            if (*p++ != ',')
                return NULL;
            p = skip_ws(p);
        }
    }
    const char *start = p;
    while (*p != '\0' && strchr(",}] \n\t\r", *p) == NULL)
        p++;
    return p > start ? p : NULL;
}

/* The value of key in the object at obj, NULL when absent. Keys of the
 * assess JSON are plain ASCII, so they are compared without unescaping. */
static const char *json_get(const char *obj, const char *key)
{
    if (obj == NULL)
        return NULL;
    const char *p = skip_ws(obj);
    if (*p != '{')
        return NULL;
    p = skip_ws(p + 1);
    size_t n = strlen(key);
    while (*p == '"') {
        const char *k = p + 1;
        const char *end = skip_string(p);
        if (end == NULL)
            return NULL;
        p = skip_ws(end);
        if (*p++ != ':')
            return NULL;
        p = skip_ws(p);
        if ((size_t)(end - 1 - k) == n && strncmp(k, key, n) == 0)
            return p;
        if ((p = skip_value(p, 0)) == NULL)
            return NULL;
        p = skip_ws(p);
        if (*p != ',')
            return NULL;
        p = skip_ws(p + 1);
    }
    return NULL;
}

/* Element index of the array at arr, NULL when absent. */
static const char *json_at(const char *arr, size_t index)
{
    if (arr == NULL)
        return NULL;
    const char *p = skip_ws(arr);
    if (*p != '[')
        return NULL;
    p = skip_ws(p + 1);
    if (*p == ']')
        return NULL;
    for (size_t i = 0;; i++) {
        if (i == index)
            return p;
        if ((p = skip_value(p, 0)) == NULL)
            return NULL;
        p = skip_ws(p);
        if (*p != ',')
            return NULL;
        p = skip_ws(p + 1);
    }
}

static size_t json_length(const char *arr)
{
    size_t n = 0;
    while (json_at(arr, n) != NULL)
        n++;
    return n;
}

static void put_utf8(el_buf *b, unsigned long c)
{
    char u[4];
    size_t n;
    if (c < 0x80) {
        u[0] = (char)c;
        n = 1;
    } else if (c < 0x800) {
        u[0] = (char)(0xC0 | (c >> 6));
        u[1] = (char)(0x80 | (c & 0x3F));
        n = 2;
    } else if (c < 0x10000) {
        u[0] = (char)(0xE0 | (c >> 12));
        u[1] = (char)(0x80 | ((c >> 6) & 0x3F));
        u[2] = (char)(0x80 | (c & 0x3F));
        n = 3;
    } else {
        u[0] = (char)(0xF0 | (c >> 18));
        u[1] = (char)(0x80 | ((c >> 12) & 0x3F));
        u[2] = (char)(0x80 | ((c >> 6) & 0x3F));
        u[3] = (char)(0x80 | (c & 0x3F));
        n = 4;
    }
    el_buf_append(b, u, n);
}

static unsigned long hex4(const char *p)
{
    char h[5] = {0};
    memcpy(h, p, 4);
    return strtoul(h, NULL, 16);
}

/* The value at p as row text: a string unescaped, a number's own text,
 * true/false, "" for null or absent. NULL only when out of memory. */
static char *json_text(const char *p)
{
    el_buf b = {0};
    el_buf_append(&b, "", 0);
    if (p == NULL)
        return b.data;
    p = skip_ws(p);
    const char *end = skip_value(p, 0);
    if (end == NULL || strncmp(p, "null", 4) == 0)
        return b.data;
    if (*p != '"') {
        el_buf_append(&b, p, (size_t)(end - p));
        return b.failed ? (el_buf_free(&b), NULL) : b.data;
    }
    for (p++; p < end - 1; p++) {
        if (*p != '\\') {
            el_buf_append(&b, p, 1);
            continue;
        }
        char c = *++p;
        const char *plain = strchr("\"\\/bfnrt", c);
        if (plain != NULL && c != 'u') {
            static const char map[] = "\"\\/\b\f\n\r\t";
            el_buf_append(&b, &map[plain - "\"\\/bfnrt"], 1);
        } else if (c == 'u' && end - p > 4) {
            unsigned long u = hex4(p + 1);
            p += 4;
            if (u >= 0xD800 && u < 0xDC00 && end - p > 6 && p[1] == '\\' && p[2] == 'u') {
                unsigned long lo = hex4(p + 3);
                u = 0x10000 + ((u - 0xD800) << 10) + (lo - 0xDC00);
                p += 6;
            }
            put_utf8(&b, u);
        }
    }
    return b.failed ? (el_buf_free(&b), NULL) : b.data;
}

/* ---------------------------------------------------------------- rows */

static const char *const COLUMN_NAMES[EL_SC_COUNT] = {
    "file", "status", "exit_code", "error", "rows_used", "verdict", "ambiguous", "type",
    "frequency_hz", "frequency_hz_lo", "frequency_hz_hi",
    "damping_ratio", "damping_ratio_lo", "damping_ratio_hi",
    "decay_rate", "decay_rate_lo", "decay_rate_hi",
    "p_stable", "warnings", "estimator",
};

const char *el_survey_column_name(el_survey_column c)
{
    return (unsigned)c < EL_SC_COUNT ? COLUMN_NAMES[c] : "?";
}

void el_survey_row_free(el_survey_row *row)
{
    for (int c = 0; c < EL_SC_COUNT; c++)
        free(row->field[c]);
    memset(row, 0, sizeof *row);
}

static char *int_text(long long v)
{
    char s[32];
    snprintf(s, sizeof s, "%lld", v);
    return dup_text(s);
}

/* The value of a mode quantity and its bounds into three columns. */
static void mode_columns(el_survey_row *row, const char *mode, const char *name, int c)
{
    const char *bounds = json_get(json_get(mode, "bounds"), name);
    row->field[c] = json_text(json_get(mode, name));
    row->field[c + 1] = json_text(json_at(bounds, 0));
    row->field[c + 2] = json_text(json_at(bounds, 1));
}

static el_status row_from_json(const char *json, el_survey_row *row, el_error *err)
{
    if (skip_value(json, 0) == NULL || json_get(json, "verdict") == NULL)
        return el_error_set(err, EL_ERR_DATA, "the log's assess JSON cannot be read");
    const char *input = json_get(json, "input");
    const char *verdict = json_get(json, "verdict");
    const char *mode = json_at(json_get(json, "modes"), 0);
    row->field[EL_SC_STATUS] = dup_text("ok");
    row->field[EL_SC_EXIT_CODE] = dup_text("0");
    row->field[EL_SC_ERROR] = dup_text("");
    row->field[EL_SC_ROWS_USED] = json_text(json_get(input, "rows_used"));
    row->field[EL_SC_VERDICT] = json_text(json_get(verdict, "stability"));
    row->field[EL_SC_AMBIGUOUS] = json_text(json_get(verdict, "ambiguous"));
    row->field[EL_SC_TYPE] = json_text(json_get(verdict, "type"));
    mode_columns(row, mode, "frequency_hz", EL_SC_FREQUENCY);
    mode_columns(row, mode, "damping_ratio", EL_SC_DAMPING);
    mode_columns(row, mode, "decay_rate", EL_SC_DECAY);
    row->field[EL_SC_P_STABLE] = json_text(json_get(verdict, "p_stable"));
    size_t n_warn = json_length(json_get(input, "warnings")) +
                    json_length(json_get(verdict, "warnings"));
    row->field[EL_SC_WARNINGS] = int_text((long long)n_warn);
    row->field[EL_SC_ESTIMATOR] = json_text(json_get(json_get(json, "model"), "method"));
    return EL_OK;
}

el_status el_survey_row_build(const el_survey_record *rec, el_survey_row *row,
                              el_error *err)
{
    memset(row, 0, sizeof *row);
    row->field[EL_SC_FILE] = dup_text(rec->path);
    el_status st = EL_OK;
    if (rec->exit_code == 0) {
        st = row_from_json(rec->json ? rec->json : "", row, err);
    } else {
        row->field[EL_SC_STATUS] = dup_text("error");
        row->field[EL_SC_EXIT_CODE] = int_text(rec->exit_code);
        row->field[EL_SC_ERROR] = dup_text(rec->error ? rec->error : "");
    }
    for (int c = 0; c < EL_SC_COUNT; c++)
        if (row->field[c] == NULL && (row->field[c] = dup_text("")) == NULL && st == EL_OK)
            st = nomem(err);
    if (st != EL_OK)
        el_survey_row_free(row);
    return st;
}

el_status el_survey_jsonl_line(const el_survey_record *rec, el_buf *out)
{
    if (rec->exit_code == 0)
        return el_buf_append(out, rec->json ? rec->json : "", rec->json ? strlen(rec->json) : 0);
    el_buf pretty = {0};
    el_json j;
    el_json_init(&j, &pretty);
    el_json_object_begin(&j, NULL);
    el_json_object_begin(&j, "survey_error");
    el_json_string(&j, "file", rec->path);
    el_json_int(&j, "exit_code", rec->exit_code);
    el_json_string(&j, "message", rec->error ? rec->error : "");
    el_json_object_end(&j);
    el_json_object_end(&j);
    el_status st = el_json_finish(&j);
    if (st == EL_OK)
        st = el_survey_json_compact(pretty.data, pretty.length, out, NULL);
    el_buf_free(&pretty);
    return st;
}

el_status el_survey_table_push(el_survey_table *t, el_survey_row *row)
{
    if (t->count == t->capacity) {
        size_t cap = t->capacity ? 2 * t->capacity : 32;
        el_survey_row *grown = realloc(t->rows, cap * sizeof *grown);
        if (grown == NULL)
            return EL_ERR_NOMEM;
        t->rows = grown;
        t->capacity = cap;
    }
    t->rows[t->count++] = *row;
    memset(row, 0, sizeof *row);
    return EL_OK;
}

void el_survey_table_free(el_survey_table *t)
{
    if (t == NULL)
        return;
    for (size_t i = 0; i < t->count; i++)
        el_survey_row_free(&t->rows[i]);
    free(t->rows);
    memset(t, 0, sizeof *t);
}

/* ---------------------------------------------------------------- CSV */

static void csv_field(el_buf *out, const char *s)
{
    if (strpbrk(s, ",\"\r\n") == NULL) {
        el_buf_append(out, s, strlen(s));
        return;
    }
    el_buf_append(out, "\"", 1);
    for (; *s != '\0'; s++) {
        if (*s == '"')
            el_buf_append(out, "\"", 1);
        el_buf_append(out, s, 1);
    }
    el_buf_append(out, "\"", 1);
}

el_status el_survey_csv(const el_survey_table *t, el_buf *out)
{
    for (int c = 0; c < EL_SC_COUNT; c++) {
        if (c > 0)
            el_buf_append(out, ",", 1);
        csv_field(out, COLUMN_NAMES[c]);
    }
    el_buf_append(out, "\n", 1);
    for (size_t i = 0; i < t->count; i++) {
        for (int c = 0; c < EL_SC_COUNT; c++) {
            if (c > 0)
                el_buf_append(out, ",", 1);
            csv_field(out, t->rows[i].field[c] ? t->rows[i].field[c] : "");
        }
        el_buf_append(out, "\n", 1);
    }
    return el_buf_append(out, "", 0);
}

/* Reads one CSV record starting at *p into fields; advances *p past its
 * line end. Returns the number of fields, or -1 (unclosed quote) / -2
 * (out of memory) / -3 (too many fields). */
static int csv_record(const char **p, char **fields, int max_fields)
{
    int n = 0;
    const char *s = *p;
    for (;;) {
        el_buf b = {0};
        el_buf_append(&b, "", 0);
        if (*s == '"') {
            for (s++;; s++) {
                if (*s == '\0') {
                    el_buf_free(&b);
                    return -1;
                }
                if (*s == '"') {
                    if (s[1] != '"')
                        break;
                    s++;
                }
                el_buf_append(&b, s, 1);
            }
            s++;
        } else {
            const char *e = s + strcspn(s, ",\n");
            el_buf_append(&b, s, (size_t)(e - s));
            s = e;
        }
        if (b.failed || n == max_fields) {
            int code = b.failed ? -2 : -3;
            el_buf_free(&b);
            return code;
        }
        fields[n++] = b.data;
        if (*s == ',') {
            s++;
            continue;
        }
        if (*s == '\n')
            s++;
        *p = s;
        return n;
    }
}

el_status el_survey_csv_read(const char *name, const char *text, el_survey_table *t,
                             el_error *err)
{
    const char *p = text;
    long line = 1;
    char *fields[EL_SC_COUNT + 1];
    el_status st = EL_OK;
    int first = 1;
    while (st == EL_OK && *p != '\0') {
        int n = csv_record(&p, fields, EL_SC_COUNT + 1);
        if (n == -2)
            return nomem(err);
        if (n != EL_SC_COUNT) {
            st = el_error_set(err, EL_ERR_DATA, "a survey table row with %s",
                              n < 0 ? "an unclosed quote or too many fields"
                                    : "the wrong number of fields");
        } else if (first) {
            for (int c = 0; c < EL_SC_COUNT && st == EL_OK; c++)
                if (strcmp(fields[c], COLUMN_NAMES[c]) != 0)
                    st = el_error_set(err, EL_ERR_DATA, "not this version's survey table header");
        } else {
            el_survey_row row;
            memcpy(row.field, fields, sizeof row.field);
            if (el_survey_table_push(t, &row) != EL_OK)
                st = nomem(err);
            else
                n = 0;   /* the table owns the strings now */
        }
        for (int c = 0; c < n; c++)
            free(fields[c]);
        if (st != EL_OK) {
            el_error_at(err, name, line, 0);
            el_error_hint(err, "merge shards written by this version of eigenlog survey");
        }
        first = 0;
        line++;
    }
    return st;
}

double el_survey_row_number(const el_survey_row *row, el_survey_column c)
{
    const char *s = row->field[c];
    if (s == NULL || s[0] == '\0')
        return NAN;
    char *end = NULL;
    double v = strtod(s, &end);
    return *end == '\0' ? v : NAN;
}

int el_survey_row_fails(const el_survey_row *row, int fail_on)
{
    if (strcmp(row->field[EL_SC_STATUS], "ok") != 0)
        return 0;
    int stable = strcmp(row->field[EL_SC_VERDICT], "stable") == 0;
    if (fail_on == 1)
        return strcmp(row->field[EL_SC_VERDICT], "unstable") == 0;
    if (fail_on == 2)
        return strcmp(row->field[EL_SC_AMBIGUOUS], "true") == 0 || !stable;
    return 0;
}

void el_survey_report_name(const char *path, char *out, size_t size)
{
    const char *base = strrchr(path, '/');
    base = base ? base + 1 : path;
    size_t n = strlen(base);
    if (ends_with(base, ".csv.gz"))
        n -= 7;
    else if (ends_with(base, ".csv"))
        n -= 4;
    if (n > 64)
        n = 64;
    char stem[65];
    for (size_t i = 0; i < n; i++) {
        char c = base[i];
        int plain = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') ||
                    (c >= '0' && c <= '9') || c == '-' || c == '_' || c == '.';
        stem[i] = plain ? c : '_';
    }
    stem[n] = '\0';
    uint64_t h = el_fnv1a64(EL_FNV1A64_OFFSET, path, strlen(path));
    snprintf(out, size, "%s-%08x", stem, (unsigned)(h >> 32));
}
