/* skill.c - skill metrics on plain arrays (skill.h). Sums run in index
 * order, so results do not depend on the thread count. */
#include "skill.h"

#include <math.h>

double tg_skill_ratio(double a, double b)
{
    if (!isfinite(a) || !isfinite(b) || b == 0.0)
        return NAN;
    return a / b;
}

void tg_skill_pattern(const double *a, const double *b, const double *w, long n, double *corr,
                      double *nrmse)
{
    double sw = 0.0, ma = 0.0, mb = 0.0;
    for (long p = 0; p < n; p++) {
        const double wp = w ? w[p] : 1.0;
        sw += wp;
        ma += wp * a[p];
        mb += wp * b[p];
    }
    if (!(sw > 0.0)) {
        *corr = *nrmse = NAN;
        return;
    }
    ma /= sw;
    mb /= sw;
    double saa = 0.0, sbb = 0.0, sab = 0.0, see = 0.0;
    for (long p = 0; p < n; p++) {
        const double wp = w ? w[p] : 1.0, da = a[p] - ma, db = b[p] - mb, e = a[p] - b[p];
        saa += wp * da * da;
        sbb += wp * db * db;
        sab += wp * da * db;
        see += wp * e * e;
    }
    *corr = (saa > 0.0 && sbb > 0.0) ? sab / sqrt(saa * sbb) : NAN;
    *nrmse = sbb > 0.0 ? sqrt(see / sbb) : NAN;
}

void tg_skill_eke(const double *su, const double *sv, const double *suu, const double *svv,
                  long n, long nt, double *eke)
{
    for (long p = 0; p < n; p++) {
        if (nt < 1) {
            eke[p] = NAN;
            continue;
        }
        const double mu = su[p] / nt, mv = sv[p] / nt;
        eke[p] = 0.5 * ((suu[p] / nt - mu * mu) + (svv[p] / nt - mv * mv));
    }
}

void tg_skill_band_ratio(const double *Ea, const double *Eb, const double *k, int nbins,
                         const double *edges, int nbands, double *ratio)
{
    for (int b = 0; b < nbands; b++) {
        double sa = 0.0, sb = 0.0;
        int any = 0;
        for (int i = 0; i < nbins; i++)
            if (k[i] > edges[b] * (1.0 + 1e-9) && k[i] <= edges[b + 1] * (1.0 + 1e-9)) {
                sa += Ea[i];
                sb += Eb[i];
                any = 1;
            }
        ratio[b] = any ? tg_skill_ratio(sa, sb) : NAN;
    }
}

double tg_skill_jet_length(const double *u, int nx, int ny, const double *x, double x0)
{
    if (nx < 1 || ny < 1)
        return NAN;
    double umax = -INFINITY;
    int i0 = 0;
    double prev = 0.0;
    for (int i = 0; i < nx; i++) {
        double U = -INFINITY;
        for (int j = 0; j < ny; j++)
            if (u[(long)j * nx + i] > U)
                U = u[(long)j * nx + i];
        if (U > umax) {
            umax = U;
            i0 = i;
        }
    }
    if (!(umax > 0.0))
        return NAN;
    const double half = 0.5 * umax;
    for (int i = i0; i < nx; i++) {
        double U = -INFINITY;
        for (int j = 0; j < ny; j++)
            if (u[(long)j * nx + i] > U)
                U = u[(long)j * nx + i];
        if (i > i0 && U < half) {
            /* prev >= half > U: linear interpolation between x[i-1] and x[i]. */
            const double f = (prev - half) / (prev - U);
            return x[i - 1] + f * (x[i] - x[i - 1]) - x0;
        }
        prev = U;
    }
    return x[nx - 1] - x0;
}

void tg_skill_acc_init(tg_skill_acc *a)
{
    a->n = a->st = a->stt = a->sp = a->spp = a->spt = a->see = 0.0;
}

void tg_skill_acc_add(tg_skill_acc *a, const double *p, const double *t, long n)
{
    for (long i = 0; i < n; i++) {
        const double e = p[i] - t[i];
        a->n += 1.0;
        a->st += t[i];
        a->stt += t[i] * t[i];
        a->sp += p[i];
        a->spp += p[i] * p[i];
        a->spt += p[i] * t[i];
        a->see += e * e;
    }
}

void tg_skill_acc_result(const tg_skill_acc *a, double *r2, double *corr)
{
    if (!(a->n > 0.0)) {
        *r2 = *corr = NAN;
        return;
    }
    const double vt = a->stt - a->st * a->st / a->n;  /* n var(t) */
    const double vp = a->spp - a->sp * a->sp / a->n;  /* n var(p) */
    const double cpt = a->spt - a->sp * a->st / a->n; /* n cov(p, t) */
    *r2 = vt > 0.0 ? 1.0 - a->see / vt : NAN;
    *corr = (vt > 0.0 && vp > 0.0) ? cpt / sqrt(vt * vp) : NAN;
}
