/* sillwatch: output files that appear whole or not at all (outfile.h). */
#include "sillwatch/outfile.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

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
            sizeof f->path ||
        (size_t)snprintf(f->tmp, sizeof f->tmp, "%s/.%s.XXXXXX", dir, name) >=
            sizeof f->tmp)
        return sw_error_set(err, SW_EOUTPUT, dir, 0, 0,
                            "the output path is too long");
    fd = mkstemp(f->tmp);
    if (fd < 0) {
        int e = errno;
        f->tmp[0] = '\0';
        return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                            "cannot write here: %s", strerror(e));
    }
    /* mkstemp makes the file 0600; outputs are ordinary files */
    (void)fchmod(fd, 0644);
    f->fp = fdopen(fd, "w");
    if (f->fp == NULL) {
        int e = errno;
        close(fd);
        unlink(f->tmp);
        f->tmp[0] = '\0';
        return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                            "cannot write here: %s", strerror(e));
    }
    return SW_OK;
}

int sw_outfile_close(sw_outfile *f, sw_error *err)
{
    int bad = 0, e = 0;

    if (f->fp == NULL)
        return SW_OK;
    if (fflush(f->fp) != 0 || ferror(f->fp)) {
        bad = 1;
        e = errno;
    } else if (fsync(fileno(f->fp)) != 0 && errno != EINVAL) {
        bad = 1;
        e = errno;
    }
    if (fclose(f->fp) != 0 && !bad) {
        bad = 1;
        e = errno;
    }
    f->fp = NULL;
    if (bad) {
        unlink(f->tmp);
        f->tmp[0] = '\0';
        return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                            "could not write the output: %s",
                            e ? strerror(e) : "write error");
    }
    f->closed = 1;
    return SW_OK;
}

int sw_outfile_publish(sw_outfile *f, sw_error *err)
{
    if (!f->closed)
        return SW_OK;
    if (rename(f->tmp, f->path) != 0) {
        int e = errno;
        unlink(f->tmp);
        f->tmp[0] = '\0';
        f->closed = 0;
        return sw_error_set(err, SW_EOUTPUT, f->path, 0, 0,
                            "could not put the output in place: %s",
                            strerror(e));
    }
    f->tmp[0] = '\0';
    f->closed = 0;
    return SW_OK;
}

void sw_outfile_abort(sw_outfile *f)
{
    if (f->fp != NULL) {
        fclose(f->fp);
        f->fp = NULL;
    }
    if (f->tmp[0] != '\0') {
        unlink(f->tmp);
        f->tmp[0] = '\0';
    }
    f->closed = 0;
}
