/* sillwatch screen: screen a forecast (deterministic or an ensemble)
 * through every gate, and the tailwater a headwater-only forecast needs. */
#define _DEFAULT_SOURCE /* getopt_long */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"
#include "sillwatch/cancel.h"
#include "sillwatch/csvout.h"
#include "sillwatch/jobs.h"
#include "sillwatch/ensemble.h"
#include "sillwatch/jsonout.h"
#include "sillwatch/outfile.h"
#include "sillwatch/report.h"
#include "sillwatch/required.h"
#include "sillwatch/screening.h"
#include "sillwatch/samplerun.h"
#include "sillwatch/series.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"

static const char screen_help[] =
    "Usage: sillwatch screen SITE.ini -o OUTDIR [--series NAME=FILE]...\n"
    "                        [--issued TIME] [--json] [--quiet]\n"
    "                        [--samples N [--seed S] [-j N]]\n"
    "       sillwatch screen SITE.ini SITE.ini... -o OUTDIR [-j N] [options]\n"
    "Screen forecast levels through every gate with the model and stepping\n"
    "of 'run'.  A series whose value_column holds a '*' (tw_*) is an\n"
    "ensemble: each matching column is a member, and each gate is replayed\n"
    "per member (members of its two series paired by label, or every\n"
    "combination with 'ensemble = crossed' in [site]).  Writes in OUTDIR:\n"
    "  forecast.csv   per time step and gate: members known, the fraction\n"
    "                 low and open, and the 10th/50th/90th percentiles of\n"
    "                 factor of safety and sill reaction across members\n"
    "  screen.csv     per gate, for low and for open: the earliest time any\n"
    "                 member gets there, the lead time from --issued, how\n"
    "                 many members do, and the median hours across members\n"
    "  required.csv   for a gate with a headwater series and no tailwater\n"
    "                 series: the tailwater it needs (tw_alarm, tw_open) at\n"
    "                 each time step, per member\n"
    "  required_max.csv  their maxima and when they occur\n"
    "  flags.csv      readings of the member series that failed a quality\n"
    "                 test of their series (removed)\n"
    "  screen.json   with --json: screen.csv for scripts (numbers as\n"
    "                numbers)\n"
    "  screen_samples.csv  with --samples: per gate, over N samples of the\n"
    "                uncertain keys (each screened whole, every member\n"
    "                replayed): the probability that some member falls\n"
    "                below the margin and that some member opens, the\n"
    "                fraction of (sample, member) pairs that do, and the\n"
    "                5/50/95 % lead hours of the earliest time\n"
    "\n"
    "  -o, --output OUTDIR    the folder for the outputs\n"
    "  --series NAME=FILE     read series NAME from FILE\n"
    "  --issued TIME          ISO 8601 time the forecast was issued (lead\n"
    "                         times count from it; default: its first time)\n"
    "  --json                 write screen.json\n"
    "  --samples N            also screen N samples of the uncertain keys\n"
    "                         (1 to 1000000) and write screen_samples.csv\n"
    "  --seed S               the seed of the draws (default: a fixed one,\n"
    "                         printed)\n"
    "  -j, --jobs N           several sites: N at a time; with --samples:\n"
    "                         worker processes for the samples (default:\n"
    "                         the number of processors)\n"
    "  -q, --quiet            print nothing but errors\n"
    "  -h, --help             show this help and exit\n"
    "      --version          show the version and exit\n"
    "\n"
    "  manifest.csv   written last: each file's size and SHA-256; the\n"
    "                 files are put in place as one set, or not at all\n"
    "With several site files, each site is screened exactly as alone, into\n"
    "OUTDIR/<site file name without .ini>/, on N worker processes; a failed\n"
    "site does not stop the others; the exit status is the worst.\n"
    "\n"
    "Exit status: 0 no member of any gate fell below its margin, 1 some did\n"
    "(in the forecast as given or, with --samples, in some sample),\n"
    "2 usage, 3 site file, 4 level data, 5 output, 130 (SIGINT) or 143\n"
    "(SIGTERM) interrupted; see 'sillwatch --help'.\n"
    "\n";

enum {
    OUT_FORECAST, OUT_SCREEN, OUT_REQUIRED, OUT_REQUIRED_MAX, OUT_FLAGS,
    OUT_JSON, OUT_SAMPLES, N_OUT
};
static const char *const out_names[N_OUT] = {
    "forecast.csv", "screen.csv", "required.csv", "required_max.csv",
    "flags.csv", "screen.json", "screen_samples.csv"};

typedef struct screen_opts {
    const char *site_path, *outdir, *issued;
    char *const *sites; /* several site files: each in OUTDIR/<stem>/ */
    size_t n_sites;
    unsigned jobs;
    int quiet, json;
    size_t n_samples; /* --samples; 0: none */
    uint64_t seed;
    int seed_given;
    const char *series[64];
    size_t n_series;
} screen_opts;

static int parse_args(int argc, char **argv, screen_opts *o)
{
    static const struct option opts[] = {
        {"output", required_argument, NULL, 'o'},
        {"series", required_argument, NULL, 's'},
        {"issued", required_argument, NULL, 'i'},
        {"quiet", no_argument, NULL, 'q'},
        {"json", no_argument, NULL, 'J'},
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
        case 'j':
            if ((rc = sw_cli_parse_jobs("screen", optarg, &o->jobs)) != 0)
                return rc;
            break;
        case 's':
            if ((rc = sw_cli_take_series("screen", optarg, o->series,
                                         &o->n_series, sizeof o->series /
                                                       sizeof o->series[0])))
                return rc;
            break;
        case 'i':
            o->issued = optarg;
            break;
        case 'q':
            o->quiet = 1;
            break;
        case 'J':
            o->json = 1;
            break;
        case 'n':
            if ((rc = sw_cli_take_samples("screen", optarg,
                                          &o->n_samples)) != 0)
                return rc;
            break;
        case 'e':
            if ((rc = sw_cli_take_seed("screen", optarg, &o->seed)) != 0)
                return rc;
            o->seed_given = 1;
            break;
        case 'V':
            sw_cli_version();
            return -1;
        case 'h':
            fputs(screen_help, stdout);
            fputs(sw_cli_caution, stdout);
            return -1;
        default:
            return sw_cli_option_error("screen", opt, argv);
        }
    }
    if (o->seed_given && o->n_samples == 0)
        return sw_cli_usage_error("screen", "--seed is for --samples: give "
                                            "--samples N too");
    if (argc - optind > 1 && o->n_samples > 0)
        return sw_cli_usage_error("screen", "--samples screens one site: "
                                            "give one site file with it");
    if (argc - optind > 1)
        return sw_cli_sites_operands("screen", argc, argv, o->outdir,
                                     o->n_series, &o->sites, &o->n_sites);
    return sw_cli_site_operand("screen", argc, argv, o->outdir,
                               &o->site_path);
}

/* Warn of a last line left out because its file grew while it was read
 * (see README, "Level files"). */
static void warn_partial(const char *path, const sw_reader_stats *rs,
                         int quiet)
{
    if (rs->partial_line > 0 && !quiet)
        fprintf(stderr, "sillwatch: warning: %s:%ld: the last line has no "
                        "line end and the file changed while it was read (a "
                        "writer was still at it); it is left out\n",
                path, rs->partial_line);
}

/* A series' file read to its end: its partial-line warning. */
static void member_file(void *ctx, const sw_site_series *sr,
                        const sw_reader_stats *stats)
{
    warn_partial(sr->path, stats, *(const int *)ctx);
}

/* What the terminal lines of the headwater-only series need. */
typedef struct required_ctx {
    int quiet;
    const sw_zone *zone;
} required_ctx;

/* After each headwater-only series: the partial-line warning of its file
 * and, unless quiet, its line on the terminal. */
static void required_line(void *ctx, const sw_site_series *sr,
                          const sw_gate *g, const sw_required_max *m,
                          const sw_reader_stats *stats)
{
    const required_ctx *c = ctx;
    char a[64] = "not needed", b[64] = "not needed", ta[64] = "", tb[64] = "";

    warn_partial(sr->path, stats, c->quiet);
    if (c->quiet)
        return;
    if (m->seen[0]) {
        snprintf(a, sizeof a, "%.3f m", m->max[0]);
        sw_time_format(ta, sizeof ta, m->when[0], c->zone);
    }
    if (m->seen[1]) {
        snprintf(b, sizeof b, "%.3f m", m->max[1]);
        sw_time_format(tb, sizeof tb, m->when[1], c->zone);
    }
    printf("  %-10s %-8s  tw_alarm max %-11s %-26s  tw_open max "
           "%-11s %s\n",
           g->name, sr->name[0] ? sr->name : "-", a, ta, b, tb);
}

/* required.csv and required_max.csv (required.h). */
static int screen_required(const sw_site *site, const sw_ensemble *ens,
                           sw_outfile *out, int quiet, sw_error *err)
{
    sw_required_out ro = {out[OUT_REQUIRED].fp, out[OUT_REQUIRED_MAX].fp,
                          out[OUT_FLAGS].fp};
    required_ctx c = {quiet, site->zone};
    return sw_required_write(site, ens, &ro, required_line, &c, err);
}

/* screen.json: the rows of screen.csv, numbers as numbers (jsonout.h). */
static int write_json(FILE *fp, const sw_site *site, const sw_screen_verdict *vd,
                      size_t n_v, sw_time_ms issued, sw_error *err)
{
    int bad = 0, rc;
    json_t *doc = json_object(), *rows = json_array();

    for (size_t i = 0; i < n_v && rows != NULL; i++) {
        const sw_screen_verdict *v = &vd[i];
        json_t *r = json_object();
        const sw_gate *g = &site->gates[v->gate].gate;
        sw_json_set(r, "gate", json_string(g->name), &bad);
        /* below the margin: on this basis */
        sw_json_set(r, "fs_basis", json_string(sw_fs_basis_name(g->fs_basis)),
                    &bad);
        sw_json_set(r, "members", json_integer((json_int_t)v->s.members), &bad);
        sw_json_set(r, "low_first_time",
                    v->s.low_seen ? sw_json_time(v->s.low_first, site->zone)
                                : json_null(),
                    &bad);
        sw_json_set(r, "low_lead_hours",
                    v->s.low_seen ? sw_json_hours(v->s.low_first - issued)
                                : json_null(),
                    &bad);
        sw_json_set(r, "low_members",
                    json_integer((json_int_t)v->s.low_members), &bad);
        sw_json_set(r, "low_median_hours", sw_json_hours(v->low_median),
                    &bad);
        sw_json_set(r, "open_first_time",
                    v->s.open_seen ? sw_json_time(v->s.open_first, site->zone)
                                 : json_null(),
                    &bad);
        sw_json_set(r, "open_lead_hours",
                    v->s.open_seen ? sw_json_hours(v->s.open_first - issued)
                                 : json_null(),
                    &bad);
        sw_json_set(r, "open_members",
                    json_integer((json_int_t)v->s.open_members), &bad);
        sw_json_set(r, "open_median_hours", sw_json_hours(v->open_median),
                    &bad);
        if (json_array_append_new(rows, r) != 0)
            bad = 1;
    }
    sw_json_set(doc, "sillwatch_version", json_string(SW_VERSION), &bad);
    sw_json_set(doc, "site", json_string(site->name), &bad);
    sw_json_set(doc, "site_file", json_string(site->path), &bad);
    sw_json_set(doc, "issued", sw_json_time(issued, site->zone), &bad);
    sw_json_set(doc, "gates", rows, &bad);
    sw_json_set(doc, "caution", json_string(sw_cli_caution), &bad);
    rc = sw_json_write(bad ? NULL : doc, fp, err);
    json_decref(doc);
    return rc;
}

static void sample_progress(size_t done, size_t n, void *ctx)
{
    (void)ctx;
    fprintf(stderr, "\rsillwatch: sampled screens: %zu of %zu   ", done, n);
}

/* --samples: every sample of the site screened whole on worker processes
 * before the outputs are opened, so that a failed sample leaves the
 * earlier outputs as they were. */
static int screen_samples(const screen_opts *o, const sw_site *site,
                          sw_uncert *u, sw_samplescreen *ss, sw_error *err)
{
    int show_progress = !o->quiet && isatty(STDERR_FILENO);
    int rc;
    if ((rc = sw_uncert_init(u, site, o->seed, err)) != SW_OK)
        return rc;
    if (u->n_params == 0 && !o->quiet)
        fprintf(stderr, "sillwatch: screen: warning: no key of %s has a "
                        "standard uncertainty (X_sd): every sample is the "
                        "site as given\n",
                site->path);
    rc = sw_samplescreen_run(ss, u, o->n_samples, o->jobs,
                             show_progress ? sample_progress : NULL, NULL,
                             err);
    if (show_progress)
        fputs(rc == SW_OK ? "\r\033[K" : "\n", stderr);
    return rc;
}

/* 1 when some member of some gate fell below its margin in some sample. */
static int any_sample_below(const sw_samplescreen *ss)
{
    for (size_t i = 0; i < ss->n * ss->n_gates; i++)
        if (ss->verdict[i].low_seen)
            return 1;
    return 0;
}

/* A lead time in hours (from ms), or "-". */
static void lead_text(char *buf, size_t n, size_t seen, double ms)
{
    if (seen == 0)
        snprintf(buf, n, "-");
    else
        snprintf(buf, n, "%.2f", ms / 3.6e6);
}

/* The sampled screens' table on standard output. */
static void print_samples(const sw_site *site, const sw_samplescreen *ss,
                          sw_time_ms issued)
{
    printf("\nsampled screens (screen_samples.csv): ");
    sw_cli_print_uncert(stdout, "", ss->u, ss->n);
    printf("%-10s %7s  %-16s %-23s  %-16s %-23s\n", "gate", "members",
           "P(some below)", "lead h 5/50/95 %", "P(some open)",
           "lead h 5/50/95 %");
    for (size_t g = 0; g < site->n_gates; g++) {
        sw_samplescreen_stats st;
        sw_error err;
        char l[6][24], col[2][80];
        if (sw_samplescreen_stats_of(ss, g, issued, &st, &err) != SW_OK)
            return;
        if (st.members == 0)
            continue;
        for (int p = 0; p < 3; p++) {
            lead_text(l[p], sizeof l[p], st.n_low, st.low_lead_ms[p]);
            lead_text(l[3 + p], sizeof l[3 + p], st.n_open,
                      st.open_lead_ms[p]);
        }
        snprintf(col[0], sizeof col[0], "%s %s %s", l[0], l[1], l[2]);
        snprintf(col[1], sizeof col[1], "%s %s %s", l[3], l[4], l[5]);
        printf("%-10s %7zu  %.3f +- %.3f  %-23s  %.3f +- %.3f  %-23s\n",
               site->gates[g].gate.name, st.members, st.p_low, st.p_low_se,
               col[0], st.p_open, st.p_open_se, col[1]);
    }
    printf("(+-: the Monte Carlo standard error; lead hours over the samples "
           "where it happens,\npercentiles by Hyndman and Fan (1996) "
           "definition 7; a probability covers the\nkeys' stated "
           "uncertainties only)\n");
}

/* Screen one site into `outdir`; print its tables unless `brief` or
 * quiet.  Returns the exit status. */
static int screen_site(const screen_opts *op, const char *site_path,
                       const char *outdir, int brief)
{
    screen_opts o = *op;
    sw_site site;
    sw_ensemble ens;
    sw_outfile out[N_OUT];
    sw_error err;
    sw_screen_verdict *vd = NULL;
    sw_uncert u;
    sw_samplescreen ss;
    sw_time_ms t0 = 0, issued = 0;
    int rc, have_issued = 0, exit_code = SW_EXIT_OK;

    memset(out, 0, sizeof out);
    memset(&ens, 0, sizeof ens);
    memset(&u, 0, sizeof u);
    memset(&ss, 0, sizeof ss);
    o.outdir = outdir;
    o.quiet = o.quiet || brief;
    if (sw_site_load(&site, site_path, &err) != SW_OK)
        return sw_cli_report(&err);
    if ((rc = sw_cli_apply_series(&site, o.series, o.n_series, "screen")) != 0) {
        sw_site_fini(&site);
        return rc;
    }
    if (o.issued != NULL) {
        sw_stamp stamp;
        sw_time_ms utc[SW_ZONE_MAX_SHOWN];
        if (sw_stamp_parse(o.issued, strlen(o.issued), &stamp, &err) !=
            SW_OK) {
            sw_site_fini(&site);
            return sw_cli_usage_error("screen", "--issued: %s", err.message);
        }
        if (stamp.has_offset) {
            issued = stamp.wall_ms - (sw_time_ms)stamp.offset_s * 1000;
        } else if (site.zone != NULL &&
                   sw_zone_local_to_utc(site.zone, stamp.wall_ms, utc) > 0) {
            issued = utc[0];
        } else {
            sw_site_fini(&site);
            return sw_cli_usage_error("screen", "--issued: '%s' needs a UTC "
                                                "offset (the site sets no "
                                                "timezone, or the local time "
                                                "does not exist)",
                                      o.issued);
        }
        have_issued = 1;
    }

    if ((rc = sw_ensemble_expand(&ens, &site, &err)) != SW_OK)
        goto fail;
    if ((rc = sw_cli_make_outdir(o.outdir, &err)) != SW_OK ||
        (rc = sw_cli_recover(o.outdir, o.quiet, &err)) != SW_OK)
        goto fail;
    if (o.n_samples > 0 &&
        (rc = screen_samples(&o, &site, &u, &ss, &err)) != SW_OK)
        goto fail;
    for (int k = 0; k < N_OUT; k++)
        if ((k != OUT_JSON || o.json) &&
            (k != OUT_SAMPLES || o.n_samples > 0) &&
            (rc = sw_outfile_open(&out[k], o.outdir, out_names[k], &err)) !=
                SW_OK)
            goto fail;
    vd = calloc(site.n_gates ? site.n_gates : 1, sizeof *vd);
    if (vd == NULL) {
        rc = sw_error_set(&err, SW_ENOMEM, NULL, 0, 0, "out of memory");
        goto fail;
    }

    sw_report_flags_header(out[OUT_FLAGS].fp);
    if (!o.quiet && ens.n_hw_only > 0)
        printf("tailwater needed by the headwater-only forecasts:\n");
    if ((rc = screen_required(&site, &ens, out, o.quiet, &err)) != SW_OK)
        goto fail;
    if (ens.site.n_gates > 0 &&
        (rc = sw_screen_members(&site, &ens, out[OUT_FORECAST].fp,
                                out[OUT_FLAGS].fp, vd, &t0, member_file,
                                &o.quiet, &err)) != SW_OK)
        goto fail;
    if (!have_issued)
        issued = t0;

    size_t n_v = sw_screen_order(&ens, vd, site.n_gates);
    sw_screen_csv(out[OUT_SCREEN].fp, &site, vd, n_v, issued);
    for (size_t i = 0; i < n_v; i++)
        if (vd[i].s.low_seen)
            exit_code = SW_EXIT_BELOW;

    if (o.json && (rc = write_json(out[OUT_JSON].fp, &site, vd, n_v, issued,
                                   &err)) != SW_OK)
        goto fail;
    if (o.n_samples > 0) {
        sw_samplescreen_header(out[OUT_SAMPLES].fp);
        if ((rc = sw_samplescreen_write(out[OUT_SAMPLES].fp, &ss, issued,
                                        &err)) != SW_OK)
            goto fail;
        if (any_sample_below(&ss))
            exit_code = SW_EXIT_BELOW;
    }
    for (int k = 0; k < N_OUT; k++)
        if ((rc = sw_outfile_close(&out[k], &err)) != SW_OK)
            goto fail;
    {
        char sha[SW_CLI_SHA256_HEX], when[32];
        sw_outset_meta mm = {SW_VERSION, sha, when};
        if ((rc = sw_cli_site_sha256(&site, sha, &err)) != SW_OK ||
            (rc = sw_cancel_check(&err)) != SW_OK)
            goto fail;
        if (sw_cli_generation_time(when, sizeof when) != 0)
            snprintf(when, sizeof when, "(SOURCE_DATE_EPOCH unreadable)");
        if ((rc = sw_outset_publish(o.outdir, out, out_names, N_OUT, &mm,
                                    &err)) != SW_OK)
            goto fail;
    }

    if (!o.quiet && n_v > 0) {
        char when[64];
        sw_time_format(when, sizeof when, issued, site.zone);
        printf("%sforecast screened from %s (issued), earliest trouble "
               "first:\n",
               ens.n_hw_only > 0 ? "\n" : "", when);
        printf("%-10s %7s  %-26s %8s %7s %8s  %-26s %8s %7s %8s\n", "gate",
               "members", "first below margin", "lead h", "members",
               "median h", "first open", "lead h", "members", "median h");
        for (size_t i = 0; i < n_v; i++) {
            const sw_screen_verdict *v = &vd[i];
            char a[64] = "-", b[64] = "-", la[24] = "-", lb[24] = "-";
            if (v->s.low_seen) {
                sw_time_format(a, sizeof a, v->s.low_first, site.zone);
                snprintf(la, sizeof la, "%.2f",
                         (double)(v->s.low_first - issued) / 3.6e6);
            }
            if (v->s.open_seen) {
                sw_time_format(b, sizeof b, v->s.open_first, site.zone);
                snprintf(lb, sizeof lb, "%.2f",
                         (double)(v->s.open_first - issued) / 3.6e6);
            }
            printf("%-10s %7zu  %-26s %8s %3zu/%-3zu %8.2f  %-26s %8s "
                   "%3zu/%-3zu %8.2f\n",
                   site.gates[v->gate].gate.name, v->s.members, a, la,
                   v->s.low_members, v->s.members,
                   (double)v->low_median / 3.6e6, b, lb, v->s.open_members,
                   v->s.members, (double)v->open_median / 3.6e6);
        }
    }
    if (!o.quiet && o.n_samples > 0)
        print_samples(&site, &ss, issued);
    if (!o.quiet) {
        sw_cli_print_fs_basis(&site);
        printf("\noutputs in %s: forecast.csv, screen.csv, required.csv, "
               "required_max.csv, flags.csv%s%s, manifest.csv\n", o.outdir,
               o.json ? ", screen.json" : "",
               o.n_samples > 0 ? ", screen_samples.csv" : "");
        fputs(sw_cli_caution, stdout);
    }
    free(vd);
    sw_samplescreen_fini(&ss);
    sw_uncert_fini(&u);
    sw_ensemble_fini(&ens);
    sw_site_fini(&site);
    return exit_code;

fail:
    for (int k = 0; k < N_OUT; k++)
        sw_outfile_abort(&out[k]);
    free(vd);
    sw_samplescreen_fini(&ss);
    sw_uncert_fini(&u);
    sw_ensemble_fini(&ens);
    sw_site_fini(&site);
    if (rc == SW_EINTERRUPTED) {
        char what[SW_ERROR_PATH_MAX + 64];
        snprintf(what, sizeof what, "earlier outputs in %s are left as they "
                                    "were", o.outdir);
        return sw_cli_interrupted("screen", what);
    }
    return sw_cli_report(&err);
}

typedef struct fleet_ctx {
    const screen_opts *o;
} fleet_ctx;

static int fleet_one(size_t i, const char *site, const char *dir, void *ctx)
{
    const fleet_ctx *f = ctx;
    (void)i;
    return screen_site(f->o, site, dir, 1);
}

/* Several sites, each screened in OUTDIR/<stem>/ exactly as alone. */
static int screen_fleet(const screen_opts *o)
{
    fleet_ctx f = {o};
    sw_cli_sites m = {"screen",  "screening", o->sites, o->n_sites,
                      o->outdir, o->jobs,     o->quiet, fleet_one,
                      NULL,      &f};
    return sw_cli_many_sites(&m);
}

int sw_cmd_screen(int argc, char **argv)
{
    screen_opts o;
    int rc;

    if ((rc = parse_args(argc, argv, &o)) != 0)
        return rc < 0 ? SW_EXIT_OK : rc;
    if (o.n_sites > 1)
        return screen_fleet(&o);
    return screen_site(&o, o.site_path, o.outdir, 0);
}
