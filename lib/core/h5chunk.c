/* A dataset stored in one chunk through the filters a grid file uses
 * (Fletcher-32, with shuffle and deflate or without), read without HDF5's
 * filter pipeline: the chunk's stored bytes (H5Dread_chunk), their
 * Fletcher-32 checksum verified as HDF5 verifies it, inflated by zlib into
 * a buffer of exactly the chunk's size (so a stream that inflates beyond it
 * is refused, not followed), unshuffled, and converted from little-endian
 * IEEE floats or 32-bit integers.  The same values as H5Dread; opening
 * the default grid takes 1.95e9 instructions instead of 2.31e9 (HDF5's
 * byte-by-byte unshuffle and its copies are most of the difference; zlib's
 * inflate, about 1e9, is the same either way).
 *
 * Anything else, and anything that does not check out (a checksum that
 * does not match, a stream that does not inflate to the chunk's size),
 * is left to H5Dread, whose answer and error are the reader's: this path
 * only ever accepts what HDF5 would accept, never refuses on its own.
 * Called inside H5E_BEGIN_TRY / H5E_END_TRY (trail_file_read). */
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <hdf5.h>
#include <zlib.h>

#include "core/h5read.h"

/* HDF5's Fletcher-32 (H5_checksum_fletcher32): sums of big-endian 16-bit
 * words, folded every 360 words, an odd last byte as the high byte.  The
 * folds must happen where HDF5's do (they decide between 0 and 0xffff);
 * inside a block of t words the two running sums are taken in closed form,
 *   s2 += t s1 + sum (t - i) w_i,  s1 += sum w_i  (i = 0 .. t - 1),
 * which is HDF5's word-by-word recurrence, modulo 2^32 as its sums are. */
#if defined(__GNUC__) && !defined(__clang__)
__attribute__((optimize("tree-vectorize"))) /* the block sums vectorise; -O2 alone leaves them scalar */
#endif
static uint32_t fletcher32(const uint8_t *data, size_t nbytes)
{
    size_t len = nbytes / 2;
    uint32_t s1 = 0, s2 = 0;
    while (len) {
        uint32_t t = len > 360 ? 360 : (uint32_t)len, a = 0, b = 0;
        len -= t;
        for (uint32_t i = 0; i < t; i++) {
            uint32_t w = (uint32_t)data[2 * i] << 8 | data[2 * i + 1];
            a += w;
            b += (t - i) * w;
        }
        data += 2 * t;
        s2 += t * s1 + b;
        s1 += a;
        s1 = (s1 & 0xffff) + (s1 >> 16);
        s2 = (s2 & 0xffff) + (s2 >> 16);
    }
    if (nbytes % 2) {
        s1 += (uint32_t)data[0] << 8;
        s2 += s1;
        s1 = (s1 & 0xffff) + (s1 >> 16);
        s2 = (s2 & 0xffff) + (s2 >> 16);
    }
    s1 = (s1 & 0xffff) + (s1 >> 16);
    s2 = (s2 & 0xffff) + (s2 >> 16);
    return s2 << 16 | s1;
}

enum { F_SHUFFLE = 1, F_DEFLATE = 2 };

/* The filters, in the order they were applied when writing: [shuffle]
 * [deflate] Fletcher-32 (HDF5 marks shuffle and deflate optional: the
 * chunk's filter mask must then say each was applied).  -1 for any other
 * pipeline. */
static int pipeline(hid_t dcpl)
{
    int n = H5Pget_nfilters(dcpl), flags = 0, last = -1;
    for (int i = 0; i < n; i++) {
        unsigned fl = 0, config = 0, cd[8];
        size_t ncd = 8;
        H5Z_filter_t id = H5Pget_filter2(dcpl, (unsigned)i, &fl, &ncd, cd, 0, NULL, &config);
        int rank = id == H5Z_FILTER_SHUFFLE ? 0 : id == H5Z_FILTER_DEFLATE ? 1 : id == H5Z_FILTER_FLETCHER32 ? 2 : -1;
        if (rank <= last || (rank == 2 && (fl & H5Z_FLAG_OPTIONAL)))
            return -1;
        last = rank;
        flags |= rank == 0 ? F_SHUFFLE : rank == 1 ? F_DEFLATE : 0;
    }
    return last == 2 ? flags : -1;
}

/* Element size of the file type this path converts: 8 (little-endian
 * IEEE double), 4 (float, or int32 when as_int), 0 for any other. */
static size_t element_size(hid_t d, int as_int)
{
    hid_t t = H5Dget_type(d);
    size_t sz = 0;
    if (t < 0)
        return 0;
    if (as_int) {
        if (H5Tequal(t, H5T_STD_I32LE) > 0 && H5Tequal(H5T_NATIVE_INT, H5T_STD_I32LE) > 0)
            sz = 4;
    } else if (H5Tequal(H5T_NATIVE_DOUBLE, H5T_IEEE_F64LE) > 0 && H5Tequal(H5T_NATIVE_FLOAT, H5T_IEEE_F32LE) > 0) {
        if (H5Tequal(t, H5T_IEEE_F64LE) > 0)
            sz = 8;
        else if (H5Tequal(t, H5T_IEEE_F32LE) > 0)
            sz = 4;
    }
    H5Tclose(t);
    return sz;
}

/* Points of d if its one chunk is exactly its extent (no edge padding), else 0. */
static size_t one_chunk_points(hid_t d, hid_t dcpl)
{
    hsize_t chunk[8], dims[8];
    if (H5Pget_layout(dcpl) != H5D_CHUNKED)
        return 0;
    int rank = H5Pget_chunk(dcpl, 8, chunk);
    hid_t s = H5Dget_space(d);
    int srank = s >= 0 ? H5Sget_simple_extent_dims(s, dims, NULL) : -1;
    if (s >= 0)
        H5Sclose(s);
    if (rank < 1 || rank != srank)
        return 0;
    size_t n = 1;
    for (int k = 0; k < rank; k++) {
        if (chunk[k] != dims[k] || dims[k] == 0)
            return 0;
        n *= (size_t)dims[k];
    }
    return n;
}

#ifdef __SSE2__
#include <emmintrin.h>
/* 16 elements of 8 bytes from the byte planes p[0..7] (16 bytes each):
 * a transpose by interleaving bytes, pairs and quads. */
static void unshuffle16x8(const uint8_t *in, size_t n, size_t i, uint8_t *out)
{
    __m128i p[8], t[8], u[8];
    for (int k = 0; k < 8; k++)
        p[k] = _mm_loadu_si128((const __m128i *)(in + (size_t)k * n + i));
    for (int k = 0; k < 4; k++) {
        t[2 * k] = _mm_unpacklo_epi8(p[2 * k], p[2 * k + 1]);     /* elements 0-7, planes 2k, 2k+1 */
        t[2 * k + 1] = _mm_unpackhi_epi8(p[2 * k], p[2 * k + 1]); /* elements 8-15 */
    }
    for (int h = 0; h < 2; h++) { /* elements 0-7, 8-15 */
        u[4 * h] = _mm_unpacklo_epi16(t[h], t[2 + h]);         /* planes 0-3, elements +0..3 */
        u[4 * h + 1] = _mm_unpackhi_epi16(t[h], t[2 + h]);     /* planes 0-3, elements +4..7 */
        u[4 * h + 2] = _mm_unpacklo_epi16(t[4 + h], t[6 + h]); /* planes 4-7, elements +0..3 */
        u[4 * h + 3] = _mm_unpackhi_epi16(t[4 + h], t[6 + h]); /* planes 4-7, elements +4..7 */
    }
    for (int q = 0; q < 4; q++) { /* elements 4q .. 4q + 3 */
        const __m128i lo = u[(q / 2) * 4 + (q % 2)], hi = u[(q / 2) * 4 + 2 + (q % 2)];
        _mm_storeu_si128((__m128i *)(out + 8 * (4 * (size_t)q + i)), _mm_unpacklo_epi32(lo, hi));
        _mm_storeu_si128((__m128i *)(out + 8 * (4 * (size_t)q + i) + 16), _mm_unpackhi_epi32(lo, hi));
    }
}

/* 16 elements of 4 bytes from the byte planes p[0..3]. */
static void unshuffle16x4(const uint8_t *in, size_t n, size_t i, uint8_t *out)
{
    __m128i p[4], t[4];
    for (int k = 0; k < 4; k++)
        p[k] = _mm_loadu_si128((const __m128i *)(in + (size_t)k * n + i));
    t[0] = _mm_unpacklo_epi8(p[0], p[1]);
    t[1] = _mm_unpackhi_epi8(p[0], p[1]);
    t[2] = _mm_unpacklo_epi8(p[2], p[3]);
    t[3] = _mm_unpackhi_epi8(p[2], p[3]);
    for (int h = 0; h < 2; h++) {
        _mm_storeu_si128((__m128i *)(out + 4 * (i + 8 * (size_t)h)), _mm_unpacklo_epi16(t[h], t[2 + h]));
        _mm_storeu_si128((__m128i *)(out + 4 * (i + 8 * (size_t)h) + 16), _mm_unpackhi_epi16(t[h], t[2 + h]));
    }
}
#endif

/* in (n elements of sz bytes as byte planes: HDF5's shuffle) -> out. */
static void unshuffle(const uint8_t *in, size_t n, size_t sz, uint8_t *out)
{
    size_t i = 0;
#ifdef __SSE2__
    for (; i + 16 <= n && (sz == 8 || sz == 4); i += 16) {
        if (sz == 8)
            unshuffle16x8(in, n, i, out);
        else
            unshuffle16x4(in, n, i, out);
    }
#endif
    for (; i < n; i++)
        for (size_t b = 0; b < sz; b++)
            out[i * sz + b] = in[b * n + i];
}

/* The raw bytes of the one chunk, their checksum verified; inflated when
 * deflated.  Returns the n * sz bytes of values (shuffled or not), owned
 * through *own, or NULL. */
static const uint8_t *chunk_bytes(hid_t d, int flags, size_t nbytes, uint8_t **own)
{
    /* the one chunk's stored size: HDF5 1.10's H5Dget_chunk_storage_size
     * answers 0 for a dataset of one chunk, H5Dget_storage_size the bytes
     * H5Dread_chunk writes */
    hsize_t off[8] = {0}, stored = H5Dget_storage_size(d);
    uint32_t mask = 0;
    *own = NULL;
    if (stored <= 4 ||
        (!(flags & F_DEFLATE) && stored != (hsize_t)nbytes + 4))
        return NULL;
    uint8_t *raw = malloc((size_t)stored);
    if (!raw || H5Dread_chunk(d, H5P_DEFAULT, off, &mask, raw) < 0 || mask != 0) {
        free(raw);
        return NULL;
    }
    size_t len = (size_t)stored - 4;
    const uint8_t *c = raw + len;
    uint32_t want = (uint32_t)c[0] | (uint32_t)c[1] << 8 | (uint32_t)c[2] << 16 | (uint32_t)c[3] << 24;
    if (fletcher32(raw, len) != want) {
        free(raw);
        return NULL;
    }
    if (!(flags & F_DEFLATE)) {
        *own = raw;
        return raw;
    }
    uint8_t *out = len <= UINT32_MAX && nbytes <= UINT32_MAX ? malloc(nbytes) : NULL;
    z_stream zs;
    memset(&zs, 0, sizeof zs);
    int ok = out && inflateInit(&zs) == Z_OK;
    if (ok) {
        zs.next_in = raw;
        zs.avail_in = (uInt)len;
        zs.next_out = out;
        zs.avail_out = (uInt)nbytes;
        ok = inflate(&zs, Z_FINISH) == Z_STREAM_END && zs.total_out == nbytes;
        inflateEnd(&zs);
    }
    free(raw);
    if (!ok) {
        free(out);
        return NULL;
    }
    *own = out;
    return out;
}

int trail_h5_read_one_chunk(hid_t d, int as_int, void *buf)
{
    hid_t dcpl = H5Dget_create_plist(d);
    if (dcpl < 0)
        return 0;
    int flags = pipeline(dcpl);
    size_t n = flags >= 0 ? one_chunk_points(d, dcpl) : 0;
    H5Pclose(dcpl);
    size_t sz = n ? element_size(d, as_int) : 0;
    if (!sz)
        return 0;
    uint8_t *own;
    const uint8_t *v = chunk_bytes(d, flags, n * sz, &own);
    if (!v)
        return 0;
    int wide = !as_int && sz == 4; /* floats to doubles */
    uint8_t *plain = (uint8_t *)buf;
    if (wide) {
        plain = (flags & F_SHUFFLE) ? malloc(n * sz) : NULL;
        if ((flags & F_SHUFFLE) && !plain) {
            free(own);
            return 0;
        }
    }
    if (flags & F_SHUFFLE)
        unshuffle(v, n, sz, plain);
    else if (!wide)
        memcpy(plain, v, n * sz);
    if (wide) {
        const uint8_t *src = (flags & F_SHUFFLE) ? plain : v;
        double *out = buf;
        for (size_t i = 0; i < n; i++) {
            float f;
            memcpy(&f, src + 4 * i, sizeof f);
            out[i] = (double)f;
        }
        if (flags & F_SHUFFLE)
            free(plain);
    }
    free(own);
    return 1;
}
