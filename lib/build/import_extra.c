/* Extra quantities in an import (tracks/FORMAT.md, "Importing text tracks"
 * and "Extra quantities"): a user's further columns, read with the standard
 * ones (import_read.c), resampled onto the EEPs by the builder and written
 * as the grid's extra quantities. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "build/import.h"
#include "util/util.h"

static trail_extra_decl *find_extra(hrt_import *imp, const char *name)
{
    for (size_t k = 0; k < imp->n_extra; k++)
        if (strcmp(imp->extra[k].name, name) == 0)
            return &imp->extra[k];
    return NULL;
}

/* Declare (or re-map) extra quantity name, read from column. */
static int add_extra(hrt_import *imp, const char *name, const char *column, const char *where, hrt_error *err)
{
    if (!trail_extra_name_ok(name))
        return trail_set_error(err, HRT_E_INVALID,
                               "%sextra quantity '%.80s': a name of lower-case letters, digits and '_' starting with a "
                               "letter, under %d characters, other than a standard quantity's",
                               where, name, TRAIL_EXTRA_NAME_LEN);
    if (!*column || strlen(column) >= TRAIL_EXTRA_TEXT_LEN)
        return trail_set_error(err, HRT_E_INVALID, "%sextra quantity '%s': no column, or its name is too long", where,
                               name);
    trail_extra_decl *d = find_extra(imp, name);
    if (!d) {
        if (imp->n_extra >= TRAIL_MAX_EXTRA)
            return trail_set_error(err, HRT_E_INVALID, "%sat most %d extra quantities", where, TRAIL_MAX_EXTRA);
        d = &imp->extra[imp->n_extra++];
        memset(d, 0, sizeof *d);
        snprintf(d->name, sizeof d->name, "%s", name);
    }
    snprintf(imp->extra_column[d - imp->extra], TRAIL_EXTRA_TEXT_LEN, "%s", column);
    if (!d->meaning[0] || strncmp(d->meaning, "column ", 7) == 0)
        snprintf(d->meaning, sizeof d->meaning, "column %.200s of the imported tables", column);
    return HRT_OK;
}

int trail_import_extra_entry(hrt_import *imp, const char *key, const char *val, const char *where, hrt_error *err)
{
    const char *dot = strchr(key, '.');
    if (!dot)
        return add_extra(imp, key, val, where, err);
    char name[TRAIL_EXTRA_NAME_LEN];
    snprintf(name, sizeof name, "%.*s", (int)(dot - key), key);
    trail_extra_decl *d = find_extra(imp, name);
    if (strcmp(dot + 1, "units") != 0 || !d)
        return trail_set_error(err, HRT_E_INVALID,
                               "%smap key 'extra.%s': give extra.NAME=COLUMN first, then extra.NAME.units=UNIT", where,
                               key);
    if (!trail_extra_text_ok(val))
        return trail_set_error(err, HRT_E_INVALID, "%sextra.%s=%s: a unit is printable ASCII under %d characters",
                               where, key, val, TRAIL_EXTRA_TEXT_LEN);
    snprintf(d->units, sizeof d->units, "%s", val);
    return HRT_OK;
}

int hrt_import_add_extra(hrt_import *imp, const char *name, const char *column, const char *unit, const char *meaning,
                         hrt_error *err)
{
    if (!imp || !name || !column)
        return trail_set_error(err, HRT_E_NULL, "hrt_import_add_extra: %s is NULL",
                               !imp ? "import" : !name ? "name" : "column");
    if ((unit && !trail_extra_text_ok(unit)) || (meaning && !trail_extra_text_ok(meaning)))
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_import_add_extra: unit and meaning are printable ASCII under %d characters",
                               TRAIL_EXTRA_TEXT_LEN);
    int rc = add_extra(imp, name, column, "hrt_import_add_extra: ", err);
    if (rc != HRT_OK)
        return rc;
    trail_extra_decl *d = find_extra(imp, name);
    if (unit)
        snprintf(d->units, sizeof d->units, "%s", unit);
    if (meaning && *meaning)
        snprintf(d->meaning, sizeof d->meaning, "%s", meaning);
    return trail_set_error(err, HRT_OK, NULL);
}

size_t hrt_import_n_extra(const hrt_import *imp) { return imp ? imp->n_extra : 0; }

int trail_import_declare_extras(const hrt_import *imp, hrt_builder *b, hrt_error *err)
{
    int rc = HRT_OK;
    for (size_t k = 0; k < imp->n_extra && rc == HRT_OK; k++)
        rc = hrt_builder_declare_extra(b, imp->extra[k].name, imp->extra[k].units, imp->extra[k].meaning, err);
    return rc;
}

int trail_import_extra_columns(const hrt_import *imp, const trail_import_track *t, size_t n,
                               const double *xcols[TRAIL_MAX_EXTRA], double **buf)
{
    size_t nx = imp->n_extra;
    *buf = NULL;
    if (nx == 0)
        return HRT_OK;
    *buf = malloc(nx * n * sizeof(double));
    if (!*buf)
        return HRT_E_NOMEM;
    for (size_t k = 0; k < nx; k++) {
        for (size_t s = 0; s < n; s++)
            (*buf)[k * n + s] = t->x[s * nx + k];
        xcols[k] = *buf + k * n;
    }
    return HRT_OK;
}
