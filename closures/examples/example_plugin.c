/* example_plugin.c - an example closure plugin: constant harmonic and
 * biharmonic viscosity, under the name `example_viscosity`.
 *
 * A plugin is a shared object built against the installed header
 * <twingyre/closure.h> that exports one function,
 *     const tg_closure_ops *twingyre_closure_entry(void);
 * returning its table of operations (closure.h documents every field).
 * twingyre loads it for `[closure] use = plugin:/path/example_plugin.so`
 * and reads its parameters from the section [plugin.example_viscosity].
 *
 * The physics is that of the built-in scheme `viscosity`
 * (closures/viscosity.c): the PV tendency of each layer is
 *     A2 lap zeta - A4 lap^2 zeta
 * (harmonic eddy viscosity: Smagorinsky 1963, Mon. Wea. Rev. 91, 99-164;
 * biharmonic: Holland 1978, J. Phys. Oceanogr. 8, 363-392), computed by
 * the framework's viscosity tool, so with the same parameters the plugin
 * gives the same numbers as the built-in scheme bit for bit.
 *
 * Rules a plugin follows (closure.h):
 *   - allocate in create(), never in tendency();
 *   - write the tendency (s-2) on the active nodes a0..a1-1 of every layer;
 *   - use the tools for derivatives and ring fills, so the code runs
 *     unchanged in a basin or a periodic domain;
 *   - call no library function of twingyre: only the header's types and
 *     the tool pointers are used, so the plugin links against nothing and
 *     loads into a shared or a static build of the program alike. Errors
 *     are reported by filling the tg_status record directly (fail() below).
 *
 * Build against an installed twingyre (closures/examples/README.md):
 *     cc -std=c11 -O2 -fPIC -shared $(pkg-config --cflags twingyre) \
 *        example_plugin.c -o example_plugin.so
 * In the source tree, `make check` builds it as a libtool module with
 * TWINGYRE_IN_TREE defined and src/ on the include path.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>

#ifdef TWINGYRE_IN_TREE
#include "closure.h"
#else
#include <twingyre/closure.h>
#endif

/* The parameter table: the config keys of [plugin.example_viscosity],
 * with units in their names; the framework validates values against the
 * ranges and fills in defaults. */
enum { P_A2, P_A4, P_N };

static const tg_closure_param params[P_N] = {
    [P_A2] = {"viscosity_m2_per_s", "m2 s-1", TG_PARAM_REAL, 500.0, 0.0, 1e7, NULL,
              "harmonic (Laplacian) eddy viscosity A2"},
    [P_A4] = {"hyperviscosity_m4_per_s", "m4 s-1", TG_PARAM_REAL, 0.0, 0.0, 1e18, NULL,
              "biharmonic eddy viscosity A4"},
};

/* The scheme's own state: made in create(), freed in destroy(). */
typedef struct {
    double A2, A4;
    int nl;
    long npl;
} example_state;

/* Fills a status record without calling into the library. */
static tg_code fail(tg_status *st, tg_code code, const char *fmt, ...)
{
    if (st) {
        va_list ap;
        va_start(ap, fmt);
        vsnprintf(st->msg, sizeof st->msg, fmt, ap);
        va_end(ap);
        st->code = code;
    }
    return code;
}

static tg_code example_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    example_state *e = calloc(1, sizeof *e);
    if (!e)
        return fail(st, TG_ERR_NOMEM, "example_viscosity: no memory for its state");
    e->A2 = s->params[P_A2];
    e->A4 = s->params[P_A4];
    e->nl = s->nlayers;
    e->npl = (long)s->ns * s->ns;
    *state = e;
    return TG_OK;
}

/* A2 lap zeta - A4 lap^2 zeta for every layer, by the viscosity tool
 * (zeta's ring holds the wall vorticity; the tool fills the ring of
 * lap zeta itself). */
static tg_code example_tendency(void *state, const tg_closure_view *view, double *tend,
                                tg_status *st)
{
    (void)st;
    const example_state *e = state;
    for (int k = 0; k < e->nl; k++)
        view->tools->viscosity(view->tools->ctx, view->zeta + k * e->npl, e->A2, e->A4,
                               tend + k * e->npl);
    return TG_OK;
}

/* The largest stable step (optional): the smaller of the harmonic and the
 * biharmonic bound of the explicit step (inline helpers of closure.h, no
 * library call); adaptive steps stay below it. */
static double example_stable_step(void *state, const tg_closure_view *view)
{
    const example_state *e = state;
    const double a = tg_stable_step_harmonic(e->A2, view->dx);
    const double b = tg_stable_step_biharmonic(e->A4, view->dx);
    return a < b ? a : b;
}

static void example_destroy(void *state)
{
    free(state);
}

static const tg_closure_ops example_ops = {
    .abi = TG_CLOSURE_ABI, /* checked by the loader */
    .name = "example_viscosity",
    .summary = "example plugin: constant harmonic and biharmonic viscosity on vorticity",
    .source = "Smagorinsky 1963, Mon. Wea. Rev. 91, 99-164 (harmonic); Holland 1978, "
              "J. Phys. Oceanogr. 8, 363-392 (biharmonic)",
    .dissipative = 1,
    .nparams = P_N,
    .params = params,
    .create = example_create,
    .tendency = example_tendency,
    .advance = NULL,      /* no per-step state */
    .state_size = NULL,   /* nothing to checkpoint */
    .state_save = NULL,
    .state_load = NULL,
    .destroy = example_destroy,
    .stable_step = example_stable_step, /* interface version 2 */
};

/* The one exported symbol (TG_CLOSURE_ENTRY). */
const tg_closure_ops *twingyre_closure_entry(void);

const tg_closure_ops *twingyre_closure_entry(void)
{
    return &example_ops;
}
