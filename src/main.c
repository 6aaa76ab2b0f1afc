/* eigenlog: command-line entry point; dispatches to the subcommands. */
/* getauxval, prctl (Linux) and setenv: ask glibc for them; the re-exec
 * below is compiled on Linux only. */
#define _DEFAULT_SOURCE 1
#include <cblas.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#if defined(__linux__)
#include <sys/auxv.h>
#include <sys/prctl.h>
#endif

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

/* The OpenBLAS built for threads starts its worker threads in its library
 * constructor, before main, from OPENBLAS_NUM_THREADS (else one per core),
 * and an idle worker spins (sched_yield) for about 0.1 s before it sleeps:
 * openblas_set_num_threads(1) in main comes too late to stop that, and
 * every command paid about 0.1 s of CPU (a short `scan` twice its own
 * work). So when the variable is unset (or empty), it is set to 1 and the
 * program executes itself again, once (the variable is then set), through
 * /proc/self/exe: the same file even if the path was relative or the file
 * has been replaced since, with the same arguments, descriptors and
 * process id. A value the user set is kept as it is (and is the way to
 * skip the re-exec, e.g. under a debugger). When the exec fails (no /proc)
 * the program simply goes on as before. Numbers do not change: BLAS runs
 * on one thread either way. */
#define REEXEC_MARK "EL_BLAS_THREADS_SET_BY_EIGENLOG"

static void blas_threads_before_start(char **argv)
{
#if defined(__linux__)
    const char *set = getenv("OPENBLAS_NUM_THREADS");
    if (set == NULL || set[0] == '\0') {
        if (setenv("OPENBLAS_NUM_THREADS", "1", 1) == 0 &&
            setenv(REEXEC_MARK, "1", 1) == 0)
            execv("/proc/self/exe", argv);
        /* exec failed: go on in this process, environment as it was */
        (void)unsetenv("OPENBLAS_NUM_THREADS");
        (void)unsetenv(REEXEC_MARK);
        return;
    }
    /* The setting was ours, for OpenBLAS's start only: what this program
     * starts (an --on-alarm hook, a user's script under survey) gets the
     * environment the user gave, and eigenlogs it starts do their own
     * re-exec. */
    if (getenv(REEXEC_MARK) != NULL) {
        (void)unsetenv("OPENBLAS_NUM_THREADS");
        (void)unsetenv(REEXEC_MARK);
    }
    /* After the re-exec the kernel names the process after the file
     * executed ("exe"): give it back the name it was started under, as
     * ps, top and pgrep show it. */
    const char *execfn = (const char *)getauxval(AT_EXECFN);
    if (execfn != NULL && strcmp(execfn, "/proc/self/exe") == 0 && argv[0] != NULL) {
        const char *base = strrchr(argv[0], '/');
        (void)prctl(PR_SET_NAME, base != NULL ? base + 1 : argv[0], 0, 0, 0);
    }
#else
    (void)argv;
#endif
}

int main(int argc, char **argv)
{
    blas_threads_before_start(argv);
    /* eigenlog parallelises over bootstrap replicates itself; OpenBLAS
     * threads inside each small product would only oversubscribe the
     * cores (measured: a third of the run time spent in the kernel). Also
     * when the user set OPENBLAS_NUM_THREADS to more than 1. */
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
