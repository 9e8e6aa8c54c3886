/* sillwatch: the error record (see include/sillwatch/error.h). */
#include "sillwatch/error.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

void sw_error_clear(sw_error *err)
{
    if (err == NULL)
        return;
    memset(err, 0, sizeof *err);
}

int sw_error_set(sw_error *err, int code, const char *file, long line,
                 long column, const char *fmt, ...)
{
    va_list ap;

    if (err == NULL)
        return code;
    err->code = code;
    err->file[0] = '\0';
    if (file != NULL)
        snprintf(err->file, sizeof err->file, "%s", file);
    err->line = line;
    err->column = column;
    va_start(ap, fmt);
    vsnprintf(err->message, sizeof err->message, fmt, ap);
    va_end(ap);
    return code;
}

const char *sw_status_name(int code)
{
    switch (code) {
    case SW_OK: return "success";
    case SW_EUSAGE: return "usage error";
    case SW_ESITE: return "site file error";
    case SW_EDATA: return "level data error";
    case SW_EOUTPUT: return "output error";
    case SW_ENOMEM: return "out of memory";
    case SW_ENUMERIC: return "numerical failure";
    case SW_EINTERNAL: return "internal error";
    case SW_EINTERRUPTED: return "interrupted";
    default: return "unknown error";
    }
}
