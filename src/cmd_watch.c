/* sillwatch watch: follow the level files as they grow, raise alarms,
 * resume after any stop.  The work is in the library (watch.h,
 * cmdqueue.h); this file parses options and prints. */
#include <errno.h>
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "cli.h"
#include "sillwatch/cancel.h"
#include "sillwatch/cmdqueue.h"
#include "sillwatch/watch.h"

static const char watch_help[] =
    "Usage: sillwatch watch SITE.ini -o STATEDIR [--poll DURATION]\n"
    "                       [--hold DURATION] [--stale-after DURATION]\n"
    "                       [--exec CMD] [--exec-limit DURATION]\n"
    "                       [--once] [--restart] [--quiet]\n"
    "Follow the level files of the site as loggers append to them: every\n"
    "new complete line is taken as it comes, the site is replayed exactly\n"
    "as 'run' replays it, and each change of a gate's state (ok, low,\n"
    "open) is printed as an alarm line on standard output.  STATEDIR\n"
    "(created if missing) holds:\n"
    "  summary.csv, events.csv, flags.csv, manifest.csv\n"
    "                 'run's outputs over the lines taken so far\n"
    "  status.csv     per gate: its last evaluated instant, levels, fs,\n"
    "                 state and since when, tw_alarm and tw_open, and the\n"
    "                 age of the newest reading of each of its series\n"
    "  checkpoint, mirror/, lock\n"
    "                 what a restart resumes from (after SIGTERM, SIGINT,\n"
    "                 kill -9 or a power cut): nothing counted twice,\n"
    "                 nothing lost\n"
    "A level file replaced by a new one (log rotation) or cut is read again\n"
    "from its start; its lines not later than the last one taken are\n"
    "skipped.  SIGTERM or SIGINT: the poll under way is finished, then the\n"
    "watch exits 0.\n"
    "\n"
    "  -o, --output STATEDIR   the watch's folder\n"
    "  --poll DURATION         look for new lines this often (default 5s)\n"
    "  --hold DURATION         raise a state only once it has lasted this\n"
    "                          long in the data (the line says so); hours\n"
    "                          in the outputs stay exact\n"
    "  --stale-after DURATION  a series without a new reading for this long\n"
    "                          (wall clock) raises a 'stale' line, and a\n"
    "                          'fresh' line when readings resume (default:\n"
    "                          twice the site's max_gap)\n"
    "  --exec CMD              run CMD through /bin/sh for each line,\n"
    "                          with the line's fields in SILLWATCH_*\n"
    "                          variables; one at a time per gate, the\n"
    "                          others queued; never delays the watch\n"
    "  --exec-limit DURATION   stop a command still running after this\n"
    "                          (default 60s)\n"
    "  --once                  take what the files hold, replay, raise the\n"
    "                          alarms, run their commands, and exit\n"
    "  --restart               start over: STATEDIR is moved to\n"
    "                          STATEDIR.old (which must not exist)\n"
    "  -q, --quiet             print nothing but the alarm, stale and fresh\n"
    "                          lines, failed commands and errors\n"
    "  -h, --help              show this help and exit\n"
    "      --version           show the version and exit\n"
    "\n"
    "Durations: a number and s, min, h or d (0.5s, 15min, 2h).\n"
    "Lines: 'alarm TIME GATE OLD -> NEW fs FS headwater HW tailwater TW\n"
    "tw_alarm TW_ALARM [held HOLD]', 'stale TIME series NAME file FILE: no\n"
    "new reading for S s', 'fresh ...: a new reading after S s'.\n"
    "\n"
    "Exit status: 0 stopped by SIGTERM or SIGINT (or --once done), 2 usage,\n"
    "3 site file (or a checkpoint made for another site file), 4 level data\n"
    "(or a level file changed behind the checkpoint), 5 output; see\n"
    "'sillwatch --help'.\n"
    "\n";

typedef struct watch_opts {
    const char *site_path, *statedir, *exec;
    sw_time_ms poll_ms, hold_ms, stale_ms, exec_limit_ms;
    int once, restart, quiet;
} watch_opts;

static int take_duration(const char *opt, const char *arg, sw_time_ms *out)
{
    sw_error err;
    if (sw_duration_parse(arg, out, &err) != SW_OK || *out <= 0)
        return sw_cli_usage_error("watch", "%s: %s", opt,
                                  *out <= 0 && err.code == SW_OK
                                      ? "the duration must be above 0"
                                      : err.message);
    return 0;
}

static int parse_args(int argc, char **argv, watch_opts *o)
{
    static const struct option opts[] = {
        {"output", required_argument, NULL, 'o'},
        {"poll", required_argument, NULL, 'P'},
        {"hold", required_argument, NULL, 'H'},
        {"stale-after", required_argument, NULL, 'S'},
        {"exec", required_argument, NULL, 'E'},
        {"exec-limit", required_argument, NULL, 'L'},
        {"once", no_argument, NULL, '1'},
        {"restart", no_argument, NULL, 'R'},
        {"quiet", no_argument, NULL, 'q'},
        {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},
        {NULL, 0, NULL, 0},
    };
    int opt, rc = 0;

    memset(o, 0, sizeof *o);
    o->poll_ms = 5000;
    o->exec_limit_ms = 60000;
    opterr = 0;
    while (rc == 0 &&
           (opt = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (opt) {
        case 'o': o->statedir = optarg; break;
        case 'P': rc = take_duration("--poll", optarg, &o->poll_ms); break;
        case 'H': rc = take_duration("--hold", optarg, &o->hold_ms); break;
        case 'S':
            rc = take_duration("--stale-after", optarg, &o->stale_ms);
            break;
        case 'E':
            if (optarg[0] == '\0')
                return sw_cli_usage_error("watch", "--exec: the command is "
                                                   "empty");
            o->exec = optarg;
            break;
        case 'L':
            rc = take_duration("--exec-limit", optarg, &o->exec_limit_ms);
            break;
        case '1': o->once = 1; break;
        case 'R': o->restart = 1; break;
        case 'q': o->quiet = 1; break;
        case 'V': sw_cli_version(); return -1;
        case 'h':
            fputs(watch_help, stdout);
            fputs(sw_cli_caution, stdout);
            return -1;
        default: return sw_cli_option_error("watch", opt, argv);
        }
    }
    if (rc != 0)
        return rc;
    if ((rc = sw_cli_site_operand("watch", argc, argv, o->statedir,
                                  &o->site_path)) != 0)
        return rc;
    if (strcmp(o->site_path, "-") == 0)
        return sw_cli_usage_error("watch", "the watch reads the site file "
                                           "again when it restarts: give it "
                                           "by name, not '-'");
    return 0;
}

static sw_time_ms wall_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_REALTIME, &ts);
    return (sw_time_ms)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

typedef struct watch_run {
    const watch_opts *o;
    char when[32];              /* SOURCE_DATE_EPOCH as a run time */
    sw_site site;
    sw_watch *w;
    sw_cmdq *q;
} watch_run;

/* Say what became of the commands that ended. */
static void print_outcomes(const watch_run *r, const sw_cmd_outcome *oc,
                           size_t n)
{
    char line[SW_WATCH_ENV_LEN];
    for (size_t i = 0; i < n; i++) {
        const sw_cmd_outcome *c = &oc[i];
        double s = (double)c->ran_ms / 1000.0;
        if (c->end == SW_CMD_EXITED && c->status == 0)
            continue;
        sw_watch_notice_text(r->w, c->payload, line, sizeof line);
        fprintf(stderr, "sillwatch: watch: warning: the command for '%s' ",
                line);
        switch (c->end) {
        case SW_CMD_EXITED:
            fprintf(stderr, "failed with exit status %d", c->status);
            break;
        case SW_CMD_SIGNALED:
            fprintf(stderr, "was killed by signal %d", c->status);
            break;
        case SW_CMD_TIMED_OUT:
            fprintf(stderr, "was still running after the limit of %.1f s: "
                            "stopped (SIGTERM, SIGKILL a second later)",
                    (double)r->o->exec_limit_ms / 1000.0);
            break;
        case SW_CMD_STOPPED:
            fprintf(stderr, "was stopped: the watch is ending");
            break;
        default:
            fprintf(stderr, "could not be started: %s", strerror(c->status));
            break;
        }
        fprintf(stderr, " (after %.1f s)\n", s);
    }
    fflush(stderr);
}

/* Start what may start, collect what ended; *changed when either. */
static void step_commands(watch_run *r, int *changed)
{
    const sw_cmd_outcome *oc;
    size_t n, waiting;
    if (r->q == NULL)
        return;
    waiting = sw_cmdq_waiting(r->q);
    sw_cmdq_step(r->q, sw_cmdq_now(), &oc, &n);
    print_outcomes(r, oc, n);
    *changed |= n > 0 || sw_cmdq_waiting(r->q) != waiting;
}

/* Queue a notice's command (stale and fresh notices queue by series). */
static int queue_command(watch_run *r, const sw_notice *n, sw_error *err)
{
    char env[SW_WATCH_ENV][SW_WATCH_ENV_LEN];
    const char *ep[SW_WATCH_ENV];
    size_t n_env;
    sw_watch_notice_env(r->w, n, env, &n_env);
    for (size_t i = 0; i < n_env; i++)
        ep[i] = env[i];
    size_t key = n->kind == SW_NOTICE_ALARM ? n->gate
                                            : r->site.n_gates + n->series;
    return sw_cmdq_push(r->q, key, ep, n_env, n, sizeof *n, err);
}

/* The notices waiting for their command, for the checkpoint. */
static int commit(watch_run *r, sw_error *err)
{
    sw_notice *waiting = NULL;
    size_t n = 0;
    int rc;
    if (r->q != NULL && sw_cmdq_waiting(r->q) > 0) {
        waiting = malloc(sw_cmdq_waiting(r->q) * sizeof *waiting);
        if (waiting == NULL)
            return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
        for (const void *p; (p = sw_cmdq_pending(r->q, n)) != NULL; n++)
            memcpy(&waiting[n], p, sizeof *waiting);
    }
    rc = sw_watch_commit(r->w, waiting, n, err);
    free(waiting);
    return rc;
}

/* One poll: the notices printed (and their commands queued), then
 * recorded as said. */
static int poll_once(watch_run *r, sw_error *err)
{
    const sw_notice *notes;
    size_t n;
    int replayed, changed = 0, rc;
    char line[SW_WATCH_ENV_LEN];

    if ((rc = sw_watch_poll(r->w, wall_now(), &notes, &n, &replayed, err)) !=
        SW_OK)
        return rc;
    for (size_t i = 0; i < n; i++) {
        sw_watch_notice_text(r->w, &notes[i], line, sizeof line);
        printf("%s\n", line);
        if (r->q != NULL && (rc = queue_command(r, &notes[i], err)) != SW_OK)
            return rc;
    }
    fflush(stdout);
    step_commands(r, &changed);
    if (replayed || n > 0 || changed)
        return commit(r, err);
    return SW_OK;
}

/* Wait `ms`, stepping the commands every tenth of a second; returns early
 * on a stop request. */
static int pause_for(watch_run *r, sw_time_ms ms, sw_error *err)
{
    sw_time_ms until = sw_cmdq_now() + ms;
    for (;;) {
        sw_time_ms left = until - sw_cmdq_now();
        int changed = 0;
        if (left <= 0 || sw_cancel_pending())
            return SW_OK;
        if (left > SW_CANCEL_POLL_MS)
            left = SW_CANCEL_POLL_MS;
        struct timespec nap = {(time_t)(left / 1000),
                               (long)(left % 1000) * 1000000L};
        nanosleep(&nap, NULL); /* a signal cuts it short */
        step_commands(r, &changed);
        if (changed) {
            int rc = commit(r, err);
            if (rc != SW_OK)
                return rc;
        }
    }
}

/* --once: the commands run to their end (each within its limit). */
static int drain_commands(watch_run *r, sw_error *err)
{
    while (r->q != NULL && !sw_cancel_pending() &&
           sw_cmdq_running(r->q) + sw_cmdq_waiting(r->q) > 0) {
        int rc = pause_for(r, 20, err);
        if (rc != SW_OK)
            return rc;
    }
    return SW_OK;
}

static int start(watch_run *r, sw_error *err)
{
    const watch_opts *o = r->o;
    int rc;
    sw_watch_options wo = {o->hold_ms, o->stale_ms, SW_VERSION, NULL};

    if (getenv("SOURCE_DATE_EPOCH") != NULL) {
        if (sw_cli_generation_time(r->when, sizeof r->when) != 0)
            return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                                "SOURCE_DATE_EPOCH is not a number of "
                                "seconds");
        wo.generated = r->when;
    }
    if ((rc = sw_site_load(&r->site, o->site_path, err)) != SW_OK ||
        (o->restart && (rc = sw_watch_set_aside(o->statedir, err)) != SW_OK) ||
        (rc = sw_cli_make_outdir(o->statedir, err)) != SW_OK ||
        (rc = sw_cli_recover(o->statedir, o->quiet, err)) != SW_OK ||
        (rc = sw_watch_open(&r->w, &r->site, o->statedir, &wo, err)) != SW_OK)
        return rc;
    if (o->exec != NULL) {
        const sw_notice *queued;
        size_t nq = sw_watch_queued(r->w, &queued);
        if ((rc = sw_cmdq_alloc(&r->q, o->exec, o->exec_limit_ms, err)) !=
            SW_OK)
            return rc;
        for (size_t i = 0; i < nq; i++)
            if ((rc = queue_command(r, &queued[i], err)) != SW_OK)
                return rc;
    }
    if (!o->quiet) {
        sw_watch_stats s;
        sw_watch_get_stats(r->w, &s);
        fprintf(stderr, "sillwatch: watch: %s %zu level file%s of site '%s' "
                        "into %s\n",
                s.resumed ? "resuming" : "following", s.files,
                s.files == 1 ? "" : "s", r->site.name, o->statedir);
    }
    return SW_OK;
}

int sw_cmd_watch(int argc, char **argv)
{
    watch_opts o;
    watch_run r;
    sw_error err;
    int rc;

    if ((rc = parse_args(argc, argv, &o)) != 0)
        return rc < 0 ? SW_EXIT_OK : rc;
    memset(&r, 0, sizeof r);
    r.o = &o;
    rc = start(&r, &err);
    while (rc == SW_OK && !sw_cancel_pending()) {
        if ((rc = poll_once(&r, &err)) != SW_OK || o.once)
            break;
        rc = pause_for(&r, o.poll_ms, &err);
    }
    if (rc == SW_OK && o.once)
        rc = drain_commands(&r, &err);
    if (r.q != NULL && sw_cmdq_running(r.q) > 0) {
        const sw_cmd_outcome *oc;
        size_t n;
        sw_cmdq_stop(r.q, 1000, &oc, &n);
        print_outcomes(&r, oc, n);
    }
    if (r.w != NULL && rc == SW_OK)
        rc = commit(&r, &err);
    if (rc == SW_EINTERRUPTED) /* stopped while the site file was read */
        rc = SW_OK;
    if (rc == SW_OK && !o.quiet && sw_cancel_pending())
        fprintf(stderr, "sillwatch: watch: stopped by signal %d; the state "
                        "in %s is complete\n",
                sw_cancel_pending(), o.statedir);
    sw_cmdq_free(r.q);
    sw_watch_free(r.w);
    sw_site_fini(&r.site);
    return rc == SW_OK ? SW_EXIT_OK : sw_cli_report(&err);
}
