/*
 * The HR diagram as SVG: log Teff increasing to the left, log L upward.
 * Phases are told apart three ways, so that a greyscale print still shows
 * them: colour, dash pattern of the line, and the shape of the marker set
 * where each phase begins.  Tracks are thin lines, isochrones thick ones.
 * The palette and the shapes are hrtrail's own choice.
 */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

#define PI_ 3.14159265358979323846

typedef enum shape {
    SH_DISC, SH_BOX, SH_TRI_UP, SH_RHOMB, SH_TRI_DOWN, SH_CROSS, SH_PLUS, SH_RING, SH_OPEN_BOX, SH_OPEN_TRI,
    SH_OPEN_RHOMB, SH_STAR
} shape;

typedef struct phase_style {
    const char *colour;
    const char *dash; /* stroke-dasharray, "" for solid */
    shape mark;
} phase_style;

/* Indexed by phase code (HRT_PHASE_SLOTS entries, most unused).  Lightness alternates along the life of a star, so
 * that neighbouring phases differ in grey too. */
static const phase_style styles[HRT_PHASE_SLOTS] = {
    [HRT_PHASE_UNKNOWN] = {"#7f7f7f", "", SH_STAR},
    [HRT_PHASE_PRE_MS] = {"#9a9a9a", "1 2", SH_RING},
    [HRT_PHASE_MS] = {"#1d4e89", "", SH_DISC},
    [HRT_PHASE_SUBGIANT] = {"#6fb7d8", "7 3", SH_BOX},
    [HRT_PHASE_RGB] = {"#a8322d", "2 2.5", SH_TRI_UP},
    [HRT_PHASE_CHEB] = {"#f0a830", "9 3 2 3", SH_RHOMB},
    [HRT_PHASE_EAGB] = {"#4b2a6b", "4 4", SH_TRI_DOWN},
    [HRT_PHASE_TPAGB] = {"#c490d1", "1 2", SH_CROSS},
    [HRT_PHASE_POST_AGB] = {"#3c8d5a", "12 4", SH_PLUS},
    [HRT_PHASE_WD] = {"#404040", "", SH_RING},
    [HRT_PHASE_BSG] = {"#2bb3a3", "6 2 1 2", SH_OPEN_BOX},
    [HRT_PHASE_RSG] = {"#6e2612", "3 1", SH_OPEN_TRI},
    [HRT_PHASE_WR] = {"#d9558f", "1 1", SH_OPEN_RHOMB},
    [HRT_PHASE_NS] = {"#202020", "", SH_STAR},
    [HRT_PHASE_BH] = {"#000000", "", SH_STAR},
    [HRT_PHASE_POST_RGB] = {"#7fbf7b", "12 4", SH_PLUS},
};

static const phase_style *style_of(int ph)
{
    return &styles[ph > 0 && ph < HRT_PHASE_SLOTS && styles[ph].colour ? ph : 0];
}

void plot_init(plot *p)
{
    memset(p, 0, sizeof *p);
    p->width = 1080;
    p->height = 660;
}

void plot_free(plot *p)
{
    for (size_t i = 0; i < p->nlines; i++) {
        free(p->lines[i].log_teff);
        free(p->lines[i].log_l_lsun);
        free(p->lines[i].phase);
        free(p->lines[i].route);
        free(p->lines[i].label);
    }
    for (size_t i = 0; i < p->npoints; i++) free(p->points[i].label);
    free(p->lines);
    free(p->points);
    memset(p, 0, sizeof *p);
}

plot_line *plot_add_line(plot *p, size_t n, const char *label, int is_isochrone)
{
    plot_line *l;
    p->lines = xrealloc(p->lines, (p->nlines + 1) * sizeof *p->lines);
    l = &p->lines[p->nlines++];
    l->n = 0;
    l->log_teff = xcalloc(n, sizeof(double));
    l->log_l_lsun = xcalloc(n, sizeof(double));
    l->phase = xcalloc(n, sizeof(int));
    l->route = xcalloc(n, sizeof(int));
    l->label = xstrdup(label ? label : "");
    l->is_isochrone = is_isochrone;
    return l;
}

/* The y value of a state: log L, or its V magnitude (absolute, or apparent with the plot's offset);
 * NaN where the bolometric correction was not fitted (hrt_magnitudes flags it): outside 2900-52500 K
 * its polynomial runs away, and white dwarfs are not among its stars. */
static double y_of(const plot *p, const hrt_state *s)
{
    double mv;
    int32_t fl;
    if (p->y_kind == PLOT_Y_LOG_L) return s->log_l_lsun;
    if (hrt_magnitudes(1, s, 10.0, 0.0, NULL, NULL, &mv, NULL, &fl, NULL) != HRT_OK || (fl & HRT_FLAG_BEYOND_LAW))
        return NAN;
    return mv + (p->y_kind == PLOT_Y_MV ? p->y_offset_mag : 0.0);
}

void plot_add_point(plot *p, double log_teff, double log_l, int phase, const char *label)
{
    if (p->y_kind != PLOT_Y_LOG_L) {
        hrt_state s;
        memset(&s, 0, sizeof s);
        s.log_teff_k = log_teff, s.log_l_lsun = log_l;
        if (phase / 10 == HRT_PHASE_WD / 10) s.flags = HRT_FLAG_REMNANT; /* no BC_V for remnants */
        log_l = y_of(p, &s);
        if (!isfinite(log_l)) return;
    }
    p->points = xrealloc(p->points, (p->npoints + 1) * sizeof *p->points);
    p->points[p->npoints].log_teff = log_teff;
    p->points[p->npoints].log_l_lsun = log_l;
    p->points[p->npoints].phase = phase;
    p->points[p->npoints].label = xstrdup(label ? label : "");
    p->npoints++;
}

static void line_push(const plot *p, plot_line *l, const hrt_state *s)
{
    double y = y_of(p, s);
    if (!isfinite(s->log_teff_k) || !isfinite(y)) return;
    l->log_teff[l->n] = s->log_teff_k;
    l->log_l_lsun[l->n] = y;
    l->phase[l->n] = s->phase;
    l->route[l->n] = s->route;
    l->n++;
}

int plot_add_track(const cli *c, plot *p, const hrt_star *s, const char *label)
{
    size_t n = hrt_star_n_eep(s);
    plot_line *l = plot_add_line(p, n, label, 0);
    for (size_t j = 0; j < n; j++) {
        hrt_state st;
        int r = hrt_star_eep_state(s, j, &st);
        if (r != HRT_OK) return cli_fail(c, cli_exit_of_status(r), "EEP %zu of the track %s: %s", j, label, hrt_strerror(r));
        line_push(p, l, &st);
    }
    return 0;
}

int plot_add_isochrone(const cli *c, plot *p, double age_yr, double z, const char *label)
{
    hrt_state *pts;
    size_t n;
    int st = isochrone_compute(c, age_yr, z, &pts, &n);
    if (st != HRT_OK) return st;
    plot_line *l = plot_add_line(p, n, label, 1);
    for (size_t k = 0; k < n; k++) line_push(p, l, &pts[k]);
    free(pts);
    return HRT_OK;
}

/* ------------------------------------------------------------------ drawing */

/* The y axis by PLOT_Y_*: its title and the name of its data attributes. */
static const char *const y_title[] = {"log10 (L / Lsun)", "M_V (absolute V magnitude; BC_V of Flower 1996)",
                                      "V (apparent magnitude; BC_V of Flower 1996)"};
static const char *const y_attr[] = {"log-l", "abs-mv", "mv"};

typedef struct frame {
    double x0, x1, y0, y1;     /* plot area, px */
    double xlo, xhi, ylo, yhi; /* data range: log Teff, log L (or a magnitude) */
    int y_kind;                /* PLOT_Y_*: magnitudes grow downward */
} frame;

static double px(const frame *f, double log_teff)
{
    return f->x0 + (f->xhi - log_teff) / (f->xhi - f->xlo) * (f->x1 - f->x0);
}

static double py(const frame *f, double log_l)
{
    if (f->y_kind != PLOT_Y_LOG_L) return f->y0 + (log_l - f->ylo) / (f->yhi - f->ylo) * (f->y1 - f->y0);
    return f->y1 - (log_l - f->ylo) / (f->yhi - f->ylo) * (f->y1 - f->y0);
}

/* Text in XML: the five entities escaped, control characters XML cannot hold dropped, and a byte
 * that is not UTF-8 written as U+FFFD, so that the file stays well-formed whatever the text. */
static void xml_text(FILE *o, const char *s)
{
    static const char special[] = "&<>\"'";
    static const char *const entity[] = {"&amp;", "&lt;", "&gt;", "&quot;", "&apos;"};
    const unsigned char *p = (const unsigned char *)(s ? s : "");
    while (*p) {
        uint32_t cp = 0;
        size_t k = utf8_decode(p, &cp);
        const char *e = k == 1 ? strchr(special, (int)cp) : NULL;
        if (k == 0)
            fputs("\xef\xbf\xbd", o); /* U+FFFD */
        else if (e)
            fputs(entity[e - special], o);
        else if (cp >= 0x20 || cp == '\t')
            fwrite(p, 1, k, o);
        p += k ? k : 1;
    }
}

static void marker(FILE *o, shape sh, double x, double y, double r, const char *colour)
{
    const char *fill = colour;
    switch (sh) {
    case SH_RING: case SH_OPEN_BOX: case SH_OPEN_TRI: case SH_OPEN_RHOMB:
        fill = "#ffffff";
        break;
    default:
        break;
    }
    switch (sh) {
    case SH_DISC:
    case SH_RING:
        fprintf(o, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"%.2f\" fill=\"%s\" stroke=\"%s\" stroke-width=\"1.3\"/>\n", x, y,
                r * 0.9, fill, colour);
        break;
    case SH_BOX:
    case SH_OPEN_BOX:
        fprintf(o, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"%s\" stroke=\"%s\" stroke-width=\"1.3\"/>\n",
                x - 0.8 * r, y - 0.8 * r, 1.6 * r, 1.6 * r, fill, colour);
        break;
    case SH_TRI_UP:
    case SH_OPEN_TRI:
        fprintf(o, "<path d=\"M%.2f %.2fL%.2f %.2fL%.2f %.2fZ\" fill=\"%s\" stroke=\"%s\" stroke-width=\"1.3\"/>\n", x,
                y - r, x + 0.9 * r, y + 0.7 * r, x - 0.9 * r, y + 0.7 * r, fill, colour);
        break;
    case SH_TRI_DOWN:
        fprintf(o, "<path d=\"M%.2f %.2fL%.2f %.2fL%.2f %.2fZ\" fill=\"%s\" stroke=\"%s\" stroke-width=\"1.3\"/>\n", x,
                y + r, x + 0.9 * r, y - 0.7 * r, x - 0.9 * r, y - 0.7 * r, fill, colour);
        break;
    case SH_RHOMB:
    case SH_OPEN_RHOMB:
        fprintf(o, "<path d=\"M%.2f %.2fL%.2f %.2fL%.2f %.2fL%.2f %.2fZ\" fill=\"%s\" stroke=\"%s\" stroke-width=\"1.3\"/>\n",
                x, y - r, x + r, y, x, y + r, x - r, y, fill, colour);
        break;
    case SH_CROSS:
        fprintf(o, "<path d=\"M%.2f %.2fL%.2f %.2fM%.2f %.2fL%.2f %.2f\" stroke=\"%s\" stroke-width=\"2.2\"/>\n",
                x - 0.8 * r, y - 0.8 * r, x + 0.8 * r, y + 0.8 * r, x - 0.8 * r, y + 0.8 * r, x + 0.8 * r, y - 0.8 * r,
                colour);
        break;
    case SH_PLUS:
        fprintf(o, "<path d=\"M%.2f %.2fL%.2f %.2fM%.2f %.2fL%.2f %.2f\" stroke=\"%s\" stroke-width=\"2.2\"/>\n", x - r,
                y, x + r, y, x, y - r, x, y + r, colour);
        break;
    case SH_STAR: {
        fprintf(o, "<path d=\"");
        for (int k = 0; k < 10; k++) {
            double a = PI_ / 2 + k * PI_ / 5, rr = k % 2 ? 0.45 * r : r;
            fprintf(o, "%s%.2f %.2f", k ? "L" : "M", x + rr * cos(a), y - rr * sin(a));
        }
        fprintf(o, "Z\" fill=\"%s\" stroke=\"%s\" stroke-width=\"1\"/>\n", fill, colour);
        break;
    }
    }
}

static double nice_step(double span, double target_ticks)
{
    static const double steps[] = {0.01, 0.02, 0.025, 0.05, 0.1, 0.2, 0.25, 0.5, 1, 2, 5, 10};
    for (size_t i = 0; i < sizeof steps / sizeof steps[0]; i++)
        if (span / steps[i] <= target_ticks) return steps[i];
    return 10;
}

static int decimals_of(double step)
{
    int d = 0;
    while (d < 4 && fabs(step * pow(10, d) - round(step * pow(10, d))) > 1e-9) d++;
    return d;
}

static void data_range(const plot *p, frame *f)
{
    double xlo = INFINITY, xhi = -INFINITY, ylo = INFINITY, yhi = -INFINITY;
    for (size_t i = 0; i < p->nlines; i++)
        for (size_t k = 0; k < p->lines[i].n; k++) {
            xlo = fmin(xlo, p->lines[i].log_teff[k]), xhi = fmax(xhi, p->lines[i].log_teff[k]);
            ylo = fmin(ylo, p->lines[i].log_l_lsun[k]), yhi = fmax(yhi, p->lines[i].log_l_lsun[k]);
        }
    for (size_t i = 0; i < p->npoints; i++) {
        xlo = fmin(xlo, p->points[i].log_teff), xhi = fmax(xhi, p->points[i].log_teff);
        ylo = fmin(ylo, p->points[i].log_l_lsun), yhi = fmax(yhi, p->points[i].log_l_lsun);
    }
    if (!(xlo <= xhi)) xlo = 3.5, xhi = 4.5;
    if (!(ylo <= yhi)) ylo = -1, yhi = 3;
    double dx = fmax(0.04 * (xhi - xlo), 0.03), dy = fmax(0.05 * (yhi - ylo), 0.2);
    f->xlo = xlo - dx, f->xhi = xhi + dx, f->ylo = ylo - dy, f->yhi = yhi + dy;
    if (p->have_xrange) f->xlo = p->xlo, f->xhi = p->xhi;
    if (p->have_yrange) f->ylo = p->ylo, f->yhi = p->yhi;
}

static void axes(FILE *o, const frame *f)
{
    const char *grid = "#e4e0d6";
    double xs = nice_step(f->xhi - f->xlo, 8), ys;
    int xd = decimals_of(xs);
    double yspan = f->yhi - f->ylo;
    /* log L: a tick at every decade of L; wider steps for very tall ranges, halves for very short */
    ys = yspan > 14 ? 2 : yspan < 2 ? 0.5 : 1;
    if (f->y_kind != PLOT_Y_LOG_L) ys = nice_step(yspan, 10); /* magnitudes: round steps */
    fprintf(o, "<g id=\"x-axis\" font-size=\"12\" text-anchor=\"middle\" fill=\"#2b2b2b\">\n");
    for (double v = ceil(f->xlo / xs - 1e-9) * xs; v <= f->xhi + 1e-9; v += xs) {
        double x = px(f, v);
        fprintf(o, "<line x1=\"%.3f\" y1=\"%.3f\" x2=\"%.3f\" y2=\"%.3f\" stroke=\"%s\" stroke-width=\"0.8\"/>\n", x, f->y0,
                x, f->y1, grid);
        fprintf(o, "<line class=\"tick\" data-value=\"%.*f\" x1=\"%.3f\" y1=\"%.3f\" x2=\"%.3f\" y2=\"%.3f\" stroke=\"#2b2b2b\" stroke-width=\"1\"/>\n",
                xd, v, x, f->y1, x, f->y1 - 7);
        fprintf(o, "<text x=\"%.3f\" y=\"%.3f\">%.*f</text>\n", x, f->y1 + 18, xd, v);
    }
    fprintf(o, "</g>\n<g id=\"y-axis\" font-size=\"12\" text-anchor=\"end\" fill=\"#2b2b2b\">\n");
    for (double v = ceil(f->ylo / ys - 1e-9) * ys; v <= f->yhi + 1e-9; v += ys) {
        double y = py(f, v);
        int d = ys < 1 ? 1 : 0;
        fprintf(o, "<line x1=\"%.3f\" y1=\"%.3f\" x2=\"%.3f\" y2=\"%.3f\" stroke=\"%s\" stroke-width=\"0.8\"/>\n", f->x0, y,
                f->x1, y, grid);
        fprintf(o, "<line class=\"tick\" data-value=\"%.*f\" x1=\"%.3f\" y1=\"%.3f\" x2=\"%.3f\" y2=\"%.3f\" stroke=\"#2b2b2b\" stroke-width=\"1\"/>\n",
                d, v + 0.0, f->x0, y, f->x0 + 7, y);
        fprintf(o, "<text x=\"%.3f\" y=\"%.3f\">%.*f</text>\n", f->x0 - 8, y + 4, d, v + 0.0);
    }
    /* minor ticks at 2..9 times each decade of L, when decades are far enough apart */
    if (ys == 1 && (f->y1 - f->y0) / yspan > 40 && f->y_kind == PLOT_Y_LOG_L)
        for (double dec = floor(f->ylo); dec <= f->yhi; dec += 1)
            for (int k = 2; k <= 9; k++) {
                double v = dec + log10((double)k);
                if (v < f->ylo || v > f->yhi) continue;
                fprintf(o, "<line x1=\"%.3f\" y1=\"%.3f\" x2=\"%.3f\" y2=\"%.3f\" stroke=\"#2b2b2b\" stroke-width=\"0.7\"/>\n",
                        f->x0, py(f, v), f->x0 + 3.5, py(f, v));
            }
    fprintf(o, "</g>\n");
    fprintf(o, "<text x=\"%.1f\" y=\"%.1f\" font-size=\"14\" text-anchor=\"middle\" fill=\"#1a1a1a\">"
               "log10 (Teff / K)   \xe2\x80\x94 hotter to the left</text>\n",
            (f->x0 + f->x1) / 2, f->y1 + 44);
    fprintf(o, "<text transform=\"translate(%.1f %.1f) rotate(-90)\" font-size=\"14\" text-anchor=\"middle\" fill=\"#1a1a1a\">"
               "%s</text>\n",
            f->x0 - 48, (f->y0 + f->y1) / 2, y_title[f->y_kind]);
}

/* One line drawn as runs of equal phase; each run begins where the previous ended. */
static void draw_line(FILE *o, const frame *f, const plot_line *l, size_t index)
{
    double w = l->is_isochrone ? 2.8 : 1.6;
    size_t k = 0;
    fprintf(o, "<g class=\"%s\" id=\"%s-%zu\" fill=\"none\" stroke-linejoin=\"round\">\n",
            l->is_isochrone ? "isochrone" : "track", l->is_isochrone ? "isochrone" : "track", index);
    while (k < l->n) {
        size_t e = k + 1;
        while (e < l->n && l->phase[e] == l->phase[k] && l->route[e] == l->route[k]) e++;
        const phase_style *s = style_of(l->phase[k]);
        /* continue from the previous point unless the route changed (a new branch of an isochrone) */
        size_t b = (k > 0 && l->route[k - 1] == l->route[k]) ? k - 1 : k;
        if (e - b >= 2) {
            fprintf(o, "<polyline stroke=\"%s\" stroke-width=\"%.1f\"%s%s%s points=\"", s->colour, w,
                    *s->dash ? " stroke-dasharray=\"" : "", s->dash, *s->dash ? "\"" : "");
            for (size_t i = b; i < e; i++)
                fprintf(o, "%s%.2f,%.2f", i > b ? " " : "", px(f, l->log_teff[i]), py(f, l->log_l_lsun[i]));
            fprintf(o, "\"/>\n");
        }
        k = e;
    }
    /* a marker where each phase begins */
    for (k = 0; k < l->n; k++)
        if (k == 0 || l->phase[k] != l->phase[k - 1] || l->route[k] != l->route[k - 1])
            marker(o, style_of(l->phase[k])->mark, px(f, l->log_teff[k]), py(f, l->log_l_lsun[k]),
                   l->is_isochrone ? 5.0 : 4.0, style_of(l->phase[k])->colour);
    fprintf(o, "</g>\n");
}

/* ------------------------------------------------------------------ labels */

typedef struct box { double x0, y0, x1, y1; } box;
typedef struct labels { box *b; size_t n; } labels;

static int overlaps(const labels *L, box q)
{
    for (size_t i = 0; i < L->n; i++)
        if (q.x0 < L->b[i].x1 && q.x1 > L->b[i].x0 && q.y0 < L->b[i].y1 && q.y1 > L->b[i].y0) return 1;
    return 0;
}

/*
 * Put a label near (x, y) where it collides with no earlier label and stays
 * inside the plot area: to the right or left, below or above, then further
 * away in steps of a line.  A label with no free place is left out.
 */
static void place_label(FILE *o, labels *L, const frame *f, double x, double y, const char *text, double size,
                        int bold)
{
    double w = 0.6 * size * (double)strlen(text) + 2, h = size + 2;
    for (int step = 0; step < 6; step++)
        for (int side = 0; side < 4; side++) {
            double dx = side & 1 ? -(w + 7) : 7, dy = (side & 2 ? -(h + 5) : 5) + (side & 2 ? -1 : 1) * step * h;
            box q = {x + dx, y + dy, x + dx + w, y + dy + h};
            if (q.x0 < f->x0 + 2 || q.x1 > f->x1 - 2 || q.y0 < f->y0 + 2 || q.y1 > f->y1 - 2) continue;
            if (overlaps(L, q)) continue;
            L->b = xrealloc(L->b, (L->n + 1) * sizeof *L->b);
            L->b[L->n++] = q;
            fprintf(o, "<text class=\"label\" x=\"%.2f\" y=\"%.2f\" font-size=\"%.1f\"%s fill=\"#1a1a1a\">", q.x0 + 1,
                    q.y1 - 3, size, bold ? " font-weight=\"bold\"" : "");
            xml_text(o, text);
            fprintf(o, "</text>\n");
            return;
        }
}

/* Isochrones first (at their brightest point), then stars, then tracks (at the zero-age main sequence). */
static void draw_labels(FILE *o, const plot *p, const frame *f)
{
    labels L = {NULL, 0};
    /* the markers of the stars are obstacles too */
    for (size_t i = 0; i < p->npoints; i++) {
        double x = px(f, p->points[i].log_teff), y = py(f, p->points[i].log_l_lsun);
        L.b = xrealloc(L.b, (L.n + 1) * sizeof *L.b);
        L.b[L.n++] = (box){x - 6, y - 6, x + 6, y + 6};
    }
    fprintf(o, "<g id=\"labels\">\n");
    for (size_t i = 0; i < p->nlines; i++) {
        const plot_line *l = &p->lines[i];
        size_t at = 0;
        if (!l->is_isochrone || !l->n || !l->label[0]) continue;
        for (size_t k = 1; k < l->n; k++)
            if ((l->log_l_lsun[k] > l->log_l_lsun[at]) == (f->y_kind == PLOT_Y_LOG_L)) at = k; /* the brightest */
        place_label(o, &L, f, px(f, l->log_teff[at]), py(f, l->log_l_lsun[at]), l->label, 12, 1);
    }
    for (size_t i = 0; i < p->npoints; i++)
        if (p->points[i].label[0])
            place_label(o, &L, f, px(f, p->points[i].log_teff), py(f, p->points[i].log_l_lsun), p->points[i].label, 11, 0);
    for (size_t i = 0; i < p->nlines; i++) {
        const plot_line *l = &p->lines[i];
        if (l->is_isochrone || !l->n || !l->label[0]) continue;
        place_label(o, &L, f, px(f, l->log_teff[0]), py(f, l->log_l_lsun[0]), l->label, 10.5, 0);
    }
    fprintf(o, "</g>\n");
    free(L.b);
}

static void legend(FILE *o, const plot *p, const frame *f)
{
    int used[HRT_PHASE_SLOTS] = {0}, any_track = 0, any_iso = 0;
    double x = f->x1 + 22, y = f->y0 + 8;
    for (size_t i = 0; i < p->nlines; i++) {
        for (size_t k = 0; k < p->lines[i].n; k++) {
            int ph = p->lines[i].phase[k];
            used[ph > 0 && ph < HRT_PHASE_SLOTS ? ph : 0] = 1;
        }
        if (p->lines[i].is_isochrone) any_iso = 1; else any_track = 1;
    }
    for (size_t i = 0; i < p->npoints; i++) {
        int ph = p->points[i].phase;
        if (ph > 0 && ph < HRT_PHASE_SLOTS) used[ph] = 1;
    }
    fprintf(o, "<g id=\"legend\" font-size=\"12\" fill=\"#1a1a1a\">\n");
    fprintf(o, "<text x=\"%.1f\" y=\"%.1f\" font-weight=\"bold\">Phase</text>\n", x, y);
    y += 20;
    /* in the order of HRT_PHASE_LIST, unknown (code 0) left out */
    for (size_t i = 1; i < HRT_PHASE_N; i++) {
        int ph = hrt_phase_code(i);
        if (!used[ph]) continue;
        const phase_style *s = style_of(ph);
        fprintf(o, "<line class=\"legend-phase\" data-phase=\"%s\" x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"%s\" stroke-width=\"2.4\"%s%s%s/>\n",
                hrt_phase_key(ph), x, y - 4, x + 34, y - 4, s->colour, *s->dash ? " stroke-dasharray=\"" : "", s->dash,
                *s->dash ? "\"" : "");
        marker(o, s->mark, x + 17, y - 4, 4.5, s->colour);
        fprintf(o, "<text x=\"%.1f\" y=\"%.1f\">", x + 42, y);
        xml_text(o, hrt_phase_name(ph));
        fprintf(o, "</text>\n");
        y += 19;
    }
    y += 10;
    if (any_track) {
        fprintf(o, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"#555\" stroke-width=\"1.6\"/>\n", x, y - 4,
                x + 34, y - 4);
        fprintf(o, "<text x=\"%.1f\" y=\"%.1f\">track (initial mass)</text>\n", x + 42, y);
        y += 19;
    }
    if (any_iso) {
        fprintf(o, "<line x1=\"%.1f\" y1=\"%.1f\" x2=\"%.1f\" y2=\"%.1f\" stroke=\"#555\" stroke-width=\"2.8\"/>\n", x, y - 4,
                x + 34, y - 4);
        fprintf(o, "<text x=\"%.1f\" y=\"%.1f\">isochrone (age)</text>\n", x + 42, y);
        y += 19;
    }
    if (p->npoints) {
        fprintf(o, "<circle cx=\"%.1f\" cy=\"%.1f\" r=\"5\" fill=\"#111111\" stroke=\"#ffffff\" stroke-width=\"1.5\"/>\n",
                x + 17, y - 4);
        fprintf(o, "<text x=\"%.1f\" y=\"%.1f\">star (ring: its phase)</text>\n", x + 42, y);
        y += 19;
    }
    fprintf(o, "<text x=\"%.1f\" y=\"%.1f\" font-size=\"10\" fill=\"#555\">marks show where a phase begins</text>\n", x,
            y + 6);
    fprintf(o, "</g>\n");
}

int plot_write_svg(const plot *p, FILE *o)
{
    frame f;
    f.x0 = 84, f.x1 = p->width - 400, f.y0 = 70, f.y1 = p->height - 72;
    f.y_kind = p->y_kind;
    data_range(p, &f);
    fprintf(o, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    fprintf(o, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%d\" height=\"%d\" viewBox=\"0 0 %d %d\" "
               "font-family=\"DejaVu Sans, Liberation Sans, sans-serif\">\n",
            p->width, p->height, p->width, p->height);
    fprintf(o, "<title>");
    xml_text(o, p->title ? p->title : "HR diagram");
    fprintf(o, "</title>\n");
    fprintf(o, "<rect id=\"background\" x=\"0\" y=\"0\" width=\"%d\" height=\"%d\" fill=\"#fbfaf6\"/>\n", p->width, p->height);
    fprintf(o, "<rect id=\"plot-area\" data-log-teff-left=\"%.17g\" data-log-teff-right=\"%.17g\" data-%s-bottom=\"%.17g\" "
               "data-%s-top=\"%.17g\" x=\"%.3f\" y=\"%.3f\" width=\"%.3f\" height=\"%.3f\" fill=\"#ffffff\"/>\n",
            f.xhi, f.xlo, y_attr[f.y_kind], f.y_kind ? f.yhi : f.ylo, y_attr[f.y_kind], f.y_kind ? f.ylo : f.yhi, f.x0, f.y0,
            f.x1 - f.x0, f.y1 - f.y0);
    fprintf(o, "<text x=\"%.1f\" y=\"30\" font-size=\"18\" font-weight=\"bold\" fill=\"#1a1a1a\">", f.x0);
    xml_text(o, p->title ? p->title : "HR diagram");
    fprintf(o, "</text>\n");
    if (p->subtitle) {
        fprintf(o, "<text x=\"%.1f\" y=\"50\" font-size=\"12\" fill=\"#444\">", f.x0);
        xml_text(o, p->subtitle);
        fprintf(o, "</text>\n");
    }
    axes(o, &f);
    fprintf(o, "<clipPath id=\"area\"><rect x=\"%.3f\" y=\"%.3f\" width=\"%.3f\" height=\"%.3f\"/></clipPath>\n", f.x0,
            f.y0, f.x1 - f.x0, f.y1 - f.y0);
    fprintf(o, "<g clip-path=\"url(#area)\">\n");
    for (size_t i = 0; i < p->nlines; i++)
        if (!p->lines[i].is_isochrone) draw_line(o, &f, &p->lines[i], i);
    for (size_t i = 0; i < p->nlines; i++)
        if (p->lines[i].is_isochrone) draw_line(o, &f, &p->lines[i], i);
    fprintf(o, "<g id=\"points\">\n");
    for (size_t i = 0; i < p->npoints; i++) {
        const plot_point *q = &p->points[i];
        double x = px(&f, q->log_teff), y = py(&f, q->log_l_lsun);
        const char *ring = q->phase > 0 ? style_of(q->phase)->colour : "#ffffff";
        fprintf(o, "<circle class=\"point\" data-log-teff=\"%.17g\" data-%s=\"%.17g\" cx=\"%.3f\" cy=\"%.3f\" r=\"5.5\" "
                   "fill=\"#111111\" stroke=\"%s\" stroke-width=\"%s\"/>\n",
                q->log_teff, y_attr[f.y_kind], q->log_l_lsun, x, y, ring, q->phase > 0 ? "2.6" : "1.5");
    }
    fprintf(o, "</g>\n</g>\n");
    fprintf(o, "<rect x=\"%.3f\" y=\"%.3f\" width=\"%.3f\" height=\"%.3f\" fill=\"none\" stroke=\"#2b2b2b\" stroke-width=\"1.2\"/>\n",
            f.x0, f.y0, f.x1 - f.x0, f.y1 - f.y0);
    draw_labels(o, p, &f);
    legend(o, p, &f);
    fprintf(o, "</svg>\n");
    return ferror(o) ? -1 : 0;
}

int plot_save(const cli *c, const plot *p, const char *path)
{
    outfile o;
    int rc = outfile_open(c, &o, path);
    if (rc) return rc;
    plot_write_svg(p, o.f); /* a failed write shows in outfile_close */
    return outfile_close(c, &o);
}
