/* run_steps.c - step choice and output times of a run (run_steps.h). */
#include "run_steps.h"

#include <math.h>

#include "constants.h"

static long steps_for(double days, double dt)
{
    return (long)llround(days * TG_SECONDS_PER_DAY / dt);
}

/* Relative tolerance for "t is a multiple of the interval": the model time
 * is set exactly on landing, so this only absorbs the rounding of k * every
 * computed for two intervals that share a time. */
#define ON_TIME_TOL 1e-9

static int on_multiple(double t, double every)
{
    if (!(every > 0.0) || t <= 0.0)
        return 0;
    return fabs(t - every * (double)llround(t / every)) <= ON_TIME_TOL * every;
}

/* The first multiple of `every` after t. */
static double next_multiple(double t, double every)
{
    return every * (floor(t / every + ON_TIME_TOL) + 1.0);
}

void tg_run_steps_init(tg_run_steps *rs, const tg_config *cfg, const tg_model *m)
{
    const double dt = cfg->step_s;
    *rs = (tg_run_steps){.cfg = cfg, .adaptive = cfg->step_choice == TG_STEP_ADAPTIVE,
                         .landing = -1.0, .want = dt, .binding = "first step"};
    rs->nsteps = steps_for(cfg->duration_days, dt);
    rs->snap_every = steps_for(cfg->snapshot_every_days, dt) > 0
                         ? steps_for(cfg->snapshot_every_days, dt) : 1;
    rs->log_every = steps_for(cfg->log_every_days, dt) > 0 ? steps_for(cfg->log_every_days, dt)
                                                            : 1;
    rs->ckpt_every = steps_for(cfg->checkpoint_every_days, dt);
    rs->end_s = cfg->duration_days * TG_SECONDS_PER_DAY;
    rs->snap_s = cfg->snapshot_every_days * TG_SECONDS_PER_DAY;
    rs->log_s = cfg->log_every_days * TG_SECONDS_PER_DAY;
    rs->ckpt_s = cfg->checkpoint_every_days * TG_SECONDS_PER_DAY;
    tg_step_limits_core(m, &rs->core);
}

int tg_run_steps_inside(const tg_run_steps *rs, long step, double time_s)
{
    if (rs->adaptive)
        return step >= 0 && time_s >= 0.0 && time_s <= rs->end_s;
    return step >= 0 && step <= rs->nsteps;
}

void tg_run_steps_next(tg_run_steps *rs, tg_model *m)
{
    if (!rs->adaptive) {
        m->dt = rs->cfg->step_s;
        return;
    }
    const double t = m->time_s;
    double ev = rs->end_s;
    const double every[3] = {rs->snap_s, rs->log_s, rs->ckpt_s};
    for (int k = 0; k < 3; k++)
        if (every[k] > 0.0)
            ev = fmin(ev, next_multiple(t, every[k]));
    const double left = ev - t;
    rs->landing = -1.0;
    if (left <= rs->want) {
        m->dt = left;
        rs->landing = ev;
    } else if (left < 2.0 * rs->want) {
        m->dt = 0.5 * left; /* two equal steps instead of a full one and a sliver */
    } else {
        m->dt = rs->want;
    }
}

tg_run_events tg_run_steps_after(tg_run_steps *rs, tg_model *m, double cfl)
{
    tg_run_events e = {0};
    if (!rs->adaptive) {
        const long s = m->step;
        e.end = s >= rs->nsteps;
        e.snapshot = s % rs->snap_every == 0;
        e.checkpoint = rs->ckpt_every > 0 && s % rs->ckpt_every == 0 && !e.end;
        e.log = s % rs->log_every == 0 || e.end;
        return e;
    }
    if (rs->landing >= 0.0)
        m->time_s = rs->landing; /* exactly the output time, not a sum of steps */
    const double t = m->time_s;
    e.end = t >= rs->end_s;
    e.snapshot = on_multiple(t, rs->snap_s);
    e.checkpoint = on_multiple(t, rs->ckpt_s) && !e.end;
    e.log = on_multiple(t, rs->log_s) || e.end;
    tg_step_limits L = rs->core;
    tg_step_limits_closures(m, &L);
    rs->want = tg_step_limits_choose(rs->cfg, &L, cfl / m->dt, rs->want, &rs->binding);
    return e;
}

int tg_run_steps_snapshot_now(const tg_run_steps *rs, const tg_model *m)
{
    if (!rs->adaptive)
        return m->step % rs->snap_every == 0;
    return m->time_s == 0.0 || on_multiple(m->time_s, rs->snap_s);
}

int tg_run_steps_done(const tg_run_steps *rs, const tg_model *m)
{
    return rs->adaptive ? m->time_s >= rs->end_s : m->step >= rs->nsteps;
}

long tg_run_steps_last(const tg_run_steps *rs, const tg_model *m)
{
    if (!rs->adaptive)
        return rs->nsteps;
    return m->step + (long)ceil((rs->end_s - m->time_s) / rs->want);
}
