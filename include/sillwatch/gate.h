/* sillwatch: the hydrostatic model of one hinged flap gate.
 *
 * The model is the one in the project's model document (README, "The
 * model"): a rigid plane leaf hinged at `hinge_level_m`, inclined at
 * `inclination_deg` from the horizontal, with a sealed opening on which the
 * headwater (upstream) opens and the tailwater (downstream) holds shut.
 * Distances along the leaf, `s`, are measured from the hinge.  Moments are
 * about the hinge, in N*m; a resisting moment holds the leaf on its sill.
 *
 * Everything here is pure computation: no I/O, no allocation.
 */
#ifndef SILLWATCH_GATE_H
#define SILLWATCH_GATE_H

#include "sillwatch/error.h"

typedef enum sw_shape { SW_SHAPE_RECTANGLE = 0, SW_SHAPE_CIRCLE } sw_shape;

/* Which water a quantity belongs to. */
typedef enum sw_side { SW_UPSTREAM = 0, SW_DOWNSTREAM = 1 } sw_side;

/* The basis of the factor of safety (model document, "Factor of safety:
 * two bases"):
 *   SW_FS_NET          fs = R / D, the leaf's own restraint
 *                      R = weight - buoyancy + extra moment against the
 *                      net water moment D = hw_moment - tw_moment; the
 *                      default;
 *   SW_FS_OVERTURNING  fs = Mr / hw_moment, the classical overturning
 *                      ratio (tailwater counted as a resisting load).
 * The two agree wherever the tailwater does not reach the opening. */
typedef enum sw_fs_basis { SW_FS_NET = 0, SW_FS_OVERTURNING } sw_fs_basis;

/* Margin state, in order of increasing trouble. */
typedef enum sw_state { SW_STATE_OK = 0, SW_STATE_LOW, SW_STATE_OPEN } sw_state;

/* The parameters of one gate, in SI units, as read from the site file and
 * checked by sw_gate_validate().  Densities and gravity are already
 * resolved (see water.h and gravity.h). */
typedef struct sw_gate {
    char name[64];
    sw_shape shape;
    double hinge_level_m;       /* elevation of the hinge axis */
    double inclination_deg;     /* from horizontal, 0 < a < 180 */
    double seal_top_m;          /* s of the top of the sealed opening */
    double seal_height_m;       /* rectangle: along-leaf height */
    double seal_width_m;        /* rectangle: width */
    double diameter_m;          /* circle: diameter */
    double leaf_length_m;       /* full leaf length (buoyancy) */
    double mass_kg;
    double cg_along_m;          /* centre of gravity along the leaf */
    double cg_offset_m;         /* normal to the leaf, + toward downstream */
    double volume_m3;           /* displaced volume of the leaf */
    double extra_moment_Nm;     /* + holds shut */
    double required_fs;         /* factor of safety required, >= 1 */
    sw_fs_basis fs_basis;       /* what fs and required_fs measure */
    double min_sill_reaction_N; /* least sill reaction accepted, >= 0 */
    double rho_kgm3[2];         /* water density, by sw_side */
    double g_ms2;               /* acceleration of gravity */

    /* Derived by sw_gate_prepare(); do not set by hand. */
    double sin_a, cos_a;
    double s_sill_m;            /* s of the bottom seal (the sill) */
    double sill_level_m;        /* elevation of the sill line */
    double seal_top_level_m;    /* elevation of the top of the opening */
    double leaf_bottom_level_m; /* elevation of the leaf's far end */
    double area_m2;             /* sealed area */
    double first_moment_m3;     /* integral of s*w over the opening */
    double weight_moment_Nm;
} sw_gate;

/* Loads and verdict for one pair of levels. */
typedef struct sw_gate_result {
    double headwater_m, tailwater_m;
    double hw_force_N, hw_moment_Nm;   /* opens; both >= 0 */
    double tw_force_N, tw_moment_Nm;   /* holds shut; both >= 0 */
    double hw_cp_m, tw_cp_m;           /* centre of pressure, s from the
                                          hinge; 0 where the force is 0 */
    double weight_moment_Nm;           /* + holds shut */
    double buoyancy_force_N;           /* upward, >= 0 */
    double buoyancy_at_m;              /* s of the centre of buoyancy */
    double buoyancy_arm_m;             /* horizontal, + downstream */
    double buoyancy_moment_Nm;         /* + opens (model sign) */
    sw_side buoyancy_side;             /* the water taken as displaced */
    double extra_moment_Nm;
    double resisting_moment_Nm;        /* Mr */
    double net_moment_Nm;              /* Mr - hw_moment = R - D */
    double restraint_Nm;               /* R = weight - buoyancy + extra */
    double net_water_moment_Nm;        /* D = hw_moment - tw_moment */
    double fs;                         /* on the gate's fs_basis: R / D or
                                          Mr / hw_moment; +-inf, see below */
    double sill_reaction_N;            /* net / s_sill */
    sw_state state;
} sw_gate_result;

/* The numeric keys of a gate that describe the leaf (the site file's
 * names), in this order wherever a gate's parameters are listed: those a
 * site file may give a standard uncertainty (`mass_sd`, see site.h).  The
 * margins asked of a gate (required_fs, min_sill_reaction) are not among
 * them: they are choices, not measurements. */
typedef enum sw_gate_param {
    SW_GP_HINGE_LEVEL = 0, SW_GP_INCLINATION, SW_GP_SEAL_TOP,
    SW_GP_SEAL_HEIGHT, SW_GP_SEAL_WIDTH, SW_GP_DIAMETER, SW_GP_LEAF_LENGTH,
    SW_GP_MASS, SW_GP_CG_ALONG, SW_GP_CG_OFFSET, SW_GP_VOLUME,
    SW_GP_EXTRA_MOMENT, SW_GATE_N_PARAMS
} sw_gate_param;

/* The site file's key of parameter p ("hinge_level", ...) and its unit
 * ("m", "degrees", "kg", "m^3", "N*m"). */
const char *sw_gate_param_key(sw_gate_param p);
const char *sw_gate_param_unit(sw_gate_param p);

/* The field of `gate` that holds parameter p. */
double *sw_gate_param_ref(sw_gate *gate, sw_gate_param p);

/* The range sw_gate_validate() accepts for parameter p on its own, before
 * the rules between parameters (the seal within the leaf, the centre of
 * gravity on it, the moment bounds): [lo, hi], with an open end where
 * *lo_open or *hi_open is 1 (an inclination in (0, 180), a mass > 0); an
 * end may be infinite (extra_moment). */
void sw_gate_param_range(sw_gate_param p, double *lo, double *hi,
                         int *lo_open, int *hi_open);

/* Check the parameters of `gate` for physical sense (sizes and mass > 0,
 * 0 < inclination < 180, the seal within the leaf, the centre of gravity on
 * the leaf, required_fs >= 1, densities and gravity set ...).  Returns SW_OK,
 * or SW_ESITE with a message naming the gate, the key as spelled in the
 * site file, the value and the reason; *bad_key (if bad_key is not NULL) is
 * then set to that key (a string literal), so that the caller can add the
 * file position.  The position fields of `err` are left empty. */
int sw_gate_validate(const sw_gate *gate, const char **bad_key, sw_error *err);

/* Compute the derived fields of `gate` (sill elevation, sealed area, weight
 * moment, ...).  Call once after the parameters are set and validated, and
 * again after any of them changes. */
void sw_gate_prepare(sw_gate *gate);

/* Evaluate the gate at headwater `hw_m` and tailwater `tw_m` (elevations,
 * m).  Levels may lie anywhere, below the sill or above the hinge; they must
 * be finite.  Closed forms throughout: no allocation, no iteration.
 * `fs` is on the gate's `fs_basis`:
 *   SW_FS_NET:         R / D where D > 0; where D <= 0, +inf if the net
 *                      moment is > 0, -inf if < 0, 0 if = 0;
 *   SW_FS_OVERTURNING: Mr / hw_moment; where hw_moment is 0, +inf if
 *                      Mr > 0, -inf if Mr < 0 and 0 if Mr = 0. */
void sw_gate_evaluate(const sw_gate *gate, double hw_m, double tw_m,
                      sw_gate_result *out);

/* Water loads remembered by exact level, per side, for one gate: a
 * record of gauge readings visits a few thousand distinct levels, and a
 * load costs an integration (a circle's: roots and an atan2).  A pure
 * function remembered, so results are bit for bit sw_gate_evaluate()'s.
 * Direct-mapped on the level's bits; 192 KiB. */
#define SW_LOAD_MEMO 512
typedef struct sw_load_memo {
    unsigned long long key[2][SW_LOAD_MEMO]; /* level bits; ~0: empty */
    double force_N[2][SW_LOAD_MEMO];
    double moment_Nm[2][SW_LOAD_MEMO];
} sw_load_memo;

/* Empty the memo (before its first use with a gate, and whenever the
 * gate or its waters change). */
void sw_load_memo_clear(sw_load_memo *memo);

/* sw_gate_evaluate() with the water loads taken from, or put in, `memo`
 * (of this gate only). */
void sw_gate_evaluate_memo(const sw_gate *gate, sw_load_memo *memo,
                           double hw_m, double tw_m, sw_gate_result *out);

/* The hydrostatic force (N) and its moment about the hinge (N*m) of water
 * at `level_m` with density `rho_kgm3` on the sealed opening.  Both are
 * >= 0.  Exposed for tests and reports. */
void sw_gate_water_load(const sw_gate *gate, double level_m, double rho_kgm3,
                        double *force_N, double *moment_Nm);

/* The margins behind the state of a result, N*m:
 *   m[0] = net moment                                  (open where <= 0)
 *   m[1] = the required-margin test of the gate's basis (low where < 0):
 *          SW_FS_NET          R - required_fs * D
 *          SW_FS_OVERTURNING  Mr - required_fs * hw_moment
 *   m[2] = net - min_sill_reaction * s_sill            (low where < 0)
 * The state is open where m[0] <= 0, else low where m[1] < 0 or m[2] < 0,
 * else ok.  This is the one place that decides `low`: every command goes
 * through it.  Each margin is a smooth function of each level (see
 * sw_gate_bounds). */
#define SW_N_MARGINS 3
void sw_gate_margins(const sw_gate *gate, const sw_gate_result *r,
                     double m[SW_N_MARGINS]);

/* The state that margins m imply (as sw_gate_evaluate() sets it). */
sw_state sw_gate_state_of(const double m[SW_N_MARGINS]);

/* Bounds on how the margins can vary with the levels, valid as long as
 * neither water passes the other (where the buoyancy changes water, a
 * margin may jump; see sw_gate_evaluate()):
 *   slope_*   |d m / d level| <= slope, N*m per m;
 *   curv_*    |d2 m / d level2| <= curv, N*m per m^2, except that
 *   the buoyancy moment's slope jumps by at most `kink` N*m per m where the
 *   water holding the buoyancy passes `kink_level_m` (the leaf's far end).
 * So along a straight change of the levels by (dh, dt), every margin
 * stays within (curv_hw dh^2 + curv_tw dt^2)/8 (+ kink |d|/4 where the
 * kink is passed) of the straight line between its end values. */
typedef struct sw_gate_bounds {
    double slope_hw, slope_tw;
    double curv_hw, curv_tw;
    double kink, kink_level_m;
    /* The tailwater's curvature bound of the net moment alone (m[0] and
     * m[2]); curv_tw bounds every margin, and on the net basis m[1] weighs
     * the tailwater's moment by required_fs, so curv_tw is larger there. */
    double curv_tw_net;
} sw_gate_bounds;
void sw_gate_get_bounds(const sw_gate *gate, sw_gate_bounds *b);

/* Which limit a critical level belongs to. */
typedef enum sw_limit {
    SW_LIMIT_OPEN = 0, /* the leaf stays shut: net moment > 0 */
    SW_LIMIT_ALARM     /* the gate is in the `ok` state */
} sw_limit;

/* What a critical-level search found. */
typedef enum sw_crit_kind {
    SW_CRIT_LEVEL = 0,      /* a level; see `level_m` */
    SW_CRIT_NOT_NEEDED,     /* tailwater: the limit holds at any tailwater */
    SW_CRIT_UNATTAINABLE    /* headwater: the limit fails even with the
                               headwater below the whole leaf */
} sw_crit_kind;

typedef struct sw_crit {
    sw_crit_kind kind;
    double level_m;         /* valid when kind == SW_CRIT_LEVEL */
} sw_crit;

/* Resolution of the critical-level searches, m: the scan cannot step over
 * an interval of failure wider than SW_CRIT_SCAN_M, and the crossing is
 * refined to SW_CRIT_TOL_M or better. */
#define SW_CRIT_SCAN_M 1e-3
#define SW_CRIT_TOL_M 1e-5

/* The critical tailwater for headwater `hw_m`: the lowest level above which
 * the limit holds for every higher tailwater (the highest crossing), or
 * SW_CRIT_NOT_NEEDED when it holds at any tailwater.  Returns SW_OK, or
 * SW_ENUMERIC if the root finder fails (message gives the GSL status). */
int sw_gate_critical_tailwater(const sw_gate *gate, double hw_m,
                               sw_limit limit, sw_crit *out, sw_error *err);

/* The critical headwater for tailwater `tw_m`: the highest level up to
 * which the limit holds for every lower headwater (the lowest crossing), or
 * SW_CRIT_UNATTAINABLE when it fails with the headwater below the whole
 * leaf.  Returns SW_OK or SW_ENUMERIC. */
int sw_gate_critical_headwater(const sw_gate *gate, double tw_m,
                               sw_limit limit, sw_crit *out, sw_error *err);

/* The denominator of fs on the gate's basis, N*m: D (SW_FS_NET) or
 * hw_moment (SW_FS_OVERTURNING).  Where it is > 0, fs = required_fs +
 * m[1] / denominator; the stepping engine uses that to bound fs. */
double sw_gate_fs_denominator(const sw_gate *gate, const sw_gate_result *r);

/* Names for output: "ok", "low", "open"; "rectangle", "circle";
 * "upstream", "downstream"; "net", "overturning". */
const char *sw_state_name(sw_state state);
const char *sw_shape_name(sw_shape shape);
const char *sw_side_name(sw_side side);
const char *sw_fs_basis_name(sw_fs_basis basis);

/* A phrase saying what fs measures on `basis`, for output beside every
 * factor of safety: "net water load" or "overturning (Mr / hw_moment)". */
const char *sw_fs_basis_phrase(sw_fs_basis basis);

#endif
