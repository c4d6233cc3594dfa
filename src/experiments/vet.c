/* vet.c - the closure battery of `twingyre vet` (vet.h): reference state,
 * linear, conservation, online and finer-grid checks, and the verdicts.
 *
 * Every run here is in-process through the model and the stepper
 * (model.h, stepper.h); nothing is written but DIR/vet.json at the end.
 * Each online run gets a fresh model (so a closure's own variables, e.g.
 * AR(1) noise, start afresh) and starts from the reference state at step 0.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "vet.h"

#include <errno.h>
#include <stdarg.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "clock.h"
#include "closure_host.h"
#include "constants.h"
#include "fdops.h"
#include "initial.h"
#include "ncio.h"
#include "spectrum.h"
#include "stepper.h"
#include "textfile.h"

/* Energy samples per online run (the growth check compares them with the
 * run without the closure at the same times). */
#define NSAMP 10

typedef struct {
    const tg_config *cfg;
    const tg_vet_options *opt;
    tg_vet_report *r;
    int phase, nphases;
    char phase_name[128];
    int nl;
    long npl;
    double *q_rest, *q_ref;   /* stored layout of the configured grid */
    double *psi_ref_out;      /* output layout, for the finer grid */
    int nout;
} vet_ctx;

static void progress_fault(vet_ctx *c, long step, long nsteps, double day, double last_day,
                           const char *fault)
{
    if (!c->opt || !c->opt->progress)
        return;
    tg_vet_progress p = {.phase = c->phase_name, .index = c->phase, .count = c->nphases,
                         .step = fault ? nsteps : step, .nsteps = nsteps, .day = day,
                         .last_day = last_day, .fault = fault};
    c->opt->progress(&p, c->opt->progress_user);
}

static void progress(vet_ctx *c, long step, long nsteps, double day, double last_day)
{
    progress_fault(c, step, nsteps, day, last_day, NULL);
}

static void start_phase(vet_ctx *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void start_phase(vet_ctx *c, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(c->phase_name, sizeof c->phase_name, fmt, ap);
    va_end(ap);
    c->phase++;
    if (c->phase > c->nphases)
        c->nphases = c->phase;
}

/* ------------------------------------------------------------------ */
/* Config variants                                                     */
/* ------------------------------------------------------------------ */

/* A copy of cfg (malloc'ed) with fixed steps of the step scaled and, when
 * `closure` is 0, no closure at all (every closure section dropped, so
 * nothing warns). */
static tg_config *variant(const tg_config *cfg, double step_factor, int closure, tg_status *st)
{
    tg_config *v = malloc(sizeof *v);
    if (!v) {
        tg_fail(st, TG_ERR_NOMEM, "vet: no memory for a config");
        return NULL;
    }
    *v = *cfg;
    v->step_s = cfg->step_s * step_factor;
    v->step_choice = TG_STEP_FIXED; /* vet measures stability at given steps */
    if (!closure)
        v->nraw = 0;
    return v;
}

static int next_finer_points(const tg_config *cfg)
{
    return cfg->geometry == TG_GEOM_PERIODIC ? 2 * cfg->points : 2 * (cfg->points - 1) + 1;
}

static long steps_in(double days, double dt)
{
    return (long)floor(days * TG_SECONDS_PER_DAY / dt + 0.5);
}

/* ------------------------------------------------------------------ */
/* Stepping with the watches                                           */
/* ------------------------------------------------------------------ */

typedef struct {
    int stable;
    char reason[256];
    double fail_day;
    double max_cfl;
    double esamp[NSAMP + 1];    /* energy at the sample steps (NAN after a fault) */
    double energy_ratio;        /* largest E / yardstick over the samples */
} march_result;

/* After a step of march: 1 (with o->stable, fail_day and reason set) when
 * the PV is not finite or the CFL number exceeds [time] max_cfl, else 0;
 * o->max_cfl keeps the largest CFL number. */
static int state_fault(tg_model *m, double day, double day0, long step0, march_result *o)
{
    long bad = -1;
    int bad_layer = 0;
    for (int k = 0; k < m->nl && bad < 0; k++)
        if ((bad = tg_find_nonfinite(m->geom, m->q + k * m->npl)) >= 0)
            bad_layer = k;
    if (bad >= 0) {
        o->stable = 0;
        o->fail_day = day;
        snprintf(o->reason, sizeof o->reason,
                 "non-finite PV at day %.2f (step %ld) in layer %d at x = %.0f km, y = %.0f km",
                 day - day0, m->step - step0, bad_layer + 1,
                 m->geom->coord[bad % m->geom->ns] / 1e3,
                 m->geom->coord[bad / m->geom->ns] / 1e3);
        return 1;
    }
    int layer = 0;
    double x = 0.0, y = 0.0;
    const double cfl = tg_model_max_cfl(m, &layer, &x, &y);
    o->max_cfl = fmax(o->max_cfl, cfl);
    if (!(cfl <= m->cfg.max_cfl)) {
        o->stable = 0;
        o->fail_day = day;
        snprintf(o->reason, sizeof o->reason,
                 "CFL %.3g above max_cfl %.3g at day %.2f in layer %d at x = %.0f km, "
                 "y = %.0f km",
                 cfl, m->cfg.max_cfl, day - day0, layer + 1, x / 1e3, y / 1e3);
        return 1;
    }
    return 0;
}

/* At step n of nsteps, the energy samples due (NSAMP over the run): each
 * must be finite and, against yard (the run without the closure), within
 * growth_limit times. 1 (with o set) on a fault, else 0. */
static int sample_energy(tg_model *m, long n, long nsteps, int *next, const double *yard,
                         double glim, double day, double day0, march_result *o)
{
    if (*next <= NSAMP && n == (long)*next * nsteps / NSAMP) {
        /* Several samples may share a step when nsteps < NSAMP. */
        const double e = tg_model_energy(m);
        while (*next <= NSAMP && n == (long)*next * nsteps / NSAMP) {
            o->esamp[*next] = e;
            if (!isfinite(e)) {
                o->stable = 0;
                o->fail_day = day;
                snprintf(o->reason, sizeof o->reason, "non-finite energy at day %.2f",
                         day - day0);
                return 1;
            }
            if (yard && isfinite(yard[*next]) && yard[*next] > 0.0) {
                const double ratio = e / yard[*next];
                o->energy_ratio =
                    isfinite(o->energy_ratio) ? fmax(o->energy_ratio, ratio) : ratio;
                if (ratio > glim) {
                    o->stable = 0;
                    o->fail_day = day;
                    snprintf(o->reason, sizeof o->reason,
                             "energy %.3g times that of the run without the closure at day "
                             "%.2f (limit %g)",
                             ratio, day - day0, glim);
                    return 1;
                }
            }
            (*next)++;
        }
    }
    return 0;
}

/* Steps m from its current state nsteps times. Faults (NaN/Inf, CFL above
 * max_cfl, energy above growth_limit x yard[s] at a sample) end the march
 * with stable = 0 and the reason; yard may be NULL. */
static tg_code march(vet_ctx *c, tg_model *m, long nsteps, const double *yard, march_result *o,
                     tg_status *st)
{
    const double glim = c->cfg->vet_growth_limit;
    o->stable = 1;
    o->reason[0] = '\0';
    o->fail_day = NAN;
    o->max_cfl = tg_model_max_cfl(m, NULL, NULL, NULL);
    o->energy_ratio = NAN;
    for (int s = 0; s <= NSAMP; s++)
        o->esamp[s] = NAN;
    o->esamp[0] = tg_model_energy(m);
    const long step0 = m->step;
    const double day0 = m->time_s / TG_SECONDS_PER_DAY;
    const double last_day = day0 + nsteps * m->dt / TG_SECONDS_PER_DAY;
    int next = 1;
    for (long n = 1; n <= nsteps; n++) {
        if (c->opt && c->opt->stop_requested && *c->opt->stop_requested)
            return tg_fail(st, TG_ERR_INTERRUPTED,
                           "stopped on request during %s; nothing was written", c->phase_name);
        tg_code rc = tg_step(m, NULL, st);
        const double day = m->time_s / TG_SECONDS_PER_DAY;
        if (rc == TG_ERR_NUMERIC || rc == TG_ERR_BLOWUP) {
            /* A closure that reports a numerical failure mid-run: a fault
             * of this run, not of the battery. */
            o->stable = 0;
            o->fail_day = day;
            snprintf(o->reason, sizeof o->reason, "the step failed at day %.2f: %.180s", day - day0,
                     st->msg);
            tg_status_clear(st);
            goto fault;
        }
        if (rc != TG_OK)
            return rc;
        if (state_fault(m, day, day0, step0, o))
            goto fault;
        if (sample_energy(m, n, nsteps, &next, yard, glim, day, day0, o))
            goto fault;
        progress(c, n, nsteps, day, last_day);
    }
    return TG_OK;
fault:
    progress_fault(c, nsteps, nsteps, o->fail_day, last_day, o->reason);
    return TG_OK;
}

/* Depth-weighted kinetic-energy fraction in bins centred above pi/(2 dx):
 * the top band (Kc/2, inf), Kc = pi/dx, of the skill bands (skill.h), from
 * the spectrum of fields.nc (spectrum.h; Parseval with the model's kinetic
 * energy). Grid-scale noise shows up there first (common practice). */
static tg_code noise_fraction(tg_model *m, double *frac, tg_status *st)
{
    tg_spectrum *s = tg_spectrum_create(m->geom, st);
    if (!s)
        return st->code;
    const double kc = TG_PI / (2.0 * m->geom->dx);
    double hi = 0.0, all = 0.0;
    for (int k = 0; k < m->nl; k++) {
        tg_code rc = tg_spectrum_compute(s, m->geom, m->psi + k * m->npl, m->wall[k], st);
        if (rc != TG_OK) {
            tg_spectrum_destroy(s);
            return rc;
        }
        const double H = m->cfg.thickness_m[k];
        for (int b = 0; b < s->nbins; b++) {
            all += H * s->e[b];
            if (s->k[b] > kc)
                hi += H * s->e[b];
        }
    }
    tg_spectrum_destroy(s);
    *frac = all > 0.0 ? hi / all : 0.0;
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* Reference state                                                     */
/* ------------------------------------------------------------------ */

static void add_check(tg_vet_report *r, const char *name, const char *title, double figure,
                      const char *unit, const char *relation, double limit,
                      tg_vet_verdict verdict, const char *fmt, ...)
    __attribute__((format(printf, 9, 10)));
static void add_check(tg_vet_report *r, const char *name, const char *title, double figure,
                      const char *unit, const char *relation, double limit,
                      tg_vet_verdict verdict, const char *fmt, ...)
{
    if (r->nchecks >= TG_VET_MAX_CHECKS)
        return;
    tg_vet_check *k = &r->checks[r->nchecks++];
    snprintf(k->name, sizeof k->name, "%s", name);
    snprintf(k->title, sizeof k->title, "%s", title);
    k->figure = figure;
    snprintf(k->unit, sizeof k->unit, "%s", unit);
    snprintf(k->relation, sizeof k->relation, "%s", relation);
    k->limit = limit;
    k->verdict = verdict;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(k->reason, sizeof k->reason, fmt, ap);
    va_end(ap);
}

/* The reference state into c->q_ref (and m's state), by a spin-up or from
 * the file of [vet] reference_state. */
static tg_code reference_state(vet_ctx *c, tg_model *m, tg_status *st)
{
    const tg_config *cfg = c->cfg;
    tg_vet_report *r = c->r;
    tg_code rc;
    if (strcmp(cfg->vet_reference_state, "spinup") != 0) {
        if ((rc = tg_state_from_file(m, cfg->vet_reference_state, NULL, st)) != TG_OK)
            return tg_fail(st, rc, "%s: [vet] reference_state: %.900s",
                           c->opt && c->opt->origin ? c->opt->origin : "config", st->msg);
        snprintf(r->reference, sizeof r->reference, "file %s", cfg->vet_reference_state);
    } else {
        const long nsteps = steps_in(cfg->vet_spinup_days, cfg->step_s);
        start_phase(c, "spin-up with the closure");
        if ((rc = tg_state_initial(m, cfg, NULL, st)) != TG_OK)
            return rc;
        march_result o;
        if ((rc = march(c, m, nsteps, NULL, &o, st)) != TG_OK)
            return rc;
        snprintf(r->reference, sizeof r->reference,
                 "spin-up of %g days with the closure from [initial] state", cfg->vet_spinup_days);
        if (!o.stable) {
            add_check(r, "spinup", "spin-up with the closure", o.fail_day, "days", "", NAN,
                      TG_VET_FAIL, "unstable: %s; the reference state was spun up without it",
                      o.reason);
            tg_config *v = variant(cfg, 1.0, 0, st);
            if (!v)
                return st->code;
            tg_model *mn = tg_model_create(v, st);
            free(v);
            if (!mn)
                return st->code;
            start_phase(c, "spin-up without the closure");
            rc = tg_state_initial(mn, cfg, NULL, st);
            if (rc == TG_OK)
                rc = march(c, mn, nsteps, NULL, &o, st);
            if (rc == TG_OK && !o.stable)
                rc = tg_fail(st, TG_ERR_BLOWUP,
                             "vet: the spin-up is unstable with and without the closure (%s); "
                             "no reference state (change [vet] spinup_days or the config, or "
                             "give [vet] reference_state)",
                             o.reason);
            if (rc == TG_OK) {
                memcpy(m->q, mn->q, sizeof(double) * (size_t)(m->nl * m->npl));
                tg_model_derive(m);
                snprintf(r->reference, sizeof r->reference,
                         "spin-up of %g days without the closure from [initial] state (with it "
                         "the spin-up was unstable)",
                         cfg->vet_spinup_days);
            }
            tg_model_destroy(mn);
            if (rc != TG_OK)
                return rc;
        }
    }
    memcpy(c->q_ref, m->q, sizeof(double) * (size_t)(c->nl * c->npl));
    tg_model_pack(m, m->psi, c->psi_ref_out);
    r->reference_energy = tg_model_energy(m);
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* Conservation                                                        */
/* ------------------------------------------------------------------ */

/* Integral, energy and enstrophy input of the closure at m's state, with
 * the budget's rates (terms.c; DEVELOPERS.md, "Discrete energy"):
 *   energy     -(1/(H A)) sum_k H_k sum_active (psi_k - c_k) T_k dx^2
 *   enstrophy  (1/A) sum_active q_k T_k dx^2 per layer
 * and the same energy sum with |(psi_k - c_k) T_k| as its scale; the
 * integral ratio |int T dA| / int |T| dA uses the geometry's weights. */
static tg_code conservation_at(vet_ctx *c, tg_model *m, int which, tg_status *st)
{
    tg_vet_report *r = c->r;
    const tg_geometry *g = m->geom;
    tg_closure_input in = {.psi = m->psi, .q = m->q, .zeta = m->zeta, .wall = m->wall,
                           .step = m->step, .stage = 0};
    tg_code rc = tg_closure_host_eval(m->closures, &in, st);
    if (rc != TG_OK)
        return rc;
    const int nc = tg_closure_host_count(m->closures);
    const double d2 = g->dx * g->dx;
    double e = 0.0, ea = 0.0;
    for (int k = 0; k < m->nl; k++) {
        double sum = 0.0, sabs = 0.0, ek = 0.0, eak = 0.0, zk = 0.0;
        const long off = k * m->npl;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const long p = off + (long)j * g->ns + i;
                double t = 0.0;
                for (int ci = 0; ci < nc; ci++)
                    t += tg_closure_host_tend(m->closures, ci)[p];
                const double w = g->weight[p - off];
                sum += w * t;
                sabs += w * fabs(t);
                const double dp = m->psi[p] - m->wall[k];
                ek += dp * t;
                eak += fabs(dp * t);
                zk += m->q[p] * t;
            }
        const double hk = m->cfg.thickness_m[k] / (m->Htot * g->area);
        e += -hk * ek * d2;
        ea += hk * eak * d2;
        r->integral_ratio[which][k] = sabs > 0.0 ? fabs(sum) / sabs : 0.0;
        r->enstrophy_rate[which][k] = zk * d2 / g->area;
    }
    r->energy_rate[which] = e;
    r->energy_rate_abs[which] = ea;
    return TG_OK;
}

/* r.m.s. of psi minus its wall value over the active nodes, largest layer. */
static double psi_rms(const tg_model *m)
{
    const tg_geometry *g = m->geom;
    double best = 0.0;
    for (int k = 0; k < m->nl; k++) {
        double s2 = 0.0;
        long n = 0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                const double d = m->psi[k * m->npl + (long)j * g->ns + i] - m->wall[k];
                s2 += d * d;
                n++;
            }
        best = fmax(best, sqrt(s2 / (double)n));
    }
    return best;
}

/* ------------------------------------------------------------------ */
/* Online runs                                                         */
/* ------------------------------------------------------------------ */

/* One run on the grid of `base`: step = factor x base step, the closure
 * times mult (mult = 0: no closure), from q_start (stored layout). */
static tg_code online_run(vet_ctx *c, const tg_config *base, int finer, double factor,
                          double mult, const double *q_start, const double *yard,
                          march_result *o, tg_status *st)
{
    tg_vet_report *r = c->r;
    if (r->nruns >= TG_VET_MAX_RUNS)
        return tg_fail(st, TG_ERR_INTERNAL, "vet: more than %d online runs", TG_VET_MAX_RUNS);
    if (mult > 0.0)
        start_phase(c, "%sstep x%g, closure x%g", finer ? "finer grid, " : "", factor, mult);
    else
        start_phase(c, "%sstep x%g, no closure", finer ? "finer grid, " : "", factor);
    tg_config *v = variant(base, factor, mult > 0.0, st);
    if (!v)
        return st->code;
    tg_model *m = tg_model_create(v, st);
    free(v);
    if (!m)
        return st->code;
    tg_closure_host_set_scale(m->closures, mult);
    memcpy(m->q, q_start, sizeof(double) * (size_t)(m->nl * m->npl));
    tg_model_derive(m);
    const long nsteps = steps_in(c->cfg->vet_window_days, m->dt);
    tg_vet_run_result *res = &r->runs[r->nruns];
    memset(res, 0, sizeof *res);
    res->finer = finer;
    res->points = m->cfg.points;
    res->step_factor = factor;
    res->step_s = m->dt;
    res->multiplier = mult;
    res->energy_start = tg_model_energy(m);
    tg_code rc = march(c, m, nsteps, yard, o, st);
    if (rc == TG_OK) {
        res->stable = o->stable;
        snprintf(res->reason, sizeof res->reason, "%s", o->reason);
        res->fail_day = o->fail_day;
        res->energy_ratio = o->energy_ratio;
        res->max_cfl = o->max_cfl;
        res->energy_end = o->stable ? tg_model_energy(m) : NAN;
        res->noise_fraction = NAN;
        if (o->stable)
            rc = noise_fraction(m, &res->noise_fraction, st);
        r->nruns++;
    }
    tg_model_destroy(m);
    return rc;
}

/* The yardstick and every multiplier at one step factor; the noise limit
 * is applied once the yardstick's noise is known. Returns the margin. */
static tg_code online_set(vet_ctx *c, const tg_config *base, int finer, double factor,
                          const double *q_start, double *margin, tg_status *st)
{
    const tg_config *cfg = c->cfg;
    tg_vet_report *r = c->r;
    march_result yard, o;
    tg_code rc = online_run(c, base, finer, factor, 0.0, q_start, NULL, &yard, st);
    if (rc != TG_OK)
        return rc;
    const double yard_noise = r->runs[r->nruns - 1].noise_fraction;
    int first = r->nruns;
    for (int i = 0; i < r->nmultipliers; i++)
        if ((rc = online_run(c, base, finer, factor, r->multipliers[i], q_start, yard.esamp, &o,
                             st)) != TG_OK)
            return rc;
    /* Grid-scale noise: above the limit and above the run without the closure. */
    for (int i = first; i < r->nruns; i++) {
        tg_vet_run_result *x = &r->runs[i];
        if (x->stable && x->noise_fraction > cfg->vet_noise_limit &&
            !(x->noise_fraction <= yard_noise)) {
            x->stable = 0;
            x->fail_day = cfg->vet_window_days;
            snprintf(x->reason, sizeof x->reason,
                     "grid-scale noise: %.3g of the kinetic energy in K > pi/(2 dx) at the end "
                     "(limit %g; without the closure %.3g)",
                     x->noise_fraction, cfg->vet_noise_limit, yard_noise);
        }
    }
    /* Margin: the largest multiplier M >= 1 with every multiplier in [1, M] stable. */
    *margin = 0.0;
    for (int i = 0; i < r->nmultipliers; i++) {
        const tg_vet_run_result *x = &r->runs[first + i];
        if (x->multiplier < 1.0)
            continue;
        if (!x->stable)
            break;
        *margin = x->multiplier;
    }
    return TG_OK;
}

/* Bilinear interpolation of output-layout fields (nl layers of n x n) to
 * the grid with half the spacing (nf x nf); periodic grids wrap. */
static void refine(const double *in, int n, int nl, int periodic, double *out, int nf)
{
    for (int k = 0; k < nl; k++) {
        const double *a = in + (size_t)k * n * n;
        double *b = out + (size_t)k * nf * nf;
        for (int J = 0; J < nf; J++) {
            const int j0 = J / 2, j1 = (J % 2) ? (periodic ? (j0 + 1) % n : j0 + 1) : j0;
            for (int I = 0; I < nf; I++) {
                const int i0 = I / 2, i1 = (I % 2) ? (periodic ? (i0 + 1) % n : i0 + 1) : i0;
                b[(size_t)J * nf + I] = 0.25 * (a[(size_t)j0 * n + i0] + a[(size_t)j0 * n + i1] +
                                                a[(size_t)j1 * n + i0] + a[(size_t)j1 * n + i1]);
            }
        }
    }
}

static tg_code finer_grid(vet_ctx *c, tg_status *st)
{
    const tg_config *cfg = c->cfg;
    tg_vet_report *r = c->r;
    tg_config *f = variant(cfg, 0.5, 1, st);
    if (!f)
        return st->code;
    f->points = next_finer_points(cfg);
    r->finer_points = f->points;
    tg_code rc = tg_config_validate(f, TG_USE_RUN | TG_USE_QUIET, c->opt ? c->opt->origin : NULL,
                                    st);
    tg_model *m = NULL;
    double *psi = NULL, *q = NULL;
    if (rc == TG_OK && !(m = tg_model_create(f, st)))
        rc = st->code;
    if (rc == TG_OK) {
        const int nf = m->nout;
        psi = malloc(sizeof(double) * (size_t)m->nl * nf * nf);
        q = malloc(sizeof(double) * (size_t)(m->nl * m->npl));
        if (!psi || !q)
            rc = tg_fail(st, TG_ERR_NOMEM, "vet: no memory for the finer grid's state");
    }
    if (rc == TG_OK) {
        refine(c->psi_ref_out, c->nout, c->nl, cfg->geometry == TG_GEOM_PERIODIC, psi, m->nout);
        tg_model_set_psi(m, psi);
        memcpy(q, m->q, sizeof(double) * (size_t)(m->nl * m->npl));
        tg_model_destroy(m);
        m = NULL;
        rc = online_set(c, f, 1, 1.0, q, &r->margin_finer, st);
    }
    tg_model_destroy(m);
    free(psi);
    free(q);
    free(f);
    return rc;
}

/* ------------------------------------------------------------------ */
/* Verdicts                                                            */
/* ------------------------------------------------------------------ */

static const tg_vet_run_result *find_run(const tg_vet_report *r, int finer, double factor,
                                         double mult)
{
    for (int i = 0; i < r->nruns; i++)
        if (r->runs[i].finer == finer && r->runs[i].step_factor == factor &&
            r->runs[i].multiplier == mult)
            return &r->runs[i];
    return NULL;
}

static void linear_checks(tg_vet_report *r, const tg_config *cfg)
{
    const char *where[2] = {"rest", "reference"};
    const char *words[2] = {"around rest", "around the reference state"};
    /* Energy of a mode grows as exp(2 sigma t): at most growth_limit over the window. */
    const double W = cfg->vet_window_days * TG_SECONDS_PER_DAY;
    const double slim = log(cfg->vet_growth_limit) / (2.0 * W);
    char name[48], title[96];
    for (int s = 0; s < 2; s++) {
        const tg_vet_linear *l = &r->linear[s];
        const double sig = l->growth_rate;
        snprintf(name, sizeof name, "linear_growth_%s", where[s]);
        snprintf(title, sizeof title, "linear growth rate %s", words[s]);
        if (sig <= slim)
            add_check(r, name, title, sig * TG_SECONDS_PER_DAY, "day-1", "<=",
                      slim * TG_SECONDS_PER_DAY, TG_VET_PASS, "%s",
                      sig > 0.0 ? "grows, but slowly enough" : "no growing mode found");
        else
            add_check(r, name, title, sig * TG_SECONDS_PER_DAY, "day-1", "<=",
                      slim * TG_SECONDS_PER_DAY, TG_VET_FAIL,
                      "a mode of the closure alone grows, e-folding in %.3g days: its energy "
                      "multiplies by %.3g over the %g-day window",
                      1.0 / (sig * TG_SECONDS_PER_DAY), exp(fmin(2.0 * sig * W, 700.0)),
                      cfg->vet_window_days);
        snprintf(name, sizeof name, "linear_step_%s", where[s]);
        snprintf(title, sizeof title, "largest stable RK3 step %s", words[s]);
        const double h = l->step_limit;
        if (h >= cfg->step_s)
            add_check(r, name, title, h, "s", ">=", cfg->step_s, TG_VET_PASS, "%s",
                      !isinf(h) ? "the configured step is inside"
                      : l->growth_rate > 0.0
                          ? "no eigenvalue in the left half-plane limits the step (the growing "
                            "ones are the growth check's)"
                          : "no eigenvalue limits the step");
        else
            add_check(r, name, title, h, "s", ">=", cfg->step_s, TG_VET_FAIL,
                      "the configured step %g s puts an eigenvalue (|lambda| = %.3g s-1) outside "
                      "the RK3 stability region",
                      cfg->step_s, l->largest_magnitude);
    }
}

static void conservation_checks(tg_vet_report *r, int nl)
{
    double worst = 0.0;
    for (int s = 0; s < 2; s++)
        for (int k = 0; k < nl; k++)
            worst = fmax(worst, r->integral_ratio[s][k]);
    add_check(r, "tendency_integral", "domain integral of the tendency / integral of |.|", worst,
              "", "", NAN, TG_VET_INFO,
              "largest over layers and states (a flux-form closure in a periodic domain gives "
              "round-off; walls can carry a flux)");
    const char *states[2] = {"random", "eddying"};
    for (int s = 0; s < 2; s++) {
        char name[48], title[96];
        snprintf(name, sizeof name, "energy_input_%s", states[s]);
        snprintf(title, sizeof title, "energy input on the %s state", states[s]);
        const double e = r->energy_rate[s], tol = 1e-9 * r->energy_rate_abs[s];
        if (!r->dissipative)
            add_check(r, name, title, e, "m2 s-3", "", NAN, TG_VET_INFO, "%s",
                      "not declared dissipative: energy input allowed");
        else if (e <= tol)
            add_check(r, name, title, e, "m2 s-3", "<=", tol, TG_VET_PASS, "%s",
                      "declared dissipative and removes energy");
        else
            add_check(r, name, title, e, "m2 s-3", "<=", tol, TG_VET_FAIL,
                      "declared dissipative but adds energy on the %s state", states[s]);
        double z = 0.0;
        for (int k = 0; k < nl; k++)
            z += r->enstrophy_rate[s][k];
        snprintf(name, sizeof name, "enstrophy_input_%s", states[s]);
        snprintf(title, sizeof title, "enstrophy input on the %s state (sum of layers)",
                 states[s]);
        add_check(r, name, title, z, "s-3", "", NAN, TG_VET_INFO, "%s",
                  z > 0.0 ? "adds potential enstrophy" : "removes potential enstrophy");
    }
}

/* The online run at the configured step and coefficient (on the finer grid
 * when finer): stable, within the growth limit. */
static void online_run_check(tg_vet_report *r, const tg_config *cfg, int finer)
{
    const char *pre = finer ? "finer_" : "";
    char name[48], title[96];
    const tg_vet_run_result *x = find_run(r, finer, 1.0, 1.0);
    snprintf(name, sizeof name, "%sonline", pre);
    snprintf(title, sizeof title, "online run at the configured step and coefficient%s",
             finer ? ", finer grid" : "");
    if (x && x->stable)
        add_check(r, name, title, x->energy_ratio, "", "<=", cfg->vet_growth_limit, TG_VET_PASS,
                  "stable through %g days (figure: energy / energy without the closure)",
                  cfg->vet_window_days);
    else if (x && isfinite(x->energy_ratio))
        add_check(r, name, title, x->energy_ratio, "", "<=", cfg->vet_growth_limit,
                  TG_VET_FAIL, "%s", x->reason);
    else if (x)
        /* A run that blew up has no energy ratio: the figure is the day it stopped. */
        add_check(r, name, title, x->fail_day, "day", "", NAN, TG_VET_FAIL, "%s", x->reason);
    else
        add_check(r, name, title, NAN, "", "", NAN, TG_VET_FAIL, "not run");
}

/* The largest stable coefficient multiplier against [vet] required_margin;
 * a failure names the first unstable multiplier, or below x1 the largest
 * stable one. */
static void margin_check(tg_vet_report *r, const tg_config *cfg, int finer)
{
    const char *pre = finer ? "finer_" : "";
    char name[48], title[96];
    int fi = 0;
    if (!finer)
        for (int i = 0; i < r->nfactors; i++)
            if (r->factors[i] == 1.0)
                fi = i;
    const double m = finer ? r->margin_finer : r->margin[fi];
    snprintf(name, sizeof name, "%sstability_margin", pre);
    snprintf(title, sizeof title, "largest stable coefficient multiplier%s",
             finer ? ", finer grid" : "");
    if (m >= cfg->vet_required_margin)
        add_check(r, name, title, m, "", ">=", cfg->vet_required_margin, TG_VET_PASS,
                  "every multiplier from 1 to %g stays stable", m);
    else {
        const tg_vet_run_result *bad = NULL;
        for (int i = 0; i < r->nmultipliers && !bad; i++) {
            const tg_vet_run_result *y = find_run(r, finer, 1.0, r->multipliers[i]);
            if (y && y->multiplier >= 1.0 && !y->stable)
                bad = y;
        }
        if (m > 0.0) {
            add_check(r, name, title, m, "", ">=", cfg->vet_required_margin, TG_VET_FAIL,
                      "x%g: %s", bad ? bad->multiplier : 0.0, bad ? bad->reason : "unstable");
        } else {
            /* Unstable at x1: the largest stable multiplier below 1, if any. */
            double below = NAN, smallest = INFINITY;
            for (int i = 0; i < r->nmultipliers; i++) {
                const tg_vet_run_result *y = find_run(r, finer, 1.0, r->multipliers[i]);
                if (!y || y->multiplier <= 0.0)
                    continue;
                smallest = fmin(smallest, y->multiplier);
                if (y->multiplier < 1.0 && y->stable && !(y->multiplier <= below))
                    below = y->multiplier;
            }
            add_check(r, name, title, below, "", ">=", cfg->vet_required_margin, TG_VET_FAIL,
                      "%s%g (x1: %s)",
                      isnan(below) ? "below the smallest multiplier tried, x" : "stable at x",
                      isnan(below) ? smallest : below, bad ? bad->reason : "unstable");
            if (isnan(below))
                snprintf(r->checks[r->nchecks - 1].figure_text,
                         sizeof r->checks[0].figure_text, "<%g", smallest);
        }
    }
}

/* Information: the largest step factor stable at coefficient x1. */
static void step_factor_check(tg_vet_report *r, const tg_config *cfg)
{
    double best = 0.0;
    for (int i = 0; i < r->nfactors; i++) {
        const tg_vet_run_result *y = find_run(r, 0, r->factors[i], 1.0);
        if (!y || !y->stable)
            break;
        best = r->factors[i];
    }
    if (best > 0.0)
        add_check(r, "step_factor_margin", "largest stable step factor at coefficient x1",
                  best, "", "", NAN, TG_VET_INFO,
                  "every step factor up to it stays stable (%g s)", best * cfg->step_s);
    else {
        add_check(r, "step_factor_margin", "largest stable step factor at coefficient x1",
                  NAN, "", "", NAN, TG_VET_INFO,
                  "unstable already at the smallest step factor tried, x%g", r->factors[0]);
        snprintf(r->checks[r->nchecks - 1].figure_text, sizeof r->checks[0].figure_text,
                 "<%g", r->factors[0]);
    }
}

/* The verdicts of the online runs on one grid (the finer one when finer). */
static void online_checks(tg_vet_report *r, const tg_config *cfg, int finer)
{
    online_run_check(r, cfg, finer);
    margin_check(r, cfg, finer);
    if (!finer)
        step_factor_check(r, cfg);
}

/* ------------------------------------------------------------------ */
/* The battery                                                         */
/* ------------------------------------------------------------------ */

static void json_path(const tg_config *cfg, char *out, size_t n)
{
    snprintf(out, n, "%s/vet.json", cfg->out_directory);
}

tg_code tg_vet_validate(const tg_config *cfg, const tg_vet_options *opt, tg_status *st)
{
    const char *origin = opt ? opt->origin : NULL;
    tg_code rc = tg_config_validate(cfg, TG_USE_RUN | TG_USE_VET, origin, st);
    if (rc != TG_OK)
        return rc;
    char path[TG_PATH_LEN + 16];
    json_path(cfg, path, sizeof path);
    struct stat sb;
    if (!(opt && opt->overwrite) && stat(path, &sb) == 0)
        return tg_fail(st, TG_ERR_IO, "%s exists (from an earlier vet); give --overwrite to "
                                      "replace it, or another --out",
                       path);
    if (stat(cfg->out_directory, &sb) == 0 && !S_ISDIR(sb.st_mode))
        return tg_fail(st, TG_ERR_IO, "output directory %s exists and is not a directory",
                       cfg->out_directory);
    return TG_OK;
}

/* values (n) with 1 added when missing, ascending, without repeats. */
static int with_one_sorted(const double *values, int n, double *out)
{
    int m = 0;
    out[m++] = 1.0;
    for (int i = 0; i < n; i++) {
        int dup = 0;
        for (int j = 0; j < m; j++)
            dup |= out[j] == values[i];
        if (!dup)
            out[m++] = values[i];
    }
    for (int i = 1; i < m; i++)
        for (int j = i; j > 0 && out[j - 1] > out[j]; j--) {
            const double t = out[j];
            out[j] = out[j - 1];
            out[j - 1] = t;
        }
    return m;
}

static tg_code write_json(const tg_vet_report *r, const tg_config *cfg, const char *cmdline,
                          tg_status *st)
{
    tg_code rc = tg_make_dirs(cfg->out_directory, st);
    if (rc != TG_OK)
        return rc;
    tg_strbuf b = {0};
    tg_vet_json(r, cfg, cmdline, &b);
    if (b.oom) {
        free(b.s);
        return tg_fail(st, TG_ERR_NOMEM, "no memory for vet.json");
    }
    char path[TG_PATH_LEN + 16], tmp[TG_PATH_LEN + 32];
    json_path(cfg, path, sizeof path);
    FILE *f = tg_tmp_open(path, tmp, sizeof tmp, st);
    if (!f) {
        free(b.s);
        return st->code;
    }
    if (b.s)
        fputs(b.s, f); /* a failed write shows in ferror(f), checked by tg_tmp_commit */
    free(b.s);
    return tg_tmp_commit(f, tmp, path, st);
}

void tg_vet_report_free(tg_vet_report *r)
{
    free(r);
}

/* Whether the closure draws noise; only a component with its own
 * variables (an advance) can. On a model of its own, since the test
 * advances the closures and overwrites the state. */
static tg_code stochastic(const tg_config *cfg, int *flag, tg_status *st)
{
    tg_model *m = tg_model_create(cfg, st);
    if (!m)
        return st->code ? st->code : TG_ERR_INTERNAL;
    tg_code rc = tg_model_closures_stochastic(m, cfg, flag, st);
    tg_model_destroy(m);
    return rc;
}

/* The report's header: closure, grid, step, window and the sorted step
 * factors and multipliers (1 among them). */
static void report_start(tg_vet_report *r, const tg_config *cfg)
{
    const tg_raw_entry *use = tg_config_raw(cfg, "closure", "use");
    snprintf(r->closure, sizeof r->closure, "%s", use ? use->value : "none");
    r->points = cfg->points;
    r->nlayers = cfg->nlayers;
    r->step_s = cfg->step_s;
    r->window_days = cfg->vet_window_days;
    r->margin_finer = NAN;
    r->nfactors = with_one_sorted(cfg->vet_step_factors, cfg->n_vet_step_factors, r->factors);
    r->nmultipliers = with_one_sorted(cfg->vet_multipliers, cfg->n_vet_multipliers, r->multipliers);
    for (int i = 0; i < r->nfactors; i++)
        r->margin[i] = NAN;
}

/* The state buffers of c, whether the closures are dissipative, their
 * noise statistics when one of them advances in time, and the rest state. */
static tg_code vet_prepare(vet_ctx *c, tg_model *m, tg_status *st)
{
    tg_vet_report *r = c->r;
    c->nl = m->nl;
    c->npl = m->npl;
    c->nout = m->nout;
    c->q_rest = malloc(sizeof(double) * (size_t)(m->nl * m->npl));
    c->q_ref = malloc(sizeof(double) * (size_t)(m->nl * m->npl));
    c->psi_ref_out = malloc(sizeof(double) * (size_t)m->nl * m->nout * m->nout);
    if (!c->q_rest || !c->q_ref || !c->psi_ref_out)
        return tg_fail(st, TG_ERR_NOMEM, "vet: no memory for the states");
    r->dissipative = 1;
    int advances = 0;
    for (int i = 0; i < tg_closure_host_count(m->closures); i++) {
        r->dissipative &= tg_closure_host_ops(m->closures, i)->dissipative != 0;
        advances |= tg_closure_host_ops(m->closures, i)->advance != NULL;
    }
    tg_code rc;
    if (advances && (rc = stochastic(c->cfg, &r->stochastic, st)) != TG_OK)
        return rc;
    memcpy(c->q_rest, m->q, sizeof(double) * (size_t)(m->nl * m->npl));
    return TG_OK;
}

/* Checks 1 and 2 on the model m: linear around rest and around the
 * reference state, then conservation at a random state of the reference's
 * amplitude and at the reference. */
static tg_code linear_and_conservation(vet_ctx *c, tg_model *m, tg_status *st)
{
    const tg_config *cfg = c->cfg;
    tg_vet_report *r = c->r;
    tg_code rc;
    /* 1. Linear. */
    start_phase(c, "linear check around rest");
    progress(c, 0, 0, 0, 0);
    if ((rc = tg_vet_linearize(m, c->q_rest, cfg->vet_krylov_dimension, cfg->seed, &r->linear[0],
                               st)) != TG_OK)
        return rc;
    start_phase(c, "linear check around the reference state");
    progress(c, 0, 0, 0, 0);
    if ((rc = tg_vet_linearize(m, c->q_ref, cfg->vet_krylov_dimension, cfg->seed, &r->linear[1],
                               st)) != TG_OK)
        return rc;

    /* 2. Conservation: a random state of the reference's amplitude, then the reference. */
    start_phase(c, "conservation");
    progress(c, 0, 0, 0, 0);
    double amp = psi_rms(m);
    if (!(amp > 0.0))
        amp = cfg->noise_amplitude_m2_per_s;
    tg_model_set_noise(m, amp, cfg->seed ^ 0x9e3779b97f4a7c15ull);
    if ((rc = conservation_at(c, m, 0, st)) != TG_OK)
        return rc;
    memcpy(m->q, c->q_ref, sizeof(double) * (size_t)(m->nl * m->npl));
    tg_model_derive(m);
    return conservation_at(c, m, 1, st);
}

/* The verdicts of every check, and whether all passed. */
static void verdicts(tg_vet_report *r, const tg_config *cfg, int nl, int finer)
{
    linear_checks(r, cfg);
    conservation_checks(r, nl);
    online_checks(r, cfg, 0);
    if (finer)
        online_checks(r, cfg, 1);
    else {
        add_check(r, "finer_online", "online run on the finer grid", NAN, "", "", NAN,
                  TG_VET_INFO, "%s",
                  cfg->vet_finer_grid ? "not run: the finer grid would exceed 4097 points"
                                      : "not run ([vet] finer_grid = no)");
        snprintf(r->checks[r->nchecks - 1].figure_text, sizeof r->checks[0].figure_text,
                 "not run");
    }
    r->passed = 1;
    for (int i = 0; i < r->nchecks; i++)
        if (r->checks[i].verdict == TG_VET_FAIL)
            r->passed = 0;
}

tg_code tg_vet_run(const tg_config *cfg, const tg_vet_options *opt, tg_vet_report **rep,
                   tg_status *st)
{
    *rep = NULL;
    tg_code rc = tg_vet_validate(cfg, opt, st);
    if (rc != TG_OK)
        return rc;
    const double t0 = tg_clock_s();
    tg_vet_report *r = calloc(1, sizeof *r);
    vet_ctx c = {.cfg = cfg, .opt = opt, .r = r};
    tg_model *m = NULL;
    if (!r)
        return tg_fail(st, TG_ERR_NOMEM, "vet: no memory for the report");
    report_start(r, cfg);
    const int finer = cfg->vet_finer_grid && next_finer_points(cfg) <= 4097;
    c.nphases = (strcmp(cfg->vet_reference_state, "spinup") == 0) + 3 +
                r->nfactors * (1 + r->nmultipliers) + (finer ? 1 + r->nmultipliers : 0);

    if (cfg->step_choice == TG_STEP_ADAPTIVE)
        tg_log(TG_LOG_INFO, "vet: every run takes fixed steps (step_s times each step factor); "
                            "[time] step_choice = adaptive does not apply");
    if (!(m = tg_model_create(cfg, st))) {
        rc = st->code;
        goto done;
    }
    m->cfg.step_choice = TG_STEP_FIXED; /* time is step * dt, as in the variants */
    if ((rc = vet_prepare(&c, m, st)) != TG_OK)
        goto done;

    /* The reference state. */
    if ((rc = reference_state(&c, m, st)) != TG_OK)
        goto done;

    /* 1. Linear and 2. conservation. */
    if ((rc = linear_and_conservation(&c, m, st)) != TG_OK)
        goto done;
    tg_model_destroy(m);
    m = NULL;

    /* 3. Online on the configured grid. */
    for (int i = 0; i < r->nfactors; i++)
        if ((rc = online_set(&c, cfg, 0, r->factors[i], c.q_ref, &r->margin[i], st)) != TG_OK)
            goto done;

    /* 4. The next finer grid. */
    if (finer && (rc = finer_grid(&c, st)) != TG_OK)
        goto done;

    verdicts(r, cfg, c.nl, finer);
    r->seconds = tg_clock_s() - t0;
    rc = write_json(r, cfg, opt ? opt->command_line : NULL, st);

done:
    tg_model_destroy(m);
    free(c.q_rest);
    free(c.q_ref);
    free(c.psi_ref_out);
    if (rc != TG_OK) {
        free(r);
        return rc;
    }
    *rep = r;
    return TG_OK;
}
