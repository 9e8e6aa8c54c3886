/* Benchmark (not a test): what a poll of `sillwatch watch` costs when a
 * row comes, through the library (watch.h): a season of 15-minute levels
 * (180 days, 17,280 rows, two series in one file, three gates like the
 * example's) is taken at the first poll; then one row is appended before
 * each of 50 polls, each of which replays the whole season from the
 * mirror.  Prints the first poll's time and the median and greatest of
 * the others.  Generates its input under build/bench/watch/.  Figures
 * only; never fails on time.  Run from the repository root. */
#define _DEFAULT_SOURCE
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "sillwatch/watch.h"

#define ROWS (180 * 96)
#define POLLS 50

static const char site[] =
    "[site]\nrequired_fs = 1.5\nmin_sill_reaction = 500\nmax_gap = 1h\n"
    "latitude = 52.37\n"
    "[water upstream]\ntemperature = 9.0\n"
    "[water downstream]\ntemperature = 12.5\nsalinity = 8.0\n"
    "[series hw]\nfile = season.csv\nvalue_column = hw\n"
    "[series tw]\nfile = season.csv\nvalue_column = tw\n"
    "[gate west]\nshape = rectangle\nhinge_level = 12.40\ninclination = 80\n"
    "seal_top = 0.15\nseal_height = 1.40\nseal_width = 1.60\n"
    "leaf_length = 1.65\nmass = 1450\ncg_along = 0.86\ncg_offset = 0.06\n"
    "volume = 0.185\nextra_moment = 4200\nheadwater = hw\ntailwater = tw\n"
    "[gate east]\nshape = rectangle\nhinge_level = 12.40\ninclination = 80\n"
    "seal_top = 0.15\nseal_height = 1.40\nseal_width = 1.60\n"
    "leaf_length = 1.65\nmass = 1380\ncg_along = 0.84\ncg_offset = 0.06\n"
    "volume = 0.176\nextra_moment = 4800\nheadwater = hw\ntailwater = tw\n"
    "[gate bypass]\nshape = circle\nhinge_level = 11.95\ninclination = 75\n"
    "seal_top = 0.12\ndiameter = 0.90\nleaf_length = 1.10\nmass = 420\n"
    "cg_along = 0.55\nvolume = 0.054\nextra_moment = 700\n"
    "required_fs = 1.3\nheadwater = hw\ntailwater = tw\n";

static void row(FILE *fp, int i)
{
    long t = 1767225600L + 900L * i; /* 2026-01-01T00:00:00Z on */
    double d = i / 96.0, h = i / 4.0;
    fprintf(fp, "%ld,%.3f,%.3f\n", t,
            11.62 + 0.22 * sin(2 * M_PI * d / 9.0) +
                0.12 * sin(2 * M_PI * d / 2.3),
            11.25 + 0.38 * sin(2 * M_PI * h / 12.42));
}

static int cmp(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

static sw_time_ms wall(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_REALTIME, &ts);
    return (sw_time_ms)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

int main(void)
{
    const char *dir = "build/bench/watch";
    char path[256];
    sw_site s;
    sw_watch *w;
    sw_error err;
    sw_watch_stats st;
    const sw_notice *notes;
    size_t n;
    int replayed;
    double t[POLLS], whole[POLLS];

    gsl_set_error_handler_off();
    mkdir("build/bench", 0777);
    if (system("rm -rf build/bench/watch") != 0 || mkdir(dir, 0777) != 0)
        return 1;
    snprintf(path, sizeof path, "%s/site.ini", dir);
    FILE *fp = fopen(path, "w");
    fputs(site, fp);
    fclose(fp);
    snprintf(path, sizeof path, "%s/season.csv", dir);
    fp = fopen(path, "w");
    fputs("time,hw,tw\n", fp);
    for (int i = 0; i < ROWS; i++)
        row(fp, i);
    fclose(fp);
    snprintf(path, sizeof path, "%s/site.ini", dir);
    if (sw_site_load(&s, path, &err) != SW_OK)
        return 1;
    /* site.ini names season.csv relative to its folder: the time format */
    for (size_t i = 0; i < s.n_series; i++)
        s.series[i].time_format = SW_TIME_UNIX;
    snprintf(path, sizeof path, "%s/state", dir);
    mkdir(path, 0777);
    sw_watch_options opt = {0, 0, "bench", "2026-01-01T00:00:00Z"};
    if (sw_watch_open(&w, &s, path, &opt, &err) != SW_OK ||
        sw_watch_poll(w, wall(), &notes, &n, &replayed, &err) != SW_OK) {
        fprintf(stderr, "%s\n", err.message);
        return 1;
    }
    sw_watch_get_stats(w, &st);
    double first = st.last_replay_s;
    printf("watch: first poll: %d rows in %.1f ms (%zu alarms)\n", ROWS,
           1e3 * first, n);
    snprintf(path, sizeof path, "%s/season.csv", dir);
    for (int k = 0; k < POLLS; k++) {
        fp = fopen(path, "a");
        row(fp, ROWS + k);
        fclose(fp);
        struct timespec a, b;
        clock_gettime(CLOCK_MONOTONIC, &a);
        if (sw_watch_poll(w, wall(), &notes, &n, &replayed, &err) != SW_OK ||
            sw_watch_commit(w, NULL, 0, &err) != SW_OK) {
            fprintf(stderr, "%s\n", err.message);
            return 1;
        }
        clock_gettime(CLOCK_MONOTONIC, &b);
        whole[k] = (double)(b.tv_sec - a.tv_sec) +
                   1e-9 * (double)(b.tv_nsec - a.tv_nsec);
        sw_watch_get_stats(w, &st);
        t[k] = st.last_replay_s;
    }
    qsort(t, POLLS, sizeof t[0], cmp);
    qsort(whole, POLLS, sizeof whole[0], cmp);
    printf("watch: a poll with one new row (a replay of the season): "
           "median %.1f ms, greatest %.1f ms over %d polls\n",
           1e3 * t[POLLS / 2], 1e3 * t[POLLS - 1], POLLS);
    printf("watch: the whole poll (mirror synced, checkpoint twice, "
           "outputs and status.csv published): median %.1f ms, greatest "
           "%.1f ms\n",
           1e3 * whole[POLLS / 2], 1e3 * whole[POLLS - 1]);
    sw_watch_free(w);
    sw_site_fini(&s);
    return 0;
}
