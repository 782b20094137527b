/* libFuzzer target: a valid small grid edited through the HDF5 API by a
 * program read from the fuzz bytes (element values, special numbers,
 * deleted, retyped and reshaped datasets, changed and extra attributes
 * and units, rewritten code tables, empty and extra groups, links), then
 * opened and queried.  Unlike raw
 * bytes, nearly every input is a well-formed HDF5 file, so the fuzzing
 * happens in hrtrail's own validation and interpolation. */
#include <stdint.h>

#include <hdf5.h>

#include "fuzz_common.h"

static char base_path[64], path[64];
static unsigned char *base;
static size_t base_size;

/* The datasets of the seed grid (format 2).  The committed inputs name
 * them by index (a byte modulo N_DSETS): new entries go at the end. */
static const char *const dsets[] = {
    "phases/key", "remnants/key", "routes/names", "routes/lower/keypoint_names", "routes/lower/keypoint_eep",
    "routes/lower/segment_samples", "routes/upper/keypoint_names", "routes/upper/keypoint_eep",
    "routes/upper/segment_samples",
#define GROUP_DSETS(g)                                                                                         \
    "metallicity/" g "/initial_mass_msun", "metallicity/" g "/route", "metallicity/" g "/n_eep",             \
        "metallicity/" g "/remnant", "metallicity/" g "/remnant_mass_msun",                                  \
        "metallicity/" g "/route_boundary_mass_msun", "metallicity/" g "/log_age_yr",                        \
        "metallicity/" g "/log_l_lsun", "metallicity/" g "/log_teff_k", "metallicity/" g "/log_r_rsun",      \
        "metallicity/" g "/mass_msun", "metallicity/" g "/he_core_mass_msun",                                \
        "metallicity/" g "/co_core_mass_msun", "metallicity/" g "/phase"
    GROUP_DSETS("0"), GROUP_DSETS("1"), "phases/code", "remnants/code"};
#define N_DSETS (sizeof dsets / sizeof dsets[0])
static const char *const groups[] = {"/", "routes", "routes/lower", "routes/upper", "metallicity", "metallicity/0",
                                     "metallicity/1"};
static const char *const attr_names[] = {"format", "format_version", "z_ref", "description", "created_by", "z",
                                         "units", "extra"};

typedef struct reader {
    const uint8_t *p;
    size_t n;
} reader;

static unsigned take(reader *r, unsigned bytes)
{
    unsigned v = 0;
    for (unsigned k = 0; k < bytes; k++) {
        v = v << 8 | (r->n ? *r->p : 0);
        if (r->n) {
            r->p++;
            r->n--;
        }
    }
    return v;
}

static double take_value(reader *r)
{
    static const double special[] = {NAN, INFINITY, -INFINITY, 0.0, -0.0, -1.0, 1.0, 2.0, 0.5, 1e308, -1e308,
                                     5e-324, 1e-300, 65535.0, 65536.0, 2147483647.0, -2147483648.0, 1e10, 0.014, 3.0};
    unsigned k = take(r, 1);
    if (k < 2 * sizeof special / sizeof special[0])
        return special[k % (sizeof special / sizeof special[0])];
    uint64_t bits = 0;
    for (int b = 0; b < 8; b++)
        bits = bits << 8 | take(r, 1);
    double v;
    memcpy(&v, &bits, sizeof v);
    return v;
}

static void take_string(reader *r, char *out, size_t cap)
{
    size_t n = take(r, 1) % cap;
    for (size_t k = 0; k < n; k++)
        out[k] = (char)take(r, 1);
    out[n] = '\0';
}

/* The text of a scalar string attribute `units` of dataset name into out ("" if none). */
static void units_of(hid_t f, const char *name, char *out, size_t cap)
{
    out[0] = '\0';
    if (H5Aexists_by_name(f, name, "units", H5P_DEFAULT) <= 0)
        return;
    hid_t a = H5Aopen_by_name(f, name, "units", H5P_DEFAULT, H5P_DEFAULT);
    hid_t t = a >= 0 ? H5Aget_type(a) : -1, m = H5Tcopy(H5T_C_S1);
    H5Tset_size(m, H5T_VARIABLE);
    char *v = NULL;
    if (t >= 0 && H5Tis_variable_str(t) > 0 && H5Aread(a, m, &v) >= 0 && v) {
        snprintf(out, cap, "%s", v);
        H5free_memory(v);
    }
    H5Tclose(m);
    if (t >= 0)
        H5Tclose(t);
    if (a >= 0)
        H5Aclose(a);
}

/* Replace dataset name by one of the given type and shape.  The units
 * attribute is kept, so that the reader judges the new type, shape and
 * values rather than stopping at a missing unit. */
static void replace_dataset(hid_t f, const char *name, hid_t type, int rank, const hsize_t *dims, reader *r)
{
    char units[64];
    units_of(f, name, units, sizeof units);
    H5Ldelete(f, name, H5P_DEFAULT);
    hid_t s = rank == 0 ? H5Screate(H5S_SCALAR) : H5Screate_simple(rank, dims, NULL);
    hid_t d = H5Dcreate2(f, name, type, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    if (d >= 0 && units[0]) {
        hid_t st = H5Tcopy(H5T_C_S1), ss = H5Screate(H5S_SCALAR);
        H5Tset_size(st, H5T_VARIABLE);
        const char *u = units;
        hid_t a = H5Acreate2(d, "units", st, ss, H5P_DEFAULT, H5P_DEFAULT);
        if (a >= 0) {
            H5Awrite(a, st, &u);
            H5Aclose(a);
        }
        H5Sclose(ss);
        H5Tclose(st);
    }
    hssize_t np = H5Sget_simple_extent_npoints(s);
    if (d >= 0 && np > 0 && np < 100000 && H5Tget_class(type) != H5T_STRING && H5Tget_class(type) != H5T_COMPOUND) {
        double *v = malloc((size_t)np * sizeof *v);
        double fill = take_value(r);
        for (hssize_t k = 0; k < np; k++)
            v[k] = fill + (double)k;
        H5Dwrite(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
        free(v);
    }
    if (d >= 0)
        H5Dclose(d);
    H5Sclose(s);
}

static void write_strings(hid_t f, const char *name, reader *r)
{
    size_t n = take(r, 1) % 20;
    char buf[20][24];
    const char *p[20];
    for (size_t k = 0; k < n; k++) {
        if (take(r, 1) & 1) { /* a real key, to get past the lookup now and then */
            static const char keys[][12] = {"ms", "rgb", "cheb", "wd", "co_wd", "none", "ns", "bh", "lower", "upper",
                                            "zams", "end", "tams"};
            snprintf(buf[k], sizeof buf[k], "%s", keys[take(r, 1) % 13]);
        } else {
            take_string(r, buf[k], sizeof buf[k]);
        }
        p[k] = buf[k];
    }
    hid_t t = H5Tcopy(H5T_C_S1);
    H5Tset_size(t, (take(r, 1) & 1) ? H5T_VARIABLE : 24);
    hsize_t d = n;
    H5Ldelete(f, name, H5P_DEFAULT);
    hid_t s = H5Screate_simple(1, &d, NULL);
    hid_t ds = H5Dcreate2(f, name, t, s, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    if (ds >= 0 && n > 0)
        H5Dwrite(ds, t, H5S_ALL, H5S_ALL, H5P_DEFAULT, H5Tis_variable_str(t) > 0 ? (const void *)p : (const void *)buf);
    if (ds >= 0)
        H5Dclose(ds);
    H5Sclose(s);
    H5Tclose(t);
}

static void set_attr(hid_t f, reader *r)
{
    const char *on = groups[take(r, 1) % (sizeof groups / sizeof groups[0])];
    if (take(r, 1) & 1)
        on = dsets[take(r, 1) % N_DSETS];
    const char *an = attr_names[take(r, 1) % (sizeof attr_names / sizeof attr_names[0])];
    hid_t o = H5Oopen(f, on, H5P_DEFAULT);
    if (o < 0)
        return;
    unsigned kind = take(r, 1) % 6;
    if (H5Aexists(o, an) > 0)
        H5Adelete(o, an);
    if (kind == 0) { /* deleted only */
        H5Oclose(o);
        return;
    }
    hsize_t d = 1 + take(r, 1) % 3;
    hid_t s = (kind & 1) ? H5Screate(H5S_SCALAR) : H5Screate_simple(1, &d, NULL);
    if (kind >= 4) { /* text */
        char txt[64];
        take_string(r, txt, sizeof txt);
        if (take(r, 1) & 1)
            snprintf(txt, sizeof txt, "hrtrail-track-grid");
        const char *pp[3] = {txt, txt, txt};
        hid_t t = H5Tcopy(H5T_C_S1);
        H5Tset_size(t, H5T_VARIABLE);
        hid_t a = H5Acreate2(o, an, t, s, H5P_DEFAULT, H5P_DEFAULT);
        if (a >= 0) {
            H5Awrite(a, t, pp);
            H5Aclose(a);
        }
        H5Tclose(t);
    } else { /* a number, integer or float */
        double v[3] = {take_value(r), 0, 0};
        v[1] = v[2] = v[0];
        hid_t a = H5Acreate2(o, an, kind == 2 ? H5T_STD_I32LE : H5T_IEEE_F64LE, s, H5P_DEFAULT, H5P_DEFAULT);
        if (a >= 0) {
            H5Awrite(a, H5T_NATIVE_DOUBLE, v);
            H5Aclose(a);
        }
    }
    H5Sclose(s);
    H5Oclose(o);
}

static void write_element(hid_t f, reader *r)
{
    hid_t d = H5Dopen2(f, dsets[take(r, 1) % N_DSETS], H5P_DEFAULT);
    if (d < 0)
        return;
    hid_t s = H5Dget_space(d);
    hssize_t np = H5Sget_simple_extent_npoints(s);
    hid_t t = H5Dget_type(d);
    if (np > 0 && H5Tget_class(t) != H5T_STRING) {
        hsize_t dims[4] = {0}, coord[4] = {0};
        int rank = H5Sget_simple_extent_dims(s, dims, NULL);
        unsigned idx = take(r, 2);
        for (int k = rank - 1; k >= 0; k--) {
            coord[k] = idx % dims[k];
            idx /= (unsigned)dims[k];
        }
        H5Sselect_elements(s, H5S_SELECT_SET, 1, coord);
        hsize_t one = 1;
        hid_t ms = H5Screate_simple(1, &one, NULL);
        double v = take_value(r);
        H5Dwrite(d, H5T_NATIVE_DOUBLE, ms, s, H5P_DEFAULT, &v);
        H5Sclose(ms);
    }
    H5Tclose(t);
    H5Sclose(s);
    H5Dclose(d);
}

static void edit(hid_t f, reader *r)
{
    for (int op = 0; op < 8 && r->n > 0; op++) {
        unsigned kind = take(r, 1) % 11;
        const char *ds = dsets[take(r, 1) % N_DSETS];
        switch (kind) {
        case 0:
        case 1:
        case 2:
            write_element(f, r);
            break;
        case 3: /* delete a dataset or group */
            H5Ldelete(f, (take(r, 1) & 1) ? ds : groups[1 + take(r, 1) % 6], H5P_DEFAULT);
            break;
        case 4: { /* another type, same shape */
            hid_t d = H5Dopen2(f, ds, H5P_DEFAULT);
            if (d < 0)
                break;
            hid_t s = H5Dget_space(d);
            hsize_t dims[4];
            int rank = H5Sget_simple_extent_dims(s, dims, NULL);
            H5Sclose(s);
            H5Dclose(d);
            static const hid_t *types[] = {&H5T_NATIVE_FLOAT_g, &H5T_NATIVE_SCHAR_g, &H5T_NATIVE_INT_g,
                                           &H5T_NATIVE_DOUBLE_g, &H5T_STD_U64LE_g, &H5T_C_S1_g};
            H5open();
            hid_t t = *types[take(r, 1) % 6];
            if (rank >= 0 && rank <= 4)
                replace_dataset(f, ds, t, rank, dims, r);
            break;
        }
        case 5: { /* another shape */
            hsize_t dims[3] = {take(r, 1) % 12, take(r, 1) % 12, take(r, 1) % 3};
            H5open();
            replace_dataset(f, ds, (take(r, 1) & 1) ? H5T_NATIVE_INT_g : H5T_NATIVE_DOUBLE_g, (int)(take(r, 1) % 4),
                            dims, r);
            break;
        }
        case 6:
        case 7:
            set_attr(f, r);
            break;
        case 8:
            write_strings(f, (take(r, 1) & 1) ? dsets[take(r, 1) % 4 == 3 ? 6 : take(r, 1) % 4] : ds, r);
            break;
        case 9: { /* groups: empty, extra, renamed */
            char name[48];
            snprintf(name, sizeof name, "metallicity/%u", take(r, 1) % 4);
            unsigned how = take(r, 1) % 3;
            if (how == 0) {
                H5Ldelete(f, name, H5P_DEFAULT);
                hid_t g = H5Gcreate2(f, name, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
                if (g >= 0)
                    H5Gclose(g);
            } else if (how == 1) {
                H5Lmove(f, "metallicity/1", f, name, H5P_DEFAULT, H5P_DEFAULT);
            } else {
                hid_t g = H5Gcreate2(f, "metallicity/x", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
                if (g >= 0)
                    H5Gclose(g);
            }
            break;
        }
        case 10: { /* links: a dataset of another group, or a dangling soft link */
            const char *other = dsets[take(r, 1) % N_DSETS];
            H5Ldelete(f, ds, H5P_DEFAULT);
            if (take(r, 1) & 1)
                H5Lcreate_hard(f, other, f, ds, H5P_DEFAULT, H5P_DEFAULT);
            else
                H5Lcreate_soft("/nowhere/at/all", f, ds, H5P_DEFAULT, H5P_DEFAULT);
            break;
        }
        }
    }
}

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    snprintf(base_path, sizeof base_path, "/tmp/hrt-fuzz-base-%ld.h5", (long)getpid());
    snprintf(path, sizeof path, "/tmp/hrt-fuzz-edit-%ld.h5", (long)getpid());
    if (fuzz_small_grid(base_path) != HRT_OK)
        abort();
    FILE *f = fopen(base_path, "rb");
    fseek(f, 0, SEEK_END);
    base_size = (size_t)ftell(f);
    rewind(f);
    base = malloc(base_size);
    if (fread(base, 1, base_size, f) != base_size)
        abort();
    fclose(f);
    unlink(base_path);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    FILE *fp = fopen(path, "wb");
    if (!fp)
        return 0;
    fwrite(base, 1, base_size, fp);
    fclose(fp);
    reader r = {data, size};
    hid_t f = H5Fopen(path, H5F_ACC_RDWR, H5P_DEFAULT);
    if (f < 0)
        abort();
    edit(f, &r);
    H5Fclose(f);
    hrt_grid *g = (hrt_grid *)&g;
    hrt_error e = {-1, ""};
    int rc = hrt_grid_open(path, &g, &e);
    FUZZ_REQUIRE(fuzz_known_code(rc) && e.code == rc && (rc == HRT_OK) == (g != NULL));
    if (rc == HRT_OK) {
        fuzz_exercise(g, (unsigned)size);
        hrt_grid_close(g);
    } else {
        FUZZ_REQUIRE(rc == HRT_E_FORMAT || rc == HRT_E_VERSION);
        FUZZ_REQUIRE(strlen(e.message) > 10);
    }
    unlink(path);
    return 0;
}
