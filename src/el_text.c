/* el_text: byte-string helpers shared by the CSV reader, the number parser
 * and the time formats. ASCII only on purpose: a log's meaning must not
 * depend on the locale of the machine reading it. */
#include "el_text.h"

#include <stdio.h>
#include <string.h>

int el_text_is_blank(char c)
{
    return c == ' ' || c == '\t';
}

void el_text_trim(const char **s, size_t *n)
{
    while (*n > 0 && el_text_is_blank(**s)) {
        (*s)++;
        (*n)--;
    }
    while (*n > 0 && el_text_is_blank((*s)[*n - 1]))
        (*n)--;
}

int el_text_lower(char c)
{
    return c >= 'A' && c <= 'Z' ? c + ('a' - 'A') : c;
}

int el_text_equals_nocase(const char *s, size_t n, const char *word)
{
    size_t k = strlen(word);
    if (n != k)
        return 0;
    for (size_t i = 0; i < n; i++)
        if (el_text_lower(s[i]) != word[i])
            return 0;
    return 1;
}

void el_text_show(const char *s, size_t n, size_t max, char *out, size_t size)
{
    size_t w = 0;
    if (size == 0)
        return;
    for (size_t i = 0; i < n && w + 8 < size; i++) {
        unsigned char c = (unsigned char)s[i];
        if (i >= max) {
            w += (size_t)snprintf(out + w, size - w, "...");
            break;
        }
        if (c < 0x20 || c == 0x7F || c == '"' || c == '\\')
            w += (size_t)snprintf(out + w, size - w, c == '"' || c == '\\' ? "\\%c" : "\\x%02X", c);
        else
            out[w++] = (char)c;
    }
    out[w] = '\0';
}
