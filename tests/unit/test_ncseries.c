/* Tests of the CF-NetCDF level reader (src/ncseries.c behind sw_reader):
 * files written here with the netCDF C library in the layouts the CF
 * conventions allow (CF 1.8: 4.4 time coordinate units "UNIT since DATE";
 * 2.5.1 _FillValue and missing_value; 8.1 scale_factor and add_offset;
 * 9.5 cf_role = timeseries_id; Appendix A realization coordinate).
 * Invented data. */
#include "testutil.h"

#include <string.h>

#include <netcdf.h>

#include "sillwatch/ncseries.h"
#include "sillwatch/series.h"

static char path[128];

static void ok(int status)
{
    if (status != NC_NOERR) {
        print_error("netCDF: %s\n", nc_strerror(status));
        fail();
    }
}

static void att(int nc, int var, const char *name, const char *text)
{
    ok(nc_put_att_text(nc, var, name, strlen(text), text));
}

/* A file with one time coordinate of `units` (and `calendar` unless
 * NULL) over `n` steps `step` apart, and a float level variable "h" in
 * `h_units` holding the values v[] (packed by scale/offset when scale is
 * nonzero), with _FillValue -1 and missing_value -2. */
static void write_file(const char *units, const char *calendar, size_t n,
                       double step, const char *h_units, const double *v,
                       double scale, double offset)
{
    int nc, d_t, v_t, v_h;
    snprintf(path, sizeof path, "%s/t.nc", sw_test_dir());
    ok(nc_create(path, NC_CLOBBER, &nc));
    ok(nc_def_dim(nc, "t", n, &d_t));
    ok(nc_def_var(nc, "t", NC_DOUBLE, 1, &d_t, &v_t));
    att(nc, v_t, "axis", "T");
    att(nc, v_t, "units", units);
    if (calendar != NULL)
        att(nc, v_t, "calendar", calendar);
    ok(nc_def_var(nc, "h", NC_FLOAT, 1, &d_t, &v_h));
    att(nc, v_h, "units", h_units);
    float fill = -1.0f, miss = -2.0f;
    ok(nc_put_att_float(nc, v_h, "_FillValue", NC_FLOAT, 1, &fill));
    ok(nc_put_att_float(nc, v_h, "missing_value", NC_FLOAT, 1, &miss));
    if (scale != 0.0) {
        ok(nc_put_att_double(nc, v_h, "scale_factor", NC_DOUBLE, 1, &scale));
        ok(nc_put_att_double(nc, v_h, "add_offset", NC_DOUBLE, 1, &offset));
    }
    ok(nc_enddef(nc));
    for (size_t i = 0; i < n; i++) {
        double t = step * (double)i;
        float f = (float)v[i];
        ok(nc_put_var1_double(nc, v_t, &i, &t));
        ok(nc_put_var1_float(nc, v_h, &i, &f));
    }
    ok(nc_close(nc));
}

static sw_reader *open_h(const char *column, sw_error *err, int *rc)
{
    sw_reader_config cfg;
    sw_column_config col;
    sw_reader *r = NULL;
    memset(&cfg, 0, sizeof cfg);
    memset(&col, 0, sizeof col);
    cfg.path = path;
    cfg.netcdf = 1;
    col.name = column;
    col.scale = 1.0;
    *rc = sw_reader_open(&r, &cfg, &col, 1, err);
    return r;
}

static void test_time_units_and_values(void **state)
{
    (void)state;
    const double v[4] = {1.5, -1.0, 2.25, -2.0};
    sw_error err;
    sw_time_ms t;
    double x;
    int rc, has;

    /* days since a date alone: midnight UTC (CF 1.8, 4.4) */
    write_file("days since 2025-04-01", "gregorian", 4, 0.5, "feet", v, 0.0,
               0.0);
    sw_reader *r = open_h("h", &err, &rc);
    assert_int_equal(rc, SW_OK);
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_true(has);
    /* 2025-04-01T00:00Z: 20179 days after 1970-01-01 (from memory:
     * checked with sw_days_from_civil below) */
    assert_int_equal(t, sw_days_from_civil(2025, 4, 1) * 86400000LL);
    assert_close(x, 1.5 * 0.3048, 1e-15); /* ft to m, exact factor */
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_true(isnan(x)); /* _FillValue */
    assert_int_equal(t, (sw_days_from_civil(2025, 4, 1)) * 86400000LL +
                            43200000LL);
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_close(x, 2.25 * 0.3048, 1e-15);
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_true(isnan(x)); /* missing_value */
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_false(has);
    const sw_reader_stats *st = sw_reader_get_stats(r);
    assert_int_equal(st->records, 4);
    assert_int_equal(st->column[0].valid, 2);
    assert_int_equal(st->column[0].missing, 2);
    sw_reader_free(r);

    /* seconds since a time with an offset; packed values */
    const double p[2] = {100.0, 250.0};
    write_file("seconds since 2025-04-01T02:00:00+02:00", NULL, 2, 90.0, "m",
               p, 0.01, 5.0);
    r = open_h("h", &err, &rc);
    assert_int_equal(rc, SW_OK);
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_int_equal(t, sw_days_from_civil(2025, 4, 1) * 86400000LL);
    assert_close(x, 100.0 * 0.01 + 5.0, 1e-12);
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_int_equal(t, sw_days_from_civil(2025, 4, 1) * 86400000LL +
                            90000LL);
    assert_close(x, 250.0 * 0.01 + 5.0, 1e-12);
    sw_reader_free(r);
}

/* More steps than one block of the reader (512): every time and value in
 * order across the block boundaries. */
static void test_long_file(void **state)
{
    (void)state;
    enum { N = 1300 };
    static double v[N];
    sw_error err;
    sw_time_ms t;
    double x;
    int rc, has;
    for (size_t i = 0; i < N; i++)
        v[i] = (i % 97 == 5) ? -1.0 : (double)(i % 89) * 0.25;
    write_file("minutes since 2025-01-01 00:00", "standard", N, 15.0, "m", v,
               0.0, 0.0);
    sw_reader *r = open_h("h", &err, &rc);
    assert_int_equal(rc, SW_OK);
    for (size_t i = 0; i < N; i++) {
        assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
        assert_true(has);
        assert_int_equal(t, sw_days_from_civil(2025, 1, 1) * 86400000LL +
                                (sw_time_ms)i * 900000LL);
        if (i % 97 == 5)
            assert_true(isnan(x));
        else
            assert_close(x, (double)(i % 89) * 0.25, 0.0);
    }
    assert_int_equal(sw_reader_next(r, &has, &t, &x, &err), SW_OK);
    assert_false(has);
    sw_reader_free(r);
}

static void expect_open_error(const char *units, const char *calendar,
                              const char *h_units, const char *column,
                              const char *text)
{
    const double v[2] = {1.0, 2.0};
    sw_error err;
    int rc;
    write_file(units, calendar, 2, 1.0, h_units, v, 0.0, 0.0);
    sw_reader *r = open_h(column, &err, &rc);
    assert_null(r);
    assert_int_equal(rc, SW_EDATA);
    if (strstr(err.message, text) == NULL) {
        print_error("message '%s' lacks '%s'\n", err.message, text);
        fail();
    }
}

static void test_open_errors(void **state)
{
    (void)state;
    expect_open_error("weeks since 2025-01-01", NULL, "m", "h",
                      "not seconds, minutes, hours or days");
    expect_open_error("hours after 2025-01-01", NULL, "m", "h",
                      "not 'UNIT since DATE'");
    expect_open_error("hours since 2025-13-01", NULL, "m", "h", "month 13");
    expect_open_error("hours since 2025-01-01", "360_day", "m", "h",
                      "calendar '360_day' is not supported");
    expect_open_error("hours since 2025-01-01", NULL, "cm", "h",
                      "units 'cm' are not m or ft");
    expect_open_error("hours since 2025-01-01", NULL, "m", "level",
                      "no variable 'level'");

    /* a contiguous ragged array (CF 1.8, 9.3.3): refused, not misread */
    int nc, d_s, d_o, v_c, v_t, v_h;
    snprintf(path, sizeof path, "%s/r.nc", sw_test_dir());
    ok(nc_create(path, NC_CLOBBER, &nc));
    ok(nc_def_dim(nc, "station", 2, &d_s));
    ok(nc_def_dim(nc, "obs", 4, &d_o));
    ok(nc_def_var(nc, "row_size", NC_INT, 1, &d_s, &v_c));
    att(nc, v_c, "sample_dimension", "obs");
    ok(nc_def_var(nc, "time", NC_DOUBLE, 1, &d_o, &v_t));
    att(nc, v_t, "units", "hours since 2025-01-01");
    ok(nc_def_var(nc, "h", NC_DOUBLE, 1, &d_o, &v_h));
    att(nc, v_h, "units", "m");
    ok(nc_close(nc));
    sw_error err;
    int rc;
    assert_null(open_h("h", &err, &rc));
    assert_int_equal(rc, SW_EDATA);
    assert_non_null(strstr(err.message, "ragged array"));
}

/* String station ids (NC_STRING), a member dimension named "ens" with
 * string labels, and a variable (station, time, ens). */
static void test_stations_and_members(void **state)
{
    (void)state;
    int nc, d_s, d_t, d_e, v_s, v_t, v_e, v_h;
    const char *ids[3] = {"A1", "B2", "C3"};
    const char *labels[2] = {"ctl", "p01"};
    snprintf(path, sizeof path, "%s/m.nc", sw_test_dir());
    ok(nc_create(path, NC_CLOBBER | NC_NETCDF4, &nc));
    ok(nc_def_dim(nc, "station", 3, &d_s));
    ok(nc_def_dim(nc, "time", 2, &d_t));
    ok(nc_def_dim(nc, "ens", 2, &d_e));
    ok(nc_def_var(nc, "station", NC_STRING, 1, &d_s, &v_s));
    att(nc, v_s, "cf_role", "timeseries_id");
    ok(nc_def_var(nc, "time", NC_INT, 1, &d_t, &v_t));
    att(nc, v_t, "units", "hours since 2025-04-01 00:00 UTC");
    ok(nc_def_var(nc, "ens", NC_STRING, 1, &d_e, &v_e));
    int dims[3] = {d_s, d_t, d_e};
    ok(nc_def_var(nc, "stage", NC_DOUBLE, 3, dims, &v_h));
    att(nc, v_h, "units", "metres");
    ok(nc_enddef(nc));
    ok(nc_put_var_string(nc, v_s, ids));
    ok(nc_put_var_string(nc, v_e, labels));
    int times[2] = {0, 6};
    ok(nc_put_var_int(nc, v_t, times));
    for (size_t s = 0; s < 3; s++)
        for (size_t i = 0; i < 2; i++)
            for (size_t e = 0; e < 2; e++) {
                size_t ix[3] = {s, i, e};
                double v = (double)(100 * s + 10 * i + e);
                ok(nc_put_var1_double(nc, v_h, ix, &v));
            }
    ok(nc_close(nc));

    char **lab, **cols;
    size_t n;
    sw_error err;
    assert_int_equal(sw_nc_members(path, "stage", "ens", &lab, &cols, &n,
                                   &err),
                     SW_OK);
    assert_int_equal(n, 2);
    assert_string_equal(lab[1], "p01");
    assert_string_equal(cols[1], "stage#p01");
    /* without member_dimension the default names (realization, member)
     * do not match "ens": no members */
    char **lab2, **cols2;
    size_t n2;
    assert_int_equal(sw_nc_members(path, "stage", NULL, &lab2, &cols2, &n2,
                                   &err),
                     SW_OK);
    assert_int_equal(n2, 0);

    sw_reader_config cfg;
    sw_column_config col[2];
    sw_reader *r = NULL;
    memset(&cfg, 0, sizeof cfg);
    memset(col, 0, sizeof col);
    cfg.path = path;
    cfg.netcdf = 1;
    cfg.station = "B2";
    cfg.member_dim = "ens";
    col[0].name = cols[1];
    col[0].scale = 1.0;
    col[1].name = cols[0];
    col[1].scale = 1.0;
    col[1].offset_m = 0.5;
    assert_int_equal(sw_reader_open(&r, &cfg, col, 2, &err), SW_OK);
    double x[2];
    sw_time_ms t;
    int has;
    assert_int_equal(sw_reader_next(r, &has, &t, x, &err), SW_OK);
    assert_close(x[0], 101.0, 1e-15); /* station B2, time 0, member p01 */
    assert_close(x[1], 100.5, 1e-15); /* member ctl, plus the offset */
    assert_int_equal(sw_reader_next(r, &has, &t, x, &err), SW_OK);
    assert_int_equal(t, sw_days_from_civil(2025, 4, 1) * 86400000LL +
                            6 * 3600000LL);
    assert_close(x[0], 111.0, 1e-15);
    sw_reader_free(r);

    /* several stations and none named: an error naming the count */
    cfg.station = NULL;
    assert_int_equal(sw_reader_open(&r, &cfg, col, 2, &err), SW_EDATA);
    assert_non_null(strstr(err.message, "holds 3 stations"));
    /* the whole ensemble variable as one column: an error */
    col[0].name = "stage";
    cfg.station = "A1";
    assert_int_equal(sw_reader_open(&r, &cfg, col, 1, &err), SW_EDATA);
    assert_non_null(strstr(err.message, "ensemble of 2 members"));
    sw_csv_header_free(lab, n);
    sw_csv_header_free(cols, n);
    sw_csv_header_free(lab2, n2);
    sw_csv_header_free(cols2, n2);
}

/* 300 members (more than the 128 columns a reader once served) read by
 * one reader: member e at time i is 10 i + e / 1000 m, with member 7's
 * second value missing (_FillValue). */
#define NC_WIDE 300
static void test_many_members(void **state)
{
    (void)state;
    int nc, d_t, d_e, v_t, v_h;
    snprintf(path, sizeof path, "%s/wide.nc", sw_test_dir());
    ok(nc_create(path, NC_CLOBBER, &nc));
    ok(nc_def_dim(nc, "time", 3, &d_t));
    ok(nc_def_dim(nc, "realization", NC_WIDE, &d_e));
    ok(nc_def_var(nc, "time", NC_DOUBLE, 1, &d_t, &v_t));
    att(nc, v_t, "units", "hours since 2025-04-01");
    int dims[2] = {d_t, d_e};
    ok(nc_def_var(nc, "h", NC_DOUBLE, 2, dims, &v_h));
    att(nc, v_h, "units", "m");
    double fill = -1.0;
    ok(nc_put_att_double(nc, v_h, "_FillValue", NC_DOUBLE, 1, &fill));
    ok(nc_enddef(nc));
    for (size_t i = 0; i < 3; i++) {
        double t = (double)i;
        ok(nc_put_var1_double(nc, v_t, &i, &t));
        for (size_t e = 0; e < NC_WIDE; e++) {
            size_t ix[2] = {i, e};
            double v = i == 1 && e == 7 ? -1.0
                                        : 10.0 * (double)i + (double)e / 1000;
            ok(nc_put_var1_double(nc, v_h, ix, &v));
        }
    }
    ok(nc_close(nc));

    char **lab, **cols;
    size_t n;
    sw_error err;
    assert_int_equal(sw_nc_members(path, "h", NULL, &lab, &cols, &n, &err),
                     SW_OK);
    assert_int_equal(n, NC_WIDE);
    sw_reader_config cfg;
    sw_column_config col[NC_WIDE];
    sw_reader *r = NULL;
    memset(&cfg, 0, sizeof cfg);
    memset(col, 0, sizeof col);
    cfg.path = path;
    cfg.netcdf = 1;
    for (size_t e = 0; e < NC_WIDE; e++) {
        col[e].name = cols[e];
        col[e].scale = 1.0;
    }
    assert_int_equal(sw_reader_open(&r, &cfg, col, NC_WIDE, &err), SW_OK);
    double x[NC_WIDE];
    sw_time_ms t;
    int has;
    for (size_t i = 0; i < 3; i++) {
        assert_int_equal(sw_reader_next(r, &has, &t, x, &err), SW_OK);
        assert_true(has);
        for (size_t e = 0; e < NC_WIDE; e++) {
            if (i == 1 && e == 7)
                assert_true(isnan(x[e]));
            else
                assert_close(x[e], 10.0 * (double)i + (double)e / 1000,
                             1e-15);
        }
    }
    assert_int_equal(sw_reader_next(r, &has, &t, x, &err), SW_OK);
    assert_false(has);
    const sw_reader_stats *st = sw_reader_get_stats(r);
    assert_int_equal(st->records, 3);
    for (size_t e = 0; e < NC_WIDE; e++) {
        assert_int_equal(st->column[e].missing, e == 7);
        assert_int_equal(st->column[e].valid, e == 7 ? 2 : 3);
    }
    sw_reader_free(r);
    sw_csv_header_free(lab, n);
    sw_csv_header_free(cols, n);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_time_units_and_values),
        cmocka_unit_test(test_open_errors),
        cmocka_unit_test(test_long_file),
        cmocka_unit_test(test_stations_and_members),
        cmocka_unit_test(test_many_members),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
