/* Private: the leave-one-out run's result object, shared by accuracy.c (the
 * run) and accuracy_stats.c (the object, its samples and its rows). */
#ifndef TRAIL_BUILD_ACCURACY_H
#define TRAIL_BUILD_ACCURACY_H

#include "hrtrail.h"

/* One compared EEP: |error| per quantity and where it was. */
typedef struct trail_acc_point {
    double e[HRT_ACCURACY_NQ];
    double m, z;
    size_t eep;
    int phase;
} trail_acc_point;

/* The largest |error| of one dropped track over EEPs [eep_lo, eep_hi)
 * (a block inside one keypoint segment): the stored error field. */
typedef struct trail_acc_field {
    int it, route;
    double z, m;
    int eep_lo, eep_hi;
    double e[HRT_ACCURACY_NQ];
    double z_lo, z_hi; /* across metallicity: the groups either side it was predicted from (else 0) */
} trail_acc_field;

/* EEPs per block of the stored error field (blocks never cross a keypoint). */
#define TRAIL_ACC_BLOCK 10

/* Add blocks of the error field (under the caller's lock). */
int trail_acc_record_field(hrt_accuracy *acc, const trail_acc_field *f, size_t n, hrt_error *err);
/* The error field of the last run, sorted by type, route, Z, mass and EEP. */
const trail_acc_field *trail_acc_field_rows(const hrt_accuracy *acc, size_t *n);

/* Whether interpolation type it is measured. */
int trail_acc_wants(const hrt_accuracy *acc, int it);
/* Whether the run drops metallicity groups (hrt_accuracy_set_across_z). */
int trail_acc_across_z(const hrt_accuracy *acc);
/* Whether the group of metallicity z is measured. */
int trail_acc_takes_z(const hrt_accuracy *acc, double z);
/* Threads asked (0: OpenMP's default). */
int trail_acc_threads(const hrt_accuracy *acc);
/* The progress callback and its user pointer. */
void (*trail_acc_progress(const hrt_accuracy *acc, void **user))(void *, size_t, size_t);
/* Forget any previous result; n_routes cells per type. */
int trail_acc_begin(hrt_accuracy *acc, size_t n_routes, hrt_error *err);
/* Add one dropped track's points for type it and route r (wd: its white-dwarf mass error or NaN). */
int trail_acc_record(hrt_accuracy *acc, int it, int r, const trail_acc_point *pt, size_t n, double wd,
                     hrt_error *err);
/* Turn the samples into rows. */
int trail_acc_finish(hrt_accuracy *acc, hrt_error *err);

#endif
