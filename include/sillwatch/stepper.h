/* sillwatch: the stepping engine that replays level series through the
 * gates of a site.
 *
 * The timeline is the union of the valid sample times of every series a
 * gate uses.  Between two valid samples of a series no farther apart than
 * the site's max_gap, its level is linear in time; across a longer gap it
 * is unknown.  A gate is evaluated wherever both its levels are known.
 * Along each interval of the timeline the levels move linearly, and the
 * times where a gate's state (ok / low / open) changes are located to
 * within one second, so hours are exact (int64 milliseconds), not sample
 * counts: for every gate, evaluated + not evaluated = the span of the run.
 *
 * Streaming: memory does not grow with the length of the series.  Samples
 * read ahead of the interval being evaluated are held only until it is
 * known whether they bridge a gap, that is for at most max_gap of data.
 *
 * Use: sw_stepper_alloc(), then sw_stepper_advance() until *done, reading
 * after each call what it exposes (the timeline point just passed, the
 * events and months it closed), then sw_stepper_finish() and the per-gate
 * summaries; sw_stepper_free().  The caller must have called
 * gsl_set_error_handler_off().
 */
#ifndef SILLWATCH_STEPPER_H
#define SILLWATCH_STEPPER_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"
#include "sillwatch/qc.h"
#include "sillwatch/series.h"
#include "sillwatch/site.h"
#include "sillwatch/timeutil.h"

/* Where the level data of a gate were, in state order: SW_STATE_OK,
 * SW_STATE_LOW, SW_STATE_OPEN, then this. */
#define SW_STATE_UNKNOWN 3

/* Why an event ended. */
typedef enum sw_event_end {
    SW_END_RECOVERED = 0, /* the gate came back to ok */
    SW_END_GAP,           /* its levels became unknown */
    SW_END_SERIES_END     /* the data ended */
} sw_event_end;

/* A maximal period below the required margin (low or open). */
typedef struct sw_event {
    size_t gate;              /* index into site->gates */
    sw_time_ms start, end;
    sw_state worst;           /* SW_STATE_LOW or SW_STATE_OPEN */
    double min_fs;            /* at the evaluated points within it */
    sw_time_ms min_fs_t;
    double hw_at_min_m, tw_at_min_m;
    sw_event_end ends;
} sw_event;

/* Hours of one gate over the run or one month (int64 ms, exact). */
typedef struct sw_tally {
    sw_time_ms evaluated, not_evaluated, low, open;
    long events;              /* events that started in the period */
    sw_time_ms longest_event; /* (run tally only) */
    double min_fs;            /* +inf when never evaluated */
    sw_time_ms min_fs_t;
    int below_seen, open_seen; /* the first instants below the margin */
    sw_time_ms first_below;    /* (low or open) and open, when seen */
    sw_time_ms first_open;
} sw_tally;

/* One gate's month, closed. */
typedef struct sw_month_row {
    size_t gate;
    int yyyymm;
    sw_time_ms start, end;    /* the part of the month within the run */
    sw_tally tally;
} sw_month_row;

/* A gate at the timeline point just passed. */
typedef struct sw_step_gate {
    int known;                /* levels known at this point */
    sw_gate_result result;    /* valid when known and the options asked
                                 for keep_points */
} sw_step_gate;

/* Gaps found in a series (intervals between valid samples > max_gap). */
typedef struct sw_gap_stats {
    long gaps;
    sw_time_ms total, longest;
    sw_time_ms longest_start;
} sw_gap_stats;

typedef struct sw_stepper_options {
    int by_month;             /* split hours by calendar month (site zone) */
    int keep_points;          /* fill sw_step_gate.result at each point */
    int memo_loads;           /* remember water loads by exact level, per
                                 gate (sw_load_memo: 24 KiB a gate) */
} sw_stepper_options;

/* A change of the state a gate's time is booked in (SW_STATE_OK, LOW,
 * OPEN, or SW_STATE_UNKNOWN where its levels are unknown), at the instant
 * the new booking begins.  Changes are located to a second, an uncertain
 * second being booked in the worse state: a change into trouble is at the
 * start of that second, a change out of it at its end.  A gate's first
 * booking is a change from SW_STATE_UNKNOWN unless it is unknown too. */
typedef struct sw_state_change {
    size_t gate;              /* index into site->gates */
    sw_time_ms t;
    int from, to;             /* sw_state or SW_STATE_UNKNOWN */
    double hw_m, tw_m;        /* the levels at t (NAN where `to` is
                                 SW_STATE_UNKNOWN) */
    double fs;                /* the factor of safety at those levels */
} sw_state_change;

/* A reading that failed a quality test of its series (index as for
 * sw_stepper_series): removed like a missing reading. */
typedef struct sw_stepper_flag {
    size_t series;
    sw_qc_reading reading;
} sw_stepper_flag;

typedef struct sw_stepper sw_stepper; /* opaque */

/* Open the level files of every series the site's gates use and prepare
 * the run.  Every gate must name a headwater and a tailwater series
 * (SW_ESITE otherwise, naming the gate).  Errors: SW_ESITE, SW_EDATA from
 * opening the files (missing file or column), SW_ENOMEM.  The site must
 * outlive the stepper. */
int sw_stepper_alloc(sw_stepper **stepper, const sw_site *site,
                     const sw_stepper_options *opt, sw_error *err);

/* Pass the next timeline point.  Sets *done at the end of the data (then
 * call sw_stepper_finish()).  With quality tests, an advance may return
 * without passing a point (sw_stepper_passed() is 0) to hand out the
 * flagged readings it found (sw_stepper_flags()) before they pile up.
 * Errors: SW_EDATA from the level files (with file, line and column),
 * SW_ENOMEM.
 *
 * Quality tests (sw_site_series.qc) judge each valid reading before it
 * joins the timeline; a flagged reading is removed like a missing one.
 * The spike test holds one reading per series until the next one (or
 * until max_gap has passed): memory stays flat. */
int sw_stepper_advance(sw_stepper *stepper, int *done, sw_error *err);

/* Close the run: open events end with SW_END_SERIES_END and the last
 * months close.  The events and months it closes are then exposed as after
 * an advance. */
int sw_stepper_finish(sw_stepper *stepper, sw_error *err);

/* The timeline point just passed and each gate there (index as in
 * site->gates).  Valid after an advance that did not set *done, and after
 * finish (the last point). */
sw_time_ms sw_stepper_time(const sw_stepper *stepper);
const sw_step_gate *sw_stepper_gate_at(const sw_stepper *stepper, size_t gate);

/* The events and months closed by the last advance or finish. */
size_t sw_stepper_events(const sw_stepper *stepper, const sw_event **events);
size_t sw_stepper_months(const sw_stepper *stepper,
                         const sw_month_row **months);

/* List the gates' state changes from now on (call before the first
 * advance; off by default). */
void sw_stepper_list_changes(sw_stepper *stepper);

/* The state changes booked by the last advance (when listed, see
 * sw_stepper_list_changes(); none otherwise), each gate's in time
 * order. */
size_t sw_stepper_changes(const sw_stepper *stepper,
                          const sw_state_change **changes);

/* The instant up to which nothing the replay booked can change when each
 * level file gets more rows, later than its last: the least, over the
 * series in use, of its newest reading that joined the timeline (for a
 * series with the spike test, of the reading before that one, whose
 * verdict no later reading can change).  Returns 1 and sets *t, or 0 when
 * some series has no such reading.  Read it after the replay's last
 * advance. */
int sw_stepper_final_until(const sw_stepper *stepper, sw_time_ms *t);

/* The newest reading of series i that joined the timeline (valid, not
 * flagged): returns 1 and sets *t, or 0 when it has none. */
int sw_stepper_newest_reading(const sw_stepper *stepper, size_t i,
                              sw_time_ms *t);

/* Whether the last advance passed a timeline point. */
int sw_stepper_passed(const sw_stepper *stepper);

/* The readings flagged since the last advance began (in the order found;
 * a range flag may come before the verdict on the reading before it).
 * The flags of the advance that set *done are still there after
 * sw_stepper_finish(). */
size_t sw_stepper_flags(const sw_stepper *stepper,
                        const sw_stepper_flag **flags);

/* The least and greatest level of series i that joined the timeline
 * (valid, not flagged).  Returns 0 when it has none. */
int sw_stepper_level_extent(const sw_stepper *stepper, size_t i,
                            double *lo_m, double *hi_m);

/* The counts of flagged readings of series i, and the first ones. */
const sw_qc_stats *sw_stepper_qc_stats(const sw_stepper *stepper, size_t i);

/* Fill *err for a run without any valid reading (sw_stepper_has_data()
 * is 0): SW_EDATA at the first rejected field or flagged reading, naming
 * each series without a valid reading, its file, its counts and its first
 * rejected field (file:line:column) or flagged reading (file:line).
 * Returns SW_EDATA. */
int sw_stepper_no_data_error(const sw_stepper *stepper, sw_error *err);

/* Whether any valid sample was read (the timeline has a point). */
int sw_stepper_has_data(const sw_stepper *stepper);

/* The run: its span, and a gate's tally so far. */
void sw_stepper_span(const sw_stepper *stepper, sw_time_ms *start,
                     sw_time_ms *end);
const sw_tally *sw_stepper_tally(const sw_stepper *stepper, size_t gate);

/* Of a gate's hours not evaluated, those before the first or after the
 * last valid reading of one of its series (a series starting late or
 * ending early); the rest lie in gaps longer than max_gap. */
sw_time_ms sw_stepper_unknown_edge(const sw_stepper *stepper, size_t gate);

/* Data quality of the series in use: their count; for each, the site
 * series, the counts of its reader (records, duplicates, ...) and of its
 * column, and its gaps. */
size_t sw_stepper_n_series(const sw_stepper *stepper);
const sw_site_series *sw_stepper_series(const sw_stepper *stepper, size_t i);
const sw_reader_stats *sw_stepper_reader_stats(const sw_stepper *stepper,
                                               size_t i);
const sw_column_stats *sw_stepper_column_stats(const sw_stepper *stepper,
                                               size_t i);
const sw_gap_stats *sw_stepper_gap_stats(const sw_stepper *stepper, size_t i);

/* Gate evaluations made so far (for benchmarks). */
long long sw_stepper_evaluations(const sw_stepper *stepper);

/* Release everything; NULL is accepted. */
void sw_stepper_free(sw_stepper *stepper);

#endif
