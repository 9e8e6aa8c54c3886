/* sillwatch thresholds: publish alarm-threshold tables for controllers. */
#define _DEFAULT_SOURCE /* getopt_long, gmtime_r */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "cli.h"
#include "sillwatch/cancel.h"
#include "sillwatch/csvout.h"
#include "sillwatch/outfile.h"
#include "sillwatch/site.h"
#include "sillwatch/jobs.h"
#include "sillwatch/thresholds.h"
#include "sillwatch/uncert.h"

/* Most samples of a table: each keeps a copy of every gate (about 250
 * bytes) and two shifts. */
#define THR_MAX_SAMPLES 100000

static const char thresholds_help[] =
    "Usage: sillwatch thresholds SITE.ini (--headwater FROM:TO:STEP |\n"
    "                            --tailwater FROM:TO:STEP) [--gate NAME]...\n"
    "                            [--simplify TOL] -o FILE\n"
    "                            [--confidence P --samples N [--seed S]\n"
    "                            [-j N]]\n"
    "Write a table of alarm thresholds for controllers: over a range of one\n"
    "water level, each gate's critical level of the other water for the\n"
    "alarm limit (the required margin) and the open limit (the leaf stays\n"
    "shut), and the governing value over the gates with the gate that sets\n"
    "it.  Values are in m, rounded to 0.1 mm toward the safe side.\n"
    "\n"
    "  --headwater FROM:TO:STEP  rows are headwaters; values are the\n"
    "                            tailwaters to stay above (tw_alarm,\n"
    "                            tw_open); the highest governs; empty:\n"
    "                            not needed\n"
    "  --tailwater FROM:TO:STEP  rows are tailwaters; values are the\n"
    "                            headwaters to stay below (hw_alarm,\n"
    "                            hw_open); the lowest governs; 'none': the\n"
    "                            limit fails even with no headwater on the\n"
    "                            leaf, and governs\n"
    "  --gate NAME               only this gate (repeatable; default: every\n"
    "                            gate)\n"
    "  --simplify TOL            instead of every level, breakpoints chosen\n"
    "                            greedily (not proven minimal) whose linear\n"
    "                            interpolation stays within TOL m (at least\n"
    "                            0.0005) of every exact curve\n"
    "  --confidence P            with --samples: publish the levels that hold\n"
    "                            with probability P (0 < P < 1) over N\n"
    "                            samples of the site file's uncertain keys\n"
    "                            (X_sd): the upper P-quantile of each\n"
    "                            critical tailwater, the lower of each\n"
    "                            critical headwater; levels as the gates'\n"
    "                            gauges show them\n"
    "  --samples N               samples for --confidence (1 to 100000)\n"
    "  --seed S                  the seed of the draws (default: a fixed one,\n"
    "                            written in the header)\n"
    "  -j, --jobs N              threads for the samples (default:\n"
    "                            processors); the table does not depend on it\n"
    "  -o, --output FILE         the CSV file, written whole or not at all;\n"
    "                            '-' for standard output\n"
    "  -h, --help                show this help and exit\n"
    "      --version             show the version and exit\n"
    "\n"
    "FROM, TO and STEP are plain decimals with at most 4 decimals (m);\n"
    "STEP > 0, TO >= FROM, at most 1000000 levels.  The file starts with a\n"
    "'#' block: version, site file and its SHA-256, margins, densities,\n"
    "gravity, generation time (SOURCE_DATE_EPOCH if set), mode, caution.\n"
    "\n"
    "Exit status: 0 table written, 2 usage, 3 site file, 5 output,\n"
    "6 numerical failure, 130 (SIGINT) or 143 (SIGTERM) interrupted; see\n"
    "'sillwatch --help'.\n"
    "\n";

typedef struct thr_opts {
    const char *site_path, *output;
    const char *gates[SW_THRESHOLDS_MAX_GATES];
    size_t n_named;
    int have_range;
    sw_thresholds_axis axis;
    sw_thresholds_range range;
    double tol_m; /* 0: the regular grid */
    double confidence;  /* 0: no samples */
    size_t n_samples;
    uint64_t seed;
    unsigned workers;
} thr_opts;

/* Parse the command line into *o.  Returns 0 to go on, -1 after --help,
 * or an exit code. */
static int parse_args(int argc, char **argv, thr_opts *o)
{
    static const struct option opts[] = {
        {"headwater", required_argument, NULL, 'u'},
        {"tailwater", required_argument, NULL, 'd'},
        {"gate", required_argument, NULL, 'g'},
        {"simplify", required_argument, NULL, 's'},
        {"output", required_argument, NULL, 'o'},
        {"confidence", required_argument, NULL, 'c'},
        {"samples", required_argument, NULL, 'n'},
        {"seed", required_argument, NULL, 'e'},
        {"jobs", required_argument, NULL, 'j'},
        {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},
        {NULL, 0, NULL, 0},
    };
    const char *range_opt = NULL;
    int opt, rc, seed_given = 0, jobs_given = 0;
    sw_error err;

    memset(o, 0, sizeof *o);
    o->seed = SW_UNCERT_DEFAULT_SEED;
    o->workers = sw_jobs_default_workers();
    opterr = 0;
    while ((opt = getopt_long(argc, argv, ":ho:j:", opts, NULL)) != -1) {
        switch (opt) {
        case 'c':
            if (sw_cli_parse_number(optarg, &o->confidence) != 0 ||
                !(o->confidence > 0.0 && o->confidence < 1.0))
                return sw_cli_usage_error(
                    "thresholds",
                    "--confidence: '%s' is not a probability between 0 and "
                    "1 (such as 0.95)",
                    optarg);
            break;
        case 'n':
            if ((rc = sw_cli_take_samples("thresholds", optarg,
                                          &o->n_samples)) != 0)
                return rc;
            if (o->n_samples > THR_MAX_SAMPLES)
                return sw_cli_usage_error("thresholds",
                                          "--samples: at most %d for a "
                                          "table, not %s",
                                          THR_MAX_SAMPLES, optarg);
            break;
        case 'e':
            if ((rc = sw_cli_take_seed("thresholds", optarg, &o->seed)) != 0)
                return rc;
            seed_given = 1;
            break;
        case 'j':
            if ((rc = sw_cli_take_jobs("thresholds", optarg, &o->workers)) !=
                0)
                return rc;
            jobs_given = 1;
            break;
        case 'u':
        case 'd': {
            const char *name = opt == 'u' ? "--headwater" : "--tailwater";
            if (range_opt != NULL)
                return sw_cli_usage_error(
                    "thresholds",
                    strcmp(range_opt, name) == 0
                        ? "%s given twice"
                        : "give --headwater or --tailwater, not both%.0s",
                    name);
            range_opt = name;
            if (sw_thresholds_parse_range(optarg, &o->range, &err) != SW_OK)
                return sw_cli_usage_error("thresholds", "%s: %s", name,
                                          err.message);
            o->axis = opt == 'u' ? SW_THRESHOLDS_BY_HEADWATER
                                 : SW_THRESHOLDS_BY_TAILWATER;
            o->have_range = 1;
            break;
        }
        case 'g':
            if (o->n_named == SW_THRESHOLDS_MAX_GATES)
                return sw_cli_usage_error("thresholds",
                                          "too many --gate options");
            o->gates[o->n_named++] = optarg;
            break;
        case 's':
            if (sw_cli_parse_number(optarg, &o->tol_m) != 0)
                return sw_cli_usage_error(
                    "thresholds", "--simplify: '%s' is not a tolerance in "
                                  "metres", optarg);
            if (!(o->tol_m >= SW_THRESHOLDS_MIN_TOL_M))
                return sw_cli_usage_error(
                    "thresholds",
                    "--simplify: TOL must be at least %.4f m (five times "
                    "the table's 0.1 mm resolution), not '%s'",
                    SW_THRESHOLDS_MIN_TOL_M, optarg);
            break;
        case 'o':
            o->output = optarg;
            break;
        case 'V':
            sw_cli_version();
            return -1;
        case 'h':
            fputs(thresholds_help, stdout);
            fputs(sw_cli_caution, stdout);
            return -1;
        case ':':
            return sw_cli_usage_error("thresholds",
                                      "option '%s' needs a value",
                                      argv[optind - 1]);
        default:
            return sw_cli_usage_error("thresholds", "unknown option '%s'",
                                      argv[optind - 1]);
        }
    }
    if (optind != argc - 1)
        return sw_cli_usage_error("thresholds",
                                  optind >= argc ? "no site file given"
                                                 : "give one site file, not "
                                                   "%d",
                                  argc - optind);
    o->site_path = argv[optind];
    if (strcmp(o->site_path, "-") == 0)
        return sw_cli_usage_error("thresholds",
                                  "the site file cannot be standard input "
                                  "here: the table records its SHA-256; "
                                  "give its name");
    if (!o->have_range)
        return sw_cli_usage_error("thresholds",
                                  "give the levels with --headwater "
                                  "FROM:TO:STEP or --tailwater FROM:TO:STEP");
    if (o->output == NULL)
        return sw_cli_usage_error("thresholds",
                                  "give the output file with -o FILE");
    if ((o->confidence > 0.0) != (o->n_samples > 0))
        return sw_cli_usage_error("thresholds",
                                  o->n_samples > 0
                                      ? "--samples is for --confidence: "
                                        "give --confidence P too"
                                      : "--confidence needs --samples N");
    if (o->n_samples == 0 && (seed_given || jobs_given))
        return sw_cli_usage_error("thresholds", "%s is for --confidence "
                                                "and --samples",
                                  seed_given ? "--seed" : "--jobs");
    return 0;
}

/* Write text on one header line: control bytes and '\' as \ooo, so that a
 * strange path cannot break the '#' block. */
static void put_escaped(FILE *fp, const char *s)
{
    for (; *s != '\0'; s++) {
        unsigned char c = (unsigned char)*s;
        if (c < 0x20 || c == 0x7f || c == '\\')
            fprintf(fp, "\\%03o", c);
        else
            fputc(c, fp);
    }
}

/* Column names: tw_* by headwater, hw_* by tailwater. */
typedef struct names {
    const char *level, *value;
} names;

static names names_of(sw_thresholds_axis axis)
{
    names n;
    n.level = axis == SW_THRESHOLDS_BY_HEADWATER ? "headwater" : "tailwater";
    n.value = axis == SW_THRESHOLDS_BY_HEADWATER ? "tw" : "hw";
    return n;
}

static const char *const limit_name[SW_THRESHOLDS_N_LIMITS] = {"alarm",
                                                                "open"};

/* One value: %.4f (the levels are already on the 0.1 mm grid), empty for
 * "not needed", "none" for unattainable. */
static void put_crit(FILE *fp, const sw_crit *c)
{
    if (c->kind == SW_CRIT_LEVEL)
        fprintf(fp, "%.4f", c->level_m);
    else if (c->kind == SW_CRIT_UNATTAINABLE)
        fputs("none", fp);
}

/* A column's name, "tw_alarm_m[west]" or "tw_alarm_m", into buf[n]. */
static void curve_name(char *buf, size_t n, const thr_opts *o,
                       const sw_gate *const *gates, size_t n_gates,
                       size_t curve)
{
    names nm = names_of(o->axis);
    if (curve < 2 * n_gates)
        snprintf(buf, n, "%s_%s_m[%s]", nm.value, limit_name[curve % 2],
                 gates[curve / 2]->name);
    else
        snprintf(buf, n, "%s_%s_m", nm.value, limit_name[curve - 2 * n_gates]);
}

static void put_curve_name(FILE *fp, const thr_opts *o,
                           const sw_gate *const *gates, size_t n_gates,
                           size_t curve)
{
    char buf[SW_SITE_NAME_MAX + 32];
    curve_name(buf, sizeof buf, o, gates, n_gates, curve);
    fputs(buf, fp);
}

static void put_step_value(FILE *fp, const thr_opts *o, double v)
{
    if (isnan(v))
        fputs(o->axis == SW_THRESHOLDS_BY_HEADWATER ? "not needed" : "none",
              fp);
    else
        fprintf(fp, "%.4f", sw_thresholds_round(o->axis, v));
}

/* What a table with a confidence means (by headwater or tailwater). */
static void write_confidence(FILE *fp, const thr_opts *o, const sw_uncert *u)
{
    double p = o->confidence;
    if (o->axis == SW_THRESHOLDS_BY_HEADWATER)
        fprintf(fp,
                "# confidence: %g: each gate's value is the upper "
                "%g-quantile of its critical tailwater over the\n#   "
                "samples (Hyndman and Fan 1996, definition 7): the limit "
                "holds above it in %g %% of them\n",
                p, p, 100.0 * p);
    else
        fprintf(fp,
                "# confidence: %g: each gate's value is the lower "
                "%g-quantile of its critical headwater over the\n#   "
                "samples (Hyndman and Fan 1996, definition 7): the limit "
                "holds below it in %g %% of them\n",
                p, 1.0 - p, 100.0 * p);
    fputs("#   levels (rows and values) as the gates' gauges show them: a "
          "gauge's drawn datum moves the\n#   true level; the governing "
          "value is chosen over the gates' quantiles: it holds for each\n"
          "#   gate with that probability, not for all of them at once\n",
          fp);
    sw_cli_print_uncert(fp, "# ", u, o->n_samples);
}

static void write_header(FILE *fp, const thr_opts *o, const sw_site *site,
                         const char *sha, const char *when,
                         const sw_gate *const *gates, size_t n_gates,
                         const sw_thresholds *t, const sw_thresholds_fit *fit,
                         const sw_uncert *u)
{
    names nm = names_of(o->axis);
    const sw_thresholds_range *r = &o->range;
    int by_hw = o->axis == SW_THRESHOLDS_BY_HEADWATER;
    enum { MAX_STEPS_SHOWN = 20 };

    fprintf(fp, "# sillwatch %s thresholds\n# site file: ", SW_VERSION);
    put_escaped(fp, o->site_path);
    fprintf(fp, "\n# site file sha256: %s (check with sha256sum)\n", sha);
    fputs("# site name: ", fp);
    put_escaped(fp, site->name);
    fprintf(fp, "\n# generated: %s\n", when);
    fprintf(fp,
            "# rows: %s from %.4f to %.4f m, step %.4f m (%zu levels)\n",
            nm.level, r->from_m,
            sw_thresholds_level(r, r->n_levels - 1), r->step_m, r->n_levels);
    if (by_hw)
        fputs("# values: tw_alarm_m = the tailwater to stay above for the "
              "required margin (state ok),\n#   tw_open_m = the tailwater "
              "to stay above to keep the leaf shut; empty = not needed (the "
              "limit\n#   holds at any tailwater); m, rounded up to 0.1 mm "
              "(the safe side)\n"
              "# governing: tw_alarm_m and tw_open_m without [gate] are the "
              "highest over the gates;\n#   *_gate names the gate that sets "
              "it (the first on a tie); both empty where no gate needs a "
              "tailwater\n",
              fp);
    else
        fputs("# values: hw_alarm_m = the headwater to stay below for the "
              "required margin (state ok),\n#   hw_open_m = the headwater "
              "to stay below to keep the leaf shut; none = the limit fails "
              "even\n#   with the headwater below the leaf; m, rounded down "
              "to 0.1 mm (the safe side)\n"
              "# governing: hw_alarm_m and hw_open_m without [gate] are the "
              "lowest over the gates, and\n#   none where any gate has none; "
              "*_gate names the gate that sets it (the first on a tie or\n#"
              "   among several with none)\n",
              fp);
    if (u != NULL)
        write_confidence(fp, o, u);
    if (fit == NULL)
        fputs("# mode: grid (every level of the range)\n", fp);
    else {
        fprintf(fp,
                "# mode: simplified: %zu breakpoints for %zu grid levels; "
                "interpolate linearly between rows,\n#   never across an "
                "empty field or none (the change lies within the 0.1 mm "
                "between such rows)\n"
                "# tolerance: %.4f m; achieved max error: %.4f m (checked at "
                "%zu fine levels, spacing %.4f m,\n#   and at %zu midpoints "
                "between them%s)\n",
                sw_thresholds_n_rows(t), r->n_levels, fit->tol_m,
                fit->max_error_m, fit->n_fine, fit->fine_step_m,
                fit->n_midpoints,
                u != NULL ? ", against the quantile curves" : "");
        for (size_t i = 0; i < fit->n_steps && i < MAX_STEPS_SHOWN; i++) {
            sw_thresholds_step s;
            sw_thresholds_get_step(t, i, &s);
            fputs("# step (not within tolerance inside): ", fp);
            put_curve_name(fp, o, gates, n_gates, s.curve);
            fputs(" goes from ", fp);
            put_step_value(fp, o, s.before_m);
            fputs(" to ", fp);
            put_step_value(fp, o, s.after_m);
            fprintf(fp, " between %s %.4f and %.4f m\n", nm.level, s.from_m,
                    s.to_m);
        }
        if (fit->n_steps > MAX_STEPS_SHOWN)
            fprintf(fp, "# ... and %zu more steps\n",
                    fit->n_steps - MAX_STEPS_SHOWN);
    }
    fprintf(fp, "# gravity: %.5f m/s^2\n", site->g_ms2);
    fprintf(fp, "# water density: upstream %.3f kg/m^3, downstream %.3f "
                "kg/m^3\n",
            site->water[SW_UPSTREAM].rho_kgm3,
            site->water[SW_DOWNSTREAM].rho_kgm3);
    for (size_t g = 0; g < n_gates; g++)
        fprintf(fp,
                "# gate %s: required_fs %.6g on fs_basis %s (%s), "
                "min_sill_reaction %.6g N\n",
                gates[g]->name, gates[g]->required_fs,
                sw_fs_basis_name(gates[g]->fs_basis),
                sw_fs_basis_phrase(gates[g]->fs_basis),
                gates[g]->min_sill_reaction_N);
    fputs("# caution: hydrostatic screening only (no waves, surges, debris, "
          "ice or friction);\n#   not a structural assessment; defer to "
          "local codes and a licensed engineer\n",
          fp);

    fprintf(fp, "%s_m", nm.level);
    for (size_t c = 0; c < 2 * n_gates; c++) {
        char buf[SW_SITE_NAME_MAX + 32];
        fputc(',', fp);
        curve_name(buf, sizeof buf, o, gates, n_gates, c);
        sw_csv_put_field(fp, buf);
    }
    for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++)
        fprintf(fp, ",%s_%s_m,%s_%s_gate", nm.value, limit_name[k], nm.value,
                limit_name[k]);
    fputc('\n', fp);
}

static void write_row(FILE *fp, const sw_thresholds_row *row,
                      const sw_gate *const *gates, size_t n_gates)
{
    fprintf(fp, "%.4f", row->level_m);
    for (size_t c = 0; c < 2 * n_gates; c++) {
        fputc(',', fp);
        put_crit(fp, &row->crit[c]);
    }
    for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++) {
        fputc(',', fp);
        put_crit(fp, &row->governing[k]);
        fputc(',', fp);
        if (row->governing_gate[k] != SW_THRESHOLDS_NO_GATE)
            sw_csv_put_field(fp, gates[row->governing_gate[k]]->name);
    }
    fputc('\n', fp);
}

/* --confidence: the samples of the table's gates, drawn on o->workers
 * threads, handed to the table. */
static int draw_samples(const thr_opts *o, const sw_site *site,
                        const sw_gate *const *gates, size_t n_gates,
                        sw_thresholds *t, sw_uncert *u, sw_gate **samples,
                        double **dhw, double **dtw, sw_error *err)
{
    size_t idx[SW_THRESHOLDS_MAX_GATES], n = o->n_samples;
    int rc;

    /* each table gate's index in the site */
    for (size_t i = 0; i < n_gates; i++)
        for (size_t g = 0; g < site->n_gates; g++)
            if (&site->gates[g].gate == gates[i])
                idx[i] = g;
    if ((rc = sw_uncert_init(u, site, o->seed, err)) != SW_OK)
        return rc;
    if (u->n_params == 0)
        fprintf(stderr, "sillwatch: thresholds: warning: no key of %s has "
                        "a standard uncertainty (X_sd): every sample is the "
                        "site as given\n",
                site->path);
    *samples = calloc(n * n_gates, sizeof **samples);
    *dhw = calloc(n * n_gates, sizeof **dhw);
    *dtw = calloc(n * n_gates, sizeof **dtw);
    if (*samples == NULL || *dhw == NULL || *dtw == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                            "out of memory for %zu samples", n);
    if ((rc = sw_uncert_draw_gates(u, n, idx, n_gates, o->workers, *samples,
                                   *dhw, *dtw, err)) != SW_OK)
        return rc;
    return sw_thresholds_set_samples(t, *samples, *dhw, *dtw, n,
                                     o->confidence, o->workers, err);
}

static void free_samples(sw_uncert *u, sw_gate *samples, double *dhw,
                         double *dtw)
{
    sw_uncert_fini(u);
    free(samples);
    free(dhw);
    free(dtw);
}

int sw_cmd_thresholds(int argc, char **argv)
{
    thr_opts o;
    sw_site site;
    sw_thresholds *t = NULL;
    sw_thresholds_fit fit;
    sw_outfile out;
    sw_error err;
    const sw_gate *gates[SW_THRESHOLDS_MAX_GATES];
    size_t n_gates = 0;
    char dir[SW_ERROR_PATH_MAX], sha[SW_CLI_SHA256_HEX];
    char sha_after[sizeof sha], when[32];
    const char *name = NULL;
    sw_uncert u;
    sw_gate *samples = NULL;
    double *dhw = NULL, *dtw = NULL;
    int rc;

    memset(&out, 0, sizeof out);
    memset(&site, 0, sizeof site);
    memset(&u, 0, sizeof u);
    if ((rc = parse_args(argc, argv, &o)) != 0)
        return rc < 0 ? SW_EXIT_OK : rc;
    const int to_stdout = strcmp(o.output, "-") == 0;
    FILE *msg = to_stdout ? stderr : stdout; /* stdout holds the table */
    if (!to_stdout && sw_cli_split_path(o.output, dir, sizeof dir, &name) != 0)
        return sw_cli_usage_error("thresholds",
                                  "-o: '%s' does not name a file", o.output);
    if (sw_cli_generation_time(when, sizeof when) != 0)
        return sw_cli_usage_error("thresholds",
                                  "SOURCE_DATE_EPOCH '%s' is not a whole "
                                  "number of seconds since 1970-01-01 "
                                  "(up to year 9999)",
                                  getenv("SOURCE_DATE_EPOCH"));

    /* hash before and after reading, so the digest is that of the file
     * the table was computed from */
    if (sw_cli_sha256_file(o.site_path, sha, &err) != SW_OK)
        return sw_cli_report(&err);
    if (sw_site_load(&site, o.site_path, &err) != SW_OK)
        return sw_cli_report(&err);
    if ((rc = sw_cli_sha256_file(o.site_path, sha_after, &err)) != SW_OK)
        goto fail;
    if (strcmp(sha, sha_after) != 0) {
        sw_error_set(&err, SW_ESITE, o.site_path, 0, 0,
                     "the site file changed while it was read; run again");
        goto fail;
    }
    for (size_t i = 0; i < o.n_named; i++)
        if (sw_site_find_gate(&site, o.gates[i]) == NULL) {
            fprintf(stderr,
                    "sillwatch: thresholds: no gate '%s' in %s; it has:",
                    o.gates[i], site.path);
            for (size_t j = 0; j < site.n_gates; j++)
                fprintf(stderr, " %s", site.gates[j].gate.name);
            fputc('\n', stderr);
            sw_site_fini(&site);
            return SW_EXIT_USAGE;
        }
    for (size_t i = 0; i < site.n_gates && n_gates < SW_THRESHOLDS_MAX_GATES;
         i++) {
        int wanted = o.n_named == 0;
        for (size_t j = 0; j < o.n_named; j++)
            wanted |= strcmp(o.gates[j], site.gates[i].gate.name) == 0;
        if (wanted)
            gates[n_gates++] = &site.gates[i].gate;
    }

    if ((rc = sw_thresholds_alloc(&t, gates, n_gates, o.axis, &o.range,
                                  &err)) != SW_OK)
        goto fail;
    if (o.n_samples > 0 &&
        (rc = draw_samples(&o, &site, gates, n_gates, t, &u, &samples, &dhw,
                           &dtw, &err)) != SW_OK)
        goto fail;
    /* open first: a bad folder shows before the work */
    if (!to_stdout &&
        (rc = sw_cli_open_output_file(&out, o.output, dir, name, 0, &err)) !=
            SW_OK)
        goto fail;
    FILE *fp = to_stdout ? stdout : out.fp;
    if (o.tol_m > 0.0 &&
        (rc = sw_thresholds_simplify(t, o.tol_m, &fit, &err)) != SW_OK)
        goto fail;
    if (sw_cancel_requested())
        goto stop;
    write_header(fp, &o, &site, sha, when, gates, n_gates, t,
                 o.tol_m > 0.0 ? &fit : NULL, o.n_samples > 0 ? &u : NULL);
    for (size_t i = 0; i < sw_thresholds_n_rows(t); i++) {
        const sw_thresholds_row *row;
        if ((rc = sw_thresholds_get_row(t, i, &row, &err)) != SW_OK)
            goto fail;
        write_row(fp, row, gates, n_gates);
        if (sw_cancel_requested())
            goto stop;
    }
    if (to_stdout) {
        if (fflush(stdout) != 0 || ferror(stdout)) {
            rc = sw_error_set(&err, SW_EOUTPUT, NULL, 0, 0,
                              "cannot write the table to standard output");
            goto fail;
        }
    } else {
        if ((rc = sw_outfile_close(&out, &err)) != SW_OK)
            goto fail;
        if (sw_cancel_requested())
            goto stop;
        if ((rc = sw_outfile_publish(&out, &err)) != SW_OK)
            goto fail;
    }

    if (o.tol_m > 0.0) {
        fprintf(msg, "wrote %s: %zu breakpoints for %zu %s levels, max "
               "error %.4f m (tolerance %.4f m)\n",
               to_stdout ? "standard output" : o.output, sw_thresholds_n_rows(t), o.range.n_levels,
               names_of(o.axis).level, fit.max_error_m, fit.tol_m);
        if (fit.n_steps > 0)
            fprintf(stderr,
                    "sillwatch: warning: %zu step%s where a curve changes "
                    "faster than 0.1 mm of level can show; listed in the "
                    "file's header\n",
                    fit.n_steps, fit.n_steps == 1 ? "" : "s");
    } else {
        fprintf(msg, "wrote %s: %zu %s levels\n",
                to_stdout ? "standard output" : o.output, o.range.n_levels,
                names_of(o.axis).level);
    }
    if (o.n_samples > 0)
        fprintf(msg, "values with confidence %g over %zu samples (seed "
                     "%llu)\n",
                o.confidence, o.n_samples, (unsigned long long)o.seed);
    fputs(sw_cli_caution, msg);
    sw_thresholds_free(t);
    free_samples(&u, samples, dhw, dtw);
    sw_site_fini(&site);
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fprintf(stderr, "sillwatch: thresholds: could not write the "
                        "output\n");
        return SW_EXIT_OUTPUT;
    }
    return SW_EXIT_OK;

fail:
    if (rc != SW_EINTERRUPTED) {
        sw_outfile_abort(&out);
        sw_thresholds_free(t);
        free_samples(&u, samples, dhw, dtw);
        sw_site_fini(&site);
        return sw_cli_report(&err);
    }
stop:
    sw_outfile_abort(&out);
    sw_thresholds_free(t);
    free_samples(&u, samples, dhw, dtw);
    sw_site_fini(&site);
    {
        char what[SW_ERROR_PATH_MAX + 32];
        snprintf(what, sizeof what, "%s is left as it was", o.output);
        return sw_cli_interrupted("thresholds",
                                  to_stdout ? "the table on standard output "
                                              "is incomplete"
                                            : what);
    }
}
