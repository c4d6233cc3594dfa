/* viscous.h - the flow-dependent eddy-viscosity fields of the viscous closures.
 *
 * The schemes smagorinsky, smagorinsky_biharmonic (closures/smagorinsky.c,
 * closures/smagorinsky_biharmonic.c), leith and leith_qg (closures/leith.c,
 * closures/leith_qg.c) share two coefficient fields, computed here for one
 * layer. They are not static so that the schemes reuse one copy and the
 * unit tests (tests/unit/test_closure_viscous.c) can check them directly.
 * Library-private: not installed.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CLOSURES_VISCOUS_H
#define TG_CLOSURES_VISCOUS_H

#include "closure.h"

/* The grid a viscosity field lives on and the tools that differentiate on it. */
typedef struct {
    int ns, a0, a1;                 /* stored side, active range (closure.h) */
    double dx;                      /* grid spacing, m */
    const tg_closure_tools *tools;
} tg_visc_grid;

/* Horizontal deformation rate |D| = sqrt(D_T^2 + D_S^2) with
 *   D_T = u_x - v_y = -2 psi_xy,   D_S = v_x + u_y = psi_xx - psi_yy,
 * (Smagorinsky 1963, Mon. Wea. Rev. 91, 99-164) on the active nodes of
 * `out`, s-1, from psi (ring filled; psi constant on walls). psi_xy is the
 * compact four-corner difference ddx(ddy psi) and psi_xx - psi_yy the
 * compact three-point differences, so the two-grid-interval mode is seen.
 * work: ns*ns doubles of scratch. out's ring is left untouched. */
void tg_visc_deformation_rate(const tg_visc_grid *gr, const double *psi, double *work,
                              double *out);

/* Smagorinsky viscosity nu = (C dx)^2 |D| (m2 s-1) on the active nodes,
 * ring filled with TG_RING_EXTEND. work: ns*ns doubles. */
void tg_visc_smagorinsky_nu(const tg_visc_grid *gr, double C, const double *psi, double *work,
                            double *nu);

/* Leith viscosity nu = (C dx)^3 |grad f + (0, extra_fy)| (m2 s-1) on the
 * active nodes with centred gradients of f (ring filled), ring filled with
 * TG_RING_EXTEND (Leith 1996, Physica D 98, 481-491). extra_fy adds a
 * uniform y-gradient (the planetary PV gradient beta for leith_qg; 0 for
 * leith). gx, gy: ns*ns doubles of scratch each. */
void tg_visc_leith_nu(const tg_visc_grid *gr, double C, const double *f, double extra_fy,
                      double *gx, double *gy, double *nu);

/* Largest value of f on the active nodes (0 when all are negative). */
double tg_visc_active_max(const tg_visc_grid *gr, const double *f);

#endif
