/* cli_assess: `eigenlog assess FILE [options]`. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "el_assess.h"
#include "el_html.h"
#include "el_io.h"
#include "el_report.h"

static const cli_option OPTIONS[] = {
    CLI_MODEL_OPTION_ROWS,
    {"json", "FILE", "write the full result as JSON (- = standard output)"},
    {"html", "FILE", "write a self-contained HTML report with plots"},
    {"replicates", "FILE", "write every replicate's matched eigenvalues as CSV"},
    {"modes-csv", "FILE", "write the mode table as CSV, one row per mode with its bounds"},
    {"fail-on", "unstable|ambiguous", "exit with status 5 when the verdict matches"},
    {"quiet", NULL, "print nothing but errors"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

static const char *opt_value(const cli_args *a, const char *name)
{
    return a->value[cli_index(OPTIONS, N_OPTIONS, name)];
}

/* --fail-on: 0 none, 1 unstable, 2 ambiguous. */
typedef struct {
    el_assess_options assess;
    const char *json_path;
    const char *html_path;
    const char *replicates_path;
    const char *modes_csv_path;
    int fail_on;
    int quiet;
} assess_cli;

static el_status parse_outputs(const cli_args *a, assess_cli *c, el_error *err)
{
    static const char *const fails[] = {"unstable", "ambiguous"};
    const char *v;
    int choice = 0;
    el_status st;
    if ((v = opt_value(a, "fail-on"))) {
        if ((st = cli_choice("fail-on", v, fails, 2, &choice, err)))
            return st;
        c->fail_on = choice + 1;
    }
    return EL_OK;
}

static el_status parse_assess(const cli_args *a, assess_cli *c, el_error *err)
{
    memset(c, 0, sizeof *c);
    el_assess_defaults(&c->assess);
    el_status files = cli_log_files(a, "eigenlog assess FILE... [options]", &c->assess, err);
    if (files != EL_OK)
        return files;
    c->json_path = opt_value(a, "json");
    c->html_path = opt_value(a, "html");
    c->replicates_path = opt_value(a, "replicates");
    c->modes_csv_path = opt_value(a, "modes-csv");
    c->quiet = opt_value(a, "quiet") != NULL;
    el_status st = cli_model_options(a, OPTIONS, N_OPTIONS, &c->assess, err);
    if (st == EL_OK)
        st = parse_outputs(a, c, err);
    if (st == EL_OK && c->replicates_path != NULL && c->assess.boot.replicates == 0) {
        el_error_set(err, EL_ERR_USAGE, "needs bootstrap replicates, but --boot is 0");
        el_error_option(err, "--replicates");
        el_error_hint(err, "drop --boot 0, or drop --replicates");
        return EL_ERR_USAGE;
    }
    return st;
}

/* Builds every requested output in memory first, then writes each file
 * whole (temp file + rename), so a failure while building leaves none. */
static el_status write_outputs(const assess_cli *c, const el_assessment *r,
                               el_error *err)
{
    cli_output out[4] = {{c->json_path, {0}}, {c->html_path, {0}}, {c->replicates_path, {0}},
                         {c->modes_csv_path, {0}}};
    el_status st = EL_OK;
    if (c->json_path != NULL && (st = el_report_json(r, &c->assess, &out[0].text)) != EL_OK)
        el_error_set(err, st, "could not build the JSON report");
    if (st == EL_OK && c->html_path != NULL)
        st = el_html_report(r, &c->assess, r->has_spectra ? &r->spectra : NULL, &out[1].text,
                            err);
    if (st == EL_OK && c->replicates_path != NULL)
        st = el_report_replicates_csv(r, &out[2].text, err);
    if (st == EL_OK && c->modes_csv_path != NULL &&
        (st = el_report_modes_csv(r, &out[3].text)) != EL_OK)
        el_error_set(err, st, "could not build the modes CSV");
    return cli_write_outputs(out, 4, st, err);
}

static int verdict_exit(const assess_cli *c, const el_assessment *r)
{
    if (c->fail_on == 1 && r->verdict.stability == EL_UNSTABLE)
        return 5;
    if (c->fail_on == 2 && (r->verdict.ambiguous || r->verdict.stability != EL_STABLE))
        return 5;
    return 0;
}

int cli_assess(int argc, char **argv)
{
    cli_args a;
    el_error err;
    el_error_clear(&err);
    assess_cli c;
    el_status st = cli_parse(argc, argv, OPTIONS, N_OPTIONS, &a, &err);
    if (st == EL_OK && a.help) {
        cli_print_help("eigenlog assess FILE... [options]",
                       "Fits a local linear model z[k+1] = Ad z[k] + c to the log's channels,\n"
                       "reports the operating point, the modes (frequency, damping, shape),\n"
                       "the fixed point's type and whether it is stable, with bootstrap bounds.\n"
                       "Several files (e.g. daily logs) are read as one log; FILE may be - for\n"
                       "standard input or gzip-compressed (.gz).",
                       OPTIONS, N_OPTIONS);
        return 0;
    }
    if (st == EL_OK)
        st = parse_assess(&a, &c, &err);
    if (st == EL_OK) {
        /* Every input file, not only the first, may not be an output. */
        const char *const *inputs = c.assess.paths;
        size_t n_inputs = c.assess.n_paths;
        const cli_output_path outs[4] = {{"json", c.json_path},
                                         {"replicates", c.replicates_path},
                                         {"html", c.html_path},
                                         {"modes-csv", c.modes_csv_path}};
        st = cli_check_output_paths(inputs, n_inputs, outs, 4, &err);
    }
    if (st != EL_OK) {
        cli_print_error(&err);
        return el_exit_code(st);
    }
    int any_stdout = cli_is_stdout(c.json_path) || cli_is_stdout(c.html_path) ||
                     cli_is_stdout(c.replicates_path) || cli_is_stdout(c.modes_csv_path);
    cli_progress *progress = cli_progress_start(cli_progress_wanted(c.quiet) && !any_stdout);
    c.assess.boot.progress = progress ? cli_progress_replicates : NULL;
    c.assess.boot.progress_ctx = progress;
    c.assess.stage_progress = progress ? cli_progress_stage : NULL;
    c.assess.stage_ctx = progress;
    el_assessment r;
    memset(&r, 0, sizeof r);
    st = el_assess_run(&c.assess, &r, &err);
    cli_progress_stop(progress);
    if (st == EL_OK)
        st = write_outputs(&c, &r, &err);
    if (st == EL_OK && !c.quiet && !cli_is_stdout(c.json_path) && !cli_is_stdout(c.html_path) &&
        !cli_is_stdout(c.replicates_path) && !cli_is_stdout(c.modes_csv_path)) {
        el_buf text = {0};
        st = el_report_text(&r, &c.assess, &text);
        if (st == EL_OK)
            cli_print_text(text.data);
        else
            el_error_set(&err, st, "could not build the report");
        el_buf_free(&text);
    }
    int code = st == EL_OK ? verdict_exit(&c, &r) : el_exit_code(st);
    if (st != EL_OK)
        cli_print_error(&err);
    el_assessment_free(&r);
    return code;
}
