/* The stored leave-one-out error field (optional group accuracy/ of
 * tracks/FORMAT.md, written by hrt_accuracy_store): its checksums verified
 * at open, its blocks of the grid's own interpolation type decoded on the
 * first question, and turned into an estimate at a state
 * (hrt_state_interp_error in include/hrtrail/core.h).  hrt_eval does not
 * look at it. */
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>

#include "core/core.h"
#include "core/h5read.h"

typedef struct ef_block {
    int route;
    size_t iz;
    double m;
    int eep_lo, eep_hi;
    double e[3];
} ef_block;

/* The blocks of one group (accuracy/ or accuracy/across_z/, where iz is
 * the dropped group's) of the grid's type, sorted by route, group, mass,
 * eep_lo. */
typedef struct ef_field {
    size_t n;
    ef_block *b;
} ef_field;

/* The per-block columns of accuracy/: four int, five float (seven in across_z/). */
#define EF_COLS 11
static const char *const col_i[4] = {"interp", "route", "eep_lo", "eep_hi"};
static const char *const col_d[7] = {"z",           "initial_mass_msun", "log_l_error", "log_teff_error",
                                     "log_age_error", "z_lo",            "z_hi"};

/* One group's columns as kept at open (h5read.h, trail_h5_keep): their
 * stored bytes, checksums verified, decoded on the first question. */
typedef struct ef_kept {
    int code; /* the grid's type in the group's interp_names */
    size_t n; /* blocks */
    trail_h5_kept *col[EF_COLS]; /* col[0] NULL: nothing of the grid's type */
} ef_kept;

/* The stored field of an open grid.  Opening only verifies its checksums
 * (and the columns' shapes and storage): decoding and checking its blocks
 * costs more than the rest of an open, and only hrt_state_interp_error and
 * hrt_grid_has_interp_error need them, so the first of those decodes them,
 * under `lock`, without HDF5 (state set with release once done; the only
 * part of the field that changes). */
struct trail_errfield {
    ef_kept kept[2]; /* accuracy/, accuracy/across_z/ */
    pthread_mutex_t lock;
    atomic_int state; /* 0 until decoded, then 1 */
    hrt_error status; /* the decoding's code and message */
    ef_field mass, across;
};

static int cmp_block(const void *pa, const void *pb)
{
    const ef_block *a = pa, *b = pb;
    if (a->route != b->route)
        return a->route < b->route ? -1 : 1;
    if (a->iz != b->iz)
        return a->iz < b->iz ? -1 : 1;
    if (a->m != b->m)
        return a->m < b->m ? -1 : 1;
    return a->eep_lo < b->eep_lo ? -1 : a->eep_lo > b->eep_lo;
}

static int group_of(const hrt_grid *g, double z, size_t *iz)
{
    for (size_t i = 0; i < g->n_z; i++)
        if (fabs(z / g->grp[i].z - 1.0) <= 1e-9) {
            *iz = i;
            return 1;
        }
    return 0;
}

/* The code of the grid's type in the file's interp_names, or -1. */
static int file_interp(hid_t gr, const char *where, int interp, hrt_error *err, int *rc)
{
    size_t n = 0;
    char **names = NULL;
    *rc = trail_h5_strings(gr, where, "interp_names", &n, &names, err);
    int code = -1;
    for (size_t i = 0; *rc == HRT_OK && i < n; i++)
        if (!strcmp(names[i], hrt_interp_name(interp)))
            code = (int)i;
    trail_h5_free_strings(names, n);
    return code;
}

/* Whether the dropped group's neighbours z_lo < z < z_hi (v[5], v[6]) of an
 * across-metallicity block i are groups of g. */
static int z_interval_ok(const hrt_grid *g, double *const *v, size_t i)
{
    size_t a, b;
    return group_of(g, v[5][i], &a) && group_of(g, v[6][i], &b) && v[5][i] < v[0][i] && v[0][i] < v[6][i];
}

/* Keep the blocks of the grid's type, check them and place them in groups. */
static int ef_fill(const hrt_grid *g, int *const *k, double *const *v, size_t n, int code, int across, ef_field *ef,
                   hrt_error *err)
{
    for (size_t i = 0; i < n; i++) {
        if (k[0][i] != code)
            continue;
        size_t iz;
        int r = k[1][i], lo = k[2][i], hi = k[3][i];
        if (r < 0 || (size_t)r >= g->n_routes || lo < 0 || hi <= lo || (size_t)hi > g->routes[r].n_eep + 1 ||
            !(v[1][i] > 0) || !group_of(g, v[0][i], &iz) || (across && !z_interval_ok(g, v, i)))
            return trail_set_error(err, HRT_E_FORMAT,
                                   "accuracy%s: block %zu (route %d, EEPs %d-%d, Z %g, %g Msun) matches no route, EEP "
                                   "range or metallicity group of this grid",
                                   across ? "/across_z" : "", i, r, lo, hi, v[0][i], v[1][i]);
        for (int q = 2; q < 5; q++)
            if (!(v[q][i] >= 0) && !isnan(v[q][i]))
                return trail_set_error(err, HRT_E_FORMAT, "accuracy/%s%s: block %zu has a negative error",
                                       across ? "across_z/" : "", col_d[q], i);
        ef->b[ef->n++] = (ef_block){r, iz, v[1][i], lo, hi, {v[2][i], v[3][i], v[4][i]}};
    }
    qsort(ef->b, ef->n, sizeof *ef->b, cmp_block);
    return HRT_OK;
}

/* The columns' common length into *n (checked: shape, type, storage); nd
 * float columns (5, or 7 across metallicity). */
static int ef_columns(hid_t gr, const char *where, int nd, size_t *n, hrt_error *err)
{
    int rc = HRT_OK;
    for (int c = 0; c < 4 + nd && rc == HRT_OK; c++) {
        hsize_t d[1] = {*n};
        int is_int = c < 4;
        rc = trail_h5_numeric(gr, where, is_int ? col_i[c] : col_d[c - 4], 1, d, is_int, NULL, err);
        if (rc == HRT_OK && c == 0)
            *n = (size_t)d[0];
    }
    return rc;
}

/* Column c (name, of n values) kept as stored; read now where its storage
 * is of another kind (then with HDF5's answer and error). */
static int ef_keep_column(hid_t gr, const char *where, const char *name, size_t n, int is_int, trail_h5_kept **out,
                          hrt_error *err)
{
    hid_t d = H5Dopen2(gr, name, H5P_DEFAULT);
    int k = d >= 0 ? trail_h5_keep(d, is_int, out) : 0;
    if (d >= 0)
        H5Dclose(d);
    if (k > 0)
        return HRT_OK;
    void *buf = k == 0 ? malloc(n * (is_int ? sizeof(int) : sizeof(double))) : NULL;
    if (!buf)
        return trail_set_error(err, HRT_E_NOMEM, "%s/%s: out of memory", where, name);
    hsize_t dd[1] = {n};
    int rc = trail_h5_numeric(gr, where, name, 1, dd, is_int, buf, err);
    if (rc == HRT_OK && !trail_h5_keep_values(n, is_int, buf, out))
        rc = trail_set_error(err, HRT_E_NOMEM, "%s/%s: out of memory", where, name);
    if (rc != HRT_OK)
        free(buf);
    return rc;
}

/* Group gr (accuracy/ or accuracy/across_z/) checked and, when it holds
 * blocks of the grid's type, its columns kept. */
static int ef_keep(hid_t gr, const hrt_grid *g, int across, ef_kept *kp, hrt_error *err)
{
    const char *where = across ? "accuracy/across_z" : "accuracy";
    int nd = across ? 7 : 5, rc;
    kp->code = file_interp(gr, where, g->interp, err, &rc);
    kp->n = 0;
    if (rc == HRT_OK)
        rc = ef_columns(gr, where, nd, &kp->n, err);
    if (rc != HRT_OK || kp->code < 0 || kp->n == 0)
        return rc;
    for (int c = 0; c < 4 + nd && rc == HRT_OK; c++)
        rc = ef_keep_column(gr, where, c < 4 ? col_i[c] : col_d[c - 4], kp->n, c < 4, &kp->col[c], err);
    return rc;
}

/* The blocks of one kept group decoded, checked and sorted into *out. */
static int ef_decode(const hrt_grid *g, const ef_kept *kp, int across, ef_field *out, hrt_error *err)
{
    const char *where = across ? "accuracy/across_z" : "accuracy";
    int nd = across ? 7 : 5, rc = HRT_OK;
    size_t n = kp->n;
    int *k[4] = {NULL};
    double *v[7] = {NULL};
    int ok = 1;
    for (int c = 0; c < 4; c++)
        ok &= (k[c] = malloc(n * sizeof **k)) != NULL;
    for (int c = 0; c < nd; c++)
        ok &= (v[c] = malloc(n * sizeof **v)) != NULL;
    out->b = malloc(n * sizeof *out->b);
    if (!ok || !out->b)
        rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", where);
    for (int c = 0; c < 4 + nd && rc == HRT_OK; c++)
        if (!trail_h5_kept_decode(kp->col[c], c < 4 ? (void *)k[c] : (void *)v[c - 4]))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: the stored bytes do not inflate to the dataset's values",
                                 where, c < 4 ? col_i[c] : col_d[c - 4]);
    if (rc == HRT_OK)
        rc = ef_fill(g, k, v, n, kp->code, across, out, err);
    for (int c = 0; c < 4; c++)
        free(k[c]);
    for (int c = 0; c < 7; c++)
        free(v[c]);
    return rc;
}

static void ef_kept_free(ef_kept *kp)
{
    for (int c = 0; c < EF_COLS; c++) {
        trail_h5_kept_free(kp->col[c]);
        kp->col[c] = NULL;
    }
}

/* The field decoded (once, by whichever query comes first): HRT_OK, or the
 * decoding's error, the same for every later call. */
static int ef_ready(const hrt_grid *g, hrt_error *err)
{
    trail_errfield *ef = g->errf;
    if (!atomic_load_explicit(&ef->state, memory_order_acquire)) {
        pthread_mutex_lock(&ef->lock);
        if (!atomic_load_explicit(&ef->state, memory_order_relaxed)) {
            hrt_error *st = &ef->status;
            int rc = trail_set_error(st, HRT_OK, NULL);
            if (ef->kept[0].col[0])
                rc = ef_decode(g, &ef->kept[0], 0, &ef->mass, st);
            if (rc == HRT_OK && ef->mass.n && ef->kept[1].col[0])
                rc = ef_decode(g, &ef->kept[1], 1, &ef->across, st);
            ef_kept_free(&ef->kept[0]);
            ef_kept_free(&ef->kept[1]);
            atomic_store_explicit(&ef->state, 1, memory_order_release);
        }
        pthread_mutex_unlock(&ef->lock);
    }
    if (ef->status.code != HRT_OK)
        return trail_set_error(err, ef->status.code, "hrt_state_interp_error: %s", ef->status.message);
    return HRT_OK;
}

static int ef_read(hid_t fh, hrt_grid *g, hrt_error *err)
{
    hid_t gr = trail_h5_group(fh, "accuracy");
    if (gr < 0)
        return trail_set_error(err, HRT_E_FORMAT, "accuracy: not a group");
    trail_errfield *ef = calloc(1, sizeof *ef);
    if (!ef || pthread_mutex_init(&ef->lock, NULL) != 0) {
        free(ef);
        H5Gclose(gr);
        return trail_set_error(err, HRT_E_NOMEM, "accuracy: out of memory");
    }
    atomic_init(&ef->state, 0);
    int rc = ef_keep(gr, g, 0, &ef->kept[0], err);
    int l = rc == HRT_OK && ef->kept[0].col[0] ? trail_h5_link(gr, "across_z") : 0;
    if (l < 0)
        rc = trail_set_error(err, HRT_E_FORMAT, "accuracy/across_z is a soft or external link");
    if (l > 0) {
        hid_t az = trail_h5_group(gr, "across_z");
        if (az < 0)
            rc = trail_set_error(err, HRT_E_FORMAT, "accuracy/across_z: not a group");
        else
            rc = ef_keep(az, g, 1, &ef->kept[1], err);
        if (az >= 0)
            H5Gclose(az);
    }
    if (rc == HRT_OK && ef->kept[0].col[0]) {
        g->errf = ef;
        g->bytes += sizeof *ef;
        for (int t = 0; t < 2; t++)
            for (int c = 0; c < EF_COLS; c++)
                g->bytes += trail_h5_kept_bytes(ef->kept[t].col[c]);
        ef = NULL;
    }
    trail_errfield_free(ef);
    H5Gclose(gr);
    return rc;
}

int trail_errfield_read(const char *path, hrt_grid *g, hrt_error *err)
{
    int rc = HRT_OK;
    H5E_BEGIN_TRY
    {
        hid_t fh = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
        if (fh < 0) {
            rc = trail_set_error(err, HRT_E_IO, "%s: cannot reopen for the stored error field", path);
        } else {
            int l = trail_h5_link(fh, "accuracy");
            if (l < 0)
                rc = trail_set_error(err, HRT_E_FORMAT, "%s: accuracy is a soft or external link", path);
            else if (l > 0)
                rc = ef_read(fh, g, err);
            H5Fclose(fh);
        }
    }
    H5E_END_TRY;
    return rc;
}

void trail_errfield_free(trail_errfield *ef)
{
    if (!ef)
        return;
    ef_kept_free(&ef->kept[0]);
    ef_kept_free(&ef->kept[1]);
    free(ef->mass.b);
    free(ef->across.b);
    pthread_mutex_destroy(&ef->lock);
    free(ef);
}

int hrt_grid_has_interp_error(const hrt_grid *g) { return g && g->errf && ef_ready(g, NULL) == HRT_OK && g->errf->mass.n; }

/* Order of block b against the key (route, group iz, mass m). */
static int key_cmp(const ef_block *b, int route, size_t iz, double m)
{
    if (b->route != route)
        return b->route < route ? -1 : 1;
    if (b->iz != iz)
        return b->iz < iz ? -1 : 1;
    return b->m < m ? -1 : b->m > m;
}

/* First block whose key is above (route, iz, m) (after = 1) or not below it (after = 0). */
static size_t bound(const ef_field *ef, int route, size_t iz, double m, int after)
{
    size_t lo = 0, hi = ef->n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        int c = key_cmp(&ef->b[mid], route, iz, m);
        if (c < 0 || (after && c == 0))
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* The block holding EEP j of the measured track nearest below (dir < 0) or
 * above (dir > 0) mass m on (route, group iz) that reaches EEP j, or NULL. */
static const ef_block *nearest(const ef_field *ef, int route, size_t iz, double m, long j, int dir)
{
    size_t first = bound(ef, route, iz, -INFINITY, 0), last = bound(ef, route, iz, INFINITY, 1);
    if (dir < 0) {
        size_t i = bound(ef, route, iz, m * (1 + 1e-12), 1);
        while (i > first) {
            const ef_block *b = &ef->b[--i];
            if (j >= b->eep_lo && j < b->eep_hi)
                return b;
        }
    } else {
        for (size_t i = bound(ef, route, iz, m * (1 - 1e-12), 0); i < last; i++) {
            const ef_block *b = &ef->b[i];
            if (j >= b->eep_lo && j < b->eep_hi)
                return b;
        }
    }
    return NULL;
}

/* Fold into out (the larger) the errors of group iz's two measured tracks
 * nearest below the state's mass and two nearest above: one track's error
 * changes sign along the mass, two either side keep the bound where it
 * passes through zero. */
static int from_group(const ef_field *ef, const hrt_state *s, size_t iz, long j, hrt_interp_error *out)
{
    int used = 0;
    for (int dir = -1; dir <= 1; dir += 2) {
        double m = s->initial_mass_msun;
        for (int k = 0; k < 2; k++) {
            const ef_block *b = nearest(ef, s->route, iz, m, j, dir);
            if (!b)
                break;
            used++;
            out->log_l_dex = fmax(out->log_l_dex, b->e[0]);
            out->log_teff_dex = fmax(out->log_teff_dex, b->e[1]);
            out->log_age_dex = fmax(out->log_age_dex, b->e[2]);
            m = b->m * (dir < 0 ? 1 - 1e-9 : 1 + 1e-9);
        }
    }
    return used;
}

/* Between groups lo and hi: add to out the across-metallicity errors found
 * when group lo or group hi (those measured: interior ones) was dropped, at
 * the two measured tracks nearest below and above the state's mass (the
 * larger of them).  Added, not in quadrature: the state's error is the
 * across-[Fe/H] error plus the blend of the groups' errors across mass, so
 * the sum of two bounds bounds it. */
static void add_across_z(const ef_field *ez, const hrt_state *s, size_t lo, size_t hi, long j,
                         hrt_interp_error *out)
{
    hrt_interp_error z = {0, 0, 0, 0, {0}};
    z.n_tracks = from_group(ez, s, lo, j, &z) + from_group(ez, s, hi, j, &z);
    out->log_l_dex += z.log_l_dex;
    out->log_teff_dex += z.log_teff_dex;
    out->log_age_dex += z.log_age_dex;
    out->n_tracks += z.n_tracks;
}

int hrt_state_interp_error(const hrt_grid *g, const hrt_state *s, hrt_interp_error *out, hrt_error *err)
{
    if (!g || !s || !out)
        return trail_set_error(err, HRT_E_NULL, "hrt_state_interp_error: %s is NULL", !g ? "grid" : !s ? "state" : "out");
    *out = (hrt_interp_error){NAN, NAN, NAN, 0, {0}};
    int rc = g->errf ? ef_ready(g, err) : HRT_OK;
    if (rc != HRT_OK)
        return rc;
    if (!g->errf || !g->errf->mass.n)
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_state_interp_error: the grid file stores no error field for type %s "
                               "(add one with 'hrtrail grid accuracy --store' or hrt_accuracy_store)",
                               hrt_interp_name(g->interp));
    if (s->status != HRT_OK || s->route < 0 || (size_t)s->route >= g->n_routes || !isfinite(s->eep) ||
        !(s->initial_mass_msun > 0) || !(s->z > 0))
        return trail_set_error(err, HRT_E_DOMAIN,
                               "hrt_state_interp_error: the state is not on a track (status %d, route %d, EEP %g): "
                               "remnants, pre-main-sequence and failed states have no interpolation error",
                               (int)s->status, (int)s->route, s->eep);
    long j = (long)floor(s->eep);
    size_t lo = 0, hi = g->n_z - 1;
    while (lo < g->n_z - 1 && g->grp[lo + 1].z <= s->z * (1 + 1e-9))
        lo++;
    while (hi > 0 && g->grp[hi - 1].z >= s->z * (1 - 1e-9))
        hi--;
    if (hi < lo)
        hi = lo;
    /* lo, hi: the groups either side of Z (one if Z is a group's or outside them all) */
    out->log_l_dex = out->log_teff_dex = out->log_age_dex = 0;
    for (size_t iz = lo; iz <= hi; iz++)
        out->n_tracks += from_group(&g->errf->mass, s, iz, j, out);
    if (lo != hi && out->n_tracks && g->errf->across.n)
        add_across_z(&g->errf->across, s, lo, hi, j, out);
    if (!out->n_tracks) {
        *out = (hrt_interp_error){NAN, NAN, NAN, 0, {0}};
        return trail_set_error(err, HRT_E_NO_TRACK,
                               "hrt_state_interp_error: no dropped track of route %s near %g Msun, Z = %g was "
                               "measured at EEP %ld (too few tracks on the route, or not in the stored run)",
                               g->routes[s->route].name, s->initial_mass_msun, s->z, j);
    }
    return HRT_OK;
}
