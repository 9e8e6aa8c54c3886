/* sillwatch: screening a forecast ensemble (see
 * include/sillwatch/screening.h). */
#include "sillwatch/screening.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/cancel.h"
#include "sillwatch/csvout.h"
#include "sillwatch/report.h"
#include "sillwatch/stepper.h"

static void put_time(FILE *fp, sw_time_ms t, const sw_zone *zone)
{
    char buf[64];
    sw_time_format(buf, sizeof buf, t, zone);
    fputs(buf, fp);
}

static void put_hours(FILE *fp, sw_time_ms ms)
{
    long long h4 = sw_report_hours4(ms < 0 ? -ms : ms);
    fprintf(fp, "%s%lld.%04lld", ms < 0 ? "-" : "", h4 / 10000, h4 % 10000);
}

/* A number with `decimals` decimals, or inf / -inf. */
static void put_number(FILE *fp, double v, int decimals)
{
    if (isinf(v))
        fputs(v > 0 ? "inf" : "-inf", fp);
    else
        fprintf(fp, "%.*f", decimals, v);
}

static sw_time_ms median_ms(double *v, size_t n)
{
    return n == 0 ? 0 : (sw_time_ms)llround(sw_quantile(v, n, 0.5));
}

static int cmp_verdict(const void *a, const void *b)
{
    const sw_screen_verdict *x = a, *y = b;
    if (x->s.low_seen != y->s.low_seen)
        return y->s.low_seen - x->s.low_seen;
    if (x->s.low_seen && x->s.low_first != y->s.low_first)
        return x->s.low_first < y->s.low_first ? -1 : 1;
    return (x->gate > y->gate) - (x->gate < y->gate);
}

int sw_screen_members(const sw_site *site, const sw_ensemble *ens,
                      FILE *forecast, FILE *flags, sw_screen_verdict *vd,
                      sw_time_ms *t0, sw_screen_series_fn each, void *ctx,
                      sw_error *err)
{
    sw_stepper *st = NULL;
    sw_stepper_options opt = {0, 1, 0};
    size_t n = ens->site.n_gates;
    double *fs = malloc((n ? n : 1) * sizeof *fs);
    double *sr = malloc((n ? n : 1) * sizeof *sr);
    int rc, done = 0;
    FILE *fp = forecast;

    if (fs == NULL || sr == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
        goto cleanup;
    }
    if ((rc = sw_stepper_alloc(&st, &ens->site, &opt, err)) != SW_OK)
        goto cleanup;
    fputs("time,gate,members,fraction_low,fraction_open,fs_p10,fs_p50,"
          "fs_p90,sill_reaction_p10,sill_reaction_p50,sill_reaction_p90\n",
          fp);
    for (int last = 0; !last;) {
        if ((rc = sw_stepper_advance(st, &done, err)) != SW_OK ||
            (rc = sw_cancel_check(err)) != SW_OK)
            goto cleanup;
        if (done) {
            if ((rc = sw_stepper_finish(st, err)) != SW_OK)
                goto cleanup;
            last = 1;
        }
        const sw_stepper_flag *fl;
        size_t n_fl = sw_stepper_flags(st, &fl);
        for (size_t i = 0; i < n_fl; i++) {
            const sw_site_series *ss = sw_stepper_series(st, fl[i].series);
            sw_report_flag_row(flags, ss->name, ss->path,
                               &fl[i].reading, site->zone);
        }
        if (!sw_stepper_passed(st))
            continue; /* flags only */
        for (size_t g = 0; g < ens->n_orig; g++) {
            size_t k = 0, low = 0, open = 0;
            if (ens->n_members[g] == 0)
                continue;
            for (size_t e = 0; e < n; e++) {
                const sw_step_gate *sg = sw_stepper_gate_at(st, e);
                if (ens->orig[e] != g || !sg->known)
                    continue;
                fs[k] = sg->result.fs;
                sr[k] = sg->result.sill_reaction_N;
                low += sg->result.state == SW_STATE_LOW;
                open += sg->result.state == SW_STATE_OPEN;
                k++;
            }
            if (k == 0)
                continue;
            put_time(fp, sw_stepper_time(st), site->zone);
            fputc(',', fp);
            sw_csv_put_field(fp, site->gates[g].gate.name);
            fprintf(fp, ",%zu,%.4f,%.4f", k,
                    (double)low / (double)k, (double)open / (double)k);
            /* one selection per quantity for all three percentiles */
            const double p[3] = {0.1, 0.5, 0.9};
            double q_fs[3], q_sr[3];
            sw_quantiles(fs, k, p, 3, q_fs);
            sw_quantiles(sr, k, p, 3, q_sr);
            for (int i = 0; i < 3; i++) {
                fputc(',', fp);
                put_number(fp, q_fs[i], 4);
            }
            for (int i = 0; i < 3; i++) {
                fputc(',', fp);
                put_number(fp, q_sr[i], 2);
            }
            fputc('\n', fp);
        }
    }

    sw_time_ms end;
    if (!sw_stepper_has_data(st)) {
        rc = sw_stepper_no_data_error(st, err);
        goto cleanup;
    }
    sw_stepper_span(st, t0, &end);
    for (size_t g = 0; g < ens->n_orig; g++) {
        sw_screen_verdict *v = &vd[g];
        size_t k = 0;
        memset(v, 0, sizeof *v);
        v->gate = g;
        for (size_t e = 0; e < n; e++) {
            const sw_tally *t = sw_stepper_tally(st, e);
            if (ens->orig[e] != g)
                continue;
            sw_sample_screen_add(&v->s, t);
            fs[k] = (double)(t->low + t->open);
            sr[k] = (double)t->open;
            k++;
        }
        v->low_median = median_ms(fs, k);
        v->open_median = median_ms(sr, k);
    }
cleanup:
    for (size_t i = 0;
         each != NULL && st != NULL && rc == SW_OK && i < sw_stepper_n_series(st);
         i++)
        each(ctx, sw_stepper_series(st, i), sw_stepper_reader_stats(st, i));
    sw_stepper_free(st);
    free(fs);
    free(sr);
    return rc;
}

size_t sw_screen_order(const sw_ensemble *ens, sw_screen_verdict *vd,
                       size_t n_gates)
{
    size_t n = 0;
    for (size_t g = 0; g < n_gates; g++)
        if (ens->n_members[g] > 0)
            vd[n++] = vd[g];
    qsort(vd, n, sizeof *vd, cmp_verdict);
    return n;
}

/* "first time,lead hours", or "," where it never came. */
static void put_first(FILE *sc, int seen, sw_time_ms first,
                      sw_time_ms issued, const sw_zone *zone)
{
    if (seen) {
        put_time(sc, first, zone);
        fputc(',', sc);
        put_hours(sc, first - issued);
    } else {
        fputc(',', sc);
    }
}

void sw_screen_csv(FILE *sc, const sw_site *site,
                   const sw_screen_verdict *vd, size_t n, sw_time_ms issued)
{
    fputs("gate,members,low_first_time,low_lead_hours,low_members,"
          "low_median_hours,open_first_time,open_lead_hours,open_members,"
          "open_median_hours\n", sc);
    for (size_t i = 0; i < n; i++) {
        const sw_screen_verdict *v = &vd[i];
        sw_csv_put_field(sc, site->gates[v->gate].gate.name);
        fprintf(sc, ",%zu,", v->s.members);
        put_first(sc, v->s.low_seen, v->s.low_first, issued, site->zone);
        fprintf(sc, ",%zu,", v->s.low_members);
        put_hours(sc, v->low_median);
        fputc(',', sc);
        put_first(sc, v->s.open_seen, v->s.open_first, issued, site->zone);
        fprintf(sc, ",%zu,", v->s.open_members);
        put_hours(sc, v->open_median);
        fputc('\n', sc);
    }
}
