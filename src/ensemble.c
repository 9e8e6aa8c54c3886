/* sillwatch: forecast ensembles (see include/sillwatch/ensemble.h). */
#include "sillwatch/ensemble.h"
#include "sillwatch/ncseries.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/series.h"

/* The members of one series: labels and their column names. */
typedef struct members {
    size_t n;
    char (*label)[SW_MEMBER_MAX];
    char (*column)[SW_SITE_NAME_MAX * 2];
} members;

static void members_free(members *m)
{
    free(m->label);
    free(m->column);
    memset(m, 0, sizeof *m);
}

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                        "out of memory expanding the forecast ensemble");
}

/* Match `name` against `pattern` with one '*'; store what it stands for. */
static int match(const char *pattern, const char *name, char *label,
                 size_t size)
{
    const char *star = strchr(pattern, '*');
    size_t pre = (size_t)(star - pattern), post = strlen(star + 1);
    size_t n = strlen(name);

    if (n < pre + post || strncmp(name, pattern, pre) != 0 ||
        strcmp(name + n - post, star + 1) != 0)
        return 0;
    if (n - pre - post >= size)
        return 0;
    memcpy(label, name + pre, n - pre - post);
    label[n - pre - post] = '\0';
    return 1;
}

/* The members of a NetCDF series: those along its member dimension,
 * labelled by the member coordinate, columns "VARIABLE#LABEL"; or one
 * member with an empty label where the variable has no such dimension. */
static int nc_members(const sw_site_series *sr, members *out, sw_error *err)
{
    char **labels, **columns;
    size_t n;
    int rc = sw_nc_members(sr->path, sr->variable, sr->member_dim, &labels,
                           &columns, &n, err);
    if (rc != SW_OK)
        return rc;
    out->label = calloc(n ? n : 1, sizeof *out->label);
    out->column = calloc(n ? n : 1, sizeof *out->column);
    if (out->label == NULL || out->column == NULL) {
        rc = nomem(err);
    } else if (n == 0) {
        snprintf(out->column[0], sizeof out->column[0], "%s",
                 sr->variable);
        out->n = 1;
    } else {
        for (size_t i = 0; i < n; i++) {
            snprintf(out->label[i], sizeof out->label[0], "%s", labels[i]);
            snprintf(out->column[i], sizeof out->column[0], "%s",
                     columns[i]);
        }
        out->n = n;
    }
    sw_csv_header_free(labels, n);
    sw_csv_header_free(columns, n);
    if (rc != SW_OK)
        members_free(out);
    return rc;
}

/* The members of series `sr`: its matches if its column is a pattern,
 * else one member with an empty label. */
static int find_members(const sw_site *site, const sw_site_series *sr,
                        members *out, sw_error *err)
{
    const char *star = strchr(sr->value_column, '*');
    char **names = NULL;
    size_t n_names = 0;
    int rc = SW_OK;

    memset(out, 0, sizeof *out);
    if (star == NULL && !sr->netcdf) {
        out->label = calloc(1, sizeof *out->label);
        out->column = calloc(1, sizeof *out->column);
        if (out->label == NULL || out->column == NULL)
            return nomem(err);
        snprintf(out->column[0], sizeof out->column[0], "%s",
                 sr->value_column);
        out->n = 1;
        return SW_OK;
    }
    if (sr->netcdf)
        return nc_members(sr, out, err);
    if (strchr(star + 1, '*') != NULL)
        return sw_error_set(err, SW_ESITE, site->path, sr->line, 0,
                            "[series %s]: value_column '%s' has more than "
                            "one '*': a member pattern has one",
                            sr->name, sr->value_column);
    if ((rc = sw_csv_header(sr->path, sr->delimiter, &names, &n_names,
                            err)) != SW_OK)
        return rc;
    out->label = calloc(n_names ? n_names : 1, sizeof *out->label);
    out->column = calloc(n_names ? n_names : 1, sizeof *out->column);
    if (out->label == NULL || out->column == NULL) {
        rc = nomem(err);
        goto cleanup;
    }
    for (size_t i = 0; i < n_names; i++) {
        if (strcmp(names[i], sr->time_column) == 0 ||
            !match(sr->value_column, names[i], out->label[out->n],
                   sizeof out->label[0]))
            continue;
        snprintf(out->column[out->n], sizeof out->column[0], "%.127s",
                 names[i]);
        out->n++;
    }
    if (out->n == 0)
        rc = sw_error_set(err, SW_EDATA, sr->path, 1, 0,
                          "[series %s]: the member pattern '%s' matches no "
                          "column of the header",
                          sr->name, sr->value_column);
cleanup:
    sw_csv_header_free(names, n_names);
    if (rc != SW_OK)
        members_free(out);
    return rc;
}

/* The expanded site's series by name: an open-addressing hash table of
 * series index + 1 (0: empty), at most half full, so that finding a
 * member's series already added costs the same for 10 or 10,000 members
 * (a search through the list made the expansion quadratic in members). */
typedef struct name_table {
    size_t *slot;
    size_t cap; /* a power of two, or 0 */
} name_table;

static size_t name_hash(const char *s)
{
    /* FNV-1a, 64-bit (Fowler, Noll and Vo; IETF draft
     * draft-eastlake-fnv) */
    unsigned long long h = 14695981039346656037ull;
    for (; *s != '\0'; s++)
        h = (h ^ (unsigned char)*s) * 1099511628211ull;
    return (size_t)(h ^ (h >> 32));
}

/* The index of series `name` among series[0..n), or n when absent. */
static size_t name_find(const name_table *nt, const sw_site_series *series,
                        size_t n, const char *name)
{
    if (nt->cap == 0)
        return n;
    for (size_t i = name_hash(name) & (nt->cap - 1);; i = (i + 1) &
                                                        (nt->cap - 1)) {
        if (nt->slot[i] == 0)
            return n;
        if (strcmp(series[nt->slot[i] - 1].name, name) == 0)
            return nt->slot[i] - 1;
    }
}

static void name_put(name_table *nt, const sw_site_series *series, size_t k)
{
    size_t i = name_hash(series[k].name) & (nt->cap - 1);
    while (nt->slot[i] != 0)
        i = (i + 1) & (nt->cap - 1);
    nt->slot[i] = k + 1;
}

/* Enter series[n - 1], the one just added; -1 when out of memory. */
static int name_add(name_table *nt, const sw_site_series *series, size_t n)
{
    if (2 * n > nt->cap) {
        size_t cap = nt->cap ? 2 * nt->cap : 64;
        size_t *slot = calloc(cap, sizeof *slot);
        if (slot == NULL)
            return -1;
        free(nt->slot);
        nt->slot = slot;
        nt->cap = cap;
        for (size_t k = 0; k + 1 < n; k++)
            name_put(nt, series, k);
    }
    name_put(nt, series, n - 1);
    return 0;
}

/* Append a series (a member column of `sr`) to the expanded site and
 * return its name there. */
static const char *add_series(sw_ensemble *ens, size_t *cap, name_table *nt,
                              const sw_site_series *sr, const members *m,
                              size_t k)
{
    sw_site *s = &ens->site;
    char name[SW_SITE_NAME_MAX];

    if (m->label[k][0] != '\0')
        snprintf(name, sizeof name, "%.40s#%.20s", sr->name, m->label[k]);
    else
        snprintf(name, sizeof name, "%s", sr->name);
    size_t found = name_find(nt, s->series, s->n_series, name);
    if (found < s->n_series)
        return s->series[found].name;
    if (s->n_series == *cap) {
        size_t c = *cap ? 2 * *cap : 16;
        sw_site_series *grown = realloc(s->series, c * sizeof *grown);
        if (grown == NULL)
            return NULL;
        s->series = grown;
        *cap = c;
    }
    sw_site_series *out = &s->series[s->n_series++];
    *out = *sr;
    snprintf(out->name, sizeof out->name, "%s", name);
    snprintf(out->value_column, sizeof out->value_column, "%s", m->column[k]);
    if (name_add(nt, s->series, s->n_series) != 0)
        return NULL;
    return out->name;
}

/* Add a gate of the expanded site; -1 when out of memory. */
static int add_gate(sw_ensemble *ens, size_t *cap, size_t orig,
                    const sw_site_gate *g, const char *hw, const char *tw,
                    const char *label)
{
    sw_site *s = &ens->site;
    if (s->n_gates == *cap) {
        size_t c = *cap ? 2 * *cap : 16;
        sw_site_gate *gates = realloc(s->gates, c * sizeof *gates);
        size_t *o = realloc(ens->orig, c * sizeof *o);
        if (gates != NULL)
            s->gates = gates;
        if (o != NULL)
            ens->orig = o;
        char (*mem)[SW_MEMBER_MAX] = realloc(ens->member, c * sizeof *mem);
        if (mem != NULL)
            ens->member = mem;
        if (gates == NULL || o == NULL || mem == NULL)
            return -1;
        *cap = c;
    }
    sw_site_gate *out = &s->gates[s->n_gates];
    *out = *g;
    snprintf(out->headwater, sizeof out->headwater, "%s", hw);
    snprintf(out->tailwater, sizeof out->tailwater, "%s", tw);
    ens->orig[s->n_gates] = orig;
    snprintf(ens->member[s->n_gates], SW_MEMBER_MAX, "%s", label);
    s->n_gates++;
    ens->n_members[orig]++;
    return 0;
}

/* The expansion's arrays as they grow: capacities, series by name. */
typedef struct growth {
    size_t series, gates;
    name_table names;
} growth;

/* Add gate gi for member a of its headwater series h and member b of its
 * tailwater series t: their series (where new) and the gate.  SW_OK, or
 * SW_ENOMEM (no message). */
static int add_pair(sw_ensemble *ens, growth *gr, size_t gi,
                    const sw_site_gate *g, const sw_site_series *h,
                    const sw_site_series *t, const members *mh,
                    const members *mt, size_t a, size_t b)
{
    /* copies: adding a series may move the array */
    char hn[SW_SITE_NAME_MAX], tn[SW_SITE_NAME_MAX], label[SW_MEMBER_MAX];
    const char *got = add_series(ens, &gr->series, &gr->names, h, mh, a);
    if (got == NULL)
        return SW_ENOMEM;
    snprintf(hn, sizeof hn, "%s", got);
    if ((got = add_series(ens, &gr->series, &gr->names, t, mt, b)) == NULL)
        return SW_ENOMEM;
    snprintf(tn, sizeof tn, "%s", got);
    if (mh->label[a][0] && mt->label[b][0] &&
        strcmp(mh->label[a], mt->label[b]) != 0)
        snprintf(label, sizeof label, "%.30s+%.30s", mh->label[a],
                 mt->label[b]);
    else
        snprintf(label, sizeof label, "%s",
                 mh->label[a][0] ? mh->label[a] : mt->label[b]);
    return add_gate(ens, &gr->gates, gi, g, hn, tn, label) != 0 ? SW_ENOMEM
                                                                 : SW_OK;
}

/* A member of a tailwater series by its label, and its place. */
typedef struct by_label {
    const char *label;
    size_t k;
} by_label;

static int cmp_by_label(const void *x, const void *y)
{
    const by_label *a = x, *b = y;
    int c = strcmp(a->label, b->label);
    return c != 0 ? c : (a->k > b->k) - (a->k < b->k);
}

/* Pair the members of h and t by label: for each member of h in order,
 * each member of t with its label, in t's order.  The labels of t are
 * sorted once and searched (n log n; comparing every pair was quadratic
 * in members).  SW_OK, or SW_ENOMEM (no message). */
static int pair_by_label(sw_ensemble *ens, growth *gr, size_t gi,
                         const sw_site_gate *g, const sw_site_series *h,
                         const sw_site_series *t, const members *mh,
                         const members *mt)
{
    by_label *sorted = malloc(mt->n * sizeof *sorted);
    int rc = SW_OK;

    if (sorted == NULL)
        return SW_ENOMEM;
    for (size_t b = 0; b < mt->n; b++) {
        sorted[b].label = mt->label[b];
        sorted[b].k = b;
    }
    qsort(sorted, mt->n, sizeof *sorted, cmp_by_label);
    for (size_t a = 0; a < mh->n && rc == SW_OK; a++) {
        size_t lo = 0, hi = mt->n;
        while (lo < hi) {
            size_t mid = lo + (hi - lo) / 2;
            if (strcmp(sorted[mid].label, mh->label[a]) < 0)
                lo = mid + 1;
            else
                hi = mid;
        }
        for (; lo < mt->n && rc == SW_OK &&
               strcmp(sorted[lo].label, mh->label[a]) == 0;
             lo++)
            rc = add_pair(ens, gr, gi, g, h, t, mh, mt, a, sorted[lo].k);
    }
    free(sorted);
    return rc;
}

/* The members of headwater series h of headwater-only gate gi, listed
 * apart (ens->hw_series).  SW_OK, or SW_ENOMEM (no message). */
static int add_hw_only(sw_ensemble *ens, size_t *cap, size_t gi,
                       const sw_site_series *h, const members *mh)
{
    for (size_t k = 0; k < mh->n; k++) {
        if (ens->n_hw_series == *cap) {
            size_t c = *cap ? 2 * *cap : 8;
            sw_site_series *s2 = realloc(ens->hw_series, c * sizeof *s2);
            if (s2 != NULL)
                ens->hw_series = s2;
            size_t *g2 = realloc(ens->hw_series_gate, c * sizeof *g2);
            if (g2 != NULL)
                ens->hw_series_gate = g2;
            if (s2 == NULL || g2 == NULL)
                return SW_ENOMEM;
            *cap = c;
        }
        sw_site_series *out = &ens->hw_series[ens->n_hw_series];
        *out = *h;
        snprintf(out->value_column, sizeof out->value_column, "%s",
                 mh->column[k]);
        snprintf(out->name, sizeof out->name, "%.63s", mh->label[k]);
        ens->hw_series_gate[ens->n_hw_series++] = gi;
    }
    return SW_OK;
}

int sw_ensemble_expand(sw_ensemble *ens, const sw_site *site, sw_error *err)
{
    size_t cap_hw = 0;
    growth gr = {0, 0, {NULL, 0}};
    members mh, mt;
    int rc = SW_OK;

    memset(ens, 0, sizeof *ens);
    memset(&mh, 0, sizeof mh);
    memset(&mt, 0, sizeof mt);
    ens->site = *site;
    ens->site.n_gates = ens->site.n_series = 0;
    ens->site.gates = NULL;
    ens->site.series = NULL;
    ens->n_orig = site->n_gates;
    ens->n_members = calloc(site->n_gates ? site->n_gates : 1,
                            sizeof *ens->n_members);
    ens->hw_only = calloc(site->n_gates ? site->n_gates : 1,
                          sizeof *ens->hw_only);
    if (ens->n_members == NULL || ens->hw_only == NULL) {
        rc = nomem(err);
        goto fail;
    }

    for (size_t gi = 0; gi < site->n_gates; gi++) {
        const sw_site_gate *g = &site->gates[gi];
        const sw_site_series *h = sw_site_find_series(site, g->headwater);
        const sw_site_series *t = sw_site_find_series(site, g->tailwater);
        if (h == NULL) {
            rc = sw_error_set(err, SW_ESITE, site->path, g->line, 0,
                              "gate '%s' has no headwater series: give it "
                              "'headwater = NAME' naming a [series NAME]",
                              g->gate.name);
            goto fail;
        }
        if ((rc = find_members(site, h, &mh, err)) != SW_OK)
            goto fail;
        if (t == NULL) {
            /* headwater only: the tailwater it needs, member by member */
            ens->hw_only[ens->n_hw_only++] = gi;
            if (add_hw_only(ens, &cap_hw, gi, h, &mh) != SW_OK) {
                rc = nomem(err);
                goto fail;
            }
            members_free(&mh);
            continue;
        }
        if ((rc = find_members(site, t, &mt, err)) != SW_OK)
            goto fail;
        int crossed = site->ensemble_crossed;
        if (!crossed && mh.n > 1 && mt.n > 1)
            rc = pair_by_label(ens, &gr, gi, g, h, t, &mh, &mt);
        else
            for (size_t a = 0; a < mh.n && rc == SW_OK; a++)
                for (size_t b = 0; b < mt.n && rc == SW_OK; b++)
                    rc = add_pair(ens, &gr, gi, g, h, t, &mh, &mt, a, b);
        if (rc != SW_OK) {
            rc = nomem(err);
            goto fail;
        }
        if (ens->n_members[gi] == 0 || (!crossed && mh.n > 1 && mt.n > 1 &&
                                        ens->n_members[gi] != mh.n)) {
            rc = sw_error_set(err, SW_ESITE, site->path, g->line, 0,
                              "gate '%s': the members of series '%s' (%zu) "
                              "and '%s' (%zu) do not pair by label; name "
                              "them alike, or set 'ensemble = crossed' in "
                              "[site] for every combination",
                              g->gate.name, h->name, mh.n, t->name, mt.n);
            goto fail;
        }
        members_free(&mh);
        members_free(&mt);
    }
    free(gr.names.slot);
    return SW_OK;
fail:
    free(gr.names.slot);
    members_free(&mh);
    members_free(&mt);
    sw_ensemble_fini(ens);
    return rc;
}

void sw_ensemble_fini(sw_ensemble *ens)
{
    if (ens == NULL)
        return;
    /* the zone and settings are the original site's: not freed here */
    free(ens->site.gates);
    free(ens->site.series);
    free(ens->orig);
    free(ens->member);
    free(ens->n_members);
    free(ens->hw_only);
    free(ens->hw_series);
    free(ens->hw_series_gate);
    memset(ens, 0, sizeof *ens);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Hyndman and Fan (1996) definition 7: h = (n - 1) p, the lower order
 * statistic j = floor(h) (0-based) and the weight g = h - j of the next
 * one.  (Shared by both quantile functions, so that they read the same
 * order statistics.) */
static size_t lower_rank(size_t n, double p, double *g)
{
    double h = (double)(n - 1) * p;
    size_t lo = (size_t)floor(h);
    *g = h - (double)lo;
    return lo;
}

/* Whether the quantile needs order statistic lo + 1 as well as lo. */
static int needs_next(size_t n, size_t lo, double g)
{
    return !(lo + 1 >= n || g == 0.0);
}

/* The quantile from order statistics v[lo] and v[lo + 1] (in place). */
static double interpolate(const double *v, size_t n, size_t lo, double g)
{
    if (!needs_next(n, lo, g))
        return v[lo < n ? lo : n - 1];
    if (isinf(v[lo]) || isinf(v[lo + 1]))
        return isinf(v[lo + 1]) && v[lo + 1] > 0 ? INFINITY : v[lo];
    return v[lo] + g * (v[lo + 1] - v[lo]);
}

double sw_quantile(double *v, size_t n, double p)
{
    double g;
    size_t lo;

    qsort(v, n, sizeof *v, cmp_double);
    lo = lower_rank(n, p, &g);
    return interpolate(v, n, lo, g);
}

/* Sort v[0..n) (short ranges) by insertion. */
static void insertion_sort(double *v, size_t n)
{
    for (size_t i = 1; i < n; i++) {
        double x = v[i];
        size_t j = i;
        for (; j > 0 && v[j - 1] > x; j--)
            v[j] = v[j - 1];
        v[j] = x;
    }
}

static double median_of_3(double a, double b, double c)
{
    if (a < b)
        return b < c ? b : (a < c ? c : a);
    return a < c ? a : (b < c ? c : b);
}

/* Put each order statistic r[0..m) (ascending, distinct, within [lo, hi))
 * of v[lo..hi) at its own index, as a sort would: quickselect for several
 * ranks at once (Hoare's FIND, 1961, with a three-way partition around
 * the median of three, Dijkstra's "Dutch national flag", so that runs of
 * equal values cost no more than distinct ones).  Ranks on both sides of
 * a partition are followed on both sides.  After `depth` partitions a
 * range is sorted instead (qsort), which bounds the time by n log n and
 * the recursion by `depth` however the values fall. */
static void select_ranks(double *v, size_t lo, size_t hi, const size_t *r,
                         size_t m, int depth)
{
    while (m > 0) {
        if (hi - lo <= 16) {
            insertion_sort(v + lo, hi - lo);
            return;
        }
        if (depth-- == 0) {
            qsort(v + lo, hi - lo, sizeof *v, cmp_double);
            return;
        }
        double pivot = median_of_3(v[lo], v[lo + (hi - lo) / 2], v[hi - 1]);
        size_t lt = lo, i = lo, gt = hi;
        while (i < gt) {
            double x = v[i];
            if (x < pivot) {
                v[i++] = v[lt];
                v[lt++] = x;
            } else if (x > pivot) {
                v[i] = v[--gt];
                v[gt] = x;
            } else {
                i++;
            }
        }
        /* [lo, lt) < pivot, [lt, gt) == pivot (in place), [gt, hi) > */
        size_t a = 0, b;
        while (a < m && r[a] < lt)
            a++;
        for (b = a; b < m && r[b] < gt; b++)
            ;
        if (a > 0)
            select_ranks(v, lo, lt, r, a, depth);
        r += b;
        m -= b;
        lo = gt;
    }
}

/* Whether v holds a zero of each sign: the one case where equal values
 * differ in their bits, so that which of them a sort puts at a rank
 * shows in the result. */
static int zeros_of_both_signs(const double *v, size_t n)
{
    int pos = 0, neg = 0;
    for (size_t i = 0; i < n; i++)
        if (v[i] == 0.0) {
            if (signbit(v[i]))
                neg = 1;
            else
                pos = 1;
        }
    return pos && neg;
}

/* Quantiles p[0..n_p) (n_p <= QUANTILES_AT_ONCE) of v[0..n). */
#define QUANTILES_AT_ONCE 16
static void quantiles_upto16(double *v, size_t n, const double *p,
                             size_t n_p, double *out)
{
    size_t lo[QUANTILES_AT_ONCE], ranks[2 * QUANTILES_AT_ONCE], m = 0;
    double g[QUANTILES_AT_ONCE];
    int depth = 8;

    for (size_t k = 0; k < n_p; k++) {
        lo[k] = lower_rank(n, p[k], &g[k]);
        ranks[m++] = lo[k] < n ? lo[k] : n - 1;
        if (needs_next(n, lo[k], g[k]))
            ranks[m++] = lo[k] + 1;
    }
    /* ascending and distinct (a handful: by insertion) */
    for (size_t i = 1; i < m; i++)
        for (size_t j = i; j > 0 && ranks[j] < ranks[j - 1]; j--) {
            size_t t = ranks[j];
            ranks[j] = ranks[j - 1];
            ranks[j - 1] = t;
        }
    size_t u = 0;
    for (size_t i = 0; i < m; i++)
        if (u == 0 || ranks[i] != ranks[u - 1])
            ranks[u++] = ranks[i];
    for (size_t k = n; k > 1; k >>= 1)
        depth += 2; /* 2 log2 n partitions, as introsort allows */
    select_ranks(v, 0, n, ranks, u, depth);
    for (size_t k = 0; k < n_p; k++)
        out[k] = interpolate(v, n, lo[k], g[k]);
}

void sw_quantiles(double *v, size_t n, const double *p, size_t n_p,
                  double *out)
{
    if (zeros_of_both_signs(v, n)) {
        /* which zero stands at a rank is the sort's (stable) choice:
         * take it from the sort itself */
        qsort(v, n, sizeof *v, cmp_double);
        for (size_t k = 0; k < n_p; k++) {
            double g;
            size_t lo = lower_rank(n, p[k], &g);
            out[k] = interpolate(v, n, lo, g);
        }
        return;
    }
    for (size_t k = 0; k < n_p; k += QUANTILES_AT_ONCE) {
        size_t c = n_p - k < QUANTILES_AT_ONCE ? n_p - k : QUANTILES_AT_ONCE;
        quantiles_upto16(v, n, p + k, c, out + k);
    }
}
