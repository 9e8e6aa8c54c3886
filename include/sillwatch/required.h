/* sillwatch: the tailwater that a forecast's headwater-only gates need.
 *
 * For the gates of a screened site that have a headwater series and no
 * tailwater (sw_ensemble's hw_series: one per gate and headwater member),
 * required.csv gives at every reading, series after series, the critical
 * tailwaters (tw_alarm, tw_open) at that headwater, after the series'
 * quality tests (flagged readings go to flags.csv, once per series, unless
 * the replay of the site's other gates writes that series' flags);
 * required_max.csv gives each series' largest critical tailwaters and
 * when they come.  Each level file is read once for all its series
 * (colstore.h), and critical levels are remembered per gate by exact
 * headwater (critcache.h).  Nothing is printed: the caller hears of each
 * series through a callback.
 */
#ifndef SILLWATCH_REQUIRED_H
#define SILLWATCH_REQUIRED_H

#include <stdio.h>

#include "sillwatch/ensemble.h"
#include "sillwatch/error.h"
#include "sillwatch/series.h"
#include "sillwatch/site.h"

/* The largest tw_alarm [0] and tw_open [1] of a series, and when. */
typedef struct sw_required_max {
    double max[2];
    sw_time_ms when[2];
    int seen[2];            /* 0: the level is not needed at any reading */
} sw_required_max;

/* Where the rows go (streams of an output set; headers are written here
 * for required and required_max, flags.csv's is the caller's). */
typedef struct sw_required_out {
    FILE *required, *required_max, *flags;
} sw_required_out;

/* Called after each series: the series, its gate, its maxima and its
 * file's reader statistics (a partial last line, say). */
typedef void (*sw_required_fn)(void *ctx, const sw_site_series *series,
                               const sw_gate *gate, const sw_required_max *m,
                               const sw_reader_stats *stats);

/* Write the rows of every headwater-only series of `ens` (expanded from
 * `site`).  Errors: the readers' (file, line, column), the critical-level
 * searches', SW_ENOMEM, SW_EOUTPUT (temporary files), SW_EINTERRUPTED. */
int sw_required_write(const sw_site *site, const sw_ensemble *ens,
                      const sw_required_out *out, sw_required_fn each,
                      void *ctx, sw_error *err);

#endif
