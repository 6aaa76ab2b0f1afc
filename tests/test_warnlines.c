/* test_warnlines: the warning lines of the text and HTML reports
 * (el_warnlines_fold). A wide log's warnings about single modes or
 * single channels, one per mode or channel, are given once as one line
 * that lists the modes or channels (issue 10, report polish); every other
 * warning stays as it is and in its place. The expected lines are
 * written out by hand from the rule in el_report.h: no numerical
 * tolerance is involved (text only). */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_warnlines.h"

static void add(el_warnings *w, const char *text)
{
    assert_int_equal(el_warnings_add(w, "%s", text), EL_OK);
}

/* The warning el_verdict writes for a mode with wide bounds, as it is
 * worded now (the folding reads its form, not its words). */
static void add_mode(el_warnings *w, size_t mode, const char *paren)
{
    assert_int_equal(el_warnings_add(w,
                                     "mode %zu (%s) is not determined by the data: its "
                                     "frequency bounds are wider than the frequency; read "
                                     "its frequency and damping as unknown",
                                     mode, paren),
                     EL_OK);
}

/* Modes 12-40, 44, 51 (the example) with frequencies 0.3-4.9 Hz,
 * one real mode among them: one line, mode numbers as ranges, the
 * frequency range, "are", "their"; the warnings before and after stay in
 * place; the count of folded warnings is the group's size less one. */
static void test_modes_folded(void **state)
{
    (void)state;
    el_warnings in = {0}, out = {0};
    add(&in, "modes could swap in 100 of 100 replicates");
    char hz[32];
    for (size_t m = 12; m <= 40; m++) {
        snprintf(hz, sizeof hz, "%.3g Hz", 0.3 + (double)(m - 12) * 0.1);
        add_mode(&in, m, hz);
    }
    add_mode(&in, 44, "real");
    add_mode(&in, 51, "4.9 Hz");
    add(&in, "the last warning");
    const el_warnings *lists[1] = {&in};
    size_t folded = 99;
    assert_int_equal(el_warnlines_fold(lists, 1, &out, &folded), EL_OK);
    assert_int_equal(out.count, 3);
    assert_int_equal(folded, 30);
    assert_string_equal(out.items[0], "modes could swap in 100 of 100 replicates");
    assert_string_equal(out.items[1],
                        "modes 12-40, 44, 51 (0.3-4.9 Hz; 1 real) are not determined by the "
                        "data: their frequency bounds are wider than the frequency; read "
                        "their frequency and damping as unknown");
    assert_string_equal(out.items[2], "the last warning");
    el_warnings_free(&in);
    el_warnings_free(&out);
}

/* A single mode's warning, two modes (a list "3, 4", no range of two),
 * a Nyquist mode, and two lists (input warnings first): the single one is
 * untouched; modes of different kinds of warning are not mixed. */
static void test_modes_small_groups(void **state)
{
    (void)state;
    el_warnings a = {0}, b = {0}, out = {0};
    add(&a, "an input warning");
    add_mode(&b, 2, "1.5 Hz");
    add(&b, "mode 3 (0.5 Hz) is at the edge of the band");
    add(&b, "mode 4 (0.5 Hz) is at the edge of the band");
    add(&b, "mode 6 (at the Nyquist limit) is at the edge of the band");
    add(&b, "mode 7 (mu = -0.02) is at the Nyquist limit");
    const el_warnings *lists[2] = {&a, &b};
    size_t folded = 0;
    assert_int_equal(el_warnlines_fold(lists, 2, &out, &folded), EL_OK);
    assert_int_equal(out.count, 4);
    assert_int_equal(folded, 2);
    assert_string_equal(out.items[0], "an input warning");
    assert_string_equal(out.items[1], b.items[0]);
    assert_string_equal(out.items[2], "modes 3, 4, 6 (0.5 Hz; 1 at the Nyquist limit) are "
                                      "at the edge of the band");
    assert_string_equal(out.items[3], "mode 7 (mu = -0.02) is at the Nyquist limit");
    el_warnings_free(&a);
    el_warnings_free(&b);
    el_warnings_free(&out);
}

/* Per-channel warnings (el_validate's wording): the same text but for the
 * channel's name and its numbers: one line naming the channels (the
 * first 12, then "and N more"), a number the same in all kept as it is,
 * one that differs given as its lowest to highest value as written. A
 * name that holds digits ("s000") is not a number; a text that differs
 * in words is not folded. */
static void test_channels_folded(void **state)
{
    (void)state;
    el_warnings in = {0}, out = {0};
    for (size_t c = 0; c < 14; c++)
        assert_int_equal(el_warnings_add(&in,
                                         "residuals strongly correlated (Ljung-Box p < 1e-16 "
                                         "on channel s%03zu), which the lowered rank (24 of "
                                         "96 states) can cause by itself",
                                         c),
                         EL_OK);
    add(&in, "residual variance is 97% of the signal on channel a: the model explains little");
    add(&in, "residual variance is 100% of the signal on channel b: the model explains little");
    add(&in, "residual variance is 58.5% of the signal on channel c: the model explains little");
    add(&in, "the amplitude of channel a grows by a factor 1.96 over the window");
    add(&in, "the level of channel b steps by 3 units");
    const el_warnings *lists[1] = {&in};
    size_t folded = 0;
    assert_int_equal(el_warnlines_fold(lists, 1, &out, &folded), EL_OK);
    assert_int_equal(out.count, 4);
    assert_int_equal(folded, 15);
    assert_string_equal(out.items[0],
                        "residuals strongly correlated (Ljung-Box p < 1e-16 on channels s000, "
                        "s001, s002, s003, s004, s005, s006, s007, s008, s009, s010, s011 and 2 "
                        "more), which the lowered rank (24 of 96 states) can cause by itself");
    assert_string_equal(out.items[1], "residual variance is 58.5 to 100% of the signal on "
                                      "channels a, b, c: the model explains little");
    assert_string_equal(out.items[2], "the amplitude of channel a grows by a factor 1.96 over "
                                      "the window");
    assert_string_equal(out.items[3], "the level of channel b steps by 3 units");
    el_warnings_free(&in);
    el_warnings_free(&out);
}

/* Nothing to fold: the lines are the warnings; no warnings: no lines. */
/* The heading counts warnings and, when some were folded, the lines they
 * are printed on, with the right number for one line. */
static void test_heading(void **state)
{
    (void)state;
    char buf[64];
    assert_string_equal(el_warnlines_heading(3, 3, 0, buf, sizeof buf), "Warnings (3)");
    assert_string_equal(el_warnlines_heading(3, 1, 2, buf, sizeof buf),
                        "Warnings (3, on 1 line)");
    assert_string_equal(el_warnlines_heading(9, 4, 5, buf, sizeof buf),
                        "Warnings (9, on 4 lines)");
}

static void test_nothing_folded(void **state)
{
    (void)state;
    el_warnings in = {0}, out = {0};
    const el_warnings *lists[1] = {&in};
    size_t folded = 7;
    assert_int_equal(el_warnlines_fold(lists, 1, &out, &folded), EL_OK);
    assert_int_equal(out.count, 0);
    assert_int_equal(folded, 0);
    add(&in, "one");
    add(&in, "mode 1 (2 Hz) is alone");
    assert_int_equal(el_warnlines_fold(lists, 1, &out, &folded), EL_OK);
    assert_int_equal(out.count, 2);
    assert_int_equal(folded, 0);
    assert_string_equal(out.items[0], "one");
    assert_string_equal(out.items[1], "mode 1 (2 Hz) is alone");
    el_warnings_free(&in);
    el_warnings_free(&out);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_modes_folded),
        cmocka_unit_test(test_modes_small_groups),
        cmocka_unit_test(test_channels_folded),
        cmocka_unit_test(test_nothing_folded),
        cmocka_unit_test(test_heading),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
