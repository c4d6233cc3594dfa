/* coarsen.h - coarse-graining of fine-grid fields onto a coarser grid of the
 * same domain: filter on the fine grid, then restrict to the coarse nodes.
 *
 * The coarse grid spacing is an integer multiple r of the fine one, and every
 * coarse node coincides with a fine node: coarse output node (I, J) is fine
 * output node (r I, r J) (both geometries put output node i at x = i dx).
 *
 * Filters (the geometry's ops->filter_field, in its own basis: sines in the
 * basin, Fourier modes in the periodic domain):
 *   sharp     keeps exactly the modes the coarse grid resolves,
 *             |kx|, |ky| < pi / Dc with Dc the coarse spacing, i.e. a sharp
 *             spectral cutoff of width Delta = Dc (Pope 2000, Turbulent
 *             Flows, section 13.2, kappa_c = pi / Delta); a field that is
 *             already resolved on the coarse grid comes back unchanged;
 *   gaussian  transfer function exp(-K^2 Delta^2 / 24) with the filter width
 *             Delta = width_factor x Dc (Pope 2000, section 13.2).
 * The basin filter handles wall values through a wall patch (geom_basin.c).
 *
 * Ownership: tg_coarsen owns the filter's scratch and one fine work array;
 * it borrows both geometries, which must outlive it. Filtering and
 * restriction allocate nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_COARSEN_H
#define TG_COARSEN_H

#include "geometry.h"
#include "status.h"

typedef struct tg_coarsen tg_coarsen;

/* Checks that coarse is fine coarsened by an integer r >= 1 (same kind, same
 * domain, coincident nodes) and sets up the filter. width_factor is used by
 * the Gaussian only (> 0). */
tg_coarsen *tg_coarsen_create(const tg_geometry *fine, const tg_geometry *coarse,
                              tg_filter_kind kind, double width_factor, tg_status *st);
void tg_coarsen_destroy(tg_coarsen *c);

int tg_coarsen_ratio(const tg_coarsen *c);        /* r */
tg_filter_kind tg_coarsen_kind(const tg_coarsen *c);
/* The filter width Delta in m (sharp: the coarse spacing; Gaussian:
 * width_factor x coarse spacing) and the sharp cutoff pi / Dc in rad m-1. */
double tg_coarsen_width(const tg_coarsen *c);
double tg_coarsen_cutoff(const tg_coarsen *c);

/* Filters one fine field (ns*ns, ring filled) in place. */
void tg_coarsen_filter(tg_coarsen *c, double *fine);

/* Copies the values of the fine nodes that coincide with coarse output
 * nodes into coarse (ns_c*ns_c); when the coarse ring is not an output node
 * (periodic halo) the coarse geometry fills it. */
void tg_coarsen_restrict(const tg_coarsen *c, const double *fine, double *coarse);

/* coarse = restriction of the filtered fine field; fine is not changed. */
void tg_coarsen_field(tg_coarsen *c, const double *fine, double *coarse);

#endif
