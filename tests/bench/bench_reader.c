/* Benchmark (not a test): the streaming level reader against a bare libcsv
 * parse of the same file.  Writes a deterministic 1,000,000-row file
 * "time,headwater,tailwater" (ISO 8601 stamps in UTC, 15-minute steps,
 * three decimals) under /tmp, then times
 *   (a) libcsv alone: 64 KiB freads into csv_parse with empty callbacks,
 *   (b) sw_reader_open + sw_reader_next over every row,
 * best of three runs each (the file is in the page cache after writing).
 * Target on the project machine: (b) no slower than 2x (a).  Prints
 * figures only; never fails on time. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include <csv.h>

#include "sillwatch/series.h"

#define ROWS 1000000L
#define RUNS 3

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Levels that wander but repeat exactly from run to run. */
static int write_file(const char *path, long *bytes)
{
    FILE *fp = fopen(path, "w");
    time_t t0 = 1735689600; /* 2025-01-01T00:00:00Z */
    unsigned long x = 2463534242UL;

    if (fp == NULL)
        return -1;
    fputs("time,headwater,tailwater\n", fp);
    for (long i = 1; i <= ROWS; i++) {
        time_t t = t0 + (time_t)(900 * i);
        struct tm tm;
        char stamp[32];
        int hw, tw;

        gmtime_r(&t, &tm);
        strftime(stamp, sizeof stamp, "%Y-%m-%dT%H:%M:%SZ", &tm);
        /* xorshift (Marsaglia 2003), 32-bit */
        x ^= (x << 13) & 0xFFFFFFFFUL;
        x ^= x >> 17;
        x ^= (x << 5) & 0xFFFFFFFFUL;
        hw = 11500 + (int)(x % 2000);
        tw = hw - 300 - (int)((x >> 11) % 900);
        fprintf(fp, "%s,%d.%03d,%d.%03d\n", stamp, hw / 1000, hw % 1000,
                tw / 1000, tw % 1000);
    }
    *bytes = ftell(fp);
    return fclose(fp);
}

static void on_field(void *s, size_t len, void *data)
{
    (void)s;
    (void)len;
    (void)data;
}

static void on_row(int c, void *data)
{
    (void)c;
    (void)data;
}

static double bare_libcsv(const char *path)
{
    const size_t chunk = 64 * 1024;
    char *buf = malloc(chunk);
    struct csv_parser p;
    FILE *fp = fopen(path, "rb");
    double t0 = now_s(), dt = -1.0;
    size_t n;

    if (fp == NULL || buf == NULL)
        goto cleanup;
    csv_init(&p, CSV_STRICT | CSV_STRICT_FINI);
    while ((n = fread(buf, 1, chunk, fp)) > 0)
        if (csv_parse(&p, buf, n, on_field, on_row, NULL) != n)
            break;
    if (n == 0 && csv_fini(&p, on_field, on_row, NULL) == 0)
        dt = now_s() - t0;
    csv_free(&p);
cleanup:
    if (fp != NULL)
        fclose(fp);
    free(buf);
    return dt;
}

static double reader(const char *path, double *sink, long *rows)
{
    sw_reader_config cfg = {.path = path, .time_column = "time",
                            .time_format = SW_TIME_ISO8601};
    sw_column_config cols[2];
    sw_reader *rd;
    sw_error err;
    double t0 = now_s(), v[2];
    sw_time_ms t;
    int has_row = 1;

    memset(cols, 0, sizeof cols);
    cols[0].name = "headwater";
    cols[0].scale = 1.0;
    cols[1].name = "tailwater";
    cols[1].scale = 1.0;
    *rows = 0;
    if (sw_reader_open(&rd, &cfg, cols, 2, &err) != SW_OK) {
        fprintf(stderr, "bench: %s: %s\n", err.file, err.message);
        return -1.0;
    }
    while (has_row) {
        if (sw_reader_next(rd, &has_row, &t, v, &err) != SW_OK) {
            fprintf(stderr, "bench: %s:%ld:%ld: %s\n", err.file, err.line,
                    err.column, err.message);
            sw_reader_free(rd);
            return -1.0;
        }
        if (has_row) {
            *sink += v[0] - v[1] + (double)(t & 1);
            (*rows)++;
        }
    }
    sw_reader_free(rd);
    return now_s() - t0;
}

int main(void)
{
    char path[] = "/tmp/sw-bench-reader-XXXXXX";
    int fd = mkstemp(path);
    double best_a = 1e30, best_b = 1e30, sink = 0.0, mb;
    long bytes = 0, rows = 0;

    if (fd < 0 || close(fd) != 0 || write_file(path, &bytes) != 0) {
        fprintf(stderr, "bench: cannot write %s\n", path);
        return 1;
    }
    mb = (double)bytes / 1e6;
    printf("file: %ld rows, %.1f MB (%s)\n", ROWS, mb, path);
    for (int run = 0; run < RUNS; run++) {
        double a = bare_libcsv(path), b = reader(path, &sink, &rows);
        if (a < 0 || b < 0 || rows != ROWS) {
            fprintf(stderr, "bench: run failed (%ld rows read)\n", rows);
            unlink(path);
            return 1;
        }
        if (a < best_a)
            best_a = a;
        if (b < best_b)
            best_b = b;
    }
    unlink(path);
    printf("(a) bare libcsv, empty callbacks: %7.1f MB/s  %6.1f ns/row\n",
           mb / best_a, 1e9 * best_a / (double)ROWS);
    printf("(b) sw_reader, 2 value columns:   %7.1f MB/s  %6.1f ns/row\n",
           mb / best_b, 1e9 * best_b / (double)ROWS);
    printf("ratio (b)/(a): %.2f (target <= 2)   [checksum %.3f]\n",
           best_b / best_a, sink);
    return 0;
}
