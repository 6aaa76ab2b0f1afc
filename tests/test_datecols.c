/* test_datecols: the date and the time of day written in two columns, as
 * spreadsheet and logger exports write them ("14.03.2026;08:00:00,250"):
 * which cells are a date alone and a time of day, and how ingest joins
 * them into one time (el_datecols.h, el_ingest.h). Reference: the Unix
 * times below were computed with Python 3's calendar.timegm((2026, 3, 14,
 * 8, 0, 0)) = 1773475200 and calendar.timegm((2026, 3, 15, 0, 0, 0)) =
 * 1773532800 (Debian python3), outside this project; the differences
 * checked are multiples of 0.25 s or whole seconds, exact in binary, so
 * every time compares exactly. */
#include "el_test.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_datecols.h"
#include "el_ingest.h"

static int is_date(const char *s) { return el_datecols_is_date(s, strlen(s)); }
static int is_clock(const char *s) { return el_datecols_is_clock(s, strlen(s)); }

static void test_cells(void **state)
{
    (void)state;
    assert_true(is_date("14.03.2026"));
    assert_true(is_date("4.3.2026"));
    assert_true(is_date("03/14/2026"));
    assert_true(is_date("2026-03-14"));
    assert_true(is_date("2026/03/14"));
    assert_false(is_date("2026-03-14 08:00:00")); /* a whole date-time */
    assert_false(is_date("14.03.2026 08:00"));
    assert_false(is_date("2026.03"));             /* decimal years: a number */
    assert_false(is_date("2026-3-14"));
    assert_false(is_date("14.03.26"));
    assert_true(is_clock("08:00:00"));
    assert_true(is_clock("8:00"));
    assert_true(is_clock("08:00:00,250"));
    assert_true(is_clock("8:00:00.5 PM"));
    assert_true(is_clock("08:00:00Z"));
    assert_true(is_clock("08:00:00+01:00"));
    assert_false(is_clock("0800"));
    assert_false(is_clock("8.00"));
    assert_false(is_clock("08:0"));
    assert_false(is_clock("08:00 bar"));
    char buf[24];
    assert_int_equal(el_datecols_join("14.03.2026", 10, "08:00", 5, buf, sizeof buf), 16);
    assert_string_equal(buf, "14.03.2026 08:00");
    assert_int_equal(el_datecols_join("14.03.2026", 10, "08:00:00.123456", 15, buf, sizeof buf),
                     0); /* 26 bytes and the NUL do not fit in 24 */
}

static el_status read_text(const char *text, el_table *t, el_error *e)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    rewind(fp);
    el_status st = el_table_read_stream(fp, "cols.csv", NULL, t, e);
    fclose(fp);
    return st;
}

/* Day-first dates with a decimal comma in the time of day: one time
 * column named by both, crossing midnight; the time of day is no channel
 * and no skipped text column. */
static void test_two_columns_read_as_one_time(void **state)
{
    (void)state;
    const char *text = "Datum;Uhrzeit;p [bar];q\n"
                       "14.03.2026;23:59:59,50;1,5;2\n"
                       "14.03.2026;23:59:59,75;1,25;3\n"
                       "15.03.2026;00:00:00,00;1;4\n";
    el_table t = {0};
    el_error e;
    if (read_text(text, &t, &e) != EL_OK)
        fail_msg("%s", e.message);
    assert_int_equal(t.n_columns, 3);
    assert_int_equal(t.n_rows, 3);
    assert_int_equal(t.time_column, 0);
    assert_string_equal(t.names[0], "Datum + Uhrzeit");
    assert_string_equal(t.names[1], "p");
    assert_true(t.time_is_iso);
    assert_int_equal(t.time_origin_unix_s, 1773532800 - 1);
    assert_true(t.values[0] == 0.5);
    assert_true(t.values[1] == 0.75);
    assert_true(t.values[2] == 1.0);   /* midnight: the date's own day */
    assert_true(t.values[3 + 1] == 1.25);
    for (size_t i = 0; i < t.notes.count; i++)
        assert_null(strstr(t.notes.items[i], "skipped"));
    el_table_free(&t);

    /* ISO dates beside their times. */
    memset(&t, 0, sizeof t);
    assert_int_equal(read_text("date,time,x\n2026-03-14,08:00:00,1\n2026-03-14,08:00:02,2\n",
                               &t, &e), EL_OK);
    assert_int_equal(t.time_origin_unix_s, 1773475200);
    assert_true(t.values[1] == 2.0);
    el_table_free(&t);
}

/* A date column not followed by a time of day is left as it was (a date
 * alone is no time); a bad time of day later on stops at its own cell; a
 * date that changes form stops at the date's cell. */
static void test_two_columns_errors(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("d,x\n14.03.2026,1\n15.03.2026,2\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(read_text("d,c,x\n14.03.2026,08:00:00,1\n14.03.2026,8h01,2\n", &t, &e),
                     EL_ERR_DATA);
    assert_int_equal(e.line, 3);
    assert_int_equal(e.column, 12);
    assert_non_null(strstr(e.message, "time of day"));
    assert_int_equal(read_text("d,c,x\n14.03.2026,08:00:00,1\n2026-03-14,08:00:01,2\n", &t,
                               &e), EL_ERR_DATA);
    assert_int_equal(e.line, 3);
    assert_int_equal(e.column, 1);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cells),
        cmocka_unit_test(test_two_columns_read_as_one_time),
        cmocka_unit_test(test_two_columns_errors),
    };
    return cmocka_run_group_tests_name("datecols", tests, NULL, NULL);
}
