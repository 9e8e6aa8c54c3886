/* sillwatch: screening a forecast ensemble.
 *
 * The expanded site (ensemble.h: a gate per gate and member) is replayed
 * through the engine; at every step, per original gate, forecast.csv gives
 * the members known, the fractions below the margin and open, and the
 * 10th, 50th and 90th percentiles of fs and of the sill reaction (one
 * selection for the three: sw_quantiles); at the end each gate's verdict
 * over its members (first times, members, median hours) feeds
 * screen.csv, earliest trouble first.  The headwater-only gates are
 * required.h's.  Nothing is printed: the caller hears of each level file
 * through a callback.
 */
#ifndef SILLWATCH_SCREENING_H
#define SILLWATCH_SCREENING_H

#include <stdio.h>

#include "sillwatch/ensemble.h"
#include "sillwatch/error.h"
#include "sillwatch/samplerun.h"
#include "sillwatch/series.h"
#include "sillwatch/site.h"

/* One gate's verdict over its members. */
typedef struct sw_screen_verdict {
    size_t gate;                        /* index into the original site */
    sw_sample_screen s;                 /* members, first times */
    sw_time_ms low_median, open_median; /* hours as ms */
} sw_screen_verdict;

/* Called after the replay for each level series it read (its reader's
 * statistics: a partial last line, say). */
typedef void (*sw_screen_series_fn)(void *ctx, const sw_site_series *series,
                                    const sw_reader_stats *stats);

/* Replay `ens` (expanded from `site`), writing forecast.csv (with its
 * header) and the flagged readings' rows of flags.csv; vd[g] for each
 * original gate g (site->n_gates of them), *t0 the first instant.
 * Errors: the engine's, SW_ENOMEM, SW_EINTERRUPTED. */
int sw_screen_members(const sw_site *site, const sw_ensemble *ens,
                      FILE *forecast, FILE *flags, sw_screen_verdict *vd,
                      sw_time_ms *t0, sw_screen_series_fn each, void *ctx,
                      sw_error *err);

/* Keep the verdicts of gates with members, earliest trouble first (then
 * gate order); returns how many. */
size_t sw_screen_order(const sw_ensemble *ens, sw_screen_verdict *vd,
                       size_t n_gates);

/* screen.csv: its header and a row per verdict; lead hours from
 * `issued`. */
void sw_screen_csv(FILE *fp, const sw_site *site, const sw_screen_verdict *vd,
                   size_t n, sw_time_ms issued);

#endif
