/* el_term: wrapping text to a terminal's width with hanging indents. */
#include "el_term.h"

#include <string.h>

/* Columns of s[0..n): UTF-8 continuation bytes take none. */
static size_t columns(const char *s, size_t n)
{
    size_t c = 0;
    for (size_t i = 0; i < n; i++)
        c += ((unsigned char)s[i] & 0xC0) != 0x80;
    return c;
}

/* Byte length of the longest prefix of s[0..n) that fits in cols columns
 * (whole UTF-8 characters). */
static size_t prefix_fitting(const char *s, size_t n, size_t cols)
{
    size_t c = 0, i = 0;
    while (i < n) {
        size_t j = i + 1;
        while (j < n && ((unsigned char)s[j] & 0xC0) == 0x80)
            j++;
        if (c + 1 > cols)
            break;
        c++;
        i = j;
    }
    return i;
}

/* The longest label a hanging indent lines up with ("one-step R2",
 * "time unit"); a run of spaces further in is inside the text. */
#define LABEL_MAX 16

/* The hanging indent of a line (see el_term_wrap). */
static size_t hanging_indent(const char *line, size_t n, size_t width)
{
    size_t lead = 0;
    while (lead < n && line[lead] == ' ')
        lead++;
    size_t indent = lead;
    if (n - lead > 2 && line[lead] == '!' && line[lead + 1] == ' ') {
        indent = lead + 2;
    } else if (n - lead > 9 && strncmp(line + lead, "Caution: ", 9) == 0) {
        indent = lead + 9;
    } else {
        /* A label of at most LABEL_MAX columns, then a run of two or more
         * spaces: continue under the value ("  estimator    iv, ..." under
         * "iv"). Otherwise two columns in from an indented line's start. */
        indent = lead > 0 ? lead + 2 : 0;
        for (size_t i = lead; i + 1 < n && i <= lead + LABEL_MAX; i++) {
            if (line[i] == ' ' && line[i + 1] == ' ') {
                size_t gap = i;
                while (gap < n && line[gap] == ' ')
                    gap++;
                if (gap < n)
                    indent = columns(line, gap);
                break;
            }
        }
    }
    if (indent > width / 2)
        indent = lead + 2 <= width / 2 ? lead + 2 : 2;
    return indent;
}

/* Appends one line (without its newline), wrapped. */
static void wrap_line(const char *line, size_t n, size_t width, el_buf *out)
{
    if (columns(line, n) <= width) {
        el_buf_append(out, line, n);
        return;
    }
    size_t indent = hanging_indent(line, n, width);
    size_t pos = 0, col_start = 0;
    while (col_start < n && line[col_start] == ' ')
        col_start++;  /* the first line breaks only after its leading spaces */
    int first = 1;
    while (pos < n) {
        size_t room = width - (first ? 0 : indent);
        const char *s = line + pos;
        size_t left = n - pos;
        size_t take;
        if (columns(s, left) <= room) {
            take = left;
        } else {
            size_t fit = prefix_fitting(s, left, room);
            /* Break at the last space within the room that leaves text
             * before it (not inside the leading indent). */
            size_t brk = fit;
            while (brk > col_start && s[brk] != ' ')
                brk--;
            take = brk > col_start ? brk : fit;
        }
        if (!first) {
            el_buf_append(out, "\n", 1);
            el_buf_printf(out, "%*s", (int)indent, "");
        }
        size_t end = take;
        while (end > 0 && s[end - 1] == ' ')
            end--;
        el_buf_append(out, s, end);
        pos += take;
        while (pos < n && line[pos] == ' ')
            pos++;
        first = 0;
        col_start = 0;
    }
}

el_status el_term_wrap(const char *text, size_t width, el_buf *out)
{
    if (width < EL_TERM_MIN_WIDTH)
        width = EL_TERM_MIN_WIDTH;
    const char *p = text != NULL ? text : "";
    while (*p != '\0') {
        const char *nl = strchr(p, '\n');
        size_t n = nl != NULL ? (size_t)(nl - p) : strlen(p);
        wrap_line(p, n, width, out);
        if (nl == NULL)
            break;
        el_buf_append(out, "\n", 1);
        p = nl + 1;
    }
    return out->failed ? EL_ERR_NOMEM : EL_OK;
}
