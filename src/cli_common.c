/* cli_common: option parsing, number parsing and error printing shared by
 * the subcommands. */
#include "cli.h"

#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Records option name (given without dashes) as "--name". */
static void set_option(el_error *err, const char *name)
{
    char dashed[64];
    snprintf(dashed, sizeof dashed, "--%s", name);
    el_error_option(err, dashed);
}

size_t cli_index(const cli_option *table, size_t n_options, const char *name)
{
    for (size_t i = 0; i < n_options; i++)
        if (strcmp(table[i].name, name) == 0)
            return i;
    fprintf(stderr, "eigenlog: internal error: no option --%s\n", name);
    abort();
}

static long find_option(const cli_option *table, size_t n, const char *name,
                        size_t len)
{
    for (size_t i = 0; i < n; i++)
        if (strlen(table[i].name) == len && strncmp(table[i].name, name, len) == 0)
            return (long)i;
    return -1;
}

static el_status unknown_option(el_error *err, const char *arg)
{
    el_error_set(err, EL_ERR_USAGE, "unknown option");
    el_error_option(err, arg);
    el_error_hint(err, "see the options with --help");
    return EL_ERR_USAGE;
}

el_status cli_parse(int argc, char **argv, const cli_option *table, size_t n_options,
                    cli_args *args, el_error *err)
{
    memset(args, 0, sizeof *args);
    for (int i = 0; i < argc; i++) {
        const char *arg = argv[i];
        if (strcmp(arg, "-h") == 0 || strcmp(arg, "--help") == 0) {
            args->help = 1;
            continue;
        }
        if (strcmp(arg, "-") == 0 || arg[0] != '-') {
            if (args->n_positional == CLI_MAX_POSITIONAL) {
                el_error_set(err, EL_ERR_USAGE, "too many arguments ('%s')", arg);
                el_error_hint(err, "see the usage with --help");
                return EL_ERR_USAGE;
            }
            args->positional[args->n_positional++] = arg;
            continue;
        }
        const char *name = arg + (arg[1] == '-' ? 2 : 1);
        const char *eq = strchr(name, '=');
        size_t len = eq ? (size_t)(eq - name) : strlen(name);
        long idx = (arg[1] != '-' && len == 1 && name[0] == 'o')
                       ? find_option(table, n_options, "output", 6)
                       : (arg[1] == '-' ? find_option(table, n_options, name, len) : -1);
        if (idx < 0)
            return unknown_option(err, arg);
        const cli_option *o = &table[idx];
        if (args->value[idx] != NULL) {
            el_error_set(err, EL_ERR_USAGE, "given twice");
            el_error_option(err, arg);
            el_error_hint(err, "give each option once");
            return EL_ERR_USAGE;
        }
        if (o->value_name == NULL) {
            if (eq != NULL) {
                el_error_set(err, EL_ERR_USAGE, "takes no value");
                set_option(err, o->name);
                el_error_hint(err, "write it alone, as --%s", o->name);
                return EL_ERR_USAGE;
            }
            args->value[idx] = "";
        } else if (eq != NULL) {
            args->value[idx] = eq + 1;
        } else if (i + 1 < argc) {
            args->value[idx] = argv[++i];
        } else {
            el_error_set(err, EL_ERR_USAGE, "needs a value");
            el_error_option(err, arg);
            el_error_hint(err, "write --%s %s", o->name, o->value_name);
            return EL_ERR_USAGE;
        }
    }
    return EL_OK;
}

el_status cli_size(const char *option, const char *text, size_t min, size_t max,
                   size_t *out, el_error *err)
{
    char *end = NULL;
    errno = 0;
    unsigned long long v = strtoull(text, &end, 10);
    if (text[0] == '\0' || text[0] == '-' || *end != '\0' || errno != 0 ||
        v < min || v > max) {
        el_error_set(err, EL_ERR_USAGE, "'%s' is not a whole number from %zu to %zu",
                     text, min, max);
        set_option(err, option);
        el_error_hint(err, "give a whole number, e.g. --%s %zu", option, min);
        return EL_ERR_USAGE;
    }
    *out = (size_t)v;
    return EL_OK;
}

el_status cli_double(const char *option, const char *text, double min, double max,
                     double *out, el_error *err)
{
    char *end = NULL;
    errno = 0;
    double v = strtod(text, &end);
    if (text[0] == '\0' || *end != '\0' || errno != 0 || !isfinite(v) || v < min ||
        v > max) {
        el_error_set(err, EL_ERR_USAGE, "'%s' is not a number from %g to %g", text,
                     min, max);
        set_option(err, option);
        el_error_hint(err, "give a plain decimal number, e.g. --%s %g", option, min);
        return EL_ERR_USAGE;
    }
    *out = v;
    return EL_OK;
}

void cli_print_error(const el_error *err)
{
    char text[2048];
    el_error_format(err, text, sizeof text);
    fprintf(stderr, "eigenlog: %s\n", text);
}

void cli_print_help(const char *usage, const char *description,
                    const cli_option *table, size_t n_options)
{
    /* Built in memory, then wrapped to the terminal (cli_print_text): an
     * option's help continues deeper than the option column, the layout
     * tools/help2roff.awk and tools/gen_completion.sh read. */
    char *text = NULL;
    size_t size = 0;
    FILE *mem = open_memstream(&text, &size);
    FILE *o = mem != NULL ? mem : stdout;
    fprintf(o, "usage: %s\n\n%s\n", usage, description);
    if (n_options > 0)
        fprintf(o, "\noptions:\n");
    for (size_t i = 0; i < n_options; i++) {
        char left[64];
        snprintf(left, sizeof left, "--%s%s%s", table[i].name,
                 table[i].value_name ? " " : "",
                 table[i].value_name ? table[i].value_name : "");
        fprintf(o, "  %-24s %s\n", left, table[i].help);
    }
    fprintf(o, "  %-24s %s\n", "-h, --help", "show this help");
    if (mem != NULL && fclose(mem) == 0 && text != NULL)
        cli_print_text(text);
    free(text);
}

const char *cli_value(const cli_args *args, const cli_option *table, size_t n_options,
                      const char *name)
{
    return args->value[cli_index(table, n_options, name)];
}

el_status cli_choice(const char *option, const char *text, const char *const *choices,
                     int n, int *out, el_error *err)
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

static el_status parse_rank(const char *text, long *rank, el_error *err)
{
    if (text == NULL) {
        *rank = EL_RANK_FULL;
        return EL_OK;
    }
    if (strcmp(text, "full") == 0) {
        *rank = EL_RANK_ALL;
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

/* Lags, depth, rank, the bootstrap's numbers and the seed. */
static el_status model_numbers(const cli_args *a, const cli_option *t, size_t n,
                               el_assess_options *o, el_error *err)
{
    const char *v;
    el_status st = EL_OK;
    if ((v = cli_value(a, t, n, "max-gap")) && (st = cli_size("max-gap", v, 0, 1000000, &o->max_gap, err)))
        return st;
    if ((v = cli_value(a, t, n, "lags")) && strcmp(v, "auto") == 0)
        o->lags_auto = 1;
    else if (v && (st = cli_size("lags", v, 0, 1000, &o->fit.lags, err)))
        return st;
    o->lags_fixed = v != NULL && !o->lags_auto;
    if ((v = cli_value(a, t, n, "depth")) && (st = cli_size("depth", v, 1, 10000, &o->fit.depth, err)))
        return st;
    if ((st = parse_rank(cli_value(a, t, n, "rank"), &o->fit.rank, err)))
        return st;
    if ((v = cli_value(a, t, n, "horizon")) &&
        (st = cli_double("horizon", v, 1e-300, 1e300, &o->fit.horizon_time, err)))
        return st;
    if ((v = cli_value(a, t, n, "order")) && strcmp(v, "auto") != 0 &&
        (st = cli_size("order", v, 1, 1000, &o->fit.order, err)))
        return st;
    if ((v = cli_value(a, t, n, "boot")) && (st = cli_size("boot", v, 0, 1000000, &o->boot.replicates, err)))
        return st;
    if ((v = cli_value(a, t, n, "block")) && strcmp(v, "auto") != 0 &&
        (st = cli_size("block", v, 1, 100000000, &o->boot.block_length, err)))
        return st;
    if ((v = cli_value(a, t, n, "level")) && (st = cli_double("level", v, 0.5, 0.999, &o->boot.level, err)))
        return st;
    size_t seed = 0;
    if ((v = cli_value(a, t, n, "seed"))) {
        if ((st = cli_size("seed", v, 0, (size_t)-1, &seed, err)))
            return st;
        o->boot.seed = (uint64_t)seed;
    }
    if ((v = cli_value(a, t, n, "threads")) && (st = cli_size("threads", v, 1, 1024, &o->boot.threads, err)))
        return st;
    return EL_OK;
}

el_status cli_input_options(const cli_args *a, const cli_option *t, size_t n,
                            const char **unit, char *decimal, char *date_order,
                            el_error *err)
{
    const char *v = cli_value(a, t, n, "time-unit");
    double scale;
    const char *name;
    if (v != NULL && !el_time_unit_parse(v, &scale, &name)) {
        el_error_set(err, EL_ERR_USAGE, "'%s' is not a unit of time", v);
        el_error_option(err, "--time-unit");
        el_error_hint(err, "give s, ms, us, ns, min, h, d or year");
        return EL_ERR_USAGE;
    }
    *unit = v;
    v = cli_value(a, t, n, "decimal");
    if (v != NULL && strcmp(v, ".") != 0 && strcmp(v, ",") != 0) {
        el_error_set(err, EL_ERR_USAGE, "'%s' is not a decimal separator", v);
        el_error_option(err, "--decimal");
        el_error_hint(err, "give --decimal , (decimal comma) or --decimal . (point)");
        return EL_ERR_USAGE;
    }
    *decimal = v != NULL ? v[0] : 0;
    v = cli_value(a, t, n, "date-order");
    if (v != NULL && strcmp(v, "dmy") != 0 && strcmp(v, "mdy") != 0) {
        el_error_set(err, EL_ERR_USAGE, "'%s' is not an order of day and month", v);
        el_error_option(err, "--date-order");
        el_error_hint(err, "give --date-order dmy (05/12/2026 is 5 December) or "
                           "--date-order mdy (12/05/2026 is 5 December)");
        return EL_ERR_USAGE;
    }
    *date_order = v == NULL ? 0 : v[0] == 'd' ? EL_DATE_DMY : EL_DATE_MDY;
    return EL_OK;
}

el_status cli_log_files(const cli_args *a, const char *usage, el_assess_options *o,
                        el_error *err)
{
    if (a->n_positional == 0) {
        el_error_set(err, EL_ERR_USAGE, "no log file given");
        el_error_hint(err, "%s; FILE may be - for stdin, several files are read as one log",
                      usage);
        return EL_ERR_USAGE;
    }
    size_t dashes = 0;
    for (size_t i = 0; i < a->n_positional; i++)
        dashes += strcmp(a->positional[i], "-") == 0;
    if (dashes > 1) {
        el_error_set(err, EL_ERR_USAGE, "standard input (-) given %zu times", dashes);
        el_error_hint(err, "standard input can be read once; give the other logs as files");
        return EL_ERR_USAGE;
    }
    o->path = a->positional[0];
    o->paths = a->positional;
    o->n_paths = a->n_positional;
    return EL_OK;
}

el_status cli_model_options(const cli_args *a, const cli_option *t, size_t n,
                            el_assess_options *o, el_error *err)
{
    static const char *const kinds[] = {"blocks", "model"};
    el_status in = cli_input_options(a, t, n, &o->time_unit, &o->decimal, &o->date_order, err);
    if (in != EL_OK)
        return in;
    o->time_column = cli_value(a, t, n, "time");
    o->channels = cli_value(a, t, n, "channels");
    o->from_text = cli_value(a, t, n, "from");
    o->to_text = cli_value(a, t, n, "to");
    o->band_text = cli_value(a, t, n, "band");
    o->inputs = cli_value(a, t, n, "input");
    if (cli_value(a, t, n, "no-bias-correction") != NULL)
        o->boot.bias_correct = 0;
    el_status st = model_numbers(a, t, n, o, err);
    if (st != EL_OK)
        return st;
    const char *v;
    int choice = 0;
    if ((v = cli_value(a, t, n, "detrend")) && (st = el_prep_parse_detrend(v, &o->detrend, err)))
        return st;
    if ((v = cli_value(a, t, n, "method")) && strcmp(v, "auto") != 0) {
        if ((st = el_method_parse(v, &o->fit.method, err)))
            return st;
        o->method_auto = 0;
    }
    if ((v = cli_value(a, t, n, "resample"))) {
        if ((st = cli_choice("resample", v, kinds, 2, &choice, err)))
            return st;
        o->boot.kind = choice == 1 ? EL_RESAMPLE_MODEL : EL_RESAMPLE_BLOCKS;
    }
    return EL_OK;
}

/* Completes the usage error already set in err with the output option
 * (without dashes) and a hint. */
static el_status output_clash(el_error *err, const char *option, const char *hint)
{
    set_option(err, option);
    el_error_hint(err, "%s", hint);
    return EL_ERR_USAGE;
}

/* Two outputs to standard output, or two to one file. */
static el_status outputs_clash(const cli_output_path *outputs, const el_path_id *ids,
                               size_t n, el_error *err)
{
    for (size_t j = 0; j < n; j++) {
        if (outputs[j].path == NULL)
            continue;
        for (size_t i = 0; i < j; i++) {
            if (outputs[i].path == NULL)
                continue;
            int both_stdout = ids[i].kind == EL_OUT_STDOUT && ids[j].kind == EL_OUT_STDOUT;
            if (both_stdout) {
                el_error_set(err, EL_ERR_USAGE, "standard output is already taken by --%s",
                             outputs[i].name);
                return output_clash(err, outputs[j].name,
                                    "send at most one output to - and give the others file names");
            }
            if (el_path_same(&ids[i], &ids[j])) {
                el_error_set(err, EL_ERR_USAGE, "writes to the same file as --%s ('%s')",
                             outputs[i].name, outputs[i].path);
                return output_clash(err, outputs[j].name, "give each output its own file");
            }
        }
    }
    return EL_OK;
}

el_status cli_check_output_paths(const char *const *inputs, size_t n_inputs,
                                 const cli_output_path *outputs, size_t n_outputs,
                                 el_error *err)
{
    el_path_id ids[CLI_MAX_OUTPUTS];
    if (n_outputs > CLI_MAX_OUTPUTS)
        return el_error_set(err, EL_ERR_INTERNAL, "more than %d outputs", CLI_MAX_OUTPUTS);
    for (size_t i = 0; i < n_outputs; i++) {
        if (outputs[i].path == NULL)
            continue;
        el_status st = el_output_resolve(outputs[i].path, &ids[i], err);
        if (st != EL_OK) {
            set_option(err, outputs[i].name);
            return st;
        }
    }
    el_status st = outputs_clash(outputs, ids, n_outputs, err);
    if (st != EL_OK)
        return st;
    for (size_t k = 0; k < n_inputs; k++) {
        if (inputs[k] == NULL)
            continue;
        el_path_id in;
        el_input_identify(inputs[k], &in);
        for (size_t i = 0; i < n_outputs; i++) {
            if (outputs[i].path == NULL || !el_path_same(&in, &ids[i]))
                continue;
            if (strcmp(inputs[k], "-") == 0)
                el_error_set(err, EL_ERR_USAGE,
                             "would write over the input log (the file on standard input)");
            else
                el_error_set(err, EL_ERR_USAGE, "would write over the input log '%s'",
                             inputs[k]);
            return output_clash(err, outputs[i].name,
                                ids[i].kind == EL_OUT_STDOUT
                                    ? "standard output is the input file: redirect it elsewhere"
                                    : "give the output another name: eigenlog never writes "
                                      "over its input");
        }
    }
    for (size_t i = 0; i < n_outputs; i++) {
        if (outputs[i].path == NULL)
            continue;
        st = el_check_writable(outputs[i].path, err);
        if (st != EL_OK) {
            set_option(err, outputs[i].name);
            return st;
        }
    }
    return EL_OK;
}

int cli_is_stdout(const char *path)
{
    return path != NULL && strcmp(path, "-") == 0;
}

el_status cli_write_outputs(cli_output *outputs, size_t n, el_status built, el_error *err)
{
    el_status st = built;
    el_out_file files[CLI_MAX_OUTPUTS];
    if (st == EL_OK && n > CLI_MAX_OUTPUTS)
        st = el_error_set(err, EL_ERR_INTERNAL, "more than %d outputs", CLI_MAX_OUTPUTS);
    if (st == EL_OK) {
        for (size_t i = 0; i < n; i++) {
            files[i].path = outputs[i].path;
            files[i].data = outputs[i].text.data != NULL ? outputs[i].text.data : "";
            files[i].length = outputs[i].text.length;
        }
        /* A file size limit must fail the write (EFBIG), not kill the
         * program before it can remove its temporary files. */
        signal(SIGXFSZ, SIG_IGN);
        st = el_write_files(files, n, err);
    }
    for (size_t i = 0; i < n; i++)
        el_buf_free(&outputs[i].text);
    return st;
}
