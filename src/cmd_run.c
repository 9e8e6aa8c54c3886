/* sillwatch run: replay logged or forecast levels through every gate. */
#define _DEFAULT_SOURCE /* getopt_long */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "sillwatch/cancel.h"
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
    "  flags.csv     readings that failed a quality test of their series\n"
    "                (valid_range, spike, max_rate, flat): removed\n"
    "  steps.csv     with --steps: every gate at every time step, with\n"
    "                its critical tailwaters\n"
    "  months.csv    with --by month: the summary per calendar month\n"
    "  report.html   with --report: the season report, one page with\n"
    "                charts and tables, to open, print or attach\n"
    "  summary.json  with --json: summary.csv for scripts (numbers as\n"
    "                numbers)\n"
    "  manifest.csv  written last: each file's size and SHA-256; a folder\n"
    "                without it holds no complete set\n"
    "The files are put in place as one set: a failed or interrupted run\n"
    "leaves the previous set as it was.\n"
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
    "2 usage, 3 site file, 4 level data, 5 output, 130 (SIGINT) or 143\n"
    "(SIGTERM) interrupted; see 'sillwatch --help'.\n"
    "\n";

enum {
    OUT_SUMMARY, OUT_EVENTS, OUT_FLAGS, OUT_STEPS, OUT_MONTHS, OUT_REPORT,
    OUT_JSON, N_OUT
};
static const char *const out_names[N_OUT] = {
    "summary.csv", "events.csv",  "flags.csv",   "steps.csv",
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
    sw_cli_print_fs_basis(site);
}

/* The flagged readings of a series: counts per test, the first ten. */
static void print_flags(const sw_site *site, const sw_site_series *sr,
                        const sw_qc_stats *qs, long flagged)
{
    char when[64];

    if (flagged == 0)
        return;
    printf("    flagged by the quality tests (removed like missing "
           "readings):");
    for (int k = 0, first = 1; k < SW_QC_N_TESTS; k++)
        if (qs->flagged[k] > 0) {
            printf("%s %ld %s", first ? "" : ",", qs->flagged[k],
                   sw_qc_test_name(k));
            first = 0;
        }
    printf("\n");
    for (size_t k = 0; k < qs->n_kept; k++) {
        sw_time_format(when, sizeof when, qs->kept[k].t, site->zone);
        printf("    %s:%ld: %s: %.4f m at %s\n", sr->path, qs->kept[k].line,
               sw_qc_test_name(qs->kept[k].test), qs->kept[k].v_m, when);
    }
    if (flagged > (long)qs->n_kept)
        printf("    ... and %ld more flagged (all in flags.csv)\n",
               flagged - (long)qs->n_kept);
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
        const sw_qc_stats *qs = sw_stepper_qc_stats(st, i);
        long flagged = 0;
        for (int k = 0; k < SW_QC_N_TESTS; k++)
            flagged += qs->flagged[k];
        /* every row is one of these, so the account adds up */
        printf("  series %s (%s, column %s): %ld rows = %ld valid + %ld "
               "missing + %ld rejected + %ld flagged + %ld duplicate + %ld "
               "in a skipped hour\n",
               sr->name, sr->path, sr->value_column, rs->records,
               cs->valid - flagged, cs->missing, cs->rejected, flagged,
               rs->duplicates, rs->time_rejected);
        if (rs->duplicates > 0)
            printf("    %ld duplicate row%s skipped (first on line %ld)\n",
                   rs->duplicates, rs->duplicates == 1 ? "" : "s",
                   rs->first_duplicate_line);
        print_flags(site, sr, qs, flagged);
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
        if (rs->partial_line > 0)
            printf("    line %ld: the last line, without a line end, was left "
                   "out: the file changed while it was read\n",
                   rs->partial_line);
        if (rs->unresolved > 0)
            printf("    %ld row(s) in a repeated daylight-saving hour could not "
                   "be placed by order and were taken as the first "
                   "occurrence; first on line %ld\n",
                   rs->unresolved, rs->first_unresolved_line);
    }
}

/* Series without valid_range whose levels leave the plausible band of
 * their gates: a unit or offset slip? (a warning, not a rejection) */
static void warn_implausible(const sw_site *site, const sw_stepper *st)
{
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_site_series *sr = sw_stepper_series(st, i);
        double lo, hi, band_lo, band_hi;
        if (sr->qc.range_set || !sw_stepper_level_extent(st, i, &lo, &hi) ||
            !sw_qc_plausible_band(site, sr->name, &band_lo, &band_hi))
            continue;
        if (hi > band_hi || lo < band_lo)
            sw_cli_warn_implausible(sr, lo, hi, band_lo, band_hi);
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
                      sw_html_report *rep, sw_event_log *log, sw_error *err)
{
    const sw_event *ev;
    const sw_month_row *mo;
    const sw_stepper_flag *fl;
    size_t n = sw_stepper_flags(st, &fl);
    int rc;

    for (size_t i = 0; i < n; i++) {
        const sw_site_series *sr = sw_stepper_series(st, fl[i].series);
        sw_report_flag_row(out[OUT_FLAGS].fp, sr->name, sr->path,
                           &fl[i].reading, site->zone);
        if (rep != NULL)
            sw_html_report_flag(rep, sr, &fl[i].reading);
    }
    if (!sw_stepper_passed(st))
        return SW_OK; /* flags only: no point passed */
    n = sw_stepper_events(st, &ev);

    for (size_t i = 0; i < n; i++) {
        if ((rc = sw_event_log_add(log, &ev[i], err)) != SW_OK)
            return rc;
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

/* The command line as typed, for the report's provenance: arguments
 * with characters a shell would read are single-quoted. */
static void command_line(char *buf, size_t n, int argc, char **argv)
{
    size_t used = (size_t)snprintf(buf, n, "sillwatch");
    for (int i = 0; i < argc && used < n; i++) {
        const char *a = argv[i];
        int plain = a[0] != '\0' && strspn(a, "abcdefghijklmnopqrstuvwxyz"
                                               "ABCDEFGHIJKLMNOPQRSTUVWXYZ"
                                               "0123456789-_./=:,+@%") ==
                                           strlen(a);
        used += (size_t)snprintf(buf + used, n - used, plain ? " %s" : " '",
                                 a);
        if (plain)
            continue;
        for (; *a != '\0' && used + 5 < n; a++)
            used += (size_t)snprintf(buf + used, n - used,
                                     *a == '\'' ? "'\\''" : "%c", *a);
        if (used < n)
            used += (size_t)snprintf(buf + used, n - used, "'");
    }
}

/* Write the season report: every level file's SHA-256 joins the site's,
 * the generation time and the command line already in meta. */
static int write_report(const sw_html_report *rep, FILE *fp,
                        const sw_stepper *st, const sw_html_meta *base,
                        sw_error *err)
{
    size_t n = sw_stepper_n_series(st);
    char (*hex)[SW_CLI_SHA256_HEX] = calloc(n + 1, sizeof *hex);
    const char **hexp = calloc(n + 1, sizeof *hexp);
    sw_html_meta meta = *base;
    int rc = SW_OK;

    if (hex == NULL || hexp == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
        goto done;
    }
    for (size_t i = 0; i < n && rc == SW_OK; i++) {
        rc = sw_cli_sha256_file(sw_stepper_series(st, i)->path, hex[i], err);
        hexp[i] = hex[i];
    }
    meta.series_sha256 = hexp;
    if (rc == SW_OK)
        rc = sw_html_report_write(rep, fp, st, &meta, err);
done:
    free(hex);
    free(hexp);
    return rc;
}

static int run_interrupted(const char *outdir)
{
    char what[SW_ERROR_PATH_MAX + 64];
    snprintf(what, sizeof what, "earlier outputs in %s are left as they were",
             outdir);
    return sw_cli_interrupted("run", what);
}

/* summary.json: the rows of summary.csv, numbers as numbers (jsonout.h). */
static int write_json(FILE *fp, const sw_site *site, const sw_stepper *st,
                      sw_time_ms t0, sw_time_ms t1, sw_error *err)
{
    int bad = 0, rc;
    json_t *doc = json_object(), *rows = json_array();

    for (size_t i = 0; i < site->n_gates && rows != NULL; i++) {
        const sw_gate *g = &site->gates[i].gate;
        json_t *row = sw_json_summary_row(g->name, t0, t1,
                                          sw_stepper_tally(st, i), site->zone);
        /* min_fs is on this basis */
        sw_json_set(row, "fs_basis", json_string(sw_fs_basis_name(g->fs_basis)),
                    &bad);
        if (json_array_append_new(rows, row) != 0)
            bad = 1;
    }
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
    sw_event_log *log = NULL;
    sw_outfile out[N_OUT];
    sw_error err;
    int rc, done = 0, exit_code;
    long steps = 0;
    int show_progress;
    struct timespec last, now;
    char cmd[2048];

    memset(out, 0, sizeof out);
    command_line(cmd, sizeof cmd, argc, argv); /* before getopt permutes */
    if ((rc = parse_args(argc, argv, &o)) != 0)
        return rc < 0 ? SW_EXIT_OK : rc;
    if (sw_site_load(&site, o.site_path, &err) != SW_OK)
        return sw_cli_report(&err);
    if ((rc = sw_cli_apply_series(&site, o.series, o.n_series, "run")) != 0) {
        sw_site_fini(&site);
        return rc;
    }

    /* the report draws every point and sums the months */
    sw_stepper_options sopt = {o.by_month || o.report, o.steps || o.report};
    if ((rc = sw_stepper_alloc(&st, &site, &sopt, &err)) != SW_OK)
        goto fail;
    if (o.report && (rc = sw_html_report_alloc(&rep, &site, &err)) != SW_OK)
        goto fail;
    if ((rc = sw_event_log_alloc(&log, site.n_gates, &err)) != SW_OK)
        goto fail;
    if ((rc = sw_cli_make_outdir(o.outdir, &err)) != SW_OK ||
        (rc = sw_cli_recover(o.outdir, o.quiet, &err)) != SW_OK)
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
    sw_report_flags_header(out[OUT_FLAGS].fp);
    if (o.steps)
        sw_report_steps_header(out[OUT_STEPS].fp);
    if (o.by_month)
        sw_report_months_header(out[OUT_MONTHS].fp);

    show_progress = !o.quiet && isatty(STDERR_FILENO);
    clock_gettime(CLOCK_MONOTONIC, &last);
    while (!done) {
        if ((rc = sw_stepper_advance(st, &done, &err)) != SW_OK)
            goto fail;
        if (sw_cancel_requested())
            goto stop;
        if (!done) {
            if ((rc = write_step(st, &site, out, &o, rep, log, &err)) !=
                SW_OK)
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
        rc = sw_stepper_no_data_error(st, &err);
        goto fail;
    }
    if ((rc = write_step(st, &site, out, &o, rep, log, &err)) != SW_OK ||
        (rc = sw_event_log_write(log, out[OUT_EVENTS].fp, &site, &err)) !=
            SW_OK)
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
    char sha[SW_CLI_SHA256_HEX], when[32];
    if ((rc = sw_cli_site_sha256(&site, sha, &err)) != SW_OK)
        goto fail;
    if (sw_cli_generation_time(when, sizeof when) != 0)
        snprintf(when, sizeof when, "(SOURCE_DATE_EPOCH unreadable)");
    if (o.report) {
        sw_html_meta meta = {sha, when, SW_VERSION, sw_cli_caution, cmd, NULL};
        if ((rc = write_report(rep, out[OUT_REPORT].fp, st, &meta, &err)) !=
            SW_OK)
            goto fail;
    }
    for (int k = 0; k < N_OUT; k++)
        if ((rc = sw_outfile_close(&out[k], &err)) != SW_OK)
            goto fail;
    if (sw_cancel_requested())
        goto stop;
    {
        sw_outset_meta mm = {SW_VERSION, sha, when};
        if ((rc = sw_outset_publish(o.outdir, out, out_names, N_OUT, &mm,
                                    &err)) != SW_OK)
            goto fail;
    }

    exit_code = SW_EXIT_OK;
    for (size_t i = 0; i < site.n_gates; i++) {
        const sw_tally *t = sw_stepper_tally(st, i);
        sw_time_ms t0, t1;
        sw_stepper_span(st, &t0, &t1);
        if (t->low > 0 || t->open > 0)
            exit_code = SW_EXIT_BELOW;
        if (t->evaluated < t1 - t0 && !o.quiet) {
            char h[24], hg[24], he[24];
            sw_time_ms edge = sw_stepper_unknown_edge(st, i);
            sw_report_hours_text(h, sizeof h, (t1 - t0) - t->evaluated);
            /* each part rounded once, as the gaps of the data-quality
             * account are */
            sw_time_ms in_gaps = (t1 - t0) - t->evaluated - edge;
            sw_report_hours_text(hg, sizeof hg, in_gaps);
            sw_report_hours_text(he, sizeof he, edge);
            /* say where the hours come from: gaps, series ends */
            char why[160];
            if (edge == 0)
                snprintf(why, sizeof why, "in gaps longer than max_gap");
            else if (in_gaps == 0)
                snprintf(why, sizeof why, "before a series began or after "
                         "it ended");
            else
                snprintf(why, sizeof why, "%s h in gaps longer than "
                         "max_gap, %s h before a series began or after it "
                         "ended", hg, he);
            fprintf(stderr, "sillwatch: warning: gate %s: %s h without level "
                    "data were not evaluated (%s); they are not counted as "
                    "safe\n", site.gates[i].gate.name, h, why);
        }
    }
    for (size_t i = 0; i < sw_stepper_n_series(st) && !o.quiet; i++) {
        const sw_reader_stats *rs = sw_stepper_reader_stats(st, i);
        if (rs->partial_line > 0)
            fprintf(stderr, "sillwatch: warning: %s:%ld: the last line has "
                            "no line end and the file changed while it was "
                            "read (a writer was still at it); it is left "
                            "out\n",
                    sw_stepper_series(st, i)->path, rs->partial_line);
    }
    if (!o.quiet)
        warn_implausible(&site, st);
    if (!o.quiet) {
        print_summary(&site, st);
        print_quality(&site, st);
        printf("\noutputs in %s: summary.csv, events.csv, flags.csv%s%s%s%s, "
               "manifest.csv\n", o.outdir,
               o.steps ? ", steps.csv" : "", o.by_month ? ", months.csv" : "",
               o.report ? ", report.html" : "",
               o.json ? ", summary.json" : "");
        fputs(sw_cli_caution, stdout);
    }
    sw_html_report_free(rep);
    sw_event_log_free(log);
    sw_stepper_free(st);
    sw_site_fini(&site);
    return exit_code;

stop:
    if (show_progress)
        fputs("\n", stderr);
    for (int k = 0; k < N_OUT; k++)
        sw_outfile_abort(&out[k]);
    sw_html_report_free(rep);
    sw_event_log_free(log);
    sw_stepper_free(st);
    sw_site_fini(&site);
    return run_interrupted(o.outdir);

fail:
    for (int k = 0; k < N_OUT; k++)
        sw_outfile_abort(&out[k]);
    sw_html_report_free(rep);
    sw_event_log_free(log);
    sw_stepper_free(st);
    sw_site_fini(&site);
    if (rc == SW_EINTERRUPTED)
        return run_interrupted(o.outdir);
    return sw_cli_report(&err);
}
