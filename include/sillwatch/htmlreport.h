/* sillwatch: the season report, one self-contained HTML page.
 *
 * The page is XHTML5 (well-formed XML that browsers read as HTML) with
 * inline CSS and inline SVG charts, no scripts and nothing fetched from a
 * network.  It holds: the verdict and the caution; the summary; the
 * levels with the governing critical tailwaters (tw_alarm, tw_open); the
 * factor of safety of each gate against its required value with the
 * periods below the margin and without data shaded; each gate's operating
 * envelope (headwater against tailwater, the ok / low / open regions and
 * the observed pairs); the hours below the margin per gate and month; the
 * ten worst events; the data-quality account; the gate parameters.
 *
 * Streaming: the report collects what it draws while the replay runs, in
 * memory that does not grow with the length of the series.  Time is cut
 * into at most SW_HTML_BUCKETS equal columns; each keeps, for every trace,
 * its least and greatest value and its first and last one (so no peak is
 * lost in drawing), and whether some gate was below its margin or without
 * data in it (so no event is lost, however short).  When the run outgrows
 * the columns their width doubles and neighbours merge.  The observed
 * level pairs of the envelope are kept as a set of cells whose size
 * doubles when the set fills.  Only the month table grows with the run,
 * by one small row a month.
 *
 * Use: sw_html_report_alloc() before the replay; after each advance of
 * the stepper (and after its finish) sw_html_report_point() and, for the
 * events and months that advance closed, sw_html_report_event() and
 * sw_html_report_month(); at the end sw_html_report_write().  The stepper
 * must run with the options keep_points and by_month.
 */
#ifndef SILLWATCH_HTMLREPORT_H
#define SILLWATCH_HTMLREPORT_H

#include <stdio.h>

#include "sillwatch/error.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"

/* Time columns kept for drawing (the charts are about 880 units wide). */
#define SW_HTML_BUCKETS 1024

/* Gates drawn: a site with more has charts (factor of safety, envelope,
 * hours by month) for its first SW_HTML_GATES_DRAWN gates only, and the
 * rest in the tables, so that the page and the memory stay bounded. */
#define SW_HTML_GATES_DRAWN 24

/* What the page says about its making. */
typedef struct sw_html_meta {
    const char *site_sha256;   /* hex digest of the site file */
    const char *generated;     /* ISO 8601 generation time */
    const char *version;       /* of the program */
    const char *caution;       /* plain text; line breaks become spaces */
    const char *command_line;  /* as the user gave it; NULL: not shown */
    const char *const *series_sha256; /* hex digest of each series' file,
                                         in the stepper's series order;
                                         NULL (or a NULL entry): unknown */
} sw_html_meta;

typedef struct sw_html_report sw_html_report; /* opaque */

/* Prepare a report for the replay of `site` (which must outlive it).
 * Errors: SW_ENOMEM. */
int sw_html_report_alloc(sw_html_report **rep, const sw_site *site,
                         sw_error *err);

/* Take in the timeline point the stepper just passed: each gate's levels
 * and factor of safety, the critical tailwaters at its headwater, and the
 * time without data since the last point.  Errors: SW_ENUMERIC from a
 * critical-level search. */
int sw_html_report_point(sw_html_report *rep, const sw_stepper *st,
                         sw_error *err);

/* Take in a closed event (shading, the worst-events table). */
void sw_html_report_event(sw_html_report *rep, const sw_event *ev);

/* Take in a reading flagged by a quality test of series `s` (one of the
 * site's): marked on the level chart. */
void sw_html_report_flag(sw_html_report *rep, const sw_site_series *s,
                         const sw_qc_reading *reading);

/* Take in a closed month of one gate.  Errors: SW_ENOMEM. */
int sw_html_report_month(sw_html_report *rep, const sw_month_row *m,
                         sw_error *err);

/* Write the page to `fp` after the stepper's finish.  Write errors are
 * left for the caller to find when it closes `fp`.  Errors: SW_ENUMERIC
 * from the envelope's evaluation (none expected). */
int sw_html_report_write(const sw_html_report *rep, FILE *fp,
                         const sw_stepper *st, const sw_html_meta *meta,
                         sw_error *err);

/* Release everything; NULL is accepted. */
void sw_html_report_free(sw_html_report *rep);

#endif
