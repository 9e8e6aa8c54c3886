/* sillwatch: the tailwater that headwater-only gates need (see
 * include/sillwatch/required.h). */
#include "sillwatch/required.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/cancel.h"
#include "sillwatch/colstore.h"
#include "sillwatch/critcache.h"
#include "sillwatch/csvout.h"
#include "sillwatch/qc.h"
#include "sillwatch/report.h"


/* One reading of a headwater-only series: its row of required.csv. */
static int required_step(FILE *fp, const sw_site *site, sw_crit_cache *cache,
                         const sw_site_series *sr, sw_time_ms t, double hw,
                         sw_required_max *m, sw_error *err)
{
    const sw_gate *g = sw_crit_cache_gate(cache);
    sw_crit c[2];
    int rc;
    if ((rc = sw_crit_cache_tailwater(cache, hw, &c[0], &c[1], err)) != SW_OK)
        return rc;
    sw_report_required_row(fp, t, site->zone, g->name, sr->name, hw, &c[0],
                           &c[1]);
    for (int i = 0; i < 2; i++) {
        if (c[i].kind != SW_CRIT_LEVEL)
            continue;
        if (!m->seen[i] || c[i].level_m > m->max[i]) {
            m->max[i] = c[i].level_m;
            m->when[i] = t;
        }
        m->seen[i] = 1;
    }
    return SW_OK;
}

/* The name of headwater-only series s in flags.csv (NAME, or
 * NAME#MEMBER as the replay names members), or NULL when its flags are
 * written already: by the replay (a gate with a tailwater uses it too) or
 * for an earlier headwater-only gate on the same series (`repeat`). */
static const char *flag_name(const sw_site *site, const sw_ensemble *ens,
                             size_t s, int repeat, char *buf, size_t n)
{
    const char *h = site->gates[ens->hw_series_gate[s]].headwater;
    for (size_t g = 0; g < site->n_gates; g++)
        if (site->gates[g].tailwater[0] != '\0' &&
            strcmp(site->gates[g].headwater, h) == 0)
            return NULL;
    if (repeat)
        return NULL;
    if (ens->hw_series[s].name[0] == '\0')
        snprintf(buf, n, "%s", h);
    else
        snprintf(buf, n, "%s#%s", h, ens->hw_series[s].name);
    return buf;
}

/* A judged reading of a headwater-only series: a row of flags.csv when
 * flagged (`name`, or none when NULL), else its row of required.csv. */
static int required_verdict(const sw_required_out *out, const sw_site *site,
                            sw_crit_cache *cache, const sw_site_series *sr,
                            const char *name, const sw_qc_reading *r,
                            sw_required_max *m, sw_error *err)
{
    if (r->test != SW_QC_PASS) {
        if (name != NULL)
            sw_report_flag_row(out->flags, name, sr->path, r,
                               site->zone);
        return SW_OK;
    }
    return required_step(out->required, site, cache, sr, r->t, r->v_m, m,
                         err);
}

/* The headwater-only series' files, each read once into a column store
 * (colstore.h) when its first series comes: the series that can share a
 * reader (sw_site_series_same_reader) form a group, one column each. */
typedef struct hw_files {
    size_t n_groups;
    size_t *group, *column;   /* [n_hw_series] */
    size_t *first, *width;    /* [n_groups]: a series, the columns */
    sw_reader **reader;       /* [n_groups]: NULL until read */
    sw_colstore **store;      /* [n_groups] */
    sw_crit_cache **crit;     /* [site gates]: as first needed */
    unsigned char *repeat;    /* [n_hw_series]: an earlier series has the
                                 same headwater and member */
} hw_files;

static void hw_files_free(hw_files *hf, const sw_site *site)
{
    for (size_t k = 0; hf->reader != NULL && k < hf->n_groups; k++) {
        sw_colstore_free(hf->store[k]);
        sw_reader_free(hf->reader[k]);
    }
    for (size_t g = 0; hf->crit != NULL && g < site->n_gates; g++)
        sw_crit_cache_free(hf->crit[g]);
    free(hf->group);
    free(hf->column);
    free(hf->first);
    free(hf->width);
    free(hf->reader);
    free(hf->store);
    free(hf->crit);
    free(hf->repeat);
}

/* A series' headwater and member, for finding repeats. */
typedef struct pair {
    const char *headwater, *member;
    size_t s;
} pair;

static int cmp_pair(const void *x, const void *y)
{
    const pair *a = x, *b = y;
    int c = strcmp(a->headwater, b->headwater);
    if (c == 0)
        c = strcmp(a->member, b->member);
    return c != 0 ? c : (a->s > b->s) - (a->s < b->s);
}

/* Mark each series whose headwater and member an earlier one has: sorted
 * once (a search through the earlier series for each was quadratic in
 * members). */
static int mark_repeats(hw_files *hf, const sw_site *site,
                        const sw_ensemble *ens, sw_error *err)
{
    size_t n = ens->n_hw_series;
    pair *p = malloc((n ? n : 1) * sizeof *p);
    if (p == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    for (size_t s = 0; s < n; s++)
        p[s] = (pair){site->gates[ens->hw_series_gate[s]].headwater,
                      ens->hw_series[s].name, s};
    qsort(p, n, sizeof *p, cmp_pair);
    for (size_t i = 1; i < n; i++)
        hf->repeat[p[i].s] =
            strcmp(p[i].headwater, p[i - 1].headwater) == 0 &&
            strcmp(p[i].member, p[i - 1].member) == 0;
    free(p);
    return SW_OK;
}

/* Sort the series into groups (a few files: a search per series). */
static int hw_files_plan(hw_files *hf, const sw_site *site,
                         const sw_ensemble *ens, sw_error *err)
{
    size_t n = ens->n_hw_series ? ens->n_hw_series : 1;
    memset(hf, 0, sizeof *hf);
    hf->group = calloc(n, sizeof *hf->group);
    hf->column = calloc(n, sizeof *hf->column);
    hf->first = calloc(n, sizeof *hf->first);
    hf->width = calloc(n, sizeof *hf->width);
    hf->reader = calloc(n, sizeof *hf->reader);
    hf->store = calloc(n, sizeof *hf->store);
    hf->crit = calloc(site->n_gates + 1, sizeof *hf->crit);
    hf->repeat = calloc(n, sizeof *hf->repeat);
    if (hf->group == NULL || hf->column == NULL || hf->first == NULL ||
        hf->width == NULL || hf->reader == NULL || hf->store == NULL ||
        hf->crit == NULL || hf->repeat == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    for (size_t s = 0; s < ens->n_hw_series; s++) {
        size_t k = 0;
        while (k < hf->n_groups &&
               !sw_site_series_same_reader(&ens->hw_series[hf->first[k]],
                                           &ens->hw_series[s]))
            k++;
        if (k == hf->n_groups)
            hf->first[hf->n_groups++] = s;
        hf->group[s] = k;
        hf->column[s] = hf->width[k]++;
    }
    return mark_repeats(hf, site, ens, err);
}

/* Read group k's file once, every column of its series. */
static int hw_files_read(hw_files *hf, const sw_site *site,
                         const sw_ensemble *ens, size_t k, sw_error *err)
{
    sw_column_config *cols = calloc(hf->width[k], sizeof *cols);
    sw_reader_config cfg;
    int rc;

    if (cols == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    for (size_t s = 0; s < ens->n_hw_series; s++)
        if (hf->group[s] == k)
            sw_site_series_reader(site, &ens->hw_series[s], &cfg,
                                  &cols[hf->column[s]]);
    sw_site_series_reader(site, &ens->hw_series[hf->first[k]], &cfg,
                          &(sw_column_config){0});
    if ((rc = sw_reader_open(&hf->reader[k], &cfg, cols, hf->width[k],
                             err)) == SW_OK)
        rc = sw_colstore_read(&hf->store[k], hf->reader[k], hf->width[k],
                              err);
    free(cols);
    return rc;
}

/* One series' readings through its quality tests into required.csv (and
 * flags.csv); the largest levels needed in *m. */
static int required_series(const sw_required_out *out, const sw_site *site,
                           const sw_ensemble *ens, hw_files *hf, size_t s,
                           sw_required_max *m, sw_error *err)
{
    const sw_site_series *sr = &ens->hw_series[s];
    size_t gi = ens->hw_series_gate[s];
    const sw_gate *g = &site->gates[gi].gate;
    sw_qc *qc = NULL;
    sw_qc_config qcc = sr->qc;
    sw_qc_reading judged;
    sw_colstore_cursor cur;
    char fbuf[2 * SW_SITE_NAME_MAX + 2];
    const char *fname = flag_name(site, ens, s, hf->repeat[s], fbuf,
                                  sizeof fbuf);
    int has = 1, rc;

    if (hf->crit[gi] == NULL &&
        (rc = sw_crit_cache_alloc(&hf->crit[gi], g, SW_CRIT_CACHE_SLOTS,
                                  err)) != SW_OK)
        return rc;
    qcc.max_gap_ms = site->max_gap_ms;
    if (sw_qc_active(&qcc) && (rc = sw_qc_alloc(&qc, &qcc, err)) != SW_OK)
        return rc;
    if ((rc = sw_colstore_start(hf->store[hf->group[s]], hf->column[s], &cur,
                                err)) != SW_OK) {
        sw_qc_free(qc);
        return rc;
    }
    while (rc == SW_OK) {
        sw_time_ms t;
        long line;
        double hw;
        if ((rc = sw_cancel_check(err)) != SW_OK ||
            (rc = sw_colstore_next(&cur, &has, &t, &line, &hw, err)) !=
                SW_OK ||
            !has)
            break;
        if (isnan(hw))
            continue;
        if (qc == NULL) {
            rc = required_step(out->required, site, hf->crit[gi], sr, t, hw,
                               m, err);
            continue;
        }
        sw_qc_reading in = {t, hw, line, SW_QC_PASS};
        if (sw_qc_push(qc, &in, &judged))
            rc = required_verdict(out, site, hf->crit[gi], sr, fname,
                                  &judged, m, err);
    }
    if (rc == SW_OK && qc != NULL && sw_qc_flush(qc, &judged))
        rc = required_verdict(out, site, hf->crit[gi], sr, fname, &judged, m,
                              err);
    sw_colstore_cursor_free(&cur);
    sw_qc_free(qc);
    return rc;
}

/* A series' row of required_max.csv. */
static void max_row(FILE *mx, const sw_site *site, const sw_gate *g,
                    const sw_site_series *sr, const sw_required_max *m)
{
    sw_csv_put_field(mx, g->name);
    fputc(',', mx);
    sw_csv_put_field(mx, sr->name);
    fputc(',', mx);
    for (int i = 0; i < 2; i++) {
        if (m->seen[i]) {
            char when[64];
            sw_time_format(when, sizeof when, m->when[i], site->zone);
            fprintf(mx, "%.4f,%s", m->max[i], when);
        } else {
            fputc(',', mx); /* not needed at any step */
        }
        fputc(i == 0 ? ',' : '\n', mx);
    }
}

int sw_required_write(const sw_site *site, const sw_ensemble *ens,
                      const sw_required_out *out, sw_required_fn each,
                      void *ctx, sw_error *err)
{
    hw_files hf;
    int rc;

    fputs("time,gate,member,headwater,tw_alarm,tw_open\n", out->required);
    fputs("gate,member,tw_alarm_max,tw_alarm_max_time,tw_open_max,"
          "tw_open_max_time\n", out->required_max);
    rc = hw_files_plan(&hf, site, ens, err);
    for (size_t s = 0; s < ens->n_hw_series && rc == SW_OK; s++) {
        const sw_site_series *sr = &ens->hw_series[s];
        const sw_gate *g = &site->gates[ens->hw_series_gate[s]].gate;
        size_t k = hf.group[s];
        sw_required_max m = {{-INFINITY, -INFINITY}, {0, 0}, {0, 0}};
        if ((hf.store[k] == NULL &&
             (rc = hw_files_read(&hf, site, ens, k, err)) != SW_OK) ||
            (rc = required_series(out, site, ens, &hf, s, &m, err)) != SW_OK)
            break;
        max_row(out->required_max, site, g, sr, &m);
        if (each != NULL)
            each(ctx, sr, g, &m, sw_reader_get_stats(hf.reader[k]));
    }
    hw_files_free(&hf, site);
    return rc;
}
