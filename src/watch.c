/* sillwatch: a live watch of a site's level files (see
 * include/sillwatch/watch.h). */
#define _DEFAULT_SOURCE /* flock */
#include "sillwatch/watch.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "sillwatch/cancel.h"
#include "sillwatch/csvout.h"
#include "sillwatch/follow.h"
#include "sillwatch/outfile.h"
#include "sillwatch/replay.h"
#include "sillwatch/stepper.h"

#define CHECKPOINT "checkpoint"
#define CHECKPOINT_HEAD "sillwatch watch checkpoint 1"
#define STATUS "status.csv"
#define MIRRORS "mirror"
#define LOCK "lock"
#define STATUS_EVERY_MS 1000 /* status.csv's ages, at most this stale */

/* A level file followed. */
typedef struct wfile {
    sw_site_series live;      /* its first series as the site gives it */
    char mirror[SW_ERROR_PATH_MAX];
    char scratch[SW_ERROR_PATH_MAX];
    sw_follow *fol;
    int has_resume;
    sw_follow_pos resume;     /* from the checkpoint */
} wfile;

typedef struct wgate {
    size_t hw, tw;            /* indices into site->series */
    int raised;               /* the state last raised (UNKNOWN: none) */
    sw_time_ms raised_t;
    int has_done;             /* its changes up to done_t are decided */
    sw_time_ms done_t;
    /* from the last replay */
    int has_point;
    sw_time_ms point_t;
    sw_gate_result point;
    int has_since, since_state;
    sw_time_ms since_t;
} wgate;

typedef struct wseries {
    int used;
    size_t file;              /* index into files */
    int has_newest;
    sw_time_ms newest;        /* its newest valid reading (data time) */
    sw_time_ms arrived;       /* when that came (wall clock) */
    int stale;
} wseries;

struct sw_watch {
    sw_site *site;
    char dir[SW_ERROR_PATH_MAX], mdir[SW_ERROR_PATH_MAX];
    sw_watch_options opt;
    sw_time_ms stale_after;
    char site_sha[SW_SHA256_HEX];
    int lock_fd;
    wfile *files;
    size_t n_files;
    wgate *gates;
    wseries *series;
    char (*shown)[SW_ERROR_PATH_MAX]; /* per site series: its level file */
    const char **shown_p;
    int polled;               /* a poll was made (the first replays) */
    sw_state_change *pend;    /* the last replay's undecided changes */
    size_t n_pend, cap_pend;
    sw_notice *notes;         /* the last poll's */
    size_t n_notes, cap_notes;
    sw_notice *queued;        /* waiting for their command, as committed */
    size_t n_queued;
    sw_time_ms wall, last_status;
    int has_final;
    sw_time_ms final_t;
    sw_watch_stats stats;
};

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
}

static double mono_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + (double)ts.tv_nsec * 1e-9;
}

/* ---- the folder ------------------------------------------------------- */

static int path_in(char *buf, size_t n, const char *dir, const char *name,
                   sw_error *err)
{
    if ((size_t)snprintf(buf, n, "%s/%s", dir, name) >= n)
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "the state folder's path is too long");
    return SW_OK;
}

/* Hold the folder's lock (flock: on the open file, so a second watch in
 * the same process is refused too; gone with the process).  The file
 * holds the holder's process id, for the message. */
static int take_lock(const char *dir, int *fd_out, sw_error *err)
{
    char path[SW_ERROR_PATH_MAX], pid[32];
    int rc, fd;

    *fd_out = -1;
    if ((rc = path_in(path, sizeof path, dir, LOCK, err)) != SW_OK)
        return rc;
    fd = open(path, O_RDWR | O_CREAT | O_CLOEXEC, 0666);
    if (fd < 0)
        return sw_error_set(err, SW_EOUTPUT, path, 0, 0,
                            "cannot use the state folder: %s",
                            strerror(errno));
    if (flock(fd, LOCK_EX | LOCK_NB) != 0) {
        ssize_t n = read(fd, pid, sizeof pid - 1);
        pid[n > 0 ? n : 0] = '\0';
        pid[strcspn(pid, "\n")] = '\0';
        close(fd);
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "another sillwatch watch (process %s) is using "
                            "this state folder",
                            pid[0] != '\0' ? pid : "?");
    }
    int n = snprintf(pid, sizeof pid, "%ld\n", (long)getpid());
    if (ftruncate(fd, 0) != 0 || pwrite(fd, pid, (size_t)n, 0) != n) {
        /* the process id is for messages only */
    }
    *fd_out = fd;
    return SW_OK;
}

int sw_watch_set_aside(const char *statedir, sw_error *err)
{
    char dir[SW_ERROR_PATH_MAX], old[SW_ERROR_PATH_MAX + 8];
    struct stat sb;
    int fd, rc;
    size_t n = strlen(statedir);

    while (n > 1 && statedir[n - 1] == '/')
        n--;
    snprintf(dir, sizeof dir, "%.*s", (int)n, statedir);
    snprintf(old, sizeof old, "%s.old", dir);
    if (stat(dir, &sb) != 0)
        return errno == ENOENT ? SW_OK
                               : sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                                              "cannot use the state folder: "
                                              "%s",
                                              strerror(errno));
    if (lstat(old, &sb) == 0)
        return sw_error_set(err, SW_EOUTPUT, old, 0, 0,
                            "--restart keeps the old state folder under this "
                            "name, which is taken: remove it or move it "
                            "first");
    if ((rc = take_lock(dir, &fd, err)) != SW_OK)
        return rc;
    rc = rename(dir, old) == 0
             ? SW_OK
             : sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "cannot move the state folder aside to %s: %s",
                            old, strerror(errno));
    close(fd);
    return rc;
}

/* ---- the site's files ----------------------------------------------------- */

static int gate_series(const sw_site *site, size_t g, const char *name,
                       const char *which, size_t *index, sw_error *err)
{
    const sw_site_series *s = sw_site_find_series(site, name);
    if (s == NULL)
        return sw_error_set(err, SW_ESITE, site->path, site->gates[g].line, 0,
                            "gate '%s' has no %s series: give it "
                            "'headwater = NAME' and 'tailwater = NAME' "
                            "naming [series NAME] sections",
                            site->gates[g].gate.name, which);
    *index = (size_t)(s - site->series);
    return SW_OK;
}

/* The file of series i among those followed, added when new. */
static int add_file(sw_watch *w, size_t i, sw_error *err)
{
    const sw_site_series *s = &w->site->series[i];
    const char *base = strrchr(s->path, '/');
    size_t k;
    int rc;

    if (s->netcdf)
        return sw_error_set(err, SW_ESITE, w->site->path, s->line, 0,
                            "series '%s' is a NetCDF file: watch follows "
                            "CSV level files only",
                            s->name);
    for (k = 0; k < w->n_files; k++)
        if (strcmp(w->files[k].live.path, s->path) == 0)
            break;
    w->series[i].file = k;
    if (k < w->n_files)
        return SW_OK;
    wfile *f = &w->files[w->n_files++];
    char name[SW_ERROR_PATH_MAX];
    f->live = *s;
    snprintf(name, sizeof name, "%zu-%.200s", k, base != NULL ? base + 1
                                                             : s->path);
    if ((rc = path_in(f->mirror, sizeof f->mirror, w->mdir, name, err)) !=
        SW_OK)
        return rc;
    snprintf(name, sizeof name, ".scan-%zu", k);
    return path_in(f->scratch, sizeof f->scratch, w->mdir, name, err);
}

/* Which series the gates use, and their files. */
static int find_files(sw_watch *w, sw_error *err)
{
    const sw_site *site = w->site;
    size_t ns = site->n_series ? site->n_series : 1;
    int rc;

    w->gates = calloc(site->n_gates ? site->n_gates : 1, sizeof *w->gates);
    w->series = calloc(ns, sizeof *w->series);
    w->files = calloc(ns, sizeof *w->files);
    w->shown = calloc(ns, sizeof *w->shown);
    w->shown_p = calloc(ns, sizeof *w->shown_p);
    if (w->gates == NULL || w->series == NULL || w->files == NULL ||
        w->shown == NULL || w->shown_p == NULL)
        return nomem(err);
    for (size_t g = 0; g < site->n_gates; g++) {
        wgate *wg = &w->gates[g];
        if ((rc = gate_series(site, g, site->gates[g].headwater, "headwater",
                              &wg->hw, err)) != SW_OK ||
            (rc = gate_series(site, g, site->gates[g].tailwater, "tailwater",
                              &wg->tw, err)) != SW_OK)
            return rc;
        wg->raised = SW_STATE_UNKNOWN;
        w->series[wg->hw].used = w->series[wg->tw].used = 1;
    }
    for (size_t i = 0; i < site->n_series; i++) {
        snprintf(w->shown[i], sizeof w->shown[i], "%s", site->series[i].path);
        w->shown_p[i] = w->shown[i];
        if (w->series[i].used && (rc = add_file(w, i, err)) != SW_OK)
            return rc;
    }
    return SW_OK;
}

/* ---- the checkpoint --------------------------------------------------- */

static int damaged(const sw_watch *w, const char *path, long line,
                   sw_error *err)
{
    (void)w;
    return sw_error_set(err, SW_EOUTPUT, path, line, 0,
                        "the checkpoint cannot be read (damaged, or made by "
                        "another version): start over with --restart");
}

/* One line of the checkpoint into the watch; returns 0, 1 at "end", or
 * -1 when it cannot be read. */
static int read_line(sw_watch *w, const char *s)
{
    unsigned long long k, a[8];
    long long t[4];
    int i[6];
    char hex[SW_FOLLOW_HEX + 1];

    if (strcmp(s, "end\n") == 0)
        return 1;
    if (sscanf(s, "file %llu %llu %llu %llu %llu %llu %llu %d %lld %64s", &k,
               &a[0], &a[1], &a[2], &a[3], &a[4], &a[5], &i[0], &t[0],
               hex) == 10) {
        if (k >= w->n_files)
            return -1;
        wfile *f = &w->files[k];
        sw_follow_pos *p = &f->resume;
        *p = (sw_follow_pos){a[0], a[1], a[2], a[3], a[4], a[5], i[0], "",
                             (long)t[0]};
        if (strlen(hex) == SW_FOLLOW_HEX - 1)
            memcpy(p->head_sha, hex, SW_FOLLOW_HEX);
        else if (strcmp(hex, "-") != 0)
            return -1;
        f->has_resume = 1;
        return 0;
    }
    if (sscanf(s, "gate %llu %d %lld %d %lld", &k, &i[0], &t[0], &i[1],
               &t[1]) == 5) {
        if (k >= w->site->n_gates)
            return -1;
        wgate *g = &w->gates[k];
        g->raised = i[0];
        g->raised_t = t[0];
        g->has_done = i[1];
        g->done_t = t[1];
        return 0;
    }
    if (sscanf(s, "series %llu %d %lld %lld %d", &k, &i[0], &t[0], &t[1],
               &i[1]) == 5) {
        if (k >= w->site->n_series || !w->series[k].used)
            return -1;
        wseries *ws = &w->series[k];
        ws->has_newest = i[0];
        ws->newest = t[0];
        ws->arrived = t[1];
        ws->stale = i[1];
        return 0;
    }
    sw_notice n;
    memset(&n, 0, sizeof n);
    if (sscanf(s, "queued %d %llu %llu %d %lld %d %d %la %la %la %d %d %la "
                  "%lld %lld",
               &n.kind, &a[0], &a[1], &n.has_t, &t[0], &n.from, &n.to,
               &n.hw_m, &n.tw_m, &n.fs, &n.crit_ok, &i[0],
               &n.tw_alarm.level_m, &t[1], &t[2]) == 15) {
        if (a[0] >= w->site->n_gates || a[1] >= w->site->n_series)
            return -1;
        sw_notice *q = realloc(w->queued, (w->n_queued + 1) * sizeof *q);
        if (q == NULL)
            return -1;
        n.gate = (size_t)a[0];
        n.series = (size_t)a[1];
        n.t = t[0];
        n.tw_alarm.kind = (sw_crit_kind)i[0];
        n.held_ms = t[1];
        n.quiet_ms = t[2];
        w->queued = q;
        w->queued[w->n_queued++] = n;
        return 0;
    }
    return -1;
}

/* Read the checkpoint, if there is one: *found. */
static int read_checkpoint(sw_watch *w, int *found, sw_error *err)
{
    char path[SW_ERROR_PATH_MAX], line[1024];
    long n = 0;
    int rc, end = 0;
    FILE *fp;

    *found = 0;
    if ((rc = path_in(path, sizeof path, w->dir, CHECKPOINT, err)) != SW_OK)
        return rc;
    if ((fp = fopen(path, "re")) == NULL)
        return errno == ENOENT ? SW_OK
                               : sw_error_set(err, SW_EOUTPUT, path, 0, 0,
                                              "cannot read the checkpoint: "
                                              "%s",
                                              strerror(errno));
    *found = 1;
    while (rc == SW_OK && !end && fgets(line, sizeof line, fp) != NULL) {
        n++;
        if (n == 1) {
            if (strcmp(line, CHECKPOINT_HEAD "\n") != 0)
                rc = damaged(w, path, n, err);
        } else if (n == 2) {
            char sha[SW_SHA256_HEX + 1];
            if (sscanf(line, "site %65s", sha) != 1)
                rc = damaged(w, path, n, err);
            else if (strcmp(sha, w->site_sha) != 0)
                rc = sw_error_set(err, SW_ESITE, w->site->path, 0, 0,
                                  "the site file is not the one the watch "
                                  "in %s was started with (its SHA-256 is "
                                  "%.12s..., the checkpoint's %.12s...): its "
                                  "outputs would not be this site's; start "
                                  "over with --restart",
                                  w->dir, w->site_sha, sha);
        } else {
            int r = read_line(w, line);
            if (r < 0)
                rc = damaged(w, path, n, err);
            end = r == 1;
        }
    }
    fclose(fp);
    if (rc == SW_OK && !end)
        rc = damaged(w, path, n, err);
    for (size_t k = 0; rc == SW_OK && k < w->n_files; k++)
        if (!w->files[k].has_resume)
            rc = damaged(w, path, n, err);
    return rc;
}

static void write_queued(FILE *fp, const sw_notice *n)
{
    fprintf(fp, "queued %d %zu %zu %d %lld %d %d %a %a %a %d %d %a %lld "
                "%lld\n",
            n->kind, n->gate, n->series, n->has_t, (long long)n->t, n->from,
            n->to, n->hw_m, n->tw_m, n->fs, n->crit_ok, (int)n->tw_alarm.kind,
            n->tw_alarm.level_m, (long long)n->held_ms,
            (long long)n->quiet_ms);
}

/* Write the checkpoint whole (temporary file, synced, renamed, folder
 * synced). */
static int write_checkpoint(sw_watch *w, sw_error *err)
{
    sw_outfile of;
    int rc;

    if ((rc = sw_outfile_open(&of, w->dir, CHECKPOINT, err)) != SW_OK)
        return rc;
    fprintf(of.fp, CHECKPOINT_HEAD "\nsite %s\n", w->site_sha);
    for (size_t k = 0; k < w->n_files; k++) {
        const wfile *f = &w->files[k];
        sw_follow_pos p;
        sw_follow_get_pos(f->fol, &p);
        fprintf(of.fp, "file %zu %llu %llu %llu %llu %llu %llu %d %ld %s\n",
                k, p.dev, p.ino, p.offset, p.copy_from, p.mirror_from,
                p.mirror_size, p.skipping, p.restarts,
                p.head_sha[0] ? p.head_sha : "-");
    }
    for (size_t g = 0; g < w->site->n_gates; g++) {
        const wgate *wg = &w->gates[g];
        fprintf(of.fp, "gate %zu %d %lld %d %lld\n", g, wg->raised,
                (long long)wg->raised_t, wg->has_done, (long long)wg->done_t);
    }
    for (size_t i = 0; i < w->site->n_series; i++) {
        const wseries *ws = &w->series[i];
        if (ws->used)
            fprintf(of.fp, "series %zu %d %lld %lld %d\n", i, ws->has_newest,
                    (long long)ws->newest, (long long)ws->arrived, ws->stale);
    }
    for (size_t q = 0; q < w->n_queued; q++)
        write_queued(of.fp, &w->queued[q]);
    fputs("end\n", of.fp);
    if ((rc = sw_outfile_close(&of, err)) != SW_OK ||
        (rc = sw_outfile_publish(&of, err)) != SW_OK) {
        sw_outfile_abort(&of);
        return rc;
    }
    return SW_OK;
}

/* ---- open --------------------------------------------------------------- */

/* Follow every file (resuming where the checkpoint says), then point the
 * site's series at the mirrors. */
static int start_followers(sw_watch *w, sw_error *err)
{
    int rc;
    if (mkdir(w->mdir, 0777) != 0 && errno != EEXIST)
        return sw_error_set(err, SW_EOUTPUT, w->mdir, 0, 0,
                            "cannot make the mirrors' folder: %s",
                            strerror(errno));
    for (size_t k = 0; k < w->n_files; k++) {
        wfile *f = &w->files[k];
        if ((rc = sw_follow_open(&f->fol, w->site, &f->live, f->mirror,
                                 f->scratch,
                                 f->has_resume ? &f->resume : NULL, err)) !=
            SW_OK)
            return rc;
    }
    for (size_t i = 0; i < w->site->n_series; i++) {
        if (!w->series[i].used)
            continue;
        char name[SW_SITE_NAME_MAX];
        snprintf(name, sizeof name, "%s", w->site->series[i].name);
        if ((rc = sw_site_set_series_file(
                 w->site, name, w->files[w->series[i].file].mirror, err)) !=
            SW_OK)
            return rc;
    }
    return SW_OK;
}

int sw_watch_open(sw_watch **out, sw_site *site, const char *statedir,
                  const sw_watch_options *opt, sw_error *err)
{
    sw_watch *w = calloc(1, sizeof *w);
    struct timespec now;
    int rc, found;

    *out = NULL;
    if (w == NULL)
        return nomem(err);
    w->site = site;
    w->lock_fd = -1;
    if (opt != NULL)
        w->opt = *opt;
    w->stale_after = w->opt.stale_after_ms > 0 ? w->opt.stale_after_ms
                                               : 2 * site->max_gap_ms;
    clock_gettime(CLOCK_REALTIME, &now);
    w->wall = (sw_time_ms)now.tv_sec * 1000 + now.tv_nsec / 1000000;
    snprintf(w->dir, sizeof w->dir, "%s", statedir);
    if ((rc = path_in(w->mdir, sizeof w->mdir, statedir, MIRRORS, err)) !=
            SW_OK ||
        (rc = take_lock(statedir, &w->lock_fd, err)) != SW_OK ||
        (rc = sw_file_sha256(site->path, w->site_sha, SW_ESITE, err)) !=
            SW_OK ||
        (rc = find_files(w, err)) != SW_OK)
        goto fail;
    for (size_t i = 0; i < site->n_series; i++)
        w->series[i].arrived = w->wall;
    if ((rc = read_checkpoint(w, &found, err)) != SW_OK ||
        (rc = start_followers(w, err)) != SW_OK)
        goto fail;
    w->stats.resumed = found;
    w->stats.files = w->n_files;
    *out = w;
    return SW_OK;
fail:
    sw_watch_free(w);
    return rc;
}

/* ---- a replay ----------------------------------------------------------- */

static int push_note(sw_watch *w, const sw_notice *n, sw_error *err)
{
    if (w->n_notes == w->cap_notes) {
        size_t cap = w->cap_notes ? 2 * w->cap_notes : 16;
        sw_notice *grown = realloc(w->notes, cap * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        w->notes = grown;
        w->cap_notes = cap;
    }
    w->notes[w->n_notes++] = *n;
    return SW_OK;
}

/* After each point of the replay: the changes not decided yet, and where
 * each gate stands. */
static int follow_point(void *ctx, const sw_stepper *st, sw_error *err)
{
    sw_watch *w = ctx;
    const sw_state_change *c;
    size_t n = sw_stepper_changes(st, &c);

    for (size_t i = 0; i < n; i++) {
        wgate *g = &w->gates[c[i].gate];
        if (c[i].to != SW_STATE_UNKNOWN) {
            g->has_since = 1;
            g->since_t = c[i].t;
            g->since_state = c[i].to;
        }
        if (g->has_done && c[i].t <= g->done_t)
            continue;
        if (w->n_pend == w->cap_pend) {
            size_t cap = w->cap_pend ? 2 * w->cap_pend : 64;
            sw_state_change *grown = realloc(w->pend, cap * sizeof *grown);
            if (grown == NULL)
                return nomem(err);
            w->pend = grown;
            w->cap_pend = cap;
        }
        w->pend[w->n_pend++] = c[i];
    }
    for (size_t g = 0; g < w->site->n_gates; g++) {
        const sw_step_gate *at = sw_stepper_gate_at(st, g);
        if (at->known) {
            w->gates[g].has_point = 1;
            w->gates[g].point_t = sw_stepper_time(st);
            w->gates[g].point = at->result;
        }
    }
    return SW_OK;
}

/* What the replay says of the series: each one's newest reading (a newer
 * one makes a stale series fresh), and the final instant. */
static int take_replay(sw_watch *w, const sw_stepper *st, sw_error *err)
{
    int rc;
    w->has_final = sw_stepper_final_until(st, &w->final_t);
    for (size_t i = 0; i < sw_stepper_n_series(st); i++) {
        size_t k = (size_t)(sw_stepper_series(st, i) - w->site->series);
        wseries *ws = &w->series[k];
        sw_time_ms t;
        if (!sw_stepper_newest_reading(st, i, &t) ||
            (ws->has_newest && ws->newest == t))
            continue;
        if (ws->stale) {
            sw_notice n;
            memset(&n, 0, sizeof n);
            n.kind = SW_NOTICE_FRESH;
            n.series = k;
            n.has_t = 1;
            n.t = t;
            n.quiet_ms = w->wall - ws->arrived;
            if ((rc = push_note(w, &n, err)) != SW_OK)
                return rc;
        }
        ws->stale = 0;
        ws->has_newest = 1;
        ws->newest = t;
        ws->arrived = w->wall;
    }
    return SW_OK;
}

/* The manifest's run time: fixed, or now (UTC). */
static void run_time(const sw_watch *w, char *buf, size_t n)
{
    time_t now = time(NULL);
    struct tm tm;
    if (w->opt.generated != NULL)
        snprintf(buf, n, "%s", w->opt.generated);
    else if (gmtime_r(&now, &tm) == NULL ||
             strftime(buf, n, "%Y-%m-%dT%H:%M:%SZ", &tm) == 0)
        snprintf(buf, n, "unknown");
}

/* An error in a mirror names the level file (the same lines, unless the
 * file was replaced since: then the mirror's line, saying so). */
static void name_level_file(const sw_watch *w, sw_error *err)
{
    for (size_t k = 0; k < w->n_files; k++) {
        const wfile *f = &w->files[k];
        sw_follow_pos p;
        if (strcmp(err->file, f->mirror) != 0)
            continue;
        sw_follow_get_pos(f->fol, &p);
        if (p.restarts == 0) {
            snprintf(err->file, sizeof err->file, "%s", f->live.path);
        } else {
            size_t len = strlen(err->message);
            snprintf(err->message + len, sizeof err->message - len,
                     " (in the watch's copy of %s, which was replaced "
                     "since it began)",
                     f->live.path);
        }
        return;
    }
}

/* Does every mirror hold its header row?  (Until then there is nothing
 * to replay.) */
static int mirrors_ready(const sw_watch *w)
{
    for (size_t k = 0; k < w->n_files; k++) {
        char **names;
        size_t n;
        sw_error ignored;
        if (sw_csv_header(w->files[k].mirror, w->files[k].live.delimiter,
                          &names, &n, &ignored) != SW_OK)
            return 0;
        sw_csv_header_free(names, n);
    }
    return 1;
}

/* Replay the site from the mirrors into the folder. */
static int replay(sw_watch *w, sw_error *err)
{
    sw_replay_options ro = {0, 0, 0, 0};
    sw_replay_follow fo = {follow_point, w, 1, 1, w->shown_p};
    sw_replay *rp = NULL;
    char when[32];
    double t0 = mono_s();
    int rc, done = 0;

    w->n_pend = 0;
    w->has_final = 0;
    for (size_t g = 0; g < w->site->n_gates; g++)
        w->gates[g].has_point = w->gates[g].has_since = 0;
    if (!mirrors_ready(w))
        return SW_OK;
    rc = sw_replay_open_following(&rp, w->site, w->dir, &ro, &fo, err);
    while (rc == SW_OK && !done)
        rc = sw_replay_feed(rp, 1L << 16, &done, err);
    if (rc == SW_OK && sw_stepper_has_data(sw_replay_stepper(rp))) {
        sw_replay_meta meta = {w->opt.tool_version, w->site_sha, when, "",
                               NULL};
        run_time(w, when, sizeof when);
        if ((rc = sw_replay_finish(rp, &meta, err)) == SW_OK)
            rc = take_replay(w, sw_replay_stepper(rp), err);
    } /* else no valid reading yet: nothing to publish */
    sw_replay_free(rp);
    if (rc != SW_OK && err->code != SW_ENOMEM)
        name_level_file(w, err);
    w->stats.replays++;
    w->stats.last_replay_s = mono_s() - t0;
    w->stats.total_replay_s += w->stats.last_replay_s;
    return rc;
}

/* ---- alarms, staleness, status ------------------------------------------ */

static int alarm_note(sw_watch *w, wgate *g, size_t gi,
                      const sw_state_change *c, sw_error *err)
{
    sw_notice n;
    sw_error ignored;
    memset(&n, 0, sizeof n);
    n.kind = SW_NOTICE_ALARM;
    n.gate = gi;
    n.has_t = 1;
    n.t = c->t;
    n.from = g->raised;
    n.to = c->to;
    n.hw_m = c->hw_m;
    n.tw_m = c->tw_m;
    n.fs = c->fs;
    n.held_ms = w->opt.hold_ms;
    n.crit_ok = sw_gate_critical_tailwater(&w->site->gates[gi].gate, c->hw_m,
                                           SW_LIMIT_ALARM, &n.tw_alarm,
                                           &ignored) == SW_OK;
    return push_note(w, &n, err);
}

/* The index of gate gi's next change after pend[i], or n_pend. */
static size_t next_change(const sw_watch *w, size_t gi, size_t i)
{
    for (size_t j = i + 1; j < w->n_pend; j++)
        if (w->pend[j].gate == gi)
            return j;
    return w->n_pend;
}

/* Decide gate gi's final changes, in order, raising those that are
 * alarms (see watch.h). */
static int decide_gate(sw_watch *w, size_t gi, sw_error *err)
{
    wgate *g = &w->gates[gi];
    sw_time_ms hold = w->opt.hold_ms;
    int rc;

    for (size_t i = 0; i < w->n_pend; i++) {
        const sw_state_change *c = &w->pend[i];
        if (c->gate != gi)
            continue;
        if (!w->has_final || c->t >= w->final_t)
            break; /* not final yet */
        int raise = c->to != SW_STATE_UNKNOWN && c->to != g->raised;
        if (raise && g->raised == SW_STATE_UNKNOWN && c->to == SW_STATE_OK) {
            g->raised = SW_STATE_OK; /* a first ok: nothing to say */
            g->raised_t = c->t;
            raise = 0;
        }
        if (raise && hold > 0) {
            size_t j = next_change(w, gi, i);
            if (j < w->n_pend && w->pend[j].t < w->final_t)
                raise = w->pend[j].t - c->t >= hold; /* it ended */
            else if (w->final_t - c->t < hold)
                break; /* still going, not long enough yet */
        }
        if (raise) {
            if ((rc = alarm_note(w, g, gi, c, err)) != SW_OK)
                return rc;
            g->raised = c->to;
            g->raised_t = c->t;
        }
        g->has_done = 1;
        g->done_t = c->t;
    }
    return SW_OK;
}

static int check_stale(sw_watch *w, sw_error *err)
{
    int rc;
    for (size_t i = 0; i < w->site->n_series; i++) {
        wseries *ws = &w->series[i];
        if (!ws->used || ws->stale || w->wall - ws->arrived <= w->stale_after)
            continue;
        sw_notice n;
        memset(&n, 0, sizeof n);
        n.kind = SW_NOTICE_STALE;
        n.series = i;
        n.has_t = ws->has_newest;
        n.t = ws->newest;
        n.quiet_ms = w->wall - ws->arrived;
        if ((rc = push_note(w, &n, err)) != SW_OK)
            return rc;
        ws->stale = 1;
    }
    return SW_OK;
}

static void put_level(FILE *fp, double v)
{
    fprintf(fp, ",%.4f", v == 0.0 ? 0.0 : v);
}

static void put_crit(FILE *fp, const sw_gate *gate, double hw,
                     sw_limit limit)
{
    sw_crit c;
    sw_error ignored;
    if (sw_gate_critical_tailwater(gate, hw, limit, &c, &ignored) != SW_OK)
        fputs(",?", fp);
    else if (c.kind == SW_CRIT_LEVEL)
        put_level(fp, c.level_m);
    else
        fputc(',', fp);
}

static void put_age(FILE *fp, const sw_watch *w, size_t series)
{
    fputc(',', fp);
    sw_csv_put_field(fp, w->site->series[series].name);
    fprintf(fp, ",%.1f", (double)(w->wall - w->series[series].arrived) /
                             1000.0);
}

/* One row of status.csv. */
static void status_row(FILE *fp, const sw_watch *w, size_t gi)
{
    const wgate *g = &w->gates[gi];
    const sw_gate *gate = &w->site->gates[gi].gate;
    char when[64], since[64];

    sw_csv_put_field(fp, gate->name);
    if (g->has_point) {
        const sw_gate_result *r = &g->point;
        sw_time_format(when, sizeof when, g->point_t, w->site->zone);
        sw_time_format(since, sizeof since,
                       g->has_since && g->since_state == (int)r->state
                           ? g->since_t
                           : g->point_t,
                       w->site->zone);
        fprintf(fp, ",%s", when);
        put_level(fp, r->headwater_m);
        put_level(fp, r->tailwater_m);
        if (isinf(r->fs))
            fprintf(fp, ",%s", r->fs > 0 ? "inf" : "-inf");
        else
            fprintf(fp, ",%.4f", r->fs == 0.0 ? 0.0 : r->fs);
        fprintf(fp, ",%s,%s", sw_state_name(r->state), since);
        put_crit(fp, gate, r->headwater_m, SW_LIMIT_ALARM);
        put_crit(fp, gate, r->headwater_m, SW_LIMIT_OPEN);
    } else {
        fputs(",,,,,,,,", fp);
    }
    put_age(fp, w, g->hw);
    put_age(fp, w, g->tw);
    fputc('\n', fp);
}

static int write_status(sw_watch *w, sw_error *err)
{
    sw_outfile of;
    int rc;

    if ((rc = sw_outfile_open(&of, w->dir, STATUS, err)) != SW_OK)
        return rc;
    fputs("gate,time,headwater,tailwater,fs,state,since,tw_alarm,tw_open,"
          "headwater_series,headwater_age_s,tailwater_series,"
          "tailwater_age_s\n",
          of.fp);
    for (size_t g = 0; g < w->site->n_gates; g++)
        status_row(of.fp, w, g);
    if ((rc = sw_outfile_close(&of, err)) != SW_OK ||
        (rc = sw_outfile_publish(&of, err)) != SW_OK) {
        sw_outfile_abort(&of);
        return rc;
    }
    w->last_status = w->wall;
    return SW_OK;
}

/* ---- a poll ------------------------------------------------------------- */

/* Poll every follower: *grew when a mirror grew, *moved when a file was
 * replaced or cut (its position is then worth a checkpoint). */
static int poll_files(sw_watch *w, int *grew, int *moved, sw_error *err)
{
    int rc;
    *grew = *moved = 0;
    for (size_t k = 0; k < w->n_files; k++) {
        unsigned long long appended;
        sw_follow_pos before, after;
        sw_follow_get_pos(w->files[k].fol, &before);
        if ((rc = sw_follow_poll(w->files[k].fol, &appended, err)) != SW_OK)
            return rc;
        sw_follow_get_pos(w->files[k].fol, &after);
        *grew |= appended > 0;
        *moved |= after.restarts != before.restarts ||
                  after.ino != before.ino || after.dev != before.dev ||
                  after.skipping != before.skipping;
    }
    return SW_OK;
}

/* The mirrors brought up to date, replayed when they grew (or at the
 * first poll).  The positions are in the checkpoint before the replay: a
 * restart cuts the mirrors back to them. */
static int take_and_replay(sw_watch *w, int *replayed, sw_error *err)
{
    int grew, moved, rc;

    *replayed = 0;
    if ((rc = poll_files(w, &grew, &moved, err)) != SW_OK)
        return rc;
    if (!grew && w->polled)
        return moved ? write_checkpoint(w, err) : SW_OK;
    if ((rc = write_checkpoint(w, err)) != SW_OK ||
        (rc = replay(w, err)) != SW_OK)
        return rc;
    *replayed = 1;
    return SW_OK;
}

/* Alarms in time order over the gates (gate order at one instant). */
static int by_time(const void *a, const void *b)
{
    const sw_notice *x = a, *y = b;
    if (x->t != y->t)
        return x->t < y->t ? -1 : 1;
    return x->gate < y->gate ? -1 : x->gate > y->gate;
}

static int decide_all(sw_watch *w, sw_error *err)
{
    size_t first = w->n_notes;
    int rc;
    for (size_t g = 0; g < w->site->n_gates; g++)
        if ((rc = decide_gate(w, g, err)) != SW_OK)
            return rc;
    if (w->n_notes > first)
        qsort(w->notes + first, w->n_notes - first, sizeof *w->notes,
              by_time);
    return SW_OK;
}

int sw_watch_poll(sw_watch *w, sw_time_ms wall_ms, const sw_notice **notices,
                  size_t *n, int *replayed, sw_error *err)
{
    int rc;

    w->n_notes = 0;
    w->wall = wall_ms;
    *notices = NULL;
    *n = 0;
    sw_cancel_hold(1); /* a stop request waits for the poll's end */
    rc = take_and_replay(w, replayed, err);
    w->polled = 1;
    if (rc == SW_OK && *replayed)
        rc = decide_all(w, err);
    if (rc == SW_OK)
        rc = check_stale(w, err);
    if (rc == SW_OK && (*replayed || w->n_notes > 0 ||
                        w->wall - w->last_status >= STATUS_EVERY_MS))
        rc = write_status(w, err);
    sw_cancel_hold(0);
    *notices = w->notes;
    *n = w->n_notes;
    return rc;
}

int sw_watch_commit(sw_watch *w, const sw_notice *queued, size_t n_queued,
                    sw_error *err)
{
    sw_notice *copy = NULL;
    int rc;
    if (n_queued > 0) {
        if ((copy = malloc(n_queued * sizeof *copy)) == NULL)
            return nomem(err);
        memcpy(copy, queued, n_queued * sizeof *copy);
    }
    free(w->queued);
    w->queued = copy;
    w->n_queued = n_queued;
    sw_cancel_hold(1);
    rc = write_checkpoint(w, err);
    sw_cancel_hold(0);
    return rc;
}

size_t sw_watch_queued(const sw_watch *w, const sw_notice **queued)
{
    *queued = w->queued;
    return w->n_queued;
}

/* ---- notices as text ---------------------------------------------------- */

/* A duration as the options take it: 15min, 2h, 30s, 0.25s. */
static void duration_text(char *buf, size_t n, sw_time_ms ms)
{
    if (ms % SW_MS_PER_HOUR == 0)
        snprintf(buf, n, "%lldh", (long long)(ms / SW_MS_PER_HOUR));
    else if (ms % 60000 == 0)
        snprintf(buf, n, "%lldmin", (long long)(ms / 60000));
    else if (ms % 1000 == 0)
        snprintf(buf, n, "%llds", (long long)(ms / 1000));
    else
        snprintf(buf, n, "%.3fs", (double)ms / 1000.0);
}

static const char *state_word(int s)
{
    return s == SW_STATE_UNKNOWN ? "none" : sw_state_name((sw_state)s);
}

static void fs_text(char *buf, size_t n, double fs)
{
    if (isinf(fs))
        snprintf(buf, n, "%s", fs > 0 ? "inf" : "-inf");
    else
        snprintf(buf, n, "%.4f", fs == 0.0 ? 0.0 : fs);
}

static void crit_text(char *buf, size_t n, const sw_notice *a)
{
    if (!a->crit_ok)
        snprintf(buf, n, "unknown");
    else if (a->tw_alarm.kind == SW_CRIT_LEVEL)
        snprintf(buf, n, "%.4f", a->tw_alarm.level_m);
    else
        snprintf(buf, n, "not_needed");
}

void sw_watch_notice_text(const sw_watch *w, const sw_notice *a, char *buf,
                          size_t n)
{
    char when[64] = "none", fs[32], crit[32], d[32];
    if (a->has_t)
        sw_time_format(when, sizeof when, a->t, w->site->zone);
    if (a->kind == SW_NOTICE_ALARM) {
        fs_text(fs, sizeof fs, a->fs);
        crit_text(crit, sizeof crit, a);
        int k = snprintf(buf, n, "alarm %s %s %s -> %s fs %s headwater %.4f "
                                 "tailwater %.4f tw_alarm %s",
                         when, w->site->gates[a->gate].gate.name,
                         state_word(a->from), state_word(a->to), fs,
                         a->hw_m, a->tw_m, crit);
        if (a->held_ms > 0 && k >= 0 && (size_t)k < n) {
            duration_text(d, sizeof d, a->held_ms);
            snprintf(buf + k, n - (size_t)k, " held %s", d);
        }
        return;
    }
    snprintf(buf, n, "%s %s series %s file %s: %s %.1f s",
             a->kind == SW_NOTICE_STALE ? "stale" : "fresh", when,
             w->site->series[a->series].name, w->shown[a->series],
             a->kind == SW_NOTICE_STALE ? "no new reading for"
                                        : "a new reading after",
             (double)a->quiet_ms / 1000.0);
}

void sw_watch_notice_env(const sw_watch *w, const sw_notice *a,
                         char env[SW_WATCH_ENV][SW_WATCH_ENV_LEN],
                         size_t *n_env)
{
    static const char *const kinds[] = {"alarm", "stale", "fresh"};
    char text[SW_WATCH_ENV_LEN - 32], when[64] = "", v[32];
    size_t k = 0;

    sw_watch_notice_text(w, a, text, sizeof text);
    if (a->has_t)
        sw_time_format(when, sizeof when, a->t, w->site->zone);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_NOTICE=%s",
             kinds[a->kind]);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_LINE=%s", text);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_SITE=%s", w->site->name);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_TIME=%s", when);
    if (a->kind != SW_NOTICE_ALARM) {
        snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_SERIES=%s",
                 w->site->series[a->series].name);
        snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_FILE=%s",
                 w->shown[a->series]);
        snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_QUIET_S=%.1f",
                 (double)a->quiet_ms / 1000.0);
        *n_env = k;
        return;
    }
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_GATE=%s",
             w->site->gates[a->gate].gate.name);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_FROM=%s",
             state_word(a->from));
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_TO=%s",
             state_word(a->to));
    fs_text(v, sizeof v, a->fs);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_FS=%s", v);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_HEADWATER=%.4f",
             a->hw_m);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_TAILWATER=%.4f",
             a->tw_m);
    crit_text(v, sizeof v, a);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_TW_ALARM=%s", v);
    snprintf(env[k++], SW_WATCH_ENV_LEN, "SILLWATCH_HOLD_S=%g",
             (double)a->held_ms / 1000.0);
    *n_env = k;
}

void sw_watch_get_stats(const sw_watch *w, sw_watch_stats *stats)
{
    *stats = w->stats;
    stats->mirrored = 0;
    stats->restarts = 0;
    for (size_t k = 0; k < w->n_files; k++) {
        sw_follow_pos p;
        if (w->files[k].fol == NULL)
            continue;
        sw_follow_get_pos(w->files[k].fol, &p);
        stats->mirrored += p.mirror_size;
        stats->restarts += p.restarts;
    }
}

void sw_watch_free(sw_watch *w)
{
    if (w == NULL)
        return;
    for (size_t k = 0; k < w->n_files; k++)
        sw_follow_free(w->files[k].fol);
    if (w->lock_fd >= 0)
        close(w->lock_fd);
    free(w->files);
    free(w->gates);
    free(w->series);
    free(w->shown);
    free(w->shown_p);
    free(w->pend);
    free(w->notes);
    free(w->queued);
    free(w);
}
