/* stepper.c - SSP-RK3 time step (stepper.h). Allocates nothing. */
#include "stepper.h"

#include <string.h>

#include "fdops.h"

static void add_weighted(tg_term_rates *acc, const tg_term_rates *r, double w, int nl, int nc)
{
    for (int t = 0; t < TG_NTERMS; t++) {
        acc->energy[t] += w * r->energy[t];
        for (int k = 0; k < nl; k++)
            acc->enstrophy[t][k] += w * r->enstrophy[t][k];
    }
    for (int c = 0; c < nc; c++) {
        acc->comp_energy[c] += w * r->comp_energy[c];
        for (int k = 0; k < nl; k++)
            acc->comp_enstrophy[c][k] += w * r->comp_enstrophy[c][k];
    }
}

/* q_k = a q0_k + b (q_k + dt tend_k) on the active nodes of every layer. */
static void combine(tg_model *m, double a, double b)
{
    const tg_geometry *g = m->geom;
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double dt = m->dt;
    for (int k = 0; k < m->nl; k++) {
        double *q = m->q + k * m->npl;
        const double *q0 = m->q0 + k * m->npl, *t = m->tend + k * m->npl;
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                long p = (long)j * ns + i;
                q[p] = a * q0[p] + b * (q[p] + dt * t[p]);
            }
    }
}

tg_code tg_step(tg_model *m, tg_term_rates *rates, tg_status *st)
{
    static const double a[3] = {0.0, 0.75, 1.0 / 3.0};
    static const double b[3] = {1.0, 0.25, 2.0 / 3.0};
    static const double w[3] = {1.0 / 6.0, 1.0 / 6.0, 2.0 / 3.0};
    tg_term_rates stage_rates;
    if (rates)
        memset(rates, 0, sizeof *rates);
    memcpy(m->q0, m->q, sizeof(double) * m->nl * m->npl);
    for (int s = 0; s < 3; s++) {
        tg_code rc = tg_model_tendency(m, s, rates ? &stage_rates : NULL, st);
        if (rc != TG_OK) {
            memcpy(m->q, m->q0, sizeof(double) * m->nl * m->npl);
            tg_model_derive(m);
            return rc;
        }
        if (rates)
            add_weighted(rates, &stage_rates, w[s], m->nl, tg_closure_host_count(m->closures));
        combine(m, a[s], b[s]);
        if (s == 2)
            m->step++;
        tg_model_derive(m);
    }
    /* Closures advance their own variables once per completed step. */
    tg_closure_input in = {.psi = m->psi, .q = m->q, .zeta = m->zeta, .wall = m->wall,
                           .step = m->step, .stage = 0};
    return tg_closure_host_advance(m->closures, &in, st);
}
