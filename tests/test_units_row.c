/* test_units_row: a row of units under the header, as many data loggers
 * export it ("s,bar,l/min"), gives the columns their units and the time
 * its unit; a row that is not one is read as data exactly as before; a
 * unit given twice must agree; track --follow keeps the row with the
 * header (el_ingest.h, el_follow.h). The expected values are written out
 * by hand from the CSV text; times compare exactly where the scale is a
 * power of ten applied once to a short decimal (10 ms = 0.01 s is the
 * double nearest 0.01 either way: both sides round once). */
#include "el_test.h"

#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "el_follow.h"
#include "el_ingest.h"

static el_status read_text(const char *text, el_table *t, el_error *e)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    rewind(fp);
    el_status st = el_table_read_stream(fp, "units.csv", NULL, t, e);
    fclose(fp);
    return st;
}

/* The second line names a unit per column: it is no row, the time unit
 * (ms) scales the times, each channel gets its unit. */
static void test_units_row_taken(void **state)
{
    (void)state;
    const char *text = "time,pressure,flow\n"
                       "ms,bar,l/min\n"
                       "0,5.5,20\n"
                       "10,5.25,21\n"
                       "20,5,22\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 3);
    assert_string_equal(t.units[1], "bar");
    assert_string_equal(t.units[2], "l/min");
    assert_string_equal(t.time_unit, "ms");
    assert_string_equal(t.time_unit_source, "units row");
    assert_int_equal(t.units_line, 2);
    assert_true(t.values[1] == 0.01);
    assert_true(t.values[2] == 0.02);
    assert_true(t.values[1 * 3 + 1] == 5.25);
    assert_int_equal(t.source_line[0], 3);
    el_table_free(&t);
}

/* Bracketed units are taken without their brackets; an empty cell leaves
 * its column without a unit; a header unit that agrees is fine. */
static void test_units_row_brackets_and_gaps(void **state)
{
    (void)state;
    const char *text = "t [s];a;b\n"
                       "[s];(V);\n"
                       "0;1,5;2\n"
                       "1;2,5;3\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 2);
    assert_string_equal(t.units[1], "V");
    assert_string_equal(t.units[2], "");
    assert_string_equal(t.time_unit_source, "header");
    assert_true(t.values[1 * 2 + 0] == 1.5);
    el_table_free(&t);
}

/* Date-times have no unit: the time cell of their units row is empty. A
 * row with neither a time nor a unit is a broken data row, as before. */
static void test_units_row_for_date_times(void **state)
{
    (void)state;
    const char *text = "stamp,p,q\n"
                       ",bar,NA\n"
                       "2026-03-14T08:00:00Z,1,2\n"
                       "2026-03-14T08:00:01Z,2,3\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 2);
    assert_string_equal(t.units[1], "bar");
    assert_string_equal(t.units[2], ""); /* NA: no unit written */
    assert_int_equal(t.units_line, 2);
    el_table_free(&t);
    assert_int_equal(read_text("stamp,p\n,NA\n2026-03-14T08:00:00Z,1\n", &t, &e),
                     EL_ERR_DATA);
    assert_int_equal(e.line, 2);
}

/* Above date-times a logger may write their zone or their pattern instead
 * of leaving the cell empty: the row is still a units row. "UTC" also says
 * the zone-less times are UTC (no zone warning); another zone's name or a
 * pattern leaves the zone unknown. Over a column of numbers such a label is
 * no unit of time: refused at the units row's line. */
static void test_units_row_labels_date_times(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("stamp,p,q\nUTC,bar,l/min\n2026-03-14T08:00:00,1,2\n"
                               "2026-03-14T08:00:01,2,3\n", &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 2);
    assert_int_equal(t.units_line, 2);
    assert_string_equal(t.units[1], "bar");
    assert_string_equal(t.units[2], "l/min");
    assert_int_equal(t.time_zone_known, 1);
    for (size_t i = 0; i < t.notes.count; i++)
        assert_null(strstr(t.notes.items[i], "carry no zone"));
    el_table_free(&t);

    const char *unknown_zone[] = {
        "stamp,p\nhh:mm:ss,bar\n2026-03-14 08:00:00,1\n2026-03-14 08:00:01,2\n",
        "stamp;p\nDD.MM.YYYY hh:mm:ss;bar\n14.03.2026 08:00:00;1\n14.03.2026 08:00:01;2\n",
        "stamp,p\nCET,bar\n2026-03-14T08:00:00,1\n2026-03-14T08:00:01,2\n",
        "stamp,p\ntimestamp,bar\n2026-03-14T08:00:00,1\n2026-03-14T08:00:01,2\n",
    };
    for (size_t i = 0; i < sizeof unknown_zone / sizeof unknown_zone[0]; i++) {
        memset(&t, 0, sizeof t);
        if (read_text(unknown_zone[i], &t, &e) != EL_OK)
            fail_msg("case %zu: %s", i, e.message);
        assert_int_equal(t.n_rows, 2);
        assert_string_equal(t.units[1], "bar");
        assert_int_equal(t.time_zone_known, 0);
        el_table_free(&t);
    }

    memset(&t, 0, sizeof t);
    assert_int_equal(read_text("t,p\nUTC,bar\n0,1\n1,2\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_non_null(strstr(e.message, "\"UTC\" in the units row"));
    /* Text that neither names a unit of time nor labels date-times: a
     * broken data row, as before. */
    assert_int_equal(read_text("t,p\nbar,V\n0,1\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(read_text("t,p\nmm,V\n0,1\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
}

/* A unit written in the header and another in the units row: refused at
 * the cell, naming both. */
static void test_units_row_disagrees(void **state)
{
    (void)state;
    const char *text = "t,p [kPa],q\n"
                       "s,bar,m3/h\n"
                       "0,1,2\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 3);
    assert_non_null(strstr(e.message, "\"bar\""));
    assert_non_null(strstr(e.message, "\"kPa\""));
}

/* Not a units row: a number among the cells (here the second line is a
 * malformed data row), or a time cell that is no unit of time. Both are
 * read as data rows, and fail there as before, at their line. */
static void test_not_a_units_row(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,x,y\ns,1,V\n0,1,2\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 1);
    assert_int_equal(read_text("t,x\nbar,V\n0,1\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    /* A units row alone is a header with no rows. */
    assert_int_equal(read_text("t,x\ns,V\n", &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "no data rows"));
}

static void test_units_probe(void **state)
{
    (void)state;
    const char *yes = "t,x\nms,V\n";
    const char *no = "t,x\n0,1\n";
    assert_int_equal(el_ingest_units_row(yes, strlen(yes), NULL), 1);
    assert_int_equal(el_ingest_units_row(no, strlen(no), NULL), 0);
}

/* A followed log: later parses are read in the units row's unit (a time
 * of 0.015 ms comes before the row at 10 ms, so it is a row out of order;
 * read in seconds it would be after it), and a rotated file's copy of the
 * units row is not a row. */
static void test_follow_keeps_units(void **state)
{
    (void)state;
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track.window = 1000.0;
    el_error err;
    el_follow *f = NULL;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_OK);
    el_follow_new_file(f, "live.csv");
    const char *first = "t,x\nms,V\n0,1\n10,2\n";
    assert_int_equal(el_follow_add_lines(f, first, strlen(first), 4, 1, &err), EL_OK);
    const char *next = "20,3\n";
    assert_int_equal(el_follow_add_lines(f, next, strlen(next), 1, 5, &err), EL_OK);
    assert_int_equal(el_follow_rows_held(f), 3);
    el_follow_new_file(f, "live.2.csv");
    const char *rotated = "t,x\nms,V\n30,4\n";
    assert_int_equal(el_follow_add_lines(f, rotated, strlen(rotated), 3, 1, &err), EL_OK);
    assert_int_equal(el_follow_rows_held(f), 4);
    const char *early = "0.015,5\n";
    assert_int_equal(el_follow_add_lines(f, early, strlen(early), 1, 4, &err), EL_ERR_DATA);
    assert_int_equal(err.line, 4);
    el_follow_destroy(f);
}

/* A rotated file of a followed log whose row of units differs from the
 * first file's (other units, or a row the first file did not have) stops
 * at that row with the cause named, not with a bad time "s" read as a
 * data row. */
static void test_follow_units_changed(void **state)
{
    (void)state;
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track.window = 1000.0;
    el_error err;
    for (int had = 0; had <= 1; had++) {
        el_follow *f = NULL;
        assert_int_equal(el_follow_create(&fo, &f, &err), EL_OK);
        el_follow_new_file(f, "live.csv");
        const char *first = had ? "t,x\nms,V\n0,1\n10,2\n" : "t,x\n0,1\n10,2\n";
        assert_int_equal(el_follow_add_lines(f, first, strlen(first), had ? 4 : 3, 1, &err),
                         EL_OK);
        el_follow_new_file(f, "live.2.csv");
        const char *rotated = "t,x\nms,mV\n30,4\n";
        assert_int_equal(el_follow_add_lines(f, rotated, strlen(rotated), 3, 1, &err),
                         EL_ERR_DATA);
        assert_string_equal(err.file, "live.2.csv");
        assert_int_equal(err.line, 2);
        assert_non_null(strstr(err.message, "row of units"));
        el_follow_destroy(f);
    }
}

/* A row of units with a number in it ("1", the SI unit of a ratio) is no
 * row of units: the error at its time cell says so and how to write the
 * unit, instead of asking for a time. */
static void test_units_row_with_number(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,p,ratio\ns,bar,1\n0,1,2\n1,2,3\n", &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 1);
    assert_non_null(strstr(e.message, "no row of units"));
    assert_non_null(strstr(e.hint, "none of its cells is a number"));
    el_table_free(&t);
}

/* Two files read as one log whose units differ: the error is at the row
 * of units of the second file (line 2, the column of the unit), and a
 * column without a unit is said to have none (not "[]"). */
static void test_files_units_differ(void **state)
{
    (void)state;
    char a[] = "/tmp/eigenlog_uaXXXXXX", b[] = "/tmp/eigenlog_ubXXXXXX";
    int fa = mkstemp(a), fb = mkstemp(b);
    assert_true(fa >= 0 && fb >= 0);
    const char *ta = "t,p\ns,bar\n0,1\n1,2\n", *tb = "t,p\ns,psi\n2,3\n3,4\n";
    assert_int_equal(write(fa, ta, strlen(ta)), (ssize_t)strlen(ta));
    assert_int_equal(write(fb, tb, strlen(tb)), (ssize_t)strlen(tb));
    close(fa);
    close(fb);
    const char *paths[] = {a, b};
    el_table t = {0};
    el_error e;
    assert_int_equal(el_table_read_files(paths, 2, NULL, &t, &e), EL_ERR_DATA);
    assert_string_equal(e.file, b);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 2);
    assert_non_null(strstr(e.message, "\"p\" [psi], not \"p\" [bar]"));
    const char *tn = "t,p\n2,3\n3,4\n";
    fb = open(b, O_WRONLY | O_TRUNC);
    assert_true(fb >= 0);
    assert_int_equal(write(fb, tn, strlen(tn)), (ssize_t)strlen(tn));
    close(fb);
    assert_int_equal(el_table_read_files(paths, 2, NULL, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 1);
    assert_non_null(strstr(e.message, "\"t\" (no unit), not \"t\" [s]"));
    remove(a);
    remove(b);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_units_row_taken),
        cmocka_unit_test(test_units_row_brackets_and_gaps),
        cmocka_unit_test(test_units_row_for_date_times),
        cmocka_unit_test(test_units_row_labels_date_times),
        cmocka_unit_test(test_units_row_disagrees),
        cmocka_unit_test(test_not_a_units_row),
        cmocka_unit_test(test_units_probe),
        cmocka_unit_test(test_follow_keeps_units),
        cmocka_unit_test(test_follow_units_changed),
        cmocka_unit_test(test_units_row_with_number),
        cmocka_unit_test(test_files_units_differ),
    };
    return cmocka_run_group_tests_name("units_row", tests, NULL, NULL);
}
