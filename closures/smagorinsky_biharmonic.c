/* smagorinsky_biharmonic.c - closure "smagorinsky_biharmonic": biharmonic viscosity
 * set by the deformation rate.
 *
 * Griffies & Hallberg 2000 (Mon. Wea. Rev. 128, 2935-2946): a biharmonic
 * eddy viscosity that scales with the fourth power of the grid spacing and
 * the local deformation rate, with a dimensionless coefficient,
 *   A4 = C4 dx^4 |D|,   |D| = sqrt((u_x - v_y)^2 + (v_x + u_y)^2)
 * (|D| from the streamfunction as in smagorinsky.c, Smagorinsky 1963,
 * Mon. Wea. Rev. 91, 99-164). It acts on the relative vorticity of each
 * layer as
 *   dq_k/dt = -lap(A4 lap zeta_k),
 * built like the core's biharmonic operator: lap zeta with the ring
 * TG_RING_ZERO (zero on walls), times A4, ring TG_RING_ZERO again, then the
 * five-point Laplacian. For constant A4 it is exactly the core's
 * -A4 lap^2 zeta; the domain integral of the tendency vanishes in the
 * periodic domain; and the enstrophy-like rate sum zeta * tendency
 * = -sum A4 (lap zeta)^2 <= 0 when zeta vanishes on the walls (periodic,
 * free slip). With A4 varying the energy rate -sum A4 zeta lap zeta is not
 * negative by construction (tests/unit/test_closure_viscous.c checks it on
 * random and eddying flows).
 *
 * Default C4 = 0.0036 = 0.17^2/8: the harmonic smagorinsky default
 * (Lilly 1967 coefficient) times dx^2/8, the factor that gives both
 * operators the same damping rate of the two-grid-interval mode (five-point
 * eigenvalues -8/dx^2 and 64/dx^4; Griffies & Hallberg 2000 relate their
 * biharmonic to the Laplacian Smagorinsky viscosity by dx^2/8 too, from
 * memory). The explicit SSP-RK3 step is stable while 64 C4 |D| dt < 2.5,
 * i.e. for the default while |D| dt < 11.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>

#include "closure.h"
#include "viscous.h"

enum { P_C4, P_N };

static const tg_closure_param params[P_N] = {
    [P_C4] = {"biharmonic_coefficient", "", TG_PARAM_REAL, 0.0036, 0.0, 0.5, NULL,
              "dimensionless C4 in A4 = C4 dx^4 |D|"},
};

typedef struct {
    double C4;
    int nl;
    long npl;
    tg_visc_grid gr;
    double *a4, *lapz, *work; /* npl each */
} bsmag_state;

static void bsmag_destroy(void *state)
{
    bsmag_state *s = state;
    if (!s)
        return;
    free(s->a4);
    free(s->lapz);
    free(s->work);
    free(s);
}

static tg_code bsmag_create(const tg_closure_setup *su, void **state, tg_status *st)
{
    bsmag_state *s = calloc(1, sizeof *s);
    if (!s)
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the smagorinsky_biharmonic state");
    s->C4 = su->params[P_C4];
    s->nl = su->nlayers;
    s->npl = (long)su->ns * su->ns;
    s->gr = (tg_visc_grid){.ns = su->ns, .a0 = su->a0, .a1 = su->a1, .dx = su->dx,
                           .tools = su->tools};
    s->a4 = calloc((size_t)s->npl, sizeof(double));
    s->lapz = calloc((size_t)s->npl, sizeof(double));
    s->work = calloc((size_t)s->npl, sizeof(double));
    if (!s->a4 || !s->lapz || !s->work) {
        bsmag_destroy(s);
        return tg_fail(st, TG_ERR_NOMEM,
                       "no memory for the smagorinsky_biharmonic work arrays (3 x %ld doubles)",
                       (long)su->ns * su->ns);
    }
    *state = s;
    return TG_OK;
}

static tg_code bsmag_tendency(void *state, const tg_closure_view *v, double *tend, tg_status *st)
{
    (void)st;
    bsmag_state *s = state;
    const tg_closure_tools *t = v->tools;
    const int ns = s->gr.ns, a0 = s->gr.a0, a1 = s->gr.a1;
    const double dx2 = s->gr.dx * s->gr.dx;
    const double c4 = s->C4 * dx2 * dx2;
    s->gr.tools = t;
    for (int k = 0; k < s->nl; k++) {
        const long off = k * s->npl;
        /* |D| on the active nodes (ring not needed: A4 multiplies a field
         * whose ring is set afterwards). */
        tg_visc_deformation_rate(&s->gr, v->psi + off, s->work, s->a4);
        /* lap zeta, zero on the walls as in the core's biharmonic operator. */
        t->laplacian(t->ctx, v->zeta + off, s->lapz);
        t->fill_ring(t->ctx, s->lapz, TG_RING_ZERO);
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++) {
            const double *d = s->a4 + (long)j * ns;
            double *w = s->lapz + (long)j * ns;
            for (int i = a0; i < a1; i++)
                w[i] *= c4 * d[i]; /* Griffies & Hallberg 2000: A4 = C4 dx^4 |D| */
        }
        t->fill_ring(t->ctx, s->lapz, TG_RING_ZERO);
        /* dq_k/dt = -lap(A4 lap zeta_k) */
        double *o = tend + off;
        t->laplacian(t->ctx, s->lapz, o);
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++) {
            double *r = o + (long)j * ns;
            for (int i = a0; i < a1; i++)
                r[i] = -r[i];
        }
    }
    return TG_OK;
}

/* The largest A4 = C4 dx^4 |D| of any layer now, in the biharmonic bound of
 * closure.h. */
static double bsmag_stable_step(void *state, const tg_closure_view *v)
{
    bsmag_state *s = state;
    s->gr.tools = v->tools;
    const double dx2 = s->gr.dx * s->gr.dx;
    double dmax = 0.0;
    for (int k = 0; k < s->nl; k++) {
        tg_visc_deformation_rate(&s->gr, v->psi + k * s->npl, s->work, s->a4);
        dmax = fmax(dmax, tg_visc_active_max(&s->gr, s->a4));
    }
    return tg_stable_step_biharmonic(s->C4 * dx2 * dx2 * dmax, s->gr.dx);
}

const tg_closure_ops tg_scheme_smagorinsky_biharmonic = {
    .abi = TG_CLOSURE_ABI,
    .name = "smagorinsky_biharmonic",
    .summary = "biharmonic viscosity C4 dx^4 |deformation rate| on relative vorticity",
    .source = "Griffies & Hallberg 2000, Mon. Wea. Rev. 128, 2935-2946; Smagorinsky 1963, "
              "Mon. Wea. Rev. 91, 99-164",
    .dissipative = 1,
    .nparams = P_N,
    .params = params,
    .create = bsmag_create,
    .tendency = bsmag_tendency,
    .destroy = bsmag_destroy,
    .stable_step = bsmag_stable_step,
};
