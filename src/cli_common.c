/* cli_common: option parsing, number parsing and error printing shared by
 * the subcommands. */
#include "cli.h"

#include <errno.h>
#include <math.h>
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
    printf("usage: %s\n\n%s\n", usage, description);
    if (n_options > 0)
        printf("\noptions:\n");
    for (size_t i = 0; i < n_options; i++) {
        char left[64];
        snprintf(left, sizeof left, "--%s%s%s", table[i].name,
                 table[i].value_name ? " " : "",
                 table[i].value_name ? table[i].value_name : "");
        printf("  %-24s %s\n", left, table[i].help);
    }
    printf("  %-24s %s\n", "-h, --help", "show this help");
}
