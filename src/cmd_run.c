/* sillwatch run: replay logged or forecast levels through every gate. */
#define _DEFAULT_SOURCE /* getopt_long */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "sillwatch/htmlreport.h"
#include "sillwatch/jsonout.h"
#include "sillwatch/outfile.h"
#include "sillwatch/report.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"

static const char run_help[] =
    "Usage: sillwatch run SITE.ini -o OUTDIR [--series NAME=FILE]...\n"
    "                     [--steps] [--by month] [--report] [--json]\n"
    "                     [--quiet]\n"
    "Replay the level series named in the site file through every gate and\n"
    "write, in OUTDIR (created if missing):\n"
    "  summary.csv   per gate: hours evaluated, not evaluated, low, open,\n"
    "                below margin; events; least factor of safety\n"
    "  events.csv    the exceedance log: each period below the margin\n"
    "  steps.csv     with --steps: every gate at every time step, with\n"
    "                its critical tailwaters\n"
    "  months.csv    with --by month: the summary per calendar month\n"
    "  report.html   with --report: the season report, one page with\n"
    "                charts and tables, to open, print or attach\n"
    "  summary.json  with --json: summary.csv for scripts (numbers as\n"
    "                numbers)\n"
    "Each file is written whole or not at all; a failed run leaves the\n"
    "previous outputs as they were.\n"
    "\n"
    "  -o, --output OUTDIR    the folder for the outputs\n"
    "  --series NAME=FILE     read series NAME from FILE instead of the\n"
    "                         site's file (a forecast, a corrected log)\n"
    "  --steps                write steps.csv\n"
    "  --by month             write months.csv\n"
    "  --report               write report.html\n"
    "  --json                 write summary.json\n"
    "  -q, --quiet            print nothing but errors\n"
    "  -h, --help             show this help and exit\n"
    "      --version          show the version and exit\n"
    "\n"
    "Exit status: 0 every gate held its margin, 1 some gate was low or open,\n"
    "2 usage, 3 site file, 4 level data, 5 output, 130 interrupted; see\n"
    "'sillwatch --help'.\n"
    "\n";

static volatile sig_atomic_t interrupted;

static void on_signal(int sig)
{
    interrupted = sig;
}

enum {
    OUT_SUMMARY, OUT_EVENTS, OUT_STEPS, OUT_MONTHS, OUT_REPORT, OUT_JSON,
    N_OUT
};
static const char *const out_names[N_OUT] = {
    "summary.csv", "events.csv",  "steps.csv",
    "months.csv",  "report.html", "summary.json"};

typedef struct run_opts {
    const char *site_path, *outdir;
    int steps, by_month, report, json, quiet;
    const char *series[64];
    size_t n_series;
} run_opts;

static int parse_args(int argc, char **argv, run_opts *o)
{
    static const struct option opts[] = {
        {"output", required_argument, NULL, 'o'},
        {"series", required_argument, NULL, 's'},
        {"steps", no_argument, NULL, 'S'},
        {"json", no_argument, NULL, 'J'},
        {"by", required_argument, NULL, 'b'},
        {"report", no_argument, NULL, 'R'},
        {"quiet", no_argument, NULL, 'q'},
        {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},
        {NULL, 0, NULL, 0},
    };
    int opt, rc;

    memset(o, 0, sizeof *o);
    opterr = 0;
    while ((opt = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (opt) {
        case 'o':
            o->outdir = optarg;
            break;
        case 's':
            if ((rc = sw_cli_take_series("run", optarg, o->series,
                                         &o->n_series, sizeof o->series /
                                                       sizeof o->series[0])))
                return rc;
            break;
        case 'S':
            o->steps = 1;
            break;
        case 'J':
            o->json = 1;
            break;
        case 'b':
            if (strcmp(optarg, "month") != 0)
                return sw_cli_usage_error("run", "--by: '%s' is not 'month'",
                                          optarg);
            o->by_month = 1;
            break;
        case 'R':
            o->report = 1;
            break;
        case 'q':
            o->quiet = 1;
            break;
        case 'V':
            sw_cli_version();
            return -1;
        case 'h':
            fputs(run_help, stdout);
            fputs(sw_cli_caution, stdout);
            return -1;
        default:
            return sw_cli_option_error("run", opt, argv);
        }
    }
    rc = sw_cli_site_operand("run", argc, argv, o->outdir,
                             &o->site_path);
    if (rc == 0 && o->report && strcmp(o->site_path, "-") == 0)
        return sw_cli_usage_error("run", "--report records the site file's "
                                         "SHA-256: give the site file by "
                                         "name, not '-'");
    return rc;
}

static void print_summary(const sw_site *site, const sw_stepper *st)
{
    sw_time_ms t0, t1;
    char a[64], b[64], span[32];

    sw_stepper_span(st, &t0, &t1);
    sw_time_format(a, sizeof a, t0, site->zone);
    sw_time_format(b, sizeof b, t1, site->zone);
    sw_report_hours_text(span, sizeof span, t1 - t0);
    printf("replay of site '%s': %s to %s (%s h)\n\n", site->name, a, b,
           span);
    printf("%-12s %11s %11s %10s %10s %7s %9s  %-s\n", "gate",
           "evaluated h", "no data h", "low h", "open h", "events",
           "least fs", "when");
    for (size_t i = 0; i < site->n_gates; i++) {
        const sw_tally *t = sw_stepper_tally(st, i);
        char e[24], n[24], l[24], o[24], fs[24], when[64] = "";
        sw_report_hours_text(e, sizeof e, t->evaluated);
        sw_report_hours_text(n, sizeof n, (t1 - t0) - t->evaluated);
        sw_report_hours_text(l, sizeof l, t->low);
        sw_report_hours_text(o, sizeof o, t->open);
        if (t->evaluated == 0 && isinf(t->min_fs))
            snprintf(fs, sizeof fs, "-");
        else if (isinf(t->min_fs))
            snprintf(fs, sizeof fs, "%s", t->min_fs > 0 ? "inf" : "-inf");
        else
            snprintf(fs, sizeof fs, "%.3f", t->min_fs);
        if (t->evaluated > 0)
            sw_time_format(when, sizeof when, t->min_fs_t, site->zone);
        printf("%-12s %11s %11s %10s %10s %7ld %9s  %s\n",
               site->gates[i].gate.name, e, n, l, o, t->events, fs, when);
    }
}

static void print_quality(const sw_site *site, const sw_stepper *st)
{
    char h[24], when[64];

    printf("\ndata quality (gaps are intervals longer than max_gap, %s h):\n",
           (sw_report_hours_text(h, sizeof h, site->max_gap_ms), h));
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_site_series *sr = sw_stepper_series(st, i);
        const sw_reader_stats *rs = sw_stepper_reader_stats(st, i);
        const sw_column_stats *cs = sw_stepper_column_stats(st, i);
        const sw_gap_stats *gs = sw_stepper_gap_stats(st, i);
        printf("  series %s (%s, column %s): %ld rows, %ld valid, %ld "
               "missing, %ld rejected",
               sr->name, sr->path, sr->value_column, rs->records, cs->valid,
               cs->missing, cs->rejected);
        if (rs->duplicates > 0)
            printf(", %ld duplicate rows skipped (first on line %ld)",
                   rs->duplicates, rs->first_duplicate_line);
        printf("\n");
        if (gs->gaps > 0) {
            sw_report_hours_text(h, sizeof h, gs->total);
            sw_time_format(when, sizeof when, gs->longest_start, site->zone);
            printf("    %ld gap%s, %s h in all; longest ", gs->gaps,
                   gs->gaps == 1 ? "" : "s", h);
            sw_report_hours_text(h, sizeof h, gs->longest);
            printf("%s h from %s\n", h, when);
        }
        for (size_t k = 0; k < cs->n_kept; k++)
            printf("    %s:%ld:%ld: rejected '%s': %s\n", sr->path,
                   cs->kept[k].line, cs->kept[k].column, cs->kept[k].text,
                   cs->kept[k].reason);
        if (cs->rejected > (long)cs->n_kept)
            printf("    ... and %ld more rejected\n",
                   cs->rejected - (long)cs->n_kept);
        if (rs->time_rejected > 0)
            printf("    %ld row%s at local times that do not exist (the "
                   "daylight-saving gap), taken as missing; first on line "
                   "%ld\n",
                   rs->time_rejected, rs->time_rejected == 1 ? "" : "s",
                   rs->first_time_rejected_line);
        if (rs->unresolved > 0)
            printf("    %ld row(s) in a repeated daylight-saving hour could not "
                   "be placed by order and were taken as the first "
                   "occurrence; first on line %ld\n",
                   rs->unresolved, rs->first_unresolved_line);
    }
}

static void progress(const sw_stepper *st, const sw_site *site, long steps)
{
    char when[64];
    sw_time_format(when, sizeof when, sw_stepper_time(st), site->zone);
    fprintf(stderr, "\rsillwatch: replaying %s  (%ld steps)   ", when, steps);
}

/* Write what the last advance or finish exposed, and hand it to the
 * report when there is one.  Returns SW_OK or the report's error. */
static int write_step(const sw_stepper *st, const sw_site *site,
                      sw_outfile *out, const run_opts *o,
                      sw_html_report *rep, sw_error *err)
{
    const sw_event *ev;
    const sw_month_row *mo;
    size_t n = sw_stepper_events(st, &ev);
    int rc;

    for (size_t i = 0; i < n; i++) {
        sw_report_event_row(out[OUT_EVENTS].fp,
                            site->gates[ev[i].gate].gate.name, &ev[i],
                            site->zone);
        if (rep != NULL)
            sw_html_report_event(rep, &ev[i]);
    }
    n = sw_stepper_months(st, &mo);
    for (size_t i = 0; i < n; i++) {
        if (o->by_month)
            sw_report_month_row(out[OUT_MONTHS].fp,
                                site->gates[mo[i].gate].gate.name, &mo[i],
                                site->zone);
        if (rep != NULL && (rc = sw_html_report_month(rep, &mo[i], err)) !=
                               SW_OK)
            return rc;
    }
    if (rep != NULL && (rc = sw_html_report_point(rep, st, err)) != SW_OK)
        return rc;
    if (!o->steps)
        return SW_OK;
    for (size_t g = 0; g < site->n_gates; g++) {
        const sw_step_gate *sg = sw_stepper_gate_at(st, g);
        const sw_gate *gate = &site->gates[g].gate;
        sw_crit alarm, open;
        sw_error ignored; /* a failed search leaves the columns empty */
        if (!sg->known)
            continue;
        /* critical levels only here, where they are asked for */
        int ok = sw_gate_critical_tailwater(gate, sg->result.headwater_m,
                                            SW_LIMIT_ALARM, &alarm,
                                            &ignored) == SW_OK &&
                 sw_gate_critical_tailwater(gate, sg->result.headwater_m,
                                            SW_LIMIT_OPEN, &open,
                                            &ignored) == SW_OK;
        sw_report_step_row(out[OUT_STEPS].fp, sw_stepper_time(st), gate->name,
                           &sg->result, ok ? &alarm : NULL,
                           ok ? &open : NULL, site->zone);
    }
    return SW_OK;
}

/* summary.json: the rows of summary.csv, numbers as numbers (jsonout.h). */
static int write_json(FILE *fp, const sw_site *site, const sw_stepper *st,
                      sw_time_ms t0, sw_time_ms t1, sw_error *err)
{
    int bad = 0, rc;
    json_t *doc = json_object(), *rows = json_array();

    for (size_t i = 0; i < site->n_gates && rows != NULL; i++)
        if (json_array_append_new(
                rows, sw_json_summary_row(site->gates[i].gate.name, t0, t1,
                                          sw_stepper_tally(st, i),
                                          site->zone)) != 0)
            bad = 1;
    sw_json_set(doc, "sillwatch_version", json_string(SW_VERSION), &bad);
    sw_json_set(doc, "site", json_string(site->name), &bad);
    sw_json_set(doc, "site_file", json_string(site->path), &bad);
    sw_json_set(doc, "start", sw_json_time(t0, site->zone), &bad);
    sw_json_set(doc, "end", sw_json_time(t1, site->zone), &bad);
    sw_json_set(doc, "gates", rows, &bad);
    sw_json_set(doc, "caution", json_string(sw_cli_caution), &bad);
    rc = sw_json_write(bad ? NULL : doc, fp, err);
    json_decref(doc);
    return rc;
}

int sw_cmd_run(int argc, char **argv)
{
    run_opts o;
    sw_site site;
    sw_stepper *st = NULL;
    sw_html_report *rep = NULL;
    sw_outfile out[N_OUT];
    sw_error err;
    int rc, done = 0, exit_code;
    long steps = 0;
    int show_progress;
    struct timespec last, now;

    memset(out, 0, sizeof out);
    if ((rc = parse_args(argc, argv, &o)) != 0)
        return rc < 0 ? SW_EXIT_OK : rc;
    if (sw_site_load(&site, o.site_path, &err) != SW_OK)
        return sw_cli_report(&err);
    if ((rc = sw_cli_apply_series(&site, o.series, o.n_series, "run")) != 0) {
        sw_site_fini(&site);
        return rc;
    }

    signal(SIGINT, on_signal);
    signal(SIGTERM, on_signal);
    /* the report draws every point and sums the months */
    sw_stepper_options sopt = {o.by_month || o.report, o.steps || o.report};
    if ((rc = sw_stepper_alloc(&st, &site, &sopt, &err)) != SW_OK)
        goto fail;
    if (o.report && (rc = sw_html_report_alloc(&rep, &site, &err)) != SW_OK)
        goto fail;
    if ((rc = sw_cli_make_outdir(o.outdir, &err)) != SW_OK)
        goto fail;
    for (int k = 0; k < N_OUT; k++) {
        if ((k == OUT_STEPS && !o.steps) || (k == OUT_MONTHS && !o.by_month) ||
            (k == OUT_REPORT && !o.report) || (k == OUT_JSON && !o.json))
            continue;
        if ((rc = sw_outfile_open(&out[k], o.outdir, out_names[k], &err)) !=
            SW_OK)
            goto fail;
    }
    sw_report_summary_header(out[OUT_SUMMARY].fp);
    sw_report_events_header(out[OUT_EVENTS].fp);
    if (o.steps)
        sw_report_steps_header(out[OUT_STEPS].fp);
    if (o.by_month)
        sw_report_months_header(out[OUT_MONTHS].fp);

    show_progress = !o.quiet && isatty(STDERR_FILENO);
    clock_gettime(CLOCK_MONOTONIC, &last);
    while (!done) {
        if ((rc = sw_stepper_advance(st, &done, &err)) != SW_OK)
            goto fail;
        if (interrupted)
            goto stop;
        if (!done) {
            if ((rc = write_step(st, &site, out, &o, rep, &err)) != SW_OK)
                goto fail;
            steps++;
        }
        if (show_progress && (steps & 4095) == 0) {
            clock_gettime(CLOCK_MONOTONIC, &now);
            if (now.tv_sec - last.tv_sec >= 1) {
                progress(st, &site, steps);
                last = now;
            }
        }
    }
    if ((rc = sw_stepper_finish(st, &err)) != SW_OK)
        goto fail;
    if (!sw_stepper_has_data(st)) {
        rc = sw_error_set(&err, SW_EDATA, site.path, 0, 0,
                          "the level series hold no valid reading: nothing "
                          "to replay");
        goto fail;
    }
    if ((rc = write_step(st, &site, out, &o, rep, &err)) != SW_OK)
        goto fail;
    if (show_progress)
        fputs("\r\033[K", stderr);

    {
        sw_time_ms t0, t1;
        sw_stepper_span(st, &t0, &t1);
        for (size_t i = 0; i < site.n_gates; i++)
            sw_report_summary_row(out[OUT_SUMMARY].fp, site.gates[i].gate.name,
                                  t0, t1, sw_stepper_tally(st, i), site.zone);
        if (o.json && (rc = write_json(out[OUT_JSON].fp, &site, st, t0, t1,
                                       &err)) != SW_OK)
            goto fail;
    }
    if (o.report) {
        char sha[SW_CLI_SHA256_HEX], when[32];
        sw_html_meta meta = {sha, when, SW_VERSION, sw_cli_caution};
        if ((rc = sw_cli_sha256_file(site.path, sha, &err)) != SW_OK)
            goto fail;
        if (sw_cli_generation_time(when, sizeof when) != 0)
            snprintf(when, sizeof when, "(SOURCE_DATE_EPOCH unreadable)");
        if ((rc = sw_html_report_write(rep, out[OUT_REPORT].fp, st, &meta,
                                       &err)) != SW_OK)
            goto fail;
    }
    for (int k = 0; k < N_OUT; k++)
        if ((rc = sw_outfile_close(&out[k], &err)) != SW_OK)
            goto fail;
    if (interrupted)
        goto stop;
    for (int k = 0; k < N_OUT; k++)
        if ((rc = sw_outfile_publish(&out[k], &err)) != SW_OK)
            goto fail;

    exit_code = SW_EXIT_OK;
    for (size_t i = 0; i < site.n_gates; i++) {
        const sw_tally *t = sw_stepper_tally(st, i);
        sw_time_ms t0, t1;
        sw_stepper_span(st, &t0, &t1);
        if (t->low > 0 || t->open > 0)
            exit_code = SW_EXIT_BELOW;
        if (t->evaluated < t1 - t0 && !o.quiet) {
            char h[24];
            sw_report_hours_text(h, sizeof h, (t1 - t0) - t->evaluated);
            fprintf(stderr, "sillwatch: warning: gate %s: %s h without level "
                    "data were not evaluated; they are not counted as "
                    "safe\n", site.gates[i].gate.name, h);
        }
    }
    if (!o.quiet) {
        print_summary(&site, st);
        print_quality(&site, st);
        printf("\noutputs in %s: summary.csv, events.csv%s%s%s%s\n",
               o.outdir, o.steps ? ", steps.csv" : "",
               o.by_month ? ", months.csv" : "",
               o.report ? ", report.html" : "",
               o.json ? ", summary.json" : "");
        fputs(sw_cli_caution, stdout);
    }
    sw_html_report_free(rep);
    sw_stepper_free(st);
    sw_site_fini(&site);
    return exit_code;

stop:
    if (show_progress)
        fputs("\n", stderr);
    fprintf(stderr, "sillwatch: run: interrupted; earlier outputs in %s are "
                    "left as they were\n", o.outdir);
    for (int k = 0; k < N_OUT; k++)
        sw_outfile_abort(&out[k]);
    sw_html_report_free(rep);
    sw_stepper_free(st);
    sw_site_fini(&site);
    return 130;

fail:
    for (int k = 0; k < N_OUT; k++)
        sw_outfile_abort(&out[k]);
    sw_html_report_free(rep);
    sw_stepper_free(st);
    sw_site_fini(&site);
    return sw_cli_report(&err);
}
