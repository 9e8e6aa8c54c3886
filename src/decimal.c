/* sillwatch: exact and fast decimal number parsing (see
 * include/sillwatch/decimal.h).
 *
 * One pass checks the syntax and gathers up to 19 significant digits into
 * an integer.  When that integer and the power of ten are both exact as
 * doubles, one IEEE multiplication or division gives the correctly rounded
 * result (Clinger's fast path).  Everything else is handed to strtod on a
 * canonical copy of the number, "[-]DIGITSeEXP" without a separator.
 *
 * strtod depends on the locale (LC_NUMERIC sets the separator it reads).
 * The program never calls setlocale, so the "C" locale is in force; and
 * the canonical copy has no separator at all, only digits, a sign and an
 * exponent, which every locale reads alike.
 *
 * Magnitudes beyond DBL_MAX (strtod's HUGE_VAL) are reported as not a
 * number: an infinite level is never a reading.  Underflow to a subnormal
 * or to zero is returned as strtod gives it.
 */
#include "sillwatch/decimal.h"

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

/* Significant digits a correctly rounded conversion to double can need.
 * A number halfway between two doubles has at most 767 significant
 * decimal digits, so keeping 768 digits and replacing the rest by one
 * nonzero "sticky" digit (when any of them was nonzero) never changes on
 * which side of such a halfway point the number lies (Lemire 2021, "Number
 * parsing at a gigabyte per second", Software: Practice and Experience
 * 51(8)). */
#define KEEP_DIGITS 768

/* Explicit exponents are saturated here: beyond it every number with at
 * most a few million digits is either zero or out of range anyway. */
#define EXP_SATURATE 100000000L

/* Clinger's fast path needs each double operation to round once, to
 * double precision; with excess precision (x87) it is not exact. */
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
#define FAST_PATH_OK 1
#else
#define FAST_PATH_OK 0
#endif

/* 10^0 .. 10^22: every one is exactly representable as a double, since
 * 10^22 = 2^22 * 5^22 and 5^22 < 2^53 (Clinger 1990). */
static const double exact_pow10[23] = {
    1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
    1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

/* What the syntax pass found. */
typedef struct scanned {
    const char *begin;   /* first digit or separator of the significand */
    const char *end;     /* one past the significand */
    int negative;
    int n_sig;           /* significant digits seen (leading zeros skip) */
    uint64_t mantissa;   /* the first min(n_sig, 19) of them */
    long frac_digits;    /* digits after the separator, all of them */
    long exp10;          /* explicit exponent, saturated */
} scanned;

static int is_blank(char c)
{
    return c == ' ' || c == '\t';
}

static int is_digit(char c)
{
    return (unsigned)((unsigned char)c - '0') <= 9u;
}

/* Check the syntax of text[0..len) and gather the significand.  Returns 0,
 * or -1 if the text is not a number of the accepted form. */
static int scan_number(const char *p, const char *end, int allow_comma,
                       scanned *s)
{
    long n_digits = 0, exp_value = 0;
    int seen_sep = 0, exp_negative = 0;

    while (p < end && is_blank(*p))
        p++;
    while (end > p && is_blank(end[-1]))
        end--;
    s->negative = 0;
    if (p < end && (*p == '+' || *p == '-')) {
        s->negative = *p == '-';
        p++;
    }
    s->begin = p;
    s->n_sig = 0;
    s->mantissa = 0;
    s->frac_digits = 0;
    for (; p < end; p++) {
        char c = *p;
        if (is_digit(c)) {
            unsigned d = (unsigned)(c - '0');
            n_digits++;
            if (seen_sep)
                s->frac_digits++;
            if (s->n_sig > 0 || d != 0) {
                if (s->n_sig < 19)
                    s->mantissa = s->mantissa * 10u + d;
                if (s->n_sig < INT32_MAX)
                    s->n_sig++;
            }
        } else if (c == '.' || (c == ',' && allow_comma)) {
            if (seen_sep)
                return -1;
            seen_sep = 1;
        } else {
            break;
        }
    }
    if (n_digits == 0)
        return -1;
    s->end = p;
    s->exp10 = 0;
    if (p < end && (*p == 'e' || *p == 'E')) {
        p++;
        if (p < end && (*p == '+' || *p == '-')) {
            exp_negative = *p == '-';
            p++;
        }
        if (p == end || !is_digit(*p))
            return -1;
        for (; p < end && is_digit(*p); p++)
            if (exp_value < EXP_SATURATE)
                exp_value = exp_value * 10 + (*p - '0');
        s->exp10 = exp_negative ? -exp_value : exp_value;
    }
    return p == end ? 0 : -1;
}

/* Clinger's fast path: m * 10^e with m <= 2^53 exact and |e| <= 22, or a
 * larger e whose surplus over 22 can be moved into m without m leaving
 * the exact range.  Returns 1 and stores the correctly rounded value, or
 * 0 when the path does not apply. */
static int fast_path(uint64_t m, long e, double *value)
{
    const uint64_t exact_max = UINT64_C(1) << 53;

    if (!FAST_PATH_OK || m > exact_max)
        return 0;
    if (e >= 0 && e <= 22) {
        *value = (double)m * exact_pow10[e];
        return 1;
    }
    if (e < 0 && e >= -22) {
        *value = (double)m / exact_pow10[-e];
        return 1;
    }
    if (e > 22 && e <= 22 + 15) {
        for (; e > 22; e--) {
            m *= 10u;
            if (m > exact_max)
                return 0;
        }
        *value = (double)m * exact_pow10[22];
        return 1;
    }
    return 0;
}

/* Write the canonical form of the scanned number, "[-]DIGITSeEXP" with at
 * most KEEP_DIGITS + 1 digits, into buf (which holds KEEP_DIGITS + 32
 * bytes), NUL-terminated. */
static void canonical(const scanned *s, char *buf)
{
    char *w = buf;
    long kept = 0, dropped = 0;
    int sticky = 0, started = 0;
    long exp10 = s->exp10 - s->frac_digits;

    if (s->negative)
        *w++ = '-';
    for (const char *p = s->begin; p < s->end; p++) {
        if (!is_digit(*p))
            continue;
        if (!started && *p == '0')
            continue;
        started = 1;
        if (kept < KEEP_DIGITS) {
            *w++ = *p;
            kept++;
        } else {
            dropped++;
            if (*p != '0')
                sticky = 1;
        }
    }
    if (kept == 0)
        *w++ = '0';
    exp10 += dropped;
    if (sticky) {
        *w++ = '1';
        exp10--;
    }
    /* exp10 is bounded by EXP_SATURATE plus the number of digits; print
     * it by hand to keep this file free of stdio. */
    *w++ = 'e';
    if (exp10 < 0) {
        *w++ = '-';
        exp10 = -exp10;
    }
    {
        char tmp[24];
        int n = 0;
        do {
            tmp[n++] = (char)('0' + exp10 % 10);
            exp10 /= 10;
        } while (exp10 > 0 && n < (int)sizeof tmp);
        while (n > 0)
            *w++ = tmp[--n];
    }
    *w = '\0';
}

/* The shape nearly every level in a log has: an optional '-', at most 15
 * digits in all, one separator, nothing else (no blanks, no exponent).
 * Then the digits fit a double exactly and so does 10^(digits after the
 * separator), and one correctly rounded division gives the nearest double
 * (Clinger's fast path, as below).  Returns 0 and stores the value, or -1
 * to leave the text to the general path. */
static int plain_level(const char *p, const char *end, int allow_comma,
                       double *out)
{
    const char *start;
    uint64_t m = 0;
    int negative = 0;
    long whole, frac = 0;

    /* the same guard as fast_path(): with excess precision (x87) the
     * division below would round twice */
    if (!FAST_PATH_OK)
        return -1;
    if (p < end && *p == '-') {
        negative = 1;
        p++;
    }
    /* the digits before the separator, then those after it: two tight
     * loops rather than one that asks at each digit which side it is on */
    start = p;
    for (; p < end && (unsigned)(unsigned char)*p - '0' <= 9u; p++)
        m = m * 10 + ((unsigned)(unsigned char)*p - '0');
    whole = p - start;
    if (p < end && (*p == '.' || (*p == ',' && allow_comma))) {
        start = ++p;
        for (; p < end && (unsigned)(unsigned char)*p - '0' <= 9u; p++)
            m = m * 10 + ((unsigned)(unsigned char)*p - '0');
        frac = p - start;
        if (frac == 0)
            return -1;
    }
    if (p != end || whole + frac == 0 || whole + frac > 15)
        return -1;
    double v = frac > 0 ? (double)m / exact_pow10[frac] : (double)m;
    *out = negative ? -v : v;
    return 0;
}

/* Everything plain_level() leaves: kept out of line, so that the short
 * path, taken at every field of a level file, sets up neither this one's
 * digit buffer nor the registers it saves (measured: about 10 fewer
 * instructions a field). */
static int parse_general(const char *text, size_t len, int allow_comma,
                         double *out)
#if defined(__GNUC__)
    __attribute__((noinline))
#endif
    ;

static int parse_general(const char *text, size_t len, int allow_comma,
                         double *out)
{
    scanned s;
    double value;

    if (text == NULL || scan_number(text, text + len, allow_comma, &s) != 0)
        return -1;
    if (s.n_sig == 0) {
        *out = s.negative ? -0.0 : 0.0;
        return 0;
    }
    if (s.n_sig <= 19) {
        /* The exponent of the last gathered digit: the explicit one less
         * the digits after the separator. */
        if (fast_path(s.mantissa, s.exp10 - s.frac_digits, &value)) {
            *out = s.negative ? -value : value;
            return 0;
        }
    }
    {
        char buf[KEEP_DIGITS + 32];
        char *end;

        canonical(&s, buf);
        /* The "C" locale holds (see the top of the file), and the copy has
         * no separator, so strtod reads it the same in any locale. */
        value = strtod(buf, &end);
        if (*end != '\0')
            return -1;
        /* A magnitude beyond DBL_MAX is a number but no usable level:
         * strtod's HUGE_VAL is reported, not stored. */
        if (isinf(value))
            return 1;
    }
    *out = value;
    return 0;
}

int sw_decimal_parse(const char *text, size_t len, int allow_comma,
                     double *out)
{
    if (text != NULL && len > 0 && len <= 17 &&
        plain_level(text, text + len, allow_comma, out) == 0)
        return 0;
    return parse_general(text, len, allow_comma, out);
}
