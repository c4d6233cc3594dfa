/* stepper.c - SSP-RK3 time step (stepper.h). Allocates nothing.
 *
 * Three arrays of PV take turns instead of being copied: m->q is the stage
 * being evaluated, m->q0 the state at the start of the step and m->qnext
 * the stage being written. Each stage is one tg_model_stage_update (the
 * tendency, the update qnext = a q0 + b (q + dt L(q)) and the modal
 * right-hand sides of qnext) and one tg_model_invert of the new m->q.
 * After a step, m->q0 holds the state at its start (run.c rewinds to it
 * when a step went bad).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "stepper.h"

#include <string.h>

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

tg_code tg_step(tg_model *m, tg_term_rates *rates, tg_status *st)
{
    static const double a[3] = {0.0, 0.75, 1.0 / 3.0};
    static const double b[3] = {1.0, 0.25, 2.0 / 3.0};
    static const double w[3] = {1.0 / 6.0, 1.0 / 6.0, 2.0 / 3.0};
    tg_term_rates stage_rates;
    if (rates)
        memset(rates, 0, sizeof *rates);
    tg_closure_host_set_step(m->closures, m->dt);
    for (int s = 0; s < 3; s++) {
        /* In the first stage the state at the start of the step is m->q itself. */
        const double *q0 = s == 0 ? m->q : m->q0;
        tg_code rc = tg_model_stage_update(m, s, q0, a[s], b[s], rates ? &stage_rates : NULL, st);
        if (rc != TG_OK) {
            /* Back to the state at the start of the step. */
            if (s > 0) {
                memcpy(m->q, m->q0, sizeof(double) * m->nl * m->npl);
                tg_model_derive(m);
            }
            return rc;
        }
        if (rates)
            add_weighted(rates, &stage_rates, w[s], m->nl, tg_closure_host_count(m->closures));
        /* The stage just written becomes the current state; after the first
         * stage the old current state is the start of the step. */
        double *done = m->q;
        m->q = m->qnext;
        m->qnext = s == 0 ? m->q0 : done;
        if (s == 0)
            m->q0 = done;
        if (s == 2) {
            m->step++;
            /* Fixed steps: time is step * dt exactly; adaptive: the sum. */
            if (m->cfg.step_choice == TG_STEP_FIXED)
                m->time_s = m->step * m->dt;
            else
                m->time_s += m->dt;
        }
        tg_model_invert(m);
    }
    /* Closures advance their own variables once per completed step. */
    tg_closure_input in = {.psi = m->psi, .q = m->q, .zeta = m->zeta, .wall = m->wall,
                           .step = m->step, .stage = 0};
    return tg_closure_host_advance(m->closures, &in, st);
}
