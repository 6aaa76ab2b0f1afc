/* cli_survey: `eigenlog survey INPUT... --out DIR`: many logs at once.
 * Each log is one `eigenlog assess` process of this same program (a crash
 * or a bad log cannot take the others down), run N at a time, each writing
 * its JSON to a temporary file; the table, the JSON lines and the overview
 * page are built from those JSON texts. Also the shard/merge steps and the
 * submission to Slurm. */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "el_io.h"
#include "el_report.h"
#include "el_survey.h"
#include "el_survey_html.h"

static const cli_option OPTIONS[] = {
    CLI_MODEL_OPTION_ROWS,
    {"out", "DIR", "folder of the survey's outputs (created if missing)"},
    {"jobs", "N", "logs assessed at once (default: all cores)"},
    {"reports", NULL, "also write each log's HTML report as DIR/reports/NAME.html"},
    {"fail-on", "unstable|ambiguous", "exit with status 5 when a log's verdict matches"},
    {"quiet", NULL, "print nothing but errors"},
    {"log-timeout", "SECONDS", "stop a log's assess after this long; its row says so (default: no limit)"},
    {"shard", "K/N", "assess only shard K of N of the logs, into DIR/shards/K"},
    {"merge", "DIR", "build DIR's outputs from its shards (DIR/shards/1..N)"},
    {"slurm", NULL, "submit the survey to Slurm: a job array of shards and a merge job"},
    {"partition", "NAME", "--slurm: the partition to run in"},
    {"time-limit", "T", "--slurm: time limit of each job (sbatch --time format)"},
    {"shards", "N", "--slurm: number of shards (array tasks; default min(logs, 16))"},
    {"sbatch-arg", "ARG", "--slurm: one more sbatch argument (repeatable)"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])
#define MAX_SBATCH_ARGS 32

/* Exit status of a survey whose logs did not all get assessed. */
#define EXIT_LOG_FAILED 2

/* A log's exit code in its row when --log-timeout stopped its assess. */
#define EXIT_TIMED_OUT 124

/* Seconds between SIGTERM and SIGKILL for a log over its time limit. */
#define STOP_GRACE_S 2.0

typedef struct {
    const char *out_dir;
    const char **inputs;
    size_t n_inputs;
    const char *sbatch_args[MAX_SBATCH_ARGS];
    size_t n_sbatch;
    char *model_args[CLI_MAX_OPTIONS];   /* "--name=value" of the model options given */
    size_t n_model;
    size_t jobs;
    size_t threads;          /* 0: share the cores among the jobs */
    int reports;
    int fail_on;             /* 0 none, 1 unstable, 2 ambiguous */
    int quiet;
    double log_timeout_s;    /* 0: no limit */
    size_t shard_k, shard_n; /* 0: not a shard */
    const char *merge_dir;
    int slurm;
    const char *partition;
    const char *time_limit;
    size_t shards;
    char exe[4096];
} survey_cli;

static const char *opt_value(const cli_args *a, const char *name)
{
    return a->value[cli_index(OPTIONS, N_OPTIONS, name)];
}

static size_t n_model_rows(void)
{
    return cli_index(OPTIONS, N_OPTIONS, "out");
}

/* ------------------------------------------------------------ parsing */

/* Moves the positional arguments (any number: shells expand globs) and
 * the repeatable --sbatch-arg out of argv, so cli_parse sees the rest. */
static el_status split_argv(int argc, char **argv, char **rest, int *n_rest, survey_cli *c,
                            el_error *err)
{
    *n_rest = 0;
    for (int i = 0; i < argc; i++) {
        const char *arg = argv[i];
        if (strcmp(arg, "-") == 0 || arg[0] != '-') {
            c->inputs[c->n_inputs++] = arg;
            continue;
        }
        if (strncmp(arg, "--sbatch-arg", 12) == 0 && (arg[12] == '\0' || arg[12] == '=')) {
            const char *v = arg[12] == '=' ? arg + 13 : (i + 1 < argc ? argv[++i] : NULL);
            if (v == NULL || c->n_sbatch == MAX_SBATCH_ARGS) {
                el_error_set(err, EL_ERR_USAGE, v ? "too many sbatch arguments" : "needs a value");
                el_error_option(err, "--sbatch-arg");
                el_error_hint(err, "write --sbatch-arg=--account=NAME, once per argument (at most %d)",
                              MAX_SBATCH_ARGS);
                return EL_ERR_USAGE;
            }
            c->sbatch_args[c->n_sbatch++] = v;
            continue;
        }
        rest[(*n_rest)++] = argv[i];
        const char *name = arg + (arg[1] == '-' ? 2 : 1);
        if (strchr(name, '=') != NULL || i + 1 >= argc)
            continue;
        for (size_t k = 0; k < N_OPTIONS; k++)
            if (strcmp(OPTIONS[k].name, name) == 0 && OPTIONS[k].value_name != NULL)
                rest[(*n_rest)++] = argv[++i];
    }
    return EL_OK;
}

/* The model options given, as "--name=value" (flags "--name"), in table
 * order; --threads is left out: it does not change the numbers. */
static el_status collect_model_args(const cli_args *a, survey_cli *c, el_error *err)
{
    for (size_t i = 0; i < n_model_rows(); i++) {
        const char *v = a->value[i];
        if (v == NULL || strcmp(OPTIONS[i].name, "threads") == 0)
            continue;
        size_t n = strlen(OPTIONS[i].name) + strlen(v) + 4;
        char *arg = malloc(n);
        if (arg == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory");
        if (OPTIONS[i].value_name == NULL)
            snprintf(arg, n, "--%s", OPTIONS[i].name);
        else
            snprintf(arg, n, "--%s=%s", OPTIONS[i].name, v);
        c->model_args[c->n_model++] = arg;
    }
    return EL_OK;
}

static el_status parse_shard(const char *text, survey_cli *c, el_error *err)
{
    unsigned long k = 0, n = 0;
    char tail = 0;
    if (sscanf(text, "%lu/%lu%c", &k, &n, &tail) != 2 || k < 1 || k > n || n > 100000) {
        el_error_set(err, EL_ERR_USAGE, "'%s' is not a shard K/N with 1 <= K <= N", text);
        el_error_option(err, "--shard");
        el_error_hint(err, "e.g. --shard 3/8 for the third of eight shards");
        return EL_ERR_USAGE;
    }
    c->shard_k = k;
    c->shard_n = n;
    return EL_OK;
}

static el_status usage(el_error *err, const char *message, const char *hint)
{
    el_error_set(err, EL_ERR_USAGE, "%s", message);
    el_error_hint(err, "%s", hint);
    return EL_ERR_USAGE;
}

static el_status parse_modes(const cli_args *a, survey_cli *c, el_error *err)
{
    const char *v;
    el_status st = EL_OK;
    c->merge_dir = opt_value(a, "merge");
    c->slurm = opt_value(a, "slurm") != NULL;
    c->partition = opt_value(a, "partition");
    c->time_limit = opt_value(a, "time-limit");
    if ((v = opt_value(a, "shard")) && (st = parse_shard(v, c, err)))
        return st;
    if ((v = opt_value(a, "shards")) && (st = cli_size("shards", v, 1, 100000, &c->shards, err)))
        return st;
    if (c->merge_dir != NULL && (c->n_inputs > 0 || c->shard_k || c->slurm))
        return usage(err, "--merge takes no logs, --shard or --slurm",
                     "eigenlog survey --merge DIR builds DIR's outputs from DIR/shards/*");
    if (c->merge_dir == NULL && c->n_inputs == 0)
        return usage(err, "no logs given", "eigenlog survey LOG|FOLDER|MANIFEST... --out DIR");
    if (c->merge_dir == NULL && c->out_dir == NULL)
        return usage(err, "no output folder given", "add --out DIR");
    if (c->slurm && c->shard_k)
        return usage(err, "--slurm makes the shards itself", "drop --shard");
    if (!c->slurm && (c->partition || c->time_limit || c->shards || c->n_sbatch))
        return usage(err, "--partition, --time-limit, --shards and --sbatch-arg need --slurm",
                     "add --slurm, or drop them");
    if (c->out_dir == NULL)
        c->out_dir = c->merge_dir;
    return EL_OK;
}

static el_status parse_survey(const cli_args *a, survey_cli *c, el_error *err)
{
    static const char *const fails[] = {"unstable", "ambiguous"};
    el_assess_options check;
    el_assess_defaults(&check);
    /* Validates every model option once here, so a typo is one usage
     * error rather than an error row per log. */
    el_status st = cli_model_options(a, OPTIONS, N_OPTIONS, &check, err);
    if (st != EL_OK)
        return st;
    c->threads = opt_value(a, "threads") ? check.boot.threads : 0;
    c->out_dir = opt_value(a, "out");
    c->reports = opt_value(a, "reports") != NULL;
    c->quiet = opt_value(a, "quiet") != NULL;
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    c->jobs = cores > 0 ? (size_t)cores : 1;
    const char *v;
    if ((v = opt_value(a, "jobs")) && (st = cli_size("jobs", v, 1, 4096, &c->jobs, err)))
        return st;
    if ((v = opt_value(a, "log-timeout")) &&
        (st = cli_double("log-timeout", v, 0.01, 1e7, &c->log_timeout_s, err)))
        return st;
    int choice = 0;
    if ((v = opt_value(a, "fail-on"))) {
        if ((st = cli_choice("fail-on", v, fails, 2, &choice, err)))
            return st;
        c->fail_on = choice + 1;
    }
    if ((st = parse_modes(a, c, err)))
        return st;
    return collect_model_args(a, c, err);
}

/* ------------------------------------------------------------ files */

static el_status make_dirs(const char *path, el_error *err)
{
    char p[4096];
    snprintf(p, sizeof p, "%s", path);
    for (char *s = p + 1;; s++) {
        if (*s != '/' && *s != '\0')
            continue;
        char keep = *s;
        *s = '\0';
        if (mkdir(p, 0777) != 0 && errno != EEXIST) {
            el_error_set(err, EL_ERR_IO, "cannot make the folder: %s", strerror(errno));
            el_error_at(err, p, 0, 0);
            el_error_hint(err, "check the path given to --out and its permissions");
            return EL_ERR_IO;
        }
        *s = keep;
        if (keep == '\0')
            return EL_OK;
    }
}

static el_status read_file(const char *path, el_buf *out, el_error *err)
{
    FILE *f = fopen(path, "rb");
    if (f == NULL) {
        el_error_set(err, EL_ERR_IO, "cannot open: %s", strerror(errno));
        el_error_at(err, path, 0, 0);
        return EL_ERR_IO;
    }
    char block[65536];
    size_t n;
    el_status st = EL_OK;
    while (st == EL_OK && (n = fread(block, 1, sizeof block, f)) > 0)
        st = el_buf_append(out, block, n);
    fclose(f);
    if (st == EL_OK)
        st = el_buf_append(out, "", 0);
    if (st != EL_OK)
        el_error_set(err, st, "out of memory reading %s", path);
    return st;
}

static void path_join(char *out, size_t size, const char *a, const char *b)
{
    snprintf(out, size, "%s/%s", a, b);
}

/* ------------------------------------------------------------ one log */

/* What a log needs to be run or skipped: its record (key fields filled),
 * its child arguments, and whether the cached record can be reused. */
typedef struct {
    el_survey_record rec;
    char *args[CLI_MAX_OPTIONS + 32];
    size_t n_args;
    int keyed;          /* size, mtime and content hash known */
    int done;
} log_job;

static int overridden(const el_survey_log *log, const char *arg)
{
    size_t n = strcspn(arg, "=");
    for (size_t i = 0; i < log->n_args; i++)
        if (strncmp(log->args[i], arg, n) == 0 && strchr("=", log->args[i][n]) != NULL)
            return 1;
    return 0;
}

/* The child's option arguments (survey's model options, the per-log ones
 * instead of the survey's of the same name) and their hash. */
static void job_args(const survey_cli *c, const el_survey_log *log, log_job *j)
{
    j->n_args = 0;
    for (size_t i = 0; i < c->n_model; i++)
        if (!overridden(log, c->model_args[i]))
            j->args[j->n_args++] = c->model_args[i];
    for (size_t i = 0; i < log->n_args; i++)
        j->args[j->n_args++] = log->args[i];
    uint64_t h = el_fnv1a64(EL_FNV1A64_OFFSET, EL_VERSION, sizeof EL_VERSION);
    for (size_t i = 0; i < j->n_args; i++)
        h = el_fnv1a64(h, j->args[i], strlen(j->args[i]) + 1);
    h = el_fnv1a64(h, el_survey_is_gzip_name(log->path) ? "gz" : "plain", 3);
    j->rec.options_hash = h;
}

static void record_path(const survey_cli *c, const char *log_path, char *out, size_t size)
{
    uint64_t h = el_fnv1a64(EL_FNV1A64_OFFSET, log_path, strlen(log_path));
    snprintf(out, size, "%s/cache/%016llx.rec", c->out_dir, (unsigned long long)h);
}

static void report_path(const survey_cli *c, const char *log_path, char *out, size_t size)
{
    char name[128];
    el_survey_report_name(log_path, name, sizeof name);
    snprintf(out, size, "%s/reports/%s.html", c->out_dir, name);
}

/* Reuses the cached record when the log's size, modification time, content
 * hash and options are those it was assessed with (and its report exists
 * when reports are asked for). */
static int try_cached(const survey_cli *c, log_job *j)
{
    char path[4096];
    record_path(c, j->rec.path, path, sizeof path);
    el_buf text = {0};
    el_survey_record old;
    if (read_file(path, &text, NULL) != EL_OK || el_survey_record_parse(text.data, &old, NULL)) {
        el_buf_free(&text);
        return 0;
    }
    el_buf_free(&text);
    int same = strcmp(old.path, j->rec.path) == 0 && old.size == j->rec.size &&
               old.mtime_ns == j->rec.mtime_ns && old.content_hash == j->rec.content_hash &&
               old.options_hash == j->rec.options_hash;
    if (same && c->reports && old.exit_code == 0) {
        report_path(c, j->rec.path, path, sizeof path);
        same = old.has_report && access(path, R_OK) == 0;
    }
    el_survey_row row;
    if (same && old.exit_code == 0) {
        /* A record whose JSON cannot be read (edited by hand) is redone. */
        same = el_survey_row_build(&old, &row, NULL) == EL_OK;
        if (same)
            el_survey_row_free(&row);
    }
    if (same) {
        free(j->rec.error);
        free(j->rec.json);
        j->rec.has_report = old.has_report;
        j->rec.exit_code = old.exit_code;
        j->rec.error = old.error;
        j->rec.json = old.json;
        old.error = old.json = NULL;
    }
    el_survey_record_free(&old);
    return same;
}

static void key_log(log_job *j)
{
    struct stat s;
    j->keyed = 0;
    if (stat(j->rec.path, &s) != 0 || el_survey_hash_file(j->rec.path, &j->rec.content_hash, NULL))
        return;
    j->rec.size = (long long)s.st_size;
    j->rec.mtime_ns = (long long)s.st_mtim.tv_sec * 1000000000LL + s.st_mtim.tv_nsec;
    j->keyed = 1;
}

/* Removes target's leftover temporary files (el_io writes TARGET.tmpXXXXXX
 * then renames it), left by an assess that was stopped by a signal. */
static void remove_temporaries(const char *target)
{
    char dir[4200];
    snprintf(dir, sizeof dir, "%s", target);
    char *slash = strrchr(dir, '/');
    const char *base = slash ? slash + 1 : target;
    if (slash)
        *slash = '\0';
    char prefix[4300];
    snprintf(prefix, sizeof prefix, "%s.tmp", base);
    DIR *d = opendir(slash ? (dir[0] ? dir : "/") : ".");
    if (d == NULL)
        return;
    struct dirent *e;
    size_t n = strlen(prefix);
    while ((e = readdir(d)) != NULL) {
        if (strncmp(e->d_name, prefix, n) != 0 || strlen(e->d_name) != n + 6)
            continue;
        char path[8600];
        snprintf(path, sizeof path, "%s/%s", slash ? (dir[0] ? dir : "") : ".", e->d_name);
        unlink(path);
    }
    closedir(d);
}

/* ------------------------------------------------------------ processes */

typedef struct {
    pid_t pid, gzip_pid;
    int status, gzip_status;
    size_t log;
    struct timespec started;   /* CLOCK_MONOTONIC at spawn */
    int stop_sent;             /* 0, 1: SIGTERM sent, 2: SIGKILL sent */
    char json_path[4200], err_path[4200];
} slot;

static void redirect(int fd, const char *path, int flags)
{
    int f = open(path, flags, 0600);
    if (f >= 0) {
        dup2(f, fd);
        close(f);
    }
}

static pid_t spawn_gzip(const char *path, int out_fd, const char *err_path)
{
    pid_t pid = fork();
    if (pid == 0) {
        dup2(out_fd, STDOUT_FILENO);
        close(out_fd);
        redirect(STDIN_FILENO, "/dev/null", O_RDONLY);
        redirect(STDERR_FILENO, err_path, O_WRONLY | O_CREAT | O_APPEND);
        execlp("gzip", "gzip", "-dc", "--", path, (char *)NULL);
        fprintf(stderr, "gzip: cannot run: %s\n", strerror(errno));
        _exit(127);
    }
    return pid;
}

/* Starts `eigenlog assess` for job j in slot s (and gzip -dc feeding it
 * for a .gz log). Returns 0, or -1 when fork failed. */
static int spawn(const survey_cli *c, log_job *j, size_t threads, slot *s)
{
    int gz = el_survey_is_gzip_name(j->rec.path);
    int fds[2] = {-1, -1};
    if (gz && pipe(fds) != 0)
        return -1;
    char threads_arg[64], json_arg[4300], html_arg[4400], report[4200];
    snprintf(threads_arg, sizeof threads_arg, "--threads=%zu", threads);
    snprintf(json_arg, sizeof json_arg, "--json=%s", s->json_path);
    report_path(c, j->rec.path, report, sizeof report);
    snprintf(html_arg, sizeof html_arg, "--html=%s", report);
    const char *argv[CLI_MAX_OPTIONS + 48];
    size_t n = 0;
    argv[n++] = "eigenlog";
    argv[n++] = "assess";
    argv[n++] = gz ? "-" : j->rec.path;
    for (size_t i = 0; i < j->n_args; i++)
        argv[n++] = j->args[i];
    argv[n++] = threads_arg;
    argv[n++] = json_arg;
    argv[n++] = "--quiet";
    if (c->reports)
        argv[n++] = html_arg;
    argv[n] = NULL;
    unlink(s->err_path);
    s->gzip_pid = gz ? spawn_gzip(j->rec.path, fds[1], s->err_path) : 0;
    s->pid = fork();
    if (s->pid == 0) {
        if (gz) {
            dup2(fds[0], STDIN_FILENO);
            close(fds[0]);
            close(fds[1]);
        } else {
            redirect(STDIN_FILENO, "/dev/null", O_RDONLY);
        }
        redirect(STDOUT_FILENO, "/dev/null", O_WRONLY);
        redirect(STDERR_FILENO, s->err_path, O_WRONLY | O_CREAT | O_APPEND);
        execv(c->exe, (char *const *)argv);
        fprintf(stderr, "eigenlog: cannot run %s: %s\n", c->exe, strerror(errno));
        _exit(127);
    }
    if (gz) {
        close(fds[0]);
        close(fds[1]);
    }
    s->status = s->gzip_status = -1;
    s->stop_sent = 0;
    clock_gettime(CLOCK_MONOTONIC, &s->started);
    return s->pid < 0 || s->gzip_pid < 0 ? -1 : 0;
}

/* The first line of the child's standard error, without "eigenlog: ". */
static char *first_error_line(const char *err_path, const char *fallback)
{
    el_buf text = {0};
    char *line = NULL;
    if (read_file(err_path, &text, NULL) == EL_OK) {
        const char *p = text.data;
        while (*p == '\n' || *p == '\r')
            p++;
        if (strncmp(p, "eigenlog: ", 10) == 0)
            p += 10;
        size_t n = strcspn(p, "\r\n");
        if (n > 0 && (line = malloc(n + 1)) != NULL) {
            memcpy(line, p, n);
            line[n] = '\0';
        }
    }
    el_buf_free(&text);
    if (line == NULL && (line = malloc(strlen(fallback) + 1)) != NULL)
        strcpy(line, fallback);
    return line;
}

static int status_code(int status)
{
    if (WIFEXITED(status))
        return WEXITSTATUS(status);
    return WIFSIGNALED(status) ? 128 + WTERMSIG(status) : 127;
}

/* Fills the record of a finished log from its child's exit status,
 * standard error and JSON. */
static void collect(const survey_cli *c, log_job *j, slot *s)
{
    char fallback[128];
    int code = status_code(s->status);
    int gzip_failed = s->gzip_pid > 0 && !(WIFEXITED(s->gzip_status) && WEXITSTATUS(s->gzip_status) == 0) &&
                      !(WIFSIGNALED(s->gzip_status) && WTERMSIG(s->gzip_status) == SIGPIPE && code != 0);
    el_buf json = {0}, compact = {0};
    if (s->stop_sent) {
        /* The limit, not the log, ended the run: say so rather than name
         * the signal (timeout(1)'s status 124 for the same event). */
        code = EXIT_TIMED_OUT;
        gzip_failed = 0;
        snprintf(fallback, sizeof fallback,
                 "assess was stopped after the --log-timeout of %g s", c->log_timeout_s);
    } else if (gzip_failed) {
        code = EL_ERR_DATA;
        snprintf(fallback, sizeof fallback, "gzip could not decompress the log (status %d)",
                 status_code(s->gzip_status));
    } else if (WIFSIGNALED(s->status)) {
        snprintf(fallback, sizeof fallback, "assess was stopped by signal %d", WTERMSIG(s->status));
    } else {
        snprintf(fallback, sizeof fallback, "assess failed with exit status %d", code);
    }
    if (code == 0 && (read_file(s->json_path, &json, NULL) != EL_OK ||
                      el_survey_json_compact(json.data, json.length, &compact, NULL) != EL_OK)) {
        code = EL_ERR_IO;
        snprintf(fallback, sizeof fallback, "assess wrote no readable JSON");
    }
    j->rec.exit_code = code;
    /* A log gzip could not decompress: its message, not what assess made
     * of the truncated stream. */
    j->rec.error = code == 0                     ? calloc(1, 1)
                   : gzip_failed || s->stop_sent ? strdup(fallback)
                                                 : first_error_line(s->err_path, fallback);
    j->rec.json = code == 0 ? compact.data : calloc(1, 1);
    if (code != 0)
        el_buf_free(&compact);
    j->rec.has_report = c->reports && code == 0;
    el_buf_free(&json);
    unlink(s->json_path);
    unlink(s->err_path);
    j->done = 1;
}

static el_status save_record(const survey_cli *c, const log_job *j, el_error *err)
{
    if (!j->keyed)
        return EL_OK;    /* a log that could not be read is not cached */
    char path[4096];
    record_path(c, j->rec.path, path, sizeof path);
    el_buf text = {0};
    el_status st = el_survey_record_format(&j->rec, &text);
    if (st == EL_OK)
        st = el_write_file_atomic(path, text.data, text.length, err);
    else
        el_error_set(err, st, "out of memory");
    el_buf_free(&text);
    return st;
}

/* ------------------------------------------------------------ progress */

typedef struct {
    int on;
    struct timespec start;
    size_t total, done, failed, run_total, run_done;
} progress;

static double seconds_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

static void clock_text(double s, char *out, size_t size)
{
    long v = (long)(s + 0.5);
    snprintf(out, size, "%ld:%02ld:%02ld", v / 3600, v / 60 % 60, v % 60);
}

static void show(const progress *p)
{
    if (!p->on)
        return;
    double elapsed = seconds_since(&p->start);
    char e[32], left[48] = "";
    clock_text(elapsed, e, sizeof e);
    if (p->run_done > 0 && p->run_done < p->run_total) {
        char l[32];
        clock_text(elapsed / (double)p->run_done * (double)(p->run_total - p->run_done), l, sizeof l);
        snprintf(left, sizeof left, ", about %s left", l);
    }
    fprintf(stderr, "\rsurvey: %zu of %zu logs done, %zu failed, %s elapsed%s   ", p->done,
            p->total, p->failed, e, left);
    fflush(stderr);
}

static void show_end(const progress *p)
{
    if (p->on)
        fprintf(stderr, "\r%78s\r", "");
}

/* ------------------------------------------------------------ the run */

static size_t count_to_run(const log_job *jobs, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        k += !jobs[i].done;
    return k;
}

static slot *slot_of(slot *slots, size_t n, pid_t pid)
{
    for (size_t i = 0; i < n; i++)
        if (slots[i].pid == pid || slots[i].gzip_pid == pid)
            return &slots[i];
    return NULL;
}

/* The pool of running assess processes. */
typedef struct {
    slot *slots;
    size_t n_slots;
    size_t threads;     /* --threads of each assess */
    size_t next;        /* next log to look at */
    size_t running;
} pool;

/* Starts a process in every free slot while logs are left to run. */
static el_status fill_slots(const survey_cli *c, pool *pl, log_job *jobs, size_t n,
                            el_error *err)
{
    for (size_t i = 0; i < pl->n_slots; i++) {
        if (pl->slots[i].pid != 0)
            continue;
        while (pl->next < n && jobs[pl->next].done)
            pl->next++;
        if (pl->next == n)
            return EL_OK;
        pl->slots[i].log = pl->next;
        if (spawn(c, &jobs[pl->next++], pl->threads, &pl->slots[i]) != 0) {
            pl->slots[i].pid = 0;
            return el_error_set(err, EL_ERR_IO, "cannot start a process: %s", strerror(errno));
        }
        pl->running++;
    }
    return EL_OK;
}

/* Notes that process pid ended with status; when its log's processes have
 * all ended, collects and saves the log's record. Returns the log's job,
 * or NULL while the other process of a gzip pair still runs. */
static log_job *reap(const survey_cli *c, pool *pl, log_job *jobs, pid_t pid, int status,
                     el_status *st, el_error *err)
{
    slot *s = slot_of(pl->slots, pl->n_slots, pid);
    if (s == NULL)
        return NULL;
    /* An ended process's pid is kept negated until its partner ends. */
    if (pid == s->gzip_pid) {
        s->gzip_status = status;
        s->gzip_pid = -s->gzip_pid;
    } else {
        s->status = status;
        s->pid = -s->pid;
    }
    if (s->pid > 0 || s->gzip_pid > 0)
        return NULL;
    s->gzip_pid = -s->gzip_pid;
    log_job *j = &jobs[s->log];
    collect(c, j, s);
    s->pid = 0;
    s->gzip_pid = 0;
    pl->running--;
    if (s->stop_sent) {
        /* assess had no chance to remove its temporary outputs. */
        remove_temporaries(s->json_path);
        if (c->reports) {
            char report[4200];
            report_path(c, j->rec.path, report, sizeof report);
            remove_temporaries(report);
        }
        return j;   /* not cached: the limit, not the content, decided it */
    }
    el_status saved = save_record(c, j, err);
    if (saved != EL_OK && *st == EL_OK)
        *st = saved;
    return j;
}

/* Sends SIGTERM to the processes of a log over --log-timeout, and
 * SIGKILL STOP_GRACE_S later to one that is still there. */
static void enforce_limit(const survey_cli *c, pool *pl)
{
    for (size_t i = 0; i < pl->n_slots; i++) {
        slot *s = &pl->slots[i];
        if (s->pid <= 0 && s->gzip_pid <= 0)
            continue;
        double t = seconds_since(&s->started);
        int sig = 0;
        if (s->stop_sent == 0 && t > c->log_timeout_s)
            sig = SIGTERM;
        else if (s->stop_sent == 1 && t > c->log_timeout_s + STOP_GRACE_S)
            sig = SIGKILL;
        if (sig == 0)
            continue;
        if (s->pid > 0)
            kill(s->pid, sig);
        if (s->gzip_pid > 0)
            kill(s->gzip_pid, sig);
        s->stop_sent++;
    }
}

/* Waits for a child to end. With --log-timeout it polls, every 20 ms,
 * so a log over its limit is stopped while the others run on. */
static pid_t wait_child(const survey_cli *c, pool *pl, int *status)
{
    if (c->log_timeout_s <= 0)
        return waitpid(-1, status, 0);
    for (;;) {
        pid_t pid = waitpid(-1, status, WNOHANG);
        if (pid != 0)
            return pid;
        enforce_limit(c, pl);
        struct timespec nap = {0, 20000000L};
        nanosleep(&nap, NULL);
    }
}

/* Runs every log not taken from the cache, c->jobs at a time. */
static el_status run_logs(const survey_cli *c, log_job *jobs, size_t n, progress *p,
                          el_error *err)
{
    size_t to_run = count_to_run(jobs, n);
    pool pl = {NULL, c->jobs < to_run ? c->jobs : to_run, 1, 0, 0};
    if (pl.n_slots == 0)
        return EL_OK;
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    pl.threads = c->threads ? c->threads
                            : (cores > (long)pl.n_slots ? (size_t)cores / pl.n_slots : 1);
    if ((pl.slots = calloc(pl.n_slots, sizeof *pl.slots)) == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    for (size_t i = 0; i < pl.n_slots; i++) {
        snprintf(pl.slots[i].json_path, sizeof pl.slots[i].json_path,
                 "%s/cache/tmp-%ld-%zu.json", c->out_dir, (long)getpid(), i);
        snprintf(pl.slots[i].err_path, sizeof pl.slots[i].err_path,
                 "%s/cache/tmp-%ld-%zu.err", c->out_dir, (long)getpid(), i);
    }
    el_status st = EL_OK;
    for (;;) {
        if (st == EL_OK)
            st = fill_slots(c, &pl, jobs, n, err);
        if (pl.running == 0)
            break;
        int status = 0;
        pid_t pid = wait_child(c, &pl, &status);
        if (pid < 0 && errno == EINTR)
            continue;
        if (pid < 0)
            break;
        log_job *j = reap(c, &pl, jobs, pid, status, &st, err);
        if (j != NULL) {
            p->done++;
            p->run_done++;
            p->failed += j->rec.exit_code != 0;
            show(p);
        }
    }
    free(pl.slots);
    return st;
}

/* ------------------------------------------------------------ outputs */

/* Exit status of a finished table: EXIT_LOG_FAILED when any log failed,
 * else 5 when any matched --fail-on, else 0. */
static int table_exit(const el_survey_table *t, int fail_on)
{
    int matched = 0;
    for (size_t i = 0; i < t->count; i++) {
        if (strcmp(t->rows[i].field[EL_SC_STATUS], "ok") != 0)
            return EXIT_LOG_FAILED;
        matched |= el_survey_row_fails(&t->rows[i], fail_on);
    }
    return matched ? 5 : 0;
}

/* Builds survey.csv, survey.jsonl and index.html (and shard.txt for a
 * shard) in memory, then writes them whole into dir; on any failure none. */
static el_status write_tables(const char *dir, const el_survey_table *t, el_buf *jsonl,
                              const char *reports_prefix, const char *shard_text,
                              el_error *err)
{
    char paths[4][4200];
    path_join(paths[0], sizeof paths[0], dir, "survey.csv");
    path_join(paths[1], sizeof paths[1], dir, "survey.jsonl");
    path_join(paths[2], sizeof paths[2], dir, "index.html");
    path_join(paths[3], sizeof paths[3], dir, "shard.txt");
    cli_output out[4] = {{paths[0], {0}}, {paths[1], {0}}, {paths[2], {0}},
                         {shard_text ? paths[3] : NULL, {0}}};
    el_status st = el_survey_csv(t, &out[0].text);
    if (st == EL_OK)
        st = el_buf_append(&out[1].text, jsonl->data ? jsonl->data : "", jsonl->length);
    if (st == EL_OK)
        st = el_survey_html(t, reports_prefix, &out[2].text, err);
    if (st == EL_OK && shard_text)
        st = el_buf_printf(&out[3].text, "%s", shard_text);
    if (st == EL_ERR_NOMEM)
        el_error_set(err, st, "out of memory building the survey's outputs");
    return cli_write_outputs(out, 4, st, err);
}

/* Rows and JSON lines of the records jobs[0..n), in order. */
static el_status build_table(const log_job *jobs, size_t n, el_survey_table *t, el_buf *jsonl,
                             el_error *err)
{
    el_status st = EL_OK;
    for (size_t i = 0; st == EL_OK && i < n; i++) {
        el_survey_row row;
        st = el_survey_row_build(&jobs[i].rec, &row, err);
        if (st != EL_OK) {
            el_error_at(err, jobs[i].rec.path, 0, 0);
            break;
        }
        if ((st = el_survey_table_push(t, &row)) != EL_OK) {
            el_survey_row_free(&row);
            return el_error_set(err, st, "out of memory");
        }
        el_survey_jsonl_line(&jobs[i].rec, jsonl);
        if ((st = el_buf_append(jsonl, "\n", 1)) != EL_OK)
            return el_error_set(err, st, "out of memory");
    }
    return st;
}

static void free_jobs(log_job *jobs, size_t n)
{
    for (size_t i = 0; jobs != NULL && i < n; i++) {
        free(jobs[i].rec.error);
        free(jobs[i].rec.json);
    }
    free(jobs);
}

/* Lists the logs of every input, leaving out the survey's own folder
 * (made first if missing, so its canonical path is known). */
static el_status list_inputs(const survey_cli *c, el_survey_list *list, el_error *err)
{
    el_status st = make_dirs(c->out_dir, err);
    char *out_real = st == EL_OK ? realpath(c->out_dir, NULL) : NULL;
    list->skip_folder = out_real;
    for (size_t i = 0; st == EL_OK && i < c->n_inputs; i++)
        st = el_survey_list_add_input(list, c->inputs[i], err);
    list->skip_folder = NULL;
    free(out_real);
    if (st != EL_OK)
        return st;
    if (list->count == 0) {
        el_error_set(err, EL_ERR_USAGE, "no logs found");
        el_error_hint(err, "folders are searched for *.csv and *.csv.gz; a manifest lists one log per line");
        return EL_ERR_USAGE;
    }
    return EL_OK;
}

/* Keys every log of list[begin, end) and takes unchanged ones from the
 * cache; the others are left to run. */
static el_status prepare_jobs(const survey_cli *c, const el_survey_list *list, size_t begin,
                              size_t end, log_job **out, progress *p, el_error *err)
{
    log_job *jobs = calloc(end - begin + 1, sizeof *jobs);
    if (jobs == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    for (size_t i = begin; i < end; i++) {
        log_job *j = &jobs[i - begin];
        j->rec.path = list->logs[i].path;   /* borrowed from the list */
        job_args(c, &list->logs[i], j);
        key_log(j);
        j->done = j->keyed && try_cached(c, j);
        p->done += j->done;
        p->failed += j->done && j->rec.exit_code != 0;
    }
    p->total = end - begin;
    p->run_total = count_to_run(jobs, end - begin);
    *out = jobs;
    return EL_OK;
}

static el_status self_path(survey_cli *c, el_error *err)
{
    ssize_t n = readlink("/proc/self/exe", c->exe, sizeof c->exe - 1);
    if (n <= 0)
        return el_error_set(err, EL_ERR_IO, "cannot find this program's own path (/proc/self/exe)");
    c->exe[n] = '\0';
    return EL_OK;
}

/* A local run (every log) or one shard (--shard K/N, into DIR/shards/K). */
static int run_survey(survey_cli *c, el_error *err)
{
    el_survey_list list = {0};
    log_job *jobs = NULL;
    el_survey_table t = {0};
    el_buf jsonl = {0};
    progress p = {0};
    p.on = !c->quiet && isatty(fileno(stderr));
    clock_gettime(CLOCK_MONOTONIC, &p.start);
    char dir[4200], cache[4200], reports[4200], shard_text[256] = "";
    path_join(cache, sizeof cache, c->out_dir, "cache");
    path_join(reports, sizeof reports, c->out_dir, "reports");
    snprintf(dir, sizeof dir, "%s", c->out_dir);
    size_t begin = 0, end = 0;
    el_status st = self_path(c, err);
    if (st == EL_OK)
        st = list_inputs(c, &list, err);
    if (st == EL_OK) {
        end = list.count;
        if (c->shard_k) {
            el_survey_shard_range(list.count, c->shard_k, c->shard_n, &begin, &end);
            snprintf(dir, sizeof dir, "%s/shards/%zu", c->out_dir, c->shard_k);
            snprintf(shard_text, sizeof shard_text,
                     "eigenlog survey shard %zu of %zu: logs %zu to %zu of %zu; reports %d\n",
                     c->shard_k, c->shard_n, begin + 1, end, list.count, c->reports);
        }
        st = make_dirs(cache, err);
    }
    if (st == EL_OK && c->reports)
        st = make_dirs(reports, err);
    if (st == EL_OK)
        st = make_dirs(dir, err);
    if (st == EL_OK)
        st = prepare_jobs(c, &list, begin, end, &jobs, &p, err);
    if (st == EL_OK) {
        show(&p);
        st = run_logs(c, jobs, end - begin, &p, err);
        show_end(&p);
    }
    if (st == EL_OK)
        st = build_table(jobs, end - begin, &t, &jsonl, err);
    if (st == EL_OK)
        st = write_tables(dir, &t, &jsonl, c->reports ? (c->shard_k ? "../../reports/" : "reports/") : NULL,
                          c->shard_k ? shard_text : NULL, err);
    int code = st == EL_OK ? table_exit(&t, c->fail_on) : el_exit_code(st);
    if (st == EL_OK && !c->quiet)
        cli_printf_wrapped("survey: %zu logs (%zu assessed now, %zu unchanged), %zu failed; %s/survey.csv\n",
               end - begin, p.run_total, end - begin - p.run_total, p.failed, dir);
    free_jobs(jobs, end - begin);
    el_survey_table_free(&t);
    el_buf_free(&jsonl);
    el_survey_list_free(&list);
    if (st != EL_OK)
        cli_print_error(err);
    return code;
}

/* ------------------------------------------------------------ merge */

static el_status read_shard_info(const char *shard_dir, size_t *k, size_t *n, int *reports,
                                 el_error *err)
{
    char path[4200];
    path_join(path, sizeof path, shard_dir, "shard.txt");
    el_buf text = {0};
    el_status st = read_file(path, &text, err);
    if (st == EL_OK && sscanf(text.data, "eigenlog survey shard %zu of %zu: logs %*u to %*u of %*u; reports %d",
                              k, n, reports) != 3) {
        st = el_error_set(err, EL_ERR_DATA, "not a shard description");
        el_error_at(err, path, 1, 0);
    }
    el_buf_free(&text);
    if (st != EL_OK)
        el_error_hint(err, "a shard is written by eigenlog survey ... --shard K/N --out DIR; "
                           "re-run the missing one");
    return st;
}

static el_status merge_shard(const char *dir, size_t k, size_t n, int *reports,
                             el_survey_table *t, el_buf *jsonl, el_error *err)
{
    char shard_dir[4200], path[4300];
    snprintf(shard_dir, sizeof shard_dir, "%s/shards/%zu", dir, k);
    size_t got_k = 0, got_n = 0;
    el_status st = read_shard_info(shard_dir, &got_k, &got_n, reports, err);
    if (st == EL_OK && (got_k != k || got_n != n)) {
        st = el_error_set(err, EL_ERR_DATA, "shard %zu of %zu found where shard %zu of %zu belongs",
                          got_k, got_n, k, n);
        el_error_at(err, shard_dir, 0, 0);
        el_error_hint(err, "remove stale shards and run every shard of one campaign again");
    }
    el_buf text = {0};
    size_t rows_before = t->count;
    path_join(path, sizeof path, shard_dir, "survey.csv");
    if (st == EL_OK && (st = read_file(path, &text, err)) == EL_OK)
        st = el_survey_csv_read(path, text.data, t, err);
    el_buf_free(&text);
    path_join(path, sizeof path, shard_dir, "survey.jsonl");
    if (st == EL_OK && (st = read_file(path, &text, err)) == EL_OK) {
        size_t lines = 0;
        for (size_t i = 0; i < text.length; i++)
            lines += text.data[i] == '\n';
        if (lines != t->count - rows_before) {
            st = el_error_set(err, EL_ERR_DATA, "%zu JSON lines for %zu table rows", lines,
                              t->count - rows_before);
            el_error_at(err, path, 0, 0);
        } else {
            st = el_buf_append(jsonl, text.data, text.length);
        }
    }
    el_buf_free(&text);
    return st;
}

static int run_merge(const survey_cli *c, el_error *err)
{
    char shard1[4200];
    snprintf(shard1, sizeof shard1, "%s/shards/1", c->merge_dir);
    size_t k = 0, n = 0;
    int reports = 0, any_reports = 0;
    el_survey_table t = {0};
    el_buf jsonl = {0};
    el_status st = read_shard_info(shard1, &k, &n, &reports, err);
    for (size_t i = 1; st == EL_OK && i <= n; i++) {
        st = merge_shard(c->merge_dir, i, n, &reports, &t, &jsonl, err);
        any_reports |= reports;
    }
    if (st == EL_OK)
        st = make_dirs(c->out_dir, err);
    if (st == EL_OK)
        st = write_tables(c->out_dir, &t, &jsonl, any_reports ? "reports/" : NULL, NULL, err);
    int code = st == EL_OK ? table_exit(&t, c->fail_on) : el_exit_code(st);
    if (st == EL_OK && !c->quiet)
        cli_printf_wrapped("survey: merged %zu shards, %zu logs; %s/survey.csv\n", n, t.count, c->out_dir);
    el_survey_table_free(&t);
    el_buf_free(&jsonl);
    if (st != EL_OK)
        cli_print_error(err);
    return code;
}

/* ------------------------------------------------------------ Slurm */

/* Appends text as one single-quoted shell word. */
static void shell_word(el_buf *out, const char *text)
{
    el_buf_append(out, " '", 2);
    for (; *text != '\0'; text++) {
        if (*text == '\'')
            el_buf_append(out, "'\\''", 4);
        else
            el_buf_append(out, text, 1);
    }
    el_buf_append(out, "'", 1);
}

/* The options a shard task repeats: every option given except the
 * Slurm ones, --jobs and --threads (a task runs one single-threaded
 * assess per CPU Slurm gave it; the numbers do not depend on threads)
 * and --quiet. */
static void shard_options(const cli_args *a, el_buf *out)
{
    static const char *const skip[] = {"slurm", "partition", "time-limit", "shards",
                                       "jobs", "threads", "quiet", "sbatch-arg"};
    for (size_t i = 0; i < N_OPTIONS; i++) {
        int skipped = 0;
        for (size_t k = 0; k < sizeof skip / sizeof skip[0]; k++)
            skipped |= strcmp(OPTIONS[i].name, skip[k]) == 0;
        if (skipped || a->value[i] == NULL)
            continue;
        char arg[8192];
        if (OPTIONS[i].value_name == NULL)
            snprintf(arg, sizeof arg, "--%s", OPTIONS[i].name);
        else
            snprintf(arg, sizeof arg, "--%s=%s", OPTIONS[i].name, a->value[i]);
        shell_word(out, arg);
    }
}

static el_status write_scripts(const survey_cli *c, const cli_args *a, size_t shards,
                               const char *array_path, const char *merge_path, el_error *err)
{
    char cwd[4096];
    if (getcwd(cwd, sizeof cwd) == NULL)
        return el_error_set(err, EL_ERR_IO, "cannot read the current folder: %s", strerror(errno));
    cli_output out[2] = {{array_path, {0}}, {merge_path, {0}}};
    el_buf *s = &out[0].text;
    el_buf_printf(s, "#!/bin/sh\n# One shard of an eigenlog survey per array task (written by "
                     "eigenlog survey --slurm).\ncd");
    shell_word(s, cwd);
    el_buf_printf(s, " || exit 4\n");
    shell_word(s, c->exe);
    el_buf_printf(s, " survey");
    for (size_t i = 0; i < c->n_inputs; i++)
        shell_word(s, c->inputs[i]);
    shard_options(a, s);
    el_buf_printf(s, " --quiet --jobs \"${SLURM_CPUS_PER_TASK:-1}\" --threads 1 "
                     "--shard \"$SLURM_ARRAY_TASK_ID/%zu\"\nstatus=$?\n"
                     "# A log that failed is a row of the table, not a failed task.\n"
                     "case $status in 0|2|5) exit 0 ;; esac\nexit $status\n", shards);
    s = &out[1].text;
    el_buf_printf(s, "#!/bin/sh\n# Merges the shards of an eigenlog survey (written by "
                     "eigenlog survey --slurm).\ncd");
    shell_word(s, cwd);
    el_buf_printf(s, " || exit 4\nexec");
    shell_word(s, c->exe);
    el_buf_printf(s, " survey --quiet");
    char arg[4200];
    snprintf(arg, sizeof arg, "--merge=%s", c->out_dir);
    shell_word(s, arg);
    if (c->fail_on)
        shell_word(s, c->fail_on == 1 ? "--fail-on=unstable" : "--fail-on=ambiguous");
    el_status st = el_buf_append(s, "\n", 1);
    if (st == EL_OK && out[0].text.failed)
        st = EL_ERR_NOMEM;
    if (st != EL_OK)
        el_error_set(err, st, "out of memory");
    return cli_write_outputs(out, 2, st, err);
}

/* Runs sbatch with argv and reads the job id it prints (--parsable). */
static el_status sbatch(char *const *argv, char *job_id, size_t size, el_error *err)
{
    int fds[2];
    if (pipe(fds) != 0)
        return el_error_set(err, EL_ERR_IO, "cannot make a pipe: %s", strerror(errno));
    pid_t pid = fork();
    if (pid == 0) {
        dup2(fds[1], STDOUT_FILENO);
        close(fds[0]);
        close(fds[1]);
        execvp("sbatch", argv);
        fprintf(stderr, "eigenlog: cannot run sbatch: %s\n", strerror(errno));
        _exit(127);
    }
    close(fds[1]);
    char text[256] = "";
    size_t n = 0;
    ssize_t got;
    while (n + 1 < sizeof text && (got = read(fds[0], text + n, sizeof text - 1 - n)) > 0)
        n += (size_t)got;
    text[n] = '\0';
    close(fds[0]);
    int status = 0;
    if (pid < 0 || waitpid(pid, &status, 0) < 0 || !WIFEXITED(status) || WEXITSTATUS(status) != 0 ||
        text[0] < '0' || text[0] > '9') {
        el_error_set(err, EL_ERR_IO, "sbatch failed (%s)",
                     pid < 0 ? "cannot fork" : status_code(status) == 127 ? "not found" : "see its message above");
        el_error_hint(err, "check that Slurm's sbatch is on PATH and the options given to it");
        return EL_ERR_IO;
    }
    snprintf(job_id, size, "%.*s", (int)strspn(text, "0123456789"), text);
    return EL_OK;
}

/* Removes the descriptions of shards of an earlier campaign, so the merge
 * cannot take an old shard for a missing new one. */
static void clear_old_shards(const char *dir)
{
    for (size_t k = 1; k <= 100000; k++) {
        char path[4300];
        snprintf(path, sizeof path, "%s/shards/%zu", dir, k);
        if (access(path, F_OK) != 0)
            break;
        snprintf(path, sizeof path, "%s/shards/%zu/shard.txt", dir, k);
        unlink(path);
    }
}

static size_t add_sbatch_common(const survey_cli *c, char **argv, size_t n, char *partition,
                                char *time_limit)
{
    argv[n++] = "--parsable";
    if (c->partition) {
        snprintf(partition, 512, "--partition=%s", c->partition);
        argv[n++] = partition;
    }
    if (c->time_limit) {
        snprintf(time_limit, 512, "--time=%s", c->time_limit);
        argv[n++] = time_limit;
    }
    for (size_t i = 0; i < c->n_sbatch; i++)
        argv[n++] = (char *)c->sbatch_args[i];
    return n;
}

static int run_slurm(survey_cli *c, const cli_args *a, el_error *err)
{
    el_survey_list list = {0};
    char slurm_dir[4200], array_path[4300], merge_path[4300], out_a[4400], out_m[4400];
    char array_arg[64], dep_arg[128], partition[512], time_limit[512];
    char array_id[64] = "", merge_id[64] = "";
    path_join(slurm_dir, sizeof slurm_dir, c->out_dir, "slurm");
    path_join(array_path, sizeof array_path, slurm_dir, "array.sh");
    path_join(merge_path, sizeof merge_path, slurm_dir, "merge.sh");
    snprintf(out_a, sizeof out_a, "--output=%s/shard-%%a.out", slurm_dir);
    snprintf(out_m, sizeof out_m, "--output=%s/merge.out", slurm_dir);
    el_status st = self_path(c, err);
    if (st == EL_OK)
        st = list_inputs(c, &list, err);
    size_t shards = c->shards ? c->shards : 16;
    if (shards > list.count)
        shards = list.count;
    if (st == EL_OK)
        st = make_dirs(slurm_dir, err);
    if (st == EL_OK)
        st = write_scripts(c, a, shards, array_path, merge_path, err);
    if (st == EL_OK) {
        clear_old_shards(c->out_dir);
        snprintf(array_arg, sizeof array_arg, "--array=1-%zu", shards);
        char *argv[MAX_SBATCH_ARGS + 16] = {"sbatch", "--job-name=eigenlog-survey", array_arg, out_a};
        size_t n = add_sbatch_common(c, argv, 4, partition, time_limit);
        argv[n++] = array_path;
        argv[n] = NULL;
        st = sbatch(argv, array_id, sizeof array_id, err);
    }
    if (st == EL_OK) {
        snprintf(dep_arg, sizeof dep_arg, "--dependency=afterany:%s", array_id);
        char *argv[MAX_SBATCH_ARGS + 16] = {"sbatch", "--job-name=eigenlog-survey-merge", dep_arg, out_m};
        size_t n = add_sbatch_common(c, argv, 4, partition, time_limit);
        argv[n++] = merge_path;
        argv[n] = NULL;
        st = sbatch(argv, merge_id, sizeof merge_id, err);
    }
    if (st == EL_OK && !c->quiet)
        cli_printf_wrapped("survey: submitted job array %s (%zu shards of %zu logs) and merge job %s;\n"
               "        the merge writes %s/survey.csv, survey.jsonl and index.html\n",
               array_id, shards, list.count, merge_id, c->out_dir);
    el_survey_list_free(&list);
    if (st != EL_OK)
        cli_print_error(err);
    return st == EL_OK ? 0 : el_exit_code(st);
}

/* ------------------------------------------------------------ entry */

static void print_help(void)
{
    cli_print_help("eigenlog survey LOG|FOLDER|MANIFEST... --out DIR [options]\n"
                   "       eigenlog survey --merge DIR",
                   "Assesses many logs at once, each exactly as `eigenlog assess` would with the\n"
                   "same options, and writes DIR/survey.csv (one row per log), DIR/survey.jsonl\n"
                   "(each log's assess JSON) and DIR/index.html (ranked by margin). Folders are\n"
                   "searched for *.csv and *.csv.gz; any other file is a manifest: one log per\n"
                   "line, optionally with its own --time/--from/--to/... options. A re-run skips\n"
                   "logs whose content and options are unchanged. --threads defaults to the\n"
                   "cores shared among the logs run at once. Exit status 2 when any log could\n"
                   "not be assessed (see its row), 5 when one matched --fail-on.",
                   OPTIONS, N_OPTIONS);
}

static void free_cli(survey_cli *c)
{
    for (size_t i = 0; i < c->n_model; i++)
        free(c->model_args[i]);
    free(c->inputs);
}

int cli_survey(int argc, char **argv)
{
    el_error err;
    el_error_clear(&err);
    survey_cli c;
    memset(&c, 0, sizeof c);
    cli_args a;
    char **rest = calloc((size_t)argc + 1, sizeof *rest);
    c.inputs = calloc((size_t)argc + 1, sizeof *c.inputs);
    int n_rest = 0;
    el_status st = rest && c.inputs ? EL_OK : el_error_set(&err, EL_ERR_NOMEM, "out of memory");
    if (st == EL_OK)
        st = split_argv(argc, argv, rest, &n_rest, &c, &err);
    if (st == EL_OK)
        st = cli_parse(n_rest, rest, OPTIONS, N_OPTIONS, &a, &err);
    if (st == EL_OK && a.help) {
        print_help();
        free(rest);
        free_cli(&c);
        return 0;
    }
    if (st == EL_OK)
        st = parse_survey(&a, &c, &err);
    int code;
    if (st != EL_OK) {
        cli_print_error(&err);
        code = el_exit_code(st);
    } else if (c.merge_dir != NULL) {
        code = run_merge(&c, &err);
    } else if (c.slurm) {
        code = run_slurm(&c, &a, &err);
    } else {
        code = run_survey(&c, &err);
    }
    free(rest);
    free_cli(&c);
    return code;
}
