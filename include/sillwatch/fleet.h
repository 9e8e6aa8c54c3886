/* sillwatch: the fleet table, one file for many sites.
 *
 * Each site's replay (`sillwatch run`) leaves an output set in a folder:
 * summary.csv (one row per gate) and, written last, manifest.csv (each
 * file of the set with its size and SHA-256, and the site file's SHA-256;
 * see outfile.h).  The fleet table, fleet.csv, puts the summaries of many
 * such folders one after the other:
 *
 *   site,site_sha256,gate,start,end,hours_evaluated,...,min_fs_time
 *
 * one row per site and gate: `site` is the folder's last path component
 * (the site file's stem when the folders were made per site file),
 * `site_sha256` the site file's SHA-256 from the folder's manifest (empty
 * where the site file came from standard input), then every column of
 * summary.csv exactly as sw_report_summary_header() writes it.  The fields
 * of summary.csv pass through byte for byte: read with libcsv (RFC 4180,
 * strict, no blanks trimmed), written with sw_csv_put_field() (csvout.h),
 * so a field that was quoted is quoted again.  Rows keep the order of the
 * folders given and, within a folder, the order of summary.csv.
 *
 * A folder is taken only when it holds one complete set:
 *   - manifest.csv is there, a regular file, with the header `run` writes
 *     and well-formed rows (a name, a size in bytes, 64 hex digits, the
 *     same site SHA-256 on every row);
 *   - every file it lists is there, a regular file of the listed size;
 *   - it lists summary.csv, whose bytes match the listed SHA-256 (so the
 *     rows are those the manifest vouches for); the other files are
 *     checked by size only (steps.csv may be large);
 *   - summary.csv starts with exactly the header of summary.csv, and each
 *     row has its 12 fields, hours_below_margin a number >= 0.
 * Errors are SW_EDATA naming the folder, or file:line:column (column = the
 * field's number, 1-based) within manifest.csv or summary.csv.
 *
 * Memory: one folder's manifest and summary.csv at a time (a summary has
 * one row per gate), and nothing that grows with the length of a series.
 * The library prints nothing: a caller that merges many folders decides
 * what to say about a folder that fails (sw_fleet_write_each()).
 */
#ifndef SILLWATCH_FLEET_H
#define SILLWATCH_FLEET_H

#include <stddef.h>
#include <stdio.h>

#include "sillwatch/error.h"

/* The columns of summary.csv, and of fleet.csv after site, site_sha256. */
#define SW_FLEET_SUMMARY_COLUMNS 12
/* The longest site name (a path component), with its NUL. */
#define SW_FLEET_NAME_MAX 256
/* The largest summary.csv read (bytes): about 400,000 gates. */
#define SW_FLEET_SUMMARY_MAX (64L * 1024 * 1024)

/* What one folder contributed. */
typedef struct sw_fleet_site {
    char name[SW_FLEET_NAME_MAX]; /* the folder's last path component */
    char site_sha256[65];         /* 64 hex digits, or "" (standard input) */
    size_t n_gates;               /* rows of summary.csv */
    size_t n_below;               /* of them, gates with hours_below_margin
                                     > 0 (below their margin some time) */
} sw_fleet_site;

/* The site name of result folder `dir` into name[n]: its last path
 * component, trailing slashes ignored ("out/north/" gives "north").
 * Returns SW_OK, or SW_EUSAGE when `dir` has no such component ("", "/",
 * "." or "..": give the folder by its name) or it does not fit in n. */
int sw_fleet_site_name(const char *dir, char *name, size_t n, sw_error *err);

/* SW_OK when the site names of dirs[0..n) are distinct; SW_EUSAGE
 * otherwise, naming the later folder and the earlier one of the same name
 * (or the folder whose name sw_fleet_site_name() refuses). */
int sw_fleet_check_names(const char *const *dirs, size_t n, sw_error *err);

/* Write fleet.csv's header line ("site,site_sha256,gate,...\n") to `out`.
 * Write errors are left to the stream (as for every CSV writer here:
 * sw_outfile_close() or the caller's fflush() catches them). */
void sw_fleet_write_header(FILE *out);

/* Check result folder `dir` as described above and append its rows to
 * `out`.  Nothing at all is written unless the whole folder is good: the
 * rows are rendered in memory first.  On SW_OK, *site (may be NULL) says
 * what was added.  Errors: SW_EDATA (the folder, its manifest or its
 * summary: see above), SW_EUSAGE (no site name, sw_fleet_site_name()),
 * SW_ENOMEM, SW_EINTERNAL.  Write errors on `out` are left to the
 * stream. */
int sw_fleet_write_site(FILE *out, const char *dir, sw_fleet_site *site,
                        sw_error *err);

/* The whole table: the site names are checked first (nothing is written
 * when two folders share one), then the header and each folder in order.
 * The first folder that fails stops it, with that folder's error; what was
 * written by then is incomplete, so write to a temporary file (outfile.h)
 * and abort it on error.  Also SW_EINTERRUPTED when a stop is requested
 * (cancel.h) between two folders. */
int sw_fleet_write(FILE *out, const char *const *dirs, size_t n,
                   sw_error *err);

/* The outcome of one folder in sw_fleet_write_each(). */
typedef struct sw_fleet_entry {
    int status;         /* SW_OK: its rows are in the table; else why not */
    sw_error err;       /* the folder's error when status != SW_OK */
    sw_fleet_site site; /* what it added when status == SW_OK */
} sw_fleet_entry;

/* The table of the folders that are good, for callers that go on past a
 * bad one (a run over many sites, some of which failed): the header, then
 * each folder of dirs[0..n) in order; a folder that fails, or whose site
 * name an earlier folder in the list already has (SW_EUSAGE), is left out
 * without a byte written for it, and entries[i] (caller-owned, n of them)
 * says what happened to dirs[i] so that the caller can list the folders
 * left out.  Returns SW_OK when the table is written (the header alone if
 * every folder was left out); SW_ENOMEM, SW_EINTERNAL or SW_EINTERRUPTED
 * stop the whole table (then as for sw_fleet_write()). */
int sw_fleet_write_each(FILE *out, const char *const *dirs, size_t n,
                        sw_fleet_entry *entries, sw_error *err);

#endif
