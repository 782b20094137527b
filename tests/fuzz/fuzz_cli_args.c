/* libFuzzer target: the hrtrail command's value parsers and option parser
 * (bindings/cli/util.c, opts.c, text.c).  The input is split at NUL bytes
 * into arguments; each is given to parse_number, parse_age_yr and
 * parse_count, and the whole list to cli_parse with a subcommand's option
 * table, masses and ages going to the list parsers as the commands do.  Properties: accepted
 * numbers are finite, ages finite and not negative, counts in range, an
 * age with a unit is the plain number times the unit, and nothing reads or
 * writes out of bounds (ASan). */
#include <stdint.h>

#include "../../bindings/cli/cli.h"
#include "fuzz_common.h"

enum { O_MASS = 1, O_AGE, O_N, O_OUT, O_FLAG };
static const optdef defs[] = {{"mass", 'm', 1, O_MASS}, {"age", 'a', 1, O_AGE}, {"n", 'n', 1, O_N},
                              {"output", 'o', 1, O_OUT}, {"flag", 'f', 0, O_FLAG}, {NULL, 0, 0, 0}};

static void check_value(const char *s)
{
    double v;
    if (parse_number(s, &v) == 0)
        FUZZ_REQUIRE(isfinite(v));
    double a;
    int r = parse_age_yr(s, &a);
    FUZZ_REQUIRE(r == 0 || r == -1 || r == -2);
    if (r == 0) {
        FUZZ_REQUIRE(isfinite(a) && a >= 0.0);
        /* "X Gyr" is X times 1e9 yr when X itself parses as an age. */
        size_t n = strlen(s);
        if (n < 200) {
            char buf[256];
            snprintf(buf, sizeof buf, "%sGyr", s);
            double g;
            if (strspn(s, "0123456789.eE+-") == n && parse_age_yr(buf, &g) == 0)
                FUZZ_REQUIRE(g == a * 1e9);
        }
    }
    long c;
    if (parse_count(s, -5, 1000, &c) == 0)
        FUZZ_REQUIRE(c >= -5 && c <= 1000);
    char out[16];
    format_age(out, sizeof out, r == 0 ? a : v);
    FUZZ_REQUIRE(strlen(out) < sizeof out);
}

typedef struct fuzz_ctx {
    dlist masses, ages;
} fuzz_ctx;

static int take(cli *c, void *ctx, int id, const char *val)
{
    fuzz_ctx *f = ctx;
    if (id == O_MASS) return add_mass_list(c, "--mass", val, &f->masses);
    if (id == O_AGE) return add_age_list(c, "--age", val, &f->ages);
    FUZZ_REQUIRE(id == O_FLAG ? val == NULL : val != NULL);
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size == 0 || size > 4096)
        return 0;
    char *buf = malloc(size + 1);
    memcpy(buf, data, size);
    buf[size] = '\0';
    char *argv[64];
    int argc = 0;
    argv[argc++] = "hrtrail";
    for (char *p = buf; p <= buf + size && argc < 63; p += strlen(p) + 1)
        argv[argc++] = p;
    argv[argc] = NULL;
    for (int k = 1; k < argc; k++)
        check_value(argv[k]);
    cli c;
    memset(&c, 0, sizeof c);
    c.cmd = "fuzz";
    argparse p = {argc, argv, 1};
    cmdopts o = {defs, NULL, (data[0] & 1 ? ACCEPT_Z : 0u) | (data[0] & 2 ? ACCEPT_FORMAT : 0u), take, NULL,
                 data[0] & 4};
    fuzz_ctx f = {{0}, {0}};
    int rc = cli_parse(&c, &p, &o, &f);
    FUZZ_REQUIRE(rc == 0 || rc == CLI_STOP || rc == CLI_EXIT_USAGE);
    FUZZ_REQUIRE(p.next >= 1 && p.next <= argc);
    for (size_t k = 0; k < f.masses.n; k++)
        FUZZ_REQUIRE(f.masses.v[k] > 0 && isfinite(f.masses.v[k]));
    for (size_t k = 0; k < f.ages.n; k++)
        FUZZ_REQUIRE(f.ages.v[k] >= 0 && isfinite(f.ages.v[k]));
    if (c.have_z)
        FUZZ_REQUIRE(c.z_arg > 0 && c.z_arg < 1);
    FUZZ_REQUIRE(!(c.have_z && c.have_feh));
    dlist_free(&f.masses);
    dlist_free(&f.ages);
    free(buf);
    return 0;
}
