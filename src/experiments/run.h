/* run.h - one experiment from a resolved config to its output directory.
 *
 * tg_run sets up the model, takes the initial state (rest, noise or a file;
 * a checkpoint resumes at its step), steps to duration_days with fixed or
 * adaptive steps (run_steps.h), and writes DIR/fields.nc (snapshots),
 * DIR/budget.nc (one record per step) and DIR/checkpoint.nc. It stops cleanly on a stop request (the caller's
 * signal flag), on NaN/Inf and on a CFL above max_cfl, writing the last
 * finite state to the checkpoint each time.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_RUN_H
#define TG_RUN_H

#include <signal.h>

#include "config.h"
#include "status.h"

typedef struct {
    long step, step_first, step_last;  /* current, first and last step of this run */
    double day, last_day;              /* model days now and at the end */
    double kinetic_energy;             /* depth-weighted kinetic energy, m2 s-2 */
    double max_cfl;
} tg_progress;

typedef struct {
    const char *command_line;               /* stored in the files' attributes */
    volatile sig_atomic_t *stop_requested;  /* polled every step; may be NULL */
    int overwrite;                          /* replace existing fields.nc/budget.nc */
    void (*progress)(const tg_progress *p, void *user); /* called every step; may be NULL */
    void *progress_user;
} tg_run_options;

tg_code tg_run(const tg_config *cfg, const tg_run_options *opt, tg_status *st);

#endif
