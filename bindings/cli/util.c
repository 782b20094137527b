/* Memory, messages, value parsing and grid access of the hrtrail command. */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"

static void out_of_memory(void)
{
    fputs("hrtrail: out of memory\n", stderr);
    exit(CLI_EXIT_INTERNAL);
}

void *xmalloc(size_t n)
{
    void *p = malloc(n ? n : 1);
    if (!p) out_of_memory();
    return p;
}

void *xcalloc(size_t n, size_t size)
{
    void *p = calloc(n ? n : 1, size ? size : 1);
    if (!p) out_of_memory();
    return p;
}

void *xrealloc(void *p, size_t n)
{
    void *q = realloc(p, n ? n : 1);
    if (!q) out_of_memory();
    return q;
}

char *xstrdup(const char *s)
{
    size_t n = strlen(s) + 1;
    char *p = xmalloc(n);
    memcpy(p, s, n);
    return p;
}

/* The message is made safe for a terminal (text.c): it may quote names and values from files. */
/* Where messages go: stderr, or a stream an MPI rank other than 0 keeps them in. */
static FILE *msg_sink;
void cli_set_message_sink(FILE *f) { msg_sink = f; }

int cli_fail(const cli *c, int code, const char *fmt, ...)
{
    FILE *to = msg_sink ? msg_sink : stderr;
    va_list ap;
    char small[512], *msg = small, *safe;
    int n;
    fflush(stdout);
    va_start(ap, fmt);
    n = vsnprintf(small, sizeof small, fmt, ap);
    va_end(ap);
    if (n >= (int)sizeof small) {
        msg = xmalloc((size_t)n + 1);
        va_start(ap, fmt);
        vsnprintf(msg, (size_t)n + 1, fmt, ap);
        va_end(ap);
    }
    safe = text_safe(n < 0 ? fmt : msg, NULL);
    if (c && c->cmd)
        fprintf(to, "hrtrail %s: %s\n", c->cmd, safe);
    else
        fprintf(to, "hrtrail: %s\n", safe);
    free(safe);
    if (msg != small) free(msg);
    return code;
}

int cli_exit_of_status(int s)
{
    switch (s) {
    case HRT_OK:
        return CLI_EXIT_OK;
    case HRT_E_DOMAIN:
    case HRT_E_MASS_RANGE:
    case HRT_E_Z_RANGE:
    case HRT_E_AGE_RANGE:
    case HRT_E_NO_TRACK:
    case HRT_E_NO_MATCH:
    case HRT_E_NO_EQUIVALENT:
        return CLI_EXIT_RANGE;
    case HRT_E_IO:
    case HRT_E_FORMAT:
    case HRT_E_VERSION:
    case HRT_E_NOT_FOUND:
        return CLI_EXIT_FILE;
    default:
        return CLI_EXIT_INTERNAL;
    }
}

/* ------------------------------------------------------------------ values */

int parse_number(const char *s, double *out)
{
    char *end;
    double v;
    while (*s == ' ') s++;
    if (!*s) return -1;
    errno = 0;
    v = strtod(s, &end);
    if (end == s) return -1;
    while (*end == ' ') end++;
    if (*end || !isfinite(v) || errno == ERANGE) return -1;
    *out = v;
    return 0;
}

int parse_age_yr(const char *s, double *out)
{
    static const struct { const char *unit; double yr; } units[] = {
        {"", 1.0}, {"yr", 1.0}, {"kyr", 1e3}, {"Myr", 1e6}, {"Gyr", 1e9},
    };
    char *end;
    double v;
    size_t k;
    while (*s == ' ') s++;
    if (!*s) return -1;
    errno = 0;
    v = strtod(s, &end);
    if (end == s || !isfinite(v) || errno == ERANGE) return -1;
    /* strtod accepts "inf"/"nan" and hex: refuse what is not a plain decimal. */
    for (const char *q = s; q < end; q++)
        if (!strchr("0123456789+-.eE", *q)) return -1;
    while (*end == ' ') end++;
    for (k = 0; k < sizeof units / sizeof units[0]; k++) {
        const char *u = units[k].unit;
        size_t lu = strlen(u);
        if (strncmp(end, u, lu) == 0) {
            const char *rest = end + lu;
            while (*rest == ' ') rest++;
            if (*rest == '\0' && (lu > 0 || *end == '\0')) {
                v *= units[k].yr;
                if (!isfinite(v)) return -1;
                if (v < 0) return -2;
                *out = v;
                return 0;
            }
        }
    }
    return -1;
}

int parse_count(const char *s, long lo, long hi, long *out)
{
    char *end;
    long v;
    errno = 0;
    v = strtol(s, &end, 10);
    if (end == s || *end || errno == ERANGE || v < lo || v > hi) return -1;
    *out = v;
    return 0;
}

void format_age(char *buf, size_t n, double a)
{
    if (isnan(a))
        snprintf(buf, n, "unknown");
    else if (isinf(a))
        snprintf(buf, n, "forever");
    else if (a >= 1e9)
        snprintf(buf, n, "%.6g Gyr", a / 1e9);
    else if (a >= 1e6)
        snprintf(buf, n, "%.6g Myr", a / 1e6);
    else if (a >= 1e3)
        snprintf(buf, n, "%.6g kyr", a / 1e3);
    else
        snprintf(buf, n, "%.6g yr", a);
}

void dlist_push(dlist *l, double v, const char *text)
{
    if (l->n == l->cap) {
        l->cap = l->cap ? 2 * l->cap : 8;
        l->v = xrealloc(l->v, l->cap * sizeof *l->v);
        l->text = xrealloc(l->text, l->cap * sizeof *l->text);
    }
    l->v[l->n] = v;
    l->text[l->n] = xstrdup(text ? text : "");
    l->n++;
}

void dlist_free(dlist *l)
{
    for (size_t i = 0; i < l->n; i++) free(l->text[i]);
    free(l->v);
    free(l->text);
    memset(l, 0, sizeof *l);
}

/* Split s at commas; call each() on every item. */
static int split_list(const cli *c, const char *opt, const char *s, dlist *l,
                      int (*each)(const cli *, const char *, const char *, dlist *))
{
    char *copy = xstrdup(s), *item = copy, *comma;
    int rc = 0;
    if (!*copy) rc = cli_fail(c, CLI_EXIT_USAGE, "%s: empty value", opt);
    while (rc == 0 && item) {
        comma = strchr(item, ',');
        if (comma) *comma = '\0';
        rc = each(c, opt, item, l);
        item = comma ? comma + 1 : NULL;
    }
    free(copy);
    return rc;
}

static int one_mass(const cli *c, const char *opt, const char *s, dlist *l)
{
    double m;
    if (parse_number(s, &m) != 0)
        return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': not a number; give initial masses in Msun, e.g. 2.3 or 0.8,1,1.5",
                        opt, s);
    if (!(m > 0))
        return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': an initial mass must be positive (Msun)", opt, s);
    dlist_push(l, m, s);
    return 0;
}

static int one_age(const cli *c, const char *opt, const char *s, dlist *l)
{
    double a;
    int r = parse_age_yr(s, &a);
    if (r == -2)
        return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': an age must not be negative", opt, s);
    if (r != 0)
        return cli_fail(c, CLI_EXIT_USAGE,
                        "%s '%s': not an age; write years with an optional unit yr, kyr, Myr or Gyr, e.g. 800Myr, 4.6Gyr or 1e9",
                        opt, s);
    dlist_push(l, a, s);
    return 0;
}

int add_mass_list(const cli *c, const char *opt, const char *s, dlist *l)
{
    return split_list(c, opt, s, l, one_mass);
}

int add_age_list(const cli *c, const char *opt, const char *s, dlist *l)
{
    return split_list(c, opt, s, l, one_age);
}

/* ------------------------------------------------------------------ the grid */

int cli_open_grid(cli *c)
{
    hrt_error err = {0, ""};
    const char *path = c->grid_path;
    struct stat st;
    int rc;
    if (c->grid) return 0;
    if (path) {
        if (stat(path, &st) != 0)
            return cli_fail(c, CLI_EXIT_FILE, "--grid '%s': %s", path, strerror(errno));
        if (S_ISDIR(st.st_mode))
            return cli_fail(c, CLI_EXIT_FILE, "--grid '%s': is a directory, not a grid file", path);
    }
    rc = hrt_grid_open_with(path, c->interp, &c->grid, &err);
    if (rc != HRT_OK) {
        c->grid = NULL;
        if (rc == HRT_E_NOT_FOUND)
            return cli_fail(c, CLI_EXIT_FILE,
                            "no default grid found (%s); name one with --grid FILE or the HRTRAIL_GRID environment variable",
                            err.message);
        if (!path) path = hrt_default_grid_path();
        return cli_fail(c, cli_exit_of_status(rc), "grid '%s': %s", path ? path : "(default)",
                        err.message[0] ? err.message : hrt_strerror(rc));
    }
    c->grid_used = path ? path : hrt_default_grid_path();
    if (!c->grid_used) c->grid_used = "(default grid)";
    if (c->ierr && !hrt_grid_has_interp_error(c->grid))
        return cli_fail(c, CLI_EXIT_USAGE,
                        "--interp-error: grid '%s' stores no interpolation error field for type %s; add one with "
                        "'hrtrail grid accuracy --store --grid FILE'",
                        c->grid_used, hrt_interp_name(c->interp));
    return 0;
}

void cli_close_grid(cli *c)
{
    hrt_grid_close(c->grid);
    c->grid = NULL;
}

double cli_feh(const cli *c, double z)
{
    return log10(z / hrt_grid_z_ref(c->grid));
}

int cli_check_z(const cli *c, const char *what, double z)
{
    double lo, hi;
    if (hrt_grid_z_range(c->grid, &lo, &hi) != HRT_OK)
        return cli_fail(c, CLI_EXIT_INTERNAL, "cannot read the grid's metallicity range");
    /* a relative slack of a few ulps, so that a Z printed with %.17g is accepted back */
    if (!(z >= lo * (1 - 1e-15) && z <= hi * (1 + 1e-15)))
        return cli_fail(c, CLI_EXIT_RANGE,
                        "%s: metallicity Z = %.6g outside the grid (allowed Z %.6g to %.6g, [Fe/H] %+.3f to %+.3f)",
                        what, z, lo, hi, cli_feh(c, lo), cli_feh(c, hi));
    return 0;
}

int cli_resolve_z(cli *c, double *z)
{
    char what[96];
    if (c->have_feh) {
        *z = hrt_grid_z_ref(c->grid) * pow(10.0, c->feh_arg);
        snprintf(what, sizeof what, "--feh %s", c->z_text);
    } else if (c->have_z) {
        *z = c->z_arg;
        snprintf(what, sizeof what, "--z %s", c->z_text);
    } else {
        *z = hrt_grid_z_ref(c->grid);
        snprintf(what, sizeof what, "the grid's reference metallicity");
    }
    return cli_check_z(c, what, *z);
}

int cli_check_mass(const cli *c, const char *what, double m, double z)
{
    double lo, hi;
    int rc = hrt_grid_mass_range(c->grid, z, &lo, &hi);
    if (rc == HRT_E_Z_RANGE) return cli_check_z(c, what, z);
    if (rc != HRT_OK) return cli_fail(c, cli_exit_of_status(rc), "%s: %s", what, hrt_strerror(rc));
    if (!(m >= lo && m <= hi))
        return cli_fail(c, CLI_EXIT_RANGE, "%s: initial mass %.6g Msun outside the grid at Z = %.6g (allowed %.6g to %.6g Msun)",
                        what, m, z, lo, hi);
    return 0;
}

const char *cli_route_name(const cli *c, int route)
{
    const char *s = route >= 0 ? hrt_grid_route_name(c->grid, (size_t)route) : NULL;
    return s ? s : "none";
}

int cli_star_failure(const cli *c, const char *who, int code, double m, double z, double age,
                     const char *libmsg)
{
    char a[64], e[64];
    switch (code) {
    case HRT_E_MASS_RANGE:
        return cli_check_mass(c, who, m, z) ? CLI_EXIT_RANGE
               : cli_fail(c, CLI_EXIT_RANGE, "%s: %s", who, libmsg && *libmsg ? libmsg : hrt_strerror(code));
    case HRT_E_Z_RANGE:
        return cli_check_z(c, who, z) ? CLI_EXIT_RANGE
               : cli_fail(c, CLI_EXIT_RANGE, "%s: %s", who, libmsg && *libmsg ? libmsg : hrt_strerror(code));
    case HRT_E_AGE_RANGE: {
        hrt_star *s = NULL;
        double end = NAN;
        if (hrt_star_new(c->grid, m, z, &s, NULL) == HRT_OK) end = hrt_star_end_age(s);
        hrt_star_free(s);
        format_age(a, sizeof a, age);
        format_age(e, sizeof e, end);
        return cli_fail(c, CLI_EXIT_RANGE,
                        "%s: age %s is past the end of its track (%s) and the grid gives no remnant for it; allowed ages 0 to %s",
                        who, a, e, e);
    }
    default:
        return cli_fail(c, cli_exit_of_status(code), "%s: %s", who,
                        libmsg && *libmsg ? libmsg : hrt_strerror(code));
    }
}

int cli_resolve_extras(cli *c)
{
    c->n_extra = 0;
    if (!c->extra_text) return 0;
    size_t avail = hrt_grid_extra_count(c->grid);
    char list[1024] = "";
    for (size_t k = 0; k < avail; k++) {
        size_t l = strlen(list);
        snprintf(list + l, sizeof list - l, "%s%s", k ? ", " : "", hrt_grid_extra_name(c->grid, k));
    }
    char *copy = xstrdup(c->extra_text), *save = NULL;
    int rc = 0;
    for (char *tok = strtok_r(copy, ",", &save); tok && rc == 0; tok = strtok_r(NULL, ",", &save)) {
        long k = hrt_grid_extra_index(c->grid, tok);
        if (k < 0)
            rc = cli_fail(c, CLI_EXIT_USAGE, "--extra '%s': the grid has no extra quantity of that name (%s)", tok,
                          avail ? list : "it has none");
        else if (c->n_extra >= 32)
            rc = cli_fail(c, CLI_EXIT_USAGE, "--extra: at most 32 quantities");
        else {
            const char *u = hrt_grid_extra_unit(c->grid, (size_t)k);
            snprintf(c->extra_head[c->n_extra], sizeof c->extra_head[0], *u ? "%s [%s]" : "%s", tok, u);
            c->extra_idx[c->n_extra++] = (size_t)k;
        }
    }
    if (rc == 0 && c->n_extra == 0) rc = cli_fail(c, CLI_EXIT_USAGE, "--extra: give NAME[,NAME...] (%s)", avail ? list : "the grid has none");
    free(copy);
    return rc;
}
