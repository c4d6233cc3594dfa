/* smagorinsky.c - closure "smagorinsky": harmonic viscosity set by the deformation rate.
 *
 * Smagorinsky 1963 (Mon. Wea. Rev. 91, 99-164): a Laplacian eddy viscosity
 * proportional to the square of the grid spacing and to the local rate of
 * horizontal deformation,
 *   nu = (C dx)^2 |D|,   |D| = sqrt((u_x - v_y)^2 + (v_x + u_y)^2),
 * with, for a streamfunction (u = -psi_y, v = psi_x),
 *   u_x - v_y = -2 psi_xy,   v_x + u_y = psi_xx - psi_yy.
 * It acts on the relative vorticity of each layer in flux form,
 *   dq_k/dt = div(nu_k grad zeta_k),
 * so the domain integral of the tendency is a boundary flux only (zero in
 * the periodic domain), its relative-enstrophy rate is
 * -sum nu |grad zeta|^2 <= 0, and for constant nu it is exactly the core's
 * A2 lap zeta (the same wall vorticity in zeta's ring). With nu varying in
 * space the energy rate sum nu grad psi . grad zeta is negative for every
 * flow we have tried (tests/unit/test_closure_viscous.c) but is not
 * negative by construction, unlike the stress-tensor form of Griffies &
 * Hallberg 2000 (Mon. Wea. Rev. 128, 2935-2946).
 *
 * Default C = 0.17: Lilly's value for a grid-scale filter in isotropic
 * turbulence with a Kolmogorov inertial range (Lilly 1967, Proc. IBM Sci.
 * Computing Symp. Environmental Sciences, 195-210; from memory). With the
 * five-point operator the explicit step is stable while
 * 8 C^2 |D| dt < 2.5 (SSP-RK3 on the negative real axis), i.e. for C = 0.17
 * while |D| dt < 11, far above what the advective CFL limit lets through.
 *
 * Also defines the deformation-rate and Smagorinsky-viscosity helpers of
 * viscous.h, shared with smagorinsky_biharmonic.c.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <math.h>
#include <stdlib.h>

#include "closure.h"
#include "simdclone.h"
#include "viscous.h"

enum { P_C, P_N };

static const tg_closure_param params[P_N] = {
    [P_C] = {"smagorinsky_coefficient", "", TG_PARAM_REAL, 0.17, 0.0, 2.0, NULL,
             "dimensionless C in nu = (C dx)^2 |D| (Lilly 1967: 0.17)"},
};

/* |D| on row pc (rows pn, ps above and below) from o = psi_xy on entry.
 * Compiled for AVX2 too (simdclone.h; the same bits: sqrt is correctly
 * rounded in both copies, and -fno-math-errno lets it vectorize). */
TG_SIMD_CLONES static void deformation_row(const double *restrict pc, const double *restrict pn,
                                           const double *restrict ps, double r2,
                                           double *restrict o, int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++) {
        const double dt = -2.0 * o[i];                                   /* u_x - v_y */
        const double ds = r2 * ((pc[i + 1] + pc[i - 1]) - (pn[i] + ps[i])); /* v_x + u_y */
        o[i] = sqrt(dt * dt + ds * ds);
    }
}

void tg_visc_deformation_rate(const tg_visc_grid *gr, const double *psi, double *work,
                              double *out)
{
    const tg_closure_tools *t = gr->tools;
    const int ns = gr->ns, a0 = gr->a0, a1 = gr->a1;
    const double r2 = 1.0 / (gr->dx * gr->dx);
    /* psi_xy = ddx(ddy psi): psi_y vanishes on a wall where psi is constant
     * (and is the halo copy when periodic), so the ring is TG_RING_ZERO. */
    t->ddy(t->ctx, psi, work);
    t->fill_ring(t->ctx, work, TG_RING_ZERO);
    t->ddx(t->ctx, work, out);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const double *pc = psi + (long)j * ns;
        deformation_row(pc, pc + ns, pc - ns, r2, out + (long)j * ns, a0, a1);
    }
}

void tg_visc_smagorinsky_nu(const tg_visc_grid *gr, double C, const double *psi, double *work,
                            double *nu)
{
    const int ns = gr->ns, a0 = gr->a0, a1 = gr->a1;
    const double c2 = (C * gr->dx) * (C * gr->dx);
    tg_visc_deformation_rate(gr, psi, work, nu);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        double *o = nu + (long)j * ns;
        for (int i = a0; i < a1; i++)
            o[i] *= c2; /* Smagorinsky 1963: nu = (C dx)^2 |D| */
    }
    gr->tools->fill_ring(gr->tools->ctx, nu, TG_RING_EXTEND);
}

double tg_visc_active_max(const tg_visc_grid *gr, const double *f)
{
    const int ns = gr->ns, a0 = gr->a0, a1 = gr->a1;
    double m = 0.0;
#pragma omp parallel for schedule(static) reduction(max : m)
    for (int j = a0; j < a1; j++)
        for (int i = a0; i < a1; i++)
            m = fmax(m, f[(long)j * ns + i]);
    return m;
}

typedef struct {
    double C;
    int nl;
    long npl;
    tg_visc_grid gr;
    double *nu, *work; /* npl each */
} smag_state;

static void smag_destroy(void *state)
{
    smag_state *s = state;
    if (!s)
        return;
    free(s->nu);
    free(s->work);
    free(s);
}

static tg_code smag_create(const tg_closure_setup *su, void **state, tg_status *st)
{
    smag_state *s = calloc(1, sizeof *s);
    if (!s)
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the smagorinsky state");
    s->C = su->params[P_C];
    s->nl = su->nlayers;
    s->npl = (long)su->ns * su->ns;
    s->gr = (tg_visc_grid){.ns = su->ns, .a0 = su->a0, .a1 = su->a1, .dx = su->dx,
                           .tools = su->tools};
    s->nu = calloc((size_t)s->npl, sizeof(double));
    s->work = calloc((size_t)s->npl, sizeof(double));
    if (!s->nu || !s->work) {
        smag_destroy(s);
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the smagorinsky work arrays (2 x %ld doubles)",
                       (long)su->ns * su->ns);
    }
    *state = s;
    return TG_OK;
}

static tg_code smag_tendency(void *state, const tg_closure_view *v, double *tend, tg_status *st)
{
    (void)st;
    smag_state *s = state;
    const tg_closure_tools *t = v->tools;
    s->gr.tools = t;
    for (int k = 0; k < s->nl; k++) {
        const long off = k * s->npl;
        tg_visc_smagorinsky_nu(&s->gr, s->C, v->psi + off, s->work, s->nu);
        /* dq_k/dt = div(nu grad zeta_k), flux form; zeta's ring holds the
         * wall vorticity of the wall condition. */
        t->div_nu_grad(t->ctx, s->nu, v->zeta + off, tend + off);
    }
    return TG_OK;
}

/* The largest nu of any layer now, in the harmonic bound of closure.h. */
static double smag_stable_step(void *state, const tg_closure_view *v)
{
    smag_state *s = state;
    s->gr.tools = v->tools;
    double numax = 0.0;
    for (int k = 0; k < s->nl; k++) {
        tg_visc_smagorinsky_nu(&s->gr, s->C, v->psi + k * s->npl, s->work, s->nu);
        numax = fmax(numax, tg_visc_active_max(&s->gr, s->nu));
    }
    return tg_stable_step_harmonic(numax, s->gr.dx);
}

const tg_closure_ops tg_scheme_smagorinsky = {
    .abi = TG_CLOSURE_ABI,
    .name = "smagorinsky",
    .summary = "harmonic viscosity (C dx)^2 |deformation rate| on relative vorticity, flux form",
    .source = "Smagorinsky 1963, Mon. Wea. Rev. 91, 99-164; coefficient: Lilly 1967, Proc. IBM "
              "Sci. Computing Symp. Environmental Sciences, 195-210",
    .dissipative = 1,
    .nparams = P_N,
    .params = params,
    .create = smag_create,
    .tendency = smag_tendency,
    .destroy = smag_destroy,
    .stable_step = smag_stable_step,
};
