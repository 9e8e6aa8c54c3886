/* sillwatch: forecast ensembles.
 *
 * A series whose value_column holds one '*' names an ensemble: every
 * header column that the pattern matches is a member, labelled by the text
 * the '*' stands for ("tw_*" matches "tw_07": member "07").  For screening,
 * a site is expanded into one gate per gate and member:
 *   - both series ensembles: members paired by label ([site] ensemble =
 *     paired, the default) or every combination (ensemble = crossed);
 *   - one series an ensemble: each member with the other, single series;
 *   - neither: the gate once, member label "".
 * A gate with a headwater series and no tailwater series is a
 * headwater-only forecast: it is listed apart, for the tailwater it needs.
 * The expanded site is then replayed by the stepper like any site.
 */
#ifndef SILLWATCH_ENSEMBLE_H
#define SILLWATCH_ENSEMBLE_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/site.h"

#define SW_MEMBER_MAX 64 /* bytes of a member label, with its NUL */

typedef struct sw_ensemble {
    sw_site site;            /* expanded: borrows the original's zone and
                                settings; release with sw_ensemble_fini */
    size_t n_orig;           /* gates of the original site */
    size_t *orig;            /* [site.n_gates]: the original gate */
    char (*member)[SW_MEMBER_MAX]; /* [site.n_gates]: its member label */
    size_t *n_members;       /* [n_orig]: expanded gates of each (0 for a
                                headwater-only gate) */
    size_t n_hw_only;
    size_t *hw_only;         /* original gates without a tailwater series */
    size_t n_hw_series;
    sw_site_series *hw_series; /* [n_hw_only members...]: see below */
    size_t *hw_series_gate;  /* [n_hw_series]: the original gate of each */
} sw_ensemble;

/* Expand `site` (which must outlive the ensemble).  Errors: SW_ESITE for a
 * gate without a headwater series, a pattern with more than one '*',
 * members that cannot be paired by label (the message lists both sets);
 * SW_EDATA when a file cannot be opened or a pattern matches no column;
 * SW_ENOMEM. */
int sw_ensemble_expand(sw_ensemble *ens, const sw_site *site, sw_error *err);

/* Release the expansion; safe on a zeroed or failed one. */
void sw_ensemble_fini(sw_ensemble *ens);

/* The p-quantile (0 <= p <= 1) of values[0..n), n >= 1, which it sorts in
 * place: linear interpolation between order statistics, definition 7 of
 * Hyndman and Fan (1996), "Sample quantiles in statistical packages",
 * The American Statistician 50(4); +inf values sort last, and a quantile
 * that touches one is +inf. */
double sw_quantile(double *values, size_t n, double p);

/* The quantiles p[0..n_p) (each 0 <= p <= 1) of values[0..n), n >= 1, into
 * out[0..n_p): for each p the very number sw_quantile() gives (same
 * definition, same order statistics, same arithmetic), found by one
 * selection over the values for all of them, which it reorders (expected
 * time linear in n; at most n log n).  No value may be NaN (the replay
 * gives none). */
void sw_quantiles(double *values, size_t n, const double *p, size_t n_p,
                  double *out);

#endif
