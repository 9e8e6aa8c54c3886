/* sillwatch: a command run for each of a series of notices (a live
 * watch's alarms), never waited for by the caller.
 *
 * Each run is `/bin/sh -c COMMAND` with the caller's environment plus
 * entries of the run's own (NAME=VALUE), standard input from /dev/null and
 * standard output sent to standard error (so that the caller's standard
 * output holds its own lines only), in a process group of its own.  Runs
 * share a key (a gate, say): at most one run per key at a time, the others
 * queued in order.  A run still going after the time limit gets SIGTERM
 * (its whole process group), and SIGKILL a second later.
 *
 * sw_cmdq_step() does everything without blocking: it collects the runs
 * that ended, enforces the limit and starts what may start; it hands back
 * what became of each run that ended.  The queue never prints.
 */
#ifndef SILLWATCH_CMDQUEUE_H
#define SILLWATCH_CMDQUEUE_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/timeutil.h"

/* How a run ended. */
typedef enum sw_cmd_end {
    SW_CMD_EXITED = 0, /* exit status `status` */
    SW_CMD_SIGNALED,   /* killed by signal `status`, not by the queue */
    SW_CMD_TIMED_OUT,  /* over the time limit: killed */
    SW_CMD_STOPPED,    /* killed by sw_cmdq_stop() */
    SW_CMD_FAILED      /* could not be started: `status` is the errno */
} sw_cmd_end;

typedef struct sw_cmd_outcome {
    size_t key;
    sw_cmd_end end;
    int status;
    sw_time_ms ran_ms;     /* from its start to its end */
    const void *payload;   /* the caller's copy, valid until the next call */
} sw_cmd_outcome;

typedef struct sw_cmdq sw_cmdq; /* opaque */

/* A queue running `command` (copied) with a time limit of `limit_ms` (>
 * 0).  Errors: SW_ENOMEM. */
int sw_cmdq_alloc(sw_cmdq **q, const char *command, sw_time_ms limit_ms,
                  sw_error *err);

/* Queue a run under `key` with the environment entries env[0..n_env)
 * ("NAME=VALUE", copied) and a payload of `size` bytes (copied; handed
 * back with its outcome and by sw_cmdq_pending()).  Errors: SW_ENOMEM. */
int sw_cmdq_push(sw_cmdq *q, size_t key, const char *const *env,
                 size_t n_env, const void *payload, size_t size,
                 sw_error *err);

/* Collect the runs that ended, enforce the limit, start the runs whose
 * key is free; `now_ms` is a monotonic clock's reading (CLOCK_MONOTONIC).
 * *outcomes (valid until the next call) lists the runs that ended. */
void sw_cmdq_step(sw_cmdq *q, sw_time_ms now_ms,
                  const sw_cmd_outcome **outcomes, size_t *n);

/* The payload of the i-th run not started yet (in order), NULL past the
 * last. */
const void *sw_cmdq_pending(const sw_cmdq *q, size_t i);

/* Runs going and runs waiting. */
size_t sw_cmdq_running(const sw_cmdq *q);
size_t sw_cmdq_waiting(const sw_cmdq *q);

/* Stop: the runs going get SIGTERM, then SIGKILL after `grace_ms`; wait
 * for them (at most grace_ms + a second) and hand back their outcomes
 * (SW_CMD_STOPPED, or how they ended if before).  The runs waiting stay
 * waiting (sw_cmdq_pending()). */
void sw_cmdq_stop(sw_cmdq *q, sw_time_ms grace_ms,
                  const sw_cmd_outcome **outcomes, size_t *n);

/* Release; runs still going are left to themselves.  NULL is accepted. */
void sw_cmdq_free(sw_cmdq *q);

/* A monotonic clock in ms, for sw_cmdq_step(). */
sw_time_ms sw_cmdq_now(void);

#endif
