/* test_vet.c - unit tests of the linear check of `twingyre vet`
 * (src/experiments/vet_linear.c) and of the closure host's tendency scale.
 *
 * Checks, each with its source:
 *   - the RK3 stability bound along the negative real axis is 2.5127 and
 *     along the imaginary axis sqrt(3): the real root of
 *     1 + z + z^2/2 + z^3/6 = -1 and the root of |R(iy)|^2 = 1, i.e.
 *     y^4/12 = y^6/36 (Durran 2010, Numerical Methods for Fluid Dynamics,
 *     2nd ed., ch. 2, the RK3 stability region; 2.51 is quoted there, the
 *     further digits are our root of the cubic, section from memory);
 *   - Arnoldi's leading eigenvalue for the closure `viscosity` with a pure
 *     harmonic A2 on one layer equals A2 times the largest-magnitude
 *     eigenvalue of the five-point Laplacian with Dirichlet walls,
 *       lambda_mn = -(4/dx^2) [sin^2(m pi/(2(N-1))) + sin^2(n pi/(2(N-1)))],
 *     m = n = N - 2 (LeVeque 2007, Finite Difference Methods for Ordinary
 *     and Partial Differential Equations, section 3.4 on the eigenvalues of
 *     the 2-D five-point Laplacian; section number from memory). The
 *     boundary conditions: one layer (no stretching), a basin with free-slip
 *     walls, so the operator is A2 lap_h acting on zeta = q - beta (y - y0)
 *     with zeta = 0 on the walls (Dirichlet); q on the interior nodes is the
 *     state vector;
 *   - with a pure biharmonic A4 the operator is -A4 lap_h^2 with zeta = 0
 *     and lap zeta = 0 on the walls, whose largest eigenvalue magnitude is
 *     A4 max|lambda|^2; the reported largest stable step agrees within 5 %
 *     with 2.5127 / (A4 max|lambda|^2) (Durran 2010, ch. 2, as above);
 *   - an eigenvalue on the imaginary axis limits the step to sqrt(3)/|lambda|,
 *     one in the right half-plane does not limit it (it is a growth rate);
 *   - tg_closure_host_set_scale multiplies the closure tendency exactly
 *     (common practice: the coefficient multiplier of a closure linear in
 *     its coefficient).
 * A Check suite with its own main(); tiny 33-point grids.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "closure_host.h"
#include "constants.h"
#include "model.h"
#include "vet.h"
#include "unit_util.h"

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* One-layer 33-point basin (1280 km: dx = 40 km) with the given settings. */
static tg_model *one_layer(const char *const *more)
{
    static tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    const char *base[] = {"grid.points=33", "grid.size_km=1280", "layers.thickness_m=4000",
                          "layers.reduced_gravity_m_s2=", "closure.use=viscosity", NULL};
    for (const char *const *a = base; *a; a++)
        ck_assert_msg(tg_config_set(&cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    for (const char *const *a = more; *a; a++)
        ck_assert_msg(tg_config_set(&cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    return m;
}

/* Largest magnitude of the five-point Dirichlet Laplacian's eigenvalues
 * on N points per side (walls included). */
static double lap_max(int N, double dx)
{
    const double s = sin((N - 2) * TG_PI / (2.0 * (N - 1)));
    return (4.0 / (dx * dx)) * 2.0 * s * s;
}

START_TEST(test_rk3_bounds)
{
    const double real_axis = tg_rk3_ray_limit(TG_PI);
    ck_assert_msg(fabs(real_axis - 2.5127) < 1e-4, "negative real axis: %.6f", real_axis);
    /* The cubic's root itself: R(-t) = -1. */
    const double t = real_axis;
    ck_assert(fabs(1.0 - t + t * t / 2.0 - t * t * t / 6.0 + 1.0) < 1e-9);
    const double imag = tg_rk3_ray_limit(0.5 * TG_PI);
    ck_assert_msg(fabs(imag - sqrt(3.0)) < 1e-4, "imaginary axis: %.6f", imag);
    /* Between them the bound never falls below either (the region bulges). */
    const double mid = tg_rk3_ray_limit(0.75 * TG_PI);
    ck_assert_msg(mid > 1.7 && mid < 3.0, "135 degrees: %.6f", mid);
}
END_TEST

START_TEST(test_step_limit_rules)
{
    const double re[3] = {0.0, 1e-3, -2.0}, im[3] = {4.0, 0.0, 0.0};
    /* sqrt(3)/4 from the imaginary one, 2.5127/2 from the real one. */
    const double h = tg_vet_step_limit(re, im, 3);
    ck_assert_msg(fabs(h - sqrt(3.0) / 4.0) < 1e-4, "step %.6f", h);
    /* Only a growing value: no step bound. */
    ck_assert(isinf(tg_vet_step_limit(re + 1, im + 1, 1)));
}
END_TEST

START_TEST(test_harmonic_leading_eigenvalue)
{
    const double A2 = 1000.0;
    const char *more[] = {"viscosity.viscosity_m2_per_s=1000",
                          "viscosity.hyperviscosity_m4_per_s=0", NULL};
    tg_model *m = one_layer(more);
    double *q0 = malloc(sizeof(double) * (size_t)m->npl);
    ck_assert_ptr_nonnull(q0);
    memcpy(q0, m->q, sizeof(double) * (size_t)m->npl); /* rest: q = beta (y - y0) */
    tg_vet_linear lin;
    tg_status st;
    ck_assert_msg(tg_vet_linearize(m, q0, 40, 11, &lin, &st) == TG_OK, "%s", st.msg);
    const double expect = -A2 * lap_max(33, m->geom->dx);
    /* The Ritz value of largest magnitude: real, negative, the analytic value. */
    const double rel = fabs(lin.re[0] - expect) / fabs(expect);
    ck_assert_msg(rel < 1e-3, "leading Ritz value %.10g vs analytic %.10g (relative %.2e)",
                  lin.re[0], expect, rel);
    printf("harmonic, basin: leading Ritz value %.10g s-1, analytic %.10g s-1, relative "
           "difference %.2e\n",
           lin.re[0], expect, rel);
    ck_assert_msg(fabs(lin.im[0]) < 1e-6 * fabs(expect), "imaginary part %g", lin.im[0]);
    /* Every Ritz value lies within the operator's spectrum [expect, smallest]. */
    const double smallest = -A2 * (8.0 / (m->geom->dx * m->geom->dx)) *
                            pow(sin(TG_PI / (2.0 * 32)), 2);
    for (int i = 0; i < lin.n; i++)
        ck_assert_msg(lin.re[i] >= expect * (1 + 1e-9) && lin.re[i] <= smallest * (1 - 1e-6),
                      "Ritz value %d = %g outside [%g, %g]", i, lin.re[i], expect, smallest);
    ck_assert(lin.growth_rate < 0.0);
    /* The state is left at q0. */
    ck_assert(memcmp(m->q, q0, sizeof(double) * (size_t)m->npl) == 0);
    free(q0);
    tg_model_destroy(m);
}
END_TEST

/* Periodic square of N = 32 points: the five-point Laplacian's eigenvalues
 * are -(4/dx^2)[sin^2(pi k/N) + sin^2(pi l/N)], the largest magnitude 8/dx^2
 * at k = l = N/2 (the same textbook section, periodic case; from memory). One
 * layer, no background flow: the operator is A2 lap_h on zeta = q. The top
 * of this spectrum is a cluster (the next eigenvalue is 0.5 % smaller, four
 * times), so the test takes 120 Arnoldi steps; 40 leave the estimate 0.5 %
 * low. */
START_TEST(test_harmonic_periodic)
{
    static tg_config cfg;
    tg_status st;
    tg_config_defaults(&cfg);
    const char *sets[] = {"grid.geometry=periodic", "grid.points=32", "grid.size_km=1000",
                          "layers.thickness_m=4000", "layers.reduced_gravity_m_s2=",
                          "wind.profile=none", "closure.use=viscosity",
                          "viscosity.viscosity_m2_per_s=800", NULL};
    for (const char *const *a = sets; *a; a++)
        ck_assert_msg(tg_config_set(&cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    double *q0 = malloc(sizeof(double) * (size_t)m->npl);
    ck_assert_ptr_nonnull(q0);
    memcpy(q0, m->q, sizeof(double) * (size_t)m->npl);
    tg_vet_linear lin;
    ck_assert_msg(tg_vet_linearize(m, q0, 120, 17, &lin, &st) == TG_OK, "%s", st.msg);
    const double expect = -800.0 * 8.0 / (m->geom->dx * m->geom->dx);
    const double rel = fabs(lin.re[0] - expect) / fabs(expect);
    ck_assert_msg(rel < 1e-3, "leading Ritz value %.10g vs analytic %.10g (relative %.2e)",
                  lin.re[0], expect, rel);
    printf("harmonic, periodic: leading Ritz value %.10g s-1, analytic %.10g s-1, relative "
           "difference %.2e\n",
           lin.re[0], expect, rel);
    ck_assert(lin.growth_rate <= 1e-9 * fabs(expect));
    free(q0);
    tg_model_destroy(m);
}
END_TEST

START_TEST(test_biharmonic_step_limit)
{
    const double A4 = 1e11;
    const char *more[] = {"viscosity.viscosity_m2_per_s=0", "viscosity.hyperviscosity_m4_per_s=1e11",
                          NULL};
    tg_model *m = one_layer(more);
    double *q0 = malloc(sizeof(double) * (size_t)m->npl);
    ck_assert_ptr_nonnull(q0);
    memcpy(q0, m->q, sizeof(double) * (size_t)m->npl);
    tg_vet_linear lin;
    tg_status st;
    ck_assert_msg(tg_vet_linearize(m, q0, 40, 5, &lin, &st) == TG_OK, "%s", st.msg);
    const double lmax = lap_max(33, m->geom->dx);
    const double analytic = 2.5127 / (A4 * lmax * lmax);
    const double rel = fabs(lin.step_limit - analytic) / analytic;
    ck_assert_msg(rel < 0.05, "largest stable step %.6g s vs analytic %.6g s (relative %.2e)",
                  lin.step_limit, analytic, rel);
    printf("biharmonic: largest stable step %.6g s, analytic %.6g s, relative difference %.2e\n",
           lin.step_limit, analytic, rel);
    free(q0);
    tg_model_destroy(m);
}
END_TEST

START_TEST(test_scale)
{
    const char *more[] = {"viscosity.viscosity_m2_per_s=700", NULL};
    tg_model *m = one_layer(more);
    tg_model_set_noise(m, 2e4, 3);
    tg_status st;
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, m->step, 0};
    ck_assert(tg_closure_host_eval(m->closures, &in, &st) == TG_OK);
    double *t1 = malloc(sizeof(double) * (size_t)m->npl);
    ck_assert_ptr_nonnull(t1);
    memcpy(t1, tg_closure_host_tend(m->closures, 0), sizeof(double) * (size_t)m->npl);
    tg_closure_host_set_scale(m->closures, 4.0);
    ck_assert(tg_closure_host_eval(m->closures, &in, &st) == TG_OK);
    const double *t4 = tg_closure_host_tend(m->closures, 0);
    int nonzero = 0;
    for (long p = 0; p < m->npl; p++) {
        ck_assert_msg(t4[p] == 4.0 * t1[p], "node %ld: %g vs 4 x %g", p, t4[p], t1[p]);
        nonzero |= t1[p] != 0.0;
    }
    ck_assert(nonzero);
    free(t1);
    tg_model_destroy(m);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("vet");
    TCase *tc = tcase_create("linear");
    tcase_set_timeout(tc, 600);
    tcase_add_test(tc, test_rk3_bounds);
    tcase_add_test(tc, test_step_limit_rules);
    tcase_add_test(tc, test_harmonic_leading_eigenvalue);
    tcase_add_test(tc, test_harmonic_periodic);
    tcase_add_test(tc, test_biharmonic_step_limit);
    tcase_add_test(tc, test_scale);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(suite());
}
