/* run.c - the experiment driver (run.h): initial state, stepping, output,
 * faults and stop requests. Everything is allocated before the first step,
 * including the kinetic-energy spectrum written with each snapshot. */
#define _POSIX_C_SOURCE 200809L
#include "run.h"
#include "textfile.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "budget.h"
#include "constants.h"
#include "initial.h"
#include "model.h"
#include "ncio.h"
#include "spectrum.h"
#include "run_steps.h"
#include "stepper.h"

#ifndef PACKAGE_VERSION
#define PACKAGE_VERSION "unknown"
#endif

/* One extra array per closure with its own state, and one for the wanted
 * adaptive step (run_steps.h). */
#define RUN_MAX_EXTRA (TG_MAX_CLOSURES + 1)

typedef struct {
    tg_model *m;
    const tg_config *cfg;
    const tg_run_options *opt;
    tg_nc_grid grid;
    double *psi_out, *q_out;
    tg_spectrum *spec;   /* one layer's spectrum, made at set-up */
    double *spec_out;    /* nl*nbins, layer k at k*nbins: what a snapshot writes */
    char path_fields[TG_PATH_LEN + 16], path_budget[TG_PATH_LEN + 16], path_ckpt[TG_PATH_LEN + 16];
    char *cfg_text;
    tg_fields_file *ff;
    tg_budget_file *bf;
    tg_budget_layout lay;
    double *rec;         /* one budget record */
    tg_run_steps steps;
    tg_diag before, after;
    tg_term_rates rates;
    double worst_e, worst_z; /* worst relative budget residuals since the last log line */
    /* Closure components' own state, written to the checkpoint as extras;
     * with adaptive steps the wanted step follows them (write_checkpoint). */
    int nextra;
    char extra_name[RUN_MAX_EXTRA][96];
    const char *extra_names[RUN_MAX_EXTRA];
    double *extra_buf[RUN_MAX_EXTRA];
    double *extra_start[RUN_MAX_EXTRA]; /* the state at the start of the step being taken */
    const double *extra_data[RUN_MAX_EXTRA];
    size_t extra_len[RUN_MAX_EXTRA];
    int extra_comp[RUN_MAX_EXTRA];
    double want_buf;     /* the wanted step as the checkpoint stores it */
    int resume_here;     /* the initial state is this folder's checkpoint.nc: continue its files */
    int made_dir;        /* the output folder did not exist before this run */
    int stepping;        /* set once the set-up is done and steps begin */
} run_ctx;

/* Buffers for the closure components that keep their own state. */
static tg_code setup_extras(run_ctx *c, tg_status *st)
{
    const tg_closure_host *h = c->m->closures;
    for (int k = 0; k < tg_closure_host_count(h); k++) {
        size_t n = tg_closure_host_state_size(h, k);
        if (n == 0)
            continue;
        int e = c->nextra;
        snprintf(c->extra_name[e], sizeof c->extra_name[e], "closure_state_%s",
                 tg_closure_host_label(h, k));
        c->extra_buf[e] = malloc(sizeof(double) * n);
        c->extra_start[e] = malloc(sizeof(double) * n);
        if (!c->extra_buf[e] || !c->extra_start[e]) {
            free(c->extra_buf[e]);
            free(c->extra_start[e]);
            return tg_fail(st, TG_ERR_NOMEM, "run: no memory for the state of closure %s",
                           tg_closure_host_label(h, k));
        }
        c->extra_names[e] = c->extra_name[e];
        c->extra_data[e] = c->extra_buf[e];
        c->extra_len[e] = n;
        c->extra_comp[e] = k;
        c->nextra++;
    }
    return TG_OK;
}

/* Resumes the closures' own state from a checkpoint; a checkpoint written
 * without that component leaves the component's fresh state (with a warning). */
static tg_code load_extras(run_ctx *c, const char *path, tg_status *st)
{
    for (int e = 0; e < c->nextra; e++) {
        tg_status rs;
        tg_status_clear(&rs);
        if (tg_checkpoint_read_extra(path, c->extra_name[e], c->extra_buf[e], c->extra_len[e],
                                     &rs) != TG_OK) {
            tg_log(TG_LOG_WARN, "%s: no %s of the right size (%s); closure %s starts afresh", path,
                   c->extra_name[e], rs.msg, tg_closure_host_label(c->m->closures, c->extra_comp[e]));
            continue;
        }
        tg_code rc = tg_closure_host_state_load(c->m->closures, c->extra_comp[e], c->extra_buf[e],
                                                c->extra_len[e], st);
        if (rc != TG_OK)
            return rc;
    }
    return TG_OK;
}

/* The wanted adaptive step from a checkpoint; step_s when the checkpoint
 * has none (it was written with fixed steps, or by an older version). */
static void load_want(run_ctx *c, const char *path)
{
    tg_status rs;
    tg_status_clear(&rs);
    double want;
    if (tg_checkpoint_read_extra(path, TG_RUN_STEPS_CHECKPOINT_NAME, &want, 1, &rs) == TG_OK &&
        want > 0.0 && isfinite(want)) {
        c->steps.want = want;
        return;
    }
    tg_log(TG_LOG_INFO, "%s: no %s; adaptive steps start again from step_s = %g s", path,
           TG_RUN_STEPS_CHECKPOINT_NAME, c->cfg->step_s);
}

static tg_code write_checkpoint(run_ctx *c, tg_status *st)
{
    tg_model_pack(c->m, c->m->psi, c->psi_out);
    tg_model_pack(c->m, c->m->q, c->q_out);
    for (int e = 0; e < c->nextra; e++)
        tg_closure_host_state_save(c->m->closures, c->extra_comp[e], c->extra_buf[e]);
    int n = c->nextra;
    if (c->steps.adaptive) {
        c->want_buf = c->steps.want;
        c->extra_names[n] = TG_RUN_STEPS_CHECKPOINT_NAME;
        c->extra_data[n] = &c->want_buf;
        c->extra_len[n] = 1;
        n++;
    }
    tg_checkpoint ck = {.time_s = c->m->time_s, .step = c->m->step, .psi = c->psi_out,
                        .q = c->q_out, .nextra = n, .extra_names = c->extra_names,
                        .extra_data = c->extra_data, .extra_len = c->extra_len};
    return tg_checkpoint_write(c->path_ckpt, &c->grid, &ck, st);
}

/* Writes psi, q and each layer's kinetic-energy spectrum. The spectrum reads
 * the derived psi (with its wall value) and only scratch of the geometry,
 * so the state, and hence the run, does not depend on when snapshots are
 * taken. */
static tg_code write_snapshot(run_ctx *c, tg_fields_file *f, tg_status *st)
{
    tg_model *m = c->m;
    tg_code rc;
    const int nb = c->spec->nbins;
    for (int k = 0; k < m->nl; k++) {
        if ((rc = tg_spectrum_compute(c->spec, m->geom, m->psi + k * m->npl, m->wall[k], st)) !=
            TG_OK)
            return rc;
        memcpy(c->spec_out + (size_t)k * nb, c->spec->e, sizeof(double) * (size_t)nb);
    }
    tg_model_pack(m, m->psi, c->psi_out);
    tg_model_pack(m, m->q, c->q_out);
    return tg_fields_append(f, m->time_s, c->psi_out, c->q_out, c->spec_out, st);
}

static tg_code initial_state(run_ctx *c, tg_status *st)
{
    const tg_config *cfg = c->cfg;
    tg_model *m = c->m;
    tg_initial_info info;
    tg_code rc = tg_state_initial(m, cfg, &info, st);
    if (rc == TG_OK && c->resume_here && !(info.has_q && info.has_time))
        return tg_fail(st, TG_ERR_IO, "%s: not a checkpoint (no q, time and step), so the run "
                       "cannot resume from it in its own folder", cfg->initial_path);
    if (rc != TG_OK || !(info.has_q && info.has_time))
        return rc;
    /* A checkpoint (initial.h took its PV): resume at its step and time,
     * with the closures' own variables and the wanted step, bitwise. */
    if (!tg_run_steps_inside(&c->steps, info.step, info.time_s))
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: the checkpoint is at step %ld (day %.6g), outside this "
                       "experiment's %g days ([time] duration_days counts from day 0)",
                       cfg->initial_path, info.step, info.time_s / TG_SECONDS_PER_DAY,
                       cfg->duration_days);
    /* With fixed steps, time = step * dt (as the stepper keeps it): a
     * checkpoint whose time says otherwise was written with another step
     * size or with adaptive steps. (tg_initial_read already checked that
     * step is whole and time finite and >= 0.) */
    const double want = (double)info.step * cfg->step_s;
    if (!c->steps.adaptive && fabs(info.time_s - want) > 1e-9 * fmax(want, cfg->step_s))
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: the checkpoint is at step %ld and day %.9g, but step %ld of "
                       "[time] step_s = %g s is day %.9g: it was written with another step "
                       "size or with adaptive steps (resume those with [time] step_choice = "
                       "adaptive)",
                       cfg->initial_path, info.step, info.time_s / TG_SECONDS_PER_DAY, info.step,
                       cfg->step_s, want / TG_SECONDS_PER_DAY);
    m->step = info.step;
    /* Fixed steps: step * dt, as the stepper keeps it; adaptive: the time saved. */
    m->time_s = c->steps.adaptive ? info.time_s : want;
    if (c->steps.adaptive)
        load_want(c, cfg->initial_path);
    return load_extras(c, cfg->initial_path, st);
}

static void log_summary(const run_ctx *c)
{
    const tg_model *m = c->m;
    const tg_diag *d = &c->after;
    const tg_term_rates *r = &c->rates;
    char z[256] = "", e[256] = "", how[96] = "";
    size_t len = 0;
    for (int k = 0; k < m->nl && len < sizeof z; k++)
        len += (size_t)snprintf(z + len, sizeof z - len, "%s%.4e", k ? " " : "", d->enstrophy[k]);
    /* The energy rates of the terms this configuration has (a basin has no
     * mean flow, a config without wind no wind term). */
    static const struct {
        int term;
        const char *name;
    } shown[] = {{TG_TERM_WIND, "wind"}, {TG_TERM_MEAN_FLOW, "mean flow"},
                 {TG_TERM_BOTTOM_DRAG, "drag"}, {TG_TERM_VISCOSITY, "viscosity"},
                 {TG_TERM_CLOSURE, "closure"}};
    len = 0;
    for (size_t i = 0; i < sizeof shown / sizeof shown[0] && len < sizeof e; i++)
        if (m->term_active[shown[i].term])
            len += (size_t)snprintf(e + len, sizeof e - len, "%s%s %+.3e", len ? ", " : "",
                                    shown[i].name, r->energy[shown[i].term]);
    if (c->steps.adaptive)
        snprintf(how, sizeof how, ", next step %.4g s (%s)", c->steps.want, c->steps.binding);
    tg_log(TG_LOG_INFO,
           "day %.2f step %ld: energy %.6e m2 s-2 (%s%s), enstrophy [%s] s-2, max CFL %.3f%s, "
           "worst relative budget residual since last line: energy %.1e, enstrophy %.1e",
           m->time_s / TG_SECONDS_PER_DAY, m->step, d->energy, len ? e : "no forcing or damping",
           len ? " m2 s-3" : "", z, d->max_cfl, how, c->worst_e, c->worst_z);
}

/* 1 when the initial state is this run's own checkpoint.nc (the same file):
 * the run then continues the folder's fields.nc and budget.nc. */
static int resumes_here(const tg_config *cfg, const run_ctx *c)
{
    struct stat a, b;
    return cfg->initial_kind == TG_INIT_FILE && stat(cfg->initial_path, &a) == 0 &&
           stat(c->path_ckpt, &b) == 0 && a.st_dev == b.st_dev && a.st_ino == b.st_ino;
}

static tg_code check_outputs_free(const char *dir, const run_ctx *c, int overwrite, tg_status *st)
{
    if (overwrite)
        return TG_OK;
    const char *paths[] = {c->path_fields, c->path_budget, c->path_ckpt};
    for (int i = 0; i < 3; i++)
        if (access(paths[i], F_OK) == 0)
            return tg_fail(st, TG_ERR_IO,
                           "%s already exists; choose another output directory than %s or pass "
                           "--overwrite",
                           paths[i], dir);
    return TG_OK;
}

/* The model and every buffer of the run, before anything is written. */
static tg_code set_up(run_ctx *c, tg_status *st)
{
    c->m = tg_model_create(c->cfg, st);
    if (!c->m)
        return st->code ? st->code : TG_ERR_INTERNAL;
    tg_model *m = c->m;
    const long nout3 = (long)m->nl * m->nout * m->nout;
    c->psi_out = malloc(sizeof(double) * nout3);
    c->q_out = malloc(sizeof(double) * nout3);
    c->rec = malloc(sizeof(double) * TG_BUDGET_MAX_VARS * TG_MAX_LAYERS);
    c->cfg_text = tg_config_to_ini(c->cfg);
    if (!c->psi_out || !c->q_out || !c->rec || !c->cfg_text)
        return tg_fail(st, TG_ERR_NOMEM, "run: no memory for output buffers");
    c->spec = tg_spectrum_create(m->geom, st);
    if (!c->spec)
        return st->code ? st->code : TG_ERR_INTERNAL;
    c->spec_out = malloc(sizeof(double) * (size_t)m->nl * (size_t)c->spec->nbins);
    if (!c->spec_out)
        return tg_fail(st, TG_ERR_NOMEM, "run: no memory for %d layers of %d spectrum bins",
                       m->nl, c->spec->nbins);
    tg_run_steps_init(&c->steps, c->cfg, m);
    return setup_extras(c, st);
}

/* fields.nc and budget.nc: only after every input has been checked. */
static tg_code open_outputs(run_ctx *c, tg_status *st)
{
    tg_model *m = c->m;
    tg_code rc = tg_make_dirs(c->cfg->out_directory, st);
    if (rc != TG_OK)
        return rc;
    c->grid = (tg_nc_grid){.nx = m->nout, .ny = m->nout, .nlayers = m->nl,
                           .x = tg_model_out_coord(m), .y = tg_model_out_coord(m),
                           .config_text = c->cfg_text,
                           .command_line = c->opt->command_line ? c->opt->command_line : "",
                           .title = "twingyre layered quasi-geostrophic experiment"};
    const tg_nc_wavenumbers wn = {.nbins = c->spec->nbins, .k = c->spec->k,
                                  .bin_width = c->spec->dk};
    tg_budget_layout_init(&c->lay, m->nl, m->term_active);
    const char *labels[TG_MAX_CLOSURES];
    int nc = tg_closure_host_count(m->closures);
    for (int k = 0; k < nc; k++)
        labels[k] = tg_closure_host_label(m->closures, k);
    tg_budget_layout_components(&c->lay, nc, labels);
    /* budget.nc first: a resume in place may refuse it (steps missing)
     * before fields.nc is touched. */
    c->bf = c->resume_here && access(c->path_budget, F_OK) == 0
                ? tg_budget_continue(c->path_budget, &c->grid, c->lay.var, c->lay.n, m->step, st)
                : tg_budget_create(c->path_budget, &c->grid, c->lay.var, c->lay.n, st);
    if (!c->bf)
        return st->code;
    /* Snapshots from the resumed time on are written again; with adaptive
     * steps an earlier snapshot may lie closer than half a step. */
    const double cut = c->steps.adaptive ? m->time_s - 1e-9 * fmax(m->time_s, 1.0)
                                         : m->time_s - 0.5 * c->cfg->step_s;
    c->ff = c->resume_here && access(c->path_fields, F_OK) == 0
                ? tg_fields_continue(c->path_fields, &c->grid, &wn, cut, st)
                : tg_fields_create(c->path_fields, &c->grid, &wn, st);
    return c->ff ? TG_OK : st->code;
}

/* The state a run starts from must be finite and within max_cfl. */
static tg_code check_start(run_ctx *c, tg_status *st)
{
    tg_model *m = c->m;
    const tg_diag *d = &c->before;
    if (isfinite(d->energy) && d->max_cfl <= c->cfg->max_cfl)
        return TG_OK;
    int finite = isfinite(d->energy);
    tg_status ck;
    tg_status_clear(&ck);
    tg_code crc = finite ? write_checkpoint(c, &ck) : TG_ERR_BLOWUP;
    return tg_fail(st, TG_ERR_BLOWUP,
                   "the initial state at step %ld (model day %.4f) has CFL %.3g (max_cfl %.3g) "
                   "in layer %d at x = %.1f km, y = %.1f km%s; %s",
                   m->step, m->time_s / TG_SECONDS_PER_DAY, d->max_cfl, c->cfg->max_cfl,
                   d->cfl_layer + 1, d->cfl_x / 1e3, d->cfl_y / 1e3,
                   finite ? "" : ", and a non-finite energy",
                   crc == TG_OK ? "the state is in the checkpoint" : "no checkpoint was written");
}

/* A step ended in NaN/Inf at node `bad` of layer `layer` (bad < 0: only the
 * energy): back to the finite state at its start, which goes to the
 * checkpoint. */
static tg_code rewind_bad_step(run_ctx *c, long bad, int layer, double time_before,
                               tg_status *st)
{
    tg_model *m = c->m;
    const double day = m->time_s / TG_SECONDS_PER_DAY;
    const long at_step = m->step;
    memcpy(m->q, m->q0, sizeof(double) * m->nl * m->npl);
    m->step--;
    m->time_s = time_before;
    tg_model_derive(m);
    tg_status ck;
    tg_status_clear(&ck);
    tg_code crc = TG_OK;
    for (int e = 0; e < c->nextra && crc == TG_OK; e++)
        crc = tg_closure_host_state_load(m->closures, c->extra_comp[e], c->extra_start[e],
                                         c->extra_len[e], &ck);
    if (crc == TG_OK)
        crc = write_checkpoint(c, &ck);
    const double x = bad >= 0 ? m->geom->coord[bad % m->geom->ns] : NAN;
    const double y = bad >= 0 ? m->geom->coord[bad / m->geom->ns] : NAN;
    return tg_fail(st, TG_ERR_BLOWUP,
                   "non-finite PV at step %ld (model day %.4f) in layer %d at x = %.1f km, "
                   "y = %.1f km; %s (step %ld)",
                   at_step, day, layer + 1, x / 1e3, y / 1e3,
                   crc == TG_OK ? "the last finite state is in the checkpoint"
                                : "the last finite state could not be written",
                   m->step);
}

/* One step with its faults and its budget record: the step to take, the
 * closures' state at its start (a step that ends in NaN/Inf is undone), the
 * step, then NaN/Inf, the budget record (rates weighted with the step
 * actually taken) and the CFL limit. */
static tg_code take_step(run_ctx *c, tg_run_events *ev, tg_status *st)
{
    tg_model *m = c->m;
    tg_code rc;
    const double time_before = m->time_s;
    tg_run_steps_next(&c->steps, m);
    for (int e = 0; e < c->nextra; e++)
        tg_closure_host_state_save(m->closures, c->extra_comp[e], c->extra_start[e]);
    if ((rc = tg_step(m, &c->rates, st)) != TG_OK)
        return rc;
    tg_diag_compute(m, &c->after);
    const double dt = m->dt;
    int bad_layer = 0;
    long bad = tg_diag_nonfinite(m, &c->after, &bad_layer);
    if (bad >= 0 || !isfinite(c->after.energy))
        return rewind_bad_step(c, bad, bad_layer, time_before, st);
    *ev = tg_run_steps_after(&c->steps, m, c->after.max_cfl);
    double eres, zres;
    tg_budget_relative_residual(m->nl, dt, &c->before, &c->after, &c->rates, &eres, &zres);
    c->worst_e = fmax(c->worst_e, eres);
    c->worst_z = fmax(c->worst_z, zres);
    tg_budget_pack(&c->lay, dt, &c->before, &c->after, &c->rates, c->rec);
    if ((rc = tg_budget_append(c->bf, m->time_s, m->step, c->rec, st)) != TG_OK)
        return rc;
    if (c->after.max_cfl <= c->cfg->max_cfl)
        return TG_OK;
    const tg_diag *a = &c->after;
    tg_code crc = write_checkpoint(c, st);
    return tg_fail(st, TG_ERR_BLOWUP,
                   "CFL %.3f exceeds max_cfl %.3g at step %ld (model day %.4f) in layer %d "
                   "at x = %.1f km, y = %.1f km; %s",
                   a->max_cfl, c->cfg->max_cfl, m->step, m->time_s / TG_SECONDS_PER_DAY,
                   a->cfl_layer + 1, a->cfl_x / 1e3, a->cfl_y / 1e3,
                   crc == TG_OK ? "the state is in the checkpoint"
                                : "the checkpoint could not be written");
}

/* Snapshot, checkpoint, log line and progress report that fall after a step. */
static tg_code write_events(run_ctx *c, const tg_run_events *ev, long first, tg_status *st)
{
    tg_model *m = c->m;
    tg_code rc;
    if (ev->snapshot && ((rc = write_snapshot(c, c->ff, st)) != TG_OK ||
                         (rc = tg_budget_flush(c->bf, st)) != TG_OK))
        return rc;
    /* budget.nc first: after a kill, it holds every step up to the
     * checkpoint's, from which a resume continues it. */
    if (ev->checkpoint &&
        ((rc = tg_budget_flush(c->bf, st)) != TG_OK || (rc = write_checkpoint(c, st)) != TG_OK))
        return rc;
    if (ev->log) {
        log_summary(c);
        c->worst_e = c->worst_z = 0.0;
    }
    if (c->opt->progress) {
        double ke = 0.0;
        for (int k = 0; k < m->nl; k++)
            ke += c->cfg->thickness_m[k] * c->after.kinetic[k] / m->Htot;
        tg_progress p = {.step = m->step, .step_first = first,
                         .step_last = ev->end ? m->step : tg_run_steps_last(&c->steps, m),
                         .day = m->time_s / TG_SECONDS_PER_DAY,
                         .last_day = c->cfg->duration_days, .kinetic_energy = ke,
                         .max_cfl = c->after.max_cfl};
        c->opt->progress(&p, c->opt->progress_user);
    }
    return TG_OK;
}

/* Steps to the end, stopping cleanly on request (with a checkpoint). */
static tg_code step_loop(run_ctx *c, tg_status *st)
{
    tg_model *m = c->m;
    const long first = m->step;
    tg_code rc;
    c->worst_e = c->worst_z = 0.0;
    while (!tg_run_steps_done(&c->steps, m)) {
        if (c->opt->stop_requested && *c->opt->stop_requested) {
            if ((rc = write_checkpoint(c, st)) != TG_OK)
                return rc;
            return tg_fail(st, TG_ERR_INTERRUPTED,
                           "stopped on request at step %ld (day %.4g); checkpoint written to %s",
                           m->step, m->time_s / TG_SECONDS_PER_DAY, c->path_ckpt);
        }
        tg_run_events ev;
        if ((rc = take_step(c, &ev, st)) != TG_OK ||
            (rc = write_events(c, &ev, first, st)) != TG_OK)
            return rc;
        c->before = c->after;
    }
    return write_checkpoint(c, st);
}

/* Closes the files (the first error wins) and frees everything. */
static tg_code tear_down(run_ctx *c, tg_code rc, tg_status *st)
{
    tg_status s2;
    if (c->bf) {
        tg_status_clear(&s2);
        tg_code r2 = tg_budget_close(c->bf, rc == TG_OK ? st : &s2);
        if (rc == TG_OK)
            rc = r2;
    }
    if (c->ff) {
        tg_status_clear(&s2);
        tg_code r2 = tg_fields_close(c->ff, rc == TG_OK ? st : &s2);
        if (rc == TG_OK)
            rc = r2;
    }
    /* A run that fails during its set-up leaves no folder it made (the
     * files it began are of no use); later, only an empty one goes. */
    if (rc != TG_OK && c->made_dir) {
        if (!c->stepping && rc != TG_ERR_BLOWUP) {
            const char *mine[] = {c->path_fields, c->path_budget, c->path_ckpt};
            for (int i = 0; i < 3; i++)
                (void)remove(mine[i]);
        }
        (void)rmdir(c->cfg->out_directory); /* fails, as meant, when files remain */
    }
    free(c->cfg_text);
    free(c->rec);
    free(c->psi_out);
    free(c->q_out);
    for (int e = 0; e < c->nextra; e++) {
        free(c->extra_buf[e]);
        free(c->extra_start[e]);
    }
    free(c->spec_out);
    tg_spectrum_destroy(c->spec);
    tg_model_destroy(c->m);
    return rc;
}

tg_code tg_run(const tg_config *cfg, const tg_run_options *opt, tg_status *st)
{
    run_ctx c = {.cfg = cfg, .opt = opt};
    const char *dir = cfg->out_directory;
    snprintf(c.path_fields, sizeof c.path_fields, "%s/fields.nc", dir);
    snprintf(c.path_budget, sizeof c.path_budget, "%s/budget.nc", dir);
    snprintf(c.path_ckpt, sizeof c.path_ckpt, "%s/checkpoint.nc", dir);
    /* Resumed from its own checkpoint (without --overwrite): the folder's
     * files are continued, not replaced. */
    c.resume_here = !opt->overwrite && resumes_here(cfg, &c);
    tg_code rc;
    if (!c.resume_here && (rc = check_outputs_free(dir, &c, opt->overwrite, st)) != TG_OK)
        return rc;
    c.made_dir = access(dir, F_OK) != 0;
    if ((rc = set_up(&c, st)) != TG_OK || (rc = initial_state(&c, st)) != TG_OK ||
        (rc = open_outputs(&c, st)) != TG_OK)
        return tear_down(&c, rc, st);
    tg_model *m = c.m;
    memset(&c.rates, 0, sizeof c.rates);
    tg_diag_compute(m, &c.before);
    if (tg_run_steps_snapshot_now(&c.steps, m) && (rc = write_snapshot(&c, c.ff, st)) != TG_OK)
        return tear_down(&c, rc, st);
    tg_log(TG_LOG_INFO,
           "start at step %ld (day %.2f) of %.2f days, %s steps; %d layers, %d x %d points, "
           "dx %.3f km",
           m->step, m->time_s / TG_SECONDS_PER_DAY, cfg->duration_days,
           c.steps.adaptive ? "adaptive" : "fixed", m->nl, m->nout, m->nout, m->geom->dx / 1e3);
    if ((rc = check_start(&c, st)) == TG_OK) {
        c.stepping = 1;
        rc = step_loop(&c, st);
    }
    return tear_down(&c, rc, st);
}
