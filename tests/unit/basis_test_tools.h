/* basis_test_tools.h - closure tools built directly on a geometry, for the
 * tests of the basis library (test_basis.c, test_closure_coefficients.c).
 *
 * The same operators as the closure host's tools (src/closure_host.c):
 * fdops.h stencils and the geometry's ring fills and filter. A test owns
 * one test_tools object per geometry (tt_create / tt_destroy).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_BASIS_TEST_TOOLS_H
#define TG_BASIS_TEST_TOOLS_H

#include <stdlib.h>

#include "closure.h"
#include "fdops.h"
#include "geometry.h"

typedef struct {
    tg_geometry *g;
    double *lap1, *lap2;
    tg_closure_tools tools;
} test_tools;

static void tt_laplacian(void *ctx, const double *f, double *out)
{
    tg_laplacian(((test_tools *)ctx)->g, f, out);
}
static void tt_jacobian(void *ctx, const double *a, const double *b, double *out)
{
    tg_jacobian(((test_tools *)ctx)->g, a, b, out);
}
static void tt_ddx(void *ctx, const double *f, double *out)
{
    tg_ddx(((test_tools *)ctx)->g, f, out);
}
static void tt_ddy(void *ctx, const double *f, double *out)
{
    tg_ddy(((test_tools *)ctx)->g, f, out);
}
static void tt_div_nu_grad(void *ctx, const double *nu, const double *f, double *out)
{
    tg_div_nu_grad(((test_tools *)ctx)->g, nu, f, out);
}
static void tt_viscosity(void *ctx, const double *zeta, double A2, double A4, double *out)
{
    test_tools *t = ctx;
    tg_viscosity_layer(t->g, zeta, A2, A4, t->lap1, t->lap2, out);
}
static void tt_fill_ring(void *ctx, double *f, tg_ring_kind how)
{
    test_tools *t = ctx;
    if (how == TG_RING_EXTEND)
        t->g->ops->fill_ring_extend(t->g, f);
    else
        t->g->ops->fill_ring(t->g, f, 0.0);
}
static void tt_filter(void *ctx, double *f, double width)
{
    test_tools *t = ctx;
    t->g->ops->filter_gaussian(t->g, f, width);
}

/* NULL when out of memory. */
static test_tools *tt_create(tg_geometry *g)
{
    test_tools *t = calloc(1, sizeof *t);
    if (!t)
        return NULL;
    t->g = g;
    t->lap1 = calloc((size_t)g->ns * g->ns, sizeof(double));
    t->lap2 = calloc((size_t)g->ns * g->ns, sizeof(double));
    if (!t->lap1 || !t->lap2) {
        free(t->lap1);
        free(t->lap2);
        free(t);
        return NULL;
    }
    t->tools = (tg_closure_tools){.ctx = t, .laplacian = tt_laplacian, .jacobian = tt_jacobian,
                                  .ddx = tt_ddx, .ddy = tt_ddy, .div_nu_grad = tt_div_nu_grad,
                                  .viscosity = tt_viscosity, .fill_ring = tt_fill_ring,
                                  .filter_gaussian = tt_filter};
    return t;
}

static void tt_destroy(test_tools *t)
{
    if (!t)
        return;
    free(t->lap1);
    free(t->lap2);
    free(t);
}

#endif
