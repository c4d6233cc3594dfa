/* test_subgrid.c - the sub-grid PV forcing and fluxes (subgrid.h).
 *
 * Checks, each with its source:
 * - S_q = bar(J(psi, q)) - J(bar psi, bar q) vanishes when q is
 *   proportional to psi: J(psi, c psi) = 0 at both resolutions (the
 *   Jacobian is antisymmetric, J(a, b) = -J(b, a); the Arakawa form keeps
 *   this exactly: Arakawa 1966, J. Comput. Phys. 1, 119-143) and the filter
 *   is linear, so bar q = c bar psi. The same psi with a q that is not
 *   proportional gives a clearly nonzero S_q, so the check can fail.
 * - For a uniform q the sub-grid PV fluxes bar(u q) - bar(u) bar(q) vanish
 *   and so does S_q (a constant passes the filter, which is normalized:
 *   Pope 2000, Turbulent Flows, section 13.2, from memory).
 * Both geometries, both filters.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "coarsen.h"
#include "config.h"
#include "geometry.h"
#include "subgrid.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

static const double PI = 3.14159265358979323846;

static tg_geometry *make_geometry(tg_geometry_kind kind, int points, double size_km)
{
    tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    cfg.geometry = kind;
    cfg.points = points;
    cfg.size_km = size_km;
    tg_geometry *g = tg_geometry_create(&cfg, &st);
    ck_assert_msg(g != NULL, "geometry: %s", st.msg);
    return g;
}

static double *alloc0(size_t n)
{
    double *a = calloc(n, sizeof(double));
    ck_assert_ptr_nonnull(a);
    return a;
}

/* A streamfunction with fine structure (so that S_q is not trivially
 * small), constant on the basin walls (value c_k), periodic otherwise. */
static void make_psi(const tg_geometry *g, int nl, double *psi)
{
    const long npl = (long)g->ns * g->ns;
    const double L = g->length;
    for (int k = 0; k < nl; k++)
        for (int j = 0; j < g->ns; j++)
            for (int i = 0; i < g->ns; i++) {
                const double x = g->coord[i], y = g->coord[j];
                const double s = 2.0 * PI * x / L, t = 2.0 * PI * y / L;
                /* sin^2-type factors vanish on the walls of a basin and are periodic */
                const double env = sin(0.5 * s) * sin(0.5 * t);
                psi[k * npl + (long)j * g->ns + i] =
                    (k + 1) * 300.0 +
                    1e4 * env * env * (cos(3 * s + k) + 0.4 * sin(9 * s - 7 * t) +
                                       0.3 * cos(13 * t + 2 * s));
            }
}

static void check_proportional(tg_geometry_kind kind, int pf, int pc, tg_filter_kind filt)
{
    const double L = 1000.0;
    tg_geometry *f = make_geometry(kind, pf, L), *c = make_geometry(kind, pc, L);
    tg_status st;
    tg_coarsen *cg = tg_coarsen_create(f, c, filt, 2.0, &st);
    ck_assert_msg(cg != NULL, "%s", st.msg);
    const int nl = 2;
    tg_subgrid *sg = tg_subgrid_create(cg, f, c, nl, &st);
    ck_assert_msg(sg != NULL, "%s", st.msg);
    const long npf = (long)f->ns * f->ns, npc = (long)c->ns * c->ns;
    double *psi = alloc0((size_t)(nl * npf)), *q = alloc0((size_t)(nl * npf));
    double *zeta = alloc0((size_t)(nl * npf));
    make_psi(f, nl, psi);
    const double lam[2] = {-2.0e-9, 5.0e-10}; /* m-2 */
    for (int k = 0; k < nl; k++)
        for (long p = 0; p < npf; p++) {
            q[k * npf + p] = lam[k] * psi[k * npf + p];
            zeta[k * npf + p] = q[k * npf + p];
        }
    tg_subgrid_compute(sg, psi, q, zeta);
    const tg_subgrid_fields *out = tg_subgrid_result(sg);
    double smax = 0.0;
    for (long p = 0; p < nl * npc; p++)
        smax = fmax(smax, fabs(out->forcing[p]));

    /* Not proportional: q = lam psi + a field of its own. */
    for (int k = 0; k < nl; k++)
        for (int j = 0; j < f->ns; j++)
            for (int i = 0; i < f->ns; i++) {
                const double x = 2.0 * PI * f->coord[i] / f->length;
                const double y = 2.0 * PI * f->coord[j] / f->length;
                q[k * npf + (long)j * f->ns + i] += 1e-5 * sin(5 * x) * cos(11 * y + k);
            }
    tg_subgrid_compute(sg, psi, q, zeta);
    double sref = 0.0;
    for (long p = 0; p < nl * npc; p++)
        sref = fmax(sref, fabs(out->forcing[p]));
    ck_assert_msg(sref > 1e-12, "control S_q is only %g", sref);
    ck_assert_msg(smax < 1e-9 * sref, "S_q = %g for q proportional to psi (control %g)", smax,
                  sref);

    /* Uniform q: no fluxes, no forcing. */
    for (long p = 0; p < nl * npf; p++)
        q[p] = 3.0e-5;
    tg_subgrid_compute(sg, psi, q, zeta);
    double fmaxv = 0.0, umax = 0.0, s2 = 0.0;
    for (long p = 0; p < nl * npc; p++) {
        fmaxv = fmax(fmaxv, fmax(fabs(out->flux_x[p]), fabs(out->flux_y[p])));
        umax = fmax(umax, fabs(out->u[p]));
        s2 = fmax(s2, fabs(out->forcing[p]));
    }
    ck_assert(umax > 0.01);
    ck_assert_msg(fmaxv < 1e-12 * umax * 3.0e-5, "flux %g for uniform q", fmaxv);
    ck_assert_msg(s2 < 1e-9 * sref, "S_q %g for uniform q", s2);

    free(psi);
    free(q);
    free(zeta);
    tg_subgrid_destroy(sg);
    tg_coarsen_destroy(cg);
    tg_geometry_destroy(f);
    tg_geometry_destroy(c);
}

START_TEST(proportional_basin_gaussian) { check_proportional(TG_GEOM_BASIN, 65, 17, TG_FILTER_GAUSSIAN); }
END_TEST
START_TEST(proportional_basin_sharp) { check_proportional(TG_GEOM_BASIN, 65, 17, TG_FILTER_SHARP); }
END_TEST
START_TEST(proportional_periodic_gaussian) { check_proportional(TG_GEOM_PERIODIC, 64, 16, TG_FILTER_GAUSSIAN); }
END_TEST
START_TEST(proportional_periodic_sharp) { check_proportional(TG_GEOM_PERIODIC, 64, 32, TG_FILTER_SHARP); }
END_TEST

static Suite *subgrid_suite(void)
{
    Suite *s = suite_create("subgrid");
    TCase *tc = tcase_create("forcing");
    tcase_add_test(tc, proportional_basin_gaussian);
    tcase_add_test(tc, proportional_basin_sharp);
    tcase_add_test(tc, proportional_periodic_gaussian);
    tcase_add_test(tc, proportional_periodic_sharp);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(subgrid_suite());
}
