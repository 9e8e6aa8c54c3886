/* sillwatch: a request to stop, set from a signal handler.
 *
 * The program installs handlers for SIGINT and SIGTERM that call
 * sw_cancel_request(); the library's blocking reads (of a FIFO, a pipe, a
 * terminal) wait at most SW_CANCEL_POLL_MS at a time and its long loops
 * call sw_cancel_check(), so that a signal is noticed well within half a
 * second.  The request is process-wide (one flag of type sig_atomic_t:
 * the one state a signal handler may set); it is the library's only
 * global state.
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

/* Forget a request (for tests). */
void sw_cancel_reset(void);

#endif
