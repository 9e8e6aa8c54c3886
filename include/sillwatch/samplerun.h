/* sillwatch: a full replay of a site for each sample of its uncertain
 * keys (run --samples).
 *
 * Sample k (uncert.h: drawn from the run's seed and k alone) is the site
 * with its drawn gates and datums (sw_uncert_site), replayed by the same
 * engine as the site itself (stepper.h: exact hours, events), so that the
 * per-gate hours below the margin and open, and whether the gate opened
 * at all, are those of a run of that site.  The samples are replayed in
 * worker processes (jobs.h: the engine has threads of its own, and the
 * netCDF library is not thread-safe), each writing its tallies into its
 * slots of memory shared with the parent; a sample's tallies depend on k
 * alone, so the results do not depend on the number of workers.
 *
 * The statistics: per gate, percentiles (5, 50, 95 %; Hyndman and Fan
 * definition 7) of hours below the margin and open, and of the least
 * factor of safety; the proportion of samples in which the gate fell
 * below its margin, and opened, at least once, with standard errors.
 * With the drawn gates kept, the fraction of samples low and open at each
 * point of the replay: at a timeline point every sample's levels are the
 * site's plus the sample's datum shifts, so its state there is the drawn
 * gate's state at those levels.
 */
#ifndef SILLWATCH_SAMPLERUN_H
#define SILLWATCH_SAMPLERUN_H

#include <stddef.h>
#include <stdio.h>

#include "sillwatch/error.h"
#include "sillwatch/stepper.h"
#include "sillwatch/uncert.h"

/* One gate in one sample's replay. */
typedef struct sw_sample_gate {
    sw_time_ms low, open;   /* hours in the low and open states (ms) */
    sw_time_ms evaluated;
    long events;
    double min_fs;          /* +inf when never evaluated */
    int below_seen;         /* below the margin (low or open) at all */
    int open_seen;          /* open at all */
} sw_sample_gate;

typedef struct sw_samplerun {
    const sw_uncert *u;
    size_t n;               /* samples */
    size_t n_gates;         /* the site's */
    sw_sample_gate *tally;  /* [n][n_gates] */
    /* with keep_gates: the drawn gates and their datum shifts, for the
     * fractions at each point */
    sw_gate *gates;         /* [n][n_gates] or NULL */
    double *dhw, *dtw;      /* [n][n_gates] */
} sw_samplerun;

/* Called in the parent as samples finish: `done` of `n`. */
typedef void (*sw_samplerun_progress)(size_t done, size_t n, void *ctx);

/* Replay samples 0 .. n - 1 (1 to SW_UNCERT_MAX_SAMPLES) of `u`'s site on
 * at most `workers` processes at a time, into *sr (release with
 * sw_samplerun_fini).  With keep_gates, also draw and keep every sample's
 * gates (on `workers` threads) for sw_samplerun_step_rows().  Returns
 * SW_OK; the error of the lowest sample that failed (SW_ESITE from the
 * draws, SW_EDATA from the level files ...); SW_EINTERRUPTED after a stop
 * request (passed on to the workers); SW_EINTERNAL when a worker died;
 * SW_ENOMEM; SW_EOUTPUT when no worker process could be made. */
int sw_samplerun_run(sw_samplerun *sr, const sw_uncert *u, size_t n,
                     unsigned workers, int keep_gates,
                     sw_samplerun_progress progress, void *ctx,
                     sw_error *err);
void sw_samplerun_fini(sw_samplerun *sr);

/* The statistics of gate g over the samples. */
typedef struct sw_samplerun_stats {
    /* percentiles (sw_uncert_pctl), in units of 0.0001 h (rounded half
     * up, as summary.csv's hours: with every sample alike they equal its
     * figures) */
    long long below4[SW_UNCERT_N_PCTL], open4[SW_UNCERT_N_PCTL];
    double min_fs[SW_UNCERT_N_PCTL];
    size_t n_below, n_open; /* samples below the margin / open at all */
    double p_below, p_below_se, p_open, p_open_se;
} sw_samplerun_stats;

/* Returns SW_OK or SW_ENOMEM. */
int sw_samplerun_stats_of(const sw_samplerun *sr, size_t g,
                          sw_samplerun_stats *st, sw_error *err);

/* samples.csv: one row per gate:
 * gate,samples,seed,hours_below_margin_p05,hours_below_margin_p50,
 * hours_below_margin_p95,hours_open_p05,hours_open_p50,hours_open_p95,
 * p_below_once,p_below_once_se,p_open_once,p_open_once_se,min_fs_p05,
 * min_fs_p50,min_fs_p95.  Returns SW_OK or SW_ENOMEM. */
void sw_samplerun_header(FILE *fp);
int sw_samplerun_write(FILE *fp, const sw_samplerun *sr, sw_error *err);

/* sample_steps.csv (needs keep_gates): time,gate,samples,fraction_low,
 * fraction_open; one row per gate known at the point just passed by
 * `st` (the site's own replay), `when` its time as sw_time_format()
 * writes it. */
void sw_samplerun_steps_header(FILE *fp);
void sw_samplerun_step_rows(FILE *fp, const sw_samplerun *sr,
                            const char *when, const sw_stepper *st);

/* ---- screen --samples ------------------------------------------------------- */

/* One gate of the site in one sample's screen (cmd_screen.c): the sample's
 * site expanded into its forecast members (ensemble.h), each replayed by
 * the engine; the verdict over the gate's members.  All zero for a
 * headwater-only gate (no members replayed). */
typedef struct sw_sample_screen {
    size_t members;               /* expanded gates of this gate */
    size_t low_members;           /* members below the margin at all */
    size_t open_members;          /* members open at all */
    int low_seen, open_seen;      /* some member below the margin / open */
    sw_time_ms low_first;         /* the earliest of those, when seen */
    sw_time_ms open_first;
} sw_sample_screen;

/* Fold one member's replay (its tally) into its gate's verdict: the
 * members, those below the margin or open at all, the earliest times.
 * Used for every screen, sampled or not. */
void sw_sample_screen_add(sw_sample_screen *v, const sw_tally *t);

typedef struct sw_samplescreen {
    const sw_uncert *u;
    size_t n;                     /* samples */
    size_t n_gates;               /* the site's */
    sw_sample_screen *verdict;    /* [n][n_gates] */
} sw_samplescreen;

/* Screen samples 0 .. n - 1 (1 to SW_UNCERT_MAX_SAMPLES) of `u`'s site,
 * each a full replay of every member of its forecast, on at most
 * `workers` processes, into *ss (release with sw_samplescreen_fini).
 * Errors as sw_samplerun_run(), and those of sw_ensemble_expand(). */
int sw_samplescreen_run(sw_samplescreen *ss, const sw_uncert *u, size_t n,
                        unsigned workers, sw_samplerun_progress progress,
                        void *ctx, sw_error *err);
void sw_samplescreen_fini(sw_samplescreen *ss);

/* The statistics of gate g over samples x members. */
typedef struct sw_samplescreen_stats {
    size_t members;               /* per sample */
    size_t n_low, n_open;         /* samples where some member got there */
    double p_low, p_low_se, p_open, p_open_se; /* their proportions */
    double fraction_low, fraction_open; /* of the (sample, member) pairs */
    /* percentiles (sw_uncert_pctl) of the earliest time below the margin
     * and open, less `issued`, in ms, over the samples where it happened
     * (valid when n_low, n_open > 0) */
    double low_lead_ms[SW_UNCERT_N_PCTL], open_lead_ms[SW_UNCERT_N_PCTL];
} sw_samplescreen_stats;

/* Returns SW_OK or SW_ENOMEM. */
int sw_samplescreen_stats_of(const sw_samplescreen *ss, size_t g,
                             sw_time_ms issued, sw_samplescreen_stats *st,
                             sw_error *err);

/* screen_samples.csv: one row per gate with members (in site order):
 * gate,samples,members,seed,p_some_below,p_some_below_se,p_some_open,
 * p_some_open_se,fraction_below,fraction_open,below_lead_hours_p05,
 * below_lead_hours_p50,below_lead_hours_p95,open_lead_hours_p05,
 * open_lead_hours_p50,open_lead_hours_p95; lead hours empty where no
 * sample got there.  Returns SW_OK or SW_ENOMEM. */
void sw_samplescreen_header(FILE *fp);
int sw_samplescreen_write(FILE *fp, const sw_samplescreen *ss,
                          sw_time_ms issued, sw_error *err);

#endif
