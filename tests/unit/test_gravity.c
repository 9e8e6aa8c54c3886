/* Unit tests for the gravity module: acceleration of gravity at a site. */
#include "testutil.h"

#include <string.h>

#include "sillwatch/gravity.h"

/* Gravity at (lat_deg, elev_m) that must succeed; fails the test
 * otherwise. */
static double gravity_ok(double lat_deg, double elev_m)
{
    sw_error err;
    double g_ms2 = -1.0;

    sw_error_clear(&err);
    assert_int_equal(sw_gravity_normal(lat_deg, elev_m, &g_ms2, &err), SW_OK);
    assert_int_equal(err.code, SW_OK);
    return g_ms2;
}

static void test_standard_gravity(void **state)
{
    (void)state;
    /* 3rd CGPM, 1901 */
    assert_close(SW_GRAVITY_STANDARD, 9.80665, 1e-15);
}

static void test_normal_gravity_sea_level(void **state)
{
    (void)state;
    /* GRS80 definition, Moritz */
    assert_close_abs(gravity_ok(0.0, 0.0), 9.7803268, 1e-7);
    /* GRS80 definition, Moritz */
    assert_close_abs(gravity_ok(45.0, 0.0), 9.8061992, 1e-7);
    /* GRS80 definition, Moritz */
    assert_close_abs(gravity_ok(90.0, 0.0), 9.8321864, 1e-7);
    /* GRS80 definition, Moritz (symmetry about the equator) */
    assert_close_abs(gravity_ok(-45.0, 0.0), 9.8061992, 1e-7);
    /* GRS80 definition, Moritz (symmetry about the equator) */
    assert_close_abs(gravity_ok(-90.0, 0.0), 9.8321864, 1e-7);
    /* The GRS80 derived constants to all their digits, normal gravity at
     * the equator 9.7803267715 and at the pole 9.8321863685 m/s^2: from
     * memory. */
    assert_close_abs(gravity_ok(0.0, 0.0), 9.7803267715, 1e-10);
    assert_close_abs(gravity_ok(90.0, 0.0), 9.8321863685, 1e-10);
}

/* Symmetry and growth toward the poles at high-entropy latitudes. */
static void test_symmetry_and_trend(void **state)
{
    (void)state;
    assert_close(gravity_ok(-51.37, 213.8), gravity_ok(51.37, 213.8), 1e-15);
    assert_true(gravity_ok(23.44, 0.0) < gravity_ok(61.9, 0.0));
    assert_true(gravity_ok(61.9, 0.0) < gravity_ok(88.25, 0.0));
}

static void test_free_air(void **state)
{
    (void)state;
    /* GRS80 definition, Moritz, less the free-air gradient 3.086e-6 s^-2
     * times 1000 m */
    assert_close_abs(gravity_ok(45.0, 1000.0), 9.8061992 - 3.086e-3, 1e-7);
    assert_close_abs(gravity_ok(45.0, 0.0) - gravity_ok(45.0, 1000.0),
                     3.086e-3, 1e-12);
    /* Below the ellipsoid gravity is larger by the same gradient. */
    assert_close_abs(gravity_ok(37.6, -412.5) - gravity_ok(37.6, 0.0),
                     412.5 * 3.086e-6, 1e-12);
}

static void test_range_ends_accepted(void **state)
{
    (void)state;
    assert_true(gravity_ok(90.0, 10000.0) < gravity_ok(90.0, 0.0));
    assert_true(gravity_ok(-90.0, -1000.0) > gravity_ok(-90.0, 0.0));
}

/* One call that must fail with SW_ESITE: the code comes back, the record
 * holds it, the message names the quantity and the valid range, and the
 * output is untouched. */
static void expect_range_error(double lat_deg, double elev_m,
                               const char *what, const char *range_lo,
                               const char *range_hi)
{
    sw_error err;
    double g_ms2 = 1234.5;

    sw_error_clear(&err);
    assert_int_equal(sw_gravity_normal(lat_deg, elev_m, &g_ms2, &err),
                     SW_ESITE);
    assert_int_equal(err.code, SW_ESITE);
    assert_non_null(strstr(err.message, what));
    assert_non_null(strstr(err.message, range_lo));
    assert_non_null(strstr(err.message, range_hi));
    assert_close(g_ms2, 1234.5, 0.0);
}

static void test_latitude_out_of_range(void **state)
{
    (void)state;
    expect_range_error(90.5, 120.0, "latitude", "-90", "90");
    expect_range_error(-91.0, 120.0, "latitude", "-90", "90");
    expect_range_error(NAN, 120.0, "latitude", "-90", "90");
    expect_range_error(INFINITY, 120.0, "latitude", "-90", "90");
}

static void test_elevation_out_of_range(void **state)
{
    (void)state;
    expect_range_error(47.3, 10000.5, "elevation", "-1000", "10000");
    expect_range_error(47.3, -1000.5, "elevation", "-1000", "10000");
    expect_range_error(47.3, NAN, "elevation", "-1000", "10000");
    expect_range_error(47.3, -INFINITY, "elevation", "-1000", "10000");
}

/* The message quotes the offending value. */
static void test_message_names_value(void **state)
{
    sw_error err;
    double g_ms2;

    (void)state;
    sw_error_clear(&err);
    assert_int_equal(sw_gravity_normal(93.75, 0.0, &g_ms2, &err), SW_ESITE);
    assert_non_null(strstr(err.message, "93.75"));
}

/* err == NULL is allowed on both the success and the failure path. */
static void test_null_error_record(void **state)
{
    double g_ms2 = 0.0;

    (void)state;
    assert_int_equal(sw_gravity_normal(45.0, 0.0, &g_ms2, NULL), SW_OK);
    /* GRS80 definition, Moritz */
    assert_close_abs(g_ms2, 9.8061992, 1e-7);
    assert_int_equal(sw_gravity_normal(-91.0, 0.0, &g_ms2, NULL), SW_ESITE);
    assert_int_equal(sw_gravity_normal(45.0, 1e5, &g_ms2, NULL), SW_ESITE);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_standard_gravity),
        cmocka_unit_test(test_normal_gravity_sea_level),
        cmocka_unit_test(test_symmetry_and_trend),
        cmocka_unit_test(test_free_air),
        cmocka_unit_test(test_range_ends_accepted),
        cmocka_unit_test(test_latitude_out_of_range),
        cmocka_unit_test(test_elevation_out_of_range),
        cmocka_unit_test(test_message_names_value),
        cmocka_unit_test(test_null_error_record),
    };
    return cmocka_run_group_tests_name("gravity", tests, NULL, NULL);
}
