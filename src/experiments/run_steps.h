/* run_steps.h - which step a run takes next and which outputs fall after it.
 *
 * Fixed steps ([time] step_choice = fixed): every step is step_s; the run
 * has round(duration / step_s) steps and snapshots, checkpoints and log
 * lines fall every round(interval / step_s) steps, as they always did.
 *
 * Adaptive steps (step_choice = adaptive): after each step the next one is
 * chosen from the advective CFL number the state reached and the damping
 * limits (step_limits.h: tg_step_limits_choose). A step that would cross
 * an output time (a multiple of snapshot_every_days, log_every_days or
 * checkpoint_every_days) or the end is shortened to land on it, and the
 * model time is then set to that time exactly; when the output time is
 * less than two chosen steps away, the two steps to it are equal (no
 * sliver of a step). The choice before that shortening ("the wanted step")
 * is what the growth bound starts from; the checkpoint keeps it
 * (tg_run_steps_want), so a resumed run repeats the uninterrupted one bit
 * for bit.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_RUN_STEPS_H
#define TG_RUN_STEPS_H

#include "config.h"
#include "model.h"
#include "step_limits.h"

/* The name of the checkpoint's one-value array that holds the wanted step. */
#define TG_RUN_STEPS_CHECKPOINT_NAME "adaptive_next_step_s"

typedef struct {
    const tg_config *cfg;
    int adaptive;
    long nsteps;                       /* fixed: steps in the run */
    long snap_every, log_every, ckpt_every; /* fixed: steps between outputs (ckpt 0: none) */
    double end_s, snap_s, log_s, ckpt_s;    /* adaptive: the end and the intervals, s */
    double want;                       /* adaptive: the wanted next step, s */
    double landing;                    /* adaptive: the output time the next step lands on, or -1 */
    tg_step_limits core;               /* the core's damping bounds */
    const char *binding;               /* what set the latest wanted step */
} tg_run_steps;

/* What falls at the end of the step just taken. */
typedef struct {
    int snapshot, checkpoint, log, end;
} tg_run_events;

void tg_run_steps_init(tg_run_steps *rs, const tg_config *cfg, const tg_model *m);

/* Is the state at `step` / `time_s` a valid place to start from (a
 * checkpoint inside the run)? */
int tg_run_steps_inside(const tg_run_steps *rs, long step, double time_s);

/* Sets m->dt to the step to take next; call before tg_step. */
void tg_run_steps_next(tg_run_steps *rs, tg_model *m);

/* After tg_step: sets the model time exactly when the step landed on an
 * output time, and (adaptive) chooses the wanted next step from `cfl`, the
 * largest advective CFL number of the step just taken, and the closures'
 * limits at the new state. Returns what falls now. Allocates nothing. */
tg_run_events tg_run_steps_after(tg_run_steps *rs, tg_model *m, double cfl);

/* The outputs at the start (a snapshot at day 0 or on an output time). */
int tg_run_steps_snapshot_now(const tg_run_steps *rs, const tg_model *m);

int tg_run_steps_done(const tg_run_steps *rs, const tg_model *m);

/* An estimate of the step index at the end (fixed: exact). */
long tg_run_steps_last(const tg_run_steps *rs, const tg_model *m);

#endif
