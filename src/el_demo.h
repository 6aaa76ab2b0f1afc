/* el_demo: invented demo scenarios simulated by exact discretisation of a
 * known linear system with a fixed seed, written as CSV logs, so their true
 * dynamics are known (datasets/README.md documents them). */
#ifndef EL_DEMO_H
#define EL_DEMO_H

#include <stddef.h>

#include "el_error.h"
#include "el_io.h"

typedef struct {
    const char *name;         /* short name used on the command line */
    const char *file_name;    /* file written by el_demo_write, e.g. "booster_pump.csv" */
    const char *summary;      /* one line for `eigenlog demo --help` */
    const char *truth;        /* one line: the true eigenvalues and stability */
} el_demo_info;

/* Number of demo scenarios, and the i-th one (NULL when i is out of range). */
size_t el_demo_count(void);
const el_demo_info *el_demo_get(size_t i);

/* Looks a scenario up by name; NULL when there is none. */
const el_demo_info *el_demo_find(const char *name);

/* Simulates the scenario and appends its whole CSV text to *csv. The
 * output is byte-for-byte the same on every run and machine (fixed seed,
 * fixed formatting). EL_ERR_USAGE for an unknown name (hint lists the
 * names); EL_ERR_NOMEM; EL_ERR_NUMERIC if the discretisation fails. */
el_status el_demo_generate(const char *name, el_buf *csv, el_error *err);

#endif
