/* sillwatch: the step log written on a thread of its own (steplog.h). */
#include "sillwatch/steplog.h"

#include <stdlib.h>
#include <string.h>

#include "sillwatch/critcache.h"
#include "sillwatch/csvout.h"
#include "sillwatch/handoff.h"
#include "sillwatch/report.h"

/* Rows a batch holds, and batches in the ring (about 512 KiB in all). */
#define BATCH_ROWS 1024
#define SLOTS 8

/* A piece of a row's text and its length. */
#define GATE_TEXT (2 * SW_SITE_NAME_MAX + 3)
#define WHEN_TEXT 72
typedef struct text {
    size_t n;
    char s[SW_REPORT_LEVELS_MAX]; /* the longest: two levels */
} text;

typedef struct row {
    sw_time_ms t;
    size_t gate;
    sw_step_figures f;
} row;

typedef struct batch {
    size_t n;
    row rows[BATCH_ROWS];
} batch;

struct sw_steplog {
    const sw_site *site;
    sw_outfile *file;
    batch *slot[SLOTS];
    sw_handoff ring;        /* full batches to the log's thread */
    batch *fill;            /* the batch being filled */
    int ready;              /* the ring is set up */
    /* the formatting side's own (the log's thread, or the caller's) */
    sw_crit_cache **crit;   /* per gate */
    text *gate;             /* per gate: the name as a CSV field, "," */
    sw_time_ms when_t;      /* the time of the last row ... */
    int when_set;
    text when;              /* ... as text, "," */
    sw_time_text_memo when_memo;
    double levels_hw, levels_tw; /* the levels of the last row ... */
    int levels_set;
    text levels;            /* ... as text */
};

/* A row's longest text, which must fit the room sw_outfile_room() gives. */
_Static_assert(GATE_TEXT + WHEN_TEXT + SW_REPORT_LEVELS_MAX +
                       SW_REPORT_VALUES_MAX <=
                   SW_OUTFILE_ROOM_MAX,
               "a step row fits the room of an output file");

/* The time's text and a comma, made again only when it changes (and
 * then mostly only its time of day: sw_time_format_memo). */
static const text *when_text(sw_steplog *l, sw_time_ms t)
{
    if (!l->when_set || t != l->when_t) {
        sw_time_format_memo(&l->when_memo, t, l->site->zone);
        memcpy(l->when.s, l->when_memo.text, l->when_memo.len);
        l->when.n = l->when_memo.len;
        l->when.s[l->when.n++] = ',';
        l->when_t = t;
        l->when_set = 1;
    }
    return &l->when;
}

/* The levels' text, made again only when they change (bit for bit). */
static const text *levels_text(sw_steplog *l, const sw_step_figures *f)
{
    if (!l->levels_set ||
        memcmp(&f->headwater_m, &l->levels_hw, sizeof l->levels_hw) != 0 ||
        memcmp(&f->tailwater_m, &l->levels_tw, sizeof l->levels_tw) != 0) {
        l->levels.n = (size_t)(sw_report_levels_text(l->levels.s,
                                                     f->headwater_m,
                                                     f->tailwater_m) -
                               l->levels.s);
        l->levels_hw = f->headwater_m;
        l->levels_tw = f->tailwater_m;
        l->levels_set = 1;
    }
    return &l->levels;
}

static char *put(char *w, const text *t)
{
    memcpy(w, t->s, t->n);
    return w + t->n;
}

/* Format a batch's rows into the file (a failed critical-level search
 * leaves those columns empty, as sw_report_step_row's callers do). */
static void format_batch(sw_steplog *l, const batch *b)
{
    for (size_t i = 0; i < b->n; i++) {
        const row *r = &b->rows[i];
        sw_crit alarm, open;
        sw_error ignored;
        int ok = sw_crit_cache_tailwater(l->crit[r->gate], r->f.headwater_m,
                                         &alarm, &open, &ignored) == SW_OK;
        char *w = sw_outfile_room(l->file);
        w = put(w, when_text(l, r->t));
        w = put(w, &l->gate[r->gate]);
        w = put(w, levels_text(l, &r->f));
        sw_outfile_commit(l->file,
                          sw_report_step_values(w, &r->f, ok ? &alarm : NULL,
                                                ok ? &open : NULL));
    }
}

static void consume_batch(void *log, void *b)
{
    format_batch(log, b);
}

/* The batch being filled is full: hand it over. */
static void hand_over(sw_steplog *l)
{
    l->fill = sw_handoff_pass(&l->ring);
    l->fill->n = 0;
}

void sw_steplog_point(sw_steplog *l, const sw_stepper *st)
{
    sw_time_ms t = sw_stepper_time(st);
    for (size_t g = 0; g < l->site->n_gates; g++) {
        const sw_step_gate *sg = sw_stepper_gate_at(st, g);
        const sw_gate_result *res = &sg->result;
        if (!sg->known)
            continue;
        row *r = &l->fill->rows[l->fill->n++];
        r->t = t;
        r->gate = g;
        r->f = (sw_step_figures){res->headwater_m, res->tailwater_m,
                                 res->net_moment_Nm, res->fs,
                                 res->sill_reaction_N, res->state};
        if (l->fill->n == BATCH_ROWS)
            hand_over(l);
    }
}

void sw_steplog_finish(sw_steplog *l)
{
    sw_handoff_end(&l->ring, 0); /* every full batch formatted */
    format_batch(l, l->fill);   /* and the last, here */
    l->fill->n = 0;
}

static int alloc_parts(sw_steplog *l, sw_error *err)
{
    const sw_site *site = l->site;
    int rc;
    for (int k = 0; k < SLOTS; k++)
        if ((l->slot[k] = malloc(sizeof *l->slot[k])) == NULL)
            return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    l->crit = calloc(site->n_gates + 1, sizeof *l->crit);
    l->gate = calloc(site->n_gates + 1, sizeof *l->gate);
    if (l->crit == NULL || l->gate == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    for (size_t g = 0; g < site->n_gates; g++) {
        if ((rc = sw_crit_cache_alloc(&l->crit[g], &site->gates[g].gate,
                                      SW_CRIT_CACHE_SLOTS, err)) != SW_OK)
            return rc;
        /* names are shorter than SW_SITE_NAME_MAX: GATE_TEXT holds them */
        text *t = &l->gate[g];
        t->n = (size_t)(sw_csv_field_put(t->s, site->gates[g].gate.name) -
                        t->s);
        t->s[t->n++] = ',';
    }
    return SW_OK;
}

int sw_steplog_open(sw_steplog **out, const sw_site *site, sw_outfile *file,
                    sw_error *err)
{
    sw_steplog *l = calloc(1, sizeof *l);
    int rc;

    *out = NULL;
    if (l == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    l->site = site;
    l->file = file;
    if ((rc = alloc_parts(l, err)) != SW_OK) {
        sw_steplog_free(l);
        return rc;
    }
    sw_handoff_init(&l->ring, (void *const *)l->slot, SLOTS, consume_batch,
                    l);
    l->ready = 1;
    l->fill = l->slot[0];
    l->fill->n = 0;
    sw_report_steps_header(file->fp);
    fflush(file->fp); /* then rows in place */
    *out = l;
    return SW_OK;
}

void sw_steplog_free(sw_steplog *l)
{
    if (l == NULL)
        return;
    if (l->ready) { /* given up: batches not begun are dropped */
        sw_handoff_end(&l->ring, 1);
        sw_handoff_fini(&l->ring);
    }
    for (size_t g = 0; l->crit != NULL && g < l->site->n_gates; g++)
        sw_crit_cache_free(l->crit[g]);
    free(l->crit);
    free(l->gate);
    for (int k = 0; k < SLOTS; k++)
        free(l->slot[k]);
    free(l);
}
