/* sillwatch: the hydrostatic model of one flap gate (see gate.h and the
 * model document, README "The model").
 *
 * Notation used throughout:
 *   H      hinge elevation (m)           a, b   seal top and sill, s (m)
 *   alpha  inclination from horizontal   s_w    where a water surface meets
 *   k      rho * g * sin(alpha)                 the leaf's plane, s (m)
 * Pressure on the leaf at s is k (s - s_w) for s > s_w, acting normal to the
 * leaf, so the force is F = k * integral (s - s_w) w(s) ds and its moment
 * about the hinge is M = k * integral (s - s_w) s w(s) ds over the wetted
 * part of the sealed opening (common practice, no source: the hydrostatic
 * pressure prism on an inclined plane).
 */
#include "sillwatch/gate.h"

#include <float.h>
#include <math.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_roots.h>

/* Plausibility bounds on sizes, so that a unit slip (mm typed for m) is
 * caught rather than computed: common practice, no source. */
#define MAX_SIZE_M 500.0
#define MAX_LEVEL_M 1.0e4
#define MAX_MASS_KG 1.0e9
/* Plausibility, so that no accepted gate makes a critical-level search
 * fail (common practice, no source): sizes of the opening and leaf of at
 * least 1 mm, and moments of weight, buoyancy and extra_moment each at
 * most that of a MAX_HEAD_M head of the densest accepted water (1100
 * kg/m^3 at 9.9 m/s^2) on the sealed area at the sill's arm: critical
 * levels then stay within about that head of the hinge. */
#define MIN_SIZE_M 1.0e-3
#define MAX_HEAD_M 1.0e5
#define MAX_REQUIRED_FS 100.0

const char *sw_state_name(sw_state state)
{
    switch (state) {
    case SW_STATE_OK: return "ok";
    case SW_STATE_LOW: return "low";
    case SW_STATE_OPEN: return "open";
    }
    return "?";
}

const char *sw_shape_name(sw_shape shape)
{
    return shape == SW_SHAPE_CIRCLE ? "circle" : "rectangle";
}

const char *sw_side_name(sw_side side)
{
    return side == SW_DOWNSTREAM ? "downstream" : "upstream";
}

const char *sw_fs_basis_name(sw_fs_basis basis)
{
    return basis == SW_FS_OVERTURNING ? "overturning" : "net";
}

const char *sw_fs_basis_phrase(sw_fs_basis basis)
{
    return basis == SW_FS_OVERTURNING ? "overturning, Mr / hw_moment"
                                      : "net water load, R / D";
}

/* ---- parameters ---------------------------------------------------------- */

static const struct {
    const char *key, *unit;
} param_info[SW_GATE_N_PARAMS] = {
    [SW_GP_HINGE_LEVEL] = {"hinge_level", "m"},
    [SW_GP_INCLINATION] = {"inclination", "degrees"},
    [SW_GP_SEAL_TOP] = {"seal_top", "m"},
    [SW_GP_SEAL_HEIGHT] = {"seal_height", "m"},
    [SW_GP_SEAL_WIDTH] = {"seal_width", "m"},
    [SW_GP_DIAMETER] = {"diameter", "m"},
    [SW_GP_LEAF_LENGTH] = {"leaf_length", "m"},
    [SW_GP_MASS] = {"mass", "kg"},
    [SW_GP_CG_ALONG] = {"cg_along", "m"},
    [SW_GP_CG_OFFSET] = {"cg_offset", "m"},
    [SW_GP_VOLUME] = {"volume", "m^3"},
    [SW_GP_EXTRA_MOMENT] = {"extra_moment", "N*m"},
};

const char *sw_gate_param_key(sw_gate_param p)
{
    return p < SW_GATE_N_PARAMS ? param_info[p].key : "?";
}

const char *sw_gate_param_unit(sw_gate_param p)
{
    return p < SW_GATE_N_PARAMS ? param_info[p].unit : "?";
}

double *sw_gate_param_ref(sw_gate *g, sw_gate_param p)
{
    switch (p) {
    case SW_GP_HINGE_LEVEL: return &g->hinge_level_m;
    case SW_GP_INCLINATION: return &g->inclination_deg;
    case SW_GP_SEAL_TOP: return &g->seal_top_m;
    case SW_GP_SEAL_HEIGHT: return &g->seal_height_m;
    case SW_GP_SEAL_WIDTH: return &g->seal_width_m;
    case SW_GP_DIAMETER: return &g->diameter_m;
    case SW_GP_LEAF_LENGTH: return &g->leaf_length_m;
    case SW_GP_MASS: return &g->mass_kg;
    case SW_GP_CG_ALONG: return &g->cg_along_m;
    case SW_GP_CG_OFFSET: return &g->cg_offset_m;
    case SW_GP_VOLUME: return &g->volume_m3;
    case SW_GP_EXTRA_MOMENT:
    case SW_GATE_N_PARAMS: break;
    }
    return &g->extra_moment_Nm;
}

/* The ranges of sw_gate_validate() below, key by key. */
void sw_gate_param_range(sw_gate_param p, double *lo, double *hi,
                         int *lo_open, int *hi_open)
{
    *lo_open = 0;
    *hi_open = 0;
    switch (p) {
    case SW_GP_HINGE_LEVEL:
        *lo = -MAX_LEVEL_M;
        *hi = MAX_LEVEL_M;
        return;
    case SW_GP_INCLINATION:
        *lo = 0.0;
        *hi = 180.0;
        *lo_open = *hi_open = 1;
        return;
    case SW_GP_SEAL_TOP:
    case SW_GP_CG_ALONG:
        *lo = 0.0;
        *hi = MAX_SIZE_M;
        return;
    case SW_GP_SEAL_HEIGHT:
    case SW_GP_SEAL_WIDTH:
    case SW_GP_DIAMETER:
    case SW_GP_LEAF_LENGTH:
        *lo = MIN_SIZE_M;
        *hi = MAX_SIZE_M;
        return;
    case SW_GP_MASS:
        *lo = 0.0;
        *hi = MAX_MASS_KG;
        *lo_open = 1;
        return;
    case SW_GP_CG_OFFSET:
        *lo = -MAX_SIZE_M;
        *hi = MAX_SIZE_M;
        return;
    case SW_GP_VOLUME:
        *lo = 0.0;
        *hi = MAX_SIZE_M * MAX_SIZE_M * MAX_SIZE_M;
        return;
    case SW_GP_EXTRA_MOMENT:
    case SW_GATE_N_PARAMS:
        break;
    }
    *lo = -INFINITY;
    *hi = INFINITY;
    *lo_open = *hi_open = 1;
}

/* ---- validation --------------------------------------------------------- */

static int bad(sw_error *err, const char **bad_key, const sw_gate *g,
               const char *key, double value, const char *why)
{
    if (bad_key != NULL)
        *bad_key = key;
    return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                        "gate '%s': key '%s': %.10g %s", g->name, key, value,
                        why);
}

static int check_size(const sw_gate *g, const char *key, double v,
                      const char **bad_key, sw_error *err)
{
    if (!isfinite(v) || v <= 0.0)
        return bad(err, bad_key, g, key, v, "must be a positive length in m");
    if (v < MIN_SIZE_M)
        return bad(err, bad_key, g, key, v,
                   "m is implausibly small (under 1 mm): is the unit m?");
    if (v > MAX_SIZE_M)
        return bad(err, bad_key, g, key, v,
                   "m is implausibly large (over 500 m): is the unit m?");
    return SW_OK;
}

/* The moment of a MAX_HEAD_M head of the densest water on the sealed
 * opening at the sill's arm. */
static double moment_bound(const sw_gate *g, double s_sill)
{
    double area = g->shape == SW_SHAPE_RECTANGLE
                      ? g->seal_height_m * g->seal_width_m
                      : M_PI * g->diameter_m * g->diameter_m / 4.0;
    return 1100.0 * 9.9 * MAX_HEAD_M * area * s_sill;
}

/* The moments' bound (see MAX_HEAD_M): each of weight, buoyancy and
 * extra_moment at most that of a 100 km head on the sealed opening. */
static int check_moments(const sw_gate *g, double s_sill,
                         const char **bad_key, sw_error *err)
{
    const double rho = 1100.0, grav = 9.9;
    double a = g->inclination_deg * M_PI / 180.0;
    double weight, buoy, bound = moment_bound(g, s_sill);

    weight = fabs(g->mass_kg * grav *
                  (g->cg_along_m * cos(a) + g->cg_offset_m * sin(a)));
    buoy = rho * grav * g->volume_m3 * g->leaf_length_m / 2.0;
    char why[160];
    const char *key = fabs(g->extra_moment_Nm) > bound ? "extra_moment"
                      : weight > bound                 ? "mass"
                      : buoy > bound                   ? "volume"
                                                       : NULL;
    if (key == NULL)
        return SW_OK;
    snprintf(why, sizeof why,
             "%s: the %s moment is implausibly large for this opening "
             "(over %.3g N*m, a 100 km head of water on the sealed area at "
             "the sill)",
             key[0] == 'e' ? "N*m" : key[0] == 'm' ? "kg" : "m^3",
             key[0] == 'e' ? "extra" : key[0] == 'm' ? "weight" : "buoyancy",
             bound);
    return bad(err, bad_key, g, key,
               key[0] == 'e' ? g->extra_moment_Nm
               : key[0] == 'm' ? g->mass_kg
                               : g->volume_m3,
               why);
    return SW_OK;
}

int sw_gate_validate(const sw_gate *g, const char **bad_key, sw_error *err)
{
    int rc;
    double s_sill;

    if (bad_key != NULL)
        *bad_key = NULL;
    if (!isfinite(g->hinge_level_m) || fabs(g->hinge_level_m) > MAX_LEVEL_M)
        return bad(err, bad_key, g, "hinge_level", g->hinge_level_m,
                   "m is not a plausible elevation (|z| <= 10000 m)");
    if (!isfinite(g->inclination_deg) || g->inclination_deg <= 0.0 ||
        g->inclination_deg >= 180.0)
        return bad(err, bad_key, g, "inclination", g->inclination_deg,
                   "is outside (0, 180) degrees from the horizontal");
    if (!isfinite(g->seal_top_m) || g->seal_top_m < 0.0)
        return bad(err, bad_key, g, "seal_top", g->seal_top_m,
                   "must be >= 0 m (distance along the leaf from the hinge)");
    if (g->seal_top_m > MAX_SIZE_M)
        return bad(err, bad_key, g, "seal_top", g->seal_top_m,
                   "m is implausibly large (over 500 m): is the unit m?");
    if (g->shape == SW_SHAPE_RECTANGLE) {
        if ((rc = check_size(g, "seal_height", g->seal_height_m, bad_key,
                             err)) != SW_OK)
            return rc;
        if ((rc = check_size(g, "seal_width", g->seal_width_m, bad_key,
                             err)) != SW_OK)
            return rc;
        s_sill = g->seal_top_m + g->seal_height_m;
    } else {
        if ((rc = check_size(g, "diameter", g->diameter_m, bad_key, err)) !=
            SW_OK)
            return rc;
        s_sill = g->seal_top_m + g->diameter_m;
    }
    if ((rc = check_size(g, "leaf_length", g->leaf_length_m, bad_key, err)) !=
        SW_OK)
        return rc;
    if (g->leaf_length_m < s_sill * (1.0 - 1e-12)) {
        if (bad_key != NULL)
            *bad_key = "leaf_length";
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "gate '%s': key 'leaf_length': the seal runs past "
                            "the leaf: the sill is at %.10g m along the leaf "
                            "but leaf_length is %.10g m",
                            g->name, s_sill, g->leaf_length_m);
    }
    if (!isfinite(g->mass_kg) || g->mass_kg <= 0.0)
        return bad(err, bad_key, g, "mass", g->mass_kg,
                   "must be a positive mass in kg");
    if (g->mass_kg > MAX_MASS_KG)
        return bad(err, bad_key, g, "mass", g->mass_kg,
                   "kg is implausibly large (over 1e9 kg): is the unit kg?");
    if (!isfinite(g->cg_along_m) || g->cg_along_m < 0.0 ||
        g->cg_along_m > g->leaf_length_m) {
        if (bad_key != NULL)
            *bad_key = "cg_along";
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "gate '%s': key 'cg_along': %.10g m puts the "
                            "centre of gravity off the leaf (0 to %.10g m)",
                            g->name, g->cg_along_m, g->leaf_length_m);
    }
    if (!isfinite(g->cg_offset_m) || fabs(g->cg_offset_m) > g->leaf_length_m) {
        if (bad_key != NULL)
            *bad_key = "cg_offset";
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "gate '%s': key 'cg_offset': %.10g m puts the "
                            "centre of gravity farther from the leaf than its "
                            "length (%.10g m)",
                            g->name, g->cg_offset_m, g->leaf_length_m);
    }
    if (!isfinite(g->volume_m3) || g->volume_m3 < 0.0)
        return bad(err, bad_key, g, "volume", g->volume_m3,
                   "must be >= 0 m^3 (displaced volume of the leaf)");
    if (g->volume_m3 > MAX_SIZE_M * MAX_SIZE_M * MAX_SIZE_M)
        return bad(err, bad_key, g, "volume", g->volume_m3,
                   "m^3 is implausibly large: is the unit m^3?");
    if (!isfinite(g->extra_moment_Nm))
        return bad(err, bad_key, g, "extra_moment", g->extra_moment_Nm,
                   "must be a finite moment in N*m");
    if ((rc = check_moments(g, s_sill, bad_key, err)) != SW_OK)
        return rc;
    if (isnan(g->required_fs)) {
        if (bad_key != NULL)
            *bad_key = "required_fs";
        return sw_error_set(err, SW_ESITE, NULL, 0, 0,
                            "gate '%s' has no required_fs: set it in [gate %s] "
                            "or [site]; sillwatch has no built-in value",
                            g->name, g->name);
    }
    if (!isfinite(g->required_fs) || g->required_fs < 1.0)
        return bad(err, bad_key, g, "required_fs", g->required_fs,
                   "must be a factor of safety >= 1");
    if (!isfinite(g->min_sill_reaction_N) || g->min_sill_reaction_N < 0.0)
        return bad(err, bad_key, g, "min_sill_reaction", g->min_sill_reaction_N,
                   "must be >= 0 N");
    if (g->required_fs > MAX_REQUIRED_FS)
        return bad(err, bad_key, g, "required_fs", g->required_fs,
                   "is implausibly large (over 100)");
    if (g->min_sill_reaction_N * s_sill > moment_bound(g, s_sill))
        return bad(err, bad_key, g, "min_sill_reaction",
                   g->min_sill_reaction_N,
                   "N is implausibly large for this opening: times the "
                   "sill's arm it exceeds the moment of a 100 km head of "
                   "water on the sealed area");
    for (int side = 0; side < 2; side++)
        if (!isfinite(g->rho_kgm3[side]) || g->rho_kgm3[side] <= 0.0)
            return bad(err, bad_key, g, "density", g->rho_kgm3[side],
                       "kg/m^3 is not a usable water density");
    if (!isfinite(g->g_ms2) || g->g_ms2 <= 0.0)
        return bad(err, bad_key, g, "gravity", g->g_ms2,
                   "m/s^2 is not a usable gravity");
    return SW_OK;
}

/* ---- geometry ----------------------------------------------------------- */

/* s integral of the width over the whole opening, and of s times it. */
static double full_area(const sw_gate *g)
{
    if (g->shape == SW_SHAPE_RECTANGLE)
        return g->seal_width_m * g->seal_height_m;
    return M_PI * 0.25 * g->diameter_m * g->diameter_m;
}

void sw_gate_prepare(sw_gate *g)
{
    /* sin and cos through the complement, so that 90 degrees gives cos = 0
     * and sin = 1 exactly. */
    double c = (90.0 - g->inclination_deg) * (M_PI / 180.0);
    g->sin_a = cos(c);
    g->cos_a = sin(c);
    g->s_sill_m = g->seal_top_m + (g->shape == SW_SHAPE_RECTANGLE
                                       ? g->seal_height_m
                                       : g->diameter_m);
    g->sill_level_m = g->hinge_level_m - g->s_sill_m * g->sin_a;
    g->seal_top_level_m = g->hinge_level_m - g->seal_top_m * g->sin_a;
    g->leaf_bottom_level_m = g->hinge_level_m - g->leaf_length_m * g->sin_a;
    g->area_m2 = full_area(g);
    /* centroid of both shapes lies midway between seal top and sill */
    g->first_moment_m3 = g->area_m2 * 0.5 * (g->seal_top_m + g->s_sill_m);
    /* model: weight_moment = m g (cg_along cos a + cg_offset sin a) */
    g->weight_moment_Nm =
        g->mass_kg * g->g_ms2 *
        (g->cg_along_m * g->cos_a + g->cg_offset_m * g->sin_a);
}

/* Where a surface at `level` meets the leaf's plane, as s. */
static double surface_s(const sw_gate *g, double level)
{
    return (g->hinge_level_m - level) / g->sin_a;
}

/* Rectangle: F/k and M/k over the wetted part [lo, b], lo = max(a, s_w).
 * Two algebraically equal forms are used so that no term cancels: for
 * s_w >= 0 the integrand is written in u = s - s_w (all terms >= 0), for
 * s_w < 0 in s (then -s_w > 0 and again all terms are >= 0). */
static void rect_integrals(const sw_gate *g, double s_w, double *f, double *m)
{
    double a = g->seal_top_m, b = g->s_sill_m, w = g->seal_width_m;
    double lo = s_w > a ? s_w : a;
    double len, p, q;

    if (lo >= b) {
        *f = *m = 0.0;
        return;
    }
    len = b - lo;
    p = lo - s_w;
    q = b - s_w;
    *f = w * len * 0.5 * (p + q);
    if (s_w >= 0.0)
        *m = w * len * ((q * q + q * p + p * p) / 3.0 + s_w * 0.5 * (q + p));
    else
        *m = w * len * ((b * b + b * lo + lo * lo) / 3.0 - s_w * 0.5 * (b + lo));
}

/* Circle of radius r centred at s = c; y = s - c.  Over the segment
 * y in [y0, r], with theta the half-angle of the chord at y0
 * (cos theta = y0/r), the standard circular-segment integrals are
 *   J0 = integral w dy     = r^2 (theta - sin theta cos theta)
 *   J1 = integral y w dy   = (2/3) (r^2 - y0^2)^(3/2)
 *   J2 = integral y^2 w dy = (r^4 theta - y0 (2 y0^2 - r^2) sqrt(r^2 - y0^2))/4
 * (area, first and second moment of a circular segment about the diameter
 * parallel to its chord; standard handbook formulas, e.g. Roark's Formulas
 * for Stress and Strain, table of properties of plane areas; from memory).
 * Exposed to the tests through sw_gate_water_load only. */
static void segment_integrals(double r, double y0, double *j0, double *j1,
                              double *j2)
{
    double root;

    /* A surface at the top of the opening can give y0 a rounding below -r
     * (s_w - c with c = seal_top + r), and then the root of a negative
     * number: NaN loads and a NaN verdict (found by fuzzing).  The chord
     * cannot lie outside the circle. */
    if (y0 < -r)
        y0 = -r;
    else if (y0 > r)
        y0 = r;
    root = sqrt((r - y0) * (r + y0));
    double theta = atan2(root, y0);
    *j0 = r * r * theta - y0 * root;
    *j1 = (2.0 / 3.0) * root * root * root;
    *j2 = 0.25 * (r * r * r * r * theta - y0 * (2.0 * y0 * y0 - r * r) * root);
}

/* For a thin wetted cap at the bottom of the circle (depth h << r) the
 * closed forms above cancel badly (F ~ h^(5/2)).  Integrate instead in
 * v = distance above the sill, with w = 2 sqrt(v (2r - v)) expanded as a
 * binomial series in v/(2r):
 *   integral_0^h (h - v) v^(n+1/2) dv = h^(n+5/2) / ((n+3/2)(n+5/2))
 *   integral_0^h (h - v) v^(n+3/2) dv = h^(n+7/2) / ((n+5/2)(n+7/2))
 * Used for h <= r/10, where 16 terms reach double precision. */
static void cap_series(double r, double h, double b, double *f, double *m)
{
    double x = -h / (2.0 * r);
    double beta = 1.0, xn = 1.0, s1 = 0.0, s2 = 0.0;

    for (int n = 0; n < 16; n++) {
        double dn = (double)n;
        double t = beta * xn;
        s1 += t / ((dn + 1.5) * (dn + 2.5));
        s2 += t / ((dn + 2.5) * (dn + 3.5));
        beta *= (0.5 - dn) / (dn + 1.0);
        xn *= x;
    }
    double scale = 2.0 * sqrt(2.0 * r) * h * h * sqrt(h);
    double i1 = scale * s1;     /* integral (h - v) w dv */
    double i2 = scale * h * s2; /* integral (h - v) v w dv */
    *f = i1;
    *m = b * i1 - i2;           /* s = b - v */
}

static void circle_integrals(const sw_gate *g, double s_w, double *f,
                             double *m)
{
    double r = 0.5 * g->diameter_m;
    double c = g->seal_top_m + r;
    double b = g->s_sill_m;

    if (s_w >= b) {
        *f = *m = 0.0;
    } else if (s_w <= g->seal_top_m) {
        /* fully wetted: J0 = pi r^2, J1 = 0, J2 = pi r^4 / 4 */
        double d = c - s_w;
        double area = M_PI * r * r;
        *f = d * area;
        *m = 0.25 * area * r * r + c * d * area;
    } else if (b - s_w <= 0.1 * r) {
        cap_series(r, b - s_w, b, f, m);
    } else {
        double y0 = s_w - c, j0, j1, j2;
        segment_integrals(r, y0, &j0, &j1, &j2);
        /* F/k = integral (y - y0) w;  M/k = integral (y - y0)(y + c) w,
         * grouped so that each bracket is a positive integral. */
        *f = j1 - y0 * j0;
        *m = (j2 - y0 * j1) + c * (*f);
    }
}

void sw_gate_water_load(const sw_gate *g, double level_m, double rho_kgm3,
                        double *force_N, double *moment_Nm)
{
    double s_w = surface_s(g, level_m), f, m;
    double k = rho_kgm3 * g->g_ms2 * g->sin_a;

    if (g->shape == SW_SHAPE_RECTANGLE)
        rect_integrals(g, s_w, &f, &m);
    else
        circle_integrals(g, s_w, &f, &m);
    *force_N = k * f;
    *moment_Nm = k * m;
}

/* s integral of s w(s) over the part of the opening below s_w: the rate at
 * which a water's moment grows with its level is rho g times this. */
static double wetted_first_moment(const sw_gate *g, double level)
{
    double s_w = surface_s(g, level);
    double a = g->seal_top_m, b = g->s_sill_m;

    if (s_w >= b)
        return 0.0;
    if (s_w <= a)
        return g->first_moment_m3;
    if (g->shape == SW_SHAPE_RECTANGLE)
        return g->seal_width_m * 0.5 * (b - s_w) * (b + s_w);
    double r = 0.5 * g->diameter_m, c = a + r, j0, j1, j2;
    segment_integrals(r, s_w - c, &j0, &j1, &j2);
    return j1 + c * j0;
}

/* ---- evaluation --------------------------------------------------------- */

/* The model's buoyancy rule: the higher water, on a tie the denser. */
static sw_side buoyancy_side(const sw_gate *g, double hw, double tw)
{
    if (hw > tw)
        return SW_UPSTREAM;
    if (tw > hw)
        return SW_DOWNSTREAM;
    return g->rho_kgm3[SW_DOWNSTREAM] > g->rho_kgm3[SW_UPSTREAM]
               ? SW_DOWNSTREAM
               : SW_UPSTREAM;
}

double sw_gate_fs_denominator(const sw_gate *g, const sw_gate_result *r)
{
    return g->fs_basis == SW_FS_OVERTURNING ? r->hw_moment_Nm
                                            : r->net_water_moment_Nm;
}

/* The factor of safety on the gate's basis (model document, "Factor of
 * safety: two bases").  net: R / D where the net water moment D opens
 * (D > 0); where D <= 0 the waters together hold the leaf shut, and fs is
 * infinite with the sign of the net moment.  overturning: Mr / hw_moment,
 * infinite with the sign of Mr where there is no headwater load. */
static double factor_of_safety(const sw_gate *g, const sw_gate_result *r)
{
    double num = g->fs_basis == SW_FS_OVERTURNING ? r->resisting_moment_Nm
                                                  : r->restraint_Nm;
    double den = sw_gate_fs_denominator(g, r);
    double sign = g->fs_basis == SW_FS_OVERTURNING ? r->resisting_moment_Nm
                                                   : r->net_moment_Nm;
    if (den > 0.0)
        return num / den;
    if (sign > 0.0)
        return INFINITY;
    if (sign < 0.0)
        return -INFINITY;
    return 0.0;
}

_Static_assert(SW_LOAD_MEMO == 1 << 9, "side_load() takes 9 bits");

void sw_load_memo_clear(sw_load_memo *memo)
{
    memset(memo->key, 0xff, sizeof memo->key);
}

/* The load of the water on `side` at `level`, from the memo when it holds
 * that level (NULL: no memo). */
static void side_load(const sw_gate *g, sw_load_memo *memo, sw_side side,
                      double level, double *force, double *moment)
{
    unsigned long long bits;
    size_t k;

    if (memo == NULL) {
        sw_gate_water_load(g, level, g->rho_kgm3[side], force, moment);
        return;
    }
    memcpy(&bits, &level, sizeof bits);
    k = (size_t)((bits * 0x9e3779b97f4a7c15ull) >> 55); /* 9 bits */
    if (memo->key[side][k] != bits) {
        sw_gate_water_load(g, level, g->rho_kgm3[side],
                           &memo->force_N[side][k], &memo->moment_Nm[side][k]);
        memo->key[side][k] = bits;
    }
    *force = memo->force_N[side][k];
    *moment = memo->moment_Nm[side][k];
}

/* Evaluate with the buoyancy taken in the water `side`; the critical-level
 * searches fix the side to keep each stretch they search continuous. */
static void evaluate_side(const sw_gate *g, sw_load_memo *memo, double hw,
                          double tw, sw_side side, sw_gate_result *out)
{
    double len = g->leaf_length_m;
    double level = side == SW_UPSTREAM ? hw : tw;
    double rho_b = g->rho_kgm3[side];
    double s0 = surface_s(g, level);

    out->headwater_m = hw;
    out->tailwater_m = tw;
    side_load(g, memo, SW_UPSTREAM, hw, &out->hw_force_N, &out->hw_moment_Nm);
    side_load(g, memo, SW_DOWNSTREAM, tw, &out->tw_force_N,
              &out->tw_moment_Nm);
    out->hw_cp_m = out->hw_force_N > 0.0 ? out->hw_moment_Nm / out->hw_force_N
                                         : 0.0;
    out->tw_cp_m = out->tw_force_N > 0.0 ? out->tw_moment_Nm / out->tw_force_N
                                         : 0.0;
    out->weight_moment_Nm = g->weight_moment_Nm;

    /* model: the volume is spread evenly over [0, leaf_length]; the part
     * below s0 is submerged and acts at its midpoint. */
    s0 = s0 < 0.0 ? 0.0 : (s0 > len ? len : s0);
    out->buoyancy_side = side;
    out->buoyancy_force_N = rho_b * g->g_ms2 * g->volume_m3 * (len - s0) / len;
    out->buoyancy_at_m = 0.5 * (s0 + len);
    out->buoyancy_arm_m = out->buoyancy_at_m * g->cos_a;
    out->buoyancy_moment_Nm = out->buoyancy_force_N * out->buoyancy_arm_m;
    out->extra_moment_Nm = g->extra_moment_Nm;

    out->restraint_Nm = out->weight_moment_Nm - out->buoyancy_moment_Nm +
                        out->extra_moment_Nm;
    out->net_water_moment_Nm = out->hw_moment_Nm - out->tw_moment_Nm;
    out->resisting_moment_Nm = out->tw_moment_Nm + out->restraint_Nm;
    out->net_moment_Nm = out->resisting_moment_Nm - out->hw_moment_Nm;
    out->fs = factor_of_safety(g, out);
    out->sill_reaction_N = out->net_moment_Nm / g->s_sill_m;

    /* one rule for the state, shared with the stepping engine: open where
     * net <= 0; low where the basis's required-margin test fails or the
     * sill reaction is below its minimum, written as margins so that no
     * division decides */
    double m[SW_N_MARGINS];
    sw_gate_margins(g, out, m);
    out->state = sw_gate_state_of(m);
}

void sw_gate_evaluate(const sw_gate *g, double hw_m, double tw_m,
                      sw_gate_result *out)
{
    evaluate_side(g, NULL, hw_m, tw_m, buoyancy_side(g, hw_m, tw_m), out);
}

void sw_gate_evaluate_memo(const sw_gate *g, sw_load_memo *memo, double hw_m,
                           double tw_m, sw_gate_result *out)
{
    evaluate_side(g, memo, hw_m, tw_m, buoyancy_side(g, hw_m, tw_m), out);
}

/* ---- critical levels ---------------------------------------------------- */

/* The margin of a limit, continuous in either level while the buoyancy side
 * is fixed.  open:  net moment (shut while > 0).
 * alarm: min(m[1], net - min_sill_reaction * s_sill) of sw_gate_margins(),
 *        which is >= 0 exactly where the basis's required-margin test and
 *        the sill reaction's minimum hold, i.e. where the state is `ok`. */
typedef struct margin_ctx {
    const sw_gate *gate;
    sw_limit limit;
    sw_side side;
    int vary_tailwater; /* 1: x is the tailwater; 0: x is the headwater */
    double fixed;       /* the other level */
} margin_ctx;

void sw_gate_margins(const sw_gate *g, const sw_gate_result *r,
                     double m[SW_N_MARGINS])
{
    m[0] = r->net_moment_Nm;
    /* the required-margin test of the basis, R >= required_fs * D or
     * Mr >= required_fs * hw_moment, valid for either sign of D */
    if (g->fs_basis == SW_FS_OVERTURNING)
        m[1] = r->resisting_moment_Nm - g->required_fs * r->hw_moment_Nm;
    else
        m[1] = r->restraint_Nm - g->required_fs * r->net_water_moment_Nm;
    m[2] = r->net_moment_Nm - g->min_sill_reaction_N * g->s_sill_m;
}

sw_state sw_gate_state_of(const double m[SW_N_MARGINS])
{
    if (m[0] <= 0.0)
        return SW_STATE_OPEN;
    if (m[1] < 0.0 || m[2] < 0.0)
        return SW_STATE_LOW;
    return SW_STATE_OK;
}

void sw_gate_get_bounds(const sw_gate *g, sw_gate_bounds *b)
{
    /* A water's moment M(level) has dM/dz = rho g (first moment of the
     * wetted opening), at most rho g * first_moment_m3, and
     * d2M/dz2 = rho g s_w w(s_w) / sin a, at most rho g s_sill w_max /
     * sin a.  The buoyancy moment rho g V cos a (L^2 - s0^2) / (2 L), with
     * s0 = (hinge - z) / sin a, has slope rho g V |cos a| s0 / (L sin a)
     * <= rho g V |cot a|, curvature rho g V |cos a| / (L sin^2 a), and
     * its slope falls to 0 where z passes the leaf's far end (s0 = L).
     * m[1] weighs the headwater moment by required_fs; on the net basis
 * it weighs the tailwater moment by required_fs too
 * (R - f D = Mr - f hw_moment + (f - 1) tw_moment). */
    double rho_max = fmax(g->rho_kgm3[SW_UPSTREAM], g->rho_kgm3[SW_DOWNSTREAM]);
    double w_max = g->shape == SW_SHAPE_RECTANGLE ? g->seal_width_m
                                                  : g->diameter_m;
    double fs = fmax(1.0, g->required_fs);
    double fs_tw = g->fs_basis == SW_FS_NET ? fs : 1.0;
    double cot = fabs(g->cos_a / g->sin_a);
    double buoy_slope = rho_max * g->g_ms2 * g->volume_m3 * cot;
    double buoy_curv = rho_max * g->g_ms2 * g->volume_m3 * fabs(g->cos_a) /
                       (g->leaf_length_m * g->sin_a * g->sin_a);
    double m_curv = g->g_ms2 * g->s_sill_m * w_max / g->sin_a;

    b->slope_hw = fs * g->rho_kgm3[SW_UPSTREAM] * g->g_ms2 * g->first_moment_m3 +
                  buoy_slope;
    b->slope_tw = fs_tw * g->rho_kgm3[SW_DOWNSTREAM] * g->g_ms2 *
                      g->first_moment_m3 +
                  buoy_slope;
    b->curv_hw = fs * g->rho_kgm3[SW_UPSTREAM] * m_curv + buoy_curv;
    b->curv_tw = fs_tw * g->rho_kgm3[SW_DOWNSTREAM] * m_curv + buoy_curv;
    b->curv_tw_net = g->rho_kgm3[SW_DOWNSTREAM] * m_curv + buoy_curv;
    b->kink = buoy_slope;
    b->kink_level_m = g->leaf_bottom_level_m;
}

static double margin(double x, void *p)
{
    const margin_ctx *c = p;
    const sw_gate *g = c->gate;
    sw_gate_result r;
    double m[SW_N_MARGINS];

    if (c->vary_tailwater)
        evaluate_side(g, NULL, c->fixed, x, c->side, &r);
    else
        evaluate_side(g, NULL, x, c->fixed, c->side, &r);
    sw_gate_margins(g, &r, m);
    /* alarm: >= 0 exactly where the state is ok */
    return c->limit == SW_LIMIT_OPEN ? m[0] : fmin(m[1], m[2]);
}

/* Does the limit fail at margin value m? (open: net <= 0; alarm: < 0) */
static int fails(const margin_ctx *c, double m)
{
    return c->limit == SW_LIMIT_OPEN ? m <= 0.0 : m < 0.0;
}

/* Refine a crossing between lo and hi (f(lo), f(hi) of opposite sign, one
 * of them failing) with GSL's Brent solver to SW_CRIT_TOL_M, and return the
 * end of the final bracket on the side where the limit holds, so that the
 * reported level errs toward safety. */
static int refine(margin_ctx *c, double lo, double hi, double f_lo,
                  double *root, sw_error *err)
{
    gsl_function fn = {margin, c};
    gsl_root_fsolver *s;
    int status, iter = 0;
    int safe_high = fails(c, f_lo); /* the limit holds at the high end */

    if (f_lo == 0.0 || f_lo * margin(hi, c) > 0.0) {
        /* exactly on the boundary, or no sign change (a jump at a switch
         * of buoyancy side): the boundary point is the crossing. */
        *root = f_lo == 0.0 ? lo : (safe_high ? hi : lo);
        return SW_OK;
    }
    s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
    if (s == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                            "out of memory for the root finder");
    status = gsl_root_fsolver_set(s, &fn, lo, hi);
    while (status == GSL_SUCCESS && iter++ < 200) {
        status = gsl_root_fsolver_iterate(s);
        if (status != GSL_SUCCESS)
            break;
        lo = gsl_root_fsolver_x_lower(s);
        hi = gsl_root_fsolver_x_upper(s);
        status = gsl_root_test_interval(lo, hi, SW_CRIT_TOL_M, 0.0);
        if (status == GSL_SUCCESS)
            break;
        if (status == GSL_CONTINUE)
            status = GSL_SUCCESS;
    }
    gsl_root_fsolver_free(s);
    if (status != GSL_SUCCESS || iter > 200)
        return sw_error_set(err, SW_ENUMERIC, NULL, 0, 0,
                            "critical %s of gate '%s' at %s %.4f m: Brent "
                            "solver failed between %.10g and %.10g m (%s)",
                            c->vary_tailwater ? "tailwater" : "headwater",
                            c->gate->name,
                            c->vary_tailwater ? "headwater" : "tailwater",
                            c->fixed, lo, hi,
                            status != GSL_SUCCESS ? gsl_strerror(status)
                                                  : "no convergence");
    /* keep the bracket end where the limit holds */
    *root = fails(c, margin(lo, c)) ? hi : lo;
    return SW_OK;
}

/* Upper bound of |d margin / d level| over the stretch from `level` toward
 * the dry side (downward for the tailwater, any level up to `level` for
 * the headwater).  A water's moment grows at rho g (wetted first moment),
 * which only grows with the level; the buoyancy moment changes at most at
 * rho g V |cot alpha|, and only in the water that holds the buoyancy. */
static double slope_bound(const margin_ctx *c, double level)
{
    const sw_gate *g = c->gate;
    sw_side own = c->vary_tailwater ? SW_DOWNSTREAM : SW_UPSTREAM;
    double rho = g->rho_kgm3[own];
    double k = rho * g->g_ms2 * wetted_first_moment(g, level);
    /* the alarm margin weighs the headwater's moment by required_fs, and
     * on the net basis the tailwater's too (see sw_gate_get_bounds) */
    if (c->limit == SW_LIMIT_ALARM && g->required_fs > 1.0 &&
        (!c->vary_tailwater || g->fs_basis == SW_FS_NET))
        k *= g->required_fs;
    if (c->side == own && g->volume_m3 > 0.0)
        k += rho * g->g_ms2 * g->volume_m3 * fabs(g->cos_a / g->sin_a);
    return k;
}

/* Scan [lo, hi] from the end `from_high ? hi : lo` toward the other.  Each
 * step is margin / (bound on its slope), which provably cannot pass a level
 * where the limit fails, but never less than SW_CRIT_SCAN_M: so no stretch
 * of failure wider than that is skipped.  At the first failing point the
 * crossing is refined.  *found is 0 if the whole stretch holds. */
static int scan(margin_ctx *c, double lo, double hi, int from_high,
                int *found, double *root, sw_error *err)
{
    double t = from_high ? hi : lo;
    double end = from_high ? lo : hi;
    double f = margin(t, c);

    *found = 0;
    if (fails(c, f)) {
        *found = 1;
        *root = t;
        return SW_OK;
    }
    for (;;) {
        double room = fabs(end - t), step;
        if (room <= 0.0)
            return SW_OK;
        if (from_high) {
            double k = slope_bound(c, t);
            step = k > 0.0 ? f / k : room;
        } else {
            double k0 = slope_bound(c, t);
            double s0 = k0 > 0.0 ? f / k0 : room;
            double k1 = slope_bound(c, t + (s0 < room ? s0 : room));
            step = k1 > 0.0 && f / k1 < s0 ? f / k1 : s0;
        }
        if (step < SW_CRIT_SCAN_M)
            step = SW_CRIT_SCAN_M;
        if (step > room)
            step = room;
        double t_next = from_high ? t - step : t + step;
        if (step == room)
            t_next = end;
        double f_next = margin(t_next, c);
        if (fails(c, f_next)) {
            *found = 1;
            if (from_high)
                return refine(c, t_next, t, f_next, root, err);
            return refine(c, t, t_next, f, root, err);
        }
        t = t_next;
        f = f_next;
    }
}

/* Search the ray above `from`, where the margin is monotone (rising with
 * the tailwater, falling with the headwater): double the distance until the
 * limit changes, then refine the crossing. */
static int ray(margin_ctx *c, double from, double *root, sw_error *err)
{
    double f0 = margin(from, c), d = 1.0;
    int fail0 = fails(c, f0);

    for (int i = 0; i < 64; i++, d *= 2.0) {
        double f1 = margin(from + d, c);
        if (fails(c, f1) != fail0)
            return refine(c, from, from + d, f0, root, err);
        from += d;
        f0 = f1;
    }
    return sw_error_set(err, SW_ENUMERIC, NULL, 0, 0,
                        "critical %s of gate '%s' at %s %.4f m: no "
                        "crossing within 1e19 m of the hinge",
                        c->vary_tailwater ? "tailwater" : "headwater",
                        c->gate->name,
                        c->vary_tailwater ? "headwater" : "tailwater",
                        c->fixed);
}

/* Below this level a water touches neither the opening nor the leaf, so it
 * changes no margin. */
static double lowest_wetted_level(const sw_gate *g)
{
    return fmin(g->sill_level_m, g->leaf_bottom_level_m);
}

int sw_gate_critical_tailwater(const sw_gate *g, double hw_m, sw_limit limit,
                               sw_crit *out, sw_error *err)
{
    margin_ctx c = {g, limit, SW_DOWNSTREAM, 1, hw_m};
    double top = g->hinge_level_m > hw_m ? g->hinge_level_m : hw_m;
    double bottom = lowest_wetted_level(g);
    int rc, found;
    double root;

    /* Above `top` the margin is linear and rises with the tailwater (model:
     * "above max(hinge_level, hw) the net moment is linear in tw"); if it
     * fails just above `top`, the highest crossing is up there. */
    if (fails(&c, margin(top, &c))) {
        if ((rc = ray(&c, top, &root, err)) != SW_OK)
            return rc;
        out->kind = SW_CRIT_LEVEL;
        out->level_m = root;
        return SW_OK;
    }
    /* Then down from `top` to the headwater with the buoyancy downstream,
     * and on below it with the buoyancy upstream. */
    if (hw_m < top) {
        double mid = hw_m > bottom ? hw_m : bottom;
        if ((rc = scan(&c, mid, top, 1, &found, &root, err)) != SW_OK)
            return rc;
        if (found)
            goto level;
    }
    if (hw_m > bottom) {
        c.side = SW_UPSTREAM;
        if ((rc = scan(&c, bottom, hw_m < top ? hw_m : top, 1, &found, &root,
                       err)) != SW_OK)
            return rc;
        if (found)
            goto level;
    }
    /* Below `bottom` nothing changes with the tailwater. */
    out->kind = SW_CRIT_NOT_NEEDED;
    out->level_m = NAN;
    return SW_OK;
level:
    out->kind = SW_CRIT_LEVEL;
    out->level_m = root;
    return SW_OK;
}

int sw_gate_critical_headwater(const sw_gate *g, double tw_m, sw_limit limit,
                               sw_crit *out, sw_error *err)
{
    margin_ctx c = {g, limit, SW_DOWNSTREAM, 0, tw_m};
    double top = g->hinge_level_m > tw_m ? g->hinge_level_m : tw_m;
    double bottom = lowest_wetted_level(g);
    int rc, found;
    double root;

    /* Below `bottom` the headwater changes nothing: failing there, no
     * headwater keeps the limit. */
    if (tw_m > bottom) {
        double mid = tw_m < top ? tw_m : top;
        if ((rc = scan(&c, bottom, mid, 0, &found, &root, err)) != SW_OK)
            return rc;
        if (found && root <= bottom) {
            out->kind = SW_CRIT_UNATTAINABLE;
            out->level_m = NAN;
            return SW_OK;
        }
        if (found)
            goto level;
    }
    c.side = SW_UPSTREAM;
    {
        double from = tw_m > bottom ? (tw_m < top ? tw_m : top) : bottom;
        if ((rc = scan(&c, from, top, 0, &found, &root, err)) != SW_OK)
            return rc;
        if (found && root <= bottom) {
            out->kind = SW_CRIT_UNATTAINABLE;
            out->level_m = NAN;
            return SW_OK;
        }
        if (found)
            goto level;
    }
    /* Above `top` the margin falls steadily with the headwater. */
    if ((rc = ray(&c, top, &root, err)) != SW_OK)
        return rc;
level:
    out->kind = SW_CRIT_LEVEL;
    out->level_m = root;
    return SW_OK;
}
