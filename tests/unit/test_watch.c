/* Unit tests of the live watch's library parts: the follower and its
 * mirror (src/follow.c), the commands run for notices (src/cmdqueue.c),
 * the watch session (src/watch.c: alarms, hold, staleness, checkpoint,
 * resume).  Invented test data. */
#include "testutil.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "sillwatch/cmdqueue.h"
#include "sillwatch/follow.h"
#include "sillwatch/watch.h"

/* The vertical leaf of test_stepper.c (gate V): hinge 10 m, sill 8 m,
 * 1.5 m wide, weight moment 392.4 N*m: with the tailwater below the sill
 * it is low from 0.134 m of headwater over the sill, open from 0.165 m
 * (triangular pressure prism, common practice, no source). */
#define SITE_V(file)                                                        \
    "[site]\nrequired_fs = 1.5\ngravity = 9.81\nmax_gap = 1h\n"            \
    "[water upstream]\ndensity = 1000\n[water downstream]\ndensity = 1000\n" \
    "[gate V]\nshape = rectangle\nhinge_level = 10\ninclination = 90\n"     \
    "seal_top = 0\nseal_height = 2\nseal_width = 1.5\nmass = 800\n"         \
    "cg_along = 1\ncg_offset = 0.05\nheadwater = hw\ntailwater = tw\n"      \
    "[series hw]\nfile = " file "\nvalue_column = hw\n"                     \
    "[series tw]\nfile = " file "\nvalue_column = tw\n"


static const char *path_of(const char *name)
{
    static char buf[4][256];
    static int k;
    k = (k + 1) % 4;
    snprintf(buf[k], sizeof buf[k], "%s/%s", sw_test_dir(), name);
    return buf[k];
}

/* Row i: every 15 min from 2025-04-01T00:00:00Z; the headwater `hw`. */
static const char *row(int i, double hw)
{
    static char buf[4][96];
    static int k;
    k = (k + 1) % 4;
    snprintf(buf[k], sizeof buf[k], "2025-04-%02dT%02d:%02d:00Z,%.4f,7.0000\n",
             1 + i / 96, (i % 96) / 4, (i % 4) * 15, hw);
    return buf[k];
}

static void append(const char *name, const char *text)
{
    FILE *fp = fopen(path_of(name), "a");
    assert_non_null(fp);
    fputs(text, fp);
    fclose(fp);
}

static char *slurp(const char *name)
{
    FILE *fp = fopen(path_of(name), "rb");
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
    return buf;
}

static void assert_file(const char *name, const char *want)
{
    char *got = slurp(name);
    assert_non_null(got);
    assert_string_equal(got, want);
    free(got);
}

static void load(sw_site *site, const char *ini)
{
    sw_error err;
    sw_test_write("site.ini", ini);
    assert_int_equal(sw_site_load(site, path_of("site.ini"), &err), SW_OK);
}

/* ---- records ------------------------------------------------------------ */

static void test_record_end(void **state)
{
    (void)state;
    /* a quoted field over two lines is one record */
    const char *a = "time,v\n2025-04-01T00:00Z,\"1\n2\"\n2025-04-01T00:15Z,3";
    assert_int_equal(sw_follow_record_end(a, strlen(a), 1),
                     strlen(a) - strlen("2025-04-01T00:15Z,3"));
    /* cut inside the quoted field: only the header is complete */
    assert_int_equal(sw_follow_record_end(a, 27, 1), 7);
    /* a comment's quote opens nothing */
    const char *b = "# a \"quoted\" note \"\ntime,v\n";
    assert_int_equal(sw_follow_record_end(b, strlen(b), 1), strlen(b));
    /* a byte-order mark, then a comment; CRLF ends */
    const char *c = "\xEF\xBB\xBF# note \"\r\ntime,v\r\nx";
    assert_int_equal(sw_follow_record_end(c, strlen(c), 1), strlen(c) - 1);
    /* nothing complete */
    assert_int_equal(sw_follow_record_end("time,v", 6, 1), 0);
    /* '#' inside a quoted field that spans lines is no comment */
    const char *d = "x,\"a\n#b\"\ny";
    assert_int_equal(sw_follow_record_end(d, strlen(d), 0), strlen(d) - 1);
}

/* ---- the follower ------------------------------------------------------- */

typedef struct fx {
    sw_site site;
    sw_follow *f;
} fx;

static void fx_open(fx *x, const sw_follow_pos *resume, int expect)
{
    sw_error err;
    assert_int_equal(sw_follow_open(&x->f, &x->site, &x->site.series[0],
                                    path_of("mirror.csv"),
                                    path_of("scan.csv"), resume, &err),
                     expect);
}

static unsigned long long fx_poll(fx *x)
{
    unsigned long long n;
    sw_error err;
    assert_int_equal(sw_follow_poll(x->f, &n, &err), SW_OK);
    return n;
}

/* Rows [from, to) with a constant headwater. */
static void rows_text(char *buf, size_t n, int from, int to)
{
    size_t used = 0;
    buf[0] = '\0';
    for (int i = from; i < to; i++)
        used += (size_t)snprintf(buf + used, n - used, "%s", row(i, 8.1));
}

/* Complete records are taken, a partial one waits for its line end. */
static void test_follow_appends(void **state)
{
    (void)state;
    fx x;
    char want[4096], more[1024];
    load(&x.site, SITE_V("l.csv"));
    rows_text(more, sizeof more, 0, 3);
    snprintf(want, sizeof want, "time,hw,tw\n%s", more);
    sw_test_write("l.csv", want);
    append("l.csv", "2025-04-01T00:45:0");
    fx_open(&x, NULL, SW_OK);
    assert_int_equal(fx_poll(&x), strlen(want));
    assert_file("mirror.csv", want);
    assert_int_equal(fx_poll(&x), 0);
    append("l.csv", "0Z,8.1000,7.0000\n");
    append("l.csv", row(4, 8.1));
    rows_text(more, sizeof more, 3, 5);
    strcat(want, more);
    assert_int_equal(fx_poll(&x), strlen(row(3, 8.1)) * 2);
    assert_file("mirror.csv", want);
    sw_follow_pos p;
    sw_follow_get_pos(x.f, &p);
    assert_int_equal(p.offset, strlen(want));
    assert_int_equal(p.mirror_size, strlen(want));
    assert_int_equal(p.restarts, 0);
    sw_follow_free(x.f);
    sw_site_fini(&x.site);
}

/* A rotation: rows written to the old file before it was moved are read
 * first; the new file's rows up to the mirror's last are skipped. */
static void test_follow_rotation(void **state)
{
    (void)state;
    fx x;
    char text[8192], rows[4096];
    sw_error err;
    load(&x.site, SITE_V("l.csv"));
    rows_text(rows, sizeof rows, 0, 5);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    sw_test_write("l.csv", text);
    fx_open(&x, NULL, SW_OK);
    fx_poll(&x);
    append("l.csv", row(5, 8.1));
    append("l.csv", row(6, 8.1));
    assert_int_equal(rename(path_of("l.csv"), path_of("l.csv.1")), 0);
    rows_text(rows, sizeof rows, 5, 9); /* 5 and 6 again, then 7, 8 */
    snprintf(text, sizeof text, "# rotated\ntime,hw,tw\n%s", rows);
    sw_test_write("l.csv", text);
    /* rows 5, 6 from the old file, then 7, 8 from the new one */
    assert_int_equal(fx_poll(&x), 4 * strlen(row(5, 8.1)));
    rows_text(rows, sizeof rows, 0, 9);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    assert_file("mirror.csv", text);
    sw_follow_pos p;
    sw_follow_get_pos(x.f, &p);
    assert_int_equal(p.restarts, 1);
    assert_int_equal(p.copy_from, strlen("# rotated\ntime,hw,tw\n") +
                                      2 * strlen(row(5, 8.1)));
    assert_int_equal(strlen(p.head_sha), 64);
    sw_follow_free(x.f);

    /* resume: a row more is taken */
    fx_open(&x, &p, SW_OK);
    append("l.csv", row(9, 8.1));
    assert_int_equal(fx_poll(&x), strlen(row(9, 8.1)));
    sw_follow_get_pos(x.f, &p);
    sw_follow_free(x.f);

    /* the skipped head changed behind the checkpoint: refused */
    char *now = slurp("l.csv");
    now[strlen("# rotated\ntime,hw,tw\n") + 3] = '6'; /* 2026 */
    sw_test_write("l.csv", now);
    assert_int_equal(sw_follow_open(&x.f, &x.site, &x.site.series[0],
                                    path_of("mirror.csv"),
                                    path_of("scan.csv"), &p, &err),
                     SW_EDATA);
    assert_non_null(strstr(err.message, "--restart"));
    /* and a copied row that changed */
    now[strlen("# rotated\ntime,hw,tw\n") + 3] = '5';
    now[strlen(now) - 3] = '9';
    sw_test_write("l.csv", now);
    assert_int_equal(sw_follow_open(&x.f, &x.site, &x.site.series[0],
                                    path_of("mirror.csv"),
                                    path_of("scan.csv"), &p, &err),
                     SW_EDATA);
    assert_non_null(strstr(err.message, "have changed"));
    free(now);
    sw_site_fini(&x.site);
    unlink(path_of("l.csv.1"));
}

/* A file cut shorter, and one cut and written again past the position
 * between two polls: both are read again from their start. */
static void test_follow_truncation(void **state)
{
    (void)state;
    fx x;
    char text[8192], rows[4096];
    load(&x.site, SITE_V("l.csv"));
    rows_text(rows, sizeof rows, 0, 10);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    sw_test_write("l.csv", text);
    fx_open(&x, NULL, SW_OK);
    fx_poll(&x);
    /* shorter: rows 8 and 9 again, then 10 */
    rows_text(rows, sizeof rows, 8, 11);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    sw_test_write("l.csv", text);
    assert_int_equal(fx_poll(&x), strlen(row(10, 8.1)));
    /* longer than what was read: rows 9 to 29 */
    rows_text(rows, sizeof rows, 9, 30);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    sw_test_write("l.csv", text);
    assert_int_equal(fx_poll(&x), 19 * strlen(row(11, 8.1)));
    rows_text(rows, sizeof rows, 0, 30);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    assert_file("mirror.csv", text);
    sw_follow_pos p;
    sw_follow_get_pos(x.f, &p);
    assert_int_equal(p.restarts, 2);
    sw_follow_free(x.f);
    sw_site_fini(&x.site);
}

/* A replacement with other columns is an error naming the file. */
static void test_follow_other_columns(void **state)
{
    (void)state;
    fx x;
    sw_error err;
    unsigned long long n;
    load(&x.site, SITE_V("l.csv"));
    sw_test_write("l.csv", "time,hw,tw\n2025-04-01T00:00:00Z,8.1,7\n");
    fx_open(&x, NULL, SW_OK);
    fx_poll(&x);
    unlink(path_of("l.csv"));
    sw_test_write("l.csv", "time,tw,hw\n2025-04-01T00:15:00Z,7,8.1\n");
    assert_int_equal(sw_follow_poll(x.f, &n, &err), SW_EDATA);
    assert_string_equal(err.file, path_of("l.csv"));
    assert_non_null(strstr(err.message, "other columns"));
    sw_follow_free(x.f);
    sw_site_fini(&x.site);
}

/* Resume: a mirror longer than the position is cut back; a file rotated
 * while no one watched is found in its folder and read to its end. */
static void test_follow_resume(void **state)
{
    (void)state;
    fx x;
    char text[8192], rows[4096];
    load(&x.site, SITE_V("l.csv"));
    rows_text(rows, sizeof rows, 0, 4);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    sw_test_write("l.csv", text);
    fx_open(&x, NULL, SW_OK);
    fx_poll(&x);
    sw_follow_pos p;
    sw_follow_get_pos(x.f, &p);
    sw_follow_free(x.f);
    /* the process appended to the mirror and died before its checkpoint */
    append("mirror.csv", row(4, 8.1));
    append("mirror.csv", "2025-04-01T01:15");
    /* meanwhile the file got rows and was rotated */
    append("l.csv", row(4, 8.1));
    append("l.csv", row(5, 8.1));
    assert_int_equal(rename(path_of("l.csv"), path_of("old.csv")), 0);
    rows_text(rows, sizeof rows, 5, 7);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    sw_test_write("l.csv", text);
    fx_open(&x, &p, SW_OK);
    rows_text(rows, sizeof rows, 0, 4);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    assert_file("mirror.csv", text); /* cut back */
    /* rows 4, 5 from the old file, then 6 from the new one */
    assert_int_equal(fx_poll(&x), 3 * strlen(row(4, 8.1)));
    rows_text(rows, sizeof rows, 0, 7);
    snprintf(text, sizeof text, "time,hw,tw\n%s", rows);
    assert_file("mirror.csv", text);
    sw_follow_free(x.f);
    sw_site_fini(&x.site);
    unlink(path_of("old.csv"));
}

/* ---- commands ------------------------------------------------------------- */

/* Step the queue until nothing runs or waits (at most 10 s); returns the
 * outcomes seen, up to 8. */
static size_t run_queue(sw_cmdq *q, sw_cmd_outcome *out, int *payload,
                        int *max_running)
{
    size_t n_out = 0;
    sw_time_ms t0 = sw_cmdq_now();
    *max_running = 0;
    while (sw_cmdq_running(q) + sw_cmdq_waiting(q) > 0 &&
           sw_cmdq_now() - t0 < 10000) {
        const sw_cmd_outcome *oc;
        size_t n;
        struct timespec nap = {0, 5000000L};
        sw_cmdq_step(q, sw_cmdq_now(), &oc, &n);
        for (size_t i = 0; i < n && n_out < 8; i++) {
            payload[n_out] = *(const int *)oc[i].payload;
            out[n_out++] = oc[i];
        }
        if ((int)sw_cmdq_running(q) > *max_running)
            *max_running = (int)sw_cmdq_running(q);
        nanosleep(&nap, NULL);
    }
    return n_out;
}

/* Exit statuses are reported; one run at a time per key, in order, each
 * with its environment. */
static void test_cmdq_status_and_order(void **state)
{
    (void)state;
    sw_cmdq *q;
    sw_error err;
    sw_cmd_outcome out[8];
    int payload[8], max_running;
    char cmd[512];
    snprintf(cmd, sizeof cmd,
             "echo \"$SW_N\" >> '%s'; sleep 0.05; exit $SW_CODE",
             path_of("order.txt"));
    assert_int_equal(sw_cmdq_alloc(&q, cmd, 5000, &err), SW_OK);
    for (int i = 0; i < 3; i++) {
        char a[32], b[32];
        const char *env[2] = {a, b};
        snprintf(a, sizeof a, "SW_N=%d", i);
        snprintf(b, sizeof b, "SW_CODE=%d", i == 1 ? 3 : 0);
        assert_int_equal(sw_cmdq_push(q, 7, env, 2, &i, sizeof i, &err),
                         SW_OK);
    }
    assert_int_equal(*(const int *)sw_cmdq_pending(q, 2), 2);
    assert_null(sw_cmdq_pending(q, 3));
    size_t n = run_queue(q, out, payload, &max_running);
    assert_int_equal(n, 3);
    assert_int_equal(max_running, 1); /* one key: one at a time */
    for (int i = 0; i < 3; i++) {
        assert_int_equal(payload[i], i);
        assert_int_equal(out[i].end, SW_CMD_EXITED);
        assert_int_equal(out[i].status, i == 1 ? 3 : 0);
    }
    assert_file("order.txt", "0\n1\n2\n");
    sw_cmdq_free(q);
}

/* A run over its limit is stopped and said so; a stop ends runs going and
 * keeps the runs waiting. */
static void test_cmdq_limit_and_stop(void **state)
{
    (void)state;
    sw_cmdq *q;
    sw_error err;
    sw_cmd_outcome out[8];
    int payload[8], max_running, tag = 1;
    assert_int_equal(sw_cmdq_alloc(&q, "sleep 30", 200, &err), SW_OK);
    assert_int_equal(sw_cmdq_push(q, 0, NULL, 0, &tag, sizeof tag, &err),
                     SW_OK);
    size_t n = run_queue(q, out, payload, &max_running);
    assert_int_equal(n, 1);
    assert_int_equal(out[0].end, SW_CMD_TIMED_OUT);
    assert_true(out[0].ran_ms >= 200 && out[0].ran_ms < 9000);
    /* two runs under one key: the first is stopped, the second waits */
    for (tag = 2; tag <= 3; tag++)
        assert_int_equal(sw_cmdq_push(q, 0, NULL, 0, &tag, sizeof tag, &err),
                         SW_OK);
    const sw_cmd_outcome *oc;
    sw_cmdq_step(q, sw_cmdq_now(), &oc, &n);
    assert_int_equal(sw_cmdq_running(q), 1);
    sw_cmdq_stop(q, 500, &oc, &n);
    assert_int_equal(n, 1);
    assert_int_equal(oc[0].end, SW_CMD_STOPPED);
    assert_int_equal(*(const int *)oc[0].payload, 2);
    assert_int_equal(sw_cmdq_running(q), 0);
    assert_int_equal(*(const int *)sw_cmdq_pending(q, 0), 3);
    sw_cmdq_free(q);
}

/* ---- the watch ------------------------------------------------------------ */

/* Levels for gate V: ok, then low for 10 min, ok again, low for 2 h, ok
 * to the end; the low spells are at 0.15 m over the sill (between 0.134
 * and 0.165) and the ok ones at 0.10 m.  Rows at most 45 min apart, each
 * step over one second. */
static void write_spells(void)
{
    char text[16384];
    size_t n = (size_t)snprintf(text, sizeof text, "time,hw,tw\n");
    /* (start minute, headwater): ok to 02:00, low 02:00-02:10, ok,
     * low 04:00-06:00, ok to 10:00 */
    static const struct { const char *t; double hw; } r[] = {
        {"00:00:00", 8.10}, {"00:40:00", 8.10}, {"01:20:00", 8.10},
        {"01:59:59", 8.10}, {"02:00:00", 8.15}, {"02:09:59", 8.15},
        {"02:10:00", 8.10}, {"02:50:00", 8.10}, {"03:30:00", 8.10},
        {"03:59:59", 8.10}, {"04:00:00", 8.15}, {"04:40:00", 8.15},
        {"05:20:00", 8.15}, {"05:59:59", 8.15}, {"06:00:00", 8.10},
        {"06:45:00", 8.10}, {"07:30:00", 8.10}, {"08:15:00", 8.10},
        {"09:00:00", 8.10}, {"09:30:00", 8.10}, {"10:00:00", 8.10}};
    /* no two rows more than max_gap (1 h) apart */
    for (size_t i = 0; i < sizeof r / sizeof r[0]; i++)
        n += (size_t)snprintf(text + n, sizeof text - n,
                              "2025-04-01T%sZ,%.2f,7.0\n", r[i].t, r[i].hw);
    sw_test_write("w.csv", text);
}

typedef struct wx {
    sw_site site;
    sw_watch *w;
    const sw_notice *notes;
    size_t n;
} wx;

static void wx_open(wx *x, sw_time_ms hold, sw_time_ms stale, int expect,
                    sw_error *err)
{
    sw_watch_options opt = {hold, stale, "test", "2026-01-01T00:00:00Z"};
    char ini[2048];
    snprintf(ini, sizeof ini, "%s", SITE_V("w.csv"));
    load(&x->site, ini);
    mkdir(path_of("state"), 0777);
    assert_int_equal(sw_watch_open(&x->w, &x->site, path_of("state"), &opt,
                                   err),
                     expect);
}

static sw_time_ms wall_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_REALTIME, &ts);
    return (sw_time_ms)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

static void wx_poll(wx *x, sw_time_ms wall)
{
    sw_error err;
    int replayed;
    assert_int_equal(sw_watch_poll(x->w, wall, &x->notes, &x->n, &replayed,
                                   &err),
                     SW_OK);
}

static void wx_close(wx *x, int commit)
{
    sw_error err;
    if (commit)
        assert_int_equal(sw_watch_commit(x->w, NULL, 0, &err), SW_OK);
    sw_watch_free(x->w);
    sw_site_fini(&x->site);
}

static void assert_prefix(const char *line, const char *want)
{
    if (strncmp(line, want, strlen(want)) != 0) {
        print_error("'%s' does not begin with '%s'\n", line, want);
        fail();
    }
}

static void clean_state(void)
{
    char cmd[300];
    snprintf(cmd, sizeof cmd, "rm -rf '%s' '%s.old'", path_of("state"),
             path_of("state"));
    assert_int_equal(system(cmd), 0);
}

static void text_of(const wx *x, size_t i, char *buf, size_t n)
{
    sw_watch_notice_text(x->w, &x->notes[i], buf, n);
}

/* Without a hold every final change is an alarm (the first ok silently);
 * the changes are where the levels step, to the second; the last row's
 * instant is not final, so nothing after it is raised. */
static void test_watch_alarms(void **state)
{
    (void)state;
    wx x;
    sw_error err;
    char line[600];
    clean_state();
    write_spells();
    wx_open(&x, 0, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 4);
    static const char *const want[] = {
        "alarm 2025-04-01T01:59:59+00:00 V ok -> low",
        "alarm 2025-04-01T02:10:00+00:00 V low -> ok",
        "alarm 2025-04-01T03:59:59+00:00 V ok -> low",
        "alarm 2025-04-01T06:00:00+00:00 V low -> ok"};
    for (size_t i = 0; i < 4; i++) {
        text_of(&x, i, line, sizeof line);
        assert_prefix(line, want[i]);
        assert_int_equal(x.notes[i].kind, SW_NOTICE_ALARM);
    }
    /* at a change into low, fs is on its way down from ok */
    assert_true(x.notes[0].fs >= 1.5);
    assert_true(x.notes[0].crit_ok);
    /* status.csv: one row, ok since 06:00 */
    char *st = slurp("state/status.csv");
    assert_non_null(strstr(st, "\nV,2025-04-01T10:00:00+00:00,8.1000,7.0000,"));
    assert_non_null(strstr(st, ",ok,2025-04-01T06:00:00+00:00,"));
    free(st);
    /* not committed: the next start raises them again */
    wx_close(&x, 0);
    wx_open(&x, 0, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 4);
    wx_close(&x, 1);
    /* committed: nothing again, until a change comes */
    wx_open(&x, 0, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 0);
    append("w.csv", "2025-04-01T10:15:00Z,8.30,7.0\n"
                    "2025-04-01T10:30:00Z,8.30,7.0\n");
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 2); /* the rise after 10:00: low, then open */
    text_of(&x, 0, line, sizeof line);
    assert_non_null(strstr(line, " V ok -> low fs "));
    text_of(&x, 1, line, sizeof line);
    assert_non_null(strstr(line, " V low -> open fs "));
    assert_true(x.notes[0].t < x.notes[1].t);
    wx_close(&x, 1);
}

/* With a hold of 30 min the 10-minute spell raises nothing; the two-hour
 * one is raised at its start once 30 min of it are in, and its end once
 * 30 min of ok followed. */
static void test_watch_hold(void **state)
{
    (void)state;
    wx x;
    sw_error err;
    char line[600];
    clean_state();
    write_spells();
    wx_open(&x, 30 * 60000, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 2);
    text_of(&x, 0, line, sizeof line);
    assert_prefix(line, "alarm 2025-04-01T03:59:59+00:00 V ok -> low");
    assert_non_null(strstr(line, " held 30min"));
    text_of(&x, 1, line, sizeof line);
    assert_prefix(line, "alarm 2025-04-01T06:00:00+00:00 V low -> ok");
    wx_close(&x, 1);

    /* data that stop 20 min into a low spell: not yet; 40 min in: yes */
    clean_state();
    sw_test_write("w.csv", "time,hw,tw\n2025-04-01T00:00:00Z,8.10,7.0\n"
                           "2025-04-01T00:30:00Z,8.10,7.0\n"
                           "2025-04-01T00:59:59Z,8.10,7.0\n"
                           "2025-04-01T01:00:00Z,8.15,7.0\n"
                           "2025-04-01T01:20:00Z,8.15,7.0\n"
                           "2025-04-01T01:25:00Z,8.15,7.0\n");
    wx_open(&x, 30 * 60000, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 0);
    wx_close(&x, 1);
    append("w.csv", "2025-04-01T01:40:00Z,8.15,7.0\n"
                    "2025-04-01T01:45:00Z,8.15,7.0\n");
    wx_open(&x, 30 * 60000, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 1);
    text_of(&x, 0, line, sizeof line);
    assert_prefix(line, "alarm 2025-04-01T00:59:59+00:00 V ok -> low");
    wx_close(&x, 1);
}

/* A series without a new reading for stale_after (wall clock) is stale,
 * once; fresh when a newer reading comes. */
static void test_watch_stale(void **state)
{
    (void)state;
    wx x;
    sw_error err;
    char line[600];
    clean_state();
    write_spells();
    wx_open(&x, 0, 60000, SW_OK, &err);
    sw_time_ms now = wall_now();
    wx_poll(&x, now);
    assert_int_equal(x.n, 4); /* the alarms */
    wx_poll(&x, now + 30000);
    assert_int_equal(x.n, 0);
    wx_poll(&x, now + 61000);
    assert_int_equal(x.n, 2); /* hw and tw, one file */
    text_of(&x, 0, line, sizeof line);
    assert_prefix(line, "stale 2025-04-01T10:00:00+00:00 series hw "
                              "file ");
    assert_non_null(strstr(line, "/w.csv: no new reading for 61.0 s"));
    assert_int_equal(x.notes[1].kind, SW_NOTICE_STALE);
    wx_poll(&x, now + 62000);
    assert_int_equal(x.n, 0); /* said once */
    wx_close(&x, 1);
    /* resumed: still stale, not said again; a new row makes both fresh */
    wx_open(&x, 0, 60000, SW_OK, &err);
    wx_poll(&x, now + 63000);
    assert_int_equal(x.n, 0);
    append("w.csv", "2025-04-01T10:15:00Z,8.10,7.0\n");
    wx_poll(&x, now + 64000);
    assert_int_equal(x.n, 2);
    text_of(&x, 0, line, sizeof line);
    assert_prefix(line, "fresh 2025-04-01T10:15:00+00:00 series hw ");
    assert_non_null(strstr(line, ": a new reading after 64.0 s"));
    wx_close(&x, 1);
}

/* A checkpoint made for another site file, or whose level file changed
 * before the position, is refused (with --restart suggested); the folder
 * is locked while a watch holds it; set aside, it starts afresh. */
static void test_watch_checkpoint_mismatch(void **state)
{
    (void)state;
    wx x, y;
    sw_error err;
    clean_state();
    write_spells();
    wx_open(&x, 0, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    /* a second watch on the folder */
    load(&y.site, SITE_V("w.csv"));
    assert_int_equal(sw_watch_open(&y.w, &y.site, path_of("state"), NULL,
                                   &err),
                     SW_EOUTPUT);
    assert_non_null(strstr(err.message, "another sillwatch watch"));
    sw_site_fini(&y.site);
    wx_close(&x, 1);

    /* the level file's first row changed */
    char *text = slurp("w.csv");
    text[strlen("time,hw,tw\n2025-04-01T00:00:00Z,8.1")] = '2';
    sw_test_write("w.csv", text);
    wx_open(&x, 0, 0, SW_EDATA, &err);
    assert_non_null(strstr(err.message, "--restart"));
    sw_site_fini(&x.site);
    free(text);

    /* another site file (a comment is enough) */
    write_spells();
    char ini[2048];
    snprintf(ini, sizeof ini, "; changed\n%s", SITE_V("w.csv"));
    load(&y.site, ini);
    assert_int_equal(sw_watch_open(&y.w, &y.site, path_of("state"), NULL,
                                   &err),
                     SW_ESITE);
    assert_non_null(strstr(err.message, "not the one"));
    sw_site_fini(&y.site);

    /* set aside: a fresh start, the old folder kept */
    assert_int_equal(sw_watch_set_aside(path_of("state/"), &err), SW_OK);
    struct stat sb;
    assert_int_equal(stat(path_of("state.old/checkpoint"), &sb), 0);
    assert_int_equal(sw_watch_set_aside(path_of("state"), &err), SW_OK);
    mkdir(path_of("state"), 0777);
    assert_int_equal(sw_watch_set_aside(path_of("state"), &err), SW_EOUTPUT);
    wx_open(&x, 0, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 4);
    wx_close(&x, 1);
}

/* The notices waiting for their command survive a restart; the
 * environment of a command names the alarm's fields. */
static void test_watch_queued_and_env(void **state)
{
    (void)state;
    wx x;
    sw_error err;
    char env[SW_WATCH_ENV][SW_WATCH_ENV_LEN];
    size_t n_env;
    clean_state();
    write_spells();
    wx_open(&x, 0, 0, SW_OK, &err);
    wx_poll(&x, wall_now());
    assert_int_equal(x.n, 4);
    sw_notice keep[2] = {x.notes[1], x.notes[3]};
    sw_watch_notice_env(x.w, &keep[0], env, &n_env);
    int seen = 0;
    for (size_t i = 0; i < n_env; i++) {
        seen += strcmp(env[i], "SILLWATCH_NOTICE=alarm") == 0;
        seen += strcmp(env[i], "SILLWATCH_GATE=V") == 0;
        seen += strcmp(env[i], "SILLWATCH_FROM=low") == 0;
        seen += strcmp(env[i], "SILLWATCH_TO=ok") == 0;
        seen += strcmp(env[i], "SILLWATCH_TIME=2025-04-01T02:10:00+00:00") == 0;
        seen += strcmp(env[i], "SILLWATCH_HEADWATER=8.1000") == 0;
    }
    assert_int_equal(seen, 6);
    assert_int_equal(sw_watch_commit(x.w, keep, 2, &err), SW_OK);
    sw_watch_free(x.w);
    sw_site_fini(&x.site);
    wx_open(&x, 0, 0, SW_OK, &err);
    const sw_notice *q;
    assert_int_equal(sw_watch_queued(x.w, &q), 2);
    assert_int_equal(q[0].t, keep[0].t);
    assert_int_equal(q[1].to, keep[1].to);
    assert_memory_equal(&q[1].fs, &keep[1].fs, sizeof(double));
    assert_memory_equal(&q[1].tw_alarm, &keep[1].tw_alarm, sizeof(sw_crit));
    wx_close(&x, 1);
}

int main(void)
{
    gsl_set_error_handler_off();
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_record_end),
        cmocka_unit_test(test_follow_appends),
        cmocka_unit_test(test_follow_rotation),
        cmocka_unit_test(test_follow_truncation),
        cmocka_unit_test(test_follow_other_columns),
        cmocka_unit_test(test_follow_resume),
        cmocka_unit_test(test_cmdq_status_and_order),
        cmocka_unit_test(test_cmdq_limit_and_stop),
        cmocka_unit_test(test_watch_alarms),
        cmocka_unit_test(test_watch_hold),
        cmocka_unit_test(test_watch_stale),
        cmocka_unit_test(test_watch_checkpoint_mismatch),
        cmocka_unit_test(test_watch_queued_and_env),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
