/* sillwatch: critical tailwaters remembered by headwater (critcache.h). */
#include "sillwatch/critcache.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

typedef struct entry {
    uint64_t key;      /* the headwater's bits */
    int used;
    sw_crit alarm, open;
} entry;

struct sw_crit_cache {
    const sw_gate *gate;
    int shift;         /* 64 - log2(slots): the hash's top bits index */
    long searched, hits;
    entry *e;
};

int sw_crit_cache_alloc(sw_crit_cache **out, const sw_gate *gate,
                        size_t slots, sw_error *err)
{
    size_t n = 2;
    int bits = 1;
    while (n < slots && n < ((size_t)1 << 30)) {
        n <<= 1;
        bits++;
    }
    sw_crit_cache *c = calloc(1, sizeof *c);
    if (c == NULL || (c->e = calloc(n, sizeof *c->e)) == NULL) {
        free(c);
        *out = NULL;
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                            "out of memory for the critical-level cache");
    }
    c->gate = gate;
    c->shift = 64 - bits;
    *out = c;
    return SW_OK;
}

int sw_crit_cache_tailwater(sw_crit_cache *c, double hw_m, sw_crit *alarm,
                            sw_crit *open, sw_error *err)
{
    uint64_t key;
    int rc;

    /* -0.0 and 0.0 are the same headwater, and give the same answer */
    if (hw_m == 0.0)
        hw_m = 0.0;
    memcpy(&key, &hw_m, sizeof key);
    /* Fibonacci hashing: the top bits of the product with 2^64 / phi, in
     * which every bit of the key takes part (Knuth, TAOCP vol. 3, 6.4) */
    entry *e = &c->e[(size_t)((key * UINT64_C(0x9E3779B97F4A7C15)) >>
                              c->shift)];
    if (e->used && e->key == key) {
        c->hits++;
        *alarm = e->alarm;
        *open = e->open;
        return SW_OK;
    }
    c->searched++;
    if ((rc = sw_gate_critical_tailwater(c->gate, hw_m, SW_LIMIT_ALARM, alarm,
                                         err)) != SW_OK ||
        (rc = sw_gate_critical_tailwater(c->gate, hw_m, SW_LIMIT_OPEN, open,
                                         err)) != SW_OK) {
        return rc;
    }
    e->used = 1;
    e->key = key;
    e->alarm = *alarm;
    e->open = *open;
    return SW_OK;
}

void sw_crit_cache_counts(const sw_crit_cache *c, long *searched, long *hits)
{
    *searched = c->searched;
    *hits = c->hits;
}

const sw_gate *sw_crit_cache_gate(const sw_crit_cache *c)
{
    return c->gate;
}

void sw_crit_cache_free(sw_crit_cache *c)
{
    if (c == NULL)
        return;
    free(c->e);
    free(c);
}
