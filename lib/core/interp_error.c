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

/* The code of the grid's type in the file's interp list, or -1. */
static int file_interp(hid_t gr, int interp, hrt_error *err, int *rc)
{
    size_t n = 0;
    char **names = NULL;
    *rc = trail_h5_strings(gr, "accuracy", "interp", &n, &names, err);
    int code = -1;
    for (size_t i = 0; *rc == HRT_OK && i < n; i++)
        if (!strcmp(names[i], hrt_interp_name(interp)))
            code = (int)i;
    trail_h5_free_strings(names, n);
    return code;
}

/* Keep the blocks of the grid's type, check them and place them in groups. */
static int ef_fill(const hrt_grid *g, const int *key, const double *val, size_t n, int code, trail_errfield *ef,
                   hrt_error *err)
{
    for (size_t i = 0; i < n; i++) {
        const int *k = key + 4 * i;
        const double *v = val + 5 * i;
        if (k[0] != code)
            continue;
        size_t iz;
        if (k[1] < 0 || (size_t)k[1] >= g->n_routes || k[2] < 0 || k[3] <= k[2] ||
            (size_t)k[3] > g->routes[k[1]].n_eep + 1 || !(v[1] > 0) || !group_of(g, v[0], &iz))
            return trail_set_error(err, HRT_E_FORMAT,
                                   "accuracy/key, value: row %zu (route %d, EEPs %d-%d, Z %g, %g Msun) matches no "
                                   "route, EEP range or metallicity group of this grid",
                                   i, k[1], k[2], k[3], v[0], v[1]);
        for (int q = 0; q < 3; q++)
            if (!(v[2 + q] >= 0) && !isnan(v[2 + q]))
                return trail_set_error(err, HRT_E_FORMAT, "accuracy/value: row %zu has a negative error", i);
        ef->b[ef->n++] = (ef_block){k[1], iz, v[1], k[2], k[3], {v[2], v[3], v[4]}};
    }
    qsort(ef->b, ef->n, sizeof *ef->b, cmp_block);
    return HRT_OK;
}

static int ef_read(hid_t fh, hrt_grid *g, hrt_error *err)
{
    hid_t gr = trail_h5_group(fh, "accuracy");
    if (gr < 0)
        return trail_set_error(err, HRT_E_FORMAT, "accuracy: not a group");
    int rc;
    int code = file_interp(gr, g->interp, err, &rc);
    hsize_t dk[2] = {0, 4}, dv[2] = {0, 5};
    if (rc == HRT_OK)
        rc = trail_h5_numeric(gr, "accuracy", "key", 2, dk, 1, NULL, err);
    if (rc == HRT_OK)
        rc = trail_h5_numeric(gr, "accuracy", "value", 2, dv, 0, NULL, err);
    if (rc == HRT_OK && dk[0] != dv[0])
        rc = trail_set_error(err, HRT_E_FORMAT, "accuracy: key has %llu rows, value %llu",
                             (unsigned long long)dk[0], (unsigned long long)dv[0]);
    int *key = NULL;
    double *val = NULL;
    trail_errfield *ef = NULL;
    if (rc == HRT_OK && code >= 0 && dk[0] > 0) {
        key = malloc(dk[0] * 4 * sizeof *key);
        val = malloc(dv[0] * 5 * sizeof *val);
        ef = calloc(1, sizeof *ef);
        if (ef)
            ef->b = malloc(dk[0] * sizeof *ef->b);
        if (!key || !val || !ef || !ef->b)
            rc = trail_set_error(err, HRT_E_NOMEM, "accuracy: out of memory");
        if (rc == HRT_OK)
            rc = trail_h5_numeric(gr, "accuracy", "key", 2, dk, 1, key, err);
        if (rc == HRT_OK)
            rc = trail_h5_numeric(gr, "accuracy", "value", 2, dv, 0, val, err);
        if (rc == HRT_OK)
            rc = ef_fill(g, key, val, (size_t)dk[0], code, ef, err);
        if (rc == HRT_OK && ef->n) {
            g->errf = ef;
            g->bytes += sizeof *ef + ef->n * sizeof *ef->b;
            ef = NULL;
        }
    }
    trail_errfield_free(ef);
    free(key);
    free(val);
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
static int from_group(const hrt_grid *g, const hrt_state *s, size_t iz, long j, hrt_interp_error *out)
{
    int used = 0;
    for (int dir = -1; dir <= 1; dir += 2) {
        double m = s->initial_mass_msun;
        for (int k = 0; k < 2; k++) {
            const ef_block *b = nearest(g->errf, s->route, iz, m, j, dir);
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
        out->n_tracks += from_group(g, s, iz, j, out);
    if (!out->n_tracks) {
        *out = (hrt_interp_error){NAN, NAN, NAN, 0, {0}};
        return trail_set_error(err, HRT_E_NO_TRACK,
                               "hrt_state_interp_error: no dropped track of route %s near %g Msun, Z = %g was "
                               "measured at EEP %ld (too few tracks on the route, or not in the stored run)",
                               g->routes[s->route].name, s->initial_mass_msun, s->z, j);
    }
    return HRT_OK;
}
