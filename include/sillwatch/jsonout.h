/* sillwatch: JSON for scripts (jansson): the values of `check`, `point`
 * and the summaries of `run` and `screen`.
 *
 * Units are named in the keys (headwater_m, hw_moment_Nm, weight_N,
 * density_kgm3, max_gap_h ...).  JSON has no infinity and no "not needed",
 * so (README, "JSON"):
 *   - a factor of safety that is infinite is the string "inf" ("-inf");
 *     any other is a number;
 *   - a critical level that is not needed (the limit holds at any level)
 *     is null, one that cannot be reached (`none`) is the string "none",
 *     any other a number in m;
 *   - a value that does not exist (min_fs of a gate never evaluated, its
 *     time) is null;
 *   - times are ISO 8601 strings as in the CSV outputs; hours are numbers
 *     with the same 4 decimals, so the CSV identities hold.
 * Each builder returns a new reference, or NULL when out of memory.
 */
#ifndef SILLWATCH_JSONOUT_H
#define SILLWATCH_JSONOUT_H

#include <stdio.h>

#include <jansson.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"
#include "sillwatch/timeutil.h"

/* A finite number (a zero without sign), or "inf"/"-inf", or null for
 * NaN. */
json_t *sw_json_number(double v);

/* A critical level: number, null (not needed) or "none". */
json_t *sw_json_crit(const sw_crit *c);

/* Milliseconds as hours rounded to 4 decimals, as in the CSV (a negative
 * duration as minus the rounded magnitude). */
json_t *sw_json_hours(sw_time_ms ms);

/* An instant as ISO 8601 with the zone's offset, as in the CSV. */
json_t *sw_json_time(sw_time_ms t, const sw_zone *zone);

/* Every parameter and derived value of the site (check --format json). */
json_t *sw_json_site(const sw_site *site);

/* One gate at one pair of levels (point --format json): the loads, the
 * verdict and the critical levels (alarm and open for each water). */
json_t *sw_json_point_gate(const sw_gate *g, const sw_gate_result *r,
                           const sw_crit *tw_alarm, const sw_crit *tw_open,
                           const sw_crit *hw_alarm, const sw_crit *hw_open);

/* The uncertain keys of a sampled result: [{"parameter", "value", "sd",
 * "unit"}, ...] in draw order. */
struct sw_uncert;
struct sw_uncert_point;
json_t *sw_json_uncert_keys(const struct sw_uncert *u);

/* One gate over the samples at one pair of levels (point --samples
 * --format json): proportions with standard errors, percentiles as
 * {"p05", "p50", "p95"} (critical tailwaters: null where not needed), the
 * net moment's sensitivity shares largest first. */
json_t *sw_json_uncert_point(const struct sw_uncert *u,
                             const struct sw_uncert_point *pt);

/* One row of summary.csv as an object. */
json_t *sw_json_summary_row(const char *gate, sw_time_ms start,
                            sw_time_ms end, const sw_tally *t,
                            const sw_zone *zone);

/* Set obj[key] = value (stolen); a NULL value or a failure marks *bad. */
void sw_json_set(json_t *obj, const char *key, json_t *value, int *bad);

/* Write `doc` to `fp`, indented, numbers with up to 15 significant digits
 * (each value printed as the CSV prints it), and a newline.  Returns SW_OK,
 * or SW_ENOMEM when `doc` is NULL (a builder ran out of memory), or
 * SW_EOUTPUT when the write fails. */
int sw_json_write(const json_t *doc, FILE *fp, sw_error *err);

#endif
