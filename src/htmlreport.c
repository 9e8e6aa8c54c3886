/* sillwatch: the season report as one HTML page (see htmlreport.h). */
#include "sillwatch/htmlreport.h"

#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/cancel.h"
#include "sillwatch/critcache.h"
#include "sillwatch/report.h"

#define NB SW_HTML_BUCKETS
#define WORST_KEPT 10
#define CLOUD_SLOTS 16384   /* a cloud's hash table (a power of two) */
#define CLOUD_MAX 6000      /* cells held before the cell size doubles */
#define FS_DRAW_CAP 1e6     /* factors of safety beyond are drawn as this */
#define BUCKET_MS0 60000    /* first column width: one minute */
#define MONTHS_DRAWN 36     /* more months than this are drawn by year */
#define CRIT_CACHE 4096     /* critical levels kept per gate (power of 2) */
#define CRIT_CACHE_MANY 64  /* the same, when the site has more gates than
                               are drawn (SW_HTML_GATES_DRAWN) */

/* ---- collecting --------------------------------------------------------- */

/* One time column of one trace. */
typedef struct bucket {
    double lo, hi, first, last;
    int n;      /* values taken in */
    int brk;    /* the line is broken before `first` */
} bucket;

typedef struct trace {
    bucket b[NB];
    int had_prev; /* a value at the previous point */
} trace;

/* Per gate and column: what the shading shows. */
enum { F_LOW = 1, F_OPEN = 2, F_NODATA = 4 };

/* The observed (headwater, tailwater) pairs of one gate, as square cells
 * of side cell_m; the cell size doubles when the set fills. */
typedef struct cloud {
    double cell_m;
    size_t n;
    int64_t qh[CLOUD_SLOTS], qt[CLOUD_SLOTS];
    unsigned char used[CLOUD_SLOTS];
    double hw_lo, hw_hi, tw_lo, tw_hi;
} cloud;

struct sw_html_report {
    const sw_site *site;
    size_t n_gates;
    size_t n_drawn;       /* gates with charts: the first
                             SW_HTML_GATES_DRAWN; the rest are in the
                             tables only */
    size_t cache_n;       /* critical levels cached per gate */
    size_t n_lv;          /* level series drawn: distinct series in use */
    size_t *lv_series;    /* 2 x n_gates: index into site->series */
    size_t n_tw;          /* of those, the tailwater series */
    size_t *tw_lv;        /* 2 x n_gates: index into the level series */
    size_t *gate_hw, *gate_tw; /* per gate: its lv index */
    size_t *gate_twk;     /* per gate: its tailwater's index among n_tw */
    trace *tr;            /* levels [0, n_lv), fs per gate, then tw_alarm
                             and tw_open per tailwater series */
    size_t n_tr;
    unsigned char *flags; /* n_drawn x NB */
    int started;
    sw_time_ms t0, w, t_prev;
    sw_time_ms *noeval;   /* per gate, the tally at the last point */
    int *gap_prev;        /* per gate: no data after the last point */
    /* per gate, CRIT_CACHE critical tailwaters by headwater in mm */
    sw_crit_cache **crit;
    sw_crit alarm_now, open_now;
    double *val;          /* per trace, scratch for one point */
    int *brk;             /* per trace, scratch */
    cloud *clouds;        /* per gate */
    int64_t *spare_h, *spare_t; /* CLOUD_MAX + 1 each, for coarsening */
    sw_event worst[WORST_KEPT];
    size_t n_worst;
    size_t n_months, cap_months;
    /* flagged readings per level series and column: the tests (bits) and
     * the first flagged value; before the first point, column 0 */
    unsigned char *qmask;  /* n_lv x NB */
    double *qval;          /* n_lv x NB */
    int *yyyymm;
    sw_time_ms *m_low, *m_open; /* n_months x n_drawn */
};

/* fs traces only for the drawn gates (g < n_drawn) */
static size_t tr_fs(const sw_html_report *r, size_t g) { return r->n_lv + g; }
static size_t tr_alarm(const sw_html_report *r, size_t k)
{
    return r->n_lv + r->n_drawn + k;
}
static size_t tr_open(const sw_html_report *r, size_t k)
{
    return r->n_lv + r->n_drawn + r->n_tw + k;
}

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory for the report");
}

static size_t lv_index(sw_html_report *r, const char *series)
{
    const sw_site *site = r->site;
    size_t si = 0;
    while (si < site->n_series && strcmp(site->series[si].name, series) != 0)
        si++;
    for (size_t i = 0; i < r->n_lv; i++)
        if (r->lv_series[i] == si)
            return i;
    r->lv_series[r->n_lv] = si;
    return r->n_lv++;
}

static void clear_buckets(trace *t)
{
    for (size_t i = 0; i < NB; i++) {
        t->b[i].lo = INFINITY;
        t->b[i].hi = -INFINITY;
        t->b[i].first = t->b[i].last = 0.0;
        t->b[i].n = 0;
        t->b[i].brk = 0;
    }
    t->had_prev = 0;
}

static void clear_cloud(cloud *c)
{
    memset(c->used, 0, sizeof c->used);
    c->n = 0;
    c->cell_m = 0.001;
    c->hw_lo = c->tw_lo = INFINITY;
    c->hw_hi = c->tw_hi = -INFINITY;
}

int sw_html_report_alloc(sw_html_report **out, const sw_site *site,
                         sw_error *err)
{
    sw_html_report *r = calloc(1, sizeof *r);
    size_t ng = site->n_gates;

    *out = NULL;
    if (r == NULL)
        return nomem(err);
    r->site = site;
    r->n_gates = ng;
    r->n_drawn = ng < SW_HTML_GATES_DRAWN ? ng : SW_HTML_GATES_DRAWN;
    r->cache_n = ng <= SW_HTML_GATES_DRAWN ? CRIT_CACHE : CRIT_CACHE_MANY;
    r->gate_hw = calloc(ng, sizeof *r->gate_hw);
    r->gate_tw = calloc(ng, sizeof *r->gate_tw);
    r->gate_twk = calloc(ng, sizeof *r->gate_twk);
    r->noeval = calloc(ng, sizeof *r->noeval);
    r->gap_prev = calloc(ng, sizeof *r->gap_prev);
    r->crit = calloc(ng + 1, sizeof *r->crit);
    r->clouds = malloc((r->n_drawn + 1) * sizeof *r->clouds);
    r->flags = calloc(r->n_drawn * NB + 1, 1);
    r->lv_series = calloc(2 * ng + 1, sizeof *r->lv_series);
    r->tw_lv = calloc(2 * ng + 1, sizeof *r->tw_lv);
    r->spare_h = malloc((CLOUD_MAX + 1) * sizeof *r->spare_h);
    r->spare_t = malloc((CLOUD_MAX + 1) * sizeof *r->spare_t);
    if (r->lv_series == NULL || r->tw_lv == NULL || r->spare_h == NULL ||
        r->spare_t == NULL || r->gate_hw == NULL || r->gate_tw == NULL || r->gate_twk == NULL ||
        r->noeval == NULL || r->gap_prev == NULL || r->crit == NULL ||
        r->clouds == NULL ||
        r->flags == NULL)
        goto fail;
    for (size_t g = 0; g < ng; g++) {
        r->gate_hw[g] = lv_index(r, site->gates[g].headwater);
        r->gate_tw[g] = lv_index(r, site->gates[g].tailwater);
        if (sw_crit_cache_alloc(&r->crit[g], &site->gates[g].gate,
                                r->cache_n, err) != SW_OK)
            goto fail;
        if (g < r->n_drawn)
            clear_cloud(&r->clouds[g]);
    }
    for (size_t g = 0; g < ng; g++) {
        size_t k = 0;
        while (k < r->n_tw && r->tw_lv[k] != r->gate_tw[g])
            k++;
        if (k == r->n_tw)
            r->tw_lv[r->n_tw++] = r->gate_tw[g];
        r->gate_twk[g] = k;
    }
    r->n_tr = r->n_lv + r->n_drawn + 2 * r->n_tw;
    r->tr = malloc(r->n_tr * sizeof *r->tr);
    r->val = calloc(r->n_tr, sizeof *r->val);
    r->brk = calloc(r->n_tr, sizeof *r->brk);
    r->qmask = calloc(r->n_lv * NB + 1, 1);
    r->qval = calloc(r->n_lv * NB + 1, sizeof *r->qval);
    if (r->tr == NULL || r->val == NULL || r->brk == NULL ||
        r->qmask == NULL || r->qval == NULL)
        goto fail;
    for (size_t i = 0; i < r->n_tr; i++)
        clear_buckets(&r->tr[i]);
    *out = r;
    return SW_OK;
fail:
    sw_html_report_free(r);
    return nomem(err);
}

void sw_html_report_free(sw_html_report *r)
{
    if (r == NULL)
        return;
    free(r->gate_hw);
    free(r->gate_tw);
    free(r->gate_twk);
    free(r->noeval);
    free(r->gap_prev);
    for (size_t g = 0; r->crit != NULL && g < r->n_gates; g++)
        sw_crit_cache_free(r->crit[g]);
    free(r->crit);
    free(r->clouds);
    free(r->flags);
    free(r->lv_series);
    free(r->tw_lv);
    free(r->spare_h);
    free(r->spare_t);
    free(r->tr);
    free(r->val);
    free(r->brk);
    free(r->qmask);
    free(r->qval);
    free(r->yyyymm);
    free(r->m_low);
    free(r->m_open);
    free(r);
}

static void merge_bucket(bucket *to, const bucket *a, const bucket *b)
{
    *to = *a;
    if (b->n == 0)
        return;
    if (a->n == 0) {
        *to = *b;
        return;
    }
    to->lo = fmin(a->lo, b->lo);
    to->hi = fmax(a->hi, b->hi);
    to->last = b->last;
    to->n = a->n + b->n;
}

/* Double the column width: neighbours merge. */
static void widen(sw_html_report *r)
{
    for (size_t i = 0; i < r->n_tr; i++) {
        bucket *b = r->tr[i].b;
        for (size_t k = 0; k < NB / 2; k++) {
            bucket m;
            merge_bucket(&m, &b[2 * k], &b[2 * k + 1]);
            b[k] = m;
        }
        for (size_t k = NB / 2; k < NB; k++) {
            b[k].lo = INFINITY;
            b[k].hi = -INFINITY;
            b[k].n = 0;
            b[k].brk = 0;
        }
    }
    for (size_t g = 0; g < r->n_drawn; g++) {
        unsigned char *f = r->flags + g * NB;
        for (size_t k = 0; k < NB / 2; k++)
            f[k] = (unsigned char)(f[2 * k] | f[2 * k + 1]);
        memset(f + NB / 2, 0, NB / 2);
    }
    for (size_t i = 0; i < r->n_lv; i++) {
        unsigned char *q = r->qmask + i * NB;
        double *qv = r->qval + i * NB;
        for (size_t k = 0; k < NB / 2; k++) {
            qv[k] = q[2 * k] ? qv[2 * k] : qv[2 * k + 1];
            q[k] = (unsigned char)(q[2 * k] | q[2 * k + 1]);
        }
        memset(q + NB / 2, 0, NB / 2);
    }
    r->w *= 2;
}

static size_t column_of(const sw_html_report *r, sw_time_ms t)
{
    sw_time_ms k = (t - r->t0) / r->w;
    if (k < 0)
        return 0;
    return k >= NB ? NB - 1 : (size_t)k;
}

static void take(bucket *b, double v, int brk)
{
    if (b->n == 0) {
        b->first = v;
        b->brk = brk;
    }
    b->last = v;
    if (v < b->lo)
        b->lo = v;
    if (v > b->hi)
        b->hi = v;
    b->n++;
}

static void mark(sw_html_report *r, size_t g, sw_time_ms a, sw_time_ms b,
                 unsigned char flag)
{
    unsigned char *f = r->flags + g * NB;
    size_t k1;
    if (g >= r->n_drawn)
        return;
    /* an event closed at the end of the data may end past the last point */
    while (b - r->t0 >= (sw_time_ms)NB * r->w)
        widen(r);
    k1 = column_of(r, b);
    for (size_t k = column_of(r, a); k <= k1; k++)
        f[k] |= flag;
}

/* A cell key of the cloud: a level in units of the cell, kept in range. */
static int64_t cell_of(double level_m, double cell_m)
{
    double q = floor(level_m / cell_m);
    if (q > 1e15)
        q = 1e15;
    if (q < -1e15)
        q = -1e15;
    return (int64_t)q;
}

static size_t slot_of(int64_t qh, int64_t qt)
{
    uint64_t h = (uint64_t)qh * UINT64_C(0x9E3779B97F4A7C15) ^
                 (uint64_t)qt * UINT64_C(0xC2B2AE3D27D4EB4F);
    return (size_t)(h >> 40) & (CLOUD_SLOTS - 1);
}

static void cloud_insert(cloud *c, int64_t qh, int64_t qt)
{
    size_t s = slot_of(qh, qt);
    while (c->used[s]) {
        if (c->qh[s] == qh && c->qt[s] == qt)
            return;
        s = (s + 1) & (CLOUD_SLOTS - 1);
    }
    c->used[s] = 1;
    c->qh[s] = qh;
    c->qt[s] = qt;
    c->n++;
}

/* Double the cell size: each cell goes to the one holding its centre. */
static void cloud_coarsen(cloud *c, int64_t *oh, int64_t *ot)
{
    size_t n = 0;
    double old = c->cell_m;
    for (size_t s = 0; s < CLOUD_SLOTS; s++)
        if (c->used[s]) {
            oh[n] = c->qh[s];
            ot[n] = c->qt[s];
            n++;
        }
    memset(c->used, 0, sizeof c->used);
    c->n = 0;
    c->cell_m = 2.0 * old;
    for (size_t i = 0; i < n; i++)
        cloud_insert(c, cell_of(((double)oh[i] + 0.5) * old, c->cell_m),
                     cell_of(((double)ot[i] + 0.5) * old, c->cell_m));
}

static void cloud_add(sw_html_report *r, cloud *c, double hw, double tw)
{
    c->hw_lo = fmin(c->hw_lo, hw);
    c->hw_hi = fmax(c->hw_hi, hw);
    c->tw_lo = fmin(c->tw_lo, tw);
    c->tw_hi = fmax(c->tw_hi, tw);
    cloud_insert(c, cell_of(hw, c->cell_m), cell_of(tw, c->cell_m));
    while (c->n > CLOUD_MAX)
        cloud_coarsen(c, r->spare_h, r->spare_t);
}

/* The critical tailwaters of gate g for drawing: those at the headwater
 * rounded to the millimetre, through the gate's cache (a level record
 * visits few millimetres many times; a millimetre is far below a drawn
 * pixel).  steps.csv gives the exact values.  Sets alarm_now and
 * open_now. */
static int crit_at(sw_html_report *r, size_t g, double hw, sw_error *err)
{
    double mm = fmax(-1e15, fmin(1e15, floor(hw * 1000.0 + 0.5)));
    return sw_crit_cache_tailwater(r->crit[g], mm / 1000.0, &r->alarm_now,
                                   &r->open_now, err);
}

int sw_html_report_point(sw_html_report *r, const sw_stepper *st,
                         sw_error *err)
{
    sw_time_ms t = sw_stepper_time(st);
    size_t col;
    int rc;

    if (!r->started) {
        r->started = 1;
        r->t0 = r->t_prev = t;
        r->w = BUCKET_MS0;
    }
    while (t - r->t0 >= (sw_time_ms)NB * r->w)
        widen(r);
    col = column_of(r, t);

    for (size_t i = 0; i < r->n_tr; i++) {
        r->val[i] = NAN;
        r->brk[i] = 1; /* until a gate with data up to here says otherwise */
    }
    for (size_t g = 0; g < r->n_gates; g++) {
        if (r->gap_prev[g])
            mark(r, g, r->t_prev, t, F_NODATA);
        else {
            /* a line may go on from the last point */
            r->brk[r->gate_hw[g]] = r->brk[r->gate_tw[g]] = 0;
            if (g < r->n_drawn)
                r->brk[tr_fs(r, g)] = 0;
            r->brk[tr_alarm(r, r->gate_twk[g])] = 0;
            r->brk[tr_open(r, r->gate_twk[g])] = 0;
        }
    }
    for (size_t g = 0; g < r->n_gates; g++) {
        const sw_step_gate *sg = sw_stepper_gate_at(st, g);
        const sw_tally *ta = sw_stepper_tally(st, g);
        size_t k = r->gate_twk[g], ia = tr_alarm(r, k), io = tr_open(r, k);

        /* the tally already holds the interval after this point */
        r->gap_prev[g] = ta->not_evaluated > r->noeval[g];
        r->noeval[g] = ta->not_evaluated;
        if (!sg->known)
            continue;
        const sw_gate_result *res = &sg->result;
        r->val[r->gate_hw[g]] = res->headwater_m;
        r->val[r->gate_tw[g]] = res->tailwater_m;
        if (g < r->n_drawn)
            r->val[tr_fs(r, g)] =
                fmax(-FS_DRAW_CAP, fmin(FS_DRAW_CAP, res->fs));
        if ((rc = crit_at(r, g, res->headwater_m, err)) != SW_OK)
            return rc;
        if (r->alarm_now.kind == SW_CRIT_LEVEL &&
            !(r->val[ia] >= r->alarm_now.level_m))
            r->val[ia] = r->alarm_now.level_m;
        if (r->open_now.kind == SW_CRIT_LEVEL &&
            !(r->val[io] >= r->open_now.level_m))
            r->val[io] = r->open_now.level_m;
        if (g < r->n_drawn)
            cloud_add(r, &r->clouds[g], res->headwater_m, res->tailwater_m);
    }
    for (size_t i = 0; i < r->n_tr; i++) {
        trace *tr = &r->tr[i];
        if (isnan(r->val[i])) {
            tr->had_prev = 0;
            continue;
        }
        take(&tr->b[col], r->val[i], r->brk[i] || !tr->had_prev);
        tr->had_prev = 1;
    }
    r->t_prev = t;
    return SW_OK;
}

void sw_html_report_flag(sw_html_report *r, const sw_site_series *s,
                         const sw_qc_reading *q)
{
    size_t si = (size_t)(s - r->site->series), k = 0, i;

    for (i = 0; i < r->n_lv && r->lv_series[i] != si; i++)
        ;
    if (i == r->n_lv || q->test < 0 || q->test >= SW_QC_N_TESTS)
        return;
    if (r->started) {
        while (q->t - r->t0 >= (sw_time_ms)NB * r->w)
            widen(r);
        k = column_of(r, q->t);
    }
    if (r->qmask[i * NB + k] == 0)
        r->qval[i * NB + k] = q->v_m;
    r->qmask[i * NB + k] |= (unsigned char)(1u << q->test);
}

/* Whether event a ranks worse than b: open before low, then the lower
 * factor of safety, then the longer. */
static int worse(const sw_event *a, const sw_event *b)
{
    if (a->worst != b->worst)
        return a->worst > b->worst;
    if (a->min_fs != b->min_fs)
        return a->min_fs < b->min_fs;
    return a->end - a->start > b->end - b->start;
}

void sw_html_report_event(sw_html_report *r, const sw_event *ev)
{
    size_t i;

    if (r->started) {
        mark(r, ev->gate, ev->start, ev->end,
             ev->worst == SW_STATE_OPEN ? F_OPEN : F_LOW);
        /* the least factor of safety may fall between timeline points */
        if (!isnan(ev->min_fs) && ev->gate < r->n_drawn) {
            trace *tr = &r->tr[tr_fs(r, ev->gate)];
            bucket *b = &tr->b[column_of(r, ev->min_fs_t)];
            double v = fmax(-FS_DRAW_CAP, fmin(FS_DRAW_CAP, ev->min_fs));
            if (b->n == 0) {
                b->first = b->last = v;
                b->brk = 0;
            }
            b->lo = fmin(b->lo, v);
            b->hi = fmax(b->hi, v);
            b->n++;
        }
    }
    i = r->n_worst < WORST_KEPT ? r->n_worst++ : WORST_KEPT;
    if (i == WORST_KEPT) {
        if (!worse(ev, &r->worst[WORST_KEPT - 1]))
            return;
        i = WORST_KEPT - 1;
    }
    while (i > 0 && worse(ev, &r->worst[i - 1])) {
        r->worst[i] = r->worst[i - 1];
        i--;
    }
    r->worst[i] = *ev;
}

int sw_html_report_month(sw_html_report *r, const sw_month_row *m,
                         sw_error *err)
{
    /* yyyymm[] is kept sorted: a binary search finds the month (the
     * gates' rows interleave, so a scan from the end could go far back) */
    size_t at = 0, hi = r->n_months, i;
    if (m->gate >= r->n_drawn)
        return SW_OK; /* drawn gates only (all gates share the months) */
    while (at < hi) {
        size_t mid = at + (hi - at) / 2;
        if (r->yyyymm[mid] < m->yyyymm)
            at = mid + 1;
        else
            hi = mid;
    }
    i = at < r->n_months && r->yyyymm[at] == m->yyyymm ? at + 1 : 0;
    if (i == 0) {
        if (r->n_months == r->cap_months) {
            size_t cap = r->cap_months ? 2 * r->cap_months : 16;
            size_t ng = r->n_drawn;
            int *y = realloc(r->yyyymm, cap * sizeof *y);
            if (y == NULL)
                return nomem(err);
            r->yyyymm = y;
            sw_time_ms *lo = realloc(r->m_low, cap * ng * sizeof *lo);
            if (lo == NULL)
                return nomem(err);
            r->m_low = lo;
            sw_time_ms *op = realloc(r->m_open, cap * ng * sizeof *op);
            if (op == NULL)
                return nomem(err);
            r->m_open = op;
            r->cap_months = cap;
        }
        /* insert at `at` (the end, as months come in order) */
        size_t ng = r->n_drawn, tail = r->n_months - at;
        memmove(&r->yyyymm[at + 1], &r->yyyymm[at], tail * sizeof *r->yyyymm);
        memmove(&r->m_low[(at + 1) * ng], &r->m_low[at * ng],
                tail * ng * sizeof *r->m_low);
        memmove(&r->m_open[(at + 1) * ng], &r->m_open[at * ng],
                tail * ng * sizeof *r->m_open);
        r->n_months++;
        i = at;
        r->yyyymm[i] = m->yyyymm;
        for (size_t g = 0; g < ng; g++)
            r->m_low[i * ng + g] = r->m_open[i * ng + g] = 0;
        i++;
    }
    i--;
    r->m_low[i * r->n_drawn + m->gate] += m->tally.low;
    r->m_open[i * r->n_drawn + m->gate] += m->tally.open;
    return SW_OK;
}

/* ---- writing: text ------------------------------------------------------ */

/* Write `s` as XML character data: markup characters escaped, anything
 * that is not valid UTF-8 or is a control character replaced by U+FFFD. */
static void esc(FILE *fp, const char *s)
{
    const unsigned char *p = (const unsigned char *)s;
    while (*p != '\0') {
        unsigned c = *p;
        size_t len = c < 0x80 ? 1 : (c & 0xE0) == 0xC0 ? 2
                   : (c & 0xF0) == 0xE0 ? 3 : (c & 0xF8) == 0xF0 ? 4 : 0;
        int ok = len > 0;
        for (size_t k = 1; ok && k < len; k++)
            ok = (p[k] & 0xC0) == 0x80;
        if (ok && len == 2)
            ok = c >= 0xC2;
        if (ok && len == 3)
            ok = !(c == 0xE0 && p[1] < 0xA0) && !(c == 0xED && p[1] >= 0xA0);
        if (ok && len == 4)
            ok = c <= 0xF4 && !(c == 0xF0 && p[1] < 0x90) &&
                 !(c == 0xF4 && p[1] >= 0x90);
        if (!ok || (c < 0x20 && c != '\t' && c != '\n') || c == 0x7F) {
            fputs("\xEF\xBF\xBD", fp);
            p++;
            continue;
        }
        switch (c) {
        case '&': fputs("&amp;", fp); break;
        case '<': fputs("&lt;", fp); break;
        case '>': fputs("&gt;", fp); break;
        case '"': fputs("&quot;", fp); break;
        case '\'': fputs("&#39;", fp); break;
        default: fwrite(p, 1, len, fp);
        }
        p += len;
    }
}

/* printf into a buffer, then escape. */
static void escf(FILE *fp, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;
static void escv(FILE *fp, const char *fmt, va_list ap)
{
    char buf[1024];
    vsnprintf(buf, sizeof buf, fmt, ap);
    esc(fp, buf);
}

static void escf(FILE *fp, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    escv(fp, fmt, ap);
    va_end(ap);
}

/* The caution, on one line: its line breaks become spaces. */
static void put_caution(FILE *fp, const char *caution)
{
    char buf[1024];
    size_t n = strlen(caution);
    while (n > 0 && caution[n - 1] == '\n')
        n--;
    snprintf(buf, sizeof buf, "%.*s", (int)n, caution);
    for (char *c = buf; *c != '\0'; c++)
        if (*c == '\n')
            *c = ' ';
    esc(fp, buf);
}

static void fs_text(char *buf, size_t n, double fs)
{
    if (isinf(fs))
        snprintf(buf, n, "%s", fs > 0 ? "inf" : "\xE2\x88\x92inf");
    else
        snprintf(buf, n, "%.3f", fs);
}

/* A time for a table: ISO 8601 in the site's zone with its offset, to
 * the second, with a space for the 'T' so that a narrow cell can wrap
 * ("2025-12-21 00:03:51+00:00"); the CSV outputs keep the milliseconds. */
static void when_text(char *buf, size_t n, sw_time_ms t, const sw_zone *z)
{
    char full[64], *dot;
    sw_time_format(full, sizeof full, t - (t % SW_MS_PER_S + SW_MS_PER_S) %
                                              SW_MS_PER_S, z);
    if ((dot = strchr(full, 'T')) != NULL)
        *dot = ' ';
    snprintf(buf, n, "%s", full);
}

/* A duration for prose, to the nearest minute: "3 h 12 min", "14 min",
 * "2 h", "under 1 min" (tables keep decimal hours). */
static void duration_text(char *buf, size_t n, sw_time_ms ms)
{
    long long min = (long long)((ms + 30000) / 60000);
    if (ms > 0 && min == 0)
        snprintf(buf, n, "under 1 min");
    else if (min < 60)
        snprintf(buf, n, "%lld min", min);
    else if (min % 60 == 0)
        snprintf(buf, n, "%lld h", min / 60);
    else
        snprintf(buf, n, "%lld h %lld min", min / 60, min % 60);
}

/* A text as a CSS string's content: every character but letters, digits
 * and spaces as a hexadecimal escape of its code point (invalid UTF-8 as
 * U+FFFD), so that no quote, backslash or markup character survives. */
static void css_string(FILE *fp, const char *s)
{
    const unsigned char *p = (const unsigned char *)s;
    while (*p != '\0') {
        unsigned long cp = 0xFFFD;
        size_t len = 1;
        if (*p < 0x80) {
            cp = *p;
        } else {
            size_t need = (*p & 0xE0) == 0xC0 ? 2 : (*p & 0xF0) == 0xE0 ? 3
                          : (*p & 0xF8) == 0xF0 ? 4 : 0;
            unsigned long v = need == 2 ? (*p & 0x1Fu) : need == 3
                              ? (*p & 0x0Fu) : (*p & 0x07u);
            size_t i = 1;
            for (; need > 0 && i < need && (p[i] & 0xC0) == 0x80; i++)
                v = (v << 6) | (p[i] & 0x3Fu);
            if (need > 0 && i == need && v >= 0x80 && v <= 0x10FFFF &&
                !(v >= 0xD800 && v <= 0xDFFF)) {
                cp = v;
                len = need;
            }
        }
        if ((cp >= '0' && cp <= '9') || (cp >= 'A' && cp <= 'Z') ||
            (cp >= 'a' && cp <= 'z') || cp == ' ')
            fputc((int)cp, fp);
        else if (cp >= 0x20 && cp != 0x7F)
            fprintf(fp, "\\%lX ", cp);
        else
            fputs("\\FFFD ", fp);
        p += len;
    }
}

/* ---- writing: axes ------------------------------------------------------ */

/* A plot area and the value ranges it shows. */
typedef struct frame {
    double x0, x1, y0, y1;   /* plot area, SVG units (y0 top) */
    double vx0, vx1;         /* values at x0 and x1 */
    double vy0, vy1;         /* values at the bottom and the top */
} frame;

static double fx(const frame *f, double v)
{
    return f->x0 + (v - f->vx0) / (f->vx1 - f->vx0) * (f->x1 - f->x0);
}

static double fy(const frame *f, double v)
{
    double y = f->y1 - (v - f->vy0) / (f->vy1 - f->vy0) * (f->y1 - f->y0);
    /* far outside values are drawn just outside the clipped area */
    return fmax(f->y0 - 50.0, fmin(f->y1 + 50.0, y));
}

/* A "nice" tick step (1, 2 or 5 times a power of ten) giving about n
 * intervals over `range` (common practice for chart axes, no source). */
static double nice_step(double range, int n)
{
    double raw = range / n, p = pow(10.0, floor(log10(raw))), f = raw / p;
    return (f <= 1.0 ? 1.0 : f <= 2.0 ? 2.0 : f <= 5.0 ? 5.0 : 10.0) * p;
}

static int decimals_for(double step)
{
    int d = (int)-floor(log10(step) + 1e-9);
    return d < 0 ? 0 : d > 6 ? 6 : d;
}

/* Widen [*lo, *hi] to whole ticks of a nice step; returns the step. */
static double nice_range(double *lo, double *hi, int n)
{
    if (!(*hi > *lo)) {
        double mid = *lo, half = fmax(0.5, fabs(mid) * 0.05);
        *lo = mid - half;
        *hi = mid + half;
    }
    double step = nice_step(*hi - *lo, n);
    *lo = floor(*lo / step + 1e-9) * step;
    *hi = ceil(*hi / step - 1e-9) * step;
    return step;
}

static void y_axis(FILE *fp, const frame *f, double step, const char *title)
{
    int d = decimals_for(step);
    for (double v = f->vy0; v <= f->vy1 + step * 1e-6; v += step) {
        double y = fy(f, v);
        fprintf(fp, "<line class=\"grid\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                "y2=\"%.1f\"/>", f->x0, y, f->x1, y);
        fprintf(fp, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                "text-anchor=\"end\">%.*f</text>\n", f->x0 - 5, y + 4, d,
                fabs(v) < step * 1e-6 ? 0.0 : v);
    }
    fprintf(fp, "<text class=\"axis\" transform=\"translate(%.1f %.1f) "
            "rotate(-90)\" text-anchor=\"middle\">", f->x0 - 48,
            (f->y0 + f->y1) / 2);
    esc(fp, title);
    fputs("</text>\n", fp);
}

static void x_axis(FILE *fp, const frame *f, double step, const char *title)
{
    int d = decimals_for(step);
    for (double v = f->vx0; v <= f->vx1 + step * 1e-6; v += step) {
        double x = fx(f, v);
        fprintf(fp, "<line class=\"grid\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
                "y2=\"%.1f\"/>", x, f->y0, x, f->y1);
        fprintf(fp, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                "text-anchor=\"middle\">%.*f</text>\n", x, f->y1 + 16, d,
                fabs(v) < step * 1e-6 ? 0.0 : v);
    }
    fprintf(fp, "<text class=\"axis\" x=\"%.1f\" y=\"%.1f\" "
            "text-anchor=\"middle\">", (f->x0 + f->x1) / 2, f->y1 + 34);
    esc(fp, title);
    fputs("</text>\n", fp);
}

/* Calendar ticks for a time axis, in the site's zone. */
enum { TK_HOUR, TK_DAY, TK_MONTH, TK_YEAR };
typedef struct tstep {
    int kind, n;
    double approx_ms;
} tstep;

static sw_time_ms to_utc(const sw_zone *z, sw_time_ms wall)
{
    sw_time_ms u[SW_ZONE_MAX_SHOWN];
    if (z == NULL)
        return wall;
    if (sw_zone_local_to_utc(z, wall, u) >= 1)
        return u[0];
    /* in a skipped hour: the instant an hour on shows the next wall time */
    if (sw_zone_local_to_utc(z, wall + SW_MS_PER_HOUR, u) >= 1)
        return u[0] - SW_MS_PER_HOUR;
    return wall;
}

static sw_time_ms floor_div(sw_time_ms a, sw_time_ms b)
{
    sw_time_ms q = a / b;
    return (a % b != 0 && (a < 0) != (b < 0)) ? q - 1 : q;
}

/* The first tick wall time at or after `wall` for step s, and the next. */
static sw_time_ms tick_first(const tstep *s, sw_time_ms wall)
{
    const sw_time_ms day = 24 * SW_MS_PER_HOUR;
    int64_t y;
    int m, d;
    switch (s->kind) {
    case TK_HOUR: {
        sw_time_ms u = s->n * SW_MS_PER_HOUR;
        return -floor_div(-wall, u) * u;
    }
    case TK_DAY: {
        sw_time_ms k = -floor_div(-wall, day);
        if (s->n == 7) /* Mondays: 1970-01-05 was one */
            while ((k - 4) % 7 != 0)
                k++;
        else
            while (k % s->n != 0)
                k++;
        return k * day;
    }
    case TK_MONTH:
    default: {
        sw_civil_from_days(floor_div(wall, day), &y, &m, &d);
        int64_t idx = y * 12 + (m - 1);
        int64_t unit = s->kind == TK_YEAR ? 12 * (int64_t)s->n : s->n;
        if (d != 1 || wall % day != 0)
            idx++;
        while (idx % unit != 0)
            idx++;
        return sw_days_from_civil(floor_div(idx, 12),
                                  (int)(idx - floor_div(idx, 12) * 12) + 1, 1) *
               day;
    }
    }
}

static sw_time_ms tick_next(const tstep *s, sw_time_ms wall)
{
    const sw_time_ms day = 24 * SW_MS_PER_HOUR;
    int64_t y;
    int m, d;
    if (s->kind == TK_HOUR)
        return wall + s->n * SW_MS_PER_HOUR;
    if (s->kind == TK_DAY)
        return wall + s->n * day;
    sw_civil_from_days(floor_div(wall, day), &y, &m, &d);
    int64_t idx = y * 12 + (m - 1) + (s->kind == TK_YEAR ? 12 * s->n : s->n);
    return sw_days_from_civil(floor_div(idx, 12),
                              (int)(idx - floor_div(idx, 12) * 12) + 1, 1) *
           day;
}

static void tick_label(char *buf, size_t n, const tstep *s, sw_time_ms wall)
{
    const sw_time_ms day = 24 * SW_MS_PER_HOUR;
    int64_t y;
    int m, d;
    sw_time_ms in_day = wall - floor_div(wall, day) * day;
    sw_civil_from_days(floor_div(wall, day), &y, &m, &d);
    switch (s->kind) {
    case TK_HOUR:
        snprintf(buf, n, "%02d-%02d %02d:00", m, d,
                 (int)(in_day / SW_MS_PER_HOUR));
        break;
    case TK_DAY:
        snprintf(buf, n, "%04lld-%02d-%02d", (long long)y, m, d);
        break;
    case TK_MONTH:
        snprintf(buf, n, "%04lld-%02d", (long long)y, m);
        break;
    default:
        snprintf(buf, n, "%04lld", (long long)y);
    }
}

static void time_axis(FILE *fp, const frame *f, const sw_zone *z)
{
    static const tstep steps[] = {
        {TK_HOUR, 1, 3.6e6},     {TK_HOUR, 2, 7.2e6},
        {TK_HOUR, 3, 1.08e7},    {TK_HOUR, 6, 2.16e7},
        {TK_HOUR, 12, 4.32e7},   {TK_DAY, 1, 8.64e7},
        {TK_DAY, 2, 1.728e8},    {TK_DAY, 7, 6.048e8},
        {TK_MONTH, 1, 2.63e9},   {TK_MONTH, 2, 5.26e9},
        {TK_MONTH, 3, 7.89e9},   {TK_MONTH, 6, 1.578e10},
        {TK_YEAR, 1, 3.156e10},  {TK_YEAR, 2, 6.31e10},
        {TK_YEAR, 5, 1.578e11},  {TK_YEAR, 10, 3.156e11},
        {TK_YEAR, 20, 6.31e11},  {TK_YEAR, 50, 1.578e12},
        {TK_YEAR, 100, 3.156e12}, {TK_YEAR, 1000, 3.156e13},
    };
    const size_t n_steps = sizeof steps / sizeof steps[0];
    sw_time_ms t0 = (sw_time_ms)f->vx0, t1 = (sw_time_ms)f->vx1;
    const tstep *s = &steps[n_steps - 1];
    /* labels are about 90 units wide: at most one per 110 */
    int max_ticks = (int)((f->x1 - f->x0) / 110.0);
    char label[48];

    for (size_t i = 0; i < n_steps; i++) {
        if ((double)(t1 - t0) / steps[i].approx_ms > max_ticks + 1)
            continue;
        int count = 0;
        sw_time_ms w1 = t1 + sw_zone_offset_at(z, t1) * SW_MS_PER_S;
        for (sw_time_ms w =
                 tick_first(&steps[i], t0 + sw_zone_offset_at(z, t0) *
                                                 SW_MS_PER_S);
             w <= w1 && count <= max_ticks; w = tick_next(&steps[i], w))
            count++;
        if (count <= max_ticks) {
            s = &steps[i];
            break;
        }
    }
    sw_time_ms w1 = t1 + sw_zone_offset_at(z, t1) * SW_MS_PER_S;
    for (sw_time_ms w = tick_first(s, t0 + sw_zone_offset_at(z, t0) *
                                               SW_MS_PER_S);
         w <= w1; w = tick_next(s, w)) {
        sw_time_ms t = to_utc(z, w);
        if (t < t0 || t > t1)
            continue;
        double x = fx(f, (double)t);
        fprintf(fp, "<line class=\"grid\" x1=\"%.1f\" y1=\"%.1f\" "
                "x2=\"%.1f\" y2=\"%.1f\"/>", x, f->y0, x, f->y1);
        /* a label needs about 40 units either side of its tick */
        tick_label(label, sizeof label, s, w);
        if (x - 6.0 * (double)strlen(label) / 2 >= 0 &&
            x + 6.0 * (double)strlen(label) / 2 <= f->x1 + 14)
            fprintf(fp, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                    "text-anchor=\"middle\">%s</text>", x, f->y1 + 16,
                    label);
        fputc('\n', fp);
    }
    fprintf(fp, "<text class=\"axis\" x=\"%.1f\" y=\"%.1f\" "
            "text-anchor=\"middle\">time (",
            (f->x0 + f->x1) / 2, f->y1 + 34);
    esc(fp, z != NULL ? sw_zone_name(z) : "UTC");
    fputs(")</text>\n", fp);
}

/* ---- writing: charts ---------------------------------------------------- */

/* Okabe & Ito (2008), "Color Universal Design": a palette that stays
 * distinguishable for the common colour-vision deficiencies; lines also
 * differ by dash pattern so that greyscale print keeps them apart. */
static const char *const palette[] = {"#0072B2", "#E69F00", "#009E73",
                                      "#56B4E9", "#D55E00", "#F0E442",
                                      "#000000", "#CC79A7"};
#define N_PALETTE (sizeof palette / sizeof palette[0])

static void svg_open(FILE *fp, const char *id, double w, double h,
                     const char *label)
{
    fprintf(fp, "<svg xmlns=\"http://www.w3.org/2000/svg\" id=\"%s\" "
            "viewBox=\"0 0 %.0f %.0f\" role=\"img\" aria-label=\"", id, w,
            h);
    esc(fp, label);
    fputs("\">\n<title>", fp);
    esc(fp, label);
    fputs("</title>\n", fp);
}

/* Shared pattern definitions, placed once in a hidden SVG. */
static void svg_defs(FILE *fp)
{
    fputs("<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"0\" "
          "height=\"0\" class=\"defs\" aria-hidden=\"true\"><defs>\n"
          "<pattern id=\"hatch-open\" width=\"6\" height=\"6\" "
          "patternUnits=\"userSpaceOnUse\" patternTransform=\"rotate(45)\">"
          "<rect width=\"6\" height=\"6\" fill=\"#C0502A\"/>"
          "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"6\" stroke=\"#5A1E08\" "
          "stroke-width=\"2.5\"/></pattern>\n"
          "<pattern id=\"hatch-nodata\" width=\"6\" height=\"6\" "
          "patternUnits=\"userSpaceOnUse\" patternTransform=\"rotate(-45)\">"
          "<rect width=\"6\" height=\"6\" fill=\"#F2F2F2\"/>"
          "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"6\" stroke=\"#9A9A9A\" "
          "stroke-width=\"1\"/></pattern>\n"
          "<pattern id=\"hatch-bar\" width=\"5\" height=\"5\" "
          "patternUnits=\"userSpaceOnUse\" patternTransform=\"rotate(45)\">"
          "<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"5\" stroke=\"#000000\" "
          "stroke-width=\"2\"/></pattern>\n"
          "</defs></svg>\n", fp);
}

/* The plot area's border. */
static void frame_rect(FILE *fp, const frame *f)
{
    fprintf(fp, "<rect class=\"frame\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
            "height=\"%.1f\"/>\n", f->x0, f->y0, f->x1 - f->x0, f->y1 - f->y0);
}

static void clip_rect(FILE *fp, const char *id, const frame *f)
{
    fprintf(fp, "<clipPath id=\"%s\"><rect x=\"%.1f\" y=\"%.1f\" "
            "width=\"%.1f\" height=\"%.1f\"/></clipPath>\n", id, f->x0, f->y0,
            f->x1 - f->x0, f->y1 - f->y0);
}

/* The x of a column's centre. */
static double col_x(const sw_html_report *r, const frame *f, size_t k)
{
    return fx(f, (double)r->t0 + ((double)k + 0.5) * (double)r->w);
}

/* One trace as a path: within a column its first, least, greatest and
 * last values; across columns joined unless the line is broken.  Where a
 * column's values spread over more than `spread` units (a tide within
 * the column), the line leaves it out: the band of trace_band() shows the
 * range there, and a comb of vertical strokes would hide what is drawn
 * beneath. */
static void trace_path_spread(FILE *fp, const sw_html_report *r,
                              const frame *f, const trace *t, size_t n_cols,
                              const char *attrs, double spread)
{
    int pen = 0;
    fprintf(fp, "<path %s d=\"", attrs);
    for (size_t k = 0; k < n_cols; k++) {
        const bucket *b = &t->b[k];
        if (b->n == 0)
            continue;
        double x = col_x(r, f, k);
        if (b->n > 1 && fy(f, b->lo) - fy(f, b->hi) > spread) {
            pen = 0;
            continue;
        }
        fprintf(fp, "%c%.1f %.1f", pen && !b->brk ? 'L' : 'M', x,
                fy(f, b->first));
        if (b->n > 1) {
            int up = b->first <= b->last;
            fprintf(fp, "L%.1f %.1fL%.1f %.1fL%.1f %.1f", x,
                    fy(f, up ? b->lo : b->hi), x, fy(f, up ? b->hi : b->lo),
                    x, fy(f, b->last));
        } else if (!pen || b->brk) {
            fprintf(fp, "h0.01"); /* a lone point still shows */
        }
        pen = 1;
    }
    fputs("\"/>\n", fp);
}

static void trace_path(FILE *fp, const sw_html_report *r, const frame *f,
                       const trace *t, size_t n_cols, const char *attrs)
{
    trace_path_spread(fp, r, f, t, n_cols, attrs, INFINITY);
}

/* A trace's range per column as a filled band: for each unbroken run of
 * columns, along the greatest values and back along the least. */
static void trace_band(FILE *fp, const sw_html_report *r, const frame *f,
                       const trace *t, size_t n_cols, const char *attrs)
{
    fprintf(fp, "<path %s d=\"", attrs);
    size_t k = 0;
    while (k < n_cols) {
        if (t->b[k].n == 0) {
            k++;
            continue;
        }
        size_t e = k + 1;
        while (e < n_cols && t->b[e].n > 0 && !t->b[e].brk)
            e++;
        for (size_t j = k; j < e; j++)
            fprintf(fp, "%c%.1f %.1f", j == k ? 'M' : 'L', col_x(r, f, j),
                    fy(f, t->b[j].hi));
        for (size_t j = e; j-- > k;)
            fprintf(fp, "L%.1f %.1f", col_x(r, f, j), fy(f, t->b[j].lo));
        fputc('z', fp);
        k = e;
    }
    fputs("\"/>\n", fp);
}

/* Each gate's sill and hinge as thin reference lines, labelled at the
 * right; gates with the same level share one line and label. */
static void reference_lines(FILE *fp, const sw_html_report *r,
                            const frame *f)
{
    const sw_site *site = r->site;
    for (size_t g = 0; g < r->n_gates; g++) {
        for (int kind = 0; kind < 2; kind++) {
            const sw_gate *q = &site->gates[g].gate;
            double z = kind == 0 ? q->sill_level_m : q->hinge_level_m;
            int seen = 0;
            for (size_t h = 0; h < g && !seen; h++) {
                const sw_gate *p = &site->gates[h].gate;
                seen = fabs((kind == 0 ? p->sill_level_m : p->hinge_level_m) -
                            z) < 5e-4;
            }
            if (seen || z < f->vy0 || z > f->vy1)
                continue;
            fprintf(fp, "<line class=\"ref\" x1=\"%.1f\" y1=\"%.1f\" "
                    "x2=\"%.1f\" y2=\"%.1f\"/>\n<text class=\"ref\" "
                    "x=\"%.1f\" y=\"%.1f\" text-anchor=\"end\">",
                    f->x0, fy(f, z), f->x1, fy(f, z), f->x1 - 3,
                    fy(f, z) - 2.5);
            fputs(kind == 0 ? "sill " : "hinge ", fp);
            int first = 1;
            for (size_t h = g; h < r->n_gates; h++) {
                const sw_gate *p = &site->gates[h].gate;
                if (fabs((kind == 0 ? p->sill_level_m : p->hinge_level_m) -
                         z) >= 5e-4)
                    continue;
                if (!first)
                    fputs(", ", fp);
                esc(fp, p->name);
                first = 0;
            }
            fprintf(fp, " %.3f m</text>\n", z);
        }
    }
}

static size_t n_columns(const sw_html_report *r, sw_time_ms t1)
{
    if (!r->started)
        return 0;
    return column_of(r, t1) + 1;
}

static void trace_range(const trace *t, size_t n_cols, double *lo,
                        double *hi)
{
    for (size_t k = 0; k < n_cols; k++)
        if (t->b[k].n > 0) {
            *lo = fmin(*lo, t->b[k].lo);
            *hi = fmax(*hi, t->b[k].hi);
        }
}

static void legend_item(FILE *fp, double *x, double y, const char *style,
                        const char *label, int swatch)
{
    if (swatch)
        fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"16\" height=\"10\" "
                "%s/>", *x, y - 9, style);
    else
        fprintf(fp, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" "
                "%s/>", *x, y - 4, *x + 22, y - 4, style);
    fprintf(fp, "<text class=\"legend\" x=\"%.1f\" y=\"%.1f\">", *x + 26, y);
    esc(fp, label);
    fputs("</text>\n", fp);
    *x += 34 + 6.6 * (double)strlen(label);
}

/* A cross at each column where readings of a level series were flagged,
 * at the first flagged value (held to the plot's edges).  Returns whether
 * any was drawn. */
static int qc_marks(FILE *fp, const sw_html_report *r, const frame *f,
                    size_t nc)
{
    int any = 0;
    for (size_t i = 0; i < r->n_lv; i++)
        for (size_t k = 0; k < nc && k < NB; k++) {
            if (r->qmask[i * NB + k] == 0)
                continue;
            double v = fmax(f->vy0, fmin(f->vy1, r->qval[i * NB + k]));
            double x = col_x(r, f, k), y = fy(f, v);
            fprintf(fp, "<path class=\"qc-flag\" stroke=\"%s\" "
                    "d=\"M%.1f,%.1fl8,8m0,-8l-8,8\"/>\n",
                    palette[i % N_PALETTE], x - 4, y - 4);
            any = 1;
        }
    return any;
}

static void chart_levels(FILE *fp, const sw_html_report *r, sw_time_ms t1)
{
    const sw_site *site = r->site;
    size_t nc = n_columns(r, t1);
    double lo = INFINITY, hi = -INFINITY, glo = INFINITY, ghi = -INFINITY;
    frame f = {64, 944, 40, 330, (double)r->t0, (double)t1, 0, 1};
    char style[160], label[200];

    for (size_t i = 0; i < r->n_lv; i++)
        trace_range(&r->tr[i], nc, &lo, &hi);
    for (size_t k = 0; k < r->n_tw; k++) {
        trace_range(&r->tr[tr_alarm(r, k)], nc, &glo, &ghi);
        trace_range(&r->tr[tr_open(r, k)], nc, &glo, &ghi);
    }
    if (!(hi >= lo))
        lo = hi = 0.0;
    /* critical levels far from the observed ones are clipped */
    double pad = fmax(0.5, 0.5 * (hi - lo));
    if (glo <= ghi) {
        lo = fmin(lo, fmax(glo, lo - pad));
        hi = fmax(hi, fmin(ghi, hi + pad));
    }
    double step = nice_range(&lo, &hi, 6);
    f.vy0 = lo;
    f.vy1 = hi;
    if (f.vx1 <= f.vx0)
        f.vx1 = f.vx0 + 1;

    svg_open(fp, "chart-levels", 960, 380, "Levels over the run with the governing "
                           "critical tailwaters");
    clip_rect(fp, "clip-levels", &f);
    y_axis(fp, &f, step, "level above site datum (m)");
    time_axis(fp, &f, site->zone);
    frame_rect(fp, &f);
    fputs("<g clip-path=\"url(#clip-levels)\">\n", fp);
    reference_lines(fp, r, &f);
    /* each level's range per column as a light band, then its line
     * (through the middle of a column's range where the range is wide);
     * the first gate's headwater last, over the others */
    for (size_t i = r->n_lv; i-- > 0;) {
        snprintf(style, sizeof style, "class=\"band\" fill=\"%s\"",
                 palette[i % N_PALETTE]);
        trace_band(fp, r, &f, &r->tr[i], nc, style);
    }
    for (size_t i = r->n_lv; i-- > 0;) {
        snprintf(style, sizeof style, "class=\"level\" stroke=\"%s\"%s",
                 palette[i % N_PALETTE],
                 i % 2 ? " stroke-width=\"1\"" : "");
        trace_path_spread(fp, r, &f, &r->tr[i], nc, style, 4.0);
    }
    /* the critical levels over the levels, on a white halo, so that they
     * stay visible over a band */
    for (size_t k = 0; k < r->n_tw; k++) {
        trace_path(fp, r, &f, &r->tr[tr_alarm(r, k)], nc, "class=\"halo\"");
        trace_path(fp, r, &f, &r->tr[tr_open(r, k)], nc, "class=\"halo\"");
        trace_path(fp, r, &f, &r->tr[tr_alarm(r, k)], nc,
                   "class=\"crit-alarm\"");
        trace_path(fp, r, &f, &r->tr[tr_open(r, k)], nc,
                   "class=\"crit-open\"");
    }
    fputs("</g>\n", fp);
    int any_flag = qc_marks(fp, r, &f, nc);
    double x = f.x0;
    for (size_t i = 0; i < r->n_lv; i++) {
        const sw_site_series *s = &site->series[r->lv_series[i]];
        int is_tw = 0;
        for (size_t k = 0; k < r->n_tw; k++)
            is_tw |= r->tw_lv[k] == i;
        snprintf(style, sizeof style, "class=\"level\" stroke=\"%s\"%s",
                 palette[i % N_PALETTE],
                 i % 2 ? " stroke-width=\"1\"" : "");
        snprintf(label, sizeof label, "%s (%s)", s->name,
                 is_tw ? "tailwater" : "headwater");
        legend_item(fp, &x, 20, style, label, 0);
    }
    legend_item(fp, &x, 20, "class=\"crit-alarm\"",
                "tw_alarm, governing gate", 0);
    legend_item(fp, &x, 20, "class=\"crit-open\"",
                "tw_open, governing gate", 0);
    legend_item(fp, &x, 20, "fill=\"#E69F00\" fill-opacity=\"0.45\"",
                "range in a column", 1);
    if (any_flag) {
        fprintf(fp, "<path class=\"qc-flag\" stroke=\"#000\" "
                "d=\"M%.1f,7l8,8m0,-8l-8,8\"/>", x);
        fprintf(fp, "<text class=\"legend\" x=\"%.1f\" y=\"20\">flagged "
                "reading (removed)</text>\n", x + 12);
    }
    fputs("</svg>\n", fp);
}

/* Runs of columns with a flag, as rectangles over the plot's height. */
static void shade(FILE *fp, const sw_html_report *r, const frame *f,
                  size_t g, size_t nc, unsigned char flag, unsigned char not,
                  const char *cls, const char *fill)
{
    const unsigned char *fl = r->flags + g * NB;
    size_t k = 0;
    while (k < nc) {
        if (!(fl[k] & flag) || (fl[k] & not)) {
            k++;
            continue;
        }
        size_t e = k;
        while (e < nc && (fl[e] & flag) && !(fl[e] & not))
            e++;
        double xa = fmax(f->x0, fx(f, (double)r->t0 + (double)k * (double)r->w));
        double xb = fmin(f->x1, fx(f, (double)r->t0 + (double)e * (double)r->w));
        /* at least 2 units wide, so that a short event stays visible;
         * a narrow event also gets a mark on the top edge */
        if (xb - xa < 4.0 && !(flag & F_NODATA))
            fprintf(fp, "<path class=\"%s-mark\" d=\"M%.1f %.1fl-4 -7h8z\" "
                    "fill=\"%s\" stroke=\"#000000\" stroke-width=\"0.6\"/>\n",
                    cls, (xa + xb) / 2, f->y0, fill);
        if (xb - xa < 2.0) {
            double mid = (xa + xb) / 2;
            xa = fmax(f->x0, mid - 1.0);
            xb = fmin(f->x1, xa + 2.0);
        }
        fprintf(fp, "<rect class=\"%s\" x=\"%.1f\" y=\"%.1f\" "
                "width=\"%.1f\" height=\"%.1f\" fill=\"%s\"/>\n", cls, xa,
                f->y0, xb - xa, f->y1 - f->y0, fill);
        k = e;
    }
}

static void chart_fs(FILE *fp, const sw_html_report *r, size_t g,
                     sw_time_ms t1)
{
    const sw_gate *gate = &r->site->gates[g].gate;
    const trace *t = &r->tr[tr_fs(r, g)];
    size_t nc = n_columns(r, t1);
    double lo = INFINITY, hi = -INFINITY, req = gate->required_fs;
    frame f = {64, 944, 34, 194, (double)r->t0, (double)t1, 0, 1};
    char label[200], id[32];

    trace_range(t, nc, &lo, &hi);
    f.vy0 = lo < 0 ? fmax(-2.0, floor(lo)) : 0.0;
    f.vy1 = fmin(fmax(hi, 2.0 * req), 4.0 * req);
    double step = nice_range(&f.vy0, &f.vy1, 4);
    if (f.vx1 <= f.vx0)
        f.vx1 = f.vx0 + 1;

    snprintf(label, sizeof label, "Factor of safety of gate %s (%s)",
             gate->name, sw_fs_basis_phrase(gate->fs_basis));
    snprintf(id, sizeof id, "fs-%zu", g + 1);
    svg_open(fp, id, 960, 236, label);
    snprintf(id, sizeof id, "clip-fs-%zu", g + 1);
    clip_rect(fp, id, &f);
    shade(fp, r, &f, g, nc, F_NODATA, F_LOW | F_OPEN, "shade-nodata",
          "url(#hatch-nodata)");
    shade(fp, r, &f, g, nc, F_LOW, F_OPEN, "shade-low", "#F5C26B");
    shade(fp, r, &f, g, nc, F_OPEN, 0, "shade-open", "url(#hatch-open)");
    /* an axis cut below the trace's highest value says so: a break mark
     * on the axis and the highest value in its title */
    int cut = hi > f.vy1;
    if (cut) {
        char hv[32];
        if (hi >= FS_DRAW_CAP)
            snprintf(hv, sizeof hv, "infinite");
        else
            snprintf(hv, sizeof hv, "%.2f", hi);
        snprintf(label, sizeof label, "axis cut at %g; highest: %s",
                 f.vy1, hv);
        y_axis(fp, &f, step, "factor of safety (\xE2\x80\x93)");
        fprintf(fp, "<path class=\"axis-break\" d=\"M%.1f %.1fl10 -4M%.1f "
                "%.1fl10 -4\"/>\n", f.x0 - 5, f.y0 + 8, f.x0 - 5, f.y0 + 13);
    } else {
        y_axis(fp, &f, step, "factor of safety (\xE2\x80\x93)");
    }
    time_axis(fp, &f, r->site->zone);
    frame_rect(fp, &f);
    fprintf(fp, "<g clip-path=\"url(#%s)\">\n", id);
    fprintf(fp, "<line class=\"req\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
            "y2=\"%.1f\"/>\n", f.x0, fy(&f, req), f.x1, fy(&f, req));
    fprintf(fp, "<line class=\"one\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
            "y2=\"%.1f\"/>\n", f.x0, fy(&f, 1.0), f.x1, fy(&f, 1.0));
    trace_band(fp, r, &f, t, nc, "class=\"band\" fill=\"#0072B2\"");
    trace_path_spread(fp, r, &f, t, nc, "class=\"fs\"", 4.0);
    fputs("</g>\n", fp);
    if (cut) {
        fprintf(fp, "<text class=\"cutnote\" x=\"%.1f\" y=\"%.1f\" "
                "text-anchor=\"end\">", f.x1 - 4, f.y0 + 13);
        esc(fp, label);
        fputs("</text>\n", fp);
    }
    double x = f.x0;
    legend_item(fp, &x, 18, "class=\"fs\"", "factor of safety", 0);
    snprintf(label, sizeof label, "required %.2f", req);
    legend_item(fp, &x, 18, "class=\"req\"", label, 0);
    legend_item(fp, &x, 18, "class=\"one\"", "1.0: opens", 0);
    legend_item(fp, &x, 18, "fill=\"#F5C26B\"", "low", 1);
    legend_item(fp, &x, 18, "fill=\"url(#hatch-open)\"", "open", 1);
    legend_item(fp, &x, 18, "fill=\"url(#hatch-nodata)\" stroke=\"#9A9A9A\"",
                "no data", 1);
    fprintf(fp, "<path d=\"M%.1f 20l-4 -7h8z\" fill=\"#F5C26B\" "
            "stroke=\"#000000\" stroke-width=\"0.6\"/>", x + 6);
    x += 14;
    legend_item(fp, &x, 18, "fill=\"none\"",
                "too short to see: marked on the top edge", 1);
    fputs("</svg>\n", fp);
}

#define ENV_NX 150
#define ENV_NY 120

static int chart_envelope(FILE *fp, const sw_html_report *r, size_t g,
                          sw_error *err)
{
    const sw_gate *gate = &r->site->gates[g].gate;
    const cloud *c = &r->clouds[g];
    frame f = {64, 444, 34, 334, 0, 1, 0, 1};
    static const char *const fill[3] = {"#DCEAF5", "#F5C26B",
                                        "url(#hatch-open)"};
    char label[200], id[32];

    snprintf(label, sizeof label, "Operating envelope of gate %s",
             gate->name);
    snprintf(id, sizeof id, "env-%zu", g + 1);
    svg_open(fp, id, 460, 420, label);
    if (c->n == 0) {
        fputs("<text class=\"axis\" x=\"230\" y=\"200\" text-anchor=\""
              "middle\">no level data for this gate</text></svg>\n", fp);
        return SW_OK;
    }
    double hlo = c->hw_lo, hhi = c->hw_hi, tlo = c->tw_lo, thi = c->tw_hi;
    double ph = fmax(0.25, 0.1 * (hhi - hlo)), pt = fmax(0.25, 0.1 * (thi - tlo));
    hlo -= ph;
    hhi += ph;
    tlo -= pt;
    thi += pt;
    double sx = nice_range(&hlo, &hhi, 5), sy = nice_range(&tlo, &thi, 5);
    f.vx0 = hlo;
    f.vx1 = hhi;
    f.vy0 = tlo;
    f.vy1 = thi;
    snprintf(id, sizeof id, "clip-env-%zu", g + 1);
    clip_rect(fp, id, &f);

    /* the regions: the state at each cell's centre, as vertical runs */
    /* `ok` as the ground, the other states over it; each run overlaps its
     * right and lower neighbours by 0.6 units, which they then paint over,
     * so that no seam of background shows between adjacent cells */
    fprintf(fp, "<g clip-path=\"url(#%s)\">\n<rect x=\"%.1f\" y=\"%.1f\" "
            "width=\"%.1f\" height=\"%.1f\" fill=\"%s\"/>\n", id, f.x0,
            f.y0, f.x1 - f.x0, f.y1 - f.y0, fill[SW_STATE_OK]);
    double cw = (f.x1 - f.x0) / ENV_NX, ch = (f.y1 - f.y0) / ENV_NY;
    for (int i = 0; i < ENV_NX; i++) {
        double hw = hlo + (i + 0.5) * (hhi - hlo) / ENV_NX;
        int run_state = -1, run_start = 0;
        for (int j = 0; j <= ENV_NY; j++) {
            int s = -2;
            if (j < ENV_NY) {
                sw_gate_result res;
                double tw = tlo + (j + 0.5) * (thi - tlo) / ENV_NY;
                sw_gate_evaluate(gate, hw, tw, &res);
                s = (int)res.state;
            }
            if (s != run_state) {
                if (run_state > SW_STATE_OK)
                    fprintf(fp, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" "
                            "height=\"%.2f\" fill=\"%s\"/>", f.x0 + i * cw,
                            f.y1 - j * ch, cw + 0.6,
                            (j - run_start) * ch + 0.6, fill[run_state]);
                run_state = s;
                run_start = j;
            }
        }
        fputc('\n', fp);
    }
    /* where the waters are level: the buoyancy changes water there */
    fprintf(fp, "<line class=\"diag\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" "
            "y2=\"%.1f\"/>\n", fx(&f, fmax(hlo, tlo)), fy(&f, fmax(hlo, tlo)),
            fx(&f, fmin(hhi, thi)), fy(&f, fmin(hhi, thi)));
    /* the observed pairs, one mark per 2-unit square */
    {
        enum { GW = 200, GH = 160 };
        unsigned char *seen = calloc(GW * GH, 1);
        if (seen == NULL)
            return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                                "out of memory for the report");
        fputs("<path class=\"obs\" d=\"", fp);
        for (size_t s = 0; s < CLOUD_SLOTS; s++) {
            if (!c->used[s])
                continue;
            double x = fx(&f, ((double)c->qh[s] + 0.5) * c->cell_m);
            double y = fy(&f, ((double)c->qt[s] + 0.5) * c->cell_m);
            int gx = (int)((x - f.x0) / 2.0), gy = (int)((y - f.y0) / 2.0);
            if (gx < 0 || gx >= GW || gy < 0 || gy >= GH ||
                seen[gy * GW + gx])
                continue;
            seen[gy * GW + gx] = 1;
            fprintf(fp, "M%.1f %.1fh1.4v1.4h-1.4z", f.x0 + gx * 2.0 + 0.3,
                    f.y0 + gy * 2.0 + 0.3);
        }
        fputs("\"/>\n", fp);
        free(seen);
    }
    fputs("</g>\n", fp);
    x_axis(fp, &f, sx, "headwater (m)");
    y_axis(fp, &f, sy, "tailwater (m)");
    frame_rect(fp, &f);
    double x = f.x0;
    legend_item(fp, &x, 18, "fill=\"#DCEAF5\" stroke=\"#777777\"", "ok", 1);
    legend_item(fp, &x, 18, "fill=\"#F5C26B\"", "low", 1);
    legend_item(fp, &x, 18, "fill=\"url(#hatch-open)\"", "open", 1);
    legend_item(fp, &x, 18, "class=\"obs\" fill-opacity=\"0.5\"",
                "observed pairs", 1);
    legend_item(fp, &x, 18, "class=\"diag\"", "hw = tw", 0);
    fputs("</svg>\n", fp);
    return SW_OK;
}

static void chart_months(FILE *fp, const sw_html_report *r)
{
    size_t ng = r->n_drawn, n = r->n_months, ngroups;
    int by_year = n > MONTHS_DRAWN;
    frame f = {64, 944, 40, 250, 0, 1, 0, 1};
    char label[48];
    double max_h = 0;

    /* groups: months, or years when there are many months */
    ngroups = 0;
    for (size_t i = 0; i < n; i++)
        if (i == 0 || !by_year ||
            r->yyyymm[i] / 100 != r->yyyymm[i - 1] / 100)
            ngroups++;
    double *low = calloc(ngroups * ng + 1, sizeof *low);
    double *open = calloc(ngroups * ng + 1, sizeof *open);
    int *key = calloc(ngroups + 1, sizeof *key);
    if (low == NULL || open == NULL || key == NULL) {
        free(low);
        free(open);
        free(key);
        fputs("<p>(out of memory for the chart)</p>\n", fp);
        return;
    }
    size_t gi = 0;
    for (size_t i = 0; i < n; i++) {
        if (i > 0 && (!by_year ||
                      r->yyyymm[i] / 100 != r->yyyymm[i - 1] / 100))
            gi++;
        key[gi] = by_year ? r->yyyymm[i] / 100 : r->yyyymm[i];
        for (size_t g = 0; g < ng; g++) {
            low[gi * ng + g] += (double)r->m_low[i * ng + g] / 3.6e6;
            open[gi * ng + g] += (double)r->m_open[i * ng + g] / 3.6e6;
        }
    }
    for (size_t i = 0; i < ngroups * ng; i++)
        max_h = fmax(max_h, low[i] + open[i]);
    f.vy1 = max_h > 0 ? max_h : 1.0;
    double step = nice_range(&f.vy0, &f.vy1, 5);

    svg_open(fp, "chart-months", 960, 320, by_year ? "Hours below margin per gate and year"
                                    : "Hours below margin per gate and "
                                      "month");
    y_axis(fp, &f, step, "hours below margin (h)");
    double gw = (f.x1 - f.x0) / (double)(ngroups ? ngroups : 1);
    double bw = fmin(28.0, 0.8 * gw / (double)ng);
    int every = (int)ceil(70.0 / gw);
    for (size_t k = 0; k < ngroups; k++) {
        double gx = f.x0 + (double)k * gw + (gw - bw * (double)ng) / 2;
        for (size_t g = 0; g < ng; g++) {
            double x = gx + (double)g * bw;
            double lo_h = low[k * ng + g], op_h = open[k * ng + g];
            double y_open = fy(&f, op_h), y_top = fy(&f, op_h + lo_h);
            if (op_h + lo_h <= 0)
                continue;
            /* a bar too small to see is drawn 2.5 units high and labelled
             * with its hours */
            if (f.y1 - y_top < 2.5) {
                char v[24];
                if (op_h + lo_h < 0.1)
                    snprintf(v, sizeof v, "&lt; 0.1 h");
                else
                    snprintf(v, sizeof v, "%.1f h", op_h + lo_h);
                y_top = f.y1 - 2.5;
                y_open = op_h > 0 ? y_top : f.y1;
                fprintf(fp, "<text class=\"barlabel\" x=\"%.1f\" "
                        "y=\"%.1f\" text-anchor=\"middle\">%s</text>",
                        x + bw * 0.46, y_top - 2, v);
            }
            fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                    "height=\"%.1f\" fill=\"%s\" stroke=\"#000000\" "
                    "stroke-width=\"0.5\"/>", x, y_top, bw * 0.92,
                    f.y1 - y_top, palette[g % N_PALETTE]);
            if (op_h > 0)
                fprintf(fp, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
                        "height=\"%.1f\" fill=\"url(#hatch-bar)\"/>", x,
                        y_open, bw * 0.92, f.y1 - y_open);
            fputc('\n', fp);
        }
        if (k % (size_t)every == 0) {
            if (by_year)
                snprintf(label, sizeof label, "%d", key[k]);
            else
                snprintf(label, sizeof label, "%04d-%02d", key[k] / 100,
                         key[k] % 100);
            fprintf(fp, "<text class=\"tick\" x=\"%.1f\" y=\"%.1f\" "
                    "text-anchor=\"middle\">%s</text>\n", f.x0 + ((double)k + 0.5) * gw,
                    f.y1 + 16, label);
        }
    }
    frame_rect(fp, &f);
    fprintf(fp, "<text class=\"axis\" x=\"%.1f\" y=\"%.1f\" "
            "text-anchor=\"middle\">%s (site time zone)</text>\n",
            (f.x0 + f.x1) / 2, f.y1 + 34, by_year ? "year" : "month");
    if (max_h <= 0)
        fprintf(fp, "<text class=\"axis\" x=\"%.1f\" y=\"%.1f\" "
                "text-anchor=\"middle\">no hours below margin</text>\n",
                (f.x0 + f.x1) / 2, (f.y0 + f.y1) / 2);
    double x = f.x0;
    for (size_t g = 0; g < ng; g++) {
        char style[80];
        snprintf(style, sizeof style, "fill=\"%s\" stroke=\"#000000\" "
                 "stroke-width=\"0.5\"", palette[g % N_PALETTE]);
        legend_item(fp, &x, 20, style, r->site->gates[g].gate.name, 1);
    }
    legend_item(fp, &x, 20, "fill=\"url(#hatch-bar)\" stroke=\"#000000\" "
                "stroke-width=\"0.5\"", "of which open", 1);
    fputs("</svg>\n", fp);
    free(low);
    free(open);
    free(key);
}

/* ---- writing: tables ---------------------------------------------------- */

static void table_summary(FILE *fp, const sw_html_report *r,
                          const sw_stepper *st)
{
    sw_time_ms t0, t1;
    char a[32], b[32], c[32], d[32], e[32], h[32], fs[32], when[64];

    sw_stepper_span(st, &t0, &t1);
    fputs("<table id=\"table-summary\">\n<thead><tr><th>gate</th>"
          "<th>evaluated (h)</th>"
          "<th>not evaluated (h)</th><th>low (h)</th><th>open (h)</th>"
          "<th>below margin (h)</th><th>events</th>"
          "<th>longest event (h)</th><th>least fs</th><th>when</th>"
          "</tr></thead>\n<tbody>\n", fp);
    for (size_t g = 0; g < r->n_gates; g++) {
        const sw_tally *t = sw_stepper_tally(st, g);
        sw_report_hours_text(a, sizeof a, t->evaluated);
        sw_report_hours_text(b, sizeof b, (t1 - t0) - t->evaluated);
        sw_report_hours_text(c, sizeof c, t->low);
        sw_report_hours_text(d, sizeof d, t->open);
        sw_report_hours_text(e, sizeof e, t->low + t->open);
        sw_report_hours_text(h, sizeof h, t->longest_event);
        if (t->evaluated == 0 && isinf(t->min_fs)) {
            snprintf(fs, sizeof fs, "\xE2\x80\x93");
            snprintf(when, sizeof when, "\xE2\x80\x93");
        } else {
            fs_text(fs, sizeof fs, t->min_fs);
            when_text(when, sizeof when, t->min_fs_t, r->site->zone);
        }
        fprintf(fp, "<tr%s><td>", t->open > 0 ? " class=\"open\""
                                  : t->low > 0 ? " class=\"low\"" : "");
        esc(fp, r->site->gates[g].gate.name);
        fprintf(fp, "</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td>"
                "<td>%s</td><td>%ld</td><td>%s</td><td>%s</td><td>%s</td>"
                "</tr>\n", a, b, c, d, e, t->events, h, fs, when);
    }
    fputs("</tbody>\n</table>\n", fp);
}

static void table_worst(FILE *fp, const sw_html_report *r)
{
    char a[64], b[64], h[32], fs[32], when[64];

    if (r->n_worst == 0) {
        fputs("<p>No gate was below its margin: there are no events.</p>\n",
              fp);
        return;
    }
    fputs("<table id=\"table-events\">\n<thead><tr><th>#</th><th>gate</th>"
          "<th>start</th>"
          "<th>end</th><th>hours</th><th>worst</th><th>least fs</th>"
          "<th>when</th><th>headwater (m)</th><th>tailwater (m)</th>"
          "<th>ended by</th></tr></thead>\n<tbody>\n", fp);
    for (size_t i = 0; i < r->n_worst; i++) {
        const sw_event *ev = &r->worst[i];
        when_text(a, sizeof a, ev->start, r->site->zone);
        when_text(b, sizeof b, ev->end, r->site->zone);
        sw_report_hours_text(h, sizeof h, ev->end - ev->start);
        fs_text(fs, sizeof fs, ev->min_fs);
        when_text(when, sizeof when, ev->min_fs_t, r->site->zone);
        fprintf(fp, "<tr class=\"%s\"><td>%zu</td><td>",
                sw_state_name(ev->worst), i + 1);
        esc(fp, r->site->gates[ev->gate].gate.name);
        fprintf(fp, "</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td>"
                "<td>%s</td><td>%s</td><td>%.3f</td><td>%.3f</td>"
                "<td>%s</td></tr>\n", a, b, h, sw_state_name(ev->worst), fs,
                when, ev->hw_at_min_m, ev->tw_at_min_m,
                sw_report_end_name(ev->ends));
    }
    fputs("</tbody>\n</table>\n", fp);
}

/* One item of the notes under the data-quality table (the first opens
 * the list). */
static void note_item(FILE *fp, int *any, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 3, 4)))
#endif
    ;
static void note_item(FILE *fp, int *any, const char *fmt, ...)
{
    va_list ap;
    if (!(*any)++)
        fputs("<p>Notes on the readings (the first ten rejected fields of "
              "each series):</p>\n<ul class=\"rejects\">\n", fp);
    fputs("<li>", fp);
    va_start(ap, fmt);
    escv(fp, fmt, ap);
    va_end(ap);
    fputs("</li>\n", fp);
}

static long qc_total(const sw_qc_stats *q)
{
    long all = 0;
    for (int k = 0; k < SW_QC_N_TESTS; k++)
        all += q->flagged[k];
    return all;
}

/* The readings flagged by the quality tests: counts per series and test,
 * and the first ten of each series. */
static void table_flags(FILE *fp, const sw_html_report *r,
                        const sw_stepper *st)
{
    char when[64];

    fputs("<p>Readings flagged by the quality tests of their series (U.S. "
          "IOOS QARTOD water-level tests: gross range, spike, rate of "
          "change, flat line) are removed like missing ones; each is in "
          "flags.csv and marked with a cross on the level chart.</p>\n"
          "<table id=\"table-flags\">\n<thead><tr><th>series</th>", fp);
    for (int k = 0; k < SW_QC_N_TESTS; k++)
        fprintf(fp, "<th>%s</th>", sw_qc_test_name(k));
    fputs("<th>flagged</th></tr></thead>\n<tbody>\n", fp);
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_qc_stats *q = sw_stepper_qc_stats(st, i);
        long all = 0;
        fputs("<tr><td>", fp);
        esc(fp, sw_stepper_series(st, i)->name);
        fputs("</td>", fp);
        for (int k = 0; k < SW_QC_N_TESTS; k++) {
            fprintf(fp, "<td>%ld</td>", q->flagged[k]);
            all += q->flagged[k];
        }
        fprintf(fp, "<td>%ld</td></tr>\n", all);
    }
    fputs("</tbody>\n</table>\n", fp);
    int any = 0;
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_site_series *s = sw_stepper_series(st, i);
        const sw_qc_stats *q = sw_stepper_qc_stats(st, i);
        for (size_t k = 0; k < q->n_kept; k++) {
            if (!any++)
                fputs("<ul class=\"rejects\" id=\"list-flags\">\n", fp);
            when_text(when, sizeof when, q->kept[k].t, r->site->zone);
            fputs("<li>", fp);
            escf(fp, "%s:%ld: %s: %.4f m at %s", s->path, q->kept[k].line,
                 sw_qc_test_name(q->kept[k].test), q->kept[k].v_m, when);
            fputs("</li>\n", fp);
        }
    }
    if (any)
        fputs("</ul>\n", fp);
}


/* A table row's first cells for a series: name, file, column (the last
 * cell left open). */
static void series_cells(FILE *fp, const sw_site_series *s)
{
    fputs("<tr><td>", fp);
    esc(fp, s->name);
    fputs("</td><td>", fp);
    esc(fp, s->path);
    fputs("</td><td>", fp);
    esc(fp, s->value_column);
}

static void table_quality(FILE *fp, const sw_html_report *r,
                          const sw_stepper *st)
{
    char h[32], l[32], when[64];

    sw_report_hours_text(h, sizeof h, r->site->max_gap_ms);
    fprintf(fp, "<p>A gap is an interval between valid readings longer "
            "than max_gap (%s h); across it the level is unknown and the "
            "hours count as not evaluated, never as safe.</p>\n", h);
    fputs("<table id=\"table-quality\">\n<thead><tr><th>series</th>"
          "<th>file</th><th>column</th>"
          "<th>rows</th><th>valid</th><th>missing</th><th>rejected</th>"
          "<th>duplicate rows</th><th>gaps</th><th>in gaps (h)</th>"
          "<th>longest gap (h)</th><th>from</th></tr></thead>\n<tbody>\n",
          fp);
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_site_series *s = sw_stepper_series(st, i);
        const sw_reader_stats *rs = sw_stepper_reader_stats(st, i);
        const sw_column_stats *cs = sw_stepper_column_stats(st, i);
        const sw_gap_stats *gs = sw_stepper_gap_stats(st, i);
        series_cells(fp, s);
        fprintf(fp, "</td><td>%ld</td><td>%ld</td><td>%ld</td><td>%ld</td>"
                "<td>%ld</td><td>%ld</td>", rs->records,
                cs->valid - qc_total(sw_stepper_qc_stats(st, i)),
                cs->missing, cs->rejected, rs->duplicates, gs->gaps);
        if (gs->gaps > 0) {
            sw_report_hours_text(h, sizeof h, gs->total);
            sw_report_hours_text(l, sizeof l, gs->longest);
            when_text(when, sizeof when, gs->longest_start, r->site->zone);
            fprintf(fp, "<td>%s</td><td>%s</td><td>%s</td></tr>\n", h, l,
                    when);
        } else {
            fputs("<td>0.0000</td><td>\xE2\x80\x93</td><td>\xE2\x80\x93</td>"
                  "</tr>\n", fp);
        }
    }
    fputs("</tbody>\n</table>\n", fp);
    table_flags(fp, r, st);
    int any = 0;
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_site_series *s = sw_stepper_series(st, i);
        const sw_reader_stats *rs = sw_stepper_reader_stats(st, i);
        const sw_column_stats *cs = sw_stepper_column_stats(st, i);
        for (size_t k = 0; k < cs->n_kept; k++)
            note_item(fp, &any, "%s:%ld:%ld: rejected '%s': %s", s->path,
                      cs->kept[k].line, cs->kept[k].column, cs->kept[k].text,
                      cs->kept[k].reason);
        if (cs->rejected > (long)cs->n_kept)
            note_item(fp, &any, "%s: %ld more rejected", s->path,
                      cs->rejected - (long)cs->n_kept);
        if (rs->time_rejected > 0)
            note_item(fp, &any, "%s: %ld row(s) at local times that do not "
                      "exist (the daylight-saving gap), taken as missing; "
                      "first on line %ld", s->path, rs->time_rejected,
                      rs->first_time_rejected_line);
        if (rs->unresolved > 0)
            note_item(fp, &any, "%s: %ld row(s) in a repeated daylight-saving "
                      "hour taken as the first occurrence; first on line %ld",
                      s->path, rs->unresolved, rs->first_unresolved_line);
    }
    if (any)
        fputs("</ul>\n", fp);
}

static void param_row(FILE *fp, const char *name, const char *unit,
                      const sw_html_report *r, int which)
{
    fprintf(fp, "<tr><th scope=\"row\">%s</th><td>%s</td>", name, unit);
    for (size_t g = 0; g < r->n_gates; g++) {
        const sw_site_gate *sg = &r->site->gates[g];
        const sw_gate *q = &sg->gate;
        int circle = q->shape == SW_SHAPE_CIRCLE;
        fputs("<td>", fp);
        switch (which) {
        case 0: esc(fp, sw_shape_name(q->shape)); break;
        case 1: fprintf(fp, "%.3f", q->hinge_level_m); break;
        case 2: fprintf(fp, "%.2f", q->inclination_deg); break;
        case 3: fprintf(fp, "%.3f", q->seal_top_m); break;
        case 4:
            if (circle)
                fputs("\xE2\x80\x93", fp);
            else
                fprintf(fp, "%.3f \xC3\x97 %.3f", q->seal_height_m,
                        q->seal_width_m);
            break;
        case 5:
            if (circle)
                fprintf(fp, "%.3f", q->diameter_m);
            else
                fputs("\xE2\x80\x93", fp);
            break;
        case 6: fprintf(fp, "%.3f", q->area_m2); break;
        case 7: fprintf(fp, "%.3f", q->leaf_length_m); break;
        case 8: fprintf(fp, "%.1f", q->mass_kg); break;
        case 9: fprintf(fp, "%.3f / %.3f", q->cg_along_m, q->cg_offset_m);
            break;
        case 10: fprintf(fp, "%.4f", q->volume_m3); break;
        case 11: fprintf(fp, "%.1f", q->extra_moment_Nm); break;
        case 12: fprintf(fp, "%.3f", q->sill_level_m); break;
        case 13: fprintf(fp, "%.3f", q->seal_top_level_m); break;
        case 14: fprintf(fp, "%.2f", q->required_fs); break;
        case 15: fputs(sw_fs_basis_phrase(q->fs_basis), fp); break;
        case 16: fprintf(fp, "%.1f", q->min_sill_reaction_N); break;
        case 17: fprintf(fp, "%.2f / %.2f", q->rho_kgm3[SW_UPSTREAM],
                         q->rho_kgm3[SW_DOWNSTREAM]);
            break;
        case 18: fprintf(fp, "%.5f", q->g_ms2); break;
        case 19: esc(fp, sg->headwater); break;
        default: esc(fp, sg->tailwater); break;
        }
        fputs("</td>", fp);
    }
    fputs("</tr>\n", fp);
}

/* Where every number came from: each series' file, column, unit, offset,
 * zone, rows, first and last time and the file's SHA-256; the site file,
 * the program, the command line and each gate's factor-of-safety basis. */
static void table_provenance(FILE *fp, const sw_html_report *r,
                             const sw_stepper *st, const sw_html_meta *meta)
{
    const sw_site *site = r->site;
    char a[64], b[64];

    fputs("<table id=\"table-provenance\">\n<thead><tr><th>series</th>"
          "<th>file</th><th>column</th><th>unit</th><th>offset (m)</th>"
          "<th>times without an offset</th><th>rows</th><th>first</th>"
          "<th>last</th><th>SHA-256 of the file</th></tr></thead>\n"
          "<tbody>\n", fp);
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_site_series *s = sw_stepper_series(st, i);
        const sw_reader_stats *rs = sw_stepper_reader_stats(st, i);
        series_cells(fp, s);
        fprintf(fp, "</td><td>%s</td><td>%.4f</td><td>",
                s->scale == 1.0 ? "m" : "ft (0.3048 m)", s->offset_m);
        esc(fp, site->zone != NULL ? sw_zone_name(site->zone)
                                   : "none (an error)");
        fprintf(fp, "</td><td>%ld</td>", rs->records);
        if (rs->records > 0 && rs->last_t >= rs->first_t) {
            when_text(a, sizeof a, rs->first_t, site->zone);
            when_text(b, sizeof b, rs->last_t, site->zone);
        } else {
            snprintf(a, sizeof a, "\xE2\x80\x93");
            snprintf(b, sizeof b, "\xE2\x80\x93");
        }
        fprintf(fp, "<td>%s</td><td>%s</td><td class=\"hash\">", a, b);
        esc(fp, meta->series_sha256 != NULL && meta->series_sha256[i] != NULL
                    ? meta->series_sha256[i]
                    : "\xE2\x80\x93");
        fputs("</td></tr>\n", fp);
    }
    fputs("</tbody>\n</table>\n<ul class=\"provenance\">\n<li>Site file ",
          fp);
    esc(fp, site->path);
    fputs(", SHA-256 <span class=\"hash\">", fp);
    esc(fp, meta->site_sha256);
    fputs("</span>.</li>\n<li>Program: sillwatch ", fp);
    esc(fp, meta->version);
    fputs(", page made ", fp);
    esc(fp, meta->generated);
    fputs(".</li>\n", fp);
    if (meta->command_line != NULL) {
        fputs("<li>Command line: <code>", fp);
        esc(fp, meta->command_line);
        fputs("</code></li>\n", fp);
    }
    fputs("<li>Factor of safety: ", fp);
    for (size_t g = 0; g < r->n_gates; g++) {
        const sw_gate *q = &site->gates[g].gate;
        escf(fp, "%sgate %s on the %s basis (%s), required %.2f",
             g > 0 ? "; " : "", q->name, sw_fs_basis_name(q->fs_basis),
             sw_fs_basis_phrase(q->fs_basis), q->required_fs);
    }
    fputs(".</li>\n</ul>\n", fp);
}

static void table_gates(FILE *fp, const sw_html_report *r)
{
    static const struct {
        const char *name, *unit;
    } rows[] = {
        {"shape", ""},
        {"hinge level", "m"},
        {"inclination from horizontal", "\xC2\xB0"},
        {"top of opening, from hinge along leaf", "m"},
        {"opening height \xC3\x97 width (rectangle)", "m"},
        {"opening diameter (circle)", "m"},
        {"sealed area", "m\xC2\xB2"},
        {"leaf length", "m"},
        {"mass", "kg"},
        {"centre of gravity: along / normal", "m"},
        {"displaced volume", "m\xC2\xB3"},
        {"extra moment (+ holds shut)", "N\xC2\xB7m"},
        {"sill level (derived)", "m"},
        {"top of opening level (derived)", "m"},
        {"required factor of safety", "\xE2\x80\x93"},
        {"factor-of-safety basis (fs_basis)", ""},
        {"least sill reaction", "N"},
        {"water density: upstream / downstream", "kg/m\xC2\xB3"},
        {"gravity", "m/s\xC2\xB2"},
        {"headwater series", ""},
        {"tailwater series", ""},
    };
    fputs("<table id=\"table-gates\" class=\"params\">\n<thead><tr>"
          "<th>parameter</th>"
          "<th>unit</th>", fp);
    for (size_t g = 0; g < r->n_gates; g++) {
        fputs("<th>", fp);
        esc(fp, r->site->gates[g].gate.name);
        fputs("</th>", fp);
    }
    fputs("</tr></thead>\n<tbody>\n", fp);
    for (int i = 0; i < (int)(sizeof rows / sizeof rows[0]); i++)
        param_row(fp, rows[i].name, rows[i].unit, r, i);
    fputs("</tbody>\n</table>\n", fp);
}

/* ---- the page ----------------------------------------------------------- */

static const char css[] =
    "body{font-family:\"DejaVu Sans\",Arial,Helvetica,sans-serif;"
    "color:#111;margin:1.5em auto;max-width:1000px;padding:0 1em;"
    "line-height:1.35}\n"
    "h1{font-size:1.5em;margin-bottom:0.2em}\n"
    "h2{font-size:1.15em;border-bottom:1px solid #888;margin-top:1.6em}\n"
    "h3{font-size:1em;margin:0.8em 0 0.2em}\n"
    ".meta{color:#333;font-size:0.9em;margin:0.2em 0}\n"
    ".caution{border:2px solid #000;padding:0.5em 0.8em;margin:1em 0;"
    "font-weight:bold}\n"
    ".verdict{font-size:1.05em;margin:0.4em 0}\n"
    "ul.verdict{padding-left:1.4em}\n"
    ".hash{font-family:\"DejaVu Sans Mono\",monospace;font-size:0.85em;"
    "word-break:break-all}\n"
    "code{font-family:\"DejaVu Sans Mono\",monospace;font-size:0.85em;"
    "word-break:break-all}\n"
    "ul.provenance{font-size:0.85em}\n"
    "table.signatures{width:100%;margin-top:1em}\n"
    "table.signatures td{height:2.4em;text-align:left}\n"
    "table.signatures th{text-align:left}\n"
    ".keep{break-inside:avoid;page-break-inside:avoid}\n"
    "h2,h3{break-after:avoid;page-break-after:avoid}\n"
    "table{border-collapse:collapse;font-size:0.8em;margin:0.5em 0;"
    "width:100%}\n"
    "th,td{border:1px solid #999;padding:0.2em 0.4em;text-align:right;"
    "vertical-align:top}\n"
    "th{background:#eee}\n"
    "td:first-child,th:first-child{text-align:left}\n"
    ".params td{text-align:right}\n"
    "tr.low td{background:#FBE3B4}\n"
    "tr.open td{background:#F0C4B0}\n"
    "svg{width:100%;height:auto;display:block}\n"
    "svg.defs{width:0;height:0;position:absolute}\n"
    "figure{margin:0.6em 0;break-inside:avoid;page-break-inside:avoid}\n"
    "figcaption{font-size:0.85em;color:#333}\n"
    ".envelopes{display:flex;flex-wrap:wrap;gap:1%;break-inside:avoid;"
    "page-break-inside:avoid}\n"
    ".envelopes figure{width:49%}\n"
    "text{font-family:\"DejaVu Sans\",Arial,Helvetica,sans-serif;"
    "fill:#111}\n"
    "text.tick{font-size:11px}\n"
    "text.axis{font-size:12px}\n"
    "text.legend{font-size:11px}\n"
    "text.barlabel{font-size:8px}\n"
    ".grid{stroke:#d0d0d0;stroke-width:0.6}\n"
    ".frame{fill:none;stroke:#333;stroke-width:1}\n"
    ".level{fill:none;stroke-width:1.6}\n"
    ".band{stroke:none;fill-opacity:0.45}\n"
    "text.cutnote{font-size:11px;paint-order:stroke;stroke:#FFFFFF;"
    "stroke-width:3}\n"
    ".halo{fill:none;stroke:#FFFFFF;stroke-width:4.5;stroke-opacity:0.9}\n"
    "line.ref{stroke:#555;stroke-width:0.8;stroke-dasharray:1 2}\n"
    "text.ref{font-size:10px;fill:#333}\n"
    ".qc-flag{fill:none;stroke-width:1.8}\n"
    ".crit-alarm{fill:none;stroke:#CC79A7;stroke-width:2;"
    "stroke-dasharray:7 4}\n"
    ".crit-open{fill:none;stroke:#000;stroke-width:1.6;"
    "stroke-dasharray:2 3}\n"
    ".fs{fill:none;stroke:#0072B2;stroke-width:1.2}\n"
    ".req{stroke:#000;stroke-width:1.2;stroke-dasharray:8 4}\n"
    ".one{stroke:#000;stroke-width:1;stroke-dasharray:2 3}\n"
    ".axis-break{fill:none;stroke:#000;stroke-width:1.4}\n"
    ".diag{stroke:#555;stroke-width:1;stroke-dasharray:4 3}\n"
    ".obs{fill:#111;fill-opacity:0.3;stroke:none}\n"
    "ul.rejects{font-size:0.85em;font-family:monospace}\n"
    "@media print{body{max-width:none;margin:0;padding:0;font-size:9.5pt}"
    "h1{margin-top:0}"
    "tr{break-inside:avoid}}\n";

/* The verdict in words, a line per gate: time below the margin and
 * open, the least factor of safety and when, time without data. */
static void write_verdict(FILE *fp, const sw_html_report *r,
                          const sw_stepper *st, sw_time_ms span)
{
    const sw_site *site = r->site;
    char h[48], o[48], when[64];
    int any = 0;

    for (size_t g = 0; g < r->n_gates; g++) {
        const sw_tally *t = sw_stepper_tally(st, g);
        any |= t->low + t->open > 0;
    }
    fputs(any ? "<p class=\"verdict\"><strong>Below the required margin"
                "</strong> at some time in the run:</p>\n"
              : "<p class=\"verdict\"><strong>Every gate held its required "
                "margin</strong> wherever its levels were known.</p>\n",
          fp);
    fputs("<ul class=\"verdict\">\n", fp);
    for (size_t g = 0; g < r->n_gates; g++) {
        const sw_tally *t = sw_stepper_tally(st, g);
        const sw_gate *q = &site->gates[g].gate;
        fputs("<li>", fp);
        escf(fp, "Gate %s: ", q->name);
        if (t->low + t->open > 0) {
            duration_text(h, sizeof h, t->low + t->open);
            escf(fp, "below the margin for %s", h);
            if (t->open > 0) {
                duration_text(o, sizeof o, t->open);
                escf(fp, ", of which open for %s", o);
            }
            escf(fp, " in %ld event%s", t->events, t->events == 1 ? "" : "s");
        } else {
            fputs("held its margin", fp);
        }
        if (t->evaluated > 0) {
            when_text(when, sizeof when, t->min_fs_t, site->zone);
            if (isinf(t->min_fs))
                escf(fp, "; least factor of safety %s", t->min_fs > 0
                     ? "infinite (the waters held it shut throughout)"
                     : "\xE2\x88\x92infinite");
            else
                escf(fp, "; least factor of safety %.2f (required %.2f) at "
                     "%s", t->min_fs, q->required_fs, when);
        }
        if (t->evaluated < span) {
            duration_text(h, sizeof h, span - t->evaluated);
            escf(fp, "; %s without level data, not counted as safe", h);
        }
        fputs(".</li>\n", fp);
    }
    fputs("</ul>\n", fp);
}

/* The signature block that closes a filed report. */
static void write_signatures(FILE *fp)
{
    fputs("<table id=\"table-signatures\" class=\"signatures\">\n"
          "<thead><tr><th>role</th><th>name</th><th>signature</th>"
          "<th>date</th></tr></thead>\n<tbody>\n", fp);
    static const char *const roles[] = {"prepared by", "checked by",
                                        "approved by"};
    for (size_t i = 0; i < sizeof roles / sizeof roles[0]; i++)
        fprintf(fp, "<tr><td>%s</td><td></td><td></td><td></td></tr>\n",
                roles[i]);
    fputs("</tbody>\n</table>\n", fp);
}

/* Printing: the page box, and on every page the site's name, the
 * generation time and "page N of M" (CSS page-margin boxes; a browser
 * without them prints the page plain). */
static void write_page_style(FILE *fp, const sw_html_report *r,
                             const sw_html_meta *meta)
{
    fputs("<style>\n@page{size:auto;margin:17mm 13mm 15mm 13mm;"
          "@top-left{content:\"", fp);
    css_string(fp, r->site->name);
    fputs("\";font:8pt \"DejaVu Sans\",Arial,sans-serif;color:#333}"
          "@top-right{content:\"season report, made ", fp);
    css_string(fp, meta->generated);
    fputs("\";font:8pt \"DejaVu Sans\",Arial,sans-serif;color:#333}"
          "@bottom-left{content:\"hydrostatic screening only; not a "
          "structural assessment\";font:7pt \"DejaVu Sans\",Arial,"
          "sans-serif;color:#333}"
          "@bottom-right{content:\"page \" counter(page) \" of \" "
          "counter(pages);font:8pt \"DejaVu Sans\",Arial,sans-serif;"
          "color:#333}}\n</style>\n", fp);
}

int sw_html_report_write(const sw_html_report *r, FILE *fp,
                         const sw_stepper *st, const sw_html_meta *meta,
                         sw_error *err)
{
    const sw_site *site = r->site;
    sw_time_ms t0, t1;
    char a[64], b[64], h[32];
    int rc;

    sw_stepper_span(st, &t0, &t1);
    fputs("<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" "
          "lang=\"en\" xml:lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
          "<meta name=\"viewport\" content=\"width=device-width\"/>\n"
          "<title>", fp);
    escf(fp, "Season report: %s", site->name);
    fprintf(fp, "</title>\n<style>\n%s</style>\n", css);
    write_page_style(fp, r, meta);
    fputs("</head>\n<body>\n", fp);
    svg_defs(fp);

    fputs("<h1>", fp);
    escf(fp, "Season report: %s", site->name);
    fputs("</h1>\n", fp);
    when_text(a, sizeof a, t0, site->zone);
    when_text(b, sizeof b, t1, site->zone);
    sw_report_hours_text(h, sizeof h, t1 - t0);
    fputs("<p class=\"meta\">", fp);
    escf(fp, "Replay from %s to %s (%s h), times in %s.", a, b, h,
         site->zone != NULL ? sw_zone_name(site->zone) : "UTC");
    fputs("</p>\n<p class=\"meta\">Site file ", fp);
    esc(fp, site->path);
    fputs(" (SHA-256 ", fp);
    esc(fp, meta->site_sha256);
    fputs("); made by sillwatch ", fp);
    esc(fp, meta->version);
    fputs(" on ", fp);
    esc(fp, meta->generated);
    fputs(".</p>\n", fp);

    write_verdict(fp, r, st, t1 - t0);
    fputs("<p class=\"caution\">", fp);
    put_caution(fp, meta->caution);
    fputs("</p>\n", fp);

    fputs("<div class=\"keep\"><h2 id=\"summary\">Summary</h2>\n", fp);
    table_summary(fp, r, st);
    fputs("</div>\n", fp);

    fputs("<div class=\"keep\"><h2 id=\"levels\">Levels and critical "
          "tailwaters</h2>\n<figure>\n", fp);
    chart_levels(fp, r, t1);
    fputs("<figcaption>The levels as the gates saw them (interpolated "
          "between readings up to max_gap apart, broken across gaps), with "
          "the governing critical tailwaters at each moment's headwater: "
          "tw_alarm, the least tailwater at which every gate on that "
          "tailwater holds its required margin, and tw_open, the least at "
          "which none opens. Where a trace is not drawn, no tailwater is "
          "needed at that headwater. Each drawn column keeps its least and "
          "greatest value.</figcaption>\n</figure>\n</div>\n", fp);

    for (size_t g = 0; g < r->n_drawn; g++) {
        if ((rc = sw_cancel_check(err)) != SW_OK)
            return rc;
        /* the heading (and the note on undrawn gates) stays with the
         * first chart */
        if (g == 0) {
            fputs("<div class=\"keep\"><h2 id=\"fs\">Factor of safety "
                  "per gate</h2>\n", fp);
            if (r->n_drawn < r->n_gates)
                fprintf(fp, "<p class=\"meta\">The site has %zu gates: the "
                            "charts show the first %zu (factor of safety, "
                            "envelope, hours by month); every gate is in the "
                            "tables, and in the CSV files.</p>\n",
                        r->n_gates, r->n_drawn);
        }
        fputs("<figure>\n", fp);
        chart_fs(fp, r, g, t1);
        fputs("<figcaption>", fp);
        const sw_gate *q = &site->gates[g].gate;
        escf(fp, "Gate %s: the factor of safety on the %s basis (%s) "
             "against its required value. Shaded: periods below the margin "
             "(a column is shaded when any part of it was, so no event is "
             "lost in drawing) and periods without level data.",
             q->name, sw_fs_basis_name(q->fs_basis),
             q->fs_basis == SW_FS_OVERTURNING
                 ? "resisting over opening moment about the hinge, the "
                   "tailwater counted as resisting"
                 : "the leaf's own restraint over the net water moment, "
                   "headwater less tailwater; infinite where the waters "
                   "together hold the leaf shut");
        fputs(g == 0 ? "</figcaption>\n</figure>\n</div>\n"
                     : "</figcaption>\n</figure>\n", fp);
    }

    /* two envelopes a row, each row kept whole, the heading with the
     * first */
    for (size_t g = 0; g < r->n_drawn; g++) {
        if (g == 0)
            fputs("<div class=\"keep\"><h2 id=\"envelope\">Operating "
                  "envelopes</h2>\n", fp);
        if (g % 2 == 0)
            fputs("<div class=\"envelopes\">\n", fp);
        fputs("<figure>\n", fp);
        if ((rc = sw_cancel_check(err)) != SW_OK ||
            (rc = chart_envelope(fp, r, g, err)) != SW_OK)
            return rc;
        fputs("<figcaption>", fp);
        escf(fp, "Gate %s: its state over headwater and tailwater, with the "
             "level pairs observed in the run.", site->gates[g].gate.name);
        fputs("</figcaption>\n</figure>\n", fp);
        if (g % 2 == 1 || g + 1 == r->n_drawn)
            fputs(g < 2 ? "</div>\n</div>\n" : "</div>\n", fp);
    }

    fputs("<div class=\"keep\"><h2 id=\"months\">Hours below margin by "
          "month</h2>\n<figure>\n", fp);
    chart_months(fp, r);
    fputs("<figcaption>Hours below the required margin (low or open) per "
          "gate and calendar month in the site's time zone; the hatched "
          "part is the time open.</figcaption>\n</figure>\n</div>\n", fp);

    fputs("<div class=\"keep\"><h2 id=\"events\">The ten worst events</h2>\n",
          fp);
    fputs("<p>Ranked open before low, then by the least factor of safety, "
          "then by length. The whole list is in events.csv.</p>\n", fp);
    table_worst(fp, r);
    fputs("</div>\n", fp);

    fputs("<div class=\"keep\"><h2 id=\"quality\">Data quality</h2>\n", fp);
    table_quality(fp, r, st);
    fputs("</div>\n", fp);

    fputs("<div class=\"keep\"><h2 id=\"gates\">Gate parameters</h2>\n", fp);
    table_gates(fp, r);
    fputs("</div>\n", fp);

    fputs("<div class=\"keep\"><h2 id=\"provenance\">Provenance</h2>\n",
          fp);
    table_provenance(fp, r, st, meta);
    fputs("</div>\n", fp);

    fputs("<div class=\"keep\"><h2 id=\"caution\">Caution and sign-off"
          "</h2>\n<p>", fp);
    put_caution(fp, meta->caution);
    fputs(" The model is hydrostatic: still water on both faces of a rigid "
          "leaf hinged at its top, loads from the water's weight alone; no "
          "waves, surges of flow, impact, debris or ice loads, no hinge or "
          "seal friction, and no check of the leaf, the hinge, the seal or "
          "the structure. A result of ok is not a statement that the gate "
          "is safe.</p>\n", fp);
    write_signatures(fp);
    fputs("</div>\n</body>\n</html>\n", fp);
    return SW_OK;
}
