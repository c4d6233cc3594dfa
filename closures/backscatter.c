/* backscatter.c - closure "backscatter": kinetic-energy backscatter by a
 * negative harmonic viscosity balanced by a biharmonic sink.
 *
 * Jansen & Held 2014 (Parameterizing subgrid-scale eddy effects using
 * energetically consistent backscatter, Ocean Modelling 80, 36-48) return
 * the energy that a scale-selective (biharmonic) viscosity removes near the
 * grid scale to the larger resolved scales by a negative Laplacian
 * viscosity. On relative vorticity zeta_k of every layer k:
 *
 *   T_k = -nu_b lap zeta_k - A4 lap^2 zeta_k,     nu_b > 0, A4 > 0.
 *
 * For a Fourier (or, in the basin, a sine) mode of discrete Laplacian
 * eigenvalue -lambda, T = (nu_b lambda - A4 lambda^2) zeta: the mode gains
 * energy when lambda < nu_b/A4 (large scales: backscatter) and loses it when
 * lambda > nu_b/A4 (small scales: the sink). The energy rate of T is
 * -sum psi T = (nu_b lambda - A4 lambda^2) lambda |psi|^2 per mode.
 *
 * The tendency is the closure tool `viscosity` with A2 = -nu_b, i.e. the
 * same code path (and wall treatment) as the core's lateral viscosity.
 * The scheme can add energy, so it is declared non-dissipative.
 *
 * Defaults (for a 30 km grid; chosen here, not values from the paper):
 * nu_b = 500 m2 s-1 and A4 = 3e11 m4 s-1 put the neutral wavelength
 * 2 pi sqrt(A4/nu_b) at about 150 km (5 grid spacings); a 2 dx wave is
 * damped with an e-folding time of about 3 days; both terms are far inside
 * the explicit stability limit of a one-hour step.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>

#include "closure.h"

enum { P_NUB, P_A4, P_N };

static const tg_closure_param params[P_N] = {
    [P_NUB] = {"backscatter_viscosity_m2_per_s", "m2 s-1", TG_PARAM_REAL, 500.0, 0.0, 1e6, NULL,
               "magnitude nu_b of the negative harmonic viscosity (energy source)"},
    [P_A4] = {"hyperviscosity_m4_per_s", "m4 s-1", TG_PARAM_REAL, 3e11, 0.0, 1e18, NULL,
              "biharmonic viscosity A4 of the small-scale energy sink"},
};

typedef struct {
    double nub, A4;
    int nl;
    long npl;
} back_state;

static tg_code back_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    back_state *b = calloc(1, sizeof *b);
    if (!b)
        return tg_fail(st, TG_ERR_NOMEM, "backscatter: no memory for its state");
    b->nub = s->params[P_NUB];
    b->A4 = s->params[P_A4];
    b->nl = s->nlayers;
    b->npl = (long)s->ns * s->ns;
    *state = b;
    return TG_OK;
}

static tg_code back_tendency(void *state, const tg_closure_view *view, double *tend,
                             tg_status *st)
{
    (void)st;
    const back_state *b = state;
    /* Jansen & Held 2014: negative Laplacian viscosity (A2 = -nu_b) plus a
     * biharmonic sink, T = -nu_b lap zeta - A4 lap^2 zeta. */
    for (int k = 0; k < b->nl; k++)
        view->tools->viscosity(view->tools->ctx, view->zeta + k * b->npl, -b->nub, b->A4,
                               tend + k * b->npl);
    return TG_OK;
}

/* The damping rate A4 lambda^2 - nu_b lambda is below A4 lambda^2, so the
 * biharmonic bound of closure.h holds (the growing large scales are slow). */
static double back_stable_step(void *state, const tg_closure_view *view)
{
    const back_state *b = state;
    return tg_stable_step_biharmonic(b->A4, view->dx);
}

static void back_destroy(void *state)
{
    free(state);
}

const tg_closure_ops tg_scheme_backscatter = {
    .abi = TG_CLOSURE_ABI,
    .name = "backscatter",
    .summary = "energy backscatter: negative harmonic viscosity with a biharmonic sink",
    .source = "Jansen & Held 2014, Ocean Modelling 80, 36-48",
    .dissipative = 0,
    .nparams = P_N,
    .params = params,
    .create = back_create,
    .tendency = back_tendency,
    .destroy = back_destroy,
    .stable_step = back_stable_step,
};
