/* closure_tools.c - the closure tools on one geometry (closure_tools.h).
 *
 * Each tool is a thin call of the library's single copy of the operator
 * (fdops.h for stencils, the geometry's ops for rings and filtering).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "closure_tools.h"

#include <stdlib.h>

#include "fdops.h"

struct tg_tools {
    tg_geometry *g;
    double *lap1, *lap2;       /* one layer each, for the viscosity tool */
    tg_closure_tools tools;
};

static void t_laplacian(void *ctx, const double *f, double *out)
{
    tg_laplacian(((tg_tools *)ctx)->g, f, out);
}
static void t_jacobian(void *ctx, const double *a, const double *b, double *out)
{
    tg_jacobian(((tg_tools *)ctx)->g, a, b, out);
}
static void t_ddx(void *ctx, const double *f, double *out)
{
    tg_ddx(((tg_tools *)ctx)->g, f, out);
}
static void t_ddy(void *ctx, const double *f, double *out)
{
    tg_ddy(((tg_tools *)ctx)->g, f, out);
}
static void t_div_nu_grad(void *ctx, const double *nu, const double *f, double *out)
{
    tg_div_nu_grad(((tg_tools *)ctx)->g, nu, f, out);
}
static void t_viscosity(void *ctx, const double *zeta, double A2, double A4, double *out)
{
    tg_tools *t = ctx;
    tg_viscosity_layer(t->g, zeta, A2, A4, t->lap1, t->lap2, out);
}
static void t_fill_ring(void *ctx, double *f, tg_ring_kind how)
{
    tg_tools *t = ctx;
    if (how == TG_RING_EXTEND)
        t->g->ops->fill_ring_extend(t->g, f);
    else
        t->g->ops->fill_ring(t->g, f, 0.0);
}
static void t_filter(void *ctx, double *f, double width)
{
    tg_tools *t = ctx;
    t->g->ops->filter_gaussian(t->g, f, width);
}

tg_tools *tg_tools_create(tg_geometry *g, tg_status *st)
{
    tg_tools *t = calloc(1, sizeof *t);
    const size_t npl = (size_t)g->ns * (size_t)g->ns;
    if (t) {
        t->lap1 = calloc(npl, sizeof(double));
        t->lap2 = calloc(npl, sizeof(double));
    }
    if (!t || !t->lap1 || !t->lap2) {
        tg_tools_destroy(t);
        tg_fail(st, TG_ERR_NOMEM, "closure tools: no memory for %zu-point work arrays", npl);
        return NULL;
    }
    t->g = g;
    t->tools = (tg_closure_tools){.ctx = t, .laplacian = t_laplacian, .jacobian = t_jacobian,
                                  .ddx = t_ddx, .ddy = t_ddy, .div_nu_grad = t_div_nu_grad,
                                  .viscosity = t_viscosity, .fill_ring = t_fill_ring,
                                  .filter_gaussian = t_filter};
    return t;
}

void tg_tools_destroy(tg_tools *t)
{
    if (!t)
        return;
    free(t->lap1);
    free(t->lap2);
    free(t);
}

const tg_closure_tools *tg_tools_get(const tg_tools *t)
{
    return &t->tools;
}
