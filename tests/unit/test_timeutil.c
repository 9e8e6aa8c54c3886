/* Unit tests for the timeutil module: calendar, zones, timestamps,
 * formatting, month boundaries and durations.
 *
 * References used below, named beside each check:
 *   - POSIX.1-2017, XBD sec. 4.16 "Seconds Since the Epoch": the formula
 *     from broken-down UTC time to seconds (posix_seconds() below).
 *   - ISO 8601-1:2019: the date-time forms accepted.
 *   - The Gregorian leap-year rule.
 *   - Directive 2000/84/EC: EU summer time begins at 01:00 UTC on the last
 *     Sunday of March and ends at 01:00 UTC on the last Sunday of October.
 *   - POSIX.1-2017, XBD sec. 8.3: the TZ rule forms Jn, n and Mm.w.d.
 *   - RFC 8536: the TZif file format.
 *   - The C library's localtime_r (glibc), an independent reader of the
 *     same TZif files.
 */
#include "testutil.h"

#include <dirent.h>
#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "sillwatch/timeutil.h"

/* ---- helpers -------------------------------------------------------------- */

/* POSIX.1-2017 XBD sec. 4.16: seconds since the Epoch from broken-down
 * UTC time, as printed in the standard (years 1970 on, where C's
 * truncating division agrees with the floor the formula means). */
static int64_t posix_seconds(int tm_year, int tm_yday, int tm_hour,
                             int tm_min, int tm_sec)
{
    return tm_sec + tm_min * INT64_C(60) + tm_hour * INT64_C(3600)
           + tm_yday * INT64_C(86400) + (tm_year - 70) * INT64_C(31536000)
           + ((tm_year - 69) / 4) * INT64_C(86400)
           - ((tm_year - 1) / 100) * INT64_C(86400)
           + ((tm_year + 299) / 400) * INT64_C(86400);
}

/* Day of the year (0-based) by the Gregorian rule, written out
 * independently of the code under test. */
static int yday_of(int y, int m, int d)
{
    static const int before[12] = { 0, 31, 59, 90, 120, 151, 181, 212, 243,
                                    273, 304, 334 };
    int leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    return before[m - 1] + d - 1 + (leap && m > 2);
}

/* Weekday (0 = Sunday) by Sakamoto's method, independent of the code
 * under test. */
static int weekday_of(int y, int m, int d)
{
    static const int t[12] = { 0, 3, 2, 5, 0, 3, 5, 1, 4, 6, 2, 4 };
    if (m < 3)
        y -= 1;
    return (y + y / 4 - y / 100 + y / 400 + t[m - 1] + d) % 7;
}

/* Parse a timestamp that must be valid. */
static sw_stamp stamp_ok(const char *text)
{
    sw_stamp st;
    sw_error err;

    sw_error_clear(&err);
    if (sw_stamp_parse(text, strlen(text), &st, &err) != SW_OK) {
        print_error("'%s': %s\n", text, err.message);
        fail();
    }
    return st;
}

/* The instant named by a timestamp with an offset. */
static sw_time_ms instant(const char *text)
{
    sw_stamp st = stamp_ok(text);
    assert_true(st.has_offset);
    return st.wall_ms - (sw_time_ms)st.offset_s * SW_MS_PER_S;
}

/* The wall-clock reading of a timestamp without an offset. */
static sw_time_ms wall(const char *text)
{
    sw_stamp st = stamp_ok(text);
    assert_false(st.has_offset);
    return st.wall_ms;
}

static sw_zone *zone_ok(const char *spec)
{
    sw_zone *z = NULL;
    sw_error err;

    sw_error_clear(&err);
    if (sw_zone_load(&z, spec, &err) != SW_OK) {
        print_error("zone '%s': %s\n", spec, err.message);
        fail();
    }
    assert_non_null(z);
    assert_string_equal(sw_zone_name(z), spec);
    return z;
}

/* The zone directory the library reads. */
static const char *zone_dir(void)
{
    const char *dir = getenv("TZDIR");
    return dir != NULL && dir[0] != '\0' ? dir : "/usr/share/zoneinfo";
}

static void assert_format(sw_time_ms t, const sw_zone *z, const char *want)
{
    char buf[64];
    int n = sw_time_format(buf, sizeof buf, t, z);
    assert_string_equal(buf, want);
    assert_int_equal(n, (int)strlen(want));
}

/* A timestamp that must be refused with exactly `message`; the output is
 * untouched and the position fields are left empty for the caller. */
static void expect_stamp_error(const char *text, const char *message)
{
    sw_stamp st = { 123, 7, 99 };
    sw_error err;

    sw_error_clear(&err);
    assert_int_equal(sw_stamp_parse(text, strlen(text), &st, &err),
                     SW_EDATA);
    assert_int_equal(err.code, SW_EDATA);
    assert_string_equal(err.message, message);
    assert_string_equal(err.file, "");
    assert_int_equal(err.line, 0);
    assert_int_equal(err.column, 0);
    assert_int_equal(st.wall_ms, 123);
    assert_int_equal(st.has_offset, 7);
    assert_int_equal(st.offset_s, 99);
}

static void expect_zone_error(const char *spec, int code, const char *message)
{
    sw_zone *z = (sw_zone *)&z; /* any non-NULL value */
    sw_error err;

    sw_error_clear(&err);
    assert_int_equal(sw_zone_load(&z, spec, &err), code);
    assert_int_equal(err.code, code);
    assert_null(z);
    if (strcmp(err.message, message) != 0) {
        print_error("got  '%s'\nwant '%s'\n", err.message, message);
        fail();
    }
}

static void expect_duration_error(const char *text, const char *message)
{
    sw_time_ms d = 4242;
    sw_error err;

    sw_error_clear(&err);
    assert_int_equal(sw_duration_parse(text, &d, &err), SW_ESITE);
    assert_int_equal(err.code, SW_ESITE);
    assert_string_equal(err.message, message);
    assert_int_equal(d, 4242);
}

/* ---- calendar ------------------------------------------------------------- */

static void test_epoch_values(void **state)
{
    (void)state;
    /* POSIX.1-2017 XBD 4.16: the Epoch is 0 */
    assert_int_equal(sw_days_from_civil(1970, 1, 1), 0);
    assert_int_equal(instant("1970-01-01T00:00:00Z"), 0);
    /* POSIX.1-2017 XBD 4.16 formula: 946684800 s */
    assert_int_equal(instant("2000-01-01T00:00:00Z"), INT64_C(946684800000));
    /* POSIX.1-2017 XBD 4.16 formula: 2^31 - 1 s */
    assert_int_equal(instant("2038-01-19T03:14:07Z"), INT64_C(2147483647000));
    /* POSIX.1-2017 XBD 4.16: the day before the Epoch is -1 */
    assert_int_equal(sw_days_from_civil(1969, 12, 31), -1);
    /* Gregorian rule: 70 * 365 + 17 leap days (1904 to 1968) */
    assert_int_equal(sw_days_from_civil(1900, 1, 1), -25567);
    /* POSIX.1-2017 XBD 4.16 formula, tm_year 155, tm_yday 88 */
    assert_int_equal(instant("2055-03-30T17:42:13Z"),
                     posix_seconds(155, 88, 17, 42, 13) * 1000);
}

/* days_from_civil against the POSIX formula for every day of 1970 to
 * 2399, and civil_from_days as its inverse over +-1.5 million days. */
static void test_days_against_posix_formula(void **state)
{
    (void)state;
    for (int y = 1970; y < 2400; y++)
        for (int m = 1; m <= 12; m++) {
            static const int dim[12] = { 31, 28, 31, 30, 31, 30, 31, 31, 30,
                                         31, 30, 31 };
            int leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
            int n = dim[m - 1] + (m == 2 && leap);
            for (int d = 1; d <= n; d++) {
                /* POSIX.1-2017 XBD 4.16 formula */
                int64_t want = posix_seconds(y - 1900, yday_of(y, m, d), 0,
                                             0, 0) / 86400;
                if (sw_days_from_civil(y, m, d) != want) {
                    print_error("%04d-%02d-%02d\n", y, m, d);
                    fail();
                }
            }
        }
    for (int64_t days = -1500000; days <= 1500000; days += 7) {
        int64_t y;
        int m, d;
        sw_civil_from_days(days, &y, &m, &d);
        assert_true(m >= 1 && m <= 12 && d >= 1 && d <= 31);
        assert_int_equal(sw_days_from_civil(y, m, d), days);
    }
}

static void test_leap_years(void **state)
{
    (void)state;
    /* Gregorian rule: 2000 is a leap year (divisible by 400) */
    assert_int_equal(wall("2000-02-29 12:00") - wall("2000-02-28 12:00"),
                     86400000);
    /* Gregorian rule: 2024 is a leap year */
    assert_int_equal(wall("2024-03-01 00:00") - wall("2024-02-29 00:00"),
                     86400000);
    /* Gregorian rule: 1900 is not (divisible by 100, not by 400) */
    expect_stamp_error("1900-02-29 00:00", "timestamp '1900-02-29 00:00' has "
                       "day 29 but February 1900 has 28 days");
    /* Gregorian rule: 2023 is not */
    expect_stamp_error("2023-02-29 00:00", "timestamp '2023-02-29 00:00' has "
                       "day 29 but February 2023 has 28 days");
    expect_stamp_error("2024-02-30T06:00", "timestamp '2024-02-30T06:00' has "
                       "day 30 but February 2024 has 29 days");
}

/* ---- timestamps ----------------------------------------------------------- */

static void test_stamp_forms(void **state)
{
    sw_stamp st;
    sw_time_ms base = instant("2025-01-01T00:15:00Z");

    (void)state;
    /* POSIX.1-2017 XBD 4.16 formula: tm_year 125, tm_yday 0 */
    assert_int_equal(base, posix_seconds(125, 0, 0, 15, 0) * 1000);
    /* ISO 8601-1:2019: extended format with T, and with a space */
    assert_int_equal(wall("2025-01-01T00:15:00"), base);
    assert_int_equal(wall("2025-01-01 00:15"), base);
    /* ISO 8601-1:2019: the offset forms +hh:mm, +hhmm, +hh */
    st = stamp_ok("2025-01-01T00:15:00+01:00");
    assert_int_equal(st.wall_ms, base);
    assert_int_equal(st.offset_s, 3600);
    assert_int_equal(instant("2025-01-01T01:15:00+01:00"), base);
    assert_int_equal(instant("2025-01-01T01:15+0100"), base);
    assert_int_equal(instant("2025-01-01 01:15+01"), base);
    assert_int_equal(instant("2024-12-31T20:45:00-03:30"), base);
    assert_int_equal(instant("2024-12-31T20:45-0330"), base);
    /* ISO 8601-1:2019: UTC as Z; -00:00 is accepted as zero */
    assert_int_equal(instant("2025-01-01T00:15:00z"), base);
    assert_int_equal(instant("2025-01-01T00:15:00-00:00"), base);
    /* ISO 8601-1:2019: decimal fraction of the second, '.' or ',' */
    assert_int_equal(wall("2025-01-01T00:15:00.5"), base + 500);
    assert_int_equal(wall("2025-01-01T00:15:00,25"), base + 250);
    assert_int_equal(instant("2025-01-01T00:15:07.034Z"), base + 7034);
    /* rounding to the millisecond, half up (the header's contract) */
    assert_int_equal(wall("2025-01-01T00:15:00.1234"), base + 123);
    assert_int_equal(wall("2025-01-01T00:15:00.1235"), base + 124);
    assert_int_equal(wall("2025-01-01T00:15:00.12349999999"), base + 123);
    assert_int_equal(wall("2025-01-01T00:15:59.9996"), base + 60000);
    /* blanks around the text are ignored */
    assert_int_equal(wall(" \t2025-01-01 00:15  "), base);
    /* a 60th second folds into the next minute (POSIX time has no leap
     * seconds); 24:00:00 is the end of the day (ISO 8601-1:2019) */
    assert_int_equal(instant("2016-12-31T23:59:60Z"),
                     instant("2017-01-01T00:00:00Z"));
    assert_int_equal(wall("2024-12-31 24:00"), wall("2025-01-01 00:00"));
    assert_int_equal(wall("2024-12-31T24:00:00.000"), wall("2025-01-01 00:00"));
    /* years before the Epoch: POSIX.1-2017 XBD 4.16 runs backwards */
    assert_int_equal(instant("1969-12-31T23:59:59.999Z"), -1);
    /* a text that is not NUL-terminated: only len bytes are read */
    assert_int_equal(sw_stamp_parse("2025-01-01 00:15:00Zgarbage", 20, &st,
                                    NULL),
                     SW_OK);
    assert_int_equal(st.wall_ms, base);
}

static void test_stamp_errors(void **state)
{
    (void)state;
    expect_stamp_error("2025-13-01 00:00",
                       "timestamp '2025-13-01 00:00' has month 13");
    expect_stamp_error("2025-00-10 00:00",
                       "timestamp '2025-00-10 00:00' has month 00");
    expect_stamp_error("2025-02-30", "timestamp '2025-02-30' has day 30 but "
                       "February 2025 has 28 days");
    expect_stamp_error("2025-04-31T12:00", "timestamp '2025-04-31T12:00' has "
                       "day 31 but April 2025 has 30 days");
    expect_stamp_error("2025-01-00 00:00",
                       "timestamp '2025-01-00 00:00' has day 00");
    expect_stamp_error("2025-01-01", "timestamp '2025-01-01' has no time of "
                       "day; write it as YYYY-MM-DD hh:mm (e.g. 2025-01-01 "
                       "00:00)");
    expect_stamp_error("2025-01-01 25:00",
                       "timestamp '2025-01-01 25:00' has hour 25");
    expect_stamp_error("2025-01-01 23:60",
                       "timestamp '2025-01-01 23:60' has minute 60");
    expect_stamp_error("2025-01-01 23:59:61",
                       "timestamp '2025-01-01 23:59:61' has second 61");
    expect_stamp_error("2025-01-01 24:00:01", "timestamp '2025-01-01 "
                       "24:00:01' has hour 24 with minutes or seconds; only "
                       "24:00:00 (the end of the day) is allowed");
    expect_stamp_error("2025-01-01 24:00:00.0004", "timestamp '2025-01-01 "
                       "24:00:00.0004' has hour 24 with minutes or seconds; "
                       "only 24:00:00 (the end of the day) is allowed");
    expect_stamp_error("2025-01-01 00:15+24:00",
                       "timestamp '2025-01-01 00:15+24:00' has UTC offset "
                       "hours 24");
    expect_stamp_error("2025-01-01 00:15+01:60",
                       "timestamp '2025-01-01 00:15+01:60' has UTC offset "
                       "minutes 60");
    expect_stamp_error("", "timestamp is empty; expected YYYY-MM-DD "
                       "hh:mm[:ss[.fff]][Z|+hh:mm]");
    expect_stamp_error("  \t ", "timestamp is blank; expected YYYY-MM-DD "
                       "hh:mm[:ss[.fff]][Z|+hh:mm]");
#define SHAPE "; expected YYYY-MM-DD hh:mm[:ss[.fff]][Z|+hh:mm]"
    /* A NUL byte (a binary file) is named, not quoted: quoting stopped at
     * it, and a message once read "timestamp '' does not begin with a
     * date" for a field of four bytes (tests/bad/csv_binary_junk). */
    {
        sw_stamp st = { 123, 7, 99 };
        sw_time_ms t = 42;
        sw_error err;

        assert_int_equal(sw_stamp_parse("2025-04-01T00:00\0:00Z", 21, &st,
                                        &err), SW_EDATA);
        assert_string_equal(err.message, "timestamp holds a NUL byte (is "
                            "this a text file?)");
        assert_int_equal(st.wall_ms, 123);
        assert_int_equal(sw_stamp_parse("\0\xff\xfe\x01", 4, &st, &err),
                         SW_EDATA);
        assert_string_equal(err.message, "timestamp holds a NUL byte (is "
                            "this a text file?)");
        assert_int_equal(sw_unix_parse("17\0" "43465600", 11, &t, &err),
                         SW_EDATA);
        assert_string_equal(err.message, "Unix time holds a NUL byte (is "
                            "this a text file?)");
        assert_int_equal(t, 42);
    }
    expect_stamp_error("2025", "timestamp '2025' has no complete date" SHAPE);
    expect_stamp_error("01.02.2025 10:00", "timestamp '01.02.2025 10:00' "
                       "does not begin with a four-digit year" SHAPE);
    expect_stamp_error("n/a", "timestamp 'n/a' does not begin with a date"
                       SHAPE);
    expect_stamp_error("2025/01/01 00:00", "timestamp '2025/01/01 00:00' has "
                       "no '-' after the year" SHAPE);
    expect_stamp_error("2025-1-01 00:00", "timestamp '2025-1-01 00:00' has a "
                       "month that is not two digits" SHAPE);
    expect_stamp_error("2025-01/01 00:00", "timestamp '2025-01/01 00:00' has "
                       "no '-' after the month" SHAPE);
    expect_stamp_error("2025-01-1 00:00", "timestamp '2025-01-1 00:00' has a "
                       "day that is not two digits" SHAPE);
    expect_stamp_error("2025-01-01_00:00", "timestamp '2025-01-01_00:00' has "
                       "no 'T' or space between the date and the time" SHAPE);
    expect_stamp_error("2025-01-01 0:15", "timestamp '2025-01-01 0:15' has a "
                       "time of day that is not hh:mm" SHAPE);
    expect_stamp_error("2025-01-01 00h15", "timestamp '2025-01-01 00h15' has "
                       "a time of day that is not hh:mm" SHAPE);
    expect_stamp_error("2025-01-01 00:15:5", "timestamp '2025-01-01 00:15:5' "
                       "has seconds that are not two digits" SHAPE);
    expect_stamp_error("2025-01-01 00:15:05.", "timestamp '2025-01-01 "
                       "00:15:05.' has a decimal separator without digits "
                       "after the seconds" SHAPE);
    expect_stamp_error("2025-01-01 00:15.5", "timestamp '2025-01-01 00:15.5' "
                       "has a fraction of a minute; give seconds "
                       "(hh:mm:ss.fff)" SHAPE);
    expect_stamp_error("2025-01-01 00:15+1", "timestamp '2025-01-01 00:15+1' "
                       "has a UTC offset that is not +hh:mm, +hhmm or +hh"
                       SHAPE);
    expect_stamp_error("2025-01-01 00:15+01:5", "timestamp '2025-01-01 "
                       "00:15+01:5' has a UTC offset that is not +hh:mm, "
                       "+hhmm or +hh" SHAPE);
    expect_stamp_error("2025-01-01 00:15 CET", "timestamp '2025-01-01 00:15 "
                       "CET' has unexpected text ' CET' after the time"
                       SHAPE);
    expect_stamp_error("2025-01-01 00:15:00Z+01:00", "timestamp '2025-01-01 "
                       "00:15:00Z+01:00' has unexpected text '+01:00' after "
                       "the time" SHAPE);
    /* a long text is quoted in part */
    expect_stamp_error("2025-01-01 00:15 and then a long comment that goes "
                       "on and on and on",
                       "timestamp '2025-01-01 00:15 and then a long comment "
                       "that goes on and on...' has unexpected text ' and "
                       "then a long com' after the time" SHAPE);
#undef SHAPE
}

static void test_unix_parse(void **state)
{
    sw_time_ms t = 0;
    sw_error err;

    (void)state;
    /* POSIX.1-2017 XBD 4.16 formula: 2025-01-01T00:00:00Z */
    assert_int_equal(sw_unix_parse("1735689600", 10, &t, &err), SW_OK);
    assert_int_equal(t, posix_seconds(125, 0, 0, 0, 0) * 1000);
    assert_int_equal(sw_unix_parse(" 1735689600.2506 ", 17, &t, &err), SW_OK);
    assert_int_equal(t, INT64_C(1735689600251));
    assert_int_equal(sw_unix_parse("-1.5", 4, &t, &err), SW_OK);
    assert_int_equal(t, -1500);
    assert_int_equal(sw_unix_parse("+86400,25", 9, &t, &err), SW_OK);
    assert_int_equal(t, 86400250);

    t = 77;
    sw_error_clear(&err);
    assert_int_equal(sw_unix_parse("17e8", 4, &t, &err), SW_EDATA);
    assert_string_equal(err.message, "Unix time '17e8' is not a number of "
                        "seconds (digits, optionally a sign and a fraction)");
    assert_int_equal(sw_unix_parse("  ", 2, &t, &err), SW_EDATA);
    assert_string_equal(err.message, "Unix time '' is not a number of "
                        "seconds (digits, optionally a sign and a fraction)");
    assert_int_equal(sw_unix_parse("-.", 2, &t, &err), SW_EDATA);
    assert_string_equal(err.message, "Unix time '-.' is not a number of "
                        "seconds (digits, optionally a sign and a fraction)");
    assert_int_equal(sw_unix_parse("1234567890123456", 16, &t, &err),
                     SW_EDATA);
    assert_string_equal(err.message,
                        "Unix time '1234567890123456' is out of range");
    assert_int_equal(t, 77);
}

/* ---- zones ---------------------------------------------------------------- */

static void test_fixed_zones(void **state)
{
    static const struct {
        const char *spec;
        int32_t off_s;
    } cases[] = {
        /* ISO 8601-1:2019 offset forms */
        { "+10:00", 36000 }, { "-0330", -12600 }, { "+05", 18000 },
        { "-03:30", -12600 }, { "+23:59", 86340 }, { "Z", 0 }, { "UTC", 0 },
    };
    sw_time_ms t = instant("2025-06-17T08:41:27.380Z"), utc[SW_ZONE_MAX_SHOWN];

    (void)state;
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        sw_zone *z = zone_ok(cases[i].spec);
        assert_int_equal(sw_zone_offset_at(z, t), cases[i].off_s);
        assert_int_equal(sw_zone_offset_at(z, INT64_C(-4102444800000)),
                         cases[i].off_s);
        assert_int_equal(sw_zone_local_to_utc(
                             z, t + (sw_time_ms)cases[i].off_s * 1000, utc),
                         1);
        assert_int_equal(utc[0], t);
        sw_zone_free(z);
    }
    sw_zone_free(NULL);
    /* NULL is UTC where the header says so */
    assert_string_equal(sw_zone_name(NULL), "UTC");
    assert_int_equal(sw_zone_offset_at(NULL, t), 0);
}

static void test_zone_errors(void **state)
{
    char want[1024];
    const char *dir = zone_dir();

    (void)state;
#define OFFSET_FIX "is not a valid UTC offset; write +hh:mm, -hhmm or +hh " \
                   "with hours 00 to 23 and minutes 00 to 59 (e.g. +10:00, " \
                   "-0330)"
    expect_zone_error("+24:00", SW_ESITE, "zone '+24:00' " OFFSET_FIX);
    expect_zone_error("+10:60", SW_ESITE, "zone '+10:60' " OFFSET_FIX);
    expect_zone_error("+1:00", SW_ESITE, "zone '+1:00' " OFFSET_FIX);
    expect_zone_error("+10:0", SW_ESITE, "zone '+10:0' " OFFSET_FIX);
    expect_zone_error("-10:00:00", SW_ESITE, "zone '-10:00:00' " OFFSET_FIX);
    expect_zone_error("+1000x", SW_ESITE, "zone '+1000x' " OFFSET_FIX);
    expect_zone_error("+", SW_ESITE, "zone '+' " OFFSET_FIX);
#undef OFFSET_FIX
#define NAME_FIX "; give an IANA zone name such as Europe/Berlin, or a UTC " \
                 "offset such as +01:00"
    expect_zone_error("", SW_ESITE, "zone '' is empty" NAME_FIX);
    expect_zone_error("../../etc/passwd", SW_ESITE,
                      "zone '../../etc/passwd' contains \"..\"" NAME_FIX);
    expect_zone_error("Europe/../../etc/passwd", SW_ESITE,
                      "zone 'Europe/../../etc/passwd' contains \"..\""
                      NAME_FIX);
    expect_zone_error("/usr/share/zoneinfo/Europe/Berlin", SW_ESITE,
                      "zone '/usr/share/zoneinfo/Europe/Berlin' starts with "
                      "'/' (zone names are relative to the zone directory, "
                      "e.g. Europe/Berlin)" NAME_FIX);
    expect_zone_error("10:00", SW_ESITE, "zone '10:00' contains a character "
                      "that no zone name has" NAME_FIX);
    expect_zone_error("Europe/Berlin ", SW_ESITE, "zone 'Europe/Berlin ' "
                      "contains a character that no zone name has" NAME_FIX);
#undef NAME_FIX
    snprintf(want, sizeof want, "zone 'Europe/Berln' is not known: cannot "
             "read %s/Europe/Berln (%s); give an IANA zone name such as "
             "Europe/Berlin (set TZDIR if the zone files are elsewhere), or "
             "a UTC offset such as +01:00", dir, strerror(ENOENT));
    expect_zone_error("Europe/Berln", SW_ESITE, want);
    snprintf(want, sizeof want, "zone 'Europe' is not known: cannot read "
             "%s/Europe (%s); give an IANA zone name such as Europe/Berlin "
             "(set TZDIR if the zone files are elsewhere), or a UTC offset "
             "such as +01:00", dir, strerror(EISDIR));
    expect_zone_error("Europe", SW_ESITE, want);
}

/* EU summer time in Europe/Berlin, 2025 (Directive 2000/84/EC: from 01:00
 * UTC on the last Sunday of March to 01:00 UTC on the last Sunday of
 * October; 30 March and 26 October 2025 are those Sundays, checked with
 * weekday_of). */
static void test_berlin_2025(void **state)
{
    sw_zone *z = zone_ok("Europe/Berlin");
    sw_time_ms spring = instant("2025-03-30T01:00:00Z");
    sw_time_ms autumn = instant("2025-10-26T01:00:00Z");
    sw_time_ms utc[SW_ZONE_MAX_SHOWN] = { -1, -1 };

    (void)state;
    /* Sakamoto's weekday formula: both are Sundays, the last of the month */
    assert_int_equal(weekday_of(2025, 3, 30), 0);
    assert_int_equal(weekday_of(2025, 10, 26), 0);
    /* Directive 2000/84/EC: CET +1 h before, CEST +2 h from 01:00 UTC */
    assert_int_equal(sw_zone_offset_at(z, spring - 1), 3600);
    assert_int_equal(sw_zone_offset_at(z, spring), 7200);
    assert_int_equal(sw_zone_offset_at(z, autumn - 1), 7200);
    assert_int_equal(sw_zone_offset_at(z, autumn), 3600);
    /* Directive 2000/84/EC: 02:30 local on 30 March is skipped */
    assert_int_equal(sw_zone_local_to_utc(z, wall("2025-03-30 02:30"), utc),
                     0);
    assert_int_equal(sw_zone_local_to_utc(z, wall("2025-03-30 01:59:59.999"),
                                          utc),
                     1);
    assert_int_equal(utc[0], spring - 1);
    assert_int_equal(sw_zone_local_to_utc(z, wall("2025-03-30 03:00"), utc),
                     1);
    assert_int_equal(utc[0], spring);
    /* Directive 2000/84/EC: 02:30 local on 26 October is shown twice, an
     * hour apart, first in CEST then in CET */
    assert_int_equal(sw_zone_local_to_utc(z, wall("2025-10-26 02:30"), utc),
                     2);
    assert_int_equal(utc[0], instant("2025-10-26T02:30:00+02:00"));
    assert_int_equal(utc[1], instant("2025-10-26T02:30:00+01:00"));
    assert_int_equal(utc[1] - utc[0], SW_MS_PER_HOUR);
    /* an ordinary summer afternoon: one instant */
    assert_int_equal(sw_zone_local_to_utc(z, wall("2025-07-14 15:47:12"), utc),
                     1);
    assert_int_equal(utc[0], instant("2025-07-14T13:47:12Z"));
    sw_zone_free(z);
}

/* 2070 is past the end of the file's transition table (which stops in
 * 2037), so the footer rule "CET-1CEST,M3.5.0,M10.5.0/3" decides: through
 * the changes generated from it at load time up to 2100, and directly
 * after that (2154, 2170). */
static void test_berlin_beyond_table(void **state)
{
    sw_zone *z = zone_ok("Europe/Berlin");
    sw_time_ms spring = instant("2070-03-30T01:00:00Z");
    sw_time_ms autumn = instant("2070-10-26T01:00:00Z");
    sw_time_ms utc[SW_ZONE_MAX_SHOWN];

    (void)state;
    /* Sakamoto's weekday formula: the last Sundays of March and October */
    assert_int_equal(weekday_of(2070, 3, 30), 0);
    assert_int_equal(weekday_of(2070, 10, 26), 0);
    assert_true(30 + 7 > 31 && 26 + 7 > 31);
    /* Directive 2000/84/EC */
    assert_int_equal(sw_zone_offset_at(z, spring - 1), 3600);
    assert_int_equal(sw_zone_offset_at(z, spring), 7200);
    assert_int_equal(sw_zone_offset_at(z, autumn - 1), 7200);
    assert_int_equal(sw_zone_offset_at(z, autumn), 3600);
    assert_int_equal(sw_zone_offset_at(z, instant("2070-12-31T23:59:59Z")),
                     3600);
    assert_int_equal(sw_zone_local_to_utc(z, wall("2070-03-30 02:30"), utc),
                     0);
    assert_int_equal(sw_zone_local_to_utc(z, wall("2070-10-26 02:30"), utc),
                     2);
    assert_int_equal(utc[1] - utc[0], SW_MS_PER_HOUR);
    /* and in a year where the last Sunday of March is the 31st */
    /* Sakamoto's weekday formula */
    assert_int_equal(weekday_of(2041, 3, 31), 0);
    assert_int_equal(sw_zone_offset_at(z, instant("2041-03-31T00:59:59Z")),
                     3600);
    assert_int_equal(sw_zone_offset_at(z, instant("2041-03-31T01:00:00Z")),
                     7200);
    assert_int_equal(sw_zone_offset_at(z, instant("2041-03-24T01:00:00Z")),
                     3600);
    /* Sakamoto's weekday formula: the last Sundays of March 2154 and of
     * October 2170; Directive 2000/84/EC */
    assert_int_equal(weekday_of(2154, 3, 31), 0);
    assert_int_equal(weekday_of(2170, 10, 28), 0);
    assert_int_equal(sw_zone_offset_at(z, instant("2154-03-31T00:59:59Z")),
                     3600);
    assert_int_equal(sw_zone_offset_at(z, instant("2154-03-31T01:00:00Z")),
                     7200);
    assert_int_equal(sw_zone_offset_at(z, instant("2170-10-28T00:59:59Z")),
                     7200);
    assert_int_equal(sw_zone_offset_at(z, instant("2170-10-28T01:00:00Z")),
                     3600);
    assert_int_equal(sw_zone_local_to_utc(z, wall("2154-03-31 02:30"), utc),
                     0);
    assert_int_equal(sw_zone_local_to_utc(z, wall("2170-10-28 02:30"), utc),
                     2);
    sw_zone_free(z);
}

/* Southern hemisphere: summer time spans the new year. */
static void test_sydney(void **state)
{
    sw_zone *z = zone_ok("Australia/Sydney");

    (void)state;
    /* from memory: AEDT +11:00 in January, AEST +10:00 in July */
    assert_int_equal(sw_zone_offset_at(z, instant("2025-01-15T03:00:00Z")),
                     39600);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-07-15T03:00:00Z")),
                     36000);
    /* from memory: the same in a year decided by the footer rule */
    assert_int_equal(sw_zone_offset_at(z, instant("2071-01-15T03:00:00Z")),
                     39600);
    assert_int_equal(sw_zone_offset_at(z, instant("2071-07-15T03:00:00Z")),
                     36000);
    /* from memory: New South Wales changes on the first Sunday of April
     * (03:00 AEDT back to 02:00) and of October (02:00 AEST to 03:00);
     * Sakamoto's weekday formula: 6 April and 5 October 2025 */
    assert_int_equal(weekday_of(2025, 4, 6), 0);
    assert_int_equal(weekday_of(2025, 10, 5), 0);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-04-06T02:59:59+11:00")),
                     39600);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-04-06T02:00:00+10:00")),
                     36000);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-10-05T01:59:59+10:00")),
                     36000);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-10-05T03:00:00+11:00")),
                     39600);
    sw_zone_free(z);
}

/* Offsets against the C library's localtime_r, an independent reader of
 * the same files, at 20000 pseudo-random instants per zone in 1970-2399
 * (1970 on is the range of the POSIX formula used to read its answer
 * back; the years after 2100 reach the footer rule directly); and
 * every instant must be among the answers of sw_zone_local_to_utc for its
 * own wall-clock reading.  The zones cover both hemispheres, half-hour
 * and 45-minute offsets, negative daylight saving (Dublin, Casablanca),
 * two-hour daylight saving (Troll) and version 3 footers with times
 * outside 0-24 h (Nuuk, Santiago, Jerusalem). */
static void test_against_localtime(void **state)
{
    static const char *const names[] = {
        "Europe/Berlin", "Australia/Sydney", "America/New_York",
        "Australia/Lord_Howe", "America/St_Johns", "Pacific/Chatham",
        "Africa/Casablanca", "Europe/Dublin", "Asia/Kolkata",
        "Antarctica/Troll", "America/Nuuk", "America/Santiago",
        "Asia/Jerusalem", "Pacific/Apia", "Asia/Tehran",
    };
    char *old_tz = getenv("TZ") ? strdup(getenv("TZ")) : NULL;
    uint64_t s = UINT64_C(0x5eed5eed);

    (void)state;
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
        sw_zone *z = zone_ok(names[i]);
        char tz[600];

        snprintf(tz, sizeof tz, ":%s/%s", zone_dir(), names[i]);
        assert_int_equal(setenv("TZ", tz, 1), 0);
        tzset();
        for (int k = 0; k < 20000; k++) {
            int64_t t_s, local_s;
            time_t tt;
            struct tm tm;
            sw_time_ms utc[SW_ZONE_MAX_SHOWN];
            int32_t off;
            int n;

            s = s * UINT64_C(6364136223846793005) + UINT64_C(1442695040888963407);
            t_s = (int64_t)((s >> 11) % UINT64_C(13569465600));
            tt = (time_t)t_s;
            assert_non_null(localtime_r(&tt, &tm));
            /* POSIX.1-2017 XBD 4.16 formula on localtime_r's fields */
            local_s = posix_seconds(tm.tm_year, tm.tm_yday, tm.tm_hour,
                                    tm.tm_min, tm.tm_sec);
            off = sw_zone_offset_at(z, t_s * 1000 + 999);
            if (off != local_s - t_s) {
                print_error("%s at %lld: %d, localtime_r %lld\n", names[i],
                            (long long)t_s, (int)off,
                            (long long)(local_s - t_s));
                fail();
            }
            n = sw_zone_local_to_utc(z, local_s * 1000 + 999, utc);
            assert_true(n == 1 || n == 2);
            assert_true(utc[0] == t_s * 1000 + 999
                        || (n == 2 && utc[1] == t_s * 1000 + 999));
            if (n == 2)
                assert_true(utc[0] < utc[1]);
        }
        sw_zone_free(z);
    }
    if (old_tz != NULL)
        setenv("TZ", old_tz, 1);
    else
        unsetenv("TZ");
    tzset();
    free(old_tz);
}

/* ---- hand-made TZif files ------------------------------------------------- */

typedef struct tzif_spec {
    char version;               /* 0, '2' or '3' */
    int n_trans;
    const int64_t *times;
    const unsigned char *idx;
    int n_types;
    const int32_t *offs;
    const unsigned char *dsts;
    const char *footer;         /* NULL: none written */
    unsigned leapcnt;           /* leap records (zeros) */
} tzif_spec;

static void put32(FILE *f, uint32_t v)
{
    unsigned char b[4] = { (unsigned char)(v >> 24), (unsigned char)(v >> 16),
                           (unsigned char)(v >> 8), (unsigned char)v };
    fwrite(b, 1, 4, f);
}

static void put64(FILE *f, uint64_t v)
{
    put32(f, (uint32_t)(v >> 32));
    put32(f, (uint32_t)v);
}

/* One header and data block (RFC 8536 sec. 3.1 and 3.2). */
static void put_block(FILE *f, const tzif_spec *t, int wide)
{
    static const unsigned char zeros[15] = { 0 };

    fwrite("TZif", 1, 4, f);
    fputc(t->version, f);
    fwrite(zeros, 1, 15, f);
    put32(f, 0);
    put32(f, 0);
    put32(f, t->leapcnt);
    put32(f, (uint32_t)t->n_trans);
    put32(f, (uint32_t)t->n_types);
    put32(f, 4);
    for (int i = 0; i < t->n_trans; i++) {
        if (wide)
            put64(f, (uint64_t)t->times[i]);
        else
            put32(f, (uint32_t)t->times[i]);
    }
    if (t->n_trans > 0)
        fwrite(t->idx, 1, (size_t)t->n_trans, f);
    for (int i = 0; i < t->n_types; i++) {
        put32(f, (uint32_t)t->offs[i]);
        fputc(t->dsts[i], f);
        fputc(0, f);
    }
    fwrite("XYZ", 1, 4, f);
    for (unsigned i = 0; i < t->leapcnt; i++) {
        if (wide)
            put64(f, 0);
        else
            put32(f, 0);
        put32(f, 0);
    }
}

/* Write dir/Test/name; cut it to `keep` bytes when keep > 0; overwrite
 * byte 4 with `bad_version` when nonzero. */
static void write_tzif(const char *dir, const char *name, const tzif_spec *t,
                       long keep, int bad_version)
{
    char path[1024];
    FILE *f;

    snprintf(path, sizeof path, "%s/Test/%s", dir, name);
    f = fopen(path, "wb");
    assert_non_null(f);
    put_block(f, t, 0);
    if (t->version != 0) {
        put_block(f, t, 1);
        if (t->footer != NULL)
            fprintf(f, "\n%s\n", t->footer);
    }
    if (bad_version) {
        fseek(f, 4, SEEK_SET);
        fputc(bad_version, f);
    }
    assert_int_equal(fclose(f), 0);
    if (keep > 0)
        assert_int_equal(truncate(path, keep), 0);
}

/* A scratch zone directory with TZDIR pointing at it, made by the setup
 * of each test that writes TZif files and removed by its teardown (which
 * cmocka runs even when the test fails), so that TZDIR is always put
 * back. */
typedef struct scratch {
    char dir[256];
    char real_dir[512];  /* the zone directory before the test */
    char *old_tzdir;
} scratch;

static int scratch_setup(void **state)
{
    char sub[300];
    const char *tmp = getenv("TMPDIR");
    scratch *sc = calloc(1, sizeof *sc);

    if (sc == NULL)
        return -1;
    snprintf(sc->real_dir, sizeof sc->real_dir, "%s", zone_dir());
    snprintf(sc->dir, sizeof sc->dir, "%s/sw_tzif_XXXXXX",
             tmp != NULL && tmp[0] != '\0' ? tmp : "/tmp");
    if (mkdtemp(sc->dir) == NULL) {
        free(sc);
        return -1;
    }
    snprintf(sub, sizeof sub, "%s/Test", sc->dir);
    if (mkdir(sub, 0700) != 0) {
        rmdir(sc->dir);
        free(sc);
        return -1;
    }
    sc->old_tzdir = getenv("TZDIR") ? strdup(getenv("TZDIR")) : NULL;
    setenv("TZDIR", sc->dir, 1);
    *state = sc;
    return 0;
}

static int scratch_teardown(void **state)
{
    scratch *sc = *state;
    char path[1024];
    DIR *d;
    struct dirent *e;

    snprintf(path, sizeof path, "%s/Test", sc->dir);
    d = opendir(path);
    if (d != NULL) {
        while ((e = readdir(d)) != NULL) {
            if (e->d_name[0] == '.')
                continue;
            snprintf(path, sizeof path, "%s/Test/%s", sc->dir, e->d_name);
            unlink(path);
        }
        closedir(d);
    }
    snprintf(path, sizeof path, "%s/Test", sc->dir);
    rmdir(path);
    rmdir(sc->dir);
    if (sc->old_tzdir != NULL)
        setenv("TZDIR", sc->old_tzdir, 1);
    else
        unsetenv("TZDIR");
    free(sc->old_tzdir);
    free(sc);
    return 0;
}

/* Load a zone from the real zone directory during a scratch test. */
static sw_zone *real_zone(const scratch *sc, const char *name)
{
    sw_zone *z;

    setenv("TZDIR", sc->real_dir, 1);
    z = zone_ok(name);
    setenv("TZDIR", sc->dir, 1);
    return z;
}

/* RFC 8536 version 1 (no footer), and the rule forms Jn and n of POSIX
 * TZ strings in footer-only version 2 and 3 files. */
static void test_tzif_versions_and_rules(void **state)
{
    static const int64_t times[2] = { -86400, 1000000000 };
    static const unsigned char idx[2] = { 1, 0 };
    static const int32_t offs[2] = { -7200, 19800 };
    static const unsigned char dsts[2] = { 0, 0 };
    static const int32_t std_off[1] = { 7200 };
    static const int32_t cet[1] = { 3600 };
    static const int32_t est[1] = { -18000 };
    tzif_spec v1 = { 0, 2, times, idx, 2, offs, dsts, NULL, 0 };
    tzif_spec julian = { '2', 0, NULL, NULL, 1, std_off, dsts,
                         "AAA-2BBB,J60/1,250/2", 0 };
    tzif_spec mform = { '3', 0, NULL, NULL, 1, std_off, dsts,
                        "AAA-2BBB-3,M3.5.0/3,M10.5.0/4", 0 };
    tzif_spec eu = { '2', 0, NULL, NULL, 1, cet, dsts,
                     "CET-1CEST,M3.5.0,M10.5.0/3", 0 };
    tzif_spec allyear = { '3', 0, NULL, NULL, 1, est, dsts,
                          "EST5EDT,0/0,J365/25", 0 };
    scratch *sc = *state;
    sw_zone *z, *berlin;
    sw_time_ms t;

    write_tzif(sc->dir, "v1", &v1, 0, 0);
    write_tzif(sc->dir, "julian", &julian, 0, 0);
    write_tzif(sc->dir, "mform", &mform, 0, 0);
    write_tzif(sc->dir, "eu", &eu, 0, 0);
    write_tzif(sc->dir, "allyear", &allyear, 0, 0);

    /* RFC 8536 sec. 3.2: type 0 before the first transition, then each
     * transition's type; after the last, with no footer, the last type */
    z = zone_ok("Test/v1");
    assert_int_equal(sw_zone_offset_at(z, -86400001), -7200);
    assert_int_equal(sw_zone_offset_at(z, -86400000), 19800);
    assert_int_equal(sw_zone_offset_at(z, INT64_C(999999999999)), 19800);
    assert_int_equal(sw_zone_offset_at(z, INT64_C(1000000000000)), -7200);
    assert_int_equal(sw_zone_offset_at(z, INT64_C(4000000000000)), -7200);
    sw_zone_free(z);

    /* POSIX.1-2017 XBD 8.3: J60 is 1 March in every year (29 February is
     * never counted); n = 250 counts from 0 with 29 February, so it is
     * 8 September 2025 and 7 September 2024.  Times are local: 01:00
     * standard (+2) and 02:00 daylight (+3, the default one hour more). */
    z = zone_ok("Test/julian");
    assert_int_equal(sw_zone_offset_at(z, instant("2025-02-28T22:59:59Z")),
                     7200);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-02-28T23:00:00Z")),
                     10800);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-09-07T22:59:59Z")),
                     10800);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-09-07T23:00:00Z")),
                     7200);
    assert_int_equal(sw_zone_offset_at(z, instant("2024-02-29T22:59:59Z")),
                     7200);
    assert_int_equal(sw_zone_offset_at(z, instant("2024-02-29T23:00:00Z")),
                     10800);
    assert_int_equal(sw_zone_offset_at(z, instant("2024-09-06T22:59:59Z")),
                     10800);
    assert_int_equal(sw_zone_offset_at(z, instant("2024-09-06T23:00:00Z")),
                     7200);
    sw_zone_free(z);

    /* POSIX.1-2017 XBD 8.3: an explicit daylight offset, and the M form;
     * last Sunday of March 2025 (the 30th, by Sakamoto's formula) at 03:00
     * standard, last Sunday of October at 04:00 daylight */
    z = zone_ok("Test/mform");
    assert_int_equal(sw_zone_offset_at(z, instant("2025-03-30T00:59:59Z")),
                     7200);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-03-30T01:00:00Z")),
                     10800);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-10-26T00:59:59Z")),
                     10800);
    assert_int_equal(sw_zone_offset_at(z, instant("2025-10-26T01:00:00Z")),
                     7200);
    sw_zone_free(z);

    /* RFC 8536 sec. 3.3.1: "EST5EDT,0/0,J365/25" is daylight saving all
     * year, 4 hours behind UT, also across the new year */
    z = zone_ok("Test/allyear");
    assert_int_equal(sw_zone_offset_at(z, instant("2030-07-01T12:00:00Z")),
                     -14400);
    assert_int_equal(sw_zone_offset_at(z, instant("2030-12-31T23:59:59-04:00")),
                     -14400);
    assert_int_equal(sw_zone_offset_at(z, instant("2031-01-01T00:00:00-04:00")),
                     -14400);
    assert_int_equal(sw_zone_offset_at(z, instant("2031-01-01T00:00:00-05:00")),
                     -14400);
    sw_zone_free(z);

    /* The footer rule alone against the table the tz compiler wrote for
     * Berlin (EU rules since 1996): every hour from 1997 to 2037 agrees. */
    berlin = real_zone(sc, "Europe/Berlin");
    z = zone_ok("Test/eu");
    for (t = instant("1997-01-01T00:30:00Z");
         t < instant("2037-12-31T00:00:00Z"); t += SW_MS_PER_HOUR)
        if (sw_zone_offset_at(z, t) != sw_zone_offset_at(berlin, t)) {
            print_error("at %lld ms\n", (long long)t);
            fail();
        }
    sw_zone_free(z);
    sw_zone_free(berlin);
}

static void test_tzif_errors(void **state)
{
    static const int64_t times[2] = { 100, 50 };
    static const unsigned char idx[2] = { 0, 1 };
    static const unsigned char bad_idx[2] = { 0, 2 };
    static const int32_t offs[2] = { 3600, 7200 };
    static const int32_t wild[2] = { 3600, 100000 };
    static const unsigned char dsts[2] = { 0, 1 };
    static const int64_t ok_times[2] = { 50, 100 };
    tzif_spec order = { '2', 2, times, idx, 2, offs, dsts, "", 0 };
    tzif_spec type = { '2', 2, ok_times, bad_idx, 2, offs, dsts, "", 0 };
    tzif_spec offset = { '2', 2, ok_times, idx, 2, wild, dsts, "", 0 };
    tzif_spec leap = { '2', 2, ok_times, idx, 2, offs, dsts, "", 1 };
    tzif_spec footer = { '2', 2, ok_times, idx, 2, offs, dsts,
                         "CET-1CEST,M3.5.0", 0 };
    tzif_spec nofooter = { '2', 2, ok_times, idx, 2, offs, dsts, NULL, 0 };
    tzif_spec good = { '2', 2, ok_times, idx, 2, offs, dsts, "", 0 };
    tzif_spec no_types = { '2', 0, NULL, NULL, 0, offs, dsts, "", 0 };
    char want[1024], path[1024];
    scratch *sc = *state;
    sw_zone *z;
    FILE *f;

    write_tzif(sc->dir, "good", &good, 0, 0);
    write_tzif(sc->dir, "order", &order, 0, 0);
    write_tzif(sc->dir, "type", &type, 0, 0);
    write_tzif(sc->dir, "offset", &offset, 0, 0);
    write_tzif(sc->dir, "leap", &leap, 0, 0);
    write_tzif(sc->dir, "footer", &footer, 0, 0);
    write_tzif(sc->dir, "nofooter", &nofooter, 0, 0);
    write_tzif(sc->dir, "cut", &good, 60, 0);
    write_tzif(sc->dir, "version", &good, 0, '9');
    write_tzif(sc->dir, "counts", &no_types, 0, 0);
    snprintf(path, sizeof path, "%s/Test/magic", sc->dir);
    f = fopen(path, "wb");
    assert_non_null(f);
    fputs("# not a zone file, just text that is long enough to have a "
          "header\n", f);
    fclose(f);
    snprintf(path, sizeof path, "%s/Test/empty", sc->dir);
    f = fopen(path, "wb");
    assert_non_null(f);
    fclose(f);

    /* the well-formed file the broken ones are made from loads, with an
     * empty footer: the last type holds after the last transition */
    z = zone_ok("Test/good");
    assert_int_equal(sw_zone_offset_at(z, 49999), 3600);
    assert_int_equal(sw_zone_offset_at(z, 50000), 3600);
    assert_int_equal(sw_zone_offset_at(z, 100000), 7200);
    assert_int_equal(sw_zone_offset_at(z, INT64_C(9000000000000)), 7200);
    sw_zone_free(z);

#define TZIF_ERROR(name, why)                                               \
    do {                                                                    \
        snprintf(want, sizeof want, "zone 'Test/" name "': %s/Test/" name   \
                 " is not a usable TZif file (RFC 8536): " why, sc->dir);   \
        expect_zone_error("Test/" name, SW_ESITE, want);                    \
    } while (0)
    /* RFC 8536 sec. 3.2: transition times ascend */
    TZIF_ERROR("order", "its transition times are not in ascending order");
    /* RFC 8536 sec. 3.2: type indices are below typecnt */
    TZIF_ERROR("type", "a transition names a local time type that is not "
               "there");
    /* RFC 8536 sec. 3.2: utoff SHOULD be in [-89999, 93599] */
    TZIF_ERROR("offset", "it has a UT offset outside -25 h to +26 h");
    TZIF_ERROR("leap", "it counts leap seconds (a \"right/\" zone); use the "
               "zone of the same name without leap seconds");
    /* RFC 8536 sec. 3.3: the footer is a POSIX TZ string */
    TZIF_ERROR("footer", "its footer TZ string is not a POSIX TZ rule this "
               "program can read");
    TZIF_ERROR("nofooter", "its footer is missing");
    /* RFC 8536 sec. 3.1: typecnt MUST NOT be zero */
    TZIF_ERROR("counts", "its TZif header has inconsistent counts");
    TZIF_ERROR("cut", "it is shorter than its header says");
    /* RFC 8536 sec. 3.1: version is 0, '2' or '3' ('4' in RFC 9636) */
    TZIF_ERROR("version", "its TZif version is unknown");
    /* RFC 8536 sec. 3.1: the magic "TZif" */
    TZIF_ERROR("magic", "it does not begin with the TZif magic");
    TZIF_ERROR("empty", "it does not begin with the TZif magic");
#undef TZIF_ERROR
}

/* ---- formatting ----------------------------------------------------------- */

static void test_time_format(void **state)
{
    sw_zone *berlin = zone_ok("Europe/Berlin");
    sw_zone *adelaide = zone_ok("-0330");
    char small[10];
    sw_time_ms t = instant("2025-03-30T01:00:00Z");

    (void)state;
    /* ISO 8601-1:2019 with the offset; UTC as +00:00, never Z (header) */
    assert_format(t, NULL, "2025-03-30T01:00:00+00:00");
    /* Directive 2000/84/EC: 01:00 UTC is 03:00 CEST */
    assert_format(t, berlin, "2025-03-30T03:00:00+02:00");
    assert_format(t - 1, berlin, "2025-03-30T01:59:59.999+01:00");
    assert_format(t + 250, adelaide, "2025-03-29T21:30:00.250-03:30");
    /* POSIX.1-2017 XBD 4.16 formula */
    assert_format(INT64_C(2147483647000), NULL, "2038-01-19T03:14:07+00:00");
    assert_format(-1, NULL, "1969-12-31T23:59:59.999+00:00");
    /* local mean time of Berlin before 1893, +0:53:28 (tz database, from
     * memory): the seconds of the offset are kept */
    assert_format(instant("1880-06-01T00:00:00Z"), berlin,
                  "1880-06-01T00:53:28+00:53:28");
    /* the length is returned as snprintf does, and the text is cut */
    assert_int_equal(sw_time_format(small, sizeof small, t, berlin), 25);
    assert_string_equal(small, "2025-03-3");
    sw_zone_free(berlin);
    sw_zone_free(adelaide);
}

/* Format then parse gives the instant back, in several zones; over the
 * whole range of level times, 1900 to 2200, so including local mean times
 * whose offsets have seconds (Amsterdam +00:19:32 until 1937, Monrovia
 * -00:44:30 until 1972: tz database, from memory), which are written as
 * +hh:mm:ss and must read back. */
static void test_format_round_trip(void **state)
{
    static const char *const specs[] = { "Europe/Berlin", "Australia/Sydney",
                                         "-0330", "+10:00", "UTC",
                                         "Europe/Amsterdam",
                                         "Africa/Monrovia" };
    uint64_t s = 424242;

    (void)state;
    for (size_t i = 0; i < sizeof specs / sizeof specs[0]; i++) {
        sw_zone *z = zone_ok(specs[i]);
        for (int k = 0; k < 50000; k++) {
            char buf[64];
            sw_stamp st;
            sw_time_ms t;
            sw_error err;
            int n;

            s = s * UINT64_C(6364136223846793005) + UINT64_C(1442695040888963407);
            /* 1900 to 2200, with milliseconds half of the time */
            t = INT64_C(-2208988800000)
                + (int64_t)((s >> 8) % UINT64_C(9498643200000));
            if (k % 2)
                t -= t % 1000;
            n = sw_time_format(buf, sizeof buf, t, z);
            assert_int_equal(n, (int)strlen(buf));
            assert_int_equal(sw_stamp_parse(buf, (size_t)n, &st, &err), SW_OK);
            assert_true(st.has_offset);
            assert_int_equal(st.offset_s, sw_zone_offset_at(z, t));
            assert_int_equal(st.wall_ms - (sw_time_ms)st.offset_s * 1000, t);
        }
        sw_zone_free(z);
    }
}

/* ---- months --------------------------------------------------------------- */

static void assert_month(sw_time_ms t, const sw_zone *z, const char *start,
                         const char *next, int yyyymm)
{
    sw_time_ms s = -7, n = -7;
    int ym = -7;

    sw_month_bounds(t, z, &s, &n, &ym);
    assert_int_equal(s, instant(start));
    assert_int_equal(n, instant(next));
    assert_int_equal(ym, yyyymm);
    assert_true(s <= t && t < n);
}

static void test_month_bounds(void **state)
{
    sw_zone *berlin = zone_ok("Europe/Berlin");
    sw_zone *utc = zone_ok("UTC");

    (void)state;
    /* Directive 2000/84/EC: March begins in CET and April in CEST */
    assert_month(instant("2025-03-15T12:00:00Z"), berlin,
                 "2025-02-28T23:00:00Z", "2025-03-31T22:00:00Z", 202503);
    /* the first and last instants of the month */
    assert_month(instant("2025-02-28T23:00:00Z"), berlin,
                 "2025-02-28T23:00:00Z", "2025-03-31T22:00:00Z", 202503);
    assert_month(instant("2025-03-31T21:59:59.999Z"), berlin,
                 "2025-02-28T23:00:00Z", "2025-03-31T22:00:00Z", 202503);
    assert_month(instant("2025-02-28T22:59:59.999Z"), berlin,
                 "2025-01-31T23:00:00Z", "2025-02-28T23:00:00Z", 202502);
    /* December runs into the next year */
    assert_month(instant("2025-12-31T22:59:59Z"), berlin,
                 "2025-11-30T23:00:00Z", "2025-12-31T23:00:00Z", 202512);
    assert_month(instant("2025-12-31T23:00:00Z"), berlin,
                 "2025-12-31T23:00:00Z", "2026-01-31T23:00:00Z", 202601);
    /* UTC, by zone and by NULL; February of a leap year (Gregorian rule) */
    assert_month(instant("2025-03-15T12:00:00Z"), utc,
                 "2025-03-01T00:00:00Z", "2025-04-01T00:00:00Z", 202503);
    assert_month(instant("2024-02-29T23:59:59.999Z"), NULL,
                 "2024-02-01T00:00:00Z", "2024-03-01T00:00:00Z", 202402);
    assert_month(instant("1969-12-31T12:00:00Z"), NULL,
                 "1969-12-01T00:00:00Z", "1970-01-01T00:00:00Z", 196912);
    sw_zone_free(berlin);
    sw_zone_free(utc);
}

/* Midnights that are skipped or shown twice, in a hand-made zone whose
 * summer time begins at 00:00 on 1 March (J60/0) and ends at 00:30
 * daylight time on 1 November (J305/0:30). */
static void test_month_bounds_at_midnight_changes(void **state)
{
    static const int32_t std_off[1] = { 3600 };
    static const unsigned char dsts[1] = { 0 };
    tzif_spec mid = { '2', 0, NULL, NULL, 1, std_off, dsts,
                      "AAA-1BBB,J60/0,J305/0:30", 0 };
    scratch *sc = *state;
    sw_zone *z;
    sw_time_ms utc[SW_ZONE_MAX_SHOWN];

    write_tzif(sc->dir, "midnight", &mid, 0, 0);
    z = zone_ok("Test/midnight");
    /* 1 March 00:00 local never shows: the month begins with the first
     * instant after the gap, 00:00 standard time = 23:00 UTC */
    assert_int_equal(sw_zone_local_to_utc(z, wall("2025-03-01 00:00"), utc), 0);
    assert_month(instant("2025-03-10T00:00:00Z"), z, "2025-02-28T23:00:00Z",
                 "2025-03-31T22:00:00Z", 202503);
    assert_month(instant("2025-02-28T22:59:59Z"), z, "2025-01-31T23:00:00Z",
                 "2025-02-28T23:00:00Z", 202502);
    /* 1 November 00:00 local shows twice (22:00 and 23:00 UTC): the month
     * begins at the first */
    assert_int_equal(sw_zone_local_to_utc(z, wall("2025-11-01 00:00"), utc), 2);
    assert_month(instant("2025-11-10T00:00:00Z"), z, "2025-10-31T22:00:00Z",
                 "2025-11-30T23:00:00Z", 202511);
    assert_month(instant("2025-10-31T22:15:00Z"), z, "2025-10-31T22:00:00Z",
                 "2025-11-30T23:00:00Z", 202511);
    assert_month(instant("2025-10-31T21:59:59Z"), z, "2025-09-30T22:00:00Z",
                 "2025-10-31T22:00:00Z", 202510);
    /* 22:45 UTC reads 23:45 on 31 October again (standard time): still
     * October, which then ends at the second showing of midnight */
    assert_month(instant("2025-10-31T22:45:00Z"), z, "2025-09-30T22:00:00Z",
                 "2025-10-31T23:00:00Z", 202510);
    sw_zone_free(z);
}

/* ---- durations ------------------------------------------------------------ */

static sw_time_ms duration_ok(const char *text)
{
    sw_time_ms d = -1;
    sw_error err;

    sw_error_clear(&err);
    if (sw_duration_parse(text, &d, &err) != SW_OK) {
        print_error("'%s': %s\n", text, err.message);
        fail();
    }
    return d;
}

static void test_durations(void **state)
{
    (void)state;
    assert_int_equal(duration_ok("30min"), 1800000);
    assert_int_equal(duration_ok("2h"), 7200000);
    assert_int_equal(duration_ok("1.5h"), 5400000);
    assert_int_equal(duration_ok("90s"), 90000);
    assert_int_equal(duration_ok("1d"), 86400000);
    assert_int_equal(duration_ok("  15 min "), 900000);
    assert_int_equal(duration_ok("\t2 h\t"), 7200000);
    assert_int_equal(duration_ok("0.25\td"), 21600000);
    assert_int_equal(duration_ok("2.385s"), 2385);
    /* the fraction is rounded half up to the millisecond */
    assert_int_equal(duration_ok("0.0005s"), 1);
    assert_int_equal(duration_ok("0.33333h"), 1199988);
    assert_int_equal(duration_ok("999999999d"), INT64_C(86399999913600000));
    assert_int_equal(duration_ok(".5min"), 30000);
}

static void test_duration_errors(void **state)
{
#define UNITS "write a positive number and one of the units s, min, h or d " \
              "(e.g. 90s, 30min, 1.5h, 1d)"
    (void)state;
    expect_duration_error("15m", "duration '15m' has the unit 'm', which "
                          "could mean minutes or months (and is metres "
                          "elsewhere); write 'min' for minutes");
    expect_duration_error("5 sec", "duration '5 sec' has the unknown unit "
                          "'sec'; " UNITS);
    expect_duration_error("1H", "duration '1H' has the unknown unit 'H'; "
                          UNITS);
    expect_duration_error("30", "duration '30' has no unit; " UNITS);
    expect_duration_error(" 30 \t", "duration '30' has no unit; " UNITS);
    expect_duration_error("1.5 ", "duration '1.5' has no unit; " UNITS);
    expect_duration_error("", "duration is empty; " UNITS);
    expect_duration_error(NULL, "duration is empty; " UNITS);
    expect_duration_error("hourly", "duration 'hourly' does not begin with "
                          "a number; " UNITS);
    expect_duration_error("-5min", "duration '-5min' has a sign; " UNITS);
    expect_duration_error("0min", "duration '0min' is not positive (at "
                          "least 1 ms); " UNITS);
    expect_duration_error("0.0004s", "duration '0.0004s' is not positive (at "
                          "least 1 ms); " UNITS);
    expect_duration_error("1234567890s", "duration '1234567890s' has more "
                          "than 9 digits before or after the decimal point; "
                          UNITS);
    expect_duration_error("1.5.0h", "duration '1.5.0h' has the unknown unit "
                          "'.0h'; " UNITS);
#undef UNITS
}

/* sw_stamp_parse_memo() gives what sw_stamp_parse() gives, result and
 * message, over stamps that share dates, change them, and fail before,
 * in and after the date (the memo must not let a bad time through). */
static void test_stamp_memo_same_as_plain(void **state)
{
    static const char *const stamps[] = {
        "2025-03-30T01:45:00Z", "2025-03-30T02:00:00+02:00",
        "  2025-03-30 02:15 ", "2025-03-30T25:00:00Z", "2025-03-30T02:3",
        "2025-03-30", "2025-03-30T24:00:00Z", "2025-03-30T24:00:01Z",
        "2025-03-31T00:00:00.125Z", "2025-03-31T00:00:00x", "2025-02-29T00:00Z",
        "2025-03-31T00:15:00-03:30", "2024-02-29T23:59:60Z", "2025-13-01 00:00",
        "2024-02-29 00:00", "2024-02-29T00:00:00+24:00", "2024-02-29",
        "2024-02-2", "", "   ", "2024-02-29T12:00:00Z"
    };
    sw_stamp_memo memo;
    (void)state;

    memset(&memo, 0, sizeof memo);
    for (size_t k = 0; k < sizeof stamps / sizeof stamps[0]; k++) {
        sw_stamp a, b;
        sw_error ea, eb;
        size_t len = strlen(stamps[k]);
        int ra, rb;

        memset(&a, 0, sizeof a);
        memset(&b, 0, sizeof b);
        sw_error_clear(&ea);
        sw_error_clear(&eb);
        ra = sw_stamp_parse(stamps[k], len, &a, &ea);
        rb = sw_stamp_parse_memo(stamps[k], len, &memo, &b, &eb);
        assert_int_equal(ra, rb);
        assert_string_equal(ea.message, eb.message);
        if (ra == SW_OK) {
            assert_true(a.wall_ms == b.wall_ms);
            assert_int_equal(a.has_offset, b.has_offset);
            assert_int_equal(a.offset_s, b.offset_s);
        }
    }
}

/* A crafted zone that turns its clock back twice within half an hour
 * (+02:00, then +01:00 at X, then +00:00 at X + 30 min): the wall-clock
 * time X+01:15 (in UTC terms) is shown three times.  All three instants
 * are returned, in order, each showing it; the calendar month still holds
 * every instant around the changes.  (The reader kept only two before.) */
static void test_tzif_time_shown_three_times(void **state)
{
    static const int64_t x = 1743465600; /* 2025-04-01T00:00:00Z */
    static const int64_t times[] = { x, x + 1800 };
    static const unsigned char idx[] = { 1, 2 };
    static const int32_t offs[] = { 7200, 3600, 0 };
    static const unsigned char dsts[] = { 0, 0, 0 };
    tzif_spec triple = { 0, 2, times, idx, 3, offs, dsts, NULL, 0 };
    scratch *sc = *state;
    sw_time_ms utc[SW_ZONE_MAX_SHOWN], local = (x + 4500) * 1000;
    sw_zone *z;

    write_tzif(sc->dir, "triple", &triple, 0, 0);
    z = zone_ok("Test/triple");
    assert_int_equal(sw_zone_local_to_utc(z, local, utc), 3);
    assert_true(utc[0] == (x - 2700) * 1000);  /* at +02:00 */
    assert_true(utc[1] == (x + 900) * 1000);   /* at +01:00 */
    assert_true(utc[2] == (x + 4500) * 1000);  /* at +00:00 */
    for (int i = 0; i < 3; i++)
        assert_true(utc[i] + (sw_time_ms)sw_zone_offset_at(z, utc[i]) * 1000 ==
                    local);
    for (sw_time_ms t = (x - 7200) * 1000; t <= (x + 7200) * 1000;
         t += 60000) {
        sw_time_ms start, next;
        int ym;
        sw_month_bounds(t, z, &start, &next, &ym);
        assert_true(start <= t && t < next);
    }
    sw_zone_free(z);
}

/* Found by fuzz_zone (tests/fuzz/regressions/zone/): a zone at +05:29:09
 * that drops to +00:00 for a moment before 1970 and leaps back at
 * 1970-01-01T00:00:00Z, so that 1969-12-31T23:59:59Z shows a December
 * wall time after the first showing of January's midnight, which is never
 * shown again.  The month of that instant used to end before it. */
static void test_tzif_month_after_its_midnight(void **state)
{
    static const unsigned char bytes[] = {
        84, 90, 105, 102, 0, 50, 0, 0, 0, 0, 0, 0, 0, 46, 0, 0, 0, 0, 8, 0,
        0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 6, 0, 0, 0, 4, 0, 0, 0,
        18, 128, 0, 0, 0, 135, 157, 188, 186, 158, 167, 37, 12, 159, 255,
        255, 255, 255, 255, 255, 1, 0, 0, 0, 0, 0, 0, 1, 2, 3, 2, 0, 0, 82,
        216, 0, 0, 0, 0, 75, 70, 0, 4, 0, 0, 77, 37, 0, 8, 0, 0, 0, 0, 0, 0,
        0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 32, 0, 0,
        0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0,
        0, 0, 0, 0, 0, 0, 64, 0, 0, 20, 0, 0, 158, 166, 30, 112, 159, 222,
        26
    };
    scratch *sc = *state;
    char path[1024];
    FILE *f;
    sw_zone *z;

    snprintf(path, sizeof path, "%s/Test/fuzzed", sc->dir);
    f = fopen(path, "wb");
    assert_non_null(f);
    assert_int_equal(fwrite(bytes, 1, sizeof bytes, f), sizeof bytes);
    assert_int_equal(fclose(f), 0);
    z = zone_ok("Test/fuzzed");
    for (sw_time_ms t = -40000000; t <= 40000000; t += 500) {
        sw_time_ms start, next;
        int ym;
        sw_month_bounds(t, z, &start, &next, &ym);
        assert_true(start <= t && t < next);
    }
    sw_zone_free(z);
}

/* sw_time_format_memo gives sw_time_format's text, instant by instant,
 * along runs that cross midnights, daylight-saving changes (Europe/Berlin,
 * America/St_Johns: a half-hour offset), whole and fractional seconds,
 * historical offsets with seconds, and years below 1000 and beyond 9999
 * (reference: sw_time_format itself, checked against the tz database
 * elsewhere in this file). */
static void test_format_memo_same_as_plain(void **state)
{
    const char *zones[] = {"UTC", "Europe/Berlin", "America/St_Johns",
                           "+05:45"};
    /* starts: 2024-03-30 (Berlin's spring change that night), 1890 (local
     * mean time, offsets with seconds), year 0999, year 10000 */
    const sw_time_ms starts[] = {1711756800000LL, -2524521600000LL,
                                 -30641760000000LL, 253402214400000LL};
    unsigned long seed = 99;
    (void)state;
    for (size_t z = 0; z < sizeof zones / sizeof zones[0]; z++) {
        sw_zone *zone = zone_ok(zones[z]);
        for (size_t k = 0; k < sizeof starts / sizeof starts[0]; k++) {
            sw_time_text_memo m;
            sw_time_ms t = starts[k];
            memset(&m, 0, sizeof m);
            for (int i = 0; i < 3000; i++) {
                char want[64];
                int n = sw_time_format(want, sizeof want, t, zone);
                const char *got = sw_time_format_memo(&m, t, zone);
                assert_string_equal(got, want);
                assert_int_equal(m.len, (size_t)n);
                seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;
                /* mostly 15 min, now and then a fraction or a jump */
                switch ((seed >> 33) % 8) {
                case 0: t += (sw_time_ms)((seed >> 40) % 1000); break;
                case 1: t += 3600000LL * 23; break;
                default: t += 900000; break;
                }
            }
        }
        sw_zone_free(zone);
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_epoch_values),
        cmocka_unit_test(test_days_against_posix_formula),
        cmocka_unit_test(test_leap_years),
        cmocka_unit_test(test_stamp_forms),
        cmocka_unit_test(test_stamp_errors),
        cmocka_unit_test(test_unix_parse),
        cmocka_unit_test(test_fixed_zones),
        cmocka_unit_test(test_zone_errors),
        cmocka_unit_test(test_berlin_2025),
        cmocka_unit_test(test_berlin_beyond_table),
        cmocka_unit_test(test_sydney),
        cmocka_unit_test(test_against_localtime),
        cmocka_unit_test_setup_teardown(test_tzif_versions_and_rules,
                                        scratch_setup, scratch_teardown),
        cmocka_unit_test_setup_teardown(test_tzif_time_shown_three_times,
                                        scratch_setup, scratch_teardown),
        cmocka_unit_test_setup_teardown(test_tzif_month_after_its_midnight,
                                        scratch_setup, scratch_teardown),
        cmocka_unit_test_setup_teardown(test_tzif_errors, scratch_setup,
                                        scratch_teardown),
        cmocka_unit_test(test_time_format),
        cmocka_unit_test(test_format_round_trip),
        cmocka_unit_test(test_month_bounds),
        cmocka_unit_test_setup_teardown(test_month_bounds_at_midnight_changes,
                                        scratch_setup, scratch_teardown),
        cmocka_unit_test(test_durations),
        cmocka_unit_test(test_duration_errors),
        cmocka_unit_test(test_stamp_memo_same_as_plain),
        cmocka_unit_test(test_format_memo_same_as_plain),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
