/* el_error: status codes, error record and warning list. */
#include "el_error.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void el_error_clear(el_error *err)
{
    if (err == NULL)
        return;
    memset(err, 0, sizeof *err);
    err->status = EL_OK;
}

el_status el_error_set(el_error *err, el_status status, const char *fmt, ...)
{
    if (err == NULL)
        return status;
    err->status = status;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err->message, sizeof err->message, fmt, ap);
    va_end(ap);
    return status;
}

void el_error_at(el_error *err, const char *file, long line, long column)
{
    if (err == NULL)
        return;
    snprintf(err->file, sizeof err->file, "%s", file != NULL ? file : "");
    err->line = line;
    err->column = column;
}

void el_error_option(el_error *err, const char *option)
{
    if (err == NULL)
        return;
    snprintf(err->option, sizeof err->option, "%s", option != NULL ? option : "");
}

void el_error_hint(el_error *err, const char *fmt, ...)
{
    if (err == NULL)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(err->hint, sizeof err->hint, fmt, ap);
    va_end(ap);
}

char *el_error_format(const el_error *err, char *buf, size_t size)
{
    if (buf == NULL || size == 0)
        return buf;
    buf[0] = '\0';
    if (err == NULL)
        return buf;
    size_t used = 0;
#define EL_APPEND(...)                                                       \
    do {                                                                     \
        if (used < size) {                                                   \
            int n_ = snprintf(buf + used, size - used, __VA_ARGS__);         \
            used += n_ > 0 ? (size_t)n_ : 0;                                 \
        }                                                                    \
    } while (0)
    if (err->file[0] != '\0') {
        EL_APPEND("%s:", err->file);
        if (err->line > 0)
            EL_APPEND("%ld:", err->line);
        if (err->column > 0)
            EL_APPEND("%ld:", err->column);
        EL_APPEND(" ");
    }
    if (err->option[0] != '\0')
        EL_APPEND("option %s: ", err->option);
    EL_APPEND("%s", err->message[0] != '\0' ? err->message : el_strerror(err->status));
    if (err->hint[0] != '\0')
        EL_APPEND("\n  hint: %s", err->hint);
#undef EL_APPEND
    return buf;
}

const char *el_strerror(el_status status)
{
    switch (status) {
    case EL_OK: return "success";
    case EL_ERR_USAGE: return "usage error";
    case EL_ERR_DATA: return "bad input data";
    case EL_ERR_NUMERIC: return "numerical failure";
    case EL_ERR_IO: return "input/output error";
    case EL_ERR_NOMEM: return "out of memory";
    case EL_ERR_INTERNAL: return "internal error";
    }
    return "unknown error";
}

int el_exit_code(el_status status)
{
    switch (status) {
    case EL_OK: return 0;
    case EL_ERR_USAGE: return 1;
    case EL_ERR_DATA: return 2;
    case EL_ERR_NUMERIC: return 3;
    case EL_ERR_IO: return 4;
    case EL_ERR_NOMEM: return 4;
    case EL_ERR_INTERNAL: return 3;
    }
    return 3;
}

el_status el_warnings_add(el_warnings *w, const char *fmt, ...)
{
    if (w == NULL)
        return EL_OK;
    va_list ap;
    va_start(ap, fmt);
    int len = vsnprintf(NULL, 0, fmt, ap);
    va_end(ap);
    if (len < 0)
        return EL_ERR_INTERNAL;
    if (w->count == w->capacity) {
        size_t cap = w->capacity ? 2 * w->capacity : 8;
        char **grown = realloc(w->items, cap * sizeof *grown);
        if (grown == NULL)
            return EL_ERR_NOMEM;
        w->items = grown;
        w->capacity = cap;
    }
    char *text = malloc((size_t)len + 1);
    if (text == NULL)
        return EL_ERR_NOMEM;
    va_start(ap, fmt);
    vsnprintf(text, (size_t)len + 1, fmt, ap);
    va_end(ap);
    w->items[w->count++] = text;
    return EL_OK;
}

void el_warnings_free(el_warnings *w)
{
    if (w == NULL)
        return;
    for (size_t i = 0; i < w->count; i++)
        free(w->items[i]);
    free(w->items);
    w->items = NULL;
    w->count = 0;
    w->capacity = 0;
}
