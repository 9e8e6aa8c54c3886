/* sillwatch: the site file.
 *
 * A site file is INI text read with libinih.  Sections and keys are those
 * of the model document:
 *
 *   [site]             name, gravity | latitude (+ elevation),
 *                      required_fs, fs_basis, min_sill_reaction, max_gap,
 *                      timezone,
 *                      ensemble
 *   [water upstream]   density | temperature (+ salinity)
 *   [water downstream] density | temperature (+ salinity)
 *   [gate NAME]        shape, hinge_level, inclination, seal_top,
 *                      seal_height, seal_width, diameter, leaf_length, mass,
 *                      cg_along, cg_offset, volume, extra_moment,
 *                      required_fs, fs_basis, min_sill_reaction, headwater,
 *                      tailwater
 *   [series NAME]      file, time_column, value_column, time_format,
 *                      offset, unit, missing, delimiter, and the quality
 *                      tests valid_range, spike, max_rate, flat
 *
 * and standard uncertainties (JCGM 100:2008, the GUM's term) in keys named
 * after the key they qualify plus "_sd", in its unit: every numeric key of
 * a gate's leaf (sw_gate_param: mass_sd, cg_along_sd, ...), a water's
 * density_sd or temperature_sd and salinity_sd, and a series' offset_sd
 * (its gauge's datum).  A key X_sd needs X in the same section and is at
 * least 0; 0 means "known exactly".
 *
 * Every value is checked on load; the first problem found is reported with
 * the file, line and column where it stands (or, for a missing key, the
 * line of the section that lacks it).
 */
#ifndef SILLWATCH_SITE_H
#define SILLWATCH_SITE_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/gate.h"
#include "sillwatch/qc.h"
#include "sillwatch/series.h"
#include "sillwatch/timeutil.h"

#define SW_SITE_NAME_MAX 64
/* The range of a series' offset, m (its key's check). */
#define SW_SITE_OFFSET_MAX_M 1.0e4

/* How a water's density was given. */
typedef struct sw_site_water {
    int from_temperature;   /* 1: temperature (+ salinity); 0: density */
    double temperature_C;   /* valid when from_temperature */
    double salinity;        /* valid when from_temperature; default 0 */
    double rho_kgm3;        /* the density in use, either way */
    /* Standard uncertainties; 0 where not given (known exactly). */
    double density_sd_kgm3;     /* with density */
    double temperature_sd_C;    /* with temperature */
    double salinity_sd;         /* with salinity */
} sw_site_water;

/* One gate as the site file gives it. */
typedef struct sw_site_gate {
    sw_gate gate;                       /* validated and prepared */
    long line;                          /* line of its [gate NAME] header */
    char headwater[SW_SITE_NAME_MAX];   /* series name, "" if not given */
    char tailwater[SW_SITE_NAME_MAX];   /* series name, "" if not given */
    double value[SW_GATE_N_PARAMS];     /* the leaf's keys as given; NAN
                                           where not given (the default
                                           applies) */
    double sd[SW_GATE_N_PARAMS];        /* their standard uncertainties
                                           (X_sd, same unit); 0 where not
                                           given */
} sw_site_gate;

/* One level series: a column of a CSV file. */
typedef struct sw_site_series {
    char name[SW_SITE_NAME_MAX];
    long line;                          /* line of its [series NAME] header */
    char path[SW_ERROR_PATH_MAX];       /* the file; a relative `file` is
                                           taken from the site file's folder */
    char time_column[SW_SITE_NAME_MAX * 2]; /* default "time" */
    char value_column[SW_SITE_NAME_MAX * 2];
    sw_time_encoding time_format;       /* time_format = iso8601 | unix */
    char delimiter;                     /* 0: detect; ',' ';' '\t' */
    double scale;                       /* metres per unit: 1 or 0.3048 */
    double offset_m;                    /* gauge zero above site datum */
    double offset_sd_m;                 /* its standard uncertainty: the
                                           survey of the gauge's datum;
                                           0 where not given */
    size_t n_missing;
    char missing[SW_SERIES_MAX_MISSING][SW_SERIES_TOKEN_MAX];
    sw_qc_config qc;                    /* its quality tests (levels in m
                                           above the site datum); max_gap_ms
                                           is the site's */
    int netcdf;                         /* format = netcdf */
    char variable[SW_SITE_NAME_MAX * 2];  /* netcdf: the level variable */
    char member_dim[SW_SITE_NAME_MAX];  /* netcdf: "" = realization or
                                           member */
    char station[SW_SITE_NAME_MAX * 2]; /* netcdf: "" = the only one */
} sw_site_series;

typedef struct sw_site {
    char path[SW_ERROR_PATH_MAX];
    char name[SW_SITE_NAME_MAX * 2];
    int gravity_from_latitude;      /* 1: latitude + elevation were given */
    double latitude_deg, elevation_m;
    double g_ms2;                   /* the gravity in use */
    double required_fs;             /* site-wide; NAN when not given */
    sw_fs_basis fs_basis;           /* site-wide; SW_FS_NET when not given */
    double min_sill_reaction_N;     /* site-wide; 0 when not given */
    sw_site_water water[2];         /* indexed by sw_side */
    sw_time_ms max_gap_ms;          /* longest interpolated interval;
                                       default one hour */
    sw_zone *zone;                  /* for timestamps without an offset;
                                       NULL when no timezone is given */
    int ensemble_crossed;           /* ensemble = crossed: every
                                       combination of members; 0: paired
                                       by member label (the default) */
    size_t n_gates;
    sw_site_gate *gates;            /* in file order; owned by the site */
    size_t n_series;
    sw_site_series *series;         /* in file order; owned by the site */
} sw_site;

/* The name messages and site->path give a site file read from standard
 * input (path "-"). */
#define SW_SITE_STDIN_NAME "<stdin>"

/* Read, check and prepare the site file at `path` ("-": standard input;
 * its series files are then relative to the current folder, and it is
 * named SW_SITE_STDIN_NAME in messages).  On success returns
 * SW_OK and fills *site, which the caller releases with sw_site_fini().
 * On failure returns SW_ESITE (or SW_ENOMEM) with file, line, column and a
 * message in *err, and leaves *site empty (sw_site_fini() is still safe). */
int sw_site_load(sw_site *site, const char *path, sw_error *err);

/* How to read series `s` of `site` alone (one column): the reader's
 * configuration and the column's, pointing into `s` and `site` (which
 * must outlive them). */
void sw_site_series_reader(const sw_site *site, const sw_site_series *s,
                           sw_reader_config *cfg, sw_column_config *col);

/* Whether series a and b can share one reader (the same file read the
 * same way: path, time column and format, delimiter, NetCDF station and
 * member dimension), each through its own column. */
int sw_site_series_same_reader(const sw_site_series *a,
                               const sw_site_series *b);

/* The gate of `sg` (a gate of a loaded site) with its leaf's keys set to
 * value[] (sw_gate_param order, as sg->value: NAN where a key is not
 * given, so that its default applies and follows the other keys, as on
 * loading: leaf_length is then the sill's s) and the waters' densities
 * rho_kgm3[sw_side]; checked by sw_gate_validate() and prepared, into
 * *out.  The one way a gate is made from its keys: sw_site_load() uses it
 * with the keys as given.  Returns SW_OK, or SW_ESITE (*bad_key, when not
 * NULL, names the key at fault; the message has no file position). */
int sw_site_gate_build(const sw_site_gate *sg,
                       const double value[SW_GATE_N_PARAMS],
                       const double rho_kgm3[2], sw_gate *out,
                       const char **bad_key, sw_error *err);

/* Release what sw_site_load() allocated.  Safe on an empty or failed site
 * and on NULL. */
void sw_site_fini(sw_site *site);

/* The gate named `name`, or NULL if the site has none by that name. */
const sw_site_gate *sw_site_find_gate(const sw_site *site, const char *name);

/* The series named `name`, or NULL. */
const sw_site_series *sw_site_find_series(const sw_site *site,
                                          const char *name);

/* Point series `name` at another file (`path` as given, relative to the
 * current directory), as the command line's --series NAME=FILE does.
 * Returns SW_OK, or SW_EUSAGE when the site has no such series (the
 * message lists those it has). */
int sw_site_set_series_file(sw_site *site, const char *name,
                            const char *path, sw_error *err);

#endif
