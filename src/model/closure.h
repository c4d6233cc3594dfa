/* closure.h - the interface of a sub-grid closure scheme (installed header).
 *
 * A closure adds a PV tendency for every layer given the resolved state.
 * It never inverts PV itself, never touches the stepper's internals or the
 * output files: it receives a read-only view of the state and writes its
 * tendency into an array the framework owns. The framework computes each
 * component's energy and enstrophy contributions from that tendency
 * (budget.nc: energy_closure_NAME, enstrophy_closure_NAME), so a new scheme
 * gets budget lines without writing any.
 *
 * A scheme is one file in closures/ that defines a tg_closure_ops and one
 * line in closures/registry.c; a plugin is a shared object built against
 * this header that exports `const tg_closure_ops *twingyre_closure_entry(void)`
 * and is used as `[closure] use = plugin:PATH.so` (closures/examples/).
 *
 * Conventions: arrays are ns x ns per layer, row-major with j (y) as the
 * row, layer k at offset k*ns*ns; the active (prognostic) nodes are
 * a0 <= i, j < a1 and the ring around them is filled by the framework for
 * every array in the view. A scheme uses the tools (tg_closure_tools) for
 * derivatives, ring fills and filters, so it never needs to know whether the
 * domain has walls.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CLOSURE_H
#define TG_CLOSURE_H

#include <math.h>
#include <stddef.h>
#include <stdint.h>

#include "status.h"

/* Bumped when this header changes; plugins are checked against it. Version
 * 2 added stable_step at the end of tg_closure_ops, version 3 precision
 * after it; a plugin built for an older version still loads and has
 * neither member it lacks (closure_host.c never reads past the end of its
 * ops). */
#define TG_CLOSURE_ABI 3

/* The stability bound of the explicit SSP-RK3 step on the negative real
 * axis, |lambda| dt <= 2.51 (Shu & Osher 1988; the root of
 * 1 - x + x^2/2 - x^3/6 = 1 near x = -2.51), rounded down to 2.5. With the
 * five-point Laplacian (largest eigenvalue 8/dx^2) a harmonic diffusivity
 * nu is stable while 8 nu dt / dx^2 <= 2.5 and a biharmonic one A4 while
 * 64 A4 dt / dx^4 <= 2.5. Schemes answer stable_step with these. */
#define TG_RK3_REAL_AXIS 2.5

/* Those two bounds, s; INFINITY for a zero coefficient. */
static inline double tg_stable_step_harmonic(double nu, double dx)
{
    return nu > 0.0 ? TG_RK3_REAL_AXIS * dx * dx / (8.0 * nu) : INFINITY;
}
static inline double tg_stable_step_biharmonic(double a4, double dx)
{
    return a4 > 0.0 ? TG_RK3_REAL_AXIS * dx * dx * dx * dx / (64.0 * a4) : INFINITY;
}

/* Most components one run may combine, and most parameters one scheme has. */
#define TG_MAX_CLOSURES 8
#define TG_CLOSURE_MAX_PARAMS 16

/* Kinds of parameter values. */
typedef enum {
    TG_PARAM_REAL = 0,    /* a real number in [lo, hi] */
    TG_PARAM_INT = 1,     /* a whole number in [lo, hi] */
    TG_PARAM_BOOL = 2,    /* true/false (delivered as 1/0) */
    TG_PARAM_TEXT = 3     /* a word or a path (delivered in texts[]); def_text is the default */
} tg_param_kind;

/* One row of a scheme's parameter table; the config layer validates the
 * scheme's section against it like any other key. */
typedef struct {
    const char *key;      /* config key in the scheme's section, units in the name */
    const char *unit;     /* "" when dimensionless */
    tg_param_kind kind;
    double def;           /* default (numbers) */
    double lo, hi;        /* allowed range, inclusive (numbers) */
    const char *def_text; /* default (TG_PARAM_TEXT; "" means required) */
    const char *meaning;  /* one line */
} tg_closure_param;

/* Ring fills the tools offer. */
typedef enum {
    TG_RING_ZERO = 0,      /* walls: 0; periodic: halo copy */
    TG_RING_EXTEND = 1     /* walls: the adjacent interior value (zero normal gradient); periodic: halo */
} tg_ring_kind;

/* Geometry-agnostic operators, provided by the framework (one copy of each
 * stencil lives in the library). All act on one layer's ns x ns array and
 * write the active nodes of `out` only; inputs need their rings filled. */
typedef struct {
    void *ctx;
    void (*laplacian)(void *ctx, const double *f, double *out);               /* five-point */
    void (*jacobian)(void *ctx, const double *a, const double *b, double *out); /* Arakawa J(a, b) */
    void (*ddx)(void *ctx, const double *f, double *out);                      /* centred */
    void (*ddy)(void *ctx, const double *f, double *out);                      /* centred */
    /* out = div(nu grad f), five-point flux form with nu averaged to faces */
    void (*div_nu_grad)(void *ctx, const double *nu, const double *f, double *out);
    /* out = A2 lap zeta - A4 lap^2 zeta for one layer, the same code path as the
     * core's lateral viscosity (zeta's ring must hold the wall vorticity) */
    void (*viscosity)(void *ctx, const double *zeta, double A2, double A4, double *out);
    void (*fill_ring)(void *ctx, double *f, tg_ring_kind how);
    void (*filter_gaussian)(void *ctx, double *f, double width_m);             /* active nodes */
} tg_closure_tools;

/* What a scheme's set-up sees. */
typedef struct {
    int nlayers, ns, a0, a1;
    double dx;                     /* grid spacing, m */
    double length;                 /* side of the domain, m */
    double dt;                     /* fixed time step, s; with adaptive steps the smallest
                                      step: the steps vary, so dt-dependent constants are
                                      made from each view's dt, and a scheme bounds the
                                      step through stable_step */
    const double *thickness_m;     /* H_k, nlayers */
    const double *reduced_gravity; /* g'_i, nlayers - 1 */
    double f0, beta;               /* s-1, m-1 s-1 */
    const double *stretching;      /* S, nlayers x nlayers row-major, m-2 */
    uint64_t seed;                 /* [initial] seed */
    int member;                    /* ensemble member (--member), 0 by default */
    const double *params;          /* values in the order of the scheme's table */
    const char *const *texts;      /* TG_PARAM_TEXT values in table order ("" for numbers) */
    const char *config_dir;        /* directory of the config file, for relative paths */
    const tg_closure_tools *tools;
} tg_closure_setup;

/* Read-only view of the resolved state at one Runge-Kutta stage. */
typedef struct {
    int nlayers, ns, a0, a1;
    double dx, dt;                 /* dt: the step being taken (advance: the step just taken) */
    long step;                     /* index of the step being taken (0 = first) */
    int stage;                     /* Runge-Kutta stage 0, 1, 2 */
    const double *psi;             /* streamfunction, m2 s-1 */
    const double *q;               /* potential vorticity, s-1 */
    const double *zeta;            /* relative vorticity, s-1 */
    const double *u, *v;           /* velocity -psi_y, psi_x (centred; ring filled), m s-1 */
    const double *wall;            /* psi's wall value per layer (0 when periodic) */
    /* Components evaluated earlier in the `use` list, for schemes that act
     * on another's tendency (multiplicative noise). */
    int ndone;
    const char *const *done_names;
    const double *const *done_tend;
    const tg_closure_tools *tools;
} tg_closure_view;

typedef struct tg_closure_ops {
    int abi;                       /* TG_CLOSURE_ABI */
    const char *name;              /* also its config section */
    const char *summary;           /* one line */
    const char *source;            /* the published method */
    int dissipative;               /* 1: declared to only remove energy */
    int nparams;
    const tg_closure_param *params;

    /* Makes the scheme's state (allocate everything here). */
    tg_code (*create)(const tg_closure_setup *s, void **state, tg_status *st);
    /* Writes (not adds) the PV tendency, s-2, on the active nodes of every
     * layer into tend (nlayers * ns * ns). Must not allocate. */
    tg_code (*tendency)(void *state, const tg_closure_view *v, double *tend, tg_status *st);
    /* Optional, called once after each completed step with the new state
     * (stage = 0): advances the scheme's own variables. */
    tg_code (*advance)(void *state, const tg_closure_view *v, tg_status *st);
    /* Optional: the scheme's own state as a flat array, for checkpoints. */
    size_t (*state_size)(void *state);
    void (*state_save)(void *state, double *buf);
    tg_code (*state_load)(void *state, const double *buf, size_t n, tg_status *st);
    void (*destroy)(void *state);
    /* Optional (ABI 2): the largest step, s, for which the scheme's explicit
     * update is stable at the state in the view (stage 0 of the step to be
     * taken); INFINITY when it sets no bound. Must not allocate. A scheme
     * without it sets no bound of its own: the core's limits, [time]
     * largest_step_s and the max_cfl check bound the step (README,
     * "Adaptive steps"). */
    double (*stable_step)(void *state, const tg_closure_view *v);
    /* Optional (ABI 3): the relative rounding error of the scheme's
     * tendency, e.g. FLT_EPSILON for one computed in single precision.
     * `twingyre vet` sizes the finite differences of its linear check by
     * its square root (vet_linear.c). A scheme without it computes in
     * double precision (DBL_EPSILON). */
    double (*precision)(void *state);
} tg_closure_ops;

/* The registry (closures/registry.c). */
int tg_closure_count(void);
const tg_closure_ops *tg_closure_ops_at(int i);
const tg_closure_ops *tg_closure_find(const char *name);

/* Loads a plugin's ops (dlopen); the handle stays open for the process. */
const tg_closure_ops *tg_closure_load_plugin(const char *path, tg_status *st);

/* Name of the function a plugin exports. */
#define TG_CLOSURE_ENTRY "twingyre_closure_entry"

#endif
