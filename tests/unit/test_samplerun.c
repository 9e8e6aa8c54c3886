/* Unit tests of the sampled replays (src/samplerun.c).
 *
 * References: JCGM 101:2008 (propagation of distributions by a Monte
 * Carlo method); GSL's gsl_cdf_gaussian_P for the normal CDF.  Each
 * expectation is derived in the comment above its check. */
#include "testutil.h"

#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>

#include "sillwatch/ensemble.h"
#include "sillwatch/samplerun.h"
#include "sillwatch/site.h"
#include "sillwatch/stepper.h"
#include "sillwatch/uncert.h"

/* A vertical leaf (sealed s = 0.2 .. 2.2 m below a hinge at 10.0 m, 1.5 m
 * wide, no volume, weight arm 0.08 m), held at a constant headwater of
 * 9.05 m with the tailwater dry (7.0 m, below the sill at 7.8 m) for ten
 * hours of hourly readings. */
#define SITE                                                                \
    "[site]\ngravity = 9.81\nrequired_fs = 1.5\nmax_gap = 2h\n"             \
    "[water upstream]\ndensity = 1000\n"                                    \
    "[water downstream]\ndensity = 1000\n"                                  \
    "[series hw]\nfile = lv.csv\nvalue_column = hw\ntime_format = unix\n"   \
    "[series tw]\nfile = lv.csv\nvalue_column = tw\ntime_format = unix\n"   \
    "[gate V]\nshape = rectangle\nhinge_level = 10.0\ninclination = 90\n"   \
    "seal_top = 0.2\nseal_height = 2.0\nseal_width = 1.5\n"                 \
    "cg_along = 1.0\ncg_offset = 0.08\nextra_moment = 2500\n"               \
    "headwater = hw\ntailwater = tw\n"

static void write_levels(void)
{
    char text[1024];
    size_t used = (size_t)snprintf(text, sizeof text, "time,hw,tw\n");
    for (int h = 0; h <= 10; h++)
        used += (size_t)snprintf(text + used, sizeof text - used,
                                 "%d,9.05,7.0\n", 1735689600 + 3600 * h);
    sw_test_write("lv.csv", text);
}

static void load(const char *text, sw_site *site)
{
    sw_error err;
    char path[128];
    write_levels();
    sw_test_write("s.ini", text);
    snprintf(path, sizeof path, "%s/s.ini", sw_test_dir());
    int rc = sw_site_load(site, path, &err);
    if (rc != SW_OK)
        print_error("%s:%ld:%ld: %s\n", err.file, err.line, err.column,
                    err.message);
    assert_int_equal(rc, SW_OK);
}

/* With the levels constant, the gate is open for the whole run or never:
 * net = m g 0.08 + 2500 - M_hw(9.05) with M_hw = rho g w [(b^3 - L^3)/3 -
 * s_w (b^2 - L^2)/2] (s_w = L = 0.95, b = 2.2; common practice, no
 * source), open where m <= m_crit = (M_hw - 2500) / (g 0.08).  So the
 * fraction of replays that opened at least once is P(open) =
 * Phi((m_crit - mu) / sigma) (gsl_cdf_gaussian_P), within 4 standard
 * errors; and each replay's hours open are 0 or the whole 10 h. */
static void test_opened_once_analytic(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_samplerun sr;
    sw_samplerun_stats st;
    sw_error err;
    const double mu = 23000.0, sigma = 600.0;
    const size_t n = 400;
    (void)state;

    load(SITE "mass = 23000\nmass_sd = 600\n", &site);
    assert_int_equal(sw_uncert_init(&u, &site, 31, &err), SW_OK);
    assert_int_equal(sw_samplerun_run(&sr, &u, n, 2, 0, NULL, NULL, &err),
                     SW_OK);
    double b = 2.2, sw = 0.95;
    double m_hw = 1000.0 * 9.81 * 1.5 *
                  ((b * b * b - sw * sw * sw) / 3.0 - sw * (b * b - sw * sw) / 2.0);
    double m_crit = (m_hw - 2500.0) / (9.81 * 0.08);
    double p = gsl_cdf_gaussian_P(m_crit - mu, sigma);
    assert_true(p > 0.2 && p < 0.8);
    assert_int_equal(sw_samplerun_stats_of(&sr, 0, &st, &err), SW_OK);
    double se = sqrt(p * (1 - p) / (double)n);
    if (fabs(st.p_open - p) > 4.0 * se)
        fail_msg("opened once %.4f, analytic %.4f, 4 se %.4f", st.p_open, p,
                 4.0 * se);
    for (size_t k = 0; k < n; k++) {
        const sw_sample_gate *t = &sr.tally[k];
        assert_true(t->open == 0 || t->open == 10 * 3600 * 1000);
        assert_true((t->open > 0) == (t->open_seen != 0));
        assert_true(t->evaluated == 10 * 3600 * 1000);
    }
    sw_samplerun_fini(&sr);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* Without uncertainty every replay is the site's: its tallies exactly. */
static void test_zero_uncertainty_is_the_site(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_samplerun sr;
    sw_stepper *st;
    sw_stepper_options opt = {0, 0, 0};
    sw_error err;
    int done = 0;
    (void)state;

    load(SITE "mass = 23000\n", &site);
    assert_int_equal(sw_stepper_alloc(&st, &site, &opt, &err), SW_OK);
    while (!done)
        assert_int_equal(sw_stepper_advance(st, &done, &err), SW_OK);
    assert_int_equal(sw_stepper_finish(st, &err), SW_OK);
    const sw_tally *t = sw_stepper_tally(st, 0);
    assert_int_equal(sw_uncert_init(&u, &site, 1, &err), SW_OK);
    assert_int_equal(sw_samplerun_run(&sr, &u, 6, 3, 1, NULL, NULL, &err),
                     SW_OK);
    for (size_t k = 0; k < 6; k++) {
        assert_true(sr.tally[k].low == t->low);
        assert_true(sr.tally[k].open == t->open);
        assert_true(sr.tally[k].min_fs == t->min_fs);
        assert_int_equal(sr.tally[k].events, t->events);
        assert_memory_equal(&sr.gates[k], &site.gates[0].gate,
                            sizeof sr.gates[k]);
    }
    sw_samplerun_fini(&sr);
    sw_uncert_fini(&u);
    sw_stepper_free(st);
    sw_site_fini(&site);
}

/* The same seed, 1 or 3 workers: the same tallies. */
static void test_workers(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_samplerun a, b;
    sw_error err;
    (void)state;

    load(SITE "mass = 23000\nmass_sd = 600\n", &site);
    assert_int_equal(sw_uncert_init(&u, &site, 8, &err), SW_OK);
    assert_int_equal(sw_samplerun_run(&a, &u, 37, 1, 0, NULL, NULL, &err),
                     SW_OK);
    assert_int_equal(sw_samplerun_run(&b, &u, 37, 3, 0, NULL, NULL, &err),
                     SW_OK);
    assert_memory_equal(a.tally, b.tally, 37 * sizeof *a.tally);
    sw_samplerun_fini(&a);
    sw_samplerun_fini(&b);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* A bad level file: the error of the replays, with its position. */
static void test_bad_levels(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_samplerun sr;
    sw_error err;
    (void)state;

    load(SITE "mass = 23000\nmass_sd = 600\n", &site);
    sw_test_write("lv.csv", "time,hw,tw\n1735689600,9.05,7.0\n"
                            "1735693200,9.05\n");
    assert_int_equal(sw_uncert_init(&u, &site, 8, &err), SW_OK);
    assert_int_equal(sw_samplerun_run(&sr, &u, 5, 2, 0, NULL, NULL, &err),
                     SW_EDATA);
    assert_int_equal(err.line, 3);
    assert_non_null(strstr(err.file, "lv.csv"));
    assert_null(sr.tally);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* ---- screen --samples ------------------------------------------------------- */

/* SITE with its tailwater a forecast ensemble of three members (tw_a,
 * tw_b, tw_c), and the levels file for it: headwater `hw` at each of the
 * ten hours, the members' tailwaters 7.0 m (dry, below the sill) plus
 * `rise` m per hour for member b and twice that for member c. */
#define ENS_SITE(mass_keys)                                                 \
    "[site]\ngravity = 9.81\nrequired_fs = 1.5\nmax_gap = 2h\n"             \
    "[water upstream]\ndensity = 1000\n"                                    \
    "[water downstream]\ndensity = 1000\n"                                  \
    "[series hw]\nfile = ens.csv\nvalue_column = hw\ntime_format = unix\n"  \
    "[series tw]\nfile = ens.csv\nvalue_column = tw_*\n"                    \
    "time_format = unix\n"                                                  \
    "[gate V]\nshape = rectangle\nhinge_level = 10.0\ninclination = 90\n"   \
    "seal_top = 0.2\nseal_height = 2.0\nseal_width = 1.5\n"                 \
    "cg_along = 1.0\ncg_offset = 0.08\nextra_moment = 2500\n"               \
    "headwater = hw\ntailwater = tw\n" mass_keys

static void load_ens(const char *text, const double *hw, double rise,
                     sw_site *site)
{
    sw_error err;
    char path[128], levels[2048];
    size_t used = (size_t)snprintf(levels, sizeof levels,
                                   "time,hw,tw_a,tw_b,tw_c\n");
    for (int h = 0; h <= 10; h++)
        used += (size_t)snprintf(levels + used, sizeof levels - used,
                                 "%d,%.4f,7.0,%.4f,%.4f\n",
                                 1735689600 + 3600 * h, hw[h],
                                 7.0 + rise * h, 7.0 + 2.0 * rise * h);
    sw_test_write("ens.csv", levels);
    sw_test_write("e.ini", text);
    snprintf(path, sizeof path, "%s/e.ini", sw_test_dir());
    int rc = sw_site_load(site, path, &err);
    if (rc != SW_OK)
        print_error("%s:%ld:%ld: %s\n", err.file, err.line, err.column,
                    err.message);
    assert_int_equal(rc, SW_OK);
}

/* The constant levels of test_opened_once_analytic with every member's
 * tailwater dry (7.0 m, below the sill at 7.8 m): the three members of a
 * sample are alike, so some member opens exactly when the sample's gate
 * opens.  As derived there: net = m g 0.08 + 2500 - M_hw(9.05) with M_hw =
 * rho g w [(b^3 - L^3)/3 - s_w (b^2 - L^2)/2] (s_w = L = 0.95, b = 2.2;
 * common practice, no source), open where m <= m_crit = (M_hw - 2500) /
 * (g 0.08); so P(some member opens) = Phi((m_crit - mu) / sigma)
 * (gsl_cdf_gaussian_P), within 4 standard errors; every member of such a sample opens (fraction of pairs = the
 * proportion of samples), and at the first reading (lead 0 h from the
 * forecast's start). */
static void test_screen_analytic(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_samplescreen ss;
    sw_samplescreen_stats st;
    sw_error err;
    double hw[11];
    const double mu = 23000.0, sigma = 600.0;
    const size_t n = 400;
    const sw_time_ms t0 = (sw_time_ms)1735689600 * 1000;
    (void)state;

    for (int h = 0; h <= 10; h++)
        hw[h] = 9.05;
    load_ens(ENS_SITE("mass = 23000\nmass_sd = 600\n"), hw, 0.0, &site);
    assert_int_equal(sw_uncert_init(&u, &site, 31, &err), SW_OK);
    assert_int_equal(sw_samplescreen_run(&ss, &u, n, 2, NULL, NULL, &err),
                     SW_OK);
    double b = 2.2, sw = 0.95;
    double m_hw = 1000.0 * 9.81 * 1.5 *
                  ((b * b * b - sw * sw * sw) / 3.0 - sw * (b * b - sw * sw) / 2.0);
    double m_crit = (m_hw - 2500.0) / (9.81 * 0.08);
    double p = gsl_cdf_gaussian_P(m_crit - mu, sigma);
    assert_true(p > 0.2 && p < 0.8);
    assert_int_equal(sw_samplescreen_stats_of(&ss, 0, t0, &st, &err), SW_OK);
    assert_int_equal(st.members, 3);
    double se = sqrt(p * (1 - p) / (double)n);
    if (fabs(st.p_open - p) > 4.0 * se)
        fail_msg("some member opened %.4f, analytic %.4f, 4 se %.4f",
                 st.p_open, p, 4.0 * se);
    assert_true(st.fraction_open == st.p_open);
    assert_true(st.n_open > 0);
    for (int q = 0; q < SW_UNCERT_N_PCTL; q++)
        assert_true(st.open_lead_ms[q] == 0.0);
    for (size_t k = 0; k < n; k++) {
        const sw_sample_screen *v = &ss.verdict[k];
        assert_int_equal(v->open_members, v->open_seen ? 3 : 0);
    }
    sw_samplescreen_fini(&ss);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* A rising headwater and members whose tailwaters rise at 0, 0.15 and
 * 0.3 m/h: with no uncertain key every sample's verdict is the one
 * taken from the engine's tallies of the expanded site (the plain
 * screen's), and its members differ (not all open, not at one time). */
static void test_screen_zero_uncertainty(void **state)
{
    sw_site site;
    sw_ensemble ens;
    sw_uncert u;
    sw_samplescreen ss;
    sw_stepper *st;
    sw_stepper_options opt = {0, 0, 0};
    sw_error err;
    double hw[11];
    int done = 0;
    (void)state;

    for (int h = 0; h <= 10; h++)
        hw[h] = 8.6 + 0.1 * h;
    load_ens(ENS_SITE("mass = 23000\n"), hw, 0.15, &site);
    assert_int_equal(sw_ensemble_expand(&ens, &site, &err), SW_OK);
    assert_int_equal(ens.site.n_gates, 3);
    assert_int_equal(sw_stepper_alloc(&st, &ens.site, &opt, &err), SW_OK);
    while (!done)
        assert_int_equal(sw_stepper_advance(st, &done, &err), SW_OK);
    assert_int_equal(sw_stepper_finish(st, &err), SW_OK);
    size_t opened = 0;
    sw_time_ms first = 0;
    for (size_t e = 0; e < 3; e++) {
        const sw_tally *t = sw_stepper_tally(st, e);
        if (t->open_seen && (opened++ == 0 || t->first_open < first))
            first = t->first_open;
    }
    /* the case is only worth its name if some members open and not all */
    assert_true(opened > 0 && opened < 3);
    assert_int_equal(sw_uncert_init(&u, &site, 5, &err), SW_OK);
    assert_int_equal(sw_samplescreen_run(&ss, &u, 4, 2, NULL, NULL, &err),
                     SW_OK);
    for (size_t k = 0; k < 4; k++) {
        const sw_sample_screen *v = &ss.verdict[k];
        assert_int_equal(v->members, 3);
        assert_int_equal(v->open_members, opened);
        assert_true(v->open_seen);
        assert_true(v->open_first == first);
    }
    sw_samplescreen_fini(&ss);
    sw_uncert_fini(&u);
    sw_stepper_free(st);
    sw_ensemble_fini(&ens);
    sw_site_fini(&site);
}

/* The same seed, 1 or 3 workers: the same verdicts, with an uncertain
 * mass (the levels of test_screen_zero_uncertainty). */
static void test_screen_workers(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_samplescreen a, b;
    sw_error err;
    double hw[11];
    (void)state;

    for (int h = 0; h <= 10; h++)
        hw[h] = 8.6 + 0.1 * h;
    load_ens(ENS_SITE("mass = 23000\nmass_sd = 600\n"), hw, 0.15, &site);
    assert_int_equal(sw_uncert_init(&u, &site, 8, &err), SW_OK);
    assert_int_equal(sw_samplescreen_run(&a, &u, 29, 1, NULL, NULL, &err),
                     SW_OK);
    assert_int_equal(sw_samplescreen_run(&b, &u, 29, 3, NULL, NULL, &err),
                     SW_OK);
    assert_memory_equal(a.verdict, b.verdict, 29 * sizeof *a.verdict);
    sw_samplescreen_fini(&a);
    sw_samplescreen_fini(&b);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* A member column cut short in the level file: the screens fail with the
 * replays' error and its position, and keep nothing. */
static void test_screen_bad_levels(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_samplescreen ss;
    sw_error err;
    double hw[11];
    (void)state;

    for (int h = 0; h <= 10; h++)
        hw[h] = 9.05;
    load_ens(ENS_SITE("mass = 23000\nmass_sd = 600\n"), hw, 0.0, &site);
    sw_test_write("ens.csv", "time,hw,tw_a,tw_b,tw_c\n"
                             "1735689600,9.05,7.0,7.0,7.0\n"
                             "1735693200,9.05,7.0,7.0\n");
    assert_int_equal(sw_uncert_init(&u, &site, 8, &err), SW_OK);
    assert_int_equal(sw_samplescreen_run(&ss, &u, 5, 2, NULL, NULL, &err),
                     SW_EDATA);
    assert_int_equal(err.line, 3);
    assert_non_null(strstr(err.file, "ens.csv"));
    assert_null(ss.verdict);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_opened_once_analytic),
        cmocka_unit_test(test_zero_uncertainty_is_the_site),
        cmocka_unit_test(test_workers),
        cmocka_unit_test(test_bad_levels),
        cmocka_unit_test(test_screen_analytic),
        cmocka_unit_test(test_screen_zero_uncertainty),
        cmocka_unit_test(test_screen_workers),
        cmocka_unit_test(test_screen_bad_levels),
    };
    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
