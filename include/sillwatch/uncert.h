/* sillwatch: uncertain parameters, their Monte Carlo draws and the
 * statistics of the results.
 *
 * A site file may give a standard uncertainty X_sd (JCGM 100:2008, the
 * GUM) to a gate's numeric keys, to a water's density or temperature and
 * salinity, and to a series' offset (site.h).  Their uncertainty is
 * propagated by drawing samples of every uncertain key and computing the
 * result once per sample (JCGM 101:2008, propagation of distributions by
 * a Monte Carlo method):
 *
 *   - each key is normal with the given value as mean and X_sd as standard
 *     deviation, truncated to the key's valid range by rejection (a draw
 *     outside is drawn again); a drawn gate that breaks a rule between its
 *     keys (sw_gate_validate: the centre of gravity on the leaf, the seal
 *     within it, the moment bound) is drawn again whole;
 *   - the keys are independent; a series' offset is one draw per sample,
 *     shared by every reading and every gate that reads the series;
 *   - sample k takes its numbers from a stream of its own: GSL's MT19937
 *     generator (gsl_rng_mt19937) seeded from the run's seed and k alone,
 *     so a sample is the same whatever the number of workers or the order
 *     in which samples are drawn.
 *
 * Drawn gates are made by sw_site_gate_build() (site.h), the one way a gate
 * is made from its keys, so defaults that follow other keys (leaf_length)
 * follow the drawn values and every derived field is prepared again.
 *
 * Statistics: proportions with their Monte Carlo standard errors,
 * percentiles by definition 7 of Hyndman and Fan (1996) (sw_quantile,
 * ensemble.h), and first-order sensitivity shares of a result's variance
 * from squared correlation coefficients (see sw_uncert_corr).
 *
 * No I/O; nothing printed.  The library calls GSL with its error handler
 * off (the caller's gsl_set_error_handler_off()).
 */
#ifndef SILLWATCH_UNCERT_H
#define SILLWATCH_UNCERT_H

#include <stddef.h>
#include <stdint.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"
#include "sillwatch/site.h"

/* The seed used when none is given: fixed, so that results repeat. */
#define SW_UNCERT_DEFAULT_SEED 20260101UL
/* Most samples of one command (memory: the point and threshold
 * statistics keep a few numbers per sample and gate). */
#define SW_UNCERT_MAX_SAMPLES 1000000
/* Draws of one gate that break a rule between its keys before the draw
 * gives up (SW_ESITE). */
#define SW_UNCERT_MAX_REDRAWS 10000

/* What an uncertain parameter is. */
typedef enum sw_uncert_kind {
    SW_UNCERT_GATE = 0,    /* a leaf's key of gate `index` (sw_gate_param
                              `key`) */
    SW_UNCERT_DENSITY,     /* water `index` (sw_side): its density */
    SW_UNCERT_TEMPERATURE, /* water `index`: its temperature */
    SW_UNCERT_SALINITY,    /* water `index`: its salinity */
    SW_UNCERT_OFFSET       /* series `index`: its offset (gauge datum) */
} sw_uncert_kind;

typedef struct sw_uncert_param {
    sw_uncert_kind kind;
    size_t index;          /* gate, side or series, by kind */
    int key;               /* sw_gate_param, for SW_UNCERT_GATE */
    double mean, sd;       /* the given value and its X_sd (> 0) */
    double lo, hi;         /* the range of the truncation */
    int lo_open, hi_open;  /* an open end (> lo, < hi) */
    char name[96];         /* "gate north: mass", "water upstream:
                              temperature", "series outfall: offset" */
    const char *unit;      /* "kg", "m", "degrees C", "" ... */
} sw_uncert_param;

/* The uncertain parameters of a site: every key with X_sd > 0, in the
 * order of the draws (waters upstream then downstream, series in file
 * order, gates in file order with their keys in sw_gate_param order). */
typedef struct sw_uncert {
    const sw_site *site;   /* borrowed; must outlive this */
    uint64_t seed;
    size_t n_params;
    sw_uncert_param *params;
} sw_uncert;

/* Collect the uncertain parameters of `site` for draws from `seed`.
 * Returns SW_OK (n_params may be 0: every sample is then the site as
 * given), or SW_ENOMEM.  Release with sw_uncert_fini(). */
int sw_uncert_init(sw_uncert *u, const sw_site *site, uint64_t seed,
                   sw_error *err);
void sw_uncert_fini(sw_uncert *u);

/* Whether parameter i can change gate g: its own keys, both waters, and
 * the datum of the series it reads (headwater, tailwater). */
int sw_uncert_affects(const sw_uncert *u, size_t i, size_t g);

/* The seed of GSL's generator for sample k of a run seeded `seed`: a
 * number from 1 to 2^32 - 1 (MT19937 reads 32 bits, and reads 0 as 4357),
 * distinct for the first 2^32 - 1 samples of one run. */
unsigned long sw_uncert_stream_seed(uint64_t seed, size_t k);

/* One sample: the drawn values and what they make. */
typedef struct sw_uncert_sample {
    size_t k;              /* the sample's index */
    double *value;         /* [n_params] the drawn values */
    double rho_kgm3[2];    /* the waters' densities, by sw_side */
    sw_gate *gates;        /* [site->n_gates], made and prepared */
    double *shift_m;       /* [site->n_series] drawn offset - given */
    void *rng;             /* the generator (gsl_rng *) */
} sw_uncert_sample;

/* A sample's storage and generator.  SW_OK or SW_ENOMEM. */
int sw_uncert_sample_alloc(sw_uncert_sample **s, const sw_uncert *u,
                           sw_error *err);
void sw_uncert_sample_free(sw_uncert_sample *s);

/* Draw sample k into `s` (allocated for `u`).  With no uncertain
 * parameter the gates are the site's, bit for bit, and every shift 0.
 * Returns SW_OK, or SW_ESITE when a gate's draws broke a rule between its
 * keys SW_UNCERT_MAX_REDRAWS times in a row (the message names the gate
 * and the last rule). */
int sw_uncert_draw(const sw_uncert *u, size_t k, sw_uncert_sample *s,
                   sw_error *err);

/* Draw samples 0 .. n - 1 on `workers` threads and keep of each the
 * gates gates[0 .. n_gates) (indices into site->gates), in that order:
 * out[s * n_gates + j] with the datum shifts of its headwater and tailwater
 * series dhw_m[s * n_gates + j], dtw_m[...] (sw_uncert_gate_shifts).  The
 * arrays hold n * n_gates each.  Errors as sw_uncert_draw(), SW_ENOMEM. */
int sw_uncert_draw_gates(const sw_uncert *u, size_t n, const size_t *gates,
                         size_t n_gates, unsigned workers, sw_gate *out,
                         double *dhw_m, double *dtw_m, sw_error *err);

/* The datum shifts of gate g's headwater and tailwater series in sample
 * `s` (0 for a gate without such a series): a level a gauge shows (after
 * its unit and given offset) lies this much higher in the sample. */
void sw_uncert_gate_shifts(const sw_uncert *u, const sw_uncert_sample *s,
                           size_t g, double *dhw_m, double *dtw_m);

/* A copy of the site with the sample's gates and datums, for the replay
 * engine: the gates are s->gates, each series' offset (and valid_range,
 * which is in m above the datum, so that the quality tests judge the same
 * readings) moved by its shift.  Borrows the site's zone; release with
 * sw_uncert_site_fini(), never sw_site_fini().  SW_OK or SW_ENOMEM. */
int sw_uncert_site(const sw_uncert *u, const sw_uncert_sample *s,
                   sw_site *out, sw_error *err);
void sw_uncert_site_fini(sw_site *site);

/* ---- statistics ---------------------------------------------------------- */

/* The proportion of `count` in `n` > 0 samples and its Monte Carlo
 * standard error sqrt(p (1 - p) / n) (the binomial proportion's). */
void sw_uncert_proportion(size_t count, size_t n, double *p, double *se);

/* The p-quantile of values[0..n) (sorted in place) by definition 7 of
 * Hyndman and Fan (sw_quantile), where -inf stands for a critical level
 * that is not a level ("not needed" for a tailwater, "none" for a
 * headwater).  With `up_safe` (critical tailwaters: higher is safer), a
 * quantile that falls between -inf and a level takes the level; without
 * (critical headwaters: lower is safer), it is -inf. */
double sw_uncert_crit_quantile(double *values, size_t n, double p,
                               int up_safe);

/* First-order sensitivity shares of a result y's variance among the
 * parameters x_1..x_m of the same samples: r_i^2, the squared Pearson
 * correlation coefficient of x_i and y, and share_i = r_i^2 / sum r_j^2.
 * For y linear in independent x (y = a + sum b_i x_i), r_i^2 is
 * b_i^2 var(x_i) / var(y), the share of x_i in the variance, and the r_i^2
 * add up to 1; where they add up to less, y is not linear in the x (or
 * the x not independent), and the shares rank the parameters by their
 * linear effect only.  Accumulated one sample at a time (Welford's
 * updates of means and co-moments), so that memory does not grow with the
 * samples. */
typedef struct sw_uncert_corr {
    size_t m;               /* parameters */
    double n;               /* samples so far */
    double *mean_x, *cxx, *cxy;
    double mean_y, cyy;
} sw_uncert_corr;

int sw_uncert_corr_init(sw_uncert_corr *c, size_t m, sw_error *err);
void sw_uncert_corr_fini(sw_uncert_corr *c);
void sw_uncert_corr_add(sw_uncert_corr *c, const double *x, double y);
/* r2[i] and share[i] (either may be NULL); returns the sum of the r_i^2.
 * Where y or an x_i did not vary, its r_i^2 is 0; where no x explains any
 * variance, every share is 0. */
double sw_uncert_corr_shares(const sw_uncert_corr *c, double *r2,
                             double *share);

/* ---- one pair of levels (point) -------------------------------------------- */

/* The 5th, 50th and 95th percentiles (definition 7 of Hyndman and Fan). */
#define SW_UNCERT_N_PCTL 3
extern const double sw_uncert_pctl[SW_UNCERT_N_PCTL]; /* 0.05, 0.5, 0.95 */

/* One gate at one pair of levels over the samples. */
typedef struct sw_uncert_point {
    size_t gate;            /* index into site->gates */
    size_t n;               /* samples */
    size_t n_open, n_low;   /* samples in the open and in the low state */
    double p_open, p_open_se;   /* proportions and their Monte Carlo */
    double p_low, p_low_se;     /* standard errors */
    double p_below, p_below_se; /* low or open */
    /* percentiles (sw_uncert_pctl): fs may be +inf or -inf; tw_alarm and
     * tw_open are the critical tailwaters as the gauge shows them (less
     * the sample's datum shift), -inf where not needed (a percentile
     * between "not needed" and a level takes the level) */
    double fs[SW_UNCERT_N_PCTL];
    double net_moment_Nm[SW_UNCERT_N_PCTL];
    double tw_alarm_m[SW_UNCERT_N_PCTL];
    double tw_open_m[SW_UNCERT_N_PCTL];
    /* sensitivity of the net moment (sw_uncert_corr): the parameters that
     * affect the gate (sw_uncert_affects), in u->params order */
    size_t n_shares;
    size_t *param;          /* [n_shares] indices into u->params */
    double *r2, *share;     /* [n_shares] */
    double r2_sum;          /* sum of the r2: 1 for a linear net moment */
} sw_uncert_point;

/* Evaluate every gate g with wanted[g] (every gate when wanted is NULL)
 * in samples 0 .. n_samples - 1 (1 to SW_UNCERT_MAX_SAMPLES) at headwater
 * hw_m and tailwater tw_m as the gates' gauges show them: in each sample
 * the gate's levels are hw_m and tw_m plus the datum shifts of its
 * headwater and tailwater series (sw_uncert_gate_shifts).  Per gate: the
 * state's proportions, the percentiles of fs, net moment and critical
 * tailwaters, and the net moment's sensitivity shares, into out[g] (an
 * array of site->n_gates; entries of gates not wanted are left empty).
 * Samples are drawn on `workers` threads; results do not depend on their
 * number.  Returns SW_OK, SW_EUSAGE for a bad sample count, SW_ESITE from
 * the draws, SW_ENUMERIC from a critical-level search, SW_ENOMEM.
 * Release with sw_uncert_point_fini(out, site->n_gates). */
int sw_uncert_point_run(const sw_uncert *u, double hw_m, double tw_m,
                        size_t n_samples, const int *wanted, unsigned workers,
                        sw_uncert_point *out, sw_error *err);
void sw_uncert_point_fini(sw_uncert_point *out, size_t n_gates);

/* The order in which to list pt's sensitivity shares: order[0 ..
 * pt->n_shares) indexes pt->param/r2/share, largest share first (what to
 * measure first), ties in parameter order. */
void sw_uncert_point_order(const sw_uncert_point *pt, size_t *order);

/* ---- workers -------------------------------------------------------------- */

/* Work split over threads: items [0, n) in `workers` contiguous chunks,
 * fn(begin, end, worker, ctx) on each, run on threads (the calling thread
 * takes the first chunk).  A result that goes to slot i of an array
 * (never a running sum) does not depend on the number of workers.  The
 * functions called must be re-entrant (the model's evaluations and
 * critical-level searches are: no global state).  Returns the status of
 * the chunk with the lowest index that failed (its message in *err), or
 * SW_OK; SW_ENOMEM when a thread cannot be started. */
typedef int (*sw_uncert_chunk_fn)(size_t begin, size_t end, unsigned worker,
                                  void *ctx, sw_error *err);
int sw_uncert_parallel(size_t n, unsigned workers, sw_uncert_chunk_fn fn,
                       void *ctx, sw_error *err);

#endif
