/* sillwatch point: hand-check every gate (or the named ones) at one
 * headwater and tailwater. */
#define _DEFAULT_SOURCE /* getopt_long */
#include <getopt.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "sillwatch/csvout.h"
#include "sillwatch/gate.h"
#include "sillwatch/jobs.h"
#include "sillwatch/jsonout.h"
#include "sillwatch/site.h"
#include "sillwatch/uncert.h"

static const char point_help[] =
    "Usage: sillwatch point SITE.ini --headwater LEVEL --tailwater LEVEL\n"
    "                       [--gate NAME]... [--format text|csv|json]\n"
    "                       [--samples N [--seed S] [-j N]]\n"
    "Evaluate the hydrostatic hinge moments of the site's gates at one pair\n"
    "of water levels (elevations in m above the site datum).\n"
    "\n"
    "  --headwater LEVEL   upstream (retained) water level, m\n"
    "  --tailwater LEVEL   downstream (backing) water level, m\n"
    "  --gate NAME         only this gate (repeatable; default: every gate)\n"
    "  --format FORMAT     text (default): the full hand-check;\n"
    "                      csv: one row per gate (units m, N, N*m);\n"
    "                      json: every load and value, units in the keys\n"
    "  --samples N         propagate the site file's standard uncertainties\n"
    "                      (X_sd keys) by N Monte Carlo samples: per gate,\n"
    "                      P(open), P(low) with standard errors, 5/50/95 %\n"
    "                      percentiles of fs, net moment, tw_alarm, tw_open,\n"
    "                      and each key's share of the net moment's\n"
    "                      variance; the levels are read as the gates'\n"
    "                      gauges show them\n"
    "  --seed S            the seed of the draws (default: a fixed one,\n"
    "                      printed, so that results repeat)\n"
    "  -j, --jobs N        threads for the samples (default: processors)\n"
    "  -h, --help          show this help and exit\n"
    "      --version       show the version and exit\n"
    "\n"
    "The factor of safety is on each gate's fs_basis (site file): net, the\n"
    "default, is the leaf's own restraint R = weight - buoyancy + extra\n"
    "over the net water moment D = headwater - tailwater moment;\n"
    "overturning is the classical Mr / hw_moment.\n"
    "\n"
    "Exit status: 0 every gate ok, 1 some gate low or open (with\n"
    "--samples: in some sample), 2 usage, 3 site file, 6 numerical failure;\n"
    "see 'sillwatch --help'.\n"
    "\n";

/* Where a load acts: s along the leaf, elevation, and lever arm. */
static void print_load(const char *what, double force, double s, double z,
                       double arm, double moment)
{
    if (force == 0.0) {
        printf("  %-22s %14s %10s %10s %10s %15.1f\n", what, "0.0", "-", "-",
               "-", sw_cli_unsigned_zero(moment, 1));
        return;
    }
    printf("  %-22s %14.1f %10.3f %10.3f %10.3f %15.1f\n", what,
           sw_cli_unsigned_zero(force, 1), sw_cli_unsigned_zero(s, 3),
           sw_cli_unsigned_zero(z, 3), sw_cli_unsigned_zero(arm, 3),
           sw_cli_unsigned_zero(moment, 1));
}

static void format_crit(char *buf, size_t n, const sw_crit *c, int headwater)
{
    if (c->kind == SW_CRIT_LEVEL)
        snprintf(buf, n, "%.3f m", c->level_m);
    else if (c->kind == SW_CRIT_NOT_NEEDED)
        snprintf(buf, n, "not needed (holds at any tailwater)");
    else
        snprintf(buf, n, headwater ? "none (fails even with the headwater "
                                     "below the leaf)"
                                   : "none");
}

static const char *state_words(sw_state s)
{
    switch (s) {
    case SW_STATE_OK:
        return "OK: held on its sill with the required margin";
    case SW_STATE_LOW:
        return "LOW: still shut, but below the required margin";
    case SW_STATE_OPEN:
        return "OPEN: sill contact lost; the leaf is on the verge of opening "
               "or open";
    }
    return "?";
}

typedef struct crit_set {
    sw_crit tw_alarm, tw_open, hw_alarm, hw_open;
} crit_set;

static int find_crits(const sw_gate *g, double hw, double tw, crit_set *c,
                      sw_error *err)
{
    int rc;
    if ((rc = sw_gate_critical_tailwater(g, hw, SW_LIMIT_ALARM, &c->tw_alarm,
                                         err)) != SW_OK ||
        (rc = sw_gate_critical_tailwater(g, hw, SW_LIMIT_OPEN, &c->tw_open,
                                         err)) != SW_OK ||
        (rc = sw_gate_critical_headwater(g, tw, SW_LIMIT_ALARM, &c->hw_alarm,
                                         err)) != SW_OK ||
        (rc = sw_gate_critical_headwater(g, tw, SW_LIMIT_OPEN, &c->hw_open,
                                         err)) != SW_OK)
        return rc;
    return SW_OK;
}

static void print_text(const sw_site_gate *sg, const sw_gate_result *r,
                       const crit_set *c)
{
    const sw_gate *g = &sg->gate;
    double z_hw = g->hinge_level_m - r->hw_cp_m * g->sin_a;
    double z_tw = g->hinge_level_m - r->tw_cp_m * g->sin_a;
    double cg_x = g->cg_along_m * g->cos_a + g->cg_offset_m * g->sin_a;
    double cg_z = g->hinge_level_m - g->cg_along_m * g->sin_a +
                  g->cg_offset_m * g->cos_a;
    double b_s = r->buoyancy_at_m;
    char buf[4][96];

    printf("gate %s: %s opening", g->name, sw_shape_name(g->shape));
    if (g->shape == SW_SHAPE_RECTANGLE)
        printf(" %.3f m along the leaf x %.3f m wide", g->seal_height_m,
               g->seal_width_m);
    else
        printf(" %.3f m diameter", g->diameter_m);
    printf("\n  hinge %.3f m, inclined %.2f deg, sill %.3f m, required "
           "factor of safety %.2f\n",
           g->hinge_level_m, g->inclination_deg, g->sill_level_m,
           g->required_fs);
    printf("  headwater %.3f m, tailwater %.3f m\n\n", r->headwater_m,
           r->tailwater_m);
    printf("  %-22s %14s %10s %10s %10s %15s\n", "load", "force (N)",
           "at s (m)", "elev. (m)", "arm (m)", "moment (N*m)");
    print_load("headwater (opens)", r->hw_force_N, r->hw_cp_m, z_hw,
               r->hw_cp_m, -r->hw_moment_Nm);
    print_load("tailwater (holds)", r->tw_force_N, r->tw_cp_m, z_tw,
               r->tw_cp_m, r->tw_moment_Nm);
    print_load("weight", g->mass_kg * g->g_ms2, g->cg_along_m, cg_z, cg_x,
               r->weight_moment_Nm);
    print_load(r->buoyancy_side == SW_UPSTREAM ? "buoyancy (headwater)"
                                               : "buoyancy (tailwater)",
               r->buoyancy_force_N, b_s,
               g->hinge_level_m - b_s * g->sin_a, r->buoyancy_arm_m,
               -r->buoyancy_moment_Nm);
    printf("  %-22s %14s %10s %10s %10s %15.1f\n", "extra moment", "", "", "",
           "", sw_cli_unsigned_zero(r->extra_moment_Nm, 1));
    printf("  (moments + hold the leaf shut, - open it; water forces act "
           "normal to the leaf,\n   so their arm is s; weight and buoyancy "
           "act vertically, so theirs is horizontal)\n\n");
    printf("  resisting moment Mr   %15.1f N*m\n",
           sw_cli_unsigned_zero(r->resisting_moment_Nm, 1));
    printf("  driving moment        %15.1f N*m (headwater)\n",
           sw_cli_unsigned_zero(r->hw_moment_Nm, 1));
    printf("  net moment            %15.1f N*m\n",
           sw_cli_unsigned_zero(r->net_moment_Nm, 1));
    printf("  leaf's restraint R    %15.1f N*m (weight - buoyancy + extra)\n",
           sw_cli_unsigned_zero(r->restraint_Nm, 1));
    printf("  net water moment D    %15.1f N*m (headwater - tailwater)\n",
           sw_cli_unsigned_zero(r->net_water_moment_Nm, 1));
    if (isinf(r->fs))
        printf("  factor of safety      %15s     (required %.2f; %s)\n",
               r->fs > 0 ? "infinite" : "-infinite", g->required_fs,
               sw_fs_basis_phrase(g->fs_basis));
    else
        printf("  factor of safety      %15.3f     (required %.2f; %s)\n",
               r->fs, g->required_fs, sw_fs_basis_phrase(g->fs_basis));
    printf("  sill reaction         %15.1f N   (minimum %.1f N)\n",
           sw_cli_unsigned_zero(r->sill_reaction_N, 1), g->min_sill_reaction_N);
    printf("  state                 %s\n", state_words(r->state));
    format_crit(buf[0], sizeof buf[0], &c->tw_alarm, 0);
    format_crit(buf[1], sizeof buf[1], &c->tw_open, 0);
    format_crit(buf[2], sizeof buf[2], &c->hw_alarm, 1);
    format_crit(buf[3], sizeof buf[3], &c->hw_open, 1);
    printf("  at this headwater, the tailwater must stay above:\n"
           "    for the required margin (tw_alarm)  %s\n"
           "    to keep the leaf shut (tw_open)     %s\n",
           buf[0], buf[1]);
    printf("  at this tailwater, the headwater must stay below:\n"
           "    for the required margin (hw_alarm)  %s\n"
           "    to keep the leaf shut (hw_open)     %s\n\n",
           buf[2], buf[3]);
}

static void csv_number(double v)
{
    if (isinf(v))
        fputs(v > 0 ? "inf" : "-inf", stdout);
    else
        printf("%.12g", sw_cli_unsigned_zero(v, -1));
}

static void csv_crit(const sw_crit *c)
{
    if (c->kind == SW_CRIT_LEVEL)
        printf("%.12g", sw_cli_unsigned_zero(c->level_m, -1));
}

static void print_csv_row(const sw_gate *g, const sw_gate_result *r,
                          const crit_set *c)
{
    const double v[] = {r->headwater_m,       r->tailwater_m,
                        r->hw_force_N,        r->hw_moment_Nm,
                        r->tw_force_N,        r->tw_moment_Nm,
                        r->weight_moment_Nm,  r->buoyancy_moment_Nm,
                        r->extra_moment_Nm,   r->net_moment_Nm,
                        r->fs,                r->sill_reaction_N};
    sw_csv_put_field(stdout, g->name);
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) {
        putchar(',');
        csv_number(v[i]);
    }
    printf(",%s,", sw_state_name(r->state));
    csv_crit(&c->tw_alarm);
    putchar(',');
    csv_crit(&c->tw_open);
    putchar('\n');
}

/* ---- --samples ------------------------------------------------------------ */

static void text_pctl_row(const char *what, const double *v, int crit,
                          int decimals)
{
    printf("  %-22s", what);
    for (int p = 0; p < SW_UNCERT_N_PCTL; p++) {
        if (crit && isinf(v[p]))
            printf(" %14s", "not needed");
        else if (isinf(v[p]))
            printf(" %14s", v[p] > 0 ? "infinite" : "-infinite");
        else
            printf(" %14.*f", decimals, sw_cli_unsigned_zero(v[p], decimals));
    }
    putchar('\n');
}

static void print_sampled_text(const sw_uncert *u, const sw_uncert_point *pt)
{
    const sw_gate *g = &u->site->gates[pt->gate].gate;
    size_t *order;

    printf("gate %s (factor of safety: %s; required %.2f)\n", g->name,
           sw_fs_basis_phrase(g->fs_basis), g->required_fs);
    printf("  P(open)                %8.4f +- %.4f  %6zu of %zu samples\n",
           pt->p_open, pt->p_open_se, pt->n_open, pt->n);
    printf("  P(low)                 %8.4f +- %.4f  %6zu (shut, below the "
           "required margin)\n", pt->p_low, pt->p_low_se, pt->n_low);
    printf("  P(below margin)        %8.4f +- %.4f  %6zu (low or open)\n",
           pt->p_below, pt->p_below_se, pt->n_low + pt->n_open);
    printf("  %-22s %14s %14s %14s\n", "percentile", "5 %", "50 %", "95 %");
    text_pctl_row("factor of safety", pt->fs, 0, 3);
    text_pctl_row("net moment (N*m)", pt->net_moment_Nm, 0, 1);
    text_pctl_row("tw_alarm (m)", pt->tw_alarm_m, 1, 3);
    text_pctl_row("tw_open (m)", pt->tw_open_m, 1, 3);
    if (pt->n_shares == 0) {
        printf("  (no uncertain key acts on this gate)\n\n");
        return;
    }
    order = malloc(pt->n_shares * sizeof *order);
    printf("  shares of the net moment's variance (first order: squared "
           "correlation\n  of each key with the net moment, normalised), "
           "largest first:\n");
    if (order != NULL) {
        sw_uncert_point_order(pt, order);
        for (size_t i = 0; i < pt->n_shares; i++)
            printf("    %-34s %6.3f  (r^2 %.3f)\n",
                   u->params[pt->param[order[i]]].name,
                   pt->share[order[i]], pt->r2[order[i]]);
        free(order);
    }
    printf("    the r^2 add up to %.3f (1 where the net moment is linear "
           "in the keys)\n\n", pt->r2_sum);
}

static void csv_pctl(const double *v, int crit)
{
    for (int p = 0; p < SW_UNCERT_N_PCTL; p++) {
        putchar(',');
        if (crit && isinf(v[p]))
            continue; /* not needed: empty, as in the plain csv */
        csv_number(v[p]);
    }
}

static void print_sampled_csv_header(const sw_uncert *u)
{
    static const char *const q[] = {"fs", "net_moment", "tw_alarm",
                                    "tw_open"};
    fputs("gate,samples,seed,headwater,tailwater,p_open,p_open_se,p_low,"
          "p_low_se,p_below,p_below_se", stdout);
    for (int k = 0; k < 4; k++)
        printf(",%s_p05,%s_p50,%s_p95", q[k], q[k], q[k]);
    fputs(",r2_sum", stdout);
    for (size_t i = 0; i < u->n_params; i++) {
        char name[128];
        snprintf(name, sizeof name, "share[%s]", u->params[i].name);
        putchar(',');
        sw_csv_put_field(stdout, name);
    }
    putchar('\n');
}

static void print_sampled_csv_row(const sw_uncert *u,
                                  const sw_uncert_point *pt, double hw,
                                  double tw)
{
    sw_csv_put_field(stdout, u->site->gates[pt->gate].gate.name);
    printf(",%zu,%llu,", pt->n, (unsigned long long)u->seed);
    csv_number(hw);
    putchar(',');
    csv_number(tw);
    const double p[] = {pt->p_open, pt->p_open_se, pt->p_low,
                        pt->p_low_se, pt->p_below, pt->p_below_se};
    for (size_t i = 0; i < sizeof p / sizeof p[0]; i++) {
        putchar(',');
        csv_number(p[i]);
    }
    csv_pctl(pt->fs, 0);
    csv_pctl(pt->net_moment_Nm, 0);
    csv_pctl(pt->tw_alarm_m, 1);
    csv_pctl(pt->tw_open_m, 1);
    putchar(',');
    csv_number(pt->r2_sum);
    /* a share for every uncertain key of the site; empty where the key
     * does not act on this gate */
    for (size_t i = 0, m = 0; i < u->n_params; i++) {
        putchar(',');
        if (m < pt->n_shares && pt->param[m] == i)
            csv_number(pt->share[m++]);
    }
    putchar('\n');
}

typedef struct sample_opts {
    size_t n;
    uint64_t seed;
    unsigned workers;
} sample_opts;

/* point --samples: every wanted gate over the samples; prints as asked
 * and returns the exit status. */
static int point_sampled(const sw_site *site, const int *wanted, double hw,
                         double tw, const sample_opts *so, int csv, int json)
{
    sw_uncert u;
    sw_uncert_point *pt = calloc(site->n_gates + 1, sizeof *pt);
    sw_error err;
    int rc, below = 0, bad = 0;

    if (pt == NULL) {
        fprintf(stderr, "sillwatch: point: out of memory\n");
        return SW_EXIT_NOMEM;
    }
    if ((rc = sw_uncert_init(&u, site, so->seed, &err)) != SW_OK ||
        (rc = sw_uncert_point_run(&u, hw, tw, so->n, wanted, so->workers, pt,
                                  &err)) != SW_OK) {
        free(pt);
        sw_uncert_fini(&u);
        return sw_cli_report(&err);
    }
    if (u.n_params == 0)
        fprintf(stderr, "sillwatch: point: warning: no key of %s has a "
                        "standard uncertainty (X_sd): every sample is the "
                        "site as given\n",
                site->path);
    json_t *doc = NULL, *jgates = NULL;
    if (json) {
        doc = json_object();
        jgates = json_array();
        sw_json_set(doc, "sillwatch_version", json_string(SW_VERSION), &bad);
        sw_json_set(doc, "site", json_string(site->name), &bad);
        sw_json_set(doc, "site_file", json_string(site->path), &bad);
        sw_json_set(doc, "headwater_m", sw_json_number(hw), &bad);
        sw_json_set(doc, "tailwater_m", sw_json_number(tw), &bad);
        sw_json_set(doc, "levels_as", json_string("gauge"), &bad);
        sw_json_set(doc, "samples", json_integer((json_int_t)so->n), &bad);
        sw_json_set(doc, "seed", json_integer((json_int_t)so->seed), &bad);
        sw_json_set(doc, "generator", json_string("gsl mt19937"), &bad);
        sw_json_set(doc, "percentiles",
                    json_string("Hyndman and Fan (1996) definition 7"),
                    &bad);
        sw_json_set(doc, "sensitivity",
                    json_string("squared correlation with the net moment, "
                                "normalised to shares"),
                    &bad);
        sw_json_set(doc, "uncertain_keys", sw_json_uncert_keys(&u), &bad);
        if (jgates != NULL)
            json_incref(jgates);
        sw_json_set(doc, "gates", jgates, &bad);
    } else if (csv) {
        print_sampled_csv_header(&u);
    } else {
        printf("sillwatch %s sampled hand-check: site '%s' (%s)\n", SW_VERSION,
               site->name, site->path);
        printf("levels as the gates' gauges show them: headwater %.3f m, "
               "tailwater %.3f m\n", hw, tw);
        sw_cli_print_uncert(stdout, "", &u, so->n);
        printf("probabilities +- their Monte Carlo standard error; "
               "percentiles: Hyndman and\nFan (1996) definition 7\n\n");
    }
    for (size_t g = 0; g < site->n_gates; g++) {
        if (!wanted[g])
            continue;
        below |= pt[g].p_below > 0.0;
        if (json) {
            if (jgates == NULL ||
                json_array_append_new(jgates,
                                      sw_json_uncert_point(&u, &pt[g])) != 0)
                bad = 1;
        } else if (csv) {
            print_sampled_csv_row(&u, &pt[g], hw, tw);
        } else {
            print_sampled_text(&u, &pt[g]);
        }
    }
    rc = SW_OK;
    if (json) {
        sw_json_set(doc, "caution", json_string(sw_cli_caution), &bad);
        rc = sw_json_write(bad ? NULL : doc, stdout, &err);
        json_decref(jgates);
        json_decref(doc);
    } else if (!csv) {
        fputs("A probability of opening covers the keys' stated uncertainties "
              "only, not the\nmodel's own error (hydrostatic loads, a rigid "
              "leaf, no friction).\n",
              stdout);
        fputs(sw_cli_caution, stdout);
    }
    sw_uncert_point_fini(pt, site->n_gates);
    free(pt);
    sw_uncert_fini(&u);
    if (rc != SW_OK)
        return sw_cli_report(&err);
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fprintf(stderr, "sillwatch: point: could not write the output\n");
        return SW_EXIT_OUTPUT;
    }
    return below ? SW_EXIT_BELOW : SW_EXIT_OK;
}

int sw_cmd_point(int argc, char **argv)
{
    static const struct option opts[] = {
        {"headwater", required_argument, NULL, 'u'},
        {"tailwater", required_argument, NULL, 'd'},
        {"gate", required_argument, NULL, 'g'},
        {"format", required_argument, NULL, 'f'},
        {"samples", required_argument, NULL, 'n'},
        {"seed", required_argument, NULL, 'e'},
        {"jobs", required_argument, NULL, 'j'},
        {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},
        {NULL, 0, NULL, 0},
    };
    const char *gates[64];
    size_t n_named = 0;
    double hw = NAN, tw = NAN;
    int csv = 0, json = 0, opt, worst = SW_STATE_OK, rc;
    json_t *doc = NULL, *jgates = NULL;
    int bad = 0, seed_given = 0, jobs_given = 0;
    sample_opts so = {0, SW_UNCERT_DEFAULT_SEED, sw_jobs_default_workers()};
    sw_site site;
    sw_error err;

    opterr = 0;
    while ((opt = getopt_long(argc, argv, ":hj:", opts, NULL)) != -1) {
        switch (opt) {
        case 'n':
            if ((rc = sw_cli_take_samples("point", optarg, &so.n)) != 0)
                return rc;
            break;
        case 'e':
            if ((rc = sw_cli_take_seed("point", optarg, &so.seed)) != 0)
                return rc;
            seed_given = 1;
            break;
        case 'j':
            if ((rc = sw_cli_take_jobs("point", optarg, &so.workers)) != 0)
                return rc;
            jobs_given = 1;
            break;
        case 'u':
        case 'd':
            if (sw_cli_parse_number(optarg, opt == 'u' ? &hw : &tw) != 0)
                return sw_cli_usage_error(
                    "point", "%s: '%s' is not a level in metres",
                    opt == 'u' ? "--headwater" : "--tailwater", optarg);
            break;
        case 'g':
            if (n_named == sizeof gates / sizeof gates[0])
                return sw_cli_usage_error("point", "too many --gate options");
            gates[n_named++] = optarg;
            break;
        case 'f':
            if (strcmp(optarg, "csv") == 0)
                csv = 1, json = 0;
            else if (strcmp(optarg, "text") == 0)
                csv = 0, json = 0;
            else if (strcmp(optarg, "json") == 0)
                csv = 0, json = 1;
            else
                return sw_cli_usage_error(
                    "point", "--format: '%s' is not one of text, csv, json",
                    optarg);
            break;
        case 'V':
            return sw_cli_version();
        case 'h':
            fputs(point_help, stdout);
            fputs(sw_cli_caution, stdout);
            return SW_EXIT_OK;
        case ':':
            return sw_cli_usage_error("point", "option '%s' needs a value",
                                      argv[optind - 1]);
        default:
            return sw_cli_usage_error("point", "unknown option '%s'",
                                      argv[optind - 1]);
        }
    }
    if (optind != argc - 1)
        return sw_cli_usage_error("point", optind >= argc
                                               ? "no site file given"
                                               : "give one site file, not %d",
                                  argc - optind);
    if (isnan(hw) || isnan(tw))
        return sw_cli_usage_error("point", "give both --headwater and "
                                           "--tailwater");
    if (so.n == 0 && (seed_given || jobs_given))
        return sw_cli_usage_error("point", "%s is for --samples: give "
                                           "--samples N too",
                                  seed_given ? "--seed" : "--jobs");

    if ((rc = sw_site_load(&site, argv[optind], &err)) != SW_OK)
        return sw_cli_report(&err);
    for (size_t i = 0; i < n_named; i++)
        if (sw_site_find_gate(&site, gates[i]) == NULL) {
            fprintf(stderr, "sillwatch: point: no gate '%s' in %s; it has:",
                    gates[i], site.path);
            for (size_t j = 0; j < site.n_gates; j++)
                fprintf(stderr, " %s", site.gates[j].gate.name);
            fputc('\n', stderr);
            sw_site_fini(&site);
            return SW_EXIT_USAGE;
        }

    if (so.n > 0) {
        int *wanted = calloc(site.n_gates + 1, sizeof *wanted);
        if (wanted == NULL) {
            sw_site_fini(&site);
            fprintf(stderr, "sillwatch: point: out of memory\n");
            return SW_EXIT_NOMEM;
        }
        for (size_t i = 0; i < site.n_gates; i++) {
            wanted[i] = n_named == 0;
            for (size_t j = 0; j < n_named; j++)
                wanted[i] |= strcmp(gates[j], site.gates[i].gate.name) == 0;
        }
        rc = point_sampled(&site, wanted, hw, tw, &so, csv, json);
        free(wanted);
        sw_site_fini(&site);
        return rc;
    }

    if (json) {
        doc = json_object();
        jgates = json_array();
        sw_json_set(doc, "sillwatch_version", json_string(SW_VERSION), &bad);
        sw_json_set(doc, "site", json_string(site.name), &bad);
        sw_json_set(doc, "site_file", json_string(site.path), &bad);
        sw_json_set(doc, "gravity_ms2", sw_json_number(site.g_ms2), &bad);
        sw_json_set(doc, "density_upstream_kgm3",
                    sw_json_number(site.water[SW_UPSTREAM].rho_kgm3), &bad);
        sw_json_set(doc, "density_downstream_kgm3",
                    sw_json_number(site.water[SW_DOWNSTREAM].rho_kgm3), &bad);
        sw_json_set(doc, "headwater_m", sw_json_number(hw), &bad);
        sw_json_set(doc, "tailwater_m", sw_json_number(tw), &bad);
        if (jgates != NULL)
            json_incref(jgates);
        sw_json_set(doc, "gates", jgates, &bad);
    } else if (csv)
        puts("gate,headwater,tailwater,hw_force,hw_moment,tw_force,tw_moment,"
             "weight_moment,buoyancy_moment,extra_moment,net_moment,fs,"
             "sill_reaction,status,tw_alarm,tw_open");
    else
        printf("sillwatch %s hand-check: site '%s' (%s)\n"
               "gravity %.5f m/s^2; water density upstream %.3f, downstream "
               "%.3f kg/m^3\n\n",
               SW_VERSION, site.name, site.path, site.g_ms2,
               site.water[SW_UPSTREAM].rho_kgm3,
               site.water[SW_DOWNSTREAM].rho_kgm3);

    for (size_t i = 0; i < site.n_gates; i++) {
        const sw_site_gate *sg = &site.gates[i];
        int wanted = n_named == 0;
        for (size_t j = 0; j < n_named; j++)
            wanted |= strcmp(gates[j], sg->gate.name) == 0;
        if (!wanted)
            continue;
        sw_gate_result r;
        crit_set c;
        sw_gate_evaluate(&sg->gate, hw, tw, &r);
        if ((rc = find_crits(&sg->gate, hw, tw, &c, &err)) != SW_OK) {
            json_decref(jgates);
            json_decref(doc);
            sw_site_fini(&site);
            return sw_cli_report(&err);
        }
        if ((int)r.state > worst)
            worst = (int)r.state;
        if (json) {
            if (jgates == NULL ||
                json_array_append_new(
                    jgates, sw_json_point_gate(&sg->gate, &r, &c.tw_alarm,
                                               &c.tw_open, &c.hw_alarm,
                                               &c.hw_open)) != 0)
                bad = 1;
        } else if (csv) {
            print_csv_row(&sg->gate, &r, &c);
        } else {
            print_text(sg, &r, &c);
        }
    }
    if (json) {
        sw_json_set(doc, "caution", json_string(sw_cli_caution), &bad);
        rc = sw_json_write(bad ? NULL : doc, stdout, &err);
        json_decref(jgates);
        json_decref(doc);
        if (rc != SW_OK) {
            sw_site_fini(&site);
            return sw_cli_report(&err);
        }
    } else if (!csv) {
        fputs(sw_cli_caution, stdout);
    }
    sw_site_fini(&site);
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fprintf(stderr, "sillwatch: point: could not write the output\n");
        return SW_EXIT_OUTPUT;
    }
    return worst == SW_STATE_OK ? SW_EXIT_OK : SW_EXIT_BELOW;
}
