/* test_track: the trend of the margin against numpy, and whole tracking
 * runs on simulated logs whose margin is known at every sample. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_rng.h"
#include "el_track.h"
#include "data/track_fixture.h"

/* ------------------------------------------------------------------ */
/* The trend against numpy (tests/data/make_track_fixture.py). */

static void fill_windows(el_track_result *r, const double *t, const double *sd,
                         const double *margin, const double *samples)
{
    memset(r, 0, sizeof *r);
    r->n_windows = TX_WINDOWS;
    r->windows = calloc(TX_WINDOWS, sizeof(el_track_window));
    assert_non_null(r->windows);
    r->level = 0.95;
    r->window = r->step = 100.0; /* windows 100 apart, no overlap */
    for (size_t i = 0; i < TX_WINDOWS; i++) {
        el_track_window *w = &r->windows[i];
        w->ok = 1;
        w->t_from = t[i] - 50.0;
        w->t_to = t[i] + 50.0;
        w->margin = margin[i];
        w->margin_sd = sd[i];
        w->n_replicates = TX_REPS;
        w->margin_samples = malloc(TX_REPS * sizeof(double));
        assert_non_null(w->margin_samples);
        memcpy(w->margin_samples, samples + i * TX_REPS, TX_REPS * sizeof(double));
    }
}

/* Every figure of the trend matches numpy's. Tolerances: the slope and
 * the margin on the line are weighted least-squares solutions of 6 points
 * with condition number below 1e3 (times spread over 500 s, centred):
 * 1e-10 relative leaves six orders of magnitude for rounding. Percentile
 * bounds are interpolated order statistics of the same 40 replicate
 * slopes: 1e-9 relative. P(shrinking) is a count: exact. */
static void check_case(const double *t, const double *sd, const double *margin,
                       const double *samples, const double *want)
{
    el_track_result r;
    fill_windows(&r, t, sd, margin, samples);
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_track_fit_trend(&r, &err), EL_OK);
    assert_int_equal(r.has_trend, 1);
    assert_close(r.slope, want[0], 1e-10, 0.0);
    assert_close(r.slope_lo, want[1], 1e-9, 0.0);
    assert_close(r.slope_hi, want[2], 1e-9, 0.0);
    assert_close(r.p_shrinking, want[3], 0.0, 0.0);
    assert_close(r.scatter_ratio, want[4], 1e-9, 0.0);
    assert_close(r.widening, want[5], 1e-12, 0.0);
    assert_close(r.margin_now, want[6], 1e-10, 0.0);
    assert_int_equal(r.trend, EL_TREND_SHRINKING);
    assert_close(r.time_to_zero, want[7], 1e-9, 0.0);
    assert_close(r.time_to_zero_lo, want[8], 1e-9, 0.0);
    assert_close(r.time_to_zero_hi, want[9], 1e-9, 0.0);
    /* The extrapolation is always said in a warning, a widening too, and
     * a scatter of more than 4 times what the bounds allow. */
    assert_int_equal(r.warnings.count, 1 + (want[5] > 1.0) + (want[4] > 4.0));
    el_track_free(&r);
}

static void test_trend_against_numpy(void **state)
{
    (void)state;
    check_case(tx_steady_t, tx_steady_sd, tx_steady_margin, tx_steady_samples,
               tx_steady_want);
    check_case(tx_scatter_t, tx_scatter_sd, tx_scatter_margin, tx_scatter_samples,
               tx_scatter_want);
}

/* Overlapping windows share data: the spread is widened by sqrt(window /
 * step) on top (here 2: step a quarter of the window), which the steady
 * case (chi^2 / dof 0.18, no widening of its own) shows alone. */
static void test_trend_overlap_widens(void **state)
{
    (void)state;
    el_track_result r;
    fill_windows(&r, tx_steady_t, tx_steady_sd, tx_steady_margin, tx_steady_samples);
    r.step = 25.0;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_track_fit_trend(&r, &err), EL_OK);
    assert_close(r.widening, 2.0, 1e-15, 0.0);
    /* The point slope is unchanged; the bounds are twice as far from the
     * replicates' median, so wider than without overlap. */
    assert_close(r.slope, tx_steady_want[0], 1e-10, 0.0);
    assert_true(r.slope_hi - r.slope_lo > 1.9 * (tx_steady_want[2] - tx_steady_want[1]));
    el_track_free(&r);
}

/* Windows fitted by different estimators: the trend may come from the
 * change of estimator, and a warning names both. */
static void test_trend_mixed_methods(void **state)
{
    (void)state;
    el_track_result r;
    fill_windows(&r, tx_steady_t, tx_steady_sd, tx_steady_margin, tx_steady_samples);
    for (size_t i = 0; i < TX_WINDOWS; i++) {
        r.windows[i].method = i < 3 ? EL_METHOD_IV : EL_METHOD_FB;
        snprintf(r.windows[i].from_text, sizeof r.windows[i].from_text, "%g",
                 r.windows[i].t_from);
    }
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_track_fit_trend(&r, &err), EL_OK);
    int named = 0;
    for (size_t i = 0; i < r.warnings.count; i++)
        named |= strstr(r.warnings.items[i], "iv from 0") != NULL
                 && strstr(r.warnings.items[i], "fb from 300") != NULL;
    assert_true(named);
    el_track_free(&r);
}

/* A window whose data shows no dynamics (white noise: verdict withheld)
 * has a margin that describes the noise, hundreds per second; it must
 * stay out of the trend exactly as a failed window does, and a warning
 * says so. Compared with the same windows where that one failed: the
 * same line to the last bit (the same arithmetic on the same windows). */
static void test_trend_skips_no_dynamics(void **state)
{
    (void)state;
    el_track_result white, failed;
    fill_windows(&white, tx_steady_t, tx_steady_sd, tx_steady_margin, tx_steady_samples);
    fill_windows(&failed, tx_steady_t, tx_steady_sd, tx_steady_margin, tx_steady_samples);
    white.n_ok = failed.n_ok = TX_WINDOWS;
    el_track_window *w = &white.windows[2];
    w->no_dynamics = 1;
    w->margin = 600.0;
    for (size_t k = 0; k < w->n_replicates; k++)
        w->margin_samples[k] = 550.0 + (double)k;
    failed.windows[2].ok = 0;
    failed.n_ok--;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_track_fit_trend(&white, &err), EL_OK);
    assert_int_equal(el_track_fit_trend(&failed, &err), EL_OK);
    assert_true(white.has_trend && failed.has_trend);
    assert_close(white.slope, failed.slope, 0.0, 0.0);
    assert_close(white.slope_lo, failed.slope_lo, 0.0, 0.0);
    assert_close(white.slope_hi, failed.slope_hi, 0.0, 0.0);
    assert_close(white.margin_now, failed.margin_now, 0.0, 0.0);
    int said = 0;
    for (size_t i = 0; i < white.warnings.count; i++)
        said |= strstr(white.warnings.items[i], "1 of 6 assessed windows show no dynamics") != NULL;
    assert_true(said);
    assert_false(el_track_window_in_trend(w, 0));
    el_track_free(&white);
    el_track_free(&failed);
}

/* Fewer than 3 usable windows: no trend, not an error. */
static void test_trend_too_few(void **state)
{
    (void)state;
    el_track_result r;
    fill_windows(&r, tx_steady_t, tx_steady_sd, tx_steady_margin, tx_steady_samples);
    for (size_t i = 2; i < TX_WINDOWS; i++)
        r.windows[i].ok = 0;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_track_fit_trend(&r, &err), EL_OK);
    assert_int_equal(r.has_trend, 0);
    assert_int_equal(r.trend, EL_TREND_UNDECIDED);
    el_track_free(&r);
}

/* ------------------------------------------------------------------ */
/* Whole runs on simulated logs. */

/* A damped oscillator of 0.5 Hz sampled at dt = 0.05 s whose decay rate
 * goes linearly from sigma0 to sigma1 over n samples: step k applies the
 * exact discrete map of lambda_k = -sigma_k +- i omega over one step,
 * e^(-sigma_k dt) times a rotation by omega dt, plus white process noise
 * of sd 0.1 per state, so the true margin at time t is sigma(t) (a
 * closed form). Written as a CSV in memory (t, x, y). */
static char *drifting_csv(double sigma0, double sigma1, size_t n, uint64_t seed,
                          size_t *len)
{
    const double dt = 0.05, omega = 2.0 * 3.14159265358979323846 * 0.5;
    size_t cap = n * 64 + 64;
    char *csv = malloc(cap);
    assert_non_null(csv);
    size_t pos = (size_t)snprintf(csv, cap, "t,x,y\n");
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    double x = 1.0, y = 0.0;
    for (size_t k = 0; k < n; k++) {
        pos += (size_t)snprintf(csv + pos, cap - pos, "%.2f,%.9f,%.9f\n", (double)k * dt,
                                x + 3.0, y - 1.0);
        double sigma = sigma0 + (sigma1 - sigma0) * (double)k / (double)(n - 1);
        double g = exp(-sigma * dt), c = cos(omega * dt), s = sin(omega * dt);
        double xn = g * (c * x - s * y) + 0.1 * el_rng_normal(&rng);
        double yn = g * (s * x + c * y) + 0.1 * el_rng_normal(&rng);
        x = xn;
        y = yn;
    }
    *len = pos;
    return csv;
}

static el_status run_track(char *csv, size_t len, double window, size_t boot,
                           el_track_result *r, el_error *err);

/* Simulates a log (drifting_csv) and tracks it in windows of 100 s with
 * 300 replicates each; fails the test when the run fails. */
static void track_simulated(double sigma0, double sigma1, size_t n, uint64_t seed,
                            el_track_result *r)
{
    size_t len = 0;
    char *csv = drifting_csv(sigma0, sigma1, n, seed, &len);
    el_error err;
    el_error_clear(&err);
    el_status st = run_track(csv, len, 100.0, 300, r, &err);
    free(csv);
    if (st != EL_OK)
        fail_msg("track failed: %s", err.message);
}

static el_status run_track(char *csv, size_t len, double window, size_t boot,
                           el_track_result *r, el_error *err)
{
    el_track_options opt;
    el_track_defaults(&opt);
    opt.assess.path = "drift.csv";
    opt.assess.stream = fmemopen(csv, len, "r");
    assert_non_null(opt.assess.stream);
    opt.assess.boot.replicates = boot;
    opt.assess.boot.threads = 2;
    opt.window = window;
    memset(r, 0, sizeof *r);
    el_status st = el_track_run(&opt, r, err);
    fclose(opt.assess.stream);
    return st;
}

/* The margin falls from 0.5 to 0.1 1/s over 800 s: slope -0.0005 1/s per
 * s. Eight windows of 100 s must call it shrinking, hold the true slope
 * in the trend's 95% bounds, hold each window's true margin (at its
 * middle: the average over the window, the margin being linear) in most
 * windows' bounds (each at 95%: fewer than 6 of 8 has probability 0.6%),
 * and extrapolate a time to zero whose bounds hold the true one: the
 * line reaches 0 at t = 1000 s, 250 s after the last window's middle. */
static void test_drifting_margin(void **state)
{
    (void)state;
    const size_t n = 16000;
    el_track_result r;
    track_simulated(0.5, 0.1, n, 7, &r);
    assert_int_equal(r.n_windows, 8);
    assert_int_equal(r.n_ok, 8);
    size_t covered = 0;
    for (size_t i = 0; i < r.n_windows; i++) {
        const el_track_window *w = &r.windows[i];
        double mid = 0.5 * (w->t_from + w->t_to);
        double truth = 0.5 + (0.1 - 0.5) * mid / ((double)(n - 1) * 0.05);
        covered += w->margin_lo <= truth && truth <= w->margin_hi;
    }
    if (covered < 6)
        fail_msg("only %zu of 8 windows hold their true margin", covered);
    assert_int_equal(r.trend, EL_TREND_SHRINKING);
    double true_slope = (0.1 - 0.5) / ((double)(n - 1) * 0.05);
    if (!(r.slope_lo <= true_slope && true_slope <= r.slope_hi))
        fail_msg("true slope %g outside [%g, %g]", true_slope, r.slope_lo, r.slope_hi);
    assert_true(r.p_shrinking >= 0.95);
    double t_last = 0.5 * (r.windows[7].t_from + r.windows[7].t_to);
    double true_ttz = ((double)(n - 1) * 0.05 * 0.5 / 0.4) - t_last;
    assert_true(isfinite(r.time_to_zero));
    if (!(r.time_to_zero_lo <= true_ttz && true_ttz <= r.time_to_zero_hi))
        fail_msg("true time to zero %g outside [%g, %g]", true_ttz, r.time_to_zero_lo,
                 r.time_to_zero_hi);
    el_track_free(&r);
}

/* A constant margin of 0.3 1/s: the true slope 0 lies in the bounds and
 * the margin is not called shrinking. (A one-sided call at level 0.95
 * would be a false alarm in 5% of such logs; this seed is one of the 95%,
 * fixed, so the test is deterministic.) */
static void test_steady_margin(void **state)
{
    (void)state;
    el_track_result r;
    track_simulated(0.3, 0.3, 16000, 8, &r);
    assert_true(r.has_trend);
    assert_true(r.slope_lo <= 0.0 && 0.0 <= r.slope_hi);
    assert_int_not_equal(r.trend, EL_TREND_SHRINKING);
    assert_false(isfinite(r.time_to_zero));
    /* Reports: the text names the verdict, the JSON the class. */
    el_track_options opt;
    el_track_defaults(&opt);
    opt.assess.path = "drift.csv";
    el_buf text = {0}, json = {0};
    assert_int_equal(el_track_report_text(&r, &opt, &text), EL_OK);
    assert_non_null(strstr(text.data, "NO CLEAR TREND"));
    assert_int_equal(el_track_report_json(&r, &opt, &json), EL_OK);
    assert_non_null(strstr(json.data, "\"class\": \"undecided\""));
    assert_null(strstr(json.data, "nan"));
    el_buf_free(&text);
    el_buf_free(&json);
    el_track_free(&r);
}

/* drifting_csv with channel y stuck at -0.5 from sample stuck_from on
 * (a sensor that freezes part-way through the log). */
static char *stuck_csv(size_t n, size_t stuck_from, uint64_t seed, size_t *len)
{
    size_t in_len = 0;
    char *in = drifting_csv(0.5, 0.1, n, seed, &in_len);
    char *out = malloc(2 * in_len + 64); /* a stuck value may be longer than the one it replaces */
    assert_non_null(out);
    size_t pos = 0, row = 0;
    for (char *line = strtok(in, "\n"); line != NULL; line = strtok(NULL, "\n"), row++) {
        char *last = strrchr(line, ',');
        if (row > stuck_from && last != NULL) /* row 0 is the header */
            pos += (size_t)sprintf(out + pos, "%.*s,-0.500000000\n", (int)(last - line), line);
        else
            pos += (size_t)sprintf(out + pos, "%s\n", line);
    }
    free(in);
    *len = pos;
    return out;
}

/* A sensor that sticks part-way through: the windows after it are fitted
 * on the channel that still moves (as assess would fit any of them), named
 * per window and in one warning, instead of failing; a --channels list that
 * names the stuck channel still fails those windows. The margin's truth is
 * the same closed form as test_drifting_margin's (each window's middle). */
static void test_sensor_sticks_mid_log(void **state)
{
    (void)state;
    const size_t n = 16000;
    size_t len = 0;
    char *csv = stuck_csv(n, 10000, 7, &len); /* y constant from 500 s: windows 5-7 */
    el_track_result r;
    el_error err;
    el_error_clear(&err);
    if (run_track(csv, len, 100.0, 300, &r, &err) != EL_OK)
        fail_msg("track failed: %s", err.message);
    assert_int_equal(r.n_windows, 8);
    assert_int_equal(r.n_ok, 8);
    size_t covered = 0;
    for (size_t i = 0; i < r.n_windows; i++) {
        const el_track_window *w = &r.windows[i];
        assert_int_equal(w->n_left_out, i >= 5 ? 1 : 0);
        assert_string_equal(w->left_out, i >= 5 ? "y" : "");
        double mid = 0.5 * (w->t_from + w->t_to);
        double truth = 0.5 + (0.1 - 0.5) * mid / ((double)(n - 1) * 0.05);
        covered += w->margin_lo <= truth && truth <= w->margin_hi;
    }
    /* 95 % bounds per window: fewer than 6 of 8 has probability 0.6 %. */
    if (covered < 6)
        fail_msg("only %zu of 8 windows hold their true margin", covered);
    int warned = 0;
    for (size_t i = 0; i < r.warnings.count; i++)
        warned += strstr(r.warnings.items[i], "channel 'y' was constant in 3 of 8") != NULL;
    assert_int_equal(warned, 1);
    el_track_options opt;
    el_track_defaults(&opt);
    opt.assess.path = "drift.csv";
    el_buf json = {0};
    assert_int_equal(el_track_report_json(&r, &opt, &json), EL_OK);
    size_t lists = 0, with_y = 0;
    for (const char *key = strstr(json.data, "\"channels_left_out\": [");
         key != NULL; key = strstr(key + 1, "\"channels_left_out\": [")) {
        const char *y = strstr(key, "\"y\"");
        lists++;
        with_y += y != NULL && y < strchr(key, ']');
    }
    assert_int_equal(lists, 8);
    assert_int_equal(with_y, 3);
    el_buf_free(&json);
    el_track_free(&r);

    /* Named in --channels: the stuck channel stops those windows. */
    el_track_defaults(&opt);
    opt.assess.path = "drift.csv";
    opt.assess.channels = "x,y";
    opt.assess.stream = fmemopen(csv, len, "r");
    assert_non_null(opt.assess.stream);
    opt.assess.boot.replicates = 100;
    opt.assess.boot.threads = 2;
    opt.window = 100.0;
    memset(&r, 0, sizeof r);
    assert_int_equal(el_track_run(&opt, &r, &err), EL_OK);
    fclose(opt.assess.stream);
    assert_int_equal(r.n_ok, 5);
    for (size_t i = 5; i < r.n_windows; i++) {
        assert_false(r.windows[i].ok);
        assert_non_null(strstr(r.windows[i].error, "constant"));
    }
    el_track_free(&r);
    free(csv);
}

/* Bad options: each refused before any window is assessed, naming the
 * option. */
static void test_errors(void **state)
{
    (void)state;
    size_t len = 0;
    char *csv = drifting_csv(0.3, 0.3, 400, 9, &len);
    el_track_result r;
    el_error err;
    el_error_clear(&err);
    /* 400 samples = 20 s: a window of 30 s is longer than the log. */
    assert_int_equal(run_track(csv, len, 30.0, 100, &r, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--window");
    el_track_free(&r);
    el_error_clear(&err);
    /* 10 s windows: only 2 fit, a trend needs 3. */
    assert_int_equal(run_track(csv, len, 10.0, 100, &r, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--window");
    el_track_free(&r);
    el_error_clear(&err);
    /* 0.5 s windows hold 10 samples: too short to fit. */
    assert_int_equal(run_track(csv, len, 0.5, 100, &r, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--window");
    el_track_free(&r);
    el_error_clear(&err);
    /* 1 to 99 replicates: too few for bounds, refused. */
    assert_int_equal(run_track(csv, len, 5.0, 50, &r, &err), EL_ERR_USAGE);
    assert_string_equal(err.option, "--boot");
    el_track_free(&r);
    el_error_clear(&err);
    /* --boot 0 turns bounds off (its help says so): the windows' point
     * margins and an unweighted slope, nothing that needs replicates. */
    assert_int_equal(run_track(csv, len, 5.0, 0, &r, &err), EL_OK);
    assert_true(r.bounds_off && r.has_trend);
    assert_true(isfinite(r.slope) && isnan(r.p_shrinking) && isnan(r.slope_lo));
    assert_int_equal(r.trend, EL_TREND_UNDECIDED);
    el_track_free(&r);
    free(csv);
}

/* The track's cautions: the windows shown only, always; when the margin
 * is shrinking, the time-to-zero note, with the UTC clock time for an ISO
 * log. Origin 1773471600 s (2026-03-14T07:00:00Z), one window 0..1000 s
 * (middle 500 s), time to zero 500.5 s: the line reaches zero at Unix
 * 1773472600.5, 2026-03-14T07:16:40.5Z (Python's datetime.utcfromtimestamp,
 * an outside clock); the report gives whole seconds. */
static void test_cautions_clock_time(void **state)
{
    (void)state;
    el_track_window w;
    memset(&w, 0, sizeof w);
    w.ok = 1;
    w.n_replicates = 10;
    w.margin = 0.1;
    w.t_from = 0.0;
    w.t_to = 1000.0;
    el_track_result r;
    memset(&r, 0, sizeof r);
    r.windows = &w;
    r.n_windows = 1;
    r.time_is_iso = 1;
    r.time_origin_s = 1773471600.0;
    r.trend = EL_TREND_SHRINKING;
    r.time_to_zero = 500.5;
    char c[EL_ADVICE_MAX_CAUTIONS][EL_ADVICE_TEXT_MAX];
    size_t n = el_track_cautions(&r, c);
    assert_int_equal(n, 3);
    assert_non_null(strstr(c[0], "covers the windows shown only"));
    assert_non_null(strstr(c[1], "straight-line extrapolation"));
    assert_non_null(strstr(c[1], "may be lost sooner"));
    assert_non_null(strstr(c[1], "2026-03-14T07:16:40Z"));
    assert_non_null(strstr(c[2], "licensed engineering judgement"));
    /* A log in plain numbers: no clock time. */
    r.time_is_iso = 0;
    n = el_track_cautions(&r, c);
    assert_null(strstr(c[1], "reaches zero at"));
    /* Not shrinking: no time-to-zero note. */
    r.trend = EL_TREND_UNDECIDED;
    n = el_track_cautions(&r, c);
    assert_int_equal(n, 2);
    for (size_t i = 0; i < n; i++)
        assert_null(strstr(c[i], "extrapolation"));
}

/* The text report folds warnings of one kind about many channels into
 * one line, as the assess report does (el_warnlines_fold), and keeps
 * every warning in JSON. 30 channels' "channel sNNN ..." warnings must
 * read as one line naming the channels; the expected words are written
 * out by hand from the rule in el_warnlines.h (text only: no tolerance). */
static void test_text_folds_warnings(void **state)
{
    (void)state;
    el_track_result r;
    memset(&r, 0, sizeof r);
    r.level = 0.95;
    for (int c = 0; c < 30; c++)
        assert_int_equal(el_warnings_add(&r.warnings, "channel s%03d holds %d repeated values",
                                         c, 10 + c),
                         EL_OK);
    assert_int_equal(el_warnings_add(&r.warnings, "a warning of its own"), EL_OK);
    el_track_options opt;
    el_track_defaults(&opt);
    opt.assess.path = "wide.csv";
    el_buf text = {0}, json = {0};
    assert_int_equal(el_track_report_text(&r, &opt, &text), EL_OK);
    size_t bangs = 0;
    for (const char *p = strstr(text.data, "  ! "); p != NULL; p = strstr(p + 1, "  ! "))
        bangs++;
    assert_int_equal(bangs, 2);
    assert_non_null(strstr(text.data, "channels s000, s001"));
    assert_non_null(strstr(text.data, "and 18 more"));
    assert_non_null(strstr(text.data, "10 to 39"));
    assert_non_null(strstr(text.data, "  ! a warning of its own"));
    assert_int_equal(el_track_report_json(&r, &opt, &json), EL_OK);
    assert_non_null(strstr(json.data, "channel s029 holds 39 repeated values"));
    el_buf_free(&text);
    el_buf_free(&json);
    el_track_free(&r);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_trend_against_numpy),
        cmocka_unit_test(test_trend_overlap_widens),
        cmocka_unit_test(test_trend_mixed_methods),
        cmocka_unit_test(test_trend_skips_no_dynamics),
        cmocka_unit_test(test_trend_too_few),
        cmocka_unit_test(test_drifting_margin),
        cmocka_unit_test(test_steady_margin),
        cmocka_unit_test(test_sensor_sticks_mid_log),
        cmocka_unit_test(test_errors),
        cmocka_unit_test(test_cautions_clock_time),
        cmocka_unit_test(test_text_folds_warnings),
    };
    return cmocka_run_group_tests_name("track", tests, NULL, NULL);
}
