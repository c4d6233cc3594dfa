/* gradient_model.c - closure "gradient_model": the Taylor-series (gradient, "Clark") model
 * of the sub-grid PV flux.
 *
 * Expanding a filter of width Delta (a box or a Gaussian with the same
 * second moment) in Taylor series gives, to second order in Delta, the
 * sub-filter flux of PV
 *
 *   tau = (u q)bar - ubar qbar = (Delta^2 / 12) grad(u) . grad(q) + O(Delta^4),
 *   tau_x = c (u_x q_x + u_y q_y),   tau_y = c (v_x q_x + v_y q_y),   c = C Delta^2 / 12
 *
 * (Leonard 1974, Adv. Geophys. 18A, 237-248; Clark, Ferziger & Reynolds
 * 1979, J. Fluid Mech. 91, 1-16, the "gradient" form of the stress), and the
 * resolved PV changes by the tendency
 *
 *   dq/dt = -div(tau).
 *
 * Discretisation (flux form, common practice): tau_x is evaluated on the
 * x-faces (i+1/2, j) with u_x, q_x as one-cell differences and u_y, q_y as
 * the average of the centred differences at the two nodes; tau_y likewise on
 * the y-faces; the tendency is minus the difference of the face fluxes.
 * The face fluxes telescope, so the domain integral of the tendency is zero
 * to round-off (circulation is conserved): exactly in the periodic domain,
 * and in the basin because every face that touches a wall carries no flux
 * (zero normal flux through the walls). The faces are found without knowing
 * the geometry: a mask of ones on the active nodes, its ring filled with
 * TG_RING_ZERO, is one on every face between two prognostic nodes and zero
 * on wall faces.
 *
 * q is the PV of the view: with the planetary part beta (y - y0) in the
 * basin, the eddy PV in the periodic domain. The background part differs by
 * c (u_y, v_y) Q_y, whose divergence c Q_y d/dy (u_x + v_y) vanishes for a
 * non-divergent flow, so it is left out there; a uniform background velocity
 * has no gradient.
 *
 * Parameters: Delta = filter_width_factor * dx (default 1: the grid spacing
 * as the width of the implicit filter of the grid, common practice) and the
 * multiplier C = gradient_model_coefficient (default 1, the value of the
 * Taylor expansion). The model is not dissipative: it moves energy and
 * enstrophy both down and up scale.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>

#include "closure.h"

enum { P_WIDTH, P_COEF, P_N };

static const tg_closure_param params[P_N] = {
    [P_WIDTH] = {"filter_width_factor", "", TG_PARAM_REAL, 1.0, 0.0, 16.0, NULL,
                 "filter width Delta in grid spacings"},
    [P_COEF] = {"gradient_model_coefficient", "", TG_PARAM_REAL, 1.0, 0.0, 10.0, NULL,
                "multiplier C of the flux (Delta^2/12) grad u . grad q"},
};

typedef struct {
    double c;          /* C Delta^2 / 12, m2 */
    double rdx;        /* 1 / dx */
    int nl, ns, a0, a1;
    long npl;
    double *qx, *qy, *uy, *vx;   /* centred derivatives, npl each */
    double *fx, *fy;             /* flux through the east / north face of each node */
    double *mask;                /* 1 on prognostic nodes, ring by TG_RING_ZERO */
} grad_state;

static void grad_destroy(void *state)
{
    grad_state *g = state;
    if (!g)
        return;
    free(g->qx);
    free(g->qy);
    free(g->uy);
    free(g->vx);
    free(g->fx);
    free(g->fy);
    free(g->mask);
    free(g);
}

static tg_code grad_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    grad_state *g = calloc(1, sizeof *g);
    if (!g)
        return tg_fail(st, TG_ERR_NOMEM, "no memory");
    const double delta = s->params[P_WIDTH] * s->dx;
    g->c = s->params[P_COEF] * delta * delta / 12.0;
    g->rdx = 1.0 / s->dx;
    g->nl = s->nlayers;
    g->ns = s->ns;
    g->a0 = s->a0;
    g->a1 = s->a1;
    g->npl = (long)s->ns * s->ns;
    double **arr[] = {&g->qx, &g->qy, &g->uy, &g->vx, &g->fx, &g->fy, &g->mask};
    for (size_t a = 0; a < sizeof arr / sizeof arr[0]; a++) {
        *arr[a] = calloc((size_t)g->npl, sizeof(double));
        if (!*arr[a]) {
            grad_destroy(g);
            return tg_fail(st, TG_ERR_NOMEM, "no memory for %d x %d work arrays", s->ns, s->ns);
        }
    }
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            g->mask[(long)j * g->ns + i] = 1.0;
    s->tools->fill_ring(s->tools->ctx, g->mask, TG_RING_ZERO);
    *state = g;
    return TG_OK;
}

static tg_code grad_tendency(void *state, const tg_closure_view *view, double *tend,
                             tg_status *st)
{
    (void)st;
    grad_state *g = state;
    const tg_closure_tools *t = view->tools;
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double c = g->c, r = g->rdx;
    double *qx = g->qx, *qy = g->qy, *uy = g->uy, *vx = g->vx, *fx = g->fx, *fy = g->fy;
    const double *mask = g->mask;
    for (int k = 0; k < g->nl; k++) {
        const double *q = view->q + k * g->npl, *u = view->u + k * g->npl,
                     *v = view->v + k * g->npl;
        double *out = tend + k * g->npl;
        /* Centred gradients on the nodes, rings extended for the face averages. */
        t->ddx(t->ctx, q, qx);
        t->ddy(t->ctx, q, qy);
        t->ddy(t->ctx, u, uy);
        t->ddx(t->ctx, v, vx);
        t->fill_ring(t->ctx, qx, TG_RING_EXTEND);
        t->fill_ring(t->ctx, qy, TG_RING_EXTEND);
        t->fill_ring(t->ctx, uy, TG_RING_EXTEND);
        t->fill_ring(t->ctx, vx, TG_RING_EXTEND);
        /* tau_x on the x-faces (i+1/2, j), i = a0-1 .. a1-1 (Clark et al. 1979). */
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++)
            for (int i = a0 - 1; i < a1; i++) {
                const long p = (long)j * ns + i, e = p + 1;
                const double ux = (u[e] - u[p]) * r, qxf = (q[e] - q[p]) * r;
                const double uyf = 0.5 * (uy[p] + uy[e]), qyf = 0.5 * (qy[p] + qy[e]);
                fx[p] = c * mask[p] * mask[e] * (ux * qxf + uyf * qyf);
            }
        /* tau_y on the y-faces (i, j+1/2), j = a0-1 .. a1-1. */
#pragma omp parallel for schedule(static)
        for (int j = a0 - 1; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i, n = p + ns;
                const double vxf = 0.5 * (vx[p] + vx[n]), qxf = 0.5 * (qx[p] + qx[n]);
                const double vy = (v[n] - v[p]) * r, qyf = (q[n] - q[p]) * r;
                fy[p] = c * mask[p] * mask[n] * (vxf * qxf + vy * qyf);
            }
        /* dq/dt = -div(tau), flux form. */
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                out[p] = -r * ((fx[p] - fx[p - 1]) + (fy[p] - fy[p - ns]));
            }
    }
    return TG_OK;
}

const tg_closure_ops tg_scheme_gradient_model = {
    .abi = TG_CLOSURE_ABI,
    .name = "gradient_model",
    .summary = "Taylor-series (gradient) model of the sub-grid PV flux, (Delta^2/12) grad u . grad q",
    .source = "Leonard 1974, Adv. Geophys. 18A, 237-248; Clark, Ferziger & Reynolds 1979, "
              "J. Fluid Mech. 91, 1-16",
    .dissipative = 0,
    .nparams = P_N,
    .params = params,
    .create = grad_create,
    .tendency = grad_tendency,
    .destroy = grad_destroy,
};
