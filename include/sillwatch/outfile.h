/* sillwatch: output files that appear whole or not at all, and output
 * sets that appear together or not at all.
 *
 * Each output is written to a temporary file in the same folder, named
 * ".sillwatch.PID.NAME.XXXXXX" after the writing process, created with
 * mode 0666 less the umask; it is flushed, synced and closed, and only
 * then put in place.  A run that fails or is interrupted removes its
 * temporary files and leaves any earlier output untouched.
 *
 * A set (the outputs of one `run` or `screen`) is published by
 * sw_outset_publish(): the previous files of the set's names are first
 * hard-linked into a journal folder ".sillwatch.PID.publish" (with a list
 * `set` of what each name held), the previous manifest.csv is removed, the
 * new files are renamed in place (names the new set does not have are
 * removed), then manifest.csv (file, bytes, SHA-256, tool version, site
 * SHA-256, run time) is renamed in place last, and the journal removed.
 * Any failure before the manifest is in place puts the previous files
 * back.  A journal left by a killed process is finished or rolled back by
 * sw_outset_recover(), which also removes temporary files of processes
 * that are gone.  The folder is synced after each stage.
 */
#ifndef SILLWATCH_OUTFILE_H
#define SILLWATCH_OUTFILE_H

#include <stddef.h>
#include <stdio.h>

#include "sillwatch/error.h"

/* The chunks in which long outputs are written (outfile.c). */
#define SW_OUTFILE_CHUNK ((size_t)1 << 18)

/* SHA-256 as 64 hex digits and a NUL. */
#define SW_SHA256_HEX 65

typedef struct sw_outsink sw_outsink;

/* Writing goes through `fp` (a stdio stream over the file's sink: the
 * bytes are hashed as they are written, and long outputs are written in
 * large chunks on a thread of their own, see outfile.c). */
typedef struct sw_outfile {
    FILE *fp;                       /* write here; NULL when not open */
    char tmp[SW_ERROR_PATH_MAX];    /* the temporary file */
    char path[SW_ERROR_PATH_MAX];   /* where it goes */
    int closed;                     /* closed, waiting to be published */
    sw_outsink *sink;               /* behind fp (outfile.c) */
    unsigned long long bytes;       /* once closed: the bytes written */
    char sha256[SW_SHA256_HEX];     /* once closed: their SHA-256 */
} sw_outfile;

/* The name of an output set's manifest. */
#define SW_OUTSET_MANIFEST "manifest.csv"

/* Start writing `dir`/`name`.  `dir` must exist and be a writable folder.
 * Returns SW_OK, or SW_EOUTPUT naming the path and the system's reason. */
int sw_outfile_open(sw_outfile *f, const char *dir, const char *name,
                    sw_error *err);

/* Flush, sync and close the temporary file, checking every write that went
 * before (a full disk shows here), and set f->bytes and f->sha256.
 * Returns SW_OK or SW_EOUTPUT; on error the temporary file is removed. */
int sw_outfile_close(sw_outfile *f, sw_error *err);

/* Writing in place, for outputs of many short rows (the step log):
 * sw_outfile_room() gives room for up to SW_OUTFILE_ROOM_MAX bytes at the
 * output's end (inside the chunk being filled, so nothing is copied), the
 * caller writes there and hands sw_outfile_commit() the end of what it
 * wrote.  Text written through f->fp before must have been flushed
 * (fflush).  A failure is kept and reported by sw_outfile_close(). */
#define SW_OUTFILE_ROOM_MAX 4096
char *sw_outfile_room(sw_outfile *f);
void sw_outfile_commit(sw_outfile *f, const char *end);

/* SW_OK when `path` is missing or a regular file (not a symbolic link);
 * SW_EOUTPUT otherwise (a folder, a device, a FIFO, a socket, a link):
 * no output ever replaces one of those. */
int sw_outfile_check_target(const char *path, sw_error *err);

/* Rename a closed temporary file over its final name (which must be
 * missing or a regular file), then sync the folder.  Returns SW_OK or
 * SW_EOUTPUT (the temporary file is then removed). */
int sw_outfile_publish(sw_outfile *f, sw_error *err);

/* Give up: close and remove the temporary file.  Safe on a file that was
 * never opened, or already published (memset to 0 is "never opened"). */
void sw_outfile_abort(sw_outfile *f);

/* What goes into a set's manifest beside each file's size and SHA-256. */
typedef struct sw_outset_meta {
    const char *tool_version;  /* "0.1.0" */
    const char *site_sha256;   /* 64 hex digits */
    const char *run_time;      /* ISO 8601 UTC */
} sw_outset_meta;

/* SHA-256 of the file at `path` as 64 hex digits and a NUL (nettle).
 * Errors: `code` (the caller's: SW_ESITE for a site file, SW_EDATA for a
 * level file) with the reason. */
int sw_file_sha256(const char *path, char hex[SW_SHA256_HEX], int code,
                   sw_error *err);

/* Publish the closed files of files[0..n) (the names of the set:
 * names[k] in `dir`) as one set, as described above.  A name whose file
 * is not closed (not written this time) is removed from the folder as
 * part of the set.  Every final name must be missing or a regular file.
 * Returns SW_OK, or SW_EOUTPUT after putting the previous files back (the
 * message says if that failed too: the journal is then left for the next
 * run).  The temporary files are consumed either way. */
int sw_outset_publish(const char *dir, sw_outfile *files,
                      const char *const *names, size_t n,
                      const sw_outset_meta *meta, sw_error *err);

/* What sw_outset_recover() found and did. */
typedef struct sw_outset_recovery {
    long stale_removed;     /* temporary files of gone processes removed */
    long stale_pid;         /* the lowest process id among them */
    int publish;            /* 0 none; 1 a finished publish's journal
                               removed; 2 an interrupted publish rolled
                               back (the previous set restored) */
    long publish_pid;       /* the process that left it */
} sw_outset_recovery;

/* Before writing into `dir`: remove the temporary files and journals of
 * processes that are gone (a process id that another process has taken
 * since keeps them until that process ends), rolling back an interrupted
 * publish first.  A missing `dir` is no error.  Returns SW_OK or
 * SW_EOUTPUT. */
int sw_outset_recover(const char *dir, sw_outset_recovery *rec,
                      sw_error *err);

#endif
