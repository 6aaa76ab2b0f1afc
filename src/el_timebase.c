/* el_timebase: window selection, uniform grid, gap fill and resampling. */
#include "el_timebase.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Room for an ISO 8601 time with milliseconds and zone, or "%.9g". */
#define TIME_TEXT 64

/* Everything decided about the window before any channel is touched. */
typedef struct {
    const el_table *table;
    const double *time;       /* the table's time column */
    size_t first, last;       /* window rows, inclusive */
    size_t max_gap;
    double dt_step;           /* median step: judges how many intervals a step spans */
    double dt;                /* grid interval */
    double t0;
    size_t n_samples;
    int resample;
    double jitter;
    double stamp_step;        /* > 0: the stamps' resolution, when rounding alone
                                 made the steps vary (find_rounded_grid) */
    size_t repeated_rows;     /* rows whose stamp repeats the one before, read as
                                 the next sample of a grid finer than the stamps
                                 (find_repeated_grid); fill_on_grid then gives
                                 every row one interval */
    el_error order_error;     /* the whole table's "time repeats" error, which
                                 stands unless the window is such a grid */
    int repeats;              /* 1: order_error is set (repeats, nothing back) */
    /* Filled in by the channel passes, for the summary warning. */
    size_t filled;
    size_t channels_filled;
    size_t longest_run;
} timebase_plan;

void el_timebase_defaults(el_timebase_options *opt)
{
    opt->from = -INFINITY;
    opt->to = INFINITY;
    opt->max_gap = 5;
    opt->jitter_limit = 0.01;
}

void el_series_free(el_series *series)
{
    if (series == NULL)
        return;
    for (size_t c = 0; c < series->n_channels; c++) {
        if (series->names != NULL)
            free(series->names[c]);
        if (series->units != NULL)
            free(series->units[c]);
    }
    free(series->names);
    free(series->units);
    free(series->values);
    free(series->source_column);
    memset(series, 0, sizeof *series);
}

/* ---- small helpers ------------------------------------------------------ */

static long row_line(const el_table *table, size_t row)
{
    return table->source_line != NULL ? table->source_line[row] : 0;
}

static const char *column_name(const el_table *table, size_t col)
{
    if (table->names == NULL || table->names[col] == NULL)
        return "?";
    return table->names[col];
}

/* Open window ends are infinite and have no calendar form. */
static char *format_time(const el_table *table, double t, char *buf, size_t size)
{
    if (isinf(t)) {
        snprintf(buf, size, "%s", t < 0 ? "the start" : "the end");
        return buf;
    }
    return el_table_format_time(table, t, buf, size);
}

/* Points the error at a cell of the table (0-based row and column), in
 * the file the row came from when several files make the log. */
static void locate(el_error *err, const el_table *table, size_t row, size_t col)
{
    el_error_at(err, el_table_row_source(table, row), row_line(table, row), (long)col + 1);
}

static char *copy_text(const char *text)
{
    if (text == NULL)
        text = "";
    size_t n = strlen(text) + 1;
    char *copy = malloc(n);
    if (copy != NULL)
        memcpy(copy, text, n);
    return copy;
}

/* " s", " ms" ... after a dt in a message, so the number has its unit. */
static const char *time_unit_suffix(const el_table *table, char *buf, size_t size)
{
    const char *unit = "";
    if (table->time_is_iso)
        unit = "s";
    else if (table->units != NULL && table->units[table->time_column] != NULL)
        unit = table->units[table->time_column];
    snprintf(buf, size, "%s%s", unit[0] != '\0' ? " " : "", unit);
    return buf;
}

/* ---- median in linear expected time ------------------------------------ */

static void swap_double(double *a, double *b)
{
    double t = *a;
    *a = *b;
    *b = t;
}

static int compare_double(const void *pa, const void *pb)
{
    double a = *(const double *)pa, b = *(const double *)pb;
    return (a > b) - (a < b);
}

static double median_of_three(double a, double b, double c)
{
    if (a > b)
        swap_double(&a, &b);
    if (b > c)
        swap_double(&b, &c);
    return a > b ? a : b;
}

/* Quickselect with a three-way partition (runs of equal steps, the usual
 * case in a clean log, cost one pass). A pivot sequence that keeps failing
 * to shrink the range falls back to sorting it, so the worst case is
 * n log n instead of n^2. Leaves a[0..k) <= a[k] <= a[k+1..n). */
static double select_kth(double *a, size_t n, size_t k)
{
    size_t lo = 0, hi = n;
    unsigned budget = 16;
    for (size_t m = n; m > 1; m >>= 1)
        budget += 2;
    while (hi - lo > 1) {
        if (budget-- == 0) {
            qsort(a + lo, hi - lo, sizeof *a, compare_double);
            return a[k];
        }
        double pivot = median_of_three(a[lo], a[lo + (hi - lo) / 2], a[hi - 1]);
        size_t lt = lo, i = lo, gt = hi;
        while (i < gt) {
            if (a[i] < pivot)
                swap_double(&a[lt++], &a[i++]);
            else if (a[i] > pivot)
                swap_double(&a[i], &a[--gt]);
            else
                i++;
        }
        if (k < lt)
            hi = lt;
        else if (k >= gt)
            lo = gt;
        else
            return a[k];
    }
    return a[k];
}

/* Median of a[0..n), n >= 1; reorders a. */
static double median(double *a, size_t n)
{
    size_t k = n / 2;
    double upper = select_kth(a, n, k);
    if (n % 2 == 1)
        return upper;
    double lower = a[0];
    for (size_t i = 1; i < k; i++)
        if (a[i] > lower)
            lower = a[i];
    return lower + (upper - lower) / 2;
}

/* ---- checks before any allocation -------------------------------------- */

static el_status check_arguments(const el_table *table, const size_t *channels,
                                 size_t n_channels, const el_timebase_options *opt,
                                 el_error *err)
{
    if (table == NULL || (channels == NULL && n_channels > 0))
        return el_error_set(err, EL_ERR_INTERNAL, "el_series_build: NULL table or channel list");
    if (n_channels == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "el_series_build: no channels chosen");
    if (table->time_column >= table->n_columns)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_series_build: time column %zu outside a table of %zu columns",
                            table->time_column, table->n_columns);
    if (table->n_rows > 0 && table->values == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_series_build: table without values");
    for (size_t c = 0; c < n_channels; c++) {
        if (channels[c] >= table->n_columns)
            return el_error_set(err, EL_ERR_INTERNAL,
                                "el_series_build: channel column %zu outside a table of %zu columns",
                                channels[c], table->n_columns);
        if (channels[c] == table->time_column)
            return el_error_set(err, EL_ERR_INTERNAL,
                                "el_series_build: the time column '%s' cannot be a channel",
                                column_name(table, channels[c]));
    }
    if (!(opt->jitter_limit >= 0) || isinf(opt->jitter_limit))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_series_build: jitter limit %g is not a finite number >= 0",
                            opt->jitter_limit);
    if (isnan(opt->from) || isnan(opt->to)) {
        el_error_option(err, isnan(opt->from) ? "--from" : "--to");
        el_error_hint(err, "give the window ends as numbers in the log's time units");
        return el_error_set(err, EL_ERR_USAGE, "the window end is not a number");
    }
    if (opt->from > opt->to) {
        char a[TIME_TEXT], b[TIME_TEXT];
        el_error_option(err, "--from");
        el_error_hint(err, "give a --from that is earlier than --to");
        return el_error_set(err, EL_ERR_USAGE, "the window starts (%s) after it ends (%s)",
                            format_time(table, opt->from, a, sizeof a),
                            format_time(table, opt->to, b, sizeof b));
    }
    return EL_OK;
}

/* The whole table, not just the window: rows out of order would make a
 * window chosen by time value pick an arbitrary set of rows. Counts every
 * step that goes back or repeats (for scan) and reports the first. */
static el_status check_time_order(const el_table *table, size_t *backward, size_t *repeated,
                                  el_error *err)
{
    *backward = *repeated = 0;
    if (table->n_rows == 0)
        return EL_OK;
    const double *time = table->values + table->time_column * table->n_rows;
    size_t first = 0;
    for (size_t r = 0; r < table->n_rows; r++) {
        if (!isfinite(time[r])) {
            locate(err, table, r, table->time_column);
            el_error_hint(err, "every row needs a time; remove the rows without one");
            return el_error_set(err, EL_ERR_DATA, "time is missing");
        }
        if (r == 0 || time[r] > time[r - 1])
            continue;
        if (*backward + *repeated == 0)
            first = r;
        if (time[r] == time[r - 1])
            (*repeated)++;
        else
            (*backward)++;
    }
    if (*backward + *repeated == 0)
        return EL_OK;
    size_t r = first;
    char a[TIME_TEXT], b[TIME_TEXT], more[96] = "";
    if (*backward + *repeated > 1)
        snprintf(more, sizeof more, " (%zu step%s back, %zu repeated in all)", *backward,
                 *backward == 1 ? "" : "s", *repeated);
    locate(err, table, r, table->time_column);
    if (time[r] == time[r - 1]) {
        el_error_hint(err, "two rows give this time different values: keep the right one "
                           "(each time may appear once; rows repeated exactly are left out "
                           "by themselves)");
        return el_error_set(err, EL_ERR_DATA, "time repeats: %s again (as on line %ld)%s",
                            format_time(table, time[r], a, sizeof a),
                            row_line(table, r - 1), more);
    }
    el_error_hint(err, "sort the log by time, or split it into parts that are each in time "
                       "order%s", table->n_sources > 1 ? " (files read as one log must not "
                                                         "overlap in time)" : "");
    return el_error_set(err, EL_ERR_DATA, "time goes backwards: %s after %s (line %ld)%s",
                        format_time(table, time[r], a, sizeof a),
                        format_time(table, time[r - 1], b, sizeof b),
                        row_line(table, r - 1), more);
}

/* First index in the increasing time[0..n) with time >= t (or > t when
 * strictly is set); n when there is none. */
static size_t bound(const double *time, size_t n, double t, int strictly)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (time[mid] < t || (strictly && time[mid] == t))
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

static el_status select_window(const el_table *table, const el_timebase_options *opt,
                               timebase_plan *plan, el_error *err)
{
    const double *time = plan->time;
    size_t n = table->n_rows;
    if (n == 0)
        return el_error_set(err, EL_ERR_DATA, "the log has no rows");
    size_t first = bound(time, n, opt->from, 0);
    size_t end = bound(time, n, opt->to, 1);
    if (end <= first) {
        char a[TIME_TEXT], b[TIME_TEXT], c[TIME_TEXT], d[TIME_TEXT];
        el_error_option(err, opt->to < time[0] ? "--to" : "--from");
        el_error_hint(err, "the log spans %s to %s; choose --from and --to inside it",
                      format_time(table, time[0], a, sizeof a),
                      format_time(table, time[n - 1], b, sizeof b));
        return el_error_set(err, EL_ERR_USAGE, "the window from %s to %s holds no rows",
                            format_time(table, opt->from, c, sizeof c),
                            format_time(table, opt->to, d, sizeof d));
    }
    plan->first = first;
    plan->last = end - 1;
    if (end - first < 3) {
        char a[TIME_TEXT], b[TIME_TEXT];
        locate(err, table, first, table->time_column);
        el_error_hint(err, "widen the window with --from/--to; a model needs at least 3 samples "
                           "(and many more for a useful fit)");
        return el_error_set(err, EL_ERR_DATA,
                            "the window holds only %zu sample%s (%s to %s); at least 3 are needed",
                            end - first, end - first == 1 ? "" : "s",
                            format_time(table, time[first], a, sizeof a),
                            format_time(table, time[end - 1], b, sizeof b));
    }
    return EL_OK;
}

/* Whole number of grid intervals a step spans (>= 0), as a double so a
 * step of any length can be judged without integer overflow. */
static double intervals_of(double step, double dt)
{
    return floor(step / dt + 0.5);
}

typedef el_step_survey step_survey;

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define EL_SURVEY_AVX2 1
/* The running figures of the step survey's first loop (a positive finite
 * dt), kept four lanes at a time by survey_blocks_avx2. */
typedef struct {
    double worst, fewest, longest_gap, gap_missing, intervals;
    size_t gap_row;
} survey_run;

/* Lane maxima and minima back into the running figures: the scalar loop
 * keeps the first of equal values and skips NaN, and equal doubles here
 * are the same bits (no -0.0 arises: m is floor(q + 0.5), never -0.0,
 * and off is a magnitude), so the order of the lanes does not matter. */
__attribute__((target("avx2"))) static void survey_fold(__m256d worst4, __m256d fewest4,
                                                         __m256d longest4, survey_run *run)
{
    double w[4], f[4], l[4];
    _mm256_storeu_pd(w, worst4);
    _mm256_storeu_pd(f, fewest4);
    _mm256_storeu_pd(l, longest4);
    for (int i = 0; i < 4; i++) {
        run->worst = w[i] > run->worst ? w[i] : run->worst;
        run->fewest = f[i] < run->fewest ? f[i] : run->fewest;
        run->longest_gap = l[i] > run->longest_gap ? l[i] : run->longest_gap;
    }
}

/* survey_steps's first loop over the steps ending at rows r .. (whole
 * blocks of four), each step with the scalar loop's operations (a
 * subtraction, a division, + 0.5, floor, a multiplication and a
 * subtraction: IEEE-exact each, no fused multiply-add, so the same
 * doubles lane by lane). The sum of the intervals is taken in four lanes
 * only when it is exact: every m an integer of magnitude at most 2^53 /
 * (steps in the blocks), so every partial sum in any order is an exact
 * integer, the sequential loop's sum bit for bit; otherwise (NaN, inf,
 * huge steps) the caller adds them again in order (*exact = 0). Returns
 * the next row. */
__attribute__((target("avx2"))) static size_t
survey_blocks_avx2(const double *time, size_t r, size_t last, double dt, double max_gap,
                   survey_run *run, int *exact)
{
    size_t n_blocks = (last + 1 - r) / 4;
    if (n_blocks == 0)
        return r;
    const __m256d dt4 = _mm256_set1_pd(dt), half = _mm256_set1_pd(0.5);
    const __m256d one = _mm256_set1_pd(1.0), gap4 = _mm256_set1_pd(max_gap);
    const __m256d absmask = _mm256_castsi256_pd(_mm256_set1_epi64x(0x7fffffffffffffffLL));
    const __m256d limit = _mm256_set1_pd(9007199254740992.0 / (double)(4 * n_blocks));
    __m256d worst4 = _mm256_set1_pd(run->worst), fewest4 = _mm256_set1_pd(run->fewest);
    __m256d longest4 = _mm256_set1_pd(run->longest_gap), sum4 = _mm256_setzero_pd();
    __m256d within = _mm256_castsi256_pd(_mm256_set1_epi64x(-1));
    for (size_t b = 0; b < n_blocks; b++, r += 4) {
        __m256d step = _mm256_sub_pd(_mm256_loadu_pd(time + r), _mm256_loadu_pd(time + r - 1));
        __m256d m = _mm256_floor_pd(_mm256_add_pd(_mm256_div_pd(step, dt4), half));
        __m256d m1 = _mm256_sub_pd(m, one);
        longest4 = _mm256_blendv_pd(longest4, m1, _mm256_cmp_pd(m1, longest4, _CMP_GT_OQ));
        int over = _mm256_movemask_pd(_mm256_cmp_pd(m1, gap4, _CMP_GT_OQ));
        if (over != 0 && run->gap_row == 0) {
            double lane[4];
            _mm256_storeu_pd(lane, m1);
            int i = __builtin_ctz((unsigned)over);
            run->gap_row = r + (size_t)i;
            run->gap_missing = lane[i];
        }
        __m256d mm = _mm256_blendv_pd(one, m, _mm256_cmp_pd(m, one, _CMP_GE_OQ));
        __m256d off = _mm256_and_pd(_mm256_sub_pd(step, _mm256_mul_pd(mm, dt4)), absmask);
        worst4 = _mm256_blendv_pd(worst4, off, _mm256_cmp_pd(off, worst4, _CMP_GT_OQ));
        fewest4 = _mm256_blendv_pd(fewest4, m, _mm256_cmp_pd(m, fewest4, _CMP_LT_OQ));
        sum4 = _mm256_add_pd(sum4, m);
        within = _mm256_and_pd(within,
                               _mm256_cmp_pd(_mm256_and_pd(m, absmask), limit, _CMP_LE_OQ));
    }
    survey_fold(worst4, fewest4, longest4, run);
    *exact = _mm256_movemask_pd(within) == 0xf;
    if (*exact) {
        double s[4];
        _mm256_storeu_pd(s, sum4);
        run->intervals += (s[0] + s[1]) + (s[2] + s[3]);  /* exact integers */
    }
    return r;
}
#else
#define EL_SURVEY_AVX2 0
#endif

void el_timebase_step_survey(const double *time, size_t first, size_t last, double dt,
                             size_t max_gap, double jitter_limit, int allow_avx2,
                             el_step_survey *sv)
{
    memset(sv, 0, sizeof *sv);
    /* The running values in locals: sv's fields could alias time for the
     * compiler, which then stored and reloaded them at every step. */
    double intervals = 0.0, jitter = 0.0, longest_gap = 0.0, gap_missing = 0.0;
    size_t gap_row = 0;
    int on_grid = 1;
    (void)allow_avx2;
    if (dt > 0.0 && dt < INFINITY && jitter_limit >= 0.0) {
        /* One division per step, not two: dividing by a positive finite
         * dt rounds monotonically (x <= y gives x/dt <= y/dt, also for
         * x = inf), so the largest deviation |step - m dt| / dt is the
         * largest numerator divided once, and (the limit being >= 0, the
         * largest at least 0) "some deviation exceeds jitter_limit" is
         * "the largest does". A NaN numerator fails every comparison
         * here as it did there. The same doubles as the
         * loop below (tests/test_timebase.c compares them). */
        double worst = 0.0, fewest = 1.0;
        size_t r = first + 1;
#if EL_SURVEY_AVX2
        if (allow_avx2 && last >= r && __builtin_cpu_supports("avx2")) {
            survey_run run = {0.0, 1.0, 0.0, 0.0, 0.0, 0};
            int exact = 1;
            size_t end = survey_blocks_avx2(time, r, last, dt, (double)max_gap, &run, &exact);
            if (!exact) {
                for (size_t q = r; q < end; q++)
                    run.intervals += intervals_of(time[q] - time[q - 1], dt);
            }
            worst = run.worst;
            fewest = run.fewest;
            longest_gap = run.longest_gap;
            gap_row = run.gap_row;
            gap_missing = run.gap_missing;
            intervals = run.intervals;
            r = end;
        }
#endif
        for (; r <= last; r++) {
            double step = time[r] - time[r - 1];
            double m = intervals_of(step, dt);
            if (m - 1 > longest_gap)
                longest_gap = m - 1;
            if (m - 1 > (double)max_gap && gap_row == 0) {
                gap_row = r;
                gap_missing = m - 1;
            }
            double off = fabs(step - (m >= 1 ? m : 1) * dt);
            worst = off > worst ? off : worst;
            fewest = m < fewest ? m : fewest;
            intervals += m;
        }
        jitter = worst / dt;
        on_grid = !(fewest < 1) && !(jitter > jitter_limit);
    } else {
        for (size_t r = first + 1; r <= last; r++) {
            double step = time[r] - time[r - 1];
            double m = intervals_of(step, dt);
            if (m - 1 > longest_gap)
                longest_gap = m - 1;
            if (m - 1 > (double)max_gap && gap_row == 0) {
                gap_row = r;
                gap_missing = m - 1;
            }
            double deviation = fabs(step - (m >= 1 ? m : 1) * dt) / dt;
            if (deviation > jitter)
                jitter = deviation;
            if (m < 1 || deviation > jitter_limit)
                on_grid = 0;
            intervals += m;
        }
    }
    sv->intervals = intervals;
    sv->jitter = jitter;
    sv->on_grid = on_grid;
    sv->gap_row = gap_row;
    sv->gap_missing = gap_missing;
    sv->longest_gap = longest_gap;
}

/* What the steps of rows first..last say about the grid with interval dt:
 * the same judgement for el_series_build and for el_timebase_survey. */
static void survey_steps(const double *time, size_t first, size_t last, double dt,
                         size_t max_gap, double jitter_limit, step_survey *sv)
{
    el_timebase_step_survey(time, first, last, dt, max_gap, jitter_limit, 1, sv);
}

static el_status time_gap_error(const timebase_plan *plan, size_t row, double missing,
                                el_error *err)
{
    const el_table *table = plan->table;
    char a[TIME_TEXT], b[TIME_TEXT];
    locate(err, table, row, table->time_column);
    el_error_hint(err, "choose a window that avoids it with --from/--to, or allow gaps of "
                       "%.0f samples with --max-gap %.0f", missing, missing);
    return el_error_set(err, EL_ERR_DATA,
                        "the log has no rows for %.0f samples in a row, between %s (line %ld) "
                        "and %s (line %ld); --max-gap is %zu",
                        missing, format_time(table, plan->time[row - 1], a, sizeof a),
                        row_line(table, row - 1), format_time(table, plan->time[row], b, sizeof b),
                        row_line(table, row), plan->max_gap);
}

/* Time stamps written to a coarse resolution: a logger sampling at 300 Hz
 * that stamps whole milliseconds writes steps of 3, 3 and 4 ms. The median
 * step (3 ms) is then not the interval, the steps vary by a third of it,
 * and resampling onto a 3 ms grid would interpolate between samples that
 * were taken every 3.333 ms (a periodic distortion that shows up as
 * spurious modes). The rows are taken as a uniform grid read through the
 * stamps' rounding when they are one: the resolution q is the smallest
 * nonzero difference between a step and the median step; the interval dt
 * is the least-squares slope of the stamps against M_k, the whole number
 * of intervals up to row k (steps rounded to dt, iterated until the count
 * is steady, so a missing row still counts two): the end stamps' rounding
 * would bias span / M by up to q / M, the slope by far less; and every
 * stamp lies within a band of width q about that line, which rounding to
 * q produces and irregular sampling (a random walk of the phase) does
 * not. No tolerance but the rounding of doubles. */
typedef struct {
    int found;
    double dt;              /* the uniform interval */
    double stamp_step;      /* q, the stamps' resolution */
    double intervals;       /* whole intervals from first to last */
    double jitter;          /* max deviation of a stamp from the centred grid / dt */
} rounded_grid;

static double grid_intervals(const double *time, size_t first, size_t last, double dt)
{
    double m_sum = 0.0;
    for (size_t r = first + 1; r <= last; r++) {
        double m = intervals_of(time[r] - time[r - 1], dt);
        if (m < 1)
            return NAN;
        m_sum += m;
    }
    return m_sum;
}

/* The index of row r (> first) over row r - 1: whole intervals of
 * index_dt between their stamps (a missing row counts two) when index_dt
 * > 0, else one row. */
static double index_step(const double *time, size_t r, double index_dt)
{
    return index_dt > 0.0 ? intervals_of(time[r] - time[r - 1], index_dt) : 1.0;
}

/* Least-squares line t - t_first = a + slope m over the rows, m the index
 * of index_step; stamps taken from t_first so an epoch-sized time keeps
 * its digits. Both grid finders read the stamps through it. */
typedef struct {
    double slope;           /* time per index step: the grid's interval */
    double index_mean;      /* mean index over the rows */
    double time_mean;       /* mean of t - t_first */
} stamp_line;

static stamp_line fit_stamp_line(const double *time, size_t first, size_t last,
                                 double index_dt)
{
    double n = (double)(last - first + 1), sm = 0.0, st = 0.0, m = 0.0;
    for (size_t r = first; r <= last; r++) {
        if (r > first)
            m += index_step(time, r, index_dt);
        sm += m;
        st += time[r] - time[first];
    }
    stamp_line line = { NAN, sm / n, st / n };
    double sxy = 0.0, sxx = 0.0;
    m = 0.0;
    for (size_t r = first; r <= last; r++) {
        if (r > first)
            m += index_step(time, r, index_dt);
        sxy += (m - line.index_mean) * (time[r] - time[first] - line.time_mean);
        sxx += (m - line.index_mean) * (m - line.index_mean);
    }
    line.slope = sxy / sxx;
    return line;
}

/* Width of the band of the stamps about the line, the index counted with
 * index_dt as in index_step. Rounding the times of a uniform grid to q
 * gives a band of width q at most. */
static double stamp_band(const double *time, size_t first, size_t last, double index_dt,
                         const stamp_line *line)
{
    double lo = INFINITY, hi = -INFINITY, m = 0.0;
    for (size_t r = first; r <= last; r++) {
        if (r > first)
            m += index_step(time, r, index_dt);
        double dev = time[r] - time[first] - line->time_mean - (m - line->index_mean) * line->slope;
        lo = fmin(lo, dev);
        hi = fmax(hi, dev);
    }
    return hi - lo;
}

static void find_rounded_grid(const double *time, size_t first, size_t last, double dt_median,
                              rounded_grid *g)
{
    memset(g, 0, sizeof *g);
    if (last < first + 2 || !(dt_median > 0.0))
        return;
    double q = INFINITY, span = time[last] - time[first];
    double tiny = 1e-9 * dt_median + 8.0 * DBL_EPSILON * fmax(fabs(time[first]), fabs(time[last]));
    for (size_t r = first + 1; r <= last; r++) {
        double d = fabs(time[r] - time[r - 1] - dt_median);
        if (d > tiny && d < q)
            q = d;
    }
    double dt = dt_median, m_sum = NAN;
    for (int iter = 0; iter < 8; iter++) {
        double m = grid_intervals(time, first, last, dt);
        if (!(m >= 1.0))
            return;
        if (m == m_sum)
            break;
        m_sum = m;
        dt = span / m_sum;
    }
    if (!isfinite(q) || !(q < dt))
        return;
    stamp_line line = fit_stamp_line(time, first, last, dt);
    if (!(line.slope > 0.0) || grid_intervals(time, first, last, line.slope) != m_sum)
        return;
    double band = stamp_band(time, first, last, line.slope, &line);
    if (!(band <= q + tiny))
        return;
    g->found = 1;
    g->dt = line.slope;
    g->stamp_step = q;
    g->intervals = m_sum;
    g->jitter = 0.5 * band / line.slope;
}

/* Rows that share a stamp: a logger sampling faster than its stamps'
 * resolution (2 kHz stamped in whole ms writes most stamps twice, 10 Hz
 * stamped in whole seconds each second ten times). Every row is then one
 * sample; q is the smallest positive step, dt the least-squares slope of
 * the stamps against the row number, and the rows are such a grid when
 * every stamp lies within a band of width q about that line (rounding or
 * cutting off the times of a uniform grid to q gives that band; a logger
 * whose rate wanders, or a row that really is written twice, does not).
 * The stamps must be at least 1.5 intervals coarse (a third of the rows
 * or more repeat a stamp): a log sampled about as often as it stamps,
 * with a row written twice, would otherwise pass as a grid a little
 * finer than its stamps; and it takes at least EL_TIMEBASE_MIN_STAMPS
 * distinct stamps for the band to mean anything. No missing rows can be
 * told in such a log: each row counts one. */
#define EL_TIMEBASE_MIN_STAMPS 8
static void find_repeated_grid(const double *time, size_t first, size_t last,
                               rounded_grid *g)
{
    memset(g, 0, sizeof *g);
    if (last < first + 2)
        return;
    double q = INFINITY;
    size_t stamps = 1;
    for (size_t r = first + 1; r <= last; r++) {
        double d = time[r] - time[r - 1];
        if (d < 0.0)
            return;
        if (d > 0.0 && d < q)
            q = d;
        stamps += d > 0.0;
    }
    if (stamps < EL_TIMEBASE_MIN_STAMPS)
        return;
    stamp_line line = fit_stamp_line(time, first, last, 0.0);
    double dt = line.slope;
    if (!isfinite(q) || !(dt > 0.0) || !(1.5 * dt <= q))
        return;
    double tiny = 1e-9 * dt + 8.0 * DBL_EPSILON * fmax(fabs(time[first]), fabs(time[last]));
    double band = stamp_band(time, first, last, 0.0, &line);
    if (!(band <= q + tiny))
        return;
    g->found = 1;
    g->dt = dt;
    g->stamp_step = q;
    g->intervals = (double)(last - first);
    g->jitter = 0.5 * band / dt;
}

/* The window holds repeated stamps: the grid of find_repeated_grid, or
 * the whole table's "time repeats" error. */
static el_status plan_repeated_grid(timebase_plan *plan, el_error *err)
{
    rounded_grid g;
    find_repeated_grid(plan->time, plan->first, plan->last, &g);
    if (!g.found) {
        if (err != NULL)
            *err = plan->order_error;
        return plan->order_error.status;
    }
    for (size_t r = plan->first + 1; r <= plan->last; r++)
        plan->repeated_rows += plan->time[r] == plan->time[r - 1];
    plan->t0 = plan->time[plan->first];
    plan->dt = plan->dt_step = g.dt;
    plan->stamp_step = g.stamp_step;
    plan->jitter = g.jitter;
    plan->resample = 0;
    plan->n_samples = plan->last - plan->first + 1;
    return EL_OK;
}

static int window_repeats(const timebase_plan *plan)
{
    for (size_t r = plan->first + 1; r <= plan->last; r++)
        if (plan->time[r] == plan->time[r - 1])
            return 1;
    return 0;
}

/* Decides dt, grid or resampling, the number of samples and the jitter.
 * steps is scratch for last - first doubles. */
static el_status plan_grid(timebase_plan *plan, double jitter_limit, double *steps,
                           el_error *err)
{
    const double *time = plan->time;
    size_t n_steps = plan->last - plan->first;
    if (plan->repeats && window_repeats(plan))
        return plan_repeated_grid(plan, err);
    for (size_t i = 0; i < n_steps; i++)
        steps[i] = time[plan->first + i + 1] - time[plan->first + i];
    double dt = median(steps, n_steps);
    plan->dt_step = dt;
    plan->dt = dt;
    plan->t0 = time[plan->first];

    step_survey sv;
    survey_steps(time, plan->first, plan->last, dt, plan->max_gap, jitter_limit, &sv);
    if (sv.gap_row != 0)
        return time_gap_error(plan, sv.gap_row, sv.gap_missing, err);
    double intervals = sv.intervals;
    int on_grid = sv.on_grid;
    plan->jitter = sv.jitter;
    if (!on_grid) {
        rounded_grid g;
        find_rounded_grid(time, plan->first, plan->last, dt, &g);
        if (g.found) {
            on_grid = 1;
            intervals = g.intervals;
            plan->dt_step = g.dt;     /* fill_on_grid counts intervals with it */
            plan->jitter = g.jitter;
            plan->stamp_step = g.stamp_step;
        }
    }
    plan->resample = !on_grid;
    if (on_grid) {
        plan->n_samples = (size_t)intervals + 1;
        plan->dt = plan->stamp_step > 0.0 ? plan->dt_step
                                          : (time[plan->last] - plan->t0) / intervals;
    } else {
        /* The allowance keeps a grid point that lands on the last row but
         * for rounding in the division; the loop drops it again if, as
         * computed, it lies past the last row (no extrapolation). */
        double t_end = time[plan->last];
        size_t n = (size_t)floor((t_end - plan->t0) / dt + 1e-9) + 1;
        while (n > 1 && plan->t0 + (double)(n - 1) * dt > t_end)
            n--;
        plan->n_samples = n;
    }
    if (plan->n_samples < 3) {
        /* Three rows can leave two grid points once the one past the end is
         * dropped (rounding). */
        locate(err, plan->table, plan->first, plan->table->time_column);
        el_error_hint(err, "widen the window with --from/--to");
        return el_error_set(err, EL_ERR_DATA,
                            "the window holds only %zu samples on a uniform grid; at least 3 "
                            "are needed", plan->n_samples);
    }
    return EL_OK;
}

/* ---- per-channel passes ------------------------------------------------- */

static el_status no_values_error(const timebase_plan *plan, size_t col, el_error *err)
{
    const el_table *table = plan->table;
    char a[TIME_TEXT], b[TIME_TEXT];
    locate(err, table, plan->first, col);
    el_error_hint(err, "choose another channel or another window with --from/--to");
    return el_error_set(err, EL_ERR_DATA, "channel '%s' has no values between %s and %s",
                        column_name(table, col),
                        format_time(table, plan->time[plan->first], a, sizeof a),
                        format_time(table, plan->time[plan->last], b, sizeof b));
}

/* The channel's first value (row) comes after the window's first sample. */
static el_status start_error(const timebase_plan *plan, size_t col, size_t row,
                             el_error *err)
{
    const el_table *table = plan->table;
    char a[TIME_TEXT], b[TIME_TEXT];
    locate(err, table, plan->first, col);
    el_error_hint(err, "move the window start with --from %s (or later); a missing value "
                       "at the edge of the window has no neighbour to interpolate from",
                  format_time(table, plan->time[row], a, sizeof a));
    return el_error_set(err, EL_ERR_DATA,
                        "channel '%s' has no value at the start of the window (%s); its "
                        "first value is at %s (line %ld)",
                        column_name(table, col),
                        format_time(table, plan->t0, b, sizeof b),
                        format_time(table, plan->time[row], a, sizeof a), row_line(table, row));
}

/* The channel's last value (row) comes before the window's last sample. */
static el_status end_error(const timebase_plan *plan, size_t col, size_t row,
                           el_error *err)
{
    const el_table *table = plan->table;
    char a[TIME_TEXT], b[TIME_TEXT];
    locate(err, table, row + 1 <= plan->last ? row + 1 : row, col);
    el_error_hint(err, "move the window end with --to %s (or earlier); a missing value "
                       "at the edge of the window has no neighbour to interpolate from",
                  format_time(table, plan->time[row], a, sizeof a));
    return el_error_set(err, EL_ERR_DATA,
                        "channel '%s' has no value at the end of the window (%s); its "
                        "last value is at %s (line %ld)",
                        column_name(table, col),
                        format_time(table, plan->time[plan->last], b, sizeof b),
                        format_time(table, plan->time[row], a, sizeof a), row_line(table, row));
}

/* A run of `missing` samples between the values at rows before and after. */
static el_status gap_error(const timebase_plan *plan, size_t col, size_t before,
                           size_t after, size_t missing, el_error *err)
{
    const el_table *table = plan->table;
    char a[TIME_TEXT], b[TIME_TEXT];
    if (before + 1 < after)
        locate(err, table, before + 1, col);
    else
        locate(err, table, after, table->time_column);
    el_error_hint(err, "choose a window that avoids it with --from/--to, or allow gaps of "
                       "%zu samples with --max-gap %zu", missing, missing);
    return el_error_set(err, EL_ERR_DATA,
                        "channel '%s' is missing for %zu samples in a row, between %s "
                        "(line %ld) and %s (line %ld); --max-gap is %zu",
                        column_name(table, col), missing,
                        format_time(table, plan->time[before], a, sizeof a),
                        row_line(table, before),
                        format_time(table, plan->time[after], b, sizeof b),
                        row_line(table, after), plan->max_gap);
}

static void note_run(timebase_plan *plan, size_t run, size_t *channel_filled)
{
    *channel_filled += run;
    if (run > plan->longest_run)
        plan->longest_run = run;
}

/* Rows are the grid: copy values to their grid index and fill short runs of
 * missing samples (missing cells and rows absent in a time gap). */
static el_status fill_on_grid(timebase_plan *plan, size_t col, double *out,
                              size_t *channel_filled, el_error *err)
{
    const el_table *table = plan->table;
    const double *time = plan->time;
    const double *x = table->values + col * table->n_rows;
    size_t g = 0, g_prev = 0, r_prev = 0;
    int have_prev = 0;
    for (size_t r = plan->first; r <= plan->last; r++) {
        if (r > plan->first)
            g += plan->repeated_rows > 0 ? 1 : (size_t)intervals_of(time[r] - time[r - 1],
                                                                    plan->dt_step);
        if (isnan(x[r]))
            continue;
        if (!have_prev && g > 0)
            return start_error(plan, col, r, err);
        if (have_prev && g > g_prev + 1) {
            size_t run = g - g_prev - 1;
            if (run > plan->max_gap)
                return gap_error(plan, col, r_prev, r, run, err);
            double x0 = out[g_prev], x1 = x[r], span = (double)(g - g_prev);
            for (size_t j = 1; j <= run; j++)
                out[g_prev + j] = x0 + (x1 - x0) * ((double)j / span);
            note_run(plan, run, channel_filled);
        }
        out[g] = x[r];
        have_prev = 1;
        g_prev = g;
        r_prev = r;
    }
    if (!have_prev)
        return no_values_error(plan, col, err);
    if (g_prev + 1 < plan->n_samples)
        return end_error(plan, col, r_prev, err);
    return EL_OK;
}

/* Rows are irregular: interpolate linearly between consecutive rows that
 * have a value onto t0 + k dt; a stretch between two values longer than
 * max_gap + 1 intervals (or holding more than max_gap missing cells) is a
 * gap too long to bridge. */
static el_status fill_resampled(timebase_plan *plan, size_t col, double *out,
                                size_t *channel_filled, el_error *err)
{
    const el_table *table = plan->table;
    const double *time = plan->time;
    const double *x = table->values + col * table->n_rows;
    size_t p = plan->first;
    while (p <= plan->last && isnan(x[p]))
        p++;
    if (p > plan->last)
        return no_values_error(plan, col, err);
    if (p > plan->first)
        return start_error(plan, col, p, err);
    size_t k = 0;
    for (size_t q = p + 1; q <= plan->last; q++) {
        if (isnan(x[q]))
            continue;
        double tp = time[p], tq = time[q];
        double by_time = intervals_of(tq - tp, plan->dt_step) - 1;
        size_t missing = q - p - 1;
        if (by_time > (double)missing)
            missing = (size_t)by_time;
        if (missing > plan->max_gap)
            return gap_error(plan, col, p, q, missing, err);
        if (missing > 0)
            note_run(plan, missing, channel_filled);
        for (; k < plan->n_samples; k++) {
            double t = plan->t0 + (double)k * plan->dt;
            if (t > tq)
                break;
            double w = (t - tp) / (tq - tp);
            out[k] = x[p] + (x[q] - x[p]) * w;
        }
        p = q;
    }
    if (k < plan->n_samples)
        return end_error(plan, col, p, err);
    return EL_OK;
}

/* ---- assembly ----------------------------------------------------------- */

static el_status allocate_series(const el_table *table, const size_t *channels,
                                 size_t n_channels, size_t n_samples, el_series *s,
                                 el_error *err)
{
    if (n_samples > SIZE_MAX / sizeof(double) / n_channels)
        return el_error_set(err, EL_ERR_NOMEM, "a series of %zu samples x %zu channels is too large",
                            n_samples, n_channels);
    s->n_channels = n_channels;
    s->n_samples = n_samples;
    s->values = malloc(n_samples * n_channels * sizeof *s->values);
    s->names = calloc(n_channels, sizeof *s->names);
    s->units = calloc(n_channels, sizeof *s->units);
    s->source_column = malloc(n_channels * sizeof *s->source_column);
    int ok = s->values != NULL && s->names != NULL && s->units != NULL
             && s->source_column != NULL;
    for (size_t c = 0; ok && c < n_channels; c++) {
        size_t col = channels[c];
        s->source_column[c] = col;
        s->names[c] = copy_text(table->names != NULL ? table->names[col] : NULL);
        s->units[c] = copy_text(table->units != NULL ? table->units[col] : NULL);
        ok = s->names[c] != NULL && s->units[c] != NULL;
    }
    if (!ok)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a series of %zu samples x %zu channels",
                            n_samples, n_channels);
    return EL_OK;
}

/* Adds both warnings or neither. */
static el_status add_warnings(const timebase_plan *plan, double jitter_limit,
                              el_warnings *warnings, el_error *err)
{
    size_t count_before = warnings != NULL ? warnings->count : 0;
    el_status st = EL_OK;
    if (plan->resample) {
        char unit[80];
        st = el_warnings_add(warnings,
                             "sample interval varies by up to %.3g%% (more than %.3g%%): "
                             "resampled onto a uniform grid of dt = %.9g%s by linear interpolation",
                             100 * plan->jitter, 100 * jitter_limit, plan->dt,
                             time_unit_suffix(plan->table, unit, sizeof unit));
    }
    if (st == EL_OK && plan->stamp_step > 0.0) {
        const el_table *t = plan->table;
        const char *u = t->time_is_iso || t->time_unit[0] == '\0' ? "s" : t->time_unit;
        double scale = t->time_is_iso ? 1.0 : el_table_time_unit_s(t);
        if (plan->repeated_rows > 0)
            st = el_warnings_add(warnings,
                                 "the time stamps are written to %.3g %s, coarser than the "
                                 "sampling (%zu rows repeat the stamp of the row before): "
                                 "each row is read as the next sample of a uniform grid of "
                                 "dt = %.9g %s (%.6g Hz); a missing row cannot be told in "
                                 "such a log",
                                 plan->stamp_step / scale, u, plan->repeated_rows,
                                 plan->dt / scale, u, 1.0 / plan->dt);
        else
            st = el_warnings_add(warnings,
                                 "the time stamps are written to %.3g %s, so the steps vary "
                                 "by that rounding alone: the rows are read as a uniform grid "
                                 "of dt = %.9g %s (%.6g Hz), not resampled",
                                 plan->stamp_step / scale, u, plan->dt / scale, u,
                                 1.0 / plan->dt);
    }
    if (st == EL_OK && plan->filled > 0)
        st = el_warnings_add(warnings,
                             "filled %zu missing sample%s in %zu channel%s by linear "
                             "interpolation (longest run %zu sample%s; --max-gap is %zu)",
                             plan->filled, plan->filled == 1 ? "" : "s",
                             plan->channels_filled, plan->channels_filled == 1 ? "" : "s",
                             plan->longest_run, plan->longest_run == 1 ? "" : "s",
                             plan->max_gap);
    if (st != EL_OK) {
        while (warnings->count > count_before)
            free(warnings->items[--warnings->count]);
        return el_error_set(err, st, "out of memory for a warning");
    }
    return EL_OK;
}

static el_status build(const el_table *table, const size_t *channels, size_t n_channels,
                       const el_timebase_options *opt, el_series *series,
                       el_warnings *warnings, el_error *err)
{
    el_status st = check_arguments(table, channels, n_channels, opt, err);
    size_t backward = 0, repeated = 0;
    el_error order;
    el_error_clear(&order);
    if (st == EL_OK)
        st = check_time_order(table, &backward, &repeated, &order);
    /* Repeated stamps alone may be a grid finer than the stamps
     * (find_repeated_grid): decided on the window's rows. */
    int repeats = st == EL_ERR_DATA && backward == 0 && repeated > 0;
    if (st != EL_OK && !repeats) {
        if (err != NULL && order.status != EL_OK)
            *err = order;
        return st;
    }
    timebase_plan plan = {
        .table = table,
        .time = table->values != NULL ? table->values + table->time_column * table->n_rows : NULL,
        .max_gap = opt->max_gap,
        .order_error = order,
        .repeats = repeats,
    };
    st = select_window(table, opt, &plan, err);
    if (st != EL_OK)
        return st;

    double *steps = malloc((plan.last - plan.first) * sizeof *steps);
    if (steps == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for %zu time steps",
                            plan.last - plan.first);
    st = plan_grid(&plan, opt->jitter_limit, steps, err);
    free(steps);
    if (st != EL_OK)
        return st;

    st = allocate_series(table, channels, n_channels, plan.n_samples, series, err);
    for (size_t c = 0; st == EL_OK && c < n_channels; c++) {
        double *out = series->values + c * plan.n_samples;
        size_t channel_filled = 0;
        st = plan.resample ? fill_resampled(&plan, channels[c], out, &channel_filled, err)
                           : fill_on_grid(&plan, channels[c], out, &channel_filled, err);
        plan.filled += channel_filled;
        plan.channels_filled += channel_filled > 0;
    }
    if (st != EL_OK)
        return st;
    series->dt = plan.dt;
    series->t0 = plan.t0;
    series->rows_used = plan.last - plan.first + 1;
    series->filled_cells = plan.filled;
    series->resampled = plan.resample;
    series->jitter = plan.jitter;
    series->stamp_step = plan.stamp_step;
    return add_warnings(&plan, opt->jitter_limit, warnings, err);
}

el_status el_series_build(const el_table *table, const size_t *channels,
                          size_t n_channels, const el_timebase_options *opt,
                          el_series *series, el_warnings *warnings,
                          el_error *err)
{
    if (series == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_series_build: NULL series");
    memset(series, 0, sizeof *series);
    el_timebase_options defaults;
    if (opt == NULL) {
        el_timebase_defaults(&defaults);
        opt = &defaults;
    }
    el_status st = build(table, channels, n_channels, opt, series, warnings, err);
    if (st != EL_OK)
        el_series_free(series);
    return st;
}

el_status el_timebase_survey(const el_table *table, const el_timebase_options *opt,
                             el_time_survey *out, el_error *err)
{
    return el_timebase_survey_step(table, opt, NAN, out, err);
}

el_status el_timebase_survey_step(const el_table *table, const el_timebase_options *opt,
                                  double dt_step, el_time_survey *out, el_error *err)
{
    if (table == NULL || out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_timebase_survey: NULL argument");
    memset(out, 0, sizeof *out);
    el_timebase_options defaults;
    if (opt == NULL) {
        el_timebase_defaults(&defaults);
        opt = &defaults;
    }
    if (table->time_column >= table->n_columns || table->values == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_timebase_survey: no time column");
    el_error order;
    el_error_clear(&order);
    el_status st = check_time_order(table, &out->backward_steps, &out->repeated_steps, &order);
    if (st != EL_OK && st == EL_ERR_DATA && out->backward_steps == 0 &&
        out->repeated_steps > 0 && table->n_rows >= 3) {
        rounded_grid g;
        find_repeated_grid(table->values + table->time_column * table->n_rows, 0,
                           table->n_rows - 1, &g);
        if (g.found) {
            out->usable = 1;
            out->dt_step = out->dt_grid = g.dt;
            out->stamp_step = g.stamp_step;
            out->jitter = g.jitter;
            return EL_OK;
        }
    }
    if (st != EL_OK) {
        out->refusal = order;
        return EL_OK;
    }
    if (table->n_rows < 3) {
        out->refusal.status = EL_ERR_DATA;
        snprintf(out->refusal.message, sizeof out->refusal.message,
                 "the log holds %zu row%s; at least 3 are needed", table->n_rows,
                 table->n_rows == 1 ? "" : "s");
        return EL_OK;
    }
    const double *time = table->values + table->time_column * table->n_rows;
    double dt = dt_step;
    if (!(dt > 0.0)) {
        size_t n_steps = table->n_rows - 1;
        double *steps = malloc(n_steps * sizeof *steps);
        if (steps == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory for %zu time steps", n_steps);
        for (size_t i = 0; i < n_steps; i++)
            steps[i] = time[i + 1] - time[i];
        dt = median(steps, n_steps);
        free(steps);
    }
    step_survey sv;
    survey_steps(time, 0, table->n_rows - 1, dt, opt->max_gap, opt->jitter_limit, &sv);
    out->usable = 1;
    out->dt_step = dt;
    out->dt_grid = dt;
    out->jitter = sv.jitter;
    out->resample = !sv.on_grid;
    if (!sv.on_grid && sv.gap_row == 0) {
        rounded_grid g;
        find_rounded_grid(time, 0, table->n_rows - 1, dt, &g);
        if (g.found) {
            out->resample = 0;
            out->jitter = g.jitter;
            out->dt_grid = g.dt;
            out->stamp_step = g.stamp_step;
        }
    }
    out->longest_gap = sv.longest_gap;
    out->gap_row = sv.gap_row;
    return EL_OK;
}
