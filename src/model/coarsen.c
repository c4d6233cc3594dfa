/* coarsen.c - filter, then restrict to the coarse nodes (coarsen.h). */
#include "coarsen.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "constants.h"

struct tg_coarsen {
    const tg_geometry *fine, *coarse;
    tg_filter_kind kind;
    int r;
    double width;     /* Delta, m */
    double cutoff;    /* pi / Dc, rad m-1 */
    void *fwork;      /* the fine geometry's filter scratch */
    double *tmp;      /* ns_f * ns_f */
};

void tg_coarsen_destroy(tg_coarsen *c)
{
    if (!c)
        return;
    if (c->fwork)
        c->fine->ops->filter_work_destroy(c->fwork);
    free(c->tmp);
    free(c);
}

tg_coarsen *tg_coarsen_create(const tg_geometry *fine, const tg_geometry *coarse,
                              tg_filter_kind kind, double width_factor, tg_status *st)
{
    if (!fine || !coarse) {
        tg_fail(st, TG_ERR_INTERNAL, "coarse-graining: no geometry given");
        return NULL;
    }
    if (!fine->ops->filter_field || !fine->ops->filter_work_create ||
        !fine->ops->filter_work_destroy) {
        tg_fail(st, TG_ERR_INTERNAL, "coarse-graining: this geometry has no filter");
        return NULL;
    }
    if (fine->kind != coarse->kind || fabs(fine->length - coarse->length) > 1e-9 * fine->length) {
        tg_fail(st, TG_ERR_INTERNAL,
                "coarse-graining: the fine and coarse grids must cover the same domain");
        return NULL;
    }
    const double ratio = coarse->dx / fine->dx;
    const int r = (int)floor(ratio + 0.5);
    const int nout_f = fine->o1 - fine->o0, nout_c = coarse->o1 - coarse->o0;
    if (r < 1 || fabs(ratio - r) > 1e-9 * ratio || (long)r * (nout_c - 1) > nout_f - 1) {
        tg_fail(st, TG_ERR_CONFIG,
                "coarse-graining: the coarse spacing (%g m) must be an integer multiple of the "
                "fine spacing (%g m)", coarse->dx, fine->dx);
        return NULL;
    }
    for (int I = 0; I < nout_c; I++)
        if (fabs(fine->coord[fine->o0 + r * I] - coarse->coord[coarse->o0 + I]) >
            1e-6 * fine->dx) {
            tg_fail(st, TG_ERR_INTERNAL,
                    "coarse-graining: coarse node %d (at %g m) is not a fine node", I,
                    coarse->coord[coarse->o0 + I]);
            return NULL;
        }
    if (kind == TG_FILTER_GAUSSIAN && !(width_factor > 0.0)) {
        tg_fail(st, TG_ERR_CONFIG, "coarse-graining: the Gaussian width factor must be > 0, got %g",
                width_factor);
        return NULL;
    }
    tg_coarsen *c = calloc(1, sizeof *c);
    if (!c) {
        tg_fail(st, TG_ERR_NOMEM, "coarse-graining: no memory");
        return NULL;
    }
    c->fine = fine;
    c->coarse = coarse;
    c->kind = kind;
    c->r = r;
    c->cutoff = TG_PI / coarse->dx;
    c->width = kind == TG_FILTER_GAUSSIAN ? width_factor * coarse->dx : coarse->dx;
    c->tmp = malloc(sizeof(double) * (size_t)fine->ns * fine->ns);
    if (!c->tmp) {
        tg_fail(st, TG_ERR_NOMEM, "coarse-graining: no memory for a %d x %d work array", fine->ns,
                fine->ns);
        tg_coarsen_destroy(c);
        return NULL;
    }
    c->fwork = fine->ops->filter_work_create(fine, st);
    if (!c->fwork) {
        tg_coarsen_destroy(c);
        return NULL;
    }
    return c;
}

int tg_coarsen_ratio(const tg_coarsen *c) { return c->r; }
tg_filter_kind tg_coarsen_kind(const tg_coarsen *c) { return c->kind; }
double tg_coarsen_width(const tg_coarsen *c) { return c->width; }
double tg_coarsen_cutoff(const tg_coarsen *c) { return c->cutoff; }

void tg_coarsen_filter(tg_coarsen *c, double *fine)
{
    const double scale = c->kind == TG_FILTER_SHARP ? c->cutoff : c->width;
    c->fine->ops->filter_field(c->fine, c->fwork, fine, (int)c->kind, scale);
}

void tg_coarsen_restrict(const tg_coarsen *c, const double *fine, double *coarse)
{
    const tg_geometry *f = c->fine, *g = c->coarse;
    const int nf = f->ns, nc = g->ns, r = c->r, nout = g->o1 - g->o0;
    for (int J = 0; J < nout; J++) {
        const double *src = fine + (long)(f->o0 + r * J) * nf + f->o0;
        double *dst = coarse + (long)(g->o0 + J) * nc + g->o0;
        for (int I = 0; I < nout; I++)
            dst[I] = src[(long)r * I];
    }
    /* A ring that is not written to files (the periodic halo) comes from
     * the geometry, as in tg_model_set_psi. */
    if (g->o0 == g->a0)
        g->ops->fill_ring(g, coarse, 0.0);
}

void tg_coarsen_field(tg_coarsen *c, const double *fine, double *coarse)
{
    memcpy(c->tmp, fine, sizeof(double) * (size_t)c->fine->ns * c->fine->ns);
    tg_coarsen_filter(c, c->tmp);
    tg_coarsen_restrict(c, c->tmp, coarse);
}
