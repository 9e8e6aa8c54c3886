/* sillwatch: level series read from CSV files, streaming.
 *
 * A reader reads one CSV file (libcsv) from its header row on, one record
 * at a time, and hands back the instant of each record and the values of
 * the columns asked for, in metres above the site datum.  Memory does not
 * grow with the file: the reader keeps one read buffer and the current
 * record.  Several series in one file share one reader (one column each).
 *
 * Accepted: comma, semicolon or tab delimiter (detected from the header
 * row, or set); RFC 4180 quoting; lines whose first character is '#' (at a
 * record boundary) are comments; blank lines; a UTF-8 byte-order mark;
 * CRLF or LF line ends; a decimal comma where the delimiter is ';'.
 *
 * Positions in messages and in the statistics are physical line numbers
 * (1-based) and column = field number (1-based) within the record.
 */
#ifndef SILLWATCH_SERIES_H
#define SILLWATCH_SERIES_H

#include <stddef.h>
#include <stdint.h>

#include "sillwatch/error.h"
#include "sillwatch/timeutil.h"

#define SW_SERIES_MAX_COLUMNS 100000 /* value columns one reader serves
                                        (ensemble members and series of
                                        one file, all read in one pass);
                                        its arrays are sized per reader */
#define SW_SERIES_MAX_MISSING 8   /* extra missing tokens per column */
#define SW_SERIES_TOKEN_MAX 32
#define SW_SERIES_REJECTS_KEPT 10 /* positions kept of rejected fields */

typedef enum sw_time_encoding {
    SW_TIME_ISO8601 = 0, /* ISO 8601 date-time, see sw_stamp_parse() */
    SW_TIME_UNIX         /* seconds since 1970-01-01T00:00:00Z */
} sw_time_encoding;

/* What the reader needs to know of a file. */
typedef struct sw_reader_config {
    const char *path;
    const char *time_column;    /* header name of the time column */
    sw_time_encoding time_format;
    char delimiter;             /* 0: detect from the header; ',' ';' '\t' */
    const sw_zone *zone;        /* for timestamps without an offset; NULL:
                                   such timestamps are an error */
    int netcdf;                 /* a CF-NetCDF file (ncseries.h): the
                                   fields above but path are unused */
    const char *station;        /* netcdf: timeseries_id, or ""/NULL */
    const char *member_dim;     /* netcdf: "" or NULL: realization or
                                   member */
} sw_reader_config;

/* One value column. */
typedef struct sw_column_config {
    const char *name;                   /* header name */
    double scale;                       /* metres per unit: 1 or 0.3048 */
    double offset_m;                    /* added after scaling */
    size_t n_missing;
    const char *missing[SW_SERIES_MAX_MISSING]; /* extra missing tokens */
} sw_column_config;

/* A field that was not a number (a missing reading, counted and kept). */
typedef struct sw_reject {
    long line, column;
    char text[SW_SERIES_TOKEN_MAX];     /* the field, cut to fit */
    const char *reason;                 /* static text */
} sw_reject;

/* Data-quality counts, per reader and per column. */
typedef struct sw_column_stats {
    long missing;      /* empty, NaN, or a missing token */
    long rejected;     /* not a number: also a missing reading */
    long valid;
    size_t n_kept;     /* <= SW_SERIES_REJECTS_KEPT */
    sw_reject kept[SW_SERIES_REJECTS_KEPT];
} sw_column_stats;

/* Level times must lie in the years 1900 to 2200 (UTC): from
 * 1900-01-01T00:00:00Z, before 2201-01-01T00:00:00Z.  A time outside is
 * a mistake (milliseconds read as seconds gives the year 57062), and the
 * bound keeps the months of a run, and its hours, bounded. */
#define SW_SERIES_TIME_MIN_MS ((sw_time_ms)-2208988800LL * 1000)
#define SW_SERIES_TIME_END_MS ((sw_time_ms)7289654400LL * 1000)

typedef struct sw_reader_stats {
    long records;             /* data records read (not header/comments) */
    long duplicates;          /* exact duplicate records skipped */
    long first_duplicate_line;
    long time_rejected;       /* skipped-hour local times (not readable) */
    long first_time_rejected_line;
    long ambiguous;           /* repeated-hour times resolved by order */
    long unresolved;          /* repeated-hour times taken as the first */
    long first_unresolved_line;
    sw_time_ms first_t, last_t;
    long partial_line;        /* a last line without a line end, left out
                                 because the file changed while it was
                                 read (a writer was still at it); 0 none */
    sw_column_stats *column;  /* [n_columns]: owned by the reader */
} sw_reader_stats;

typedef struct sw_reader sw_reader; /* opaque */

/* Open `cfg->path` and read up to and including its header row; find the
 * time column and each of the `n_columns` value columns (`columns[i]`
 * becomes value index i).  On success *reader is a heap object the caller
 * releases with sw_reader_free().  Errors (SW_EDATA, with file, line and
 * column where they apply): unreadable file, empty file, no header, a
 * column not in the header (the message lists the header's columns), a
 * column named twice, more than SW_SERIES_MAX_COLUMNS columns asked of
 * the file (the message names the file and the count); SW_ENOMEM. */
int sw_reader_open(sw_reader **reader, const sw_reader_config *cfg,
                   const sw_column_config *columns, size_t n_columns,
                   sw_error *err);

/* Read the next data record.  On SW_OK, *has_row is 1 and *t and
 * values[0..n_columns) are set (a value is NAN where the reading is
 * missing or rejected), or *has_row is 0 at the end of the file.  Exact
 * duplicate records are skipped (counted).  Errors (SW_EDATA, with file,
 * line and column): a time that cannot be read ("timestamp ... has month
 * 13"), a time earlier than the previous record's, the same time as the
 * previous record with a different value, a ragged record (fewer fields
 * than the header needs), an unterminated quote at the end of the file, a
 * line longer than 1 MiB, a read error. */
int sw_reader_next(sw_reader *reader, int *has_row, sw_time_ms *t,
                   double *values, sw_error *err);

/* Read up to `max` data records at once: their times in t[0..*n) and
 * their values in values[i * n_columns + c].  The same records, in the
 * same order, as *n calls of sw_reader_next(); *n is below `max` only at
 * the end of the file or before an error.  An error after some records
 * leaves them in the arrays with SW_OK, and the next call returns it (with
 * *n = 0); errors as sw_reader_next(). */
int sw_reader_next_rows(sw_reader *reader, size_t max, sw_time_ms *t,
                        double *values, size_t *n, sw_error *err);

/* As sw_reader_next_rows(), with the line each record begins on in
 * lines[0..*n) (lines may be NULL). */
int sw_reader_next_rows_at(sw_reader *reader, size_t max, sw_time_ms *t,
                           long *lines, double *values, size_t *n,
                           sw_error *err);

/* The line the last record handed out began on (0 before the first). */
long sw_reader_line(const sw_reader *reader);

/* The field number (1-based) of value column `column` in the header, 0
 * when there is no such column. */
long sw_reader_field(const sw_reader *reader, size_t column);

/* The counts so far. */
const sw_reader_stats *sw_reader_get_stats(const sw_reader *reader);

/* The delimiter in use (detected or set). */
char sw_reader_delimiter(const sw_reader *reader);

/* Release a reader and close its file; NULL is accepted. */
void sw_reader_free(sw_reader *reader);

/* The column names of the header row of the CSV file at `path` (comments,
 * blank lines and a byte-order mark skipped; delimiter 0: detected), as
 * the reader sees them: trimmed, unquoted.  On SW_OK *names is an array of
 * *n strings the caller releases with sw_csv_header_free().  Errors as
 * sw_reader_open(): SW_EDATA (unreadable or empty file), SW_ENOMEM. */
int sw_csv_header(const char *path, char delimiter, char ***names, size_t *n,
                  sw_error *err);
void sw_csv_header_free(char **names, size_t n);

#endif
