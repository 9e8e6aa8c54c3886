/* sillwatch: the CSV outputs of a replay (see report.h). */
#include "sillwatch/report.h"

#include <math.h>
#include <stdlib.h>

long long sw_report_hours4(sw_time_ms ms)
{
    return (long long)((ms + 180) / 360); /* 0.0001 h = 360 ms */
}

static void hours(FILE *fp, long long h4)
{
    fprintf(fp, "%s%lld.%04lld", h4 < 0 ? "-" : "", llabs(h4) / 10000,
            llabs(h4) % 10000);
}

static void instant(FILE *fp, sw_time_ms t, const sw_zone *zone)
{
    char buf[64];
    sw_time_format(buf, sizeof buf, t, zone);
    fputs(buf, fp);
}

static void factor(FILE *fp, double fs)
{
    if (isinf(fs))
        fputs(fs > 0 ? "inf" : "-inf", fp);
    else
        fprintf(fp, "%.4f", fs);
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
static void tally_hours(FILE *fp, sw_time_ms span, const sw_tally *t)
{
    long long ev = sw_report_hours4(t->evaluated);
    long long lo = sw_report_hours4(t->low), op = sw_report_hours4(t->open);
    hours(fp, ev);
    fputc(',', fp);
    hours(fp, sw_report_hours4(span) - ev);
    fputc(',', fp);
    hours(fp, lo);
    fputc(',', fp);
    hours(fp, op);
    fputc(',', fp);
    hours(fp, lo + op);
    fprintf(fp, ",%ld,", t->events);
}

static void min_fs(FILE *fp, const sw_tally *t, const sw_zone *zone)
{
    if (t->evaluated == 0 && isinf(t->min_fs) && t->min_fs > 0) {
        fputc(',', fp); /* never evaluated */
        return;
    }
    factor(fp, t->min_fs);
    fputc(',', fp);
    instant(fp, t->min_fs_t, zone);
}

void sw_report_summary_row(FILE *fp, const char *gate, sw_time_ms start,
                           sw_time_ms end, const sw_tally *t,
                           const sw_zone *zone)
{
    fprintf(fp, "%s,", gate);
    instant(fp, start, zone);
    fputc(',', fp);
    instant(fp, end, zone);
    fputc(',', fp);
    tally_hours(fp, end - start, t);
    hours(fp, sw_report_hours4(t->longest_event));
    fputc(',', fp);
    min_fs(fp, t, zone);
    fputc('\n', fp);
}

void sw_report_events_header(FILE *fp)
{
    fputs("gate,start,end,hours,worst_status,min_fs,min_fs_time,"
          "headwater_at_min,tailwater_at_min,ends\n", fp);
}

void sw_report_event_row(FILE *fp, const char *gate, const sw_event *ev,
                         const sw_zone *zone)
{
    fprintf(fp, "%s,", gate);
    instant(fp, ev->start, zone);
    fputc(',', fp);
    instant(fp, ev->end, zone);
    fputc(',', fp);
    hours(fp, sw_report_hours4(ev->end - ev->start));
    fprintf(fp, ",%s,", sw_state_name(ev->worst));
    factor(fp, ev->min_fs);
    fputc(',', fp);
    instant(fp, ev->min_fs_t, zone);
    fprintf(fp, ",%.4f,%.4f,%s\n", ev->hw_at_min_m, ev->tw_at_min_m,
            sw_report_end_name(ev->ends));
}

void sw_report_steps_header(FILE *fp)
{
    fputs("time,gate,headwater,tailwater,net_moment,fs,sill_reaction,status,"
          "tw_alarm,tw_open\n", fp);
}

static void crit(FILE *fp, const sw_crit *c)
{
    if (c != NULL && c->kind == SW_CRIT_LEVEL)
        fprintf(fp, "%.4f", c->level_m);
}

void sw_report_step_row(FILE *fp, sw_time_ms t, const char *gate,
                        const sw_gate_result *r, const sw_crit *alarm,
                        const sw_crit *open, const sw_zone *zone)
{
    instant(fp, t, zone);
    fprintf(fp, ",%s,%.4f,%.4f,%.2f,", gate, r->headwater_m, r->tailwater_m,
            r->net_moment_Nm);
    factor(fp, r->fs);
    fprintf(fp, ",%.2f,%s,", r->sill_reaction_N, sw_state_name(r->state));
    crit(fp, alarm);
    fputc(',', fp);
    crit(fp, open);
    fputc('\n', fp);
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
    fprintf(fp, "%s,%04d-%02d,", gate, m->yyyymm / 100, m->yyyymm % 100);
    instant(fp, m->start, zone);
    fputc(',', fp);
    instant(fp, m->end, zone);
    fputc(',', fp);
    tally_hours(fp, m->end - m->start, &m->tally);
    min_fs(fp, &m->tally, zone);
    fputc('\n', fp);
}
