/* hrtrail import: build a grid from text tracks (one file per initial mass)
 * with a column map, and report what was done with every track. */
#include <dirent.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli.h"

enum { O_OUT = 1, O_MAP, O_MAP_FILE, O_Z, O_Z_REF, O_ROUTES, O_KEEP, O_DRY, O_FORCE, O_BOUNDS, O_PRE_MS };
static const optdef import_opts[] = {
    {"output", 'o', 1, O_OUT},   {"map", 0, 1, O_MAP},          {"map-file", 0, 1, O_MAP_FILE},
    {"z", 0, 1, O_Z},            {"z-ref", 0, 1, O_Z_REF},      {"routes", 0, 1, O_ROUTES},
    {"keep-going", 0, 0, O_KEEP}, {"dry-run", 0, 0, O_DRY},     {"force", 0, 0, O_FORCE},
    {"route-boundaries", 0, 1, O_BOUNDS}, {"pre-ms", 0, 0, O_PRE_MS}, {NULL, 0, 0, 0},
};

/* --route-boundaries [Z:]M1,M2,...: the route-boundary masses of metallicity Z (every Z without one). */
static int route_boundaries(cli *c, hrt_import *imp, const char *val)
{
    char buf[1024], *masses = buf, *colon;
    double z = NAN, m[32];
    size_t n = 0;
    hrt_error err = {0, ""};
    snprintf(buf, sizeof buf, "%s", val);
    if ((colon = strchr(buf, ':')) != NULL) {
        *colon = '\0';
        masses = colon + 1;
        if (parse_number(buf, &z) != 0)
            return cli_fail(c, CLI_EXIT_USAGE, "--route-boundaries %s: '%s' is not a metallicity", val, buf);
    }
    for (char *tok = strtok(masses, ","); tok; tok = strtok(NULL, ",")) {
        if (n == sizeof m / sizeof m[0] || parse_number(tok, &m[n]) != 0)
            return cli_fail(c, CLI_EXIT_USAGE, "--route-boundaries %s: expected [Z:]MASS,MASS,... (Msun)", val);
        n++;
    }
    if (hrt_import_set_route_boundaries(imp, z, n, m, &err) != HRT_OK)
        return cli_fail(c, CLI_EXIT_USAGE, "--route-boundaries %s: %s", val, err.message);
    return 0;
}

static int cmp_str(const void *a, const void *b) { return strcmp(*(char *const *)a, *(char *const *)b); }

/* A file, or every visible regular file of a directory (sorted by name). */
static int add_path(cli *c, hrt_import *imp, const char *path, double z)
{
    hrt_error err = {0, ""};
    struct stat st;
    if (stat(path, &st) != 0) return cli_fail(c, CLI_EXIT_FILE, "%s: no such file or directory", path);
    if (!S_ISDIR(st.st_mode)) {
        if (hrt_import_add_file(imp, path, z, &err) != HRT_OK) return cli_fail(c, CLI_EXIT_USAGE, "%s", err.message);
        return 0;
    }
    DIR *d = opendir(path);
    if (!d) return cli_fail(c, CLI_EXIT_FILE, "%s: cannot read the directory", path);
    size_t n = 0, cap = 64;
    char **names = xmalloc(cap * sizeof *names);
    struct dirent *e;
    while ((e = readdir(d)) != NULL) {
        if (e->d_name[0] == '.') continue;
        size_t len = strlen(path) + strlen(e->d_name) + 2;
        char *full = xmalloc(len);
        snprintf(full, len, "%s/%s", path, e->d_name);
        if (stat(full, &st) != 0 || !S_ISREG(st.st_mode)) {
            free(full);
            continue;
        }
        if (n == cap) names = xrealloc(names, (cap *= 2) * sizeof *names);
        names[n++] = full;
    }
    closedir(d);
    qsort(names, n, sizeof *names, cmp_str);
    int rc = 0;
    if (n == 0) rc = cli_fail(c, CLI_EXIT_FILE, "%s: the directory holds no files", path);
    for (size_t i = 0; i < n; i++) {
        if (!rc && hrt_import_add_file(imp, names[i], z, &err) != HRT_OK)
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s", err.message);
        free(names[i]);
    }
    free(names);
    return rc;
}

/* Route layouts from a file: "NAME: KP1 N1 KP2 N2 ... KPK" per line, '#' comments. */
static int read_routes(cli *c, hrt_import *imp, const char *path)
{
    FILE *f = fopen(path, "r");
    if (!f) return cli_fail(c, CLI_EXIT_FILE, "--routes %s: cannot open", path);
    enum { MAXR = 8, MAXK = HRT_IMPORT_MAX_KP };
    char *rname[MAXR] = {0}, *kn[MAXR][MAXK] = {{0}};
    int seg[MAXR][MAXK];
    hrt_route_spec spec[MAXR];
    size_t nr = 0, nk[MAXR] = {0};
    char line[4096];
    long ln = 0;
    int rc = 0;
    while (!rc && fgets(line, sizeof line, f)) {
        ln++;
        char *h = strchr(line, '#');
        if (h) *h = '\0';
        char *colon = strchr(line, ':');
        char *tok = strtok(line, " \t\r\n:");
        if (!tok) continue;
        if (!colon || nr == MAXR) {
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s:%ld: expected 'NAME: KEYPOINT COUNT KEYPOINT ... KEYPOINT' (at most %d routes)",
                          path, ln, MAXR);
            break;
        }
        rname[nr] = xstrdup(tok);
        size_t k = 0;
        int want_name = 1;
        while ((tok = strtok(NULL, " \t\r\n")) != NULL) {
            if (want_name) {
                if (k == MAXK) {
                    rc = cli_fail(c, CLI_EXIT_USAGE, "%s:%ld: more than %d keypoints", path, ln, MAXK);
                    break;
                }
                kn[nr][k++] = xstrdup(tok);
            } else {
                long v;
                char *end;
                v = strtol(tok, &end, 10);
                if (*end || v < 1 || v > 100000) {
                    rc = cli_fail(c, CLI_EXIT_USAGE, "%s:%ld: '%s' is not an EEP count (1..100000)", path, ln, tok);
                    break;
                }
                seg[nr][k - 1] = (int)v;
            }
            want_name = !want_name;
        }
        nk[nr] = k;
        nr++;
        if (!rc && (k < 2 || want_name))
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s:%ld: a route needs at least 2 keypoints with an EEP count between "
                          "each pair, and ends with a keypoint", path, ln);
    }
    fclose(f);
    if (!rc && nr == 0) rc = cli_fail(c, CLI_EXIT_USAGE, "--routes %s: no routes in the file", path);
    if (!rc) {
        hrt_error err = {0, ""};
        for (size_t r = 0; r < nr; r++)
            spec[r] = (hrt_route_spec){rname[r], nk[r], (const char *const *)kn[r], seg[r]};
        if (hrt_import_set_routes(imp, nr, spec, &err) != HRT_OK)
            rc = cli_fail(c, CLI_EXIT_USAGE, "--routes %s: %s", path, err.message);
    }
    for (size_t r = 0; r < nr; r++) {
        free(rname[r]);
        for (size_t k = 0; k < nk[r]; k++) free(kn[r][k]);
    }
    return rc;
}

static void progress(void *user, size_t done, size_t total, const char *file)
{
    (void)user;
    (void)file;
    fprintf(stderr, "\rhrtrail import: read %zu of %zu files", done, total);
    if (done == total) fputc('\n', stderr);
    fflush(stderr);
}

static const char *how_name(int how)
{
    switch (how) {
    case HRT_KP_FOUND_BY_FLAG: return "flag";
    case HRT_KP_FOUND_BY_COLUMNS: return "columns";
    case HRT_KP_FOUND_BY_PHASE: return "phase";
    case HRT_KP_FOUND_BY_START: return "first row";
    default: return "?";
    }
}

static const char *result_of(const hrt_import_track_report *r)
{
    if (r->status != HRT_OK) return "dropped";
    return r->truncated ? "truncated" : "ok";
}

static void report_json(const hrt_import *imp, const char *out, int dry)
{
    jw w;
    jw_init(&w, stdout);
    jw_begin_object(&w, NULL);
    jw_str(&w, "output", dry ? NULL : out);
    jw_bool(&w, "written", !dry);
    size_t n = hrt_import_n_tracks(imp), used = 0;
    hrt_import_track_report r;
    for (size_t i = 0; i < n; i++)
        if (hrt_import_track(imp, i, &r) == HRT_OK && r.status == HRT_OK) used++;
    jw_int(&w, "tracks_given", (long)n);
    jw_int(&w, "tracks_used", (long)used);
    jw_begin_array(&w, "routes");
    for (size_t k = 0; k < hrt_import_n_routes(imp); k++) jw_str(&w, NULL, hrt_import_route_name(imp, k));
    jw_end_array(&w);
    jw_begin_array(&w, "metallicities");
    for (size_t iz = 0; iz < hrt_import_n_z(imp); iz++) {
        jw_begin_object(&w, NULL);
        jw_num(&w, "z", hrt_import_z(imp, iz));
        jw_begin_array(&w, "route_boundary_mass_msun");
        for (size_t b = 0; b + 1 < hrt_import_n_routes(imp); b++) jw_num(&w, NULL, hrt_import_route_boundary(imp, iz, b));
        jw_end_array(&w);
        jw_end_object(&w);
    }
    jw_end_array(&w);
    jw_begin_array(&w, "tracks");
    for (size_t i = 0; i < n; i++) {
        if (hrt_import_track(imp, i, &r) != HRT_OK) continue;
        jw_begin_object(&w, NULL);
        jw_str(&w, "file", r.file);
        jw_str(&w, "result", result_of(&r));
        jw_str(&w, "status", hrt_strerror(r.status));
        jw_num(&w, "initial_mass_msun", r.initial_mass_msun);
        jw_num(&w, "z", r.z);
        jw_str(&w, "route", r.route >= 0 ? hrt_import_route_name(imp, (size_t)r.route) : NULL);
        jw_int(&w, "rows", (long)r.n_rows);
        jw_int(&w, "rows_dropped", (long)r.n_rows_dropped);
        /* where the track's problem is (null when it has none) */
        jw_num(&w, "line", r.line > 0 ? (double)r.line : NAN);
        jw_num(&w, "column", r.line > 0 ? (double)r.column : NAN);
        jw_str(&w, "message", r.message[0] ? r.message : NULL);
        jw_str(&w, "notes", r.notes[0] ? r.notes : NULL);
        jw_str(&w, "remnant", r.status == HRT_OK ? hrt_remnant_key(r.remnant) : NULL);
        jw_num(&w, "remnant_mass_msun", r.remnant_mass_msun);
        jw_begin_array(&w, "keypoints");
        for (size_t k = 0; k < r.n_keypoints && r.route >= 0; k++) {
            jw_begin_object(&w, NULL);
            jw_str(&w, "keypoint", hrt_import_keypoint_name(imp, (size_t)r.route, k));
            jw_num(&w, "age_yr", r.keypoint_age_yr[k]);
            jw_int(&w, "line", r.keypoint_line[k]);
            jw_str(&w, "found_by", how_name(r.keypoint_how[k]));
            jw_end_object(&w);
        }
        jw_end_array(&w);
        jw_str(&w, "next_keypoint_missing", r.missing[0] ? r.missing : NULL);
        jw_end_object(&w);
    }
    jw_end_array(&w);
    jw_end_object(&w);
    jw_finish(&w);
}

/* printf of one line whose text comes from the files: made safe for the terminal. */
static void put_line(const char *indent, const char *label, const char *s)
{
    fputs(indent, stdout);
    fputs(label, stdout);
    text_write(stdout, s);
    putchar('\n');
}

static void report_text_track(const hrt_import *imp, const hrt_import_track_report *r)
{
    printf("%-9s ", result_of(r));
    put_line("", "", r->file);
    if (r->status != HRT_OK) {
        put_line("          ", "", r->message);
        if (r->missing[0]) put_line("          ", "first keypoint not found: ", r->missing);
    } else {
        printf("          %.6g Msun, Z = %.6g, route ", r->initial_mass_msun, r->z);
        text_write(stdout, hrt_import_route_name(imp, (size_t)r->route));
        printf(", %zu rows", r->n_rows);
        if (r->n_rows_dropped) printf(" (%zu dropped)", r->n_rows_dropped);
        printf(", remnant %s", hrt_remnant_key(r->remnant));
        if (isfinite(r->remnant_mass_msun)) printf(" %.4g Msun", r->remnant_mass_msun);
        printf("\n          keypoints [Myr, line, found by]:");
        for (size_t k = 0; k < r->n_keypoints; k++) {
            printf("%s ", k ? "," : "");
            text_write(stdout, hrt_import_keypoint_name(imp, (size_t)r->route, k));
            printf(" %.6g (%ld, %s)", r->keypoint_age_yr[k] / 1e6, r->keypoint_line[k], how_name(r->keypoint_how[k]));
        }
        printf("\n");
    }
    if (r->notes[0]) put_line("          ", "notes: ", r->notes);
}

static void report_text(const hrt_import *imp, const char *out, int dry)
{
    size_t n = hrt_import_n_tracks(imp), used = 0, trunc = 0;
    hrt_import_track_report r;
    for (size_t i = 0; i < n; i++)
        if (hrt_import_track(imp, i, &r) == HRT_OK && r.status == HRT_OK) used++, trunc += r.truncated != 0;
    if (dry)
        printf("checked %zu track files: %zu usable (%zu truncated), %zu dropped; nothing written (--dry-run)\n", n, used,
               trunc, n - used);
    else
        printf("wrote %s: %zu of %zu tracks (%zu truncated), %zu dropped\n", out, used, n, trunc, n - used);
    printf("routes:");
    for (size_t k = 0; k < hrt_import_n_routes(imp); k++) putchar(' '), text_write(stdout, hrt_import_route_name(imp, k));
    printf("\n");
    for (size_t iz = 0; iz < hrt_import_n_z(imp); iz++) {
        printf("Z = %-8.6g route boundaries [Msun]:", hrt_import_z(imp, iz));
        for (size_t b = 0; b + 1 < hrt_import_n_routes(imp); b++) printf(" %.4g", hrt_import_route_boundary(imp, iz, b));
        printf("\n");
    }
    printf("\n");
    for (size_t i = 0; i < n; i++)
        if (hrt_import_track(imp, i, &r) == HRT_OK) report_text_track(imp, &r);
}

static void report_csv(const hrt_import *imp)
{
    static const col cols[] = {
        {"file", NULL, COL_TEXT, NULL, 0},          {"result", NULL, COL_TEXT, NULL, 0},
        {"initial_mass_msun", NULL, COL_NUM, NULL, 0}, {"z", NULL, COL_NUM, NULL, 0},
        {"route", NULL, COL_TEXT, NULL, 0},         {"rows", NULL, COL_NUM, NULL, 0},
        {"n_keypoints", NULL, COL_NUM, NULL, 0},    {"end_age_yr", NULL, COL_NUM, NULL, 0},
        {"remnant", NULL, COL_TEXT, NULL, 0},       {"message", NULL, COL_TEXT, NULL, 0},
        {"notes", NULL, COL_TEXT, NULL, 0},
    };
    table *t = table_new(cols, sizeof cols / sizeof cols[0]);
    hrt_import_track_report r;
    for (size_t i = 0; i < hrt_import_n_tracks(imp); i++) {
        if (hrt_import_track(imp, i, &r) != HRT_OK) continue;
        size_t row = table_add_row(t);
        table_text(t, row, 0, r.file);
        table_text(t, row, 1, result_of(&r));
        table_num(t, row, 2, r.initial_mass_msun);
        table_num(t, row, 3, r.z);
        table_text(t, row, 4, r.route >= 0 ? hrt_import_route_name(imp, (size_t)r.route) : "");
        table_num(t, row, 5, (double)r.n_rows);
        table_num(t, row, 6, (double)r.n_keypoints);
        table_num(t, row, 7, r.n_keypoints ? r.keypoint_age_yr[r.n_keypoints - 1] : NAN);
        table_text(t, row, 8, r.status == HRT_OK ? hrt_remnant_key(r.remnant) : "");
        table_text(t, row, 9, r.message);
        table_text(t, row, 10, r.notes);
    }
    table_write_csv(t, stdout);
    table_free(t);
}

typedef struct import_args {
    hrt_import *imp;
    const char *out;
    int dry, nfiles;
    double z;
} import_args;

/* Options and files in order: --z applies to the files after it. */
static int import_take(cli *c, void *ctx, int id, const char *val)
{
    import_args *a = ctx;
    hrt_error err = {0, ""};
    double v;
    switch (id) {
    case O_OUT: a->out = val; return 0;
    case O_MAP:
        return hrt_import_map(a->imp, val, &err) == HRT_OK ? 0 : cli_fail(c, CLI_EXIT_USAGE, "--map: %s", err.message);
    case O_MAP_FILE:
        if (hrt_import_map_file(a->imp, val, &err) == HRT_OK) return 0;
        return cli_fail(c, err.code == HRT_E_IO ? CLI_EXIT_FILE : CLI_EXIT_USAGE, "--map-file: %s", err.message);
    case O_Z:
        if (parse_number(val, &a->z) != 0 || !(a->z > 0.0 && a->z < 1.0))
            return cli_fail(c, CLI_EXIT_USAGE, "--z %s: expected a metal mass fraction in (0, 1)", val);
        return 0;
    case O_Z_REF:
        if (parse_number(val, &v) != 0 || hrt_import_set_z_ref(a->imp, v, &err) != HRT_OK)
            return cli_fail(c, CLI_EXIT_USAGE, "--z-ref %s: expected a metal mass fraction in (0, 1)", val);
        return 0;
    case O_ROUTES: return read_routes(c, a->imp, val);
    case O_KEEP: hrt_import_set_lenient(a->imp, 1); return 0;
    case O_FORCE: hrt_import_set_force(a->imp, 1); return 0;
    case O_PRE_MS: {
        hrt_error err = {0, ""};
        return hrt_import_set_pre_ms(a->imp, 1, &err) == HRT_OK ? 0 : cli_fail(c, CLI_EXIT_USAGE, "--pre-ms: %s", err.message);
    }
    case O_BOUNDS: return route_boundaries(c, a->imp, val);
    case O_DRY: a->dry = 1; return 0;
    case OPT_ARG: a->nfiles++; return add_path(c, a->imp, val, a->z);
    default: return 0;
    }
}

static const cmdopts import_cmdopts = {import_opts, NULL, ACCEPT_FORMAT, import_take, NULL, 0};

/* A failed import: every problem, one line each, then the first as the summary. */
static int import_failure(const cli *c, const import_args *a, int st, const hrt_error *err)
{
    hrt_import_track_report r;
    for (size_t i = 0; i < hrt_import_n_tracks(a->imp); i++)
        if (hrt_import_track(a->imp, i, &r) == HRT_OK && r.status != HRT_OK && r.status != HRT_E_NO_TRACK &&
            strcmp(r.message, err->message) != 0)
            cli_fail(c, 0, "%s", r.message);
    return cli_fail(c, st == HRT_E_NOMEM ? CLI_EXIT_INTERNAL : CLI_EXIT_FILE, "%s%s", err->message,
                    a->out && !a->dry ? " (nothing written)" : "");
}

static int import_run(cli *c, import_args *a)
{
    hrt_error err = {0, ""};
    char *target = NULL;
    int rc;
    if (a->nfiles == 0) return cli_fail(c, CLI_EXIT_USAGE, "no track files or directories given (see hrtrail import --help)");
    if (!a->out && !a->dry) return cli_fail(c, CLI_EXIT_USAGE, "no output file: give -o GRID.h5 (or --dry-run)");
    /* the library writes the grid atomically beside the path it is given: a symbolic link is resolved
     * first (the link stays), and a device or FIFO refused before any work */
    if (!a->dry && (rc = outfile_target(c, a->out, "-o", &target))) return rc;
    if (isatty(STDERR_FILENO)) hrt_import_set_progress(a->imp, progress, NULL);
    int st = hrt_import_run(a->imp, a->dry ? NULL : target, &err);
    free(target);
    if (st != HRT_OK) return import_failure(c, a, st, &err);
    if (c->fmt == FMT_JSON)
        report_json(a->imp, a->out, a->dry);
    else if (c->fmt == FMT_CSV)
        report_csv(a->imp);
    else
        report_text(a->imp, a->out, a->dry);
    return 0;
}

int cmd_import(cli *c, argparse *p)
{
    import_args a = {NULL, NULL, 0, 0, NAN};
    hrt_error err = {0, ""};
    if (hrt_import_new(&a.imp, &err) != HRT_OK) return cli_fail(c, CLI_EXIT_INTERNAL, "%s", err.message);
    int rc = cli_parse(c, p, &import_cmdopts, &a);
    if (rc == 0) rc = import_run(c, &a);
    hrt_import_free(a.imp);
    return rc;
}
