/*
 * Parts of a population (hrt_pop_part_*) and catalogues (hrt_pop_catalogue_*): parts of
 * any split merge, in any order, to the bytes of one part doing every chunk; saved bytes
 * load back to the same bytes and every damaged byte is refused; overlaps, other
 * populations and notes are refused with their messages; a catalogue holds one row per
 * born star and epoch.  Every expected value here is one of the library's own runs
 * (self-consistency), no outside reference.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "hrtrail.h"

static const double ages[2] = {1e9, 6e9};

static hrt_grid *open_grid(void)
{
    hrt_grid *g = NULL;
    hrt_error err = {0};
    ck_assert_msg(hrt_grid_open(NULL, &g, &err) == HRT_OK, "hrt_grid_open(NULL): %s", err.message);
    return g;
}

/* A constant SFH, so some stars are unborn at the first epoch; 10 chunks of 1000 stars. */
static hrt_pop_spec spec_of(uint64_t seed)
{
    hrt_pop_spec s;
    hrt_error err = {0};
    hrt_pop_spec_default(&s);
    ck_assert_msg(hrt_imf_init(&s.imf, HRT_IMF_KROUPA_2001, 0.1, 40, 0, &err) == HRT_OK, "%s", err.message);
    s.sfh.kind = HRT_SFH_CONSTANT;
    s.sfh.t_start_yr = 0;
    s.sfh.t_end_yr = 5e9;
    s.n_stars = 10000;
    s.chunk_size = 1000;
    s.seed = seed;
    return s;
}

static hrt_pop_part *new_part(const hrt_pop_spec *s, const char *note)
{
    hrt_pop_part *p = NULL;
    hrt_error err = {0};
    hrt_pop_hr hr = {3.3, 4.9, -4, 6, 20, 20};
    ck_assert_msg(hrt_pop_part_new(s, 2, ages, &hr, note, &p, &err) == HRT_OK, "%s", err.message);
    return p;
}

static unsigned char *bytes_of(const hrt_pop_part *p, size_t *len)
{
    hrt_error err = {0};
    ck_assert_int_eq(hrt_pop_part_save(p, NULL, 0, len, &err), HRT_E_BUFFER);
    unsigned char *b = malloc(*len);
    ck_assert_msg(hrt_pop_part_save(p, b, *len, len, &err) == HRT_OK, "%s", err.message);
    return b;
}

static void run(const hrt_grid *g, hrt_pop_part *p, uint64_t first, uint64_t n, int threads)
{
    hrt_error err = {0};
    ck_assert_msg(hrt_pop_part_run(g, p, first, n, threads, &err) == HRT_OK, "%s", err.message);
}

START_TEST(test_split_merge_exact)
{
    hrt_grid *g = open_grid();
    hrt_pop_spec s = spec_of(5);
    hrt_pop_part *whole = new_part(&s, "grid-a"), *a = new_part(&s, "grid-a"), *b = new_part(&s, "grid-a"),
                 *c = new_part(&s, "grid-a");
    hrt_error err = {0};
    run(g, whole, 0, 10, 1);
    ck_assert(hrt_pop_part_complete(whole));
    run(g, a, 6, 4, 2); /* out of order, another thread count */
    run(g, b, 0, 3, 1);
    run(g, c, 3, 3, 2);
    ck_assert(!hrt_pop_part_complete(a));
    ck_assert_uint_eq(hrt_pop_part_n_ranges(a), 1);
    ck_assert_int_eq(hrt_pop_part_merge(a, b, &err), HRT_OK);
    ck_assert_uint_eq(hrt_pop_part_n_ranges(a), 2); /* 0-2 and 6-9 */
    ck_assert_int_eq(hrt_pop_part_merge(a, c, &err), HRT_OK);
    uint64_t f = 9, k = 9;
    ck_assert_uint_eq(hrt_pop_part_n_ranges(a), 1); /* joined */
    ck_assert_int_eq(hrt_pop_part_range(a, 0, &f, &k), HRT_OK);
    ck_assert(f == 0 && k == 10);
    ck_assert_int_eq(hrt_pop_part_range(a, 1, &f, &k), HRT_E_INVALID);
    ck_assert(hrt_pop_part_complete(a) && hrt_pop_part_chunks_done(a) == 10);
    size_t la, lw;
    unsigned char *ba = bytes_of(a, &la), *bw = bytes_of(whole, &lw);
    ck_assert_msg(la == lw && memcmp(ba, bw, la) == 0, "merged parts' bytes differ from one run's");
    for (size_t i = 0; i < 2; i++)
        ck_assert(memcmp(hrt_pop_part_summary(a, i), hrt_pop_part_summary(whole, i), sizeof(hrt_pop_summary)) == 0);
    /* the summaries are hrt_pop_run's */
    hrt_pop_summary sums[2];
    for (int i = 0; i < 2; i++) hrt_pop_summary_init(&sums[i], ages[i], &hrt_pop_part_summary(whole, 0)->hr, NULL);
    ck_assert_int_eq(hrt_pop_run(g, &s, 0, 10, 1, 2, sums, &err), HRT_OK);
    ck_assert(memcmp(sums, hrt_pop_part_summary(whole, 0), sizeof sums) == 0);
    ck_assert(sums[0].n_unborn > 0 && sums[1].n_unborn == 0);
    free(ba), free(bw);
    hrt_pop_part_free(whole), hrt_pop_part_free(a), hrt_pop_part_free(b), hrt_pop_part_free(c);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_refusals)
{
    hrt_grid *g = open_grid();
    hrt_pop_spec s = spec_of(5), s2 = spec_of(6);
    hrt_pop_part *a = new_part(&s, "x"), *b = new_part(&s, "x"), *other = new_part(&s2, "x"), *noted = new_part(&s, "y");
    hrt_error err = {0};
    run(g, a, 0, 4, 1);
    run(g, b, 3, 2, 1);
    size_t l0, l1;
    unsigned char *before = bytes_of(a, &l0);
    ck_assert_int_eq(hrt_pop_part_merge(a, b, &err), HRT_E_INVALID);
    ck_assert_msg(strstr(err.message, "chunks 3 to 3 are in both parts"), "%s", err.message);
    ck_assert_int_eq(hrt_pop_part_merge(a, other, &err), HRT_E_INVALID);
    ck_assert_msg(strstr(err.message, "different populations (their seed differs)"), "%s", err.message);
    ck_assert_int_eq(hrt_pop_part_merge(a, noted, &err), HRT_E_INVALID);
    ck_assert_msg(strstr(err.message, "different notes"), "%s", err.message);
    ck_assert_int_eq(hrt_pop_part_merge(a, a, &err), HRT_E_INVALID);
    ck_assert_int_eq(hrt_pop_part_run(g, a, 2, 1, 1, &err), HRT_E_INVALID);
    ck_assert_int_eq(hrt_pop_part_add(a, 1, 1, hrt_pop_part_summary(b, 0), &err), HRT_E_INVALID);
    unsigned char *after = bytes_of(a, &l1);
    ck_assert_msg(l0 == l1 && memcmp(before, after, l0) == 0, "a refused merge changed the part");
    ck_assert_int_eq(hrt_pop_part_merge(NULL, a, &err), HRT_E_NULL);
    hrt_pop_part *none = a;
    ck_assert_int_eq(hrt_pop_part_new(&s, 0, ages, NULL, NULL, &none, &err), HRT_E_INVALID);
    ck_assert_ptr_null(none);
    free(before), free(after);
    hrt_pop_part_free(a), hrt_pop_part_free(b), hrt_pop_part_free(other), hrt_pop_part_free(noted);
    hrt_pop_part_free(NULL);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_bytes_round_trip_and_damage)
{
    hrt_grid *g = open_grid();
    /* a table SFH: its points are copied into the part and saved with it */
    double tt[3] = {0, 2e9, 6e9}, tr[3] = {1, 3, 0};
    hrt_pop_spec s = spec_of(9);
    s.sfh.kind = HRT_SFH_TABLE, s.sfh.n_table = 3, s.sfh.table_t_yr = tt, s.sfh.table_rate = tr;
    hrt_pop_part *p = new_part(&s, "a note");
    tt[1] = 1e9; /* the part holds its own copy */
    run(g, p, 2, 5, 2);
    size_t len, len2;
    unsigned char *b = bytes_of(p, &len);
    hrt_pop_part *q = NULL;
    hrt_error err = {0};
    ck_assert_msg(hrt_pop_part_load(b, len, &q, &err) == HRT_OK, "%s", err.message);
    unsigned char *b2 = bytes_of(q, &len2);
    ck_assert(len == len2 && memcmp(b, b2, len) == 0);
    ck_assert_str_eq(hrt_pop_part_note(q), "a note");
    ck_assert(hrt_pop_part_spec(q)->sfh.table_t_yr[1] == 2e9 && hrt_pop_part_spec(q)->sfh.n_table == 3);
    /* every damaged byte (one bit flipped) is refused, most by the checksum */
    for (size_t i = 0; i < len; i += (i < 512 ? 1 : 61)) {
        b[i] ^= 0x10;
        hrt_pop_part *bad = NULL;
        int rc = hrt_pop_part_load(b, len, &bad, &err);
        ck_assert_msg(rc == HRT_E_FORMAT || rc == HRT_E_VERSION, "byte %zu flipped: loaded (%d)", i, rc);
        ck_assert_ptr_null(bad);
        b[i] ^= 0x10;
    }
    hrt_pop_part_free(q);
    ck_assert_int_eq(hrt_pop_part_load(b, len - 8, &q, &err), HRT_E_FORMAT);
    ck_assert_msg(strstr(err.message, "truncated or padded"), "%s", err.message);
    ck_assert_int_eq(hrt_pop_part_load(b, 7, &q, &err), HRT_E_FORMAT);
    ck_assert_int_eq(hrt_pop_part_load(NULL, 7, &q, &err), HRT_E_NULL);
    free(b), free(b2);
    hrt_pop_part_free(p);
    hrt_grid_close(g);
}
END_TEST

START_TEST(test_catalogue_rows)
{
    hrt_grid *g = open_grid();
    hrt_pop_spec s = spec_of(3);
    hrt_error err = {0};
    hrt_pop_catalogue *c = NULL;
    char path[64];
    snprintf(path, sizeof path, "/tmp/hrtrail-test-catalogue-%ld.csv", (long)getpid());
    ck_assert_int_eq(hrt_pop_catalogue_open(path, 7, &c, &err), HRT_E_INVALID);
    ck_assert_int_eq(hrt_pop_catalogue_open("/nonexistent-dir/x.h5", HRT_CATALOGUE_HDF5, &c, &err), HRT_E_IO);
    ck_assert_int_eq(hrt_pop_catalogue_open(path, HRT_CATALOGUE_CSV, &c, &err), HRT_OK);
    double m[1000], z[1000], t[1000], ea[1000];
    uint64_t id[1000];
    hrt_state st[1000];
    size_t n = 0, born = 0;
    ck_assert_int_eq(hrt_pop_draw(&s, 4, m, z, t, 1000, &n, &err), HRT_OK);
    for (size_t j = 0; j < n; j++)
        if (t[j] <= ages[0]) m[born] = m[j], t[born] = t[j], ea[born] = ages[0] - t[j], id[born++] = 4000 + j;
    hrt_eval(g, born, m, NULL, 0.014, ea, st, NULL);
    ck_assert_int_eq(hrt_pop_catalogue_add(c, ages[0], born, id, t, st, &err), HRT_OK);
    ck_assert_int_eq(hrt_pop_catalogue_add(c, ages[0], 1, NULL, t, st, &err), HRT_E_NULL);
    uint64_t rows = 0;
    ck_assert_int_eq(hrt_pop_catalogue_close(c, &rows, &err), HRT_OK);
    ck_assert_uint_eq(rows, born);
    ck_assert(born > 0 && born < n);
    FILE *f = fopen(path, "r");
    char line[4096];
    size_t lines = 0;
    while (fgets(line, sizeof line, f)) lines++;
    fclose(f);
    remove(path);
    ck_assert_uint_eq(lines, born + 1); /* a header and one line per star */
    (void)z;
    hrt_grid_close(g);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("population-parts");
    TCase *t = tcase_create("parts");
    tcase_set_timeout(t, 300);
    tcase_add_test(t, test_split_merge_exact);
    tcase_add_test(t, test_refusals);
    tcase_add_test(t, test_bytes_round_trip_and_damage);
    tcase_add_test(t, test_catalogue_rows);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    setvbuf(stdout, NULL, _IONBF, 0);
    SRunner *sr = srunner_create(suite());
    srunner_run_all(sr, CK_VERBOSE);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? EXIT_FAILURE : EXIT_SUCCESS;
}
