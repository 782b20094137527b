/* The C side of the Fortran and C++ binding tests, linked into their test
 * programs: the struct layout as the C compiler sees it, and the same library
 * calls made straight from C into caller buffers for bit-for-bit comparison. */
#include <stddef.h>
#include <string.h>

#include "hrtrail.h"
#include "state_layout.h"

#define NAME_(f) #f,
#define OFF_(f) offsetof(hrt_state, f),
#define SIZE_(f) sizeof(((hrt_state *)0)->f),
static const char state_names[][24] = {HRT_STATE_FIELDS(NAME_)};
static const size_t state_offsets[] = {HRT_STATE_FIELDS(OFF_)};
static const size_t state_sizes[] = {HRT_STATE_FIELDS(SIZE_)};

int ref_state_n_fields(void);
int ref_state_field(int i, char *name, size_t *offset, size_t *size);
size_t ref_sizeof(int which);
int ref_eval(const char *path, size_t n, const double *m, const double *z, double z_all, const double *a,
             hrt_state *out, char *msg);
int ref_star(const char *path, double mass, double z, size_t n_ages, const double *ages, hrt_state *at,
             size_t cap_track, hrt_state *track, size_t *n_track, size_t cap_spans, hrt_phase_span *spans,
             size_t *n_spans);
int ref_isochrone(const char *path, double age, double z, size_t cap, hrt_state *out, size_t *n);

int ref_state_n_fields(void) { return (int)(sizeof state_offsets / sizeof state_offsets[0]); }

/* Field i of hrt_state: name (NUL-terminated, < 24 bytes), offset and size in bytes. */
int ref_state_field(int i, char *name, size_t *offset, size_t *size)
{
    if (i < 0 || i >= ref_state_n_fields())
        return -1;
    memcpy(name, state_names[i], sizeof state_names[i]);
    *offset = state_offsets[i];
    *size = state_sizes[i];
    return 0;
}

/* sizeof hrt_state (0), hrt_error (1), hrt_phase_span (2). */
size_t ref_sizeof(int which)
{
    return which == 0 ? sizeof(hrt_state) : which == 1 ? sizeof(hrt_error) : sizeof(hrt_phase_span);
}

/* hrt_eval on a grid of its own; msg receives the error message (256 bytes). */
int ref_eval(const char *path, size_t n, const double *m, const double *z, double z_all, const double *a,
             hrt_state *out, char *msg)
{
    hrt_grid *g;
    hrt_error err;
    memset(&err, 0, sizeof err);
    int rc = hrt_grid_open(path, &g, &err);
    if (rc == HRT_OK) {
        rc = hrt_eval(g, n, m, z, z_all, a, out, &err);
        hrt_grid_close(g);
    }
    memcpy(msg, rc ? err.message : "", rc ? sizeof err.message : 1);
    return rc;
}

/* hrt_star_at at each age, every EEP state, and the phases of one star. */
int ref_star(const char *path, double mass, double z, size_t n_ages, const double *ages, hrt_state *at,
             size_t cap_track, hrt_state *track, size_t *n_track, size_t cap_spans, hrt_phase_span *spans,
             size_t *n_spans)
{
    hrt_grid *g;
    hrt_star *s = NULL;
    int rc = hrt_grid_open(path, &g, NULL);
    if (rc != HRT_OK)
        return rc;
    rc = hrt_star_new(g, mass, z, &s, NULL);
    if (rc == HRT_OK) {
        for (size_t i = 0; i < n_ages; i++)
            hrt_star_at(s, ages[i], &at[i]);
        *n_track = hrt_star_n_eep(s);
        for (size_t j = 0; j < *n_track && j < cap_track; j++)
            hrt_star_eep_state(s, j, &track[j]);
        rc = hrt_star_phases(s, spans, cap_spans, n_spans);
    }
    hrt_star_free(s);
    hrt_grid_close(g);
    return rc;
}

/* hrt_isochrone into out[cap]. */
int ref_isochrone(const char *path, double age, double z, size_t cap, hrt_state *out, size_t *n)
{
    hrt_grid *g;
    int rc = hrt_grid_open(path, &g, NULL);
    if (rc != HRT_OK)
        return rc;
    rc = hrt_isochrone(g, age, z, out, cap, n, NULL);
    hrt_grid_close(g);
    return rc;
}
