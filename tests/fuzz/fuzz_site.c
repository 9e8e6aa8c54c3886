/* libFuzzer target: the site-file parser (src/site.c).
 *
 * Each input is written, byte for byte, to one temporary file and read
 * with sw_site_load().  Whatever the bytes, the call must return (SW_OK,
 * or SW_ESITE / SW_ENOMEM with a message), never crash, leak, overrun or
 * hit undefined behaviour; on failure the site must be empty.  A site that
 * loads is looked up by its own names, and each of its gates (validated,
 * so any parameters the parser lets through) is evaluated at levels around
 * its sill and hinge, and its critical levels searched: the results must be
 * numbers (no NaN) and the searches must end with SW_OK: the site file's
 * plausibility checks (sizes >= 1 mm, bounded moments) promise that no
 * gate they accept makes a search fail.
 * Build and run with `make fuzz` (see DEVELOPERS.md).
 */
#include <math.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "sillwatch/gate.h"
#include "sillwatch/site.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* The input's file: one per process, rewritten for every input. */
static char site_path[64];

static void remove_input(void)
{
    unlink(site_path);
}

static void write_input(const uint8_t *data, size_t size)
{
    FILE *f = fopen(site_path, "wb");

    if (f == NULL || (size > 0 && fwrite(data, 1, size, f) != size) ||
        fclose(f) != 0)
        abort();
}

/* Evaluate one gate that the site file let through. */
static void exercise_gate(const sw_gate *g)
{
    const double z[4] = {g->sill_level_m, g->seal_top_level_m,
                         g->hinge_level_m,
                         g->hinge_level_m + 0.37 * g->leaf_length_m};
    sw_gate_result r;
    sw_crit c;
    sw_error err;

    for (int i = 0; i < 4; i++) {
        for (int j = 0; j < 4; j++) {
            sw_gate_evaluate(g, z[i], z[j], &r);
            if (isnan(r.net_moment_Nm) || isnan(r.fs) ||
                isnan(r.sill_reaction_N) || r.state < SW_STATE_OK ||
                r.state > SW_STATE_OPEN)
                abort();
        }
        for (int lim = 0; lim < 2; lim++) {
            int rc = sw_gate_critical_tailwater(g, z[i], (sw_limit)lim, &c,
                                                &err);
            if (rc != SW_OK ||
                (c.kind == SW_CRIT_LEVEL && !isfinite(c.level_m)))
                abort();
            rc = sw_gate_critical_headwater(g, z[i], (sw_limit)lim, &c, &err);
            if (rc != SW_OK ||
                (c.kind == SW_CRIT_LEVEL && !isfinite(c.level_m)))
                abort();
        }
    }
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    sw_site site;
    sw_error err;
    int rc;

    if (site_path[0] == '\0') {
        int fd;

        /* A file in memory (tmpfs) where there is one: the file system is
         * most of the cost of an execution. */
        snprintf(site_path, sizeof site_path, "%s/sw-fuzz-site-XXXXXX",
                 access("/dev/shm", W_OK) == 0 ? "/dev/shm" : "/tmp");
        if ((fd = mkstemp(site_path)) < 0)
            abort();
        close(fd);
        atexit(remove_input);
        gsl_set_error_handler_off(); /* the library checks every status */
    }
    write_input(data, size);
    rc = sw_site_load(&site, site_path, &err);
    if (rc != err.code)
        abort();
    if (rc == SW_OK) {
        for (size_t i = 0; i < site.n_gates; i++)
            if (sw_site_find_gate(&site, site.gates[i].gate.name) == NULL)
                abort();
        for (size_t i = 0; i < site.n_gates; i++)
            exercise_gate(&site.gates[i].gate);
        for (size_t i = 0; i < site.n_series; i++)
            if (sw_site_find_series(&site, site.series[i].name) == NULL)
                abort();
    } else {
        if (site.n_gates != 0 || site.gates != NULL || site.zone != NULL ||
            err.message[0] == '\0' ||
            memchr(err.message, '\0', sizeof err.message) == NULL)
            abort();
    }
    sw_site_fini(&site);
    return 0;
}
