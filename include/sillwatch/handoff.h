/* sillwatch: a bounded hand-off of filled buffers to a thread that
 * consumes them in order, and the library's way of starting a thread.
 *
 * A producer fills the current slot, passes it on (sw_handoff_pass) and
 * gets the next free slot; a consumer thread, started at the first pass,
 * takes the passed slots in order and calls `consume` on each.  When all
 * slots are passed and not yet consumed, the producer waits: memory is the
 * slots, whatever the length of the work.  Where no thread can be started
 * the producer consumes each slot itself when it passes it.  Used by the
 * output sinks (chunks to hash and write: outfile.c) and the step log
 * (batches of rows to format: steplog.c).
 */
#ifndef SILLWATCH_HANDOFF_H
#define SILLWATCH_HANDOFF_H

#include <pthread.h>

#define SW_HANDOFF_MAX 16

typedef void (*sw_handoff_fn)(void *ctx, void *item);

typedef struct sw_handoff {
    void *slot[SW_HANDOFF_MAX];
    unsigned n, head, count;  /* passed, not yet consumed: head.. */
    unsigned fill;            /* the producer's current slot */
    int threaded, stop, drop;
    pthread_t thread;
    pthread_mutex_t mu;
    pthread_cond_t cv;
    sw_handoff_fn consume;
    void *ctx;
} sw_handoff;

/* n slots (2 <= n <= SW_HANDOFF_MAX), items[0..n) already made; the
 * first is current. */
void sw_handoff_init(sw_handoff *h, void *const *items, unsigned n,
                     sw_handoff_fn consume, void *ctx);

/* The slot the producer fills now. */
void *sw_handoff_current(const sw_handoff *h);

/* Pass the current slot on; returns the next slot to fill (waiting while
 * every slot is passed and not yet consumed). */
void *sw_handoff_pass(sw_handoff *h);

/* Every passed slot consumed (drop: those not begun are skipped), the
 * thread ended; the current slot is left to the caller.  Safe to call
 * twice, and on a hand-off that never passed a slot. */
void sw_handoff_end(sw_handoff *h, int drop);

/* Release the lock and condition (after sw_handoff_end). */
void sw_handoff_fini(sw_handoff *h);

/* Start a thread with SIGINT and SIGTERM blocked in it: stop requests
 * reach the main thread, whose blocking calls they end.  0 or an errno. */
int sw_thread_start(pthread_t *thread, void *(*fn)(void *), void *arg);

#endif
