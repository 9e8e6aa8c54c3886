/* sillwatch: quality control of level readings, streaming.
 *
 * The tests are those of the real-time water-level quality control of
 * U.S. IOOS, "Manual for Real-Time Quality Control of Water Level Data"
 * (QARTOD): gross range, spike, rate of change and flat line, with the
 * definitions sillwatch gives them (README, "Quality control"):
 *
 *   range  a reading outside [lo, hi];
 *   spike  |x_i - (a + b)/2| - |b - a|/2 > X, with a and b the nearest
 *          readings before and after that passed the range test and lie
 *          within max_gap of x_i; a reading without both is not tested;
 *   rate   |x_i - x_p| / (t_i - t_p) > R, with p the previous reading that
 *          passed the range and spike tests (flagged rate or not);
 *   flat   every reading of the preceding DURATION (at least three, all
 *          having passed the range and spike tests) lies within TOL of
 *          x_i, the series having had readings no farther apart than
 *          max_gap over the whole DURATION.
 *
 * A reading gets the first test it fails, in that order.  The filter is
 * fed the valid readings of one series in time order and hands back each
 * with its verdict.  The spike test needs the next reading, so with it on
 * the filter holds one reading (the latest) until the next one that passed
 * the range test arrives, or until it is known that none comes within
 * max_gap (sw_qc_expire), or the file ends (sw_qc_flush).
 *
 * Memory: fixed at sw_qc_alloc() (about 100 KiB with the flat test on).
 * The flat test keeps the readings of the
 * last DURATION in at most SW_QC_FLAT_BLOCKS (+ 2) blocks of DURATION /
 * SW_QC_FLAT_BLOCKS each (least and greatest value, first and last time,
 * count).  While readings are at least that far apart every block holds
 * one reading and the test is exact; more frequent readings share a block,
 * and the block straddling the start of the window counts whole, so the
 * test may then see a little more than DURATION (a stuck spell is flagged
 * up to one block later; a shorter one is never flagged).
 */
#ifndef SILLWATCH_QC_H
#define SILLWATCH_QC_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"
#include "sillwatch/timeutil.h"

#define SW_QC_FLAT_BLOCKS 1024
#define SW_QC_KEPT 10 /* flagged readings kept per series for messages */

typedef enum sw_qc_test {
    SW_QC_RANGE = 0,
    SW_QC_SPIKE,
    SW_QC_RATE,
    SW_QC_FLAT,
    SW_QC_N_TESTS,
    SW_QC_PASS = -1 /* a verdict: no test failed */
} sw_qc_test;

/* The tests of one series; a test is off when its field says so. */
typedef struct sw_qc_config {
    int range_set;            /* valid_range given */
    double range_lo_m, range_hi_m;
    double spike_m;           /* > 0: on */
    double rate_m_per_h;      /* > 0: on */
    sw_time_ms flat_ms;       /* > 0: on, with flat_tol_m >= 0 */
    double flat_tol_m;
    sw_time_ms max_gap_ms;    /* the site's: spike neighbours, flat cover */
} sw_qc_config;

/* A reading and, once judged, its verdict. */
typedef struct sw_qc_reading {
    sw_time_ms t;
    double v_m;               /* level in m above the site datum */
    long line;                /* of the level file, for messages */
    int test;                 /* sw_qc_test that failed, or SW_QC_PASS */
} sw_qc_reading;

/* Counts of a series: readings flagged per test, and the first ones. */
typedef struct sw_qc_stats {
    long flagged[SW_QC_N_TESTS];
    size_t n_kept;
    sw_qc_reading kept[SW_QC_KEPT];
} sw_qc_stats;

typedef struct sw_qc sw_qc; /* opaque */

/* The test's name as in flags.csv: "range", "spike", "rate", "flat". */
const char *sw_qc_test_name(int test);

/* Whether any test is on. */
int sw_qc_active(const sw_qc_config *cfg);

/* A filter for one series.  Errors: SW_ENOMEM. */
int sw_qc_alloc(sw_qc **qc, const sw_qc_config *cfg, sw_error *err);
void sw_qc_free(sw_qc *qc);

/* Feed the next valid reading (times strictly increasing).  Returns the
 * number of verdicts put in *out (0 or 1): the reading itself when it
 * fails the range test or when the spike test is off, else the reading
 * held before it, judged now. */
int sw_qc_push(sw_qc *qc, const sw_qc_reading *in, sw_qc_reading *out);

/* No reading of the series comes before `now`: release the held reading
 * (untested for spikes) when now is more than max_gap after it.  Returns
 * the number of verdicts in *out (0 or 1). */
int sw_qc_expire(sw_qc *qc, sw_time_ms now, sw_qc_reading *out);

/* The series ends: release the held reading.  Returns 0 or 1 as above. */
int sw_qc_flush(sw_qc *qc, sw_qc_reading *out);

/* Whether a reading is held, and its time. */
int sw_qc_held(const sw_qc *qc, sw_time_ms *t);

/* Add a verdict to the counts (and keep it when among the first). */
void sw_qc_count(sw_qc_stats *stats, const sw_qc_reading *r);

/* ---- plausibility (warnings, not rejections) -------------------------- */

/* How far, in m, levels may reach above the highest hinge or below the
 * lowest sill of the gates a series drives before sillwatch asks whether
 * its unit or offset is right: a rule of thumb of ours, not a published
 * value. */
#define SW_QC_PLAUSIBLE_M 10.0

/* Mass per sealed area (kg/m^2) outside which a gate's mass looks like a
 * unit slip (tonnes typed for kg, or grams): a rule of thumb of ours. */
#define SW_QC_MASS_AREA_MIN 5.0
#define SW_QC_MASS_AREA_MAX 2000.0

struct sw_site;
struct sw_site_series;

/* The plausible band of the levels of series `name`: from
 * SW_QC_PLAUSIBLE_M below the lowest sill to SW_QC_PLAUSIBLE_M above the
 * highest hinge of the gates it drives.  Returns 0 when no gate uses it. */
int sw_qc_plausible_band(const struct sw_site *site, const char *name,
                         double *lo_m, double *hi_m);

/* Whether a gate's mass per sealed area is outside the plausible range;
 * *kg_m2 is set either way. */
int sw_qc_mass_implausible(const sw_gate *gate, double *kg_m2);

/* Read the whole level file of series `s` and give the least and greatest
 * valid level (m, after unit and offset) and the number of valid readings.
 * Errors: those of sw_reader_open() (missing file or column: SW_EDATA);
 * an error while reading stops the reading: *read_err holds it (code
 * SW_OK when none) and the extent is that of the readings before it. */
int sw_qc_series_extent(const struct sw_site *site,
                        const struct sw_site_series *s, double *lo_m,
                        double *hi_m, long *n_valid, sw_error *read_err,
                        sw_error *err);

#endif
