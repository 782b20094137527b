/* Importing text tracks: column maps, table reading with file:line:column
 * diagnostics, keypoints and routes (keypoints.c), EEP resampling by the
 * grid builder (builder.c), and the per-track report.  Conventions and
 * criteria: tracks/FORMAT.md, "Importing text tracks". */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "util/schema.h"
#include "util/util.h"

/* ---- the column map ----------------------------------------------------- */

enum {
    M_AGE = 0, M_L, M_TEFF, M_R, M_MASS, M_XC, M_YC, M_MHE, M_MCO, M_PHASE, M_FLAG, M_MINIT, M_Z, M_N
};
/* Map keys (tracks/FORMAT.md's vocabulary): quantity, whether the column
 * holds log10 of it, whether a number is accepted as a constant, whether the
 * value is text, whether a column of this name is read without a map entry. */
typedef struct mkey {
    char key[24];
    int q, is_log, constant_ok, text, by_default;
} mkey;
static const mkey map_keys[] = {
    {"age_yr", M_AGE, 0, 0, 0, 1},
    {"log_age_yr", M_AGE, 1, 0, 0, 1},
    {"log_l_lsun", M_L, 1, 0, 0, 1},
    {"l_lsun", M_L, 0, 0, 0, 1},
    {"log_teff_k", M_TEFF, 1, 0, 0, 1},
    {"teff_k", M_TEFF, 0, 0, 0, 1},
    {"log_r_rsun", M_R, 1, 0, 0, 1},
    {"r_rsun", M_R, 0, 0, 0, 1},
    {"mass_msun", M_MASS, 0, 0, 0, 1},
    {"central_x", M_XC, 0, 0, 0, 1},
    {"central_y", M_YC, 0, 0, 0, 1},
    {"he_core_mass_msun", M_MHE, 0, 0, 0, 1},
    {"co_core_mass_msun", M_MCO, 0, 0, 0, 1},
    {"phase", M_PHASE, 0, 0, 1, 1},
    {"keypoints", M_FLAG, 0, 0, 1, 1},
    {"initial_mass_msun", M_MINIT, 0, 1, 0, 1},
    {"z", M_Z, 0, 1, 0, 1},
    {"feh", M_Z, 1, 1, 0, 0},
};
#define N_MAP_KEYS (sizeof map_keys / sizeof map_keys[0])

/* Key shown in messages for each quantity: its first map key. */
static const char *q_name(int q)
{
    for (size_t k = 0; k < N_MAP_KEYS; k++)
        if (map_keys[k].q == q)
            return map_keys[k].key;
    return "?";
}

typedef struct mentry {
    int set;
    int key;         /* index into map_keys */
    char *column;    /* NULL for a constant */
    double factor;   /* quantity = factor * v (or factor * 10^v for log columns) */
    double constant; /* for initial_mass_msun, z */
} mentry;

/* ---- one track ---------------------------------------------------------- */

typedef struct trk {
    char *path;
    double z_arg;
    hrt_import_track_report rep;
    /* data, freed once the track is in the builder */
    size_t n;
    double *age, *logl, *logt, *logr, *mass, *xc, *yc, *mhe, *mco;
    int *phase;
    char **flag;
    long *line;
    int has[M_N];
    hrt_kp_result kp;
    unsigned cand;
    int definite;
} trk;

struct hrt_import {
    mentry map[M_N];
    char *pattern;
    double z_ref;
    int lenient, ran;
    size_t n_routes;
    route_layout routes[TRAIL_MAX_ROUTES]; /* names, keypoint names, kp_eep as segment ends */
    int *seg[TRAIL_MAX_ROUTES];
    const char **kp_ptr[TRAIL_MAX_ROUTES];
    hrt_route_spec spec[TRAIL_MAX_ROUTES];
    size_t n_tracks, cap;
    trk *t;
    void (*progress)(void *, size_t, size_t, const char *);
    void *progress_user;
    size_t n_z;
    double zs[TRAIL_MAX_Z];
    double bound[TRAIL_MAX_Z][TRAIL_MAX_ROUTES];
};

/* The default grid's routes (mirroring tracks/model.h). */
static const char def_route_names[3][16] = {"low_mass", "giant", "supergiant"};
static const char def_kp[3][9][16] = {
    {"zams", "tams", "envelope_loss", "wd_onset"},
    {"zams", "tams", "rgb_base", "he_ignition", "cheb_start", "cheb_end", "first_pulse", "agb_end", "wd_onset"},
    {"zams", "tams", "cheb_start", "cheb_end", "core_collapse"},
};
static const int def_nkp[3] = {4, 9, 5};
static const int def_seg[3][8] = {
    {150, 150, 40}, {150, 60, 120, 40, 100, 60, 80, 40}, {150, 60, 150, 40}};

static void free_routes(hrt_import *imp)
{
    for (size_t r = 0; r < imp->n_routes; r++) {
        route_layout *L = &imp->routes[r];
        free(L->name);
        if (L->kp_names)
            for (size_t k = 0; k < L->n_kp; k++)
                free(L->kp_names[k]);
        free(L->kp_names);
        free(imp->seg[r]);
        free(imp->kp_ptr[r]);
        memset(L, 0, sizeof *L);
        imp->seg[r] = NULL;
        imp->kp_ptr[r] = NULL;
    }
    imp->n_routes = 0;
}

/* Copy layouts into imp (names owned by imp). */
static int store_routes(hrt_import *imp, size_t n, const char *const *names, const size_t *nkp,
                        const char *const *const *kpn, const int *const *seg, hrt_error *err)
{
    free_routes(imp);
    for (size_t r = 0; r < n; r++) {
        route_layout *L = &imp->routes[r];
        imp->n_routes = r + 1;
        L->name = trail_strdup(names[r]);
        L->n_kp = nkp[r];
        L->kp_names = calloc(nkp[r], sizeof(char *));
        imp->seg[r] = malloc(nkp[r] * sizeof(int));
        imp->kp_ptr[r] = calloc(nkp[r], sizeof(char *));
        if (!L->name || !L->kp_names || !imp->seg[r] || !imp->kp_ptr[r])
            return trail_set_error(err, HRT_E_NOMEM, "out of memory");
        for (size_t k = 0; k < nkp[r]; k++) {
            if (!(L->kp_names[k] = trail_strdup(kpn[r][k])))
                return trail_set_error(err, HRT_E_NOMEM, "out of memory");
            imp->kp_ptr[r][k] = L->kp_names[k];
            if (k + 1 < nkp[r])
                imp->seg[r][k] = seg[r][k];
        }
        imp->spec[r] = (hrt_route_spec){L->name, nkp[r], imp->kp_ptr[r], imp->seg[r]};
    }
    return HRT_OK;
}

int hrt_import_new(hrt_import **out, hrt_error *err)
{
    if (!out)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_new: import is NULL");
    *out = NULL;
    hrt_import *imp = calloc(1, sizeof *imp);
    if (!imp)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    imp->z_ref = 0.014;
    const char *names[3], *kp[3][9];
    const char *const *kpn[3];
    const int *seg[3];
    size_t nkp[3];
    for (int r = 0; r < 3; r++) {
        names[r] = def_route_names[r];
        nkp[r] = (size_t)def_nkp[r];
        for (int k = 0; k < def_nkp[r]; k++)
            kp[r][k] = def_kp[r][k];
        kpn[r] = kp[r];
        seg[r] = def_seg[r];
    }
    int rc = store_routes(imp, 3, names, nkp, kpn, seg, err);
    if (rc != HRT_OK) {
        hrt_import_free(imp);
        return rc;
    }
    *out = imp;
    return HRT_OK;
}

static void free_data(trk *t)
{
    free(t->age);
    free(t->logl);
    free(t->logt);
    free(t->logr);
    free(t->mass);
    free(t->xc);
    free(t->yc);
    free(t->mhe);
    free(t->mco);
    free(t->phase);
    if (t->flag)
        for (size_t i = 0; i < t->n; i++)
            free(t->flag[i]);
    free(t->flag);
    free(t->line);
    t->age = t->logl = t->logt = t->logr = t->mass = t->xc = t->yc = t->mhe = t->mco = NULL;
    t->phase = NULL;
    t->flag = NULL;
    t->line = NULL;
    t->n = 0;
}

void hrt_import_free(hrt_import *imp)
{
    if (!imp)
        return;
    for (int q = 0; q < M_N; q++)
        free(imp->map[q].column);
    free(imp->pattern);
    free_routes(imp);
    for (size_t i = 0; i < imp->n_tracks; i++) {
        free_data(&imp->t[i]);
        free(imp->t[i].path);
    }
    free(imp->t);
    free(imp);
}

int hrt_import_set_routes(hrt_import *imp, size_t n, const hrt_route_spec *routes, hrt_error *err)
{
    if (!imp || !routes)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_set_routes: NULL argument");
    if (n < 1 || n > TRAIL_MAX_ROUTES || n > 32)
        return trail_set_error(err, HRT_E_INVALID, "hrt_import_set_routes: %zu routes (1..%d)", n, TRAIL_MAX_ROUTES);
    const char *names[TRAIL_MAX_ROUTES];
    const char *const *kpn[TRAIL_MAX_ROUTES];
    const int *seg[TRAIL_MAX_ROUTES];
    size_t nkp[TRAIL_MAX_ROUTES];
    for (size_t r = 0; r < n; r++) {
        const hrt_route_spec *s = &routes[r];
        if (!s->name || !s->keypoint_names || !s->segment_samples || s->n_keypoints < 2 ||
            s->n_keypoints > HRT_IMPORT_MAX_KP)
            return trail_set_error(err, HRT_E_INVALID, "route %zu: needs a name, 2..%d keypoints and segment counts",
                                 r, HRT_IMPORT_MAX_KP);
        for (size_t k = 0; k < s->n_keypoints; k++)
            if (!s->keypoint_names[k] || !*s->keypoint_names[k])
                return trail_set_error(err, HRT_E_INVALID, "route '%s': keypoint %zu has no name", s->name, k);
        for (size_t k = 0; k + 1 < s->n_keypoints; k++)
            if (s->segment_samples[k] < 1 || s->segment_samples[k] > 100000)
                return trail_set_error(err, HRT_E_INVALID, "route '%s': segment %zu has %d EEPs (1..100000)",
                                     s->name, k, s->segment_samples[k]);
        names[r] = s->name;
        kpn[r] = s->keypoint_names;
        seg[r] = s->segment_samples;
        nkp[r] = s->n_keypoints;
    }
    return store_routes(imp, n, names, nkp, kpn, seg, err);
}

int hrt_import_set_z_ref(hrt_import *imp, double z_ref, hrt_error *err)
{
    if (!imp)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_set_z_ref: import is NULL");
    if (!(isfinite(z_ref) && z_ref > 0.0 && z_ref < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "Z_ref = %g is not in (0, 1)", z_ref);
    imp->z_ref = z_ref;
    return HRT_OK;
}

int hrt_import_set_lenient(hrt_import *imp, int on)
{
    if (!imp)
        return HRT_E_NULL;
    imp->lenient = on != 0;
    return HRT_OK;
}

int hrt_import_set_progress(hrt_import *imp, void (*progress)(void *, size_t, size_t, const char *), void *user)
{
    if (!imp)
        return HRT_E_NULL;
    imp->progress = progress;
    imp->progress_user = user;
    return HRT_OK;
}

/* Parse a whole string as a number (Fortran D exponents accepted). */
static int parse_double(const char *s, size_t len, double *v)
{
    char buf[64];
    if (len == 0 || len >= sizeof buf)
        return -1;
    for (size_t i = 0; i < len; i++)
        buf[i] = (s[i] == 'D' || s[i] == 'd') ? 'e' : s[i];
    buf[len] = '\0';
    char *end;
    errno = 0;
    *v = strtod(buf, &end);
    if (end != buf + len)
        return -1;
    return 0;
}

static int unit_factor(const char *u, double *f)
{
    static const struct {
        char name[8];
        double f;
    } units[] = {{"yr", 1.0}, {"kyr", 1e3}, {"Myr", 1e6}, {"Gyr", 1e9}};
    for (size_t i = 0; i < sizeof units / sizeof units[0]; i++)
        if (strcmp(u, units[i].name) == 0) {
            *f = units[i].f;
            return 0;
        }
    return parse_double(u, strlen(u), f) == 0 && isfinite(*f) && *f > 0.0 ? 0 : -1;
}

/* One "key=value" entry of length len; where names the place for messages. */
static int map_entry(hrt_import *imp, const char *s, size_t len, const char *where, hrt_error *err)
{
    char buf[512];
    if (len >= sizeof buf)
        return trail_set_error(err, HRT_E_INVALID, "%smap entry too long", where);
    memcpy(buf, s, len);
    buf[len] = '\0';
    char *eq = strchr(buf, '=');
    if (!eq)
        return trail_set_error(err, HRT_E_INVALID, "%smap entry '%s' has no '=' (key=column)", where, buf);
    *eq = '\0';
    const char *key = buf, *val = eq + 1;
    if (!*val)
        return trail_set_error(err, HRT_E_INVALID, "%smap entry '%s=' has no value", where, key);
    if (strcmp(key, "pattern") == 0) {
        char *p = trail_strdup(val);
        if (!p)
            return trail_set_error(err, HRT_E_NOMEM, "out of memory");
        free(imp->pattern);
        imp->pattern = p;
        return HRT_OK;
    }
    if (strcmp(key, "z_ref") == 0) {
        double v;
        if (parse_double(val, strlen(val), &v) != 0)
            return trail_set_error(err, HRT_E_INVALID, "%sz_ref=%s is not a number", where, val);
        return hrt_import_set_z_ref(imp, v, err);
    }
    size_t k = 0;
    while (k < N_MAP_KEYS && strcmp(key, map_keys[k].key) != 0)
        k++;
    if (k == N_MAP_KEYS)
        return trail_set_error(err, HRT_E_INVALID,
                             "%sunknown map key '%s' (age_yr, log_age_yr, log_l_lsun, l_lsun, log_teff_k, teff_k, "
                             "log_r_rsun, r_rsun, mass_msun, central_x, central_y, he_core_mass_msun, "
                             "co_core_mass_msun, phase, keypoints, initial_mass_msun, z, feh, pattern, z_ref)",
                             where, key);
    const mkey *mk = &map_keys[k];
    mentry e = {1, (int)k, NULL, 1.0, NAN};
    double v;
    if (mk->constant_ok && parse_double(val, strlen(val), &v) == 0) {
        if (!isfinite(v))
            return trail_set_error(err, HRT_E_INVALID, "%s%s=%s is not finite", where, key, val);
        e.constant = v;
    } else {
        char col[512];
        snprintf(col, sizeof col, "%s", val);
        char *star = mk->text ? NULL : strrchr(col, '*');
        if (star) {
            *star = '\0';
            if (unit_factor(star + 1, &e.factor) != 0)
                return trail_set_error(err, HRT_E_INVALID, "%s%s=%s: unit '%s' is not yr, kyr, Myr, Gyr or a positive "
                                     "number", where, key, val, star + 1);
            if (mk->q != M_AGE && strstr(star + 1, "yr"))
                return trail_set_error(err, HRT_E_INVALID, "%s%s=%s: a time unit on a quantity that is not an age",
                                     where, key, val);
        }
        if (!*col)
            return trail_set_error(err, HRT_E_INVALID, "%s%s=%s names no column", where, key, val);
        if (!(e.column = trail_strdup(col)))
            return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    }
    free(imp->map[mk->q].column);
    imp->map[mk->q] = e;
    return HRT_OK;
}

static int map_text(hrt_import *imp, const char *s, const char *file, hrt_error *err)
{
    long line = 1;
    while (*s) {
        if (*s == '#') {
            while (*s && *s != '\n')
                s++;
            continue;
        }
        if (*s == '\n')
            line++;
        if (*s == ',' || *s == ';' || *s == ' ' || *s == '\t' || *s == '\n' || *s == '\r') {
            s++;
            continue;
        }
        const char *a = s;
        while (*s && !strchr(",; \t\r\n#", *s))
            s++;
        char where[300] = "";
        if (file)
            snprintf(where, sizeof where, "%.250s:%ld: ", file, line);
        int rc = map_entry(imp, a, (size_t)(s - a), where, err);
        if (rc != HRT_OK)
            return rc;
    }
    return HRT_OK;
}

int hrt_import_map(hrt_import *imp, const char *entries, hrt_error *err)
{
    if (!imp || !entries)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_map: NULL argument");
    return map_text(imp, entries, NULL, err);
}

/* Whole file into memory (NUL-terminated); *len its size. */
static int slurp(const char *path, char **out, size_t *len, hrt_error *err)
{
    *out = NULL;
    FILE *f = fopen(path, "rb");
    if (!f)
        return trail_set_error(err, HRT_E_IO, "%s: cannot open: %s", path, strerror(errno));
    size_t cap = 65536, n = 0;
    char *b = malloc(cap + 1);
    int rc = HRT_OK;
    while (b) {
        size_t got = fread(b + n, 1, cap - n, f);
        n += got;
        if (n < cap)
            break;
        if (cap > ((size_t)1 << 31)) {
            rc = trail_set_error(err, HRT_E_IO, "%s: larger than 2 GB", path);
            break;
        }
        char *nb = realloc(b, 2 * cap + 1);
        if (!nb) {
            free(b);
            b = NULL;
            break;
        }
        b = nb;
        cap *= 2;
    }
    if (rc == HRT_OK && !b)
        rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory reading the file", path);
    if (rc == HRT_OK && ferror(f))
        rc = trail_set_error(err, HRT_E_IO, "%s: read error: %s", path, strerror(errno));
    fclose(f);
    if (rc != HRT_OK) {
        free(b);
        return rc;
    }
    b[n] = '\0';
    *out = b;
    *len = n;
    return HRT_OK;
}

int hrt_import_map_file(hrt_import *imp, const char *path, hrt_error *err)
{
    if (!imp || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_map_file: NULL argument");
    char *b;
    size_t n;
    int rc = slurp(path, &b, &n, err);
    if (rc != HRT_OK)
        return rc;
    if (strlen(b) != n)
        rc = trail_set_error(err, HRT_E_INVALID, "%s: a mapping file is text; this one holds binary data", path);
    else
        rc = map_text(imp, b, path, err);
    free(b);
    return rc;
}

int hrt_import_add_file(hrt_import *imp, const char *path, double z, hrt_error *err)
{
    if (!imp || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_add_file: NULL argument");
    if (!isnan(z) && !(isfinite(z) && z > 0.0 && z < 1.0))
        return trail_set_error(err, HRT_E_DOMAIN, "%s: Z = %g is not in (0, 1)", path, z);
    if (imp->n_tracks == imp->cap) {
        size_t cap = imp->cap ? 2 * imp->cap : 64;
        trk *t = realloc(imp->t, cap * sizeof *t);
        if (!t)
            return trail_set_error(err, HRT_E_NOMEM, "out of memory");
        imp->t = t;
        imp->cap = cap;
    }
    trk *t = &imp->t[imp->n_tracks];
    memset(t, 0, sizeof *t);
    if (!(t->path = trail_strdup(path)))
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    t->z_arg = z;
    t->rep.file = t->path;
    t->rep.initial_mass_msun = NAN;
    t->rep.z = NAN;
    t->rep.route = -1;
    t->rep.remnant_mass_msun = NAN;
    imp->n_tracks++;
    return HRT_OK;
}

/* ---- file-name patterns --------------------------------------------------- */

static int num_char(char c) { return (c >= '0' && c <= '9') || c == '.' || c == '-' || c == '+' || c == 'e' || c == 'E'; }

/* Match name against pattern; placeholders {mass}, {z}, {feh} capture
 * numbers, '*' any text.  vals[0..2] receive them (NaN if absent). */
static int pmatch(const char *p, const char *s, double vals[3], int depth)
{
    if (depth > 64)
        return 0;
    if (!*p)
        return !*s;
    if (*p == '*') {
        for (const char *t = s;; t++) {
            if (pmatch(p + 1, t, vals, depth + 1))
                return 1;
            if (!*t)
                return 0;
        }
    }
    if (*p == '{') {
        static const char ph[3][8] = {"{mass}", "{z}", "{feh}"};
        for (int k = 0; k < 3; k++) {
            size_t pl = strlen(ph[k]);
            if (strncmp(p, ph[k], pl) != 0)
                continue;
            size_t m = 0;
            while (num_char(s[m]))
                m++;
            for (size_t len = m; len > 0; len--) {
                double v;
                if (parse_double(s, len, &v) != 0 || !isfinite(v))
                    continue;
                double save = vals[k];
                vals[k] = v;
                if (pmatch(p + pl, s + len, vals, depth + 1))
                    return 1;
                vals[k] = save;
            }
            return 0;
        }
    }
    return *p == *s && pmatch(p + 1, s + 1, vals, depth + 1);
}

/* ---- reading one table -------------------------------------------------- */

typedef struct field {
    const char *s;
    size_t len;
    long col; /* 1-based character column */
} field;

typedef struct rdr {
    const hrt_import *imp;
    trk *t;
    hrt_error *err;
    int failed;
} rdr;

/* Record a problem of track t at line:col; returns code. */
static int tproblem(trk *t, int code, long line, long col, hrt_error *err, const char *fmt, ...)
    __attribute__((format(printf, 6, 7)));
static int tproblem(trk *t, int code, long line, long col, hrt_error *err, const char *fmt, ...)
{
    char msg[256];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    t->rep.status = code;
    t->rep.line = line;
    t->rep.column = col;
    if (line > 0)
        snprintf(t->rep.message, sizeof t->rep.message, "%.120s:%ld:%ld: %.170s", t->path, line, col, msg);
    else
        snprintf(t->rep.message, sizeof t->rep.message, "%.120s: %.190s", t->path, msg);
    if (err && err->code == HRT_OK)
        trail_set_error(err, code, "%s", t->rep.message);
    return code;
}

static void note(trk *t, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void note(trk *t, const char *fmt, ...)
{
    size_t n = strlen(t->rep.notes);
    if (n + 4 >= sizeof t->rep.notes)
        return;
    if (n)
        t->rep.notes[n++] = ';', t->rep.notes[n++] = ' ', t->rep.notes[n] = '\0';
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(t->rep.notes + n, sizeof t->rep.notes - n, fmt, ap);
    va_end(ap);
}

/* Split one line into fields (comma-separated or blank-separated). */
static size_t split(const char *a, const char *e, int comma, field *f, size_t cap, const char *line0)
{
    size_t n = 0;
    const char *s = a;
    if (comma) {
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

/* Binary data or invalid UTF-8 in [a, e)?  Returns the offset of the bad byte or -1. */
static long bad_byte(const unsigned char *a, const unsigned char *e)
{
    for (const unsigned char *p = a; p < e; p++) {
        unsigned c = *p;
        if (c == '\t' || c == '\r')
            continue;
        if (c < 0x20 || c == 0x7f)
            return (long)(p - a);
        if (c >= 0x80) {
            int k = c >= 0xf0 && c <= 0xf4 ? 3 : c >= 0xe0 ? 2 : c >= 0xc2 && c < 0xe0 ? 1 : -1;
            if (k < 0 || e - p <= k)
                return (long)(p - a);
            for (int j = 1; j <= k; j++)
                if ((p[j] & 0xc0) != 0x80)
                    return (long)(p - a);
            p += k;
        }
    }
    return -1;
}

static long find_col(field *h, size_t nh, const char *name)
{
    for (size_t i = 0; i < nh; i++)
        if (h[i].len == strlen(name) && strncmp(h[i].s, name, h[i].len) == 0)
            return (long)i;
    for (size_t i = 0; i < nh; i++)
        if (h[i].len == strlen(name) && strncasecmp(h[i].s, name, h[i].len) == 0)
            return (long)i;
    return -1;
}

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

static int alloc_cols(trk *t, size_t cap)
{
    double **d[] = {&t->age, &t->logl, &t->logt, &t->logr, &t->mass, &t->xc, &t->yc, &t->mhe, &t->mco};
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
    long *ln = realloc(t->line, 2 * cap * sizeof(long));
    if (!ln)
        return -1;
    t->line = ln;
    char **fl = realloc(t->flag, cap * sizeof(char *));
    if (!fl)
        return -1;
    t->flag = fl;
    return 0;
}

/* Read and convert one file.  Returns HRT_OK or the code recorded in t->rep. */
static int read_track(const hrt_import *imp, trk *t, hrt_error *err)
{
    char *buf = NULL;
    size_t len = 0;
    hrt_error e2 = {0, ""};
    int rc = slurp(t->path, &buf, &len, &e2);
    if (rc != HRT_OK)
        return tproblem(t, rc, 0, 0, err, "%s",
                        strncmp(e2.message, t->path, strlen(t->path)) == 0 && strlen(e2.message) > strlen(t->path) + 1
                            ? e2.message + strlen(t->path) + 2
                            : e2.message);
    enum { MAXF = 512 };
    field *hdr = malloc(MAXF * sizeof(field)), *fld = malloc(MAXF * sizeof(field));
    if (!hdr || !fld) {
        free(buf);
        free(hdr);
        free(fld);
        return tproblem(t, HRT_E_NOMEM, 0, 0, err, "out of memory");
    }
    long colidx[M_N];
    const mkey *ck[M_N];
    double fac[M_N];
    int comma = 0;
    size_t nh = 0, cap = 0;
    long line = 0, hdr_line = 0;
    const char *p = buf, *end = buf + len;
    int failed = 0;
    double first_minit = NAN, first_z = NAN;
    for (int q = 0; q < M_N; q++)
        colidx[q] = -1;
    t->n = 0;
    while (p < end && !failed) {
        const char *a = p, *e = memchr(p, '\n', (size_t)(end - p));
        if (!e)
            e = end;
        p = e < end ? e + 1 : end;
        line++;
        long bad = bad_byte((const unsigned char *)a, (const unsigned char *)e);
        if (bad >= 0) {
            tproblem(t, HRT_E_FORMAT, line, bad + 1, err, "binary data (byte 0x%02x): not a text table",
                     (unsigned)(unsigned char)a[bad]);
            failed = 1;
            break;
        }
        if (e > a && e[-1] == '\r')
            e--;
        const char *s = a;
        while (s < e && (*s == ' ' || *s == '\t'))
            s++;
        if (s == e || *s == '#')
            continue;
        const char *hash = memchr(a, '#', (size_t)(e - a));
        if (hash)
            e = hash;
        if (!hdr_line) {
            hdr_line = line;
            comma = memchr(a, ',', (size_t)(e - a)) != NULL;
            nh = split(a, e, comma, hdr, MAXF, a);
            if (nh > MAXF) {
                tproblem(t, HRT_E_FORMAT, line, 1, err, "header has %zu columns, at most %d", nh, MAXF);
                failed = 1;
                break;
            }
            for (size_t i = 0; i < nh && !failed; i++)
                if (hdr[i].len == 0) {
                    tproblem(t, HRT_E_FORMAT, line, hdr[i].col, err, "header column %zu has no name", i + 1);
                    failed = 1;
                }
            /* resolve the columns of every quantity */
            for (int q = 0; q < M_N && !failed; q++) {
                const mentry *me = &imp->map[q];
                ck[q] = NULL;
                fac[q] = 1.0;
                if (me->set && !me->column)
                    continue; /* constant */
                if (me->set) {
                    char nm[512];
                    snprintf(nm, sizeof nm, "%s", me->column);
                    colidx[q] = find_col(hdr, nh, nm);
                    if (colidx[q] < 0) {
                        char list[160] = "";
                        for (size_t i = 0; i < nh && strlen(list) < 120; i++)
                            snprintf(list + strlen(list), sizeof list - strlen(list), "%s%.*s", i ? " " : "",
                                     (int)(hdr[i].len > 24 ? 24 : hdr[i].len), hdr[i].s);
                        tproblem(t, HRT_E_FORMAT, line, 1, err,
                                 "the map names column '%s' (for %s), which is not in the header (%s%s)",
                                 me->column, map_keys[me->key].key, list, nh > 0 && strlen(list) >= 120 ? " ..." : "");
                        failed = 1;
                        break;
                    }
                    ck[q] = &map_keys[me->key];
                    fac[q] = me->factor;
                    continue;
                }
                for (size_t d = 0; d < N_MAP_KEYS; d++)
                    if (map_keys[d].q == q && map_keys[d].by_default &&
                        (colidx[q] = find_col(hdr, nh, map_keys[d].key)) >= 0) {
                        ck[q] = &map_keys[d];
                        break;
                    }
            }
            if (failed)
                break;
            static const int required[3] = {M_AGE, M_L, M_TEFF};
            static const char req_text[3][64] = {"age_yr (or log_age_yr)", "log_l_lsun (or l_lsun)",
                                                 "log_teff_k (or teff_k)"};
            for (int r = 0; r < 3 && !failed; r++)
                if (colidx[required[r]] < 0) {
                    tproblem(t, HRT_E_FORMAT, line, 1, err,
                             "required column %s is missing: name it so or map it, e.g. %s=<column>", req_text[r],
                             q_name(required[r]));
                    failed = 1;
                }
            continue;
        }
        /* a data row */
        size_t nf = split(a, e, comma, fld, MAXF, a);
        if (nf != nh) {
            long col = nf < nh ? (long)(e - a) + 1 : fld[nh].col;
            tproblem(t, HRT_E_FORMAT, line, col, err, "%zu fields, the header (line %ld) has %zu%s", nf, hdr_line, nh,
                     nf < nh ? ": truncated line?" : "");
            failed = 1;
            break;
        }
        if (t->n == cap) {
            cap = cap ? 2 * cap : 1024;
            if (alloc_cols(t, cap) != 0) {
                tproblem(t, HRT_E_NOMEM, line, 1, err, "out of memory");
                failed = 1;
                break;
            }
        }
        size_t i = t->n;
        double v[M_N];
        int drop = 0;
        for (int q = 0; q < M_N && !failed && !drop; q++) {
            v[q] = NAN;
            if (colidx[q] < 0)
                continue;
            const field *f = &fld[colidx[q]];
            if (q == M_PHASE) {
                int ph = HRT_PHASE_UNKNOWN;
                if (phase_of_text(f->s, f->len, &ph) != 0) {
                    tproblem(t, HRT_E_FORMAT, line, f->col, err,
                             "'%.*s' in column '%.*s' is not an hrtrail phase key (ms, subgiant, rgb, cheb, ...) "
                             "or code (11, 20, 21, 30, ...)",
                             (int)(f->len > 32 ? 32 : f->len), f->s, (int)hdr[colidx[q]].len, hdr[colidx[q]].s);
                    failed = 1;
                }
                t->phase[i] = ph;
                continue;
            }
            if (q == M_FLAG)
                continue;
            double x;
            if (parse_double(f->s, f->len, &x) != 0) {
                tproblem(t, HRT_E_FORMAT, line, f->col, err, "'%.*s' in column '%.*s' (%s) is not a number",
                         (int)(f->len > 32 ? 32 : f->len), f->s, (int)hdr[colidx[q]].len, hdr[colidx[q]].s,
                         ck[q]->key);
                failed = 1;
                break;
            }
            if (!isfinite(x)) {
                if (imp->lenient) {
                    drop = 1;
                    break;
                }
                tproblem(t, HRT_E_FORMAT, line, f->col, err, "%.*s in column '%.*s' (%s) is not finite",
                         (int)(f->len > 32 ? 32 : f->len), f->s, (int)hdr[colidx[q]].len, hdr[colidx[q]].s,
                         ck[q]->key);
                failed = 1;
                break;
            }
            if (ck[q]->is_log)
                x = q == M_Z ? imp->z_ref * pow(10.0, x) : fac[q] * pow(10.0, x);
            else {
                if ((q == M_L || q == M_TEFF || q == M_R || q == M_AGE) && !(x > 0.0)) {
                    tproblem(t, HRT_E_FORMAT, line, f->col, err, "%.*s in column '%.*s' (%s) is not positive",
                             (int)(f->len > 32 ? 32 : f->len), f->s, (int)hdr[colidx[q]].len, hdr[colidx[q]].s,
                             ck[q]->key);
                    failed = 1;
                    break;
                }
                x *= fac[q];
            }
            if (!isfinite(x) || ((q == M_AGE || q == M_L || q == M_TEFF || q == M_R) && !(x > 0.0))) {
                tproblem(t, HRT_E_FORMAT, line, f->col, err, "%.*s in column '%.*s' (%s) overflows or underflows "
                         "after conversion", (int)(f->len > 32 ? 32 : f->len), f->s, (int)hdr[colidx[q]].len,
                         hdr[colidx[q]].s, ck[q]->key);
                failed = 1;
                break;
            }
            v[q] = x;
        }
        if (failed)
            break;
        if (drop) {
            if (t->rep.n_rows_dropped++ == 0)
                note(t, "rows with non-finite values dropped (first: line %ld)", line);
            continue;
        }
        if (t->n == 0) {
            first_minit = v[M_MINIT];
            first_z = v[M_Z];
        }
        long agecol = fld[colidx[M_AGE]].col;
        if (t->n > 0 && !(v[M_AGE] > t->age[i - 1])) {
            tproblem(t, HRT_E_FORMAT, line, agecol, err, v[M_AGE] == t->age[i - 1]
                     ? "age %.10g yr repeats the age on line %ld (duplicate row?)"
                     : "age %.10g yr is less than the age on line %ld: ages must increase", v[M_AGE], t->line[2 * (i - 1)]);
            failed = 1;
            break;
        }
        t->age[i] = v[M_AGE];
        t->logl[i] = log10(v[M_L]);
        t->logt[i] = log10(v[M_TEFF]);
        t->logr[i] = colidx[M_R] >= 0 ? log10(v[M_R]) : NAN;
        t->mass[i] = v[M_MASS];
        t->xc[i] = v[M_XC];
        t->yc[i] = v[M_YC];
        t->mhe[i] = v[M_MHE];
        t->mco[i] = v[M_MCO];
        t->flag[i] = NULL;
        t->line[2 * i] = line;
        t->line[2 * i + 1] = colidx[M_FLAG] >= 0 ? fld[colidx[M_FLAG]].col : 0;
        if (colidx[M_FLAG] >= 0) {
            const field *f = &fld[colidx[M_FLAG]];
            int none = f->len == 0 || (f->len == 1 && (*f->s == '-' || *f->s == '0')) ||
                       (f->len == 4 && strncasecmp(f->s, "none", 4) == 0);
            if (!none) {
                t->flag[i] = malloc(f->len + 1);
                if (!t->flag[i]) {
                    tproblem(t, HRT_E_NOMEM, line, 1, err, "out of memory");
                    failed = 1;
                    break;
                }
                memcpy(t->flag[i], f->s, f->len);
                t->flag[i][f->len] = '\0';
            }
        }
        if (colidx[M_PHASE] < 0)
            t->phase[i] = HRT_PHASE_UNKNOWN;
        t->n++;
    }
    if (!failed && !hdr_line)
        tproblem(t, HRT_E_FORMAT, line > 0 ? line : 1, 1, err, len == 0 ? "empty file: no header line"
                                                                        : "no header line (only comments or blank lines)");
    else if (!failed && t->n < 2)
        tproblem(t, HRT_E_FORMAT, line + 1, 1, err, "%zu data row%s after the header (line %ld): at least 2 needed",
                 t->n, t->n == 1 ? "" : "s", hdr_line);
    failed = failed || t->rep.status != HRT_OK;
    for (int q = 0; q < M_N && !failed; q++)
        t->has[q] = colidx[q] >= 0;
    free(buf);
    free(hdr);
    free(fld);
    if (failed)
        return t->rep.status;
    t->rep.n_rows = t->n;

    /* initial mass and Z */
    double pv[3] = {NAN, NAN, NAN};
    if (imp->pattern) {
        const char *base = strrchr(t->path, '/');
        base = base ? base + 1 : t->path;
        if (!pmatch(imp->pattern, base, pv, 0))
            return tproblem(t, HRT_E_FORMAT, 0, 0, err, "file name does not match the pattern '%s'", imp->pattern);
    }
    double m = NAN, z = t->z_arg;
    const mentry *mm = &imp->map[M_MINIT], *mz = &imp->map[M_Z];
    if (mm->set && !mm->column)
        m = mm->constant;
    else if (t->has[M_MINIT])
        m = first_minit;
    else if (!isnan(pv[0]))
        m = pv[0];
    else if (t->has[M_MASS]) {
        m = t->mass[0];
        note(t, "initial mass taken from the first row of the mass column");
    }
    if (isnan(z)) {
        if (mz->set && !mz->column)
            z = map_keys[mz->key].is_log ? imp->z_ref * pow(10.0, mz->constant) : mz->constant;
        else if (t->has[M_Z])
            z = first_z;
        else if (!isnan(pv[1]))
            z = pv[1];
        else if (!isnan(pv[2]))
            z = imp->z_ref * pow(10.0, pv[2]);
    }
    t->rep.initial_mass_msun = m;
    t->rep.z = z;
    if (!(isfinite(m) && m > 0.0))
        return tproblem(t, HRT_E_FORMAT, 0, 0, err, isnan(m) ? "initial mass unknown: map initial_mass_msun=<number or "
                        "column>, use {mass} in a pattern, or give a mass column" : "initial mass %g is not positive", m);
    if (!(isfinite(z) && z > 0.0 && z < 1.0))
        return tproblem(t, HRT_E_FORMAT, 0, 0, err, isnan(z) ? "metallicity unknown: map z=<number or column>, "
                        "use {z} or {feh} in a pattern, or give it with the file" : "Z = %g is not in (0, 1)", z);
    if (!t->has[M_MASS]) {
        for (size_t i = 0; i < t->n; i++)
            t->mass[i] = m;
        note(t, "no mass column: current mass = initial mass");
    }
    for (size_t i = 0; i < t->n; i++) {
        if (!t->has[M_MHE])
            t->mhe[i] = 0.0;
        if (!t->has[M_MCO])
            t->mco[i] = 0.0;
        if (t->mass[i] < 0.0 || t->mhe[i] < 0.0 || t->mco[i] < 0.0)
            return tproblem(t, HRT_E_FORMAT, t->line[2 * i], 1, err, "negative mass or core mass");
    }
    if (!t->has[M_MHE])
        note(t, "no he_core_mass_msun column: written as 0");
    if (!t->has[M_MCO])
        note(t, "no co_core_mass_msun column: written as 0");
    return HRT_OK;
}

/* ---- phases and remnants -------------------------------------------------- */

static int route_has(const hrt_route_spec *r, const char *name)
{
    for (size_t k = 0; k < r->n_keypoints; k++)
        if (strcmp(r->keypoint_names[k], name) == 0)
            return 1;
    return 0;
}

/* Phase of a massive star after the main sequence from its surface
 * (tracks/FORMAT.md: WR below 5 % envelope and hotter than log Teff 4.4,
 * else blue above log Teff 3.8, else red). */
static int sg_phase(const trk *t, size_t i)
{
    double env = t->mass[i] > 0.0 ? (t->mass[i] - t->mhe[i]) / t->mass[i] : 1.0;
    if (t->has[M_MHE] && env < 0.05 && t->logt[i] > 4.4)
        return HRT_PHASE_WR;
    return t->logt[i] > 3.8 ? HRT_PHASE_BSG : HRT_PHASE_RSG;
}

static void default_phases(trk *t, const hrt_route_spec *r, size_t nk)
{
    int massive = route_has(r, "core_collapse");
    int ph = HRT_PHASE_MS;
    size_t s_last = t->kp.sample[nk - 1];
    for (size_t i = 0; i < t->kp.sample[0]; i++)
        t->phase[i] = HRT_PHASE_PRE_MS;
    for (size_t k = 0; k + 1 < nk; k++) {
        const char *a = r->keypoint_names[k], *b = r->keypoint_names[k + 1];
        size_t s0 = t->kp.sample[k], s1 = t->kp.sample[k + 1];
        double l0 = t->logl[s0];
        for (size_t i = s0; i < s1; i++) {
            if (!strcmp(a, "zams"))
                ph = HRT_PHASE_MS;
            else if (!strcmp(a, "tams"))
                ph = !strcmp(b, "envelope_loss") && t->logl[i] >= l0 + 0.3 ? HRT_PHASE_RGB : HRT_PHASE_SUBGIANT;
            else if (!strcmp(a, "rgb_base"))
                ph = HRT_PHASE_RGB;
            else if (!strcmp(a, "he_ignition"))
                ph = HRT_PHASE_CHEB;
            else if (!strcmp(a, "cheb_start"))
                ph = massive ? sg_phase(t, i) : HRT_PHASE_CHEB;
            else if (!strcmp(a, "cheb_end"))
                ph = massive ? sg_phase(t, i) : HRT_PHASE_EAGB;
            else if (!strcmp(a, "first_pulse"))
                ph = HRT_PHASE_TPAGB;
            else if (!strcmp(a, "agb_end"))
                ph = HRT_PHASE_POST_AGB;
            else if (!strcmp(a, "envelope_loss"))
                ph = HRT_PHASE_POST_RGB;
            t->phase[i] = ph;
        }
    }
    int r_last = t->rep.remnant;
    t->phase[s_last] = r_last == HRT_REMNANT_NS   ? HRT_PHASE_NS
                       : r_last == HRT_REMNANT_BH ? HRT_PHASE_BH
                       : r_last != HRT_REMNANT_NONE ? HRT_PHASE_WD
                                                    : ph;
}


static void assign_remnant(trk *t, const hrt_route_spec *r, size_t nk)
{
    t->rep.remnant = HRT_REMNANT_NONE;
    t->rep.remnant_mass_msun = NAN;
    if (nk < r->n_keypoints)
        return;
    const char *last = r->keypoint_names[nk - 1];
    size_t s = t->kp.sample[nk - 1];
    double m = t->mass[s];
    if (!strcmp(last, "wd_onset")) {
        /* helium white dwarf without a CO core; ONe from 1.10 Msun (the
         * CO/ONe division of white-dwarf masses near 1.05-1.1 Msun [from memory]) */
        if (t->has[M_MCO] && t->mco[s] < 0.1 * m)
            t->rep.remnant = HRT_REMNANT_HE_WD;
        else if (!t->has[M_MCO] && !route_has(r, "he_ignition") && !route_has(r, "cheb_start"))
            t->rep.remnant = HRT_REMNANT_HE_WD;
        else
            t->rep.remnant = m >= 1.10 ? HRT_REMNANT_ONE_WD : HRT_REMNANT_CO_WD;
        t->rep.remnant_mass_msun = m;
    } else if (!strcmp(last, "core_collapse")) {
        hrt_collapse_remnant(t->has[M_MCO] ? fmin(t->mco[s], m) : 0.0, m, &t->rep.remnant, &t->rep.remnant_mass_msun);
        if (!t->has[M_MCO])
            note(t, "no co_core_mass_msun column: remnant from a zero CO core");
    }
}

/* ---- the run ---------------------------------------------------------------- */

static void columns_of(const trk *t, hrt_kp_columns *c)
{
    memset(c, 0, sizeof *c);
    c->n = t->n;
    c->age_yr = t->age;
    c->log_l_lsun = t->logl;
    c->log_teff_k = t->logt;
    c->mass_msun = t->has[M_MASS] ? t->mass : NULL;
    c->central_x = t->has[M_XC] ? t->xc : NULL;
    c->central_y = t->has[M_YC] ? t->yc : NULL;
    c->he_core_mass_msun = t->has[M_MHE] ? t->mhe : NULL;
    c->co_core_mass_msun = t->has[M_MCO] ? t->mco : NULL;
    c->phase = t->has[M_PHASE] ? t->phase : NULL;
    c->flag = t->has[M_FLAG] ? (const char *const *)t->flag : NULL;
}

static int cmp_mass_idx(const void *a, const void *b, const trk *t)
{
    double x = t[*(const size_t *)a].rep.initial_mass_msun, y = t[*(const size_t *)b].rep.initial_mass_msun;
    return (x > y) - (x < y);
}

/* Indices of the usable tracks of group z, sorted by mass (insertion sort: few hundred tracks). */
static size_t group_tracks(const hrt_import *imp, double z, size_t *idx)
{
    size_t n = 0;
    for (size_t i = 0; i < imp->n_tracks; i++) {
        const trk *t = &imp->t[i];
        if (t->rep.status != HRT_OK || t->rep.z != z)
            continue;
        size_t j = n++;
        idx[j] = i;
        while (j > 0 && cmp_mass_idx(&idx[j - 1], &idx[j], imp->t) > 0) {
            size_t x = idx[j];
            idx[j] = idx[j - 1];
            idx[j - 1] = x;
            j--;
        }
    }
    return n;
}

static int drop_track(const hrt_import *imp, trk *t, int code, hrt_error *err, const char *why)
{
    snprintf(t->rep.message, sizeof t->rep.message, "%.120s: %.190s", t->path, why);
    t->rep.status = code;
    if (!imp->lenient && code != HRT_E_NO_TRACK) {
        if (err && err->code == HRT_OK)
            trail_set_error(err, code, "%s", t->rep.message);
        return code;
    }
    return HRT_OK;
}

int hrt_import_run(hrt_import *imp, const char *out_path, hrt_error *err)
{
    if (!imp)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_run: import is NULL");
    hrt_error e0 = {0, ""};
    if (!err)
        err = &e0;
    err->code = HRT_OK;
    err->message[0] = '\0';
    if (imp->ran)
        return trail_set_error(err, HRT_E_INVALID, "hrt_import_run: this import has already run");
    imp->ran = 1;
    if (imp->n_tracks == 0)
        return trail_set_error(err, HRT_E_INVALID, "no track files given");
    int fatal = HRT_OK;
    /* 1. read every file (all of them, so the report lists every problem) */
    for (size_t i = 0; i < imp->n_tracks; i++) {
        trk *t = &imp->t[i];
        int rc = read_track(imp, t, err);
        if (rc != HRT_OK) {
            free_data(t);
            if (rc == HRT_E_NOMEM || !imp->lenient)
                fatal = fatal ? fatal : rc;
        }
        if (imp->progress)
            imp->progress(imp->progress_user, i + 1, imp->n_tracks, t->path);
    }
    if (fatal)
        return fatal;
    /* 2. keypoints and routes */
    for (size_t i = 0; i < imp->n_tracks; i++) {
        trk *t = &imp->t[i];
        if (t->rep.status != HRT_OK)
            continue;
        hrt_kp_columns c;
        columns_of(t, &c);
        hrt_error e = {0, ""};
        int route;
        if (hrt_keypoints_route(&c, imp->n_routes, imp->spec, &route, &t->cand, &t->kp, &e) != HRT_OK) {
            /* a flag naming an unknown keypoint */
            long ln = 0, col = 0;
            for (size_t s = 0; s < t->n; s++)
                if (t->flag[s] && t->flag[s][0]) {
                    int known = 0;
                    for (size_t r = 0; r < imp->n_routes && !known; r++)
                        known = route_has(&imp->spec[r], t->flag[s]);
                    if (!known) {
                        ln = t->line[2 * s];
                        col = t->line[2 * s + 1];
                        break;
                    }
                }
            tproblem(t, HRT_E_FORMAT, ln, col, err, "keypoint flag: %s", e.message);
            if (!imp->lenient)
                fatal = fatal ? fatal : HRT_E_FORMAT;
            continue;
        }
        t->rep.route = route;
        t->definite = route >= 0 && (t->cand & (t->cand - 1)) == 0;
        if (route < 0)
            drop_track(imp, t, HRT_E_NO_TRACK, err, "reaches fewer than 2 keypoints of every route");
        snprintf(t->rep.missing, sizeof t->rep.missing, "%s", t->kp.why);
    }
    if (fatal)
        return fatal;
    /* 3. per metallicity: ambiguous routes from the neighbours, order checks */
    size_t *idx = malloc((imp->n_tracks + 1) * sizeof(size_t));
    if (!idx)
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    imp->n_z = 0;
    for (size_t i = 0; i < imp->n_tracks && !fatal; i++) {
        const trk *t = &imp->t[i];
        if (t->rep.status != HRT_OK)
            continue;
        size_t g = 0;
        while (g < imp->n_z && imp->zs[g] != t->rep.z)
            g++;
        if (g == imp->n_z) {
            if (imp->n_z == TRAIL_MAX_Z) {
                fatal = trail_set_error(err, HRT_E_INVALID, "more than %d metallicities", TRAIL_MAX_Z);
                break;
            }
            size_t j = imp->n_z++;
            while (j > 0 && imp->zs[j - 1] > t->rep.z) {
                imp->zs[j] = imp->zs[j - 1];
                j--;
            }
            imp->zs[j] = t->rep.z;
        }
    }
    for (size_t g = 0; g < imp->n_z && !fatal; g++) {
        size_t n = group_tracks(imp, imp->zs[g], idx);
        for (size_t a = 0; a < n; a++) {
            trk *t = &imp->t[idx[a]];
            if (t->definite)
                continue;
            /* the nearest track in log mass with a definite route among the candidates */
            double best = INFINITY;
            int r = -1;
            for (size_t b = 0; b < n; b++) {
                const trk *u = &imp->t[idx[b]];
                if (!u->definite || !(t->cand & (1u << u->rep.route)))
                    continue;
                double d = fabs(log(u->rep.initial_mass_msun / t->rep.initial_mass_msun));
                if (d < best) {
                    best = d;
                    r = u->rep.route;
                }
            }
            if (r >= 0 && r != t->rep.route) {
                hrt_kp_columns c;
                columns_of(t, &c);
                hrt_keypoints_find(&c, &imp->spec[r], &t->kp, NULL);
                snprintf(t->rep.missing, sizeof t->rep.missing, "%s", t->kp.why);
                t->rep.route = r;
            }
            note(t, "route ambiguous (the track stops early): %s, as the nearest track in mass", imp->spec[t->rep.route].name);
        }
        for (size_t a = 1; a < n && !fatal; a++) {
            trk *t0 = &imp->t[idx[a - 1]], *t1 = &imp->t[idx[a]];
            if (t0->rep.initial_mass_msun == t1->rep.initial_mass_msun)
                fatal = trail_set_error(err, HRT_E_INVALID, "%s and %s: both %g Msun at Z = %g", t0->path, t1->path,
                                      t1->rep.initial_mass_msun, imp->zs[g]);
            else if (t1->rep.route < t0->rep.route)
                fatal = trail_set_error(err, HRT_E_INVALID, "%s (%g Msun) follows route '%s' but the lighter %s (%g Msun) "
                                      "follows the later route '%s': routes must not overlap in mass", t1->path,
                                      t1->rep.initial_mass_msun, imp->spec[t1->rep.route].name, t0->path,
                                      t0->rep.initial_mass_msun, imp->spec[t0->rep.route].name);
        }
    }
    hrt_builder *b = NULL;
    if (!fatal)
        fatal = hrt_builder_new(imp->n_routes, imp->spec, imp->z_ref, &b, err);
    /* 4. phases, remnants, resampling */
    size_t used = 0;
    for (size_t i = 0; i < imp->n_tracks && !fatal; i++) {
        trk *t = &imp->t[i];
        if (t->rep.status != HRT_OK)
            continue;
        const hrt_route_spec *r = &imp->spec[t->rep.route];
        size_t nk = t->kp.n_found;
        t->rep.n_keypoints = nk;
        t->rep.truncated = nk < r->n_keypoints;
        for (size_t k = 0; k < nk; k++) {
            t->rep.keypoint_age_yr[k] = t->age[t->kp.sample[k]];
            t->rep.keypoint_line[k] = t->line[2 * t->kp.sample[k]];
            t->rep.keypoint_how[k] = t->kp.how[k];
        }
        if (t->rep.truncated)
            note(t, "truncated at keypoint %s (%s)", r->keypoint_names[nk - 1], t->kp.why);
        assign_remnant(t, r, nk);
        if (!t->has[M_PHASE])
            default_phases(t, r, nk);
        double *la = malloc(t->n * sizeof(double));
        if (!la) {
            fatal = trail_set_error(err, HRT_E_NOMEM, "out of memory");
            break;
        }
        for (size_t s = 0; s < t->n; s++)
            la[s] = log10(t->age[s]);
        /* the builder ignores samples after the last keypoint */
        size_t nuse = t->kp.sample[nk - 1] + 1;
        hrt_track_data d = {
            .initial_mass_msun = t->rep.initial_mass_msun,
            .route = t->rep.route,
            .remnant = t->rep.remnant,
            .remnant_mass_msun = t->rep.remnant_mass_msun,
            .n = nuse,
            .log_age_yr = la,
            .log_l_lsun = t->logl,
            .log_teff_k = t->logt,
            .log_r_rsun = t->has[M_R] ? t->logr : NULL,
            .mass_msun = t->mass,
            .he_core_mass_msun = t->mhe,
            .co_core_mass_msun = t->mco,
            .phase = t->phase,
            .n_keypoints = nk,
            .keypoint_sample = t->kp.sample,
        };
        hrt_error e = {0, ""};
        int rc = hrt_builder_add_track(b, t->rep.z, &d, &e);
        free(la);
        if (rc == HRT_E_NOMEM)
            fatal = trail_set_error(err, rc, "%s", e.message);
        else if (rc != HRT_OK) {
            char why[300];
            snprintf(why, sizeof why, "EEP resampling refused the track: %s", e.message);
            if (drop_track(imp, t, rc, err, why) != HRT_OK)
                fatal = rc;
        } else
            used++;
        free_data(t);
    }
    if (!fatal && used == 0)
        fatal = trail_set_error(err, HRT_E_INVALID, "no usable track: every file was dropped (see the report)");
    /* 5. route boundaries per metallicity (tracks dropped in step 4 excluded) */
    for (size_t g = 0; g < imp->n_z && !fatal; g++) {
        size_t n = group_tracks(imp, imp->zs[g], idx);
        double *bd = imp->bound[g];
        if (n == 0) { /* every track of this Z dropped */
            memmove(&imp->zs[g], &imp->zs[g + 1], (imp->n_z - g - 1) * sizeof(double));
            imp->n_z--;
            g--;
            continue;
        }
        for (size_t k = 0; k + 1 < imp->n_routes; k++) {
            double below = -1.0, above = -1.0;
            for (size_t a = 0; a < n; a++) {
                const trk *t = &imp->t[idx[a]];
                if (t->rep.route <= (int)k)
                    below = t->rep.initial_mass_msun;
                else if (above < 0.0)
                    above = t->rep.initial_mass_msun;
            }
            double m = below > 0.0 && above > 0.0 ? sqrt(below * above) : below > 0.0 ? 2.0 * below : 0.5 * above;
            if (k > 0 && m < bd[k - 1])
                m = bd[k - 1];
            bd[k] = m;
        }
        if (imp->n_routes > 1)
            fatal = hrt_builder_set_route_boundaries(b, imp->zs[g], bd, err);
    }
    free(idx);
    if (!fatal) {
        /* its only failure is out of memory: the grid must not lose the attribute silently */
        fatal = hrt_builder_set_attribute(b, "source", "tracks imported from text tables by hrtrail import", err);
        if (!fatal && out_path)
            fatal = hrt_builder_write(b, out_path, err);
    }
    hrt_builder_free(b);
    return fatal;
}

/* ---- the report ------------------------------------------------------------ */

size_t hrt_import_n_tracks(const hrt_import *imp) { return imp ? imp->n_tracks : 0; }

int hrt_import_track(const hrt_import *imp, size_t i, hrt_import_track_report *out)
{
    if (!imp || !out)
        return HRT_E_NULL;
    if (i >= imp->n_tracks)
        return HRT_E_INVALID;
    *out = imp->t[i].rep;
    return HRT_OK;
}

size_t hrt_import_n_routes(const hrt_import *imp) { return imp ? imp->n_routes : 0; }

const char *hrt_import_route_name(const hrt_import *imp, size_t r)
{
    return imp && r < imp->n_routes ? imp->routes[r].name : NULL;
}

size_t hrt_import_route_n_keypoints(const hrt_import *imp, size_t r)
{
    return imp && r < imp->n_routes ? imp->routes[r].n_kp : 0;
}

const char *hrt_import_keypoint_name(const hrt_import *imp, size_t r, size_t k)
{
    return imp && r < imp->n_routes && k < imp->routes[r].n_kp ? imp->routes[r].kp_names[k] : NULL;
}

size_t hrt_import_n_z(const hrt_import *imp) { return imp && imp->ran ? imp->n_z : 0; }

double hrt_import_z(const hrt_import *imp, size_t iz)
{
    return imp && imp->ran && iz < imp->n_z ? imp->zs[iz] : NAN;
}

double hrt_import_route_boundary(const hrt_import *imp, size_t iz, size_t b)
{
    return imp && imp->ran && iz < imp->n_z && b + 1 < imp->n_routes ? imp->bound[iz][b] : NAN;
}
