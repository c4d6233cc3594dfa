/* fit_data.h - the rows of a closure fit from a twin's DIR/subgrid.nc:
 * basis terms of each coarse-grained sample and the regression target.
 *
 * Grid: the file's `resolved_config` attribute is the twin's whole config;
 * the coarse config is derived from it as the twin derives it
 * (tg_config_twin_coarse), without a closure, and a coarse model is built
 * on it (geometry, stretching matrix, inversion).
 *
 * Which fields the terms see: the sample's coarse-grained streamfunction
 * psi-bar is set as the coarse model's state (tg_model_set_psi: q = lap psi
 * + S psi [+ beta (y - y0)] on the coarse grid, inverted again, rings
 * filled by the geometry: walls, wall vorticity, halo). These are exactly
 * the psi, q and zeta a closure sees when a coarse run is in that state -
 * the coarse runs of the twin start from psi-bar the same way, and the
 * twin's offline skill evaluates closures on the samples the same way - so
 * a fitted file reproduces online the sum that was fitted. The file's q-bar
 * and zeta-bar (the fine fields filtered) differ from these by the
 * commutation error of filtering and differencing and are not used.
 * Terms are evaluated with tg_basis_eval on the closure tools of that
 * coarse geometry (closure_tools.h).
 *
 * Target on the active nodes (walls of a basin hold fill values in S_q):
 *   forcing  t = -S_q = -subgrid_forcing (a closure's PV tendency
 *            approximates -S_q; subgrid.h);
 *   flux     t = -div F = -(d_x F_x + d_y F_y), F = (subgrid_flux_x,
 *            subgrid_flux_y), the derivatives the tools' centred
 *            differences on the coarse grid (walls: the fluxes the file
 *            holds there; periodic: the halo).
 *
 * Ownership: owns the coarse model, tools, basis, a record reader and one
 * sample's work arrays. Reading a sample allocates nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_FIT_DATA_H
#define TG_FIT_DATA_H

#include "config.h"
#include "model.h"
#include "status.h"

typedef enum { TG_FIT_TARGET_FORCING = 0, TG_FIT_TARGET_FLUX = 1 } tg_fit_target;

typedef struct tg_fit_data tg_fit_data;

/* Opens PATH (a twin's subgrid.nc) for rows of the terms terms[0..p-1]
 * (indices of the basis table). Errors name the file and the variable or
 * attribute. */
tg_fit_data *tg_fit_data_open(const char *path, tg_fit_target target, const int *terms, int p,
                              tg_status *st);
void tg_fit_data_close(tg_fit_data *d);

int tg_fit_data_samples(const tg_fit_data *d);
int tg_fit_data_layers(const tg_fit_data *d);
long tg_fit_data_nodes(const tg_fit_data *d);          /* active nodes per layer */
const tg_model *tg_fit_data_model(const tg_fit_data *d);
/* A text global attribute of the file ("" when absent). */
const char *tg_fit_data_attr(const tg_fit_data *d, const char *name);

/* Rows of sample rec: layer k's rows start at row k * layer_stride
 * (>= nodes) of X (p values per row) and t; node rows in the order j then
 * i over the active nodes. layer_stride = nodes packs the layers. A fill value or non-finite value of the target on an active node
 * is an error naming the file, variable, record, layer and node. */
tg_code tg_fit_data_rows(tg_fit_data *d, int rec, double *X, double *t, long layer_stride,
                         tg_status *st);

#endif
