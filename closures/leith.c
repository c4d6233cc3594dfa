/* leith.c - closure "leith": harmonic viscosity set by the vorticity gradient.
 *
 * Leith 1996 (Physica D 98, 481-491): in two-dimensional turbulence the
 * eddy viscosity that drains the enstrophy cascade at the grid scale is
 *   nu = (C dx)^3 |grad zeta|,
 * written (Lambda dx / pi)^3 |grad_h zeta| by Fox-Kemper & Menemenlis 2008
 * (AGU Geophys. Monogr. 177, 319-337), so C = Lambda / pi. It acts on the
 * relative vorticity of each layer in flux form,
 *   dq_k/dt = div(nu_k grad zeta_k),
 * with centred gradients of zeta (zeta's ring holds the wall vorticity) and
 * nu's ring filled with TG_RING_EXTEND. The domain integral of the tendency
 * is a boundary flux only (zero when periodic); the relative-enstrophy rate
 * is -sum nu |grad zeta|^2 <= 0. The energy rate sum nu grad psi . grad zeta
 * is negative on every flow the tests try but not by construction.
 *
 * Default C = 1/pi (Lambda = 1, the order-one value Fox-Kemper & Menemenlis
 * 2008 use; from memory). The explicit SSP-RK3 step is stable while
 * 8 nu dt / dx^2 < 2.5; with |grad zeta| <= 2 max|zeta| / dx that holds for
 * the default while max|zeta| dt < 4.8.
 *
 * Also defines the Leith-viscosity helper of viscous.h, shared with
 * leith_qg.c.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <math.h>
#include <stdlib.h>

#include "closure.h"
#include "viscous.h"

enum { P_C, P_N };

static const tg_closure_param params[P_N] = {
    [P_C] = {"leith_coefficient", "", TG_PARAM_REAL, 0.31830988618379067, 0.0, 2.0, NULL,
             "dimensionless C in nu = (C dx)^3 |grad zeta| (Lambda/pi; default 1/pi)"},
};

void tg_visc_leith_nu(const tg_visc_grid *gr, double C, const double *f, double extra_fy,
                      double *gx, double *gy, double *nu)
{
    const tg_closure_tools *t = gr->tools;
    const int ns = gr->ns, a0 = gr->a0, a1 = gr->a1;
    const double c3 = (C * gr->dx) * (C * gr->dx) * (C * gr->dx);
    t->ddx(t->ctx, f, gx);
    t->ddy(t->ctx, f, gy);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long r0 = (long)j * ns;
        const double *x = gx + r0, *y = gy + r0;
        double *o = nu + r0;
        for (int i = a0; i < a1; i++) {
            const double fy = y[i] + extra_fy;
            o[i] = c3 * sqrt(x[i] * x[i] + fy * fy); /* Leith 1996: (C dx)^3 |grad f| */
        }
    }
    t->fill_ring(t->ctx, nu, TG_RING_EXTEND);
}

typedef struct {
    double C;
    int nl;
    long npl;
    tg_visc_grid gr;
    double *nu, *gx, *gy; /* npl each */
} leith_state;

static void leith_destroy(void *state)
{
    leith_state *s = state;
    if (!s)
        return;
    free(s->nu);
    free(s->gx);
    free(s->gy);
    free(s);
}

static tg_code leith_create(const tg_closure_setup *su, void **state, tg_status *st)
{
    leith_state *s = calloc(1, sizeof *s);
    if (!s)
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the leith state");
    s->C = su->params[P_C];
    s->nl = su->nlayers;
    s->npl = (long)su->ns * su->ns;
    s->gr = (tg_visc_grid){.ns = su->ns, .a0 = su->a0, .a1 = su->a1, .dx = su->dx,
                           .tools = su->tools};
    s->nu = calloc((size_t)s->npl, sizeof(double));
    s->gx = calloc((size_t)s->npl, sizeof(double));
    s->gy = calloc((size_t)s->npl, sizeof(double));
    if (!s->nu || !s->gx || !s->gy) {
        leith_destroy(s);
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the leith work arrays (3 x %ld doubles)",
                       (long)su->ns * su->ns);
    }
    *state = s;
    return TG_OK;
}

static tg_code leith_tendency(void *state, const tg_closure_view *v, double *tend, tg_status *st)
{
    (void)st;
    leith_state *s = state;
    const tg_closure_tools *t = v->tools;
    s->gr.tools = t;
    for (int k = 0; k < s->nl; k++) {
        const long off = k * s->npl;
        tg_visc_leith_nu(&s->gr, s->C, v->zeta + off, 0.0, s->gx, s->gy, s->nu);
        /* dq_k/dt = div(nu grad zeta_k), flux form */
        t->div_nu_grad(t->ctx, s->nu, v->zeta + off, tend + off);
    }
    return TG_OK;
}

/* The largest nu of any layer now, in the harmonic bound of closure.h. */
static double leith_stable_step(void *state, const tg_closure_view *v)
{
    leith_state *s = state;
    s->gr.tools = v->tools;
    double numax = 0.0;
    for (int k = 0; k < s->nl; k++) {
        tg_visc_leith_nu(&s->gr, s->C, v->zeta + k * s->npl, 0.0, s->gx, s->gy, s->nu);
        numax = fmax(numax, tg_visc_active_max(&s->gr, s->nu));
    }
    return tg_stable_step_harmonic(numax, s->gr.dx);
}

const tg_closure_ops tg_scheme_leith = {
    .abi = TG_CLOSURE_ABI,
    .name = "leith",
    .summary = "harmonic viscosity (C dx)^3 |grad zeta| on relative vorticity, flux form",
    .source = "Leith 1996, Physica D 98, 481-491; Fox-Kemper & Menemenlis 2008, AGU Geophys. "
              "Monogr. 177, 319-337",
    .dissipative = 1,
    .nparams = P_N,
    .params = params,
    .create = leith_create,
    .tendency = leith_tendency,
    .destroy = leith_destroy,
    .stable_step = leith_stable_step,
};
