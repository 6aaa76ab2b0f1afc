/* cli_demo: `eigenlog demo [NAME] [-o DIR]`: writes the invented demo logs. */
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "el_demo.h"
#include "el_io.h"

static const cli_option OPTIONS[] = {
    {"output", "DIR", "folder to write into, created if missing (default: the current "
                      "folder); also -o"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

/* Builds the CSV text of every chosen scenario, creates the folder (and
 * its parents) and writes all files as one whole (cli_write_outputs):
 * either every file or none. */
static el_status write_demos(const el_demo_info *const *demos, size_t n, const char *dir,
                             el_error *err)
{
    cli_output out[CLI_MAX_OUTPUTS];
    char paths[CLI_MAX_OUTPUTS][4096];
    el_status st = n <= CLI_MAX_OUTPUTS ? EL_OK
                                        : el_error_set(err, EL_ERR_INTERNAL, "too many demos");
    memset(out, 0, sizeof out);
    for (size_t i = 0; i < n && st == EL_OK; i++) {
        if ((size_t)snprintf(paths[i], sizeof paths[i], "%s/%s", dir, demos[i]->file_name)
            >= sizeof paths[i])
            st = el_error_set(err, EL_ERR_USAGE, "the folder name is too long");
        out[i].path = paths[i];
        if (st == EL_OK)
            st = el_demo_generate(demos[i]->name, &out[i].text, err);
    }
    if (st == EL_OK)
        st = el_make_folders(dir, err);
    st = cli_write_outputs(out, n, st, err);
    for (size_t i = 0; i < n && st == EL_OK; i++)
        cli_printf_wrapped("wrote %s  (%s)\n  truth: %s\n", paths[i], demos[i]->summary,
               demos[i]->truth);
    return st;
}

static void print_help(void)
{
    cli_print_help("eigenlog demo [NAME] [-o DIR]",
                   "Writes demo logs of invented scenarios, simulated from known linear\n"
                   "systems with a fixed seed (their true dynamics are printed and listed\n"
                   "in datasets/README.md). Without NAME every scenario is written; all files\n"
                   "are written or none.",
                   OPTIONS, N_OPTIONS);
    cli_printf_wrapped("\nscenarios:\n");
    for (size_t i = 0; i < el_demo_count(); i++)
        cli_printf_wrapped("  %-14s %s\n", el_demo_get(i)->name, el_demo_get(i)->summary);
}

int cli_demo(int argc, char **argv)
{
    cli_args a;
    el_error err;
    el_error_clear(&err);
    el_status st = cli_parse(argc, argv, OPTIONS, N_OPTIONS, &a, &err);
    if (st == EL_OK && a.help) {
        print_help();
        return 0;
    }
    const char *dir = a.value[0] != NULL ? a.value[0] : ".";
    if (st == EL_OK && dir[0] == '\0') {
        st = el_error_set(&err, EL_ERR_USAGE, "the folder name is empty");
        el_error_option(&err, "--output");
        el_error_hint(&err, "give a folder, e.g. -o /tmp/demo (default: the current folder)");
    }
    if (st == EL_OK && a.n_positional > 1) {
        st = el_error_set(&err, EL_ERR_USAGE, "give at most one scenario name");
        el_error_hint(&err, "eigenlog demo [NAME] [-o DIR]");
    }
    const el_demo_info *demos[CLI_MAX_OUTPUTS];
    size_t n_demos = 0;
    if (st == EL_OK && a.n_positional == 1) {
        demos[n_demos] = el_demo_find(a.positional[0]);
        if (demos[n_demos++] == NULL) {
            st = el_error_set(&err, EL_ERR_USAGE, "no demo scenario '%s'", a.positional[0]);
            el_error_hint(&err, "see the scenarios with eigenlog demo --help");
        }
    } else if (st == EL_OK) {
        for (size_t i = 0; i < el_demo_count() && n_demos < CLI_MAX_OUTPUTS; i++)
            demos[n_demos++] = el_demo_get(i);
    }
    if (st == EL_OK)
        st = write_demos(demos, n_demos, dir, &err);
    if (st != EL_OK)
        cli_print_error(&err);
    return el_exit_code(st);
}
