/* Unit tests of the threshold tables (src/thresholds.c).  The outside
 * reference is the model's definition, evaluated directly: the state that
 * sw_gate_evaluate() gives just above and below each published threshold,
 * and the critical levels of sw_gate_critical_* at levels chosen here, at
 * random, independently of the module's fine grid. */
#include "testutil.h"

#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "sillwatch/thresholds.h"

/* ---- gates (invented) ---------------------------------------------------- */

typedef struct gate_spec {
    const char *name;
    sw_shape shape;
    double hinge, incl, top, size, width, leaf, mass, cg, offset, volume,
        extra, fs, min_reaction, rho_up, rho_down, g;
} gate_spec;

static sw_gate make_gate(const gate_spec *s)
{
    sw_gate g;
    sw_error err;
    memset(&g, 0, sizeof g);
    strcpy(g.name, s->name);
    g.shape = s->shape;
    g.hinge_level_m = s->hinge;
    g.inclination_deg = s->incl;
    g.seal_top_m = s->top;
    if (s->shape == SW_SHAPE_RECTANGLE) {
        g.seal_height_m = s->size;
        g.seal_width_m = s->width;
    } else {
        g.diameter_m = s->size;
    }
    g.leaf_length_m = s->leaf;
    g.mass_kg = s->mass;
    g.cg_along_m = s->cg;
    g.cg_offset_m = s->offset;
    g.volume_m3 = s->volume;
    g.extra_moment_Nm = s->extra;
    g.required_fs = s->fs;
    g.min_sill_reaction_N = s->min_reaction;
    g.rho_kgm3[SW_UPSTREAM] = s->rho_up;
    g.rho_kgm3[SW_DOWNSTREAM] = s->rho_down;
    g.g_ms2 = s->g;
    assert_int_equal(sw_gate_validate(&g, NULL, &err), SW_OK);
    sw_gate_prepare(&g);
    return g;
}

/* Three outlet gates of an invented chamber: not needed at low headwater,
 * levels above. */
static const gate_spec chamber[3] = {
    {"north", SW_SHAPE_RECTANGLE, 12.40, 80.0, 0.15, 1.40, 1.60, 1.65, 1450,
     0.86, 0.06, 0.185, 4200, 1.5, 500, 999.78, 1005.64, 9.81276},
    {"middle", SW_SHAPE_RECTANGLE, 12.40, 78.5, 0.13, 1.37, 1.55, 1.62, 1385,
     0.83, 0.055, 0.176, 4815, 1.5, 480, 999.78, 1005.64, 9.81276},
    {"spill", SW_SHAPE_CIRCLE, 11.95, 75.0, 0.12, 0.90, 0.0, 1.10, 420, 0.55,
     0.0, 0.054, 700, 1.3, 200, 999.78, 1005.64, 9.81276},
};

/* A light, buoyant leaf that reaches below its sill (the tailwater lifts
 * it before it can hold it: "none" in a band of tailwater), and a circle
 * above it. */
static const gate_spec floaters[2] = {
    {"lower", SW_SHAPE_RECTANGLE, 10.0, 60.0, 0.1, 0.8, 1.0, 1.6, 120, 0.8,
     0.0, 0.25, 0.0, 1.4, 150, 1000.0, 1012.5, 9.81},
    {"upper", SW_SHAPE_CIRCLE, 10.35, 72.5, 0.08, 0.7, 0.0, 0.85, 310, 0.43,
     0.04, 0.037, 260, 1.4, 150, 1000.0, 1012.5, 9.81},
};

typedef struct gate_set {
    sw_gate g[3];
    const sw_gate *p[3];
    size_t n;
} gate_set;

static void make_set(gate_set *s, const gate_spec *spec, size_t n)
{
    s->n = n;
    for (size_t i = 0; i < n; i++) {
        s->g[i] = make_gate(&spec[i]);
        s->p[i] = &s->g[i];
    }
}

static sw_thresholds_range range_of(const char *text)
{
    sw_thresholds_range r;
    sw_error err;
    assert_int_equal(sw_thresholds_parse_range(text, &r, &err), SW_OK);
    return r;
}

/* The limit holds at these levels (the model's definition: alarm = state
 * ok, open = state not open). */
static int holds(const sw_gate *g, double hw, double tw, int k)
{
    sw_gate_result r;
    sw_gate_evaluate(g, hw, tw, &r);
    return k == SW_THRESHOLDS_ALARM ? r.state == SW_STATE_OK
                                    : r.state != SW_STATE_OPEN;
}

static double bottom_of(const sw_gate *g)
{
    return fmin(g->sill_level_m, g->leaf_bottom_level_m);
}

/* ---- ranges -------------------------------------------------------------- */

static void test_parse_range(void **state)
{
    (void)state;
    sw_thresholds_range r = range_of("11.25:13.4:0.05");
    assert_int_equal(r.n_levels, 44);
    assert_true(r.from_u == 112500 && r.to_u == 134000 && r.step_u == 500);
    assert_close(r.from_m, 11.25, 1e-15);
    assert_close(r.step_m, 0.05, 1e-15);

    /* 0:1:0.1 has 11 levels, though 10 * 0.1 > 1 in binary (the classic
     * trap: IEEE 754 doubles, common practice, no source); level i is
     * FROM + i STEP */
    r = range_of("0:1:0.1");
    assert_int_equal(r.n_levels, 11);
    assert_close(sw_thresholds_level(&r, 3), 0.3, 1e-15);
    assert_close(sw_thresholds_level(&r, 10), 1.0, 1e-15);
    assert_true(sw_thresholds_level(&r, 7) == 0.0 + 7.0 * r.step_m);

    /* TO off the grid: the last level is below it */
    r = range_of("10:10.95:0.1");
    assert_int_equal(r.n_levels, 10);
    assert_close(sw_thresholds_level(&r, 9), 10.9, 1e-15);

    r = range_of("-2.5:-2.5:0.0001");
    assert_int_equal(r.n_levels, 1);
    assert_close(r.from_m, -2.5, 0.0);

    /* trailing zeros past the fourth decimal are still on the grid */
    r = range_of("+1.25:3.00000:0.250");
    assert_int_equal(r.n_levels, 8);

    /* exactly the most levels allowed */
    r = range_of("0:99.9999:0.0001");
    assert_int_equal(r.n_levels, SW_THRESHOLDS_MAX_LEVELS);
}

static void expect_range_error(const char *text, const char *fragment)
{
    sw_thresholds_range r;
    sw_error err;
    memset(&r, 0x5a, sizeof r);
    assert_int_equal(sw_thresholds_parse_range(text, &r, &err), SW_EUSAGE);
    assert_int_equal(err.code, SW_EUSAGE);
    assert_int_equal(err.line, 0);
    assert_string_equal(err.file, "");
    if (strstr(err.message, fragment) == NULL)
        fail_msg("'%s': message '%s' lacks '%s'", text, err.message,
                 fragment);
    /* untouched on failure */
    assert_true(r.n_levels == (size_t)0x5a5a5a5a5a5a5a5aULL);
}

static void test_parse_range_errors(void **state)
{
    (void)state;
    expect_range_error("11:13", "is not FROM:TO:STEP");
    expect_range_error("11:13:0.1:5", "is not FROM:TO:STEP");
    expect_range_error("", "is not FROM:TO:STEP");
    expect_range_error("11:13:", "STEP '' is not a plain decimal");
    expect_range_error("a:13:0.1", "FROM 'a' is not a plain decimal");
    expect_range_error("11:1.3e1:0.1", "TO '1.3e1' is not a plain decimal");
    expect_range_error(" 11:13:0.1", "FROM ' 11' is not");
    expect_range_error("nan:13:0.1", "FROM 'nan' is not");
    expect_range_error("11:inf:0.1", "TO 'inf' is not");
    expect_range_error("0x1p3:13:0.1", "FROM '0x1p3' is not");
    expect_range_error(".5:13:0.1", "FROM '.5' is not");
    expect_range_error("11.:13:0.1", "FROM '11.' is not");
    expect_range_error("11:13:0.00005", "STEP '0.00005' is finer than 0.1 mm");
    expect_range_error("11.00001:13:0.1", "FROM '11.00001' is finer");
    expect_range_error("100000.0001:100001:1", "FROM '100000.0001' is out of "
                                               "range");
    expect_range_error("0:12345678901234567890:1", "TO '12345678901234567890' "
                                                   "is out of range");
    expect_range_error("11:13:0", "STEP must be positive");
    expect_range_error("11:13:-0.1", "STEP must be positive");
    expect_range_error("13:11:0.1", "TO (11.0000 m) is below FROM (13.0000 m)");
    expect_range_error("0:100:0.0001", "1000001 levels are more than the "
                                       "1000000 allowed");
    expect_range_error("-100000:100000:0.0001", "2000000001 levels");
}

/* Published values are rounded toward the safe side (the module's
 * contract): a critical tailwater up, a critical headwater down. */
static void test_round(void **state)
{
    (void)state;
    assert_close(sw_thresholds_round(SW_THRESHOLDS_BY_HEADWATER, 11.23451),
                 11.2346, 1e-15);
    assert_close(sw_thresholds_round(SW_THRESHOLDS_BY_TAILWATER, 11.23459),
                 11.2345, 1e-15);
    assert_close(sw_thresholds_round(SW_THRESHOLDS_BY_HEADWATER, 11.2), 11.2,
                 1e-15);
    assert_close(sw_thresholds_round(SW_THRESHOLDS_BY_TAILWATER, -0.73215),
                 -0.7322, 1e-15);
    double z = sw_thresholds_round(SW_THRESHOLDS_BY_HEADWATER, -0.00003);
    assert_true(z == 0.0 && !signbit(z));
}

/* ---- the grid against the model ------------------------------------------ */

typedef struct grid_counts {
    size_t levels, not_needed, none, all_not_needed, mixed;
} grid_counts;

/* Every value of a row against the model evaluated directly, and the
 * governing values against the rule (highest / lowest over the gates). */
static void check_row(sw_thresholds_axis axis, const gate_set *s,
                      const sw_thresholds_row *row, grid_counts *n)
{
    double x = row->level_m;

    for (size_t g = 0; g < s->n; g++) {
        const sw_gate *gate = s->p[g];
        for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++) {
            const sw_crit *c = &row->crit[2 * g + (size_t)k];
            if (axis == SW_THRESHOLDS_BY_HEADWATER) {
                if (c->kind == SW_CRIT_LEVEL) {
                    double t = c->level_m;
                    /* the model's definition, evaluated directly: the
                     * limit holds just above and at every higher
                     * tailwater (sampled), and fails just below (the
                     * search's 0.01 mm plus the 0.1 mm rounding) */
                    assert_true(holds(gate, x, t + 1e-7, k));
                    assert_true(holds(gate, x, t + 0.0137, k));
                    assert_true(holds(gate, x, t + 0.371, k));
                    assert_true(holds(gate, x, t + 2.93, k));
                    assert_false(holds(gate, x, t - 1.2e-4, k));
                    n->levels++;
                } else {
                    assert_int_equal(c->kind, SW_CRIT_NOT_NEEDED);
                    /* the model's definition: holds at any tailwater */
                    for (double tw = bottom_of(gate) - 0.5;
                         tw < fmax(gate->hinge_level_m, x) + 1.0; tw += 0.0093)
                        assert_true(holds(gate, x, tw, k));
                    n->not_needed++;
                }
            } else {
                if (c->kind == SW_CRIT_LEVEL) {
                    double h = c->level_m;
                    /* the model's definition, evaluated directly: holds
                     * just below and at every lower headwater (sampled),
                     * fails just above */
                    assert_true(holds(gate, h - 1e-7, x, k));
                    assert_true(holds(gate, h - 0.0137, x, k));
                    assert_true(holds(gate, h - 0.371, x, k));
                    assert_true(holds(gate, bottom_of(gate) - 1.0, x, k));
                    assert_false(holds(gate, h + 1.2e-4, x, k));
                    n->levels++;
                } else {
                    assert_int_equal(c->kind, SW_CRIT_UNATTAINABLE);
                    /* the model's definition: fails even with the
                     * headwater below the leaf */
                    assert_false(holds(gate, bottom_of(gate) - 0.5, x, k));
                    n->none++;
                }
            }
        }
        /* ok implies shut (the model's definition of the states): the
         * alarm threshold is at least as restrictive as the open one */
        const sw_crit *al = &row->crit[2 * g], *op = &row->crit[2 * g + 1];
        if (axis == SW_THRESHOLDS_BY_HEADWATER && op->kind == SW_CRIT_LEVEL) {
            assert_int_equal(al->kind, SW_CRIT_LEVEL);
            assert_true(al->level_m >= op->level_m - 2e-5);
        }
        if (axis == SW_THRESHOLDS_BY_TAILWATER && al->kind == SW_CRIT_LEVEL) {
            assert_int_equal(op->kind, SW_CRIT_LEVEL);
            assert_true(al->level_m <= op->level_m + 2e-5);
        }
    }

    /* governing: by headwater the highest level, "not needed" only where
     * every gate is; by tailwater "none" wherever a gate has it (the first
     * such gate), else the lowest level */
    for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++) {
        const sw_crit *gov = &row->governing[k];
        size_t gg = row->governing_gate[k], first_none = SW_THRESHOLDS_NO_GATE;
        int any_level = 0;
        double best = axis == SW_THRESHOLDS_BY_HEADWATER ? -INFINITY
                                                         : INFINITY;
        for (size_t g = 0; g < s->n; g++) {
            const sw_crit *c = &row->crit[2 * g + (size_t)k];
            if (c->kind == SW_CRIT_LEVEL) {
                any_level = 1;
                best = axis == SW_THRESHOLDS_BY_HEADWATER
                           ? fmax(best, c->level_m)
                           : fmin(best, c->level_m);
            } else if (c->kind == SW_CRIT_UNATTAINABLE &&
                       first_none == SW_THRESHOLDS_NO_GATE) {
                first_none = g;
            }
        }
        if (axis == SW_THRESHOLDS_BY_TAILWATER &&
            first_none != SW_THRESHOLDS_NO_GATE) {
            assert_int_equal(gov->kind, SW_CRIT_UNATTAINABLE);
            assert_int_equal(gg, first_none);
        } else if (!any_level) {
            assert_int_equal(gov->kind, SW_CRIT_NOT_NEEDED);
            assert_int_equal(gg, SW_THRESHOLDS_NO_GATE);
            n->all_not_needed++;
        } else {
            assert_int_equal(gov->kind, SW_CRIT_LEVEL);
            assert_true(gov->level_m == best);
            assert_true(gg < s->n);
            assert_int_equal(row->crit[2 * gg + (size_t)k].kind,
                             SW_CRIT_LEVEL);
            assert_true(row->crit[2 * gg + (size_t)k].level_m == best);
            for (size_t g = 0; g < s->n; g++)
                if (row->crit[2 * g + (size_t)k].kind != SW_CRIT_LEVEL)
                    n->mixed++;
        }
    }
}

static void check_grid(sw_thresholds_axis axis, const gate_set *s,
                       const char *range_text, grid_counts *n)
{
    sw_thresholds_range r = range_of(range_text);
    sw_thresholds *t;
    sw_error err;

    memset(n, 0, sizeof *n);
    assert_int_equal(sw_thresholds_alloc(&t, s->p, s->n, axis, &r, &err),
                     SW_OK);
    assert_int_equal(sw_thresholds_n_rows(t), r.n_levels);
    for (size_t i = 0; i < r.n_levels; i++) {
        const sw_thresholds_row *row;
        assert_int_equal(sw_thresholds_get_row(t, i, &row, &err), SW_OK);
        assert_true(row->level_m == sw_thresholds_level(&r, i));
        check_row(axis, s, row, n);
    }
    sw_thresholds_free(t);
}

static void test_grid_by_headwater(void **state)
{
    (void)state;
    gate_set s;
    grid_counts n;
    make_set(&s, chamber, 3);
    check_grid(SW_THRESHOLDS_BY_HEADWATER, &s, "11.35:13.1:0.025", &n);
    /* every case was met */
    assert_true(n.levels > 200);
    assert_true(n.not_needed > 20);
    assert_true(n.all_not_needed > 5);
    assert_true(n.mixed > 5);
}

static void test_grid_by_tailwater(void **state)
{
    (void)state;
    gate_set s;
    grid_counts n;
    make_set(&s, floaters, 2);
    check_grid(SW_THRESHOLDS_BY_TAILWATER, &s, "8.4:10.9:0.0125", &n);
    assert_true(n.levels > 200);
    assert_true(n.none > 40);

    /* the chamber by tailwater: levels throughout */
    make_set(&s, chamber, 3);
    check_grid(SW_THRESHOLDS_BY_TAILWATER, &s, "10.5:13.5:0.05", &n);
    assert_int_equal(n.levels, 61 * 6);
}

/* One gate: the governing value is that gate's own. */
static void test_single_gate(void **state)
{
    (void)state;
    gate_set s;
    sw_thresholds_range r = range_of("11.9:12.3:0.1");
    sw_thresholds *t;
    sw_error err;
    const sw_thresholds_row *row;

    make_set(&s, chamber + 2, 1);
    assert_int_equal(sw_thresholds_alloc(&t, s.p, 1, SW_THRESHOLDS_BY_HEADWATER,
                                         &r, &err),
                     SW_OK);
    for (size_t i = 0; i < r.n_levels; i++) {
        assert_int_equal(sw_thresholds_get_row(t, i, &row, &err), SW_OK);
        for (int k = 0; k < 2; k++) {
            sw_crit c;
            /* the model's critical level, evaluated directly and rounded
             * up to 0.1 mm */
            assert_int_equal(sw_gate_critical_tailwater(
                                 s.p[0], row->level_m,
                                 k == 0 ? SW_LIMIT_ALARM : SW_LIMIT_OPEN, &c,
                                 &err),
                             SW_OK);
            assert_int_equal(c.kind, SW_CRIT_LEVEL);
            assert_true(row->crit[k].level_m >= c.level_m);
            assert_true(row->crit[k].level_m < c.level_m + 1e-4 + 1e-12);
            assert_true(row->governing[k].level_m == row->crit[k].level_m);
            assert_int_equal(row->governing_gate[k], 0);
        }
    }
    sw_thresholds_free(t);
}

static void test_alloc_errors(void **state)
{
    (void)state;
    gate_set s;
    const sw_gate *many[SW_THRESHOLDS_MAX_GATES + 1];
    sw_thresholds_range r = range_of("11:12:0.1");
    sw_thresholds *t = (sw_thresholds *)&s;
    sw_error err;

    make_set(&s, chamber, 1);
    for (size_t i = 0; i <= SW_THRESHOLDS_MAX_GATES; i++)
        many[i] = s.p[0];
    assert_int_equal(sw_thresholds_alloc(&t, s.p, 0,
                                         SW_THRESHOLDS_BY_HEADWATER, &r, &err),
                     SW_EUSAGE);
    assert_null(t);
    assert_non_null(strstr(err.message, "1 to 64 gates, not 0"));
    assert_int_equal(sw_thresholds_alloc(&t, many, SW_THRESHOLDS_MAX_GATES + 1,
                                         SW_THRESHOLDS_BY_HEADWATER, &r, &err),
                     SW_EUSAGE);
    assert_non_null(strstr(err.message, "not 65"));
    sw_thresholds_free(NULL);
}

/* ---- simplified tables --------------------------------------------------- */

/* The exact value of curve c at level x, straight from the model's search
 * (NAN where it is not a level), the governing ones by the rule. */
static double exact_curve(sw_thresholds_axis axis, const gate_set *s,
                          size_t c, double x)
{
    double v[8];
    sw_error err;
    for (size_t g = 0; g < s->n; g++)
        for (int k = 0; k < 2; k++) {
            sw_crit cr;
            sw_limit lim = k == 0 ? SW_LIMIT_ALARM : SW_LIMIT_OPEN;
            if (axis == SW_THRESHOLDS_BY_HEADWATER)
                assert_int_equal(sw_gate_critical_tailwater(s->p[g], x, lim,
                                                            &cr, &err),
                                 SW_OK);
            else
                assert_int_equal(sw_gate_critical_headwater(s->p[g], x, lim,
                                                            &cr, &err),
                                 SW_OK);
            v[2 * g + (size_t)k] = cr.kind == SW_CRIT_LEVEL ? cr.level_m
                                                            : NAN;
        }
    if (c < 2 * s->n)
        return v[c];
    size_t k = c - 2 * s->n;
    double best = NAN;
    for (size_t g = 0; g < s->n; g++) {
        double y = v[2 * g + k];
        if (axis == SW_THRESHOLDS_BY_TAILWATER && isnan(y))
            return NAN;
        if (!isnan(y) && (isnan(best) ||
                          (axis == SW_THRESHOLDS_BY_HEADWATER ? y > best
                                                              : y < best)))
            best = y;
    }
    return best;
}

static double row_value(const sw_thresholds_row *row, size_t n_gates,
                        size_t c)
{
    const sw_crit *cr = c < 2 * n_gates ? &row->crit[c]
                                        : &row->governing[c - 2 * n_gates];
    return cr->kind == SW_CRIT_LEVEL ? cr->level_m : NAN;
}

typedef struct simplified {
    size_t n_rows, n_levels, n_steps, checked;
    sw_thresholds_fit fit;
} simplified;

/* Simplify, then check linear interpolation between the rows against the
 * exact curves at `n_random` random levels of the range. */
static void check_simplified(sw_thresholds_axis axis, const gate_set *s,
                             const char *range_text, double tol,
                             int n_random, unsigned long seed,
                             simplified *out)
{
    sw_thresholds_range r = range_of(range_text);
    sw_thresholds *t;
    sw_error err;
    size_t nc = 2 * s->n + 2, n_rows;
    double *lv, *val;
    double last = sw_thresholds_level(&r, r.n_levels - 1);
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);

    gsl_rng_set(rng, seed);
    memset(out, 0, sizeof *out);
    assert_int_equal(sw_thresholds_alloc(&t, s->p, s->n, axis, &r, &err),
                     SW_OK);
    assert_int_equal(sw_thresholds_simplify(t, tol, &out->fit, &err), SW_OK);
    assert_true(out->fit.max_error_m <= tol);
    assert_true(out->fit.tol_m == tol);
    n_rows = sw_thresholds_n_rows(t);
    out->n_rows = n_rows;
    out->n_levels = r.n_levels;
    out->n_steps = out->fit.n_steps;

    lv = malloc(n_rows * sizeof *lv);
    val = malloc(n_rows * nc * sizeof *val);
    assert_non_null(lv);
    assert_non_null(val);
    for (size_t i = 0; i < n_rows; i++) {
        const sw_thresholds_row *row;
        assert_int_equal(sw_thresholds_get_row(t, i, &row, &err), SW_OK);
        lv[i] = row->level_m;
        for (size_t c = 0; c < nc; c++)
            val[i * nc + c] = row_value(row, s->n, c);
        if (i > 0)
            assert_true(lv[i] > lv[i - 1]);
        /* breakpoint levels are on the 0.1 mm grid of the range */
        double u = (lv[i] - r.from_m) / SW_THRESHOLDS_RES_M;
        assert_close_abs(u, round(u), 1e-6);
    }
    assert_close_abs(lv[0], r.from_m, 1e-12);
    assert_close_abs(lv[n_rows - 1], last, 1e-9);

    for (int i = 0; i < n_random; i++) {
        double x = r.from_m + (last - r.from_m) * gsl_rng_uniform(rng);
        size_t a = 0;
        while (a + 2 < n_rows && lv[a + 1] <= x)
            a++;
        for (size_t c = 0; c < nc; c++) {
            double ya = val[a * nc + c], yb = val[(a + 1) * nc + c];
            double ex = exact_curve(axis, s, c, x);
            int in_step = 0;
            for (size_t k = 0; k < out->fit.n_steps; k++) {
                sw_thresholds_step st;
                sw_thresholds_get_step(t, k, &st);
                in_step |= st.curve == c && x >= st.from_m && x <= st.to_m;
            }
            if (in_step)
                continue;
            if (isnan(ya) != isnan(yb)) {
                /* a change of kind: rows 0.1 mm apart, never
                 * interpolated across */
                assert_true(lv[a + 1] - lv[a] < 1e-4 + 1e-9);
                continue;
            }
            if (isnan(ya)) {
                assert_true(isnan(ex));
            } else {
                double w = (x - lv[a]) / (lv[a + 1] - lv[a]);
                /* the model's critical levels, evaluated directly at a
                 * level of our own choosing */
                assert_true(!isnan(ex));
                assert_close_abs(ya + (yb - ya) * w, ex, tol + 1e-9);
            }
            out->checked++;
        }
    }

    /* each listed step is real: the table misses the exact value by more
     * than tol at its midpoint (the model, evaluated directly) */
    for (size_t k = 0; k < out->fit.n_steps; k++) {
        sw_thresholds_step st;
        size_t a = 0;
        sw_thresholds_get_step(t, k, &st);
        assert_close_abs(st.to_m - st.from_m, 1e-4, 1e-9);
        double x = 0.5 * (st.from_m + st.to_m);
        while (a + 2 < n_rows && lv[a + 1] <= x)
            a++;
        assert_close_abs(lv[a], st.from_m, 1e-9);
        assert_close_abs(lv[a + 1], st.to_m, 1e-9);
        double ya = val[a * nc + st.curve], yb = val[(a + 1) * nc + st.curve];
        double ex = exact_curve(axis, s, st.curve, x);
        assert_true(isnan(ex) || isnan(ya) ||
                    fabs(0.5 * (ya + yb) - ex) > tol);
    }
    free(lv);
    free(val);
    gsl_rng_free(rng);
    sw_thresholds_free(t);
}

static void test_simplify_by_headwater(void **state)
{
    (void)state;
    gate_set s;
    simplified res;
    make_set(&s, chamber, 3);
    check_simplified(SW_THRESHOLDS_BY_HEADWATER, &s, "11.2:13.6:0.01", 0.005,
                     3000, 4711, &res);
    assert_true(res.n_rows < res.n_levels / 3);
    assert_true(res.checked > 20000);
    assert_true(res.fit.n_fine > res.n_levels);
    assert_true(res.fit.n_midpoints + 1 == res.fit.n_fine);
    assert_close(res.fit.fine_step_m, 0.001, 1e-12);

    /* a tight tolerance: steps where the curves start steeply */
    check_simplified(SW_THRESHOLDS_BY_HEADWATER, &s, "11.2:13.6:0.01", 0.0005,
                     1500, 815, &res);
    assert_true(res.n_rows < res.n_levels);
    assert_true(res.n_steps >= 1);
}

static void test_simplify_by_tailwater(void **state)
{
    (void)state;
    gate_set s;
    simplified res;
    make_set(&s, floaters, 2);
    check_simplified(SW_THRESHOLDS_BY_TAILWATER, &s, "8.3:11.2:0.005", 0.004,
                     3000, 1999, &res);
    assert_true(res.n_rows < res.n_levels / 10);
    assert_true(res.checked > 10000);

    make_set(&s, chamber, 3);
    check_simplified(SW_THRESHOLDS_BY_TAILWATER, &s, "10.2:14.1:0.002", 0.0025,
                     2000, 2024, &res);
    assert_true(res.n_rows < res.n_levels / 50);
}

/* Above the hinges the critical tailwater is linear in the headwater (the
 * net moment is linear there: the model's closed forms), so a long range
 * needs only a few rows. */
static void test_simplify_linear_stretch(void **state)
{
    (void)state;
    gate_set s;
    simplified res;
    make_set(&s, chamber, 3);
    check_simplified(SW_THRESHOLDS_BY_HEADWATER, &s, "12.9:15.4:0.0005",
                     0.001, 1000, 3, &res);
    assert_true(res.n_rows <= 4);
    assert_int_equal(res.n_levels, 5001);
}

/* A coarse grid with a fine STEP: the fine grid is capped (about 200,000
 * levels for three gates) and still verified. */
static void test_simplify_capped_fine_grid(void **state)
{
    (void)state;
    gate_set s;
    simplified res;
    make_set(&s, chamber, 3);
    check_simplified(SW_THRESHOLDS_BY_HEADWATER, &s, "0:60:0.0001", 0.01, 400,
                     77, &res);
    assert_true(res.fit.fine_step_m > 3.9e-4 && res.fit.fine_step_m < 4.1e-4);
    assert_true(res.fit.n_fine <= 210000);
}

static void test_simplify_single_level_and_errors(void **state)
{
    (void)state;
    gate_set s;
    sw_thresholds_range r = range_of("12.05:12.05:0.1");
    sw_thresholds *t;
    sw_thresholds_fit fit;
    sw_error err;
    const sw_thresholds_row *row;

    make_set(&s, chamber, 3);
    assert_int_equal(sw_thresholds_alloc(&t, s.p, 3, SW_THRESHOLDS_BY_HEADWATER,
                                         &r, &err),
                     SW_OK);
    assert_int_equal(sw_thresholds_simplify(t, 0.0004, &fit, &err), SW_EUSAGE);
    assert_non_null(strstr(err.message, "at least 0.0005 m"));
    assert_int_equal(sw_thresholds_simplify(t, NAN, &fit, &err), SW_EUSAGE);
    assert_int_equal(sw_thresholds_simplify(t, INFINITY, &fit, &err),
                     SW_EUSAGE);
    assert_int_equal(sw_thresholds_simplify(t, 0.002, &fit, &err), SW_OK);
    assert_int_equal(sw_thresholds_n_rows(t), 1);
    assert_int_equal(sw_thresholds_get_row(t, 0, &row, &err), SW_OK);
    assert_close(row->level_m, 12.05, 1e-15);
    assert_true(fit.max_error_m == 0.0);
    assert_int_equal(sw_thresholds_simplify(t, 0.002, &fit, &err),
                     SW_EINTERNAL);
    sw_thresholds_free(t);
}

/* ---- with a confidence (samples) ------------------------------------------- */

/* Samples made here, by hand, with GSL's normal draws: n copies of the
 * chamber's gates (mass of each drawn when mass_sd > 0), and the datum
 * shifts dhw, dtw of every gate drawn with the given standard deviations
 * (one draw per sample, shared by the gates, as a gauge's datum is). */
typedef struct sampled {
    size_t n, n_gates;
    sw_gate *g;
    double *dhw, *dtw;
} sampled;

static void make_samples(sampled *sm, const gate_set *set, size_t n,
                         double mass_sd, double hw_sd, double tw_sd,
                         unsigned long seed)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    assert_non_null(r);
    gsl_rng_set(r, seed);
    sm->n = n;
    sm->n_gates = set->n;
    sm->g = calloc(n * set->n, sizeof *sm->g);
    sm->dhw = calloc(n * set->n, sizeof *sm->dhw);
    sm->dtw = calloc(n * set->n, sizeof *sm->dtw);
    assert_true(sm->g != NULL && sm->dhw != NULL && sm->dtw != NULL);
    for (size_t s = 0; s < n; s++) {
        double a = hw_sd > 0 ? gsl_ran_gaussian(r, hw_sd) : 0.0;
        double b = tw_sd > 0 ? gsl_ran_gaussian(r, tw_sd) : 0.0;
        for (size_t g = 0; g < set->n; g++) {
            sw_gate *x = &sm->g[s * set->n + g];
            *x = set->g[g];
            if (mass_sd > 0) {
                x->mass_kg += gsl_ran_gaussian(r, mass_sd);
                sw_gate_prepare(x);
            }
            sm->dhw[s * set->n + g] = a;
            sm->dtw[s * set->n + g] = b;
        }
    }
    gsl_rng_free(r);
}

static void free_samples(sampled *sm)
{
    free(sm->g);
    free(sm->dhw);
    free(sm->dtw);
}

static sw_thresholds *sampled_table(const gate_set *set, const sampled *sm,
                                    sw_thresholds_axis axis,
                                    const char *range, double p,
                                    unsigned workers)
{
    sw_thresholds *t;
    sw_error err;
    sw_thresholds_range r = range_of(range);
    assert_int_equal(sw_thresholds_alloc(&t, set->p, set->n, axis, &r, &err),
                     SW_OK);
    assert_int_equal(sw_thresholds_set_samples(t, sm->g, sm->dhw, sm->dtw,
                                               sm->n, p, workers, &err),
                     SW_OK);
    return t;
}

/* Only the tailwater gauge's datum is uncertain (sd 0.02 m): every
 * sample's true critical tailwater is the gate's own, c(hw), and the gauge
 * shows it at c - d with d ~ N(0, sd).  The upper P-quantile of c - d is
 * c + z_P sd, z_P the standard normal's P-quantile
 * (gsl_cdf_ugaussian_Pinv); a sample quantile has the standard error
 * sqrt(P (1 - P) / n) / phi(z_P) * sd (the asymptotic variance of a sample
 * quantile: from memory).  By tailwater, with the headwater gauge's datum
 * uncertain, the lower P-quantile of c - d is c - z_P sd. */
static void test_confidence_datum_analytic(void **state)
{
    gate_set set;
    sampled sm;
    sw_error err;
    const size_t n = 4000;
    const double sd = 0.02, p = 0.9;
    double z = gsl_cdf_ugaussian_Pinv(p);
    double se = sqrt(p * (1 - p) / (double)n) / gsl_ran_ugaussian_pdf(z) * sd;
    (void)state;

    make_set(&set, chamber, 3);
    for (int axis = 0; axis < 2; axis++) {
        int by_hw = axis == SW_THRESHOLDS_BY_HEADWATER;
        const char *range = by_hw ? "11.6:12.6:0.05" : "10.9:11.9:0.05";
        make_samples(&sm, &set, n, 0.0, by_hw ? 0.0 : sd, by_hw ? sd : 0.0,
                     1234);
        sw_thresholds *t =
            sampled_table(&set, &sm, (sw_thresholds_axis)axis, range, p, 2);
        size_t checked = 0;
        for (size_t i = 0; i < sw_thresholds_n_rows(t); i++) {
            const sw_thresholds_row *row;
            assert_int_equal(sw_thresholds_get_row(t, i, &row, &err), SW_OK);
            for (size_t g = 0; g < set.n; g++)
                for (int k = 0; k < 2; k++) {
                    sw_crit c;
                    assert_int_equal(
                        by_hw ? sw_gate_critical_tailwater(
                                    set.p[g], row->level_m,
                                    k == 0 ? SW_LIMIT_ALARM : SW_LIMIT_OPEN,
                                    &c, &err)
                              : sw_gate_critical_headwater(
                                    set.p[g], row->level_m,
                                    k == 0 ? SW_LIMIT_ALARM : SW_LIMIT_OPEN,
                                    &c, &err),
                        SW_OK);
                    const sw_crit *got = &row->crit[2 * g + (size_t)k];
                    if (c.kind != SW_CRIT_LEVEL || got->kind != SW_CRIT_LEVEL)
                        continue;
                    double want = by_hw ? c.level_m + z * sd
                                        : c.level_m - z * sd;
                    /* + 0.1 mm: the published value is rounded */
                    assert_close_abs(got->level_m, want, 4.0 * se + 1e-4);
                    checked++;
                }
        }
        assert_true(checked > 20);
        sw_thresholds_free(t);
        free_samples(&sm);
    }
}

/* A symmetric case: only the masses uncertain (normal, sd 40 kg), so the
 * critical tailwater, monotone in the mass, has its median at the median
 * mass, whose sample estimate is off by about sqrt(pi/2) sd / sqrt(n)
 * (the standard error of a normal sample's median: from memory).  At
 * confidence 0.5 the table is the deterministic one within that, carried
 * through the slope d crit / d mass (measured here on the model), and the
 * 0.1 mm of rounding. */
static void test_confidence_half_symmetric(void **state)
{
    gate_set set, light, heavy;
    sampled sm;
    sw_error err;
    const size_t n = 4000;
    const double sd = 40.0;
    (void)state;

    make_set(&set, chamber, 3);
    make_set(&light, chamber, 3);
    make_set(&heavy, chamber, 3);
    for (size_t g = 0; g < 3; g++) {
        light.g[g].mass_kg -= 1.0;
        heavy.g[g].mass_kg += 1.0;
        sw_gate_prepare(&light.g[g]);
        sw_gate_prepare(&heavy.g[g]);
    }
    make_samples(&sm, &set, n, sd, 0.0, 0.0, 99);
    sw_thresholds *t = sampled_table(&set, &sm, SW_THRESHOLDS_BY_HEADWATER,
                                     "11.7:12.6:0.05", 0.5, 3);
    size_t checked = 0;
    for (size_t i = 0; i < sw_thresholds_n_rows(t); i++) {
        const sw_thresholds_row *row;
        assert_int_equal(sw_thresholds_get_row(t, i, &row, &err), SW_OK);
        for (size_t g = 0; g < 3; g++) {
            sw_crit c, cl, ch;
            const sw_crit *got = &row->crit[2 * g + SW_THRESHOLDS_ALARM];
            assert_int_equal(sw_gate_critical_tailwater(set.p[g], row->level_m,
                                                        SW_LIMIT_ALARM, &c,
                                                        &err),
                             SW_OK);
            assert_int_equal(sw_gate_critical_tailwater(&light.g[g],
                                                        row->level_m,
                                                        SW_LIMIT_ALARM, &cl,
                                                        &err),
                             SW_OK);
            assert_int_equal(sw_gate_critical_tailwater(&heavy.g[g],
                                                        row->level_m,
                                                        SW_LIMIT_ALARM, &ch,
                                                        &err),
                             SW_OK);
            if (c.kind != SW_CRIT_LEVEL || cl.kind != SW_CRIT_LEVEL ||
                ch.kind != SW_CRIT_LEVEL)
                continue;
            assert_int_equal(got->kind, SW_CRIT_LEVEL);
            double slope = fabs(ch.level_m - cl.level_m) / 2.0;
            double tol = 4.0 * sqrt(acos(-1.0) / 2.0) * sd /
                             sqrt((double)n) * slope +
                         2e-4;
            assert_close_abs(got->level_m, c.level_m, tol);
            checked++;
        }
    }
    assert_true(checked > 20);
    sw_thresholds_free(t);
    free_samples(&sm);
}

/* Every sample the same gates, no datum: the table is the deterministic
 * one, row for row (grid), and simplified with few samples (where the
 * fine grid's budget in sample evaluations allows the same fine grid);
 * and the number of workers changes nothing. */
static void test_confidence_zero_uncertainty(void **state)
{
    gate_set set;
    sampled sm;
    sw_error err;
    sw_thresholds_fit fa, fb;
    sw_thresholds_range r = range_of("11.3:12.6:0.01");
    (void)state;

    make_set(&set, chamber, 3);
    make_samples(&sm, &set, 8, 0.0, 0.0, 0.0, 1);
    for (int simplify = 0; simplify < 2; simplify++) {
        sw_thresholds *a, *b;
        assert_int_equal(sw_thresholds_alloc(&a, set.p, set.n,
                                             SW_THRESHOLDS_BY_HEADWATER, &r,
                                             &err),
                         SW_OK);
        b = sampled_table(&set, &sm, SW_THRESHOLDS_BY_HEADWATER,
                          "11.3:12.6:0.01", 0.95, 2);
        if (simplify) {
            assert_int_equal(sw_thresholds_simplify(a, 0.005, &fa, &err),
                             SW_OK);
            assert_int_equal(sw_thresholds_simplify(b, 0.005, &fb, &err),
                             SW_OK);
            assert_int_equal(fa.n_fine, fb.n_fine);
            assert_true(fa.max_error_m == fb.max_error_m);
        }
        assert_int_equal(sw_thresholds_n_rows(a), sw_thresholds_n_rows(b));
        for (size_t i = 0; i < sw_thresholds_n_rows(a); i++) {
            const sw_thresholds_row *ra, *rb;
            sw_crit ca[8];
            assert_int_equal(sw_thresholds_get_row(a, i, &ra, &err), SW_OK);
            memcpy(ca, ra->crit, 6 * sizeof *ca);
            double la = ra->level_m;
            sw_crit ga[2] = {ra->governing[0], ra->governing[1]};
            assert_int_equal(sw_thresholds_get_row(b, i, &rb, &err), SW_OK);
            assert_true(la == rb->level_m);
            for (size_t c = 0; c < 6; c++) {
                assert_int_equal(ca[c].kind, rb->crit[c].kind);
                if (ca[c].kind == SW_CRIT_LEVEL)
                    assert_true(ca[c].level_m == rb->crit[c].level_m);
            }
            for (int k = 0; k < 2; k++)
                assert_int_equal(ga[k].kind, rb->governing[k].kind);
        }
        sw_thresholds_free(a);
        sw_thresholds_free(b);
    }
    free_samples(&sm);
}

/* The signs of the datums, with every sample shifted alike: a gauge whose
 * datum lies d higher than given shows every level d too low, so at a row
 * of headwater x as its gauge shows it the true headwater is x + dhw, and
 * the tailwater gauge shows the true critical tailwater c less dtw. */
static void test_confidence_fixed_shifts(void **state)
{
    gate_set set;
    sampled sm;
    sw_error err;
    const double dhw = 0.0217, dtw = 0.0123;
    (void)state;

    make_set(&set, chamber, 3);
    make_samples(&sm, &set, 5, 0.0, 0.0, 0.0, 1);
    for (size_t i = 0; i < 5 * 3; i++) {
        sm.dhw[i] = dhw;
        sm.dtw[i] = dtw;
    }
    sw_thresholds *t = sampled_table(&set, &sm, SW_THRESHOLDS_BY_HEADWATER,
                                     "11.8:12.4:0.1", 0.9, 2);
    for (size_t i = 0; i < sw_thresholds_n_rows(t); i++) {
        const sw_thresholds_row *row;
        assert_int_equal(sw_thresholds_get_row(t, i, &row, &err), SW_OK);
        for (size_t g = 0; g < 3; g++) {
            sw_crit c;
            assert_int_equal(sw_gate_critical_tailwater(set.p[g],
                                                        row->level_m + dhw,
                                                        SW_LIMIT_ALARM, &c,
                                                        &err),
                             SW_OK);
            assert_int_equal(c.kind, SW_CRIT_LEVEL);
            assert_close_abs(row->crit[2 * g].level_m, c.level_m - dtw,
                             1e-4 + 1e-12);
        }
    }
    sw_thresholds_free(t);
    free_samples(&sm);
}

/* The same samples on 1 and 3 workers: the same rows, bit for bit. */
static void test_confidence_workers(void **state)
{
    gate_set set;
    sampled sm;
    sw_error err;
    (void)state;

    make_set(&set, chamber, 3);
    make_samples(&sm, &set, 301, 25.0, 0.01, 0.015, 5);
    sw_thresholds *a = sampled_table(&set, &sm, SW_THRESHOLDS_BY_TAILWATER,
                                     "10.9:11.9:0.02", 0.95, 1);
    sw_thresholds *b = sampled_table(&set, &sm, SW_THRESHOLDS_BY_TAILWATER,
                                     "10.9:11.9:0.02", 0.95, 3);
    for (size_t i = 0; i < sw_thresholds_n_rows(a); i++) {
        const sw_thresholds_row *ra, *rb;
        sw_crit ca[6];
        assert_int_equal(sw_thresholds_get_row(a, i, &ra, &err), SW_OK);
        memcpy(ca, ra->crit, sizeof ca);
        assert_int_equal(sw_thresholds_get_row(b, i, &rb, &err), SW_OK);
        assert_memory_equal(ca, rb->crit, sizeof ca);
    }
    sw_thresholds_free(a);
    sw_thresholds_free(b);
    /* a confidence outside (0, 1) */
    sw_thresholds *t;
    sw_thresholds_range r = range_of("11:12:0.5");
    assert_int_equal(sw_thresholds_alloc(&t, set.p, set.n,
                                         SW_THRESHOLDS_BY_HEADWATER, &r, &err),
                     SW_OK);
    assert_int_equal(sw_thresholds_set_samples(t, sm.g, sm.dhw, sm.dtw, sm.n,
                                               1.0, 1, &err),
                     SW_EUSAGE);
    assert_int_equal(sw_thresholds_set_samples(t, sm.g, sm.dhw, sm.dtw, 0,
                                               0.9, 1, &err),
                     SW_EUSAGE);
    sw_thresholds_free(t);
    free_samples(&sm);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_parse_range),
        cmocka_unit_test(test_parse_range_errors),
        cmocka_unit_test(test_round),
        cmocka_unit_test(test_grid_by_headwater),
        cmocka_unit_test(test_grid_by_tailwater),
        cmocka_unit_test(test_single_gate),
        cmocka_unit_test(test_alloc_errors),
        cmocka_unit_test(test_simplify_by_headwater),
        cmocka_unit_test(test_simplify_by_tailwater),
        cmocka_unit_test(test_simplify_linear_stretch),
        cmocka_unit_test(test_simplify_capped_fine_grid),
        cmocka_unit_test(test_simplify_single_level_and_errors),
        cmocka_unit_test(test_confidence_datum_analytic),
        cmocka_unit_test(test_confidence_half_symmetric),
        cmocka_unit_test(test_confidence_zero_uncertainty),
        cmocka_unit_test(test_confidence_fixed_shifts),
        cmocka_unit_test(test_confidence_workers),
    };
    gsl_set_error_handler_off();
    return cmocka_run_group_tests(tests, NULL, NULL);
}
