/* sillwatch: one replay session, the driver behind `run` (and every
 * command that replays a site: a many-sites run, a live watch).
 *
 * A session takes a loaded site and an output folder, opens the outputs
 * of a replay as temporary files (outfile.h), advances the replay engine
 * (stepper.h) and writes what each advance exposes: flagged readings,
 * events, months, steps with their critical tailwaters, the report's
 * reduction.  Finishing writes the summary, the events in order of start,
 * the JSON summary and the season report, and publishes the files as one
 * set with their manifest.  A session freed before it finished leaves the
 * folder's previous set as it was.
 *
 *   sw_replay_open()    outputs opened, headers written
 *   sw_replay_feed()    some timeline points (call until *done)
 *   sw_replay_finish()  the last point, the closing outputs, the publish
 *   sw_replay_free()
 *
 * The session never prints; the caller reads the engine's tallies and
 * statistics through sw_replay_stepper() to print its own summary.
 */
#ifndef SILLWATCH_REPLAY_H
#define SILLWATCH_REPLAY_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/samplerun.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"

/* Called after each advance of the engine that passed a point, and once
 * more after its finish, for a caller that follows what the engine
 * exposes (sw_stepper_changes(), sw_stepper_gate_at()).  Returns SW_OK or
 * an error that ends the session's call. */
typedef int (*sw_replay_hook)(void *ctx, const sw_stepper *stepper,
                              sw_error *err);

/* Which outputs besides summary.csv, events.csv and flags.csv. */
typedef struct sw_replay_options {
    int steps;    /* steps.csv: every gate at every point, with tw_alarm
                     and tw_open (remembered by exact headwater:
                     critcache.h) */
    int by_month; /* months.csv */
    int report;   /* report.html */
    int json;     /* summary.json */
} sw_replay_options;

/* For a caller that follows the replay as it goes (a live watch). */
typedef struct sw_replay_follow {
    sw_replay_hook hook; /* NULL: none */
    void *hook_ctx;
    int points;   /* the engine keeps each gate's result at every point
                     (sw_stepper_gate_at) */
    int changes;  /* the engine lists state changes (sw_stepper_changes) */
    const char *const *shown_paths; /* per site series (index as in
                     site->series): the file flags.csv names in place of
                     the series' path (which is a copy read in its
                     stead); NULL: the paths */
} sw_replay_follow;

/* What the outputs record of their making. */
typedef struct sw_replay_meta {
    const char *tool_version; /* "0.1.0" */
    const char *site_sha256;  /* 64 hex digits; "" when not known (a site
                                 file read from standard input) */
    const char *generated;    /* ISO 8601 UTC: the run's time */
    const char *caution;      /* the caution, for the report and JSON */
    const char *command_line; /* for the report; NULL: not shown */
} sw_replay_meta;

/* The outputs of a replay, in the order of the set. */
enum {
    SW_REPLAY_SUMMARY, SW_REPLAY_EVENTS, SW_REPLAY_FLAGS, SW_REPLAY_STEPS,
    SW_REPLAY_MONTHS, SW_REPLAY_REPORT, SW_REPLAY_JSON, SW_REPLAY_SAMPLES,
    SW_REPLAY_SAMPLE_STEPS, SW_REPLAY_N_OUT
};

/* The file name of output k (SW_REPLAY_*): "summary.csv" ... */
const char *sw_replay_output_name(int k);

typedef struct sw_replay sw_replay; /* opaque */

/* Open a session for `site` (which must outlive it) writing into the
 * folder `outdir`, which must exist.  Errors: SW_ENOMEM, SW_EDATA (a level
 * file that cannot be opened), SW_EOUTPUT. */
int sw_replay_open(sw_replay **replay, const sw_site *site,
                   const char *outdir, const sw_replay_options *opt,
                   sw_error *err);

/* Add the sampled replays of the site (run --samples; samplerun.h, done
 * before and outliving the session) to the set: their statistics go to
 * samples.csv and, with the `steps` option and the samples' gates kept,
 * the fraction of samples low and open at each point to sample_steps.csv.
 * Call after sw_replay_open() and before the first sw_replay_feed().
 * Errors: SW_EOUTPUT. */
int sw_replay_add_samples(sw_replay *replay, const sw_samplerun *samples,
                          sw_error *err);

/* sw_replay_open() for a caller that follows the replay (`follow` may be
 * NULL: the same as sw_replay_open()). */
int sw_replay_open_following(sw_replay **replay, const sw_site *site,
                             const char *outdir,
                             const sw_replay_options *opt,
                             const sw_replay_follow *follow, sw_error *err);

/* Advance the replay by at most `max_points` timeline points, writing
 * what each exposes; *done becomes 1 when every series has ended (then
 * call sw_replay_finish()).  Errors: those of the engine and the outputs,
 * SW_EINTERRUPTED when a stop was requested (cancel.h). */
int sw_replay_feed(sw_replay *replay, long max_points, int *done,
                   sw_error *err);

/* Finish the replay (after *done), write the closing outputs and publish
 * the set (outfile.h).  Errors: SW_EDATA when no series held a valid
 * reading, those of the outputs, SW_EINTERRUPTED. */
int sw_replay_finish(sw_replay *replay, const sw_replay_meta *meta,
                     sw_error *err);

/* The engine, for the caller's printing: tallies, spans, statistics. */
const sw_stepper *sw_replay_stepper(const sw_replay *replay);

/* Timeline points fed so far. */
long sw_replay_points(const sw_replay *replay);

/* Release; unfinished outputs are removed, the folder's previous set is
 * left as it was.  NULL is accepted. */
void sw_replay_free(sw_replay *replay);

#endif
