/* skill.h - skill metrics of a coarse run against the coarse-grained
 * reference: pure functions on arrays, so that each one can be checked
 * against a hand computation (tests/unit/test_skill.c).
 *
 * Weighted statistics use weights w_p >= 0 (the quadrature weights of the
 * nodes; NULL means equal weights) and weighted means <f> = sum w f / sum w:
 *   pattern correlation  r = <(a - <a>)(b - <b>)> / sqrt(<(a - <a>)^2> <(b - <b>)^2>)
 *   normalized RMSE      sqrt(<(a - b)^2>) / sqrt(<(b - <b>)^2>)
 * with b the reference (centred statistics; Wilks 2011, Statistical Methods
 * in the Atmospheric Sciences, 3rd ed., section 8.6.4 on the anomaly
 * correlation, section number from memory). A statistic whose denominator
 * is zero is NaN ("not defined"), never a division by zero.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SKILL_H
#define TG_SKILL_H

/* a / b, or NaN when b is 0 or either is not finite. */
double tg_skill_ratio(double a, double b);

/* Pattern correlation and normalized RMSE of a against reference b. */
void tg_skill_pattern(const double *a, const double *b, const double *w, long n, double *corr,
                      double *nrmse);

/* Eddy kinetic energy from time sums over nt samples at n points:
 * eke = (1/2) [<u^2> - <u>^2 + <v^2> - <v>^2], <.> the time mean,
 * su = sum u, suu = sum u^2 (likewise v). */
void tg_skill_eke(const double *su, const double *sv, const double *suu, const double *svv,
                  long n, long nt, double *eke);

/* Ratio of band-integrated spectra: for each band b, the sum of Ea over
 * the bins whose centre k lies in (edges[b], edges[b+1]] divided by the
 * same sum of Eb (NaN when that is 0 or the band holds no bin). A centre
 * within 1e-9 (relative) of an edge counts as equal to it, so bands whose
 * edges are whole multiples of the bin width do not depend on rounding. */
void tg_skill_band_ratio(const double *Ea, const double *Eb, const double *k, int nbins,
                         const double *edges, int nbands, double *ratio);

/* Penetration length of an eastward jet from its time-mean zonal velocity
 * u[j*nx + i] at x[i] (increasing): U(i) = max_j u, the maximum Umax at
 * i0; the first i > i0 with U(i) < Umax/2, and the x where the straight
 * line between i-1 and i crosses Umax/2, measured from x0 (the western
 * wall). Returns x[nx-1] - x0 when U never falls to half (the jet reaches
 * the east), NaN when Umax <= 0 (no eastward flow). Common practice for a
 * double-gyre jet's length (the e-folding or half-maximum point of the
 * zonal velocity along the jet axis). */
double tg_skill_jet_length(const double *u, int nx, int ny, const double *x, double x0);

/* Offline skill of a prediction p of a target t, accumulated over samples:
 * R^2 = 1 - sum (p - t)^2 / sum (t - mean t)^2 (coefficient of
 * determination) and the correlation of p with t (Wilks 2011, section
 * 7.2 on regression skill, from memory). */
typedef struct {
    double n, st, stt, sp, spp, spt, see;
} tg_skill_acc;

void tg_skill_acc_init(tg_skill_acc *a);
void tg_skill_acc_add(tg_skill_acc *a, const double *p, const double *t, long n);
void tg_skill_acc_result(const tg_skill_acc *a, double *r2, double *corr);

#endif
