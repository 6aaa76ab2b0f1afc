/* bench_follow: figures of `track --follow` (make bench).
 *
 *   bench_follow latency   8 channels at 1 kHz, 10 s windows, 200 replicates:
 *                          rows arrive in blocks of 0.1 s (as a logger flushes);
 *                          the time from the block holding a window's last row
 *                          being handed over to the window's result, per window.
 *   bench_follow gen HZ HOURS CHANNELS
 *                          writes a simulated log of that rate and length to
 *                          standard output as fast as it can (for the memory
 *                          check in bench/run.sh: piped into track --follow).
 *
 * The simulated log: every channel a lightly damped oscillator (0.8 Hz,
 * decay 0.3/s, its own phase) driven by white noise, mixed so the channels
 * share the mode. */
#include <cblas.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "el_follow.h"
#include "el_rng.h"

typedef struct {
    el_rng rng;
    double x, v, dt, w, s;
} oscillator;

static void osc_init(oscillator *o, double dt)
{
    el_rng_seed(&o->rng, 11, 0);
    o->x = o->v = 0.0;
    o->dt = dt;
    o->w = 2.0 * 3.141592653589793 * 0.8;
    o->s = 0.3;
}

/* One row of text: time and channels, into buf. */
static void osc_row(oscillator *o, size_t k, size_t channels, el_buf *buf)
{
    el_buf_printf(buf, "%.3f", (double)k * o->dt);
    for (size_t c = 0; c < channels; c++) {
        double mix = 1.0 + 0.1 * (double)c;
        el_buf_printf(buf, ",%.5f",
                      mix * o->x + 0.01 * (double)c * o->v + 0.02 * el_rng_normal(&o->rng));
    }
    el_buf_printf(buf, "\n");
    double a = -o->w * o->w * o->x - 2.0 * o->s * o->v;
    o->v += o->dt * a + 0.5 * el_rng_normal(&o->rng) * 0.0316;
    o->x += o->dt * o->v;
}

static void header(size_t channels, el_buf *buf)
{
    el_buf_printf(buf, "time [s]");
    for (size_t c = 0; c < channels; c++)
        el_buf_printf(buf, ",ch%zu", c);
    el_buf_printf(buf, "\n");
}

static int gen(double hz, double hours, size_t channels)
{
    oscillator o;
    osc_init(&o, 1.0 / hz);
    el_buf b = {0};
    header(channels, &b);
    size_t rows = (size_t)(hz * hours * 3600.0);
    for (size_t k = 0; k < rows; k++) {
        osc_row(&o, k, channels, &b);
        if (b.length > 1 << 16) {
            if (fwrite(b.data, 1, b.length, stdout) != b.length)
                return 1; /* the reader went away */
            b.length = 0;
        }
    }
    fwrite(b.data, 1, b.length, stdout);
    el_buf_free(&b);
    return 0;
}

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static int latency(void)
{
    const size_t channels = 8, windows = 5, block = 100;
    const double hz = 1000.0, window_s = 10.0;
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track.window = window_s;
    fo.track.assess.boot.replicates = 200;
    el_follow *f = NULL;
    el_error err;
    if (el_follow_create(&fo, &f, &err) != EL_OK) {
        fprintf(stderr, "bench_follow: %s\n", err.message);
        return 1;
    }
    el_follow_new_file(f, "bench");
    oscillator o;
    osc_init(&o, 1.0 / hz);
    el_buf b = {0};
    header(channels, &b);
    long line = 1;
    size_t rows = (size_t)(hz * window_s) * windows, got = 0, held_max = 0;
    double lat[16];
    for (size_t k = 0; k < rows && got < windows; k += block) {
        size_t n = block + (k == 0);
        for (size_t i = 0; i < block; i++)
            osc_row(&o, k + i, channels, &b);
        double t0 = now_s();
        if (el_follow_add_lines(f, b.data, b.length, n, line, &err) != EL_OK) {
            fprintf(stderr, "bench_follow: %s\n", err.message);
            return 1;
        }
        line += (long)n;
        b.length = 0;
        for (;;) {
            const el_track_window *w = NULL;
            size_t index;
            if (el_follow_next(f, 0, &w, &index, &err) != EL_OK) {
                fprintf(stderr, "bench_follow: %s\n", err.message);
                return 1;
            }
            if (w == NULL)
                break;
            lat[got++] = now_s() - t0;
        }
        if (el_follow_rows_held(f) > held_max)
            held_max = el_follow_rows_held(f);
    }
    qsort(lat, got, sizeof(double), cmp_double);
    printf("track --follow latency (8 channels at 1 kHz, 10 s windows, 200 replicates, "
           "blocks of 0.1 s): median %.3f s, max %.3f s over %zu windows from the block "
           "with a window's last row to its result (add the --poll interval, 0.2 s, for "
           "a polled file; a pipe wakes at once); rows held at most %zu\n",
           lat[got / 2], lat[got - 1], got, held_max);
    el_buf_free(&b);
    el_follow_destroy(f);
    return 0;
}

int main(int argc, char **argv)
{
    /* As the program does (src/main.c): the bootstrap's own threads, one
     * OpenBLAS thread; else BLAS threads inside them oversubscribe the
     * cores and the latency measured is not the program's. */
    openblas_set_num_threads(1);
    if (argc == 2 && strcmp(argv[1], "latency") == 0)
        return latency();
    if (argc == 5 && strcmp(argv[1], "gen") == 0)
        return gen(atof(argv[2]), atof(argv[3]), (size_t)atoi(argv[4]));
    fprintf(stderr, "usage: bench_follow latency | bench_follow gen HZ HOURS CHANNELS\n");
    return 1;
}
