/* Unit tests for output files and output sets (src/outfile.c): a set
 * published over another, the manifest, and the recovery of journals left
 * at each stage of a publish or of a rollback (as a killed process leaves
 * them), which must always end in one whole set. */
#define _DEFAULT_SOURCE /* mkdtemp */
#include "testutil.h"

#include <dirent.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "sillwatch/outfile.h"

static const char *const names[] = {"a.csv", "b.csv"};

/* Write `text` to dir/name. */
static void put(const char *dir, const char *name, const char *text)
{
    char path[600];
    FILE *f;
    snprintf(path, sizeof path, "%s/%s", dir, name);
    f = fopen(path, "w");
    assert_non_null(f);
    fputs(text, f);
    assert_int_equal(fclose(f), 0);
}

/* Remove dir/name, which must exist. */
static void drop(const char *dir, const char *name)
{
    char path[600];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    assert_int_equal(unlink(path), 0);
}

/* The text of dir/name ("-" when missing). */
static const char *get(const char *dir, const char *name)
{
    static char buf[4096];
    char path[600];
    size_t n;
    FILE *f;
    snprintf(path, sizeof path, "%s/%s", dir, name);
    f = fopen(path, "r");
    if (f == NULL)
        return "-";
    n = fread(buf, 1, sizeof buf - 1, f);
    buf[n] = '\0';
    fclose(f);
    return buf;
}

/* Entries of dir (hidden ones too), but . and .. */
static int entries(const char *dir)
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

/* Publish a set of a.csv (and b.csv when b is not NULL). */
static int publish(const char *dir, const char *a, const char *b,
                   sw_error *err)
{
    sw_outfile f[2];
    sw_outset_meta meta = {"9.9.9", "00ff", "2026-01-01T00:00:00Z"};
    memset(f, 0, sizeof f);
    assert_int_equal(sw_outfile_open(&f[0], dir, names[0], err), SW_OK);
    fputs(a, f[0].fp);
    assert_int_equal(sw_outfile_close(&f[0], err), SW_OK);
    if (b != NULL) {
        assert_int_equal(sw_outfile_open(&f[1], dir, names[1], err), SW_OK);
        fputs(b, f[1].fp);
        assert_int_equal(sw_outfile_close(&f[1], err), SW_OK);
    }
    return sw_outset_publish(dir, f, names, 2, &meta, err);
}

static void make_dir(char *dir, size_t n)
{
    const char *tmp = getenv("TMPDIR");
    snprintf(dir, n, "%s/sw_outset_XXXXXX",
             tmp != NULL && tmp[0] != '\0' ? tmp : "/tmp");
    assert_non_null(mkdtemp(dir));
}

static void remove_dir(const char *dir)
{
    char cmd[700];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
    assert_int_equal(system(cmd), 0);
}

/* A set over a set: the new files, a manifest naming them (the SHA-256 of
 * "new a\n" as GNU coreutils' sha256sum gives it, an independent
 * implementation), and a name the new set lacks removed. */
static void test_set_over_set(void **state)
{
    char dir[256];
    sw_error err;
    (void)state;

    make_dir(dir, sizeof dir);
    assert_int_equal(publish(dir, "old a\n", "old b\n", &err), SW_OK);
    assert_int_equal(publish(dir, "new a\n", NULL, &err), SW_OK);
    assert_string_equal(get(dir, "a.csv"), "new a\n");
    assert_string_equal(get(dir, "b.csv"), "-");
    assert_string_equal(
        get(dir, "manifest.csv"),
        "file,bytes,sha256,tool_version,site_sha256,run_time\n"
        "a.csv,6,"
        "77981ea7ac834d42c8597b6879cf9e934679a54e817b2cd2ef461160026d7714,"
        "9.9.9,00ff,2026-01-01T00:00:00Z\n");
    assert_int_equal(entries(dir), 2);
    remove_dir(dir);
}

/* Write `size` bytes of a known sequence through an output file in pieces
 * of odd sizes (1 to 70,001 bytes), close it, and check the file against
 * the sequence byte for byte, its size, and the SHA-256 taken as it was
 * written against GNU coreutils' sha256sum of the file (an independent
 * implementation).  Sizes around and across the sink's chunks: the first
 * chunk, a chunk exactly, the ring of chunks filled more than once. */
static void write_and_check(const char *dir, size_t size)
{
    sw_outfile f;
    sw_error err;
    unsigned char *want = malloc(size + 1), *got = malloc(size + 1);
    unsigned long x = 2463534242UL;
    char path[600], cmd[800], hex[80] = "";
    size_t at = 0, piece = 1;
    FILE *fp;

    assert_non_null(want);
    assert_non_null(got);
    for (size_t i = 0; i < size; i++) {
        x ^= x << 13, x ^= x >> 17, x ^= x << 5, x &= 0xffffffffUL;
        want[i] = (unsigned char)(x >> 11);
    }
    memset(&f, 0, sizeof f);
    assert_int_equal(sw_outfile_open(&f, dir, "big.csv", &err), SW_OK);
    while (at < size) {
        size_t n = size - at < piece ? size - at : piece;
        assert_int_equal(fwrite(want + at, 1, n, f.fp), n);
        at += n;
        piece = (piece * 7 + 3) % 70001 + 1;
    }
    assert_int_equal(sw_outfile_close(&f, &err), SW_OK);
    assert_int_equal(f.bytes, size);
    snprintf(path, sizeof path, "%s", f.tmp);
    fp = fopen(path, "rb");
    assert_non_null(fp);
    assert_int_equal(fread(got, 1, size + 1, fp), size);
    fclose(fp);
    assert_memory_equal(got, want, size);
    snprintf(cmd, sizeof cmd, "sha256sum '%s'", path);
    fp = popen(cmd, "r");
    assert_non_null(fp);
    assert_non_null(fgets(hex, sizeof hex, fp));
    pclose(fp);
    hex[64] = '\0';
    assert_string_equal(f.sha256, hex);
    sw_outfile_abort(&f);
    free(want);
    free(got);
}

static void check_sizes(const char *dir)
{
    const size_t c = SW_OUTFILE_CHUNK;
    const size_t sizes[] = {0, 1, 4095, 4096, c - 1, c, c + 1,
                            2 * c, 3 * c + 17, 7 * c + 4099};
    for (size_t i = 0; i < sizeof sizes / sizeof sizes[0]; i++)
        write_and_check(dir, sizes[i]);
    assert_int_equal(entries(dir), 0); /* aborted: nothing left */
}

/* On this test's folder (on the Debian machines here ext4, which takes
 * O_DIRECT for the full chunks). */
static void test_sink_sizes(void **state)
{
    char dir[256];
    (void)state;
    make_dir(dir, sizeof dir);
    check_sizes(dir);
    remove_dir(dir);
}

/* The same on /dev/shm where there is one: tmpfs, which (before Linux
 * 6.6) refuses O_DIRECT, so the chunks are written buffered. */
static void test_sink_sizes_tmpfs(void **state)
{
    char dir[] = "/dev/shm/sw_outset_XXXXXX";
    (void)state;
    if (access("/dev/shm", W_OK) != 0 || mkdtemp(dir) == NULL)
        skip();
    check_sizes(dir);
    remove_dir(dir);
}

/* The journal a killed process leaves, by hand, for process 4194305
 * (above any Linux process id): `set` lists the names; `links` are the
 * names whose previous file is still in the journal. */
static void make_journal(const char *dir, const char *set, int link_a,
                         int link_b, int link_manifest)
{
    char j[600], from[700], to[700];
    snprintf(j, sizeof j, "%s/.sillwatch.4194305.publish", dir);
    assert_int_equal(mkdir(j, 0700), 0);
    put(j, "set", set);
    const int want[3] = {link_a, link_b, link_manifest};
    const char *const n3[3] = {"a.csv", "b.csv", "manifest.csv"};
    for (int i = 0; i < 3; i++) {
        if (!want[i])
            continue;
        snprintf(from, sizeof from, "%s/%s", dir, n3[i]);
        snprintf(to, sizeof to, "%s/%s", j, n3[i]);
        assert_int_equal(link(from, to), 0);
    }
}

static const char set_old[] = "old a.csv\nold b.csv\nold manifest.csv\n";

/* Killed between the renames: a.csv new, b.csv old, no manifest. */
static void test_recover_mid_publish(void **state)
{
    char dir[256];
    sw_outset_recovery rec;
    sw_error err;
    (void)state;

    make_dir(dir, sizeof dir);
    put(dir, "a.csv", "old a\n");
    put(dir, "b.csv", "old b\n");
    put(dir, "manifest.csv", "old manifest\n");
    make_journal(dir, set_old, 1, 1, 1);
    drop(dir, "manifest.csv");
    drop(dir, "a.csv");
    put(dir, "a.csv", "new a\n");
    put(dir, ".sillwatch.4194305.b.csv.123456", "half");
    assert_int_equal(sw_outset_recover(dir, &rec, &err), SW_OK);
    assert_int_equal(rec.publish, 2);
    assert_int_equal(rec.publish_pid, 4194305);
    assert_int_equal(rec.stale_removed, 1);
    assert_string_equal(get(dir, "a.csv"), "old a\n");
    assert_string_equal(get(dir, "b.csv"), "old b\n");
    assert_string_equal(get(dir, "manifest.csv"), "old manifest\n");
    assert_int_equal(entries(dir), 3);
    remove_dir(dir);
}

/* Killed during a rollback: a.csv already put back (its link gone from
 * the journal), b.csv still new, the manifest not yet back.  The next
 * recovery finishes it. */
static void test_recover_mid_rollback(void **state)
{
    char dir[256];
    sw_outset_recovery rec;
    sw_error err;
    (void)state;

    make_dir(dir, sizeof dir);
    put(dir, "a.csv", "old a\n");
    put(dir, "b.csv", "old b\n");
    put(dir, "manifest.csv", "old manifest\n");
    make_journal(dir, set_old, 0, 1, 1);
    drop(dir, "manifest.csv");
    drop(dir, "b.csv");
    put(dir, "b.csv", "new b\n");
    assert_int_equal(sw_outset_recover(dir, &rec, &err), SW_OK);
    assert_int_equal(rec.publish, 2);
    assert_string_equal(get(dir, "a.csv"), "old a\n");
    assert_string_equal(get(dir, "b.csv"), "old b\n");
    assert_string_equal(get(dir, "manifest.csv"), "old manifest\n");
    assert_int_equal(entries(dir), 3);
    remove_dir(dir);
}

/* Killed after the new manifest was put in place: the new set stays, and
 * a name that held nothing before keeps its new file. */
static void test_recover_after_publish(void **state)
{
    char dir[256];
    sw_outset_recovery rec;
    sw_error err;
    (void)state;

    make_dir(dir, sizeof dir);
    put(dir, "a.csv", "old a\n");
    put(dir, "manifest.csv", "old manifest\n");
    make_journal(dir, "old a.csv\nnone b.csv\nold manifest.csv\n", 1, 0, 1);
    drop(dir, "a.csv");
    drop(dir, "manifest.csv");
    put(dir, "a.csv", "new a\n");
    put(dir, "b.csv", "new b\n");
    put(dir, "manifest.csv", "new manifest\n");
    assert_int_equal(sw_outset_recover(dir, &rec, &err), SW_OK);
    assert_int_equal(rec.publish, 1);
    assert_string_equal(get(dir, "a.csv"), "new a\n");
    assert_string_equal(get(dir, "b.csv"), "new b\n");
    assert_string_equal(get(dir, "manifest.csv"), "new manifest\n");
    assert_int_equal(entries(dir), 3);
    remove_dir(dir);
}

/* A journal without its list (killed while making it): nothing had been
 * replaced; it is removed and the files stay. */
static void test_recover_unfinished_journal(void **state)
{
    char dir[256], j[300];
    sw_outset_recovery rec;
    sw_error err;
    (void)state;

    make_dir(dir, sizeof dir);
    put(dir, "a.csv", "old a\n");
    snprintf(j, sizeof j, "%s/.sillwatch.4194305.publish", dir);
    assert_int_equal(mkdir(j, 0700), 0);
    put(j, "set.tmp", "old a");
    assert_int_equal(sw_outset_recover(dir, &rec, &err), SW_OK);
    assert_string_equal(get(dir, "a.csv"), "old a\n");
    assert_int_equal(entries(dir), 1);
    remove_dir(dir);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_set_over_set),
        cmocka_unit_test(test_sink_sizes),
        cmocka_unit_test(test_sink_sizes_tmpfs),
        cmocka_unit_test(test_recover_mid_publish),
        cmocka_unit_test(test_recover_mid_rollback),
        cmocka_unit_test(test_recover_after_publish),
        cmocka_unit_test(test_recover_unfinished_journal),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
