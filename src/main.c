/* eigenlog: command-line entry point; dispatches to the subcommands. */
#include <cblas.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "el_report.h"

typedef struct {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *summary;
} subcommand;

static const subcommand SUBCOMMANDS[] = {
    {"assess", cli_assess, "the main job: model, modes, type and stability of one operating window"},
    {"scan", cli_scan, "channels, units, rows, time span, sample interval and ranges of a log"},
    {"track", cli_track, "margin over sliding windows of a long log: is it shrinking?"},
    {"survey", cli_survey, "many logs at once: a ranked table, locally or on a Slurm cluster"},
    {"spectrum", cli_spectrum, "power spectral density per channel (Welch) and its peaks"},
    {"demo", cli_demo, "write the invented demo logs"},
};
static const size_t N_SUBCOMMANDS = sizeof SUBCOMMANDS / sizeof SUBCOMMANDS[0];

/* Wrapped to the terminal like every text (cli_print_text); the title
 * line stays whole (tools/help2roff.awk reads it as the man page's name). */
static void print_main_help(void)
{
    printf("eigenlog %s: is this operating point stable, with what margin, and how sure?\n\n",
           EL_VERSION);
    cli_printf_wrapped("usage: eigenlog SUBCOMMAND [FILE] [options]   (FILE may be - for "
                       "stdin)\n\nsubcommands:\n");
    for (size_t i = 0; i < N_SUBCOMMANDS; i++)
        cli_printf_wrapped("  %-10s %s\n", SUBCOMMANDS[i].name, SUBCOMMANDS[i].summary);
    cli_printf_wrapped("\n'eigenlog SUBCOMMAND --help' lists the options of one subcommand.\n"
                       "Exit status: 0 done, 1 usage error, 2 bad input data, 3 numerical "
                       "failure,\n4 input/output error, 5 verdict matched --fail-on.\n");
}

int main(int argc, char **argv)
{
    /* eigenlog parallelises over bootstrap replicates itself; OpenBLAS
     * threads inside each small product would only oversubscribe the
     * cores (measured: a third of the run time spent in the kernel). */
    openblas_set_num_threads(1);
    if (argc < 2 || strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        print_main_help();
        return argc < 2 ? 1 : 0;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("eigenlog %s\n", EL_VERSION);
        return 0;
    }
    for (size_t i = 0; i < N_SUBCOMMANDS; i++)
        if (strcmp(argv[1], SUBCOMMANDS[i].name) == 0)
            return SUBCOMMANDS[i].run(argc - 2, argv + 2);
    fprintf(stderr, "eigenlog: unknown subcommand '%s'\n  hint: one of", argv[1]);
    for (size_t i = 0; i < N_SUBCOMMANDS; i++)
        fprintf(stderr, " %s", SUBCOMMANDS[i].name);
    fprintf(stderr, "; see eigenlog --help\n");
    return 1;
}
