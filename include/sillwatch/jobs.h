/* sillwatch: many independent jobs on a few worker processes.
 *
 * A many-sites run replays each site exactly as a single run would: each
 * job runs in a process of its own (fork), so that nothing of one site
 * (memory, open files, a crash) can touch another, and at most `workers`
 * run at a time.  The parent only starts jobs and collects their exit
 * statuses; a failed job does not stop the others.
 *
 * A stop request (cancel.h) stops the starting of jobs and is passed on to
 * the running ones (the same signal), which leave their outputs as a
 * single run does; sw_jobs_run() then waits for them and returns
 * SW_EINTERRUPTED.
 */
#ifndef SILLWATCH_JOBS_H
#define SILLWATCH_JOBS_H

#include <stddef.h>

#include "sillwatch/error.h"

/* Run in the child for job i; its return is the child's exit status
 * (0..255).  The child flushes its standard streams and exits. */
typedef int (*sw_job_fn)(size_t i, void *ctx);

/* Called in the parent as job i ends with `status` (its exit status, or
 * 128 + the signal that ended it), `n_done` jobs having ended so far. */
typedef void (*sw_job_done_fn)(size_t i, int status, size_t n_done,
                               void *ctx);

/* Run jobs 0..n-1 on at most `workers` (>= 1) processes at once, in
 * order of index; status[i] receives each job's status (jobs never
 * started, after a stop request: -1).  Returns SW_OK when every job was
 * run; SW_EINTERRUPTED after a stop request; SW_ENOMEM or SW_EOUTPUT
 * ("cannot start a worker process: ...") when a process cannot be made,
 * after the running jobs ended. */
int sw_jobs_run(size_t n, unsigned workers, sw_job_fn job,
                sw_job_done_fn done, void *ctx, int *status, sw_error *err);

/* The number of processors online (at least 1): the default for
 * `workers`. */
unsigned sw_jobs_default_workers(void);

#endif
