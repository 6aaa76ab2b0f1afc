/* el_demo: invented demo scenarios simulated by exact discretisation of a
 * known linear system with a fixed seed, written as CSV logs, so their true
 * dynamics are known (datasets/README.md documents them). */
#ifndef EL_DEMO_H
#define EL_DEMO_H

#include <stddef.h>
#include <stdint.h>

#include "el_error.h"
#include "el_io.h"

typedef struct {
    const char *name;         /* short name used on the command line */
    const char *file_name;    /* file the CLI writes, e.g. "booster_pump.csv" */
    const char *summary;      /* one line for `eigenlog demo --help` */
    const char *truth;        /* one line: the true eigenvalues and stability */
} el_demo_info;

/* Number of demo scenarios, and the i-th one (NULL when i is out of range).
 * Static data; can't fail. */
size_t el_demo_count(void);
const el_demo_info *el_demo_get(size_t i);

/* Looks a scenario up by name; NULL when there is none (or name is NULL). */
const el_demo_info *el_demo_find(const char *name);

/* Simulates the scenario and appends its whole CSV text to *csv. The
 * output is byte-for-byte the same on every run and machine (fixed seed,
 * fixed formatting). EL_ERR_USAGE for an unknown name (hint lists the
 * names); EL_ERR_NOMEM; EL_ERR_NUMERIC if the discretisation fails. */
el_status el_demo_generate(const char *name, el_buf *csv, el_error *err);

/* The true system behind a scenario, for tests and documentation. The
 * logged channels are the states: row k holds
 *   y[k] = operating_point + x[k] + v[k],  v[k] ~ N(0, diag(sensor_sd^2)),
 *   x[0] = x0,  x[k+1] = Ad x[k] + w[k],  w[k] ~ N(0, Qd),
 * with (Ad, Qd) the exact discretisation over dt_s of dx/dt = A x + noise
 * of intensity Q (el_discretise), each y rounded to decimals[i] places.
 * A drifting scenario (a_end != NULL) cuts the rows into drift_segments
 * equal segments; segment s runs with A = a + (a_end - a) (s + 0.5) /
 * drift_segments (A at the segment's middle, discretised afresh), so A
 * moves in a straight line from a to a_end over the log; lambda_* are then
 * the eigenvalues of a and lambda_*_end those of a_end.
 * All arrays are static, n x n ones column-major. */
typedef struct {
    size_t n;                        /* states = logged channels */
    const char *const *channels;     /* n channel names with units */
    const char *time_column;         /* name of the time column */
    const double *a;                 /* continuous A, 1/s */
    const double *q;                 /* continuous noise intensity Q */
    const double *x0;                /* initial deviation (row 0) */
    const double *operating_point;   /* n values in channel units */
    const double *sensor_sd;         /* n sensor noise standard deviations */
    const int *decimals;             /* n decimal places written */
    const double *lambda_re;         /* n true eigenvalues of A (1/s), */
    const double *lambda_im;         /*   least damped first, + before - */
    double dt_s;                     /* sample interval */
    size_t rows;                     /* data rows written */
    uint64_t seed;                   /* el_rng seed (stream 0) */
    const double *a_end;             /* NULL: A is constant */
    size_t drift_segments;           /* segments of constant A (a_end only) */
    const double *lambda_re_end;     /* eigenvalues of a_end (a_end only) */
    const double *lambda_im_end;
} el_demo_system;

/* The sampled map the simulation of sys uses over drift segment segment
 * (0 for a constant A): ad = Ad and, when g != NULL, g = G with G G' = Qd,
 * both n x n column-major, rounded to 40 significant bits as the
 * simulation rounds them. EL_ERR_NUMERIC when the discretisation fails,
 * EL_ERR_INTERNAL for more than 4 states. */
el_status el_demo_segment_map(const el_demo_system *sys, size_t segment, double *ad,
                              double *g, el_error *err);

/* The system of a scenario by name; NULL when there is none. */
const el_demo_system *el_demo_system_find(const char *name);

#endif
