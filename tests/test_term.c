/* test_term: wrapping to a terminal's width. The reference is the text
 * itself: the words in the same order, no line over the width, and the
 * hanging indents the report layout promises (el_term.h), written out by
 * hand below. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_term.h"

static char *wrap(const char *text, size_t width)
{
    el_buf b = {0};
    assert_int_equal(el_term_wrap(text, width, &b), EL_OK);
    el_buf_append(&b, "", 1);
    return b.data;
}

/* Longest line of s in columns (ASCII here). */
static size_t longest(const char *s)
{
    size_t m = 0, c = 0;
    for (; *s; s++) {
        if (*s == '\n') {
            c = 0;
            continue;
        }
        if (++c > m)
            m = c;
    }
    return m;
}

/* s with every run of spaces and newlines made one space. */
static char *words(const char *s)
{
    char *w = malloc(strlen(s) + 1), *o = w;
    int gap = 0;
    for (; *s; s++) {
        if (*s == ' ' || *s == '\n') {
            gap = o != w;
            continue;
        }
        if (gap)
            *o++ = ' ';
        gap = 0;
        *o++ = *s;
    }
    *o = '\0';
    return w;
}

static void test_short_lines_unchanged(void **state)
{
    (void)state;
    const char *t = "Verdict       STABLE\n  a table    row  1\n\nend";
    char *w = wrap(t, 80);
    assert_string_equal(w, t);
    free(w);
}

static void test_label_hanging_indent(void **state)
{
    (void)state;
    const char *t = "  estimator    iv, chosen for transient data (the amplitude changes over "
                    "the window): instrumental variables, cross-checked by forward-backward DMD\n";
    char *w = wrap(t, 60);
    /* Written out by hand: continuation lines start under "iv" (column 15). */
    assert_string_equal(w,
                        "  estimator    iv, chosen for transient data (the amplitude\n"
                        "               changes over the window): instrumental\n"
                        "               variables, cross-checked by forward-backward\n"
                        "               DMD\n");
    char *a = words(t), *b = words(w);
    assert_string_equal(a, b);
    free(a);
    free(b);
    free(w);
}

static void test_long_label_falls_back(void **state)
{
    (void)state;
    /* Two spaces far into the text are not a label's end: continue two
     * columns in from the line's start (written out by hand). */
    char *w = wrap("     95% bounds: Re [0.02792, 0.03161]  f [0.7998, 0.8004] Hz  zeta "
                   "[-0.006287, -0.005554]\n", 80);
    assert_string_equal(w, "     95% bounds: Re [0.02792, 0.03161]  f [0.7998, 0.8004] Hz  "
                           "zeta [-0.006287,\n       -0.005554]\n");
    free(w);
}

static void test_warning_indent_and_width(void **state)
{
    (void)state;
    const char *t = "  ! the amplitude of channel vib_horizontal grows by a factor 1.96 over the "
                    "window (p = 1.9e-12, model-free envelope test): the operating point cannot "
                    "be called stable\n";
    for (size_t width = 30; width <= 100; width += 7) {
        char *w = wrap(t, width);
        assert_true(longest(w) <= width);
        char *a = words(t), *b = words(w);
        assert_string_equal(a, b);
        /* Continuations under the text after "! " (column 4). */
        const char *nl = strchr(w, '\n');
        if (nl != NULL && nl[1] != '\0')
            assert_true(strncmp(nl + 1, "    ", 4) == 0 && nl[5] != ' ');
        free(a);
        free(b);
        free(w);
    }
}

static void test_long_word_cut(void **state)
{
    (void)state;
    char t[200];
    memset(t, 'x', 150);
    t[150] = '\0';
    char *w = wrap(t, 40);
    assert_true(longest(w) <= 40);
    assert_int_equal(strlen(w), 150 + 3 * 1); /* 4 lines: 3 newlines, no indent */
    free(w);
}

static void test_narrow_width_floor(void **state)
{
    (void)state;
    char *w = wrap("one two three four five six seven eight nine ten eleven twelve", 5);
    assert_true(longest(w) <= EL_TERM_MIN_WIDTH);
    free(w);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_short_lines_unchanged),
        cmocka_unit_test(test_label_hanging_indent),
        cmocka_unit_test(test_long_label_falls_back),
        cmocka_unit_test(test_warning_indent_and_width),
        cmocka_unit_test(test_long_word_cut),
        cmocka_unit_test(test_narrow_width_floor),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
