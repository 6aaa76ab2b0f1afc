/* el_json: streaming JSON writer. */
#include "el_json.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

void el_json_init(el_json *j, el_buf *out)
{
    memset(j, 0, sizeof *j);
    j->out = out;
}

static void put(el_json *j, const char *text)
{
    if (!j->failed && el_buf_append(j->out, text, strlen(text)) != EL_OK)
        j->failed = 1;
}

static void put_string(el_json *j, const char *s)
{
    put(j, "\"");
    for (const unsigned char *p = (const unsigned char *)s; *p != '\0'; p++) {
        char esc[8];
        switch (*p) {
        case '"': put(j, "\\\""); break;
        case '\\': put(j, "\\\\"); break;
        case '\n': put(j, "\\n"); break;
        case '\r': put(j, "\\r"); break;
        case '\t': put(j, "\\t"); break;
        default:
            if (*p < 0x20) {
                snprintf(esc, sizeof esc, "\\u%04x", *p);
                put(j, esc);
            } else {
                esc[0] = (char)*p;
                esc[1] = '\0';
                put(j, esc);
            }
        }
    }
    put(j, "\"");
}

/* Separator, newline, indentation and key before a value. */
static void begin_value(el_json *j, const char *key)
{
    if (j->failed)
        return;
    if (j->depth > 0) {
        put(j, j->count[j->depth] > 0 ? ",\n" : "\n");
        for (int i = 0; i < j->depth; i++)
            put(j, "  ");
        j->count[j->depth]++;
    }
    if (key != NULL) {
        put_string(j, key);
        put(j, ": ");
    }
}

static void open_level(el_json *j, const char *key, const char *bracket)
{
    begin_value(j, key);
    put(j, bracket);
    if (j->depth + 1 >= EL_JSON_MAX_DEPTH) {
        j->failed = 2;
        return;
    }
    j->depth++;
    j->count[j->depth] = 0;
}

static void close_level(el_json *j, const char *bracket)
{
    if (j->failed)
        return;
    if (j->depth == 0) {
        j->failed = 2;
        return;
    }
    int had_values = j->count[j->depth] > 0;
    j->depth--;
    if (had_values) {
        put(j, "\n");
        for (int i = 0; i < j->depth; i++)
            put(j, "  ");
    }
    put(j, bracket);
}

void el_json_object_begin(el_json *j, const char *key) { open_level(j, key, "{"); }
void el_json_object_end(el_json *j) { close_level(j, "}"); }
void el_json_array_begin(el_json *j, const char *key) { open_level(j, key, "["); }
void el_json_array_end(el_json *j) { close_level(j, "]"); }

static void put_number(el_json *j, double value)
{
    if (!isfinite(value)) {
        put(j, "null");
        return;
    }
    char text[40];
    /* 17 significant digits round-trip any double; integers print plainly. */
    if (value == 0.0)
        snprintf(text, sizeof text, "0");
    else
        snprintf(text, sizeof text, "%.17g", value);
    put(j, text);
}

void el_json_number(el_json *j, const char *key, double value)
{
    begin_value(j, key);
    put_number(j, value);
}

void el_json_int(el_json *j, const char *key, long long value)
{
    char text[32];
    snprintf(text, sizeof text, "%lld", value);
    begin_value(j, key);
    put(j, text);
}

void el_json_string(el_json *j, const char *key, const char *text)
{
    begin_value(j, key);
    if (text == NULL)
        put(j, "null");
    else
        put_string(j, text);
}

void el_json_bool(el_json *j, const char *key, int value)
{
    begin_value(j, key);
    put(j, value ? "true" : "false");
}

void el_json_null(el_json *j, const char *key)
{
    begin_value(j, key);
    put(j, "null");
}

void el_json_pair(el_json *j, const char *key, double lo, double hi)
{
    begin_value(j, key);
    put(j, "[");
    put_number(j, lo);
    put(j, ", ");
    put_number(j, hi);
    put(j, "]");
}

el_status el_json_finish(el_json *j)
{
    if (!j->failed && j->depth != 0)
        j->failed = 2;
    put(j, "\n");
    if (j->failed == 1)
        return EL_ERR_NOMEM;
    return j->failed ? EL_ERR_INTERNAL : EL_OK;
}
