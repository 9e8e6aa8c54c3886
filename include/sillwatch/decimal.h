/* sillwatch: exact and fast decimal number parsing for level files. */
#ifndef SILLWATCH_DECIMAL_H
#define SILLWATCH_DECIMAL_H

#include <stddef.h>

/* Parse the decimal number in text[0..len): optional blanks, an optional
 * sign, digits with an optional decimal separator ('.' always; ',' too when
 * `allow_comma` is nonzero) and an optional exponent (e/E, sign, digits),
 * optional trailing blanks.  No hex, no "inf"/"nan" (the caller handles
 * missing-value tokens before calling).  The result is correctly rounded
 * (the nearest double, as strtod gives): a fast exact path handles up to
 * 19 significant digits with a power of ten within 10^22 (Clinger 1990,
 * "How to read floating point numbers accurately", PLDI), and everything
 * else falls back to strtod.  Returns 0 and stores the value; 1 if the
 * text is such a number but its magnitude is beyond the largest double
 * ("1e400"); -1 if the text is not such a number.  On 1 and -1 the value is
 * untouched. */
int sw_decimal_parse(const char *text, size_t len, int allow_comma,
                     double *out);

#endif
