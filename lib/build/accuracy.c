/* Interpolation accuracy of any grid by leaving one track out: each interior
 * track of each route is dropped, its metallicity group rebuilt without it by
 * the builder, and the track predicted from the rest (hrt_accuracy_run in
 * include/hrtrail/build.h).  Only the public API is used: the tracks are read
 * back as stars at the grid's own masses. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#ifdef _OPENMP
#include <omp.h>
#endif

#include "build/accuracy.h"
#include "build/builder.h"
#include "util/schema.h"
#include "util/util.h"

/* ------------------------------------------------------------------------
 * The tracks of one group, as the grid gives them
 * ------------------------------------------------------------------------ */
enum { COL_AGE, COL_L, COL_T, COL_M, COL_HE, COL_CO, N_COL };

typedef struct acc_track {
    double m;
    int route, remnant;
    double remnant_mass;
    size_t n;
    double *col[N_COL]; /* one block: log age, log L, log Teff, mass, He core, CO core */
    int *ph;
} acc_track;

static void track_free(acc_track *t)
{
    free(t->col[0]);
    free(t->ph);
}

static int track_read(const hrt_grid *g, size_t iz, size_t im, acc_track *t, hrt_error *err)
{
    hrt_star *s = NULL;
    t->m = hrt_grid_mass(g, iz, im);
    t->route = hrt_grid_track_route(g, iz, im);
    int rc = hrt_star_new(g, t->m, hrt_grid_z(g, iz), &s, err);
    if (rc != HRT_OK)
        return rc;
    rc = hrt_star_remnant(s, &t->remnant, &t->remnant_mass);
    t->n = hrt_star_n_eep(s);
    double *block = malloc(N_COL * t->n * sizeof *block);
    t->ph = malloc(t->n * sizeof *t->ph);
    if (!block || !t->ph) {
        free(block);
        hrt_star_free(s);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory reading a track");
    }
    for (int c = 0; c < N_COL; c++)
        t->col[c] = block + (size_t)c * t->n;
    for (size_t j = 0; j < t->n && rc == HRT_OK; j++) {
        hrt_state st;
        rc = hrt_star_eep_state(s, j, &st);
        t->col[COL_AGE][j] = log10(st.age_yr);
        t->col[COL_L][j] = st.log_l_lsun;
        t->col[COL_T][j] = st.log_teff_k;
        t->col[COL_M][j] = st.mass_msun;
        t->col[COL_HE][j] = st.he_core_mass_msun;
        t->col[COL_CO][j] = st.co_core_mass_msun;
        t->ph[j] = st.phase;
    }
    hrt_star_free(s);
    if (rc != HRT_OK)
        return trail_set_error(err, rc, "hrt_accuracy_run: cannot read track %g Msun of Z = %g", t->m,
                               hrt_grid_z(g, iz));
    return HRT_OK;
}

/* ------------------------------------------------------------------------
 * The run's shared context
 * ------------------------------------------------------------------------ */
typedef struct acc_group {
    double z;
    size_t nm;
    acc_track *tr;
    double bnd[TRAIL_MAX_ROUTES];
} acc_group;

typedef struct acc_job {
    size_t iz, k;
} acc_job;

typedef struct acc_ctx {
    hrt_accuracy *acc;
    const hrt_grid *g;
    size_t nr;
    hrt_route_spec spec[TRAIL_MAX_ROUTES];
    const char *kp_names[TRAIL_MAX_ROUTES][HRT_IMPORT_MAX_KP];
    int seg[TRAIL_MAX_ROUTES][HRT_IMPORT_MAX_KP];
    acc_group *grp;
    size_t n_groups;
    acc_job *jobs;
    size_t n_jobs, done;
    char dir[512];
    int rc; /* first failure */
    hrt_error err;
} acc_ctx;

static int ctx_routes(acc_ctx *c, hrt_error *err)
{
    c->nr = hrt_grid_n_routes(c->g);
    if (c->nr > TRAIL_MAX_ROUTES)
        return trail_set_error(err, HRT_E_INVALID, "hrt_accuracy_run: %zu routes (at most %d)", c->nr,
                               TRAIL_MAX_ROUTES);
    for (size_t r = 0; r < c->nr; r++) {
        size_t k = hrt_grid_route_n_keypoints(c->g, r);
        if (k > HRT_IMPORT_MAX_KP)
            return trail_set_error(err, HRT_E_INVALID, "hrt_accuracy_run: route %zu has %zu keypoints (at most %d)",
                                   r, k, HRT_IMPORT_MAX_KP);
        for (size_t i = 0; i < k; i++) {
            c->kp_names[r][i] = hrt_grid_keypoint_name(c->g, r, i);
            if (i + 1 < k)
                c->seg[r][i] = (int)(hrt_grid_keypoint_eep(c->g, r, i + 1) - hrt_grid_keypoint_eep(c->g, r, i));
        }
        c->spec[r] = (hrt_route_spec){hrt_grid_route_name(c->g, r), k, c->kp_names[r], c->seg[r]};
    }
    return HRT_OK;
}

static int interior(const acc_group *G, size_t k)
{
    return k > 0 && k + 1 < G->nm && G->tr[k - 1].route == G->tr[k].route && G->tr[k + 1].route == G->tr[k].route;
}

/* Read group iz's tracks and route boundaries. */
static int group_read(acc_ctx *c, size_t iz, hrt_error *err)
{
    acc_group *G = &c->grp[iz];
    G->tr = calloc(G->nm ? G->nm : 1, sizeof *G->tr);
    if (!G->tr)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory");
    for (size_t b = 0; b + 1 < c->nr; b++)
        G->bnd[b] = hrt_grid_route_boundary(c->g, iz, b);
    for (size_t im = 0; im < G->nm; im++) {
        int rc = track_read(c->g, iz, im, &G->tr[im], err);
        if (rc != HRT_OK)
            return rc;
    }
    return HRT_OK;
}

/* Across metallicity: every group's tracks are read (the rebuilt grids hold
 * them), the interior groups chosen are the jobs (k = ACC_WHOLE_GROUP). */
#define ACC_WHOLE_GROUP SIZE_MAX

static int ctx_groups_z(acc_ctx *c, hrt_error *err)
{
    size_t taken = 0;
    for (size_t iz = 0; iz < c->n_groups; iz++) {
        int rc = group_read(c, iz, err);
        if (rc != HRT_OK)
            return rc;
        if (!trail_acc_takes_z(c->acc, c->grp[iz].z))
            continue;
        taken++;
        if (iz > 0 && iz + 1 < c->n_groups)
            c->jobs[c->n_jobs++] = (acc_job){iz, ACC_WHOLE_GROUP};
    }
    if (!taken)
        return trail_set_error(err, HRT_E_Z_RANGE, "hrt_accuracy_run: the grid has no metallicity group of the Z chosen");
    if (!c->n_jobs)
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_accuracy_run: across metallicity, no group chosen has a group of lower and one "
                               "of higher Z (the grid has %zu), so none can be dropped and predicted from both sides",
                               c->n_groups);
    return HRT_OK;
}

/* Read every group's tracks and list the interior ones as jobs. */
static int ctx_groups(acc_ctx *c, hrt_error *err)
{
    c->n_groups = hrt_grid_n_z(c->g);
    c->grp = calloc(c->n_groups, sizeof *c->grp);
    size_t total = 0, taken = 0;
    for (size_t iz = 0; iz < c->n_groups; iz++)
        total += hrt_grid_n_masses(c->g, iz);
    c->jobs = malloc((total ? total : 1) * sizeof *c->jobs);
    if (!c->grp || !c->jobs)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory");
    for (size_t iz = 0; iz < c->n_groups; iz++) {
        c->grp[iz].z = hrt_grid_z(c->g, iz);
        c->grp[iz].nm = hrt_grid_n_masses(c->g, iz);
    }
    if (trail_acc_across_z(c->acc))
        return ctx_groups_z(c, err);
    for (size_t iz = 0; iz < c->n_groups; iz++) {
        acc_group *G = &c->grp[iz];
        if (!trail_acc_takes_z(c->acc, G->z))
            continue; /* no tracks read: no jobs */
        taken++;
        int rc = group_read(c, iz, err);
        if (rc != HRT_OK)
            return rc;
        for (size_t k = 0; k < G->nm; k++)
            if (interior(G, k))
                c->jobs[c->n_jobs++] = (acc_job){iz, k};
    }
    if (!taken)
        return trail_set_error(err, HRT_E_Z_RANGE, "hrt_accuracy_run: the grid has no metallicity group of the Z chosen");
    if (!c->n_jobs)
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_accuracy_run: no route of any metallicity has three tracks, so no track "
                               "can be dropped and predicted from neighbours on both sides");
    return HRT_OK;
}

static void ctx_free(acc_ctx *c)
{
    for (size_t iz = 0; c->grp && iz < c->n_groups; iz++) {
        for (size_t im = 0; c->grp[iz].tr && im < c->grp[iz].nm; im++)
            track_free(&c->grp[iz].tr[im]);
        free(c->grp[iz].tr);
    }
    free(c->grp);
    free(c->jobs);
}

/* ------------------------------------------------------------------------
 * One dropped track
 * ------------------------------------------------------------------------ */
static int add_track(hrt_builder *b, double z, const acc_track *t, hrt_error *err)
{
    hrt_track_data d = {.initial_mass_msun = t->m, .route = t->route, .remnant = t->remnant,
                        .remnant_mass_msun = t->remnant_mass, .n = t->n, .log_age_yr = t->col[COL_AGE],
                        .log_l_lsun = t->col[COL_L], .log_teff_k = t->col[COL_T], .log_r_rsun = NULL,
                        .mass_msun = t->col[COL_M], .he_core_mass_msun = t->col[COL_HE],
                        .co_core_mass_msun = t->col[COL_CO], .phase = t->ph};
    return hrt_builder_add_eep_track(b, z, &d, err);
}

/* Tracks of the dropped one's route, within `window` places either side of
 * it (0: all); across metallicity, every group but the dropped one. */
static int job_builder(const acc_ctx *c, const acc_job *J, size_t window, hrt_builder **out, hrt_error *err)
{
    int across = J->k == ACC_WHOLE_GROUP;
    hrt_builder *b = NULL;
    int rc = hrt_builder_new(c->nr, c->spec, hrt_grid_z_ref(c->g), &b, err);
    if (rc == HRT_OK)
        rc = hrt_builder_set_compression(b, 0, err);
    for (size_t iz = 0; iz < c->n_groups && rc == HRT_OK; iz++) {
        const acc_group *G = &c->grp[iz];
        if (across == (iz == J->iz))
            continue;
        for (size_t im = 0; im < G->nm && rc == HRT_OK; im++) {
            size_t dist = im > J->k ? im - J->k : J->k - im;
            if (!across && (im == J->k || G->tr[im].route != G->tr[J->k].route || (window && dist > window)))
                continue;
            rc = add_track(b, G->z, &G->tr[im], err);
        }
        if (rc == HRT_OK && c->nr > 1)
            rc = hrt_builder_set_route_boundaries(b, G->z, G->bnd, err);
    }
    if (rc != HRT_OK) {
        hrt_builder_free(b);
        return rc;
    }
    *out = b;
    return HRT_OK;
}

/* The block of the error field holding EEP j of route r: [*lo, *hi), inside
 * one keypoint segment (the last segment includes its end keypoint). */
static void field_block(const acc_ctx *c, int r, size_t j, int *lo, int *hi)
{
    size_t nk = c->spec[r].n_keypoints;
    size_t s = 0;
    long a = hrt_grid_keypoint_eep(c->g, (size_t)r, 0);
    while (s + 2 < nk && (long)j >= hrt_grid_keypoint_eep(c->g, (size_t)r, s + 1))
        s++;
    if (nk >= 2)
        a = hrt_grid_keypoint_eep(c->g, (size_t)r, s);
    long end = nk >= 2 ? hrt_grid_keypoint_eep(c->g, (size_t)r, s + 1) + (s + 2 == nk) : (long)j + 1;
    long l = a + (((long)j - a) / TRAIL_ACC_BLOCK) * TRAIL_ACC_BLOCK;
    *lo = (int)l;
    *hi = (int)(l + TRAIL_ACC_BLOCK < end ? l + TRAIL_ACC_BLOCK : end);
}

/* The dropped track's errors as blocks of the error field (the largest of
 * each block), into f (room for np); returns how many. */
static size_t field_of(const acc_ctx *c, int it, const acc_track *t, const double z[3], const trail_acc_point *pt,
                       size_t np, trail_acc_field *f)
{
    size_t n = 0;
    for (size_t i = 0; i < np; i++) {
        int lo, hi;
        field_block(c, t->route, pt[i].eep, &lo, &hi);
        if (!n || f[n - 1].eep_lo != lo)
            f[n++] = (trail_acc_field){it, t->route, z[1], t->m, lo, hi, {0, 0, 0}, z[0], z[2]};
        for (int q = 0; q < HRT_ACCURACY_NQ; q++)
            if (pt[i].e[q] > f[n - 1].e[q] || isnan(pt[i].e[q]))
                f[n - 1].e[q] = pt[i].e[q];
    }
    return n;
}

/* The points of dropped track t compared with star s of a rebuilt grid, into pt; returns how many. */
static size_t compare_points(const acc_track *t, double z, const hrt_star *s, trail_acc_point *pt, size_t n)
{
    size_t np = 0;
    for (size_t j = 0; j < n; j++) {
        hrt_state st;
        if (hrt_star_eep_state(s, j, &st) != HRT_OK || t->ph[j] <= HRT_PHASE_UNKNOWN || t->ph[j] >= HRT_PHASE_SLOTS)
            continue;
        pt[np++] = (trail_acc_point){{fabs(st.log_l_lsun - t->col[COL_L][j]), fabs(st.log_teff_k - t->col[COL_T][j]),
                                      fabs(log10(st.age_yr) - t->col[COL_AGE][j])},
                                     t->m, z, j, t->ph[j]};
    }
    return np;
}

/* Compare the prediction of grid h with track k of group iz, dropped (alone,
 * or with its whole group when across); record under lock.  Across
 * metallicity a track the rebuilt grid cannot place at its mass, or places on
 * another route, is skipped. */
static int job_compare(acc_ctx *c, size_t iz, size_t k, int across, const hrt_grid *h, int it, hrt_error *err)
{
    const acc_group *G = &c->grp[iz];
    const acc_track *t = &G->tr[k];
    hrt_star *s = NULL;
    hrt_error skip;
    int rc = hrt_star_new(h, t->m, G->z, &s, across ? &skip : err);
    if (rc != HRT_OK || (across && hrt_star_route(s) != t->route)) {
        hrt_star_free(s);
        return across ? HRT_OK : rc;
    }
    size_t n = hrt_star_n_eep(s) < t->n ? hrt_star_n_eep(s) : t->n;
    trail_acc_point *pt = malloc((n ? n : 1) * sizeof *pt);
    trail_acc_field *fl = malloc((n ? n : 1) * sizeof *fl);
    if (!pt || !fl) {
        free(pt);
        free(fl);
        hrt_star_free(s);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory");
    }
    size_t np = compare_points(t, G->z, s, pt, n);
    int kind;
    double mr, wd = NAN;
    int same = across || (G->tr[k - 1].remnant == t->remnant && G->tr[k + 1].remnant == t->remnant);
    if (hrt_star_remnant(s, &kind, &mr) == HRT_OK && same && kind == t->remnant && kind >= HRT_REMNANT_HE_WD &&
        kind <= HRT_REMNANT_ONE_WD)
        wd = fabs(mr - t->remnant_mass);
    hrt_star_free(s);
    double zs[3] = {across ? c->grp[iz - 1].z : 0, G->z, across ? c->grp[iz + 1].z : 0};
    size_t nf = field_of(c, it, t, zs, pt, np, fl);
#pragma omp critical /* unnamed: a named one is a global lock symbol exported by the library */
    {
        rc = trail_acc_record(c->acc, it, t->route, pt, np, wd, err);
        if (rc == HRT_OK)
            rc = trail_acc_record_field(c->acc, fl, nf, err);
    }
    free(pt);
    free(fl);
    return rc;
}

/* Interpolated values of the local types depend on at most three tracks
 * either side (Akima's slopes: two segments beyond each end of the
 * interval); four keep a margin.  cspline is global: the whole route. */
#define ACC_WINDOW 4

/* Write the rebuilt group, open it with type it (and, for the local types,
 * every other chosen local type) and compare.  Across metallicity (global
 * < 0) the rebuilt grid of every other group, opened with every chosen type,
 * and every track of the dropped group compared.  HDF5 (Debian's is not
 * thread-safe) is reached from one thread at a time. */
static int job_pass(acc_ctx *c, const acc_job *J, int global, hrt_error *err)
{
    hrt_builder *b = NULL;
    int rc = job_builder(c, J, global ? 0 : ACC_WINDOW, &b, err);
    if (rc != HRT_OK)
        return rc;
    char path[600];
    snprintf(path, sizeof path, "%s/hrtrail-accuracy-%ld-%p-%zu-%zu.h5", c->dir, (long)getpid(), (void *)c, J->iz,
             J->k);
    hrt_grid *h[HRT_INTERP_COUNT] = {NULL};
#pragma omp critical
    {
        rc = trail_builder_write_scratch(b, path, err);
        for (int it = 0; it < HRT_INTERP_COUNT && rc == HRT_OK; it++)
            if (trail_acc_wants(c->acc, it) && (global < 0 || (it == HRT_INTERP_CSPLINE) == global))
                rc = hrt_grid_open_with(path, it, &h[it], err);
        unlink(path);
    }
    hrt_builder_free(b);
    int across = J->k == ACC_WHOLE_GROUP;
    size_t k0 = across ? 0 : J->k, k1 = across ? c->grp[J->iz].nm : J->k + 1;
    for (int it = 0; it < HRT_INTERP_COUNT; it++) {
        for (size_t k = k0; h[it] && rc == HRT_OK && k < k1; k++)
            rc = job_compare(c, J->iz, k, across, h[it], it, err);
#pragma omp critical
        hrt_grid_close(h[it]);
    }
    return rc;
}

static int job_run(acc_ctx *c, const acc_job *J, hrt_error *err)
{
    int rc = HRT_OK;
    if (J->k == ACC_WHOLE_GROUP) {
        rc = job_pass(c, J, -1, err);
        if (rc != HRT_OK) {
            char msg[sizeof err->message];
            snprintf(msg, sizeof msg, "%s", err->message);
            trail_set_error(err, rc, "dropping the group of Z = %g: %s", c->grp[J->iz].z, msg);
        }
        return rc;
    }
    int local = trail_acc_wants(c->acc, HRT_INTERP_STEFFEN) || trail_acc_wants(c->acc, HRT_INTERP_LINEAR) ||
                trail_acc_wants(c->acc, HRT_INTERP_AKIMA);
    if (local)
        rc = job_pass(c, J, 0, err);
    if (rc == HRT_OK && trail_acc_wants(c->acc, HRT_INTERP_CSPLINE))
        rc = job_pass(c, J, 1, err);
    if (rc != HRT_OK) {
        char msg[sizeof err->message];
        snprintf(msg, sizeof msg, "%s", err->message);
        trail_set_error(err, rc, "dropping %g Msun of Z = %g: %s", c->grp[J->iz].tr[J->k].m, c->grp[J->iz].z, msg);
    }
    return rc;
}

static void run_jobs(acc_ctx *c, int nt, void (*progress)(void *, size_t, size_t), void *user)
{
#pragma omp parallel for schedule(dynamic, 1) num_threads(nt)
    for (size_t i = 0; i < c->n_jobs; i++) {
        int failed;
#pragma omp atomic read
        failed = c->rc;
        if (failed)
            continue;
        hrt_error e = {0};
        int rc = job_run(c, &c->jobs[i], &e);
#pragma omp critical
        {
            if (rc != HRT_OK && c->rc == HRT_OK) {
                c->err = e;
                c->rc = rc;
            }
            c->done++;
            if (progress && c->rc == HRT_OK)
                progress(user, c->done, c->n_jobs);
        }
    }
    (void)nt;
}

static void temp_dir(char *dir, size_t n)
{
    const char *t = getenv("TMPDIR");
    snprintf(dir, n, "%s", t && *t ? t : "/tmp");
}

int hrt_accuracy_run(hrt_accuracy *acc, const hrt_grid *g, hrt_error *err)
{
    if (!acc || !g)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_run: %s is NULL", acc ? "grid" : "acc");
    acc_ctx c = {.acc = acc, .g = g};
    temp_dir(c.dir, sizeof c.dir);
    if (access(c.dir, W_OK) != 0)
        return trail_set_error(err, HRT_E_IO, "hrt_accuracy_run: cannot write temporary grids in %s", c.dir);
    int rc = ctx_routes(&c, err);
    if (rc == HRT_OK)
        rc = ctx_groups(&c, err);
    if (rc == HRT_OK)
        rc = trail_acc_begin(acc, c.nr, err);
    if (rc == HRT_OK) {
        int nt = trail_acc_threads(acc);
#ifdef _OPENMP
        if (nt <= 0)
            nt = omp_get_max_threads();
#endif
        if (nt <= 0)
            nt = 1;
        void *user;
        void (*progress)(void *, size_t, size_t) = trail_acc_progress(acc, &user);
        run_jobs(&c, nt, progress, user);
        rc = c.rc;
        if (rc != HRT_OK)
            trail_set_error(err, rc, "hrt_accuracy_run: %s", c.err.message);
    }
    if (rc == HRT_OK)
        rc = trail_acc_finish(acc, err);
    ctx_free(&c);
    return rc;
}
