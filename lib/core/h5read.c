/* HDF5 reading helpers of the grid reader: strings (fixed or variable
 * length), scalar attributes, numeric datasets of a checked shape and type.
 * Called inside H5E_BEGIN_TRY / H5E_END_TRY (trail_file_read). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <hdf5.h>

#include "core/h5read.h"
#include "util/schema.h"
#include "util/util.h"

void trail_h5_free_strings(char **s, size_t n)
{
    if (!s)
        return;
    for (size_t i = 0; i < n; i++)
        free(s[i]);
    free(s);
}

/* Read n strings of file type ftype from an attribute or dataset. */
static int h5_read_strings(hid_t obj, int is_attr, hid_t ftype, hid_t space, size_t n, char ***out,
                            const char *what, hrt_error *err)
{
    int rc = HRT_OK;
    char **res = calloc(n ? n : 1, sizeof *res);
    hid_t mtype = H5Tcopy(H5T_C_S1);
    if (!res || mtype < 0) {
        free(res);
        if (mtype >= 0)
            H5Tclose(mtype);
        return trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
    }
    H5Tset_cset(mtype, H5Tget_cset(ftype));
    htri_t vl = H5Tis_variable_str(ftype);
    if (vl > 0) {
        char **buf = calloc(n ? n : 1, sizeof *buf);
        herr_t st = -1;
        if (buf) {
            H5Tset_size(mtype, H5T_VARIABLE);
            st = is_attr ? H5Aread(obj, mtype, buf) : H5Dread(obj, mtype, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf);
        }
        if (!buf) {
            rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
        } else if (st < 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "%s: cannot read strings", what);
        } else {
            for (size_t i = 0; i < n && rc == HRT_OK; i++) {
                res[i] = trail_strdup(buf[i] ? buf[i] : "");
                if (!res[i])
                    rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
            }
#if H5_VERSION_GE(1, 12, 0)
            H5Treclaim(mtype, space, H5P_DEFAULT, buf);
#else
            H5Dvlen_reclaim(mtype, space, H5P_DEFAULT, buf);
#endif
        }
        free(buf);
    } else if (vl == 0) {
        size_t sz = H5Tget_size(ftype);
        char *buf = (sz > 0 && sz < 65536) ? calloc(n ? n : 1, sz + 1) : NULL;
        if (!buf) {
            rc = trail_set_error(err, sz == 0 || sz >= 65536 ? HRT_E_FORMAT : HRT_E_NOMEM,
                               "%s: unusable string size %zu", what, sz);
        } else {
            H5Tset_size(mtype, sz + 1);
            H5Tset_strpad(mtype, H5T_STR_NULLTERM);
            herr_t st = is_attr ? H5Aread(obj, mtype, buf) : H5Dread(obj, mtype, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf);
            if (st < 0)
                rc = trail_set_error(err, HRT_E_FORMAT, "%s: cannot read strings", what);
            for (size_t i = 0; i < n && rc == HRT_OK; i++) {
                buf[i * (sz + 1) + sz] = '\0';
                res[i] = trail_strdup(buf + i * (sz + 1));
                if (!res[i])
                    rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", what);
            }
            free(buf);
        }
    } else {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: cannot inspect string type", what);
    }
    H5Tclose(mtype);
    if (rc != HRT_OK) {
        trail_h5_free_strings(res, n);
        return rc;
    }
    *out = res;
    return HRT_OK;
}

hssize_t trail_h5_points(hid_t space, int *rank)
{
    *rank = H5Sget_simple_extent_ndims(space);
    return H5Sget_simple_extent_npoints(space);
}

/* An attribute opened with its type and space; the caller checks them and
 * calls h5_close_attr.  `what` receives the description used in messages. */
typedef struct attr_handle {
    hid_t a, t, s;
    char what[160];
} attr_handle;

static int h5_open_attr(hid_t loc, const char *name, const char *where, attr_handle *h, hrt_error *err)
{
    snprintf(h->what, sizeof h->what, "%s attribute '%s'", where, name);
    if (H5Aexists(loc, name) <= 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s is missing", h->what);
    h->a = H5Aopen(loc, name, H5P_DEFAULT);
    if (h->a < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s cannot be opened", h->what);
    h->t = H5Aget_type(h->a);
    h->s = H5Aget_space(h->a);
    return HRT_OK;
}

static void h5_close_attr(attr_handle *h)
{
    if (h->t >= 0)
        H5Tclose(h->t);
    if (h->s >= 0)
        H5Sclose(h->s);
    H5Aclose(h->a);
}

int trail_h5_attr_text(hid_t loc, const char *name, const char *where, char **out, hrt_error *err)
{
    attr_handle h;
    int rc = h5_open_attr(loc, name, where, &h, err), rank;
    if (rc != HRT_OK)
        return rc;
    if (h.t < 0 || h.s < 0 || H5Tget_class(h.t) != H5T_STRING) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s is not text", h.what);
    } else if (trail_h5_points(h.s, &rank) != 1) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s must be a single string", h.what);
    } else {
        char **v = NULL;
        rc = h5_read_strings(h.a, 1, h.t, h.s, 1, &v, h.what, err);
        if (rc == HRT_OK) {
            *out = v[0];
            free(v);
        }
    }
    h5_close_attr(&h);
    return rc;
}

int trail_h5_attr_number(hid_t loc, const char *name, const char *where, int want_int, double *out,
                            hrt_error *err)
{
    attr_handle h;
    int rc = h5_open_attr(loc, name, where, &h, err), rank;
    if (rc != HRT_OK)
        return rc;
    H5T_class_t cls = h.t >= 0 ? H5Tget_class(h.t) : H5T_NO_CLASS;
    if (cls != H5T_INTEGER && (want_int || cls != H5T_FLOAT)) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s must be %s", h.what, want_int ? "an integer" : "a number");
    } else if (h.s < 0 || trail_h5_points(h.s, &rank) != 1) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s must be a single value", h.what);
    } else if (H5Aread(h.a, H5T_NATIVE_DOUBLE, out) < 0) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s cannot be read", h.what);
    }
    h5_close_attr(&h);
    return rc;
}

/* Open dataset `name` under loc and check its rank and shape; dims[k] == 0
 * means "any" and receives the size found. */
int trail_h5_link(hid_t loc, const char *name)
{
    if (H5Lexists(loc, name, H5P_DEFAULT) <= 0)
        return 0;
    H5L_info_t info;
    if (H5Lget_info(loc, name, &info, H5P_DEFAULT) < 0 || info.type != H5L_TYPE_HARD)
        return -1;
    return 1;
}

hid_t trail_h5_group(hid_t loc, const char *name)
{
    return trail_h5_link(loc, name) == 1 ? H5Gopen2(loc, name, H5P_DEFAULT) : -1;
}

/* A dataset must store the values it declares: a tiny file declaring a
 * huge array would make the reader allocate it.  Filters (deflate) can
 * shrink data by about a thousand times at most. */
static int check_storage(hid_t d, hid_t t, hssize_t points, const char *where, const char *name, hrt_error *err)
{
    size_t size = t >= 0 ? H5Tget_size(t) : 0;
    double declared = (double)points * (double)size, stored = (double)H5Dget_storage_size(d);
    if (declared > stored * TRAIL_MAX_FILTER_RATIO + TRAIL_STORAGE_SLACK_BYTES)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: declares %.0f bytes of values but stores only %.0f", where,
                               name, declared, stored);
    return HRT_OK;
}

/* ---- filters: what a dataset's storage may ask the reader to undo --------- */

/* Chunks of a compressed dataset: at most this many per KiB declared (h5py
 * makes chunks of 8 KiB or more), so that checking each is quick. */
#define MAX_CHUNKS_PER_KIB 1.0
#define MAX_CHUNKS_SLACK 64.0

/* Every chunk of a deflated dataset stores at most what deflate makes of
 * the chunk's bytes at worst (zlib's deflateBound: a stored block every
 * 16 KiB, the stream's header and trailer), plus the checksum: a chunk
 * storing more is a stream that inflates beyond the chunk (a compression
 * bomb), which HDF5 1.10 would inflate whole before noticing. */
static int check_chunks(hid_t d, int rank, const hsize_t *dims, const hsize_t *chunk, double chunk_bytes,
                        const char *where, const char *name, hrt_error *err)
{
    double n_chunks = 1.0, declared = chunk_bytes;
    hsize_t per[8], off[8] = {0};
    for (int k = 0; k < rank; k++) {
        per[k] = (dims[k] + chunk[k] - 1) / chunk[k];
        n_chunks *= (double)per[k];
        declared *= (double)per[k];
    }
    if (n_chunks > MAX_CHUNKS_PER_KIB * declared / 1024.0 + MAX_CHUNKS_SLACK)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: %.0f compressed chunks of %.0f bytes: too many to check",
                               where, name, n_chunks, chunk_bytes);
    double most = chunk_bytes + chunk_bytes / 1024.0 + 64.0;
    for (double c = 0; c < n_chunks; c++) {
        hsize_t stored = 0;
        /* a chunk never written (the fill value) has no storage */
        if (H5Dget_chunk_storage_size(d, off, &stored) >= 0 && (double)stored > most)
            return trail_set_error(err, HRT_E_FORMAT,
                                   "%s/%s: a compressed chunk of %.0f bytes stores %.0f (a stream that inflates "
                                   "beyond its chunk)", where, name, chunk_bytes, (double)stored);
        for (int k = rank - 1; k >= 0; k--) { /* next chunk, last dimension fastest */
            off[k] += chunk[k];
            if (off[k] < dims[k])
                break;
            off[k] = 0;
        }
    }
    return HRT_OK;
}

/* The filters of a dataset's storage: only those whose output the reader
 * can bound (Fletcher-32, shuffle, deflate, each at most once); a deflated
 * dataset has chunks of at most TRAIL_MAX_CHUNK_BYTES, each storing no more
 * than deflate makes of it. */
static int check_filters(hid_t d, hid_t t, const char *where, const char *name, hrt_error *err)
{
    hid_t dcpl = H5Dget_create_plist(d);
    int n = dcpl >= 0 ? H5Pget_nfilters(dcpl) : -1, rc = HRT_OK, deflated = 0, seen[3] = {0, 0, 0};
    if (n < 0)
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: storage properties cannot be read", where, name);
    for (int i = 0; i < n && rc == HRT_OK; i++) {
        unsigned flags = 0, config = 0, cd[8];
        size_t ncd = 8;
        char fname[64] = "";
        H5Z_filter_t id = H5Pget_filter2(dcpl, (unsigned)i, &flags, &ncd, cd, sizeof fname, fname, &config);
        int k = id == H5Z_FILTER_FLETCHER32 ? 0 : id == H5Z_FILTER_SHUFFLE ? 1 : id == H5Z_FILTER_DEFLATE ? 2 : -1;
        if (k < 0 || seen[k]++)
            rc = trail_set_error(err, HRT_E_FORMAT,
                                 "%s/%s: stored through HDF5 filter %d ('%.40s')%s; hrtrail reads data stored "
                                 "with shuffle, deflate and Fletcher-32, each at most once",
                                 where, name, (int)id, fname, k < 0 ? "" : " twice");
        deflated |= k == 2;
    }
    if (rc == HRT_OK && deflated) {
        hsize_t chunk[8], dims[8];
        int rank = H5Pget_chunk(dcpl, 8, chunk);
        hid_t s = H5Dget_space(d);
        int srank = s >= 0 ? H5Sget_simple_extent_dims(s, dims, NULL) : -1;
        double bytes = t >= 0 ? (double)H5Tget_size(t) : 0.0;
        for (int k = 0; k < rank; k++)
            bytes *= (double)chunk[k];
        if (rank < 1 || rank != srank || rank > 8)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: compressed but its chunks cannot be read", where, name);
        else if (bytes > TRAIL_MAX_CHUNK_BYTES)
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: compressed chunks of %.0f bytes (at most %d)", where,
                                 name, bytes, TRAIL_MAX_CHUNK_BYTES);
        else
            rc = check_chunks(d, rank, dims, chunk, bytes, where, name, err);
        if (s >= 0)
            H5Sclose(s);
    }
    if (dcpl >= 0)
        H5Pclose(dcpl);
    return rc;
}

/* Storage of dataset d: the values it declares stored (check_storage) by
 * filters the reader can bound (check_filters). */
static int check_dataset_storage(hid_t d, const char *where, const char *name, hrt_error *err)
{
    hid_t t = H5Dget_type(d), s = H5Dget_space(d);
    int rc = check_storage(d, t, s >= 0 ? H5Sget_simple_extent_npoints(s) : 0, where, name, err);
    if (rc == HRT_OK)
        rc = check_filters(d, t, where, name, err);
    if (t >= 0)
        H5Tclose(t);
    if (s >= 0)
        H5Sclose(s);
    return rc;
}

static int h5_open_dataset(hid_t loc, const char *where, const char *name, int rank, hsize_t *dims,
                        H5T_class_t *cls, hid_t *out, hrt_error *err)
{
    int link = trail_h5_link(loc, name);
    if (link == 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: dataset is missing", where, name);
    if (link < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: a soft or external link, not a dataset stored in the file",
                               where, name);
    hid_t d = H5Dopen2(loc, name, H5P_DEFAULT);
    if (d < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s: not a dataset", where, name);
    hid_t s = H5Dget_space(d), t = H5Dget_type(d);
    int rc = HRT_OK;
    hsize_t found[8] = {0};
    int r = s >= 0 ? H5Sget_simple_extent_ndims(s) : -1;
    if (r != rank) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: expected %d dimension%s, found %d", where, name, rank,
                           rank == 1 ? "" : "s", r);
    } else {
        H5Sget_simple_extent_dims(s, found, NULL);
        for (int k = 0; k < rank && rc == HRT_OK; k++) {
            if (dims[k] == 0)
                dims[k] = found[k];
            else if (found[k] != dims[k])
                rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: dimension %d is %llu, expected %llu", where, name,
                                   k, (unsigned long long)found[k], (unsigned long long)dims[k]);
        }
    }
    *cls = t >= 0 ? H5Tget_class(t) : H5T_NO_CLASS;
    if (t >= 0)
        H5Tclose(t);
    if (s >= 0)
        H5Sclose(s);
    if (rc != HRT_OK) {
        H5Dclose(d);
        return rc;
    }
    *out = d;
    return HRT_OK;
}

/* Read a numeric dataset of the given shape into buf (doubles or ints). */
int trail_h5_numeric(hid_t loc, const char *where, const char *name, int rank, hsize_t *dims, int as_int,
                        void *buf, hrt_error *err)
{
    hid_t d;
    H5T_class_t cls;
    int rc = h5_open_dataset(loc, where, name, rank, dims, &cls, &d, err);
    if (rc != HRT_OK)
        return rc;
    /* Integers where codes and counts are meant, floating point where
     * values are: a float rounded to an integer type has lost its meaning. */
    if (cls != (as_int ? H5T_INTEGER : H5T_FLOAT)) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: must hold %s", where, name,
                             as_int ? "integers" : "floating-point numbers");
    } else if ((rc = check_dataset_storage(d, where, name, err)) != HRT_OK) {
        /* declares more than it stores: nothing is allocated for it */
    } else if (buf && !trail_h5_read_one_chunk(d, as_int, buf) &&
               H5Dread(d, as_int ? H5T_NATIVE_INT : H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, buf) < 0) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: cannot be read (a checksum that does not match, or "
                             "damaged storage)", where, name);
    }
    H5Dclose(d);
    return rc;
}

int trail_h5_has_checksum(hid_t loc, const char *name)
{
    if (trail_h5_link(loc, name) != 1)
        return 0;
    hid_t d = H5Dopen2(loc, name, H5P_DEFAULT);
    if (d < 0)
        return 0;
    hid_t dcpl = H5Dget_create_plist(d);
    unsigned flags = 0, config = 0;
    size_t nelm = 0;
    int found = dcpl >= 0 && H5Pget_filter_by_id2(dcpl, H5Z_FILTER_FLETCHER32, &flags, &nelm, NULL, 0, NULL,
                                                   &config) >= 0;
    if (dcpl >= 0)
        H5Pclose(dcpl);
    H5Dclose(d);
    return found;
}

int trail_h5_strings(hid_t loc, const char *where, const char *name, size_t *n, char ***out,
                               hrt_error *err)
{
    hsize_t dims[1] = {0};
    hid_t d;
    H5T_class_t cls;
    int rc = h5_open_dataset(loc, where, name, 1, dims, &cls, &d, err);
    if (rc != HRT_OK)
        return rc;
    char what[160];
    snprintf(what, sizeof what, "%s/%s", where, name);
    if (cls != H5T_STRING) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: must hold strings", what);
    } else if (dims[0] == 0 || dims[0] > TRAIL_MAX_STRINGS) {
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: unusable length %llu (1..%d)", what, (unsigned long long)dims[0],
                             TRAIL_MAX_STRINGS);
    } else if ((rc = check_dataset_storage(d, where, name, err)) != HRT_OK) {
        /* declares more than it stores, or filters the reader cannot bound */
    } else {
        hid_t t = H5Dget_type(d), s = H5Dget_space(d);
        rc = h5_read_strings(d, 0, t, s, (size_t)dims[0], out, what, err);
        H5Tclose(t);
        H5Sclose(s);
        if (rc == HRT_OK)
            *n = (size_t)dims[0];
    }
    H5Dclose(d);
    return rc;
}

