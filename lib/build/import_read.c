/* Reading one text table into a track: the header and the columns of the
 * map's quantities, every data row converted and checked with its
 * file:line:column, then the track's initial mass and Z and the defaults
 * for absent columns (tracks/FORMAT.md, "Importing text tracks"). */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "build/build.h"
#include "build/import.h"
#include "util/util.h"

/* Most columns a table may have. */
#define MAX_FIELDS 512
/* Rows the columns first have room for; they double as needed. */
#define FIRST_ROWS 1024
/* Characters of a value, and of a header name, shown in messages. */
#define VALUE_SHOWN 32
#define HEADER_NAME_SHOWN 24
/* Header names listed in a message, up to about this many characters. */
#define HEADER_LIST_LEN 120

/* ---- files, fields, values ------------------------------------------------- */

typedef struct field {
    const char *s;
    size_t len;
    long col; /* 1-based character column */
} field;

/* Comma-separated fields of [a, e): blanks around each trimmed, one pair of
 * double quotes removed. */
static size_t split_commas(const char *a, const char *e, field *f, size_t cap, const char *line0)
{
    size_t n = 0;
    const char *s = a;
    for (;;) {
        const char *b = s;
        while (s < e && *s != ',')
            s++;
        const char *x = b, *y = s;
        while (x < y && (*x == ' ' || *x == '\t'))
            x++;
        while (y > x && (y[-1] == ' ' || y[-1] == '\t'))
            y--;
        if (y - x >= 2 && *x == '"' && y[-1] == '"')
            x++, y--;
        if (n < cap)
            f[n] = (field){x, (size_t)(y - x), (long)(x - line0) + 1};
        n++;
        if (s >= e)
            break;
        s++;
    }
    return n;
}

/* Split one line into fields (comma-separated or blank-separated); returns
 * their number, of which the first cap are stored. */
static size_t split(const char *a, const char *e, int comma, field *f, size_t cap, const char *line0)
{
    if (comma)
        return split_commas(a, e, f, cap, line0);
    size_t n = 0;
    const char *s = a;
    while (s < e) {
        while (s < e && (*s == ' ' || *s == '\t'))
            s++;
        if (s >= e)
            break;
        const char *b = s;
        while (s < e && *s != ' ' && *s != '\t')
            s++;
        if (n < cap)
            f[n] = (field){b, (size_t)(s - b), (long)(b - line0) + 1};
        n++;
    }
    return n;
}

/* Number of continuation bytes of a UTF-8 sequence starting with byte c
 * (lead bytes 0xc2-0xdf, 0xe0-0xef, 0xf0-0xf4); -1 if c cannot start one
 * (0x80-0xc1: continuations and overlong leads; 0xf5-0xff: beyond U+10FFFF). */
static int utf8_continuations(unsigned c)
{
    return c >= 0xc2 && c <= 0xdf ? 1 : c >= 0xe0 && c <= 0xef ? 2 : c >= 0xf0 && c <= 0xf4 ? 3 : -1;
}

/* The range of the byte after lead byte c (Unicode's table of well-formed
 * UTF-8 byte sequences): no overlong forms, no surrogates, nothing beyond
 * U+10FFFF. */
static int utf8_second_ok(unsigned c, unsigned b)
{
    unsigned lo = c == 0xe0 ? 0xa0 : c == 0xf0 ? 0x90 : 0x80;
    unsigned hi = c == 0xed ? 0x9f : c == 0xf4 ? 0x8f : 0xbf;
    return b >= lo && b <= hi;
}

/* Binary data or invalid UTF-8 in [a, e)?  Returns the offset of the bad byte or -1. */
static long bad_byte(const unsigned char *a, const unsigned char *e)
{
    for (const unsigned char *p = a; p < e; p++) {
        unsigned c = *p;
        if (c == '\t' || c == '\r')
            continue;
        if (c < 0x20 || c == 0x7f)
            return (long)(p - a);
        if (c < 0x80)
            continue;
        int k = utf8_continuations(c);
        if (k < 0 || e - p <= k || !utf8_second_ok(c, p[1]))
            return (long)(p - a);
        for (int j = 2; j <= k; j++)
            if ((p[j] & 0xc0) != 0x80)
                return (long)(p - a);
        p += k;
    }
    return -1;
}

/* Header index of the column name: exact match first, then ignoring case; -1. */
static long find_col(const field *h, size_t nh, const char *name)
{
    for (size_t i = 0; i < nh; i++)
        if (h[i].len == strlen(name) && strncmp(h[i].s, name, h[i].len) == 0)
            return (long)i;
    for (size_t i = 0; i < nh; i++)
        if (h[i].len == strlen(name) && strncasecmp(h[i].s, name, h[i].len) == 0)
            return (long)i;
    return -1;
}

/* A phase given as an hrtrail key or code. */
static int phase_of_text(const char *s, size_t len, int *ph)
{
    char buf[32];
    if (len == 0 || len >= sizeof buf)
        return -1;
    memcpy(buf, s, len);
    buf[len] = '\0';
    int p = hrt_phase_from_key(buf);
    if (p != HRT_PHASE_UNKNOWN) {
        *ph = p;
        return 0;
    }
    char *end;
    long v = strtol(buf, &end, 10);
    if (*end || v <= HRT_PHASE_UNKNOWN || v >= HRT_PHASE_SLOTS || hrt_phase_from_key(hrt_phase_key((int)v)) != v)
        return -1;
    *ph = (int)v;
    return 0;
}

/* A keypoint-flag field that flags nothing: empty, "-", "0" or "none". */
static int flags_nothing(const field *f)
{
    return f->len == 0 || (f->len == 1 && (*f->s == '-' || *f->s == '0')) ||
           (f->len == 4 && strncasecmp(f->s, "none", 4) == 0);
}

static int alloc_cols(trail_import_track *t, size_t cap)
{
    double **d[] = {&t->age_yr, &t->log_l,     &t->log_teff, &t->log_r,  &t->mass,
                    &t->central_x, &t->central_y, &t->he_core, &t->co_core};
    for (size_t i = 0; i < sizeof d / sizeof d[0]; i++) {
        double *p = realloc(*d[i], cap * sizeof(double));
        if (!p)
            return -1;
        *d[i] = p;
    }
    int *ph = realloc(t->phase, cap * sizeof(int));
    if (!ph)
        return -1;
    t->phase = ph;
    trail_source_pos *pos = realloc(t->pos, cap * sizeof *pos);
    if (!pos)
        return -1;
    t->pos = pos;
    char **fl = realloc(t->flag, cap * sizeof(char *));
    if (!fl)
        return -1;
    t->flag = fl;
    size_t nx = t->n_extra_cols;
    double *x = nx ? realloc(t->x, cap * nx * sizeof(double)) : NULL;
    if (nx && !x)
        return -1;
    t->x = x;
    return 0;
}

/* ---- the table ------------------------------------------------------------ */

/* A table being read into track t. */
typedef struct table {
    const hrt_import *imp;
    trail_import_track *t;
    hrt_error *err;
    field *header, *fields; /* MAX_FIELDS each; fields one more (where a row's extra field starts) */
    size_t n_header, cap;
    int comma; /* comma-separated (else blank-separated), from the header line */
    int row_dropped; /* the row being read is dropped (lenient mode) */
    long line, header_line;
    long column[TRAIL_MAP_N];              /* header index of each quantity's column; -1 */
    const trail_map_key *key[TRAIL_MAP_N]; /* what that column is read as */
    double factor[TRAIL_MAP_N];
    long xcol[TRAIL_MAX_EXTRA];         /* header index of each extra quantity's column */
    double first_initial_mass, first_z; /* of the first row kept */
} table;

/* The header name of quantity q's column. */
#define HEADER_NAME(tb, q) (int)(tb)->header[(tb)->column[q]].len, (tb)->header[(tb)->column[q]].s
/* A field's text for messages, at most VALUE_SHOWN characters. */
#define FIELD_TEXT(f) (int)((f)->len > VALUE_SHOWN ? VALUE_SHOWN : (f)->len), (f)->s

/* The map names a column the header does not have: the message lists the header. */
static int mapped_column_missing(table *tb, const trail_map_entry *me)
{
    char list[HEADER_LIST_LEN + 40] = "";
    for (size_t i = 0; i < tb->n_header && strlen(list) < HEADER_LIST_LEN; i++)
        snprintf(list + strlen(list), sizeof list - strlen(list), "%s%.*s", i ? " " : "",
                 (int)(tb->header[i].len > HEADER_NAME_SHOWN ? HEADER_NAME_SHOWN : tb->header[i].len),
                 tb->header[i].s);
    return trail_import_problem(tb->t, HRT_E_FORMAT, tb->line, 1, tb->err,
                                "the map names column '%s' (for %s), which is not in the header (%s%s)", me->column,
                                trail_map_key_at((size_t)me->key)->key, list,
                                tb->n_header > 0 && strlen(list) >= HEADER_LIST_LEN ? " ..." : "");
}

/* The column quantity q is read from: the map's, or the first of its
 * default names the header has (none: column -1). */
static int resolve_column(table *tb, int q)
{
    const trail_map_entry *me = &tb->imp->map[q];
    tb->key[q] = NULL;
    tb->factor[q] = 1.0;
    if (me->set && !me->column)
        return HRT_OK; /* constant */
    if (me->set) {
        tb->column[q] = find_col(tb->header, tb->n_header, me->column);
        if (tb->column[q] < 0)
            return mapped_column_missing(tb, me);
        tb->key[q] = trail_map_key_at((size_t)me->key);
        tb->factor[q] = me->factor;
        return HRT_OK;
    }
    const trail_map_key *mk;
    for (size_t d = 0; (mk = trail_map_key_at(d)) != NULL; d++)
        if (mk->quantity == q && mk->by_default && (tb->column[q] = find_col(tb->header, tb->n_header, mk->key)) >= 0) {
            tb->key[q] = mk;
            break;
        }
    return HRT_OK;
}

/* Age, luminosity and Teff must have a column: the message names the
 * quantity's keys, e.g. "age_yr (or log_age_yr)". */
static int require_column(table *tb, int q)
{
    if (tb->column[q] >= 0)
        return HRT_OK;
    const char *names[2] = {NULL, NULL};
    const trail_map_key *mk;
    for (size_t k = 0; (mk = trail_map_key_at(k)) != NULL; k++)
        if (mk->quantity == q && mk->by_default) {
            if (!names[0])
                names[0] = mk->key;
            else if (!names[1])
                names[1] = mk->key;
        }
    return trail_import_problem(tb->t, HRT_E_FORMAT, tb->line, 1, tb->err,
                                "required column %s (or %s) is missing: name it so or map it, e.g. %s=<column>",
                                names[0], names[1], trail_map_quantity_name(q));
}

/* The header line [a, e): its names, and the column of every quantity. */
static int read_header(table *tb, const char *a, const char *e)
{
    tb->header_line = tb->line;
    tb->comma = memchr(a, ',', (size_t)(e - a)) != NULL;
    tb->n_header = split(a, e, tb->comma, tb->header, MAX_FIELDS, a);
    if (tb->n_header > MAX_FIELDS)
        return trail_import_problem(tb->t, HRT_E_FORMAT, tb->line, 1, tb->err, "header has %zu columns, at most %d",
                                    tb->n_header, MAX_FIELDS);
    for (size_t i = 0; i < tb->n_header; i++)
        if (tb->header[i].len == 0)
            return trail_import_problem(tb->t, HRT_E_FORMAT, tb->line, tb->header[i].col, tb->err,
                                        "header column %zu has no name", i + 1);
    int rc = HRT_OK;
    for (int q = 0; q < TRAIL_MAP_N && rc == HRT_OK; q++)
        rc = resolve_column(tb, q);
    for (size_t k = 0; k < tb->imp->n_extra && rc == HRT_OK; k++) {
        tb->xcol[k] = find_col(tb->header, tb->n_header, tb->imp->extra_column[k]);
        if (tb->xcol[k] < 0)
            rc = trail_import_problem(tb->t, HRT_E_FORMAT, tb->line, 1, tb->err,
                                      "the map names column '%s' (for extra quantity %s), which is not in the header",
                                      tb->imp->extra_column[k], tb->imp->extra[k].name);
    }
    static const int required[3] = {TRAIL_MAP_AGE, TRAIL_MAP_L, TRAIL_MAP_TEFF};
    for (int r = 0; r < 3 && rc == HRT_OK; r++)
        rc = require_column(tb, required[r]);
    return rc;
}

/* A problem of the data row being read, at column col: in lenient mode the
 * row is dropped and listed (tb->row_dropped set, HRT_OK returned), else
 * it fails the track. */
static int row_problem(table *tb, long col, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static int row_problem(table *tb, long col, const char *fmt, ...)
{
    char msg[256];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    if (!tb->imp->lenient)
        return trail_import_problem(tb->t, HRT_E_FORMAT, tb->line, col, tb->err, "%s", msg);
    tb->row_dropped = 1;
    if (trail_import_drop_row(tb->t, HRT_E_FORMAT, tb->line, col, msg) != 0)
        return trail_import_problem(tb->t, HRT_E_NOMEM, tb->line, col, tb->err, "out of memory");
    return HRT_OK;
}

/* A problem with the value of field f of quantity q. */
static int value_problem(table *tb, int q, const field *f, const char *what)
{
    return row_problem(tb, f->col, "%.*s in column '%.*s' (%s) %s", FIELD_TEXT(f), HEADER_NAME(tb, q),
                       tb->key[q]->key, what);
}

/* Quantities that are positive by nature: read linearly they must be > 0. */
static int is_positive(int q)
{
    return q == TRAIL_MAP_L || q == TRAIL_MAP_TEFF || q == TRAIL_MAP_R || q == TRAIL_MAP_AGE;
}

/* Current and core masses: not negative. */
static int is_mass(int q) { return q == TRAIL_MAP_MASS || q == TRAIL_MAP_HE_CORE || q == TRAIL_MAP_CO_CORE; }

/* The number in field f, converted to quantity q (log columns to linear,
 * times the map's factor). */
static int row_number(table *tb, int q, const field *f, double *out)
{
    double x;
    if (trail_parse_double(f->s, f->len, &x) != 0)
        return row_problem(tb, f->col, "'%.*s' in column '%.*s' (%s) is not a number", FIELD_TEXT(f),
                           HEADER_NAME(tb, q), tb->key[q]->key);
    if (!isfinite(x))
        return value_problem(tb, q, f, "is not finite");
    if (tb->key[q]->is_log)
        x = q == TRAIL_MAP_Z ? tb->imp->z_ref * pow(10.0, x) : tb->factor[q] * pow(10.0, x);
    else {
        if (is_positive(q) && !(x > 0.0))
            return value_problem(tb, q, f, "is not positive");
        x *= tb->factor[q];
    }
    if (!isfinite(x) || (is_positive(q) && !(x > 0.0)))
        return value_problem(tb, q, f, "overflows or underflows after conversion");
    if (is_mass(q) && x < 0.0)
        return value_problem(tb, q, f, "is negative");
    *out = x;
    return HRT_OK;
}

/* Every quantity of row i from its fields (NaN where it has no column);
 * phases go straight to the track. */
static int row_values(table *tb, size_t i, double v[TRAIL_MAP_N])
{
    int rc = HRT_OK;
    for (int q = 0; q < TRAIL_MAP_N && rc == HRT_OK && !tb->row_dropped; q++) {
        v[q] = NAN;
        if (tb->column[q] < 0 || q == TRAIL_MAP_KEYPOINTS)
            continue;
        const field *f = &tb->fields[tb->column[q]];
        if (q != TRAIL_MAP_PHASE) {
            rc = row_number(tb, q, f, &v[q]);
            continue;
        }
        int ph = HRT_PHASE_UNKNOWN;
        if (phase_of_text(f->s, f->len, &ph) != 0)
            rc = row_problem(tb, f->col, "'%.*s' in column '%.*s' is not an hrtrail phase key (%s, %s, %s, %s, "
                             "...) or code (%d, %d, %d, %d, ...)", FIELD_TEXT(f), HEADER_NAME(tb, q),
                             hrt_phase_key(HRT_PHASE_MS), hrt_phase_key(HRT_PHASE_SUBGIANT),
                             hrt_phase_key(HRT_PHASE_RGB), hrt_phase_key(HRT_PHASE_CHEB), HRT_PHASE_MS,
                             HRT_PHASE_SUBGIANT, HRT_PHASE_RGB, HRT_PHASE_CHEB);
        tb->t->phase[i] = ph;
    }
    return rc;
}

/* Row i's keypoint flag, if its field flags one. */
static int row_flag(table *tb, size_t i)
{
    trail_import_track *t = tb->t;
    const field *f = &tb->fields[tb->column[TRAIL_MAP_KEYPOINTS]];
    if (flags_nothing(f))
        return HRT_OK;
    t->flag[i] = malloc(f->len + 1);
    if (!t->flag[i])
        return trail_import_problem(t, HRT_E_NOMEM, tb->line, 1, tb->err, "out of memory");
    memcpy(t->flag[i], f->s, f->len);
    t->flag[i][f->len] = '\0';
    return HRT_OK;
}

/* Row i of the track from the values v: ages must increase. */
static int store_row(table *tb, size_t i, const double v[TRAIL_MAP_N])
{
    trail_import_track *t = tb->t;
    long age_col = tb->fields[tb->column[TRAIL_MAP_AGE]].col;
    if (t->n > 0 && !(v[TRAIL_MAP_AGE] > t->age_yr[i - 1]))
        return row_problem(tb, age_col,
                           v[TRAIL_MAP_AGE] == t->age_yr[i - 1]
                               ? "age %.10g yr repeats the age on line %ld (duplicate row?)"
                               : "age %.10g yr is less than the age on line %ld: ages must increase",
                           v[TRAIL_MAP_AGE], t->pos[i - 1].line);
    t->age_yr[i] = v[TRAIL_MAP_AGE];
    t->log_l[i] = log10(v[TRAIL_MAP_L]);
    t->log_teff[i] = log10(v[TRAIL_MAP_TEFF]);
    t->log_r[i] = tb->column[TRAIL_MAP_R] >= 0 ? log10(v[TRAIL_MAP_R]) : NAN;
    t->mass[i] = v[TRAIL_MAP_MASS];
    t->central_x[i] = v[TRAIL_MAP_CENTRAL_X];
    t->central_y[i] = v[TRAIL_MAP_CENTRAL_Y];
    t->he_core[i] = v[TRAIL_MAP_HE_CORE];
    t->co_core[i] = v[TRAIL_MAP_CO_CORE];
    t->flag[i] = NULL;
    t->pos[i].line = tb->line;
    t->pos[i].flag_column = tb->column[TRAIL_MAP_KEYPOINTS] >= 0 ? tb->fields[tb->column[TRAIL_MAP_KEYPOINTS]].col : 0;
    if (tb->column[TRAIL_MAP_KEYPOINTS] >= 0) {
        int rc = row_flag(tb, i);
        if (rc != HRT_OK)
            return rc;
    }
    if (tb->column[TRAIL_MAP_PHASE] < 0)
        t->phase[i] = HRT_PHASE_UNKNOWN;
    if (t->n == 0) {
        tb->first_initial_mass = v[TRAIL_MAP_INITIAL_MASS];
        tb->first_z = v[TRAIL_MAP_Z];
    }
    t->n++;
    return HRT_OK;
}

/* A data row [a, e): as many fields as the header, values converted; a bad
 * row is dropped in lenient mode. */
static int read_row(table *tb, const char *a, const char *e)
{
    trail_import_track *t = tb->t;
    /* one field more than a header may have: where an extra field starts */
    size_t nf = split(a, e, tb->comma, tb->fields, MAX_FIELDS + 1, a);
    tb->row_dropped = 0;
    if (nf != tb->n_header) {
        long col = nf < tb->n_header ? (long)(e - a) + 1 : tb->fields[tb->n_header].col;
        return row_problem(tb, col, "%zu fields, the header (line %ld) has %zu%s", nf, tb->header_line, tb->n_header,
                           nf < tb->n_header ? ": truncated line?" : "");
    }
    if (t->n == tb->cap) {
        tb->cap = tb->cap ? 2 * tb->cap : FIRST_ROWS;
        if (alloc_cols(t, tb->cap) != 0)
            return trail_import_problem(t, HRT_E_NOMEM, tb->line, 1, tb->err, "out of memory");
    }
    double v[TRAIL_MAP_N];
    int rc = row_values(tb, t->n, v);
    for (size_t k = 0; k < tb->imp->n_extra && rc == HRT_OK && !tb->row_dropped; k++) {
        const field *f = &tb->fields[tb->xcol[k]];
        double x;
        if (trail_parse_double(f->s, f->len, &x) != 0 || !isfinite(x))
            rc = row_problem(tb, f->col, "'%.*s' in column '%s' (extra quantity %s) is not a finite number",
                             FIELD_TEXT(f), tb->imp->extra_column[k], tb->imp->extra[k].name);
        else
            t->x[t->n * tb->imp->n_extra + k] = x;
    }
    if (rc != HRT_OK || tb->row_dropped)
        return rc;
    return store_row(tb, t->n, v);
}

/* One line [a, e) of the file: checked for binary data, comments removed,
 * then the header or a data row. */
static int read_line(table *tb, const char *a, const char *e)
{
    long bad = bad_byte((const unsigned char *)a, (const unsigned char *)e);
    if (bad >= 0)
        return trail_import_problem(tb->t, HRT_E_FORMAT, tb->line, bad + 1, tb->err,
                                    "binary data (byte 0x%02x): not a text table", (unsigned)(unsigned char)a[bad]);
    if (e > a && e[-1] == '\r')
        e--;
    const char *s = a;
    while (s < e && (*s == ' ' || *s == '\t'))
        s++;
    if (s == e || *s == '#')
        return HRT_OK;
    const char *hash = memchr(a, '#', (size_t)(e - a));
    if (hash)
        e = hash;
    return tb->header_line ? read_row(tb, a, e) : read_header(tb, a, e);
}

/* Every line of the file's text buf (len bytes); then a header and at least 2 rows must have been read. */
static int read_lines(table *tb, const char *buf, size_t len)
{
    const char *p = buf, *end = buf + len;
    int rc = HRT_OK;
    while (p < end && rc == HRT_OK) {
        const char *a = p, *e = memchr(p, '\n', (size_t)(end - p));
        if (!e)
            e = end;
        p = e < end ? e + 1 : end;
        tb->line++;
        rc = read_line(tb, a, e);
    }
    if (rc != HRT_OK)
        return rc;
    trail_import_track *t = tb->t;
    if (!tb->header_line)
        return trail_import_problem(t, HRT_E_FORMAT, tb->line > 0 ? tb->line : 1, 1, tb->err, "%s",
                                    len == 0 ? "empty file: no header line"
                                             : "no header line (only comments or blank lines)");
    if (t->n < TRAIL_MIN_SAMPLES)
        return trail_import_problem(t, HRT_E_FORMAT, tb->line + 1, 1, tb->err,
                                    "%zu data row%s after the header (line %ld)%s: at least %d needed", t->n,
                                    t->n == 1 ? "" : "s", tb->header_line,
                                    t->report.n_rows_dropped ? " once the bad rows are dropped" : "",
                                    TRAIL_MIN_SAMPLES);
    return HRT_OK;
}

/* The note on the rows dropped: how many, and the first lines (all of them
 * are listed by hrt_import_dropped_row()). */
static void note_dropped_rows(trail_import_track *t)
{
    size_t n = t->report.n_rows_dropped;
    if (n == 0)
        return;
    char lines[200] = "";
    size_t len = 0, shown = 0;
    for (; shown < t->n_dropped && len + 24 < sizeof lines; shown++)
        len += (size_t)snprintf(lines + len, sizeof lines - len, "%s%ld", shown ? ", " : "", t->dropped[shown].line);
    trail_import_note(t, "%zu bad row%s dropped (line%s %s%s)", n, n == 1 ? "" : "s", n == 1 ? "" : "s", lines,
                      shown < n ? ", ..." : "");
}

/* ---- the track's identity and defaults -------------------------------------- */

/* Initial mass (map constant, column, pattern, first current mass) and Z
 * (given, map constant, column, pattern). */
static void initial_mass_and_z(const hrt_import *imp, trail_import_track *t, const table *tb, const double pv[3],
                               double *m, double *z)
{
    const trail_map_entry *mm = &imp->map[TRAIL_MAP_INITIAL_MASS], *mz = &imp->map[TRAIL_MAP_Z];
    *m = NAN;
    *z = t->z_given;
    if (mm->set && !mm->column)
        *m = mm->constant;
    else if (t->has_column[TRAIL_MAP_INITIAL_MASS])
        *m = tb->first_initial_mass;
    else if (!isnan(pv[0]))
        *m = pv[0];
    else if (t->has_column[TRAIL_MAP_MASS]) {
        *m = t->mass[0];
        trail_import_note(t, "initial mass taken from the first row of the mass column");
    }
    if (!isnan(*z))
        return;
    if (mz->set && !mz->column)
        *z = trail_map_key_at((size_t)mz->key)->is_log ? imp->z_ref * pow(10.0, mz->constant) : mz->constant;
    else if (t->has_column[TRAIL_MAP_Z])
        *z = tb->first_z;
    else if (!isnan(pv[1]))
        *z = pv[1];
    else if (!isnan(pv[2]))
        *z = imp->z_ref * pow(10.0, pv[2]);
}

/* Current mass = initial mass, and zero core masses, where the table has no column. */
static int fill_masses(trail_import_track *t, double m, hrt_error *err)
{
    if (!t->has_column[TRAIL_MAP_MASS]) {
        for (size_t i = 0; i < t->n; i++)
            t->mass[i] = m;
        trail_import_note(t, "no mass column: current mass = initial mass");
    }
    for (size_t i = 0; i < t->n; i++) {
        if (!t->has_column[TRAIL_MAP_HE_CORE])
            t->he_core[i] = 0.0;
        if (!t->has_column[TRAIL_MAP_CO_CORE])
            t->co_core[i] = 0.0;
        if (t->mass[i] < 0.0 || t->he_core[i] < 0.0 || t->co_core[i] < 0.0)
            return trail_import_problem(t, HRT_E_FORMAT, t->pos[i].line, 1, err, "negative mass or core mass");
    }
    if (!t->has_column[TRAIL_MAP_HE_CORE])
        trail_import_note(t, "no he_core_mass_msun column: written as 0");
    if (!t->has_column[TRAIL_MAP_CO_CORE])
        trail_import_note(t, "no co_core_mass_msun column: written as 0");
    return HRT_OK;
}

static int track_identity(const hrt_import *imp, trail_import_track *t, const table *tb, hrt_error *err)
{
    double pv[3] = {NAN, NAN, NAN}; /* {mass}, {z}, {feh} of the file name */
    if (imp->pattern) {
        const char *base = strrchr(t->path, '/');
        base = base ? base + 1 : t->path;
        if (!trail_pattern_match(imp->pattern, base, pv))
            return trail_import_problem(t, HRT_E_FORMAT, 0, 0, err, "file name does not match the pattern '%s'",
                                        imp->pattern);
    }
    double m, z;
    initial_mass_and_z(imp, t, tb, pv, &m, &z);
    t->report.initial_mass_msun = m;
    t->report.z = z;
    if (!(isfinite(m) && m > 0.0))
        return trail_import_problem(t, HRT_E_FORMAT, 0, 0, err, isnan(m) ? "initial mass unknown: map "
                                    "initial_mass_msun=<number or column>, use {mass} in a pattern, or give a mass "
                                    "column" : "initial mass %g is not positive", m);
    if (!(isfinite(z) && z > 0.0 && z < 1.0))
        return trail_import_problem(t, HRT_E_FORMAT, 0, 0, err, isnan(z) ? "metallicity unknown: map z=<number or "
                                    "column>, use {z} or {feh} in a pattern, or give it with the file"
                                    : "Z = %g is not in (0, 1)", z);
    return fill_masses(t, m, err);
}

int trail_import_read(const hrt_import *imp, trail_import_track *t, hrt_error *err)
{
    char *buf = NULL;
    size_t len = 0;
    hrt_error read_err = {0, ""};
    int rc = trail_read_file(t->path, &buf, &len, &read_err);
    if (rc != HRT_OK) {
        /* the report gives the path itself: drop "<path>: " from the message */
        size_t pl = strlen(t->path);
        int has_path = strncmp(read_err.message, t->path, pl) == 0 && strlen(read_err.message) > pl + 1;
        return trail_import_problem(t, rc, 0, 0, err, "%s", has_path ? read_err.message + pl + 2 : read_err.message);
    }
    table tb = {.imp = imp, .t = t, .err = err};
    tb.header = malloc(MAX_FIELDS * sizeof(field));
    tb.fields = malloc((MAX_FIELDS + 1) * sizeof(field));
    if (!tb.header || !tb.fields) {
        free(buf);
        free(tb.header);
        free(tb.fields);
        return trail_import_problem(t, HRT_E_NOMEM, 0, 0, err, "out of memory");
    }
    tb.first_initial_mass = tb.first_z = NAN;
    for (int q = 0; q < TRAIL_MAP_N; q++)
        tb.column[q] = -1;
    t->n = 0;
    t->n_extra_cols = imp->n_extra;
    rc = read_lines(&tb, buf, len);
    note_dropped_rows(t);
    int failed = rc != HRT_OK || t->report.status != HRT_OK;
    for (int q = 0; q < TRAIL_MAP_N && !failed; q++)
        t->has_column[q] = tb.column[q] >= 0;
    free(buf);
    free(tb.header);
    free(tb.fields);
    if (failed)
        return t->report.status;
    t->report.n_rows = t->n;
    return track_identity(imp, t, &tb, err);
}
