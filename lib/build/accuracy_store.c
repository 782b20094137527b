/* Storing the leave-one-out error field of a run in the grid file it was
 * measured on (hrt_accuracy_store in include/hrtrail/build.h; the layout is
 * the optional group accuracy/ of tracks/FORMAT.md, read back by
 * lib/core/interp_error.c). */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

#include <hdf5.h>

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

/* A 2-D numeric dataset, chunked by whole rows (the reader's cap), shuffled,
 * deflated and checksummed as the grid's own data. */
static void st_data(st_ctx *w, hid_t loc, const char *name, hsize_t rows, hsize_t cols, int is_int, const void *v,
                    const char *units, const char *meaning)
{
    hsize_t d[2] = {rows, cols};
    size_t vb = is_int ? sizeof(int32_t) : sizeof(double);
    hsize_t chunk[2] = {rows, cols};
    hsize_t most = TRAIL_MAX_CHUNK_BYTES / (cols * vb);
    if (chunk[0] > most)
        chunk[0] = most;
    hid_t s = H5Screate_simple(2, d, NULL);
    hid_t dcpl = H5Pcopy(w->dcpl);
    if (dcpl < 0 || H5Pset_chunk(dcpl, 2, chunk) < 0 || H5Pset_shuffle(dcpl) < 0 ||
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
        H5Dclose(ds);
    }
    H5Sclose(s);
}

static void st_names(st_ctx *w, hid_t loc)
{
    const char *names[HRT_INTERP_COUNT];
    for (int i = 0; i < HRT_INTERP_COUNT; i++)
        names[i] = hrt_interp_name(i);
    hsize_t d[1] = {HRT_INTERP_COUNT};
    hid_t s = H5Screate_simple(1, d, NULL);
    hid_t ds = H5Dcreate2(loc, "interp", w->str_t, s, H5P_DEFAULT, w->dcpl, H5P_DEFAULT);
    if (ds < 0 || H5Dwrite(ds, w->str_t, H5S_ALL, H5S_ALL, H5P_DEFAULT, names) < 0)
        w->failed = 1;
    if (ds >= 0) {
        st_text_attr(w, ds, "long_name", "interpolation type of each code of key[:, 0]");
        H5Dclose(ds);
    }
    H5Sclose(s);
}

static void st_group(st_ctx *w, hid_t f, const trail_acc_field *fl, size_t n, int32_t *key, double *val)
{
    for (size_t i = 0; i < n; i++) {
        int32_t *k = key + 4 * i;
        double *v = val + 5 * i;
        k[0] = fl[i].it, k[1] = fl[i].route, k[2] = fl[i].eep_lo, k[3] = fl[i].eep_hi;
        v[0] = fl[i].z, v[1] = fl[i].m;
        for (int q = 0; q < HRT_ACCURACY_NQ; q++)
            v[2 + q] = fl[i].e[q];
    }
    if (H5Lexists(f, "accuracy", H5P_DEFAULT) > 0 && H5Ldelete(f, "accuracy", H5P_DEFAULT) < 0)
        w->failed = 1;
    hid_t g = w->failed ? -1 : H5Gcreate2(f, "accuracy", H5P_DEFAULT, w->gcpl, H5P_DEFAULT);
    if (g < 0) {
        w->failed = 1;
        return;
    }
    st_text_attr(w, g, "method",
                 "leave one out: each interior track of each route dropped, its metallicity group rebuilt "
                 "without it and the track interpolated from the rest at the same EEPs");
    st_text_attr(w, g, "statistic",
                 "largest |interpolated - dropped track| over the EEPs [eep_lo, eep_hi) of one dropped track");
    st_names(w, g);
    st_data(w, g, "key", n, 4, 1, key, NULL, "interp code, route index, eep_lo, eep_hi (exclusive) of each block");
    st_data(w, g, "value", n, 5, 0, val, "dex",
            "Z and initial mass (Msun) of the dropped track, then its largest |error| of log L, log Teff and "
            "log age (dex) in the block");
    H5Gclose(g);
}

int hrt_accuracy_store(const hrt_accuracy *acc, const char *path, hrt_error *err)
{
    if (!acc || !path)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_store: %s is NULL", acc ? "path" : "acc");
    size_t n;
    const trail_acc_field *fl = trail_acc_field_rows(acc, &n);
    if (!n)
        return trail_set_error(err, HRT_E_INVALID, "hrt_accuracy_store: no error field: run hrt_accuracy_run first");
    int32_t *key = malloc(n * 4 * sizeof *key);
    double *val = malloc(n * 5 * sizeof *val);
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
    hid_t f = -1;
    H5E_BEGIN_TRY { f = w.failed ? -1 : H5Fopen(path, H5F_ACC_RDWR, H5P_DEFAULT); }
    H5E_END_TRY;
    int rc = HRT_OK;
    if (f < 0 && !w.failed) {
        rc = trail_set_error(err, HRT_E_IO, "hrt_accuracy_store: cannot open %s for writing (HDF5)", path);
    } else {
        H5E_BEGIN_TRY { st_group(&w, f, fl, n, key, val); }
        H5E_END_TRY;
        if (f >= 0 && H5Fclose(f) < 0)
            w.failed = 1;
        if (w.failed)
            rc = trail_set_error(err, HRT_E_IO, "hrt_accuracy_store: writing group accuracy/ of %s failed (HDF5)",
                                 path);
    }
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
