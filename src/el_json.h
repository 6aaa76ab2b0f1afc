/* el_json: a small streaming JSON writer into an el_buf (pretty-printed,
 * numbers with 17 significant digits, non-finite numbers written as null). */
#ifndef EL_JSON_H
#define EL_JSON_H

#include "el_io.h"

#define EL_JSON_MAX_DEPTH 32

/* Writer state. Create with el_json_init; every call takes the key of the
 * value (NULL inside arrays and for the top-level value). Errors (out of
 * memory, nesting deeper than EL_JSON_MAX_DEPTH) stick in `failed` and
 * make later calls no-ops; check el_json_finish. */
typedef struct {
    el_buf *out;
    int depth;
    int count[EL_JSON_MAX_DEPTH];   /* values written at each level */
    int failed;
} el_json;

void el_json_init(el_json *j, el_buf *out);
void el_json_object_begin(el_json *j, const char *key);
void el_json_object_end(el_json *j);
void el_json_array_begin(el_json *j, const char *key);
void el_json_array_end(el_json *j);
/* A number; NaN and infinities are written as null (a value that does not
 * exist is null, never NaN: docs/json.md). */
void el_json_number(el_json *j, const char *key, double value);
void el_json_int(el_json *j, const char *key, long long value);
/* A string, escaped per RFC 8259; NULL is written as null. */
void el_json_string(el_json *j, const char *key, const char *text);
void el_json_bool(el_json *j, const char *key, int value);
void el_json_null(el_json *j, const char *key);
/* [lo, hi] pair of numbers (bounds). */
void el_json_pair(el_json *j, const char *key, double lo, double hi);

/* Ends the document with a newline. Returns EL_OK, or EL_ERR_NOMEM /
 * EL_ERR_INTERNAL (unbalanced nesting) when the writer failed. */
el_status el_json_finish(el_json *j);

#endif
