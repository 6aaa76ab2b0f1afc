/* el_warnlines: repeated per-mode and per-channel warnings on one line
 * (text and HTML reports). */
#include "el_warnlines.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_io.h"

/* Number tokens a channel warning may hold (beyond: not folded). */
#define EL_WARNLINES_MAX_NUMBERS 16

/* One warning as the lines see it: about one mode, "mode N (PAREN) is
 * REST" (kind 1), about one channel, "... channel NAME ..." (kind 2,
 * grouped with the warnings whose text differs only in the name and in
 * numbers), or anything else (kind 0, printed as it is). */
typedef struct {
    const char *text;
    int kind;
    size_t mode;         /* kind 1: N */
    int paren;           /* kind 1: 0 frequency in Hz, 1 real, 2 at the Nyquist limit */
    double hz;           /* kind 1, paren 0 */
    const char *rest;    /* kind 1: after "is " */
    size_t name_at, name_len;   /* kind 2: the channel name */
    size_t n_numbers;    /* kind 2: number tokens, outside the name */
    size_t number_at[EL_WARNLINES_MAX_NUMBERS], number_len[EL_WARNLINES_MAX_NUMBERS];
    char *key;           /* kind 2: the text without name, numbers as '#' (owned) */
    int done;            /* already printed (alone or in a group) */
} warning_item;

static int parse_mode_warning(const char *text, warning_item *w)
{
    if (strncmp(text, "mode ", 5) != 0 || text[5] < '0' || text[5] > '9')
        return 0;
    char *end = NULL;
    unsigned long n = strtoul(text + 5, &end, 10);
    if (strncmp(end, " (", 2) != 0)
        return 0;
    const char *paren = end + 2, *close = strchr(paren, ')');
    if (close == NULL || strncmp(close, ") is ", 5) != 0)
        return 0;
    size_t len = (size_t)(close - paren);
    if (len == 4 && strncmp(paren, "real", 4) == 0) {
        w->paren = 1;
    } else if (len == 20 && strncmp(paren, "at the Nyquist limit", 20) == 0) {
        w->paren = 2;
    } else {
        char *num_end = NULL;
        w->hz = strtod(paren, &num_end);
        if (num_end == paren || num_end != close - 3 || strncmp(num_end, " Hz", 3) != 0 ||
            !isfinite(w->hz))
            return 0;
    }
    w->kind = 1;
    w->mode = (size_t)n;
    w->rest = close + 5;
    return 1;
}

static int is_word_char(char ch)
{
    return (ch >= '0' && ch <= '9') || (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
           ch == '_' || ch == '.';
}

/* Length of the number token at text[i] ("12", "-0.5", "1e-16", "3.2%"
 * without the %), or 0 when none starts there: a digit, or a sign before
 * one, not inside a word ("s000", "rank-24" are not numbers). */
static size_t number_at(const char *text, size_t i)
{
    if (i > 0 && (is_word_char(text[i - 1]) || text[i - 1] == '-'))
        return 0;
    size_t j = i;
    if ((text[j] == '-' || text[j] == '+') && text[j + 1] >= '0' && text[j + 1] <= '9')
        j++;
    if (text[j] < '0' || text[j] > '9')
        return 0;
    while ((text[j] >= '0' && text[j] <= '9') || text[j] == '.')
        j++;
    if ((text[j] == 'e' || text[j] == 'E') &&
        ((text[j + 1] >= '0' && text[j + 1] <= '9') ||
         ((text[j + 1] == '-' || text[j + 1] == '+') && text[j + 2] >= '0' && text[j + 2] <= '9'))) {
        j += 2;
        while (text[j] >= '0' && text[j] <= '9')
            j++;
    }
    if (is_word_char(text[j]) && text[j] != '.')
        return 0;
    return j - i;
}

/* "... channel NAME ..." (NAME up to a blank or one of ":),;"): the
 * name's place, the number tokens elsewhere and the key. 0 when the text
 * names no single channel, has too many numbers, or memory runs out (the
 * warning is then printed as it is). */
static int parse_channel_warning(const char *text, warning_item *w)
{
    const char *p = text;
    while ((p = strstr(p, "channel ")) != NULL && p > text && is_word_char(p[-1]))
        p++;
    if (p == NULL)
        return 0;
    size_t at = (size_t)(p - text) + 8, len = 0;
    while (text[at + len] != '\0' && strchr(" :),;", text[at + len]) == NULL)
        len++;
    if (len == 0)
        return 0;
    size_t n = strlen(text);
    char *key = malloc(n + 1);
    if (key == NULL)
        return 0;
    size_t k = 0, count = 0;
    for (size_t i = 0; i < n;) {
        if (i == at) {
            i += len;
            continue;
        }
        size_t t = number_at(text, i);
        if (t > 0 && i < at && i + t > at)
            t = 0;
        if (t > 0) {
            if (count == EL_WARNLINES_MAX_NUMBERS) {
                free(key);
                return 0;
            }
            w->number_at[count] = i;
            w->number_len[count++] = t;
            key[k++] = '#';
            i += t;
        } else {
            key[k++] = text[i++];
        }
    }
    key[k] = '\0';
    w->kind = 2;
    w->name_at = at;
    w->name_len = len;
    w->n_numbers = count;
    w->key = key;
    return 1;
}

/* "1, 4, 7-9" for ascending mode numbers. */
static void mode_list(el_buf *out, const size_t *modes, size_t n)
{
    for (size_t i = 0; i < n;) {
        size_t j = i;
        while (j + 1 < n && modes[j + 1] == modes[j] + 1)
            j++;
        el_buf_printf(out, "%s%zu", i ? ", " : "", modes[i]);
        if (j > i)
            el_buf_printf(out, "%s%zu", j == i + 1 ? ", " : "-", modes[j]);
        i = j + 1;
    }
}

static int cmp_size(const void *a, const void *b)
{
    size_t x = *(const size_t *)a, y = *(const size_t *)b;
    return x < y ? -1 : x > y;
}

/* The line for the group of mode warnings of w[first] (every later one
 * with the same REST, marked done); modes is scratch for n entries.
 * Returns the group's size. */
static size_t mode_group_line(warning_item *w, size_t n, size_t first, size_t *modes,
                              el_buf *line)
{
    size_t count = 0, n_real = 0, n_nyquist = 0, n_hz = 0;
    double lo = INFINITY, hi = -INFINITY;
    for (size_t j = first; j < n; j++) {
        if (w[j].done || w[j].kind != 1 || strcmp(w[j].rest, w[first].rest) != 0)
            continue;
        w[j].done = 1;
        modes[count++] = w[j].mode;
        if (w[j].paren == 1)
            n_real++;
        else if (w[j].paren == 2)
            n_nyquist++;
        else {
            n_hz++;
            lo = fmin(lo, w[j].hz);
            hi = fmax(hi, w[j].hz);
        }
    }
    if (count == 1) {
        el_buf_printf(line, "%s", w[first].text);
        return 1;
    }
    qsort(modes, count, sizeof *modes, cmp_size);
    el_buf_printf(line, "modes ");
    mode_list(line, modes, count);
    el_buf_printf(line, " (");
    const char *sep = "";
    if (n_hz > 0) {
        char a[32], b[32];
        snprintf(a, sizeof a, "%.3g", lo);
        snprintf(b, sizeof b, "%.3g", hi);
        if (strcmp(a, b) == 0)
            el_buf_printf(line, "%s Hz", a);
        else
            el_buf_printf(line, "%s-%s Hz", a, b);
        sep = "; ";
    }
    if (n_real > 0) {
        el_buf_printf(line, "%s%zu real", sep, n_real);
        sep = "; ";
    }
    if (n_nyquist > 0)
        el_buf_printf(line, "%s%zu at the Nyquist limit", sep, n_nyquist);
    /* The rest was written for one mode: "its" becomes "their". */
    el_buf_printf(line, ") are ");
    for (const char *q = w[first].rest; *q != '\0';) {
        int word_start = q == w[first].rest || q[-1] == ' ' || q[-1] == '(';
        if (word_start && strncmp(q, "its ", 4) == 0) {
            el_buf_printf(line, "their ");
            q += 4;
        } else {
            el_buf_printf(line, "%c", *q++);
        }
    }
    return count;
}

/* Number slot s of a channel group (members[0..count)): the one value, or
 * "LOWEST to HIGHEST" as written in the warnings when they differ. */
static void number_slot(const warning_item *w, const size_t *members, size_t count,
                        size_t s, el_buf *line)
{
    const warning_item *a = &w[members[0]];
    size_t lo = members[0], hi = members[0];
    int same = 1;
    for (size_t g = 1; g < count; g++) {
        const warning_item *b = &w[members[g]];
        if (b->number_len[s] != a->number_len[s] ||
            strncmp(b->text + b->number_at[s], a->text + a->number_at[s],
                    a->number_len[s]) != 0)
            same = 0;
        double v = strtod(b->text + b->number_at[s], NULL);
        if (v < strtod(w[lo].text + w[lo].number_at[s], NULL))
            lo = members[g];
        if (v > strtod(w[hi].text + w[hi].number_at[s], NULL))
            hi = members[g];
    }
    if (same)
        el_buf_printf(line, "%.*s", (int)a->number_len[s], a->text + a->number_at[s]);
    else
        el_buf_printf(line, "%.*s to %.*s", (int)w[lo].number_len[s],
                      w[lo].text + w[lo].number_at[s], (int)w[hi].number_len[s],
                      w[hi].text + w[hi].number_at[s]);
}

/* The line for the group of channel warnings of w[first]: the first
 * one's text with "channel NAME" as "channels A, B, ..." and each number
 * that differs as its range; members is scratch for n entries. */
static size_t channel_group_line(warning_item *w, size_t n, size_t first, size_t *members,
                                 el_buf *line)
{
    size_t count = 0;
    for (size_t j = first; j < n; j++) {
        if (w[j].done || w[j].kind != 2 || strcmp(w[j].key, w[first].key) != 0)
            continue;
        w[j].done = 1;
        members[count++] = j;
    }
    const warning_item *a = &w[first];
    if (count == 1) {
        el_buf_printf(line, "%s", a->text);
        return 1;
    }
    size_t s = 0;
    for (size_t i = 0; a->text[i] != '\0';) {
        if (i == a->name_at) {
            el_buf_printf(line, "s ");
            for (size_t g = 0; g < count && g < EL_WARNLINES_MAX_NAMES; g++)
                el_buf_printf(line, "%s%.*s", g ? ", " : "", (int)w[members[g]].name_len,
                              w[members[g]].text + w[members[g]].name_at);
            if (count > EL_WARNLINES_MAX_NAMES)
                el_buf_printf(line, " and %zu more", count - EL_WARNLINES_MAX_NAMES);
            i += a->name_len;
        } else if (i + 1 == a->name_at) {
            i++;    /* the blank after "channel": "channels " is written above */
        } else if (s < a->n_numbers && i == a->number_at[s]) {
            number_slot(w, members, count, s, line);
            i += a->number_len[s++];
        } else {
            el_buf_printf(line, "%c", a->text[i++]);
        }
    }
    return count;
}

el_status el_warnlines_fold(const el_warnings *const *lists, size_t n_lists,
                            el_warnings *out, size_t *n_collapsed)
{
    size_t n = 0, folded = 0;
    for (size_t l = 0; l < n_lists; l++)
        n += lists[l] != NULL ? lists[l]->count : 0;
    if (n_collapsed != NULL)
        *n_collapsed = 0;
    if (n == 0)
        return EL_OK;
    warning_item *w = calloc(n, sizeof *w);
    size_t *scratch = malloc(n * sizeof *scratch);
    el_status st = w != NULL && scratch != NULL ? EL_OK : EL_ERR_NOMEM;
    size_t k = 0;
    for (size_t l = 0; st == EL_OK && l < n_lists; l++)
        for (size_t i = 0; lists[l] != NULL && i < lists[l]->count; i++, k++) {
            w[k].text = lists[l]->items[i];
            if (!parse_mode_warning(w[k].text, &w[k]))
                parse_channel_warning(w[k].text, &w[k]);
        }
    el_buf line = {0};
    for (size_t i = 0; st == EL_OK && i < n; i++) {
        if (w[i].done)
            continue;
        line.length = 0;
        if (w[i].kind == 1) {
            folded += mode_group_line(w, n, i, scratch, &line) - 1;
        } else if (w[i].kind == 2) {
            folded += channel_group_line(w, n, i, scratch, &line) - 1;
        } else {
            w[i].done = 1;
            el_buf_printf(&line, "%s", w[i].text);
        }
        st = line.failed ? EL_ERR_NOMEM : el_warnings_add(out, "%s", line.data);
    }
    el_buf_free(&line);
    for (size_t i = 0; w != NULL && i < n; i++)
        free(w[i].key);
    free(w);
    free(scratch);
    if (n_collapsed != NULL && st == EL_OK)
        *n_collapsed = folded;
    return st;
}

char *el_warnlines_heading(size_t n_warnings, size_t n_lines, size_t n_folded, char *buf,
                           size_t size)
{
    if (n_folded > 0)
        snprintf(buf, size, "Warnings (%zu, on %zu line%s)", n_warnings, n_lines,
                 n_lines == 1 ? "" : "s");
    else
        snprintf(buf, size, "Warnings (%zu)", n_warnings);
    return buf;
}
