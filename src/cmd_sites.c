/* sillwatch: several site files in one command (run, screen): each site
 * in OUTDIR/<stem>/, on worker processes (jobs.h), the outcomes listed. */
#include <errno.h>
#include <getopt.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli.h"
#include "sillwatch/jobs.h"

/* The stem of a site file: its name without folder and last extension. */
static void stem_of(const char *path, char *out, size_t n)
{
    const char *base = strrchr(path, '/');
    base = base != NULL ? base + 1 : path;
    const char *dot = strrchr(base, '.');
    size_t len = dot != NULL && dot != base ? (size_t)(dot - base)
                                            : strlen(base);
    snprintf(out, n, "%.*s", (int)len, base);
}

/* Each site's folder; two sites with one stem would share it. */
static int site_folders(const sw_cli_sites *m,
                        char (*dir)[SW_ERROR_PATH_MAX])
{
    for (size_t i = 0; i < m->n_sites; i++) {
        char stem[256];
        stem_of(m->sites[i], stem, sizeof stem);
        if (stem[0] == '\0' || strcmp(stem, "..") == 0)
            return sw_cli_usage_error(m->command, "%s: no name to give its "
                                                  "folder", m->sites[i]);
        if ((size_t)snprintf(dir[i], SW_ERROR_PATH_MAX, "%s/%s", m->outdir,
                             stem) >= SW_ERROR_PATH_MAX)
            return sw_cli_usage_error(m->command, "%s: the folder's path is "
                                                  "too long", m->sites[i]);
        for (size_t k = 0; k < i; k++)
            if (strcmp(dir[k], dir[i]) == 0)
                return sw_cli_usage_error(m->command,
                                          "%s and %s would share the folder "
                                          "%s: rename one",
                                          m->sites[k], m->sites[i], dir[i]);
    }
    return 0;
}

typedef struct pool_ctx {
    const sw_cli_sites *m;
    char (*dir)[SW_ERROR_PATH_MAX];
    int show_progress;
} pool_ctx;

static int one_site(size_t i, void *ctx)
{
    pool_ctx *p = ctx;
    return p->m->one(i, p->m->sites[i], p->dir[i], p->m->ctx);
}

static void site_done(size_t i, int status, size_t n_done, void *ctx)
{
    pool_ctx *p = ctx;
    (void)i;
    (void)status;
    if (p->show_progress)
        fprintf(stderr, "\rsillwatch: %s: %zu of %zu sites done   ",
                p->m->command, n_done, p->m->n_sites);
}

/* What an exit status says, for the list of sites. */
static const char *status_words(int st)
{
    switch (st) {
    case SW_EXIT_OK: return "every gate held its margin";
    case SW_EXIT_BELOW: return "some gate low or open";
    case -1: return "not run (interrupted)";
    case SW_EXIT_SITE: return "failed: site file";
    case SW_EXIT_DATA: return "failed: level data";
    case SW_EXIT_OUTPUT: return "failed: output";
    default: return st >= 128 ? "interrupted" : "failed";
    }
}

/* The sites with their outcome; the worst status. */
static int list_sites(const sw_cli_sites *m,
                      char (*dir)[SW_ERROR_PATH_MAX], const int *status)
{
    int worst = SW_EXIT_OK;
    size_t failed = 0;
    for (size_t i = 0; i < m->n_sites; i++) {
        int st = status[i] < 0 ? 128 + SIGINT : status[i];
        worst = st > worst ? st : worst;
        failed += status[i] != SW_EXIT_OK && status[i] != SW_EXIT_BELOW;
        if (!m->quiet)
            printf("  %-40s %-12s exit %3d  %s\n", m->sites[i],
                   strrchr(dir[i], '/') + 1, status[i],
                   status_words(status[i]));
    }
    if (failed > 0) {
        fprintf(stderr, "sillwatch: %s: %zu of %zu sites failed:",
                m->command, failed, m->n_sites);
        for (size_t i = 0; i < m->n_sites; i++)
            if (status[i] != SW_EXIT_OK && status[i] != SW_EXIT_BELOW)
                fprintf(stderr, " %s (exit %d)", m->sites[i], status[i]);
        fputc('\n', stderr);
    }
    return worst;
}

/* The sites run: the worst exit status; *stopped after a signal. */
static int run_all(const sw_cli_sites *m, char (*dir)[SW_ERROR_PATH_MAX],
                   int *status, int *stopped)
{
    pool_ctx p = {m, dir, !m->quiet && isatty(STDERR_FILENO)};
    sw_error err;
    int rc;

    if (!m->quiet)
        printf("%s %zu sites on %u worker%s, each in %s/<site file "
               "name>/:\n", m->doing, m->n_sites, m->jobs,
               m->jobs == 1 ? "" : "s", m->outdir);
    fflush(stdout);
    rc = sw_jobs_run(m->n_sites, m->jobs, one_site, site_done, &p, status,
                     &err);
    if (p.show_progress)
        fputs("\r\033[K", stderr);
    int worst = list_sites(m, dir, status);
    if (rc == SW_EINTERRUPTED) {
        *stopped = 1;
        return sw_cli_interrupted(m->command, "each site's earlier outputs "
                                              "are left as they were");
    }
    if (rc != SW_OK) {
        int e = sw_cli_report(&err); /* a worker could not be started */
        worst = e > worst ? e : worst;
    }
    return worst;
}

int sw_cli_many_sites(const sw_cli_sites *m)
{
    char (*dir)[SW_ERROR_PATH_MAX] = calloc(m->n_sites, sizeof *dir);
    int *status = calloc(m->n_sites, sizeof *status);
    sw_error err;
    int worst, stopped = 0;

    if (dir == NULL || status == NULL) {
        fprintf(stderr, "sillwatch: %s: out of memory\n", m->command);
        worst = SW_EXIT_NOMEM;
    } else if ((worst = site_folders(m, dir)) != 0) {
        ; /* nothing ran */
    } else if (sw_cli_make_outdir(m->outdir, &err) != SW_OK) {
        worst = sw_cli_report(&err);
    } else {
        worst = run_all(m, dir, status, &stopped);
        if (!stopped && m->after != NULL) {
            int e = m->after(dir, status, m->ctx);
            worst = e > worst ? e : worst;
        }
        if (!m->quiet)
            fputs(sw_cli_caution, stdout);
    }
    free(dir);
    free(status);
    return worst;
}

int sw_cli_sites_operands(const char *command, int argc, char **argv,
                          const char *outdir, size_t n_series,
                          char *const **sites, size_t *n)
{
    if (outdir == NULL)
        return sw_cli_usage_error(command, "give the output folder with -o "
                                           "OUTDIR");
    if (n_series > 0)
        return sw_cli_usage_error(command, "--series names a series of one "
                                           "site: give one site file with "
                                           "it");
    *sites = argv + optind;
    *n = (size_t)(argc - optind);
    for (size_t i = 0; i < *n; i++)
        if (strcmp((*sites)[i], "-") == 0)
            return sw_cli_usage_error(command, "several site files: '-' "
                                               "(standard input) is not one "
                                               "of them");
    return 0;
}

int sw_cli_parse_jobs(const char *command, const char *arg, unsigned *jobs)
{
    char *end;
    errno = 0;
    long j = strtol(arg, &end, 10);
    if (end == arg || *end != '\0' || errno != 0 || j < 1 || j > 1024)
        return sw_cli_usage_error(command, "--jobs: '%s' is not a number of "
                                           "workers from 1 to 1024", arg);
    *jobs = (unsigned)j;
    return 0;
}
