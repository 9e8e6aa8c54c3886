/* Unit tests of the streaming level reader (src/series.c).
 *
 * Every fixture is written to a fresh temporary file (mkstemp), read to the
 * end or to the first error, and removed.  Fixture sites, gauges and levels
 * are invented.  Physical line numbers of the fixtures are given in
 * comments where they matter; error tests assert the status, the line, the
 * column (field number) and a distinctive part of the message.
 *
 * Expected instants are computed by hand from the POSIX seconds-since-epoch
 * formula (days since 1970-01-01 times 86400 s, plus the time of day; no
 * leap seconds), not with the library's own calendar code:
 * 2025-01-01T00:00:00Z is 55 * 365 + 14 leap days (1972 ... 2024) = 20089
 * days = 1735689600 s after the epoch.
 */
#include "testutil.h"

#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "sillwatch/series.h"
#include "sillwatch/timeutil.h"

#define MS(s) ((sw_time_ms)(s) * SW_MS_PER_S)
#define MIN15 MS(900)

/* 2025-01-01T00:00:00Z: 20089 days * 86400 s (see the top). */
static const sw_time_ms t_2025 = MS(1735689600);
/* 2025-07-01T00:00Z: + 181 days (31+28+31+30+31+30). */
static const sw_time_ms t_jul01 = MS(1735689600 + 181 * 86400);
/* 2025-03-30T00:00Z: + 88 days (31+28+29). */
static const sw_time_ms t_mar30 = MS(1735689600 + 88 * 86400);
/* 2025-10-26T00:00Z: + 298 days (273 to Oct 1, then 25). */
static const sw_time_ms t_oct26 = MS(1735689600 + 298 * 86400);

/* ---- fixtures ----------------------------------------------------------- */

#define ROWS_MAX 32
#define COLS_MAX 4

typedef struct fixture {
    char path[64];
} fixture;

static void fixture_write(fixture *f, const char *text, size_t len)
{
    int fd;

    snprintf(f->path, sizeof f->path, "/tmp/sw-test-series-XXXXXX");
    fd = mkstemp(f->path);
    assert_true(fd >= 0);
    assert_int_equal(write(fd, text, len), (ssize_t)len);
    assert_int_equal(close(fd), 0);
}

/* What reading a whole file gave. */
typedef struct outcome {
    int open_rc;               /* status of sw_reader_open */
    int rc;                    /* status of the last sw_reader_next */
    sw_error err;
    size_t n;                  /* rows handed out */
    sw_time_ms t[ROWS_MAX];
    double v[ROWS_MAX][COLS_MAX];
    sw_reader_stats stats;     /* its column points at columns */
    sw_column_stats columns[COLS_MAX];
    char delim;
    char path[64];
} outcome;

static void default_config(sw_reader_config *cfg)
{
    memset(cfg, 0, sizeof *cfg);
    cfg->time_column = "time";
    cfg->time_format = SW_TIME_ISO8601;
}

static void set_column(sw_column_config *c, const char *name)
{
    memset(c, 0, sizeof *c);
    c->name = name;
    c->scale = 1.0;
}

/* Write `text` (`len` bytes) and read it with `cfg` (whose path is set
 * here) and `cols`, to the end or the first error. */
static void read_all_n(const char *text, size_t len, sw_reader_config *cfg,
                       const sw_column_config *cols, size_t n_cols,
                       outcome *out)
{
    fixture f;
    sw_reader *rd = NULL;
    int has_row = 1;

    assert_true(n_cols <= COLS_MAX);
    memset(out, 0, sizeof *out);
    fixture_write(&f, text, len);
    snprintf(out->path, sizeof out->path, "%s", f.path);
    cfg->path = f.path;
    out->open_rc = sw_reader_open(&rd, cfg, cols, n_cols, &out->err);
    if (out->open_rc != SW_OK) {
        assert_null(rd);
        unlink(f.path);
        return;
    }
    assert_non_null(rd);
    assert_int_equal(out->err.code, SW_OK);
    out->delim = sw_reader_delimiter(rd);
    while (has_row) {
        sw_time_ms t;
        double v[COLS_MAX];

        out->rc = sw_reader_next(rd, &has_row, &t, v, &out->err);
        if (out->rc != SW_OK)
            break;
        if (has_row) {
            assert_true(out->n < ROWS_MAX);
            out->t[out->n] = t;
            memcpy(out->v[out->n], v, n_cols * sizeof v[0]);
            out->n++;
        }
    }
    /* the reader owns its column counts: copy them before it goes */
    out->stats = *sw_reader_get_stats(rd);
    memcpy(out->columns, out->stats.column, n_cols * sizeof out->columns[0]);
    out->stats.column = out->columns;
    sw_reader_free(rd);
    unlink(f.path);
}

static void read_all(const char *text, sw_reader_config *cfg,
                     const sw_column_config *cols, size_t n_cols,
                     outcome *out)
{
    read_all_n(text, strlen(text), cfg, cols, n_cols, out);
}

/* The common case: columns "headwater" and "tailwater", time "time", no
 * zone. */
static void read_hw_tw(const char *text, outcome *out)
{
    sw_reader_config cfg;
    sw_column_config cols[2];

    default_config(&cfg);
    set_column(&cols[0], "headwater");
    set_column(&cols[1], "tailwater");
    read_all(text, &cfg, cols, 2, out);
}

static void expect_ok_impl(const outcome *o, size_t n_rows, const char *file,
                           int at)
{
    if (o->open_rc != SW_OK || o->rc != SW_OK || o->n != n_rows) {
        print_error("expected %zu rows and no error; got %zu rows, open %d, "
                    "next %d at %ld:%ld: %s\n", n_rows, o->n, o->open_rc,
                    o->rc, o->err.line, o->err.column, o->err.message);
        _fail(file, at);
    }
}
#define expect_ok(o, n) expect_ok_impl((o), (n), __FILE__, __LINE__)

/* Expect `code` at `line`:`col` of the fixture, with `fragment` in the
 * message; `at_open` says whether sw_reader_open or sw_reader_next failed. */
static void expect_error_impl(const outcome *o, int at_open, int code,
                              long line, long col, const char *fragment,
                              const char *file, int at)
{
    int got = at_open ? o->open_rc : o->rc;

    if (got != code || o->err.code != code || o->err.line != line ||
        o->err.column != col || strstr(o->err.message, fragment) == NULL ||
        strcmp(o->err.file, o->path) != 0 ||
        (!at_open && o->open_rc != SW_OK)) {
        print_error("expected %s %d at %ld:%ld with '%s'\n"
                    "     got open %d, next %d, code %d at %s:%ld:%ld: %s\n",
                    at_open ? "open" : "next", code, line, col, fragment,
                    o->open_rc, o->rc, o->err.code, o->err.file, o->err.line,
                    o->err.column, o->err.message);
        _fail(file, at);
    }
}
#define expect_open_error(o, code, line, col, frag) \
    expect_error_impl((o), 1, (code), (line), (col), (frag), __FILE__, \
                      __LINE__)
#define expect_next_error(o, code, line, col, frag) \
    expect_error_impl((o), 0, (code), (line), (col), (frag), __FILE__, \
                      __LINE__)

static void expect_reject_impl(const sw_column_stats *cs, size_t k, long line,
                               long col, const char *text,
                               const char *reason, const char *file, int at)
{
    if (k >= cs->n_kept || cs->kept[k].line != line ||
        cs->kept[k].column != col || strcmp(cs->kept[k].text, text) != 0 ||
        cs->kept[k].reason == NULL || strcmp(cs->kept[k].reason, reason) != 0) {
        if (k < cs->n_kept)
            print_error("reject %zu: expected %ld:%ld '%s' (%s), got "
                        "%ld:%ld '%s' (%s)\n", k, line, col, text, reason,
                        cs->kept[k].line, cs->kept[k].column,
                        cs->kept[k].text,
                        cs->kept[k].reason ? cs->kept[k].reason : "(null)");
        else
            print_error("reject %zu: only %zu kept\n", k, cs->n_kept);
        _fail(file, at);
    }
}
#define expect_reject(cs, k, line, col, text, reason) \
    expect_reject_impl((cs), (k), (line), (col), (text), (reason), \
                       __FILE__, __LINE__)

/* ---- accepted forms ----------------------------------------------------- */

static void test_comma(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n"
               "2025-01-01T00:30:00Z,12.351,11.240\n"
               "2025-01-01T00:45:00Z,12.362,11.229\n", &o);
    expect_ok(&o, 3);
    assert_int_equal(o.delim, ',');
    for (size_t i = 0; i < 3; i++)
        assert_true(o.t[i] == t_2025 + (sw_time_ms)(i + 1) * MIN15);
    assert_close(o.v[0][0], 12.345, 1e-15);
    assert_close(o.v[0][1], 11.234, 1e-15);
    assert_close(o.v[1][0], 12.351, 1e-15);
    assert_close(o.v[2][1], 11.229, 1e-15);
    assert_int_equal(o.stats.records, 3);
    assert_int_equal(o.stats.column[0].valid, 3);
    assert_int_equal(o.stats.column[1].valid, 3);
    assert_int_equal(o.stats.column[0].missing, 0);
    assert_int_equal(o.stats.column[0].rejected, 0);
    assert_int_equal(o.stats.duplicates, 0);
    assert_true(o.stats.first_t == t_2025 + MIN15);
    assert_true(o.stats.last_t == t_2025 + 3 * MIN15);
}

static void test_semicolon_decimal_comma(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config cols[2];
    (void)state;

    read_hw_tw("time;headwater;tailwater\n"
               "2025-01-01T00:15:00Z;12,345;11,234\n"
               "2025-01-01T00:30:00Z;12.351;-0,75e1\n", &o);
    expect_ok(&o, 2);
    assert_int_equal(o.delim, ';');
    assert_close(o.v[0][0], 12.345, 1e-15);
    assert_close(o.v[0][1], 11.234, 1e-15);
    assert_close(o.v[1][0], 12.351, 1e-15);
    assert_close(o.v[1][1], -7.5, 1e-15);

    /* The same with the delimiter set rather than detected. */
    default_config(&cfg);
    cfg.delimiter = ';';
    set_column(&cols[0], "headwater");
    set_column(&cols[1], "tailwater");
    read_all("time;headwater;tailwater\n"
             "2025-01-01T00:15:00Z;12,345;11,234\n", &cfg, cols, 2, &o);
    expect_ok(&o, 1);
    assert_close(o.v[0][1], 11.234, 1e-15);

    /* A decimal comma is read only where ';' separates the fields: in a
     * comma file a quoted "12,345" is not a number. */
    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,\"12,345\",11.234\n", &o);
    expect_ok(&o, 1);
    assert_true(isnan(o.v[0][0]));
    assert_int_equal(o.stats.column[0].rejected, 1);
    expect_reject(&o.stats.column[0], 0, 2, 2, "12,345", "not a number");
}

static void test_tab(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time\theadwater\ttailwater\n"
               "2025-01-01T00:15:00Z\t12.345\t11.234\n"
               "2025-01-01T00:30:00Z\t\t11.240\n", &o);
    expect_ok(&o, 2);
    assert_int_equal(o.delim, '\t');
    assert_close(o.v[0][0], 12.345, 1e-15);
    assert_close(o.v[0][1], 11.234, 1e-15);
    assert_true(isnan(o.v[1][0]));
    assert_close(o.v[1][1], 11.240, 1e-15);
    assert_int_equal(o.stats.column[0].missing, 1);
}

static void test_delimiter_detection(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    (void)state;

    /* Delimiters inside quotes are not counted: two ';' against none. */
    default_config(&cfg);
    cfg.time_column = "time, UTC";
    set_column(&col, "level, m");
    read_all("\"time, UTC\";\"level, m\";\"gauge, id\"\n"
             "2025-01-01T00:15:00Z;2,385;GX-7\n", &cfg, &col, 1, &o);
    expect_ok(&o, 1);
    assert_int_equal(o.delim, ';');
    assert_close(o.v[0][0], 2.385, 1e-15);

    /* A tie (one ',' and one ';') goes to ','. */
    default_config(&cfg);
    set_column(&col, "level;m");
    read_all("time,level;m\n2025-01-01T00:15:00Z,2.385\n", &cfg, &col, 1, &o);
    expect_ok(&o, 1);
    assert_int_equal(o.delim, ',');

    /* Tabs outnumber commas. */
    set_column(&col, "level,m");
    read_all("time\tlevel,m\tnote\n2025-01-01T00:15:00Z\t2.385\tx\n", &cfg,
             &col, 1, &o);
    expect_ok(&o, 1);
    assert_int_equal(o.delim, '\t');
    assert_close(o.v[0][0], 2.385, 1e-15);
}

static void test_quoted_fields(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config cols[2];
    (void)state;

    default_config(&cfg);
    set_column(&cols[0], "headwater");
    set_column(&cols[1], "tailwater");
    read_all("\"time\",\"headwater\",\"note\",\"tailwater\"\n"
             "\"2025-01-01T00:15:00Z\",\"12.345\",\"gate 2, cleaned\","
             "\"11.234\"\n"
             "2025-01-01T00:30:00Z, \"12.351\" ,\"said \"\"ok\"\"\",11.240\n"
             "2025-01-01T00:45:00Z,\" 12.362 \",,\"\"\n",
             &cfg, cols, 2, &o);
    expect_ok(&o, 3);
    assert_close(o.v[0][0], 12.345, 1e-15);
    assert_close(o.v[0][1], 11.234, 1e-15);
    assert_close(o.v[1][0], 12.351, 1e-15);
    assert_close(o.v[1][1], 11.240, 1e-15);
    assert_close(o.v[2][0], 12.362, 1e-15);
    assert_true(isnan(o.v[2][1]));
    assert_int_equal(o.stats.column[1].missing, 1);
    assert_int_equal(o.stats.column[0].rejected, 0);
}

static void test_comments_and_blank_lines(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("# Harrowmere weir, gauge HW-3 (invented)\n"  /* 1 */
               "\n"                                          /* 2 */
               "time,headwater,tailwater\n"                  /* 3 */
               "# logger restarted\n"                        /* 4 */
               "2025-01-01T00:15:00Z,12.345,11.234\n"        /* 5 */
               "\n"                                          /* 6 */
               "   \t\n"                                     /* 7 */
               "\r\n"                                        /* 8 */
               "2025-01-01T00:30:00Z,bad,11.240\n"           /* 9 */
               "#,,,\n"                                      /* 10 */
               "2025-01-01T00:45:00Z,12.362,oops\n"          /* 11 */
               "# the end\n", &o);                           /* 12 */
    expect_ok(&o, 3);
    assert_int_equal(o.stats.records, 3);
    assert_true(o.t[2] == t_2025 + 3 * MIN15);
    expect_reject(&o.stats.column[0], 0, 9, 2, "bad", "not a number");
    expect_reject(&o.stats.column[1], 0, 11, 3, "oops", "not a number");
    assert_int_equal(o.stats.column[0].valid, 2);
    assert_int_equal(o.stats.column[1].valid, 2);
}

static void test_byte_order_mark(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("\xEF\xBB\xBFtime,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n", &o);
    expect_ok(&o, 1);
    assert_close(o.v[0][0], 12.345, 1e-15);

    /* The mark is no part of a first comment line either. */
    read_hw_tw("\xEF\xBB\xBF# Kettlebrook sluice (invented)\n"
               "time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n"
               "2025-01-01T00:30:00Z,12.351,x\n", &o);
    expect_ok(&o, 2);
    expect_reject(&o.stats.column[1], 0, 4, 3, "x", "not a number");
}

static void test_crlf(void **state)
{
    outcome o;
    (void)state;

    /* The last header name and every last field are followed by CR LF:
     * a CR left in a field would make "tailwater" unknown and the numbers
     * unreadable.  The last line has no line end at all. */
    read_hw_tw("time,headwater,tailwater\r\n"
               "2025-01-01T00:15:00Z,12.345,11.234\r\n"
               "\r\n"
               "2025-01-01T00:30:00Z,12.351,\"11.240\"\r\n"
               "# note\r\n"
               "2025-01-01T00:45:00Z,12.362,11.229\r\n"
               "2025-01-01T01:00:00Z,12.370,11.231", &o);
    expect_ok(&o, 4);
    assert_int_equal(o.stats.column[1].valid, 4);
    assert_int_equal(o.stats.column[1].rejected, 0);
    assert_close(o.v[1][1], 11.240, 1e-15);
    assert_close(o.v[3][1], 11.231, 1e-15);
    assert_true(o.t[3] == t_2025 + 4 * MIN15);

    /* Stray CRs before the LF are line end too. */
    read_hw_tw("time,headwater,tailwater\r\r\n"
               "2025-01-01T00:15:00Z,12.345,11.234\r\r\n", &o);
    expect_ok(&o, 1);
    assert_close(o.v[0][1], 11.234, 1e-15);
}

static void test_quoted_newline_keeps_lines(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config cols[2];
    (void)state;

    default_config(&cfg);
    set_column(&cols[0], "headwater");
    set_column(&cols[1], "tailwater");
    read_all("time,headwater,note,tailwater\n"                   /* 1 */
             "2025-01-01T00:15:00Z,12.345,\"first line\n"        /* 2 */
             "second line\",11.234\n"                            /* 3 */
             "2025-01-01T00:30:00Z,x1,\"\",11.240\n"             /* 4 */
             "2025-01-01T00:45:00Z,z3,\"a\n"                     /* 5 */
             "\n"                                                /* 6 */
             "# not a comment inside quotes\r\n"                 /* 7 */
             "b\",11.229\n"                                      /* 8 */
             "2025-01-01T01:00:00Z,y2,,11.230\n",                /* 9 */
             &cfg, cols, 2, &o);
    expect_ok(&o, 4);
    assert_int_equal(o.stats.records, 4);
    assert_close(o.v[0][1], 11.234, 1e-15);
    assert_close(o.v[2][1], 11.229, 1e-15);
    assert_true(o.t[3] == t_2025 + 4 * MIN15);
    /* A record that spans lines is placed at the line where it begins. */
    expect_reject(&o.stats.column[0], 0, 4, 2, "x1", "not a number");
    expect_reject(&o.stats.column[0], 1, 5, 2, "z3", "not a number");
    expect_reject(&o.stats.column[0], 2, 9, 2, "y2", "not a number");
    assert_int_equal(o.stats.column[1].valid, 4);
}

static void test_header_only(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n", &o);
    expect_ok(&o, 0);
    assert_int_equal(o.stats.records, 0);
    read_hw_tw("# Millrace gauge (invented)\ntime,headwater,tailwater", &o);
    expect_ok(&o, 0);
    read_hw_tw("time,headwater,tailwater\n\n# nothing yet\n", &o);
    expect_ok(&o, 0);
}

static void test_extra_fields_named_in_header(void **state)
{
    outcome o;
    (void)state;

    /* Fields after the last needed one may be absent when the header has
     * them ("note"), and present. */
    read_hw_tw("time,headwater,tailwater,note\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n"
               "2025-01-01T00:30:00Z,12.351,11.240,wind\n", &o);
    expect_ok(&o, 2);
    assert_close(o.v[1][1], 11.240, 1e-15);
}

/* ---- time --------------------------------------------------------------- */

static void test_iso_with_offsets(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,1.5,1.25\n"        /* 00:15Z */
               "2025-01-01T02:30:00+02:00,1.5,1.25\n"   /* 00:30Z */
               "2025-01-01 00:45:00.250Z,1.5,1.25\n"    /* 00:45:00.250Z */
               "2024-12-31T22:00:00-0300,1.5,1.25\n"    /* 01:00Z */
               "2025-01-01T00:05-01,1.5,1.25\n", &o);   /* 01:05Z */
    expect_ok(&o, 5);
    assert_true(o.t[0] == t_2025 + MS(900));
    assert_true(o.t[1] == t_2025 + MS(1800));
    assert_true(o.t[2] == t_2025 + MS(2700) + 250);
    assert_true(o.t[3] == t_2025 + MS(3600));
    assert_true(o.t[4] == t_2025 + MS(3900));
}

static void test_local_times_with_zone(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    sw_zone *plus10 = NULL, *berlin = NULL;
    sw_error err;
    (void)state;

    assert_int_equal(sw_zone_load(&plus10, "+10:00", &err), SW_OK);
    assert_int_equal(sw_zone_load(&berlin, "Europe/Berlin", &err), SW_OK);
    default_config(&cfg);
    set_column(&col, "headwater");

    /* A fixed zone 10 h east of UTC; a stamp with its own offset keeps it. */
    cfg.zone = plus10;
    read_all("time,headwater\n"
             "2025-01-01 10:15,2.385\n"                 /* 00:15Z */
             "2025-01-01T10:30:00,2.385\n"              /* 00:30Z */
             "2025-01-01T00:45:00Z,2.385\n", &cfg, &col, 1, &o);
    expect_ok(&o, 3);
    assert_true(o.t[0] == t_2025 + MS(900));
    assert_true(o.t[1] == t_2025 + MS(1800));
    assert_true(o.t[2] == t_2025 + MS(2700));
    assert_int_equal(o.stats.ambiguous, 0);
    assert_int_equal(o.stats.unresolved, 0);

    /* Berlin: UTC+1 in winter, UTC+2 in summer (EU rule, from memory). */
    cfg.zone = berlin;
    read_all("time,headwater\n"
             "2025-01-01 01:15,2.385\n"                 /* 00:15Z */
             "2025-07-01 02:15,2.385\n", &cfg, &col, 1, &o);
    expect_ok(&o, 2);
    assert_true(o.t[0] == t_2025 + MS(900));
    assert_true(o.t[1] == t_jul01 + MS(900));

    sw_zone_free(plus10);
    sw_zone_free(berlin);
}

static void test_repeated_hour_resolved_by_order(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    sw_zone *berlin = NULL;
    sw_error err;
    (void)state;

    assert_int_equal(sw_zone_load(&berlin, "Europe/Berlin", &err), SW_OK);
    default_config(&cfg);
    cfg.zone = berlin;
    set_column(&col, "headwater");
    /* Daylight saving ends on the last Sunday of October, 2025-10-26, at
     * 01:00Z: local 03:00 CEST becomes 02:00 CET, so 02:00 ... 02:59 comes
     * twice (EU rule, from memory).  A logger in local time writes the
     * quarter hours 02:00 ... 02:45 twice. */
    read_all("time,headwater\n"
             "2025-10-26 01:45,2.385\n"   /* CEST: 2025-10-25T23:45Z */
             "2025-10-26 02:00,2.391\n"
             "2025-10-26 02:15,2.397\n"
             "2025-10-26 02:30,2.402\n"
             "2025-10-26 02:45,2.408\n"
             "2025-10-26 02:00,2.413\n"   /* second pass: CET */
             "2025-10-26 02:15,2.419\n"
             "2025-10-26 02:30,2.424\n"
             "2025-10-26 02:45,2.430\n"
             "2025-10-26 03:00,2.436\n",  /* CET: 02:00Z */
             &cfg, &col, 1, &o);
    expect_ok(&o, 10);
    for (size_t i = 0; i < 10; i++)
        assert_true(o.t[i] == t_oct26 - MS(900) + (sw_time_ms)i * MIN15);
    assert_int_equal(o.stats.ambiguous, 8);
    assert_int_equal(o.stats.unresolved, 0);

    /* A file that begins inside the repeated hour cannot be resolved by
     * order: the first reading (CEST) is taken and counted. */
    read_all("time,headwater\n"
             "2025-10-26 02:15,2.397\n"   /* 00:15Z, unresolved */
             "2025-10-26 02:30,2.402\n"   /* 00:30Z, by order */
             "2025-10-26 03:00,2.436\n",  /* 02:00Z */
             &cfg, &col, 1, &o);
    expect_ok(&o, 3);
    assert_true(o.t[0] == t_oct26 + MS(900));
    assert_true(o.t[1] == t_oct26 + MS(1800));
    assert_true(o.t[2] == t_oct26 + MS(7200));
    assert_int_equal(o.stats.unresolved, 1);
    assert_int_equal(o.stats.first_unresolved_line, 2);
    assert_int_equal(o.stats.ambiguous, 1);
    sw_zone_free(berlin);
}

static void test_skipped_hour_counted(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    sw_zone *berlin = NULL;
    sw_error err;
    (void)state;

    assert_int_equal(sw_zone_load(&berlin, "Europe/Berlin", &err), SW_OK);
    default_config(&cfg);
    cfg.zone = berlin;
    set_column(&col, "headwater");
    /* Daylight saving starts on 2025-03-30 at 01:00Z: local 02:00 becomes
     * 03:00, so 02:30 never happens there (EU rule, from memory). */
    read_all("time,headwater\n"
             "2025-03-30 01:45,2.385\n"   /* CET: 00:45Z */
             "2025-03-30 02:30,2.391\n"   /* no such local time */
             "2025-03-30 03:00,2.397\n",  /* CEST: 01:00Z */
             &cfg, &col, 1, &o);
    expect_ok(&o, 2);
    assert_true(o.t[0] == t_mar30 + MS(2700));
    assert_true(o.t[1] == t_mar30 + MS(3600));
    assert_close(o.v[1][0], 2.397, 1e-15);
    assert_int_equal(o.stats.time_rejected, 1);
    assert_int_equal(o.stats.first_time_rejected_line, 3);
    assert_int_equal(o.stats.records, 3);
    assert_int_equal(o.stats.column[0].valid, 2);
    sw_zone_free(berlin);
}

static void test_unix_seconds(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    (void)state;

    default_config(&cfg);
    cfg.time_format = SW_TIME_UNIX;
    cfg.time_column = "epoch_s";
    set_column(&col, "headwater");
    read_all("epoch_s,headwater\n"
             "1735690500,12.345\n"
             "1735691400.5,12.351\n", &cfg, &col, 1, &o);
    expect_ok(&o, 2);
    assert_true(o.t[0] == t_2025 + MS(900));
    assert_true(o.t[1] == t_2025 + MS(1800) + 500);
    assert_close(o.v[1][0], 12.351, 1e-15);
}

/* ---- values ------------------------------------------------------------- */

static void test_feet_with_offset(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config cols[2];
    (void)state;

    default_config(&cfg);
    set_column(&cols[0], "stage_ft");
    cols[0].scale = 0.3048;  /* 1 ft = 0.3048 m exactly (International Yard
                                and Pound Agreement, 1959) */
    cols[0].offset_m = 100.0;
    /* The same field read twice, once in metres as written. */
    set_column(&cols[1], "stage_ft");
    read_all("time,stage_ft\n"
             "2025-01-01T00:15:00Z,40.125\n"
             "2025-01-01T00:30:00Z,-3.5\n", &cfg, cols, 2, &o);
    expect_ok(&o, 2);
    /* 40.125 ft * 0.3048 m/ft = 12.2301 m, + 100 m (by hand) */
    assert_close(o.v[0][0], 112.2301, 1e-13);
    assert_close(o.v[0][1], 40.125, 1e-15);
    /* -3.5 ft * 0.3048 m/ft = -1.0668 m, + 100 m (by hand) */
    assert_close(o.v[1][0], 98.9332, 1e-13);
    assert_close(o.v[1][1], -3.5, 1e-15);
    assert_int_equal(o.stats.column[0].valid, 2);
    assert_int_equal(o.stats.column[1].valid, 2);
}

static void test_missing_tokens(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config cols[2];
    (void)state;

    default_config(&cfg);
    set_column(&cols[0], "headwater");
    cols[0].n_missing = 2;
    cols[0].missing[0] = "-9999";
    cols[0].missing[1] = "---";
    set_column(&cols[1], "tailwater");
    read_all("time,headwater,tailwater\n"
             "2025-01-01T00:15:00Z,,NaN\n"
             "2025-01-01T00:30:00Z,nan,NAN\n"
             "2025-01-01T00:45:00Z, -9999 ,-9999\n"
             "2025-01-01T01:00:00Z,---,\"  \"\n"
             "2025-01-01T01:15:00Z,-9999.0,12.5\n"
             "2025-01-01T01:30:00Z,Nan,12.625\n", &cfg, cols, 2, &o);
    expect_ok(&o, 6);
    for (size_t i = 0; i < 4; i++)
        assert_true(isnan(o.v[i][0]));
    /* Tokens match exactly: -9999.0 is a number, and only headwater has
     * -9999 as a token. */
    assert_close(o.v[4][0], -9999.0, 1e-15);
    assert_close(o.v[2][1], -9999.0, 1e-15);
    assert_true(isnan(o.v[5][0]));
    assert_int_equal(o.stats.column[0].missing, 4);
    assert_int_equal(o.stats.column[0].valid, 1);
    assert_int_equal(o.stats.column[0].rejected, 1);
    expect_reject(&o.stats.column[0], 0, 7, 2, "Nan", "not a number");
    assert_int_equal(o.stats.column[1].missing, 3);
    assert_int_equal(o.stats.column[1].valid, 3);
    assert_int_equal(o.stats.column[1].rejected, 0);
}

static void test_rejected_fields(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    (void)state;

    default_config(&cfg);
    set_column(&col, "headwater");
    read_all("gauge,time,headwater\n"                              /* 1 */
             "HW-3,2025-01-01T00:15:00Z,12.3.4\n"                  /* 2 */
             "HW-3,2025-01-01T00:30:00Z,150000\n"                  /* 3 */
             "HW-3,2025-01-01T00:45:00Z,100000\n"                  /* 4 */
             "HW-3,2025-01-01T01:00:00Z,-100000.5\n"               /* 5 */
             "HW-3,2025-01-01T01:15:00Z,1e400\n"                   /* 6 */
             "HW-3,2025-01-01T01:30:00Z,0x1A\n"                    /* 7 */
             "HW-3,2025-01-01T01:45:00Z,inf\n"                     /* 8 */
             "HW-3,2025-01-01T02:00:00Z,ERR sensor fault code 0042 "
             "water ingress\n"                                     /* 9 */
             "HW-3,2025-01-01T02:15:00Z,12.5m\n"                   /* 10 */
             "HW-3,2025-01-01T02:30:00Z,1 2\n"                     /* 11 */
             "HW-3,2025-01-01T02:45:00Z,+\n"                       /* 12 */
             "HW-3,2025-01-01T03:00:00Z,e5\n"                      /* 13 */
             "HW-3,2025-01-01T03:15:00Z,--1\n"                     /* 14 */
             "HW-3,2025-01-01T03:30:00Z,2.385\n",                  /* 15 */
             &cfg, &col, 1, &o);
    expect_ok(&o, 14);
    assert_int_equal(o.stats.column[0].rejected, 12);
    assert_int_equal(o.stats.column[0].valid, 2);
    assert_int_equal(o.stats.column[0].n_kept, SW_SERIES_REJECTS_KEPT);
    expect_reject(&o.stats.column[0], 0, 2, 3, "12.3.4", "not a number");
    expect_reject(&o.stats.column[0], 1, 3, 3, "150000",
                  "implausible level (|value| > 100000)");
    expect_reject(&o.stats.column[0], 2, 5, 3, "-100000.5",
                  "implausible level (|value| > 100000)");
    /* Out of the double range: a number, but no plausible level. */
    expect_reject(&o.stats.column[0], 3, 6, 3, "1e400",
                  "implausible level (|value| > 100000)");
    expect_reject(&o.stats.column[0], 4, 7, 3, "0x1A", "not a number");
    expect_reject(&o.stats.column[0], 5, 8, 3, "inf", "not a number");
    /* Cut to fit: 31 bytes and the terminator. */
    expect_reject(&o.stats.column[0], 6, 9, 3,
                  "ERR sensor fault code 0042 wate", "not a number");
    expect_reject(&o.stats.column[0], 9, 12, 3, "+", "not a number");
    assert_close(o.v[2][0], 100000.0, 1e-15);
    assert_close(o.v[13][0], 2.385, 1e-15);
    assert_true(isnan(o.v[0][0]) && isnan(o.v[1][0]));
}

static void test_duplicates_skipped(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n"                 /* 1 */
               "2025-01-01T00:15:00Z,12.345,\n"             /* 2 */
               "2025-01-01T00:15:00Z,12.345,NaN\n"          /* 3: same */
               "2025-01-01T01:15:00+01:00,12.345,x\n"       /* 4: same */
               "2025-01-01T00:30:00Z,12.351,11.240\n", &o); /* 5 */
    expect_ok(&o, 2);
    assert_int_equal(o.stats.duplicates, 2);
    assert_int_equal(o.stats.first_duplicate_line, 3);
    assert_int_equal(o.stats.records, 4);
    assert_true(o.t[1] == t_2025 + 2 * MIN15);
    /* Skipped records add nothing to the column counts. */
    assert_int_equal(o.stats.column[0].valid, 2);
    assert_int_equal(o.stats.column[1].missing, 1);
    assert_int_equal(o.stats.column[1].rejected, 0);
    assert_int_equal(o.stats.column[1].valid, 1);
}

/* A file longer than several read chunks: records straddle the chunk
 * boundaries, with LF and with CRLF line ends. */
static void big_file(const char *eol)
{
    const size_t n = 15000;
    size_t cap = 64 * (n + 2), len = 0;
    char *text = malloc(cap);
    sw_reader_config cfg;
    sw_column_config col;
    fixture f;
    sw_reader *rd = NULL;
    sw_error err;
    int has_row = 1;
    size_t rows = 0;

    assert_non_null(text);
    len += (size_t)snprintf(text + len, cap - len, "time,headwater%s", eol);
    for (size_t i = 0; i < n; i++) {
        if (i % 1000 == 999)
            len += (size_t)snprintf(text + len, cap - len,
                                    "%lld,bad%zu%s",
                                    (long long)(1735689600 + 60 * i), i, eol);
        else
            len += (size_t)snprintf(text + len, cap - len,
                                    "%lld,%zu.%03zu%s",
                                    (long long)(1735689600 + 60 * i),
                                    10 + i % 7, (i * 37) % 1000, eol);
    }
    assert_true(len > 3 * 64 * 1024);
    fixture_write(&f, text, len);
    free(text);
    default_config(&cfg);
    cfg.path = f.path;
    cfg.time_format = SW_TIME_UNIX;
    set_column(&col, "headwater");
    assert_int_equal(sw_reader_open(&rd, &cfg, &col, 1, &err), SW_OK);
    while (has_row) {
        sw_time_ms t;
        double v;
        assert_int_equal(sw_reader_next(rd, &has_row, &t, &v, &err), SW_OK);
        if (!has_row)
            break;
        assert_true(t == t_2025 + MS(60 * rows));
        if (rows % 1000 == 999) {
            assert_true(isnan(v));
        } else {
            double want = (double)(10 + rows % 7) +
                          (double)((rows * 37) % 1000) / 1000.0;
            assert_close(v, want, 1e-15);
        }
        rows++;
    }
    assert_int_equal(rows, n);
    {
        const sw_reader_stats *st = sw_reader_get_stats(rd);
        assert_int_equal(st->records, (long)n);
        assert_int_equal(st->column[0].rejected, 15);
        /* Row i is on line i + 2. */
        expect_reject(&st->column[0], 0, 1001, 2, "bad999", "not a number");
        expect_reject(&st->column[0], 9, 10001, 2, "bad9999",
                      "not a number");
    }
    sw_reader_free(rd);
    unlink(f.path);
}

static void test_many_chunks(void **state)
{
    (void)state;
    big_file("\n");
    big_file("\r\n");
}

/* ---- errors ------------------------------------------------------------- */

static void test_error_time_backwards(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    (void)state;

    default_config(&cfg);
    set_column(&col, "headwater");
    read_all("gauge,time,headwater\n"
             "HW-3,2025-01-01T00:30:00Z,1.5\n"
             "HW-3,2025-01-01T00:45:00Z,1.5\n"
             "HW-3,2025-01-01T00:40:00Z,1.5\n"
             "HW-3,2025-01-01T00:50:00Z,1.5\n", &cfg, &col, 1, &o);
    assert_int_equal(o.n, 2);
    expect_next_error(&o, SW_EDATA, 4, 2,
                      "time goes backwards: 2025-01-01T00:40:00+00:00 is "
                      "before 2025-01-01T00:45:00+00:00 on line 3");
}

static void test_error_duplicate_time_different_value(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n"
               "2025-01-01T00:15:00Z,12.345,11.299\n", &o);
    assert_int_equal(o.n, 1);
    expect_next_error(&o, SW_EDATA, 3, 3,
                      "duplicate time 2025-01-01T00:15:00+00:00 with a "
                      "different value (line 2 has tailwater = 11.234 m");

    /* A reading against a missing one differs too. */
    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n"
               "2025-01-01T00:15:00Z,,11.234\n", &o);
    expect_next_error(&o, SW_EDATA, 3, 2,
                      "(line 2 has headwater = 12.345 m, this line no "
                      "reading)");
}

static void test_error_ragged(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n"
               "2025-01-01T00:30:00Z,12.351\n", &o);
    assert_int_equal(o.n, 1);
    expect_next_error(&o, SW_EDATA, 3, 3,
                      "has 2 fields but the header has 3");

    read_hw_tw("time,headwater,tailwater\n"
               "\n"
               "2025-01-01T00:15:00Z,12.345,11.234,0.5\n", &o);
    expect_next_error(&o, SW_EDATA, 3, 4,
                      "has 4 fields but the header has only 3");
}

static void test_error_bad_timestamp(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    (void)state;

    default_config(&cfg);
    set_column(&col, "headwater");
    read_all("gauge,time,headwater\n"
             "HW-3,2025-12-31T23:45:00Z,1.5\n"
             "HW-3,2025-13-01T00:00:00Z,1.5\n", &cfg, &col, 1, &o);
    assert_int_equal(o.n, 1);
    expect_next_error(&o, SW_EDATA, 3, 2, "month 13");
    assert_non_null(strstr(o.err.message, "2025-13-01T00:00:00Z"));

    /* The time parser's message comes through for Unix seconds too. */
    cfg.time_format = SW_TIME_UNIX;
    read_all("gauge,time,headwater\n# x\nHW-3,17356x,1.5\n", &cfg, &col, 1,
             &o);
    expect_next_error(&o, SW_EDATA, 3, 2, "17356x");

    /* An empty time field. */
    cfg.time_format = SW_TIME_ISO8601;
    read_all("gauge,time,headwater\nHW-3,,1.5\n", &cfg, &col, 1, &o);
    expect_next_error(&o, SW_EDATA, 2, 2, "timestamp");
}

static void test_error_no_offset_no_zone(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n"
               "2025-01-01 00:30,12.351,11.240\n", &o);
    assert_int_equal(o.n, 1);
    expect_next_error(&o, SW_EDATA, 3, 1,
                      "timestamp '2025-01-01 00:30' has no UTC offset and "
                      "the site sets no timezone");
}

static void test_error_missing_column(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config cols[2];
    (void)state;

    read_hw_tw("# Quillon Marsh outfall (invented)\n"
               "\n"
               "time,headwater,tail water\n"
               "2025-01-01T00:15:00Z,12.345,11.234\n", &o);
    expect_open_error(&o, SW_EDATA, 3, 0,
                      "value column 'tailwater' is not in the header "
                      "(delimiter ','); the header has: 'time', "
                      "'headwater', 'tail water'");

    default_config(&cfg);
    cfg.time_column = "Zeit";
    set_column(&cols[0], "headwater");
    read_all("time;headwater\n", &cfg, cols, 1, &o);
    expect_open_error(&o, SW_EDATA, 1, 0,
                      "time column 'Zeit' is not in the header (delimiter "
                      "';')");

    /* Names are matched trimmed, on both sides, quoted or not. */
    default_config(&cfg);
    set_column(&cols[0], " headwater");
    read_all("time ,  headwater \n2025-01-01T00:15:00Z,2.385\n", &cfg, cols,
             1, &o);
    expect_ok(&o, 1);
    read_all("\"\ttime\",\" headwater \"\n2025-01-01T00:15:00Z,2.385\n", &cfg,
             cols, 1, &o);
    expect_ok(&o, 1);

    /* A name the header has twice is ambiguous. */
    set_column(&cols[0], "level");
    read_all("time,level,level\n", &cfg, cols, 1, &o);
    expect_open_error(&o, SW_EDATA, 1, 3,
                      "value column 'level' appears twice in the header "
                      "(fields 2 and 3)");
    /* three times among names that sort before and after it, and
     * prefixes of it: the first two are named */
    read_all("levels,level,lev,time,level,a,level,z\n", &cfg, cols, 1, &o);
    expect_open_error(&o, SW_EDATA, 1, 5,
                      "value column 'level' appears twice in the header "
                      "(fields 2 and 5)");
    /* the time column twice, after the value */
    read_all("level,time,x,time\n", &cfg, cols, 1, &o);
    expect_open_error(&o, SW_EDATA, 1, 4,
                      "time column 'time' appears twice in the header "
                      "(fields 2 and 4)");
    /* a prefix of a name, and a name the value is a prefix of, are other
     * names */
    set_column(&cols[0], "leve");
    read_all("time,level,lev\n", &cfg, cols, 1, &o);
    expect_open_error(&o, SW_EDATA, 1, 0,
                      "value column 'leve' is not in the header");
}

static void test_error_quotes(void **state)
{
    outcome o;
    (void)state;

    /* A quote never closed, with and without a last line end. */
    read_hw_tw("time,headwater,tailwater,note\n"             /* 1 */
               "2025-01-01T00:15:00Z,12.345,11.234,ok\n"     /* 2 */
               "2025-01-01T00:30:00Z,12.351,11.240,\"open\n" /* 3 */
               "and never closed\n", &o);                    /* 4 */
    assert_int_equal(o.n, 1);
    expect_next_error(&o, SW_EDATA, 3, 4, "unterminated quote");
    read_hw_tw("time,headwater,tailwater,note\n"
               "2025-01-01T00:15:00Z,12.345,\"11.2", &o);
    expect_next_error(&o, SW_EDATA, 2, 3, "unterminated quote");

    /* A quote inside an unquoted field, text after a closing quote. */
    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12\"3,11.234\n", &o);
    expect_next_error(&o, SW_EDATA, 2, 2, "misplaced quote in field 2");
    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345,\"11.2\"34\n", &o);
    expect_next_error(&o, SW_EDATA, 2, 3, "misplaced quote in field 3");

    /* In the header. */
    read_hw_tw("time,\"headwater,tailwater\n", &o);
    expect_open_error(&o, SW_EDATA, 1, 2, "unterminated quote");
}

static void test_error_stray_carriage_return(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("time,headwater,tailwater\n"
               "2025-01-01T00:15:00Z,12.345\r,11.234\n", &o);
    expect_next_error(&o, SW_EDATA, 2, 2, "carriage return");
}

static void test_error_empty_and_no_header(void **state)
{
    outcome o;
    (void)state;

    read_hw_tw("", &o);
    expect_open_error(&o, SW_EDATA, 0, 0, "the level file is empty");
    read_hw_tw("\xEF\xBB\xBF", &o);
    expect_open_error(&o, SW_EDATA, 0, 0, "the level file is empty");
    read_hw_tw("# Ospry Reach (invented)\n\n  \n", &o);
    expect_open_error(&o, SW_EDATA, 0, 0, "has no header row");
}

/* A line of `len` bytes (without its LF) that is a valid record with a long
 * note field. */
static char *long_line_file(size_t content, size_t *total)
{
    const char *head = "time,headwater,note\n"
                       "2025-01-01T00:15:00Z,2.385,a\n";
    const char *start = "2025-01-01T00:30:00Z,2.391,";
    size_t hl = strlen(head), sl = strlen(start);
    char *text = malloc(hl + content + 64);

    assert_non_null(text);
    memcpy(text, head, hl);
    memcpy(text + hl, start, sl);
    memset(text + hl + sl, 'w', content - sl);
    *total = hl + content;
    text[(*total)++] = '\n';
    *total += (size_t)sprintf(text + *total,
                              "2025-01-01T00:45:00Z,2.397,b\n");
    return text;
}

static void test_error_long_line(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    size_t len;
    char *text;
    (void)state;

    default_config(&cfg);
    set_column(&col, "headwater");

    /* 1 MiB exactly is still a line. */
    text = long_line_file(1024 * 1024, &len);
    read_all_n(text, len, &cfg, &col, 1, &o);
    free(text);
    expect_ok(&o, 3);
    assert_close(o.v[2][0], 2.397, 1e-15);

    /* One byte more is not. */
    text = long_line_file(1024 * 1024 + 1, &len);
    read_all_n(text, len, &cfg, &col, 1, &o);
    free(text);
    assert_int_equal(o.n, 1);
    expect_next_error(&o, SW_EDATA, 3, 0, "line longer than 1 MiB");
}

static void test_error_open_quote_runs_on(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col;
    const char *head = "time,headwater,note\n"
                       "2025-01-01T00:15:00Z,2.385,\"left open\n";
    size_t hl = strlen(head), len = hl;
    size_t cap = hl + 5u * 1024 * 1024;
    char *text = malloc(cap);
    (void)state;

    /* Short lines, 5 MiB of them, all inside one quoted field. */
    assert_non_null(text);
    memcpy(text, head, hl);
    while (len + 32 < cap)
        len += (size_t)sprintf(text + len,
                               "2025-01-01T00:30:00Z,2.391,x\n");
    default_config(&cfg);
    set_column(&col, "headwater");
    read_all_n(text, len, &cfg, &col, 1, &o);
    free(text);
    expect_next_error(&o, SW_EDATA, 2, 3, "longer than 4 MiB");
}

static void test_error_nonexistent_file(void **state)
{
    sw_reader_config cfg;
    sw_column_config col;
    sw_reader *rd = (sw_reader *)&cfg; /* must be set to NULL */
    sw_error err;
    const char *path = "/nonexistent-sillwatch-dir/levels.csv";
    (void)state;

    default_config(&cfg);
    cfg.path = path;
    set_column(&col, "headwater");
    assert_int_equal(sw_reader_open(&rd, &cfg, &col, 1, &err), SW_EDATA);
    assert_null(rd);
    assert_int_equal(err.code, SW_EDATA);
    assert_string_equal(err.file, path);
    assert_int_equal(err.line, 0);
    assert_int_equal(err.column, 0);
    assert_non_null(strstr(err.message, "cannot open the level file"));
    sw_reader_free(NULL);
}

/* A file of 1500 value columns (more than the 128 a reader once served)
 * is read by one reader: each column's values and counts are its own.
 * Column c holds (row + 1) * 10 + c / 10000 m; it is blank on row 1 when
 * c % 7 == 0 and not a number on row 2 when c % 11 == 0. */
#define WIDE 1500
static void test_wide_file(void **state)
{
    size_t cap = (size_t)WIDE * 40 + 256, used;
    char *text = malloc(cap), (*names)[16] = calloc(WIDE, sizeof *names);
    sw_column_config *cols = calloc(WIDE, sizeof *cols);
    double *v = calloc(WIDE, sizeof *v);
    sw_reader_config cfg;
    sw_reader *rd;
    sw_error err;
    fixture f;
    int has_row;
    sw_time_ms t;
    (void)state;

    assert_true(text && names && cols && v);
    used = (size_t)snprintf(text, cap, "time");
    for (int c = 0; c < WIDE; c++) {
        snprintf(names[c], sizeof names[c], "m%04d", c);
        used += (size_t)snprintf(text + used, cap - used, ",%s", names[c]);
    }
    text[used++] = '\n';
    for (int r = 0; r < 3; r++) {
        used += (size_t)snprintf(text + used, cap - used,
                                 "2025-01-01T00:%02d:00Z", 15 * (r + 1));
        for (int c = 0; c < WIDE; c++) {
            if (r == 1 && c % 7 == 0)
                used += (size_t)snprintf(text + used, cap - used, ",");
            else if (r == 2 && c % 11 == 0)
                used += (size_t)snprintf(text + used, cap - used, ",x");
            else
                used += (size_t)snprintf(text + used, cap - used, ",%d.%04d",
                                         (r + 1) * 10, c);
        }
        text[used++] = '\n';
    }
    assert_true(used < cap);
    fixture_write(&f, text, used);
    default_config(&cfg);
    cfg.path = f.path;
    /* asked in reverse order: value index i is column WIDE - 1 - i */
    for (int i = 0; i < WIDE; i++)
        set_column(&cols[i], names[WIDE - 1 - i]);
    assert_int_equal(sw_reader_open(&rd, &cfg, cols, WIDE, &err), SW_OK);
    for (int r = 0; r < 3; r++) {
        assert_int_equal(sw_reader_next(rd, &has_row, &t, v, &err), SW_OK);
        assert_true(has_row);
        assert_true(t == t_2025 + (sw_time_ms)(r + 1) * MIN15);
        for (int i = 0; i < WIDE; i++) {
            int c = WIDE - 1 - i;
            if ((r == 1 && c % 7 == 0) || (r == 2 && c % 11 == 0))
                assert_true(isnan(v[i]));
            else
                assert_close(v[i], (r + 1) * 10 + c / 10000.0, 1e-15);
        }
    }
    assert_int_equal(sw_reader_next(rd, &has_row, &t, v, &err), SW_OK);
    assert_false(has_row);
    const sw_reader_stats *st = sw_reader_get_stats(rd);
    assert_int_equal(st->records, 3);
    for (int i = 0; i < WIDE; i++) {
        int c = WIDE - 1 - i;
        long missing = c % 7 == 0, rejected = c % 11 == 0;
        assert_int_equal(st->column[i].missing, missing);
        assert_int_equal(st->column[i].rejected, rejected);
        assert_int_equal(st->column[i].valid, 3 - missing - rejected);
        assert_int_equal(sw_reader_field(rd, (size_t)i), c + 2);
        if (rejected)
            expect_reject(&st->column[i], 0, 4, c + 2, "x", "not a number");
    }
    sw_reader_free(rd);
    unlink(f.path);
    free(text);
    free(names);
    free(cols);
    free(v);
}

/* More columns than SW_SERIES_MAX_COLUMNS asked of one file: an error
 * naming the file and the count, before the file is read. */
static void test_error_too_many_columns(void **state)
{
    size_t n = (size_t)SW_SERIES_MAX_COLUMNS + 1;
    sw_column_config *cols = calloc(n, sizeof *cols);
    sw_reader_config cfg;
    sw_reader *rd = (sw_reader *)&cfg; /* must be set to NULL */
    sw_error err;
    char count[32];
    (void)state;

    assert_non_null(cols);
    for (size_t i = 0; i < n; i++)
        set_column(&cols[i], "headwater");
    default_config(&cfg);
    cfg.path = "/nonexistent-sillwatch-dir/wide.csv";
    assert_int_equal(sw_reader_open(&rd, &cfg, cols, n, &err), SW_EDATA);
    assert_null(rd);
    assert_string_equal(err.file, cfg.path);
    snprintf(count, sizeof count, "%zu value columns", n);
    assert_non_null(strstr(err.message, count));
    assert_non_null(strstr(err.message, "at most 100000"));
    /* at the bound itself, the reader goes on to open the file */
    assert_int_equal(sw_reader_open(&rd, &cfg, cols, n - 1, &err), SW_EDATA);
    assert_non_null(strstr(err.message, "cannot open the level file"));
    free(cols);
}

/* Runs of plain lines are parsed in one piece: blank lines inside them
 * (also lines of tabs in a tab-delimited file), and the lines the
 * line-by-line path takes between them (a comment, a CRLF line, a quoted
 * field over two lines), keep every later line number right. */
static void test_plain_runs_count_lines(void **state)
{
    outcome o;
    sw_reader_config cfg;
    sw_column_config col[2];
    const char *text = "time\theadwater\ttailwater\tnote\n"
                       "2025-01-01T00:00:00Z\t2.385\t1.75\t\n"
                       "\t\t\t\n"
                       "   \n"
                       "\n"
                       "2025-01-01T00:15:00Z\t2.391\tbad1\t\n"
                       "# a comment\n"
                       "2025-01-01T00:30:00Z\t2.397\t1.76\t\r\n"
                       "2025-01-01T00:45:00Z\t2.4\t1.77\t\"two\nlines\"\n"
                       " \t \n"
                       "2025-01-01T01:00:00Z\t2.403\tbad2\tx\n"
                       "2025-01-01T01:15:00Z\t2.409\t1.78\n"
                       "2025-01-01T01:30:00Z\t2.415\n";
    (void)state;

    default_config(&cfg);
    set_column(&col[0], "headwater");
    set_column(&col[1], "tailwater");
    read_all(text, &cfg, col, 2, &o);
    assert_int_equal(o.n, 6);
    assert_true(o.t[4] == t_2025 + MS(3600));
    assert_close(o.v[4][0], 2.403, 1e-15);
    assert_true(isnan(o.v[4][1]));
    expect_reject(&o.stats.column[1], 0, 6, 3, "bad1", "not a number");
    expect_reject(&o.stats.column[1], 1, 12, 3, "bad2", "not a number");
    expect_next_error(&o, SW_EDATA, 14, 3, "has 2 fields");
}

/* sw_reader_next_rows() hands out what sw_reader_next() does, in chunks,
 * across plain runs and the lines between them, and then the error. */
static void test_next_rows_same_as_next(void **state)
{
    fixture f;
    sw_reader_config cfg;
    sw_column_config col[2];
    sw_reader *a = NULL, *b = NULL;
    sw_error ea, eb;
    const char *text = "time,headwater,tailwater\n"
                       "2025-01-01T00:00:00Z,2.385,1.75\n"
                       "2025-01-01T00:15:00Z,2.391,\n"
                       "# a comment\n"
                       "2025-01-01T00:30:00Z,\"2.397\",1.76\n"
                       "2025-01-01T00:45:00Z,2.4,1.77\r\n"
                       "2025-01-01T01:00:00Z,2.403,x\n"
                       "2025-01-01T01:15:00Z,2.409,1.78\n"
                       "2025-01-01T01:30:00Z,2.415,1.79\n"
                       "2025-01-01T01:15:00Z,2.421,1.80\n";
    sw_time_ms ta[16], tb[16];
    double va[32], vb[32];
    size_t na = 0, nb = 0, got;
    int has_row = 1, rca, rcb;
    (void)state;

    fixture_write(&f, text, strlen(text));
    default_config(&cfg);
    cfg.path = f.path;
    set_column(&col[0], "headwater");
    set_column(&col[1], "tailwater");
    assert_int_equal(sw_reader_open(&a, &cfg, col, 2, &ea), SW_OK);
    assert_int_equal(sw_reader_open(&b, &cfg, col, 2, &eb), SW_OK);
    while ((rca = sw_reader_next(a, &has_row, &ta[na], &va[2 * na], &ea)) ==
               SW_OK && has_row)
        na++;
    while ((rcb = sw_reader_next_rows(b, 3, &tb[nb], &vb[2 * nb], &got,
                                      &eb)) == SW_OK && got > 0)
        nb += got;
    assert_int_equal(na, 7);
    assert_int_equal(nb, na);
    assert_int_equal(rca, SW_EDATA);
    assert_int_equal(rcb, rca);
    assert_int_equal(got, 0);
    assert_int_equal(eb.line, ea.line);
    assert_int_equal(eb.column, ea.column);
    assert_string_equal(eb.message, ea.message);
    for (size_t i = 0; i < na; i++) {
        assert_true(ta[i] == tb[i]);
        for (size_t c = 0; c < 2; c++)
            assert_true(va[2 * i + c] == vb[2 * i + c] ||
                        (isnan(va[2 * i + c]) && isnan(vb[2 * i + c])));
    }
    sw_reader_free(a);
    sw_reader_free(b);
    unlink(f.path);
}

/* sw_reader_next_rows_at() gives the line each record begins on, over
 * plain runs, comments, blank lines and a quoted field spanning lines,
 * and sw_reader_line() that of the last record handed out. */
static void test_record_lines(void **state)
{
    fixture f;
    sw_reader_config cfg;
    sw_column_config col;
    sw_reader *a = NULL, *b = NULL;
    sw_error err;
    const char *text = "# levels\n"
                       "time,headwater,note\n"
                       "2025-01-01T00:00:00Z,2.385,\n"        /* line 3 */
                       "\n"
                       "2025-01-01T00:15:00Z,2.391,\n"        /* line 5 */
                       "# a comment\n"
                       "2025-01-01T00:30:00Z,2.397,\"two\n"  /* line 7 */
                       "lines\"\n"
                       "2025-01-01T00:45:00Z,2.4,\r\n"       /* line 9 */
                       "2025-01-01T01:00:00Z,2.403,\n";      /* line 10 */
    const long want[5] = {3, 5, 7, 9, 10};
    sw_time_ms t[8];
    long lines[8];
    double v[8];
    size_t n = 0, got;
    int has_row;
    (void)state;

    fixture_write(&f, text, strlen(text));
    default_config(&cfg);
    cfg.path = f.path;
    set_column(&col, "headwater");
    assert_int_equal(sw_reader_open(&a, &cfg, &col, 1, &err), SW_OK);
    while (sw_reader_next_rows_at(a, 2, &t[n], &lines[n], &v[n], &got,
                                  &err) == SW_OK && got > 0) {
        n += got;
        assert_int_equal(sw_reader_line(a), lines[n - 1]);
    }
    assert_int_equal(n, 5);
    for (size_t i = 0; i < n; i++)
        assert_int_equal(lines[i], want[i]);
    assert_int_equal(sw_reader_open(&b, &cfg, &col, 1, &err), SW_OK);
    for (size_t i = 0; i < 5; i++) {
        assert_int_equal(sw_reader_next(b, &has_row, &t[0], &v[0], &err),
                         SW_OK);
        assert_int_equal(sw_reader_line(b), want[i]);
    }
    sw_reader_free(a);
    sw_reader_free(b);
    unlink(f.path);
}

static void test_error_is_sticky(void **state)
{
    fixture f;
    sw_reader_config cfg;
    sw_column_config col;
    sw_reader *rd = NULL;
    sw_error err;
    sw_time_ms t;
    double v;
    int has_row = 0;
    const char *text = "time,headwater\n"
                       "2025-01-01T00:15:00Z,2.385\n"
                       "2025-01-01T00:00:00Z,2.391\n"
                       "2025-01-01T00:30:00Z,2.397\n";
    (void)state;

    fixture_write(&f, text, strlen(text));
    default_config(&cfg);
    cfg.path = f.path;
    set_column(&col, "headwater");
    assert_int_equal(sw_reader_open(&rd, &cfg, &col, 1, &err), SW_OK);
    assert_int_equal(sw_reader_next(rd, &has_row, &t, &v, &err), SW_OK);
    assert_int_equal(has_row, 1);
    assert_int_equal(sw_reader_next(rd, &has_row, &t, &v, &err), SW_EDATA);
    assert_int_equal(has_row, 0);
    memset(&err, 0, sizeof err);
    /* The reader does not go on past an error: the same error again. */
    assert_int_equal(sw_reader_next(rd, &has_row, &t, &v, &err), SW_EDATA);
    assert_int_equal(err.line, 3);
    assert_int_equal(has_row, 0);
    sw_reader_free(rd);
    unlink(f.path);
}

/* A last line without a line end: used when the file did not change
 * while it was read; left out, and its line number kept in the stats,
 * when a writer appended to the file after it was opened (the line was
 * cut by that writer: "11.606,1" would have been read as a 1 m
 * tailwater).  Rows appended after the open are not read: the file is
 * read as it was when opened. */
static void test_partial_last_line(void **state)
{
    static const char text[] = "time,headwater,tailwater\n"
                               "2025-01-01T00:00:00Z,11.605,1.47\n"
                               "2025-01-01T00:15:00Z,11.606,1";
    outcome o;
    fixture f;
    sw_reader_config cfg;
    sw_column_config cols[2];
    sw_reader *rd = NULL;
    sw_error err;
    sw_time_ms t;
    double v[2];
    int has_row = 1;
    size_t n = 0;
    FILE *fp;
    (void)state;

    /* unchanged: the last line is the file's last record */
    read_hw_tw(text, &o);
    expect_ok(&o, 2);
    assert_close(o.v[1][1], 1.0, 0);
    assert_int_equal(o.stats.partial_line, 0);

    /* a writer finishes the line and adds one after the open */
    default_config(&cfg);
    set_column(&cols[0], "headwater");
    set_column(&cols[1], "tailwater");
    fixture_write(&f, text, strlen(text));
    cfg.path = f.path;
    assert_int_equal(sw_reader_open(&rd, &cfg, cols, 2, &err), SW_OK);
    fp = fopen(f.path, "a");
    assert_non_null(fp);
    fputs(".48\n2025-01-01T00:30:00Z,11.607,1.49\n", fp);
    assert_int_equal(fclose(fp), 0);
    while (has_row) {
        assert_int_equal(sw_reader_next(rd, &has_row, &t, v, &err), SW_OK);
        if (has_row) {
            assert_true(n < 1);
            assert_close(v[1], 1.47, 1e-15);
            n++;
        }
    }
    assert_int_equal(n, 1);
    assert_int_equal(sw_reader_get_stats(rd)->partial_line, 3);
    sw_reader_free(rd);
    unlink(f.path);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_comma),
        cmocka_unit_test(test_partial_last_line),
        cmocka_unit_test(test_semicolon_decimal_comma),
        cmocka_unit_test(test_tab),
        cmocka_unit_test(test_delimiter_detection),
        cmocka_unit_test(test_quoted_fields),
        cmocka_unit_test(test_comments_and_blank_lines),
        cmocka_unit_test(test_byte_order_mark),
        cmocka_unit_test(test_crlf),
        cmocka_unit_test(test_quoted_newline_keeps_lines),
        cmocka_unit_test(test_header_only),
        cmocka_unit_test(test_extra_fields_named_in_header),
        cmocka_unit_test(test_iso_with_offsets),
        cmocka_unit_test(test_local_times_with_zone),
        cmocka_unit_test(test_repeated_hour_resolved_by_order),
        cmocka_unit_test(test_skipped_hour_counted),
        cmocka_unit_test(test_unix_seconds),
        cmocka_unit_test(test_feet_with_offset),
        cmocka_unit_test(test_missing_tokens),
        cmocka_unit_test(test_rejected_fields),
        cmocka_unit_test(test_duplicates_skipped),
        cmocka_unit_test(test_many_chunks),
        cmocka_unit_test(test_error_time_backwards),
        cmocka_unit_test(test_error_duplicate_time_different_value),
        cmocka_unit_test(test_error_ragged),
        cmocka_unit_test(test_error_bad_timestamp),
        cmocka_unit_test(test_error_no_offset_no_zone),
        cmocka_unit_test(test_error_missing_column),
        cmocka_unit_test(test_error_quotes),
        cmocka_unit_test(test_error_stray_carriage_return),
        cmocka_unit_test(test_error_empty_and_no_header),
        cmocka_unit_test(test_error_long_line),
        cmocka_unit_test(test_error_open_quote_runs_on),
        cmocka_unit_test(test_error_nonexistent_file),
        cmocka_unit_test(test_error_is_sticky),
        cmocka_unit_test(test_plain_runs_count_lines),
        cmocka_unit_test(test_next_rows_same_as_next),
        cmocka_unit_test(test_record_lines),
        cmocka_unit_test(test_wide_file),
        cmocka_unit_test(test_error_too_many_columns),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
