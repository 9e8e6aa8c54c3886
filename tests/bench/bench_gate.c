/* Benchmark (not a test): cost of one gate evaluation and of one
 * critical-level search, per shape.  Targets on the project machine:
 * <= 100 ns per evaluation, <= 20 us per search.  Prints figures only;
 * never fails on time. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <string.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "sillwatch/gate.h"

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static sw_gate bench_gate(sw_shape shape)
{
    sw_gate g;
    memset(&g, 0, sizeof g);
    strcpy(g.name, shape == SW_SHAPE_CIRCLE ? "circle" : "rectangle");
    g.shape = shape;
    g.hinge_level_m = 12.4;
    g.inclination_deg = 78.5;
    g.seal_top_m = 0.15;
    g.seal_height_m = 1.4;
    g.seal_width_m = 1.6;
    g.diameter_m = 1.1;
    g.leaf_length_m = 1.7;
    g.mass_kg = 1450.0;
    g.cg_along_m = 0.86;
    g.volume_m3 = 0.185;
    g.extra_moment_Nm = 5200.0;
    g.required_fs = 1.5;
    g.rho_kgm3[SW_UPSTREAM] = 999.78;
    g.rho_kgm3[SW_DOWNSTREAM] = 1005.64;
    g.g_ms2 = 9.81276;
    sw_gate_prepare(&g);
    return g;
}

int main(void)
{
    gsl_set_error_handler_off();
    for (int shape = 0; shape < 2; shape++) {
        sw_gate g = bench_gate((sw_shape)shape);
        const int n_eval = 4000000, n_search = 20000;
        double sink = 0.0, t0, t1;
        sw_gate_result r;

        /* levels sweep every regime: dry, partial, full, above the hinge */
        t0 = now_s();
        for (int i = 0; i < n_eval; i++) {
            double hw = 10.5 + 2.5 * (double)(i % 1000) / 1000.0;
            double tw = 10.4 + 2.4 * (double)((i * 7) % 1000) / 1000.0;
            sw_gate_evaluate(&g, hw, tw, &r);
            sink += r.net_moment_Nm;
        }
        t1 = now_s();
        printf("%-9s evaluation:       %8.1f ns each (target <= 100 ns)\n",
               g.name, 1e9 * (t1 - t0) / n_eval);

        t0 = now_s();
        for (int i = 0; i < n_search; i++) {
            sw_crit c;
            sw_error err;
            double hw = 10.5 + 2.5 * (double)(i % 997) / 997.0;
            sw_limit lim = (i & 1) ? SW_LIMIT_ALARM : SW_LIMIT_OPEN;
            if (sw_gate_critical_tailwater(&g, hw, lim, &c, &err) != SW_OK) {
                fprintf(stderr, "bench: %s\n", err.message);
                return 1;
            }
            sink += c.kind == SW_CRIT_LEVEL ? c.level_m : 0.0;
        }
        t1 = now_s();
        printf("%-9s critical tailwater: %6.2f us each (target <= 20 us)\n",
               g.name, 1e6 * (t1 - t0) / n_search);

        t0 = now_s();
        for (int i = 0; i < n_search; i++) {
            sw_crit c;
            sw_error err;
            double tw = 10.4 + 2.4 * (double)(i % 997) / 997.0;
            sw_limit lim = (i & 1) ? SW_LIMIT_ALARM : SW_LIMIT_OPEN;
            if (sw_gate_critical_headwater(&g, tw, lim, &c, &err) != SW_OK) {
                fprintf(stderr, "bench: %s\n", err.message);
                return 1;
            }
            sink += c.kind == SW_CRIT_LEVEL ? c.level_m : 0.0;
        }
        t1 = now_s();
        printf("%-9s critical headwater: %6.2f us each (target <= 20 us)\n",
               g.name, 1e6 * (t1 - t0) / n_search);
        if (sink == 0.12345)
            puts("");
    }
    return 0;
}
