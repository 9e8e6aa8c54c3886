/* sillwatch: the columns of a level file read once, handed out one at a
 * time.
 *
 * Some work goes column by column through a wide file: the tailwater a
 * headwater-only forecast needs is written member after member.  Opening
 * a reader per column parsed the whole file once per column (1000
 * members: 1000 parses of a 6.7 MB file, 12 s).  A column store reads the
 * file once through one reader of all the columns and keeps the records
 * in a temporary file (tmpfile(3), where TMPDIR says), in blocks of rows
 * laid out column after column, so that each column is read back in a
 * few large reads.  Memory: one block (about 512 KiB, at least 8 rows)
 * and a small index of the blocks, whatever the length of the file.
 */
#ifndef SILLWATCH_COLSTORE_H
#define SILLWATCH_COLSTORE_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/series.h"
#include "sillwatch/timeutil.h"

typedef struct sw_colstore sw_colstore; /* opaque */

/* Read every record `reader` (open, with n_columns value columns, none
 * read yet) gives into a new store.  Errors: the reader's (its file, line
 * and column); SW_ENOMEM; SW_EOUTPUT when the temporary file cannot be
 * made or written. */
int sw_colstore_read(sw_colstore **store, sw_reader *reader,
                     size_t n_columns, sw_error *err);

/* Records in the store. */
size_t sw_colstore_rows(const sw_colstore *store);

/* Going through one column: start at `column`'s first record. */
typedef struct sw_colstore_cursor {
    sw_colstore *store;
    size_t column;
    size_t block, row, n;   /* the block read, the next row in it, rows */
    sw_time_ms *t;          /* the block's times, lines and values */
    long *line;
    double *v;
} sw_colstore_cursor;

/* Errors: SW_ENOMEM. */
int sw_colstore_start(sw_colstore *store, size_t column,
                      sw_colstore_cursor *cur, sw_error *err);

/* The next record of the column: *has = 0 past the last.  The time, the
 * line the record began on and the value (NaN for a missing reading), as
 * sw_reader_next_rows_at() gave them.  Errors: SW_EOUTPUT (reading the
 * temporary file back). */
int sw_colstore_next(sw_colstore_cursor *cur, int *has, sw_time_ms *t,
                     long *line, double *v, sw_error *err);

void sw_colstore_cursor_free(sw_colstore_cursor *cur);

/* Release (the temporary file goes with it); NULL is accepted. */
void sw_colstore_free(sw_colstore *store);

#endif
