/* Benchmark (not a test): cost of reading one field of a level file.
 * Times sw_stamp_parse on the common timestamp shapes, sw_zone_local_to_utc
 * for local timestamps, and sw_decimal_parse against strtod on typical
 * level readings.  Target on the project machine: well under 50 ns per
 * timestamp.  Prints figures only; never fails on time. */
#define _POSIX_C_SOURCE 200809L
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "sillwatch/decimal.h"
#include "sillwatch/timeutil.h"

#define N_FIELDS 4000000
#define FIELD_MAX 32

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Fields laid out as a reader would see them: fixed slots, lengths kept. */
typedef struct fields {
    char (*text)[FIELD_MAX];
    size_t *len;
} fields;

static int fields_alloc(fields *f)
{
    f->text = malloc((size_t)N_FIELDS * sizeof *f->text);
    f->len = malloc((size_t)N_FIELDS * sizeof *f->len);
    return f->text != NULL && f->len != NULL ? 0 : -1;
}

static void fields_free(fields *f)
{
    free(f->text);
    free(f->len);
}

/* Timestamps 15 minutes apart from 2025-01-01, written in one of the
 * common shapes (chosen by `shape`, or cycling through all when < 0). */
static void make_stamps(fields *f, int shape)
{
    for (long i = 0; i < N_FIELDS; i++) {
        sw_time_ms t = INT64_C(1735689600000) + i * INT64_C(900000);
        int64_t days = t / INT64_C(86400000), y;
        int m, d, s = (int)(t / 1000 % 86400), which = shape < 0 ? (int)(i % 4)
                                                                 : shape;
        int n = 0;
        sw_civil_from_days(days, &y, &m, &d);
        switch (which) {
        case 0:
            n = snprintf(f->text[i], FIELD_MAX, "%04d-%02d-%02dT%02d:%02d:%02dZ",
                         (int)y, m, d, s / 3600, s / 60 % 60, s % 60);
            break;
        case 1:
            n = snprintf(f->text[i], FIELD_MAX, "%04d-%02d-%02d %02d:%02d",
                         (int)y, m, d, s / 3600, s / 60 % 60);
            break;
        case 2:
            n = snprintf(f->text[i], FIELD_MAX,
                         "%04d-%02d-%02dT%02d:%02d:%02d+01:00", (int)y, m, d,
                         s / 3600, s / 60 % 60, s % 60);
            break;
        default:
            n = snprintf(f->text[i], FIELD_MAX,
                         "%04d-%02d-%02dT%02d:%02d:%02d.%03dZ", (int)y, m, d,
                         s / 3600, s / 60 % 60, s % 60, (int)(i % 1000));
            break;
        }
        f->len[i] = (size_t)n;
    }
}

/* Level readings as loggers write them: 2 to 4 decimals, a few signs. */
static void make_levels(fields *f)
{
    unsigned long long s = 12345;
    for (long i = 0; i < N_FIELDS; i++) {
        double v;
        int n;
        s = s * 6364136223846793005ULL + 1442695040888963407ULL;
        v = 2.0 + (double)(s >> 40) / (double)(1ULL << 24) * 14.0;
        if ((s >> 20) % 16 == 0)
            v = -v;
        n = snprintf(f->text[i], FIELD_MAX, "%.*f", 2 + (int)((s >> 30) % 3),
                     v);
        f->len[i] = (size_t)n;
    }
}

static int bench_stamps(fields *f, const char *label, int shape)
{
    sw_stamp st;
    sw_error err;
    sw_time_ms sink = 0;
    volatile sw_time_ms keep; /* so that the loop is not optimised away */
    double t0, t1;

    make_stamps(f, shape);
    t0 = now_s();
    for (long i = 0; i < N_FIELDS; i++) {
        if (sw_stamp_parse(f->text[i], f->len[i], &st, &err) != SW_OK) {
            fprintf(stderr, "bench: %s\n", err.message);
            return 1;
        }
        sink += st.wall_ms;
    }
    t1 = now_s();
    keep = sink;
    printf("sw_stamp_parse       %-26s %6.1f ns each (target < 50 ns)\n",
           label, 1e9 * (t1 - t0) / N_FIELDS);
    (void)keep;
    return 0;
}

int main(void)
{
    fields f;
    sw_zone *berlin = NULL;
    sw_error err;
    double t0, t1, sum;
    int status = 1;

    if (fields_alloc(&f) != 0) {
        fprintf(stderr, "bench: out of memory\n");
        goto done;
    }
    if (bench_stamps(&f, "2025-01-01T00:15:00Z", 0) != 0
        || bench_stamps(&f, "2025-01-01 00:15", 1) != 0
        || bench_stamps(&f, "2025-01-01T00:15:00+01:00", 2) != 0
        || bench_stamps(&f, "2025-01-01T00:15:00.250Z", 3) != 0
        || bench_stamps(&f, "(the four shapes mixed)", -1) != 0)
        goto done;

    /* Local wall-clock times to instants, Europe/Berlin, 2025 onwards. */
    if (sw_zone_load(&berlin, "Europe/Berlin", &err) != SW_OK) {
        fprintf(stderr, "bench: %s\n", err.message);
        goto done;
    }
    /* 2025-2032 lies in the file's transition table, 2040-2055 in the
     * changes generated from the footer rule at load time, and 2150-2165
     * is read from the footer rule itself.  Local times a minute or two
     * apart, 4 million of them. */
    for (int part = 0; part < 3; part++) {
        static const char *const label[3] = {
            "2025-2032 (file table)", "2040-2055 (generated) ",
            "2150-2165 (footer)    "
        };
        static const sw_time_ms from[3] = {
            INT64_C(1735689600000), INT64_C(2208988800000),
            INT64_C(5364662400000)
        };
        sw_time_ms utc[SW_ZONE_MAX_SHOWN], sink = 0;
        volatile sw_time_ms keep;
        t0 = now_s();
        for (long i = 0; i < N_FIELDS; i++) {
            sw_time_ms local = from[part] + i * INT64_C(60000) * (part ? 2 : 1);
            if (sw_zone_local_to_utc(berlin, local, utc) > 0)
                sink += utc[0];
        }
        t1 = now_s();
        keep = sink;
        (void)keep;
        printf("sw_zone_local_to_utc Berlin %s %6.1f ns each\n",
               label[part], 1e9 * (t1 - t0) / N_FIELDS);
    }

    make_levels(&f);
    sum = 0.0;
    t0 = now_s();
    for (long i = 0; i < N_FIELDS; i++) {
        double v;
        if (sw_decimal_parse(f.text[i], f.len[i], 0, &v) != 0) {
            fprintf(stderr, "bench: '%s' refused\n", f.text[i]);
            goto done;
        }
        sum += v;
    }
    t1 = now_s();
    printf("sw_decimal_parse     levels such as 12.345      %6.1f ns each "
           "(sum %.6g)\n", 1e9 * (t1 - t0) / N_FIELDS, sum);
    sum = 0.0;
    t0 = now_s();
    for (long i = 0; i < N_FIELDS; i++)
        sum += strtod(f.text[i], NULL);
    t1 = now_s();
    printf("strtod               the same fields            %6.1f ns each "
           "(sum %.6g)\n", 1e9 * (t1 - t0) / N_FIELDS, sum);
    status = 0;
done:
    sw_zone_free(berlin);
    fields_free(&f);
    return status;
}
