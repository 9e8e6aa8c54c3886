/* sillwatch: alarm-threshold tables for controllers (thresholds.h). */
#include "sillwatch/thresholds.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/cancel.h"
#include "sillwatch/uncert.h"

/* Which sw_limit each of a gate's two values belongs to. */
static const sw_limit limit_of[SW_THRESHOLDS_N_LIMITS] = {SW_LIMIT_ALARM,
                                                          SW_LIMIT_OPEN};

/* Units of SW_THRESHOLDS_RES_M per metre. */
#define UNITS_PER_M 10000.0

/* The evaluation budget of a simplification: fine levels times curves.
 * 1.6 million gives 200,000 levels for three gates (eight curves), which
 * costs about 2.4 million critical-level searches with the midpoints,
 * a second or two; a finer grid would not change a table meant for a
 * controller.  Fine values and midpoints then take 2 x 8 bytes a curve:
 * about 26 MB whatever the number of gates, twice that at most where
 * refinement is heavy. */
#define FINE_BUDGET 1600000
#define FINE_MAX_LEVELS 200000
/* With samples, each fine level costs a search per sample and curve: the
 * budget counts those (16 million: 2000 levels of three gates at 1000
 * samples, some seconds on two cores), and keeps at least a few levels. */
#define SAMPLED_BUDGET 16000000.0
#define SAMPLED_MIN_LEVELS 16
/* A simplification gives up when refinement has doubled the fine grid:
 * the curves are too rough for the tolerance (in practice refinement adds
 * a few levels at each change of kind and each steep start). */
#define REFINE_FACTOR 2

struct sw_thresholds {
    const sw_gate *const *gates;
    size_t n_gates;
    size_t n_curves;            /* 2 n_gates + 2: per gate, then governing */
    sw_thresholds_axis axis;
    sw_thresholds_range range;

    /* the current row */
    sw_thresholds_row row;
    sw_crit *row_crit;          /* 2 n_gates */
    double *row_vals;           /* n_curves */

    /* a simplified table (simplified != 0) */
    int simplified;
    size_t n_points;            /* fine levels, in level order */
    int64_t *point_u;           /* lattice index from FROM */
    double *point_vals;         /* n_curves each; NAN: not a level */
    size_t n_rows;
    size_t *rows;               /* indices into the fine levels */
    size_t n_steps;
    sw_thresholds_step *steps;

    /* with samples (sw_thresholds_set_samples) */
    const sw_gate *samples;     /* [n_samples][n_gates] */
    const double *dhw, *dtw;    /* [n_samples][n_gates] */
    size_t n_samples;
    double confidence;
    unsigned workers;
    double *sample_vals;        /* [2 n_gates][n_samples], scratch */
};

/* ---- ranges -------------------------------------------------------------- */

/* Read one plain decimal number from text[0..len) as an exact integer of
 * SW_THRESHOLDS_RES_M.  Decimals beyond the fourth must be zeros.  Returns
 * 0, or -1 (not a plain decimal number), -2 (finer than 0.1 mm), -3 (out of
 * range). */
static int parse_units(const char *text, size_t len, int64_t *units)
{
    size_t i = 0;
    int neg = 0, n_int = 0, n_frac = 0, big = 0, fine = 0;
    int64_t whole = 0, frac = 0;

    if (i < len && (text[i] == '+' || text[i] == '-'))
        neg = text[i++] == '-';
    for (; i < len && text[i] >= '0' && text[i] <= '9'; i++, n_int++) {
        if (whole > 10 * (int64_t)SW_THRESHOLDS_MAX_LEVEL_M)
            big = 1;
        else
            whole = whole * 10 + (text[i] - '0');
    }
    if (n_int == 0)
        return -1;
    if (i < len && text[i] == '.') {
        for (i++; i < len && text[i] >= '0' && text[i] <= '9'; i++, n_frac++) {
            if (n_frac < 4)
                frac = frac * 10 + (text[i] - '0');
            else if (text[i] != '0')
                fine = 1;
        }
        if (n_frac == 0)
            return -1;
    }
    if (i != len)
        return -1;
    if (fine)
        return -2;
    for (; n_frac < 4; n_frac++)
        frac *= 10;
    if (big || whole > (int64_t)SW_THRESHOLDS_MAX_LEVEL_M ||
        (whole == (int64_t)SW_THRESHOLDS_MAX_LEVEL_M && frac > 0))
        return -3;
    *units = (neg ? -1 : 1) * (whole * 10000 + frac);
    return SW_OK;
}

int sw_thresholds_parse_range(const char *text, sw_thresholds_range *range,
                              sw_error *err)
{
    static const char *const part[3] = {"FROM", "TO", "STEP"};
    const char *start = text;
    int64_t u[3];
    sw_thresholds_range r;

    for (int k = 0; k < 3; k++) {
        const char *end = strchr(start, ':');
        size_t len;
        int rc;
        if ((k < 2) != (end != NULL))
            return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                                "'%.60s' is not FROM:TO:STEP (three numbers "
                                "separated by ':')",
                                text);
        len = end != NULL ? (size_t)(end - start) : strlen(start);
        rc = parse_units(start, len, &u[k]);
        if (rc == -1)
            return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                                "%s '%.*s' is not a plain decimal number "
                                "(like 11.25: digits, a '.', no exponent)",
                                part[k], (int)(len > 40 ? 40 : len), start);
        if (rc == -2)
            return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                                "%s '%.*s' is finer than 0.1 mm (at most 4 "
                                "decimals: the table's levels are printed "
                                "to 0.1 mm)",
                                part[k], (int)(len > 40 ? 40 : len), start);
        if (rc == -3)
            return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                                "%s '%.*s' is out of range (at most %.0f m "
                                "in magnitude)",
                                part[k], (int)(len > 40 ? 40 : len), start,
                                SW_THRESHOLDS_MAX_LEVEL_M);
        start = end != NULL ? end + 1 : start;
    }
    if (u[2] <= 0)
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "STEP must be positive, not %.4f m",
                            (double)u[2] / UNITS_PER_M);
    if (u[1] < u[0])
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "TO (%.4f m) is below FROM (%.4f m)",
                            (double)u[1] / UNITS_PER_M,
                            (double)u[0] / UNITS_PER_M);
    /* exact in integers: TO is a level when TO - FROM is a multiple of
     * STEP, with no rounding slack needed */
    if ((u[1] - u[0]) / u[2] >= SW_THRESHOLDS_MAX_LEVELS)
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "%lld levels are more than the %d allowed; use a "
                            "larger STEP or a shorter range",
                            (long long)((u[1] - u[0]) / u[2] + 1),
                            SW_THRESHOLDS_MAX_LEVELS);
    r.from_u = u[0];
    r.to_u = u[1];
    r.step_u = u[2];
    /* an integer below 2^53 divided by 10^4: the nearest double to the
     * decimal, as strtod would give */
    r.from_m = (double)u[0] / UNITS_PER_M;
    r.to_m = (double)u[1] / UNITS_PER_M;
    r.step_m = (double)u[2] / UNITS_PER_M;
    r.n_levels = (size_t)((u[1] - u[0]) / u[2]) + 1;
    *range = r;
    return SW_OK;
}

double sw_thresholds_level(const sw_thresholds_range *range, size_t i)
{
    return range->from_m + (double)i * range->step_m;
}

double sw_thresholds_round(sw_thresholds_axis axis, double level_m)
{
    double u = level_m * UNITS_PER_M;
    /* + 0.0 turns a -0 into 0, which prints without a sign */
    return (axis == SW_THRESHOLDS_BY_HEADWATER ? ceil(u) : floor(u)) /
               UNITS_PER_M +
           0.0;
}

/* ---- evaluation ---------------------------------------------------------- */

/* The governing value of limit k over the gates' values v (NAN: not a
 * level), and the gate that sets it.  By headwater the highest level
 * governs and "not needed" only where no gate needs a level; by tailwater
 * "none" governs wherever a gate has it, else the lowest level.  Ties go to
 * the first gate. */
static double govern(const sw_thresholds *t, const double *v, int k,
                     size_t *gate)
{
    double best = NAN;
    size_t best_g = SW_THRESHOLDS_NO_GATE;

    for (size_t g = 0; g < t->n_gates; g++) {
        double x = v[2 * g + (size_t)k];
        if (t->axis == SW_THRESHOLDS_BY_HEADWATER) {
            if (!isnan(x) && (best_g == SW_THRESHOLDS_NO_GATE || x > best)) {
                best = x;
                best_g = g;
            }
        } else if (isnan(x)) {
            best = NAN;
            best_g = g;
            break;
        } else if (best_g == SW_THRESHOLDS_NO_GATE || x < best) {
            best = x;
            best_g = g;
        }
    }
    *gate = best_g;
    return best;
}

/* Every curve at level x: v[2 g + k] for gate g and limit k, then the
 * governing values v[2 n_gates + k].  NAN where the value is not a level
 * ("not needed" by headwater, "none" by tailwater: one kind per axis). */
/* One level's searches in the samples [begin, end) (sample_curves). */
typedef struct sample_level {
    const sw_thresholds *t;
    double x;
} sample_level;

static int sample_chunk(size_t begin, size_t end, unsigned worker, void *ctx,
                        sw_error *err)
{
    const sample_level *sl = ctx;
    const sw_thresholds *t = sl->t;
    size_t ng = t->n_gates, ns = t->n_samples;
    int by_hw = t->axis == SW_THRESHOLDS_BY_HEADWATER;
    (void)worker;

    for (size_t s = begin; s < end; s++)
        for (size_t g = 0; g < ng; g++) {
            const sw_gate *gate = &t->samples[s * ng + g];
            double dhw = t->dhw[s * ng + g], dtw = t->dtw[s * ng + g];
            for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++) {
                sw_crit c;
                /* the row's level as its gauge shows it, made true by the
                 * sample's datum; the value given back as the other
                 * gauge would show it */
                int rc = by_hw ? sw_gate_critical_tailwater(
                                     gate, sl->x + dhw, limit_of[k], &c, err)
                               : sw_gate_critical_headwater(
                                     gate, sl->x + dtw, limit_of[k], &c, err);
                if (rc != SW_OK)
                    return rc;
                t->sample_vals[(2 * g + (size_t)k) * ns + s] =
                    c.kind != SW_CRIT_LEVEL ? -INFINITY
                    : by_hw                 ? c.level_m - dtw
                                            : c.level_m - dhw;
            }
        }
    return SW_OK;
}

/* Each gate's curves at level x over the samples: the upper confidence
 * quantile of the critical tailwaters (by headwater), the lower one of the
 * critical headwaters (by tailwater); NAN where not a level. */
static int sample_curves(const sw_thresholds *t, double x, double *v,
                         sw_error *err)
{
    sample_level sl = {t, x};
    int by_hw = t->axis == SW_THRESHOLDS_BY_HEADWATER;
    int rc;

    if ((rc = sw_cancel_check(err)) != SW_OK ||
        (rc = sw_uncert_parallel(t->n_samples, t->workers, sample_chunk, &sl,
                                 err)) != SW_OK)
        return rc;
    for (size_t c = 0; c < 2 * t->n_gates; c++) {
        double q = sw_uncert_crit_quantile(
            t->sample_vals + c * t->n_samples, t->n_samples,
            by_hw ? t->confidence : 1.0 - t->confidence, by_hw);
        v[c] = isinf(q) ? NAN : q;
    }
    return SW_OK;
}

static int eval_curves(const sw_thresholds *t, double x, double *v,
                       sw_error *err)
{
    size_t g0 = 2 * t->n_gates, gate;
    int rc;

    if (t->samples != NULL) {
        if ((rc = sample_curves(t, x, v, err)) != SW_OK)
            return rc;
        for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++)
            v[g0 + (size_t)k] = govern(t, v, k, &gate);
        return SW_OK;
    }

    for (size_t g = 0; g < t->n_gates; g++)
        for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++) {
            sw_crit c;
            if (t->axis == SW_THRESHOLDS_BY_HEADWATER)
                rc = sw_gate_critical_tailwater(t->gates[g], x, limit_of[k],
                                                &c, err);
            else
                rc = sw_gate_critical_headwater(t->gates[g], x, limit_of[k],
                                                &c, err);
            if (rc != SW_OK)
                return rc;
            v[2 * g + (size_t)k] = c.kind == SW_CRIT_LEVEL ? c.level_m : NAN;
        }
    for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++)
        v[g0 + (size_t)k] = govern(t, v, k, &gate);
    return SW_OK;
}

static sw_crit to_crit(const sw_thresholds *t, double v)
{
    sw_crit c;
    if (isnan(v)) {
        c.kind = t->axis == SW_THRESHOLDS_BY_HEADWATER ? SW_CRIT_NOT_NEEDED
                                                       : SW_CRIT_UNATTAINABLE;
        c.level_m = NAN;
    } else {
        c.kind = SW_CRIT_LEVEL;
        c.level_m = sw_thresholds_round(t->axis, v);
    }
    return c;
}

/* Fill the current row from the exact values v at level x. */
static void fill_row(sw_thresholds *t, double x, const double *v)
{
    t->row.level_m = x;
    for (size_t c = 0; c < 2 * t->n_gates; c++)
        t->row_crit[c] = to_crit(t, v[c]);
    t->row.crit = t->row_crit;
    for (int k = 0; k < SW_THRESHOLDS_N_LIMITS; k++) {
        /* the gate from the exact values; the value is that gate's own,
         * rounded as it is in its column */
        double gv = govern(t, v, k, &t->row.governing_gate[k]);
        t->row.governing[k] = to_crit(t, gv);
    }
}

int sw_thresholds_alloc(sw_thresholds **out, const sw_gate *const *gates,
                        size_t n_gates, sw_thresholds_axis axis,
                        const sw_thresholds_range *range, sw_error *err)
{
    sw_thresholds *t;

    *out = NULL;
    if (n_gates == 0 || n_gates > SW_THRESHOLDS_MAX_GATES)
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "a threshold table needs 1 to %d gates, not %zu",
                            SW_THRESHOLDS_MAX_GATES, n_gates);
    t = calloc(1, sizeof *t);
    if (t == NULL)
        goto nomem;
    t->gates = gates;
    t->n_gates = n_gates;
    t->n_curves = 2 * n_gates + SW_THRESHOLDS_N_LIMITS;
    t->axis = axis;
    t->range = *range;
    t->row_crit = calloc(2 * n_gates, sizeof *t->row_crit);
    t->row_vals = calloc(t->n_curves, sizeof *t->row_vals);
    if (t->row_crit == NULL || t->row_vals == NULL)
        goto nomem;
    *out = t;
    return SW_OK;
nomem:
    sw_thresholds_free(t);
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory for a threshold table");
}

void sw_thresholds_free(sw_thresholds *t)
{
    if (t == NULL)
        return;
    free(t->row_crit);
    free(t->row_vals);
    free(t->point_u);
    free(t->point_vals);
    free(t->rows);
    free(t->steps);
    free(t->sample_vals);
    free(t);
}

int sw_thresholds_set_samples(sw_thresholds *t, const sw_gate *samples,
                              const double *dhw_m, const double *dtw_m,
                              size_t n_samples, double confidence,
                              unsigned workers, sw_error *err)
{
    if (!(confidence > 0.0 && confidence < 1.0))
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "the confidence must lie between 0 and 1, not "
                            "%g",
                            confidence);
    if (n_samples == 0 || samples == NULL)
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "a table with a confidence needs samples");
    free(t->sample_vals);
    t->sample_vals = calloc(2 * t->n_gates * n_samples, sizeof *t->sample_vals);
    if (t->sample_vals == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                            "out of memory for %zu samples of a threshold "
                            "table",
                            n_samples);
    t->samples = samples;
    t->dhw = dhw_m;
    t->dtw = dtw_m;
    t->n_samples = n_samples;
    t->confidence = confidence;
    t->workers = workers;
    return SW_OK;
}

size_t sw_thresholds_n_rows(const sw_thresholds *t)
{
    return t->simplified ? t->n_rows : t->range.n_levels;
}

static double lattice_level(const sw_thresholds *t, double u)
{
    return t->range.from_m + u / UNITS_PER_M;
}

int sw_thresholds_get_row(sw_thresholds *t, size_t i,
                          const sw_thresholds_row **row, sw_error *err)
{
    int rc;

    if (t->simplified) {
        size_t p = t->rows[i];
        fill_row(t, lattice_level(t, (double)t->point_u[p]),
                 t->point_vals + p * t->n_curves);
    } else {
        double x = sw_thresholds_level(&t->range, i);
        if ((rc = eval_curves(t, x, t->row_vals, err)) != SW_OK)
            return rc;
        fill_row(t, x, t->row_vals);
    }
    *row = &t->row;
    return SW_OK;
}

void sw_thresholds_get_step(const sw_thresholds *t, size_t i,
                            sw_thresholds_step *step)
{
    *step = t->steps[i];
}

/* ---- simplification ------------------------------------------------------ */

/* A cell between two adjacent fine levels: checked inside, or not. */
enum { CELL_SMOOTH = 0, CELL_TRANSITION = 1, CELL_STEP = 2 };

/* The fine grid while it is built: points in level order, each cell's
 * midpoint values and kind, the steps found. */
typedef struct fine_grid {
    size_t n, cap;              /* points */
    int64_t *u;
    double *v;                  /* n_curves per point */
    double *mid;                /* n_curves per cell (n - 1 cells) */
    unsigned char *cell;        /* CELL_* per cell */
    size_t n_steps, cap_steps;
    sw_thresholds_step *steps;
    size_t limit;               /* most points allowed */
} fine_grid;

static void fine_fini(fine_grid *f)
{
    free(f->u);
    free(f->v);
    free(f->mid);
    free(f->cell);
    free(f->steps);
}

static int fine_reserve(fine_grid *f, size_t n_curves, size_t need,
                        sw_error *err)
{
    size_t cap = f->cap + f->cap / 2;
    void *p;

    if (need <= f->cap)
        return SW_OK;
    if (cap < need)
        cap = need;
    if ((p = realloc(f->u, cap * sizeof *f->u)) == NULL)
        goto nomem;
    f->u = p;
    if ((p = realloc(f->v, cap * n_curves * sizeof *f->v)) == NULL)
        goto nomem;
    f->v = p;
    if ((p = realloc(f->mid, cap * n_curves * sizeof *f->mid)) == NULL)
        goto nomem;
    f->mid = p;
    if ((p = realloc(f->cell, cap * sizeof *f->cell)) == NULL)
        goto nomem;
    f->cell = p;
    f->cap = cap;
    return SW_OK;
nomem:
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory for the fine grid of a simplified "
                        "table (%zu levels)",
                        need);
}

static int add_step(fine_grid *f, const sw_thresholds_step *s, sw_error *err)
{
    if (f->n_steps == f->cap_steps) {
        size_t cap = f->cap_steps ? 2 * f->cap_steps : 16;
        void *p = realloc(f->steps, cap * sizeof *f->steps);
        if (p == NULL)
            return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                                "out of memory for the steps of a table");
        f->steps = p;
        f->cap_steps = cap;
    }
    f->steps[f->n_steps++] = *s;
    return SW_OK;
}

/* How a cell looks from its end values a, b and midpoint value m: does a
 * curve change kind across it (transition), or is a curve that is a level
 * at both ends more than tol/8 from its chord at the midpoint, or not a
 * level there, or a level inside a stretch of "not needed" / "none"
 * (rough)? */
static void classify(size_t n_curves, const double *a, const double *b,
                     const double *m, double cell_tol, int *transition,
                     int *rough)
{
    *transition = 0;
    *rough = 0;
    for (size_t c = 0; c < n_curves; c++) {
        if (isnan(a[c]) != isnan(b[c]))
            *transition = 1;
        else if (!isnan(a[c]))
            *rough |= isnan(m[c]) ||
                      fabs(m[c] - 0.5 * (a[c] + b[c])) > cell_tol;
        else
            *rough |= !isnan(m[c]);
    }
}

/* Build the fine grid from lattice index 0 to `span_u` with nominal step
 * `h_u`, halving cells that are rough or change kind (see
 * sw_thresholds_simplify()).  Cells are finished left to right with an
 * explicit stack, so points arrive in level order. */
static int build_fine(const sw_thresholds *t, int64_t span_u, int64_t h_u,
                      double cell_tol, fine_grid *f, sw_error *err)
{
    enum { STACK = 128 };
    size_t nc = t->n_curves;
    /* stack entries: lattice indices of a pending cell's ends; the values
     * of a pending right end are kept in `pend` (one row per entry) */
    int64_t st_a[STACK], st_b[STACK];
    double *pend = NULL, *mid = NULL, *vc = NULL;
    int rc = SW_OK;

    pend = malloc(STACK * nc * sizeof *pend);
    mid = malloc(nc * sizeof *mid);
    vc = malloc(nc * sizeof *vc);
    if (pend == NULL || mid == NULL || vc == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                          "out of memory for a simplified table");
        goto cleanup;
    }
    /* room for the nominal grid and a few refinements at once */
    if ((rc = fine_reserve(f, nc, (size_t)((span_u + h_u - 1) / h_u) + 65,
                           err)) != SW_OK)
        goto cleanup;
    f->u[0] = 0;
    if ((rc = eval_curves(t, lattice_level(t, 0.0), f->v, err)) != SW_OK)
        goto cleanup;
    f->n = 1;

    for (int64_t base = 0; base < span_u;) {
        int64_t next = base + h_u < span_u ? base + h_u : span_u;
        size_t sp = 0;

        if ((rc = eval_curves(t, lattice_level(t, (double)next), pend,
                              err)) != SW_OK)
            goto cleanup;
        st_a[0] = base;
        st_b[0] = next;
        sp = 1;
        while (sp > 0) {
            int64_t a = st_a[sp - 1], b = st_b[sp - 1];
            const double *va = f->v + (f->n - 1) * nc; /* a is the last
                                                          point kept */
            double *vb = pend + (sp - 1) * nc;
            int transition, rough;

            if ((rc = eval_curves(t, lattice_level(t, 0.5 * (double)(a + b)),
                                  mid, err)) != SW_OK)
                goto cleanup;
            classify(nc, va, vb, mid, cell_tol, &transition, &rough);
            if ((transition || rough) && b - a >= 2 && sp < STACK) {
                /* halve on the lattice: [a, c] first, then [c, b] */
                int64_t c = a + (b - a) / 2;
                if ((b - a) % 2 == 0)
                    memcpy(vc, mid, nc * sizeof *vc);
                else if ((rc = eval_curves(t, lattice_level(t, (double)c), vc,
                                           err)) != SW_OK)
                    goto cleanup;
                st_a[sp - 1] = c; /* the entry becomes [c, b] */
                st_a[sp] = a;
                st_b[sp] = c;
                memcpy(pend + sp * nc, vc, nc * sizeof *vc);
                sp++;
                if (f->n + sp > f->limit) {
                    rc = sw_error_set(
                        err, SW_ENUMERIC, NULL, 0, 0,
                        "the curves are too rough to simplify within "
                        "%.4f m (more than %zu fine levels needed); give a "
                        "larger --simplify tolerance or use the grid",
                        cell_tol * 8.0, f->limit);
                    goto cleanup;
                }
                continue;
            }
            /* a finished cell [a, b]: keep b, the midpoint and the kind */
            if ((rc = fine_reserve(f, nc, f->n + 1, err)) != SW_OK)
                goto cleanup;
            memcpy(f->v + f->n * nc, vb, nc * sizeof *vb);
            memcpy(f->mid + (f->n - 1) * nc, mid, nc * sizeof *mid);
            f->cell[f->n - 1] = transition ? CELL_TRANSITION
                                           : rough ? CELL_STEP : CELL_SMOOTH;
            f->u[f->n] = b;
            f->n++;
            sp--;
        }
        base = next;
    }
cleanup:
    free(pend);
    free(mid);
    free(vc);
    return rc;
}

/* Greedy breakpoints over the fine grid: from each row, the farthest fine
 * level whose chord keeps every curve within `tol_b` of every fine value
 * between.  For a start i and an end j the chord of curve c has slope
 * (v_j - v_i) / (x_j - x_i); it passes within tol_b of an interior point k
 * exactly when that slope lies in [(v_k - tol_b - v_i) / (x_k - x_i),
 * (v_k + tol_b - v_i) / (x_k - x_i)].  Intersecting these windows while j
 * moves right finds every admissible j in one pass, and the pass ends when
 * a window is empty (no later j can be admissible), when a curve changes
 * kind, or at a cell that is not smooth (a segment of its own). */
static int choose_rows(const sw_thresholds *t, const fine_grid *f,
                       double tol_b, size_t **rows_out, size_t *n_rows,
                       sw_error *err)
{
    size_t nc = t->n_curves, n = 0, cap = 64, i = 0;
    size_t *rows = malloc(cap * sizeof *rows);
    double *lo = malloc(nc * sizeof *lo), *hi = malloc(nc * sizeof *hi);
    int rc = SW_OK;

    if (rows == NULL || lo == NULL || hi == NULL)
        goto nomem;
    rows[n++] = 0;
    while (i + 1 < f->n) {
        size_t best = i + 1;
        const double *vi = f->v + i * nc;

        if (f->cell[i] == CELL_SMOOTH) {
            for (size_t c = 0; c < nc; c++) {
                lo[c] = -INFINITY;
                hi[c] = INFINITY;
            }
            for (size_t j = i + 1; j < f->n; j++) {
                const double *vj = f->v + j * nc;
                double dx = (double)(f->u[j] - f->u[i]) / UNITS_PER_M;
                int ok = 1, open = 1;

                if (j > i + 1 && f->cell[j - 1] != CELL_SMOOTH)
                    break;
                for (size_t c = 0; c < nc && open; c++)
                    open = isnan(vi[c]) == isnan(vj[c]);
                if (!open)
                    break;
                for (size_t c = 0; c < nc; c++) {
                    double s;
                    if (isnan(vi[c]))
                        continue;
                    s = (vj[c] - vi[c]) / dx;
                    if (s < lo[c] || s > hi[c])
                        ok = 0;
                    lo[c] = fmax(lo[c], (vj[c] - tol_b - vi[c]) / dx);
                    hi[c] = fmin(hi[c], (vj[c] + tol_b - vi[c]) / dx);
                    if (lo[c] > hi[c])
                        open = 0;
                }
                if (ok)
                    best = j;
                if (!open)
                    break;
            }
        }
        if (n == cap) {
            void *p = realloc(rows, 2 * cap * sizeof *rows);
            if (p == NULL)
                goto nomem;
            rows = p;
            cap *= 2;
        }
        rows[n++] = best;
        i = best;
    }
    *rows_out = rows;
    *n_rows = n;
    rows = NULL;
    goto cleanup;
nomem:
    rc = sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                      "out of memory for the rows of a simplified table");
cleanup:
    free(rows);
    free(lo);
    free(hi);
    return rc;
}

/* Compare the published table (rounded values, linear between rows) with
 * the exact value `exact` of curve c at lattice position u from row ra to
 * row rb (at a row, its own value).  Returns the difference, or INFINITY
 * where the kinds differ. */
static double table_error(const sw_thresholds *t, const fine_grid *f,
                          size_t ra, size_t rb, size_t c, double u,
                          double exact)
{
    double ya = f->v[ra * t->n_curves + c], yb = f->v[rb * t->n_curves + c];
    double w = (u - (double)f->u[ra]) / (double)(f->u[rb] - f->u[ra]);

    if (w <= 0.0)
        yb = ya;
    else if (w >= 1.0)
        ya = yb;
    if (isnan(ya) || isnan(yb))
        return isnan(ya) && isnan(yb) && isnan(exact) ? 0.0 : INFINITY;
    if (isnan(exact))
        return INFINITY;
    ya = sw_thresholds_round(t->axis, ya);
    yb = sw_thresholds_round(t->axis, yb);
    return fabs(ya + (yb - ya) * w - exact);
}

/* Check the rows against every fine level and every cell's midpoint; the
 * largest difference goes to *max_error.  In a smooth cell a difference
 * over tol is an internal error (the construction guarantees tol).  A cell
 * that is not smooth is a segment of its own: a curve that changes kind
 * there is not checked inside, and one that misses by more than tol at the
 * midpoint is a step, recorded in f and left out of *max_error. */
static int verify(const sw_thresholds *t, fine_grid *f, const size_t *rows,
                  size_t n_rows, double tol, double *max_error, size_t *n_mid,
                  sw_error *err)
{
    size_t nc = t->n_curves;
    double worst = 0.0;
    int rc;

    *n_mid = 0;
    for (size_t r = 0; r + 1 < n_rows; r++) {
        size_t ra = rows[r], rb = rows[r + 1];
        for (size_t q = ra; q <= rb; q++)
            for (int mid = 0; mid < 2; mid++) {
                double u;
                const double *ex;
                int smooth = 1;
                if (mid && q == rb)
                    continue;
                if (mid) {
                    u = 0.5 * (double)(f->u[q] + f->u[q + 1]);
                    ex = f->mid + q * nc;
                    smooth = f->cell[q] == CELL_SMOOTH;
                    (*n_mid)++;
                } else {
                    u = (double)f->u[q];
                    ex = f->v + q * nc;
                }
                for (size_t c = 0; c < nc; c++) {
                    const double *va = f->v + q * nc;
                    const double *vb = va + nc;
                    double e;
                    if (!smooth && isnan(va[c]) != isnan(vb[c]))
                        continue;
                    e = table_error(t, f, ra, rb, c, u, ex[c]);
                    if (e <= tol + 1e-9) {
                        worst = fmax(worst, e);
                    } else if (!smooth) {
                        sw_thresholds_step s = {
                            c, lattice_level(t, (double)f->u[q]),
                            lattice_level(t, (double)f->u[q + 1]), va[c],
                            vb[c]};
                        if ((rc = add_step(f, &s, err)) != SW_OK)
                            return rc;
                    } else {
                        return sw_error_set(
                            err, SW_EINTERNAL, NULL, 0, 0,
                            "simplified table misses curve %zu by %.6g m at "
                            "level %.6f m (tolerance %.4f m); please report "
                            "this",
                            c, e, lattice_level(t, u), tol);
                    }
                }
            }
    }
    *max_error = worst;
    return SW_OK;
}

int sw_thresholds_simplify(sw_thresholds *t, double tol_m,
                           sw_thresholds_fit *fit, sw_error *err)
{
    fine_grid f;
    int64_t span_u = (int64_t)(t->range.n_levels - 1) * t->range.step_u;
    int64_t h_u;
    size_t max_levels, *rows = NULL, n_rows = 0, n_mid = 0;
    double max_error = 0.0;
    int rc;

    memset(&f, 0, sizeof f);
    if (!(tol_m >= SW_THRESHOLDS_MIN_TOL_M) || !isfinite(tol_m))
        return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                            "the tolerance must be at least %.4f m (five "
                            "times the table's 0.1 mm resolution), not %g m",
                            SW_THRESHOLDS_MIN_TOL_M, tol_m);
    if (t->simplified)
        return sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                            "threshold table simplified twice");

    /* the fine step: 1 mm or STEP/10, whichever is finer, on the 0.1 mm
     * lattice; coarser where the budget of evaluations runs out */
    h_u = t->range.step_u / 10;
    h_u = h_u > 10 ? 10 : (h_u < 1 ? 1 : h_u);
    max_levels = FINE_BUDGET / t->n_curves;
    if (t->samples != NULL) {
        double by_samples =
            SAMPLED_BUDGET / ((double)t->n_curves * (double)t->n_samples);
        max_levels = by_samples < (double)SAMPLED_MIN_LEVELS
                         ? SAMPLED_MIN_LEVELS
                         : by_samples < (double)max_levels
                               ? (size_t)by_samples
                               : max_levels;
    }
    if (max_levels > FINE_MAX_LEVELS)
        max_levels = FINE_MAX_LEVELS;
    if (span_u / h_u + 1 > (int64_t)max_levels)
        h_u = (span_u + (int64_t)max_levels - 2) / ((int64_t)max_levels - 1);
    f.limit = REFINE_FACTOR * max_levels;

    if ((rc = build_fine(t, span_u, h_u, tol_m / 8.0, &f, err)) != SW_OK)
        goto cleanup;
    /* the greedy's own tolerance leaves tol/8 to a cell's curvature and
     * 0.1 mm to the rounding of published values, and a hair to floating
     * point: at a cell's midpoint the table is the mean of its values at
     * the ends, each within tol_b + 0.1 mm of the exact value, and the
     * exact midpoint is within tol/8 of the exact ends' mean */
    if ((rc = choose_rows(t, &f, tol_m - tol_m / 8.0 - SW_THRESHOLDS_RES_M -
                                     1e-9,
                          &rows, &n_rows, err)) != SW_OK)
        goto cleanup;
    if ((rc = verify(t, &f, rows, n_rows, tol_m, &max_error, &n_mid, err)) !=
        SW_OK)
        goto cleanup;

    t->simplified = 1;
    t->n_points = f.n;
    t->point_u = f.u;
    t->point_vals = f.v;
    t->n_rows = n_rows;
    t->rows = rows;
    t->n_steps = f.n_steps;
    t->steps = f.steps;
    f.u = NULL;
    f.v = NULL;
    f.steps = NULL;
    rows = NULL;

    fit->tol_m = tol_m;
    fit->max_error_m = max_error;
    fit->fine_step_m = (double)h_u / UNITS_PER_M;
    fit->n_fine = t->n_points;
    fit->n_midpoints = n_mid;
    fit->n_steps = t->n_steps;
cleanup:
    fine_fini(&f);
    free(rows);
    return rc;
}
