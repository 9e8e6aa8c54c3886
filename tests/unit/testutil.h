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
#include <stdlib.h>

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

/* A scratch folder for a test program's files, made by sw_test_mkdir
 * (a cmocka group setup) and removed with its contents by sw_test_rmdir
 * (the group teardown). */
static inline char *sw_test_dir(void)
{
    static char dir[64];
    return dir;
}

static inline int sw_test_mkdir(void **state)
{
    (void)state;
    snprintf(sw_test_dir(), 64, "/tmp/sw-test-XXXXXX");
    return mkdtemp(sw_test_dir()) == NULL ? -1 : 0;
}

static inline int sw_test_rmdir(void **state)
{
    char cmd[128];
    (void)state;
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", sw_test_dir());
    return system(cmd) == 0 ? 0 : -1;
}

/* Write `text` to the file `name` in the scratch folder. */
static inline void sw_test_write(const char *name, const char *text)
{
    char path[128];
    snprintf(path, sizeof path, "%s/%s", sw_test_dir(), name);
    FILE *fp = fopen(path, "w");
    assert_non_null(fp);
    fputs(text, fp);
    fclose(fp);
}

#endif
