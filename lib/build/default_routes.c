/* The route layout of the default grid: the one table both the default-grid
 * generator (tracks/gen_grid.c, through hrt_default_route()) and the import
 * (hrt_import_new()) take it from.  Names and counts are held in char and int
 * arrays only, with no pointers, so the table is plain read-only data
 * (.rodata) even in the shared library; hrt_default_route() makes the
 * pointers of an hrt_route_spec at run time. */
#include <stddef.h>

#include "hrtrail.h"

/* Most keypoints of a route of the default layout. */
#define DEFAULT_MAX_KP 10

typedef struct default_route {
    char name[16];
    size_t n_keypoints;
    char keypoint[DEFAULT_MAX_KP][16];
    int segment_samples[DEFAULT_MAX_KP - 1]; /* EEPs per segment between consecutive keypoints */
} default_route;

/* In order of increasing initial mass (tracks/MODEL.md): stars that never
 * ignite helium, stars that end as white dwarfs after helium burning, and
 * stars that end in core collapse. */
static const default_route default_routes[] = {
    {"low_mass", 5, {"birthline", "zams", "tams", "envelope_loss", "wd_onset"}, {100, 150, 150, 40}},
    {"giant",
     10,
     {"birthline", "zams", "tams", "rgb_base", "he_ignition", "cheb_start", "cheb_end", "first_pulse", "agb_end",
      "wd_onset"},
     {100, 150, 60, 120, 40, 100, 60, 80, 40}},
    {"supergiant", 6, {"birthline", "zams", "tams", "cheb_start", "cheb_end", "core_collapse"}, {100, 150, 60, 150, 40}},
};
#define N_DEFAULT_ROUTES (sizeof default_routes / sizeof default_routes[0])

_Static_assert(DEFAULT_MAX_KP <= HRT_IMPORT_MAX_KP, "a default route fits the import's keypoint arrays");

int hrt_default_route(size_t r, hrt_route_spec *spec, const char *keypoint_names[HRT_IMPORT_MAX_KP])
{
    if (!spec || !keypoint_names)
        return HRT_E_NULL;
    if (r >= N_DEFAULT_ROUTES)
        return HRT_E_INVALID;
    const default_route *d = &default_routes[r];
    for (size_t k = 0; k < d->n_keypoints; k++)
        keypoint_names[k] = d->keypoint[k];
    spec->name = d->name;
    spec->n_keypoints = d->n_keypoints;
    spec->keypoint_names = keypoint_names;
    spec->segment_samples = d->segment_samples;
    return HRT_OK;
}
