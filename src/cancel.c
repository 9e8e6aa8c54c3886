/* sillwatch: a request to stop, set from a signal handler (cancel.h). */
#include "sillwatch/cancel.h"

#include <signal.h>

/* The library's one piece of global state: written by a signal handler,
 * read by every thread (sig_atomic_t, volatile: see cancel.h). */
static volatile sig_atomic_t requested;
/* Set and read by the main thread only (and read by the reading threads
 * it starts): no signal handler touches it. */
static volatile sig_atomic_t held;

void sw_cancel_request(int sig)
{
    requested = sig > 0 ? sig : 1;
}

int sw_cancel_requested(void)
{
    return held ? 0 : (int)requested;
}

int sw_cancel_check(sw_error *err)
{
    int sig = held ? 0 : (int)requested;
    if (sig == 0)
        return SW_OK;
    return sw_error_set(err, SW_EINTERRUPTED, NULL, 0, 0,
                        "interrupted by signal %d", sig);
}

void sw_cancel_hold(int on)
{
    held = on != 0;
}

int sw_cancel_pending(void)
{
    return (int)requested;
}

void sw_cancel_reset(void)
{
    requested = 0;
}
