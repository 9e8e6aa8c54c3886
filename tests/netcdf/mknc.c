/* Writes the CF-NetCDF test files of the NetCDF CLI cases with the netCDF
 * C library, and the same data as CSV, so that a case can compare what
 * sillwatch makes of either.  Invented data (a synthetic forecast).
 *
 * Usage: mknc KIND OUT.nc [OUT.csv]
 *   forecast     CF 1.8 timeSeries (chapter 9): two stations ("upper",
 *                "lower", cf_role = timeseries_id), time in minutes since
 *                2025-04-01 00:00:00 (calendar standard), hw(station, time)
 *                in m, tw(station, realization, time) in ft with
 *                _FillValue -9999 (one reading missing), realization
 *                coordinate 1, 2, 3.  OUT.csv: station "lower" as CSV
 *                (time, hw, tw_1, tw_2, tw_3; tw in ft).
 *   noleap       the same with calendar = "noleap".
 *   furlongs     the same with tw's units = "furlong".
 *   backwards    the same with the time of the 4th step before the 3rd's.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <netcdf.h>

#define N_T 25
#define N_M 3
#define N_S 2
#define ID_LEN 8

static void check(int status, const char *what)
{
    if (status != NC_NOERR) {
        fprintf(stderr, "mknc: %s: %s\n", what, nc_strerror(status));
        exit(1);
    }
}

static void text_att(int nc, int var, const char *name, const char *value)
{
    check(nc_put_att_text(nc, var, name, strlen(value), value), name);
}

/* The levels: hundredths of a metre or foot, exact as decimals. */
static double hw_at(int s, int i)
{
    return (800 + 5 * i + 20 * s) / 100.0;
}

static double tw_at(int s, int m, int i)
{
    static const int base[N_M] = {2850, 3200, 3000};
    return (base[m] + (m == 1 ? -12 : 4) * i - 100 * s) / 100.0;
}

static int missing_at(int s, int m, int i)
{
    return s == 1 && m == 1 && i == 7;
}

int main(int argc, char **argv)
{
    int nc, d_t, d_m, d_s, d_len, v_t, v_m, v_s, v_hw, v_tw;
    const char *kind;
    double fill = -9999.0;

    if (argc < 3) {
        fprintf(stderr, "usage: mknc KIND OUT.nc [OUT.csv]\n");
        return 2;
    }
    kind = argv[1];
    check(nc_create(argv[2], NC_CLOBBER | NC_NETCDF4, &nc), "create");
    text_att(nc, NC_GLOBAL, "Conventions", "CF-1.8");
    text_att(nc, NC_GLOBAL, "featureType", "timeSeries");
    text_att(nc, NC_GLOBAL, "title", "synthetic forecast for tests");
    check(nc_def_dim(nc, "station", N_S, &d_s), "dim station");
    check(nc_def_dim(nc, "realization", N_M, &d_m), "dim realization");
    check(nc_def_dim(nc, "time", N_T, &d_t), "dim time");
    check(nc_def_dim(nc, "id_strlen", ID_LEN, &d_len), "dim id_strlen");

    int dims_id[2] = {d_s, d_len};
    check(nc_def_var(nc, "station_id", NC_CHAR, 2, dims_id, &v_s), "station");
    text_att(nc, v_s, "cf_role", "timeseries_id");
    check(nc_def_var(nc, "realization", NC_INT, 1, &d_m, &v_m), "real");
    text_att(nc, v_m, "standard_name", "realization");
    check(nc_def_var(nc, "time", NC_DOUBLE, 1, &d_t, &v_t), "time");
    text_att(nc, v_t, "standard_name", "time");
    text_att(nc, v_t, "units", "minutes since 2025-04-01 00:00:00");
    text_att(nc, v_t, "calendar",
             strcmp(kind, "noleap") == 0 ? "noleap" : "standard");
    int dims_hw[2] = {d_s, d_t};
    check(nc_def_var(nc, "hw", NC_DOUBLE, 2, dims_hw, &v_hw), "hw");
    text_att(nc, v_hw, "units", "m");
    text_att(nc, v_hw, "long_name", "headwater level above site datum");
    int dims_tw[3] = {d_s, d_m, d_t};
    check(nc_def_var(nc, "tw", NC_DOUBLE, 3, dims_tw, &v_tw), "tw");
    text_att(nc, v_tw, "units",
             strcmp(kind, "furlongs") == 0 ? "furlong" : "ft");
    check(nc_put_att_double(nc, v_tw, "_FillValue", NC_DOUBLE, 1, &fill),
          "fill");
    check(nc_enddef(nc), "enddef");

    const char ids[N_S][ID_LEN] = {"upper", "lower"};
    size_t start[3] = {0, 0, 0}, count[3] = {N_S, ID_LEN, 0};
    check(nc_put_vara_text(nc, v_s, start, count, &ids[0][0]), "ids");
    int reals[N_M] = {1, 2, 3};
    check(nc_put_var_int(nc, v_m, reals), "reals");
    double t[N_T];
    for (int i = 0; i < N_T; i++)
        t[i] = 30.0 * i;
    if (strcmp(kind, "backwards") == 0)
        t[3] = 45.0;
    check(nc_put_var_double(nc, v_t, t), "times");
    for (int s = 0; s < N_S; s++)
        for (int i = 0; i < N_T; i++) {
            size_t ix[2] = {(size_t)s, (size_t)i};
            check(nc_put_var1_double(nc, v_hw, ix, &(double){hw_at(s, i)}),
                  "hw value");
            for (int m = 0; m < N_M; m++) {
                size_t ix3[3] = {(size_t)s, (size_t)m, (size_t)i};
                double v = missing_at(s, m, i) ? fill : tw_at(s, m, i);
                check(nc_put_var1_double(nc, v_tw, ix3, &v), "tw value");
            }
        }
    check(nc_close(nc), "close");

    if (argc > 3) {
        FILE *fp = fopen(argv[3], "w");
        if (fp == NULL)
            return 1;
        fprintf(fp, "time,hw,tw_1,tw_2,tw_3\n");
        for (int i = 0; i < N_T; i++) {
            fprintf(fp, "2025-04-01T%02d:%02d:00Z,%.2f", (int)t[i] / 60,
                    (int)t[i] % 60, hw_at(1, i));
            for (int m = 0; m < N_M; m++) {
                if (missing_at(1, m, i))
                    fprintf(fp, ",");
                else
                    fprintf(fp, ",%.2f", tw_at(1, m, i));
            }
            fprintf(fp, "\n");
        }
        if (fclose(fp) != 0)
            return 1;
    }
    return 0;
}
