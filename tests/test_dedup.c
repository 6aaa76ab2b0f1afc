/* test_dedup: rows a logger wrote twice are left out with a note; a time
 * that repeats with another value, and logs whose stamps are coarser than
 * their sampling, keep every row (el_dedup.h). The expected tables are
 * written out by hand from the CSV text: comparisons are exact (the cells
 * are read as strtod reads them, tests/test_ingest.c). */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "el_dedup.h"
#include "el_follow.h"
#include "el_ingest.h"

static el_status read_text(const char *text, int keep, el_table *t, el_error *e)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    rewind(fp);
    el_ingest_options opt = {.keep_repeats = keep};
    el_status st = el_table_read_stream(fp, "dup.csv", &opt, t, e);
    fclose(fp);
    return st;
}

static double cell(const el_table *t, size_t row, size_t col)
{
    return t->values[col * t->n_rows + row];
}

/* Lines 3 and 5-6 repeat the row before exactly (6 repeats the repeat):
 * three rows go, one note names the count and line 3; the missing cell of
 * column b is counted once, as its duplicate went. */
static void test_exact_repeats_dropped(void **state)
{
    (void)state;
    const char *text = "t [s],a,b\n"
                       "0,1.5,2\n"   /* line 2 */
                       "0,1.5,2\n"   /* 3: repeat */
                       "1,2.5,NA\n"  /* 4 */
                       "1,2.5,NA\n"  /* 5: repeat, missing cell equal to missing */
                       "1,2.5,NA\n"  /* 6: repeat */
                       "2,3.5,4\n"   /* 7 */
                       "3,4.5,5\n"   /* 8 */
                       "4,5.5,6\n"   /* 9 */
                       "5,6.5,7\n"   /* 10 */
                       "6,7.5,8\n"   /* 11 */
                       "7,8.5,9\n"   /* 12 */
                       "8,9.5,10\n"  /* 13 */
                       "9,10.5,11\n" /* 14 */
                       "10,11.5,12\n"/* 15 */
                       "11,12.5,13\n"/* 16 */
                       "12,13.5,14\n";/* 17 */
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, 0, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 13);
    const double want_t[13] = {0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12};
    const long want_line[13] = {2, 4, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17};
    for (size_t r = 0; r < 13; r++) {
        assert_true(cell(&t, r, 0) == want_t[r]);
        assert_int_equal(t.source_line[r], want_line[r]);
        if (r != 1)
            assert_true(cell(&t, r, 2) == want_t[r] + 2.0);
    }
    assert_true(cell(&t, 1, 1) == 2.5 && isnan(cell(&t, 1, 2)));
    assert_true(cell(&t, 12, 1) == 13.5);
    assert_int_equal(t.missing[2], 1);
    assert_int_equal(t.notes.count, 1);
    assert_non_null(strstr(t.notes.items[0], "3 rows repeat the row before exactly"));
    assert_non_null(strstr(t.notes.items[0], "line 3 of dup.csv"));
    el_table_free(&t);
    /* keep_repeats: every row stays, no note. */
    assert_int_equal(read_text(text, 1, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 16);
    assert_int_equal(t.notes.count, 0);
    el_table_free(&t);
}

/* A repeated time with one value changed is two readings at one time: the
 * row stays (el_timebase then refuses the log at that line). */
static void test_changed_value_kept(void **state)
{
    (void)state;
    const char *text = "t [s],a\n0,1\n1,2\n1,2.0000001\n2,3\n3,4\n4,5\n5,6\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, 0, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 7);
    assert_int_equal(t.notes.count, 0);
    el_table_free(&t);
}

/* Stamps coarser than the sampling (two rows per stamp: half the steps
 * repeat the time) with a quantised channel that repeats its value: every
 * row is a sample and stays. */
static void test_coarse_stamps_kept(void **state)
{
    (void)state;
    const char *text = "t [s],a\n0,1\n0,1\n1,2\n1,3\n2,3\n2,3\n3,4\n3,4\n4,4\n4,5\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, 0, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 10);
    assert_int_equal(t.notes.count, 0);
    el_table_free(&t);
}

static void write_file(const char *path, const char *text)
{
    FILE *fp = fopen(path, "w");
    assert_non_null(fp);
    fputs(text, fp);
    fclose(fp);
}

/* Daily files that overlap by one row (the second repeats the first's last
 * row): read as one log, the boundary row is kept once and the rows after
 * it still name their own file and line. */
static void test_overlapping_files(void **state)
{
    (void)state;
    char dir[] = "/tmp/el_dedup_XXXXXX";
    assert_non_null(mkdtemp(dir));
    char a[64], b[64];
    snprintf(a, sizeof a, "%s/day1.csv", dir);
    snprintf(b, sizeof b, "%s/day2.csv", dir);
    write_file(a, "t [s],x\n0,1\n1,2\n2,3\n3,4\n4,5\n5,6\n");
    write_file(b, "t [s],x\n5,6\n6,7\n7,8\n8,9\n9,10\n");
    const char *paths[2] = {a, b};
    el_table t = {0};
    el_error e;
    assert_int_equal(el_table_read_files(paths, 2, NULL, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 10);
    for (size_t r = 0; r < 10; r++)
        assert_true(cell(&t, r, 0) == (double)r && cell(&t, r, 1) == (double)r + 1.0);
    assert_string_equal(el_table_row_source(&t, 6), b);
    assert_int_equal(t.source_line[6], 3);
    assert_int_equal(t.notes.count, 1);
    assert_non_null(strstr(t.notes.items[0], "1 row repeats the row before exactly"));
    assert_non_null(strstr(t.notes.items[0], "line 2 of"));
    el_table_free(&t);
    unlink(a);
    unlink(b);
    rmdir(dir);
}

/* track --follow judges each row against the last one kept, across parses:
 * an exact repeat arriving alone is left out with one note; a repeated time
 * with another value is still a bad row. */
static void test_follow_repeats(void **state)
{
    (void)state;
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track.window = 100.0;
    el_error err;
    el_follow *f = NULL;
    assert_int_equal(el_follow_create(&fo, &f, &err), EL_OK);
    el_follow_new_file(f, "live.csv");
    const char *first = "t,x\n0,1\n1,2\n";
    assert_int_equal(el_follow_add_lines(f, first, strlen(first), 3, 1, &err), EL_OK);
    const char *again = "1,2\n";
    assert_int_equal(el_follow_add_lines(f, again, strlen(again), 1, 4, &err), EL_OK);
    const char *more = "2,3\n2,3\n3,4\n";
    assert_int_equal(el_follow_add_lines(f, more, strlen(more), 3, 5, &err), EL_OK);
    assert_int_equal(el_follow_rows_held(f), 4);
    el_warnings *notes = el_follow_notes(f);
    assert_int_equal(notes->count, 1);
    assert_non_null(strstr(notes->items[0], "live.csv:4:"));
    const char *changed = "3,4.5\n";
    assert_int_equal(el_follow_add_lines(f, changed, strlen(changed), 1, 8, &err),
                     EL_ERR_DATA);
    assert_int_equal(err.line, 8);
    el_follow_destroy(f);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_exact_repeats_dropped),
        cmocka_unit_test(test_changed_value_kept),
        cmocka_unit_test(test_coarse_stamps_kept),
        cmocka_unit_test(test_overlapping_files),
        cmocka_unit_test(test_follow_repeats),
    };
    return cmocka_run_group_tests_name("dedup", tests, NULL, NULL);
}
