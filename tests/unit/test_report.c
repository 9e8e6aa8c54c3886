/* Unit tests of the CSV row writers' numbers (src/report.c) against the C
 * library's printf: every number a step row shows must be the text
 * printf's "%.4f" or "%.2f" gives (ISO C 7.21.6.1: the value correctly
 * rounded, which glibc does exactly, ties to even on the binary value),
 * since rows are written by hand for speed; the one difference by design
 * is that a zero result is written without a sign (printf: "-0.0000"). */
#include "testutil.h"

#include <string.h>

#include <gsl/gsl_rng.h>

#include "sillwatch/report.h"

/* printf's "%.<digits>f" of x, less the sign of a zero result. */
static void ref_fixed(char *buf, size_t n, int digits, double x)
{
    snprintf(buf, n, "%.*f", digits, x);
    if (buf[0] == '-' && strspn(buf + 1, "0.") == strlen(buf + 1))
        memmove(buf, buf + 1, strlen(buf));
}

/* sw_report_levels_text(hw, tw) against "%.4f,%.4f". */
static void check_levels(double hw, double tw)
{
    char got[SW_REPORT_LEVELS_MAX + 1], want[700], a[340], b[340];
    *sw_report_levels_text(got, hw, tw) = '\0';
    ref_fixed(a, sizeof a, 4, hw);
    ref_fixed(b, sizeof b, 4, tw);
    snprintf(want, sizeof want, "%s,%s", a, b);
    if (strcmp(got, want) != 0)
        print_error("levels %.17g %.17g: got %s, want %s\n", hw, tw, got,
                    want);
    assert_string_equal(got, want);
}

/* sw_report_step_values against printf's text of the same figures. */
static void check_values(double net, double fs, double sill, double crit)
{
    sw_step_figures f = {1.0, 2.0, net, fs, sill, SW_STATE_LOW};
    sw_crit alarm = {SW_CRIT_LEVEL, crit};
    sw_crit open = {SW_CRIT_NOT_NEEDED, 0.0};
    char got[SW_REPORT_VALUES_MAX + 1], want[1800], t[4][340];
    *sw_report_step_values(got, &f, &alarm, &open) = '\0';
    ref_fixed(t[0], sizeof t[0], 2, net);
    if (isinf(fs))
        snprintf(t[1], sizeof t[1], "%s", fs > 0 ? "inf" : "-inf");
    else
        ref_fixed(t[1], sizeof t[1], 4, fs);
    ref_fixed(t[2], sizeof t[2], 2, sill);
    ref_fixed(t[3], sizeof t[3], 4, crit);
    snprintf(want, sizeof want, ",%s,%s,%s,low,%s,\n", t[0], t[1], t[2],
             t[3]);
    assert_string_equal(got, want);
}

/* A double from random bits with an exponent in [lo, hi] (powers of 2). */
static double random_double(gsl_rng *rng, int lo, int hi)
{
    double m = 1.0 + gsl_rng_uniform(rng);
    int e = lo + (int)gsl_rng_uniform_int(rng, (unsigned long)(hi - lo + 1));
    double x = ldexp(m, e);
    return gsl_rng_uniform(rng) < 0.5 ? -x : x;
}

/* Hand-picked values: zeros of both signs, values that round to a
 * negative zero,
 * exact ties in binary (0.5 units of the last place: 0.00005 is not one,
 * 0.125 at two decimals is), carries across the point, the largest
 * handled by hand (below 1e11) and beyond, where snprintf takes over. */
static void test_picked_values(void **state)
{
    static const double v[] = {0.0,         -0.0,        0.00004,
                               -0.00004,    0.00005,     -0.00005,
                               0.125,       -0.125,      0.375,
                               2.5,         9.99995,     9.999949999,
                               99.995,      0.99995,     1e-300,
                               -1e-300,     4.9e-324,    123456789.5,
                               99999999999.9999, 1e11,   -1e11,
                               1.5e15,      -9.87654321e17, 1e300,
                               4294967295.0, 4294967296.0, 42949672.955,
                               11.3980,     11.4010,     -0.0049,
                               0.005,       0.015,       0.025};
    (void)state;
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) {
        check_levels(v[i], -v[i]);
        check_values(v[i], v[i], -v[i], v[i]);
    }
    check_values(1.0, INFINITY, 2.0, 3.0);
    check_values(1.0, -INFINITY, 2.0, 3.0);
}

/* 400,000 random doubles over the magnitudes levels, moments and
 * reactions take (2^-20 to 2^40), and on a 1e-5 grid around ties. */
static void test_random_values(void **state)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    (void)state;
    gsl_rng_set(rng, 20261203);
    for (int i = 0; i < 100000; i++) {
        check_levels(random_double(rng, -20, 40), random_double(rng, -8, 12));
        check_values(random_double(rng, -10, 36), random_double(rng, -6, 8),
                     random_double(rng, -10, 30), random_double(rng, 0, 8));
        /* decimal fractions at or next to half a unit */
        double k = (double)gsl_rng_uniform_int(rng, 200000000) - 1e8;
        check_levels(k * 0.00005, (k + 0.5) * 0.0001);
        check_values(k * 0.005, k * 0.00005, (k + 0.5) * 0.01, k * 1e-4);
    }
    gsl_rng_free(rng);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_picked_values),
        cmocka_unit_test(test_random_values),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
