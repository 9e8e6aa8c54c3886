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

/* Replay `site` through the engine to its end, tallies only: *st (the
 * caller frees it, also on error) holds them.  Errors: the engine's,
 * SW_EDATA when no series held a valid reading, SW_EINTERRUPTED. */
static int replay_to_end(const sw_site *site, sw_stepper **st,
                         sw_error *err)
{
    sw_stepper_options opt = {0, 0, 0};
    int rc, done = 0;

    if ((rc = sw_stepper_alloc(st, site, &opt, err)) != SW_OK)
        return rc;
    while (!done)
        if ((rc = sw_stepper_advance(*st, &done, err)) != SW_OK ||
            (rc = sw_cancel_check(err)) != SW_OK)
            return rc;
    if ((rc = sw_stepper_finish(*st, err)) != SW_OK)
        return rc;
    return sw_stepper_has_data(*st) ? SW_OK
                                    : sw_stepper_no_data_error(*st, err);
}

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
    void *slots;           /* [n][n_gates] sw_sample_gate, or with screen
                              sw_sample_screen */
    job_slot *job;         /* [n_jobs] */
    void *map;
    size_t map_size;
} shared;

typedef struct run_ctx {
    const sw_uncert *u;
    int screen;            /* each sample screened as a forecast ensemble */
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
    int rc;

    if ((rc = sw_uncert_draw(u, k, s, err)) != SW_OK)
        return rc;
    if ((rc = sw_uncert_site(u, s, &site, err)) != SW_OK)
        return rc;
    if ((rc = replay_to_end(&site, &st, err)) != SW_OK)
        goto cleanup;
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

/* One sample's site expanded into its forecast members (ensemble.h) and
 * replayed through the engine; per gate of the site, the verdict over its
 * members into `out` (screen's own verdict, cmd_screen.c). */
static int screen_sample(const sw_uncert *u, sw_uncert_sample *s, size_t k,
                         sw_sample_screen *out, sw_error *err)
{
    sw_site site;
    sw_ensemble ens;
    sw_stepper *st = NULL;
    int rc;

    memset(&ens, 0, sizeof ens);
    if ((rc = sw_uncert_draw(u, k, s, err)) != SW_OK)
        return rc;
    if ((rc = sw_uncert_site(u, s, &site, err)) != SW_OK)
        return rc;
    if ((rc = sw_ensemble_expand(&ens, &site, err)) != SW_OK)
        goto cleanup;
    memset(out, 0, site.n_gates * sizeof *out);
    if (ens.site.n_gates == 0)
        goto cleanup; /* headwater-only gates: nothing to replay */
    if ((rc = replay_to_end(&ens.site, &st, err)) != SW_OK)
        goto cleanup;
    for (size_t e = 0; e < ens.site.n_gates; e++) {
        const sw_tally *t = sw_stepper_tally(st, e);
        sw_sample_screen_add(&out[ens.orig[e]], t);
    }
cleanup:
    sw_stepper_free(st);
    sw_ensemble_fini(&ens);
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
        rc = c->screen
                 ? screen_sample(c->u, s, k,
                                 (sw_sample_screen *)c->sh.slots +
                                     k * n_gates,
                                 &slot->err)
                 : replay_sample(c->u, s, k,
                                 (sw_sample_gate *)c->sh.slots + k * n_gates,
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

static int share(shared *sh, size_t slots, size_t n_jobs, sw_error *err)
{
    size_t tally = slots;
    size_t pad = (tally + 63) / 64 * 64;
    sh->map_size = pad + n_jobs * sizeof *sh->job;
    sh->map = mmap(NULL, sh->map_size, PROT_READ | PROT_WRITE,
                   MAP_SHARED | MAP_ANONYMOUS, -1, 0);
    if (sh->map == MAP_FAILED) {
        sh->map = NULL;
        return nomem(err);
    }
    sh->slots = sh->map;
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

static int check_n(size_t n, sw_error *err)
{
    if (n < 1 || n > SW_UNCERT_MAX_SAMPLES)
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "the number of samples must be 1 to %d, not %zu",
                            SW_UNCERT_MAX_SAMPLES, n);
    return SW_OK;
}

/* Samples 0 .. n - 1 on worker processes, each writing `size` bytes per
 * gate and sample into shared memory, copied into out[n][n_gates] (of
 * that size) at the end.  With `screen`, screen_sample(), else
 * replay_sample(). */
static int run_all(const sw_uncert *u, size_t n, unsigned workers,
                   int screen, size_t size, void *out,
                   sw_samplerun_progress progress, void *pctx,
                   sw_error *err)
{
    size_t bytes = n * u->site->n_gates * size;
    run_ctx c;
    int *status = NULL;
    int rc;

    memset(&c, 0, sizeof c);
    if (workers < 1)
        workers = 1;
    c.u = u;
    c.screen = screen;
    c.n = n;
    c.n_jobs = (size_t)workers * JOBS_PER_WORKER < n
                   ? (size_t)workers * JOBS_PER_WORKER
                   : n;
    c.progress = progress;
    c.pctx = pctx;
    status = calloc(c.n_jobs, sizeof *status);
    if (status == NULL) {
        rc = nomem(err);
        goto cleanup;
    }
    if ((rc = share(&c.sh, bytes, c.n_jobs, err)) != SW_OK)
        goto cleanup;
    rc = sw_jobs_run(c.n_jobs, workers, run_job, job_done, &c, status, err);
    if (rc == SW_OK)
        rc = jobs_outcome(&c, status, err);
    if (rc == SW_OK && bytes > 0)
        memcpy(out, c.sh.slots, bytes);
cleanup:
    if (c.sh.map != NULL)
        munmap(c.sh.map, c.sh.map_size);
    free(status);
    return rc;
}

int sw_samplerun_run(sw_samplerun *sr, const sw_uncert *u, size_t n,
                     unsigned workers, int keep_gates,
                     sw_samplerun_progress progress, void *pctx,
                     sw_error *err)
{
    size_t n_gates = u->site->n_gates;
    int rc;

    memset(sr, 0, sizeof *sr);
    if ((rc = check_n(n, err)) != SW_OK)
        return rc;
    if (workers < 1)
        workers = 1;
    sr->u = u;
    sr->n = n;
    sr->n_gates = n_gates;
    sr->tally = calloc(n * n_gates + 1, sizeof *sr->tally);
    if (sr->tally == NULL) {
        rc = nomem(err);
        goto cleanup;
    }
    if ((rc = run_all(u, n, workers, 0, sizeof *sr->tally, sr->tally,
                      progress, pctx, err)) != SW_OK)
        goto cleanup;

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

/* ---- screen --samples ------------------------------------------------------- */

int sw_samplescreen_run(sw_samplescreen *ss, const sw_uncert *u, size_t n,
                        unsigned workers, sw_samplerun_progress progress,
                        void *pctx, sw_error *err)
{
    size_t n_gates = u->site->n_gates;
    int rc;

    memset(ss, 0, sizeof *ss);
    if ((rc = check_n(n, err)) != SW_OK)
        return rc;
    ss->u = u;
    ss->n = n;
    ss->n_gates = n_gates;
    ss->verdict = calloc(n * n_gates + 1, sizeof *ss->verdict);
    if (ss->verdict == NULL)
        rc = nomem(err);
    else
        rc = run_all(u, n, workers, 1, sizeof *ss->verdict, ss->verdict,
                     progress, pctx, err);
    if (rc != SW_OK)
        sw_samplescreen_fini(ss);
    return rc;
}

void sw_samplescreen_fini(sw_samplescreen *ss)
{
    if (ss == NULL)
        return;
    free(ss->verdict);
    memset(ss, 0, sizeof *ss);
}

int sw_samplescreen_stats_of(const sw_samplescreen *ss, size_t g,
                             sw_time_ms issued, sw_samplescreen_stats *st,
                             sw_error *err)
{
    size_t n = ss->n, low_pairs = 0, open_pairs = 0, k_low = 0, k_open = 0;
    double *low = malloc(n * sizeof *low), *open = malloc(n * sizeof *open);

    memset(st, 0, sizeof *st);
    if (low == NULL || open == NULL) {
        free(low);
        free(open);
        return nomem(err);
    }
    for (size_t k = 0; k < n; k++) {
        const sw_sample_screen *v = &ss->verdict[k * ss->n_gates + g];
        st->members = v->members;
        low_pairs += v->low_members;
        open_pairs += v->open_members;
        if (v->low_seen)
            low[k_low++] = (double)(v->low_first - issued);
        if (v->open_seen)
            open[k_open++] = (double)(v->open_first - issued);
    }
    st->n_low = k_low;
    st->n_open = k_open;
    sw_uncert_proportion(k_low, n, &st->p_low, &st->p_low_se);
    sw_uncert_proportion(k_open, n, &st->p_open, &st->p_open_se);
    if (st->members > 0) {
        double pairs = (double)n * (double)st->members;
        st->fraction_low = (double)low_pairs / pairs;
        st->fraction_open = (double)open_pairs / pairs;
    }
    if (k_low > 0)
        sw_quantiles(low, k_low, sw_uncert_pctl, SW_UNCERT_N_PCTL,
                     st->low_lead_ms);
    if (k_open > 0)
        sw_quantiles(open, k_open, sw_uncert_pctl, SW_UNCERT_N_PCTL,
                     st->open_lead_ms);
    free(low);
    free(open);
    return SW_OK;
}

void sw_samplescreen_header(FILE *fp)
{
    fputs("gate,samples,members,seed,p_some_below,p_some_below_se,"
          "p_some_open,p_some_open_se,fraction_below,fraction_open,"
          "below_lead_hours_p05,below_lead_hours_p50,below_lead_hours_p95,"
          "open_lead_hours_p05,open_lead_hours_p50,open_lead_hours_p95\n",
          fp);
}

/* Lead hours as screen.csv writes them (4 decimals, the sign apart), or
 * empty fields where no sample got there. */
static void put_leads(FILE *fp, size_t seen, const double *ms)
{
    for (int p = 0; p < SW_UNCERT_N_PCTL; p++) {
        fputc(',', fp);
        if (seen == 0)
            continue;
        long long v = llround(ms[p]);
        long long h4 = sw_report_hours4(v < 0 ? -v : v);
        fprintf(fp, "%s%lld.%04lld", v < 0 ? "-" : "", h4 / 10000,
                h4 % 10000);
    }
}

int sw_samplescreen_write(FILE *fp, const sw_samplescreen *ss,
                          sw_time_ms issued, sw_error *err)
{
    const sw_site *site = ss->u->site;
    int rc;

    for (size_t g = 0; g < ss->n_gates; g++) {
        sw_samplescreen_stats st;
        if ((rc = sw_samplescreen_stats_of(ss, g, issued, &st, err)) !=
            SW_OK)
            return rc;
        if (st.members == 0)
            continue; /* headwater-only: required.csv */
        sw_csv_put_field(fp, site->gates[g].gate.name);
        fprintf(fp, ",%zu,%zu,%llu,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g", ss->n,
                st.members, (unsigned long long)ss->u->seed, st.p_low,
                st.p_low_se, st.p_open, st.p_open_se, st.fraction_low,
                st.fraction_open);
        put_leads(fp, st.n_low, st.low_lead_ms);
        put_leads(fp, st.n_open, st.open_lead_ms);
        fputc('\n', fp);
    }
    return SW_OK;
}

void sw_sample_screen_add(sw_sample_screen *v, const sw_tally *t)
{
    v->members++;
    if (t->below_seen) {
        v->low_members++;
        if (!v->low_seen || t->first_below < v->low_first)
            v->low_first = t->first_below;
        v->low_seen = 1;
    }
    if (t->open_seen) {
        v->open_members++;
        if (!v->open_seen || t->first_open < v->open_first)
            v->open_first = t->first_open;
        v->open_seen = 1;
    }
}
