/* Benchmark (not a test): `sillwatch screen` on ensembles of 100 and 1000
 * members of 10 days at 15 minutes for 3 gates (960 steps x members x 3
 * gates), all members in one file beside the headwater; then the same
 * sizes as headwater-only forecasts (the members are headwaters, the gates
 * have no tailwater: required.csv per member).  Generates its
 * inputs under build/bench/data/; prints, per size, the CPU time of the
 * program (user + system, all its threads), the wall time and the peak
 * RSS (the least of RUNS runs each), and the ratio of the CPU times
 * (linear in members: about 10).  Targets: 1000 members <= 0.4 s CPU and
 * <= 64 MiB.  Figures only; never fails on time.  Run from the
 * repository root; an argument names another program to time (a build
 * of an earlier commit, for a comparison). */
#define _DEFAULT_SOURCE
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/time.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#define STEPS (10 * 96)
#define RUNS 3

static const char *program = "build/sillwatch";

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static double tv_s(struct timeval tv)
{
    return (double)tv.tv_sec + 1e-6 * (double)tv.tv_usec;
}

/* The level file and the site file of an ensemble of `members`: members
 * of the tailwater beside one headwater, or (hw_only) members of the
 * headwater alone. */
static int generate(int members, int hw_only, char *ini, size_t n)
{
    char csv[256];
    unsigned long seed = 777;
    const char *kind = hw_only ? "hwonly" : "ensemble";

    snprintf(csv, sizeof csv, "build/bench/data/%s-%d.csv", kind, members);
    snprintf(ini, n, "build/bench/data/%s-%d.ini", kind, members);
    FILE *fp = fopen(csv, "w");
    if (fp == NULL)
        return -1;
    fputs(hw_only ? "time" : "time,hw", fp);
    for (int m = 0; m < members; m++)
        fprintf(fp, hw_only ? ",hw_%04d" : ",tw_%04d", m + 1);
    fputc('\n', fp);
    for (int i = 0; i < STEPS; i++) {
        double h = i / 4.0;
        long s = 1767225600L + i * 900L; /* 2026-01-01T00:00:00Z */
        double hw = 11.45 + 0.5 * exp(-pow((h - 120) / 30, 2));
        fprintf(fp, "%ld", s);
        if (!hw_only)
            fprintf(fp, ",%.3f", hw);
        for (int m = 0; m < members; m++) {
            seed = (seed * 16807) % 2147483647;
            double spread = 0.15 * ((double)seed / 2147483647.0 - 0.5);
            fprintf(fp, ",%.3f",
                    hw_only ? hw + spread
                            : 11.35 + 0.55 * sin(2 * M_PI * h / 12.42 +
                                                 0.05 * m) +
                                  spread);
        }
        fputc('\n', fp);
    }
    if (fclose(fp) != 0)
        return -1;
    fp = fopen(ini, "w");
    if (fp == NULL)
        return -1;
    fprintf(fp, "[site]\nrequired_fs = 1.5\nmin_sill_reaction = 300\n"
                "[water upstream]\ntemperature = 9\n"
                "[water downstream]\ntemperature = 12.5\nsalinity = 8\n");
    if (hw_only)
        fprintf(fp, "[series hw]\nfile = %s-%d.csv\nvalue_column = hw_*\n"
                    "time_format = unix\n",
                kind, members);
    else
        fprintf(fp, "[series hw]\nfile = %s-%d.csv\nvalue_column = hw\n"
                    "time_format = unix\n"
                    "[series tw]\nfile = %s-%d.csv\nvalue_column = tw_*\n"
                    "time_format = unix\n",
                kind, members, kind, members);
    static const char *const gates[3] = {
        "[gate r1]\nshape = rectangle\nhinge_level = 12.4\n"
        "inclination = 80\nseal_top = 0.15\nseal_height = 1.4\n"
        "seal_width = 1.6\nleaf_length = 1.65\nmass = 1450\n"
        "cg_along = 0.86\nvolume = 0.185\nextra_moment = 4200\n",
        "[gate r2]\nshape = rectangle\nhinge_level = 12.4\n"
        "inclination = 78\nseal_top = 0.2\nseal_height = 1.3\n"
        "seal_width = 1.2\nmass = 1100\ncg_along = 0.8\n"
        "extra_moment = 3900\n",
        "[gate c1]\nshape = circle\nhinge_level = 11.95\n"
        "inclination = 75\nseal_top = 0.12\ndiameter = 0.9\n"
        "leaf_length = 1.1\nmass = 420\ncg_along = 0.55\n"
        "volume = 0.054\nextra_moment = 700\n"};
    for (int g = 0; g < 3; g++)
        fprintf(fp, "%sheadwater = hw\n%s", gates[g],
                hw_only ? "" : "tailwater = tw\n");
    return fclose(fp) != 0 ? -1 : 0;
}

typedef struct figures {
    double cpu_s, wall_s, rss_mib;
} figures;

/* One run of `sillwatch screen INI`: its CPU time (user + system), wall
 * time and peak RSS, from wait4's resource usage of the child. */
static int run_once(const char *ini, figures *f)
{
    struct rusage ru;
    int status;
    double t0 = now_s();
    pid_t pid = fork();

    if (pid < 0)
        return -1;
    if (pid == 0) {
        execl(program, "sillwatch", "screen", ini, "-o",
              "build/bench/screen-out", "-q", (char *)NULL);
        _exit(127);
    }
    if (wait4(pid, &status, 0, &ru) != pid)
        return -1;
    f->wall_s = now_s() - t0;
    if (!WIFEXITED(status) || WEXITSTATUS(status) > 1) {
        fprintf(stderr, "bench: sillwatch screen %s failed\n", ini);
        return -1;
    }
    f->cpu_s = tv_s(ru.ru_utime) + tv_s(ru.ru_stime);
    f->rss_mib = (double)ru.ru_maxrss / 1024.0; /* KiB on Linux */
    return 0;
}

/* The least of RUNS runs of each figure (the machine's other jobs only
 * ever add to them). */
static int measure(int members, int hw_only, figures *best)
{
    char ini[256];

    if (generate(members, hw_only, ini, sizeof ini) != 0) {
        fprintf(stderr, "bench: cannot write the %d-member inputs\n",
                members);
        return -1;
    }
    for (int k = 0; k < RUNS; k++) {
        figures f;
        if (run_once(ini, &f) != 0)
            return -1;
        if (k == 0 || f.cpu_s < best->cpu_s)
            best->cpu_s = f.cpu_s;
        if (k == 0 || f.wall_s < best->wall_s)
            best->wall_s = f.wall_s;
        if (k == 0 || f.rss_mib < best->rss_mib)
            best->rss_mib = f.rss_mib;
    }
    printf("screen: %4d %s members x %d steps x 3 gates: CPU %.3f s, "
           "wall %.3f s, peak RSS %.1f MiB (%.3g gate-member-steps per CPU "
           "s)\n",
           members, hw_only ? "headwater-only" : "tailwater", STEPS,
           best->cpu_s, best->wall_s, best->rss_mib,
           3.0 * members * STEPS / best->cpu_s);
    return 0;
}

int main(int argc, char **argv)
{
    figures small, large;

    if (argc > 1)
        program = argv[1];
    mkdir("build/bench", 0777);
    mkdir("build/bench/data", 0777);
    for (int hw_only = 0; hw_only < 2; hw_only++) {
        if (measure(100, hw_only, &small) != 0 ||
            measure(1000, hw_only, &large) != 0)
            return 1;
        printf("screen: CPU 1000 / 100 members = %.1f (linear: 10; target: "
               "1000 members <= 0.4 s CPU, <= 64 MiB peak RSS)\n",
               large.cpu_s / small.cpu_s);
    }
    return 0;
}
