/* spectrum.h - isotropic kinetic-energy spectrum of one layer.
 *
 * The geometry's ke_spectrum op (geometry.h) expands the streamfunction of
 * one layer in its basis (periodic: Fourier, fourier.h; basin: sines of
 * psi minus its wall value, sinetf.h) and sums -lambda |c|^2, lambda the
 * eigenvalue of the five-point Laplacian of the coefficient c, into bins of
 * the continuous wavenumber K = |(kx, ky)|:
 *   periodic  K = (2 pi / L) sqrt(kx^2 + ky^2),  dk = 2 pi / L,
 *   basin     K = (pi / L) sqrt(kx^2 + ky^2),    dk = pi / L,
 * bin b = 1..nbins centred at b dk holding (b - 1/2) dk <= K < (b + 1/2) dk.
 * With the discrete eigenvalue as the |K|^2 weight, Parseval's relation
 * makes sum_b E_b dk equal to the discrete kinetic energy per unit mass of
 * model.c, -(1/(2A)) sum_active (psi - c) lap(psi) dx^2, to round-off
 * (Parseval's theorem for the discrete Fourier transform, common practice;
 * Press et al. 2007, Numerical Recipes 3rd ed., section 12.1, section
 * number from memory; the sine case is the same relation for the type-I
 * sine transform, whose basis is orthogonal with sum_i sin^2 = N/2).
 *
 * Ownership: tg_spectrum owns its arrays (k, e, work); it does not own the
 * geometry. The computation allocates nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SPECTRUM_H
#define TG_SPECTRUM_H

#include "geometry.h"
#include "status.h"

typedef struct {
    int nbins;      /* bins b = 1..nbins */
    double dk;      /* bin width, rad m-1 */
    double *k;      /* nbins bin centres k[b-1] = b dk, rad m-1 */
    double *e;      /* nbins spectral densities E_b, m3 s-2 (kinetic energy per unit
                     * mass per unit wavenumber) */
    long nwork;     /* doubles in work */
    double *work;   /* ns*ns scratch handed to the geometry */
} tg_spectrum;

/* Makes the bins of geometry g. Fails (TG_ERR_INTERNAL) when the geometry
 * has no spectrum op. */
tg_spectrum *tg_spectrum_create(const tg_geometry *g, tg_status *st);
void tg_spectrum_destroy(tg_spectrum *s);

/* s->e = spectrum of one layer's streamfunction psi (stored layout; read on
 * the active nodes) whose ring value is wall_value (the model's wall[k];
 * ignored by the periodic geometry). s must have been made for g. */
tg_code tg_spectrum_compute(tg_spectrum *s, tg_geometry *g, const double *psi, double wall_value,
                            tg_status *st);

/* sum_b E_b dk in bin order: the layer's kinetic energy per unit mass, m2 s-2. */
double tg_spectrum_total(const tg_spectrum *s);

/* The bin b of integer wavenumbers with kx^2 + ky^2 = m2: the integer
 * nearest to sqrt(m2), computed exactly (no tie is possible: m2 is an
 * integer and (b + 1/2)^2 is not). */
int tg_spectrum_bin(long m2);

#endif
