/* sillwatch: output files that appear whole or not at all, output sets
 * that appear together or not at all (outfile.h). */
#define _GNU_SOURCE /* O_DIRECT, fopencookie; O_DIRECTORY, O_CLOEXEC, d_type */
#include "sillwatch/outfile.h"
#include "sillwatch/handoff.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <inttypes.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include <nettle/sha2.h>

/* Every temporary name starts ".sillwatch.PID." (outfile.h). */
#define TMP_PREFIX ".sillwatch."
#define JOURNAL_SUFFIX "publish"
#define SET_MAX 16

static unsigned long tmp_counter;

/* Sync a folder, so that the renames and removals in it last.  A file
 * system that cannot sync a folder (EINVAL) is no error. */
static int sync_dir(const char *dir)
{
    int fd = open(dir, O_RDONLY | O_DIRECTORY | O_CLOEXEC);
    int rc = 0;
    if (fd < 0)
        return -1;
    if (fsync(fd) != 0 && errno != EINVAL)
        rc = -1;
    close(fd);
    return rc;
}

/* Create a new temporary file for `name` in `dir` (0666 less the umask). */
static int make_tmp(char *buf, size_t n, const char *dir, const char *name)
{
    for (int attempt = 0; attempt < 100; attempt++) {
        struct timespec ts;
        clock_gettime(CLOCK_REALTIME, &ts);
        unsigned long r = ((unsigned long)ts.tv_nsec ^
                           (++tmp_counter * 2654435761UL)) % 1000000UL;
        if ((size_t)snprintf(buf, n, "%s/" TMP_PREFIX "%ld.%s.%06lu", dir,
                             (long)getpid(), name, r) >= n) {
            errno = ENAMETOOLONG;
            return -1;
        }
        int fd = open(buf, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
        if (fd >= 0 || errno != EEXIST)
            return fd;
    }
    errno = EEXIST;
    return -1;
}

/* ---- the sink behind an output file ----------------------------------
 *
 * An output's FILE is a stdio cookie stream (fopencookie) over a sink.
 * Bytes collect in chunks of SINK_CHUNK (aligned for O_DIRECT); each full
 * chunk is hashed (SHA-256, for the manifest: no output is read back) and
 * written by a thread of the sink's own, started at the first full chunk,
 * while the caller fills the next.  Full chunks are written with O_DIRECT
 * where the file system takes it: the file is synced at close anyway, and
 * a 1.1 GB step log written through the page cache and then synced cost
 * the kernel several times the time of writing it straight from the
 * chunks (bench_run).  What is left at close (less than a chunk: all of a
 * small output) is hashed and written buffered.  Write errors are kept and
 * reported by sw_outfile_close(). */

#define SINK_CHUNK SW_OUTFILE_CHUNK
#define SINK_SLOTS 4
#define SINK_ALIGN 4096 /* the largest logical block O_DIRECT asks for */

struct sw_outsink {
    int fd;
    int direct;                        /* O_DIRECT was tried: 1 on, -1 off */
    unsigned char *chunk[SINK_SLOTS];
    unsigned char *cur;                /* the chunk being filled */
    size_t fill;                       /* bytes in it */
    sw_handoff ring;                   /* full chunks to the writer thread */
    int error;                         /* errno of the first failed write
                                          (the writer's; read after it) */
    struct sha256_ctx sha;
    unsigned long long bytes;
    char spill[SW_OUTFILE_ROOM_MAX];   /* room across a chunk's end */
};

/* Write all of buf[0..n) at the file's end; 0 or an errno.  A direct write
 * the file system refuses (EINVAL: an alignment it wants larger) turns
 * O_DIRECT off and is written again buffered. */
static int write_all(sw_outsink *s, const unsigned char *buf, size_t n)
{
    while (n > 0) {
        ssize_t put = write(s->fd, buf, n);
        if (put < 0 && errno == EINTR)
            continue;
        if (put < 0 && errno == EINVAL && s->direct == 1) {
            int fl = fcntl(s->fd, F_GETFL);
            s->direct = -1;
            if (fl == -1 || fcntl(s->fd, F_SETFL, fl & ~O_DIRECT) != 0)
                return errno;
            continue;
        }
        if (put <= 0)
            return put < 0 ? errno : EIO;
        buf += put;
        n -= (size_t)put;
    }
    return 0;
}

/* Hash and write one full chunk (on the writer thread, or the caller's
 * when no thread could be started). */
static void put_chunk(sw_outsink *s, const unsigned char *buf)
{
    int e;
    sha256_update(&s->sha, SINK_CHUNK, buf);
    if (s->direct == 0) {
        int fl = fcntl(s->fd, F_GETFL);
        s->direct = fl != -1 && fcntl(s->fd, F_SETFL, fl | O_DIRECT) == 0
                        ? 1
                        : -1;
    }
    e = s->error ? 0 : write_all(s, buf, SINK_CHUNK);
    if (e != 0)
        s->error = e;
}

static void consume_chunk(void *sink, void *chunk)
{
    put_chunk(sink, chunk);
}

/* The chunk being filled is full: hand it to the writer thread. */
static void hand_over(sw_outsink *s)
{
    s->cur = sw_handoff_pass(&s->ring);
    s->fill = 0;
}

static ssize_t sink_write(void *cookie, const char *buf, size_t n)
{
    sw_outsink *s = cookie;
    size_t done = 0;
    while (done < n) {
        size_t take = SINK_CHUNK - s->fill;
        if (take > n - done)
            take = n - done;
        memcpy(s->cur + s->fill, buf + done, take);
        s->fill += take;
        done += take;
        if (s->fill == SINK_CHUNK)
            hand_over(s);
    }
    s->bytes += n;
    return (ssize_t)n;
}

static int sink_close(void *cookie)
{
    (void)cookie; /* the sink outlives its stream: sink_finish() */
    return 0;
}

static void sink_free(sw_outsink *s)
{
    if (s == NULL)
        return;
    sw_handoff_end(&s->ring, 1); /* given up: chunks not begun are dropped */
    sw_handoff_fini(&s->ring);
    if (s->fd >= 0)
        close(s->fd);
    for (int k = 0; k < SINK_SLOTS; k++)
        free(s->chunk[k]);
    free(s);
}

/* A sink over `fd` (taken: closed by sink_free) and its stream. */
static sw_outsink *sink_new(int fd, FILE **fp)
{
    static const cookie_io_functions_t io = {
        .read = NULL, .write = sink_write, .seek = NULL, .close = sink_close};
    sw_outsink *s = calloc(1, sizeof *s);

    *fp = NULL;
    if (s == NULL) {
        close(fd);
        return NULL;
    }
    s->fd = fd;
    sha256_init(&s->sha);
    for (int k = 0; k < SINK_SLOTS; k++) /* untouched pages cost nothing */
        if (posix_memalign((void **)&s->chunk[k], SINK_ALIGN, SINK_CHUNK) !=
            0)
            s->chunk[k] = NULL;
    sw_handoff_init(&s->ring, (void *const *)s->chunk, SINK_SLOTS,
                    consume_chunk, s);
    for (int k = 0; k < SINK_SLOTS; k++)
        if (s->chunk[k] == NULL) {
            sink_free(s);
            return NULL;
        }
    if ((*fp = fopencookie(s, "w", io)) == NULL) {
        sink_free(s);
        return NULL;
    }
    s->cur = s->chunk[0];
    return s;
}

/* Write the rest, sync, close; the digest in hex.  0 or an errno. */
static int sink_finish(sw_outsink *s, char hex[SW_SHA256_HEX])
{
    uint8_t digest[SHA256_DIGEST_SIZE];
    int e;

    sw_handoff_end(&s->ring, 0); /* every full chunk written */
    e = s->error;
    if (e == 0 && s->fill > 0) {
        const unsigned char *tail = s->cur;
        sha256_update(&s->sha, s->fill, tail);
        if (s->direct == 1) {
            int fl = fcntl(s->fd, F_GETFL);
            s->direct = -1;
            if (fl == -1 || fcntl(s->fd, F_SETFL, fl & ~O_DIRECT) != 0)
                e = errno;
        }
        if (e == 0)
            e = write_all(s, tail, s->fill);
    }
    if (e == 0 && fsync(s->fd) != 0 && errno != EINVAL)
        e = errno;
    if (close(s->fd) != 0 && e == 0)
        e = errno;
    s->fd = -1;
    sha256_digest(&s->sha, SHA256_DIGEST_SIZE, digest);
    for (size_t i = 0; i < SHA256_DIGEST_SIZE; i++)
        snprintf(hex + 2 * i, 3, "%02x", digest[i]);
    return e;
}

int sw_outfile_open(sw_outfile *f, const char *dir, const char *name,
                    sw_error *err)
{
    struct stat sb;
    int fd;

    memset(f, 0, sizeof *f);
    if (stat(dir, &sb) != 0)
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "cannot use the output folder: %s",
                            strerror(errno));
    if (!S_ISDIR(sb.st_mode))
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "this is a file, not a folder: the output cannot "
                            "be written inside it");
    if ((size_t)snprintf(f->path, sizeof f->path, "%s/%s", dir, name) >=
        sizeof f->path)
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "the output path is too long");
    fd = make_tmp(f->tmp, sizeof f->tmp, dir, name);
    if (fd < 0) {
        int e = errno;
        f->tmp[0] = '\0';
        return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                            "cannot write here: %s", strerror(e));
    }
    f->sink = sink_new(fd, &f->fp);
    if (f->sink == NULL) {
        int e = errno ? errno : ENOMEM;
        unlink(f->tmp);
        f->tmp[0] = '\0';
        return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                            "cannot write here: %s", strerror(e));
    }
    return SW_OK;
}

int sw_outfile_close(sw_outfile *f, sw_error *err)
{
    int e = 0;

    if (f->fp == NULL)
        return SW_OK;
    if (fflush(f->fp) != 0 || ferror(f->fp))
        e = errno ? errno : EIO;
    fclose(f->fp); /* the stream only: the sink is finished below */
    f->fp = NULL;
    f->bytes = f->sink->bytes;
    int fe = sink_finish(f->sink, f->sha256);
    if (e == 0)
        e = fe;
    sink_free(f->sink);
    f->sink = NULL;
    if (e != 0) {
        unlink(f->tmp);
        f->tmp[0] = '\0';
        return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                            "could not write the output: %s", strerror(e));
    }
    f->closed = 1;
    return SW_OK;
}

char *sw_outfile_room(sw_outfile *f)
{
    sw_outsink *s = f->sink;
    if (SINK_CHUNK - s->fill >= SW_OUTFILE_ROOM_MAX)
        return (char *)s->cur + s->fill;
    return s->spill; /* across the chunk's end: copied at commit */
}

void sw_outfile_commit(sw_outfile *f, const char *end)
{
    sw_outsink *s = f->sink;
    size_t n;
    if (end >= s->spill && end <= s->spill + sizeof s->spill) {
        sink_write(s, s->spill, (size_t)(end - s->spill));
        return;
    }
    n = (size_t)(end - ((char *)s->cur + s->fill));
    s->fill += n;
    s->bytes += n;
    if (s->fill == SINK_CHUNK)
        hand_over(s);
}

int sw_outfile_check_target(const char *path, sw_error *err)
{
    struct stat sb;
    const char *what;

    if (lstat(path, &sb) != 0)
        return errno == ENOENT || errno == ENOTDIR /* opening will say */
                   ? SW_OK
                   : sw_error_set(err, SW_EOUTPUT, path, 0, 0,
                                  "cannot use this output path: %s",
                                  strerror(errno));
    if (S_ISREG(sb.st_mode))
        return SW_OK;
    what = S_ISDIR(sb.st_mode)   ? "a folder"
           : S_ISLNK(sb.st_mode) ? "a symbolic link"
           : S_ISFIFO(sb.st_mode) ? "a FIFO"
           : S_ISSOCK(sb.st_mode) ? "a socket"
           : S_ISCHR(sb.st_mode) || S_ISBLK(sb.st_mode) ? "a device"
                                                        : "not a regular file";
    return sw_error_set(err, SW_EOUTPUT, path, 0, 0,
                        "this is %s: an output only replaces a regular file "
                        "or takes a missing name",
                        what);
}

/* The folder part of f->path (everything before the last '/'). */
static void dir_of(const char *path, char *dir, size_t n)
{
    const char *slash = strrchr(path, '/');
    if (slash == NULL)
        snprintf(dir, n, ".");
    else if (slash == path)
        snprintf(dir, n, "/");
    else
        snprintf(dir, n, "%.*s", (int)(slash - path), path);
}

int sw_outfile_publish(sw_outfile *f, sw_error *err)
{
    char dir[SW_ERROR_PATH_MAX];
    int rc;

    if (!f->closed)
        return SW_OK;
    if ((rc = sw_outfile_check_target(f->path, err)) != SW_OK ||
        rename(f->tmp, f->path) != 0) {
        int e = errno;
        unlink(f->tmp);
        f->tmp[0] = '\0';
        f->closed = 0;
        return rc != SW_OK ? rc
                           : sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                                          "could not put the output in "
                                          "place: %s",
                                          strerror(e));
    }
    f->tmp[0] = '\0';
    f->closed = 0;
    dir_of(f->path, dir, sizeof dir);
    if (sync_dir(dir) != 0)
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "the output is in place, but the folder could "
                            "not be synced: %s",
                            strerror(errno));
    return SW_OK;
}

void sw_outfile_abort(sw_outfile *f)
{
    if (f->fp != NULL) {
        fclose(f->fp);
        f->fp = NULL;
    }
    sink_free(f->sink);
    f->sink = NULL;
    if (f->tmp[0] != '\0') {
        unlink(f->tmp);
        f->tmp[0] = '\0';
    }
    f->closed = 0;
}

/* ---- output sets ------------------------------------------------------ */

/* What a name of the set held before the publish (journal `set` file). */
enum { HELD_NONE, HELD_OLD, HELD_KEEP };
static const char *const held_word[] = {"none", "old", "keep"};

typedef struct journal {
    char dir[SW_ERROR_PATH_MAX];   /* the output folder */
    char path[SW_ERROR_PATH_MAX];  /* the journal folder */
    size_t n;                      /* names, the manifest last */
    char name[SET_MAX][64];
    int held[SET_MAX];
} journal;

static int join(char *buf, size_t n, const char *a, const char *b)
{
    return (size_t)snprintf(buf, n, "%s/%s", a, b) >= n ? -1 : 0;
}

/* Size and SHA-256 (hex) of a file. */
static int hash_file(const char *path, uint64_t *bytes, char hex[65])
{
    struct sha256_ctx ctx;
    uint8_t digest[SHA256_DIGEST_SIZE];
    uint8_t *buf = malloc(65536);
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    ssize_t got;

    if (fd < 0 || buf == NULL) {
        if (fd >= 0)
            close(fd);
        free(buf);
        return -1;
    }
    sha256_init(&ctx);
    *bytes = 0;
    while ((got = read(fd, buf, 65536)) != 0) {
        if (got < 0) {
            if (errno == EINTR)
                continue;
            close(fd);
            free(buf);
            return -1;
        }
        sha256_update(&ctx, (size_t)got, buf);
        *bytes += (uint64_t)got;
    }
    close(fd);
    free(buf);
    sha256_digest(&ctx, SHA256_DIGEST_SIZE, digest);
    for (size_t i = 0; i < SHA256_DIGEST_SIZE; i++)
        snprintf(hex + 2 * i, 3, "%02x", digest[i]);
    return 0;
}

int sw_file_sha256(const char *path, char hex[SW_SHA256_HEX], int code,
                   sw_error *err)
{
    uint64_t bytes;
    if (hash_file(path, &bytes, hex) != 0)
        return sw_error_set(err, code, path, 0, 0, "cannot read: %s",
                            strerror(errno));
    return SW_OK;
}

/* Write the manifest of the closed files to a temporary file. */
static int write_manifest(sw_outfile *mf, const char *dir, sw_outfile *files,
                          const char *const *names, size_t n,
                          const sw_outset_meta *meta, sw_error *err)
{
    int rc = sw_outfile_open(mf, dir, SW_OUTSET_MANIFEST, err);
    if (rc != SW_OK)
        return rc;
    fputs("file,bytes,sha256,tool_version,site_sha256,run_time\n", mf->fp);
    for (size_t k = 0; k < n; k++) {
        if (!files[k].closed)
            continue; /* hashed as written (the sink) */
        fprintf(mf->fp, "%s,%llu,%s,%s,%s,%s\n", names[k], files[k].bytes,
                files[k].sha256, meta->tool_version, meta->site_sha256,
                meta->run_time);
    }
    return sw_outfile_close(mf, err);
}

/* Remove a journal folder: its links, its list, itself. */
static void remove_journal(const char *jpath)
{
    DIR *d = opendir(jpath);
    struct dirent *e;
    char p[SW_ERROR_PATH_MAX];

    if (d != NULL) {
        while ((e = readdir(d)) != NULL)
            if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0 &&
                join(p, sizeof p, jpath, e->d_name) == 0)
                unlink(p);
        closedir(d);
    }
    rmdir(jpath);
}

/* Put the previous files back: names that held nothing lose what is there
 * now (only a regular file), names that held a file get it back from the
 * journal; the manifest last, so that while the journal still holds the
 * previous manifest the rollback is known to be unfinished. */
static int roll_back(const journal *j)
{
    char from[SW_ERROR_PATH_MAX], to[SW_ERROR_PATH_MAX];
    struct stat sb;
    int bad = 0;

    for (size_t k = 0; k < j->n; k++) {
        if (join(to, sizeof to, j->dir, j->name[k]) != 0 ||
            join(from, sizeof from, j->path, j->name[k]) != 0)
            return -1;
        if (j->held[k] == HELD_NONE) {
            if (lstat(to, &sb) == 0 && S_ISREG(sb.st_mode) && unlink(to) != 0)
                bad = 1;
        } else if (j->held[k] == HELD_OLD) {
            if (rename(from, to) != 0 && errno != ENOENT)
                bad = 1;
        }
    }
    if (bad || sync_dir(j->dir) != 0)
        return -1;
    remove_journal(j->path);
    return sync_dir(j->dir);
}

/* Copy a file, synced: the journal's fallback on a file system without
 * hard links (FAT).  Returns 0 or -1. */
static int copy_file(const char *from, const char *to)
{
    char buf[65536];
    int in = open(from, O_RDONLY | O_CLOEXEC), out, bad = 0;
    ssize_t got;

    if (in < 0)
        return -1;
    out = open(to, O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0600);
    if (out < 0) {
        close(in);
        return -1;
    }
    while (!bad && (got = read(in, buf, sizeof buf)) != 0) {
        if (got < 0) {
            bad = errno != EINTR;
            continue;
        }
        for (ssize_t done = 0; !bad && done < got;) {
            ssize_t put = write(out, buf + done, (size_t)(got - done));
            if (put < 0)
                bad = errno != EINTR;
            else
                done += put;
        }
    }
    if (fsync(out) != 0 && errno != EINVAL)
        bad = 1;
    close(in);
    if (close(out) != 0)
        bad = 1;
    if (bad)
        unlink(to);
    return bad ? -1 : 0;
}

/* Whether two files have the same bytes (1), differ (0), or one cannot be
 * read (-1). */
static int same_bytes(const char *a, const char *b)
{
    char x[4096], y[4096];
    FILE *fa = fopen(a, "rb"), *fb = fopen(b, "rb");
    int same = -1;

    if (fa != NULL && fb != NULL) {
        size_t na, nb;
        do {
            na = fread(x, 1, sizeof x, fa);
            nb = fread(y, 1, sizeof y, fb);
        } while (na == nb && na > 0 && memcmp(x, y, na) == 0);
        same = ferror(fa) || ferror(fb) ? -1
               : na == nb && na == 0    ? 1
                                        : 0;
    }
    if (fa != NULL)
        fclose(fa);
    if (fb != NULL)
        fclose(fb);
    return same;
}

/* Make the journal: link the previous files, write the list, sync. */
static int make_journal(journal *j, sw_error *err)
{
    char from[SW_ERROR_PATH_MAX], to[SW_ERROR_PATH_MAX];
    struct stat sb;
    FILE *fp;

    if (mkdir(j->path, 0700) != 0)
        return sw_error_set(err, SW_EOUTPUT, j->path, 0, 0,
                            "cannot keep the previous outputs: %s",
                            strerror(errno));
    for (size_t k = 0; k < j->n; k++) {
        if (join(from, sizeof from, j->dir, j->name[k]) != 0 ||
            join(to, sizeof to, j->path, j->name[k]) != 0)
            goto fail;
        if (lstat(from, &sb) != 0)
            j->held[k] = HELD_NONE;
        else if (!S_ISREG(sb.st_mode))
            j->held[k] = HELD_KEEP;
        else if (link(from, to) == 0 ||
                 ((errno == EPERM || errno == EXDEV || errno == EMLINK ||
                   errno == ENOSYS || errno == EOPNOTSUPP) &&
                  copy_file(from, to) == 0))
            j->held[k] = HELD_OLD; /* a copy where there are no links */
        else
            goto fail;
    }
    if (join(to, sizeof to, j->path, "set.tmp") != 0 ||
        (fp = fopen(to, "w")) == NULL)
        goto fail;
    for (size_t k = 0; k < j->n; k++)
        fprintf(fp, "%s %s\n", held_word[j->held[k]], j->name[k]);
    if (fflush(fp) != 0 || fsync(fileno(fp)) != 0) {
        fclose(fp);
        goto fail;
    }
    if (fclose(fp) != 0 || join(from, sizeof from, j->path, "set") != 0 ||
        rename(to, from) != 0 || sync_dir(j->path) != 0 ||
        sync_dir(j->dir) != 0)
        goto fail;
    return SW_OK;
fail:;
    int e = errno;
    remove_journal(j->path);
    return sw_error_set(err, SW_EOUTPUT, j->dir, 0, 0,
                        "cannot keep the previous outputs restorable (hard "
                        "links in %s): %s; nothing was replaced",
                        j->path, strerror(e));
}

/* The new files in place: each checked, then renamed; names the new set
 * does not have removed; the manifest last. */
static int swap_in(journal *j, sw_outfile *files, sw_outfile *mf,
                   sw_error *err)
{
    char p[SW_ERROR_PATH_MAX];
    int rc;

    /* the previous manifest goes first: no manifest, no complete set */
    if (join(p, sizeof p, j->dir, SW_OUTSET_MANIFEST) != 0)
        return sw_error_set(err, SW_EOUTPUT, j->dir, 0, 0, "path too long");
    if (j->held[j->n - 1] == HELD_OLD && unlink(p) != 0)
        return sw_error_set(err, SW_EOUTPUT, p, 0, 0,
                            "cannot replace the manifest: %s",
                            strerror(errno));
    for (size_t k = 0; k + 1 < j->n; k++) {
        sw_outfile *f = &files[k];
        if (f->closed) {
            if ((rc = sw_outfile_check_target(f->path, err)) != SW_OK)
                return rc;
            if (rename(f->tmp, f->path) != 0)
                return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                                    "could not put the output in place: %s",
                                    strerror(errno));
            f->tmp[0] = '\0';
            f->closed = 0;
        } else if (j->held[k] == HELD_OLD) {
            /* a name the new set does not have */
            if (join(p, sizeof p, j->dir, j->name[k]) != 0 ||
                (unlink(p) != 0 && errno != ENOENT))
                return sw_error_set(err, SW_EOUTPUT, p, 0, 0,
                                    "cannot remove the previous output: %s",
                                    strerror(errno));
        }
    }
    if ((rc = sw_outfile_check_target(mf->path, err)) != SW_OK)
        return rc;
    if (rename(mf->tmp, mf->path) != 0)
        return sw_error_set(err, SW_EOUTPUT, mf->path, 0, 0,
                            "could not put the manifest in place: %s",
                            strerror(errno));
    mf->tmp[0] = '\0';
    mf->closed = 0;
    if (sync_dir(j->dir) != 0)
        return sw_error_set(err, SW_EOUTPUT, j->dir, 0, 0,
                            "cannot sync the output folder: %s",
                            strerror(errno));
    return SW_OK;
}

int sw_outset_publish(const char *dir, sw_outfile *files,
                      const char *const *names, size_t n,
                      const sw_outset_meta *meta, sw_error *err)
{
    journal j;
    sw_outfile mf;
    int rc;

    memset(&mf, 0, sizeof mf);
    memset(&j, 0, sizeof j);
    if (n + 1 > SET_MAX)
        return sw_error_set(err, SW_EINTERNAL, dir, 0, 0,
                            "sw_outset_publish: too many names");
    snprintf(j.dir, sizeof j.dir, "%s", dir);
    if ((size_t)snprintf(j.path, sizeof j.path, "%s/" TMP_PREFIX "%ld."
                         JOURNAL_SUFFIX, dir, (long)getpid()) >= sizeof j.path)
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "the output path is too long");
    for (size_t k = 0; k < n; k++)
        snprintf(j.name[k], sizeof j.name[k], "%s", names[k]);
    snprintf(j.name[n], sizeof j.name[n], "%s", SW_OUTSET_MANIFEST);
    j.n = n + 1;

    if ((rc = write_manifest(&mf, dir, files, names, n, meta, err)) != SW_OK)
        goto abort;
    if ((rc = make_journal(&j, err)) != SW_OK)
        goto abort;
    if ((rc = swap_in(&j, files, &mf, err)) != SW_OK) {
        size_t len = strlen(err->message);
        if (roll_back(&j) != 0)
            snprintf(err->message + len, sizeof err->message - len,
                     "; putting the previous outputs back failed too: "
                     "the next run in this folder will finish it");
        else
            snprintf(err->message + len, sizeof err->message - len,
                     "; the previous outputs are back in place");
        goto abort;
    }
    remove_journal(j.path);
    return SW_OK;
abort:
    sw_outfile_abort(&mf);
    for (size_t k = 0; k < n; k++)
        sw_outfile_abort(&files[k]);
    return rc;
}

/* The process id in a name ".sillwatch.PID.REST"; 0 if it has none. */
static long name_pid(const char *name, const char **rest)
{
    const char *p = name + strlen(TMP_PREFIX);
    long pid = 0;

    if (strncmp(name, TMP_PREFIX, strlen(TMP_PREFIX)) != 0)
        return 0;
    while (*p >= '0' && *p <= '9' && pid < 100000000L)
        pid = pid * 10 + (*p++ - '0');
    if (*p != '.' || pid <= 0)
        return 0;
    *rest = p + 1;
    return pid;
}

/* Whether process `pid` no longer runs: no such process, or a zombie
 * (dead, not yet reaped: in a container whose first process does not
 * reap, a killed writer stays one). */
static int process_gone(long pid)
{
    char path[64], buf[256];
    FILE *fp;
    int gone = 0;

    if (pid == (long)getpid())
        return 0;
    if (kill((pid_t)pid, 0) != 0)
        return errno == ESRCH;
    snprintf(path, sizeof path, "/proc/%ld/stat", pid);
    if ((fp = fopen(path, "r")) == NULL)
        return 0;
    if (fgets(buf, sizeof buf, fp) != NULL) {
        const char *close_paren = strrchr(buf, ')'); /* after the name */
        gone = close_paren != NULL && close_paren[1] == ' ' &&
               close_paren[2] == 'Z';
    }
    fclose(fp);
    return gone;
}

/* Read a journal's list; 0 when complete, -1 when there is none yet (the
 * process died while making it: nothing had been replaced). */
static int read_journal(journal *j)
{
    char p[SW_ERROR_PATH_MAX], word[16], name[64];
    FILE *fp;

    if (join(p, sizeof p, j->path, "set") != 0 || (fp = fopen(p, "r")) == NULL)
        return -1;
    j->n = 0;
    while (j->n < SET_MAX && fscanf(fp, "%15s %63s", word, name) == 2) {
        int h = strcmp(word, "old") == 0    ? HELD_OLD
                : strcmp(word, "keep") == 0 ? HELD_KEEP
                                            : HELD_NONE;
        if (strchr(name, '/') != NULL || name[0] == '.')
            continue; /* never a path: only the set's own names */
        j->held[j->n] = h;
        snprintf(j->name[j->n], sizeof j->name[j->n], "%s", name);
        j->n++;
    }
    fclose(fp);
    return j->n > 0 && strcmp(j->name[j->n - 1], SW_OUTSET_MANIFEST) == 0
               ? 0
               : -1;
}

/* Finish what a killed publish left: roll back unless its manifest made
 * it into place.  Returns 1 finished, 2 rolled back, -1 failed. */
static int recover_journal(journal *j)
{
    char mine[SW_ERROR_PATH_MAX], kept[SW_ERROR_PATH_MAX];
    struct stat a, b;
    int placed;

    if (read_journal(j) != 0) {
        remove_journal(j->path);
        return 1;
    }
    if (join(mine, sizeof mine, j->dir, SW_OUTSET_MANIFEST) != 0 ||
        join(kept, sizeof kept, j->path, SW_OUTSET_MANIFEST) != 0)
        return -1;
    /* the manifest in place is the new one when it is not the kept one
     * (compared by bytes, which also serves a journal of copies: a new
     * manifest with the same bytes describes the same files) */
    if (lstat(mine, &a) != 0)
        placed = 0;
    else if (j->held[j->n - 1] != HELD_OLD || lstat(kept, &b) != 0)
        placed = 1; /* a new manifest, or the old one already put back */
    else if (a.st_ino == b.st_ino && a.st_dev == b.st_dev)
        placed = 0;
    else if ((placed = same_bytes(mine, kept)) >= 0)
        placed = !placed;
    else
        return -1;
    if (placed) {
        remove_journal(j->path);
        return sync_dir(j->dir) == 0 ? 1 : -1;
    }
    return roll_back(j) == 0 ? 2 : -1;
}

int sw_outset_recover(const char *dir, sw_outset_recovery *rec,
                      sw_error *err)
{
    DIR *d;
    struct dirent *e;
    char p[SW_ERROR_PATH_MAX];
    int pass, rc = SW_OK;

    memset(rec, 0, sizeof *rec);
    /* journals first (pass 0), so that their files are back before the
     * temporary files go (pass 1) */
    for (pass = 0; pass < 2 && rc == SW_OK; pass++) {
        if ((d = opendir(dir)) == NULL)
            return errno == ENOENT || errno == ENOTDIR
                       ? SW_OK
                       : sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                                      "cannot read the output folder: %s",
                                      strerror(errno));
        while ((e = readdir(d)) != NULL) {
            const char *rest = NULL;
            long pid = name_pid(e->d_name, &rest);
            int is_journal;
            if (pid == 0 || !process_gone(pid) ||
                join(p, sizeof p, dir, e->d_name) != 0)
                continue;
            is_journal = strcmp(rest, JOURNAL_SUFFIX) == 0;
            if (pass == 0 && is_journal) {
                journal j;
                memset(&j, 0, sizeof j);
                snprintf(j.dir, sizeof j.dir, "%s", dir);
                snprintf(j.path, sizeof j.path, "%s", p);
                int r = recover_journal(&j);
                if (r < 0) {
                    rc = sw_error_set(err, SW_EOUTPUT, p, 0, 0,
                                      "an interrupted publish of process "
                                      "%ld could not be rolled back; see "
                                      "the README (output sets)",
                                      pid);
                    break;
                }
                rec->publish = r;
                rec->publish_pid = pid;
            } else if (pass == 1 && !is_journal) {
                struct stat sb;
                if (lstat(p, &sb) == 0 && S_ISREG(sb.st_mode) &&
                    unlink(p) == 0) {
                    rec->stale_removed++;
                    if (rec->stale_pid == 0 || pid < rec->stale_pid)
                        rec->stale_pid = pid; /* the lowest: stable */
                }
            }
        }
        closedir(d);
    }
    return rc;
}
