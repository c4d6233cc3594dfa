/* modes.c - vertical modes by LAPACK's symmetric eigen-solver (modes.h). */
#include "modes.h"

#include <lapacke.h>
#include <math.h>
#include <string.h>

tg_code tg_modes_compute(tg_modes *md, int n, const double *H, const double *gprime, double f0,
                         tg_status *st)
{
    if (n < 1 || n > TG_MAX_LAYERS)
        return tg_fail(st, TG_ERR_INTERNAL, "modes: %d layers (1 to %d allowed)", n, TG_MAX_LAYERS);
    memset(md, 0, sizeof *md);
    md->n = n;
    double Htot = 0.0;
    for (int k = 0; k < n; k++)
        Htot += H[k];

    /* Stretching matrix, Pedlosky 1987 section 6.16. */
    for (int k = 0; k < n; k++) {
        if (k > 0) {
            double c = f0 * f0 / (gprime[k - 1] * H[k]);
            md->S[k][k - 1] += c;
            md->S[k][k] -= c;
        }
        if (k < n - 1) {
            double c = f0 * f0 / (gprime[k] * H[k]);
            md->S[k][k + 1] += c;
            md->S[k][k] -= c;
        }
    }

    /* A = D S D^-1, D = diag(sqrt(H)), symmetric; A = V diag(lambda) V^T. */
    double A[TG_MAX_LAYERS * TG_MAX_LAYERS], w[TG_MAX_LAYERS];
    for (int k = 0; k < n; k++)
        for (int j = 0; j < n; j++)
            A[k * n + j] = sqrt(H[k]) * md->S[k][j] / sqrt(H[j]);
    /* Symmetrize exactly against round-off in the products. */
    for (int k = 0; k < n; k++)
        for (int j = 0; j < k; j++) {
            double a = 0.5 * (A[k * n + j] + A[j * n + k]);
            A[k * n + j] = A[j * n + k] = a;
        }
    lapack_int info = LAPACKE_dsyev(LAPACK_ROW_MAJOR, 'V', 'U', n, A, n, w);
    if (info != 0)
        return tg_fail(st, TG_ERR_NUMERIC, "vertical modes: LAPACKE_dsyev failed (info = %d)",
                       (int)info);

    /* dsyev returns ascending eigenvalues (most negative first); we want
     * F = -lambda ascending, so take them in reverse order. */
    double scale = 0.0;
    for (int m = 0; m < n; m++)
        scale = fmax(scale, fabs(w[m]));
    for (int m = 0; m < n; m++) {
        int src = n - 1 - m;
        double F = -w[src];
        if (m == 0 && fabs(F) <= 1e-12 * (scale > 0 ? scale : 1.0))
            F = 0.0; /* the barotropic eigenvalue is zero up to round-off */
        md->F[m] = F;
        /* P = D^-1 V scaled so that sum_k (H_k/H) P_km^2 = 1, and P_0m > 0. */
        double sgn = A[0 * n + src] >= 0 ? 1.0 : -1.0;
        for (int k = 0; k < n; k++)
            md->P[k][m] = sgn * A[k * n + src] / sqrt(H[k]) * sqrt(Htot);
        for (int k = 0; k < n; k++)
            md->Pinv[m][k] = sgn * A[k * n + src] * sqrt(H[k]) / sqrt(Htot);
    }
    if (n > 1 && !(md->F[1] > 0.0))
        return tg_fail(st, TG_ERR_NUMERIC,
                       "vertical modes: the first baroclinic eigenvalue is not positive (%g m-2)",
                       md->F[1]);
    return TG_OK;
}

double tg_modes_radius(const tg_modes *md, int m)
{
    if (m <= 0 || m >= md->n || md->F[m] <= 0.0)
        return INFINITY;
    return 1.0 / sqrt(md->F[m]);
}
