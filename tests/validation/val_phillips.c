/* val_phillips.c - validation: growth rates of two-layer baroclinic
 * instability (the Phillips problem) in the doubly periodic geometry.
 *
 * Sources: Phillips 1954, "Energy transformations and meridional circulations
 * associated with simple baroclinic waves in a two-level, quasi-geostrophic
 * model", Tellus 6, 273-286; Vallis 2017, Atmospheric and Oceanic Fluid
 * Dynamics, 2nd ed., section 9.6 (the Phillips problem); Pedlosky 1987,
 * Geophysical Fluid Dynamics, 2nd ed., section 7.11 (two-layer model with
 * beta; section numbers from memory). Those texts treat equal layers; the
 * relation for unequal layers used here is derived below from the same
 * linearized equations.
 *
 * Derivation. Layers 1 (top) and 2 of thickness H1, H2, reduced gravity g',
 * F1 = f0^2/(g' H1), F2 = f0^2/(g' H2), uniform background flows U1, U2.
 * Eddy PV q1 = lap psi1 + F1 (psi2 - psi1), q2 = lap psi2 + F2 (psi1 - psi2);
 * background PV gradients Q1 = beta + F1 (U1 - U2), Q2 = beta - F2 (U1 - U2).
 * Linearized about the background (the model's mean-flow term, model.h):
 *   (d/dt + U_k d/dx) q_k + Q_k dpsi_k/dx = 0,  k = 1, 2.
 * With psi_k = Re[a_k exp(i(k x + l y - omega t))], K^2 = k^2 + l^2, c = omega/k:
 *   (U1 - c) [-(K^2 + F1) a1 + F1 a2] + Q1 a1 = 0
 *   (U2 - c) [F2 a1 - (K^2 + F2) a2] + Q2 a2 = 0.
 * The determinant vanishes when, using (K^2+F1)(K^2+F2) - F1 F2 = K^2 (K^2+F1+F2),
 *   A c^2 + B c + C = 0,
 *   A = K^2 (K^2 + F1 + F2),
 *   B = -A (U1 + U2) + Q1 (K^2 + F2) + Q2 (K^2 + F1),
 *   C = A U1 U2 - Q1 U2 (K^2 + F2) - Q2 U1 (K^2 + F1) + Q1 Q2.
 * When B^2 < 4 A C the roots are complex and the growing one has the
 * growth rate sigma = k Im(c) = k sqrt(4 A C - B^2) / (2 A). (For H1 = H2
 * this is the textbook relation; a necessary condition for growth is that
 * Q1 and Q2 have opposite signs, i.e. U1 - U2 > beta/F2 for U1 > U2.)
 *
 * Checks (no dissipation, tiny amplitude, linear regime):
 * (a) supercritical shear (U1 - U2 = 0.3 m/s, 3.1 times beta/F2): a wave
 *     (k, 0) put in the upper layer only excites the growing and the
 *     decaying normal mode; after the decaying one has died away the
 *     perturbation energy grows as exp(2 sigma t). The growth rate measured
 *     from a least-squares line through log E over sigma t in [4, 10] (the
 *     window is common practice; at sigma t = 4 the decaying mode's share of
 *     the amplitude is e^-8) must be within 2 % of sigma above, for four
 *     zonal wavenumbers including the most unstable one of the domain.
 * (b) subcritical shear (U1 - U2 = 0.06 m/s, 0.63 of beta/F2; Q1, Q2 > 0,
 *     so every wavevector is stable): from small random noise the
 *     perturbation energy stays below 3 times its initial value for 300 days,
 *     where a mode growing at a tenth of the slowest supercritical rate
 *     tested would have multiplied it by 33 (bound: common practice).
 * With 128 points on 2000 km (k dx <= 0.3) the model's centred x-difference
 * and five-point Laplacian (K^2 -> (4/dx^2)(sin^2(k dx/2) + sin^2(l dx/2)),
 * k -> sin(k dx)/dx in the relation) change sigma by less than 0.8 % for
 * these waves; the test prints that value too.
 *
 * A Check suite with its own main(). Part of twingyre. GPL-3.0-or-later.
 */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "config.h"
#include "model.h"
#include "status.h"
#include "stepper.h"
#include "../unit/unit_util.h"

static const double PI = 3.14159265358979323846;

enum { POINTS = 128 };
static const double SIZE_KM = 2000.0;
static const double F0 = 1.0e-4, BETA = 1.6e-11, GPRIME = 0.02, H1 = 1000.0, H2 = 3000.0;

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Growth rate k_eff Im(c) of the relation in the header (0 when stable). */
static double phillips_growth(double keff, double K2, double U1, double U2, double F1, double F2)
{
    const double Q1 = BETA + F1 * (U1 - U2), Q2 = BETA - F2 * (U1 - U2);
    const double A = K2 * (K2 + F1 + F2);
    const double B = -A * (U1 + U2) + Q1 * (K2 + F2) + Q2 * (K2 + F1);
    const double C = A * U1 * U2 - Q1 * U2 * (K2 + F2) - Q2 * U1 * (K2 + F1) + Q1 * Q2;
    const double complex root = (-B + csqrt((double complex)(B * B - 4.0 * A * C))) / (2.0 * A);
    return keff * fabs(cimag(root));
}

static tg_config make_config(double U1, double U2, double step_s, double days)
{
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.geometry = TG_GEOM_PERIODIC;
    cfg.size_km = SIZE_KM;
    cfg.points = POINTS;
    cfg.nlayers = 2;
    cfg.thickness_m[0] = H1;
    cfg.thickness_m[1] = H2;
    cfg.n_reduced_gravity = 1;
    cfg.reduced_gravity_m_s2[0] = GPRIME;
    cfg.coriolis_f0_per_s = F0;
    cfg.beta_per_m_per_s = BETA;
    cfg.n_zonal_velocity = 2;
    cfg.zonal_velocity_m_s[0] = U1;
    cfg.zonal_velocity_m_s[1] = U2;
    cfg.wind_profile = TG_WIND_NONE;
    cfg.stress_amplitude_pa = 0.0;
    cfg.bottom_drag_per_s = 0.0;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 0.0;
    cfg.step_s = step_s;
    cfg.duration_days = days;
    return cfg;
}

/* F1, F2 from the model's stretching matrix, checked against f0^2/(g' H). */
static void model_F(const tg_model *m, double *F1, double *F2)
{
    *F1 = m->modes.S[0][1];
    *F2 = m->modes.S[1][0];
    ck_assert_msg(fabs(*F1 - F0 * F0 / (GPRIME * H1)) < 1e-12 * *F1 &&
                      fabs(*F2 - F0 * F0 / (GPRIME * H2)) < 1e-12 * *F2,
                  "stretching matrix: F1 = %.6e, F2 = %.6e", *F1, *F2);
}

/* (a) Supercritical shear: zonal wavenumber n (k = 2 pi n / L, l = 0). */
static const int wavenumbers[] = {3, 4, 5, 6};
static const double U1_SUPER = 0.225, U2_SUPER = -0.075;

START_TEST(growth_rate)
{
    const int n = wavenumbers[_i];
    tg_status st;
    tg_status_clear(&st);
    const double t0 = wall_seconds();
    const double L = SIZE_KM * 1e3, k = 2.0 * PI * n / L;
    const double F1 = F0 * F0 / (GPRIME * H1), F2 = F0 * F0 / (GPRIME * H2);
    const double sigma = phillips_growth(k, k * k, U1_SUPER, U2_SUPER, F1, F2);
    ck_assert_msg(sigma > 0.0, "wavenumber %d is not unstable by the formula", n);
    const double dt = 10800.0;
    const double t_end = 10.0 / sigma, t_begin = 4.0 / sigma;
    const long nsteps = (long)ceil(t_end / dt);

    tg_config cfg = make_config(U1_SUPER, U2_SUPER, dt, nsteps * dt / 86400.0);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    double mF1, mF2;
    model_F(m, &mF1, &mF2);
    const double dx = m->geom->dx;
    const double K2d = 4.0 / (dx * dx) * pow(sin(0.5 * k * dx), 2);
    const double sigma_d = phillips_growth(sin(k * dx) / dx, K2d, U1_SUPER, U2_SUPER, mF1, mF2);

    const int no = m->nout;
    const long n2 = (long)no * no;
    const double *xc = tg_model_out_coord(m);
    double *psi0 = calloc((size_t)2 * n2, sizeof(double));
    ck_assert(psi0);
    for (int j = 0; j < no; j++)
        for (int i = 0; i < no; i++)
            psi0[(long)j * no + i] = 1e-3 * cos(k * xc[i]); /* upper layer only, m2 s-1 */
    tg_model_set_psi(m, psi0);
    free(psi0);

    /* Least-squares line through log E(t) on the window. */
    double s_t = 0, s_tt = 0, s_y = 0, s_ty = 0;
    long cnt = 0;
    for (long s = 1; s <= nsteps; s++) {
        ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
        const double t = s * dt;
        if (t < t_begin)
            continue;
        const double E = tg_model_energy(m);
        ck_assert_msg(isfinite(E) && E > 0.0, "step %ld: energy %g", s, E);
        const double y = log(E);
        s_t += t;
        s_tt += t * t;
        s_y += y;
        s_ty += t * y;
        cnt++;
    }
    const double nn = (double)cnt;
    const double slope = (nn * s_ty - s_t * s_y) / (nn * s_tt - s_t * s_t);
    const double measured = 0.5 * slope;
    const double rel = fabs(measured - sigma) / sigma;
    printf("val_phillips k = 2 pi %d / L (k R_d = %.2f): sigma formula %.5e s-1 (e-folding %.2f "
           "days), measured %.5e s-1 over %.0f..%.0f days, rel. error %.3e (tolerance 2e-2); "
           "formula with the discrete operators %.5e (%+.2e); final energy %.3e m2 s-2; "
           "%ld steps of %.0f s; %.1f s\n",
           n, k / sqrt(F1 + F2), sigma, 1.0 / sigma / 86400.0, measured, t_begin / 86400.0,
           nsteps * dt / 86400.0, rel, sigma_d, sigma_d / sigma - 1.0, tg_model_energy(m), nsteps,
           dt, wall_seconds() - t0);
    fflush(stdout);
    /* Phillips 1954; Vallis 2017 section 9.6; unequal layers as derived above. */
    ck_assert_msg(rel < 2e-2, "n = %d: measured growth rate %.5e, formula %.5e (rel. error %.3e)",
                  n, measured, sigma, rel);
    tg_model_destroy(m);
}
END_TEST

/* (b) Subcritical shear: bounded perturbation energy. */
START_TEST(subcritical_stays_bounded)
{
    tg_status st;
    tg_status_clear(&st);
    const double t0 = wall_seconds();
    const double U1 = 0.045, U2 = -0.015, dt = 14400.0, days = 300.0;
    const double L = SIZE_KM * 1e3;
    const double F1 = F0 * F0 / (GPRIME * H1), F2 = F0 * F0 / (GPRIME * H2);
    /* Every wavevector of the grid is stable by the formula. */
    double worst = 0.0;
    for (int a = 0; a <= POINTS / 2; a++)
        for (int b = -POINTS / 2; b <= POINTS / 2; b++) {
            if (a == 0 && b == 0)
                continue;
            const double k = 2.0 * PI * a / L, l = 2.0 * PI * b / L;
            worst = fmax(worst, phillips_growth(k, k * k + l * l, U1, U2, F1, F2));
        }
    ck_assert_msg(worst == 0.0, "the subcritical case has a growing wave by the formula (%g)",
                  worst);
    /* The reference: the slowest of the supercritical growth rates tested. */
    double sig_ref = INFINITY;
    for (size_t i = 0; i < sizeof wavenumbers / sizeof wavenumbers[0]; i++) {
        const double k = 2.0 * PI * wavenumbers[i] / L;
        sig_ref = fmin(sig_ref, phillips_growth(k, k * k, U1_SUPER, U2_SUPER, F1, F2));
    }

    const long nsteps = (long)llround(days * 86400.0 / dt);
    tg_config cfg = make_config(U1, U2, dt, days);
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    double mF1, mF2;
    model_F(m, &mF1, &mF2);
    tg_model_set_noise(m, 1e-3, 7);
    const double E0 = tg_model_energy(m);
    ck_assert(E0 > 0.0);
    double emax = E0, emin = E0;
    for (long s = 1; s <= nsteps; s++) {
        ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
        const double E = tg_model_energy(m);
        ck_assert_msg(isfinite(E), "step %ld: energy %g", s, E);
        emax = fmax(emax, E);
        emin = fmin(emin, E);
    }
    const double growth10 = exp(2.0 * 0.1 * sig_ref * days * 86400.0);
    printf("val_phillips subcritical (U1 - U2 = %.3f m/s, beta/F2 = %.3f m/s): energy %.4f..%.4f "
           "of its initial value over %.0f days (bound 3; a mode at 0.1 of the slowest "
           "supercritical rate would give %.0f); %ld steps; %.1f s\n",
           U1 - U2, BETA / F2, emin / E0, emax / E0, days, growth10, nsteps,
           wall_seconds() - t0);
    fflush(stdout);
    ck_assert_msg(emax < 3.0 * E0, "subcritical perturbation energy grew to %.3f times its initial "
                  "value", emax / E0);
    tg_model_destroy(m);
}
END_TEST

static Suite *phillips_suite(void)
{
    Suite *s = suite_create("val_phillips");
    TCase *tc = tcase_create("phillips");
    tcase_set_timeout(tc, 180);
    tcase_add_loop_test(tc, growth_rate, 0, (int)(sizeof wavenumbers / sizeof wavenumbers[0]));
    tcase_add_test(tc, subcritical_stays_bounded);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(phillips_suite());
}
