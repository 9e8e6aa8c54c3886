/* sillwatch: a bounded hand-off to a consumer thread (handoff.h). */
#include "sillwatch/handoff.h"

#include <signal.h>

int sw_thread_start(pthread_t *thread, void *(*fn)(void *), void *arg)
{
    sigset_t block, old;
    int e;
    sigemptyset(&block);
    sigaddset(&block, SIGINT);
    sigaddset(&block, SIGTERM);
    pthread_sigmask(SIG_BLOCK, &block, &old);
    e = pthread_create(thread, NULL, fn, arg);
    pthread_sigmask(SIG_SETMASK, &old, NULL);
    return e;
}

void sw_handoff_init(sw_handoff *h, void *const *items, unsigned n,
                     sw_handoff_fn consume, void *ctx)
{
    *h = (sw_handoff){.n = n, .consume = consume, .ctx = ctx};
    for (unsigned k = 0; k < n; k++)
        h->slot[k] = items[k];
    pthread_mutex_init(&h->mu, NULL);
    pthread_cond_init(&h->cv, NULL);
}

void *sw_handoff_current(const sw_handoff *h)
{
    return h->slot[h->fill];
}

static void *consumer(void *arg)
{
    sw_handoff *h = arg;
    pthread_mutex_lock(&h->mu);
    for (;;) {
        while (h->count == 0 && !h->stop)
            pthread_cond_wait(&h->cv, &h->mu);
        if (h->count == 0 || h->drop)
            break;
        void *item = h->slot[h->head];
        pthread_mutex_unlock(&h->mu);
        h->consume(h->ctx, item);
        pthread_mutex_lock(&h->mu);
        h->head = (h->head + 1) % h->n;
        h->count--;
        pthread_cond_broadcast(&h->cv);
    }
    pthread_mutex_unlock(&h->mu);
    return NULL;
}

void *sw_handoff_pass(sw_handoff *h)
{
    if (!h->threaded && !h->stop &&
        sw_thread_start(&h->thread, consumer, h) == 0)
        h->threaded = 1;
    if (!h->threaded) { /* no thread: consume here, keep the slot */
        h->consume(h->ctx, h->slot[h->fill]);
        return h->slot[h->fill];
    }
    pthread_mutex_lock(&h->mu);
    h->count++;
    pthread_cond_broadcast(&h->cv);
    while (h->count == h->n)
        pthread_cond_wait(&h->cv, &h->mu);
    h->fill = (h->head + h->count) % h->n;
    pthread_mutex_unlock(&h->mu);
    return h->slot[h->fill];
}

void sw_handoff_end(sw_handoff *h, int drop)
{
    if (!h->threaded) {
        h->stop = 1; /* no thread starts after the end */
        return;
    }
    pthread_mutex_lock(&h->mu);
    h->drop = drop;
    h->stop = 1;
    pthread_cond_broadcast(&h->cv);
    pthread_mutex_unlock(&h->mu);
    pthread_join(h->thread, NULL);
    h->threaded = 0;
}

void sw_handoff_fini(sw_handoff *h)
{
    pthread_mutex_destroy(&h->mu);
    pthread_cond_destroy(&h->cv);
}
