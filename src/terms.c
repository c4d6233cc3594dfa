/* terms.c - the PV tendency, one term at a time, with each term's budget rates.
 *
 * Each term is computed into m->term, its energy and enstrophy rates are
 * formed from that array, and it is added to m->tend. The rates are
 *   energy:    -(1/(H A)) sum_k H_k sum_active (psi_k - c_k) T_k dx^2
 *   enstrophy:  (1/A) sum_active q_k T_k dx^2            (per layer)
 * where c_k is psi_k's wall value; with psi constant on the walls and the
 * mass constraint, the first is exactly the rate of change of the discrete
 * energy that tg_model_energy computes (DEVELOPERS.md, "Discrete energy").
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <string.h>

#include "fdops.h"
#include "model.h"

/* Zeroes the active block of one layer's term. */
static void zero_layer(const tg_model *m, double *t)
{
    const tg_geometry *g = m->geom;
    for (int j = g->a0; j < g->a1; j++)
        memset(t + (long)j * g->ns + g->a0, 0, sizeof(double) * (g->a1 - g->a0));
}

/* Rates of layer k's part of m->term, added into rates, then tend += term. */
static void account(tg_model *m, int k, int which, tg_term_rates *rates)
{
    const tg_geometry *g = m->geom;
    const long off = k * m->npl;
    if (rates) {
        double ek = tg_sum_prod(g, m->term + off, m->psi + off, m->wall[k], m->rowbuf);
        double zk = tg_sum_prod(g, m->term + off, m->q + off, 0.0, m->rowbuf);
        rates->energy[which] += -m->cfg.thickness_m[k] * ek / (m->Htot * g->area);
        rates->enstrophy[which][k] += zk / g->area;
    }
    tg_axpby(g, 1.0, m->tend + off, 1.0, m->term + off);
}

tg_code tg_model_tendency(tg_model *m, int stage, tg_term_rates *rates, tg_status *st)
{
    const tg_geometry *g = m->geom;
    const tg_config *c = &m->cfg;
    const int nl = m->nl;
    const long npl = m->npl;
    if (rates)
        memset(rates, 0, sizeof *rates);
    for (int k = 0; k < nl; k++)
        zero_layer(m, m->tend + k * npl);

    /* Advection: -J(psi_k, q_k), Arakawa (1966). */
    for (int k = 0; k < nl; k++) {
        tg_jacobian(g, m->psi + k * npl, m->q + k * npl, m->term + k * npl);
        tg_axpby(g, -1.0, m->term + k * npl, 0.0, m->term + k * npl);
        account(m, k, TG_TERM_ADVECTION, rates);
    }

    /* Wind: curl(tau)/(rho0 H_1) in the top layer. */
    if (c->wind_profile != TG_WIND_NONE && c->stress_amplitude_pa != 0.0) {
        double *t = m->term;
        zero_layer(m, t);
        tg_axpby(g, 0.0, t, 1.0, m->wind_forcing);
        account(m, 0, TG_TERM_WIND, rates);
    }

    /* Bottom drag: -r zeta_N in the bottom layer (Ekman friction). */
    if (c->bottom_drag_per_s != 0.0) {
        const int k = nl - 1;
        double *t = m->term + k * npl;
        zero_layer(m, t);
        tg_axpby(g, 0.0, t, -c->bottom_drag_per_s, m->zeta + k * npl);
        account(m, k, TG_TERM_BOTTOM_DRAG, rates);
    }

    /* Lateral viscosity on relative vorticity: A2 lap zeta - A4 lap^2 zeta. */
    const double A2 = c->viscosity_m2_per_s, A4 = c->hyperviscosity_m4_per_s;
    if (A2 != 0.0 || A4 != 0.0) {
        for (int k = 0; k < nl; k++) {
            double *t = m->term + k * npl;
            tg_laplacian(g, m->zeta + k * npl, m->lap1);
            zero_layer(m, t);
            if (A2 != 0.0)
                tg_axpby(g, 0.0, t, A2, m->lap1);
            if (A4 != 0.0) {
                g->ops->fill_laplacian_ring(g, m->lap1);
                tg_laplacian(g, m->lap1, m->lap2);
                tg_axpby(g, 1.0, t, -A4, m->lap2);
            }
            account(m, k, TG_TERM_VISCOSITY, rates);
        }
    }

    /* Closures: each writes its tendency for every layer into m->term. */
    for (int ci = 0; ci < m->nclosures; ci++) {
        tg_closure *cl = m->closures[ci];
        tg_closure_view v = {
            .nlayers = nl, .ns = g->ns, .a0 = g->a0, .a1 = g->a1, .dx = g->dx, .dt = m->dt,
            .step = m->step, .stage = stage, .psi = m->psi, .q = m->q, .zeta = m->zeta,
            .thickness_m = c->thickness_m,
        };
        for (int k = 0; k < nl; k++)
            zero_layer(m, m->term + k * npl);
        tg_code rc = cl->ops->add_tendency(cl, &v, m->term, st);
        if (rc != TG_OK)
            return rc;
        for (int k = 0; k < nl; k++)
            account(m, k, TG_TERM_CLOSURE, rates);
    }
    return TG_OK;
}
