/* Structural quantities of the default grid (tracks/structure.c): stored as
 * the grid's extra quantities (tracks/FORMAT.md, "Extra quantities"). */
#ifndef HRTRAIL_TRACKS_STRUCTURE_H
#define HRTRAIL_TRACKS_STRUCTURE_H

enum { GEN_S_ENV = 0, GEN_S_CONV_MASS, GEN_S_CONV_BASE, GEN_S_K2, GEN_S_LOG_EBIND, GEN_S_LAMBDA, GEN_N_STRUCT };

typedef struct gen_struct_info {
    const char *name, *units, *meaning;
} gen_struct_info;

/* Names (the file's), astropy units and meanings, in GEN_S_* order. */
extern const gen_struct_info gen_struct_table[GEN_N_STRUCT];

/* The structural quantities of a star of current mass m and helium core
 * mhe (Msun), log10 L/Lsun, log10 Teff/K, in phase (hrt_phase). */
void gen_structure(double m, double mhe, double logl, double logt, int phase, double out[GEN_N_STRUCT]);

#endif
