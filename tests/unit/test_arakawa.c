/* test_arakawa.c - unit tests of the Jacobian and Laplacian (src/model/fdops.c)
 * on the closed basin.
 *
 * Checks second-order convergence of tg_jacobian and tg_laplacian on smooth
 * analytic fields, the antisymmetry of the Arakawa Jacobian, and its
 * discrete conservation properties in the bounded domain:
 *   - energy: sum over interior nodes of (psi - c) J(psi, q) vanishes to
 *     round-off for any q when psi = c on the walls;
 *   - enstrophy: sum over interior nodes of q J(psi, q) vanishes to
 *     round-off when, in addition, q = 0 on the walls. With q nonzero on
 *     the walls it does NOT vanish: the sum equals exactly the coupling of
 *     the interior q with the wall values of q, sum q J(psi, q_wall), where
 *     q_wall is q with its interior zeroed; this wall flux is a
 *     discretization error that goes to zero with the grid spacing (first
 *     order for smooth fields), checked here.
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "fdops.h"
#include "geometry.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

static const double PI = 3.14159265358979323846;

/* Deterministic uniform numbers in [-1, 1) from a 64-bit linear
 * congruential generator (common practice). */
static double next_uniform(uint64_t *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) * (2.0 / 9007199254740992.0) - 1.0;
}

static tg_geometry *make_basin(int points)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.points = points;
    cfg.size_km = 1000.0;
    tg_status st;
    tg_geometry *g = tg_geometry_create(&cfg, &st);
    ck_assert_msg(g != NULL, "geometry: %s", st.msg);
    ck_assert_int_eq(g->ns, points);
    ck_assert_int_eq(g->a0, 1);
    ck_assert_int_eq(g->a1, points - 1);
    return g;
}

static double *field(const tg_geometry *g)
{
    double *f = calloc((size_t)g->ns * g->ns, sizeof(double));
    ck_assert_ptr_nonnull(f);
    return f;
}

static int on_wall(const tg_geometry *g, int i, int j)
{
    return i < g->a0 || j < g->a0 || i >= g->a1 || j >= g->a1;
}

/* ---------------------------------------------------------------------- */
/* Smooth test fields in X = x/L, Y = y/L, with their exact derivatives
 * (per unit L). psi is not zero on the walls, q is not symmetric: the
 * Jacobian has no special cancellations. */
static void psi_exact(double X, double Y, double *f, double *fx, double *fy)
{
    *f = sin(PI * X) * sin(PI * Y) + 0.5 * cos(2.0 * PI * X + PI * Y);
    *fx = PI * cos(PI * X) * sin(PI * Y) - PI * sin(2.0 * PI * X + PI * Y);
    *fy = PI * sin(PI * X) * cos(PI * Y) - 0.5 * PI * sin(2.0 * PI * X + PI * Y);
}

static void q_exact(double X, double Y, double *f, double *fx, double *fy)
{
    *f = cos(PI * X) * cos(2.0 * PI * Y) + 0.3 * sin(3.0 * X + Y);
    *fx = -PI * sin(PI * X) * cos(2.0 * PI * Y) + 0.9 * cos(3.0 * X + Y);
    *fy = -2.0 * PI * cos(PI * X) * sin(2.0 * PI * Y) + 0.3 * cos(3.0 * X + Y);
}

/* Largest |J_h - J| on the active nodes relative to the largest |J|. */
static double jacobian_error(int points)
{
    tg_geometry *g = make_basin(points);
    const int ns = g->ns;
    const double L = g->length;
    double *p = field(g), *q = field(g), *J = field(g), *Jx = field(g);
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            double X = g->coord[i] / L, Y = g->coord[j] / L, pf, px, py, qf, qx, qy;
            psi_exact(X, Y, &pf, &px, &py);
            q_exact(X, Y, &qf, &qx, &qy);
            long k = (long)j * ns + i;
            p[k] = pf;
            q[k] = qf;
            Jx[k] = (px * qy - py * qx) / (L * L);
        }
    tg_jacobian(g, p, q, J);
    double err = 0.0, big = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            long k = (long)j * ns + i;
            err = fmax(err, fabs(J[k] - Jx[k]));
            big = fmax(big, fabs(Jx[k]));
        }
    free(p);
    free(q);
    free(J);
    free(Jx);
    tg_geometry_destroy(g);
    return err / big;
}

/* Second-order convergence of the Arakawa Jacobian: the max-norm error
 * falls by ~4 per halving of dx. Source: Arakawa 1966, J. Comput. Phys. 1,
 * 119-143 (second-order accurate form, eq. 46); convergence test: common
 * practice. */
START_TEST(jacobian_second_order)
{
    const double e1 = jacobian_error(33), e2 = jacobian_error(65), e3 = jacobian_error(129);
    const double r1 = log2(e1 / e2), r2 = log2(e2 / e3);
    ck_assert_msg(r1 > 1.8 && r1 < 2.2, "observed order %g (errors %g, %g)", r1, e1, e2);
    ck_assert_msg(r2 > 1.8 && r2 < 2.2, "observed order %g (errors %g, %g)", r2, e2, e3);
    ck_assert_msg(e3 < 1e-3, "error at 129 points %g", e3);
}
END_TEST

/* f = sin(pi X) cos(2 pi Y) + exp(X) Y^2, lap f = -5 pi^2 sin(pi X) cos(2 pi Y)
 * + exp(X) (Y^2 + 2), per L^2. */
static double laplacian_error(int points)
{
    tg_geometry *g = make_basin(points);
    const int ns = g->ns;
    const double L = g->length;
    double *f = field(g), *out = field(g), *ex = field(g);
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            double X = g->coord[i] / L, Y = g->coord[j] / L;
            long k = (long)j * ns + i;
            f[k] = sin(PI * X) * cos(2.0 * PI * Y) + exp(X) * Y * Y;
            ex[k] = (-5.0 * PI * PI * sin(PI * X) * cos(2.0 * PI * Y) + exp(X) * (Y * Y + 2.0)) /
                    (L * L);
        }
    tg_laplacian(g, f, out);
    double err = 0.0, big = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            long k = (long)j * ns + i;
            err = fmax(err, fabs(out[k] - ex[k]));
            big = fmax(big, fabs(ex[k]));
        }
    free(f);
    free(out);
    free(ex);
    tg_geometry_destroy(g);
    return err / big;
}

/* Second-order convergence of the five-point Laplacian. Source: common
 * practice (truncation error (dx^2/12)(f_xxxx + f_yyyy); e.g. Press et al.
 * 2007, Numerical Recipes 3rd ed., section 20.0). */
START_TEST(laplacian_second_order)
{
    const double e1 = laplacian_error(33), e2 = laplacian_error(65), e3 = laplacian_error(129);
    const double r1 = log2(e1 / e2), r2 = log2(e2 / e3);
    ck_assert_msg(r1 > 1.8 && r1 < 2.2, "observed order %g (errors %g, %g)", r1, e1, e2);
    ck_assert_msg(r2 > 1.8 && r2 < 2.2, "observed order %g (errors %g, %g)", r2, e2, e3);
}
END_TEST

/* The five-point Laplacian of a field that is linear in x and y plus
 * x^2 - y^2 is exactly zero (the stencil is exact for quadratics).
 * Source: common practice. */
START_TEST(laplacian_exact_on_harmonic_quadratic)
{
    tg_geometry *g = make_basin(33);
    const int ns = g->ns;
    const double L = g->length;
    double *f = field(g), *out = field(g);
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            double X = g->coord[i] / L, Y = g->coord[j] / L;
            f[(long)j * ns + i] = 1.0 + 2.0 * X - 3.0 * Y + X * X - Y * Y + 5.0 * X * Y;
        }
    tg_laplacian(g, f, out);
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            ck_assert_msg(fabs(out[(long)j * ns + i]) * g->dx * g->dx < 1e-13, "at (%d, %d): %g",
                          i, j, out[(long)j * ns + i]);
    free(f);
    free(out);
    tg_geometry_destroy(g);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Random psi with psi = c on the walls, random q everywhere (walls too). */
static void random_fields(const tg_geometry *g, uint64_t seed, double c, int q_zero_on_walls,
                          double *p, double *q)
{
    const int ns = g->ns;
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            long k = (long)j * ns + i;
            int w = on_wall(g, i, j);
            double a = next_uniform(&seed), b = next_uniform(&seed);
            p[k] = w ? c : c + a;
            q[k] = (w && q_zero_on_walls) ? 0.0 : b;
        }
}

/* Sums over the active nodes of a*b and of |a*b|. */
static void interior_sums(const tg_geometry *g, const double *a, double ashift, const double *b,
                          double *sum, double *abssum)
{
    *sum = *abssum = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            long k = (long)j * g->ns + i;
            double v = (a[k] - ashift) * b[k];
            *sum += v;
            *abssum += fabs(v);
        }
}

static const int cons_points[] = {33, 65};

/* Discrete energy conservation in the closed basin: with psi = c on the
 * walls, sum_interior (psi - c) J(psi, q) = 0 for any q (walls included).
 * Source: Arakawa 1966, J. Comput. Phys. 1, 119-143, section 3 (the
 * J+x/Jx+ average makes the interior coefficients antisymmetric; the terms
 * coupling to the walls carry the factor psi - c = 0). */
START_TEST(energy_conserved_with_constant_wall_psi)
{
    tg_geometry *g = make_basin(cons_points[_i]);
    double *p = field(g), *q = field(g), *J = field(g);
    for (int t = 0; t < 5; t++) {
        const double c = 0.37 * t - 0.6;
        random_fields(g, 1000u + 17u * t, c, 0, p, q);
        tg_jacobian(g, p, q, J);
        double s, a;
        interior_sums(g, p, c, J, &s, &a);
        ck_assert_msg(fabs(s) < 1e-13 * a, "trial %d: sum (psi-c) J = %g, sum |.| = %g", t, s, a);
    }
    free(p);
    free(q);
    free(J);
    tg_geometry_destroy(g);
}
END_TEST

/* Discrete enstrophy conservation when q = 0 on the walls (and psi = c
 * there): sum_interior q J(psi, q) = 0. Source: Arakawa 1966, section 3
 * (antisymmetric interior coefficients); in a closed domain the pairs
 * coupling interior and wall values vanish only when the wall q is 0. */
START_TEST(enstrophy_conserved_with_zero_wall_q)
{
    tg_geometry *g = make_basin(cons_points[_i]);
    double *p = field(g), *q = field(g), *J = field(g);
    for (int t = 0; t < 5; t++) {
        const double c = 0.21 * t - 0.3;
        random_fields(g, 2000u + 31u * t, c, 1, p, q);
        tg_jacobian(g, p, q, J);
        double s, a;
        interior_sums(g, q, 0.0, J, &s, &a);
        ck_assert_msg(fabs(s) < 1e-13 * a, "trial %d: sum q J = %g, sum |q J| = %g", t, s, a);
    }
    free(p);
    free(q);
    free(J);
    tg_geometry_destroy(g);
}
END_TEST

/* With q nonzero on the walls, the enstrophy sum is exactly the wall
 * coupling sum_interior q J(psi, q_wall) (q_wall: q with its interior set
 * to 0), because J is linear in q and the interior part conserves (check
 * above). This pins down where the enstrophy sum fails: near the north
 * wall, for instance, the Arakawa stencil gives the pair terms
 *   q_{i,N-1} [q_{i,N}(psi_{i+1,N-1} - psi_{i-1,N-1})
 *              + q_{i+1,N}(psi_{i+1,N-1} - c) - q_{i-1,N}(psi_{i-1,N-1} - c)] / (12 dx^2),
 * which vanish only when q = 0 on the wall. The check also shows that the
 * wall coupling is not negligible for random fields (so the property tested
 * above is a real restriction). Source: Arakawa 1966, eqs. 36-46
 * (the stencil); linearity: common practice. */
START_TEST(enstrophy_sum_is_the_wall_coupling)
{
    tg_geometry *g = make_basin(cons_points[_i]);
    const int ns = g->ns;
    double *p = field(g), *q = field(g), *J = field(g), *qw = field(g), *Jw = field(g);
    random_fields(g, 4242u, 0.8, 0, p, q);
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            long k = (long)j * ns + i;
            qw[k] = on_wall(g, i, j) ? q[k] : 0.0;
        }
    tg_jacobian(g, p, q, J);
    tg_jacobian(g, p, qw, Jw);
    double s, a, sw, aw;
    interior_sums(g, q, 0.0, J, &s, &a);
    interior_sums(g, q, 0.0, Jw, &sw, &aw);
    ck_assert_msg(fabs(s - sw) < 1e-13 * a, "sum q J = %.17g, wall coupling %.17g", s, sw);
    ck_assert_msg(fabs(s) > 1e-6 * a, "wall coupling unexpectedly small: %g of %g", s, a);

    /* the explicit north-wall formula above, for the north wall alone */
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++)
            qw[(long)j * ns + i] = (j == ns - 1 && i > 0 && i < ns - 1) ? q[(long)j * ns + i] : 0.0;
    tg_jacobian(g, p, qw, Jw);
    interior_sums(g, q, 0.0, Jw, &sw, &aw);
    const int N = ns - 1;
    const double c = 0.8;
    double formula = 0.0;
    for (int i = 1; i < N; i++) {
        const double *row = p + (long)(N - 1) * ns, *wq = q + (long)N * ns;
        double qi = q[(long)(N - 1) * ns + i];
        double t = wq[i] * (row[i + 1] - row[i - 1]);
        if (i + 1 < N)
            t += wq[i + 1] * (row[i + 1] - c);
        if (i - 1 > 0)
            t -= wq[i - 1] * (row[i - 1] - c);
        formula += qi * t;
    }
    formula /= 12.0 * g->dx * g->dx;
    ck_assert_msg(fabs(sw - formula) < 1e-12 * aw, "north wall: %.17g, formula %.17g", sw, formula);
    free(p);
    free(q);
    free(J);
    free(qw);
    free(Jw);
    tg_geometry_destroy(g);
}
END_TEST

/* For smooth fields (psi = 0 on the walls, q not), the relative enstrophy
 * wall flux goes to zero as the grid is refined, at first order, consistent
 * with the continuum identity int q J(psi, q) dA = closed integral of
 * (q^2/2) dpsi/ds = 0 for psi constant on the boundary. Source: Pedlosky
 * 1987, Geophysical Fluid Dynamics, section 6.17 (enstrophy integral);
 * convergence test: common practice. */
static double enstrophy_leak(int points)
{
    tg_geometry *g = make_basin(points);
    const int ns = g->ns;
    const double L = g->length;
    double *p = field(g), *q = field(g), *J = field(g);
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            double X = g->coord[i] / L, Y = g->coord[j] / L;
            long k = (long)j * ns + i;
            p[k] = on_wall(g, i, j) ? 0.0 : sin(PI * X) * sin(PI * Y) * (1.0 + X * Y);
            q[k] = cos(PI * X) * cos(2.0 * PI * Y) + 0.3 * sin(3.0 * X + Y);
        }
    tg_jacobian(g, p, q, J);
    double s, a;
    interior_sums(g, q, 0.0, J, &s, &a);
    free(p);
    free(q);
    free(J);
    tg_geometry_destroy(g);
    return fabs(s) / a;
}

START_TEST(enstrophy_wall_flux_vanishes_with_resolution)
{
    const double l1 = enstrophy_leak(33), l2 = enstrophy_leak(65), l3 = enstrophy_leak(129);
    const double r1 = log2(l1 / l2), r2 = log2(l2 / l3);
    ck_assert_msg(r1 > 0.8 && r2 > 0.8, "leak %g, %g, %g: orders %g, %g", l1, l2, l3, r1, r2);
}
END_TEST

/* Antisymmetry J(a, b) = -J(b, a) of the Arakawa average, and J(a, a) = 0.
 * Source: Arakawa 1966, eqs. 36-46 (J++ is antisymmetric, J+x(a, b) =
 * -Jx+(b, a)). */
START_TEST(jacobian_antisymmetric)
{
    tg_geometry *g = make_basin(33);
    const int ns = g->ns;
    double *a = field(g), *b = field(g), *J1 = field(g), *J2 = field(g);
    random_fields(g, 77u, 0.1, 0, a, b);
    for (long k = 0; k < (long)ns * ns; k++)
        a[k] += 0.3 * b[k]; /* walls not constant: antisymmetry needs no wall condition */
    tg_jacobian(g, a, b, J1);
    tg_jacobian(g, b, a, J2);
    double big = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            big = fmax(big, fabs(J1[(long)j * ns + i]));
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++) {
            long k = (long)j * ns + i;
            ck_assert_msg(fabs(J1[k] + J2[k]) <= 1e-14 * big, "at (%d, %d)", i, j);
        }
    tg_jacobian(g, a, a, J1);
    for (int j = g->a0; j < g->a1; j++)
        for (int i = g->a0; i < g->a1; i++)
            ck_assert(fabs(J1[(long)j * ns + i]) <= 1e-14 * big);
    free(a);
    free(b);
    free(J1);
    free(J2);
    tg_geometry_destroy(g);
}
END_TEST

static Suite *arakawa_suite(void)
{
    Suite *s = suite_create("arakawa");
    TCase *tc = tcase_create("convergence");
    tcase_set_timeout(tc, 30);
    tcase_add_test(tc, jacobian_second_order);
    tcase_add_test(tc, laplacian_second_order);
    tcase_add_test(tc, laplacian_exact_on_harmonic_quadratic);
    suite_add_tcase(s, tc);
    TCase *tk = tcase_create("conservation");
    tcase_add_loop_test(tk, energy_conserved_with_constant_wall_psi, 0, 2);
    tcase_add_loop_test(tk, enstrophy_conserved_with_zero_wall_q, 0, 2);
    tcase_add_loop_test(tk, enstrophy_sum_is_the_wall_coupling, 0, 2);
    tcase_add_test(tk, enstrophy_wall_flux_vanishes_with_resolution);
    tcase_add_test(tk, jacobian_antisymmetric);
    suite_add_tcase(s, tk);
    return s;
}

int main(void)
{
    return tg_unit_run(arakawa_suite());
}
