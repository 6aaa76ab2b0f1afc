/* test_local_dates: date-times written with the year last, as loggers and
 * spreadsheets export them in many countries (05.12.2026 08:30:00,
 * 12/5/2026 8:30:00 PM): the order of day and month, the 12-hour clock,
 * what is refused, and how ingest and track --follow settle the order
 * (el_timefmt.h, el_ingest.h, el_follow.h).
 * Reference: the Unix times below were computed with Python 3's
 * calendar.timegm(datetime.datetime(...).timetuple()) (Debian python3),
 * outside this project; they are exact integers, so every check is exact. */
#include "el_test.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "el_follow.h"
#include "el_ingest.h"
#include "el_timefmt.h"

static int64_t parse_ok(const char *s, int order, double *frac)
{
    el_iso_time it;
    const char *why = el_local_parse(s, strlen(s), order, &it);
    assert_null(why);
    assert_int_equal(it.has_zone, 0);
    if (frac != NULL)
        *frac = it.frac_s;
    return it.unix_s;
}

static void test_day_first_and_month_first(void **state)
{
    (void)state;
    /* 2026-12-05T08:30:00 = 1796459400 (timegm). */
    assert_int_equal(parse_ok("05.12.2026 08:30:00", EL_DATE_DMY, NULL), 1796459400);
    assert_int_equal(parse_ok("5.12.2026 8:30", EL_DATE_DMY, NULL), 1796459400);
    assert_int_equal(parse_ok("12/05/2026 08:30:00", EL_DATE_MDY, NULL), 1796459400);
    assert_int_equal(parse_ok("05-12-2026T08:30:00", EL_DATE_DMY, NULL), 1796459400);
    assert_int_equal(parse_ok("12/5/2026, 08:30:00", EL_DATE_MDY, NULL), 1796459400);
    /* 2024-02-29T23:59:59 = 1709251199: a leap day. */
    assert_int_equal(parse_ok("29.02.2024 23:59:59", EL_DATE_DMY, NULL), 1709251199);
    double frac = 0.0;
    parse_ok("05.12.2026 08:30:00,250", EL_DATE_DMY, &frac);
    assert_true(frac == 0.25);
}

/* The year first with slashes (2026/12/05 08:30:00) is ISO 8601's order
 * with another separator; a dot after the year is a number (decimal years),
 * never a date; mixed separators are refused. */
static void test_year_first_slashes(void **state)
{
    (void)state;
    el_iso_time it;
    const char *s = "2026/12/05 08:30:00";
    assert_int_equal(el_iso_looks(s, strlen(s)), 1);
    assert_null(el_iso_parse(s, strlen(s), &it));
    assert_int_equal(it.unix_s, 1796459400);
    assert_int_equal(el_iso_looks("2026.12", 7), 0);
    assert_non_null(el_iso_parse("2026/12-05 08:30", 16, &it));
}

/* A time typed on the command line: the date's own order first, then
 * the log's; a date alone is midnight (2026-12-05T00:00:00 = 1796428800,
 * 2026-05-12T00:00:00 = 1778544000, timegm). */
static void test_typed_times(void **state)
{
    (void)state;
    el_iso_time it;
    assert_null(el_local_parse_or_date("05.12.2026", 10, EL_DATE_MDY, &it));
    assert_int_equal(it.unix_s, 1796428800);
    assert_null(el_local_parse_or_date("05/12/2026", 10, EL_DATE_MDY, &it));
    assert_int_equal(it.unix_s, 1778544000);
    assert_null(el_local_parse_or_date("13/05/2026 0:00", 15, EL_DATE_MDY, &it));
    assert_non_null(el_local_parse_or_date("05/12/2026", 10, 0, &it));
}

/* The 12-hour clock: 12 AM is midnight, 12 PM noon (2026-12-05T00:00:00
 * = 1796428800, T12:00:00 = 1796472000, T20:30:00 = 1796502600). */
static void test_twelve_hour_clock(void **state)
{
    (void)state;
    assert_int_equal(parse_ok("12/5/2026 12:00:00 AM", EL_DATE_MDY, NULL), 1796428800);
    assert_int_equal(parse_ok("12/5/2026 12:00:00 PM", EL_DATE_MDY, NULL), 1796472000);
    double frac = 0.0;
    assert_int_equal(parse_ok("12/5/2026 8:30:00.5 pm", EL_DATE_MDY, &frac), 1796502600);
    assert_true(frac == 0.5);
    assert_int_equal(parse_ok("12/5/2026 8:30:00PM", EL_DATE_MDY, NULL), 1796502600);
}

static void test_refused(void **state)
{
    (void)state;
    el_iso_time it;
    const char *bad[] = {"31.02.2026 10:00", "05.13.2026 10:00", "05.12.2026 24:00",
                         "05.12.2026 13:00 PM", "05.12.2026 0:00 AM", "05.12.2026",
                         "05.12/2026 10:00", "05.12.26 10:00", "05.12.2026 10:00 XM",
                         "05.12.2026 10:60"};
    for (size_t i = 0; i < sizeof bad / sizeof *bad; i++)
        assert_non_null(el_local_parse(bad[i], strlen(bad[i]), EL_DATE_DMY, &it));
}

/* Which first dates settle the order by themselves. */
static void test_order_settled(void **state)
{
    (void)state;
    assert_int_equal(el_local_order("05.12.2026 08:30", 16), EL_DATE_DMY);
    assert_int_equal(el_local_order("13/05/2026 08:30", 16), EL_DATE_DMY);
    assert_int_equal(el_local_order("05/13/2026 08:30", 16), EL_DATE_MDY);
    assert_int_equal(el_local_order("05/12/2026 08:30", 16), 0);
    assert_int_equal(el_local_looks("2026-12-05 08:30", 16), 0);
    assert_int_equal(el_local_looks("1.5", 3), 0);
}

static el_status read_text(const char *text, char order, el_table *t, el_error *e)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    rewind(fp);
    el_ingest_options opt = {.date_order = order};
    el_status st = el_table_read_stream(fp, "dates.csv", &opt, t, e);
    fclose(fp);
    return st;
}

/* A log whose first date cannot settle the order stops at it with a hint
 * naming --date-order; with the option, or when the first date settles it,
 * later dates that could be read either way are read in that order. */
static void test_ingest_order(void **state)
{
    (void)state;
    const char *amb = "t,x\n05/12/2026 08:30:00,1\n05/12/2026 08:30:01,2\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(amb, 0, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 1);
    assert_non_null(strstr(e.hint, "--date-order"));
    assert_int_equal(read_text(amb, EL_DATE_MDY, &t, &e), EL_OK);
    /* 2026-05-12T08:30:00 = 1778574600 (timegm). */
    assert_int_equal(t.time_origin_unix_s, 1778574600);
    assert_int_equal(t.date_order, EL_DATE_MDY);
    assert_true(t.values[1] == 1.0);
    el_table_free(&t);
    const char *settled = "t,x\n13/11/2026 23:59:59,1\n01/12/2026 00:00:00,2\n";
    assert_int_equal(read_text(settled, 0, &t, &e), EL_OK);
    assert_int_equal(t.date_order, EL_DATE_DMY);
    /* 13 Nov 23:59:59 to 1 Dec 00:00:00 is 17 days and 1 s. */
    assert_true(t.values[1] == 17.0 * 86400.0 + 1.0);
    el_table_free(&t);
}

/* A followed log keeps the order its first rows settled: a later parse
 * whose first date is ambiguous is read day first, not refused. */
static void test_follow_keeps_order(void **state)
{
    (void)state;
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track.window = 1000.0;
    el_error err;
    el_follow *f = NULL;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_OK);
    el_follow_new_file(f, "live.csv");
    const char *first = "t,x\n30.11.2026 23:59:58,1\n30/11/2026 23:59:59,2\n";
    assert_int_equal(el_follow_add_lines(f, first, strlen(first), 3, 1, &err), EL_OK);
    const char *next = "01/12/2026 00:00:00,3\n";
    assert_int_equal(el_follow_add_lines(f, next, strlen(next), 1, 4, &err), EL_OK);
    assert_int_equal(el_follow_rows_held(f), 3);
    el_follow_destroy(f);
}

/* Writes text to a new temporary file; its name into path (a mkstemp
 * template). */
static void write_temp(char *path, const char *text)
{
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *fp = fdopen(fd, "w");
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    assert_int_equal(fclose(fp), 0);
}

/* Several files read as one log keep the order an earlier file settled:
 * the second day's file, whose first date (01/04/2026) reads both ways,
 * is read day first as the first file's 31/03/2026 said, not refused;
 * one whose date exists only month first is then refused at its cell. */
static void test_files_keep_order(void **state)
{
    (void)state;
    char a[] = "/tmp/eigenlog_dmyXXXXXX", b[] = "/tmp/eigenlog_dmyXXXXXX",
         c[] = "/tmp/eigenlog_dmyXXXXXX";
    write_temp(a, "t,x\n31/03/2026 23:59:58,1\n31/03/2026 23:59:59,2\n");
    write_temp(b, "t,x\n01/04/2026 00:00:00,3\n01/04/2026 00:00:01,4\n");
    write_temp(c, "t,x\n04/13/2026 00:00:00,3\n");
    const char *paths[] = {a, b}, *bad[] = {a, c};
    el_table t = {0};
    el_error e;
    assert_int_equal(el_table_read_files(paths, 2, NULL, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 4);
    assert_int_equal(t.date_order, EL_DATE_DMY);
    /* 2026-03-31T23:59:58 to 2026-04-01T00:00:01 is 3 s. */
    assert_true(t.values[3] == 3.0);
    el_table_free(&t);
    assert_int_equal(el_table_read_files(bad, 2, NULL, &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.file, "eigenlog_dmy"));
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 1);
    remove(a);
    remove(b);
    remove(c);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_day_first_and_month_first),
        cmocka_unit_test(test_year_first_slashes),
        cmocka_unit_test(test_typed_times),
        cmocka_unit_test(test_twelve_hour_clock),
        cmocka_unit_test(test_refused),
        cmocka_unit_test(test_order_settled),
        cmocka_unit_test(test_ingest_order),
        cmocka_unit_test(test_follow_keeps_order),
        cmocka_unit_test(test_files_keep_order),
    };
    return cmocka_run_group_tests_name("local_dates", tests, NULL, NULL);
}
