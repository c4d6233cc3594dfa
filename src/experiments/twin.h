/* twin.h - a twin experiment: one fine reference run, coarse runs of the
 * same domain with the closures compared, and their skill.
 *
 * From one config (its [twin] section, [twin.reference] and [twin.coarse]
 * overrides; config.h):
 *   1. the reference (reference_points) starts from [initial] state and
 *      runs spinup_days;
 *   2. over the analysis window it runs analysis_days more and, at the start
 *      and every sample_every_days, coarse-grains its state (coarsen.h) and
 *      writes the coarse-grained fields, the sub-grid PV forcing and the
 *      sub-grid PV fluxes (subgrid.h) to DIR/subgrid.nc;
 *   3. each closure of [twin] compare (and `none`, always) runs on the
 *      coarse grid (coarse_points) from the coarse-grained reference at the
 *      start of the window for analysis_days, as `twingyre run` does, into
 *      DIR/coarse-NAME/ (stochastic closures: DIR/coarse-NAME-member-K/,
 *      K = 0 .. members - 1; a closure counts as stochastic when two members
 *      give different tendencies on the same state);
 *   4. the skill of each coarse run against the coarse-grained reference
 *      over the window's samples (skill.h) goes to DIR/skill.csv and
 *      DIR/skill.json, and the closures' tendencies against -S_q at the last
 *      sample to DIR/offline.nc.
 * The reference keeps DIR/reference/budget.nc (one record per step),
 * DIR/reference/window_start.nc (a checkpoint at the start of the window,
 * usable as [twin.reference] initial.state of another twin with
 * spinup_days = 0) and DIR/reference/checkpoint.nc (the end). Time in
 * subgrid.nc and in the coarse runs counts from the start of the window.
 *
 * A coarse run that becomes unstable is reported in the skill files
 * ("unstable", no metrics) and the others go on; a reference that becomes
 * unstable, a stop request, or an input/output error ends the twin.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_TWIN_H
#define TG_TWIN_H

#include <signal.h>

#include "config.h"
#include "run.h"
#include "status.h"

typedef struct {
    const char *phase;   /* "spin-up", "reference window", "coarse NAME" (+ " member K") */
    int index, count;    /* this phase's number, 1 .. count */
    tg_progress p;       /* steps of this phase (run.h) */
} tg_twin_progress;

typedef struct {
    const char *command_line;               /* stored in the files' attributes */
    const char *origin;                     /* config file, for messages (may be NULL) */
    volatile sig_atomic_t *stop_requested;  /* polled every step; may be NULL */
    int overwrite;                          /* replace the outputs of an earlier twin */
    /* Called every step of every phase (may be NULL). */
    void (*progress)(const tg_twin_progress *p, void *user);
    void *progress_user;
} tg_twin_options;

/* Runs the twin into cfg->out_directory after checking cfg with
 * tg_config_validate(TG_USE_TWIN) (before anything is written). *table (may be NULL) receives the
 * skill table as text (malloc'ed; the caller frees it) for printing. */
tg_code tg_twin_run(const tg_config *cfg, const tg_twin_options *opt, char **table,
                    tg_status *st);

#endif
