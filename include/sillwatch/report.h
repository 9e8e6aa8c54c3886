/* sillwatch: the CSV outputs of a replay (summary, events, steps, months,
 * flags).
 *
 * Times are ISO 8601 with the site's UTC offset; hours carry 4 decimals.
 * Hours are printed in whole units of 0.0001 h, with the identities kept
 * exact in print: hours_not_evaluated = span - hours_evaluated and
 * hours_below_margin = hours_low + hours_open, each side rounded once.
 * Writers do not check each write: sw_outfile_close() catches any failure.
 */
#ifndef SILLWATCH_REPORT_H
#define SILLWATCH_REPORT_H

#include <stdio.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"
#include "sillwatch/timeutil.h"

/* Milliseconds to units of 0.0001 h, rounded half up (ms >= 0). */
long long sw_report_hours4(sw_time_ms ms);

/* Milliseconds (>= 0) as hours with 4 decimals, as in the CSV outputs
 * ("83.3265"), into buf[n]. */
void sw_report_hours_text(char *buf, size_t n, sw_time_ms ms);

void sw_report_summary_header(FILE *fp);
void sw_report_summary_row(FILE *fp, const char *gate, sw_time_ms start,
                           sw_time_ms end, const sw_tally *t,
                           const sw_zone *zone);

void sw_report_events_header(FILE *fp);
void sw_report_event_row(FILE *fp, const char *gate, const sw_event *ev,
                         const sw_zone *zone);

void sw_report_steps_header(FILE *fp);
/* One gate at one point.  `when` is the point's time as
 * sw_time_format() writes it (formatted once for all gates of a point);
 * alarm/open may be NULL (not computed); a crit of kind "not needed"
 * prints as an empty field. */
void sw_report_step_row(FILE *fp, const char *when, const char *gate,
                        const sw_gate_result *r, const sw_crit *alarm,
                        const sw_crit *open);

/* The same row in parts, for writing in place (sw_outfile_room):
 * sw_report_levels_text() puts "headwater,tailwater" at w (room for
 * SW_REPORT_LEVELS_MAX bytes; no NUL) and returns the end; the caller
 * writes "time,gate," (the gate's name as a CSV field) and the levels, and
 * sw_report_step_values() puts the rest, ",net_moment,...,tw_open\n"
 * (room for SW_REPORT_VALUES_MAX bytes), from the figures `f`. */
#define SW_REPORT_LEVELS_MAX 672
#define SW_REPORT_VALUES_MAX 1792
typedef struct sw_step_figures {
    double headwater_m, tailwater_m, net_moment_Nm, fs, sill_reaction_N;
    sw_state state;
} sw_step_figures;
char *sw_report_levels_text(char *w, double hw, double tw);
char *sw_report_step_values(char *w, const sw_step_figures *f,
                            const sw_crit *alarm, const sw_crit *open);

void sw_report_months_header(FILE *fp);
void sw_report_month_row(FILE *fp, const char *gate, const sw_month_row *m,
                         const sw_zone *zone);

/* required.csv (screen, headwater-only gates): the time, the gate, the
 * member, the headwater and the critical tailwaters (4 decimals; a crit
 * that is not a level prints as an empty field). */
void sw_report_required_row(FILE *fp, sw_time_ms t, const sw_zone *zone,
                            const char *gate, const char *member, double hw,
                            const sw_crit *alarm, const sw_crit *open);

/* flags.csv: one row per flagged reading: series, time, value (m above
 * the site datum, 4 decimals), test, file, line. */
void sw_report_flags_header(FILE *fp);
void sw_report_flag_row(FILE *fp, const char *series, const char *file,
                        const sw_qc_reading *r, const sw_zone *zone);

/* events.csv in order of start time (gate order within a tie): the
 * events are added as the stepper closes them (each gate's in order) and
 * held in a temporary file per gate; sw_event_log_write() merges them.
 * Errors: SW_ENOMEM; SW_EOUTPUT when a temporary file cannot be made,
 * written or read back. */
typedef struct sw_event_log sw_event_log;
int sw_event_log_alloc(sw_event_log **log, size_t n_gates, sw_error *err);
int sw_event_log_add(sw_event_log *log, const sw_event *ev, sw_error *err);
int sw_event_log_write(sw_event_log *log, FILE *fp, const sw_site *site,
                       sw_error *err);
void sw_event_log_free(sw_event_log *log);

/* "ok" "low" "open"; "recovered" "gap" "series_end". */
const char *sw_report_end_name(sw_event_end why);

#endif
