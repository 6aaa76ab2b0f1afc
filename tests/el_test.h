/* el_test: shared helpers for the cmocka tests (cmocka 1.1.5 has no double
 * comparison, see ../shared/STYLE.md). Include this instead of cmocka.h. */
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

#endif
