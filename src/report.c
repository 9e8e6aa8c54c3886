/* sillwatch: the CSV outputs of a replay (see report.h). */
#include "sillwatch/report.h"
#include "sillwatch/csvout.h"

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

long long sw_report_hours4(sw_time_ms ms)
{
    return (long long)((ms + 180) / 360); /* 0.0001 h = 360 ms */
}

/* Rows are built in a buffer and written at once.  Numbers are written by
 * hand: printf was most of the cost of a row, and a long replay writes
 * tens of thousands of event rows.  The text is exactly printf's. */

/* The longest text put_fixed() writes: printf's "%.4f" of DBL_MAX. */
#define FIXED_MAX 330

/* An instant's text (sw_time_format's longest is far below this). */
#define INSTANT_MAX 64

/* Names a row builds in place (quoted: twice as long, and two more). */
#define NAME_INLINE 260

/* A step row's longest parts (report.h). */
_Static_assert(5 * FIXED_MAX + 16 <= SW_REPORT_VALUES_MAX,
               "a step row's values fit SW_REPORT_VALUES_MAX");
_Static_assert(2 * FIXED_MAX + 1 <= SW_REPORT_LEVELS_MAX,
               "two levels fit SW_REPORT_LEVELS_MAX");

static const char digit_pairs[] = "00010203040506070809"
                                  "10111213141516171819"
                                  "20212223242526272829"
                                  "30313233343536373839"
                                  "40414243444546474849"
                                  "50515253545556575859"
                                  "60616263646566676869"
                                  "70717273747576777879"
                                  "80818283848586878889"
                                  "90919293949596979899";

/* How many decimal digits x has. */
static int count_digits32(unsigned x)
{
    if (x < 10000)
        return x < 10 ? 1 : x < 100 ? 2 : x < 1000 ? 3 : 4;
    if (x < 100000000)
        return x < 100000 ? 5 : x < 1000000 ? 6 : x < 10000000 ? 7 : 8;
    return x < 1000000000 ? 9 : 10;
}

/* The digits of x ending at `end`, two at a time from the table, in
 * 32-bit arithmetic (division by a constant: a multiplication). */
static char *put_digits32(char *end, unsigned x)
{
    char *p = end;
    while (x >= 100) {
        unsigned q = x / 100;
        p -= 2;
        memcpy(p, digit_pairs + 2 * (x - 100 * q), 2);
        x = q;
    }
    if (x >= 10) {
        p -= 2;
        memcpy(p, digit_pairs + 2 * x, 2);
    } else {
        *--p = (char)('0' + x);
    }
    return p;
}

/* The decimal digits of v at w, at least `width` of them (width <= 20),
 * written in place from the last digit (no scratch copy, which the
 * compiler turns into a call to memcpy): step logs write tens of millions
 * of numbers. */
static char *put_uint(char *w, unsigned long long v, int width)
{
    char *end, *p;
    int n;

    if (v <= 0xffffffffu) {
        n = count_digits32((unsigned)v);
        end = w + (n > width ? n : width);
        p = put_digits32(end, (unsigned)v);
    } else { /* above 2^32 (rare): two digits at a time in 64 bits */
        n = 1;
        for (unsigned long long t = v; t >= 10; t /= 10)
            n++;
        end = p = w + (n > width ? n : width);
        while (v > 0xffffffffu) {
            unsigned r = (unsigned)(v % 100);
            v /= 100;
            p -= 2;
            memcpy(p, digit_pairs + 2 * r, 2);
        }
        p = put_digits32(p, (unsigned)v);
    }
    while (p > w)
        *--p = '0';
    return end;
}

static char *put_text(char *w, const char *s)
{
    while (*s != '\0')
        *w++ = *s++;
    return w;
}

/* A decimal point put before the last k digits written (end at w):
 * fixed sizes, so the moves are a load and a store each. */
#define INSERT_POINT(k)                                                      \
    static char *insert_point##k(char *w)                                    \
    {                                                                        \
        char frac[k];                                                        \
        memcpy(frac, w - (k), (k));                                          \
        w[-(k)] = '.';                                                       \
        memcpy(w - (k) + 1, frac, (k));                                      \
        return w + 1;                                                        \
    }
INSERT_POINT(1)
INSERT_POINT(2)
INSERT_POINT(3)
INSERT_POINT(4)

/* x as printf's "%.<digits>f" writes it (digits 0..4): the exact binary
 * value rounded to the nearest multiple of 10^-digits, ties to even, with
 * the sign of x, except that a result of zero has none (printf writes
 * "-0.0000" for -0.0 and for small negatives; a table showing both zeros
 * only confuses).  For x = m * 2^e (m < 2^53),
 * x * 10^digits = m * 5^digits * 2^(e + digits), an integer shifted,
 * which fits 64 bits (5^4 < 2^10); the shifted-out bits decide the
 * rounding.  Values not finite or beyond 10^11 go to snprintf. */
static char *put_fixed(char *w, double x, int digits)
{
    static const unsigned pow5[5] = {1, 5, 25, 125, 625};
    uint64_t bits, m, n, q;
    int e, s;

    if (!isfinite(x) || fabs(x) >= 1e11) {
        int k = snprintf(w, FIXED_MAX, "%.*f", digits, x);
        return w + (k < 0 ? 0 : k >= FIXED_MAX ? FIXED_MAX - 1 : k);
    }
    memcpy(&bits, &x, sizeof bits);
    e = (int)((bits >> 52) & 0x7ff);
    m = bits & ((UINT64_C(1) << 52) - 1);
    if (e == 0) {
        e = -1074; /* subnormal */
    } else {
        m |= UINT64_C(1) << 52;
        e -= 1075;
    }
    n = m * pow5[digits];
    s = -(e + digits);
    if (s <= 0) {
        q = n << -s; /* below 10^15: no bits lost */
    } else if (s >= 64) {
        q = 0; /* n < 2^63 <= half a unit */
    } else {
        uint64_t rest = n & ((UINT64_C(1) << s) - 1);
        uint64_t half = UINT64_C(1) << (s - 1);
        q = n >> s;
        if (rest > half || (rest == half && (q & 1u)))
            q++;
    }
    if ((bits >> 63) && q != 0) /* no "-0.00": a zero has no sign */
        *w++ = '-';
    switch (digits) { /* all of q's digits, then the point moved in */
    case 0: return put_uint(w, q, 1);
    case 1: return insert_point1(put_uint(w, q, 2));
    case 2: return insert_point2(put_uint(w, q, 3));
    case 3: return insert_point3(put_uint(w, q, 4));
    default: return insert_point4(put_uint(w, q, 5));
    }
}

static char *put_hours(char *w, long long h4)
{
    unsigned long long a = h4 < 0 ? 0ull - (unsigned long long)h4
                                  : (unsigned long long)h4;

    if (h4 < 0)
        *w++ = '-';
    w = put_uint(w, a / 10000, 1);
    *w++ = '.';
    return put_uint(w, a % 10000, 4);
}

void sw_report_hours_text(char *buf, size_t n, sw_time_ms ms)
{
    char tmp[32];
    *put_hours(tmp, sw_report_hours4(ms)) = '\0';
    snprintf(buf, n, "%s", tmp);
}

static char *put_instant(char *w, sw_time_ms t, const sw_zone *zone)
{
    int k = sw_time_format(w, INSTANT_MAX, t, zone);
    return w + (k < 0 ? 0 : k >= INSTANT_MAX ? INSTANT_MAX - 1 : k);
}

static char *put_factor(char *w, double fs)
{
    if (isinf(fs))
        return put_text(w, fs > 0 ? "inf" : "-inf");
    return put_fixed(w, fs, 4);
}

const char *sw_report_end_name(sw_event_end why)
{
    switch (why) {
    case SW_END_RECOVERED: return "recovered";
    case SW_END_GAP: return "gap";
    case SW_END_SERIES_END: return "series_end";
    }
    return "?";
}

void sw_report_summary_header(FILE *fp)
{
    fputs("gate,start,end,hours_evaluated,hours_not_evaluated,hours_low,"
          "hours_open,hours_below_margin,events,longest_event_hours,min_fs,"
          "min_fs_time\n", fp);
}

/* The hour columns shared by the summary and the months. */
static char *put_tally_hours(char *w, sw_time_ms span, const sw_tally *t)
{
    long long ev = sw_report_hours4(t->evaluated);
    long long lo = sw_report_hours4(t->low), op = sw_report_hours4(t->open);
    w = put_hours(w, ev);
    *w++ = ',';
    w = put_hours(w, sw_report_hours4(span) - ev);
    *w++ = ',';
    w = put_hours(w, lo);
    *w++ = ',';
    w = put_hours(w, op);
    *w++ = ',';
    w = put_hours(w, lo + op);
    *w++ = ',';
    if (t->events < 0) {
        *w++ = '-';
        w = put_uint(w, 0ull - (unsigned long long)t->events, 1);
    } else {
        w = put_uint(w, (unsigned long long)t->events, 1);
    }
    *w++ = ',';
    return w;
}

static char *put_min_fs(char *w, const sw_tally *t, const sw_zone *zone)
{
    if (t->evaluated == 0 && isinf(t->min_fs) && t->min_fs > 0) {
        *w++ = ','; /* never evaluated */
        return w;
    }
    w = put_factor(w, t->min_fs);
    *w++ = ',';
    return put_instant(w, t->min_fs_t, zone);
}

/* The gate's name, a comma, and the rest of the row from line[0..w). */
static void write_row(FILE *fp, const char *gate, const char *line,
                      const char *w)
{
    sw_csv_put_field(fp, gate);
    fputc(',', fp);
    fwrite(line, 1, (size_t)(w - line), fp);
}

void sw_report_summary_row(FILE *fp, const char *gate, sw_time_ms start,
                           sw_time_ms end, const sw_tally *t,
                           const sw_zone *zone)
{
    char line[4 * INSTANT_MAX + 2 * FIXED_MAX + 256], *w = line;

    w = put_instant(w, start, zone);
    *w++ = ',';
    w = put_instant(w, end, zone);
    *w++ = ',';
    w = put_tally_hours(w, end - start, t);
    w = put_hours(w, sw_report_hours4(t->longest_event));
    *w++ = ',';
    w = put_min_fs(w, t, zone);
    *w++ = '\n';
    write_row(fp, gate, line, w);
}

void sw_report_events_header(FILE *fp)
{
    fputs("gate,start,end,hours,worst_status,min_fs,min_fs_time,"
          "headwater_at_min,tailwater_at_min,ends\n", fp);
}

void sw_report_event_row(FILE *fp, const char *gate, const sw_event *ev,
                         const sw_zone *zone)
{
    char line[4 * INSTANT_MAX + 4 * FIXED_MAX + 128], *w = line;

    w = put_instant(w, ev->start, zone);
    *w++ = ',';
    w = put_instant(w, ev->end, zone);
    *w++ = ',';
    w = put_hours(w, sw_report_hours4(ev->end - ev->start));
    *w++ = ',';
    w = put_text(w, sw_state_name(ev->worst));
    *w++ = ',';
    w = put_factor(w, ev->min_fs);
    *w++ = ',';
    w = put_instant(w, ev->min_fs_t, zone);
    *w++ = ',';
    w = put_fixed(w, ev->hw_at_min_m, 4);
    *w++ = ',';
    w = put_fixed(w, ev->tw_at_min_m, 4);
    *w++ = ',';
    w = put_text(w, sw_report_end_name(ev->ends));
    *w++ = '\n';
    write_row(fp, gate, line, w);
}

void sw_report_steps_header(FILE *fp)
{
    fputs("time,gate,headwater,tailwater,net_moment,fs,sill_reaction,status,"
          "tw_alarm,tw_open\n", fp);
}

static char *put_crit(char *w, const sw_crit *c)
{
    if (c != NULL && c->kind == SW_CRIT_LEVEL)
        w = put_fixed(w, c->level_m, 4);
    return w;
}

char *sw_report_levels_text(char *w, double hw, double tw)
{
    w = put_fixed(w, hw, 4);
    *w++ = ',';
    return put_fixed(w, tw, 4);
}

char *sw_report_step_values(char *w, const sw_step_figures *r,
                            const sw_crit *alarm, const sw_crit *open)
{
    *w++ = ',';
    w = put_fixed(w, r->net_moment_Nm, 2);
    *w++ = ',';
    w = put_factor(w, r->fs);
    *w++ = ',';
    w = put_fixed(w, r->sill_reaction_N, 2);
    *w++ = ',';
    w = put_text(w, sw_state_name(r->state));
    *w++ = ',';
    w = put_crit(w, alarm);
    *w++ = ',';
    w = put_crit(w, open);
    *w++ = '\n';
    return w;
}

void sw_report_step_row(FILE *fp, const char *when, const char *gate,
                        const sw_gate_result *r, const sw_crit *alarm,
                        const sw_crit *open)
{
    char line[SW_REPORT_LEVELS_MAX + SW_REPORT_VALUES_MAX + 1], *w = line;
    sw_step_figures f = {r->headwater_m, r->tailwater_m, r->net_moment_Nm,
                         r->fs,          r->sill_reaction_N, r->state};

    fputs(when, fp);
    fputc(',', fp);
    sw_csv_put_field(fp, gate);
    *w++ = ',';
    w = sw_report_levels_text(w, f.headwater_m, f.tailwater_m);
    w = sw_report_step_values(w, &f, alarm, open);
    fwrite(line, 1, (size_t)(w - line), fp);
}

void sw_report_months_header(FILE *fp)
{
    fputs("gate,month,start,end,hours_evaluated,hours_not_evaluated,"
          "hours_low,hours_open,hours_below_margin,events,min_fs,"
          "min_fs_time\n", fp);
}

void sw_report_month_row(FILE *fp, const char *gate, const sw_month_row *m,
                         const sw_zone *zone)
{
    char line[4 * INSTANT_MAX + 2 * FIXED_MAX + 256], *w = line;
    int ym = m->yyyymm;

    if (ym >= 0 && ym / 100 <= 9999) {
        w = put_uint(w, (unsigned long long)(ym / 100), 4);
        *w++ = '-';
        w = put_uint(w, (unsigned long long)(ym % 100), 2);
    } else {
        w += snprintf(w, 32, "%04d-%02d", ym / 100, ym % 100);
    }
    *w++ = ',';
    w = put_instant(w, m->start, zone);
    *w++ = ',';
    w = put_instant(w, m->end, zone);
    *w++ = ',';
    w = put_tally_hours(w, m->end - m->start, &m->tally);
    w = put_min_fs(w, &m->tally, zone);
    *w++ = '\n';
    write_row(fp, gate, line, w);
}

void sw_report_required_row(FILE *fp, sw_time_ms t, const sw_zone *zone,
                            const char *gate, const char *member, double hw,
                            const sw_crit *alarm, const sw_crit *open)
{
    char line[INSTANT_MAX + 3 * FIXED_MAX + 2 * NAME_INLINE + 16],
        *w = line;

    /* the whole row in one buffer and one write; names too long for it
     * (never from a site file) go through stdio first */
    w = put_instant(w, t, zone);
    *w++ = ',';
    if (sw_csv_field_max(gate) + sw_csv_field_max(member) > 2 * NAME_INLINE) {
        fwrite(line, 1, (size_t)(w - line), fp);
        sw_csv_put_field(fp, gate);
        fputc(',', fp);
        sw_csv_put_field(fp, member);
        w = line;
    } else {
        w = sw_csv_field_put(w, gate);
        *w++ = ',';
        w = sw_csv_field_put(w, member);
    }
    *w++ = ',';
    w = put_fixed(w, hw, 4);
    *w++ = ',';
    w = put_crit(w, alarm);
    *w++ = ',';
    w = put_crit(w, open);
    *w++ = '\n';
    fwrite(line, 1, (size_t)(w - line), fp);
}

void sw_report_flags_header(FILE *fp)
{
    fputs("series,time,value,test,file,line\n", fp);
}

void sw_report_flag_row(FILE *fp, const char *series, const char *file,
                        const sw_qc_reading *r, const sw_zone *zone)
{
    char line[INSTANT_MAX + FIXED_MAX + 64], *w = line;

    sw_csv_put_field(fp, series);
    *w++ = ',';
    w = put_instant(w, r->t, zone);
    *w++ = ',';
    w = put_fixed(w, r->v_m, 4);
    *w++ = ',';
    w = put_text(w, sw_qc_test_name(r->test));
    *w++ = ',';
    fwrite(line, 1, (size_t)(w - line), fp);
    sw_csv_put_field(fp, file);
    fprintf(fp, ",%ld\n", r->line);
}

/* ---- events in order of start ------------------------------------------ */

/* Each gate's events close in order of start, but a gate's event may close
 * long after another gate's later one.  Each gate's events wait in a
 * temporary file of their own (binary records); the files are merged by
 * start time at the end, so memory does not grow with the run. */
struct sw_event_log {
    size_t n_gates;
    FILE **fp;               /* per gate, NULL until its first event */
};

static int log_error(sw_error *err, const char *what)
{
    return sw_error_set(err, SW_EOUTPUT, NULL, 0, 0,
                        "cannot %s a temporary file for the events (is "
                        "TMPDIR writable?)", what);
}

int sw_event_log_alloc(sw_event_log **out, size_t n_gates, sw_error *err)
{
    sw_event_log *log = calloc(1, sizeof *log);
    *out = NULL;
    if (log == NULL ||
        (log->fp = calloc(n_gates ? n_gates : 1, sizeof *log->fp)) == NULL) {
        free(log);
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    }
    log->n_gates = n_gates;
    *out = log;
    return SW_OK;
}

int sw_event_log_add(sw_event_log *log, const sw_event *ev, sw_error *err)
{
    FILE **fp = &log->fp[ev->gate];
    if (*fp == NULL && (*fp = tmpfile()) == NULL)
        return log_error(err, "create");
    if (fwrite(ev, sizeof *ev, 1, *fp) != 1)
        return log_error(err, "write");
    return SW_OK;
}

int sw_event_log_write(sw_event_log *log, FILE *out, const sw_site *site,
                       sw_error *err)
{
    size_t n = log->n_gates;
    sw_event *head = calloc(n ? n : 1, sizeof *head);
    int *has = calloc(n ? n : 1, sizeof *has);
    int rc = SW_OK;

    if (head == NULL || has == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
        goto done;
    }
    for (size_t g = 0; g < n; g++) {
        FILE *fp = log->fp[g];
        if (fp == NULL)
            continue;
        if (fflush(fp) != 0 || fseek(fp, 0, SEEK_SET) != 0) {
            rc = log_error(err, "read back");
            goto done;
        }
        has[g] = fread(&head[g], sizeof head[g], 1, fp) == 1;
    }
    for (;;) {
        size_t best = n;
        /* the earliest start; the first gate on a tie */
        for (size_t g = 0; g < n; g++)
            if (has[g] && (best == n || head[g].start < head[best].start))
                best = g;
        if (best == n)
            break;
        sw_report_event_row(out, site->gates[best].gate.name, &head[best],
                            site->zone);
        has[best] = fread(&head[best], sizeof head[best], 1,
                          log->fp[best]) == 1;
    }
    for (size_t g = 0; g < n; g++)
        if (log->fp[g] != NULL && ferror(log->fp[g]))
            rc = log_error(err, "read back");
done:
    free(head);
    free(has);
    return rc;
}

void sw_event_log_free(sw_event_log *log)
{
    if (log == NULL)
        return;
    for (size_t g = 0; g < log->n_gates; g++)
        if (log->fp[g] != NULL)
            fclose(log->fp[g]);
    free(log->fp);
    free(log);
}
