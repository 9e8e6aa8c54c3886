/* sillwatch: a full replay of a site for each sample of its uncertain
 * keys (see include/sillwatch/samplerun.h). */
#define _DEFAULT_SOURCE /* MAP_ANONYMOUS */
#include "sillwatch/samplerun.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

#include "sillwatch/cancel.h"
#include "sillwatch/csvout.h"
#include "sillwatch/ensemble.h"
#include "sillwatch/jobs.h"
#include "sillwatch/report.h"

/* Jobs per worker: enough that workers finish together, few enough that
 * forking costs nothing next to the replays. */
#define JOBS_PER_WORKER 8

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory for the sampled replays");
}

/* What the workers share with the parent: the tallies of every sample,
 * and each job's status and error. */
typedef struct job_slot {
    int rc;
    sw_error err;
} job_slot;

typedef struct shared {
    sw_sample_gate *tally; /* [n][n_gates] */
    job_slot *job;         /* [n_jobs] */
    void *map;
    size_t map_size;
} shared;

typedef struct run_ctx {
    const sw_uncert *u;
    size_t n, n_jobs;
    shared sh;
    sw_samplerun_progress progress;
    void *pctx;
} run_ctx;

static size_t job_begin(const run_ctx *c, size_t j)
{
    return c->n * j / c->n_jobs;
}

/* One sample's replay through the engine, its tallies into `out`. */
static int replay_sample(const sw_uncert *u, sw_uncert_sample *s, size_t k,
                         sw_sample_gate *out, sw_error *err)
{
    sw_site site;
    sw_stepper *st = NULL;
    sw_stepper_options opt = {0, 0};
    int rc, done = 0;

    if ((rc = sw_uncert_draw(u, k, s, err)) != SW_OK)
        return rc;
    if ((rc = sw_uncert_site(u, s, &site, err)) != SW_OK)
        return rc;
    if ((rc = sw_stepper_alloc(&st, &site, &opt, err)) != SW_OK)
        goto cleanup;
    while (!done) {
        if ((rc = sw_stepper_advance(st, &done, err)) != SW_OK ||
            (rc = sw_cancel_check(err)) != SW_OK)
            goto cleanup;
    }
    if ((rc = sw_stepper_finish(st, err)) != SW_OK)
        goto cleanup;
    if (!sw_stepper_has_data(st)) {
        rc = sw_stepper_no_data_error(st, err);
        goto cleanup;
    }
    for (size_t g = 0; g < site.n_gates; g++) {
        const sw_tally *t = sw_stepper_tally(st, g);
        out[g].low = t->low;
        out[g].open = t->open;
        out[g].evaluated = t->evaluated;
        out[g].events = t->events;
        out[g].min_fs = t->min_fs;
        out[g].below_seen = t->below_seen;
        out[g].open_seen = t->open_seen;
    }
cleanup:
    sw_stepper_free(st);
    sw_uncert_site_fini(&site);
    return rc;
}

/* In the worker: the samples of job j. */
static int run_job(size_t j, void *ctx)
{
    run_ctx *c = ctx;
    job_slot *slot = &c->sh.job[j];
    sw_uncert_sample *s = NULL;
    size_t n_gates = c->u->site->n_gates;
    int rc;

    sw_error_clear(&slot->err);
    rc = sw_uncert_sample_alloc(&s, c->u, &slot->err);
    for (size_t k = job_begin(c, j); rc == SW_OK && k < job_begin(c, j + 1);
         k++)
        rc = replay_sample(c->u, s, k, c->sh.tally + k * n_gates,
                           &slot->err);
    sw_uncert_sample_free(s);
    slot->rc = rc;
    return rc == SW_OK ? 0 : 1;
}

static void job_done(size_t i, int status, size_t n_done, void *ctx)
{
    run_ctx *c = ctx;
    (void)i;
    (void)status;
    if (c->progress != NULL)
        c->progress(n_done < c->n_jobs ? job_begin(c, n_done) : c->n, c->n,
                    c->pctx);
}

static int share(shared *sh, size_t n, size_t n_gates, size_t n_jobs,
                 sw_error *err)
{
    size_t tally = n * n_gates * sizeof *sh->tally;
    size_t pad = (tally + 63) / 64 * 64;
    sh->map_size = pad + n_jobs * sizeof *sh->job;
    sh->map = mmap(NULL, sh->map_size, PROT_READ | PROT_WRITE,
                   MAP_SHARED | MAP_ANONYMOUS, -1, 0);
    if (sh->map == MAP_FAILED) {
        sh->map = NULL;
        return nomem(err);
    }
    sh->tally = sh->map;
    sh->job = (job_slot *)((char *)sh->map + pad);
    return SW_OK;
}

/* The outcome of the jobs: the error of the lowest job that failed. */
static int jobs_outcome(const run_ctx *c, const int *status, sw_error *err)
{
    for (size_t j = 0; j < c->n_jobs; j++) {
        if (status[j] == 0)
            continue;
        if (status[j] == 1 && c->sh.job[j].rc != SW_OK) {
            if (err != NULL)
                *err = c->sh.job[j].err;
            return c->sh.job[j].rc;
        }
        if (status[j] < 0)
            return sw_cancel_check(err) != SW_OK
                       ? SW_EINTERRUPTED
                       : sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                                      "samples %zu to %zu were not "
                                      "replayed",
                                      job_begin(c, j),
                                      job_begin(c, j + 1) - 1);
        return sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                            "the worker replaying samples %zu to %zu ended "
                            "with status %d; please report this",
                            job_begin(c, j), job_begin(c, j + 1) - 1,
                            status[j]);
    }
    return SW_OK;
}

int sw_samplerun_run(sw_samplerun *sr, const sw_uncert *u, size_t n,
                     unsigned workers, int keep_gates,
                     sw_samplerun_progress progress, void *pctx,
                     sw_error *err)
{
    size_t n_gates = u->site->n_gates;
    run_ctx c;
    int *status = NULL;
    int rc;

    memset(sr, 0, sizeof *sr);
    memset(&c, 0, sizeof c);
    if (n < 1 || n > SW_UNCERT_MAX_SAMPLES)
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "the number of samples must be 1 to %d, not %zu",
                            SW_UNCERT_MAX_SAMPLES, n);
    if (workers < 1)
        workers = 1;
    sr->u = u;
    sr->n = n;
    sr->n_gates = n_gates;
    c.u = u;
    c.n = n;
    c.n_jobs = (size_t)workers * JOBS_PER_WORKER < n
                   ? (size_t)workers * JOBS_PER_WORKER
                   : n;
    c.progress = progress;
    c.pctx = pctx;
    status = calloc(c.n_jobs, sizeof *status);
    sr->tally = calloc(n * n_gates + 1, sizeof *sr->tally);
    if (status == NULL || sr->tally == NULL) {
        rc = nomem(err);
        goto cleanup;
    }
    if ((rc = share(&c.sh, n, n_gates, c.n_jobs, err)) != SW_OK)
        goto cleanup;
    rc = sw_jobs_run(c.n_jobs, workers, run_job, job_done, &c, status, err);
    if (rc == SW_OK)
        rc = jobs_outcome(&c, status, err);
    if (rc != SW_OK)
        goto cleanup;
    memcpy(sr->tally, c.sh.tally, n * n_gates * sizeof *sr->tally);

    if (keep_gates) {
        size_t *all = calloc(n_gates + 1, sizeof *all);
        sr->gates = calloc(n * n_gates + 1, sizeof *sr->gates);
        sr->dhw = calloc(n * n_gates + 1, sizeof *sr->dhw);
        sr->dtw = calloc(n * n_gates + 1, sizeof *sr->dtw);
        if (all == NULL || sr->gates == NULL || sr->dhw == NULL ||
            sr->dtw == NULL) {
            free(all);
            rc = nomem(err);
            goto cleanup;
        }
        for (size_t g = 0; g < n_gates; g++)
            all[g] = g;
        rc = sw_uncert_draw_gates(u, n, all, n_gates, workers, sr->gates,
                                  sr->dhw, sr->dtw, err);
        free(all);
    }
cleanup:
    if (c.sh.map != NULL)
        munmap(c.sh.map, c.sh.map_size);
    free(status);
    if (rc != SW_OK)
        sw_samplerun_fini(sr);
    return rc;
}

void sw_samplerun_fini(sw_samplerun *sr)
{
    if (sr == NULL)
        return;
    free(sr->tally);
    free(sr->gates);
    free(sr->dhw);
    free(sr->dtw);
    memset(sr, 0, sizeof *sr);
}

/* ---- statistics and outputs ------------------------------------------------ */

/* A percentile in units of 0.0001 h, rounded half up. */
static long long round4(double v)
{
    return (long long)floor(v + 0.5);
}

int sw_samplerun_stats_of(const sw_samplerun *sr, size_t g,
                          sw_samplerun_stats *st, sw_error *err)
{
    size_t n = sr->n;
    double *v = malloc(n * sizeof *v);

    memset(st, 0, sizeof *st);
    if (v == NULL)
        return nomem(err);
    for (size_t k = 0; k < n; k++) {
        const sw_sample_gate *t = &sr->tally[k * sr->n_gates + g];
        st->n_below += (size_t)(t->below_seen != 0);
        st->n_open += (size_t)(t->open_seen != 0);
    }
    sw_uncert_proportion(st->n_below, n, &st->p_below, &st->p_below_se);
    sw_uncert_proportion(st->n_open, n, &st->p_open, &st->p_open_se);
    for (int q = 0; q < 3; q++)
        for (int p = 0; p < SW_UNCERT_N_PCTL; p++) {
            for (size_t k = 0; k < n; k++) {
                const sw_sample_gate *t = &sr->tally[k * sr->n_gates + g];
                /* below the margin as summary.csv prints it: the sum of
                 * the rounded low and open hours */
                v[k] = q == 0 ? (double)(sw_report_hours4(t->low) +
                                         sw_report_hours4(t->open))
                       : q == 1 ? (double)sw_report_hours4(t->open)
                                : t->min_fs;
            }
            double x = sw_quantile(v, n, sw_uncert_pctl[p]);
            if (q == 0)
                st->below4[p] = round4(x);
            else if (q == 1)
                st->open4[p] = round4(x);
            else
                st->min_fs[p] = x;
        }
    free(v);
    return SW_OK;
}

void sw_samplerun_header(FILE *fp)
{
    fputs("gate,samples,seed,hours_below_margin_p05,hours_below_margin_p50,"
          "hours_below_margin_p95,hours_open_p05,hours_open_p50,"
          "hours_open_p95,p_below_once,p_below_once_se,p_open_once,"
          "p_open_once_se,min_fs_p05,min_fs_p50,min_fs_p95\n",
          fp);
}

static void put_h4(FILE *fp, long long h4)
{
    fprintf(fp, ",%lld.%04lld", h4 / 10000, h4 % 10000);
}

static void put_fs(FILE *fp, double fs)
{
    if (isinf(fs))
        fputs(fs > 0 ? ",inf" : ",-inf", fp);
    else
        fprintf(fp, ",%.4f", fs);
}

int sw_samplerun_write(FILE *fp, const sw_samplerun *sr, sw_error *err)
{
    const sw_site *site = sr->u->site;
    int rc;

    for (size_t g = 0; g < sr->n_gates; g++) {
        sw_samplerun_stats st;
        if ((rc = sw_samplerun_stats_of(sr, g, &st, err)) != SW_OK)
            return rc;
        sw_csv_put_field(fp, site->gates[g].gate.name);
        fprintf(fp, ",%zu,%llu", sr->n, (unsigned long long)sr->u->seed);
        for (int p = 0; p < SW_UNCERT_N_PCTL; p++)
            put_h4(fp, st.below4[p]);
        for (int p = 0; p < SW_UNCERT_N_PCTL; p++)
            put_h4(fp, st.open4[p]);
        fprintf(fp, ",%.6g,%.6g,%.6g,%.6g", st.p_below, st.p_below_se,
                st.p_open, st.p_open_se);
        for (int p = 0; p < SW_UNCERT_N_PCTL; p++)
            put_fs(fp, st.min_fs[p]);
        fputc('\n', fp);
    }
    return SW_OK;
}

void sw_samplerun_steps_header(FILE *fp)
{
    fputs("time,gate,samples,fraction_low,fraction_open\n", fp);
}

void sw_samplerun_step_rows(FILE *fp, const sw_samplerun *sr,
                            const char *when, const sw_stepper *st)
{
    const sw_site *site = sr->u->site;

    for (size_t g = 0; g < sr->n_gates; g++) {
        const sw_step_gate *sg = sw_stepper_gate_at(st, g);
        size_t low = 0, open = 0;
        if (!sg->known)
            continue;
        for (size_t k = 0; k < sr->n; k++) {
            size_t at = k * sr->n_gates + g;
            sw_gate_result r;
            /* the sample's levels at this point: the site's plus its
             * datum shifts */
            sw_gate_evaluate(&sr->gates[at],
                             sg->result.headwater_m + sr->dhw[at],
                             sg->result.tailwater_m + sr->dtw[at], &r);
            low += r.state == SW_STATE_LOW;
            open += r.state == SW_STATE_OPEN;
        }
        fprintf(fp, "%s,", when);
        sw_csv_put_field(fp, site->gates[g].gate.name);
        fprintf(fp, ",%zu,%.4f,%.4f\n", sr->n, (double)low / (double)sr->n,
                (double)open / (double)sr->n);
    }
}
