/* The column map of an import: its keys (tracks/FORMAT.md's vocabulary),
 * "key=value" entries from a string or a mapping file, and the file-name
 * patterns of the 'pattern' entry; and reading a whole file, for mapping
 * files and track tables. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "build/import.h"
#include "util/util.h"

/* Map keys: quantity, whether the column holds log10 of it, whether a
 * number is accepted as a constant, whether the value is text, whether a
 * column of this name is read without a map entry. */
static const trail_map_key map_keys[] = {
    {"age_yr", TRAIL_MAP_AGE, 0, 0, 0, 1},
    {"log_age_yr", TRAIL_MAP_AGE, 1, 0, 0, 1},
    {"log_l_lsun", TRAIL_MAP_L, 1, 0, 0, 1},
    {"l_lsun", TRAIL_MAP_L, 0, 0, 0, 1},
    {"log_teff_k", TRAIL_MAP_TEFF, 1, 0, 0, 1},
    {"teff_k", TRAIL_MAP_TEFF, 0, 0, 0, 1},
    {"log_r_rsun", TRAIL_MAP_R, 1, 0, 0, 1},
    {"r_rsun", TRAIL_MAP_R, 0, 0, 0, 1},
    {"mass_msun", TRAIL_MAP_MASS, 0, 0, 0, 1},
    {"central_x", TRAIL_MAP_CENTRAL_X, 0, 0, 0, 1},
    {"central_y", TRAIL_MAP_CENTRAL_Y, 0, 0, 0, 1},
    {"he_core_mass_msun", TRAIL_MAP_HE_CORE, 0, 0, 0, 1},
    {"co_core_mass_msun", TRAIL_MAP_CO_CORE, 0, 0, 0, 1},
    {"phase", TRAIL_MAP_PHASE, 0, 0, 1, 1},
    {"keypoints", TRAIL_MAP_KEYPOINTS, 0, 0, 1, 1},
    {"initial_mass_msun", TRAIL_MAP_INITIAL_MASS, 0, 1, 0, 1},
    {"z", TRAIL_MAP_Z, 0, 1, 0, 1},
    {"feh", TRAIL_MAP_Z, 1, 1, 0, 0},
};
#define N_MAP_KEYS (sizeof map_keys / sizeof map_keys[0])

/* Entries that are settings of the import, not quantities. */
static const char key_pattern[] = "pattern";
static const char key_z_ref[] = "z_ref";

/* Longest "key=value" entry. */
#define MAX_ENTRY 512
/* A file is read in chunks starting at this size, doubling, up to MAX_FILE_BYTES. */
#define FIRST_CHUNK 65536
#define MAX_FILE_BYTES ((size_t)1 << 31)

const trail_map_key *trail_map_key_at(size_t k) { return k < N_MAP_KEYS ? &map_keys[k] : NULL; }

const char *trail_map_quantity_name(int quantity)
{
    for (size_t k = 0; k < N_MAP_KEYS; k++)
        if (map_keys[k].quantity == quantity)
            return map_keys[k].key;
    return "?";
}

int trail_parse_double(const char *s, size_t len, double *v)
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

int trail_read_file(const char *path, char **out, size_t *len, hrt_error *err)
{
    *out = NULL;
    FILE *f = fopen(path, "rb");
    if (!f)
        return trail_set_error(err, HRT_E_IO, "%s: cannot open: %s", path, strerror(errno));
    size_t cap = FIRST_CHUNK, n = 0;
    char *b = malloc(cap + 1);
    int rc = HRT_OK;
    while (b) {
        size_t got = fread(b + n, 1, cap - n, f);
        n += got;
        if (n < cap)
            break;
        if (cap > MAX_FILE_BYTES) {
            rc = trail_set_error(err, HRT_E_IO, "%s: larger than %zu GB", path, MAX_FILE_BYTES >> 30);
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

/* The factor of a "column*unit" entry: a time unit or a positive number. */
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
    return trail_parse_double(u, strlen(u), f) == 0 && isfinite(*f) && *f > 0.0 ? 0 : -1;
}

/* "pattern" and "z_ref": settings given in the map.  *done says whether key was one. */
static int setting_entry(hrt_import *imp, const char *key, const char *val, const char *where, int *done,
                         hrt_error *err)
{
    *done = 1;
    if (strcmp(key, key_pattern) == 0) {
        char *p = trail_strdup(val);
        if (!p)
            return trail_set_error(err, HRT_E_NOMEM, "out of memory");
        free(imp->pattern);
        imp->pattern = p;
        return HRT_OK;
    }
    if (strcmp(key, key_z_ref) == 0) {
        double v;
        if (trail_parse_double(val, strlen(val), &v) != 0)
            return trail_set_error(err, HRT_E_INVALID, "%s%s=%s is not a number", where, key_z_ref, val);
        return hrt_import_set_z_ref(imp, v, err);
    }
    *done = 0;
    return HRT_OK;
}

/* The message for a key of no quantity: every key the map knows. */
static int unknown_key(const char *key, const char *where, hrt_error *err)
{
    char keys[MAX_ENTRY] = "";
    size_t len = 0;
    for (size_t k = 0; k < N_MAP_KEYS; k++)
        len += (size_t)snprintf(keys + len, sizeof keys - len, "%s, ", map_keys[k].key);
    snprintf(keys + len, sizeof keys - len, "%s, %s", key_pattern, key_z_ref);
    return trail_set_error(err, HRT_E_INVALID, "%sunknown map key '%s' (%s)", where, key, keys);
}

/* The value of an entry for key mk: a constant, or a column with an optional "*unit". */
static int entry_value(const trail_map_key *mk, const char *key, const char *val, const char *where,
                       trail_map_entry *e, hrt_error *err)
{
    double v;
    if (mk->constant_ok && trail_parse_double(val, strlen(val), &v) == 0) {
        if (!isfinite(v))
            return trail_set_error(err, HRT_E_INVALID, "%s%s=%s is not finite", where, key, val);
        e->constant = v;
        return HRT_OK;
    }
    char col[MAX_ENTRY];
    snprintf(col, sizeof col, "%s", val);
    char *star = mk->text ? NULL : strrchr(col, '*');
    if (star) {
        *star = '\0';
        if (unit_factor(star + 1, &e->factor) != 0)
            return trail_set_error(err, HRT_E_INVALID, "%s%s=%s: unit '%s' is not yr, kyr, Myr, Gyr or a positive "
                                   "number", where, key, val, star + 1);
        if (mk->quantity != TRAIL_MAP_AGE && strstr(star + 1, "yr"))
            return trail_set_error(err, HRT_E_INVALID, "%s%s=%s: a time unit on a quantity that is not an age",
                                   where, key, val);
    }
    if (!*col)
        return trail_set_error(err, HRT_E_INVALID, "%s%s=%s names no column", where, key, val);
    if (!(e->column = trail_strdup(col)))
        return trail_set_error(err, HRT_E_NOMEM, "out of memory");
    return HRT_OK;
}

/* One "key=value" entry of length len; where names the place for messages. */
static int map_entry(hrt_import *imp, const char *s, size_t len, const char *where, hrt_error *err)
{
    char buf[MAX_ENTRY];
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
    if (strncmp(key, "extra.", 6) == 0) /* a column read as an extra quantity (import_extra.c) */
        return trail_import_extra_entry(imp, key + 6, val, where, err);
    int done;
    int rc = setting_entry(imp, key, val, where, &done, err);
    if (done)
        return rc;
    size_t k = 0;
    while (k < N_MAP_KEYS && strcmp(key, map_keys[k].key) != 0)
        k++;
    if (k == N_MAP_KEYS)
        return unknown_key(key, where, err);
    const trail_map_key *mk = &map_keys[k];
    trail_map_entry e = {1, (int)k, NULL, 1.0, NAN};
    rc = entry_value(mk, key, val, where, &e, err);
    if (rc != HRT_OK)
        return rc;
    free(imp->map[mk->quantity].column);
    imp->map[mk->quantity] = e;
    return HRT_OK;
}

/* Every entry of s: separated by commas, semicolons, blanks or new lines;
 * '#' comments to the end of the line.  file (may be NULL) names s in messages. */
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
    int rc = map_text(imp, entries, NULL, err);
    return rc == HRT_OK ? trail_set_error(err, HRT_OK, NULL) : rc;
}

int hrt_import_map_file(hrt_import *imp, const char *path, hrt_error *err)
{
    if (!imp || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_map_file: NULL argument");
    char *b;
    size_t n;
    int rc = trail_read_file(path, &b, &n, err);
    if (rc != HRT_OK)
        return rc;
    if (strlen(b) != n)
        rc = trail_set_error(err, HRT_E_INVALID, "%s: a mapping file is text; this one holds binary data", path);
    else
        rc = map_text(imp, b, path, err);
    free(b);
    return rc == HRT_OK ? trail_set_error(err, HRT_OK, NULL) : rc;
}

/* ---- file-name patterns --------------------------------------------------- */

/* Deepest recursion of a pattern match (placeholders and '*' backtrack). */
#define MAX_PATTERN_DEPTH 64

/* A character that can be part of a number. */
static int num_char(char c)
{
    return (c >= '0' && c <= '9') || c == '.' || c == '-' || c == '+' || c == 'e' || c == 'E';
}

/* The placeholder at p ({mass}, {z} or {feh}, number k of vals) matching a
 * number at the start of s and the rest of the pattern the rest of s. */
static int pattern_match_from(const char *p, const char *s, double vals[3], int depth);

static int placeholder_match(const char *p, size_t p_len, int k, const char *s, double vals[3], int depth)
{
    size_t m = 0;
    while (num_char(s[m]))
        m++;
    for (size_t len = m; len > 0; len--) { /* the longest number first */
        double v;
        if (trail_parse_double(s, len, &v) != 0 || !isfinite(v))
            continue;
        double save = vals[k];
        vals[k] = v;
        if (pattern_match_from(p + p_len, s + len, vals, depth + 1))
            return 1;
        vals[k] = save;
    }
    return 0;
}

static int pattern_match_from(const char *p, const char *s, double vals[3], int depth)
{
    if (depth > MAX_PATTERN_DEPTH)
        return 0;
    if (!*p)
        return !*s;
    if (*p == '*') {
        for (const char *t = s;; t++) {
            if (pattern_match_from(p + 1, t, vals, depth + 1))
                return 1;
            if (!*t)
                return 0;
        }
    }
    if (*p == '{') {
        static const char placeholders[3][8] = {"{mass}", "{z}", "{feh}"};
        for (int k = 0; k < 3; k++) {
            size_t p_len = strlen(placeholders[k]);
            if (strncmp(p, placeholders[k], p_len) == 0)
                return placeholder_match(p, p_len, k, s, vals, depth);
        }
    }
    return *p == *s && pattern_match_from(p + 1, s + 1, vals, depth + 1);
}

int trail_pattern_match(const char *pattern, const char *name, double vals[3])
{
    return pattern_match_from(pattern, name, vals, 0);
}
