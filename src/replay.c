/* sillwatch: one replay session (see include/sillwatch/replay.h). */
#include "sillwatch/replay.h"

#include <stdlib.h>
#include <string.h>

#include "sillwatch/cancel.h"
#include "sillwatch/htmlreport.h"
#include "sillwatch/jsonout.h"
#include "sillwatch/outfile.h"
#include "sillwatch/report.h"
#include "sillwatch/steplog.h"


static const char *const out_names[SW_REPLAY_N_OUT] = {
    "summary.csv", "events.csv",  "flags.csv",   "steps.csv",
    "months.csv",  "report.html", "summary.json", "samples.csv",
    "sample_steps.csv"};

struct sw_replay {
    const sw_site *site;
    const char *outdir;
    sw_replay_options opt;
    sw_replay_follow fol;
    sw_stepper *st;
    sw_html_report *rep;
    sw_event_log *log;
    sw_steplog *steps; /* with opt.steps */
    const sw_samplerun *samples; /* run --samples, or NULL */
    sw_outfile out[SW_REPLAY_N_OUT];
    long points;
    int done, finished;
};

const char *sw_replay_output_name(int k)
{
    return k >= 0 && k < SW_REPLAY_N_OUT ? out_names[k] : NULL;
}

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
}

static int wanted(const sw_replay_options *o, int k)
{
    switch (k) {
    case SW_REPLAY_STEPS:
        return o->steps;
    case SW_REPLAY_MONTHS:
        return o->by_month;
    case SW_REPLAY_REPORT:
        return o->report;
    case SW_REPLAY_JSON:
        return o->json;
    case SW_REPLAY_SAMPLES:
    case SW_REPLAY_SAMPLE_STEPS:
        return 0; /* sw_replay_add_samples() */
    default:
        return 1;
    }
}

/* The engine, the report, the event log and the step log's caches. */
static int alloc_parts(sw_replay *r, sw_error *err)
{
    const sw_site *site = r->site;
    /* the report draws every point and sums the months */
    sw_stepper_options sopt = {r->opt.by_month || r->opt.report,
                               r->opt.steps || r->opt.report ||
                                   r->fol.points,
                               1};
    int rc;

    if ((rc = sw_stepper_alloc(&r->st, site, &sopt, err)) == SW_OK &&
        r->fol.changes)
        sw_stepper_list_changes(r->st);
    if (rc != SW_OK ||
        (r->opt.report &&
         (rc = sw_html_report_alloc(&r->rep, site, err)) != SW_OK) ||
        (rc = sw_event_log_alloc(&r->log, site->n_gates, err)) != SW_OK)
        return rc;
    return SW_OK;
}

/* The outputs as temporary files, with their headers. */
static int open_outputs(sw_replay *r, sw_error *err)
{
    int rc;
    for (int k = 0; k < SW_REPLAY_N_OUT; k++)
        if (wanted(&r->opt, k) &&
            (rc = sw_outfile_open(&r->out[k], r->outdir, out_names[k],
                                  err)) != SW_OK)
            return rc;
    sw_report_summary_header(r->out[SW_REPLAY_SUMMARY].fp);
    sw_report_events_header(r->out[SW_REPLAY_EVENTS].fp);
    sw_report_flags_header(r->out[SW_REPLAY_FLAGS].fp);
    if (r->opt.steps &&
        (rc = sw_steplog_open(&r->steps, r->site, &r->out[SW_REPLAY_STEPS],
                              err)) != SW_OK)
        return rc;
    if (r->opt.by_month)
        sw_report_months_header(r->out[SW_REPLAY_MONTHS].fp);
    return SW_OK;
}

int sw_replay_add_samples(sw_replay *r, const sw_samplerun *samples,
                          sw_error *err)
{
    int rc;
    r->samples = samples;
    if ((rc = sw_outfile_open(&r->out[SW_REPLAY_SAMPLES], r->outdir,
                              out_names[SW_REPLAY_SAMPLES], err)) != SW_OK)
        return rc;
    sw_samplerun_header(r->out[SW_REPLAY_SAMPLES].fp);
    if (!r->opt.steps || samples->gates == NULL)
        return SW_OK;
    if ((rc = sw_outfile_open(&r->out[SW_REPLAY_SAMPLE_STEPS], r->outdir,
                              out_names[SW_REPLAY_SAMPLE_STEPS], err)) !=
        SW_OK)
        return rc;
    sw_samplerun_steps_header(r->out[SW_REPLAY_SAMPLE_STEPS].fp);
    return SW_OK;
}

int sw_replay_open(sw_replay **replay, const sw_site *site,
                   const char *outdir, const sw_replay_options *opt,
                   sw_error *err)
{
    return sw_replay_open_following(replay, site, outdir, opt, NULL, err);
}

int sw_replay_open_following(sw_replay **replay, const sw_site *site,
                             const char *outdir,
                             const sw_replay_options *opt,
                             const sw_replay_follow *follow, sw_error *err)
{
    sw_replay *r = calloc(1, sizeof *r);
    int rc;

    *replay = NULL;
    if (r == NULL)
        return nomem(err);
    r->site = site;
    r->outdir = outdir;
    if (opt != NULL)
        r->opt = *opt;
    if (follow != NULL)
        r->fol = *follow;
    if ((rc = alloc_parts(r, err)) != SW_OK ||
        (rc = open_outputs(r, err)) != SW_OK) {
        sw_replay_free(r);
        return rc;
    }
    *replay = r;
    return SW_OK;
}

/* The readings the quality tests flagged in the last advance. */
static void write_flags(sw_replay *r)
{
    const sw_stepper_flag *fl;
    size_t n = sw_stepper_flags(r->st, &fl);
    for (size_t i = 0; i < n; i++) {
        const sw_site_series *sr = sw_stepper_series(r->st, fl[i].series);
        const char *path = r->fol.shown_paths != NULL
                               ? r->fol.shown_paths[sr - r->site->series]
                               : sr->path;
        sw_report_flag_row(r->out[SW_REPLAY_FLAGS].fp, sr->name, path,
                           &fl[i].reading, r->site->zone);
        if (r->rep != NULL)
            sw_html_report_flag(r->rep, sr, &fl[i].reading);
    }
}

/* Every gate known at this point in the step logs. */
static void write_steps(sw_replay *r)
{
    char when[64];
    sw_steplog_point(r->steps, r->st);
    if (r->out[SW_REPLAY_SAMPLE_STEPS].fp == NULL)
        return;
    sw_time_format(when, sizeof when, sw_stepper_time(r->st),
                   r->site->zone);
    sw_samplerun_step_rows(r->out[SW_REPLAY_SAMPLE_STEPS].fp, r->samples,
                           when, r->st);
}

/* Write what the last advance or finish exposed, and hand it to the
 * report when there is one. */
static int write_point(sw_replay *r, sw_error *err)
{
    const sw_site *site = r->site;
    const sw_event *ev;
    const sw_month_row *mo;
    size_t n;
    int rc;

    write_flags(r);
    if (!sw_stepper_passed(r->st))
        return SW_OK; /* flags only: no point passed */
    n = sw_stepper_events(r->st, &ev);
    for (size_t i = 0; i < n; i++) {
        if ((rc = sw_event_log_add(r->log, &ev[i], err)) != SW_OK)
            return rc;
        if (r->rep != NULL)
            sw_html_report_event(r->rep, &ev[i]);
    }
    n = sw_stepper_months(r->st, &mo);
    for (size_t i = 0; i < n; i++) {
        if (r->opt.by_month)
            sw_report_month_row(r->out[SW_REPLAY_MONTHS].fp,
                                site->gates[mo[i].gate].gate.name, &mo[i],
                                site->zone);
        if (r->rep != NULL &&
            (rc = sw_html_report_month(r->rep, &mo[i], err)) != SW_OK)
            return rc;
    }
    if (r->rep != NULL &&
        (rc = sw_html_report_point(r->rep, r->st, err)) != SW_OK)
        return rc;
    if (r->opt.steps)
        write_steps(r);
    if (r->fol.hook != NULL)
        return r->fol.hook(r->fol.hook_ctx, r->st, err);
    return SW_OK;
}

int sw_replay_feed(sw_replay *r, long max_points, int *done, sw_error *err)
{
    int rc;
    for (long k = 0; k < max_points && !r->done; k++) {
        if ((rc = sw_stepper_advance(r->st, &r->done, err)) != SW_OK)
            return rc;
        if ((rc = sw_cancel_check(err)) != SW_OK)
            return rc;
        if (r->done)
            break;
        if ((rc = write_point(r, err)) != SW_OK)
            return rc;
        r->points++;
    }
    *done = r->done;
    return SW_OK;
}

/* summary.json: the rows of summary.csv, numbers as numbers, each with
 * its gate's fs basis (jsonout.h). */
static int write_json(sw_replay *r, const sw_replay_meta *meta,
                      sw_time_ms t0, sw_time_ms t1, sw_error *err)
{
    const sw_site *site = r->site;
    int bad = 0, rc;
    json_t *doc = json_object(), *rows = json_array();

    for (size_t i = 0; i < site->n_gates && rows != NULL; i++) {
        const sw_gate *g = &site->gates[i].gate;
        json_t *row = sw_json_summary_row(g->name, t0, t1,
                                          sw_stepper_tally(r->st, i),
                                          site->zone);
        /* min_fs is on this basis */
        sw_json_set(row, "fs_basis",
                    json_string(sw_fs_basis_name(g->fs_basis)), &bad);
        if (json_array_append_new(rows, row) != 0)
            bad = 1;
    }
    sw_json_set(doc, "sillwatch_version", json_string(meta->tool_version),
                &bad);
    sw_json_set(doc, "site", json_string(site->name), &bad);
    sw_json_set(doc, "site_file", json_string(site->path), &bad);
    sw_json_set(doc, "start", sw_json_time(t0, site->zone), &bad);
    sw_json_set(doc, "end", sw_json_time(t1, site->zone), &bad);
    sw_json_set(doc, "gates", rows, &bad);
    sw_json_set(doc, "caution", json_string(meta->caution), &bad);
    rc = sw_json_write(bad ? NULL : doc, r->out[SW_REPLAY_JSON].fp, err);
    json_decref(doc);
    return rc;
}

/* The season report: every level file's SHA-256 joins the meta. */
static int write_report(sw_replay *r, const sw_replay_meta *meta,
                        sw_error *err)
{
    size_t n = sw_stepper_n_series(r->st);
    char (*hex)[SW_SHA256_HEX] = calloc(n + 1, sizeof *hex);
    const char **hexp = calloc(n + 1, sizeof *hexp);
    sw_html_meta hm = {meta->site_sha256, meta->generated,
                       meta->tool_version, meta->caution,
                       meta->command_line, hexp};
    int rc = SW_OK;

    if (hex == NULL || hexp == NULL)
        rc = nomem(err);
    for (size_t i = 0; i < n && rc == SW_OK; i++) {
        rc = sw_file_sha256(sw_stepper_series(r->st, i)->path, hex[i],
                            SW_EDATA, err);
        hexp[i] = hex[i];
    }
    if (rc == SW_OK)
        rc = sw_html_report_write(r->rep, r->out[SW_REPLAY_REPORT].fp, r->st,
                                  &hm, err);
    free(hex);
    free(hexp);
    return rc;
}

/* The outputs written once the replay has ended. */
static int write_closing(sw_replay *r, const sw_replay_meta *meta,
                         sw_error *err)
{
    const sw_site *site = r->site;
    sw_time_ms t0, t1;
    int rc;

    if ((rc = sw_event_log_write(r->log, r->out[SW_REPLAY_EVENTS].fp, site,
                                 err)) != SW_OK)
        return rc;
    sw_stepper_span(r->st, &t0, &t1);
    for (size_t i = 0; i < site->n_gates; i++)
        sw_report_summary_row(r->out[SW_REPLAY_SUMMARY].fp,
                              site->gates[i].gate.name, t0, t1,
                              sw_stepper_tally(r->st, i), site->zone);
    if (r->opt.json && (rc = write_json(r, meta, t0, t1, err)) != SW_OK)
        return rc;
    if (r->opt.report && (rc = write_report(r, meta, err)) != SW_OK)
        return rc;
    if (r->samples != NULL &&
        (rc = sw_samplerun_write(r->out[SW_REPLAY_SAMPLES].fp, r->samples,
                                 err)) != SW_OK)
        return rc;
    return SW_OK;
}

int sw_replay_finish(sw_replay *r, const sw_replay_meta *meta,
                     sw_error *err)
{
    sw_outset_meta mm = {meta->tool_version, meta->site_sha256,
                         meta->generated};
    int rc;

    if ((rc = sw_stepper_finish(r->st, err)) != SW_OK)
        return rc;
    if (!sw_stepper_has_data(r->st))
        return sw_stepper_no_data_error(r->st, err);
    if ((rc = write_point(r, err)) != SW_OK ||
        (rc = write_closing(r, meta, err)) != SW_OK)
        return rc;
    if (r->steps != NULL)
        sw_steplog_finish(r->steps);
    for (int k = 0; k < SW_REPLAY_N_OUT; k++)
        if ((rc = sw_outfile_close(&r->out[k], err)) != SW_OK)
            return rc;
    if ((rc = sw_cancel_check(err)) != SW_OK ||
        (rc = sw_outset_publish(r->outdir, r->out, out_names,
                                SW_REPLAY_N_OUT, &mm, err)) != SW_OK)
        return rc;
    r->finished = 1;
    return SW_OK;
}

const sw_stepper *sw_replay_stepper(const sw_replay *r)
{
    return r->st;
}

long sw_replay_points(const sw_replay *r)
{
    return r->points;
}

void sw_replay_free(sw_replay *r)
{
    if (r == NULL)
        return;
    sw_steplog_free(r->steps); /* it writes into out[SW_REPLAY_STEPS] */
    for (int k = 0; k < SW_REPLAY_N_OUT; k++)
        sw_outfile_abort(&r->out[k]);
    sw_html_report_free(r->rep);
    sw_event_log_free(r->log);
    sw_stepper_free(r->st);
    free(r);
}
