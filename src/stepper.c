/* sillwatch: the stepping engine (see include/sillwatch/stepper.h).
 *
 * Data flow: the readers (one per CSV file) are read in time order, one
 * record at a time, each reader holding one record ahead.  A record's valid
 * values go to the FIFO of their series, and its time to the FIFO of
 * timeline points.  The oldest interval [T0, T1] of the timeline is
 * evaluated as soon as every series in use knows whether it has a sample at
 * or after T1 within max_gap of its last sample at or before T0; until then
 * more records are read.  So the FIFOs hold at most max_gap of data.
 *
 * Within an interval both levels of a gate are linear in time, so each
 * margin (sw_gate_margins) stays within E of the straight line between its
 * end values, E from the margins' curvature bounds (sw_gate_bounds).
 * Where that line is farther than E from zero the margin's sign is
 * certain; where a margin changes sign, its crossing lies in the stretch
 * where the line is within E of zero.  When every such stretch is at most
 * a second long, the states between are certain and each stretch is booked
 * at the worse state it may hold (a conservative one-second resolution);
 * otherwise the piece is halved and each half evaluated, down to a second.
 * So a gate costs one evaluation per time step away from trouble, and few
 * more near it.
 */
#include "sillwatch/stepper.h"
#include "sillwatch/handoff.h"

#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "sillwatch/cancel.h"

#define RESOLUTION_MS 1000 /* state changes are located to this */
#define MAX_DEPTH 64       /* bisection stack; 2^64 ms is never reached */

typedef struct sample {
    sw_time_ms t;
    double v;
} sample;

/* A ring buffer of samples or of times, growing by doubling (its capacity
 * stays a power of two, so that indices wrap with a mask). */
typedef struct ring {
    sample *items;
    size_t head, count, cap;
} ring;

typedef struct series_state {
    const sw_site_series *def;
    size_t reader, column;  /* where its values come from */
    ring fifo;              /* valid samples read, not yet passed */
    int have_prev;
    sample prev;            /* last valid sample at or before T0 */
    int have_last;
    sw_time_ms last_t;      /* last valid sample read (gap counting) */
    int have_before_last;
    sw_time_ms before_last_t; /* the valid sample before last_t */
    int known;              /* known over the interval being settled */
    int memo_set;           /* the level last asked for: the gates that */
    sw_time_ms memo_t;      /* share this series ask for the same */
    double memo_v;          /* instants */
    sw_gap_stats gaps;
    double lo, hi;          /* least and greatest valid level taken */
    sw_qc *qc;              /* its quality tests; NULL when it has none */
    sw_qc_stats qstats;
} series_state;

/* Records read ahead by a reader's own thread, handed over in batches. */
/* The ring of batches holds about RING_BYTES of records: larger than a
 * core's own cache, so that a batch has left the writer's cache before the
 * stepper reads it and is streamed from memory rather than pulled across
 * from the other core line by line (measured: about 9 % faster than a ring
 * that fits in that cache).  Its size is fixed, whatever the run's length. */
#define N_BATCHES 32
#define RING_BYTES (4u << 20)

typedef struct batch {
    size_t n;                   /* records held */
    int status;                 /* SW_OK, or the error after the records */
    int eof;                    /* the file ends after these records */
    sw_error err;
    sw_time_ms *t;              /* [batch_rows] */
    long *line;                 /* [batch_rows] */
    double *v;                  /* [batch_rows * n_cols] */
} batch;

typedef struct reader_state {
    sw_reader *rd;
    const sw_site_series *first; /* the series that opened it */
    size_t n_cols;
    size_t *series_of;          /* [n_cols]: the series of each column */
    size_t cap_cols;
    int pending;                /* a record is held in t and v */
    sw_time_ms t;
    long line;
    const double *v;
    /* the read-ahead: the worker fills batches, the stepper drains them */
    int threaded;
    pthread_t thread;
    pthread_mutex_t mu;
    pthread_cond_t cv;
    batch b[N_BATCHES];
    size_t batch_rows;          /* records a batch holds */
    size_t head, count;         /* consumer's batch, batches full */
    size_t pos;                 /* next record in b[head] */
    int taken;                  /* b[head] is in use by the consumer */
    int stop, done;
} reader_state;

/* A gate evaluated at one instant. */
typedef struct point {
    sw_time_ms t;
    sw_gate_result r;
    double m[SW_N_MARGINS];
    int state;
} point;

typedef struct gate_state {
    const sw_gate *gate;
    sw_load_memo *memo;      /* with opt.memo_loads, else NULL */
    size_t hw, tw;           /* series indices */
    sw_gate_bounds bounds;
    double rate_hw;          /* bound on d hw_moment / d hw, N*m per m */
    double rate_tw;          /* the same for the tailwater's moment, where
                                the basis divides by D; else 0 */
    /* Since the last evaluated point pt[cur] (the anchor), the levels have
     * strayed from it by at most these, without the waters crossing. */
    double drift_hw, drift_tw;
    int last_known;          /* the previous interval was known ... */
    point pt[2];             /* ... and pt[cur] is its right end; the */
    int cur;                 /* other slot is scratch */
    int in_event;
    sw_event ev;
    sw_tally run, month;
    sw_time_ms unknown_edge; /* not evaluated: before the first or after
                                the last valid reading of a series */
    int month_yyyymm;
    sw_time_ms month_start, month_next;
    int month_open;
    sw_step_gate at;
    int booked;              /* the state of the last piece booked */
} gate_state;

struct sw_stepper {
    const sw_site *site;
    sw_stepper_options opt;
    size_t n_readers, n_series, n_gates;
    reader_state *readers;
    series_state *series;
    gate_state *gates;
    ring timeline;           /* times in .t; .v unused */
    int started;
    sw_time_ms span_start, span_end, now;
    long long evaluations;
    sw_event *events;
    size_t n_events, cap_events;
    sw_month_row *months;
    size_t n_months, cap_months;
    int any_qc;              /* some series has quality tests */
    int passed;              /* the last advance passed a point */
    sw_stepper_flag *flags;  /* flagged readings found by the last advance */
    size_t n_flags, cap_flags;
    int list_changes;        /* sw_stepper_list_changes() was called */
    sw_state_change *changes; /* state changes booked by the last advance */
    size_t n_changes, cap_changes;
};

/* An advance returns early, passing no point, once it has found this many
 * flagged readings, so that they never pile up (a file whose every value
 * is out of range is read in one go otherwise). */
#define FLAGS_BATCH 1024

/* ---- small containers --------------------------------------------------- */

/* Double the ring's capacity: the rare half of ring_push(), kept out of
 * line so that the common half stays small enough to be inlined. */
static int ring_grow(ring *q)
#if defined(__GNUC__)
    __attribute__((noinline))
#endif
    ;

static int ring_grow(ring *q)
{
    size_t cap = q->cap ? 2 * q->cap : 64;
    sample *items = malloc(cap * sizeof *items);
    if (items == NULL)
        return -1;
    for (size_t i = 0; i < q->count; i++)
        items[i] = q->items[(q->head + i) & (q->cap - 1)];
    free(q->items);
    q->items = items;
    q->head = 0;
    q->cap = cap;
    return 0;
}

static inline int ring_push(ring *q, sample s)
{
    if (q->count == q->cap && ring_grow(q) != 0)
        return -1;
    q->items[(q->head + q->count) & (q->cap - 1)] = s;
    q->count++;
    return 0;
}

static const sample *ring_at(const ring *q, size_t i)
{
    return &q->items[(q->head + i) & (q->cap - 1)];
}

static sample ring_pop(ring *q)
{
    sample s = q->items[q->head];
    q->head = (q->head + 1) & (q->cap - 1);
    q->count--;
    return s;
}

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory while stepping through the levels");
}

static int push_event(sw_stepper *st, const sw_event *ev, sw_error *err)
{
    if (st->n_events == st->cap_events) {
        size_t cap = st->cap_events ? 2 * st->cap_events : 16;
        sw_event *grown = realloc(st->events, cap * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        st->events = grown;
        st->cap_events = cap;
    }
    st->events[st->n_events++] = *ev;
    return SW_OK;
}

/* ---- setup -------------------------------------------------------------- */

/* The site's series sorted by name (then place): each gate finds its
 * series in log n steps (a search through the list for every gate was
 * quadratic in the gates of an expanded ensemble). */
typedef struct named {
    const char *name;
    size_t i;
} named;

static int cmp_named(const void *x, const void *y)
{
    const named *a = x, *b = y;
    int c = strcmp(a->name, b->name);
    return c != 0 ? c : (a->i > b->i) - (a->i < b->i);
}

/* The site's series sorted by name; NULL when out of memory. */
static named *sort_names(const sw_site *site)
{
    named *sorted = malloc((site->n_series ? site->n_series : 1) *
                           sizeof *sorted);
    if (sorted == NULL)
        return NULL;
    for (size_t i = 0; i < site->n_series; i++) {
        sorted[i].name = site->series[i].name;
        sorted[i].i = i;
    }
    qsort(sorted, site->n_series, sizeof *sorted, cmp_named);
    return sorted;
}

/* As sw_site_find_series(): the first series called `name`, or NULL. */
static const sw_site_series *find_series(const sw_site *site,
                                         const named *sorted,
                                         const char *name)
{
    size_t lo = 0, hi = site->n_series;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (strcmp(sorted[mid].name, name) < 0)
            lo = mid + 1;
        else
            hi = mid;
    }
    if (lo < site->n_series && strcmp(sorted[lo].name, name) == 0)
        return &site->series[sorted[lo].i];
    return NULL;
}

/* The index of series `def` (one of the site's) in use, adding it (and
 * its reader) if new; in_use[i] is the index + 1 of the site's series i,
 * 0 while unused.  Every series of one file shares one reader, whatever
 * their number (the reader sizes its columns when it opens), so a file is
 * parsed once.  Returns 0, or -1 when out of memory. */
static int use_series(sw_stepper *st, const sw_site_series *def,
                      size_t *in_use, size_t *index)
{
    size_t *slot = &in_use[def - st->site->series];
    if (*slot != 0) {
        *index = *slot - 1;
        return 0;
    }
    size_t r;
    for (r = 0; r < st->n_readers; r++)
        if (sw_site_series_same_reader(st->readers[r].first, def))
            break;
    reader_state *rs = &st->readers[r];
    if (rs->n_cols == rs->cap_cols) {
        size_t cap = rs->cap_cols ? 2 * rs->cap_cols : 4;
        size_t *grown = realloc(rs->series_of, cap * sizeof *grown);
        if (grown == NULL)
            return -1;
        rs->series_of = grown;
        rs->cap_cols = cap;
    }
    if (r == st->n_readers) {
        rs->first = def;
        st->n_readers++;
    }
    series_state *s = &st->series[st->n_series];
    s->def = def;
    s->reader = r;
    s->column = rs->n_cols;
    rs->series_of[rs->n_cols++] = st->n_series;
    *index = st->n_series++;
    *slot = st->n_series;
    return 0;
}

/* The worker: read records into free batches until the file ends, an
 * error comes, or the stepper stops it. */
static void *read_ahead(void *arg)
{
    reader_state *rs = arg;
    size_t tail = 0;

    for (;;) {
        pthread_mutex_lock(&rs->mu);
        while (rs->count == N_BATCHES && !rs->stop)
            pthread_cond_wait(&rs->cv, &rs->mu);
        int stop = rs->stop;
        pthread_mutex_unlock(&rs->mu);
        if (stop)
            return NULL;

        batch *bt = &rs->b[tail];
        bt->eof = 0;
        bt->status = sw_reader_next_rows_at(rs->rd, rs->batch_rows, bt->t,
                                            bt->line, bt->v, &bt->n,
                                            &bt->err);
        if (bt->status == SW_OK && bt->n < rs->batch_rows) {
            /* a short batch: the file ends after it, or an error follows
             * it, which this call returns */
            size_t none;
            bt->status = sw_reader_next_rows_at(rs->rd, 1, &bt->t[bt->n],
                                                &bt->line[bt->n],
                                                &bt->v[bt->n * rs->n_cols],
                                                &none, &bt->err);
        }
        if (bt->status != SW_OK || bt->n < rs->batch_rows)
            bt->eof = 1;
        pthread_mutex_lock(&rs->mu);
        rs->count++;
        pthread_cond_signal(&rs->cv);
        pthread_mutex_unlock(&rs->mu);
        if (bt->eof)
            return NULL;
        tail = (tail + 1) % N_BATCHES;
    }
}

/* Hold the reader's next record (or none at the end). */
static inline int read_record(reader_state *rs, sw_error *err)
{
    for (;;) {
        if (rs->taken) {
            batch *bt = &rs->b[rs->head];
            if (rs->pos < bt->n) {
                rs->t = bt->t[rs->pos];
                rs->line = bt->line[rs->pos];
                rs->v = &bt->v[rs->pos * rs->n_cols];
                rs->pos++;
                rs->pending = 1;
                return SW_OK;
            }
            if (bt->eof) {
                rs->pending = 0;
                if (bt->status != SW_OK) {
                    *err = bt->err;
                    return bt->status;
                }
                return SW_OK;
            }
            /* give the drained batch back */
            pthread_mutex_lock(&rs->mu);
            rs->count--;
            pthread_cond_signal(&rs->cv);
            pthread_mutex_unlock(&rs->mu);
            rs->head = (rs->head + 1) % N_BATCHES;
            rs->taken = 0;
        }
        /* wait for the next batch, looking at the stop request every
         * SW_CANCEL_POLL_MS (the reader may wait on a silent FIFO) */
        pthread_mutex_lock(&rs->mu);
        while (rs->count == 0) {
            struct timespec until;
            if (sw_cancel_requested()) {
                pthread_mutex_unlock(&rs->mu);
                return sw_cancel_check(err);
            }
            clock_gettime(CLOCK_REALTIME, &until);
            until.tv_nsec += SW_CANCEL_POLL_MS * 1000000L;
            if (until.tv_nsec >= 1000000000L) {
                until.tv_sec++;
                until.tv_nsec -= 1000000000L;
            }
            pthread_cond_timedwait(&rs->cv, &rs->mu, &until);
        }
        pthread_mutex_unlock(&rs->mu);
        rs->taken = 1;
        rs->pos = 0;
    }
}

static int start_read_ahead(reader_state *rs, sw_error *err)
{
    size_t row_bytes =
        sizeof(sw_time_ms) + sizeof(long) + rs->n_cols * sizeof(double);
    /* a wide file (an ensemble of many members) gets fewer rows a batch,
     * so that the ring stays about RING_BYTES whatever the columns */
    rs->batch_rows = RING_BYTES / N_BATCHES / row_bytes;
    if (rs->batch_rows < 1)
        rs->batch_rows = 1;
    for (int i = 0; i < N_BATCHES; i++) {
        rs->b[i].t = malloc(rs->batch_rows * sizeof *rs->b[i].t);
        rs->b[i].line = malloc(rs->batch_rows * sizeof *rs->b[i].line);
        rs->b[i].v = malloc(rs->batch_rows * rs->n_cols * sizeof *rs->b[i].v);
        if (rs->b[i].t == NULL || rs->b[i].v == NULL || rs->b[i].line == NULL)
            return nomem(err);
    }
    if (pthread_mutex_init(&rs->mu, NULL) != 0)
        return nomem(err);
    if (pthread_cond_init(&rs->cv, NULL) != 0) {
        pthread_mutex_destroy(&rs->mu);
        return nomem(err);
    }
    /* the reading thread never takes SIGINT or SIGTERM: they go to the
     * calling thread, whose blocking calls (opening a FIFO) they end */
    if (sw_thread_start(&rs->thread, read_ahead, rs) != 0) {
        pthread_cond_destroy(&rs->cv);
        pthread_mutex_destroy(&rs->mu);
        return sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                            "cannot start the reading thread");
    }
    rs->threaded = 1;
    return SW_OK;
}

static void stop_read_ahead(reader_state *rs)
{
    if (rs->threaded) {
        pthread_mutex_lock(&rs->mu);
        rs->stop = 1;
        pthread_cond_broadcast(&rs->cv);
        pthread_mutex_unlock(&rs->mu);
        pthread_join(rs->thread, NULL);
        pthread_cond_destroy(&rs->cv);
        pthread_mutex_destroy(&rs->mu);
        rs->threaded = 0;
    }
    for (int i = 0; i < N_BATCHES; i++) {
        free(rs->b[i].t);
        free(rs->b[i].line);
        free(rs->b[i].v);
        rs->b[i].t = NULL;
        rs->b[i].line = NULL;
        rs->b[i].v = NULL;
    }
}

static int open_readers(sw_stepper *st, sw_error *err)
{
    for (size_t r = 0; r < st->n_readers; r++) {
        reader_state *rs = &st->readers[r];
        sw_column_config *cols =
            calloc(rs->n_cols ? rs->n_cols : 1, sizeof *cols);
        sw_reader_config cfg;
        if (cols == NULL)
            return nomem(err);
        cfg.path = rs->first->path;
        cfg.time_column = rs->first->time_column;
        cfg.time_format = rs->first->time_format;
        cfg.delimiter = rs->first->delimiter;
        cfg.netcdf = rs->first->netcdf;
        cfg.station = rs->first->station;
        cfg.member_dim = rs->first->member_dim;
        cfg.zone = st->site->zone;
        for (size_t c = 0; c < rs->n_cols; c++) {
            const sw_site_series *d = st->series[rs->series_of[c]].def;
            cols[c].name = d->value_column;
            cols[c].scale = d->scale;
            cols[c].offset_m = d->offset_m;
            cols[c].n_missing = d->n_missing;
            for (size_t k = 0; k < d->n_missing; k++)
                cols[c].missing[k] = d->missing[k];
        }
        int rc = sw_reader_open(&rs->rd, &cfg, cols, rs->n_cols, err);
        free(cols);
        if (rc != SW_OK)
            return rc;
        if ((rc = start_read_ahead(rs, err)) != SW_OK)
            return rc;
        if ((rc = read_record(rs, err)) != SW_OK)
            return rc;
    }
    return SW_OK;
}

/* A gate's state before its first interval. */
static void init_gate(gate_state *g, const sw_gate *gate)
{
    g->gate = gate;
    sw_gate_get_bounds(g->gate, &g->bounds);
    g->rate_hw = g->gate->rho_kgm3[SW_UPSTREAM] * g->gate->g_ms2 *
                 g->gate->first_moment_m3;
    g->rate_tw = g->gate->fs_basis == SW_FS_NET
                     ? g->gate->rho_kgm3[SW_DOWNSTREAM] * g->gate->g_ms2 *
                           g->gate->first_moment_m3
                     : 0.0;
    g->run.min_fs = INFINITY;
    g->month.min_fs = INFINITY;
    g->booked = SW_STATE_UNKNOWN;
}

int sw_stepper_alloc(sw_stepper **out, const sw_site *site,
                     const sw_stepper_options *opt, sw_error *err)
{
    sw_stepper *st = calloc(1, sizeof *st);
    named *sorted = sort_names(site);
    size_t *in_use = calloc(site->n_series ? site->n_series : 1,
                            sizeof *in_use);
    int rc = SW_OK;

    *out = NULL;
    if (st == NULL || sorted == NULL || in_use == NULL) {
        free(st);
        free(sorted);
        free(in_use);
        return nomem(err);
    }
    st->site = site;
    if (opt != NULL)
        st->opt = *opt;
    st->n_gates = site->n_gates;
    st->gates = calloc(site->n_gates ? site->n_gates : 1, sizeof *st->gates);
    st->series = calloc(2 * site->n_gates + 1, sizeof *st->series);
    st->readers = calloc(2 * site->n_gates + 1, sizeof *st->readers);
    if (st->gates == NULL || st->series == NULL || st->readers == NULL) {
        rc = nomem(err);
        goto cleanup;
    }
    for (size_t i = 0; i < site->n_gates; i++) {
        const sw_site_gate *sg = &site->gates[i];
        gate_state *g = &st->gates[i];
        const sw_site_series *h = find_series(site, sorted, sg->headwater);
        const sw_site_series *t = find_series(site, sorted, sg->tailwater);
        if (h == NULL || t == NULL) {
            rc = sw_error_set(err, SW_ESITE, site->path, sg->line, 0,
                              "gate '%s' has no %s series: give it "
                              "'headwater = NAME' and 'tailwater = NAME' "
                              "naming [series NAME] sections",
                              sg->gate.name,
                              h == NULL ? "headwater" : "tailwater");
            goto cleanup;
        }
        if (use_series(st, h, in_use, &g->hw) != 0 ||
            use_series(st, t, in_use, &g->tw) != 0) {
            rc = nomem(err);
            goto cleanup;
        }
        init_gate(g, &sg->gate);
        if (st->opt.memo_loads) {
            if ((g->memo = malloc(sizeof *g->memo)) == NULL) {
                rc = nomem(err);
                goto cleanup;
            }
            sw_load_memo_clear(g->memo);
        }
    }
    for (size_t i = 0; i < st->n_series; i++) {
        series_state *s = &st->series[i];
        sw_qc_config qc = s->def->qc;
        s->lo = INFINITY;
        s->hi = -INFINITY;
        qc.max_gap_ms = site->max_gap_ms;
        if (!sw_qc_active(&qc))
            continue;
        if ((rc = sw_qc_alloc(&s->qc, &qc, err)) != SW_OK)
            goto cleanup;
        st->any_qc = 1;
    }
    if ((rc = open_readers(st, err)) != SW_OK)
        goto cleanup;
    free(sorted);
    free(in_use);
    *out = st;
    return SW_OK;
cleanup:
    free(sorted);
    free(in_use);
    sw_stepper_free(st);
    return rc;
}

void sw_stepper_free(sw_stepper *st)
{
    if (st == NULL)
        return;
    for (size_t r = 0; r < st->n_readers; r++) {
        stop_read_ahead(&st->readers[r]);
        sw_reader_free(st->readers[r].rd);
        free(st->readers[r].series_of);
    }
    for (size_t i = 0; i < st->n_series; i++) {
        free(st->series[i].fifo.items);
        sw_qc_free(st->series[i].qc);
    }
    free(st->flags);
    free(st->changes);
    free(st->timeline.items);
    free(st->readers);
    free(st->series);
    for (size_t g = 0; st->gates != NULL && g < st->n_gates; g++)
        free(st->gates[g].memo);
    free(st->gates);
    free(st->events);
    free(st->months);
    free(st);
}

/* ---- reading ------------------------------------------------------------ */

/* Count a gap before a valid sample at t of series s. */
static void count_gap(const sw_stepper *st, series_state *s, sw_time_ms t)
{
    if (s->have_last && t - s->last_t > st->site->max_gap_ms) {
        sw_time_ms gap = t - s->last_t;
        s->gaps.gaps++;
        s->gaps.total += gap;
        if (gap > s->gaps.longest) {
            s->gaps.longest = gap;
            s->gaps.longest_start = s->last_t;
        }
    }
    s->have_before_last = s->have_last;
    s->before_last_t = s->last_t;
    s->have_last = 1;
    s->last_t = t;
}

/* Add t to the timeline.  Times come in order, but for readings that
 * their quality tests held back (one reading, for at most max_gap), which
 * may come after later readings of other series: those are put in order
 * (never before the timeline's first point, see sw_stepper_advance). */
static int timeline_insert(sw_stepper *st, sw_time_ms t, sw_error *err)
#if defined(__GNUC__)
    __attribute__((noinline))
#endif
    ;

static inline int timeline_add(sw_stepper *st, sw_time_ms t, sw_error *err)
{
    ring *tl = &st->timeline;

    /* the usual case: a later time (so the latest of the run) */
    if (tl->count > 0 && ring_at(tl, tl->count - 1)->t < t) {
        if (ring_push(tl, (sample){t, 0.0}) != 0)
            return nomem(err);
        st->span_end = t;
        return SW_OK;
    }
    return timeline_insert(st, t, err);
}

/* The rest of timeline_add(): the first point, an equal time, or a time
 * to put in order. */
static int timeline_insert(sw_stepper *st, sw_time_ms t, sw_error *err)
{
    ring *tl = &st->timeline;

    if (tl->count == 0 || ring_at(tl, tl->count - 1)->t < t) {
        if (ring_push(tl, (sample){t, 0.0}) != 0)
            return nomem(err);
    } else if (ring_at(tl, tl->count - 1)->t != t) {
        size_t i = tl->count;
        while (i > 0 && ring_at(tl, i - 1)->t > t)
            i--;
        if (i > 0 && ring_at(tl, i - 1)->t == t)
            return SW_OK;
        if (ring_push(tl, (sample){t, 0.0}) != 0)
            return nomem(err);
        for (size_t k = tl->count - 1; k > i; k--)
            tl->items[(tl->head + k) & (tl->cap - 1)] = *ring_at(tl, k - 1);
        tl->items[(tl->head + i) & (tl->cap - 1)] = (sample){t, 0.0};
    }
    if (!st->started) {
        st->started = 1;
        st->span_start = st->span_end = t;
    } else if (t < st->span_start) {
        st->span_start = t;
    } else if (t > st->span_end) {
        st->span_end = t;
    }
    return SW_OK;
}

static int push_flag(sw_stepper *st, size_t series, const sw_qc_reading *r,
                     sw_error *err)
{
    if (st->n_flags == st->cap_flags) {
        size_t cap = st->cap_flags ? 2 * st->cap_flags : 64;
        sw_stepper_flag *grown = realloc(st->flags, cap * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        st->flags = grown;
        st->cap_flags = cap;
    }
    st->flags[st->n_flags].series = series;
    st->flags[st->n_flags].reading = *r;
    st->n_flags++;
    return SW_OK;
}

/* A reading of a series with quality tests, judged: into the FIFO and the
 * timeline when it passed, else counted and listed as flagged (removed
 * like a missing reading). */
static int take_verdict(sw_stepper *st, series_state *s,
                        const sw_qc_reading *r, sw_error *err)
{
    if (r->test != SW_QC_PASS) {
        sw_qc_count(&s->qstats, r);
        return push_flag(st, (size_t)(s - st->series), r, err);
    }
    count_gap(st, s, r->t);
    if (r->v_m < s->lo)
        s->lo = r->v_m;
    if (r->v_m > s->hi)
        s->hi = r->v_m;
    if (ring_push(&s->fifo, (sample){r->t, r->v_m}) != 0)
        return nomem(err);
    return timeline_add(st, r->t, err);
}

/* After reader rs moved on: release the readings its series' tests hold
 * that no later reading can be a neighbour of any more. */
static int release_held(sw_stepper *st, const reader_state *rs, sw_error *err)
{
    for (size_t c = 0; c < rs->n_cols; c++) {
        series_state *s = &st->series[rs->series_of[c]];
        sw_qc_reading out;
        int rc;
        if (s->qc == NULL)
            continue;
        if ((rs->pending ? sw_qc_expire(s->qc, rs->t, &out)
                         : sw_qc_flush(s->qc, &out)) &&
            (rc = take_verdict(st, s, &out, err)) != SW_OK)
            return rc;
    }
    return SW_OK;
}

/* Take the earliest held record into the FIFOs and read the next one from
 * its file.  Returns SW_OK, or an error; sets *none when every file is
 * done. */
static int take_record(sw_stepper *st, int *none, sw_error *err)
{
    reader_state *best = NULL;
    int any_valid = 0, rc;

    for (size_t r = 0; r < st->n_readers; r++) {
        reader_state *rs = &st->readers[r];
        if (rs->pending && (best == NULL || rs->t < best->t))
            best = rs;
    }
    *none = best == NULL;
    if (best == NULL)
        return SW_OK;
    for (size_t c = 0; c < best->n_cols; c++) {
        series_state *s = &st->series[best->series_of[c]];
        double v = best->v[c];
        if (isnan(v))
            continue;
        if (s->qc != NULL) {
            sw_qc_reading in = {best->t, v, best->line, SW_QC_PASS}, out;
            if (sw_qc_push(s->qc, &in, &out) &&
                (rc = take_verdict(st, s, &out, err)) != SW_OK)
                return rc;
            continue;
        }
        any_valid = 1;
        count_gap(st, s, best->t);
        if (v < s->lo)
            s->lo = v;
        if (v > s->hi)
            s->hi = v;
        if (ring_push(&s->fifo, (sample){best->t, v}) != 0)
            return nomem(err);
    }
    if (any_valid && (rc = timeline_add(st, best->t, err)) != SW_OK)
        return rc;
    if ((rc = read_record(best, err)) != SW_OK)
        return rc;
    return st->any_qc ? release_held(st, best, err) : SW_OK;
}

/* Does a series hold back, for its tests, a reading at or before t? */
static int held_until(const sw_stepper *st, sw_time_ms t)
{
    for (size_t i = 0; i < st->n_series; i++) {
        sw_time_ms th;
        if (st->series[i].qc != NULL && sw_qc_held(st->series[i].qc, &th) &&
            th <= t)
            return 1;
    }
    return 0;
}

/* Is series `s` settled for the interval [t0, t1]: is its next valid
 * sample known, or known not to come within max_gap?  On return, *known
 * says whether its level is known (linear) over the interval. */
static int series_settled(const sw_stepper *st, series_state *s,
                          sw_time_ms t0, int *known)
{
    const reader_state *rs = &st->readers[s->reader];

    while (s->fifo.count > 0 && ring_at(&s->fifo, 0)->t <= t0) {
        s->prev = ring_pop(&s->fifo);
        s->have_prev = 1;
    }
    *known = 0;
    if (!s->have_prev)
        return 1;
    if (s->fifo.count > 0) {
        *known = ring_at(&s->fifo, 0)->t - s->prev.t <= st->site->max_gap_ms;
        return 1;
    }
    /* a reading held back by the tests: settled if it is too far */
    sw_time_ms th;
    if (s->qc != NULL && sw_qc_held(s->qc, &th))
        return th - s->prev.t > st->site->max_gap_ms;
    /* nothing read yet: settled if its file is done or already past the
     * reach of max_gap */
    return !rs->pending || rs->t - s->prev.t > st->site->max_gap_ms;
}

/* The level of a settled, known series at t (prev.t <= t <= next.t). */
static double level_at(series_state *s, sw_time_ms t)
{
    const sample *n = ring_at(&s->fifo, 0);
    double v;
    /* a level at an instant is the same whichever bracket gives it, so the
     * memo stays right across brackets */
    if (s->memo_set && s->memo_t == t)
        return s->memo_v;
    if (t <= s->prev.t)
        v = s->prev.v;
    else if (t >= n->t)
        v = n->v;
    else
        v = s->prev.v + (n->v - s->prev.v) *
                            ((double)(t - s->prev.t) / (double)(n->t - s->prev.t));
    s->memo_set = 1;
    s->memo_t = t;
    s->memo_v = v;
    return v;
}

/* ---- evaluation and accounting ------------------------------------------ */

static void evaluate(sw_stepper *st, gate_state *g, sw_time_ms t, double hw,
                     double tw, point *p)
{
    p->t = t;
    sw_gate_evaluate_memo(g->gate, g->memo, hw, tw, &p->r);
    sw_gate_margins(g->gate, &p->r, p->m);
    p->state = (int)p->r.state;
    st->evaluations++;
    if (p->r.fs < g->run.min_fs) {
        g->run.min_fs = p->r.fs;
        g->run.min_fs_t = t;
    }
    if (p->r.fs < g->month.min_fs) {
        g->month.min_fs = p->r.fs;
        g->month.min_fs_t = t;
    }
}

static void close_event(sw_stepper *st, gate_state *g, sw_time_ms end,
                        sw_event_end why, sw_error *err, int *rc)
{
    if (!g->in_event)
        return;
    g->in_event = 0;
    g->ev.end = end;
    g->ev.ends = why;
    if (end - g->ev.start > g->run.longest_event)
        g->run.longest_event = end - g->ev.start;
    if (*rc == SW_OK)
        *rc = push_event(st, &g->ev, err);
}

static void event_point(gate_state *g, const point *p)
{
    if (p == NULL)
        return;
    if (p->r.fs < g->ev.min_fs || isnan(g->ev.min_fs)) {
        g->ev.min_fs = p->r.fs;
        g->ev.min_fs_t = p->t;
        g->ev.hw_at_min_m = p->r.headwater_m;
        g->ev.tw_at_min_m = p->r.tailwater_m;
    }
}

/* Close the gate's current month at `end` as a row of output. */
static int emit_month(sw_stepper *st, gate_state *g, size_t gi, sw_time_ms end,
                      sw_error *err)
{
    if (st->n_months == st->cap_months) {
        size_t cap = st->cap_months ? 2 * st->cap_months : 16;
        sw_month_row *grown = realloc(st->months, cap * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        st->months = grown;
        st->cap_months = cap;
    }
    sw_month_row *row = &st->months[st->n_months++];
    row->gate = gi;
    row->yyyymm = g->month_yyyymm;
    row->start =
        g->month_start > st->span_start ? g->month_start : st->span_start;
    row->end = end;
    row->tally = g->month;
    memset(&g->month, 0, sizeof g->month);
    g->month.min_fs = INFINITY;
    return SW_OK;
}

/* Make the gate's current month the one holding `t`, closing the months
 * before it (those without data too). */
static int roll_month(sw_stepper *st, gate_state *g, size_t gi, sw_time_ms t,
                      sw_error *err)
{
    int rc;
    if (!g->month_open) {
        sw_month_bounds(t, st->site->zone, &g->month_start, &g->month_next,
                        &g->month_yyyymm);
        g->month_open = 1;
        return SW_OK;
    }
    while (t >= g->month_next) {
        if ((rc = sw_cancel_check(err)) != SW_OK ||
            (rc = emit_month(st, g, gi, g->month_next, err)) != SW_OK)
            return rc;
        sw_month_bounds(g->month_next, st->site->zone, &g->month_start,
                        &g->month_next, &g->month_yyyymm);
    }
    return SW_OK;
}

/* List a change of gate g's booking to `state` at a, with the levels
 * and the factor of safety there (pa: the point evaluated at a, if any). */
static int push_change(sw_stepper *st, gate_state *g, sw_time_ms a,
                       int state, const point *pa, sw_error *err)
{
    sw_state_change c = {(size_t)(g - st->gates), a, g->booked, state, NAN,
                         NAN, NAN};
    if (st->n_changes == st->cap_changes) {
        size_t cap = st->cap_changes ? 2 * st->cap_changes : 16;
        sw_state_change *grown = realloc(st->changes, cap * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        st->changes = grown;
        st->cap_changes = cap;
    }
    if (state != SW_STATE_UNKNOWN) {
        sw_gate_result r;
        if (pa != NULL && pa->t == a) {
            r = pa->r;
        } else { /* inside the interval being settled: levels are linear */
            double hw = level_at(&st->series[g->hw], a);
            double tw = level_at(&st->series[g->tw], a);
            sw_gate_evaluate_memo(g->gate, g->memo, hw, tw, &r);
        }
        c.hw_m = r.headwater_m;
        c.tw_m = r.tailwater_m;
        c.fs = r.fs;
    }
    st->changes[st->n_changes++] = c;
    return SW_OK;
}

/* Book [a, b) in state `state` (SW_STATE_UNKNOWN for no data); pa and pb
 * are the evaluated ends (NULL when unknown). */
static int account(sw_stepper *st, gate_state *g, sw_time_ms a, sw_time_ms b,
                   int state, const point *pa, const point *pb, sw_error *err)
{
    sw_time_ms d = b - a;
    int rc = SW_OK;

    if (d > 0 && state != g->booked) {
        if (st->list_changes &&
            (rc = push_change(st, g, a, state, pa, err)) != SW_OK)
            return rc;
        g->booked = state;
    }
    if (state == SW_STATE_UNKNOWN) {
        g->run.not_evaluated += d;
        g->month.not_evaluated += d;
        close_event(st, g, a, SW_END_GAP, err, &rc);
        return rc;
    }
    g->run.evaluated += d;
    g->month.evaluated += d;
    if (state == SW_STATE_OK) {
        close_event(st, g, a, SW_END_RECOVERED, err, &rc);
        return rc;
    }
    if (!g->run.below_seen) {
        g->run.below_seen = 1;
        g->run.first_below = a;
    }
    if (state == SW_STATE_LOW) {
        g->run.low += d;
        g->month.low += d;
    } else {
        g->run.open += d;
        g->month.open += d;
        if (!g->run.open_seen) {
            g->run.open_seen = 1;
            g->run.first_open = a;
        }
    }
    if (!g->in_event) {
        g->in_event = 1;
        memset(&g->ev, 0, sizeof g->ev);
        g->ev.gate = (size_t)(g - st->gates);
        g->ev.start = a;
        g->ev.worst = (sw_state)state;
        g->ev.min_fs = NAN;
        g->run.events++;
        g->month.events++;
    }
    if (state > (int)g->ev.worst)
        g->ev.worst = (sw_state)state;
    event_point(g, pa);
    event_point(g, pb);
    return rc;
}

/* How far, at most, a margin strays from the straight line between its
 * values at a and b (see the notes at the top). */
static void stray(const gate_state *g, const point *a, const point *b,
                  double e[SW_N_MARGINS])
{
    const sw_gate_bounds *k = &g->bounds;
    double dh = b->r.headwater_m - a->r.headwater_m;
    double dt = b->r.tailwater_m - a->r.tailwater_m;
    double kink = 0.0;
    /* the water holding the buoyancy (the same at both ends here) */
    int up = a->r.buoyancy_side == SW_UPSTREAM;
    double za = up ? a->r.headwater_m : a->r.tailwater_m;
    double zb = up ? b->r.headwater_m : b->r.tailwater_m;
    if ((za - k->kink_level_m) * (zb - k->kink_level_m) <= 0.0)
        kink = k->kink * fabs(zb - za) / 4.0;
    /* the net moment's margins (0 and 2) and the required-margin test's
     * (1), which on the net basis bends more with the tailwater */
    e[0] = e[2] = (k->curv_hw * dh * dh + k->curv_tw_net * dt * dt) / 8.0 +
                  kink;
    e[1] = (k->curv_hw * dh * dh + k->curv_tw * dt * dt) / 8.0 + kink;
}

/* Does the buoyancy change water inside [a, b]?  (a jump in the margins) */
static int side_changes(const point *a, const point *b)
{
    double da = a->r.headwater_m - a->r.tailwater_m;
    double db = b->r.headwater_m - b->r.tailwater_m;
    return a->r.buoyancy_side != b->r.buoyancy_side ||
           (da == 0.0) != (db == 0.0);
}

/* The worst state the margins can take where the uncertain ones (bit k of
 * `unsure`) may have either sign and the others the sign of line[k]. */
static int worst_state(const double line[SW_N_MARGINS], unsigned unsure)
{
    double m[SW_N_MARGINS];
    for (int k = 0; k < SW_N_MARGINS; k++)
        m[k] = (unsure & (1u << k)) ? -1.0 : line[k];
    return (int)sw_gate_state_of(m);
}

/* Try to settle [a, b] without evaluating inside it.  Returns 0 if it
 * needs halving; else books it (status in *rc) and returns 1. */
static int settle_piece(sw_stepper *st, gate_state *g, const point *a,
                        const point *b, int *rc, sw_error *err)
{
    double span = (double)(b->t - a->t);
    double e[SW_N_MARGINS], z0[SW_N_MARGINS], z1[SW_N_MARGINS];
    sw_time_ms cuts[2 * SW_N_MARGINS + 1];
    size_t n_cuts = 0;

    *rc = SW_OK;
    if (b->t - a->t <= RESOLUTION_MS) {
        int state = a->state > b->state ? a->state : b->state;
        *rc = account(st, g, a->t, b->t, state, a, b, err);
        return 1;
    }
    if (side_changes(a, b))
        return 0;
    stray(g, a, b, e);
    for (int k = 0; k < SW_N_MARGINS; k++) {
        double fa = a->m[k], fb = b->m[k], ek = e[k];
        z0[k] = z1[k] = -1.0; /* no uncertain stretch (fractions of span) */
        if ((fa > ek && fb > ek) || (fa < -ek && fb < -ek))
            continue;
        if (!((fa > ek && fb < -ek) || (fa < -ek && fb > ek)))
            return 0; /* near zero at an end: look closer */
        /* the line is within ek of zero for fractions in [z0, z1] */
        double u0 = (fa - ek) / (fa - fb), u1 = (fa + ek) / (fa - fb);
        z0[k] = fmin(u0, u1);
        z1[k] = fmax(u0, u1);
        if ((z1[k] - z0[k]) * span > (double)RESOLUTION_MS)
            return 0;
        cuts[n_cuts++] = a->t + (sw_time_ms)floor(z0[k] * span);
        cuts[n_cuts++] = a->t + (sw_time_ms)ceil(z1[k] * span);
    }
    if (n_cuts == 0) /* every margin keeps its sign: the usual case */
        return *rc = account(st, g, a->t, b->t, a->state, a, b, err), 1;
    /* sort the cuts (a handful) and book each stretch between them */
    cuts[n_cuts++] = b->t;
    for (size_t i = 1; i < n_cuts; i++)
        for (size_t j = i; j > 0 && cuts[j] < cuts[j - 1]; j--) {
            sw_time_ms tmp = cuts[j];
            cuts[j] = cuts[j - 1];
            cuts[j - 1] = tmp;
        }
    sw_time_ms from = a->t;
    for (size_t i = 0; i < n_cuts && *rc == SW_OK; i++) {
        sw_time_ms to = cuts[i] > b->t ? b->t : cuts[i];
        if (to <= from)
            continue;
        double mid = ((double)(from - a->t) + (double)(to - a->t)) / 2.0 / span;
        double line[SW_N_MARGINS];
        unsigned unsure = 0;
        for (int k = 0; k < SW_N_MARGINS; k++) {
            line[k] = a->m[k] + (b->m[k] - a->m[k]) * mid;
            /* a stretch touching the uncertain zone may hold either sign */
            double lo = (double)(from - a->t) / span;
            double hi = (double)(to - a->t) / span;
            if (z1[k] >= 0.0 && hi > z0[k] && lo < z1[k])
                unsure |= 1u << k;
        }
        *rc = account(st, g, from, to, worst_state(line, unsure),
                      from == a->t ? a : NULL, to == b->t ? b : NULL, err);
        from = to;
    }
    return 1;
}

/* Settle [A, B], halving where needed, booking each piece in order. */
static int settle(sw_stepper *st, gate_state *g, const point *A,
                  const point *B, sw_error *err)
{
    point stack[MAX_DEPTH];
    size_t top = 0;
    point cur;
    int rc = SW_OK;
    double t0 = (double)A->t, span = (double)(B->t - A->t);

    /* most pieces settle at once: no copies then */
    if (settle_piece(st, g, A, B, &rc, err))
        return rc;
    cur = *A;
    stack[top++] = *B;
    while (top > 0) {
        const point *nx = &stack[top - 1];
        if (top == MAX_DEPTH) /* never: halving 2^63 ms takes 63 levels */
            rc = account(st, g, cur.t, nx->t,
                         cur.state > nx->state ? cur.state : nx->state,
                         &cur, nx, err);
        if (top == MAX_DEPTH || settle_piece(st, g, &cur, nx, &rc, err)) {
            if (rc != SW_OK)
                return rc;
            cur = *nx;
            top--;
            continue;
        }
        sw_time_ms d = nx->t - cur.t, cut[2];
        int n_cut = 1;
        if (side_changes(&cur, nx) && d > 2 && top + 2 < MAX_DEPTH) {
            /* the levels cross at a time we can solve for: cut the piece
             * there, leaving a millisecond across the jump */
            double da = cur.r.headwater_m - cur.r.tailwater_m;
            double db = nx->r.headwater_m - nx->r.tailwater_m;
            double u = da == db ? 0.5 : da / (da - db);
            sw_time_ms t1 = cur.t + (sw_time_ms)floor(fmin(fmax(u, 0.0), 1.0) *
                                                      (double)d);
            if (t1 >= nx->t - 1)
                t1 = nx->t - 2;
            cut[0] = t1 + 1; /* pushed first: reached second */
            cut[1] = t1 > cur.t ? t1 : cur.t + 1;
            n_cut = cut[1] < cut[0] ? 2 : 1;
        } else {
            /* halve on whole seconds, so that whole seconds stay so */
            sw_time_ms half = (d / 2000) * 1000;
            cut[0] = cur.t + (half > 0 ? half : d / 2);
        }
        for (int i = 0; i < n_cut; i++) {
            double w = ((double)cut[i] - t0) / span;
            double hw = A->r.headwater_m +
                        (B->r.headwater_m - A->r.headwater_m) * w;
            double tw = A->r.tailwater_m +
                        (B->r.tailwater_m - A->r.tailwater_m) * w;
            evaluate(st, g, cut[i], hw, tw, &stack[top++]);
        }
    }
    return SW_OK;
}

/* Book [a, b] of gate g, cut at month boundaries when asked. */
/* May the gate's evaluation at the end of a piece ending at levels
 * (hw, tw) be skipped?  Yes where the margins at the anchor, less the most
 * the levels' travel since it can change them (the slope bounds, valid
 * while the waters do not cross), stay positive, so the state is ok
 * throughout; and where the factor of safety cannot have fallen below the
 * least one recorded (fs >= required_fs + m[1] / den, with den the
 * basis's denominator, sw_gate_fs_denominator()), so that the
 * reported minima are those at every time step.  A quiet stretch then
 * costs no evaluation at all. */
static int may_skip(const sw_stepper *st, gate_state *g, double hw, double tw)
{
    const point *p = &g->pt[g->cur];
    const sw_gate_bounds *k = &g->bounds;
    double side_p = p->r.headwater_m - p->r.tailwater_m, side = hw - tw;
    double ah = fabs(hw - p->r.headwater_m), at = fabs(tw - p->r.tailwater_m);
    /* levels are never NaN here, so a comparison does what fmax does
     * (without the call, at every step) */
    double dh = g->drift_hw > ah ? g->drift_hw : ah;
    double dt = g->drift_tw > at ? g->drift_tw : at;
    double loss = k->slope_hw * dh + k->slope_tw * dt;

    if (st->opt.keep_points || p->state != SW_STATE_OK ||
        !((side_p > 0.0 && side > 0.0) || (side_p < 0.0 && side < 0.0)))
        return 0;
    for (int m = 0; m < SW_N_MARGINS; m++)
        if (!(p->m[m] - loss > 0.0))
            return 0;
    /* fs >= required_fs + (m[1] - loss) / den >= min_fs, with den the
     * most the basis's denominator (hw_moment, or D = hw_moment -
     * tw_moment) can reach since the anchor, written without the division
     * (this runs at every step); an infinite min_fs (nothing evaluated
     * yet) makes the product infinite or NaN: no skip. */
    double den = sw_gate_fs_denominator(g->gate, &p->r) + g->rate_hw * dh +
                 g->rate_tw * dt;
    double spare = p->m[1] - loss;
    if (!(spare >= (g->run.min_fs - g->gate->required_fs) * den) ||
        (st->opt.by_month &&
         !(spare >= (g->month.min_fs - g->gate->required_fs) * den)))
        return 0;
    g->drift_hw = dh;
    g->drift_tw = dt;
    return 1;
}

/* Is series s unknown because it has not begun or has ended (rather than
 * in a gap)? */
static int at_edge(const sw_stepper *st, const series_state *s)
{
    sw_time_ms th;
    if (!s->have_prev)
        return 1;
    return s->fifo.count == 0 && !st->readers[s->reader].pending &&
           !(s->qc != NULL && sw_qc_held(s->qc, &th));
}

static int book_interval(sw_stepper *st, size_t gi, sw_time_ms a,
                         sw_time_ms b, int known, sw_error *err)
{
    gate_state *g = &st->gates[gi];
    series_state *h = &st->series[g->hw];
    series_state *w = &st->series[g->tw];
    int rc;

    /* a run of known levels starts with an evaluation: the anchor */
    if (known && !g->last_known) {
        evaluate(st, g, a, level_at(h, a), level_at(w, a), &g->pt[g->cur]);
        g->drift_hw = g->drift_tw = 0.0;
    }
    g->at.known = known || (g->last_known && g->pt[g->cur].t == a);
    if (g->at.known && st->opt.keep_points)
        g->at.result = g->pt[g->cur].r;

    while (a < b) {
        sw_time_ms cut = b;
        if (st->opt.by_month) {
            if ((rc = roll_month(st, g, gi, a, err)) != SW_OK)
                return rc;
            if (g->month_next < b)
                cut = g->month_next;
        }
        if (!known) {
            if (at_edge(st, h) || at_edge(st, w))
                g->unknown_edge += cut - a;
            rc = account(st, g, a, cut, SW_STATE_UNKNOWN, NULL, NULL, err);
        } else {
            double hw = level_at(h, cut), tw = level_at(w, cut);
            if (may_skip(st, g, hw, tw)) {
                rc = account(st, g, a, cut, SW_STATE_OK, NULL, NULL, err);
            } else {
                point *A = &g->pt[g->cur], *B = &g->pt[1 - g->cur];
                if (A->t != a) /* skipped: evaluate where this piece starts */
                    evaluate(st, g, a, level_at(h, a), level_at(w, a), A);
                evaluate(st, g, cut, hw, tw, B);
                rc = settle(st, g, A, B, err);
                g->cur = 1 - g->cur;
                g->drift_hw = g->drift_tw = 0.0;
            }
        }
        if (rc != SW_OK)
            return rc;
        a = cut;
    }
    g->last_known = known;
    return SW_OK;
}

/* ---- the loop ----------------------------------------------------------- */

int sw_stepper_advance(sw_stepper *st, int *done, sw_error *err)
{
    ring *tl = &st->timeline;
    int rc, none;

    st->n_events = 0;
    st->n_months = 0;
    st->n_flags = 0;
    st->n_changes = 0;
    st->passed = 0;
    *done = 0;
    for (;;) {
        if (tl->count >= 2) {
            sw_time_ms t0 = ring_at(tl, 0)->t, t1 = ring_at(tl, 1)->t;
            /* a reading held back at or before t1 may yet add a point
             * inside the interval */
            int settled = !st->any_qc || !held_until(st, t1);
            for (size_t i = 0; i < st->n_series && settled; i++)
                settled = series_settled(st, &st->series[i], t0,
                                         &st->series[i].known);
            if (settled) {
                for (size_t gi = 0; gi < st->n_gates; gi++) {
                    const gate_state *g = &st->gates[gi];
                    int known = st->series[g->hw].known &&
                                st->series[g->tw].known;
                    if ((rc = book_interval(st, gi, t0, t1, known, err)) !=
                        SW_OK)
                        return rc;
                }
                st->now = t0;
                st->passed = 1;
                ring_pop(tl);
                return SW_OK;
            }
        }
        if (st->n_flags >= FLAGS_BATCH)
            return SW_OK; /* no point passed: hand out the flags */
        if ((rc = take_record(st, &none, err)) != SW_OK)
            return rc;
        /* with every file done, the series all settle: only a last point
         * with no interval after it can remain */
        if (none && tl->count < 2) {
            *done = 1;
            return SW_OK;
        }
    }
}

int sw_stepper_finish(sw_stepper *st, sw_error *err)
{
    int rc = SW_OK;

    st->n_events = 0;
    st->n_months = 0;
    st->n_changes = 0;
    st->now = st->span_end;
    st->passed = 1; /* the last point is exposed again */
    for (size_t gi = 0; gi < st->n_gates; gi++) {
        gate_state *g = &st->gates[gi];
        g->at.known = g->last_known && g->pt[g->cur].t == st->span_end;
        if (g->at.known && st->opt.keep_points)
            g->at.result = g->pt[g->cur].r;
        close_event(st, g, st->span_end, SW_END_SERIES_END, err, &rc);
        if (rc != SW_OK)
            return rc;
        if (st->opt.by_month && g->month_open &&
            (rc = emit_month(st, g, gi, st->span_end, err)) != SW_OK)
            return rc;
    }
    return SW_OK;
}

/* ---- accessors ---------------------------------------------------------- */

sw_time_ms sw_stepper_time(const sw_stepper *st) { return st->now; }

const sw_step_gate *sw_stepper_gate_at(const sw_stepper *st, size_t gate)
{
    return &st->gates[gate].at;
}

size_t sw_stepper_events(const sw_stepper *st, const sw_event **events)
{
    *events = st->events;
    return st->n_events;
}

size_t sw_stepper_months(const sw_stepper *st, const sw_month_row **months)
{
    *months = st->months;
    return st->n_months;
}

int sw_stepper_has_data(const sw_stepper *st) { return st->started; }

void sw_stepper_span(const sw_stepper *st, sw_time_ms *start, sw_time_ms *end)
{
    *start = st->started ? st->span_start : 0;
    *end = st->started ? st->span_end : 0;
}

const sw_tally *sw_stepper_tally(const sw_stepper *st, size_t gate)
{
    return &st->gates[gate].run;
}

sw_time_ms sw_stepper_unknown_edge(const sw_stepper *st, size_t gate)
{
    return st->gates[gate].unknown_edge;
}

size_t sw_stepper_n_series(const sw_stepper *st) { return st->n_series; }

const sw_site_series *sw_stepper_series(const sw_stepper *st, size_t i)
{
    return st->series[i].def;
}

const sw_reader_stats *sw_stepper_reader_stats(const sw_stepper *st, size_t i)
{
    return sw_reader_get_stats(st->readers[st->series[i].reader].rd);
}

const sw_column_stats *sw_stepper_column_stats(const sw_stepper *st, size_t i)
{
    return &sw_stepper_reader_stats(st, i)->column[st->series[i].column];
}

const sw_gap_stats *sw_stepper_gap_stats(const sw_stepper *st, size_t i)
{
    return &st->series[i].gaps;
}

int sw_stepper_passed(const sw_stepper *st) { return st->passed; }

void sw_stepper_list_changes(sw_stepper *st) { st->list_changes = 1; }

size_t sw_stepper_changes(const sw_stepper *st,
                          const sw_state_change **changes)
{
    *changes = st->changes;
    return st->n_changes;
}

int sw_stepper_final_until(const sw_stepper *st, sw_time_ms *t)
{
    int any = 0;
    for (size_t i = 0; i < st->n_series; i++) {
        const series_state *s = &st->series[i];
        /* the spike test may yet flag the newest reading, once the next
         * one comes: the reading before it is the last settled one */
        int spike = s->def->qc.spike_m > 0.0;
        int have = spike ? s->have_before_last : s->have_last;
        sw_time_ms ti = spike ? s->before_last_t : s->last_t;
        if (!have)
            return 0;
        if (!any || ti < *t)
            *t = ti;
        any = 1;
    }
    return any;
}

int sw_stepper_newest_reading(const sw_stepper *st, size_t i, sw_time_ms *t)
{
    if (i >= st->n_series || !st->series[i].have_last)
        return 0;
    *t = st->series[i].last_t;
    return 1;
}

int sw_stepper_no_data_error(const sw_stepper *st, sw_error *err)
{
    char msg[SW_ERROR_MSG_MAX] = "", *w = msg;
    size_t room = sizeof msg;
    const char *file = st->site->path;
    long line = 0, column = 0;

    for (size_t i = 0; i < st->n_series; i++) {
        const series_state *s = &st->series[i];
        const sw_column_stats *cs = sw_stepper_column_stats(st, i);
        char first[SW_ERROR_PATH_MAX + 2 * SW_SERIES_TOKEN_MAX + 64] = "";
        int k;
        if (s->have_last)
            continue; /* it has valid readings */
        if (cs->n_kept > 0) {
            snprintf(first, sizeof first, "; first rejected %s:%ld:%ld '%s' "
                     "(%s)", s->def->path, cs->kept[0].line,
                     cs->kept[0].column, cs->kept[0].text,
                     cs->kept[0].reason);
        } else if (s->qstats.n_kept > 0) {
            const sw_qc_reading *r = &s->qstats.kept[0];
            snprintf(first, sizeof first, "; first flagged %s:%ld:%ld: "
                     "%.4f m (%s)", s->def->path, r->line,
                     sw_reader_field(st->readers[s->reader].rd, s->column),
                     r->v_m, sw_qc_test_name(r->test));
        }
        if (line == 0 && cs->n_kept > 0) {
            file = s->def->path;
            line = cs->kept[0].line;
            column = cs->kept[0].column;
        } else if (line == 0 && s->qstats.n_kept > 0) {
            file = s->def->path;
            line = s->qstats.kept[0].line;
            column = sw_reader_field(st->readers[s->reader].rd, s->column);
        }
        long rows = sw_stepper_reader_stats(st, i)->records;
        k = snprintf(w, room, "%sseries %s (%s): %ld row%s, %ld missing, "
                     "%ld rejected, %ld flagged%s", w == msg ? "" : "; ",
                     s->def->name, s->def->path, rows, rows == 1 ? "" : "s",
                     cs->missing,
                     cs->rejected, cs->valid /* all of them flagged */,
                     first);
        if (k < 0 || (size_t)k >= room)
            break;
        w += k;
        room -= (size_t)k;
    }
    return sw_error_set(err, SW_EDATA, file, line, column,
                        "no valid reading to replay: %s", msg);
}

int sw_stepper_level_extent(const sw_stepper *st, size_t i, double *lo_m,
                            double *hi_m)
{
    *lo_m = st->series[i].lo;
    *hi_m = st->series[i].hi;
    return st->series[i].lo <= st->series[i].hi;
}

size_t sw_stepper_flags(const sw_stepper *st, const sw_stepper_flag **flags)
{
    *flags = st->flags;
    return st->n_flags;
}

const sw_qc_stats *sw_stepper_qc_stats(const sw_stepper *st, size_t i)
{
    return &st->series[i].qstats;
}

long long sw_stepper_evaluations(const sw_stepper *st)
{
    return st->evaluations;
}
