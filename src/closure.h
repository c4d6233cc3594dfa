/* closure.h - what a sub-grid closure sees and what it returns.
 *
 * A closure adds a PV tendency for every layer given the resolved state.
 * It never inverts PV itself, never touches the stepper's internals or the
 * output files: it receives a read-only view of the state and writes its
 * tendency into an array the framework owns. The framework computes the
 * closure's energy and enstrophy contributions from that tendency, so a new
 * scheme gets budget lines without writing any.
 *
 * This header is installed. The registry of named schemes and their
 * parameter tables is filled in closures/; today the core ships the hook
 * with no scheme registered, and `[closure]` keys are not accepted yet.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CLOSURE_H
#define TG_CLOSURE_H

#include "status.h"

/* Read-only view of the resolved state at one Runge-Kutta stage. Arrays are
 * ns x ns per layer, layer k at offset k*ns*ns; the active nodes are
 * a0 <= i, j < a1 and their rings are filled. */
typedef struct {
    int nlayers, ns, a0, a1;
    double dx;                 /* grid spacing, m */
    double dt;                 /* time step, s */
    long step;                 /* index of the step being taken */
    int stage;                 /* Runge-Kutta stage 0, 1, 2 */
    const double *psi;         /* streamfunction, m2 s-1 */
    const double *q;           /* potential vorticity, s-1 */
    const double *zeta;        /* relative vorticity, s-1 */
    const double *thickness_m; /* H_k */
} tg_closure_view;

typedef struct tg_closure tg_closure;

/* One scheme's operations. `add_tendency` writes (not adds) its PV
 * tendency (s-2) on the active nodes of every layer into `tend`. */
typedef struct {
    const char *name;
    const char *source; /* the published method, for listings */
    tg_code (*add_tendency)(tg_closure *c, const tg_closure_view *v, double *tend, tg_status *st);
    void (*destroy)(tg_closure *c);
} tg_closure_ops;

struct tg_closure {
    const tg_closure_ops *ops;
    void *impl;
};

/* Number of registered schemes and the i-th one (closures/registry.c). */
int tg_closure_count(void);
const tg_closure_ops *tg_closure_ops_at(int i);
const tg_closure_ops *tg_closure_find(const char *name);

#endif
