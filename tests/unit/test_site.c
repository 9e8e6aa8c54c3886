/* Unit tests of the site file reader (src/site.c).
 *
 * Every fixture is written to a fresh temporary directory as kestrel.ini,
 * loaded, and removed.  Error tests assert the status, the exact line and
 * column, and a distinctive part of the message.  Line numbers of the
 * fixtures are given in comments beside the lines that matter. */
#include "testutil.h"

#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "sillwatch/gravity.h"
#include "sillwatch/site.h"
#include "sillwatch/water.h"

static const double pi = 3.14159265358979323846;

/* ---- fixtures ----------------------------------------------------------- */

typedef struct fixture {
    char dir[64];
    char path[96];
} fixture;

static void fixture_write(fixture *f, const char *text)
{
    FILE *fp;

    snprintf(f->dir, sizeof f->dir, "/tmp/sw-test-site-XXXXXX");
    assert_non_null(mkdtemp(f->dir));
    snprintf(f->path, sizeof f->path, "%s/kestrel.ini", f->dir);
    fp = fopen(f->path, "w");
    assert_non_null(fp);
    assert_int_equal(fputs(text, fp) >= 0, 1);
    assert_int_equal(fclose(fp), 0);
}

static void fixture_remove(const fixture *f)
{
    unlink(f->path);
    rmdir(f->dir);
}

/* Load `text` and expect success. */
static void load_ok(const char *text, sw_site *site)
{
    fixture f;
    sw_error err;
    int rc;

    fixture_write(&f, text);
    rc = sw_site_load(site, f.path, &err);
    fixture_remove(&f);
    if (rc != SW_OK)
        print_error("unexpected error %d at %ld:%ld: %s\n", rc, err.line,
                    err.column, err.message);
    assert_int_equal(rc, SW_OK);
    assert_int_equal(err.code, SW_OK);
    assert_string_equal(site->path, f.path);
}

/* Load `text` and expect SW_ESITE at `line`:`col` with `fragment` in the
 * message, and an empty site afterwards. */
static void check_error(const char *text, long line, long col,
                        const char *fragment, const char *file, int at)
{
    fixture f;
    sw_site site;
    sw_error err;
    int rc;

    fixture_write(&f, text);
    memset(&site, 0xA5, sizeof site); /* load must empty it on failure */
    rc = sw_site_load(&site, f.path, &err);
    fixture_remove(&f);
    if (rc != SW_ESITE || err.code != SW_ESITE || err.line != line ||
        err.column != col || strstr(err.message, fragment) == NULL ||
        strcmp(err.file, f.path) != 0) {
        print_error("expected SW_ESITE at %ld:%ld with \"%s\";\n"
                    "got %d at %s:%ld:%ld: %s\n",
                    line, col, fragment, rc, err.file, err.line, err.column,
                    err.message);
        _fail(file, at);
    }
    _assert_int_equal(site.n_gates, 0, file, at);
    _assert_true(site.gates == NULL, "site.gates == NULL", file, at);
    sw_site_fini(&site);
}

#define expect_error(text, line, col, fragment) \
    check_error((text), (line), (col), (fragment), __FILE__, __LINE__)

/* Building blocks: two water sections on lines 1-4, then one rectangular
 * gate G1 whose lines are, in this order, 5 to 14. */
#define WATER \
    "[water upstream]\n"   /* 1 */ \
    "density = 999.7\n"    /* 2 */ \
    "[water downstream]\n" /* 3 */ \
    "density = 1003.25\n"  /* 4 */
#define G_HEAD "[gate G1]\n"               /* 5 */
#define G_SHAPE "shape = rectangle\n"      /* 6 */
#define G_HINGE "hinge_level = 12.385\n"   /* 7 */
#define G_INCL "inclination = 72.5\n"      /* 8 */
#define G_TOP "seal_top = 0.215\n"         /* 9 */
#define G_HEIGHT "seal_height = 1.785\n"   /* 10 */
#define G_WIDTH "seal_width = 2.385\n"     /* 11 */
#define G_MASS "mass = 1843.6\n"           /* 12 */
#define G_CG "cg_along = 1.105\n"          /* 13 */
#define G_FS "required_fs = 1.35\n"        /* 14 */
#define GATE_G1 G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS \
    G_CG G_FS

/* ---- valid files -------------------------------------------------------- */

static const char kestrel[] =
    "; Kestrel Weir: two gates on the left abutment\n" /* 1 */
    "[site]\n"                                         /* 2 */
    "name = Kestrel Weir\n"
    "gravity = 9.8123\n"
    "required_fs = 1.35\n"
    "min_sill_reaction = 1250.5\n"
    "\n"
    "[water upstream]\n"                               /* 8 */
    "density = 999.7\n"
    "[water downstream]\n"                             /* 10 */
    "density = 1003.25\n"
    "\n"
    "[gate G1]\n"                                      /* 13 */
    "shape = rectangle\n"
    "hinge_level = 12.385\n"
    "inclination = 72.5\n"
    "seal_top = 0.215\n"
    "seal_height = 1.785\n"
    "seal_width = 2.385\n"
    "mass = 1843.6\n"
    "cg_along = 1.105\n"
    "headwater = reservoir\n"
    "tailwater = river.gauge-2\n"
    "\n"
    "[gate bypass]\n"                                  /* 25 */
    "shape = circle\n"
    "hinge_level = 10.74\n"
    "inclination = 81.25\n"
    "seal_top = 0.12\n"
    "diameter = 0.915\n"
    "leaf_length = 1.46\n"
    "mass = 412.3\n"
    "cg_along = 0.68\n"
    "cg_offset = 0.045\n"
    "volume = 0.0385\n"
    "extra_moment = 215.7\n"
    "required_fs = 1.6\n"
    "min_sill_reaction = 310.25\n"
    "[series reservoir]\n"                             /* 39 */
    "file = levels/kestrel-up.csv\n"
    "value_column = stage\n"
    "[series river.gauge-2]\n"                         /* 42 */
    "file = /data/river.csv\n"
    "time_column = Zeit\n"
    "value_column = Pegel (ft)\n"
    "time_format = unix\n"
    "unit = ft\n"
    "offset = -2.385\n"
    "missing = -9999, M ---\n"
    "delimiter = semicolon\n";

static void test_two_gates_every_value(void **state)
{
    sw_site site;
    const sw_gate *g;
    (void)state;

    load_ok(kestrel, &site);
    assert_string_equal(site.name, "Kestrel Weir");
    assert_int_equal(site.gravity_from_latitude, 0);
    assert_close(site.g_ms2, 9.8123, 1e-15);
    assert_close(site.required_fs, 1.35, 1e-15);
    assert_close(site.min_sill_reaction_N, 1250.5, 1e-15);
    assert_int_equal(site.water[SW_UPSTREAM].from_temperature, 0);
    assert_close(site.water[SW_UPSTREAM].rho_kgm3, 999.7, 1e-15);
    assert_int_equal(site.water[SW_DOWNSTREAM].from_temperature, 0);
    assert_close(site.water[SW_DOWNSTREAM].rho_kgm3, 1003.25, 1e-15);
    assert_int_equal(site.n_gates, 2);

    /* G1: a rectangle with every optional key left to its default. */
    g = &site.gates[0].gate;
    assert_int_equal(site.gates[0].line, 13);
    assert_string_equal(g->name, "G1");
    assert_int_equal(g->shape, SW_SHAPE_RECTANGLE);
    assert_close(g->hinge_level_m, 12.385, 1e-15);
    assert_close(g->inclination_deg, 72.5, 1e-15);
    assert_close(g->seal_top_m, 0.215, 1e-15);
    assert_close(g->seal_height_m, 1.785, 1e-15);
    assert_close(g->seal_width_m, 2.385, 1e-15);
    assert_close_abs(g->diameter_m, 0.0, 0.0);
    assert_close(g->leaf_length_m, 0.215 + 1.785, 1e-15); /* s_sill */
    assert_close(g->mass_kg, 1843.6, 1e-15);
    assert_close(g->cg_along_m, 1.105, 1e-15);
    assert_close_abs(g->cg_offset_m, 0.0, 0.0);
    assert_close_abs(g->volume_m3, 0.0, 0.0);
    assert_close_abs(g->extra_moment_Nm, 0.0, 0.0);
    assert_close(g->required_fs, 1.35, 1e-15);          /* from [site] */
    assert_close(g->min_sill_reaction_N, 1250.5, 1e-15); /* from [site] */
    assert_close(g->rho_kgm3[SW_UPSTREAM], 999.7, 1e-15);
    assert_close(g->rho_kgm3[SW_DOWNSTREAM], 1003.25, 1e-15);
    assert_close(g->g_ms2, 9.8123, 1e-15);
    assert_string_equal(site.gates[0].headwater, "reservoir");
    assert_string_equal(site.gates[0].tailwater, "river.gauge-2");
    /* Prepared: the derived fields are set. */
    assert_close(g->s_sill_m, 2.0, 1e-12);
    assert_close(g->sin_a, sin(72.5 * pi / 180.0), 1e-12);
    assert_close(g->area_m2, 1.785 * 2.385, 1e-12);

    /* bypass: a circle with every optional key given. */
    g = &site.gates[1].gate;
    assert_int_equal(site.gates[1].line, 25);
    assert_string_equal(g->name, "bypass");
    assert_int_equal(g->shape, SW_SHAPE_CIRCLE);
    assert_close(g->hinge_level_m, 10.74, 1e-15);
    assert_close(g->inclination_deg, 81.25, 1e-15);
    assert_close(g->seal_top_m, 0.12, 1e-15);
    assert_close_abs(g->seal_height_m, 0.0, 0.0);
    assert_close_abs(g->seal_width_m, 0.0, 0.0);
    assert_close(g->diameter_m, 0.915, 1e-15);
    assert_close(g->leaf_length_m, 1.46, 1e-15);
    assert_close(g->mass_kg, 412.3, 1e-15);
    assert_close(g->cg_along_m, 0.68, 1e-15);
    assert_close(g->cg_offset_m, 0.045, 1e-15);
    assert_close(g->volume_m3, 0.0385, 1e-15);
    assert_close(g->extra_moment_Nm, 215.7, 1e-15);
    assert_close(g->required_fs, 1.6, 1e-15);
    assert_close(g->min_sill_reaction_N, 310.25, 1e-15);
    assert_close(g->rho_kgm3[SW_DOWNSTREAM], 1003.25, 1e-15);
    assert_string_equal(site.gates[1].headwater, "");
    assert_string_equal(site.gates[1].tailwater, "");
    assert_close(g->s_sill_m, 0.12 + 0.915, 1e-12);

    assert_ptr_equal(sw_site_find_gate(&site, "bypass"), &site.gates[1]);
    assert_ptr_equal(sw_site_find_gate(&site, "G1"), &site.gates[0]);
    assert_null(sw_site_find_gate(&site, "g1"));
    assert_null(sw_site_find_gate(&site, "spillway"));
    assert_null(sw_site_find_gate(NULL, "G1"));

    /* The level series: defaults, and every key given. */
    assert_int_equal(site.n_series, 2);
    const sw_site_series *sr = sw_site_find_series(&site, "reservoir");
    assert_ptr_equal(sr, &site.series[0]);
    assert_int_equal(sr->line, 39);
    /* a relative file is taken from the site file's folder */
    assert_non_null(strstr(sr->path, "/levels/kestrel-up.csv"));
    assert_true(strncmp(sr->path, "/tmp/sw-test-site-", 18) == 0);
    assert_string_equal(sr->time_column, "time");
    assert_string_equal(sr->value_column, "stage");
    assert_int_equal(sr->time_format, SW_TIME_ISO8601);
    assert_int_equal(sr->delimiter, 0);
    assert_close(sr->scale, 1.0, 0.0);
    assert_close_abs(sr->offset_m, 0.0, 0.0);
    assert_int_equal(sr->n_missing, 0);
    sr = sw_site_find_series(&site, "river.gauge-2");
    assert_string_equal(sr->path, "/data/river.csv");
    assert_string_equal(sr->time_column, "Zeit");
    assert_string_equal(sr->value_column, "Pegel (ft)");
    assert_int_equal(sr->time_format, SW_TIME_UNIX);
    /* 1 ft = 0.3048 m exactly (international foot, 1959) */
    assert_close(sr->scale, 0.3048, 0.0);
    assert_close(sr->offset_m, -2.385, 1e-15);
    assert_int_equal(sr->delimiter, ';');
    assert_int_equal(sr->n_missing, 3);
    assert_string_equal(sr->missing[0], "-9999");
    assert_string_equal(sr->missing[1], "M");
    assert_string_equal(sr->missing[2], "---");
    assert_null(sw_site_find_series(&site, "Reservoir"));
    /* defaults of [site] for replay */
    assert_int_equal(site.max_gap_ms, 3600000);
    assert_null(site.zone);

    /* --series NAME=FILE */
    sw_error err;
    assert_int_equal(sw_site_set_series_file(&site, "reservoir",
                                             "forecast.csv", &err),
                     SW_OK);
    assert_string_equal(site.series[0].path, "forecast.csv");
    assert_int_equal(sw_site_set_series_file(&site, "river", "x.csv", &err),
                     SW_EUSAGE);
    assert_non_null(strstr(err.message, "no series 'river'; it has: "
                                        "reservoir, river.gauge-2"));

    sw_site_fini(&site);
    assert_int_equal(site.n_gates, 0);
    assert_null(site.gates);
    assert_null(site.series);
    sw_site_fini(&site); /* twice is safe */
    sw_site_fini(NULL);
}

/* Without [site]: the name is the file's base name, standard gravity, no
 * site-wide required_fs, and a minimum sill reaction of 0. */
static void test_defaults_without_site_section(void **state)
{
    sw_site site;
    (void)state;

    load_ok(WATER GATE_G1, &site);
    assert_string_equal(site.name, "kestrel");
    assert_close(site.g_ms2, SW_GRAVITY_STANDARD, 1e-15);
    assert_true(isnan(site.required_fs));
    assert_close_abs(site.min_sill_reaction_N, 0.0, 0.0);
    assert_int_equal(site.n_gates, 1);
    assert_close(site.gates[0].gate.required_fs, 1.35, 1e-15);
    assert_close_abs(site.gates[0].gate.min_sill_reaction_N, 0.0, 0.0);
    assert_close(site.gates[0].gate.g_ms2, SW_GRAVITY_STANDARD, 1e-15);
    sw_site_fini(&site);
}

/* A gate without required_fs takes the site's; one with it keeps its own;
 * min_sill_reaction likewise. */
static void test_site_required_fs_fallback(void **state)
{
    sw_site site;
    (void)state;

    load_ok("[site]\n"
            "required_fs = 1.42\n"
            "min_sill_reaction = 87.5\n"
            WATER
            G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG
            "[gate G2]\n"
            G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG
            "required_fs = 1.73\n"
            "min_sill_reaction = 0\n",
            &site);
    assert_int_equal(site.n_gates, 2);
    assert_close(site.gates[0].gate.required_fs, 1.42, 1e-15);
    assert_close(site.gates[0].gate.min_sill_reaction_N, 87.5, 1e-15);
    assert_close(site.gates[1].gate.required_fs, 1.73, 1e-15);
    assert_close_abs(site.gates[1].gate.min_sill_reaction_N, 0.0, 0.0);
    sw_site_fini(&site);
}

/* fs_basis: net by default, [site] sets it for every gate, a gate's own
 * key overrides it (model document, "Factor of safety: two bases"). */
static void test_fs_basis(void **state)
{
    sw_site site;
    (void)state;

    load_ok("[site]\nrequired_fs = 1.42\n" WATER
            G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG,
            &site);
    assert_int_equal(site.gates[0].gate.fs_basis, SW_FS_NET);
    sw_site_fini(&site);

    load_ok("[site]\nrequired_fs = 1.42\nfs_basis = overturning\n" WATER
            G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG
            "[gate G2]\n"
            G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG
            "fs_basis = net\n",
            &site);
    assert_int_equal(site.gates[0].gate.fs_basis, SW_FS_OVERTURNING);
    assert_int_equal(site.gates[1].gate.fs_basis, SW_FS_NET);
    sw_site_fini(&site);
}

static void test_gravity_from_latitude(void **state)
{
    sw_site site;
    double want;
    (void)state;

    /* The site must hand latitude and elevation to sw_gravity_normal()
     * unchanged; the formula itself is tested in test_gravity. */
    assert_int_equal(sw_gravity_normal(52.37, 184.6, &want, NULL), SW_OK);
    load_ok("[site]\n"
            "latitude = 52.37\n"
            "elevation = 184.6\n"
            WATER GATE_G1,
            &site);
    assert_int_equal(site.gravity_from_latitude, 1);
    assert_close(site.latitude_deg, 52.37, 1e-15);
    assert_close(site.elevation_m, 184.6, 1e-15);
    assert_close(site.g_ms2, want, 1e-15);
    assert_close(site.gates[0].gate.g_ms2, want, 1e-15);
    assert_true(fabs(want - SW_GRAVITY_STANDARD) > 1e-4);
    sw_site_fini(&site);

    /* Elevation defaults to 0 m. */
    assert_int_equal(sw_gravity_normal(-33.87, 0.0, &want, NULL), SW_OK);
    load_ok("[site]\nlatitude = -33.87\n" WATER GATE_G1, &site);
    assert_close_abs(site.elevation_m, 0.0, 0.0);
    assert_close(site.g_ms2, want, 1e-15);
    sw_site_fini(&site);
}

static void test_density_from_temperature(void **state)
{
    sw_site site;
    double up, down;
    (void)state;

    /* Wiring only: the equation of state is tested in test_water. */
    assert_int_equal(sw_water_density(13.7, 0.35, &up, NULL), SW_OK);
    assert_int_equal(sw_water_density(21.4, 0.0, &down, NULL), SW_OK);
    load_ok("[water upstream]\n"
            "temperature = 13.7\n"
            "salinity = 0.35\n"
            "[water downstream]\n"
            "temperature = 21.4\n"
            GATE_G1,
            &site);
    assert_int_equal(site.water[SW_UPSTREAM].from_temperature, 1);
    assert_close(site.water[SW_UPSTREAM].temperature_C, 13.7, 1e-15);
    assert_close(site.water[SW_UPSTREAM].salinity, 0.35, 1e-15);
    assert_close(site.water[SW_UPSTREAM].rho_kgm3, up, 1e-15);
    assert_int_equal(site.water[SW_DOWNSTREAM].from_temperature, 1);
    assert_close(site.water[SW_DOWNSTREAM].temperature_C, 21.4, 1e-15);
    assert_close_abs(site.water[SW_DOWNSTREAM].salinity, 0.0, 0.0);
    assert_close(site.water[SW_DOWNSTREAM].rho_kgm3, down, 1e-15);
    assert_close(site.gates[0].gate.rho_kgm3[SW_UPSTREAM], up, 1e-15);
    assert_close(site.gates[0].gate.rho_kgm3[SW_DOWNSTREAM], down, 1e-15);
    assert_true(up > down); /* colder and saltier is denser */
    sw_site_fini(&site);
}

/* Indented keys are keys (not continuations of the previous value); a
 * byte-order mark, CR LF line ends, comments and "key: value" are
 * accepted. */
static void test_layout_tolerated(void **state)
{
    sw_site site;
    (void)state;

    load_ok("\xEF\xBB\xBF[site]\r\n"
            "  name = Heron Sluice ; the old name was Mill Race\r\n"
            "# a whole-line comment\r\n"
            "\tgravity: 9.8071\r\n"
            "[water upstream]\r\n"
            "    density = 998.85\r\n"
            "[water downstream]\r\n"
            "    density = 1001.4\r\n"
            "[ gate   G1 ]   ; the main gate\r\n"
            "    shape = rectangle\r\n"
            "    hinge_level = 12.385\r\n"
            "    inclination = 72.5\r\n"
            "    seal_top = 0.215\r\n"
            "    seal_height = 1.785\r\n"
            "    seal_width = 2.385\r\n"
            "    mass = 1843.6\r\n"
            "    cg_along = 1.105\r\n"
            "    required_fs = 1.35\r\n",
            &site);
    assert_string_equal(site.name, "Heron Sluice");
    assert_close(site.g_ms2, 9.8071, 1e-15);
    assert_close(site.water[SW_UPSTREAM].rho_kgm3, 998.85, 1e-15);
    assert_int_equal(site.n_gates, 1);
    assert_string_equal(site.gates[0].gate.name, "G1");
    assert_close(site.gates[0].gate.seal_width_m, 2.385, 1e-15);
    assert_close(site.gates[0].gate.required_fs, 1.35, 1e-15);
    sw_site_fini(&site);
}

/* A gate name of 63 characters is kept whole (libinih itself would cut a
 * section name that long). */
static void test_long_gate_name(void **state)
{
    static const char name[] =
        "left-abutment.flap_gate.number-07.downstream-face.sector-B.2385";
    sw_site site;
    (void)state;

    assert_int_equal(strlen(name), 63);
    load_ok(WATER "[gate left-abutment.flap_gate.number-07.downstream-face."
                  "sector-B.2385]\n"
            G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG G_FS,
            &site);
    assert_string_equal(site.gates[0].gate.name, name);
    assert_non_null(sw_site_find_gate(&site, name));
    sw_site_fini(&site);

    expect_error(WATER "[gate left-abutment.flap_gate.number-07.downstream-"
                       "face.sector-B.23855]\n",
                 5, 1, "is longer than 63 characters");
}

static void test_null_error_record(void **state)
{
    sw_site site;
    (void)state;

    assert_int_equal(sw_site_load(&site, "/nonexistent/sw/kestrel.ini", NULL),
                     SW_ESITE);
    assert_int_equal(site.n_gates, 0);
    assert_null(site.gates);
}

/* ---- errors: the file and its lines ------------------------------------- */

static void test_file_not_found(void **state)
{
    sw_site site;
    sw_error err;
    (void)state;

    assert_int_equal(sw_site_load(&site, "/nonexistent/sw/kestrel.ini", &err),
                     SW_ESITE);
    assert_int_equal(err.code, SW_ESITE);
    assert_string_equal(err.file, "/nonexistent/sw/kestrel.ini");
    assert_int_equal(err.line, 0);
    assert_int_equal(err.column, 0);
    assert_non_null(strstr(err.message, "cannot open"));
    assert_non_null(strstr(err.message, strerror(ENOENT)));
    assert_int_equal(site.n_gates, 0);
    sw_site_fini(&site);
}

static void test_line_too_long(void **state)
{
    char text[1024];
    char comment[301];
    (void)state;

    /* libinih hands lines in a buffer of 200 bytes (INI_MAX_LINE as Debian
     * builds it): 198 characters, '\n' and NUL; the column is the first
     * character past the limit. */
    memset(comment, 'x', sizeof comment - 1);
    comment[0] = ';';
    comment[sizeof comment - 1] = '\0';
    snprintf(text, sizeof text, WATER "%s\n" GATE_G1, comment);
    expect_error(text, 5, 199, "longer than 198 characters");
    /* Indentation does not count against the limit, but does count in the
     * column. */
    snprintf(text, sizeof text, WATER "   %s\n" GATE_G1, comment);
    expect_error(text, 5, 202, "longer than 198 characters");
    /* 198 characters are fine: the error is elsewhere. */
    comment[198] = '\0';
    snprintf(text, sizeof text, WATER "%s\n" GATE_G1 "mass = 2\n", comment);
    expect_error(text, 16, 1, "key 'mass' is given twice");
}

static void test_syntax_errors(void **state)
{
    (void)state;
    expect_error("[site\n" WATER GATE_G1, 1, 1, "has no closing ']'");
    expect_error("[site] extra\n" WATER GATE_G1, 1, 8,
                 "text 'extra' after the section header");
    expect_error("[ ]\n" WATER GATE_G1, 1, 1, "empty section header");
    expect_error(WATER "  hinge_level 12.385\n" GATE_G1, 5, 3,
                 "put '=' between the key and its value");
    /* On the last line too, where no next line comes to notice it. */
    expect_error(WATER GATE_G1 "mass 1843.6", 15, 1,
                 "put '=' between the key and its value");
    expect_error("density = 999.7\n" WATER GATE_G1, 1, 1,
                 "key 'density' stands before any section");
    expect_error(WATER GATE_G1 "= 2.385\n", 15, 1,
                 "gate 'G1': line has no key before its '='");
}

/* ---- errors: sections ---------------------------------------------------- */

static void test_unknown_section_with_suggestion(void **state)
{
    (void)state;
    expect_error("[site]\n"
                 "name = Kestrel Weir\n"
                 "[water upstrem]\n" /* 3 */
                 "density = 999.7\n",
                 3, 1,
                 "unknown section [water upstrem]: did you mean "
                 "'[water upstream]'?");
    expect_error(WATER "[gat G2]\n", 5, 1,
                 "unknown section [gat G2]: did you mean '[gate G2]'?");
    expect_error("  [Site]\n" WATER GATE_G1, 1, 3, "did you mean '[site]'?");
}

static void test_unknown_section_without_suggestion(void **state)
{
    (void)state;
    expect_error(WATER "[pump P1]\n", 5, 1,
                 "unknown section [pump P1]: the sections are [site]");
    expect_error("[water]\n", 1, 1, "unknown section [water]");
}

static void test_bad_gate_names(void **state)
{
    (void)state;
    expect_error(WATER "[gate]\n", 5, 1,
                 "section [gate] needs a name, as in [gate G1]");
    expect_error(WATER "[gate G 1]\n", 5, 1,
                 "gate name 'G 1' may hold only letters, digits");
}

static void test_repeated_section(void **state)
{
    (void)state;
    expect_error(WATER GATE_G1 "[water upstream]\n" /* 15 */
                 "density = 1000.2\n",
                 15, 1,
                 "section [water upstream] appears twice, on lines 1 and 15");
    expect_error("[site]\n[site]\n" WATER GATE_G1, 2, 1,
                 "section [site] appears twice, on lines 1 and 2");
}

static void test_duplicate_gate_name(void **state)
{
    (void)state;
    expect_error(WATER GATE_G1 GATE_G1, 15, 1,
                 "gate 'G1' is defined twice, on lines 5 and 15");
}

static void test_missing_water_section(void **state)
{
    (void)state;
    expect_error("[water upstream]\ndensity = 999.7\n" GATE_G1, 0, 0,
                 "no [water downstream] section");
    expect_error("[water downstream]\ndensity = 999.7\n" GATE_G1, 0, 0,
                 "no [water upstream] section");
}

static void test_no_gates(void **state)
{
    (void)state;
    expect_error("[site]\nrequired_fs = 1.35\n" WATER, 0, 0,
                 "defines no gate: add a [gate NAME] section");
}

/* ---- errors: keys and values --------------------------------------------- */

static void test_unknown_key_with_suggestion(void **state)
{
    (void)state;
    expect_error(WATER G_HEAD G_SHAPE "hinge_levl = 12.385\n" /* 7 */
                 G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG G_FS,
                 7, 1,
                 "gate 'G1': unknown key 'hinge_levl': did you mean "
                 "'hinge_level'?");
    expect_error(WATER GATE_G1 "  Mass = 12\n", 15, 3,
                 "did you mean 'mass'?");
    /* Two letters swapped count as one edit. */
    expect_error(WATER GATE_G1 "inclniation = 72.5\n", 15, 1,
                 "did you mean 'inclination'?");
    expect_error("[site]\ngravity = 9.81\nrequird_fs = 1.35\n" WATER GATE_G1,
                 3, 1, "[site]: unknown key 'requird_fs': did you mean "
                       "'required_fs'?");
}

static void test_unknown_key_without_suggestion(void **state)
{
    (void)state;
    expect_error(WATER GATE_G1 "flux_rate = 2.385\n", 15, 1,
                 "gate 'G1': unknown key 'flux_rate': the keys of "
                 "[gate NAME] are shape, hinge_level");
    /* A key of another section says where it belongs. */
    expect_error(WATER GATE_G1 "gravity = 9.81\n", 15, 1,
                 "unknown key 'gravity': 'gravity' belongs in [site]");
    expect_error("[site]\ndensity = 1003.25\n" WATER GATE_G1, 2, 1,
                 "'density' belongs in [water upstream] and "
                 "[water downstream]");
}

static void test_repeated_key(void **state)
{
    (void)state;
    expect_error(WATER GATE_G1 "mass = 1851.2\n", 15, 1,
                 "gate 'G1': key 'mass' is given twice, on lines 12 and 15: "
                 "keep one");
    expect_error("[water upstream]\n"
                 "density = 999.7\n"
                 "    density = 999.7\n",
                 3, 5, "[water upstream]: key 'density' is given twice");
}

static void test_not_a_number(void **state)
{
    (void)state;
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 "mass = 18x43\n" /* 12 */ G_CG G_FS,
                 12, 8, "gate 'G1': key 'mass': '18x43' is not a number");
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 "    mass = abc ; kg\n" G_CG G_FS,
                 12, 12, "gate 'G1': key 'mass': 'abc' is not a number");
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT
                 "seal_width = 2,385\n" /* 11 */ G_MASS G_CG G_FS,
                 11, 14, "write the decimal point as '.', not ','");
    expect_error("[site]\ngravity = 9.81 m/s2\n" WATER GATE_G1, 2, 11,
                 "[site]: key 'gravity': '9.81 m/s2' is not a number");
}

static void test_empty_value(void **state)
{
    (void)state;
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 "mass =\n" G_CG G_FS,
                 12, 1, "gate 'G1': key 'mass' has no value");
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 "\tmass = ; to be weighed\n" G_CG G_FS,
                 12, 2, "gate 'G1': key 'mass' has no value");
}

static void test_non_finite_values(void **state)
{
    (void)state;
    /* one number grammar (decimal.h): "inf", "nan" and hex are not
     * numbers at all, as in level files */
    expect_error(WATER GATE_G1 "volume = inf\n", 15, 10,
                 "gate 'G1': key 'volume': 'inf' is not a number");
    expect_error(WATER GATE_G1 "cg_offset = nan\n", 15, 13,
                 "gate 'G1': key 'cg_offset': 'nan' is not a number");
    expect_error(WATER GATE_G1 "volume = 0x1p-2\n", 15, 10,
                 "gate 'G1': key 'volume': '0x1p-2' is not a number");
    expect_error(WATER GATE_G1 "volume = 0x10\n", 15, 10,
                 "gate 'G1': key 'volume': '0x10' is not a number");
    expect_error(WATER GATE_G1 "extra_moment = 1e999\n", 15, 16,
                 "'1e999' is not a finite number");
}

static void test_shape_invalid(void **state)
{
    (void)state;
    expect_error(WATER G_HEAD "shape = square\n" /* 6 */ G_HINGE G_INCL G_TOP
                 G_HEIGHT G_WIDTH G_MASS G_CG G_FS,
                 6, 9,
                 "gate 'G1': key 'shape': 'square' is not a shape: write "
                 "rectangle or circle");
}

static void test_missing_required_key(void **state)
{
    (void)state;
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 G_MASS G_FS,
                 5, 1, "gate 'G1': required key 'cg_along' is missing");
    expect_error(WATER G_HEAD G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS
                 G_CG G_FS,
                 5, 1, "gate 'G1': required key 'shape' is missing");
    /* A rectangle needs its width; the gate header is indented here. */
    expect_error(WATER "  " G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT
                 G_MASS G_CG G_FS,
                 5, 3, "key 'seal_width' is missing: a rectangle needs it");
    expect_error(WATER G_HEAD "shape = circle\n" G_HINGE G_INCL G_TOP G_MASS
                 G_CG G_FS,
                 5, 1, "key 'diameter' is missing: a circle needs it");
}

static void test_key_not_for_shape(void **state)
{
    (void)state;
    expect_error(WATER GATE_G1 "diameter = 0.915\n", 15, 1,
                 "gate 'G1': key 'diameter' does not apply to a rectangle: "
                 "remove it, or set shape = circle");
    /* The shape may come after the key. */
    expect_error(WATER G_HEAD "seal_height = 0.915\n" /* 6 */
                 "shape = circle\n" G_HINGE G_INCL G_TOP "diameter = 0.915\n"
                 G_MASS G_CG G_FS,
                 6, 1, "key 'seal_height' does not apply to a circle");
}

static void test_no_required_fs(void **state)
{
    (void)state;
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 G_MASS G_CG,
                 5, 1,
                 "gate 'G1' has no required_fs: set it in [gate G1] or "
                 "[site]; sillwatch has no built-in value");
}

static void test_gravity_and_latitude(void **state)
{
    (void)state;
    expect_error("[site]\n"
                 "latitude = 52.37\n"
                 "name = Kestrel Weir\n"
                 "gravity = 9.8123\n" /* 4 */
                 WATER GATE_G1,
                 4, 1,
                 "[site]: keys 'latitude' (line 2) and 'gravity' (line 4) "
                 "exclude each other");
}

static void test_elevation_alone(void **state)
{
    (void)state;
    expect_error("[site]\nrequired_fs = 1.35\nelevation = 184.6\n" WATER
                 GATE_G1,
                 3, 1, "[site]: key 'elevation' needs 'latitude'");
}

static void test_salinity_alone(void **state)
{
    (void)state;
    expect_error("[water upstream]\n"
                 "density = 1021.5\n"
                 "salinity = 31.2\n" /* 3 */
                 "[water downstream]\n"
                 "density = 1003.25\n" GATE_G1,
                 3, 1, "[water upstream]: key 'salinity' needs 'temperature'");
    expect_error("[water upstream]\n"
                 "density = 1021.5\n"
                 "[water downstream]\n"
                 "  temperature = 13.7\n"
                 "  density = 1003.25\n" /* 5 */ GATE_G1,
                 5, 3,
                 "[water downstream]: keys 'temperature' (line 4) and "
                 "'density' (line 5) exclude each other");
}

static void test_water_neither_density_nor_temperature(void **state)
{
    (void)state;
    expect_error("[water upstream]\n"
                 "density = 999.7\n"
                 "[water downstream]\n" /* 3 */
                 "; nothing here yet\n" GATE_G1,
                 3, 1,
                 "[water downstream]: give either 'density' (in kg/m^3) or "
                 "'temperature'");
}

static void test_values_out_of_range(void **state)
{
    (void)state;
    /* g/cm^3 typed for kg/m^3 */
    expect_error("[water upstream]\ndensity = 1.0253\n", 2, 11,
                 "[water upstream]: key 'density': 1.0253 is outside 950 to "
                 "1100 kg/m^3");
    expect_error("[water upstream]\ntemperature = 41.3\n", 2, 15,
                 "key 'temperature': 41.3 is outside -2 to 40 degrees C");
    expect_error("[water upstream]\ntemperature = 13.7\nsalinity = 43.5\n",
                 3, 12, "key 'salinity': 43.5 is outside 0 to 42");
    expect_error("[site]\ngravity = 9.6\n", 2, 11,
                 "key 'gravity': 9.6 is outside 9.7 to 9.9 m/s^2");
    expect_error("[site]\nlatitude = 95.2\n", 2, 12,
                 "key 'latitude': 95.2 is outside -90 to 90 degrees");
    expect_error("[site]\nlatitude = 52.37\nelevation = 12385\n", 3, 13,
                 "key 'elevation': 12385 is outside -1000 to 10000 m");
    expect_error("[site]\nrequired_fs = 0.85\n", 2, 15,
                 "[site]: key 'required_fs': 0.85 is below 1");
    expect_error("[site]\nmin_sill_reaction = -12.5\n", 2, 21,
                 "key 'min_sill_reaction': -12.5 is below 0 N");
}

static void test_series_names(void **state)
{
    (void)state;
    expect_error(WATER GATE_G1 "headwater = up stream\n", 15, 13,
                 "gate 'G1': key 'headwater': name 'up stream' may hold only");
}

/* The quality-test keys of [series NAME] (README, "Quality control"):
 * values in m and m/h, conversions, and an unknown key's message naming
 * the section's own keys. */
static void test_qc_keys(void **state)
{
    sw_site site;
    (void)state;

    load_ok(WATER GATE_G1 "[series up]\nfile = a.csv\nvalue_column = x\n"
            "unit = ft\nvalid_range = 9.75, 13.125\nspike = 0.35\n"
            "max_rate = 2 ft/min\nflat = 90min, 0.0015\n"
            "[series down]\nfile = a.csv\nvalue_column = y\n"
            "max_rate = 0.6\n", &site);
    const sw_qc_config *q = &site.series[0].qc;
    assert_int_equal(q->range_set, 1);
    assert_close(q->range_lo_m, 9.75, 1e-15);
    assert_close(q->range_hi_m, 13.125, 1e-15);
    assert_close(q->spike_m, 0.35, 1e-15);
    /* 2 ft/min = 120 ft/h = 36.576 m/h (1 ft = 0.3048 m exactly) */
    assert_close(q->rate_m_per_h, 36.576, 1e-12);
    assert_int_equal(q->flat_ms, 5400000);
    assert_close(q->flat_tol_m, 0.0015, 1e-15);
    assert_true(sw_qc_active(q));
    /* a bare number is per hour, in the series' unit (m here) */
    assert_close(site.series[1].qc.rate_m_per_h, 0.6, 1e-15);
    assert_int_equal(site.series[1].qc.range_set, 0);
    sw_site_fini(&site);
    load_ok(WATER GATE_G1 "[series up]\nfile = a.csv\nvalue_column = x\n"
            "max_rate = 3 m/d\n", &site);
    assert_close(site.series[0].qc.rate_m_per_h, 0.125, 1e-15);
    assert_false(site.series[0].qc.flat_ms > 0);
    sw_site_fini(&site);

    expect_error(WATER GATE_G1 "[series up]\nfile = a.csv\nvalue_column = x\n"
                 "valid_range = 3\n", 18, 15,
                 "key 'valid_range': '3' is not 'LO, HI'");
    expect_error(WATER GATE_G1 "[series up]\nfile = a.csv\nvalue_column = x\n"
                 "max_rate = 1 ft/h\n", 18, 12,
                 "'ft/h' is for a series in feet");
    expect_error(WATER GATE_G1 "[series up]\nfile = a.csv\nvalue_column = x\n"
                 "flat = 0.001, 6h\n", 18, 8, "key 'flat'");
    expect_error(WATER GATE_G1 "[series up]\nfile = a.csv\nvalue_column = x\n"
                 "spike = -0.2\n", 18, 9, "key 'spike'");
    expect_error(WATER GATE_G1 "[series up]\nfile = a.csv\nvalue_column = x\n"
                 "tolerance = 1\n", 18, 1,
                 "the keys of [series NAME] are file, time_column");
}

/* ---- errors from sw_gate_validate, placed at the offending key --------- */

/* [site] keys for replays, [series NAME] sections, and gates naming
 * series: values and every error path. */
static void test_replay_keys(void **state)
{
    sw_site site;
    (void)state;

    load_ok(WATER GATE_G1 "[site]\nmax_gap = 2.5 h\ntimezone = +10:00\n",
            &site);
    assert_int_equal(site.max_gap_ms, 9000000);
    assert_non_null(site.zone);
    assert_string_equal(sw_zone_name(site.zone), "+10:00");
    assert_int_equal(site.ensemble_crossed, 0);
    sw_site_fini(&site);

    load_ok(WATER GATE_G1 "[site]\nensemble = crossed\n", &site);
    assert_int_equal(site.ensemble_crossed, 1);
    sw_site_fini(&site);
    expect_error(WATER GATE_G1 "[site]\nensemble = every\n", 16, 12,
                 "'every' is not paired (members matched by label) or crossed");
    expect_error(WATER GATE_G1 "[site]\nmax_gap = 90 m\n", 16, 11,
                 "[site]: key 'max_gap'");
    expect_error(WATER GATE_G1 "[site]\ntimezone = Europe/Atlantis\n", 16,
                 12, "[site]: key 'timezone'");
    /* a gate naming a series that is not there, with a near miss */
    expect_error(WATER GATE_G1 "headwater = reservior\n"
                 "[series reservoir]\nfile = a.csv\nvalue_column = x\n",
                 15, 13, "no [series reservior] in the site file: did you "
                         "mean 'reservoir'?");
    expect_error(WATER GATE_G1 "tailwater = sea\n", 15, 13,
                 "key 'tailwater': no [series sea] in the site file");
    /* series sections */
    expect_error(WATER GATE_G1 "[series s]\nvalue_column = x\n", 15, 1,
                 "required key 'file' is missing");
    expect_error(WATER GATE_G1 "[series s]\nfile = a.csv\n", 15, 1,
                 "required key 'value_column' is missing");
    expect_error(WATER GATE_G1 "[series s]\nfile = a.csv\nvalue_column = x\n"
                 "unit = yd\n", 18, 8, "key 'unit': 'yd' is not m or ft");
    expect_error(WATER GATE_G1 "[series s]\nfile = a.csv\nvalue_column = x\n"
                 "time_format = excel\n", 18, 15,
                 "key 'time_format': 'excel' is not iso8601 or unix");
    expect_error(WATER GATE_G1 "[series s]\nfile = a.csv\nvalue_column = x\n"
                 "delimiter = |\n", 18, 13,
                 "key 'delimiter': '|' is not comma, semicolon or tab");
    expect_error(WATER GATE_G1 "[series s]\nfile = a.csv\nvalue_column = x\n"
                 "offset = 2,5\n", 18, 10, "is not a number");
    expect_error(WATER GATE_G1 "[series s]\nfile = a.csv\nvalue_column = x\n"
                 "missing = a b c d e f g h i\n", 18, 11,
                 "more than 8 tokens");
    expect_error(WATER GATE_G1 "[series s]\nfile = a.csv\nvalue_column = x\n"
                 "[series s]\n", 18, 1, "series 's' is defined twice");
    expect_error(WATER GATE_G1 "[serie s]\n", 15, 1,
                 "did you mean '[series s]'?");
}

static void test_validation_errors(void **state)
{
    (void)state;
    expect_error(WATER G_HEAD G_SHAPE G_HINGE "inclination = 190\n" /* 8 */
                 G_TOP G_HEIGHT G_WIDTH G_MASS G_CG G_FS,
                 8, 15, "gate 'G1': key 'inclination': 190 is outside (0, 180)");
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 "mass = -12.5\n" /* 12 */ G_CG G_FS,
                 12, 8, "gate 'G1': key 'mass': -12.5 must be a positive mass");
    /* The leaf defaults to end at the sill, 2.0 m along it. */
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 G_MASS "cg_along = 2.73\n" /* 13 */ G_FS,
                 13, 12, "gate 'G1': key 'cg_along': 2.73 m puts the centre "
                         "of gravity off the leaf");
    expect_error(WATER GATE_G1 "leaf_length = 1.5\n", 15, 15,
                 "gate 'G1': key 'leaf_length': the seal runs past the leaf");
    expect_error(WATER "[gate bypass]\n"
                 "shape = circle\n"
                 "diameter = -0.915\n" /* 7 */
                 G_HINGE G_INCL G_TOP G_MASS G_CG G_FS,
                 7, 12, "gate 'bypass': key 'diameter'");
    /* In [site], required_fs is checked on reading (see
     * test_values_out_of_range); in a gate, by the gate model. */
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH
                 G_MASS G_CG "  required_fs = 0.9\n" /* 14 */,
                 14, 17, "gate 'G1': key 'required_fs': 0.9");
    /* A defaulted key that fails points at the gate header: leaf_length
     * defaults to seal_top + seal_height = 601 m, over the gate model's
     * limit of 500 m on lengths, though neither part is. */
    expect_error(WATER G_HEAD G_SHAPE G_HINGE G_INCL "seal_top = 400.5\n"
                 "seal_height = 200.5\n" G_WIDTH G_MASS G_CG G_FS,
                 5, 1, "gate 'G1': key 'leaf_length'");
}

/* ---- standard uncertainties (X_sd) --------------------------------------- */

static void test_sd_keys_read(void **state)
{
    sw_site site;
    (void)state;
    load_ok("[water upstream]\n"
            "temperature = 9.35\n"
            "temperature_sd = 1.25\n"
            "salinity = 0.4\n"
            "salinity_sd = 0.15\n"
            "[water downstream]\n"
            "density = 1003.25\n"
            "density_sd = 2.75\n"
            G_HEAD G_SHAPE G_HINGE G_INCL G_TOP G_HEIGHT G_WIDTH G_MASS G_CG
            G_FS
            "mass_sd = 61.5\n"
            "cg_along_sd = 0.0235\n"
            "hinge_level_sd = 0\n"
            "[series up]\n"
            "file = up.csv\n"
            "value_column = v\n"
            "offset = 1.385\n"
            "offset_sd = 0.012\n",
            &site);
    assert_close(site.water[SW_UPSTREAM].temperature_sd_C, 1.25, 0);
    assert_close(site.water[SW_UPSTREAM].salinity_sd, 0.15, 0);
    assert_close(site.water[SW_UPSTREAM].density_sd_kgm3, 0.0, 0);
    assert_close(site.water[SW_DOWNSTREAM].density_sd_kgm3, 2.75, 0);
    assert_close(site.water[SW_DOWNSTREAM].temperature_sd_C, 0.0, 0);
    const sw_site_gate *g = &site.gates[0];
    assert_close(g->sd[SW_GP_MASS], 61.5, 0);
    assert_close(g->sd[SW_GP_CG_ALONG], 0.0235, 0);
    assert_close(g->sd[SW_GP_HINGE_LEVEL], 0.0, 0);
    assert_close(g->sd[SW_GP_VOLUME], 0.0, 0);
    /* the keys as given, NAN where not given */
    assert_close(g->value[SW_GP_MASS], 1843.6, 0);
    assert_true(isnan(g->value[SW_GP_LEAF_LENGTH]));
    assert_true(isnan(g->value[SW_GP_DIAMETER]));
    assert_close(site.series[0].offset_sd_m, 0.012, 0);
    sw_site_fini(&site);
}

/* sw_site_gate_build: the gate made from other values of its keys follows
 * the defaults as loading does (leaf_length = the sill's s when not
 * given), and with the keys as given it is the loaded gate, bit for bit. */
static void test_gate_build(void **state)
{
    sw_site site;
    sw_gate g;
    sw_error err;
    const char *bad = NULL;
    double v[SW_GATE_N_PARAMS];
    (void)state;

    load_ok(WATER GATE_G1, &site);
    const sw_site_gate *sg = &site.gates[0];
    double rho[2] = {sg->gate.rho_kgm3[0], sg->gate.rho_kgm3[1]};
    assert_int_equal(sw_site_gate_build(sg, sg->value, rho, &g, &bad, &err),
                     SW_OK);
    assert_memory_equal(&g, &sg->gate, sizeof g);

    memcpy(v, sg->value, sizeof v);
    v[SW_GP_SEAL_HEIGHT] = 1.9125;
    v[SW_GP_MASS] = 1702.25;
    rho[SW_DOWNSTREAM] = 1012.5;
    assert_int_equal(sw_site_gate_build(sg, v, rho, &g, &bad, &err), SW_OK);
    assert_close(g.leaf_length_m, 0.215 + 1.9125, 1e-15);
    assert_close(g.s_sill_m, 0.215 + 1.9125, 1e-15);
    assert_close(g.rho_kgm3[SW_DOWNSTREAM], 1012.5, 0);
    /* derived again: weight_moment = m g cg_along cos a (model document) */
    assert_close(g.weight_moment_Nm,
                 1702.25 * g.g_ms2 * 1.105 * cos(72.5 * pi / 180.0), 1e-12);

    /* a value that breaks a rule between keys: the centre of gravity off
     * the leaf */
    v[SW_GP_CG_ALONG] = 2.5;
    assert_int_equal(sw_site_gate_build(sg, v, rho, &g, &bad, &err),
                     SW_ESITE);
    assert_string_equal(bad, "cg_along");
    sw_site_fini(&site);
}

static void test_sd_key_errors(void **state)
{
    (void)state;
    /* negative */
    expect_error(WATER GATE_G1 "mass_sd = -61.5\n", 15, 11,
                 "gate 'G1': key 'mass_sd': -61.5 is below 0 kg: a standard "
                 "uncertainty is 0 (known exactly) or more");
    /* X_sd without X (cg_offset defaults to 0, but must be given) */
    expect_error(WATER GATE_G1 "cg_offset_sd = 0.01\n", 15, 1,
                 "gate 'G1': key 'cg_offset_sd' needs 'cg_offset': add "
                 "cg_offset, or remove cg_offset_sd");
    expect_error("[water upstream]\n"
                 "density = 999.7\n"
                 "temperature_sd = 0.5\n" /* 3 */
                 "[water downstream]\n"
                 "density = 1003.25\n" GATE_G1,
                 3, 1, "key 'temperature_sd' needs 'temperature'");
    expect_error(WATER GATE_G1 "[series up]\nfile = up.csv\nvalue_column = "
                 "v\noffset_sd = 0.01\n", /* 18 */
                 18, 1, "series 'up': key 'offset_sd' needs 'offset'");
    /* a near miss */
    expect_error(WATER GATE_G1 "mass_ds = 61.5\n", 15, 1,
                 "unknown key 'mass_ds': did you mean 'mass_sd'?");
    /* the other shape's key */
    expect_error(WATER GATE_G1 "diameter_sd = 0.01\n", 15, 1,
                 "key 'diameter_sd' does not apply to a rectangle");
    /* so wide that the key's range keeps almost no draw: a slip of unit
     * (N(1843.6, 1e13) keeps (1e9 - 0) / (1e13 sqrt(2 pi)) = 4e-5 of its
     * draws inside 0 to 1e9 kg) */
    expect_error(WATER GATE_G1 "mass_sd = 1e13\n", 15, 11,
                 "keeps under 0.1 % of its draws inside the range of "
                 "'mass' (0 to 1e+09 kg)");
    expect_error("[water upstream]\n"
                 "density = 999.7\n"
                 "density_sd = 1e5\n" /* 3 */
                 "[water downstream]\n"
                 "density = 1003.25\n" GATE_G1,
                 3, 14, "key 'density_sd'");
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_two_gates_every_value),
        cmocka_unit_test(test_defaults_without_site_section),
        cmocka_unit_test(test_site_required_fs_fallback),
        cmocka_unit_test(test_fs_basis),
        cmocka_unit_test(test_gravity_from_latitude),
        cmocka_unit_test(test_density_from_temperature),
        cmocka_unit_test(test_layout_tolerated),
        cmocka_unit_test(test_long_gate_name),
        cmocka_unit_test(test_null_error_record),
        cmocka_unit_test(test_file_not_found),
        cmocka_unit_test(test_line_too_long),
        cmocka_unit_test(test_syntax_errors),
        cmocka_unit_test(test_unknown_section_with_suggestion),
        cmocka_unit_test(test_unknown_section_without_suggestion),
        cmocka_unit_test(test_bad_gate_names),
        cmocka_unit_test(test_repeated_section),
        cmocka_unit_test(test_duplicate_gate_name),
        cmocka_unit_test(test_missing_water_section),
        cmocka_unit_test(test_no_gates),
        cmocka_unit_test(test_unknown_key_with_suggestion),
        cmocka_unit_test(test_unknown_key_without_suggestion),
        cmocka_unit_test(test_repeated_key),
        cmocka_unit_test(test_not_a_number),
        cmocka_unit_test(test_empty_value),
        cmocka_unit_test(test_non_finite_values),
        cmocka_unit_test(test_shape_invalid),
        cmocka_unit_test(test_missing_required_key),
        cmocka_unit_test(test_key_not_for_shape),
        cmocka_unit_test(test_no_required_fs),
        cmocka_unit_test(test_gravity_and_latitude),
        cmocka_unit_test(test_elevation_alone),
        cmocka_unit_test(test_salinity_alone),
        cmocka_unit_test(test_water_neither_density_nor_temperature),
        cmocka_unit_test(test_values_out_of_range),
        cmocka_unit_test(test_series_names),
        cmocka_unit_test(test_replay_keys),
        cmocka_unit_test(test_qc_keys),
        cmocka_unit_test(test_validation_errors),
        cmocka_unit_test(test_sd_keys_read),
        cmocka_unit_test(test_gate_build),
        cmocka_unit_test(test_sd_key_errors),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
