/* Unit tests of the uncertainty draws and statistics (src/uncert.c).
 *
 * References: JCGM 100:2008 (GUM) for the standard uncertainty, JCGM
 * 101:2008 (propagation of distributions by a Monte Carlo method) for the
 * method; the normal distribution's CDF and the gates' model as in GSL's
 * documented gsl_cdf_gaussian_P and the model document.  Every expectation
 * is derived in the comment above its check.  Sampling checks allow 4 Monte
 * Carlo standard errors (a false alarm about once in 16,000 runs of one
 * check; the seeds are fixed, so a run that passes passes again). */
#include "testutil.h"

#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>

#include "sillwatch/site.h"
#include "sillwatch/uncert.h"
#include "sillwatch/water.h"

static const double pi = 3.14159265358979323846;

/* A vertical rectangular leaf (inclination 90: sin 1, cos 0 exactly in
 * sw_gate_prepare) 1.5 m wide, sealed from s = 0.2 to 2.2 m below a hinge
 * at 10.0 m, no buoyancy (no volume), the centre of gravity 0.08 m off the
 * leaf (so the weight has an arm: m g cg_offset), a dry tailwater. */
#define SITE_HEAD                                                           \
    "[site]\ngravity = 9.81\nrequired_fs = 1.5\n"                           \
    "[water upstream]\ndensity = 1000\n"                                    \
    "[water downstream]\ndensity = 1000\n"                                  \
    "[gate V]\nshape = rectangle\nhinge_level = 10.0\ninclination = 90\n"   \
    "seal_top = 0.2\nseal_height = 2.0\nseal_width = 1.5\n"                 \
    "cg_along = 1.0\ncg_offset = 0.08\n"

static void load(const char *text, sw_site *site)
{
    sw_error err;
    char path[128];
    sw_test_write("u.ini", text);
    snprintf(path, sizeof path, "%s/u.ini", sw_test_dir());
    int rc = sw_site_load(site, path, &err);
    if (rc != SW_OK)
        print_error("load: %s:%ld:%ld: %s\n", err.file, err.line, err.column,
                    err.message);
    assert_int_equal(rc, SW_OK);
}

/* The headwater's moment about the hinge on the leaf above, by hand:
 * pressure rho g (s - s_w) on a vertical leaf (s_w = hinge - level), so
 * M = rho g w [ (b^3 - L^3)/3 - s_w (b^2 - L^2)/2 ], L = max(a, s_w),
 * over the sealed part [a, b] = [0.2, 2.2] (common practice, no source:
 * the integral of the hydrostatic pressure prism times the arm s). */
static double hw_moment_by_hand(double level)
{
    const double rho = 1000.0, g = 9.81, w = 1.5, a = 0.2, b = 2.2;
    double sw = 10.0 - level, lo = sw > a ? sw : a;
    if (lo >= b)
        return 0.0;
    return rho * g * w *
           ((b * b * b - lo * lo * lo) / 3.0 - sw * (b * b - lo * lo) / 2.0);
}

/* ---- P(open) against the normal CDF -------------------------------------- */

/* Only the mass is uncertain: the net moment is
 *   net = m g (cg_along cos 90 + cg_offset sin 90) + extra - M_hw
 *       = m g 0.08 + 2500 - M_hw            (tailwater dry, no buoyancy),
 * linear in m, and the gate is open where net <= 0, i.e. m <= m_crit =
 * (M_hw - 2500) / (g 0.08).  With m ~ N(mu, sigma) (truncation at 0 is
 * 20 sigma away: negligible), P(open) = Phi((m_crit - mu) / sigma),
 * gsl_cdf_gaussian_P(m_crit - mu, sigma) (GSL manual, "The Gaussian
 * Distribution"). */
static void test_p_open_analytic(void **state)
{
    const double mu = 23000.0, sigma = 600.0, hw = 9.05;
    sw_site site;
    sw_uncert u;
    sw_uncert_point pt[1];
    sw_error err;
    (void)state;

    load(SITE_HEAD "mass = 23000\nmass_sd = 600\nextra_moment = 2500\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 4242, &err), SW_OK);
    assert_int_equal(u.n_params, 1);

    double m_hw = hw_moment_by_hand(hw);
    double m_crit = (m_hw - 2500.0) / (9.81 * 0.08);
    double p = gsl_cdf_gaussian_P(m_crit - mu, sigma);
    /* the levels are chosen so that p is neither near 0 nor 1 */
    assert_true(p > 0.2 && p < 0.8);

    const size_t n = 20000;
    assert_int_equal(sw_uncert_point_run(&u, hw, 5.0, n, NULL, 2, pt, &err),
                     SW_OK);
    double se = sqrt(p * (1.0 - p) / (double)n);
    if (fabs(pt[0].p_open - p) > 4.0 * se)
        fail_msg("P(open) %.5f, analytic %.5f, 4 se %.5f", pt[0].p_open, p,
                 4.0 * se);
    /* the reported standard error is that of the proportion */
    assert_close(pt[0].p_open_se,
                 sqrt(pt[0].p_open * (1.0 - pt[0].p_open) / (double)n),
                 1e-12);
    /* the net moment is exactly linear in the mass: r^2 = 1 up to
     * rounding, and the share of the only parameter is 1 */
    assert_int_equal(pt[0].n_shares, 1);
    assert_close(pt[0].r2[0], 1.0, 1e-9);
    assert_close(pt[0].share[0], 1.0, 1e-9);
    /* the median of a normal is its mean: net at mu, within 4 standard
     * errors of a sample median (sqrt(pi/2) sigma_net / sqrt(n)) */
    double net_mu = mu * 9.81 * 0.08 + 2500.0 - m_hw;
    double sigma_net = sigma * 9.81 * 0.08;
    assert_close_abs(pt[0].net_moment_Nm[1], net_mu,
                     4.0 * sqrt(pi / 2.0) * sigma_net / sqrt((double)n));
    /* and its 5th and 95th percentiles at mu -+ 1.6449 sigma (the
     * normal's 0.95 quantile, gsl_cdf_ugaussian_Pinv), within 4 standard
     * errors of a sample quantile, sqrt(p (1-p)) / (n^0.5 pdf(q)) */
    double z = gsl_cdf_ugaussian_Pinv(0.95);
    double se_q = sqrt(0.05 * 0.95) /
                  (sqrt((double)n) * gsl_ran_ugaussian_pdf(z)) * sigma_net;
    assert_close_abs(pt[0].net_moment_Nm[0], net_mu - z * sigma_net,
                     4.0 * se_q);
    assert_close_abs(pt[0].net_moment_Nm[2], net_mu + z * sigma_net,
                     4.0 * se_q);
    sw_uncert_point_fini(pt, 1);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* ---- two linear effects ---------------------------------------------------- */

/* Mass and extra_moment uncertain, independent: net = m g 0.08 + E - M_hw,
 * so var(net) = (g 0.08 sigma_m)^2 + sigma_E^2 and the first-order share of
 * each is its term over the sum (the squared correlation of a linear
 * model).  sigma_m = 500 kg gives g 0.08 sigma_m = 392.4 N m; sigma_E =
 * 294.3 N m (0.75 of that) gives shares 1 / 1.5625 = 0.64 and 0.36.  The
 * sample r^2 has a standard error of about 2 |rho| (1 - rho^2) / sqrt(n)
 * (the delta method on Var(r) = (1 - rho^2)^2 / n for normal pairs: from
 * memory). */
static void test_two_shares_analytic(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_uncert_point pt[1];
    sw_error err;
    (void)state;

    load(SITE_HEAD "mass = 12000\nmass_sd = 500\nextra_moment = 2500\n"
                   "extra_moment_sd = 294.3\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 77, &err), SW_OK);
    assert_int_equal(u.n_params, 2);
    const size_t n = 20000;
    assert_int_equal(sw_uncert_point_run(&u, 9.05, 5.0, n, NULL, 2, pt, &err),
                     SW_OK);
    double a = 9.81 * 0.08 * 500.0, b = 294.3;
    double want[2] = {a * a / (a * a + b * b), b * b / (a * a + b * b)};
    assert_close(want[0], 0.64, 1e-3);
    assert_int_equal(pt[0].n_shares, 2);
    for (int i = 0; i < 2; i++) {
        size_t q = pt[0].param[i];
        assert_int_equal(u.params[q].kind, SW_UNCERT_GATE);
        int is_mass = u.params[q].key == SW_GP_MASS;
        double w = want[is_mass ? 0 : 1];
        double se = 2.0 * sqrt(w) * (1.0 - w) / sqrt((double)n);
        if (fabs(pt[0].r2[i] - w) > 4.0 * se ||
            fabs(pt[0].share[i] - w) > 4.0 * se)
            fail_msg("%s: r2 %.4f, share %.4f, analytic %.4f, 4 se %.4f",
                     u.params[q].name, pt[0].r2[i], pt[0].share[i], w,
                     4.0 * se);
    }
    /* linear and independent: the r^2 add up to 1 within sampling error
     * (the sample correlation of the two inputs, about 1 / sqrt(n)) */
    assert_close_abs(pt[0].r2_sum, 1.0, 4.0 / sqrt((double)n));
    sw_uncert_point_fini(pt, 1);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* ---- repeatability ----------------------------------------------------------- */

/* The same seed gives the same numbers with any number of workers; another
 * seed gives others. */
static void test_same_seed_any_workers(void **state)
{
    sw_site site;
    sw_uncert u, v;
    sw_uncert_point a[1], b[1], c[1];
    sw_error err;
    (void)state;

    load(SITE_HEAD "mass = 12000\nmass_sd = 500\nextra_moment = 2500\n"
                   "extra_moment_sd = 300\nvolume = 0.05\nvolume_sd = 0.01\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 99, &err), SW_OK);
    assert_int_equal(sw_uncert_init(&v, &site, 100, &err), SW_OK);
    assert_int_equal(sw_uncert_point_run(&u, 9.05, 8.9, 999, NULL, 1, a, &err),
                     SW_OK);
    assert_int_equal(sw_uncert_point_run(&u, 9.05, 8.9, 999, NULL, 3, b, &err),
                     SW_OK);
    assert_int_equal(sw_uncert_point_run(&v, 9.05, 8.9, 999, NULL, 2, c, &err),
                     SW_OK);
    assert_int_equal(a[0].n_open, b[0].n_open);
    assert_memory_equal(a[0].fs, b[0].fs, sizeof a[0].fs);
    assert_memory_equal(a[0].net_moment_Nm, b[0].net_moment_Nm,
                        sizeof a[0].net_moment_Nm);
    assert_memory_equal(a[0].tw_open_m, b[0].tw_open_m,
                        sizeof a[0].tw_open_m);
    assert_memory_equal(a[0].share, b[0].share, 3 * sizeof *a[0].share);
    assert_true(memcmp(a[0].net_moment_Nm, c[0].net_moment_Nm,
                       sizeof a[0].net_moment_Nm) != 0);
    sw_uncert_point_fini(a, 1);
    sw_uncert_point_fini(b, 1);
    sw_uncert_point_fini(c, 1);
    sw_uncert_fini(&u);
    sw_uncert_fini(&v);
    sw_site_fini(&site);
}

/* A sample is the same whether drawn first or after others: its stream is
 * its own. */
static void test_sample_independent_of_order(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_uncert_sample *s;
    sw_error err;
    double first[3], again[3];
    (void)state;

    load(SITE_HEAD "mass = 12000\nmass_sd = 500\nextra_moment = 2500\n"
                   "extra_moment_sd = 300\nvolume = 0.05\nvolume_sd = 0.01\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 5, &err), SW_OK);
    assert_int_equal(sw_uncert_sample_alloc(&s, &u, &err), SW_OK);
    assert_int_equal(sw_uncert_draw(&u, 17, s, &err), SW_OK);
    memcpy(first, s->value, sizeof first);
    for (size_t k = 0; k < 17; k++)
        assert_int_equal(sw_uncert_draw(&u, k, s, &err), SW_OK);
    assert_int_equal(sw_uncert_draw(&u, 17, s, &err), SW_OK);
    memcpy(again, s->value, sizeof again);
    assert_memory_equal(first, again, sizeof first);
    /* the drawn gate carries the drawn values, prepared again: weight
     * moment m g cg_offset (vertical leaf) */
    assert_close(s->gates[0].mass_kg, s->value[0], 0);
    assert_close(s->gates[0].weight_moment_Nm, s->value[0] * 9.81 * 0.08,
                 1e-12);
    sw_uncert_sample_free(s);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* Streams: seeds from 1 to 2^32 - 1, all different for the first samples. */
static int cmp_ul(const void *a, const void *b)
{
    unsigned long x = *(const unsigned long *)a, y = *(const unsigned long *)b;
    return (x > y) - (x < y);
}

static void test_stream_seeds(void **state)
{
    enum { N = 200000 };
    unsigned long *v = malloc(N * sizeof *v);
    (void)state;
    assert_non_null(v);
    for (size_t k = 0; k < N; k++) {
        v[k] = sw_uncert_stream_seed(SW_UNCERT_DEFAULT_SEED, k);
        assert_true(v[k] >= 1 && v[k] <= 0xFFFFFFFFUL);
    }
    qsort(v, N, sizeof *v, cmp_ul);
    for (size_t k = 1; k < N; k++)
        assert_true(v[k] != v[k - 1]);
    /* another run's seed moves every stream */
    assert_true(sw_uncert_stream_seed(1, 0) != sw_uncert_stream_seed(2, 0));
    free(v);
}

/* ---- zero uncertainty ------------------------------------------------------- */

/* Without any X_sd (or with X_sd = 0) every sample is the site as given:
 * the percentiles are the deterministic values exactly, and P(open) is 0
 * or 1. */
static void test_zero_uncertainty(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_uncert_point pt[1];
    sw_gate_result r;
    sw_crit alarm, open;
    sw_error err;
    (void)state;

    load(SITE_HEAD "mass = 12000\nmass_sd = 0\nextra_moment = 2500\n"
                   "volume = 0.05\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 1, &err), SW_OK);
    assert_int_equal(u.n_params, 0);
    assert_int_equal(sw_uncert_point_run(&u, 9.05, 8.2, 64, NULL, 2, pt, &err),
                     SW_OK);
    sw_gate_evaluate(&site.gates[0].gate, 9.05, 8.2, &r);
    assert_int_equal(sw_gate_critical_tailwater(&site.gates[0].gate, 9.05,
                                                SW_LIMIT_ALARM, &alarm, &err),
                     SW_OK);
    assert_int_equal(sw_gate_critical_tailwater(&site.gates[0].gate, 9.05,
                                                SW_LIMIT_OPEN, &open, &err),
                     SW_OK);
    for (int p = 0; p < SW_UNCERT_N_PCTL; p++) {
        assert_true(pt[0].fs[p] == r.fs);
        assert_true(pt[0].net_moment_Nm[p] == r.net_moment_Nm);
        assert_true(pt[0].tw_alarm_m[p] == (alarm.kind == SW_CRIT_LEVEL
                                                ? alarm.level_m
                                                : -INFINITY));
        assert_true(pt[0].tw_open_m[p] == (open.kind == SW_CRIT_LEVEL
                                               ? open.level_m
                                               : -INFINITY));
    }
    assert_true(pt[0].p_open == (r.state == SW_STATE_OPEN ? 1.0 : 0.0));
    assert_true(pt[0].p_low == (r.state == SW_STATE_LOW ? 1.0 : 0.0));
    assert_true(pt[0].p_open_se == 0.0);
    assert_int_equal(pt[0].n_shares, 0);
    sw_uncert_point_fini(pt, 1);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* ---- truncation ------------------------------------------------------------- */

/* A mass of 100 +- 100 kg truncated at 0: every draw is positive, and the
 * draws' mean is the truncated normal's, mu + sigma phi(alpha) / (1 -
 * Phi(alpha)) with alpha = (0 - mu) / sigma = -1 (Johnson, Kotz and
 * Balakrishnan, Continuous Univariate Distributions vol. 1, 2nd ed.,
 * eq. 13.134: from memory), = 100 + 100 * 0.24197 / 0.84134 = 128.76 kg;
 * its standard deviation sigma sqrt(1 + alpha phi/(1-Phi) - (phi/(1-Phi))^2)
 * = 100 * sqrt(1 - 0.28760 - 0.08271) = 79.35 kg bounds the error of the
 * mean. */
static void test_truncated_at_zero(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_uncert_sample *s;
    sw_error err;
    double sum = 0.0, lo = INFINITY;
    const size_t n = 20000;
    (void)state;

    load(SITE_HEAD "mass = 100\nmass_sd = 100\n", &site);
    assert_int_equal(sw_uncert_init(&u, &site, 3, &err), SW_OK);
    assert_int_equal(sw_uncert_sample_alloc(&s, &u, &err), SW_OK);
    for (size_t k = 0; k < n; k++) {
        assert_int_equal(sw_uncert_draw(&u, k, s, &err), SW_OK);
        sum += s->value[0];
        lo = fmin(lo, s->value[0]);
    }
    double lambda = gsl_ran_ugaussian_pdf(-1.0) / gsl_cdf_ugaussian_Q(-1.0);
    double mean = 100.0 + 100.0 * lambda;
    double sd = 100.0 * sqrt(1.0 - lambda - lambda * lambda);
    assert_close(mean, 128.76, 1e-4);
    assert_true(lo > 0.0);
    assert_close_abs(sum / (double)n, mean, 4.0 * sd / sqrt((double)n));
    sw_uncert_sample_free(s);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* A leaf_length left to its default follows the drawn seal; the drawn
 * gate keeps its centre of gravity on the leaf (rules between keys). */
static void test_defaults_follow_draws(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_uncert_sample *s;
    sw_error err;
    (void)state;

    load(SITE_HEAD "mass = 800\nseal_height_sd = 0.05\ncg_along_sd = 0.9\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 8, &err), SW_OK);
    assert_int_equal(sw_uncert_sample_alloc(&s, &u, &err), SW_OK);
    for (size_t k = 0; k < 2000; k++) {
        assert_int_equal(sw_uncert_draw(&u, k, s, &err), SW_OK);
        const sw_gate *g = &s->gates[0];
        assert_true(g->leaf_length_m == 0.2 + g->seal_height_m);
        assert_true(g->s_sill_m == g->leaf_length_m);
        assert_true(g->cg_along_m >= 0.0 && g->cg_along_m <= g->leaf_length_m);
    }
    sw_uncert_sample_free(s);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* Keys whose rules almost never hold together: the draw gives up with
 * SW_ESITE naming the gate (seal_top within 0.25 m of the hinge and
 * cg_along on the 1.65 m leaf, both drawn with 1e5 m: each holds for about
 * 1 draw in 2000 of those inside its own range). */
static void test_redraws_give_up(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_uncert_sample *s;
    sw_error err;
    (void)state;

    load("[site]\ngravity = 9.81\nrequired_fs = 1.5\n"
         "[water upstream]\ndensity = 1000\n"
         "[water downstream]\ndensity = 1000\n"
         "[gate W]\nshape = rectangle\nhinge_level = 10.0\ninclination = 90\n"
         "seal_top = 0.15\nseal_top_sd = 1e5\nseal_height = 1.4\n"
         "seal_width = 1.5\nleaf_length = 1.65\nmass = 800\n"
         "cg_along = 0.8\ncg_along_sd = 1e5\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 8, &err), SW_OK);
    assert_int_equal(sw_uncert_sample_alloc(&s, &u, &err), SW_OK);
    assert_int_equal(sw_uncert_draw(&u, 0, s, &err), SW_ESITE);
    assert_non_null(strstr(err.message, "gate 'W': 10000 draws of its "
                                        "uncertain keys in a row broke a "
                                        "rule"));
    assert_int_equal(err.line, 8);
    sw_uncert_sample_free(s);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* Waters and datums: a drawn temperature goes through the equation of
 * state; a series' datum is one shift per sample, for the gates that read
 * it; the site copy for a replay moves offset and valid_range with it. */
static void test_waters_and_datums(void **state)
{
    sw_site site, copy;
    sw_uncert u;
    sw_uncert_sample *s;
    sw_error err;
    (void)state;

    load("[site]\ngravity = 9.81\nrequired_fs = 1.5\n"
         "[water upstream]\ntemperature = 12.5\ntemperature_sd = 2\n"
         "[water downstream]\ndensity = 1010\ndensity_sd = 3\n"
         "[series up]\nfile = x.csv\nvalue_column = a\noffset = 1.25\n"
         "offset_sd = 0.02\nvalid_range = 5, 15\n"
         "[series down]\nfile = x.csv\nvalue_column = b\noffset = 0\n"
         "offset_sd = 0.03\n"
         "[gate V]\nshape = rectangle\nhinge_level = 10.0\ninclination = 90\n"
         "seal_top = 0.2\nseal_height = 2.0\nseal_width = 1.5\n"
         "cg_along = 1.0\nmass = 900\nheadwater = up\ntailwater = down\n"
         "[gate X]\nshape = circle\nhinge_level = 10.0\ninclination = 80\n"
         "seal_top = 0.1\ndiameter = 0.8\ncg_along = 0.4\nmass = 300\n",
         &site);
    assert_int_equal(sw_uncert_init(&u, &site, 11, &err), SW_OK);
    assert_int_equal(u.n_params, 4);
    assert_int_equal(u.params[0].kind, SW_UNCERT_TEMPERATURE);
    assert_int_equal(u.params[1].kind, SW_UNCERT_DENSITY);
    assert_int_equal(u.params[2].kind, SW_UNCERT_OFFSET);
    assert_string_equal(u.params[2].name, "series up: offset");
    assert_true(sw_uncert_affects(&u, 2, 0));
    assert_false(sw_uncert_affects(&u, 2, 1));
    assert_true(sw_uncert_affects(&u, 0, 1));
    assert_int_equal(sw_uncert_sample_alloc(&s, &u, &err), SW_OK);
    assert_int_equal(sw_uncert_draw(&u, 4, s, &err), SW_OK);
    double rho;
    assert_int_equal(sw_water_density(s->value[0], 0.0, &rho, &err), SW_OK);
    assert_true(s->rho_kgm3[SW_UPSTREAM] == rho);
    assert_true(s->gates[1].rho_kgm3[SW_UPSTREAM] == rho);
    assert_true(s->gates[0].rho_kgm3[SW_DOWNSTREAM] == s->value[1]);
    double dhw, dtw;
    sw_uncert_gate_shifts(&u, s, 0, &dhw, &dtw);
    assert_true(dhw == s->value[2] - 1.25);
    assert_true(dtw == s->value[3] - 0.0);
    sw_uncert_gate_shifts(&u, s, 1, &dhw, &dtw);
    assert_true(dhw == 0.0 && dtw == 0.0);
    assert_int_equal(sw_uncert_site(&u, s, &copy, &err), SW_OK);
    assert_true(copy.series[0].offset_m == 1.25 + (s->value[2] - 1.25));
    assert_close(copy.series[0].qc.range_lo_m, 5.0 + s->value[2] - 1.25,
                 1e-15);
    assert_close(copy.series[0].qc.range_hi_m, 15.0 + s->value[2] - 1.25,
                 1e-15);
    assert_true(copy.gates[1].gate.mass_kg == 300.0);
    assert_true(copy.zone == site.zone);
    sw_uncert_site_fini(&copy);

    /* point with one sample is that sample: the headwater gauge's reading
     * 9.3 is the true level 9.3 + dhw, and the critical tailwater comes
     * back as the tailwater gauge shows it: less dtw */
    sw_uncert_point pt[2];
    sw_gate_result gr;
    sw_crit alarm;
    assert_int_equal(sw_uncert_draw(&u, 0, s, &err), SW_OK);
    sw_uncert_gate_shifts(&u, s, 0, &dhw, &dtw);
    assert_true(dhw != 0.0 && dtw != 0.0);
    sw_gate_evaluate(&s->gates[0], 9.3 + dhw, 8.5 + dtw, &gr);
    assert_int_equal(sw_gate_critical_tailwater(&s->gates[0], 9.3 + dhw,
                                                SW_LIMIT_ALARM, &alarm, &err),
                     SW_OK);
    int only_v[2] = {1, 0};
    assert_int_equal(sw_uncert_point_run(&u, 9.3, 8.5, 1, only_v, 1, pt, &err),
                     SW_OK);
    assert_true(pt[0].net_moment_Nm[1] == gr.net_moment_Nm);
    assert_int_equal(alarm.kind, SW_CRIT_LEVEL);
    assert_true(pt[0].tw_alarm_m[1] == alarm.level_m - dtw);
    assert_int_equal(pt[1].n, 0); /* not wanted */
    sw_uncert_point_fini(pt, 2);
    sw_uncert_sample_free(s);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

/* ---- statistics by hand -------------------------------------------------------- */

static void test_crit_quantile(void **state)
{
    (void)state;
    /* n = 5, p = 0.5: h = 2, the middle value */
    double a[5] = {11.2, -INFINITY, 10.9, 11.0, -INFINITY};
    assert_close(sw_uncert_crit_quantile(a, 5, 0.5, 1), 10.9, 0);
    /* p = 0.3: h = 1.2, between -inf (index 1) and 10.9 (index 2): the
     * level is the safe side for a tailwater; none for a headwater */
    double b[5] = {11.2, -INFINITY, 10.9, 11.0, -INFINITY};
    assert_close(sw_uncert_crit_quantile(b, 5, 0.3, 1), 10.9, 0);
    double c[5] = {11.2, -INFINITY, 10.9, 11.0, -INFINITY};
    assert_true(isinf(sw_uncert_crit_quantile(c, 5, 0.3, 0)));
    /* p = 0.25: h = 1 exactly on the -inf: not needed */
    double d[5] = {11.2, -INFINITY, 10.9, 11.0, -INFINITY};
    assert_true(isinf(sw_uncert_crit_quantile(d, 5, 0.25, 1)));
    /* p = 0.9: h = 3.6, 11.0 + 0.6 (11.2 - 11.0) = 11.12 (Hyndman and Fan
     * 1996, definition 7) */
    double e[5] = {11.2, -INFINITY, 10.9, 11.0, -INFINITY};
    assert_close(sw_uncert_crit_quantile(e, 5, 0.9, 1), 11.12, 1e-14);
}

/* r^2 by the textbook formula on a small set, against the one-pass
 * accumulator. */
static void test_corr_by_hand(void **state)
{
    const double x[6][2] = {{1.5, 2.25}, {2.75, -0.5}, {3.1, 1.0},
                            {4.6, 0.35}, {5.2, 2.9},   {6.05, -1.2}};
    const double y[6] = {3.2, 4.1, 6.9, 8.15, 12.4, 9.7};
    sw_uncert_corr c;
    sw_error err;
    double r2[2], share[2];
    (void)state;

    assert_int_equal(sw_uncert_corr_init(&c, 2, &err), SW_OK);
    for (int k = 0; k < 6; k++)
        sw_uncert_corr_add(&c, x[k], y[k]);
    double sum = sw_uncert_corr_shares(&c, r2, share);
    for (int i = 0; i < 2; i++) {
        double mx = 0, my = 0, sxy = 0, sxx = 0, syy = 0;
        for (int k = 0; k < 6; k++) {
            mx += x[k][i] / 6;
            my += y[k] / 6;
        }
        for (int k = 0; k < 6; k++) {
            sxy += (x[k][i] - mx) * (y[k] - my);
            sxx += (x[k][i] - mx) * (x[k][i] - mx);
            syy += (y[k] - my) * (y[k] - my);
        }
        assert_close(r2[i], sxy * sxy / (sxx * syy), 1e-12);
    }
    assert_close(sum, r2[0] + r2[1], 1e-15);
    assert_close(share[0], r2[0] / sum, 1e-15);
    sw_uncert_corr_fini(&c);
}

static void test_proportion(void **state)
{
    double p, se;
    (void)state;
    /* 37 of 200: p = 0.185, se = sqrt(0.185 * 0.815 / 200) */
    sw_uncert_proportion(37, 200, &p, &se);
    assert_close(p, 0.185, 1e-15);
    assert_close(se, sqrt(0.185 * 0.815 / 200.0), 1e-15);
}

static void test_bad_sample_count(void **state)
{
    sw_site site;
    sw_uncert u;
    sw_uncert_point pt[1];
    sw_error err;
    (void)state;
    load(SITE_HEAD "mass = 800\n", &site);
    assert_int_equal(sw_uncert_init(&u, &site, 1, &err), SW_OK);
    assert_int_equal(sw_uncert_point_run(&u, 9.0, 5.0, 0, NULL, 1, pt, &err),
                     SW_EUSAGE);
    assert_int_equal(sw_uncert_point_run(&u, 9.0, 5.0,
                                         SW_UNCERT_MAX_SAMPLES + 1, NULL, 1,
                                         pt, &err),
                     SW_EUSAGE);
    sw_uncert_fini(&u);
    sw_site_fini(&site);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_p_open_analytic),
        cmocka_unit_test(test_two_shares_analytic),
        cmocka_unit_test(test_same_seed_any_workers),
        cmocka_unit_test(test_sample_independent_of_order),
        cmocka_unit_test(test_stream_seeds),
        cmocka_unit_test(test_zero_uncertainty),
        cmocka_unit_test(test_truncated_at_zero),
        cmocka_unit_test(test_defaults_follow_draws),
        cmocka_unit_test(test_redraws_give_up),
        cmocka_unit_test(test_waters_and_datums),
        cmocka_unit_test(test_crit_quantile),
        cmocka_unit_test(test_corr_by_hand),
        cmocka_unit_test(test_proportion),
        cmocka_unit_test(test_bad_sample_count),
    };
    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
