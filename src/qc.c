/* sillwatch: quality control of level readings (see include/sillwatch/qc.h).
 *
 * Reference for the tests: U.S. IOOS, Manual for Real-Time Quality Control
 * of Water Level Data (QARTOD): gross range, spike, rate of change and flat
 * line tests.  The thresholds are the user's; the definitions are ours
 * where the manual leaves a choice (README, "Quality control").
 */
#include "sillwatch/qc.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/series.h"
#include "sillwatch/site.h"

/* A block of the flat test's window. */
typedef struct block {
    sw_time_ms t_first, t_last;
    sw_time_ms index;       /* t_first / block_ms */
    double lo, hi;
    long n;
} block;

struct sw_qc {
    sw_qc_config cfg;
    /* the spike test */
    int have_prev;          /* the last reading that passed the range test */
    sw_qc_reading prev;     /* before the held one */
    int have_held;
    sw_qc_reading held;     /* passed the range test, awaits its verdict */
    /* the rate test and the flat test: readings that passed range and
     * spike */
    int have_base;
    sw_qc_reading base;
    sw_time_ms run_start;   /* first of them since a gap over max_gap */
    sw_time_ms block_ms;
    block *blocks;          /* ring of FLAT_RING (a power of two, at least
                               SW_QC_FLAT_BLOCKS + 2) */
    size_t head, count, cap;
};

#define FLAT_RING 2048
_Static_assert(FLAT_RING >= SW_QC_FLAT_BLOCKS + 2, "FLAT_RING too small");

static const char *const test_names[SW_QC_N_TESTS] = {"range", "spike",
                                                      "rate", "flat"};

const char *sw_qc_test_name(int test)
{
    return test >= 0 && test < SW_QC_N_TESTS ? test_names[test] : "pass";
}

int sw_qc_active(const sw_qc_config *c)
{
    return c->range_set || c->spike_m > 0.0 || c->rate_m_per_h > 0.0 ||
           c->flat_ms > 0;
}

int sw_qc_alloc(sw_qc **out, const sw_qc_config *cfg, sw_error *err)
{
    sw_qc *q = calloc(1, sizeof *q);

    *out = NULL;
    if (q == NULL)
        goto nomem;
    q->cfg = *cfg;
    if (cfg->flat_ms > 0) {
        q->cap = FLAT_RING;
        q->block_ms = cfg->flat_ms / SW_QC_FLAT_BLOCKS;
        if (q->block_ms < 1)
            q->block_ms = 1;
        q->blocks = malloc(q->cap * sizeof *q->blocks);
        if (q->blocks == NULL)
            goto nomem;
    }
    *out = q;
    return SW_OK;
nomem:
    free(q);
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory for the quality-control tests");
}

void sw_qc_free(sw_qc *q)
{
    if (q == NULL)
        return;
    free(q->blocks);
    free(q);
}

int sw_qc_held(const sw_qc *q, sw_time_ms *t)
{
    if (q->have_held)
        *t = q->held.t;
    return q->have_held;
}

static block *block_at(sw_qc *q, size_t i)
{
    return &q->blocks[(q->head + i) & (FLAT_RING - 1)];
}

/* Flat line: every reading of [t - DURATION, t) within TOL of v, at least
 * three of them, and readings no farther apart than max_gap since
 * t - DURATION or before.  Scanned newest first, so that varying levels
 * stop the scan at once. */
static int is_flat(sw_qc *q, sw_time_ms t, double v)
{
    sw_time_ms from = t - q->cfg.flat_ms;
    double tol = q->cfg.flat_tol_m;
    long n = 0;

    if (q->run_start > from)
        return 0;
    for (size_t i = q->count; i-- > 0;) {
        const block *b = block_at(q, i);
        if (b->t_last < from)
            break;
        if (!(b->hi - v <= tol && v - b->lo <= tol))
            return 0;
        n += b->n;
    }
    return n >= 3;
}

/* Add a reading that passed range and spike to the flat window. */
static void flat_add(sw_qc *q, sw_time_ms t, double v)
{
    block *last = q->count > 0 ? block_at(q, q->count - 1) : NULL;

    sw_time_ms index = t / q->block_ms;

    while (q->count > 0 && block_at(q, 0)->t_last < t - q->cfg.flat_ms) {
        q->head = (q->head + 1) & (FLAT_RING - 1);
        q->count--;
    }
    if (q->count == 0)
        last = NULL;
    if (last != NULL && last->index == index) {
        last->t_last = t;
        if (v < last->lo)
            last->lo = v;
        if (v > last->hi)
            last->hi = v;
        last->n++;
        return;
    }
    if (q->count == q->cap) { /* cannot happen: blocks are DURATION/1024 */
        q->head = (q->head + 1) & (FLAT_RING - 1);
        q->count--;
    }
    *block_at(q, q->count) = (block){t, t, index, v, v, 1};
    q->count++;
}

/* The rate and flat tests of a reading that passed range and spike; it
 * then becomes the rate test's base and joins the flat window. */
static void judge_rest(sw_qc *q, sw_qc_reading *r)
{
    const sw_qc_config *c = &q->cfg;

    if (c->rate_m_per_h > 0.0 && q->have_base && r->t > q->base.t) {
        /* change per hour: |dv| / (dt / 3.6e6 ms) > R */
        double dv = fabs(r->v_m - q->base.v_m);
        if (dv * 3.6e6 > c->rate_m_per_h * (double)(r->t - q->base.t))
            r->test = SW_QC_RATE;
    }
    if (r->test == SW_QC_PASS && c->flat_ms > 0 && is_flat(q, r->t, r->v_m))
        r->test = SW_QC_FLAT;
    if (!q->have_base || r->t - q->base.t > c->max_gap_ms)
        q->run_start = r->t;
    q->have_base = 1;
    q->base = *r;
    if (c->flat_ms > 0)
        flat_add(q, r->t, r->v_m);
}

/* Judge the held reading, `next` being the next one that passed the
 * range test (NULL: none within max_gap). */
static void judge_held(sw_qc *q, const sw_qc_reading *next, sw_qc_reading *out)
{
    sw_qc_reading r = q->held;
    sw_time_ms gap = q->cfg.max_gap_ms;

    r.test = SW_QC_PASS;
    if (next != NULL && q->have_prev && r.t - q->prev.t <= gap &&
        next->t - r.t <= gap) {
        double a = q->prev.v_m, b = next->v_m;
        if (fabs(r.v_m - (a + b) / 2.0) - fabs(b - a) / 2.0 > q->cfg.spike_m)
            r.test = SW_QC_SPIKE;
    }
    if (r.test == SW_QC_PASS)
        judge_rest(q, &r);
    q->have_prev = 1;
    q->prev = q->held;
    q->have_held = 0;
    *out = r;
}

int sw_qc_push(sw_qc *q, const sw_qc_reading *in, sw_qc_reading *out)
{
    const sw_qc_config *c = &q->cfg;

    if (c->range_set && !(in->v_m >= c->range_lo_m && in->v_m <= c->range_hi_m)) {
        *out = *in;
        out->test = SW_QC_RANGE;
        return 1;
    }
    if (!(c->spike_m > 0.0)) {
        *out = *in;
        out->test = SW_QC_PASS;
        judge_rest(q, out);
        return 1;
    }
    int n = 0;
    if (q->have_held) {
        judge_held(q, in->t - q->held.t <= c->max_gap_ms ? in : NULL, out);
        n = 1;
    }
    q->held = *in;
    q->have_held = 1;
    return n;
}

int sw_qc_expire(sw_qc *q, sw_time_ms now, sw_qc_reading *out)
{
    if (!q->have_held || now - q->held.t <= q->cfg.max_gap_ms)
        return 0;
    judge_held(q, NULL, out);
    return 1;
}

int sw_qc_flush(sw_qc *q, sw_qc_reading *out)
{
    if (!q->have_held)
        return 0;
    judge_held(q, NULL, out);
    return 1;
}

void sw_qc_count(sw_qc_stats *s, const sw_qc_reading *r)
{
    if (r->test < 0 || r->test >= SW_QC_N_TESTS)
        return;
    s->flagged[r->test]++;
    if (s->n_kept < SW_QC_KEPT)
        s->kept[s->n_kept++] = *r;
}

int sw_qc_plausible_band(const sw_site *site, const char *name, double *lo_m,
                         double *hi_m)
{
    int used = 0;
    double sill = INFINITY, hinge = -INFINITY;

    for (size_t i = 0; i < site->n_gates; i++) {
        const sw_site_gate *g = &site->gates[i];
        if (strcmp(g->headwater, name) != 0 && strcmp(g->tailwater, name) != 0)
            continue;
        used = 1;
        if (g->gate.sill_level_m < sill)
            sill = g->gate.sill_level_m;
        if (g->gate.hinge_level_m > hinge)
            hinge = g->gate.hinge_level_m;
    }
    *lo_m = sill - SW_QC_PLAUSIBLE_M;
    *hi_m = hinge + SW_QC_PLAUSIBLE_M;
    return used;
}

int sw_qc_mass_implausible(const sw_gate *gate, double *kg_m2)
{
    *kg_m2 = gate->area_m2 > 0.0 ? gate->mass_kg / gate->area_m2 : INFINITY;
    return !(*kg_m2 >= SW_QC_MASS_AREA_MIN && *kg_m2 <= SW_QC_MASS_AREA_MAX);
}

int sw_qc_series_extent(const sw_site *site, const sw_site_series *s,
                        double *lo_m, double *hi_m, long *n_valid,
                        sw_error *read_err, sw_error *err)
{
    sw_reader_config cfg;
    sw_column_config col;
    sw_reader *rd;
    int rc, has_row;

    sw_site_series_reader(site, s, &cfg, &col);
    *lo_m = INFINITY;
    *hi_m = -INFINITY;
    *n_valid = 0;
    sw_error_clear(read_err);
    if ((rc = sw_reader_open(&rd, &cfg, &col, 1, err)) != SW_OK)
        return rc;
    for (;;) {
        sw_time_ms t;
        double v;
        if (sw_reader_next(rd, &has_row, &t, &v, read_err) != SW_OK ||
            !has_row)
            break;
        if (isnan(v))
            continue;
        (*n_valid)++;
        if (v < *lo_m)
            *lo_m = v;
        if (v > *hi_m)
            *hi_m = v;
    }
    sw_reader_free(rd);
    return SW_OK;
}
