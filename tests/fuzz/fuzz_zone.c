/* libFuzzer target: the zone-file (TZif, RFC 8536) reader and the calendar
 * built on it (src/timeutil.c).
 *
 * Each input is written to a file "z" in a folder of its own, and loaded
 * with TZDIR pointing there.  Whatever the bytes, sw_zone_load() must
 * return SW_OK, or SW_ESITE / SW_ENOMEM with a message, never crash or
 * overrun.  A zone that loads must then keep these promises at instants
 * across 1900-2200 (fixed ones, and ones taken from the input): the
 * calendar month of an instant holds it (start <= t < next); the instants
 * sw_zone_local_to_utc() returns for a wall-clock time each show that time
 * (u + offset(u) = local) and come in order; and the instant t is among
 * those returned for its own wall-clock time, unless that time is shown
 * more than SW_ZONE_MAX_SHOWN times (only the earliest are returned).
 * Build and run with `make fuzz` (see DEVELOPERS.md).
 */
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "sillwatch/timeutil.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static char dir[64], file[80];

static void remove_input(void)
{
    unlink(file);
    rmdir(dir);
}

/* How many instants in [t - 2 days, t + 2 days] show `local`, by
 * stepping through the zone's offsets (a brute-force reference). */
static int shown(const sw_zone *z, sw_time_ms local)
{
    int count = 0;
    int32_t seen[64];
    size_t n_seen = 0;
    /* every candidate u = local - offset(u); offsets are bounded by a day
     * either way, so each offset in force near local is tried */
    for (sw_time_ms u = local - 2 * 86400000LL; u <= local + 2 * 86400000LL;
         u += 900000) {
        int32_t off = sw_zone_offset_at(z, u);
        int dup = 0;
        for (size_t i = 0; i < n_seen; i++)
            dup |= seen[i] == off;
        if (dup || n_seen == 64)
            continue;
        seen[n_seen++] = off;
        sw_time_ms cand = local - (sw_time_ms)off * 1000;
        if (sw_zone_offset_at(z, cand) == off)
            count++;
    }
    return count;
}

static void check_instant(const sw_zone *z, sw_time_ms t)
{
    sw_time_ms start, next, utc[SW_ZONE_MAX_SHOWN];
    int yyyymm, n, found = 0;
    sw_time_ms local = t + (sw_time_ms)sw_zone_offset_at(z, t) * 1000;

    sw_month_bounds(t, z, &start, &next, &yyyymm);
    if (!(start <= t && t < next))
        abort();
    n = sw_zone_local_to_utc(z, local, utc);
    if (n < 1 || n > SW_ZONE_MAX_SHOWN)
        abort();
    for (int i = 1; i < n; i++)
        if (!(utc[i - 1] < utc[i]))
            abort();
    for (int i = 0; i < n; i++) {
        if (utc[i] + (sw_time_ms)sw_zone_offset_at(z, utc[i]) * 1000 != local)
            abort();
        found |= utc[i] == t;
    }
    if (!found && shown(z, local) <= SW_ZONE_MAX_SHOWN)
        abort();
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    static const int64_t fixed_s[] = {-2208988800LL, -1000000000LL, 0,
                                      1000000000LL,  1743465600LL,
                                      2147483647LL,  4102444800LL,
                                      7289654399LL};
    sw_zone *z = NULL;
    sw_error err;
    FILE *f;
    int rc;

    if (dir[0] == '\0') {
        snprintf(dir, sizeof dir, "%s/sw-fuzz-zone-XXXXXX",
                 access("/dev/shm", W_OK) == 0 ? "/dev/shm" : "/tmp");
        if (mkdtemp(dir) == NULL)
            abort();
        snprintf(file, sizeof file, "%s/z", dir);
        setenv("TZDIR", dir, 1);
        atexit(remove_input);
    }
    f = fopen(file, "wb");
    if (f == NULL || (size > 0 && fwrite(data, 1, size, f) != size) ||
        fclose(f) != 0)
        abort();
    rc = sw_zone_load(&z, "z", &err);
    if (rc != SW_OK) {
        if (z != NULL || err.code != rc || err.message[0] == '\0')
            abort();
        return 0;
    }
    for (size_t i = 0; i < sizeof fixed_s / sizeof fixed_s[0]; i++)
        check_instant(z, fixed_s[i] * 1000);
    /* instants from the input's own bytes: every 32- and 64-bit
     * big-endian number in it that falls in 1900-2200 (the transition
     * times of the TZif data are among them), and the instants a second
     * and a millisecond either side, where months and offsets change */
    int checked = 0;
    for (size_t i = 0; i + 4 <= size && checked < 256; i++) {
        for (int width = 4; width <= 8; width += 4) {
            int64_t v = 0;
            if (i + (size_t)width > size)
                continue;
            for (int k = 0; k < width; k++)
                v = (int64_t)((uint64_t)v << 8 | data[i + (size_t)k]);
            if (width == 4)
                v = (int32_t)(uint32_t)v;
            if (v < -2208988799LL || v > 7289654398LL)
                continue;
            static const int64_t nudge_ms[] = {-1000, -1, 0, 1, 1000};
            for (size_t d = 0; d < 5; d++)
                check_instant(z, v * 1000 + nudge_ms[d]);
            checked++;
        }
    }
    sw_zone_free(z);
    return 0;
}
