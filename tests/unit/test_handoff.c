/* Unit tests of the bounded hand-off (src/handoff.c): every passed slot
 * is consumed once, in order, and never while the producer fills it;
 * ending drains (or drops) what was passed.  Properties of the
 * producer-consumer queue, checked directly (common practice, no
 * source). */
#include "testutil.h"

#include <string.h>
#include <time.h>

#include "sillwatch/handoff.h"

#define WORDS 512

typedef struct item {
    long seq;
    long word[WORDS]; /* seq * 7 + k: torn by a concurrent fill */
} item;

typedef struct log {
    long next;     /* the sequence number expected */
    long torn;     /* items found half-filled */
    long slow;     /* pause every slow-th item (0: never) */
} log_t;

static void consume(void *ctx, void *p)
{
    log_t *lg = ctx;
    item *it = p;
    if (lg->slow > 0 && it->seq % lg->slow == 0) {
        struct timespec ts = {0, 200000}; /* 0.2 ms: the ring fills */
        nanosleep(&ts, NULL);
    }
    for (int k = 0; k < WORDS; k++)
        if (it->word[k] != it->seq * 7 + k)
            lg->torn++;
    if (it->seq == lg->next)
        lg->next++;
    else
        lg->next = -1000000000; /* out of order: never recovers */
}

static void fill(item *it, long seq)
{
    it->seq = seq;
    for (int k = 0; k < WORDS; k++)
        it->word[k] = seq * 7 + k;
}

static void run(unsigned n_slots, long n_items, long slow)
{
    static item items[SW_HANDOFF_MAX];
    void *slot[SW_HANDOFF_MAX];
    log_t lg = {0, 0, slow};
    sw_handoff h;

    for (unsigned k = 0; k < n_slots; k++)
        slot[k] = &items[k];
    sw_handoff_init(&h, slot, n_slots, consume, &lg);
    item *cur = sw_handoff_current(&h);
    for (long i = 0; i < n_items; i++) {
        fill(cur, i);
        cur = sw_handoff_pass(&h);
    }
    sw_handoff_end(&h, 0);
    sw_handoff_end(&h, 0); /* twice is safe */
    sw_handoff_fini(&h);
    assert_int_equal(lg.torn, 0);
    assert_int_equal(lg.next, n_items); /* each once, in order */
}

static void test_in_order_once(void **state)
{
    (void)state;
    run(2, 20000, 0);
    run(4, 20000, 0);
    run(SW_HANDOFF_MAX, 20000, 0);
}

/* A slow consumer: the producer waits for free slots, never overwrites. */
static void test_slow_consumer(void **state)
{
    (void)state;
    run(2, 2000, 3);
    run(3, 500, 1);
}

/* Ending with drop: what was passed but not begun is skipped; what was
 * consumed came in order; the thread ends. */
static void test_drop(void **state)
{
    static item items[4];
    void *slot[4] = {&items[0], &items[1], &items[2], &items[3]};
    log_t lg = {0, 0, 1}; /* every item slow */
    sw_handoff h;
    (void)state;

    sw_handoff_init(&h, slot, 4, consume, &lg);
    item *cur = sw_handoff_current(&h);
    for (long i = 0; i < 3; i++) {
        fill(cur, i);
        cur = sw_handoff_pass(&h);
    }
    sw_handoff_end(&h, 1);
    sw_handoff_fini(&h);
    assert_int_equal(lg.torn, 0);
    assert_true(lg.next >= 0 && lg.next <= 3);
}

/* Nothing passed: ending is immediate and nothing is consumed. */
static void test_nothing_passed(void **state)
{
    static item items[2];
    void *slot[2] = {&items[0], &items[1]};
    log_t lg = {0, 0, 0};
    sw_handoff h;
    (void)state;

    sw_handoff_init(&h, slot, 2, consume, &lg);
    sw_handoff_end(&h, 0);
    sw_handoff_fini(&h);
    assert_int_equal(lg.next, 0);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_in_order_once),
        cmocka_unit_test(test_slow_consumer),
        cmocka_unit_test(test_drop),
        cmocka_unit_test(test_nothing_passed),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
