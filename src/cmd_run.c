/* sillwatch run: replay logged or forecast levels through every gate. */
#define _DEFAULT_SOURCE /* getopt_long */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "sillwatch/cancel.h"
#include "sillwatch/fleet.h"
#include "sillwatch/jobs.h"
#include "sillwatch/replay.h"
#include "sillwatch/report.h"
#include "sillwatch/samplerun.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"
#include "sillwatch/uncert.h"

static const char run_help[] =
    "Usage: sillwatch run SITE.ini -o OUTDIR [--series NAME=FILE]...\n"
    "                     [--steps] [--by month] [--report] [--json]\n"
    "                     [--quiet] [--samples N [--seed S] [-j N]]\n"
    "       sillwatch run SITE.ini SITE.ini... -o OUTDIR [-j N] [options]\n"
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
    "  samples.csv   with --samples: per gate, over N replays of samples of\n"
    "                the site file's uncertain keys (X_sd): hours below\n"
    "                margin and open (5/50/95 %), how often it fell below\n"
    "                its margin and opened at all, least fs\n"
    "  sample_steps.csv  with --samples and --steps: the fraction of\n"
    "                samples low and open at every time step\n"
    "  manifest.csv  written last: each file's size and SHA-256; a folder\n"
    "                without it holds no complete set\n"
    "The files are put in place as one set: a failed or interrupted run\n"
    "leaves the previous set as it was.\n"
    "With several site files, each site is replayed exactly as alone, into\n"
    "OUTDIR/<site file name without .ini>/, on N worker processes; a failed\n"
    "site does not stop the others; the exit status is the worst.\n"
    "\n"
    "  -o, --output OUTDIR    the folder for the outputs\n"
    "  --series NAME=FILE     read series NAME from FILE instead of the\n"
    "                         site's file (a forecast, a corrected log)\n"
    "  --steps                write steps.csv\n"
    "  --by month             write months.csv\n"
    "  --report               write report.html\n"
    "  --json                 write summary.json\n"
    "  --samples N            also replay N samples of the uncertain keys\n"
    "                         (1 to 1000000) and write samples.csv\n"
    "  --seed S               the seed of the draws (default: a fixed one,\n"
    "                         printed)\n"
    "  -j, --jobs N           several sites: N at a time; with --samples:\n"
    "                         worker processes for the samples (default:\n"
    "                         the number of processors)\n"
    "  -q, --quiet            print nothing but errors\n"
    "  -h, --help             show this help and exit\n"
    "      --version          show the version and exit\n"
    "\n"
    "Exit status: 0 every gate held its margin, 1 some gate was low or open,\n"
    "2 usage, 3 site file, 4 level data, 5 output, 130 (SIGINT) or 143\n"
    "(SIGTERM) interrupted; see 'sillwatch --help'.\n"
    "\n";

typedef struct run_opts {
    const char *site_path, *outdir;
    char *const *sites; /* several site files: each in OUTDIR/<stem>/ */
    size_t n_sites;
    unsigned jobs;      /* worker processes for several sites */
    int steps, by_month, report, json, quiet;
    const char *series[64];
    size_t n_series;
    size_t n_samples;   /* --samples; 0: none */
    uint64_t seed;
    int seed_given;
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
        {"jobs", required_argument, NULL, 'j'},
        {"samples", required_argument, NULL, 'n'},
        {"seed", required_argument, NULL, 'e'},
        {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},
        {NULL, 0, NULL, 0},
    };
    int opt, rc;

    memset(o, 0, sizeof *o);
    opterr = 0;
    o->jobs = sw_jobs_default_workers();
    o->seed = SW_UNCERT_DEFAULT_SEED;
    while ((opt = getopt_long(argc, argv, ":o:j:qh", opts, NULL)) != -1) {
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
        case 'n':
            if ((rc = sw_cli_take_samples("run", optarg, &o->n_samples)) != 0)
                return rc;
            break;
        case 'e':
            if ((rc = sw_cli_take_seed("run", optarg, &o->seed)) != 0)
                return rc;
            o->seed_given = 1;
            break;
        case 'j':
            if ((rc = sw_cli_parse_jobs("run", optarg, &o->jobs)) != 0)
                return rc;
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
    if (o->seed_given && o->n_samples == 0)
        return sw_cli_usage_error("run", "--seed is for --samples: give "
                                         "--samples N too");
    if (argc - optind > 1 && o->n_samples > 0)
        return sw_cli_usage_error("run", "--samples replays one site: give "
                                         "one site file with it");
    if (argc - optind > 1)
        return sw_cli_sites_operands("run", argc, argv, o->outdir,
                                     o->n_series, &o->sites, &o->n_sites);
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

/* Gate i had `missing` ms without level data: say how much and where
 * from (gaps, series ends), each part rounded once as the data-quality
 * account rounds its gaps. */
static void warn_not_evaluated(const sw_site *site, const sw_stepper *st,
                               size_t i, sw_time_ms missing, int name_site)
{
    char h[24], hg[24], he[24], why[160];
    sw_time_ms edge = sw_stepper_unknown_edge(st, i);
    sw_time_ms in_gaps = missing - edge;

    sw_report_hours_text(h, sizeof h, missing);
    sw_report_hours_text(hg, sizeof hg, in_gaps);
    sw_report_hours_text(he, sizeof he, edge);
    if (edge == 0)
        snprintf(why, sizeof why, "in gaps longer than max_gap");
    else if (in_gaps == 0)
        snprintf(why, sizeof why, "before a series began or after it ended");
    else
        snprintf(why, sizeof why, "%s h in gaps longer than max_gap, %s h "
                 "before a series began or after it ended", hg, he);
    fprintf(stderr, "sillwatch: warning: %s%s%sgate %s: %s h without level "
            "data were not evaluated (%s); they are not counted as safe\n",
            name_site ? "site " : "", name_site ? site->path : "",
            name_site ? ": " : "", site->gates[i].gate.name, h, why);
}

static void progress(const sw_stepper *st, const sw_site *site, long steps)
{
    char when[64];
    sw_time_format(when, sizeof when, sw_stepper_time(st), site->zone);
    fprintf(stderr, "\rsillwatch: replaying %s  (%ld steps)   ", when, steps);
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

static int run_interrupted(const char *outdir)
{
    char what[SW_ERROR_PATH_MAX + 64];
    snprintf(what, sizeof what, "earlier outputs in %s are left as they were",
             outdir);
    return sw_cli_interrupted("run", what);
}

/* Feed the session to its end, showing progress on a terminal. */
static int replay_all(sw_replay *rp, const sw_site *site, int show_progress,
                      sw_error *err)
{
    struct timespec last, now;
    int done = 0, rc = SW_OK;

    clock_gettime(CLOCK_MONOTONIC, &last);
    while (!done && (rc = sw_replay_feed(rp, 4096, &done, err)) == SW_OK) {
        if (!show_progress)
            continue;
        clock_gettime(CLOCK_MONOTONIC, &now);
        if (now.tv_sec - last.tv_sec >= 1) {
            progress(sw_replay_stepper(rp), site, sw_replay_points(rp));
            last = now;
        }
    }
    if (show_progress)
        fputs(rc == SW_OK ? "\r\033[K" : "\n", stderr);
    return rc;
}

/* Warnings on standard error: hours not evaluated and why, last lines
 * left out, implausible levels. */
static void warn_after(const sw_site *site, const sw_stepper *st,
                       int name_site)
{
    sw_time_ms t0, t1;
    sw_stepper_span(st, &t0, &t1);
    for (size_t i = 0; i < site->n_gates; i++) {
        const sw_tally *t = sw_stepper_tally(st, i);
        if (t->evaluated < t1 - t0)
            warn_not_evaluated(site, st, i, (t1 - t0) - t->evaluated,
                               name_site);
    }
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_reader_stats *rs = sw_stepper_reader_stats(st, i);
        if (rs->partial_line > 0)
            fprintf(stderr, "sillwatch: warning: %s:%ld: the last line has "
                            "no line end and the file changed while it was "
                            "read (a writer was still at it); it is left "
                            "out\n",
                    sw_stepper_series(st, i)->path, rs->partial_line);
    }
    warn_implausible(site, st);
}

/* 1 when some gate was low or open. */
static int any_below(const sw_site *site, const sw_stepper *st)
{
    for (size_t i = 0; i < site->n_gates; i++) {
        const sw_tally *t = sw_stepper_tally(st, i);
        if (t->low > 0 || t->open > 0)
            return 1;
    }
    return 0;
}

static void sample_progress(size_t done, size_t n, void *ctx)
{
    (void)ctx;
    fprintf(stderr, "\rsillwatch: sampled replays: %zu of %zu   ", done, n);
}

/* The sampled replays' table on standard output. */
static void print_samples(const sw_site *site, const sw_samplerun *sr)
{
    printf("\nsampled replays (samples.csv): ");
    sw_cli_print_uncert(stdout, "", sr->u, sr->n);
    printf("%-12s %-29s %-29s %-16s %-16s\n", "gate",
           "below margin h 5/50/95 %", "open h 5/50/95 %", "P(below once)",
           "P(open once)");
    for (size_t g = 0; g < site->n_gates; g++) {
        sw_samplerun_stats st;
        sw_error err;
        char h[6][24], col[2][80];
        if (sw_samplerun_stats_of(sr, g, &st, &err) != SW_OK)
            return;
        for (int p = 0; p < 3; p++) {
            snprintf(h[p], sizeof h[p], "%lld.%04lld", st.below4[p] / 10000,
                     st.below4[p] % 10000);
            snprintf(h[3 + p], sizeof h[3 + p], "%lld.%04lld",
                     st.open4[p] / 10000, st.open4[p] % 10000);
        }
        snprintf(col[0], sizeof col[0], "%s %s %s", h[0], h[1], h[2]);
        snprintf(col[1], sizeof col[1], "%s %s %s", h[3], h[4], h[5]);
        printf("%-12s %-29s %-29s %.3f +- %.3f  %.3f +- %.3f\n",
               site->gates[g].gate.name, col[0], col[1], st.p_below,
               st.p_below_se, st.p_open, st.p_open_se);
    }
    printf("(+-: the Monte Carlo standard error; percentiles: Hyndman and Fan "
           "(1996)\ndefinition 7; a probability covers the keys' stated "
           "uncertainties only)\n");
}

/* 1 when some gate fell below its margin in some sample. */
static int any_sample_below(const sw_samplerun *sr)
{
    for (size_t i = 0; i < sr->n * sr->n_gates; i++)
        if (sr->tally[i].below_seen)
            return 1;
    return 0;
}

/* --samples: the site's samples replayed on worker processes before the
 * site's own replay, so that samples.csv joins its set. */
static int run_samples(const run_opts *o, const sw_site *site,
                       sw_uncert *u, sw_samplerun *sr, int show_progress,
                       sw_error *err)
{
    int rc;
    if ((rc = sw_uncert_init(u, site, o->seed, err)) != SW_OK)
        return rc;
    if (u->n_params == 0 && !o->quiet)
        fprintf(stderr, "sillwatch: run: warning: no key of %s has a "
                        "standard uncertainty (X_sd): every sample is the "
                        "site as given\n",
                site->path);
    rc = sw_samplerun_run(sr, u, o->n_samples, o->jobs, o->steps,
                          show_progress ? sample_progress : NULL, NULL, err);
    if (show_progress)
        fputs(rc == SW_OK ? "\r\033[K" : "\n", stderr);
    return rc;
}

/* Replay one site into `outdir` (made if missing); print its summary
 * unless `brief` or quiet.  Returns the exit status. */
static int run_site(const run_opts *o, const char *site_path,
                    const char *outdir, const char *cmd, int brief)
{
    sw_site site;
    sw_replay *rp = NULL;
    sw_error err;
    sw_uncert u;
    sw_samplerun sr;
    int rc;

    memset(&u, 0, sizeof u);
    memset(&sr, 0, sizeof sr);
    char sha[SW_CLI_SHA256_HEX], when[32];

    if (sw_site_load(&site, site_path, &err) != SW_OK)
        return sw_cli_report(&err);
    if ((rc = sw_cli_apply_series(&site, o->series, o->n_series, "run")) !=
        0) {
        sw_site_fini(&site);
        return rc;
    }
    sw_replay_options ropt = {o->steps, o->by_month, o->report, o->json};
    int show_progress = !o->quiet && !brief && isatty(STDERR_FILENO);
    if ((rc = sw_cli_make_outdir(outdir, &err)) != SW_OK ||
        (rc = sw_cli_recover(outdir, o->quiet, &err)) != SW_OK ||
        (o->n_samples > 0 &&
         (rc = run_samples(o, &site, &u, &sr, show_progress, &err)) !=
             SW_OK) ||
        (rc = sw_replay_open(&rp, &site, outdir, &ropt, &err)) != SW_OK ||
        (o->n_samples > 0 &&
         (rc = sw_replay_add_samples(rp, &sr, &err)) != SW_OK) ||
        (rc = replay_all(rp, &site, show_progress, &err)) != SW_OK ||
        (rc = sw_cli_site_sha256(&site, sha, &err)) != SW_OK)
        goto fail;
    if (sw_cli_generation_time(when, sizeof when) != 0)
        snprintf(when, sizeof when, "(SOURCE_DATE_EPOCH unreadable)");
    sw_replay_meta meta = {SW_VERSION, sha, when, sw_cli_caution, cmd};
    if ((rc = sw_replay_finish(rp, &meta, &err)) != SW_OK)
        goto fail;

    const sw_stepper *st = sw_replay_stepper(rp);
    int exit_code = any_below(&site, st) ||
                            (o->n_samples > 0 && any_sample_below(&sr))
                        ? SW_EXIT_BELOW
                        : SW_EXIT_OK;
    if (!o->quiet)
        warn_after(&site, st, brief);
    if (!o->quiet && !brief) {
        print_summary(&site, st);
        if (o->n_samples > 0)
            print_samples(&site, &sr);
        print_quality(&site, st);
        printf("\noutputs in %s: summary.csv, events.csv, flags.csv%s%s%s%s%s%s, "
               "manifest.csv\n", outdir,
               o->steps ? ", steps.csv" : "",
               o->by_month ? ", months.csv" : "",
               o->report ? ", report.html" : "",
               o->json ? ", summary.json" : "",
               o->n_samples > 0 ? ", samples.csv" : "",
               o->n_samples > 0 && o->steps ? ", sample_steps.csv" : "");
        fputs(sw_cli_caution, stdout);
    }
    sw_replay_free(rp);
    sw_samplerun_fini(&sr);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
    return exit_code;

fail:
    sw_replay_free(rp);
    sw_samplerun_fini(&sr);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
    if (rc == SW_EINTERRUPTED)
        return run_interrupted(outdir);
    return sw_cli_report(&err);
}

/* OUTDIR/fleet.csv: the summaries of the sites that ran (exit 0 or 1),
 * each folder checked against its manifest (fleet.h).  Returns SW_OK or
 * an error in *err. */
static int fleet_table(const run_opts *o, char (*dir)[SW_ERROR_PATH_MAX],
                       const int *status, sw_error *err)
{
    const char **dirs = calloc(o->n_sites + 1, sizeof *dirs);
    sw_fleet_entry *entries = calloc(o->n_sites + 1, sizeof *entries);
    sw_outfile out;
    char path[SW_ERROR_PATH_MAX];
    size_t n = 0;
    int rc;

    memset(&out, 0, sizeof out);
    if (dirs == NULL || entries == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
        goto done;
    }
    for (size_t i = 0; i < o->n_sites; i++)
        if (status[i] == SW_EXIT_OK || status[i] == SW_EXIT_BELOW)
            dirs[n++] = dir[i];
    snprintf(path, sizeof path, "%s/fleet.csv", o->outdir);
    if ((rc = sw_cli_open_output_file(&out, path, o->outdir, "fleet.csv",
                                      o->quiet, err)) != SW_OK ||
        (rc = sw_fleet_write_each(out.fp, dirs, n, entries, err)) != SW_OK)
        goto done;
    for (size_t i = 0; i < n; i++)
        if (entries[i].status != SW_OK) { /* a set that ran but fails its
                                             own manifest: say so */
            sw_cli_report(&entries[i].err);
            rc = sw_error_set(err, SW_EDATA, dirs[i], 0, 0,
                              "left out of fleet.csv");
            goto done;
        }
    if ((rc = sw_outfile_close(&out, err)) == SW_OK)
        rc = sw_outfile_publish(&out, err);
done:
    sw_outfile_abort(&out);
    free(dirs);
    free(entries);
    return rc;
}

/* Several sites, each replayed in OUTDIR/<stem>/ exactly as a single run,
 * on o->jobs worker processes; then fleet.csv. */
typedef struct fleet_ctx {
    const run_opts *o;
    const char *cmd;
} fleet_ctx;

static int fleet_one(size_t i, const char *site, const char *dir, void *ctx)
{
    const fleet_ctx *f = ctx;
    (void)i;
    return run_site(f->o, site, dir, f->cmd, 1);
}

/* After the sites ran: fleet.csv. */
static int fleet_after(char (*dir)[SW_ERROR_PATH_MAX], const int *status,
                       void *ctx)
{
    const fleet_ctx *f = ctx;
    sw_error err;
    if (fleet_table(f->o, dir, status, &err) != SW_OK)
        return sw_cli_report(&err);
    if (!f->o->quiet)
        printf("every site's summary in %s/fleet.csv\n", f->o->outdir);
    return SW_EXIT_OK;
}

static int run_fleet(const run_opts *o, const char *cmd)
{
    fleet_ctx f = {o, cmd};
    sw_cli_sites m = {"run",     "replaying", o->sites,  o->n_sites,
                      o->outdir, o->jobs,     o->quiet,  fleet_one,
                      fleet_after, &f};
    return sw_cli_many_sites(&m);
}

int sw_cmd_run(int argc, char **argv)
{
    run_opts o;
    int rc;
    char cmd[2048];

    command_line(cmd, sizeof cmd, argc, argv); /* before getopt permutes */
    if ((rc = parse_args(argc, argv, &o)) != 0)
        return rc < 0 ? SW_EXIT_OK : rc;
    if (o.n_sites > 1)
        return run_fleet(&o, cmd);
    return run_site(&o, o.site_path, o.outdir, cmd, 0);
}
