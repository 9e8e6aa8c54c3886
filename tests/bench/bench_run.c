/* Benchmark (not a test): the replay of `sillwatch run` on long synthetic
 * level files, against a bare libcsv parse of the same files.
 *
 * Generates (once, under build/bench/data/) files of 500,000 and 5,000,000
 * rows at 15-minute steps, "time,headwater,tailwater", and a site with
 * three gates (two rectangles, one circle).  For each file it times PAIRS
 * pairs of runs, each pair back to back so that both see the machine in
 * the same mood: (bare parse, plain run) and (plain run, run --steps).
 * It prints the medians of the times and of the per-pair ratios: replay /
 * bare parse (target <= 1.2) and --steps / plain run (target <= 3), MB/s,
 * rows/s, gate-steps/s and the peak RSS (target <= 16 MiB, the same for
 * both lengths).  Figures only; never fails on time.  Run from the
 * repository root (make bench does). */
#define _DEFAULT_SOURCE
#include <csv.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/time.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#define DATA_DIR "build/bench/data"
#define PAIRS 5

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Civil date from days since 1970-01-01 (H. Hinnant's algorithm). */
static void civil(long z, int *y, int *m, int *d)
{
    z += 719468;
    long era = (z >= 0 ? z : z - 146096) / 146097;
    long doe = z - era * 146097;
    long yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
    long doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    long mp = (5 * doy + 2) / 153;
    *d = (int)(doy - (153 * mp + 2) / 5 + 1);
    *m = (int)(mp < 10 ? mp + 3 : mp - 9);
    *y = (int)(yoe + era * 400 + (*m <= 2));
}

/* Levels that cross the gates' limits now and then, as a real record
 * does: a slow seasonal headwater with a flood about twice a year, a
 * tidal tailwater, and a little gauge noise.  The events this makes are
 * counted and printed, so that the figures can be read against them. */
static int generate(const char *path, long rows)
{
    struct stat sb;
    /* the data are made once per version of this generator */
    if (stat(path, &sb) == 0)
        return 0;
    FILE *fp = fopen(path, "w");
    if (fp == NULL)
        return -1;
    unsigned long seed = 12345;
    long t0 = 1577836800; /* 2020-01-01T00:00:00Z */
    fputs("time,headwater,tailwater\n", fp);
    for (long i = 0; i < rows; i++) {
        long t = t0 + i * 900;
        int y, m, d;
        civil(t / 86400, &y, &m, &d);
        long s = t % 86400;
        double h = (double)i / 4.0;
        seed = (seed * 16807) % 2147483647;
        double noise = (double)seed / 2147483647.0 - 0.5;
        double hw = 11.40 + 0.08 * sin(h / 1300.0) +
                    0.55 * pow(sin(h / 1400.0), 16) + 0.004 * noise;
        double tw = 11.35 + 0.55 * sin(2.0 * M_PI * h / 12.42) + 0.006 * noise;
        fprintf(fp, "%04d-%02d-%02dT%02ld:%02ld:00Z,%.3f,%.3f\n", y, m, d,
                s / 3600, (s % 3600) / 60, hw, tw);
    }
    return fclose(fp);
}

static int write_site(const char *path, const char *levels)
{
    FILE *fp = fopen(path, "w");
    if (fp == NULL)
        return -1;
    fprintf(fp,
            "[site]\nrequired_fs = 1.5\nmin_sill_reaction = 300\n"
            "[water upstream]\ntemperature = 9\n"
            "[water downstream]\ntemperature = 12.5\nsalinity = 8\n"
            "[series hw]\nfile = %s\nvalue_column = headwater\n"
            "[series tw]\nfile = %s\nvalue_column = tailwater\n"
            "[gate r1]\nshape = rectangle\nhinge_level = 12.4\n"
            "inclination = 80\nseal_top = 0.15\nseal_height = 1.4\n"
            "seal_width = 1.6\nleaf_length = 1.65\nmass = 1450\n"
            "cg_along = 0.86\nvolume = 0.185\nextra_moment = 6500\n"
            "headwater = hw\ntailwater = tw\n"
            "[gate r2]\nshape = rectangle\nhinge_level = 12.4\n"
            "inclination = 78\nseal_top = 0.2\nseal_height = 1.3\n"
            "seal_width = 1.2\nmass = 1100\ncg_along = 0.8\n"
            "extra_moment = 7500\nheadwater = hw\ntailwater = tw\n"
            "[gate c1]\nshape = circle\nhinge_level = 11.95\n"
            "inclination = 75\nseal_top = 0.12\ndiameter = 0.9\n"
            "leaf_length = 1.1\nmass = 420\ncg_along = 0.55\n"
            "volume = 0.054\nextra_moment = 1500\n"
            "headwater = hw\ntailwater = tw\n",
            levels, levels);
    return fclose(fp);
}

static void on_field(void *s, size_t len, void *data)
{
    (void)s;
    *(size_t *)data += len;
}

static void on_row(int c, void *data)
{
    (void)c;
    (void)data;
}

/* A bare libcsv parse of the whole file, callbacks doing nothing. */
static double bare_parse(const char *path)
{
    static char buf[1 << 20];
    struct csv_parser p;
    size_t n, sink = 0;
    FILE *fp = fopen(path, "rb");
    if (fp == NULL || csv_init(&p, 0) != 0)
        return -1.0;
    double t0 = now_s();
    while ((n = fread(buf, 1, sizeof buf, fp)) > 0)
        csv_parse(&p, buf, n, on_field, on_row, &sink);
    csv_fini(&p, on_field, on_row, &sink);
    double t = now_s() - t0;
    csv_free(&p);
    fclose(fp);
    return sink > 0 ? t : -1.0;
}

/* Run the program; return wall seconds and peak RSS in KiB. */
static int run_replay(const char *site, const char *steps, double *secs,
                      long *rss_kib)
{
    double t0 = now_s();
    pid_t pid = fork();
    if (pid < 0)
        return -1;
    if (pid == 0) {
        if (steps) /* a folder per file: replacing another length's
                      steps.csv (1.1 GB for 5,000,000 rows) would add
                      its unlink to the time */
            execl("build/sillwatch", "sillwatch", "run", site, "-o", steps,
                  "-q", "--steps", (char *)NULL);
        else
            execl("build/sillwatch", "sillwatch", "run", site, "-o",
                  "build/bench/out", "-q", (char *)NULL);
        _exit(127);
    }
    int status;
    struct rusage ru;
    if (wait4(pid, &status, 0, &ru) < 0)
        return -1;
    *secs = now_s() - t0;
    *rss_kib = ru.ru_maxrss;
    if (!WIFEXITED(status) || WEXITSTATUS(status) > 1) {
        fprintf(stderr, "bench: sillwatch exited with %d\n",
                WIFEXITED(status) ? WEXITSTATUS(status) : -1);
        return -1;
    }
    return 0;
}

/* Events in the replay's events.csv (its lines less the header). */
static long count_events(void)
{
    FILE *fp = fopen("build/bench/out/events.csv", "r");
    long n = -1;
    int c;
    if (fp == NULL)
        return -1;
    while ((c = getc(fp)) != EOF)
        n += c == '\n';
    fclose(fp);
    return n;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double median(const double *v, int n)
{
    double s[PAIRS];
    memcpy(s, v, (size_t)n * sizeof *s);
    qsort(s, (size_t)n, sizeof *s, cmp_double);
    return n % 2 ? s[n / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
}

static void print_list(const char *what, const double *v, int n)
{
    printf("    %s:", what);
    for (int i = 0; i < n; i++)
        printf(" %.3f", v[i]);
    printf("\n");
}

/* PAIRS pairs (bare parse, plain run), then PAIRS pairs (plain run,
 * run --steps); medians and the ratios of each pair. */
static int bench_size(long rows, const char *levels, const char *site,
                      double mb)
{
    double bare[PAIRS], plain[PAIRS], r1[PAIRS], plain2[PAIRS],
        steps[PAIRS], r2[PAIRS];
    long rss = 0, steps_rss = 0, k_rss;
    char steps_dir[64];

    snprintf(steps_dir, sizeof steps_dir, "build/bench/out-steps-%ld", rows);
    mkdir(steps_dir, 0777);
    for (int i = 0; i < PAIRS; i++) {
        if ((bare[i] = bare_parse(levels)) < 0 ||
            run_replay(site, NULL, &plain[i], &k_rss) != 0)
            return -1;
        rss = k_rss > rss ? k_rss : rss;
        r1[i] = plain[i] / bare[i];
    }
    for (int i = 0; i < PAIRS; i++) {
        if (run_replay(site, NULL, &plain2[i], &k_rss) != 0 ||
            run_replay(site, steps_dir, &steps[i], &k_rss) != 0)
            return -1;
        steps_rss = k_rss > steps_rss ? k_rss : steps_rss;
        r2[i] = steps[i] / plain2[i];
    }
    double b = median(bare, PAIRS), p = median(plain, PAIRS);
    printf("replay of %ld rows (%.1f MB), 3 gates, medians of %d pairs:\n",
           rows, mb, PAIRS);
    printf("  bare libcsv parse   %7.3f s  %7.1f MB/s\n", b, mb / b);
    printf("  sillwatch run       %7.3f s  %7.1f MB/s  %.3g rows/s  "
           "%.3g gate-steps/s\n",
           p, mb / p, (double)rows / p, 3.0 * (double)rows / p);
    printf("  replay / bare parse %7.2f    (target <= 1.2)\n",
           median(r1, PAIRS));
    print_list("pairs", r1, PAIRS);
    printf("  peak RSS            %7.1f MiB (target <= 16 MiB, "
           "independent of length)\n",
           (double)rss / 1024.0);
    printf("  events found        %7ld (%.1f a year of data)\n",
           count_events(), (double)count_events() /
                               ((double)rows / (4.0 * 24 * 365.25)));
    /* the step log: every gate at every point with its critical
     * tailwaters (remembered by exact headwater) */
    printf("  run --steps         %7.3f s  %7.2f x the plain run "
           "(target <= 3), peak RSS %.1f MiB\n",
           median(steps, PAIRS), median(r2, PAIRS),
           (double)steps_rss / 1024.0);
    print_list("pairs", r2, PAIRS);
    return 0;
}

int main(void)
{
    static const long sizes[2] = {500000, 5000000};

    mkdir("build/bench", 0777);
    mkdir(DATA_DIR, 0777);
    mkdir("build/bench/out", 0777);
    for (int k = 0; k < 2; k++) {
        char levels[128], site[128];
        struct stat sb;
        snprintf(levels, sizeof levels, DATA_DIR "/levels-v2-%ld.csv", sizes[k]);
        snprintf(site, sizeof site, DATA_DIR "/site-%ld.ini", sizes[k]);
        if (generate(levels, sizes[k]) != 0 ||
            write_site(site, strrchr(levels, '/') + 1) != 0 ||
            stat(levels, &sb) != 0) {
            fprintf(stderr, "bench: cannot write %s: %s\n", levels,
                    strerror(errno));
            return 1;
        }
        if (bench_size(sizes[k], levels, site, (double)sb.st_size / 1e6) != 0)
            return 1;
    }
    return 0;
}
