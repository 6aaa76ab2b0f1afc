/* el_test: shared helpers for the cmocka tests (cmocka 1.1.5 has no double
 * comparison: assert_float_equal compares as float). Include this instead of cmocka.h. */
#ifndef EL_TEST_H
#define EL_TEST_H

#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>

/* Passes when |got - want| <= atol + rtol * |want|. NaN or Inf in got fails
 * unless want is the same non-finite value. Prints both with %.17g. */
#define assert_close(got, want, rtol, atol) \
    el_test_assert_close((got), (want), (rtol), (atol), #got, __FILE__, __LINE__)

static inline void el_test_assert_close(double got, double want, double rtol,
                                        double atol, const char *expr,
                                        const char *file, int line)
{
    int ok;
    if (isnan(want))
        ok = isnan(got);
    else if (isinf(want))
        ok = got == want;
    else
        ok = isfinite(got) && fabs(got - want) <= atol + rtol * fabs(want);
    if (!ok) {
        print_error("%s:%d: %s = %.17g, want %.17g (rtol %.3g, atol %.3g, diff %.3g)\n",
                    file, line, expr, got, want, rtol, atol, got - want);
        _fail(file, line);
    }
}

/* Array version: reports the first index that fails. */
#define assert_close_array(got, want, n, rtol, atol) \
    el_test_assert_close_array((got), (want), (n), (rtol), (atol), #got, __FILE__, __LINE__)

static inline void el_test_assert_close_array(const double *got, const double *want,
                                              size_t n, double rtol, double atol,
                                              const char *expr, const char *file,
                                              int line)
{
    for (size_t i = 0; i < n; i++) {
        double g = got[i], w = want[i];
        int ok = isfinite(g) && fabs(g - w) <= atol + rtol * fabs(w);
        if (!ok) {
            print_error("%s:%d: %s[%zu] = %.17g, want %.17g (rtol %.3g, atol %.3g)\n",
                        file, line, expr, i, g, w, rtol, atol);
            _fail(file, line);
        }
    }
}

#include <stdlib.h>
#include <string.h>

#include "el_timebase.h"

/* A hand-built series for tests that do not need the ingest and time-base
 * stages: channels named ch1, ch2, ... without units. */
#define EL_TEST_MAX_CH 8
typedef struct {
    el_series s;
    char *names[EL_TEST_MAX_CH];
    char *units[EL_TEST_MAX_CH];
    char name_buf[EL_TEST_MAX_CH][24];
    char empty[1];
} test_series;

/* Takes ownership of values (malloc'd, n * nc, column-major); nc <= 8. */
static inline void ts_init(test_series *t, size_t n, size_t nc, double dt, double *values)
{
    memset(t, 0, sizeof *t);
    for (size_t c = 0; c < nc && c < EL_TEST_MAX_CH; c++) {
        snprintf(t->name_buf[c], sizeof t->name_buf[c], "ch%zu", c + 1);
        t->names[c] = t->name_buf[c];
        t->units[c] = t->empty;
    }
    t->s.n_samples = n;
    t->s.n_channels = nc;
    t->s.dt = dt;
    t->s.values = values;
    t->s.names = t->names;
    t->s.units = t->units;
}

static inline void ts_free(test_series *t)
{
    free(t->s.values);
    t->s.values = NULL;
}

/* A heap-built series the library owns the parts of (freed with
 * el_series_free): n samples of p zeroed channels named y1, y2, ...
 * without units, at step dt. */
static inline void el_test_series_alloc(el_series *s, size_t n, size_t p, double dt)
{
    memset(s, 0, sizeof *s);
    s->n_samples = n;
    s->n_channels = p;
    s->dt = dt;
    s->rows_used = n;
    s->values = calloc(n * p, sizeof(double));
    s->names = calloc(p, sizeof(char *));
    s->units = calloc(p, sizeof(char *));
    s->source_column = calloc(p, sizeof(size_t));
    assert_non_null(s->values);
    assert_non_null(s->names);
    assert_non_null(s->units);
    assert_non_null(s->source_column);
    for (size_t c = 0; c < p; c++) {
        s->names[c] = malloc(24);
        s->units[c] = calloc(1, 1);
        assert_non_null(s->names[c]);
        assert_non_null(s->units[c]);
        snprintf(s->names[c], 24, "y%zu", c + 1);
        s->source_column[c] = c + 1;
    }
}

#endif
