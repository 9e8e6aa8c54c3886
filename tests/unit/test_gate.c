/* Unit tests of the gate model (src/gate.c) against outside references:
 * handbook formulas for plane surfaces, circular-segment properties, and
 * GSL adaptive quadrature of the model's defining integrals. */
#include "testutil.h"

#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_rng.h>

#include "sillwatch/gate.h"

#define RHO_FRESH 999.7 /* fresh water near 10 degrees C, kg/m^3 */
#define RHO_SEA 1025.3
#define G 9.80665       /* standard gravity, 3rd CGPM (1901) */

static sw_gate rect_gate(double hinge, double incl, double top, double height,
                         double width)
{
    sw_gate g;
    memset(&g, 0, sizeof g);
    strcpy(g.name, "R1");
    g.shape = SW_SHAPE_RECTANGLE;
    g.hinge_level_m = hinge;
    g.inclination_deg = incl;
    g.seal_top_m = top;
    g.seal_height_m = height;
    g.seal_width_m = width;
    g.leaf_length_m = top + height;
    g.mass_kg = 1385.0;
    g.cg_along_m = 0.5 * (top + height);
    g.required_fs = 1.5;
    g.rho_kgm3[SW_UPSTREAM] = RHO_FRESH;
    g.rho_kgm3[SW_DOWNSTREAM] = RHO_SEA;
    g.g_ms2 = G;
    sw_gate_prepare(&g);
    return g;
}

static sw_gate circle_gate(double hinge, double incl, double top, double dia)
{
    sw_gate g = rect_gate(hinge, incl, top, dia, 1.0);
    strcpy(g.name, "C1");
    g.shape = SW_SHAPE_CIRCLE;
    g.seal_height_m = 0.0;
    g.seal_width_m = 0.0;
    g.diameter_m = dia;
    sw_gate_prepare(&g);
    return g;
}

/* ---- independent quadrature of the model's integrals -------------------- */

typedef struct quad_ctx {
    const sw_gate *g;
    double s_w;   /* where the surface meets the leaf's plane */
    double q;     /* b - s_w: depth of the sill below the surface, along s */
    int power;    /* 0: integrand (s - s_w) w; 1: (s - s_w) s w */
} quad_ctx;

/* The integrand in u = s - s_w, with the width computed from v = b - s,
 * the distance above the sill, so that thin films keep their precision. */
static double integrand(double u, void *p)
{
    const quad_ctx *c = p;
    const sw_gate *g = c->g;
    double v = c->q - u, w;

    if (g->shape == SW_SHAPE_RECTANGLE) {
        w = g->seal_width_m;
    } else {
        double prod = v * (g->diameter_m - v);
        w = prod > 0.0 ? 2.0 * sqrt(prod) : 0.0;
    }
    return c->power ? u * (c->s_w + u) * w : u * w;
}

/* F and M straight from the model's definition (model document: pressure
 * rho g sin a (s - s_w) normal to the leaf; F = int p w ds, M = int p s w
 * ds), by GSL's doubly-adaptive CQUAD, which copes with the square-root
 * ends of the circle's width. */
static void quad_load(const sw_gate *g, double level, double rho, double *f,
                      double *m)
{
    double s_w = (g->hinge_level_m - level) / g->sin_a;
    double lo = s_w > g->seal_top_m ? s_w : g->seal_top_m;
    double k = rho * g->g_ms2 * g->sin_a, res, abserr;
    size_t nev;
    gsl_integration_cquad_workspace *ws = gsl_integration_cquad_workspace_alloc(200);
    quad_ctx c = {g, s_w, g->s_sill_m - s_w, 0};
    gsl_function fn = {integrand, &c};

    *f = *m = 0.0;
    if (lo < g->s_sill_m) {
        assert_int_equal(gsl_integration_cquad(&fn, lo - s_w, c.q, 0.0, 1e-13,
                                               ws, &res, &abserr, &nev),
                         GSL_SUCCESS);
        *f = k * res;
        c.power = 1;
        assert_int_equal(gsl_integration_cquad(&fn, lo - s_w, c.q, 0.0, 1e-13,
                                               ws, &res, &abserr, &nev),
                         GSL_SUCCESS);
        *m = k * res;
    }
    gsl_integration_cquad_workspace_free(ws);
}

/* Closed forms against quadrature over many random gates and levels
 * (reference: GSL CQUAD of the defining integrals; bound 1e-9 relative). */
static void test_closed_forms_match_quadrature(void **state)
{
    (void)state;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(rng, 20261202);
    int partial = 0, thin = 0;

    for (int i = 0; i < 4000; i++) {
        double hinge = 50.0 + 20.0 * gsl_rng_uniform(rng);
        double incl = 5.0 + 170.0 * gsl_rng_uniform(rng);
        double top = 0.8 * gsl_rng_uniform(rng);
        double size = 0.2 + 3.0 * gsl_rng_uniform(rng);
        sw_gate g = (i % 2) ? circle_gate(hinge, incl, top, size)
                            : rect_gate(hinge, incl, top, size,
                                        0.3 + 2.0 * gsl_rng_uniform(rng));
        /* levels from below the sill to well above the hinge, with some
         * packed into a thin film just above the sill */
        double level;
        if (i % 5 == 0)
            level = g.sill_level_m + 1e-3 * size * gsl_rng_uniform(rng);
        else
            level = g.sill_level_m - 0.5 +
                    (hinge + 3.0 - g.sill_level_m) * gsl_rng_uniform(rng);
        double f, m, fq, mq;
        sw_gate_water_load(&g, level, RHO_FRESH, &f, &m);
        quad_load(&g, level, RHO_FRESH, &fq, &mq);
        if (fq == 0.0) {
            assert_true(f == 0.0 && m == 0.0);
            continue;
        }
        if (level < g.seal_top_level_m)
            partial++;
        if (level - g.sill_level_m < 0.05 * size * g.sin_a)
            thin++;
        assert_close(f, fq, 1e-9);
        assert_close(m, mq, 1e-9);
    }
    assert_true(partial > 1000); /* the partial regime was exercised */
    assert_true(thin > 400);     /* and the thin-film series */
    gsl_rng_free(rng);
}

/* Centre of pressure of a fully submerged inclined plane:
 * y_cp = y_c + I_xc / (y_c A), y measured along the plane from the line
 * where it meets the surface; I_xc = b h^3/12 for a rectangle and
 * pi R^4/4 for a circle (standard hydrostatics handbook formula, e.g.
 * White, Fluid Mechanics, sec. 2.5; from memory).  The force is
 * F = rho g h_c A with h_c the depth of the centroid (same source). */
static void test_centre_of_pressure_rectangle(void **state)
{
    (void)state;
    sw_gate g = rect_gate(12.385, 63.4, 0.47, 1.913, 1.337);
    double level = 13.218; /* above the hinge: fully submerged */
    double s_w = (g.hinge_level_m - level) / g.sin_a;
    double yc = 0.5 * (g.seal_top_m + g.s_sill_m) - s_w;
    double area = 1.337 * 1.913;
    double ixc = 1.337 * pow(1.913, 3) / 12.0;
    double ycp = yc + ixc / (yc * area);
    double hc = yc * g.sin_a;
    double f, m;

    sw_gate_water_load(&g, level, RHO_SEA, &f, &m);
    assert_close(f, RHO_SEA * G * hc * area, 1e-12);
    assert_close(m / f - s_w, ycp, 1e-12);
}

static void test_centre_of_pressure_circle(void **state)
{
    (void)state;
    sw_gate g = circle_gate(7.912, 78.25, 0.615, 1.481);
    double level = 7.4; /* below the hinge, above the seal top */
    double r = 0.5 * 1.481;
    double s_w = (g.hinge_level_m - level) / g.sin_a;
    double yc = 0.615 + r - s_w;
    double area = M_PI * r * r;
    double ycp = yc + (M_PI * pow(r, 4) / 4.0) / (yc * area);
    double f, m;

    assert_true(level > g.seal_top_level_m && level < g.hinge_level_m);
    sw_gate_water_load(&g, level, RHO_FRESH, &f, &m);
    assert_close(f, RHO_FRESH * G * yc * g.sin_a * area, 1e-12);
    assert_close(m / f - s_w, ycp, 1e-12);
}

/* Circular segment of R = 1 and half-angle 1 rad: area 0.545351287,
 * centroid 0.728366286 from the centre, second moment about the diameter
 * 0.297300156 (standard handbook formulas A = R^2 (t - sin t cos t),
 * ybar = 2 R sin^3 t / (3 (t - sin t cos t)), I = R^4 (t - sin t cos t
 * + 2 sin^3 t cos t) / 4; values computed from them).  With the surface at
 * the chord, the model's integrals are F/k = A (ybar - y0) and
 * M/k = I - y0 A ybar + c F/k, with y0 = cos 1 and c the centre's s. */
static void test_circular_segment_reference(void **state)
{
    (void)state;
    const double area = 0.545351287, ybar = 0.728366286, inertia = 0.297300156;
    sw_gate g = circle_gate(4.0, 90.0, 0.25, 2.0); /* vertical, R = 1 */
    double c = 0.25 + 1.0, y0 = cos(1.0);
    double level = g.hinge_level_m - (c + y0); /* surface at the chord */
    double k = RHO_FRESH * G, f, m;

    sw_gate_water_load(&g, level, RHO_FRESH, &f, &m);
    assert_close(f / k, area * (ybar - y0), 2e-8);
    assert_close(m / k, inertia - y0 * area * ybar + c * area * (ybar - y0), 2e-8);
}

/* Water exactly at the top of a circular opening.  The gate is that of the
 * fuzzer input tests/fuzz/regressions/site/circle-seal-top.ini (gate
 * 'bypass'): there the surface's s came out a rounding below the circle, a
 * square root of a negative number made both water loads NaN, and a NaN
 * verdict read as `ok`.  The load must be that of the fully wetted disc:
 * F/k = d pi r^2 with d = r (the surface at the top of the disc), and
 * M/k = pi r^4 / 4 + c d pi r^2 (a disc's second moment about its
 * diameter, pi r^4 / 4: common practice, no source).  Then the same over
 * random circular gates, each at its own seal top. */
static void test_circle_surface_at_seal_top(void **state)
{
    (void)state;
    sw_gate g = circle_gate(0.95, 75.0, 0.12, 0.90);
    double r = 0.45, c = 0.12 + r, area = M_PI * r * r;
    double k = RHO_FRESH * G * sin(75.0 * M_PI / 180.0), f, m;
    sw_gate_result res;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);

    g.leaf_length_m = 1.10;
    g.mass_kg = 420.0;
    g.cg_along_m = 0.55;
    g.volume_m3 = 1.3;
    g.min_sill_reaction_N = 200.0;
    sw_gate_prepare(&g);
    sw_gate_water_load(&g, g.seal_top_level_m, RHO_FRESH, &f, &m);
    assert_close(f / k, r * area, 1e-9);
    assert_close(m / k, 0.25 * area * r * r + c * r * area, 1e-9);
    sw_gate_evaluate(&g, g.seal_top_level_m, 0.83408890084531173, &res);
    assert_false(isnan(res.net_moment_Nm) || isnan(res.fs) ||
                 isnan(res.sill_reaction_N));
    sw_gate_evaluate(&g, 1.357, g.seal_top_level_m, &res);
    assert_false(isnan(res.net_moment_Nm) || isnan(res.fs) ||
                 isnan(res.sill_reaction_N));

    assert_non_null(rng);
    gsl_rng_set(rng, 24071);
    for (int i = 0; i < 20000; i++) {
        double hinge = -50.0 + 100.0 * gsl_rng_uniform(rng);
        double incl = 5.0 + 170.0 * gsl_rng_uniform(rng);
        double top = 1.5 * gsl_rng_uniform(rng);
        double dia = 0.05 + 2.95 * gsl_rng_uniform(rng);
        sw_gate h = circle_gate(hinge, incl, top, dia);
        double rr = 0.5 * dia, kk = RHO_FRESH * G * h.sin_a;

        sw_gate_water_load(&h, h.seal_top_level_m, RHO_FRESH, &f, &m);
        assert_close(f / kk, rr * M_PI * rr * rr, 1e-9);
        assert_close(m / kk, 0.25 * M_PI * rr * rr * rr * rr +
                     (top + rr) * rr * M_PI * rr * rr, 1e-9);
    }
    gsl_rng_free(rng);
}

/* Regime boundaries: water exactly at the sill gives nothing; at the seal
 * top the partial and full forms agree; at the hinge s_w = 0.  Each load is
 * continuous across them (common practice, no source). */
static void test_regime_boundaries(void **state)
{
    (void)state;
    sw_gate gates[2] = {rect_gate(6.25, 71.5, 0.385, 1.47, 0.96),
                        circle_gate(6.25, 104.3, 0.385, 1.21)};
    for (int i = 0; i < 2; i++) {
        const sw_gate *g = &gates[i];
        double f, m, f2, m2;
        /* at the sill: nothing, to rounding of the sill's elevation */
        sw_gate_water_load(g, g->sill_level_m, RHO_FRESH, &f, &m);
        assert_true(f < 1e-12 && m < 1e-12);
        sw_gate_water_load(g, g->sill_level_m - 0.731, RHO_FRESH, &f, &m);
        assert_true(f == 0.0 && m == 0.0);
        const double levels[3] = {g->sill_level_m, g->seal_top_level_m,
                                  g->hinge_level_m};
        for (int j = 0; j < 3; j++) {
            double eps = 1e-9;
            sw_gate_water_load(g, levels[j] - eps, RHO_FRESH, &f, &m);
            sw_gate_water_load(g, levels[j] + eps, RHO_FRESH, &f2, &m2);
            assert_close_abs(f2, f, 1e-4);
            assert_close_abs(m2, m, 1e-4);
        }
        /* at the seal top: the whole opening, pressure from zero at the top:
         * F = k * A * (centroid s - seal_top) */
        sw_gate_water_load(g, g->seal_top_level_m, RHO_FRESH, &f, &m);
        assert_close(f, RHO_FRESH * G * g->sin_a * g->area_m2 *
                            (0.5 * (g->seal_top_m + g->s_sill_m) - g->seal_top_m),
                     1e-12);
    }
}

/* A hand-computable vertical rectangle, partly wetted: triangle of pressure
 * over depth d = level - sill: F = rho g w d^2 / 2, acting d/3 above the
 * sill (common practice, no source). */
static void test_vertical_rectangle_by_hand(void **state)
{
    (void)state;
    sw_gate g = rect_gate(10.0, 90.0, 0.35, 1.6, 1.25);
    double d = 0.917, f, m;
    sw_gate_water_load(&g, g.sill_level_m + d, RHO_FRESH, &f, &m);
    assert_close(f, RHO_FRESH * G * 1.25 * d * d / 2.0, 1e-13);
    assert_close(m / f, 1.95 - d / 3.0, 1e-13);
}

/* Weight, buoyancy and the verdict for one hand-computed case. */
static void test_weight_buoyancy_and_state(void **state)
{
    (void)state;
    sw_gate g = rect_gate(20.0, 60.0, 0.2, 1.8, 1.1);
    g.leaf_length_m = 2.3;
    g.mass_kg = 842.0;
    g.cg_along_m = 1.07;
    g.cg_offset_m = 0.085;
    g.volume_m3 = 0.118;
    g.extra_moment_Nm = 415.0;
    sw_gate_prepare(&g);
    double c60 = 0.5, s60 = sqrt(3.0) / 2.0;

    /* model: weight_moment = m g (cg_along cos a + cg_offset sin a) */
    assert_close(g.weight_moment_Nm, 842.0 * G * (1.07 * c60 + 0.085 * s60),
                 1e-13);

    /* headwater at the hinge (s0 = 0), tailwater dry: the whole volume is
     * under the headwater, acting at leaf_length/2 */
    sw_gate_result r;
    sw_gate_evaluate(&g, 20.0, 10.0, &r);
    assert_int_equal(r.buoyancy_side, SW_UPSTREAM);
    assert_close(r.buoyancy_force_N, RHO_FRESH * G * 0.118, 1e-13);
    assert_close(r.buoyancy_moment_Nm, RHO_FRESH * G * 0.118 * 1.15 * c60, 1e-13);
    assert_true(r.tw_force_N == 0.0 && r.tw_moment_Nm == 0.0);

    /* tailwater higher, halfway down the leaf: s0 = 1.15, V_sub = V/2,
     * arm (1.15 + 2.3)/2 cos a */
    double tw = 20.0 - 1.15 * s60;
    sw_gate_evaluate(&g, 18.0, tw, &r);
    assert_int_equal(r.buoyancy_side, SW_DOWNSTREAM);
    assert_close(r.buoyancy_force_N, RHO_SEA * G * 0.059, 1e-12);
    assert_close(r.buoyancy_arm_m, 1.725 * c60, 1e-12);

    /* tie: the denser water (downstream here) */
    sw_gate_evaluate(&g, 19.1, 19.1, &r);
    assert_int_equal(r.buoyancy_side, SW_DOWNSTREAM);

    /* the totals follow the model's sign convention */
    sw_gate_evaluate(&g, 19.87, 18.42, &r);
    assert_close(r.resisting_moment_Nm,
                 r.tw_moment_Nm + r.weight_moment_Nm - r.buoyancy_moment_Nm + 415.0,
                 1e-13);
    assert_close(r.net_moment_Nm, r.resisting_moment_Nm - r.hw_moment_Nm, 1e-13);
    /* model: R = weight - buoyancy + extra, D = hw_moment - tw_moment */
    assert_close(r.restraint_Nm,
                 r.weight_moment_Nm - r.buoyancy_moment_Nm + 415.0, 1e-13);
    assert_close(r.net_water_moment_Nm, r.hw_moment_Nm - r.tw_moment_Nm,
                 1e-13);
    assert_true(r.net_water_moment_Nm > 0.0);
    assert_close(r.fs, r.restraint_Nm / r.net_water_moment_Nm, 1e-13);
    assert_close(r.sill_reaction_N, r.net_moment_Nm / 2.0, 1e-13);
    g.fs_basis = SW_FS_OVERTURNING;
    sw_gate_evaluate(&g, 19.87, 18.42, &r);
    assert_close(r.fs, r.resisting_moment_Nm / r.hw_moment_Nm, 1e-13);
    g.fs_basis = SW_FS_NET;

    /* dry headwater: fs is infinite and the gate is ok */
    sw_gate_evaluate(&g, 15.0, 15.0, &r);
    assert_true(isinf(r.fs) && r.fs > 0.0);
    assert_int_equal(r.state, SW_STATE_OK);
}

/* The three states at levels chosen around the gate's limits. */
static void test_states(void **state)
{
    (void)state;
    sw_gate g = rect_gate(5.0, 75.0, 0.3, 1.2, 0.9);
    g.min_sill_reaction_N = 250.0;
    sw_gate_prepare(&g);
    sw_gate_result r;
    double tw = g.sill_level_m - 1.0; /* dry tailwater */

    sw_gate_evaluate(&g, 4.9, tw, &r);
    assert_int_equal(r.state, SW_STATE_OPEN);
    assert_true(r.net_moment_Nm <= 0.0 && r.sill_reaction_N < 0.0);

    sw_gate_evaluate(&g, 5.0 - 1.45, tw, &r);
    assert_int_equal(r.state, SW_STATE_OK);
    assert_true(r.fs >= 1.5 && r.sill_reaction_N >= 250.0);

    /* somewhere between: fs between 1 and 1.5 */
    int seen_low = 0;
    for (double hw = 3.5; hw < 4.9; hw += 0.01) {
        sw_gate_evaluate(&g, hw, tw, &r);
        if (r.state == SW_STATE_LOW) {
            seen_low = 1;
            assert_true(r.net_moment_Nm > 0.0);
            assert_true(r.fs < 1.5 || r.sill_reaction_N < 250.0);
        }
    }
    assert_true(seen_low);
}

/* ---- the factor of safety's two bases ----------------------------------- */

static sw_gate random_gate(gsl_rng *rng, int i);

/* A vertical leaf (sin a = 1, cos a = 0) hinged at 14.3 m with a 1.37 m
 * wide opening from s = 0 to s = 1.86 m: every load can be worked by hand
 * (common practice, no source: the pressure prism on a vertical plane).
 * A water at level z whose surface is at s_w = 14.3 - z above the opening's
 * foot has, over the wetted part s in [max(s_w, 0), H],
 *   F = rho g w int (s - s_w) ds,  M = rho g w int (s - s_w) s ds. */
static sw_gate hand_gate(void)
{
    sw_gate g = rect_gate(14.3, 90.0, 0.0, 1.86, 1.37);
    g.mass_kg = 1173.0;
    g.cg_along_m = 0.93;
    g.cg_offset_m = 0.071; /* weight moment m g cg_offset */
    g.extra_moment_Nm = 612.5;
    g.required_fs = 1.35;
    g.rho_kgm3[SW_UPSTREAM] = RHO_FRESH;
    g.rho_kgm3[SW_DOWNSTREAM] = RHO_FRESH;
    sw_gate_prepare(&g);
    return g;
}

/* M of a vertical rectangle from s = 0 to H for a surface at s_w:
 * wetted from a = max(s_w, 0):  rho g w [s^3/3 - s_w s^2/2] from a to H. */
static double hand_moment(double s_w, double H, double w)
{
    double a = s_w > 0.0 ? s_w : 0.0;
    if (a >= H)
        return 0.0;
    return RHO_FRESH * G * w *
           ((H * H * H - a * a * a) / 3.0 - s_w * (H * H - a * a) / 2.0);
}

static void evaluate_on(sw_gate *g, sw_fs_basis basis, double hw, double tw,
                        sw_gate_result *r)
{
    g->fs_basis = basis;
    sw_gate_evaluate(g, hw, tw, r);
}

/* Dry tailwater: the two bases agree exactly (model document: "The two
 * bases agree wherever the tailwater does not reach the sealed opening"). */
static void test_fs_bases_agree_dry_tailwater(void **state)
{
    (void)state;
    sw_gate g = hand_gate();
    sw_gate_result n, o;
    const double hws[] = {12.61, 13.127, 13.884, 14.3, 15.06};
    for (size_t i = 0; i < sizeof hws / sizeof hws[0]; i++) {
        evaluate_on(&g, SW_FS_NET, hws[i], 11.9, &n);
        evaluate_on(&g, SW_FS_OVERTURNING, hws[i], 11.9, &o);
        assert_true(n.tw_moment_Nm == 0.0);
        assert_true(n.fs == o.fs); /* exactly */
        assert_int_equal(n.state, o.state);
        /* R = m g cg_offset + extra (vertical leaf, no volume), by hand */
        assert_close(n.fs, (1173.0 * G * 0.071 + 612.5) /
                               hand_moment(14.3 - hws[i], 1.86, 1.37),
                     1e-12);
    }
}

/* Tailwater over part of the opening, below the headwater: fs = R / D on
 * the net basis and Mr / hw_moment on the overturning basis, by hand. */
static void test_fs_bases_partly_wetted(void **state)
{
    (void)state;
    sw_gate g = hand_gate();
    sw_gate_result n, o;
    double R = 1173.0 * G * 0.071 + 612.5;
    double mh = hand_moment(14.3 - 13.517, 1.86, 1.37);
    double mt = hand_moment(14.3 - 12.893, 1.86, 1.37);

    evaluate_on(&g, SW_FS_NET, 13.517, 12.893, &n);
    evaluate_on(&g, SW_FS_OVERTURNING, 13.517, 12.893, &o);
    assert_close(n.hw_moment_Nm, mh, 1e-12);
    assert_close(n.tw_moment_Nm, mt, 1e-12);
    assert_close(n.fs, R / (mh - mt), 1e-12);
    assert_close(o.fs, (mt + R) / mh, 1e-12);
    /* the net ratio is the smaller one here (the tailwater is counted once,
     * against the load, not as a resisting moment) */
    assert_true(n.fs < o.fs);
}

/* Both faces submerged (both levels above the hinge): the net water moment
 * is rho g w (H^2 / 2) (hw - tw) for equal densities; with the tailwater
 * above the headwater the waters hold the leaf shut and fs is +inf on the
 * net basis, the gate `ok`, while the overturning ratio tends to 1 and
 * reads `low` (the defect the net basis corrects). */
static void test_fs_bases_submerged(void **state)
{
    (void)state;
    sw_gate g = hand_gate();
    sw_gate_result n, o;
    double R = 1173.0 * G * 0.071 + 612.5;
    double k = RHO_FRESH * G * 1.37 * 1.86 * 1.86 / 2.0;

    /* tailwater below the headwater */
    evaluate_on(&g, SW_FS_NET, 16.842, 16.797, &n);
    assert_close(n.net_water_moment_Nm, k * (16.842 - 16.797), 1e-9);
    assert_close(n.fs, R / (k * 0.045), 1e-9);
    /* tailwater above the headwater: D < 0 */
    evaluate_on(&g, SW_FS_NET, 16.842, 16.913, &n);
    evaluate_on(&g, SW_FS_OVERTURNING, 16.842, 16.913, &o);
    assert_close(n.net_water_moment_Nm, -k * 0.071, 1e-9);
    assert_true(isinf(n.fs) && n.fs > 0.0);
    assert_int_equal(n.state, SW_STATE_OK);
    assert_close(o.fs, (o.tw_moment_Nm + R) / o.hw_moment_Nm, 1e-12);
    assert_true(o.fs > 1.0 && o.fs < 1.35);
    assert_int_equal(o.state, SW_STATE_LOW);
    /* the sill reaction is the same on both bases */
    assert_true(n.sill_reaction_N == o.sill_reaction_N);
}

/* D = 0 exactly (equal levels and densities) and R < 0 with D < 0: fs
 * takes the sign of the net moment (model document). */
static void test_fs_net_signs(void **state)
{
    (void)state;
    sw_gate g = hand_gate();
    sw_gate_result r;

    evaluate_on(&g, SW_FS_NET, 14.06, 14.06, &r);
    assert_true(r.net_water_moment_Nm == 0.0);
    assert_true(isinf(r.fs) && r.fs > 0.0);
    assert_int_equal(r.state, SW_STATE_OK);

    /* the leaf past vertical (inclination 104 deg) leans open under its own
     * weight: R < 0 */
    sw_gate p = rect_gate(14.3, 104.0, 0.0, 1.86, 1.37);
    p.mass_kg = 1173.0;
    p.cg_along_m = 0.93;
    p.required_fs = 1.35;
    p.rho_kgm3[SW_UPSTREAM] = p.rho_kgm3[SW_DOWNSTREAM] = RHO_FRESH;
    sw_gate_prepare(&p);
    evaluate_on(&p, SW_FS_NET, 13.1, 13.1, &r);
    assert_true(r.restraint_Nm < 0.0 && r.net_water_moment_Nm == 0.0);
    assert_true(isinf(r.fs) && r.fs < 0.0);
    assert_int_equal(r.state, SW_STATE_OPEN);
    /* a little more tailwater: D < 0 but |D| < |R|, still open, fs -inf */
    evaluate_on(&p, SW_FS_NET, 13.1, 13.104, &r);
    assert_true(r.net_water_moment_Nm < 0.0 &&
                r.net_water_moment_Nm > r.restraint_Nm);
    assert_true(isinf(r.fs) && r.fs < 0.0);
    assert_int_equal(r.state, SW_STATE_OPEN);
    /* enough tailwater to hold it shut with margin: R - 1.35 D >= 0 */
    evaluate_on(&p, SW_FS_NET, 13.1, 13.9, &r);
    assert_true(r.restraint_Nm - 1.35 * r.net_water_moment_Nm >= 0.0);
    assert_true(isinf(r.fs) && r.fs > 0.0);
    assert_int_equal(r.state, SW_STATE_OK);
    /* net moment exactly 0: no load at all and no restraint */
    sw_gate z = hand_gate();
    z.mass_kg = 1173.0;
    z.cg_offset_m = 0.0;
    z.extra_moment_Nm = 0.0;
    sw_gate_prepare(&z);
    evaluate_on(&z, SW_FS_NET, 10.0, 10.0, &r);
    assert_true(r.net_moment_Nm == 0.0 && r.fs == 0.0);
    assert_int_equal(r.state, SW_STATE_OPEN);
}

/* Property over random gates, both levels above the hinge, equal densities,
 * no least sill reaction.  The leaf is then wholly submerged, so R is the
 * same whichever water holds the buoyancy, and a water's moment rises at
 * dM/dz = rho g Q with Q = int s w ds the opening's first moment:
 * D = rho g Q (hw - tw).  Open where R - D <= 0: hw - tw_open = R / (rho g
 * Q).  Alarm on the net basis where R < f D: hw - tw_alarm = R / (f rho g
 * Q), so
 *     tw_alarm = hw - (hw - tw_open) / f.
 * On the overturning basis the alarm is Mr = f hw_moment, i.e.
 * M(tw_alarm) = f M(hw) - R with M(z) = M(hinge) + rho g Q (z - hinge)
 * above the hinge: the classical result, unchanged. */
static void test_fs_alarm_property(void **state)
{
    (void)state;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(rng, 27183);
    int n_net = 0, n_ov = 0;

    for (int i = 0; i < 400; i++) {
        sw_gate g = random_gate(rng, i);
        g.rho_kgm3[SW_DOWNSTREAM] = g.rho_kgm3[SW_UPSTREAM];
        g.min_sill_reaction_N = 0.0;
        g.fs_basis = (i % 2) ? SW_FS_OVERTURNING : SW_FS_NET;
        sw_gate_prepare(&g);
        double rgq = g.rho_kgm3[SW_UPSTREAM] * g.g_ms2 * g.first_moment_m3;
        sw_gate_result r;
        sw_gate_evaluate(&g, g.hinge_level_m + 50.0, g.hinge_level_m + 50.0,
                         &r);
        double R = r.restraint_Nm;
        if (!(R > 0.0))
            continue;
        double hw = g.hinge_level_m + R / rgq + 0.2 + 3.0 * gsl_rng_uniform(rng);
        sw_crit open, alarm;
        sw_error err;
        assert_int_equal(sw_gate_critical_tailwater(&g, hw, SW_LIMIT_OPEN,
                                                    &open, &err), SW_OK);
        assert_int_equal(sw_gate_critical_tailwater(&g, hw, SW_LIMIT_ALARM,
                                                    &alarm, &err), SW_OK);
        assert_int_equal(open.kind, SW_CRIT_LEVEL);
        assert_int_equal(alarm.kind, SW_CRIT_LEVEL);
        assert_close_abs(open.level_m, hw - R / rgq, 2.0 * SW_CRIT_TOL_M);
        if (g.fs_basis == SW_FS_NET) {
            n_net++;
            assert_close_abs(alarm.level_m,
                             hw - (hw - open.level_m) / g.required_fs,
                             2.0 * SW_CRIT_TOL_M);
        } else {
            double mh, mhinge, f;
            sw_gate_water_load(&g, hw, g.rho_kgm3[SW_UPSTREAM], &f, &mh);
            sw_gate_water_load(&g, g.hinge_level_m, g.rho_kgm3[SW_UPSTREAM],
                               &f, &mhinge);
            double want = g.hinge_level_m +
                          (g.required_fs * mh - R - mhinge) / rgq;
            if (want <= g.hinge_level_m)
                continue; /* the classical alarm lies below the hinge */
            n_ov++;
            assert_close_abs(alarm.level_m, want, 2.0 * SW_CRIT_TOL_M);
        }
    }
    assert_true(n_net > 60 && n_ov > 60); /* 94 and 96 with this seed */
    gsl_rng_free(rng);
}

static void test_validation(void **state)
{
    (void)state;
    sw_gate g = rect_gate(5.0, 75.0, 0.3, 1.2, 0.9);
    sw_error err;
    const char *key;

    assert_int_equal(sw_gate_validate(&g, &key, &err), SW_OK);
    assert_null(key);

    struct { double *field; double value; const char *key; const char *text; } cases[] = {
        {&g.inclination_deg, 180.0, "inclination", "(0, 180)"},
        {&g.inclination_deg, 0.0, "inclination", "(0, 180)"},
        {&g.seal_top_m, -0.01, "seal_top", ">= 0"},
        {&g.seal_height_m, 0.0, "seal_height", "positive"},
        {&g.seal_width_m, -1.0, "seal_width", "positive"},
        {&g.leaf_length_m, 1.4, "leaf_length", "runs past the leaf"},
        {&g.mass_kg, 0.0, "mass", "positive"},
        {&g.cg_along_m, 1.6, "cg_along", "off the leaf"},
        {&g.cg_along_m, -0.1, "cg_along", "off the leaf"},
        {&g.volume_m3, -0.2, "volume", ">= 0"},
        {&g.required_fs, 0.95, "required_fs", ">= 1"},
        {&g.required_fs, NAN, "required_fs", "no required_fs"},
        {&g.min_sill_reaction_N, -5.0, "min_sill_reaction", ">= 0"},
        {&g.seal_width_m, 900.0, "seal_width", "implausibly large"},
        {&g.hinge_level_m, INFINITY, "hinge_level", "plausible"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        double keep = *cases[i].field;
        *cases[i].field = cases[i].value;
        assert_int_equal(sw_gate_validate(&g, &key, &err), SW_ESITE);
        assert_int_equal(err.code, SW_ESITE);
        assert_string_equal(key, cases[i].key);
        if (strstr(err.message, cases[i].text) == NULL)
            fail_msg("case %zu: '%s' lacks '%s'", i, err.message, cases[i].text);
        *cases[i].field = keep;
    }
}

/* ---- critical levels ---------------------------------------------------- */

static int limit_fails(const sw_gate *g, double hw, double tw, sw_limit limit)
{
    sw_gate_result r;
    sw_gate_evaluate(g, hw, tw, &r);
    return limit == SW_LIMIT_OPEN ? r.state == SW_STATE_OPEN
                                  : r.state != SW_STATE_OK;
}

static sw_gate random_gate(gsl_rng *rng, int i)
{
    double incl = 15.0 + 150.0 * gsl_rng_uniform(rng);
    double top = 0.5 * gsl_rng_uniform(rng);
    double size = 0.4 + 2.0 * gsl_rng_uniform(rng);
    sw_gate g = (i % 2) ? circle_gate(30.0, incl, top, size)
                        : rect_gate(30.0, incl, top, size,
                                    0.4 + 1.5 * gsl_rng_uniform(rng));
    g.leaf_length_m = g.s_sill_m * (1.0 + 0.3 * gsl_rng_uniform(rng));
    g.mass_kg = 200.0 + 3000.0 * gsl_rng_uniform(rng);
    g.cg_along_m = g.leaf_length_m * (0.3 + 0.4 * gsl_rng_uniform(rng));
    g.cg_offset_m = 0.1 * (gsl_rng_uniform(rng) - 0.5);
    /* some leaves are buoyant (hollow), which makes the margin non-monotone
     * near the sill */
    g.volume_m3 = (i % 3 == 0) ? g.mass_kg / 600.0 : g.mass_kg / 7850.0;
    g.extra_moment_Nm = (i % 4 == 0) ? 1500.0 * gsl_rng_uniform(rng) : 0.0;
    g.required_fs = 1.0 + gsl_rng_uniform(rng);
    g.min_sill_reaction_N = (i % 5 == 0) ? 300.0 : 0.0;
    /* both bases of the factor of safety, on every shape and kind */
    g.fs_basis = (i / 2) % 2 ? SW_FS_OVERTURNING : SW_FS_NET;
    sw_gate_prepare(&g);
    return g;
}

/* The load memo changes nothing: for random gates of both shapes, 40,000
 * evaluations at levels on a 1 mm grid (3,001 distinct levels a side, so
 * slots of the 512-slot memo are shared and overwritten) give results
 * equal byte for byte to sw_gate_evaluate() (reference: the model's own
 * evaluation without the memo). */
static void test_load_memo_changes_nothing(void **state)
{
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    sw_load_memo *memo = malloc(sizeof *memo);
    (void)state;
    assert_non_null(memo);
    for (int i = 0; i < 8; i++) {
        sw_gate g = random_gate(rng, i);
        sw_load_memo_clear(memo);
        for (int k = 0; k < 40000; k++) {
            double hw = 28.0 + 0.001 * (double)gsl_rng_uniform_int(rng, 3001);
            double tw = 28.0 + 0.001 * (double)gsl_rng_uniform_int(rng, 3001);
            sw_gate_result a, b;
            memset(&a, 0, sizeof a);
            memset(&b, 0, sizeof b);
            sw_gate_evaluate(&g, hw, tw, &a);
            sw_gate_evaluate_memo(&g, memo, hw, tw, &b);
            assert_memory_equal(&a, &b, sizeof a);
        }
    }
    free(memo);
    gsl_rng_free(rng);
}

/* The critical tailwater against a brute-force scan of the model itself on
 * a 0.25 mm grid from far above down to below the leaf: the highest failing
 * grid point must lie within grid + tolerance of the reported level, and
 * the limit must hold at every grid point above it (reference: the model's
 * definition in the model document, evaluated directly). */
static void test_critical_tailwater_brute_force(void **state)
{
    (void)state;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(rng, 4817);
    int levels = 0, not_needed = 0;

    for (int i = 0; i < 160; i++) {
        sw_gate g = random_gate(rng, i);
        double hw = g.sill_level_m + (g.hinge_level_m + 2.0 - g.sill_level_m) *
                                         gsl_rng_uniform(rng);
        sw_limit limit = (i % 2) ? SW_LIMIT_ALARM : SW_LIMIT_OPEN;
        sw_crit crit;
        sw_error err;
        assert_int_equal(sw_gate_critical_tailwater(&g, hw, limit, &crit, &err),
                         SW_OK);
        double top = (hw > g.hinge_level_m ? hw : g.hinge_level_m) + 40.0;
        double bottom = g.leaf_bottom_level_m - 0.5;
        double step = 2.5e-4, highest = NAN;
        for (double tw = top; tw > bottom; tw -= step)
            if (limit_fails(&g, hw, tw, limit)) {
                highest = tw;
                break;
            }
        if (crit.kind == SW_CRIT_NOT_NEEDED) {
            not_needed++;
            assert_true(isnan(highest));
        } else {
            levels++;
            assert_int_equal(crit.kind, SW_CRIT_LEVEL);
            assert_true(isnan(highest) == 0);
            assert_close_abs(crit.level_m, highest, step + SW_CRIT_TOL_M);
            /* reported on the safe side, and failing just below */
            assert_false(limit_fails(&g, hw, crit.level_m + 1e-9, limit));
            assert_true(limit_fails(&g, hw, crit.level_m - 2.0 * SW_CRIT_TOL_M,
                                    limit));
        }
    }
    assert_true(levels > 40 && not_needed > 10);
    gsl_rng_free(rng);
}

/* The critical headwater against a brute-force upward scan. */
static void test_critical_headwater_brute_force(void **state)
{
    (void)state;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(rng, 9163);
    int levels = 0, none = 0;

    for (int i = 0; i < 160; i++) {
        sw_gate g = random_gate(rng, i);
        double tw = g.leaf_bottom_level_m - 0.3 +
                    (g.hinge_level_m + 1.0 - g.leaf_bottom_level_m) *
                        gsl_rng_uniform(rng);
        sw_limit limit = (i % 2) ? SW_LIMIT_ALARM : SW_LIMIT_OPEN;
        sw_crit crit;
        sw_error err;
        assert_int_equal(sw_gate_critical_headwater(&g, tw, limit, &crit, &err),
                         SW_OK);
        double bottom = g.leaf_bottom_level_m - 0.5;
        double step = 2.5e-4, lowest = NAN;
        for (double hw = bottom; hw < g.hinge_level_m + 200.0; hw += step)
            if (limit_fails(&g, hw, tw, limit)) {
                lowest = hw;
                break;
            }
        assert_true(isnan(lowest) == 0); /* enough headwater always opens */
        if (crit.kind == SW_CRIT_UNATTAINABLE) {
            none++;
            assert_true(lowest == bottom);
        } else {
            levels++;
            assert_int_equal(crit.kind, SW_CRIT_LEVEL);
            assert_close_abs(crit.level_m, lowest, step + SW_CRIT_TOL_M);
            assert_false(limit_fails(&g, crit.level_m - 1e-9, tw, limit));
            assert_true(limit_fails(&g, crit.level_m + 2.0 * SW_CRIT_TOL_M, tw,
                                    limit));
        }
    }
    assert_true(levels > 80 && none > 20); /* both outcomes exercised */
    gsl_rng_free(rng);
}

/* A case built to have two crossings: a buoyant leaf whose margin dips as
 * the tailwater first floods it, then recovers.  The model asks for the
 * highest crossing. */
static void test_critical_takes_highest_crossing(void **state)
{
    (void)state;
    sw_gate g = rect_gate(10.0, 35.0, 1.2, 0.6, 0.8);
    g.mass_kg = 520.0;
    g.cg_along_m = 0.9;
    g.volume_m3 = 0.45;
    g.extra_moment_Nm = -3500.0; /* a spring that pulls the leaf open */
    sw_gate_prepare(&g);
    double hw = g.sill_level_m + 0.02;
    int changes = 0, prev = -1;
    for (double tw = g.leaf_bottom_level_m - 0.2; tw < 11.0; tw += 1e-3) {
        int f = limit_fails(&g, hw, tw, SW_LIMIT_OPEN);
        if (prev >= 0 && f != prev)
            changes++;
        prev = f;
    }
    assert_true(changes >= 2); /* the case does what it was built for */

    sw_crit crit;
    sw_error err;
    assert_int_equal(sw_gate_critical_tailwater(&g, hw, SW_LIMIT_OPEN, &crit, &err),
                     SW_OK);
    assert_int_equal(crit.kind, SW_CRIT_LEVEL);
    for (double tw = crit.level_m + 1e-6; tw < crit.level_m + 3.0; tw += 1e-3)
        assert_false(limit_fails(&g, hw, tw, SW_LIMIT_OPEN));
    assert_true(limit_fails(&g, hw, crit.level_m - 1e-4, SW_LIMIT_OPEN));
}

/* Width of the tailwater band, near the sill, where the leaf of the
 * two-crossing case above (with displaced volume `volume`) is open; found
 * on a 0.05 mm grid. */
static sw_gate dip_gate(double volume)
{
    sw_gate g = rect_gate(10.0, 35.0, 1.2, 0.6, 0.8);
    g.mass_kg = 520.0;
    g.cg_along_m = 0.9;
    g.volume_m3 = volume;
    g.extra_moment_Nm = -3500.0;
    sw_gate_prepare(&g);
    return g;
}

static double dip_width(double volume, double *dip_top)
{
    sw_gate g = dip_gate(volume);
    double hw = g.sill_level_m + 0.02, width = 0.0;
    *dip_top = NAN;
    for (double tw = g.sill_level_m - 0.05; tw < g.sill_level_m + 1.0; tw += 5e-5)
        if (limit_fails(&g, hw, tw, SW_LIMIT_OPEN)) {
            width += 5e-5;
            *dip_top = tw;
        }
    return width;
}

/* A failing band only a few millimetres wide, far below the top of the
 * search, must still be found: the scan may not step over a band wider
 * than SW_CRIT_SCAN_M (issue requirement; the band is located by brute
 * force). */
static void test_critical_finds_narrow_band(void **state)
{
    (void)state;
    double lo = 0.25, hi = 0.30, width = 0.0, top = NAN, v = 0.0;
    for (int i = 0; i < 60; i++) {
        v = 0.5 * (lo + hi);
        width = dip_width(v, &top);
        if (width > 8e-3)
            hi = v;
        else if (width < 2e-3)
            lo = v;
        else
            break;
    }
    assert_true(width >= 2e-3 && width <= 8e-3);

    sw_gate g = dip_gate(v);
    sw_crit crit;
    sw_error err;
    assert_int_equal(sw_gate_critical_tailwater(&g, g.sill_level_m + 0.02,
                                                SW_LIMIT_OPEN, &crit, &err),
                     SW_OK);
    assert_int_equal(crit.kind, SW_CRIT_LEVEL);
    assert_close_abs(crit.level_m, top, 5e-5 + SW_CRIT_TOL_M);
}

/* Numeric safety: extreme inclinations, tiny and huge gates, levels exactly
 * at the sill, the seal top and the hinge and a hair either side: every
 * result is finite (fs may be +-inf by definition, never NaN), the state
 * agrees with the margins, and the critical-level searches succeed with a
 * finite level or an explicit kind (common practice, no source: a
 * screening tool must never report NaN as a verdict). */
static void check_finite(const sw_gate *g, double hw, double tw)
{
    sw_gate_result r;
    sw_gate_evaluate(g, hw, tw, &r);
    const double v[] = {r.hw_force_N, r.hw_moment_Nm, r.tw_force_N,
                        r.tw_moment_Nm, r.weight_moment_Nm,
                        r.buoyancy_force_N, r.buoyancy_moment_Nm,
                        r.resisting_moment_Nm, r.net_moment_Nm,
                        r.sill_reaction_N, r.hw_cp_m, r.tw_cp_m};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++)
        if (!isfinite(v[i]))
            fail_msg("gate incl %g size %g: field %zu = %g at hw %.17g tw %.17g",
                     g->inclination_deg, g->s_sill_m, i, v[i], hw, tw);
    assert_true(isnan(r.fs) == 0);
    double m[SW_N_MARGINS];
    sw_gate_margins(g, &r, m);
    assert_int_equal(r.state, sw_gate_state_of(m));
    sw_crit c;
    sw_error err;
    for (int lim = 0; lim < 2; lim++) {
        assert_int_equal(sw_gate_critical_tailwater(g, hw, (sw_limit)lim, &c,
                                                    &err), SW_OK);
        assert_true(c.kind != SW_CRIT_LEVEL || isfinite(c.level_m));
        assert_int_equal(sw_gate_critical_headwater(g, tw, (sw_limit)lim, &c,
                                                    &err), SW_OK);
        assert_true(c.kind != SW_CRIT_LEVEL || isfinite(c.level_m));
    }
}

static void test_numeric_extremes(void **state)
{
    (void)state;
    const double incl[] = {0.01, 0.5, 45.0, 89.999, 90.0, 90.001, 135.0,
                           179.5, 179.99};
    const double size[] = {0.002, 0.35, 12.0, 480.0};
    for (size_t i = 0; i < sizeof incl / sizeof incl[0]; i++)
        for (size_t j = 0; j < sizeof size / sizeof size[0]; j++)
            for (int shape = 0; shape < 2; shape++) {
                double d = size[j];
                sw_gate g = shape ? circle_gate(25.0, incl[i], 0.1 * d, d)
                                  : rect_gate(25.0, incl[i], 0.1 * d, d,
                                              0.7 * d);
                g.leaf_length_m = 1.2 * g.s_sill_m;
                g.mass_kg = fmin(1e9, 800.0 * d * d * d + 1.0);
                g.cg_along_m = 0.5 * g.leaf_length_m;
                g.volume_m3 = g.mass_kg / 2500.0;
                sw_gate_prepare(&g);
                const double z[] = {g.sill_level_m, g.seal_top_level_m,
                                    g.hinge_level_m, g.leaf_bottom_level_m};
                for (size_t a = 0; a < 4; a++)
                    for (int da = -1; da <= 1; da++) {
                        double hw = z[a] + da * 1e-9 * fmax(1.0, d);
                        check_finite(&g, hw, g.sill_level_m - 1.0);
                        check_finite(&g, hw, z[(a + 1) % 4]);
                        check_finite(&g, z[(a + 2) % 4], hw);
                    }
            }
}

int main(void)
{
    gsl_set_error_handler_off();
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_closed_forms_match_quadrature),
        cmocka_unit_test(test_circle_surface_at_seal_top),
        cmocka_unit_test(test_centre_of_pressure_rectangle),
        cmocka_unit_test(test_centre_of_pressure_circle),
        cmocka_unit_test(test_circular_segment_reference),
        cmocka_unit_test(test_regime_boundaries),
        cmocka_unit_test(test_vertical_rectangle_by_hand),
        cmocka_unit_test(test_weight_buoyancy_and_state),
        cmocka_unit_test(test_states),
        cmocka_unit_test(test_fs_bases_agree_dry_tailwater),
        cmocka_unit_test(test_fs_bases_partly_wetted),
        cmocka_unit_test(test_fs_bases_submerged),
        cmocka_unit_test(test_fs_net_signs),
        cmocka_unit_test(test_fs_alarm_property),
        cmocka_unit_test(test_validation),
        cmocka_unit_test(test_critical_tailwater_brute_force),
        cmocka_unit_test(test_critical_headwater_brute_force),
        cmocka_unit_test(test_critical_takes_highest_crossing),
        cmocka_unit_test(test_critical_finds_narrow_band),
        cmocka_unit_test(test_numeric_extremes),
        cmocka_unit_test(test_load_memo_changes_nothing),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
