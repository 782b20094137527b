/*
 * Internal interface between the parts of the default-grid model: model.c
 * (composition, main sequence, winds, track assembly, supergiants) and
 * model_giant.c (what follows the main sequence on the low-mass and giant
 * routes: subgiants, giant branches, helium burning, the AGB, the way to the
 * white dwarf).  Not installed; the generator's own.
 */
#ifndef HRTRAIL_GEN_MODEL_INTERNAL_H
#define HRTRAIL_GEN_MODEL_INTERNAL_H

#include "model.h"

#define PI 3.14159265358979323846

typedef struct ms_model {
    double logl_z, logr_z; /* ZAMS */
    double a;              /* L = L_Z / (1 - a tau) */
    double log_r, log_rr;  /* log10 L_TAMS/L_ZAMS, log10 R_TAMS/R_ZAMS */
    double p;              /* radius growth: log(R/R_Z) = log_rr (log(L/L_Z) / log_r)^p */
    double t_ms;           /* yr, ZAMS to TAMS */
    double tau_field;      /* fractional main-sequence age the field relations describe */
} ms_model;

/* The track being computed and the star's running state. */
typedef struct ctx {
    const gen_params *p;
    gen_track *t;
    double m0, z, x, zeta, b;
    ms_model ms;
    /* running state */
    double age, m, mhe, mco, logl, logt;
    int err;
} ctx;

/* Smooth helpers (model.c). */
double logistic(double x);
double sstep(double x, double a, double b);
double smax(double a, double b, double k);
double smin(double a, double b, double k);
double smin_pos(double a, double b);
double soft_table(const double *x, const double *y, int n, double w, double xq);

/* Relations shared by the routes (model.c). */
double q_tams(double m);
double logt_from_lr(double logl, double logr);
double logr_from_lt(double logl, double logt);
double mdot_reimers(const gen_params *p, double logl, double logr, double m);
double mc_tip_degenerate(double zeta);
double f_cheb(double m);

/* Track assembly (model.c). */
void push(ctx *c, double age, double logl, double logt, double m, double mhe, double mco, int phase);
void keypoint(ctx *c);
void set_last_phase(ctx *c, int phase);
void seg_ms(ctx *c);

/* After the main sequence (model_giant.c): from the TAMS state seg_ms leaves
 * in c to the white-dwarf onset, with the route's keypoints. */
void low_after_ms(ctx *c);
void giant_after_ms(ctx *c);

#endif
