/* sillwatch: level series read from CSV files, streaming (see
 * include/sillwatch/series.h).
 *
 * How a file is read:
 *
 *   1. Lines.  The file is read with fread into one buffer, 64 KiB at a
 *      time; memchr finds each '\n'.  A line that does not fit is kept
 *      across refills (the buffer grows for a line longer than a chunk,
 *      up to the 1 MiB line limit), so the physical line number of every
 *      line is known.  Trailing carriage returns are cut off
 *      a line and its end handed to libcsv as a single '\n', so a CRLF line
 *      is one record and a CR never ends up inside a field.
 *   2. Records.  At a record boundary (not inside a quoted field) comment
 *      lines ('#' first) and blank lines are skipped; any other line starts
 *      a record at its line number.  libcsv gets one physical line per call,
 *      strict (RFC 4180 quoting; an unterminated quote at the end of the
 *      file is an error).  A quoted field may span lines: the record keeps
 *      the line on which it began.
 *      Plain runs: after the header, a run of whole lines in the buffer
 *      holding no quote, no CR and no '#' is handed to libcsv in one call
 *      (see feed_plain_run()).  There every line is one record or a blank
 *      line, so the row callback counts the lines; records are finished
 *      there and queued, and handed out one by one.  A line holding any of
 *      those bytes, the last partial line, and anything after an error go
 *      the line-by-line way, so messages name the same line and column.
 *   3. Fields.  libcsv reports neither positions nor field numbers, so the
 *      field callback counts fields; only the time field and the value
 *      fields are converted, right there, while libcsv's buffer is valid.
 *      Nothing is allocated per record or per field.
 *   4. The record.  When libcsv reports the end of a record, its shape is
 *      checked, its instant resolved (time zone, repeated and skipped
 *      hours), its order against the previous record checked, and only then
 *      are its counts added to the statistics.
 *
 * Records skipped (exact duplicates, local times in a skipped hour) are
 * counted as such and add nothing to the per-column counts, which describe
 * the rows handed out.
 *
 * Memory: the read buffer (64 KiB, up to 1 MiB + 64 KiB for long lines),
 * the queue of a plain run (PLAIN_VALUES doubles and times),
 * libcsv's field buffer (bounded through the 4 MiB record limit: below
 * 2 x 4 MiB + 1 MiB, see grow_geometrically()), the header's
 * names while the reader opens, and per-column state sized when it opens
 * (a few hundred bytes a column).  Nothing grows with the length of the
 * file.
 */
#include "sillwatch/series.h"
#include "sillwatch/ncseries.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <poll.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include <csv.h>

#include "sillwatch/cancel.h"

#include "sillwatch/decimal.h"

/* Bytes asked of fread at a time, and the first size of the buffer. */
#define CHUNK_BYTES ((size_t)64 * 1024)

/* The longest physical line (without its line end) and the longest record
 * (a record may span lines through a quoted newline; line ends counted),
 * in bytes.  A level file's lines are a few dozen bytes; these limits only
 * stop a broken file (a binary file, a quote that never closes) from
 * taking unbounded memory: the record limit bounds libcsv's field buffer. */
#define LINE_MAX_BYTES ((size_t)1024 * 1024)
#define RECORD_MAX_BYTES ((size_t)4 * 1024 * 1024)

/* Values (and as many times) the queue of a plain run holds: 256 KiB in
 * all.  A record's line has at least two bytes, so a run is cut to twice
 * the rows the queue holds. */
#define PLAIN_VALUES 16384

/* Readings beyond this magnitude, in the file's unit, are taken as logger
 * fill values or corrupt numbers rather than water levels (common
 * practice, no source: no gauge reads 100 km). */
#define LEVEL_MAX_ABS 1e5

/* What became of a value field of the record being read. */
enum {
    VALUE_VALID = 0,
    VALUE_MISSING, /* empty, NaN or a missing token */
    VALUE_REJECTED /* not a number, or not a plausible level */
};

/* What became of the time field of the record being read. */
enum {
    TIME_NONE = 0, /* not seen yet */
    TIME_INSTANT,  /* an instant: rec_t */
    TIME_LOCAL,    /* a local wall-clock time without offset: rec_wall */
    TIME_BAD       /* unreadable: the message is in time_err */
};

/* One value column as the reader keeps it (copied from the caller's
 * configuration, which need not outlive sw_reader_open). */
typedef struct value_column {
    char *name;
    double scale;
    double offset_m;
    size_t n_missing;
    char *missing[SW_SERIES_MAX_MISSING];
    size_t missing_len[SW_SERIES_MAX_MISSING];
    long field;       /* 1-based field number in the header */
    int next;         /* next column reading the same field, or -1 */
} value_column;

struct sw_reader {
    sw_nc *nc;         /* a NetCDF file (ncseries.c); the rest unused */
    char *path;
    FILE *fp;
    struct csv_parser csv;
    int csv_ready;
    char delim;
    sw_time_encoding time_format;
    const sw_zone *zone;

    /* columns: the arrays below marked [n_columns] are sized at open */
    size_t n_columns;
    value_column *col; /* [n_columns] */
    size_t time_idx;   /* 0-based field index of the time column */
    size_t n_header;   /* fields in the header */
    size_t n_needed;   /* fields a record must have: last needed + 1 */
    int *first_col;    /* per header field: first column reading it, -1 */

    /* input */
    char *buf;
    size_t cap, pos, end;
    int eof;
    int regular;       /* a regular file: read up to size_at_open */
    unsigned long long size_at_open, taken;
    struct timespec mtime_at_open;
    int started;       /* the first bytes were read (BOM checked) */
    long line;         /* physical lines taken so far */

    /* the record being read */
    int in_record;     /* a record has begun and not ended yet */
    int rec_done;      /* libcsv reported its end */
    int stray_cr;      /* a CR inside a line ended a record */
    size_t cr_fields;  /* fields seen when it did */
    int nomem;         /* an allocation in a callback failed */
    long rec_line;
    size_t rec_bytes;
    size_t rec_fields;
    int time_state;
    sw_time_ms rec_t, rec_wall;
    sw_stamp_memo stamp_memo; /* the date of the last stamp read */
    sw_error time_err;
    double *val;            /* [n_columns] */
    unsigned char *outcome; /* [n_columns] */
    sw_reject *rej;         /* [n_columns] */

    /* the header, while it is read */
    char *hdr;         /* names, each NUL-terminated, trimmed */
    size_t hdr_len, hdr_cap;
    size_t *hdr_off;
    size_t hdr_n, hdr_n_cap;
    struct header_name *hdr_sorted; /* [hdr_n]: by name, then field */

    /* the previous record handed out */
    int has_prev;
    sw_time_ms prev_t;
    long prev_line;
    double *prev_val;  /* [n_columns] */

    /* plain runs: records finished ahead, handed out from the queue */
    int plain;         /* the header is read: runs may be fed whole */
    size_t plain_rows; /* the queue's capacity in rows */
    sw_time_ms *q_t;   /* [plain_rows] */
    long *q_line;      /* [plain_rows]: the line of each */
    double *q_v;       /* [plain_rows * n_columns] */
    size_t q_n, q_pos; /* rows queued, next one out */
    int q_status;      /* an error after the queued rows, SW_OK if none */
    sw_error q_err;
    int rec_nonempty;  /* a field of the record has text */
    int odd_ok;        /* odd[] is valid for this fill of the buffer */
    size_t odd[3];     /* next quote, CR, '#' at or after some pos (end) */

    long out_line;     /* line of the last record handed out */
    int done;          /* end of file reached */
    int failed;        /* status of an earlier error, SW_OK if none */
    sw_error saved;    /* that error, handed out again */
    sw_reader_stats stats;
};

/* ---- small helpers ------------------------------------------------------ */

static int is_blank(char c)
{
    return c == ' ' || c == '\t';
}

static inline void trim(const char **s, size_t *len)
{
    const char *p = *s;
    size_t n = *len;

    while (n > 0 && is_blank(*p)) {
        p++;
        n--;
    }
    while (n > 0 && (is_blank(p[n - 1]) || p[n - 1] == '\r'))
        n--;
    *s = p;
    *len = n;
}

static char *copy_string(const char *s)
{
    size_t n = strlen(s) + 1;
    char *c = malloc(n);

    if (c != NULL)
        memcpy(c, s, n);
    return c;
}

/* Text for quoting in a message: at most 64 bytes of it. */
static int quote_len(size_t len)
{
    return len > 64 ? 64 : (int)len;
}

static const char *delim_name(char d)
{
    return d == ';' ? "';'" : d == '\t' ? "tab" : "','";
}

/* An error at a position of this file. */
static int fail_at(const sw_reader *r, sw_error *err, int code, long line,
                   long column, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 6, 7)))
#endif
    ;

static int fail_at(const sw_reader *r, sw_error *err, int code, long line,
                   long column, const char *fmt, ...)
{
    char msg[SW_ERROR_MSG_MAX];
    va_list ap;

    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    return sw_error_set(err, code, r->path, line, column, "%s", msg);
}

/* ---- lines -------------------------------------------------------------- */

/* Read what the file holds, at most n bytes, into dst (*got = 0 at its
 * end).  A regular file is read up to its size when it was opened, so a
 * run sees the file as it was then.  Anything else (a FIFO, a pipe, a
 * terminal) is polled SW_CANCEL_POLL_MS at a time, and a read returns what
 * has come, so that a signal is noticed while the writer is silent. */
static int read_chunk(sw_reader *r, char *dst, size_t n, size_t *got,
                      sw_error *err)
{
    int fd = fileno(r->fp);

    *got = 0;
    if (r->regular) {
        if (r->taken >= r->size_at_open)
            return SW_OK;
        if ((unsigned long long)n > r->size_at_open - r->taken)
            n = (size_t)(r->size_at_open - r->taken);
    }
    for (;;) {
        ssize_t k;
        if (sw_cancel_requested())
            return sw_cancel_check(err);
        if (!r->regular) {
            struct pollfd p = {fd, POLLIN, 0};
            int ready = poll(&p, 1, SW_CANCEL_POLL_MS);
            if (ready == 0 || (ready < 0 && errno == EINTR))
                continue;
        }
        k = read(fd, dst, n);
        if (k >= 0) {
            *got = (size_t)k;
            r->taken += (unsigned long long)k;
            return SW_OK;
        }
        if (errno != EINTR)
            return fail_at(r, err, SW_EDATA, r->line + 1, 0,
                           "read error: %s", strerror(errno));
    }
}

/* Whether a regular file changed while it was read (its size or its
 * modification time is not what it was at open): then a last line
 * without a line end was cut by a writer still at it. */
static int partial_changed(const sw_reader *r)
{
    struct stat sb;

    if (!r->regular)
        return 0;
    if (fstat(fileno(r->fp), &sb) != 0)
        return 1;
    return (unsigned long long)sb.st_size != r->size_at_open ||
           sb.st_mtim.tv_sec != r->mtime_at_open.tv_sec ||
           sb.st_mtim.tv_nsec != r->mtime_at_open.tv_nsec;
}

/* Take the next physical line: *line and *len (with its '\n' if it has
 * one; *has_nl says which).  *len is 0 at the end of the file.  Reads more
 * of the file when the buffer holds no complete line. */
static int next_line(sw_reader *r, char **line, size_t *len, int *has_nl,
                     sw_error *err)
{
    for (;;) {
        char *start = r->buf + r->pos;
        size_t avail = r->end - r->pos;
        char *nl = memchr(start, '\n', avail);
        size_t got;

        if (nl != NULL && (size_t)(nl - start) <= LINE_MAX_BYTES) {
            *line = start;
            *len = (size_t)(nl - start) + 1;
            *has_nl = 1;
            r->pos += *len;
            return SW_OK;
        }
        if (nl != NULL || avail > LINE_MAX_BYTES)
            return fail_at(r, err, SW_EDATA, r->line + 1, 0,
                           "line longer than 1 MiB (is this a level "
                           "file?)");
        if (r->eof) {
            if (avail > 0 && partial_changed(r)) {
                /* a line cut by a writer that was still at it */
                r->stats.partial_line = r->line + 1;
                r->pos = r->end;
                avail = 0;
            }
            *line = start;
            *len = avail;
            *has_nl = 0;
            r->pos = r->end;
            return SW_OK;
        }
        /* Keep the partial line, at the start of the buffer. */
        if (r->pos > 0) {
            memmove(r->buf, start, avail);
            r->pos = 0;
            r->end = avail;
        }
        if (r->end == r->cap) {
            size_t cap = r->cap * 2;
            char *grown;

            if (cap > LINE_MAX_BYTES + CHUNK_BYTES)
                cap = LINE_MAX_BYTES + CHUNK_BYTES;
            grown = realloc(r->buf, cap);
            if (grown == NULL)
                return sw_error_set(err, SW_ENOMEM, r->path, r->line + 1, 0,
                                    "out of memory reading a long line");
            r->buf = grown;
            r->cap = cap;
        }
        int rc = read_chunk(r, r->buf + r->end, r->cap - r->end, &got, err);
        if (rc != SW_OK)
            return rc;
        if (got == 0)
            r->eof = 1;
        r->end += got;
        r->odd_ok = 0;
        /* A UTF-8 byte-order mark is no part of the first line. */
        if (!r->started && r->end > 0) {
            r->started = 1;
            if (r->end >= 3 && memcmp(r->buf, "\xEF\xBB\xBF", 3) == 0)
                r->pos = 3;
        }
    }
}

/* A line that is no record when it comes at a record boundary: a comment
 * ('#' first) or a blank line (only blanks and line-end characters). */
static int is_skipped_line(const char *s, size_t len)
{
    if (s[0] == '#')
        return 1;
    for (size_t i = 0; i < len; i++)
        if (s[i] != ' ' && s[i] != '\t' && s[i] != '\r' && s[i] != '\n')
            return 0;
    return 1;
}

/* Whether a CR stands inside the line, before other text (not just at
 * its end, as in CRLF): a file whose lines end in CR alone reads as one
 * line. */
static int cr_inside(const char *s, size_t len)
{
    const char *cr = memchr(s, '\r', len);
    for (; cr != NULL && cr < s + len; cr++)
        if (*cr != '\r' && *cr != '\n')
            return 1;
    return 0;
}

/* The delimiter of a header line: the most frequent of ',' ';' and tab
 * outside quotes; ',' on a tie or when there is none. */
static char detect_delimiter(const char *s, size_t len)
{
    size_t comma = 0, semi = 0, tab = 0;
    int quoted = 0;

    for (size_t i = 0; i < len; i++) {
        char c = s[i];
        if (c == '"')
            quoted = !quoted;
        else if (quoted)
            continue;
        else if (c == ',')
            comma++;
        else if (c == ';')
            semi++;
        else if (c == '\t')
            tab++;
    }
    if (semi > comma && semi > tab)
        return ';';
    if (tab > comma && tab > semi)
        return '\t';
    return ',';
}

/* ---- libcsv callbacks --------------------------------------------------- */

static void on_row(int c, void *data)
{
    sw_reader *r = data;

    /* Line ends reach libcsv as '\n' (or -1 from csv_fini); a CR that ends
     * a record came from the middle of a line. */
    if (c == '\r' && !r->stray_cr) {
        r->stray_cr = 1;
        r->cr_fields = r->rec_fields;
    }
    r->rec_done = 1;
}

static void on_header_field(void *s, size_t len, void *data)
{
    sw_reader *r = data;
    const char *text = s;

    if (r->nomem)
        return;
    trim(&text, &len);
    if (r->hdr_n == r->hdr_n_cap) {
        size_t n = r->hdr_n_cap ? 2 * r->hdr_n_cap : 16;
        size_t *off = realloc(r->hdr_off, n * sizeof *off);
        if (off == NULL) {
            r->nomem = 1;
            return;
        }
        r->hdr_off = off;
        r->hdr_n_cap = n;
    }
    if (r->hdr_cap - r->hdr_len < len + 1) {
        size_t n = 2 * (r->hdr_cap + len + 1);
        char *h = realloc(r->hdr, n);
        if (h == NULL) {
            r->nomem = 1;
            return;
        }
        r->hdr = h;
        r->hdr_cap = n;
    }
    r->hdr_off[r->hdr_n++] = r->hdr_len;
    if (len > 0)
        memcpy(r->hdr + r->hdr_len, text, len);
    r->hdr[r->hdr_len + len] = '\0';
    r->hdr_len += len + 1;
    r->rec_fields++;
}

static void take_time(sw_reader *r, const char *s, size_t len)
{
    sw_stamp st;

    if (r->time_format == SW_TIME_UNIX) {
        if (sw_unix_parse(s, len, &r->rec_t, &r->time_err) != SW_OK)
            r->time_state = TIME_BAD;
        else
            r->time_state = TIME_INSTANT;
        return;
    }
    if (sw_stamp_parse_memo(s, len, &r->stamp_memo, &st, &r->time_err) !=
        SW_OK) {
        r->time_state = TIME_BAD;
    } else if (st.has_offset) {
        /* The offset is east positive: UTC = wall - offset (ISO 8601). */
        r->rec_t = st.wall_ms - (sw_time_ms)st.offset_s * SW_MS_PER_S;
        r->time_state = TIME_INSTANT;
    } else if (r->zone != NULL) {
        r->rec_wall = st.wall_ms;
        r->time_state = TIME_LOCAL;
    } else {
        trim(&s, &len);
        sw_error_set(&r->time_err, SW_EDATA, NULL, 0, 0,
                     "timestamp '%.*s' has no UTC offset and the site sets "
                     "no timezone (add one to the stamps, or set timezone "
                     "in the site file)", quote_len(len), s);
        r->time_state = TIME_BAD;
    }
}

static void reject_value(sw_reader *r, int c, const char *s, size_t len,
                         const char *reason)
{
    sw_reject *rj = &r->rej[c];
    size_t n = len < sizeof rj->text - 1 ? len : sizeof rj->text - 1;

    r->val[c] = NAN;
    r->outcome[c] = VALUE_REJECTED;
    rj->line = r->rec_line;
    rj->column = r->col[c].field;
    memcpy(rj->text, s, n);
    rj->text[n] = '\0';
    rj->reason = reason;
}

static void take_value(sw_reader *r, int c, const char *s, size_t len)
{
    const value_column *col = &r->col[c];
    double v;

    trim(&s, &len);
    if (len == 0 ||
        (len == 3 && (memcmp(s, "NaN", 3) == 0 || memcmp(s, "nan", 3) == 0 ||
                      memcmp(s, "NAN", 3) == 0))) {
        r->val[c] = NAN;
        r->outcome[c] = VALUE_MISSING;
        return;
    }
    for (size_t k = 0; k < col->n_missing; k++) {
        if (col->missing_len[k] == len && memcmp(col->missing[k], s, len) == 0) {
            r->val[c] = NAN;
            r->outcome[c] = VALUE_MISSING;
            return;
        }
    }
    int parsed = sw_decimal_parse(s, len, r->delim == ';', &v);
    if (parsed < 0) {
        reject_value(r, c, s, len, "not a number");
    } else if (parsed > 0 || !isfinite(v) || fabs(v) > LEVEL_MAX_ABS) {
        reject_value(r, c, s, len, "implausible level (|value| > 100000)");
    } else {
        r->val[c] = v * col->scale + col->offset_m;
        r->outcome[c] = VALUE_VALID;
    }
}

static void on_field(void *s, size_t len, void *data)
{
    sw_reader *r = data;
    size_t f = r->rec_fields++;

    if (f == r->time_idx)
        take_time(r, s, len);
    if (f < r->n_header)
        for (int c = r->first_col[f]; c >= 0; c = r->col[c].next)
            take_value(r, c, s, len);
}

/* ---- records ------------------------------------------------------------ */

/* libcsv (3.0.3) grows its field buffer by a fixed block (blk_size, 128
 * bytes by default), and each growth is a realloc that may copy the whole
 * buffer: a field of n bytes costs n / 128 copies, quadratic in n (a quote
 * left open over 4 MiB took minutes under AddressSanitizer, whose realloc
 * always copies).  Before each line is fed, the block is set to at least
 * the buffer's present size and the line's length, so the buffer at least
 * doubles when it grows and a line needs at most one growth.  The buffer
 * stays below twice the longest field plus one line. */
static void grow_geometrically(struct csv_parser *csv, size_t feed)
{
    size_t blk = csv_get_buffer_size(csv);

    if (blk < feed)
        blk = feed;
    if (blk < 128)
        blk = 128;
    csv_set_blk_size(csv, blk);
}

/* Read lines until libcsv ends a record (*got = 1) or the file ends
 * (*got = 0), with `field_cb` called for each field. */
static int read_record(sw_reader *r, void (*field_cb)(void *, size_t, void *),
                       int *got, sw_error *err)
{
    *got = 0;
    r->rec_done = 0;
    for (;;) {
        char *s = NULL;
        size_t len = 0, feed;
        int has_nl = 0, rc;

        if ((rc = next_line(r, &s, &len, &has_nl, err)) != SW_OK)
            return rc;
        if (len == 0) {
            /* Every line fed ended in '\n', so a record still open is one
             * whose quoted field never closed. */
            if (r->in_record)
                return fail_at(r, err, SW_EDATA, r->rec_line,
                               (long)r->rec_fields + 1,
                               "unterminated quote: field %zu of the record "
                               "that begins here has no closing quote",
                               r->rec_fields + 1);
            return SW_OK;
        }
        r->line++;
        if (!r->in_record) {
            if (is_skipped_line(s, len)) {
                if (s[0] == '#' && cr_inside(s, len))
                    return fail_at(r, err, SW_EDATA, r->line, 0,
                                   "a carriage return (CR) inside this "
                                   "comment line: are the file's lines "
                                   "ended by CR alone? give the file LF or "
                                   "CRLF line ends");
                continue;
            }
            if (r->delim == 0) {
                r->delim = detect_delimiter(s, len);
                csv_set_delim(&r->csv, (unsigned char)r->delim);
            }
            r->in_record = 1;
            r->rec_line = r->line;
            r->rec_bytes = 0;
            r->rec_fields = 0;
            r->time_state = TIME_NONE;
            r->stray_cr = 0;
        }
        r->rec_bytes += len;
        if (r->rec_bytes > RECORD_MAX_BYTES)
            return fail_at(r, err, SW_EDATA, r->rec_line,
                           (long)r->rec_fields + 1,
                           "the record that begins here is longer than "
                           "4 MiB; is a quote in field %zu left open?",
                           r->rec_fields + 1);

        /* Cut the line end (LF, CRLF, or stray CRs before the LF) and hand
         * libcsv a single '\n' in its place. */
        feed = len - (size_t)has_nl;
        while (feed > 0 && s[feed - 1] == '\r')
            feed--;
        if (has_nl)
            s[feed++] = '\n';
        grow_geometrically(&r->csv, feed);
        if (csv_parse(&r->csv, s, feed, field_cb, on_row, r) != feed) {
            if (csv_error(&r->csv) == CSV_EPARSE)
                return fail_at(r, err, SW_EDATA, r->line,
                               (long)r->rec_fields + 1,
                               "misplaced quote in field %zu: a field is "
                               "either quoted as a whole (\"...\", with \"\" "
                               "for a quote inside) or holds no quote "
                               "(RFC 4180)", r->rec_fields + 1);
            return sw_error_set(err, SW_ENOMEM, r->path, r->line, 0,
                                "out of memory (%s)",
                                csv_strerror(csv_error(&r->csv)));
        }
        if (!has_nl && !r->rec_done &&
            csv_fini(&r->csv, field_cb, on_row, r) != 0)
            return fail_at(r, err, SW_EDATA, r->rec_line,
                           (long)r->rec_fields + 1,
                           "unterminated quote: field %zu of the record "
                           "that begins here has no closing quote",
                           r->rec_fields + 1);
        if (r->nomem)
            return sw_error_set(err, SW_ENOMEM, r->path, r->line, 0,
                                "out of memory reading the header");
        if (r->stray_cr)
            return fail_at(r, err, SW_EDATA, r->line, (long)r->cr_fields,
                           "a carriage return (CR) in the middle of the "
                           "line, outside quotes, splits the record; give "
                           "the file LF or CRLF line ends");
        if (r->rec_done) {
            r->in_record = 0;
            *got = 1;
            return SW_OK;
        }
    }
}

/* A reading for a message: "12.345 m", or "no reading" for NAN. */
static void format_level(char *buf, size_t n, double v)
{
    if (isnan(v))
        snprintf(buf, n, "no reading");
    else
        snprintf(buf, n, "%.10g m", v);
}

/* Compare two readings: equal numbers, or both missing. */
static int same_value(double a, double b)
{
    return a == b || (isnan(a) && isnan(b));
}

/* Check the record libcsv has just ended and settle its instant.  *keep
 * is 1 when it is to be handed out, 0 when it is skipped (an exact
 * duplicate, or a local time in a skipped hour). */
static int finish_record(sw_reader *r, int *keep, sw_time_ms *t_out,
                         sw_error *err)
{
    sw_reader_stats *st = &r->stats;
    long time_col = (long)r->time_idx + 1;
    sw_time_ms t;
    char a[48], b[48], v[48];

    *keep = 0;
    st->records++;
    if (r->rec_fields < r->n_needed)
        return fail_at(r, err, SW_EDATA, r->rec_line, (long)r->rec_fields + 1,
                       "this record has %zu field%s but the header has %zu "
                       "(a ragged line: a delimiter or a field missing?)",
                       r->rec_fields, r->rec_fields == 1 ? "" : "s",
                       r->n_header);
    if (r->rec_fields > r->n_header)
        return fail_at(r, err, SW_EDATA, r->rec_line, (long)r->n_header + 1,
                       "this record has %zu fields but the header has only "
                       "%zu (delimiter %s; is a field with a delimiter in "
                       "it left unquoted?)", r->rec_fields, r->n_header,
                       delim_name(r->delim));
    if (r->time_state == TIME_BAD)
        return fail_at(r, err, SW_EDATA, r->rec_line, time_col, "%s",
                       r->time_err.message);

    if (r->time_state == TIME_LOCAL) {
        sw_time_ms utc[SW_ZONE_MAX_SHOWN];
        int n = sw_zone_local_to_utc(r->zone, r->rec_wall, utc);

        if (n == 0) {
            /* A wall-clock time in the hour skipped when daylight saving
             * starts names no instant: the record cannot be placed. */
            if (st->time_rejected++ == 0)
                st->first_time_rejected_line = r->rec_line;
            return SW_OK;
        }
        t = utc[0];
        if (n >= 2) {
            /* A repeated hour (daylight saving ends): the logger went on
             * in time order, so the earliest reading later than the
             * previous record is the one meant. */
            int k = 0;
            while (r->has_prev && k < n && utc[k] <= r->prev_t)
                k++;
            if (r->has_prev && k < n) {
                t = utc[k];
                st->ambiguous++;
            } else if (st->unresolved++ == 0) {
                st->first_unresolved_line = r->rec_line;
            }
        }
    } else {
        t = r->rec_t;
    }
    if (t < SW_SERIES_TIME_MIN_MS || t >= SW_SERIES_TIME_END_MS) {
        sw_time_format(a, sizeof a, t, NULL);
        return fail_at(r, err, SW_EDATA, r->rec_line, time_col,
                       "time %s is outside the years 1900 to 2200 (UTC) "
                       "that level times may have%s", a,
                       t >= SW_SERIES_TIME_END_MS
                           ? "; a time in milliseconds read as seconds?"
                           : "");
    }

    if (r->has_prev && t <= r->prev_t) {
        if (t < r->prev_t) {
            sw_time_format(a, sizeof a, t, r->zone);
            sw_time_format(b, sizeof b, r->prev_t, r->zone);
            return fail_at(r, err, SW_EDATA, r->rec_line, time_col,
                           "time goes backwards: %s is before %s on line "
                           "%ld (records must be in time order)", a, b,
                           r->prev_line);
        }
        for (size_t c = 0; c < r->n_columns; c++) {
            if (!same_value(r->val[c], r->prev_val[c])) {
                sw_time_format(a, sizeof a, t, r->zone);
                format_level(b, sizeof b, r->prev_val[c]);
                format_level(v, sizeof v, r->val[c]);
                return fail_at(r, err, SW_EDATA, r->rec_line, r->col[c].field,
                               "duplicate time %s with a different value "
                               "(line %ld has %s = %s, this line %s)", a,
                               r->prev_line, r->col[c].name, b, v);
            }
        }
        if (st->duplicates++ == 0)
            st->first_duplicate_line = r->rec_line;
        return SW_OK;
    }

    for (size_t c = 0; c < r->n_columns; c++) {
        sw_column_stats *cs = &st->column[c];

        switch (r->outcome[c]) {
        case VALUE_VALID:
            cs->valid++;
            break;
        case VALUE_MISSING:
            cs->missing++;
            break;
        default:
            cs->rejected++;
            if (cs->n_kept < SW_SERIES_REJECTS_KEPT)
                cs->kept[cs->n_kept++] = r->rej[c];
            break;
        }
        r->prev_val[c] = r->val[c];
    }
    if (!r->has_prev)
        st->first_t = t;
    st->last_t = t;
    r->has_prev = 1;
    r->prev_t = t;
    r->prev_line = r->rec_line;
    *t_out = t;
    *keep = 1;
    return SW_OK;
}

/* ---- plain runs --------------------------------------------------------- */

/* Where the next byte lies, at or after pos, that only the line-by-line
 * path handles: a quote, a CR or a '#' (end when there is none).  Each
 * search is kept until pos passes it, so a fill of the buffer is searched
 * once for each. */
static size_t next_odd(sw_reader *r)
{
    static const char odd_bytes[3] = {'"', '\r', '#'};
    size_t first = r->end;

    for (int k = 0; k < 3; k++) {
        if (!r->odd_ok || r->odd[k] < r->pos) {
            const char *hit = memchr(r->buf + r->pos, odd_bytes[k],
                                     r->end - r->pos);
            r->odd[k] = hit != NULL ? (size_t)(hit - r->buf) : r->end;
        }
        if (r->odd[k] < first)
            first = r->odd[k];
    }
    r->odd_ok = 1;
    return first;
}

/* Make ready for a record that begins on the next line. */
static void start_plain_record(sw_reader *r)
{
    r->rec_line = r->line + 1;
    r->rec_fields = 0;
    r->rec_nonempty = 0;
    r->time_state = TIME_NONE;
}

static void on_plain_field(void *s, size_t len, void *data)
{
    sw_reader *r = data;

    if (r->q_status != SW_OK)
        return;
    if (len > 0)
        r->rec_nonempty = 1;
    on_field(s, len, data);
}

/* The end of a line of a plain run: a blank line (no field; with tab as
 * the delimiter, only empty fields, as a line of blanks gives), or a
 * record, finished and queued. */
static void on_plain_row(int c, void *data)
{
    sw_reader *r = data;
    sw_time_ms t;
    int keep;

    (void)c;
    r->line++;
    if (r->q_status != SW_OK)
        return;
    if (r->rec_fields > 0 && (r->delim != '\t' || r->rec_nonempty)) {
        r->q_status = finish_record(r, &keep, &t, &r->q_err);
        if (r->q_status == SW_OK && keep) {
            double *v = &r->q_v[r->q_n * r->n_columns];
            /* a loop: memcpy is a call for a few values */
            for (size_t k = 0; k < r->n_columns; k++)
                v[k] = r->val[k];
            r->q_t[r->q_n] = t;
            r->q_line[r->q_n] = r->rec_line;
            r->q_n++;
        }
    }
    start_plain_record(r);
}

/* At a record boundary, hand libcsv the whole lines from pos up to the
 * first byte only the line-by-line path handles (at most twice the queue's
 * rows in bytes), and queue their records.  *fed is 0 when there was no
 * such line. */
static void feed_plain_run(sw_reader *r, int *fed)
{
    size_t lim = next_odd(r), len;
    const char *run = r->buf + r->pos;

    *fed = 0;
    if (lim - r->pos > 2 * r->plain_rows)
        lim = r->pos + 2 * r->plain_rows;
    len = lim - r->pos;
    while (len > 0 && run[len - 1] != '\n')
        len--;
    if (len == 0)
        return;
    *fed = 1;
    r->q_n = r->q_pos = 0;
    start_plain_record(r);
    /* Blank lines are reported as rows of no field (CSV_REPALL_NL), so
     * that every line is counted. */
    csv_set_opts(&r->csv, CSV_STRICT | CSV_STRICT_FINI | CSV_REPALL_NL);
    grow_geometrically(&r->csv, len);
    size_t done = csv_parse(&r->csv, run, len, on_plain_field, on_plain_row,
                            r);
    csv_set_opts(&r->csv, CSV_STRICT | CSV_STRICT_FINI);
    r->pos += len;
    if (done != len && r->q_status == SW_OK) {
        /* without quotes, only a failed allocation stops libcsv */
        r->q_status = sw_error_set(&r->q_err, SW_ENOMEM, r->path,
                                   r->line + 1, 0, "out of memory (%s)",
                                   csv_strerror(csv_error(&r->csv)));
    }
}

/* ---- opening ------------------------------------------------------------ */

/* The header's names, quoted and listed, for a message. */
static void list_header(const sw_reader *r, char *out, size_t n)
{
    size_t used = 0;

    out[0] = '\0';
    for (size_t i = 0; i < r->hdr_n; i++) {
        int w = snprintf(out + used, n - used, "%s'%s'", i ? ", " : "",
                         r->hdr + r->hdr_off[i]);
        if (w < 0 || (size_t)w >= n - used) {
            if (n > 5)
                memcpy(out + n - 5, "...", 4);
            return;
        }
        used += (size_t)w;
    }
}

/* A header name and its 0-based field index. */
struct header_name {
    const char *name;
    size_t field;
};

static int cmp_header_name(const void *x, const void *y)
{
    const struct header_name *a = x, *b = y;
    int c = strcmp(a->name, b->name);
    return c != 0 ? c : (a->field > b->field) - (a->field < b->field);
}

/* Sort the header's names (with their fields), so that each column asked
 * for is found in log n steps: a search through the header for each of
 * the columns of a wide file (an ensemble of many members) was quadratic
 * in them. */
static int sort_header(sw_reader *r, sw_error *err)
{
    r->hdr_sorted = malloc((r->hdr_n ? r->hdr_n : 1) * sizeof *r->hdr_sorted);
    if (r->hdr_sorted == NULL)
        return sw_error_set(err, SW_ENOMEM, r->path, 0, 0, "out of memory");
    for (size_t i = 0; i < r->hdr_n; i++) {
        r->hdr_sorted[i].name = r->hdr + r->hdr_off[i];
        r->hdr_sorted[i].field = i;
    }
    qsort(r->hdr_sorted, r->hdr_n, sizeof *r->hdr_sorted, cmp_header_name);
    return SW_OK;
}

/* strcmp's order between the string h and s[0..len). */
static int cmp_name_text(const char *h, const char *s, size_t len)
{
    size_t hl = strlen(h);
    int c = memcmp(h, s, hl < len ? hl : len);
    return c != 0 ? c : (hl > len) - (hl < len);
}

/* Find `name` (trimmed) in the header; *idx is its 0-based field index.
 * Of a name given twice, the first two fields are named. */
static int find_column(const sw_reader *r, const char *what,
                       const char *name, size_t *idx, sw_error *err)
{
    const char *s = name;
    size_t len = strlen(name), lo = 0, hi = r->hdr_n;
    const struct header_name *hs = r->hdr_sorted;
    char list[320];

    trim(&s, &len);
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (cmp_name_text(hs[mid].name, s, len) < 0)
            lo = mid + 1;
        else
            hi = mid;
    }
    if (lo < r->hdr_n && cmp_name_text(hs[lo].name, s, len) == 0) {
        *idx = hs[lo].field;
        if (lo + 1 < r->hdr_n && cmp_name_text(hs[lo + 1].name, s, len) == 0)
            return fail_at(r, err, SW_EDATA, r->rec_line,
                           (long)hs[lo + 1].field + 1,
                           "%s column '%.*s' appears twice in the header "
                           "(fields %zu and %zu); rename one",
                           what, quote_len(len), s, *idx + 1,
                           hs[lo + 1].field + 1);
    } else {
        list_header(r, list, sizeof list);
        return fail_at(r, err, SW_EDATA, r->rec_line, 0,
                       "%s column '%.*s' is not in the header (delimiter "
                       "%s); the header has: %s", what, quote_len(len), s,
                       delim_name(r->delim), list);
    }
    return SW_OK;
}

/* Size the per-column state for `n_columns` value columns (at most
 * SW_SERIES_MAX_COLUMNS: each costs a few hundred bytes here and in the
 * statistics, and its share of every batch of records read ahead). */
static int alloc_columns(sw_reader *r, const char *path, size_t n_columns,
                         sw_error *err)
{
    size_t n = n_columns ? n_columns : 1;

    if (n_columns > SW_SERIES_MAX_COLUMNS)
        return sw_error_set(err, SW_EDATA, path, 0, 0,
                            "%zu value columns asked of this file (ensemble "
                            "members and series together); at most %d are "
                            "read from one file", n_columns,
                            SW_SERIES_MAX_COLUMNS);
    r->col = calloc(n, sizeof *r->col);
    r->val = calloc(n, sizeof *r->val);
    r->outcome = calloc(n, sizeof *r->outcome);
    r->rej = calloc(n, sizeof *r->rej);
    r->prev_val = calloc(n, sizeof *r->prev_val);
    r->stats.column = calloc(n, sizeof *r->stats.column);
    if (r->col == NULL || r->val == NULL || r->outcome == NULL ||
        r->rej == NULL || r->prev_val == NULL || r->stats.column == NULL)
        return sw_error_set(err, SW_ENOMEM, path, 0, 0,
                            "out of memory for %zu value columns",
                            n_columns);
    r->n_columns = n_columns;
    return SW_OK;
}

/* Copy the caller's configuration into the reader. */
static int copy_config(sw_reader *r, const sw_reader_config *cfg,
                       const sw_column_config *columns, size_t n_columns,
                       sw_error *err)
{
    if (cfg->path == NULL || cfg->time_column == NULL ||
        (n_columns > 0 && columns == NULL))
        return sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                            "sw_reader_open: path, time column or columns "
                            "not given");
    if (cfg->delimiter != 0 && cfg->delimiter != ',' &&
        cfg->delimiter != ';' && cfg->delimiter != '\t')
        return sw_error_set(err, SW_EINTERNAL, cfg->path, 0, 0,
                            "delimiter must be ',', ';' or tab");
    if ((r->path = copy_string(cfg->path)) == NULL)
        return sw_error_set(err, SW_ENOMEM, cfg->path, 0, 0, "out of memory");
    r->time_format = cfg->time_format;
    r->zone = cfg->zone;
    r->delim = cfg->delimiter;
    for (size_t c = 0; c < n_columns; c++) {
        const sw_column_config *cc = &columns[c];
        value_column *vc = &r->col[c];

        if (cc->name == NULL || cc->n_missing > SW_SERIES_MAX_MISSING ||
            !isfinite(cc->scale) || !(cc->scale > 0) ||
            !isfinite(cc->offset_m))
            return sw_error_set(err, SW_EINTERNAL, r->path, 0, 0,
                                "value column %zu is not configured (name, "
                                "a positive scale, a finite offset)", c + 1);
        if ((vc->name = copy_string(cc->name)) == NULL)
            return sw_error_set(err, SW_ENOMEM, r->path, 0, 0,
                                "out of memory");
        vc->scale = cc->scale;
        vc->offset_m = cc->offset_m;
        for (size_t k = 0; k < cc->n_missing; k++) {
            const char *tok = cc->missing[k] != NULL ? cc->missing[k] : "";
            size_t len = strlen(tok);

            /* Fields are compared trimmed; so are the tokens. */
            trim(&tok, &len);
            if ((vc->missing[k] = malloc(len + 1)) == NULL)
                return sw_error_set(err, SW_ENOMEM, r->path, 0, 0,
                                    "out of memory");
            memcpy(vc->missing[k], tok, len);
            vc->missing[k][len] = '\0';
            vc->missing_len[k] = len;
            vc->n_missing++;
        }
    }
    return SW_OK;
}

/* Open the file of a configured reader, set up libcsv and read the header
 * row; *got is 0 if the file holds no record at all. */
static int read_header(sw_reader *r, int *got, sw_error *err)
{
    struct stat sb;
    /* opening a FIFO waits for its writer; a signal ends the wait (the
     * program's handlers do not restart calls) */
    while ((r->fp = fopen(r->path, "rb")) == NULL) {
        if (errno == EINTR && !sw_cancel_requested())
            continue;
        if (errno == EINTR)
            return sw_cancel_check(err);
        return fail_at(r, err, SW_EDATA, 0, 0,
                       "cannot open the level file: %s", strerror(errno));
    }
    if (fstat(fileno(r->fp), &sb) == 0 && S_ISDIR(sb.st_mode))
        return fail_at(r, err, SW_EDATA, 0, 0,
                       "this is a folder, not a level file");
    if (S_ISREG(sb.st_mode)) {
        r->regular = 1;
        r->size_at_open = (unsigned long long)sb.st_size;
        r->mtime_at_open = sb.st_mtim;
    }
    if ((r->buf = malloc(CHUNK_BYTES)) == NULL)
        return sw_error_set(err, SW_ENOMEM, r->path, 0, 0, "out of memory");
    r->cap = CHUNK_BYTES;
    csv_init(&r->csv, CSV_STRICT | CSV_STRICT_FINI);
    r->csv_ready = 1;
    if (r->delim != 0)
        csv_set_delim(&r->csv, (unsigned char)r->delim);
    return read_record(r, on_header_field, got, err);
}

int sw_reader_open(sw_reader **reader, const sw_reader_config *cfg,
                   const sw_column_config *columns, size_t n_columns,
                   sw_error *err)
{
    sw_reader *r;
    size_t idx, last;
    int got, rc;

    sw_error_clear(err);
    *reader = NULL;
    if ((r = calloc(1, sizeof *r)) == NULL)
        return sw_error_set(err, SW_ENOMEM, cfg ? cfg->path : NULL, 0, 0,
                            "out of memory");
    if (cfg == NULL) {
        rc = sw_error_set(err, SW_EINTERNAL, NULL, 0, 0,
                          "sw_reader_open: no configuration");
        goto cleanup;
    }
    if ((rc = alloc_columns(r, cfg->path, n_columns, err)) != SW_OK)
        goto cleanup;
    if (cfg->netcdf) {
        if ((rc = sw_nc_open(&r->nc, cfg, columns, n_columns, &r->stats,
                             err)) != SW_OK)
            goto cleanup;
        *reader = r;
        return SW_OK;
    }
    if ((rc = copy_config(r, cfg, columns, n_columns, err)) != SW_OK ||
        (rc = read_header(r, &got, err)) != SW_OK)
        goto cleanup;
    if (!got) {
        rc = fail_at(r, err, SW_EDATA, 0, 0, "%s", r->line == 0
                     ? "the level file is empty; it needs a header row and "
                       "data rows"
                     : "the level file has no header row, only comments "
                       "and blank lines");
        goto cleanup;
    }
    r->n_header = r->hdr_n;

    if ((rc = sort_header(r, err)) != SW_OK ||
        (rc = find_column(r, "time", cfg->time_column, &r->time_idx, err)) !=
            SW_OK)
        goto cleanup;
    last = r->time_idx;
    if ((r->first_col = malloc(r->n_header * sizeof *r->first_col)) == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, r->path, 0, 0, "out of memory");
        goto cleanup;
    }
    for (size_t i = 0; i < r->n_header; i++)
        r->first_col[i] = -1;
    /* Columns reading the same field are chained, in reverse order. */
    for (size_t c = 0; c < n_columns; c++) {
        if ((rc = find_column(r, "value", r->col[c].name, &idx, err)) != SW_OK)
            goto cleanup;
        r->col[c].field = (long)idx + 1;
        r->col[c].next = r->first_col[idx];
        r->first_col[idx] = (int)c;
        if (idx > last)
            last = idx;
    }
    r->n_needed = last + 1;

    /* Plain runs, where the queue holds a useful number of rows. */
    r->plain_rows = PLAIN_VALUES / (n_columns + 1);
    if (r->plain_rows >= 16) {
        r->q_t = malloc(r->plain_rows * sizeof *r->q_t);
        r->q_line = malloc(r->plain_rows * sizeof *r->q_line);
        r->q_v = malloc(r->plain_rows * (n_columns ? n_columns : 1) *
                        sizeof *r->q_v);
        if (r->q_t == NULL || r->q_v == NULL || r->q_line == NULL) {
            rc = sw_error_set(err, SW_ENOMEM, r->path, 0, 0,
                              "out of memory");
            goto cleanup;
        }
        r->plain = 1;
    }

    /* The names are no longer needed. */
    free(r->hdr);
    free(r->hdr_off);
    free(r->hdr_sorted);
    r->hdr = NULL;
    r->hdr_off = NULL;
    r->hdr_sorted = NULL;
    *reader = r;
    return SW_OK;

cleanup:
    sw_reader_free(r);
    return rc;
}

/* ---- reading ------------------------------------------------------------ */

int sw_reader_next(sw_reader *reader, int *has_row, sw_time_ms *t,
                   double *values, sw_error *err)
{
    sw_reader *r = reader;
    int got, keep, rc;

    if (r->nc != NULL)
        return sw_nc_next(r->nc, has_row, t, values, err);
    *has_row = 0;
    if (r->failed != SW_OK) {
        if (err != NULL)
            *err = r->saved;
        return r->failed;
    }
    while (!r->done) {
        if (r->q_pos < r->q_n) {
            const double *v = &r->q_v[r->q_pos * r->n_columns];
            for (size_t k = 0; k < r->n_columns; k++)
                values[k] = v[k];
            *t = r->q_t[r->q_pos];
            r->out_line = r->q_line[r->q_pos];
            r->q_pos++;
            *has_row = 1;
            return SW_OK;
        }
        if (r->q_status != SW_OK) {
            r->failed = r->q_status;
            r->saved = r->q_err;
            if (err != NULL)
                *err = r->saved;
            return r->failed;
        }
        if (r->plain && !r->in_record) {
            int fed;
            feed_plain_run(r, &fed);
            if (fed)
                continue;
        }
        rc = read_record(r, on_field, &got, &r->saved);
        if (rc == SW_OK && got)
            rc = finish_record(r, &keep, t, &r->saved);
        if (rc != SW_OK) {
            r->failed = rc;
            if (err != NULL)
                *err = r->saved;
            return rc;
        }
        if (!got) {
            r->done = 1;
        } else if (keep) {
            for (size_t c = 0; c < r->n_columns; c++)
                values[c] = r->val[c];
            r->out_line = r->rec_line;
            *has_row = 1;
            return SW_OK;
        }
    }
    return SW_OK;
}

int sw_reader_next_rows(sw_reader *reader, size_t max, sw_time_ms *t,
                        double *values, size_t *n, sw_error *err)
{
    return sw_reader_next_rows_at(reader, max, t, NULL, values, n, err);
}

long sw_reader_line(const sw_reader *reader) { return reader->out_line; }

long sw_reader_field(const sw_reader *reader, size_t column)
{
    return column < reader->n_columns ? reader->col[column].field : 0;
}

int sw_reader_next_rows_at(sw_reader *reader, size_t max, sw_time_ms *t,
                           long *lines, double *values, size_t *n,
                           sw_error *err)
{
    sw_reader *r = reader;
    size_t nc = r->n_columns;
    int has_row, rc;

    *n = 0;
    while (*n < max) {
        size_t avail = r->q_n - r->q_pos;
        if (avail > 0) {
            /* a plain run's queue: in blocks */
            size_t take = avail < max - *n ? avail : max - *n;
            memcpy(&t[*n], &r->q_t[r->q_pos], take * sizeof *t);
            if (lines != NULL)
                memcpy(&lines[*n], &r->q_line[r->q_pos],
                       take * sizeof *lines);
            if (nc > 0)
                memcpy(&values[*n * nc], &r->q_v[r->q_pos * nc],
                       take * nc * sizeof *values);
            r->q_pos += take;
            r->out_line = r->q_line[r->q_pos - 1];
            *n += take;
            continue;
        }
        rc = sw_reader_next(r, &has_row, &t[*n], &values[*n * nc], err);
        if (rc != SW_OK)
            return *n > 0 ? SW_OK : rc; /* sticky: the next call has it */
        if (!has_row)
            break;
        if (lines != NULL)
            lines[*n] = r->out_line;
        (*n)++;
    }
    return SW_OK;
}

const sw_reader_stats *sw_reader_get_stats(const sw_reader *reader)
{
    return &reader->stats;
}

char sw_reader_delimiter(const sw_reader *reader)
{
    return reader->delim;
}

int sw_csv_header(const char *path, char delimiter, char ***names, size_t *n,
                  sw_error *err)
{
    sw_reader_config cfg = {path, "",   SW_TIME_ISO8601, delimiter,
                            NULL, 0,    NULL,            NULL};
    sw_reader *r;
    int got = 0, rc;

    *names = NULL;
    *n = 0;
    if ((r = calloc(1, sizeof *r)) == NULL)
        return sw_error_set(err, SW_ENOMEM, path, 0, 0, "out of memory");
    if ((rc = copy_config(r, &cfg, NULL, 0, err)) != SW_OK ||
        (rc = read_header(r, &got, err)) != SW_OK)
        goto cleanup;
    if (!got) {
        rc = fail_at(r, err, SW_EDATA, 0, 0,
                     "the level file has no header row");
        goto cleanup;
    }
    if ((*names = calloc(r->hdr_n ? r->hdr_n : 1, sizeof **names)) == NULL) {
        rc = sw_error_set(err, SW_ENOMEM, r->path, 0, 0, "out of memory");
        goto cleanup;
    }
    for (size_t i = 0; i < r->hdr_n; i++) {
        if (((*names)[i] = copy_string(r->hdr + r->hdr_off[i])) == NULL) {
            sw_csv_header_free(*names, i);
            *names = NULL;
            rc = sw_error_set(err, SW_ENOMEM, r->path, 0, 0, "out of memory");
            goto cleanup;
        }
    }
    *n = r->hdr_n;
cleanup:
    sw_reader_free(r);
    return rc;
}

void sw_csv_header_free(char **names, size_t n)
{
    if (names == NULL)
        return;
    for (size_t i = 0; i < n; i++)
        free(names[i]);
    free(names);
}

void sw_reader_free(sw_reader *reader)
{
    if (reader == NULL)
        return;
    sw_nc_free(reader->nc);
    if (reader->fp != NULL)
        fclose(reader->fp);
    if (reader->csv_ready)
        csv_free(&reader->csv);
    for (size_t c = 0; reader->col != NULL && c < reader->n_columns; c++) {
        free(reader->col[c].name);
        for (size_t k = 0; k < reader->col[c].n_missing; k++)
            free(reader->col[c].missing[k]);
    }
    free(reader->col);
    free(reader->val);
    free(reader->outcome);
    free(reader->rej);
    free(reader->prev_val);
    free(reader->stats.column);
    free(reader->first_col);
    free(reader->hdr);
    free(reader->hdr_off);
    free(reader->hdr_sorted);
    free(reader->buf);
    free(reader->q_t);
    free(reader->q_line);
    free(reader->q_v);
    free(reader->path);
    free(reader);
}
