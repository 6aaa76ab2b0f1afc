/* test_time_of_day: times of day written without a date (08:30:00.250),
 * as some loggers export them: the cell reader, the midnight roll-over,
 * the table's display and --from/--to, joined files (el_datecols.h,
 * el_ingest.h, el_table.h). Reference: clock arithmetic (h * 3600 + m *
 * 60 + s, one day = 86,400 s, the 12-hour clock's 12 AM = 00:00 and
 * 12 PM = 12:00 per ISO 8601's note on the 12-hour notation; recalled
 * from memory). Every value checked is a whole number of seconds or of
 * 1/4 s, exact in binary, so times compare exactly. */
#include "el_test.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "el_datecols.h"
#include "el_ingest.h"
#include "el_table.h"

/* Whole seconds and fraction added: exact for the values below. */
static const char *clock_of(const char *s, double *sec)
{
    long whole = 0;
    double frac = 0.0;
    const char *why = el_datecols_clock_seconds(s, strlen(s), &whole, &frac);
    if (why == NULL)
        *sec = (double)whole + frac;
    return why;
}

static void test_clock_cells(void **state)
{
    (void)state;
    double s = -1.0;
    assert_null(clock_of("08:30:00", &s));
    assert_true(s == 30600.0);
    assert_null(clock_of("8:30", &s));
    assert_true(s == 30600.0);
    assert_null(clock_of("23:59:59.75", &s));
    assert_true(s == 86399.75);
    assert_null(clock_of("00:00:00,250", &s));
    assert_true(s == 0.25);
    assert_null(clock_of("12:00:00 AM", &s));
    assert_true(s == 0.0);
    assert_null(clock_of("12:00:01 PM", &s));
    assert_true(s == 43201.0);
    assert_null(clock_of("8:30:00.5pm", &s));
    assert_true(s == 73800.5);
    s = -1.0;
    assert_non_null(clock_of("24:00:00", &s));
    assert_non_null(clock_of("08:60:00", &s));
    assert_non_null(clock_of("13:00:00 PM", &s));
    assert_non_null(clock_of("08:30:00.", &s));
    assert_non_null(clock_of("08:30:0", &s));
    assert_non_null(strstr(clock_of("08:30:00Z", &s), "zone"));
    assert_non_null(strstr(clock_of("08:30:00+01:00", &s), "zone"));
    assert_true(s == -1.0); /* untouched on error */
}

/* The roll-over rule: back by more than 12 h is the next day; back by
 * less is returned as it is (the time base refuses it as going back). */
static void test_roll_over(void **state)
{
    (void)state;
    el_clock_run run = {0};
    assert_true(el_clock_run_next(&run, 86399, 0.5) == 0.5); /* from the first whole second */
    assert_int_equal(run.origin_s, 86399);
    assert_true(el_clock_run_next(&run, 1, 0.0) == 2.0);
    assert_int_equal(run.midnights, 1);
    assert_true(el_clock_run_next(&run, 2, 0.25) == 3.25);
    assert_true(el_clock_run_next(&run, 1, 0.5) == 2.5); /* back by 1.75 s: left as is */
    assert_true(el_clock_run_next(&run, 86390, 0.0) == 86391.0);
    assert_true(el_clock_run_next(&run, 5, 0.0) == 86406.0);
    assert_int_equal(run.midnights, 2);
    /* A part read on its own follows the last time by the same rule. */
    assert_true(el_clock_shift(86399.0, 1.0) == 86400.0);
    assert_true(el_clock_shift(86401.0, 2.0) == 86400.0);
    assert_true(el_clock_shift(50000.0, 60000.0) == 0.0);
    assert_true(el_clock_shift(172799.0, 0.5) == 172800.0);
}

static el_status read_text(const char *text, el_table *t, el_error *e)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    rewind(fp);
    el_status st = el_table_read_stream(fp, "clock.csv", NULL, t, e);
    fclose(fp);
    return st;
}

/* A log crossing midnight: seconds from the first row's whole second,
 * shown as the log writes them with the day after a crossing; --from as
 * a time of day is its first occurrence at or after the start, as a
 * number seconds from the start. */
static void test_log_across_midnight(void **state)
{
    (void)state;
    const char *text = "time,p [bar]\n"
                       "23:59:59.50,1\n"
                       "23:59:59.75,2\n"
                       "00:00:00.00,3\n"
                       "00:00:00.25,4\n";
    el_table t = {0};
    el_error e;
    if (read_text(text, &t, &e) != EL_OK)
        fail_msg("%s", e.message);
    assert_true(t.time_is_clock);
    assert_false(t.time_is_iso);
    assert_int_equal(t.clock_midnights, 1);
    assert_int_equal(t.clock_origin_s, 86399);
    assert_string_equal(t.time_unit_source, "time of day");
    assert_true(t.values[0] == 0.5);
    assert_true(t.values[2] == 1.0);
    assert_true(t.values[3] == 1.25);
    char buf[64];
    assert_string_equal(el_table_format_time(&t, 0.5, buf, sizeof buf), "23:59:59.500");
    assert_string_equal(el_table_format_time(&t, 1.25, buf, sizeof buf),
                        "00:00:00.250 (+1d)");
    assert_string_equal(el_table_format_when(&t, 1.0, buf, sizeof buf), "00:00:00.000 (+1d)");
    double from = 0.0;
    assert_int_equal(el_table_parse_time(&t, "00:00:00.25", &from, &e), EL_OK);
    assert_true(from == 1.25);
    assert_int_equal(el_table_parse_time(&t, "23:59:59.75", &from, &e), EL_OK);
    assert_true(from == 0.75);
    assert_int_equal(el_table_parse_time(&t, "1.25", &from, &e), EL_OK); /* from the start */
    assert_true(from == 1.25);
    assert_int_equal(el_table_parse_time(&t, "25:00", &from, &e), EL_ERR_USAGE);
    el_table_free(&t);
}

/* A clock that steps back by less than 12 h is no midnight; a cell of
 * another form stops at its own cell; --time-unit does not apply; a row
 * of units may label the column. */
static void test_clock_errors(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    /* Back by a minute: kept as is in the table, for the time base to
     * refuse as time going back (tests/e2e_time_forms.sh runs that). */
    if (read_text("t,x\n08:00:00,1\n08:00:01,2\n07:59:00,3\n", &t, &e) != EL_OK)
        fail_msg("%s", e.message);
    assert_true(t.values[2] == -60.0);
    assert_int_equal(t.clock_midnights, 0);
    el_table_free(&t);
    memset(&t, 0, sizeof t);
    assert_int_equal(read_text("t,x\n08:00:00,1\n08:00:01.5,2\n8h00,3\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 4);
    assert_int_equal(e.column, 1);
    assert_non_null(strstr(e.hint, "time of day"));
    assert_int_equal(read_text("t,x\n08:00:00,1\n2026-03-14T08:00:01,2\n", &t, &e),
                     EL_ERR_DATA);
    assert_int_equal(e.line, 3);
    el_ingest_options opt = {0};
    opt.time_unit = "ms";
    FILE *fp = tmpfile();
    assert_non_null(fp);
    fputs("t,x\n08:00:00,1\n08:00:01,2\n", fp);
    rewind(fp);
    assert_int_equal(el_table_read_stream(fp, "clock.csv", &opt, &t, &e), EL_ERR_USAGE);
    fclose(fp);
    assert_non_null(strstr(e.message, "times of day"));
    memset(&t, 0, sizeof t);
    if (read_text("time,x\nhh:mm:ss,bar\n08:00:00,1\n08:00:01,2\n", &t, &e) != EL_OK)
        fail_msg("%s", e.message);
    assert_true(t.time_is_clock);
    assert_string_equal(t.units[1], "bar");
    el_table_free(&t);
}

static void write_file(const char *path, const char *text)
{
    FILE *fp = fopen(path, "w");
    assert_non_null(fp);
    fputs(text, fp);
    fclose(fp);
}

/* Files read as one log: taken in the order given, the second after the
 * first across midnight; a file of numbers beside one of times of day is
 * refused. */
static void test_joined_files(void **state)
{
    (void)state;
    char dir[] = "/tmp/el_clockXXXXXX";
    assert_non_null(mkdtemp(dir));
    char a[64], b[64], c[64];
    snprintf(a, sizeof a, "%s/a.csv", dir);
    snprintf(b, sizeof b, "%s/b.csv", dir);
    snprintf(c, sizeof c, "%s/c.csv", dir);
    write_file(a, "t,x\n23:59:58,1\n23:59:59,2\n");
    write_file(b, "t,x\n00:00:00,3\n00:00:01,4\n");
    write_file(c, "t,x\n1,3\n2,4\n");
    const char *ab[] = {a, b}, *ac[] = {a, c};
    el_table t = {0};
    el_error e;
    if (el_table_read_files(ab, 2, NULL, &t, &e) != EL_OK)
        fail_msg("%s", e.message);
    assert_int_equal(t.n_rows, 4);
    assert_true(t.values[1] == 1.0);
    assert_true(t.values[2] == 2.0);
    assert_true(t.values[3] == 3.0);
    assert_int_equal(t.clock_midnights, 1);
    el_table_free(&t);
    assert_int_equal(el_table_read_files(ac, 2, NULL, &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "times of day"));
    remove(a);
    remove(b);
    remove(c);
    rmdir(dir);
}

/* A time column of numbers with no unit whose values read as spreadsheet
 * day numbers (46,095.5 = 2026-03-14 12:00, days since 1899-12-30;
 * recalled from memory) gets the hint to give --time-unit d; seconds of
 * an ordinary log do not. */
static void test_day_numbers_hint(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    if (read_text("t,x\n46095.5,1\n46095.50001,2\n46095.50002,3\n", &t, &e) != EL_OK)
        fail_msg("%s", e.message);
    int hinted = 0;
    for (size_t i = 0; i < t.notes.count; i++)
        hinted |= strstr(t.notes.items[i], "--time-unit d") != NULL;
    assert_true(hinted);
    el_table_free(&t);
    memset(&t, 0, sizeof t);
    if (read_text("t,x\n0,1\n0.05,2\n0.1,3\n", &t, &e) != EL_OK)
        fail_msg("%s", e.message);
    for (size_t i = 0; i < t.notes.count; i++)
        assert_null(strstr(t.notes.items[i], "day numbers"));
    el_table_free(&t);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_clock_cells),
        cmocka_unit_test(test_roll_over),
        cmocka_unit_test(test_log_across_midnight),
        cmocka_unit_test(test_clock_errors),
        cmocka_unit_test(test_joined_files),
        cmocka_unit_test(test_day_numbers_hint),
    };
    return cmocka_run_group_tests_name("time_of_day", tests, NULL, NULL);
}
