/* sillwatch: alarm-threshold tables for controllers.
 *
 * A table runs over a range of one water level and gives, at each level,
 * the critical levels of the other water for every selected gate (gate.h,
 * sw_gate_critical_tailwater / sw_gate_critical_headwater), for the alarm
 * limit (the gate stays `ok`) and the open limit (the leaf stays shut), and
 * the governing one over the gates with the gate that sets it:
 *
 *   by headwater   rows are headwaters; values are tw_alarm and tw_open,
 *                  the tailwater to stay above.  The highest governs.
 *                  "Not needed" (the limit holds at any tailwater) never
 *                  governs while some gate needs a level; where no gate
 *                  does, the governing value is "not needed" too and no
 *                  gate governs.
 *   by tailwater   rows are tailwaters; values are hw_alarm and hw_open,
 *                  the headwater to stay below.  The lowest governs.
 *                  "None" (SW_CRIT_UNATTAINABLE: the limit fails even with
 *                  the headwater below the leaf) is the most restrictive
 *                  value and governs wherever any gate has it; the
 *                  governing gate is then the first such gate in the order
 *                  given.
 *
 * On ties the first gate in the order given governs.
 *
 * Published values are on a grid of SW_THRESHOLDS_RES_M (0.1 mm), rounded
 * toward the safe side: a critical tailwater up, a critical headwater down
 * (the searches already return the safe end of a bracket of 0.01 mm).
 *
 * A table is either the regular grid of its range, computed row by row
 * when asked for (memory does not grow with the number of levels), or,
 * after sw_thresholds_simplify(), the breakpoints of a piecewise-linear
 * table that stays within a tolerance of the exact curves (see there).
 *
 * Pure computation: no I/O.  A table keeps pointers to the caller's gates,
 * which must outlive it.
 */
#ifndef SILLWATCH_THRESHOLDS_H
#define SILLWATCH_THRESHOLDS_H

#include <stddef.h>
#include <stdint.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"

/* The resolution of levels and published values, m (0.1 mm). */
#define SW_THRESHOLDS_RES_M 1e-4
/* Most levels in a range. */
#define SW_THRESHOLDS_MAX_LEVELS 1000000
/* Largest magnitude of FROM and TO, m (as for level files). */
#define SW_THRESHOLDS_MAX_LEVEL_M 100000.0
/* Least simplification tolerance, m: five times the resolution, so that
 * the rounding of published values leaves most of it to the fit. */
#define SW_THRESHOLDS_MIN_TOL_M 5e-4
/* Most gates in one table. */
#define SW_THRESHOLDS_MAX_GATES 64
/* "No gate governs" (governing value not needed). */
#define SW_THRESHOLDS_NO_GATE ((size_t)-1)

/* Which level the rows run over. */
typedef enum sw_thresholds_axis {
    SW_THRESHOLDS_BY_HEADWATER = 0, /* values: critical tailwaters */
    SW_THRESHOLDS_BY_TAILWATER      /* values: critical headwaters */
} sw_thresholds_axis;

/* The two values of each gate, in this order in every array below. */
enum {
    SW_THRESHOLDS_ALARM = 0, /* SW_LIMIT_ALARM: tw_alarm or hw_alarm */
    SW_THRESHOLDS_OPEN = 1,  /* SW_LIMIT_OPEN: tw_open or hw_open */
    SW_THRESHOLDS_N_LIMITS = 2
};

/* A range FROM:TO:STEP.  The three numbers are held exactly as integers of
 * SW_THRESHOLDS_RES_M, so the number of levels is exact (no rounding slack
 * is needed to include TO), and as the nearest doubles. */
typedef struct sw_thresholds_range {
    double from_m, to_m, step_m;
    int64_t from_u, to_u, step_u;   /* in units of SW_THRESHOLDS_RES_M */
    size_t n_levels;                /* levels FROM + i STEP <= TO */
} sw_thresholds_range;

/* Parse `text` as FROM:TO:STEP (m): three plain decimal numbers (an
 * optional sign, digits, and at most 4 decimals after a '.'; no exponent,
 * no blanks), with |FROM|, |TO| <= SW_THRESHOLDS_MAX_LEVEL_M, STEP > 0,
 * TO >= FROM, and at most SW_THRESHOLDS_MAX_LEVELS levels.  Returns SW_OK,
 * or SW_EUSAGE with a message naming the part at fault and the rule (no
 * file position); *range is then untouched. */
int sw_thresholds_parse_range(const char *text, sw_thresholds_range *range,
                              sw_error *err);

/* Level i of the range, m: FROM + i * STEP, computed so (never by repeated
 * addition).  i < range->n_levels. */
double sw_thresholds_level(const sw_thresholds_range *range, size_t i);

/* `level_m` rounded to SW_THRESHOLDS_RES_M toward the safe side for the
 * values of a table over `axis`: up for critical tailwaters (by headwater),
 * down for critical headwaters (by tailwater). */
double sw_thresholds_round(sw_thresholds_axis axis, double level_m);

/* One row of a table.  Owned by the table; valid until the next call of
 * sw_thresholds_get_row() or sw_thresholds_free(). */
typedef struct sw_thresholds_row {
    double level_m;             /* the row's headwater or tailwater */
    const sw_crit *crit;        /* per gate: crit[2 g + SW_THRESHOLDS_ALARM],
                                   crit[2 g + SW_THRESHOLDS_OPEN]; levels
                                   rounded as sw_thresholds_round() */
    sw_crit governing[SW_THRESHOLDS_N_LIMITS];
    size_t governing_gate[SW_THRESHOLDS_N_LIMITS]; /* index into the gates,
                                   or SW_THRESHOLDS_NO_GATE */
} sw_thresholds_row;

/* What sw_thresholds_simplify() achieved. */
typedef struct sw_thresholds_fit {
    double tol_m;           /* the tolerance asked for */
    double max_error_m;     /* the largest |table - exact| found at the
                               fine levels and the midpoints between them,
                               outside the steps */
    double fine_step_m;     /* the nominal spacing of the fine grid */
    size_t n_fine;          /* fine levels evaluated (with refinements) */
    size_t n_midpoints;     /* midpoints evaluated and checked */
    size_t n_steps;         /* steps: see sw_thresholds_get_step() */
} sw_thresholds_fit;

/* A step: a 0.1 mm interval between two adjacent rows where a curve
 * changes faster than a table of that resolution can follow (a jump of the
 * critical level).  Inside it the table promises nothing. */
typedef struct sw_thresholds_step {
    size_t curve;           /* 2 g + limit for gate g; 2 n_gates + limit
                               for the governing value */
    double from_m, to_m;    /* the interval of the row level */
    double before_m, after_m; /* the exact values at its ends (NAN where
                                 not a level) */
} sw_thresholds_step;

typedef struct sw_thresholds sw_thresholds;

/* A table of the `n_gates` gates `gates` (validated and prepared; 1 to
 * SW_THRESHOLDS_MAX_GATES) over `range` along `axis`, as the regular grid.
 * Nothing is evaluated yet.  Returns SW_OK and *out (free it with
 * sw_thresholds_free()), SW_EUSAGE for a bad gate count, or SW_ENOMEM. */
int sw_thresholds_alloc(sw_thresholds **out, const sw_gate *const *gates,
                        size_t n_gates, sw_thresholds_axis axis,
                        const sw_thresholds_range *range, sw_error *err);

/* Release a table; NULL is accepted. */
void sw_thresholds_free(sw_thresholds *t);

/* Replace the regular grid by the fewest breakpoints this method finds of
 * a piecewise-linear table whose linear interpolation stays within
 * `tol_m` (>= SW_THRESHOLDS_MIN_TOL_M) of every exact curve, per gate and
 * governing, between the first and the last level of the range.
 *
 * Method.  Every curve is evaluated on a fine grid of the range: spacing
 * 1 mm or STEP/10, whichever is finer, but not below 0.1 mm, and coarser
 * where that would exceed a fixed budget of evaluations (about 200,000
 * levels for three gates).  A fine cell is halved (on the 0.1 mm grid)
 * while a curve's value at its midpoint lies more than tol/8 from the
 * chord of its ends, or a curve changes between a level and "not needed"
 * / "none" inside it.  Breakpoints are chosen greedily: from each one,
 * the farthest fine level such that every curve's chord stays within
 * tol - tol/8 - 0.1 mm of every fine value between (found exactly by
 * intersecting the admissible slopes); a stretch of "not needed" / "none"
 * in any curve gets a row at each end and is never interpolated across;
 * a 0.1 mm cell where a curve still changes kind or steps is a segment of
 * its own.  Rounding the values (<= 0.1 mm) and the tol/8 of each cell
 * make up the rest of the tolerance.  The greedy choice is not proven
 * minimal.
 *
 * Verification.  The table, with its published (rounded) values, is then
 * interpolated at every fine level and at every cell midpoint (exact
 * evaluations) and compared with the exact curves; the largest difference
 * is fit->max_error_m.  Cells where a curve changes kind are not checked
 * inside (the rows on either side, 0.1 mm apart, show the change); steps
 * are listed (sw_thresholds_get_step()).
 *
 * Returns SW_OK and fills *fit; SW_EUSAGE for a bad tolerance; SW_ENUMERIC
 * when a critical-level search fails or the curves are too rough to
 * resolve within the budget; SW_ENOMEM; SW_EINTERNAL if the verification
 * finds the tolerance exceeded (a bug).  On failure the table is left as
 * the regular grid.  Call at most once. */
int sw_thresholds_simplify(sw_thresholds *t, double tol_m,
                           sw_thresholds_fit *fit, sw_error *err);

/* Publish, instead of each gate's critical levels, the levels that hold
 * with probability `confidence` (0 < confidence < 1) over samples of the
 * gates (uncert.h):
 *   samples[s * n_gates + g]  gate g of sample s (the table's gates, in
 *                             the table's order), prepared;
 *   dhw_m, dtw_m[s * n_gates + g]  the datum shifts of its headwater and
 *                             tailwater gauges in sample s (0: none).
 * The row levels are read as the gauges show them (the true level of
 * sample s is level + shift), and each value is given back as its gauge
 * would show it (less the shift).  By headwater, a gate's value is the
 * upper `confidence`-quantile of its critical tailwaters over the samples
 * (the tailwater above which the limit holds in that fraction of them),
 * "not needed" where that quantile needs none; by tailwater, the lower
 * one of its critical headwaters (quantile 1 - confidence), "none" where
 * that quantile has none.  Quantiles by definition 7 of Hyndman and Fan
 * (sw_uncert_crit_quantile: between "not needed" and a level, the
 * level).  The governing value is chosen over the gates' quantiles as
 * before: it holds for each gate with that probability, not for all of
 * them at once.  Rounding and simplification then work on these curves;
 * the simplification's fine grid is coarser, its budget being counted in
 * sample evaluations.  Each level's samples are searched on `workers`
 * threads; the values do not depend on their number.  The arrays must
 * outlive the table.  Call before sw_thresholds_simplify() or the first
 * row.  Returns SW_OK, or SW_EUSAGE for a bad confidence or no samples.
 * While sampled, the row and simplification calls may also return
 * SW_EINTERRUPTED (a stop request, cancel.h) and SW_ENOMEM. */
int sw_thresholds_set_samples(sw_thresholds *t, const sw_gate *samples,
                              const double *dhw_m, const double *dtw_m,
                              size_t n_samples, double confidence,
                              unsigned workers, sw_error *err);

/* Rows in the table: the range's levels, or the breakpoints. */
size_t sw_thresholds_n_rows(const sw_thresholds *t);

/* Row i (< sw_thresholds_n_rows()), in increasing level.  On the regular
 * grid the row is computed now; a simplified table returns a stored one.
 * Returns SW_OK and *row, or SW_ENUMERIC when a critical-level search
 * fails. */
int sw_thresholds_get_row(sw_thresholds *t, size_t i,
                          const sw_thresholds_row **row, sw_error *err);

/* Step i (< fit->n_steps) of a simplified table, in increasing level. */
void sw_thresholds_get_step(const sw_thresholds *t, size_t i,
                            sw_thresholds_step *step);

#endif
