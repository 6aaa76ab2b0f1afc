/* el_record: where a CSV record ends (el_record.h). */
#include "el_record.h"

#include <string.h>

int el_record_scan(const char *p, size_t n, el_record_scan_state *s, size_t *stop)
{
    size_t i = s->scan;
    if (s->kind == EL_RECORD_UNKNOWN) {
        while (i < n && (p[i] == ' ' || p[i] == '\t' || p[i] == '\r'))
            i++;
        if (i == n) {
            s->scan = n;
            return 0;
        }
        if (p[i] == '\n') {
            s->kind = EL_RECORD_BLANK;
            *stop = i;
            return 1;
        }
        /* Comment lines are skipped without looking at quotes, so a stray
         * quote in a comment cannot swallow the lines after it. */
        s->kind = p[i] == '#' ? EL_RECORD_COMMENT : EL_RECORD_DATA;
    }
    if (s->kind == EL_RECORD_COMMENT || (s->kind == EL_RECORD_DATA && !s->has_quote)) {
        const char *nl = memchr(p + i, '\n', n - i);
        size_t end = nl != NULL ? (size_t)(nl - p) : n;
        const char *q = s->kind == EL_RECORD_DATA ? memchr(p + i, '"', end - i) : NULL;
        if (q == NULL) {
            if (nl != NULL) {
                *stop = end;
                return 1;
            }
            s->scan = n;
            return 0;
        }
        /* Quoted records are rare in logs: take the byte loop from here. */
        i = (size_t)(q - p);
        s->has_quote = 1;
    }
    for (; i < n; i++) {
        char c = p[i];
        if (s->in_quote) {
            if (c == '"') {
                s->in_quote = 0;
                s->last_close = i + 1;
            } else if (c == '\n') {
                s->newlines++;
            }
        } else if (c == '"') {
            s->in_quote = 1;
            if (s->last_close != i) /* not the second half of a "" pair */
                s->open_quote = i;
        } else if (c == '\n') {
            *stop = i;
            return 1;
        }
    }
    s->scan = n;
    return 0;
}


char el_record_delimiter(const char *text, size_t length)
{
    size_t comma = 0, semi = 0, tab = 0;
    int in_quote = 0;
    for (size_t i = 0; i < length; i++) {
        char c = text[i];
        if (c == '"')
            in_quote = !in_quote;
        else if (in_quote)
            continue;
        else if (c == ',')
            comma++;
        else if (c == ';')
            semi++;
        else if (c == '\t')
            tab++;
    }
    if (tab > 0 && tab >= semi && tab >= comma)
        return '\t';
    if (semi > 0 && semi >= comma)
        return ';';
    return ',';
}
