/* cli: the command-line front end. Parses options, calls the library,
 * prints. No numerics here. */
#ifndef CLI_H
#define CLI_H

#include <stddef.h>

#include "el_assess.h"
#include "el_error.h"
#include "el_io.h"

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
#define CLI_MAX_POSITIONAL 1000
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

/* An output file a subcommand was asked for: path (NULL: not asked) and
 * its text, built in memory before anything is written. */
typedef struct {
    const char *path;
    el_buf text;
} cli_output;

/* An output option as given: its name without dashes ("json") and its
 * path (NULL: not asked; "-": standard output). */
#define CLI_MAX_OUTPUTS 8
typedef struct {
    const char *name;
    const char *path;
} cli_output_path;

/* Checks the outputs before any input is read. Usage errors (EL_ERR_USAGE,
 * naming the option, with a hint), in this order: two outputs to standard
 * output; two outputs to one file (same resolved path, or same device and
 * inode); an output that is one of the inputs (inputs[0..n_inputs), NULL
 * entries skipped; "-" is standard input, compared when it is a regular
 * file; standard output likewise). Then that each can be written (EL_ERR_IO
 * from el_output_resolve / el_check_writable, option named), so a run
 * fails before minutes of work rather than after. At most CLI_MAX_OUTPUTS
 * outputs (EL_ERR_INTERNAL else). */
el_status cli_check_output_paths(const char *const *inputs, size_t n_inputs,
                                 const cli_output_path *outputs, size_t n_outputs,
                                 el_error *err);

/* 1 when an output path is "-" (standard output): the text report is then
 * left out so the output is not mixed with it. NULL gives 0. */
int cli_is_stdout(const char *path);

/* When built is EL_OK (every text was built), writes all asked outputs
 * with el_write_files: all or none of the files (temporary files first,
 * renames last; devices, FIFOs and standard output written in place).
 * Otherwise writes nothing, so a failure while building leaves no file at
 * all, and returns built. Ignores SIGXFSZ from then on so a file size limit
 * is an error (EL_ERR_IO) with the temporary files removed, not a killed
 * process. Frees every text either way. At most CLI_MAX_OUTPUTS. */
el_status cli_write_outputs(cli_output *outputs, size_t n, el_status built, el_error *err);

/* Columns to wrap standard output's text to: COLUMNS when it holds a
 * number (20..1000; the user's or shell's word wins), else the
 * terminal's width (TIOCGWINSZ) when standard output is a terminal, else
 * 80. */
size_t cli_term_width(void);

/* Writes text to standard output wrapped to cli_term_width (el_term_wrap);
 * unwrapped when out of memory. */
void cli_print_text(const char *text);

/* printf into memory, then cli_print_text. */
void cli_printf_wrapped(const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 1, 2)))
#endif
    ;

/* Stage progress on standard error (one line, redrawn in place): a CLI
 * thread draws the current stage's label and count once the stage has
 * run for 1 s, and clears the line when the stage ends or another
 * begins, so a stage shorter than 1 s shows nothing and every stage has
 * its own label. Off (every call a no-op) unless enabled, which callers
 * give only when standard error is a terminal, without --quiet and when
 * no output goes to standard output. */
typedef struct cli_progress cli_progress;

/* Starts the drawing thread; NULL when not enabled or when the thread
 * cannot start (progress is then simply not shown). */
cli_progress *cli_progress_start(int enabled);

/* The library's stage callback (el_assess_options.stage_progress): ctx is
 * a cli_progress (NULL: no-op). done == total ends the stage. */
void cli_progress_stage(void *ctx, const char *stage, size_t done, size_t total);

/* Adapters for the per-item callbacks (bootstrap replicates, track
 * windows): the same as cli_progress_stage with "bootstrap" / "windows". */
void cli_progress_replicates(void *ctx, size_t done, size_t total);
void cli_progress_windows(void *ctx, size_t done, size_t total);

/* Clears the line and stops the thread. NULL is a no-op. */
void cli_progress_stop(cli_progress *p);

/* 1 when progress may be drawn: standard error is a terminal and not quiet. */
int cli_progress_wanted(int quiet);

/* Prints "eigenlog: <formatted error>" to stderr. */
void cli_print_error(const el_error *err);

/* Prints a subcommand's usage line, description and option table. */
void cli_print_help(const char *usage, const char *description,
                    const cli_option *table, size_t n_options);

/* The options of the model and its bootstrap, shared by every subcommand
 * that fits (assess, track): rows to put at the head of its table. */
#define CLI_INPUT_OPTION_ROWS                                                                 \
    {"time", "COL", "time column (default: the first column)"},                               \
    {"time-unit", "UNIT", "s, ms, us, ns, min, h, d or year (default: the header's, else s)"}, \
    {"decimal", ".|,", "decimal separator of the numbers (default: detected)"},              \
    {"date-order", "dmy|mdy",                                                                 \
     "dates like 05/12/2026: day or month first (default: as the dates settle it)"}

#define CLI_MODEL_OPTION_ROWS                                                                 \
    CLI_INPUT_OPTION_ROWS,                                                                    \
    {"channels", "A,B,..", "state channels (default: every column but time)"},                \
    {"from", "T", "window start, in the log's own time unit, or ISO 8601"},                   \
    {"to", "T", "window end, likewise"},                                                      \
    {"max-gap", "N", "longest run of missing samples to fill (default 5)"},                   \
    {"detrend", "none|mean|linear",                                                           \
     "remove each channel's mean or straight-line drift first (default none)"},               \
    {"band", "LO:HI", "zero-phase band limit in Hz before the fit"},                          \
    {"input", "COL,..",                                                                       \
     "measured input columns: excitation, not state (z[k+1] = Ad z + B u + c)"},              \
    {"lags", "K|auto", "delay copies of every channel in the state (default 0; auto: by BIC)"}, \
    {"rank", "R|auto|full",                                                                   \
     "DMD rank: a number, auto, or full (every state with every method); default "            \
     "every state for ls/fb/tls, the rank test's for iv/ssi"},                                \
    {"method", "auto|ls|fb|tls|iv|ssi|hankel",                                                \
     "estimator (default auto: chosen by the data's regime, cross-checked)"},                 \
    {"depth", "N", "iv/ssi: past block rows of the instruments' basis (default lags + 1)"},   \
    {"horizon", "T", "hankel: future/past horizon, in the log's time unit (default auto)"},   \
    {"order", "N|auto", "hankel: model order (default auto: the persistent modes)"},          \
    {"boot", "N", "bootstrap replicates (default 1000; 0 or below 100: no bounds)"},          \
    {"resample", "blocks|model", "bootstrap scheme (default blocks)"},                        \
    {"block", "L|auto", "block length of the bootstrap (default auto)"},                      \
    {"no-bias-correction", NULL,                                                              \
     "ls: no small-sample bias correction; ls, iv: no widening to model-based replicates"},   \
    {"level", "P", "level of the bounds and of a confident verdict (default 0.95)"},          \
    {"seed", "S", "random seed (default 1): same seed, same numbers"},                        \
    {"threads", "N", "worker threads (default: all cores)"}

/* Reads --time-unit, --decimal and --date-order (rows
 * CLI_INPUT_OPTION_ROWS) into *unit (NULL when absent), *decimal and
 * *date_order (0 when absent). EL_ERR_USAGE naming the option, with a
 * hint, for a value that is not a unit of time, not "." or ",", or not
 * dmy or mdy. */
el_status cli_input_options(const cli_args *args, const cli_option *table, size_t n_options,
                            const char **unit, char *decimal, char *date_order,
                            el_error *err);

/* The log files of a subcommand that reads one log from one or more files
 * (the positional arguments): sets opt->path (the first) and opt->paths,
 * opt->n_paths. EL_ERR_USAGE with the usage line as hint when there is
 * none, or when "-" (standard input) is given twice. */
el_status cli_log_files(const cli_args *args, const char *usage, el_assess_options *opt,
                        el_error *err);

/* The value given for option name (NULL when absent). */
const char *cli_value(const cli_args *args, const cli_option *table, size_t n_options,
                      const char *name);

/* Fills the model and bootstrap part of *opt (already holding the
 * defaults) from args parsed against a table that starts with
 * CLI_MODEL_OPTION_ROWS. EL_ERR_USAGE naming the option, with a hint. */
el_status cli_model_options(const cli_args *args, const cli_option *table,
                            size_t n_options, el_assess_options *opt, el_error *err);

/* Parses a value among choices[0..n) into *out (its index); EL_ERR_USAGE
 * naming --option with the choices as hint. */
el_status cli_choice(const char *option, const char *text, const char *const *choices,
                     int n, int *out, el_error *err);

int cli_assess(int argc, char **argv);
int cli_track(int argc, char **argv);
int cli_scan(int argc, char **argv);
int cli_demo(int argc, char **argv);
int cli_spectrum(int argc, char **argv);
int cli_survey(int argc, char **argv);

#endif
