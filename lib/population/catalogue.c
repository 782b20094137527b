/* hrtrail: catalogues of a population's stars, streamed to HDF5 (one 1-D
 * dataset per column, chunked, shuffled and deflated, extended as rows come)
 * or CSV, through a buffer of CAT_BUF rows: memory does not grow with the
 * number of stars. */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <hdf5.h>

#include "util/util.h"
#include "population/sampling.h"

#define CAT_BUF 16384 /* rows buffered, and the HDF5 chunk length */
#define CAT_DEFLATE 1

/* The columns, in the vocabulary of tracks/FORMAT.md and the command's CSV. */
enum { C_STAR, C_POP_AGE, C_BIRTH, C_M0, C_Z, C_AGE, C_STATUS, C_PHASE, C_REMNANT, C_ROUTE, C_FLAGS, C_LOG_L, C_LOG_TEFF,
       C_LOG_R, C_LOG_G, C_MASS, C_HE, C_CO, C_EEP, C_PH_FRAC, C_PH_START, C_PH_END, C_REM_MASS, N_COLS };
static const char *const col_name[N_COLS] = {
    "star", "population_age_yr", "birth_yr", "initial_mass_msun", "z", "age_yr", "status", "phase", "remnant", "route",
    "flags", "log_l_lsun", "log_teff_k", "log_r_rsun", "log_g_cgs", "mass_msun", "he_core_mass_msun", "co_core_mass_msun",
    "eep", "phase_fraction", "phase_start_yr", "phase_end_yr", "remnant_mass_msun"};
/* 0: double, 1: int32, 2: uint64 */
static int col_kind(int c) { return c == C_STAR ? 2 : (c >= C_STATUS && c <= C_FLAGS) ? 1 : 0; }

struct hrt_pop_catalogue {
    int format;
    int fd;             /* CSV: the file, written with write(2) (the library holds no stdio stream) */
    char *text;         /* CSV: the buffered rows as text */
    size_t text_len, text_cap;
    int text_bad;       /* out of memory while formatting */
    hid_t file, ds[N_COLS];
    size_t n_buf;
    uint64_t rows;
    uint64_t *u[N_COLS]; /* every column buffered as 64-bit words (doubles by their bits, ints widened) */
    char *path;
    char *tmp;           /* the private temporary (mkstemp) beside path, renamed over it by a successful close */
    int tmp_made;        /* tmp exists on the disk (removed unless renamed) */
};

static void text_add(hrt_pop_catalogue *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static int text_write(hrt_pop_catalogue *c);

static void cat_release(hrt_pop_catalogue *c)
{
    if (c->fd >= 0) close(c->fd);
    free(c->text);
    H5E_BEGIN_TRY
    {
        for (int k = 0; k < N_COLS; k++)
            if (c->ds[k] > 0) H5Dclose(c->ds[k]);
        if (c->file > 0) H5Fclose(c->file);
    }
    H5E_END_TRY;
    if (c->tmp_made) unlink(c->tmp); /* not renamed: the file at path stays as it was */
    free(c->tmp);
    for (int k = 0; k < N_COLS; k++) free(c->u[k]);
    free(c->path);
    free(c);
}

static hid_t col_type(int k)
{
    int kind = col_kind(k);
    return kind == 2 ? H5T_STD_U64LE : kind == 1 ? H5T_STD_I32LE : H5T_IEEE_F64LE;
}

/* The file and its empty, extendible datasets. */
static int open_hdf5(hrt_pop_catalogue *c, hrt_error *err)
{
    int ok = 0;
    H5E_BEGIN_TRY
    {
        hsize_t zero = 0, unlimited = H5S_UNLIMITED, chunk = CAT_BUF;
        c->file = H5Fcreate(c->tmp, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
        hid_t space = H5Screate_simple(1, &zero, &unlimited), dcpl = H5Pcreate(H5P_DATASET_CREATE);
        ok = c->file >= 0 && space >= 0 && dcpl >= 0 && H5Pset_chunk(dcpl, 1, &chunk) >= 0 && H5Pset_shuffle(dcpl) >= 0 &&
             H5Pset_deflate(dcpl, CAT_DEFLATE) >= 0;
        for (int k = 0; ok && k < N_COLS; k++) {
            c->ds[k] = H5Dcreate2(c->file, col_name[k], col_type(k), space, H5P_DEFAULT, dcpl, H5P_DEFAULT);
            ok = c->ds[k] >= 0;
        }
        if (space >= 0) H5Sclose(space);
        if (dcpl >= 0) H5Pclose(dcpl);
    }
    H5E_END_TRY;
    return ok ? HRT_OK : trail_set_error(err, HRT_E_IO, "hrt_pop_catalogue_open: cannot create the HDF5 file '%s'", c->path);
}

int hrt_pop_catalogue_open(const char *path, int format, hrt_pop_catalogue **out, hrt_error *err)
{
    if (out) *out = NULL;
    if (!path || !out) return trail_set_error(err, HRT_E_NULL, "hrt_pop_catalogue_open: %s is NULL", !path ? "path" : "out");
    if (format != HRT_CATALOGUE_CSV && format != HRT_CATALOGUE_HDF5)
        return trail_set_error(err, HRT_E_INVALID, "hrt_pop_catalogue_open: format %d: HRT_CATALOGUE_CSV or _HDF5", format);
    hrt_pop_catalogue *c = calloc(1, sizeof *c);
    if (c) c->fd = -1;
    size_t len = strlen(path);
    int ok = c && (c->path = malloc(len + 1)) && (c->tmp = malloc(len + 16));
    for (int k = 0; ok && k < N_COLS; k++) ok = (c->u[k] = malloc(CAT_BUF * sizeof(uint64_t))) != NULL;
    if (!ok) {
        if (c) cat_release(c);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_catalogue_open: out of memory");
    }
    strcpy(c->path, path);
    c->format = format;
    for (int k = 0; k < N_COLS; k++) c->ds[k] = -1;
    c->file = -1;
    int rc = HRT_OK;
    /* written to a new file of an unpredictable name beside path (O_EXCL: no planted link is
     * followed), renamed over path when closed: a failed run leaves path as it was */
    snprintf(c->tmp, len + 16, "%s.tmp-XXXXXX", path);
    c->fd = mkstemp(c->tmp);
    c->tmp_made = c->fd >= 0;
    if (c->fd < 0) {
        rc = trail_set_error(err, HRT_E_IO, "hrt_pop_catalogue_open: cannot create a temporary file beside '%s': %s",
                             path, strerror(errno));
    } else if (fchmod(c->fd, 0644) != 0) {
        rc = trail_set_error(err, HRT_E_IO, "hrt_pop_catalogue_open: cannot set the mode of '%s': %s", c->tmp,
                             strerror(errno));
    } else if (format == HRT_CATALOGUE_HDF5) {
        close(c->fd); /* HDF5 opens the file by its name */
        c->fd = -1;
        rc = open_hdf5(c, err);
    } else {
        for (int k = 0; k < N_COLS; k++) text_add(c, "%s%s", k ? "," : "", col_name[k]);
        text_add(c, "\n");
        if (!text_write(c)) rc = trail_set_error(err, HRT_E_IO, "hrt_pop_catalogue_open: cannot write '%s'", path);
    }
    if (rc != HRT_OK) {
        cat_release(c);
        return rc;
    }
    *out = c;
    return trail_set_error(err, HRT_OK, NULL);
}

static double as_double(uint64_t u)
{
    double v;
    memcpy(&v, &u, sizeof v);
    return v;
}

/* Formatted text appended to the CSV buffer (text_bad set when out of memory). */
static void text_add(hrt_pop_catalogue *c, const char *fmt, ...)
{
    va_list ap;
    for (;;) {
        size_t room = c->text_cap - c->text_len;
        va_start(ap, fmt);
        int n = vsnprintf(c->text ? c->text + c->text_len : NULL, room, fmt, ap);
        va_end(ap);
        if (n < 0) {
            c->text_bad = 1;
            return;
        }
        if ((size_t)n < room) {
            c->text_len += (size_t)n;
            return;
        }
        size_t cap = (c->text_cap ? 2 * c->text_cap : 1 << 16) + (size_t)n;
        char *t = realloc(c->text, cap);
        if (!t) {
            c->text_bad = 1;
            return;
        }
        c->text = t, c->text_cap = cap;
    }
}

/* The buffered text written whole to the file; 1 if it was. */
static int text_write(hrt_pop_catalogue *c)
{
    size_t at = 0;
    while (!c->text_bad && at < c->text_len) {
        ssize_t w = write(c->fd, c->text + at, c->text_len - at);
        if (w < 0 && errno == EINTR) continue;
        if (w <= 0) return 0;
        at += (size_t)w;
    }
    c->text_len = 0;
    return !c->text_bad;
}

/* One buffered row as CSV: numbers to 10 significant digits, codes by their keys. */
static void csv_row(hrt_pop_catalogue *c, size_t i)
{
    uint64_t *const *u = c->u;
    for (int k = 0; k < N_COLS; k++) {
        const char *sep = k ? "," : "";
        int32_t code = (int32_t)u[k][i], ok = (int32_t)u[C_STATUS][i] == HRT_OK;
        if (k == C_STAR)
            text_add(c, "%s%llu", sep, (unsigned long long)u[k][i]);
        else if (k == C_PHASE || k == C_REMNANT)
            text_add(c, "%s%s", sep, ok ? (k == C_PHASE ? hrt_phase_key(code) : hrt_remnant_key(code)) : "");
        else if (col_kind(k) == 1)
            text_add(c, "%s%d", sep, (int)code);
        else {
            double v = as_double(u[k][i]);
            if (isfinite(v)) text_add(c, "%s%.10g", sep, v);
            else text_add(c, "%s%s", sep, isnan(v) ? "" : v > 0 ? "inf" : "-inf");
        }
    }
    text_add(c, "\n");
}

/* Append the buffered rows to each dataset (ints narrowed back to 32 bits). */
static int flush_hdf5(hrt_pop_catalogue *c)
{
    int ok = 1;
    hsize_t start = c->rows, count = c->n_buf, size = c->rows + c->n_buf;
    int32_t *narrow = malloc(c->n_buf * sizeof *narrow);
    if (!narrow) return 0;
    H5E_BEGIN_TRY
    {
        for (int k = 0; ok && k < N_COLS; k++) {
            hid_t fs = -1, ms = H5Screate_simple(1, &count, NULL);
            ok = ms >= 0 && H5Dset_extent(c->ds[k], &size) >= 0 && (fs = H5Dget_space(c->ds[k])) >= 0 &&
                 H5Sselect_hyperslab(fs, H5S_SELECT_SET, &start, NULL, &count, NULL) >= 0;
            if (ok && col_kind(k) == 1) {
                for (size_t i = 0; i < c->n_buf; i++) narrow[i] = (int32_t)c->u[k][i];
                ok = H5Dwrite(c->ds[k], H5T_NATIVE_INT32, ms, fs, H5P_DEFAULT, narrow) >= 0;
            } else if (ok) {
                ok = H5Dwrite(c->ds[k], col_kind(k) == 2 ? H5T_NATIVE_UINT64 : H5T_NATIVE_DOUBLE, ms, fs, H5P_DEFAULT,
                              c->u[k]) >= 0;
            }
            if (fs >= 0) H5Sclose(fs);
            if (ms >= 0) H5Sclose(ms);
        }
    }
    H5E_END_TRY;
    free(narrow);
    return ok;
}

static int flush(hrt_pop_catalogue *c, const char *who, hrt_error *err)
{
    if (!c->n_buf) return HRT_OK;
    int ok = 1;
    if (c->format == HRT_CATALOGUE_HDF5) {
        ok = flush_hdf5(c);
    } else {
        for (size_t i = 0; i < c->n_buf; i++) csv_row(c, i);
        ok = text_write(c);
    }
    if (!ok) return trail_set_error(err, HRT_E_IO, "%s: cannot write rows %llu to %llu of '%s'", who,
                                    (unsigned long long)c->rows, (unsigned long long)(c->rows + c->n_buf), c->path);
    c->rows += c->n_buf;
    c->n_buf = 0;
    return HRT_OK;
}

static uint64_t bits(double v)
{
    uint64_t u;
    memcpy(&u, &v, sizeof u);
    return u;
}

static void buffer_row(hrt_pop_catalogue *c, double pop_age, uint64_t star, double birth, const hrt_state *s)
{
    size_t i = c->n_buf++;
    const double d[] = {s->initial_mass_msun, s->z, s->age_yr};
    const int32_t n[] = {s->status, s->phase, s->remnant, s->route, s->flags};
    const double e[] = {s->log_l_lsun, s->log_teff_k, s->log_r_rsun, s->log_g_cgs, s->mass_msun, s->he_core_mass_msun,
                        s->co_core_mass_msun, s->eep, s->phase_fraction, s->phase_start_yr, s->phase_end_yr,
                        s->remnant_mass_msun};
    c->u[C_STAR][i] = star;
    c->u[C_POP_AGE][i] = bits(pop_age);
    c->u[C_BIRTH][i] = bits(birth);
    for (int k = 0; k < 3; k++) c->u[C_M0 + k][i] = bits(d[k]);
    for (int k = 0; k < 5; k++) c->u[C_STATUS + k][i] = (uint64_t)(int64_t)n[k];
    for (int k = 0; k < 12; k++) c->u[C_LOG_L + k][i] = bits(e[k]);
}

int hrt_pop_catalogue_add(hrt_pop_catalogue *c, double population_age_yr, size_t n, const uint64_t *star,
                          const double *birth_yr, const hrt_state *states, hrt_error *err)
{
    if (!c || (n && (!star || !birth_yr || !states)))
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_catalogue_add: %s is NULL", !c ? "catalogue" : "an array");
    for (size_t i = 0; i < n; i++) {
        buffer_row(c, population_age_yr, star[i], birth_yr[i], &states[i]);
        if (c->n_buf == CAT_BUF) {
            int rc = flush(c, "hrt_pop_catalogue_add", err);
            if (rc != HRT_OK) return rc;
        }
    }
    return trail_set_error(err, HRT_OK, NULL);
}

int hrt_pop_catalogue_close(hrt_pop_catalogue *c, uint64_t *rows, hrt_error *err)
{
    if (!c) return trail_set_error(err, HRT_E_NULL, "hrt_pop_catalogue_close: catalogue is NULL");
    int rc = flush(c, "hrt_pop_catalogue_close", err);
    if (rows) *rows = c->rows;
    int bad = 0;
    if (c->fd >= 0) {
        bad = close(c->fd) != 0;
        c->fd = -1;
    } else {
        H5E_BEGIN_TRY
        {
            for (int k = 0; k < N_COLS; k++) {
                bad |= H5Dclose(c->ds[k]) < 0;
                c->ds[k] = -1;
            }
            bad |= H5Fclose(c->file) < 0;
            c->file = -1;
        }
        H5E_END_TRY;
    }
    if (rc == HRT_OK && bad) rc = trail_set_error(err, HRT_E_IO, "hrt_pop_catalogue_close: cannot finish '%s'", c->path);
    if (rc == HRT_OK && rename(c->tmp, c->path) != 0)
        rc = trail_set_error(err, HRT_E_IO, "hrt_pop_catalogue_close: cannot rename '%s' to '%s': %s", c->tmp, c->path,
                             strerror(errno));
    if (rc == HRT_OK) c->tmp_made = 0;
    cat_release(c);
    if (rc == HRT_OK) trail_set_error(err, HRT_OK, NULL);
    return rc;
}
