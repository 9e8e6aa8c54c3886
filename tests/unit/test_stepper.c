/* Unit tests of the stepping engine (src/stepper.c): hours, crossings,
 * gaps, several files, time zones and months, against hand computations. */
#include "testutil.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "sillwatch/stepper.h"

/* The vertical leaf of the CLI case point_hand_vertical: hinge 10 m, sealed
 * s = 0..2 m (sill at 8 m), width 1.5 m, rho 1000, g 9.81, weight moment
 * 800 * 9.81 * 0.05 = 392.4 N*m; no volume.  With the tailwater below the
 * sill, a headwater d metres over the sill gives
 * M = 1000 * 9.81 * 1.5 * d^2 / 2 * (2 - d/3) (triangular pressure prism,
 * common practice, no source). */
#define GATE_V                                                              \
    "[gate V]\nshape = rectangle\nhinge_level = 10\ninclination = 90\n"     \
    "seal_top = 0\nseal_height = 2\nseal_width = 1.5\nmass = 800\n"         \
    "cg_along = 1\ncg_offset = 0.05\nheadwater = hw\ntailwater = tw\n"

#define WATERS                                                              \
    "[water upstream]\ndensity = 1000\n[water downstream]\ndensity = 1000\n"

typedef struct run_result {
    sw_tally tally[4];
    sw_event events[32];
    size_t n_events;
    sw_month_row months[32];
    size_t n_months;
    sw_time_ms start, end;
    long steps;
} run_result;

/* Load site.ini from the temp folder, run it to the end, keep the results;
 * returns the status of the first failing call. */
static int run_site(int by_month, run_result *out, sw_error *err)
{
    char path[128];
    sw_site site;
    sw_stepper *st = NULL;
    sw_stepper_options opt = {by_month, 0, 0};
    int rc, done = 0;

    memset(out, 0, sizeof *out);
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    if ((rc = sw_site_load(&site, path, err)) != SW_OK)
        return rc;
    if ((rc = sw_stepper_alloc(&st, &site, &opt, err)) != SW_OK)
        goto done;
    for (int last = 0; !last;) {
        if (!done) {
            if ((rc = sw_stepper_advance(st, &done, err)) != SW_OK)
                goto done;
            if (!done)
                out->steps++;
        }
        if (done) {
            if ((rc = sw_stepper_finish(st, err)) != SW_OK)
                goto done;
            last = 1;
        }
        const sw_event *ev;
        const sw_month_row *mo;
        size_t n = sw_stepper_events(st, &ev);
        for (size_t i = 0; i < n && out->n_events < 32; i++)
            out->events[out->n_events++] = ev[i];
        n = sw_stepper_months(st, &mo);
        for (size_t i = 0; i < n && out->n_months < 32; i++)
            out->months[out->n_months++] = mo[i];
    }
    for (size_t i = 0; i < site.n_gates && i < 4; i++)
        out->tally[i] = *sw_stepper_tally(st, i);
    sw_stepper_span(st, &out->start, &out->end);
done:
    sw_stepper_free(st);
    sw_site_fini(&site);
    return rc;
}

/* Depth over the sill at which the headwater moment of gate V reaches m
 * (bisection on the hand formula above, not on the library). */
static double depth_for_moment(double m)
{
    double lo = 0.0, hi = 2.0;
    for (int i = 0; i < 200; i++) {
        double d = 0.5 * (lo + hi);
        if (1000.0 * 9.81 * 1.5 * d * d / 2.0 * (2.0 - d / 3.0) < m)
            lo = d;
        else
            hi = d;
    }
    return 0.5 * (lo + hi);
}

#define H (3600000LL) /* ms per hour */

/* Constant levels: every hour of the span is evaluated in one state. */
static void test_constant_levels(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n"
                           "max_gap = 2h\n" WATERS GATE_V
                           "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                           "[series tw]\nfile = l.csv\nvalue_column = tw\n");
    /* headwater 0.1 m over the sill: M = 7357.5 * 0.01 * (2 - 0.0333)
     * = 144.7 N*m, fs = 392.4 / 144.7 = 2.71 > 1.5: ok throughout */
    sw_test_write("l.csv", "time,hw,tw\n"
                        "2025-04-01T00:00:00Z,8.1,7.0\n"
                        "2025-04-01T01:30:00Z,8.1,7.0\n"
                        "2025-04-01T03:00:00Z,8.1,7.0\n"
                        "2025-04-01T04:15:00Z,8.1,7.0\n");
    assert_int_equal(run_site(0, &r, &err), SW_OK);
    assert_int_equal(r.end - r.start, 4 * H + H / 4);
    assert_int_equal(r.tally[0].evaluated, 4 * H + H / 4);
    assert_int_equal(r.tally[0].not_evaluated, 0);
    assert_int_equal(r.tally[0].low + r.tally[0].open, 0);
    assert_int_equal(r.n_events, 0);
    double m = 7357.5 * 0.01 * (2.0 - 0.1 / 3.0);
    assert_close(r.tally[0].min_fs, 392.4 / m, 1e-9);
}

/* A headwater rising linearly from the sill to 1 m over it in 10 h: the
 * gate turns low, then open, at times fixed by the hand formula; hours
 * must match to the engine's one-second resolution. */
static void test_linear_ramp_crossings(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n"
                           "max_gap = 12h\n" WATERS GATE_V
                           "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                           "[series tw]\nfile = l.csv\nvalue_column = tw\n");
    sw_test_write("l.csv", "time,hw,tw\n"
                        "2025-04-01T00:00:00Z,8.0,7.0\n"
                        "2025-04-01T10:00:00Z,9.0,7.0\n");
    assert_int_equal(run_site(0, &r, &err), SW_OK);

    /* low where M > 392.4 / 1.5, open where M >= 392.4 */
    double t_low = depth_for_moment(392.4 / 1.5) * 10.0 * 3600.0; /* s */
    double t_open = depth_for_moment(392.4) * 10.0 * 3600.0;
    double low_s = (double)r.tally[0].low / 1000.0;
    double open_s = (double)r.tally[0].open / 1000.0;
    assert_close_abs(open_s, 36000.0 - t_open, 1.0);
    assert_close_abs(low_s, t_open - t_low, 2.0);
    assert_int_equal(r.tally[0].evaluated, 10 * H);
    /* one event from the first crossing to the end of the data */
    assert_int_equal(r.n_events, 1);
    assert_close_abs((double)(r.events[0].start - r.start) / 1000.0, t_low, 1.0);
    assert_int_equal(r.events[0].ends, SW_END_SERIES_END);
    assert_int_equal(r.events[0].worst, SW_STATE_OPEN);
    /* the conservative side: the event never starts late */
    assert_true((double)(r.events[0].start - r.start) / 1000.0 <= t_low + 1e-6);
}

/* A gap longer than max_gap is not evaluated; a shorter one is bridged. */
static void test_gaps(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n"
                           "max_gap = 45min\n" WATERS GATE_V
                           "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                           "missing = -9999\n"
                           "[series tw]\nfile = l.csv\nvalue_column = tw\n");
    /* samples every 15 min; the headwater misses 00:30 (a 30 min interval,
     * bridged) and 01:30 to 02:15 (a 60 min interval, not bridged) */
    sw_test_write("l.csv", "time,hw,tw\n"
                        "2025-04-01T00:00:00Z,8.1,7.0\n"
                        "2025-04-01T00:15:00Z,8.1,7.0\n"
                        "2025-04-01T00:30:00Z,,7.0\n"
                        "2025-04-01T00:45:00Z,8.1,7.0\n"
                        "2025-04-01T01:00:00Z,8.1,7.0\n"
                        "2025-04-01T01:15:00Z,8.1,7.0\n"
                        "2025-04-01T01:30:00Z,NaN,7.0\n"
                        "2025-04-01T01:45:00Z,-9999,7.0\n"
                        "2025-04-01T02:00:00Z,,7.0\n"
                        "2025-04-01T02:15:00Z,8.1,7.0\n"
                        "2025-04-01T02:30:00Z,8.1,7.0\n");
    assert_int_equal(run_site(0, &r, &err), SW_OK);
    assert_int_equal(r.end - r.start, 2 * H + H / 2);
    assert_int_equal(r.tally[0].not_evaluated, H);
    assert_int_equal(r.tally[0].evaluated, H + H / 2);
    assert_int_equal(r.tally[0].evaluated + r.tally[0].not_evaluated,
                     r.end - r.start);
}

/* An event cut by a gap ends with "gap". */
static void test_event_ends_in_gap(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n" WATERS
                           GATE_V
                           "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                           "[series tw]\nfile = l.csv\nvalue_column = tw\n");
    sw_test_write("l.csv", "time,hw,tw\n"
                        "2025-04-01T00:00:00Z,8.6,7.0\n"
                        "2025-04-01T00:15:00Z,8.6,7.0\n"
                        "2025-04-01T03:15:00Z,8.6,7.0\n");
    assert_int_equal(run_site(0, &r, &err), SW_OK);
    /* the lone last sample after the gap starts no period: one event */
    assert_int_equal(r.n_events, 1);
    assert_int_equal(r.events[0].ends, SW_END_GAP);
    assert_int_equal(r.events[0].end - r.events[0].start, H / 4);
    assert_int_equal(r.events[0].worst, SW_STATE_OPEN);
    assert_int_equal(r.tally[0].open, H / 4);
    assert_int_equal(r.tally[0].not_evaluated, 3 * H);
}

/* Two files with interleaved times (the headwater on the hour, the
 * tailwater on the half hour): the timeline is their union and each is
 * interpolated at the other's times. */
static void test_two_files_interleaved(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n"
                           "max_gap = 90min\n" WATERS GATE_V
                           "[series hw]\nfile = up.csv\nvalue_column = level\n"
                           "[series tw]\nfile = down.csv\n"
                           "time_column = when\nvalue_column = level\n");
    sw_test_write("up.csv", "time,level\n"
                         "2025-04-01T00:00:00Z,8.1\n"
                         "2025-04-01T01:00:00Z,8.1\n"
                         "2025-04-01T02:00:00Z,8.1\n");
    sw_test_write("down.csv", "when;level\n"
                           "2025-04-01T00:30:00Z;7,0\n"
                           "2025-04-01T01:30:00Z;7,0\n"
                           "2025-04-01T02:30:00Z;7,0\n");
    assert_int_equal(run_site(0, &r, &err), SW_OK);
    assert_int_equal(r.steps, 5); /* 6 points, the last one after finish */
    assert_int_equal(r.end - r.start, 2 * H + H / 2);
    /* known from 00:30 (tailwater starts) to 02:00 (headwater ends) */
    assert_int_equal(r.tally[0].evaluated, H + H / 2);
    assert_int_equal(r.tally[0].not_evaluated, H);
}

/* Feet with a gauge offset: 1 ft = 0.3048 m exactly (international foot,
 * 1959).  A reading of 0.5 ft on a gauge whose zero is at 8.2476 m is
 * 8.2476 + 0.1524 = 8.4 m: 0.4 m over the sill. */
static void test_feet_with_offset(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n" WATERS
                           GATE_V
                           "[series hw]\nfile = l.csv\nvalue_column = hw_ft\n"
                           "unit = ft\noffset = 8.2476\n"
                           "[series tw]\nfile = l.csv\nvalue_column = tw\n");
    sw_test_write("l.csv", "time,hw_ft,tw\n"
                        "2025-04-01T00:00:00Z,0.5,7.0\n"
                        "2025-04-01T00:15:00Z,0.5,7.0\n");
    assert_int_equal(run_site(0, &r, &err), SW_OK);
    double m = 1000.0 * 9.81 * 1.5 * 0.16 / 2.0 * (2.0 - 0.4 / 3.0);
    assert_close(r.tally[0].min_fs, 392.4 / m, 1e-9);
}

/* Months in a zone with daylight saving: Europe/Berlin changes to summer
 * time at 01:00 UTC on the last Sunday of March (2025-03-30; Directive
 * 2000/84/EC), so March 2025 there is 31 * 24 - 1 = 743 hours long, and
 * April begins at 2025-03-31T22:00:00Z. */
static void test_months_in_zone(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n"
                           "timezone = Europe/Berlin\nmax_gap = 2d\n" WATERS
                           GATE_V
                           "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                           "[series tw]\nfile = l.csv\nvalue_column = tw\n");
    /* local times without offset, read in the site's zone */
    sw_test_write("l.csv", "time,hw,tw\n"
                        "2025-03-01 00:00,8.1,7.0\n"
                        "2025-03-02 00:00,8.1,7.0\n"
                        "2025-03-29 12:00,8.1,7.0\n"
                        "2025-03-31 00:00,8.1,7.0\n"
                        "2025-04-01 12:00,8.1,7.0\n");
    assert_int_equal(run_site(1, &r, &err), SW_OK);
    assert_int_equal(r.n_months, 2);
    assert_int_equal(r.months[0].yyyymm, 202503);
    assert_int_equal(r.months[1].yyyymm, 202504);
    /* from 2025-03-01 00:00 CET (= 2025-02-28T23:00Z) */
    assert_int_equal(r.months[0].end - r.months[0].start, 743 * H);
    assert_int_equal(r.months[1].end - r.months[1].start, 12 * H);
    /* 2025-03-02 to 03-29 12:00 is 27.5 days > max_gap 2 d (and spans the
     * change, so 27.5 * 24 - 0 hours: the change is on 03-30) */
    assert_int_equal(r.months[0].tally.not_evaluated, 660 * H);
    assert_int_equal(r.months[0].tally.evaluated + r.months[1].tally.evaluated,
                     r.tally[0].evaluated);
}

/* Bad data: time going backwards stops the run with file and line. */
static void test_backwards_time_is_an_error(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n" WATERS
                           GATE_V
                           "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                           "[series tw]\nfile = l.csv\nvalue_column = tw\n");
    sw_test_write("l.csv", "time,hw,tw\n"
                        "2025-04-01T00:00:00Z,8.1,7.0\n"
                        "2025-04-01T00:15:00Z,8.1,7.0\n"
                        "2025-04-01T00:10:00Z,8.1,7.0\n");
    assert_int_equal(run_site(0, &r, &err), SW_EDATA);
    assert_int_equal(err.line, 4);
    assert_non_null(strstr(err.file, "l.csv"));
}

/* A gate without series cannot be replayed. */
static void test_gate_without_series(void **state)
{
    (void)state;
    run_result r;
    sw_error err;
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\n" WATERS
                           "[gate W]\nshape = circle\nhinge_level = 3\n"
                           "inclination = 70\nseal_top = 0.1\ndiameter = 0.6\n"
                           "mass = 90\ncg_along = 0.35\n");
    assert_int_equal(run_site(0, &r, &err), SW_ESITE);
    assert_non_null(strstr(err.message, "gate 'W' has no headwater series"));
}

/* The engine's hours against brute force: the levels of a tidal day with
 * many state changes (and the tailwater crossing the headwater, where the
 * buoyancy changes water) are evaluated at every second of the run on the
 * same linear interpolation; the hours in each state must agree within one
 * second per state change (the engine's resolution).  Two gates: a
 * buoyant rectangle and a circle (reference: the model evaluated
 * directly, sample by sample), on the factor-of-safety basis `basis`. */
static void hours_match_brute_force(const char *basis)
{
    enum { N = 97 };
    char ini[2048];
    double hw[N], tw[N];
    char csv[N * 64 + 64], *q = csv;
    run_result r;
    sw_error err;

    q += sprintf(q, "time,hw,tw\n");
    for (int i = 0; i < N; i++) {
        double h = i * 0.25;
        hw[i] = 11.64 + 0.05 * sin(h / 5.0) + 0.003 * sin(7.7 * h);
        tw[i] = 11.35 + 0.6 * sin(6.283185307 * h / 12.42) + 0.004 * cos(5.1 * h);
        /* round as the file will be read */
        char a[32], b[32];
        sprintf(a, "%.4f", hw[i]);
        sprintf(b, "%.4f", tw[i]);
        hw[i] = atof(a);
        tw[i] = atof(b);
        q += sprintf(q, "2025-04-01T%02d:%02d:00Z,%s,%s\n", (i * 15) / 60,
                     (i * 15) % 60, a, b);
    }
    q += sprintf(q, "2025-04-02T00:00:00Z,%.4f,%.4f\n", hw[N - 1], tw[N - 1]);
    sw_test_write("l.csv", csv);
    snprintf(ini, sizeof ini,
               "[site]\nrequired_fs = 1.5\nmin_sill_reaction = 300\n"
               "fs_basis = %s\n"
               "[water upstream]\ntemperature = 9\n"
               "[water downstream]\ntemperature = 12.5\nsalinity = 8\n"
               "[series hw]\nfile = l.csv\nvalue_column = hw\n"
               "[series tw]\nfile = l.csv\nvalue_column = tw\n"
               "[gate west]\nshape = rectangle\nhinge_level = 12.4\n"
               "inclination = 80\nseal_top = 0.15\nseal_height = 1.4\n"
               "seal_width = 1.6\nleaf_length = 1.65\nmass = 1450\n"
               "cg_along = 0.86\nvolume = 0.185\nextra_moment = 4200\n"
               "headwater = hw\ntailwater = tw\n"
               "[gate bypass]\nshape = circle\nhinge_level = 11.95\n"
               "inclination = 75\nseal_top = 0.12\ndiameter = 0.9\n"
               "leaf_length = 1.1\nmass = 420\ncg_along = 0.55\n"
               "volume = 0.054\nextra_moment = 700\n"
               "headwater = hw\ntailwater = tw\n", basis);
    sw_test_write("site.ini", ini);
    assert_int_equal(run_site(0, &r, &err), SW_OK);

    char path[128];
    sw_site site;
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    for (size_t gi = 0; gi < 2; gi++) {
        long secs[3] = {0, 0, 0}, changes = 0;
        int prev = -1;
        /* 96 intervals of 900 s, then the row at 24:00 repeats the last
         * levels (a flat quarter hour) */
        for (long t = 0; t < 24 * 3600; t++) {
            int i = (int)(t / 900);
            double w = (double)(t % 900) / 900.0;
            double h1 = i + 1 < N ? hw[i + 1] : hw[N - 1];
            double t1 = i + 1 < N ? tw[i + 1] : tw[N - 1];
            sw_gate_result res;
            /* evaluate mid-second: the state held over [t, t+1) */
            w += 0.5 / 900.0;
            sw_gate_evaluate(&site.gates[gi].gate, hw[i] + (h1 - hw[i]) * w,
                             tw[i] + (t1 - tw[i]) * w, &res);
            secs[res.state]++;
            if (prev >= 0 && (int)res.state != prev)
                changes++;
            prev = (int)res.state;
        }
        assert_true(changes >= 4); /* the case has state changes */
        double tol = (double)changes + 1.0;
        assert_close_abs((double)r.tally[gi].low / 1000.0, (double)secs[1], tol);
        assert_close_abs((double)r.tally[gi].open / 1000.0, (double)secs[2], tol);
        assert_int_equal(r.tally[gi].evaluated, 24 * H);
    }
    sw_site_fini(&site);
}

static void test_hours_match_brute_force(void **state)
{
    (void)state;
    hours_match_brute_force("net");
}

static void test_hours_match_brute_force_overturning(void **state)
{
    (void)state;
    hours_match_brute_force("overturning");
}

/* ---- quality tests in the replay ----------------------------------------
 * The tests themselves are checked in test_qc.c (IOOS QARTOD water-level
 * tests, U.S. IOOS Manual for Real-Time Quality Control of Water Level
 * Data); here: that the replay removes exactly the flagged readings. */

/* Levels of two files at different intervals: a headwater every 15 min
 * with spikes, readings out of range and a stuck spell, a tailwater every
 * 10 min; `blank` leaves the headwater's bad readings empty instead. */
static void write_qc_levels(int blank)
{
    static char up[64 * 1024], down[64 * 1024];
    size_t nu = 0, nd = 0;
    unsigned seed = 12345u;
    nu += (size_t)snprintf(up + nu, sizeof up - nu, "time,hw\n");
    nd += (size_t)snprintf(down + nd, sizeof down - nd, "when,tw\n");
    for (int i = 0; i < 4 * 48; i++) {
        seed = seed * 1103515245u + 12345u;
        double hw = 9.2 + 0.5 * sin(i / 9.0) + 1e-3 * (double)(seed >> 22) / 1024.0;
        if (i % 37 == 5)
            hw += 0.9;                   /* spike */
        if (i % 53 == 20)
            hw = -3.0;                   /* out of range */
        if (i >= 100 && i < 120)
            hw = 9.4321;                 /* stuck: the readings from 104
                                            on are flagged (flat 1h) */
        int flagged = (i % 37 == 5) || (i % 53 == 20) || (i >= 104 && i < 120);
        if (blank && flagged)
            nu += (size_t)snprintf(up + nu, sizeof up - nu,
                                   "2025-04-%02dT%02d:%02d:00Z,\n",
                                   1 + i / 96, (i % 96) / 4, (i % 4) * 15);
        else
            nu += (size_t)snprintf(up + nu, sizeof up - nu,
                                   "2025-04-%02dT%02d:%02d:00Z,%.4f\n",
                                   1 + i / 96, (i % 96) / 4, (i % 4) * 15,
                                   hw);
    }
    for (int i = 0; i < 6 * 48; i++)
        nd += (size_t)snprintf(down + nd, sizeof down - nd,
                               "2025-04-%02dT%02d:%02d:00Z,%.4f\n",
                               1 + i / 144, (i % 144) / 6, (i % 6) * 10 + 5,
                               8.3 + 0.3 * cos(i / 7.0));
    sw_test_write("up.csv", up);
    sw_test_write("down.csv", down);
}

#define QC_SITE(file, tests)                                                \
    "[site]\nrequired_fs = 1.5\ngravity = 9.81\nmax_gap = 1h\n" WATERS     \
    GATE_V "[series hw]\nfile = " file "\nvalue_column = hw\n" tests        \
    "[series tw]\nfile = down.csv\ntime_column = when\nvalue_column = tw\n"

/* The headwater's spike test holds each reading until the next, while the
 * tailwater's readings (another file) go on: the timeline takes the held
 * readings in order, and the run gives exactly the hours and events of
 * the same levels with the flagged readings left empty. */
static void test_qc_removes_only_flagged(void **state)
{
    (void)state;
    run_result a, b;
    sw_error err;
    write_qc_levels(0);
    sw_test_write("site.ini", QC_SITE("up.csv", "valid_range = 0, 12\n"
                                                 "spike = 0.3\n"
                                                 "flat = 1h, 0.0005\n"));
    assert_int_equal(run_site(1, &a, &err), SW_OK);
    write_qc_levels(1);
    sw_test_write("site.ini", QC_SITE("up.csv", ""));
    assert_int_equal(run_site(1, &b, &err), SW_OK);
    assert_true(a.n_events > 0);
    assert_int_equal(a.start, b.start);
    assert_int_equal(a.end, b.end);
    assert_int_equal(a.n_events, b.n_events);
    assert_memory_equal(&a.tally[0], &b.tally[0], sizeof a.tally[0]);
    for (size_t i = 0; i < a.n_events; i++) {
        assert_int_equal(a.events[i].start, b.events[i].start);
        assert_int_equal(a.events[i].end, b.events[i].end);
        assert_true(a.events[i].min_fs == b.events[i].min_fs);
    }
    assert_int_equal(a.n_months, b.n_months);
}

/* The account adds up: rows = valid + missing + rejected + flagged +
 * duplicates + rows in a skipped daylight-saving hour, and the flags
 * handed out are those counted. */
static void test_qc_account_adds_up(void **state)
{
    (void)state;
    char path[128];
    sw_site site;
    sw_stepper *st;
    sw_error err;
    int done = 0;
    long handed[2] = {0, 0};
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n"
                              "max_gap = 2h\ntimezone = Europe/Berlin\n"
                              WATERS GATE_V
                              "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                              "valid_range = 7, 12\nspike = 0.2\n"
                              "[series tw]\nfile = l.csv\nvalue_column = tw\n"
                              "max_rate = 1 m/h\n");
    /* 2025-03-30 02:30 does not exist in Berlin (clocks go 02:00 -> 03:00,
     * EU rule) */
    sw_test_write("l.csv", "time,hw,tw\n"
                           "2025-03-30 00:00,9.10,8.00\n"
                           "2025-03-30 00:30,9.11,8.01\n"
                           "2025-03-30 00:30,9.11,8.01\n" /* duplicate */
                           "2025-03-30 01:00,9.95,8.02\n" /* hw spike */
                           "2025-03-30 01:30,9.12,x\n"    /* tw rejected */
                           "2025-03-30 02:30,9.12,8.03\n" /* skipped hour */
                           "2025-03-30 03:00,13.5,8.04\n" /* hw range */
                           "2025-03-30 03:30,9.14,9.50\n" /* tw rate */
                           "2025-03-30 04:00,,8.06\n"     /* hw missing,
                                                             tw rate */
                           "2025-03-30 04:30,9.15,8.07\n");
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_stepper_alloc(&st, &site, NULL, &err), SW_OK);
    for (int last = 0; !last;) {
        if (!done)
            assert_int_equal(sw_stepper_advance(st, &done, &err), SW_OK);
        if (done) {
            assert_int_equal(sw_stepper_finish(st, &err), SW_OK);
            last = 1;
        }
        const sw_stepper_flag *fl;
        size_t n = sw_stepper_flags(st, &fl);
        for (size_t i = 0; i < n; i++)
            handed[fl[i].series]++;
    }
    /* tw has no spike test: its jump to 9.50 (2.92 m/h) is flagged rate,
     * and so is the return to 8.06 (compared with 9.50: 2.88 m/h) */
    long want_flag[2][SW_QC_N_TESTS] = {{1, 1, 0, 0}, {0, 0, 2, 0}};
    for (size_t i = 0; i < 2; i++) {
        const sw_reader_stats *rs = sw_stepper_reader_stats(st, i);
        const sw_column_stats *cs = sw_stepper_column_stats(st, i);
        const sw_qc_stats *q = sw_stepper_qc_stats(st, i);
        long flagged = 0;
        for (int k = 0; k < SW_QC_N_TESTS; k++) {
            assert_int_equal(q->flagged[k], want_flag[i][k]);
            flagged += q->flagged[k];
        }
        assert_int_equal(handed[i], flagged);
        assert_int_equal(rs->records, 10);
        assert_int_equal(rs->duplicates, 1);
        assert_int_equal(rs->time_rejected, 1);
        assert_int_equal(rs->records, (cs->valid - flagged) + cs->missing +
                                          cs->rejected + flagged +
                                          rs->duplicates + rs->time_rejected);
    }
    assert_int_equal(sw_stepper_column_stats(st, 0)->missing, 1);
    assert_int_equal(sw_stepper_column_stats(st, 1)->rejected, 1);
    sw_stepper_free(st);
    sw_site_fini(&site);
}

/* A file whose every reading is flagged has no timeline point: the
 * advances hand the flags out in batches (passing no point) instead of
 * piling them up, and the run ends without data. */
static void test_qc_flags_in_batches(void **state)
{
    (void)state;
    static char text[5000 * 40];
    char path[128];
    size_t n = 0;
    sw_site site;
    sw_stepper *st;
    sw_error err;
    int done = 0;
    long flags = 0, no_point = 0;
    size_t most = 0;
    n += (size_t)snprintf(text + n, sizeof text - n, "time,hw,tw\n");
    for (int i = 0; i < 5000; i++)
        n += (size_t)snprintf(text + n, sizeof text - n,
                              "%lld,31.%d,27.%d\n", 1700000000LL + 60LL * i,
                              i % 10, i % 7);
    sw_test_write("l.csv", text);
    sw_test_write("site.ini", "[site]\nrequired_fs = 1.5\ngravity = 9.81\n"
                              WATERS GATE_V
                              "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                              "time_format = unix\nvalid_range = 7, 12\n"
                              "[series tw]\nfile = l.csv\nvalue_column = tw\n"
                              "time_format = unix\nvalid_range = 7, 12\n");
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_stepper_alloc(&st, &site, NULL, &err), SW_OK);
    while (!done) {
        const sw_stepper_flag *fl;
        assert_int_equal(sw_stepper_advance(st, &done, &err), SW_OK);
        size_t k = sw_stepper_flags(st, &fl);
        flags += (long)k;
        most = k > most ? k : most;
        no_point += !done && !sw_stepper_passed(st);
    }
    assert_int_equal(flags, 10000);
    assert_true(no_point >= 9);
    assert_true(most <= 1024 + 2); /* a batch, and one record's columns */
    assert_false(sw_stepper_has_data(st));
    assert_int_equal(sw_stepper_no_data_error(st, &err), SW_EDATA);
    assert_int_equal(err.line, 2);
    assert_int_equal(err.column, 2); /* hw is the second field */
    assert_non_null(strstr(err.message, "series hw"));
    assert_non_null(strstr(err.message, "series tw"));
    assert_non_null(strstr(err.message, "first flagged"));
    sw_stepper_free(st);
    sw_site_fini(&site);
}

/* 300 series in one file (more than the 128 columns one reader once
 * served): one reader parses the file once for all of them, and each gate
 * gets its own column's levels and counts.  Member k's tailwater is
 * 7 + k/1000 m (below the sill: gate V only sees its headwater), and its
 * column has k % 5 readings blank. */
#define WIDE_MEMBERS 300
#define WIDE_ROWS 12
static void test_wide_file_one_reader(void **state)
{
    (void)state;
    size_t cap = 400 * WIDE_MEMBERS + 256, used;
    char *text = malloc(cap), path[128];
    sw_site site;
    sw_stepper *st;
    sw_error err;
    sw_stepper_options opt = {0, 1, 0};
    int done = 0, steps = 0;

    assert_non_null(text);
    used = (size_t)snprintf(text, cap, "[site]\nrequired_fs = 1.5\n"
                                       "gravity = 9.81\n" WATERS
                                       "[series hw]\nfile = wide.csv\n"
                                       "value_column = hw\n");
    for (int k = 0; k < WIDE_MEMBERS; k++)
        used += (size_t)snprintf(
            text + used, cap - used,
            "[series m%d]\nfile = wide.csv\nvalue_column = tw_%d\n"
            "[gate V%d]\nshape = rectangle\nhinge_level = 10\n"
            "inclination = 90\nseal_top = 0\nseal_height = 2\n"
            "seal_width = 1.5\nmass = 800\ncg_along = 1\n"
            "cg_offset = 0.05\nheadwater = hw\ntailwater = m%d\n",
            k, k, k, k);
    assert_true(used < cap);
    sw_test_write("site.ini", text);
    used = (size_t)snprintf(text, cap, "time,hw");
    for (int k = 0; k < WIDE_MEMBERS; k++)
        used += (size_t)snprintf(text + used, cap - used, ",tw_%d", k);
    used += (size_t)snprintf(text + used, cap - used, "\n");
    for (int r = 0; r < WIDE_ROWS; r++) {
        used += (size_t)snprintf(text + used, cap - used,
                                 "2025-06-01T%02d:00:00Z,9.000", r);
        for (int k = 0; k < WIDE_MEMBERS; k++) {
            if (r >= 1 && r <= k % 5) /* k % 5 blanks, inside the file */
                used += (size_t)snprintf(text + used, cap - used, ",");
            else
                used += (size_t)snprintf(text + used, cap - used, ",%.3f",
                                         7.0 + 0.001 * k);
        }
        used += (size_t)snprintf(text + used, cap - used, "\n");
    }
    assert_true(used < cap);
    sw_test_write("wide.csv", text);
    free(text);

    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_stepper_alloc(&st, &site, &opt, &err), SW_OK);
    assert_int_equal(sw_stepper_n_series(st), WIDE_MEMBERS + 1);
    while (!done) {
        assert_int_equal(sw_stepper_advance(st, &done, &err), SW_OK);
        if (!sw_stepper_passed(st))
            continue;
        steps++;
        for (size_t g = 0; g < site.n_gates; g++) {
            const sw_step_gate *sg = sw_stepper_gate_at(st, g);
            if (sg->known) /* the level its own column holds */
                assert_close(sg->result.tailwater_m, 7.0 + 0.001 * (double)g,
                             1e-12);
        }
    }
    assert_int_equal(sw_stepper_finish(st, &err), SW_OK);
    assert_int_equal(steps, WIDE_ROWS - 1);
    const sw_reader_stats *one = sw_stepper_reader_stats(st, 0);
    assert_int_equal(one->records, WIDE_ROWS);
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        const sw_site_series *sr = sw_stepper_series(st, i);
        const sw_column_stats *cs = sw_stepper_column_stats(st, i);
        long blanks = sr->name[0] == 'm' ? atol(sr->name + 1) % 5 : 0;
        /* the same reader (so the same counts) for every series */
        assert_ptr_equal(sw_stepper_reader_stats(st, i), one);
        assert_int_equal(cs->missing, blanks);
        assert_int_equal(cs->valid, WIDE_ROWS - blanks);
    }
    sw_stepper_free(st);
    sw_site_fini(&site);
}

/* ---- state changes and the final instant -------------------------------- */

#define MAX_CHANGES 512

typedef struct change_run {
    sw_state_change c[MAX_CHANGES];
    size_t n;
    int has_final;
    sw_time_ms final_until;
    sw_tally tally[2];
    sw_event events[64];
    size_t n_events;
    sw_time_ms start, end;
} change_run;

/* Replay site.ini listing the state changes. */
static void run_changes(change_run *out)
{
    char path[128];
    sw_site site;
    sw_stepper *st = NULL;
    sw_stepper_options opt = {0, 0, 0};
    sw_error err;
    int done = 0;

    memset(out, 0, sizeof *out);
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(&site, path, &err), SW_OK);
    assert_int_equal(sw_stepper_alloc(&st, &site, &opt, &err), SW_OK);
    sw_stepper_list_changes(st);
    for (int last = 0; !last;) {
        if (!done)
            assert_int_equal(sw_stepper_advance(st, &done, &err), SW_OK);
        if (done) {
            assert_int_equal(sw_stepper_finish(st, &err), SW_OK);
            last = 1;
        }
        const sw_state_change *c;
        const sw_event *ev;
        size_t n = sw_stepper_changes(st, &c);
        for (size_t i = 0; i < n; i++) {
            assert_true(out->n < MAX_CHANGES);
            out->c[out->n++] = c[i];
        }
        n = sw_stepper_events(st, &ev);
        for (size_t i = 0; i < n; i++) {
            assert_true(out->n_events < 64);
            out->events[out->n_events++] = ev[i];
        }
    }
    out->has_final = sw_stepper_final_until(st, &out->final_until);
    for (size_t g = 0; g < site.n_gates && g < 2; g++)
        out->tally[g] = *sw_stepper_tally(st, g);
    sw_stepper_span(st, &out->start, &out->end);
    sw_stepper_free(st);
    sw_site_fini(&site);
}

/* The changes of a tidal day with a gap (two gates, many changes): the
 * time between them, by state, is exactly each gate's tally; every event
 * begins with a change into low or open and ends with one out of it; the
 * levels at each change are the file's, interpolated linearly (computed
 * here from the rows, not by the library). */
static void test_changes_add_up(void **state)
{
    (void)state;
    enum { N = 97 };
    char csv[N * 64 + 64], *q = csv;
    double hw[N], tw[N];
    change_run r;

    q += sprintf(q, "time,hw,tw\n");
    for (int i = 0; i < N; i++) {
        double h = i * 0.25;
        char a[32], b[32];
        sprintf(a, "%.4f", 11.64 + 0.05 * sin(h / 5.0) + 0.003 * sin(7.7 * h));
        sprintf(b, "%.4f", 11.35 + 0.6 * sin(6.283185307 * h / 12.42));
        hw[i] = atof(a);
        tw[i] = atof(b);
        if (i >= 40 && i < 46)
            continue; /* 1 h 45 min without rows: a gap over max_gap */
        q += sprintf(q, "2025-04-01T%02d:%02d:00Z,%s,%s\n", (i * 15) / 60,
                     (i * 15) % 60, a, b);
    }
    sw_test_write("l.csv", csv);
    sw_test_write("site.ini",
                  "[site]\nrequired_fs = 1.5\nmin_sill_reaction = 300\n"
                  "max_gap = 1h\n"
                  "[water upstream]\ntemperature = 9\n"
                  "[water downstream]\ntemperature = 12.5\nsalinity = 8\n"
                  "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                  "[series tw]\nfile = l.csv\nvalue_column = tw\n"
                  "[gate west]\nshape = rectangle\nhinge_level = 12.4\n"
                  "inclination = 80\nseal_top = 0.15\nseal_height = 1.4\n"
                  "seal_width = 1.6\nleaf_length = 1.65\nmass = 1450\n"
                  "cg_along = 0.86\nvolume = 0.185\nextra_moment = 4200\n"
                  "headwater = hw\ntailwater = tw\n"
                  "[gate bypass]\nshape = circle\nhinge_level = 11.95\n"
                  "inclination = 75\nseal_top = 0.12\ndiameter = 0.9\n"
                  "leaf_length = 1.1\nmass = 420\ncg_along = 0.55\n"
                  "volume = 0.054\nextra_moment = 700\n"
                  "headwater = hw\ntailwater = tw\n");
    run_changes(&r);
    assert_true(r.n >= 8);
    for (size_t g = 0; g < 2; g++) {
        sw_time_ms booked[4] = {0, 0, 0, 0}, from = r.start;
        int cur = SW_STATE_UNKNOWN, n_g = 0;
        for (size_t i = 0; i < r.n; i++) {
            const sw_state_change *c = &r.c[i];
            if (c->gate != g)
                continue;
            n_g++;
            assert_int_equal(c->from, cur);
            assert_true(c->to != c->from);
            assert_true(c->t >= from);
            booked[cur] += c->t - from;
            from = c->t;
            cur = c->to;
            if (c->to == SW_STATE_UNKNOWN) {
                assert_true(isnan(c->hw_m) && isnan(c->fs));
                continue;
            }
            /* the levels at the change, from the rows around it */
            double s = (double)(c->t - r.start) / 1000.0;
            int k = (int)(s / 900.0);
            double w = (s - 900.0 * k) / 900.0;
            int k1 = k + 1 < N ? k + 1 : k;
            if (k >= 39 && k < 46) { /* across the gap: rows 39 and 46 */
                w = (s - 900.0 * 39) / (900.0 * 7);
                k = 39;
                k1 = 46;
            }
            assert_close_abs(c->hw_m, hw[k] + (hw[k1] - hw[k]) * w, 1e-9);
            assert_close_abs(c->tw_m, tw[k] + (tw[k1] - tw[k]) * w, 1e-9);
        }
        booked[cur] += r.end - from;
        assert_true(n_g >= 3);
        assert_int_equal(booked[SW_STATE_LOW], r.tally[g].low);
        assert_int_equal(booked[SW_STATE_OPEN], r.tally[g].open);
        assert_int_equal(booked[SW_STATE_OK] + booked[SW_STATE_LOW] +
                             booked[SW_STATE_OPEN],
                         r.tally[g].evaluated);
        assert_int_equal(booked[SW_STATE_UNKNOWN], r.tally[g].not_evaluated);
    }
    for (size_t e = 0; e < r.n_events; e++) {
        const sw_event *ev = &r.events[e];
        int begins = 0, ends = ev->ends == SW_END_SERIES_END;
        for (size_t i = 0; i < r.n; i++) {
            const sw_state_change *c = &r.c[i];
            if (c->gate != ev->gate)
                continue;
            begins |= c->t == ev->start && c->to != SW_STATE_OK &&
                      c->to != SW_STATE_UNKNOWN &&
                      (c->from == SW_STATE_OK || c->from == SW_STATE_UNKNOWN);
            ends |= c->t == ev->end &&
                    c->to == (ev->ends == SW_END_GAP ? SW_STATE_UNKNOWN
                                                     : SW_STATE_OK);
        }
        assert_true(begins);
        assert_true(ends);
    }
}

/* Cut the two files of write_qc_levels() (a headwater with a spike test)
 * after `rows_up` and `rows_down` rows. */
static void write_cut(const char *name, const char *text, int rows)
{
    static char buf[64 * 1024];
    const char *p = text;
    for (int i = 0; i <= rows && *p != '\0'; i++) {
        const char *nl = strchr(p, '\n');
        p = nl != NULL ? nl + 1 : p + strlen(p);
    }
    memcpy(buf, text, (size_t)(p - text));
    buf[p - text] = '\0';
    sw_test_write(name, buf);
}

static char *slurp_test_file(const char *name)
{
    char path[128];
    snprintf(path, sizeof path, "%s/%s", sw_test_dir(), name);
    FILE *fp = fopen(path, "rb");
    assert_non_null(fp);
    char *buf = calloc(1, 64 * 1024);
    assert_non_null(buf);
    size_t n = fread(buf, 1, 64 * 1024 - 1, fp);
    buf[n] = '\0';
    fclose(fp);
    return buf;
}

/* Levels for the final-instant test: a headwater every 15 min around
 * gate V's thresholds (low from 0.134 m over the sill, open from 0.165 m,
 * hand formula above), with spikes that open the gate for one reading,
 * readings out of range and a stuck spell; the tailwater (another file,
 * every 10 min) stays below the sill. */
static void write_final_levels(void)
{
    static char up[64 * 1024], down[64 * 1024];
    size_t nu = 0, nd = 0;
    unsigned seed = 4242u;
    nu += (size_t)snprintf(up + nu, sizeof up - nu, "time,hw\n");
    nd += (size_t)snprintf(down + nd, sizeof down - nd, "when,tw\n");
    for (int i = 0; i < 4 * 48; i++) {
        seed = seed * 1103515245u + 12345u;
        double hw = 8.15 + 0.04 * sin(i / 5.0) +
                    0.01 * (double)(seed >> 22) / 1024.0;
        if (i % 23 == 5)
            hw += 0.3;                   /* spike */
        if (i % 53 == 20)
            hw = -3.0;                   /* out of range */
        if (i >= 100 && i < 120)
            hw = 8.1432;                 /* stuck */
        nu += (size_t)snprintf(up + nu, sizeof up - nu,
                               "2025-04-%02dT%02d:%02d:00Z,%.4f\n",
                               1 + i / 96, (i % 96) / 4, (i % 4) * 15, hw);
    }
    for (int i = 0; i < 6 * 48; i++)
        nd += (size_t)snprintf(down + nd, sizeof down - nd,
                               "2025-04-%02dT%02d:%02d:00Z,%.4f\n",
                               1 + i / 144, (i % 144) / 6, (i % 6) * 10 + 5,
                               7.0 + 0.2 * cos(i / 7.0));
    sw_test_write("up.csv", up);
    sw_test_write("down.csv", down);
}

/* What the final instant promises: a replay of the files cut short books,
 * before it, exactly the changes (instants, states, levels, fs, bit for
 * bit) that the replay of the whole files books there, at every cut,
 * with spike, flat and range tests on the headwater (a cut right after a
 * spike reading leaves it unjudged until the next one). */
static void test_final_until_holds(void **state)
{
    (void)state;
    static change_run full, part;
    write_final_levels();
    sw_test_write("site.ini", QC_SITE("up.csv", "valid_range = 0, 12\n"
                                                 "spike = 0.2\n"
                                                 "flat = 1h, 0.0005\n"));
    char *up = slurp_test_file("up.csv"), *down = slurp_test_file("down.csv");
    run_changes(&full);
    assert_true(full.n >= 20);
    int checked = 0;
    for (int k = 1; k < 4 * 48; k++) {
        write_cut("up.csv", up, k);
        /* the tailwater (every 10 min) cut near the same time, a little
         * ahead or behind */
        write_cut("down.csv", down, (k * 3) / 2 + (k % 3) - 1);
        run_changes(&part);
        if (!part.has_final)
            continue;
        checked++;
        size_t j = 0;
        for (size_t i = 0; i < full.n && full.c[i].t < part.final_until; i++) {
            /* the same change, in the same order */
            assert_true(j < part.n);
            assert_int_equal(part.c[j].gate, full.c[i].gate);
            assert_int_equal(part.c[j].t, full.c[i].t);
            assert_int_equal(part.c[j].from, full.c[i].from);
            assert_int_equal(part.c[j].to, full.c[i].to);
            assert_memory_equal(&part.c[j].fs, &full.c[i].fs, sizeof(double));
            assert_memory_equal(&part.c[j].hw_m, &full.c[i].hw_m,
                                sizeof(double));
            j++;
        }
        assert_true(j == part.n || part.c[j].t >= part.final_until);
    }
    assert_true(checked > 150);
    free(up);
    free(down);
}

int main(void)
{
    gsl_set_error_handler_off();
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_constant_levels),
        cmocka_unit_test(test_linear_ramp_crossings),
        cmocka_unit_test(test_gaps),
        cmocka_unit_test(test_event_ends_in_gap),
        cmocka_unit_test(test_two_files_interleaved),
        cmocka_unit_test(test_feet_with_offset),
        cmocka_unit_test(test_months_in_zone),
        cmocka_unit_test(test_backwards_time_is_an_error),
        cmocka_unit_test(test_gate_without_series),
        cmocka_unit_test(test_hours_match_brute_force),
        cmocka_unit_test(test_hours_match_brute_force_overturning),
        cmocka_unit_test(test_qc_removes_only_flagged),
        cmocka_unit_test(test_qc_account_adds_up),
        cmocka_unit_test(test_qc_flags_in_batches),
        cmocka_unit_test(test_wide_file_one_reader),
        cmocka_unit_test(test_changes_add_up),
        cmocka_unit_test(test_final_until_holds),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
