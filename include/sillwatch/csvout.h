/* sillwatch: the one writer of text fields in every CSV output.
 *
 * RFC 4180 (section 2, rules 5-7): a field that holds a comma, a double
 * quote, a carriage return or a line feed is enclosed in double quotes,
 * and each double quote inside it is doubled; so is a field that starts
 * or ends with a blank (space or tab), which many readers (libcsv among
 * them) would otherwise trim.  Any other field is written as it is.  Numbers and times never need quotes and are written by their
 * own formatters; every field that comes from the user (gate names,
 * ensemble member labels, series names) goes through here.
 */
#ifndef SILLWATCH_CSVOUT_H
#define SILLWATCH_CSVOUT_H

#include <stddef.h>
#include <stdio.h>

/* Nonzero when `text` must be quoted in CSV. */
int sw_csv_needs_quotes(const char *text);

/* At most how many bytes sw_csv_field_put() writes for `text`. */
size_t sw_csv_field_max(const char *text);

/* Put `text` at w as one CSV field, quoted when it needs to be (room for
 * sw_csv_field_max(text) bytes; no NUL); returns the end. */
char *sw_csv_field_put(char *w, const char *text);

/* Write `text` to `fp` as one CSV field, quoted when it needs to be.
 * Write errors are left to the stream (sw_outfile_close() checks them). */
void sw_csv_put_field(FILE *fp, const char *text);

#endif
