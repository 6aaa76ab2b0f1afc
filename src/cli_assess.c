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
    {"time", "COL", "time column (default: the first column)"},
    {"channels", "A,B,..", "state channels (default: every column but time)"},
    {"from", "T", "window start, in the time column's units or ISO 8601"},
    {"to", "T", "window end, likewise"},
    {"max-gap", "N", "longest run of missing samples to fill (default 5)"},
    {"detrend", "none|mean|linear", "remove each channel's mean or straight-line drift first (default none)"},
    {"band", "LO:HI", "zero-phase band limit in Hz (per time unit) before the fit"},
    {"input", "COL,..", "measured input columns: excitation, not state (z[k+1] = Ad z + B u + c)"},
    {"lags", "K|auto", "delay copies of every channel in the state (default 0; auto: by BIC)"},
    {"rank", "R|auto|full", "DMD rank: a number, auto (optimal hard threshold) or full (default)"},
    {"method", "auto|ls|fb|tls|iv|ssi", "estimator (default auto: chosen by the data's regime, cross-checked)"},
    {"depth", "N", "iv/ssi: block rows of past measurements (default lags + 1)"},
    {"boot", "N", "bootstrap replicates (default 1000; 0 turns bounds off)"},
    {"resample", "blocks|model", "bootstrap scheme (default blocks)"},
    {"block", "L|auto", "block length of the bootstrap (default auto)"},
    {"no-bias-correction", NULL, "ls: do not correct the bootstrap for the estimator's small-sample bias"},
    {"level", "P", "level of the bounds and of a confident verdict (default 0.95)"},
    {"seed", "S", "random seed (default 1): same seed, same numbers"},
    {"threads", "N", "worker threads (default: all cores)"},
    {"json", "FILE", "write the full result as JSON (- = standard output)"},
    {"html", "FILE", "write a self-contained HTML report with plots"},
    {"replicates", "FILE", "write every replicate's matched eigenvalues as CSV"},
    {"fail-on", "unstable|ambiguous", "exit with status 5 when the verdict matches"},
    {"quiet", NULL, "print nothing but errors"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

static const char *opt_value(const cli_args *a, const char *name)
{
    return a->value[cli_index(OPTIONS, N_OPTIONS, name)];
}

static el_status parse_rank(const char *text, long *rank, el_error *err)
{
    if (text == NULL || strcmp(text, "full") == 0) {
        *rank = EL_RANK_FULL;
        return EL_OK;
    }
    if (strcmp(text, "auto") == 0) {
        *rank = EL_RANK_AUTO;
        return EL_OK;
    }
    size_t r = 0;
    el_status st = cli_size("rank", text, 1, 100000, &r, err);
    if (st != EL_OK)
        el_error_hint(err, "give a whole number of modes, auto or full");
    *rank = (long)r;
    return st;
}

static el_status parse_choice(const char *option, const char *text,
                              const char *const *choices, int n, int *out,
                              el_error *err)
{
    for (int i = 0; i < n; i++)
        if (strcmp(text, choices[i]) == 0) {
            *out = i;
            return EL_OK;
        }
    el_error_set(err, EL_ERR_USAGE, "'%s' is not one of the choices", text);
    char dashed[64];
    snprintf(dashed, sizeof dashed, "--%s", option);
    el_error_option(err, dashed);
    el_error_hint(err, "choose %s%s%s", choices[0], n > 1 ? " or " : "",
                  n > 1 ? choices[1] : "");
    return EL_ERR_USAGE;
}

/* --fail-on: 0 none, 1 unstable, 2 ambiguous. */
typedef struct {
    el_assess_options assess;
    const char *json_path;
    const char *html_path;
    const char *replicates_path;
    int fail_on;
    int quiet;
} assess_cli;

static el_status parse_numbers(const cli_args *a, assess_cli *c, el_error *err)
{
    el_assess_options *o = &c->assess;
    const char *v;
    el_status st = EL_OK;
    if ((v = opt_value(a, "max-gap")) && (st = cli_size("max-gap", v, 0, 1000000, &o->max_gap, err)))
        return st;
    if ((v = opt_value(a, "lags")) && strcmp(v, "auto") == 0)
        o->lags_auto = 1;
    else if (v && (st = cli_size("lags", v, 0, 1000, &o->fit.lags, err)))
        return st;
    if ((v = opt_value(a, "depth")) && (st = cli_size("depth", v, 1, 10000, &o->fit.depth, err)))
        return st;
    if ((st = parse_rank(opt_value(a, "rank"), &o->fit.rank, err)))
        return st;
    if ((v = opt_value(a, "boot")) && (st = cli_size("boot", v, 0, 1000000, &o->boot.replicates, err)))
        return st;
    if ((v = opt_value(a, "block")) && strcmp(v, "auto") != 0 &&
        (st = cli_size("block", v, 1, 100000000, &o->boot.block_length, err)))
        return st;
    if ((v = opt_value(a, "level")) && (st = cli_double("level", v, 0.5, 0.999, &o->boot.level, err)))
        return st;
    size_t seed = 0;
    if ((v = opt_value(a, "seed"))) {
        if ((st = cli_size("seed", v, 0, (size_t)-1, &seed, err)))
            return st;
        o->boot.seed = (uint64_t)seed;
    }
    if ((v = opt_value(a, "threads")) && (st = cli_size("threads", v, 1, 1024, &o->boot.threads, err)))
        return st;
    return EL_OK;
}

static el_status parse_choices(const cli_args *a, assess_cli *c, el_error *err)
{
    static const char *const kinds[] = {"blocks", "model"};
    static const char *const fails[] = {"unstable", "ambiguous"};
    const char *v;
    int choice = 0;
    el_status st;
    if ((v = opt_value(a, "detrend")) && (st = el_prep_parse_detrend(v, &c->assess.detrend, err)))
        return st;
    if ((v = opt_value(a, "method")) && strcmp(v, "auto") != 0) {
        if ((st = el_method_parse(v, &c->assess.fit.method, err)))
            return st;
        c->assess.method_auto = 0;
    }
    if ((v = opt_value(a, "resample"))) {
        if ((st = parse_choice("resample", v, kinds, 2, &choice, err)))
            return st;
        c->assess.boot.kind = choice == 1 ? EL_RESAMPLE_MODEL : EL_RESAMPLE_BLOCKS;
    }
    if ((v = opt_value(a, "fail-on"))) {
        if ((st = parse_choice("fail-on", v, fails, 2, &choice, err)))
            return st;
        c->fail_on = choice + 1;
    }
    return EL_OK;
}

static el_status parse_assess(const cli_args *a, assess_cli *c, el_error *err)
{
    memset(c, 0, sizeof *c);
    el_assess_defaults(&c->assess);
    if (a->n_positional != 1) {
        el_error_set(err, EL_ERR_USAGE, a->n_positional == 0 ? "no log file given"
                                                             : "more than one log file given");
        el_error_hint(err, "eigenlog assess FILE [options]; FILE may be - for stdin");
        return EL_ERR_USAGE;
    }
    c->assess.path = a->positional[0];
    c->assess.time_column = opt_value(a, "time");
    c->assess.channels = opt_value(a, "channels");
    c->assess.from_text = opt_value(a, "from");
    c->assess.to_text = opt_value(a, "to");
    c->assess.band_text = opt_value(a, "band");
    c->assess.inputs = opt_value(a, "input");
    c->json_path = opt_value(a, "json");
    c->html_path = opt_value(a, "html");
    c->replicates_path = opt_value(a, "replicates");
    c->quiet = opt_value(a, "quiet") != NULL;
    if (opt_value(a, "no-bias-correction") != NULL)
        c->assess.boot.bias_correct = 0;
    el_status st = parse_numbers(a, c, err);
    if (st == EL_OK)
        st = parse_choices(a, c, err);
    if (st == EL_OK && c->replicates_path != NULL && c->assess.boot.replicates == 0) {
        el_error_set(err, EL_ERR_USAGE, "needs bootstrap replicates, but --boot is 0");
        el_error_option(err, "--replicates");
        el_error_hint(err, "drop --boot 0, or drop --replicates");
        return EL_ERR_USAGE;
    }
    return st;
}

static void show_progress(void *ctx, size_t done, size_t total)
{
    (void)ctx;
    fprintf(stderr, "\rbootstrap: %zu of %zu replicates", done, total);
    if (done == total)
        fprintf(stderr, "\r%50s\r", "");
    fflush(stderr);
}

/* Builds every requested output in memory first, then writes each file
 * whole (temp file + rename), so a failure while building leaves none. */
static el_status write_outputs(const assess_cli *c, const el_assessment *r,
                               el_error *err)
{
    el_buf json = {0}, html = {0}, csv = {0};
    el_status st = EL_OK;
    if (c->json_path != NULL && (st = el_report_json(r, &c->assess, &json)) != EL_OK)
        el_error_set(err, st, "could not build the JSON report");
    if (st == EL_OK && c->html_path != NULL)
        st = el_html_report(r, &c->assess, r->has_spectra ? &r->spectra : NULL, &html, err);
    if (st == EL_OK && c->replicates_path != NULL)
        st = el_report_replicates_csv(r, &csv, err);
    if (st == EL_OK && c->json_path != NULL)
        st = el_write_file_atomic(c->json_path, json.data, json.length, err);
    if (st == EL_OK && c->html_path != NULL)
        st = el_write_file_atomic(c->html_path, html.data, html.length, err);
    if (st == EL_OK && c->replicates_path != NULL)
        st = el_write_file_atomic(c->replicates_path, csv.data, csv.length, err);
    el_buf_free(&json);
    el_buf_free(&html);
    el_buf_free(&csv);
    return st;
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
        cli_print_help("eigenlog assess FILE [options]",
                       "Fits a local linear model z[k+1] = Ad z[k] + c to the log's channels,\n"
                       "reports the operating point, the modes (frequency, damping, shape),\n"
                       "the fixed point's type and whether it is stable, with bootstrap bounds.",
                       OPTIONS, N_OPTIONS);
        return 0;
    }
    if (st == EL_OK)
        st = parse_assess(&a, &c, &err);
    /* Refuse an unwritable output path before minutes of work. */
    if (st == EL_OK)
        st = el_check_writable(c.json_path, &err);
    if (st == EL_OK)
        st = el_check_writable(c.replicates_path, &err);
    if (st == EL_OK)
        st = el_check_writable(c.html_path, &err);
    if (st != EL_OK) {
        cli_print_error(&err);
        return el_exit_code(st);
    }
    if (!c.quiet && isatty(fileno(stderr))) {
        c.assess.boot.progress = show_progress;
        c.assess.boot.progress_ctx = NULL;
    }
    el_assessment r;
    memset(&r, 0, sizeof r);
    st = el_assess_run(&c.assess, &r, &err);
    if (st == EL_OK)
        st = write_outputs(&c, &r, &err);
    if (st == EL_OK && !c.quiet && !(c.json_path && strcmp(c.json_path, "-") == 0)) {
        el_buf text = {0};
        st = el_report_text(&r, &c.assess, &text);
        if (st == EL_OK)
            fputs(text.data, stdout);
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
