/* libFuzzer target: the level-file reader (src/series.c) and the parsers
 * it calls (src/timeutil.c, src/decimal.c).
 *
 * The first byte of an input chooses a configuration:
 *   bit 0      one value column or two
 *   bit 1      a zone (Europe/Berlin) for stamps without an offset, or none
 *   bit 2      ISO 8601 times, or Unix seconds
 *   bits 3-4   delimiter: detected, ',', ';', tab
 *   bit 5      a header row is written first ("time,hw,tw" in the chosen
 *              delimiter), or the input brings its own
 *   bit 6      the second column has the missing token "-999"
 * The rest is the file's text, read through sw_reader_open() and
 * sw_reader_next() to the end or the first error.  Checked: no crash; the
 * status and err.code agree; rows come out in strictly increasing time;
 * every value is NAN or finite and within the plausible range; an error
 * from sw_reader_next() names the file and a line; the error is sticky.
 *
 * The same bytes (without the first) also go straight to sw_stamp_parse(),
 * sw_unix_parse(), sw_decimal_parse() (with and without a decimal comma)
 * and, NUL-terminated, sw_duration_parse(), each from an exactly sized
 * heap copy so that a read past the end is caught.
 */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "sillwatch/decimal.h"
#include "sillwatch/series.h"
#include "sillwatch/timeutil.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static char csv_path[64];
static sw_zone *berlin; /* the harness's, loaded once; not the library's */

static void remove_input(void)
{
    unlink(csv_path);
    sw_zone_free(berlin);
}

static void setup(void)
{
    sw_error err;
    int fd;

    /* A file in memory (tmpfs) where there is one: the file system is
     * most of the cost of an execution. */
    snprintf(csv_path, sizeof csv_path, "%s/sw-fuzz-levels-XXXXXX",
             access("/dev/shm", W_OK) == 0 ? "/dev/shm" : "/tmp");
    if ((fd = mkstemp(csv_path)) < 0)
        abort();
    close(fd);
    if (sw_zone_load(&berlin, "Europe/Berlin", &err) != SW_OK)
        abort();
    atexit(remove_input);
}

static void fuzz_reader(uint8_t flags, const uint8_t *text, size_t len)
{
    static const char delims[4] = {0, ',', ';', '\t'};
    char delim = delims[(flags >> 3) & 3];
    size_t n_cols = (flags & 1) ? 2 : 1;
    sw_reader_config cfg;
    sw_column_config cols[2];
    sw_reader *rd = NULL;
    sw_error err;
    FILE *f;
    int rc, has_row = 1, n_rows = 0;
    sw_time_ms prev = 0;

    if ((f = fopen(csv_path, "wb")) == NULL)
        abort();
    if (flags & 0x20) {
        char d = delim ? delim : ',';
        fprintf(f, "time%chw%ctw\n", d, d);
    }
    if ((len > 0 && fwrite(text, 1, len, f) != len) || fclose(f) != 0)
        abort();

    memset(&cfg, 0, sizeof cfg);
    cfg.path = csv_path;
    cfg.time_column = "time";
    cfg.time_format = (flags & 4) ? SW_TIME_UNIX : SW_TIME_ISO8601;
    cfg.delimiter = delim;
    cfg.zone = (flags & 2) ? berlin : NULL;
    memset(cols, 0, sizeof cols);
    cols[0].name = "hw";
    cols[0].scale = 1.0;
    cols[1].name = "tw";
    cols[1].scale = 0.3048;
    cols[1].offset_m = 2.385;
    if (flags & 0x40) {
        cols[1].n_missing = 1;
        cols[1].missing[0] = "-999";
    }

    sw_error_clear(&err);
    rc = sw_reader_open(&rd, &cfg, cols, n_cols, &err);
    if (rc != err.code || (rc == SW_OK) != (rd != NULL))
        abort();
    if (rc != SW_OK)
        return;
    while (has_row) {
        sw_time_ms t;
        double v[2];

        sw_error_clear(&err);
        rc = sw_reader_next(rd, &has_row, &t, v, &err);
        if (rc != err.code)
            abort();
        if (rc != SW_OK) {
            sw_error again;
            int has2 = 1;

            if (strcmp(err.file, csv_path) != 0 ||
                (rc == SW_EDATA && err.line <= 0) ||
                sw_reader_next(rd, &has2, &t, v, &again) != rc || has2 ||
                strcmp(again.message, err.message) != 0)
                abort();
            break;
        }
        if (!has_row)
            break;
        if (n_rows++ > 0 && t <= prev)
            abort();
        prev = t;
        for (size_t c = 0; c < n_cols; c++)
            if (!isnan(v[c]) &&
                !(isfinite(v[c]) && fabs(v[c]) <= 1e5 + 3.0))
                abort();
    }
    sw_reader_free(rd);
}

static void fuzz_parsers(const uint8_t *text, size_t len)
{
    /* `exact` holds exactly `len` bytes, so that the length-taking parsers
     * are caught reading past the end; `str` is the NUL-terminated copy
     * sw_duration_parse() takes. */
    char *exact = malloc(len > 0 ? len : 1);
    char *str = malloc(len + 1);
    sw_stamp st;
    sw_time_ms t;
    sw_error err;
    double v;

    if (exact == NULL || str == NULL)
        abort();
    if (len > 0) {
        memcpy(exact, text, len);
        memcpy(str, text, len);
    }
    str[len] = '\0';

    if (sw_stamp_parse(exact, len, &st, &err) == SW_OK) {
        if (st.has_offset && (st.offset_s < -86400 || st.offset_s > 86400))
            abort();
    } else if (err.code != SW_EDATA || err.message[0] == '\0') {
        abort();
    }
    if (sw_unix_parse(exact, len, &t, &err) != SW_OK &&
        (err.code != SW_EDATA || err.message[0] == '\0'))
        abort();
    if (sw_decimal_parse(exact, len, 0, &v) == 0 && isnan(v))
        abort();
    if (sw_decimal_parse(exact, len, 1, &v) == 0 && isnan(v))
        abort();
    if (sw_duration_parse(str, &t, &err) == SW_OK) {
        if (t <= 0)
            abort();
    } else if (err.code != SW_ESITE || err.message[0] == '\0') {
        abort();
    }
    free(exact);
    free(str);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (csv_path[0] == '\0')
        setup();
    if (size == 0)
        return 0;
    fuzz_reader(data[0], data + 1, size - 1);
    fuzz_parsers(data + 1, size - 1);
    return 0;
}
