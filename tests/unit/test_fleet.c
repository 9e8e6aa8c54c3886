/* Tests of the fleet table (src/fleet.c): folders made by hand as `run`
 * leaves them (summary.csv, events.csv, manifest.csv), their manifests'
 * SHA-256 computed by GNU coreutils' sha256sum (an implementation
 * independent of the library's nettle), and every way a folder can fail,
 * with its file, line and column.  RFC 4180 (section 2) for the quoting. */
#define _DEFAULT_SOURCE /* mkdtemp, open_memstream */
#include "testutil.h"

#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "sillwatch/cancel.h"
#include "sillwatch/fleet.h"

#define HEADER                                                              \
    "gate,start,end,hours_evaluated,hours_not_evaluated,hours_low,"          \
    "hours_open,hours_below_margin,events,longest_event_hours,min_fs,"       \
    "min_fs_time\n"

#define ALDER_SHA \
    "3f1c0a9be27d45e6a8b0c2d4e6f80123456789abcdef0123456789abcdef0a1b"
#define BIRCH_SHA \
    "9e8d7c6b5a4f3e2d1c0b9a8f7e6d5c4b3a2f1e0d9c8b7a6f5e4d3c2b1a0f9e8d"

/* Invented rows in the shape `run` writes them. */
static const char alder_rows[] =
    "sluice,2025-03-03T00:00:00+01:00,2025-03-10T00:00:00+01:00,163.2500,"
    "4.7500,2.1375,0.0000,2.1375,1,2.1375,1.3817,"
    "2025-03-06T14:15:00+01:00\n"
    "culvert,2025-03-03T00:00:00+01:00,2025-03-10T00:00:00+01:00,163.2500,"
    "4.7500,0.0000,0.0000,0.0000,0,0.0000,2.0463,"
    "2025-03-06T14:15:00+01:00\n";
static const char birch_rows[] =
    "outlet,2025-03-03T00:00:00Z,2025-03-09T12:00:00Z,156.0000,0.0000,"
    "0.0000,0.0000,0.0000,0,0.0000,inf,\n";

static char base[256];

static void path_of(char *buf, size_t n, const char *dir, const char *name)
{
    snprintf(buf, n, "%s/%s/%s", base, dir, name);
}

static void put(const char *dir, const char *name, const char *text)
{
    char path[512];
    path_of(path, sizeof path, dir, name);
    FILE *fp = fopen(path, "w");
    assert_non_null(fp);
    fputs(text, fp);
    assert_int_equal(fclose(fp), 0);
}

/* The size and SHA-256 of a file, by stat and sha256sum. */
static void size_and_sha(const char *dir, const char *name, long *bytes,
                         char hex[65])
{
    char path[512], cmd[600];
    struct stat sb;
    path_of(path, sizeof path, dir, name);
    assert_int_equal(stat(path, &sb), 0);
    *bytes = (long)sb.st_size;
    snprintf(cmd, sizeof cmd, "sha256sum '%s'", path);
    FILE *p = popen(cmd, "r");
    assert_non_null(p);
    assert_non_null(fgets(hex, 65, p));
    assert_int_equal(strlen(hex), 64);
    assert_int_equal(pclose(p), 0);
}

/* A folder `dir` holding summary.csv (`summary`) and events.csv, and the
 * manifest of both as `run` writes it, with the site SHA-256 `site`. */
static void make_set(const char *dir, const char *summary, const char *site)
{
    char path[512], hex[65], text[2048];
    long bytes;
    size_t used;

    snprintf(path, sizeof path, "%s/%s", base, dir);
    assert_int_equal(mkdir(path, 0777), 0);
    put(dir, "summary.csv", summary);
    put(dir, "events.csv", "gate,start,end,hours,worst_status,min_fs,"
                           "min_fs_time,headwater_at_min,tailwater_at_min,"
                           "ends\n");
    used = (size_t)snprintf(text, sizeof text, "file,bytes,sha256,"
                            "tool_version,site_sha256,run_time\n");
    for (int i = 0; i < 2; i++) {
        const char *name = i == 0 ? "summary.csv" : "events.csv";
        size_and_sha(dir, name, &bytes, hex);
        used += (size_t)snprintf(text + used, sizeof text - used,
                                 "%s,%ld,%s,0.1.0,%s,2026-03-10T08:00:00Z\n",
                                 name, bytes, hex, site);
    }
    put(dir, "manifest.csv", text);
}

/* Close the memory stream `fp` and return what was written to it. */
static char *written(FILE *fp, char **buf)
{
    assert_int_equal(fclose(fp), 0);
    return *buf;
}

static int setup(void **state)
{
    (void)state;
    snprintf(base, sizeof base, "/tmp/sw-fleet-XXXXXX");
    return mkdtemp(base) == NULL ? -1 : 0;
}

static int teardown(void **state)
{
    char cmd[300];
    (void)state;
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", base);
    return system(cmd) == 0 ? 0 : -1;
}

/* A fresh folder name for each case. */
static const char *fresh(const char *stem)
{
    static char name[64];
    static int count;
    snprintf(name, sizeof name, "%s%d", stem, ++count);
    return name;
}

static void test_merge_two_sites(void **state)
{
    char a[600], b[600], text[2048], *buf = NULL;
    size_t size;
    sw_fleet_site s;
    sw_error err;
    (void)state;

    char sa[64], sb[64];
    snprintf(sa, sizeof sa, "%s", fresh("m"));
    snprintf(sb, sizeof sb, "%s", fresh("m"));
    char da[80], db[80];
    snprintf(da, sizeof da, "%s/alder", sa);
    snprintf(db, sizeof db, "%s/birch", sb);
    snprintf(a, sizeof a, "%s/%s", base, sa);
    assert_int_equal(mkdir(a, 0777), 0);
    snprintf(a, sizeof a, "%s/%s", base, sb);
    assert_int_equal(mkdir(a, 0777), 0);
    snprintf(text, sizeof text, HEADER "%s", alder_rows);
    make_set(da, text, ALDER_SHA);
    snprintf(text, sizeof text, HEADER "%s", birch_rows);
    make_set(db, text, "");

    snprintf(a, sizeof a, "%s/%s/", base, da); /* a trailing slash */
    snprintf(b, sizeof b, "%s/%s", base, db);
    const char *dirs[] = {a, b};
    FILE *fp = open_memstream(&buf, &size);
    assert_int_equal(sw_fleet_write(fp, dirs, 2, &err), SW_OK);
    snprintf(text, sizeof text,
             "site,site_sha256," HEADER
             "alder," ALDER_SHA ",sluice,2025-03-03T00:00:00+01:00,"
             "2025-03-10T00:00:00+01:00,163.2500,4.7500,2.1375,0.0000,"
             "2.1375,1,2.1375,1.3817,2025-03-06T14:15:00+01:00\n"
             "alder," ALDER_SHA ",culvert,2025-03-03T00:00:00+01:00,"
             "2025-03-10T00:00:00+01:00,163.2500,4.7500,0.0000,0.0000,"
             "0.0000,0,0.0000,2.0463,2025-03-06T14:15:00+01:00\n"
             "birch,,outlet,2025-03-03T00:00:00Z,2025-03-09T12:00:00Z,"
             "156.0000,0.0000,0.0000,0.0000,0.0000,0,0.0000,inf,\n");
    assert_string_equal(written(fp, &buf), text);
    free(buf);

    /* one folder: what it added */
    fp = open_memstream(&buf, &size);
    assert_int_equal(sw_fleet_write_site(fp, a, &s, &err), SW_OK);
    assert_string_equal(s.name, "alder");
    assert_string_equal(s.site_sha256, ALDER_SHA);
    assert_int_equal(s.n_gates, 2);
    assert_int_equal(s.n_below, 1); /* sluice: 2.1375 h below */
    free(written(fp, &buf));
}

/* Fields that need quotes keep them, and an unquoted one that did not
 * loses none of its bytes (RFC 4180, 2.5-2.7): a gate name with a comma
 * and quotes, one over two lines, one with blanks around it; the folder's
 * name with a comma is quoted in the site column. */
static void test_quoting_passes_through(void **state)
{
    char dir[128], path[600], *buf = NULL;
    size_t size;
    sw_error err;
    (void)state;

    const char rows[] =
        HEADER
        "\"weir, \"\"old\"\"\",2025-03-03T00:00:00Z,2025-03-04T00:00:00Z,"
        "24.0000,0.0000,0.0000,0.0000,0.0000,0,0.0000,3.5000,"
        "2025-03-03T06:00:00Z\n"
        "\"two\nlines\",2025-03-03T00:00:00Z,2025-03-04T00:00:00Z,"
        "24.0000,0.0000,0.5000,0.2500,0.7500,2,0.5000,0.8125,"
        "2025-03-03T07:30:00Z\n"
        "\" blank \",2025-03-03T00:00:00Z,2025-03-04T00:00:00Z,"
        "24.0000,0.0000,0.0000,0.0000,0.0000,0,0.0000,,\n";
    snprintf(dir, sizeof dir, "%s", fresh("north,weir"));
    make_set(dir, rows, BIRCH_SHA);
    snprintf(path, sizeof path, "%s/%s", base, dir);
    const char *dirs[] = {path};
    FILE *fp = open_memstream(&buf, &size);
    assert_int_equal(sw_fleet_write(fp, dirs, 1, &err), SW_OK);
    char want[2048], site[160];
    snprintf(site, sizeof site, "\"%s\"", dir);
    snprintf(want, sizeof want,
             "site,site_sha256," HEADER
             "%s," BIRCH_SHA ",\"weir, \"\"old\"\"\",2025-03-03T00:00:00Z,"
             "2025-03-04T00:00:00Z,24.0000,0.0000,0.0000,0.0000,0.0000,0,"
             "0.0000,3.5000,2025-03-03T06:00:00Z\n"
             "%s," BIRCH_SHA ",\"two\nlines\",2025-03-03T00:00:00Z,"
             "2025-03-04T00:00:00Z,24.0000,0.0000,0.5000,0.2500,0.7500,2,"
             "0.5000,0.8125,2025-03-03T07:30:00Z\n"
             "%s," BIRCH_SHA ",\" blank \",2025-03-03T00:00:00Z,"
             "2025-03-04T00:00:00Z,24.0000,0.0000,0.0000,0.0000,0.0000,0,"
             "0.0000,,\n",
             site, site, site);
    assert_string_equal(written(fp, &buf), want);
    free(buf);
}

/* One folder through sw_fleet_write_site: the status, the error's place,
 * and that nothing at all was written. */
static void expect_failure(const char *path, int code, const char *file,
                           long line, long column, const char *words)
{
    char *buf = NULL;
    size_t size;
    sw_error err;
    FILE *fp = open_memstream(&buf, &size);

    sw_error_clear(&err);
    assert_int_equal(sw_fleet_write_site(fp, path, NULL, &err), code);
    assert_int_equal(err.code, code);
    assert_string_equal(err.file, file);
    assert_int_equal(err.line, line);
    assert_int_equal(err.column, column);
    if (strstr(err.message, words) == NULL)
        fail_msg("message '%s' lacks '%s'", err.message, words);
    assert_string_equal(written(fp, &buf), "");
    free(buf);
}

static void test_missing_manifest(void **state)
{
    char dir[64], path[600], mpath[640];
    (void)state;

    snprintf(dir, sizeof dir, "%s", fresh("nomanifest"));
    make_set(dir, HEADER, "");
    snprintf(path, sizeof path, "%s/%s", base, dir);
    snprintf(mpath, sizeof mpath, "%s/manifest.csv", path);
    assert_int_equal(unlink(mpath), 0);
    expect_failure(path, SW_EDATA, path, 0, 0, "no complete output set");

    snprintf(path, sizeof path, "%s/%s", base, "no-such-folder");
    expect_failure(path, SW_EDATA, path, 0, 0, "cannot open the folder");
    snprintf(path, sizeof path, "%s/%s/summary.csv", base, dir);
    expect_failure(path, SW_EDATA, path, 0, 0, "is not a folder");
}

/* A manifest that lists a file the folder lacks, or of another size. */
static void test_manifest_lists_missing_or_wrong_size(void **state)
{
    char dir[64], path[600], file[640];
    (void)state;

    snprintf(dir, sizeof dir, "%s", fresh("incomplete"));
    make_set(dir, HEADER "x,,,,,,,0.0000,,,,\n", "");
    snprintf(path, sizeof path, "%s/%s", base, dir);
    snprintf(file, sizeof file, "%s/events.csv", path);
    assert_int_equal(unlink(file), 0);
    snprintf(file, sizeof file, "%s/manifest.csv", path);
    expect_failure(path, SW_EDATA, file, 3, 1, "lists events.csv, which is "
                                               "not in the folder");

    put(dir, "events.csv", "gate,start\n"); /* 11 bytes, not 92 */
    expect_failure(path, SW_EDATA, file, 3, 2,
                   "lists events.csv with 92 bytes, but it has 11");

    snprintf(file, sizeof file, "%s/events.csv", path);
    assert_int_equal(unlink(file), 0);
    assert_int_equal(mkdir(file, 0777), 0);
    snprintf(file, sizeof file, "%s/manifest.csv", path);
    expect_failure(path, SW_EDATA, file, 3, 1, "not a regular file");
}

/* summary.csv changed after the run: same size, other bytes. */
static void test_summary_changed(void **state)
{
    char dir[64], path[600], file[640];
    (void)state;

    snprintf(dir, sizeof dir, "%s", fresh("changed"));
    make_set(dir, HEADER "sluice,,,,,,,0.0000,,,,\n", "");
    put(dir, "summary.csv", HEADER "sluice,,,,,,,9.0000,,,,\n");
    snprintf(path, sizeof path, "%s/%s", base, dir);
    snprintf(file, sizeof file, "%s/summary.csv", path);
    expect_failure(path, SW_EDATA, file, 0, 0, "does not match its SHA-256");
}

/* A header that is not summary.csv's: the first field that differs, one
 * missing, one too many; each with its line and column. */
static void test_wrong_header(void **state)
{
    static const struct {
        const char *text;
        long line, column;
        const char *words;
    } cases[] = {
        {"gate,start,end,hours,hours_not_evaluated\n", 1, 4,
         "header field 'hours' should be 'hours_evaluated'"},
        {"gate,start,end,hours_evaluated,hours_not_evaluated,hours_low,"
         "hours_open,hours_below_margin,events,longest_event_hours,"
         "min_fs\n", 1, 12, "the header has 11 fields, not the 12"},
        {"gate, start,end\n", 1, 2, /* no blank is trimmed */
         "header field ' start' should be 'start'"},
        {"\n\ngate,start,end,hours_evaluated,hours_not_evaluated,"
         "hours_low,hours_open,hours_below_margin,events,"
         "longest_event_hours,min_fs,min_fs_time,site\n", 3, 13,
         "the header has 13 fields, not the 12"},
        {"", 0, 0, "is empty: no header line"},
        {"gate,\"start\nend\",end\n", 1, 2, /* shown on one line */
         "header field 'start?end' should be 'start'"},
    };
    (void)state;

    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char dir[64], path[600], file[640];
        snprintf(dir, sizeof dir, "%s", fresh("header"));
        make_set(dir, cases[i].text, "");
        snprintf(path, sizeof path, "%s/%s", base, dir);
        snprintf(file, sizeof file, "%s/summary.csv", path);
        expect_failure(path, SW_EDATA, file, cases[i].line, cases[i].column,
                       cases[i].words);
    }
}

/* Rows: the count of fields, hours_below_margin, the CSV itself. */
static void test_bad_rows(void **state)
{
    static const struct {
        const char *rows;
        long line, column;
        const char *words;
    } cases[] = {
        {"a,b\n", 2, 3, "the row has 2 fields, not the 12"},
        {"a,,,,,,,0.0000,,,,\n\"b\nc\",,,,,,,0,,,,,x\n", 4, 13,
         "the row has 13 fields"},
        {"a,,,,,,,-1.5,,,,\n", 2, 8, "hours_below_margin '-1.5'"},
        {"a,,,,,,,,,,,\n", 2, 8, "hours_below_margin ''"},
        {"a,,,,,,,0x1,,,,\n", 2, 8, "hours_below_margin '0x1'"},
        {"a,b\"c,,\n", 2, 2, "malformed CSV"},
        {"a,,,\"open\n\n", 2, 4, "a quoted field is not closed"},
    };
    (void)state;

    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char dir[64], path[600], file[640], text[512];
        snprintf(dir, sizeof dir, "%s", fresh("rows"));
        snprintf(text, sizeof text, HEADER "%s", cases[i].rows);
        make_set(dir, text, "");
        snprintf(path, sizeof path, "%s/%s", base, dir);
        snprintf(file, sizeof file, "%s/summary.csv", path);
        expect_failure(path, SW_EDATA, file, cases[i].line, cases[i].column,
                       cases[i].words);
    }
}

/* Manifests that are not a set's: header, fields, names, digests, the
 * site's digest, a name twice, a set of `screen` (no summary.csv). */
static void test_bad_manifest(void **state)
{
    static const struct {
        const char *text;
        long line, column;
        const char *words;
    } cases[] = {
        {"file,bytes,sha,tool_version,site_sha256,run_time\n", 1, 3,
         "header field 'sha' should be 'sha256'"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "a.csv,1\n", 2, 3, "the row has 2 fields, not the 6"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "../a.csv,1," ALDER_SHA ",0.1.0,,t\n", 2, 1,
         "'../a.csv' is not the name of a file"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "a.csv,12k," ALDER_SHA ",0.1.0,,t\n", 2, 2,
         "'12k' is not a size in bytes"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "a.csv,1,ABC,0.1.0,,t\n", 2, 3, "'ABC' is not a SHA-256"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "a.csv,1," ALDER_SHA ",0.1.0,00ff,t\n", 2, 5,
         "'00ff' is neither a SHA-256"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "a.csv,1," ALDER_SHA ",0.1.0," ALDER_SHA ",t\n"
         "b.csv,1," ALDER_SHA ",0.1.0," BIRCH_SHA ",t\n", 3, 5,
         "differs from line 2's"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "a.csv,1," ALDER_SHA ",0.1.0,,t\n"
         "a.csv,1," ALDER_SHA ",0.1.0,,t\n", 3, 1,
         "lists 'a.csv' twice (also on line 2)"},
        {"file,bytes,sha256,tool_version,site_sha256,run_time\n"
         "a.csv,1," ALDER_SHA ",0.1.0,,t\n", 0, 0,
         "does not list summary.csv"},
        {"", 0, 0, "is empty"},
    };
    (void)state;

    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char dir[64], path[600], file[640];
        snprintf(dir, sizeof dir, "%s", fresh("manifest"));
        make_set(dir, HEADER, "");
        put(dir, "a.csv", "a");
        put(dir, "b.csv", "b");
        put(dir, "manifest.csv", cases[i].text);
        snprintf(path, sizeof path, "%s/%s", base, dir);
        snprintf(file, sizeof file, "%s/manifest.csv", path);
        expect_failure(path, SW_EDATA, file, cases[i].line, cases[i].column,
                       cases[i].words);
    }
}

/* Two folders with one name: nothing is written; a folder path with no
 * name of its own. */
static void test_duplicate_names(void **state)
{
    char one[64], two[64], a[600], b[600], *buf = NULL, name[16];
    size_t size;
    sw_error err;
    (void)state;

    snprintf(one, sizeof one, "%s", fresh("dup"));
    snprintf(two, sizeof two, "%s", fresh("dup"));
    snprintf(a, sizeof a, "%s/%s", base, one);
    assert_int_equal(mkdir(a, 0777), 0);
    snprintf(a, sizeof a, "%s/%s", base, two);
    assert_int_equal(mkdir(a, 0777), 0);
    char da[80], db[80];
    snprintf(da, sizeof da, "%s/cedar", one);
    snprintf(db, sizeof db, "%s/cedar", two);
    make_set(da, HEADER, "");
    make_set(db, HEADER, "");
    snprintf(a, sizeof a, "%s/%s", base, da);
    snprintf(b, sizeof b, "%s/%s//", base, db);
    const char *dirs[] = {a, b};

    FILE *fp = open_memstream(&buf, &size);
    assert_int_equal(sw_fleet_write(fp, dirs, 2, &err), SW_EUSAGE);
    assert_string_equal(err.file, b);
    assert_non_null(strstr(err.message, "has the site name 'cedar', as"));
    assert_string_equal(written(fp, &buf), "");
    free(buf);
    assert_int_equal(sw_fleet_check_names(dirs, 1, &err), SW_OK);

    assert_int_equal(sw_fleet_site_name("out/north/", name, sizeof name,
                                        &err), SW_OK);
    assert_string_equal(name, "north");
    assert_int_equal(sw_fleet_site_name("north", name, sizeof name, &err),
                     SW_OK);
    assert_string_equal(name, "north");
    assert_int_equal(sw_fleet_site_name("a/.hidden", name, sizeof name,
                                        &err), SW_OK);
    assert_string_equal(name, ".hidden");
    const char *no_name[] = {"", "/", "out/.", "..", "a/../", "///"};
    for (size_t i = 0; i < sizeof no_name / sizeof no_name[0]; i++) {
        assert_int_equal(sw_fleet_site_name(no_name[i], name, sizeof name,
                                            &err), SW_EUSAGE);
        assert_string_equal(err.file, no_name[i]);
    }
    assert_int_equal(sw_fleet_site_name("x/abcdefghijklmnop", name,
                                        sizeof name, &err), SW_EUSAGE);
}

/* Going on past bad folders: the good ones are written, each folder's
 * outcome is in its entry, the later of two names is left out. */
static void test_write_each_skips(void **state)
{
    char d[4][80], p[4][600], *buf = NULL, text[2048];
    size_t size;
    sw_error err;
    sw_fleet_entry e[4];
    (void)state;

    char parent[64];
    snprintf(parent, sizeof parent, "%s", fresh("each"));
    snprintf(p[0], sizeof p[0], "%s/%s", base, parent);
    assert_int_equal(mkdir(p[0], 0777), 0);
    snprintf(d[0], sizeof d[0], "%s/alder", parent);
    snprintf(d[1], sizeof d[1], "%s/broken", parent);
    snprintf(d[2], sizeof d[2], "%s/birch", parent);
    snprintf(text, sizeof text, HEADER "%s", alder_rows);
    make_set(d[0], text, ALDER_SHA);
    make_set(d[1], HEADER, "");
    snprintf(text, sizeof text, HEADER "%s", birch_rows);
    make_set(d[2], text, BIRCH_SHA);
    for (int i = 0; i < 3; i++)
        snprintf(p[i], sizeof p[i], "%s/%s", base, d[i]);
    snprintf(p[3], sizeof p[3], "%s/%s/", base, d[0]); /* alder again */
    char mf[640];
    snprintf(mf, sizeof mf, "%s/manifest.csv", p[1]);
    assert_int_equal(unlink(mf), 0);

    const char *dirs[] = {p[0], p[1], p[2], p[3]};
    FILE *fp = open_memstream(&buf, &size);
    assert_int_equal(sw_fleet_write_each(fp, dirs, 4, e, &err), SW_OK);
    assert_int_equal(e[0].status, SW_OK);
    assert_int_equal(e[0].site.n_gates, 2);
    assert_int_equal(e[0].site.n_below, 1);
    assert_int_equal(e[1].status, SW_EDATA);
    assert_string_equal(e[1].err.file, p[1]);
    assert_int_equal(e[2].status, SW_OK);
    assert_string_equal(e[2].site.site_sha256, BIRCH_SHA);
    assert_int_equal(e[3].status, SW_EUSAGE);
    assert_non_null(strstr(e[3].err.message, "'alder'"));
    char want[2048];
    snprintf(want, sizeof want, "site,site_sha256," HEADER "%s%s", "", "");
    size_t used = strlen(want);
    for (const char *r = alder_rows; *r != '\0';) {
        const char *nl = strchr(r, '\n');
        used += (size_t)snprintf(want + used, sizeof want - used,
                                 "alder," ALDER_SHA ",%.*s\n",
                                 (int)(nl - r), r);
        r = nl + 1;
    }
    snprintf(want + used, sizeof want - used, "birch," BIRCH_SHA ",%s",
             birch_rows);
    assert_string_equal(written(fp, &buf), want);
    free(buf);

    /* a stop request ends the table between folders */
    sw_cancel_request(15);
    fp = open_memstream(&buf, &size);
    assert_int_equal(sw_fleet_write(fp, dirs, 1, &err), SW_EINTERRUPTED);
    assert_int_equal(sw_fleet_write_each(fp, dirs, 1, e, &err),
                     SW_EINTERRUPTED);
    sw_cancel_reset();
    free(written(fp, &buf));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_merge_two_sites),
        cmocka_unit_test(test_quoting_passes_through),
        cmocka_unit_test(test_missing_manifest),
        cmocka_unit_test(test_manifest_lists_missing_or_wrong_size),
        cmocka_unit_test(test_summary_changed),
        cmocka_unit_test(test_wrong_header),
        cmocka_unit_test(test_bad_rows),
        cmocka_unit_test(test_bad_manifest),
        cmocka_unit_test(test_duplicate_names),
        cmocka_unit_test(test_write_each_skips),
    };
    return cmocka_run_group_tests(tests, setup, teardown);
}
