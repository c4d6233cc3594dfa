/* backscatter_budget.c - closure "backscatter_budget": energy backscatter
 * limited by a prognostic sub-grid kinetic energy.
 *
 * Jansen, Adcroft, Hallberg & Held 2015 (Parameterization of eddy fluxes
 * based on a mesoscale energy budget, Ocean Modelling 94, 15-26) keep a
 * budget of the kinetic energy e(x, y) that lives below the grid scale: the
 * energy a biharmonic viscosity removes from the resolved flow is put into
 * e, and a negative Laplacian viscosity whose size grows with e gives it
 * back to the resolved flow. The backscatter can therefore never return
 * more energy than the sink removed (up to the damping of e). Here, per
 * layer k, with zeta_k the relative vorticity:
 *
 *   PV tendency     T_k = -lap(nu_k zeta_k) - A4 lap^2 zeta_k
 *   viscosity       nu_k = c_back sqrt(max(e_k, 0)) dx
 *   sub-grid energy de_k/dt = D_k - B_k - e_k/tau + kappa_e lap e_k
 *   sink (>= 0)     D_k = A4 |grad zeta_k|^2
 *   source (>= 0)   B_k = nu_k zeta_k^2
 *
 * The viscosity law nu = c_back dx sqrt(e) is that of Jansen et al. 2015
 * (a mixing length dx times the sub-grid velocity sqrt(e); from memory, the
 * paper's constant may include a factor sqrt(2) that c_back absorbs here).
 * Their e-equation also has advection and a bottom-drag loss; here the
 * loss is a single damping time tau and e is not advected (a choice of this
 * implementation), with optional diffusion kappa_e.
 *
 * Local exchange rates. For nondivergent flow |lap u|^2 = |grad zeta|^2,
 * so D_k is the local form nu4 |lap u|^2 of Jansen et al. 2015; B_k is the
 * local form of the work of the negative viscosity. Both are chosen so that
 * their domain sums are the resolved energy rates of the two parts of T_k:
 * summing by parts (five-point Laplacian, psi constant on the ring),
 *   -sum (psi_k - c_k)(-lap(nu zeta)) dx^2 = sum nu zeta^2 dx^2          (B)
 *   -sum (psi_k - c_k)(-A4 lap^2 zeta) dx^2 = -A4 sum_edges (delta zeta)^2 (D)
 * exactly in a periodic domain and for free-slip walls (zero wall
 * vorticity). D_k at a node is A4/dx^2 times the squared vorticity
 * differences to its four neighbours, each weighted so that every edge
 * counts once in the domain sum: 1/2 for an edge between two active nodes
 * (each end takes half) and for a periodic seam (seen from both sides
 * through the halo), 1 for an edge to a wall. Which of the two a ring node
 * is comes from the tools, not from the geometry's kind: a field of ones
 * on the active nodes whose ring is filled with TG_RING_ZERO keeps 1 in a
 * periodic halo and 0 on a wall; the weight is 1 - mult/2.
 * With no-slip walls the wall vorticity adds a boundary term to both sums.
 * Hence the exchange conserves resolved plus sub-grid energy,
 * sum_k (H_k/H) (E_res,k + mean e_k), apart from the damping, the clipping
 * below and those wall terms.
 *
 * Time stepping (documented choice). T uses the e of the start of the step
 * for all Runge-Kutta stages. After each step, advance() updates e by one
 * explicit Euler step over dt with D, B and the diffusion computed from the
 * new state and the old e; negative values (possible only where e is tiny,
 * B dt > e) are set to zero, which adds at most that tiny energy. The
 * diffusion of e uses a zero-flux wall (EXTEND ring) and needs
 * kappa_e dt / dx^2 <= 1/4 (explicit five-point diffusion, common practice);
 * the damping needs dt <= tau; both are checked at set-up (with adaptive
 * steps for the smallest step) and bound adaptive steps (bb_stable_step).
 *
 * State: e on the active nodes of every layer (state_save/state_load for
 * checkpoints). Plain loops in fixed order: the result does not depend on
 * the thread count.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <math.h>
#include <stdlib.h>

#include "closure.h"

enum { P_CBACK, P_A4, P_TAU, P_KAPPA, P_E0, P_N };

static const tg_closure_param params[P_N] = {
    [P_CBACK] = {"backscatter_coefficient", "", TG_PARAM_REAL, 0.2, 0.0, 100.0, NULL,
                 "c_back in nu_b = c_back sqrt(e) dx"},
    [P_A4] = {"hyperviscosity_m4_per_s", "m4 s-1", TG_PARAM_REAL, 3e11, 0.0, 1e18, NULL,
              "biharmonic viscosity A4 whose energy loss feeds the sub-grid energy"},
    [P_TAU] = {"subgrid_damping_time_days", "days", TG_PARAM_REAL, 30.0, 1e-6, 1e9, NULL,
               "damping time tau of the sub-grid energy"},
    [P_KAPPA] = {"subgrid_energy_diffusivity_m2_per_s", "m2 s-1", TG_PARAM_REAL, 0.0, 0.0, 1e8,
                 NULL, "lateral diffusivity kappa_e of the sub-grid energy"},
    [P_E0] = {"initial_subgrid_energy_m2_per_s2", "m2 s-2", TG_PARAM_REAL, 0.0, 0.0, 1e4, NULL,
              "uniform sub-grid energy at the start of a run (not of a resume)"},
};

typedef struct {
    double cback, A4, tau, kappa_e;
    double dx;
    int nl, ns, a0, a1;
    long npl;
    double *e;     /* nl*npl sub-grid energy per layer, m2 s-2 (active nodes) */
    double *nu;    /* npl backscatter viscosity of one layer, ring extended */
    double *w;     /* npl nu * zeta */
    double *lap;   /* npl Laplacian of w, or of e */
    double *edgew; /* npl weight 1 - mult/2 of the edge to a node (header) */
} budget_state;

static void bb_destroy(void *state)
{
    budget_state *b = state;
    if (!b)
        return;
    free(b->e);
    free(b->nu);
    free(b->w);
    free(b->lap);
    free(b->edgew);
    free(b);
}

static tg_code bb_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    const double tau = s->params[P_TAU] * 86400.0, kappa_e = s->params[P_KAPPA];
    if (s->dt > tau)
        return tg_fail(st, TG_ERR_CONFIG,
                       "backscatter_budget: subgrid_damping_time_days (%g s) is shorter than the "
                       "time step (%g s); the explicit update of e needs dt <= tau",
                       tau, s->dt);
    if (kappa_e * s->dt / (s->dx * s->dx) > 0.25)
        return tg_fail(st, TG_ERR_CONFIG,
                       "backscatter_budget: subgrid_energy_diffusivity_m2_per_s = %g is too large "
                       "for explicit diffusion (kappa_e dt / dx^2 = %g > 1/4)",
                       kappa_e, kappa_e * s->dt / (s->dx * s->dx));
    budget_state *b = calloc(1, sizeof *b);
    if (!b)
        return tg_fail(st, TG_ERR_NOMEM, "backscatter_budget: no memory for its state");
    b->cback = s->params[P_CBACK];
    b->A4 = s->params[P_A4];
    b->tau = tau;
    b->kappa_e = kappa_e;
    b->dx = s->dx;
    b->nl = s->nlayers;
    b->ns = s->ns;
    b->a0 = s->a0;
    b->a1 = s->a1;
    b->npl = (long)s->ns * s->ns;
    b->e = calloc((size_t)(b->nl * b->npl), sizeof(double));
    b->nu = calloc((size_t)b->npl, sizeof(double));
    b->w = calloc((size_t)b->npl, sizeof(double));
    b->lap = calloc((size_t)b->npl, sizeof(double));
    b->edgew = calloc((size_t)b->npl, sizeof(double));
    if (!b->e || !b->nu || !b->w || !b->lap || !b->edgew) {
        bb_destroy(b);
        return tg_fail(st, TG_ERR_NOMEM,
                       "backscatter_budget: no memory for the sub-grid energy and work arrays "
                       "(%ld values per layer)",
                       (long)s->ns * s->ns);
    }
    /* Edge weights: ones on the active nodes, ring by TG_RING_ZERO (a wall
     * gets 0, a periodic halo the copy 1), then 1 - mult/2. */
    for (int j = b->a0; j < b->a1; j++)
        for (int i = b->a0; i < b->a1; i++)
            b->edgew[(long)j * b->ns + i] = 1.0;
    s->tools->fill_ring(s->tools->ctx, b->edgew, TG_RING_ZERO);
    for (long p = 0; p < b->npl; p++)
        b->edgew[p] = 1.0 - 0.5 * b->edgew[p];
    const double e0 = s->params[P_E0];
    for (int k = 0; k < b->nl; k++)
        for (int j = b->a0; j < b->a1; j++)
            for (int i = b->a0; i < b->a1; i++)
                b->e[k * b->npl + (long)j * b->ns + i] = e0;
    *state = b;
    return TG_OK;
}

/* nu = c_back sqrt(max(e_k, 0)) dx on the active nodes (Jansen et al. 2015),
 * ring extended (a coefficient field). */
static void backscatter_viscosity(budget_state *b, const tg_closure_tools *tl, int k)
{
    const double *ek = b->e + k * b->npl;
    const double c = b->cback * b->dx;
    for (int j = b->a0; j < b->a1; j++)
        for (int i = b->a0; i < b->a1; i++) {
            const long p = (long)j * b->ns + i;
            b->nu[p] = c * sqrt(fmax(ek[p], 0.0));
        }
    tl->fill_ring(tl->ctx, b->nu, TG_RING_EXTEND);
}

static tg_code bb_tendency(void *state, const tg_closure_view *view, double *tend,
                           tg_status *st)
{
    (void)st;
    budget_state *b = state;
    const tg_closure_tools *tl = view->tools;
    const int ns = b->ns, a0 = b->a0, a1 = b->a1;
    for (int k = 0; k < b->nl; k++) {
        const double *zeta = view->zeta + k * b->npl;
        double *out = tend + k * b->npl;
        /* Biharmonic sink -A4 lap^2 zeta: the core's viscosity code path. */
        tl->viscosity(tl->ctx, zeta, 0.0, b->A4, out);
        /* Backscatter -lap(nu zeta) (Jansen et al. 2015), on every stored
         * node so that the ring carries nu times the wall vorticity. */
        backscatter_viscosity(b, tl, k);
        for (long p = 0; p < b->npl; p++)
            b->w[p] = b->nu[p] * zeta[p];
        tl->laplacian(tl->ctx, b->w, b->lap);
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                out[p] -= b->lap[p];
            }
    }
    return TG_OK;
}

static tg_code bb_advance(void *state, const tg_closure_view *view, tg_status *st)
{
    (void)st;
    budget_state *b = state;
    const tg_closure_tools *tl = view->tools;
    const int ns = b->ns, a0 = b->a0, a1 = b->a1;
    const double dt = view->dt, rdx2 = 1.0 / (b->dx * b->dx);
    for (int k = 0; k < b->nl; k++) {
        const double *z = view->zeta + k * b->npl;
        double *ek = b->e + k * b->npl;
        backscatter_viscosity(b, tl, k);
        if (b->kappa_e > 0.0) {
            tl->fill_ring(tl->ctx, ek, TG_RING_EXTEND);
            tl->laplacian(tl->ctx, ek, b->lap);
        }
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                const double zc = z[p], *ew = b->edgew;
                const double de = z[p + 1] - zc, dw = z[p - 1] - zc;
                const double dn = z[p + ns] - zc, ds = z[p - ns] - zc;
                /* D = A4 |grad zeta|^2, edge form (header). */
                const double D = b->A4 * rdx2 *
                                 ((ew[p + 1] * de * de + ew[p - 1] * dw * dw) +
                                  (ew[p + ns] * dn * dn + ew[p - ns] * ds * ds));
                /* B = nu zeta^2, the work of the negative viscosity. */
                const double B = b->nu[p] * zc * zc;
                const double diff = b->kappa_e > 0.0 ? b->kappa_e * b->lap[p] : 0.0;
                /* de/dt = D - B - e/tau + kappa_e lap e, explicit Euler. */
                const double en = ek[p] + dt * ((D - B) - ek[p] / b->tau + diff);
                ek[p] = en > 0.0 ? en : 0.0;
            }
    }
    return TG_OK;
}

/* The explicit Euler update of e is stable for dt <= tau (damping) and
 * kappa_e dt / dx^2 <= 1/4 (five-point diffusion, common practice); the
 * biharmonic part of the tendency has the bound of closure.h. With
 * adaptive steps these bound the step (set-up checks only the smallest). */
static double bb_stable_step(void *state, const tg_closure_view *view)
{
    (void)view;
    const budget_state *b = state;
    double s = fmin(b->tau, tg_stable_step_biharmonic(b->A4, b->dx));
    if (b->kappa_e > 0.0)
        s = fmin(s, 0.25 * b->dx * b->dx / b->kappa_e);
    return s;
}

static size_t bb_state_size(void *state)
{
    const budget_state *b = state;
    const size_t n = (size_t)(b->a1 - b->a0);
    return (size_t)b->nl * n * n;
}

static void bb_state_save(void *state, double *buf)
{
    const budget_state *b = state;
    size_t c = 0;
    for (int k = 0; k < b->nl; k++)
        for (int j = b->a0; j < b->a1; j++)
            for (int i = b->a0; i < b->a1; i++)
                buf[c++] = b->e[k * b->npl + (long)j * b->ns + i];
}

static tg_code bb_state_load(void *state, const double *buf, size_t n, tg_status *st)
{
    budget_state *b = state;
    const size_t want = bb_state_size(state);
    if (n != want)
        return tg_fail(st, TG_ERR_IO,
                       "backscatter_budget: the saved sub-grid energy has %zu values, this grid "
                       "needs %zu (%d layers)",
                       n, want, b->nl);
    for (size_t c = 0; c < n; c++)
        if (!isfinite(buf[c]) || buf[c] < 0.0)
            return tg_fail(st, TG_ERR_IO,
                           "backscatter_budget: the saved sub-grid energy has an invalid value "
                           "%g at position %zu (must be finite and >= 0)",
                           buf[c], c);
    size_t c = 0;
    for (int k = 0; k < b->nl; k++)
        for (int j = b->a0; j < b->a1; j++)
            for (int i = b->a0; i < b->a1; i++)
                b->e[k * b->npl + (long)j * b->ns + i] = buf[c++];
    return TG_OK;
}

const tg_closure_ops tg_scheme_backscatter_budget = {
    .abi = TG_CLOSURE_ABI,
    .name = "backscatter_budget",
    .summary = "backscatter with a prognostic sub-grid energy: nu_b = c sqrt(e) dx",
    .source = "Jansen, Adcroft, Hallberg & Held 2015, Ocean Modelling 94, 15-26; "
              "Jansen & Held 2014, Ocean Modelling 80, 36-48",
    .dissipative = 0,
    .nparams = P_N,
    .params = params,
    .create = bb_create,
    .tendency = bb_tendency,
    .advance = bb_advance,
    .state_size = bb_state_size,
    .state_save = bb_state_save,
    .state_load = bb_state_load,
    .destroy = bb_destroy,
    .stable_step = bb_stable_step,
};
