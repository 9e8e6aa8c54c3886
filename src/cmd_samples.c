/* sillwatch: what the commands that sample (--samples) share: their
 * options and the block that names the uncertain keys.  Part of the
 * program, not the library; no command of its own. */
#include <errno.h>
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

/* Digits only: no sign, no blanks, no exponent. */
static int all_digits(const char *s)
{
    return s[0] != '\0' && strspn(s, "0123456789") == strlen(s);
}

int sw_cli_take_samples(const char *command, const char *arg, size_t *n)
{
    char *end;
    errno = 0;
    unsigned long long v = all_digits(arg) ? strtoull(arg, &end, 10) : 0;
    if (!all_digits(arg) || errno != 0 || v < 1 ||
        v > SW_UNCERT_MAX_SAMPLES)
        return sw_cli_usage_error(command,
                                  "--samples: '%s' is not a number of "
                                  "samples from 1 to %d",
                                  arg, SW_UNCERT_MAX_SAMPLES);
    *n = (size_t)v;
    return 0;
}

int sw_cli_take_seed(const char *command, const char *arg, uint64_t *seed)
{
    char *end;
    errno = 0;
    unsigned long long v = all_digits(arg) ? strtoull(arg, &end, 10) : 0;
    if (!all_digits(arg) || errno != 0 || v > (unsigned long long)INT64_MAX)
        return sw_cli_usage_error(command,
                                  "--seed: '%s' is not a whole number from "
                                  "0 to 9223372036854775807",
                                  arg);
    *seed = (uint64_t)v;
    return 0;
}

int sw_cli_take_jobs(const char *command, const char *arg, unsigned *jobs)
{
    char *end;
    errno = 0;
    long j = strtol(arg, &end, 10);
    if (end == arg || *end != '\0' || errno != 0 || j < 1 || j > 1024)
        return sw_cli_usage_error(command,
                                  "--jobs: '%s' is not a number of workers "
                                  "from 1 to 1024",
                                  arg);
    *jobs = (unsigned)j;
    return 0;
}

void sw_cli_print_uncert(FILE *fp, const char *prefix, const sw_uncert *u,
                         size_t n_samples)
{
    fprintf(fp,
            "%s%zu samples, seed %" PRIu64 " (GSL mt19937, one stream per "
            "sample; JCGM 101:2008)\n",
            prefix, n_samples, u->seed);
    if (u->n_params == 0) {
        fprintf(fp, "%sno key has a standard uncertainty (X_sd): every "
                    "sample is the site as given\n",
                prefix);
        return;
    }
    fprintf(fp, "%suncertain keys (normal, truncated to the key's range; "
                "independent):\n",
            prefix);
    for (size_t i = 0; i < u->n_params; i++) {
        const sw_uncert_param *p = &u->params[i];
        fprintf(fp, "%s  %-34s %.10g +- %.6g%s%s\n", prefix, p->name, p->mean,
                p->sd, p->unit[0] != '\0' ? " " : "", p->unit);
    }
}
