/* Tests of the CSV field writer (src/csvout.c): what it writes is read
 * back field for field by libcsv in strict mode, an independent RFC 4180
 * parser (RFC 4180, section 2: fields with commas, quotes or line breaks
 * are quoted, inner quotes doubled). */
#define _DEFAULT_SOURCE /* open_memstream */
#include "testutil.h"

#include <string.h>

#include <csv.h>

#include "sillwatch/csvout.h"

#define MAX_FIELDS 8

typedef struct parsed {
    char field[MAX_FIELDS][256];
    size_t n_fields;
    size_t n_rows;
} parsed;

static void on_field(void *s, size_t len, void *data)
{
    parsed *p = data;
    if (p->n_fields < MAX_FIELDS && len < sizeof p->field[0]) {
        memcpy(p->field[p->n_fields], s, len);
        p->field[p->n_fields][len] = '\0';
    }
    p->n_fields++;
}

static void on_row(int c, void *data)
{
    (void)c;
    ((parsed *)data)->n_rows++;
}

/* Write `fields` as one row and parse it back with libcsv. */
static void round_trip(const char *const *fields, size_t n, char **text,
                       parsed *p)
{
    size_t size;
    FILE *fp = open_memstream(text, &size);
    struct csv_parser csv;

    assert_non_null(fp);
    for (size_t i = 0; i < n; i++) {
        if (i > 0)
            fputc(',', fp);
        sw_csv_put_field(fp, fields[i]);
    }
    fputc('\n', fp);
    assert_int_equal(fclose(fp), 0);

    memset(p, 0, sizeof *p);
    assert_int_equal(csv_init(&csv, CSV_STRICT | CSV_STRICT_FINI), 0);
    assert_int_equal(csv_parse(&csv, *text, size, on_field, on_row, p), size);
    assert_int_equal(csv_fini(&csv, on_field, on_row, p), 0);
    csv_free(&csv);
}

static void test_fields_survive(void **state)
{
    (void)state;
    const char *fields[] = {"hw_a,b", "c\"d", "two\nlines", "cr\rhere",
                            "plain", "", " spaced ", "\"\""};
    const size_t n = sizeof fields / sizeof fields[0];
    char *text = NULL;
    parsed p;

    round_trip(fields, n, &text, &p);
    assert_int_equal(p.n_rows, 1);
    assert_int_equal(p.n_fields, n);
    for (size_t i = 0; i < n; i++)
        assert_string_equal(p.field[i], fields[i]);
    /* only the fields that need it are quoted (RFC 4180, 2.5-2.7) */
    assert_string_equal(text, "\"hw_a,b\",\"c\"\"d\",\"two\nlines\","
                              "\"cr\rhere\",plain,,\" spaced \",\"\"\"\"\"\"\n");
    free(text);
}

static void test_random_fields(void **state)
{
    (void)state;
    static const char alphabet[] = "ab,\"\r\n ;#x1";
    unsigned seed = 12345u;
    for (int round = 0; round < 2000; round++) {
        char buf[4][32];
        const char *fields[4];
        for (int f = 0; f < 4; f++) {
            seed = seed * 1103515245u + 12345u;
            size_t len = (seed >> 16) % 20;
            for (size_t i = 0; i < len; i++) {
                seed = seed * 1103515245u + 12345u;
                buf[f][i] = alphabet[(seed >> 16) % (sizeof alphabet - 1)];
            }
            buf[f][len] = '\0';
            fields[f] = buf[f];
        }
        /* a row of only empty fields is one empty line, which libcsv
         * skips; keep one field non-empty */
        if (buf[0][0] == '\0')
            fields[0] = "k";
        char *text = NULL;
        parsed p;
        round_trip(fields, 4, &text, &p);
        assert_int_equal(p.n_rows, 1);
        assert_int_equal(p.n_fields, 4);
        for (int f = 0; f < 4; f++)
            assert_string_equal(p.field[f], fields[f]);
        free(text);
    }
}

static void test_needs_quotes(void **state)
{
    (void)state;
    assert_false(sw_csv_needs_quotes("west"));
    assert_false(sw_csv_needs_quotes(""));
    assert_true(sw_csv_needs_quotes("a,b"));
    assert_true(sw_csv_needs_quotes("a\"b"));
    assert_true(sw_csv_needs_quotes("a\nb"));
    assert_true(sw_csv_needs_quotes("a\rb"));
    assert_true(sw_csv_needs_quotes(" a"));
    assert_true(sw_csv_needs_quotes("a\t"));
    assert_false(sw_csv_needs_quotes("a b"));
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_fields_survive),
        cmocka_unit_test(test_random_fields),
        cmocka_unit_test(test_needs_quotes),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
