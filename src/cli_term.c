/* cli_term: the terminal side of the front end: the width text is
 * wrapped to, and the one-line stage progress on standard error. */
#include <pthread.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/ioctl.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "el_term.h"

size_t cli_term_width(void)
{
    const char *env = getenv("COLUMNS");
    if (env != NULL && *env != '\0') {
        char *end = NULL;
        long v = strtol(env, &end, 10);
        if (end != NULL && *end == '\0' && v >= 20 && v <= 1000)
            return (size_t)v;
    }
    struct winsize ws;
    if (isatty(STDOUT_FILENO) && ioctl(STDOUT_FILENO, TIOCGWINSZ, &ws) == 0 && ws.ws_col >= 20)
        return ws.ws_col;
    return 80;
}

void cli_print_text(const char *text)
{
    el_buf wrapped = {0};
    if (el_term_wrap(text, cli_term_width(), &wrapped) == EL_OK && wrapped.data != NULL)
        fputs(wrapped.data, stdout);
    else
        fputs(text, stdout);
    el_buf_free(&wrapped);
}

void cli_printf_wrapped(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    char *text = NULL;
    size_t size = 0;
    FILE *mem = open_memstream(&text, &size);
    if (mem == NULL) {
        vprintf(fmt, ap);
    } else {
        vfprintf(mem, fmt, ap);
        if (fclose(mem) == 0 && text != NULL)
            cli_print_text(text);
        free(text);
    }
    va_end(ap);
}

/* ---------------------------------------------------------------- progress */

/* A stage is drawn once it has run this long (s): shorter ones stay silent.
 * EIGENLOG_PROGRESS_DELAY (seconds, 0 to 60) overrides it, so a test can see
 * the line on a machine fast enough to finish a stage within a second. */
#define PROGRESS_DELAY_S 1.0
/* Redraw period (ns) of the drawing thread. */
#define PROGRESS_TICK_NS 200000000L
/* The drawn line's longest text: narrower than any terminal worth drawing on. */
#define PROGRESS_MAX_COLS 60

struct cli_progress {
    pthread_t thread;
    pthread_mutex_t mu;
    pthread_cond_t cv;
    int stop;
    int active;                   /* a stage is running */
    char stage[48];
    size_t done, total;
    struct timespec started;
    size_t drawn;                 /* columns on screen now (0: nothing drawn) */
    double delay_s;               /* a stage is drawn after running this long */
};

int cli_progress_wanted(int quiet)
{
    return !quiet && isatty(STDERR_FILENO);
}

static double since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

/* Caller holds the mutex. */
static void clear_line(cli_progress *p)
{
    if (p->drawn == 0)
        return;
    fprintf(stderr, "\r%*s\r", (int)p->drawn, "");
    fflush(stderr);
    p->drawn = 0;
}

/* Caller holds the mutex. */
static void draw_line(cli_progress *p)
{
    char line[PROGRESS_MAX_COLS + 1];
    int n;
    if (p->total > 1)
        n = snprintf(line, sizeof line, "%s: %zu of %zu", p->stage, p->done, p->total);
    else /* no counts (a fit, a set-up): the seconds show it is alive */
        n = snprintf(line, sizeof line, "%s ... %.0f s", p->stage, since(&p->started));
    size_t len = n < 0 ? 0 : (size_t)n < sizeof line ? (size_t)n : sizeof line - 1;
    fprintf(stderr, "\r%s%*s", line, p->drawn > len ? (int)(p->drawn - len) : 0, "");
    fflush(stderr);
    p->drawn = len > p->drawn ? len : p->drawn;
}

static void *draw_loop(void *arg)
{
    cli_progress *p = arg;
    pthread_mutex_lock(&p->mu);
    while (!p->stop) {
        if (p->active && since(&p->started) >= p->delay_s)
            draw_line(p);
        struct timespec until;
        clock_gettime(CLOCK_REALTIME, &until);
        until.tv_nsec += PROGRESS_TICK_NS;
        if (until.tv_nsec >= 1000000000L) {
            until.tv_sec++;
            until.tv_nsec -= 1000000000L;
        }
        pthread_cond_timedwait(&p->cv, &p->mu, &until);
    }
    clear_line(p);
    pthread_mutex_unlock(&p->mu);
    return NULL;
}

cli_progress *cli_progress_start(int enabled)
{
    if (!enabled)
        return NULL;
    cli_progress *p = calloc(1, sizeof *p);
    if (p == NULL)
        return NULL;
    p->delay_s = PROGRESS_DELAY_S;
    const char *env = getenv("EIGENLOG_PROGRESS_DELAY");
    if (env != NULL && *env != '\0') {
        char *end;
        double v = strtod(env, &end);
        if (*end == '\0' && v >= 0.0 && v <= 60.0)
            p->delay_s = v;
    }
    pthread_mutex_init(&p->mu, NULL);
    pthread_cond_init(&p->cv, NULL);
    if (pthread_create(&p->thread, NULL, draw_loop, p) != 0) {
        pthread_mutex_destroy(&p->mu);
        pthread_cond_destroy(&p->cv);
        free(p);
        return NULL;
    }
    return p;
}

void cli_progress_stage(void *ctx, const char *stage, size_t done, size_t total)
{
    cli_progress *p = ctx;
    if (p == NULL || stage == NULL)
        return;
    pthread_mutex_lock(&p->mu);
    int fresh = !p->active || strcmp(p->stage, stage) != 0;
    if (fresh) {
        clear_line(p);
        snprintf(p->stage, sizeof p->stage, "%s", stage);
        clock_gettime(CLOCK_MONOTONIC, &p->started);
        p->active = 1;
    }
    p->done = done;
    p->total = total;
    if (total > 0 && done >= total) {
        clear_line(p);
        p->active = 0;
    } else if (fresh && p->delay_s <= 0.0) {
        /* No delay asked: a new stage is drawn at once, not at the next
         * tick, so one shorter than a tick is seen too (tests/e2e_term.sh). */
        draw_line(p);
    }
    pthread_mutex_unlock(&p->mu);
}

void cli_progress_replicates(void *ctx, size_t done, size_t total)
{
    cli_progress_stage(ctx, "bootstrap replicates", done, total);
}

void cli_progress_windows(void *ctx, size_t done, size_t total)
{
    cli_progress_stage(ctx, "windows assessed", done, total);
}

void cli_progress_stop(cli_progress *p)
{
    if (p == NULL)
        return;
    pthread_mutex_lock(&p->mu);
    p->stop = 1;
    pthread_cond_signal(&p->cv);
    pthread_mutex_unlock(&p->mu);
    pthread_join(p->thread, NULL);
    pthread_mutex_destroy(&p->mu);
    pthread_cond_destroy(&p->cv);
    free(p);
}
