/* hrtrail: the command line of the hrtrail library (uses only hrtrail.h). */
#include <stdlib.h>
#include <string.h>

#include "cli.h"

/* The commands: what runs them, and what --help and the messages say of them (in this order). */
const cli_command cli_commands[] = {
    {"at", cmd_at, "state of one or many stars at given ages",
     "hrtrail at --mass 2.3 --z 0.008 --age 800Myr"},
    {"track", cmd_track, "one star's track: at its EEPs, evenly in log age, or at given ages",
     "hrtrail track --mass 1 --steps 50 --csv"},
    {"isochrone", cmd_isochrone, "stars of every initial mass at one or several ages, one Z",
     "hrtrail isochrone --age 1Gyr --z 0.014 --csv > iso.csv"},
    {"life", cmd_life, "a star's timetable: keypoint ages, phases, route and remnant",
     "hrtrail life --mass 2.3 --feh -0.24"},
    {"plot", cmd_plot, "an HR diagram as SVG: tracks, isochrones, points from a CSV",
     "hrtrail plot --track 1,2,5 --isochrone 1Gyr -o hr.svg"},
    {"grid", cmd_grid, "what a grid holds (info), is it sound (check), convert (upgrade)",
     "hrtrail grid info; hrtrail grid check --grid my.h5\nhrtrail grid upgrade old.h5 new.h5"},
    {"population", cmd_population, "many stars from an IMF, a star-formation history and a Z spread",
     "hrtrail population --stars 1e8 --imf kroupa2001 --age 10Gyr -o hr.svg"},
    {"fit", cmd_fit, "mass, age, phase and distance of observed stars (one, or a CSV)",
     "hrtrail fit --teff 5772 --teff-sigma 50 --log-l 0 --log-l-sigma 0.02"},
    {"mainseq", cmd_mainseq, "the main sequence as a calibration: Teff <-> L, R, mass, log g, distance",
     "hrtrail mainseq --teff 5770 --teff-sigma 60 --mbol 4.9 --mbol-sigma 0.05"},
    {"forecast", cmd_forecast, "a star's future: phases ahead, main-sequence time left, remnant",
     "hrtrail forecast --mass 1 --age 4.57Gyr --at 1Gyr,6Gyr"},
    {"demo", cmd_demo, "worked example: an invented cluster, its members, its HR diagram",
     "hrtrail demo"},
    {"import", cmd_import, "build a grid from text tracks with a column map, and report",
     "hrtrail import -o my.h5 --map-file map.txt tracks/"},
    {"codes", cmd_codes, "hrtrail's phase and remnant codes with their keys and names",
     "hrtrail codes --csv"},
};
const size_t cli_n_commands = sizeof cli_commands / sizeof cli_commands[0];

/* "at, track, ..., import": the command names for messages. */
static const char *command_names(void)
{
    static char list[256];
    if (!list[0])
        for (size_t k = 0; k < cli_n_commands; k++) {
            size_t l = strlen(list);
            snprintf(list + l, sizeof list - l, "%s%s", k ? ", " : "", cli_commands[k].name);
        }
    return list;
}

enum { O_VERSION = 1 };
static const optdef main_opts[] = {{"version", 'V', 0, O_VERSION}, {NULL, 0, 0, 0}};

static int take_main(cli *c, void *ctx, int id, const char *val)
{
    (void)c, (void)val;
    if (id == O_VERSION) *(int *)ctx = 1;
    return 0;
}

static int run_command(cli *c, const cli_command *cmd, argparse *p)
{
    int rc;
    c->cmd = cmd->name;
    rc = cmd->run(c, p);
    if (rc == CLI_STOP) rc = help_command(c->cmd, stdout) == 0 ? 0 : CLI_EXIT_INTERNAL; /* --help */
    cli_close_grid(c);
    if (rc == 0 && (fflush(stdout) != 0 || ferror(stdout)))
        rc = cli_fail(c, CLI_EXIT_FILE, "cannot write to standard output");
    return rc;
}

int main(int argc, char **argv)
{
    static const cmdopts o = {main_opts, NULL, 0, take_main, NULL, 1};
    cli c;
    argparse p = {argc, argv, 1};
    int version = 0, rc;

    memset(&c, 0, sizeof c);
    c.interp = HRT_INTERP_STEFFEN;
    hrt_isochrone_options_default(&c.iso);
    /* refuse a library this command was not built for */
    if (hrt_abi_version() != HRT_ABI_VERSION || hrt_state_size() != sizeof(hrt_state)) {
        fprintf(stderr, "hrtrail: the hrtrail library loaded (version %s, ABI %d) is not the one this command was built for (ABI %d)\n",
                hrt_version(), hrt_abi_version(), HRT_ABI_VERSION);
        return CLI_EXIT_INTERNAL;
    }
    /* options before the command */
    if ((rc = cli_parse(&c, &p, &o, &version)) != 0) return rc;
    if (version) {
        printf("hrtrail %s (library %s, ABI %d, grid format %d)\n", HRT_VERSION_STRING, hrt_version(), hrt_abi_version(),
               HRT_FORMAT_VERSION);
        return 0;
    }
    if (p.next >= argc) {
        help_main(c.want_help ? stdout : stderr);
        return c.want_help ? 0 : cli_fail(NULL, CLI_EXIT_USAGE, "no command given (%s)", command_names());
    }
    const char *name = argv[p.next];
    if (strcmp(name, "help") == 0) {
        if (p.next + 1 < argc && help_command(argv[p.next + 1], stdout) == 0) return 0;
        help_main(stdout);
        return 0;
    }
    /* the command's options: its name is their argv[0] */
    argparse sub = {argc - p.next, argv + p.next, 1};
    for (size_t k = 0; k < cli_n_commands; k++)
        if (strcmp(name, cli_commands[k].name) == 0) return run_command(&c, &cli_commands[k], &sub);
    return cli_fail(NULL, CLI_EXIT_USAGE, "unknown command '%s'; the commands are %s (see hrtrail --help)", name,
                    command_names());
}
