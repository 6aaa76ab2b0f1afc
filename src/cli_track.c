/* cli_track: `eigenlog track FILE [options]`. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "el_html.h"
#include "el_io.h"
#include "el_track.h"

static const cli_option OPTIONS[] = {
    CLI_MODEL_OPTION_ROWS,
    {"window", "LEN", "window length in the log's own time unit (default: the span / 8)"},
    {"step", "LEN", "distance between window starts (default: the window, no overlap)"},
    {"json", "FILE", "write the windows and the trend as JSON (- = standard output)"},
    {"html", "FILE", "write a self-contained HTML report with plots"},
    {"fail-on", "unstable|shrinking|undecided",
     "exit with status 5 when a window is unstable, the margin is shrinking, or a window is "
     "undecided (ambiguous, without bounds, or failed)"},
    {"quiet", NULL, "print nothing but errors"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

typedef struct {
    el_track_options track;
    const char *json_path;
    const char *html_path;
    int fail_on;                  /* 0 none, 1 unstable, 2 shrinking, 3 undecided */
    int quiet;
} track_cli;

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

static el_status parse_track(const cli_args *a, track_cli *c, el_error *err)
{
    static const char *const fails[] = {"unstable", "shrinking", "undecided"};
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
    if (st == EL_OK && v != NULL && (st = cli_choice("fail-on", v, fails, 3, &choice, err)) == EL_OK)
        c->fail_on = choice + 1;
    if (st == EL_OK && c->fail_on == 2 && c->track.assess.boot.replicates == 0) {
        el_error_set(err, EL_ERR_USAGE, "a shrinking margin needs bounds, but --boot is 0");
        el_error_option(err, "--fail-on");
        el_error_hint(err, "drop --boot 0 (a few hundred replicates per window are enough)");
        return EL_ERR_USAGE;
    }
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
                       "it reach zero at that rate.",
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
