/* sillwatch: the step log (steps.csv) written on a thread of its own.
 *
 * A step log holds a row for every gate at every point of a replay, with
 * the gate's critical tailwaters at that point's headwater (tw_alarm and
 * tw_open, remembered by exact headwater: critcache.h): six times the
 * bytes the replay reads.  The replay's thread only copies each point's
 * figures into a batch (sw_steplog_point); a thread of the log's own
 * takes the full batches, finds the critical levels, formats the rows and
 * writes them in place into the output file (sw_outfile_room), whose sink
 * hashes and writes them on a third thread.  So the engine, the
 * formatting and the hashing share the cores.  The rows are those
 * sw_report_step_row() writes, in the same order, byte for byte.  Where
 * no thread can be started the batches are formatted on the caller's.
 */
#ifndef SILLWATCH_STEPLOG_H
#define SILLWATCH_STEPLOG_H

#include "sillwatch/error.h"
#include "sillwatch/outfile.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"

typedef struct sw_steplog sw_steplog; /* opaque */

/* A step log of `site`'s gates into `file` (open; the header is written
 * here).  `site` and `file` must outlive the log.  Errors: SW_ENOMEM. */
int sw_steplog_open(sw_steplog **log, const sw_site *site, sw_outfile *file,
                    sw_error *err);

/* The rows of the point the stepper has just passed: each known gate. */
void sw_steplog_point(sw_steplog *log, const sw_stepper *st);

/* Every row formatted and handed to the file; the thread ended.  Call
 * before closing the file.  Write errors show at sw_outfile_close(). */
void sw_steplog_finish(sw_steplog *log);

/* Release (ending the thread if it still runs, its rows dropped); NULL is
 * accepted. */
void sw_steplog_free(sw_steplog *log);

#endif
