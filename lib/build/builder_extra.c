/* Extra per-EEP quantities in a grid under construction (tracks/FORMAT.md,
 * "Extra quantities"): their declaration (name, unit, meaning) and tracks
 * that carry them, resampled onto the EEPs with the standard quantities
 * (builder.c) and written beside them (builder_write.c). */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "build/build.h"
#include "build/builder.h"
#include "util/schema.h"
#include "util/util.h"

int hrt_builder_declare_extra(hrt_builder *b, const char *name, const char *unit, const char *meaning,
                              hrt_error *err)
{
    if (!b || !name || !unit || !meaning)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_declare_extra: %s is NULL",
                               !b ? "builder" : !name ? "name" : !unit ? "unit" : "meaning");
    if (!trail_extra_name_ok(name))
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_builder_declare_extra: '%.80s' is not a name of lower-case letters, digits and "
                               "'_' starting with a letter, under %d characters, other than a standard quantity's",
                               name, TRAIL_EXTRA_NAME_LEN);
    if (!trail_extra_text_ok(unit) || !trail_extra_text_ok(meaning))
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_builder_declare_extra: the unit and meaning of '%s' must be printable ASCII under "
                               "%d characters",
                               name, TRAIL_EXTRA_TEXT_LEN);
    for (size_t g = 0; g < b->n_groups; g++)
        if (b->grp[g].n > 0)
            return trail_set_error(err, HRT_E_INVALID,
                                   "hrt_builder_declare_extra: '%s' declared after tracks were added", name);
    for (size_t k = 0; k < b->n_extra; k++)
        if (strcmp(b->extra[k].name, name) == 0)
            return trail_set_error(err, HRT_E_INVALID, "hrt_builder_declare_extra: '%s' is already declared", name);
    if (b->n_extra >= TRAIL_MAX_EXTRA)
        return trail_set_error(err, HRT_E_INVALID, "hrt_builder_declare_extra: at most %d extra quantities",
                               TRAIL_MAX_EXTRA);
    trail_extra_decl *d = &b->extra[b->n_extra++];
    snprintf(d->name, sizeof d->name, "%s", name);
    snprintf(d->units, sizeof d->units, "%s", unit);
    snprintf(d->meaning, sizeof d->meaning, "%s", meaning);
    return trail_set_error(err, HRT_OK, NULL);
}

int hrt_builder_set_extra_single(hrt_builder *b, const char *name, int on, hrt_error *err)
{
    if (!b || !name)
        return trail_set_error(err, HRT_E_NULL, "hrt_builder_set_extra_single: %s is NULL", !b ? "builder" : "name");
    for (size_t k = 0; k < b->n_extra; k++)
        if (strcmp(b->extra[k].name, name) == 0) {
            b->extra_single[k] = on != 0;
            return trail_set_error(err, HRT_OK, NULL);
        }
    return trail_set_error(err, HRT_E_INVALID, "hrt_builder_set_extra_single: no extra quantity '%.80s' declared",
                           name);
}

size_t hrt_builder_extra_count(const hrt_builder *b) { return b ? b->n_extra : 0; }

/* The extra columns of t: one per declared quantity, finite. */
static int check_extra(const hrt_builder *b, const hrt_track_data *t, size_t n_extra, const double *const *extra,
                       const char *who, hrt_error *err)
{
    if (!t)
        return trail_set_error(err, HRT_E_NULL, "%s: track is NULL", who);
    if (n_extra != b->n_extra)
        return trail_set_error(err, HRT_E_INVALID, "%s: %zu extra columns given, %zu declared", who, n_extra,
                               b->n_extra);
    if (n_extra > 0 && !extra)
        return trail_set_error(err, HRT_E_NULL, "%s: extra is NULL", who);
    for (size_t k = 0; k < n_extra; k++) {
        if (!extra[k])
            return trail_set_error(err, HRT_E_NULL, "%s: extra column %zu ('%s') is NULL", who, k, b->extra[k].name);
        for (size_t s = 0; s < t->n; s++)
            if (!(isfinite(extra[k][s]) && fabs(extra[k][s]) < 1e300))
                return trail_set_error(err, HRT_E_DOMAIN, "%s: track %g Msun: %s[%zu] = %g is not a finite value",
                                       who, t->initial_mass_msun, b->extra[k].name, s, extra[k][s]);
    }
    return HRT_OK;
}

int hrt_builder_add_track_extra(hrt_builder *b, double z, const hrt_track_data *t, size_t n_extra,
                                const double *const *extra, hrt_error *err)
{
    if (!b)
        return trail_set_error(err, HRT_E_NULL, "builder is NULL");
    int rc = check_extra(b, t, n_extra, extra, "hrt_builder_add_track_extra", err);
    return rc != HRT_OK ? rc : trail_builder_add(b, z, t, extra, 0, err);
}

int hrt_builder_add_eep_track_extra(hrt_builder *b, double z, const hrt_track_data *t, size_t n_extra,
                                    const double *const *extra, hrt_error *err)
{
    if (!b)
        return trail_set_error(err, HRT_E_NULL, "builder is NULL");
    int rc = check_extra(b, t, n_extra, extra, "hrt_builder_add_eep_track_extra", err);
    return rc != HRT_OK ? rc : trail_builder_add(b, z, t, extra, 1, err);
}
