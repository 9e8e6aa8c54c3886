/* Unit tests for the water module: density of water. */
#include "testutil.h"

#include <string.h>

#include "sillwatch/water.h"

/* Density at (t_C, s) that must succeed; fails the test otherwise. */
static double density_ok(double t_C, double s)
{
    sw_error err;
    double rho_kgm3 = -1.0;

    sw_error_clear(&err);
    assert_int_equal(sw_water_density(t_C, s, &rho_kgm3, &err), SW_OK);
    assert_int_equal(err.code, SW_OK);
    return rho_kgm3;
}

/* The check values printed with the equation. */
static void test_unesco_check_values(void **state)
{
    (void)state;
    /* Fofonoff and Millard 1983, p. 19 */
    assert_close_abs(density_ok(5.0, 0.0), 999.96675, 1e-5);
    /* Fofonoff and Millard 1983, p. 19 */
    assert_close_abs(density_ok(5.0, 35.0), 1027.67547, 1e-5);
    /* Fofonoff and Millard 1983, p. 19 */
    assert_close_abs(density_ok(25.0, 0.0), 997.04796, 1e-5);
    /* Fofonoff and Millard 1983, p. 19 */
    assert_close_abs(density_ok(25.0, 35.0), 1023.34306, 1e-5);
}

/* Pure water against the later, independent standard; the 0.01 kg/m^3
 * tolerance covers the known difference between the two. */
static void test_pure_water_against_tanaka(void **state)
{
    (void)state;
    /* Tanaka et al. 2001 (Metrologia 38, 301-309) table */
    assert_close_abs(density_ok(4.0, 0.0), 999.9749, 0.01);
    /* Tanaka et al. 2001 (Metrologia 38, 301-309) table */
    assert_close_abs(density_ok(20.0, 0.0), 998.2067, 0.01);
    /* Tanaka et al. 2001 (Metrologia 38, 301-309) table */
    assert_close_abs(density_ok(40.0, 0.0), 992.2152, 0.01);
}

/* Properties of the equation at high-entropy inputs inside the range. */
static void test_trends(void **state)
{
    double fresh, brackish;

    (void)state;
    /* Salt makes water denser, by roughly 0.75 to 0.8 kg/m^3 per unit of
     * practical salinity at moderate temperatures: from memory. */
    fresh = density_ok(13.7, 0.0);
    brackish = density_ok(13.7, 7.35);
    assert_true(brackish > fresh);
    assert_close((brackish - fresh) / 7.35, 0.77, 0.05);
    /* Fresh water is densest near 4 degrees C (about 3.98): from memory. */
    assert_true(density_ok(3.98, 0.0) > density_ok(2.385, 0.0));
    assert_true(density_ok(3.98, 0.0) > density_ok(5.62, 0.0));
}

/* The ends of the range are inside it. */
static void test_range_ends_accepted(void **state)
{
    (void)state;
    assert_true(density_ok(SW_WATER_T_MIN_C, SW_WATER_S_MAX) > 1000.0);
    assert_true(density_ok(SW_WATER_T_MAX_C, SW_WATER_S_MIN) < 1000.0);
}

/* One call that must fail with SW_ESITE: the code comes back, the record
 * holds it, the message names the valid range, the output is untouched. */
static void expect_range_error(double t_C, double s, const char *what,
                               const char *lo, const char *hi)
{
    sw_error err;
    double rho_kgm3 = 1234.5;

    sw_error_clear(&err);
    assert_int_equal(sw_water_density(t_C, s, &rho_kgm3, &err), SW_ESITE);
    assert_int_equal(err.code, SW_ESITE);
    assert_non_null(strstr(err.message, what));
    assert_non_null(strstr(err.message, lo));
    assert_non_null(strstr(err.message, hi));
    assert_close(rho_kgm3, 1234.5, 0.0);
}

static void test_temperature_out_of_range(void **state)
{
    (void)state;
    expect_range_error(-2.01, 12.4, "temperature", "-2", "40");
    expect_range_error(40.3, 12.4, "temperature", "-2", "40");
    expect_range_error(NAN, 12.4, "temperature", "-2", "40");
    expect_range_error(INFINITY, 12.4, "temperature", "-2", "40");
    expect_range_error(-INFINITY, 12.4, "temperature", "-2", "40");
}

static void test_salinity_out_of_range(void **state)
{
    (void)state;
    expect_range_error(13.7, -0.25, "salinity", "0", "42");
    expect_range_error(13.7, 42.7, "salinity", "0", "42");
    expect_range_error(13.7, NAN, "salinity", "0", "42");
    expect_range_error(13.7, INFINITY, "salinity", "0", "42");
}

/* The message quotes the offending value. */
static void test_message_names_value(void **state)
{
    sw_error err;
    double rho_kgm3;

    (void)state;
    sw_error_clear(&err);
    assert_int_equal(sw_water_density(47.25, 3.0, &rho_kgm3, &err),
                     SW_ESITE);
    assert_non_null(strstr(err.message, "47.25"));
}

/* err == NULL is allowed on both the success and the failure path. */
static void test_null_error_record(void **state)
{
    double rho_kgm3 = 0.0;

    (void)state;
    assert_int_equal(sw_water_density(25.0, 35.0, &rho_kgm3, NULL), SW_OK);
    /* Fofonoff and Millard 1983, p. 19 */
    assert_close_abs(rho_kgm3, 1023.34306, 1e-5);
    assert_int_equal(sw_water_density(45.0, 35.0, &rho_kgm3, NULL),
                     SW_ESITE);
    assert_int_equal(sw_water_density(25.0, -1.0, &rho_kgm3, NULL),
                     SW_ESITE);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_unesco_check_values),
        cmocka_unit_test(test_pure_water_against_tanaka),
        cmocka_unit_test(test_trends),
        cmocka_unit_test(test_range_ends_accepted),
        cmocka_unit_test(test_temperature_out_of_range),
        cmocka_unit_test(test_salinity_out_of_range),
        cmocka_unit_test(test_message_names_value),
        cmocka_unit_test(test_null_error_record),
    };
    return cmocka_run_group_tests_name("water", tests, NULL, NULL);
}
