/* modes.h - vertical modes of the layered stretching operator.
 *
 * Layer PV is q_k = lap psi_k + (S psi)_k + beta (y - y0) with the
 * stretching matrix (Pedlosky 1987, Geophysical Fluid Dynamics, section 6.16;
 * Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, section 5.3):
 *   (S psi)_k = f0^2/(g'_{k-1} H_k) (psi_{k-1} - psi_k) - f0^2/(g'_k H_k) (psi_k - psi_{k+1}),
 * where g'_i is the reduced gravity of the interface below layer i (terms
 * with a missing neighbour are absent). S is symmetric in the H-weighted
 * inner product, so D S D^-1 with D = diag(sqrt(H_k)) is symmetric and
 * LAPACKE_dsyev diagonalizes it: S = P diag(-F_m) P^-1, F_0 = 0 (barotropic),
 * 0 < F_1 < F_2 < ... ; 1/sqrt(F_m) is the m-th deformation radius.
 * Columns of P are scaled so that sum_k (H_k/H) P_km^2 = 1 and P_0m > 0.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_MODES_H
#define TG_MODES_H

#include "config.h"
#include "status.h"

typedef struct {
    int n;                                    /* layers = modes */
    double S[TG_MAX_LAYERS][TG_MAX_LAYERS];   /* stretching matrix, m-2 */
    double P[TG_MAX_LAYERS][TG_MAX_LAYERS];   /* psi_k = sum_m P[k][m] phi_m */
    double Pinv[TG_MAX_LAYERS][TG_MAX_LAYERS];/* phi_m = sum_k Pinv[m][k] psi_k */
    double F[TG_MAX_LAYERS];                  /* -eigenvalues, m-2, ascending, F[0] = 0 */
} tg_modes;

tg_code tg_modes_compute(tg_modes *md, int n, const double *H, const double *gprime, double f0,
                         tg_status *st);

/* Deformation radius of mode m >= 1, m. */
double tg_modes_radius(const tg_modes *md, int m);

#endif
