/* Storing the leave-one-out error field of a run in the grid file it was
 * measured on (hrt_accuracy_store in include/hrtrail/build.h; the layout is
 * the optional group accuracy/ of tracks/FORMAT.md, read back by
 * lib/core/interp_error.c). */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <hdf5.h>
#include <hdf5_hl.h>

#include "build/accuracy.h"
#include "util/schema.h"
#include "util/util.h"

typedef struct st_ctx {
    hid_t gcpl, dcpl, str_t;
    int failed;
} st_ctx;

static void st_text_attr(st_ctx *w, hid_t loc, const char *name, const char *value)
{
    hid_t s = H5Screate(H5S_SCALAR);
    hid_t a = H5Acreate2(loc, name, w->str_t, s, H5P_DEFAULT, H5P_DEFAULT);
    if (a < 0 || H5Awrite(a, w->str_t, &value) < 0)
        w->failed = 1;
    if (a >= 0)
        H5Aclose(a);
    H5Sclose(s);
}

/* A 1-D numeric dataset of n values, chunked (the reader's cap), shuffled,
 * deflated and checksummed as the grid's own data, with its dimension
 * scale `dim` (a dataset under loc) attached unless it is the scale itself. */
static void st_data(st_ctx *w, hid_t loc, const char *name, hsize_t n, int is_int, const void *v, const char *units,
                    const char *meaning, const char *dim)
{
    size_t vb = is_int ? sizeof(int32_t) : sizeof(double);
    hsize_t chunk = n < TRAIL_MAX_CHUNK_BYTES / vb ? n : TRAIL_MAX_CHUNK_BYTES / vb;
    hid_t s = H5Screate_simple(1, &n, NULL);
    hid_t dcpl = H5Pcopy(w->dcpl);
    if (dcpl < 0 || H5Pset_chunk(dcpl, 1, &chunk) < 0 || H5Pset_shuffle(dcpl) < 0 ||
        H5Pset_deflate(dcpl, TRAIL_DEFLATE_DEFAULT) < 0 || H5Pset_fletcher32(dcpl) < 0)
        w->failed = 1;
    hid_t ds = w->failed ? -1
                         : H5Dcreate2(loc, name, is_int ? H5T_STD_I32LE : H5T_IEEE_F64LE, s, H5P_DEFAULT, dcpl,
                                      H5P_DEFAULT);
    if (dcpl >= 0)
        H5Pclose(dcpl);
    if (ds < 0 || H5Dwrite(ds, is_int ? H5T_NATIVE_INT : H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) < 0)
        w->failed = 1;
    if (ds >= 0) {
        if (units)
            st_text_attr(w, ds, "units", units);
        st_text_attr(w, ds, "long_name", meaning);
        if (!strcmp(name, dim)) {
            if (H5DSset_scale(ds, name) < 0)
                w->failed = 1;
        } else {
            hid_t sc = H5Dopen2(loc, dim, H5P_DEFAULT);
            if (sc < 0 || H5DSattach_scale(ds, sc, 0) < 0)
                w->failed = 1;
            if (sc >= 0)
                H5Dclose(sc);
        }
        H5Dclose(ds);
    }
    H5Sclose(s);
}

/* interp_names: the type of each code, on its scale interp_code. */
static void st_names(st_ctx *w, hid_t loc)
{
    const char *names[HRT_INTERP_COUNT];
    int code[HRT_INTERP_COUNT];
    for (int i = 0; i < HRT_INTERP_COUNT; i++)
        names[i] = hrt_interp_name(i), code[i] = i;
    st_data(w, loc, "interp_code", HRT_INTERP_COUNT, 1, code, NULL, "code of an interpolation type", "interp_code");
    hsize_t d[1] = {HRT_INTERP_COUNT};
    hid_t s = H5Screate_simple(1, d, NULL);
    hid_t ds = H5Dcreate2(loc, "interp_names", w->str_t, s, H5P_DEFAULT, w->dcpl, H5P_DEFAULT);
    if (ds < 0 || H5Dwrite(ds, w->str_t, H5S_ALL, H5S_ALL, H5P_DEFAULT, names) < 0)
        w->failed = 1;
    if (ds >= 0) {
        st_text_attr(w, ds, "long_name", "interpolation type of each code of interp");
        hid_t sc = H5Dopen2(loc, "interp_code", H5P_DEFAULT);
        if (sc < 0 || H5DSattach_scale(ds, sc, 0) < 0)
            w->failed = 1;
        if (sc >= 0)
            H5Dclose(sc);
        H5Dclose(ds);
    }
    H5Sclose(s);
}

enum { C_INTERP, C_ROUTE, C_LO, C_HI, N_ICOL };
enum { C_Z, C_MASS, C_EL, C_ET, C_EA, C_ZLO, C_ZHI, N_DCOL };

/* The group `name` under loc (accuracy/ in the file, or across_z/ in it),
 * replacing one there. */
static void st_group(st_ctx *w, hid_t loc, const char *name, int across, const trail_acc_field *fl, size_t n,
                     int32_t *ic, double *dc)
{
    int32_t *col_i[N_ICOL + 1];
    double *col_d[N_DCOL];
    for (int k = 0; k <= N_ICOL; k++)
        col_i[k] = ic + (size_t)k * n;
    for (int k = 0; k < N_DCOL; k++)
        col_d[k] = dc + (size_t)k * n;
    for (size_t i = 0; i < n; i++) {
        col_i[C_INTERP][i] = fl[i].it, col_i[C_ROUTE][i] = fl[i].route;
        col_i[C_LO][i] = fl[i].eep_lo, col_i[C_HI][i] = fl[i].eep_hi, col_i[N_ICOL][i] = (int32_t)i;
        col_d[C_Z][i] = fl[i].z, col_d[C_MASS][i] = fl[i].m, col_d[C_ZLO][i] = fl[i].z_lo, col_d[C_ZHI][i] = fl[i].z_hi;
        for (int q = 0; q < HRT_ACCURACY_NQ; q++)
            col_d[C_EL + q][i] = fl[i].e[q];
    }
    if (H5Lexists(loc, name, H5P_DEFAULT) > 0 && H5Ldelete(loc, name, H5P_DEFAULT) < 0)
        w->failed = 1;
    hid_t g = w->failed ? -1 : H5Gcreate2(loc, name, H5P_DEFAULT, w->gcpl, H5P_DEFAULT);
    if (g < 0) {
        w->failed = 1;
        return;
    }
    st_text_attr(w, g, "method",
                 across ? "leave one group out: each interior metallicity group dropped, the grid rebuilt from the "
                          "other groups and each of its tracks interpolated at its own initial mass and Z, at the "
                          "same EEPs"
                        : "leave one out: each interior track of each route dropped, its metallicity group rebuilt "
                          "without it and the track interpolated from the rest at the same EEPs");
    st_text_attr(w, g, "statistic",
                 "largest |interpolated - dropped track| over the EEPs [eep_lo, eep_hi) of one dropped track");
    st_names(w, g);
    st_data(w, g, "block", n, 1, col_i[N_ICOL], NULL, "index of a block of EEPs of one dropped track", "block");
    st_data(w, g, "interp", n, 1, col_i[C_INTERP], NULL, "interpolation type (a code of interp_code)", "block");
    st_data(w, g, "route", n, 1, col_i[C_ROUTE], NULL, "route index of the dropped track", "block");
    st_data(w, g, "eep_lo", n, 1, col_i[C_LO], NULL, "first EEP of the block", "block");
    st_data(w, g, "eep_hi", n, 1, col_i[C_HI], NULL, "EEP after the block's last", "block");
    st_data(w, g, "z", n, 0, col_d[C_Z], NULL, "metal mass fraction of the dropped track", "block");
    st_data(w, g, "initial_mass_msun", n, 0, col_d[C_MASS], "solMass", "initial mass of the dropped track", "block");
    st_data(w, g, "log_l_error", n, 0, col_d[C_EL], "dex", "largest |error| of log L in the block", "block");
    st_data(w, g, "log_teff_error", n, 0, col_d[C_ET], "dex", "largest |error| of log Teff in the block", "block");
    st_data(w, g, "log_age_error", n, 0, col_d[C_EA], "dex", "largest |error| of log age in the block", "block");
    if (across) {
        st_data(w, g, "z_lo", n, 0, col_d[C_ZLO], NULL, "Z of the group below the dropped one (predicted from it)",
                "block");
        st_data(w, g, "z_hi", n, 0, col_d[C_ZHI], NULL, "Z of the group above the dropped one (predicted from it)",
                "block");
    }
    H5Gclose(g);
}

/* The mass direction replaces accuracy/ (across_z/ with it); across
 * metallicity replaces accuracy/across_z/ in an accuracy/ that holds the
 * mass direction (w->failed = 2 when it does not). */
static void st_write(st_ctx *w, hid_t f, int across, const trail_acc_field *fl, size_t n, int32_t *ic, double *dc)
{
    if (!across) {
        st_group(w, f, "accuracy", 0, fl, n, ic, dc);
        return;
    }
    hid_t g = H5Lexists(f, "accuracy", H5P_DEFAULT) > 0 ? H5Gopen2(f, "accuracy", H5P_DEFAULT) : -1;
    if (g < 0 || H5Lexists(g, "interp", H5P_DEFAULT) <= 0)
        w->failed = 2;
    else
        st_group(w, g, "across_z", 1, fl, n, ic, dc);
    if (g >= 0)
        H5Gclose(g);
}

/* The grid file is never edited in place (a failure half-way would leave a
 * broken grid, and HDF5 cannot always recover from a failed write): its
 * bytes are read into memory, the group is written into that image (HDF5's
 * file-image driver) and the new image replaces the file whole (util.h:
 * trail_replace_target, trail_write_replace). */
typedef struct st_file {
    char *target; /* path with its links resolved */
    unsigned mode;
    void *bytes; /* the file's image as read */
} st_file;

/* Every byte of sf->target into sf->bytes, opened by HDF5 as *f (read-write, in memory). */
static int st_open_image(const char *path, st_file *sf, hid_t *f, hrt_error *err)
{
    int rc = trail_replace_target(path, "hrt_accuracy_store: ", &sf->target, &sf->mode, err);
    if (rc != HRT_OK)
        return rc;
    FILE *in = fopen(sf->target, "rb");
    struct stat st;
    size_t n = 0;
    if (!in || fstat(fileno(in), &st) != 0)
        rc = trail_set_error(err, HRT_E_IO, "hrt_accuracy_store: cannot read '%s': %s", path, strerror(errno));
    else if (!(sf->bytes = malloc((n = (size_t)st.st_size) ? n : 1)))
        rc = trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_store: out of memory for the %zu bytes of '%s'", n, path);
    else if (fread(sf->bytes, 1, n, in) != n)
        rc = trail_set_error(err, HRT_E_IO, "hrt_accuracy_store: cannot read '%s'", path);
    if (in)
        fclose(in);
    if (rc == HRT_OK) {
        H5E_BEGIN_TRY { *f = H5LTopen_file_image(sf->bytes, n, H5LT_FILE_IMAGE_OPEN_RW); }
        H5E_END_TRY;
        if (*f < 0)
            rc = trail_set_error(err, HRT_E_IO, "hrt_accuracy_store: cannot open %s for writing (HDF5)", path);
    }
    return rc;
}

/* The image of f (closed here) as the new contents of the file: written
 * only when ok.  Frees sf.  Returns the failure of this step, else HRT_OK. */
static int st_commit(st_file *sf, hid_t f, int ok, const char *path, hrt_error *err)
{
    int rc = HRT_OK;
    void *img = NULL;
    ssize_t size = -1;
    H5E_BEGIN_TRY
    {
        if (ok && (H5Fflush(f, H5F_SCOPE_GLOBAL) < 0 || (size = H5Fget_file_image(f, NULL, 0)) <= 0 ||
                   !(img = malloc((size_t)size)) || H5Fget_file_image(f, img, (size_t)size) != size))
            rc = trail_set_error(err, img || size <= 0 ? HRT_E_IO : HRT_E_NOMEM,
                                 "hrt_accuracy_store: cannot complete the new image of %s (HDF5)", path);
        if (f >= 0 && H5Fclose(f) < 0 && ok && rc == HRT_OK)
            rc = trail_set_error(err, HRT_E_IO, "hrt_accuracy_store: cannot close the new image of %s (HDF5)", path);
    }
    H5E_END_TRY;
    if (ok && rc == HRT_OK)
        rc = trail_write_replace(sf->target, "hrt_accuracy_store: ", img, (size_t)size, sf->mode, err);
    free(img);
    free(sf->bytes);
    free(sf->target);
    return rc;
}

int hrt_accuracy_store(const hrt_accuracy *acc, const char *path, hrt_error *err)
{
    if (!acc || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_store: %s is NULL", acc ? "path" : "acc");
    size_t n;
    const trail_acc_field *fl = trail_acc_field_rows(acc, &n);
    if (!n)
        return trail_set_error(err, HRT_E_INVALID, "hrt_accuracy_store: no error field: run hrt_accuracy_run first");
    int32_t *key = malloc(n * (N_ICOL + 1) * sizeof *key);
    double *val = malloc(n * N_DCOL * sizeof *val);
    if (!key || !val) {
        free(key);
        free(val);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_store: out of memory");
    }
    st_ctx w = {H5Pcreate(H5P_GROUP_CREATE), H5Pcreate(H5P_DATASET_CREATE), H5Tcopy(H5T_C_S1), 0};
    if (w.gcpl < 0 || w.dcpl < 0 || w.str_t < 0 || H5Tset_size(w.str_t, H5T_VARIABLE) < 0 ||
        H5Tset_cset(w.str_t, H5T_CSET_UTF8) < 0 || H5Pset_obj_track_times(w.gcpl, 0) < 0 ||
        H5Pset_obj_track_times(w.dcpl, 0) < 0)
        w.failed = 1;
    st_file sf = {NULL, 0644, NULL};
    hid_t f = -1;
    int rc = w.failed ? HRT_OK : st_open_image(path, &sf, &f, err);
    if (rc == HRT_OK) {
        H5E_BEGIN_TRY { st_write(&w, f, trail_acc_across_z(acc), fl, n, key, val); }
        H5E_END_TRY;
        if (w.failed == 2)
            rc = trail_set_error(err, HRT_E_INVALID,
                                 "hrt_accuracy_store: %s holds no mass-direction error field: store one "
                                 "(a run without hrt_accuracy_set_across_z) before the field across metallicity",
                                 path);
        else if (w.failed)
            rc = trail_set_error(err, HRT_E_IO, "hrt_accuracy_store: writing group accuracy/ of %s failed (HDF5)",
                                 path);
    }
    int crc = st_commit(&sf, f, rc == HRT_OK, path, err);
    if (rc == HRT_OK)
        rc = crc;
    if (w.gcpl >= 0)
        H5Pclose(w.gcpl);
    if (w.dcpl >= 0)
        H5Pclose(w.dcpl);
    if (w.str_t >= 0)
        H5Tclose(w.str_t);
    free(key);
    free(val);
    return rc;
}
