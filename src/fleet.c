/* sillwatch: the fleet table (see include/sillwatch/fleet.h). */
#include "sillwatch/fleet.h"

#include <errno.h>
#include <fcntl.h>
#include <inttypes.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <csv.h>
#include <nettle/sha2.h>

#include "sillwatch/cancel.h"
#include "sillwatch/csvout.h"
#include "sillwatch/decimal.h"
#include "sillwatch/outfile.h"
#include "sillwatch/report.h"

#define SUMMARY_NAME "summary.csv"
#define MANIFEST_COLUMNS 6
/* The largest manifest.csv read: a set has a handful of files. */
#define MANIFEST_MAX (1024L * 1024)
/* Fields kept per row; more are counted (and refused) but not stored. */
#define MAX_FIELDS 16
/* hours_below_margin: its field number in summary.csv (1-based). */
#define BELOW_FIELD 8

static const char *const manifest_columns[MANIFEST_COLUMNS] = {
    "file", "bytes", "sha256", "tool_version", "site_sha256", "run_time"};

/* ---- CSV rows with their lines ------------------------------------------
 * libcsv gives no positions, so the bytes are fed one at a time and the
 * line of each byte is counted here: a row's line is that of its first
 * byte, a field's that of the byte after the delimiter before it. */

typedef struct rows rows;
typedef int (*row_fn)(rows *r, void *ctx, sw_error *err);

struct rows {
    const char *path;             /* the file, for messages */
    struct csv_parser csv;
    char *text;                   /* the row's fields, each NUL-ended */
    size_t len, cap;
    size_t off[MAX_FIELDS];       /* where field k starts in text */
    long line_of[MAX_FIELDS + 1]; /* the line where field k starts */
    size_t n_fields;              /* fields of the row so far (all) */
    long line;                    /* the line of the byte being fed */
    int at_row_start;             /* no byte of the next row fed yet */
    row_fn on_row;
    void *ctx;
    sw_error *err;
    int status;                   /* SW_OK until a callback fails */
};

static int keep_blanks(unsigned char c)
{
    (void)c;
    return 0; /* no blank is trimmed: fields pass through as they are */
}

/* Field k (0-based, < MAX_FIELDS) of the current row, NUL-ended. */
static const char *field(const rows *r, size_t k)
{
    return r->text + r->off[k];
}

static void on_field(void *s, size_t len, void *data)
{
    rows *r = data;
    size_t k = r->n_fields++;

    if (r->status != SW_OK)
        return;
    if (k + 1 <= MAX_FIELDS)
        r->line_of[k + 1] = r->line;
    if (k >= MAX_FIELDS)
        return;
    if (len > 0 && memchr(s, '\0', len) != NULL) {
        r->status = sw_error_set(r->err, SW_EDATA, r->path, r->line_of[k],
                                 (long)k + 1, "the field holds a NUL byte");
        return;
    }
    if (r->len + len + 1 > r->cap) {
        size_t cap = r->cap > 0 ? r->cap : 256;
        while (cap < r->len + len + 1)
            cap *= 2;
        char *grown = realloc(r->text, cap);
        if (grown == NULL) {
            r->status = sw_error_set(r->err, SW_ENOMEM, r->path, r->line, 0,
                                     "out of memory");
            return;
        }
        r->text = grown;
        r->cap = cap;
    }
    r->off[k] = r->len;
    if (len > 0)
        memcpy(r->text + r->len, s, len);
    r->len += len;
    r->text[r->len++] = '\0';
}

static void on_row_end(int c, void *data)
{
    rows *r = data;
    (void)c;
    if (r->status == SW_OK)
        r->status = r->on_row(r, r->ctx, r->err);
    r->n_fields = 0;
    r->len = 0;
    r->at_row_start = 1;
}

/* Parse buf[0..n) as RFC 4180 CSV (strict), calling on_row(r, ctx) at the
 * end of every row.  Returns SW_OK or the first error. */
static int parse_rows(const char *path, const char *buf, size_t n,
                      row_fn on_row, void *ctx, sw_error *err)
{
    rows r;
    memset(&r, 0, sizeof r);
    r.path = path;
    r.line = 1;
    r.at_row_start = 1;
    r.on_row = on_row;
    r.ctx = ctx;
    r.err = err;
    if (csv_init(&r.csv, CSV_STRICT | CSV_STRICT_FINI) != 0)
        return sw_error_set(err, SW_ENOMEM, path, 0, 0, "out of memory");
    csv_set_space_func(&r.csv, keep_blanks);
    for (size_t i = 0; i < n && r.status == SW_OK; i++) {
        char c = buf[i];
        if (r.at_row_start && c != '\n' && c != '\r') {
            r.at_row_start = 0;
            r.line_of[0] = r.line;
        }
        if (csv_parse(&r.csv, &c, 1, on_field, on_row_end, &r) != 1 &&
            r.status == SW_OK)
            r.status = sw_error_set(
                err, csv_error(&r.csv) == CSV_ENOMEM ? SW_ENOMEM : SW_EDATA,
                path, r.line, (long)r.n_fields + 1, "malformed CSV: %s",
                csv_strerror(csv_error(&r.csv)));
        if (c == '\n')
            r.line++;
    }
    if (r.status == SW_OK &&
        csv_fini(&r.csv, on_field, on_row_end, &r) != 0 &&
        r.status == SW_OK)
        r.status = sw_error_set(
            err, SW_EDATA, path,
            r.n_fields < MAX_FIELDS ? r.line_of[r.n_fields] : r.line,
            (long)r.n_fields + 1, "a quoted field is not closed before the "
                                  "end of the file");
    csv_free(&r.csv);
    free(r.text);
    return r.status;
}

/* A field as shown in a message, into buf[n]: control bytes as '?', so
 * that a message stays on one line, and at most 40 bytes of it. */
static const char *shown(char *buf, size_t n, const char *text)
{
    size_t i = 0;
    for (; text[i] != '\0' && i < 40 && i + 4 < n; i++)
        buf[i] = (unsigned char)text[i] < 0x20 || text[i] == 0x7f ? '?'
                                                                 : text[i];
    if (text[i] != '\0' && i + 4 <= n) {
        memcpy(buf + i, "...", 3);
        i += 3;
    }
    buf[i] = '\0';
    return buf;
}

/* Check that the row is exactly the header cols[0..n). */
static int check_header(const rows *r, const char *const *cols, size_t n,
                        const char *what, sw_error *err)
{
    char buf[48];
    for (size_t k = 0; k < n && k < r->n_fields && k < MAX_FIELDS; k++)
        if (strcmp(field(r, k), cols[k]) != 0)
            return sw_error_set(err, SW_EDATA, r->path, r->line_of[k],
                                (long)k + 1,
                                "header field '%s' should be '%s' (%s)",
                                shown(buf, sizeof buf, field(r, k)), cols[k],
                                what);
    if (r->n_fields != n)
        return sw_error_set(err, SW_EDATA, r->path,
                            r->line_of[r->n_fields < n ? r->n_fields : n],
                            (long)(r->n_fields < n ? r->n_fields : n) + 1,
                            "the header has %zu fields, not the %zu of %s",
                            r->n_fields, n, what);
    return SW_OK;
}

/* A row must have n fields. */
static int check_count(const rows *r, size_t n, const char *what,
                       sw_error *err)
{
    size_t at = r->n_fields < n ? r->n_fields : n;
    if (r->n_fields == n)
        return SW_OK;
    return sw_error_set(err, SW_EDATA, r->path, r->line_of[at], (long)at + 1,
                        "the row has %zu fields, not the %zu of %s",
                        r->n_fields, n, what);
}

/* ---- files -------------------------------------------------------------- */

/* dir/name into buf[n], without doubling a slash.  -1 if too long. */
static int join(char *buf, size_t n, const char *dir, const char *name)
{
    size_t d = strlen(dir);
    while (d > 1 && dir[d - 1] == '/')
        d--;
    if (d > INT32_MAX)
        return -1;
    return (size_t)snprintf(buf, n, "%.*s/%s", (int)d, dir, name) >= n ? -1
                                                                       : 0;
}

/* Read the regular file `path` whole into *buf (NUL-ended; *n bytes) when
 * it holds at most `max` bytes.  `missing` is the message for ENOENT. */
static int read_whole(const char *path, long max, char **buf, size_t *n,
                      sw_error *err)
{
    struct stat sb;
    int fd = open(path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
    char *data;
    size_t got = 0;

    if (fd < 0)
        return sw_error_set(err, SW_EDATA, path, 0, 0, "cannot read: %s",
                            strerror(errno));
    if (fstat(fd, &sb) != 0 || !S_ISREG(sb.st_mode)) {
        close(fd);
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "is not a regular file");
    }
    if (sb.st_size > max) {
        close(fd);
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "is larger than %ld bytes", max);
    }
    /* one byte more than its size, to see it grow */
    data = malloc((size_t)sb.st_size + 2);
    if (data == NULL) {
        close(fd);
        return sw_error_set(err, SW_ENOMEM, path, 0, 0, "out of memory");
    }
    for (;;) {
        ssize_t r = read(fd, data + got, (size_t)sb.st_size + 1 - got);
        if (r < 0 && errno == EINTR)
            continue;
        if (r < 0) {
            int e = errno;
            close(fd);
            free(data);
            return sw_error_set(err, SW_EDATA, path, 0, 0, "cannot read: %s",
                                strerror(e));
        }
        got += (size_t)r;
        if (r == 0 || got > (size_t)sb.st_size)
            break;
    }
    close(fd);
    if (got != (size_t)sb.st_size) {
        free(data);
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "changed while it was read");
    }
    data[got] = '\0';
    *buf = data;
    *n = got;
    return SW_OK;
}

static void sha256_hex(const char *buf, size_t n, char hex[65])
{
    struct sha256_ctx ctx;
    uint8_t digest[SHA256_DIGEST_SIZE];
    sha256_init(&ctx);
    sha256_update(&ctx, n, (const uint8_t *)buf);
    sha256_digest(&ctx, SHA256_DIGEST_SIZE, digest);
    for (size_t i = 0; i < SHA256_DIGEST_SIZE; i++)
        snprintf(hex + 2 * i, 3, "%02x", digest[i]);
}

static int is_sha256(const char *s)
{
    size_t n = strspn(s, "0123456789abcdef");
    return n == 64 && s[n] == '\0';
}

/* ---- the manifest ------------------------------------------------------- */

typedef struct listed {
    char name[SW_FLEET_NAME_MAX];
    uint64_t bytes;
    char sha256[65];
    long line;
} listed;

typedef struct manifest {
    listed *files;
    size_t n, cap;
    char site_sha256[65];
    long first_line; /* the first row's line, 0 before it */
    int seen_header;
} manifest;

/* A size in bytes: decimal digits only, within uint64_t. */
static int parse_bytes(const char *s, uint64_t *v)
{
    uint64_t x = 0;
    if (*s == '\0')
        return -1;
    for (; *s != '\0'; s++) {
        if (*s < '0' || *s > '9' || x > (UINT64_MAX - 9) / 10)
            return -1;
        x = x * 10 + (uint64_t)(*s - '0');
    }
    *v = x;
    return 0;
}

/* A name an output set can hold: one path component. */
static int is_plain_name(const char *s)
{
    return *s != '\0' && strchr(s, '/') == NULL && strcmp(s, ".") != 0 &&
           strcmp(s, "..") != 0 && strlen(s) < SW_FLEET_NAME_MAX;
}

static int take_listed(rows *r, manifest *m, sw_error *err)
{
    listed *f;
    const char *name = field(r, 0);
    char buf[48];

    if (!is_plain_name(name))
        return sw_error_set(err, SW_EDATA, r->path, r->line_of[0], 1,
                            "'%s' is not the name of a file of an output "
                            "set", shown(buf, sizeof buf, name));
    for (size_t i = 0; i < m->n; i++)
        if (strcmp(m->files[i].name, name) == 0)
            return sw_error_set(err, SW_EDATA, r->path, r->line_of[0], 1,
                                "lists '%s' twice (also on line %ld)",
                                shown(buf, sizeof buf, name),
                                m->files[i].line);
    if (m->n == m->cap) {
        size_t cap = m->cap > 0 ? 2 * m->cap : 8;
        listed *grown = realloc(m->files, cap * sizeof *grown);
        if (grown == NULL)
            return sw_error_set(err, SW_ENOMEM, r->path, r->line_of[0], 0,
                                "out of memory");
        m->files = grown;
        m->cap = cap;
    }
    f = &m->files[m->n];
    snprintf(f->name, sizeof f->name, "%s", name);
    if (parse_bytes(field(r, 1), &f->bytes) != 0)
        return sw_error_set(err, SW_EDATA, r->path, r->line_of[1], 2,
                            "'%s' is not a size in bytes",
                            shown(buf, sizeof buf, field(r, 1)));
    if (!is_sha256(field(r, 2)))
        return sw_error_set(err, SW_EDATA, r->path, r->line_of[2], 3,
                            "'%s' is not a SHA-256 (64 hex digits)",
                            shown(buf, sizeof buf, field(r, 2)));
    snprintf(f->sha256, sizeof f->sha256, "%s", field(r, 2));
    f->line = r->line_of[0];
    m->n++;
    return SW_OK;
}

static int on_manifest_row(rows *r, void *ctx, sw_error *err)
{
    manifest *m = ctx;
    const char *site;
    char buf[48];
    int rc;

    if (!m->seen_header) {
        m->seen_header = 1;
        return check_header(r, manifest_columns, MANIFEST_COLUMNS,
                            "a manifest: file,bytes,sha256,tool_version,"
                            "site_sha256,run_time",
                            err);
    }
    if ((rc = check_count(r, MANIFEST_COLUMNS, "a manifest row", err)) !=
            SW_OK ||
        (rc = take_listed(r, m, err)) != SW_OK)
        return rc;
    site = field(r, 4);
    if (site[0] != '\0' && !is_sha256(site))
        return sw_error_set(err, SW_EDATA, r->path, r->line_of[4], 5,
                            "'%s' is neither a SHA-256 (64 hex digits) nor "
                            "empty", shown(buf, sizeof buf, site));
    if (m->first_line == 0) {
        m->first_line = r->line_of[0];
        snprintf(m->site_sha256, sizeof m->site_sha256, "%s", site);
    } else if (strcmp(site, m->site_sha256) != 0) {
        return sw_error_set(err, SW_EDATA, r->path, r->line_of[4], 5,
                            "the site file's SHA-256 differs from line "
                            "%ld's: the rows are not of one set",
                            m->first_line);
    }
    return SW_OK;
}

/* Every file the manifest lists is in `dir`, regular, of its size. */
static int check_listed(const char *dir, const char *mpath,
                        const manifest *m, sw_error *err)
{
    for (size_t i = 0; i < m->n; i++) {
        const listed *f = &m->files[i];
        char path[SW_ERROR_PATH_MAX];
        struct stat sb;

        if (join(path, sizeof path, dir, f->name) != 0)
            return sw_error_set(err, SW_EDATA, dir, 0, 0,
                                "the path is too long");
        if (lstat(path, &sb) != 0)
            return sw_error_set(err, SW_EDATA, mpath, f->line, 1,
                                "lists %s, which is not in the folder "
                                "(%s): the set is not complete",
                                f->name, strerror(errno));
        if (!S_ISREG(sb.st_mode))
            return sw_error_set(err, SW_EDATA, mpath, f->line, 1,
                                "lists %s, which is not a regular file in "
                                "the folder",
                                f->name);
        if ((uint64_t)sb.st_size != f->bytes)
            return sw_error_set(err, SW_EDATA, mpath, f->line, 2,
                                "lists %s with %" PRIu64 " bytes, but it has "
                                "%" PRIu64 ": the set is not complete, or "
                                "was changed after the run",
                                f->name, f->bytes, (uint64_t)sb.st_size);
    }
    return SW_OK;
}

/* The folder, its manifest, and the files it lists.  On SW_OK, *summary
 * points into m->files at summary.csv's entry. */
static int read_manifest(const char *dir, manifest *m, const listed **summary,
                         sw_error *err)
{
    char mpath[SW_ERROR_PATH_MAX];
    struct stat sb;
    char *buf = NULL;
    size_t n = 0;
    int rc;

    if (stat(dir, &sb) != 0)
        return sw_error_set(err, SW_EDATA, dir, 0, 0,
                            "cannot open the folder: %s", strerror(errno));
    if (!S_ISDIR(sb.st_mode))
        return sw_error_set(err, SW_EDATA, dir, 0, 0,
                            "is not a folder: give the output folder of "
                            "'sillwatch run'");
    if (join(mpath, sizeof mpath, dir, SW_OUTSET_MANIFEST) != 0)
        return sw_error_set(err, SW_EDATA, dir, 0, 0, "the path is too long");
    if (lstat(mpath, &sb) != 0 && errno == ENOENT)
        return sw_error_set(err, SW_EDATA, dir, 0, 0,
                            "holds no manifest.csv, so no complete output "
                            "set (a run that failed or was cut short, or "
                            "files older than manifests): run the site "
                            "again");
    if ((rc = read_whole(mpath, MANIFEST_MAX, &buf, &n, err)) != SW_OK)
        return rc;
    rc = parse_rows(mpath, buf, n, on_manifest_row, m, err);
    free(buf);
    if (rc == SW_OK && !m->seen_header)
        rc = sw_error_set(err, SW_EDATA, mpath, 0, 0,
                          "is empty: no header line");
    if (rc != SW_OK || (rc = check_listed(dir, mpath, m, err)) != SW_OK)
        return rc;
    for (size_t i = 0; i < m->n; i++)
        if (strcmp(m->files[i].name, SUMMARY_NAME) == 0) {
            *summary = &m->files[i];
            return SW_OK;
        }
    return sw_error_set(err, SW_EDATA, mpath, 0, 0,
                        "does not list summary.csv: not an output set of "
                        "'sillwatch run'");
}

/* ---- summary.csv -------------------------------------------------------- */

typedef struct summary {
    const char *cols[SW_FLEET_SUMMARY_COLUMNS]; /* the expected header */
    char header[512];                          /* their text */
    int seen_header;
    FILE *out;           /* the rendered rows (memory) */
    sw_fleet_site *site; /* name and SHA-256 in; counts out */
} summary;

/* The header of summary.csv as its writer puts it, split into fields. */
static int expected_columns(summary *s, sw_error *err)
{
    FILE *fp;
    size_t k = 0;
    char *tok;

    memset(s->header, 0, sizeof s->header);
    fp = fmemopen(s->header, sizeof s->header - 1, "w");
    if (fp == NULL)
        return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
    sw_report_summary_header(fp);
    fclose(fp);
    s->header[strcspn(s->header, "\n")] = '\0';
    for (tok = s->header; tok != NULL; k++) {
        char *comma = strchr(tok, ',');
        if (k < SW_FLEET_SUMMARY_COLUMNS)
            s->cols[k] = tok;
        if (comma != NULL)
            *comma = '\0';
        tok = comma != NULL ? comma + 1 : NULL;
    }
    if (k != SW_FLEET_SUMMARY_COLUMNS)
        return sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                            "summary.csv's header has %zu columns, not %d",
                            k, SW_FLEET_SUMMARY_COLUMNS);
    return SW_OK;
}

static int on_summary_row(rows *r, void *ctx, sw_error *err)
{
    summary *s = ctx;
    const char *below;
    char buf[48];
    double hours;
    int rc;

    if (!s->seen_header) {
        s->seen_header = 1;
        return check_header(r, s->cols, SW_FLEET_SUMMARY_COLUMNS,
                            "summary.csv of this version of sillwatch",
                            err);
    }
    if ((rc = check_count(r, SW_FLEET_SUMMARY_COLUMNS, "summary.csv",
                          err)) != SW_OK)
        return rc;
    below = field(r, BELOW_FIELD - 1);
    if (sw_decimal_parse(below, strlen(below), 0, &hours) != 0 ||
        !(hours >= 0.0))
        return sw_error_set(err, SW_EDATA, r->path,
                            r->line_of[BELOW_FIELD - 1], BELOW_FIELD,
                            "hours_below_margin '%s' is not a number of "
                            "hours >= 0",
                            shown(buf, sizeof buf, below));
    s->site->n_gates++;
    s->site->n_below += hours > 0.0;
    sw_csv_put_field(s->out, s->site->name);
    fputc(',', s->out);
    fputs(s->site->site_sha256, s->out);
    for (size_t k = 0; k < SW_FLEET_SUMMARY_COLUMNS; k++) {
        fputc(',', s->out);
        sw_csv_put_field(s->out, field(r, k));
    }
    fputc('\n', s->out);
    return SW_OK;
}

/* Read summary.csv, check it against its manifest entry and render its
 * rows into s->out. */
static int read_summary(const char *dir, const listed *entry, summary *s,
                        sw_error *err)
{
    char path[SW_ERROR_PATH_MAX], hex[65];
    char *buf = NULL;
    size_t n = 0;
    int rc;

    if (join(path, sizeof path, dir, SUMMARY_NAME) != 0)
        return sw_error_set(err, SW_EDATA, dir, 0, 0, "the path is too long");
    if ((rc = read_whole(path, SW_FLEET_SUMMARY_MAX, &buf, &n, err)) != SW_OK)
        return rc;
    sha256_hex(buf, n, hex);
    if ((uint64_t)n != entry->bytes || strcmp(hex, entry->sha256) != 0)
        rc = sw_error_set(err, SW_EDATA, path, 0, 0,
                          "does not match its SHA-256 in manifest.csv (line "
                          "%ld): it was changed after the run",
                          entry->line);
    else if ((rc = parse_rows(path, buf, n, on_summary_row, s, err)) ==
                 SW_OK &&
             !s->seen_header)
        rc = sw_error_set(err, SW_EDATA, path, 0, 0,
                          "is empty: no header line");
    free(buf);
    return rc;
}

/* ---- the table ---------------------------------------------------------- */

int sw_fleet_site_name(const char *dir, char *name, size_t n, sw_error *err)
{
    size_t end = strlen(dir), start;

    while (end > 0 && dir[end - 1] == '/')
        end--;
    start = end;
    while (start > 0 && dir[start - 1] != '/')
        start--;
    if (end == start || (end - start == 1 && dir[start] == '.') ||
        (end - start == 2 && dir[start] == '.' && dir[start + 1] == '.'))
        return sw_error_set(err, SW_EUSAGE, dir, 0, 0,
                            "the folder's path ends in no name to give the "
                            "site: give it by its name (as ../NAME)");
    if (end - start >= n)
        return sw_error_set(err, SW_EUSAGE, dir, 0, 0,
                            "the folder's name is longer than %zu bytes",
                            n > 0 ? n - 1 : 0);
    memcpy(name, dir + start, end - start);
    name[end - start] = '\0';
    return SW_OK;
}

int sw_fleet_check_names(const char *const *dirs, size_t n, sw_error *err)
{
    char a[SW_FLEET_NAME_MAX], b[SW_FLEET_NAME_MAX];
    int rc;

    for (size_t i = 0; i < n; i++) {
        if ((rc = sw_fleet_site_name(dirs[i], a, sizeof a, err)) != SW_OK)
            return rc;
        for (size_t j = 0; j < i; j++) {
            if (sw_fleet_site_name(dirs[j], b, sizeof b, err) != SW_OK)
                return SW_EUSAGE;
            if (strcmp(a, b) == 0)
                return sw_error_set(err, SW_EUSAGE, dirs[i], 0, 0,
                                    "has the site name '%s', as %s before "
                                    "it: each site needs its own name in "
                                    "the fleet table",
                                    a, dirs[j]);
        }
    }
    return SW_OK;
}

void sw_fleet_write_header(FILE *out)
{
    fputs("site,site_sha256,", out);
    sw_report_summary_header(out);
}

int sw_fleet_write_site(FILE *out, const char *dir, sw_fleet_site *site,
                        sw_error *err)
{
    manifest m;
    summary s;
    sw_fleet_site got;
    const listed *entry = NULL;
    char *rendered = NULL;
    size_t size = 0;
    int rc;

    memset(&m, 0, sizeof m);
    memset(&s, 0, sizeof s);
    memset(&got, 0, sizeof got);
    if ((rc = sw_fleet_site_name(dir, got.name, sizeof got.name, err)) !=
            SW_OK ||
        (rc = expected_columns(&s, err)) != SW_OK)
        return rc;
    if ((rc = read_manifest(dir, &m, &entry, err)) != SW_OK)
        goto done;
    snprintf(got.site_sha256, sizeof got.site_sha256, "%s", m.site_sha256);
    s.site = &got;
    if ((s.out = open_memstream(&rendered, &size)) == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, dir, 0, 0, "out of memory");
        goto done;
    }
    rc = read_summary(dir, entry, &s, err);
    if (fclose(s.out) != 0 && rc == SW_OK)
        rc = sw_error_set(err, SW_ENOMEM, dir, 0, 0, "out of memory");
    if (rc == SW_OK) {
        fwrite(rendered, 1, size, out);
        if (site != NULL)
            *site = got;
    }
done:
    free(rendered);
    free(m.files);
    return rc;
}

int sw_fleet_write(FILE *out, const char *const *dirs, size_t n,
                   sw_error *err)
{
    int rc = sw_fleet_check_names(dirs, n, err);
    if (rc != SW_OK)
        return rc;
    sw_fleet_write_header(out);
    for (size_t i = 0; i < n; i++)
        if ((rc = sw_cancel_check(err)) != SW_OK ||
            (rc = sw_fleet_write_site(out, dirs[i], NULL, err)) != SW_OK)
            return rc;
    return SW_OK;
}

/* Whether an earlier folder of the list has the site name `name`. */
static int name_taken(const char *const *dirs, size_t i, const char *name,
                      size_t *which)
{
    char other[SW_FLEET_NAME_MAX];
    for (size_t j = 0; j < i; j++)
        if (sw_fleet_site_name(dirs[j], other, sizeof other, NULL) == SW_OK &&
            strcmp(other, name) == 0) {
            *which = j;
            return 1;
        }
    return 0;
}

int sw_fleet_write_each(FILE *out, const char *const *dirs, size_t n,
                        sw_fleet_entry *entries, sw_error *err)
{
    int rc;

    sw_fleet_write_header(out);
    for (size_t i = 0; i < n; i++) {
        sw_fleet_entry *e = &entries[i];
        char name[SW_FLEET_NAME_MAX];
        size_t j;

        memset(e, 0, sizeof *e);
        if ((rc = sw_cancel_check(err)) != SW_OK)
            return rc;
        if ((e->status = sw_fleet_site_name(dirs[i], name, sizeof name,
                                            &e->err)) != SW_OK)
            continue;
        if (name_taken(dirs, i, name, &j)) {
            e->status = sw_error_set(&e->err, SW_EUSAGE, dirs[i], 0, 0,
                                     "has the site name '%s', as %s before "
                                     "it: left out of the fleet table",
                                     name, dirs[j]);
            continue;
        }
        e->status = sw_fleet_write_site(out, dirs[i], &e->site, &e->err);
        if (e->status == SW_ENOMEM || e->status == SW_EINTERNAL) {
            if (err != NULL)
                *err = e->err;
            return e->status;
        }
    }
    return SW_OK;
}
