/* The stored leave-one-out error field (optional group accuracy/ of
 * tracks/FORMAT.md, written by hrt_accuracy_store): read at open for the
 * grid's own interpolation type, and turned into an estimate at a state
 * (hrt_state_interp_error in include/hrtrail/core.h).  hrt_eval does not
 * look at it. */
#include <math.h>
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

struct trail_errfield {
    size_t n;
    ef_block *b; /* sorted by route, group, mass, eep_lo */
    struct trail_errfield *across; /* accuracy/across_z/: iz is the dropped group's; or NULL */
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
static int file_interp(hid_t gr, int interp, hrt_error *err, int *rc)
{
    size_t n = 0;
    char **names = NULL;
    *rc = trail_h5_strings(gr, "accuracy", "interp_names", &n, &names, err);
    int code = -1;
    for (size_t i = 0; *rc == HRT_OK && i < n; i++)
        if (!strcmp(names[i], hrt_interp_name(interp)))
            code = (int)i;
    trail_h5_free_strings(names, n);
    return code;
}

/* The per-block columns of accuracy/: four int, five float (seven in across_z/). */
static const char *const col_i[4] = {"interp", "route", "eep_lo", "eep_hi"};
static const char *const col_d[7] = {"z",           "initial_mass_msun", "log_l_error", "log_teff_error",
                                     "log_age_error", "z_lo",            "z_hi"};

/* Whether the dropped group's neighbours z_lo < z < z_hi (v[5], v[6]) of an
 * across-metallicity block i are groups of g. */
static int z_interval_ok(const hrt_grid *g, double *const *v, size_t i)
{
    size_t a, b;
    return group_of(g, v[5][i], &a) && group_of(g, v[6][i], &b) && v[5][i] < v[0][i] && v[0][i] < v[6][i];
}

/* Keep the blocks of the grid's type, check them and place them in groups. */
static int ef_fill(const hrt_grid *g, int *const *k, double *const *v, size_t n, int code, int across,
                   trail_errfield *ef, hrt_error *err)
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

/* The columns' common length into *n (checked), then, with buffers, the
 * values; nd float columns (5, or 7 across metallicity). */
static int ef_columns(hid_t gr, const char *where, int nd, size_t *n, int **k, double **v, hrt_error *err)
{
    int rc = HRT_OK;
    for (int c = 0; c < 4 + nd && rc == HRT_OK; c++) {
        hsize_t d[1] = {*n};
        int is_int = c < 4;
        const char *name = is_int ? col_i[c] : col_d[c - 4];
        void *buf = k ? (is_int ? (void *)k[c] : (void *)v[c - 4]) : NULL;
        rc = trail_h5_numeric(gr, where, name, 1, d, is_int, buf, err);
        if (rc == HRT_OK && !k && c == 0)
            *n = (size_t)d[0];
    }
    return rc;
}

/* The blocks of group gr (accuracy/ or accuracy/across_z/) of the grid's
 * type into *out (NULL when there are none). */
static int ef_load(hid_t gr, const hrt_grid *g, int across, trail_errfield **out, hrt_error *err)
{
    const char *where = across ? "accuracy/across_z" : "accuracy";
    int nd = across ? 7 : 5, rc;
    int code = file_interp(gr, g->interp, err, &rc);
    size_t n = 0;
    if (rc == HRT_OK)
        rc = ef_columns(gr, where, nd, &n, NULL, NULL, err);
    int *k[4] = {NULL};
    double *v[7] = {NULL};
    trail_errfield *ef = NULL;
    if (rc == HRT_OK && code >= 0 && n > 0) {
        int ok = 1;
        for (int c = 0; c < 4; c++)
            ok &= (k[c] = malloc(n * sizeof **k)) != NULL;
        for (int c = 0; c < nd; c++)
            ok &= (v[c] = malloc(n * sizeof **v)) != NULL;
        ef = calloc(1, sizeof *ef);
        if (ef)
            ef->b = malloc(n * sizeof *ef->b);
        if (!ok || !ef || !ef->b)
            rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", where);
        if (rc == HRT_OK)
            rc = ef_columns(gr, where, nd, &n, k, v, err);
        if (rc == HRT_OK)
            rc = ef_fill(g, k, v, n, code, across, ef, err);
        if (rc == HRT_OK && ef->n) {
            *out = ef;
            ef = NULL;
        }
    }
    trail_errfield_free(ef);
    for (int c = 0; c < 4; c++)
        free(k[c]);
    for (int c = 0; c < 7; c++)
        free(v[c]);
    return rc;
}

static size_t ef_bytes(const trail_errfield *ef) { return ef ? sizeof *ef + ef->n * sizeof *ef->b : 0; }

static int ef_read(hid_t fh, hrt_grid *g, hrt_error *err)
{
    hid_t gr = trail_h5_group(fh, "accuracy");
    if (gr < 0)
        return trail_set_error(err, HRT_E_FORMAT, "accuracy: not a group");
    trail_errfield *ef = NULL;
    int rc = ef_load(gr, g, 0, &ef, err);
    int l = rc == HRT_OK && ef ? trail_h5_link(gr, "across_z") : 0;
    if (l < 0)
        rc = trail_set_error(err, HRT_E_FORMAT, "accuracy/across_z is a soft or external link");
    if (l > 0) {
        hid_t az = trail_h5_group(gr, "across_z");
        if (az < 0)
            rc = trail_set_error(err, HRT_E_FORMAT, "accuracy/across_z: not a group");
        else
            rc = ef_load(az, g, 1, &ef->across, err);
        if (az >= 0)
            H5Gclose(az);
    }
    if (rc == HRT_OK && ef) {
        g->errf = ef;
        g->bytes += ef_bytes(ef) + ef_bytes(ef->across);
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
    trail_errfield_free(ef->across);
    free(ef->b);
    free(ef);
}

int hrt_grid_has_interp_error(const hrt_grid *g) { return g && g->errf; }

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
static size_t bound(const trail_errfield *ef, int route, size_t iz, double m, int after)
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
static const ef_block *nearest(const trail_errfield *ef, int route, size_t iz, double m, long j, int dir)
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
static int from_group(const trail_errfield *ef, const hrt_state *s, size_t iz, long j, hrt_interp_error *out)
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
static void add_across_z(const trail_errfield *ez, const hrt_state *s, size_t lo, size_t hi, long j,
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
    if (!g->errf)
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
        out->n_tracks += from_group(g->errf, s, iz, j, out);
    if (lo != hi && out->n_tracks && g->errf->across)
        add_across_z(g->errf->across, s, lo, hi, j, out);
    if (!out->n_tracks) {
        *out = (hrt_interp_error){NAN, NAN, NAN, 0, {0}};
        return trail_set_error(err, HRT_E_NO_TRACK,
                               "hrt_state_interp_error: no dropped track of route %s near %g Msun, Z = %g was "
                               "measured at EEP %ld (too few tracks on the route, or not in the stored run)",
                               g->routes[s->route].name, s->initial_mass_msun, s->z, j);
    }
    return HRT_OK;
}
