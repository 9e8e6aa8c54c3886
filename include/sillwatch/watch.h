/* sillwatch: a live watch of a site's level files, resumable after any
 * stop.
 *
 * A watch keeps its state in a folder of its own (STATEDIR):
 *
 *   mirror/K-NAME    per level file of the series in use, an append-only
 *                    copy of every complete record taken from it
 *                    (follow.h), synced before the checkpoint names it
 *   checkpoint       the followers' positions, each gate's alarms raised,
 *                    each series' newest reading and staleness, the
 *                    notices whose commands have not started (written
 *                    whole: temporary file, rename, folder synced)
 *   summary.csv, events.csv, flags.csv, manifest.csv
 *                    a replay of the mirrors exactly as `run` writes it
 *                    (replay.h), published as one set
 *   status.csv       one row per gate: where it stands
 *   lock             held while a watch uses the folder
 *
 * Each poll takes the new records of every file into its mirror, and when
 * a mirror grew, replays the site from the mirrors into the folder: the
 * outputs are then `run`'s over the files as read so far, by
 * construction.  State changes (the engine's, sw_state_change) become
 * alarms once they are final: before the instant up to which no later
 * row can change the replay (sw_stepper_final_until), and, with a hold,
 * once the new state has lasted that long (in data time).  A gate's
 * alarms name the state last raised as the old one, so a state that does
 * not last the hold raises nothing, and a change back to the state last
 * raised raises nothing.  A gate's first state, when ok, is raised
 * silently.
 *
 * A series whose newest valid reading has not changed for stale_after of
 * wall-clock time gives a `stale` notice, and a `fresh` one when a newer
 * reading comes.
 *
 * The caller prints each poll's notices, then calls sw_watch_commit(),
 * which records them as raised: a stop between the two (kill -9) raises
 * them again at the next start; none is lost.
 *
 * The watch never prints.
 */
#ifndef SILLWATCH_WATCH_H
#define SILLWATCH_WATCH_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"
#include "sillwatch/site.h"
#include "sillwatch/timeutil.h"

typedef struct sw_watch_options {
    sw_time_ms hold_ms;        /* raise a state once it lasted this long
                                  (data time); 0: at once */
    sw_time_ms stale_after_ms; /* wall clock; 0: twice the site's max_gap */
    const char *tool_version;  /* for the manifest */
    const char *generated;     /* the manifest's run time, fixed
                                  (SOURCE_DATE_EPOCH); NULL: the time of
                                  each replay */
} sw_watch_options;

/* What a poll found for the caller to say. */
typedef enum sw_notice_kind {
    SW_NOTICE_ALARM = 0, /* a gate's state changed */
    SW_NOTICE_STALE,     /* a series has had no new reading for a while */
    SW_NOTICE_FRESH      /* ... and now has one */
} sw_notice_kind;

typedef struct sw_notice {
    int kind;               /* sw_notice_kind */
    size_t gate;            /* alarm: index into site->gates */
    size_t series;          /* stale, fresh: index into site->series */
    int has_t;
    sw_time_ms t;           /* alarm: the change; stale, fresh: the
                               series' newest reading (when has_t) */
    int from, to;           /* alarm: states; from SW_STATE_UNKNOWN when
                               none was raised before */
    double hw_m, tw_m, fs;  /* alarm: at t */
    int crit_ok;            /* alarm: tw_alarm was found */
    sw_crit tw_alarm;       /* the tailwater to stay above at hw_m */
    sw_time_ms held_ms;     /* alarm: the hold it lasted (0: none asked) */
    sw_time_ms quiet_ms;    /* stale, fresh: wall time without a new
                               reading */
} sw_notice;

typedef struct sw_watch sw_watch; /* opaque */

/* Start or resume watching `site` (loaded by the caller; the watch points
 * its series at the mirrors, so it must not be used for anything else,
 * and must outlive the watch) in the folder `statedir` (which must exist).
 * A checkpoint there is resumed: it must have been made for the same site
 * file (SHA-256; SW_ESITE otherwise), and what it says was read of each
 * level file must still be there (SW_EDATA otherwise); both messages
 * suggest --restart.  Errors also: SW_ESITE (a NetCDF series: only CSV
 * files are followed), SW_EDATA (a level file missing at a first start),
 * SW_EOUTPUT (the folder, or another watch holds it), SW_ENOMEM. */
int sw_watch_open(sw_watch **watch, sw_site *site, const char *statedir,
                  const sw_watch_options *opt, sw_error *err);

/* One poll at wall-clock time `wall_ms` (ms since 1970): new records
 * into the mirrors, a replay if any came (always at the first poll),
 * alarms, staleness, status.csv.  *notices (valid until the next call)
 * lists what the caller must say; *replayed is 1 when the outputs were
 * replayed.  Errors: those of the followers and the replay (a level
 * error names the level file, or the mirror's line after a rotation),
 * SW_EOUTPUT. */
int sw_watch_poll(sw_watch *watch, sw_time_ms wall_ms,
                  const sw_notice **notices, size_t *n, int *replayed,
                  sw_error *err);

/* Record the last poll's notices as said, and which notices still wait
 * for their command (queued[0..n_queued), kept for the next start), in
 * the checkpoint.  Errors: SW_EOUTPUT. */
int sw_watch_commit(sw_watch *watch, const sw_notice *queued,
                    size_t n_queued, sw_error *err);

/* The notices the checkpoint held as waiting for their command, when the
 * watch was opened. */
size_t sw_watch_queued(const sw_watch *watch, const sw_notice **queued);

/* The notice as one line of text (no line end): what the caller prints,
 * and hands to an alarm's command. */
void sw_watch_notice_text(const sw_watch *watch, const sw_notice *notice,
                          char *buf, size_t n);

/* The environment entries ("SILLWATCH_...=VALUE") describing a notice
 * for its command: up to SW_WATCH_ENV of them in env[i], *n_env set. */
#define SW_WATCH_ENV 16
#define SW_WATCH_ENV_LEN 600
void sw_watch_notice_env(const sw_watch *watch, const sw_notice *notice,
                         char env[SW_WATCH_ENV][SW_WATCH_ENV_LEN],
                         size_t *n_env);

/* What the watch has done. */
typedef struct sw_watch_stats {
    size_t files;            /* level files followed */
    int resumed;             /* a checkpoint was resumed */
    long replays;            /* replays of the mirrors */
    double last_replay_s;    /* wall time of the last one */
    double total_replay_s;
    unsigned long long mirrored; /* bytes in the mirrors */
    long restarts;           /* files replaced or cut, seen */
} sw_watch_stats;
void sw_watch_get_stats(const sw_watch *watch, sw_watch_stats *stats);

/* Release (the lock too); everything written stays.  NULL is
 * accepted. */
void sw_watch_free(sw_watch *watch);

/* Move `statedir` aside to `statedir`.old (which must not exist), for a
 * fresh start; a missing statedir is no error.  Errors: SW_EOUTPUT
 * (another watch holds it; the rename failed). */
int sw_watch_set_aside(const char *statedir, sw_error *err);

#endif
