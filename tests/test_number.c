/* test_number: el_number_scan (the cell scan of the fused row reader) and
 * el_number_scan_row against glibc's strtod, an independent correctly
 * rounding implementation: the value must be the same double bit for bit
 * (tolerance 0: correct rounding leaves no freedom) and the scan must stop
 * where strtod stops for a plain decimal. The cells are placed so that
 * each path of the scan is taken: the one-window path (cells of at most
 * 15 bytes with room for its loads), the general digit-run scan (longer
 * cells, exponents, cells near the end of the text) and el_number_parse's
 * strtod fallback (more than 15 digits, large exponents, subnormals). */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_number.h"

/* Bytes after a cell that the scan may load (its window is 16 bytes and
 * it loads 8-byte words starting inside it; 40 leaves room). */
#define PAD 40

static uint64_t next_random(uint64_t *s)
{
    /* xorshift64 (Marsaglia 2003, "Xorshift RNGs"). */
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return *s;
}

/* strtod of text[0..n) with a decimal comma made a point; *end_n: how
 * many bytes strtod read. */
static double strtod_n(const char *text, size_t n, size_t *end_n)
{
    char buf[128];
    assert_true(n < sizeof buf);
    memcpy(buf, text, n);
    buf[n] = '\0';
    char *comma = strchr(buf, ',');
    if (comma != NULL)
        *comma = '.';
    char *end;
    double v = strtod(buf, &end);
    *end_n = (size_t)(end - buf);
    return v;
}

/* Scans cell followed by stop and PAD bytes of filler, with the window
 * (room) and without (lim right after the stop byte), for decimal '.'
 * decided and not yet decided; all four must agree with strtod. */
static void check_cell(const char *cell, char stop, char dec, char delim)
{
    char buf[128 + PAD];
    size_t n = strlen(cell);
    assert_true(n + 1 + PAD < sizeof buf);
    memcpy(buf, cell, n);
    buf[n] = stop;
    memset(buf + n + 1, '7', PAD); /* digits after the stop: must not be read as the cell's */
    size_t want_n;
    double want = strtod_n(cell, n, &want_n);
    const char *lims[2] = {buf + n + 1 + PAD, buf + n + 1};
    char decs[2] = {dec, 0};
    for (int l = 0; l < 2; l++)
        for (int d = 0; d < 2; d++) {
            double got = -12345.0;
            char point = 'x';
            const char *e = el_number_scan(buf, lims[l], decs[d], delim, &got, &point);
            if (e == NULL)
                fail_msg("cell \"%s\" (lim %d, decimal %d): refused", cell, l, d);
            if ((size_t)(e - buf) != n || want_n != n)
                fail_msg("cell \"%s\": scan stopped after %td bytes, strtod after %zu", cell,
                         e - buf, want_n);
            if (memcmp(&got, &want, sizeof got) != 0)
                fail_msg("cell \"%s\" (lim %d, decimal %d): got %.17g, strtod %.17g", cell, l, d,
                         got, want);
            int has_point = memchr(cell, dec, n) != NULL;
            assert_int_equal(point, has_point ? dec : 0);
        }
}

/* Worked edge cases: the window's limits (15 and 16 bytes, the separator
 * first and last, the sign), ties to even and 19+ digit significands
 * (the strtod fallback), subnormals and the exponent range's edges (IEEE
 * 754 binary64: 2^-1074 = 4.94e-324, DBL_MAX = 1.7976931348623157e308,
 * 2^53 = 9007199254740992). */
static void test_edge_cells_match_strtod(void **state)
{
    (void)state;
    static const char *cells[] = {
        "0", "-0", "+0", "-0.0", "0.", ".0", ".5", "-.5", "+.5", "5.", "-5.", "7",
        "10.0571", "9.96033", "0.001", "999.999", "-9.96033", "+12.25", "00012.50",
        /* 15 bytes: the longest cell of the one-window path */
        "123456789012345", "1234567.8901234", "-12345678.90123", "0.0000000000001",
        ".12345678901234", "12345678901234.", "-1234567890123.",
        /* 16 bytes and more: the general scan */
        "1234567890123456", "-123456789012345", "0.00000000000001", "1234567.89012345",
        "9007199254740993", "9007199254740992", "9007199254740995",
        "1.00000000000000011102230246251565404236316680908203125",
        "1.00000000000000011102230246251565404236316680908203126",
        "123456789012345678", "1234567890123456789", "12345678901234567890",
        "99999999999999999999", "0.30000000000000004",
        /* exponents: always the general scan */
        "1e5", "1E-5", "-2.5e-3", "1e22", "1e23", "1e-22", "1e308", "1.7976931348623157e308",
        "4.9e-324", "2.4703282292062327e-324", "2.4703282292062328e-324",
        "2.2250738585072014e-308", "2.2250738585072011e-308", "1e-400", "4.35679659e-320",
        /* 8-digit runs and their neighbours */
        "12345678", "123456789", "87654321.12345678", "0.00000001", "1234567.8"};
    const char stops[] = {',', '\n', '\r', ';', '"', ' '};
    for (size_t i = 0; i < sizeof cells / sizeof cells[0]; i++)
        for (size_t k = 0; k < sizeof stops; k++)
            check_cell(cells[i], stops[k], '.', ',');
}

/* A decimal comma (cells separated by ';'): the same values as with a
 * point. */
static void test_decimal_comma_cells(void **state)
{
    (void)state;
    static const char *cells[] = {"10,0571", "-0,5", ",25", "5,", "123456,789012345",
                                  "1234567,89012345", "0,30000000000000004"};
    for (size_t i = 0; i < sizeof cells / sizeof cells[0]; i++)
        check_cell(cells[i], ';', ',', ';');
}

/* Where the number ends is where strtod's reading of a plain decimal
 * ends, whatever follows: a second separator, a sign, a letter. */
static void test_scan_stops_like_strtod(void **state)
{
    (void)state;
    static const struct {
        const char *text;
        size_t end;
    } cases[] = {{"1.2.3,", 3}, {"12-3,", 2}, {"-1.5+2,", 4}, {"0.25x,", 4},
                 {"7..,", 2},   {"123456789012345.5,", 17}, {"1.5e,", 0}, {"-,", 0},
                 {".,", 0},     {"+-1,", 0}, {"1e+,", 0}};
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char buf[64 + PAD];
        size_t n = strlen(cases[i].text);
        memcpy(buf, cases[i].text, n);
        memset(buf + n, '\n', PAD);
        double v = 0.0;
        char point;
        const char *e = el_number_scan(buf, buf + n + PAD, '.', ',', &v, &point);
        if (cases[i].end == 0) {
            /* No number, or an exponent without digits: refused. */
            assert_null(e);
            continue;
        }
        assert_non_null(e);
        assert_int_equal((size_t)(e - buf), cases[i].end);
        size_t want_n;
        double want = strtod_n(buf, cases[i].end, &want_n);
        assert_int_equal(want_n, cases[i].end);
        assert_memory_equal(&v, &want, sizeof v);
    }
}

/* Random digit strings of 1 to 17 digits with the point anywhere (or
 * none) and a random sign: every split of the window's two words. */
static void test_random_digit_strings(void **state)
{
    (void)state;
    uint64_t seed = 0x2545F4914F6CDD1Du;
    for (int i = 0; i < 200000; i++) {
        char cell[40];
        size_t n = 0;
        uint64_t r = next_random(&seed);
        if (r % 4 == 0)
            cell[n++] = r % 8 == 0 ? '-' : '+';
        unsigned digits = 1 + (unsigned)((r >> 8) % 17);
        unsigned point = (unsigned)((r >> 16) % (digits + 2)); /* digits + 1: none */
        for (unsigned k = 0; k <= digits; k++) {
            if (k == point)
                cell[n++] = '.';
            if (k < digits)
                cell[n++] = (char)('0' + next_random(&seed) % 10);
        }
        cell[n] = '\0';
        check_cell(cell, (r >> 24) % 2 ? ',' : '\n', '.', ',');
    }
}

/* Random doubles printed the ways loggers print them. */
static void test_random_printed_values(void **state)
{
    (void)state;
    uint64_t seed = 0x9E3779B97F4A7C15u;
    for (int i = 0; i < 200000; i++) {
        uint64_t r = next_random(&seed);
        double u = (double)(r >> 11) / 9007199254740992.0 - 0.5;
        double v = u * pow(10.0, (double)((int)(next_random(&seed) % 31) - 15));
        char cell[64];
        switch (i % 8) {
        case 0: snprintf(cell, sizeof cell, "%.17g", v); break;
        case 1: snprintf(cell, sizeof cell, "%.6f", v); break;
        case 2: snprintf(cell, sizeof cell, "%.15g", v); break;
        case 3: snprintf(cell, sizeof cell, "%.6g", 10.0 + v); break;
        case 4: snprintf(cell, sizeof cell, "%.9g", v); break;
        case 5: snprintf(cell, sizeof cell, "%.3f", fabs(v) * 1e3); break;
        case 6: snprintf(cell, sizeof cell, "%.16g", v); break;
        default: snprintf(cell, sizeof cell, "%.10e", v); break;
        }
        check_cell(cell, ',', '.', ',');
    }
}

/* A row through el_number_scan_row: cells, delimiters, CRLF, and a row
 * the fast path must refuse (a missing cell, a text cell, too many). */
static void test_scan_row(void **state)
{
    (void)state;
    char buf[256];
    double dst[8];
    const char *rows[] = {"0.001,10.0571,-9.96033\n", "1,2.5,3\r\n", "1e3,.5,-0\n"};
    const double want[][3] = {{0.001, 10.0571, -9.96033}, {1, 2.5, 3}, {1e3, .5, -0.0}};
    for (size_t i = 0; i < 3; i++) {
        size_t n = strlen(rows[i]);
        memcpy(buf, rows[i], n);
        memset(buf + n, '\n', PAD);
        char dec = '.';
        const char *e = el_number_scan_row(buf, buf + n + PAD, 3, ',', &dec, dst, 2);
        assert_non_null(e);
        assert_int_equal((size_t)(e - buf), n);
        for (size_t c = 0; c < 3; c++)
            assert_memory_equal(&dst[2 * c], &want[i][c], sizeof(double));
    }
    const char *bad[] = {"1,,3\n", "1,x,3\n", "1,2,3,4\n", "1,2\n", "1,2,3 \n", "1,2,3\r\r\n"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        size_t n = strlen(bad[i]);
        memcpy(buf, bad[i], n);
        memset(buf + n, '\n', PAD);
        char dec = '.';
        assert_null(el_number_scan_row(buf, buf + n + PAD, 3, ',', &dec, dst, 1));
    }
}

/* el_number_scan_rows (the rows' ends from a separator mask, the common
 * cell from the masks) against strtod of every cell and against
 * el_number_scan_row row by row: random rows of cells 1 to 20 bytes long
 * (signs, points, exponents, long significands: every path), LF and
 * CRLF, with now and then a row the fast path must refuse (a blank, a
 * letter, two points, a missing cell, one cell too many). Both must stop
 * at the same row, take the same rows and give strtod's doubles. */
static void test_scan_rows_masked(void **state)
{
    (void)state;
    enum { ROWS = 4000, COLS = 5 };
    size_t cap = (size_t)ROWS * COLS * 32 + 256;
    char *text = malloc(cap);
    double *want = malloc(sizeof(double) * ROWS * COLS);
    double *got = malloc(sizeof(double) * ROWS * COLS), row[COLS];
    assert_true(text != NULL && want != NULL && got != NULL);
    uint64_t seed = 0xD1B54A32D192ED03u;
    for (int round = 0; round < 40; round++) {
        size_t n = 0, bad_row = ROWS;
        int crlf = round % 2;
        for (size_t r = 0; r < ROWS; r++)
            for (size_t c = 0; c < COLS; c++) {
                uint64_t x = next_random(&seed);
                double u = (double)(x >> 11) / 9007199254740992.0 - 0.5;
                double v = u * pow(10.0, (double)((int)(x % 11) - 4));
                char cell[64];
                switch ((x >> 8) % 6) {
                case 0: snprintf(cell, sizeof cell, "%.6g", 10.0 + v); break;
                case 1: snprintf(cell, sizeof cell, "%.3f", v); break;
                case 2: snprintf(cell, sizeof cell, "%+.12g", v); break;
                case 3: snprintf(cell, sizeof cell, "%.17g", v); break;
                case 4: snprintf(cell, sizeof cell, "%.2e", v); break;
                default: snprintf(cell, sizeof cell, "%lld", (long long)(v * 1e3)); break;
                }
                want[c * ROWS + r] = strtod(cell, NULL);
                /* One row in four rounds spoils a cell (ends a run). */
                if (round % 4 == 3 && r == (size_t)(round * 97) % ROWS && c == 2) {
                    static const char *spoil[] = {"1.2.3", "7 ", "x", "", "1,2"};
                    snprintf(cell, sizeof cell, "%s", spoil[(size_t)round % 5]);
                    bad_row = r;
                }
                n += (size_t)sprintf(text + n, "%s%s", cell,
                                     c + 1 < COLS ? "," : crlf ? "\r\n" : "\n");
            }
        memset(text + n, '\n', 64);
        const char *lim = text + n + 64;
        /* Row by row with the one-row scan: where it stops. */
        const char *p = text;
        size_t rows_one = 0;
        char dec = '.';
        while (p < text + n) {
            const char *e = el_number_scan_row(p, lim, COLS, ',', &dec, row, 1);
            if (e == NULL)
                break;
            for (size_t c = 0; c < COLS; c++)
                assert_memory_equal(&row[c], &want[c * ROWS + rows_one], sizeof(double));
            p = e;
            rows_one++;
        }
        assert_int_equal(rows_one, bad_row);
        /* Every row reader (those this CPU cannot run fall back to the
         * next slower one, so the last two may be the same here). */
        for (int path = EL_ROWS_PLAIN; path <= EL_ROWS_BATCHED; path++) {
            size_t rows = 0;
            dec = round % 3 == 0 ? 0 : '.'; /* undecided: the first point decides */
            const char *stop = el_number_scan_rows_using(path, text, text + n, lim, COLS, ',',
                                                         &dec, got, ROWS, ROWS, &rows);
            assert_int_equal(rows, rows_one);
            assert_ptr_equal(stop, p);
            for (size_t c = 0; c < COLS; c++)
                for (size_t r = 0; r < rows; r++)
                    if (memcmp(&got[c * ROWS + r], &want[c * ROWS + r], sizeof(double)) != 0)
                        fail_msg("path %d round %d row %zu column %zu: got %.17g, strtod %.17g",
                                 path, round, r, c, got[c * ROWS + r], want[c * ROWS + r]);
            /* A row limit is kept. */
            rows = 0;
            dec = '.';
            el_number_scan_rows_using(path, text, text + n, lim, COLS, ',', &dec, got, ROWS, 7,
                                      &rows);
            assert_int_equal(rows, bad_row < 7 ? bad_row : 7);
        }
    }
    free(text);
    free(want);
    free(got);
}

/* The batched reader's cells ([+-]digits.digits, 2 to 8 bytes after the
 * sign, four made at once) beside the cells just outside that form (no
 * point, 9 bytes, two points, a sign alone, a point alone, "-0.000"):
 * random rows of mostly such cells, read by every row reader (the plain
 * one, the masked one and the batched one, which the run-time check
 * enables on AVX2 + BMI2 CPUs; elsewhere it is the masked one, the
 * fallback this test then covers twice), must give strtod's doubles bit
 * for bit (tolerance 0: correct rounding leaves no freedom), and all
 * must stop at the same row: the spoiled one. A decimal comma with ';'
 * between cells, and rows at every offset from the 64-byte windows (the
 * cells' lengths vary), so cells and rows straddle the windows. */
static void test_scan_rows_batched_form(void **state)
{
    (void)state;
    enum { ROWS = 3000, COLS = 9 };
    static const char *edge[] = {"5.", ".5", "-.5", "+7.", "-0.000", "0.0", "1234567.",
                                 ".1234567", "-1234567.", "9999999.9", "12345678",
                                 "1", "-3", "00.00001", "-9.96033", "+10.0571"};
    size_t cap = (size_t)ROWS * COLS * 16 + 256;
    char *text = malloc(cap);
    double *want = malloc(sizeof(double) * ROWS * COLS);
    double *got = malloc(sizeof(double) * ROWS * COLS);
    assert_true(text != NULL && want != NULL && got != NULL);
    printf("row readers on this CPU: masked %s, batched (AVX2) %s\n",
           el_number_rows_path_available(EL_ROWS_MASKED) ? "yes" : "no (plain instead)",
           el_number_rows_path_available(EL_ROWS_BATCHED) ? "yes" : "no (masked instead)");
    uint64_t seed = 0x243F6A8885A308D3u;
    for (int round = 0; round < 12; round++) {
        char dec = round % 2 ? ',' : '.', delim = round % 2 ? ';' : ',';
        size_t n = 0, bad_row = ROWS;
        for (size_t r = 0; r < ROWS; r++)
            for (size_t c = 0; c < COLS; c++) {
                uint64_t x = next_random(&seed);
                char cell[32];
                if (x % 16 == 0) {
                    snprintf(cell, sizeof cell, "%s", edge[(x >> 8) % 16]);
                } else {
                    /* 1 to 7 digits with the point anywhere among them */
                    int digits = 1 + (int)((x >> 8) % 7), frac = (int)((x >> 16) % (digits + 1));
                    double v = (double)((x >> 24) % 10000000) / 1e7 * pow(10.0, digits - frac);
                    snprintf(cell, sizeof cell, "%s%.*f", (x >> 60) % 4 == 0 ? "-" : "", frac,
                             v);
                }
                char *comma = strchr(cell, '.');
                want[c * ROWS + r] = strtod(cell, NULL);
                if (comma != NULL && dec == ',')
                    *comma = ',';
                if (round % 3 == 2 && r == (size_t)round * 211 % ROWS &&
                    c == (size_t)round % COLS) {
                    snprintf(cell, sizeof cell, "%s", round % 2 ? "1,2,3" : "1.2.3");
                    bad_row = r;
                }
                n += (size_t)sprintf(text + n, "%s%s", cell,
                                     c + 1 < COLS ? (char[]){delim, 0} : "\n");
            }
        memset(text + n, '\n', 128);
        const char *lim = text + n + 128;
        const char *stop_at[3];
        for (int path = EL_ROWS_PLAIN; path <= EL_ROWS_BATCHED; path++) {
            size_t rows = 0;
            char d = dec;
            memset(got, 0, sizeof(double) * ROWS * COLS);
            stop_at[path] = el_number_scan_rows_using(path, text, text + n, lim, COLS, delim, &d,
                                                      got, ROWS, ROWS, &rows);
            assert_int_equal(rows, bad_row);
            for (size_t c = 0; c < COLS; c++)
                for (size_t r = 0; r < rows; r++)
                    if (memcmp(&got[c * ROWS + r], &want[c * ROWS + r], sizeof(double)) != 0)
                        fail_msg("path %d round %d row %zu column %zu: got %.17g, strtod %.17g",
                                 path, round, r, c, got[c * ROWS + r], want[c * ROWS + r]);
        }
        assert_ptr_equal(stop_at[1], stop_at[0]);
        assert_ptr_equal(stop_at[2], stop_at[0]);
    }
    free(text);
    free(want);
    free(got);
}

/* The batched reader decides which cells of a 64-byte window it makes
 * four at a time from the window's masks, all cells at once (a carry
 * from a stray byte, a point or a second point up to the cell's
 * separator). Cells just outside its form put every such flag at every
 * offset of the window: an exponent, a sign inside or doubled, 8 digits,
 * leading zeros, no point, and the form itself, beside one another, so a
 * flag carried one cell too far or too short would take or refuse a
 * neighbour; then one spoiled row ("1..5", "1-2.5", "--1.5", "1.5.", ".",
 * "+", "1.5-", "-+1.5") where every reader must stop. Each value is strtod's, bit for bit
 * (tolerance 0: correct rounding leaves no freedom). A comma as both the
 * delimiter and the decimal separator (given, not detected) sends the
 * batched reader to the masked one: the same rows as the plain reader. */
static void test_scan_rows_window_flags(void **state)
{
    (void)state;
    enum { ROWS = 2000, COLS = 7 };
    static const char *pool[] = {"1e5", "-1.5E-3", "1234567.8", "12345678.9", "1.", ".1",
                                 "-0", "007.50", "+.5", "9.96033", "-10.0571", "3",
                                 "0.000", "-7.25", "1234.567", "+1.5", "42.", "6.02e23"};
    static const char *spoil[] = {"1..5", "1-2.5", "--1.5", "1.5.", ".", "+", "1.5-", "-+1.5"};
    size_t cap = (size_t)ROWS * COLS * 16 + 256;
    char *text = malloc(cap);
    double *want = malloc(sizeof(double) * ROWS * COLS);
    double *got = malloc(sizeof(double) * ROWS * COLS);
    assert_true(text != NULL && want != NULL && got != NULL);
    uint64_t seed = 0x13198A2E03707344u;
    for (int round = 0; round < 13; round++) {
        size_t n = 0, bad_row = round < 12 ? (size_t)(round * 151 + 40) % ROWS : ROWS;
        for (size_t r = 0; r < ROWS; r++)
            for (size_t c = 0; c < COLS; c++) {
                uint64_t x = next_random(&seed);
                const char *cell = pool[x % 18];
                if (round == 12)
                    cell = x % 2 ? "12" : "-3"; /* no point: "1,5" is two cells */
                if (r == bad_row && c == (size_t)round % COLS)
                    cell = spoil[(size_t)round % 8];
                want[c * ROWS + r] = strtod(cell, NULL);
                n += (size_t)sprintf(text + n, "%s%s", cell, c + 1 < COLS ? "," : "\n");
            }
        memset(text + n, '\n', 128);
        const char *lim = text + n + 128, *stop_at[3];
        char dec = round == 12 ? ',' : '.';
        size_t rows_at[3];
        for (int path = EL_ROWS_PLAIN; path <= EL_ROWS_BATCHED; path++) {
            size_t rows = 0;
            char d = dec;
            memset(got, 0, sizeof(double) * ROWS * COLS);
            stop_at[path] = el_number_scan_rows_using(path, text, text + n, lim, COLS, ',', &d,
                                                      got, ROWS, ROWS, &rows);
            rows_at[path] = rows;
            if (round == 12)
                continue;
            assert_int_equal(rows, bad_row);
            for (size_t c = 0; c < COLS; c++)
                for (size_t r = 0; r < rows; r++)
                    if (memcmp(&got[c * ROWS + r], &want[c * ROWS + r], sizeof(double)) != 0)
                        fail_msg("path %d round %d row %zu column %zu: got %.17g, strtod %.17g",
                                 path, round, r, c, got[c * ROWS + r], want[c * ROWS + r]);
        }
        /* With the comma as both, the masked reader (which the batched
         * one then runs) splits "12,-3" at the comma, the plain one reads
         * "12," as a number and refuses the row: a difference older than
         * the batched reader's masks, left as it is (both readers see it
         * only under --decimal , with a comma delimiter). */
        int from = round == 12 ? 1 : 0;
        for (int path = from + 1; path <= EL_ROWS_BATCHED; path++)
            if (stop_at[path] != stop_at[from] || rows_at[path] != rows_at[from])
                fail_msg("round %d: reader %d stops at byte %td after %zu rows, reader %d at "
                         "%td after %zu", round, path, stop_at[path] - text, rows_at[path], from,
                         stop_at[from] - text, rows_at[from]);
    }
    free(text);
    free(want);
    free(got);
}

/* Significands of more than 19 digits that are multiples of 2^64 wrap the
 * uint64 accumulator to exactly 0: such a cell must still be read as its
 * value (strtod's), not as zero. 2^64 = 18446744073709551616 (closed
 * form); the 33-digit cell is a double near -5.16e32 printed with %.5f,
 * as a logger's export writes a large value (its significand times 10^5
 * is a multiple of 2^64). Both el_number_parse and the scan are checked,
 * bit for bit against strtod (tolerance 0: correct rounding). */
static void test_wrapped_significand(void **state)
{
    (void)state;
    static const char *cells[] = {"18446744073709551616", "-18446744073709551616.0",
                                  "36893488147419103232", "1844674407370955161600",
                                  "-515902363161897553521941810249728.00000"};
    for (size_t i = 0; i < sizeof cells / sizeof cells[0]; i++) {
        size_t n = strlen(cells[i]), want_n;
        double want = strtod_n(cells[i], n, &want_n), got = 0.0;
        char dec = '.';
        assert_int_equal(el_number_parse(cells[i], n, &dec, ',', &got), EL_NUM_OK);
        if (memcmp(&got, &want, sizeof got) != 0)
            fail_msg("cell \"%s\": el_number_parse gave %.17g, strtod %.17g", cells[i], got,
                     want);
        check_cell(cells[i], ',', '.', ',');
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_edge_cells_match_strtod),
        cmocka_unit_test(test_wrapped_significand),
        cmocka_unit_test(test_decimal_comma_cells),
        cmocka_unit_test(test_scan_stops_like_strtod),
        cmocka_unit_test(test_random_digit_strings),
        cmocka_unit_test(test_random_printed_values),
        cmocka_unit_test(test_scan_row),
        cmocka_unit_test(test_scan_rows_masked),
        cmocka_unit_test(test_scan_rows_batched_form),
        cmocka_unit_test(test_scan_rows_window_flags),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
