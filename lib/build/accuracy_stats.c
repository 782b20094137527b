/* The leave-one-out result object: settings, the compared points of every
 * (type, route, phase) cell, and the rows made of them (hrt_accuracy_* in
 * include/hrtrail/build.h; the run itself is accuracy.c). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "build/accuracy.h"
#include "util/util.h"

typedef struct acc_cell {
    trail_acc_point *p;
    size_t n, cap, n_tracks;
} acc_cell;

struct hrt_accuracy {
    int interp;  /* -1: every type */
    int threads; /* 0: OpenMP's default */
    double z;    /* NaN: every metallicity */
    int across_z; /* drop metallicity groups instead of tracks */
    void (*progress)(void *, size_t, size_t);
    void *user;
    size_t nr;
    acc_cell *cell; /* [HRT_INTERP_COUNT][nr][HRT_PHASE_SLOTS] */
    double *wd;     /* [HRT_INTERP_COUNT][nr] */
    hrt_accuracy_row *rows;
    size_t n_rows;
    trail_acc_field *field; /* the error field: blocks of every dropped track */
    size_t n_field, cap_field;
};

int hrt_accuracy_new(hrt_accuracy **acc, hrt_error *err)
{
    if (!acc)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_new: acc is NULL");
    *acc = calloc(1, sizeof **acc);
    if (!*acc)
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_new: out of memory");
    (*acc)->interp = -1;
    (*acc)->z = NAN;
    return HRT_OK;
}

static void cells_free(hrt_accuracy *acc)
{
    for (size_t i = 0; acc->cell && i < HRT_INTERP_COUNT * acc->nr * HRT_PHASE_SLOTS; i++)
        free(acc->cell[i].p);
    free(acc->cell);
    free(acc->wd);
    acc->cell = NULL;
    acc->wd = NULL;
}

void hrt_accuracy_free(hrt_accuracy *acc)
{
    if (!acc)
        return;
    cells_free(acc);
    free(acc->rows);
    free(acc->field);
    free(acc);
}

int hrt_accuracy_set_interp(hrt_accuracy *acc, int interp, hrt_error *err)
{
    if (!acc)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_set_interp: acc is NULL");
    if (interp < -1 || interp >= HRT_INTERP_COUNT)
        return trail_set_error(err, HRT_E_INVALID,
                               "hrt_accuracy_set_interp: unknown interpolation type %d (0..%d, or -1 for all)",
                               interp, HRT_INTERP_COUNT - 1);
    acc->interp = interp;
    return HRT_OK;
}

int hrt_accuracy_set_threads(hrt_accuracy *acc, int n, hrt_error *err)
{
    if (!acc)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_set_threads: acc is NULL");
    if (n < 0)
        return trail_set_error(err, HRT_E_INVALID, "hrt_accuracy_set_threads: %d threads (0 for the default, or >= 1)",
                               n);
    acc->threads = n;
    return HRT_OK;
}

int hrt_accuracy_set_z(hrt_accuracy *acc, double z, hrt_error *err)
{
    if (!acc)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_set_z: acc is NULL");
    if (!isnan(z) && !(z > 0 && isfinite(z)))
        return trail_set_error(err, HRT_E_DOMAIN, "hrt_accuracy_set_z: Z = %g (give Z > 0, or NaN for every group)", z);
    acc->z = z;
    return HRT_OK;
}

int hrt_accuracy_set_across_z(hrt_accuracy *acc, int on, hrt_error *err)
{
    if (!acc)
        return trail_set_error(err, HRT_E_NULL, "hrt_accuracy_set_across_z: acc is NULL");
    acc->across_z = on != 0;
    return HRT_OK;
}

int trail_acc_across_z(const hrt_accuracy *acc) { return acc->across_z; }

int trail_acc_takes_z(const hrt_accuracy *acc, double z) { return isnan(acc->z) || fabs(z / acc->z - 1) <= 1e-9; }

int hrt_accuracy_set_progress(hrt_accuracy *acc, void (*progress)(void *user, size_t done, size_t total), void *user)
{
    if (!acc)
        return HRT_E_NULL;
    acc->progress = progress;
    acc->user = user;
    return HRT_OK;
}

int trail_acc_wants(const hrt_accuracy *acc, int it) { return acc->interp < 0 || acc->interp == it; }

int trail_acc_threads(const hrt_accuracy *acc) { return acc->threads; }

void (*trail_acc_progress(const hrt_accuracy *acc, void **user))(void *, size_t, size_t)
{
    *user = acc->user;
    return acc->progress;
}

int trail_acc_begin(hrt_accuracy *acc, size_t n_routes, hrt_error *err)
{
    cells_free(acc);
    free(acc->rows);
    acc->rows = NULL;
    acc->n_rows = 0;
    acc->n_field = 0;
    acc->nr = n_routes;
    acc->cell = calloc(HRT_INTERP_COUNT * n_routes * HRT_PHASE_SLOTS, sizeof *acc->cell);
    acc->wd = malloc(HRT_INTERP_COUNT * n_routes * sizeof *acc->wd);
    if (!acc->cell || !acc->wd) {
        cells_free(acc);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory");
    }
    for (size_t i = 0; i < HRT_INTERP_COUNT * n_routes; i++)
        acc->wd[i] = NAN;
    return HRT_OK;
}

static acc_cell *cell_of(const hrt_accuracy *acc, int it, size_t r, int phase)
{
    return &acc->cell[((size_t)it * acc->nr + r) * HRT_PHASE_SLOTS + (size_t)phase];
}

int trail_acc_record(hrt_accuracy *acc, int it, int r, const trail_acc_point *pt, size_t n, double wd,
                     hrt_error *err)
{
    unsigned char seen[HRT_PHASE_SLOTS] = {0};
    for (size_t i = 0; i < n; i++) {
        acc_cell *c = cell_of(acc, it, (size_t)r, pt[i].phase);
        if (c->n == c->cap) {
            size_t cap = c->cap ? 2 * c->cap : 256;
            trail_acc_point *p = realloc(c->p, cap * sizeof *p);
            if (!p)
                return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory");
            c->p = p;
            c->cap = cap;
        }
        c->p[c->n++] = pt[i];
        if (!seen[pt[i].phase]++)
            c->n_tracks++;
    }
    double *w = &acc->wd[(size_t)it * acc->nr + (size_t)r];
    if (!isnan(wd) && (isnan(*w) || wd > *w))
        *w = wd;
    return HRT_OK;
}

int trail_acc_record_field(hrt_accuracy *acc, const trail_acc_field *f, size_t n, hrt_error *err)
{
    if (acc->n_field + n > acc->cap_field) {
        size_t cap = acc->cap_field ? 2 * acc->cap_field : 4096;
        while (cap < acc->n_field + n)
            cap *= 2;
        trail_acc_field *p = realloc(acc->field, cap * sizeof *p);
        if (!p)
            return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory");
        acc->field = p;
        acc->cap_field = cap;
    }
    memcpy(acc->field + acc->n_field, f, n * sizeof *f);
    acc->n_field += n;
    return HRT_OK;
}

static int cmp_field(const void *pa, const void *pb)
{
    const trail_acc_field *a = pa, *b = pb;
    if (a->it != b->it)
        return a->it < b->it ? -1 : 1;
    if (a->route != b->route)
        return a->route < b->route ? -1 : 1;
    if (a->z != b->z)
        return a->z < b->z ? -1 : 1;
    if (a->m != b->m)
        return a->m < b->m ? -1 : 1;
    return a->eep_lo < b->eep_lo ? -1 : a->eep_lo > b->eep_lo;
}

const trail_acc_field *trail_acc_field_rows(const hrt_accuracy *acc, size_t *n)
{
    *n = acc ? acc->n_field : 0;
    return acc ? acc->field : NULL;
}

/* Whether point a is a worse error of quantity q than b; ties go to the lower
 * Z, mass and EEP, so that the answer does not depend on the threads' order. */
static int worse(const trail_acc_point *a, const trail_acc_point *b, int q)
{
    if (a->e[q] != b->e[q])
        return a->e[q] > b->e[q];
    if (a->z != b->z)
        return a->z < b->z;
    if (a->m != b->m)
        return a->m < b->m;
    return a->eep < b->eep;
}

/* Median, 95th percentile and maximum of quantity q (nearest rank), and where the maximum is. */
static void cell_stats(const acc_cell *c, int q, double *buf, hrt_accuracy_row *row)
{
    size_t worst = 0;
    for (size_t i = 0; i < c->n; i++) {
        buf[i] = c->p[i].e[q];
        if (worse(&c->p[i], &c->p[worst], q))
            worst = i;
    }
    qsort(buf, c->n, sizeof *buf, trail_cmp_double);
    row->median[q] = buf[(size_t)floor(0.5 * (double)(c->n - 1) + 0.5)];
    row->p95[q] = buf[(size_t)floor(0.95 * (double)(c->n - 1) + 0.5)];
    row->max[q] = buf[c->n - 1];
    row->worst_mass_msun[q] = c->p[worst].m;
    row->worst_z[q] = c->p[worst].z;
    row->worst_eep[q] = c->p[worst].eep;
}

int trail_acc_finish(hrt_accuracy *acc, hrt_error *err)
{
    size_t n = 0, most = 1;
    for (size_t i = 0; i < HRT_INTERP_COUNT * acc->nr * HRT_PHASE_SLOTS; i++)
        if (acc->cell[i].n) {
            n++;
            most = acc->cell[i].n > most ? acc->cell[i].n : most;
        }
    acc->rows = calloc(n ? n : 1, sizeof *acc->rows);
    double *buf = malloc(most * sizeof *buf);
    if (!acc->rows || !buf) {
        free(buf);
        return trail_set_error(err, HRT_E_NOMEM, "hrt_accuracy_run: out of memory");
    }
    for (int it = 0; it < HRT_INTERP_COUNT; it++)
        for (size_t r = 0; r < acc->nr; r++)
            for (size_t i = 0; i < HRT_PHASE_N; i++) {
                int p = hrt_phase_code(i);
                const acc_cell *c = p >= 0 && p < HRT_PHASE_SLOTS ? cell_of(acc, it, r, p) : NULL;
                if (!c || !c->n)
                    continue;
                hrt_accuracy_row *row = &acc->rows[acc->n_rows++];
                *row = (hrt_accuracy_row){.interp = it, .route = (int)r, .phase = p, .n_points = c->n,
                                          .n_tracks = c->n_tracks, .wd_mass_max_msun = acc->wd[(size_t)it * acc->nr + r]};
                for (int q = 0; q < HRT_ACCURACY_NQ; q++)
                    cell_stats(c, q, buf, row);
            }
    free(buf);
    cells_free(acc);
    /* the threads finished in any order: sort, so that what is stored does not depend on it */
    if (acc->n_field)
        qsort(acc->field, acc->n_field, sizeof *acc->field, cmp_field);
    return HRT_OK;
}

size_t hrt_accuracy_n_rows(const hrt_accuracy *acc) { return acc ? acc->n_rows : 0; }

int hrt_accuracy_row_at(const hrt_accuracy *acc, size_t i, hrt_accuracy_row *out)
{
    if (!acc || !out)
        return HRT_E_NULL;
    if (i >= acc->n_rows)
        return HRT_E_INVALID;
    *out = acc->rows[i];
    return HRT_OK;
}
