/* cli: the command-line front end. Parses options, calls the library,
 * prints. No numerics here. */
#ifndef CLI_H
#define CLI_H

#include <stddef.h>

#include "el_error.h"

/* One option of a subcommand: long name without dashes, whether it takes
 * a value, the value's placeholder and a one-line help text. */
typedef struct {
    const char *name;
    const char *value_name;      /* NULL: a flag without a value */
    const char *help;
} cli_option;

/* Parsed command line of one subcommand: the value given for each option
 * of the table (NULL when absent; "" for a flag that was given) and the
 * positional arguments. Points into argv; nothing to free. */
#define CLI_MAX_OPTIONS 48
#define CLI_MAX_POSITIONAL 8
typedef struct {
    const char *value[CLI_MAX_OPTIONS];
    const char *positional[CLI_MAX_POSITIONAL];
    size_t n_positional;
    int help;
} cli_args;

/* Parses argv[0..argc) against the table. Accepts --name VALUE,
 * --name=VALUE, -o VALUE for "output", -h/--help. EL_ERR_USAGE with the
 * option named and a hint for an unknown option, a missing value, a
 * repeated option or too many positional arguments. */
el_status cli_parse(int argc, char **argv, const cli_option *table, size_t n_options,
                    cli_args *args, el_error *err);

/* Index of option name in the table (must exist: a programming error else). */
size_t cli_index(const cli_option *table, size_t n_options, const char *name);

/* Strict number parsing of an option's value; EL_ERR_USAGE naming the
 * option with a hint when the text is not a number in range. */
el_status cli_size(const char *option, const char *text, size_t min, size_t max,
                   size_t *out, el_error *err);
el_status cli_double(const char *option, const char *text, double min, double max,
                     double *out, el_error *err);

/* Prints "eigenlog: <formatted error>" to stderr. */
void cli_print_error(const el_error *err);

/* Prints a subcommand's usage line, description and option table. */
void cli_print_help(const char *usage, const char *description,
                    const cli_option *table, size_t n_options);

int cli_assess(int argc, char **argv);
int cli_scan(int argc, char **argv);
int cli_demo(int argc, char **argv);
int cli_spectrum(int argc, char **argv);

#endif
