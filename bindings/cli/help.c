/* Help texts of the hrtrail command: everything a user needs, without the manual. */
#include <string.h>

#include "cli.h"

static const char common_text[] =
    "Options every command takes:\n"
    "  --grid FILE     track grid (HDF5, hrtrail format); default: the file named by\n"
    "                  the HRTRAIL_GRID environment variable, else the installed grid\n"
    "  --interp NAME   interpolation across initial mass and [Fe/H]: steffen (default,\n"
    "                  monotone, no overshoot), linear, cspline or akima\n"
    "  -h, --help      this help\n";

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
    "  --csv  CSV whose header names carry the units (age_yr, log_L_Lsun, log_Teff_K,\n"
    "         log_R_Rsun, log_g_cgs, mass_Msun, ...), numbers with 17 significant\n"
    "         digits so that they read back exactly; nan where a value is undefined\n"
    "  --json the same keys and digits in JSON; null where a value is undefined or\n"
    "         infinite (such as the end of a phase that lasts forever)\n";

static const char exit_text[] =
    "Exit status:\n"
    "  0  success\n"
    "  1  internal error or out of memory\n"
    "  2  usage: unknown command or option, missing or unparseable value, negative\n"
    "     mass or age\n"
    "  3  outside the grid: mass, metallicity or age the grid does not cover (the\n"
    "     message gives the allowed range)\n"
    "  4  file problem: a file cannot be read or written, a grid is not valid, or\n"
    "     'grid check' found problems\n"
    "Errors are one line on standard error naming the argument or file; nothing is\n"
    "printed on standard output then.\n";

static const char state_cols_text[] =
    "Columns of a state (CSV/JSON key, table header):\n"
    "  initial_mass_Msun  M_init     initial mass, Msun\n"
    "  Z                  Z          metal mass fraction\n"
    "  age_yr             age [Myr]  age since birth\n"
    "  phase              phase      phase key (ms, subgiant, rgb, cheb, eagb, tpagb,\n"
    "                                post_agb, post_rgb, wd, bsg, rsg, wr, ns, bh,\n"
    "                                pre_ms); the\n"
    "                                table ends with what each key means\n"
    "  route                         the grid's route of this mass (CSV/JSON only)\n"
    "  log_L_Lsun         log L      log10 luminosity / nominal solar luminosity\n"
    "  log_Teff_K         log Teff   log10 effective temperature / K\n"
    "  log_R_Rsun         log R      log10 radius / nominal solar radius\n"
    "  log_g_cgs          log g      log10 surface gravity / (cm s^-2)\n"
    "  mass_Msun          M now      current mass, Msun\n"
    "  he_core_Msun       He core    helium core mass, Msun\n"
    "  co_core_Msun       CO core    carbon-oxygen core mass, Msun\n"
    "  eep                EEP        fractional equivalent evolutionary point\n"
    "  phase_fraction, phase_start_yr, phase_end_yr   where in its phase (CSV/JSON)\n"
    "  remnant, remnant_mass_Msun    the remnant the star leaves (CSV/JSON)\n"
    "  flags              notes      before-zams (not modelled: only masses are set),\n"
    "                                remnant (past the track: analytic remnant),\n"
    "                                dark (no light: L, Teff undefined),\n"
    "                                extrapolated (just outside its route's tracks)\n";

static const char accuracy_text[] =
    "Accuracy: answers are as good as the grid. The default grid is a semi-analytic\n"
    "model built from published relations, meant for population-level work, not for\n"
    "precision stellar physics.\n";

void help_main(FILE *f)
{
    const char *def = hrt_default_grid_path();
    fprintf(f,
            "hrtrail %s: stellar evolution tracks, isochrones and timetables from a track grid\n"
            "\n"
            "Usage: hrtrail [--grid FILE] [--interp NAME] COMMAND [OPTIONS]\n"
            "\n"
            "Commands:\n"
            "  at         state of one or many stars at given ages\n"
            "               hrtrail at --mass 2.3 --z 0.008 --age 800Myr\n"
            "  track      one star's track: at its EEPs, evenly in log age, or at given ages\n"
            "               hrtrail track --mass 1 --steps 50 --csv\n"
            "  isochrone  stars of every initial mass at one or several ages, one Z\n"
            "               hrtrail isochrone --age 1Gyr --z 0.014 --csv > iso.csv\n"
            "  life       a star's timetable: keypoint ages, phases, route and remnant\n"
            "               hrtrail life --mass 2.3 --feh -0.24\n"
            "  plot       an HR diagram as SVG: tracks, isochrones, points from a CSV\n"
            "               hrtrail plot --track 1,2,5 --isochrone 1Gyr -o hr.svg\n"
            "  grid       what a grid holds (grid info) or whether it is sound (grid check)\n"
            "               hrtrail grid info; hrtrail grid check --grid my.h5\n"
            "  demo       worked example: an invented cluster's members, their timetables\n"
            "             and fates, its turnoff mass, and its HR diagram (SVG)\n"
            "               hrtrail demo\n"
            "  import     build a grid from text tracks with a column map, and report\n"
            "               hrtrail import -o my.h5 --map-file map.txt tracks/\n"
            "\n"
            "Run 'hrtrail COMMAND --help' for the options of each command.\n"
            "\n"
            "%s"
            "  --version       versions of the command, the library, its ABI and grid format\n"
            "  The default grid now: %s\n"
            "\n%s\n%s\n%s\n%s",
            HRT_VERSION_STRING, common_text, def ? def : "(none found)", values_text, output_text, exit_text,
            accuracy_text);
}

static const struct help_entry { const char *cmd; const char *text; int state_cols; } helps[] = {
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
     "                         Columns (case-insensitive): mass (or initial_mass_Msun),\n"
     "                         age (or age_yr; units allowed: 800Myr), z or feh,\n"
     "                         and an optional name. A column the file lacks comes\n"
     "                         from a single --mass, --age or --z. Lines starting\n"
     "                         with # are skipped.\n"
     "  -k, --keep-going       print every star even if some fail: failed stars get a\n"
     "                         status column and nan values, a message each on\n"
     "                         standard error, and the exit status of the first failure\n"
     "  --csv, --json          CSV or JSON instead of the table\n"
     "\n"
     "Before its zero-age main sequence a star is not modelled: phase pre_ms, flag\n"
     "before-zams. Past the end of its track a star is its remnant (white dwarf\n"
     "cooling, neutron star, black hole).\n"
     "\n"
     "Examples:\n"
     "  hrtrail at --mass 2.3 --z 0.008 --age 800Myr\n"
     "  hrtrail at --mass 1,1.5,2 --age 1Gyr,2Gyr --csv\n"
     "  printf 'name,mass,age\\nA,1.0,4.6Gyr\\nB,3,300Myr\\n' | hrtrail at --input - --json\n",
     1},
    {"track",
     "Usage: hrtrail track --mass M [--z Z | --feh X] [--eeps | --steps N | --ages LIST] [OPTIONS]\n"
     "\n"
     "One star's track, interpolated from the grid.\n"
     "\n"
     "  -m, --mass M       initial mass, Msun\n"
     "  --z Z | --feh X    metallicity (default: the grid's Z_ref)\n"
     "  --eeps             one row per equivalent evolutionary point (the default):\n"
     "                     from the zero-age main sequence to the end of the track\n"
     "  -n, --steps N      N ages evenly spaced in log age, from the zero-age main\n"
     "                     sequence to the end of the track unless --from/--to say\n"
     "  -a, --ages LIST    at these ages, e.g. 100Myr,1Gyr,5Gyr (past the end of the\n"
     "                     track: the remnant)\n"
     "  --from AGE         first age (with --steps), or keep EEPs from this age on\n"
     "  --to AGE           last age (with --steps; may lie beyond the track's end when\n"
     "                     the remnant is known), or keep EEPs up to this age\n"
     "  --csv, --json      CSV or JSON instead of the table\n"
     "\n"
     "Examples:\n"
     "  hrtrail track --mass 1 --z 0.014\n"
     "  hrtrail track --mass 2.3 --feh -0.24 --steps 200 --csv > track.csv\n"
     "  hrtrail track --mass 5 --ages 10Myr,50Myr,100Myr --json\n",
     1},
    {"isochrone",
     "Usage: hrtrail isochrone --age AGE[,AGE...] [--z Z | --feh X] [OPTIONS]\n"
     "\n"
     "The isochrone: at each age, the stars of every initial mass the grid covers,\n"
     "sampled at the grid's EEPs (so fast phases get as many points as the grid has\n"
     "EEPs there). Points are ordered by route, then EEP, then initial mass. Remnants\n"
     "are not included. With several ages the rows of all ages follow each other;\n"
     "the age_yr column tells them apart.\n"
     "\n"
     "  -a, --age AGE[,AGE...]  ages (> 0), e.g. 1Gyr or 100Myr,1Gyr,5Gyr\n"
     "  --z Z | --feh X         metallicity (default: the grid's Z_ref)\n"
     "  --csv, --json           CSV or JSON instead of the table\n"
     "\n"
     "Examples:\n"
     "  hrtrail isochrone --age 1Gyr --z 0.014 --csv > iso-1gyr.csv\n"
     "  hrtrail isochrone --age 100Myr,1Gyr --feh -0.5 --json\n",
     1},
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
     "  --csv                one row per record: initial_mass_Msun, Z, route, record\n"
     "                       (keypoint, phase or remnant), key (keypoint name, phase\n"
     "                       key or remnant key), start_yr (keypoint age, phase start,\n"
     "                       or age at which the remnant forms), end_yr, duration_yr,\n"
     "                       mass_Msun (remnant mass)\n"
     "  --json               {stars: [{route, keypoints, phases, remnant}]}\n"
     "\n"
     "Remnant keys: he_wd, co_wd, one_wd (helium, carbon-oxygen, oxygen-neon white\n"
     "dwarf), ns (neutron star), bh (black hole), none (not known: the track ends\n"
     "early).\n"
     "\n"
     "Examples:\n"
     "  hrtrail life --mass 2.3 --z 0.008\n"
     "  hrtrail life --mass 1,5,20 --json\n",
     0},
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
     "\n"
     "  -t, --track M[,M...]        tracks of these initial masses, Msun\n"
     "  -a, --isochrone AGE[,...]   isochrones at these ages\n"
     "  -p, --points FILE           stars from a CSV ('-': standard input) with columns\n"
     "                              log_Teff_K and log_L_Lsun, optional name (label)\n"
     "                              and phase (ring colour); 'hrtrail at --csv' writes\n"
     "                              such a file. Rows with nan are skipped.\n"
     "  --z Z | --feh X             metallicity of tracks and isochrones\n"
     "  --title TEXT                title (default: Hertzsprung-Russell diagram)\n"
     "  --log-teff LO,HI            log10 Teff/K range (default: fit the data)\n"
     "  --log-l LO,HI               log10 L/Lsun range (default: fit the data)\n"
     "  -o, --output FILE           SVG file (default: standard output)\n"
     "\n"
     "Examples:\n"
     "  hrtrail plot --track 1,2,5 --isochrone 300Myr,1Gyr -o hr.svg\n"
     "  hrtrail at --mass 1,2 --age 1Gyr --csv | hrtrail plot --points - --isochrone 1Gyr -o stars.svg\n",
     0},
    {"grid",
     "Usage: hrtrail grid info [FILE] [--grid FILE] [--csv | --json]\n"
     "       hrtrail grid check [FILE] [--grid FILE] [--csv | --json]\n"
     "\n"
     "  info   what the grid holds: file, size on disk and in memory, provenance\n"
     "         (description, source, created_by), Z_ref, every metallicity with its\n"
     "         [Fe/H], number of tracks, mass range, tracks per route and route-boundary\n"
     "         masses, every route with its EEPs and keypoints, and the masses.\n"
     "         --csv: one row per track (Z, feh, initial_mass_Msun, route, n_eep);\n"
     "         --json: all of it.\n"
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
     "\n"
     "FILE is the grid (as --grid); without one, the default grid.\n"
     "\n"
     "Examples:\n"
     "  hrtrail grid info\n"
     "  hrtrail grid check my-grid.h5\n",
     0},
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
     "  -o, --output FILE  the SVG (default: marrowind-hr.svg in the current directory)\n"
     "  --csv              the members' states as CSV (columns as in hrtrail at)\n"
     "  --json             everything: cluster, members now, timetables, fates\n",
     0},
    {"import",
     "Usage: hrtrail import -o GRID.h5 [--map SPEC]... [--map-file FILE]... [--z Z]\n"
     "                      [--routes FILE] [--keep-going] [--dry-run] [--csv | --json]\n"
     "                      FILE|DIR [[--z Z] FILE|DIR ...]\n"
     "\n"
     "Builds a grid from text tracks: one file per initial mass, a header line,\n"
     "columns separated by commas or blanks, '#' comments. Finds the keypoints of\n"
     "each track (criteria in tracks/FORMAT.md), assigns its route from the\n"
     "keypoints it reaches, resamples it onto EEPs, estimates the route-boundary\n"
     "masses per metallicity and writes the grid atomically. Prints what it did\n"
     "with every track: keypoints found (age, line, how), what was dropped and why.\n"
     "\n"
     "  -o, --output FILE  the grid to write (nothing is written if the import fails)\n"
     "  --map SPEC         column map entries key=column[*unit], comma-separated:\n"
     "                     age (or log_age) with unit yr, kyr, Myr, Gyr; log_L or L;\n"
     "                     log_Teff or Teff; log_R or R; mass; center_h1; center_he4;\n"
     "                     he_core_mass; co_core_mass; phase (keys ms, rgb, ... or\n"
     "                     codes); keypoints (explicit keypoint names, '-' for none);\n"
     "                     initial_mass and Z (a number or a column); feh;\n"
     "                     pattern=NAME with {mass}, {z}, {feh} and '*' for file names;\n"
     "                     z_ref. Unmapped quantities use columns named like the key\n"
     "  --map-file FILE    the same entries, one or more per line\n"
     "  --z Z              metallicity of the files and directories that follow\n"
     "  --routes FILE      route layouts, one per line:\n"
     "                     NAME: KEYPOINT EEPS KEYPOINT EEPS ... KEYPOINT\n"
     "                     (default: the default grid's low_mass, giant, supergiant)\n"
     "  --keep-going       drop unreadable tracks and rows with NaN instead of failing\n"
     "  --dry-run          check and report only; write nothing\n"
     "  --csv, --json      the report as CSV (one row per track) or JSON\n"
     "\n"
     "Problems are reported as FILE:LINE:COLUMN: message on standard error, exit 4.\n"
     "Progress goes to standard error when that is a terminal.\n"
     "\n"
     "Example:\n"
     "  hrtrail import -o my.h5 --map 'age=t*Myr,L=lum,Teff=teff,mass=m' \\\n"
     "      --map 'pattern=track_M{mass}_Z{z}.txt' tracks/\n",
     0},
};

int help_command(const char *cmd, FILE *f)
{
    for (size_t i = 0; i < sizeof helps / sizeof helps[0]; i++) {
        if (strcmp(cmd, helps[i].cmd) != 0 && !(strncmp(cmd, "grid", 4) == 0 && strcmp(helps[i].cmd, "grid") == 0))
            continue;
        fputs(helps[i].text, f);
        fputs("\n", f);
        if (helps[i].state_cols) fprintf(f, "%s\n", state_cols_text);
        fprintf(f, "%s\n%s\n%s", common_text, values_text, exit_text);
        return 0;
    }
    return -1;
}
