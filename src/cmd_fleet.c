/* sillwatch fleet: the summaries of many sites' runs in one table. */
#define _DEFAULT_SOURCE /* getopt_long, open_memstream */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "sillwatch/cancel.h"
#include "sillwatch/fleet.h"
#include "sillwatch/outfile.h"

static const char fleet_help[] =
    "Usage: sillwatch fleet DIR... -o FILE [--quiet]\n"
    "Put the summaries of many sites in one table.  Each DIR is an output\n"
    "folder of 'sillwatch run' (one site); FILE gets one row per site and\n"
    "gate: site (the folder's name), site_sha256 (the site file's SHA-256\n"
    "from the folder's manifest.csv), then the columns of summary.csv as\n"
    "they are.\n"
    "\n"
    "  -o, --output FILE   the CSV file, written whole or not at all; '-'\n"
    "                      for standard output\n"
    "  -q, --quiet         print nothing but errors\n"
    "  -h, --help          show this help and exit\n"
    "      --version       show the version and exit\n"
    "\n"
    "Each folder must hold one complete set: manifest.csv, every file it\n"
    "lists with its listed size, and summary.csv with its listed SHA-256.\n"
    "Two folders with the same name are refused.\n"
    "\n"
    "Exit status: 0 every gate of every site held its margin, 1 some gate\n"
    "was below its margin for some time, 2 usage (two folders of one\n"
    "name), 4 a folder is incomplete or its summary.csv is invalid,\n"
    "5 output, 130 (SIGINT) or 143 (SIGTERM) interrupted; see\n"
    "'sillwatch --help'.\n"
    "\n";

typedef struct fleet_opts {
    const char *output;
    int quiet;
    const char *const *dirs;
    size_t n_dirs;
} fleet_opts;

/* Parse the command line into *o.  Returns 0 to go on, -1 after --help
 * or --version, or an exit code. */
static int parse_args(int argc, char **argv, fleet_opts *o)
{
    static const struct option opts[] = {
        {"output", required_argument, NULL, 'o'},
        {"quiet", no_argument, NULL, 'q'},
        {"help", no_argument, NULL, 'h'},
        {"version", no_argument, NULL, 'V'},
        {NULL, 0, NULL, 0},
    };
    int opt;

    memset(o, 0, sizeof *o);
    opterr = 0;
    while ((opt = getopt_long(argc, argv, ":ho:q", opts, NULL)) != -1) {
        switch (opt) {
        case 'o':
            if (o->output != NULL)
                return sw_cli_usage_error("fleet", "-o given twice");
            o->output = optarg;
            break;
        case 'q':
            o->quiet = 1;
            break;
        case 'V':
            sw_cli_version();
            return -1;
        case 'h':
            fputs(fleet_help, stdout);
            fputs(sw_cli_caution, stdout);
            return -1;
        default:
            return sw_cli_option_error("fleet", opt, argv);
        }
    }
    if (optind >= argc)
        return sw_cli_usage_error("fleet", "give the output folders of "
                                           "'sillwatch run', one per site");
    if (o->output == NULL)
        return sw_cli_usage_error("fleet", "give the output file with -o "
                                           "FILE");
    o->dirs = (const char *const *)(argv + optind);
    o->n_dirs = (size_t)(argc - optind);
    return 0;
}

/* The closing lines: the file, the sites and gates, and each site with a
 * gate below its margin. */
static void print_totals(FILE *msg, const char *where,
                         const sw_fleet_site *sites, size_t n)
{
    size_t gates = 0, below = 0, sites_below = 0;

    for (size_t i = 0; i < n; i++) {
        gates += sites[i].n_gates;
        below += sites[i].n_below;
        sites_below += sites[i].n_below > 0;
    }
    fprintf(msg, "wrote %s: %zu site%s, %zu gate%s\n", where, n,
            n == 1 ? "" : "s", gates, gates == 1 ? "" : "s");
    if (below == 0) {
        fputs("every gate held its required margin\n", msg);
    } else {
        fprintf(msg, "below the required margin for some time: %zu gate%s "
                     "at %zu site%s\n",
                below, below == 1 ? "" : "s", sites_below,
                sites_below == 1 ? "" : "s");
        for (size_t i = 0; i < n; i++)
            if (sites[i].n_below > 0)
                fprintf(msg, "  %s: %zu of %zu gate%s\n", sites[i].name,
                        sites[i].n_below, sites[i].n_gates,
                        sites[i].n_gates == 1 ? "" : "s");
    }
    fputs(sw_cli_caution, msg);
}

/* Write the table to fp, the names already checked: the header, then
 * each folder, whose counts go to sites[i] (fleet.h). */
static int write_table(FILE *fp, const fleet_opts *o, sw_fleet_site *sites,
                       sw_error *err)
{
    int rc;
    sw_fleet_write_header(fp);
    for (size_t i = 0; i < o->n_dirs; i++)
        if ((rc = sw_cancel_check(err)) != SW_OK ||
            (rc = sw_fleet_write_site(fp, o->dirs[i], &sites[i], err)) !=
                SW_OK)
            return rc;
    return SW_OK;
}

/* The table to standard output, only when it is whole: it is made in
 * memory first (a summary row is some 200 bytes). */
static int table_to_stdout(const fleet_opts *o, sw_fleet_site *sites,
                           sw_error *err)
{
    char *table = NULL;
    size_t size = 0;
    FILE *mem = open_memstream(&table, &size);
    int rc;

    if (mem == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    rc = write_table(mem, o, sites, err);
    if (fclose(mem) != 0 && rc == SW_OK)
        rc = sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    if (rc == SW_OK && (fwrite(table, 1, size, stdout) != size ||
                        fflush(stdout) != 0 || ferror(stdout)))
        rc = sw_error_set(err, SW_EOUTPUT, NULL, 0, 0,
                          "cannot write the table to standard output");
    free(table);
    return rc;
}

/* The table to the file o->output (`name` in `dir`), through a temporary
 * file renamed over it when whole (outfile.h); on error the temporary
 * file is removed. */
static int table_to_file(const fleet_opts *o, const char *dir,
                         const char *name, sw_fleet_site *sites,
                         sw_error *err)
{
    sw_outfile out;
    int rc;

    memset(&out, 0, sizeof out);
    if ((rc = sw_cli_open_output_file(&out, o->output, dir, name, o->quiet,
                                      err)) != SW_OK ||
        (rc = write_table(out.fp, o, sites, err)) != SW_OK ||
        (rc = sw_outfile_close(&out, err)) != SW_OK ||
        (rc = sw_cancel_check(err)) != SW_OK ||
        (rc = sw_outfile_publish(&out, err)) != SW_OK)
        sw_outfile_abort(&out);
    return rc;
}

int sw_cmd_fleet(int argc, char **argv)
{
    fleet_opts o;
    sw_error err;
    sw_fleet_site *sites;
    char dir[SW_ERROR_PATH_MAX];
    const char *name = NULL;
    size_t below = 0;
    int rc;

    if ((rc = parse_args(argc, argv, &o)) != 0)
        return rc < 0 ? SW_EXIT_OK : rc;
    const int to_stdout = strcmp(o.output, "-") == 0;
    if (!to_stdout && sw_cli_split_path(o.output, dir, sizeof dir, &name) != 0)
        return sw_cli_usage_error("fleet", "-o: '%s' does not name a file",
                                  o.output);
    if ((sites = calloc(o.n_dirs, sizeof *sites)) == NULL) {
        sw_error_set(&err, SW_ENOMEM, NULL, 0, 0, "out of memory");
        return sw_cli_report(&err);
    }
    /* names first: a doubled name shows before the output is touched */
    if ((rc = sw_fleet_check_names(o.dirs, o.n_dirs, &err)) == SW_OK)
        rc = to_stdout ? table_to_stdout(&o, sites, &err)
                       : table_to_file(&o, dir, name, sites, &err);
    if (rc == SW_OK) {
        for (size_t i = 0; i < o.n_dirs; i++)
            below += sites[i].n_below;
        if (!o.quiet) /* stdout holds the table with -o - */
            print_totals(to_stdout ? stderr : stdout,
                         to_stdout ? "standard output" : o.output, sites,
                         o.n_dirs);
    }
    free(sites);
    if (rc == SW_EINTERRUPTED) {
        char what[SW_ERROR_PATH_MAX + 32];
        snprintf(what, sizeof what, "%s is left as it was", o.output);
        return sw_cli_interrupted(
            "fleet", to_stdout ? "nothing was written to standard output"
                               : what);
    }
    if (rc != SW_OK)
        return sw_cli_report(&err);
    if (fflush(stdout) != 0 || ferror(stdout)) {
        fprintf(stderr, "sillwatch: fleet: could not write the output\n");
        return SW_EXIT_OUTPUT;
    }
    return below > 0 ? SW_EXIT_BELOW : SW_EXIT_OK;
}
