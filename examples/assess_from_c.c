/* Shows: calling libeigenlog from C: assess a log file (or, with no
 * argument, the booster-pump demo log made in memory) and print the verdict.
 *
 * Build in the source tree:  make examples   (or see examples/README.md)
 * Build against an installed eigenlog:
 *   cc assess_from_c.c $(pkg-config --cflags --libs eigenlog openblas) -o assess_from_c
 * Exit status as the program's: 0 done, 2 bad data, 3 numerical, 4 I/O. */
#define _POSIX_C_SOURCE 200809L
#include <cblas.h>
#include <stdio.h>
#include <string.h>

#include <eigenlog.h>

/* Prints "eigenlog: message (file:line:column) hint", as the program does. */
static void print_error(const el_error *err)
{
    fprintf(stderr, "assess_from_c: %s", err->message);
    if (err->file[0] != '\0')
        fprintf(stderr, " (%s:%ld:%ld)", err->file, err->line, err->column);
    if (err->hint[0] != '\0')
        fprintf(stderr, "\n  hint: %s", err->hint);
    fputc('\n', stderr);
}

int main(int argc, char **argv)
{
    /* The bootstrap runs its own threads; OpenBLAS threads inside its small
     * products would only oversubscribe the cores. */
    openblas_set_num_threads(1);

    el_error err;
    el_error_clear(&err);
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.boot.replicates = 200; /* enough for a demo; the program's default is 1000 */

    el_buf demo = {0};
    FILE *stream = NULL;
    el_status st = EL_OK;
    if (argc > 1) {
        opt.path = argv[1];
    } else {
        /* No file given: make the booster-pump demo log in memory and read
         * it through a stream, so nothing touches the disk. */
        st = el_demo_generate("booster-pump", &demo, &err);
        if (st == EL_OK && (stream = fmemopen(demo.data, demo.length, "r")) == NULL)
            st = el_error_set(&err, EL_ERR_IO, "fmemopen failed");
        opt.path = "booster-pump (demo, in memory)";
        opt.stream = stream;
    }

    el_assessment r;
    memset(&r, 0, sizeof r);
    if (st == EL_OK)
        st = el_assess_run(&opt, &r, &err);
    if (st == EL_OK) {
        printf("log: %s\n", opt.path);
        printf("verdict: %s (%s)\n", r.verdict.stability_name, r.verdict.type);
        if (r.modes.n_modes > 0) {
            const el_mode *m = &r.modes.modes[0]; /* least damped first */
            printf("least damped mode: %.3f Hz, damping ratio %.3f\n", m->frequency_hz,
                   m->damping_ratio);
        }
        printf("bootstrap support for stable: %.0f of %zu replicates\n",
               r.verdict.p_stable * (double)r.boot.replicates, r.boot.replicates);
    } else {
        print_error(&err);
    }
    el_assessment_free(&r);
    if (stream != NULL)
        fclose(stream);
    el_buf_free(&demo);
    return st == EL_OK ? 0 : el_exit_code(st);
}
