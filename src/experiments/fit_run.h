/* fit_run.h - one closure fit, `twingyre fit`: rows from a twin's
 * subgrid.nc (fit_data.h) folded chunk by chunk into normal equations per
 * window and layer (fit.h), the fit (per layer or shared), skill on the
 * training and test windows, the backward-elimination path, and the
 * coefficients file that `[closure] use = coefficients` loads (basis.h).
 *
 * Memory: one chunk of samples' rows per window (chunk_samples x layers x
 * interior nodes x (terms + 1) doubles) and p x p sums; never the whole
 * design matrix, however many samples the file holds.
 *
 * Output: written to PATH.tmp-PID, checked with tg_coef_read, then renamed
 * onto PATH; an existing PATH is replaced only with overwrite. The design
 * dump (optional) is a netCDF file of the training rows, for cross-checks.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_FIT_RUN_H
#define TG_FIT_RUN_H

#include "fit.h"
#include "fit_data.h"
#include "status.h"

typedef struct {
    const char *input;          /* subgrid.nc */
    const char *output;         /* coefficients file */
    const char *dump_path;      /* NULL: no design dump */
    int overwrite;
    tg_fit_target target;
    int shared;                 /* 1: one coefficient set for all layers */
    int nterms;                 /* 0: every term of the library */
    int terms[TG_FIT_MAX_TERMS];/* basis table indices */
    tg_fit_settings set;
    int train_first, train_last;   /* sample indices, inclusive; -1: all samples */
    int test_first, test_last;     /* -1: no test window */
    int chunk_samples;          /* >= 1 */
    const char *command_line;   /* for the header (may be NULL) */
    /* Called after each sample read (may be NULL). */
    void (*progress)(int done, int total, void *user);
    void *progress_user;
} tg_fit_options;

void tg_fit_options_default(tg_fit_options *o);

/* Runs the fit; *report (may be NULL) receives the printed summary (skill
 * table, coefficients, path; malloc'ed). Errors about the windows name the
 * options --train / --test (TG_ERR_USAGE). */
tg_code tg_fit_run(const tg_fit_options *o, char **report, tg_status *st);

#endif
