/* hrtrail grid info | check: what a grid holds, and whether it is sound. */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

static const char *const attr_names[] = {"description", "source", "created_by", "created", "model", "license",
                                         "references", "format", NULL};

static long file_size(const char *path)
{
    struct stat st;
    if (!path || stat(path, &st) != 0) return -1;
    return (long)st.st_size;
}

static void route_counts(const cli *c, size_t iz, size_t *count, size_t nr)
{
    memset(count, 0, nr * sizeof *count);
    for (size_t im = 0; im < hrt_grid_n_masses(c->grid, iz); im++) {
        int r = hrt_grid_track_route(c->grid, iz, im);
        if (r >= 0 && (size_t)r < nr) count[r]++;
    }
}

static void info_csv(const cli *c)
{
    static const col cols[] = {
        {"z", NULL, COL_NUM, NULL, 0},          {"feh", NULL, COL_NUM, NULL, 0},
        {"initial_mass_msun", NULL, COL_NUM, NULL, 0}, {"route", NULL, COL_TEXT, NULL, 0},
        {"n_eep", NULL, COL_NUM, NULL, 0},
    };
    const hrt_grid *g = c->grid;
    table *t = table_new(cols, 5);
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++)
        for (size_t im = 0; im < hrt_grid_n_masses(g, iz); im++) {
            size_t r = table_add_row(t);
            table_num(t, r, 0, hrt_grid_z(g, iz));
            table_num(t, r, 1, cli_feh(c, hrt_grid_z(g, iz)));
            table_num(t, r, 2, hrt_grid_mass(g, iz, im));
            table_text(t, r, 3, cli_route_name(c, hrt_grid_track_route(g, iz, im)));
            table_num(t, r, 4, (double)hrt_grid_track_n_eep(g, iz, im));
        }
    table_write_csv(t, stdout);
    table_free(t);
}

static void info_json_routes(jw *w, const hrt_grid *g)
{
    jw_begin_array(w, "routes");
    for (size_t r = 0; r < hrt_grid_n_routes(g); r++) {
        jw_begin_object(w, NULL);
        jw_str(w, "route", hrt_grid_route_name(g, r));
        jw_int(w, "n_eep", (long)hrt_grid_route_n_eep(g, r));
        jw_begin_array(w, "keypoints");
        for (size_t k = 0; k < hrt_grid_route_n_keypoints(g, r); k++) {
            jw_begin_object(w, NULL);
            jw_str(w, "keypoint", hrt_grid_keypoint_name(g, r, k));
            jw_int(w, "eep", hrt_grid_keypoint_eep(g, r, k));
            jw_end_object(w);
        }
        jw_end_array(w);
        jw_end_object(w);
    }
    jw_end_array(w);
}

static void info_json_metallicities(const cli *c, jw *w)
{
    const hrt_grid *g = c->grid;
    jw_begin_array(w, "metallicities");
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        double lo = NAN, hi = NAN, z = hrt_grid_z(g, iz);
        hrt_grid_mass_range(g, z, &lo, &hi);
        jw_begin_object(w, NULL);
        jw_num(w, "z", z);
        jw_num(w, "feh", cli_feh(c, z));
        jw_num(w, "initial_mass_msun_lo", lo);
        jw_num(w, "initial_mass_msun_hi", hi);
        jw_begin_array(w, "route_boundary_mass_msun");
        for (size_t b = 0; b + 1 < hrt_grid_n_routes(g); b++) jw_num(w, NULL, hrt_grid_route_boundary(g, iz, b));
        jw_end_array(w);
        jw_begin_array(w, "tracks");
        for (size_t im = 0; im < hrt_grid_n_masses(g, iz); im++) {
            jw_begin_object(w, NULL);
            jw_num(w, "initial_mass_msun", hrt_grid_mass(g, iz, im));
            jw_str(w, "route", cli_route_name(c, hrt_grid_track_route(g, iz, im)));
            jw_int(w, "n_eep", (long)hrt_grid_track_n_eep(g, iz, im));
            jw_end_object(w);
        }
        jw_end_array(w);
        jw_end_object(w);
    }
    jw_end_array(w);
}

/* JSON strings are valid UTF-8 whatever the file holds (out.c: control characters escaped,
 * bytes that are not UTF-8 as U+FFFD). */
static void info_json(const cli *c, long bytes)
{
    const hrt_grid *g = c->grid;
    jw w;
    jw_init(&w, stdout);
    jw_begin_object(&w, NULL);
    jw_str(&w, "file", c->grid_used);
    jw_num(&w, "file_bytes", bytes >= 0 ? (double)bytes : NAN);
    jw_num(&w, "memory_bytes", (double)hrt_grid_memory_bytes(g));
    jw_str(&w, "interp", hrt_interp_name(hrt_grid_interp(g)));
    jw_num(&w, "z_ref", hrt_grid_z_ref(g));
    /* records, so that every key is a field name of the vocabulary */
    jw_begin_array(&w, "attributes");
    for (const char *const *a = attr_names; *a; a++)
        if (hrt_grid_attribute(g, *a)) {
            jw_begin_object(&w, NULL);
            jw_str(&w, "attribute", *a);
            jw_str(&w, "value", hrt_grid_attribute(g, *a));
            jw_end_object(&w);
        }
    jw_end_array(&w);
    info_json_routes(&w, g);
    info_json_metallicities(c, &w);
    jw_end_object(&w);
    jw_finish(&w);
}

/* The provenance attributes, made safe for the terminal, with a note on text that is not UTF-8. */
static void info_text_attributes(const hrt_grid *g)
{
    char bad[160] = "";
    for (const char *const *a = attr_names; *a; a++) {
        int not_utf8 = 0;
        char *v = hrt_grid_attribute(g, *a) ? text_safe(hrt_grid_attribute(g, *a), &not_utf8) : NULL;
        if (!v) continue;
        printf("%-15s %s\n", *a, v);
        free(v);
        if (not_utf8) snprintf(bad + strlen(bad), sizeof bad - strlen(bad), "%s%s", bad[0] ? ", " : "", *a);
    }
    if (bad[0])
        printf("%-15s %s: not valid UTF-8; such bytes are shown as \\xNN here and replaced by U+FFFD in --json\n",
               "note", bad);
}

static void info_text_metallicities(const cli *c)
{
    const hrt_grid *g = c->grid;
    size_t nr = hrt_grid_n_routes(g), *count = xcalloc(nr, sizeof *count);
    char **names = xcalloc(nr, sizeof *names); /* the route names, safe for the terminal: the column heads */
    printf("Metallicities\n");
    printf("  %-10s %8s %7s  %-22s", "Z", "[Fe/H]", "tracks", "initial mass [Msun]");
    for (size_t r = 0; r < nr; r++) printf("  %s", names[r] = text_safe(hrt_grid_route_name(g, r), NULL));
    printf("  route boundaries [Msun]\n");
    for (size_t iz = 0; iz < hrt_grid_n_z(g); iz++) {
        double lo = NAN, hi = NAN, z = hrt_grid_z(g, iz);
        char range[64];
        hrt_grid_mass_range(g, z, &lo, &hi);
        snprintf(range, sizeof range, "%.4g to %.4g", lo, hi);
        route_counts(c, iz, count, nr);
        printf("  %-10.6g %+8.3f %7zu  %-22s", z, cli_feh(c, z), hrt_grid_n_masses(g, iz), range);
        for (size_t r = 0; r < nr; r++) printf("  %*zu", (int)strlen(names[r]), count[r]);
        printf(" ");
        for (size_t b = 0; b + 1 < nr; b++) printf(" %.4g", hrt_grid_route_boundary(g, iz, b));
        printf("\n");
    }
    for (size_t r = 0; r < nr; r++) free(names[r]);
    free(names);
    free(count);
}

static void info_text(const cli *c, long bytes)
{
    const hrt_grid *g = c->grid;
    size_t nz = hrt_grid_n_z(g), nr = hrt_grid_n_routes(g), ntracks = 0;
    for (size_t iz = 0; iz < nz; iz++) ntracks += hrt_grid_n_masses(g, iz);
    printf("grid file       ");
    text_write(stdout, c->grid_used);
    printf("\n");
    if (bytes >= 0)
        printf("size            %.3f MB on disk, %.3f MB in memory when open\n", bytes / 1e6,
               (double)hrt_grid_memory_bytes(g) / 1e6);
    info_text_attributes(g);
    printf("interpolation   %s across initial mass and [Fe/H]\n", hrt_interp_name(hrt_grid_interp(g)));
    printf("Z_ref           %.6g  ([Fe/H] = log10(Z / Z_ref))\n", hrt_grid_z_ref(g));
    printf("tracks          %zu in %zu metallicities and %zu routes\n\n", ntracks, nz, nr);
    info_text_metallicities(c);
    printf("\nRoutes and their keypoints (EEP index of each keypoint)\n");
    for (size_t r = 0; r < nr; r++) {
        printf("  ");
        text_write(stdout, hrt_grid_route_name(g, r));
        printf(": %zu EEPs;", hrt_grid_route_n_eep(g, r));
        for (size_t k = 0; k < hrt_grid_route_n_keypoints(g, r); k++) {
            printf(" ");
            text_write(stdout, hrt_grid_keypoint_name(g, r, k));
            printf("@%ld", hrt_grid_keypoint_eep(g, r, k));
        }
        printf("\n");
    }
    if (hrt_grid_extra_count(g) > 0) {
        printf("\nExtra quantities (--extra NAME of at, track, isochrone)\n");
        for (size_t k = 0; k < hrt_grid_extra_count(g); k++) {
            printf("  ");
            text_write(stdout, hrt_grid_extra_name(g, k));
            printf(" [");
            text_write(stdout, hrt_grid_extra_unit(g, k));
            printf("]: ");
            text_write(stdout, hrt_grid_extra_meaning(g, k));
            printf("\n");
        }
    }
    printf("\nMasses per metallicity [Msun]\n");
    for (size_t iz = 0; iz < nz; iz++) {
        printf("  Z = %.6g:", hrt_grid_z(g, iz));
        for (size_t im = 0; im < hrt_grid_n_masses(g, iz); im++) printf(" %.4g", hrt_grid_mass(g, iz, im));
        printf("\n");
    }
}

static int grid_info(cli *c)
{
    long bytes = file_size(c->grid_used);
    if (c->fmt == FMT_CSV)
        info_csv(c);
    else if (c->fmt == FMT_JSON)
        info_json(c, bytes);
    else
        info_text(c, bytes);
    return 0;
}

/* ------------------------------------------------------------------ check */

typedef struct checker {
    cli *c;
    table *problems;
    size_t done, total;
    int progress; /* stderr is a terminal */
    size_t n_tracks, n_mid, n_iso;
} checker;

static const col problem_cols[] = {
    {"where", "where", COL_TEXT, NULL, 0},
    {"problem", "problem", COL_TEXT, NULL, 0},
};

static void problem(checker *k, const char *where, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void problem(checker *k, const char *where, const char *fmt, ...)
{
    char buf[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    size_t r = table_add_row(k->problems);
    table_text(k->problems, r, 0, where);
    table_text(k->problems, r, 1, buf);
}

static void tick(checker *k)
{
    k->done++;
    if (k->progress && (k->done % 4 == 0 || k->done == k->total)) {
        fprintf(stderr, "\rhrtrail grid check: %zu/%zu stars and isochrones checked", k->done, k->total);
        fflush(stderr);
    }
}

/* Problems of one kind along a track are reported once: the first EEP, its message and how many EEPs. */
enum { K_STATE, K_AGE, K_TEFF, K_LUM, K_MASS, K_HE, K_CO, K_COUNT };
typedef struct eep_fault {
    size_t count, first;
    char msg[256];
} eep_fault;

static void fault(eep_fault *f, size_t j, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void fault(eep_fault *f, size_t j, const char *fmt, ...)
{
    if (f->count++ == 0) {
        va_list ap;
        f->first = j;
        va_start(ap, fmt);
        vsnprintf(f->msg, sizeof f->msg, fmt, ap);
        va_end(ap);
    }
}

/*
 * Sanity of one star's track and timetable.  Bounds are generous
 * (common practice): single stars do not gain mass; the CO core lies inside
 * the helium core, which lies inside the star; Teff between 1e3 and 3e6 K,
 * L between 1e-6 and 1e7.5 Lsun; a white dwarf stays below 1.45 Msun
 * (Chandrasekhar 1931, ApJ 74, 81: limiting mass about 1.44 Msun).
 * The grid's own tracks get every check; a star interpolated between two
 * tracks (own_track 0) only those the interpolation must keep: ages
 * increasing, keypoints in order, a contiguous timetable.
 */
static void check_star(checker *k, const hrt_star *s, const char *where, int own_track)
{
    size_t n = hrt_star_n_eep(s), nk, nsp = 0;
    double m0 = hrt_star_mass(s), prev_age = -INFINITY, prev_kp = -INFINITY;
    const double rel = 1e-9;
    eep_fault f[K_COUNT];
    memset(f, 0, sizeof f);
    for (size_t j = 0; j < n; j++) {
        hrt_state st;
        int r = hrt_star_eep_state(s, j, &st);
        if (r != HRT_OK) {
            fault(&f[K_STATE], j, "no state: %s", hrt_strerror(r));
            continue;
        }
        if (!(st.age_yr > prev_age))
            fault(&f[K_AGE], j, "age %.6g yr does not increase (previous EEP %.6g yr)", st.age_yr, prev_age);
        prev_age = st.age_yr;
        if (!own_track) continue;
        if (!(st.flags & HRT_FLAG_DARK)) {
            if (!(st.log_teff_k >= 3.0 && st.log_teff_k <= 6.5))
                fault(&f[K_TEFF], j, "log Teff %.6g K outside 3 to 6.5", st.log_teff_k);
            if (!(st.log_l_lsun >= -6 && st.log_l_lsun <= 7.5)) fault(&f[K_LUM], j, "log L %.6g Lsun outside -6 to 7.5", st.log_l_lsun);
        }
        if (!(st.mass_msun > 0 && st.mass_msun <= m0 * (1 + rel)))
            fault(&f[K_MASS], j, "current mass %.6g Msun not in (0, initial mass %.6g]", st.mass_msun, m0);
        if (!(st.he_core_mass_msun >= 0 && st.he_core_mass_msun <= st.mass_msun * (1 + rel)))
            fault(&f[K_HE], j, "helium core %.6g Msun not between 0 and the star's mass %.6g", st.he_core_mass_msun,
                  st.mass_msun);
        if (!(st.co_core_mass_msun >= 0 && st.co_core_mass_msun <= st.he_core_mass_msun * (1 + rel) + 1e-12))
            fault(&f[K_CO], j, "CO core %.6g Msun not between 0 and the helium core %.6g", st.co_core_mass_msun,
                  st.he_core_mass_msun);
    }
    for (int q = 0; q < K_COUNT; q++) {
        char at[320];
        if (!f[q].count) continue;
        if (f[q].count == 1)
            snprintf(at, sizeof at, "%s, EEP %zu", where, f[q].first);
        else
            snprintf(at, sizeof at, "%s, %zu EEPs from EEP %zu", where, f[q].count, f[q].first);
        problem(k, at, "%s", f[q].msg);
    }
    nk = hrt_star_n_keypoints(s);
    for (size_t q = 0; q < nk; q++) {
        double a = NAN;
        hrt_star_keypoint_age(s, q, &a);
        if (isnan(a)) continue;
        if (!(a >= prev_kp))
            problem(k, where, "keypoint %s at %.6g yr comes before the previous keypoint (%.6g yr)",
                    hrt_star_keypoint_name(s, q), a, prev_kp);
        prev_kp = a;
    }
    hrt_phase_span sp[64];
    int r = hrt_star_phases(s, sp, 64, &nsp);
    if (r != HRT_OK) {
        problem(k, where, "timetable: %s", hrt_strerror(r));
    } else {
        for (size_t i = 0; i < nsp; i++) {
            if (!(sp[i].phase_end_yr >= sp[i].phase_start_yr))
                problem(k, where, "phase %s ends (%.6g yr) before it starts (%.6g yr)", hrt_phase_key(sp[i].phase),
                        sp[i].phase_end_yr, sp[i].phase_start_yr);
            if (i > 0 && sp[i].phase_start_yr != sp[i - 1].phase_end_yr)
                problem(k, where, "phase %s starts at %.17g yr, not where %s ended (%.17g yr)", hrt_phase_key(sp[i].phase),
                        sp[i].phase_start_yr, hrt_phase_key(sp[i - 1].phase), sp[i - 1].phase_end_yr);
        }
    }
    int kind = HRT_REMNANT_NONE;
    double rm = NAN;
    if (hrt_star_remnant(s, &kind, &rm) == HRT_OK && kind != HRT_REMNANT_NONE) {
        if (!(rm > 0 && rm <= m0)) problem(k, where, "remnant mass %.6g Msun not in (0, initial mass %.6g]", rm, m0);
        if ((kind == HRT_REMNANT_HE_WD || kind == HRT_REMNANT_CO_WD || kind == HRT_REMNANT_ONE_WD) && !(rm < 1.45))
            problem(k, where, "white dwarf of %.6g Msun above the Chandrasekhar mass", rm);
    }
}

/* The grid's own track im at metallicity iz, then the star halfway (in log mass) to the next track
 * of the same route; the ZAMS and end ages seen widen [*amin, *amax]. */
static void check_track(checker *k, size_t iz, size_t im, double *amin, double *amax)
{
    const hrt_grid *g = k->c->grid;
    double z = hrt_grid_z(g, iz), m = hrt_grid_mass(g, iz, im);
    hrt_error err = {0, ""};
    hrt_star *s = NULL;
    char where[160];
    snprintf(where, sizeof where, "Z = %.6g, track %zu (%.6g Msun)", z, im, m);
    if (hrt_star_new(g, m, z, &s, &err) != HRT_OK) {
        problem(k, where, "cannot interpolate the star of the track's own mass: %s", err.message);
    } else {
        hrt_state st;
        check_star(k, s, where, 1);
        if (hrt_star_eep_state(s, 0, &st) == HRT_OK) *amin = fmin(*amin, st.age_yr);
        *amax = fmax(*amax, hrt_star_end_age(s));
        k->n_tracks++;
    }
    hrt_star_free(s);
    tick(k);
    if (im + 1 < hrt_grid_n_masses(g, iz) && hrt_grid_track_route(g, iz, im) == hrt_grid_track_route(g, iz, im + 1)) {
        double mm = sqrt(m * hrt_grid_mass(g, iz, im + 1));
        s = NULL;
        snprintf(where, sizeof where, "Z = %.6g, %.6g Msun (between tracks %zu and %zu)", z, mm, im, im + 1);
        if (hrt_star_new(g, mm, z, &s, &err) != HRT_OK)
            problem(k, where, "cannot interpolate: %s", err.message);
        else
            check_star(k, s, where, 0), k->n_mid++;
        hrt_star_free(s);
    }
    tick(k);
}

/* Isochrones at eight ages spread in log age between the first ZAMS and the last end of a track. */
static void check_isochrones(checker *k, double z, double amin, double amax)
{
    for (int q = 0; q < 8; q++) {
        if (amin > 0 && amax > amin) {
            double age = pow(10, log10(amin) + (log10(amax) - log10(amin)) * (q + 1) / 9.0);
            hrt_state *pts = NULL;
            size_t n = 0;
            char where[160];
            snprintf(where, sizeof where, "Z = %.6g, isochrone at %.6g yr", z, age);
            int r = isochrone_compute(k->c, age, z, &pts, &n);
            if (r != HRT_OK)
                problem(k, where, "%s", hrt_strerror(r));
            else if (n == 0)
                problem(k, where, "no points");
            else
                k->n_iso++;
            free(pts);
        }
        tick(k);
    }
}

/* Routes with fewer than two tracks in a metallicity group: their masses
 * are extrapolated from one track (at most half the gap to the next one)
 * or, with none, refused there. */
static void check_thin_routes(checker *k)
{
    const hrt_grid *g = k->c->grid;
    size_t nz = hrt_grid_n_z(g), nr = hrt_grid_n_routes(g);
    for (size_t iz = 0; iz < nz; iz++) {
        size_t count[16] = {0};
        route_counts(k->c, iz, count, nr < 16 ? nr : 16);
        for (size_t r = 0; r < nr && r < 16; r++) {
            if (count[r] >= 2)
                continue;
            char where[160];
            snprintf(where, sizeof where, "Z = %g, route %s", hrt_grid_z(g, iz), hrt_grid_route_name(g, r));
            if (count[r] == 1)
                problem(k, where, "a thin route: one track; its other masses are extrapolated from it, at most "
                        "half the gap to the next track");
            else
                problem(k, where, "an empty route: no track; stars of this route at this Z are refused");
        }
    }
}

static void check_grid(checker *k)
{
    const hrt_grid *g = k->c->grid;
    size_t nz = hrt_grid_n_z(g);
    check_thin_routes(k);
    for (size_t iz = 0; iz < nz; iz++) k->total += 2 * hrt_grid_n_masses(g, iz) + 8;
    for (size_t iz = 0; iz < nz; iz++) {
        double amin = INFINITY, amax = 0;
        for (size_t im = 0; im < hrt_grid_n_masses(g, iz); im++) check_track(k, iz, im, &amin, &amax);
        check_isochrones(k, hrt_grid_z(g, iz), amin, amax);
    }
    if (k->progress && k->total) fputs("\r\033[K", stderr);
}

static void check_report(const cli *c, const checker *k, const char *path, const char *verdict)
{
    size_t np = k->problems->nrow;
    if (c->fmt == FMT_CSV) {
        table_write_csv(k->problems, stdout);
    } else if (c->fmt == FMT_JSON) {
        jw w;
        jw_init(&w, stdout);
        jw_begin_object(&w, NULL);
        jw_str(&w, "file", path);
        jw_bool(&w, "ok", np == 0);
        jw_bool(&w, "validator_passed", c->grid != NULL);
        jw_int(&w, "tracks_checked", (long)k->n_tracks);
        jw_int(&w, "interpolated_stars_checked", (long)k->n_mid);
        jw_int(&w, "isochrones_checked", (long)k->n_iso);
        jw_table(&w, "problems", k->problems);
        jw_end_object(&w);
        jw_finish(&w);
    } else {
        printf("grid file   ");
        text_write(stdout, path ? path : "(default grid)");
        printf("\nvalidator   %s\n", verdict);
        if (c->grid)
            printf("checked     %zu tracks, %zu interpolated stars between them, %zu isochrones\n", k->n_tracks,
                   k->n_mid, k->n_iso);
        if (np) {
            printf("problems    %zu\n", np);
            table_write_text(k->problems, stdout, "  ");
        } else {
            printf("result      no problems found\n");
        }
    }
}

static int grid_check(cli *c)
{
    checker k = {0};
    const char *path = c->grid_path ? c->grid_path : hrt_default_grid_path();
    hrt_error err = {0, ""};
    struct stat stt;
    const char *verdict = "passed";

    if (c->grid_path && stat(c->grid_path, &stt) != 0)
        return cli_fail(c, CLI_EXIT_FILE, "--grid '%s': %s", c->grid_path, strerror(errno));
    int rc = hrt_grid_open_with(c->grid_path, c->interp, &c->grid, &err);
    if (rc == HRT_E_NOT_FOUND) {
        c->grid = NULL;
        return cli_fail(c, CLI_EXIT_FILE, "no default grid found (%s); name one with --grid FILE", err.message);
    }
    if (rc == HRT_E_VERSION) {
        /* a file of another format version is not checked: the message says how to convert it */
        c->grid = NULL;
        return cli_fail(c, CLI_EXIT_FILE, "grid '%s': %s", path ? path : "(default)", err.message);
    }
    k.c = c;
    k.problems = table_new(problem_cols, 2);
    k.progress = isatty(STDERR_FILENO);
    if (rc != HRT_OK) {
        c->grid = NULL;
        problem(&k, "validator", "%s", err.message[0] ? err.message : hrt_strerror(rc));
        verdict = "failed";
    } else {
        c->grid_used = path ? path : "(default grid)";
        check_grid(&k);
        if (k.problems->nrow) verdict = "passed, but the tracks have problems";
    }
    check_report(c, &k, path, verdict);
    size_t np = k.problems->nrow;
    table_free(k.problems);
    if (np) return cli_fail(c, CLI_EXIT_FILE, "%zu problem%s found in '%s'", np, np == 1 ? "" : "s", path);
    return 0;
}

/* ------------------------------------------------------------------ upgrade */

static int grid_upgrade(cli *c, const char *old_path, const char *new_path)
{
    hrt_error err = {0, ""};
    hrt_grid *g = NULL;
    struct stat st;
    char *target = NULL;
    int rc, from = 0;
    if (stat(old_path, &st) != 0) return cli_fail(c, CLI_EXIT_FILE, "'%s': %s", old_path, strerror(errno));
    if (S_ISDIR(st.st_mode)) return cli_fail(c, CLI_EXIT_FILE, "'%s': is a directory, not a grid file", old_path);
    /* NEW: a symbolic link written through, a device or FIFO refused */
    if ((rc = outfile_target(c, new_path, "NEW", &target))) return rc;
    rc = hrt_grid_upgrade(old_path, target, &err);
    if (rc != HRT_OK) {
        free(target);
        return cli_fail(c, cli_exit_of_status(rc), "%s", err.message[0] ? err.message : hrt_strerror(rc));
    }
    /* what was converted: the new file, opened as any grid is */
    rc = hrt_grid_open(target, &g, &err);
    free(target);
    if (rc != HRT_OK)
        return cli_fail(c, cli_exit_of_status(rc), "'%s' was written but does not open: %s", new_path, err.message);
    size_t nz = hrt_grid_n_z(g), ntracks = 0;
    for (size_t iz = 0; iz < nz; iz++) ntracks += hrt_grid_n_masses(g, iz);
    /* hrt_grid_upgrade() records the version converted from in the attribute 'converted_from' */
    const char *note = hrt_grid_attribute(g, "converted_from");
    if (note) sscanf(note, "format_version %d", &from);
    char was[48] = "an older grid format";
    if (from > 0) snprintf(was, sizeof was, "grid format %d", from);
    printf("converted %s (%s) to %s (grid format %d): %zu tracks in %zu metallicities, %zu routes\n", old_path, was,
           new_path, HRT_FORMAT_VERSION, ntracks, nz, hrt_grid_n_routes(g));
    hrt_grid_close(g);
    return 0;
}

/* ------------------------------------------------------------------ the command */

enum { O_GRID_THREADS = 1, O_GRID_STORE, O_GRID_ACROSS_Z };
static const optdef grid_opts[] = {{"threads", 'j', 1, O_GRID_THREADS},
                                   {"store", 0, 0, O_GRID_STORE},
                                   {"across-z", 0, 0, O_GRID_ACROSS_Z},
                                   {NULL, 0, 0, 0}};

typedef struct grid_args {
    const char *pos[3];
    size_t npos;
    int threads; /* grid accuracy: 0 for every core */
    int store;   /* grid accuracy --store: write the error field into the grid file */
    int across_z; /* grid accuracy --across-z: drop metallicity groups instead of tracks */
} grid_args;

/* Arguments: the action (checked at once, before any --help), then files. */
static int grid_take(cli *c, void *ctx, int id, const char *val)
{
    grid_args *a = ctx;
    if (id == O_GRID_THREADS) {
        char *end;
        long n = strtol(val, &end, 10);
        if (*end || end == val || n < 0 || n > 4096)
            return cli_fail(c, CLI_EXIT_USAGE, "--threads '%s': give a whole number from 0 (every core) to 4096", val);
        a->threads = (int)n;
        return 0;
    }
    if (id == O_GRID_STORE) {
        a->store = 1;
        return 0;
    }
    if (id == O_GRID_ACROSS_Z) {
        a->across_z = 1;
        return 0;
    }
    if (id != OPT_ARG) return 0;
    if (a->npos == 3) return cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s'", val);
    if (a->npos == 0 && strcmp(val, "info") && strcmp(val, "check") && strcmp(val, "upgrade") && strcmp(val, "accuracy"))
        return cli_fail(c, CLI_EXIT_USAGE,
                        "unknown action '%s'; use 'hrtrail grid info', 'hrtrail grid check', 'hrtrail grid accuracy' or "
                        "'hrtrail grid upgrade'", val);
    a->pos[a->npos++] = val;
    return 0;
}

static const cmdopts grid_cmdopts = {grid_opts, NULL, ACCEPT_FORMAT, grid_take, NULL, 0};

int cmd_grid(cli *c, argparse *p)
{
    grid_args a = {{NULL, NULL, NULL}, 0, 0, 0, 0};
    int interp = c->interp;
    c->interp = -1; /* grid accuracy without --interp: every type */
    int rc = cli_parse(c, p, &grid_cmdopts, &a);
    int all_types = c->interp == -1;
    if (all_types) c->interp = interp;
    const char *action = a.pos[0];
    if (rc) return rc;
    if (!action)
        return cli_fail(c, CLI_EXIT_USAGE,
                        "say 'hrtrail grid info', 'hrtrail grid check', 'hrtrail grid accuracy' or 'hrtrail grid upgrade OLD NEW' "
                        "(see hrtrail grid --help)");
    if (!strcmp(action, "upgrade")) {
        c->cmd = "grid upgrade";
        if (c->grid_path) return cli_fail(c, CLI_EXIT_USAGE, "--grid does not apply: give the files as 'hrtrail grid upgrade OLD NEW'");
        if (c->fmt != FMT_TABLE) return cli_fail(c, CLI_EXIT_USAGE, "--csv and --json do not apply: the command prints one line");
        if (a.npos != 3)
            return cli_fail(c, CLI_EXIT_USAGE, "give the file to convert and the file to write: hrtrail grid upgrade OLD NEW");
        return grid_upgrade(c, a.pos[1], a.pos[2]);
    }
    if (a.threads && strcmp(action, "accuracy"))
        return cli_fail(c, CLI_EXIT_USAGE, "--threads applies to 'hrtrail grid accuracy' only");
    if (a.store && strcmp(action, "accuracy"))
        return cli_fail(c, CLI_EXIT_USAGE, "--store applies to 'hrtrail grid accuracy' only");
    if (a.across_z && strcmp(action, "accuracy"))
        return cli_fail(c, CLI_EXIT_USAGE, "--across-z applies to 'hrtrail grid accuracy' only");
    c->cmd = !strcmp(action, "info") ? "grid info" : !strcmp(action, "check") ? "grid check" : "grid accuracy";
    if (a.npos == 3) return cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s'", a.pos[2]);
    if (a.npos == 2) {
        if (c->grid_path) return cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s' (the grid is given with --grid)", a.pos[1]);
        c->grid_path = a.pos[1];
    }
    if (!strcmp(action, "check")) return grid_check(c);
    if (!strcmp(action, "accuracy")) {
        if (all_types) c->interp = -1;
        return grid_accuracy(c, a.threads, a.store, a.across_z);
    }
    if ((rc = cli_open_grid(c))) return rc;
    return grid_info(c);
}
