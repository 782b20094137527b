/* hrtrail: the command line of the hrtrail library (uses only hrtrail.h). */
#include <stdlib.h>
#include <string.h>

#include "cli.h"

static const struct { const char *name; int (*run)(cli *, argparse *); } commands[] = {
    {"at", cmd_at},         {"track", cmd_track}, {"isochrone", cmd_isochrone}, {"life", cmd_life},
    {"plot", cmd_plot},     {"grid", cmd_grid},   {"demo", cmd_demo},
    {"fit", cmd_fit},       {"forecast", cmd_forecast},
    {"import", cmd_import},
    {"population", cmd_population},
};

enum { O_VERSION = 1 };
static const optdef main_opts[] = {{"version", 'V', 0, O_VERSION}, {NULL, 0, 0, 0}};

int main(int argc, char **argv)
{
    cli c;
    argparse p = {argc, argv, 1, 0};
    const char *val = NULL;
    int id, rc;

    memset(&c, 0, sizeof c);
    c.interp = HRT_INTERP_STEFFEN;
    /* refuse a library this command was not built for */
    if (hrt_abi_version() != HRT_ABI_VERSION || hrt_state_size() != sizeof(hrt_state)) {
        fprintf(stderr, "hrtrail: the hrtrail library loaded (version %s, ABI %d) is not the one this command was built for (ABI %d)\n",
                hrt_version(), hrt_abi_version(), HRT_ABI_VERSION);
        return CLI_EXIT_INTERNAL;
    }
    /* options before the command */
    while ((id = next_option(&c, &p, main_opts, 0, 0, &val)) != OPT_END && id != OPT_POSITIONAL) {
        if (id == OPT_ERROR) return CLI_EXIT_USAGE;
        if (id == O_VERSION) {
            printf("hrtrail %s (library %s, ABI %d, grid format %d)\n", HRT_VERSION_STRING, hrt_version(),
                   hrt_abi_version(), HRT_FORMAT_VERSION);
            return 0;
        }
    }
    if (id == OPT_END) {
        if (c.want_help) {
            help_main(stdout);
            return 0;
        }
        help_main(stderr);
        return cli_fail(NULL, CLI_EXIT_USAGE, "no command given (at, track, isochrone, life, plot, grid, population, fit, forecast, demo, import)");
    }
    if (strcmp(val, "help") == 0) {
        if (p.i < argc && help_command(argv[p.i], stdout) == 0) return 0;
        help_main(stdout);
        return 0;
    }
    for (size_t k = 0; k < sizeof commands / sizeof commands[0]; k++) {
        if (strcmp(val, commands[k].name) != 0) continue;
        c.cmd = commands[k].name;
        rc = commands[k].run(&c, &p);
        cli_close_grid(&c);
        if (rc == 0 && (fflush(stdout) != 0 || ferror(stdout)))
            rc = cli_fail(&c, CLI_EXIT_FILE, "cannot write to standard output");
        return rc;
    }
    return cli_fail(NULL, CLI_EXIT_USAGE,
                    "unknown command '%s'; the commands are at, track, isochrone, life, plot, grid, population, fit, forecast, demo, "
                    "import (see hrtrail --help)",
                    val);
}
