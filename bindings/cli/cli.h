/*
 * Internal declarations of the hrtrail command (bindings/cli).
 * The command uses only the public header hrtrail.h.
 */
#ifndef HRTRAIL_CLI_H
#define HRTRAIL_CLI_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <sys/stat.h>
#include <sys/types.h>

#include "hrtrail.h"

/* Exit codes, documented in hrtrail --help and hrtrail.1. */
enum {
    CLI_EXIT_OK = 0,       /* success */
    CLI_EXIT_INTERNAL = 1, /* out of memory or an internal failure */
    CLI_EXIT_USAGE = 2,    /* bad command line: unknown subcommand or option, missing or unparseable value */
    CLI_EXIT_RANGE = 3,    /* mass, metallicity or age outside what the grid covers */
    CLI_EXIT_FILE = 4      /* file cannot be read or written, grid invalid or failing its check */
};

typedef enum out_format { FMT_TABLE = 0, FMT_CSV = 1, FMT_JSON = 2 } out_format;

/* State shared by every subcommand. */
typedef struct cli {
    const char *cmd;       /* subcommand name for messages, e.g. "at", "grid check" */
    const char *grid_path; /* --grid FILE, NULL for the default grid */
    int interp;            /* hrt_interp */
    out_format fmt;
    int want_help;
    hrt_grid *grid;        /* opened by cli_open_grid() */
    const char *grid_used; /* path of the grid actually opened */
    /* metallicity: --z or --feh (at most one of them) */
    int have_z, have_feh;
    double z_arg, feh_arg;
    const char *z_text;
    hrt_isochrone_options iso; /* what isochrones hold: --phases, --leave-out, --max-dlog-l */
    /* magnitudes (at, isochrone, plot): --vmag, --distance PC, --av MAG */
    int mags;             /* write abs_mbol, bc_v, abs_mv */
    int have_distance;    /* --distance given: also mv */
    double distance_pc;   /* --distance */
    double a_v_mag;       /* --av (0 by default) */
    int have_av;
    /* extra quantities of the grid (at, track, isochrone): --extra NAME,... */
    const char *extra_text;          /* as given; resolved by cli_resolve_extras() */
    size_t n_extra;                  /* columns asked for */
    size_t extra_idx[32];            /* their indices in the grid */
    char extra_head[32][128];        /* table headers: "name [unit]" */
    int ierr;             /* --interp-error (at, track, isochrone): the stored interpolation error of each state */
} cli;

/* --extra: the names given, checked against the grid's extra quantities (after cli_open_grid). */
int cli_resolve_extras(cli *c);

/* ---- memory (the command owns its process: out of memory ends it with exit 1) ---- */
void *xmalloc(size_t n);
void *xcalloc(size_t n, size_t size);
void *xrealloc(void *p, size_t n);
char *xstrdup(const char *s);

/* ---- messages: one line on stderr, "hrtrail CMD: ..."; they return the exit code ---- */
int cli_fail(const cli *c, int code, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
int cli_exit_of_status(int hrt_code);
/* Send cli_fail's messages to f instead of stderr (NULL: stderr again). */
void cli_set_message_sink(FILE *f);

/* ---- parsing values ---- */
int parse_number(const char *s, double *out);
int parse_age_yr(const char *s, double *out);
int parse_count(const char *s, long lo, long hi, long *out);
void format_age(char *buf, size_t n, double age_yr);

typedef struct dlist { size_t n, cap; double *v; char **text; } dlist;
void dlist_push(dlist *l, double v, const char *text);
void dlist_free(dlist *l);
/* Split a comma-separated list of masses (Msun, > 0), ages or Z values into l. */
int add_mass_list(const cli *c, const char *opt, const char *s, dlist *l);
int add_age_list(const cli *c, const char *opt, const char *s, dlist *l);

/* ---- options (opts.c): getopt_long, so long options by any unique prefix, --opt=value or
 * --opt value, bundled short options (-kj4), and '--' ending the options ---- */
enum { OPT_ARG = -1 };  /* the id take() gets for an argument that is no option */
enum { CLI_STOP = -1 }; /* returned when --help was given: the command's help is shown, exit 0 */
enum { ACCEPT_Z = 1u, ACCEPT_FORMAT = 2u, ACCEPT_EXTRA = 4u }; /* ACCEPT_EXTRA: --extra NAME,... */
typedef struct optdef {
    const char *name;  /* long name without "--" */
    char short_name;   /* 0 if none */
    int has_arg;
    int id;            /* > 0 */
} optdef;
typedef struct cmdopts {
    const optdef *defs, *more; /* the command's own options: NULL-terminated tables (more may be NULL) */
    unsigned accept;           /* ACCEPT_Z (--z, --feh), ACCEPT_FORMAT (--csv, --json); --grid, --interp and
                                * --help are always taken; an own option of the same name wins */
    /* An own option (its id) or an argument (OPT_ARG) with its value; 0 or an exit code (message printed). */
    int (*take)(cli *c, void *ctx, int id, const char *val);
    const char *no_args;       /* NULL: arguments go to take(); else they are refused, with this hint ("": none) */
    int before_command;        /* the options before the command: stop at the first argument */
} cmdopts;
typedef struct argparse {
    int argc;
    char **argv; /* argv[0]: the program or the command */
    int next;    /* after cli_parse with before_command: index of the command */
} argparse;
/* Parse the options of p into ctx (through o->take) and the common ones into c, in order.
 * Returns 0, an exit code (message printed), or CLI_STOP when --help was given (main shows it). */
int cli_parse(cli *c, argparse *p, const cmdopts *o, void *ctx);

/* ---- the commands (main.c): one table for running them, the help and the messages ---- */
typedef struct cli_command {
    const char *name;
    int (*run)(cli *c, argparse *p);
    const char *summary; /* one line */
    const char *example; /* lines of examples, separated by newlines */
} cli_command;
extern const cli_command cli_commands[];
extern const size_t cli_n_commands;

/* ---- the grid ---- */
int cli_open_grid(cli *c);
/* hrtrail grid accuracy (cmd_accuracy.c): c->interp -1 for every type; threads 0 for every core;
 * across_z: drop metallicity groups instead of tracks. */
int grid_accuracy(cli *c, int threads, int store, int across_z);
void cli_close_grid(cli *c);
/* Metallicity from --z / --feh (default: the grid's z_ref); checks the grid's range. */
int cli_resolve_z(cli *c, double *z);
int cli_check_z(const cli *c, const char *what, double z);
int cli_check_mass(const cli *c, const char *what, double mass, double z);
double cli_feh(const cli *c, double z);
/* The star of --mass (mass_text as the user wrote it) at metallicity z. */
int cli_new_star(cli *c, const char *mass_text, double mass, double z, hrt_star **s);
const char *cli_route_name(const cli *c, int route);
/* Explain a failed evaluation of one star (mass, z, age): message and exit code. */
int cli_star_failure(const cli *c, const char *who, int code, double mass, double z, double age_yr,
                     const char *libmsg);

/* ---- output ---- */
typedef enum col_type { COL_NUM = 0, COL_TEXT = 1 } col_type;
typedef struct col {
    const char *key;   /* CSV header and JSON key (tracks/FORMAT.md vocabulary): "age_yr"; NULL: tables only */
    const char *head;  /* human table header, with units: "age [Myr]"; NULL: not shown in tables */
    col_type type;
    const char *hfmt;  /* human printf format for numbers, e.g. "%.4f" */
    double hscale;     /* human value = value * hscale (0 means 1) */
} col;
typedef struct table {
    size_t ncol, nrow, cap;
    const col *cols;
    double *num;
    char **text;
} table;
table *table_new(const col *cols, size_t ncol);
size_t table_add_row(table *t);
void table_num(table *t, size_t r, size_t c, double v);
void table_text(table *t, size_t r, size_t c, const char *s);
void table_free(table *t);
void table_write_text(const table *t, FILE *f, const char *indent);
void table_write_csv(const table *t, FILE *f);

/* JSON writer: pretty-printed, non-finite numbers as null. */
typedef struct jw {
    FILE *f;
    int depth;
    int first[64];
} jw;
void jw_init(jw *w, FILE *f);
void jw_begin_object(jw *w, const char *key);
void jw_end_object(jw *w);
void jw_begin_array(jw *w, const char *key);
void jw_end_array(jw *w);
void jw_num(jw *w, const char *key, double v);
void jw_int(jw *w, const char *key, long v);
void jw_str(jw *w, const char *key, const char *s);
void jw_bool(jw *w, const char *key, int v);
void jw_table(jw *w, const char *key, const table *t);
void jw_finish(jw *w);
/* A whole JSON document that is one table: a list of records (pandas.read_json reads it as it is). */
void jw_records(FILE *f, const table *t);
void csv_write_text(FILE *f, const char *s);
void csv_write_num(FILE *f, double v);

/* The command's table on standard output as CSV or as JSON records (1); 0 when the format is the
 * text table, which the caller writes. */
int out_records(const cli *c, const table *t);
/* A table of states: CSV, JSON records, or the heading (NULL: none), the text table and what its
 * phase keys mean. */
void out_states(const cli *c, const table *t, const char *heading);

/* ---- text from files and users (text.c) ---- */
/* Length (1 to 4) of the UTF-8 character at s, its code point in *cp; 0 if the bytes at s are not
 * UTF-8 (a stray or truncated sequence, an overlong form, a surrogate, beyond U+10FFFF). */
size_t utf8_decode(const unsigned char *s, uint32_t *cp);
/* s for a terminal, as a new string: control characters and bytes that are not UTF-8 become visible
 * escapes (\x1b, \u009b; \xff for a byte that is not UTF-8); *bad_utf8 (if not NULL) says whether
 * there were such bytes. */
char *text_safe(const char *s, int *bad_utf8);
void text_write(FILE *f, const char *s);

/* ---- output files (outfile.c) ---- */
/* Standard output ("-"), a device or a FIFO is written in place.  Anything else is written to a new
 * temporary file (mkstemp) beside the file it replaces, which is renamed over it at the end; the
 * file a symbolic link points to is the one replaced (the link stays), with its mode. */
typedef struct outfile {
    FILE *f;
    const char *path; /* as given, for messages; NULL for standard output */
    char *target;     /* the file replaced: path, or the end of its chain of links */
    char *tmp;        /* the temporary beside target; NULL when written in place */
    int direct;       /* written in place */
    int exists;       /* target existed: its mode, owner and group kept */
    struct stat st;   /* of the target */
} outfile;
/* Open path ("-": standard output) for writing; 0 or an exit code (message printed). */
int outfile_open(const cli *c, outfile *o, const char *path);
/* Check every write and put the file in place; 0 or an exit code (message printed).  On a failure the
 * previous file is intact and the temporary gone. */
int outfile_close(const cli *c, outfile *o);
/* Give up: the temporary removed, the target untouched. */
void outfile_abort(outfile *o);
/* A file the library writes itself, atomically (import, grid upgrade, catalogues): a symbolic link
 * resolved to the file it names (*target, to free), standard output, a device, a FIFO or a directory
 * refused (such a file is no stream).  what names the argument in messages.  0 or an exit code. */
int outfile_target(const cli *c, const char *path, const char *what, char **target);

/* ---- states of stars: the common table of at, track, isochrone and demo ---- */
enum { SC_NAME = 1u, SC_STATUS = 2u, SC_MAGS = 4u, SC_MV = 8u, SC_IERR = 16u };
/* The magnitude and error columns the options ask for (SC_MAGS, SC_MV, SC_IERR), for state_table_new. */
unsigned mag_columns(const cli *c);
table *state_table_new(unsigned extra);
/* Append the columns of the extra quantities --extra asked for (before any row is added). */
void state_table_add_extras(table *t, const cli *c);
void state_table_add(table *t, const cli *c, const hrt_state *s, const char *name, const char *status);
void phase_footnote(FILE *f, const table *t);
const char *flags_text(int flags, char *buf, size_t n);

/* ---- reading CSV ---- */
typedef struct csvfile {
    size_t ncol;
    char **head;
    size_t nrow;
    char ***rows;   /* nrow rows of ncol fields */
    long *line;     /* line number of each row */
} csvfile;
int csv_read(const cli *c, const char *path, csvfile *out);
void csv_free(csvfile *f);
/* Index of the column named exactly name (a vocabulary name of tracks/FORMAT.md), or -1. */
long csv_column(const csvfile *f, const char *name);
/* The columns a command reads (names of the vocabulary, tracks/FORMAT.md) and the old spellings it refuses. */
typedef struct csvnames {
    const char *const *known; /* NULL-terminated */
    const char *const *old;   /* old[2*i]: a spelling of an earlier version, old[2*i+1]: today's name; NULL-terminated */
    const char *expected;     /* the columns, for messages */
    int exit_code;            /* of a refused header */
} csvnames;
/* csv_read, then refuse a header that spells one of the known names in another case or uses an
 * old spelling (the message names the file, the column and the expected names). */
int csv_read_named(const cli *c, const char *path, const csvnames *names, csvfile *out);
/* How messages name an input path: "standard input" for "-". */
const char *csv_shown(const char *path);

/* ---- the HR diagram ---- */
typedef struct plot_line {
    size_t n;
    double *log_teff, *log_l_lsun;
    int *phase;
    int *route;
    char *label;
    int is_isochrone;
} plot_line;
typedef struct plot_point {
    double log_teff, log_l_lsun;
    int phase; /* HRT_PHASE_UNKNOWN: plain marker */
    char *label;
} plot_point;
typedef struct plot {
    const char *title;
    const char *subtitle;
    size_t nlines, npoints;
    plot_line *lines;
    plot_point *points;
    int have_xrange, have_yrange;
    double xlo, xhi, ylo, yhi; /* log Teff and y ranges when given */
    int y_kind;                /* what the y axis shows (PLOT_Y_*); the lines' and points' log_l_lsun hold it */
    double y_offset_mag;       /* PLOT_Y_MV: distance modulus plus A_V, mag */
    int width, height;
} plot;
enum { PLOT_Y_LOG_L = 0, PLOT_Y_ABS_MV = 1, PLOT_Y_MV = 2 };
void plot_init(plot *p);
void plot_free(plot *p);
plot_line *plot_add_line(plot *p, size_t n, const char *label, int is_isochrone);
void plot_add_point(plot *p, double log_teff, double log_l, int phase, const char *label);
int plot_add_track(const cli *c, plot *p, const hrt_star *s, const char *label);
int plot_add_isochrone(const cli *c, plot *p, double age_yr, double z, const char *label);
/* Write the SVG; 0 on success, -1 (errno set) on a write failure. */
int plot_write_svg(const plot *p, FILE *f);
/* The SVG to path (NULL or "-": standard output) through an outfile; 0 or an exit code. */
int plot_save(const cli *c, const plot *p, const char *path);
int isochrone_compute(const cli *c, double age_yr, double z, hrt_state **out, size_t *n);

/* ---- one star's timetable (life, demo) ---- */
typedef struct life {
    hrt_star *s;
    table *kp, *ph; /* keypoint ages; phase spans */
    int remnant;
    double remnant_mass, end_age;
} life;
int life_build(cli *c, const char *mass_text, double mass, double z, life *L);
void life_free(life *L);
void life_print_text(const cli *c, const life *L, const char *indent);
/* The timetable as records (keypoint, phase, remnant rows), with a name column if named. */
table *life_records_new(int named);
void life_records_add(const cli *c, const life *L, table *t, const char *name);

/* ---- subcommands ---- */
/* The magnitude options (at, isochrone, plot): put MAG_OPTDEFS in the command's own option table and
 * pass ids >= MAG_OPT_FIRST to mag_option_take; mag_check_options after parsing (--av needs --distance). */
enum { MAG_OPT_FIRST = 600, O_MAG_ABS = MAG_OPT_FIRST, O_MAG_DISTANCE, O_MAG_AV };
#define MAG_OPTDEFS {"vmag", 0, 0, O_MAG_ABS}, {"distance", 0, 1, O_MAG_DISTANCE}, {"av", 0, 1, O_MAG_AV}
int mag_option_take(cli *c, int id, const char *val);
/* --interp-error (at, track, isochrone): columns of hrt_state_interp_error; handled by mag_option_take. */
enum { O_IERR = MAG_OPT_FIRST + 3 };
#define IERR_OPTDEF {"interp-error", 0, 0, O_IERR}
int mag_check_options(const cli *c);
/* Magnitudes of one state (hrt_magnitudes): M_bol, BC_V, M_V, m_V (NaN without --distance), flags. */
void state_magnitudes(const cli *c, const hrt_state *s, double out[4], int32_t *flags);

/* The isochrone options (isochrone, plot): an extra option table and its handler (ids >= ISO_OPT_FIRST). */
enum { ISO_OPT_FIRST = 500 };
extern const optdef iso_more_opts[];
int iso_option_take(cli *c, int id, const char *val);

int cmd_at(cli *c, argparse *p);
int cmd_codes(cli *c, argparse *p);
int cmd_track(cli *c, argparse *p);
int cmd_isochrone(cli *c, argparse *p);
int cmd_life(cli *c, argparse *p);
int cmd_plot(cli *c, argparse *p);
int cmd_grid(cli *c, argparse *p);
int cmd_demo(cli *c, argparse *p);
int cmd_fit(cli *c, argparse *p);
int cmd_mainseq(cli *c, argparse *p);
int cmd_forecast(cli *c, argparse *p);
int cmd_import(cli *c, argparse *p);
int cmd_population(cli *c, argparse *p);

/* ---- populations (cmd_population.c; also used by the demo) ---- */
void pop_print_text(const hrt_pop_summary *s, FILE *f, const char *indent);
void pop_json(const hrt_pop_summary *s, jw *w, int with_hr);
int pop_write_density_svg(const cli *c, plot *p, const hrt_pop_summary *s, const char *path);
int pop_run_progress(const cli *c, const hrt_pop_spec *spec, int threads, size_t n_ages, hrt_pop_summary *sums,
                     int progress);

/* Help texts (help.c). */
void help_main(FILE *f);
int help_command(const char *cmd, FILE *f);

#endif
