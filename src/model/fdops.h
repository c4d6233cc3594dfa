/* fdops.h - the finite-difference operators and domain sums, in one place.
 *
 * Every operator writes the active nodes of its output only and reads one
 * node beyond them, so the caller fills rings first (geometry.h). Loops are
 * OpenMP-parallel over rows; each output value is computed the same way
 * whatever the thread count. Sums are formed row by row into a caller-owned
 * buffer of ns doubles and then added in row order, so their value does not
 * depend on the thread count either.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_FDOPS_H
#define TG_FDOPS_H

#include "geometry.h"

/* Point kernels: the one copy of each stencil. c, n, s point at the rows
 * j, j+1, j-1 of a field; i is the column. tg_laplacian and tg_jacobian
 * apply them to whole fields; terms.c applies them inside its fused loop. */

/* Five-point Laplacian times dx^2. */
static inline double tg_lap5_at(const double *c, const double *n, const double *s, int i)
{
    return (c[i + 1] + c[i - 1]) + (n[i] + s[i]) - 4.0 * c[i];
}

/* Arakawa (1966) Jacobian times 12 dx^2 (see tg_jacobian). */
static inline double tg_arakawa_at(const double *pc, const double *pn, const double *ps,
                                   const double *qc, const double *qn, const double *qs, int i)
{
    const double pE = pc[i + 1], pW = pc[i - 1], pN = pn[i], pS = ps[i];
    const double pNE = pn[i + 1], pNW = pn[i - 1], pSE = ps[i + 1], pSW = ps[i - 1];
    const double qE = qc[i + 1], qW = qc[i - 1], qN = qn[i], qS = qs[i];
    const double qNE = qn[i + 1], qNW = qn[i - 1], qSE = qs[i + 1], qSW = qs[i - 1];
    const double jpp = (pE - pW) * (qN - qS) - (pN - pS) * (qE - qW);
    const double jpx = pE * (qNE - qSE) - pW * (qNW - qSW) - pN * (qNE - qNW) + pS * (qSE - qSW);
    const double jxp = qN * (pNE - pNW) - qS * (pSE - pSW) - qE * (pNE - pSE) + qW * (pNW - pSW);
    return jpp + jpx + jxp;
}

/* Centred x-difference times 2 dx. */
static inline double tg_ddx2_at(const double *c, int i)
{
    return c[i + 1] - c[i - 1];
}

/* Lateral viscosity on vorticity at one node: A2 lap zeta - A4 lap2, with
 * rl = 1/dx^2 and lap2 the (precomputed) Laplacian of lap zeta. Used by the
 * core's dissipation (terms.c) and by closures (tg_viscosity_layer). */
static inline double tg_visc_at(const double *zc, const double *zn, const double *zs, int i,
                                double A2rl, double A4, const double *lap2)
{
    return A2rl * tg_lap5_at(zc, zn, zs, i) - A4 * lap2[i];
}

/* out = five-point Laplacian of f on the active nodes. */
void tg_laplacian(const tg_geometry *g, const double *f, double *out);

/* out = J(psi, q) = psi_x q_y - psi_y q_x on the active nodes, by the
 * Arakawa (1966) nine-point average of the three second-order forms
 * (J++ + J+x + Jx+)/3 (Arakawa 1966, J. Comput. Phys. 1, 119-143, eqs. 36-46).
 * Summed over the active nodes it conserves the discrete energy exactly
 * when psi is constant on the ring (walls), sum (psi - c) J(psi, q) = 0, and
 * the enstrophy, sum q J(psi, q) = 0, in periodic domains or when q vanishes
 * on the walls. In a basin, where wall PV is not zero, the enstrophy sum
 * keeps a wall term that vanishes at first order in dx; the budget logs it
 * as enstrophy_advection (tests/unit/test_arakawa.c checks its form). */
void tg_jacobian(const tg_geometry *g, const double *psi, const double *q, double *out);

/* out = df/dx and df/dy by centred differences on the active nodes. */
void tg_ddx(const tg_geometry *g, const double *f, double *out);
void tg_ddy(const tg_geometry *g, const double *f, double *out);

/* out = div(nu grad f) on the active nodes, five-point flux form with nu
 * averaged to the cell faces (common practice; it reduces to nu lap f for
 * constant nu and conserves the domain integral of f up to wall fluxes). */
void tg_div_nu_grad(const tg_geometry *g, const double *nu, const double *f, double *out);

/* out = A2 lap zeta - A4 lap^2 zeta for one layer. zeta's ring must hold the
 * wall vorticity; lap1 and lap2 are work arrays (ns*ns). The core's
 * dissipation uses the same point kernel (tg_visc_at). */
void tg_viscosity_layer(const tg_geometry *g, const double *zeta, double A2, double A4,
                        double *lap1, double *lap2, double *out);

/* out = alpha*out + beta*f on the active nodes. */
void tg_axpby(const tg_geometry *g, double alpha, double *out, double beta, const double *f);

/* sum over active nodes of a*(b - bshift) * dx^2, in fixed order; rowbuf has ns doubles. */
double tg_sum_prod(const tg_geometry *g, const double *a, const double *b, double bshift,
                   double *rowbuf);

/* Domain integral of (f - shift) with the geometry's quadrature weights (all
 * stored nodes), and of |f - shift| when absval != 0; fixed order. */
double tg_integral(const tg_geometry *g, const double *f, double shift, int absval, double *rowbuf);

/* Largest advective CFL number (|u| + |v|) dt / dx on the active nodes with
 * u = U - psi_y, v = psi_x by centred differences and U a uniform background
 * velocity; *where gets the node index j*ns + i of the maximum (first in row
 * order on ties). */
double tg_max_cfl(const tg_geometry *g, const double *psi, double U, double dt, long *where,
                  double *rowbuf, long *rowidx);

/* Index of the first non-finite value on the active nodes, or -1. */
long tg_find_nonfinite(const tg_geometry *g, const double *f);

#endif
