/* Unit tests for the decimal module: sw_decimal_parse against the C
 * library's strtod, which glibc rounds correctly (to nearest, ties to
 * even), bit for bit.
 *
 * The tests never call setlocale, so strtod reads '.' as the separator
 * (the "C" locale), as the program does. */
#include "testutil.h"

#include <float.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/decimal.h"

/* Bits of a double, to compare exactly (and tell -0.0 from 0.0). */
static uint64_t bits(double x)
{
    uint64_t u;
    memcpy(&u, &x, sizeof u);
    return u;
}

/* The reference: strtod on the text with ',' read as '.', blanks
 * stripped.  Returns 0 and the value when strtod reads the whole text,
 * -1 otherwise. */
static int reference(const char *text, double *value)
{
    char *copy = strdup(text), *end, *p = copy, *q;

    assert_non_null(copy);
    for (q = copy; *q != '\0'; q++)
        if (*q == ',')
            *q = '.';
    while (*p == ' ' || *p == '\t')
        p++;
    q = p + strlen(p);
    while (q > p && (q[-1] == ' ' || q[-1] == '\t'))
        *--q = '\0';
    *value = strtod(p, &end);
    if (end == p || *end != '\0') {
        free(copy);
        return -1;
    }
    free(copy);
    return 0;
}

/* Parse `text` (with `allow_comma`) and require exactly the value strtod
 * gives; a magnitude that overflows to infinity must be refused as such
 * (status 1, decimal.h). */
static void check_against_strtod(const char *text, int allow_comma)
{
    double want, got = -12345.678;
    int status = sw_decimal_parse(text, strlen(text), allow_comma, &got);

    assert_int_equal(reference(text, &want), 0);
    if (isinf(want)) {
        if (status != 1) {
            print_error("'%s' overflows but gave status %d (%.17g)\n", text,
                        status, got);
            fail();
        }
        assert_true(bits(got) == bits(-12345.678));
        return;
    }
    if (status != 0 || bits(got) != bits(want)) {
        print_error("'%s': status %d, got %.17g (%a), strtod %.17g (%a)\n",
                    text, status, got, got, want, want);
        fail();
    }
}

static double parse_ok(const char *text, int allow_comma)
{
    double v = NAN;

    if (sw_decimal_parse(text, strlen(text), allow_comma, &v) != 0) {
        print_error("'%s' was refused\n", text);
        fail();
    }
    return v;
}

static void expect_reject(const char *text, int allow_comma)
{
    double v = 2.385;

    if (sw_decimal_parse(text, strlen(text), allow_comma, &v) != -1) {
        print_error("'%s' was accepted as %.17g\n", text, v);
        fail();
    }
    assert_true(bits(v) == bits(2.385));
}

static void test_accepted_forms(void **state)
{
    (void)state;
    /* decimal.h: blanks, sign, separator, exponent */
    assert_true(bits(parse_ok("  -12.5  ", 0)) == bits(-12.5));
    assert_true(bits(parse_ok(".5", 0)) == bits(0.5));
    assert_true(bits(parse_ok("5.", 0)) == bits(5.0));
    assert_true(bits(parse_ok("1e-3", 0)) == bits(1e-3));
    assert_true(bits(parse_ok("+3.25E+2", 0)) == bits(325.0));
    assert_true(bits(parse_ok("\t13.7\t", 0)) == bits(13.7));
    assert_true(bits(parse_ok("1,25", 1)) == bits(1.25));
    assert_true(bits(parse_ok("-0,0735e3", 1)) == bits(-73.5));
    assert_true(bits(parse_ok("2.385", 1)) == bits(2.385));
    assert_true(bits(parse_ok("007.50", 0)) == bits(7.5));
    assert_true(bits(parse_ok("-0", 0)) == bits(-0.0));
    assert_true(bits(parse_ok("0.000e-999999999999", 0)) == bits(0.0));
    /* only len bytes are read */
    {
        double v = 0.0;
        assert_int_equal(sw_decimal_parse("12.75xyz", 5, 0, &v), 0);
        assert_true(bits(v) == bits(12.75));
    }
}

static void test_rejects(void **state)
{
    static const char *const texts[] = {
        "12.3.4", "1e", "+", ".", "12 3", "0x10", "inf", "nan", "-inf",
        "NaN", "infinity", "", "   ", "1e+", "e5", "--1", "+-1", "1e5.5",
        "1_000", "1'000", "12m", "1.5 m", "- 1", "1e 5", ".e1", "1,25",
        "1.2e3e4", "0x1p3", "\xef\xbc\x91",
    };

    (void)state;
    for (size_t i = 0; i < sizeof texts / sizeof texts[0]; i++)
        expect_reject(texts[i], 0);
    /* with the decimal comma: still one separator only */
    expect_reject("1,2,3", 1);
    expect_reject("1.234,5", 1);
    expect_reject("1,", 0);
    expect_reject(",", 1);
    /* a NULL text of length 0 */
    {
        double v = 2.385;
        assert_int_equal(sw_decimal_parse(NULL, 0, 0, &v), -1);
    }
}

static void test_edge_cases(void **state)
{
    static const char *const texts[] = {
        /* 2^53 and 2^53 + 1 (a tie, to even: 2^53) and 2^53 + 3 */
        "9007199254740992", "9007199254740993", "9007199254740995",
        /* the fast path's edges: 10^22 is exact, 10^23 is not */
        "1e22", "1e23", "9007199254740991e22", "9007199254740993e22",
        "123456789e30", "1e37", "1e38",
        /* classic decimal fractions */
        "0.1", "0.2", "0.3", "2.385", "13.7", "1e-22", "3e-23",
        /* 19 and 20 significant digits */
        "1234567890123456789", "12345678901234567890", "0.1234567890123456789",
        "18446744073709551615", "18446744073709551616",
        /* the largest and smallest normal, subnormals, underflow */
        "1.7976931348623157e308", "1.7976931348623158e308",
        "2.2250738585072014e-308", "2.2250738585072011e-308",
        "4.9406564584124654e-324", "2.4703282292062328e-324",
        "2.4703282292062327e-324", "1e-400", "-1e-400",
        /* halfway between 0.5 and the next double, 0.5 + 2^-54 exactly
         * (a tie, to even: 0.5), just below it, and just above it */
        "9007199254740993.000000000000000000000000000000000000000000000001",
        "0.500000000000000055511151231257827021181583404541015625",
        "0.5000000000000000555111512312578270211815834045410156249",
        "0.5000000000000000555111512312578270211815834045410156251",
        /* overflow: refused (decimal.c: no infinite levels) */
        "1e309", "-1.8e308", "1e999999999999",
    };

    (void)state;
    for (size_t i = 0; i < sizeof texts / sizeof texts[0]; i++)
        check_against_strtod(texts[i], 0);
    /* IEEE 754 binary64: 2^53 + 1 rounds to 2^53 (ties to even) */
    assert_true(bits(parse_ok("9007199254740993", 0)) == bits(9007199254740992.0));
    /* IEEE 754 binary64: 0.5 + 2^-54 is a tie between 0.5 and 0.5 + 2^-53
     * and goes to the even one; a hair above, it goes up */
    assert_true(bits(parse_ok("0.500000000000000055511151231257827021181583"
                              "404541015625", 0)) == bits(0.5));
    assert_true(bits(parse_ok("0.500000000000000055511151231257827021181583"
                              "4045410156251", 0)) == bits(0.5 + 0x1p-53));
    /* IEEE 754 binary64: the smallest subnormal is 2^-1074 */
    assert_true(bits(parse_ok("4.9406564584124654e-324", 0))
                == bits(DBL_TRUE_MIN));
    /* a number beyond DBL_MAX: status 1, not -1 (not a number) */
    {
        double v = 2.385;
        assert_int_equal(sw_decimal_parse("1e309", 5, 0, &v), 1);
        assert_int_equal(sw_decimal_parse("-1,8e308", 8, 1, &v), 1);
        assert_true(bits(v) == bits(2.385));
    }
}

/* Numbers longer than the 768 digits the canonical copy keeps: the digits
 * beyond decide only through the sticky digit. */
static void test_long_numbers(void **state)
{
    char buf[2100];

    (void)state;
    /* 2^53 + 1 (halfway) then 1500 zeros and a final 1: above the tie,
     * rounds up to 2^53 + 2 */
    strcpy(buf, "9007199254740993.");
    memset(buf + 17, '0', 1500);
    strcpy(buf + 17 + 1500, "1");
    check_against_strtod(buf, 0);
    assert_true(bits(parse_ok(buf, 0)) == bits(9007199254740994.0));
    /* the same without the final 1: the tie, rounds to even */
    buf[17 + 1500] = '\0';
    check_against_strtod(buf, 0);
    assert_true(bits(parse_ok(buf, 0)) == bits(9007199254740992.0));
    /* 2000 digits of 9 after the point, with a decimal comma */
    strcpy(buf, "0,");
    memset(buf + 2, '9', 2000);
    buf[2002] = '\0';
    check_against_strtod(buf, 1);
    /* 1000 leading zeros, then digits */
    memset(buf, '0', 1000);
    strcpy(buf + 1000, "2.3850000000000000000000000000001e-5");
    check_against_strtod(buf, 0);
}

/* Ties between two neighbouring doubles, written out in full (up to 767
 * significant digits), then nudged a hair above by a 1 far beyond the
 * 768 digits the canonical copy keeps, or rounded to 61 significant
 * digits (a hair off the tie, on either side): the cases that decide
 * whether the sticky digit is right.  The exact
 * midpoint has 54 significant bits, so it is a long double wherever that
 * type has at least 54 bits (x86 extended, binary128); and glibc's printf
 * writes the decimal expansion exactly. */
static void test_halfway_cases(void **state)
{
#if LDBL_MANT_DIG >= 54
    uint64_t s = UINT64_C(0x1234567);
    static char buf[2400];

    (void)state;
    for (int i = 0; i < 3000; i++) {
        uint64_t b;
        double x, up;
        long double mid;
        int len;

        b = (s = s * UINT64_C(6364136223846793005) + 1) >> 1;
        b &= ~(UINT64_C(1) << 63);
        if (i % 4 == 0)
            b &= UINT64_C(0x000fffffffffffff); /* subnormal */
        memcpy(&x, &b, sizeof x);
        up = nextafter(x, INFINITY);
        if (!isfinite(x) || !isfinite(up))
            continue;
        mid = ((long double)x + (long double)up) / 2;
        len = snprintf(buf, sizeof buf, "%.800Le", mid);
        assert_true(len > 0 && len < 1000);
        check_against_strtod(buf, 0);
        /* a hair above: digits zero up to place 1500, then a 1 */
        {
            char *e = strchr(buf, 'e');
            char exp_part[16];
            size_t at;
            snprintf(exp_part, sizeof exp_part, "%s", e);
            at = (size_t)(e - buf);
            memset(buf + at, '0', 1500 - at);
            snprintf(buf + 1500, sizeof buf - 1500, "1%s", exp_part);
            check_against_strtod(buf, 0);
            /* a hair off: the tie rounded to 61 significant digits */
            len = snprintf(buf, sizeof buf, "%.60Le", mid);
            check_against_strtod(buf, 0);
        }
    }
#else
    (void)state;
    skip();
#endif
}

/* A small deterministic generator (64-bit LCG, Knuth's MMIX constants). */
static uint64_t next(uint64_t *s)
{
    *s = *s * UINT64_C(6364136223846793005) + UINT64_C(1442695040888963407);
    return *s >> 17;
}

/* One random text of a varied shape: level-like readings, long mantissas,
 * wide exponents, leading and trailing zeros, signs, blanks, a decimal
 * comma, and printf round trips of random doubles. */
static void random_text(uint64_t *s, char *buf, size_t n, int *comma)
{
    size_t k = 0;
    unsigned shape = (unsigned)(next(s) % 6);
    unsigned n_int, n_frac;

    *comma = 0;
    if (shape == 5) {
        /* a random double printed with 6 to 17 digits */
        double x;
        uint64_t b = next(s) << 17 ^ next(s);
        memcpy(&x, &b, sizeof x);
        if (!isfinite(x))
            x = 1.0;
        snprintf(buf, n, "%.*g", 6 + (int)(next(s) % 12), x);
        return;
    }
    if (next(s) % 8 == 0)
        buf[k++] = ' ';
    if (next(s) % 3 == 0)
        buf[k++] = next(s) % 2 ? '-' : '+';
    n_int = (unsigned)(next(s) % (shape == 3 ? 40 : 8));
    n_frac = (unsigned)(next(s) % (shape == 3 ? 40 : shape == 0 ? 4 : 20));
    if (n_int + n_frac == 0)
        n_int = 1;
    if (shape == 4 && next(s) % 2)
        for (unsigned i = (unsigned)(next(s) % 12); i > 0; i--)
            buf[k++] = '0';
    for (unsigned i = 0; i < n_int; i++)
        buf[k++] = (char)('0' + next(s) % 10);
    if (n_frac > 0 || next(s) % 4 == 0) {
        *comma = next(s) % 4 == 0;
        buf[k++] = *comma ? ',' : '.';
    }
    for (unsigned i = 0; i < n_frac; i++)
        buf[k++] = (char)('0' + (shape == 4 && next(s) % 2 ? 0 : next(s) % 10));
    if (shape >= 1 && next(s) % 2) {
        int e;
        buf[k++] = next(s) % 2 ? 'e' : 'E';
        if (next(s) % 3 == 0)
            buf[k++] = next(s) % 2 ? '-' : '+';
        e = (int)(next(s) % (shape == 2 ? 340 : 25));
        k += (size_t)snprintf(buf + k, n - k, "%d", e);
    }
    if (next(s) % 8 == 0)
        buf[k++] = '\t';
    buf[k] = '\0';
}

static void test_random_against_strtod(void **state)
{
    uint64_t s = UINT64_C(20250101);
    char buf[160];

    (void)state;
    for (long i = 0; i < 1000000; i++) {
        int comma;
        random_text(&s, buf, sizeof buf, &comma);
        check_against_strtod(buf, comma);
        /* without allow_comma, a comma makes it not a number */
        if (comma)
            expect_reject(buf, 0);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_accepted_forms),
        cmocka_unit_test(test_rejects),
        cmocka_unit_test(test_edge_cases),
        cmocka_unit_test(test_long_numbers),
        cmocka_unit_test(test_halfway_cases),
        cmocka_unit_test(test_random_against_strtod),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
