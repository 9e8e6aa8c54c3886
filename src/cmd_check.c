/* sillwatch check: validate a site file and show what sillwatch will use. */
#define _DEFAULT_SOURCE /* getopt_long */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "sillwatch/gate.h"
#include "sillwatch/jsonout.h"
#include "sillwatch/ncseries.h"
#include "sillwatch/site.h"

static const char check_help[] =
    "Usage: sillwatch check SITE.ini [--format text|json]\n"
    "Read and validate a site file; print every gate's parameters with\n"
    "their units and the values derived from them (water densities,\n"
    "gravity, sill elevation, sealed area, weight moment).\n"
    "\n"
    "  --format FORMAT text (default), or json: every parameter and\n"
    "                  derived value, units in the keys\n"
    "  -h, --help      show this help and exit\n"
    "      --version   show the version and exit\n"
    "\n"
    "Exit status: 0 valid, 2 usage, 3 invalid site file (the message names\n"
    "file, line and column); see 'sillwatch --help'.\n"
    "\n";

static void print_water(const char *label, const sw_site_water *w)
{
    if (w->from_temperature)
        printf("  %-11s %9.4f kg/m^3  (from %.2f degC, salinity %.2f; "
               "UNESCO 1981)\n",
               label, w->rho_kgm3, w->temperature_C, w->salinity);
    else
        printf("  %-11s %9.4f kg/m^3  (given)\n", label, w->rho_kgm3);
    /* standard uncertainties (X_sd), where given */
    if (w->density_sd_kgm3 > 0.0)
        printf("  %-11s %9.4f kg/m^3  (density_sd: standard uncertainty)\n",
               "", w->density_sd_kgm3);
    if (w->temperature_sd_C > 0.0)
        printf("  %-11s %9.4f degC    (temperature_sd: standard "
               "uncertainty)\n", "", w->temperature_sd_C);
    if (w->salinity_sd > 0.0)
        printf("  %-11s %9.4f         (salinity_sd: standard uncertainty)\n",
               "", w->salinity_sd);
}

static void print_series(const sw_site_series *sr)
{
    printf("\n  [series %s]  (line %ld)\n", sr->name, sr->line);
    printf("    %-20s %s\n", "file", sr->path);
    if (sr->netcdf) {
        printf("    %-20s CF-NetCDF (time from its CF time coordinate, "
               "units from its attributes)\n", "format");
        printf("    %-20s %s\n", "variable", sr->variable);
        printf("    %-20s %s\n", "station",
               sr->station[0] ? sr->station : "(the file's only one)");
        printf("    %-20s %s\n", "member_dimension",
               sr->member_dim[0] ? sr->member_dim
                                 : "realization, else member");
        printf("    %-20s %+.4f m (gauge zero above datum)\n", "offset",
               sr->offset_m);
        if (sr->offset_sd_m > 0.0)
            printf("    %-20s %.4f m (standard uncertainty of the datum)\n",
                   "offset_sd", sr->offset_sd_m);
        return;
    }
    printf("    %-20s %s (%s)\n", "time_column", sr->time_column,
           sr->time_format == SW_TIME_UNIX ? "Unix seconds" : "ISO 8601");
    printf("    %-20s %s\n", "value_column", sr->value_column);
    printf("    %-20s %s, offset %+.4f m (gauge zero above datum)\n", "unit",
           sr->scale == 1.0 ? "m" : "ft", sr->offset_m);
    if (sr->offset_sd_m > 0.0)
        printf("    %-20s %.4f m (standard uncertainty of the datum)\n",
               "offset_sd", sr->offset_sd_m);
    printf("    %-20s %s\n", "delimiter",
           sr->delimiter == 0 ? "detected from the header"
           : sr->delimiter == ';' ? "semicolon (decimal comma allowed)"
           : sr->delimiter == '\t' ? "tab" : "comma");
    printf("    %-20s empty, NaN", "missing readings");
    for (size_t k = 0; k < sr->n_missing; k++)
        printf(", '%s'", sr->missing[k]);
    printf("\n");
}

static void row(const char *key, double v, const char *unit)
{
    printf("    %-20s %14.4f  %s\n", key, sw_cli_unsigned_zero(v, 4), unit);
}

/* A key of the leaf and, where given, its standard uncertainty X_sd. */
static void param_row(const sw_site_gate *sg, sw_gate_param p,
                      const char *unit)
{
    sw_gate g = sg->gate;
    char sd_key[40];
    row(sw_gate_param_key(p), *sw_gate_param_ref(&g, p), unit);
    if (sg->sd[p] > 0.0) {
        snprintf(sd_key, sizeof sd_key, "%s_sd", sw_gate_param_key(p));
        printf("    %-20s %14.4f  %s (standard uncertainty)\n", sd_key,
               sg->sd[p], sw_gate_param_unit(p));
    }
}

static void print_gate(const sw_site_gate *sg)
{
    const sw_gate *g = &sg->gate;

    printf("\n  [gate %s]  (line %ld)\n", g->name, sg->line);
    printf("    %-20s %14s\n", "shape", sw_shape_name(g->shape));
    param_row(sg, SW_GP_HINGE_LEVEL, "m");
    param_row(sg, SW_GP_INCLINATION, "deg from horizontal");
    param_row(sg, SW_GP_SEAL_TOP, "m along the leaf");
    if (g->shape == SW_SHAPE_RECTANGLE) {
        param_row(sg, SW_GP_SEAL_HEIGHT, "m along the leaf");
        param_row(sg, SW_GP_SEAL_WIDTH, "m");
    } else {
        param_row(sg, SW_GP_DIAMETER, "m");
    }
    param_row(sg, SW_GP_LEAF_LENGTH, "m");
    param_row(sg, SW_GP_MASS, "kg");
    param_row(sg, SW_GP_CG_ALONG, "m along the leaf");
    param_row(sg, SW_GP_CG_OFFSET, "m normal, + downstream");
    param_row(sg, SW_GP_VOLUME, "m^3");
    param_row(sg, SW_GP_EXTRA_MOMENT, "N*m, + holds shut");
    row("required_fs", g->required_fs, "-");
    printf("    %-20s %14s  %s\n", "fs_basis", sw_fs_basis_name(g->fs_basis),
           sw_fs_basis_phrase(g->fs_basis));
    row("min_sill_reaction", g->min_sill_reaction_N, "N");
    printf("    %-20s %14s\n", "headwater series",
           sg->headwater[0] ? sg->headwater : "(none)");
    printf("    %-20s %14s\n", "tailwater series",
           sg->tailwater[0] ? sg->tailwater : "(none)");
    printf("    derived:\n");
    row("sill (s)", g->s_sill_m, "m along the leaf");
    row("sill elevation", g->sill_level_m, "m");
    row("seal top elevation", g->seal_top_level_m, "m");
    row("leaf end elevation", g->leaf_bottom_level_m, "m");
    row("sealed area", g->area_m2, "m^2");
    row("weight", g->mass_kg * g->g_ms2, "N");
    row("weight moment", g->weight_moment_Nm,
        g->weight_moment_Nm >= 0.0 ? "N*m, holds shut" : "N*m, opens");
}

/* Read one column of a series file (s, or a member of it): see
 * check_series(). */
static int check_column(const sw_site *site, const sw_site_series *s,
                        const char *name, sw_error *err)
{
    double lo, hi, band_lo, band_hi;
    long n;
    sw_error read_err;
    int rc = sw_qc_series_extent(site, s, &lo, &hi, &n, &read_err, err);
    if (rc != SW_OK) {
        sw_error was = *err;
        return sw_error_set(err, rc, was.file[0] ? was.file : NULL, was.line,
                            was.column, "series %s: %s", name, was.message);
    }
    if (read_err.code != SW_OK)
        fprintf(stderr, "sillwatch: warning: series %s: %s:%ld:%ld: %s (read "
                "up to there)\n", name, read_err.file, read_err.line,
                read_err.column, read_err.message);
    if (n > 0 && !s->qc.range_set &&
        sw_qc_plausible_band(site, s->name, &band_lo, &band_hi) &&
        (hi > band_hi || lo < band_lo))
        sw_cli_warn_implausible(s, lo, hi, band_lo, band_hi);
    return SW_OK;
}

/* The members of an ensemble series (value_column with one '*'): each
 * header column the pattern matches, read as its own column. */
static int check_members(const sw_site *site, const sw_site_series *s,
                         sw_error *err)
{
    const char *star = strchr(s->value_column, '*');
    size_t pre = (size_t)(star - s->value_column), post = strlen(star + 1);
    char **names = NULL;
    size_t n = 0, found = 0;
    int rc = sw_csv_header(s->path, s->delimiter, &names, &n, err);

    if (rc != SW_OK) {
        sw_error was = *err;
        return sw_error_set(err, rc, was.file[0] ? was.file : NULL, was.line,
                            was.column, "series %s: %s", s->name,
                            was.message);
    }
    for (size_t k = 0; k < n && rc == SW_OK; k++) {
        size_t len = strlen(names[k]);
        if (len < pre + post || strncmp(names[k], s->value_column, pre) != 0 ||
            strcmp(names[k] + len - post, star + 1) != 0 ||
            strcmp(names[k], s->time_column) == 0)
            continue;
        sw_site_series member = *s;
        char label[2 * SW_SITE_NAME_MAX + 8];
        snprintf(member.value_column, sizeof member.value_column, "%s",
                 names[k]);
        snprintf(label, sizeof label, "%s#%.*s", s->name,
                 (int)(len - pre - post), names[k] + pre);
        rc = check_column(site, &member, label, err);
        found++;
    }
    sw_csv_header_free(names, n);
    if (rc == SW_OK && found == 0)
        rc = sw_error_set(err, SW_EDATA, s->path, 1, 0,
                          "series %s: no column of the header matches "
                          "value_column '%s'", s->name, s->value_column);
    return rc;
}

/* The members of a NetCDF series along its member dimension, each read
 * as its own column; a variable without one is one column. */
static int check_nc_members(const sw_site *site, const sw_site_series *s,
                            sw_error *err)
{
    char **labels = NULL, **cols = NULL;
    size_t n = 0;
    int rc = sw_nc_members(s->path, s->variable, s->member_dim, &labels,
                           &cols, &n, err);

    if (rc != SW_OK) {
        sw_error was = *err;
        return sw_error_set(err, rc, was.file[0] ? was.file : NULL, was.line,
                            was.column, "series %s: %s", s->name,
                            was.message);
    }
    if (n == 0)
        rc = check_column(site, s, s->name, err);
    for (size_t k = 0; k < n && rc == SW_OK; k++) {
        sw_site_series member = *s;
        char label[2 * SW_SITE_NAME_MAX + 8];
        snprintf(member.value_column, sizeof member.value_column, "%s",
                 cols[k]);
        snprintf(label, sizeof label, "%s#%s", s->name, labels[k]);
        rc = check_column(site, &member, label, err);
    }
    sw_csv_header_free(labels, n);
    sw_csv_header_free(cols, n);
    return rc;
}

/* Read each series file: a missing file or column makes the site invalid
 * (it could not be replayed); a file that cannot be read to the end is
 * warned of; levels outside the plausible band of their gates are warned
 * of (without valid_range). */
static int check_series(const sw_site *site, sw_error *err)
{
    for (size_t i = 0; i < site->n_series; i++) {
        const sw_site_series *s = &site->series[i];
        int rc = s->netcdf ? check_nc_members(site, s, err)
                 : strchr(s->value_column, '*') != NULL
                     ? check_members(site, s, err)
                     : check_column(site, s, s->name, err);
        if (rc != SW_OK)
            return rc;
    }
    return SW_OK;
}

/* A gate's mass per sealed area far outside what leaves weigh. */
static void warn_masses(const sw_site *site)
{
    for (size_t i = 0; i < site->n_gates; i++) {
        const sw_gate *g = &site->gates[i].gate;
        double kg_m2;
        if (sw_qc_mass_implausible(g, &kg_m2))
            fprintf(stderr, "sillwatch: warning: %s:%ld: gate %s: mass %g kg "
                    "over a sealed area of %.4g m^2 is %.4g kg/m^2, outside "
                    "%g to %g kg/m^2: is the unit kg?\n",
                    site->path, site->gates[i].line, g->name, g->mass_kg,
                    g->area_m2, kg_m2, SW_QC_MASS_AREA_MIN,
                    SW_QC_MASS_AREA_MAX);
    }
}

int sw_cmd_check(int argc, char **argv)
{
    static const struct option opts[] = {
        {"format", required_argument, NULL, 'f'},
        {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},
        {NULL, 0, NULL, 0},
    };
    sw_site site;
    sw_error err;
    int opt, json = 0;

    opterr = 0;
    while ((opt = getopt_long(argc, argv, "h", opts, NULL)) != -1) {
        if (opt == 'V')
            return sw_cli_version();
        if (opt == 'f') {
            if (strcmp(optarg, "json") != 0 && strcmp(optarg, "text") != 0)
                return sw_cli_usage_error(
                    "check", "--format: '%s' is not one of text, json",
                    optarg);
            json = strcmp(optarg, "json") == 0;
            continue;
        }
        if (opt == 'h') {
            fputs(check_help, stdout);
            fputs(sw_cli_caution, stdout);
            return SW_EXIT_OK;
        }
        return sw_cli_usage_error("check", "unknown option '%s'",
                                  argv[optind - 1]);
    }
    if (optind != argc - 1)
        return sw_cli_usage_error("check", optind >= argc
                                               ? "no site file given"
                                               : "give one site file, not %d",
                                  argc - optind);
    if (sw_site_load(&site, argv[optind], &err) != SW_OK)
        return sw_cli_report(&err);
    if (check_series(&site, &err) != SW_OK) {
        sw_site_fini(&site);
        return sw_cli_report(&err);
    }
    warn_masses(&site);
    if (json) {
        json_t *doc = sw_json_site(&site);
        int bad = 0;
        sw_json_set(doc, "sillwatch_version", json_string(SW_VERSION), &bad);
        sw_json_set(doc, "caution", json_string(sw_cli_caution), &bad);
        int rc = sw_json_write(bad ? NULL : doc, stdout, &err);
        json_decref(doc);
        sw_site_fini(&site);
        if (rc != SW_OK)
            return sw_cli_report(&err);
        if (fflush(stdout) != 0 || ferror(stdout)) {
            fprintf(stderr, "sillwatch: check: could not write the output\n");
            return SW_EXIT_OUTPUT;
        }
        return SW_EXIT_OK;
    }

    printf("site '%s' (%s): valid, %zu gate%s\n", site.name, site.path,
           site.n_gates, site.n_gates == 1 ? "" : "s");
    if (site.gravity_from_latitude)
        printf("  gravity     %9.5f m/s^2   (GRS80 normal gravity at "
               "latitude %.4f deg, elevation %.1f m)\n",
               site.g_ms2, site.latitude_deg, site.elevation_m);
    else
        printf("  gravity     %9.5f m/s^2\n", site.g_ms2);
    print_water("upstream", &site.water[SW_UPSTREAM]);
    print_water("downstream", &site.water[SW_DOWNSTREAM]);
    printf("  max_gap     %9.4f h       (longest interval interpolated)\n",
           (double)site.max_gap_ms / 3600000.0);
    printf("  timezone    %s\n",
           site.zone ? sw_zone_name(site.zone)
                     : "(none: timestamps must carry a UTC offset)");
    for (size_t i = 0; i < site.n_series; i++)
        print_series(&site.series[i]);
    for (size_t i = 0; i < site.n_gates; i++)
        print_gate(&site.gates[i]);
    putchar('\n');
    fputs(sw_cli_caution, stdout);
    sw_site_fini(&site);
    return SW_EXIT_OK;
}
