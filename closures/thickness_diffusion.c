/* thickness_diffusion.c - closure "thickness_diffusion": diffusion of
 * interface heights (layer thickness), the quasi-geostrophic form of the
 * Gent & McWilliams (1990, Isopycnal mixing in ocean circulation models,
 * J. Phys. Oceanogr. 20, 150-155) eddy-induced transport.
 *
 * Interfaces. Interface i lies below layer i (i = 1..N-1); its upward
 * displacement follows from hydrostatic balance with the layer pressures
 * rho0 f0 psi_k (Vallis 2017, Atmospheric and Oceanic Fluid Dynamics,
 * section 5.3; Pedlosky 1987, Geophysical Fluid Dynamics, section 6.16):
 *
 *   eta_i = (f0/g'_i) (psi_{i+1} - psi_i).
 *
 * With this sign, the stretching term of src/numerics/modes.h,
 *   (S psi)_k = f0^2/(g'_{k-1} H_k)(psi_{k-1} - psi_k) - f0^2/(g'_k H_k)(psi_k - psi_{k+1}),
 * is exactly
 *   (S psi)_k = (f0/H_k) (eta_k - eta_{k-1}),   eta_0 = eta_N = 0,
 * i.e. -f0 times the relative thickness anomaly of layer k.
 *
 * Scheme. Each interface is diffused with a constant coefficient kappa,
 * d eta_i/dt = kappa lap eta_i (for constant kappa this is GM's thickness
 * diffusion d h_k/dt = div(kappa grad h_k) of Gent & McWilliams 1990 in
 * layer form). Relative vorticity is not changed directly, so the PV
 * tendency is the change of the stretching term:
 *
 *   T_k = (f0/H_k)(kappa lap eta_k - kappa lap eta_{k-1}) = kappa lap (S psi)_k,
 *
 * the form computed here (S is linear, so diffusing S psi diffuses every
 * eta_i at once). A barotropic flow (psi the same in all layers) has
 * S psi = 0 and gets no tendency.
 *
 * Walls. No thickness flux crosses a wall: the normal gradient of every
 * eta_i, hence of (S psi)_k, is zero there. (S psi)_k's ring is filled by
 * EXTEND before the five-point Laplacian, which makes that Laplacian a
 * flux form with zero wall fluxes: the domain sum of T_k vanishes (the
 * volume of every layer is conserved) and, summing by parts over the
 * edges between active nodes, the energy rate of the budget is exactly
 *
 *   -(1/(H A)) sum_k H_k sum (psi_k - c_k) T_k dx^2
 *      = -(kappa/(H A)) sum_i (f0^2/g'_i) sum_edges (delta (psi_i - psi_{i+1}))^2
 *      = -(kappa/(H A)) sum_i g'_i integral |grad eta_i|^2,
 *
 * a loss of available potential energy (Gent & McWilliams 1990; Gent,
 * Willebrand, McDougall & McWilliams 1995, J. Phys. Oceanogr. 25, 463-474,
 * from memory). The scheme is declared dissipative.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>

#include "closure.h"

enum { P_KAPPA, P_N };

static const tg_closure_param params[P_N] = {
    [P_KAPPA] = {"thickness_diffusivity_m2_per_s", "m2 s-1", TG_PARAM_REAL, 500.0, 0.0, 1e6, NULL,
                 "diffusivity kappa of the interface heights (Gent-McWilliams coefficient)"},
};

typedef struct {
    double kappa;
    int nl, ns, a0, a1;
    long npl;
    double *S;          /* stretching matrix, nl x nl row-major, m-2 */
    double *stretch;    /* npl: (S psi)_k of one layer, ring extended */
} thick_state;

static void thick_destroy(void *state)
{
    thick_state *t = state;
    if (!t)
        return;
    free(t->S);
    free(t->stretch);
    free(t);
}

static tg_code thick_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    thick_state *t = calloc(1, sizeof *t);
    if (!t)
        return tg_fail(st, TG_ERR_NOMEM, "thickness_diffusion: no memory for its state");
    t->kappa = s->params[P_KAPPA];
    t->nl = s->nlayers;
    t->ns = s->ns;
    t->a0 = s->a0;
    t->a1 = s->a1;
    t->npl = (long)s->ns * s->ns;
    t->S = malloc(sizeof(double) * (size_t)t->nl * (size_t)t->nl);
    t->stretch = calloc((size_t)t->npl, sizeof(double));
    if (!t->S || !t->stretch) {
        const long npl = t->npl;
        thick_destroy(t);
        return tg_fail(st, TG_ERR_NOMEM,
                       "thickness_diffusion: no memory for work arrays (%ld values)", npl);
    }
    for (int i = 0; i < t->nl * t->nl; i++)
        t->S[i] = s->stretching[i];
    *state = t;
    return TG_OK;
}

static tg_code thick_tendency(void *state, const tg_closure_view *view, double *tend,
                              tg_status *st)
{
    (void)st;
    thick_state *t = state;
    const tg_closure_tools *tl = view->tools;
    const int ns = t->ns, a0 = t->a0, a1 = t->a1, nl = t->nl;
    for (int k = 0; k < nl; k++) {
        /* (S psi)_k = (f0/H_k)(eta_k - eta_{k-1}) on the active nodes (modes.h). */
        const double *Sk = t->S + k * nl;
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                double s = 0.0;
                for (int kk = 0; kk < nl; kk++)
                    s += Sk[kk] * view->psi[kk * t->npl + p];
                t->stretch[p] = s;
            }
        /* No thickness flux through walls: zero normal gradient of eta. */
        tl->fill_ring(tl->ctx, t->stretch, TG_RING_EXTEND);
        /* Gent & McWilliams 1990: T_k = kappa lap (S psi)_k. */
        double *out = tend + k * t->npl;
        tl->laplacian(tl->ctx, t->stretch, out);
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++)
                out[(long)j * ns + i] *= t->kappa;
    }
    return TG_OK;
}

/* The tendency is kappa lap (S psi) = kappa lap (q - zeta) up to the
 * planetary term; for a vertical mode of stretching eigenvalue -F and a
 * horizontal wavenumber K its rate is kappa K^2 F / (K^2 + F) < kappa K^2,
 * so the harmonic bound of closure.h with kappa bounds it from above. */
static double thick_stable_step(void *state, const tg_closure_view *view)
{
    const thick_state *t = state;
    return tg_stable_step_harmonic(t->kappa, view->dx);
}

const tg_closure_ops tg_scheme_thickness_diffusion = {
    .abi = TG_CLOSURE_ABI,
    .name = "thickness_diffusion",
    .summary = "Gent-McWilliams thickness diffusion: interface heights diffused, APE removed",
    .source = "Gent & McWilliams 1990, J. Phys. Oceanogr. 20, 150-155",
    .dissipative = 1,
    .nparams = P_N,
    .params = params,
    .create = thick_create,
    .tendency = thick_tendency,
    .destroy = thick_destroy,
    .stable_step = thick_stable_step,
};
