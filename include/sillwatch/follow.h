/* sillwatch: a level file followed as a logger appends to it, copied into
 * an append-only mirror.
 *
 * A follower keeps the file open and, at each poll, reads the bytes
 * appended since the last one.  Every complete record (up to a line end
 * outside quotes; a comment line is a record of its own) is appended to
 * the mirror byte for byte; a partial last record waits for its line end.
 * The mirror is synced before the poll returns, so a replay of the mirror
 * is a replay of the file as far as it was read.
 *
 * Rotation and truncation: when the path names another file than the one
 * held open (a new inode: the log was rotated) the old one is read to its
 * end first; when the file shrinks below what was read (truncated) or the
 * bytes before the read position no longer match the mirror's (truncated
 * and written again between two polls), the file is read again from its
 * start.  Such a file is read with the series' own reader, and its records
 * not later than the mirror's last are skipped; from the first later
 * record on, it is copied byte for byte.
 * Its header must name the same columns as the mirror's.
 *
 * Position: what a checkpoint must keep to resume (sw_follow_pos).  On
 * resume, a mirror longer than the position says (the process died after
 * appending, before its checkpoint) is cut back to it, and the bytes the
 * position says were copied must still be in the file (else SW_EDATA: the
 * file changed behind the checkpoint).
 *
 * The follower never prints; every descriptor it opens is close-on-exec.
 */
#ifndef SILLWATCH_FOLLOW_H
#define SILLWATCH_FOLLOW_H

#include <stddef.h>

#include "sillwatch/error.h"
#include "sillwatch/site.h"
#include "sillwatch/timeutil.h"

#define SW_FOLLOW_HEX 65 /* SHA-256 as hex digits and a NUL */

/* Where a follower stands: every field is kept by a checkpoint. */
typedef struct sw_follow_pos {
    unsigned long long dev, ino;  /* the file being read (0 0: none yet) */
    unsigned long long offset;    /* read up to here (a record boundary) */
    unsigned long long copy_from; /* its bytes from here on are copied
                                     (0; after a rotation, the start of the
                                     first record taken) */
    unsigned long long mirror_from; /* the mirror's size when they began */
    unsigned long long mirror_size;
    int skipping;                 /* reading it again from its start,
                                     looking for a record later than the
                                     mirror's last */
    char head_sha[SW_FOLLOW_HEX]; /* SHA-256 of its bytes before copy_from
                                     ("" when copy_from is 0) */
    long restarts;                /* rotations and truncations seen */
} sw_follow_pos;

typedef struct sw_follow sw_follow; /* opaque */

/* Follow the level file of series `series` (whose path is the file; its
 * reader settings and `site`'s zone read it when it must be read again)
 * into the mirror `mirror`, using `scratch` (a path in the same folder)
 * for a file read again.  `resume` NULL: start afresh (the mirror is made
 * empty; the level file must exist).  Otherwise resume at `resume`
 * (see above; a missing level file is waited for).  `series` and `site`
 * must outlive the follower.  Errors: SW_EDATA (the level file cannot be
 * read, or changed behind the checkpoint: the message says so),
 * SW_EOUTPUT (the mirror), SW_ENOMEM. */
int sw_follow_open(sw_follow **follow, const sw_site *site,
                   const sw_site_series *series, const char *mirror,
                   const char *scratch, const sw_follow_pos *resume,
                   sw_error *err);

/* Take what the file holds beyond the last poll: *appended is the number
 * of bytes appended to the mirror (synced).  A file read again from its
 * start is read with the series' reader, and so is the mirror for the
 * time of its last record.  Errors: SW_EDATA (a read error; a file read
 * again whose header differs from the mirror's, or whose records cannot
 * be read: file, line, column), SW_EOUTPUT (the mirror), SW_ENOMEM. */
int sw_follow_poll(sw_follow *follow, unsigned long long *appended,
                   sw_error *err);

/* The position, for a checkpoint. */
void sw_follow_get_pos(const sw_follow *follow, sw_follow_pos *pos);

/* The level file's path (the series'). */
const char *sw_follow_path(const sw_follow *follow);

/* Release (the files are closed; nothing is removed).  NULL is
 * accepted. */
void sw_follow_free(sw_follow *follow);

/* The end of the last complete record of bytes[0..n), read from a record
 * boundary (at_file_start: the file's first byte, where a UTF-8 byte-order
 * mark may stand): just after a line end outside quotes, or of a comment
 * line; 0 when there is none.  (For tests.) */
size_t sw_follow_record_end(const char *bytes, size_t n, int at_file_start);

#endif
