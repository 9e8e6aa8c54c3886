/* Unit tests of the column store (src/colstore.c): every column read
 * back from one pass must be, record for record, what a reader of that
 * column alone gives (the reference: sw_reader, the way each column was
 * read before), across blocks, blanks and bad cells.  Invented test
 * data. */
#include "testutil.h"

#include <string.h>

#include "sillwatch/colstore.h"
#include "sillwatch/series.h"

#define WIDE 2000 /* columns: 32 rows a block, so 100 rows span 4 blocks */
#define ROWS 100

static char name[WIDE][16];

/* A wide file: time, then WIDE columns c_0000..., some cells blank, some
 * a missing token or not a number (counted, read as missing), values
 * differing by row and column; at bad_row the time is not a time. */
static void write_wide(const char *file, int bad_row, int bad_col)
{
    size_t cap = (size_t)(ROWS + 1) * WIDE * 10 + 64, n = 0;
    char *text = malloc(cap);
    assert_non_null(text);
    n += (size_t)snprintf(text + n, cap - n, "time");
    for (int c = 0; c < WIDE; c++) {
        snprintf(name[c], sizeof name[c], "c_%04d", c);
        n += (size_t)snprintf(text + n, cap - n, ",%s", name[c]);
    }
    text[n++] = '\n';
    for (int r = 0; r < ROWS; r++) {
        if (r == bad_row)
            n += (size_t)snprintf(text + n, cap - n, "soon");
        else
            n += (size_t)snprintf(text + n, cap - n, "%d",
                                  1767225600 + 900 * r);
        for (int c = 0; c < WIDE; c++) {
            if (c == bad_col)
                n += (size_t)snprintf(text + n, cap - n, ",1.2.3");
            else if ((r * 7 + c) % 97 == 0)
                n += (size_t)snprintf(text + n, cap - n, ",");
            else if ((r * 3 + c) % 89 == 0)
                n += (size_t)snprintf(text + n, cap - n, ",-999");
            else
                n += (size_t)snprintf(text + n, cap - n, ",%.3f",
                                      5.0 + 0.001 * (r * 31 + c % 500));
        }
        text[n++] = '\n';
    }
    text[n] = '\0';
    sw_test_write(file, text);
    free(text);
}

static void configure(const char *file, sw_reader_config *cfg,
                      sw_column_config *col, char *path, size_t n)
{
    snprintf(path, n, "%s/%s", sw_test_dir(), file);
    memset(cfg, 0, sizeof *cfg);
    cfg->path = path;
    cfg->time_column = "time";
    cfg->time_format = SW_TIME_UNIX;
    for (int c = 0; c < WIDE; c++) {
        memset(&col[c], 0, sizeof col[c]);
        col[c].name = name[c];
        col[c].scale = 1.0;
        col[c].offset_m = c % 2 ? 0.25 : 0.0; /* per-column settings kept */
        col[c].n_missing = 1;
        col[c].missing[0] = "-999";
    }
}

static void test_columns_as_read_alone(void **state)
{
    static sw_column_config col[WIDE];
    sw_reader_config cfg;
    sw_reader *all, *one;
    sw_colstore *cs;
    sw_error err;
    char path[128];
    (void)state;

    write_wide("wide.csv", -1, 1500); /* column 1500: never a number */
    configure("wide.csv", &cfg, col, path, sizeof path);
    assert_int_equal(sw_reader_open(&all, &cfg, col, WIDE, &err), SW_OK);
    assert_int_equal(sw_colstore_read(&cs, all, WIDE, &err), SW_OK);
    assert_int_equal(sw_colstore_rows(cs), ROWS);
    for (int c = 0; c < WIDE; c += 37) { /* 55 columns, first to last */
        if (c == 1480) /* and the one never a number */
            c = 1500;
        sw_colstore_cursor cur;
        int has_a = 1, has_b = 1, rows = 0;
        assert_int_equal(sw_reader_open(&one, &cfg, &col[c], 1, &err), SW_OK);
        assert_int_equal(sw_colstore_start(cs, (size_t)c, &cur, &err), SW_OK);
        for (;;) {
            sw_time_ms ta, tb;
            long la;
            double va, vb;
            assert_int_equal(sw_colstore_next(&cur, &has_a, &ta, &la, &va,
                                              &err),
                             SW_OK);
            assert_int_equal(sw_reader_next(one, &has_b, &tb, &vb, &err),
                             SW_OK);
            assert_int_equal(has_a, has_b);
            if (!has_a)
                break;
            assert_int_equal(ta, tb);
            assert_int_equal(la, sw_reader_line(one));
            assert_int_equal(isnan(va), isnan(vb));
            if (!isnan(va))
                assert_memory_equal(&va, &vb, sizeof va);
            rows++;
        }
        assert_int_equal(rows, ROWS);
        sw_colstore_cursor_free(&cur);
        sw_reader_free(one);
    }
    sw_colstore_free(cs);
    sw_reader_free(all);
}

/* A row the reader refuses (its time is not a time) fails the read with
 * the reader's error: the file, the line (row 70 is line 72: the header,
 * then rows from line 2) and the column (the time's, 1). */
static void test_bad_row_reported(void **state)
{
    static sw_column_config col[WIDE];
    sw_reader_config cfg;
    sw_reader *all;
    sw_colstore *cs = NULL;
    sw_error err;
    char path[128];
    (void)state;

    write_wide("bad.csv", 70, -1);
    configure("bad.csv", &cfg, col, path, sizeof path);
    assert_int_equal(sw_reader_open(&all, &cfg, col, WIDE, &err), SW_OK);
    assert_int_equal(sw_colstore_read(&cs, all, WIDE, &err), SW_EDATA);
    assert_null(cs);
    assert_string_equal(err.file, path);
    assert_int_equal(err.line, 72);
    assert_int_equal(err.column, 1);
    sw_reader_free(all);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_columns_as_read_alone),
        cmocka_unit_test(test_bad_row_reported),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
