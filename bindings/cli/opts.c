/*
 * Options of the hrtrail command, parsed with GNU getopt_long: a long option by its name or any
 * unique prefix of it, its value as --opt=value or --opt value; short options bundled (-kj4,
 * -oFILE); '--' ends the options.  Arguments that are no option reach the command in order
 * among the options (import's --z applies to the files after it).  The messages are the
 * command's own (getopt's are off).
 */
#include <getopt.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

enum { COMMON_GRID = 1000, COMMON_INTERP, COMMON_CSV, COMMON_JSON, COMMON_HELP, COMMON_Z, COMMON_FEH, COMMON_EXTRA };
static const optdef common_opts[] = {
    {"grid", 0, 1, COMMON_GRID}, {"interp", 0, 1, COMMON_INTERP}, {"csv", 0, 0, COMMON_CSV},
    {"json", 0, 0, COMMON_JSON}, {"help", 'h', 0, COMMON_HELP},   {"z", 0, 1, COMMON_Z},
    {"feh", 0, 1, COMMON_FEH},   {"extra", 0, 1, COMMON_EXTRA}, {NULL, 0, 0, 0},
};

/* The options one command takes: its own, then the common ones it accepts, as getopt_long wants them. */
enum { MAX_OPTS = 96, LONG_ONLY = 256 };
typedef struct optset {
    size_t n;
    optdef def[MAX_OPTS];
    int common[MAX_OPTS];
    struct option lo[MAX_OPTS + 1];
    char shorts[3 * MAX_OPTS + 3];
} optset;

static int taken(const optset *s, const optdef *d)
{
    for (size_t i = 0; i < s->n; i++)
        if (!strcmp(s->def[i].name, d->name) || (d->short_name && s->def[i].short_name == d->short_name)) return 1;
    return 0;
}

static void optset_add(optset *s, const optdef *defs, int common, unsigned accept)
{
    for (const optdef *d = defs; d && d->name && s->n < MAX_OPTS; d++) {
        if (common && !(accept & ACCEPT_Z) && (d->id == COMMON_Z || d->id == COMMON_FEH)) continue;
        if (common && !(accept & ACCEPT_FORMAT) && (d->id == COMMON_CSV || d->id == COMMON_JSON)) continue;
        if (common && !(accept & ACCEPT_EXTRA) && d->id == COMMON_EXTRA) continue;
        if (taken(s, d)) continue; /* the command's own option of that name */
        size_t i = s->n++, k = strlen(s->shorts);
        s->def[i] = *d;
        s->common[i] = common;
        s->lo[i] = (struct option){d->name, d->has_arg ? required_argument : no_argument, NULL,
                                   d->short_name ? d->short_name : LONG_ONLY + (int)i};
        if (d->short_name) {
            s->shorts[k++] = d->short_name;
            if (d->has_arg) s->shorts[k++] = ':';
            s->shorts[k] = '\0';
        }
    }
}

static void optset_build(optset *s, const cmdopts *o)
{
    memset(s, 0, sizeof *s);
    /* '-': arguments in order among the options; '+': stop at the first (the command); ':': quiet */
    strcpy(s->shorts, o->before_command ? "+:" : "-:");
    optset_add(s, o->defs, 0, 0);
    optset_add(s, o->more, 0, 0);
    optset_add(s, common_opts, 1, o->accept);
}

/* Index of the option getopt_long returned as k, or -1. */
static int index_of(const optset *s, int k)
{
    if (k >= LONG_ONLY && (size_t)(k - LONG_ONLY) < s->n) return k - LONG_ONLY;
    for (size_t i = 0; i < s->n; i++)
        if (k > 0 && s->def[i].short_name == k) return (int)i;
    return -1;
}

/* How the user wrote option i: --name, or -c when the argument holding it is a short option. */
static void shown_name(const optset *s, int i, const char *arg, char *buf, size_t n)
{
    if (s->def[i].short_name && strncmp(arg, "--", 2) != 0)
        snprintf(buf, n, "-%c", s->def[i].short_name);
    else
        snprintf(buf, n, "--%s", s->def[i].name);
}

static int refuse_long(const cli *c, const optset *s, const char *arg, const char *see)
{
    const char *name = arg + 2, *eq = strchr(name, '=');
    int len = (int)(eq ? (size_t)(eq - name) : strlen(name));
    char list[512] = "";
    int nmatch = 0;
    if (len > 50) len = 50;
    for (size_t i = 0; i < s->n; i++) {
        size_t l = strlen(list);
        if (strncmp(s->def[i].name, name, (size_t)len) != 0) continue;
        nmatch++;
        snprintf(list + l, sizeof list - l, "%s--%s", l ? ", " : "", s->def[i].name);
    }
    if (nmatch > 1)
        return cli_fail(c, CLI_EXIT_USAGE, "option '--%.*s' is ambiguous: it may be %s (%s)", len, name, list, see);
    return cli_fail(c, CLI_EXIT_USAGE, "unknown option '--%.*s' (%s)", len, name, see);
}

/* getopt_long's '?' (unknown, ambiguous, a value given to an option that takes none) or ':' (no value). */
static int refuse(const cli *c, const optset *s, char **argv, int k)
{
    const char *arg = argv[optind - 1];
    int i = optopt ? index_of(s, optopt) : -1;
    char see[64], name[64];
    snprintf(see, sizeof see, "see hrtrail %s%s--help", c->cmd ? c->cmd : "", c->cmd ? " " : "");
    if (k == ':' && i >= 0) {
        shown_name(s, i, arg, name, sizeof name);
        return cli_fail(c, CLI_EXIT_USAGE, "option %s needs a value (%s)", name, see);
    }
    if (i >= 0) return cli_fail(c, CLI_EXIT_USAGE, "option --%s takes no value", s->def[i].name);
    if (optopt) return cli_fail(c, CLI_EXIT_USAGE, "unknown option '-%c' (%s)", optopt, see);
    return refuse_long(c, s, arg, see);
}

static int handle_common(cli *c, int id, const char *name, const char *val)
{
    double v;
    switch (id) {
    case COMMON_GRID:
        c->grid_path = val;
        return 0;
    case COMMON_INTERP: {
        int k = hrt_interp_from_name(val);
        if (k < 0)
            return cli_fail(c, CLI_EXIT_USAGE, "%s '%s': unknown interpolation; allowed: steffen, linear, cspline, akima",
                            name, val);
        c->interp = k;
        return 0;
    }
    case COMMON_CSV:
    case COMMON_JSON:
        c->fmt = id == COMMON_CSV ? FMT_CSV : FMT_JSON;
        return 0;
    case COMMON_HELP:
        c->want_help = 1;
        return 0;
    case COMMON_EXTRA:
        c->extra_text = val;
        return 0;
    case COMMON_Z:
        if (parse_number(val, &v) != 0 || !(v > 0 && v < 1))
            return cli_fail(c, CLI_EXIT_USAGE,
                            "--z '%s': not a metal mass fraction (0 < Z < 1, e.g. 0.014); for [Fe/H] use --feh", val);
        if (c->have_feh) return cli_fail(c, CLI_EXIT_USAGE, "give either --z or --feh, not both");
        c->have_z = 1;
        c->z_arg = v;
        c->z_text = val;
        return 0;
    case COMMON_FEH:
        if (parse_number(val, &v) != 0 || fabs(v) > 10)
            return cli_fail(c, CLI_EXIT_USAGE, "--feh '%s': not an [Fe/H] value (dex, e.g. -0.3)", val);
        if (c->have_z) return cli_fail(c, CLI_EXIT_USAGE, "give either --z or --feh, not both");
        c->have_feh = 1;
        c->feh_arg = v;
        c->z_text = val;
        return 0;
    default:
        return CLI_EXIT_INTERNAL;
    }
}

/* Option i with its value.  A value that is a separate argument starting with "--" is refused: it is
 * more likely the next option than a value (give it as --opt=--value if it is one). */
static int take_option(cli *c, const cmdopts *o, void *ctx, const optset *s, int i, char **argv)
{
    const char *val = s->def[i].has_arg ? optarg : NULL;
    char name[64];
    if (val && val == argv[optind - 1] && strncmp(val, "--", 2) == 0) {
        shown_name(s, i, argv[optind - 2], name, sizeof name);
        return cli_fail(c, CLI_EXIT_USAGE, "option %s needs a value (see hrtrail %s%s--help)", name,
                        c->cmd ? c->cmd : "", c->cmd ? " " : "");
    }
    if (s->common[i]) {
        snprintf(name, sizeof name, "--%s", s->def[i].name);
        return handle_common(c, s->def[i].id, name, val);
    }
    return o->take(c, ctx, s->def[i].id, val);
}

static int take_arg(cli *c, const cmdopts *o, void *ctx, const char *arg)
{
    if (!o->no_args) return o->take(c, ctx, OPT_ARG, arg);
    if (*o->no_args) return cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s' (%s)", arg, o->no_args);
    return cli_fail(c, CLI_EXIT_USAGE, "unexpected argument '%s'", arg);
}

int cli_parse(cli *c, argparse *p, const cmdopts *o, void *ctx)
{
    optset s;
    int rc = 0, k;
    optset_build(&s, o);
    opterr = 0; /* the messages are ours */
    optind = 0; /* GNU: start afresh on this argument vector (argv[0] is not read) */
    while (rc == 0 && (k = getopt_long(p->argc, p->argv, s.shorts, s.lo, NULL)) != -1) {
        if (k == 1)
            rc = take_arg(c, o, ctx, optarg);
        else if (k == '?' || k == ':')
            rc = refuse(c, &s, p->argv, k);
        else
            rc = take_option(c, o, ctx, &s, index_of(&s, k), p->argv);
    }
    p->next = optind;
    if (rc || o->before_command) return rc;
    for (int i = optind; rc == 0 && i < p->argc; i++) rc = take_arg(c, o, ctx, p->argv[i]); /* after '--' */
    return rc == 0 && c->want_help ? CLI_STOP : rc;
}
