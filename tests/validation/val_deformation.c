/* val_deformation.c - validation: the two-layer deformation radius and
 * vertical modes against the closed-form two-layer result.
 *
 * For two layers of thickness H1, H2 with reduced gravity g' at the
 * interface, the stretching matrix has eigenvalues 0 and
 *   F_1 = f0^2/(g' H1) + f0^2/(g' H2) = f0^2 H / (g' H1 H2),
 * so the baroclinic deformation radius is
 *   R_d = 1/sqrt(F_1) = sqrt(g' H1 H2 / (H1 + H2)) / |f0|
 * (Pedlosky 1987, Geophysical Fluid Dynamics, 2nd ed., section 6.16, the
 * two-layer model; Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, 2nd
 * ed., section 5.3 on layered quasi-geostrophic models; section numbers and
 * the formula from memory). The barotropic mode is depth-independent and the
 * baroclinic mode carries no depth-integrated transport,
 * H1 psi_1 + H2 psi_2 = 0, i.e. P[0][1]/P[1][1] = -H2/H1 (same sources; the
 * orthogonality of the modes in the H-weighted inner product).
 *
 * The library computes the modes numerically (LAPACK symmetric eigen-solver,
 * src/numerics/modes.c), so agreement to 1e-10 relative checks both the stretching
 * matrix and the solver; tg_scales_compute must report the same radius.
 *
 * A Check suite with its own main(). Part of twingyre. GPL-3.0-or-later.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "config.h"
#include "modes.h"
#include "scales.h"
#include "status.h"
#include "../unit/unit_util.h"

typedef struct {
    double H1, H2, gprime, f0;
} two_layer;

/* Three sets: the default ocean, a shallow thin-upper-layer case with strong
 * stratification and a southern-hemisphere case (negative f0). */
static const two_layer sets[] = {
    {1000.0, 3000.0, 0.02, 9.37e-5},
    {250.0, 4750.0, 0.035, 1.2e-4},
    {1500.0, 1500.0, 0.005, -7.0e-5},
};

static double closed_form_radius(const two_layer *s)
{
    return sqrt(s->gprime * s->H1 * s->H2 / (s->H1 + s->H2)) / fabs(s->f0);
}

START_TEST(radius_matches_closed_form)
{
    const two_layer *s = &sets[_i];
    const double tol = 1e-10;
    tg_status st;
    tg_status_clear(&st);

    double H[2] = {s->H1, s->H2}, g[1] = {s->gprime};
    tg_modes md;
    ck_assert_msg(tg_modes_compute(&md, 2, H, g, s->f0, &st) == TG_OK, "modes: %s", st.msg);

    const double rd = closed_form_radius(s);
    const double r_modes = tg_modes_radius(&md, 1);
    const double e_modes = fabs(r_modes - rd) / rd;

    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.nlayers = 2;
    cfg.thickness_m[0] = s->H1;
    cfg.thickness_m[1] = s->H2;
    cfg.n_reduced_gravity = 1;
    cfg.reduced_gravity_m_s2[0] = s->gprime;
    cfg.coriolis_f0_per_s = s->f0;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_scales sc;
    ck_assert_msg(tg_scales_compute(&cfg, &sc, &st) == TG_OK, "scales: %s", st.msg);
    const double e_scales = fabs(sc.radius_m[1] - rd) / rd;

    /* Mode structure: barotropic uniform, baroclinic with zero depth-integral. */
    const double e_bt = fabs(md.P[0][0] - md.P[1][0]) / fabs(md.P[0][0]);
    const double ratio = md.P[0][1] / md.P[1][1];
    const double e_bc = fabs(ratio + s->H2 / s->H1) / (s->H2 / s->H1);

    printf("val_deformation set %d (H1 %g m, H2 %g m, g' %g, f0 %g): R_d closed form %.6f km, "
           "modes %.6f km (rel. err %.2e), scales %.6f km (rel. err %.2e); F_0 = %g; "
           "P01/P11 = %.12g vs -H2/H1 = %.12g (rel. err %.2e); tolerance %.0e\n",
           _i, s->H1, s->H2, s->gprime, s->f0, rd / 1e3, r_modes / 1e3, e_modes,
           sc.radius_m[1] / 1e3, e_scales, md.F[0], ratio, -s->H2 / s->H1, e_bc, tol);
    fflush(stdout);

    /* Pedlosky 1987 section 6.16 / Vallis 2017 section 5.3 (from memory):
     * R_d = sqrt(g' H1 H2 / H) / |f0|. */
    ck_assert_msg(e_modes < tol, "tg_modes_radius %.12g m vs closed form %.12g m (rel. %.3e)",
                  r_modes, rd, e_modes);
    ck_assert_msg(e_scales < tol, "tg_scales_compute radius %.12g m vs closed form %.12g m (rel. %.3e)",
                  sc.radius_m[1], rd, e_scales);
    /* Same sources: F_1 = f0^2 H/(g' H1 H2) and F_0 = 0 (barotropic). */
    const double F1 = s->f0 * s->f0 * (s->H1 + s->H2) / (s->gprime * s->H1 * s->H2);
    ck_assert_msg(fabs(md.F[1] - F1) / F1 < tol, "F_1 %.12g vs %.12g m-2", md.F[1], F1);
    ck_assert_msg(fabs(md.F[0]) <= tol * F1, "barotropic F_0 = %g m-2 is not zero", md.F[0]);
    /* Same sources: barotropic mode depth-independent, baroclinic mode with
     * H1 P01 + H2 P11 = 0. */
    ck_assert_msg(e_bt < tol, "barotropic mode not depth-independent: P00 %g, P10 %g", md.P[0][0],
                  md.P[1][0]);
    ck_assert_msg(e_bc < tol, "baroclinic mode P01/P11 = %.12g, expected -H2/H1 = %.12g", ratio,
                  -s->H2 / s->H1);
}
END_TEST

static Suite *deformation_suite(void)
{
    Suite *s = suite_create("val_deformation");
    TCase *tc = tcase_create("two_layer_radius");
    tcase_set_timeout(tc, 30);
    tcase_add_loop_test(tc, radius_matches_closed_form, 0, (int)(sizeof sets / sizeof sets[0]));
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(deformation_suite());
}
