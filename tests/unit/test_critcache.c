/* Unit tests of the critical-level cache (src/critcache.c): every answer,
 * from the cache or not, is bit for bit the answer of a direct search
 * (reference: sw_gate_critical_tailwater(), itself checked against brute
 * force in test_gate.c). */
#include "testutil.h"

#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_rng.h>

#include "sillwatch/critcache.h"

static sw_gate test_gate(sw_fs_basis basis)
{
    sw_gate g;
    memset(&g, 0, sizeof g);
    strcpy(g.name, "K");
    g.shape = SW_SHAPE_RECTANGLE;
    g.hinge_level_m = 12.4;
    g.inclination_deg = 78.5;
    g.seal_top_m = 0.15;
    g.seal_height_m = 1.37;
    g.seal_width_m = 1.62;
    g.leaf_length_m = 1.64;
    g.mass_kg = 1433.0;
    g.cg_along_m = 0.87;
    g.volume_m3 = 0.183;
    g.extra_moment_Nm = 4180.0;
    g.required_fs = 1.45;
    g.fs_basis = basis;
    g.min_sill_reaction_N = 420.0;
    g.rho_kgm3[SW_UPSTREAM] = 999.78;
    g.rho_kgm3[SW_DOWNSTREAM] = 1005.6;
    g.g_ms2 = 9.81276;
    sw_gate_prepare(&g);
    return g;
}

static int same(const sw_crit *a, const sw_crit *b)
{
    return a->kind == b->kind &&
           (a->kind != SW_CRIT_LEVEL ||
            memcmp(&a->level_m, &b->level_m, sizeof a->level_m) == 0);
}

/* Headwaters read to the millimetre and revisited, through a cache of
 * 4096 slots and one of 2 (collisions all the time): every answer equals
 * the direct search's, and the large cache answers most from memory. */
static void test_cache_answers_as_search(void **state)
{
    (void)state;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_rng_set(rng, 6113);
    for (int basis = 0; basis < 2; basis++) {
        sw_gate g = test_gate((sw_fs_basis)basis);
        sw_crit_cache *big, *tiny;
        sw_error err;
        assert_int_equal(sw_crit_cache_alloc(&big, &g, 4096, &err), SW_OK);
        assert_int_equal(sw_crit_cache_alloc(&tiny, &g, 2, &err), SW_OK);
        for (int i = 0; i < 3000; i++) {
            double hw = (11000 + (int)gsl_rng_uniform_int(rng, 1400)) / 1000.0;
            sw_crit a0, o0, a1, o1, a2, o2;
            assert_int_equal(sw_gate_critical_tailwater(&g, hw, SW_LIMIT_ALARM,
                                                        &a0, &err), SW_OK);
            assert_int_equal(sw_gate_critical_tailwater(&g, hw, SW_LIMIT_OPEN,
                                                        &o0, &err), SW_OK);
            assert_int_equal(sw_crit_cache_tailwater(big, hw, &a1, &o1, &err),
                             SW_OK);
            assert_int_equal(sw_crit_cache_tailwater(tiny, hw, &a2, &o2, &err),
                             SW_OK);
            assert_true(same(&a0, &a1) && same(&o0, &o1));
            assert_true(same(&a0, &a2) && same(&o0, &o2));
        }
        long searched, hits;
        sw_crit_cache_counts(big, &searched, &hits);
        assert_int_equal(searched + hits, 3000);
        /* 3000 draws of 1400 headwaters visit about 1400 (1 - e^(-3000 /
         * 1400)) = 1236 of them; a direct-mapped table of 4096 loses a
         * few more to collisions (1451 searches with this seed) */
        assert_true(searched >= 1150 && searched <= 1700 && hits >= 1300);
        sw_crit_cache_free(big);
        sw_crit_cache_free(tiny);
    }
    sw_crit_cache_free(NULL);
    gsl_rng_free(rng);
}

int main(void)
{
    gsl_set_error_handler_off();
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_cache_answers_as_search),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
