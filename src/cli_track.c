/* cli_track: `eigenlog track FILE [options]`. */
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "el_follow.h"
#include "el_html.h"
#include "el_io.h"
#include "el_report.h"
#include "el_json.h"
#include "el_track.h"

static const cli_option OPTIONS[] = {
    CLI_MODEL_OPTION_ROWS,
    {"window", "LEN", "window length in the log's own time unit (default: the span / 8)"},
    {"step", "LEN", "distance between window starts (default: the window, no overlap)"},
    {"json", "FILE", "write the windows and the trend as JSON (- = standard output)"},
    {"html", "FILE", "write a self-contained HTML report with plots"},
    {"fail-on", "unstable|shrinking|undecided|alarm",
     "exit with status 5 when a window is unstable, the margin is shrinking, or a window is "
     "undecided (ambiguous, without bounds, or failed); follow: alarm = at the first alarm"},
    {"quiet", NULL, "print nothing but errors"},
    {"follow", NULL, "keep reading rows as they are appended (FILE) or come (-); a window "
                     "is assessed as soon as it is complete"},
    {"alarm", "COND,..",
     "follow: shrinking, unstable, undecided, margin-below=X (1/s): alarm on stderr"},
    {"alarm-after", "K", "follow: an alarm starts after K alarming windows in a row and ends "
                         "after K clear ones (default 2)"},
    {"on-alarm", "CMD", "follow: run CMD (/bin/sh -c) once per alarm episode, the facts in "
                        "EIGENLOG_* variables"},
    {"on-bad-row", "skip|stop", "follow: a malformed appended row is skipped or stops the run "
                                "(default stop)"},
    {"trend-windows", "N", "follow: fit the trend over the last N windows (default 100; "
                           "0 = all, memory then grows)"},
    {"poll", "SECONDS", "follow: wait between looks at a file that did not grow (default 0.2)"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

typedef struct {
    el_track_options track;
    const char *json_path;
    const char *html_path;
    int fail_on;                  /* 0 none, 1 unstable, 2 shrinking, 3 undecided, 4 alarm */
    int fail_on_alarm;            /* follow: exit 5 at the first alarm (fail_on == 4) */
    int quiet;
    int follow;
    el_follow_alarm alarm;
    const char *on_alarm;
    int skip_bad_rows;
    size_t trend_windows;
    double poll_s;
} track_cli;

/* The cautions of follow mode: an alarm is an aid, not a protection. */
static const char FOLLOW_CAUTION[] =
    "An alarm of eigenlog supports the machine's protection and its operators; it never "
    "replaces them: trips, interlocks and limits must act on their own.";

static const char *opt_value(const cli_args *a, const char *name)
{
    return cli_value(a, OPTIONS, N_OPTIONS, name);
}

/* A positive length in the time column's units. */
static el_status parse_length(const char *option, const char *text, double *out,
                              el_error *err)
{
    el_status st = cli_double(option, text, 0.0, 1e300, out, err);
    if (st == EL_OK && *out > 0.0)
        return EL_OK;
    el_error_set(err, EL_ERR_USAGE, "'%s' is not a positive length", text);
    char dashed[32];
    snprintf(dashed, sizeof dashed, "--%s", option);
    el_error_option(err, dashed);
    el_error_hint(err, "give a length in the log's own time unit (seconds for ISO times), "
                       "e.g. --%s 300", option);
    return EL_ERR_USAGE;
}

static el_status parse_lengths(const cli_args *a, track_cli *c, el_error *err)
{
    const char *v;
    el_status st;
    if ((v = opt_value(a, "window")) && (st = parse_length("window", v, &c->track.window, err)))
        return st;
    if ((v = opt_value(a, "step")) && (st = parse_length("step", v, &c->track.step, err)))
        return st;
    return EL_OK;
}

/* The options of --follow; refused without it. */
static el_status parse_follow(const cli_args *a, track_cli *c, el_error *err)
{
    static const char *const only[] = {"alarm", "alarm-after", "on-alarm", "on-bad-row",
                                       "trend-windows", "poll"};
    static const char *const bad_rows[] = {"stop", "skip"};
    c->follow = opt_value(a, "follow") != NULL;
    c->alarm.after = 2;
    c->trend_windows = 100;
    c->poll_s = 0.2;
    for (size_t i = 0; !c->follow && i < sizeof only / sizeof only[0]; i++) {
        if (opt_value(a, only[i]) != NULL) {
            el_error_set(err, EL_ERR_USAGE, "--%s needs --follow", only[i]);
            char dashed[32];
            snprintf(dashed, sizeof dashed, "--%s", only[i]);
            el_error_option(err, dashed);
            el_error_hint(err, "add --follow to watch a growing log, or drop --%s", only[i]);
            return EL_ERR_USAGE;
        }
    }
    if (!c->follow && c->fail_on_alarm) {
        el_error_set(err, EL_ERR_USAGE, "--fail-on alarm needs --follow");
        el_error_option(err, "--fail-on");
        el_error_hint(err, "use --fail-on shrinking for a finished log");
        return EL_ERR_USAGE;
    }
    const char *v;
    el_status st = EL_OK;
    int choice = 0;
    if ((v = opt_value(a, "alarm")) != NULL && (st = el_follow_alarm_parse(&c->alarm, v, err)))
        return st;
    if ((v = opt_value(a, "alarm-after")) != NULL &&
        (st = cli_size("alarm-after", v, 1, 1000, &c->alarm.after, err)))
        return st;
    if ((v = opt_value(a, "trend-windows")) != NULL &&
        (st = cli_size("trend-windows", v, 0, 1000000, &c->trend_windows, err)))
        return st;
    if ((v = opt_value(a, "poll")) != NULL &&
        (st = cli_double("poll", v, 0.001, 3600.0, &c->poll_s, err)))
        return st;
    if ((v = opt_value(a, "on-bad-row")) != NULL &&
        (st = cli_choice("on-bad-row", v, bad_rows, 2, &choice, err)) == EL_OK)
        c->skip_bad_rows = choice == 1;
    c->on_alarm = opt_value(a, "on-alarm");
    if (st == EL_OK && c->follow && c->track.assess.n_paths > 1) {
        el_error_set(err, EL_ERR_USAGE, "--follow watches one log, not %zu files",
                     c->track.assess.n_paths);
        el_error_option(err, "--follow");
        el_error_hint(err, "follow the file the logger appends to");
        return EL_ERR_USAGE;
    }
    if (st == EL_OK && c->follow)
        c->track.caution_extra = FOLLOW_CAUTION;
    return st;
}

static el_status parse_track(const cli_args *a, track_cli *c, el_error *err)
{
    static const char *const fails[] = {"unstable", "shrinking", "undecided", "alarm"};
    memset(c, 0, sizeof *c);
    el_track_defaults(&c->track);
    el_status files = cli_log_files(a, "eigenlog track FILE... [options]", &c->track.assess,
                                    err);
    if (files != EL_OK)
        return files;
    c->json_path = opt_value(a, "json");
    c->html_path = opt_value(a, "html");
    c->quiet = opt_value(a, "quiet") != NULL;
    el_status st = cli_model_options(a, OPTIONS, N_OPTIONS, &c->track.assess, err);
    if (st == EL_OK)
        st = parse_lengths(a, c, err);
    const char *v = opt_value(a, "fail-on");
    int choice = 0;
    if (st == EL_OK && v != NULL && (st = cli_choice("fail-on", v, fails, 4, &choice, err)) == EL_OK) {
        c->fail_on = choice + 1;
        c->fail_on_alarm = c->fail_on == 4;
    }
    if (st == EL_OK && c->fail_on == 2 && c->track.assess.boot.replicates == 0) {
        el_error_set(err, EL_ERR_USAGE, "a shrinking margin needs bounds, but --boot is 0");
        el_error_option(err, "--fail-on");
        el_error_hint(err, "drop --boot 0 (a few hundred replicates per window are enough)");
        return EL_ERR_USAGE;
    }
    if (st == EL_OK)
        st = parse_follow(a, c, err);
    return st;
}

/* A window no gate may pass as decided: it failed, has no bounds (--boot
 * 0), or its verdict is ambiguous or undecided. */
static int window_undecided(const el_track_window *w)
{
    return !w->ok || w->ambiguous || !isfinite(w->p_stable) ||
           (w->stability != EL_STABLE && w->stability != EL_UNSTABLE);
}

/* Exit status 5 when the run matches --fail-on, else 0. */
static int fail_on_exit(const track_cli *c, const el_track_result *r)
{
    if (c->fail_on == 2)
        return r->trend == EL_TREND_SHRINKING ? 5 : 0;
    for (size_t i = 0; i < r->n_windows; i++) {
        const el_track_window *w = &r->windows[i];
        if (c->fail_on == 1 && w->ok && w->stability == EL_UNSTABLE)
            return 5;
        if (c->fail_on == 3 && window_undecided(w))
            return 5;
    }
    return 0;
}

/* Builds every requested file in memory first, then writes each whole
 * (temp file + rename), so a failure while building leaves none. */
static el_status write_outputs(const track_cli *c, const el_track_result *r, el_error *err)
{
    cli_output out[2] = {{c->json_path, {0}}, {c->html_path, {0}}};
    el_status st = EL_OK;
    if (c->json_path != NULL && (st = el_track_report_json(r, &c->track, &out[0].text)) != EL_OK)
        el_error_set(err, st, "could not build the JSON report");
    if (st == EL_OK && c->html_path != NULL)
        st = el_html_track_report(r, &c->track, &out[1].text, err);
    return cli_write_outputs(out, 2, st, err);
}

static el_status print_text(const track_cli *c, const el_track_result *r, el_error *err)
{
    if (c->quiet || cli_is_stdout(c->json_path) || cli_is_stdout(c->html_path))
        return EL_OK;
    el_buf text = {0};
    el_status st = el_track_report_text(r, &c->track, &text);
    if (st == EL_OK)
        cli_print_text(text.data);
    else
        el_error_set(err, st, "could not build the report");
    el_buf_free(&text);
    return st;
}

/* ------------------------------------------------------------------ */
/* --follow */

/* Set by SIGINT/SIGTERM: the loop finishes the window it writes, then
 * writes the final trend and stops. A signal flag is the one state a
 * handler may touch. */
static volatile sig_atomic_t follow_stop = 0;

static void on_stop_signal(int sig)
{
    (void)sig;
    follow_stop = 1;
}

#define FOLLOW_MAX_CHILDREN 64

typedef struct {
    const track_cli *c;
    FILE *json;                   /* JSON Lines sink, NULL = none */
    int own_json;
    int text;                     /* 1: a line per window on standard output */
    int header_done;
    int failed_alarm;             /* --fail-on alarm: an episode started */
    pid_t children[FOLLOW_MAX_CHILDREN];
    size_t n_children;
    char path_shown[4096];
} follow_run;

/* The common envelope (docs/json.md) of every line: tool, version,
 * command, input {file, files, channel_names, time_unit}, the warnings so
 * far as {code, message}, then the record's kind. */
static void json_envelope(el_json *j, const follow_run *fr, const el_track_result *r,
                          const char *record)
{
    el_json_object_begin(j, NULL);
    el_envelope_head(j, "track");
    el_json_object_begin(j, "input");
    el_json_string(j, "file", fr->path_shown);
    el_envelope_input(j, fr->path_shown, NULL, 0, r->channel_names.items,
                      r->channel_names.count);
    el_json_string(j, "time_unit", r->time_unit[0] ? r->time_unit : "s");
    el_json_object_end(j);
    const el_warnings *lists[1] = {&r->warnings};
    el_envelope_warnings(j, "warning_details", lists, 1);
    el_json_string(j, "record", record);
}

/* Ends the record, makes it one line and writes it at once. */
static el_status json_emit(follow_run *fr, el_json *j, el_buf *b, el_error *err)
{
    el_json_object_end(j);
    el_status st = el_json_finish(j);
    if (st == EL_OK) {
        el_follow_json_line(b);
        if (b->failed)
            st = EL_ERR_NOMEM;
    }
    if (st == EL_OK && (fwrite(b->data, 1, b->length, fr->json) != b->length
                        || fflush(fr->json) != 0))
        st = el_error_set(err, EL_ERR_IO, "cannot write the JSON lines: %s", strerror(errno));
    else if (st != EL_OK)
        el_error_set(err, st, "could not build a JSON line");
    el_buf_free(b);
    return st;
}

static el_status emit_window(follow_run *fr, const el_track_window *w, size_t index,
                             const el_track_result *r, el_error *err)
{
    if (fr->text) {
        el_buf t = {0};
        int width = (int)strlen(w->to_text) > 10 ? (int)strlen(w->to_text) : 10;
        if (!fr->header_done)
            el_buf_printf(&t, "  %*s %*s  %10s  %-22s  %7s  %8s  %6s  %s\n", width, "from",
                          width, "to", "margin", "bounds", "zeta", "f Hz", "P(st)",
                          "verdict, method");
        fr->header_done = 1;
        el_track_window_text(&t, w, width);
        if (t.data != NULL)
            fputs(t.data, stdout);
        fflush(stdout);
        el_buf_free(&t);
    }
    if (fr->json == NULL)
        return EL_OK;
    el_buf b = {0};
    el_json j;
    el_json_init(&j, &b);
    json_envelope(&j, fr, r, "window");
    el_json_int(&j, "index", (long long)index);
    el_json_string(&j, "file", fr->path_shown);
    el_json_string(&j, "time_unit", r->time_unit);
    el_track_window_json(&j, "window", w, r->time_origin_s);
    return json_emit(fr, &j, &b, err);
}

static el_status emit_trend(follow_run *fr, const el_track_result *r, int final,
                            el_error *err)
{
    if (final && fr->text) {
        el_buf t = {0};
        el_buf_printf(&t, "Windows       %zu in the trend (the last %s), %zu assessed\n",
                      r->n_windows, fr->c->trend_windows ? "ones kept" : "all", r->n_ok);
        if (r->has_trend)
            el_track_trend_text(&t, r);
        else
            el_buf_printf(&t, "Trend         n/a (fewer than 3 windows with a margin)\n");
        if (el_track_warnings_text(&t, r) != EL_OK) {
            el_buf_free(&t);
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (follow report)");
        }
        el_buf_printf(&t, "Caution: %s\n         %s\n", el_assess_caution(), FOLLOW_CAUTION);
        if (t.data != NULL)
            fputs(t.data, stdout);
        fflush(stdout);
        el_buf_free(&t);
    }
    if (fr->json == NULL || (!final && !r->has_trend))
        return EL_OK;
    el_buf b = {0};
    el_json j;
    el_json_init(&j, &b);
    json_envelope(&j, fr, r, "trend");
    el_json_bool(&j, "final", final);
    el_json_int(&j, "windows", (long long)r->n_windows);
    el_json_int(&j, "assessed", (long long)r->n_ok);
    el_json_bool(&j, "has_trend", r->has_trend);
    el_track_trend_json(&j, r);
    el_json_array_begin(&j, "warnings");
    for (size_t i = 0; i < r->warnings.count; i++)
        el_json_string(&j, NULL, r->warnings.items[i]);
    el_json_array_end(&j);
    if (final) {
        el_json_string(&j, "caution", el_assess_caution());
        el_json_string(&j, "follow_caution", FOLLOW_CAUTION);
    }
    return json_emit(fr, &j, &b, err);
}

static el_status write_html(const follow_run *fr, const el_track_result *r, el_error *err)
{
    if (fr->c->html_path == NULL || r->n_windows == 0)
        return EL_OK;
    el_buf page = {0};
    el_status st = el_html_track_report(r, &fr->c->track, &page, err);
    if (st == EL_OK)
        st = el_write_file_atomic(fr->c->html_path, page.data, page.length, err);
    el_buf_free(&page);
    return st;
}

static void reap_children(follow_run *fr, int block)
{
    size_t keep = 0;
    for (size_t i = 0; i < fr->n_children; i++) {
        pid_t done = waitpid(fr->children[i], NULL, block ? 0 : WNOHANG);
        if (done == 0 || (done < 0 && errno == EINTR && !block))
            fr->children[keep++] = fr->children[i];
    }
    fr->n_children = keep;
}

static void set_env_number(const char *name, double x)
{
    char v[64];
    if (x != x)
        snprintf(v, sizeof v, "nan");
    else
        snprintf(v, sizeof v, "%.17g", x);
    setenv(name, v, 1);
}

/* Runs --on-alarm through /bin/sh -c with the facts in the environment;
 * not waited for (reaped later) unless wait_now. */
static void run_on_alarm(follow_run *fr, const char *names, const el_track_window *w,
                         size_t index, const el_track_result *r, int wait_now)
{
    reap_children(fr, 0);
    if (fr->c->on_alarm == NULL || fr->n_children == FOLLOW_MAX_CHILDREN)
        return;
    fflush(NULL);
    pid_t pid = fork();
    if (pid < 0) {
        fprintf(stderr, "eigenlog track: cannot run --on-alarm: %s\n", strerror(errno));
        return;
    }
    if (pid == 0) {
        char idx[32];
        snprintf(idx, sizeof idx, "%zu", index);
        setenv("EIGENLOG_ALARM", names, 1);
        setenv("EIGENLOG_LOG", fr->path_shown, 1);
        setenv("EIGENLOG_WINDOW_INDEX", idx, 1);
        setenv("EIGENLOG_WINDOW_START", w->from_text, 1);
        setenv("EIGENLOG_WINDOW_END", w->to_text, 1);
        set_env_number("EIGENLOG_MARGIN", w->ok ? w->margin : NAN);
        set_env_number("EIGENLOG_MARGIN_LO", w->ok ? w->margin_lo : NAN);
        set_env_number("EIGENLOG_MARGIN_HI", w->ok ? w->margin_hi : NAN);
        set_env_number("EIGENLOG_P_STABLE", w->ok ? w->p_stable : NAN);
        set_env_number("EIGENLOG_P_SHRINKING", r->has_trend ? r->p_shrinking : NAN);
        setenv("EIGENLOG_TREND", r->has_trend ? el_trend_name(r->trend) : "n/a", 1);
        setenv("EIGENLOG_TIME_UNIT", r->time_unit, 1);
        execl("/bin/sh", "sh", "-c", fr->c->on_alarm, (char *)NULL);
        _exit(127);
    }
    fr->children[fr->n_children++] = pid;
    if (wait_now)
        reap_children(fr, 1);
}

static el_status alarm_record(follow_run *fr, const char *event, const char *names,
                              const el_track_window *w, size_t index,
                              const el_track_result *r, el_error *err)
{
    if (fr->json == NULL)
        return EL_OK;
    el_buf b = {0};
    el_json j;
    el_json_init(&j, &b);
    json_envelope(&j, fr, r, "alarm");
    el_json_string(&j, "event", event);
    el_json_string(&j, "conditions", names);
    el_json_int(&j, "index", (long long)index);
    el_json_string(&j, "window_from", w->from_text);
    el_json_string(&j, "window_to", w->to_text);
    el_json_number(&j, "margin", w->ok ? w->margin : NAN);
    el_json_pair(&j, "margin_bounds", w->ok ? w->margin_lo : NAN, w->ok ? w->margin_hi : NAN);
    el_json_number(&j, "p_stable", w->ok ? w->p_stable : NAN);
    el_json_number(&j, "p_shrinking", r->has_trend ? r->p_shrinking : NAN);
    el_json_string(&j, "caution", FOLLOW_CAUTION);
    return json_emit(fr, &j, &b, err);
}

/* The alarm state after a window: a line on stderr when an episode
 * starts or ends, the command once per episode. */
static el_status check_alarm(follow_run *fr, el_follow_alarm *al, const el_track_window *w,
                             size_t index, const el_track_result *r, el_error *err)
{
    if (al->conditions == 0)
        return EL_OK;
    unsigned hits = el_follow_alarm_test(al, w, r);
    int change = el_follow_alarm_update(al, hits);
    char names[96];
    el_follow_alarm_names(change > 0 ? hits : al->conditions, names, sizeof names);
    if (change > 0) {
        fprintf(stderr, "eigenlog ALARM %s: window %zu %s .. %s, margin %.4g [%.4g, %.4g] "
                        "1/%s, P(stable) %.3f",
                names, index, w->from_text, w->to_text, w->ok ? w->margin : NAN,
                w->ok ? w->margin_lo : NAN, w->ok ? w->margin_hi : NAN,
                r->time_unit[0] ? r->time_unit : "time unit", w->ok ? w->p_stable : NAN);
        if (r->has_trend)
            fprintf(stderr, ", trend %s P(shrinking) %.3f", el_trend_name(r->trend),
                    r->p_shrinking);
        fprintf(stderr, " (%zu windows in a row). This alarm supports, never replaces, the "
                        "machine's protection.\n", al->after);
        fflush(stderr);
        if (fr->c->fail_on_alarm)
            fr->failed_alarm = 1;
        run_on_alarm(fr, names, w, index, r, fr->c->fail_on_alarm);
        return alarm_record(fr, "start", names, w, index, r, err);
    }
    if (change < 0) {
        fprintf(stderr, "eigenlog alarm cleared: window %zu %s .. %s, %zu clear windows in "
                        "a row\n", index, w->from_text, w->to_text, al->after);
        fflush(stderr);
        return alarm_record(fr, "end", names, w, index, r, err);
    }
    return EL_OK;
}

static void print_notes(el_follow *f)
{
    el_warnings *n = el_follow_notes(f);
    for (size_t i = 0; i < n->count; i++)
        fprintf(stderr, "eigenlog track: %s\n", n->items[i]);
    el_warnings_free(n);
}

static void sleep_s(double s)
{
    struct timespec ts;
    ts.tv_sec = (time_t)s;
    ts.tv_nsec = (long)((s - (double)ts.tv_sec) * 1e9);
    nanosleep(&ts, NULL);
}

/* Windows complete after the rows read so far, each written at once. */
static el_status drain_windows(follow_run *fr, el_follow *f, el_follow_alarm *al,
                               int at_end, el_error *err)
{
    el_status st = EL_OK;
    while (st == EL_OK && !follow_stop && !fr->failed_alarm) {
        const el_track_window *w = NULL;
        size_t index = 0;
        st = el_follow_next(f, at_end, &w, &index, err);
        if (st != EL_OK || w == NULL)
            break;
        const el_track_result *r = el_follow_result(f);
        st = emit_window(fr, w, index, r, err);
        if (st == EL_OK)
            st = emit_trend(fr, r, 0, err);
        if (st == EL_OK)
            st = write_html(fr, r, err);
        if (st == EL_OK)
            st = check_alarm(fr, al, w, index, r, err);
    }
    return st;
}

static el_status follow_loop(follow_run *fr, el_follow *f, el_follow_reader *rd,
                             el_follow_alarm *al, el_error *err)
{
    el_status st = EL_OK;
    int at_end = 0;
    while (st == EL_OK && !follow_stop && !fr->failed_alarm && !at_end) {
        el_follow_event ev;
        const char *lines;
        size_t len, n_lines;
        long first;
        st = el_follow_reader_poll(rd, 0, &ev, &lines, &len, &n_lines, &first, err);
        if (st != EL_OK)
            break;
        if (ev == EL_FOLLOW_LINES) {
            st = el_follow_add_lines(f, lines, len, n_lines, first, err);
            print_notes(f);
        } else if (ev == EL_FOLLOW_TRUNCATED || ev == EL_FOLLOW_ROTATED) {
            fprintf(stderr, "eigenlog track: %s was %s: reading it again from its first "
                            "line\n", rd->path,
                    ev == EL_FOLLOW_TRUNCATED ? "truncated" : "replaced (rotated)");
            el_follow_new_file(f, rd->path);
        } else if (ev == EL_FOLLOW_END) {
            at_end = 1;
        }
        if (st == EL_OK)
            st = drain_windows(fr, f, al, at_end, err);
        if (ev == EL_FOLLOW_NOTHING && !rd->is_stream && !follow_stop)
            sleep_s(fr->c->poll_s);
        reap_children(fr, 0);
    }
    return st;
}

static int run_follow(track_cli *c)
{
    el_error err;
    el_error_clear(&err);
    follow_run fr;
    memset(&fr, 0, sizeof fr);
    fr.c = c;
    const char *path = c->track.assess.path;
    snprintf(fr.path_shown, sizeof fr.path_shown, "%s",
             strcmp(path, "-") == 0 ? "<stdin>" : path);
    el_follow_options fo;
    el_follow_defaults(&fo);
    fo.track = c->track;
    fo.trend_windows = c->trend_windows;
    fo.skip_bad_rows = c->skip_bad_rows;
    el_follow *f = NULL;
    el_follow_reader rd;
    memset(&rd, 0, sizeof rd);
    rd.fd = -1;
    el_status st = el_follow_create(&fo, &f, &err);
    if (st == EL_OK && cli_is_stdout(c->html_path)) {
        el_error_set(&err, EL_ERR_USAGE, "--html - cannot be rewritten after each window");
        el_error_option(&err, "--html");
        el_error_hint(&err, "give --html a file; a browser refresh shows the current state");
        st = EL_ERR_USAGE;
    }
    if (st == EL_OK && c->json_path != NULL) {
        if (cli_is_stdout(c->json_path)) {
            fr.json = stdout;
        } else if ((fr.json = fopen(c->json_path, "w")) == NULL) {
            el_error_set(&err, EL_ERR_IO, "cannot write %s: %s", c->json_path, strerror(errno));
            el_error_at(&err, c->json_path, 0, 0);
            st = EL_ERR_IO;
        } else {
            fr.own_json = 1;
        }
    }
    fr.text = !c->quiet && !cli_is_stdout(c->json_path);
    if (st == EL_OK)
        st = el_follow_reader_open(&rd, path, &err);
    if (st == EL_OK) {
        struct sigaction sa;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_stop_signal;
        sigemptyset(&sa.sa_mask);
        sa.sa_flags = 0; /* no SA_RESTART: a blocking read returns at once */
        sigaction(SIGINT, &sa, NULL);
        sigaction(SIGTERM, &sa, NULL);
        el_follow_new_file(f, fr.path_shown);
        el_follow_alarm al = c->alarm;
        st = follow_loop(&fr, f, &rd, &al, &err);
        el_error ferr;
        el_error_clear(&ferr);
        /* The final trend also after an error in the stream: what was
         * assessed stays said. */
        el_status fst = emit_trend(&fr, el_follow_result(f), 1, &ferr);
        if (st == EL_OK)
            st = fst, err = ferr;
    }
    reap_children(&fr, 1);
    if (fr.own_json && fclose(fr.json) != 0 && st == EL_OK)
        st = el_error_set(&err, EL_ERR_IO, "cannot write %s", c->json_path);
    el_follow_reader_close(&rd);
    const el_track_result *r = f != NULL ? el_follow_result(f) : NULL;
    int code = st != EL_OK                                      ? el_exit_code(st)
               : fr.failed_alarm                                ? 5
               : c->fail_on >= 1 && c->fail_on <= 3 && r != NULL ? fail_on_exit(c, r)
                                                                : 0;
    if (st != EL_OK)
        cli_print_error(&err);
    el_follow_destroy(f);
    return code;
}

int cli_track(int argc, char **argv)
{
    cli_args a;
    el_error err;
    el_error_clear(&err);
    track_cli c;
    el_status st = cli_parse(argc, argv, OPTIONS, N_OPTIONS, &a, &err);
    if (st == EL_OK && a.help) {
        cli_print_help("eigenlog track FILE... [options]",
                       "Cuts a long log into windows, assesses each as `assess` would (model,\n"
                       "modes, bootstrap, verdict) and fits the trend of the margin, the decay\n"
                       "rate of the least-damped mode: is it shrinking, how fast, and when would\n"
                       "it reach zero at that rate.\n"
                       "With --follow it watches a log that grows (FILE) or streams (-): each\n"
                       "window is assessed as soon as its last row is in, one line (or one\n"
                       "JSON line) per window, alarms on stderr.\n"
                       "An alarm supports, never replaces, the machine's protection: trips,\n"
                       "interlocks and limits must act on their own.",
                       OPTIONS, N_OPTIONS);
        return 0;
    }
    if (st == EL_OK)
        st = parse_track(&a, &c, &err);
    if (st == EL_OK) {
        /* Every input file, not only the first, may not be an output. */
        const char *const *inputs = c.track.assess.paths;
        size_t n_inputs = c.track.assess.n_paths;
        const cli_output_path outs[2] = {{"json", c.json_path}, {"html", c.html_path}};
        st = cli_check_output_paths(inputs, n_inputs, outs, 2, &err);
    }
    if (st != EL_OK) {
        cli_print_error(&err);
        return el_exit_code(st);
    }
    if (c.follow)
        return run_follow(&c);
    int any_stdout = cli_is_stdout(c.json_path) || cli_is_stdout(c.html_path);
    cli_progress *progress = cli_progress_start(cli_progress_wanted(c.quiet) && !any_stdout);
    c.track.progress = progress ? cli_progress_windows : NULL;
    c.track.progress_ctx = progress;
    c.track.assess.stage_progress = progress ? cli_progress_stage : NULL;
    c.track.assess.stage_ctx = progress;
    el_track_result r;
    memset(&r, 0, sizeof r);
    st = el_track_run(&c.track, &r, &err);
    cli_progress_stop(progress);
    if (st == EL_OK)
        st = write_outputs(&c, &r, &err);
    if (st == EL_OK)
        st = print_text(&c, &r, &err);
    int code = st != EL_OK ? el_exit_code(st) : fail_on_exit(&c, &r);
    if (st != EL_OK)
        cli_print_error(&err);
    el_track_free(&r);
    return code;
}
