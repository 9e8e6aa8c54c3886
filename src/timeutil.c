/* sillwatch: instants, zones, ISO 8601 timestamps and durations (see
 * include/sillwatch/timeutil.h).
 *
 * Calendar arithmetic is Howard Hinnant's days_from_civil and
 * civil_from_days ("chrono-Compatible Low-Level Date Algorithms", public
 * domain), on the proleptic Gregorian calendar.
 *
 * A zone is either a fixed offset or the contents of one TZif file
 * (RFC 8536): the transition instants with the offset and daylight-saving
 * flag in force from each one on, and the file's footer rule (a POSIX TZ
 * string, IEEE Std 1003.1-2017 sec. 8.3) for instants after the last
 * transition.  A zone is never changed after sw_zone_load(), so one zone
 * can be shared by readers on several threads.
 */
#include "sillwatch/timeutil.h"

#include <errno.h>
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define S_PER_DAY INT64_C(86400)
#define MS_PER_DAY INT64_C(86400000)

/* RFC 8536 sec. 3.2 asks that UT offsets lie in [-89999, 93599] s (about
 * -25 h to +26 h); offsets outside are refused when a zone is loaded, which
 * bounds the search in sw_zone_local_to_utc(). */
#define OFFSET_MIN_S (-89999)
#define OFFSET_MAX_S 93599

/* TZif files of the tz database are a few kilobytes. */
#define TZIF_MAX_BYTES (1L << 20)
#define ZONE_NAME_MAX 255

/* Longest part of a text quoted in a message. */
#define QUOTE_MAX 60

/* ---- calendar ------------------------------------------------------------ */

static int64_t floor_div(int64_t a, int64_t b)
{
    int64_t q = a / b;
    if (a % b != 0 && (a < 0) != (b < 0))
        q--;
    return q;
}

static int is_leap(int64_t y)
{
    return y % 4 == 0 && (y % 100 != 0 || y % 400 == 0);
}

/* Days in month m (1-12) of year y, by the Gregorian rule for leap years. */
static int month_days(int64_t y, int m)
{
    static const unsigned char days[12] = {
        31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31
    };
    return m == 2 && is_leap(y) ? 29 : days[m - 1];
}

static const char *const month_names[12] = {
    "January", "February", "March", "April", "May", "June", "July",
    "August", "September", "October", "November", "December"
};

/* Hinnant's days_from_civil: the year is counted from March, so that the
 * leap day is the last day of the (shifted) year; a 400-year era has
 * 146097 days; 719468 is the day number of 1970-01-01 counted from
 * 0000-03-01.  Exact for |y| below about 2.5e16. */
int64_t sw_days_from_civil(int64_t y, int m, int d)
{
    int64_t era, yoe, doy, doe;

    y -= m <= 2;
    era = (y >= 0 ? y : y - 399) / 400;
    yoe = y - era * 400;                                   /* [0, 399] */
    doy = (153 * (m > 2 ? m - 3 : m + 9) + 2) / 5 + d - 1; /* [0, 365] */
    doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;           /* [0, 146096] */
    return era * 146097 + doe - 719468;
}

/* Hinnant's civil_from_days, the inverse of the above. */
void sw_civil_from_days(int64_t days, int64_t *y, int *m, int *d)
{
    int64_t z = days + 719468;
    int64_t era = (z >= 0 ? z : z - 146096) / 146097;
    int64_t doe = z - era * 146097;                               /* [0, 146096] */
    int64_t yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
    int64_t doy = doe - (365 * yoe + yoe / 4 - yoe / 100);        /* [0, 365] */
    int64_t mp = (5 * doy + 2) / 153;                             /* [0, 11] */
    int month = (int)(mp < 10 ? mp + 3 : mp - 9);

    *d = (int)(doy - (153 * mp + 2) / 5 + 1);
    *m = month;
    *y = yoe + era * 400 + (month <= 2);
}

/* ---- the POSIX TZ rule of a TZif footer ---------------------------------- */

/* A date in a POSIX TZ rule: Jn (1-365, 29 February never counted), n
 * (0-365, counted) or Mm.w.d (day d, 0 = Sunday, of week w, 5 = last, of
 * month m). */
typedef struct tz_date {
    char kind; /* 'J', 'N' or 'M' */
    int n, m, w, d;
} tz_date;

typedef struct tz_rule {
    int32_t std_off_s;   /* east positive, as everywhere in this file */
    int32_t dst_off_s;
    int has_dst;
    tz_date start, end;
    int32_t start_time_s; /* local standard time of the change to DST */
    int32_t end_time_s;   /* local daylight time of the change back */
} tz_rule;

/* Day number (days since 1970-01-01) of a rule date in year y. */
static int64_t tz_date_day(const tz_date *td, int64_t y)
{
    int64_t first, day;
    int wd1, dim;

    switch (td->kind) {
    case 'J':
        return sw_days_from_civil(y, 1, 1) + td->n - 1
               + (is_leap(y) && td->n >= 60);
    case 'N':
        return sw_days_from_civil(y, 1, 1) + td->n;
    default:
        /* 1970-01-01 was a Thursday (weekday 4, Sunday = 0). */
        first = sw_days_from_civil(y, td->m, 1);
        wd1 = (int)((first % 7 + 7 + 4) % 7);
        day = 1 + (td->d - wd1 + 7) % 7 + 7 * (td->w - 1);
        dim = month_days(y, td->m);
        while (day > dim)
            day -= 7;
        return first + day - 1;
    }
}

/* Offset of the rule at t_s, whether it is daylight time, and the next
 * change after t_s (INT64_MAX if none).  The six changes of the years
 * around t are put in order; the latest at or before t sets the state.
 * Of two changes at the same instant the one of the later year wins,
 * which makes a rule such as "EST5EDT,0/0,J365/25" (daylight time all
 * year, RFC 8536 sec. 3.3.1) come out right. */
static int32_t tz_rule_info(const tz_rule *r, int64_t t_s, int64_t *until_s,
                            int *is_dst)
{
    int64_t days, y, best = INT64_MIN, next = INT64_MAX;
    int m, d, dst = 0;

    *is_dst = 0;
    if (!r->has_dst) {
        *until_s = INT64_MAX;
        return r->std_off_s;
    }
    days = floor_div(t_s + r->std_off_s, S_PER_DAY);
    sw_civil_from_days(days, &y, &m, &d);
    for (int64_t yy = y - 1; yy <= y + 1; yy++) {
        int64_t on = tz_date_day(&r->start, yy) * S_PER_DAY
                     + r->start_time_s - r->std_off_s;
        int64_t off = tz_date_day(&r->end, yy) * S_PER_DAY
                      + r->end_time_s - r->dst_off_s;
        int64_t when[2];
        int is_on[2];
        if (on <= off) {
            when[0] = on; is_on[0] = 1; when[1] = off; is_on[1] = 0;
        } else {
            when[0] = off; is_on[0] = 0; when[1] = on; is_on[1] = 1;
        }
        for (int k = 0; k < 2; k++) {
            if (when[k] <= t_s) {
                if (when[k] >= best) {
                    best = when[k];
                    dst = is_on[k];
                }
            } else if (when[k] < next) {
                next = when[k];
            }
        }
    }
    *until_s = next;
    *is_dst = dst;
    return dst ? r->dst_off_s : r->std_off_s;
}

/* A small cursor over a NUL-terminated TZ string. */
static int tz_parse_number(const char **pp, int max_digits, int *value)
{
    const char *p = *pp;
    int v = 0, n = 0;

    while (n < max_digits && *p >= '0' && *p <= '9') {
        v = v * 10 + (*p - '0');
        p++;
        n++;
    }
    if (n == 0)
        return -1;
    *value = v;
    *pp = p;
    return 0;
}

/* [+-]hh[:mm[:ss]] with hh up to max_hours; the value in seconds. */
static int tz_parse_hms(const char **pp, int max_hours, int32_t *secs)
{
    const char *p = *pp;
    int sign = 1, h, mi = 0, s = 0;

    if (*p == '+' || *p == '-') {
        sign = *p == '-' ? -1 : 1;
        p++;
    }
    if (tz_parse_number(&p, 3, &h) != 0 || h > max_hours)
        return -1;
    if (*p == ':') {
        p++;
        if (tz_parse_number(&p, 2, &mi) != 0 || mi > 59)
            return -1;
        if (*p == ':') {
            p++;
            if (tz_parse_number(&p, 2, &s) != 0 || s > 59)
                return -1;
        }
    }
    *secs = (int32_t)(sign * (h * 3600 + mi * 60 + s));
    *pp = p;
    return 0;
}

/* A zone abbreviation: three or more letters, or <...> with letters,
 * digits, '+' and '-'. */
static int tz_parse_name(const char **pp)
{
    const char *p = *pp;
    int n = 0;

    if (*p == '<') {
        p++;
        while ((*p >= 'A' && *p <= 'Z') || (*p >= 'a' && *p <= 'z')
               || (*p >= '0' && *p <= '9') || *p == '+' || *p == '-') {
            p++;
            n++;
        }
        if (*p != '>' || n < 3)
            return -1;
        p++;
    } else {
        while ((*p >= 'A' && *p <= 'Z') || (*p >= 'a' && *p <= 'z')) {
            p++;
            n++;
        }
        if (n < 3)
            return -1;
    }
    *pp = p;
    return 0;
}

static int tz_parse_date(const char **pp, tz_date *td)
{
    const char *p = *pp;

    if (*p == 'J') {
        p++;
        td->kind = 'J';
        if (tz_parse_number(&p, 3, &td->n) != 0 || td->n < 1 || td->n > 365)
            return -1;
    } else if (*p == 'M') {
        p++;
        td->kind = 'M';
        if (tz_parse_number(&p, 2, &td->m) != 0 || td->m < 1 || td->m > 12
            || *p++ != '.'
            || tz_parse_number(&p, 1, &td->w) != 0 || td->w < 1 || td->w > 5
            || *p++ != '.'
            || tz_parse_number(&p, 1, &td->d) != 0 || td->d > 6)
            return -1;
    } else {
        td->kind = 'N';
        if (tz_parse_number(&p, 3, &td->n) != 0 || td->n > 365)
            return -1;
    }
    *pp = p;
    return 0;
}

/* A rule date with its optional "/time" (default 02:00:00); RFC 8536
 * sec. 3.3.1 allows hours from -167 to 167 here. */
static int tz_parse_change(const char **pp, tz_date *td, int32_t *time_s)
{
    if (tz_parse_date(pp, td) != 0)
        return -1;
    *time_s = 7200;
    if (**pp == '/') {
        (*pp)++;
        return tz_parse_hms(pp, 167, time_s);
    }
    return 0;
}

/* Parse "std offset [dst [offset] ,start[/time],end[/time]]".  POSIX
 * offsets are west positive; they are stored east positive.  A daylight
 * name without a rule is refused (its default is implementation-defined,
 * and TZif footers always give the rule). */
static int tz_rule_parse(const char *s, tz_rule *r)
{
    const char *p = s;
    int32_t off;

    memset(r, 0, sizeof *r);
    if (tz_parse_name(&p) != 0 || tz_parse_hms(&p, 24, &off) != 0)
        return -1;
    r->std_off_s = -off;
    r->dst_off_s = r->std_off_s;
    if (*p == '\0')
        return 0;
    if (tz_parse_name(&p) != 0)
        return -1;
    r->has_dst = 1;
    r->dst_off_s = r->std_off_s + 3600;
    if (*p != ',') {
        if (tz_parse_hms(&p, 24, &off) != 0)
            return -1;
        r->dst_off_s = -off;
    }
    if (*p++ != ',' || tz_parse_change(&p, &r->start, &r->start_time_s) != 0
        || *p++ != ',' || tz_parse_change(&p, &r->end, &r->end_time_s) != 0)
        return -1;
    return *p == '\0' ? 0 : -1;
}

/* ---- zones ---------------------------------------------------------------- */

struct sw_zone {
    char *name;
    int is_fixed;
    int32_t fixed_s;        /* fixed zones: the offset */
    int32_t before_s;       /* offset before the first transition */
    size_t n_trans;
    int64_t *trans_s;       /* transition instants, strictly ascending:
                               the file's, then the footer rule's up to
                               EXTEND_UNTIL_S (see extend_table) */
    int32_t *trans_off_s;   /* offset in force from trans_s[i] on */
    unsigned char *trans_dst; /* 1 if that offset is daylight time */
    int has_rule;           /* footer rule for t >= the last transition */
    tz_rule rule;
    int32_t min_off_s, max_off_s; /* bounds of every offset the zone uses */
};

/* Offset in force at t_s and the instant of the next transition after
 * it (INT64_MAX if none is known). */
static int32_t zone_info(const sw_zone *z, int64_t t_s, int64_t *until_s)
{
    size_t lo, hi, n = z->n_trans;

    if (z->is_fixed) {
        *until_s = INT64_MAX;
        return z->fixed_s;
    }
    if (n == 0 || t_s >= z->trans_s[n - 1]) {
        if (z->has_rule) {
            int is_dst;
            return tz_rule_info(&z->rule, t_s, until_s, &is_dst);
        }
        *until_s = INT64_MAX;
        return n == 0 ? z->before_s : z->trans_off_s[n - 1];
    }
    if (t_s < z->trans_s[0]) {
        *until_s = z->trans_s[0];
        return z->before_s;
    }
    /* Binary search with trans_s[lo] <= t_s < trans_s[hi]. */
    lo = 0;
    hi = n - 1;
    while (hi - lo > 1) {
        size_t mid = lo + (hi - lo) / 2;
        if (z->trans_s[mid] <= t_s)
            lo = mid;
        else
            hi = mid;
    }
    *until_s = z->trans_s[hi];
    return z->trans_off_s[lo];
}

int32_t sw_zone_offset_at(const sw_zone *zone, sw_time_ms t)
{
    int64_t until;

    if (zone == NULL)
        return 0;
    if (zone->is_fixed)
        return zone->fixed_s;
    return zone_info(zone, floor_div(t, SW_MS_PER_S), &until);
}

/* The instants that show the wall-clock time `local`, as in
 * sw_zone_local_to_utc(); when there are none, *gap_end is the first
 * instant after the skipped interval.  Every candidate u satisfies
 * u = local - offset(u), and the offset lies in [min_off, max_off], so
 * only the transitions in [local - max_off, local - min_off] matter; they
 * are walked in order. */
static int local_to_utc(const sw_zone *z, sw_time_ms local,
                        sw_time_ms utc[SW_ZONE_MAX_SHOWN], sw_time_ms *gap_end)
{
    int64_t local_s = floor_div(local, SW_MS_PER_S);
    int64_t t = local_s - z->max_off_s, last = local_s - z->min_off_s;
    int count = 0, found_gap = 0;

    *gap_end = local - (sw_time_ms)z->max_off_s * SW_MS_PER_S;
    if (z->is_fixed) {
        utc[0] = local - (sw_time_ms)z->fixed_s * SW_MS_PER_S;
        return 1;
    }
    for (int guard = 0; t <= last && guard < 64; guard++) {
        int64_t until;
        int32_t off = zone_info(z, t, &until);
        int64_t u = local_s - off;
        if (u >= t && u < until) {
            if (count < SW_ZONE_MAX_SHOWN)
                utc[count] = local - (sw_time_ms)off * SW_MS_PER_S;
            count++;
        } else if (u < t && !found_gap) {
            /* The wall clock jumped past `local` at t. */
            *gap_end = t * SW_MS_PER_S;
            found_gap = 1;
        }
        if (until == INT64_MAX)
            break;
        t = until;
    }
    return count > SW_ZONE_MAX_SHOWN ? SW_ZONE_MAX_SHOWN : count;
}

int sw_zone_local_to_utc(const sw_zone *zone, sw_time_ms local,
                         sw_time_ms utc[SW_ZONE_MAX_SHOWN])
{
    sw_time_ms gap_end;

    if (zone == NULL) {
        utc[0] = local;
        return 1;
    }
    return local_to_utc(zone, local, utc, &gap_end);
}

const char *sw_zone_name(const sw_zone *zone)
{
    return zone == NULL ? "UTC" : zone->name;
}

void sw_zone_free(sw_zone *zone)
{
    if (zone == NULL)
        return;
    free(zone->name);
    free(zone->trans_s);
    free(zone->trans_off_s);
    free(zone->trans_dst);
    free(zone);
}

/* Parse a fixed offset "+hh:mm", "-hhmm" or "+hh" (hours 00-23, minutes
 * 00-59).  Returns 0 and the offset in seconds, or -1. */
static int parse_fixed_offset(const char *s, size_t n, int32_t *off_s)
{
    int sign, h, mi = 0;

    if (n != 3 && n != 5 && n != 6)
        return -1;
    if ((s[0] != '+' && s[0] != '-') || (unsigned)(s[1] - '0') > 9u
        || (unsigned)(s[2] - '0') > 9u)
        return -1;
    sign = s[0] == '-' ? -1 : 1;
    h = (s[1] - '0') * 10 + (s[2] - '0');
    if (n > 3) {
        const char *mm = n == 6 ? s + 4 : s + 3;
        if ((n == 6 && s[3] != ':') || (unsigned)(mm[0] - '0') > 9u
            || (unsigned)(mm[1] - '0') > 9u)
            return -1;
        mi = (mm[0] - '0') * 10 + (mm[1] - '0');
    }
    if (h > 23 || mi > 59)
        return -1;
    *off_s = (int32_t)(sign * (h * 3600 + mi * 60));
    return 0;
}

/* Big-endian readers over the TZif bytes; the caller checks the length. */
static int32_t be32(const unsigned char *p)
{
    uint32_t v = (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16
                 | (uint32_t)p[2] << 8 | (uint32_t)p[3];
    return (int32_t)v;
}

static int64_t be64(const unsigned char *p)
{
    uint64_t v = 0;
    for (int i = 0; i < 8; i++)
        v = v << 8 | p[i];
    return (int64_t)v;
}

/* The six counts of a TZif header (RFC 8536 sec. 3.1). */
typedef struct tzif_header {
    int version;  /* 1, 2, 3 or 4 */
    uint32_t isutcnt, isstdcnt, leapcnt, timecnt, typecnt, charcnt;
} tzif_header;

/* Read a header at buf[pos..): magic, version and counts; returns a
 * reason for a message or NULL. */
static const char *tzif_read_header(const unsigned char *buf, size_t n,
                                    size_t pos, tzif_header *h)
{
    const unsigned char *p = buf + pos;

    if (n - pos < 44 || memcmp(p, "TZif", 4) != 0)
        return "it does not begin with the TZif magic";
    if (p[4] == 0)
        h->version = 1;
    else if (p[4] >= '2' && p[4] <= '4')
        h->version = p[4] - '0';
    else
        return "its TZif version is unknown";
    h->isutcnt = (uint32_t)be32(p + 20);
    h->isstdcnt = (uint32_t)be32(p + 24);
    h->leapcnt = (uint32_t)be32(p + 28);
    h->timecnt = (uint32_t)be32(p + 32);
    h->typecnt = (uint32_t)be32(p + 36);
    h->charcnt = (uint32_t)be32(p + 40);
    return NULL;
}

/* Check the counts of the header whose data block is read; returns a
 * reason for a message or NULL.  (RFC 8536 sec. 4: a reader of version 2+
 * checks the version 1 header only enough to skip its block.) */
static const char *tzif_check_counts(const tzif_header *h)
{
    if (h->typecnt == 0 || h->typecnt > 256 || h->charcnt == 0
        || (h->isutcnt != 0 && h->isutcnt != h->typecnt)
        || (h->isstdcnt != 0 && h->isstdcnt != h->typecnt))
        return "its TZif header has inconsistent counts";
    if (h->leapcnt != 0)
        return "it counts leap seconds (a \"right/\" zone); use the zone "
               "of the same name without leap seconds";
    return NULL;
}

/* Size of the data block after a header, with time_size-byte times. */
static uint64_t tzif_block_size(const tzif_header *h, unsigned time_size)
{
    return (uint64_t)h->timecnt * (time_size + 1) + (uint64_t)h->typecnt * 6
           + h->charcnt + (uint64_t)h->leapcnt * (time_size + 4)
           + h->isstdcnt + h->isutcnt;
}

/* The reason given when memory runs out; compared by address. */
static const char tzif_oom[] = "out of memory";

/* Fill the zone's tables from the data block at buf[pos..); returns a
 * reason for a message (tzif_oom when memory runs out) or NULL.
 * *footer_at is set past the block. */
static const char *tzif_read_block(sw_zone *z, const unsigned char *buf,
                                   size_t n, size_t pos,
                                   const tzif_header *h, unsigned time_size,
                                   size_t *footer_at)
{
    const unsigned char *times = buf + pos;
    const unsigned char *idx = times + (size_t)h->timecnt * time_size;
    const unsigned char *types = idx + h->timecnt;
    int32_t type_off[256];
    unsigned char type_dst[256];

    if (tzif_block_size(h, time_size) > n - pos)
        return "it is shorter than its header says";
    for (uint32_t i = 0; i < h->typecnt; i++) {
        const unsigned char *tt = types + 6 * (size_t)i;
        type_off[i] = be32(tt);
        type_dst[i] = tt[4];
        if (type_off[i] < OFFSET_MIN_S || type_off[i] > OFFSET_MAX_S)
            return "it has a UT offset outside -25 h to +26 h";
        if (tt[4] > 1 || tt[5] >= h->charcnt)
            return "it has a malformed local time type";
    }
    z->n_trans = h->timecnt;
    if (h->timecnt > 0) {
        z->trans_s = malloc(h->timecnt * sizeof *z->trans_s);
        z->trans_off_s = malloc(h->timecnt * sizeof *z->trans_off_s);
        z->trans_dst = malloc(h->timecnt);
        if (z->trans_s == NULL || z->trans_off_s == NULL
            || z->trans_dst == NULL)
            return tzif_oom;
    }
    for (uint32_t i = 0; i < h->timecnt; i++) {
        int64_t t = time_size == 8 ? be64(times + 8 * (size_t)i)
                                   : (int64_t)be32(times + 4 * (size_t)i);
        if (idx[i] >= h->typecnt)
            return "a transition names a local time type that is not there";
        if (i > 0 && t <= z->trans_s[i - 1])
            return "its transition times are not in ascending order";
        z->trans_s[i] = t;
        z->trans_off_s[i] = type_off[idx[i]];
        z->trans_dst[i] = type_dst[idx[i]];
    }
    /* RFC 8536 sec. 3.2: time type 0 applies before the first transition. */
    z->before_s = type_off[0];
    z->min_off_s = z->max_off_s = type_off[0];
    for (uint32_t i = 0; i < h->typecnt; i++) {
        if (type_off[i] < z->min_off_s)
            z->min_off_s = type_off[i];
        if (type_off[i] > z->max_off_s)
            z->max_off_s = type_off[i];
    }
    *footer_at = pos + (size_t)tzif_block_size(h, time_size);
    return NULL;
}

/* Transitions are generated from the footer rule up to this instant
 * (2100-01-01T00:00:00Z) when a zone is loaded, so that the usual years
 * cost a binary search rather than an evaluation of the rule. */
#define EXTEND_UNTIL_S INT64_C(4102444800)
#define EXTEND_MAX 1024

/* Append to the table the changes of the footer rule after the last
 * transition and before EXTEND_UNTIL_S.  The result is the same function
 * of time: the rule is walked from change to change with tz_rule_info()
 * itself, changes that change nothing are left out, and nothing is added
 * unless the table's last offset is the rule's (RFC 8536 sec. 3.3 asks
 * for that agreement; without it the rule keeps deciding).  Returns 0,
 * or -1 when memory runs out. */
static int extend_table(sw_zone *z)
{
    size_t n = z->n_trans, added = 0;
    int64_t t0, until0, *ts;
    int32_t off0, *offs;
    unsigned char *dsts;
    int dst0;

    if (!z->has_rule || !z->rule.has_dst || n == 0
        || z->trans_s[n - 1] >= EXTEND_UNTIL_S)
        return 0;
    t0 = z->trans_s[n - 1];
    off0 = tz_rule_info(&z->rule, t0, &until0, &dst0);
    if (off0 != z->trans_off_s[n - 1] || dst0 != z->trans_dst[n - 1])
        return 0;
    /* Two walks: the first counts, the second fills. */
    for (int fill = 0; fill < 2; fill++) {
        int64_t t, until = until0;
        int32_t off = off0;
        int dst = dst0;

        if (fill) {
            if (added == 0)
                return 0;
            ts = realloc(z->trans_s, (n + added) * sizeof *ts);
            if (ts == NULL)
                return -1;
            z->trans_s = ts;
            offs = realloc(z->trans_off_s, (n + added) * sizeof *offs);
            if (offs == NULL)
                return -1;
            z->trans_off_s = offs;
            dsts = realloc(z->trans_dst, n + added);
            if (dsts == NULL)
                return -1;
            z->trans_dst = dsts;
            added = 0;
        }
        while (until < EXTEND_UNTIL_S && added < EXTEND_MAX) {
            int32_t next_off;
            int next_dst;
            t = until;
            next_off = tz_rule_info(&z->rule, t, &until, &next_dst);
            if (next_off == off && next_dst == dst)
                continue;
            if (fill) {
                z->trans_s[n + added] = t;
                z->trans_off_s[n + added] = next_off;
                z->trans_dst[n + added] = (unsigned char)next_dst;
            }
            added++;
            off = next_off;
            dst = next_dst;
        }
    }
    z->n_trans = n + added;
    return 0;
}

/* Parse a whole TZif file into z; returns a reason (tzif_oom when memory
 * runs out) or NULL. */
static const char *tzif_parse(sw_zone *z, const unsigned char *buf, size_t n)
{
    tzif_header h;
    const char *why;
    size_t pos = 0, footer_at;

    why = tzif_read_header(buf, n, 0, &h);
    if (why != NULL)
        return why;
    if (h.version >= 2) {
        /* Skip the 32-bit block; RFC 8536 sec. 4 says readers of version
         * 2+ use the second header and its 64-bit data. */
        uint64_t skip = 44 + tzif_block_size(&h, 4);
        if (skip > n)
            return "it is shorter than its header says";
        pos = (size_t)skip;
        why = tzif_read_header(buf, n, pos, &h);
        if (why != NULL)
            return why;
        pos += 44;
        why = tzif_check_counts(&h);
        if (why == NULL)
            why = tzif_read_block(z, buf, n, pos, &h, 8, &footer_at);
    } else {
        why = tzif_check_counts(&h);
        if (why == NULL)
            why = tzif_read_block(z, buf, n, 44, &h, 4, &footer_at);
    }
    if (why != NULL)
        return why;
    if (h.version >= 2) {
        /* The footer: newline, POSIX TZ string, newline (sec. 3.3). */
        const unsigned char *f = buf + footer_at, *nl;
        char tz[128];
        size_t tz_len;

        if (footer_at >= n || f[0] != '\n')
            return "its footer is missing";
        nl = memchr(f + 1, '\n', n - footer_at - 1);
        if (nl == NULL)
            return "its footer is not terminated by a newline";
        tz_len = (size_t)(nl - (f + 1));
        if (tz_len >= sizeof tz)
            return "its footer TZ string is too long";
        memcpy(tz, f + 1, tz_len);
        tz[tz_len] = '\0';
        if (tz_len > 0) {
            /* POSIX offsets have at most 24:59:59, inside the bounds
             * that OFFSET_MIN_S and OFFSET_MAX_S set for the table. */
            if (tz_rule_parse(tz, &z->rule) != 0)
                return "its footer TZ string is not a POSIX TZ rule this "
                       "program can read";
            z->has_rule = 1;
            if (extend_table(z) != 0)
                return tzif_oom;
            if (z->rule.std_off_s < z->min_off_s)
                z->min_off_s = z->rule.std_off_s;
            if (z->rule.dst_off_s < z->min_off_s)
                z->min_off_s = z->rule.dst_off_s;
            if (z->rule.std_off_s > z->max_off_s)
                z->max_off_s = z->rule.std_off_s;
            if (z->rule.dst_off_s > z->max_off_s)
                z->max_off_s = z->rule.dst_off_s;
        }
    }
    return NULL;
}

/* Read a whole file into a heap buffer of at most TZIF_MAX_BYTES.
 * Returns 0, or -1 with errno set (EFBIG for a file too large). */
static int read_file(const char *path, unsigned char **data, size_t *size)
{
    FILE *f = fopen(path, "rb");
    unsigned char *buf = NULL;
    size_t n = 0, cap = 4096;
    int saved;

    if (f == NULL)
        return -1;
    buf = malloc(cap);
    if (buf == NULL)
        goto fail;
    for (;;) {
        size_t got = fread(buf + n, 1, cap - n, f);
        n += got;
        if (got == 0) {
            if (ferror(f))
                goto fail;
            break;
        }
        if (n == cap) {
            unsigned char *bigger;
            if (cap >= (size_t)TZIF_MAX_BYTES) {
                errno = EFBIG;
                goto fail;
            }
            bigger = realloc(buf, cap * 2);
            if (bigger == NULL)
                goto fail;
            buf = bigger;
            cap *= 2;
        }
    }
    fclose(f);
    *data = buf;
    *size = n;
    return 0;
fail:
    saved = errno;
    free(buf);
    fclose(f);
    errno = saved;
    return -1;
}

/* Is `name` acceptable as a path below the zone directory: not empty, not
 * absolute, no "..", only the characters of tz database names? */
static const char *bad_zone_name(const char *name, size_t n)
{
    if (n == 0)
        return "is empty";
    if (n > ZONE_NAME_MAX)
        return "is too long for a zone name";
    if (name[0] == '/')
        return "starts with '/' (zone names are relative to the zone "
               "directory, e.g. Europe/Berlin)";
    if (strstr(name, "..") != NULL)
        return "contains \"..\"";
    for (size_t i = 0; i < n; i++) {
        char c = name[i];
        if (!((c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z')
              || (c >= '0' && c <= '9') || c == '/' || c == '_' || c == '-'
              || c == '+'))
            return "contains a character that no zone name has";
    }
    return NULL;
}

int sw_zone_load(sw_zone **zone, const char *spec, sw_error *err)
{
    sw_zone *z;
    size_t n;
    const char *why, *dir;
    char path[ZONE_NAME_MAX + 1024];
    unsigned char *data = NULL;
    size_t size = 0;
    int status = SW_OK;

    *zone = NULL;
    if (spec == NULL)
        spec = "";
    n = strlen(spec);
    z = calloc(1, sizeof *z);
    if (z == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                            "out of memory loading zone '%.*s'",
                            QUOTE_MAX, spec);
    z->name = malloc(n + 1);
    if (z->name == NULL) {
        status = sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                              "out of memory loading zone '%.*s'",
                              QUOTE_MAX, spec);
        goto cleanup;
    }
    memcpy(z->name, spec, n + 1);

    if (strcmp(spec, "Z") == 0 || strcmp(spec, "UTC") == 0) {
        z->is_fixed = 1;
        goto done;
    }
    if (spec[0] == '+' || spec[0] == '-') {
        if (parse_fixed_offset(spec, n, &z->fixed_s) != 0) {
            status = sw_error_set(err, SW_ESITE, NULL, 0, 0,
                                  "zone '%.*s' is not a valid UTC offset; "
                                  "write +hh:mm, -hhmm or +hh with hours "
                                  "00 to 23 and minutes 00 to 59 (e.g. "
                                  "+10:00, -0330)",
                                  QUOTE_MAX, spec);
            goto cleanup;
        }
        z->is_fixed = 1;
        goto done;
    }
    why = bad_zone_name(spec, n);
    if (why != NULL) {
        status = sw_error_set(err, SW_ESITE, NULL, 0, 0,
                              "zone '%.*s' %s; give an IANA zone name such "
                              "as Europe/Berlin, or a UTC offset such as "
                              "+01:00",
                              QUOTE_MAX, spec, why);
        goto cleanup;
    }
    dir = getenv("TZDIR");
    if (dir == NULL || dir[0] == '\0')
        dir = "/usr/share/zoneinfo";
    if ((size_t)snprintf(path, sizeof path, "%s/%s", dir, spec)
        >= sizeof path) {
        status = sw_error_set(err, SW_ESITE, NULL, 0, 0,
                              "zone '%s': the path under the zone "
                              "directory '%.*s' is too long",
                              spec, QUOTE_MAX, dir);
        goto cleanup;
    }
    if (read_file(path, &data, &size) != 0) {
        int e = errno;
        if (e == ENOMEM)
            status = sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                                  "out of memory reading zone file %s",
                                  path);
        else
            status = sw_error_set(err, SW_ESITE, NULL, 0, 0,
                                  "zone '%s' is not known: cannot read %s "
                                  "(%s); give an IANA zone name such as "
                                  "Europe/Berlin (set TZDIR if the zone "
                                  "files are elsewhere), or a UTC offset "
                                  "such as +01:00",
                                  spec, path, strerror(e));
        goto cleanup;
    }
    why = tzif_parse(z, data, size);
    if (why == tzif_oom) {
        status = sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                              "out of memory reading zone file %s", path);
        goto cleanup;
    }
    if (why != NULL) {
        status = sw_error_set(err, SW_ESITE, NULL, 0, 0,
                              "zone '%s': %s is not a usable TZif file "
                              "(RFC 8536): %s",
                              spec, path, why);
        goto cleanup;
    }
done:
    if (z->is_fixed) {
        z->min_off_s = z->max_off_s = z->before_s = z->fixed_s;
    }
    free(data);
    *zone = z;
    return SW_OK;
cleanup:
    free(data);
    sw_zone_free(z);
    return status;
}

/* ---- timestamps ---------------------------------------------------------- */

/* Shortened text for messages: at most QUOTE_MAX bytes, then "...". */
typedef struct quote {
    int len;
    const char *more;
} quote;

static quote quote_of(size_t n)
{
    quote q;
    q.len = n > QUOTE_MAX ? QUOTE_MAX : (int)n;
    q.more = n > QUOTE_MAX ? "..." : "";
    return q;
}

/* A timestamp whose shape is wrong: `what` says where. */
static int stamp_shape_error(sw_error *err, const char *p, size_t n,
                             const char *what)
{
    quote q = quote_of(n);
    return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                        "timestamp '%.*s%s' %s; expected "
                        "YYYY-MM-DD hh:mm[:ss[.fff]][Z|+hh:mm]",
                        q.len, p, q.more, what);
}

/* A field whose value is out of range. */
static int stamp_range_error(sw_error *err, const char *p, size_t n,
                             const char *field, int value)
{
    quote q = quote_of(n);
    return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                        "timestamp '%.*s%s' has %s %02d",
                        q.len, p, q.more, field, value);
}

static int is_blank(char c)
{
    return c == ' ' || c == '\t';
}

/* The value of a decimal digit, or a number above 9 for anything else. */
static unsigned digit(char c)
{
    return (unsigned)((unsigned char)c - '0');
}

/* Two digits at p as a number, or -1. */
static int two_digits(const char *p)
{
    unsigned a = digit(p[0]), b = digit(p[1]);
    return (a > 9u || b > 9u) ? -1 : (int)(a * 10u + b);
}

/* The date YYYY-MM-DD at the start of the n bytes at p: its day number
 * in *days, or SW_EDATA with a message as sw_stamp_parse() gives it. */
static int read_date(const char *p, size_t n, int64_t *days, sw_error *err)
{
    int year, month, day, dim;
    unsigned y0, y1, y2, y3;

    if (n < 10) {
        if (n >= 4 && digit(p[0]) <= 9u && digit(p[1]) <= 9u
            && digit(p[2]) <= 9u && digit(p[3]) <= 9u)
            return stamp_shape_error(err, p, n, "has no complete date");
        return stamp_shape_error(err, p, n, "does not begin with a date");
    }
    y0 = digit(p[0]);
    y1 = digit(p[1]);
    y2 = digit(p[2]);
    y3 = digit(p[3]);
    if (y0 > 9u || y1 > 9u || y2 > 9u || y3 > 9u)
        return stamp_shape_error(err, p, n,
                                 "does not begin with a four-digit year");
    if (p[4] != '-')
        return stamp_shape_error(err, p, n,
                                 "has no '-' after the year");
    month = two_digits(p + 5);
    if (month < 0)
        return stamp_shape_error(err, p, n,
                                 "has a month that is not two digits");
    if (p[7] != '-')
        return stamp_shape_error(err, p, n,
                                 "has no '-' after the month");
    day = two_digits(p + 8);
    if (day < 0)
        return stamp_shape_error(err, p, n,
                                 "has a day that is not two digits");
    year = (int)(y0 * 1000u + y1 * 100u + y2 * 10u + y3);
    if (month < 1 || month > 12)
        return stamp_range_error(err, p, n, "month", month);
    dim = month_days(year, month);
    if (day < 1 || day > dim) {
        quote q = quote_of(n);
        if (day == 0)
            return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                                "timestamp '%.*s%s' has day 00",
                                q.len, p, q.more);
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "timestamp '%.*s%s' has day %d but %s %d has "
                            "%d days",
                            q.len, p, q.more, day, month_names[month - 1],
                            year, dim);
    }

    *days = sw_days_from_civil(year, month, day);
    return SW_OK;
}

/* sw_stamp_parse(), with the date's day number taken from `memo` (which
 * may be NULL) when the date's ten bytes are those it holds, and kept
 * there when not.  The shapes are checked at fixed positions, digit by
 * digit, without sscanf or strtol: this runs once per record of a level
 * file. */
static int stamp_parse(const char *text, size_t len, sw_stamp_memo *memo,
                       sw_stamp *out, sw_error *err)
{
    const char *p = text, *end = text + len;
    size_t n, i;
    int hour, minute, second = 0, ms = 0;
    int frac_nonzero = 0;
    int64_t days = 0;
    sw_stamp st;

    if (text == NULL || len == 0)
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "timestamp is empty; expected "
                            "YYYY-MM-DD hh:mm[:ss[.fff]][Z|+hh:mm]");
    while (p < end && is_blank(*p))
        p++;
    while (end > p && is_blank(end[-1]))
        end--;
    n = (size_t)(end - p);
    if (n == 0)
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "timestamp is blank; expected "
                            "YYYY-MM-DD hh:mm[:ss[.fff]][Z|+hh:mm]");
    /* A NUL byte would cut the text quoted in any message below short
     * (a binary field was quoted as ''): name it instead. */
    if (memchr(p, '\0', n) != NULL)
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "timestamp holds a NUL byte (is this a text "
                            "file?)");

    /* YYYY-MM-DD, read already when the memo holds it */
    if (memo != NULL && memo->valid && n >= 10 &&
        memcmp(p, memo->date, sizeof memo->date) == 0) {
        days = memo->days;
    } else {
        int rc = read_date(p, n, &days, err);
        if (rc != SW_OK)
            return rc;
        if (memo != NULL) {
            memcpy(memo->date, p, sizeof memo->date);
            memo->days = days;
            memo->valid = 1;
        }
    }

    /* 'T' or ' ', then hh:mm */
    if (n == 10) {
        quote q = quote_of(n);
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "timestamp '%.*s%s' has no time of day; write "
                            "it as YYYY-MM-DD hh:mm (e.g. %.10s 00:00)",
                            q.len, p, q.more, p);
    }
    if (p[10] != 'T' && p[10] != ' ')
        return stamp_shape_error(err, p, n,
                                 "has no 'T' or space between the date "
                                 "and the time");
    if (n < 16 || (hour = two_digits(p + 11)) < 0 || p[13] != ':'
        || (minute = two_digits(p + 14)) < 0)
        return stamp_shape_error(err, p, n,
                                 "has a time of day that is not hh:mm");
    i = 16;

    /* :ss and a fraction of the second */
    if (i < n && p[i] == ':') {
        if (n - i < 3 || (second = two_digits(p + i + 1)) < 0)
            return stamp_shape_error(err, p, n,
                                     "has seconds that are not two digits");
        i += 3;
        if (i < n && (p[i] == '.' || p[i] == ',')) {
            size_t k = 0;
            i++;
            /* Keep three digits; the fourth rounds half up (the rest can
             * only add to it, never decide a tie). */
            for (; i < n && digit(p[i]) <= 9u; i++, k++) {
                unsigned d = digit(p[i]);
                if (k < 3)
                    ms = ms * 10 + (int)d;
                else if (k == 3 && d >= 5)
                    ms++;
                frac_nonzero |= d != 0;
            }
            if (k == 0)
                return stamp_shape_error(err, p, n,
                                         "has a decimal separator without "
                                         "digits after the seconds");
            for (; k < 3; k++)
                ms *= 10;
        }
    } else if (i < n && (p[i] == '.' || p[i] == ',')) {
        return stamp_shape_error(err, p, n,
                                 "has a fraction of a minute; give "
                                 "seconds (hh:mm:ss.fff)");
    }

    /* Z, +-hh:mm, +-hhmm or +-hh */
    st.has_offset = 0;
    st.offset_s = 0;
    if (i < n && (p[i] == 'Z' || p[i] == 'z')) {
        st.has_offset = 1;
        i++;
    } else if (i < n && (p[i] == '+' || p[i] == '-')) {
        int sign = p[i] == '-' ? -1 : 1, oh, om = 0, os = 0;
        if (n - i < 3 || (oh = two_digits(p + i + 1)) < 0)
            return stamp_shape_error(err, p, n,
                                     "has a UTC offset that is not +hh:mm, "
                                     "+hhmm or +hh");
        i += 3;
        if (i < n && p[i] == ':') {
            if (n - i < 3 || (om = two_digits(p + i + 1)) < 0)
                return stamp_shape_error(err, p, n,
                                         "has a UTC offset that is not "
                                         "+hh:mm, +hhmm or +hh");
            i += 3;
            /* +hh:mm:ss: the local mean times of the tz database (before
             * 1937 in Amsterdam: +00:19:32), as sw_time_format writes
             * them, so that every time the tool writes reads back */
            if (i < n && p[i] == ':') {
                if (n - i < 3 || (os = two_digits(p + i + 1)) < 0 || os > 59)
                    return stamp_shape_error(err, p, n,
                                             "has a UTC offset that is not "
                                             "+hh:mm, +hh:mm:ss, +hhmm or "
                                             "+hh");
                i += 3;
            }
        } else if (n - i >= 2 && (om = two_digits(p + i)) >= 0) {
            i += 2;
        } else {
            om = 0;
        }
        if (oh > 23)
            return stamp_range_error(err, p, n, "UTC offset hours", oh);
        if (om > 59)
            return stamp_range_error(err, p, n, "UTC offset minutes", om);
        st.has_offset = 1;
        st.offset_s = (int32_t)(sign * (oh * 3600 + om * 60 + os));
    }
    if (i != n) {
        quote q = quote_of(n);
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "timestamp '%.*s%s' has unexpected text '%.*s' "
                            "after the time; expected "
                            "YYYY-MM-DD hh:mm[:ss[.fff]][Z|+hh:mm]",
                            q.len, p, q.more,
                            (int)(n - i > 20 ? 20 : n - i), p + i);
    }

    if (hour > 24)
        return stamp_range_error(err, p, n, "hour", hour);
    if (minute > 59)
        return stamp_range_error(err, p, n, "minute", minute);
    if (second > 60)
        return stamp_range_error(err, p, n, "second", second);
    if (hour == 24 && (minute != 0 || second != 0 || frac_nonzero)) {
        quote q = quote_of(n);
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "timestamp '%.*s%s' has hour 24 with minutes or "
                            "seconds; only 24:00:00 (the end of the day) "
                            "is allowed",
                            q.len, p, q.more);
    }

    /* A 60th second and 24:00 need no special case: the sum below simply
     * runs into the next minute or day. */
    st.wall_ms = days * MS_PER_DAY
                 + ((int64_t)(hour * 60 + minute) * 60 + second) * SW_MS_PER_S
                 + ms;
    *out = st;
    return SW_OK;
}

int sw_stamp_parse(const char *text, size_t len, sw_stamp *out, sw_error *err)
{
    return stamp_parse(text, len, NULL, out, err);
}

int sw_stamp_parse_memo(const char *text, size_t len, sw_stamp_memo *memo,
                        sw_stamp *out, sw_error *err)
{
    return stamp_parse(text, len, memo, out, err);
}

int sw_unix_parse(const char *text, size_t len, sw_time_ms *out,
                  sw_error *err)
{
    const char *p = text, *end = text + len;
    int negative = 0;
    size_t n, int_digits = 0, frac_digits = 0;
    int64_t secs = 0, ms = 0;
    quote q;

    if (text == NULL)
        p = end = "";
    while (p < end && is_blank(*p))
        p++;
    while (end > p && is_blank(end[-1]))
        end--;
    n = (size_t)(end - p);
    q = quote_of(n);
    /* As in sw_stamp_parse(): a NUL would cut the quoted text short. */
    if (n > 0 && memchr(p, '\0', n) != NULL)
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "Unix time holds a NUL byte (is this a text "
                            "file?)");
    if (p < end && (*p == '-' || *p == '+')) {
        negative = *p == '-';
        p++;
    }
    for (; p < end && digit(*p) <= 9u; p++, int_digits++)
        if (int_digits < 16)
            secs = secs * 10 + digit(*p);
    if (p < end && (*p == '.' || *p == ',')) {
        for (p++; p < end && digit(*p) <= 9u; p++, frac_digits++) {
            if (frac_digits < 3)
                ms = ms * 10 + digit(*p);
            else if (frac_digits == 3 && digit(*p) >= 5)
                ms++;
        }
        for (size_t k = frac_digits; k < 3; k++)
            ms *= 10;
    }
    if (p != end || int_digits + frac_digits == 0)
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "Unix time '%.*s%s' is not a number of seconds "
                            "(digits, optionally a sign and a fraction)",
                            q.len, end - n, q.more);
    /* 10^15 s is about 31.7 million years: far beyond any record. */
    if (int_digits > 15)
        return sw_error_set(err, SW_EDATA, NULL, 0, 0,
                            "Unix time '%.*s%s' is out of range",
                            q.len, end - n, q.more);
    /* The magnitude is rounded half up, then the sign applied. */
    secs = secs * SW_MS_PER_S + ms;
    *out = negative ? -secs : secs;
    return SW_OK;
}

/* ---- writing and months -------------------------------------------------- */

/* Two decimal digits of v (0..99) at w. */
static char *put2(char *w, int v)
{
    w[0] = (char)('0' + v / 10);
    w[1] = (char)('0' + v % 10);
    return w + 2;
}

/* sw_time_format() at a UTC offset of `off` seconds. */
static int format_at_offset(char *buf, size_t n, sw_time_ms t, int32_t off)
{
    sw_time_ms local = t + (sw_time_ms)off * SW_MS_PER_S;
    int64_t days = floor_div(local, MS_PER_DAY), y;
    int64_t ms_of_day = local - days * MS_PER_DAY;
    int m, d, sec_of_day = (int)(ms_of_day / 1000), ms = (int)(ms_of_day % 1000);
    int32_t aoff = off < 0 ? -off : off;
    char sign = off < 0 ? '-' : '+';
    char frac[8] = "", offsec[8] = "", text[48], *w = text;
    size_t len;

    sw_civil_from_days(days, &y, &m, &d);
    /* ISO 8601 offsets stop at minutes; the historical local mean times
     * of the tz database (Berlin before 1893: +00:53:28) keep their
     * seconds, so that the text still names the instant exactly. */
    if (y < 0 || y > 9999 || aoff / 3600 > 99) {
        if (ms != 0)
            snprintf(frac, sizeof frac, ".%03d", ms);
        if (aoff % 60 != 0)
            snprintf(offsec, sizeof offsec, ":%02d", (int)(aoff % 60));
        return snprintf(buf, n, "%04" PRId64 "-%02d-%02dT%02d:%02d:%02d%s%c"
                        "%02d:%02d%s", y, m, d, sec_of_day / 3600,
                        sec_of_day / 60 % 60, sec_of_day % 60, frac, sign,
                        (int)(aoff / 3600), (int)(aoff / 60 % 60), offsec);
    }
    /* The same text written by hand: a report writes several a row, and
     * snprintf was most of their cost. */
    w = put2(w, (int)(y / 100));
    w = put2(w, (int)(y % 100));
    *w++ = '-';
    w = put2(w, m);
    *w++ = '-';
    w = put2(w, d);
    *w++ = 'T';
    w = put2(w, sec_of_day / 3600);
    *w++ = ':';
    w = put2(w, sec_of_day / 60 % 60);
    *w++ = ':';
    w = put2(w, sec_of_day % 60);
    if (ms != 0) {
        *w++ = '.';
        *w++ = (char)('0' + ms / 100);
        w = put2(w, ms % 100);
    }
    *w++ = sign;
    w = put2(w, (int)(aoff / 3600));
    *w++ = ':';
    w = put2(w, (int)(aoff / 60 % 60));
    if (aoff % 60 != 0) {
        *w++ = ':';
        w = put2(w, (int)(aoff % 60));
    }
    len = (size_t)(w - text);
    if (n > 0) {
        size_t k = len < n - 1 ? len : n - 1;
        memcpy(buf, text, k);
        buf[k] = '\0';
    }
    return (int)len;
}

int sw_time_format(char *buf, size_t n, sw_time_ms t, const sw_zone *zone)
{
    return format_at_offset(buf, n, t, sw_zone_offset_at(zone, t));
}

/* In format_at_offset's hand-written layout (years 0-9999, offsets below
 * 100 h) the time of day stands at text[11..19): "YYYY-MM-DDTHH:MM:SS". */
const char *sw_time_format_memo(sw_time_text_memo *m, sw_time_ms t,
                                const sw_zone *zone)
{
    int32_t off = sw_zone_offset_at(zone, t);
    sw_time_ms local = t + (sw_time_ms)off * SW_MS_PER_S;
    int64_t day = floor_div(local, MS_PER_DAY);
    int64_t ms_of_day = local - day * MS_PER_DAY;

    if (m->valid && day == m->day && off == m->offset &&
        ms_of_day % 1000 == 0) {
        int sec = (int)(ms_of_day / 1000);
        char *w = m->text + 11;
        w = put2(w, sec / 3600);
        *w++ = ':';
        w = put2(w, sec / 60 % 60);
        *w++ = ':';
        put2(w, sec % 60);
        return m->text;
    }
    int k = format_at_offset(m->text, sizeof m->text, t, off);
    m->len = k < 0 ? 0 : (size_t)k < sizeof m->text ? (size_t)k
                                                     : sizeof m->text - 1;
    /* the layout above holds: a whole second, a year of four digits */
    m->valid = ms_of_day % 1000 == 0 && m->len >= 19 && m->text[10] == 'T' &&
               m->text[4] == '-';
    m->day = day;
    m->offset = off;
    return m->text;
}

/* The instant of local midnight starting day `day`: the first instant
 * showing it, or the first instant after the gap that skips it. */
static sw_time_ms midnight(const sw_zone *zone, int64_t day, int which)
{
    sw_time_ms utc[SW_ZONE_MAX_SHOWN], gap_end, local = day * MS_PER_DAY;
    int count;

    if (zone == NULL)
        return local;
    count = local_to_utc(zone, local, utc, &gap_end);
    if (count == 0)
        return gap_end;
    return utc[which < count ? which : count - 1];
}

/* The first instant after t at which the wall clock shows local midnight
 * starting day `day`, or passes it: the earliest showing after t; else
 * the end of the skipped interval that holds it, if after t; else (the
 * clock was set back across that midnight before t, and leaps over it
 * later: crafted zones) the next change of offset after t. */
static sw_time_ms next_midnight(const sw_zone *zone, int64_t day, sw_time_ms t)
{
    sw_time_ms utc[SW_ZONE_MAX_SHOWN], gap_end, local = day * MS_PER_DAY;
    int64_t until;
    int count;

    if (zone == NULL || zone->is_fixed)
        return midnight(zone, day, 0);
    count = local_to_utc(zone, local, utc, &gap_end);
    for (int i = 0; i < count; i++)
        if (utc[i] > t)
            return utc[i];
    if (count == 0 && gap_end > t)
        return gap_end;
    zone_info(zone, floor_div(t, SW_MS_PER_S), &until);
    if (until == INT64_MAX || until > INT64_MAX / SW_MS_PER_S)
        return t + 1;
    return until * SW_MS_PER_S > t ? until * SW_MS_PER_S : t + 1;
}

void sw_month_bounds(sw_time_ms t, const sw_zone *zone, sw_time_ms *start,
                     sw_time_ms *next, int *yyyymm)
{
    sw_time_ms local = t + (sw_time_ms)sw_zone_offset_at(zone, t) * SW_MS_PER_S;
    int64_t y, ny;
    int m, d, nm;

    sw_civil_from_days(floor_div(local, MS_PER_DAY), &y, &m, &d);
    ny = m == 12 ? y + 1 : y;
    nm = m == 12 ? 1 : m + 1;
    /* A midnight shown twice begins the month at its first showing; but
     * if t lies in the second showing of the previous month's last hour,
     * the next month must begin after t, at the next showing. */
    *start = midnight(zone, sw_days_from_civil(y, m, 1), 0);
    *next = next_midnight(zone, sw_days_from_civil(ny, nm, 1), t);
    /* a crafted zone can show t's wall time after the month's midnight
     * went by (the clock set back across it) */
    if (*start > t)
        *start = t;
    *yyyymm = (int)(y * 100 + m);
}

/* ---- durations ----------------------------------------------------------- */

int sw_duration_parse(const char *text, sw_time_ms *out, sw_error *err)
{
    static const char accepted[] =
        "write a positive number and one of the units s, min, h or d "
        "(e.g. 90s, 30min, 1.5h, 1d)";
    const char *p = text == NULL ? "" : text, *num, *unit, *end;
    size_t n = strlen(p), int_digits = 0, frac_digits = 0, unit_len;
    int64_t whole = 0, frac = 0, scale = 1, unit_ms, ms;
    quote q;

    while (n > 0 && is_blank(p[n - 1]))
        n--;
    while (n > 0 && is_blank(*p)) {
        p++;
        n--;
    }
    q = quote_of(n);
    if (n == 0)
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration is empty; %s", accepted);
    end = p + n;
    num = p;
    if (*num == '-' || *num == '+')
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration '%.*s%s' has a sign; %s",
                            q.len, p, q.more, accepted);
    /* Every scan stops at end: the text may go on in trailing blanks. */
    for (; num < end && digit(*num) <= 9u; num++, int_digits++)
        if (int_digits < 10)
            whole = whole * 10 + digit(*num);
    if (num < end && *num == '.') {
        for (num++; num < end && digit(*num) <= 9u; num++, frac_digits++)
            if (frac_digits < 9) {
                frac = frac * 10 + digit(*num);
                scale *= 10;
            }
    }
    if (int_digits + frac_digits == 0)
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration '%.*s%s' does not begin with a "
                            "number; %s",
                            q.len, p, q.more, accepted);
    if (int_digits > 9 || frac_digits > 9)
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration '%.*s%s' has more than 9 digits "
                            "before or after the decimal point; %s",
                            q.len, p, q.more, accepted);
    unit = num;
    while (unit < end && is_blank(*unit))
        unit++;
    unit_len = (size_t)(end - unit);
    if (unit_len == 0)
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration '%.*s%s' has no unit; %s",
                            q.len, p, q.more, accepted);
    if (unit_len == 1 && unit[0] == 's')
        unit_ms = SW_MS_PER_S;
    else if (unit_len == 3 && memcmp(unit, "min", 3) == 0)
        unit_ms = 60 * SW_MS_PER_S;
    else if (unit_len == 1 && unit[0] == 'h')
        unit_ms = SW_MS_PER_HOUR;
    else if (unit_len == 1 && unit[0] == 'd')
        unit_ms = 24 * SW_MS_PER_HOUR;
    else if (unit_len == 1 && unit[0] == 'm')
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration '%.*s%s' has the unit 'm', which "
                            "could mean minutes or months (and is metres "
                            "elsewhere); write 'min' for minutes",
                            q.len, p, q.more);
    else
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration '%.*s%s' has the unknown unit "
                            "'%.*s'; %s",
                            q.len, p, q.more, (int)(unit_len > 20 ? 20 : unit_len),
                            unit, accepted);
    /* Exact: whole < 10^9 and frac < 10^9 keep every product below
     * 10^9 * 8.64e7 < 2^63; the fraction is rounded half up to 1 ms. */
    ms = whole * unit_ms + (frac * unit_ms + scale / 2) / scale;
    if (ms <= 0)
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "duration '%.*s%s' is not positive (at least "
                            "1 ms); %s",
                            q.len, p, q.more, accepted);
    *out = ms;
    return SW_OK;
}
