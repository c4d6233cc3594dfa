/* closure_tools.h - the closure tools (closure.h) built on one geometry.
 *
 * The closure host gives these to every scheme; the fitting and vetting
 * commands and the tests build the same object on any grid they hold, so
 * the basis terms and closure tendencies they evaluate use the very
 * operators a running closure sees: the fdops.h stencils, the geometry's
 * ring fills and its Gaussian filter.
 *
 * Ownership: a tg_tools borrows the geometry (which must outlive it) and
 * owns two one-layer work arrays for the viscosity operator. Not safe for
 * two threads at once (the work arrays are shared).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CLOSURE_TOOLS_H
#define TG_CLOSURE_TOOLS_H

#include "closure.h"
#include "geometry.h"
#include "status.h"

typedef struct tg_tools tg_tools;

tg_tools *tg_tools_create(tg_geometry *g, tg_status *st);
void tg_tools_destroy(tg_tools *t);

/* The table of operators; valid for the life of t. */
const tg_closure_tools *tg_tools_get(const tg_tools *t);

#endif
