/* test_timebase: window selection, uniform grid, gap fill and resampling,
 * on tables built in memory (independent of the CSV reader).
 *
 * External references used here:
 * - Linear interpolation reproduces a straight line exactly (closed form:
 *   the interpolant of a degree-1 polynomial is that polynomial).
 * - Error of linear interpolation between nodes h apart:
 *   |f(t) - p1(t)| = |f''(xi)/2 (t - t0)(t - t1)| <= h^2/8 max|f''|
 *   (Lagrange interpolation error theorem, e.g. Burden & Faires,
 *   "Numerical Analysis", section 3.1; section number recalled from memory).
 * - The median of the steps is recomputed here by sorting (qsort), a second
 *   method independent of the selection algorithm in el_timebase.c. */
#include "el_test.h"

#include <float.h>
#include <stdlib.h>
#include <string.h>

#include "el_rng.h"
#include "el_timebase.h"

/* Rounding in a handful of flops on values of size `scale` stays within a
 * few ulp (~1e-15 relative); 1e-12 leaves room for that and nothing more. */
#define LINE_RTOL 1e-12

/* ---- tables built by hand ----------------------------------------------- */

enum { COL_A = 0, COL_TIME = 1, COL_B = 2, COL_C = 3, N_COLS = 4 };

static char *dup_text(const char *s)
{
    size_t n = strlen(s) + 1;
    char *d = malloc(n);
    assert_non_null(d);
    memcpy(d, s, n);
    return d;
}

/* A table with columns a [V], time [s], b, c [degC]; every value NaN until
 * set; row r sits on line 3 + 2 r (a header and comments between rows), so
 * a row index is never mistaken for a line number. */
static el_table make_table(size_t n_rows)
{
    el_table t;
    memset(&t, 0, sizeof t);
    static const char *names[N_COLS] = {"a", "time", "b", "c"};
    static const char *units[N_COLS] = {"V", "s", "", "degC"};
    t.n_rows = n_rows;
    t.n_columns = N_COLS;
    t.time_column = COL_TIME;
    t.names = malloc(N_COLS * sizeof *t.names);
    t.units = malloc(N_COLS * sizeof *t.units);
    t.values = malloc(n_rows * N_COLS * sizeof *t.values);
    t.source_line = malloc(n_rows * sizeof *t.source_line);
    t.missing = calloc(N_COLS, sizeof *t.missing);
    assert_true(t.names && t.units && t.values && t.source_line && t.missing);
    for (size_t c = 0; c < N_COLS; c++) {
        t.names[c] = dup_text(names[c]);
        t.units[c] = dup_text(units[c]);
    }
    for (size_t i = 0; i < n_rows * N_COLS; i++)
        t.values[i] = NAN;
    for (size_t r = 0; r < n_rows; r++)
        t.source_line[r] = 3 + 2 * (long)r;
    t.delimiter = ',';
    snprintf(t.source, sizeof t.source, "%s", "hand.csv");
    return t;
}

static void free_table(el_table *t)
{
    for (size_t c = 0; c < t->n_columns; c++) {
        free(t->names[c]);
        free(t->units[c]);
    }
    free(t->names);
    free(t->units);
    free(t->values);
    free(t->source_line);
    free(t->missing);
    memset(t, 0, sizeof *t);
}

static double *cell(el_table *t, size_t row, size_t col)
{
    return &t->values[col * t->n_rows + row];
}

static double time_of(const el_table *t, size_t row)
{
    return t->values[t->time_column * t->n_rows + row];
}

/* splitmix64 (Steele, Lea & Flood 2014): a fixed-seed source of test data. */
static uint64_t next_random(uint64_t *state)
{
    uint64_t z = (*state += 0x9e3779b97f4a7c15u);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9u;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebu;
    return z ^ (z >> 31);
}

/* Uniform in [-1, 1). */
static double random_signed(uint64_t *state)
{
    return 2.0 * ((double)(next_random(state) >> 11) * 0x1.0p-53) - 1.0;
}

static double line_a(double t) { return 2.5 - 1.75 * t; }
static double line_b(double t) { return 100.0 + 3.0 * t; }

/* Uniform rows t = t0 + r dt, a and b straight lines, c random. */
static el_table uniform_table(size_t n, double t0, double dt)
{
    el_table t = make_table(n);
    uint64_t seed = 42;
    for (size_t r = 0; r < n; r++) {
        double tr = t0 + (double)r * dt;
        *cell(&t, r, COL_TIME) = tr;
        *cell(&t, r, COL_A) = line_a(tr);
        *cell(&t, r, COL_B) = line_b(tr);
        *cell(&t, r, COL_C) = random_signed(&seed);
    }
    return t;
}

/* Rows at t0 + r dt + jitter * dt * u, u uniform in [-1, 1): every step
 * differs from dt by up to 2 jitter. */
static el_table jittered_table(size_t n, double t0, double dt, double jitter, uint64_t seed)
{
    el_table t = make_table(n);
    for (size_t r = 0; r < n; r++) {
        double tr = t0 + (double)r * dt + jitter * dt * random_signed(&seed);
        *cell(&t, r, COL_TIME) = tr;
        *cell(&t, r, COL_A) = line_a(tr);
        *cell(&t, r, COL_B) = line_b(tr);
        *cell(&t, r, COL_C) = random_signed(&seed);
    }
    return t;
}

/* The same table without rows [from, from + count). */
static el_table drop_rows(const el_table *src, size_t from, size_t count)
{
    el_table t = make_table(src->n_rows - count);
    for (size_t r = 0, w = 0; r < src->n_rows; r++) {
        if (r >= from && r < from + count)
            continue;
        for (size_t c = 0; c < N_COLS; c++)
            *cell(&t, w, c) = src->values[c * src->n_rows + r];
        t.source_line[w] = src->source_line[r];
        w++;
    }
    return t;
}

static int compare_doubles(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return (a > b) - (a < b);
}

/* Median step of rows [first, last] by sorting: the reference for dt. */
static double median_step(const el_table *t, size_t first, size_t last)
{
    size_t n = last - first;
    double *s = malloc(n * sizeof *s);
    assert_non_null(s);
    for (size_t i = 0; i < n; i++)
        s[i] = time_of(t, first + i + 1) - time_of(t, first + i);
    qsort(s, n, sizeof *s, compare_doubles);
    double m = n % 2 ? s[n / 2] : s[n / 2 - 1] + (s[n / 2] - s[n / 2 - 1]) / 2;
    free(s);
    return m;
}

#define assert_contains(text, part) el_test_assert_contains((text), (part), __FILE__, __LINE__)

static void el_test_assert_contains(const char *text, const char *part, const char *file,
                                    int line)
{
    if (strstr(text, part) == NULL) {
        print_error("%s:%d: \"%s\" does not contain \"%s\"\n", file, line, text, part);
        _fail(file, line);
    }
}

static void assert_series_empty(const el_series *s)
{
    assert_null(s->values);
    assert_null(s->names);
    assert_int_equal(s->n_samples, 0);
    assert_int_equal(s->n_channels, 0);
}

static char *fmt_time(const el_table *t, double time, char *buf)
{
    return el_table_format_time(t, time, buf, 64);
}

/* ---- tests --------------------------------------------------------------- */

static void test_defaults(void **state)
{
    (void)state;
    el_timebase_options o;
    el_timebase_defaults(&o);
    assert_true(isinf(o.from) && o.from < 0);
    assert_true(isinf(o.to) && o.to > 0);
    assert_int_equal(o.max_gap, 5);
    assert_true(o.jitter_limit == 0.01);
}

/* A uniform log is its own grid: values pass through bit for bit. */
static void test_uniform_passthrough(void **state)
{
    (void)state;
    size_t n = 200;
    el_table t = uniform_table(n, 10.0, 0.25);   /* 0.25 and every time exact in binary */
    size_t channels[3] = {COL_C, COL_A, COL_B};
    el_series s;
    el_warnings w = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, channels, 3, NULL, &s, &w, &err), EL_OK);
    assert_int_equal(s.n_samples, n);
    assert_int_equal(s.n_channels, 3);
    assert_int_equal(s.rows_used, n);
    assert_true(s.t0 == 10.0);
    /* dt = span / intervals = 49.75 / 199: both exact, quotient 0.25 exact. */
    assert_true(s.dt == 0.25);
    assert_int_equal(s.resampled, 0);
    assert_int_equal(s.filled_cells, 0);
    assert_true(s.jitter == 0.0);
    assert_int_equal(w.count, 0);
    for (size_t c = 0; c < 3; c++) {
        assert_int_equal(s.source_column[c], channels[c]);
        assert_string_equal(s.names[c], t.names[channels[c]]);
        assert_string_equal(s.units[c], t.units[channels[c]]);
        assert_ptr_not_equal(s.names[c], t.names[channels[c]]);
        assert_memory_equal(s.values + c * n, cell(&t, 0, channels[c]), n * sizeof(double));
    }
    el_series_free(&s);
    assert_series_empty(&s);
    el_series_free(&s);   /* twice is harmless */
    el_series_free(NULL);
    free_table(&t);
}

/* Times like r * 0.1 are not exact in binary: steps differ by an ulp or so.
 * Still the grid, values unchanged, dt = span / intervals. */
static void test_uniform_inexact_times(void **state)
{
    (void)state;
    size_t n = 1001;
    el_table t = uniform_table(n, 0.0, 0.1);
    size_t ch = COL_C;
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_OK);
    assert_int_equal(s.resampled, 0);
    assert_int_equal(s.n_samples, n);
    /* t[1000] = 1000 * 0.1 rounds to within 1 ulp of 100; relative error of
     * span / 1000 is then ~1e-16; 1e-14 is a generous margin. */
    assert_close(s.dt, 0.1, 1e-14, 0);
    /* Step rounding: |step - dt| / dt ~ ulp(100) / 0.1 ~ 1.4e-13. */
    assert_true(s.jitter < 1e-11);
    assert_memory_equal(s.values, cell(&t, 0, COL_C), n * sizeof(double));
    el_series_free(&s);
    free_table(&t);
}

/* Steps within the 1% limit keep the rows as they are (no resampling). */
static void test_small_jitter_keeps_rows(void **state)
{
    (void)state;
    size_t n = 300;
    el_table t = jittered_table(n, 1.0, 0.5, 0.002, 7);   /* steps vary by <= 0.4% */
    size_t ch[2] = {COL_A, COL_B};
    el_series s;
    el_warnings w = {0};
    el_error err;
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, &w, &err), EL_OK);
    assert_int_equal(s.resampled, 0);
    assert_int_equal(w.count, 0);
    assert_int_equal(s.n_samples, n);
    assert_true(s.t0 == time_of(&t, 0));
    assert_memory_equal(s.values, cell(&t, 0, COL_A), n * sizeof(double));
    assert_memory_equal(s.values + n, cell(&t, 0, COL_B), n * sizeof(double));
    /* Reference jitter: max |step - median| / median, median by sorting. */
    double med = median_step(&t, 0, n - 1), jit = 0;
    for (size_t r = 1; r < n; r++) {
        double d = fabs(time_of(&t, r) - time_of(&t, r - 1) - med) / med;
        jit = d > jit ? d : jit;
    }
    /* Same few flops in both computations: agreement to rounding. */
    assert_close(s.jitter, jit, 1e-12, 0);
    assert_true(s.jitter > 0 && s.jitter <= 0.004 + 1e-12);
    /* dt is the mean step over the window (span / intervals). */
    assert_close(s.dt, (time_of(&t, n - 1) - time_of(&t, 0)) / (double)(n - 1), 1e-15, 0);
    el_series_free(&s);
    el_warnings_free(&w);
    free_table(&t);
}

static void test_window_inclusive(void **state)
{
    (void)state;
    size_t n = 100;
    el_table t = uniform_table(n, 0.0, 0.25);
    size_t ch = COL_C;
    el_timebase_options o;
    el_timebase_defaults(&o);
    el_series s;
    el_error err;

    /* Ends exactly on rows 20 and 60: both rows are in. */
    o.from = time_of(&t, 20);
    o.to = time_of(&t, 60);
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_OK);
    assert_int_equal(s.n_samples, 41);
    assert_int_equal(s.rows_used, 41);
    assert_true(s.t0 == time_of(&t, 20));
    assert_memory_equal(s.values, cell(&t, 20, COL_C), 41 * sizeof(double));
    el_series_free(&s);

    /* Ends between rows: rows 21..59. */
    o.from = time_of(&t, 20) + 0.1;
    o.to = time_of(&t, 60) - 0.1;
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_OK);
    assert_int_equal(s.n_samples, 39);
    assert_true(s.t0 == time_of(&t, 21));
    assert_memory_equal(s.values, cell(&t, 21, COL_C), 39 * sizeof(double));
    el_series_free(&s);

    /* Only a start: to the end of the log. */
    o.from = time_of(&t, 90);
    o.to = INFINITY;
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_OK);
    assert_int_equal(s.n_samples, 10);
    assert_memory_equal(s.values, cell(&t, 90, COL_C), 10 * sizeof(double));
    el_series_free(&s);
    free_table(&t);
}

/* Checks the grid of a resampled series against the rows of t: t0 is the
 * first row, dt the median step (by sorting), and the last grid point is
 * the last one inside the log. */
static void check_resampled_grid(const el_series *s, const el_table *t)
{
    size_t n = t->n_rows;
    assert_int_equal(s->resampled, 1);
    assert_true(s->t0 == time_of(t, 0));
    /* Same arithmetic on the same two middle steps: agreement to 1 ulp. */
    assert_close(s->dt, median_step(t, 0, n - 1), 2.3e-16, 0);
    double t_end = time_of(t, n - 1);
    double last_grid = s->t0 + (double)(s->n_samples - 1) * s->dt;
    assert_true(last_grid <= t_end);   /* no extrapolation, not even by rounding */
    assert_true(s->t0 + (double)s->n_samples * s->dt > t_end);
}

/* +/-3% timing jitter: resampled; a straight line comes out exact. */
static void test_resample_linear_exact(void **state)
{
    (void)state;
    size_t n = 400;   /* 399 steps: odd count, median is one step */
    el_table t = jittered_table(n, 5.0, 0.02, 0.03, 1234);
    size_t ch[2] = {COL_A, COL_B};
    el_series s;
    el_warnings w = {0};
    el_error err;
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, &w, &err), EL_OK);
    check_resampled_grid(&s, &t);
    assert_int_equal(s.filled_cells, 0);
    assert_int_equal(s.rows_used, n);
    for (size_t k = 0; k < s.n_samples; k++) {
        double tk = s.t0 + (double)k * s.dt;
        /* Interpolating a line is exact; LINE_RTOL covers rounding only. */
        assert_close(s.values[k], line_a(tk), LINE_RTOL, LINE_RTOL * 20);
        assert_close(s.values[s.n_samples + k], line_b(tk), LINE_RTOL, 0);
    }
    /* Reference jitter over the window, median by sorting. */
    double med = median_step(&t, 0, n - 1), jit = 0;
    for (size_t r = 1; r < n; r++) {
        double d = fabs(time_of(&t, r) - time_of(&t, r - 1) - med) / med;
        jit = d > jit ? d : jit;
    }
    assert_close(s.jitter, jit, 1e-12, 0);
    assert_true(jit > 0.01);   /* else this test would not exercise resampling */
    assert_int_equal(w.count, 1);
    assert_contains(w.items[0], "sample interval varies by up to");
    assert_contains(w.items[0], "(more than 1%)");
    assert_contains(w.items[0], "resampled onto a uniform grid of dt = ");
    assert_contains(w.items[0], " s by linear interpolation");
    el_series_free(&s);
    el_warnings_free(&w);
    free_table(&t);
}

/* A jittered table whose last row is at t0 + k_end med - hair med (as
 * computed in floating point), med being the median step. Returns k_end. */
static double table_ending_near_grid_point(el_table *t, uint64_t seed, double hair)
{
    size_t n = 101;
    *t = jittered_table(n, 0.3, 0.1, 0.03, seed);   /* steps in [0.094, 0.106] */
    double t0 = time_of(t, 0);
    /* A last step longer than every other keeps the median where it is
     * whatever its exact length. */
    *cell(t, n - 1, COL_TIME) = time_of(t, n - 2) + 0.12;
    double med = median_step(t, 0, n - 1);
    double k_end = floor((time_of(t, n - 1) - t0) / med) + 1;
    double t_end = t0 + k_end * med - hair * med;
    *cell(t, n - 1, COL_TIME) = t_end;
    *cell(t, n - 1, COL_A) = line_a(t_end);
    *cell(t, n - 1, COL_B) = line_b(t_end);
    assert_true(median_step(t, 0, n - 1) == med);
    return k_end;
}

/* The grid ends at the last grid point that is not past the last row:
 * one exactly on it is kept (even when the division span / dt rounds to
 * just below a whole number), one a hair (1e-10 dt) after it is dropped
 * rather than extrapolated. */
static void test_resample_grid_end(void **state)
{
    (void)state;
    size_t ch[2] = {COL_A, COL_B};
    el_series s;
    el_error err;
    int rounded_below = 0;
    for (uint64_t seed = 1; seed <= 200; seed++) {
        for (int hair = 0; hair <= 1; hair++) {
            el_table t;
            double k_end = table_ending_near_grid_point(&t, seed, hair ? 1e-10 : 0.0);
            double t0 = time_of(&t, 0), t_end = time_of(&t, t.n_rows - 1);
            double med = median_step(&t, 0, t.n_rows - 1);
            if (!hair && (t_end - t0) / med < k_end)
                rounded_below = 1;
            assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, NULL, &err), EL_OK);
            check_resampled_grid(&s, &t);
            /* Grid points 0 .. k_end, or 0 .. k_end - 1 with the hair. */
            assert_int_equal(s.n_samples, (size_t)k_end + (hair ? 0 : 1));
            size_t k = s.n_samples - 1;
            assert_close(s.values[s.n_samples + k], line_b(s.t0 + (double)k * s.dt), LINE_RTOL, 0);
            el_series_free(&s);
            free_table(&t);
        }
    }
    assert_true(rounded_below);   /* the rounding case was met at least once */
}

/* A slow sine (50 samples per period) resampled from jittered rows is
 * within the linear interpolation error bound h^2/8 max|x''|. */
static void test_resample_sine_bound(void **state)
{
    (void)state;
    size_t n = 301;   /* 300 steps: even count, median between two steps */
    double dt = 0.01, omega = 2 * acos(-1.0) / (50 * dt);
    el_table t = jittered_table(n, 0.0, dt, 0.03, 99);
    double h = 0;
    for (size_t r = 0; r < n; r++) {
        *cell(&t, r, COL_A) = sin(omega * time_of(&t, r));
        if (r > 0 && time_of(&t, r) - time_of(&t, r - 1) > h)
            h = time_of(&t, r) - time_of(&t, r - 1);
    }
    size_t ch = COL_A;
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_OK);
    check_resampled_grid(&s, &t);
    /* max|x''| = omega^2; h = longest row step (<= 1.06 dt): bound ~2e-3,
     * while a grid off by one sample would be off by ~omega dt = 0.13. */
    double bound = h * h / 8 * omega * omega;
    double worst = 0;
    for (size_t k = 0; k < s.n_samples; k++) {
        double e = fabs(s.values[k] - sin(omega * (s.t0 + (double)k * s.dt)));
        worst = e > worst ? e : worst;
    }
    if (worst > bound + 1e-12) {
        print_error("interpolation error %.17g exceeds h^2/8 max|x''| = %.17g\n", worst, bound);
        fail();
    }
    el_series_free(&s);
    free_table(&t);
}

/* A run of exactly max_gap missing cells is filled; a line exactly. */
static void test_fill_max_gap(void **state)
{
    (void)state;
    size_t n = 100;
    el_table t = uniform_table(n, 2.0, 0.125);
    for (size_t r = 40; r < 45; r++)   /* 5 = default max_gap */
        *cell(&t, r, COL_A) = NAN;
    *cell(&t, 70, COL_B) = NAN;
    *cell(&t, 71, COL_B) = NAN;
    size_t ch[3] = {COL_A, COL_B, COL_C};
    el_series s;
    el_warnings w = {0};
    el_error err;
    assert_int_equal(el_series_build(&t, ch, 3, NULL, &s, &w, &err), EL_OK);
    assert_int_equal(s.filled_cells, 7);
    assert_int_equal(s.resampled, 0);
    for (size_t k = 0; k < n; k++) {
        double tk = time_of(&t, k);
        assert_close(s.values[k], line_a(tk), LINE_RTOL, LINE_RTOL * 20);
        assert_close(s.values[n + k], line_b(tk), LINE_RTOL, 0);
        if (k < 40 || k >= 45)   /* present cells are copied, not recomputed */
            assert_true(s.values[k] == *cell(&t, k, COL_A));
    }
    assert_memory_equal(s.values + 2 * n, cell(&t, 0, COL_C), n * sizeof(double));
    assert_int_equal(w.count, 1);
    assert_contains(w.items[0], "filled 7 missing samples in 2 channels");
    assert_contains(w.items[0], "longest run 5 samples");
    el_series_free(&s);
    el_warnings_free(&w);

    /* A smaller --max-gap: the run of 2 in b is still filled... */
    el_timebase_options o;
    el_timebase_defaults(&o);
    o.max_gap = 2;
    assert_int_equal(el_series_build(&t, &ch[1], 1, &o, &s, NULL, &err), EL_OK);
    assert_int_equal(s.filled_cells, 2);
    el_series_free(&s);
    /* ...and the run of 5 in a is refused. */
    assert_int_equal(el_series_build(&t, &ch[0], 1, &o, &s, NULL, &err), EL_ERR_DATA);
    assert_contains(err.message, "5 samples");
    free_table(&t);
}

static void test_gap_too_long(void **state)
{
    (void)state;
    size_t n = 100;
    el_table t = uniform_table(n, 2.0, 0.125);
    for (size_t r = 40; r < 46; r++)   /* 6 = max_gap + 1 */
        *cell(&t, r, COL_A) = NAN;
    size_t ch[2] = {COL_B, COL_A};
    el_series s;
    el_warnings w = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, &w, &err), EL_ERR_DATA);
    assert_series_empty(&s);
    assert_int_equal(w.count, 0);
    char before[64], after[64];
    assert_contains(err.message, "channel 'a'");
    assert_contains(err.message, "6 samples");
    assert_contains(err.message, fmt_time(&t, time_of(&t, 39), before));
    assert_contains(err.message, fmt_time(&t, time_of(&t, 46), after));
    assert_contains(err.hint, "--from/--to");
    assert_contains(err.hint, "--max-gap 6");
    assert_string_equal(err.file, "hand.csv");
    assert_int_equal(err.line, t.source_line[40]);
    assert_int_equal(err.column, COL_A + 1);
    free_table(&t);
}

/* Rows missing from the log (a step of m dt) are missing samples too. */
static void test_time_gap(void **state)
{
    (void)state;
    size_t n = 120;
    el_table full = uniform_table(n, 0.0, 0.5);
    el_table t = drop_rows(&full, 50, 5);   /* 5 = max_gap rows absent */
    size_t ch[2] = {COL_A, COL_B};
    el_series s;
    el_warnings w = {0};
    el_error err;
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, &w, &err), EL_OK);
    assert_int_equal(s.resampled, 0);
    assert_int_equal(s.n_samples, n);
    assert_int_equal(s.rows_used, n - 5);
    assert_int_equal(s.filled_cells, 10);
    assert_true(s.dt == 0.5);   /* 59.5 / 119: exact */
    for (size_t k = 0; k < n; k++) {
        double tk = time_of(&full, k);
        assert_close(s.values[k], line_a(tk), LINE_RTOL, LINE_RTOL * 20);
        assert_close(s.values[n + k], line_b(tk), LINE_RTOL, 0);
    }
    assert_int_equal(w.count, 1);
    assert_contains(w.items[0], "filled 10 missing samples in 2 channels");
    el_series_free(&s);
    el_warnings_free(&w);
    free_table(&t);

    /* A missing cell next to the time gap makes the run one longer. */
    t = drop_rows(&full, 50, 5);
    *cell(&t, 49, COL_A) = NAN;
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_contains(err.message, "channel 'a' is missing for 6 samples");
    assert_int_equal(err.line, t.source_line[49]);   /* the first missing cell */
    assert_int_equal(err.column, COL_A + 1);
    free_table(&t);

    /* max_gap + 1 rows absent: refused, pointing at the row after the gap. */
    t = drop_rows(&full, 50, 6);
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_series_empty(&s);
    char before[64], after[64];
    assert_contains(err.message, "the log has no rows for 6 samples");
    assert_contains(err.message, fmt_time(&t, time_of(&t, 49), before));
    assert_contains(err.message, fmt_time(&t, time_of(&t, 50), after));
    assert_contains(err.hint, "--max-gap 6");
    assert_int_equal(err.line, t.source_line[50]);
    assert_int_equal(err.column, COL_TIME + 1);
    free_table(&t);
    free_table(&full);

    /* A step of 1e12 + 1 intervals (1e12 missing samples) is refused
     * before anything of that size is allocated. */
    t = uniform_table(40, 0.0, 1.0);
    for (size_t r = 20; r < 40; r++)
        *cell(&t, r, COL_TIME) += 1e12;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_contains(err.message, "the log has no rows for 1000000000000 samples");
    free_table(&t);
}

/* Gaps in a jittered (resampled) log: counted and filled the same way. */
static void test_gap_when_resampled(void **state)
{
    (void)state;
    size_t n = 200;
    el_table full = jittered_table(n, 0.0, 0.1, 0.03, 5);
    el_table t = drop_rows(&full, 80, 3);
    *cell(&t, 120, COL_B) = NAN;
    *cell(&t, 121, COL_B) = NAN;
    size_t ch[2] = {COL_A, COL_B};
    el_series s;
    el_warnings w = {0};
    el_error err;
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, &w, &err), EL_OK);
    assert_int_equal(s.resampled, 1);
    assert_int_equal(s.filled_cells, 3 + 3 + 2);
    for (size_t k = 0; k < s.n_samples; k++) {
        double tk = s.t0 + (double)k * s.dt;
        assert_close(s.values[k], line_a(tk), LINE_RTOL, LINE_RTOL * 20);
        assert_close(s.values[s.n_samples + k], line_b(tk), LINE_RTOL, 0);
    }
    assert_int_equal(w.count, 2);
    assert_contains(w.items[0], "resampled");
    assert_contains(w.items[1], "filled 8 missing samples in 2 channels");
    el_series_free(&s);
    el_warnings_free(&w);

    /* Six missing cells in a row in b: refused with the range. */
    for (size_t r = 120; r < 126; r++)
        *cell(&t, r, COL_B) = NAN;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, &w, &err), EL_ERR_DATA);
    assert_int_equal(w.count, 0);
    char before[64], after[64];
    assert_contains(err.message, "channel 'b' is missing for 6 samples");
    assert_contains(err.message, fmt_time(&t, time_of(&t, 119), before));
    assert_contains(err.message, fmt_time(&t, time_of(&t, 126), after));
    assert_int_equal(err.line, t.source_line[120]);
    assert_int_equal(err.column, COL_B + 1);
    free_table(&t);
    free_table(&full);
}

static void test_time_backwards(void **state)
{
    (void)state;
    el_table t = uniform_table(50, 0.0, 1.0);
    *cell(&t, 7, COL_TIME) = 5.5;   /* row 6 is at 6 */
    size_t ch = COL_A;
    el_series s;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_series_empty(&s);
    assert_contains(err.message, "time goes backwards");
    assert_contains(err.hint, "sort");
    assert_int_equal(err.line, t.source_line[7]);
    assert_int_equal(err.column, COL_TIME + 1);

    /* Checked over the whole log, also outside the window. */
    el_timebase_options o;
    el_timebase_defaults(&o);
    o.from = 20;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_ERR_DATA);
    assert_int_equal(err.line, t.source_line[7]);
    free_table(&t);
}

static void test_time_repeats(void **state)
{
    (void)state;
    el_table t = uniform_table(50, 0.0, 1.0);
    *cell(&t, 31, COL_TIME) = time_of(&t, 30);
    size_t ch = COL_A;
    el_series s;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_contains(err.message, "time repeats");
    assert_contains(err.hint, "different values");
    assert_int_equal(err.line, t.source_line[31]);
    assert_int_equal(err.column, COL_TIME + 1);
    free_table(&t);
}

static void check_edge(el_table *t, size_t row, const char *option_in_hint,
                       const el_timebase_options *opt)
{
    size_t ch[2] = {COL_A, COL_B};
    el_series s;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_series_build(t, ch, 2, opt, &s, NULL, &err), EL_ERR_DATA);
    assert_series_empty(&s);
    assert_contains(err.message, "channel 'b'");
    assert_contains(err.hint, option_in_hint);
    assert_int_equal(err.line, t->source_line[row]);
    assert_int_equal(err.column, COL_B + 1);
}

/* A missing value at either end of the window has one neighbour only. */
static void test_missing_at_edges(void **state)
{
    (void)state;
    size_t n = 60;
    el_timebase_options o;
    el_timebase_defaults(&o);
    el_table t[2] = {uniform_table(n, 0.0, 1.0), jittered_table(n, 0.0, 1.0, 0.03, 3)};
    for (int i = 0; i < 2; i++) {
        el_series s;
        el_error err;
        size_t ch[2] = {COL_A, COL_B};
        el_timebase_defaults(&o);
        *cell(&t[i], 0, COL_B) = NAN;
        check_edge(&t[i], 0, "--from", &o);
        o.from = time_of(&t[i], 1);   /* moving the window past it helps */
        assert_int_equal(el_series_build(&t[i], ch, 2, &o, &s, NULL, &err), EL_OK);
        el_series_free(&s);

        el_timebase_defaults(&o);
        o.from = time_of(&t[i], 1);
        *cell(&t[i], n - 1, COL_B) = NAN;
        *cell(&t[i], n - 2, COL_B) = NAN;
        check_edge(&t[i], n - 2, "--to", &o);
        o.to = time_of(&t[i], n - 3);
        assert_int_equal(el_series_build(&t[i], ch, 2, &o, &s, NULL, &err), EL_OK);
        assert_int_equal(s.filled_cells, 0);
        el_series_free(&s);

        /* A window starting at a missing cell inside the log: same. */
        el_timebase_defaults(&o);
        *cell(&t[i], 30, COL_B) = NAN;
        o.from = time_of(&t[i], 30);
        o.to = time_of(&t[i], 40);
        check_edge(&t[i], 30, "--from", &o);
        free_table(&t[i]);
    }
}

static void test_channel_all_missing(void **state)
{
    (void)state;
    el_table t = uniform_table(20, 0.0, 1.0);
    for (size_t r = 0; r < 20; r++)
        *cell(&t, r, COL_C) = NAN;
    size_t ch = COL_C;
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_contains(err.message, "channel 'c' has no values");
    free_table(&t);
}

static void test_too_few_samples(void **state)
{
    (void)state;
    el_table t = uniform_table(20, 0.0, 1.0);
    size_t ch = COL_A;
    el_timebase_options o;
    el_timebase_defaults(&o);
    el_series s;
    el_error err;
    for (int rows = 1; rows <= 2; rows++) {
        o.from = 5;
        o.to = 5 + rows - 1;
        el_error_clear(&err);
        assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_ERR_DATA);
        assert_series_empty(&s);
        assert_contains(err.message, "at least 3");
        assert_contains(err.hint, "--from/--to");
    }
    o.to = 7;   /* three rows: enough */
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_OK);
    assert_int_equal(s.n_samples, 3);
    el_series_free(&s);
    free_table(&t);
}

static void test_empty_window(void **state)
{
    (void)state;
    el_table t = uniform_table(20, 100.0, 1.0);   /* spans 100 to 119 */
    size_t ch = COL_A;
    el_timebase_options o;
    el_series s;
    el_error err;
    char first[64], last[64];
    fmt_time(&t, 100.0, first);
    fmt_time(&t, 119.0, last);

    el_timebase_defaults(&o);
    o.from = 200;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_ERR_USAGE);
    assert_series_empty(&s);
    assert_string_equal(err.option, "--from");
    assert_contains(err.hint, first);
    assert_contains(err.hint, last);

    el_timebase_defaults(&o);
    o.to = 50;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--to");
    assert_contains(err.hint, first);

    /* Between two rows. */
    o.from = 105.25;
    o.to = 105.75;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &err), EL_ERR_USAGE);
    assert_contains(err.message, "holds no rows");
    free_table(&t);
}

static void test_bad_arguments(void **state)
{
    (void)state;
    el_table t = uniform_table(20, 0.0, 1.0);
    el_timebase_options o;
    el_timebase_defaults(&o);
    el_series s;
    el_error err;
    size_t time_ch = COL_TIME, outside = N_COLS, ok = COL_A;
    assert_int_equal(el_series_build(&t, &time_ch, 1, NULL, &s, NULL, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_series_build(&t, &outside, 1, NULL, &s, NULL, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_series_build(&t, &ok, 0, NULL, &s, NULL, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_series_build(NULL, &ok, 1, NULL, &s, NULL, &err), EL_ERR_INTERNAL);
    assert_int_equal(el_series_build(&t, &ok, 1, NULL, NULL, NULL, &err), EL_ERR_INTERNAL);
    o.from = 10;
    o.to = 5;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ok, 1, &o, &s, NULL, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--from");
    el_timebase_defaults(&o);
    o.to = NAN;
    el_error_clear(&err);
    assert_int_equal(el_series_build(&t, &ok, 1, &o, &s, NULL, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--to");
    free_table(&t);
}

/* With ISO time stamps the messages carry calendar times from the table's
 * own formatter. */
static void test_iso_times_in_messages(void **state)
{
    (void)state;
    el_table t = uniform_table(40, 0.0, 1.0);
    t.time_is_iso = 1;
    t.time_origin_unix_s = 1700000000;   /* 2023-11-14T22:13:20Z (Python datetime) */
    for (size_t r = 10; r < 16; r++)
        *cell(&t, r, COL_A) = NAN;
    size_t ch = COL_A;
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_ERR_DATA);
    char before[64], after[64];
    fmt_time(&t, 9.0, before);
    fmt_time(&t, 16.0, after);
    assert_contains(before, "2023-11-14T22:13:29");   /* the formatter gave a calendar time */
    assert_contains(err.message, before);
    assert_contains(err.message, after);
    free_table(&t);
}

/* 1,000,000 rows x 8 channels, jittered (the costlier resampling path):
 * must finish quickly, which a quadratic step would not. */
static void test_large_log(void **state)
{
    (void)state;
    size_t n = 1000000, n_ch = 8, n_cols = n_ch + 1;
    el_table t;
    memset(&t, 0, sizeof t);
    t.n_rows = n;
    t.n_columns = n_cols;
    t.time_column = 0;
    t.names = malloc(n_cols * sizeof *t.names);
    t.units = malloc(n_cols * sizeof *t.units);
    t.values = malloc(n * n_cols * sizeof *t.values);
    t.source_line = malloc(n * sizeof *t.source_line);
    t.missing = calloc(n_cols, sizeof *t.missing);
    assert_true(t.names && t.units && t.values && t.source_line && t.missing);
    uint64_t seed = 11;
    for (size_t c = 0; c < n_cols; c++) {
        char name[16];
        snprintf(name, sizeof name, "x%zu", c);
        t.names[c] = dup_text(name);
        t.units[c] = dup_text("");
    }
    for (size_t r = 0; r < n; r++) {
        double tr = (double)r * 1e-3 + 3e-5 * random_signed(&seed);
        t.values[r] = tr;
        t.source_line[r] = (long)r + 2;
        for (size_t c = 1; c < n_cols; c++)
            t.values[c * n + r] = (double)c * tr;
    }
    size_t ch[8];
    for (size_t c = 0; c < n_ch; c++)
        ch[c] = c + 1;
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, ch, n_ch, NULL, &s, NULL, &err), EL_OK);
    assert_int_equal(s.resampled, 1);
    assert_int_equal(s.n_channels, n_ch);
    /* dt against the median by sorting 999,999 steps (second method). */
    assert_close(s.dt, median_step(&t, 0, n - 1), 2.3e-16, 0);
    /* Spot check: channel c is c t, exact under interpolation. */
    size_t k = s.n_samples / 2;
    assert_close(s.values[7 * s.n_samples + k], 8 * (s.t0 + (double)k * s.dt), LINE_RTOL, 0);
    el_series_free(&s);
    free_table(&t);
}


/* scan and assess share one rule (issue 9: scan said "assess will
 * resample" for a log assess then refused): el_timebase_survey must judge
 * each log as el_series_build does. */
static void test_survey_agrees_with_build(void **state)
{
    (void)state;
    size_t ch = COL_A;
    el_series s;
    el_error err, build_err;
    el_time_survey v;
    /* 1. Steps back and repeated: both refuse, with the same error. */
    el_table t = uniform_table(50, 0.0, 1.0);
    *cell(&t, 20, COL_TIME) = 18.5; /* back from 19 */
    *cell(&t, 30, COL_TIME) = 29.0; /* repeats row 29 */
    *cell(&t, 31, COL_TIME) = 29.0; /* and again */
    assert_int_equal(el_timebase_survey(&t, NULL, &v, &err), EL_OK);
    assert_false(v.usable);
    assert_int_equal(v.backward_steps, 1);
    assert_int_equal(v.repeated_steps, 2);
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &build_err), EL_ERR_DATA);
    assert_string_equal(v.refusal.message, build_err.message);
    assert_int_equal(v.refusal.line, build_err.line);
    assert_int_equal(v.refusal.line, 3 + 2 * 20);
    assert_contains(build_err.message, "1 step back, 2 repeated in all");
    free_table(&t);
    /* 2. A time gap of 2 missing rows on the grid: no resampling (scan's
     * old test, |step - median| > 1%, called it jitter). */
    t = uniform_table(50, 0.0, 1.0);
    for (size_t r = 20; r < 50; r++)
        *cell(&t, r, COL_TIME) += 2.0;
    assert_int_equal(el_timebase_survey(&t, NULL, &v, &err), EL_OK);
    assert_true(v.usable);
    assert_false(v.resample);
    assert_close(v.longest_gap, 2.0, 0, 0);
    assert_int_equal(v.gap_row, 0);
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_OK);
    assert_false(s.resampled);
    el_series_free(&s);
    /* 3. The same gap with --max-gap 1: both refuse a window across it. */
    el_timebase_options o;
    el_timebase_defaults(&o);
    o.max_gap = 1;
    assert_int_equal(el_timebase_survey(&t, &o, &v, &err), EL_OK);
    assert_int_equal(v.gap_row, 20);
    assert_int_equal(el_series_build(&t, &ch, 1, &o, &s, NULL, &build_err), EL_ERR_DATA);
    assert_int_equal(build_err.line, 3 + 2 * 20);
    free_table(&t);
    /* 4. Jitter of 3% of the interval: both resample. */
    t = jittered_table(200, 0.0, 1.0, 0.03, 5);
    assert_int_equal(el_timebase_survey(&t, NULL, &v, &err), EL_OK);
    assert_true(v.resample);
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_OK);
    assert_true(s.resampled);
    assert_close(v.jitter, s.jitter, 0, 0);
    el_series_free(&s);
    free_table(&t);
}

/* A table sampled every num / den stamp units exactly (1 ms units and
 * 10 / 3: 300 Hz) whose stamps were written in whole units, rounded or cut
 * off (truncate), as a logger at 300 Hz that stamps whole milliseconds
 * writes 0, 3, 7, 10, 13, 17 ms; integer arithmetic, so the stamps are
 * exactly what such a logger writes. a,b hold lines in the true sample
 * times. skip (if < n) is a row left out. */
static el_table stamped_table(size_t n, double t0, long num, long den, double unit_s,
                              int truncate, size_t skip)
{
    el_table t = make_table(n);
    size_t r = 0;
    for (long k = 0; r < n; k++) {
        if ((size_t)k == skip)
            continue;
        long units = truncate ? (k * num) / den : (2 * k * num + den) / (2 * den);
        double tk = t0 + (double)k * (double)num / (double)den * unit_s;
        *cell(&t, r, COL_TIME) = t0 + (double)units * unit_s;
        *cell(&t, r, COL_A) = line_a(tk);
        *cell(&t, r, COL_B) = line_b(tk);
        r++;
    }
    return t;
}

/* Stamps rounded (or cut) to a coarse resolution: the rows are the
 * uniform grid they were sampled on, read through the rounding, not a
 * jittered log to resample (resampling 300 Hz data onto the 3 ms median
 * step distorts it periodically). Checked against the true interval,
 * 1/300 s: the least-squares slope of N stamps with rounding errors of
 * sd q / sqrt(12) has sd q sqrt(12 / N^3) / sqrt(12) (the slope's
 * variance, any regression text, e.g. Draper & Smith, "Applied Regression
 * Analysis", section 1.4, section number recalled from memory): 5e-9 s
 * at N = 3,000, q = 1 ms, i.e. 1.6e-6 of dt; the tolerance 2e-5 is over
 * ten of those. The values pass through untouched (bit for bit). */
static void test_rounded_stamps_read_as_grid(void **state)
{
    (void)state;
    size_t ch[2] = {COL_A, COL_B}, n = 3000;
    const double dt = 1.0 / 300.0;
    for (int truncate = 0; truncate <= 1; truncate++) {
        for (int epoch = 0; epoch <= 1; epoch++) {
            /* epoch: Unix seconds of 2026, where a millisecond is the 13th digit */
            double t0 = epoch ? 1.7912e9 : 0.0;
            el_table t = stamped_table(n, t0, 10, 3, 1e-3, truncate, n);
            el_series s;
            el_warnings w = {0};
            el_error err;
            assert_int_equal(el_series_build(&t, ch, 2, NULL, &s, &w, &err), EL_OK);
            assert_false(s.resampled);
            assert_int_equal(s.n_samples, n);
            assert_close(s.dt, dt, 2e-5, 0.0);
            /* A stamp near 1.8e9 s is a double within half an ulp (1.2e-7
             * s) of its decimal: a step, and so q, within two of those. */
            assert_close(s.stamp_step, 1e-3, 1e-9, 4.0 * DBL_EPSILON * (t0 + 10.0));
            assert_true(s.jitter <= 0.5 * 1e-3 / dt + 1e-6);
            for (size_t k = 0; k < n; k++)
                assert_true(s.values[k] == *cell(&t, k, COL_A));
            assert_int_equal(w.count, 1);
            assert_contains(w.items[0], "the time stamps are written to 0.001 s");
            assert_contains(w.items[0], "(300 Hz), not resampled");
            el_time_survey v;
            assert_int_equal(el_timebase_survey(&t, NULL, &v, &err), EL_OK);
            assert_false(v.resample);
            assert_close(v.dt_grid, s.dt, 1e-12, 0.0);
            assert_close(v.stamp_step, s.stamp_step, 0.0, 0.0);
            el_series_free(&s);
            el_warnings_free(&w);
            free_table(&t);
        }
    }
    /* A row missing from such a log: still the grid, the sample filled. */
    el_table t = stamped_table(n, 0.0, 10, 3, 1e-3, 0, 1234);
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, ch, 1, NULL, &s, NULL, &err), EL_OK);
    assert_false(s.resampled);
    assert_int_equal(s.n_samples, n + 1);
    assert_int_equal(s.filled_cells, 1);
    assert_close(s.dt, dt, 2e-5, 0.0);
    el_series_free(&s);
    free_table(&t);
}

/* What rounding cannot explain is still resampled: steps of 3 and 4 ms in
 * a random order (a logger whose interval wanders: the phase walks away
 * from any uniform grid by far more than a millisecond), and continuous
 * jitter of 3 % (no resolution to read through). */
static void test_irregular_stamps_still_resampled(void **state)
{
    (void)state;
    size_t ch = COL_A, n = 3000;
    el_table t = make_table(n);
    uint64_t seed = 99;
    double tr = 0.0;
    for (size_t r = 0; r < n; r++) {
        *cell(&t, r, COL_TIME) = tr * 1e-3;
        *cell(&t, r, COL_A) = line_a(tr * 1e-3);
        tr += random_signed(&seed) < 0.333 ? 3.0 : 4.0;
    }
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_OK);
    assert_true(s.resampled);
    assert_true(s.stamp_step == 0.0);
    el_series_free(&s);
    free_table(&t);
    t = jittered_table(3000, 0.0, 1.0, 0.03, 7);
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_OK);
    assert_true(s.resampled);
    assert_true(s.stamp_step == 0.0);
    el_series_free(&s);
    free_table(&t);
}

/* Stamps coarser than the sampling: 2 kHz stamped in whole ms (each stamp
 * twice) and 10 Hz stamped in whole seconds (each ten times). Every row is
 * the next sample of a uniform grid; the interval is the least-squares
 * slope of the stair of stamps against the row number, which for a stair
 * of S whole steps is the true interval times about 1 - 1/S^2 (a line
 * fitted to a sampled staircase; closed form of the regression of floor(k/
 * r) on k), so 1e-3 relative holds for 60 stairs and more. A row written
 * twice in a log stamped as often as it samples is refused as before. */
static void test_repeated_stamps_read_as_grid(void **state)
{
    (void)state;
    size_t ch = COL_A;
    const long per_stamp[2] = {2, 10};
    const size_t rows[2] = {4000, 600};
    for (size_t c = 0; c < 2; c++) {
        el_table t = stamped_table(rows[c], 0.0, 1, per_stamp[c], 1.0, 1, rows[c]);
        el_series s;
        el_warnings w = {0};
        el_error err;
        assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, &w, &err), EL_OK);
        assert_false(s.resampled);
        assert_int_equal(s.n_samples, rows[c]);
        assert_close(s.dt, 1.0 / (double)per_stamp[c], 1e-3, 0.0);
        assert_close(s.stamp_step, 1.0, 1e-12, 0.0);
        for (size_t k = 0; k < rows[c]; k++)
            assert_true(s.values[k] == *cell(&t, k, COL_A));
        assert_int_equal(w.count, 1);
        assert_contains(w.items[0], "coarser than the sampling");
        el_time_survey v;
        assert_int_equal(el_timebase_survey(&t, NULL, &v, &err), EL_OK);
        assert_true(v.usable);
        assert_false(v.resample);
        assert_close(v.dt_grid, s.dt, 1e-12, 0.0);
        el_series_free(&s);
        el_warnings_free(&w);
        free_table(&t);
    }
    el_table t = uniform_table(50, 0.0, 1.0);
    *cell(&t, 21, COL_TIME) = time_of(&t, 20);    /* row 21 repeats row 20's time */
    for (size_t r = 22; r < 50; r++)
        *cell(&t, r, COL_TIME) -= 1.0;
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_contains(err.message, "time repeats");
    el_time_survey v;
    assert_int_equal(el_timebase_survey(&t, NULL, &v, &err), EL_OK);
    assert_false(v.usable);
    free_table(&t);
}

/* Files read as one log: an error at a row names the row's own file. */
static void test_error_names_the_rows_file(void **state)
{
    (void)state;
    el_table t = uniform_table(40, 0.0, 1.0);
    t.n_sources = 2;
    t.sources = malloc(2 * sizeof *t.sources);
    t.source_file = malloc(40 * sizeof *t.source_file);
    assert_true(t.sources && t.source_file);
    t.sources[0] = dup_text("day1.csv");
    t.sources[1] = dup_text("day2.csv");
    for (size_t r = 0; r < 40; r++)
        t.source_file[r] = r < 20 ? 0 : 1;
    *cell(&t, 20, COL_TIME) = 18.0; /* day2 starts before day1 ends */
    size_t ch = COL_A;
    el_series s;
    el_error err;
    assert_int_equal(el_series_build(&t, &ch, 1, NULL, &s, NULL, &err), EL_ERR_DATA);
    assert_string_equal(err.file, "day2.csv");
    assert_contains(err.hint, "overlap");
    free(t.sources[0]);
    free(t.sources[1]);
    free(t.sources);
    free(t.source_file);
    free_table(&t);
}

/* scan selects the median step once: el_scan_table's dt_step is the median
 * as the timebase computes it (the sorted steps' middle, for an even count
 * lower + (upper - lower) / 2: median_step here), and
 * el_timebase_survey_step given it gives el_timebase_survey's result field
 * by field. Even and odd counts, jittered steps, and two step sizes far
 * apart (1 and 7 ms, even count: the middle pair straddles them, where
 * 0.5 (lower + upper) may differ in the last bit). */
static void test_survey_step_from_scan(void **state)
{
    (void)state;
    for (int k = 0; k < 6; k++) {
        size_t n = 200 + (size_t)k * 37;
        el_table t = k < 4 ? jittered_table(n, 5.0, 0.01, 0.2 * k, 77 + (uint64_t)k)
                           : uniform_table(n, 0.0, 0.001);
        if (k >= 4)
            for (size_t r = 0; r < n; r++)
                *cell(&t, r, COL_TIME) = 0.001 * (double)r + 0.006 * (double)((r + 1) / 2);
        el_scan sc = {0};
        el_error err;
        assert_int_equal(el_scan_table(&t, &sc, &err), EL_OK);
        assert_close(sc.dt_step, median_step(&t, 0, n - 1), 0, 0);
        el_time_survey a, b;
        assert_int_equal(el_timebase_survey(&t, NULL, &a, &err), EL_OK);
        assert_int_equal(el_timebase_survey_step(&t, NULL, sc.dt_step, &b, &err), EL_OK);
        assert_int_equal(a.usable, b.usable);
        assert_close(a.dt_step, b.dt_step, 0, 0);
        assert_close(a.jitter, b.jitter, 0, 0);
        assert_int_equal(a.resample, b.resample);
        assert_close(a.longest_gap, b.longest_gap, 0, 0);
        assert_int_equal(a.gap_row, b.gap_row);
        assert_int_equal(a.backward_steps, b.backward_steps);
        assert_int_equal(a.repeated_steps, b.repeated_steps);
        el_scan_free(&sc);
        free_table(&t);
    }
}

/* The time-base survey's jitter and resample decision are the
 * definition's (docs/method.md: max over steps of |step - m dt| / dt with
 * m = round(step / dt) >= 1; resample when some step is off by more than
 * jitter_limit = 0.01 of dt or m < 1), computed here the plain way, two
 * divisions per step, and compared bit for bit: survey_steps divides the
 * largest numerator once (its speed-up for scan). Jitter below and above
 * the limit, and a gap (m = 3), on logs whose stamps are not rounded (so
 * the survey reports this jitter, not a rounded grid's). */
static void test_survey_jitter_definition(void **state)
{
    (void)state;
    for (int k = 0; k < 5; k++) {
        size_t n = 301 + (size_t)k * 50;
        double amp = k == 0 ? 0.0005 : k == 1 ? 0.004 : k == 2 ? 0.2 : 0.003;
        el_table t = jittered_table(n, 5.0, 0.01, amp, 901 + (uint64_t)k);
        if (k >= 3) {
            el_table g = drop_rows(&t, n / 2, 2);
            free_table(&t);
            t = g;
            n -= 2;
        }
        el_time_survey v;
        el_error err;
        assert_int_equal(el_timebase_survey(&t, NULL, &v, &err), EL_OK);
        assert_true(v.usable);
        assert_true(v.stamp_step == 0.0);
        double dt = v.dt_step, jitter = 0.0;
        int off_grid = 0;
        for (size_t r = 1; r < n; r++) {
            double step = time_of(&t, r) - time_of(&t, r - 1);
            double m = floor(step / dt + 0.5);
            double dev = fabs(step - (m >= 1 ? m : 1) * dt) / dt;
            jitter = dev > jitter ? dev : jitter;
            off_grid |= m < 1 || dev > 0.01;
        }
        assert_close(v.jitter, jitter, 0, 0); /* bit for bit */
        assert_int_equal(v.resample, off_grid);
        assert_int_equal(v.resample, k == 2);
        free_table(&t);
    }
}

/* el_timebase_step_survey's four-steps-at-a-time path (AVX2, where the
 * CPU has it) against the plain loop (allow_avx2 = 0), bit for bit, on
 * times made to reach every branch: jitter below and above the limit,
 * gaps (the first one over max_gap named, the longest one kept), a step
 * back and a repeated stamp (m < 1), steps so large that the intervals'
 * sum is no longer exact in doubles (the in-order sum is then taken
 * again), inf and NaN, and every length from 1 to 40 rows so that the
 * blocks of four end everywhere. The plain loop is the definition
 * (docs/method.md); on a CPU without AVX2 both calls take it. */
static void test_step_survey_paths_agree(void **state)
{
    (void)state;
    enum { N = 40 };
    double t[N];
    el_rng rng;
    el_rng_seed(&rng, 77, 0);
    for (int kind = 0; kind < 8; kind++) {
        t[0] = 100.0;
        for (size_t r = 1; r < N; r++)
            t[r] = t[r - 1] + 0.01 * (1.0 + (kind == 1 ? 0.03 : 0.001) * el_rng_normal(&rng));
        if (kind == 2) {
            t[9] += 0.05;  /* a gap of 5 intervals ... */
            for (size_t r = 10; r < N; r++)
                t[r] += 0.05;
            for (size_t r = 30; r < N; r++)  /* ... and a longer one after it */
                t[r] += 0.2;
        }
        if (kind == 3)
            t[17] = t[16] - 0.004;  /* a step back (m = 0), then one of 2 intervals */
        if (kind == 4)
            t[21] = t[20];  /* a repeated stamp */
        if (kind == 5)
            for (size_t r = 5; r < N; r++)
                t[r] = t[r - 1] + (r % 3 == 0 ? 1e300 : 0.01);
        if (kind == 6)
            t[25] = INFINITY;
        if (kind == 7)
            t[13] = NAN;
        for (size_t last = 0; last < N; last++) {
            for (size_t first = 0; first <= last && first < 6; first++) {
                el_step_survey a, b;
                el_timebase_step_survey(t, first, last, 0.01, 3, 0.01, 0, &a);
                el_timebase_step_survey(t, first, last, 0.01, 3, 0.01, 1, &b);
                assert_memory_equal(&a.intervals, &b.intervals, sizeof a.intervals);
                assert_memory_equal(&a.jitter, &b.jitter, sizeof a.jitter);
                assert_memory_equal(&a.gap_missing, &b.gap_missing, sizeof a.gap_missing);
                assert_memory_equal(&a.longest_gap, &b.longest_gap, sizeof a.longest_gap);
                assert_int_equal(a.on_grid, b.on_grid);
                assert_int_equal(a.gap_row, b.gap_row);
            }
        }
        /* closed forms on the whole log: the gaps of kind 2 span 6 and 21
         * intervals (5 and 20 samples missing), the first past max_gap 3
         * ends at row 9; kind 1's jitter of 3 % of dt leaves the grid */
        el_step_survey a;
        el_timebase_step_survey(t, 0, N - 1, 0.01, 3, 0.01, 1, &a);
        if (kind == 2) {
            assert_int_equal(a.gap_row, 9);
            assert_true(a.gap_missing == 5.0 && a.longest_gap == 20.0);
            assert_true(a.intervals == (double)(N - 1) + 25.0);
        }
        if (kind == 0)
            assert_true(a.on_grid && a.intervals == (double)(N - 1));
        if (kind == 1)
            assert_false(a.on_grid);
        if (kind == 3 || kind == 4)
            assert_false(a.on_grid);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_defaults),
        cmocka_unit_test(test_survey_jitter_definition),
        cmocka_unit_test(test_step_survey_paths_agree),
        cmocka_unit_test(test_uniform_passthrough),
        cmocka_unit_test(test_uniform_inexact_times),
        cmocka_unit_test(test_small_jitter_keeps_rows),
        cmocka_unit_test(test_window_inclusive),
        cmocka_unit_test(test_resample_linear_exact),
        cmocka_unit_test(test_resample_grid_end),
        cmocka_unit_test(test_resample_sine_bound),
        cmocka_unit_test(test_fill_max_gap),
        cmocka_unit_test(test_gap_too_long),
        cmocka_unit_test(test_time_gap),
        cmocka_unit_test(test_gap_when_resampled),
        cmocka_unit_test(test_time_backwards),
        cmocka_unit_test(test_time_repeats),
        cmocka_unit_test(test_missing_at_edges),
        cmocka_unit_test(test_channel_all_missing),
        cmocka_unit_test(test_too_few_samples),
        cmocka_unit_test(test_empty_window),
        cmocka_unit_test(test_bad_arguments),
        cmocka_unit_test(test_iso_times_in_messages),
        cmocka_unit_test(test_large_log),
        cmocka_unit_test(test_survey_agrees_with_build),
        cmocka_unit_test(test_rounded_stamps_read_as_grid),
        cmocka_unit_test(test_irregular_stamps_still_resampled),
        cmocka_unit_test(test_repeated_stamps_read_as_grid),
        cmocka_unit_test(test_survey_step_from_scan),
        cmocka_unit_test(test_error_names_the_rows_file),
    };
    return cmocka_run_group_tests_name("timebase", tests, NULL, NULL);
}
