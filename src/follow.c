/* sillwatch: a level file followed into a mirror (see
 * include/sillwatch/follow.h). */
#include "sillwatch/follow.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <nettle/sha2.h>

#include "sillwatch/series.h"

#define CHUNK (64u * 1024u)
/* The bytes before the read position compared with the mirror's at each
 * poll: a file truncated and written again past that position between two
 * polls shows there. */
#define TAIL_CHECK 256u

struct sw_follow {
    const sw_site *site;
    const sw_site_series *series;
    char mirror[SW_ERROR_PATH_MAX];
    char scratch[SW_ERROR_PATH_MAX];
    int fd;        /* the level file, -1 when none is open */
    int mfd;       /* the mirror, appending */
    sw_follow_pos pos;
    char *buf;     /* CHUNK bytes */
};

/* ---- records ------------------------------------------------------------ */

/* Where a scan of bytes stands (from a record boundary). */
typedef struct scan {
    int line_start, in_quote, in_comment;
} scan;

/* Scan bytes[0..n), returning the end of the last complete record in it
 * (0 when none ends there), the state carried on. */
static size_t scan_bytes(scan *s, const char *bytes, size_t n)
{
    size_t end = 0;
    for (size_t i = 0; i < n; i++) {
        char c = bytes[i];
        if (s->line_start && !s->in_quote)
            s->in_comment = c == '#';
        s->line_start = 0;
        if (c == '\n') {
            s->line_start = 1;
            if (s->in_comment || !s->in_quote) {
                s->in_comment = 0;
                end = i + 1;
            }
        } else if (c == '"' && !s->in_comment) {
            s->in_quote = !s->in_quote;
        }
    }
    return end;
}

/* A byte-order mark at the file's start: not part of the first line's
 * text for the scan. */
static size_t bom_length(const char *bytes, size_t n)
{
    return n >= 3 && memcmp(bytes, "\xEF\xBB\xBF", 3) == 0 ? 3 : 0;
}

size_t sw_follow_record_end(const char *bytes, size_t n, int at_file_start)
{
    scan s = {1, 0, 0};
    size_t skip = at_file_start ? bom_length(bytes, n) : 0;
    size_t end = scan_bytes(&s, bytes + skip, n - skip);
    return end > 0 ? end + skip : 0;
}

/* ---- small I/O ---------------------------------------------------------- */

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
}

/* Read exactly n bytes at `at` (fewer only at the end of the file). */
static ssize_t read_at(int fd, char *dst, size_t n, unsigned long long at)
{
    size_t got = 0;
    while (got < n) {
        ssize_t k = pread(fd, dst + got, n - got, (off_t)(at + got));
        if (k < 0 && errno == EINTR)
            continue;
        if (k < 0)
            return -1;
        if (k == 0)
            break;
        got += (size_t)k;
    }
    return (ssize_t)got;
}

static int write_all(int fd, const char *src, size_t n)
{
    while (n > 0) {
        ssize_t k = write(fd, src, n);
        if (k < 0 && errno == EINTR)
            continue;
        if (k < 0)
            return -1;
        src += k;
        n -= (size_t)k;
    }
    return 0;
}

static int read_error(const sw_follow *f, sw_error *err)
{
    return sw_error_set(err, SW_EDATA, f->series->path, 0, 0,
                        "cannot read the level file: %s", strerror(errno));
}

static int mirror_error(const sw_follow *f, const char *what, sw_error *err)
{
    return sw_error_set(err, SW_EOUTPUT, f->mirror, 0, 0,
                        "cannot %s the copy of %s: %s", what,
                        f->series->path, strerror(errno));
}

/* SHA-256 of the file's bytes [0, n) as hex. */
static int hash_head(sw_follow *f, unsigned long long n,
                     char hex[SW_FOLLOW_HEX], sw_error *err)
{
    struct sha256_ctx ctx;
    uint8_t digest[SHA256_DIGEST_SIZE];
    unsigned long long at = 0;

    sha256_init(&ctx);
    while (at < n) {
        size_t want = n - at < CHUNK ? (size_t)(n - at) : CHUNK;
        ssize_t k = read_at(f->fd, f->buf, want, at);
        if (k <= 0)
            return k < 0 ? read_error(f, err)
                         : sw_error_set(err, SW_EDATA, f->series->path, 0, 0,
                                        "the level file ended early");
        sha256_update(&ctx, (size_t)k, (const uint8_t *)f->buf);
        at += (unsigned long long)k;
    }
    sha256_digest(&ctx, SHA256_DIGEST_SIZE, digest);
    for (int i = 0; i < SHA256_DIGEST_SIZE; i++)
        snprintf(hex + 2 * i, 3, "%02x", digest[i]);
    return SW_OK;
}

/* Open the level file; *missing when it is not there. */
static int open_level(sw_follow *f, int *missing, sw_error *err)
{
    struct stat sb;
    *missing = 0;
    f->fd = open(f->series->path, O_RDONLY | O_CLOEXEC);
    if (f->fd < 0) {
        if (errno == ENOENT) {
            *missing = 1;
            return SW_OK;
        }
        return read_error(f, err);
    }
    if (fstat(f->fd, &sb) != 0)
        return read_error(f, err);
    if (!S_ISREG(sb.st_mode))
        return sw_error_set(err, SW_EDATA, f->series->path, 0, 0,
                            "a followed level file must be a regular file "
                            "(not a FIFO, a device or a folder)");
    f->pos.dev = (unsigned long long)sb.st_dev;
    f->pos.ino = (unsigned long long)sb.st_ino;
    return SW_OK;
}

/* ---- copying ------------------------------------------------------------ */

/* The end of the file's last complete record, scanning from `from` (a
 * record boundary) up to its size now. */
static int complete_end(sw_follow *f, unsigned long long from,
                        unsigned long long *end, sw_error *err)
{
    struct stat sb;
    scan s = {1, 0, 0};
    unsigned long long at = from;

    *end = from;
    if (fstat(f->fd, &sb) != 0)
        return read_error(f, err);
    while (at < (unsigned long long)sb.st_size) {
        unsigned long long left = (unsigned long long)sb.st_size - at;
        ssize_t k = read_at(f->fd, f->buf, left < CHUNK ? (size_t)left : CHUNK,
                            at);
        if (k < 0)
            return read_error(f, err);
        if (k == 0)
            break;
        size_t skip = at == 0 ? bom_length(f->buf, (size_t)k) : 0;
        size_t e = scan_bytes(&s, f->buf + skip, (size_t)k - skip);
        if (e > 0)
            *end = at + skip + e;
        at += (unsigned long long)k;
    }
    return SW_OK;
}

/* Copy the file's bytes [from, end) to the descriptor `out`. */
static int copy_range(sw_follow *f, unsigned long long from,
                      unsigned long long end, int out, const char *out_path,
                      sw_error *err)
{
    for (unsigned long long at = from; at < end;) {
        size_t want = end - at < CHUNK ? (size_t)(end - at) : CHUNK;
        ssize_t k = read_at(f->fd, f->buf, want, at);
        if (k <= 0)
            return k < 0 ? read_error(f, err)
                         : sw_error_set(err, SW_EDATA, f->series->path, 0, 0,
                                        "the level file shrank while it was "
                                        "read");
        if (write_all(out, f->buf, (size_t)k) != 0)
            return sw_error_set(err, SW_EOUTPUT, out_path, 0, 0,
                                "cannot write the copy of %s: %s",
                                f->series->path, strerror(errno));
        at += (unsigned long long)k;
    }
    return SW_OK;
}

/* Append the complete records of the file from pos.offset on (up to its
 * size now) to the mirror, synced. */
static int copy_new(sw_follow *f, unsigned long long *appended,
                    sw_error *err)
{
    unsigned long long end;
    int rc;

    *appended = 0;
    if ((rc = complete_end(f, f->pos.offset, &end, err)) != SW_OK ||
        (rc = copy_range(f, f->pos.offset, end, f->mfd, f->mirror, err)) !=
            SW_OK)
        return rc;
    if (end > f->pos.offset && fsync(f->mfd) != 0 && errno != EINVAL)
        return mirror_error(f, "sync", err);
    *appended = end - f->pos.offset;
    f->pos.mirror_size += *appended;
    f->pos.offset = end;
    return SW_OK;
}

/* Do the bytes before the read position still match the mirror's?  (A
 * file truncated and written again past it between two polls.) */
static int tail_matches(sw_follow *f, int *same, sw_error *err)
{
    unsigned long long copied = f->pos.offset - f->pos.copy_from;
    size_t n = copied < TAIL_CHECK ? (size_t)copied : TAIL_CHECK;
    char a[TAIL_CHECK], b[TAIL_CHECK];

    *same = 1;
    if (n == 0)
        return SW_OK;
    ssize_t ka = read_at(f->fd, a, n, f->pos.offset - n);
    if (ka < 0)
        return read_error(f, err);
    ssize_t kb = read_at(f->mfd, b, n, f->pos.mirror_size - n);
    if (kb < 0)
        return mirror_error(f, "read", err);
    *same = (size_t)ka == n && (size_t)kb == n && memcmp(a, b, n) == 0;
    return SW_OK;
}

/* Start reading the file (the one now at the path, or the same one) again
 * from its start. */
static void restart_file(sw_follow *f)
{
    f->pos.skipping = 1;
    f->pos.offset = 0;
    f->pos.copy_from = 0;
    f->pos.mirror_from = f->pos.mirror_size;
    f->pos.head_sha[0] = '\0';
    f->pos.restarts++;
}

static int skip_phase(sw_follow *f, sw_error *err);

/* Was the open file cut (shorter than what was read, or its bytes
 * before the read position no longer the mirror's: cut and written again
 * past it since the last poll)?  Then it is read again from its start. */
static int check_cut(sw_follow *f, sw_error *err)
{
    struct stat held;
    int same, rc;

    if (fstat(f->fd, &held) != 0)
        return read_error(f, err);
    if ((unsigned long long)held.st_size < f->pos.offset) {
        restart_file(f);
        return SW_OK;
    }
    if ((rc = tail_matches(f, &same, err)) != SW_OK)
        return rc;
    if (!same)
        restart_file(f);
    return SW_OK;
}

/* After the open file was read to its end: has the path been given to
 * another file (rotation)?  Then the old one is read to its end once
 * more (rows written just before the rotation, since it was read) and
 * the new one from its start; *appended grows by what the old one
 * still had. */
static int check_replaced(sw_follow *f, int *replaced,
                          unsigned long long *appended, sw_error *err)
{
    struct stat at_path, held;
    unsigned long long more;
    int rc, missing;

    *replaced = 0;
    if (fstat(f->fd, &held) != 0)
        return read_error(f, err);
    if (stat(f->series->path, &at_path) != 0)
        return SW_OK; /* moved away, the new one not made yet: wait */
    if (at_path.st_dev == held.st_dev && at_path.st_ino == held.st_ino)
        return SW_OK;
    if (f->pos.skipping && (rc = skip_phase(f, err)) != SW_OK)
        return rc;
    if (!f->pos.skipping) {
        if ((rc = copy_new(f, &more, err)) != SW_OK)
            return rc;
        *appended += more;
    }
    close(f->fd);
    f->fd = -1;
    if ((rc = open_level(f, &missing, err)) != SW_OK || missing)
        return rc; /* gone again: looked for at the next poll */
    restart_file(f);
    *replaced = 1;
    return SW_OK;
}

/* ---- a file read again from its start ----------------------------------- */

/* Copy the file's complete records into the scratch file; *n its bytes. */
static int fill_scratch(sw_follow *f, unsigned long long *n, sw_error *err)
{
    int out, rc;

    *n = 0;
    out = open(f->scratch, O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0666);
    if (out < 0)
        return sw_error_set(err, SW_EOUTPUT, f->scratch, 0, 0,
                            "cannot write here: %s", strerror(errno));
    if ((rc = complete_end(f, 0, n, err)) == SW_OK)
        rc = copy_range(f, 0, *n, out, f->scratch, err);
    if (close(out) != 0 && rc == SW_OK)
        rc = sw_error_set(err, SW_EOUTPUT, f->scratch, 0, 0,
                          "cannot write here: %s", strerror(errno));
    return rc;
}

/* Do the two header rows name the same columns in the same order? */
static int same_header(sw_follow *f, int *same, int *mirror_has, sw_error *err)
{
    char **a = NULL, **b = NULL;
    size_t na = 0, nb = 0;
    sw_error ignored;
    int rc;

    *same = 0;
    *mirror_has = sw_csv_header(f->mirror, f->series->delimiter, &a, &na,
                                &ignored) == SW_OK;
    if (!*mirror_has)
        return SW_OK;
    rc = sw_csv_header(f->scratch, f->series->delimiter, &b, &nb, err);
    if (rc == SW_OK) {
        *same = na == nb;
        for (size_t i = 0; i < na && *same; i++)
            *same = strcmp(a[i], b[i]) == 0;
    }
    sw_csv_header_free(a, na);
    sw_csv_header_free(b, nb);
    return rc;
}

/* The time of the mirror's last record (*has 0: it has none), read as
 * the series' reader reads it. */
static int mirror_last(sw_follow *f, int *has, sw_time_ms *last,
                       sw_error *err)
{
    sw_reader_config cfg;
    sw_column_config col;
    sw_reader *rd = NULL;
    sw_time_ms t[256];
    long lines[256];
    double v[256];
    size_t n;
    int rc;

    *has = 0;
    sw_site_series_reader(f->site, f->series, &cfg, &col);
    cfg.path = f->mirror;
    if ((rc = sw_reader_open(&rd, &cfg, &col, 1, err)) == SW_OK)
        do {
            rc = sw_reader_next_rows_at(rd, 256, t, lines, v, &n, err);
            if (rc == SW_OK && n > 0) {
                *has = 1;
                *last = t[n - 1];
            }
        } while (rc == SW_OK && n > 0);
    sw_reader_free(rd);
    return rc;
}

/* The first record of the scratch copy later than last_t: its line (0:
 * none yet). */
static int first_later(sw_follow *f, int has_last, sw_time_ms last_t,
                       long *line, sw_error *err)
{
    sw_reader_config cfg;
    sw_column_config col;
    sw_reader *rd = NULL;
    sw_time_ms t[256];
    long lines[256];
    double v[256];
    size_t n;
    int rc;

    *line = 0;
    sw_site_series_reader(f->site, f->series, &cfg, &col);
    cfg.path = f->scratch;
    if ((rc = sw_reader_open(&rd, &cfg, &col, 1, err)) != SW_OK)
        goto done;
    do {
        if ((rc = sw_reader_next_rows_at(rd, 256, t, lines, v, &n, err)) !=
            SW_OK)
            goto done;
        for (size_t i = 0; i < n; i++)
            if (!has_last || t[i] > last_t) {
                *line = lines[i];
                goto done;
            }
    } while (n > 0);
done:
    sw_reader_free(rd);
    if (rc != SW_OK && strcmp(err->file, f->scratch) == 0)
        /* the scratch copy holds the file's lines as they are */
        snprintf(err->file, sizeof err->file, "%s", f->series->path);
    return rc;
}

/* The offset at which physical line `line` (1-based) of the file
 * begins. */
static int line_offset(sw_follow *f, long line, unsigned long long *at_out,
                       sw_error *err)
{
    unsigned long long at = 0;
    long seen = 1;
    while (seen < line) {
        ssize_t k = read_at(f->fd, f->buf, CHUNK, at);
        if (k <= 0)
            return k < 0 ? read_error(f, err)
                         : sw_error_set(err, SW_EDATA, f->series->path, line,
                                        0, "the level file shrank while it "
                                           "was read");
        for (ssize_t i = 0; i < k; i++)
            if (f->buf[i] == '\n' && ++seen == line) {
                *at_out = at + (unsigned long long)i + 1;
                return SW_OK;
            }
        at += (unsigned long long)k;
    }
    *at_out = 0;
    return SW_OK;
}

/* Read the file again from its start: once a record later than the
 * mirror's last is there, copy from it on. */
static int skip_phase(sw_follow *f, sw_error *err)
{
    unsigned long long n, from;
    int same, mirror_has, rc, has_last;
    sw_time_ms last_t = 0;
    long line;

    if ((rc = fill_scratch(f, &n, err)) != SW_OK)
        goto done;
    if (n == 0)
        goto done;
    if ((rc = same_header(f, &same, &mirror_has, err)) != SW_OK) {
        if (rc == SW_EDATA) /* no header row yet: wait for it */
            rc = SW_OK;
        goto done;
    }
    if (!mirror_has) {
        from = 0; /* the mirror holds no header: take this one's */
    } else {
        if (!same) {
            rc = sw_error_set(err, SW_EDATA, f->series->path, 1, 0,
                              "the file now at this path has other columns "
                              "than the one it replaced (compare its header "
                              "with the copy %s); give it the same columns, "
                              "or start over with --restart",
                              f->mirror);
            goto done;
        }
        if ((rc = mirror_last(f, &has_last, &last_t, err)) != SW_OK ||
            (rc = first_later(f, has_last, last_t, &line, err)) != SW_OK ||
            line == 0)
            goto done;
        if ((rc = line_offset(f, line, &from, err)) != SW_OK)
            goto done;
    }
    if (from > 0 && (rc = hash_head(f, from, f->pos.head_sha, err)) != SW_OK)
        goto done;
    f->pos.skipping = 0;
    f->pos.copy_from = from;
    f->pos.offset = from;
    f->pos.mirror_from = f->pos.mirror_size;
done:
    unlink(f->scratch);
    return rc;
}

/* ---- open, resume, poll --------------------------------------------------- */

/* Compare the file's bytes [copy_from, offset) with the mirror's
 * [mirror_from, mirror_size), and its head with head_sha. */
static int check_prefix(sw_follow *f, int *same, sw_error *err)
{
    const sw_follow_pos *p = &f->pos;
    unsigned long long n = p->offset - p->copy_from, done = 0;
    char *other = malloc(CHUNK);
    int rc = SW_OK;

    *same = p->mirror_size - p->mirror_from == n;
    if (other == NULL)
        return nomem(err);
    while (*same && done < n) {
        size_t want = n - done < CHUNK ? (size_t)(n - done) : CHUNK;
        ssize_t ka = read_at(f->fd, f->buf, want, p->copy_from + done);
        ssize_t kb = read_at(f->mfd, other, want, p->mirror_from + done);
        if (ka < 0 || kb < 0) {
            rc = ka < 0 ? read_error(f, err) : mirror_error(f, "read", err);
            break;
        }
        *same = (size_t)ka == want && (size_t)kb == want &&
                memcmp(f->buf, other, want) == 0;
        done += want;
    }
    free(other);
    if (rc == SW_OK && *same && p->copy_from > 0) {
        char hex[SW_FOLLOW_HEX];
        if ((rc = hash_head(f, p->copy_from, hex, err)) == SW_OK)
            *same = strcmp(hex, p->head_sha) == 0;
    }
    return rc;
}

/* The file read before, moved away in its folder while no one watched (a
 * rotation by rename): open it by its device and inode; *found. */
static int find_moved(sw_follow *f, unsigned long long dev,
                      unsigned long long ino, int *found)
{
    char dir[SW_ERROR_PATH_MAX], path[2 * SW_ERROR_PATH_MAX];
    const char *slash = strrchr(f->series->path, '/');
    struct dirent *e;
    DIR *d;

    *found = 0;
    if (slash == NULL)
        snprintf(dir, sizeof dir, ".");
    else
        snprintf(dir, sizeof dir, "%.*s",
                 (int)(slash == f->series->path ? 1 : slash - f->series->path),
                 f->series->path);
    if ((d = opendir(dir)) == NULL)
        return SW_OK;
    while (!*found && (e = readdir(d)) != NULL) {
        struct stat sb;
        snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
        if (stat(path, &sb) != 0 || !S_ISREG(sb.st_mode) ||
            (unsigned long long)sb.st_dev != dev ||
            (unsigned long long)sb.st_ino != ino)
            continue;
        f->fd = open(path, O_RDONLY | O_CLOEXEC);
        *found = f->fd >= 0;
    }
    closedir(d);
    if (*found) {
        f->pos.dev = dev;
        f->pos.ino = ino;
    }
    return SW_OK;
}

/* Resume: the mirror cut back to the position, the file checked. */
static int resume_at(sw_follow *f, sw_error *err)
{
    struct stat sb;
    int missing, same, rc;

    if (fstat(f->mfd, &sb) != 0)
        return mirror_error(f, "read", err);
    if ((unsigned long long)sb.st_size < f->pos.mirror_size)
        return sw_error_set(err, SW_EOUTPUT, f->mirror, 0, 0,
                            "the copy of %s is shorter than the checkpoint "
                            "says (%llu bytes, not %llu): start over with "
                            "--restart",
                            f->series->path, (unsigned long long)sb.st_size,
                            f->pos.mirror_size);
    if ((unsigned long long)sb.st_size > f->pos.mirror_size &&
        (ftruncate(f->mfd, (off_t)f->pos.mirror_size) != 0 ||
         (fsync(f->mfd) != 0 && errno != EINVAL)))
        return mirror_error(f, "cut back", err);
    unsigned long long dev = f->pos.dev, ino = f->pos.ino;
    if ((rc = open_level(f, &missing, err)) != SW_OK)
        return rc;
    if (missing)
        return SW_OK;
    if (f->pos.dev != dev || f->pos.ino != ino) {
        /* replaced while no one watched: the old one, if it is still in
         * the folder, is read to its end first (the next poll) */
        int found = 0;
        close(f->fd);
        f->fd = -1;
        find_moved(f, dev, ino, &found);
        if (!found) {
            if ((rc = open_level(f, &missing, err)) != SW_OK)
                return rc;
            if (f->fd >= 0)
                restart_file(f);
            return SW_OK;
        }
    }
    if (f->pos.skipping)
        return SW_OK;
    if (fstat(f->fd, &sb) != 0)
        return read_error(f, err);
    if ((unsigned long long)sb.st_size < f->pos.offset) {
        restart_file(f); /* truncated while no one watched */
        return SW_OK;
    }
    if ((rc = check_prefix(f, &same, err)) != SW_OK)
        return rc;
    if (!same)
        return sw_error_set(err, SW_EDATA, f->series->path, 0, 0,
                            "the first %llu bytes of this level file, read "
                            "before, have changed since (they no longer "
                            "match the checkpoint and the copy %s): the "
                            "outputs so far would not be the file's; start "
                            "over with --restart",
                            f->pos.offset, f->mirror);
    return SW_OK;
}

int sw_follow_open(sw_follow **out, const sw_site *site,
                   const sw_site_series *series, const char *mirror,
                   const char *scratch, const sw_follow_pos *resume,
                   sw_error *err)
{
    sw_follow *f = calloc(1, sizeof *f);
    int rc, missing;

    *out = NULL;
    if (f == NULL || (f->buf = malloc(CHUNK)) == NULL) {
        free(f);
        return nomem(err);
    }
    f->site = site;
    f->series = series;
    f->fd = f->mfd = -1;
    snprintf(f->mirror, sizeof f->mirror, "%s", mirror);
    snprintf(f->scratch, sizeof f->scratch, "%s", scratch);
    f->mfd = open(mirror, O_RDWR | O_CREAT | O_APPEND | O_CLOEXEC |
                              (resume == NULL ? O_TRUNC : 0),
                  0666);
    if (f->mfd < 0) {
        rc = mirror_error(f, "open", err);
        goto fail;
    }
    if (resume != NULL) {
        f->pos = *resume;
        rc = resume_at(f, err);
    } else if ((rc = open_level(f, &missing, err)) == SW_OK && missing) {
        errno = ENOENT;
        rc = read_error(f, err);
    }
    if (rc != SW_OK)
        goto fail;
    *out = f;
    return SW_OK;
fail:
    sw_follow_free(f);
    return rc;
}

int sw_follow_poll(sw_follow *f, unsigned long long *appended,
                   sw_error *err)
{
    unsigned long long more;
    int rc, missing, replaced = 0;

    *appended = 0;
    if (f->fd < 0) { /* gone at the last look: read it from its start */
        if ((rc = open_level(f, &missing, err)) != SW_OK || missing)
            return rc;
        restart_file(f);
    }
    if (!f->pos.skipping && (rc = check_cut(f, err)) != SW_OK)
        return rc;
    if (f->pos.skipping) {
        if ((rc = skip_phase(f, err)) != SW_OK)
            return rc;
        /* nothing later yet: replaced again in the meantime? */
        if (f->pos.skipping &&
            ((rc = check_replaced(f, &replaced, appended, err)) != SW_OK ||
             !replaced || (rc = skip_phase(f, err)) != SW_OK ||
             f->pos.skipping))
            return rc;
    }
    if ((rc = copy_new(f, appended, err)) != SW_OK ||
        (rc = check_replaced(f, &replaced, appended, err)) != SW_OK ||
        !replaced)
        return rc;
    /* read to its end, the old file made way for a new one */
    if ((rc = skip_phase(f, err)) != SW_OK || f->pos.skipping)
        return rc;
    rc = copy_new(f, &more, err);
    *appended += more;
    return rc;
}

void sw_follow_get_pos(const sw_follow *f, sw_follow_pos *pos)
{
    *pos = f->pos;
}

const char *sw_follow_path(const sw_follow *f)
{
    return f->series->path;
}

void sw_follow_free(sw_follow *f)
{
    if (f == NULL)
        return;
    if (f->fd >= 0)
        close(f->fd);
    if (f->mfd >= 0)
        close(f->mfd);
    free(f->buf);
    free(f);
}
