/* sillwatch: one error record for the whole library.
 *
 * Every fallible function returns an int status (SW_OK or one of the codes
 * below) and takes `sw_error *err` as its last argument.  The record is
 * filled in exactly one place, sw_error_set(), so that every message has the
 * same shape: an optional position (file, line, column) and a sentence that
 * names the problem and, where possible, the fix.  The library never prints;
 * the program formats the record as "sillwatch: file:line:col: message".
 */
#ifndef SILLWATCH_ERROR_H
#define SILLWATCH_ERROR_H

#include <stddef.h>

/* Status codes.  The program maps them one-to-one to its exit codes
 * (see sw_exit_code in the README): keep the two lists in step. */
typedef enum sw_status {
    SW_OK = 0,
    SW_EUSAGE,    /* the command line is wrong */
    SW_ESITE,     /* the site file is unreadable or invalid */
    SW_EDATA,     /* a level file is unreadable or invalid */
    SW_EOUTPUT,   /* an output cannot be written */
    SW_ENOMEM,    /* out of memory */
    SW_ENUMERIC,  /* a numerical method failed (GSL status in the message) */
    SW_EINTERNAL, /* a bug: an invariant did not hold */
    SW_EINTERRUPTED /* stopped by a signal (see cancel.h) */
} sw_status;

#define SW_ERROR_PATH_MAX 512
#define SW_ERROR_MSG_MAX 512

typedef struct sw_error {
    int code;                       /* sw_status; SW_OK when nothing failed */
    char file[SW_ERROR_PATH_MAX];   /* "" when the error has no file */
    long line;                      /* 1-based; 0 when unknown */
    long column;                    /* 1-based; 0 when unknown */
    char message[SW_ERROR_MSG_MAX]; /* one sentence, no trailing newline */
} sw_error;

/* Clear the record to "no error".  `err` may be NULL. */
void sw_error_clear(sw_error *err);

/* Fill the record and return `code`, so that callers can write
 * `return sw_error_set(err, SW_ESITE, path, line, 0, "...", ...);`.
 * `file` may be NULL; `line` and `column` may be 0 (unknown).  `err` may be
 * NULL, in which case only the code is returned.  The message is a printf
 * format; it is truncated, never overrun, if it is too long. */
int sw_error_set(sw_error *err, int code, const char *file, long line,
                 long column, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 6, 7)))
#endif
    ;

/* A short name for a status code ("site file error", ...), for messages. */
const char *sw_status_name(int code);

#endif
