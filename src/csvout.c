/* sillwatch: the one writer of text fields in CSV outputs (see
 * include/sillwatch/csvout.h). */
#include "sillwatch/csvout.h"

#include <string.h>

static int is_blank(char c)
{
    return c == ' ' || c == '\t';
}

int sw_csv_needs_quotes(const char *text)
{
    size_t n = strlen(text);
    return text[strcspn(text, ",\"\r\n")] != '\0' ||
           (n > 0 && (is_blank(text[0]) || is_blank(text[n - 1])));
}

size_t sw_csv_field_max(const char *text)
{
    return 2 * strlen(text) + 2;
}

char *sw_csv_field_put(char *w, const char *text)
{
    if (!sw_csv_needs_quotes(text)) {
        while (*text != '\0')
            *w++ = *text++;
        return w;
    }
    *w++ = '"';
    for (const char *p = text; *p != '\0'; p++) {
        if (*p == '"')
            *w++ = '"';
        *w++ = *p;
    }
    *w++ = '"';
    return w;
}

void sw_csv_put_field(FILE *fp, const char *text)
{
    if (!sw_csv_needs_quotes(text)) {
        fputs(text, fp);
        return;
    }
    putc('"', fp);
    for (const char *p = text; *p != '\0'; p++) {
        if (*p == '"')
            putc('"', fp);
        putc(*p, fp);
    }
    putc('"', fp);
}
