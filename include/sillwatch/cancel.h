/* sillwatch: a request to stop, set from a signal handler.
 *
 * The program installs handlers for SIGINT and SIGTERM that call
 * sw_cancel_request(); the library's blocking reads (of a FIFO, a pipe, a
 * terminal) wait at most SW_CANCEL_POLL_MS at a time and its long loops
 * call sw_cancel_check(), so that a signal is noticed well within half a
 * second.  The request is process-wide (one flag of type sig_atomic_t:
 * the one state a signal handler may set); with the flag that holds it
 * back (sw_cancel_hold), it is the library's only global state.
 */
#ifndef SILLWATCH_CANCEL_H
#define SILLWATCH_CANCEL_H

#include "sillwatch/error.h"

/* The longest wait of a blocking read between two looks at the flag. */
#define SW_CANCEL_POLL_MS 100

/* Ask every reader and loop to stop; `sig` (> 0) is the signal number.
 * Async-signal-safe. */
void sw_cancel_request(int sig);

/* 0, or the signal number of the request. */
int sw_cancel_requested(void);

/* SW_OK, or SW_EINTERRUPTED (message: "interrupted by signal N") when a
 * stop was requested. */
int sw_cancel_check(sw_error *err);

/* Hold requests back (on = 1) while a batch of work must finish whole (a
 * live watch's poll: the mirrors, the replay, the checkpoint): meanwhile
 * sw_cancel_requested() and sw_cancel_check() see no request, which is
 * kept and seen again once released (on = 0).  The main thread only. */
void sw_cancel_hold(int on);

/* The signal number of a request, held back or not (0: none). */
int sw_cancel_pending(void);

/* Forget a request (for tests). */
void sw_cancel_reset(void);

#endif
