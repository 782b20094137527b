/* Output of the hrtrail command: aligned tables, CSV and JSON. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

/* ------------------------------------------------------------------ tables */

table *table_new(const col *cols, size_t ncol)
{
    table *t = xcalloc(1, sizeof *t);
    t->cols = cols;
    t->ncol = ncol;
    return t;
}

size_t table_add_row(table *t)
{
    if (t->nrow == t->cap) {
        t->cap = t->cap ? 2 * t->cap : 16;
        t->num = xrealloc(t->num, t->cap * t->ncol * sizeof *t->num);
        t->text = xrealloc(t->text, t->cap * t->ncol * sizeof *t->text);
    }
    for (size_t c = 0; c < t->ncol; c++) {
        t->num[t->nrow * t->ncol + c] = NAN;
        t->text[t->nrow * t->ncol + c] = NULL;
    }
    return t->nrow++;
}

void table_num(table *t, size_t r, size_t c, double v)
{
    t->num[r * t->ncol + c] = v;
}

void table_text(table *t, size_t r, size_t c, const char *s)
{
    free(t->text[r * t->ncol + c]);
    t->text[r * t->ncol + c] = xstrdup(s ? s : "");
}

void table_free(table *t)
{
    if (!t) return;
    for (size_t i = 0; i < t->nrow * t->ncol; i++) free(t->text[i]);
    free(t->num);
    free(t->text);
    free(t);
}

static void human_cell(const table *t, size_t r, size_t c, char *buf, size_t n)
{
    const col *k = &t->cols[c];
    if (k->type == COL_TEXT) {
        const char *s = t->text[r * t->ncol + c];
        char *safe = text_safe(s && *s ? s : "-", NULL); /* no control character reaches the terminal */
        snprintf(buf, n, "%s", safe);
        free(safe);
        return;
    }
    double v = t->num[r * t->ncol + c];
    if (isnan(v))
        snprintf(buf, n, "-");
    else if (isinf(v))
        snprintf(buf, n, v > 0 ? "inf" : "-inf");
    else
        snprintf(buf, n, k->hfmt ? k->hfmt : "%.6g", v * (k->hscale != 0 ? k->hscale : 1.0));
}

void table_write_text(const table *t, FILE *f, const char *indent)
{
    size_t *w = xcalloc(t->ncol, sizeof *w);
    char buf[256];
    for (size_t c = 0; c < t->ncol; c++) {
        if (!t->cols[c].head) continue;
        w[c] = strlen(t->cols[c].head);
        for (size_t r = 0; r < t->nrow; r++) {
            human_cell(t, r, c, buf, sizeof buf);
            if (strlen(buf) > w[c]) w[c] = strlen(buf);
        }
    }
    for (size_t r = 0; r <= t->nrow; r++) {
        int first = 1;
        fputs(indent ? indent : "", f);
        for (size_t c = 0; c < t->ncol; c++) {
            const col *k = &t->cols[c];
            int left = k->type == COL_TEXT;
            const char *s;
            if (!k->head) continue;
            if (r == 0)
                s = k->head;
            else {
                human_cell(t, r - 1, c, buf, sizeof buf);
                s = buf;
            }
            if (!first) fputs("  ", f);
            /* the last column is not padded on the right */
            if (left) {
                size_t last = c;
                for (size_t d = c + 1; d < t->ncol; d++)
                    if (t->cols[d].head) last = d;
                if (last == c)
                    fputs(s, f);
                else
                    fprintf(f, "%-*s", (int)w[c], s);
            } else {
                fprintf(f, "%*s", (int)w[c], s);
            }
            first = 0;
        }
        fputc('\n', f);
    }
    free(w);
}

void csv_write_text(FILE *f, const char *s)
{
    if (!s) s = "";
    if (strpbrk(s, ",\"\n\r") || (*s && (s[0] == ' ' || s[strlen(s) - 1] == ' '))) {
        fputc('"', f);
        for (; *s; s++) {
            if (*s == '"') fputc('"', f);
            fputc(*s, f);
        }
        fputc('"', f);
    } else {
        fputs(s, f);
    }
}

void csv_write_num(FILE *f, double v)
{
    if (isnan(v))
        fputs("nan", f);
    else if (isinf(v))
        fputs(v > 0 ? "inf" : "-inf", f);
    else
        fprintf(f, "%.17g", v);
}

void table_write_csv(const table *t, FILE *f)
{
    int first = 1;
    for (size_t c = 0; c < t->ncol; c++) {
        if (!t->cols[c].key) continue; /* a column of the human table only */
        if (!first) fputc(',', f);
        csv_write_text(f, t->cols[c].key);
        first = 0;
    }
    fputc('\n', f);
    for (size_t r = 0; r < t->nrow; r++) {
        first = 1;
        for (size_t c = 0; c < t->ncol; c++) {
            if (!t->cols[c].key) continue;
            if (!first) fputc(',', f);
            first = 0;
            if (t->cols[c].type == COL_TEXT)
                csv_write_text(f, t->text[r * t->ncol + c]);
            else
                csv_write_num(f, t->num[r * t->ncol + c]);
        }
        fputc('\n', f);
    }
}

/* ------------------------------------------------------------------ JSON */

void jw_init(jw *w, FILE *f)
{
    memset(w, 0, sizeof *w);
    w->f = f;
    w->first[0] = 1;
}

/* A JSON string: valid UTF-8 whatever s holds.  Control characters (C0, DEL, C1) are escaped as
 * \u00XX, and every byte that is not part of a UTF-8 character becomes U+FFFD. */
static void jw_string(FILE *f, const char *s)
{
    const unsigned char *p = (const unsigned char *)(s ? s : "");
    fputc('"', f);
    while (*p) {
        uint32_t cp = 0;
        size_t k = utf8_decode(p, &cp);
        if (k == 0) {
            fputs("\xef\xbf\xbd", f); /* U+FFFD REPLACEMENT CHARACTER */
            p++;
            continue;
        }
        if (cp == '"' || cp == '\\')
            fprintf(f, "\\%c", (int)cp);
        else if (cp == '\n')
            fputs("\\n", f);
        else if (cp == '\r')
            fputs("\\r", f);
        else if (cp == '\t')
            fputs("\\t", f);
        else if (cp < 0x20 || (cp >= 0x7f && cp < 0xa0))
            fprintf(f, "\\u%04x", (unsigned)cp);
        else
            fwrite(p, 1, k, f);
        p += k;
    }
    fputc('"', f);
}

static void jw_prefix(jw *w, const char *key)
{
    if (w->depth > 0) {
        if (!w->first[w->depth]) fputc(',', w->f);
        fputc('\n', w->f);
        for (int i = 0; i < w->depth; i++) fputs("  ", w->f);
    }
    w->first[w->depth] = 0;
    if (key) {
        jw_string(w->f, key);
        fputs(": ", w->f);
    }
}

static void jw_open(jw *w, const char *key, char ch)
{
    jw_prefix(w, key);
    fputc(ch, w->f);
    if (w->depth < 63) w->depth++;
    w->first[w->depth] = 1;
}

static void jw_close(jw *w, char ch)
{
    int empty = w->first[w->depth];
    if (w->depth > 0) w->depth--;
    if (!empty) {
        fputc('\n', w->f);
        for (int i = 0; i < w->depth; i++) fputs("  ", w->f);
    }
    fputc(ch, w->f);
}

void jw_begin_object(jw *w, const char *key) { jw_open(w, key, '{'); }
void jw_end_object(jw *w) { jw_close(w, '}'); }
void jw_begin_array(jw *w, const char *key) { jw_open(w, key, '['); }
void jw_end_array(jw *w) { jw_close(w, ']'); }

void jw_num(jw *w, const char *key, double v)
{
    jw_prefix(w, key);
    if (isfinite(v))
        fprintf(w->f, "%.17g", v);
    else
        fputs("null", w->f);
}

void jw_int(jw *w, const char *key, long v)
{
    jw_prefix(w, key);
    fprintf(w->f, "%ld", v);
}

void jw_str(jw *w, const char *key, const char *s)
{
    jw_prefix(w, key);
    if (s)
        jw_string(w->f, s);
    else
        fputs("null", w->f);
}

void jw_bool(jw *w, const char *key, int v)
{
    jw_prefix(w, key);
    fputs(v ? "true" : "false", w->f);
}

void jw_table(jw *w, const char *key, const table *t)
{
    jw_begin_array(w, key);
    for (size_t r = 0; r < t->nrow; r++) {
        jw_begin_object(w, NULL);
        for (size_t c = 0; c < t->ncol; c++) {
            if (!t->cols[c].key) continue; /* a column of the human table only */
            if (t->cols[c].type == COL_TEXT)
                jw_str(w, t->cols[c].key, t->text[r * t->ncol + c]);
            else
                jw_num(w, t->cols[c].key, t->num[r * t->ncol + c]);
        }
        jw_end_object(w);
    }
    jw_end_array(w);
}

void jw_finish(jw *w)
{
    fputc('\n', w->f);
}

void jw_records(FILE *f, const table *t)
{
    jw w;
    jw_init(&w, f);
    jw_table(&w, NULL, t);
    jw_finish(&w);
}

int out_records(const cli *c, const table *t)
{
    if (c->fmt == FMT_CSV)
        table_write_csv(t, stdout);
    else if (c->fmt == FMT_JSON)
        jw_records(stdout, t);
    else
        return 0;
    return 1;
}

void out_states(const cli *c, const table *t, const char *heading)
{
    if (out_records(c, t)) return;
    if (heading) fputs(heading, stdout);
    table_write_text(t, stdout, NULL);
    phase_footnote(stdout, t);
}

/* ------------------------------------------------------------------ states */

static const col state_cols[] = {
    {"name", "star", COL_TEXT, NULL, 0},
    {"initial_mass_msun", "M_init [Msun]", COL_NUM, "%.4g", 0},
    {"z", "Z", COL_NUM, "%.4g", 0},
    {"age_yr", "age [Myr]", COL_NUM, "%.5g", 1e-6},
    {"phase", "phase", COL_TEXT, NULL, 0},
    {"route", NULL, COL_TEXT, NULL, 0},
    {"log_l_lsun", "log L [Lsun]", COL_NUM, "%.4f", 0},
    {"log_teff_k", "log Teff [K]", COL_NUM, "%.4f", 0},
    {"log_r_rsun", "log R [Rsun]", COL_NUM, "%.4f", 0},
    {"log_g_cgs", "log g [cm/s2]", COL_NUM, "%.3f", 0},
    {"mass_msun", "M now [Msun]", COL_NUM, "%.4g", 0},
    {"he_core_mass_msun", "He core [Msun]", COL_NUM, "%.4g", 0},
    {"co_core_mass_msun", "CO core [Msun]", COL_NUM, "%.4g", 0},
    {"eep", "EEP", COL_NUM, "%.2f", 0},
    {"phase_fraction", NULL, COL_NUM, NULL, 0},
    {"phase_start_yr", NULL, COL_NUM, NULL, 0},
    {"phase_end_yr", NULL, COL_NUM, NULL, 0},
    {"remnant", NULL, COL_TEXT, NULL, 0},
    {"remnant_mass_msun", NULL, COL_NUM, NULL, 0},
    {"abs_mbol", "M_bol", COL_NUM, "%.3f", 0},
    {"bc_v", "BC_V", COL_NUM, "%.3f", 0},
    {"abs_mv", "M_V", COL_NUM, "%.3f", 0},
    {"mv", "m_V", COL_NUM, "%.3f", 0},
    {"err_log_l_dex", "+-log L", COL_NUM, "%.2g", 0},
    {"err_log_teff_dex", "+-log Teff", COL_NUM, "%.2g", 0},
    {"err_log_age_dex", "+-log age", COL_NUM, "%.2g", 0},
    {"flags", "notes", COL_TEXT, NULL, 0},
    {"status", "status", COL_TEXT, NULL, 0},
};
#define N_STATE_COLS (sizeof state_cols / sizeof state_cols[0])

/* Per-table copy of the column list, so that the optional columns can be dropped. */
typedef struct state_table {
    table t;
    col cols[N_STATE_COLS + 32];
    int map[N_STATE_COLS]; /* index in cols or -1 */
    size_t n_extra;        /* the grid's extra quantities (--extra), in the last columns */
} state_table;

table *state_table_new(unsigned extra)
{
    state_table *st = xcalloc(1, sizeof *st);
    size_t n = 0;
    for (size_t i = 0; i < N_STATE_COLS; i++) {
        const char *key = state_cols[i].key;
        int is_mag = !strcmp(key, "abs_mbol") || !strcmp(key, "bc_v") || !strcmp(key, "abs_mv");
        if ((!strcmp(key, "name") && !(extra & SC_NAME)) || (!strcmp(key, "status") && !(extra & SC_STATUS)) ||
            (is_mag && !(extra & SC_MAGS)) || (!strcmp(key, "mv") && !(extra & SC_MV)) ||
            (!strncmp(key, "err_", 4) && !(extra & SC_IERR))) {
            st->map[i] = -1;
            continue;
        }
        st->map[i] = (int)n;
        st->cols[n++] = state_cols[i];
    }
    st->t.cols = st->cols;
    st->t.ncol = n;
    return &st->t; /* first member: table_free() frees the whole state_table */
}

void state_table_add_extras(table *t, const cli *c)
{
    state_table *st = (state_table *)t;
    for (size_t k = 0; k < c->n_extra && st->n_extra < 32; k++) {
        st->cols[t->ncol++] = (col){hrt_grid_extra_name(c->grid, c->extra_idx[k]), c->extra_head[k], COL_NUM, "%.5g", 0};
        st->n_extra++;
    }
}

const char *flags_text(int flags, char *buf, size_t n)
{
    buf[0] = '\0';
    if (flags & HRT_FLAG_NOT_MODELLED) snprintf(buf + strlen(buf), n - strlen(buf), "%snot-modelled", *buf ? "+" : "");
    if (flags & HRT_FLAG_REMNANT) snprintf(buf + strlen(buf), n - strlen(buf), "%sremnant", *buf ? "+" : "");
    if (flags & HRT_FLAG_DARK) snprintf(buf + strlen(buf), n - strlen(buf), "%sdark", *buf ? "+" : "");
    if (flags & HRT_FLAG_EXTRAPOLATED)
        snprintf(buf + strlen(buf), n - strlen(buf), "%sextrapolated", *buf ? "+" : "");
    return buf;
}

void state_table_add(table *t, const cli *c, const hrt_state *s, const char *name, const char *status)
{
    state_table *st = (state_table *)t;
    size_t r = table_add_row(t);
    char fl[128];
    double mag[4];
    int32_t mflags = 0;
    state_magnitudes(c, s, mag, &mflags);
    /* the interpolation error where the grid has an estimate (NaN for remnants and the like) */
    hrt_interp_error ie = {NAN, NAN, NAN, 0, {0}};
    if (st->map[23] >= 0) (void)hrt_state_interp_error(c->grid, s, &ie, NULL);
    const double nums[N_STATE_COLS] = {
        0, s->initial_mass_msun, s->z, s->age_yr, 0, 0, s->log_l_lsun, s->log_teff_k, s->log_r_rsun, s->log_g_cgs,
        s->mass_msun, s->he_core_mass_msun, s->co_core_mass_msun, s->eep, s->phase_fraction, s->phase_start_yr,
        s->phase_end_yr, 0, s->remnant_mass_msun, mag[0], mag[1], mag[2], mag[3], ie.log_l_dex, ie.log_teff_dex,
        ie.log_age_dex, 0, 0};
    int mag_cols = st->map[19] >= 0; /* abs_mbol shown: the magnitudes were asked for */
    for (size_t i = 0; i < N_STATE_COLS; i++) {
        int k = st->map[i];
        const char *key = state_cols[i].key;
        if (k < 0) continue;
        if (state_cols[i].type == COL_NUM)
            table_num(t, r, (size_t)k, nums[i]);
        else if (!strcmp(key, "name"))
            table_text(t, r, (size_t)k, name);
        else if (!strcmp(key, "phase"))
            table_text(t, r, (size_t)k, s->status == HRT_OK ? hrt_phase_key(s->phase) : "");
        else if (!strcmp(key, "route"))
            table_text(t, r, (size_t)k, s->status == HRT_OK ? cli_route_name(c, s->route) : "");
        else if (!strcmp(key, "remnant"))
            table_text(t, r, (size_t)k, s->status == HRT_OK ? hrt_remnant_key(s->remnant) : "");
        else if (!strcmp(key, "flags")) {
            flags_text(s->flags, fl, sizeof fl);
            /* the bolometric correction outside the stars it was fitted to (hrt_magnitudes) */
            if (mag_cols && (mflags & HRT_FLAG_BEYOND_LAW) && isfinite(mag[1]))
                snprintf(fl + strlen(fl), sizeof fl - strlen(fl), "%sbc-uncalibrated", *fl ? "+" : "");
            table_text(t, r, (size_t)k, s->status == HRT_OK ? fl : "");
        }
        else if (!strcmp(key, "status"))
            table_text(t, r, (size_t)k, status);
    }
    if (st->n_extra > 0) {
        double xv[32];
        if (hrt_state_extra(c->grid, s, st->n_extra, c->extra_idx, xv, NULL) != HRT_OK)
            for (size_t k = 0; k < st->n_extra; k++)
                xv[k] = NAN; /* a failed star (kept with --keep-going) */
        for (size_t k = 0; k < st->n_extra; k++)
            table_num(t, r, t->ncol - st->n_extra + k, xv[k]);
    }
}

/* After a human table: what the phase keys in it mean. */
void phase_footnote(FILE *f, const table *t)
{
    size_t pc = (size_t)-1;
    int seen[HRT_PHASE_SLOTS] = {0};
    int any = 0;
    for (size_t c = 0; c < t->ncol; c++)
        if (t->cols[c].key && !strcmp(t->cols[c].key, "phase")) pc = c;
    if (pc == (size_t)-1) return;
    for (size_t r = 0; r < t->nrow; r++) {
        const char *k = t->text[r * t->ncol + pc];
        int ph = k ? hrt_phase_from_key(k) : HRT_PHASE_UNKNOWN;
        if (ph > 0 && ph < HRT_PHASE_SLOTS) seen[ph] = 1;
    }
    /* in the order of HRT_PHASE_LIST; unknown (code 0) is not explained */
    for (size_t i = 1; i < HRT_PHASE_N; i++) {
        int ph = hrt_phase_code(i);
        if (!seen[ph]) continue;
        fprintf(f, "%s%s = %s", any ? "; " : "phases: ", hrt_phase_key(ph), hrt_phase_name(ph));
        any = 1;
    }
    if (any) fputc('\n', f);
}

/* ------------------------------------------------------------------ magnitudes */

unsigned mag_columns(const cli *c)
{
    return (c->mags || c->have_distance ? SC_MAGS : 0u) | (c->have_distance ? SC_MV : 0u) | (c->ierr ? SC_IERR : 0u);
}

int mag_option_take(cli *c, int id, const char *val)
{
    switch (id) {
    case O_MAG_ABS: c->mags = 1; return 0;
    case O_IERR: c->ierr = 1; return 0;
    case O_MAG_DISTANCE:
        if (parse_number(val, &c->distance_pc) != 0 || !(c->distance_pc > 0) || !isfinite(c->distance_pc))
            return cli_fail(c, CLI_EXIT_USAGE, "--distance %s: a distance > 0 in parsecs", val);
        c->have_distance = 1;
        return 0;
    case O_MAG_AV:
        if (parse_number(val, &c->a_v_mag) != 0 || !(c->a_v_mag >= 0) || !isfinite(c->a_v_mag))
            return cli_fail(c, CLI_EXIT_USAGE, "--av %s: an extinction A_V >= 0 in magnitudes", val);
        c->have_av = 1;
        return 0;
    default: return 0;
    }
}

int mag_check_options(const cli *c)
{
    if (c->have_av && !c->have_distance)
        return cli_fail(c, CLI_EXIT_USAGE, "--av applies to the apparent magnitude: give --distance PC too");
    return 0;
}

void state_magnitudes(const cli *c, const hrt_state *s, double out[4], int32_t *flags)
{
    out[0] = out[1] = out[2] = out[3] = NAN;
    *flags = 0;
    if (!c->mags && !c->have_distance) return;
    /* the options were checked: the call cannot fail */
    (void)hrt_magnitudes(1, s, c->distance_pc, c->a_v_mag, &out[0], &out[1], &out[2], c->have_distance ? &out[3] : NULL,
                         flags, NULL);
}
