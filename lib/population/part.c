/* hrtrail: parts of a population -- a specification, the chunks done and
 * their summaries -- merged exactly and saved as checksummed bytes, so that
 * separate processes (batch job arrays, MPI ranks, Python workers) can each
 * run some chunks and one of them combine the rest.
 *
 * Saved form (every integer little-endian, every double as its IEEE 754
 * bits in a 64-bit word), version 1:
 *   magic "HRTPART" 0x1a (8 bytes), u32 version, u32 words per summary
 *   layout (sizeof(hrt_pop_summary) / 8), u64 total length in bytes;
 *   the specification: IMF kind, m_lo, m_hi, alpha; SFH kind, t_start,
 *   t_end, tau, n_table and the table's times then rates; Z distribution
 *   kind, z, z_lo, z_hi, sigma_dex; n_stars, seed, chunk_size;
 *   the note: u64 length, its bytes padded with zeros to 8;
 *   u64 ranges, then (first, count) for each (sorted, disjoint, apart);
 *   u64 epochs, then each summary's words up to the HR counts and its
 *   nx * ny counts;
 *   u64 FNV-1a 64-bit hash of every byte before it.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "util/util.h"
#include "population/sampling.h"

#define PART_MAGIC "HRTPART\x1a"
#define PART_VERSION 1u
#define PART_NOTE_MAX 4096
#define SUMMARY_WORDS (sizeof(hrt_pop_summary) / 8)
#define SUMMARY_FIXED_WORDS (offsetof(hrt_pop_summary, hr_count) / 8)

_Static_assert(sizeof(hrt_pop_summary) % 8 == 0, "a summary is whole 64-bit words");
_Static_assert(offsetof(hrt_pop_summary, hr_count) % 8 == 0, "the HR counts start on a word");

typedef struct part_range {
    uint64_t first, count;
} part_range;

struct hrt_pop_part {
    hrt_pop_spec spec;    /* its table points into t_tab, r_tab */
    double *t_tab, *r_tab;
    char *note;
    size_t n_ages;
    hrt_pop_summary *sums;
    size_t n_ranges, cap_ranges;
    part_range *ranges;   /* sorted, disjoint, not touching */
};

/* ------------------------------------------------------------ words */

typedef struct wbuf {
    unsigned char *p; /* NULL: only count */
    size_t len, cap;
} wbuf;

static void put_u64(wbuf *w, uint64_t v)
{
    if (w->p && w->len + 8 <= w->cap)
        for (int i = 0; i < 8; i++) w->p[w->len + (size_t)i] = (unsigned char)(v >> (8 * i));
    w->len += 8;
}

static void put_f64(wbuf *w, double v)
{
    uint64_t u;
    memcpy(&u, &v, 8);
    put_u64(w, u);
}

typedef struct rbuf {
    const unsigned char *p;
    size_t len, at;
    int short_;
} rbuf;

static uint64_t get_u64(rbuf *r)
{
    uint64_t v = 0;
    if (r->len - r->at < 8) {
        r->short_ = 1;
        return 0;
    }
    for (int i = 0; i < 8; i++) v |= (uint64_t)r->p[r->at + (size_t)i] << (8 * i);
    r->at += 8;
    return v;
}

static double get_f64(rbuf *r)
{
    uint64_t u = get_u64(r);
    double v;
    memcpy(&v, &u, 8);
    return v;
}

/* FNV-1a, 64 bits (offset basis 14695981039346656037, prime 1099511628211). */
static uint64_t fnv1a64(const unsigned char *p, size_t n)
{
    uint64_t h = 14695981039346656037ull;
    for (size_t i = 0; i < n; i++) {
        h ^= p[i];
        h *= 1099511628211ull;
    }
    return h;
}

/* The specification in its saved words (also its identity: two parts merge
 * only if these words are equal), section by section: IMF, SFH, Z
 * distribution, number of stars, seed, chunk size. */
enum { SPEC_SECTIONS = 6 };
static const char *const spec_section_name[SPEC_SECTIONS] = {"IMF", "star-formation history", "metallicity distribution",
                                                             "number of stars", "seed", "chunk size"};

static void put_spec_section(wbuf *w, const hrt_pop_spec *s, int k)
{
    size_t nt = s->sfh.kind == HRT_SFH_TABLE ? s->sfh.n_table : 0;
    switch (k) {
    case 0:
        put_u64(w, (uint64_t)(int64_t)s->imf.kind);
        put_f64(w, s->imf.m_lo_msun);
        put_f64(w, s->imf.m_hi_msun);
        put_f64(w, s->imf.kind == HRT_IMF_POWER_LAW ? s->imf.alpha : 0.0);
        break;
    case 1:
        put_u64(w, (uint64_t)(int64_t)s->sfh.kind);
        put_f64(w, s->sfh.t_start_yr);
        put_f64(w, s->sfh.t_end_yr);
        put_f64(w, s->sfh.tau_yr);
        put_u64(w, nt);
        for (size_t i = 0; i < nt; i++) put_f64(w, s->sfh.table_t_yr[i]);
        for (size_t i = 0; i < nt; i++) put_f64(w, s->sfh.table_rate[i]);
        break;
    case 2:
        put_u64(w, (uint64_t)(int64_t)s->zdist.kind);
        put_f64(w, s->zdist.z);
        put_f64(w, s->zdist.z_lo);
        put_f64(w, s->zdist.z_hi);
        put_f64(w, s->zdist.sigma_dex);
        break;
    case 3: put_u64(w, s->n_stars); break;
    case 4: put_u64(w, s->seed); break;
    default: put_u64(w, s->chunk_size); break;
    }
}

static void put_spec(wbuf *w, const hrt_pop_spec *s)
{
    for (int k = 0; k < SPEC_SECTIONS; k++) put_spec_section(w, s, k);
}

static void put_summary(wbuf *w, const hrt_pop_summary *s)
{
    uint64_t words[SUMMARY_FIXED_WORDS];
    memcpy(words, s, sizeof words);
    for (size_t i = 0; i < SUMMARY_FIXED_WORDS; i++) put_u64(w, words[i]);
    for (uint64_t k = 0; k < s->hr.nx * s->hr.ny; k++) put_u64(w, s->hr_count[k]);
}

/* ------------------------------------------------------------ life */

static void part_clear(hrt_pop_part *p)
{
    free(p->t_tab);
    free(p->r_tab);
    free(p->note);
    free(p->sums);
    free(p->ranges);
    free(p);
}

void hrt_pop_part_free(hrt_pop_part *p)
{
    if (p) part_clear(p);
}

/* An empty part owning a copy of spec (with its table) and note. */
static int part_alloc(const hrt_pop_spec *spec, size_t n_ages, const char *note, hrt_pop_part **out, hrt_error *err)
{
    hrt_pop_part *p = calloc(1, sizeof *p);
    size_t nt = spec->sfh.kind == HRT_SFH_TABLE ? spec->sfh.n_table : 0, nl = strlen(note);
    if (p) {
        p->spec = *spec;
        p->n_ages = n_ages;
        p->sums = calloc(n_ages, sizeof *p->sums);
        p->note = malloc(nl + 1);
        p->t_tab = malloc((nt ? nt : 1) * sizeof(double));
        p->r_tab = malloc((nt ? nt : 1) * sizeof(double));
    }
    if (!p || !p->sums || !p->note || !p->t_tab || !p->r_tab) {
        if (p) part_clear(p);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part: out of memory for a part of %zu epochs", n_ages);
    }
    memcpy(p->note, note, nl + 1);
    if (nt) {
        memcpy(p->t_tab, spec->sfh.table_t_yr, nt * sizeof(double));
        memcpy(p->r_tab, spec->sfh.table_rate, nt * sizeof(double));
    }
    p->spec.sfh.table_t_yr = nt ? p->t_tab : NULL;
    p->spec.sfh.table_rate = nt ? p->r_tab : NULL;
    if (!nt) p->spec.sfh.n_table = 0;
    *out = p;
    return HRT_OK;
}

int hrt_pop_part_new(const hrt_pop_spec *spec, size_t n_ages, const double *ages_yr, const hrt_pop_hr *hr,
                     const char *note, hrt_pop_part **out, hrt_error *err)
{
    if (out) *out = NULL;
    if (!spec || !ages_yr || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_pop_part_new: %s is NULL", !spec ? "spec" : !ages_yr ? "ages_yr" : "out");
    if (n_ages == 0) return trail_set_error(err, HRT_E_INVALID, "hrt_pop_part_new: no epochs (n_ages 0)");
    if (!note) note = "";
    if (strlen(note) > PART_NOTE_MAX)
        return trail_set_error(err, HRT_E_INVALID, "hrt_pop_part_new: note of %zu bytes: at most %d", strlen(note),
                               PART_NOTE_MAX);
    int rc = hrt_pop_spec_check(spec, err);
    if (rc != HRT_OK) return rc;
    hrt_pop_part *p = NULL;
    if ((rc = part_alloc(spec, n_ages, note, &p, err)) != HRT_OK) return rc;
    for (size_t i = 0; i < n_ages; i++)
        if ((rc = hrt_pop_summary_init(&p->sums[i], ages_yr[i], hr, err)) != HRT_OK) {
            part_clear(p);
            return rc;
        }
    *out = p;
    return trail_set_error(err, HRT_OK, NULL);
}

/* ------------------------------------------------------------ chunk ranges */

/* The first range of a that overlaps one of b, as an error; HRT_OK if none. */
static int ranges_overlap(const part_range *a, size_t na, const part_range *b, size_t nb, const char *who, hrt_error *err)
{
    size_t i = 0, j = 0;
    while (i < na && j < nb) {
        uint64_t lo = a[i].first > b[j].first ? a[i].first : b[j].first;
        uint64_t ea = a[i].first + a[i].count, eb = b[j].first + b[j].count, hi = ea < eb ? ea : eb;
        if (lo < hi)
            return trail_set_error(err, HRT_E_INVALID, "%s: chunks %llu to %llu are in both parts (overlapping runs would "
                                                       "count their stars twice)", who, (unsigned long long)lo,
                                   (unsigned long long)(hi - 1));
        if (ea < eb)
            i++;
        else
            j++;
    }
    return HRT_OK;
}

/* dst's ranges united with src's (known disjoint), sorted, touching ones joined. */
static int ranges_union(hrt_pop_part *dst, const part_range *src, size_t ns, hrt_error *err)
{
    size_t n = dst->n_ranges + ns, k = 0, i = 0, j = 0;
    part_range *u = malloc((n ? n : 1) * sizeof *u);
    if (!u) return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part: out of memory for %zu chunk ranges", n);
    while (i < dst->n_ranges || j < ns) {
        part_range r = (j >= ns || (i < dst->n_ranges && dst->ranges[i].first < src[j].first)) ? dst->ranges[i++] : src[j++];
        if (k && u[k - 1].first + u[k - 1].count == r.first)
            u[k - 1].count += r.count;
        else
            u[k++] = r;
    }
    free(dst->ranges);
    dst->ranges = u;
    dst->n_ranges = dst->cap_ranges = k;
    return HRT_OK;
}

/* Range [first, first + n) clipped to the population's chunks. */
static part_range clip_range(const hrt_pop_part *p, uint64_t first, uint64_t n)
{
    uint64_t nc = hrt_pop_n_chunks(&p->spec);
    part_range r = {first < nc ? first : nc, 0};
    r.count = n < nc - r.first ? n : nc - r.first;
    return r;
}

int hrt_pop_part_add(hrt_pop_part *p, uint64_t chunk_first, uint64_t n_chunk, const hrt_pop_summary *sums,
                     hrt_error *err)
{
    if (!p || !sums) return trail_set_error(err, HRT_E_NULL, "hrt_pop_part_add: %s is NULL", !p ? "part" : "sums");
    part_range r = clip_range(p, chunk_first, n_chunk);
    int rc = r.count ? ranges_overlap(p->ranges, p->n_ranges, &r, 1, "hrt_pop_part_add", err) : HRT_OK;
    hrt_pop_summary *tmp = rc == HRT_OK ? malloc(p->n_ages * sizeof *tmp) : NULL;
    if (rc == HRT_OK && !tmp) rc = trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_add: out of memory");
    if (rc == HRT_OK) memcpy(tmp, p->sums, p->n_ages * sizeof *tmp);
    for (size_t i = 0; rc == HRT_OK && i < p->n_ages; i++) rc = hrt_pop_summary_merge(&tmp[i], &sums[i], err);
    if (rc == HRT_OK && r.count) rc = ranges_union(p, &r, 1, err);
    if (rc == HRT_OK) {
        memcpy(p->sums, tmp, p->n_ages * sizeof *tmp);
        trail_set_error(err, HRT_OK, NULL);
    }
    free(tmp);
    return rc;
}

int hrt_pop_part_run(const hrt_grid *g, hrt_pop_part *p, uint64_t chunk_first, uint64_t n_chunk, int n_threads,
                     hrt_error *err)
{
    if (!g || !p) return trail_set_error(err, HRT_E_NULL, "hrt_pop_part_run: %s is NULL", !g ? "grid" : "part");
    part_range r = clip_range(p, chunk_first, n_chunk);
    int rc = r.count ? ranges_overlap(p->ranges, p->n_ranges, &r, 1, "hrt_pop_part_run", err) : HRT_OK;
    hrt_pop_summary *tmp = rc == HRT_OK ? malloc(p->n_ages * sizeof *tmp) : NULL;
    if (rc == HRT_OK && !tmp) rc = trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_run: out of memory");
    for (size_t i = 0; rc == HRT_OK && i < p->n_ages; i++) rc = hrt_pop_summary_init(&tmp[i], p->sums[i].age_yr, &p->sums[i].hr, err);
    if (rc == HRT_OK && r.count) rc = hrt_pop_run(g, &p->spec, r.first, r.count, n_threads, p->n_ages, tmp, err);
    if (rc == HRT_OK) rc = hrt_pop_part_add(p, r.first, r.count, tmp, err);
    free(tmp);
    return rc;
}

/* ------------------------------------------------------------ merging */

/* 1 if section k of two specifications is the same, word for word (-1: no memory). */
static int same_section(const hrt_pop_spec *a, const hrt_pop_spec *b, int k)
{
    wbuf wa = {0}, wb = {0};
    put_spec_section(&wa, a, k);
    put_spec_section(&wb, b, k);
    if (wa.len != wb.len) return 0;
    wa.cap = wb.cap = wa.len;
    wa.p = malloc(wa.len), wb.p = malloc(wb.len);
    int same = -1;
    if (wa.p && wb.p) {
        wa.len = wb.len = 0;
        put_spec_section(&wa, a, k);
        put_spec_section(&wb, b, k);
        same = memcmp(wa.p, wb.p, wa.len) == 0;
    }
    free(wa.p), free(wb.p);
    return same;
}

/* HRT_OK if a and b describe the same population, epochs, binning and note. */
static int same_population(const hrt_pop_part *a, const hrt_pop_part *b, hrt_error *err)
{
    for (int k = 0; k < SPEC_SECTIONS; k++) {
        int same = same_section(&a->spec, &b->spec, k);
        if (same < 0) return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_merge: out of memory");
        if (!same)
            return trail_set_error(err, HRT_E_INVALID, "hrt_pop_part_merge: parts of different populations (their %s "
                                                       "differs) do not merge", spec_section_name[k]);
    }
    if (a->n_ages != b->n_ages)
        return trail_set_error(err, HRT_E_INVALID, "hrt_pop_part_merge: parts of %zu and %zu epochs do not merge", a->n_ages,
                               b->n_ages);
    for (size_t i = 0; i < a->n_ages; i++)
        if (memcmp(&a->sums[i].age_yr, &b->sums[i].age_yr, sizeof(double)) ||
            memcmp(&a->sums[i].hr, &b->sums[i].hr, sizeof(hrt_pop_hr)))
            return trail_set_error(err, HRT_E_INVALID, "hrt_pop_part_merge: epoch %zu: ages %.17g and %.17g yr or HR "
                                                       "binnings differ", i + 1, a->sums[i].age_yr, b->sums[i].age_yr);
    if (strcmp(a->note, b->note) != 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_pop_part_merge: parts with different notes ('%.200s' and "
                                                   "'%.200s') do not merge", a->note, b->note);
    return HRT_OK;
}

int hrt_pop_part_merge(hrt_pop_part *dst, const hrt_pop_part *src, hrt_error *err)
{
    if (!dst || !src) return trail_set_error(err, HRT_E_NULL, "hrt_pop_part_merge: %s is NULL", !dst ? "dst" : "src");
    if (dst == src) return trail_set_error(err, HRT_E_INVALID, "hrt_pop_part_merge: a part merged with itself");
    int rc = same_population(dst, src, err);
    if (rc == HRT_OK) rc = ranges_overlap(dst->ranges, dst->n_ranges, src->ranges, src->n_ranges, "hrt_pop_part_merge", err);
    hrt_pop_summary *tmp = rc == HRT_OK ? malloc(dst->n_ages * sizeof *tmp) : NULL;
    if (rc == HRT_OK && !tmp) rc = trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_merge: out of memory");
    if (rc == HRT_OK) memcpy(tmp, dst->sums, dst->n_ages * sizeof *tmp);
    for (size_t i = 0; rc == HRT_OK && i < dst->n_ages; i++) rc = hrt_pop_summary_merge(&tmp[i], &src->sums[i], err);
    if (rc == HRT_OK) rc = ranges_union(dst, src->ranges, src->n_ranges, err);
    if (rc == HRT_OK) {
        memcpy(dst->sums, tmp, dst->n_ages * sizeof *tmp);
        trail_set_error(err, HRT_OK, NULL);
    }
    free(tmp);
    return rc;
}

/* ------------------------------------------------------------ reading */

const hrt_pop_spec *hrt_pop_part_spec(const hrt_pop_part *p) { return p ? &p->spec : NULL; }
size_t hrt_pop_part_n_ages(const hrt_pop_part *p) { return p ? p->n_ages : 0; }
const hrt_pop_summary *hrt_pop_part_summary(const hrt_pop_part *p, size_t i)
{
    return p && i < p->n_ages ? &p->sums[i] : NULL;
}
const char *hrt_pop_part_note(const hrt_pop_part *p) { return p ? p->note : NULL; }
size_t hrt_pop_part_n_ranges(const hrt_pop_part *p) { return p ? p->n_ranges : 0; }

int hrt_pop_part_range(const hrt_pop_part *p, size_t i, uint64_t *first, uint64_t *count)
{
    if (!p || !first || !count) return HRT_E_NULL;
    if (i >= p->n_ranges) return HRT_E_INVALID;
    *first = p->ranges[i].first;
    *count = p->ranges[i].count;
    return HRT_OK;
}

uint64_t hrt_pop_part_chunks_done(const hrt_pop_part *p)
{
    uint64_t n = 0;
    for (size_t i = 0; p && i < p->n_ranges; i++) n += p->ranges[i].count;
    return n;
}

int hrt_pop_part_complete(const hrt_pop_part *p)
{
    return p && hrt_pop_part_chunks_done(p) == hrt_pop_n_chunks(&p->spec);
}

/* ------------------------------------------------------------ bytes */

static void put_part(wbuf *w, const hrt_pop_part *p)
{
    for (int i = 0; i < 8; i++) {
        if (w->p && w->len < w->cap) w->p[w->len] = (unsigned char)PART_MAGIC[i];
        w->len++;
    }
    put_u64(w, (uint64_t)PART_VERSION | (uint64_t)SUMMARY_WORDS << 32);
    put_u64(w, 0); /* total length, set after */
    put_spec(w, &p->spec);
    size_t nl = strlen(p->note);
    put_u64(w, nl);
    for (size_t i = 0; i < (nl + 7) / 8 * 8; i++) {
        if (w->p && w->len < w->cap) w->p[w->len] = i < nl ? (unsigned char)p->note[i] : 0;
        w->len++;
    }
    put_u64(w, p->n_ranges);
    for (size_t i = 0; i < p->n_ranges; i++) {
        put_u64(w, p->ranges[i].first);
        put_u64(w, p->ranges[i].count);
    }
    put_u64(w, p->n_ages);
    for (size_t i = 0; i < p->n_ages; i++) put_summary(w, &p->sums[i]);
}

int hrt_pop_part_save(const hrt_pop_part *p, void *buf, size_t cap, size_t *len, hrt_error *err)
{
    if (!p || !len || (!buf && cap)) return trail_set_error(err, HRT_E_NULL, "hrt_pop_part_save: %s is NULL",
                                                            !p ? "part" : !len ? "len" : "buf");
    wbuf w = {NULL, 0, 0};
    put_part(&w, p);
    *len = w.len + 8;
    if (cap < *len)
        return trail_set_error(err, HRT_E_BUFFER, "hrt_pop_part_save: the part needs %zu bytes, the buffer has %zu", *len,
                               cap);
    w = (wbuf){buf, 0, cap};
    put_part(&w, p);
    wbuf at = {buf, 16, cap}; /* the total length */
    put_u64(&at, *len);
    put_u64(&w, fnv1a64(buf, w.len));
    return trail_set_error(err, HRT_OK, NULL);
}

/* Magic, version, layout, length and checksum of saved bytes. */
static int load_header(rbuf *r, hrt_error *err)
{
    if (r->len < 32 || memcmp(r->p, PART_MAGIC, 8) != 0)
        return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: not a saved population part (no hrtrail part "
                                                  "header in its %zu bytes)", r->len);
    r->at = 8;
    uint64_t vw = get_u64(r), total = get_u64(r);
    if ((vw & 0xffffffffu) != PART_VERSION)
        return trail_set_error(err, HRT_E_VERSION, "hrt_pop_part_load: part format version %llu; this library reads "
                                                  "version %u", (unsigned long long)(vw & 0xffffffffu), PART_VERSION);
    if ((vw >> 32) != SUMMARY_WORDS)
        return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: summaries of %llu words; this library's have %zu "
                                                  "(a build with other limits wrote it)", (unsigned long long)(vw >> 32),
                               (size_t)SUMMARY_WORDS);
    if (total != r->len)
        return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: the part says it has %llu bytes, %zu were given "
                                                  "(truncated or padded file?)", (unsigned long long)total, r->len);
    rbuf sum = {r->p, r->len, r->len - 8, 0};
    if (get_u64(&sum) != fnv1a64(r->p, r->len - 8))
        return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: checksum mismatch: the part is damaged");
    r->len -= 8; /* the checksum is not content */
    return HRT_OK;
}

/* The specification: the IMF set up again from its kind, limits and slope. */
static int load_spec(rbuf *r, hrt_pop_spec *s, double **tt, double **tr, hrt_error *err)
{
    hrt_pop_spec_default(s);
    int32_t ik = (int32_t)get_u64(r);
    double lo = get_f64(r), hi = get_f64(r), alpha = get_f64(r);
    s->sfh.kind = (int32_t)get_u64(r);
    s->sfh.t_start_yr = get_f64(r);
    s->sfh.t_end_yr = get_f64(r);
    s->sfh.tau_yr = get_f64(r);
    uint64_t nt = get_u64(r);
    if (r->short_ || nt > (r->len - r->at) / 16)
        return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: specification truncated");
    *tt = malloc((nt ? nt : 1) * sizeof(double));
    *tr = malloc((nt ? nt : 1) * sizeof(double));
    if (!*tt || !*tr) return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_load: out of memory");
    for (uint64_t i = 0; i < nt; i++) (*tt)[i] = get_f64(r);
    for (uint64_t i = 0; i < nt; i++) (*tr)[i] = get_f64(r);
    s->sfh.n_table = nt;
    s->sfh.table_t_yr = nt ? *tt : NULL;
    s->sfh.table_rate = nt ? *tr : NULL;
    s->zdist.kind = (int32_t)get_u64(r);
    s->zdist.z = get_f64(r);
    s->zdist.z_lo = get_f64(r);
    s->zdist.z_hi = get_f64(r);
    s->zdist.sigma_dex = get_f64(r);
    s->n_stars = get_u64(r);
    s->seed = get_u64(r);
    s->chunk_size = get_u64(r);
    if (r->short_) return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: specification truncated");
    int rc = hrt_imf_init(&s->imf, ik, lo, hi, alpha, err);
    if (rc == HRT_OK) rc = hrt_pop_spec_check(s, err);
    if (rc != HRT_OK) return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: specification: %s", err ? err->message : "");
    return HRT_OK;
}

/* The note, checked to hold no zero byte. */
static int load_note(rbuf *r, char **note, hrt_error *err)
{
    uint64_t nl = get_u64(r), padded = (nl + 7) / 8 * 8;
    if (r->short_ || nl > PART_NOTE_MAX || padded > r->len - r->at)
        return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: note truncated or too long");
    *note = malloc(nl + 1);
    if (!*note) return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_load: out of memory");
    memcpy(*note, r->p + r->at, nl);
    (*note)[nl] = 0;
    r->at += padded;
    if (strlen(*note) != nl) return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: note holds a zero byte");
    return HRT_OK;
}

/* The chunk ranges: sorted, disjoint, apart, within the population. */
static int load_ranges(rbuf *r, hrt_pop_part *p, hrt_error *err)
{
    uint64_t n = get_u64(r), nc = hrt_pop_n_chunks(&p->spec), end = 0;
    if (r->short_ || n > (r->len - r->at) / 16) return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: chunk ranges truncated");
    p->ranges = malloc((n ? n : 1) * sizeof *p->ranges);
    if (!p->ranges) return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_load: out of memory");
    for (uint64_t i = 0; i < n; i++) {
        part_range g = {get_u64(r), 0};
        g.count = get_u64(r);
        if (g.count == 0 || g.first > nc || g.count > nc - g.first || (i && g.first <= end))
            return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: chunk range %llu (%llu, %llu) is empty, outside "
                                                      "the %llu chunks or not after the one before", (unsigned long long)i,
                                   (unsigned long long)g.first, (unsigned long long)g.count, (unsigned long long)nc);
        p->ranges[i] = g;
        end = g.first + g.count;
    }
    p->n_ranges = p->cap_ranges = n;
    return HRT_OK;
}

/* One summary: its fixed words, checked, then its HR counts. */
static int load_summary(rbuf *r, hrt_pop_summary *s, size_t i, hrt_error *err)
{
    uint64_t words[SUMMARY_FIXED_WORDS];
    for (size_t k = 0; k < SUMMARY_FIXED_WORDS; k++) words[k] = get_u64(r);
    if (r->short_) return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: summary %zu truncated", i + 1);
    memset(s, 0, sizeof *s);
    memcpy(s, words, sizeof words);
    if (trail_pop_summary_check(s, "hrt_pop_part_load: summary", err) != HRT_OK) return HRT_E_FORMAT;
    uint64_t nb = s->hr.nx * s->hr.ny;
    if (nb > (r->len - r->at) / 8) return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: summary %zu truncated", i + 1);
    for (uint64_t k = 0; k < nb; k++) s->hr_count[k] = get_u64(r);
    return HRT_OK;
}

static int load_body(rbuf *r, hrt_pop_part *p, hrt_error *err)
{
    int rc = load_spec(r, &p->spec, &p->t_tab, &p->r_tab, err);
    if (rc == HRT_OK) rc = load_note(r, &p->note, err);
    if (rc == HRT_OK) rc = load_ranges(r, p, err);
    if (rc != HRT_OK) return rc;
    uint64_t na = get_u64(r);
    if (r->short_ || na == 0 || na > (r->len - r->at) / (8 * SUMMARY_FIXED_WORDS))
        return trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: %llu epochs do not fit in the part",
                               (unsigned long long)na);
    p->n_ages = na;
    p->sums = malloc(na * sizeof *p->sums);
    if (!p->sums) return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_load: out of memory for %llu epochs",
                                         (unsigned long long)na);
    for (size_t i = 0; i < na && rc == HRT_OK; i++) {
        rc = load_summary(r, &p->sums[i], i, err);
        if (rc == HRT_OK && i && (memcmp(&p->sums[i].hr, &p->sums[0].hr, sizeof p->sums[0].hr) != 0))
            rc = trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: summaries with different HR binnings");
    }
    if (rc == HRT_OK && r->at != r->len)
        rc = trail_set_error(err, HRT_E_FORMAT, "hrt_pop_part_load: %zu bytes after the last summary", r->len - r->at);
    return rc;
}

int hrt_pop_part_load(const void *buf, size_t len, hrt_pop_part **out, hrt_error *err)
{
    if (out) *out = NULL;
    if (!buf || !out) return trail_set_error(err, HRT_E_NULL, "hrt_pop_part_load: %s is NULL", !buf ? "buf" : "out");
    rbuf r = {buf, len, 0, 0};
    int rc = load_header(&r, err);
    if (rc != HRT_OK) return rc;
    hrt_pop_part *p = calloc(1, sizeof *p);
    if (!p) return trail_set_error(err, HRT_E_NOMEM, "hrt_pop_part_load: out of memory");
    rc = load_body(&r, p, err);
    if (rc != HRT_OK) {
        part_clear(p);
        return rc;
    }
    *out = p;
    return trail_set_error(err, HRT_OK, NULL);
}
