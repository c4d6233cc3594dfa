/* leith_qg.c - closure "leith_qg": harmonic PV diffusion set by the PV gradient.
 *
 * The quasi-geostrophic form of Leith's viscosity (Leith 1996, Physica D
 * 98, 481-491; Fox-Kemper & Menemenlis 2008, AGU Geophys. Monogr. 177,
 * 319-337; Bachman, Fox-Kemper & Pearson 2017, J. Adv. Model. Earth Syst.
 * 9, 1567-1589): in QG turbulence the cascading quantity is the potential
 * enstrophy, so the coefficient is set by the horizontal PV gradient and
 * the operator acts on the PV,
 *   nu_k = (C dx)^3 |grad_h q_k|,
 *   dq_k/dt = div(nu_k grad q'_k),     q'_k = zeta_k + (S psi)_k,
 * the flux form, with S the stretching matrix (modes.h).
 *
 * Choices (documented in the README snippet too):
 *  - The operator diffuses the dynamic PV q' = zeta + S psi, relative
 *    vorticity and stretching, not the planetary part beta (y - y0): the
 *    flux form of div(nu grad (beta y)) = beta dnu/dy would be a forcing
 *    of its own, not a mixing of the resolved flow. q' is formed here from
 *    the view's zeta and psi (rings filled), so the scheme reads the same in
 *    the basin, where the model's q holds beta (y - y0), and in the periodic
 *    domain, where it does not.
 *  - The coefficient uses |grad q' + beta y_hat| by default, the gradient
 *    of the full QG PV as in Bachman et al. 2017 (from memory);
 *    include_planetary_gradient = false uses the eddy part |grad q'| only.
 *    With beta the coefficient never falls below (C dx)^3 beta (about
 *    15 m2 s-1 in the 30 km Marrowind basin with the default C).
 *
 * Properties: the domain integral of the tendency is a boundary flux only
 * (zero when periodic); the rate sum q' * tendency = -sum nu |grad q'|^2
 * <= 0 (potential enstrophy of q'). The energy rate contains, besides the
 * relative-vorticity part, sum_k H_k nu_k grad psi_k . grad (S psi)_k, which
 * is negative by construction only where nu is the same in every layer;
 * tests/unit/test_closure_viscous.c checks the total on random and eddying
 * flows.
 *
 * Default C = 1/pi (Lambda = 1 in (Lambda dx/pi)^3, as for leith.c).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>

#include "closure.h"
#include "viscous.h"

enum { P_C, P_BETA, P_N };

static const tg_closure_param params[P_N] = {
    [P_C] = {"leith_coefficient", "", TG_PARAM_REAL, 0.31830988618379067, 0.0, 2.0, NULL,
             "dimensionless C in nu = (C dx)^3 |grad q| (Lambda/pi; default 1/pi)"},
    [P_BETA] = {"include_planetary_gradient", "", TG_PARAM_BOOL, 1.0, 0.0, 1.0, NULL,
                "true: |grad q| includes beta (full QG PV); false: eddy PV gradient only"},
};

typedef struct {
    double C, beta;
    int nl;
    long npl;
    double *S;            /* nl x nl stretching matrix, row-major, m-2 */
    tg_visc_grid gr;
    double *qd;           /* nl*npl dynamic PV zeta + S psi */
    double *nu, *gx, *gy; /* npl each */
} lqg_state;

static void lqg_destroy(void *state)
{
    lqg_state *s = state;
    if (!s)
        return;
    free(s->S);
    free(s->qd);
    free(s->nu);
    free(s->gx);
    free(s->gy);
    free(s);
}

static tg_code lqg_create(const tg_closure_setup *su, void **state, tg_status *st)
{
    lqg_state *s = calloc(1, sizeof *s);
    if (!s)
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the leith_qg state");
    s->C = su->params[P_C];
    s->beta = su->params[P_BETA] != 0.0 ? su->beta : 0.0;
    s->nl = su->nlayers;
    s->npl = (long)su->ns * su->ns;
    s->gr = (tg_visc_grid){.ns = su->ns, .a0 = su->a0, .a1 = su->a1, .dx = su->dx,
                           .tools = su->tools};
    s->S = calloc((size_t)(s->nl * s->nl), sizeof(double));
    s->qd = calloc((size_t)(s->nl * s->npl), sizeof(double));
    s->nu = calloc((size_t)s->npl, sizeof(double));
    s->gx = calloc((size_t)s->npl, sizeof(double));
    s->gy = calloc((size_t)s->npl, sizeof(double));
    if (!s->S || !s->qd || !s->nu || !s->gx || !s->gy) {
        lqg_destroy(s);
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the leith_qg work arrays (%d x %ld doubles)",
                       su->nlayers + 3, (long)su->ns * su->ns);
    }
    for (int i = 0; i < s->nl * s->nl; i++)
        s->S[i] = su->stretching[i];
    *state = s;
    return TG_OK;
}

/* q'_k = zeta_k + sum_j S_kj psi_j on every stored node: the view's rings
 * are filled, so q' has its ring too (walls: wall vorticity plus stretching
 * of the wall constants; periodic: the halo). */
static void dynamic_pv(lqg_state *s, const tg_closure_view *v)
{
    const int nl = s->nl;
    const long npl = s->npl;
    for (int k = 0; k < nl; k++) {
        double *o = s->qd + k * npl;
        const double *z = v->zeta + k * npl;
#pragma omp parallel for schedule(static)
        for (long p = 0; p < npl; p++) {
            double acc = z[p];
            for (int j = 0; j < nl; j++)
                acc += s->S[k * nl + j] * v->psi[j * npl + p];
            o[p] = acc;
        }
    }
}

static tg_code lqg_tendency(void *state, const tg_closure_view *v, double *tend, tg_status *st)
{
    (void)st;
    lqg_state *s = state;
    const tg_closure_tools *t = v->tools;
    s->gr.tools = t;
    dynamic_pv(s, v);
    for (int k = 0; k < s->nl; k++) {
        const long off = k * s->npl;
        /* nu_k = (C dx)^3 |grad q'_k + beta y_hat| (or |grad q'_k|) */
        tg_visc_leith_nu(&s->gr, s->C, s->qd + off, s->beta, s->gx, s->gy, s->nu);
        /* dq_k/dt = div(nu_k grad q'_k), flux form */
        t->div_nu_grad(t->ctx, s->nu, s->qd + off, tend + off);
    }
    return TG_OK;
}

/* The largest nu of any layer now, in the harmonic bound of closure.h. */
static double lqg_stable_step(void *state, const tg_closure_view *v)
{
    lqg_state *s = state;
    s->gr.tools = v->tools;
    dynamic_pv(s, v);
    double numax = 0.0;
    for (int k = 0; k < s->nl; k++) {
        tg_visc_leith_nu(&s->gr, s->C, s->qd + k * s->npl, s->beta, s->gx, s->gy, s->nu);
        numax = fmax(numax, tg_visc_active_max(&s->gr, s->nu));
    }
    return tg_stable_step_harmonic(numax, s->gr.dx);
}

const tg_closure_ops tg_scheme_leith_qg = {
    .abi = TG_CLOSURE_ABI,
    .name = "leith_qg",
    .summary = "harmonic PV diffusion (C dx)^3 |grad q| on the dynamic PV, flux form (QG Leith)",
    .source = "Leith 1996, Physica D 98, 481-491; Fox-Kemper & Menemenlis 2008, AGU Geophys. "
              "Monogr. 177, 319-337; Bachman, Fox-Kemper & Pearson 2017, J. Adv. Model. Earth "
              "Syst. 9, 1567-1589",
    .dissipative = 1,
    .nparams = P_N,
    .params = params,
    .create = lqg_create,
    .tendency = lqg_tendency,
    .destroy = lqg_destroy,
    .stable_step = lqg_stable_step,
};
