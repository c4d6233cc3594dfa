/* test_modes.c - unit tests of the vertical modes (src/numerics/modes.c).
 *
 * Checks the stretching matrix S against its definition, the two-layer
 * deformation wavenumber in closed form, P Pinv = I and S = P diag(-F) Pinv,
 * three-layer eigenvalues against the characteristic polynomial, the
 * H-weighted orthogonality of the modes, the one-layer case and the
 * rejection of non-positive reduced gravity and of bad layer counts.
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "modes.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdlib.h>

#define NMAX TG_MAX_LAYERS

/* The stretching matrix written out from its definition, independently of
 * modes.c: (S psi)_k = f0^2/(g'_{k-1} H_k)(psi_{k-1} - psi_k)
 *                     - f0^2/(g'_k H_k)(psi_k - psi_{k+1}).
 * Source: Pedlosky 1987, Geophysical Fluid Dynamics, section 6.16;
 * Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, section 5.3. */
static void stretching(int n, const double *H, const double *gp, double f0, double S[NMAX][NMAX])
{
    for (int k = 0; k < NMAX; k++)
        for (int j = 0; j < NMAX; j++)
            S[k][j] = 0.0;
    for (int k = 0; k < n; k++) {
        if (k > 0) {
            S[k][k - 1] = f0 * f0 / (gp[k - 1] * H[k]);
            S[k][k] -= f0 * f0 / (gp[k - 1] * H[k]);
        }
        if (k < n - 1) {
            S[k][k + 1] = f0 * f0 / (gp[k] * H[k]);
            S[k][k] -= f0 * f0 / (gp[k] * H[k]);
        }
    }
}

static double mat_scale(int n, double S[NMAX][NMAX])
{
    double s = 0.0;
    for (int k = 0; k < n; k++)
        for (int j = 0; j < n; j++)
            s = fmax(s, fabs(S[k][j]));
    return s;
}

/* Checks shared by every layer count: S as defined, P Pinv = I,
 * S = P diag(-F) Pinv, ascending F with F[0] = 0, the normalization
 * sum_k (H_k/H) P_km^2 = 1 with P_0m > 0 (modes.h) and the H-weighted
 * orthogonality sum_k H_k P_km P_kn = H delta_mn. Sources: the eigen
 * decomposition of a matrix symmetric in the H-weighted inner product
 * (Pedlosky 1987, section 6.16; Vallis 2017, section 9.6); the
 * normalization is the contract in modes.h. */
static void check_decomposition(const tg_modes *md, int n, const double *H, const double *gp,
                                double f0)
{
    double S[NMAX][NMAX];
    stretching(n, H, gp, f0, S);
    const double sc = n > 1 ? mat_scale(n, S) : 1.0;
    double Htot = 0.0;
    for (int k = 0; k < n; k++)
        Htot += H[k];

    ck_assert_int_eq(md->n, n);
    for (int k = 0; k < n; k++)
        for (int j = 0; j < n; j++)
            ck_assert_msg(fabs(md->S[k][j] - S[k][j]) <= 1e-14 * sc, "S[%d][%d] = %g, expected %g",
                          k, j, md->S[k][j], S[k][j]);

    ck_assert_msg(md->F[0] == 0.0, "barotropic F = %g, expected exactly 0", md->F[0]);
    for (int m = 1; m < n; m++)
        ck_assert_msg(md->F[m] > md->F[m - 1], "F not ascending at %d", m);

    for (int a = 0; a < n; a++)
        for (int b = 0; b < n; b++) {
            double pp = 0.0, rec = 0.0, orth = 0.0;
            for (int m = 0; m < n; m++) {
                pp += md->P[a][m] * md->Pinv[m][b];
                rec += md->P[a][m] * (-md->F[m]) * md->Pinv[m][b];
            }
            for (int k = 0; k < n; k++)
                orth += H[k] * md->P[k][a] * md->P[k][b];
            ck_assert_msg(fabs(pp - (a == b)) < 1e-13, "(P Pinv)[%d][%d] = %.17g", a, b, pp);
            ck_assert_msg(fabs(rec - S[a][b]) < 1e-13 * sc,
                          "(P diag(-F) Pinv)[%d][%d] = %g, S = %g", a, b, rec, S[a][b]);
            ck_assert_msg(fabs(orth - (a == b) * Htot) < 1e-13 * Htot,
                          "sum_k H_k P_k%d P_k%d = %.17g", a, b, orth);
        }
    for (int m = 0; m < n; m++)
        ck_assert_msg(md->P[0][m] > 0.0, "P[0][%d] = %g not positive", m, md->P[0][m]);
    /* barotropic mode: the same value 1 in every layer */
    for (int k = 0; k < n; k++)
        ck_assert_msg(fabs(md->P[k][0] - 1.0) < 1e-13, "P[%d][0] = %.17g", k, md->P[k][0]);
}

/* ---------------------------------------------------------------------- */
/* Two layers: F1 = f0^2 (H1 + H2) / (g' H1 H2), F0 = 0.
 * Source: Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, sections 5.3
 * and 9.6 (two-layer deformation radius); Pedlosky 1987, section 6.16. */
START_TEST(two_layers_closed_form)
{
    const double cases[3][4] = {
        /* H1, H2, g', f0 */
        {1000.0, 3000.0, 0.02, 9.37e-5},
        {500.0, 4500.0, 0.035, 7.0e-5},
        {2000.0, 2000.0, 0.01, -1.0e-4}, /* southern hemisphere f0 */
    };
    const double *c = cases[_i];
    const double H[2] = {c[0], c[1]}, gp[1] = {c[2]}, f0 = c[3];
    tg_modes md;
    tg_status st;
    ck_assert_msg(tg_modes_compute(&md, 2, H, gp, f0, &st) == TG_OK, "%s", st.msg);
    const double F1 = f0 * f0 * (H[0] + H[1]) / (gp[0] * H[0] * H[1]);
    ck_assert_msg(fabs(md.F[1] - F1) < 1e-13 * F1, "F1 = %.17g, expected %.17g", md.F[1], F1);
    ck_assert_msg(fabs(tg_modes_radius(&md, 1) - 1.0 / sqrt(F1)) < 1e-12 / sqrt(F1),
                  "radius %g", tg_modes_radius(&md, 1));
    ck_assert(isinf(tg_modes_radius(&md, 0)));
    /* baroclinic mode: H1 P_01 + H2 P_11 = 0 (no barotropic part), P_01 = sqrt(H2/H1)
     * from the normalization sum (H_k/H) P_k1^2 = 1 (modes.h). */
    ck_assert(fabs(H[0] * md.P[0][1] + H[1] * md.P[1][1]) < 1e-12 * (H[0] + H[1]));
    ck_assert_msg(fabs(md.P[0][1] - sqrt(H[1] / H[0])) < 1e-13, "P01 = %.17g", md.P[0][1]);
    check_decomposition(&md, 2, H, gp, f0);
}
END_TEST

/* Three (and more) layers: each F_m is a root of det(S + F I) = 0, checked
 * on the characteristic polynomial directly (three layers: F^2 + tr(S) F +
 * M2 = 0 besides F = 0, M2 the sum of principal 2x2 minors), and by
 * Gaussian elimination with pivoting for every layer count. Source: the
 * definition of eigenvalues (common practice); S as in Pedlosky 1987,
 * section 6.16. */
static double det_shifted(int n, double S[NMAX][NMAX], double F)
{
    double A[NMAX][NMAX];
    for (int k = 0; k < n; k++)
        for (int j = 0; j < n; j++)
            A[k][j] = S[k][j] + (k == j ? F : 0.0);
    double det = 1.0;
    for (int c = 0; c < n; c++) {
        int p = c;
        for (int r = c + 1; r < n; r++)
            if (fabs(A[r][c]) > fabs(A[p][c]))
                p = r;
        if (p != c) {
            for (int j = 0; j < n; j++) {
                double t = A[c][j];
                A[c][j] = A[p][j];
                A[p][j] = t;
            }
            det = -det;
        }
        det *= A[c][c];
        if (A[c][c] == 0.0)
            return 0.0;
        for (int r = c + 1; r < n; r++) {
            double f = A[r][c] / A[c][c];
            for (int j = c; j < n; j++)
                A[r][j] -= f * A[c][j];
        }
    }
    return det;
}

START_TEST(three_layers_characteristic_polynomial)
{
    const double H[3] = {500.0, 1250.0, 3250.0}, gp[2] = {0.025, 0.0125}, f0 = 8e-5;
    tg_modes md;
    tg_status st;
    ck_assert_msg(tg_modes_compute(&md, 3, H, gp, f0, &st) == TG_OK, "%s", st.msg);
    double S[NMAX][NMAX];
    stretching(3, H, gp, f0, S);
    const double tr = S[0][0] + S[1][1] + S[2][2];
    const double M2 = (S[0][0] * S[1][1] - S[0][1] * S[1][0]) +
                      (S[0][0] * S[2][2] - S[0][2] * S[2][0]) +
                      (S[1][1] * S[2][2] - S[1][2] * S[2][1]);
    const double disc = sqrt(tr * tr - 4.0 * M2);
    const double F1 = (-tr - disc) / 2.0, F2 = (-tr + disc) / 2.0;
    ck_assert_msg(fabs(md.F[1] - F1) < 1e-12 * F2, "F1 = %.17g, expected %.17g", md.F[1], F1);
    ck_assert_msg(fabs(md.F[2] - F2) < 1e-12 * F2, "F2 = %.17g, expected %.17g", md.F[2], F2);
    const double sc = mat_scale(3, S);
    for (int m = 0; m < 3; m++) {
        double d = det_shifted(3, S, md.F[m]);
        ck_assert_msg(fabs(d) < 1e-12 * sc * sc * sc, "det(S + F%d I) = %g (scale %g)", m, d,
                      sc * sc * sc);
    }
    /* a value between the roots is not a root: the check can fail */
    ck_assert(fabs(det_shifted(3, S, 0.5 * (md.F[1] + md.F[2]))) > 1e-6 * sc * sc * sc);
    check_decomposition(&md, 3, H, gp, f0);
}
END_TEST

START_TEST(many_layers_decomposition)
{
    const int n = _i;
    double H[NMAX] = {0}, gp[NMAX - 1] = {0};
    for (int k = 0; k < n; k++)
        H[k] = 300.0 * (k + 1);
    for (int k = 0; k + 1 < n; k++)
        gp[k] = 0.03 / (k + 1);
    const double f0 = 1e-4;
    tg_modes md;
    tg_status st;
    ck_assert_msg(tg_modes_compute(&md, n, H, gp, f0, &st) == TG_OK, "%s", st.msg);
    double S[NMAX][NMAX];
    stretching(n, H, gp, f0, S);
    const double sc = mat_scale(n, S);
    for (int m = 0; m < n; m++) {
        double d = det_shifted(n, S, md.F[m]);
        ck_assert_msg(fabs(d) < 1e-12 * pow(sc, n), "n = %d: det(S + F%d I) = %g", n, m, d);
    }
    check_decomposition(&md, n, H, gp, f0);
}
END_TEST

/* One layer: S = 0, F = {0}, P = Pinv = 1. Source: modes.h contract
 * (no interfaces, no stretching); Vallis 2017, section 5.3. */
START_TEST(one_layer)
{
    const double H[1] = {4000.0};
    tg_modes md;
    tg_status st;
    ck_assert_msg(tg_modes_compute(&md, 1, H, NULL, 9e-5, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(md.n, 1);
    ck_assert(md.F[0] == 0.0);
    ck_assert(md.S[0][0] == 0.0);
    ck_assert(fabs(md.P[0][0] - 1.0) < 1e-15 && fabs(md.Pinv[0][0] - 1.0) < 1e-15);
    ck_assert(isinf(tg_modes_radius(&md, 1)));
}
END_TEST

/* Bad input: a non-positive reduced gravity makes F1 <= 0, which
 * tg_modes_compute rejects with TG_ERR_NUMERIC; layer counts outside
 * 1..TG_MAX_LAYERS are TG_ERR_INTERNAL. Source: the contract in modes.c
 * (common practice). */
START_TEST(rejects_negative_reduced_gravity)
{
    const double H[2] = {1000.0, 3000.0}, gp[1] = {-0.02};
    tg_modes md;
    tg_status st;
    tg_status_clear(&st);
    ck_assert_int_eq(tg_modes_compute(&md, 2, H, gp, 9e-5, &st), TG_ERR_NUMERIC);
    ck_assert_int_eq(st.code, TG_ERR_NUMERIC);
    ck_assert_msg(st.msg[0] != '\0', "no message");
}
END_TEST

START_TEST(rejects_negative_reduced_gravity_three_layers)
{
    const double H[3] = {500.0, 1000.0, 3000.0}, gp[2] = {-0.02, -0.01};
    tg_modes md;
    tg_status st;
    ck_assert_int_eq(tg_modes_compute(&md, 3, H, gp, 9e-5, &st), TG_ERR_NUMERIC);
}
END_TEST

START_TEST(rejects_bad_layer_count)
{
    const double H[TG_MAX_LAYERS + 1] = {1, 1, 1, 1, 1, 1, 1};
    const double gp[TG_MAX_LAYERS] = {1, 1, 1, 1, 1, 1};
    tg_modes md;
    tg_status st;
    ck_assert_int_eq(tg_modes_compute(&md, 0, H, gp, 1e-4, &st), TG_ERR_INTERNAL);
    ck_assert_int_eq(tg_modes_compute(&md, TG_MAX_LAYERS + 1, H, gp, 1e-4, &st), TG_ERR_INTERNAL);
    ck_assert_int_eq(tg_modes_compute(&md, TG_MAX_LAYERS, H, gp, 1e-4, &st), TG_OK);
}
END_TEST

static Suite *modes_suite(void)
{
    Suite *s = suite_create("modes");
    TCase *tc = tcase_create("modes");
    tcase_add_loop_test(tc, two_layers_closed_form, 0, 3);
    tcase_add_test(tc, three_layers_characteristic_polynomial);
    tcase_add_loop_test(tc, many_layers_decomposition, 2, TG_MAX_LAYERS + 1);
    tcase_add_test(tc, one_layer);
    tcase_add_test(tc, rejects_negative_reduced_gravity);
    tcase_add_test(tc, rejects_negative_reduced_gravity_three_layers);
    tcase_add_test(tc, rejects_bad_layer_count);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(modes_suite());
}
