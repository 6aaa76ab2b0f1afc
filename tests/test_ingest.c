/* test_ingest: CSV reading (quoting, delimiters, comments, CRLF, BOM, long
 * lines, stdin), strict cells, ISO 8601 time, errors with locations, time
 * parsing and formatting, and the scan summary. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <zlib.h>

#include "el_ingest.h"
#include "el_rows.h"

/* Tolerance policy. Cells are decimal text; ingest must return the
 * correctly rounded double of that text, which is what glibc's strtod
 * (an independent, correctly rounding implementation) returns for the same
 * text: those comparisons are exact (tolerance 0). ISO times and scan
 * statistics are compared with the tolerances stated beside them. */

/* Reads len bytes of text (may hold NUL) through a temporary stream. */
static el_status read_bytes(const char *text, size_t len, const char *time_col,
                            el_table *t, el_error *e)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, len, fp), len);
    rewind(fp);
    el_ingest_options opt = {.time_column = time_col};
    el_status st = el_table_read_stream(fp, "test.csv", &opt, t, e);
    fclose(fp);
    return st;
}

static el_status read_text(const char *text, el_table *t, el_error *e)
{
    return read_bytes(text, strlen(text), NULL, t, e);
}

static double cell(const el_table *t, size_t row, size_t col)
{
    return t->values[col * t->n_rows + row];
}

/* Checks an error: status, line, column, file, and that a hint is given. */
static void expect_error(const char *text, el_status status, long line, long column)
{
    el_table t = {0};
    el_error e;
    el_status st = read_text(text, &t, &e);
    if (st != status || e.line != line || e.column != column) {
        char buf[1200];
        print_error("input:\n%s\ngot status %d line %ld column %ld: %s\n", text, (int)st,
                    e.line, e.column, el_error_format(&e, buf, sizeof buf));
    }
    assert_int_equal(st, status);
    assert_int_equal(e.line, line);
    assert_int_equal(e.column, column);
    assert_string_equal(e.file, "test.csv");
    assert_true(strlen(e.hint) > 0);
    assert_int_equal(t.n_rows, 0);
    assert_null(t.values);
    el_table_free(&t);
}

/* As expect_error, and the hint must contain word. */
static void expect_error_hint(const char *text, long line, long column, const char *word)
{
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, line);
    assert_int_equal(e.column, column);
    if (strstr(e.hint, word) == NULL)
        fail_msg("hint \"%s\" lacks \"%s\"", e.hint, word);
    el_table_free(&t);
}

/* ------------------------------------------------------------------ */
/* Features                                                           */

static void test_basic_table(void **state)
{
    (void)state;
    const char *csv = "# exported by a logger\n"
                      "time [s], pressure  [ bar ] ,flow\n"
                      "\n"
                      "0.0,1.5,10\n"
                      "# a comment between rows\n"
                      "   # an indented comment with a stray \" quote\n"
                      "0.5, 2.25 ,NA\n"
                      "1.0,,nan\n"
                      "1.5,  NaN  ,-3e2\n"
                      "2.0,na,\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(csv, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 5);
    assert_int_equal(t.n_columns, 3);
    assert_int_equal(t.delimiter, ',');
    assert_int_equal(t.time_column, 0);
    assert_int_equal(t.time_is_iso, 0);
    assert_string_equal(t.source, "test.csv");
    assert_string_equal(t.names[0], "time");
    assert_string_equal(t.units[0], "s");
    assert_string_equal(t.names[1], "pressure");
    assert_string_equal(t.units[1], "bar");
    assert_string_equal(t.names[2], "flow");
    assert_string_equal(t.units[2], "");
    const long lines[] = {4, 7, 8, 9, 10};
    for (size_t r = 0; r < 5; r++) {
        assert_int_equal(t.source_line[r], lines[r]);
        assert_close(cell(&t, r, 0), 0.5 * (double)r, 0, 0); /* exact decimal */
    }
    assert_close(cell(&t, 0, 1), 1.5, 0, 0);
    assert_close(cell(&t, 1, 1), 2.25, 0, 0);
    assert_true(isnan(cell(&t, 2, 1)) && isnan(cell(&t, 3, 1)) && isnan(cell(&t, 4, 1)));
    assert_close(cell(&t, 0, 2), 10.0, 0, 0);
    assert_true(isnan(cell(&t, 1, 2)) && isnan(cell(&t, 2, 2)) && isnan(cell(&t, 4, 2)));
    assert_close(cell(&t, 3, 2), -300.0, 0, 0);
    assert_int_equal(t.missing[0], 0);
    assert_int_equal(t.missing[1], 3);
    assert_int_equal(t.missing[2], 3);
    assert_int_equal(el_table_find(&t, "flow"), 2);
    assert_int_equal(el_table_find(&t, "pressure"), 1);
    /* As the header writes it, unit included (issue 9: exports name
     * columns with their units), and with other spacing before "[". */
    assert_int_equal(el_table_find(&t, "pressure [bar]"), 1);
    assert_int_equal(el_table_find(&t, "pressure[bar]"), 1);
    assert_int_equal(el_table_find(&t, "pressure [psi]"), -1);
    assert_int_equal(el_table_find(&t, "flow []"), 2);
    assert_int_equal(el_table_find(&t, "Flow"), -1);
    el_table_free(&t);
    assert_null(t.names);
    el_table_free(&t); /* harmless twice */
    el_table_free(NULL);
}

static void test_semicolon_and_tab(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t;x [m,s];y\n1;2.5;-1\n2;3.5;NA\n", &t, &e), EL_OK);
    assert_int_equal(t.delimiter, ';');
    assert_int_equal(t.n_columns, 3);
    assert_string_equal(t.units[1], "m,s");
    assert_close(cell(&t, 1, 1), 3.5, 0, 0);
    assert_int_equal(t.missing[2], 1);
    el_table_free(&t);
    /* One comma (inside the unit) ties with one semicolon: ';' wins. */
    assert_int_equal(read_text("t;x [m,s]\n1;2.5\n", &t, &e), EL_OK);
    assert_int_equal(t.delimiter, ';');
    assert_int_equal(t.n_columns, 2);
    el_table_free(&t);
    /* A tab ties with a comma: the tab wins. */
    assert_int_equal(read_text("t\tx, y\n1\t2\n", &t, &e), EL_OK);
    assert_int_equal(t.delimiter, '\t');
    el_table_free(&t);

    assert_int_equal(read_text("t\tx, y [V]\tz\n1\t 2 \t3\n", &t, &e), EL_OK);
    assert_int_equal(t.delimiter, '\t');
    assert_string_equal(t.names[1], "x, y");
    assert_string_equal(t.units[1], "V");
    assert_close(cell(&t, 0, 1), 2.0, 0, 0);
    assert_close(cell(&t, 0, 2), 3.0, 0, 0);
    el_table_free(&t);

    /* Quoted delimiters do not count in the detection. */
    assert_int_equal(read_text("\"a;b;c\",x\n1,2\n", &t, &e), EL_OK);
    assert_int_equal(t.delimiter, ',');
    assert_string_equal(t.names[0], "a;b;c");
    el_table_free(&t);

    /* One column: no delimiter at all. */
    assert_int_equal(read_text("t\n1\n2\n", &t, &e), EL_OK);
    assert_int_equal(t.n_columns, 1);
    assert_int_equal(t.n_rows, 2);
    el_table_free(&t);
}

static void test_quoted_fields(void **state)
{
    (void)state;
    const char *csv = "time,\"flow, inlet [l/s]\",\"two\nline \"\"name\"\"\"\r\n"
                      "0,\"1.5\", \"2\" \r\n"
                      "1,\"\",\"NA\"\r\n"
                      "2,3,4";                       /* no final newline */
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(csv, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 3);
    assert_string_equal(t.names[1], "flow, inlet");
    assert_string_equal(t.units[1], "l/s");
    assert_string_equal(t.names[2], "two\nline \"name\"");
    /* The header spans lines 1-2, so the rows are on lines 3, 4 and 5. */
    assert_int_equal(t.source_line[0], 3);
    assert_int_equal(t.source_line[1], 4);
    assert_int_equal(t.source_line[2], 5);
    assert_close(cell(&t, 0, 1), 1.5, 0, 0);
    assert_close(cell(&t, 0, 2), 2.0, 0, 0);
    assert_true(isnan(cell(&t, 1, 1)) && isnan(cell(&t, 1, 2)));
    assert_close(cell(&t, 2, 2), 4.0, 0, 0);
    el_table_free(&t);
}

/* CRLF line ends and a UTF-8 byte-order mark, read from a file path. */
static void test_file_crlf_bom(void **state)
{
    (void)state;
    char path[] = "/tmp/test_ingest_XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *fp = fdopen(fd, "wb");
    assert_non_null(fp);
    fputs("\xEF\xBB\xBFt [s];w\xC3\xA4rme [\xC2\xB0" "C]\r\n# c\r\n0;20.5\r\n\r\n1;21\r\n", fp);
    fclose(fp);
    el_table t = {0};
    el_error e;
    assert_int_equal(el_table_read(path, NULL, &t, &e), EL_OK);
    assert_string_equal(t.source, path);
    assert_string_equal(t.names[0], "t"); /* the mark is not part of the name */
    assert_string_equal(t.names[1], "w\xC3\xA4rme");
    assert_string_equal(t.units[1], "\xC2\xB0" "C");
    assert_int_equal(t.n_rows, 2);
    assert_int_equal(t.source_line[1], 5);
    assert_close(cell(&t, 1, 1), 21.0, 0, 0);
    el_table_free(&t);

    /* The same file as standard input through "-". */
    assert_non_null(freopen(path, "rb", stdin));
    assert_int_equal(el_table_read("-", NULL, &t, &e), EL_OK);
    assert_string_equal(t.source, "<stdin>");
    assert_int_equal(t.n_rows, 2);
    el_table_free(&t);
    remove(path);
}

/* A stream in memory, as a pipe into stdin would give it. */
static void test_stream_fmemopen(void **state)
{
    (void)state;
    char text[] = "t,x\n0,1\n1,2\n";
    FILE *fp = fmemopen(text, strlen(text), "r");
    assert_non_null(fp);
    el_table t = {0};
    el_error e;
    assert_int_equal(el_table_read_stream(fp, "<stdin>", NULL, &t, &e), EL_OK);
    fclose(fp);
    assert_string_equal(t.source, "<stdin>");
    assert_close(cell(&t, 1, 1), 2.0, 0, 0);
    el_table_free(&t);
}

/* Records far longer than the 64 KiB read chunk: a 1.5 MB comment, a
 * 1.2 MB header name in quotes holding a newline and a doubled quote,
 * and a cell padded with 1.1 MB of blanks. */
static void test_long_lines(void **state)
{
    (void)state;
    const size_t comment = 1500000, name = 1200000, pad = 1100000;
    size_t cap = comment + name + pad + 200, n = 0;
    char *text = malloc(cap);
    assert_non_null(text);
    text[n++] = '#';
    memset(text + n, 'c', comment);
    n += comment;
    n += (size_t)sprintf(text + n, "\nt,\"");
    memset(text + n, 'a', name);
    text[n + name / 2] = '\n';
    text[n + name / 3] = '"'; /* written twice: one quote in the name */
    text[n + name / 3 + 1] = '"';
    n += name;
    n += (size_t)sprintf(text + n, " [u]\"\n0,");
    memset(text + n, ' ', pad);
    n += pad;
    n += (size_t)sprintf(text + n, "7.25\n1,8\n");
    el_table t = {0};
    el_error e;
    assert_int_equal(read_bytes(text, n, NULL, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 2);
    assert_int_equal(strlen(t.names[1]), name - 1);
    assert_string_equal(t.units[1], "u");
    assert_int_equal(t.source_line[0], 4); /* comment, header over lines 2-3 */
    assert_int_equal(t.source_line[1], 5);
    assert_close(cell(&t, 0, 1), 7.25, 0, 0);
    el_table_free(&t);

    /* A long bad cell is quoted cut short in the message. */
    memset(text, 'x', pad);
    memcpy(text, "t,x\n0,", 6);
    text[pad] = '\0';
    assert_int_equal(read_text(text, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 3);
    assert_non_null(strstr(e.message, "..."));
    assert_true(strlen(e.message) < 200);
    free(text);
}

/* Many rows across several read chunks, with quoted numbers, compared
 * bitwise with strtod of the same text. Formats cover Clinger's fast path
 * (<= 15 digits) and the strtod fallback (17 digits, big exponents). */
static void test_numbers_match_strtod(void **state)
{
    (void)state;
    static const char *fixed[] = {
        "0",       "-0",        "+3",          ".5",        "5.",          "1e-5",
        "1E+5",    "-2.5e-3",   "0.1",         "0.30000000000000004",
        "1.7976931348623157e308", "4.9e-324",  "2.2250738585072014e-308",
        "123456789012345678901234567890",      "0.000000000000000000000000012345",
        "9007199254740993",       "9007199254740992", "1e22", "1e23", "1e-22",
        "1e-999",  "00012.50",  "-.75",
        /* Halfway cases (ties to even), 17+ digits, subnormals, 8-digit
         * runs (one SWAR step) and their neighbours (values from the
         * binary64 format, IEEE 754-2008, worked by hand: 1 + 2^-53 is
         * 1.00000000000000011102230246251565404236316680908203125). */
        "1.00000000000000011102230246251565404236316680908203125",
        "1.00000000000000011102230246251565404236316680908203126",
        "9007199254740995", "2.4703282292062327e-324", "2.4703282292062328e-324",
        "2.2250738585072011e-308", "123456789012345678", "1234567890123456789",
        "12345678901234567890", "12345678", "123456789", "1234567.8", "87654321.12345678",
        "0.00000001", "99999999999999999999e-20", "4.35679659e-320",
        "1e0400000000000000000000000000"};
    size_t nfixed = sizeof fixed / sizeof fixed[0] - 1; /* last is an overflow */
    const size_t nrand = 30000;
    size_t cap = 64 * (nfixed + nrand) + 64, n = 0;
    char *text = malloc(cap);
    char(*cells)[48] = malloc((nfixed + nrand) * sizeof *cells);
    assert_non_null(text);
    assert_non_null(cells);
    n += (size_t)sprintf(text + n, "t,x\n");
    uint64_t s = 88172645463325252u; /* xorshift64 (Marsaglia 2003) */
    for (size_t i = 0; i < nfixed + nrand; i++) {
        if (i < nfixed) {
            snprintf(cells[i], sizeof cells[i], "%s", fixed[i]);
        } else {
            s ^= s << 13;
            s ^= s >> 7;
            s ^= s << 17;
            double u = (double)(s >> 11) / 9007199254740992.0 - 0.5;
            double v = u * pow(10.0, (double)((int)(s % 41) - 20));
            switch (i % 5) {
            case 0: snprintf(cells[i], sizeof cells[i], "%.17g", v); break;
            case 1: snprintf(cells[i], sizeof cells[i], "%.6f", v); break;
            case 2: snprintf(cells[i], sizeof cells[i], "%.3e", v); break;
            case 3: snprintf(cells[i], sizeof cells[i], "%.15g", v); break;
            default: snprintf(cells[i], sizeof cells[i], "%.9g", v); break;
            }
        }
        const char *q = i % 7 == 0 ? "\"" : "";
        n += (size_t)sprintf(text + n, "%zu,%s%s%s\n", i, q, cells[i], q);
    }
    el_table t = {0};
    el_error e;
    assert_int_equal(read_bytes(text, n, NULL, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, nfixed + nrand);
    for (size_t i = 0; i < t.n_rows; i++) {
        double want = strtod(cells[i], NULL);
        double got = cell(&t, i, 1);
        if (memcmp(&got, &want, sizeof got) != 0)
            fail_msg("cell \"%s\": got %.17g, strtod %.17g", cells[i], got, want);
    }
    el_table_free(&t);
    free(cells);
    free(text);
    /* The last fixed entry overflows: refused as out of range. */
    char bad[128];
    snprintf(bad, sizeof bad, "t,x\n0,%s\n", fixed[nfixed]);
    assert_int_equal(read_text(bad, &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "out of range"));
}

static void test_time_column_by_name(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_bytes("x,t2,y\n1,-5,2\n,-4.5,3\n", 22, "t2", &t, &e), EL_OK);
    assert_int_equal(t.time_column, 1);
    assert_close(cell(&t, 1, 1), -4.5, 0, 0);
    assert_int_equal(t.missing[0], 1);
    el_table_free(&t);
}

/* Expected values from Python 3.11:
 *   d = datetime.fromisoformat(s)  (naive d gets tzinfo=timezone.utc)
 *   origin = math.floor(d0.timestamp())
 *   rel = (d - datetime(1970,1,1,tzinfo=timezone.utc)
 *          - timedelta(seconds=origin)) / timedelta(seconds=1)
 * which gave origin 1709144999 and the rel values below. */
static void test_iso_times(void **state)
{
    (void)state;
    const char *csv = "time,x\n"
                      "2024-02-28T23:59:59.125+05:30,1\n"
                      "2024-02-29T00:00:00.5+05:30,2\n"   /* leap day */
                      "2024-02-29T12:34:56.789-08:00,3\n"
                      "2024-03-01T00:00:00Z,4\n"
                      "2024-03-01 01:02:03.000001+0100,5\n"
                      "2024-03-01T02:00:00+01:00,6\n";
    static const double rel[] = {0.125, 1.5, 93897.789, 106201.0, 106324.000001, 109801.0};
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(csv, &t, &e), EL_OK);
    assert_int_equal(t.time_is_iso, 1);
    assert_int_equal(t.time_origin_unix_s, 1709144999);
    assert_int_equal(t.time_zone_minutes, 330);
    /* 1e-9 s: the inputs have microsecond resolution and the doubles near
     * 1e5 s have a spacing of 1.5e-11 s, so any conversion error shows. */
    assert_close_array(t.values, rel, 6, 0, 1e-9);
    el_table_free(&t);
}

/* Calendar edges: Python 3.11 int(datetime.fromisoformat(s).timestamp())
 * for each s below (all with Z), e.g. 2100 is not a leap year, 2000 is. */
static void test_iso_calendar(void **state)
{
    (void)state;
    const char *csv = "time,x\n"
                      "1970-01-01T00:00:00Z,0\n"
                      "1900-03-01T00:00:00Z,0\n"
                      "2000-02-29T00:00:00Z,0\n"
                      "2100-02-28T23:59:59Z,0\n"
                      "2100-03-01T00:00:00Z,0\n"
                      "1600-02-29T00:00:00Z,0\n"
                      "9999-12-31T23:59:59Z,0\n"
                      "0001-01-01T00:00:00Z,0\n"
                      "1969-12-31T23:59:59Z,0\n";
    static const double unix_s[] = {0.0, -2203891200.0, 951782400.0, 4107542399.0,
                                    4107542400.0, -11670998400.0, 253402300799.0,
                                    -62135596800.0, -1.0};
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(csv, &t, &e), EL_OK);
    assert_int_equal(t.time_origin_unix_s, 0);
    /* Whole seconds below 2^53: exact. */
    assert_close_array(t.values, unix_s, 9, 0, 0);
    el_table_free(&t);

    /* Before 1970 with a fraction: Python gives -0.5 for
     * 1969-12-31T23:59:59.5Z; the origin is the whole second below it. */
    assert_int_equal(read_text("time,x\n1969-12-31T23:59:59.5Z,1\n", &t, &e), EL_OK);
    assert_int_equal(t.time_origin_unix_s, -1);
    assert_close(cell(&t, 0, 0), 0.5, 0, 0);
    el_table_free(&t);
}

static void test_parse_time(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    double v;
    assert_int_equal(read_text("time,x\n2024-02-28T23:59:59.125+05:30,1\n"
                               "2024-02-29T00:00:01+05:30,2\n", &t, &e), EL_OK);
    assert_int_equal(el_table_parse_time(&t, " 12.5 ", &v, &e), EL_OK);
    assert_close(v, 12.5, 0, 0);
    /* 2024-02-29T00:00:00.125+05:30 written in UTC: 1 s after the origin
     * second plus 0.125 s; exact in binary, so tolerance 0. */
    assert_int_equal(el_table_parse_time(&t, "2024-02-28T18:30:00.125Z", &v, &e), EL_OK);
    assert_close(v, 1.125, 0, 0);
    /* No zone: read on the clock of the first row (+05:30). */
    assert_int_equal(el_table_parse_time(&t, "2024-02-29T00:00:00", &v, &e), EL_OK);
    assert_close(v, 1.0, 0, 0);
    /* A date alone is midnight in that zone: 24 h before the previous. */
    assert_int_equal(el_table_parse_time(&t, "2024-02-28", &v, &e), EL_OK);
    assert_close(v, 1.0 - 86400.0, 0, 0);
    el_error_clear(&e);
    assert_int_equal(el_table_parse_time(&t, "yesterday", &v, &e), EL_ERR_USAGE);
    assert_true(strlen(e.hint) > 0);
    assert_int_equal(el_table_parse_time(&t, "2024-02-30T00:00:00", &v, &e), EL_ERR_USAGE);
    assert_non_null(strstr(e.message, "day"));
    assert_int_equal(el_table_parse_time(&t, "inf", &v, &e), EL_ERR_USAGE);
    el_table_free(&t);

    assert_int_equal(read_text("t,x\n0,1\n", &t, &e), EL_OK);
    assert_int_equal(el_table_parse_time(&t, "-3e-3", &v, &e), EL_OK);
    assert_close(v, -3e-3, 0, 0);
    assert_int_equal(el_table_parse_time(&t, "2024-02-28T00:00:00", &v, &e), EL_ERR_USAGE);
    assert_non_null(strstr(e.hint, "not a date-time"));
    el_table_free(&t);
}

static void test_format_time(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    char buf[64];
    assert_int_equal(read_text("time,x\n2024-02-28T23:59:59.125+05:30,1\n", &t, &e), EL_OK);
    assert_string_equal(el_table_format_time(&t, 0.125, buf, sizeof buf),
                        "2024-02-28T23:59:59.125+05:30");
    /* 0.875 s later crosses into the leap day. */
    assert_string_equal(el_table_format_time(&t, 1.0, buf, sizeof buf),
                        "2024-02-29T00:00:00.000+05:30");
    assert_string_equal(el_table_format_time(&t, -0.5, buf, sizeof buf),
                        "2024-02-28T23:59:58.500+05:30");
    /* Milliseconds are rounded to nearest, not truncated. */
    assert_string_equal(el_table_format_time(&t, 0.1256, buf, sizeof buf),
                        "2024-02-28T23:59:59.126+05:30");
    assert_string_equal(el_table_format_time(&t, 0.9996, buf, sizeof buf),
                        "2024-02-29T00:00:00.000+05:30");
    assert_string_equal(el_table_format_time(&t, -0.0004, buf, sizeof buf),
                        "2024-02-28T23:59:59.000+05:30");
    /* Round trip through the parser (to the millisecond printed). */
    double v;
    el_table_format_time(&t, 93897.789, buf, sizeof buf);
    assert_int_equal(el_table_parse_time(&t, buf, &v, &e), EL_OK);
    assert_close(v, 93897.789, 0, 1e-9);
    el_table_free(&t);

    assert_int_equal(read_text("time,x\n1969-12-31T16:00:00-08:00,1\n", &t, &e), EL_OK);
    assert_string_equal(el_table_format_time(&t, 0.0, buf, sizeof buf),
                        "1969-12-31T16:00:00.000-08:00");
    el_table_free(&t);

    assert_int_equal(read_text("t,x\n0,1\n", &t, &e), EL_OK);
    assert_string_equal(el_table_format_time(&t, 0.1, buf, sizeof buf), "0.1");
    assert_string_equal(el_table_format_time(&t, 1234567.891, buf, sizeof buf), "1234567.89");
    el_table_free(&t);
}

/* Expected numbers from numpy 1.24 on the same text (saved as scan.csv):
 *   d = np.genfromtxt('scan.csv', delimiter=',', skip_header=1,
 *                     missing_values=['NA','NaN',''], filling_values=np.nan)
 *   s = np.diff(d[:,0]); m = np.median(s)
 *   jitter = np.max(np.abs(s - m)) / m; long = np.sum(s > 1.5*m)
 *   per column v = d[~np.isnan(d[:,c]), c]: len, min, mean, std(ddof=1), max */
static void test_scan(void **state)
{
    (void)state;
    const char *csv = "t [s],a [V],b\n"
                      "0.0,1.5,10\n0.1,NA,20\n0.2,2.5,\n0.35,-1.0,40\n0.45,3.25,50\n"
                      "0.55,0.5,NaN\n0.85,2.0,70\n0.95,,80\n1.05,4.75,-5\n";
    el_table t = {0};
    el_error e;
    el_scan s = {0};
    assert_int_equal(read_text(csv, &t, &e), EL_OK);
    assert_int_equal(el_scan_table(&t, &s, &e), EL_OK);
    /* 1e-12 relative: sums of a few doubles of unit size; numpy and this
     * code may add in a different order (rounding ~1e-16 per step). */
    const double rtol = 1e-12;
    assert_int_equal(s.n_rows, 9);
    assert_close(s.time_first, 0.0, 0, 0);
    assert_close(s.time_last, 1.05, 0, 0);
    assert_close(s.dt_median, 0.10000000000000003, rtol, 0);
    assert_close(s.dt_min, 0.09999999999999998, rtol, 0);
    assert_close(s.dt_max, 0.29999999999999993, rtol, 0);
    assert_close(s.jitter, 1.9999999999999984, rtol, 0);
    assert_int_equal(s.long_steps, 1);
    assert_int_equal(s.nonpositive_steps, 0);
    static const size_t present[] = {9, 7, 7};
    static const double lo[] = {0.0, -1.0, -5.0}, hi[] = {1.05, 4.75, 80.0};
    static const double mean[] = {0.5, 1.9285714285714286, 37.857142857142854};
    static const double std[] = {0.3799671038392666, 1.8636561608071072, 31.339158526400436};
    for (size_t c = 0; c < 3; c++) {
        assert_int_equal(s.columns[c].present, present[c]);
        assert_int_equal(s.columns[c].missing, 9 - present[c]);
        assert_close(s.columns[c].min, lo[c], 0, 0);
        assert_close(s.columns[c].max, hi[c], 0, 0);
        assert_close(s.columns[c].mean, mean[c], rtol, 0);
        assert_close(s.columns[c].std, std[c], rtol, 0);
    }
    el_scan_free(&s);
    el_scan_free(&s);
    el_scan_free(NULL);
    el_table_free(&t);

    /* Even number of steps with distinct middle pair (closed form): steps
     * 1, 2, 3, 4 -> median (2 + 3) / 2 = 2.5, jitter |1 - 2.5| / 2.5 = 0.6,
     * one step (4) above 1.5 * 2.5 = 3.75. Small integers and halves:
     * exact in binary, but the jitter divides: 1 ulp (rtol 1e-15). */
    assert_int_equal(read_text("t,x\n0,1\n1,1\n3,1\n6,1\n10,1\n", &t, &e), EL_OK);
    assert_int_equal(el_scan_table(&t, &s, &e), EL_OK);
    assert_close(s.dt_median, 2.5, 0, 0);
    assert_close(s.jitter, 0.6, 1e-15, 0);
    assert_int_equal(s.long_steps, 1);
    el_scan_free(&s);
    el_table_free(&t);

    /* All missing: zeros, no NaN; one value: std 0 (n-1 undefined). */
    assert_int_equal(read_text("t,a,b\n0,NA,5\n1,,NA\n", &t, &e), EL_OK);
    assert_int_equal(el_scan_table(&t, &s, &e), EL_OK);
    assert_int_equal(s.columns[1].present, 0);
    assert_true(s.columns[1].mean == 0.0 && s.columns[1].std == 0.0 &&
                s.columns[1].min == 0.0 && s.columns[1].max == 0.0);
    assert_close(s.columns[2].mean, 5.0, 0, 0);
    assert_close(s.columns[2].std, 0.0, 0, 0);
    el_scan_free(&s);
    el_table_free(&t);
}

static void test_scan_errors(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    el_scan s = {0};
    assert_int_equal(read_text("t,x\n0,1\n", &t, &e), EL_OK);
    assert_int_equal(el_scan_table(&t, &s, &e), EL_ERR_DATA);
    assert_true(strlen(e.hint) > 0);
    assert_null(s.columns);
    el_table_free(&t);
    /* Steps 0, 0, -1: median 0, the time does not increase. */
    assert_int_equal(read_text("t,x\n1,1\n1,1\n1,1\n0,1\n", &t, &e), EL_OK);
    assert_int_equal(el_scan_table(&t, &s, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 3);
    assert_true(strlen(e.hint) > 0);
    el_table_free(&t);
    /* Steps 0, 0, 1: repeats only (stamps coarser than the sampling may
     * cause them): the mean step stands for the interval, and the survey
     * (el_timebase_survey) decides whether assess takes the rows. */
    assert_int_equal(read_text("t,x\n0,1\n0,1\n0,1\n1,1\n", &t, &e), EL_OK);
    assert_int_equal(el_scan_table(&t, &s, &e), EL_OK);
    assert_true(s.dt_is_mean);
    assert_close(s.dt_median, 1.0 / 3.0, 1e-15, 0.0);
    el_scan_free(&s);
    el_table_free(&t);
    /* One step back among increasing ones is counted, not refused. */
    assert_int_equal(read_text("t,x\n0,1\n1,1\n0.5,1\n2,1\n3,1\n", &t, &e), EL_OK);
    assert_int_equal(el_scan_table(&t, &s, &e), EL_OK);
    assert_int_equal(s.nonpositive_steps, 1);
    el_scan_free(&s);
    el_table_free(&t);
}

/* ------------------------------------------------------------------ */
/* Errors                                                             */

static void test_error_missing_file(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(el_table_read("/nonexistent/dir/log.csv", NULL, &t, &e), EL_ERR_IO);
    assert_string_equal(e.file, "/nonexistent/dir/log.csv");
    assert_int_equal(e.line, 0);
    assert_non_null(strstr(e.hint, "path"));
    /* A folder opens but cannot be read. */
    assert_int_equal(el_table_read("/tmp", NULL, &t, &e), EL_ERR_IO);
    assert_true(strlen(e.hint) > 0);
}

static void test_error_empty_and_header_only(void **state)
{
    (void)state;
    expect_error("", EL_ERR_DATA, 1, 1);
    expect_error("# only\n# comments\n\n", EL_ERR_DATA, 4, 1);
    expect_error("\xEF\xBB\xBF", EL_ERR_DATA, 1, 1);
    expect_error("t,x\n", EL_ERR_DATA, 1, 1);
    expect_error("# c\nt,x\r\n# no data\r\n\r\n", EL_ERR_DATA, 2, 1);
    /* A first row of numbers is data, not a header. */
    expect_error("0,1\n1,2\n", EL_ERR_DATA, 1, 1);
}

static void test_error_ragged(void **state)
{
    (void)state;
    expect_error("t,x\n0,1\n1,1,5\n", EL_ERR_DATA, 3, 5);
    expect_error("t,x,y\n0,1\n", EL_ERR_DATA, 2, 4);
    /* A decimal comma in a comma file makes an extra field. */
    expect_error_hint("t,x\n0,1,5\n", 2, 5, "decimal comma");
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,x\n0,1,5\n", &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "3 fields, expected 2"));
}

static void test_error_names(void **state)
{
    (void)state;
    expect_error("t,x,x\n0,1,2\n", EL_ERR_DATA, 1, 5);
    expect_error("t, x [m] ,x\n0,1,2\n", EL_ERR_DATA, 1, 11);
    expect_error("t,,y\n0,1,2\n", EL_ERR_DATA, 1, 3);
    expect_error("t,x,\n0,1,\n", EL_ERR_DATA, 1, 5);
    /* Columns count characters, not bytes: "wärme [°C]" is 10 characters
     * (12 bytes), so the duplicate starts at character 14. */
    expect_error("t,w\xC3\xA4rme [\xC2\xB0" "C],w\xC3\xA4rme\n0,1,2\n", EL_ERR_DATA, 1, 14);
}

static void test_error_unknown_time_column(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_bytes("time,x\n0,1\n", 11, "Time", &t, &e), EL_ERR_USAGE);
    assert_string_equal(e.option, "--time");
    assert_string_equal(e.file, "test.csv");
    assert_int_equal(e.line, 1);
    assert_non_null(strstr(e.hint, "\"time\", \"x\""));
    assert_null(t.names);
}

static void test_error_binary(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_bytes("t,x\n0,\0\x01\x02", 9, NULL, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 3);
    assert_non_null(strstr(e.hint, "CSV text"));
    /* "t" in UTF-16LE with its byte-order mark. */
    assert_int_equal(read_bytes("\xFF\xFEt\0,\0x\0", 8, NULL, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 1);
    assert_int_equal(e.column, 4); /* FF FE are two (invalid) characters */
    assert_non_null(strstr(e.hint, "UTF-16"));
    expect_error("t,x\n0,1\x1b[0m\n", EL_ERR_DATA, 2, 4);
}

static void test_error_bad_cells(void **state)
{
    (void)state;
    expect_error_hint("t,x\n0,3.2x\n", 2, 3, "remove the text");
    expect_error_hint("t,x\n0,  abc\n", 2, 5, "NA");
    /* A decimal point after a decimal comma, and the reverse. */
    expect_error_hint("t;x\n0;1,5\n1;2.5\n", 3, 3, "decimal comma");
    expect_error_hint("t;x\n0;1.5\n1;2,5\n", 3, 3, "--decimal ,");
    expect_error_hint("t,x\n0,inf\n", 2, 3, "infinite");
    expect_error_hint("t,x\n0,-Infinity\n", 2, 3, "infinite");
    expect_error_hint("t,x\n0,1e999\n", 2, 3, "range");
    expect_error_hint("t,x\n0,0x1p3\n", 2, 3, "hexadecimal");
    expect_error_hint("t,x\n0,-nan\n", 2, 3, "NA");
    expect_error_hint("t,x\n0,N/A\n", 2, 3, "NA");
    expect_error_hint("t,x,y\n0,1,\"1.5\"x\n", 2, 10, "quote");
    /* A stray quote: at the end of the file, and with a later quote that
     * closes the quoted stretch the reader sees. */
    expect_error_hint("t,x\n0,1\"2\n", 2, 4, "quote");
    expect_error_hint("t,x\n0,1\"2\n3,4\n5,\"6\n", 2, 4, "quote");
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,x\n0,1\"2\n", &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "unquoted field"));
    /* The message quotes the cell. */
    assert_int_equal(read_text("t,speed\n0,12 km/h\n", &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "\"12 km/h\""));
    assert_non_null(strstr(e.message, "speed"));
    assert_non_null(strstr(e.message, "not a number"));
    /* After a quoted field holding a newline, locations count from that
     * newline: the empty name starts on line 2, character 4. */
    expect_error("t,\"x\ny\",,z\n0,1,2,3\n", EL_ERR_DATA, 2, 4);
}

static void test_error_time_cells(void **state)
{
    (void)state;
    expect_error_hint("t,x\n,1\n", 2, 1, "time");
    expect_error_hint("t,x\n0,1\n  NA  ,1\n", 3, 3, "time");
    /* Mixed kinds, decided by the first row. */
    expect_error_hint("t,x\n0,1\n2024-01-01T00:00:00,1\n", 3, 1, "first row");
    expect_error_hint("t,x\n2024-01-01T00:00:00,1\n5,1\n", 3, 1, "first row");
    expect_error_hint("t,x\nnoon,1\n", 2, 1, "ISO 8601");
    /* Calendar and clock ranges. */
    static const char *bad[] = {
        "2023-02-29T00:00:00", "2100-02-29T00:00:00", "2024-04-31T00:00:00",
        "2024-13-01T00:00:00", "2024-00-10T00:00:00", "2024-01-01T24:00:00",
        "2024-01-01T00:60:00", "2024-01-01T00:00:61", "2024-01-01T00:00:00+24:00",
        "2024-01-01T00:00:00.Z", "2024-01-01T00:00:00 UTC", "2024-1-01T00:00:00"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        char csv[128];
        snprintf(csv, sizeof csv, "t,x\n2024-01-01T00:00:00Z,1\n %s,2\n", bad[i]);
        expect_error(csv, EL_ERR_DATA, 3, 2);
    }
    /* Second 60 is a leap second: accepted, equal to the next minute. */
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,x\n2016-12-31T23:59:59Z,1\n2016-12-31T23:59:60Z,2\n"
                               "2017-01-01T00:00:00Z,3\n", &t, &e), EL_OK);
    assert_close(cell(&t, 1, 0), 1.0, 0, 0);
    assert_close(cell(&t, 2, 0), 1.0, 0, 0);
    el_table_free(&t);
}

static void test_error_unterminated_quote(void **state)
{
    (void)state;
    expect_error("t,x\n0,\"1\n2,3\n", EL_ERR_DATA, 2, 3);
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,x\n0, \"1\n2,3\n", &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "not closed"));
    assert_int_equal(e.column, 4);
    /* The opening quote is found past an escaped pair. */
    expect_error("t,\"a\"\"b\n0,1\n", EL_ERR_DATA, 1, 3);
}


/* ------------------------------------------------------------------ */
/* Time units, exports (issue 9)                                      */

/* Reads text with ingest options. */
static el_status read_with(const char *text, const el_ingest_options *opt, el_table *t,
                           el_error *e)
{
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_int_equal(fwrite(text, 1, strlen(text), fp), strlen(text));
    rewind(fp);
    el_status st = el_table_read_stream(fp, "test.csv", opt, t, e);
    fclose(fp);
    return st;
}

static int has_note(const el_table *t, const char *word)
{
    for (size_t i = 0; i < t->notes.count; i++)
        if (strstr(t->notes.items[i], word) != NULL)
            return 1;
    return 0;
}

/* The seconds per unit are definitions (SI brochure, 9th ed.: min, h, d
 * accepted for use with the SI; the Julian year 365.25 d is the IAU's),
 * so the comparisons are exact. */
static void test_time_unit_words(void **state)
{
    (void)state;
    static const struct {
        const char *text;
        const char *name;
        double scale;
    } cases[] = {
        {"s", "s", 1.0},         {"sec", "s", 1.0},        {"Seconds", "s", 1.0},
        {"ms", "ms", 1e-3},      {"msec", "ms", 1e-3},     {"milliseconds", "ms", 1e-3},
        {"us", "us", 1e-6},      {"\xc2\xb5s", "us", 1e-6}, {"\xce\xbcs", "us", 1e-6},
        {"ns", "ns", 1e-9},      {"min", "min", 60.0},     {"minutes", "min", 60.0},
        {"h", "h", 3600.0},      {"hours", "h", 3600.0},   {"hr", "h", 3600.0},
        {"d", "d", 86400.0},     {"days", "d", 86400.0},   {" day ", "d", 86400.0},
        {"year", "year", 31557600.0}, {"years", "year", 31557600.0}, {"yr", "year", 31557600.0},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        double scale = 0.0;
        const char *name = NULL;
        if (!el_time_unit_parse(cases[i].text, &scale, &name))
            fail_msg("\"%s\" not read as a unit of time", cases[i].text);
        assert_string_equal(name, cases[i].name);
        assert_close(scale, cases[i].scale, 0, 0);
    }
    double scale = 7.0;
    const char *name = "x";
    assert_false(el_time_unit_parse("samples", &scale, &name));
    assert_false(el_time_unit_parse("m", &scale, &name)); /* metres or months: never */
    assert_false(el_time_unit_parse("", &scale, &name));
    assert_false(el_time_unit_parse(NULL, &scale, &name));
    assert_close(scale, 7.0, 0, 0);
}

/* Every way a header gives the unit converts the times to seconds: 1500
 * ms is 1.5 s exactly enough (1500 * 1e-3 rounds once: 1e-15 relative). */
static void test_time_unit_from_header(void **state)
{
    (void)state;
    static const struct {
        const char *header;
        double second_row_s;   /* the row "1500,2" in seconds */
        const char *unit;
        const char *source;
    } cases[] = {
        {"time [ms],x", 1.5, "ms", "header"},
        {"t (ms),x", 1.5, "ms", "header"},
        {"t/ms,x", 1.5, "ms", "header"},
        {"time_ms,x", 1.5, "ms", "column name"},
        {"t_s,x", 1500.0, "s", "column name"},
        {"[ms],x", 1.5, "ms", "header"},
        {"ms,x", 1.5, "ms", "column name"},
        {"time [\xc2\xb5s],x", 1500e-6, "us", "header"},
        {"t [min],x", 90000.0, "min", "header"},
        {"hours,x", 1500.0 * 3600.0, "h", "column name"},
        {"year,x", 1500.0 * 31557600.0, "year", "column name"},
        {"t,x", 1500.0, "s", "assumed"},
        {"time (run 2),x", 1500.0, "s", "assumed"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char text[200];
        snprintf(text, sizeof text, "%s\n0,1\n1500,2\n", cases[i].header);
        el_table t = {0};
        el_error e;
        if (read_with(text, NULL, &t, &e) != EL_OK)
            fail_msg("%s: %s", cases[i].header, e.message);
        assert_close(cell(&t, 1, 0), cases[i].second_row_s, 1e-15, 0);
        assert_string_equal(t.time_unit, cases[i].unit);
        assert_string_equal(t.time_unit_source, cases[i].source);
        assert_string_equal(t.units[0], "s");
        assert_int_equal(has_note(&t, "taken as seconds"),
                         strcmp(cases[i].source, "assumed") == 0);
        el_table_free(&t);
    }
    /* --time-unit overrides the header. */
    el_ingest_options opt = {.time_unit = "min"};
    el_table t = {0};
    el_error e;
    assert_int_equal(read_with("time [ms],x\n0,1\n2,2\n", &opt, &t, &e), EL_OK);
    assert_close(cell(&t, 1, 0), 120.0, 0, 0);
    assert_string_equal(t.time_unit_source, "--time-unit");
    /* Times typed on the command line are in the log's unit; times shown
     * are written back in it. */
    el_table_free(&t);
    assert_int_equal(read_with("time [ms],x\n0,1\n2,2\n", NULL, &t, &e), EL_OK);
    double s = 0;
    assert_int_equal(el_table_parse_time(&t, "1500", &s, &e), EL_OK);
    assert_close(s, 1.5, 1e-15, 0);
    char buf[64];
    assert_string_equal(el_table_format_time(&t, 1.5, buf, sizeof buf), "1500");
    el_table_free(&t);
    /* A unit that is not one of time: refused at the header cell. */
    assert_int_equal(read_with("x,time [samples]\n1,0\n", &(el_ingest_options){.time_column = "time"}, &t, &e),
                     EL_ERR_DATA);
    assert_int_equal(e.line, 1);
    assert_int_equal(e.column, 3);
    assert_non_null(strstr(e.hint, "--time-unit"));
    opt.time_unit = "fortnight";
    assert_int_equal(read_with("t,x\n0,1\n", &opt, &t, &e), EL_ERR_USAGE);
    assert_string_equal(e.option, "--time-unit");
    /* A unit on ISO date-times is not used: they are seconds already. */
    assert_int_equal(read_with("time [UTC],x\n2026-01-01T00:00:00Z,1\n2026-01-01T00:00:02Z,2\n",
                               NULL, &t, &e), EL_OK);
    assert_close(cell(&t, 1, 0), 2.0, 0, 0);
    assert_string_equal(t.time_unit_source, "iso8601");
    el_table_free(&t);
}

/* ISO 8601 without zone is local time of an unknown zone: never shown as
 * UTC (+00:00), a note says so, and zoned and unzoned rows do not mix. */
static void test_iso_without_zone(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("time,x\n2026-03-14T08:00:00,1\n2026-03-14T08:00:00.5,2\n", &t,
                               &e), EL_OK);
    assert_false(t.time_zone_known);
    char buf[64];
    assert_string_equal(el_table_format_time(&t, 0.25, buf, sizeof buf),
                        "2026-03-14T08:00:00.250");
    assert_true(has_note(&t, "unknown zone"));
    double s;
    assert_int_equal(el_table_parse_time(&t, "2026-03-14T08:00:00.5", &s, &e), EL_OK);
    assert_close(s, 0.5, 0, 0);
    assert_int_equal(el_table_parse_time(&t, "2026-03-14T08:00:00Z", &s, &e), EL_ERR_USAGE);
    el_table_free(&t);
    assert_int_equal(read_text("time,x\n2026-03-14T08:00:00Z,1\n", &t, &e), EL_OK);
    assert_string_equal(el_table_format_time(&t, 0.0, buf, sizeof buf),
                        "2026-03-14T08:00:00.000+00:00");
    assert_false(has_note(&t, "unknown zone"));
    el_table_free(&t);
    expect_error_hint("time,x\n2026-03-14T08:00:00Z,1\n2026-03-14T08:00:01,1\n", 3, 1, "alike");
    expect_error_hint("time,x\n2026-03-14T08:00:00,1\n2026-03-14T08:00:01+01:00,1\n", 3, 1,
                      "alike");
}

/* Text columns nobody asked for are skipped with one note; asked-for text
 * is an error at the cell; a channel that began with numbers keeps the
 * error (a typo must never drop a channel silently). */
static void test_text_columns(void **state)
{
    (void)state;
    const char *csv = "t,a,status,b,alarm\n"
                      "0,1,OK,2,\n"
                      "1,2,OK,3,low oil\n"
                      "2,3,TRIP,4,\n";
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(csv, &t, &e), EL_OK);
    assert_int_equal(t.n_columns, 3);
    assert_string_equal(t.names[1], "a");
    assert_string_equal(t.names[2], "b");
    assert_close(cell(&t, 2, 2), 4.0, 0, 0);
    assert_int_equal(t.notes.count, 2); /* the skip, and seconds assumed */
    assert_true(has_note(&t, "\"status\" (text from line 2)"));
    assert_true(has_note(&t, "\"alarm\" (text from line 3)"));
    el_table_free(&t);
    /* Asked for with --channels: the cell is the error. */
    el_ingest_options opt = {.channels = "a,status"};
    assert_int_equal(read_with(csv, &opt, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 2);
    assert_int_equal(e.column, 5);
    /* Asked for as an input: likewise. */
    opt = (el_ingest_options){.inputs = "alarm"};
    assert_int_equal(read_with(csv, &opt, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 3);
    /* A number column with a bad cell later stays an error by default... */
    const char *typo = "t,a,b\n0,1,2\n1,2,3x\n";
    assert_int_equal(read_with(typo, NULL, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 3);
    /* ...and is skipped when --channels leaves it out. */
    opt = (el_ingest_options){.channels = "a"};
    assert_int_equal(read_with(typo, &opt, &t, &e), EL_OK);
    assert_int_equal(t.n_columns, 2);
    el_table_free(&t);
    /* Nothing but text beside the time: the first text cell is the error. */
    expect_error_hint("t,x\n0,ok\n", 2, 3, "NA");
}

/* Semicolons with decimal commas (European exports), detected or forced. */
static void test_decimal_comma(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t [s];p [bar];q\n0;1,5;7\n0,5;-2,25;1e-3\n", &t, &e), EL_OK);
    assert_int_equal(t.decimal, ',');
    assert_close(cell(&t, 1, 0), 0.5, 0, 0);
    assert_close(cell(&t, 0, 1), 1.5, 0, 0);
    assert_close(cell(&t, 1, 1), -2.25, 0, 0);
    assert_close(cell(&t, 1, 2), 1e-3, 0, 0);
    el_table_free(&t);
    /* Long significands take the strtod path: still the correctly rounded
     * value of the text with a point (glibc strtod gives the reference). */
    assert_int_equal(read_text("t;x\n0;0,1000000000000000055511151231257827\n1;2\n", &t, &e),
                     EL_OK);
    assert_close(cell(&t, 0, 1), strtod("0.1000000000000000055511151231257827", NULL), 0, 0);
    el_table_free(&t);
    /* ISO 8601 allows a comma before the seconds' fraction. */
    assert_int_equal(read_text("time;x\n2026-01-01T00:00:00,000Z;1\n2026-01-01T00:00:00,250Z;2\n",
                               &t, &e), EL_OK);
    assert_close(cell(&t, 1, 0), 0.25, 0, 0);
    el_table_free(&t);
    /* A header cell that reads as a number does not decide the separator. */
    assert_int_equal(read_text("t;0,5\n0;1.5\n", &t, &e), EL_OK);
    assert_close(cell(&t, 0, 1), 1.5, 0, 0);
    el_table_free(&t);
    /* Forced: --decimal , in a tab file; --decimal . refuses a comma. */
    el_ingest_options opt = {.decimal = ','};
    assert_int_equal(read_with("t\tx\n0\t3,5\n", &opt, &t, &e), EL_OK);
    assert_close(cell(&t, 0, 1), 3.5, 0, 0);
    el_table_free(&t);
    opt.decimal = '.';
    assert_int_equal(read_with("t;x\n0;3,5\n", &opt, &t, &e), EL_ERR_DATA);
    /* Forced comma with a comma delimiter reads quoted cells. */
    opt.decimal = ',';
    assert_int_equal(read_with("t,x\n0,\"3,5\"\n", &opt, &t, &e), EL_OK);
    assert_close(cell(&t, 0, 1), 3.5, 0, 0);
    el_table_free(&t);
}

/* Old Mac exports end lines with a lone CR. */
static void test_cr_only_lines(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,x\r# note\r0,1.5\r1,2.5\r", &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 2);
    assert_int_equal(t.source_line[0], 3);
    assert_close(cell(&t, 1, 1), 2.5, 0, 0);
    el_table_free(&t);
    /* A CR-only file's errors are located on the right line. */
    expect_error("t,x\r0,1\r1,zz\r", EL_ERR_DATA, 3, 3);
}

/* Writes len bytes gzip-compressed (zlib's gzip writer, independent of
 * the reader's inflate loop) as `members` gzip members one after another. */
static void write_gz(const char *path, const char *text, size_t members)
{
    FILE *fp = fopen(path, "wb");
    assert_non_null(fp);
    fclose(fp);
    size_t n = strlen(text), per = n / members;
    for (size_t m = 0; m < members; m++) {
        gzFile gz = gzopen(path, "ab");
        assert_non_null(gz);
        size_t len = m + 1 == members ? n - m * per : per;
        assert_int_equal(gzwrite(gz, text + m * per, (unsigned)len), (int)len);
        assert_int_equal(gzclose(gz), Z_OK);
    }
}

static void test_gzip(void **state)
{
    (void)state;
    /* Larger than a read chunk, so inflate runs across refills. */
    size_t rows = 20000;
    char *text = malloc(rows * 40 + 64);
    assert_non_null(text);
    size_t w = (size_t)sprintf(text, "t [ms],x\n");
    for (size_t r = 0; r < rows; r++)
        w += (size_t)sprintf(text + w, "%zu,%.6f\n", 10 * r, sin(0.01 * (double)r));
    char path[] = "/tmp/eigenlog_gzXXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    close(fd);
    el_table plain = {0}, t = {0};
    el_error e;
    assert_int_equal(read_text(text, &plain, &e), EL_OK);
    for (size_t members = 1; members <= 3; members += 2) {
        write_gz(path, text, members);
        assert_int_equal(el_table_read(path, NULL, &t, &e), EL_OK);
        assert_int_equal(t.n_rows, rows);
        assert_memory_equal(t.values, plain.values, rows * 2 * sizeof(double));
        assert_int_equal(t.source_line[rows - 1], plain.source_line[rows - 1]);
        el_table_free(&t);
    }
    /* Cut short, and corrupted. */
    FILE *fp = fopen(path, "rb");
    char *gz = malloc(rows * 40);
    size_t n = fread(gz, 1, rows * 40, fp);
    fclose(fp);
    fp = fopen(path, "wb");
    fwrite(gz, 1, n / 2, fp);
    fclose(fp);
    assert_int_equal(el_table_read(path, NULL, &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "gzip"));
    assert_true(strlen(e.hint) > 0);
    gz[n / 3] ^= 0x55;
    gz[n / 3 + 1] ^= 0x55;
    fp = fopen(path, "wb");
    fwrite(gz, 1, n, fp);
    fclose(fp);
    assert_int_equal(el_table_read(path, NULL, &t, &e), EL_ERR_DATA);
    remove(path);
    free(gz);
    free(text);
    el_table_free(&plain);
}

static void write_file(const char *path, const char *text)
{
    FILE *fp = fopen(path, "wb");
    assert_non_null(fp);
    fputs(text, fp);
    fclose(fp);
}

/* Daily files as one log: ordered by their first time, rows joined, each
 * row knows its file; different columns are refused naming the file. */
static void test_several_files(void **state)
{
    (void)state;
    const char *a = "/tmp/eigenlog_day1.csv", *b = "/tmp/eigenlog_day2.csv",
               *c = "/tmp/eigenlog_day3.csv";
    write_file(a, "time,x,status\n2026-01-01T23:59:58Z,1,ok\n2026-01-01T23:59:59Z,2,ok\n");
    write_file(b, "time,x,status\n2026-01-02T00:00:00Z,3,\n2026-01-02T00:00:01Z,4,\n");
    const char *paths[] = {b, a};
    el_table t = {0};
    el_error e;
    assert_int_equal(el_table_read_files(paths, 2, NULL, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 4);
    assert_int_equal(t.n_columns, 2); /* status is text in one file: skipped in all */
    static const double want_t[] = {0, 1, 2, 3}, want_x[] = {1, 2, 3, 4};
    assert_close_array(t.values, want_t, 4, 0, 0);
    assert_close_array(t.values + 4, want_x, 4, 0, 0);
    assert_string_equal(el_table_row_source(&t, 0), a);
    assert_string_equal(el_table_row_source(&t, 2), b);
    assert_int_equal(t.source_line[2], 2);
    assert_non_null(strstr(t.source, "(+1 file)"));
    el_table_free(&t);
    write_file(c, "time,y,status\n2026-01-03T00:00:00Z,3,\n");
    const char *bad[] = {a, c};
    assert_int_equal(el_table_read_files(bad, 2, NULL, &t, &e), EL_ERR_DATA);
    assert_string_equal(e.file, c);
    assert_int_equal(e.line, 1);
    assert_int_equal(e.column, 2);
    assert_non_null(strstr(e.message, "\"y"));
    remove(a);
    remove(b);
    remove(c);
}

/* The duplicate-name check sorts (n log n): on 100,000 columns it must
 * still name the right pair (the earliest column that repeats a name, and
 * the first holder of that name). */
static void test_many_columns(void **state)
{
    (void)state;
    size_t n = 100000;
    char *text = malloc(n * 12 + 64);
    assert_non_null(text);
    size_t w = (size_t)sprintf(text, "t");
    for (size_t c = 1; c < n; c++)
        w += (size_t)sprintf(text + w, ",c%zu", c);
    text[w++] = '\n';
    for (size_t c = 0; c < n; c++)
        text[w++] = '1', text[w++] = c + 1 < n ? ',' : '\n';
    text[w] = '\0';
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text(text, &t, &e), EL_OK);
    assert_int_equal(t.n_columns, n);
    el_table_free(&t);
    /* Names c70000 and (later) c5 repeated: c5 at column 90001 repeats
     * column 6; c70000 at column 95001 repeats 70001. The earlier repeat
     * (column 90001) is reported. */
    char *p = strstr(text, ",c90000,");
    memcpy(p, ",c5    ", 7); /* keep the length: pad with blanks, which are trimmed */
    p = strstr(text, ",c95000,");
    memcpy(p, ",c70000", 7);
    assert_int_equal(read_text(text, &t, &e), EL_ERR_DATA);
    assert_non_null(strstr(e.message, "\"c5\""));
    assert_int_equal(e.line, 1);
    /* Column 90001 starts at character 1 + 1 + sum of the name lengths
     * before it plus commas: count it from the text itself. */
    long want = (long)(strstr(text, ",c5 ") - text) + 2;
    assert_int_equal(e.column, want);
    assert_non_null(strstr(e.hint, "column 6 "));
    free(text);
}

/* Scan: steps back and repeated are counted; the spread of a channel that
 * varies at 1e-170 is its true spread (closed form: values +-a about 0
 * have sample std a sqrt(n / (n - 1))), so it is not called constant. */
static void test_scan_counts_and_tiny_spread(void **state)
{
    (void)state;
    el_table t = {0};
    el_error e;
    assert_int_equal(read_text("t,x,y,z\n0,1e-170,5,1\n1,-1e-170,5,1\n3,1e-170,5,1\n"
                               "2,-1e-170,5,1.000000000000000001\n2,1e-170,5,1\n",
                               &t, &e), EL_OK);
    el_scan s = {0};
    assert_int_equal(el_scan_table(&t, &s, &e), EL_OK);
    assert_int_equal(s.backward_steps, 1);
    assert_int_equal(s.repeated_steps, 1);
    assert_int_equal(s.nonpositive_steps, 2);
    /* 5 values, mean 1e-170/5: computed with the same two-pass formula in
     * long double as the reference, to 1e-12 (a few roundings). */
    long double m = 1e-170L / 5, ss = 0;
    for (int k = 0; k < 5; k++) {
        long double d = (k % 2 ? -1e-170L : 1e-170L) - m;
        ss += d * d;
    }
    assert_close(s.columns[1].std, (double)sqrtl(ss / 4), 1e-12, 0);
    assert_false(s.columns[1].constant);
    assert_true(s.columns[2].constant);
    /* 1.000000000000000001 is the double 1: truly constant. */
    assert_true(s.columns[3].constant);
    el_scan_free(&s);
    el_table_free(&t);
}

/* ------------------------------------------------------------------ */
/* The fused fast path, the mapped file and the threads               */

/* xorshift64 (Marsaglia 2003): test data that is the same on every run. */
static uint64_t next_random(uint64_t *s)
{
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return *s;
}

/* One number cell in one of several formats (digits 1..19, exponents,
 * signs, leading zeros), as loggers and printf write them. */
static int write_number(char *out, size_t size, uint64_t *seed)
{
    uint64_t r = next_random(seed);
    double u = (double)(r >> 11) / 9007199254740992.0 - 0.5;
    double v = u * pow(10.0, (double)((int)(r % 13) - 6));
    switch (r % 7) {
    case 0: return snprintf(out, size, "%.17g", v);
    case 1: return snprintf(out, size, "%.6f", v);
    case 2: return snprintf(out, size, "%.3e", v);
    case 3: return snprintf(out, size, "%lld", (long long)(v * 1e6));
    case 4: return snprintf(out, size, "%+.9g", v);
    case 5: return snprintf(out, size, "%08.3f", fabs(v));
    default: return snprintf(out, size, "%.4f", 10.0 + v);
    }
}

static void assert_same_table(const el_table *a, const el_table *b)
{
    assert_int_equal(a->n_rows, b->n_rows);
    assert_int_equal(a->n_columns, b->n_columns);
    assert_int_equal(a->time_column, b->time_column);
    assert_int_equal(a->decimal, b->decimal);
    assert_memory_equal(a->values, b->values, a->n_rows * a->n_columns * sizeof(double));
    assert_memory_equal(a->source_line, b->source_line, a->n_rows * sizeof(long));
    assert_memory_equal(a->missing, b->missing, a->n_columns * sizeof(size_t));
    for (size_t c = 0; c < a->n_columns; c++)
        assert_string_equal(a->names[c], b->names[c]);
    assert_int_equal(a->notes.count, b->notes.count);
}

/* Rows of plain numbers go through the fused one-pass reader; the same
 * numbers with a blank after each cell go through the general reader
 * (split, trim, parse). Both must equal strtod of each cell bit for bit,
 * for LF and CRLF line ends, read from a mapped file and from a stream
 * (fmemopen: 64 KiB chunks, rows cut at chunk ends). */
static void test_fast_path_matches_general_reader(void **state)
{
    (void)state;
    const size_t rows = 20000, cols = 4;
    size_t cap = rows * cols * 40 + 64;
    char *plain = malloc(cap), *blank = malloc(cap), *crlf = malloc(cap);
    double *want = malloc(rows * cols * sizeof *want);
    assert_true(plain && blank && crlf && want);
    size_t np = (size_t)sprintf(plain, "t,a,b,c\n"), nb = (size_t)sprintf(blank, "t,a,b,c\n");
    size_t nc = (size_t)sprintf(crlf, "t,a,b,c\r\n");
    uint64_t seed = 0x9E3779B97F4A7C15u;
    for (size_t r = 0; r < rows; r++)
        for (size_t c = 0; c < cols; c++) {
            char cell[64];
            if (c == 0)
                snprintf(cell, sizeof cell, "%zu.%03zu", r / 1000, r % 1000);
            else
                write_number(cell, sizeof cell, &seed);
            want[c * rows + r] = strtod(cell, NULL);
            const char *end = c + 1 < cols ? "," : "\n";
            np += (size_t)sprintf(plain + np, "%s%s", cell, end);
            nb += (size_t)sprintf(blank + nb, "%s %s", cell, end);
            nc += (size_t)sprintf(crlf + nc, "%s%s", cell, c + 1 < cols ? "," : "\r\n");
        }
    el_table a = {0}, b = {0}, c = {0}, d = {0};
    el_error e;
    assert_int_equal(read_bytes(plain, np, NULL, &a, &e), EL_OK);
    assert_int_equal(read_bytes(blank, nb, NULL, &b, &e), EL_OK);
    assert_int_equal(read_bytes(crlf, nc, NULL, &c, &e), EL_OK);
    FILE *fp = fmemopen(plain, np, "r");
    assert_non_null(fp);
    assert_int_equal(el_table_read_stream(fp, "test.csv", NULL, &d, &e), EL_OK);
    fclose(fp);
    assert_int_equal(a.n_rows, rows);
    for (size_t i = 0; i < rows * cols; i++)
        if (memcmp(&a.values[i], &want[i], sizeof want[i]) != 0)
            fail_msg("row %zu column %zu: got %.17g, strtod %.17g", i % rows, i / rows,
                     a.values[i], want[i]);
    assert_same_table(&a, &b);
    assert_same_table(&a, &c);
    assert_same_table(&a, &d);
    el_table_free(&a);
    el_table_free(&b);
    el_table_free(&c);
    el_table_free(&d);
    free(plain);
    free(blank);
    free(crlf);
    free(want);
}

/* A stream is left at the end of what was read, mapped or not (callers
 * may read on from there), and a stream not at its start is not mapped:
 * reading goes on from where it stands. */
static void test_stream_left_at_end(void **state)
{
    (void)state;
    const char *text = "t,x\n0,1\n1,2\n2,4\n";
    const char *second = "x,y\n0,1\n1,2\n";
    FILE *fp = tmpfile();
    assert_non_null(fp);
    assert_true(fputs(text, fp) >= 0 && fputs(second, fp) >= 0);
    long total = (long)(strlen(text) + strlen(second));
    rewind(fp);
    el_table t = {0};
    el_error e;
    /* From the start: "x,y" is a row whose time cell is not a number. */
    assert_int_equal(el_table_read_stream(fp, "test.csv", NULL, &t, &e), EL_ERR_DATA);
    assert_int_equal(e.line, 5);
    /* From the second log's first byte: its own header, two rows. */
    assert_int_equal(fseek(fp, (long)strlen(text), SEEK_SET), 0);
    assert_int_equal(el_table_read_stream(fp, "test.csv", NULL, &t, &e), EL_OK);
    assert_string_equal(t.names[0], "x");
    assert_int_equal(t.n_rows, 2);
    assert_int_equal(ftell(fp), total);
    el_table_free(&t);
    fclose(fp);
    /* Mapped (a regular file at its start): left at the end as well. */
    fp = tmpfile();
    assert_non_null(fp);
    assert_true(fputs(text, fp) >= 0);
    rewind(fp);
    assert_int_equal(el_table_read_stream(fp, "test.csv", NULL, &t, &e), EL_OK);
    assert_int_equal(t.n_rows, 3);
    assert_int_equal(ftell(fp), (long)strlen(text));
    el_table_free(&t);
    fclose(fp);
}

/* Writes text to a temporary file and returns its path (caller unlinks). */
static char *temp_file(const char *text, size_t n)
{
    char *path = malloc(64);
    assert_non_null(path);
    snprintf(path, 64, "/tmp/test_ingest_XXXXXX");
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    assert_int_equal(write(fd, text, n), (ssize_t)n);
    close(fd);
    return path;
}

/* Reads path with 1, 2, 3, 4, 5 and 8 threads: the tables must be
 * identical (values bit for bit, source lines, missing counts, notes),
 * and equal to the table read from a stream. */
static void assert_same_for_thread_counts(const char *text, size_t n, el_status expect)
{
    char *path = temp_file(text, n);
    el_table one = {0};
    el_error e1, e;
    el_status st1 = el_table_read_threads(path, NULL, 1, &one, &e1);
    if (st1 != expect) {
        char buf[1200];
        print_error("%s\n", el_error_format(&e1, buf, sizeof buf));
    }
    assert_int_equal(st1, expect);
    static const size_t counts[] = {2, 3, 4, 5, 8};
    for (size_t i = 0; i < sizeof counts / sizeof counts[0]; i++) {
        el_table t = {0};
        el_status st = el_table_read_threads(path, NULL, counts[i], &t, &e);
        assert_int_equal(st, st1);
        if (st == EL_OK) {
            assert_same_table(&one, &t);
        } else {
            assert_string_equal(e.message, e1.message);
            assert_int_equal(e.line, e1.line);
            assert_int_equal(e.column, e1.column);
        }
        el_table_free(&t);
    }
    FILE *fp = fmemopen((void *)text, n, "r");
    assert_non_null(fp);
    el_table s = {0};
    assert_int_equal(el_table_read_stream(fp, path, NULL, &s, &e), st1);
    fclose(fp);
    if (st1 == EL_OK)
        assert_same_table(&one, &s);
    el_table_free(&s);
    el_table_free(&one);
    unlink(path);
    free(path);
}

/* A log of several MiB (so that it is cut into parts of >= 1 MiB) read
 * with several thread counts: plain rows; with comments, blank lines and
 * NA cells sprinkled in (parts stop there and the reader goes on); with a
 * quoted cell holding line ends (a part may start inside it: an error
 * there, the same whatever the count); with a column missing in the first
 * half (the fast path and the parts start only once it holds numbers);
 * with a bad cell near the end (the same error whatever the count). */
static void test_threads_same_table(void **state)
{
    (void)state;
    const size_t rows = 90000;
    size_t cap = rows * 80 + 256;
    char *text = malloc(cap);
    assert_non_null(text);
    for (int variant = 0; variant < 5; variant++) {
        uint64_t seed = 12345u + (uint64_t)variant;
        size_t w = (size_t)sprintf(text, "t [s],a,b,c,d,note\n");
        for (size_t r = 0; r < rows; r++) {
            uint64_t x = next_random(&seed);
            if (variant == 1 && x % 997 == 0)
                w += (size_t)sprintf(text + w, x % 2 ? "# comment, with 1,2,3\n" : "\n");
            w += (size_t)sprintf(text + w, "%zu.%03zu", r / 1000, r % 1000);
            for (int c = 0; c < 4; c++) {
                text[w++] = ',';
                if (variant == 1 && (x >> (8 * c)) % 1009 == 0)
                    w += (size_t)sprintf(text + w, "NA");
                else
                    w += (size_t)write_number(text + w, 64, &seed);
            }
            text[w++] = ',';
            if (variant == 2 && r % 20011 == 7)
                w += (size_t)sprintf(text + w, "\"1,2\n3,4,5,6,7,8\n9\"");
            else if (variant == 3 && r < rows / 2)
                w += (size_t)sprintf(text + w, "NA");
            else
                w += (size_t)sprintf(text + w, "%d", (int)(x % 3));
            if (variant == 4 && r == rows - 10)
                w += (size_t)sprintf(text + w, "x");
            text[w++] = '\n';
        }
        assert_true(w > 4 * ((size_t)1 << 20) && w < cap);
        assert_same_for_thread_counts(text, w, variant == 2 || variant == 4 ? EL_ERR_DATA : EL_OK);
    }
    free(text);
}

/* The parts of a large file are read by threads straight into the rows of
 * the table counted for them (one per line end before them): tables equal
 * to the one-thread and stream reads (assert_same_for_thread_counts) when
 * (0) the file ends without a line end (one more row than line ends),
 * (1) the file ends with blank lines and a comment (fewer rows than the
 * table was sized for: the columns are moved together at the end),
 * (2) CRLF line ends, (3) comment lines every ~3,000 rows (parts stop
 * early: the reader reads on and later parts are moved up to close the
 * gap), (4) a ragged row late in the file (the same error). */
static void test_threads_parts_in_place(void **state)
{
    (void)state;
    const size_t rows = 70000;
    size_t cap = rows * 90 + 256;
    char *text = malloc(cap);
    assert_non_null(text);
    for (int variant = 0; variant < 5; variant++) {
        uint64_t seed = 999u + (uint64_t)variant;
        const char *eol = variant == 2 ? "\r\n" : "\n";
        size_t w = (size_t)sprintf(text, "time,a,b,c,d,e%s", eol);
        for (size_t r = 0; r < rows; r++) {
            if (variant == 3 && r % 3001 == 17)
                w += (size_t)sprintf(text + w, "# operator note%s", eol);
            w += (size_t)sprintf(text + w, "%zu.%02zu", r / 100, r % 100);
            for (int c = 0; c < 5; c++) {
                text[w++] = ',';
                w += (size_t)write_number(text + w, 64, &seed);
            }
            if (variant == 4 && r == rows - 100)
                w += (size_t)sprintf(text + w, ",7");
            if (variant != 0 || r + 1 < rows)
                w += (size_t)sprintf(text + w, "%s", eol);
        }
        if (variant == 1)
            w += (size_t)sprintf(text + w, "\n\n# end of log\n\n");
        assert_true(w > 4 * ((size_t)1 << 20) && w < cap);
        assert_same_for_thread_counts(text, w, variant == 4 ? EL_ERR_DATA : EL_OK);
        if (variant != 4) {
            el_table t = {0};
            el_error e;
            char *path = temp_file(text, w);
            assert_int_equal(el_table_read_threads(path, NULL, 4, &t, &e), EL_OK);
            assert_int_equal(t.n_rows, rows);
            /* The last row's values and line, as written. */
            assert_close(t.values[rows - 1], (double)(rows - 1) / 100.0, 0, 0);
            assert_int_equal(t.source_line[rows - 1],
                             (long)rows + 1 + (variant == 3 ? (long)((rows - 18) / 3001 + 1) : 0));
            el_table_free(&t);
            unlink(path);
            free(path);
        }
    }
    free(text);
}

/* el_rows_count_lines (both its loops) against a byte-by-byte count, on
 * runs of line ends longer than the 255-byte blocks it sums in (a
 * byte-wide sum would wrap at 256) and on lengths around the block size. */
static void test_count_lines(void **state)
{
    (void)state;
    static char text[2000];
    uint64_t seed = 4242;
    for (size_t n = 0; n < sizeof text; n += 1 + n / 3) {
        for (int pattern = 0; pattern < 3; pattern++) {
            size_t expect = 0;
            for (size_t i = 0; i < n; i++) {
                text[i] = pattern == 0 ? '\n' : pattern == 1 ? (i % 7 ? 'x' : '\n')
                                                           : (next_random(&seed) % 2 ? '\n' : '1');
                expect += text[i] == '\n';
            }
            assert_int_equal(el_rows_count_lines(text, text + n), expect);
            /* the AVX2 loop (where the CPU has it) and the SSE2 fallback */
            assert_int_equal(el_rows_count_lines_using(1, text, text + n), expect);
            assert_int_equal(el_rows_count_lines_using(0, text, text + n), expect);
        }
    }
}

/* The median step by selection equals the middle of the sorted steps
 * (qsort here), for odd and even counts, with repeated steps. */
static int compare_steps(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static void test_median_step_selection(void **state)
{
    (void)state;
    uint64_t seed = 777;
    for (size_t n = 2; n < 400; n += 1 + n / 7) {
        double *time = malloc(n * sizeof *time), *steps = malloc(n * sizeof *steps);
        assert_true(time && steps);
        char *text = malloc(n * 40 + 16);
        assert_non_null(text);
        size_t w = (size_t)sprintf(text, "t,x\n");
        double t = 0.0;
        for (size_t r = 0; r < n; r++) {
            uint64_t x = next_random(&seed);
            /* Few distinct steps (repeats, ties at the middle), some long. */
            t += (double)(1 + x % 4) * 0.25 + (x % 17 == 0 ? 3.0 : 0.0);
            w += (size_t)sprintf(text + w, "%.17g,1\n", t);
        }
        el_table tab = {0};
        el_error e;
        el_scan s = {0};
        assert_int_equal(read_text(text, &tab, &e), EL_OK);
        assert_int_equal(el_scan_table(&tab, &s, &e), EL_OK);
        for (size_t r = 0; r + 1 < n; r++)
            steps[r] = tab.values[r + 1] - tab.values[r];
        qsort(steps, n - 1, sizeof *steps, compare_steps);
        size_t m = n - 1;
        double median = m % 2 ? steps[m / 2] : 0.5 * (steps[m / 2 - 1] + steps[m / 2]);
        assert_close(s.dt_median, median, 0, 0);
        assert_close(s.dt_min, steps[0], 0, 0);
        assert_close(s.dt_max, steps[m - 1], 0, 0);
        el_scan_free(&s);
        el_table_free(&tab);
        free(text);
        free(time);
        free(steps);
    }
}

/* The median step of a long log (the bracket from a sample, counts in
 * one pass; el_table.c) equals the middle of the sorted steps (qsort
 * here), and the jitter and long-step count equal their definitions
 * over every step (max |s - median| / median, #(s > 1.5 median)), bit
 * for bit (tolerance 0: the same operations on the same doubles), for
 * steps that take few values (ranks on the bracket's ends), jittery
 * stamps (ranks strictly inside it; every step distinct, so a rank off
 * by one shows), a sample that misses the median (the fallback to
 * selection over all steps), odd and even counts, and long steps. */
static void test_median_step_bracket(void **state)
{
    (void)state;
    uint64_t seed = 4242;
    const size_t sizes[] = {40000, 40001, 70000};
    for (int kind = 0; kind < 4; kind++)
        for (size_t z = 0; z < 3; z++) {
            size_t n = sizes[z], m = n - 1;
            char *text = malloc(n * 32 + 16);
            double *steps = malloc(m * sizeof *steps);
            assert_true(text != NULL && steps != NULL);
            size_t w = (size_t)sprintf(text, "t,x\n");
            double t = 1000.0;
            for (size_t r = 0; r < n; r++) {
                uint64_t x = next_random(&seed);
                if (kind == 0) /* regular stamps printed to 1 ms: few distinct steps */
                    t = 1000.0 + 0.001 * (double)r;
                else if (kind == 1) /* jitter: a continuum of steps */
                    t += 0.001 * (1.0 + (double)(x % 1000003) / 5e6);
                else if (kind == 2) /* two values, 48 % the shorter (the median the
                                     * bracket's upper end), long steps now and then */
                    t += (x % 100 < 48 ? 0.001 : 0.002) + (x % 97 == 0 ? 0.01 : 0.0);
                else if (r > 0) /* the sampled steps (every m / 1023-th) short, all
                                 * others long: the median outside the bracket */
                    t += (r - 1) % (m / 1023) == 0 ? 0.001 : 0.002;
                w += (size_t)sprintf(text + w, kind == 0 ? "%.3f,1\n" : "%.17g,1\n", t);
            }
            el_table tab = {0};
            el_error e;
            el_scan s = {0};
            assert_int_equal(read_text(text, &tab, &e), EL_OK);
            assert_int_equal(el_scan_table(&tab, &s, &e), EL_OK);
            for (size_t r = 0; r < m; r++)
                steps[r] = tab.values[r + 1] - tab.values[r];
            double jitter = 0.0;
            size_t long_steps = 0;
            qsort(steps, m, sizeof *steps, compare_steps);
            double median = m % 2 ? steps[m / 2] : 0.5 * (steps[m / 2 - 1] + steps[m / 2]);
            for (size_t r = 0; r < m; r++) {
                double dev = fabs(steps[r] - median) / median;
                jitter = dev > jitter ? dev : jitter;
                long_steps += steps[r] > 1.5 * median;
            }
            if (memcmp(&s.dt_median, &median, sizeof median) != 0)
                fail_msg("kind %d n %zu: median %.17g, sorted %.17g", kind, n, s.dt_median,
                         median);
            assert_memory_equal(&s.jitter, &jitter, sizeof jitter);
            assert_int_equal(s.long_steps, long_steps);
            assert_close(s.dt_min, steps[0], 0, 0);
            assert_close(s.dt_max, steps[m - 1], 0, 0);
            el_scan_free(&s);
            el_table_free(&tab);
            free(text);
            free(steps);
        }
}

/* el_scan_table's one pass over the steps of a long log (the bracketed
 * median's counts, the first step not forward, the smallest and largest
 * step) four steps at a time on AVX2 CPUs, against the plain loop
 * (el_scan_table_using with allow_avx2 = 0), bit for bit (tolerance 0:
 * each count is a number of steps passing a test, the extremes the same
 * doubles): regular stamps, jitter, steps back and repeated stamps, and
 * signed zeros as the smallest step (+0.0 met first, -0.0 later in
 * another lane: the plain loop keeps +0.0, which a lane-wise minimum
 * would not). Lengths leave every tail of a block of four. */
static void test_scan_steps_paths(void **state)
{
    (void)state;
    uint64_t seed = 515;
    for (int kind = 0; kind < 4; kind++)
        for (size_t n = 40001; n < 40005; n++) {
            char *text = malloc(n * 48 + 16);
            assert_non_null(text);
            size_t w = (size_t)sprintf(text, "t,x\n");
            double t = 1000.0;
            for (size_t r = 0; r < n; r++) {
                uint64_t x = next_random(&seed);
                if (kind == 0)
                    t = 1000.0 + 0.001 * (double)r;
                else if (kind == 1)
                    t += 0.001 * (1.0 + (double)(x % 1000003) / 5e6);
                else if (kind == 2)  /* now and then a step back or a repeat */
                    t += x % 53 == 0 ? -0.0005 : x % 59 == 0 ? 0.0 : 0.001;
                else  /* -1, 0, 0, 0, 0, -0, then on: steps 1, +0, +0, +0, -0, ... */
                    t = r == 0 ? -1.0 : r < 5 ? 0.0 : r == 5 ? -0.0 : 0.001 * (double)r;
                w += (size_t)sprintf(text + w, kind == 0 ? "%.3f,%zu\n" : "%.17g,%zu\n", t, r);
            }
            el_table tab = {0};
            el_error e;
            el_scan a = {0}, b = {0};
            assert_int_equal(read_text(text, &tab, &e), EL_OK);
            assert_int_equal(tab.n_rows, n);
            el_status sa = el_scan_table_using(&tab, 1, &a, &e);
            el_status sb = el_scan_table_using(&tab, 0, &b, &e);
            assert_int_equal(sa, sb);
            assert_int_equal(sa, EL_OK);
            assert_int_equal(a.nonpositive_steps, b.nonpositive_steps);
            assert_int_equal(a.backward_steps, b.backward_steps);
            assert_int_equal(a.repeated_steps, b.repeated_steps);
            assert_int_equal(a.long_steps, b.long_steps);
            assert_int_equal(a.dt_is_mean, b.dt_is_mean);
            assert_memory_equal(&a.dt_median, &b.dt_median, sizeof a.dt_median);
            assert_memory_equal(&a.dt_step, &b.dt_step, sizeof a.dt_step);
            assert_memory_equal(&a.dt_min, &b.dt_min, sizeof a.dt_min);
            assert_memory_equal(&a.dt_max, &b.dt_max, sizeof a.dt_max);
            assert_memory_equal(&a.jitter, &b.jitter, sizeof a.jitter);
            for (size_t c = 0; c < tab.n_columns; c++) {
                assert_memory_equal(&a.columns[c].mean, &b.columns[c].mean, sizeof(double));
                assert_memory_equal(&a.columns[c].std, &b.columns[c].std, sizeof(double));
            }
            if (kind == 2)
                assert_true(a.backward_steps > 0 && a.repeated_steps > 0);
            if (kind == 3) {  /* IEEE 754: 0.0 - 0.0 is +0.0, -0.0 - 0.0 is -0.0 */
                assert_true(a.dt_min == 0.0 && !signbit(a.dt_min));
                assert_int_equal(a.repeated_steps, 4);
                assert_int_equal(a.backward_steps, 0);
            }
            el_scan_free(&a);
            el_scan_free(&b);
            el_table_free(&tab);
            free(text);
        }
}

/* el_scan_column_stats with the AVX2 loops allowed and with SSE2 forced
 * (the fallback of a CPU without AVX2): the same counts, extremes, mean
 * and std bit for bit (tolerance 0: the same lanes, operations and
 * order), on columns with NaN cells, signs, a large offset and every
 * length's tail; and the mean is the documented four-lane sum. */
static void test_scan_column_stats_paths(void **state)
{
    (void)state;
    uint64_t seed = 99;
    for (size_t n = 0; n < 5000; n = n * 2 + 1) {
        double *v = malloc((n + 1) * sizeof *v);
        assert_non_null(v);
        double lane[4] = {0, 0, 0, 0};
        size_t present = 0;
        for (size_t r = 0; r < n; r++) {
            uint64_t x = next_random(&seed);
            v[r] = x % 11 == 0 ? NAN : (double)(int64_t)(x >> 11) * 1e-12 + 1e6;
            if (!isnan(v[r])) {
                lane[r >= (n & ~(size_t)3) ? 0 : r % 4] += v[r];
                present++;
            }
        }
        el_column_stats a, b;
        el_scan_column_stats(v, n, 1, &a);
        el_scan_column_stats(v, n, 0, &b);
        assert_int_equal(a.present, present);
        assert_int_equal(b.present, present);
        assert_int_equal(a.missing, b.missing);
        assert_int_equal(a.constant, b.constant);
        assert_memory_equal(&a.min, &b.min, sizeof a.min);
        assert_memory_equal(&a.max, &b.max, sizeof a.max);
        assert_memory_equal(&a.mean, &b.mean, sizeof a.mean);
        assert_memory_equal(&a.std, &b.std, sizeof a.std);
        if (present > 0) {
            double mean = ((lane[0] + lane[1]) + (lane[2] + lane[3])) / (double)present;
            assert_memory_equal(&a.mean, &mean, sizeof mean);
        }
        free(v);
    }
}

/* The per-column statistics of scan (el_scan_table): a channel of the
 * integers 1..n with NA cells in between has the closed forms mean
 * (n+1)/2, min 1, max n and sample std sqrt(n(n+1)/12) over its present
 * cells (a sum of squares: the textbook identity; exact here in doubles
 * but for the square root's rounding, hence 1e-15 relative). And the
 * sums are the ones of the documented four-lane order (cell r into lane
 * r % 4, then (l0 + l1) + (l2 + l3)), bit for bit, whatever the vector
 * code does: scan's JSON prints them in full, so they must not move.
 * Lengths n not a multiple of 4 leave a tail. */
static void test_scan_column_stats(void **state)
{
    (void)state;
    uint64_t seed = 4242;
    for (size_t n = 5; n < 3000; n = n * 3 + 1) {
        /* Rows: the k-th present value is k; every 7th row is NA. */
        size_t rows = n + n / 6;
        char *text = malloc(rows * 48 + 32);
        double *noisy = malloc(rows * sizeof *noisy);
        assert_true(text != NULL && noisy != NULL);
        size_t w = (size_t)sprintf(text, "t,x,y\n"), k = 0;
        for (size_t r = 0; r < rows; r++) {
            uint64_t x = next_random(&seed);
            noisy[r] = (double)(int64_t)(x >> 12) * 1e-9 - 2251.0;
            if (r % 7 == 6 || k == n)
                w += (size_t)sprintf(text + w, "%zu,NA,%.17g\n", r, noisy[r]);
            else
                w += (size_t)sprintf(text + w, "%zu,%zu,%.17g\n", r, ++k, noisy[r]);
        }
        assert_int_equal(k, n);
        el_table tab = {0};
        el_error e;
        el_scan s = {0};
        assert_int_equal(read_text(text, &tab, &e), EL_OK);
        assert_int_equal(el_scan_table(&tab, &s, &e), EL_OK);
        const el_column_stats *cx = &s.columns[1], *cy = &s.columns[2];
        double nd = (double)n;
        assert_int_equal(cx->present, n);
        assert_int_equal(cx->missing, rows - n);
        assert_close(cx->mean, (nd + 1) / 2, 0, 0);
        assert_close(cx->min, 1.0, 0, 0);
        assert_close(cx->max, nd, 0, 0);
        assert_close(cx->std, sqrt(nd * (nd + 1) / 12), 1e-15, 0);
        /* The four-lane order of the plain loop on the noisy column. */
        double lane[4] = {0, 0, 0, 0};
        for (size_t r = 0; r < rows; r++)
            lane[r >= (rows & ~(size_t)3) ? 0 : r % 4] += noisy[r];
        double sum = (lane[0] + lane[1]) + (lane[2] + lane[3]);
        double mean = sum / (double)rows;
        assert_memory_equal(&cy->mean, &mean, sizeof mean);
        el_scan_free(&s);
        el_table_free(&tab);
        free(text);
        free(noisy);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_basic_table),
        cmocka_unit_test(test_semicolon_and_tab),
        cmocka_unit_test(test_quoted_fields),
        cmocka_unit_test(test_file_crlf_bom),
        cmocka_unit_test(test_stream_fmemopen),
        cmocka_unit_test(test_long_lines),
        cmocka_unit_test(test_numbers_match_strtod),
        cmocka_unit_test(test_time_column_by_name),
        cmocka_unit_test(test_iso_times),
        cmocka_unit_test(test_iso_calendar),
        cmocka_unit_test(test_parse_time),
        cmocka_unit_test(test_format_time),
        cmocka_unit_test(test_scan),
        cmocka_unit_test(test_scan_column_stats),
        cmocka_unit_test(test_scan_errors),
        cmocka_unit_test(test_error_missing_file),
        cmocka_unit_test(test_error_empty_and_header_only),
        cmocka_unit_test(test_error_ragged),
        cmocka_unit_test(test_error_names),
        cmocka_unit_test(test_error_unknown_time_column),
        cmocka_unit_test(test_error_binary),
        cmocka_unit_test(test_error_bad_cells),
        cmocka_unit_test(test_error_time_cells),
        cmocka_unit_test(test_error_unterminated_quote),
        cmocka_unit_test(test_time_unit_words),
        cmocka_unit_test(test_time_unit_from_header),
        cmocka_unit_test(test_iso_without_zone),
        cmocka_unit_test(test_text_columns),
        cmocka_unit_test(test_decimal_comma),
        cmocka_unit_test(test_cr_only_lines),
        cmocka_unit_test(test_gzip),
        cmocka_unit_test(test_several_files),
        cmocka_unit_test(test_many_columns),
        cmocka_unit_test(test_scan_counts_and_tiny_spread),
        cmocka_unit_test(test_fast_path_matches_general_reader),
        cmocka_unit_test(test_threads_same_table),
        cmocka_unit_test(test_threads_parts_in_place),
        cmocka_unit_test(test_count_lines),
        cmocka_unit_test(test_stream_left_at_end),
        cmocka_unit_test(test_median_step_selection),
        cmocka_unit_test(test_median_step_bracket),
        cmocka_unit_test(test_scan_steps_paths),
        cmocka_unit_test(test_scan_column_stats_paths),
    };
    return cmocka_run_group_tests_name("ingest", tests, NULL, NULL);
}
