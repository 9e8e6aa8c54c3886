/* sillwatch: the site file (see include/sillwatch/site.h).
 *
 * The file is read in four passes over what libinih hands us:
 *
 *   1. Lines.  libinih splits lines into sections, keys and values; our own
 *      reader function feeds it one physical line at a time, so that the
 *      line number and the raw text of every line are known when the handler
 *      runs.  Each value is checked on its own here (known key, given once,
 *      not empty, a finite number in range ...), and the first problem stops
 *      the parse.
 *   2. Sections, in file order: keys that exclude or need each other, keys
 *      that do not fit the gate's shape, and missing keys.
 *   3. Site-wide values: gravity and the two water densities.
 *   4. Gates, in file order: filled in, checked by sw_gate_validate() and
 *      prepared.
 *
 * Sections and their keys are described by the tables below; a new section
 * is a new table and a new case in passes 2 to 4.
 */
#include "sillwatch/site.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>

#include <gsl/gsl_cdf.h>
#include <ini.h>

/* The longest physical line read from a site file: far beyond the 200
 * characters libinih takes, so that a line that is merely long gets the
 * message naming that limit, while a file that is no site file at all
 * (/dev/zero, a binary) stops here instead of filling memory. */
#define SITE_LINE_MAX ((size_t)64 * 1024)

#include "sillwatch/cancel.h"
#include "sillwatch/decimal.h"
#include "sillwatch/gravity.h"
#include "sillwatch/water.h"

/* ---- the tables --------------------------------------------------------- */

/* What a value must look like. */
typedef enum key_kind {
    KIND_NUMBER, /* a finite decimal number, SI unit `unit` */
    KIND_TEXT,   /* free text, up to SW_SITE_NAME_MAX * 2 - 1 bytes */
    KIND_PATH,   /* a file path, up to SW_ERROR_PATH_MAX - 1 bytes */
    KIND_NAME,   /* a name as for [gate NAME]: letters, digits, _ - . */
    KIND_SHAPE,  /* rectangle | circle */
    KIND_BASIS   /* net | overturning: the factor of safety's basis */
} key_kind;

/* When a key must, may or must not be given. */
typedef enum key_need {
    NEED_OPTIONAL,
    NEED_REQUIRED,
    NEED_RECTANGLE, /* required for shape = rectangle, refused for circle */
    NEED_CIRCLE,    /* required for shape = circle, refused for rectangle */
    NEED_IF_RECTANGLE, /* optional for a rectangle, refused for a circle */
    NEED_IF_CIRCLE  /* optional for a circle, refused for a rectangle */
} key_need;

typedef struct key_def {
    const char *name;
    key_kind kind;
    key_need need;
    const char *unit;     /* for messages; "" when dimensionless */
    double min, max;      /* accepted range, checked on reading; NAN where
                             another module (sw_gate_validate) checks it */
    const char *excludes; /* a key that may not be given with this one */
    const char *needs;    /* a key that must be given with this one */
    const char *hint;     /* the fix for an out-of-range value */
} key_def;

#define NO_RANGE NAN, NAN

typedef enum section_kind {
    SEC_SITE, SEC_WATER, SEC_GATE, SEC_SERIES
} section_kind;

typedef struct section_def {
    section_kind kind;
    const char *word;    /* first word of the header */
    const char *arg;     /* the rest: "" none, NULL a NAME of the user's */
    int side;            /* for SEC_WATER: an sw_side */
    const key_def *keys;
    size_t n_keys;
    const char *one_of[2]; /* at least one of these keys; NULLs if none */
    const char *home;    /* where its keys belong, for messages */
} section_def;

enum site_key {
    SK_NAME, SK_GRAVITY, SK_LATITUDE, SK_ELEVATION, SK_REQUIRED_FS,
    SK_FS_BASIS, SK_MIN_SILL_REACTION, SK_MAX_GAP, SK_TIMEZONE, SK_ENSEMBLE, SK_COUNT
};

static const key_def site_keys[SK_COUNT] = {
    [SK_NAME] = {"name", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE, NULL, NULL,
                 NULL},
    [SK_GRAVITY] = {"gravity", KIND_NUMBER, NEED_OPTIONAL, "m/s^2", 9.7, 9.9,
                    "latitude", NULL,
                    "give it in m/s^2, or give latitude (and elevation) "
                    "instead"},
    [SK_LATITUDE] = {"latitude", KIND_NUMBER, NEED_OPTIONAL, "degrees",
                     -90.0, 90.0, "gravity", NULL,
                     "give the geodetic latitude in degrees, south "
                     "negative"},
    [SK_ELEVATION] = {"elevation", KIND_NUMBER, NEED_OPTIONAL, "m", -1000.0,
                      10000.0, NULL, "latitude",
                      "give the site's elevation in m"},
    [SK_REQUIRED_FS] = {"required_fs", KIND_NUMBER, NEED_OPTIONAL, "", 1.0,
                        INFINITY, NULL, NULL,
                        "a factor of safety is at least 1"},
    [SK_FS_BASIS] = {"fs_basis", KIND_BASIS, NEED_OPTIONAL, "", NO_RANGE,
                     NULL, NULL, NULL},
    [SK_MIN_SILL_REACTION] = {"min_sill_reaction", KIND_NUMBER,
                              NEED_OPTIONAL, "N", 0.0, INFINITY, NULL, NULL,
                              "give the least sill reaction accepted, in N"},
    [SK_MAX_GAP] = {"max_gap", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE, NULL,
                    NULL, NULL},
    [SK_TIMEZONE] = {"timezone", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE,
                     NULL, NULL, NULL},
    [SK_ENSEMBLE] = {"ensemble", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE,
                     NULL, NULL, NULL},
};

enum water_key {
    WK_DENSITY, WK_TEMPERATURE, WK_SALINITY, WK_DENSITY_SD,
    WK_TEMPERATURE_SD, WK_SALINITY_SD, WK_COUNT
};

/* A standard uncertainty X_sd (JCGM 100:2008, 2.3.1): of key X, in its
 * unit, at least 0; it needs X in the same section. */
#define SD_KEY(name, base, unit, need)                                     \
    {name, KIND_NUMBER, need, unit, 0.0, INFINITY, NULL, base,             \
     "a standard uncertainty is 0 (known exactly) or more"}

static const key_def water_keys[WK_COUNT] = {
    [WK_DENSITY] = {"density", KIND_NUMBER, NEED_OPTIONAL, "kg/m^3",
                    SW_WATER_RHO_MIN_KGM3, SW_WATER_RHO_MAX_KGM3,
                    "temperature", NULL,
                    "give it in kg/m^3 (fresh water is about 1000)"},
    [WK_TEMPERATURE] = {"temperature", KIND_NUMBER, NEED_OPTIONAL,
                        "degrees C", SW_WATER_T_MIN_C, SW_WATER_T_MAX_C,
                        "density", NULL,
                        "the equation of state holds only there; give "
                        "density instead"},
    [WK_SALINITY] = {"salinity", KIND_NUMBER, NEED_OPTIONAL, "",
                     SW_WATER_S_MIN, SW_WATER_S_MAX, NULL, "temperature",
                     "give practical salinity (sea water is about 35)"},
    [WK_DENSITY_SD] = SD_KEY("density_sd", "density", "kg/m^3",
                             NEED_OPTIONAL),
    [WK_TEMPERATURE_SD] = SD_KEY("temperature_sd", "temperature",
                                 "degrees C", NEED_OPTIONAL),
    [WK_SALINITY_SD] = SD_KEY("salinity_sd", "salinity", "", NEED_OPTIONAL),
};

enum gate_key {
    GK_SHAPE, GK_HINGE_LEVEL, GK_INCLINATION, GK_SEAL_TOP, GK_SEAL_HEIGHT,
    GK_SEAL_WIDTH, GK_DIAMETER, GK_LEAF_LENGTH, GK_MASS, GK_CG_ALONG,
    GK_CG_OFFSET, GK_VOLUME, GK_EXTRA_MOMENT, GK_REQUIRED_FS, GK_FS_BASIS,
    GK_MIN_SILL_REACTION, GK_HEADWATER, GK_TAILWATER,
    /* standard uncertainties of the leaf's keys (sw_gate_param) */
    GK_HINGE_LEVEL_SD, GK_INCLINATION_SD, GK_SEAL_TOP_SD, GK_SEAL_HEIGHT_SD,
    GK_SEAL_WIDTH_SD, GK_DIAMETER_SD, GK_LEAF_LENGTH_SD, GK_MASS_SD,
    GK_CG_ALONG_SD, GK_CG_OFFSET_SD, GK_VOLUME_SD, GK_EXTRA_MOMENT_SD,
    GK_COUNT
};

/* Ranges of gate keys are left to sw_gate_validate(), which knows how the
 * values bear on each other (the seal within the leaf, ...). */
static const key_def gate_keys[GK_COUNT] = {
    [GK_SHAPE] = {"shape", KIND_SHAPE, NEED_REQUIRED, "", NO_RANGE, NULL,
                  NULL, NULL},
    [GK_HINGE_LEVEL] = {"hinge_level", KIND_NUMBER, NEED_REQUIRED, "m",
                        NO_RANGE, NULL, NULL, NULL},
    [GK_INCLINATION] = {"inclination", KIND_NUMBER, NEED_REQUIRED, "degrees",
                        NO_RANGE, NULL, NULL, NULL},
    [GK_SEAL_TOP] = {"seal_top", KIND_NUMBER, NEED_REQUIRED, "m", NO_RANGE,
                     NULL, NULL, NULL},
    [GK_SEAL_HEIGHT] = {"seal_height", KIND_NUMBER, NEED_RECTANGLE, "m",
                        NO_RANGE, NULL, NULL, NULL},
    [GK_SEAL_WIDTH] = {"seal_width", KIND_NUMBER, NEED_RECTANGLE, "m",
                       NO_RANGE, NULL, NULL, NULL},
    [GK_DIAMETER] = {"diameter", KIND_NUMBER, NEED_CIRCLE, "m", NO_RANGE,
                     NULL, NULL, NULL},
    [GK_LEAF_LENGTH] = {"leaf_length", KIND_NUMBER, NEED_OPTIONAL, "m",
                        NO_RANGE, NULL, NULL, NULL},
    [GK_MASS] = {"mass", KIND_NUMBER, NEED_REQUIRED, "kg", NO_RANGE, NULL,
                 NULL, NULL},
    [GK_CG_ALONG] = {"cg_along", KIND_NUMBER, NEED_REQUIRED, "m", NO_RANGE,
                     NULL, NULL, NULL},
    [GK_CG_OFFSET] = {"cg_offset", KIND_NUMBER, NEED_OPTIONAL, "m", NO_RANGE,
                      NULL, NULL, NULL},
    [GK_VOLUME] = {"volume", KIND_NUMBER, NEED_OPTIONAL, "m^3", NO_RANGE,
                   NULL, NULL, NULL},
    [GK_EXTRA_MOMENT] = {"extra_moment", KIND_NUMBER, NEED_OPTIONAL, "N*m",
                         NO_RANGE, NULL, NULL, NULL},
    [GK_REQUIRED_FS] = {"required_fs", KIND_NUMBER, NEED_OPTIONAL, "",
                        NO_RANGE, NULL, NULL, NULL},
    [GK_FS_BASIS] = {"fs_basis", KIND_BASIS, NEED_OPTIONAL, "", NO_RANGE,
                     NULL, NULL, NULL},
    [GK_MIN_SILL_REACTION] = {"min_sill_reaction", KIND_NUMBER,
                              NEED_OPTIONAL, "N", NO_RANGE, NULL, NULL,
                              NULL},
    [GK_HEADWATER] = {"headwater", KIND_NAME, NEED_OPTIONAL, "", NO_RANGE,
                      NULL, NULL, NULL},
    [GK_TAILWATER] = {"tailwater", KIND_NAME, NEED_OPTIONAL, "", NO_RANGE,
                      NULL, NULL, NULL},
    [GK_HINGE_LEVEL_SD] = SD_KEY("hinge_level_sd", "hinge_level", "m",
                                 NEED_OPTIONAL),
    [GK_INCLINATION_SD] = SD_KEY("inclination_sd", "inclination", "degrees",
                                 NEED_OPTIONAL),
    [GK_SEAL_TOP_SD] = SD_KEY("seal_top_sd", "seal_top", "m", NEED_OPTIONAL),
    [GK_SEAL_HEIGHT_SD] = SD_KEY("seal_height_sd", "seal_height", "m",
                                 NEED_IF_RECTANGLE),
    [GK_SEAL_WIDTH_SD] = SD_KEY("seal_width_sd", "seal_width", "m",
                                NEED_IF_RECTANGLE),
    [GK_DIAMETER_SD] = SD_KEY("diameter_sd", "diameter", "m", NEED_IF_CIRCLE),
    [GK_LEAF_LENGTH_SD] = SD_KEY("leaf_length_sd", "leaf_length", "m",
                                 NEED_OPTIONAL),
    [GK_MASS_SD] = SD_KEY("mass_sd", "mass", "kg", NEED_OPTIONAL),
    [GK_CG_ALONG_SD] = SD_KEY("cg_along_sd", "cg_along", "m", NEED_OPTIONAL),
    [GK_CG_OFFSET_SD] = SD_KEY("cg_offset_sd", "cg_offset", "m",
                               NEED_OPTIONAL),
    [GK_VOLUME_SD] = SD_KEY("volume_sd", "volume", "m^3", NEED_OPTIONAL),
    [GK_EXTRA_MOMENT_SD] = SD_KEY("extra_moment_sd", "extra_moment", "N*m",
                                  NEED_OPTIONAL),
};

enum series_key {
    RK_FILE, RK_TIME_COLUMN, RK_VALUE_COLUMN, RK_TIME_FORMAT, RK_OFFSET,
    RK_UNIT, RK_MISSING, RK_DELIMITER, RK_VALID_RANGE, RK_SPIKE, RK_MAX_RATE,
    RK_FLAT, RK_FORMAT, RK_VARIABLE, RK_MEMBER_DIMENSION, RK_STATION,
    RK_OFFSET_SD, RK_COUNT
};

static const key_def series_keys[RK_COUNT] = {
    [RK_FILE] = {"file", KIND_PATH, NEED_REQUIRED, "", NO_RANGE, NULL, NULL,
                 NULL},
    [RK_TIME_COLUMN] = {"time_column", KIND_TEXT, NEED_OPTIONAL, "",
                        NO_RANGE, NULL, NULL, NULL},
    /* required for CSV series (build_series); NetCDF ones take variable */
    [RK_VALUE_COLUMN] = {"value_column", KIND_TEXT, NEED_OPTIONAL, "",
                         NO_RANGE, NULL, NULL, NULL},
    [RK_TIME_FORMAT] = {"time_format", KIND_TEXT, NEED_OPTIONAL, "",
                        NO_RANGE, NULL, NULL, NULL},
    [RK_OFFSET] = {"offset", KIND_NUMBER, NEED_OPTIONAL, "m",
                   -SW_SITE_OFFSET_MAX_M, SW_SITE_OFFSET_MAX_M,
                   NULL, NULL,
                   "give the gauge zero's elevation above the site datum, "
                   "in m"},
    [RK_UNIT] = {"unit", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE, NULL, NULL,
                 NULL},
    [RK_MISSING] = {"missing", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE, NULL,
                    NULL, NULL},
    [RK_DELIMITER] = {"delimiter", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE,
                      NULL, NULL, NULL},
    [RK_VALID_RANGE] = {"valid_range", KIND_TEXT, NEED_OPTIONAL, "",
                        NO_RANGE, NULL, NULL, NULL},
    [RK_SPIKE] = {"spike", KIND_NUMBER, NEED_OPTIONAL, "m", 1e-6, 1.0e4,
                  NULL, NULL,
                  "give the spike threshold in m above the neighbours' "
                  "line"},
    [RK_MAX_RATE] = {"max_rate", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE,
                     NULL, NULL, NULL},
    [RK_FLAT] = {"flat", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE, NULL, NULL,
                 NULL},
    [RK_FORMAT] = {"format", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE, NULL,
                   NULL, NULL},
    [RK_VARIABLE] = {"variable", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE,
                     NULL, NULL, NULL},
    [RK_MEMBER_DIMENSION] = {"member_dimension", KIND_TEXT, NEED_OPTIONAL,
                             "", NO_RANGE, NULL, NULL, NULL},
    [RK_STATION] = {"station", KIND_TEXT, NEED_OPTIONAL, "", NO_RANGE, NULL,
                    NULL, NULL},
    [RK_OFFSET_SD] = SD_KEY("offset_sd", "offset", "m", NEED_OPTIONAL),
};

#define N_SECTION_DEFS 5

static const section_def section_defs[N_SECTION_DEFS] = {
    {SEC_SITE, "site", "", 0, site_keys, SK_COUNT, {NULL, NULL}, "[site]"},
    {SEC_WATER, "water", "upstream", SW_UPSTREAM, water_keys, WK_COUNT,
     {"density", "temperature"}, "[water upstream] and [water downstream]"},
    {SEC_WATER, "water", "downstream", SW_DOWNSTREAM, water_keys, WK_COUNT,
     {"density", "temperature"}, "[water upstream] and [water downstream]"},
    {SEC_GATE, "gate", NULL, 0, gate_keys, GK_COUNT, {NULL, NULL},
     "[gate NAME]"},
    {SEC_SERIES, "series", NULL, 0, series_keys, RK_COUNT, {NULL, NULL},
     "[series NAME]"},
};

/* The most keys any section has; the slot arrays are this long. */
#define MAX_KEYS 32
_Static_assert(SK_COUNT <= MAX_KEYS, "raise MAX_KEYS");
_Static_assert(WK_COUNT <= MAX_KEYS, "raise MAX_KEYS");
_Static_assert(GK_COUNT <= MAX_KEYS, "raise MAX_KEYS");
_Static_assert(RK_COUNT <= MAX_KEYS, "raise MAX_KEYS");

/* Longest name (gate, series) and longest free text, with their NUL. */
#define NAME_SIZE SW_SITE_NAME_MAX
#define TEXT_SIZE (SW_SITE_NAME_MAX * 2)
#define PATH_SIZE SW_ERROR_PATH_MAX
_Static_assert(sizeof(((sw_gate *)0)->name) >= NAME_SIZE, "gate name size");
_Static_assert(NAME_SIZE == 64, "messages and formats say 63 characters");
_Static_assert(sizeof(((sw_site *)0)->name) >= TEXT_SIZE, "site name size");

/* ---- what the parse keeps ------------------------------------------------ */

/* One key as found in one section. */
typedef struct slot {
    int given;
    long line, key_col, val_col;
    double num;                 /* KIND_NUMBER */
    sw_shape shape;             /* KIND_SHAPE */
    sw_fs_basis basis;          /* KIND_BASIS */
    char text[PATH_SIZE];       /* KIND_TEXT, KIND_NAME, KIND_PATH */
} slot;

/* One section header and the keys below it. */
typedef struct section {
    const section_def *def;
    long line, col;             /* of its '[' */
    char arg[NAME_SIZE];        /* the NAME of [gate NAME] */
    slot slots[MAX_KEYS];
} section;

typedef struct parser {
    const char *path;
    FILE *fp;
    sw_error *err;
    int status;                 /* SW_OK until the first problem */

    char *raw;                  /* the current physical line (getline) */
    size_t raw_cap;
    long lineno;
    long col0;                  /* bytes of indentation stripped */
    const char *buf;            /* the buffer handed to libinih */
    int key_line;               /* the current line is a key = value line */
    int handler_called;         /* ... and the handler has seen it */

    section *secs;              /* every section, in file order */
    size_t n_secs, cap_secs;
    int have_cur;               /* a section header has been read */
} parser;

/* ---- small helpers ------------------------------------------------------ */

static int is_name_char(int c)
{
    return isalnum(c) || c == '_' || c == '-' || c == '.';
}

/* Why `s` is not a valid name (for [gate NAME] and series names), or NULL
 * if it is one. */
static const char *name_problem(const char *s)
{
    size_t n = strlen(s);

    if (n == 0)
        return "is empty";
    if (n >= NAME_SIZE)
        return "is longer than 63 characters";
    for (size_t i = 0; i < n; i++)
        if (!is_name_char((unsigned char)s[i]))
            return "may hold only letters, digits, '_', '-' and '.'";
    return NULL;
}

/* Optimal-string-alignment distance between `a` and `b`, ignoring case:
 * insertions, deletions, substitutions and swaps of neighbours count one
 * each.  Returns SIZE_MAX for strings too long to be a near miss. */
static size_t edit_distance(const char *a, const char *b)
{
    enum { N = 80 };
    size_t rows[3][N + 1]; /* rows i % 3 of the usual table: i, i-1, i-2 */
    size_t la = strlen(a), lb = strlen(b);

    if (la > N || lb > N)
        return SIZE_MAX;
    for (size_t j = 0; j <= lb; j++)
        rows[0][j] = j;
    for (size_t i = 1; i <= la; i++) {
        size_t *cur = rows[i % 3];
        const size_t *up = rows[(i + 2) % 3];
        const size_t *two = rows[(i + 1) % 3];
        cur[0] = i;
        for (size_t j = 1; j <= lb; j++) {
            int ca = tolower((unsigned char)a[i - 1]);
            int cb = tolower((unsigned char)b[j - 1]);
            size_t best = up[j - 1] + (ca != cb);
            if (up[j] + 1 < best)
                best = up[j] + 1;
            if (cur[j - 1] + 1 < best)
                best = cur[j - 1] + 1;
            if (i > 1 && j > 1 &&
                ca == tolower((unsigned char)b[j - 2]) &&
                tolower((unsigned char)a[i - 2]) == cb &&
                two[j - 2] + 1 < best)
                best = two[j - 2] + 1;
            cur[j] = best;
        }
    }
    return rows[la % 3][lb];
}

/* A near miss is at most this many edits away. */
#define NEAR_MISS 2

static int key_index(const section_def *def, const char *name)
{
    for (size_t k = 0; k < def->n_keys; k++)
        if (strcmp(def->keys[k].name, name) == 0)
            return (int)k;
    return -1;
}

/* "[site]", "[water upstream]" or "gate 'G1'": how messages name a
 * section. */
static const char *section_label(const section *s, char *out, size_t size)
{
    if (s->def->arg == NULL)
        snprintf(out, size, "%s '%s'", s->def->word, s->arg);
    else if (s->def->arg[0] != '\0')
        snprintf(out, size, "[%s %s]", s->def->word, s->def->arg);
    else
        snprintf(out, size, "[%s]", s->def->word);
    return out;
}

/* The header as the user should write it: "[gate G1]", "[site]". */
static const char *section_header(const section *s, char *out, size_t size)
{
    const char *arg = s->def->arg == NULL ? s->arg : s->def->arg;

    snprintf(out, size, arg[0] != '\0' ? "[%s %s]" : "[%s]", s->def->word,
             arg);
    return out;
}

/* " (in kg)" or "" for a dimensionless key, for messages. */
static const char *unit_phrase(const key_def *key, char *out, size_t size)
{
    if (key->unit[0] == '\0')
        out[0] = '\0';
    else
        snprintf(out, size, " (in %s)", key->unit);
    return out;
}

/* ---- pass 1: lines ------------------------------------------------------ */

static int fail(parser *p, long line, long col, const char *fmt, ...)
#if defined(__GNUC__)
    __attribute__((format(printf, 4, 5)))
#endif
    ;

/* Record the first problem of the parse; later ones are ignored, since the
 * reader stops at the first. */
static int fail(parser *p, long line, long col, const char *fmt, ...)
{
    char msg[SW_ERROR_MSG_MAX];
    va_list ap;

    if (p->status != SW_OK)
        return p->status;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    p->status = sw_error_set(p->err, SW_ESITE, p->path, line, col, "%s", msg);
    return p->status;
}

/* fs_basis = net | overturning (model document, "Factor of safety: two
 * bases"); a near miss is named. */
static int read_basis(parser *p, const char *where, const char *value,
                      long col, sw_fs_basis *out)
{
    static const sw_fs_basis all[] = {SW_FS_NET, SW_FS_OVERTURNING};
    const char *near = NULL;

    for (size_t i = 0; i < sizeof all / sizeof all[0]; i++) {
        const char *word = sw_fs_basis_name(all[i]);
        if (strcmp(value, word) == 0) {
            *out = all[i];
            return SW_OK;
        }
        if (edit_distance(value, word) <= NEAR_MISS)
            near = word;
    }
    if (near != NULL)
        return fail(p, p->lineno, col,
                    "%s: key 'fs_basis': '%.60s' is not a factor-of-safety "
                    "basis: did you mean '%s'?",
                    where, value, near);
    return fail(p, p->lineno, col,
                "%s: key 'fs_basis': '%.60s' is not a factor-of-safety "
                "basis: write net (the default) or overturning",
                where, value);
}

/* The 1-based column in the physical line of a pointer into the buffer
 * that was handed to libinih. */
static long column_of(const parser *p, const char *at)
{
    return p->col0 + (long)(at - p->buf) + 1;
}

/* Read the header "[...]" at `text` (which starts with '[', indentation
 * and line end stripped) and open its section, or record why not. */
static void read_header(parser *p, const char *text)
{
    char inner[256], word[64], arg[192];
    const char *close = strchr(text, ']');
    const char *after, *q;
    const section_def *def = NULL;
    const section_def *word_match = NULL;
    long col = p->col0 + 1;
    size_t n, wn;

    if (close == NULL) {
        fail(p, p->lineno, col,
             "section header '%.60s' has no closing ']'", text);
        return;
    }
    for (after = close + 1; isspace((unsigned char)*after); after++)
        ;
    if (*after != '\0' && *after != ';' && *after != '#') {
        fail(p, p->lineno, p->col0 + (long)(after - text) + 1,
             "text '%.60s' after the section header: remove it, or start "
             "a comment with ';'", after);
        return;
    }

    /* Split "[ word  rest ]" into word and trimmed rest. */
    n = (size_t)(close - text - 1);
    if (n >= sizeof inner)
        n = sizeof inner - 1;
    memcpy(inner, text + 1, n);
    inner[n] = '\0';
    for (q = inner; isspace((unsigned char)*q); q++)
        ;
    for (wn = 0; q[wn] != '\0' && !isspace((unsigned char)q[wn]); wn++)
        ;
    snprintf(word, sizeof word, "%.*s", (int)(wn < 63 ? wn : 63), q);
    for (q += wn; isspace((unsigned char)*q); q++)
        ;
    n = strlen(q);
    if (n >= sizeof arg)
        n = sizeof arg - 1;
    memcpy(arg, q, n);
    arg[n] = '\0';
    for (n = strlen(arg); n > 0 && isspace((unsigned char)arg[n - 1]); n--)
        arg[n - 1] = '\0';

    if (word[0] == '\0') {
        fail(p, p->lineno, col,
             "empty section header: write [site], [water upstream], "
             "[water downstream], [gate NAME] or [series NAME]");
        return;
    }
    for (size_t i = 0; i < N_SECTION_DEFS && def == NULL; i++) {
        const section_def *d = &section_defs[i];
        if (strcmp(d->word, word) != 0)
            continue;
        word_match = d;
        if (d->arg == NULL ? arg[0] != '\0' : strcmp(d->arg, arg) == 0)
            def = d;
    }

    if (def == NULL && word_match != NULL && word_match->arg == NULL) {
        fail(p, p->lineno, col,
             "section [%s] needs a name, as in [%s G1]", word, word);
        return;
    }
    if (def == NULL) {
        /* Unknown: look for a near miss of the whole header, or of the
         * first word of a named section. */
        char full[256], best[256] = "";
        size_t best_d = NEAR_MISS + 1;
        snprintf(full, sizeof full, arg[0] != '\0' ? "%s %s" : "%s", word,
                 arg);
        for (size_t i = 0; i < N_SECTION_DEFS; i++) {
            const section_def *d = &section_defs[i];
            char cand[256];
            size_t dist;
            if (d->arg == NULL) {
                if (arg[0] == '\0')
                    continue;
                dist = edit_distance(word, d->word);
                snprintf(cand, sizeof cand, "%s %s", d->word, arg);
            } else {
                snprintf(cand, sizeof cand,
                         d->arg[0] != '\0' ? "%s %s" : "%s", d->word,
                         d->arg);
                dist = edit_distance(full, cand);
            }
            if (dist < best_d) {
                best_d = dist;
                snprintf(best, sizeof best, "%s", cand);
            }
        }
        if (best[0] != '\0')
            fail(p, p->lineno, col,
                 "unknown section [%.80s]: did you mean '[%.80s]'?", full,
                 best);
        else
            fail(p, p->lineno, col,
                 "unknown section [%.80s]: the sections are [site], "
                 "[water upstream], [water downstream], [gate NAME] and "
                 "[series NAME]",
                 full);
        return;
    }
    if (def->arg == NULL) {
        const char *why = name_problem(arg);
        if (why != NULL) {
            fail(p, p->lineno, col, "%s name '%.80s' %s", def->word, arg,
                 why);
            return;
        }
    }

    /* A section may appear once; a named one once per name. */
    for (size_t i = 0; i < p->n_secs; i++) {
        const section *s = &p->secs[i];
        char hdr[96];
        if (s->def != def || (def->arg == NULL && strcmp(s->arg, arg) != 0))
            continue;
        if (def->arg == NULL)
            fail(p, p->lineno, col,
                 "%s '%s' is defined twice, on lines %ld and %ld: give "
                 "each %s its own name",
                 def->word, arg, s->line, p->lineno, def->word);
        else
            fail(p, p->lineno, col,
                 "section %s appears twice, on lines %ld and %ld: merge "
                 "them into one",
                 section_header(s, hdr, sizeof hdr), s->line, p->lineno);
        return;
    }

    if (p->n_secs == p->cap_secs) {
        size_t cap = p->cap_secs != 0 ? 2 * p->cap_secs : 8;
        section *grown = realloc(p->secs, cap * sizeof *grown);
        if (grown == NULL) {
            p->status = sw_error_set(p->err, SW_ENOMEM, p->path, p->lineno,
                                     col, "out of memory reading the site "
                                     "file");
            return;
        }
        p->secs = grown;
        p->cap_secs = cap;
    }
    section *s = &p->secs[p->n_secs++];
    memset(s, 0, sizeof *s);
    s->def = def;
    s->line = p->lineno;
    s->col = col;
    if (def->arg == NULL)
        snprintf(s->arg, sizeof s->arg, "%.63s", arg);
    p->have_cur = 1;
}

/* Read one physical line (with its '\n', if any) into p->raw, NUL
 * terminated.  Returns its length, 0 at the end of the file, or -1 after
 * setting the error: a read error, a line longer than SITE_LINE_MAX
 * (anything but a site file: /dev/zero, a binary file), or no memory
 * (said so, never taken for the end of the file). */
static ssize_t read_line(parser *p)
{
    size_t len = 0;
    int c;

    errno = 0;
    for (;;) {
        c = getc(p->fp);
        if (c == EOF && ferror(p->fp) && errno == EINTR) {
            /* a signal during a read of a FIFO or terminal */
            if (sw_cancel_requested()) {
                p->status = sw_cancel_check(p->err);
                return -1;
            }
            clearerr(p->fp);
            continue;
        }
        if (c == EOF)
            break;
        if (len + 2 > p->raw_cap) {
            size_t cap = p->raw_cap ? 2 * p->raw_cap : 256;
            char *grown = realloc(p->raw, cap);
            if (grown == NULL) {
                p->status = sw_error_set(p->err, SW_ENOMEM, p->path,
                                         p->lineno + 1, 0,
                                         "out of memory reading the site "
                                         "file");
                return -1;
            }
            p->raw = grown;
            p->raw_cap = cap;
        }
        p->raw[len++] = (char)c;
        if (c == '\n')
            break;
        if (len > SITE_LINE_MAX) {
            fail(p, p->lineno + 1, 0,
                 "line longer than 64 KiB: is this a site file?");
            return -1;
        }
    }
    if (c == EOF && ferror(p->fp)) {
        fail(p, p->lineno + 1, 0, "cannot read the site file: %s",
             strerror(errno != 0 ? errno : EIO));
        return -1;
    }
    if (len == 0)
        return 0;
    p->raw[len] = '\0';
    return (ssize_t)len;
}

/* libinih's reader: hand it the next physical line, without its
 * indentation (an indented line would otherwise continue the previous
 * value) and with a single '\n'.  Sections are opened here, since libinih
 * says nothing of a section without keys.  Returns NULL at the end of the
 * file and after the first problem, which stops the parse. */
static char *site_reader(char *str, int num, void *stream)
{
    parser *p = stream;
    ssize_t got;
    size_t len, limit;
    char *text;

    if (p->status != SW_OK)
        return NULL;
    if (p->key_line && !p->handler_called) {
        fail(p, p->lineno, p->col0 + 1,
             "line is not 'key = value', a [section] header or a comment: "
             "put '=' between the key and its value");
        return NULL;
    }
    p->key_line = 0;
    p->handler_called = 0;

    if ((got = read_line(p)) <= 0)
        return NULL;
    p->lineno++;
    len = (size_t)got;
    if (memchr(p->raw, '\0', len) != NULL) {
        fail(p, p->lineno, 0, "line holds a NUL byte: is this a text file?");
        return NULL;
    }
    while (len > 0 && isspace((unsigned char)p->raw[len - 1]))
        p->raw[--len] = '\0';

    text = p->raw;
    /* A UTF-8 byte-order mark is not part of the first line's text, and
     * not counted in its columns. */
    if (p->lineno == 1 && len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0) {
        text += 3;
        len -= 3;
    }
    p->col0 = 0;
    while (isspace((unsigned char)*text)) {
        text++;
        len--;
        p->col0++;
    }

    /* libinih needs room for the line, its '\n' and a NUL; a line that
     * does not fit would be split by it into two. */
    limit = num > 2 ? (size_t)num - 2 : 0;
    if (len > limit) {
        fail(p, p->lineno, p->col0 + (long)limit + 1,
             "line is longer than %zu characters (not counting its "
             "indentation): shorten it",
             limit);
        return NULL;
    }

    if (text[0] == '[') {
        read_header(p, text);
        if (p->status != SW_OK)
            return NULL;
    } else if (text[0] != '\0' && text[0] != ';' && text[0] != '#') {
        p->key_line = 1;
    }

    memcpy(str, text, len);
    str[len] = '\n';
    str[len + 1] = '\0';
    p->buf = str;
    return str;
}

/* Read `value` as a number for `key`; record a problem and return nonzero
 * if it is not one or lies outside the key's range. */
static int read_number(parser *p, const char *where, const key_def *key,
                       const char *value, long col, double *out)
{
    char units[48];
    double v;

    /* the one number grammar of the project (decimal.h), as in level
     * files: no hex, no "inf" or "nan" */
    int parsed = sw_decimal_parse(value, strlen(value), 0, &v);
    if (parsed < 0) {
        if (strchr(value, ',') != NULL)
            return fail(p, p->lineno, col,
                        "%s: key '%s': '%.60s' is not a number: write the "
                        "decimal point as '.', not ','",
                        where, key->name, value);
        return fail(p, p->lineno, col,
                    "%s: key '%s': '%.60s' is not a number: write a decimal "
                    "number%s",
                    where, key->name, value,
                    unit_phrase(key, units, sizeof units));
    }
    if (parsed > 0)
        return fail(p, p->lineno, col,
                    "%s: key '%s': '%.60s' is not a finite number: write a "
                    "decimal number%s",
                    where, key->name, value,
                    unit_phrase(key, units, sizeof units));
    if (!isnan(key->min) && (v < key->min || v > key->max)) {
        if (isinf(key->max))
            return fail(p, p->lineno, col,
                        "%s: key '%s': %.60s is below %g%s%s: %s", where,
                        key->name, value, key->min,
                        key->unit[0] != '\0' ? " " : "", key->unit,
                        key->hint);
        return fail(p, p->lineno, col,
                    "%s: key '%s': %.60s is outside %g to %g%s%s: %s", where,
                    key->name, value, key->min, key->max,
                    key->unit[0] != '\0' ? " " : "", key->unit, key->hint);
    }
    *out = v;
    return SW_OK;
}

/* Explain an unknown key: a key of another section, a near miss, or the
 * list of keys the section has. */
static void unknown_key(parser *p, const section *s, const char *where,
                        const char *name, long col)
{
    const key_def *best = NULL;
    size_t best_d = NEAR_MISS + 1;
    char list[400];
    size_t used = 0;

    if (name[0] == '\0') {
        fail(p, p->lineno, col, "%s: line has no key before its '='",
             where);
        return;
    }
    for (size_t i = 0; i < N_SECTION_DEFS; i++) {
        const section_def *d = &section_defs[i];
        if (d == s->def || key_index(d, name) < 0)
            continue;
        fail(p, p->lineno, col,
             "%s: unknown key '%.60s': '%s' belongs in %s", where, name,
             name, d->home);
        return;
    }
    for (size_t k = 0; k < s->def->n_keys; k++) {
        size_t dist = edit_distance(name, s->def->keys[k].name);
        if (dist < best_d) {
            best_d = dist;
            best = &s->def->keys[k];
        }
    }
    if (best != NULL) {
        fail(p, p->lineno, col, "%s: unknown key '%.60s': did you mean '%s'?",
             where, name, best->name);
        return;
    }
    char sds[200];
    size_t used_sd = 0;
    list[0] = '\0';
    sds[0] = '\0';
    for (size_t k = 0; k < s->def->n_keys; k++) {
        const char *kn = s->def->keys[k].name;
        size_t len = strlen(kn);
        int w;
        /* the uncertainties X_sd are named once, by their X */
        if (len > 3 && strcmp(kn + len - 3, "_sd") == 0) {
            if (used_sd < sizeof sds)
                used_sd += (size_t)snprintf(sds + used_sd,
                                            sizeof sds - used_sd, "%s%.*s",
                                            used_sd == 0 ? "" : ", ",
                                            (int)(len - 3), kn);
            continue;
        }
        if (used >= sizeof list ||
            (w = snprintf(list + used, sizeof list - used, "%s%s",
                          k == 0 ? "" : ", ", kn)) < 0)
            continue;
        used += (size_t)w;
    }
    fail(p, p->lineno, col,
         "%s: unknown key '%.60s': the keys of %s are %s%s%s", where, name,
         s->def->home, list,
         sds[0] != '\0' ? "; and X_sd, a standard uncertainty, for X = "
                        : "",
         sds);
}

/* libinih's handler: one key = value line of the current section.  The
 * section name libinih passes is ignored (it cuts long names short); the
 * reader has opened the section already.  Returns 0 on a problem. */
static int site_handler(void *user, const char *ini_section, const char *name,
                        const char *value)
{
    parser *p = user;
    section *s;
    const key_def *key;
    slot *sl;
    char where[96], units[48];
    long key_col, val_col;
    int k;

    (void)ini_section;
    p->handler_called = 1;
    if (p->status != SW_OK)
        return 0;
    key_col = column_of(p, name);
    val_col = column_of(p, value);
    if (!p->have_cur) {
        fail(p, p->lineno, key_col,
             "key '%.60s' stands before any section: put it below [site], "
             "[water upstream], [water downstream], [gate NAME] or "
             "[series NAME]",
             name);
        return 0;
    }
    s = &p->secs[p->n_secs - 1];
    section_label(s, where, sizeof where);

    k = key_index(s->def, name);
    if (k < 0) {
        unknown_key(p, s, where, name, key_col);
        return 0;
    }
    key = &s->def->keys[k];
    sl = &s->slots[k];
    if (sl->given) {
        fail(p, p->lineno, key_col,
             "%s: key '%s' is given twice, on lines %ld and %ld: keep one",
             where, key->name, sl->line, p->lineno);
        return 0;
    }
    if (value[0] == '\0') {
        fail(p, p->lineno, key_col,
             "%s: key '%s' has no value: write '%s = ...'%s or remove the "
             "line",
             where, key->name, key->name,
             unit_phrase(key, units, sizeof units));
        return 0;
    }

    switch (key->kind) {
    case KIND_NUMBER:
        if (read_number(p, where, key, value, val_col, &sl->num) != SW_OK)
            return 0;
        break;
    case KIND_TEXT:
    case KIND_PATH: {
        size_t limit = key->kind == KIND_PATH ? PATH_SIZE : TEXT_SIZE;
        if (strlen(value) >= limit) {
            fail(p, p->lineno, val_col,
                 "%s: key '%s' is longer than %zu characters: shorten it",
                 where, key->name, limit - 1);
            return 0;
        }
        snprintf(sl->text, sizeof sl->text, "%s", value);
        break;
    }
    case KIND_NAME: {
        const char *why = name_problem(value);
        if (why != NULL) {
            fail(p, p->lineno, val_col, "%s: key '%s': name '%.80s' %s",
                 where, key->name, value, why);
            return 0;
        }
        snprintf(sl->text, sizeof sl->text, "%s", value);
        break;
    }
    case KIND_SHAPE:
        if (strcmp(value, "rectangle") == 0) {
            sl->shape = SW_SHAPE_RECTANGLE;
        } else if (strcmp(value, "circle") == 0) {
            sl->shape = SW_SHAPE_CIRCLE;
        } else {
            fail(p, p->lineno, val_col,
                 "%s: key 'shape': '%.60s' is not a shape: write rectangle "
                 "or circle",
                 where, value);
            return 0;
        }
        break;
    case KIND_BASIS:
        if (read_basis(p, where, value, val_col, &sl->basis) != SW_OK)
            return 0;
        break;
    }
    sl->given = 1;
    sl->line = p->lineno;
    sl->key_col = key_col;
    sl->val_col = val_col;
    return 1;
}

/* ---- pass 2: sections --------------------------------------------------- */

/* Why a key that was given should not have been. */
typedef enum conflict {
    CONFLICT_NONE,
    CONFLICT_SHAPE,    /* it does not fit the gate's shape */
    CONFLICT_EXCLUDES, /* another key excludes it */
    CONFLICT_NEEDS     /* it needs a key that is missing */
} conflict;

/* Check one section's keys against each other and for completeness:
 * first the keys that should not be there (earliest line first), then the
 * missing ones (in table order). */
static int check_section(parser *p, const section *s, const sw_site *site)
{
    const section_def *def = s->def;
    char where[96], hdr[96], units[48], units2[48];
    const slot *shape = NULL;
    const key_def *worst = NULL;
    const slot *worst_slot = NULL;
    conflict why = CONFLICT_NONE;
    const key_def *other = NULL;

    section_label(s, where, sizeof where);
    section_header(s, hdr, sizeof hdr);
    if (def->kind == SEC_GATE && s->slots[GK_SHAPE].given)
        shape = &s->slots[GK_SHAPE];

    for (size_t k = 0; k < def->n_keys; k++) {
        const key_def *key = &def->keys[k];
        const slot *sl = &s->slots[k];
        conflict this_why = CONFLICT_NONE;
        const key_def *this_other = NULL;
        if (!sl->given)
            continue;
        int rect_only = key->need == NEED_RECTANGLE ||
                        key->need == NEED_IF_RECTANGLE;
        int circle_only = key->need == NEED_CIRCLE ||
                          key->need == NEED_IF_CIRCLE;
        if (shape != NULL &&
            ((rect_only && shape->shape != SW_SHAPE_RECTANGLE) ||
             (circle_only && shape->shape != SW_SHAPE_CIRCLE))) {
            this_why = CONFLICT_SHAPE;
        } else if (key->excludes != NULL) {
            int o = key_index(def, key->excludes);
            /* Report the pair once, at the later of the two. */
            if (o >= 0 && s->slots[o].given && s->slots[o].line < sl->line) {
                this_why = CONFLICT_EXCLUDES;
                this_other = &def->keys[o];
            }
        }
        if (this_why == CONFLICT_NONE && key->needs != NULL) {
            int o = key_index(def, key->needs);
            if (o >= 0 && !s->slots[o].given) {
                this_why = CONFLICT_NEEDS;
                this_other = &def->keys[o];
            }
        }
        if (this_why != CONFLICT_NONE &&
            (worst_slot == NULL || sl->line < worst_slot->line)) {
            worst = key;
            worst_slot = sl;
            why = this_why;
            other = this_other;
        }
    }
    if (worst != NULL) {
        if (why == CONFLICT_SHAPE) {
            int rect = shape->shape == SW_SHAPE_RECTANGLE;
            return fail(p, worst_slot->line, worst_slot->key_col,
                        "%s: key '%s' does not apply to a %s: remove it, "
                        "or set shape = %s",
                        where, worst->name, rect ? "rectangle" : "circle",
                        rect ? "circle" : "rectangle");
        }
        if (why == CONFLICT_EXCLUDES)
            return fail(p, worst_slot->line, worst_slot->key_col,
                        "%s: keys '%s' (line %ld) and '%s' (line %ld) "
                        "exclude each other: give only one",
                        where, other->name,
                        s->slots[other - def->keys].line, worst->name,
                        worst_slot->line);
        return fail(p, worst_slot->line, worst_slot->key_col,
                    "%s: key '%s' needs '%s': add %s, or remove %s", where,
                    worst->name, other->name, other->name, worst->name);
    }

    for (size_t k = 0; k < def->n_keys; k++) {
        const key_def *key = &def->keys[k];
        int required = key->need == NEED_REQUIRED ||
                       (shape != NULL && key->need == NEED_RECTANGLE &&
                        shape->shape == SW_SHAPE_RECTANGLE) ||
                       (shape != NULL && key->need == NEED_CIRCLE &&
                        shape->shape == SW_SHAPE_CIRCLE);
        if (required && !s->slots[k].given) {
            if (key->need == NEED_REQUIRED)
                return fail(p, s->line, s->col,
                            "%s: required key '%s' is missing: add '%s = "
                            "...'%s to %s",
                            where, key->name, key->name,
                            unit_phrase(key, units, sizeof units), hdr);
            return fail(p, s->line, s->col,
                        "%s: key '%s' is missing: a %s needs it; add '%s = "
                        "...'%s to %s",
                        where, key->name,
                        shape->shape == SW_SHAPE_RECTANGLE ? "rectangle"
                                                           : "circle",
                        key->name, unit_phrase(key, units, sizeof units),
                        hdr);
        }
    }

    if (def->one_of[0] != NULL) {
        int a = key_index(def, def->one_of[0]);
        int b = key_index(def, def->one_of[1]);
        if (!s->slots[a].given && !s->slots[b].given)
            return fail(p, s->line, s->col,
                        "%s: give either '%s'%s or '%s'%s", where,
                        def->keys[a].name,
                        unit_phrase(&def->keys[a], units, sizeof units),
                        def->keys[b].name,
                        unit_phrase(&def->keys[b], units2, sizeof units2));
    }

    if (def->kind == SEC_GATE && !s->slots[GK_REQUIRED_FS].given &&
        isnan(site->required_fs))
        return fail(p, s->line, s->col,
                    "gate '%s' has no required_fs: set it in [gate %s] or "
                    "[site]; sillwatch has no built-in value",
                    s->arg, s->arg);
    return SW_OK;
}

/* ---- passes 3 and 4: values --------------------------------------------- */

/* The default site name: the file's base name without ".ini". */
static void default_name(const char *path, char *out, size_t size)
{
    const char *base = strrchr(path, '/');
    size_t n;

    base = base != NULL ? base + 1 : path;
    n = strlen(base);
    if (n > 4 && strcmp(base + n - 4, ".ini") == 0)
        n -= 4;
    snprintf(out, size, "%.*s", (int)(n < size ? n : size - 1), base);
}

/* Give the error another module just reported the position of `sl` and
 * the prefix `where`; return its status. */
static int relocate(parser *p, const slot *sl, const char *where)
{
    char why[SW_ERROR_MSG_MAX];
    snprintf(why, sizeof why, "%s", p->err->message);
    p->status = sw_error_set(p->err, p->err->code, p->path, sl->line,
                             sl->val_col, "%s: %s", where, why);
    return p->status;
}

/* Would a normal distribution of mean x and standard deviation sd,
 * truncated to the key's range [lo, hi] (README: draws outside are drawn
 * again), keep so few draws that sd must be a slip of unit?  Records the
 * problem at the X_sd key's value. */
#define SD_MIN_KEPT 1e-3
static int check_sd(parser *p, const slot *sd, const char *where,
                    const char *key, const char *unit, double x, double lo,
                    double hi)
{
    double kept;

    if (!sd->given || sd->num == 0.0)
        return SW_OK;
    kept = (isinf(hi) ? 1.0 : gsl_cdf_gaussian_P(hi - x, sd->num)) -
           (isinf(lo) ? 0.0 : gsl_cdf_gaussian_P(lo - x, sd->num));
    if (kept >= SD_MIN_KEPT)
        return SW_OK;
    return fail(p, sd->line, sd->val_col,
                "%s: key '%s_sd': %g%s%s around %g%s%s keeps under %g %% of "
                "its draws inside the range of '%s' (%g to %g%s%s): is the "
                "unit right?",
                where, key, sd->num, unit[0] != '\0' ? " " : "", unit, x,
                unit[0] != '\0' ? " " : "", unit, SD_MIN_KEPT * 100.0, key,
                lo, hi, unit[0] != '\0' ? " " : "", unit);
}

/* Split `text` at commas and blanks into at most SW_SERIES_MAX_MISSING
 * tokens.  Returns SW_OK or records a problem at `sl`. */
static int read_missing(parser *p, const slot *sl, const char *where,
                        sw_site_series *out)
{
    const char *q = sl->text;
    while (*q != '\0') {
        size_t n;
        while (*q == ',' || isspace((unsigned char)*q))
            q++;
        if (*q == '\0')
            break;
        for (n = 0; q[n] != '\0' && q[n] != ',' && !isspace((unsigned char)q[n]);
             n++)
            ;
        if (out->n_missing == SW_SERIES_MAX_MISSING)
            return fail(p, sl->line, sl->val_col,
                        "%s: key 'missing': more than %d tokens", where,
                        SW_SERIES_MAX_MISSING);
        if (n >= SW_SERIES_TOKEN_MAX)
            return fail(p, sl->line, sl->val_col,
                        "%s: key 'missing': token '%.40s' is longer than %d "
                        "characters", where, q, SW_SERIES_TOKEN_MAX - 1);
        memcpy(out->missing[out->n_missing], q, n);
        out->missing[out->n_missing][n] = '\0';
        out->n_missing++;
        q += n;
    }
    return SW_OK;
}

/* A finite decimal number at *q (after blanks; the one number grammar of
 * decimal.h), moving *q past it and the blanks after it. */
static int take_number(const char **q, double *v)
{
    while (isspace((unsigned char)**q))
        (*q)++;
    size_t len = strspn(*q, "+-.0123456789eE");
    if (len == 0 || sw_decimal_parse(*q, len, 0, v) != 0)
        return 0;
    *q += len;
    while (isspace((unsigned char)**q))
        (*q)++;
    return 1;
}

/* valid_range = LO, HI (m above the site datum, LO < HI). */
static int read_valid_range(parser *p, const slot *sl, const char *where,
                            sw_qc_config *qc)
{
    const char *q = sl->text;
    double lo, hi;
    if (!take_number(&q, &lo) || *q++ != ',' || !take_number(&q, &hi) ||
        *q != '\0')
        return fail(p, sl->line, sl->val_col,
                    "%s: key 'valid_range': '%.40s' is not 'LO, HI' (levels "
                    "in m above the site datum, after unit and offset)",
                    where, sl->text);
    if (!(lo < hi))
        return fail(p, sl->line, sl->val_col,
                    "%s: key 'valid_range': the low end %g is not below the "
                    "high end %g", where, lo, hi);
    qc->range_set = 1;
    qc->range_lo_m = lo;
    qc->range_hi_m = hi;
    return SW_OK;
}

/* max_rate = X m/h (also m/min, m/d; ft/h, ft/min, ft/d when the series
 * is in feet); a bare number is m/h (ft/h for a series in feet). */
static int read_max_rate(parser *p, const slot *sl, const char *where,
                         double scale, sw_qc_config *qc)
{
    static const struct { const char *unit; double per_h; int ft; } units[] = {
        {"m/h", 1.0, 0},      {"m/min", 60.0, 0}, {"m/d", 1.0 / 24.0, 0},
        {"ft/h", 1.0, 1},     {"ft/min", 60.0, 1}, {"ft/d", 1.0 / 24.0, 1},
    };
    const char *q = sl->text;
    double v;
    if (!take_number(&q, &v) || !(v > 0.0))
        return fail(p, sl->line, sl->val_col,
                    "%s: key 'max_rate': '%.40s' is not a positive rate "
                    "such as '0.5 m/h' (m/h, m/min, m/d; ft/h ... for a "
                    "series in ft)", where, sl->text);
    if (*q == '\0') {
        qc->rate_m_per_h = v * scale;
        return SW_OK;
    }
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++) {
        if (strcmp(q, units[i].unit) != 0)
            continue;
        if (units[i].ft && scale == 1.0)
            return fail(p, sl->line, sl->val_col,
                        "%s: key 'max_rate': '%s' is for a series in feet; "
                        "this one is in m (give m/h, m/min or m/d, or set "
                        "unit = ft)", where, q);
        qc->rate_m_per_h = v * units[i].per_h * (units[i].ft ? 0.3048 : 1.0);
        return SW_OK;
    }
    return fail(p, sl->line, sl->val_col,
                "%s: key 'max_rate': unit '%.20s' is not m/h, m/min or m/d "
                "(ft/h, ft/min or ft/d for a series in ft)", where, q);
}

/* flat = DURATION, TOL (a duration as max_gap; TOL in m, >= 0). */
static int read_flat(parser *p, const slot *sl, const char *where,
                     sw_qc_config *qc)
{
    char dur[TEXT_SIZE];
    const char *comma = strchr(sl->text, ',');
    const char *q;
    double tol;
    if (comma == NULL)
        return fail(p, sl->line, sl->val_col,
                    "%s: key 'flat': '%.40s' is not 'DURATION, TOL' (for "
                    "example '6h, 0.001': flagged when the readings of the "
                    "preceding 6 h all lie within 1 mm)", where, sl->text);
    snprintf(dur, sizeof dur, "%.*s", (int)(comma - sl->text), sl->text);
    for (size_t n = strlen(dur); n > 0 && isspace((unsigned char)dur[n - 1]);)
        dur[--n] = '\0';
    if (sw_duration_parse(dur, &qc->flat_ms, p->err) != SW_OK) {
        char at[128];
        snprintf(at, sizeof at, "%s: key 'flat'", where);
        return relocate(p, sl, at);
    }
    q = comma + 1;
    if (!take_number(&q, &tol) || *q != '\0' || tol < 0.0)
        return fail(p, sl->line, sl->val_col,
                    "%s: key 'flat': the tolerance after the comma is not a "
                    "level difference in m (0 or more)", where);
    qc->flat_tol_m = tol;
    return SW_OK;
}

/* The quality tests of a [series NAME] section. */
static int read_qc(parser *p, const section *s, const char *where,
                   sw_site_series *out)
{
    const slot *sl = s->slots;
    if (sl[RK_VALID_RANGE].given &&
        read_valid_range(p, &sl[RK_VALID_RANGE], where, &out->qc) != SW_OK)
        return p->status;
    if (sl[RK_SPIKE].given)
        out->qc.spike_m = sl[RK_SPIKE].num;
    if (sl[RK_MAX_RATE].given &&
        read_max_rate(p, &sl[RK_MAX_RATE], where, out->scale, &out->qc) !=
            SW_OK)
        return p->status;
    if (sl[RK_FLAT].given && read_flat(p, &sl[RK_FLAT], where, &out->qc) !=
                                 SW_OK)
        return p->status;
    return SW_OK;
}

/* The format keys of a [series NAME] section: format = csv (the default:
 * value_column required) or netcdf (variable required; value_column,
 * time_column, time_format, delimiter and unit are the file's business
 * and may not be given; member_dimension and station only there). */
static int series_format(parser *p, const section *s, const char *where,
                         sw_site_series *out)
{
    const slot *sl = s->slots;
    static const int csv_only[] = {RK_VALUE_COLUMN, RK_TIME_COLUMN,
                                   RK_TIME_FORMAT, RK_DELIMITER, RK_UNIT};
    static const int nc_only[] = {RK_VARIABLE, RK_MEMBER_DIMENSION,
                                  RK_STATION};

    if (sl[RK_FORMAT].given) {
        const char *v = sl[RK_FORMAT].text;
        if (strcmp(v, "netcdf") == 0)
            out->netcdf = 1;
        else if (strcmp(v, "csv") != 0)
            return fail(p, sl[RK_FORMAT].line, sl[RK_FORMAT].val_col,
                        "%s: key 'format': '%.40s' is not csv or netcdf",
                        where, v);
    }
    const int *other = out->netcdf ? csv_only : nc_only;
    size_t n_other = out->netcdf ? sizeof csv_only / sizeof csv_only[0]
                                 : sizeof nc_only / sizeof nc_only[0];
    for (size_t i = 0; i < n_other; i++)
        if (sl[other[i]].given)
            return fail(p, sl[other[i]].line, sl[other[i]].key_col,
                        "%s: key '%s' is for %s series only; this one is %s",
                        where, series_keys[other[i]].name,
                        out->netcdf ? "CSV" : "NetCDF",
                        out->netcdf ? "format = netcdf" : "CSV");
    int need = out->netcdf ? RK_VARIABLE : RK_VALUE_COLUMN;
    if (!sl[need].given)
        return fail(p, s->line, s->col,
                    "%s: required key '%s' is missing: add '%s = ...' to "
                    "[series %s]",
                    where, series_keys[need].name, series_keys[need].name,
                    s->arg);
    if (out->netcdf) {
        snprintf(out->variable, sizeof out->variable, "%.127s",
                 sl[RK_VARIABLE].text);
        snprintf(out->value_column, sizeof out->value_column, "%.127s",
                 sl[RK_VARIABLE].text);
        snprintf(out->member_dim, sizeof out->member_dim, "%.63s",
                 sl[RK_MEMBER_DIMENSION].given
                     ? sl[RK_MEMBER_DIMENSION].text
                     : "");
        snprintf(out->station, sizeof out->station, "%.127s",
                 sl[RK_STATION].given ? sl[RK_STATION].text : "");
    }
    return SW_OK;
}

/* Take a [series NAME] section into `out`; a relative file is taken from
 * the site file's folder. */
static int build_series(parser *p, const section *s, sw_site_series *out)
{
    const slot *sl = s->slots;
    char where[96];
    const char *slash = strrchr(p->path, '/');

    int rc;

    section_label(s, where, sizeof where);
    memset(out, 0, sizeof *out);
    snprintf(out->name, sizeof out->name, "%s", s->arg);
    out->line = s->line;
    if (sl[RK_FILE].text[0] == '/' || slash == NULL) {
        snprintf(out->path, sizeof out->path, "%s", sl[RK_FILE].text);
    } else {
        int dir = (int)(slash - p->path);
        if ((size_t)dir + 1 + strlen(sl[RK_FILE].text) >= sizeof out->path)
            return fail(p, sl[RK_FILE].line, sl[RK_FILE].val_col,
                        "%s: key 'file': the path is too long", where);
        snprintf(out->path, sizeof out->path, "%.*s/%.*s", dir, p->path,
                 (int)(sizeof out->path) - dir - 2, sl[RK_FILE].text);
    }
    /* KIND_TEXT values were checked to fit TEXT_SIZE on reading */
    snprintf(out->time_column, sizeof out->time_column, "%.127s",
             sl[RK_TIME_COLUMN].given ? sl[RK_TIME_COLUMN].text : "time");
    if ((rc = series_format(p, s, where, out)) != SW_OK)
        return rc;
    if (!out->netcdf)
        snprintf(out->value_column, sizeof out->value_column, "%.127s",
                 sl[RK_VALUE_COLUMN].text);
    out->time_format = SW_TIME_ISO8601;
    if (sl[RK_TIME_FORMAT].given) {
        const char *v = sl[RK_TIME_FORMAT].text;
        if (strcmp(v, "unix") == 0)
            out->time_format = SW_TIME_UNIX;
        else if (strcmp(v, "iso8601") != 0)
            return fail(p, sl[RK_TIME_FORMAT].line, sl[RK_TIME_FORMAT].val_col,
                        "%s: key 'time_format': '%.40s' is not iso8601 or "
                        "unix (seconds since 1970-01-01T00:00:00Z)",
                        where, v);
    }
    out->scale = 1.0;
    if (sl[RK_UNIT].given) {
        const char *v = sl[RK_UNIT].text;
        if (strcmp(v, "ft") == 0)
            out->scale = 0.3048; /* international foot, exact (1959) */
        else if (strcmp(v, "m") != 0)
            return fail(p, sl[RK_UNIT].line, sl[RK_UNIT].val_col,
                        "%s: key 'unit': '%.40s' is not m or ft", where, v);
    }
    out->offset_m = sl[RK_OFFSET].given ? sl[RK_OFFSET].num : 0.0;
    out->offset_sd_m = sl[RK_OFFSET_SD].given ? sl[RK_OFFSET_SD].num : 0.0;
    if (sl[RK_OFFSET].given &&
        check_sd(p, &sl[RK_OFFSET_SD], where, "offset", "m", out->offset_m,
                 series_keys[RK_OFFSET].min,
                 series_keys[RK_OFFSET].max) != SW_OK)
        return p->status;
    if (sl[RK_DELIMITER].given) {
        const char *v = sl[RK_DELIMITER].text;
        if (strcmp(v, ",") == 0 || strcmp(v, "comma") == 0)
            out->delimiter = ',';
        else if (strcmp(v, "semicolon") == 0)
            out->delimiter = ';';
        else if (strcmp(v, "tab") == 0)
            out->delimiter = '\t';
        else
            return fail(p, sl[RK_DELIMITER].line, sl[RK_DELIMITER].val_col,
                        "%s: key 'delimiter': '%.40s' is not comma, "
                        "semicolon or tab (leave it out to detect it)",
                        where, v);
    }
    if (sl[RK_MISSING].given &&
        read_missing(p, &sl[RK_MISSING], where, out) != SW_OK)
        return p->status;
    return read_qc(p, s, where, out);
}

/* Check that the series a gate names exist; point at the key if not. */
static int check_gate_series(parser *p, const section *s, const sw_site *site)
{
    static const int keys[2] = {GK_HEADWATER, GK_TAILWATER};
    for (int i = 0; i < 2; i++) {
        const slot *sl = &s->slots[keys[i]];
        if (!sl->given || sw_site_find_series(site, sl->text) != NULL)
            continue;
        const char *best = NULL;
        size_t best_d = NEAR_MISS + 1;
        for (size_t j = 0; j < site->n_series; j++) {
            size_t d = edit_distance(sl->text, site->series[j].name);
            if (d < best_d) {
                best_d = d;
                best = site->series[j].name;
            }
        }
        if (best != NULL)
            return fail(p, sl->line, sl->val_col,
                        "gate '%s': key '%s': no [series %s] in the site "
                        "file: did you mean '%s'?",
                        s->arg, gate_keys[keys[i]].name, sl->text, best);
        return fail(p, sl->line, sl->val_col,
                    "gate '%s': key '%s': no [series %s] in the site file: "
                    "add one with file and value_column",
                    s->arg, gate_keys[keys[i]].name, sl->text);
    }
    return SW_OK;
}

/* Take the [site] section (or its absence) into `site`. */
static int resolve_site(parser *p, const section *s, sw_site *site)
{
    if (s != NULL && s->slots[SK_NAME].given)
        snprintf(site->name, sizeof site->name, "%.127s",
                 s->slots[SK_NAME].text);
    else
        default_name(p->path, site->name, sizeof site->name);

    site->g_ms2 = SW_GRAVITY_STANDARD;
    site->max_gap_ms = SW_MS_PER_HOUR;
    if (s == NULL)
        return SW_OK;
    if (s->slots[SK_MAX_GAP].given) {
        const slot *sl = &s->slots[SK_MAX_GAP];
        if (sw_duration_parse(sl->text, &site->max_gap_ms, p->err) != SW_OK)
            return relocate(p, sl, "[site]: key 'max_gap'");
    }
    if (s->slots[SK_ENSEMBLE].given) {
        const slot *sl = &s->slots[SK_ENSEMBLE];
        if (strcmp(sl->text, "crossed") == 0)
            site->ensemble_crossed = 1;
        else if (strcmp(sl->text, "paired") != 0)
            return fail(p, sl->line, sl->val_col,
                        "[site]: key 'ensemble': '%.40s' is not paired (members "
                        "matched by label) or crossed (every combination)",
                        sl->text);
    }
    if (s->slots[SK_TIMEZONE].given) {
        const slot *sl = &s->slots[SK_TIMEZONE];
        if (sw_zone_load(&site->zone, sl->text, p->err) != SW_OK)
            return relocate(p, sl, "[site]: key 'timezone'");
    }
    if (s->slots[SK_GRAVITY].given)
        site->g_ms2 = s->slots[SK_GRAVITY].num;
    if (s->slots[SK_LATITUDE].given) {
        const slot *lat = &s->slots[SK_LATITUDE];
        const slot *elev = &s->slots[SK_ELEVATION];
        int rc;
        site->gravity_from_latitude = 1;
        site->latitude_deg = lat->num;
        site->elevation_m = elev->given ? elev->num : 0.0;
        rc = sw_gravity_normal(site->latitude_deg, site->elevation_m,
                               &site->g_ms2, p->err);
        if (rc != SW_OK) {
            char why[SW_ERROR_MSG_MAX];
            snprintf(why, sizeof why, "%s", p->err->message);
            p->status = sw_error_set(p->err, rc, p->path, lat->line,
                                     lat->val_col, "[site]: %s", why);
            return p->status;
        }
    }
    return SW_OK;
}

/* Take a [water ...] section into `water`. */
static int resolve_water(parser *p, const section *s, sw_site_water *water)
{
    const slot *t = &s->slots[WK_TEMPERATURE];
    const slot *sl = s->slots;
    char where[96];

    section_label(s, where, sizeof where);
    water->density_sd_kgm3 = sl[WK_DENSITY_SD].given ? sl[WK_DENSITY_SD].num
                                                     : 0.0;
    water->temperature_sd_C =
        sl[WK_TEMPERATURE_SD].given ? sl[WK_TEMPERATURE_SD].num : 0.0;
    water->salinity_sd = sl[WK_SALINITY_SD].given ? sl[WK_SALINITY_SD].num
                                                  : 0.0;
    for (int k = WK_DENSITY; k <= WK_SALINITY; k++) {
        const key_def *key = &water_keys[k];
        if (sl[k].given &&
            check_sd(p, &sl[k + (WK_DENSITY_SD - WK_DENSITY)], where,
                     key->name, key->unit, sl[k].num, key->min,
                     key->max) != SW_OK)
            return p->status;
    }
    if (s->slots[WK_DENSITY].given) {
        water->rho_kgm3 = s->slots[WK_DENSITY].num;
        return SW_OK;
    }
    water->from_temperature = 1;
    water->temperature_C = t->num;
    water->salinity =
        s->slots[WK_SALINITY].given ? s->slots[WK_SALINITY].num : 0.0;
    int rc = sw_water_density(water->temperature_C, water->salinity,
                              &water->rho_kgm3, p->err);
    if (rc != SW_OK) {
        char why[SW_ERROR_MSG_MAX];
        snprintf(why, sizeof why, "%s", p->err->message);
        p->status = sw_error_set(p->err, rc, p->path, t->line, t->val_col,
                                 "%s: %s", where, why);
    }
    return rc;
}

/* Set the leaf's keys of `g` from value[] (sw_gate_param order; NAN: not
 * given), with the defaults of the site file for those not given: 0 for
 * cg_offset, volume and extra_moment, and the sill's s for leaf_length,
 * which so follows seal_top and the seal's extent. */
static void set_params(sw_gate *g, const double value[SW_GATE_N_PARAMS])
{
    for (int p = 0; p < SW_GATE_N_PARAMS; p++)
        *sw_gate_param_ref(g, (sw_gate_param)p) =
            isnan(value[p]) ? 0.0 : value[p];
    if (isnan(value[SW_GP_LEAF_LENGTH]))
        g->leaf_length_m =
            g->seal_top_m + (g->shape == SW_SHAPE_RECTANGLE ? g->seal_height_m
                                                            : g->diameter_m);
}

int sw_site_gate_build(const sw_site_gate *sg,
                       const double value[SW_GATE_N_PARAMS],
                       const double rho_kgm3[2], sw_gate *out,
                       const char **bad_key, sw_error *err)
{
    int rc;

    *out = sg->gate;
    set_params(out, value);
    out->rho_kgm3[SW_UPSTREAM] = rho_kgm3[SW_UPSTREAM];
    out->rho_kgm3[SW_DOWNSTREAM] = rho_kgm3[SW_DOWNSTREAM];
    if ((rc = sw_gate_validate(out, bad_key, err)) != SW_OK)
        return rc;
    sw_gate_prepare(out);
    return SW_OK;
}

/* The leaf's keys of section `s` as given, and their uncertainties. */
static int gate_values(parser *p, const section *s, const char *where,
                       sw_site_gate *out)
{
    char sd_name[64];
    for (int q = 0; q < SW_GATE_N_PARAMS; q++) {
        const char *key = sw_gate_param_key((sw_gate_param)q);
        const slot *v = &s->slots[key_index(s->def, key)];
        snprintf(sd_name, sizeof sd_name, "%s_sd", key);
        const slot *sd = &s->slots[key_index(s->def, sd_name)];
        double lo, hi;
        int lo_open, hi_open;
        out->value[q] = v->given ? v->num : NAN;
        out->sd[q] = sd->given ? sd->num : 0.0;
        sw_gate_param_range((sw_gate_param)q, &lo, &hi, &lo_open, &hi_open);
        if (v->given &&
            check_sd(p, sd, where, key, sw_gate_param_unit((sw_gate_param)q),
                     v->num, lo, hi) != SW_OK)
            return p->status;
    }
    return SW_OK;
}

/* Fill in, validate and prepare the gate of section `s`. */
static int build_gate(parser *p, const section *s, const section *site_sec,
                      const sw_site *site, sw_site_gate *out)
{
    const slot *sl = s->slots;
    sw_gate *g = &out->gate;
    const char *bad_key = NULL;
    char where[96];
    double rho[2] = {site->water[SW_UPSTREAM].rho_kgm3,
                     site->water[SW_DOWNSTREAM].rho_kgm3};
    int rc;

    memset(out, 0, sizeof *out);
    out->line = s->line;
    snprintf(g->name, sizeof g->name, "%s", s->arg);
    /* Names were checked to fit on reading (name_problem()). */
    snprintf(out->headwater, sizeof out->headwater, "%.63s",
             sl[GK_HEADWATER].given ? sl[GK_HEADWATER].text : "");
    snprintf(out->tailwater, sizeof out->tailwater, "%.63s",
             sl[GK_TAILWATER].given ? sl[GK_TAILWATER].text : "");
    if (gate_values(p, s, section_label(s, where, sizeof where), out) !=
        SW_OK)
        return p->status;

    g->shape = sl[GK_SHAPE].shape;
    g->required_fs = sl[GK_REQUIRED_FS].given ? sl[GK_REQUIRED_FS].num
                                              : site->required_fs;
    g->fs_basis = sl[GK_FS_BASIS].given ? sl[GK_FS_BASIS].basis
                                        : site->fs_basis;
    g->min_sill_reaction_N = sl[GK_MIN_SILL_REACTION].given
                                 ? sl[GK_MIN_SILL_REACTION].num
                                 : site->min_sill_reaction_N;
    g->g_ms2 = site->g_ms2;

    rc = sw_site_gate_build(out, out->value, rho, g, &bad_key, p->err);
    if (rc != SW_OK) {
        /* Point at the value that failed: in the gate's section; in [site]
         * for a value the gate takes from there; else at the header. */
        long line = s->line, col = s->col;
        int k = bad_key != NULL ? key_index(s->def, bad_key) : -1;
        if (k >= 0 && sl[k].given) {
            line = sl[k].line;
            col = sl[k].val_col;
        } else if (k >= 0 && site_sec != NULL) {
            int ks = key_index(site_sec->def, bad_key);
            if (ks >= 0 && site_sec->slots[ks].given) {
                line = site_sec->slots[ks].line;
                col = site_sec->slots[ks].val_col;
            }
        }
        snprintf(p->err->file, sizeof p->err->file, "%s", p->path);
        p->err->line = line;
        p->err->column = col;
        p->status = rc;
        return rc;
    }
    return SW_OK;
}

/* Append a gate to the site, growing the array as needed. */
static sw_site_gate *add_gate(parser *p, sw_site *site, size_t *cap)
{
    if (site->n_gates == *cap) {
        size_t grown_cap = *cap != 0 ? 2 * *cap : 4;
        sw_site_gate *grown =
            realloc(site->gates, grown_cap * sizeof *grown);
        if (grown == NULL) {
            p->status = sw_error_set(p->err, SW_ENOMEM, p->path, 0, 0,
                                     "out of memory reading the site file");
            return NULL;
        }
        site->gates = grown;
        *cap = grown_cap;
    }
    return &site->gates[site->n_gates++];
}

/* Passes 2 to 4, once the lines are read. */
static int resolve(parser *p, sw_site *site)
{
    const section *site_sec = NULL;
    const section *water[2] = {NULL, NULL};
    size_t n_gates = 0, cap = 0, n_series = 0;

    for (size_t i = 0; i < p->n_secs; i++) {
        const section *s = &p->secs[i];
        if (s->def->kind == SEC_SITE)
            site_sec = s;
        else if (s->def->kind == SEC_WATER)
            water[s->def->side] = s;
        else if (s->def->kind == SEC_SERIES)
            n_series++;
        else
            n_gates++;
    }
    if (site_sec != NULL && site_sec->slots[SK_REQUIRED_FS].given)
        site->required_fs = site_sec->slots[SK_REQUIRED_FS].num;
    if (site_sec != NULL && site_sec->slots[SK_FS_BASIS].given)
        site->fs_basis = site_sec->slots[SK_FS_BASIS].basis;
    if (site_sec != NULL && site_sec->slots[SK_MIN_SILL_REACTION].given)
        site->min_sill_reaction_N = site_sec->slots[SK_MIN_SILL_REACTION].num;

    for (size_t i = 0; i < p->n_secs; i++)
        if (check_section(p, &p->secs[i], site) != SW_OK)
            return p->status;
    for (int side = 0; side < 2; side++)
        if (water[side] == NULL)
            return fail(p, 0, 0,
                        "the site file has no [water %s] section: add one "
                        "with density or temperature",
                        sw_side_name((sw_side)side));
    if (n_gates == 0)
        return fail(p, 0, 0,
                    "the site file defines no gate: add a [gate NAME] "
                    "section");

    if (resolve_site(p, site_sec, site) != SW_OK)
        return p->status;
    for (int side = 0; side < 2; side++)
        if (resolve_water(p, water[side], &site->water[side]) != SW_OK)
            return p->status;

    if (n_series > 0) {
        site->series = calloc(n_series, sizeof *site->series);
        if (site->series == NULL) {
            p->status = sw_error_set(p->err, SW_ENOMEM, p->path, 0, 0,
                                     "out of memory reading the site file");
            return p->status;
        }
        for (size_t i = 0; i < p->n_secs; i++)
            if (p->secs[i].def->kind == SEC_SERIES &&
                build_series(p, &p->secs[i],
                             &site->series[site->n_series++]) != SW_OK)
                return p->status;
    }

    for (size_t i = 0; i < p->n_secs; i++) {
        sw_site_gate *gate;
        if (p->secs[i].def->kind != SEC_GATE)
            continue;
        if (check_gate_series(p, &p->secs[i], site) != SW_OK)
            return p->status;
        gate = add_gate(p, site, &cap);
        if (gate == NULL)
            return p->status;
        if (build_gate(p, &p->secs[i], site_sec, site, gate) != SW_OK)
            return p->status;
    }
    return SW_OK;
}

/* ---- public ------------------------------------------------------------- */

int sw_site_load(sw_site *site, const char *path, sw_error *err)
{
    sw_error local;
    parser p;
    int rc;

    if (err == NULL)
        err = &local;
    sw_error_clear(err);
    memset(site, 0, sizeof *site);
    memset(&p, 0, sizeof p);
    int from_stdin = strcmp(path, "-") == 0;
    if (from_stdin)
        path = SW_SITE_STDIN_NAME;
    p.path = path;
    p.err = err;

    /* a FIFO's open waits for its writer: a stop request ends the wait */
    while ((p.fp = from_stdin ? stdin : fopen(path, "r")) == NULL &&
           errno == EINTR && !sw_cancel_requested())
        ;
    if (p.fp == NULL)
        return errno == EINTR ? sw_cancel_check(err)
                              : sw_error_set(err, SW_ESITE, path, 0, 0,
                                             "cannot open the site file: %s",
                                             strerror(errno));
    struct stat sb;
    if (!from_stdin && fstat(fileno(p.fp), &sb) == 0 && S_ISDIR(sb.st_mode)) {
        fclose(p.fp);
        return sw_error_set(err, SW_ESITE, path, 0, 0,
                            "this is a folder, not a site file");
    }

    snprintf(site->path, sizeof site->path, "%s", path);
    site->required_fs = NAN;
    site->fs_basis = SW_FS_NET;
    site->min_sill_reaction_N = 0.0;

    rc = ini_parse_stream(site_reader, &p, site_handler, &p);
    /* The last line may be a key line that libinih could not split. */
    if (p.status == SW_OK && p.key_line && !p.handler_called)
        fail(&p, p.lineno, p.col0 + 1,
             "line is not 'key = value', a [section] header or a comment: "
             "put '=' between the key and its value");
    if (p.status == SW_OK && rc == -2)
        p.status = sw_error_set(err, SW_ENOMEM, path, 0, 0,
                                "out of memory reading the site file");
    else if (p.status == SW_OK && rc != 0)
        fail(&p, rc > 0 ? rc : 0, 0, "libinih reports a syntax error here");
    if (p.status == SW_OK)
        resolve(&p, site);

    if (!from_stdin)
        fclose(p.fp);
    free(p.raw);
    free(p.secs);
    if (p.status != SW_OK) {
        sw_site_fini(site);
        return p.status;
    }
    return SW_OK;
}

void sw_site_series_reader(const sw_site *site, const sw_site_series *s,
                           sw_reader_config *cfg, sw_column_config *col)
{
    memset(cfg, 0, sizeof *cfg);
    cfg->path = s->path;
    cfg->time_column = s->time_column;
    cfg->time_format = s->time_format;
    cfg->delimiter = s->delimiter;
    cfg->zone = site->zone;
    cfg->netcdf = s->netcdf;
    cfg->station = s->station;
    cfg->member_dim = s->member_dim;
    memset(col, 0, sizeof *col);
    col->name = s->value_column;
    col->scale = s->scale;
    col->offset_m = s->offset_m;
    col->n_missing = s->n_missing;
    for (size_t k = 0; k < s->n_missing; k++)
        col->missing[k] = s->missing[k];
}

int sw_site_series_same_reader(const sw_site_series *a,
                               const sw_site_series *b)
{
    return strcmp(a->path, b->path) == 0 &&
           strcmp(a->time_column, b->time_column) == 0 &&
           a->time_format == b->time_format && a->delimiter == b->delimiter &&
           a->netcdf == b->netcdf && strcmp(a->station, b->station) == 0 &&
           strcmp(a->member_dim, b->member_dim) == 0;
}

void sw_site_fini(sw_site *site)
{
    if (site == NULL)
        return;
    free(site->gates);
    free(site->series);
    sw_zone_free(site->zone);
    memset(site, 0, sizeof *site);
}

const sw_site_gate *sw_site_find_gate(const sw_site *site, const char *name)
{
    if (site == NULL || name == NULL)
        return NULL;
    for (size_t i = 0; i < site->n_gates; i++)
        if (strcmp(site->gates[i].gate.name, name) == 0)
            return &site->gates[i];
    return NULL;
}

const sw_site_series *sw_site_find_series(const sw_site *site,
                                          const char *name)
{
    if (site == NULL || name == NULL)
        return NULL;
    for (size_t i = 0; i < site->n_series; i++)
        if (strcmp(site->series[i].name, name) == 0)
            return &site->series[i];
    return NULL;
}

int sw_site_set_series_file(sw_site *site, const char *name,
                            const char *path, sw_error *err)
{
    char list[400] = "";
    size_t used = 0;

    for (size_t i = 0; i < site->n_series; i++) {
        sw_site_series *sr = &site->series[i];
        if (strcmp(sr->name, name) == 0) {
            if (strlen(path) >= sizeof sr->path)
                return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                                    "--series %s: the path is too long",
                                    name);
            snprintf(sr->path, sizeof sr->path, "%s", path);
            return SW_OK;
        }
        if (used < sizeof list)
            used += (size_t)snprintf(list + used, sizeof list - used, "%s%s",
                                     i > 0 ? ", " : "", sr->name);
    }
    return sw_error_set(err, SW_EUSAGE, NULL, 0, 0,
                        "--series: the site has no series '%s'%s%s", name,
                        site->n_series > 0 ? "; it has: " : "",
                        site->n_series > 0 ? list : " (no [series] section)");
}
