/* model.h - the layered QG model: state, set-up, PV inversion, tendency terms.
 *
 * Equations (Pedlosky 1987, Geophysical Fluid Dynamics, sections 6.16-6.17;
 * Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, section 5.3):
 *   q_k = lap psi_k + (S psi)_k + beta (y - y0)                  (modes.h for S)
 *   dq_k/dt = -J(psi_k, q_k)                                      advection
 *             + delta_{k,1} curl(tau) / (rho0 H_1)                 wind
 *             - delta_{k,N} r lap psi_N                            bottom drag
 *             + A2 lap zeta_k - A4 lap^2 zeta_k                    lateral viscosity
 *             + closure tendency                                   (closure.h)
 * with zeta_k = lap psi_k and y0 the central latitude of the domain.
 *
 * Periodic geometry (geometry.h, holds_planetary_pv = 0): q is the eddy PV
 * lap psi + S psi, and a uniform imposed zonal flow U_k (background
 * streamfunction -U_k y) adds the term
 *   -U_k dq_k/dx - (beta - (S U)_k) dpsi_k/dx                  mean flow
 * (Phillips 1954, Tellus 6, 273-286; Vallis 2017 section 9.6): advection of
 * eddy PV by the background flow and of the background PV gradient by the
 * eddies. Its energy rate is the release of available potential energy from
 * the imposed shear.
 *
 * tg_model_create does all the set-up: geometry (transforms, Helmholtz
 * tables), vertical modes, forcing fields and every work array. After it,
 * nothing in the model allocates.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_MODEL_H
#define TG_MODEL_H

#include "closure.h"
#include "closure_host.h"
#include "config.h"
#include "geometry.h"
#include "modes.h"
#include "status.h"

/* The tendency terms the framework keeps apart for the budgets. */
enum {
    TG_TERM_ADVECTION = 0,
    TG_TERM_WIND,
    TG_TERM_BOTTOM_DRAG,
    TG_TERM_VISCOSITY,
    TG_TERM_MEAN_FLOW,   /* periodic: imposed background flow and planetary gradient */
    TG_TERM_CLOSURE,
    TG_NTERMS
};

/* Energy and enstrophy contributions of each term at one state. */
typedef struct {
    double energy[TG_NTERMS];                  /* W kg-1 (m2 s-3) */
    double enstrophy[TG_NTERMS][TG_MAX_LAYERS];/* s-3 */
    /* Each closure component's share of TG_TERM_CLOSURE, in `use` order. */
    double comp_energy[TG_MAX_CLOSURES];
    double comp_enstrophy[TG_MAX_CLOSURES][TG_MAX_LAYERS];
} tg_term_rates;

typedef struct tg_model {
    tg_config cfg;          /* a copy of the settings */
    tg_geometry *geom;      /* owned */
    tg_modes modes;
    int nl;                 /* layers */
    long npl;               /* stored values per layer, ns*ns */
    double dt;              /* the step being taken (or just taken), s; the run driver
                               sets it before each step with adaptive steps */
    double Htot;            /* total depth, m */

    /* Current state; each is nl*npl, layer k at k*npl. q is prognostic on
     * the active nodes; everything else is derived by tg_model_derive. */
    double *q, *psi, *zeta;
    double wall[TG_MAX_LAYERS];   /* value of psi_k on the walls (0 when periodic) */
    long step;                    /* steps since day 0 */
    double time_s;                /* model time, s: step * dt with fixed steps, the sum
                                     of the steps taken with adaptive ones (tg_step) */

    /* Background (periodic geometry): uniform zonal flow and PV gradient. */
    double U[TG_MAX_LAYERS];      /* m s-1 */
    double Qy[TG_MAX_LAYERS];     /* beta - (S U)_k, m-1 s-1 */
    int term_active[TG_NTERMS];   /* which terms this configuration has */

    /* Fixed fields, npl each. */
    double *beta_y;         /* beta (y - y0), s-1; depends on y only, and the
                               hot passes (model.c) read one value per row */
    double *wind_forcing;   /* curl(tau) / (rho0 H_1), s-2 */

    /* Work arrays, made once. */
    double *phi;            /* nl*npl: modal right-hand sides, then the particular
                               solutions of the Helmholtz solves (tg_model_invert;
                               unused where the geometry takes the right-hand sides
                               and hands the solutions over row by row,
                               ops->solve_modes_rows) */
    double *lap1;           /* npl, biharmonic viscosity scratch */
    double *lap2;           /* nl*npl, Laplacian of the Laplacian of zeta (biharmonic) */
    double *tend;           /* nl*npl total tendency (tg_model_tendency) */
    double *term;           /* nl*npl one term's tendency */
    double *q0;             /* nl*npl state at the start of the step (stepper.c) */
    double *qnext;          /* nl*npl the next Runge-Kutta stage (stepper.c swaps
                               q0, q and qnext instead of copying) */
    double *rowbuf;         /* ns */
    double *rowsums;        /* 10*nl*ns: per-row sums (terms.c budget rates, model.c diagnostics) */
    double *rowwork;        /* 2*nwork*ns: two scratch rows per thread (terms.c) */
    int nwork;              /* threads with rows in rowwork */
    long *rowidx;           /* ns */
    int nout;               /* output points per side */

    /* Closure components (closure_host.h); never NULL after create. */
    tg_closure_host *closures;
} tg_model;

tg_model *tg_model_create(const tg_config *cfg, tg_status *st);
void tg_model_destroy(tg_model *m);

/* Sets the state from a streamfunction in output layout (nl*nout*nout):
 * q is computed from it on the active nodes and inverted again, so the
 * stored psi satisfies the wall and mass conditions. */
void tg_model_set_psi(tg_model *m, const double *psi_out);

/* Sets the state from PV in output layout (checkpoint resume: bitwise). */
void tg_model_set_q(tg_model *m, const double *q_out);

/* Random initial streamfunction: Gaussian noise smoothed by the geometry's
 * Gaussian filter (width 4 dx) and scaled to r.m.s. `amplitude` per layer. */
void tg_model_set_noise(tg_model *m, double amplitude, uint64_t seed);

/* Whether the closures of m (made from cfg) are stochastic: members 0 and
 * 1 give different tendencies on the same (noise) state after one advance.
 * Overwrites m's state and advances its closures once: call it on a model
 * whose state is set afterwards. */
tg_code tg_model_closures_stochastic(tg_model *m, const tg_config *cfg, int *stochastic,
                                     tg_status *st);

/* PV inversion and everything derived from q: psi (with wall values), zeta,
 * and the rings of q. */
void tg_model_derive(tg_model *m);

/* Total tendency of the current (derived) state into m->tend, and each
 * term's energy and enstrophy rates into *rates (may be NULL). */
tg_code tg_model_tendency(tg_model *m, int stage, tg_term_rates *rates, tg_status *st);

/* Internal to the library: the pieces of one Runge-Kutta stage (stepper.c).
 *
 * tg_model_stage_update writes the next stage into m->qnext on the active
 * nodes,
 *   qnext = a q0 + b (q + dt L(q)),    L = the total tendency of m->q,
 * and, unless tg_model_projects_in_invert, the modal right-hand sides of
 * qnext into m->phi; *rates as for tg_model_tendency. Without closures this
 * is one pass over the grid; with closures it is tg_model_tendency and then
 * a pass for the update. tg_model_invert then finishes the PV inversion of
 * m->q (the caller has made qnext the current m->q): tg_model_derive is
 * the projection (when needed) followed by tg_model_invert. */
tg_code tg_model_stage_update(tg_model *m, int stage, const double *q0, double a, double b,
                              tg_term_rates *rates, tg_status *st);
void tg_model_project_row(tg_model *m, const double *q, int j);
void tg_model_invert(tg_model *m);

/* Whether tg_model_invert forms the modal right-hand sides from m->q
 * itself, row by row inside the geometry's fused solves
 * (ops->solve_modes_rows): then nothing needs to fill m->phi first. */
static inline int tg_model_projects_in_invert(const tg_model *m)
{
    return m->geom->ops->solve_modes_rows != NULL;
}

/* Diagnostics of the current state. */
double tg_model_energy(tg_model *m);                     /* m2 s-2 */
void tg_model_kinetic_energy(tg_model *m, double *ke);  /* per layer, m2 s-2 */
void tg_model_enstrophy(tg_model *m, double *z);        /* per layer, s-2 */
void tg_model_mass_error(tg_model *m, double *err);     /* per interface */
/* Row j's trapezoid-weighted sums of d = psi_i - psi_{i+1} and of |d| (the
 * row sums of tg_model_mass_error; budget.c's one-pass diagnostics too). */
void tg_model_mass_row(const tg_model *m, int j, int i, double *sum, double *abssum);
double tg_model_max_cfl(tg_model *m, int *layer, double *x, double *y);

/* Copies layer fields (nl*npl) to output layout (nl*nout*nout) in dest. */
void tg_model_pack(const tg_model *m, const double *field, double *dest);
/* Output coordinates (nout values), m. */
const double *tg_model_out_coord(const tg_model *m);

#endif
