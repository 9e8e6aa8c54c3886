/* sillwatch: the program.  Dispatches to the command files (cmd_*.c) and
 * owns the exit codes and the shape of every message. */
#define _DEFAULT_SOURCE /* getopt_long, gmtime_r */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <stdint.h>
#include <sys/stat.h>
#include <time.h>

#include <gsl/gsl_errno.h>

#include "cli.h"
#include "sillwatch/cancel.h"
#include "sillwatch/outfile.h"
#include "sillwatch/decimal.h"

const char sw_cli_caution[] =
    "Caution: hydrostatic screening only (no waves, surges, debris, ice or\n"
    "friction); not a structural assessment. Defer to local codes and a\n"
    "licensed engineer before acting on these results.\n";

int sw_cli_sha256_file(const char *path, char hex[SW_CLI_SHA256_HEX],
                       sw_error *err)
{
    return sw_file_sha256(path, hex, SW_ESITE, err);
}

int sw_cli_site_sha256(const sw_site *site, char hex[SW_CLI_SHA256_HEX],
                       sw_error *err)
{
    if (strcmp(site->path, SW_SITE_STDIN_NAME) == 0) {
        hex[0] = '\0'; /* read once from standard input: no file to hash */
        return SW_OK;
    }
    return sw_cli_sha256_file(site->path, hex, err);
}

void sw_cli_print_fs_basis(const sw_site *site)
{
    int mixed = 0;
    for (size_t i = 1; i < site->n_gates; i++)
        mixed |= site->gates[i].gate.fs_basis != site->gates[0].gate.fs_basis;
    if (!mixed && site->n_gates > 0) {
        sw_fs_basis b = site->gates[0].gate.fs_basis;
        printf("fs basis for every gate: %s (%s)\n", sw_fs_basis_name(b),
               sw_fs_basis_phrase(b));
        return;
    }
    fputs("fs basis by gate:", stdout);
    for (size_t i = 0; i < site->n_gates; i++)
        printf("%s %s %s (%s)", i > 0 ? ";" : "", site->gates[i].gate.name,
               sw_fs_basis_name(site->gates[i].gate.fs_basis),
               sw_fs_basis_phrase(site->gates[i].gate.fs_basis));
    fputc('\n', stdout);
}

/* The generation time as ISO 8601 UTC: SOURCE_DATE_EPOCH when set (the
 * reproducible-builds convention: seconds since 1970-01-01T00:00:00Z, a
 * malformed value is an error), else now.  Returns 0 or -1. */
int sw_cli_generation_time(char *buf, size_t n)
{
    const char *env = getenv("SOURCE_DATE_EPOCH");
    time_t when;
    struct tm tm;

    if (env != NULL) {
        char *end;
        long long v;
        errno = 0;
        v = strtoll(env, &end, 10);
        if (env[0] < '0' || env[0] > '9' || *end != '\0' || errno != 0 ||
            v > (long long)253402300799LL) /* 9999-12-31T23:59:59Z */
            return -1;
        when = (time_t)v;
    } else {
        when = time(NULL);
    }
    if (gmtime_r(&when, &tm) == NULL ||
        strftime(buf, n, "%Y-%m-%dT%H:%M:%SZ", &tm) == 0)
        return -1;
    return 0;
}

static const char usage_text[] =
    "Usage: sillwatch COMMAND [OPTION]...\n"
    "Hydrostatic screening of hinged flap gates held on their sills against\n"
    "a headwater by their weight and the tailwater.\n"
    "\n"
    "Commands:\n"
    "  check SITE.ini     validate a site file and show every gate's\n"
    "                     parameters and derived values\n"
    "  point SITE.ini     hand-check the gates at one headwater and tailwater\n"
    "  run SITE.ini -o D  replay the site's level series through every gate;\n"
    "                     write summary, exceedance log and more to D\n"
    "  screen SITE.ini -o D  screen forecast levels (ensembles too) and the\n"
    "                     tailwater a headwater-only forecast needs\n"
    "  thresholds SITE.ini (--headwater | --tailwater) FROM:TO:STEP -o FILE\n"
    "                     write a table of alarm thresholds for controllers\n"
    "  fleet DIR... -o FILE  put the summaries of many sites' runs (their\n"
    "                     output folders) in one table\n"
    "  watch SITE.ini -o D  follow the level files as they grow; alarms as\n"
    "                     states change; 'run's outputs kept up to date in D\n"
    "\n"
    "Run 'sillwatch COMMAND --help' for a command's options.\n"
    "\n"
    "Options:\n"
    "  -h, --help         show this help and exit\n"
    "  -V, --version      show the version and exit\n"
    "\n"
    "Exit status:\n"
    "  0  ran; every gate held its required margin\n"
    "  1  ran; some gate was below its margin (low) or open\n"
    "  2  the command line is wrong\n"
    "  3  the site file is unreadable or invalid\n"
    "  4  a level file (for fleet: a run's output folder) is unreadable or\n"
    "     invalid\n"
    "  5  an output could not be written\n"
    "  6  a numerical method failed (please report it)\n"
    "  7  out of memory\n"
    "  8  internal error (please report it)\n"
    "  130  interrupted by SIGINT, 143 by SIGTERM (128 + the signal);\n"
    "       earlier outputs are left as they were\n"
    "\n";

/* SIGINT and SIGTERM ask the library to stop (cancel.h). */
static void on_signal(int sig)
{
    sw_cancel_request(sig);
}

void sw_cli_handle_signals(void)
{
    struct sigaction sa;

    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sa.sa_flags = 0; /* no SA_RESTART: a blocking call returns EINTR */
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
}

int sw_cli_interrupt_code(void)
{
    int sig = sw_cancel_requested();
    return 128 + (sig > 0 ? sig : SIGINT);
}

int sw_cli_interrupted(const char *command, const char *what)
{
    fprintf(stderr, "sillwatch: %s: interrupted; %s\n", command, what);
    return sw_cli_interrupt_code();
}

int sw_cli_recover(const char *dir, int quiet, sw_error *err)
{
    sw_outset_recovery rec;
    int rc = sw_outset_recover(dir, &rec, err);

    if (rc != SW_OK || quiet)
        return rc;
    if (rec.publish == 2)
        fprintf(stderr, "sillwatch: warning: %s: process %ld was stopped "
                        "while it put its outputs in place; its previous "
                        "outputs are restored\n", dir, rec.publish_pid);
    else if (rec.publish == 1)
        fprintf(stderr, "sillwatch: warning: %s: process %ld was stopped "
                        "after it put its outputs in place; its journal is "
                        "removed\n", dir, rec.publish_pid);
    if (rec.stale_removed == 1)
        fprintf(stderr, "sillwatch: warning: %s: removed a temporary file "
                        "left by process %ld, which is gone\n",
                dir, rec.stale_pid);
    else if (rec.stale_removed > 1)
        fprintf(stderr, "sillwatch: warning: %s: removed %ld temporary "
                        "files left by processes that are gone (process %ld "
                        "among them)\n",
                dir, rec.stale_removed, rec.stale_pid);
    return SW_OK;
}

int sw_cli_version(void)
{
    printf("sillwatch %s\n"
           "Copyright (C) 2026 the sillwatch authors.\n"
           "License GPLv3+: GNU GPL version 3 or later "
           "<https://gnu.org/licenses/gpl.html>.\n"
           "This is free software: you are free to change and redistribute "
           "it.\n"
           "There is NO WARRANTY, to the extent permitted by law.\n",
           SW_VERSION);
    return SW_EXIT_OK;
}

int sw_cli_exit_code(int status)
{
    switch (status) {
    case SW_OK: return SW_EXIT_OK;
    case SW_EUSAGE: return SW_EXIT_USAGE;
    case SW_ESITE: return SW_EXIT_SITE;
    case SW_EDATA: return SW_EXIT_DATA;
    case SW_EOUTPUT: return SW_EXIT_OUTPUT;
    case SW_ENUMERIC: return SW_EXIT_NUMERIC;
    case SW_ENOMEM: return SW_EXIT_NOMEM;
    case SW_EINTERRUPTED: return sw_cli_interrupt_code();
    default: return SW_EXIT_INTERNAL;
    }
}

int sw_cli_report(const sw_error *err)
{
    /* an interruption is said once, by the command or by main() */
    if (err->code == SW_EINTERRUPTED)
        return sw_cli_exit_code(err->code);
    fputs("sillwatch: ", stderr);
    if (err->file[0] != '\0') {
        fputs(err->file, stderr);
        if (err->line > 0)
            fprintf(stderr, ":%ld", err->line);
        if (err->line > 0 && err->column > 0)
            fprintf(stderr, ":%ld", err->column);
        fputs(": ", stderr);
    }
    fprintf(stderr, "%s\n", err->message);
    return sw_cli_exit_code(err->code);
}

int sw_cli_usage_error(const char *command, const char *fmt, ...)
{
    va_list ap;
    fprintf(stderr, "sillwatch: %s%s", command ? command : "",
            command ? ": " : "");
    va_start(ap, fmt);
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fprintf(stderr, "\nTry 'sillwatch %s%s--help'.\n", command ? command : "",
            command ? " " : "");
    return SW_EXIT_USAGE;
}

int sw_cli_parse_number(const char *text, double *value)
{
    size_t n = strlen(text);
    double v;

    /* the one number grammar of the project (decimal.h): plain decimals
     * with an optional exponent; no hex, no "inf" or "nan", no blanks */
    if (n == 0 || text[0] == ' ' || text[0] == '\t' || text[n - 1] == ' ' ||
        text[n - 1] == '\t' || sw_decimal_parse(text, n, 0, &v) != 0)
        return -1;
    *value = v;
    return 0;
}

double sw_cli_unsigned_zero(double v, int decimals)
{
    double half = decimals < 0 ? 0.0 : 0.5 * pow(10.0, -decimals);
    if (v == 0.0 || fabs(v) < half)
        return 0.0;
    return v;
}

int sw_cli_make_outdir(const char *dir, sw_error *err)
{
    struct stat sb;
    if (stat(dir, &sb) == 0)
        return S_ISDIR(sb.st_mode)
                   ? SW_OK
                   : sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                                  "the output folder exists but is not a "
                                  "folder");
    if (mkdir(dir, 0777) != 0)
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "cannot create the output folder: %s",
                            strerror(errno));
    return SW_OK;
}

int sw_cli_split_path(const char *path, char *dir, size_t n_dir,
                      const char **name)
{
    const char *slash = strrchr(path, '/');

    *name = slash != NULL ? slash + 1 : path;
    if (**name == '\0' || strcmp(*name, ".") == 0 || strcmp(*name, "..") == 0)
        return -1;
    if (slash == NULL)
        snprintf(dir, n_dir, ".");
    else if (slash == path)
        snprintf(dir, n_dir, "/");
    else if ((size_t)(slash - path) >= n_dir)
        return -1;
    else
        snprintf(dir, n_dir, "%.*s", (int)(slash - path), path);
    return 0;
}

int sw_cli_open_output_file(sw_outfile *out, const char *path,
                            const char *dir, const char *name, int quiet,
                            sw_error *err)
{
    struct stat sb;
    int rc;

    if (stat(path, &sb) == 0 && S_ISDIR(sb.st_mode))
        return sw_error_set(err, SW_EOUTPUT, path, 0, 0,
                            "is a folder; give -o the name of the table's "
                            "file");
    /* a missing folder is created, as run creates OUTDIR */
    if (stat(dir, &sb) != 0 && errno == ENOENT &&
        (rc = sw_cli_make_outdir(dir, err)) != SW_OK)
        return rc;
    if ((rc = sw_outfile_check_target(path, err)) != SW_OK ||
        (rc = sw_cli_recover(dir, quiet, err)) != SW_OK)
        return rc;
    return sw_outfile_open(out, dir, name, err);
}

int sw_cli_apply_series(sw_site *site, const char *const *specs, size_t n,
                        const char *command)
{
    for (size_t i = 0; i < n; i++) {
        char name[SW_SITE_NAME_MAX];
        sw_error err;
        const char *eq = strchr(specs[i], '=');
        snprintf(name, sizeof name, "%.*s", (int)(eq - specs[i]), specs[i]);
        if (sw_site_set_series_file(site, name, eq + 1, &err) != SW_OK)
            return sw_cli_usage_error(command, "%s", err.message);
    }
    return 0;
}

int sw_cli_take_series(const char *command, const char *arg,
                       const char **specs, size_t *n, size_t cap)
{
    if (strchr(arg, '=') == NULL || arg[0] == '=')
        return sw_cli_usage_error(command, "--series takes NAME=FILE, not "
                                           "'%s'", arg);
    if (*n == cap)
        return sw_cli_usage_error(command, "too many --series options");
    specs[(*n)++] = arg;
    return 0;
}

int sw_cli_option_error(const char *command, int opt, char **argv)
{
    if (opt == ':')
        return sw_cli_usage_error(command, "option '%s' needs a value",
                                  argv[optind - 1]);
    return sw_cli_usage_error(command, "unknown option '%s'",
                              argv[optind - 1]);
}

int sw_cli_site_operand(const char *command, int argc, char **argv,
                        const char *outdir, const char **site_path)
{
    if (optind != argc - 1)
        return sw_cli_usage_error(command, optind >= argc
                                               ? "no site file given"
                                               : "give one site file, not %d",
                                  argc - optind);
    if (outdir == NULL)
        return sw_cli_usage_error(command, "give the output folder with -o "
                                           "OUTDIR");
    *site_path = argv[optind];
    return 0;
}

void sw_cli_warn_implausible(const sw_site_series *s, double lo, double hi,
                             double band_lo, double band_hi)
{
    fprintf(stderr, "sillwatch: warning: series %s (%s): levels reach %s "
            "%.4f m, more than %g m %s the gates it drives (%.4f m): is the "
            "unit or the offset right? (unit = %s, offset = %g m; set "
            "valid_range to reject such readings)\n",
            s->name, s->path, hi > band_hi ? "up to" : "down to",
            hi > band_hi ? hi : lo, SW_QC_PLAUSIBLE_M,
            hi > band_hi ? "above the highest hinge of"
                         : "below the lowest sill of",
            hi > band_hi ? band_hi - SW_QC_PLAUSIBLE_M
                         : band_lo + SW_QC_PLAUSIBLE_M,
            s->scale == 1.0 ? "m" : "ft", s->offset_m);
}

int main(int argc, char **argv)
{
    static const struct {
        const char *name;
        int (*run)(int, char **);
        int writes; /* handles an interruption itself */
    } commands[] = {
        {"check", sw_cmd_check, 0},
        {"point", sw_cmd_point, 0},
        {"run", sw_cmd_run, 1},
        {"screen", sw_cmd_screen, 1},
        {"thresholds", sw_cmd_thresholds, 1},
        {"fleet", sw_cmd_fleet, 1},
        {"watch", sw_cmd_watch, 1},
    };

    /* Failures are reported through status codes, never by abort(). */
    gsl_set_error_handler_off();
    sw_cli_handle_signals();

    if (argc < 2) {
        fputs(usage_text, stderr);
        fputs(sw_cli_caution, stderr);
        return SW_EXIT_USAGE;
    }
    if (strcmp(argv[1], "-h") == 0 || strcmp(argv[1], "--help") == 0) {
        fputs(usage_text, stdout);
        fputs(sw_cli_caution, stdout);
        return SW_EXIT_OK;
    }
    if (strcmp(argv[1], "-V") == 0 || strcmp(argv[1], "--version") == 0) {
        return sw_cli_version();
    }
    for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
        if (strcmp(argv[1], commands[i].name) == 0) {
            int code = commands[i].run(argc - 1, argv + 1);
            /* the writing commands say so themselves; these write nothing */
            if (sw_cancel_requested() && !commands[i].writes)
                return sw_cli_interrupted(commands[i].name,
                                          "nothing was written");
            return code;
        }
    return sw_cli_usage_error(NULL, "unknown command '%s'", argv[1]);
}
