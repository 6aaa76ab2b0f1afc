/* test_survey: the library part of `eigenlog survey`: the FNV-1a hash
 * against its published test vectors, CSV quoting per RFC 4180, manifest
 * parsing and its errors, per-log records, rows from assess JSON, shards,
 * the --fail-on rule and the overview page. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "el_survey.h"
#include "el_survey_html.h"

/* FNV-1a 64 test vectors of the FNV reference page (Noll, "FNV hash",
 * isthe.com/chongo/tech/comp/fnv, test vectors fnv1a64 of "", "a" and
 * "foobar"); values recalled from memory and re-derived here with a
 * six-line independent Python implementation of the published algorithm. */
static void test_fnv1a64_vectors(void **state)
{
    (void)state;
    assert_true(el_fnv1a64(EL_FNV1A64_OFFSET, "", 0) == 0xcbf29ce484222325ULL);
    assert_true(el_fnv1a64(EL_FNV1A64_OFFSET, "a", 1) == 0xaf63dc4c8601ec8cULL);
    assert_true(el_fnv1a64(EL_FNV1A64_OFFSET, "foobar", 6) == 0x85944171f73967e8ULL);
    /* Continuing a hash equals hashing the concatenation. */
    uint64_t h = el_fnv1a64(EL_FNV1A64_OFFSET, "foo", 3);
    assert_true(el_fnv1a64(h, "bar", 3) == 0x85944171f73967e8ULL);
}

static void test_hash_file(void **state)
{
    (void)state;
    char path[] = "/tmp/test_survey_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    assert_int_equal(write(fd, "foobar", 6), 6);
    close(fd);
    uint64_t h = 0;
    el_error err;
    assert_int_equal(el_survey_hash_file(path, &h, &err), EL_OK);
    assert_true(h == 0x85944171f73967e8ULL);   /* the "foobar" vector above */
    unlink(path);
    assert_int_equal(el_survey_hash_file(path, &h, &err), EL_ERR_IO);
    assert_string_equal(err.file, path);
}

static void test_log_names(void **state)
{
    (void)state;
    assert_true(el_survey_is_log_name("a/b.csv"));
    assert_true(el_survey_is_log_name("b.csv.gz"));
    assert_false(el_survey_is_log_name("b.csv.txt"));
    assert_false(el_survey_is_log_name("list.txt"));
    assert_true(el_survey_is_gzip_name("b.csv.gz"));
    assert_false(el_survey_is_gzip_name("b.csv"));
}

static void test_manifest(void **state)
{
    (void)state;
    el_survey_list list = {0};
    el_error err;
    const char *text = "# campaign\n\n"
                       "a.csv\n"
                       "  /abs/b.csv --time stamp --from=10 --to 20  \n"
                       "\"with space.csv\" --channels \"p, q\"\n"
                       "a.csv --lags 2\n";
    assert_int_equal(el_survey_parse_manifest(&list, "runs/list.txt", text, &err), EL_OK);
    /* a.csv listed twice: kept once, at its first place. */
    assert_int_equal(list.count, 3);
    assert_string_equal(list.logs[0].path, "runs/a.csv");     /* relative to the manifest */
    assert_int_equal(list.logs[0].n_args, 0);
    assert_string_equal(list.logs[1].path, "/abs/b.csv");
    assert_int_equal(list.logs[1].n_args, 3);
    assert_string_equal(list.logs[1].args[0], "--time=stamp");
    assert_string_equal(list.logs[1].args[1], "--from=10");
    assert_string_equal(list.logs[1].args[2], "--to=20");
    assert_string_equal(list.logs[2].path, "runs/with space.csv");
    assert_string_equal(list.logs[2].args[0], "--channels=p, q");
    el_survey_list_free(&list);
    assert_int_equal(list.count, 0);
    /* How a log was written is the log's own: loggers of a campaign differ
     * in date order, decimal separator and time unit. */
    const char *forms = "us.csv --date-order mdy\nde.csv --decimal , --time-unit ms\n";
    assert_int_equal(el_survey_parse_manifest(&list, "m.txt", forms, &err), EL_OK);
    assert_int_equal(list.count, 2);
    assert_string_equal(list.logs[0].args[0], "--date-order=mdy");
    assert_string_equal(list.logs[1].args[0], "--decimal=,");
    assert_string_equal(list.logs[1].args[1], "--time-unit=ms");
    el_survey_list_free(&list);
}

static void test_manifest_errors(void **state)
{
    (void)state;
    el_survey_list list = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_survey_parse_manifest(&list, "m.txt", "a.csv\nb.csv --boot 5\n", &err),
                     EL_ERR_USAGE);
    assert_string_equal(err.file, "m.txt");
    assert_int_equal(err.line, 2);
    assert_int_equal(err.column, 7);
    assert_true(strstr(err.hint, "--time") != NULL);
    el_survey_list_free(&list);

    el_error_clear(&err);
    assert_int_equal(el_survey_parse_manifest(&list, "m.txt", "b.csv --time\n", &err), EL_ERR_USAGE);
    assert_int_equal(err.line, 1);
    assert_true(strstr(err.message, "needs a value") != NULL);
    el_survey_list_free(&list);

    el_error_clear(&err);
    assert_int_equal(el_survey_parse_manifest(&list, "m.txt", "\"open.csv\n", &err), EL_ERR_USAGE);
    assert_true(strstr(err.message, "quote") != NULL);
    el_survey_list_free(&list);

    el_error_clear(&err);
    assert_int_equal(el_survey_parse_manifest(&list, "m.txt", "a.csv b.csv\n", &err), EL_ERR_USAGE);
    assert_int_equal(err.column, 7);
    el_survey_list_free(&list);
}

static void touch(const char *dir, const char *name)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "w");
    assert_non_null(f);
    fputs("t,x\n0,1\n", f);
    fclose(f);
}

/* A folder is searched recursively for *.csv and *.csv.gz in sorted
 * order; other files, hidden entries and the survey's own output folder
 * (whose survey.csv is not a log) are left out. */
static void test_folder_listing(void **state)
{
    (void)state;
    char root[] = "/tmp/test_survey_dir_XXXXXX";
    assert_non_null(mkdtemp(root));
    char sub[600], out[600], hidden[600];
    snprintf(sub, sizeof sub, "%s/sub", root);
    snprintf(out, sizeof out, "%s/out", root);
    snprintf(hidden, sizeof hidden, "%s/.snap", root);
    assert_int_equal(mkdir(sub, 0700), 0);
    assert_int_equal(mkdir(out, 0700), 0);
    assert_int_equal(mkdir(hidden, 0700), 0);
    touch(root, "b.csv");
    touch(root, "a.csv");
    touch(root, "notes.txt");
    touch(sub, "c.csv.gz");
    touch(out, "survey.csv");
    touch(hidden, "d.csv");
    el_survey_list list = {0};
    char *out_real = realpath(out, NULL);
    list.skip_folder = out_real;
    el_error err;
    assert_int_equal(el_survey_list_add_input(&list, root, &err), EL_OK);
    assert_int_equal(list.count, 3);
    char want[700];
    snprintf(want, sizeof want, "%s/a.csv", root);
    assert_string_equal(list.logs[0].path, want);
    snprintf(want, sizeof want, "%s/b.csv", root);
    assert_string_equal(list.logs[1].path, want);
    snprintf(want, sizeof want, "%s/sub/c.csv.gz", root);
    assert_string_equal(list.logs[2].path, want);
    /* Without the skip, the output folder's table would be taken. */
    el_survey_list_free(&list);
    list.skip_folder = NULL;
    assert_int_equal(el_survey_list_add_input(&list, root, &err), EL_OK);
    assert_int_equal(list.count, 4);
    el_survey_list_free(&list);
    assert_int_equal(el_survey_list_add_input(&list, "/nonexistent/x", &err), EL_ERR_IO);
    free(out_real);
    char cmd[700];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", root);
    assert_int_equal(system(cmd), 0);
}

/* Shards are contiguous, cover the list once, in order, sizes within one. */
static void test_shards(void **state)
{
    (void)state;
    for (size_t count = 0; count < 40; count++)
        for (size_t n = 1; n <= 9; n++) {
            size_t expect = 0, lo = count, hi = 0;
            for (size_t k = 1; k <= n; k++) {
                size_t b, e;
                el_survey_shard_range(count, k, n, &b, &e);
                assert_int_equal(b, expect);
                expect = e;
                lo = e - b < lo ? e - b : lo;
                hi = e - b > hi ? e - b : hi;
            }
            assert_int_equal(expect, count);
            assert_true(hi - lo <= 1);
        }
    size_t b = 7, e = 7;
    el_survey_shard_range(10, 0, 3, &b, &e);
    assert_int_equal(e - b, 0);
}

static void test_record_roundtrip(void **state)
{
    (void)state;
    el_survey_record r = {"logs/a b.csv", 1234, 1700000000123456789LL, 0x0123456789abcdefULL,
                          0xfedcba9876543210ULL, 1, 2, "a.csv:3:1: bad cell", "{\"x\":1}"};
    el_buf text = {0};
    assert_int_equal(el_survey_record_format(&r, &text), EL_OK);
    el_survey_record back;
    el_error err;
    assert_int_equal(el_survey_record_parse(text.data, &back, &err), EL_OK);
    assert_string_equal(back.path, r.path);
    assert_true(back.size == r.size && back.mtime_ns == r.mtime_ns);
    assert_true(back.content_hash == r.content_hash && back.options_hash == r.options_hash);
    assert_int_equal(back.has_report, 1);
    assert_int_equal(back.exit_code, 2);
    assert_string_equal(back.error, r.error);
    assert_string_equal(back.json, r.json);
    el_survey_record_free(&back);
    /* A record cut short (a crash while writing cannot leave one, but a
     * hand-edited cache could) is not taken. */
    text.data[text.length / 2] = '\0';
    assert_int_equal(el_survey_record_parse(text.data, &back, &err), EL_ERR_DATA);
    assert_null(back.path);
    el_buf_free(&text);
}

/* RFC 8259 section 2: whitespace is allowed around the structural
 * characters and is insignificant there; inside strings it is content. */
static void test_json_compact(void **state)
{
    (void)state;
    const char *in = "{\n  \"a b\": [1, 2.5e-3,\n  null],\n  \"q\": \"say \\\"hi\\\" \",\n"
                     "  \"t\": true\n}\n";
    el_buf out = {0};
    el_error err;
    assert_int_equal(el_survey_json_compact(in, strlen(in), &out, &err), EL_OK);
    assert_string_equal(out.data, "{\"a b\":[1,2.5e-3,null],\"q\":\"say \\\"hi\\\" \",\"t\":true}");
    el_buf_free(&out);
    assert_int_equal(el_survey_json_compact("{\"open", 6, &out, &err), EL_ERR_DATA);
    el_buf_free(&out);
}

/* A JSON in the shape `assess --json` writes (docs/cli.md), compact. */
static const char ASSESS_JSON[] =
    "{\"eigenlog\":\"0.1.0\",\"input\":{\"file\":\"x.csv\",\"rows_used\":900,"
    "\"warnings\":[\"gap filled\"]},\"model\":{\"method\":\"iv\",\"lags\":0},"
    "\"modes\":[{\"lambda\":{\"re\":-0.25,\"im\":3},\"frequency_hz\":0.4775,"
    "\"damping_ratio\":0.0830,\"decay_rate\":0.25,\"shape\":[{\"channel\":\"p\"}],"
    "\"bounds\":{\"re\":[-0.3,-0.2],\"frequency_hz\":[0.47,0.48],"
    "\"damping_ratio\":[0.066,0.099],\"decay_rate\":[0.2,0.3]}},"
    "{\"frequency_hz\":0,\"damping_ratio\":1,\"decay_rate\":2,\"bounds\":null}],"
    "\"verdict\":{\"stability\":\"stable\",\"type\":\"spiral sink\",\"p_stable\":0.999,"
    "\"ambiguous\":false,\"margin\":{\"decay_rate\":0.25},"
    "\"warnings\":[\"w1 with \\\"quotes\\\", commas\",\"w2\"],\"caution\":\"c\"}}";

static void test_row_from_json(void **state)
{
    (void)state;
    el_survey_record rec = {"logs/x.csv", 0, 0, 0, 0, 0, 0, "", (char *)ASSESS_JSON};
    el_survey_row row;
    el_error err;
    assert_int_equal(el_survey_row_build(&rec, &row, &err), EL_OK);
    assert_string_equal(row.field[EL_SC_FILE], "logs/x.csv");
    assert_string_equal(row.field[EL_SC_STATUS], "ok");
    assert_string_equal(row.field[EL_SC_EXIT_CODE], "0");
    assert_string_equal(row.field[EL_SC_ROWS_USED], "900");
    assert_string_equal(row.field[EL_SC_VERDICT], "stable");
    assert_string_equal(row.field[EL_SC_AMBIGUOUS], "false");
    assert_string_equal(row.field[EL_SC_TYPE], "spiral sink");
    /* The first mode is the least damped one: its texts, unrounded. */
    assert_string_equal(row.field[EL_SC_FREQUENCY], "0.4775");
    assert_string_equal(row.field[EL_SC_FREQUENCY_LO], "0.47");
    assert_string_equal(row.field[EL_SC_FREQUENCY_HI], "0.48");
    assert_string_equal(row.field[EL_SC_DAMPING], "0.0830");
    assert_string_equal(row.field[EL_SC_DAMPING_LO], "0.066");
    assert_string_equal(row.field[EL_SC_DECAY], "0.25");
    assert_string_equal(row.field[EL_SC_DECAY_HI], "0.3");
    assert_string_equal(row.field[EL_SC_P_STABLE], "0.999");
    assert_string_equal(row.field[EL_SC_WARNINGS], "3");   /* 1 input + 2 verdict */
    assert_string_equal(row.field[EL_SC_ESTIMATOR], "iv");
    assert_close(el_survey_row_number(&row, EL_SC_DECAY), 0.25, 0.0, 0.0);
    assert_true(isnan(el_survey_row_number(&row, EL_SC_ERROR)));
    el_survey_row_free(&row);

    /* No bounds (--boot 0): empty bound columns, never "null". */
    const char *no_boot = "{\"input\":{\"rows_used\":5},\"modes\":[{\"frequency_hz\":1,"
                          "\"bounds\":null}],\"verdict\":{\"stability\":\"unstable\","
                          "\"p_stable\":null,\"ambiguous\":true,\"warnings\":[]}}";
    rec.json = (char *)no_boot;
    assert_int_equal(el_survey_row_build(&rec, &row, &err), EL_OK);
    assert_string_equal(row.field[EL_SC_FREQUENCY], "1");
    assert_string_equal(row.field[EL_SC_FREQUENCY_LO], "");
    assert_string_equal(row.field[EL_SC_P_STABLE], "");
    assert_string_equal(row.field[EL_SC_WARNINGS], "0");
    el_survey_row_free(&row);

    rec.json = (char *)"{\"input\":";
    assert_int_equal(el_survey_row_build(&rec, &row, &err), EL_ERR_DATA);
}

static void test_error_row_and_line(void **state)
{
    (void)state;
    el_survey_record rec = {"b.csv", 0, 0, 0, 0, 0, 2, "b.csv:3:1: time cell \"x\": bad", ""};
    el_survey_row row;
    el_error err;
    assert_int_equal(el_survey_row_build(&rec, &row, &err), EL_OK);
    assert_string_equal(row.field[EL_SC_STATUS], "error");
    assert_string_equal(row.field[EL_SC_EXIT_CODE], "2");
    assert_string_equal(row.field[EL_SC_ERROR], rec.error);
    assert_string_equal(row.field[EL_SC_VERDICT], "");
    assert_false(el_survey_row_fails(&row, 1));   /* failed, not matched */
    el_survey_row_free(&row);
    el_buf line = {0};
    assert_int_equal(el_survey_jsonl_line(&rec, &line), EL_OK);
    assert_string_equal(line.data, "{\"survey_error\":{\"file\":\"b.csv\",\"exit_code\":2,"
                                   "\"message\":\"b.csv:3:1: time cell \\\"x\\\": bad\"}}");
    el_buf_free(&line);
}

/* RFC 4180 section 2, rules 5-7: fields holding commas, quotes or line
 * breaks are enclosed in double quotes, a quote inside is doubled. */
static void test_csv_quoting_roundtrip(void **state)
{
    (void)state;
    el_survey_table t = {0};
    el_survey_row row;
    for (int c = 0; c < EL_SC_COUNT; c++)
        row.field[c] = strdup("");
    free(row.field[EL_SC_FILE]);
    row.field[EL_SC_FILE] = strdup("a,b.csv");
    free(row.field[EL_SC_ERROR]);
    row.field[EL_SC_ERROR] = strdup("cell \"x\"\nsecond");
    free(row.field[EL_SC_STATUS]);
    row.field[EL_SC_STATUS] = strdup("error");
    assert_int_equal(el_survey_table_push(&t, &row), EL_OK);
    el_buf csv = {0};
    assert_int_equal(el_survey_csv(&t, &csv), EL_OK);
    const char *line2 = strchr(csv.data, '\n') + 1;
    assert_memory_equal(line2, "\"a,b.csv\",error,,\"cell \"\"x\"\"\nsecond\",", 37);
    assert_int_equal(strncmp(csv.data, "file,status,exit_code,error,rows_used,verdict,", 46), 0);
    el_survey_table back = {0};
    el_error err;
    assert_int_equal(el_survey_csv_read("t.csv", csv.data, &back, &err), EL_OK);
    assert_int_equal(back.count, 1);
    assert_string_equal(back.rows[0].field[EL_SC_ERROR], "cell \"x\"\nsecond");
    el_buf again = {0};
    assert_int_equal(el_survey_csv(&back, &again), EL_OK);
    assert_string_equal(again.data, csv.data);   /* merging shards keeps bytes */
    el_buf_free(&again);
    el_survey_table_free(&back);
    assert_int_equal(el_survey_csv_read("t.csv", "file,status\nx,ok\n", &back, &err), EL_ERR_DATA);
    assert_int_equal(err.line, 1);
    el_survey_table_free(&back);
    el_buf_free(&csv);
    el_survey_table_free(&t);
}

static void make_row(el_survey_row *row, const char *file, const char *status,
                     const char *verdict, const char *ambiguous, const char *decay)
{
    for (int c = 0; c < EL_SC_COUNT; c++)
        row->field[c] = strdup("");
    free(row->field[EL_SC_FILE]);
    row->field[EL_SC_FILE] = strdup(file);
    free(row->field[EL_SC_STATUS]);
    row->field[EL_SC_STATUS] = strdup(status);
    free(row->field[EL_SC_VERDICT]);
    row->field[EL_SC_VERDICT] = strdup(verdict);
    free(row->field[EL_SC_AMBIGUOUS]);
    row->field[EL_SC_AMBIGUOUS] = strdup(ambiguous);
    free(row->field[EL_SC_DECAY]);
    row->field[EL_SC_DECAY] = strdup(decay);
}

/* Same rule as `assess --fail-on` (cli_assess.c verdict_exit). */
static void test_fail_on(void **state)
{
    (void)state;
    el_survey_row stable, unstable, undecided;
    make_row(&stable, "a", "ok", "stable", "false", "1");
    make_row(&unstable, "b", "ok", "unstable", "false", "-1");
    make_row(&undecided, "c", "ok", "stable", "true", "0.1");
    assert_false(el_survey_row_fails(&stable, 1));
    assert_false(el_survey_row_fails(&stable, 2));
    assert_true(el_survey_row_fails(&unstable, 1));
    assert_true(el_survey_row_fails(&unstable, 2));
    assert_false(el_survey_row_fails(&undecided, 1));
    assert_true(el_survey_row_fails(&undecided, 2));
    assert_false(el_survey_row_fails(&unstable, 0));
    el_survey_row_free(&stable);
    el_survey_row_free(&unstable);
    el_survey_row_free(&undecided);
}

/* The page ranks by margin, least first, flags undecided and failed logs,
 * links reports, and holds no script. */
static void test_overview_page(void **state)
{
    (void)state;
    el_survey_table t = {0};
    el_survey_row r;
    make_row(&r, "big.csv", "ok", "stable", "false", "2.5");
    el_survey_table_push(&t, &r);
    make_row(&r, "grows.csv", "ok", "unstable", "false", "-0.5");
    el_survey_table_push(&t, &r);
    make_row(&r, "<odd>.csv", "ok", "stable", "true", "0.01");
    el_survey_table_push(&t, &r);
    make_row(&r, "bad.csv", "error", "", "", "");
    el_survey_table_push(&t, &r);
    el_buf page = {0};
    el_error err;
    assert_int_equal(el_survey_html(&t, "reports/", &page, &err), EL_OK);
    const char *grows = strstr(page.data, ">grows.csv<");
    const char *odd = strstr(page.data, ">&lt;odd&gt;.csv<");
    const char *big = strstr(page.data, ">big.csv<");
    assert_non_null(grows);
    assert_non_null(odd);
    assert_non_null(big);
    assert_true(grows < odd && odd < big);
    assert_non_null(strstr(page.data, "Logs that could not be assessed (1)"));
    assert_non_null(strstr(page.data, "<span class=\"flag\">undecided</span></td>"));
    char name[128], link[200];
    el_survey_report_name("grows.csv", name, sizeof name);
    snprintf(link, sizeof link, "href=\"reports/%s.html\"", name);
    assert_non_null(strstr(page.data, link));
    assert_null(strstr(page.data, "<script"));
    /* One figure per ranked log plus the axis. */
    size_t figures = 0;
    for (const char *p = page.data; (p = strstr(p, "<svg")) != NULL; p++)
        figures++;
    assert_int_equal(figures, 4);
    el_buf_free(&page);
    el_survey_table_free(&t);
}

static void test_report_name(void **state)
{
    (void)state;
    char a[128], b[128];
    el_survey_report_name("site1/pump 3.csv.gz", a, sizeof a);
    el_survey_report_name("site2/pump 3.csv", b, sizeof b);
    assert_int_equal(strncmp(a, "pump_3-", 7), 0);
    assert_int_equal(strlen(a), 15);
    assert_string_not_equal(a, b);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fnv1a64_vectors),
        cmocka_unit_test(test_hash_file),
        cmocka_unit_test(test_log_names),
        cmocka_unit_test(test_manifest),
        cmocka_unit_test(test_manifest_errors),
        cmocka_unit_test(test_folder_listing),
        cmocka_unit_test(test_shards),
        cmocka_unit_test(test_record_roundtrip),
        cmocka_unit_test(test_json_compact),
        cmocka_unit_test(test_row_from_json),
        cmocka_unit_test(test_error_row_and_line),
        cmocka_unit_test(test_csv_quoting_roundtrip),
        cmocka_unit_test(test_fail_on),
        cmocka_unit_test(test_overview_page),
        cmocka_unit_test(test_report_name),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
