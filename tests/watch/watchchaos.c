/* The live watch's property, tested: however the level files grow (row
 * by row, in bursts, lines cut in two, rotated, cut short) and however
 * often `watch` is killed (-9) and started again, once it has caught up
 * its summary.csv and events.csv equal, byte for byte, those of `run`
 * over all the rows written; and its alarm lines match run's events.
 *
 *   watchchaos MODE SEED SILLWATCH DIR
 *
 * MODE: kill (append in bursts, kill -9 and restart the watch at random
 * bursts), rotate (the same, and rotate the files by rename, the new file
 * repeating a few rows), truncate (serial: cut the files short in place
 * and rewrite a few rows, with `watch --once` runs between, some of them
 * killed at a random moment).  SEED: the random choices.  DIR: an empty
 * scratch folder.  Prints a few lines that depend on MODE and SEED only;
 * exits 1 when the property fails (saying what differed).
 *
 * The season is invented: a headwater every 15 min (Z times, with a few
 * spikes for the site's spike test and a few empty readings), a tidal
 * tailwater every 10 min in another file (semicolons, decimal commas,
 * +01:00 offsets), through the example site's gates.
 */
#define _DEFAULT_SOURCE /* usleep, kill */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#define DAYS 60
#define PI 3.14159265358979

static const char *sw, *dir;
static unsigned long long rng;
static pid_t watch_pid; /* the watch running, if any: killed on failure */

static unsigned next_rand(void)
{
    rng ^= rng << 13;
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return (unsigned)(rng >> 11);
}

static unsigned below(unsigned n)
{
    return next_rand() % n;
}

static void die(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stdout, "FAILED: ");
    vfprintf(stdout, fmt, ap);
    fprintf(stdout, "\n");
    va_end(ap);
    if (watch_pid > 0)
        kill(watch_pid, SIGKILL);
    exit(1);
}

static const char *at(const char *name)
{
    static char buf[8][1024];
    static int k;
    k = (k + 1) % 8;
    snprintf(buf[k], sizeof buf[k], "%s/%s", dir, name);
    return buf[k];
}

/* ---- the season --------------------------------------------------------- */

typedef struct stream {
    const char *name;     /* the live file's name */
    char **line;          /* line[0] the header; each ends in '\n' */
    long n, next;         /* lines, and the next to write */
    long *t;              /* each data line's time, s since 1970 */
    const char *pending;  /* the rest of a line cut in two */
    int fd;
    int rotations;
} stream;

static char *dup_line(const char *fmt, ...)
{
    char buf[256];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    char *s = strdup(buf);
    if (s == NULL)
        die("out of memory");
    return s;
}

static void stamp(char *buf, size_t n, long t, int offset_h)
{
    time_t tt = (time_t)(t + offset_h * 3600L);
    struct tm tm;
    gmtime_r(&tt, &tm);
    if (offset_h == 0)
        strftime(buf, n, "%Y-%m-%dT%H:%M:%SZ", &tm);
    else
        snprintf(buf + strftime(buf, n, "%Y-%m-%dT%H:%M:%S", &tm),
                 n - 19, "+%02d:00", offset_h);
}

static void make_season(stream *up, stream *down)
{
    const long t0 = 1767225600L; /* 2026-01-01T00:00:00Z */
    char when[48];

    up->name = "up.csv";
    up->n = DAYS * 96 + 1;
    up->line = calloc((size_t)up->n, sizeof *up->line);
    up->t = calloc((size_t)up->n, sizeof *up->t);
    up->line[0] = dup_line("time,level\n");
    for (long i = 1; i < up->n; i++) {
        long t = t0 + (i - 1) * 900L;
        double d = (double)(t - t0) / 86400.0;
        double hw = 11.62 + 0.22 * sin(2 * PI * d / 9.0) +
                    0.12 * sin(2 * PI * d / 2.3) +
                    0.002 * (double)(below(1000)) / 1000.0;
        stamp(when, sizeof when, t, 0);
        up->t[i] = t;
        if (i % 331 == 17) /* an empty reading */
            up->line[i] = dup_line("%s,\n", when);
        else if (i % 487 == 40) /* a spike: flagged, removed */
            up->line[i] = dup_line("%s,%.3f\n", when, hw + 0.8);
        else
            up->line[i] = dup_line("%s,%.3f\n", when, hw);
    }
    down->name = "down.csv";
    down->n = DAYS * 144 + 1;
    down->line = calloc((size_t)down->n, sizeof *down->line);
    down->t = calloc((size_t)down->n, sizeof *down->t);
    down->line[0] = dup_line("when;stage\n");
    for (long i = 1; i < down->n; i++) {
        long t = t0 + 300 + (i - 1) * 600L;
        double h = (double)(t - t0) / 3600.0;
        double tw = 11.25 + 0.38 * sin(2 * PI * h / 12.42) +
                    0.1 * sin(2 * PI * h / 120.0);
        long cm = lround(tw * 1000.0);
        stamp(when, sizeof when, t, 1);
        down->t[i] = t;
        if (i % 409 == 100)
            down->line[i] = dup_line("%s;\n", when);
        else
            down->line[i] = dup_line("%s;%ld,%03ld\n", when, cm / 1000,
                                     cm % 1000);
    }
}

static void write_text(const char *path, const char *text)
{
    FILE *fp = fopen(path, "w");
    if (fp == NULL || fputs(text, fp) < 0 || fclose(fp) != 0)
        die("cannot write %s", path);
}

static const char site_head[] =
    "[site]\nname = Chaos test site\nrequired_fs = 1.5\n"
    "min_sill_reaction = 500\nmax_gap = 1h\nlatitude = 52.37\n"
    "[water upstream]\ntemperature = 9.0\n"
    "[water downstream]\ntemperature = 12.5\nsalinity = 8.0\n"
    "[gate west]\nshape = rectangle\nhinge_level = 12.40\n"
    "inclination = 80\nseal_top = 0.15\nseal_height = 1.40\n"
    "seal_width = 1.60\nleaf_length = 1.65\nmass = 1450\ncg_along = 0.86\n"
    "cg_offset = 0.06\nvolume = 0.185\nextra_moment = 4200\n"
    "headwater = hw\ntailwater = tw\n"
    "[gate bypass]\nshape = circle\nhinge_level = 11.95\ninclination = 75\n"
    "seal_top = 0.12\ndiameter = 0.90\nleaf_length = 1.10\nmass = 420\n"
    "cg_along = 0.55\nvolume = 0.054\nextra_moment = 700\n"
    "required_fs = 1.3\nmin_sill_reaction = 200\n"
    "headwater = hw\ntailwater = tw\n";

static void write_site(const char *name, const char *up, const char *down)
{
    char text[4096];
    snprintf(text, sizeof text,
             "%s[series hw]\nfile = %s\ntime_column = time\n"
             "value_column = level\nvalid_range = 10, 14\nspike = 0.3\n"
             "[series tw]\nfile = %s\ntime_column = when\n"
             "value_column = stage\ndelimiter = semicolon\n",
             site_head, up, down);
    write_text(at(name), text);
}

/* ---- the writer ----------------------------------------------------------- */

static void write_all(int fd, const char *s, size_t n)
{
    while (n > 0) {
        ssize_t k = write(fd, s, n);
        if (k < 0 && errno == EINTR)
            continue;
        if (k < 0)
            die("write: %s", strerror(errno));
        s += k;
        n -= (size_t)k;
    }
}

static void open_live(stream *s, int flags)
{
    s->fd = open(at(s->name), O_WRONLY | O_CREAT | O_APPEND | flags, 0666);
    if (s->fd < 0)
        die("open %s: %s", s->name, strerror(errno));
}

static void finish_pending(stream *s)
{
    if (s->pending != NULL) {
        write_all(s->fd, s->pending, strlen(s->pending));
        s->pending = NULL;
    }
}

/* Append up to n lines, the last one maybe cut in two. */
static void burst(stream *s, long n)
{
    finish_pending(s);
    for (long k = 0; k < n && s->next < s->n; k++) {
        const char *l = s->line[s->next++];
        size_t len = strlen(l);
        if (k == n - 1 && below(3) == 0 && len > 2) {
            size_t cut = 1 + below((unsigned)len - 1);
            write_all(s->fd, l, cut);
            s->pending = l + cut;
        } else {
            write_all(s->fd, l, len);
        }
    }
}

/* The header and the last `k` lines written, as a new file starts. */
static void restart_text(stream *s, long k)
{
    write_all(s->fd, s->line[0], strlen(s->line[0]));
    for (long i = s->next - k; i < s->next; i++)
        if (i >= 1)
            write_all(s->fd, s->line[i], strlen(s->line[i]));
}

/* Rotation by rename: the old file keeps its name with a number; the
 * new one repeats the last k rows. */
static void rotate(stream *s, long k)
{
    char old[64];
    finish_pending(s);
    close(s->fd);
    snprintf(old, sizeof old, "%s.%d", s->name, ++s->rotations);
    if (rename(at(s->name), at(old)) != 0)
        die("rename: %s", strerror(errno));
    open_live(s, O_EXCL);
    restart_text(s, k);
}

/* Cut short in place (the same file), a few lines written again: at
 * least the line that was cut in two, which no watch has taken yet. */
static void truncate_live(stream *s)
{
    long k = (long)below(3);
    struct stat sb;
    size_t size = strlen(s->line[0]);
    if (s->pending != NULL && k == 0)
        k = 1;
    for (long i = s->next - k; i < s->next; i++)
        if (i >= 1)
            size += strlen(s->line[i]);
    /* a stopped watch takes a file cut to at least what it read (its
     * complete lines) for an edited one (an error by design): cut only to
     * less */
    size_t partial = s->pending != NULL ? strlen(s->line[s->next - 1]) -
                                              strlen(s->pending)
                                        : 0;
    if (fstat(s->fd, &sb) != 0 || (size_t)sb.st_size - partial <= size)
        return;
    s->pending = NULL; /* written whole by restart_text() */
    if (ftruncate(s->fd, 0) != 0)
        die("truncate: %s", strerror(errno));
    restart_text(s, k);
    s->rotations++;
}

static char *slurp(const char *path)
{
    FILE *fp = fopen(path, "rb");
    if (fp == NULL)
        return NULL;
    fseek(fp, 0, SEEK_END);
    long n = ftell(fp);
    rewind(fp);
    char *buf = malloc((size_t)n + 1);
    if (buf == NULL || fread(buf, 1, (size_t)n, fp) != (size_t)n)
        die("cannot read %s", path);
    buf[n] = '\0';
    fclose(fp);
    return buf;
}

static void nap_ms(unsigned ms)
{
    struct timespec ts = {(time_t)(ms / 1000), (long)(ms % 1000) * 1000000L};
    nanosleep(&ts, NULL);
}

/* ---- the watch ------------------------------------------------------------ */

/* Has the watch taken up the file now at s's path (its checkpoint names
 * the file's inode)? */
static int taken(const stream *s, int index)
{
    struct stat sb;
    char key[32], *cp, *l;
    unsigned long long dev, ino;
    if (stat(at(s->name), &sb) != 0)
        die("stat %s: %s", s->name, strerror(errno));
    cp = slurp(at("state/checkpoint"));
    snprintf(key, sizeof key, "\nfile %d ", index);
    int ok = cp != NULL && (l = strstr(cp, key)) != NULL &&
             sscanf(l + strlen(key), "%llu %llu", &dev, &ino) == 2 &&
             ino == (unsigned long long)sb.st_ino;
    free(cp);
    return ok;
}

/* Wait (for a running watch) until it has taken up the file now at s's
 * path: a file replaced twice between two looks would be missed in the
 * middle (a known limit). */
static void wait_taken(const stream *s, int index)
{
    for (int tries = 0; tries < 6000; tries++) {
        if (taken(s, index))
            return;
        nap_ms(10);
    }
    die("the watch did not take up the rotated %s within a minute", s->name);
}

/* Start the watch (SILLWATCH may be a wrapper and the program: words
 * split at blanks). */
static pid_t start_watch(int once)
{
    char words[2048], *argv[64], *save = NULL;
    int n = 0;
    snprintf(words, sizeof words, "%s", sw);
    for (char *w = strtok_r(words, " ", &save); w != NULL && n < 50;
         w = strtok_r(NULL, " ", &save))
        argv[n++] = w;
    argv[n++] = "watch";
    argv[n++] = (char *)at("site.ini");
    argv[n++] = "-o";
    argv[n++] = (char *)at("state");
    argv[n++] = "-q";
    if (once) {
        argv[n++] = "--once";
    } else {
        argv[n++] = "--poll"; /* short: a kill often lands in a poll */
        argv[n++] = "0.01s";
    }
    argv[n] = NULL;
    pid_t pid = fork();
    if (pid < 0)
        die("fork: %s", strerror(errno));
    if (pid == 0) {
        int out = open(at("watch.out"), O_WRONLY | O_CREAT | O_APPEND, 0666);
        int errf = open(at("watch.err"), O_WRONLY | O_CREAT | O_APPEND, 0666);
        if (out < 0 || errf < 0 || dup2(out, 1) < 0 || dup2(errf, 2) < 0)
            _exit(99);
        execvp(argv[0], argv);
        _exit(98);
    }
    watch_pid = pid;
    return pid;
}

static int wait_status(pid_t pid)
{
    int st;
    while (waitpid(pid, &st, 0) < 0)
        if (errno != EINTR)
            die("waitpid: %s", strerror(errno));
    if (pid == watch_pid)
        watch_pid = 0;
    return st;
}

static void kill_watch(pid_t pid)
{
    kill(pid, SIGKILL);
    int st = wait_status(pid);
    /* it may have ended by itself: only an error is a failure */
    if (WIFEXITED(st) && WEXITSTATUS(st) != 0)
        die("watch exited %d before it was killed (see %s)",
            WEXITSTATUS(st), at("watch.err"));
}


/* ---- the checks ----------------------------------------------------------- */

static int same_file(const char *a, const char *b)
{
    char *x = slurp(a), *y = slurp(b);
    int same = x != NULL && y != NULL && strcmp(x, y) == 0;
    free(x);
    free(y);
    return same;
}

static int caught_up(void)
{
    return same_file(at("state/summary.csv"), at("ref/summary.csv")) &&
           same_file(at("state/events.csv"), at("ref/events.csv"));
}

/* The reference: run over every row written, in one file per series. */
static void run_reference(const stream *up, const stream *down)
{
    for (int k = 0; k < 2; k++) {
        const stream *s = k == 0 ? up : down;
        FILE *fp = fopen(at(k == 0 ? "ref-up.csv" : "ref-down.csv"), "w");
        if (fp == NULL)
            die("cannot write the reference");
        for (long i = 0; i < s->n; i++)
            fputs(s->line[i], fp);
        fclose(fp);
    }
    write_site("ref.ini", "ref-up.csv", "ref-down.csv");
    char cmd[4096];
    snprintf(cmd, sizeof cmd, "%s run '%s' -o '%s' -q", sw, at("ref.ini"),
             at("ref"));
    int st = system(cmd);
    if (st == -1 || !WIFEXITED(st) || WEXITSTATUS(st) > 1)
        die("the reference run failed");
}

typedef struct alarm {
    char t[48], gate[32], from[8], to[8];
} alarm_line;

/* Each distinct alarm line of the watch's output (a line printed again
 * after a kill counts once); *lines: all of them. */
static size_t read_alarms(alarm_line *a, size_t cap, size_t *lines)
{
    char *text = slurp(at("watch.out")), *save = NULL;
    size_t n = 0;
    *lines = 0;
    if (text == NULL)
        return 0;
    for (char *l = strtok_r(text, "\n", &save); l != NULL;
         l = strtok_r(NULL, "\n", &save)) {
        alarm_line x;
        if (sscanf(l, "alarm %47s %31s %7s -> %7s", x.t, x.gate, x.from,
                   x.to) != 4)
            continue;
        (*lines)++;
        size_t i;
        for (i = 0; i < n; i++)
            if (strcmp(a[i].t, x.t) == 0 && strcmp(a[i].gate, x.gate) == 0 &&
                strcmp(a[i].from, x.from) == 0 && strcmp(a[i].to, x.to) == 0)
                break;
        if (i == n && n < cap) {
            memset(&a[n], 0, sizeof a[n]);
            snprintf(a[n].t, sizeof a[n].t, "%s", x.t);
            snprintf(a[n].gate, sizeof a[n].gate, "%s", x.gate);
            snprintf(a[n].from, sizeof a[n].from, "%s", x.from);
            snprintf(a[n].to, sizeof a[n].to, "%s", x.to);
            n++;
        }
    }
    free(text);
    return n;
}

static int has_alarm(const alarm_line *a, size_t n, const char *gate,
                     const char *t, int into_ok)
{
    for (size_t i = 0; i < n; i++)
        if (strcmp(a[i].gate, gate) == 0 && strcmp(a[i].t, t) == 0 &&
            (strcmp(a[i].to, "ok") == 0) == into_ok)
            return 1;
    return 0;
}

/* The alarms against run's events.csv: every event's start (while every
 * series has data a while after it) has an alarm into trouble from ok
 * (or none), every recovery one into ok, and there are no others from ok
 * or into ok; each gate's alarms chain (one's new state is the next
 * one's old). */
static size_t check_alarms(long last_final)
{
    static alarm_line a[4096];
    size_t lines, n = read_alarms(a, 4096, &lines), events = 0;
    char *text = slurp(at("ref/events.csv")), *save = NULL;
    char limit[48];
    time_t lt = (time_t)last_final;
    struct tm ltm;
    gmtime_r(&lt, &ltm);
    strftime(limit, sizeof limit, "%Y-%m-%dT%H:%M:%S+00:00", &ltm);
    size_t starts = 0, ends = 0;
    for (char *l = strtok_r(text, "\n", &save); l != NULL;
         l = strtok_r(NULL, "\n", &save)) {
        char gate[32], start[48], end[48], why[16];
        if (sscanf(l, "%31[^,],%47[^,],%47[^,],%*[^,],%*[^,],%*[^,],%*[^,],"
                      "%*[^,],%*[^,],%15s",
                   gate, start, end, why) != 4 || strcmp(gate, "gate") == 0)
            continue;
        events++;
        /* the site names no zone: every time is +00:00, compared as
         * text */
        if (strcmp(start, limit) < 0) {
            starts++;
            if (!has_alarm(a, n, gate, start, 0))
                die("no alarm at the start of the event %s %s", gate, start);
        }
        if (strcmp(why, "recovered") == 0 && strcmp(end, limit) < 0) {
            ends++;
            if (!has_alarm(a, n, gate, end, 1))
                die("no alarm at the end of the event %s %s", gate, end);
        }
    }
    free(text);
    size_t from_ok = 0, into_ok = 0;
    for (size_t i = 0; i < n; i++) {
        if (strcmp(a[i].t, limit) >= 0)
            continue;
        from_ok += strcmp(a[i].from, "ok") == 0 ||
                   strcmp(a[i].from, "none") == 0;
        into_ok += strcmp(a[i].to, "ok") == 0;
        for (size_t j = i + 1; j < n; j++)
            if (strcmp(a[j].gate, a[i].gate) == 0) {
                if (strcmp(a[j].from, a[i].to) != 0)
                    die("alarms of %s do not chain at %s", a[i].gate, a[j].t);
                break;
            }
    }
    if (from_ok != starts || into_ok != ends)
        die("%zu alarms from ok for %zu event starts, %zu into ok for %zu "
            "recoveries",
            from_ok, starts, into_ok, ends);
    if (events < 10)
        die("only %zu events: the season tests too little", events);
    return events;
}

/* ---- the runs ------------------------------------------------------------- */

typedef struct chaos {
    int mode; /* 0 kill, 1 rotate, 2 truncate */
    stream up, down;
    int kills;
    int planned[2]; /* rotations or cuts that timing cannot cancel */
} chaos;

static stream *pick(chaos *c)
{
    stream *a = &c->up, *b = &c->down;
    if (a->next >= a->n)
        return b;
    if (b->next >= b->n)
        return a;
    /* mostly the one behind in time, so that both advance together */
    int behind = a->t[a->next] <= b->t[b->next] ? 0 : 1;
    if (below(4) == 0)
        behind = 1 - behind;
    return behind == 0 ? a : b;
}

static long burst_size(void)
{
    unsigned r = below(20);
    return r == 0 ? 1 + (long)below(1500) : r < 8 ? 1 : 1 + (long)below(120);
}

static void feed_live(chaos *c)
{
    pid_t pid = start_watch(0);
    long bursts = 0;
    while (c->up.next < c->up.n || c->down.next < c->down.n) {
        stream *s = pick(c);
        burst(s, burst_size());
        bursts++;
        /* the random draws never depend on timing: the same seed makes
         * the same choices */
        int want = below(25) == 0;
        long k = (long)below(4);
        if (c->mode == 1 && want && s->next > 1) {
            wait_taken(s, s == &c->up ? 0 : 1);
            rotate(s, k);
            c->planned[s == &c->up ? 0 : 1]++;
        }
        if (below(15) == 0) {
            kill_watch(pid);
            c->kills++;
            /* the files go on while no one watches, each rotated at most
             * once (the watch finds the old one by its inode) */
            int rotated[2] = {0, 0};
            for (unsigned n = below(4); n > 0; n--) {
                stream *o = pick(c);
                int i = o == &c->up ? 0 : 1;
                burst(o, burst_size());
                int again = below(3) == 0;
                long repeat = (long)below(4);
                if (c->mode == 1 && again && o->next > 1 && !rotated[i] &&
                    taken(o, i)) {
                    rotate(o, repeat);
                    rotated[i] = 1;
                }
            }
            pid = start_watch(0);
        }
        nap_ms(below(4));
    }
    finish_pending(&c->up);
    finish_pending(&c->down);
    run_reference(&c->up, &c->down);
    /* let it catch up: at most a minute (a sanitizer build is slow) */
    struct timespec t0, now;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    for (;;) {
        if (caught_up())
            break;
        clock_gettime(CLOCK_MONOTONIC, &now);
        if (now.tv_sec - t0.tv_sec > 60) {
            kill(pid, SIGKILL);
            die("the watch did not catch up within a minute (state/ and "
                "ref/ in %s)",
                dir);
        }
        int st;
        if (waitpid(pid, &st, WNOHANG) == pid && (watch_pid = 0) == 0)
            die("the watch ended (status %d) before it caught up (see %s)",
                st, at("watch.err"));
        nap_ms(20);
    }
    kill(pid, SIGTERM);
    int st = wait_status(pid);
    if (!WIFEXITED(st) || WEXITSTATUS(st) != 0)
        die("the watch did not exit 0 on SIGTERM (status %d)", st);
    (void)bursts;
}

/* Serial: the files are cut short in place between `watch --once` runs,
 * some of which are killed at a random moment. */
static void feed_serial(chaos *c)
{
    while (c->up.next < c->up.n || c->down.next < c->down.n) {
        for (unsigned k = 1 + below(6); k > 0; k--)
            burst(pick(c), burst_size());
        pid_t pid = start_watch(1);
        if (below(3) == 0) {
            nap_ms(below(30));
            kill_watch(pid);
            c->kills++;
            continue;
        }
        int st = wait_status(pid);
        if (!WIFEXITED(st) || WEXITSTATUS(st) != 0)
            die("watch --once exited %d (see %s)",
                WIFEXITED(st) ? WEXITSTATUS(st) : -1, at("watch.err"));
        /* cut short only what a watch has read to its end (what it has
         * not read would be lost with the cut, as with any reader), and
         * let a watch see the cut before the file grows past what was
         * read (a stopped watch cannot tell that from an edit: an error
         * by design) */
        stream *s = pick(c);
        int before = s->rotations;
        if (below(4) == 0 && s->next > 1)
            truncate_live(s);
        if (s->rotations > before) {
            c->planned[s == &c->up ? 0 : 1]++;
            st = wait_status(start_watch(1));
            if (!WIFEXITED(st) || WEXITSTATUS(st) != 0)
                die("watch --once after a cut exited %d (see %s)",
                    WIFEXITED(st) ? WEXITSTATUS(st) : -1, at("watch.err"));
        }
    }
    finish_pending(&c->up);
    finish_pending(&c->down);
    run_reference(&c->up, &c->down);
    int st = wait_status(start_watch(1));
    if (!WIFEXITED(st) || WEXITSTATUS(st) != 0)
        die("the last watch --once exited %d", WEXITSTATUS(st));
    if (!caught_up())
        die("state/summary.csv or state/events.csv differs from ref/ in %s",
            dir);
}

static void free_season(stream *s)
{
    for (long i = 0; i < s->n; i++)
        free(s->line[i]);
    free(s->line);
    free(s->t);
    if (s->fd >= 0)
        close(s->fd);
}

int main(int argc, char **argv)
{
    static const char *const modes[] = {"kill", "rotate", "truncate"};
    chaos c;

    if (argc != 5) {
        fprintf(stderr, "usage: watchchaos kill|rotate|truncate SEED "
                        "SILLWATCH DIR\n");
        return 2;
    }
    memset(&c, 0, sizeof c);
    c.mode = -1;
    for (int m = 0; m < 3; m++)
        if (strcmp(argv[1], modes[m]) == 0)
            c.mode = m;
    rng = strtoull(argv[2], NULL, 10) * 2654435761ULL + 88172645463325252ULL;
    sw = argv[3];
    dir = argv[4];
    if (c.mode < 0)
        die("no mode %s", argv[1]);
    make_season(&c.up, &c.down);
    write_site("site.ini", "up.csv", "down.csv");
    open_live(&c.up, O_TRUNC);
    open_live(&c.down, O_TRUNC);
    if (c.mode == 2)
        feed_serial(&c);
    else
        feed_live(&c);
    /* alarms are final up to the newest readings less an interval: the
     * headwater's spike test holds its last reading back */
    long last = c.up.t[c.up.n - 1] < c.down.t[c.down.n - 1]
                    ? c.up.t[c.up.n - 2]
                    : c.down.t[c.down.n - 1];
    size_t events = check_alarms(last - 1800);
    /* (rotations while no watch runs depend on timing: a floor on the
     * others is printed, not the count) */
    int floor_n = c.mode == 0 ? 0 : 3;
    if (c.planned[0] < floor_n || c.planned[1] < floor_n)
        die("only %d and %d rotations or cuts: the seed tests too little",
            c.planned[0], c.planned[1]);
    printf("%s, seed %s: %d kills%s; summary.csv and events.csv equal run's "
           "over every row written; the alarms match its %zu events\n",
           modes[c.mode], argv[2], c.kills,
           c.mode == 0   ? ""
           : c.mode == 1 ? ", at least 3 rotations of each file"
                         : ", at least 3 cuts of each file",
           events);
    free_season(&c.up);
    free_season(&c.down);
    return 0;
}
