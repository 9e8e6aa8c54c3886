/* Benchmark (not a test): the season report (`sillwatch run --report`) on
 * the benchmark series that bench_run.c generates under build/bench/data/
 * (500,000 and 5,000,000 rows at 15-minute steps, three gates).  Prints
 * the run's time with and without --report, its peak RSS and the size of
 * report.html (bound: 5 MB, whatever the length of the series).  Then the
 * same for ten years of one-minute levels (5,259,600 rows, generated once
 * here) of one gate with eleven one-minute excursions that open it, far
 * apart: it prints the events in events.csv and the open runs shaded in
 * the report, which must match (no event lost by the reduction).  Figures
 * only; never fails on time.  Run from the repository root after
 * bench_run (make bench runs them in that order). */
#define _DEFAULT_SOURCE
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Run the program; return wall seconds and peak RSS in KiB. */
static int run(const char *site, int report, double *secs, long *rss_kib)
{
    double t0 = now_s();
    pid_t pid = fork();
    if (pid < 0)
        return -1;
    if (pid == 0) {
        execl("build/sillwatch", "sillwatch", "run", site, "-o",
              "build/bench/out-report", "-q", report ? "--report" : NULL,
              (char *)NULL);
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

#define MINUTES_CSV "build/bench/data/minutes-10y.csv"
#define MINUTES_SITE "build/bench/data/minutes-10y.ini"

/* Ten years of one-minute levels: a daily headwater swing under a steady
 * tailwater, and a one-minute excursion every 500,000 minutes. */
static int generate_minutes(void)
{
    struct stat sb;
    if (stat(MINUTES_CSV, &sb) == 0)
        return 0;
    FILE *fp = fopen(MINUTES_CSV, "w");
    if (fp == NULL)
        return -1;
    fputs("time,hw,tw\n", fp);
    for (long i = 0; i < 5259600; i++) {
        double hw = 8.6 + 0.3 * sin(2.0 * M_PI * (double)i / 1440.0);
        if (i % 500000 == 7)
            hw = 10.2;
        fprintf(fp, "%ld,%.3f,9.500\n", 1735689600L + 60 * i, hw);
    }
    if (fclose(fp) != 0)
        return -1;
    fp = fopen(MINUTES_SITE, "w");
    if (fp == NULL)
        return -1;
    fputs("[site]\ngravity = 9.81\nrequired_fs = 1.5\nmax_gap = 10min\n"
          "[water upstream]\ndensity = 1000\n"
          "[water downstream]\ndensity = 1000\n"
          "[series hw]\nfile = minutes-10y.csv\nvalue_column = hw\n"
          "time_format = unix\n"
          "[series tw]\nfile = minutes-10y.csv\nvalue_column = tw\n"
          "time_format = unix\n"
          "[gate V]\nshape = rectangle\nhinge_level = 10\n"
          "inclination = 90\nseal_top = 0\nseal_height = 2\n"
          "seal_width = 1.5\nmass = 800\ncg_along = 1\ncg_offset = 0.05\n"
          "headwater = hw\ntailwater = tw\n", fp);
    return fclose(fp);
}

/* Occurrences of `needle` in the file at `path`, or -1. */
static long count_in_file(const char *path, const char *needle)
{
    FILE *fp = fopen(path, "r");
    char line[65536];
    long n = 0;
    if (fp == NULL)
        return -1;
    while (fgets(line, sizeof line, fp) != NULL)
        for (char *p = strstr(line, needle); p != NULL;
             p = strstr(p + 1, needle))
            n++;
    fclose(fp);
    return n;
}

int main(void)
{
    static const long sizes[2] = {500000, 5000000};

    mkdir("build/bench/out-report", 0777);
    for (int k = 0; k < 2; k++) {
        char site[128];
        struct stat sb;
        double plain, with;
        long rss_plain, rss;
        snprintf(site, sizeof site, "build/bench/data/site-%ld.ini",
                 sizes[k]);
        if (stat(site, &sb) != 0) {
            fprintf(stderr, "bench: %s missing: run bench_run first\n", site);
            return 1;
        }
        if (run(site, 0, &plain, &rss_plain) != 0 ||
            run(site, 1, &with, &rss) != 0 ||
            stat("build/bench/out-report/report.html", &sb) != 0)
            return 1;
        printf("report of %ld rows, 3 gates:\n", sizes[k]);
        printf("  run                 %7.3f s   peak RSS %6.1f MiB\n", plain,
               (double)rss_plain / 1024.0);
        printf("  run --report        %7.3f s   peak RSS %6.1f MiB\n", with,
               (double)rss / 1024.0);
        printf("  report.html         %7.2f MB  (bound 5 MB: %s)\n",
               (double)sb.st_size / 1e6,
               sb.st_size < 5000000 ? "within" : "EXCEEDED");
    }
    {
        struct stat sb;
        double plain, with;
        long rss_plain, rss;
        if (generate_minutes() != 0) {
            fprintf(stderr, "bench: cannot write %s\n", MINUTES_CSV);
            return 1;
        }
        if (run(MINUTES_SITE, 0, &plain, &rss_plain) != 0 ||
            run(MINUTES_SITE, 1, &with, &rss) != 0 ||
            stat("build/bench/out-report/report.html", &sb) != 0)
            return 1;
        printf("report of ten years of one-minute levels (5,259,600 rows), "
               "1 gate:\n");
        printf("  run                 %7.3f s   peak RSS %6.1f MiB\n", plain,
               (double)rss_plain / 1024.0);
        printf("  run --report        %7.3f s   peak RSS %6.1f MiB\n", with,
               (double)rss / 1024.0);
        printf("  report.html         %7.2f MB  (bound 5 MB: %s)\n",
               (double)sb.st_size / 1e6,
               sb.st_size < 5000000 ? "within" : "EXCEEDED");
        printf("  events %ld in events.csv, %ld open runs shaded\n",
               count_in_file("build/bench/out-report/events.csv", "\n") - 1,
               count_in_file("build/bench/out-report/report.html",
                             "class=\"shade-open\""));
    }
    return 0;
}
