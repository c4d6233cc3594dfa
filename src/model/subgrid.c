/* subgrid.c - sub-grid PV forcing and fluxes on the coarse grid (subgrid.h). */
#include "subgrid.h"

#include <stdlib.h>
#include <string.h>

#include "fdops.h"

struct tg_subgrid {
    tg_coarsen *c;
    const tg_geometry *gf, *gc;
    int nl;
    long npf, npc;
    double *u, *v, *jac, *prod;  /* fine work, npf each */
    double *jc;                  /* coarse work, npc */
    double *flux_bar;            /* coarse work, npc */
    tg_subgrid_fields out;
};

void tg_subgrid_destroy(tg_subgrid *s)
{
    if (!s)
        return;
    free(s->u);
    free(s->v);
    free(s->jac);
    free(s->prod);
    free(s->jc);
    free(s->flux_bar);
    free(s->out.psi);
    free(s->out.q);
    free(s->out.u);
    free(s->out.v);
    free(s->out.zeta);
    free(s->out.forcing);
    free(s->out.flux_x);
    free(s->out.flux_y);
    free(s);
}

tg_subgrid *tg_subgrid_create(tg_coarsen *c, const tg_geometry *fine, const tg_geometry *coarse,
                              int nlayers, tg_status *st)
{
    tg_subgrid *s = calloc(1, sizeof *s);
    if (!s) {
        tg_fail(st, TG_ERR_NOMEM, "sub-grid forcing: no memory");
        return NULL;
    }
    s->c = c;
    s->gf = fine;
    s->gc = coarse;
    s->nl = nlayers;
    s->npf = (long)fine->ns * fine->ns;
    s->npc = (long)coarse->ns * coarse->ns;
    const size_t nf = (size_t)s->npf, nc = (size_t)s->npc * (size_t)nlayers;
    s->u = calloc(nf, sizeof(double));
    s->v = calloc(nf, sizeof(double));
    s->jac = calloc(nf, sizeof(double));
    s->prod = calloc(nf, sizeof(double));
    s->jc = calloc((size_t)s->npc, sizeof(double));
    s->flux_bar = calloc((size_t)s->npc, sizeof(double));
    s->out.psi = calloc(nc, sizeof(double));
    s->out.q = calloc(nc, sizeof(double));
    s->out.u = calloc(nc, sizeof(double));
    s->out.v = calloc(nc, sizeof(double));
    s->out.zeta = calloc(nc, sizeof(double));
    s->out.forcing = calloc(nc, sizeof(double));
    s->out.flux_x = calloc(nc, sizeof(double));
    s->out.flux_y = calloc(nc, sizeof(double));
    if (!s->u || !s->v || !s->jac || !s->prod || !s->jc || !s->flux_bar || !s->out.psi ||
        !s->out.q || !s->out.u || !s->out.v || !s->out.zeta || !s->out.forcing ||
        !s->out.flux_x || !s->out.flux_y) {
        tg_fail(st, TG_ERR_NOMEM, "sub-grid forcing: no memory for the work arrays (%d and %d "
                "points per side, %d layers)", fine->ns, coarse->ns, nlayers);
        tg_subgrid_destroy(s);
        return NULL;
    }
    return s;
}

const tg_subgrid_fields *tg_subgrid_result(const tg_subgrid *s) { return &s->out; }

/* out = a * b on every stored node. */
static void product(long n, const double *a, const double *b, double *out)
{
    for (long p = 0; p < n; p++)
        out[p] = a[p] * b[p];
}

/* flux = bar(w q) - bar(w) bar(q) on every coarse node; w fine, q fine. */
static void flux(tg_subgrid *s, const double *w, const double *q, const double *wbar,
                 const double *qbar, double *out)
{
    product(s->npf, w, q, s->prod);
    tg_coarsen_field(s->c, s->prod, s->flux_bar);
    for (long p = 0; p < s->npc; p++)
        out[p] = s->flux_bar[p] - wbar[p] * qbar[p];
}

void tg_subgrid_compute(tg_subgrid *s, const double *psi, const double *q, const double *zeta)
{
    const tg_geometry *gf = s->gf, *gc = s->gc;
    const int ns = gc->ns;
    for (int k = 0; k < s->nl; k++) {
        const double *pk = psi + k * s->npf, *qk = q + k * s->npf, *zk = zeta + k * s->npf;
        double *pb = s->out.psi + k * s->npc, *qb = s->out.q + k * s->npc;
        double *ub = s->out.u + k * s->npc, *vb = s->out.v + k * s->npc;
        double *S = s->out.forcing + k * s->npc;

        tg_coarsen_field(s->c, pk, pb);
        tg_coarsen_field(s->c, qk, qb);
        tg_coarsen_field(s->c, zk, s->out.zeta + k * s->npc);

        /* Fine velocities u = -psi_y, v = psi_x; walls take the adjacent value. */
        tg_ddy(gf, pk, s->u);
        tg_axpby(gf, -1.0, s->u, 0.0, s->u);
        tg_ddx(gf, pk, s->v);
        gf->ops->fill_ring_extend(gf, s->u);
        gf->ops->fill_ring_extend(gf, s->v);
        tg_coarsen_field(s->c, s->u, ub);
        tg_coarsen_field(s->c, s->v, vb);

        /* S_q = bar(J(psi, q)) - J(bar psi, bar q). */
        tg_jacobian(gf, pk, qk, s->jac);
        gf->ops->fill_ring_extend(gf, s->jac);
        tg_coarsen_field(s->c, s->jac, S);
        tg_jacobian(gc, pb, qb, s->jc);
        for (int j = 0; j < ns; j++)
            for (int i = 0; i < ns; i++) {
                const long p = (long)j * ns + i;
                const int active = i >= gc->a0 && i < gc->a1 && j >= gc->a0 && j < gc->a1;
                S[p] = active ? S[p] - s->jc[p] : 0.0;
            }

        flux(s, s->u, qk, ub, qb, s->out.flux_x + k * s->npc);
        flux(s, s->v, qk, vb, qb, s->out.flux_y + k * s->npc);
    }
}
