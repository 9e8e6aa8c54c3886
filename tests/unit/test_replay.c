/* Unit tests of the replay session (src/replay.c): the step log with its
 * remembered critical levels equals, byte for byte, the rows written from
 * a fresh critical-level search at every point; the session's outputs do
 * not depend on how it is fed; a session freed before it finishes leaves
 * the folder's previous set alone. */
#include "testutil.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <dirent.h>
#include <sys/stat.h>

#include <gsl/gsl_errno.h>

#include "sillwatch/replay.h"
#include "sillwatch/report.h"

/* Two invented gates (a vertical rectangle and an inclined circle with a
 * buoyant leaf) whose critical tailwaters are needed over much of the
 * record; a tidal tailwater crosses them.  Invented test data. */
/* 20,000 rows at 15 min: the headwater to the millimetre (so headwaters
 * repeat, as a gauge's do), the tailwater a tide; a gap of 3 h.  The step
 * log's 40,000 rows (2.8 MB) go round the step log's ring of batches and
 * the output sink's ring of chunks several times. */
static void write_levels(void)
{
    static char text[20000 * 48 + 32];
    size_t n = 0;
    unsigned seed = 2718u;
    n += (size_t)snprintf(text + n, sizeof text - n, "time,hw,tw\n");
    for (int i = 0; i < 20000; i++) {
        if (i >= 900 && i < 912)
            continue; /* a gap longer than max_gap */
        seed = seed * 1103515245u + 12345u;
        double hw = 9.1 + 0.6 * sin(i / 150.0) +
                    0.003 * (double)(seed >> 29);
        double tw = 8.4 + 0.9 * sin(i / 24.7);
        long t = 1735689600L + 900L * i;
        n += (size_t)snprintf(text + n, sizeof text - n, "%ld,%.3f,%.3f\n", t,
                              hw, tw);
    }
    sw_test_write("l.csv", text);
}

static void load_site(sw_site *site)
{
    char path[128];
    sw_error err;
    sw_test_write("site.ini",
                  "[site]\nrequired_fs = 1.5\ngravity = 9.81\nmax_gap = 2h\n"
                  "[water upstream]\ndensity = 1000\n"
                  "[water downstream]\ndensity = 1000\n"
                  "[gate V]\nshape = rectangle\nhinge_level = 10\n"
                  "inclination = 90\nseal_top = 0\nseal_height = 2\n"
                  "seal_width = 1.5\nmass = 800\ncg_along = 1\n"
                  "cg_offset = 0.05\nheadwater = hw\ntailwater = tw\n"
                  "[gate C]\nshape = circle\nhinge_level = 10.2\n"
                  "inclination = 75\nseal_top = 0.1\ndiameter = 1.2\n"
                  "mass = 450\ncg_along = 0.7\ncg_offset = 0.08\n"
                  "volume = 0.05\nheadwater = hw\ntailwater = tw\n"
                  "[series hw]\nfile = l.csv\nvalue_column = hw\n"
                  "time_format = unix\n"
                  "[series tw]\nfile = l.csv\nvalue_column = tw\n"
                  "time_format = unix\n");
    write_levels();
    snprintf(path, sizeof path, "%s/site.ini", sw_test_dir());
    assert_int_equal(sw_site_load(site, path, &err), SW_OK);
}

static int mkdir_at(const char *dir)
{
    return mkdir(dir, 0777);
}

/* Entries of a folder but . and .. */
static int count_entries(const char *dir)
{
    DIR *d = opendir(dir);
    struct dirent *e;
    int n = 0;
    assert_non_null(d);
    while ((e = readdir(d)) != NULL)
        n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
    closedir(d);
    return n;
}

/* The whole of a file, NUL-terminated (the caller frees). */
static char *slurp(const char *dir, const char *name, size_t *len)
{
    char path[256];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *fp = fopen(path, "rb");
    if (fp == NULL)
        return NULL;
    fseek(fp, 0, SEEK_END);
    long n = ftell(fp);
    rewind(fp);
    char *buf = malloc((size_t)n + 1);
    assert_non_null(buf);
    assert_int_equal(fread(buf, 1, (size_t)n, fp), (size_t)n);
    buf[n] = '\0';
    fclose(fp);
    *len = (size_t)n;
    return buf;
}

/* Replay the site into `dir`, fed `batch` points at a time. */
static void replay_into(const sw_site *site, const char *dir, long batch)
{
    sw_replay *rp;
    sw_error err;
    sw_replay_options opt = {1, 1, 0, 1};
    sw_replay_meta meta = {"test", "", "2026-01-01T00:00:00Z", "caution",
                           NULL};
    int done = 0;
    assert_int_equal(sw_replay_open(&rp, site, dir, &opt, &err), SW_OK);
    while (!done)
        assert_int_equal(sw_replay_feed(rp, batch, &done, &err), SW_OK);
    assert_int_equal(sw_replay_finish(rp, &meta, &err), SW_OK);
    assert_true(sw_replay_points(rp) > 1000);
    sw_replay_free(rp);
}

/* The step log as the engine and a fresh critical-level search at every
 * point give it, without the session (the path before the cache). */
static char *steps_direct(const sw_site *site, size_t *len)
{
    char *buf = NULL;
    FILE *fp = open_memstream(&buf, len);
    sw_stepper *st;
    sw_stepper_options sopt = {0, 1, 0};
    sw_error err;
    int done = 0;

    assert_non_null(fp);
    sw_report_steps_header(fp);
    assert_int_equal(sw_stepper_alloc(&st, site, &sopt, &err), SW_OK);
    for (int last = 0; !last;) {
        if (!done)
            assert_int_equal(sw_stepper_advance(st, &done, &err), SW_OK);
        if (done) {
            assert_int_equal(sw_stepper_finish(st, &err), SW_OK);
            last = 1;
        }
        if (!sw_stepper_passed(st))
            continue;
        char when[64];
        sw_time_format(when, sizeof when, sw_stepper_time(st), site->zone);
        for (size_t g = 0; g < site->n_gates; g++) {
            const sw_step_gate *sg = sw_stepper_gate_at(st, g);
            const sw_gate *gate = &site->gates[g].gate;
            sw_crit a, o;
            if (!sg->known)
                continue;
            int ok = sw_gate_critical_tailwater(gate, sg->result.headwater_m,
                                                SW_LIMIT_ALARM, &a,
                                                &err) == SW_OK &&
                     sw_gate_critical_tailwater(gate, sg->result.headwater_m,
                                                SW_LIMIT_OPEN, &o,
                                                &err) == SW_OK;
            sw_report_step_row(fp, when, gate->name, &sg->result,
                               ok ? &a : NULL, ok ? &o : NULL);
        }
    }
    sw_stepper_free(st);
    fclose(fp);
    return buf;
}

static void test_steps_equal_direct_search(void **state)
{
    (void)state;
    sw_site site;
    char dir[128];
    size_t n_got, n_want;
    load_site(&site);
    snprintf(dir, sizeof dir, "%s", sw_test_dir());
    replay_into(&site, dir, 1 << 20);
    char *got = slurp(dir, "steps.csv", &n_got);
    char *want = steps_direct(&site, &n_want);
    assert_non_null(got);
    /* tw_alarm and tw_open are needed on many rows: the check has teeth */
    assert_non_null(strstr(want, ",low,"));
    assert_int_equal(n_got, n_want);
    assert_memory_equal(got, want, n_want);
    free(got);
    free(want);
    sw_site_fini(&site);
}

/* Fed one point at a time or all at once: the same files. */
static void test_feeding_does_not_matter(void **state)
{
    (void)state;
    static const char *const names[] = {"summary.csv", "events.csv",
                                        "steps.csv", "months.csv",
                                        "flags.csv", "summary.json"};
    sw_site site;
    char a[128], b[128];
    load_site(&site);
    snprintf(a, sizeof a, "%s", sw_test_dir());
    snprintf(b, sizeof b, "%s/one", sw_test_dir());
    assert_int_equal(mkdir_at(b), 0);
    replay_into(&site, a, 1 << 20);
    replay_into(&site, b, 1);
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
        size_t na, nb;
        char *x = slurp(a, names[i], &na), *y = slurp(b, names[i], &nb);
        assert_non_null(x);
        assert_non_null(y);
        assert_int_equal(na, nb);
        assert_memory_equal(x, y, na);
        free(x);
        free(y);
    }
    sw_site_fini(&site);
}

/* A session freed halfway leaves the previous set as it was and no
 * temporary file behind. */
static void test_unfinished_leaves_previous_set(void **state)
{
    (void)state;
    sw_site site;
    sw_replay *rp;
    sw_error err;
    sw_replay_options opt = {1, 0, 0, 0};
    char dir[128];
    size_t n_before, n_after;
    int done = 0;
    load_site(&site);
    snprintf(dir, sizeof dir, "%s/half", sw_test_dir());
    assert_int_equal(mkdir_at(dir), 0);
    replay_into(&site, dir, 1 << 20);
    char *before = slurp(dir, "manifest.csv", &n_before);
    assert_non_null(before);
    assert_int_equal(sw_replay_open(&rp, &site, dir, &opt, &err), SW_OK);
    assert_int_equal(sw_replay_feed(rp, 100, &done, &err), SW_OK);
    assert_false(done);
    sw_replay_free(rp);
    char *after = slurp(dir, "manifest.csv", &n_after);
    assert_non_null(after);
    assert_int_equal(n_before, n_after);
    assert_memory_equal(before, after, n_before);
    /* the set's six files and the manifest, nothing else */
    assert_int_equal(count_entries(dir), 7);
    free(before);
    free(after);
    sw_site_fini(&site);
}

int main(void)
{
    gsl_set_error_handler_off();
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_steps_equal_direct_search),
        cmocka_unit_test(test_feeding_does_not_matter),
        cmocka_unit_test(test_unfinished_leaves_previous_set),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
