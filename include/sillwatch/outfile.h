/* sillwatch: output files that appear whole or not at all.
 *
 * Each output is written to a temporary file in the same folder
 * (".NAME.XXXXXX"), then flushed, synced and closed, and only then renamed
 * over NAME.  A run that fails or is interrupted removes its temporary
 * files and leaves any earlier NAME untouched.
 */
#ifndef SILLWATCH_OUTFILE_H
#define SILLWATCH_OUTFILE_H

#include <stdio.h>

#include "sillwatch/error.h"

typedef struct sw_outfile {
    FILE *fp;                       /* write here; NULL when not open */
    char tmp[SW_ERROR_PATH_MAX];    /* the temporary file */
    char path[SW_ERROR_PATH_MAX];   /* where it goes */
    int closed;                     /* closed, waiting to be published */
} sw_outfile;

/* Start writing `dir`/`name`.  `dir` must exist and be a writable folder.
 * Returns SW_OK, or SW_EOUTPUT naming the path and the system's reason. */
int sw_outfile_open(sw_outfile *f, const char *dir, const char *name,
                    sw_error *err);

/* Flush, sync and close the temporary file, checking every write that went
 * before (a full disk shows here).  Returns SW_OK or SW_EOUTPUT; on error
 * the temporary file is removed. */
int sw_outfile_close(sw_outfile *f, sw_error *err);

/* Rename a closed temporary file over its final name.  Returns SW_OK or
 * SW_EOUTPUT (the temporary file is then removed). */
int sw_outfile_publish(sw_outfile *f, sw_error *err);

/* Give up: close and remove the temporary file.  Safe on a file that was
 * never opened, or already published (memset to 0 is "never opened"). */
void sw_outfile_abort(sw_outfile *f);

#endif
