/* Eight threads share one open grid and evaluate random stars through every
 * query path (hrt_eval in batches, hrt_star_new + hrt_star_at, phases,
 * keypoints, hrt_isochrone, and hrt_state_interp_error on a grid freshly
 * opened, whose first calls decode its stored error field, all threads
 * at once); every answer must be bit-identical to a serial run.  Built also under ThreadSanitizer in CI (.ci/run), where any data
 * race inside the library is reported and fails the run.
 *
 * Usage: test_threads [GRID.h5 ...]; a small synthetic grid is always
 * tested first. */
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "hrtrail.h"
#include "synth.h"
#include "hard.h"

#define N_THREADS 8
#define N_STARS 3000
#define STAR_EVERY 10 /* every 10th star is also built with hrt_star_new */
#define N_STAR_AGES 3
#define N_ISO 4
#define CHUNK 64
#define N_IE 300 /* stars asked for their interpolation error */

typedef struct star_ref {
    int rc_new;
    size_t n_eep, n_phases;
    hrt_state at[N_STAR_AGES];
    int rc_at[N_STAR_AGES];
    double kp_age[4];
    int remnant;
    double remnant_mass;
} star_ref;

typedef struct job {
    const hrt_grid *g;
    size_t n;
    const double *m, *z, *age;
    const hrt_state *ref;
    const hrt_error *ref_err;
    const int *ref_rc;
    const star_ref *sref;
    double iso_z, iso_age[N_ISO];
    const hrt_state *iso_ref[N_ISO];
    size_t iso_n[N_ISO];
    const hrt_grid *fresh; /* the same file opened again: its error field not decoded yet */
    const hrt_interp_error *ie_ref;
    const int *ie_rc;
    pthread_barrier_t *barrier;
    int thread;
    long mismatches, evaluated;
} job;

static double star_age(const job *j, size_t i, int k) { return j->age[i] * (0.3 + 0.7 * k); }

static void star_record(const hrt_grid *g, double m, double z, const double *ages, star_ref *r)
{
    memset(r, 0, sizeof *r);
    hrt_star *s = NULL;
    r->rc_new = hrt_star_new(g, m, z, &s, NULL);
    if (r->rc_new != HRT_OK)
        return;
    r->n_eep = hrt_star_n_eep(s);
    hrt_star_phases(s, NULL, 0, &r->n_phases);
    for (int k = 0; k < N_STAR_AGES; k++)
        r->rc_at[k] = hrt_star_at(s, ages[k], &r->at[k]);
    for (size_t k = 0; k < 4; k++)
        if (hrt_star_keypoint_age(s, k, &r->kp_age[k]) != HRT_OK)
            r->kp_age[k] = -1.0;
    hrt_star_remnant(s, &r->remnant, &r->remnant_mass);
    hrt_star_free(s);
}

static void *worker(void *arg)
{
    job *j = arg;
    hrt_state out[CHUNK];
    hrt_error e;
    pthread_barrier_wait(j->barrier);
    for (size_t i = 0; i < N_IE; i++) { /* every thread asks at once: one decodes, the others wait */
        hrt_interp_error ie;
        int rc = hrt_state_interp_error(j->fresh, &j->ref[i], &ie, NULL);
        const hrt_interp_error *r = &j->ie_ref[i];
        /* field by field (bit for bit; NaN on failure): the struct has padding */
        if (rc != j->ie_rc[i] || memcmp(&ie.log_l_dex, &r->log_l_dex, sizeof ie.log_l_dex) != 0 ||
            memcmp(&ie.log_teff_dex, &r->log_teff_dex, sizeof ie.log_teff_dex) != 0 ||
            memcmp(&ie.log_age_dex, &r->log_age_dex, sizeof ie.log_age_dex) != 0 || ie.n_tracks != r->n_tracks)
            j->mismatches++;
    }
    for (int pass = 0; pass < 2; pass++) {
        /* Each thread starts at its own place, so different threads work on
         * different stars at the same moment, and on the same ones too. */
        size_t start = (size_t)(j->thread * 7 + pass * 3) % N_THREADS * (j->n / N_THREADS);
        for (size_t done = 0; done < j->n; done += CHUNK) {
            size_t i0 = (start + done) % j->n, cnt = CHUNK;
            if (i0 + cnt > j->n)
                cnt = j->n - i0;
            int rc = hrt_eval(j->g, cnt, j->m + i0, j->z + i0, 0.0, j->age + i0, out, &e);
            int want = HRT_OK;
            for (size_t k = 0; k < cnt; k++) {
                if (memcmp(&out[k], &j->ref[i0 + k], sizeof out[k]) != 0)
                    j->mismatches++;
                if (want == HRT_OK && j->ref_rc[i0 + k] != HRT_OK)
                    want = j->ref_rc[i0 + k];
            }
            if (rc != want)
                j->mismatches++;
            j->evaluated += (long)cnt;
            /* one star at a time, with its message */
            hrt_state one;
            hrt_error e1;
            int r1 = hrt_eval(j->g, 1, j->m + i0, j->z + i0, 0.0, j->age + i0, &one, &e1);
            if (r1 != j->ref_rc[i0] || memcmp(&one, &j->ref[i0], sizeof one) != 0 ||
                (r1 != HRT_OK && strcmp(e1.message, j->ref_err[i0].message) != 0))
                j->mismatches++;
        }
        for (size_t i = (size_t)j->thread; i < j->n; i += STAR_EVERY) {
            double ages[N_STAR_AGES];
            for (int k = 0; k < N_STAR_AGES; k++)
                ages[k] = star_age(j, i, k);
            star_ref r;
            star_record(j->g, j->m[i], j->z[i], ages, &r);
            if (memcmp(&r, &j->sref[i], sizeof r) != 0)
                j->mismatches++;
        }
        for (int k = 0; k < N_ISO; k++) {
            int kk = (k + j->thread) % N_ISO;
            size_t n = 0, cap = j->iso_n[kk];
            hrt_state *iso = malloc((cap ? cap : 1) * sizeof *iso);
            if (!iso || hrt_isochrone(j->g, j->iso_age[kk], j->iso_z, iso, cap, &n, NULL) != HRT_OK ||
                n != cap || memcmp(iso, j->iso_ref[kk], cap * sizeof *iso) != 0)
                j->mismatches++;
            free(iso);
        }
    }
    return NULL;
}

static void test_grid(const char *path, unsigned long long seed)
{
    hrt_grid *g = NULL;
    hrt_error e;
    int rc = hrt_grid_open(path, &g, &e);
    HARD_CHECK(rc == HRT_OK, "open %s: %s", path, e.message);
    if (rc != HRT_OK)
        return;
    double zlo, zhi;
    hrt_grid_z_range(g, &zlo, &zhi);
    double *m = malloc(N_STARS * sizeof *m), *z = malloc(N_STARS * sizeof *z), *age = malloc(N_STARS * sizeof *age);
    hrt_state *ref = malloc(N_STARS * sizeof *ref);
    hrt_error *ref_err = calloc(N_STARS, sizeof *ref_err);
    int *ref_rc = malloc(N_STARS * sizeof *ref_rc);
    star_ref *sref = calloc(N_STARS, sizeof *sref);
    for (size_t i = 0; i < N_STARS; i++) {
        z[i] = zlo * pow(zhi / zlo, hard_uniform(&seed));
        if (i % 5 == 0)
            z[i] = hrt_grid_z(g, i / 5 % hrt_grid_n_z(g)); /* exactly on a group */
        double mlo = 0.1, mhi = 100.0;
        hrt_grid_mass_range(g, z[i], &mlo, &mhi);
        m[i] = mlo * pow(mhi / mlo, hard_uniform(&seed));
        age[i] = pow(10.0, 5.0 + 5.5 * hard_uniform(&seed));
        switch (i % 97) { /* a few stars every query must refuse, identically */
        case 13: m[i] = NAN; break;
        case 29: m[i] = mhi * 3.0; break;
        case 41: z[i] = zhi * 2.0; break;
        case 57: age[i] = -1.0; break;
        default: break;
        }
    }
    /* The serial answers. */
    size_t n_ok = 0;
    for (size_t i = 0; i < N_STARS; i++) {
        ref_rc[i] = hrt_eval(g, 1, &m[i], &z[i], 0.0, &age[i], &ref[i], &ref_err[i]);
        n_ok += ref_rc[i] == HRT_OK;
    }
    HARD_CHECK(n_ok > N_STARS * 9 / 10, "%zu of %d stars evaluated", n_ok, N_STARS);
    job proto;
    memset(&proto, 0, sizeof proto);
    proto.g = g;
    proto.n = N_STARS;
    proto.m = m;
    proto.z = z;
    proto.age = age;
    for (size_t i = 0; i < N_STARS; i += 1) {
        if (i % STAR_EVERY >= N_THREADS)
            continue;
        double ages[N_STAR_AGES];
        for (int k = 0; k < N_STAR_AGES; k++)
            ages[k] = star_age(&proto, i, k);
        star_record(g, m[i], z[i], ages, &sref[i]);
    }
    proto.iso_z = sqrt(zlo * zhi);
    hrt_state *iso[N_ISO];
    for (int k = 0; k < N_ISO; k++) {
        proto.iso_age[k] = pow(10.0, 7.0 + 0.8 * k);
        size_t n = 0;
        hrt_isochrone(g, proto.iso_age[k], proto.iso_z, NULL, 0, &n, NULL);
        iso[k] = malloc((n ? n : 1) * sizeof *iso[k]);
        size_t n2 = 0;
        HARD_CHECK(hrt_isochrone(g, proto.iso_age[k], proto.iso_z, iso[k], n, &n2, NULL) == HRT_OK && n2 == n,
                   "serial isochrone %d", k);
        proto.iso_ref[k] = iso[k];
        proto.iso_n[k] = n;
    }
    hrt_grid *fresh = NULL;
    HARD_CHECK(hrt_grid_open(path, &fresh, &e) == HRT_OK, "open %s again: %s", path, e.message);
    hrt_interp_error *ie_ref = calloc(N_IE, sizeof *ie_ref);
    int *ie_rc = malloc(N_IE * sizeof *ie_rc);
    for (size_t i = 0; i < N_IE; i++)
        ie_rc[i] = hrt_state_interp_error(g, &ref[i], &ie_ref[i], NULL);
    proto.fresh = fresh;
    proto.ie_ref = ie_ref;
    proto.ie_rc = ie_rc;
    proto.ref = ref;
    proto.ref_err = ref_err;
    proto.ref_rc = ref_rc;
    proto.sref = sref;
    pthread_barrier_t barrier;
    pthread_barrier_init(&barrier, NULL, N_THREADS);
    proto.barrier = &barrier;
    job jobs[N_THREADS];
    pthread_t th[N_THREADS];
    for (int t = 0; t < N_THREADS; t++) {
        jobs[t] = proto;
        jobs[t].thread = t;
        HARD_CHECK(pthread_create(&th[t], NULL, worker, &jobs[t]) == 0, "pthread_create %d", t);
    }
    long mism = 0, evals = 0;
    for (int t = 0; t < N_THREADS; t++) {
        pthread_join(th[t], NULL);
        mism += jobs[t].mismatches;
        evals += jobs[t].evaluated;
    }
    pthread_barrier_destroy(&barrier);
    HARD_CHECK(mism == 0, "%s: %ld answers differ from the serial run", path, mism);
    printf("%s: %d threads, %ld batch evaluations, %zu serial stars OK, %ld differences\n", path, N_THREADS, evals,
           n_ok, mism);
    for (int k = 0; k < N_ISO; k++)
        free(iso[k]);
    free(m);
    free(z);
    free(age);
    free(ref);
    free(ref_err);
    free(ref_rc);
    free(sref);
    free(ie_ref);
    free(ie_rc);
    hrt_grid_close(fresh);
    hrt_grid_close(g);
}

int main(int argc, char **argv)
{
    char dir[] = "/tmp/hrt-threads-XXXXXX", path[64];
    if (!mkdtemp(dir))
        return EXIT_FAILURE;
    snprintf(path, sizeof path, "%s/synth.h5", dir);
    const synth_spec spec = {9, 11, 4, 1, 1, 0.3, 1.0, 10.0};
    hrt_error e;
    HARD_CHECK(synth_write(&spec, path, &e) == HRT_OK, "synthetic grid: %s", e.message);
    test_grid(path, 1);
    for (int a = 1; a < argc; a++)
        test_grid(argv[a], 1000 + (unsigned long long)a);
    unlink(path);
    rmdir(dir);
    return hard_finish("threads");
}
