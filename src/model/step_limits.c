/* step_limits.c - the stability bound of each term and the adaptive step
 * choice (step_limits.h). */
#include "step_limits.h"

#include <math.h>

#include "closure.h"
#include "closure_host.h"

void tg_step_limits_core(const tg_model *m, tg_step_limits *L)
{
    const tg_config *cfg = &m->cfg;
    const double dx = m->geom->dx;
    L->harmonic = tg_stable_step_harmonic(cfg->viscosity_m2_per_s, dx);
    L->biharmonic = tg_stable_step_biharmonic(cfg->hyperviscosity_m4_per_s, dx);
    /* Drag acts on zeta_N = q_N - (S psi)_N: its rate on q is at most r. */
    L->drag = cfg->bottom_drag_per_s > 0.0 ? TG_RK3_REAL_AXIS / cfg->bottom_drag_per_s : INFINITY;
    L->closure = INFINITY;
    L->closure_which = -1;
    L->damping_rate = 1.0 / L->harmonic + 1.0 / L->biharmonic + 1.0 / L->drag;
    /* omega_max (step_limits.h): periodic, max |Q_y| / K_min with
     * K_min = dk = 2 pi/L; basin, the gravest basin mode's beta / (2 K_11),
     * K_11 = sqrt(2) dk with dk = pi/L. */
    double qy = fabs(cfg->beta_per_m_per_s);
    for (int k = 0; k < m->nl; k++)
        qy = fmax(qy, fabs(m->Qy[k]));
    const double dk = m->geom->spectrum_dk;
    L->wave_frequency = m->geom->kind == TG_GEOM_BASIN ? qy / (2.0 * sqrt(2.0) * dk) : qy / dk;
}

double tg_step_limits_wave(const tg_step_limits *L, double target_cfl)
{
    return L->wave_frequency > 0.0 ? target_cfl / L->wave_frequency : INFINITY;
}

void tg_step_limits_closures(tg_model *m, tg_step_limits *L)
{
    tg_closure_input in = {.psi = m->psi, .q = m->q, .zeta = m->zeta, .wall = m->wall,
                           .step = m->step, .stage = 0};
    double sum = 0.0;
    L->closure = tg_closure_host_stable_step(m->closures, &in, &sum, &L->closure_which);
    L->damping_rate += sum;
}

double tg_step_limits_damping(const tg_step_limits *L, double cfl)
{
    const double room = 1.0 - cfl / sqrt(3.0);
    if (!(L->damping_rate > 0.0))
        return INFINITY;
    return room > 0.0 ? room / L->damping_rate : 0.0;
}

double tg_step_limits_advective(double target_cfl, double rate)
{
    return rate > 0.0 ? target_cfl / rate : INFINITY;
}

double tg_step_limits_choose(const tg_config *cfg, const tg_step_limits *L, double rate,
                             double prev, const char **binding)
{
    const char *why = "advective";
    double dt = tg_step_limits_advective(cfg->target_cfl, rate);
    const double wave = tg_step_limits_wave(L, cfg->target_cfl);
    if (wave < dt) {
        dt = wave;
        why = "wave";
    }
    const double damp = tg_step_limits_damping(L, cfg->target_cfl);
    if (damp < dt) {
        dt = damp;
        why = "damping";
    }
    if (prev * cfg->step_growth < dt) {
        dt = prev * cfg->step_growth;
        why = "growth";
    }
    if (dt > cfg->largest_step_s) {
        dt = cfg->largest_step_s;
        why = "largest";
    }
    if (dt < cfg->smallest_step_s) {
        dt = cfg->smallest_step_s;
        why = "smallest";
    }
    if (binding)
        *binding = why;
    return dt;
}
