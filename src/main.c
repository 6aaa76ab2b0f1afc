/* eigenlog: command-line entry point; dispatches to the subcommands. */
/* getauxval, prctl (Linux) and setenv: ask glibc for them; the re-exec
 * below is compiled on Linux only. */
#define _DEFAULT_SOURCE 1
#include <cblas.h>
#include <fcntl.h>
#include <signal.h>
#include <stdint.h>
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
 * on one thread either way.
 * `scan` calls no BLAS at all, and the re-exec was about 5 ms of its CPU
 * time (the dynamic linking of OpenBLAS, LAPACK and FFTW twice; issue 13
 * measures scan against cat): it stops the idle workers instead, through
 * OpenBLAS's own shutdown (the one its destructor calls; a second call
 * does nothing), declared weak so that a BLAS without it links too and
 * gets the re-exec as before. openblas_set_num_threads must not follow
 * (it starts the pool again when it finds it stopped, as after a fork). */
#define REEXEC_MARK "EL_BLAS_THREADS_SET_BY_EIGENLOG"

#if defined(__linux__) && (defined(__GNUC__) || defined(__clang__))
extern int blas_thread_shutdown_(void) __attribute__((weak));
#define EL_BLAS_SHUTDOWN 1
#else
#define EL_BLAS_SHUTDOWN 0
#endif

/* 1 when the subcommand argv[1] calls no BLAS and OpenBLAS's workers
 * could be stopped in this process (so no re-exec is needed). */
static int blas_workers_stopped(char **argv)
{
#if EL_BLAS_SHUTDOWN
    if (argv[0] == NULL || argv[1] == NULL || strcmp(argv[1], "scan") != 0 ||
        blas_thread_shutdown_ == NULL)
        return 0;
    (void)blas_thread_shutdown_();
    return 1;
#else
    (void)argv;
    return 0;
#endif
}

/* Returns 1 when OpenBLAS's workers were stopped (scan), else 0. */
static int blas_threads_before_start(char **argv)
{
#if defined(__linux__)
    const char *set = getenv("OPENBLAS_NUM_THREADS");
    if (set == NULL || set[0] == '\0') {
        if (blas_workers_stopped(argv))
            return 1;
        if (setenv("OPENBLAS_NUM_THREADS", "1", 1) == 0 &&
            setenv(REEXEC_MARK, "1", 1) == 0)
            execv("/proc/self/exe", argv);
        /* exec failed: go on in this process, environment as it was */
        (void)unsetenv("OPENBLAS_NUM_THREADS");
        (void)unsetenv(REEXEC_MARK);
        return 0;
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
    return 0;
}

/* A regular log file is read through a memory map (el_source): when
 * another program cuts the file short while it is being read (a logger
 * rotating it, `> file` in another shell), touching a page past the new
 * end raises SIGBUS, which would kill the process with no word on what
 * happened. The handler names the file mapped at the faulting address
 * (from /proc/self/maps), says what happened and exits with status 4
 * (input/output), before any output file is written (outputs are written
 * whole at the end, through temporary files). A SIGBUS anywhere else is
 * not ours to explain: the default action is restored and the signal
 * taken again. Everything here is async-signal-safe (open, read, write,
 * close, _exit, sigaction; no stdio, no allocation). The handler lives
 * here, not in the library: a library has no business with a process's
 * signals (a program using it installs its own, see el_source.h). */

static void put(const char *s, size_t n)
{
    while (n > 0) {
        ssize_t k = write(STDERR_FILENO, s, n);
        if (k <= 0)
            return;
        s += k;
        n -= (size_t)k;
    }
}

static void put_text(const char *s)
{
    put(s, strlen(s));
}

/* Parses the hexadecimal number at *p, moving *p past it. */
static uintptr_t hex_at(const char **p, const char *end)
{
    uintptr_t v = 0;
    for (; *p < end; (*p)++) {
        char c = **p;
        int d = c >= '0' && c <= '9' ? c - '0' : c >= 'a' && c <= 'f' ? c - 'a' + 10 : -1;
        if (d < 0)
            break;
        v = v * 16 + (uintptr_t)d;
    }
    return v;
}

/* One line of /proc/self/maps ("start-end perms offset dev inode path"):
 * 1 and the path in *path (not NUL-terminated, *n bytes; 0 for an
 * anonymous mapping) when the line's range holds addr. */
static int maps_line_holds(const char *line, size_t len, uintptr_t addr, const char **path,
                           size_t *n)
{
    const char *p = line, *end = line + len;
    uintptr_t lo = hex_at(&p, end);
    if (p >= end || *p != '-')
        return 0;
    p++;
    uintptr_t hi = hex_at(&p, end);
    if (addr < lo || addr >= hi)
        return 0;
    for (int field = 0; field < 4; field++) { /* perms, offset, dev, inode */
        while (p < end && *p == ' ')
            p++;
        while (p < end && *p != ' ')
            p++;
    }
    while (p < end && *p == ' ')
        p++;
    *path = p;
    *n = (size_t)(end - p);
    return 1;
}

static void on_bus_error(int sig, siginfo_t *info, void *context)
{
    (void)context;
    uintptr_t addr = (uintptr_t)info->si_addr;
    char line[4096 + 512], chunk[512];
    size_t used = 0;
    int found = 0;
    int fd = open("/proc/self/maps", O_RDONLY);
    ssize_t got;
    while (!found && fd >= 0 && (got = read(fd, chunk, sizeof chunk)) > 0) {
        for (ssize_t i = 0; i < got && !found; i++) {
            if (chunk[i] != '\n') {
                if (used < sizeof line)
                    line[used++] = chunk[i];
                continue;
            }
            const char *path;
            size_t n;
            if (maps_line_holds(line, used, addr, &path, &n) && n > 0 && path[0] == '/') {
                found = 1;
                put_text("eigenlog: ");
                put(path, n);
                put_text(": the file shrank while it was being read (cut short or "
                         "rewritten by another program)\n  hint: read the log when the "
                         "program writing it has finished with it, or read a copy of "
                         "it; for a log that is still being written, use track "
                         "--follow\n");
            }
            used = 0;
        }
    }
    if (fd >= 0)
        close(fd);
    if (found)
        _exit(4);
    struct sigaction dfl;
    memset(&dfl, 0, sizeof dfl);
    dfl.sa_handler = SIG_DFL;
    sigemptyset(&dfl.sa_mask);
    sigaction(sig, &dfl, NULL);
    raise(sig);
}

static void catch_shrinking_files(void)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_sigaction = on_bus_error;
    sa.sa_flags = SA_SIGINFO;
    sigemptyset(&sa.sa_mask);
    (void)sigaction(SIGBUS, &sa, NULL);
}

int main(int argc, char **argv)
{
    int blas_stopped = blas_threads_before_start(argv);
    catch_shrinking_files();
    /* eigenlog parallelises over bootstrap replicates itself; OpenBLAS
     * threads inside each small product would only oversubscribe the
     * cores (measured: a third of the run time spent in the kernel). Also
     * when the user set OPENBLAS_NUM_THREADS to more than 1. */
    if (!blas_stopped)
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
