/* bench_ingest: writes a large synthetic log (rows x 8 channels of a
 * stable random linear system) and measures how fast ingest reads it.
 * usage: bench_ingest OUT.csv [ROWS]   (default 1,000,000 rows) */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "el_ingest.h"
#include "el_rng.h"

#define N_CH 8

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int write_log(const char *path, size_t rows)
{
    FILE *out = fopen(path, "w");
    if (out == NULL)
        return -1;
    el_rng rng;
    el_rng_seed(&rng, 2026, 0);
    double x[N_CH] = {0}, next[N_CH];
    fprintf(out, "t [s]");
    for (int c = 0; c < N_CH; c++)
        fprintf(out, ",ch%d [unit]", c);
    fprintf(out, "\n");
    for (size_t k = 0; k < rows; k++) {
        /* A ring of coupled damped channels; every eigenvalue of the
         * circulant update has modulus <= 0.95, so the log stays bounded. */
        for (int c = 0; c < N_CH; c++)
            next[c] = 0.9 * x[c] - 0.05 * x[(c + 1) % N_CH] + 0.1 * el_rng_normal(&rng);
        memcpy(x, next, sizeof x);
        fprintf(out, "%.3f", 0.001 * (double)k);
        for (int c = 0; c < N_CH; c++)
            fprintf(out, ",%.6g", 10.0 + x[c]);
        fprintf(out, "\n");
    }
    return fclose(out);
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: bench_ingest OUT.csv [ROWS]\n");
        return 1;
    }
    size_t rows = argc > 2 ? (size_t)strtoull(argv[2], NULL, 10) : 1000000;
    if (write_log(argv[1], rows) != 0) {
        fprintf(stderr, "bench_ingest: cannot write %s\n", argv[1]);
        return 4;
    }
    struct stat sb;
    stat(argv[1], &sb);
    el_table table;
    memset(&table, 0, sizeof table);
    el_error err;
    el_error_clear(&err);
    el_ingest_options opt = {0};
    double t0 = now_s();
    el_status st = el_table_read(argv[1], &opt, &table, &err);
    double wall = now_s() - t0;
    if (st != EL_OK) {
        char text[1024];
        fprintf(stderr, "bench_ingest: %s\n", el_error_format(&err, text, sizeof text));
        return 2;
    }
    double mb = (double)sb.st_size / 1e6;
    printf("ingest: %zu rows x %zu columns, %.1f MB in %.3f s = %.1f MB/s\n",
           table.n_rows, table.n_columns, mb, wall, mb / wall);
    el_table_free(&table);
    return 0;
}
