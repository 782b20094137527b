/* Reading the extra per-EEP quantities of a grid file (tracks/FORMAT.md,
 * "Extra quantities"): metallicity/<N>/extra/<name>, [track][eep] like the
 * standard tables, with `units` and `long_name` attributes; the same names
 * in every group.  A file without them has n_extra = 0.  Called inside
 * H5E_BEGIN_TRY / H5E_END_TRY (trail_file_read). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <hdf5.h>

#include "core/core.h"
#include "core/h5read.h"

/* Names of the links of group gr in name order (at most TRAIL_MAX_EXTRA). */
typedef struct name_list {
    size_t n;
    int overflow, bad;
    char name[TRAIL_MAX_EXTRA][TRAIL_EXTRA_NAME_LEN];
} name_list;

static herr_t collect_name(hid_t loc, const char *name, const H5L_info_t *info, void *data)
{
    (void)loc;
    name_list *L = data;
    if (info->type != H5L_TYPE_HARD || !trail_extra_name_ok(name)) {
        L->bad = 1;
        return 1;
    }
    if (L->n >= TRAIL_MAX_EXTRA) {
        L->overflow = 1;
        return 1;
    }
    snprintf(L->name[L->n++], TRAIL_EXTRA_NAME_LEN, "%s", name);
    return 0;
}

static int list_names(hid_t gx, const char *where, name_list *L, hrt_error *err)
{
    memset(L, 0, sizeof *L);
    hsize_t idx = 0;
    herr_t st = H5Literate(gx, H5_INDEX_NAME, H5_ITER_INC, &idx, collect_name, L);
    if (L->bad)
        return trail_set_error(err, HRT_E_FORMAT,
                               "%s: an entry is not a dataset named with lower-case letters, digits and '_' "
                               "(or takes a standard quantity's name)",
                               where);
    if (L->overflow)
        return trail_set_error(err, HRT_E_FORMAT, "%s: more than %d extra quantities", where, TRAIL_MAX_EXTRA);
    if (st < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s: cannot list its datasets", where);
    return HRT_OK;
}

/* Units and meaning of extra quantity k (from group 0). */
static int read_decl(hid_t gx, const char *where, const char *name, trail_extra_decl *d, hrt_error *err)
{
    snprintf(d->name, sizeof d->name, "%s", name);
    hid_t ds = H5Dopen2(gx, name, H5P_DEFAULT);
    if (ds < 0)
        return trail_set_error(err, HRT_E_FORMAT, "%s/%s is not a dataset", where, name);
    char dwhere[160];
    snprintf(dwhere, sizeof dwhere, "%s/%s", where, name);
    char *units = NULL, *meaning = NULL;
    int rc = trail_h5_attr_text(ds, "units", dwhere, &units, err);
    if (rc == HRT_OK)
        rc = trail_h5_attr_text(ds, "long_name", dwhere, &meaning, err);
    H5Dclose(ds);
    if (rc == HRT_OK && !(trail_extra_text_ok(units) && trail_extra_text_ok(meaning)))
        rc = trail_set_error(err, HRT_E_FORMAT, "%s: units or long_name not printable text under %d characters",
                             dwhere, TRAIL_EXTRA_TEXT_LEN);
    if (rc == HRT_OK) {
        snprintf(d->units, sizeof d->units, "%s", units);
        snprintf(d->meaning, sizeof d->meaning, "%s", meaning);
    }
    free(units);
    free(meaning);
    return rc;
}

/* The extra tables of group iz: the declared names exactly, finite values
 * on each track's valid EEPs, NaN beyond. */
static int read_group_extras(hid_t gx, const char *where, trail_file *f, size_t iz, hrt_error *err)
{
    trail_file_group *gp = &f->grp[iz];
    size_t nm = gp->n_mass, J = f->n_eep_max, nx = f->n_extra;
    name_list L;
    int rc = list_names(gx, where, &L, err);
    if (rc != HRT_OK)
        return rc;
    if (L.n != nx)
        return trail_set_error(err, HRT_E_FORMAT, "%s: %zu extra quantities, metallicity/0 has %zu", where, L.n, nx);
    gp->x = malloc(nx * nm * J * sizeof(double) + 1);
    if (!gp->x)
        return trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", where);
    f->bytes += nx * nm * J * sizeof(double);
    for (size_t k = 0; k < nx && rc == HRT_OK; k++) {
        const char *name = f->extra[k].name;
        if (strcmp(L.name[k], name) != 0)
            return trail_set_error(err, HRT_E_FORMAT, "%s: extra quantity '%s' where metallicity/0 has '%s'", where,
                                   L.name[k], name);
        hsize_t d2[2] = {nm, J};
        double *x = gp->x + k * nm * J;
        rc = trail_h5_numeric(gx, where, name, 2, d2, 0, x, err);
        if (rc == HRT_OK && !trail_h5_has_checksum(gx, name))
            rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s: stored without a Fletcher-32 checksum", where, name);
        for (size_t i = 0; i < nm && rc == HRT_OK; i++) {
            double *row = x + i * J;
            size_t ne = (size_t)gp->n_eep[i];
            int ok = 1;
            for (size_t j = 0; j < ne; j++) /* one pass without branches; NaN fails the comparison */
                ok &= fabs(row[j]) < 1e300;
            for (size_t j = 0; !ok && j < ne; j++)
                if (!(fabs(row[j]) < 1e300)) {
                    rc = trail_set_error(err, HRT_E_FORMAT, "%s/%s[%zu][%zu]: %g is not a finite value", where,
                                         name, i, j, row[j]);
                    break;
                }
            for (size_t j = ne; j < J; j++)
                row[j] = NAN;
        }
    }
    return rc;
}

int trail_file_read_extras(int64_t fh_, trail_file *f, hrt_error *err)
{
    hid_t fh = (hid_t)fh_;
    f->n_extra = 0;
    int rc = HRT_OK;
    for (size_t iz = 0; iz < f->n_z && rc == HRT_OK; iz++) {
        char where[96];
        snprintf(where, sizeof where, "metallicity/%zu/%s", iz, TRAIL_EXTRA_GROUP);
        char gname[64];
        snprintf(gname, sizeof gname, "metallicity/%zu", iz);
        hid_t gr = trail_h5_group(fh, gname);
        int has = gr >= 0 ? trail_h5_link(gr, TRAIL_EXTRA_GROUP) : 0;
        hid_t gx = has == 1 ? trail_h5_group(gr, TRAIL_EXTRA_GROUP) : -1;
        if (gr >= 0)
            H5Gclose(gr);
        if (has != 0 && gx < 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "%s is not a group", where);
        } else if ((gx >= 0) != (iz == 0 ? 1 : f->n_extra > 0) && iz > 0) {
            rc = trail_set_error(err, HRT_E_FORMAT, "%s: %s, but metallicity/0 %s", where,
                                 gx >= 0 ? "present" : "missing", gx >= 0 ? "has none" : "has extra quantities");
        } else if (gx >= 0) {
            if (iz == 0) {
                name_list L;
                rc = list_names(gx, where, &L, err);
                f->extra = rc == HRT_OK ? calloc(L.n ? L.n : 1, sizeof *f->extra) : NULL;
                if (rc == HRT_OK && !f->extra)
                    rc = trail_set_error(err, HRT_E_NOMEM, "%s: out of memory", where);
                if (rc == HRT_OK && L.n == 0)
                    rc = trail_set_error(err, HRT_E_FORMAT, "%s: an empty group (leave it out instead)", where);
                for (size_t k = 0; k < L.n && rc == HRT_OK; k++)
                    rc = read_decl(gx, where, L.name[k], &f->extra[k], err);
                if (rc == HRT_OK)
                    f->n_extra = L.n;
            }
            if (rc == HRT_OK)
                rc = read_group_extras(gx, where, f, iz, err);
        }
        if (gx >= 0)
            H5Gclose(gx);
    }
    return rc;
}

void trail_file_free_extras(trail_file *f)
{
    for (size_t iz = 0; f->grp && iz < f->n_z; iz++) {
        free(f->grp[iz].x);
        f->grp[iz].x = NULL;
    }
    free(f->extra);
    f->extra = NULL;
    f->n_extra = 0;
}
