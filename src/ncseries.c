/* sillwatch: level series read from CF-NetCDF files (see
 * include/sillwatch/ncseries.h). */
#include "sillwatch/ncseries.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <netcdf.h>

#include "netcdfload.h"

/* The netCDF functions, called through the table loaded at first use
 * (netcdfload.h): sw_nc_open() and sw_nc_members() load it first. */
#define nc_open(...) sw_netcdf->nc_open(__VA_ARGS__)
#define nc_close(...) sw_netcdf->nc_close(__VA_ARGS__)
#define nc_strerror(...) sw_netcdf->nc_strerror(__VA_ARGS__)
#define nc_free_string(...) sw_netcdf->nc_free_string(__VA_ARGS__)
#define nc_get_att_double(...) sw_netcdf->nc_get_att_double(__VA_ARGS__)
#define nc_get_att_string(...) sw_netcdf->nc_get_att_string(__VA_ARGS__)
#define nc_get_att_text(...) sw_netcdf->nc_get_att_text(__VA_ARGS__)
#define nc_get_var1_double(...) sw_netcdf->nc_get_var1_double(__VA_ARGS__)
#define nc_get_var1_longlong(...) sw_netcdf->nc_get_var1_longlong(__VA_ARGS__)
#define nc_get_var1_string(...) sw_netcdf->nc_get_var1_string(__VA_ARGS__)
#define nc_get_vara_double(...) sw_netcdf->nc_get_vara_double(__VA_ARGS__)
#define nc_get_vara_text(...) sw_netcdf->nc_get_vara_text(__VA_ARGS__)
#define nc_inq_att(...) sw_netcdf->nc_inq_att(__VA_ARGS__)
#define nc_inq_dimlen(...) sw_netcdf->nc_inq_dimlen(__VA_ARGS__)
#define nc_inq_dimname(...) sw_netcdf->nc_inq_dimname(__VA_ARGS__)
#define nc_inq_nvars(...) sw_netcdf->nc_inq_nvars(__VA_ARGS__)
#define nc_inq_vardimid(...) sw_netcdf->nc_inq_vardimid(__VA_ARGS__)
#define nc_inq_varid(...) sw_netcdf->nc_inq_varid(__VA_ARGS__)
#define nc_inq_varndims(...) sw_netcdf->nc_inq_varndims(__VA_ARGS__)
#define nc_inq_vartype(...) sw_netcdf->nc_inq_vartype(__VA_ARGS__)

#define LEVEL_MAX_ABS 1e5 /* as for CSV level files (series.c) */
#define LABEL_MAX 64
#define BLOCK 512 /* time steps read at once per variable */

/* A block of one variable's values along time, read at once: memory stays
 * BLOCK values per column however long the file. */
typedef struct nc_block {
    double v[BLOCK];
    size_t start, n;
} nc_block;

/* One value column: a variable and where to read it. */
typedef struct nc_column {
    int varid;
    int ndims;
    size_t index[NC_MAX_VAR_DIMS]; /* the time slot is set per record */
    int time_slot;                 /* which index is time */
    double scale, offset;          /* file units to m, then the site's
                                      offset; packing applied first */
    double pack_scale, pack_offset;
    int has_fill, n_missing;
    double fill, missing[4];
    nc_block block;
} nc_column;

struct sw_nc {
    char *path;
    int ncid, open;
    int time_varid;
    size_t n_times, next;
    nc_block time_block;
    sw_time_ms ref_ms;
    double unit_ms;
    size_t n_columns;
    nc_column *col;               /* [n_columns] */
    sw_reader_stats *stats;
    int failed;
    sw_error saved;
    int has_prev;
    sw_time_ms prev_t;
    double *prev_val;             /* [n_columns] */
};

static int nc_fail(const char *path, int status, sw_error *err,
                   const char *what)
{
    return sw_error_set(err, SW_EDATA, path, 0, 0, "NetCDF: %s: %s", what,
                        nc_strerror(status));
}

/* A text attribute into buf[n] ("" when absent).  Returns 1 if present. */
static int text_att(int ncid, int varid, const char *name, char *buf,
                    size_t n)
{
    nc_type type;
    size_t len;
    buf[0] = '\0';
    if (nc_inq_att(ncid, varid, name, &type, &len) != NC_NOERR)
        return 0;
    if (type == NC_CHAR && len < n) {
        if (nc_get_att_text(ncid, varid, name, buf) != NC_NOERR)
            return 0;
        buf[len] = '\0';
        while (len > 0 && buf[len - 1] == '\0')
            len--;
        return 1;
    }
    if (type == NC_STRING && len == 1) {
        char *s = NULL;
        if (nc_get_att_string(ncid, varid, name, &s) != NC_NOERR)
            return 0;
        snprintf(buf, n, "%s", s ? s : "");
        nc_free_string(1, &s);
        return 1;
    }
    return 0;
}

/* The time coordinate: standard_name "time", axis "T", or "time". */
static int find_time(int ncid, int *varid)
{
    int nvars;
    char buf[64];
    if (nc_inq_nvars(ncid, &nvars) != NC_NOERR)
        return -1;
    for (int v = 0; v < nvars; v++) {
        int nd;
        if (nc_inq_varndims(ncid, v, &nd) != NC_NOERR || nd != 1)
            continue;
        if ((text_att(ncid, v, "standard_name", buf, sizeof buf) &&
             strcmp(buf, "time") == 0) ||
            (text_att(ncid, v, "axis", buf, sizeof buf) &&
             strcmp(buf, "T") == 0)) {
            *varid = v;
            return 0;
        }
    }
    return nc_inq_varid(ncid, "time", varid) == NC_NOERR ? 0 : -1;
}

/* "hours since 2025-04-01 00:00:00" into milliseconds per unit and the
 * reference instant (UTC where the text gives no offset, as CF has it). */
static int parse_time_units(const char *path, const char *units,
                            double *unit_ms, sw_time_ms *ref, sw_error *err)
{
    static const struct {
        const char *name;
        double ms;
    } unit[] = {{"seconds", 1e3}, {"second", 1e3}, {"secs", 1e3},
                {"sec", 1e3},     {"s", 1e3},      {"minutes", 6e4},
                {"minute", 6e4},  {"mins", 6e4},   {"min", 6e4},
                {"hours", 3.6e6}, {"hour", 3.6e6}, {"hrs", 3.6e6},
                {"hr", 3.6e6},    {"h", 3.6e6},    {"days", 8.64e7},
                {"day", 8.64e7},  {"d", 8.64e7}};
    const char *since = strstr(units, " since ");
    char text[96];
    size_t n;
    sw_stamp st;
    sw_error local;

    if (since == NULL)
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "the time coordinate's units '%.60s' are not "
                            "'UNIT since DATE' (CF 1.8, 4.4)",
                            units);
    *unit_ms = 0.0;
    for (size_t i = 0; i < sizeof unit / sizeof unit[0]; i++)
        if ((size_t)(since - units) == strlen(unit[i].name) &&
            strncmp(units, unit[i].name, strlen(unit[i].name)) == 0)
            *unit_ms = unit[i].ms;
    if (*unit_ms == 0.0)
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "the time coordinate's units '%.60s': the unit "
                            "is not seconds, minutes, hours or days",
                            units);
    snprintf(text, sizeof text, "%s", since + 7);
    n = strlen(text);
    while (n > 0 && text[n - 1] == ' ')
        text[--n] = '\0';
    if (n > 4 && strcmp(text + n - 4, " UTC") == 0) {
        text[n - 4] = 'Z';
        text[n - 3] = '\0';
        n -= 3;
    }
    if (n == 10) /* a date alone: its midnight */
        snprintf(text + n, sizeof text - n, " 00:00");
    else if (n == 11 && text[10] == 'Z')
        snprintf(text + 10, sizeof text - 10, " 00:00Z");
    if (sw_stamp_parse(text, strlen(text), &st, &local) != SW_OK)
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "the time coordinate's units '%.60s': %s", units,
                            local.message);
    *ref = st.wall_ms - (st.has_offset ? (sw_time_ms)st.offset_s * 1000 : 0);
    return SW_OK;
}

static int open_time(sw_nc *nc, sw_error *err)
{
    char units[128], cal[64];
    int dimid;

    if (find_time(nc->ncid, &nc->time_varid) != 0)
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "no time coordinate (a variable with "
                            "standard_name 'time' or axis 'T', or named "
                            "'time')");
    if (!text_att(nc->ncid, nc->time_varid, "units", units, sizeof units))
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "the time coordinate has no units attribute");
    if (text_att(nc->ncid, nc->time_varid, "calendar", cal, sizeof cal) &&
        strcmp(cal, "standard") != 0 && strcmp(cal, "gregorian") != 0)
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "the time coordinate's calendar '%.40s' is not "
                            "supported: only standard (gregorian)",
                            cal);
    if (nc_inq_vardimid(nc->ncid, nc->time_varid, &dimid) != NC_NOERR ||
        nc_inq_dimlen(nc->ncid, dimid, &nc->n_times) != NC_NOERR)
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "cannot read the time dimension");
    return parse_time_units(nc->path, units, &nc->unit_ms, &nc->ref_ms, err);
}

/* The station dimension and the index of `want` along it; *dim = -1 when
 * the file has no timeseries_id variable. */
static int find_station(int ncid, const char *path, const char *want,
                        int *dim, size_t *index, sw_error *err)
{
    int nvars, dims[2], nd, found = -1;
    char role[64];
    nc_type type;
    size_t n_st, len = 1;

    *dim = -1;
    *index = 0;
    if (nc_inq_nvars(ncid, &nvars) != NC_NOERR)
        return sw_error_set(err, SW_EDATA, path, 0, 0, "cannot list "
                                                       "variables");
    for (int v = 0; v < nvars && found < 0; v++)
        if (text_att(ncid, v, "cf_role", role, sizeof role) &&
            strcmp(role, "timeseries_id") == 0)
            found = v;
    if (found < 0) {
        if (want != NULL && want[0] != '\0')
            return sw_error_set(err, SW_EDATA, path, 0, 0,
                                "station '%s' asked for, but no variable has "
                                "cf_role = timeseries_id",
                                want);
        return SW_OK;
    }
    if (nc_inq_varndims(ncid, found, &nd) != NC_NOERR || nd < 1 || nd > 2 ||
        nc_inq_vardimid(ncid, found, dims) != NC_NOERR ||
        nc_inq_vartype(ncid, found, &type) != NC_NOERR ||
        nc_inq_dimlen(ncid, dims[0], &n_st) != NC_NOERR ||
        (nd == 2 && nc_inq_dimlen(ncid, dims[1], &len) != NC_NOERR))
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "cannot read the timeseries_id variable");
    *dim = dims[0];
    if (want == NULL || want[0] == '\0') {
        if (n_st != 1)
            return sw_error_set(err, SW_EDATA, path, 0, 0,
                                "the file holds %zu stations: give "
                                "'station = ID' in the [series] section",
                                n_st);
        return SW_OK;
    }
    for (size_t i = 0; i < n_st; i++) {
        char id[128] = "";
        if (type == NC_CHAR && nd == 2 && len < sizeof id) {
            size_t start[2] = {i, 0}, count[2] = {1, len};
            if (nc_get_vara_text(ncid, found, start, count, id) != NC_NOERR)
                continue;
            id[len] = '\0';
        } else if (type == NC_STRING && nd == 1) {
            char *s = NULL;
            if (nc_get_var1_string(ncid, found, &i, &s) != NC_NOERR)
                continue;
            snprintf(id, sizeof id, "%s", s ? s : "");
            nc_free_string(1, &s);
        } else {
            long long v;
            if (nc_get_var1_longlong(ncid, found, &i, &v) != NC_NOERR)
                continue;
            snprintf(id, sizeof id, "%lld", v);
        }
        if (strcmp(id, want) == 0) {
            *index = i;
            return SW_OK;
        }
    }
    return sw_error_set(err, SW_EDATA, path, 0, 0,
                        "no station '%s' among the file's %zu (its "
                        "timeseries_id variable)",
                        want, n_st);
}

/* The member dimension of variable `varid`: named `want`, or realization,
 * or member; -1 when it has none. */
static int member_dim_of(int ncid, int varid, const char *want)
{
    int nd, dims[NC_MAX_VAR_DIMS];
    char name[NC_MAX_NAME + 1];
    if (nc_inq_varndims(ncid, varid, &nd) != NC_NOERR ||
        nc_inq_vardimid(ncid, varid, dims) != NC_NOERR)
        return -1;
    for (int d = 0; d < nd; d++) {
        if (nc_inq_dimname(ncid, dims[d], name) != NC_NOERR)
            continue;
        if ((want != NULL && want[0] != '\0')
                ? strcmp(name, want) == 0
                : strcmp(name, "realization") == 0 ||
                      strcmp(name, "member") == 0)
            return dims[d];
    }
    return -1;
}

/* The label of member `i`: the coordinate variable's value, else i. */
static void member_label(int ncid, int dim, size_t i, char *buf, size_t n)
{
    char name[NC_MAX_NAME + 1];
    int v, nd, dims[2];
    nc_type type;
    snprintf(buf, n, "%zu", i);
    if (nc_inq_dimname(ncid, dim, name) != NC_NOERR ||
        nc_inq_varid(ncid, name, &v) != NC_NOERR ||
        nc_inq_varndims(ncid, v, &nd) != NC_NOERR || nd < 1 || nd > 2 ||
        nc_inq_vardimid(ncid, v, dims) != NC_NOERR || dims[0] != dim ||
        nc_inq_vartype(ncid, v, &type) != NC_NOERR)
        return;
    if (type == NC_CHAR && nd == 2) {
        size_t len, start[2] = {i, 0}, count[2] = {1, 0};
        if (nc_inq_dimlen(ncid, dims[1], &len) != NC_NOERR || len >= n)
            return;
        count[1] = len;
        if (nc_get_vara_text(ncid, v, start, count, buf) == NC_NOERR)
            buf[len] = '\0';
    } else if (type == NC_STRING && nd == 1) {
        char *s = NULL;
        if (nc_get_var1_string(ncid, v, &i, &s) == NC_NOERR)
            snprintf(buf, n, "%s", s ? s : "");
        nc_free_string(1, &s);
    } else if (type == NC_FLOAT || type == NC_DOUBLE) {
        double d;
        if (nc_get_var1_double(ncid, v, &i, &d) == NC_NOERR)
            snprintf(buf, n, "%g", d);
    } else if (nd == 1) {
        long long d;
        if (nc_get_var1_longlong(ncid, v, &i, &d) == NC_NOERR)
            snprintf(buf, n, "%lld", d);
    }
}

/* The unit of variable `varid` in m. */
static int level_units(int ncid, int varid, const char *path,
                       const char *var, double *scale, sw_error *err)
{
    char u[64];
    if (!text_att(ncid, varid, "units", u, sizeof u))
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "variable '%s' has no units attribute (m or ft)",
                            var);
    if (!strcmp(u, "m") || !strcmp(u, "metre") || !strcmp(u, "metres") ||
        !strcmp(u, "meter") || !strcmp(u, "meters"))
        *scale = 1.0;
    else if (!strcmp(u, "ft") || !strcmp(u, "foot") || !strcmp(u, "feet"))
        *scale = 0.3048; /* international foot, exact (1959) */
    else
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "variable '%s': units '%.40s' are not m or ft",
                            var, u);
    return SW_OK;
}

/* Set up column `c` from its name "VAR" or "VAR#LABEL". */
static int open_column(sw_nc *nc, size_t c, const sw_column_config *cfg,
                       int station_dim, size_t station,
                       const char *member_want, sw_error *err)
{
    nc_column *col = &nc->col[c];
    char var[NC_MAX_NAME + 1], label[LABEL_MAX] = "";
    const char *hash = strchr(cfg->name, '#');
    int dims[NC_MAX_VAR_DIMS], time_dim, mdim, rc;
    nc_type type;

    snprintf(var, sizeof var, "%.*s",
             (int)(hash ? (size_t)(hash - cfg->name) : strlen(cfg->name)),
             cfg->name);
    if (hash != NULL)
        snprintf(label, sizeof label, "%s", hash + 1);
    if (nc_inq_varid(nc->ncid, var, &col->varid) != NC_NOERR)
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "no variable '%s' in the file", var);
    if (nc_inq_varndims(nc->ncid, col->varid, &col->ndims) != NC_NOERR ||
        nc_inq_vardimid(nc->ncid, col->varid, dims) != NC_NOERR ||
        nc_inq_vardimid(nc->ncid, nc->time_varid, &time_dim) != NC_NOERR ||
        nc_inq_vartype(nc->ncid, col->varid, &type) != NC_NOERR)
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "cannot read variable '%s'", var);
    mdim = member_dim_of(nc->ncid, col->varid, member_want);
    if (mdim >= 0 && hash == NULL) {
        size_t n_m = 0;
        nc_inq_dimlen(nc->ncid, mdim, &n_m);
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "variable '%s' is an ensemble of %zu members: "
                            "'sillwatch screen' reads ensembles",
                            var, n_m);
    }
    col->time_slot = -1;
    for (int d = 0; d < col->ndims; d++) {
        size_t len = 0;
        nc_inq_dimlen(nc->ncid, dims[d], &len);
        col->index[d] = 0;
        if (dims[d] == time_dim) {
            col->time_slot = d;
        } else if (dims[d] == station_dim) {
            col->index[d] = station;
        } else if (dims[d] == mdim) {
            size_t m;
            char lab[LABEL_MAX];
            for (m = 0; m < len; m++) {
                member_label(nc->ncid, mdim, m, lab, sizeof lab);
                if (strcmp(lab, label) == 0)
                    break;
            }
            if (m == len)
                return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                                    "variable '%s' has no member '%s'", var,
                                    label);
            col->index[d] = m;
        } else if (len != 1) {
            char dn[NC_MAX_NAME + 1] = "?";
            nc_inq_dimname(nc->ncid, dims[d], dn);
            return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                                "variable '%s': dimension '%s' (%zu) is "
                                "not time, station or member",
                                var, dn, len);
        }
    }
    if (col->time_slot < 0)
        return sw_error_set(err, SW_EDATA, nc->path, 0, 0,
                            "variable '%s' does not run along the time "
                            "coordinate",
                            var);
    if ((rc = level_units(nc->ncid, col->varid, nc->path, var, &col->scale,
                          err)) != SW_OK)
        return rc;
    col->offset = cfg->offset_m;
    col->pack_scale = 1.0;
    col->pack_offset = 0.0;
    nc_get_att_double(nc->ncid, col->varid, "scale_factor", &col->pack_scale);
    nc_get_att_double(nc->ncid, col->varid, "add_offset", &col->pack_offset);
    col->has_fill = nc_get_att_double(nc->ncid, col->varid, "_FillValue",
                                      &col->fill) == NC_NOERR;
    if (!col->has_fill && (type == NC_FLOAT || type == NC_DOUBLE)) {
        col->has_fill = 1; /* the type's default fill (netCDF) */
        col->fill = type == NC_FLOAT ? (double)NC_FILL_FLOAT : NC_FILL_DOUBLE;
    }
    size_t n_mv = 0;
    nc_type mt;
    if (nc_inq_att(nc->ncid, col->varid, "missing_value", &mt, &n_mv) ==
            NC_NOERR &&
        n_mv >= 1 && n_mv <= 4 &&
        nc_get_att_double(nc->ncid, col->varid, "missing_value",
                          col->missing) == NC_NOERR)
        col->n_missing = (int)n_mv;
    return SW_OK;
}

/* The ragged array representations (CF 1.8, 9.3.3 and 9.3.4: a count
 * variable with sample_dimension, an index variable with
 * instance_dimension) are not read: say so rather than misread them. */
static int not_ragged(int ncid, const char *path, sw_error *err)
{
    int nvars;
    nc_type type;
    size_t len;
    if (nc_inq_nvars(ncid, &nvars) != NC_NOERR)
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "cannot list variables");
    for (int v = 0; v < nvars; v++)
        if (nc_inq_att(ncid, v, "sample_dimension", &type, &len) ==
                NC_NOERR ||
            nc_inq_att(ncid, v, "instance_dimension", &type, &len) ==
                NC_NOERR)
            return sw_error_set(err, SW_EDATA, path, 0, 0,
                                "a ragged array (CF 9.3.3, 9.3.4) is not "
                                "read: give the time series as a "
                                "multidimensional array (CF 9.3.1, 9.3.2)");
    return SW_OK;
}

int sw_nc_open(sw_nc **out, const sw_reader_config *cfg,
               const sw_column_config *columns, size_t n_columns,
               sw_reader_stats *stats, sw_error *err)
{
    sw_nc *nc;
    int station_dim, rc;
    size_t station;

    *out = NULL;
    if ((rc = sw_netcdf_load(cfg->path, err)) != SW_OK)
        return rc;
    nc = calloc(1, sizeof *nc);
    if (nc == NULL || (nc->path = malloc(strlen(cfg->path) + 1)) == NULL) {
        free(nc);
        return sw_error_set(err, SW_ENOMEM, cfg->path, 0, 0, "out of memory");
    }
    strcpy(nc->path, cfg->path);
    nc->stats = stats;
    nc->n_columns = n_columns;
    nc->col = calloc(n_columns ? n_columns : 1, sizeof *nc->col);
    nc->prev_val = calloc(n_columns ? n_columns : 1, sizeof *nc->prev_val);
    if (nc->col == NULL || nc->prev_val == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, cfg->path, 0, 0, "out of memory");
        goto fail;
    }
    if ((rc = nc_open(cfg->path, NC_NOWRITE, &nc->ncid)) != NC_NOERR) {
        rc = nc_fail(cfg->path, rc, err, "cannot open");
        goto fail;
    }
    nc->open = 1;
    if ((rc = not_ragged(nc->ncid, nc->path, err)) != SW_OK ||
        (rc = open_time(nc, err)) != SW_OK ||
        (rc = find_station(nc->ncid, nc->path, cfg->station, &station_dim,
                           &station, err)) != SW_OK)
        goto fail;
    for (size_t c = 0; c < n_columns; c++)
        if ((rc = open_column(nc, c, &columns[c], station_dim, station,
                              cfg->member_dim, err)) != SW_OK)
            goto fail;
    *out = nc;
    return SW_OK;
fail:
    sw_nc_free(nc);
    return rc;
}

/* Read value column c at time index i into *v (m or NAN), counting. */
/* Value i of `varid` along its time slot (the other indices as in
 * index[]), through the block *b.  Returns a netCDF status. */
static int block_value(int ncid, int varid, int ndims, const size_t *index,
                       int time_slot, size_t n_times, size_t i, nc_block *b,
                       double *out)
{
    if (i < b->start || i >= b->start + b->n) {
        size_t start[NC_MAX_VAR_DIMS], count[NC_MAX_VAR_DIMS];
        for (int d = 0; d < ndims; d++) {
            start[d] = index[d];
            count[d] = 1;
        }
        b->start = i;
        b->n = n_times - i < BLOCK ? n_times - i : BLOCK;
        start[time_slot] = i;
        count[time_slot] = b->n;
        int st = nc_get_vara_double(ncid, varid, start, count, b->v);
        if (st != NC_NOERR) {
            b->n = 0;
            return st;
        }
    }
    *out = b->v[i - b->start];
    return NC_NOERR;
}

static int read_value(sw_nc *nc, size_t c, size_t i, double *v,
                      sw_error *err)
{
    nc_column *col = &nc->col[c];
    sw_column_stats *cs = &nc->stats->column[c];
    double raw;
    int st;

    if ((st = block_value(nc->ncid, col->varid, col->ndims, col->index,
                          col->time_slot, nc->n_times, i, &col->block,
                          &raw)) != NC_NOERR)
        return nc_fail(nc->path, st, err, "cannot read a value");
    int missing = isnan(raw) || (col->has_fill && raw == col->fill);
    for (int k = 0; k < col->n_missing; k++)
        missing |= raw == col->missing[k];
    if (missing) {
        *v = NAN;
        cs->missing++;
        return SW_OK;
    }
    double x = raw * col->pack_scale + col->pack_offset;
    if (!isfinite(x) || fabs(x) > LEVEL_MAX_ABS) {
        *v = NAN;
        cs->rejected++;
        if (cs->n_kept < SW_SERIES_REJECTS_KEPT) {
            sw_reject *rj = &cs->kept[cs->n_kept++];
            rj->line = (long)i + 1;
            rj->column = (long)c + 1;
            snprintf(rj->text, sizeof rj->text, "%g", x);
            rj->reason = "implausible level (|value| > 100000)";
        }
        return SW_OK;
    }
    *v = x * col->scale + col->offset;
    cs->valid++;
    return SW_OK;
}

static int same_values(const double *a, const double *b, size_t n)
{
    for (size_t c = 0; c < n; c++)
        if (!(a[c] == b[c] || (isnan(a[c]) && isnan(b[c]))))
            return 0;
    return 1;
}

static int next_record(sw_nc *nc, int *has_row, sw_time_ms *t,
                       double *values, sw_error *err)
{
    while (nc->next < nc->n_times) {
        size_t i = nc->next++;
        double tv;
        char a[64], b[64];
        size_t zero = 0;
        int st = block_value(nc->ncid, nc->time_varid, 1, &zero, 0,
                             nc->n_times, i, &nc->time_block, &tv);
        if (st != NC_NOERR)
            return nc_fail(nc->path, st, err, "cannot read a time");
        double ms = tv * nc->unit_ms;
        if (!isfinite(ms) || fabs(ms) > 1e17)
            return sw_error_set(err, SW_EDATA, nc->path, (long)i + 1, 0,
                                "time value %g cannot be a time", tv);
        sw_time_ms when = nc->ref_ms + (sw_time_ms)llround(ms);
        for (size_t c = 0; c < nc->n_columns; c++)
            if ((st = read_value(nc, c, i, &values[c], err)) != SW_OK)
                return st;
        nc->stats->records++;
        if (nc->has_prev && when < nc->prev_t) {
            sw_time_format(a, sizeof a, when, NULL);
            sw_time_format(b, sizeof b, nc->prev_t, NULL);
            return sw_error_set(err, SW_EDATA, nc->path, (long)i + 1, 0,
                                "time %s is earlier than the one before "
                                "(%s): times must increase",
                                a, b);
        }
        if (nc->has_prev && when == nc->prev_t) {
            if (!same_values(values, nc->prev_val, nc->n_columns)) {
                sw_time_format(a, sizeof a, when, NULL);
                return sw_error_set(err, SW_EDATA, nc->path, (long)i + 1, 0,
                                    "time %s appears twice with different "
                                    "values",
                                    a);
            }
            if (nc->stats->duplicates++ == 0)
                nc->stats->first_duplicate_line = (long)i + 1;
            continue;
        }
        if (!nc->has_prev)
            nc->stats->first_t = when;
        nc->stats->last_t = when;
        nc->has_prev = 1;
        nc->prev_t = when;
        memcpy(nc->prev_val, values, nc->n_columns * sizeof *values);
        *t = when;
        *has_row = 1;
        return SW_OK;
    }
    return SW_OK;
}

int sw_nc_next(sw_nc *nc, int *has_row, sw_time_ms *t, double *values,
               sw_error *err)
{
    *has_row = 0;
    if (nc->failed != SW_OK) {
        if (err != NULL)
            *err = nc->saved;
        return nc->failed;
    }
    int rc = next_record(nc, has_row, t, values, &nc->saved);
    if (rc != SW_OK) {
        nc->failed = rc;
        *has_row = 0;
        if (err != NULL)
            *err = nc->saved;
    }
    return rc;
}

void sw_nc_free(sw_nc *nc)
{
    if (nc == NULL)
        return;
    if (nc->open)
        nc_close(nc->ncid);
    free(nc->col);
    free(nc->prev_val);
    free(nc->path);
    free(nc);
}

static char *dup_text(const char *s)
{
    char *d = malloc(strlen(s) + 1);
    if (d != NULL)
        strcpy(d, s);
    return d;
}

int sw_nc_members(const char *path, const char *variable,
                  const char *member_dim, char ***labels, char ***columns,
                  size_t *n, sw_error *err)
{
    int ncid, varid, dim, st;
    size_t len = 0;
    int rc = SW_OK;

    *labels = *columns = NULL;
    *n = 0;
    if ((rc = sw_netcdf_load(path, err)) != SW_OK)
        return rc;
    if ((st = nc_open(path, NC_NOWRITE, &ncid)) != NC_NOERR)
        return nc_fail(path, st, err, "cannot open");
    if (nc_inq_varid(ncid, variable, &varid) != NC_NOERR) {
        nc_close(ncid);
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "no variable '%s' in the file", variable);
    }
    dim = member_dim_of(ncid, varid, member_dim);
    if (dim < 0) {
        nc_close(ncid);
        if (member_dim != NULL && member_dim[0] != '\0')
            return sw_error_set(err, SW_EDATA, path, 0, 0,
                                "variable '%s' has no dimension '%s' "
                                "(member_dimension)",
                                variable, member_dim);
        return SW_OK;
    }
    nc_inq_dimlen(ncid, dim, &len);
    *labels = calloc(len ? len : 1, sizeof **labels);
    *columns = calloc(len ? len : 1, sizeof **columns);
    if (*labels == NULL || *columns == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, path, 0, 0, "out of memory");
        goto done;
    }
    for (size_t m = 0; m < len; m++) {
        char lab[LABEL_MAX], col[NC_MAX_NAME + LABEL_MAX + 2];
        member_label(ncid, dim, m, lab, sizeof lab);
        snprintf(col, sizeof col, "%s#%s", variable, lab);
        (*labels)[m] = dup_text(lab);
        (*columns)[m] = dup_text(col);
        *n = m + 1;
        if ((*labels)[m] == NULL || (*columns)[m] == NULL) {
            rc = sw_error_set(err, SW_ENOMEM, path, 0, 0, "out of memory");
            goto done;
        }
    }
done:
    nc_close(ncid);
    if (rc != SW_OK) {
        sw_csv_header_free(*labels, *n);
        sw_csv_header_free(*columns, *n);
        *labels = *columns = NULL;
        *n = 0;
    }
    return rc;
}
