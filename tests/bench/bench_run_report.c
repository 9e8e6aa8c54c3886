/* Benchmark (not a test): the season report (`sillwatch run --report`) on
 * the benchmark series that bench_run.c generates under build/bench/data/
 * (500,000 and 5,000,000 rows at 15-minute steps, three gates).  Prints
 * the run's time with and without --report, its peak RSS and the size of
 * report.html (bound: 5 MB, whatever the length of the series).  Figures
 * only; never fails on time.  Run from the repository root after
 * bench_run (make bench runs them in that order). */
#define _DEFAULT_SOURCE
#include <stdio.h>
#include <stdlib.h>
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
    return 0;
}
