/* Help texts of the hrtrail command: everything a user needs, without the manual. */
#include <string.h>

#include "cli.h"

#define HELP_STR_(x) #x
#define HELP_STR(x) HELP_STR_(x)

static const char common_text[] =
    "Options every command takes:\n"
    "  --grid FILE     track grid (HDF5, hrtrail format); default: the file named by\n"
    "                  the HRTRAIL_GRID environment variable, else the installed grid\n"
    "  --interp NAME   interpolation across initial mass and [Fe/H]: steffen (default,\n"
    "                  monotone, no overshoot), linear, cspline or akima\n"
    "  -h, --help      this help\n";

static const char syntax_text[] =
    "Option syntax:\n"
    "  a long option may be shortened to any unique prefix (--st for --stars); a\n"
    "  value follows as --opt VALUE or --opt=VALUE (the = form for a value that\n"
    "  starts with --); short options bundle (-kj4 is -k -j 4); -- ends the options\n";

/* Files written with -o by the command itself (plot, population, demo). */
static const char outfile_text[] =
    "Output file (-o FILE):\n"
    "  FILE is replaced at once: the SVG goes to a new temporary file of an\n"
    "  unpredictable name beside it, which is renamed over FILE at the end, with\n"
    "  FILE's mode (a new file: 0644 less the umask). If writing fails, FILE stays\n"
    "  as it was and no temporary file is left. A symbolic link is written through:\n"
    "  the file it points to is replaced and the link stays. '-' (standard output),\n"
    "  a device such as /dev/null or a FIFO is written directly, never replaced.\n";

/* Grid files the library writes (import -o, grid upgrade NEW). */
static const char gridfile_text[] =
    "Output grid:\n"
    "  written to a temporary file beside it and renamed over it at the end; if\n"
    "  anything fails, nothing is written. A symbolic link is written through: the\n"
    "  file it points to is replaced and the link stays. '-', a device or a FIFO is\n"
    "  refused (an HDF5 grid cannot be streamed).\n";

static const char values_text[] =
    "Values:\n"
    "  masses   initial masses in Msun, e.g. 2.3; lists are comma-separated: 0.8,1,2.5\n"
    "  Z        --z 0.008 (metal mass fraction) or --feh -0.24 ([Fe/H] in dex, as\n"
    "           log10(Z/Z_ref) with the grid's Z_ref); default: the grid's Z_ref\n"
    "  ages     since the star's birth: years with an optional unit yr, kyr, Myr or\n"
    "           Gyr: 800Myr, 4.6Gyr, 1e9, \"250 kyr\"\n";

static const char output_text[] =
    "Output:\n"
    "  an aligned table with units in every header (ages in Myr), or with\n"
    "  --csv  CSV whose column names are those of the vocabulary in tracks/FORMAT.md,\n"
    "         with the unit in the name (age_yr, log_l_lsun, log_teff_k, log_r_rsun,\n"
    "         log_g_cgs, mass_msun, z, ...; an interval NAME, NAME_lo, NAME_hi), phases\n"
    "         and remnants as their keys (ms, rgb, co_wd, ...), numbers with 17\n"
    "         significant digits so that they read back exactly; nan where a value is\n"
    "         undefined\n"
    "  --json the same names and digits in JSON; a table is a list of records\n"
    "         (pandas.read_json reads it as it is); null where a value is undefined\n"
    "         or infinite (such as the end of a phase that lasts forever)\n";

static const char main_outfile_text[] =
    "Output files (-o FILE of plot, population and demo; import -o; grid upgrade NEW):\n"
    "  replaced at once through a new temporary file beside them, renamed over them\n"
    "  at the end (their mode kept); a failed write leaves them as they were. A\n"
    "  symbolic link is written through (the file it points to is replaced, the\n"
    "  link stays); '-', a device such as /dev/null or a FIFO is written directly\n"
    "  by plot, population and demo, and refused for a grid.\n";

static const char exit_text[] =
    "Exit status:\n"
    "  0  success\n"
    "  1  internal error or out of memory\n"
    "  2  usage: unknown command or option, missing or unparseable value, negative\n"
    "     mass or age\n"
    "  3  outside the grid: mass, metallicity or age the grid does not cover (the\n"
    "     message gives the allowed range)\n"
    "  4  file problem: a file cannot be read or written, a grid is not valid or of\n"
    "     an older format (convert it with 'grid upgrade'), or 'grid check' found\n"
    "     problems\n"
    "Errors are one line on standard error naming the argument or file; nothing is\n"
    "printed on standard output then.\n";

static const char state_cols_text[] =
    "Columns of a state (CSV/JSON name, table header):\n"
    "  initial_mass_msun  M_init     initial mass, Msun\n"
    "  z                  Z          metal mass fraction\n"
    "  age_yr             age [Myr]  age since birth\n"
    "  phase              phase      phase key (pre_ms, ms, subgiant, rgb, post_rgb,\n"
    "                                cheb, eagb, tpagb, post_agb, bsg, rsg, wr, wd,\n"
    "                                ns, bh); the table ends with what each key means\n"
    "  route                         the grid's route of this mass (CSV/JSON only)\n"
    "  log_l_lsun         log L      log10 luminosity / nominal solar luminosity\n"
    "  log_teff_k         log Teff   log10 effective temperature / K\n"
    "  log_r_rsun         log R      log10 radius / nominal solar radius\n"
    "  log_g_cgs          log g      log10 surface gravity / (cm s^-2)\n"
    "  mass_msun          M now      current mass, Msun\n"
    "  he_core_mass_msun  He core    helium core mass, Msun\n"
    "  co_core_mass_msun  CO core    carbon-oxygen core mass, Msun\n"
    "  eep                EEP        fractional equivalent evolutionary point\n"
    "  phase_fraction, phase_start_yr, phase_end_yr   where in its phase (CSV/JSON)\n"
    "  remnant, remnant_mass_msun    the remnant the star leaves (key he_wd, co_wd,\n"
    "                                one_wd, ns, bh or none; CSV/JSON)\n"
    "  flags              notes      not-modelled (younger than its track's first EEP,\n"
    "                                the birthline or the ZAMS: only masses are set),\n"
    "                                remnant (past the track: analytic remnant),\n"
    "                                dark (no light: L, Teff undefined),\n"
    "                                extrapolated (just outside its route's tracks),\n"
    "                                bc-uncalibrated (with magnitudes: BC_V not\n"
    "                                fitted there, Teff outside 2900-52500 K or a\n"
    "                                remnant; the magnitudes are written anyway)\n"
    "  abs_mbol, bc_v, abs_mv   M_bol, BC_V, M_V   at, isochrone: --vmag\n"
    "  mv                 m_V        at, isochrone: --distance, apparent V\n";

/* The magnitude options (at, isochrone). */
#define EXTRA_OPTIONS_TEXT                                                                          \
    "  --extra NAME[,NAME...]  also the grid's extra quantities of these names\n"                \
    "                         (hrtrail grid info lists them; the default grid's:\n"              \
    "                         envelope and convective-envelope masses, k^2, binding\n"           \
    "                         energy, lambda), interpolated like log L\n"
#define MAG_OPTIONS_TEXT                                                                            \
    "  --vmag                  add abs_mbol (M_bol = 4.74 - 2.5 log L, IAU 2015\n"      \
    "                          Resolution B2), bc_v (BC_V of Flower 1996 with the\n"            \
    "                          coefficients of Torres 2010; fitted on 2900-52500 K,\n"          \
    "                          within about 0.06 mag of mean B3-K5 dwarfs, worse for\n"         \
    "                          M dwarfs) and abs_mv (M_V = M_bol - BC_V)\n"                     \
    "  --distance PC           also the apparent V, mv = M_V + 5 log10(PC/10) + A_V\n"          \
    "  --av MAG                extinction A_V in magnitudes (default 0; needs --distance)\n"

/* --interp-error (at, track, isochrone). */
#define IERR_OPTIONS_TEXT(pad)                                                                      \
    "  --interp-error " pad "add err_log_l_dex, err_log_teff_dex, err_log_age_dex: the\n"      \
    "                 " pad "interpolation error the grid file stores (grid accuracy\n"      \
    "                 " pad "--store): the largest leave-one-out error of the two\n"         \
    "                 " pad "tracks either side of the mass, at the star's EEP,\n"        \
    "                 " pad "plus between metallicities the error across them\n"         \
    "                 " pad "(--across-z --store). An upper estimate, not a\n"          \
    "                 " pad "1-sigma error; empty for remnants\n"

static const char accuracy_text[] =
    "Accuracy: answers are as good as the grid. The default grid is a semi-analytic\n"
    "model built from published relations, meant for population-level work, not for\n"
    "precision stellar physics.\n";

/* The commands of the command table (main.c), each with its one line and its examples. */
static void help_commands(FILE *f)
{
    fputs("Commands:\n", f);
    for (size_t k = 0; k < cli_n_commands; k++) {
        const char *e = cli_commands[k].example;
        fprintf(f, "  %-10s %s\n", cli_commands[k].name, cli_commands[k].summary);
        while (*e) {
            size_t n = strcspn(e, "\n");
            fprintf(f, "               %.*s\n", (int)n, e);
            e += n + (e[n] == '\n');
        }
    }
}

void help_main(FILE *f)
{
    const char *def = hrt_default_grid_path();
    fprintf(f,
            "hrtrail %s: stellar evolution tracks, isochrones and timetables from a track grid\n"
            "\n"
            "Usage: hrtrail [--grid FILE] [--interp NAME] COMMAND [OPTIONS]\n"
            "\n",
            HRT_VERSION_STRING);
    help_commands(f);
    fprintf(f,
            "\n"
            "Run 'hrtrail COMMAND --help' for the options of each command.\n"
            "\n"
            "%s"
            "  --version       versions of the command, the library, its ABI and grid format\n"
            "  The default grid now: %s\n"
            "\n%s\n%s\n%s\n%s\n%s\n%s",
            common_text, def ? def : "(none found)", syntax_text, values_text, output_text, main_outfile_text, exit_text,
            accuracy_text);
}

enum { OUT_NONE = 0, OUT_SVG = 1, OUT_GRID = 2 };
/* The options of what an isochrone holds (isochrone, plot). */
#define ISO_OPTIONS_TEXT                                                                            \
    "  --phases KEY[,KEY...]   phases to include: phase keys (hrtrail codes lists them),\n"        \
    "                          'luminous' (the default: every phase of a star alive) and\n"      \
    "                          'remnants' (wd, ns, bh), e.g. --phases luminous,wd\n"             \
    "  --leave-out KEY[,...]   phases to leave out, e.g. --leave-out post_agb\n"                 \
    "  --max-dlog-l DEX        largest step in log L between neighbours of one phase\n"          \
    "                          (default 0.02)\n"

static const struct help_entry { const char *cmd; const char *text; int state_cols, outputs; } helps[] = {
    {"at",
     "Usage: hrtrail at --mass M[,M...] --age AGE[,AGE...] [--z Z | --feh X] [OPTIONS]\n"
     "       hrtrail at --input FILE [OPTIONS]\n"
     "\n"
     "The state of one or many stars: each initial mass at each age (every\n"
     "combination), or one star per line of a CSV file.\n"
     "\n"
     "  -m, --mass M[,M...]    initial masses, Msun\n"
     "  -a, --age AGE[,AGE...] ages since birth, e.g. 800Myr\n"
     "  --z Z | --feh X        metallicity (default: the grid's Z_ref)\n"
     "  -i, --input FILE       CSV with a header line ('-' for standard input).\n"
     "                         Columns (names as in the CSV output): initial_mass_msun,\n"
     "                         age_yr (years; units allowed: 800Myr), z or feh (one\n"
     "                         of them per line), and an optional name; other\n"
     "                         columns are ignored, so 'hrtrail at --csv' output\n"
     "                         reads back. A column the file lacks comes from a\n"
     "                         single --mass, --age or --z. Lines starting with #\n"
     "                         are skipped.\n"
     "  -k, --keep-going       print every star even if some fail: failed stars get a\n"
     "                         status column and nan values, a message each on\n"
     "                         standard error, and the exit status of the first failure\n"
     EXTRA_OPTIONS_TEXT
     MAG_OPTIONS_TEXT
     IERR_OPTIONS_TEXT("         ")
     "  --csv, --json          CSV, or JSON records (a list of objects), instead of\n"
     "                         the table\n"
     "\n"
     "Younger than its track's first EEP a star is not modelled: phase pre_ms, flag\n"
     "not-modelled. The default grid starts each track on its birthline (1000 yr\n"
     "after the star appears there) and models the pre-main sequence; most imported\n"
     "grids start at the zero-age main sequence. Past the end of its track a star\n"
     "is its remnant (white dwarf\n"
     "cooling, neutron star, black hole).\n"
     "\n"
     "Examples:\n"
     "  hrtrail at --mass 2.3 --z 0.008 --age 800Myr\n"
     "  hrtrail at --mass 1,1.5,2 --age 1Gyr,2Gyr --csv\n"
     "  hrtrail at --mass 0.8,1,1.2 --age 3Gyr --distance 850 --av 0.25\n"
     "  printf 'name,initial_mass_msun,age_yr\\nA,1.0,4.6Gyr\\nB,3,300Myr\\n' | hrtrail at --input - --json\n",
     1, OUT_NONE},
    {"track",
     "Usage: hrtrail track --mass M [--z Z | --feh X] [--eeps | --steps N | --ages LIST] [OPTIONS]\n"
     "\n"
     "One star's track, interpolated from the grid.\n"
     "\n"
     "  -m, --mass M       initial mass, Msun\n"
     "  --z Z | --feh X    metallicity (default: the grid's Z_ref)\n"
     "  --eeps             one row per equivalent evolutionary point (the default):\n"
     "                     from the track's first EEP to its end\n"
     "  -n, --steps N      N ages evenly spaced in log age, from the track's first EEP\n"
     "                     to its end unless --from/--to say\n"
     "  -a, --ages LIST    at these ages, e.g. 100Myr,1Gyr,5Gyr (past the end of the\n"
     "                     track: the remnant)\n"
     "  --from AGE         first age (with --steps), or keep EEPs from this age on\n"
     "  --to AGE           last age (with --steps; may lie beyond the track's end when\n"
     "                     the remnant is known), or keep EEPs up to this age\n"
     EXTRA_OPTIONS_TEXT
     IERR_OPTIONS_TEXT("    ")
     "  --csv, --json      CSV, or JSON records (a list of objects), instead of the\n"
     "                     table\n"
     "\n"
     "Examples:\n"
     "  hrtrail track --mass 1 --z 0.014\n"
     "  hrtrail track --mass 2.3 --feh -0.24 --steps 200 --csv > track.csv\n"
     "  hrtrail track --mass 5 --ages 10Myr,50Myr,100Myr --json\n",
     1, OUT_NONE},
    {"isochrone",
     "Usage: hrtrail isochrone --age AGE[,AGE...] [--z Z | --feh X] [OPTIONS]\n"
     "\n"
     "The isochrone: at each age, the stars of every initial mass the grid covers\n"
     "that are alive and modelled: one at each EEP the age falls on (so fast phases\n"
     "get as many points as the grid has EEPs there), the ends of each route's\n"
     "masses, and in between as many masses as keep each step in log L within\n"
     "--max-dlog-l (the lower main sequence, where no EEP is reached). Points are\n"
     "ordered by route, then initial mass. Remnants are left out unless asked for.\n"
     "With several ages the rows of all ages follow each other; the age_yr column\n"
     "tells them apart.\n"
     "\n"
     "  -a, --age AGE[,AGE...]  ages (> 0), e.g. 1Gyr or 100Myr,1Gyr,5Gyr\n"
     "  --z Z | --feh X         metallicity (default: the grid's Z_ref)\n"
     ISO_OPTIONS_TEXT
     EXTRA_OPTIONS_TEXT
     MAG_OPTIONS_TEXT
     IERR_OPTIONS_TEXT("         ")
     "  --csv, --json           CSV, or JSON records, instead of the table\n"
     "\n"
     "Examples:\n"
     "  hrtrail isochrone --age 1Gyr --z 0.014 --csv > iso-1gyr.csv\n"
     "  hrtrail isochrone --age 100Myr,1Gyr --feh -0.5 --json\n"
     "  hrtrail isochrone --age 2Gyr --distance 1200 --av 0.4 --csv\n",
     1, OUT_NONE},
    {"life",
     "Usage: hrtrail life --mass M[,M...] [--z Z | --feh X] [OPTIONS]\n"
     "\n"
     "A star's timetable: its route through the grid (low-mass, giant, supergiant,\n"
     "... as the grid names them), the age at each keypoint of that route ('-' for a\n"
     "keypoint the star never reaches), the start, end and duration of each phase\n"
     "(the last one is the remnant, lasting forever: end inf), and its fate: the kind\n"
     "and mass of the remnant and the age at which it becomes one.\n"
     "\n"
     "  -m, --mass M[,M...]  initial masses, Msun\n"
     "  --z Z | --feh X      metallicity (default: the grid's Z_ref)\n"
     "  --csv, --json        one row (JSON: one record) per keypoint, phase and\n"
     "                       remnant: initial_mass_msun, z, route, record (keypoint,\n"
     "                       phase or remnant), key (keypoint name, phase key or\n"
     "                       remnant key), start_yr (keypoint age, phase start, or\n"
     "                       age at which the remnant forms), end_yr, duration_yr,\n"
     "                       remnant_mass_msun\n"
     "\n"
     "Remnant keys: he_wd, co_wd, one_wd (helium, carbon-oxygen, oxygen-neon white\n"
     "dwarf), ns (neutron star), bh (black hole), none (not known: the track ends\n"
     "early).\n"
     "\n"
     "Examples:\n"
     "  hrtrail life --mass 2.3 --z 0.008\n"
     "  hrtrail life --mass 1,5,20 --json\n",
     0, OUT_NONE},
    {"plot",
     "Usage: hrtrail plot [--track M[,M...]] [--isochrone AGE[,AGE...]] [--points FILE]\n"
     "                    [--z Z | --feh X] [-o FILE.svg] [OPTIONS]\n"
     "\n"
     "An HR diagram as SVG: log10 Teff increasing to the left, log10 L upward, a\n"
     "labelled tick at every decade of L. Each phase has its own colour, dash pattern\n"
     "and marker (set where the phase begins), so a greyscale print still tells the\n"
     "phases apart; a legend names them. Tracks are thin lines labelled with their\n"
     "mass at the zero-age main sequence; isochrones are thick lines labelled with\n"
     "their age at their brightest point.\n"
     "With --y abs_mv (or mv) the y axis is the V magnitude instead, brighter upward:\n"
     "a magnitude-temperature diagram; states outside the range of the bolometric\n"
     "correction (2900-52500 K) and remnants are left out of it.\n"
     "\n"
     "  -t, --track M[,M...]        tracks of these initial masses, Msun\n"
     "  -a, --isochrone AGE[,...]   isochrones at these ages (--phases, --leave-out and\n"
     "                              --max-dlog-l as for hrtrail isochrone)\n"
     "  -p, --points FILE           stars from a CSV ('-': standard input) with columns\n"
     "                              log_teff_k and log_l_lsun, optional name (label)\n"
     "                              and phase (key; ring colour); 'hrtrail at --csv'\n"
     "                              writes such a file. Rows with nan are skipped.\n"
     "  --z Z | --feh X             metallicity of tracks and isochrones\n"
     "  --title TEXT                title (default: Hertzsprung-Russell diagram)\n"
     "  --log-teff LO,HI            log10 Teff/K range (default: fit the data)\n"
     "  --log-l LO,HI               log10 L/Lsun range (default: fit the data)\n"
     "  --y AXIS                    log_l_lsun (default), abs_mv (M_V) or mv (apparent\n"
     "                              V: needs --distance PC, optional --av MAG; see\n"
     "                              hrtrail at --help)\n"
     "  --y-range LO,HI             range of the y axis, whatever it shows\n"
     "  -o, --output FILE           SVG file (default: standard output); a symbolic\n"
     "                              link is written through, a device or FIFO directly\n"
     "\n"
     "Examples:\n"
     "  hrtrail plot --track 1,2,5 --isochrone 300Myr,1Gyr -o hr.svg\n"
     "  hrtrail at --mass 1,2 --age 1Gyr --csv | hrtrail plot --points - --isochrone 1Gyr -o stars.svg\n"
     "  hrtrail plot --isochrone 300Myr,1Gyr,3Gyr --y abs_mv -o cmd.svg\n",
     0, OUT_SVG},
    {"grid",
     "Usage: hrtrail grid info [FILE] [--grid FILE] [--csv | --json]\n"
     "       hrtrail grid check [FILE] [--grid FILE] [--csv | --json]\n"
     "       hrtrail grid accuracy [FILE] [--grid FILE] [--interp NAME] [-j N] [--store]\n"
     "                             [--across-z] [--csv | --json]\n"
     "       hrtrail grid upgrade OLD NEW\n"
     "\n"
     "  info   what the grid holds: file, size on disk and in memory, provenance\n"
     "         (description, source, created_by), Z_ref, every metallicity with its\n"
     "         [Fe/H], number of tracks, mass range, tracks per route and route-boundary\n"
     "         masses, every route with its EEPs and keypoints, and the masses.\n"
     "         --csv: one row per track (z, feh, initial_mass_msun, route, n_eep);\n"
     "         --json: all of it. Text from the file is shown with control characters\n"
     "         and bytes that are not UTF-8 as escapes (\\x1b); --json escapes control\n"
     "         characters (\\u001b) and writes U+FFFD for bytes that are not UTF-8.\n"
     "  check  run the library's validator (format, shapes, ascending masses, ages,\n"
     "         finite values, phase and remnant tables, keypoints, route boundaries;\n"
     "         it stops at its first problem and names group, dataset and index), then\n"
     "         check every track, a star between each pair of neighbouring tracks, and\n"
     "         eight isochrones per metallicity: ages increase, masses and cores are\n"
     "         nested (CO core <= He core <= mass <= initial mass), Teff and L are\n"
     "         within generous bounds, timetables are contiguous, white dwarfs stay\n"
     "         below the Chandrasekhar mass. Every problem is printed (--csv/--json:\n"
     "         where, problem); exit status 4 if there is any. Shows progress on\n"
     "         standard error when that is a terminal.\n"
     "  accuracy  how well the grid interpolates between its own tracks: each\n"
     "         interior track of each route (both neighbours in its route) is dropped\n"
     "         in turn, its metallicity rebuilt without it by the library's builder\n"
     "         and the track interpolated from the rest; the |error| at every EEP is\n"
     "         reported per type, route and phase: median / 95th percentile / max\n"
     "         of log L, log Teff and log age (dex), with the worst track (initial\n"
     "         mass, Z, EEP) and the worst white-dwarf mass (Msun). Every type\n"
     "         (steffen, linear, cspline, akima) unless --interp names one;\n"
     "         -j/--threads N at most N threads (default 0: every core). Dropping\n"
     "         a track doubles the local spacing, so the figures bound the errors\n"
     "         between tracks of the full grid from above. Prints the time taken\n"
     "         (--json: \"seconds\"); --csv/--json: one record per row. Shows progress\n"
     "         on standard error when that is a terminal. --store also writes the\n"
     "         errors into the grid file (group accuracy/ of FORMAT.md) for\n"
     "         --interp-error and the fit; the default grid ships them.\n"
     "         --across-z measures across metallicity instead: each interior\n"
     "         metallicity group is dropped in turn, the grid rebuilt from the other\n"
     "         groups and each of its tracks interpolated at its own mass and Z;\n"
     "         same report (tracks the other groups do not cover, or place on\n"
     "         another route, are skipped). With --store it writes accuracy/across_z/,\n"
     "         which --interp-error adds between metallicity groups: store the mass\n"
     "         direction first (storing it replaces accuracy/ whole).\n"
     "  upgrade  convert the grid file OLD, of an older format version, to the\n"
     "         current one (format " HELP_STR(HRT_FORMAT_VERSION) ") and write it to NEW (atomically: NEW is\n"
     "         replaced only when complete; it may be OLD itself). Values are copied\n"
     "         bit for bit, so the converted grid gives the same answers. Prints one\n"
     "         line: what was converted. The other commands, grid info and grid check\n"
     "         refuse an older file with a message naming this command.\n"
     "\n"
     "FILE is the grid (as --grid); without one, the default grid.\n"
     "\n"
     "Examples:\n"
     "  hrtrail grid info\n"
     "  hrtrail grid check my-grid.h5\n"
     "  hrtrail grid accuracy my-grid.h5 --interp linear --csv\n"
     "  hrtrail grid accuracy my-grid.h5 --store\n"
     "  hrtrail grid accuracy my-grid.h5 --across-z --store\n"
     "  hrtrail at --grid my-grid.h5 --mass 1.3 --age 2Gyr --interp-error\n"
     "  hrtrail grid upgrade my-grid-v1.h5 my-grid.h5\n",
     0, OUT_GRID},
    {"population",
     "Usage: hrtrail population --stars N --age AGE[,AGE...] [--imf NAME] [--sfh KIND]\n"
     "                          [--z Z | --feh X] [--feh-spread DEX] [-o FILE.svg] [OPTIONS]\n"
     "\n"
     "Population synthesis: N stars drawn from an initial mass function, a star-\n"
     "formation history and a metallicity distribution, each evolved to every AGE\n"
     "(the population's age: time since star formation began) and summarised without\n"
     "keeping the stars: counts, initial and current mass and luminosity per phase,\n"
     "counts and mass per remnant kind, integrated bolometric luminosity, M/L, the\n"
     "main-sequence turnoff mass, and an HR-diagram histogram. The same seed gives\n"
     "the same numbers for any number of threads, processes or MPI ranks.\n"
     "\n"
     "  -n, --stars N          stars to draw (e.g. 1e8; memory does not grow with N)\n"
     "  -a, --age AGE[,...]    ages at which to summarise, e.g. 1Gyr,10Gyr\n"
     "  --imf NAME             salpeter1955 (dN/dm ~ m^-2.35), kroupa2001 (default;\n"
     "                         broken power law 0.3/1.3/2.3), chabrier2003 (system IMF,\n"
     "                         log-normal below 1 Msun), powerlaw with --alpha A\n"
     "  --mass-range LO,HI     initial masses drawn, Msun (default 0.08,100 within the\n"
     "                         grid); stars outside the grid are counted as failed\n"
     "  --sfh KIND             burst (default: all born at --sfh-from, default 0),\n"
     "                         constant or exponential (--tau T) from --sfh-from to\n"
     "                         --sfh-to (default: the last age), or table\n"
     "  --sfh-table FILE       CSV with columns t_yr (or time; units allowed) and rate:\n"
     "                         the rate is linear between its points\n"
     "  --z Z | --feh X        metallicity (default: the grid's Z_ref); with\n"
     "  --feh-spread DEX       [Fe/H] normal around it with this spread, or\n"
     "  --z-uniform            log Z uniform, both within --z-range LO,HI (default:\n"
     "                         the grid's range)\n"
     "  --seed S               random seed (default 1)\n"
     "  -j, --threads T        threads (default 0: all OpenMP offers)\n"
     "  -o, --output FILE      HR-diagram density SVG at the first age (a single\n"
     "                         burst at one Z also shows its isochrone), whatever\n"
     "                         the format of the summary; '-': the SVG alone on\n"
     "                         standard output (not with --csv or --json)\n"
     "  --hr-bins NX,NY        histogram bins (default 64,64), --log-teff LO,HI\n"
     "                         (default 3.3,4.9) and --log-l LO,HI (default -5,6.5)\n"
     "  --csv                  one row per age and record (phase, remnant, failed):\n"
     "                         age_yr, record, key (phase key, remnant key, none for\n"
     "                         stars that are no remnant, or the failure), stars,\n"
     "                         fraction, initial_mass_msun, mass_msun, l_lsun\n"
     "  --json                 everything, with the histogram's counts\n"
     "  --catalogue FILE       also write every star at every age (star, population_age_yr,\n"
     "                         birth_yr and the state's fields) to FILE.h5 (HDF5) or\n"
     "                         FILE.csv, in bounded memory\n"
     "\n"
     "More than one process. The stars come in chunks of --chunk-size N (default\n"
     "65536; it changes the draws); a part of them runs alone and is saved:\n"
     "  --part K/N             the K-th of N equal parts of the chunks (K from 0), e.g.\n"
     "                         --part $SLURM_ARRAY_TASK_ID/100 in a batch job array\n"
     "  --chunks FIRST:COUNT   chunks FIRST to FIRST+COUNT-1 (COUNT is clipped)\n"
     "  --save-summary FILE    write the summaries (with the specification, the chunks\n"
     "                         done, the grid's name and --interp; versioned,\n"
     "                         checksummed) to FILE\n"
     "hrtrail population merge FILE... [--csv|--json] [-o FILE.svg] [--save-summary OUT]\n"
     "adds saved parts up exactly, in any order, and writes what one run would (the\n"
     "same bytes of CSV, JSON and SVG; the text but its timing line); parts of another\n"
     "population or seed, with a chunk in common, or damaged are refused, and so is\n"
     "an incomplete set unless --save-summary OUT keeps it as a larger part.\n"
     "Under mpirun (when built with MPI), the ranks share the chunks and rank 0 writes\n"
     "the same bytes as one process; --catalogue then writes FILE.rankR.h5 per rank\n"
     "and FILE.manifest.csv (file, rank, chunk_first, chunk_count, rows).\n"
     "\n"
     "Shows progress on standard error when that is a terminal (rank 0 only), never\n"
     "otherwise.\n"
     "\n"
     "Examples:\n"
     "  hrtrail population --stars 1e6 --age 1Gyr,5Gyr,10Gyr -o burst.svg\n"
     "  hrtrail population -n 1e8 --imf chabrier2003 --sfh constant --sfh-to 10Gyr \\\n"
     "      --age 10Gyr --feh -0.3 --feh-spread 0.2 --json > disc.json\n"
     "  mpirun -np 8 hrtrail population -n 1e9 --age 10Gyr --json > big.json\n"
     "  hrtrail population -n 1e9 --age 10Gyr --part 7/100 --save-summary p7.part\n"
     "  hrtrail population merge p*.part --json > big.json\n",
     0, OUT_SVG},
    {"fit",
     "Usage: hrtrail fit --teff K --teff-sigma K [--log-l X --log-l-sigma S]\n"
     "                   [--feh X --feh-sigma S] [--logg X --logg-sigma S]\n"
     "                   [--flux W/m2 --flux-sigma S | --mbol M --mbol-sigma S]\n"
     "                   [--distance PC --distance-sigma S | --parallax MAS --parallax-sigma S]\n"
     "                   [--prior NAME] [--age-max AGE] [--mass-min M] [--mass-max M]\n"
     "                   [--feh-step DEX] [--seed N] [--input FILE [--keep-going]] [--csv | --json]\n"
     "\n"
     "The posterior of an observed star over initial mass, age and [Fe/H] on the\n"
     "grid's tracks: medians and 16%/84% points of the initial and current mass,\n"
     "age, [Fe/H], radius, log L, Teff and log g; the probability of each phase, with\n"
     "'multimodal' when a second phase holds 10% or more (main sequence or subgiant,\n"
     "red giant or core helium burning).  Every value comes with its 1-sigma error,\n"
     "Gaussian in the quantity as named (Teff in K, log L in dex).  Teff is required.\n"
     "The luminosity is --log-l, or a bolometric flux (--flux in W/m^2 or --mbol on the\n"
     "IAU 2015 B2 scale) with a --distance or --parallax; a flux without a distance\n"
     "gives the star's HR-diagram distance (inverse-square law, with an interval).\n"
     "\n"
     "  --prior NAME       mass prior: kroupa2001 (default), chabrier2003, log-flat\n"
     "  --age-max AGE      age prior uniform from 0 to AGE (default 13.8Gyr)\n"
     "  --mass-min, --mass-max  limits of the mass prior, Msun (default: the grid's)\n"
     "  --feh-step DEX     spacing of the [Fe/H] lattice (default 0.1); [Fe/H] prior\n"
     "                     uniform over the grid, times the --feh measurement if given\n"
     "  -i, --input FILE   a catalogue: CSV with columns name, teff_k, teff_k_sigma,\n"
     "                     log_l_lsun, log_l_lsun_sigma, feh, feh_sigma, log_g_cgs,\n"
     "                     log_g_cgs_sigma, flux_w_m2, flux_w_m2_sigma, mbol,\n"
     "                     mbol_sigma, distance_pc, distance_pc_sigma, parallax_mas,\n"
     "                     parallax_mas_sigma (any subset; empty = not measured;\n"
     "                     names as in tracks/FORMAT.md)\n"
     "  -k, --keep-going   fit the other stars when one fails\n"
     "  --seed N           seed of the random draws (distance interval)\n"
     "\n"
     "Columns of --csv and records of --json: name, status, each quantity\n"
     "(initial_mass_msun, age_yr, feh, mass_msun, r_rsun, log_l_lsun, teff_k,\n"
     "log_g_cgs, distance_pc) with NAME_lo and NAME_hi (16% and 84%), phase,\n"
     "phase_prob, phase_second, phase_second_prob, flags (multimodal, mass-edge,\n"
     "age-limit, feh-edge, poor-match, few-points), chi2_min.  Exit status 3 when\n"
     "no model lies within 5 sigma of the measurements or Teff is outside every\n"
     "track.\n"
     "The intervals are statistical; the default grid is a semi-analytic model.\n"
     "\n"
     "Examples:\n"
     "  hrtrail fit --teff 5772 --teff-sigma 50 --log-l 0 --log-l-sigma 0.02 --feh 0 --feh-sigma 0.05\n"
     "  hrtrail fit --teff 6100 --teff-sigma 80 --logg 4.1 --logg-sigma 0.1 \\\n"
     "      --flux 2.1e-12 --flux-sigma 4e-14 --feh -0.2 --feh-sigma 0.1\n"
     "  hrtrail fit --input survey.csv --keep-going --csv > fits.csv\n",
     0, OUT_NONE},
    {"mainseq",
     "Usage: hrtrail mainseq --teff K[,K...] [--teff-sigma K] [--flux F | --mbol M] [options]\n"
     "       hrtrail mainseq --log-l X[,X...] [--log-l-sigma DEX] [options]\n"
     "\n"
     "The main sequence as a calibration curve: the luminosity, radius, current and\n"
     "initial mass, log g and age of a main-sequence star of a given Teff (or the\n"
     "Teff and the rest of one of a given log L), and with its bolometric flux or\n"
     "apparent bolometric magnitude its distance and parallax.  The main sequence\n"
     "(phase ms: ZAMS to TAMS, not the pre-main sequence) is sampled at 400 masses\n"
     "x 96 ages; each model weighs M^-alpha dM x the time spent there (a population\n"
     "formed at a constant rate), times a Gaussian in the measured quantity.  Each\n"
     "quantity is given as the weighted median and 15.87%/84.13% points (the width\n"
     "of the band and the measurement error together) and as the band: the least and\n"
     "greatest value among main-sequence models of exactly the given value.\n"
     "Exit status 3 when no main-sequence star of the grid has that Teff or L.\n"
     "\n"
     "  -t, --teff LIST      effective temperatures, K\n"
     "  --teff-sigma K       their 1-sigma error, K (default 0)\n"
     "  -l, --log-l LIST     luminosities, log10 L/Lsun (the inverse: L -> Teff)\n"
     "  --log-l-sigma DEX    their 1-sigma error, dex (default 0)\n"
     "  --flux F             bolometric flux, W m^-2 (with --teff: the distance)\n"
     "  --flux-sigma F       its 1-sigma error, W m^-2\n"
     "  --mbol M             apparent bolometric magnitude (IAU 2015 B2 zero point)\n"
     "  --mbol-sigma MAG     its 1-sigma error\n"
     "  --age-min AGE        count only ages from AGE (default: each star's ZAMS)\n"
     "  --age-max AGE        and up to AGE (default 13.8Gyr, today's stars; inf: every\n"
     "                       main-sequence age, to each star's TAMS)\n"
     "  --imf-alpha A        mass prior dN/dM ~ M^-A (default 0; 2.35: Salpeter)\n"
     "  --z Z, --feh X       metallicity (default the grid's Z_ref)\n"
     "  --csv, --json        two records per star: record estimate (NAME, NAME_lo,\n"
     "                       NAME_hi: median and interval) and record band (NAME_lo,\n"
     "                       NAME_hi: its ends); teff_k, log_l_lsun, r_rsun, log_g_cgs,\n"
     "                       mass_msun, initial_mass_msun, age_yr, distance_pc,\n"
     "                       parallax_mas\n"
     "The answers are as accurate as the grid (a semi-analytic model by default);\n"
     "the sampling adds a few 0.001 dex.\n"
     "\n"
     "Examples:\n"
     "  hrtrail mainseq --teff 5770,4440 --teff-sigma 60\n"
     "  hrtrail mainseq --teff 6550 --teff-sigma 80 --mbol 9.2 --mbol-sigma 0.05 --age-max 10Gyr\n"
     "  hrtrail mainseq --log-l 1.5 --log-l-sigma 0.05 --feh -0.3 --json\n",
     0, OUT_NONE},
    {"forecast",
     "Usage: hrtrail forecast --mass M --age AGE [--z Z | --feh X] [--at AGE[,AGE...]]\n"
     "       hrtrail forecast --teff K --teff-sigma K [fit options] [--samples N] [--at ...]\n"
     "\n"
     "The future of a star given exactly (initial mass, metallicity, age) or fitted\n"
     "from its measurements (the options of hrtrail fit; N posterior draws, default\n"
     "400): its phase now, the main-sequence time left, the keypoints and phases still\n"
     "to come with the time until each, the final remnant and its mass, and with --at\n"
     "its state (phase, log L, Teff, R, mass) at each time from now; each with the\n"
     "16%/84% points over the draws.\n"
     "\n"
     "  -m, --mass M       initial mass, Msun (an exact star)\n"
     "  -a, --age AGE      its age now\n"
     "  --z Z, --feh X     its metallicity (default the grid's Z_ref)\n"
     "  --at LIST          times from now, e.g. 10Myr,2Gyr\n"
     "  -n, --samples N    posterior draws of a fitted star (default 400)\n"
     "  --csv              the states at --at times (or the keypoints) as CSV\n"
     "  --json             everything; intervals as NAME, NAME_lo, NAME_hi\n"
     "\n"
     "Examples:\n"
     "  hrtrail forecast --mass 1 --age 4.57Gyr --at 10Myr,2Gyr\n"
     "  hrtrail forecast --teff 4600 --teff-sigma 80 --log-l 1.6 --log-l-sigma 0.05 --at 100Myr\n",
     0, OUT_NONE},
    {"demo",
     "Usage: hrtrail demo [-o FILE.svg] [--grid FILE] [--csv | --json]\n"
     "\n"
     "The main job on the default grid, in an invented scenario: the Marrowind\n"
     "cluster, an invented open cluster of age 1.2 Gyr and Z = 0.014. Prints the\n"
     "cluster's turnoff mass (the most massive star still burning hydrogen in its\n"
     "core), and for a handful of members (two main-sequence dwarfs of 0.85 and 1.3\n"
     "Msun, a star just below the turnoff, giants on the cluster isochrone and the\n"
     "lightest star that is already a white dwarf) their state now, their timetables\n"
     "and their fates; writes an HR diagram with the members, their tracks and the\n"
     "cluster isochrone.\n"
     "\n"
     "  -o, --output FILE  the SVG (default: marrowind-hr.svg in the current directory);\n"
     "                     beside it FILE-density.svg (FILE less .svg), the density\n"
     "                     of the synthetic cluster, unless FILE is '-' (standard\n"
     "                     output), a device or a FIFO; with '-' the SVG alone goes\n"
     "                     to standard output (no report; refused with --csv, --json)\n"
     "  --csv              the members' states as CSV (columns as in hrtrail at)\n"
     "  --json             everything: cluster, members now, timetables (records as\n"
     "                     in hrtrail life), fates, the synthetic cluster\n",
     0, OUT_SVG},
    {"import",
     "Usage: hrtrail import -o GRID.h5 [--map SPEC]... [--map-file FILE]... [--z Z]\n"
     "                      [--routes FILE] [--route-boundaries [Z:]M1,...] [--keep-going]\n"
     "                      [--force] [--pre-ms] [--dry-run] [--csv | --json]\n"
     "                      FILE|DIR [[--z Z] FILE|DIR ...]\n"
     "\n"
     "Builds a grid from text tracks: one file per initial mass, a header line,\n"
     "columns separated by commas or blanks, '#' comments. Finds the keypoints of\n"
     "each track (criteria in tracks/FORMAT.md), assigns its route from the\n"
     "keypoints it reaches, resamples it onto EEPs, estimates the route-boundary\n"
     "masses per metallicity and writes the grid atomically. Prints what it did\n"
     "with every track: keypoints found (age, line, how), what was dropped and why.\n"
     "\n"
     "  -o, --output FILE  the grid to write (nothing is written if the import fails;\n"
     "                     a symbolic link is written through, a device refused)\n"
     "  --map SPEC         column map entries key=column[*unit], comma-separated;\n"
     "                     the keys are names of the vocabulary (tracks/FORMAT.md):\n"
     "                     age_yr (or log_age_yr) with unit yr, kyr, Myr, Gyr;\n"
     "                     log_l_lsun or l_lsun; log_teff_k or teff_k; log_r_rsun or\n"
     "                     r_rsun; mass_msun; central_x; central_y; he_core_mass_msun;\n"
     "                     co_core_mass_msun; phase (keys ms, rgb, ... or codes 11,\n"
     "                     21, ...); keypoints (explicit keypoint names, '-' for\n"
     "                     none); initial_mass_msun and z (a number or a column);\n"
     "                     feh; pattern=NAME with {mass}, {z}, {feh} and '*' for file\n"
     "                     names; z_ref. Unmapped quantities use columns named like\n"
     "                     the key\n"
     "  --map-file FILE    the same entries, one or more per line\n"
     "  --z Z              metallicity of the files and directories that follow\n"
     "  --routes FILE      route layouts, one per line:\n"
     "                     NAME: KEYPOINT EEPS KEYPOINT EEPS ... KEYPOINT\n"
     "                     (default: the default grid's low_mass, giant, supergiant,\n"
     "                     each from its ZAMS)\n"
     "  --pre-ms           the tracks start on their birthline: the default layouts\n"
     "                     with their pre-main sequence (birthline to zams)\n"
     "  --keep-going       drop bad rows (each reported as FILE:LINE:COLUMN) and\n"
     "                     unreadable tracks instead of failing\n"
     "  --force            write the grid even if a route has no track at some\n"
     "                     metallicity or two route boundaries coincide\n"
     "  --route-boundaries [Z:]M1,M2,...\n"
     "                     route-boundary masses (Msun), for one Z or for all;\n"
     "                     checked against the tracks (default: the geometric mean\n"
     "                     of the last track of a route and the first of the next)\n"
     "  --dry-run          check and report only; write nothing\n"
     "  --csv, --json      the report as CSV (one row per track: file, result,\n"
     "                     initial_mass_msun, z, route, rows, n_keypoints, end_age_yr,\n"
     "                     remnant, message, notes) or JSON\n"
     "\n"
     "Problems are reported as FILE:LINE:COLUMN: message on standard error, exit 4.\n"
     "Progress goes to standard error when that is a terminal.\n"
     "\n"
     "Example:\n"
     "  hrtrail import -o my.h5 --map 'age_yr=t*Myr,l_lsun=lum,teff_k=teff,mass_msun=m' \\\n"
     "      --map 'pattern=track_M{mass}_Z{z}.txt' tracks/\n",
     0, OUT_GRID},
    {"codes",
     "Usage: hrtrail codes [--csv | --json]\n"
     "\n"
     "hrtrail's phase and remnant codes, each with its key and name: the integers\n"
     "grid files, the C structs and every binding store (grouped by tens: phases\n"
     "1x hydrogen in the core, 2x hydrogen-shell giants, 3x helium burning and the\n"
     "AGB, 4x massive stars after the main sequence, 5x remnants; remnant kinds 1x\n"
     "white dwarfs, 20 neutron star, 30 black hole), and the keys text output uses.\n"
     "\n"
     "  --csv, --json      one record per code: kind (phase or remnant), code, key,\n"
     "                     name\n"
     "\n"
     "Example:\n"
     "  hrtrail codes --csv\n",
     0, 0},
};

int help_command(const char *cmd, FILE *f)
{
    for (size_t i = 0; i < sizeof helps / sizeof helps[0]; i++) {
        if (strcmp(cmd, helps[i].cmd) != 0 && !(strncmp(cmd, "grid", 4) == 0 && strcmp(helps[i].cmd, "grid") == 0) &&
            !(strcmp(cmd, "population merge") == 0 && strcmp(helps[i].cmd, "population") == 0))
            continue;
        fputs(helps[i].text, f);
        fputs("\n", f);
        if (helps[i].state_cols) fprintf(f, "%s\n", state_cols_text);
        if (helps[i].outputs) fprintf(f, "%s\n", helps[i].outputs == OUT_SVG ? outfile_text : gridfile_text);
        fprintf(f, "%s\n%s\n%s\n%s", common_text, syntax_text, values_text, exit_text);
        return 0;
    }
    return -1;
}
