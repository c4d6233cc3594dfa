/* test_skill.c - each skill metric (skill.h) against a hand computation on
 * small synthetic arrays. The expected values are worked out in the
 * comments from the definitions in skill.h (centred pattern correlation and
 * normalized RMSE: Wilks 2011, Statistical Methods in the Atmospheric
 * Sciences, 3rd ed., section 8.6.4, section number from memory; coefficient
 * of determination: Wilks 2011, section 7.2, from memory; eddy kinetic
 * energy as half the velocity variance and the jet's half-maximum length:
 * common practice).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "skill.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdlib.h>

START_TEST(ratio)
{
    ck_assert_double_eq_tol(tg_skill_ratio(3.0, 4.0), 0.75, 1e-15);
    ck_assert(isnan(tg_skill_ratio(1.0, 0.0)));
    ck_assert(isnan(tg_skill_ratio(NAN, 1.0)));
}
END_TEST

START_TEST(pattern)
{
    /* a = (1, 2, 3, 4), b = 2a: perfectly correlated; a - b = (-1, -2, -3, -4),
     * mean square 30/4 = 7.5; b's variance (2^2 + 1 + 1 + 2^2 with b - 5 =
     * (-3, -1, 1, 3)) = 20/4 = 5; nRMSE = sqrt(7.5 / 5) = sqrt(1.5). */
    const double a[] = {1, 2, 3, 4}, b[] = {2, 4, 6, 8};
    double r, e;
    tg_skill_pattern(a, b, NULL, 4, &r, &e);
    ck_assert_double_eq_tol(r, 1.0, 1e-14);
    ck_assert_double_eq_tol(e, sqrt(1.5), 1e-14);
    /* Reversed order: correlation -1. */
    const double c[] = {8, 6, 4, 2};
    tg_skill_pattern(a, c, NULL, 4, &r, &e);
    ck_assert_double_eq_tol(r, -1.0, 1e-14);
    /* Weights (1, 1, 2, 0) on a = (1, 0, 2, 9), b = (0, 1, 1, 5):
     * sum w = 4; <a> = (1 + 0 + 4)/4 = 1.25; <b> = (0 + 1 + 2)/4 = 0.75;
     * a - <a> = (-0.25, -1.25, 0.75), b - <b> = (-0.75, 0.25, 0.25) on the
     * weighted nodes; sum w da db = 0.1875 - 0.3125 + 2*0.1875 = 0.25;
     * sum w da^2 = 0.0625 + 1.5625 + 2*0.5625 = 2.75;
     * sum w db^2 = 0.5625 + 0.0625 + 2*0.0625 = 0.75;
     * r = 0.25 / sqrt(2.75 * 0.75); sum w (a - b)^2 = 1 + 1 + 2*1 = 4,
     * nRMSE = sqrt(4 / 0.75). */
    const double a2[] = {1, 0, 2, 9}, b2[] = {0, 1, 1, 5}, w2[] = {1, 1, 2, 0};
    tg_skill_pattern(a2, b2, w2, 4, &r, &e);
    ck_assert_double_eq_tol(r, 0.25 / sqrt(2.75 * 0.75), 1e-14);
    ck_assert_double_eq_tol(e, sqrt(4.0 / 0.75), 1e-14);
    /* A constant reference: not defined. */
    const double k[] = {3, 3, 3, 3};
    tg_skill_pattern(a, k, NULL, 4, &r, &e);
    ck_assert(isnan(r) && isnan(e));
}
END_TEST

START_TEST(eddy_kinetic_energy)
{
    /* Two samples at two points: point 0 has u = 1, 3 (mean 2, variance 1)
     * and v = 0, 2 (variance 1): EKE = (1 + 1)/2 = 1. Point 1 has a steady
     * u = 5, v = -1: EKE = 0. */
    const double su[] = {4, 10}, sv[] = {2, -2}, suu[] = {10, 50}, svv[] = {4, 2};
    double eke[2];
    tg_skill_eke(su, sv, suu, svv, 2, 2, eke);
    ck_assert_double_eq_tol(eke[0], 1.0, 1e-14);
    ck_assert_double_eq_tol(eke[1], 0.0, 1e-14);
}
END_TEST

START_TEST(band_ratio)
{
    /* Bins centred at k = 1..6, bands (0, 2], (2, 4], (4, inf):
     * band 1 = bins 1, 2; band 2 = bins 3, 4; band 3 = bins 5, 6.
     * Ea = (1, 1, 2, 2, 0, 3), Eb = (1, 3, 1, 1, 1, 1):
     * ratios 2/4 = 0.5, 4/2 = 2, 3/2 = 1.5. An empty band (7, 9] is NaN. */
    const double k[] = {1, 2, 3, 4, 5, 6};
    const double Ea[] = {1, 1, 2, 2, 0, 3}, Eb[] = {1, 3, 1, 1, 1, 1};
    const double edges[] = {0, 2, 4, INFINITY};
    double r[3];
    tg_skill_band_ratio(Ea, Eb, k, 6, edges, 3, r);
    ck_assert_double_eq_tol(r[0], 0.5, 1e-15);
    ck_assert_double_eq_tol(r[1], 2.0, 1e-15);
    ck_assert_double_eq_tol(r[2], 1.5, 1e-15);
    const double e2[] = {7, 9};
    tg_skill_band_ratio(Ea, Eb, k, 6, e2, 1, r);
    ck_assert(isnan(r[0]));
}
END_TEST

START_TEST(jet_length)
{
    /* Two rows, six columns at x = 100, 110, ..., 150 (x0 = 100).
     * Column maxima U = (1, 4, 3, 2.5, 1, 0.5): Umax = 4 at column 1, half 2;
     * the first column east of it with U < 2 is column 4 (U = 1), after
     * column 3 (U = 2.5): crossing at 2.5 - 1.5 f = 2, f = 1/3, x = 130 + 10/3,
     * length 33.33... */
    const double x[] = {100, 110, 120, 130, 140, 150};
    const double u[] = {1, 4, -3, 2.5, 1, 0.5,    /* row 0 */
                        0, -1, 3, 0, -2, 0.2};    /* row 1 */
    ck_assert_double_eq_tol(tg_skill_jet_length(u, 6, 2, x, 100.0), 30.0 + 10.0 / 3.0, 1e-12);
    /* A jet that never falls to half reaches the east end: 50. */
    const double u2[] = {1, 4, 3, 3, 2.5, 2.1, 0, 0, 0, 0, 0, 0};
    ck_assert_double_eq_tol(tg_skill_jet_length(u2, 6, 2, x, 100.0), 50.0, 1e-12);
    /* No eastward flow: not defined. */
    const double u3[] = {-1, -2, -3, -1, -1, -1, 0, 0, 0, 0, 0, 0};
    ck_assert(isnan(tg_skill_jet_length(u3, 6, 2, x, 100.0)));
}
END_TEST

START_TEST(offline_r2)
{
    /* p = (1, 2, 3), t = (1, 2, 4), added in two parts.
     * SSE = 1; mean t = 7/3, SST = 16/9 + 1/9 + 25/9 = 42/9; R^2 = 1 - 9/42.
     * dp = (-1, 0, 1), dt = (-4/3, -1/3, 5/3): cov sum 3, var sums 2 and 42/9;
     * r = 3 / sqrt(2 * 42/9). */
    const double p[] = {1, 2, 3}, t[] = {1, 2, 4};
    tg_skill_acc a;
    tg_skill_acc_init(&a);
    tg_skill_acc_add(&a, p, t, 1);
    tg_skill_acc_add(&a, p + 1, t + 1, 2);
    double r2, r;
    tg_skill_acc_result(&a, &r2, &r);
    ck_assert_double_eq_tol(r2, 1.0 - 9.0 / 42.0, 1e-14);
    ck_assert_double_eq_tol(r, 3.0 / sqrt(2.0 * 42.0 / 9.0), 1e-14);
    /* A zero prediction: R^2 = 1 - sum t^2 / SST, correlation not defined. */
    const double z[] = {0, 0, 0};
    tg_skill_acc_init(&a);
    tg_skill_acc_add(&a, z, t, 3);
    tg_skill_acc_result(&a, &r2, &r);
    ck_assert_double_eq_tol(r2, 1.0 - 21.0 / (42.0 / 9.0), 1e-13);
    ck_assert(isnan(r));
}
END_TEST

static Suite *skill_suite(void)
{
    Suite *s = suite_create("skill");
    TCase *tc = tcase_create("metrics");
    tcase_add_test(tc, ratio);
    tcase_add_test(tc, pattern);
    tcase_add_test(tc, eddy_kinetic_energy);
    tcase_add_test(tc, band_ratio);
    tcase_add_test(tc, jet_length);
    tcase_add_test(tc, offline_r2);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(skill_suite());
}
