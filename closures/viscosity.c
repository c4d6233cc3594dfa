/* viscosity.c - closure "viscosity": constant harmonic and biharmonic viscosity.
 *
 * The PV tendency of each layer is A2 lap zeta - A4 lap^2 zeta, computed by
 * the same library routine as the core's lateral viscosity ([dissipation]),
 * through the closure tools (tg_closure_tools.viscosity). Lateral
 * viscosity as an eddy closure: Smagorinsky 1963 (Mon. Wea. Rev. 91,
 * 99-164) for the harmonic form; Holland 1978 (J. Phys. Oceanogr. 8,
 * 363-392) for the biharmonic form in quasi-geostrophic gyres.
 *
 * This file is also the smallest complete example of a scheme: a parameter
 * table, create, tendency, destroy.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>

#include "closure.h"

enum { P_A2, P_A4, P_N };

static const tg_closure_param params[P_N] = {
    [P_A2] = {"viscosity_m2_per_s", "m2 s-1", TG_PARAM_REAL, 500.0, 0.0, 1e7, NULL,
              "harmonic (Laplacian) eddy viscosity A2"},
    [P_A4] = {"hyperviscosity_m4_per_s", "m4 s-1", TG_PARAM_REAL, 0.0, 0.0, 1e18, NULL,
              "biharmonic eddy viscosity A4"},
};

typedef struct {
    double A2, A4;
    int nl;
    long npl;
} visc_state;

static tg_code visc_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    visc_state *v = calloc(1, sizeof *v);
    if (!v)
        return tg_fail(st, TG_ERR_NOMEM, "no memory");
    v->A2 = s->params[P_A2];
    v->A4 = s->params[P_A4];
    v->nl = s->nlayers;
    v->npl = (long)s->ns * s->ns;
    *state = v;
    return TG_OK;
}

static tg_code visc_tendency(void *state, const tg_closure_view *view, double *tend,
                             tg_status *st)
{
    (void)st;
    const visc_state *v = state;
    for (int k = 0; k < v->nl; k++)
        view->tools->viscosity(view->tools->ctx, view->zeta + k * v->npl, v->A2, v->A4,
                               tend + k * v->npl);
    return TG_OK;
}

/* Constant coefficients: the smaller of the two bounds of closure.h. */
static double visc_stable_step(void *state, const tg_closure_view *view)
{
    const visc_state *v = state;
    return fmin(tg_stable_step_harmonic(v->A2, view->dx),
                tg_stable_step_biharmonic(v->A4, view->dx));
}

static void visc_destroy(void *state)
{
    free(state);
}

const tg_closure_ops tg_scheme_viscosity = {
    .abi = TG_CLOSURE_ABI,
    .name = "viscosity",
    .summary = "constant harmonic and biharmonic viscosity on relative vorticity",
    .source = "Smagorinsky 1963, Mon. Wea. Rev. 91, 99-164 (harmonic); Holland 1978, "
              "J. Phys. Oceanogr. 8, 363-392 (biharmonic)",
    .dissipative = 1,
    .nparams = P_N,
    .params = params,
    .create = visc_create,
    .tendency = visc_tendency,
    .destroy = visc_destroy,
    .stable_step = visc_stable_step,
};
