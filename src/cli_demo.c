/* cli_demo: `eigenlog demo [NAME] [-o DIR]`: writes the invented demo logs. */
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "el_demo.h"
#include "el_io.h"

static const cli_option OPTIONS[] = {
    {"output", "DIR", "folder to write into (default: the current folder); also -o"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

static el_status write_demo(const el_demo_info *d, const char *dir, el_error *err)
{
    el_buf csv = {0};
    el_status st = el_demo_generate(d->name, &csv, err);
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir, d->file_name);
    if (st == EL_OK)
        st = el_write_file_atomic(path, csv.data, csv.length, err);
    if (st == EL_OK)
        printf("wrote %s  (%s)\n  truth: %s\n", path, d->summary, d->truth);
    el_buf_free(&csv);
    return st;
}

static void print_help(void)
{
    cli_print_help("eigenlog demo [NAME] [-o DIR]",
                   "Writes demo logs of invented scenarios, simulated from known linear\n"
                   "systems with a fixed seed (their true dynamics are printed and listed\n"
                   "in datasets/README.md). Without NAME every scenario is written.",
                   OPTIONS, N_OPTIONS);
    printf("\nscenarios:\n");
    for (size_t i = 0; i < el_demo_count(); i++)
        printf("  %-14s %s\n", el_demo_get(i)->name, el_demo_get(i)->summary);
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
    if (st == EL_OK && a.n_positional > 1) {
        st = el_error_set(&err, EL_ERR_USAGE, "give at most one scenario name");
        el_error_hint(&err, "eigenlog demo [NAME] [-o DIR]");
    }
    if (st == EL_OK && a.n_positional == 1) {
        const el_demo_info *d = el_demo_find(a.positional[0]);
        if (d == NULL) {
            st = el_error_set(&err, EL_ERR_USAGE, "no demo scenario '%s'", a.positional[0]);
            el_error_hint(&err, "see the scenarios with eigenlog demo --help");
        } else {
            st = write_demo(d, dir, &err);
        }
    } else if (st == EL_OK) {
        for (size_t i = 0; i < el_demo_count() && st == EL_OK; i++)
            st = write_demo(el_demo_get(i), dir, &err);
    }
    if (st != EL_OK)
        cli_print_error(&err);
    return el_exit_code(st);
}
