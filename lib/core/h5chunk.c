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

#ifdef __SSE2__
#include <emmintrin.h>
#endif

/* The sums of one block of t words (big-endian 16-bit) from data:
 * *a = sum w_i, *b = sum (t - i) w_i, modulo 2^32. */
static void block_sums(const uint8_t *data, uint32_t t, uint32_t *a, uint32_t *b)
{
    uint32_t sa = 0, sb = 0, i = 0;
#ifdef __SSE2__
    /* eight words a step, lane l holding words 8s + l: at each step
     * A += W_s, then B += A, so that B = sum_s (S - s) W_s after S steps;
     * sum (t1 - i) w_i = 8 sum_l B_l - sum_l l A_l for the t1 = 8 S words */
    uint32_t steps = t / 8;
    if (steps) {
        const __m128i zero = _mm_setzero_si128();
        __m128i a_lo = zero, a_hi = zero, b_lo = zero, b_hi = zero;
        for (uint32_t s = 0; s < steps; s++) {
            __m128i v = _mm_loadu_si128((const __m128i *)(data + 16 * (size_t)s));
            v = _mm_or_si128(_mm_slli_epi16(v, 8), _mm_srli_epi16(v, 8)); /* big-endian words */
            a_lo = _mm_add_epi32(a_lo, _mm_unpacklo_epi16(v, zero));    /* lanes 0-3 */
            a_hi = _mm_add_epi32(a_hi, _mm_unpackhi_epi16(v, zero));    /* lanes 4-7 */
            b_lo = _mm_add_epi32(b_lo, a_lo);
            b_hi = _mm_add_epi32(b_hi, a_hi);
        }
        uint32_t av[8], bv[8];
        _mm_storeu_si128((__m128i *)av, a_lo);
        _mm_storeu_si128((__m128i *)(av + 4), a_hi);
        _mm_storeu_si128((__m128i *)bv, b_lo);
        _mm_storeu_si128((__m128i *)(bv + 4), b_hi);
        for (uint32_t l = 0; l < 8; l++) {
            sa += av[l];
            sb += 8 * bv[l] - l * av[l];
        }
        i = 8 * steps;
    }
#endif
    /* the rest (t2 = t - i words): the words before it gain t2 in weight */
    uint32_t t2 = t - i;
    sb += t2 * sa;
    for (uint32_t k = 0; k < t2; k++) {
        uint32_t w = (uint32_t)data[2 * (i + k)] << 8 | data[2 * (i + k) + 1];
        sa += w;
        sb += (t2 - k) * w;
    }
    *a = sa;
    *b = sb;
}

/* HDF5's Fletcher-32 (H5_checksum_fletcher32): sums of big-endian 16-bit
 * words, folded every 360 words, an odd last byte as the high byte.  The
 * folds must happen where HDF5's do (they decide between 0 and 0xffff);
 * inside a block of t words the two running sums are taken in closed form,
 *   s2 += t s1 + sum (t - i) w_i,  s1 += sum w_i  (i = 0 .. t - 1),
 * which is HDF5's word-by-word recurrence, modulo 2^32 as its sums are. */
static uint32_t fletcher32(const uint8_t *data, size_t nbytes)
{
    size_t len = nbytes / 2;
    uint32_t s1 = 0, s2 = 0;
    while (len) {
        uint32_t t = len > 360 ? 360 : (uint32_t)len, a, b;
        len -= t;
        block_sums(data, t, &a, &b);
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

/* The stored bytes of one chunk (raw[0 .. len - 1], its Fletcher-32 last),
 * checksum verified (when verify) and inflated when deflated into exactly
 * nbytes.  Returns the nbytes of values (shuffled or not): raw itself when
 * not deflated, else a new buffer owned through *own; NULL if anything
 * does not check out. */
static const uint8_t *chunk_decode(const uint8_t *raw, size_t stored, int flags, size_t nbytes, int verify,
                                   uint8_t **own)
{
    *own = NULL;
    if (stored <= 4 || (!(flags & F_DEFLATE) && stored != nbytes + 4))
        return NULL;
    size_t len = stored - 4;
    const uint8_t *c = raw + len;
    uint32_t want = (uint32_t)c[0] | (uint32_t)c[1] << 8 | (uint32_t)c[2] << 16 | (uint32_t)c[3] << 24;
    if (verify && fletcher32(raw, len) != want)
        return NULL;
    if (!(flags & F_DEFLATE))
        return raw;
    uint8_t *out = len <= UINT32_MAX && nbytes <= UINT32_MAX ? malloc(nbytes ? nbytes : 1) : NULL;
    z_stream zs;
    memset(&zs, 0, sizeof zs);
    int ok = out && inflateInit(&zs) == Z_OK;
    if (ok) {
        zs.next_in = (Bytef *)(uintptr_t)raw; /* zlib's API is not const; inflate only reads it */
        zs.avail_in = (uInt)len;
        zs.next_out = out;
        zs.avail_out = (uInt)nbytes;
        ok = inflate(&zs, Z_FINISH) == Z_STREAM_END && zs.total_out == nbytes;
        inflateEnd(&zs);
    }
    if (!ok) {
        free(out);
        return NULL;
    }
    *own = out;
    return out;
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
    if (stored <= 4 || (!(flags & F_DEFLATE) && stored != (hsize_t)nbytes + 4))
        return NULL;
    uint8_t *raw = malloc((size_t)stored);
    if (!raw || H5Dread_chunk(d, H5P_DEFAULT, off, &mask, raw) < 0 || mask != 0) {
        free(raw);
        return NULL;
    }
    uint8_t *out;
    const uint8_t *v = chunk_decode(raw, (size_t)stored, flags, nbytes, 1, &out);
    if (v == raw) {
        *own = raw;
        return raw;
    }
    free(raw);
    *own = out;
    return v;
}

/* n values of sz bytes (shuffled when flags say so) -> buf as int
 * (as_int) or double; 0 when out of memory. */
static int values_out(const uint8_t *v, size_t n, size_t sz, int flags, int as_int, void *buf)
{
    int wide = !as_int && sz == 4; /* floats to doubles */
    uint8_t *plain = (uint8_t *)buf;
    if (wide) {
        plain = (flags & F_SHUFFLE) ? malloc(n * sz + 1) : NULL;
        if ((flags & F_SHUFFLE) && !plain)
            return 0;
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
    return 1;
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
    int ok = values_out(v, n, sz, flags, as_int, buf);
    free(own);
    return ok;
}

/* ---- kept datasets: stored bytes verified at open, decoded later ---------- */

struct trail_h5_kept {
    size_t n, sz, per;  /* points, bytes per point, points per chunk */
    int flags, as_int;
    size_t n_chunks;
    size_t *start;      /* [n_chunks + 1]: chunk c is bytes[start[c] .. start[c + 1]) (its checksum last) */
    uint8_t *bytes;
    double *values;     /* instead: the values read at open (as_int: ints) */
};

/* Points of a 1-D chunked dataset d of chunks of *per points, or 0. */
static size_t rank1_points(hid_t d, hid_t dcpl, size_t *per)
{
    hsize_t chunk[1], dims[1];
    if (H5Pget_layout(dcpl) != H5D_CHUNKED || H5Pget_chunk(dcpl, 1, chunk) != 1)
        return 0;
    hid_t s = H5Dget_space(d);
    int rank = s >= 0 ? H5Sget_simple_extent_ndims(s) : -1;
    if (rank == 1)
        H5Sget_simple_extent_dims(s, dims, NULL);
    if (s >= 0)
        H5Sclose(s);
    if (rank != 1 || dims[0] == 0 || chunk[0] == 0)
        return 0;
    *per = (size_t)chunk[0];
    return (size_t)dims[0];
}

/* Every chunk's stored bytes into k (k->n_chunks set), each checksum
 * verified: 1, or 0 if any chunk does not check out or is missing. */
static int keep_chunks(hid_t d, trail_h5_kept *k)
{
    size_t total = 0, cap = 0;
    k->start = malloc((k->n_chunks + 1) * sizeof *k->start);
    if (!k->start)
        return 0;
    for (size_t c = 0; c < k->n_chunks; c++) {
        hsize_t off[1] = {(hsize_t)(c * k->per)}, stored = 0;
        /* HDF5 1.10's H5Dget_chunk_storage_size answers 0 for a dataset of one chunk */
        if (k->n_chunks == 1)
            stored = H5Dget_storage_size(d);
        else if (H5Dget_chunk_storage_size(d, off, &stored) < 0)
            return 0;
        size_t nb = k->per * k->sz;
        if (stored <= 4 || (!(k->flags & F_DEFLATE) && stored != (hsize_t)nb + 4))
            return 0;
        if (total + (size_t)stored > cap) {
            cap = 2 * (total + (size_t)stored);
            uint8_t *p = realloc(k->bytes, cap);
            if (!p)
                return 0;
            k->bytes = p;
        }
        uint32_t mask = 0;
        uint8_t *raw = k->bytes + total;
        if (H5Dread_chunk(d, H5P_DEFAULT, off, &mask, raw) < 0 || mask != 0)
            return 0;
        size_t len = (size_t)stored - 4;
        const uint8_t *t = raw + len;
        uint32_t want = (uint32_t)t[0] | (uint32_t)t[1] << 8 | (uint32_t)t[2] << 16 | (uint32_t)t[3] << 24;
        if (fletcher32(raw, len) != want)
            return 0;
        k->start[c] = total;
        total += (size_t)stored;
    }
    k->start[k->n_chunks] = total;
    return 1;
}

int trail_h5_keep(hid_t d, int as_int, trail_h5_kept **out)
{
    *out = NULL;
    hid_t dcpl = H5Dget_create_plist(d);
    if (dcpl < 0)
        return 0;
    trail_h5_kept *k = calloc(1, sizeof *k);
    if (!k) {
        H5Pclose(dcpl);
        return -1;
    }
    k->as_int = as_int;
    k->flags = pipeline(dcpl);
    k->n = k->flags >= 0 ? rank1_points(d, dcpl, &k->per) : 0;
    H5Pclose(dcpl);
    k->sz = k->n ? element_size(d, as_int) : 0;
    int ok = k->sz > 0;
    if (ok) {
        k->n_chunks = (k->n + k->per - 1) / k->per;
        ok = keep_chunks(d, k);
    }
    if (!ok) {
        trail_h5_kept_free(k);
        return 0;
    }
    *out = k;
    return 1;
}

int trail_h5_keep_values(size_t n, int as_int, void *values, trail_h5_kept **out)
{
    *out = calloc(1, sizeof **out);
    if (!*out)
        return 0;
    (*out)->n = n;
    (*out)->as_int = as_int;
    (*out)->values = values;
    return 1;
}

size_t trail_h5_kept_points(const trail_h5_kept *k) { return k ? k->n : 0; }

size_t trail_h5_kept_bytes(const trail_h5_kept *k)
{
    if (!k)
        return 0;
    return sizeof *k + (k->values ? k->n * (k->as_int ? sizeof(int) : sizeof(double))
                                  : k->start[k->n_chunks] + (k->n_chunks + 1) * sizeof *k->start);
}

int trail_h5_kept_decode(const trail_h5_kept *k, void *buf)
{
    size_t vb = k->as_int ? sizeof(int) : sizeof(double);
    if (k->values) {
        memcpy(buf, k->values, k->n * vb);
        return 1;
    }
    size_t nb = k->per * k->sz;
    uint8_t *tmp = k->n % k->per ? malloc(k->per * vb) : NULL; /* the last chunk, partly beyond the extent */
    if (k->n % k->per && !tmp)
        return 0;
    int ok = 1;
    for (size_t c = 0; c < k->n_chunks && ok; c++) {
        uint8_t *own;
        const uint8_t *v = chunk_decode(k->bytes + k->start[c], k->start[c + 1] - k->start[c], k->flags, nb, 0, &own);
        size_t first = c * k->per, m = k->n - first < k->per ? k->n - first : k->per;
        /* a whole chunk's values (the last may reach beyond the extent) */
        uint8_t *dst = m == k->per ? (uint8_t *)buf + first * vb : tmp;
        ok = v && values_out(v, k->per, k->sz, k->flags, k->as_int, dst);
        if (ok && dst == tmp)
            memcpy((uint8_t *)buf + first * vb, tmp, m * vb);
        free(own);
    }
    free(tmp);
    return ok;
}

void trail_h5_kept_free(trail_h5_kept *k)
{
    if (!k)
        return;
    free(k->start);
    free(k->bytes);
    free(k->values);
    free(k);
}
