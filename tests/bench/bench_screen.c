/* Benchmark (not a test): `sillwatch screen` on a 50-member ensemble of
 * 10 days at 15 minutes for 3 gates (960 steps x 50 members x 3 gates).
 * Generates its input under build/bench/data/; prints the time.  Figures
 * only; never fails on time.  Run from the repository root. */
#define _DEFAULT_SOURCE
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#define MEMBERS 50
#define STEPS (10 * 96)

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int main(void)
{
    const char *csv = "build/bench/data/ensemble-50.csv";
    const char *ini = "build/bench/data/ensemble-50.ini";
    unsigned long seed = 777;

    mkdir("build/bench", 0777);
    mkdir("build/bench/data", 0777);
    FILE *fp = fopen(csv, "w");
    if (fp == NULL)
        return 1;
    fputs("time,hw", fp);
    for (int m = 0; m < MEMBERS; m++)
        fprintf(fp, ",tw_%02d", m + 1);
    fputc('\n', fp);
    for (int i = 0; i < STEPS; i++) {
        double h = i / 4.0;
        long s = 1767225600L + i * 900L; /* 2026-01-01T00:00:00Z */
        fprintf(fp, "%ld,%.3f", s, 11.45 + 0.5 * exp(-pow((h - 120) / 30, 2)));
        for (int m = 0; m < MEMBERS; m++) {
            seed = (seed * 16807) % 2147483647;
            double spread = 0.15 * ((double)seed / 2147483647.0 - 0.5);
            fprintf(fp, ",%.3f",
                    11.35 + 0.55 * sin(2 * M_PI * h / 12.42 + 0.05 * m) +
                        spread);
        }
        fputc('\n', fp);
    }
    fclose(fp);
    fp = fopen(ini, "w");
    if (fp == NULL)
        return 1;
    fputs("[site]\nrequired_fs = 1.5\nmin_sill_reaction = 300\n"
          "[water upstream]\ntemperature = 9\n"
          "[water downstream]\ntemperature = 12.5\nsalinity = 8\n"
          "[series hw]\nfile = ensemble-50.csv\nvalue_column = hw\n"
          "time_format = unix\n"
          "[series tw]\nfile = ensemble-50.csv\nvalue_column = tw_*\n"
          "time_format = unix\n"
          "[gate r1]\nshape = rectangle\nhinge_level = 12.4\n"
          "inclination = 80\nseal_top = 0.15\nseal_height = 1.4\n"
          "seal_width = 1.6\nleaf_length = 1.65\nmass = 1450\n"
          "cg_along = 0.86\nvolume = 0.185\nextra_moment = 4200\n"
          "headwater = hw\ntailwater = tw\n"
          "[gate r2]\nshape = rectangle\nhinge_level = 12.4\n"
          "inclination = 78\nseal_top = 0.2\nseal_height = 1.3\n"
          "seal_width = 1.2\nmass = 1100\ncg_along = 0.8\n"
          "extra_moment = 3900\nheadwater = hw\ntailwater = tw\n"
          "[gate c1]\nshape = circle\nhinge_level = 11.95\n"
          "inclination = 75\nseal_top = 0.12\ndiameter = 0.9\n"
          "leaf_length = 1.1\nmass = 420\ncg_along = 0.55\n"
          "volume = 0.054\nextra_moment = 700\n"
          "headwater = hw\ntailwater = tw\n", fp);
    fclose(fp);

    double t0 = now_s();
    pid_t pid = fork();
    if (pid == 0) {
        execl("build/sillwatch", "sillwatch", "screen", ini, "-o",
              "build/bench/screen-out", "-q", (char *)NULL);
        _exit(127);
    }
    int status;
    waitpid(pid, &status, 0);
    double t = now_s() - t0;
    if (!WIFEXITED(status) || WEXITSTATUS(status) > 1) {
        fprintf(stderr, "bench: sillwatch screen failed\n");
        return 1;
    }
    printf("screen: %d members x %d steps x 3 gates: %.3f s (%.3g "
           "gate-member-steps/s)\n",
           MEMBERS, STEPS, t, 3.0 * MEMBERS * STEPS / t);
    return 0;
}
