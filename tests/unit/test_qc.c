/* Unit tests of the quality-control filter (src/qc.c) against hand-made
 * series.  The tests follow U.S. IOOS, Manual for Real-Time Quality
 * Control of Water Level Data (QARTOD): gross range, spike, rate of
 * change and flat line; the exact definitions checked here are
 * sillwatch's (README, "Quality control"), worked out by hand beside each
 * case. */
#include "testutil.h"

#include <string.h>

#include "sillwatch/qc.h"
#include "sillwatch/site.h"

#define MIN_MS ((sw_time_ms)60000)
#define MAXN 64

/* Feed readings at t[i] minutes with values v[i] (NAN: no reading, i.e.
 * not fed), flush, and put each reading's verdict in test[i] (-2 where no
 * reading was fed).  Checks that every reading fed gets one verdict, in
 * time order. */
static void run(const sw_qc_config *cfg, const double *t_min, const double *v,
                size_t n, int *test)
{
    sw_qc *q;
    sw_error err;
    sw_qc_reading out;
    size_t judged = 0, fed = 0;

    assert_int_equal(sw_qc_alloc(&q, cfg, &err), SW_OK);
    for (size_t i = 0; i < n; i++)
        test[i] = -2;
    for (size_t i = 0; i <= n; i++) {
        int got;
        if (i < n && isnan(v[i]))
            continue;
        if (i < n) {
            sw_qc_reading in = {(sw_time_ms)(t_min[i] * 60000.0), v[i],
                                (long)i + 2, SW_QC_PASS};
            fed++;
            got = sw_qc_push(q, &in, &out);
        } else {
            got = sw_qc_flush(q, &out);
        }
        if (got) {
            size_t k = (size_t)(out.line - 2);
            assert_true(k < n);
            assert_int_equal(test[k], -2);
            test[k] = out.test;
            judged++;
        }
    }
    assert_int_equal(judged, fed);
    sw_qc_free(q);
}

static sw_qc_config base_cfg(void)
{
    sw_qc_config c;
    memset(&c, 0, sizeof c);
    c.max_gap_ms = 60 * MIN_MS;
    return c;
}

/* every 15 min */
static void times(double *t, size_t n)
{
    for (size_t i = 0; i < n; i++)
        t[i] = 15.0 * (double)i;
}

static void test_range(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[5], v[5] = {11.431, 9.998, 11.452, 14.001, 14.0};
    int test[5];
    times(t, 5);
    c.range_set = 1;
    c.range_lo_m = 10.0;
    c.range_hi_m = 14.0;
    run(&c, t, v, 5, test);
    /* outside [10, 14] only; the bounds themselves are inside */
    assert_int_equal(test[0], SW_QC_PASS);
    assert_int_equal(test[1], SW_QC_RANGE);
    assert_int_equal(test[2], SW_QC_PASS);
    assert_int_equal(test[3], SW_QC_RANGE);
    assert_int_equal(test[4], SW_QC_PASS);
}

/* The demo's spike: 11.451, 13.049, 11.447.  |13.049 - 11.449| - 0.002 =
 * 1.598 > 0.25: flagged; its neighbours each have the spike as one
 * neighbour: e.g. for 11.451 after 11.452: |11.451 - (11.452 + 13.049)/2|
 * - |13.049 - 11.452|/2 = 0.7995 - 0.7985 = 0.001: kept. */
static void test_spike_middle(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[5], v[5] = {11.452, 11.451, 13.049, 11.447, 11.446};
    int test[5];
    times(t, 5);
    c.spike_m = 0.25;
    run(&c, t, v, 5, test);
    for (int i = 0; i < 5; i++)
        assert_int_equal(test[i], i == 2 ? SW_QC_SPIKE : SW_QC_PASS);
}

/* A spike as the first or the last reading of a file has one neighbour:
 * not tested, kept (the rate test, when on, is what can catch it). */
static void test_spike_at_ends(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[4], v[4] = {13.049, 11.451, 11.450, 13.2};
    int test[4];
    times(t, 4);
    c.spike_m = 0.25;
    run(&c, t, v, 4, test);
    for (int i = 0; i < 4; i++)
        assert_int_equal(test[i], SW_QC_PASS);
    /* with the rate test on (0.5 m/h): the last one rises 1.75 m in
     * 15 min = 7 m/h: rate; the first has no reading before it */
    c.rate_m_per_h = 0.5;
    run(&c, t, v, 4, test);
    assert_int_equal(test[0], SW_QC_PASS);
    assert_int_equal(test[1], SW_QC_RATE); /* 6.4 m/h down from the first */
    assert_int_equal(test[2], SW_QC_PASS);
    assert_int_equal(test[3], SW_QC_RATE);
}

/* Next to a gap: a neighbour farther than max_gap (1 h) does not count. */
static void test_spike_next_to_gap(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[4] = {0, 15, 90, 105}, v[4] = {11.45, 11.45, 13.0, 11.45};
    int test[4];
    c.spike_m = 0.25;
    run(&c, t, v, 4, test);
    /* 13.0 at 90 min: its reading before is 75 min away: untested */
    assert_int_equal(test[2], SW_QC_PASS);
    /* the same with the gap closed to 60 min exactly: tested, flagged */
    t[2] = 75;
    t[3] = 90;
    run(&c, t, v, 4, test);
    assert_int_equal(test[2], SW_QC_SPIKE);
}

/* A reading that failed the range test is no neighbour: the spike test
 * reaches over it to the next reading that passed. */
static void test_spike_skips_range_failure(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[5], v[5] = {11.45, 13.0, -99.0, 11.45, 11.44};
    int test[5];
    times(t, 5);
    c.spike_m = 0.25;
    c.range_set = 1;
    c.range_lo_m = 0.0;
    c.range_hi_m = 20.0;
    run(&c, t, v, 5, test);
    assert_int_equal(test[1], SW_QC_SPIKE);
    assert_int_equal(test[2], SW_QC_RANGE);
    assert_int_equal(test[3], SW_QC_PASS);
}

/* Two equal spikes in a row pass the spike test (each has the other as a
 * neighbour: |13 - (11.45 + 13)/2| - 1.55/2 = 0); the rate test flags the
 * first, and the return to 11.45 (compared with the second, kept): the
 * known limit the README states. */
static void test_two_spikes(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[6], v[6] = {11.45, 11.45, 13.0, 13.0, 11.45, 11.45};
    int test[6];
    times(t, 6);
    c.spike_m = 0.25;
    run(&c, t, v, 6, test);
    for (int i = 0; i < 6; i++)
        assert_int_equal(test[i], SW_QC_PASS);
    c.rate_m_per_h = 1.0;
    run(&c, t, v, 6, test);
    assert_int_equal(test[2], SW_QC_RATE);
    assert_int_equal(test[3], SW_QC_PASS);
    assert_int_equal(test[4], SW_QC_RATE);
    assert_int_equal(test[5], SW_QC_PASS);
}

/* A true step (a gate opening upstream, a pump starting) is no spike:
 * |12.2 - (11.4 + 12.2)/2| - 0.8/2 = 0.  The rate test flags its first
 * reading only (3.2 m/h > 1 m/h), and the readings after it compare with
 * that one: kept. */
static void test_step_is_no_spike(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[6], v[6] = {11.4, 11.4, 12.2, 12.2, 12.21, 12.2};
    int test[6];
    times(t, 6);
    c.spike_m = 0.25;
    c.rate_m_per_h = 1.0;
    run(&c, t, v, 6, test);
    for (int i = 0; i < 6; i++)
        assert_int_equal(test[i], i == 2 ? SW_QC_RATE : SW_QC_PASS);
}

/* The good reading after a spike is compared with the one before the
 * spike, not with the spike: kept. */
static void test_rate_after_spike(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[4], v[4] = {11.451, 13.049, 11.447, 11.446};
    int test[4];
    times(t, 4);
    c.spike_m = 0.25;
    c.rate_m_per_h = 0.5;
    run(&c, t, v, 4, test);
    assert_int_equal(test[1], SW_QC_SPIKE);
    assert_int_equal(test[2], SW_QC_PASS); /* 0.004 m in 30 min */
    assert_int_equal(test[3], SW_QC_PASS);
}

/* The rate is the change divided by the time between the readings: 0.3 m
 * in 30 min is 0.6 m/h, over 0.5 m/h; 0.3 m in 45 min is 0.4 m/h. */
static void test_rate_over_time(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[3] = {0, 30, 75}, v[3] = {11.0, 11.3, 11.6};
    int test[3];
    c.rate_m_per_h = 0.5;
    run(&c, t, v, 3, test);
    assert_int_equal(test[0], SW_QC_PASS);
    assert_int_equal(test[1], SW_QC_RATE);
    assert_int_equal(test[2], SW_QC_PASS);
}

/* Flat line, DURATION 2 h, TOL 1 mm, readings every 15 min: a spell
 * within 1 mm of the reading flags it once 2 h of such readings precede
 * it; a spell shorter than 2 h is never flagged. */
static void test_flat_spells(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    enum { N = 30 };
    double t[N], v[N];
    int test[N];
    times(t, N);
    c.flat_ms = 120 * MIN_MS;
    c.flat_tol_m = 0.001;
    /* moving, then stuck at 11.2345 (+-0.0004) from i = 6 to 20, then
     * moving again */
    for (int i = 0; i < N; i++)
        v[i] = 11.0 + 0.01 * i;
    for (int i = 6; i <= 20; i++)
        v[i] = 11.2345 + ((i % 2) ? 0.0004 : -0.0004);
    run(&c, t, v, N, test);
    /* reading i is flagged when readings 6 .. i-1 span 2 h: i - 8 >= 6,
     * i.e. i >= 14 (readings 6..13 in [t - 2h, t) = 8 readings, all within
     * 0.8 mm) */
    for (int i = 0; i < N; i++)
        assert_int_equal(test[i], (i >= 14 && i <= 20) ? SW_QC_FLAT
                                                       : SW_QC_PASS);
    /* a spell of 1 h 45 min (readings 6..13 stuck, 14 moves) is never
     * flagged */
    for (int i = 0; i < N; i++)
        v[i] = 11.0 + 0.01 * i;
    for (int i = 6; i <= 13; i++)
        v[i] = 11.2345;
    run(&c, t, v, N, test);
    for (int i = 0; i < N; i++)
        assert_int_equal(test[i], SW_QC_PASS);
}

/* The flat test needs readings over the whole DURATION: after a gap
 * longer than max_gap, a spell is counted from the gap on. */
static void test_flat_after_gap(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    double t[8] = {0, 15, 30, 200, 215, 230, 245, 260};
    double v[8] = {11.5, 11.5, 11.5, 11.5, 11.5, 11.5, 11.5, 11.5};
    int test[8];
    c.flat_ms = 45 * MIN_MS;
    c.flat_tol_m = 0.001;
    run(&c, t, v, 8, test);
    /* 0, 15 too early; 30: [−15, 30) needs a run since -15: no (run
     * started at 0); after the gap the run starts at 200: 245 is the first
     * with 45 min behind it (200, 215, 230) */
    for (int i = 0; i < 8; i++)
        assert_int_equal(test[i], i >= 6 ? SW_QC_FLAT : SW_QC_PASS);
}

/* Readings more frequent than DURATION / 1024 share blocks: the memory
 * stays at the blocks, and a stuck spell is still flagged (one reading a
 * second for 3 h, DURATION 1 h). */
static void test_flat_frequent(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    sw_qc *q;
    sw_error err;
    sw_qc_reading out;
    long flagged = 0, first = -1;
    c.flat_ms = 60 * MIN_MS;
    c.flat_tol_m = 0.002;
    assert_int_equal(sw_qc_alloc(&q, &c, &err), SW_OK);
    for (long s = 0; s < 3 * 3600; s++) {
        double v = s < 1800 ? 10.0 + 1e-4 * (double)s : 10.1803;
        sw_qc_reading in = {s * 1000, v, s, SW_QC_PASS};
        assert_int_equal(sw_qc_push(q, &in, &out), 1);
        if (out.test == SW_QC_FLAT && flagged++ == 0)
            first = s;
    }
    sw_qc_free(q);
    /* stuck from s = 1800; the readings of [s - 3600, s) are all within
     * 2 mm of 10.1803 once s - 3600 >= 1783 (10.1783 m), s >= 5383 (one
     * second either way for rounding); the block straddling the window's
     * start (3.5 s wide) counts whole, so the first flag may come up to
     * 4 s later */
    assert_true(first >= 5382 && first <= 5388);
    assert_int_equal(flagged, 3 * 3600 - first);
}

/* expire releases a held reading once max_gap has passed without a next
 * reading: untested for spikes. */
static void test_expire(void **state)
{
    (void)state;
    sw_qc_config c = base_cfg();
    sw_qc *q;
    sw_error err;
    sw_qc_reading out, a = {0, 11.4, 2, 0}, b = {15 * MIN_MS, 13.0, 3, 0};
    sw_time_ms held;
    c.spike_m = 0.25;
    assert_int_equal(sw_qc_alloc(&q, &c, &err), SW_OK);
    assert_int_equal(sw_qc_push(q, &a, &out), 0);
    assert_int_equal(sw_qc_push(q, &b, &out), 1);
    assert_int_equal(out.line, 2);
    assert_true(sw_qc_held(q, &held));
    assert_true(held == 15 * MIN_MS);
    assert_int_equal(sw_qc_expire(q, 75 * MIN_MS, &out), 0); /* 60 min */
    assert_int_equal(sw_qc_expire(q, 75 * MIN_MS + 1, &out), 1);
    assert_int_equal(out.line, 3);
    assert_int_equal(out.test, SW_QC_PASS);
    assert_false(sw_qc_held(q, &held));
    assert_int_equal(sw_qc_flush(q, &out), 0);
    sw_qc_free(q);
}

static void test_count(void **state)
{
    (void)state;
    sw_qc_stats s;
    memset(&s, 0, sizeof s);
    for (long i = 0; i < 13; i++) {
        sw_qc_reading r = {i, 1.0, i + 2, (int)(i % 4)};
        sw_qc_count(&s, &r);
    }
    sw_qc_reading pass = {99, 1.0, 99, SW_QC_PASS};
    sw_qc_count(&s, &pass);
    assert_int_equal(s.flagged[SW_QC_RANGE], 4);
    assert_int_equal(s.flagged[SW_QC_SPIKE], 3);
    assert_int_equal(s.flagged[SW_QC_RATE], 3);
    assert_int_equal(s.flagged[SW_QC_FLAT], 3);
    assert_int_equal(s.n_kept, SW_QC_KEPT);
    assert_int_equal(s.kept[9].line, 11);
    assert_string_equal(sw_qc_test_name(SW_QC_FLAT), "flat");
}

/* Plausibility rules of thumb (ours, not published; README): mass per
 * sealed area within 5 to 2000 kg/m^2, levels within 10 m of the gates. */
static void test_plausibility(void **state)
{
    (void)state;
    sw_gate g;
    sw_site site;
    sw_site_gate gates[2];
    double kg, lo, hi;
    memset(&g, 0, sizeof g);
    g.area_m2 = 2.7;
    g.mass_kg = 1.45; /* tonnes typed for kg: 0.54 kg/m^2 */
    assert_true(sw_qc_mass_implausible(&g, &kg));
    assert_close(kg, 1.45 / 2.7, 1e-12);
    g.mass_kg = 1720.0; /* 637 kg/m^2 */
    assert_false(sw_qc_mass_implausible(&g, &kg));
    g.mass_kg = 5.0 * 2.7; /* the bounds themselves pass */
    assert_false(sw_qc_mass_implausible(&g, &kg));
    g.mass_kg = 2000.0 * 2.7 * 1.001;
    assert_true(sw_qc_mass_implausible(&g, &kg));

    memset(&site, 0, sizeof site);
    memset(gates, 0, sizeof gates);
    site.n_gates = 2;
    site.gates = gates;
    snprintf(gates[0].headwater, sizeof gates[0].headwater, "res");
    snprintf(gates[0].tailwater, sizeof gates[0].tailwater, "out");
    gates[0].gate.hinge_level_m = 12.6;
    gates[0].gate.sill_level_m = 10.957;
    snprintf(gates[1].headwater, sizeof gates[1].headwater, "res");
    gates[1].gate.hinge_level_m = 12.1;
    gates[1].gate.sill_level_m = 11.231;
    /* the highest hinge (12.6) + 10, the lowest sill (10.957) - 10 */
    assert_true(sw_qc_plausible_band(&site, "res", &lo, &hi));
    assert_close(hi, 22.6, 1e-12);
    assert_close(lo, 0.957, 1e-9);
    assert_true(sw_qc_plausible_band(&site, "out", &lo, &hi));
    assert_false(sw_qc_plausible_band(&site, "other", &lo, &hi));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_range),
        cmocka_unit_test(test_spike_middle),
        cmocka_unit_test(test_spike_at_ends),
        cmocka_unit_test(test_spike_next_to_gap),
        cmocka_unit_test(test_spike_skips_range_failure),
        cmocka_unit_test(test_two_spikes),
        cmocka_unit_test(test_step_is_no_spike),
        cmocka_unit_test(test_rate_after_spike),
        cmocka_unit_test(test_rate_over_time),
        cmocka_unit_test(test_flat_spells),
        cmocka_unit_test(test_flat_after_gap),
        cmocka_unit_test(test_flat_frequent),
        cmocka_unit_test(test_expire),
        cmocka_unit_test(test_count),
        cmocka_unit_test(test_plausibility),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
