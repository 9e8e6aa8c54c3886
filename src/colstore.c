/* sillwatch: the columns of a level file read once (colstore.h).
 *
 * The temporary file holds blocks.  A block of n rows is the n times
 * (int64), the n lines (long), then each column's n values (double),
 * column after column; the index keeps each block's offset and n.  A
 * column is read back block by block: three reads a block. */
#define _DEFAULT_SOURCE /* fileno */
#include "sillwatch/colstore.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <unistd.h>

/* Values a block holds, all columns together (512 KiB of doubles), and
 * the fewest rows a block has however wide the file. */
#define BLOCK_VALUES 65536
#define BLOCK_MIN_ROWS 8

typedef struct block {
    off_t offset;
    size_t n;
} block;

struct sw_colstore {
    FILE *fp;
    size_t n_columns, rows_per_block, rows;
    block *blocks;
    size_t n_blocks, cap_blocks;
};

static int temp_error(sw_error *err, const char *what)
{
    return sw_error_set(err, SW_EOUTPUT, NULL, 0, 0,
                        "cannot %s a temporary file for the columns of a "
                        "level file (is TMPDIR writable?)",
                        what);
}

static int nomem(sw_error *err)
{
    return sw_error_set(err, SW_ENOMEM, NULL, 0, 0, "out of memory");
}

/* Append a block of n rows: times, lines, then the values of `rows`
 * (row after row, as the reader gives them) column after column. */
static int put_block(sw_colstore *cs, const sw_time_ms *t, const long *line,
                     const double *rows, double *by_column, size_t n,
                     sw_error *err)
{
    size_t c_n = cs->n_columns;
    if (cs->n_blocks == cs->cap_blocks) {
        size_t cap = cs->cap_blocks ? 2 * cs->cap_blocks : 64;
        block *grown = realloc(cs->blocks, cap * sizeof *grown);
        if (grown == NULL)
            return nomem(err);
        cs->blocks = grown;
        cs->cap_blocks = cap;
    }
    for (size_t c = 0; c < c_n; c++)
        for (size_t r = 0; r < n; r++)
            by_column[c * n + r] = rows[r * c_n + c];
    off_t at = ftello(cs->fp);
    if (at < 0 || fwrite(t, sizeof *t, n, cs->fp) != n ||
        fwrite(line, sizeof *line, n, cs->fp) != n ||
        fwrite(by_column, sizeof *by_column, n * c_n, cs->fp) != n * c_n)
        return temp_error(err, "write");
    cs->blocks[cs->n_blocks++] = (block){at, n};
    cs->rows += n;
    return SW_OK;
}

/* Read the whole file through the reader, a block at a time. */
static int fill(sw_colstore *cs, sw_reader *rd, sw_error *err)
{
    size_t per = cs->rows_per_block, c_n = cs->n_columns;
    sw_time_ms *t = malloc(per * sizeof *t);
    long *line = malloc(per * sizeof *line);
    double *rows = malloc(per * c_n * sizeof *rows);
    double *by_column = malloc(per * c_n * sizeof *by_column);
    int rc = SW_OK;

    if (t == NULL || line == NULL || rows == NULL || by_column == NULL)
        rc = nomem(err);
    while (rc == SW_OK) {
        size_t n = 0;
        rc = sw_reader_next_rows_at(rd, per, t, line, rows, &n, err);
        if (rc != SW_OK || n == 0)
            break;
        rc = put_block(cs, t, line, rows, by_column, n, err);
    }
    if (rc == SW_OK && fflush(cs->fp) != 0)
        rc = temp_error(err, "write");
    free(t);
    free(line);
    free(rows);
    free(by_column);
    return rc;
}

int sw_colstore_read(sw_colstore **out, sw_reader *rd, size_t n_columns,
                     sw_error *err)
{
    sw_colstore *cs = calloc(1, sizeof *cs);
    int rc;

    *out = NULL;
    if (cs == NULL)
        return nomem(err);
    cs->n_columns = n_columns ? n_columns : 1;
    cs->rows_per_block = BLOCK_VALUES / cs->n_columns;
    if (cs->rows_per_block < BLOCK_MIN_ROWS)
        cs->rows_per_block = BLOCK_MIN_ROWS;
    if ((cs->fp = tmpfile()) == NULL) {
        free(cs);
        return temp_error(err, "create");
    }
    if ((rc = fill(cs, rd, err)) != SW_OK) {
        sw_colstore_free(cs);
        return rc;
    }
    *out = cs;
    return SW_OK;
}

size_t sw_colstore_rows(const sw_colstore *cs)
{
    return cs->rows;
}

int sw_colstore_start(sw_colstore *cs, size_t column, sw_colstore_cursor *cur,
                      sw_error *err)
{
    size_t per = cs->rows_per_block;
    memset(cur, 0, sizeof *cur);
    cur->store = cs;
    cur->column = column;
    cur->t = malloc(per * sizeof *cur->t);
    cur->line = malloc(per * sizeof *cur->line);
    cur->v = malloc(per * sizeof *cur->v);
    if (cur->t == NULL || cur->line == NULL || cur->v == NULL) {
        sw_colstore_cursor_free(cur);
        return nomem(err);
    }
    return SW_OK;
}

/* pread all of n bytes at `at`; 0 or -1. */
static int read_at(int fd, void *buf, size_t n, off_t at)
{
    char *p = buf;
    while (n > 0) {
        ssize_t got = pread(fd, p, n, at);
        if (got < 0 && errno == EINTR)
            continue;
        if (got <= 0)
            return -1;
        p += got;
        at += got;
        n -= (size_t)got;
    }
    return 0;
}

/* Read the column's part of block b. */
static int load_block(sw_colstore_cursor *cur, size_t b, sw_error *err)
{
    const sw_colstore *cs = cur->store;
    const block *bk = &cs->blocks[b];
    int fd = fileno(cs->fp);
    size_t n = bk->n;
    off_t values = bk->offset + (off_t)(n * (sizeof *cur->t +
                                             sizeof *cur->line));
    if (read_at(fd, cur->t, n * sizeof *cur->t, bk->offset) != 0 ||
        read_at(fd, cur->line, n * sizeof *cur->line,
                bk->offset + (off_t)(n * sizeof *cur->t)) != 0 ||
        read_at(fd, cur->v, n * sizeof *cur->v,
                values + (off_t)(cur->column * n * sizeof *cur->v)) != 0)
        return temp_error(err, "read back");
    cur->block = b;
    cur->n = n;
    cur->row = 0;
    return SW_OK;
}

int sw_colstore_next(sw_colstore_cursor *cur, int *has, sw_time_ms *t,
                     long *line, double *v, sw_error *err)
{
    int rc;
    *has = 0;
    if (cur->row == cur->n) {
        /* blocks are never empty: n == 0 means none read yet */
        size_t next = cur->n == 0 ? 0 : cur->block + 1;
        if (next >= cur->store->n_blocks)
            return SW_OK;
        if ((rc = load_block(cur, next, err)) != SW_OK)
            return rc;
    }
    *t = cur->t[cur->row];
    *line = cur->line[cur->row];
    *v = cur->v[cur->row];
    cur->row++;
    *has = 1;
    return SW_OK;
}

void sw_colstore_cursor_free(sw_colstore_cursor *cur)
{
    free(cur->t);
    free(cur->line);
    free(cur->v);
    cur->t = NULL;
    cur->line = NULL;
    cur->v = NULL;
}

void sw_colstore_free(sw_colstore *cs)
{
    if (cs == NULL)
        return;
    if (cs->fp != NULL)
        fclose(cs->fp);
    free(cs->blocks);
    free(cs);
}
