/* el_demo: invented scenarios simulated exactly from known linear systems
 * and written as CSV text that is identical on every machine. */
#include "el_demo.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "el_linalg.h"
#include "el_rng.h"

/* Two roundings stay two roundings (no FMA contraction), so the simulation
 * gives the same doubles on every CPU; gcc in ISO C mode already compiles
 * with -ffp-contract=off. */
#if defined(__clang__)
#pragma STDC FP_CONTRACT OFF
#endif

#define DEMO_MAX_STATES 4

typedef enum { TIME_ISO8601, TIME_SECONDS } time_format;

typedef struct {
    el_demo_info info;
    el_demo_system sys;
    time_format time_kind;
    long dt_ms;               /* sample interval in whole milliseconds */
    /* TIME_ISO8601: date, wall-clock start and zone of the first row. */
    const char *date;         /* "YYYY-MM-DD" */
    long start_ms_of_day;
    const char *zone;         /* "+01:00" */
    int seconds_decimals;     /* TIME_SECONDS: decimals of the time column */
} scenario;

/* ---- booster-pump: one lightly damped pressure/flow mode (see
 * datasets/README.md for the story and how A was chosen). */
static const char *const booster_channels[2] = {"discharge_pressure [bar]",
                                                "flow [m3/h]"};
static const double booster_a[4] = {-0.06, -35.1413, 0.137271, -0.203894};
static const double booster_q[4] = {4e-4, 0.0, 0.0, 0.12};
static const double booster_x0[2] = {0.30, -3.5};
static const double booster_op[2] = {6.2, 42.0};
static const double booster_sd[2] = {0.0004, 0.0065};
static const int booster_decimals[2] = {5, 4};
static const double booster_lre[2] = {-0.13194699999999998, -0.13194699999999998};
static const double booster_lim[2] = {2.195154896924361, -2.195154896924361};

/* ---- rig-test: a stable 2.4 Hz mode and a slowly growing 0.8 Hz mode
 * seen by four sensors; A = T B T^-1 rounded to 6 digits (README). */
static const char *const rig_channels[4] = {"accel_a [m/s2]", "accel_b [m/s2]",
                                            "strain_c [ue]", "disp_d [mm]"};
static const double rig_a[16] = {
    16.467, -14.6618, -51.3657, -13.3409,
    34.4946, -14.8417, 168.461, -44.1897,
    -0.231599, -0.0186013, -3.68491, 2.09545,
    1.17974, -0.839632, -13.6455, 0.611624,
};
static const double rig_q[16] = {
    0.140025, -0.0629932, 0.7335, -0.0581022,
    -0.0629932, 0.068664, 0.356096, -0.0600257,
    0.7335, 0.356096, 15.795, -1.77824,
    -0.0581022, -0.0600257, -1.77824, 0.2416,
};
static const double rig_x0[4] = {0.0383022, 0.051423, 1.04189, -1.96962};
static const double rig_op[4] = {0.0, 0.0, 412.0, 3.5};
static const double rig_sd[4] = {0.001, 0.001, 0.05, 0.003};
static const int rig_decimals[4] = {4, 4, 3, 4};
static const double rig_lre[4] = {0.030000655203850535, 0.030000655203850535,
                                  -0.7539936552038486, -0.7539936552038486};
static const double rig_lim[4] = {5.0265524990860175, -5.0265524990860175,
                                  15.06078434090319, -15.06078434090319};

/* ---- fan-warmup: a cooling fan's rocking mode on its mounts, seen by a
 * horizontal and a vertical velocity sensor on the bearing housing (a
 * circular whirl: A is a scaled rotation), loses damping as the rubber
 * mounts warm: the decay rate falls in a straight line from 0.40 to 0.08
 * 1/s over 40 minutes at 0.8 Hz. */
static const char *const fan_channels[2] = {"vib_horizontal [mm/s]", "vib_vertical [mm/s]"};
static const double fan_a[4] = {-0.40, 5.026548245743669, -5.026548245743669, -0.40};
static const double fan_a_end[4] = {-0.08, 5.026548245743669, -5.026548245743669, -0.08};
static const double fan_q[4] = {0.04, 0.0, 0.0, 0.04};
static const double fan_x0[2] = {0.30, 0.0};
static const double fan_op[2] = {0.0, 0.0};
static const double fan_sd[2] = {0.01, 0.01};
static const int fan_decimals[2] = {3, 3};
static const double fan_lre[2] = {-0.40, -0.40};
static const double fan_lim[2] = {5.026548245743669, -5.026548245743669};
static const double fan_lre_end[2] = {-0.08, -0.08};

static const scenario scenarios[] = {
    {
        .info = {
            .name = "booster-pump",
            .file_name = "booster_pump.csv",
            .summary = "booster-pump station: discharge pressure and flow ring "
                       "down after a controller change (10 min at 20 Hz)",
            .truth = "one mode, lambda = -0.131947 +/- 2.195155i 1/s: "
                     "0.3493698 Hz damped (0.3500003 Hz natural), damping ratio "
                     "0.0600000, time constant 7.578801 s; stable (spiral sink) "
                     "around 6.2 bar, 42 m3/h",
        },
        .sys = {
            .n = 2, .channels = booster_channels, .time_column = "time",
            .a = booster_a, .q = booster_q, .x0 = booster_x0,
            .operating_point = booster_op, .sensor_sd = booster_sd,
            .decimals = booster_decimals, .lambda_re = booster_lre,
            .lambda_im = booster_lim, .dt_s = 0.05, .rows = 12000,
            .seed = 20260314,
        },
        .time_kind = TIME_ISO8601, .dt_ms = 50, .date = "2026-03-14",
        .start_ms_of_day = 8L * 3600 * 1000, .zone = "+01:00",
    },
    {
        .info = {
            .name = "rig-test",
            .file_name = "rig_test.csv",
            .summary = "rig test, 4 sensors: a stable 2.4 Hz mode and a slowly "
                       "growing 0.8 Hz mode (90 s at 100 Hz)",
            .truth = "two modes, lambda = +0.03000066 +/- 5.026552i 1/s "
                     "(0.8000007 Hz, growing, doubling time 23.10440 s) and "
                     "lambda = -0.7539937 +/- 15.06078i 1/s (2.396998 Hz damped, "
                     "2.400000 Hz natural, damping ratio 0.0500008); unstable",
        },
        .sys = {
            .n = 4, .channels = rig_channels, .time_column = "t [s]",
            .a = rig_a, .q = rig_q, .x0 = rig_x0, .operating_point = rig_op,
            .sensor_sd = rig_sd, .decimals = rig_decimals,
            .lambda_re = rig_lre, .lambda_im = rig_lim, .dt_s = 0.01,
            .rows = 9000, .seed = 20260315,
        },
        .time_kind = TIME_SECONDS, .dt_ms = 10, .seconds_decimals = 2,
    },
    {
        .info = {
            .name = "fan-warmup",
            .file_name = "fan_warmup.csv",
            .summary = "cooling fan, bearing-housing vibration over a 40 min warm-up: "
                       "the 0.8 Hz rocking mode loses damping (for track)",
            .truth = "one mode at 0.8 Hz (Im lambda = +/- 5.026548 1/s) whose decay rate "
                     "falls in a straight line from 0.40 to 0.08 1/s over the 2400 s "
                     "(lambda = -0.40 +/- 5.026548i at the start, -0.08 +/- 5.026548i "
                     "at the end; margin slope -1.3333e-4 1/s per s); stable throughout, "
                     "margin shrinking",
        },
        .sys = {
            .n = 2, .channels = fan_channels, .time_column = "time [s]",
            .a = fan_a, .q = fan_q, .x0 = fan_x0, .operating_point = fan_op,
            .sensor_sd = fan_sd, .decimals = fan_decimals, .lambda_re = fan_lre,
            .lambda_im = fan_lim, .dt_s = 0.1, .rows = 24000, .seed = 20261202,
            .a_end = fan_a_end, .drift_segments = 240, .lambda_re_end = fan_lre_end,
            .lambda_im_end = fan_lim,
        },
        .time_kind = TIME_SECONDS, .dt_ms = 100, .seconds_decimals = 1,
    },
};

#define N_SCENARIOS (sizeof scenarios / sizeof scenarios[0])

size_t el_demo_count(void)
{
    return N_SCENARIOS;
}

const el_demo_info *el_demo_get(size_t i)
{
    return i < N_SCENARIOS ? &scenarios[i].info : NULL;
}

static const scenario *find_scenario(const char *name)
{
    if (name == NULL)
        return NULL;
    for (size_t i = 0; i < N_SCENARIOS; i++)
        if (strcmp(scenarios[i].info.name, name) == 0)
            return &scenarios[i];
    return NULL;
}

const el_demo_info *el_demo_find(const char *name)
{
    const scenario *s = find_scenario(name);
    return s != NULL ? &s->info : NULL;
}

const el_demo_system *el_demo_system_find(const char *name)
{
    const scenario *s = find_scenario(name);
    return s != NULL ? &s->sys : NULL;
}

/* Rounds x to 40 significant bits. Ad and the noise factor G come from
 * el_linalg's plain fixed-order C loops (no BLAS, no pivot ties), so they
 * are already the same doubles on every CPU; this rounding is a second
 * guard that would absorb a last-bit difference (unless an entry lies
 * within ~2^-52 of a rounding boundary). frexp, ldexp and round are exact. */
static double quantise(double x)
{
    int e;
    double m = frexp(x, &e);
    return ldexp(round(ldexp(m, 40)), e - 40);
}

/* Appends one cell with a fixed number of decimals; a value that rounds to
 * zero is written without a minus sign. */
static void append_value(el_buf *csv, double value, int decimals)
{
    char cell[64];
    int len = snprintf(cell, sizeof cell, "%.*f", decimals, value);
    const char *text = cell;
    if (cell[0] == '-' && strspn(cell + 1, "0.") == (size_t)len - 1)
        text = cell + 1;
    el_buf_printf(csv, ",%s", text);
}

static void append_time(el_buf *csv, const scenario *s, size_t row)
{
    long t_ms = (long)row * s->dt_ms;
    if (s->time_kind == TIME_SECONDS) {
        long unit = 1;
        for (int d = s->seconds_decimals; d < 3; d++)
            unit *= 10;
        long frac = (t_ms % 1000) / unit;
        el_buf_printf(csv, "%ld.%0*ld", t_ms / 1000, s->seconds_decimals, frac);
        return;
    }
    long ms = s->start_ms_of_day + t_ms;
    el_buf_printf(csv, "%sT%02ld:%02ld:%02ld.%03ld%s", s->date, ms / 3600000,
                  ms / 60000 % 60, ms / 1000 % 60, ms % 1000, s->zone);
}

static void append_header(el_buf *csv, const el_demo_system *sys)
{
    el_buf_printf(csv, "%s", sys->time_column);
    for (size_t i = 0; i < sys->n; i++)
        el_buf_printf(csv, ",%s", sys->channels[i]);
    el_buf_append(csv, "\n", 1);
}

static el_status unknown_name(const char *name, el_error *err)
{
    char names[256] = "";
    size_t used = 0;
    for (size_t i = 0; i < N_SCENARIOS && used < sizeof names; i++) {
        int n = snprintf(names + used, sizeof names - used, "%s%s",
                         i > 0 ? ", " : "", scenarios[i].info.name);
        used += n > 0 ? (size_t)n : 0;
    }
    el_error_set(err, EL_ERR_USAGE, "no demo scenario named '%s'",
                 name != NULL ? name : "");
    el_error_hint(err, "known demos: %s", names);
    return EL_ERR_USAGE;
}

el_status el_demo_segment_map(const el_demo_system *sys, size_t segment, double *ad,
                              double *g, el_error *err)
{
    const size_t n = sys->n;
    double a[DEMO_MAX_STATES * DEMO_MAX_STATES];
    double qd[DEMO_MAX_STATES * DEMO_MAX_STATES];
    double work[32 * DEMO_MAX_STATES * DEMO_MAX_STATES + 2 * DEMO_MAX_STATES];
    int iwork[2 * DEMO_MAX_STATES];
    if (n == 0 || n > DEMO_MAX_STATES)
        return el_error_set(err, EL_ERR_INTERNAL, "demo system of %zu states", n);
    double f = sys->a_end != NULL
                   ? ((double)segment + 0.5) / (double)sys->drift_segments
                   : 0.0;
    for (size_t i = 0; i < n * n; i++)
        a[i] = sys->a_end != NULL ? sys->a[i] + (sys->a_end[i] - sys->a[i]) * f : sys->a[i];
    el_status st = el_discretise(n, a, sys->q, sys->dt_s, ad, qd, g, work, iwork, err);
    if (st != EL_OK)
        return st == EL_ERR_INTERNAL ? st : EL_ERR_NUMERIC;
    for (size_t i = 0; i < n * n; i++) {
        ad[i] = quantise(ad[i]);
        if (g != NULL)
            g[i] = quantise(g[i]);
    }
    return EL_OK;
}

el_status el_demo_generate(const char *name, el_buf *csv, el_error *err)
{
    const scenario *s = find_scenario(name);
    if (s == NULL)
        return unknown_name(name, err);
    if (csv == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_demo_generate: csv is NULL");
    const el_demo_system *sys = &s->sys;
    const size_t n = sys->n;
    if (s->time_kind == TIME_ISO8601 &&
        s->start_ms_of_day + (long)sys->rows * s->dt_ms > 24L * 3600 * 1000)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "demo '%s' runs past midnight", s->info.name);

    double ad[DEMO_MAX_STATES * DEMO_MAX_STATES];
    double g[DEMO_MAX_STATES * DEMO_MAX_STATES];
    size_t seg_rows = sys->a_end != NULL ? sys->rows / sys->drift_segments : sys->rows;
    el_status st = el_demo_segment_map(sys, 0, ad, g, err);
    if (st != EL_OK)
        return st;

    el_rng rng;
    el_rng_seed(&rng, sys->seed, 0);
    double x[DEMO_MAX_STATES], z[DEMO_MAX_STATES], next[DEMO_MAX_STATES];
    memcpy(x, sys->x0, n * sizeof *x);

    append_header(csv, sys);
    for (size_t row = 0; row < sys->rows; row++) {
        if (row > 0 && row % seg_rows == 0 && (st = el_demo_segment_map(
                                                   sys, row / seg_rows, ad, g, err)) != EL_OK)
            return st;
        append_time(csv, s, row);
        for (size_t i = 0; i < n; i++) {
            double y = sys->operating_point[i] + x[i]
                       + sys->sensor_sd[i] * el_rng_normal(&rng);
            append_value(csv, y, sys->decimals[i]);
        }
        el_buf_append(csv, "\n", 1);
        for (size_t j = 0; j < n; j++)
            z[j] = el_rng_normal(&rng);
        for (size_t i = 0; i < n; i++) {
            double sum = 0.0;
            for (size_t j = 0; j < n; j++)
                sum += ad[i + j * n] * x[j];
            for (size_t j = 0; j < n; j++)
                sum += g[i + j * n] * z[j];
            next[i] = sum;
        }
        memcpy(x, next, n * sizeof *x);
    }
    if (csv->failed)
        return el_error_set(err, EL_ERR_NOMEM,
                            "out of memory while writing demo '%s'", s->info.name);
    return EL_OK;
}
