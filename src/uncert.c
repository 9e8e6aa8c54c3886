/* sillwatch: uncertain parameters, their draws and their statistics (see
 * include/sillwatch/uncert.h). */
#include "sillwatch/uncert.h"

#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "sillwatch/ensemble.h"
#include "sillwatch/water.h"

/* A truncated normal keeps at least 0.1 % of its draws (the site file's
 * check, site.c check_sd()), so a million misses in a row cannot happen
 * short of a bug. */
#define MAX_MISSES 1000000L

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory for the uncertainty draws");
}

/* ---- the parameters -------------------------------------------------------- */

static int add_param(sw_uncert *u, size_t *cap, const sw_uncert_param *p,
                     sw_error *err)
{
    if (u->n_params == *cap) {
        size_t n = *cap ? 2 * *cap : 16;
        sw_uncert_param *grown = realloc(u->params, n * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        u->params = grown;
        *cap = n;
    }
    u->params[u->n_params++] = *p;
    return SW_OK;
}

static sw_uncert_param param(sw_uncert_kind kind, size_t index, int key,
                             double mean, double sd, double lo, double hi,
                             int lo_open, int hi_open, const char *unit)
{
    sw_uncert_param p;
    memset(&p, 0, sizeof p);
    p.kind = kind;
    p.index = index;
    p.key = key;
    p.mean = mean;
    p.sd = sd;
    p.lo = lo;
    p.hi = hi;
    p.lo_open = lo_open;
    p.hi_open = hi_open;
    p.unit = unit;
    return p;
}

/* The uncertain keys of the two waters, in draw order. */
static int water_params(sw_uncert *u, size_t *cap, sw_error *err)
{
    for (int side = 0; side < 2; side++) {
        const sw_site_water *w = &u->site->water[side];
        const char *sname = sw_side_name((sw_side)side);
        sw_uncert_param p;
        int rc;
        if (!w->from_temperature && w->density_sd_kgm3 > 0.0) {
            p = param(SW_UNCERT_DENSITY, (size_t)side, 0, w->rho_kgm3,
                      w->density_sd_kgm3, SW_WATER_RHO_MIN_KGM3,
                      SW_WATER_RHO_MAX_KGM3, 0, 0, "kg/m^3");
            snprintf(p.name, sizeof p.name, "water %s: density", sname);
            if ((rc = add_param(u, cap, &p, err)) != SW_OK)
                return rc;
        }
        if (w->from_temperature && w->temperature_sd_C > 0.0) {
            p = param(SW_UNCERT_TEMPERATURE, (size_t)side, 0,
                      w->temperature_C, w->temperature_sd_C,
                      SW_WATER_T_MIN_C, SW_WATER_T_MAX_C, 0, 0,
                      "degrees C");
            snprintf(p.name, sizeof p.name, "water %s: temperature", sname);
            if ((rc = add_param(u, cap, &p, err)) != SW_OK)
                return rc;
        }
        if (w->from_temperature && w->salinity_sd > 0.0) {
            p = param(SW_UNCERT_SALINITY, (size_t)side, 0, w->salinity,
                      w->salinity_sd, SW_WATER_S_MIN, SW_WATER_S_MAX, 0, 0,
                      "");
            snprintf(p.name, sizeof p.name, "water %s: salinity", sname);
            if ((rc = add_param(u, cap, &p, err)) != SW_OK)
                return rc;
        }
    }
    return SW_OK;
}

int sw_uncert_init(sw_uncert *u, const sw_site *site, uint64_t seed,
                   sw_error *err)
{
    size_t cap = 0;
    int rc;

    memset(u, 0, sizeof *u);
    u->site = site;
    u->seed = seed;
    if ((rc = water_params(u, &cap, err)) != SW_OK)
        goto fail;
    for (size_t i = 0; i < site->n_series; i++) {
        const sw_site_series *sr = &site->series[i];
        sw_uncert_param p;
        if (!(sr->offset_sd_m > 0.0))
            continue;
        p = param(SW_UNCERT_OFFSET, i, 0, sr->offset_m, sr->offset_sd_m,
                  -SW_SITE_OFFSET_MAX_M, SW_SITE_OFFSET_MAX_M, 0, 0, "m");
        snprintf(p.name, sizeof p.name, "series %.63s: offset", sr->name);
        if ((rc = add_param(u, &cap, &p, err)) != SW_OK)
            goto fail;
    }
    for (size_t g = 0; g < site->n_gates; g++) {
        const sw_site_gate *sg = &site->gates[g];
        for (int q = 0; q < SW_GATE_N_PARAMS; q++) {
            sw_uncert_param p;
            double lo, hi;
            int lo_open, hi_open;
            if (!(sg->sd[q] > 0.0) || isnan(sg->value[q]))
                continue;
            sw_gate_param_range((sw_gate_param)q, &lo, &hi, &lo_open,
                                &hi_open);
            p = param(SW_UNCERT_GATE, g, q, sg->value[q], sg->sd[q], lo, hi,
                      lo_open, hi_open, sw_gate_param_unit((sw_gate_param)q));
            snprintf(p.name, sizeof p.name, "gate %.63s: %s", sg->gate.name,
                     sw_gate_param_key((sw_gate_param)q));
            if ((rc = add_param(u, &cap, &p, err)) != SW_OK)
                goto fail;
        }
    }
    return SW_OK;
fail:
    sw_uncert_fini(u);
    return rc;
}

void sw_uncert_fini(sw_uncert *u)
{
    if (u == NULL)
        return;
    free(u->params);
    memset(u, 0, sizeof *u);
}

int sw_uncert_affects(const sw_uncert *u, size_t i, size_t g)
{
    const sw_uncert_param *p = &u->params[i];
    const sw_site_gate *sg = &u->site->gates[g];
    const char *name;

    switch (p->kind) {
    case SW_UNCERT_GATE:
        return p->index == g;
    case SW_UNCERT_OFFSET:
        name = u->site->series[p->index].name;
        return strcmp(sg->headwater, name) == 0 ||
               strcmp(sg->tailwater, name) == 0;
    default:
        return 1; /* a water acts on every gate */
    }
}

/* ---- streams --------------------------------------------------------------- */

/* The finalizer of SplitMix64 (Steele, Lea and Flood, "Fast splittable
 * pseudorandom number generators", OOPSLA 2014): spreads the bits of the
 * run's seed, so that seeds 1 and 2 start far apart. */
static uint64_t mix64(uint64_t z)
{
    z += 0x9E3779B97F4A7C15ULL;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

unsigned long sw_uncert_stream_seed(uint64_t seed, size_t k)
{
    /* k -> c + k A (mod 2^32 - 1) is one-to-one on 0 .. 2^32 - 2, since
     * A = 2654435761 is a prime that does not divide 2^32 - 1 = 3 * 5 *
     * 17 * 257 * 65537; + 1 keeps 0 (which GSL's MT19937 reads as 4357)
     * out.  A spreads neighbouring samples over the seeds. */
    const uint64_t m = 0xFFFFFFFFULL, a = 2654435761ULL;
    uint64_t c = mix64(seed) % m;
    uint64_t kk = (uint64_t)k % m;
    return (unsigned long)(1 + (c + kk * a % m) % m);
}

/* ---- draws ------------------------------------------------------------------ */

int sw_uncert_sample_alloc(sw_uncert_sample **out, const sw_uncert *u,
                           sw_error *err)
{
    const sw_site *site = u->site;
    sw_uncert_sample *s = calloc(1, sizeof *s);

    *out = NULL;
    if (s == NULL)
        return nomem(err);
    s->value = calloc(u->n_params + 1, sizeof *s->value);
    s->gates = calloc(site->n_gates + 1, sizeof *s->gates);
    s->shift_m = calloc(site->n_series + 1, sizeof *s->shift_m);
    s->rng = gsl_rng_alloc(gsl_rng_mt19937);
    if (s->value == NULL || s->gates == NULL || s->shift_m == NULL ||
        s->rng == NULL) {
        sw_uncert_sample_free(s);
        return nomem(err);
    }
    *out = s;
    return SW_OK;
}

void sw_uncert_sample_free(sw_uncert_sample *s)
{
    if (s == NULL)
        return;
    free(s->value);
    free(s->gates);
    free(s->shift_m);
    if (s->rng != NULL)
        gsl_rng_free(s->rng);
    free(s);
}

static int inside(const sw_uncert_param *p, double x)
{
    return (p->lo_open ? x > p->lo : x >= p->lo) &&
           (p->hi_open ? x < p->hi : x <= p->hi);
}

/* A normal draw truncated to the parameter's range by rejection: a draw
 * outside is drawn again, which leaves the normal's shape inside. */
static int draw_one(gsl_rng *r, const sw_uncert_param *p, double *x,
                    sw_error *err)
{
    for (long miss = 0; miss < MAX_MISSES; miss++) {
        double v = p->mean + gsl_ran_gaussian(r, p->sd);
        if (inside(p, v)) {
            *x = v;
            return SW_OK;
        }
    }
    return sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                        "%s: no draw within its range in %ld tries; please "
                        "report this",
                        p->name, MAX_MISSES);
}

/* The waters' drawn densities; *i moves past their parameters. */
static int draw_waters(const sw_uncert *u, sw_uncert_sample *s, size_t *i,
                       int *any, sw_error *err)
{
    const sw_site *site = u->site;
    int rc;

    *any = 0;
    for (int side = 0; side < 2; side++) {
        const sw_site_water *w = &site->water[side];
        double t = w->temperature_C, sal = w->salinity;
        int from_ts = 0;
        s->rho_kgm3[side] = w->rho_kgm3;
        while (*i < u->n_params && u->params[*i].kind != SW_UNCERT_GATE &&
               u->params[*i].kind != SW_UNCERT_OFFSET &&
               u->params[*i].index == (size_t)side) {
            const sw_uncert_param *p = &u->params[*i];
            double x;
            if ((rc = draw_one(s->rng, p, &x, err)) != SW_OK)
                return rc;
            s->value[(*i)++] = x;
            *any = 1;
            if (p->kind == SW_UNCERT_DENSITY)
                s->rho_kgm3[side] = x;
            else if (p->kind == SW_UNCERT_TEMPERATURE)
                t = x, from_ts = 1;
            else
                sal = x, from_ts = 1;
        }
        /* the density from drawn temperature and salinity, through the
         * same equation of state as the site file's (water.h) */
        if (from_ts &&
            (rc = sw_water_density(t, sal, &s->rho_kgm3[side], err)) !=
                SW_OK)
            return rc;
    }
    return SW_OK;
}

/* Gate g's parameters from index *i on: drawn and made into a gate,
 * drawn again whole while the gate breaks a rule between its keys. */
static int draw_gate(const sw_uncert *u, sw_uncert_sample *s, size_t g,
                     size_t *i, int waters_drawn, sw_error *err)
{
    const sw_site_gate *sg = &u->site->gates[g];
    size_t first = *i, end = *i;
    double v[SW_GATE_N_PARAMS];
    const char *bad_key = NULL;
    int rc;

    while (end < u->n_params && u->params[end].kind == SW_UNCERT_GATE &&
           u->params[end].index == g)
        end++;
    *i = end;
    if (first == end && !waters_drawn) {
        s->gates[g] = sg->gate;
        return SW_OK;
    }
    for (long tries = 0; tries < SW_UNCERT_MAX_REDRAWS; tries++) {
        memcpy(v, sg->value, sizeof v);
        for (size_t j = first; j < end; j++) {
            if ((rc = draw_one(s->rng, &u->params[j], &s->value[j], err)) !=
                SW_OK)
                return rc;
            v[u->params[j].key] = s->value[j];
        }
        rc = sw_site_gate_build(sg, v, s->rho_kgm3, &s->gates[g], &bad_key,
                                err);
        if (rc == SW_OK)
            return SW_OK;
        if (first == end)
            break; /* nothing of the gate's own to draw again */
    }
    {
        char why[SW_ERROR_MSG_MAX];
        snprintf(why, sizeof why, "%s", err != NULL ? err->message : "");
        return sw_error_set(err, SW_ESITE, u->site->path, sg->line, 0,
                            "gate '%s': %d draws of its uncertain keys in a "
                            "row broke a rule between them (last: %s): "
                            "give smaller standard uncertainties (X_sd)",
                            sg->gate.name, SW_UNCERT_MAX_REDRAWS, why);
    }
}

int sw_uncert_draw(const sw_uncert *u, size_t k, sw_uncert_sample *s,
                   sw_error *err)
{
    const sw_site *site = u->site;
    size_t i = 0;
    int waters = 0, rc;

    s->k = k;
    gsl_rng_set(s->rng, sw_uncert_stream_seed(u->seed, k));
    if ((rc = draw_waters(u, s, &i, &waters, err)) != SW_OK)
        return rc;
    for (size_t j = 0; j < site->n_series; j++) {
        s->shift_m[j] = 0.0;
        if (i < u->n_params && u->params[i].kind == SW_UNCERT_OFFSET &&
            u->params[i].index == j) {
            if ((rc = draw_one(s->rng, &u->params[i], &s->value[i], err)) !=
                SW_OK)
                return rc;
            s->shift_m[j] = s->value[i] - u->params[i].mean;
            i++;
        }
    }
    for (size_t g = 0; g < site->n_gates; g++)
        if ((rc = draw_gate(u, s, g, &i, waters, err)) != SW_OK)
            return rc;
    return SW_OK;
}

static double series_shift(const sw_uncert *u, const sw_uncert_sample *s,
                           const char *name)
{
    if (name[0] == '\0')
        return 0.0;
    for (size_t j = 0; j < u->site->n_series; j++)
        if (strcmp(u->site->series[j].name, name) == 0)
            return s->shift_m[j];
    return 0.0;
}

void sw_uncert_gate_shifts(const sw_uncert *u, const sw_uncert_sample *s,
                           size_t g, double *dhw_m, double *dtw_m)
{
    const sw_site_gate *sg = &u->site->gates[g];
    *dhw_m = series_shift(u, s, sg->headwater);
    *dtw_m = series_shift(u, s, sg->tailwater);
}

int sw_uncert_site(const sw_uncert *u, const sw_uncert_sample *s,
                   sw_site *out, sw_error *err)
{
    const sw_site *site = u->site;

    *out = *site;
    out->gates = calloc(site->n_gates + 1, sizeof *out->gates);
    out->series = calloc(site->n_series + 1, sizeof *out->series);
    if (out->gates == NULL || out->series == NULL) {
        sw_uncert_site_fini(out);
        return nomem(err);
    }
    for (size_t g = 0; g < site->n_gates; g++) {
        out->gates[g] = site->gates[g];
        out->gates[g].gate = s->gates[g];
    }
    for (size_t j = 0; j < site->n_series; j++) {
        sw_site_series *sr = &out->series[j];
        *sr = site->series[j];
        sr->offset_m += s->shift_m[j];
        /* valid_range is in m above the datum: moved with it, the range
         * test flags the same readings in every sample */
        if (sr->qc.range_set) {
            sr->qc.range_lo_m += s->shift_m[j];
            sr->qc.range_hi_m += s->shift_m[j];
        }
    }
    return SW_OK;
}

void sw_uncert_site_fini(sw_site *site)
{
    if (site == NULL)
        return;
    /* the zone is the original site's */
    free(site->gates);
    free(site->series);
    memset(site, 0, sizeof *site);
}

/* ---- statistics ---------------------------------------------------------------- */

void sw_uncert_proportion(size_t count, size_t n, double *p, double *se)
{
    *p = (double)count / (double)n;
    *se = sqrt(*p * (1.0 - *p) / (double)n);
}

double sw_uncert_crit_quantile(double *v, size_t n, double p, int up_safe)
{
    double q = sw_quantile(v, n, p); /* sorts v */
    if (!up_safe || !(isinf(q) && q < 0))
        return q;
    /* the quantile lies between order statistics lo and lo + 1
     * (definition 7: h = (n - 1) p); when lo is "not a level" and lo + 1
     * a level, the level is the safe side */
    double h = (double)(n - 1) * p;
    size_t lo = (size_t)floor(h);
    if (h > (double)lo && lo + 1 < n && isfinite(v[lo + 1]))
        return v[lo + 1];
    return q;
}

int sw_uncert_corr_init(sw_uncert_corr *c, size_t m, sw_error *err)
{
    memset(c, 0, sizeof *c);
    c->m = m;
    c->mean_x = calloc(m + 1, sizeof *c->mean_x);
    c->cxx = calloc(m + 1, sizeof *c->cxx);
    c->cxy = calloc(m + 1, sizeof *c->cxy);
    if (c->mean_x == NULL || c->cxx == NULL || c->cxy == NULL) {
        sw_uncert_corr_fini(c);
        return nomem(err);
    }
    return SW_OK;
}

void sw_uncert_corr_fini(sw_uncert_corr *c)
{
    if (c == NULL)
        return;
    free(c->mean_x);
    free(c->cxx);
    free(c->cxy);
    memset(c, 0, sizeof *c);
}

/* Welford's one-pass updates (Welford 1962, Technometrics 4(3)): with the
 * new means, C_xy += (x - old mean_x)(y - new mean_y). */
void sw_uncert_corr_add(sw_uncert_corr *c, const double *x, double y)
{
    c->n += 1.0;
    double dy = y - c->mean_y;
    c->mean_y += dy / c->n;
    for (size_t i = 0; i < c->m; i++) {
        double dx = x[i] - c->mean_x[i];
        c->mean_x[i] += dx / c->n;
        c->cxy[i] += dx * (y - c->mean_y);
        c->cxx[i] += dx * (x[i] - c->mean_x[i]);
    }
    c->cyy += dy * (y - c->mean_y);
}

double sw_uncert_corr_shares(const sw_uncert_corr *c, double *r2,
                             double *share)
{
    double sum = 0.0;
    for (size_t i = 0; i < c->m; i++) {
        double v = 0.0;
        if (c->cxx[i] > 0.0 && c->cyy > 0.0)
            v = c->cxy[i] * c->cxy[i] / (c->cxx[i] * c->cyy);
        if (v > 1.0)
            v = 1.0; /* rounding */
        if (r2 != NULL)
            r2[i] = v;
        sum += v;
    }
    for (size_t i = 0; share != NULL && i < c->m; i++) {
        double v = 0.0;
        if (c->cxx[i] > 0.0 && c->cyy > 0.0)
            v = fmin(1.0, c->cxy[i] * c->cxy[i] / (c->cxx[i] * c->cyy));
        share[i] = sum > 0.0 ? v / sum : 0.0;
    }
    return sum;
}

/* ---- workers ------------------------------------------------------------------- */

typedef struct chunk {
    size_t begin, end;
    unsigned worker;
    sw_uncert_chunk_fn fn;
    void *ctx;
    int rc;
    sw_error err;
} chunk;

static void *run_chunk(void *arg)
{
    chunk *c = arg;
    sw_error_clear(&c->err);
    c->rc = c->begin < c->end
                ? c->fn(c->begin, c->end, c->worker, c->ctx, &c->err)
                : SW_OK;
    return NULL;
}

int sw_uncert_parallel(size_t n, unsigned workers, sw_uncert_chunk_fn fn,
                       void *ctx, sw_error *err)
{
    enum { MAX_WORKERS = 64 };
    chunk c[MAX_WORKERS];
    pthread_t th[MAX_WORKERS];
    int started[MAX_WORKERS];
    int rc = SW_OK;

    if (workers < 1)
        workers = 1;
    if (workers > MAX_WORKERS)
        workers = MAX_WORKERS;
    if ((size_t)workers > n)
        workers = n > 0 ? (unsigned)n : 1;
    for (unsigned w = 0; w < workers; w++) {
        c[w].begin = n * w / workers;
        c[w].end = n * (w + 1) / workers;
        c[w].worker = w;
        c[w].fn = fn;
        c[w].ctx = ctx;
        c[w].rc = SW_OK;
        started[w] = 0;
    }
    for (unsigned w = 1; w < workers; w++) {
        if (pthread_create(&th[w], NULL, run_chunk, &c[w]) != 0) {
            c[w].rc = sw_error_set(&c[w].err, SW_ENOMEM, NULL, 0, 0,
                                   "cannot start a worker thread");
            continue;
        }
        started[w] = 1;
    }
    run_chunk(&c[0]);
    for (unsigned w = 1; w < workers; w++)
        if (started[w])
            pthread_join(th[w], NULL);
    for (unsigned w = 0; w < workers; w++)
        if (c[w].rc != SW_OK) {
            rc = c[w].rc;
            if (err != NULL)
                *err = c[w].err;
            break;
        }
    return rc;
}

/* ---- one pair of levels (point) --------------------------------------------- */

const double sw_uncert_pctl[SW_UNCERT_N_PCTL] = {0.05, 0.5, 0.95};

/* What one sample gives for one gate. */
enum { PT_FS, PT_NET, PT_TW_ALARM, PT_TW_OPEN, PT_N };

typedef struct point_job {
    const sw_uncert *u;
    double hw_m, tw_m;
    size_t n, n_wanted;
    const size_t *gates;    /* [n_wanted] */
    double *res;            /* [n][n_wanted][PT_N] */
    unsigned char *state;   /* [n][n_wanted] */
    double *x;              /* [n][n_params] */
} point_job;

static int point_chunk(size_t begin, size_t end, unsigned worker, void *ctx,
                       sw_error *err)
{
    point_job *j = ctx;
    const sw_uncert *u = j->u;
    sw_uncert_sample *s = NULL;
    int rc;
    (void)worker;

    if ((rc = sw_uncert_sample_alloc(&s, u, err)) != SW_OK)
        return rc;
    for (size_t k = begin; k < end && rc == SW_OK; k++) {
        if ((rc = sw_uncert_draw(u, k, s, err)) != SW_OK)
            break;
        memcpy(j->x + k * u->n_params, s->value,
               u->n_params * sizeof *s->value);
        for (size_t w = 0; w < j->n_wanted && rc == SW_OK; w++) {
            size_t g = j->gates[w];
            const sw_gate *gate = &s->gates[g];
            double dhw, dtw, *r = j->res + (k * j->n_wanted + w) * PT_N;
            sw_gate_result gr;
            sw_crit alarm, open;
            sw_uncert_gate_shifts(u, s, g, &dhw, &dtw);
            sw_gate_evaluate(gate, j->hw_m + dhw, j->tw_m + dtw, &gr);
            if ((rc = sw_gate_critical_tailwater(gate, j->hw_m + dhw,
                                                 SW_LIMIT_ALARM, &alarm,
                                                 err)) != SW_OK ||
                (rc = sw_gate_critical_tailwater(gate, j->hw_m + dhw,
                                                 SW_LIMIT_OPEN, &open,
                                                 err)) != SW_OK)
                break;
            j->state[k * j->n_wanted + w] = (unsigned char)gr.state;
            r[PT_FS] = gr.fs;
            r[PT_NET] = gr.net_moment_Nm;
            /* as the tailwater gauge shows it: less the datum's shift */
            r[PT_TW_ALARM] = alarm.kind == SW_CRIT_LEVEL ? alarm.level_m - dtw
                                                         : -INFINITY;
            r[PT_TW_OPEN] = open.kind == SW_CRIT_LEVEL ? open.level_m - dtw
                                                       : -INFINITY;
        }
    }
    sw_uncert_sample_free(s);
    return rc;
}

/* The statistics of gate slot w from the samples of job j, into *o. */
static int point_stats(const point_job *j, size_t w, double *col,
                       sw_uncert_point *o, sw_error *err)
{
    const sw_uncert *u = j->u;
    size_t n = j->n, g = j->gates[w];
    sw_uncert_corr c;
    double *xs = NULL;
    int rc;

    o->gate = g;
    o->n = n;
    for (size_t k = 0; k < n; k++) {
        unsigned char st = j->state[k * j->n_wanted + w];
        o->n_open += st == SW_STATE_OPEN;
        o->n_low += st == SW_STATE_LOW;
    }
    sw_uncert_proportion(o->n_open, n, &o->p_open, &o->p_open_se);
    sw_uncert_proportion(o->n_low, n, &o->p_low, &o->p_low_se);
    sw_uncert_proportion(o->n_open + o->n_low, n, &o->p_below,
                         &o->p_below_se);
    for (int q = 0; q < PT_N; q++) {
        double *dst = q == PT_FS    ? o->fs
                      : q == PT_NET ? o->net_moment_Nm
                      : q == PT_TW_ALARM ? o->tw_alarm_m
                                         : o->tw_open_m;
        for (int p = 0; p < SW_UNCERT_N_PCTL; p++) {
            for (size_t k = 0; k < n; k++)
                col[k] = j->res[(k * j->n_wanted + w) * PT_N + (size_t)q];
            dst[p] = q >= PT_TW_ALARM
                         ? sw_uncert_crit_quantile(col, n, sw_uncert_pctl[p],
                                                   1)
                         : sw_quantile(col, n, sw_uncert_pctl[p]);
        }
    }

    /* the sensitivity of the net moment, in sample order */
    for (size_t i = 0; i < u->n_params; i++)
        o->n_shares += (size_t)sw_uncert_affects(u, i, g);
    o->param = calloc(o->n_shares + 1, sizeof *o->param);
    o->r2 = calloc(o->n_shares + 1, sizeof *o->r2);
    o->share = calloc(o->n_shares + 1, sizeof *o->share);
    xs = calloc(o->n_shares + 1, sizeof *xs);
    if (o->param == NULL || o->r2 == NULL || o->share == NULL || xs == NULL) {
        free(xs);
        return nomem(err);
    }
    for (size_t i = 0, m = 0; i < u->n_params; i++)
        if (sw_uncert_affects(u, i, g))
            o->param[m++] = i;
    if ((rc = sw_uncert_corr_init(&c, o->n_shares, err)) != SW_OK) {
        free(xs);
        return rc;
    }
    for (size_t k = 0; k < n; k++) {
        for (size_t m = 0; m < o->n_shares; m++)
            xs[m] = j->x[k * u->n_params + o->param[m]];
        sw_uncert_corr_add(&c, xs,
                           j->res[(k * j->n_wanted + w) * PT_N + PT_NET]);
    }
    o->r2_sum = sw_uncert_corr_shares(&c, o->r2, o->share);
    sw_uncert_corr_fini(&c);
    free(xs);
    return SW_OK;
}

int sw_uncert_point_run(const sw_uncert *u, double hw_m, double tw_m,
                        size_t n_samples, const int *wanted, unsigned workers,
                        sw_uncert_point *out, sw_error *err)
{
    const sw_site *site = u->site;
    point_job j;
    size_t *gates = NULL;
    double *col = NULL;
    int rc = SW_OK;

    memset(out, 0, site->n_gates * sizeof *out);
    if (n_samples < 1 || n_samples > SW_UNCERT_MAX_SAMPLES)
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "the number of samples must be 1 to %d, not %zu",
                            SW_UNCERT_MAX_SAMPLES, n_samples);
    memset(&j, 0, sizeof j);
    j.u = u;
    j.hw_m = hw_m;
    j.tw_m = tw_m;
    j.n = n_samples;
    gates = calloc(site->n_gates + 1, sizeof *gates);
    if (gates == NULL)
        return nomem(err);
    for (size_t g = 0; g < site->n_gates; g++)
        if (wanted == NULL || wanted[g])
            gates[j.n_wanted++] = g;
    j.gates = gates;
    j.res = calloc(n_samples * j.n_wanted * PT_N + 1, sizeof *j.res);
    j.state = calloc(n_samples * j.n_wanted + 1, sizeof *j.state);
    j.x = calloc(n_samples * u->n_params + 1, sizeof *j.x);
    col = calloc(n_samples, sizeof *col);
    if (j.res == NULL || j.state == NULL || j.x == NULL || col == NULL) {
        rc = nomem(err);
        goto cleanup;
    }
    if ((rc = sw_uncert_parallel(n_samples, workers, point_chunk, &j, err)) !=
        SW_OK)
        goto cleanup;
    for (size_t w = 0; w < j.n_wanted && rc == SW_OK; w++)
        rc = point_stats(&j, w, col, &out[gates[w]], err);
cleanup:
    if (rc != SW_OK)
        sw_uncert_point_fini(out, site->n_gates);
    free(gates);
    free(j.res);
    free(j.state);
    free(j.x);
    free(col);
    return rc;
}

void sw_uncert_point_fini(sw_uncert_point *out, size_t n_gates)
{
    for (size_t g = 0; out != NULL && g < n_gates; g++) {
        free(out[g].param);
        free(out[g].r2);
        free(out[g].share);
        memset(&out[g], 0, sizeof out[g]);
    }
}

void sw_uncert_point_order(const sw_uncert_point *pt, size_t *order)
{
    /* insertion sort: a handful of parameters, and stable */
    for (size_t i = 0; i < pt->n_shares; i++) {
        size_t j = i;
        while (j > 0 && pt->share[order[j - 1]] < pt->share[i]) {
            order[j] = order[j - 1];
            j--;
        }
        order[j] = i;
    }
}

/* ---- many samples' gates ------------------------------------------------------ */

typedef struct gates_job {
    const sw_uncert *u;
    const size_t *gates;
    size_t n_gates;
    sw_gate *out;
    double *dhw, *dtw;
} gates_job;

static int gates_chunk(size_t begin, size_t end, unsigned worker, void *ctx,
                       sw_error *err)
{
    gates_job *j = ctx;
    sw_uncert_sample *s = NULL;
    int rc;
    (void)worker;

    if ((rc = sw_uncert_sample_alloc(&s, j->u, err)) != SW_OK)
        return rc;
    for (size_t k = begin; k < end; k++) {
        if ((rc = sw_uncert_draw(j->u, k, s, err)) != SW_OK)
            break;
        for (size_t i = 0; i < j->n_gates; i++) {
            size_t at = k * j->n_gates + i;
            j->out[at] = s->gates[j->gates[i]];
            sw_uncert_gate_shifts(j->u, s, j->gates[i], &j->dhw[at],
                                  &j->dtw[at]);
        }
    }
    sw_uncert_sample_free(s);
    return rc;
}

int sw_uncert_draw_gates(const sw_uncert *u, size_t n, const size_t *gates,
                         size_t n_gates, unsigned workers, sw_gate *out,
                         double *dhw_m, double *dtw_m, sw_error *err)
{
    gates_job j = {u, gates, n_gates, out, dhw_m, dtw_m};
    return sw_uncert_parallel(n, workers, gates_chunk, &j, err);
}
