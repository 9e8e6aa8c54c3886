/* libFuzzer target: the threshold-range parser (src/thresholds.c,
 * sw_thresholds_parse_range()).
 *
 * The input, NUL-terminated, is parsed as FROM:TO:STEP.  Checked: no
 * crash; SW_OK or SW_EUSAGE, and err.code agrees; on failure the range is
 * untouched; on success the contract of thresholds.h holds: the integer
 * parts are the doubles in units of 0.1 mm, |FROM|, |TO| <= 100000 m,
 * STEP > 0, TO >= FROM, 1 to SW_THRESHOLDS_MAX_LEVELS levels, the last
 * level is at most TO and the next one would be beyond it.
 */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/thresholds.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *text = malloc(size + 1);
    sw_thresholds_range r, untouched;
    sw_error err;
    int rc;

    if (text == NULL)
        abort();
    if (size > 0)
        memcpy(text, data, size);
    text[size] = '\0';
    memset(&r, 0xA5, sizeof r);
    untouched = r;
    sw_error_clear(&err);
    rc = sw_thresholds_parse_range(text, &r, &err);
    if (rc != err.code)
        abort();
    if (rc != SW_OK) {
        if (rc != SW_EUSAGE || err.message[0] == '\0' ||
            memcmp(&r, &untouched, sizeof r) != 0)
            abort();
    } else {
        int64_t max_u = (int64_t)llround(SW_THRESHOLDS_MAX_LEVEL_M /
                                         SW_THRESHOLDS_RES_M);
        if (r.step_u <= 0 || r.to_u < r.from_u || r.from_u < -max_u ||
            r.to_u > max_u || r.n_levels < 1 ||
            r.n_levels > SW_THRESHOLDS_MAX_LEVELS)
            abort();
        if (r.from_u + (int64_t)(r.n_levels - 1) * r.step_u > r.to_u ||
            r.from_u + (int64_t)r.n_levels * r.step_u <= r.to_u)
            abort();
        if (fabs(r.from_m - (double)r.from_u * 1e-4) > 1e-9 * (1 + fabs(r.from_m)) ||
            fabs(r.to_m - (double)r.to_u * 1e-4) > 1e-9 * (1 + fabs(r.to_m)) ||
            fabs(r.step_m - (double)r.step_u * 1e-4) > 1e-9 * (1 + r.step_m))
            abort();
        if (sw_thresholds_level(&r, r.n_levels - 1) >
            r.to_m + 1e-9 * (1 + fabs(r.to_m)))
            abort();
    }
    free(text);
    return 0;
}
