/* sillwatch: critical tailwaters remembered by headwater.
 *
 * A level record visits the same headwaters again and again (a gauge
 * reads to the millimetre: five million rows of a season may hold a
 * thousand distinct headwaters), and each critical-tailwater search costs
 * a few hundred gate evaluations.  A cache keeps, for one gate, the pair
 * (tw_alarm, tw_open) of recent headwaters in a direct-mapped table keyed
 * by the headwater's exact value, so a result from the cache is the very
 * result sw_gate_critical_tailwater() gives for that headwater: outputs
 * do not change by a bit.
 */
#ifndef SILLWATCH_CRITCACHE_H
#define SILLWATCH_CRITCACHE_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"

typedef struct sw_crit_cache sw_crit_cache; /* opaque */

/* The slots the step log and screen's headwater-only gates take: a
 * season visits a few thousand distinct headwaters; a power of two. */
#define SW_CRIT_CACHE_SLOTS 4096

/* A cache of `slots` entries (rounded up to a power of two, at least 2)
 * for `gate`, which must outlive it and not change.  Errors: SW_ENOMEM. */
int sw_crit_cache_alloc(sw_crit_cache **cache, const sw_gate *gate,
                        size_t slots, sw_error *err);

/* tw_alarm and tw_open at headwater `hw_m` (finite), from the cache or
 * searched and kept.  Errors: those of sw_gate_critical_tailwater() (a
 * failed search is not kept). */
int sw_crit_cache_tailwater(sw_crit_cache *cache, double hw_m,
                            sw_crit *alarm, sw_crit *open, sw_error *err);

/* Searches made and answers taken from the cache, for benchmarks. */
void sw_crit_cache_counts(const sw_crit_cache *cache, long *searched,
                          long *hits);

/* The gate the cache serves. */
const sw_gate *sw_crit_cache_gate(const sw_crit_cache *cache);

/* Release; NULL is accepted. */
void sw_crit_cache_free(sw_crit_cache *cache);

#endif
