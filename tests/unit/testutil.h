/* Shared helpers for the cmocka unit tests. */
#ifndef SW_TESTUTIL_H
#define SW_TESTUTIL_H

#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>

/* cmocka 1.1.5's assert_float_equal casts to float: compare doubles with an
 * explicit relative tolerance (absolute near zero) and say what differed. */
static inline void sw_assert_close_impl(double got, double want, double rtol,
                                        double atol, const char *expr,
                                        const char *file, int line)
{
    double diff = fabs(got - want);
    double bound = fmax(atol, rtol * fabs(want));
    if (!(diff <= bound) || isnan(got) != isnan(want)) {
        print_error("%s = %.17g, expected %.17g (|diff| %.3g > %.3g)\n",
                    expr, got, want, diff, bound);
        _fail(file, line);
    }
}

#define assert_close(got, want, rtol) \
    sw_assert_close_impl((got), (want), (rtol), 0.0, #got, __FILE__, __LINE__)
#define assert_close_abs(got, want, atol) \
    sw_assert_close_impl((got), (want), 0.0, (atol), #got, __FILE__, __LINE__)

#endif
