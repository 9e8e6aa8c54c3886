/* sillwatch: commands run for notices, one at a time per key (see
 * include/sillwatch/cmdqueue.h). */
#include "sillwatch/cmdqueue.h"

#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

extern char **environ;

#define KILL_AFTER_MS 1000 /* SIGKILL this long after SIGTERM */

typedef struct job {
    size_t key;
    char **env;          /* the run's own entries, NULL-terminated */
    void *payload;
    size_t size;
    pid_t pid;           /* 0: waiting */
    sw_time_ms started, term_at;
    int term_sent, stopping;
} job;

struct sw_cmdq {
    char *command;
    sw_time_ms limit_ms;
    job *jobs;           /* running first-come; waiting in order */
    size_t n, cap;
    sw_cmd_outcome *out; /* the last step's outcomes */
    void **out_payload;  /* theirs, freed at the next step */
    size_t n_out, cap_out;
};

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
}

sw_time_ms sw_cmdq_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (sw_time_ms)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

int sw_cmdq_alloc(sw_cmdq **out, const char *command, sw_time_ms limit_ms,
                  sw_error *err)
{
    sw_cmdq *q = calloc(1, sizeof *q);
    *out = NULL;
    if (q == NULL || (q->command = strdup(command)) == NULL) {
        free(q);
        return nomem(err);
    }
    q->limit_ms = limit_ms > 0 ? limit_ms : 1;
    *out = q;
    return SW_OK;
}

static void free_job(job *j)
{
    for (size_t i = 0; j->env != NULL && j->env[i] != NULL; i++)
        free(j->env[i]);
    free(j->env);
}

int sw_cmdq_push(sw_cmdq *q, size_t key, const char *const *env,
                 size_t n_env, const void *payload, size_t size,
                 sw_error *err)
{
    job j = {key, calloc(n_env + 1, sizeof(char *)), malloc(size ? size : 1),
             size, 0, 0, 0, 0, 0};
    int bad = j.env == NULL || j.payload == NULL;
    for (size_t i = 0; i < n_env && !bad; i++)
        bad = (j.env[i] = strdup(env[i])) == NULL;
    if (!bad && q->n == q->cap) {
        size_t cap = q->cap ? 2 * q->cap : 8;
        job *grown = realloc(q->jobs, cap * sizeof *grown);
        bad = grown == NULL;
        if (!bad) {
            q->jobs = grown;
            q->cap = cap;
        }
    }
    if (bad) {
        free_job(&j);
        free(j.payload);
        return nomem(err);
    }
    if (size > 0)
        memcpy(j.payload, payload, size);
    q->jobs[q->n++] = j;
    return SW_OK;
}

/* Record an outcome of job i and drop it from the list. */
static void finish(sw_cmdq *q, size_t i, sw_cmd_end end, int status,
                   sw_time_ms now)
{
    job *j = &q->jobs[i];
    if (q->n_out == q->cap_out) {
        size_t cap = q->cap_out ? 2 * q->cap_out : 8;
        sw_cmd_outcome *o = realloc(q->out, cap * sizeof *o);
        if (o != NULL)
            q->out = o;
        void **p = realloc(q->out_payload, cap * sizeof *p);
        if (p != NULL)
            q->out_payload = p;
        if (o == NULL || p == NULL) { /* no room to say it: drop it */
            free_job(j);
            free(j->payload);
            memmove(j, j + 1, (q->n - i - 1) * sizeof *j);
            q->n--;
            return;
        }
        q->cap_out = cap;
    }
    q->out[q->n_out] = (sw_cmd_outcome){j->key, end, status,
                                        j->pid > 0 ? now - j->started : 0,
                                        j->payload};
    q->out_payload[q->n_out++] = j->payload;
    free_job(j);
    memmove(j, j + 1, (q->n - i - 1) * sizeof *j);
    q->n--;
}

/* The environment of a run: ours, then its own entries (which win, being
 * later). */
static char **run_env(const job *j)
{
    size_t n = 0, k = 0;
    while (environ != NULL && environ[n] != NULL)
        n++;
    while (j->env[k] != NULL)
        k++;
    char **env = calloc(n + k + 1, sizeof *env);
    if (env == NULL)
        return NULL;
    for (size_t i = 0; i < n; i++)
        env[i] = environ[i];
    for (size_t i = 0; i < k; i++)
        env[n + i] = j->env[i];
    return env;
}

/* Start job j.  Returns 0 or an errno. */
static int start(sw_cmdq *q, job *j, sw_time_ms now)
{
    char *argv[] = {"sh", "-c", q->command, NULL};
    char **env = run_env(j);
    int devnull = open("/dev/null", O_RDONLY);
    if (env == NULL || devnull < 0) {
        int e = env == NULL ? ENOMEM : errno;
        free(env);
        if (devnull >= 0)
            close(devnull);
        return e;
    }
    pid_t pid = fork();
    if (pid == 0) {
        /* the child: only async-signal-safe calls until exec */
        setpgid(0, 0);
        dup2(devnull, STDIN_FILENO);
        dup2(STDERR_FILENO, STDOUT_FILENO);
        close(devnull);
        execve("/bin/sh", argv, env);
        _exit(127);
    }
    int e = errno;
    free(env);
    close(devnull);
    if (pid < 0)
        return e;
    setpgid(pid, pid); /* also here: whichever runs first */
    j->pid = pid;
    j->started = now;
    return 0;
}

/* Is a run of `key` going (before index `upto`)? */
static int key_busy(const sw_cmdq *q, size_t key, size_t upto)
{
    for (size_t i = 0; i < upto; i++)
        if (q->jobs[i].pid > 0 && q->jobs[i].key == key)
            return 1;
    return 0;
}

static void clear_outcomes(sw_cmdq *q)
{
    for (size_t i = 0; i < q->n_out; i++)
        free(q->out_payload[i]);
    q->n_out = 0;
}

/* Collect ended runs, and signal those over their time. */
static void reap(sw_cmdq *q, sw_time_ms now)
{
    for (size_t i = 0; i < q->n;) {
        job *j = &q->jobs[i];
        int st;
        if (j->pid <= 0) {
            i++;
            continue;
        }
        pid_t r = waitpid(j->pid, &st, WNOHANG);
        if (r == j->pid) {
            sw_cmd_end end = j->stopping    ? SW_CMD_STOPPED
                             : j->term_sent ? SW_CMD_TIMED_OUT
                             : WIFEXITED(st) ? SW_CMD_EXITED
                                             : SW_CMD_SIGNALED;
            int status = WIFEXITED(st) ? WEXITSTATUS(st)
                         : WIFSIGNALED(st) ? WTERMSIG(st) : 0;
            finish(q, i, end, status, now);
            continue;
        }
        if (r < 0 && errno == ECHILD) { /* not ours any more */
            finish(q, i, SW_CMD_SIGNALED, 0, now);
            continue;
        }
        if (!j->term_sent && now - j->started >= q->limit_ms) {
            kill(-j->pid, SIGTERM);
            j->term_sent = 1;
            j->term_at = now;
        } else if (j->term_sent && now - j->term_at >= KILL_AFTER_MS) {
            kill(-j->pid, SIGKILL);
        }
        i++;
    }
}

void sw_cmdq_step(sw_cmdq *q, sw_time_ms now,
                  const sw_cmd_outcome **outcomes, size_t *n)
{
    clear_outcomes(q);
    reap(q, now);
    for (size_t i = 0; i < q->n;) {
        job *j = &q->jobs[i];
        if (j->pid > 0 || key_busy(q, j->key, q->n)) {
            i++;
            continue;
        }
        /* the first waiting run of a free key */
        int e = start(q, j, now);
        if (e != 0) {
            finish(q, i, SW_CMD_FAILED, e, now);
            continue;
        }
        i++;
    }
    *outcomes = q->out;
    *n = q->n_out;
}

const void *sw_cmdq_pending(const sw_cmdq *q, size_t i)
{
    for (size_t k = 0; k < q->n; k++)
        if (q->jobs[k].pid == 0 && i-- == 0)
            return q->jobs[k].payload;
    return NULL;
}

size_t sw_cmdq_running(const sw_cmdq *q)
{
    size_t n = 0;
    for (size_t k = 0; k < q->n; k++)
        n += q->jobs[k].pid > 0;
    return n;
}

size_t sw_cmdq_waiting(const sw_cmdq *q)
{
    return q->n - sw_cmdq_running(q);
}

void sw_cmdq_stop(sw_cmdq *q, sw_time_ms grace_ms,
                  const sw_cmd_outcome **outcomes, size_t *n)
{
    sw_time_ms t0 = sw_cmdq_now(), now = t0;
    clear_outcomes(q);
    for (size_t k = 0; k < q->n; k++) {
        job *j = &q->jobs[k];
        if (j->pid <= 0)
            continue;
        kill(-j->pid, SIGTERM);
        j->stopping = 1;
        j->term_sent = 1;
        /* SIGKILL once the grace is over (reap() sends it) */
        j->term_at = t0 + grace_ms - KILL_AFTER_MS;
    }
    while (sw_cmdq_running(q) > 0 && now - t0 <= grace_ms + KILL_AFTER_MS) {
        struct timespec nap = {0, 10 * 1000000L};
        reap(q, now);
        if (sw_cmdq_running(q) == 0)
            break;
        nanosleep(&nap, NULL);
        now = sw_cmdq_now();
    }
    *outcomes = q->out;
    *n = q->n_out;
}

void sw_cmdq_free(sw_cmdq *q)
{
    if (q == NULL)
        return;
    clear_outcomes(q);
    for (size_t k = 0; k < q->n; k++) {
        free_job(&q->jobs[k]);
        free(q->jobs[k].payload);
    }
    free(q->jobs);
    free(q->out);
    free(q->out_payload);
    free(q->command);
    free(q);
}
