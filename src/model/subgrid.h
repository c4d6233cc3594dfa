/* subgrid.h - the sub-grid PV forcing and PV fluxes of a fine state, on the
 * coarse grid: the training target of closures.
 *
 * With an overbar for coarse-graining (coarsen.h: filter, then restrict),
 * for each layer
 *   S_q = bar(J(psi, q)) - J(bar psi, bar q)           (s-2)
 *   F_x = bar(u q) - bar u bar q,  F_y = bar(v q) - bar v bar q   (m s-2)
 * where the first Jacobian is the Arakawa Jacobian on the fine grid and the
 * second the same Jacobian on the coarse grid (fdops.h), u = -psi_y and
 * v = psi_x by centred differences on the fine grid. Filtering the PV
 * equation dq/dt + J(psi, q) = F gives
 *   d bar q/dt + J(bar psi, bar q) = bar F - S_q,
 * so a closure's PV tendency approximates -S_q (the filtered equations and
 * their residual terms: Pope 2000, Turbulent Flows, section 13.3, section
 * number from memory; S_q as the target of QG closures: Ross et al. 2023,
 * J. Adv. Model. Earth Syst. 15, e2022MS003258).
 * Which q: the model's (in a basin it includes beta (y - y0); in the
 * periodic domain it is the eddy PV, and the background terms, being
 * linear, are left out of S_q).
 *
 * Wall values (basin): J on the fine walls is set to the value of the
 * adjacent interior node, as are u and v (the closures' velocities do the
 * same, closure_host.c); S_q is defined on the coarse active nodes only
 * (its ring holds 0). Fluxes and filtered fields are defined on every
 * coarse node.
 *
 * Ownership: tg_subgrid owns every array below and borrows the coarsener
 * and both geometries. Computing allocates nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SUBGRID_H
#define TG_SUBGRID_H

#include "coarsen.h"
#include "geometry.h"
#include "status.h"

/* Coarse-grid results, nl * ns_c * ns_c each (coarse stored layout, layer k
 * at k * ns_c * ns_c), rings filled (forcing: ring 0). */
typedef struct {
    double *psi, *q, *u, *v, *zeta;   /* coarse-grained fields */
    double *forcing;                  /* S_q */
    double *flux_x, *flux_y;          /* sub-grid PV fluxes */
} tg_subgrid_fields;

typedef struct tg_subgrid tg_subgrid;

tg_subgrid *tg_subgrid_create(tg_coarsen *c, const tg_geometry *fine, const tg_geometry *coarse,
                              int nlayers, tg_status *st);
void tg_subgrid_destroy(tg_subgrid *s);

/* From fine psi, q and zeta (nl * ns_f * ns_f, rings filled as
 * tg_model_derive leaves them) computes every coarse field. */
void tg_subgrid_compute(tg_subgrid *s, const double *psi, const double *q, const double *zeta);

const tg_subgrid_fields *tg_subgrid_result(const tg_subgrid *s);

#endif
