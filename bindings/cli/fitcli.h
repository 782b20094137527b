/* Shared parts of 'hrtrail fit' and 'hrtrail forecast' (bindings/cli/cmd_fit.c). */
#ifndef HRTRAIL_FITCLI_H
#define HRTRAIL_FITCLI_H

#include "cli.h"

/* Observation and prior options of both commands. */
typedef struct fitopts {
    hrt_fit_obs obs;           /* from the options (NaN: not given) */
    hrt_fit_model_options mo;
    const char *input;         /* --input FILE (fit only) */
    long seed;
    int any_obs;               /* an observation option was given */
} fitopts;

typedef struct fitstar {
    char *name;
    long line;
    hrt_fit_obs obs;
} fitstar;

/* Option table entries handled by fitopt_take() (the commands' cmdopts.more); ids from FIT_OPT_BASE. */
#define FIT_OPT_BASE 100
extern const optdef fit_optdefs[];
void fitopts_init(fitopts *f);
/* 1 if id was one of the fit options (value parsed into f), 0 if not, -1 on a bad value (message printed). */
int fitopt_take(cli *c, fitopts *f, int id, const char *val);
/* Model whose [Fe/H] range covers the stars (+-5 sigma where [Fe/H] is measured). */
int fit_make_model(cli *c, fitopts *f, const fitstar *s, size_t n, hrt_fit_model **m);
/* Message and exit code of a failed fit. */
int fit_failure(const cli *c, const char *who, int code, const char *msg);

#endif
