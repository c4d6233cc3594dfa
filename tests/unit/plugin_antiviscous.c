/* plugin_antiviscous.c - a deliberately unstable closure plugin for the
 * tests of `twingyre vet` (tests/cli/test_vet.sh, tests/unit/test_vet.c).
 *
 * Its PV tendency is negative harmonic viscosity with no sink,
 *     -A lap zeta_k        (A = antiviscosity_m2_per_s > 0),
 * an anti-diffusion whose discrete modes grow at the rate A |lambda|, lambda
 * the eigenvalue of the five-point Laplacian: fastest at the grid scale
 * (the ill-posed backward heat equation; e.g. LeVeque 2007, Finite
 * Difference Methods for Ordinary and Partial Differential Equations,
 * chapter 9, from memory). It also declares itself dissipative, which it
 * is not, so that the conservation check has a false claim to catch.
 * Built like the other test plugins (Makefile.am, check_LTLIBRARIES); it
 * uses only the tools of closure.h.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdio.h>
#include <stdlib.h>

#include "closure.h"

static const tg_closure_param params[1] = {
    {"antiviscosity_m2_per_s", "m2 s-1", TG_PARAM_REAL, 500.0, 0.0, 1e7, NULL,
     "size A of the negative harmonic viscosity -A lap zeta"},
};

typedef struct {
    double A;
    int nl;
    long npl;
} anti_state;

static tg_code anti_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    anti_state *a = calloc(1, sizeof *a);
    if (!a) {
        if (st) {
            st->code = TG_ERR_NOMEM;
            snprintf(st->msg, sizeof st->msg, "antiviscous: no memory for its state");
        }
        return TG_ERR_NOMEM;
    }
    a->A = s->params[0];
    a->nl = s->nlayers;
    a->npl = (long)s->ns * s->ns;
    *state = a;
    return TG_OK;
}

static tg_code anti_tendency(void *state, const tg_closure_view *v, double *tend, tg_status *st)
{
    (void)st;
    const anti_state *a = state;
    /* The viscosity tool with A2 = -A and no biharmonic part. */
    for (int k = 0; k < a->nl; k++)
        v->tools->viscosity(v->tools->ctx, v->zeta + k * a->npl, -a->A, 0.0, tend + k * a->npl);
    return TG_OK;
}

static void anti_destroy(void *state)
{
    free(state);
}

static const tg_closure_ops anti_ops = {
    .abi = TG_CLOSURE_ABI,
    .name = "antiviscous",
    .summary = "test fixture: negative harmonic viscosity with no sink (unstable on purpose)",
    .source = "none (test fixture)",
    .dissipative = 1, /* a false claim, on purpose */
    .nparams = 1,
    .params = params,
    .create = anti_create,
    .tendency = anti_tendency,
    .destroy = anti_destroy,
};

const tg_closure_ops *twingyre_closure_entry(void);
const tg_closure_ops *twingyre_closure_entry(void)
{
    return &anti_ops;
}
