/* sillwatch: JSON for scripts (see include/sillwatch/jsonout.h). */
#include "sillwatch/jsonout.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "sillwatch/decimal.h"
#include "sillwatch/report.h"
#include "sillwatch/uncert.h"

void sw_json_set(json_t *obj, const char *key, json_t *value, int *bad)
{
    if (obj == NULL || value == NULL) {
        json_decref(value);
        *bad = 1;
        return;
    }
    if (json_object_set_new(obj, key, value) != 0) /* steals value */
        *bad = 1;
}

/* Return obj, or NULL (releasing it) when something failed. */
static json_t *done(json_t *obj, int bad)
{
    if (bad) {
        json_decref(obj);
        return NULL;
    }
    return obj;
}

json_t *sw_json_number(double v)
{
    if (isnan(v))
        return json_null();
    if (isinf(v))
        return json_string(v > 0 ? "inf" : "-inf");
    return json_real(v == 0.0 ? 0.0 : v);
}

json_t *sw_json_crit(const sw_crit *c)
{
    if (c->kind == SW_CRIT_LEVEL)
        return sw_json_number(c->level_m);
    if (c->kind == SW_CRIT_UNATTAINABLE)
        return json_string("none");
    return json_null();
}

json_t *sw_json_hours(sw_time_ms ms)
{
    double h = (double)sw_report_hours4(ms < 0 ? -ms : ms) / 10000.0;
    return json_real(ms < 0 ? -h : h);
}

json_t *sw_json_time(sw_time_ms t, const sw_zone *zone)
{
    char buf[64];
    if (sw_time_format(buf, sizeof buf, t, zone) < 0)
        return NULL;
    return json_string(buf);
}

static json_t *water(const sw_site_water *w)
{
    int bad = 0;
    json_t *o = json_object();
    sw_json_set(o, "density_kgm3", sw_json_number(w->rho_kgm3), &bad);
    sw_json_set(o, "density_from",
                json_string(w->from_temperature ? "temperature" : "given"),
                &bad);
    sw_json_set(o, "temperature_C",
                w->from_temperature ? sw_json_number(w->temperature_C)
                                    : json_null(),
                &bad);
    sw_json_set(o, "salinity",
                w->from_temperature ? sw_json_number(w->salinity)
                                    : json_null(),
                &bad);
    /* standard uncertainties (X_sd): 0 where not given */
    sw_json_set(o, "density_sd_kgm3",
                w->from_temperature ? json_null()
                                    : sw_json_number(w->density_sd_kgm3),
                &bad);
    sw_json_set(o, "temperature_sd_C",
                w->from_temperature ? sw_json_number(w->temperature_sd_C)
                                    : json_null(),
                &bad);
    sw_json_set(o, "salinity_sd",
                w->from_temperature ? sw_json_number(w->salinity_sd)
                                    : json_null(),
                &bad);
    return done(o, bad);
}

/* A series' quality tests (qc.h): null where a test is off. */
static json_t *quality_tests(const sw_qc_config *qc)
{
    int bad = 0;
    json_t *o = json_object(), *range = json_null(), *flat = json_null();
    if (qc->range_set) {
        range = json_array();
        if (range == NULL ||
            json_array_append_new(range, sw_json_number(qc->range_lo_m)) ||
            json_array_append_new(range, sw_json_number(qc->range_hi_m)))
            bad = 1;
    }
    if (qc->flat_ms > 0) {
        flat = json_object();
        sw_json_set(flat, "duration_h",
                    sw_json_number((double)qc->flat_ms / 3600000.0), &bad);
        sw_json_set(flat, "tolerance_m", sw_json_number(qc->flat_tol_m),
                    &bad);
    }
    sw_json_set(o, "valid_range_m", range, &bad);
    sw_json_set(o, "spike_m",
                qc->spike_m > 0.0 ? sw_json_number(qc->spike_m) : json_null(),
                &bad);
    sw_json_set(o, "max_rate_m_per_h",
                qc->rate_m_per_h > 0.0 ? sw_json_number(qc->rate_m_per_h)
                                       : json_null(),
                &bad);
    sw_json_set(o, "flat", flat, &bad);
    return done(o, bad);
}

static json_t *series(const sw_site_series *sr)
{
    int bad = 0;
    json_t *o = json_object(), *missing = json_array();
    for (size_t k = 0; k < sr->n_missing && missing != NULL; k++)
        if (json_array_append_new(missing, json_string(sr->missing[k])) != 0)
            bad = 1;
    sw_json_set(o, "name", json_string(sr->name), &bad);
    sw_json_set(o, "file", json_string(sr->path), &bad);
    sw_json_set(o, "format", json_string(sr->netcdf ? "netcdf" : "csv"),
                &bad);
    if (sr->netcdf) {
        sw_json_set(o, "variable", json_string(sr->variable), &bad);
        sw_json_set(o, "station",
                    sr->station[0] ? json_string(sr->station) : json_null(),
                    &bad);
        sw_json_set(o, "member_dimension",
                    sr->member_dim[0] ? json_string(sr->member_dim)
                                      : json_null(),
                    &bad);
        sw_json_set(o, "offset_m", sw_json_number(sr->offset_m), &bad);
        sw_json_set(o, "offset_sd_m", sw_json_number(sr->offset_sd_m), &bad);
        sw_json_set(o, "quality_tests", quality_tests(&sr->qc), &bad);
        json_decref(missing); /* CSV only */
        return done(o, bad);
    }
    sw_json_set(o, "time_column", json_string(sr->time_column), &bad);
    sw_json_set(o, "time_format",
                json_string(sr->time_format == SW_TIME_UNIX ? "unix"
                                                            : "iso8601"),
                &bad);
    sw_json_set(o, "value_column", json_string(sr->value_column), &bad);
    sw_json_set(o, "unit", json_string(sr->scale == 1.0 ? "m" : "ft"), &bad);
    sw_json_set(o, "metres_per_unit", sw_json_number(sr->scale), &bad);
    sw_json_set(o, "offset_m", sw_json_number(sr->offset_m), &bad);
    sw_json_set(o, "offset_sd_m", sw_json_number(sr->offset_sd_m), &bad);
    sw_json_set(o, "delimiter",
                sr->delimiter == 0     ? json_null()
                : sr->delimiter == ';' ? json_string("semicolon")
                : sr->delimiter == '\t' ? json_string("tab")
                                        : json_string("comma"),
                &bad);
    sw_json_set(o, "missing", missing, &bad);
    sw_json_set(o, "quality_tests", quality_tests(&sr->qc), &bad);
    return done(o, bad);
}

static json_t *gate_params(const sw_site_gate *sg)
{
    const sw_gate *g = &sg->gate;
    int bad = 0, rect = g->shape == SW_SHAPE_RECTANGLE;
    json_t *o = json_object(), *d = json_object();

    sw_json_set(o, "name", json_string(g->name), &bad);
    sw_json_set(o, "shape", json_string(sw_shape_name(g->shape)), &bad);
    sw_json_set(o, "hinge_level_m", sw_json_number(g->hinge_level_m), &bad);
    sw_json_set(o, "inclination_deg", sw_json_number(g->inclination_deg),
                &bad);
    sw_json_set(o, "seal_top_m", sw_json_number(g->seal_top_m), &bad);
    sw_json_set(o, "seal_height_m",
                rect ? sw_json_number(g->seal_height_m) : json_null(), &bad);
    sw_json_set(o, "seal_width_m",
                rect ? sw_json_number(g->seal_width_m) : json_null(), &bad);
    sw_json_set(o, "diameter_m",
                rect ? json_null() : sw_json_number(g->diameter_m), &bad);
    sw_json_set(o, "leaf_length_m", sw_json_number(g->leaf_length_m), &bad);
    sw_json_set(o, "mass_kg", sw_json_number(g->mass_kg), &bad);
    sw_json_set(o, "cg_along_m", sw_json_number(g->cg_along_m), &bad);
    sw_json_set(o, "cg_offset_m", sw_json_number(g->cg_offset_m), &bad);
    sw_json_set(o, "volume_m3", sw_json_number(g->volume_m3), &bad);
    sw_json_set(o, "extra_moment_Nm", sw_json_number(g->extra_moment_Nm),
                &bad);
    sw_json_set(o, "required_fs", sw_json_number(g->required_fs), &bad);
    sw_json_set(o, "fs_basis", json_string(sw_fs_basis_name(g->fs_basis)),
                &bad);
    sw_json_set(o, "min_sill_reaction_N",
                sw_json_number(g->min_sill_reaction_N), &bad);
    /* the standard uncertainties (X_sd) under the same keys as the
     * values; 0 where not given, null for the other shape's keys */
    json_t *u = json_object();
    static const char *const with_unit[SW_GATE_N_PARAMS] = {
        "hinge_level_m", "inclination_deg", "seal_top_m", "seal_height_m",
        "seal_width_m", "diameter_m", "leaf_length_m", "mass_kg",
        "cg_along_m", "cg_offset_m", "volume_m3", "extra_moment_Nm"};
    for (int p = 0; p < SW_GATE_N_PARAMS; p++) {
        int other_shape = rect ? p == SW_GP_DIAMETER
                               : p == SW_GP_SEAL_HEIGHT ||
                                     p == SW_GP_SEAL_WIDTH;
        sw_json_set(u, with_unit[p],
                    other_shape ? json_null() : sw_json_number(sg->sd[p]),
                    &bad);
    }
    sw_json_set(o, "standard_uncertainty", u, &bad);
    sw_json_set(o, "headwater_series",
                sg->headwater[0] ? json_string(sg->headwater) : json_null(),
                &bad);
    sw_json_set(o, "tailwater_series",
                sg->tailwater[0] ? json_string(sg->tailwater) : json_null(),
                &bad);
    sw_json_set(d, "sill_s_m", sw_json_number(g->s_sill_m), &bad);
    sw_json_set(d, "sill_level_m", sw_json_number(g->sill_level_m), &bad);
    sw_json_set(d, "seal_top_level_m", sw_json_number(g->seal_top_level_m),
                &bad);
    sw_json_set(d, "leaf_end_level_m", sw_json_number(g->leaf_bottom_level_m),
                &bad);
    sw_json_set(d, "sealed_area_m2", sw_json_number(g->area_m2), &bad);
    sw_json_set(d, "weight_N", sw_json_number(g->mass_kg * g->g_ms2), &bad);
    sw_json_set(d, "weight_moment_Nm", sw_json_number(g->weight_moment_Nm),
                &bad);
    sw_json_set(o, "derived", d, &bad);
    return done(o, bad);
}

json_t *sw_json_site(const sw_site *site)
{
    int bad = 0;
    json_t *o = json_object(), *gates = json_array(), *ser = json_array();

    sw_json_set(o, "name", json_string(site->name), &bad);
    sw_json_set(o, "file", json_string(site->path), &bad);
    sw_json_set(o, "gravity_ms2", sw_json_number(site->g_ms2), &bad);
    sw_json_set(o, "gravity_from",
                json_string(site->gravity_from_latitude ? "latitude"
                                                        : "given"),
                &bad);
    sw_json_set(o, "latitude_deg",
                site->gravity_from_latitude
                    ? sw_json_number(site->latitude_deg)
                    : json_null(),
                &bad);
    sw_json_set(o, "elevation_m",
                site->gravity_from_latitude
                    ? sw_json_number(site->elevation_m)
                    : json_null(),
                &bad);
    sw_json_set(o, "required_fs", sw_json_number(site->required_fs), &bad);
    sw_json_set(o, "fs_basis", json_string(sw_fs_basis_name(site->fs_basis)),
                &bad);
    sw_json_set(o, "min_sill_reaction_N",
                sw_json_number(site->min_sill_reaction_N), &bad);
    sw_json_set(o, "water_upstream", water(&site->water[SW_UPSTREAM]), &bad);
    sw_json_set(o, "water_downstream", water(&site->water[SW_DOWNSTREAM]),
                &bad);
    sw_json_set(o, "max_gap_h",
                sw_json_number((double)site->max_gap_ms / 3600000.0), &bad);
    sw_json_set(o, "timezone",
                site->zone ? json_string(sw_zone_name(site->zone))
                           : json_null(),
                &bad);
    sw_json_set(o, "ensemble",
                json_string(site->ensemble_crossed ? "crossed" : "paired"),
                &bad);
    for (size_t i = 0; i < site->n_series && ser != NULL; i++)
        if (json_array_append_new(ser, series(&site->series[i])) != 0)
            bad = 1;
    for (size_t i = 0; i < site->n_gates && gates != NULL; i++)
        if (json_array_append_new(gates, gate_params(&site->gates[i])) != 0)
            bad = 1;
    sw_json_set(o, "series", ser, &bad);
    sw_json_set(o, "gates", gates, &bad);
    return done(o, bad);
}

json_t *sw_json_point_gate(const sw_gate *g, const sw_gate_result *r,
                           const sw_crit *tw_alarm, const sw_crit *tw_open,
                           const sw_crit *hw_alarm, const sw_crit *hw_open)
{
    int bad = 0;
    json_t *o = json_object();
    const struct {
        const char *key;
        double v;
    } num[] = {
        {"headwater_m", r->headwater_m},
        {"tailwater_m", r->tailwater_m},
        {"hw_force_N", r->hw_force_N},
        {"hw_moment_Nm", r->hw_moment_Nm},
        {"hw_centre_of_pressure_s_m", r->hw_cp_m},
        {"tw_force_N", r->tw_force_N},
        {"tw_moment_Nm", r->tw_moment_Nm},
        {"tw_centre_of_pressure_s_m", r->tw_cp_m},
        {"weight_N", g->mass_kg * g->g_ms2},
        {"weight_moment_Nm", r->weight_moment_Nm},
        {"buoyancy_force_N", r->buoyancy_force_N},
        {"buoyancy_arm_m", r->buoyancy_arm_m},
        {"buoyancy_moment_Nm", r->buoyancy_moment_Nm},
        {"extra_moment_Nm", r->extra_moment_Nm},
        {"resisting_moment_Nm", r->resisting_moment_Nm},
        {"net_moment_Nm", r->net_moment_Nm},
        {"restraint_Nm", r->restraint_Nm},
        {"net_water_moment_Nm", r->net_water_moment_Nm},
        {"fs", r->fs},
        {"required_fs", g->required_fs},
        {"sill_reaction_N", r->sill_reaction_N},
        {"min_sill_reaction_N", g->min_sill_reaction_N},
    };

    sw_json_set(o, "gate", json_string(g->name), &bad);
    for (size_t i = 0; i < sizeof num / sizeof num[0]; i++)
        sw_json_set(o, num[i].key, sw_json_number(num[i].v), &bad);
    sw_json_set(o, "fs_basis", json_string(sw_fs_basis_name(g->fs_basis)),
                &bad);
    sw_json_set(o, "buoyancy_water",
                json_string(r->buoyancy_side == SW_UPSTREAM ? "upstream"
                                                            : "downstream"),
                &bad);
    sw_json_set(o, "status", json_string(sw_state_name(r->state)), &bad);
    sw_json_set(o, "tw_alarm_m", sw_json_crit(tw_alarm), &bad);
    sw_json_set(o, "tw_open_m", sw_json_crit(tw_open), &bad);
    sw_json_set(o, "hw_alarm_m", sw_json_crit(hw_alarm), &bad);
    sw_json_set(o, "hw_open_m", sw_json_crit(hw_open), &bad);
    return done(o, bad);
}

/* v as the CSV prints it with 4 decimals (exact decimal rounding, like
 * report.c's), read back as the nearest double; "inf"/"-inf" as they
 * are. */
static json_t *fixed4(double v)
{
    char buf[64];
    double back;
    if (!isfinite(v))
        return sw_json_number(v);
    int n = snprintf(buf, sizeof buf, "%.4f", v);
    if (n < 0 || (size_t)n >= sizeof buf ||
        sw_decimal_parse(buf, (size_t)n, 0, &back) != 0)
        return sw_json_number(v);
    return sw_json_number(back);
}

json_t *sw_json_summary_row(const char *gate, sw_time_ms start,
                            sw_time_ms end, const sw_tally *t,
                            const sw_zone *zone)
{
    int bad = 0;
    json_t *o = json_object();
    long long ev = sw_report_hours4(t->evaluated);
    long long lo = sw_report_hours4(t->low), op = sw_report_hours4(t->open);
    int never = t->evaluated == 0 && isinf(t->min_fs) && t->min_fs > 0;

    sw_json_set(o, "gate", json_string(gate), &bad);
    sw_json_set(o, "start", sw_json_time(start, zone), &bad);
    sw_json_set(o, "end", sw_json_time(end, zone), &bad);
    /* the CSV's rounding and identities (report.h) */
    sw_json_set(o, "hours_evaluated", json_real((double)ev / 10000.0), &bad);
    sw_json_set(o, "hours_not_evaluated",
                json_real((double)(sw_report_hours4(end - start) - ev) /
                          10000.0),
                &bad);
    sw_json_set(o, "hours_low", json_real((double)lo / 10000.0), &bad);
    sw_json_set(o, "hours_open", json_real((double)op / 10000.0), &bad);
    sw_json_set(o, "hours_below_margin", json_real((double)(lo + op) / 10000.0),
                &bad);
    sw_json_set(o, "events", json_integer(t->events), &bad);
    sw_json_set(o, "longest_event_hours", sw_json_hours(t->longest_event),
                &bad);
    sw_json_set(o, "min_fs", never ? json_null() : fixed4(t->min_fs), &bad);
    sw_json_set(o, "min_fs_time",
                never ? json_null() : sw_json_time(t->min_fs_t, zone), &bad);
    return done(o, bad);
}

int sw_json_write(const json_t *doc, FILE *fp, sw_error *err)
{
    if (doc == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0,
                            "out of memory building the JSON output");
    if (json_dumpf(doc, fp, JSON_INDENT(2) | JSON_REAL_PRECISION(15) |
                                JSON_PRESERVE_ORDER) != 0 ||
        fputc('\n', fp) == EOF)
        return sw_error_set(err, SW_EOUTPUT, NULL, 0, 0,
                            "cannot write the JSON output");
    return SW_OK;
}

json_t *sw_json_uncert_keys(const sw_uncert *u)
{
    int bad = 0;
    json_t *a = json_array();
    for (size_t i = 0; i < u->n_params && a != NULL; i++) {
        const sw_uncert_param *p = &u->params[i];
        json_t *o = json_object();
        sw_json_set(o, "parameter", json_string(p->name), &bad);
        sw_json_set(o, "value", sw_json_number(p->mean), &bad);
        sw_json_set(o, "sd", sw_json_number(p->sd), &bad);
        sw_json_set(o, "unit", json_string(p->unit), &bad);
        if (o == NULL || json_array_append_new(a, o) != 0)
            bad = 1;
    }
    return done(a, bad);
}

/* {"p05", "p50", "p95"} of percentiles v; critical levels (crit) with
 * -inf as not needed. */
static json_t *pctl(const double *v, int crit)
{
    static const char *const key[SW_UNCERT_N_PCTL] = {"p05", "p50", "p95"};
    int bad = 0;
    json_t *o = json_object();
    for (int p = 0; p < SW_UNCERT_N_PCTL; p++) {
        sw_crit c = {isinf(v[p]) ? SW_CRIT_NOT_NEEDED : SW_CRIT_LEVEL, v[p]};
        sw_json_set(o, key[p], crit ? sw_json_crit(&c) : sw_json_number(v[p]),
                    &bad);
    }
    return done(o, bad);
}

json_t *sw_json_uncert_point(const sw_uncert *u, const sw_uncert_point *pt)
{
    int bad = 0;
    json_t *o = json_object(), *sens = json_array();
    size_t *order = malloc((pt->n_shares + 1) * sizeof *order);
    const sw_gate *g = &u->site->gates[pt->gate].gate;

    if (order == NULL)
        bad = 1;
    else
        sw_uncert_point_order(pt, order);

    sw_json_set(o, "gate", json_string(g->name), &bad);
    sw_json_set(o, "fs_basis", json_string(sw_fs_basis_name(g->fs_basis)),
                &bad);
    sw_json_set(o, "samples", json_integer((json_int_t)pt->n), &bad);
    sw_json_set(o, "n_open", json_integer((json_int_t)pt->n_open), &bad);
    sw_json_set(o, "n_low", json_integer((json_int_t)pt->n_low), &bad);
    sw_json_set(o, "p_open", sw_json_number(pt->p_open), &bad);
    sw_json_set(o, "p_open_se", sw_json_number(pt->p_open_se), &bad);
    sw_json_set(o, "p_low", sw_json_number(pt->p_low), &bad);
    sw_json_set(o, "p_low_se", sw_json_number(pt->p_low_se), &bad);
    sw_json_set(o, "p_below", sw_json_number(pt->p_below), &bad);
    sw_json_set(o, "p_below_se", sw_json_number(pt->p_below_se), &bad);
    sw_json_set(o, "fs", pctl(pt->fs, 0), &bad);
    sw_json_set(o, "net_moment_Nm", pctl(pt->net_moment_Nm, 0), &bad);
    sw_json_set(o, "tw_alarm_m", pctl(pt->tw_alarm_m, 1), &bad);
    sw_json_set(o, "tw_open_m", pctl(pt->tw_open_m, 1), &bad);
    for (size_t i = 0; i < pt->n_shares && sens != NULL && order != NULL;
         i++) {
        size_t m = order[i];
        json_t *e = json_object();
        sw_json_set(e, "parameter",
                    json_string(u->params[pt->param[m]].name), &bad);
        sw_json_set(e, "share", sw_json_number(pt->share[m]), &bad);
        sw_json_set(e, "r2", sw_json_number(pt->r2[m]), &bad);
        if (e == NULL || json_array_append_new(sens, e) != 0)
            bad = 1;
    }
    sw_json_set(o, "sensitivity", sens, &bad);
    sw_json_set(o, "r2_sum", sw_json_number(pt->r2_sum), &bad);
    free(order);
    return done(o, bad);
}
