/* fdops.c - finite-difference operators and fixed-order domain sums (fdops.h). */
#include "fdops.h"
#include "simdclone.h"

#include <math.h>

/* The row kernels below are compiled for AVX2 too (simdclone.h): each
 * value is computed element by element, so both copies give the same bits.
 * `out` must not overlap the input rows (the stencils cannot work in place). */

TG_SIMD_CLONES static void laplacian_row(const double *restrict c, int ns, double r,
                                         double *restrict o, int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++)
        o[i] = r * tg_lap5_at(c, c + ns, c - ns, i);
}

void tg_laplacian(const tg_geometry *g, const double *f, double *out)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double r = 1.0 / (g->dx * g->dx);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++)
        laplacian_row(f + (long)j * ns, ns, r, out + (long)j * ns, a0, a1);
}

/* Arakawa (1966) eqs. 36-46 on a uniform grid of spacing d:
 *   J++ = [(p_E - p_W)(q_N - q_S) - (p_N - p_S)(q_E - q_W)] / (4 d^2)
 *   J+x = [p_E (q_NE - q_SE) - p_W (q_NW - q_SW) - p_N (q_NE - q_NW) + p_S (q_SE - q_SW)] / (4 d^2)
 *   Jx+ = [q_N (p_NE - p_NW) - q_S (p_SE - p_SW) - q_E (p_NE - p_SE) + q_W (p_NW - p_SW)] / (4 d^2)
 *   J   = (J++ + J+x + Jx+) / 3                  (tg_arakawa_at returns 12 d^2 J) */
TG_SIMD_CLONES static void jacobian_row(const double *restrict pc, const double *restrict qc,
                                        int ns, double r, double *restrict o, int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++)
        o[i] = r * tg_arakawa_at(pc, pc + ns, pc - ns, qc, qc + ns, qc - ns, i);
}

void tg_jacobian(const tg_geometry *g, const double *psi, const double *q, double *out)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double r = 1.0 / (12.0 * g->dx * g->dx);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++)
        jacobian_row(psi + (long)j * ns, q + (long)j * ns, ns, r, out + (long)j * ns, a0, a1);
}

/* o = r (n - s) on [a0, a1): ddy with n and s the rows above and below,
 * ddx with n = c + 1 and s = c - 1. */
TG_SIMD_CLONES static void diff_row(const double *restrict n, const double *restrict s, double r,
                                    double *restrict o, int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++)
        o[i] = r * (n[i] - s[i]);
}

void tg_ddx(const tg_geometry *g, const double *f, double *out)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double r = 1.0 / (2.0 * g->dx);
    /* r * tg_ddx2_at(c, i) = r * (c[i + 1] - c[i - 1]) */
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const double *c = f + (long)j * ns;
        diff_row(c + 1, c - 1, r, out + (long)j * ns, a0, a1);
    }
}

void tg_ddy(const tg_geometry *g, const double *f, double *out)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double r = 1.0 / (2.0 * g->dx);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++)
        diff_row(f + (long)(j + 1) * ns, f + (long)(j - 1) * ns, r, out + (long)j * ns, a0, a1);
}

TG_SIMD_CLONES static void div_nu_grad_row(const double *restrict fc, const double *restrict vc,
                                           int ns, double r, double *restrict o, int a0, int a1)
{
    const double *fn = fc + ns, *fs = fc - ns, *vn = vc + ns, *vs = vc - ns;
#pragma omp simd
    for (int i = a0; i < a1; i++) {
        const double e = 0.5 * (vc[i] + vc[i + 1]) * (fc[i + 1] - fc[i]);
        const double w = 0.5 * (vc[i] + vc[i - 1]) * (fc[i] - fc[i - 1]);
        const double nn = 0.5 * (vc[i] + vn[i]) * (fn[i] - fc[i]);
        const double ss = 0.5 * (vc[i] + vs[i]) * (fc[i] - fs[i]);
        o[i] = r * ((e - w) + (nn - ss));
    }
}

void tg_div_nu_grad(const tg_geometry *g, const double *nu, const double *f, double *out)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double r = 1.0 / (g->dx * g->dx);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++)
        div_nu_grad_row(f + (long)j * ns, nu + (long)j * ns, ns, r, out + (long)j * ns, a0, a1);
}

TG_SIMD_CLONES static void viscosity_row(const double *restrict zc, int ns, double A2rl,
                                         double A4, const double *restrict l2,
                                         double *restrict o, int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++)
        o[i] = tg_visc_at(zc, zc + ns, zc - ns, i, A2rl, A4, l2);
}

void tg_viscosity_layer(const tg_geometry *g, const double *zeta, double A2, double A4,
                        double *lap1, double *lap2, double *out)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double rl = 1.0 / (g->dx * g->dx);
    const double *l2 = zeta; /* any array when A4 == 0 (multiplied by zero) */
    if (A4 != 0.0) {
        tg_laplacian(g, zeta, lap1);
        g->ops->fill_laplacian_ring(g, lap1);
        tg_laplacian(g, lap1, lap2);
        l2 = lap2;
    }
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long r0 = (long)j * ns;
        viscosity_row(zeta + r0, ns, A2 * rl, A4, l2 + r0, out + r0, a0, a1);
    }
}

/* x may be o (tg_axpby(g, -1, u, 0, u)): each element is read before it is
 * written, in the same iteration, so there is no restrict here. */
TG_SIMD_CLONES static void axpby_row(double alpha, double *o, double beta, const double *x,
                                     int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++)
        o[i] = alpha * o[i] + beta * x[i];
}

void tg_axpby(const tg_geometry *g, double alpha, double *out, double beta, const double *f)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++)
        axpby_row(alpha, out + (long)j * ns, beta, f + (long)j * ns, a0, a1);
}

static double sum_rows(const double *rowbuf, int a0, int a1)
{
    double s = 0.0;
    for (int j = a0; j < a1; j++)
        s += rowbuf[j];
    return s;
}

/* The sums of x[i] (y[i] - shift), i in [a0, a1), of four rows (rows ns
 * apart) into out[0..3]: each row's chain of additions in index order, the
 * four chains advancing together so that they overlap (one chain waits on
 * each addition's latency). */
static void sum_prod_rows4(const double *x, const double *y, long ns, double shift, int a0,
                           int a1, double *out)
{
    double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0;
    const double *x1 = x + ns, *x2 = x1 + ns, *x3 = x2 + ns;
    const double *y1 = y + ns, *y2 = y1 + ns, *y3 = y2 + ns;
    for (int i = a0; i < a1; i++) {
        s0 += x[i] * (y[i] - shift);
        s1 += x1[i] * (y1[i] - shift);
        s2 += x2[i] * (y2[i] - shift);
        s3 += x3[i] * (y3[i] - shift);
    }
    out[0] = s0;
    out[1] = s1;
    out[2] = s2;
    out[3] = s3;
}

double tg_sum_prod(const tg_geometry *g, const double *a, const double *b, double bshift,
                   double *rowbuf)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const int nb = (a1 - a0 + 3) / 4;
    /* Rows in groups of four; each row's sum is the plain loop's. */
#pragma omp parallel for schedule(static)
    for (int jb = 0; jb < nb; jb++) {
        const int j0 = a0 + 4 * jb;
        if (j0 + 4 <= a1) {
            sum_prod_rows4(a + (long)j0 * ns, b + (long)j0 * ns, ns, bshift, a0, a1,
                           rowbuf + j0);
            continue;
        }
        for (int j = j0; j < a1; j++) {
            const double *x = a + (long)j * ns, *y = b + (long)j * ns;
            double s = 0.0;
            for (int i = a0; i < a1; i++)
                s += x[i] * (y[i] - bshift);
            rowbuf[j] = s;
        }
    }
    return sum_rows(rowbuf, a0, a1) * g->dx * g->dx;
}

double tg_integral(const tg_geometry *g, const double *f, double shift, int absval, double *rowbuf)
{
    const int ns = g->ns;
#pragma omp parallel for schedule(static)
    for (int j = 0; j < ns; j++) {
        const double *x = f + (long)j * ns, *w = g->weight + (long)j * ns;
        double s = 0.0;
        for (int i = 0; i < ns; i++) {
            if (w[i] == 0.0)
                continue;
            double v = x[i] - shift;
            s += w[i] * (absval ? fabs(v) : v);
        }
        rowbuf[j] = s;
    }
    return sum_rows(rowbuf, 0, ns);
}

double tg_max_cfl(const tg_geometry *g, const double *psi, double U, double dt, long *where,
                  double *rowbuf, long *rowidx)
{
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double c = dt / (2.0 * g->dx * g->dx);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const double *pc = psi + (long)j * ns, *pn = pc + ns, *ps = pc - ns;
        double m = -1.0;
        long at = (long)j * ns + a0;
        for (int i = a0; i < a1; i++) {
            double v = c * (fabs(pn[i] - ps[i] - 2.0 * g->dx * U) + fabs(pc[i + 1] - pc[i - 1]));
            if (v > m || isnan(v)) {
                m = isnan(v) ? INFINITY : v;
                at = (long)j * ns + i;
                if (isinf(m))
                    break;
            }
        }
        rowbuf[j] = m;
        rowidx[j] = at;
    }
    double best = -1.0;
    long at = -1;
    for (int j = a0; j < a1; j++)
        if (rowbuf[j] > best) {
            best = rowbuf[j];
            at = rowidx[j];
        }
    if (where)
        *where = at;
    return best;
}

long tg_find_nonfinite(const tg_geometry *g, const double *f)
{
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            if (!isfinite(f[(long)j * g->ns + i]))
                return (long)j * g->ns + i;
    return -1;
}
