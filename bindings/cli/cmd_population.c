/*
 * hrtrail population: draw N stars from an IMF, a star-formation history and
 * a metallicity distribution, evolve them to one or more ages and summarise
 * them (counts, masses and light per phase and remnant kind, turnoff mass),
 * with an HR-diagram density as SVG.  The library does the work in chunks;
 * this command prints progress between chunks when stderr is a terminal.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"
#include "pop.h"

enum {
    O_STARS = 1, O_IMF, O_ALPHA, O_MASS_RANGE, O_SFH, O_SFH_FROM, O_SFH_TO, O_TAU, O_SFH_TABLE, O_AGE, O_SEED, O_THREADS,
    O_FEH_SPREAD, O_Z_RANGE, O_Z_UNIFORM, O_HR_BINS, O_LOG_TEFF, O_LOG_L, O_OUT, O_CHUNKS, O_PART, O_SAVE, O_CHUNK_SIZE,
    O_CATALOGUE
};
static const optdef pop_opts[] = {
    {"stars", 'n', 1, O_STARS},       {"imf", 0, 1, O_IMF},           {"alpha", 0, 1, O_ALPHA},
    {"mass-range", 0, 1, O_MASS_RANGE}, {"sfh", 0, 1, O_SFH},         {"sfh-from", 0, 1, O_SFH_FROM},
    {"sfh-to", 0, 1, O_SFH_TO},       {"tau", 0, 1, O_TAU},           {"sfh-table", 0, 1, O_SFH_TABLE},
    {"age", 'a', 1, O_AGE},           {"seed", 0, 1, O_SEED},         {"threads", 'j', 1, O_THREADS},
    {"feh-spread", 0, 1, O_FEH_SPREAD}, {"z-range", 0, 1, O_Z_RANGE}, {"z-uniform", 0, 0, O_Z_UNIFORM},
    {"hr-bins", 0, 1, O_HR_BINS},     {"log-teff", 0, 1, O_LOG_TEFF}, {"log-l", 0, 1, O_LOG_L},
    {"output", 'o', 1, O_OUT},        {"chunks", 0, 1, O_CHUNKS},     {"part", 0, 1, O_PART},
    {"save-summary", 0, 1, O_SAVE},   {"chunk-size", 0, 1, O_CHUNK_SIZE}, {"catalogue", 0, 1, O_CATALOGUE},
    {NULL, 0, 0, 0},
};

static int parse_pair(const cli *c, const char *opt, const char *s, double *a, double *b, int ages)
{
    const char *comma = strchr(s, ',');
    char first[128];
    if (!comma || (size_t)(comma - s) >= sizeof first)
        return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': expected two values LO,HI", opt, s);
    memcpy(first, s, (size_t)(comma - s));
    first[comma - s] = 0;
    int bad = ages ? (parse_age_yr(first, a) || parse_age_yr(comma + 1, b)) : (parse_number(first, a) || parse_number(comma + 1, b));
    if (bad || !(*b > *a))
        return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': expected two numbers LO,HI with LO < HI", opt, s);
    return 0;
}

/* ------------------------------------------------------------ tables */

static const col rec_cols[] = {
    {"age_yr", "age [Myr]", COL_NUM, "%.6g", 1e-6},
    {"record", NULL, COL_TEXT, NULL, 0},
    {"key", "", COL_TEXT, NULL, 0},
    {"stars", "stars", COL_NUM, "%.0f", 0},
    {"fraction", "fraction", COL_NUM, "%.5f", 0},
    {"initial_mass_msun", "initial mass [Msun]", COL_NUM, "%.6g", 0},
    {"mass_msun", "mass now [Msun]", COL_NUM, "%.6g", 0},
    {"l_lsun", "L [Lsun]", COL_NUM, "%.6g", 0},
};
#define N_REC_COLS (sizeof rec_cols / sizeof rec_cols[0])

static void add_rec(table *t, double age, const char *record, const char *key, uint64_t n, uint64_t of, double m0,
                    double m, double l)
{
    size_t r = table_add_row(t);
    table_num(t, r, 0, age);
    table_text(t, r, 1, record);
    table_text(t, r, 2, key);
    table_num(t, r, 3, (double)n);
    table_num(t, r, 4, of ? (double)n / (double)of : NAN);
    table_num(t, r, 5, m0);
    table_num(t, r, 6, m);
    table_num(t, r, 7, l);
}

/* Rows of one epoch: phases, then remnant kinds (none: stars that are no remnant), then failures;
 * phases and remnant kinds in the order of HRT_PHASE_LIST and HRT_REMNANT_LIST. */
static void summary_rows(const hrt_pop_summary *s, table *ph, table *rem)
{
    for (size_t i = 0; i < HRT_PHASE_N; i++) {
        int p = hrt_phase_code(i);
        if (s->n_phase[p])
            add_rec(ph, s->age_yr, "phase", hrt_phase_key(p), s->n_phase[p], s->n_evaluated,
                    hrt_pop_sum_value(&s->phase_initial_mass_msun[p]), hrt_pop_sum_value(&s->phase_mass_msun[p]),
                    hrt_pop_sum_value(&s->phase_l_lsun[p]));
    }
    for (size_t i = 0; i < HRT_REMNANT_N; i++) {
        int r = hrt_remnant_code(i);
        if (s->n_remnant[r] || r != HRT_REMNANT_NONE)
            add_rec(rem, s->age_yr, "remnant", hrt_remnant_key(r), s->n_remnant[r], s->n_evaluated, NAN,
                    hrt_pop_sum_value(&s->remnant_mass_msun[r]), NAN);
    }
    for (int k = 1; k < HRT_STATUS_COUNT_; k++)
        if (s->n_status[k])
            add_rec(rem, s->age_yr, "failed", hrt_strerror(k), s->n_status[k], s->n_drawn - s->n_unborn, NAN, NAN, NAN);
}

/* M_bol of a luminosity in Lsun, IAU 2015 Resolution B2 zero point. */
static double mbol(double l_lsun) { return -2.5 * log10(l_lsun * HRT_LSUN_W / HRT_MBOL_ZERO_POINT_W); }

void pop_print_text(const hrt_pop_summary *s, FILE *f, const char *indent)
{
    table *ph = table_new(rec_cols, N_REC_COLS), *rem = table_new(rec_cols, N_REC_COLS);
    summary_rows(s, ph, rem);
    char agebuf[64];
    format_age(agebuf, sizeof agebuf, s->age_yr);
    double l = hrt_pop_sum_value(&s->l_lsun), m = hrt_pop_sum_value(&s->mass_msun);
    fprintf(f, "%sAt %s: %llu stars born (%llu not yet), %llu evaluated", indent, agebuf,
            (unsigned long long)(s->n_drawn - s->n_unborn), (unsigned long long)s->n_unborn,
            (unsigned long long)s->n_evaluated);
    if (s->n_evaluated < s->n_drawn - s->n_unborn)
        fprintf(f, ", %llu outside what the grid covers (%.6g Msun, not counted below)",
                (unsigned long long)(s->n_drawn - s->n_unborn - s->n_evaluated), hrt_pop_sum_value(&s->failed_initial_mass_msun));
    fprintf(f, "\n\n");
    /* the human tables drop the age column: it is in the heading */
    col text_cols[N_REC_COLS];
    memcpy(text_cols, rec_cols, sizeof text_cols);
    text_cols[0].head = NULL;
    ph->cols = rem->cols = text_cols;
    table_write_text(ph, f, indent);
    fputc('\n', f);
    table_write_text(rem, f, indent);
    fprintf(f, "\n%sInitial mass %.6g Msun, mass now %.6g Msun (stars and remnants)\n", indent,
            hrt_pop_sum_value(&s->initial_mass_msun), m);
    fprintf(f, "%sIntegrated bolometric luminosity %.6g Lsun (M_bol %.3f), M/L %.4g Msun/Lsun\n", indent, l,
            l > 0 ? mbol(l) : NAN, l > 0 ? m / l : NAN);
    if (s->ms_max_initial_mass_msun > 0 && isfinite(s->evolved_min_initial_mass_msun))
        fprintf(f, "%sMain-sequence turnoff: %.5g Msun (heaviest main-sequence star %.6g, lightest evolved star %.6g Msun)\n",
                indent, hrt_pop_turnoff_mass(s), s->ms_max_initial_mass_msun, s->evolved_min_initial_mass_msun);
    table_free(ph);
    table_free(rem);
}

void pop_json(const hrt_pop_summary *s, jw *w, int with_hr)
{
    table *ph = table_new(rec_cols, N_REC_COLS), *rem = table_new(rec_cols, N_REC_COLS);
    summary_rows(s, ph, rem);
    double l = hrt_pop_sum_value(&s->l_lsun);
    jw_begin_object(w, NULL);
    jw_num(w, "age_yr", s->age_yr);
    jw_int(w, "drawn", (long)s->n_drawn);
    jw_int(w, "unborn", (long)s->n_unborn);
    jw_int(w, "evaluated", (long)s->n_evaluated);
    jw_num(w, "failed_initial_mass_msun", hrt_pop_sum_value(&s->failed_initial_mass_msun));
    jw_num(w, "initial_mass_msun", hrt_pop_sum_value(&s->initial_mass_msun));
    jw_num(w, "mass_msun", hrt_pop_sum_value(&s->mass_msun));
    jw_num(w, "l_lsun", l);
    jw_num(w, "abs_mbol", l > 0 ? mbol(l) : NAN);
    jw_num(w, "turnoff_mass_msun", hrt_pop_turnoff_mass(s));
    jw_num(w, "ms_max_initial_mass_msun", s->ms_max_initial_mass_msun > 0 ? s->ms_max_initial_mass_msun : NAN);
    jw_num(w, "evolved_min_initial_mass_msun", s->evolved_min_initial_mass_msun);
    jw_table(w, "phases", ph);
    jw_table(w, "remnants", rem);
    if (with_hr && s->hr.nx) {
        jw_begin_object(w, "hr_histogram");
        jw_num(w, "log_teff_k_lo", s->hr.log_teff_k_lo);
        jw_num(w, "log_teff_k_hi", s->hr.log_teff_k_hi);
        jw_num(w, "log_l_lsun_lo", s->hr.log_l_lsun_lo);
        jw_num(w, "log_l_lsun_hi", s->hr.log_l_lsun_hi);
        jw_int(w, "nx", (long)s->hr.nx);
        jw_int(w, "ny", (long)s->hr.ny);
        jw_int(w, "outside", (long)s->hr_outside);
        jw_begin_array(w, "counts");
        for (uint64_t iy = 0; iy < s->hr.ny; iy++) {
            jw_begin_array(w, NULL);
            for (uint64_t ix = 0; ix < s->hr.nx; ix++) jw_int(w, NULL, (long)s->hr_count[iy * s->hr.nx + ix]);
            jw_end_array(w);
        }
        jw_end_array(w);
        jw_end_object(w);
    }
    jw_end_object(w);
    table_free(ph);
    table_free(rem);
}

/* ------------------------------------------------------- density SVG */

/* Sequential palette, light to dark (hrtrail's own), indexed by log count. */
static const char palette[8][8] = {"#f3eed9", "#dcd6a8", "#b9c98a", "#86b27c", "#5a9478", "#3b7272", "#2c4f68", "#221f4f"};

/* Where the plot area of the SVG lies: its data ranges and its box. */
typedef struct area {
    double tl, tr, lb, lt, x0, y0, w, h;
} area;

/* The density layer: a rectangle per non-empty bin, coloured by log count. */
static void density_layer(FILE *f, const hrt_pop_summary *s, const area *A, uint64_t cmax)
{
    double bw = (s->hr.log_teff_k_hi - s->hr.log_teff_k_lo) / (double)s->hr.nx;
    double bh = (s->hr.log_l_lsun_hi - s->hr.log_l_lsun_lo) / (double)s->hr.ny;
    fprintf(f, "<g id=\"density\" data-max-count=\"%llu\">\n", (unsigned long long)cmax);
    for (uint64_t iy = 0; iy < s->hr.ny; iy++)
        for (uint64_t ix = 0; ix < s->hr.nx; ix++) {
            uint64_t k = s->hr_count[iy * s->hr.nx + ix];
            if (!k) continue;
            double t_hi = s->hr.log_teff_k_lo + (double)(ix + 1) * bw, l_hi = s->hr.log_l_lsun_lo + (double)(iy + 1) * bh;
            double px = A->x0 + (A->tl - t_hi) / (A->tl - A->tr) * A->w, py = A->y0 + (A->lt - l_hi) / (A->lt - A->lb) * A->h;
            double pw = bw / (A->tl - A->tr) * A->w, phh = bh / (A->lt - A->lb) * A->h;
            int ci = cmax > 1 ? (int)floor(7.999 * log((double)k) / log((double)cmax)) : 7;
            fprintf(f, "<rect class=\"density\" data-count=\"%llu\" data-log-teff=\"%.6g\" data-log-l=\"%.6g\" x=\"%.2f\" "
                       "y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"%s\"/>\n",
                    (unsigned long long)k, t_hi - 0.5 * bw, l_hi - 0.5 * bh, px, py, pw + 0.05, phh + 0.05,
                    palette[ci < 0 ? 0 : ci]);
        }
    fprintf(f, "</g>\n");
}

static void density_scale(FILE *f, const area *A, uint64_t cmax)
{
    double kx = A->x0 + A->w + 22, ky = A->y0 + A->h - 150;
    fprintf(f, "<g id=\"density-scale\" font-size=\"11\" fill=\"#1a1a1a\">\n<text x=\"%.1f\" y=\"%.1f\" font-weight=\"bold\">"
               "Stars per bin</text>\n", kx, ky);
    for (int i = 0; i < 8; i++) {
        double lo = cmax > 1 ? exp(log((double)cmax) * i / 8.0) : 1;
        fprintf(f, "<rect x=\"%.1f\" y=\"%.1f\" width=\"16\" height=\"14\" fill=\"%s\" stroke=\"#888\" stroke-width=\"0.5\"/>"
                   "<text x=\"%.1f\" y=\"%.1f\">%s%.3g</text>\n",
                kx, ky + 8 + 15.0 * i, palette[i], kx + 22, ky + 19 + 15.0 * i, i ? "\xe2\x89\xa5 " : "", i ? ceil(lo) : 1.0);
    }
    fprintf(f, "</g>\n</svg>\n");
}

/*
 * The HR diagram of plot p (axes, isochrone, legend from svg.c) with the
 * summary's histogram drawn under it: the SVG is written to memory by
 * plot_write_svg and the density layer inserted inside its clipped plot
 * area, placed by the plot-area rectangle's data attributes.
 */
int pop_write_density_svg(const cli *c, plot *p, const hrt_pop_summary *s, const char *path)
{
    static const char clip_tag[] = "<g clip-path=\"url(#area)\">\n";
    char *buf = NULL;
    size_t len = 0;
    area A;
    outfile o;
    FILE *m = open_memstream(&buf, &len);
    if (!m) return cli_fail(c, CLI_EXIT_INTERNAL, "out of memory for the SVG");
    p->have_xrange = p->have_yrange = 1;
    p->xlo = s->hr.log_teff_k_lo, p->xhi = s->hr.log_teff_k_hi, p->ylo = s->hr.log_l_lsun_lo, p->yhi = s->hr.log_l_lsun_hi;
    int bad = plot_write_svg(p, m);
    fclose(m);
    const char *rect = buf ? strstr(buf, "<rect id=\"plot-area\"") : NULL, *clip = buf ? strstr(buf, clip_tag) : NULL;
    if (bad || !rect || !clip ||
        sscanf(rect, "<rect id=\"plot-area\" data-log-teff-left=\"%lf\" data-log-teff-right=\"%lf\" data-log-l-bottom=\"%lf\" "
                     "data-log-l-top=\"%lf\" x=\"%lf\" y=\"%lf\" width=\"%lf\" height=\"%lf\"",
               &A.tl, &A.tr, &A.lb, &A.lt, &A.x0, &A.y0, &A.w, &A.h) != 8) {
        free(buf);
        return cli_fail(c, CLI_EXIT_INTERNAL, "cannot lay out the density SVG");
    }
    int rc = outfile_open(c, &o, path);
    if (rc == 0) {
        const char *after = clip + strlen(clip_tag), *end = strstr(after, "</svg>");
        uint64_t cmax = 0;
        for (uint64_t k = 0; k < s->hr.nx * s->hr.ny; k++) cmax = s->hr_count[k] > cmax ? s->hr_count[k] : cmax;
        fwrite(buf, 1, (size_t)(after - buf), o.f);
        density_layer(o.f, s, &A, cmax);
        /* everything else, with a colour scale before the closing tag */
        fwrite(after, 1, end ? (size_t)(end - after) : strlen(after), o.f);
        density_scale(o.f, &A, cmax);
        rc = outfile_close(c, &o); /* a failed write shows here */
    }
    free(buf);
    return rc;
}

/* Run chunks [first, first + count) of the population in pieces, with progress on stderr when asked. */
int pop_run_range(const cli *c, const hrt_pop_spec *spec, uint64_t first, uint64_t count, int threads, size_t n_ages,
                  hrt_pop_summary *sums, int progress)
{
    uint64_t step = (uint64_t)(threads > 0 ? threads : hrt_pop_max_threads()) * 4, end = first + count;
    hrt_error err;
    if (!progress) step = count ? count : 1;
    for (uint64_t c0 = first; c0 < end; c0 += step) {
        uint64_t n = end - c0 < step ? end - c0 : step;
        int rc = hrt_pop_run(c->grid, spec, c0, n, threads, n_ages, sums, &err);
        if (rc != HRT_OK) return cli_fail(c, cli_exit_of_status(rc), "%s", err.message);
        if (progress) {
            uint64_t done = c0 + n - first;
            double stars = (double)(done * spec->chunk_size < spec->n_stars ? done * spec->chunk_size : spec->n_stars);
            fprintf(stderr, "\rhrtrail %s: %3.0f%% (%.4g of %.4g stars)", c->cmd, 100.0 * (double)done / (double)count, stars,
                    (double)(count == hrt_pop_n_chunks(spec) ? spec->n_stars : count * spec->chunk_size));
        }
    }
    if (progress) fprintf(stderr, "\r%60s\r", "");
    return 0;
}

/* Run the whole population in pieces, with progress on stderr when asked. */
int pop_run_progress(const cli *c, const hrt_pop_spec *spec, int threads, size_t n_ages, hrt_pop_summary *sums,
                     int progress)
{
    return pop_run_range(c, spec, 0, hrt_pop_n_chunks(spec), threads, n_ages, sums, progress);
}

static double seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int read_sfh_table(const cli *c, const char *path, dlist *t, dlist *r)
{
    csvfile f;
    int rc = csv_read(c, path, &f);
    if (rc) return rc;
    static const char *const tn[] = {"t_yr", "time_yr", "t", "time", NULL}, *const rn[] = {"rate", "sfr", NULL};
    long it = -1, ir = -1;
    for (const char *const *n = tn; *n && it < 0; n++) it = csv_column(&f, *n);
    for (const char *const *n = rn; *n && ir < 0; n++) ir = csv_column(&f, *n);
    if (it < 0 || ir < 0) {
        csv_free(&f);
        return cli_fail(c, CLI_EXIT_USAGE, "%s: the SFH table needs columns t_yr (or time) and rate (or sfr)", path);
    }
    for (size_t i = 0; i < f.nrow; i++) {
        double tv, rv;
        if (parse_age_yr(f.rows[i][it], &tv) || parse_number(f.rows[i][ir], &rv)) {
            csv_free(&f);
            return cli_fail(c, CLI_EXIT_USAGE, "%s line %ld: cannot read time '%s' or rate '%s'", path, f.line[i],
                            f.rows[i][it], f.rows[i][ir]);
        }
        dlist_push(t, tv, NULL);
        dlist_push(r, rv, NULL);
    }
    csv_free(&f);
    return 0;
}

/* ------------------------------------------------------------- the command */


static int pop_take_hr_bins(cli *c, pop_args *a, const char *val)
{
    long nx, ny;
    char tmp[64];
    const char *cm = strchr(val, ',');
    if (!cm || (size_t)(cm - val) >= sizeof tmp) return cli_fail(c, CLI_EXIT_USAGE, "--hr-bins '%s': expected NX,NY", val);
    memcpy(tmp, val, (size_t)(cm - val));
    tmp[cm - val] = 0;
    if (parse_count(tmp, 1, 10000, &nx) || parse_count(cm + 1, 1, 10000, &ny) || nx * ny > HRT_POP_HR_MAX_BINS)
        return cli_fail(c, CLI_EXIT_USAGE, "--hr-bins '%s': expected NX,NY with NX x NY <= %d", val, HRT_POP_HR_MAX_BINS);
    a->hr.nx = (uint64_t)nx, a->hr.ny = (uint64_t)ny;
    return 0;
}

/* A time option: --sfh-from, --sfh-to, --tau. */
static int pop_take_time(cli *c, const char *opt, const char *val, double *t, const char *example)
{
    if (parse_age_yr(val, t)) return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': expected a time, e.g. %s", opt, val, example);
    return 0;
}

static int pop_take_number(cli *c, pop_args *a, int id, const char *val)
{
    long v;
    switch (id) {
    case O_STARS:
        if (parse_number(val, &a->n_stars) || !(a->n_stars >= 1 && a->n_stars <= 1e15) || a->n_stars != floor(a->n_stars))
            return cli_fail(c, CLI_EXIT_USAGE, "--stars '%s': expected a whole number from 1 to 1e15, e.g. 1e8", val);
        return 0;
    case O_ALPHA:
        return parse_number(val, &a->alpha) ? cli_fail(c, CLI_EXIT_USAGE, "--alpha '%s': expected a number", val) : 0;
    case O_SEED:
        if (parse_number(val, &a->seedv) || !(a->seedv >= 0 && a->seedv < 1.8e19) || a->seedv != floor(a->seedv))
            return cli_fail(c, CLI_EXIT_USAGE, "--seed '%s': expected a whole number >= 0", val);
        return 0;
    case O_THREADS:
        if (parse_count(val, 0, 4096, &v)) return cli_fail(c, CLI_EXIT_USAGE, "--threads '%s': expected 0 (all) to 4096", val);
        a->threads = (int)v;
        return 0;
    default: /* O_FEH_SPREAD */
        if (parse_number(val, &a->spread) || !(a->spread > 0))
            return cli_fail(c, CLI_EXIT_USAGE, "--feh-spread '%s': expected a spread in dex > 0", val);
        return 0;
    }
}

/* --chunks FIRST:COUNT, --part K/N, --chunk-size N. */
static int pop_take_chunks(cli *c, pop_args *a, int id, const char *val)
{
    unsigned long long x, y;
    int end = 0;
    if (id == O_CHUNK_SIZE) {
        double v;
        if (parse_number(val, &v) || !(v >= 1 && v <= 1e9) || v != floor(v))
            return cli_fail(c, CLI_EXIT_USAGE, "--chunk-size '%s': expected a whole number of stars from 1 to 1e9", val);
        a->chunk_size = (uint64_t)v;
        return 0;
    }
    int ok = sscanf(val, id == O_CHUNKS ? "%llu:%llu%n" : "%llu/%llu%n", &x, &y, &end) == 2 && !val[end] && val[0] != '-' &&
             !strchr(val, ' ') && !strchr(val + strcspn(val, ":/") + 1, '-');
    if (id == O_CHUNKS) {
        if (!ok || y == 0)
            return cli_fail(c, CLI_EXIT_USAGE, "--chunks '%s': expected FIRST:COUNT, whole numbers with COUNT >= 1, "
                                               "e.g. 0:16", val);
        a->have_chunks = 1, a->ch_first = x, a->ch_count = y;
    } else {
        if (!ok || y == 0 || x >= y)
            return cli_fail(c, CLI_EXIT_USAGE, "--part '%s': expected K/N with 0 <= K < N, e.g. 3/10 (the fourth of ten "
                                               "parts)", val);
        a->have_part = 1, a->part_k = x, a->part_n = y;
    }
    return 0;
}

static int pop_take(cli *c, void *ctx, int id, const char *val)
{
    pop_args *a = ctx;
    switch (id) {
    case O_STARS: case O_ALPHA: case O_SEED: case O_THREADS: case O_FEH_SPREAD: return pop_take_number(c, a, id, val);
    case O_IMF: a->imf_name = val; return 0;
    case O_MASS_RANGE: a->have_range = 1; return parse_pair(c, "--mass-range", val, &a->m_lo, &a->m_hi, 0);
    case O_SFH: a->sfh_name = val; return 0;
    case O_SFH_FROM: return pop_take_time(c, "--sfh-from", val, &a->t_from, "2Gyr");
    case O_SFH_TO: return pop_take_time(c, "--sfh-to", val, &a->t_to, "10Gyr");
    case O_TAU: return pop_take_time(c, "--tau", val, &a->tau, "3Gyr");
    case O_SFH_TABLE: a->table_path = val, a->sfh_name = "table"; return 0;
    case O_AGE: return add_age_list(c, "--age", val, &a->ages);
    case O_Z_RANGE: a->have_zr = 1; return parse_pair(c, "--z-range", val, &a->z_lo, &a->z_hi, 0);
    case O_Z_UNIFORM: a->z_uniform = 1; return 0;
    case O_HR_BINS: return pop_take_hr_bins(c, a, val);
    case O_LOG_TEFF: return parse_pair(c, "--log-teff", val, &a->hr.log_teff_k_lo, &a->hr.log_teff_k_hi, 0);
    case O_LOG_L: return parse_pair(c, "--log-l", val, &a->hr.log_l_lsun_lo, &a->hr.log_l_lsun_hi, 0);
    case O_OUT: a->out = val; return 0;
    case O_CHUNKS: case O_PART: case O_CHUNK_SIZE: return pop_take_chunks(c, a, id, val);
    case O_SAVE: a->save = val; return 0;
    case O_CATALOGUE: a->catalogue = val; return 0;
    default: return 0;
    }
}

static const cmdopts pop_cmdopts = {pop_opts, NULL, ACCEPT_Z | ACCEPT_FORMAT, pop_take, "", 0};

/* What is required and the names of the IMF and the SFH. */
static int pop_check(const cli *c, pop_args *a)
{
    if (a->n_stars == 0) return cli_fail(c, CLI_EXIT_USAGE, "--stars N is required, e.g. --stars 1e6");
    if (a->ages.n == 0) return cli_fail(c, CLI_EXIT_USAGE, "--age AGE[,AGE...] is required, e.g. --age 1Gyr,10Gyr");
    a->imf = hrt_imf_from_name(a->imf_name);
    a->sfh = hrt_sfh_from_name(a->sfh_name);
    if (a->imf < 0)
        return cli_fail(c, CLI_EXIT_USAGE, "--imf '%s': one of salpeter1955, kroupa2001, chabrier2003, powerlaw", a->imf_name);
    if (a->imf == HRT_IMF_POWER_LAW && isnan(a->alpha))
        return cli_fail(c, CLI_EXIT_USAGE, "--imf powerlaw needs --alpha A (dN/dm ~ m^-A)");
    if (a->sfh < 0)
        return cli_fail(c, CLI_EXIT_USAGE, "--sfh '%s': one of burst, constant, exponential, table", a->sfh_name);
    return pop_check_out(c, a->out);
}

int pop_check_out(const cli *c, const char *out)
{
    if (out && strcmp(out, "-") == 0 && c->fmt != FMT_TABLE)
        return cli_fail(c, CLI_EXIT_USAGE, "-o -: the SVG would share standard output with the %s summary; name a file "
                                           "for -o (the %s goes to standard output)",
                        c->fmt == FMT_CSV ? "CSV" : "JSON", c->fmt == FMT_CSV ? "CSV" : "JSON");
    return 0;
}

/* The population's specification from the options and the grid. */
static int pop_spec(cli *c, pop_args *a)
{
    hrt_pop_spec *spec = &a->spec;
    hrt_error err;
    double gl, gh, gzl, gzh;
    int rc;
    hrt_pop_spec_default(spec);
    spec->n_stars = (uint64_t)a->n_stars;
    spec->seed = (uint64_t)a->seedv;
    if (a->chunk_size) spec->chunk_size = a->chunk_size;
    if ((rc = cli_resolve_z(c, &a->z))) return rc;
    if (hrt_grid_mass_range(c->grid, a->z, &gl, &gh) == HRT_OK && !a->have_range) {
        a->m_lo = fmax(a->m_lo, gl);
        a->m_hi = fmin(a->m_hi, gh);
    }
    if (hrt_imf_init(&spec->imf, a->imf, a->m_lo, a->m_hi, a->alpha, &err) != HRT_OK)
        return cli_fail(c, CLI_EXIT_USAGE, "%s", err.message);
    spec->sfh.kind = a->sfh;
    spec->sfh.t_start_yr = a->t_from;
    spec->sfh.t_end_yr = isnan(a->t_to) ? a->ages.v[a->ages.n - 1] : a->t_to;
    spec->sfh.tau_yr = a->tau;
    if (a->sfh == HRT_SFH_TABLE) {
        if (!a->table_path) return cli_fail(c, CLI_EXIT_USAGE, "--sfh table needs --sfh-table FILE (CSV with t_yr and rate)");
        if ((rc = read_sfh_table(c, a->table_path, &a->tt, &a->tr))) return rc;
        spec->sfh.n_table = a->tt.n;
        spec->sfh.table_t_yr = a->tt.v;
        spec->sfh.table_rate = a->tr.v;
    }
    hrt_grid_z_range(c->grid, &gzl, &gzh);
    if (!a->have_zr) a->z_lo = gzl, a->z_hi = gzh;
    if (a->z_uniform) {
        spec->zdist.kind = HRT_ZDIST_LOG_UNIFORM;
    } else if (!isnan(a->spread)) {
        spec->zdist.kind = HRT_ZDIST_LOG_NORMAL;
        spec->zdist.sigma_dex = a->spread;
    }
    spec->zdist.z = a->z;
    spec->zdist.z_lo = a->z_lo;
    spec->zdist.z_hi = a->z_hi;
    if (hrt_pop_spec_check(spec, &err) != HRT_OK) return cli_fail(c, CLI_EXIT_USAGE, "%s", err.message);
    return 0;
}

/* The HR-diagram density at the first age (-o). */
static int pop_svg(cli *c, const pop_args *a, const hrt_pop_summary *first)
{
    char title[200], sub[300], agebuf[64];
    plot pl;
    plot_init(&pl);
    format_age(agebuf, sizeof agebuf, a->ages.v[0]);
    snprintf(title, sizeof title, "HR-diagram density: %.4g stars at %s", (double)a->spec.n_stars, agebuf);
    snprintf(sub, sizeof sub, "%s IMF %g-%g Msun, SFH %s, Z %s %g; seed %llu; grid %s", hrt_imf_name(a->imf), a->m_lo,
             a->m_hi, hrt_sfh_name(a->sfh), a->spec.zdist.kind == HRT_ZDIST_FIXED ? "=" : "around", a->z,
             (unsigned long long)a->spec.seed, c->grid_used);
    pl.title = title;
    pl.subtitle = sub;
    /* a single burst at one Z: its isochrone over the density */
    if (a->sfh == HRT_SFH_BURST && a->spec.zdist.kind == HRT_ZDIST_FIXED && a->ages.v[0] > a->t_from)
        plot_add_isochrone(c, &pl, a->ages.v[0] - a->t_from, a->z, agebuf);
    int rc = pop_write_density_svg(c, &pl, first, a->out);
    plot_free(&pl);
    return rc;
}

/* CSV: one table of every age, the phases of each age followed by its remnants and failures. */
static void pop_csv(const pop_args *a, const hrt_pop_summary *sums)
{
    table *all = table_new(rec_cols, N_REC_COLS);
    for (size_t i = 0; i < a->ages.n; i++) {
        table *rem = table_new(rec_cols, N_REC_COLS);
        summary_rows(&sums[i], all, rem);
        for (size_t r = 0; r < rem->nrow; r++) {
            size_t k = table_add_row(all);
            for (size_t cc = 0; cc < N_REC_COLS; cc++) {
                if (rec_cols[cc].type == COL_TEXT)
                    table_text(all, k, cc, rem->text[r * N_REC_COLS + cc]);
                else
                    table_num(all, k, cc, rem->num[r * N_REC_COLS + cc]);
            }
        }
        table_free(rem);
    }
    table_write_csv(all, stdout);
    table_free(all);
}

static void pop_json_doc(const cli *c, const pop_args *a, const hrt_pop_summary *sums)
{
    const hrt_pop_spec *spec = &a->spec;
    int kind = spec->zdist.kind;
    jw w;
    jw_init(&w, stdout);
    jw_begin_object(&w, NULL);
    jw_begin_object(&w, "population");
    jw_num(&w, "stars", (double)spec->n_stars);
    jw_str(&w, "imf", hrt_imf_name(a->imf));
    jw_num(&w, "initial_mass_msun_lo", a->m_lo);
    jw_num(&w, "initial_mass_msun_hi", a->m_hi);
    jw_num(&w, "imf_mean_mass_msun", hrt_imf_mean_mass(&spec->imf));
    jw_str(&w, "sfh", hrt_sfh_name(a->sfh));
    jw_num(&w, "sfh_from_yr", a->t_from);
    jw_num(&w, "sfh_to_yr", a->sfh == HRT_SFH_CONSTANT || a->sfh == HRT_SFH_EXPONENTIAL ? spec->sfh.t_end_yr : NAN);
    jw_num(&w, "tau_yr", a->sfh == HRT_SFH_EXPONENTIAL ? a->tau : NAN);
    jw_str(&w, "z_distribution", kind == HRT_ZDIST_FIXED ? "fixed" : kind == HRT_ZDIST_LOG_UNIFORM ? "log-uniform" : "log-normal");
    jw_num(&w, "z", a->z);
    jw_num(&w, "feh_spread_dex", kind == HRT_ZDIST_LOG_NORMAL ? a->spread : NAN);
    jw_num(&w, "z_lo", kind == HRT_ZDIST_FIXED ? NAN : a->z_lo);
    jw_num(&w, "z_hi", kind == HRT_ZDIST_FIXED ? NAN : a->z_hi);
    jw_num(&w, "seed", (double)spec->seed);
    jw_int(&w, "chunk_size", (long)spec->chunk_size);
    jw_end_object(&w);
    jw_str(&w, "grid", c->grid_used);
    jw_begin_array(&w, "epochs");
    for (size_t i = 0; i < a->ages.n; i++) pop_json(&sums[i], &w, 1);
    jw_end_array(&w);
    if (a->out) jw_str(&w, "svg", a->out);
    jw_end_object(&w);
    jw_finish(&w);
}

static void pop_text(const cli *c, const pop_args *a, const hrt_pop_summary *sums, double dt, size_t n_merged)
{
    const hrt_pop_spec *spec = &a->spec;
    int nthreads = a->threads > 0 ? a->threads : hrt_pop_max_threads();
    printf("Population: %.6g stars, %s IMF over %g-%g Msun (mean %.4g Msun), SFH %s", (double)spec->n_stars,
           hrt_imf_name(a->imf), a->m_lo, a->m_hi, hrt_imf_mean_mass(&spec->imf), hrt_sfh_name(a->sfh));
    if (a->sfh == HRT_SFH_BURST)
        printf(" at %g Myr", a->t_from / 1e6);
    else if (a->sfh != HRT_SFH_TABLE)
        printf(" from %g to %g Myr", a->t_from / 1e6, spec->sfh.t_end_yr / 1e6);
    if (a->sfh == HRT_SFH_EXPONENTIAL) printf(" (tau %g Myr)", a->tau / 1e6);
    if (spec->zdist.kind == HRT_ZDIST_FIXED)
        printf(", Z = %g\n", a->z);
    else if (spec->zdist.kind == HRT_ZDIST_LOG_UNIFORM)
        printf(", Z log-uniform in %g-%g\n", a->z_lo, a->z_hi);
    else
        printf(", Z log-normal around %g (%.3g dex) in %g-%g\n", a->z, a->spread, a->z_lo, a->z_hi);
    if (dt >= 0 && a->ranks > 1)
        printf("seed %llu; %d MPI ranks x %d thread%s, %.3g s (%.3g stars per second per epoch)\n",
               (unsigned long long)spec->seed, a->ranks, nthreads, nthreads == 1 ? "" : "s", dt,
               (double)spec->n_stars * (double)a->ages.n / dt);
    else if (dt >= 0)
        printf("seed %llu; %d thread%s, %.3g s (%.3g stars per second per epoch)\n", (unsigned long long)spec->seed,
               nthreads, nthreads == 1 ? "" : "s", dt, (double)spec->n_stars * (double)a->ages.n / dt);
    else
        printf("seed %llu; merged from %zu saved part%s\n", (unsigned long long)spec->seed, n_merged, n_merged == 1 ? "" : "s");
    printf("grid: %s\n\n", c->grid_used);
    for (size_t i = 0; i < a->ages.n; i++) {
        pop_print_text(&sums[i], stdout, "  ");
        putchar('\n');
    }
    printf("Ages are the population's, since star formation began; remnant 'none' counts stars that are\n"
           "not remnants. The turnoff is for a single burst at one metallicity. Sampling noise: counts are\n"
           "Poisson; same seed, same numbers, whatever the number of threads.\n");
    if (a->out) printf("HR-diagram density at the first age written to %s\n", a->out);
    printf("\nAccuracy: the answers are as good as the grid; the default grid is a semi-analytic model\n"
           "(tracks/MODEL.md), meant for population-level work, not precision stellar physics.\n");
}

int pop_output(cli *c, pop_args *a, const hrt_pop_summary *sums, double dt, size_t n_merged)
{
    int rc = a->out ? pop_svg(c, a, &sums[0]) : 0;
    if (rc == 0 && c->fmt == FMT_CSV)
        pop_csv(a, sums);
    else if (rc == 0 && c->fmt == FMT_JSON)
        pop_json_doc(c, a, sums);
    else if (rc == 0 && !(a->out && strcmp(a->out, "-") == 0)) /* -o -: the SVG alone */
        pop_text(c, a, sums, dt, n_merged);
    return rc;
}

/* Parse, run this rank's chunks, add up the ranks' summaries, write what was asked (rank 0). */
static int pop_run(cli *c, pop_args *a, popdist *d)
{
    hrt_error err;
    int rc = pop_check(c, a);
    if (rc == 0) rc = cli_open_grid(c);
    if (rc == 0) rc = pop_spec(c, a);
    if (rc == 0) rc = popdist_range(c, a, d);
    a->ranks = d->size;
    size_t n = a->ages.n;
    hrt_pop_summary *sums = xmalloc((n ? n : 1) * sizeof *sums);
    for (size_t i = 0; i < n && rc == 0; i++)
        if (hrt_pop_summary_init(&sums[i], a->ages.v[i], &a->hr, &err) != HRT_OK)
            rc = cli_fail(c, CLI_EXIT_USAGE, "%s", err.message);
    double t0 = seconds();
    if (rc == 0 && a->catalogue)
        rc = pop_catalogue_run(c, a, d, sums, d->rank == 0 && isatty(STDERR_FILENO));
    else if (rc == 0)
        rc = pop_run_range(c, &a->spec, d->my_first, d->my_count, a->threads, n, sums, d->rank == 0 && isatty(STDERR_FILENO));
    rc = popdist_agree(c, d, rc);
    if (rc == 0) rc = popdist_reduce(c, d, sums, n);
    double dt = seconds() - t0;
    if (rc == 0 && d->rank == 0) rc = popdist_finish(c, a, d, sums, dt);
    free(sums);
    return rc;
}

int cmd_population(cli *c, argparse *p)
{
    if (p->argc > 1 && strcmp(p->argv[1], "merge") == 0) {
        argparse sub = {p->argc - 1, p->argv + 1, 1};
        return pop_merge(c, &sub);
    }
    pop_args a;
    popdist d;
    memset(&a, 0, sizeof a);
    a.imf_name = "kroupa2001", a.sfh_name = "burst";
    a.alpha = a.t_to = a.tau = a.spread = a.z_lo = a.z_hi = NAN;
    a.m_lo = 0.08, a.m_hi = 100, a.seedv = 1;
    a.hr = (hrt_pop_hr){3.3, 4.9, -5.0, 6.5, 64, 64};
    popdist_begin(&d);
    int rc = cli_parse(c, p, &pop_cmdopts, &a);
    if (rc == 0) rc = pop_run(c, &a, &d);
    rc = popdist_end(c, &d, rc);
    dlist_free(&a.ages);
    dlist_free(&a.tt);
    dlist_free(&a.tr);
    return rc;
}
