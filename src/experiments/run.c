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
#include "fdops.h"
#include "initial.h"
#include "model.h"
#include "ncio.h"
#include "spectrum.h"
#include "stepper.h"

#ifndef PACKAGE_VERSION
#define PACKAGE_VERSION "unknown"
#endif

static long steps_for(double days, double dt)
{
    return (long)llround(days * TG_SECONDS_PER_DAY / dt);
}

typedef struct {
    tg_model *m;
    const tg_config *cfg;
    tg_nc_grid grid;
    double *psi_out, *q_out;
    tg_spectrum *spec;   /* one layer's spectrum, made at set-up */
    double *spec_out;    /* nl*nbins, layer k at k*nbins: what a snapshot writes */
    char path_fields[TG_PATH_LEN + 16], path_budget[TG_PATH_LEN + 16], path_ckpt[TG_PATH_LEN + 16];
    /* Closure components' own state, written to the checkpoint as extras. */
    int nextra;
    char extra_name[TG_MAX_CLOSURES][96];
    const char *extra_names[TG_MAX_CLOSURES];
    double *extra_buf[TG_MAX_CLOSURES];
    double *extra_start[TG_MAX_CLOSURES]; /* the state at the start of the step being taken */
    const double *extra_data[TG_MAX_CLOSURES];
    size_t extra_len[TG_MAX_CLOSURES];
    int extra_comp[TG_MAX_CLOSURES];
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

static tg_code write_checkpoint(run_ctx *c, tg_status *st)
{
    tg_model_pack(c->m, c->m->psi, c->psi_out);
    tg_model_pack(c->m, c->m->q, c->q_out);
    for (int e = 0; e < c->nextra; e++)
        tg_closure_host_state_save(c->m->closures, c->extra_comp[e], c->extra_buf[e]);
    tg_checkpoint ck = {.time_s = c->m->time_s, .step = c->m->step, .psi = c->psi_out,
                        .q = c->q_out, .nextra = c->nextra, .extra_names = c->extra_names,
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

static tg_code initial_state(run_ctx *c, long nsteps, int resume_here, tg_status *st)
{
    const tg_config *cfg = c->cfg;
    tg_model *m = c->m;
    tg_initial_info info;
    tg_code rc = tg_state_initial(m, cfg, &info, st);
    if (rc == TG_OK && resume_here && !(info.has_q && info.has_time))
        return tg_fail(st, TG_ERR_IO, "%s: not a checkpoint (no q, time and step), so the run "
                       "cannot resume from it in its own folder", cfg->initial_path);
    if (rc != TG_OK || !(info.has_q && info.has_time))
        return rc;
    /* A checkpoint (initial.h took its PV): resume at its step, with the
     * closures' own variables, bitwise. */
    if (info.step < 0 || info.step > nsteps)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: the checkpoint is at step %ld (day %.6g), outside this "
                       "experiment's %ld steps ([time] duration_days counts from day 0)",
                       cfg->initial_path, info.step, info.time_s / TG_SECONDS_PER_DAY, nsteps);
    /* With a fixed step, time = step * dt (as tg_model_invert sets it): a
     * checkpoint whose time says otherwise was written with another step
     * size. (tg_initial_read already checked that step is whole and time
     * finite and >= 0.) */
    const double want = (double)info.step * m->dt;
    if (fabs(info.time_s - want) > 1e-9 * fmax(want, m->dt))
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: the checkpoint is at step %ld and day %.9g, but step %ld of "
                       "[time] step_s = %g s is day %.9g: it was written with another step "
                       "size",
                       cfg->initial_path, info.step, info.time_s / TG_SECONDS_PER_DAY, info.step,
                       m->dt, want / TG_SECONDS_PER_DAY);
    m->step = info.step;
    m->time_s = m->step * m->dt; /* as tg_model_invert sets it */
    return load_extras(c, cfg->initial_path, st);
}

static void log_summary(const tg_model *m, const tg_diag *d, const tg_term_rates *r, double eres,
                        double zres)
{
    char z[256] = "";
    size_t len = 0;
    for (int k = 0; k < m->nl && len < sizeof z; k++)
        len += (size_t)snprintf(z + len, sizeof z - len, "%s%.4e", k ? " " : "", d->enstrophy[k]);
    tg_log(TG_LOG_INFO,
           "day %.2f step %ld: energy %.6e m2 s-2 (wind %+.3e, mean flow %+.3e, drag %+.3e, "
           "viscosity %+.3e, closure %+.3e m2 s-3), enstrophy [%s] s-2, max CFL %.3f, worst "
           "relative budget residual since last line: energy %.1e, enstrophy %.1e",
           m->time_s / TG_SECONDS_PER_DAY, m->step, d->energy, r->energy[TG_TERM_WIND],
           r->energy[TG_TERM_MEAN_FLOW], r->energy[TG_TERM_BOTTOM_DRAG],
           r->energy[TG_TERM_VISCOSITY], r->energy[TG_TERM_CLOSURE], z, d->max_cfl, eres, zres);
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

tg_code tg_run(const tg_config *cfg, const tg_run_options *opt, tg_status *st)
{
    tg_code rc = TG_OK;
    run_ctx c = {0};
    tg_fields_file *ff = NULL;
    tg_budget_file *bf = NULL;
    double *rec = NULL;
    char *cfg_text = NULL;
    tg_budget_layout lay;

    c.cfg = cfg;
    const char *dir = cfg->out_directory;
    snprintf(c.path_fields, sizeof c.path_fields, "%s/fields.nc", dir);
    snprintf(c.path_budget, sizeof c.path_budget, "%s/budget.nc", dir);
    snprintf(c.path_ckpt, sizeof c.path_ckpt, "%s/checkpoint.nc", dir);
    /* Resumed from its own checkpoint (without --overwrite): the folder's
     * files are continued, not replaced. */
    const int resume_here = !opt->overwrite && resumes_here(cfg, &c);
    if (!resume_here && (rc = check_outputs_free(dir, &c, opt->overwrite, st)) != TG_OK)
        return rc;
    const int made_dir = access(dir, F_OK) != 0;
    int stepping = 0; /* set once the set-up is done and steps begin */

    c.m = tg_model_create(cfg, st);
    if (!c.m)
        return st->code ? st->code : TG_ERR_INTERNAL;
    tg_model *m = c.m;
    const long nout3 = (long)m->nl * m->nout * m->nout;
    c.psi_out = malloc(sizeof(double) * nout3);
    c.q_out = malloc(sizeof(double) * nout3);
    rec = malloc(sizeof(double) * TG_BUDGET_MAX_VARS * TG_MAX_LAYERS);
    cfg_text = tg_config_to_ini(cfg);
    if (!c.psi_out || !c.q_out || !rec || !cfg_text) {
        rc = tg_fail(st, TG_ERR_NOMEM, "run: no memory for output buffers");
        goto done;
    }
    c.spec = tg_spectrum_create(m->geom, st);
    if (!c.spec) {
        rc = st->code ? st->code : TG_ERR_INTERNAL;
        goto done;
    }
    c.spec_out = malloc(sizeof(double) * (size_t)m->nl * (size_t)c.spec->nbins);
    if (!c.spec_out) {
        rc = tg_fail(st, TG_ERR_NOMEM, "run: no memory for %d layers of %d spectrum bins",
                     m->nl, c.spec->nbins);
        goto done;
    }

    const double dt = cfg->step_s;
    const long nsteps = steps_for(cfg->duration_days, dt);
    const long snap_every = steps_for(cfg->snapshot_every_days, dt) > 0
                                ? steps_for(cfg->snapshot_every_days, dt) : 1;
    const long log_every = steps_for(cfg->log_every_days, dt) > 0
                               ? steps_for(cfg->log_every_days, dt) : 1;
    const long ckpt_every = steps_for(cfg->checkpoint_every_days, dt);

    if ((rc = setup_extras(&c, st)) != TG_OK)
        goto done;
    if ((rc = initial_state(&c, nsteps, resume_here, st)) != TG_OK)
        goto done;

    /* Output files: only now, after every input has been checked. */
    if ((rc = tg_make_dirs(dir, st)) != TG_OK)
        goto done;
    c.grid = (tg_nc_grid){.nx = m->nout, .ny = m->nout, .nlayers = m->nl,
                          .x = tg_model_out_coord(m), .y = tg_model_out_coord(m),
                          .config_text = cfg_text,
                          .command_line = opt->command_line ? opt->command_line : "",
                          .title = "twingyre layered quasi-geostrophic experiment"};
    const tg_nc_wavenumbers wn = {.nbins = c.spec->nbins, .k = c.spec->k,
                                  .bin_width = c.spec->dk};
    tg_budget_layout_init(&lay, m->nl, m->term_active);
    {
        const char *labels[TG_MAX_CLOSURES];
        int nc = tg_closure_host_count(m->closures);
        for (int k = 0; k < nc; k++)
            labels[k] = tg_closure_host_label(m->closures, k);
        tg_budget_layout_components(&lay, nc, labels);
    }
    /* budget.nc first: a resume in place may refuse it (steps missing)
     * before fields.nc is touched. */
    bf = resume_here && access(c.path_budget, F_OK) == 0
             ? tg_budget_continue(c.path_budget, &c.grid, lay.var, lay.n, m->step, st)
             : tg_budget_create(c.path_budget, &c.grid, lay.var, lay.n, st);
    if (!bf) {
        rc = st->code;
        goto done;
    }
    ff = resume_here && access(c.path_fields, F_OK) == 0
             ? tg_fields_continue(c.path_fields, &c.grid, &wn, m->time_s - 0.5 * dt, st)
             : tg_fields_create(c.path_fields, &c.grid, &wn, st);
    if (!ff) {
        rc = st->code;
        goto done;
    }

    tg_diag before, after;
    tg_term_rates rates;
    memset(&rates, 0, sizeof rates);
    tg_diag_compute(m, &before);
    if (m->step % snap_every == 0 && (rc = write_snapshot(&c, ff, st)) != TG_OK)
        goto done;
    tg_log(TG_LOG_INFO, "start at step %ld (day %.2f) of %ld; %d layers, %d x %d points, dx %.3f km",
           m->step, m->time_s / TG_SECONDS_PER_DAY, nsteps, m->nl, m->nout, m->nout,
           m->geom->dx / 1e3);
    if (!isfinite(before.energy) || before.max_cfl > cfg->max_cfl) {
        int finite = isfinite(before.energy);
        tg_status ck;
        tg_status_clear(&ck);
        tg_code crc = finite ? write_checkpoint(&c, &ck) : TG_ERR_BLOWUP;
        rc = tg_fail(st, TG_ERR_BLOWUP,
                     "the initial state at step %ld (model day %.4f) has CFL %.3g (max_cfl %.3g) "
                     "in layer %d at x = %.1f km, y = %.1f km%s; %s",
                     m->step, m->time_s / TG_SECONDS_PER_DAY, before.max_cfl, cfg->max_cfl,
                     before.cfl_layer + 1, before.cfl_x / 1e3, before.cfl_y / 1e3,
                     finite ? "" : ", and a non-finite energy",
                     crc == TG_OK ? "the state is in the checkpoint" : "no checkpoint was written");
        goto done;
    }

    const long first = m->step;
    double worst_e = 0.0, worst_z = 0.0;
    stepping = 1;
    while (m->step < nsteps) {
        if (opt->stop_requested && *opt->stop_requested) {
            if ((rc = write_checkpoint(&c, st)) != TG_OK)
                goto done;
            rc = tg_fail(st, TG_ERR_INTERRUPTED,
                         "stopped on request at step %ld (day %.4g); checkpoint written to %s",
                         m->step, m->time_s / TG_SECONDS_PER_DAY, c.path_ckpt);
            goto done;
        }
        /* The closures' own state at the start of the step: tg_step advances
         * it, and a step that ends in NaN/Inf is undone below. */
        for (int e = 0; e < c.nextra; e++)
            tg_closure_host_state_save(m->closures, c.extra_comp[e], c.extra_start[e]);
        if ((rc = tg_step(m, &rates, st)) != TG_OK)
            goto done;
        tg_diag_compute(m, &after);

        /* Faults: NaN/Inf anywhere, or CFL above the limit. */
        long bad = -1;
        int bad_layer = 0;
        for (int k = 0; k < m->nl && bad < 0; k++)
            if ((bad = tg_find_nonfinite(m->geom, m->q + k * m->npl)) >= 0)
                bad_layer = k;
        if (bad >= 0 || !isfinite(after.energy)) {
            double day = m->time_s / TG_SECONDS_PER_DAY;
            long at_step = m->step;
            /* The state at the start of the step was finite: write it. */
            memcpy(m->q, m->q0, sizeof(double) * m->nl * m->npl);
            m->step--;
            tg_model_derive(m);
            tg_status ck;
            tg_status_clear(&ck);
            tg_code crc = TG_OK;
            for (int e = 0; e < c.nextra && crc == TG_OK; e++)
                crc = tg_closure_host_state_load(m->closures, c.extra_comp[e], c.extra_start[e],
                                                 c.extra_len[e], &ck);
            if (crc == TG_OK)
                crc = write_checkpoint(&c, &ck);
            double x = bad >= 0 ? m->geom->coord[bad % m->geom->ns] : NAN;
            double y = bad >= 0 ? m->geom->coord[bad / m->geom->ns] : NAN;
            rc = tg_fail(st, TG_ERR_BLOWUP,
                         "non-finite PV at step %ld (model day %.4f) in layer %d at x = %.1f km, "
                         "y = %.1f km; %s (step %ld)",
                         at_step, day, bad_layer + 1, x / 1e3, y / 1e3,
                         crc == TG_OK ? "the last finite state is in the checkpoint"
                                      : "the last finite state could not be written",
                         m->step);
            goto done;
        }
        double eres, zres;
        tg_budget_relative_residual(m->nl, dt, &before, &after, &rates, &eres, &zres);
        worst_e = fmax(worst_e, eres);
        worst_z = fmax(worst_z, zres);
        int n = tg_budget_pack(&lay, dt, &before, &after, &rates, rec);
        (void)n;
        if ((rc = tg_budget_append(bf, m->time_s, m->step, rec, st)) != TG_OK)
            goto done;
        if (after.max_cfl > cfg->max_cfl) {
            tg_code crc = write_checkpoint(&c, st);
            rc = tg_fail(st, TG_ERR_BLOWUP,
                         "CFL %.3f exceeds max_cfl %.3g at step %ld (model day %.4f) in layer %d "
                         "at x = %.1f km, y = %.1f km; %s",
                         after.max_cfl, cfg->max_cfl, m->step, m->time_s / TG_SECONDS_PER_DAY,
                         after.cfl_layer + 1, after.cfl_x / 1e3, after.cfl_y / 1e3,
                         crc == TG_OK ? "the state is in the checkpoint"
                                      : "the checkpoint could not be written");
            goto done;
        }
        if (m->step % snap_every == 0) {
            if ((rc = write_snapshot(&c, ff, st)) != TG_OK ||
                (rc = tg_budget_flush(bf, st)) != TG_OK)
                goto done;
        }
        /* budget.nc first: after a kill, it holds every step up to the
         * checkpoint's, from which a resume continues it. */
        if (ckpt_every > 0 && m->step % ckpt_every == 0 && m->step < nsteps &&
            ((rc = tg_budget_flush(bf, st)) != TG_OK || (rc = write_checkpoint(&c, st)) != TG_OK))
            goto done;
        if (m->step % log_every == 0 || m->step == nsteps) {
            log_summary(m, &after, &rates, worst_e, worst_z);
            worst_e = worst_z = 0.0;
        }
        if (opt->progress) {
            double ke = 0.0;
            for (int k = 0; k < m->nl; k++)
                ke += cfg->thickness_m[k] * after.kinetic[k] / m->Htot;
            tg_progress p = {.step = m->step, .step_first = first, .step_last = nsteps,
                             .day = m->time_s / TG_SECONDS_PER_DAY,
                             .last_day = nsteps * dt / TG_SECONDS_PER_DAY, .kinetic_energy = ke,
                             .max_cfl = after.max_cfl};
            opt->progress(&p, opt->progress_user);
        }
        before = after;
    }
    rc = write_checkpoint(&c, st);

done:
    if (bf) {
        tg_status s2;
        tg_status_clear(&s2);
        tg_code r2 = tg_budget_close(bf, rc == TG_OK ? st : &s2);
        if (rc == TG_OK)
            rc = r2;
    }
    if (ff) {
        tg_status s2;
        tg_status_clear(&s2);
        tg_code r2 = tg_fields_close(ff, rc == TG_OK ? st : &s2);
        if (rc == TG_OK)
            rc = r2;
    }
    /* A run that fails during its set-up leaves no folder it made (the
     * files it began are of no use); later, only an empty one goes. */
    if (rc != TG_OK && made_dir) {
        if (!stepping && rc != TG_ERR_BLOWUP) {
            const char *mine[] = {c.path_fields, c.path_budget, c.path_ckpt};
            for (int i = 0; i < 3; i++)
                (void)remove(mine[i]);
        }
        (void)rmdir(dir); /* fails, as meant, when files remain */
    }
    free(cfg_text);
    free(rec);
    free(c.psi_out);
    free(c.q_out);
    for (int e = 0; e < c.nextra; e++) {
        free(c.extra_buf[e]);
        free(c.extra_start[e]);
    }
    free(c.spec_out);
    tg_spectrum_destroy(c.spec);
    tg_model_destroy(c.m);
    return rc;
}
