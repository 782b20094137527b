/* A user's program, built by the install tests against a staging install
 * (pkg-config, pkg-config --static, CMake): a few stars of an invented
 * cluster and a small population on the default grid (HRTRAIL_GRID), every
 * number printed at full precision so that every way of linking must give
 * the same text. */
#include <stdio.h>

#include <hrtrail.h>

int main(void)
{
    hrt_grid *g;
    hrt_error err;
    if (hrt_grid_open(NULL, &g, &err) != HRT_OK) {
        fprintf(stderr, "consumer: %s\n", err.message);
        return 1;
    }
    const double mass[3] = {0.9, 1.7, 4.2}, age[3] = {3.1e9, 9.0e8, 1.2e8};
    hrt_state s[3];
    int rc = hrt_eval(g, 3, mass, NULL, hrt_grid_z_ref(g), age, s, &err);
    for (int i = 0; i < 3 && rc == HRT_OK; i++)
        printf("%s %.17g %.17g %.17g\n", hrt_phase_key(s[i].phase), s[i].log_l_lsun, s[i].log_teff_k,
               s[i].mass_msun);
    hrt_pop_spec spec;
    hrt_pop_spec_default(&spec);
    spec.zdist.z = hrt_grid_z_ref(g);
    spec.n_stars = 5000;
    spec.chunk_size = 1000;
    hrt_pop_summary sum;
    if (rc == HRT_OK)
        rc = hrt_pop_summary_init(&sum, 1e9, NULL, &err);
    if (rc == HRT_OK)
        rc = hrt_pop_run(g, &spec, 0, hrt_pop_n_chunks(&spec), 2, 1, &sum, &err);
    if (rc == HRT_OK)
        printf("population: %llu evaluated, %.17g Lsun, %.17g Msun\n", (unsigned long long)sum.n_evaluated,
               hrt_pop_sum_value(&sum.l_lsun), hrt_pop_sum_value(&sum.mass_msun));
    hrt_grid_close(g);
    if (rc != HRT_OK) {
        fprintf(stderr, "consumer: %s\n", err.message);
        return 1;
    }
    return 0;
}
