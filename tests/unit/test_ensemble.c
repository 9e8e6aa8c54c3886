/* Unit tests of forecast ensembles (src/ensemble.c): member expansion,
 * pairing, and quantiles against their published definition. */
#include "testutil.h"

#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_statistics_double.h>

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

/* Members paired by label whatever their order in each file: 600 members,
 * the tailwater's in another order (a stride through them); the gates
 * follow the headwater's order, each with the tailwater of its label, and
 * each member's series is added once. */
static void test_paired_out_of_order(void **state)
{
    (void)state;
    enum { N = 600 };
    size_t cap = 16 * N + 16;
    char *up = malloc(cap), *down = malloc(cap), path[128];
    sw_site site;
    sw_ensemble ens;
    sw_error err;
    size_t u, d;

    assert_non_null(up);
    assert_non_null(down);
    u = (size_t)snprintf(up, cap, "time");
    d = (size_t)snprintf(down, cap, "time");
    for (int m = 0; m < N; m++) {
        u += (size_t)snprintf(up + u, cap - u, ",hw_%d", m);
        /* 7 and 600 have no common factor: every label once */
        d += (size_t)snprintf(down + d, cap - d, ",tw_%d", (7 * m + 3) % N);
    }
    snprintf(up + u, cap - u, "\n");
    snprintf(down + d, cap - d, "\n");
    sw_test_write("site.ini", BASE GATE("A", "up", "tailwater = down\n"));
    sw_test_write("up.csv", up);
    sw_test_write("down.csv", down);
    free(up);
    free(down);
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_ensemble_expand(&ens, &site, &err), SW_OK);
    assert_int_equal(ens.site.n_gates, N);
    assert_int_equal(ens.site.n_series, 2 * N);
    for (size_t i = 0; i < N; i++) {
        char label[16], hw[16], tw[16];
        snprintf(label, sizeof label, "%zu", i);
        snprintf(hw, sizeof hw, "hw_%zu", i);
        snprintf(tw, sizeof tw, "tw_%zu", i);
        assert_string_equal(ens.member[i], label);
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

static int cmp_for_gsl(const void *x, const void *y)
{
    double a = *(const double *)x, b = *(const double *)y;
    return (a > b) - (a < b);
}

/* xorshift64*: deterministic high-entropy test values. */
static uint64_t rng_state = 0x9E3779B97F4A7C15ull;
static uint64_t rng_next(void)
{
    rng_state ^= rng_state >> 12;
    rng_state ^= rng_state << 25;
    rng_state ^= rng_state >> 27;
    return rng_state * 2685821657736338717ull;
}
static double rng_unit(void) /* [0, 1) */
{
    return (double)(rng_next() >> 11) * 0x1.0p-53;
}

/* A value of kind `kind`: 0 continuous (wide exponents), 1 few distinct
 * values (many ties), 2 infinities and zeros among them. */
static double random_value(int kind, int zero_signs)
{
    uint64_t r = rng_next();
    switch (kind) {
    case 0:
        return (rng_unit() - 0.5) * pow(10.0, (double)(r % 13) - 6.0);
    case 1:
        return (double)(r % 7) * 0.25 - 0.5;
    default:
        switch (r % 8) {
        case 0:
            return INFINITY;
        case 1:
            return -INFINITY;
        case 2: /* zeros of one sign, or of both when asked */
            return zero_signs == 2 ? ((r >> 8) & 1 ? 0.0 : -0.0)
                   : zero_signs ? -0.0 : 0.0;
        default:
            return rng_unit() * 3.0 - 1.0;
        }
    }
}

/* All percentiles from one selection (sw_quantiles) are bit for bit those
 * of the sort-based sw_quantile, on random arrays of every size up to 300
 * and some larger: continuous values, many ties, infinities of both
 * signs, zeros of one sign and of both (where a sort's stable order
 * decides which zero stands at a rank); and ordered arrays. */
static void test_quantiles_equal_sorted(void **state)
{
    (void)state;
    const double p[9] = {0.1, 0.5, 0.9, 0.0, 1.0, 0.25, 0.75, 0.01, 0.999};
    static double a[5000], b[5000];
    long compared = 0;

    for (int trial = 0; trial < 1500; trial++) {
        size_t n = trial < 300 ? (size_t)trial + 1
                               : 1 + (size_t)(rng_next() % 5000);
        int kind = trial % 3, zero_signs = (trial / 3) % 3;
        double q[9];
        for (size_t i = 0; i < n; i++)
            a[i] = random_value(kind, zero_signs);
        memcpy(b, a, n * sizeof *a);
        sw_quantiles(a, n, p, 9, q);
        for (int k = 0; k < 9; k++) {
            double want;
            memcpy(a, b, n * sizeof *a); /* sw_quantile sorts its copy */
            want = sw_quantile(a, n, p[k]);
            if (memcmp(&want, &q[k], sizeof want) != 0) {
                print_error("n %zu kind %d p %g: %.17g != %.17g\n", n, kind,
                            p[k], q[k], want);
                fail();
            }
            compared++;
        }
        memcpy(a, b, n * sizeof *a);
    }
    assert_int_equal(compared, 1500 * 9);
    /* ordered shapes: ascending, descending, constant, organ pipe */
    for (int shape = 0; shape < 4; shape++)
        for (size_t n = 1; n <= 3000; n = n * 3 + 1) {
            double q[9];
            for (size_t i = 0; i < n; i++)
                b[i] = shape == 0   ? (double)i
                       : shape == 1 ? (double)(n - i)
                       : shape == 2 ? 1.25
                                    : (double)(i < n / 2 ? i : n - i);
            memcpy(a, b, n * sizeof *a);
            sw_quantiles(a, n, p, 9, q);
            for (int k = 0; k < 9; k++) {
                memcpy(a, b, n * sizeof *a);
                double want = sw_quantile(a, n, p[k]);
                assert_true(memcmp(&want, &q[k], sizeof want) == 0);
            }
        }
    /* zeros of both signs, in either order (the sort's choice is kept) */
    double z1[3] = {0.0, -0.0, 1.0}, z2[3] = {-0.0, 0.0, 1.0}, z[3], q;
    const double p0 = 0.0;
    memcpy(z, z1, sizeof z);
    sw_quantiles(z1, 3, &p0, 1, &q);
    assert_true(memcmp(&q, &(double){sw_quantile(z, 3, 0.0)}, sizeof q) == 0);
    memcpy(z, z2, sizeof z);
    sw_quantiles(z2, 3, &p0, 1, &q);
    assert_true(memcmp(&q, &(double){sw_quantile(z, 3, 0.0)}, sizeof q) == 0);
}

/* Against an independent implementation of the same definition: GSL's
 * gsl_stats_quantile_from_sorted_data (GNU Scientific Library reference
 * manual, "Statistics: Median and Percentiles": (1 - delta) x[i] +
 * delta x[i+1] with i = floor((n - 1) f)), on sorted copies of random
 * finite data; equal to rounding (it weighs the two order statistics
 * another way). */
static void test_quantiles_match_gsl(void **state)
{
    (void)state;
    const double p[3] = {0.1, 0.5, 0.9};
    static double a[3000], sorted[3000];

    gsl_set_error_handler_off();
    for (int trial = 0; trial < 400; trial++) {
        size_t n = 1 + (size_t)(rng_next() % 3000);
        double q[3];
        for (size_t i = 0; i < n; i++)
            a[i] = random_value(trial % 2, 0);
        memcpy(sorted, a, n * sizeof *a);
        qsort(sorted, n, sizeof *sorted, cmp_for_gsl);
        sw_quantiles(a, n, p, 3, q);
        for (int k = 0; k < 3; k++) {
            double g = gsl_stats_quantile_from_sorted_data(sorted, 1, n, p[k]);
            assert_close_abs(q[k], g, 1e-12 * fmax(1.0, fabs(g)));
        }
    }
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_paired_members),
        cmocka_unit_test(test_crossed),
        cmocka_unit_test(test_unpaired_members),
        cmocka_unit_test(test_many_members),
        cmocka_unit_test(test_paired_out_of_order),
        cmocka_unit_test(test_quantile_definition_7),
        cmocka_unit_test(test_quantiles_equal_sorted),
        cmocka_unit_test(test_quantiles_match_gsl),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
