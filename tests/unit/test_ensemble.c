/* Unit tests of forecast ensembles (src/ensemble.c): member expansion,
 * pairing, and quantiles against their published definition. */
#include "testutil.h"

#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "sillwatch/ensemble.h"

#define GATE(name, hw, tw)                                                  \
    "[gate " name "]\nshape = circle\nhinge_level = 4.2\ninclination = 77\n" \
    "seal_top = 0.1\ndiameter = 0.65\nmass = 130\ncg_along = 0.4\n"          \
    "headwater = " hw "\n" tw

#define BASE                                                                \
    "[site]\nrequired_fs = 1.4\n[water upstream]\ndensity = 999.2\n"        \
    "[water downstream]\ndensity = 1012.5\n"                                \
    "[series up]\nfile = up.csv\nvalue_column = hw_*\n"                     \
    "[series down]\nfile = down.csv\nvalue_column = tw_*\n"                 \
    "[series gauge]\nfile = down.csv\nvalue_column = gauge\n"

static int load(const char *extra, sw_site *site, sw_ensemble *ens,
                sw_error *err)
{
    char path[128], text[2048];
    snprintf(text, sizeof text, "%s%s", BASE, extra);
    sw_test_write("site.ini", text);
    sw_test_write("up.csv", "time,hw_m01,hw_m02,hw_m03,other\n");
    sw_test_write("down.csv", "# a comment\ntime;tw_m01;tw_m02;gauge;tw_m03\n");
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    int rc = sw_site_load(site, path, err);
    if (rc != SW_OK)
        return rc;
    rc = sw_ensemble_expand(ens, site, err);
    if (rc != SW_OK)
        sw_site_fini(site);
    return rc;
}

static void test_paired_members(void **state)
{
    (void)state;
    sw_site site;
    sw_ensemble ens;
    sw_error err;
    assert_int_equal(load(GATE("A", "up", "tailwater = down\n"), &site, &ens,
                          &err), SW_OK);
    assert_int_equal(ens.site.n_gates, 3);
    assert_int_equal(ens.n_members[0], 3);
    for (size_t i = 0; i < 3; i++) {
        char want[8];
        snprintf(want, sizeof want, "m0%zu", i + 1);
        assert_string_equal(ens.member[i], want);
        assert_int_equal(ens.orig[i], 0);
        const sw_site_series *h =
            sw_site_find_series(&ens.site, ens.site.gates[i].headwater);
        const sw_site_series *t =
            sw_site_find_series(&ens.site, ens.site.gates[i].tailwater);
        assert_non_null(h);
        assert_non_null(t);
        assert_non_null(strstr(h->value_column, want));
        assert_non_null(strstr(t->value_column, want));
    }
    sw_ensemble_fini(&ens);
    sw_site_fini(&site);
}

static void test_crossed(void **state)
{
    (void)state;
    sw_site site;
    sw_ensemble ens;
    sw_error err;
    char text[2048];
    snprintf(text, sizeof text, "%s", GATE("A", "up", "tailwater = down\n")
                                       GATE("B", "up", "tailwater = gauge\n")
                                       GATE("C", "up", ""));
    /* put 'ensemble = crossed' into [site] by rewriting BASE's first line */
    char full[4096];
    snprintf(full, sizeof full, "[site]\nensemble = crossed\n%s%s",
             strstr(BASE, "required_fs"), text);
    sw_test_write("site.ini", full);
    sw_test_write("up.csv", "time,hw_m01,hw_m02,hw_m03,other\n");
    sw_test_write("down.csv", "time;tw_m01;tw_m02;gauge;tw_m03\n");
    char path[128];
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(site.ensemble_crossed, 1);
    assert_int_equal(sw_ensemble_expand(&ens, &site, &err), SW_OK);
    assert_int_equal(ens.n_members[0], 9); /* every combination */
    assert_int_equal(ens.n_members[1], 3); /* with the single gauge */
    assert_int_equal(ens.n_members[2], 0); /* headwater only */
    assert_int_equal(ens.site.n_gates, 12);
    assert_string_equal(ens.member[1], "m01+m02");
    assert_int_equal(ens.n_hw_only, 1);
    assert_int_equal(ens.hw_only[0], 2);
    assert_int_equal(ens.n_hw_series, 3);
    assert_string_equal(ens.hw_series[2].value_column, "hw_m03");
    sw_ensemble_fini(&ens);
    sw_site_fini(&site);
}

static void test_unpaired_members(void **state)
{
    (void)state;
    sw_site site;
    sw_ensemble ens;
    sw_error err;
    sw_test_write("site.ini", BASE GATE("A", "up", "tailwater = down\n"));
    sw_test_write("up.csv", "time,hw_m01,hw_m02,hw_m04\n");
    sw_test_write("down.csv", "time;tw_m01;tw_m02;tw_m03\n");
    char path[128];
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_ensemble_expand(&ens, &site, &err), SW_ESITE);
    assert_non_null(strstr(err.message, "do not pair by label"));
    assert_int_equal(ens.site.n_gates, 0);
    sw_site_fini(&site);

    /* a pattern that matches nothing */
    sw_test_write("up.csv", "time,level\n");
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_ensemble_expand(&ens, &site, &err), SW_EDATA);
    assert_non_null(strstr(err.message, "matches no column"));
    sw_site_fini(&site);
}

/* Enough members to make the expanded arrays grow several times: every
 * gate must still name its own member's series. */
static void test_many_members(void **state)
{
    (void)state;
    sw_site site;
    sw_ensemble ens;
    sw_error err;
    char up[1024] = "time", down[1024] = "time", path[128];
    for (int m = 1; m <= 40; m++) {
        snprintf(up + strlen(up), sizeof up - strlen(up), ",hw_%02d", m);
        snprintf(down + strlen(down), sizeof down - strlen(down), ",tw_%02d",
                 m);
    }
    strcat(up, "\n");
    strcat(down, "\n");
    sw_test_write("site.ini", BASE GATE("A", "up", "tailwater = down\n"));
    sw_test_write("up.csv", up);
    sw_test_write("down.csv", down);
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_ensemble_expand(&ens, &site, &err), SW_OK);
    assert_int_equal(ens.site.n_gates, 40);
    for (size_t i = 0; i < 40; i++) {
        char hw[16], tw[16];
        snprintf(hw, sizeof hw, "hw_%02zu", i + 1);
        snprintf(tw, sizeof tw, "tw_%02zu", i + 1);
        const sw_site_series *h =
            sw_site_find_series(&ens.site, ens.site.gates[i].headwater);
        const sw_site_series *t =
            sw_site_find_series(&ens.site, ens.site.gates[i].tailwater);
        assert_non_null(h);
        assert_non_null(t);
        assert_string_equal(h->value_column, hw);
        assert_string_equal(t->value_column, tw);
    }
    sw_ensemble_fini(&ens);
    sw_site_fini(&site);
}

/* Sample quantiles, definition 7 of Hyndman and Fan (1996), The American
 * Statistician 50(4), 361-365: Q(p) = x[j] + g (x[j+1] - x[j]) with
 * h = (n - 1) p, j = floor(h) (0-based), g = h - j.  Expected values
 * computed from that definition by hand. */
static void test_quantile_definition_7(void **state)
{
    (void)state;
    double a[5] = {5, 1, 4, 2, 3};
    assert_close(sw_quantile(a, 5, 0.1), 1.4, 1e-15);
    assert_close(sw_quantile(a, 5, 0.5), 3.0, 1e-15);
    assert_close(sw_quantile(a, 5, 0.9), 4.6, 1e-15);
    double b[4] = {7.7, 2.5, 9.0, 3.1};
    assert_close(sw_quantile(b, 4, 0.25), 2.5 + 0.75 * 0.6, 1e-15);
    assert_close(sw_quantile(b, 4, 1.0), 9.0, 0.0);
    assert_close(sw_quantile(b, 4, 0.0), 2.5, 0.0);
    double c[1] = {1.385};
    assert_close(sw_quantile(c, 1, 0.9), 1.385, 0.0);
    /* infinite factors of safety (no headwater moment) sort last */
    double d[3] = {INFINITY, 1.2, 2.4};
    assert_close(sw_quantile(d, 3, 0.5), 2.4, 0.0);
    assert_true(isinf(sw_quantile(d, 3, 0.9)));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_paired_members),
        cmocka_unit_test(test_crossed),
        cmocka_unit_test(test_unpaired_members),
        cmocka_unit_test(test_many_members),
        cmocka_unit_test(test_quantile_definition_7),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
