/* sillwatch: what the program's command files share (not part of the
 * library).  Only the program prints and exits. */
#ifndef SILLWATCH_CLI_H
#define SILLWATCH_CLI_H

#include <stdint.h>
#include <stdio.h>

#include "sillwatch/error.h"
#include "sillwatch/outfile.h"
#include "sillwatch/site.h"
#include "sillwatch/uncert.h"

/* Exit codes, documented in the README, the man page and --help. */
enum sw_exit {
    SW_EXIT_OK = 0,        /* ran; every gate held its margin */
    SW_EXIT_BELOW = 1,     /* ran; some gate was low or open */
    SW_EXIT_USAGE = 2,     /* the command line is wrong */
    SW_EXIT_SITE = 3,      /* the site file is unreadable or invalid */
    SW_EXIT_DATA = 4,      /* a level file is unreadable or invalid */
    SW_EXIT_OUTPUT = 5,    /* an output could not be written */
    SW_EXIT_NUMERIC = 6,   /* a numerical method failed (please report) */
    SW_EXIT_NOMEM = 7,     /* out of memory */
    SW_EXIT_INTERNAL = 8   /* a bug (please report) */
};

/* Install the handlers of SIGINT and SIGTERM: they ask the library to
 * stop (sillwatch/cancel.h); calls are not restarted. */
void sw_cli_handle_signals(void);

/* The exit code of an interrupted command: 128 + the signal (130 for
 * SIGINT, 143 for SIGTERM), as shells report a process killed by it. */
int sw_cli_interrupt_code(void);

/* Print "sillwatch: COMMAND: interrupted; WHAT" and return
 * sw_cli_interrupt_code(). */
int sw_cli_interrupted(const char *command, const char *what);

/* Before writing into `dir`: roll back an interrupted publish and remove
 * temporary files of processes that are gone (sw_outset_recover), saying
 * what was done on stderr unless `quiet`.  Returns SW_OK or SW_EOUTPUT. */
int sw_cli_recover(const char *dir, int quiet, sw_error *err);

/* The exit code for a library status. */
int sw_cli_exit_code(int status);

/* Print `err` to stderr as "sillwatch: file:line:col: message" (the
 * position parts only where known) and return its exit code. */
int sw_cli_report(const sw_error *err);

/* Print "sillwatch: COMMAND: message" and a hint to stderr; return
 * SW_EXIT_USAGE. */
int sw_cli_usage_error(const char *command, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 2, 3)))
#endif
    ;

/* Parse a level or other number from the command line: the whole string
 * must be a finite decimal number.  Returns 0 and stores it, or -1. */
int sw_cli_parse_number(const char *text, double *value);

/* `v`, or +0.0 where `v` would print as a zero with `decimals` digits
 * after the point (decimals < 0: only where v is a zero), so that no
 * "-0.0" is printed. */
double sw_cli_unsigned_zero(double v, int decimals);

/* Create the output folder `dir` if it does not exist.  Returns SW_OK, or
 * SW_EOUTPUT when it cannot be made or exists but is not a folder. */
int sw_cli_make_outdir(const char *dir, sw_error *err);

/* Split the output file's `path` into its folder (dir[n_dir]) and file
 * name for sw_outfile_open().  Returns 0, or -1 when the path names no
 * file ("", "dir/", ".", "..") or the folder does not fit. */
int sw_cli_split_path(const char *path, char *dir, size_t n_dir,
                      const char **name);

/* Start writing one output file `path` (split into `dir` and `name` by
 * sw_cli_split_path) through a temporary file (outfile.h), as
 * `thresholds -o` and `fleet -o` do: a folder at `path` is refused, a
 * missing `dir` is created (one level), anything but a regular file at
 * `path` is refused (and left alone), and `dir` is recovered
 * (sw_cli_recover, warnings unless `quiet`).  Returns SW_OK or
 * SW_EOUTPUT. */
int sw_cli_open_output_file(sw_outfile *out, const char *path,
                            const char *dir, const char *name, int quiet,
                            sw_error *err);

/* Several site files in one command: each site in outdir/<stem>/ (the
 * site file's name without its extension; two sites with one stem are a
 * usage error before anything runs), `one` called for each in a worker
 * process of its own (jobs.h), at most `jobs` at a time; its return is
 * the site's exit status. */
typedef struct sw_cli_sites {
    const char *command;    /* "run", "screen": for messages */
    const char *doing;      /* "replaying", "screening" */
    char *const *sites;
    size_t n_sites;
    const char *outdir;
    unsigned jobs;
    int quiet;
    int (*one)(size_t i, const char *site, const char *dir, void *ctx);
    /* NULL, or called when every site ran (not after a stop) with each
     * site's folder and exit status; returns an exit status that counts
     * towards the worst (after printing why) */
    int (*after)(char (*dir)[SW_ERROR_PATH_MAX], const int *status,
                 void *ctx);
    void *ctx;
} sw_cli_sites;

/* Run the sites as above, with progress on a terminal; list each site
 * with its exit status and the caution (unless quiet), name the failed
 * ones on standard error, then call `after`.  Returns the worst exit
 * status; after SIGINT or SIGTERM (passed on to the workers) the signal's
 * exit status. */
int sw_cli_many_sites(const sw_cli_sites *m);

/* After getopt_long, with more than one operand left: the site files
 * (argv[optind..argc)) into *sites, *n; a usage error (its exit code,
 * after printing why) without -o, with --series (n_series > 0) or with
 * '-' among them. */
int sw_cli_sites_operands(const char *command, int argc, char **argv,
                          const char *outdir, size_t n_series,
                          char *const **sites, size_t *n);

/* -j/--jobs N: 1 to 1024 workers.  Returns 0 or the usage exit code. */
int sw_cli_parse_jobs(const char *command, const char *arg, unsigned *jobs);

/* Apply --series NAME=FILE options (already checked to hold an '=') to
 * the site.  Returns 0, or the usage exit code after printing why. */
int sw_cli_apply_series(sw_site *site, const char *const *specs, size_t n,
                        const char *command);

/* Option parsing shared by the commands that take a site file and -o
 * OUTDIR (run, screen), after getopt_long:
 * sw_cli_take_series() checks a --series NAME=FILE and appends it to
 * specs[cap] (*n of them so far); sw_cli_option_error() reports a missing
 * value (opt ':') or an unknown option; sw_cli_site_operand() checks that
 * exactly one site file follows the options and that OUTDIR was given.
 * Each returns 0, or the usage exit code after printing why. */
int sw_cli_take_series(const char *command, const char *arg,
                       const char **specs, size_t *n, size_t cap);
int sw_cli_option_error(const char *command, int opt, char **argv);
int sw_cli_site_operand(const char *command, int argc, char **argv,
                        const char *outdir, const char **site_path);

/* SHA-256 of the file at `path` as 64 hex digits and a NUL (nettle).
 * Returns SW_OK, or SW_ESITE when it cannot be read. */
#define SW_CLI_SHA256_HEX SW_SHA256_HEX
int sw_cli_sha256_file(const char *path, char hex[SW_CLI_SHA256_HEX],
                       sw_error *err);

/* The site file's SHA-256 for a manifest: "" when it was read from
 * standard input (SW_SITE_STDIN_NAME), which cannot be read again. */
struct sw_site;
int sw_cli_site_sha256(const struct sw_site *site,
                       char hex[SW_CLI_SHA256_HEX], sw_error *err);

/* The generation time of a report as ISO 8601 UTC into buf[n]:
 * SOURCE_DATE_EPOCH when set (the reproducible-builds convention), else
 * now.  Returns 0, or -1 when SOURCE_DATE_EPOCH is malformed. */
int sw_cli_generation_time(char *buf, size_t n);

/* Print the version, copyright, licence and warranty lines (as GNU
 * programs do) to stdout; return SW_EXIT_OK.  `sillwatch --version` and
 * `sillwatch COMMAND --version` alike. */
int sw_cli_version(void);

/* The caution printed by --help and the reports. */
extern const char sw_cli_caution[];

/* Commands. */
/* Print one line saying on which basis the gates' factors of safety are
 * ("factor of safety on the net water load basis, R / D, for every gate",
 * or gate by gate where they differ). */
struct sw_site;
void sw_cli_print_fs_basis(const struct sw_site *site);
/* Warn on stderr that series `s` reaches lo..hi m, outside the plausible
 * band band_lo..band_hi of its gates (README: Quality control). */
void sw_cli_warn_implausible(const sw_site_series *s, double lo, double hi,
                             double band_lo, double band_hi);

/* The options of the commands that sample (src/cmd_samples.c): each
 * returns 0, or the usage exit code after printing why.  --samples N (1 to
 * SW_UNCERT_MAX_SAMPLES), --seed S (a whole number below 2^63), -j N (1 to
 * 1024). */
int sw_cli_take_samples(const char *command, const char *arg, size_t *n);
int sw_cli_take_seed(const char *command, const char *arg, uint64_t *seed);
int sw_cli_take_jobs(const char *command, const char *arg, unsigned *jobs);
/* The samples, the seed and each uncertain key with its value and X_sd,
 * each line starting with `prefix` ("" or "# "). */
void sw_cli_print_uncert(FILE *fp, const char *prefix, const sw_uncert *u,
                         size_t n_samples);

int sw_cmd_check(int argc, char **argv);
int sw_cmd_point(int argc, char **argv);
int sw_cmd_run(int argc, char **argv);
int sw_cmd_screen(int argc, char **argv);
int sw_cmd_thresholds(int argc, char **argv);
int sw_cmd_fleet(int argc, char **argv);
int sw_cmd_watch(int argc, char **argv);

#endif
