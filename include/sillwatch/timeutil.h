/* sillwatch: instants, time zones, ISO 8601 timestamps and durations.
 *
 * An instant is an sw_time_ms: milliseconds since 1970-01-01T00:00:00Z on
 * the POSIX time scale (no leap seconds), in an int64_t.  Durations are
 * int64_t milliseconds too, so that sums of hours are exact.
 *
 * Zones are fixed UTC offsets ("+10:00", "-0330", "Z", "UTC") or IANA zone
 * names ("Europe/Berlin") read from the compiled tz database (TZif files,
 * RFC 8536) under $TZDIR or /usr/share/zoneinfo.  No global state: the C
 * library's TZ, tzset() and localtime() are not used.
 */
#ifndef SILLWATCH_TIMEUTIL_H
#define SILLWATCH_TIMEUTIL_H

#include <stddef.h>
#include <stdint.h>

#include "sillwatch/error.h"

typedef int64_t sw_time_ms;

#define SW_MS_PER_S INT64_C(1000)
#define SW_MS_PER_HOUR INT64_C(3600000)

/* ---- zones ---- */

typedef struct sw_zone sw_zone; /* opaque */

/* Load the zone named by `spec`: "Z", "UTC", a fixed offset "+hh:mm",
 * "-hhmm" or "+hh", or an IANA name.  On success *zone is a heap object the
 * caller releases with sw_zone_free().  Errors: SW_ESITE (unknown name,
 * malformed offset, unreadable or malformed TZif file; the message names
 * the spec and the file tried), SW_ENOMEM. */
int sw_zone_load(sw_zone **zone, const char *spec, sw_error *err);

/* Release a zone; NULL is accepted. */
void sw_zone_free(sw_zone *zone);

/* The spec the zone was loaded from ("Europe/Berlin", "+10:00", "UTC"). */
const char *sw_zone_name(const sw_zone *zone);

/* UTC offset in seconds (east positive) in force at instant `t`. */
int32_t sw_zone_offset_at(const sw_zone *zone, sw_time_ms t);

/* The most instants sw_zone_local_to_utc() returns for one wall-clock
 * time (real zones show a time at most twice; a crafted zone file may
 * repeat an hour more often). */
#define SW_ZONE_MAX_SHOWN 4

/* Convert a local wall-clock time (ms since 1970-01-01T00:00 local, i.e.
 * the fields read as if they were UTC) to instants.  Returns the number of
 * instants that show that wall-clock time, in increasing order in utc[]: 1
 * normally, 2 in a repeated hour (more in a crafted zone, at most
 * SW_ZONE_MAX_SHOWN: the earliest ones), 0 in a skipped hour (none
 * stored). */
int sw_zone_local_to_utc(const sw_zone *zone, sw_time_ms local,
                         sw_time_ms utc[SW_ZONE_MAX_SHOWN]);

/* ---- ISO 8601 timestamps ---- */

/* A timestamp as written: its wall-clock fields as ms since
 * 1970-01-01T00:00 (as if UTC), and its offset if it carried one. */
typedef struct sw_stamp {
    sw_time_ms wall_ms;
    int has_offset;     /* 1 if it ended in Z or +-hh:mm / +-hhmm / +-hh */
    int32_t offset_s;   /* east positive; valid when has_offset */
} sw_stamp;

/* Parse an ISO 8601 date-time of `len` bytes (not NUL-terminated):
 * YYYY-MM-DD, then 'T' or one space, then hh:mm, optionally :ss and a
 * fraction (',' or '.', any number of digits, kept to the millisecond,
 * rounded half up), then optionally Z, +-hh:mm, +-hhmm or +-hh.  Leading
 * and trailing blanks are ignored.  Every field is range-checked (month
 * 1-12, day within the month of that year by the Gregorian rules, hour
 * 0-23 (24:00:00 accepted as the end of the day), minute 0-59, second
 * 0-60; a 60th second is folded into the next minute, as POSIX time has no
 * leap seconds).  Returns SW_OK, or SW_EDATA with a message that quotes the
 * text and names the bad field ("timestamp '2025-13-01 00:00' has month
 * 13"); the position fields of *err are left empty for the caller. */
int sw_stamp_parse(const char *text, size_t len, sw_stamp *out, sw_error *err);

/* The date a series of stamps shares, kept by the caller between calls of
 * sw_stamp_parse_memo(); zero it (valid = 0) before the first. */
typedef struct sw_stamp_memo {
    char date[10];      /* YYYY-MM-DD as written */
    int valid;
    int64_t days;       /* its day number (sw_days_from_civil) */
} sw_stamp_memo;

/* sw_stamp_parse(), the same in every result and message, but a date
 * (the first ten bytes after any blanks) equal to the one in *memo is not
 * read again: a log holds dozens of stamps a day.  A date read and found
 * valid is kept in *memo, whatever follows it. */
int sw_stamp_parse_memo(const char *text, size_t len, sw_stamp_memo *memo,
                        sw_stamp *out, sw_error *err);

/* Parse Unix seconds (optionally with a fraction) to an instant.  Returns
 * SW_OK or SW_EDATA as above. */
int sw_unix_parse(const char *text, size_t len, sw_time_ms *out,
                  sw_error *err);

/* Days from 1970-01-01 to year-month-day (proleptic Gregorian), and back. */
int64_t sw_days_from_civil(int64_t y, int m, int d);
void sw_civil_from_days(int64_t days, int64_t *y, int *m, int *d);

/* Write `t` as ISO 8601 in `zone` (NULL: UTC) with its offset, to the
 * second ("2025-03-30T03:00:00+02:00"; "Z" is never used, "+00:00" is),
 * or to the millisecond if `t` has a fraction.  Returns the length
 * written (< n), as snprintf does. */
int sw_time_format(char *buf, size_t n, sw_time_ms t, const sw_zone *zone);

/* sw_time_format() for a run of instants that mostly share a day: the
 * last text is kept, and an instant on the same local day at the same
 * offset, whole seconds like the last, only has its time of day written
 * again.  The same text as sw_time_format(), in m->text (m->len bytes).
 * Start with the memo zeroed. */
typedef struct sw_time_text_memo {
    int valid;
    int64_t day;      /* local days since 1970 of the last text */
    int32_t offset;   /* its UTC offset, seconds */
    size_t len;
    char text[64];
} sw_time_text_memo;
const char *sw_time_format_memo(sw_time_text_memo *m, sw_time_ms t,
                                const sw_zone *zone);

/* The instant at which the calendar month containing `t` (in `zone`)
 * begins, and the one at which the next month begins; and the month as
 * year*100+month (202503).  For zones with daylight saving, month starts
 * are at local midnight.  */
void sw_month_bounds(sw_time_ms t, const sw_zone *zone, sw_time_ms *start,
                     sw_time_ms *next, int *yyyymm);

/* Parse a duration: a positive number followed by a unit: "s", "min",
 * "h", "d" (e.g. "30min", "2h", "1.5h", "90s"); blanks between number and
 * unit allowed.  Returns SW_OK or SW_ESITE with a message naming the text
 * and the accepted units. */
int sw_duration_parse(const char *text, sw_time_ms *out, sw_error *err);

#endif
