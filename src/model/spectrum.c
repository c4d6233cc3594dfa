/* spectrum.c - bins and bookkeeping of the kinetic-energy spectrum (spectrum.h).
 * The geometry-specific transform is the ke_spectrum op of geometry.h.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "spectrum.h"

#include <math.h>
#include <stdlib.h>

int tg_spectrum_bin(long m2)
{
    if (m2 <= 0)
        return 0;
    long b = (long)floor(sqrt((double)m2));
    /* (b - 1/2)^2 <= m2 < (b + 1/2)^2  <=>  4b^2 - 4b + 1 <= 4 m2 < 4b^2 + 4b + 1 */
    while (4 * b * b - 4 * b + 1 > 4 * m2)
        b--;
    while (4 * b * b + 4 * b + 1 <= 4 * m2)
        b++;
    return (int)b;
}

void tg_spectrum_destroy(tg_spectrum *s)
{
    if (!s)
        return;
    free(s->k);
    free(s->e);
    free(s->work);
    free(s);
}

tg_spectrum *tg_spectrum_create(const tg_geometry *g, tg_status *st)
{
    tg_status_clear(st);
    if (!g || !g->ops || !g->ops->ke_spectrum || g->spectrum_nbins < 1 ||
        !(g->spectrum_dk > 0.0)) {
        tg_fail(st, TG_ERR_INTERNAL,
                "spectrum: this geometry provides no kinetic-energy spectrum "
                "(op %s, %d bins, bin width %g rad/m)",
                g && g->ops && g->ops->ke_spectrum ? "present" : "missing",
                g ? g->spectrum_nbins : 0, g ? g->spectrum_dk : 0.0);
        return NULL;
    }
    tg_spectrum *s = calloc(1, sizeof *s);
    if (!s) {
        tg_fail(st, TG_ERR_NOMEM, "spectrum: no memory for the spectrum record");
        return NULL;
    }
    s->nbins = g->spectrum_nbins;
    s->dk = g->spectrum_dk;
    s->nwork = (long)g->ns * g->ns;
    s->k = malloc(sizeof(double) * (size_t)s->nbins);
    s->e = calloc((size_t)s->nbins, sizeof(double));
    s->work = calloc((size_t)s->nwork, sizeof(double));
    if (!s->k || !s->e || !s->work) {
        tg_fail(st, TG_ERR_NOMEM, "spectrum: no memory for %d bins and a %d x %d work array",
                s->nbins, g->ns, g->ns);
        tg_spectrum_destroy(s);
        return NULL;
    }
    for (int b = 1; b <= s->nbins; b++)
        s->k[b - 1] = b * s->dk;
    return s;
}

tg_code tg_spectrum_compute(tg_spectrum *s, tg_geometry *g, const double *psi, double wall_value,
                            tg_status *st)
{
    if (s->nbins != g->spectrum_nbins || s->dk != g->spectrum_dk ||
        s->nwork != (long)g->ns * g->ns)
        return tg_fail(st, TG_ERR_INTERNAL,
                       "spectrum: made for %d bins of %g rad/m, but the geometry has %d bins of "
                       "%g rad/m", s->nbins, s->dk, g->spectrum_nbins, g->spectrum_dk);
    g->ops->ke_spectrum(g, psi, wall_value, s->work, s->e);
    return TG_OK;
}

double tg_spectrum_total(const tg_spectrum *s)
{
    double t = 0.0;
    for (int b = 0; b < s->nbins; b++)
        t += s->e[b] * s->dk;
    return t;
}
