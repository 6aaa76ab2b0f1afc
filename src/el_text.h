/* el_text: the few byte-string helpers the readers share (blanks, case). */
#ifndef EL_TEXT_H
#define EL_TEXT_H

#include <stddef.h>

/* 1 for a blank (space or tab), the only characters trimmed around cells
 * and names; 0 otherwise. */
int el_text_is_blank(char c);

/* Narrows s[0..*n) to drop leading and trailing blanks (el_text_is_blank):
 * moves *s forward and shrinks *n. Never reads outside s[0..*n). */
void el_text_trim(const char **s, size_t *n);

/* 1 when s[0..n) equals the lower-case NUL-terminated word in ASCII
 * case-insensitive comparison (no locale), else 0. */
int el_text_equals_nocase(const char *s, size_t n, const char *word);

/* ASCII lower case of c (no locale); other bytes unchanged. */
int el_text_lower(char c);

/* Copies the cell s[0..n) into out (size bytes, NUL-terminated) for a
 * message: control bytes written \xHH, '"' and '\\' escaped, and a cell
 * longer than max bytes cut there with "...". Never writes past size. */
void el_text_show(const char *s, size_t n, size_t max, char *out, size_t size);

#endif
