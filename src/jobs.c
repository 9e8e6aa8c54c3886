/* sillwatch: many independent jobs on a few worker processes (see
 * include/sillwatch/jobs.h). */
#include "sillwatch/jobs.h"

#include <errno.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include "sillwatch/cancel.h"

typedef struct pool {
    pid_t *pid; /* per job: its process while it runs, else 0 */
    size_t running, n_done;
} pool;

/* Start job i in a child process. */
static int start(pool *p, size_t i, sw_job_fn job, void *ctx, sw_error *err)
{
    fflush(NULL); /* nothing buffered is written twice */
    pid_t pid = fork();
    if (pid < 0)
        return sw_error_set(err, errno == ENOMEM ? SW_ENOMEM : SW_EOUTPUT,
                            NULL, 0, 0, "cannot start a worker process: %s",
                            strerror(errno));
    if (pid == 0) {
        int rc = job(i, ctx);
        fflush(NULL);
        _exit(rc & 0xff);
    }
    p->pid[i] = pid;
    p->running++;
    return SW_OK;
}

/* The exit status a wait reported, as a shell gives it. */
static int status_of(int ws)
{
    if (WIFEXITED(ws))
        return WEXITSTATUS(ws);
    if (WIFSIGNALED(ws))
        return 128 + WTERMSIG(ws);
    return 255;
}

/* Pass a stop request on to every running job, once. */
static void pass_on(pool *p, size_t n, int *passed)
{
    int sig = sw_cancel_requested();
    if (sig == 0 || *passed)
        return;
    for (size_t i = 0; i < n; i++)
        if (p->pid[i] > 0)
            kill(p->pid[i], sig);
    *passed = 1;
}

/* Wait for one job to end and record it. */
static void reap(pool *p, size_t n, sw_job_done_fn done, void *ctx,
                 int *status, int *passed)
{
    int ws;
    pid_t got;
    while ((got = waitpid(-1, &ws, 0)) < 0) {
        if (errno != EINTR) { /* no child left to wait for: lost */
            for (size_t i = 0; i < n; i++)
                if (p->pid[i] > 0) {
                    p->pid[i] = 0;
                    p->n_done++;
                    status[i] = 255;
                }
            p->running = 0;
            return;
        }
        pass_on(p, n, passed); /* a signal woke the wait */
    }
    for (size_t i = 0; i < n; i++) {
        if (p->pid[i] != got)
            continue;
        p->pid[i] = 0;
        p->running--;
        p->n_done++;
        status[i] = status_of(ws);
        if (done != NULL)
            done(i, status[i], p->n_done, ctx);
        return;
    }
}

int sw_jobs_run(size_t n, unsigned workers, sw_job_fn job,
                sw_job_done_fn done, void *ctx, int *status, sw_error *err)
{
    pool p = {calloc(n + 1, sizeof *p.pid), 0, 0};
    int rc = SW_OK, passed = 0;
    size_t next = 0;

    if (p.pid == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    for (size_t i = 0; i < n; i++)
        status[i] = -1;
    if (workers < 1)
        workers = 1;
    while (next < n || p.running > 0) {
        while (rc == SW_OK && next < n && p.running < workers &&
               !sw_cancel_requested())
            rc = start(&p, next++, job, ctx, err);
        if (p.running == 0)
            break; /* a stop or a failed start: nothing left to wait for */
        reap(&p, n, done, ctx, status, &passed);
        pass_on(&p, n, &passed);
    }
    free(p.pid);
    if (rc == SW_OK && sw_cancel_requested())
        return sw_cancel_check(err);
    return rc;
}

unsigned sw_jobs_default_workers(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n < 1 ? 1u : (unsigned)n;
}
