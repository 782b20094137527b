/* C reference for the binding tests: the same calls the bindings make,
 * straight from C, written as raw bytes for bit-for-bit comparison.
 *
 *   c_reference layout                    offsetof/sizeof of the public structs
 *   c_reference eval GRID IN OUT          IN: n x (mass_msun, z, age_yr) float64;
 *                                         OUT.zarr: hrt_eval with the z array,
 *                                         OUT.zall: hrt_eval with z = NULL, z_all = IN[0].z
 *   c_reference star GRID MASS Z AGES OUT AGES: float64 ages; OUT.at: hrt_star_at of each,
 *                                         OUT.track: every EEP state, OUT.phases: the spans,
 *                                         OUT.keypoints: keypoint ages (float64)
 *   c_reference isochrone GRID AGE Z OUT  OUT: the isochrone's states
 *   c_reference time GRID IN REPEAT ZALL  hrt_eval on IN (as for eval) REPEAT times into one
 *                                         buffer, fastest run printed; ZALL "-" uses the z
 *                                         column, a number passes z = NULL and that z_all
 *
 * Return codes and messages go to stdout, one "key value..." line each;
 * floats are printed with %a (exact). */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "hrtrail.h"
#include "state_layout.h"

static int fail(const char *what)
{
    fprintf(stderr, "c_reference: %s\n", what);
    return 1;
}

static double *read_doubles(const char *path, size_t *n)
{
    FILE *f = fopen(path, "rb");
    if (!f)
        return NULL;
    fseek(f, 0, SEEK_END);
    long bytes = ftell(f);
    fseek(f, 0, SEEK_SET);
    double *v = malloc(bytes > 0 ? (size_t)bytes : 1);
    *n = bytes > 0 ? (size_t)bytes / sizeof(double) : 0;
    if (v && fread(v, sizeof(double), *n, f) != *n) {
        free(v);
        v = NULL;
    }
    fclose(f);
    return v;
}

static int write_file(const char *prefix, const char *suffix, const void *data, size_t bytes)
{
    char path[4096];
    snprintf(path, sizeof path, "%s%s", prefix, suffix);
    FILE *f = fopen(path, "wb");
    if (!f)
        return 1;
    size_t w = bytes ? fwrite(data, 1, bytes, f) : 0;
    return (fclose(f) != 0 || w != bytes) ? 1 : 0;
}

static int open_grid(const char *path, hrt_grid **g)
{
    hrt_error err;
    int rc = hrt_grid_open(path, g, &err);
    if (rc != HRT_OK)
        fprintf(stderr, "c_reference: %s\n", err.message);
    return rc;
}

static int layout(void)
{
#define ROW(type, f) printf(#type " %s %zu %zu\n", #f, offsetof(type, f), sizeof(((type *)0)->f));
#define STATE_ROW(f) ROW(hrt_state, f)
#define ERROR_ROW(f) ROW(hrt_error, f)
#define SPAN_ROW(f) ROW(hrt_phase_span, f)
    HRT_STATE_FIELDS(STATE_ROW)
    HRT_ERROR_FIELDS(ERROR_ROW)
    HRT_PHASE_SPAN_FIELDS(SPAN_ROW)
    printf("sizeof hrt_state %zu\nsizeof hrt_error %zu\nsizeof hrt_phase_span %zu\n", sizeof(hrt_state),
           sizeof(hrt_error), sizeof(hrt_phase_span));
    printf("HRT_ABI_VERSION %d\nhrt_abi_version %d\nhrt_state_size %zu\n", HRT_ABI_VERSION, hrt_abi_version(),
           hrt_state_size());
    return 0;
}

/* Stars read from an n x (mass_msun, z, age_yr) float64 file, and room for their states. */
typedef struct stars {
    size_t n;
    double *m, *z, *a;
    hrt_state *s;
} stars;

static void free_stars(stars *st)
{
    free(st->m);
    free(st->z);
    free(st->a);
    free(st->s);
}

static int load_stars(const char *in, stars *st)
{
    size_t nv;
    double *v = read_doubles(in, &nv);
    memset(st, 0, sizeof *st);
    if (!v)
        return fail("cannot read the input");
    size_t n = nv / 3;
    st->n = n;
    st->m = malloc((n + 1) * sizeof(double));
    st->z = malloc((n + 1) * sizeof(double));
    st->a = malloc((n + 1) * sizeof(double));
    st->s = malloc((n + 1) * sizeof(hrt_state));
    if (!st->m || !st->z || !st->a || !st->s) {
        free(v);
        free_stars(st);
        return fail("out of memory");
    }
    for (size_t i = 0; i < n; i++) {
        st->m[i] = v[3 * i];
        st->z[i] = v[3 * i + 1];
        st->a[i] = v[3 * i + 2];
    }
    free(v);
    return 0;
}

static int eval(const char *grid, const char *in, const char *out)
{
    stars st;
    if (load_stars(in, &st))
        return 1;
    hrt_grid *g = NULL;
    int status = 1;
    size_t n = st.n;
    if (open_grid(grid, &g) != HRT_OK)
        goto done;
    hrt_error err;
    memset(&err, 0, sizeof err);
    int rc = hrt_eval(g, n, st.m, st.z, 0.0, st.a, st.s, &err);
    printf("zarr %d %s\n", rc, rc ? err.message : "");
    if (write_file(out, ".zarr", st.s, n * sizeof(hrt_state)))
        goto done;
    memset(&err, 0, sizeof err);
    rc = hrt_eval(g, n, st.m, NULL, n ? st.z[0] : 0.0, st.a, st.s, &err);
    printf("zall %d %s\n", rc, rc ? err.message : "");
    if (write_file(out, ".zall", st.s, n * sizeof(hrt_state)))
        goto done;
    status = 0;
done:
    hrt_grid_close(g);
    free_stars(&st);
    return status;
}

static int star(const char *grid, double mass, double zz, const char *ages, const char *out)
{
    size_t n;
    double *a = read_doubles(ages, &n);
    if (!a)
        return fail("cannot read the ages");
    hrt_grid *g = NULL;
    hrt_star *st = NULL;
    hrt_state *s = malloc((n + 1) * sizeof(hrt_state)), *tr = NULL;
    double *kp = NULL;
    hrt_phase_span spans[64];
    int status = 1;
    hrt_error err;
    if (!s || open_grid(grid, &g) != HRT_OK)
        goto done;
    int rc = hrt_star_new(g, mass, zz, &st, &err);
    printf("new %d %s\n", rc, rc ? err.message : "");
    if (rc != HRT_OK) {
        status = 0;
        goto done;
    }
    for (size_t i = 0; i < n; i++)
        printf("at %zu %d\n", i, hrt_star_at(st, a[i], &s[i]));
    size_t ne = hrt_star_n_eep(st), nk = hrt_star_n_keypoints(st), np_ = 0;
    tr = malloc((ne + 1) * sizeof(hrt_state));
    kp = malloc((nk + 1) * sizeof(double));
    if (!tr || !kp)
        goto done;
    for (size_t j = 0; j < ne; j++)
        if (hrt_star_eep_state(st, j, &tr[j]) != HRT_OK)
            goto done;
    for (size_t k = 0; k < nk; k++) {
        hrt_star_keypoint_age(st, k, &kp[k]);
        printf("keypoint %s %a\n", hrt_star_keypoint_name(st, k), kp[k]);
    }
    if (hrt_star_phases(st, spans, 64, &np_) != HRT_OK)
        goto done;
    int kind;
    double rm;
    hrt_star_remnant(st, &kind, &rm);
    printf("route %d\nend_age %a\nremnant %d %a\n", hrt_star_route(st), hrt_star_end_age(st), kind, rm);
    if (write_file(out, ".at", s, n * sizeof(hrt_state)) || write_file(out, ".track", tr, ne * sizeof(hrt_state))
        || write_file(out, ".phases", spans, np_ * sizeof(hrt_phase_span))
        || write_file(out, ".keypoints", kp, nk * sizeof(double)))
        goto done;
    status = 0;
done:
    hrt_star_free(st);
    hrt_grid_close(g);
    free(a);
    free(s);
    free(tr);
    free(kp);
    return status;
}

static int isochrone(const char *grid, double age, double zz, const char *out)
{
    hrt_grid *g = NULL;
    hrt_state *s = NULL;
    int status = 1;
    size_t n = 0;
    hrt_error err;
    if (open_grid(grid, &g) != HRT_OK)
        return 1;
    int rc = hrt_isochrone(g, age, zz, NULL, 0, &n, &err);
    if (rc == HRT_E_BUFFER) {
        s = malloc((n + 1) * sizeof(hrt_state));
        if (!s)
            goto done;
        rc = hrt_isochrone(g, age, zz, s, n, &n, &err);
    }
    printf("isochrone %d %s\n", rc, rc ? err.message : "");
    if (write_file(out, "", s, rc == HRT_OK ? n * sizeof(hrt_state) : 0))
        goto done;
    status = 0;
done:
    free(s);
    hrt_grid_close(g);
    return status;
}

static double now_s(clockid_t clock)
{
    struct timespec ts;
    clock_gettime(clock, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int time_eval(const char *grid, const char *in, int repeat, const char *zall)
{
    stars st;
    if (load_stars(in, &st))
        return 1;
    hrt_grid *g = NULL;
    int status = 1;
    size_t n = st.n;
    if (open_grid(grid, &g) != HRT_OK)
        goto done;
    memset(st.s, 0, n * sizeof(hrt_state)); /* touch the output once, as a reused buffer is */
    int use_z = strcmp(zall, "-") == 0;
    double z_all = use_z ? 0.0 : strtod(zall, NULL), best = 1e300, best_cpu = 1e300;
    int rc = HRT_OK;
    for (int r = 0; r < repeat; r++) {
        double t0 = now_s(CLOCK_MONOTONIC), c0 = now_s(CLOCK_THREAD_CPUTIME_ID);
        rc = hrt_eval(g, n, st.m, use_z ? st.z : NULL, z_all, st.a, st.s, NULL);
        double t = now_s(CLOCK_MONOTONIC) - t0, c = now_s(CLOCK_THREAD_CPUTIME_ID) - c0;
        best = t < best ? t : best;
        best_cpu = c < best_cpu ? c : best_cpu;
    }
    size_t ok = 0;
    double sum = 0.0;
    for (size_t i = 0; i < n; i++)
        if (st.s[i].status == HRT_OK) {
            ok++;
            sum += isfinite(st.s[i].log_l_lsun) ? st.s[i].log_l_lsun : 0.0;
        }
    printf("RESULT c_eval_s %.6f c_eval_cpu_s %.6f n %zu rc %d answered %zu checksum %.17g\n", best, best_cpu, n,
           rc, ok, sum);
    status = 0;
done:
    hrt_grid_close(g);
    free_stars(&st);
    return status;
}

int main(int argc, char **argv)
{
    if (argc == 2 && strcmp(argv[1], "layout") == 0)
        return layout();
    if (argc == 5 && strcmp(argv[1], "eval") == 0)
        return eval(argv[2], argv[3], argv[4]);
    if (argc == 7 && strcmp(argv[1], "star") == 0)
        return star(argv[2], strtod(argv[3], NULL), strtod(argv[4], NULL), argv[5], argv[6]);
    if (argc == 6 && strcmp(argv[1], "time") == 0)
        return time_eval(argv[2], argv[3], atoi(argv[4]), argv[5]);
    if (argc == 6 && strcmp(argv[1], "isochrone") == 0)
        return isochrone(argv[2], strtod(argv[3], NULL), strtod(argv[4], NULL), argv[5]);
    return fail("usage: c_reference layout | eval GRID IN OUT | star GRID MASS Z AGES OUT | "
                "isochrone GRID AGE Z OUT");
}
