/* geometry.h - the one interface that knows about walls or periodicity.
 *
 * Every field is stored as an ns x ns array per layer, row-major with the
 * row index j along y: value at (i, j) is f[j*ns + i]. The prognostic
 * ("active") nodes are a0 <= i, j < a1; the nodes around them are a ring the
 * geometry fills (basin: the walls; periodic: a halo copied from the other
 * side). Stencils in fdops.c read one node beyond the active block, so they
 * run unchanged on either geometry.
 *
 * The stepper, budgets and closures see only: the stored layout, the grid
 * spacing, quadrature weights, a mode-by-mode Helmholtz solve, the ring
 * fills, a spectral filter and a kinetic-energy spectrum. Nothing outside
 * geom_*.c branches on the kind.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_GEOMETRY_H
#define TG_GEOMETRY_H

#include "config.h"
#include "status.h"

typedef struct tg_geometry tg_geometry;

/* ops->solve_modes_rows: writes every mode's right-hand side on one row
 * (rhs[m]), and receives every mode's solution on one row (phi[m]). */
typedef void (*tg_geometry_fill_fn)(void *ctx, int j, double *const *rhs);
typedef void (*tg_geometry_rows_fn)(void *ctx, int j, const double *const *phi);

/* Kinds of the coarse-graining filter (ops->filter_field). */
typedef enum { TG_FILTER_SHARP = 0, TG_FILTER_GAUSSIAN = 1 } tg_filter_kind;

typedef struct {
    void (*destroy)(tg_geometry *g);

    /* Prepares the Helmholtz solves (nabla^2 - F[m]) phi = rhs for every
     * vertical mode; F[0] == 0 is the barotropic mode. Called once. */
    tg_code (*setup_modes)(tg_geometry *g, int nmodes, const double *F, tg_status *st);

    /* Solves (nabla^2 - F[m]) phi = rhs on the active nodes (rhs read on the
     * active nodes only) and fills phi's ring. Basin: phi is constant on the
     * walls: 0 for the barotropic mode; for a baroclinic mode the constant
     * that makes the domain integral of phi vanish (mass conservation;
     * McWilliams 1977, Dyn. Atmos. Oceans 1, 427-441). Returns that wall
     * value (0 for periodic). `rhs` may be overwritten, and rhs == phi (an
     * in-place solve) must work. */
    double (*solve_mode)(tg_geometry *g, int m, double *rhs, double *phi);

    /* Fills the ring of a field that is constant on the walls (basin: sets
     * the walls to `wall_value`; periodic: copies the halo). */
    void (*fill_ring)(const tg_geometry *g, double *f, double wall_value);

    /* Fills the ring of relative vorticity zeta given psi (basin: the wall
     * vorticity of the wall condition; periodic: the halo). */
    void (*fill_vorticity_ring)(const tg_geometry *g, double *zeta, const double *psi);

    /* Fills the ring with zero normal gradient (basin: each wall node takes
     * the value of its interior neighbour; periodic: the halo), for
     * coefficient fields such as an eddy viscosity. */
    void (*fill_ring_extend)(const tg_geometry *g, double *f);

    /* Fills the ring of the Laplacian of vorticity, needed for the
     * biharmonic operator (basin: zero on the walls; periodic: the halo). */
    void (*fill_laplacian_ring)(const tg_geometry *g, double *lap);

    /* Smooths a field on the active nodes with the Gaussian filter of width
     * w (transfer function exp(-K^2 w^2 / 24); Pope 2000, Turbulent Flows,
     * section 13.2) in the geometry's basis. Uses internal work arrays. */
    void (*filter_gaussian)(tg_geometry *g, double *f, double width_m);

    /* Isotropic kinetic-energy spectrum of one layer (spectrum.h has the
     * helper that callers use). psi is read on the active nodes; the field
     * transformed is psi - wall_value (basin: a sine series, zero on the
     * walls; periodic: wall_value is ignored). Writes E[b-1] for the bins
     * b = 1..g->spectrum_nbins of width dk = g->spectrum_dk (rad m-1)
     * centred at b dk; each coefficient goes to the bin of its continuous
     * wavenumber K = |(kx, ky)| (nearest b dk) with the weight -lambda |c|^2,
     * lambda the eigenvalue of the five-point Laplacian, normalized so that
     * sum_b E[b-1] dk equals exactly (to round-off) the kinetic energy per
     * unit mass that model.c defines,
     *   -(1/(2A)) sum_active (psi - wall_value) lap(psi) dx^2   (m2 s-2).
     * work: ns*ns doubles of caller-owned scratch. Fixed summation order. */
    void (*ke_spectrum)(tg_geometry *g, const double *psi, double wall_value, double *work,
                        double *E);

    /* Optional (NULL when absent): the coarse-graining filter of coarsen.h.
     * filter_work_create makes the scratch filter_field needs (the caller
     * owns it and frees it with filter_work_destroy). filter_field filters
     * the whole stored field f in place, ring included (fill the ring
     * first) in the geometry's basis:
     *   TG_FILTER_SHARP     keeps the coefficients with |kx| < scale and
     *                       |ky| < scale (scale in rad m-1; kx, ky the
     *                       continuous wavenumbers of the basis);
     *   TG_FILTER_GAUSSIAN  multiplies every coefficient by
     *                       exp(-K^2 scale^2 / 24), K^2 = kx^2 + ky^2,
     *                       scale = the filter width in m (Pope 2000,
     *                       Turbulent Flows, section 13.2).
     * Linear in f; constant and affine fields pass unchanged where the basis
     * can hold them. Periodic: the Fourier coefficients (the ring is then
     * the halo). Basin: the field minus the transfinite (Coons) patch of its
     * wall values is filtered in the sine basis, the wall values themselves
     * (minus the line between the corners) in the 1-D sine basis along each
     * wall, and the patch of the filtered walls is added back (geom_basin.c).
     * Allocates nothing. */
    void *(*filter_work_create)(const tg_geometry *g, tg_status *st);
    void (*filter_work_destroy)(void *work);
    void (*filter_field)(const tg_geometry *g, void *work, double *f, int kind, double scale);

    /* Optional (NULL when absent): solve_mode for every mode at once, in
     * two parts, for a caller that adds the wall correction in a pass of
     * its own. Mode m's right-hand side is at phi + m * stride on entry and
     * its particular solution phi_p there on return (in place; ring filled
     * with 0 in a basin); c[m] gets what solve_mode returns and homog[m]
     * the homogeneous solution phi_h (ns*ns, ring included, owned by the
     * geometry; NULL when c[m] is always 0, e.g. the barotropic mode), so
     * that solve_mode's result is phi_p[p] + c[m] * phi_h[p], bit for bit.
     * The geometry may solve several modes at the same time, one per
     * thread; the results do not depend on that or on the thread count. */
    void (*solve_modes_parts)(tg_geometry *g, int nmodes, double *phi, long stride, double *c,
                              const double **homog);

    /* Optional (NULL when absent; only where solve_mode never has a wall
     * correction): every mode's solve_mode result, bit for bit, for
     * right-hand sides that are given and solutions that are handed over
     * row by row, neither stored. fill(ctx, j, rhs) writes rhs[m][i - a0],
     * mode m's right-hand side at active node i of active row j (stored
     * index, a0 <= j < a1), and fn(ctx, j, phi) receives phi[m][i - a0],
     * mode m's solution there; each is called once per row, every fill
     * before any fn, inside a parallel region whose threads share the rows
     * in a fixed way, so both write only row j's data. Nothing is written
     * to the ring. */
    void (*solve_modes_rows)(tg_geometry *g, int nmodes, tg_geometry_fill_fn fill,
                             tg_geometry_rows_fn fn, void *ctx);
} tg_geometry_ops;

struct tg_geometry {
    tg_geometry_kind kind;
    int ns;            /* stored points per side (row length) */
    int a0, a1;        /* active node range [a0, a1) in i and in j */
    int o0, o1;        /* node range written to output files, [o0, o1) */
    double dx;         /* grid spacing, m */
    double length;     /* side of the domain, m */
    double area;       /* domain area, m2 */
    double *coord;     /* ns positions (m) of the stored indices, same along x and y */
    double *weight;    /* ns*ns quadrature weights (m2) of the domain integral; 0 off-domain */
    int zero_mean;     /* 1: every mode's solution has zero domain mean (periodic), so the
                          layer means of psi carry no information */
    int holds_planetary_pv; /* 1: beta (y - y0) is a field on this grid and part of q (basin);
                               0: y is periodic, so q is the eddy PV and the planetary
                               gradient enters as a separate tendency term */
    const tg_geometry_ops *ops;
    void *impl;        /* owned by the implementation */
    int spectrum_nbins;   /* bins of ops->ke_spectrum (0: not available) */
    double spectrum_dk;   /* their width, rad m-1: 2 pi/L periodic, pi/L basin */
};

/* Creates the geometry that the config asks for. */
tg_geometry *tg_geometry_create(const tg_config *cfg, tg_status *st);
void tg_geometry_destroy(tg_geometry *g);

/* Basin implementation (geom_basin.c). */
tg_geometry *tg_geom_basin_create(const tg_config *cfg, tg_status *st);

/* Doubly periodic implementation (geom_periodic.c). */
tg_geometry *tg_geom_periodic_create(const tg_config *cfg, tg_status *st);

#endif
