/* Benchmark (not a test): threshold tables of 10,000 levels for three
 * gates (two rectangles, one circle; invented), by headwater and by
 * tailwater, as the regular grid and simplified.  Prints the time per
 * table, per row and per critical-level search, and for the simplified
 * tables the rows, fine levels and achieved error.  Figures only; never
 * fails on time. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "sillwatch/thresholds.h"

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static sw_gate bench_gate(int i)
{
    sw_gate g;
    memset(&g, 0, sizeof g);
    snprintf(g.name, sizeof g.name, "g%d", i);
    g.shape = i == 2 ? SW_SHAPE_CIRCLE : SW_SHAPE_RECTANGLE;
    g.hinge_level_m = i == 2 ? 11.95 : 12.4;
    g.inclination_deg = i == 2 ? 75.0 : 80.0 - 1.5 * i;
    g.seal_top_m = 0.15;
    g.seal_height_m = 1.4 - 0.03 * i;
    g.seal_width_m = 1.6;
    g.diameter_m = 0.9;
    g.leaf_length_m = i == 2 ? 1.1 : 1.65;
    g.mass_kg = i == 2 ? 420.0 : 1450.0 - 65.0 * i;
    g.cg_along_m = i == 2 ? 0.55 : 0.86;
    g.cg_offset_m = 0.06;
    g.volume_m3 = i == 2 ? 0.054 : 0.185;
    g.extra_moment_Nm = i == 2 ? 700.0 : 4200.0 + 600.0 * i;
    g.required_fs = i == 2 ? 1.3 : 1.5;
    g.min_sill_reaction_N = i == 2 ? 200.0 : 500.0;
    g.rho_kgm3[SW_UPSTREAM] = 999.78;
    g.rho_kgm3[SW_DOWNSTREAM] = 1005.64;
    g.g_ms2 = 9.81276;
    sw_gate_prepare(&g);
    return g;
}

static int run(const sw_gate *const *gates, sw_thresholds_axis axis,
               const char *range_text, double tol_m)
{
    sw_thresholds_range r;
    sw_thresholds *t;
    sw_thresholds_fit fit;
    sw_error err;
    double t0, t1, sink = 0.0;
    const char *what = axis == SW_THRESHOLDS_BY_HEADWATER ? "by headwater"
                                                          : "by tailwater";

    if (sw_thresholds_parse_range(range_text, &r, &err) != SW_OK ||
        sw_thresholds_alloc(&t, gates, 3, axis, &r, &err) != SW_OK) {
        fprintf(stderr, "bench: %s\n", err.message);
        return 1;
    }
    t0 = now_s();
    if (tol_m > 0.0 && sw_thresholds_simplify(t, tol_m, &fit, &err) != SW_OK)
        goto fail;
    for (size_t i = 0; i < sw_thresholds_n_rows(t); i++) {
        const sw_thresholds_row *row;
        if (sw_thresholds_get_row(t, i, &row, &err) != SW_OK)
            goto fail;
        sink += row->level_m;
    }
    t1 = now_s();
    if (tol_m > 0.0)
        printf("%s, simplified to %.4f m: %zu levels -> %zu rows in %.3f s "
               "(%zu fine levels, %zu midpoints, max error %.4f m, %zu "
               "steps)\n",
               what, tol_m, r.n_levels, sw_thresholds_n_rows(t), t1 - t0,
               fit.n_fine, fit.n_midpoints, fit.max_error_m, fit.n_steps);
    else
        printf("%s, grid: %zu levels in %.3f s (%.1f us a row, %.2f us a "
               "critical-level search)\n",
               what, r.n_levels, t1 - t0, 1e6 * (t1 - t0) / (double)r.n_levels,
               1e6 * (t1 - t0) / (double)(r.n_levels * 6));
    sw_thresholds_free(t);
    return sink == 0.12345;
fail:
    fprintf(stderr, "bench: %s\n", err.message);
    sw_thresholds_free(t);
    return 1;
}

int main(void)
{
    sw_gate g[3];
    const sw_gate *p[3];

    gsl_set_error_handler_off();
    for (int i = 0; i < 3; i++) {
        g[i] = bench_gate(i);
        p[i] = &g[i];
    }
    /* 10,000 levels each: 0.3 mm and 0.4 mm steps over the working range */
    if (run(p, SW_THRESHOLDS_BY_HEADWATER, "10.5:13.4997:0.0003", 0.0) ||
        run(p, SW_THRESHOLDS_BY_TAILWATER, "10.5:14.4996:0.0004", 0.0) ||
        run(p, SW_THRESHOLDS_BY_HEADWATER, "10.5:13.4997:0.0003", 0.005) ||
        run(p, SW_THRESHOLDS_BY_TAILWATER, "10.5:14.4996:0.0004", 0.005))
        return 1;
    return 0;
}
