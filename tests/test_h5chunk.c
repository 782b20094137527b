/* The grid reader's own reading of one-chunk datasets (lib/core/h5chunk.c)
 * against HDF5's H5Dread (the reference: HDF5 itself), and the refusals
 * around it: a damaged chunk, a stream inflating beyond its chunk, and a
 * one-chunk dataset storing more than deflate can make of its bytes. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <hdf5.h>

#include "core/h5read.h"

#define NR 37
#define NC 53 /* 1961 values: not a multiple of 16, so the unshuffle's tail runs too */

static char path[256];

/* Values with structure (they compress) and every byte varying. */
static double value(size_t i) { return sin(0.37 * (double)i) * pow(10.0, (double)(i % 11) - 5.0) + 1e-3 * (double)i; }

/* Dataset name of type ftype, dims r x c, chunk ch (NULL: one chunk), filters: shuffle and deflate if packed,
 * always Fletcher-32; written from doubles (converted by HDF5). */
static void make(hid_t f, const char *name, hid_t ftype, hsize_t r, hsize_t c, const hsize_t *ch, int packed,
                 const double *v)
{
    hsize_t dims[2] = {r, c};
    hid_t s = H5Screate_simple(2, dims, NULL), p = H5Pcreate(H5P_DATASET_CREATE);
    H5Pset_chunk(p, 2, ch ? ch : dims);
    if (packed) {
        H5Pset_shuffle(p);
        H5Pset_deflate(p, 4);
    }
    H5Pset_fletcher32(p);
    hid_t d = H5Dcreate2(f, name, ftype, s, H5P_DEFAULT, p, H5P_DEFAULT);
    ck_assert(d >= 0);
    ck_assert(H5Dwrite(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v) >= 0);
    H5Dclose(d);
    H5Pclose(p);
    H5Sclose(s);
}

static void setup(void)
{
    snprintf(path, sizeof path, "/tmp/hrt_h5chunk_%d.h5", (int)getpid());
    double *v = malloc(4 * NR * NC * sizeof *v);
    ck_assert_ptr_nonnull(v);
    for (size_t i = 0; i < 4 * NR * NC; i++)
        v[i] = value(i);
    hid_t f = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    ck_assert(f >= 0);
    make(f, "f64", H5T_IEEE_F64LE, NR, NC, NULL, 1, v);
    make(f, "f64b", H5T_IEEE_F64LE, NR, NC, NULL, 1, v);
    make(f, "f32", H5T_IEEE_F32LE, NR, NC, NULL, 1, v);
    for (size_t i = 0; i < NR * NC; i++)
        v[i] = floor(1e4 * v[i]);
    make(f, "i32", H5T_STD_I32LE, NR, NC, NULL, 1, v);
    make(f, "plain", H5T_IEEE_F64LE, NR, NC, NULL, 0, v);
    hsize_t ch[2] = {8, NC};
    make(f, "chunks", H5T_IEEE_F64LE, NR, NC, ch, 1, v);
    make(f, "big", H5T_IEEE_F64LE, 2 * NR, NC, NULL, 1, v);
    for (size_t i = 0; i < 4 * NR * NC; i++) /* incompressible: a stored chunk larger than deflate's bound */
        v[i] = (double)rand() / RAND_MAX;
    make(f, "noise", H5T_IEEE_F64LE, 4 * NR, NC, NULL, 1, v);
    H5Fclose(f);
    free(v);
}

static void teardown(void) { unlink(path); }

/* trail_h5_read_one_chunk against H5Dread: the return code, and the same bytes where it reads. */
static int fast_matches(hid_t f, const char *name, int as_int)
{
    hid_t d = H5Dopen2(f, name, H5P_DEFAULT);
    ck_assert(d >= 0);
    hid_t s = H5Dget_space(d);
    size_t n = (size_t)H5Sget_simple_extent_npoints(s), sz = as_int ? sizeof(int) : sizeof(double);
    H5Sclose(s);
    unsigned char *a = malloc(n * sz), *b = malloc(n * sz);
    ck_assert(a && b);
    memset(a, 0x5a, n * sz);
    int fast = trail_h5_read_one_chunk(d, as_int, a);
    ck_assert(H5Dread(d, as_int ? H5T_NATIVE_INT : H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, b) >= 0);
    if (fast)
        ck_assert_msg(memcmp(a, b, n * sz) == 0, "%s: values differ from H5Dread's", name);
    free(a);
    free(b);
    H5Dclose(d);
    return fast;
}

START_TEST(test_same_as_hdf5)
{
    hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    ck_assert(f >= 0);
    ck_assert_msg(fast_matches(f, "f64", 0), "doubles, shuffled and deflated, not read by the one-chunk path");
    ck_assert_msg(fast_matches(f, "f32", 0), "floats, shuffled and deflated, not read by the one-chunk path");
    ck_assert_msg(fast_matches(f, "i32", 1), "integers, shuffled and deflated, not read by the one-chunk path");
    ck_assert_msg(fast_matches(f, "plain", 0), "doubles with a checksum only, not read by the one-chunk path");
    ck_assert_msg(!fast_matches(f, "chunks", 0), "a dataset of several chunks is left to H5Dread");
    ck_assert_msg(!fast_matches(f, "f64", 1), "doubles asked as integers are left to H5Dread");
    H5Fclose(f);
}
END_TEST

/* The stored bytes of dataset `from` written as the one chunk of `to`. */
static void move_chunk(hid_t f, const char *from, const char *to, size_t flip)
{
    hid_t d = H5Dopen2(f, from, H5P_DEFAULT);
    hsize_t off[2] = {0, 0}, n = H5Dget_storage_size(d);
    unsigned char *raw = malloc((size_t)n);
    uint32_t mask = 0;
    ck_assert(raw && H5Dread_chunk(d, H5P_DEFAULT, off, &mask, raw) >= 0);
    H5Dclose(d);
    if (flip)
        raw[flip] ^= 0x10;
    d = H5Dopen2(f, to, H5P_DEFAULT);
    ck_assert(H5Dwrite_chunk(d, H5P_DEFAULT, mask, off, (size_t)n, raw) >= 0);
    H5Dclose(d);
    free(raw);
}

/* trail_h5_numeric of dataset name: its code, and its message in msg. */
static int read_numeric(hid_t f, const char *name, char *msg, size_t cap)
{
    double *v = malloc(4 * NR * NC * sizeof *v);
    hsize_t dims[2] = {0, 0};
    hrt_error e;
    e.message[0] = '\0';
    int rc;
    H5E_BEGIN_TRY { rc = trail_h5_numeric(f, "test", name, 2, dims, 0, v, &e); }
    H5E_END_TRY;
    snprintf(msg, cap, "%s", e.message);
    free(v);
    return rc;
}

START_TEST(test_damaged_chunk_refused)
{
    hid_t f = H5Fopen(path, H5F_ACC_RDWR, H5P_DEFAULT);
    ck_assert(f >= 0);
    move_chunk(f, "f64", "f64", 200);  /* one bit flipped inside the deflated stream */
    move_chunk(f, "big", "f64b", 0);   /* a stream inflating to twice the chunk, its checksum valid */
    move_chunk(f, "noise", "f32", 0);  /* 16 times the chunk's values, incompressible */
    H5Fclose(f);
    f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
    char msg[512];
    int fast;
    double *v = malloc(NR * NC * sizeof *v);
    hid_t d = H5Dopen2(f, "f64", H5P_DEFAULT);
    H5E_BEGIN_TRY { fast = trail_h5_read_one_chunk(d, 0, v); }
    H5E_END_TRY;
    ck_assert_msg(!fast, "a damaged chunk read by the one-chunk path");
    H5Dclose(d);
    ck_assert_int_eq(read_numeric(f, "f64", msg, sizeof msg), HRT_E_FORMAT);
    ck_assert_msg(strstr(msg, "test/f64") && strstr(msg, "checksum"), "message: %s", msg);
    d = H5Dopen2(f, "f64b", H5P_DEFAULT);
    H5E_BEGIN_TRY { fast = trail_h5_read_one_chunk(d, 0, v); }
    H5E_END_TRY;
    ck_assert_msg(!fast, "a stream inflating beyond its chunk read by the one-chunk path");
    H5Dclose(d);
    free(v);
    /* a one-chunk dataset storing more than deflate makes of the chunk's
     * bytes at worst: refused before anything inflates it */
    int rc = read_numeric(f, "f32", msg, sizeof msg);
    ck_assert_msg(rc == HRT_E_FORMAT && strstr(msg, "inflates beyond its chunk"), "code %d, message: %s", rc, msg);
    H5Fclose(f);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("h5chunk");
    TCase *tc = tcase_create("read");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, test_same_as_hdf5);
    tcase_add_test(tc, test_damaged_chunk_refused);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
