/* val_convergence.c - validation: third-order time convergence of the
 * conserved integrals in inviscid, unforced runs.
 *
 * Sources:
 *  - Shu & Osher 1988, "Efficient implementation of essentially
 *    non-oscillatory shock-capturing schemes", J. Comput. Phys. 77, 439-471,
 *    eq. 2.18: the SSP-RK3 scheme is third-order accurate, so the error of a
 *    quantity the semi-discrete system conserves grows as dt^3 over a fixed
 *    interval: halving dt divides the drift by 8.
 *  - Arakawa 1966, "Computational design for long-term numerical
 *    integration of the equations of fluid motion", J. Comput. Phys. 1,
 *    119-143: the Jacobian (J++ + J+x + Jx+)/3 conserves the discrete
 *    energy sum psi J and the enstrophy sum q J.
 *
 * Drift = |X(T) - X(0)| / X(0) over a fixed T = 20 days; three runs with
 * dt, dt/2, dt/4; required: both ratios drift(dt)/drift(dt/2) in [6, 10].
 *
 * Case "two_layer": the set-up: two layers, 65 points, L = 1000 km,
 * beta on, free-slip walls, no wind, drag or viscosity, noise start of
 * 5000 m2/s r.m.s. (CFL 0.5 at the largest step, 0.06 at the smallest).
 *   - Energy drift: ratio in [6, 10].
 *   - Enstrophy: in a closed basin the Arakawa sum over the interior nodes,
 *     sum q J(psi, q), telescopes to pairs of first-row and wall nodes whose
 *     coefficients are differences of psi along the first interior row; it
 *     vanishes only when q = 0 on the walls (derived here; checked in the
 *     case below). With beta (y - y0) on the east and west walls and the
 *     stretching term, the semi-discrete advection changes the enstrophy by
 *     ~8e-4 of Z over 20 days, independent of dt. The model reports that
 *     change as the advective enstrophy rate, so the time-stepping error is
 *     the budget defect Z(T) - Z(0) - sum_steps dt * (advective rate): its
 *     ratio must be in [6, 10] for each layer.
 * Case "one_layer_f_plane": one layer, beta = 0, free slip, so q = 0 on the
 *   walls and the Arakawa Jacobian conserves enstrophy exactly in space:
 *   energy and enstrophy drift ratios both in [6, 10].
 * Every drift must be above 1e-8 relative so that round-off (~1e-13) plays
 * no part.
 *
 * A Check suite with its own main(). Part of twingyre. GPL-3.0-or-later.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "budget.h"
#include "config.h"
#include "model.h"
#include "status.h"
#include "stepper.h"
#include "../unit/unit_util.h"

static const double T_DAYS = 20.0, DT0 = 7200.0, AMP = 5000.0;

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

typedef struct {
    double energy;                   /* |E(T) - E(0)| / E(0) */
    double enstrophy[TG_MAX_LAYERS]; /* |Z(T) - Z(0)| / Z(0) */
    double defect[TG_MAX_LAYERS];    /* |Z(T) - Z(0) - int advective rate| / Z(0) */
    double max_cfl;
    int nl;
} drift;

static drift run_case(int two_layer, double dt)
{
    drift d = {0};
    tg_status st;
    tg_status_clear(&st);
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.size_km = 1000.0;
    cfg.points = 65;
    cfg.wall_condition = TG_WALL_FREE_SLIP;
    if (!two_layer) {
        cfg.nlayers = 1;
        cfg.thickness_m[0] = 4000.0;
        cfg.n_reduced_gravity = 0;
        cfg.beta_per_m_per_s = 0.0;
    }
    cfg.wind_profile = TG_WIND_NONE;
    cfg.stress_amplitude_pa = 0.0;
    cfg.bottom_drag_per_s = 0.0;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 0.0;
    cfg.step_s = dt;
    cfg.duration_days = T_DAYS;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    tg_model_set_noise(m, AMP, 7);
    d.nl = m->nl;

    tg_diag d0, d1;
    tg_diag_compute(m, &d0);
    double adv[TG_MAX_LAYERS] = {0};
    const long n = (long)llround(T_DAYS * 86400.0 / dt);
    for (long s = 0; s < n; s++) {
        tg_term_rates r;
        ck_assert_msg(tg_step(m, &r, &st) == TG_OK, "step %ld: %s", s, st.msg);
        for (int k = 0; k < m->nl; k++)
            adv[k] += dt * r.enstrophy[TG_TERM_ADVECTION][k];
        d.max_cfl = fmax(d.max_cfl, tg_model_max_cfl(m, NULL, NULL, NULL));
    }
    tg_diag_compute(m, &d1);
    ck_assert_msg(isfinite(d1.energy), "non-finite energy at dt = %g", dt);
    d.energy = fabs(d1.energy - d0.energy) / d0.energy;
    for (int k = 0; k < m->nl; k++) {
        d.enstrophy[k] = fabs(d1.enstrophy[k] - d0.enstrophy[k]) / d0.enstrophy[k];
        d.defect[k] = fabs(d1.enstrophy[k] - d0.enstrophy[k] - adv[k]) / d0.enstrophy[k];
    }
    tg_model_destroy(m);
    return d;
}

/* Shu & Osher 1988: drift ratio for dt -> dt/2 in [6, 10] (8 for third order). */
static void check_ratios(const char *what, const double x[3])
{
    for (int h = 0; h < 3; h++)
        ck_assert_msg(x[h] > 1e-8, "%s drift %.3e at halving %d is too close to round-off", what,
                      x[h], h);
    for (int h = 0; h < 2; h++) {
        double ratio = x[h] / x[h + 1];
        ck_assert_msg(ratio >= 6.0 && ratio <= 10.0,
                      "%s: drift ratio %.3f for dt/%d -> dt/%d is outside [6, 10] "
                      "(drifts %.3e, %.3e)",
                      what, ratio, 1 << h, 2 << h, x[h], x[h + 1]);
    }
}

static void report(const char *name, const char *what, const double x[3])
{
    printf("val_convergence %s %s: drift %.4e, %.4e, %.4e at dt = %g, %g, %g s; ratios %.3f, %.3f "
           "(required in [6, 10])\n",
           name, what, x[0], x[1], x[2], DT0, DT0 / 2, DT0 / 4, x[0] / x[1], x[1] / x[2]);
}

START_TEST(two_layer_energy_and_enstrophy_budget)
{
    double t0 = wall_seconds();
    drift d[3];
    for (int h = 0; h < 3; h++)
        d[h] = run_case(1, DT0 / (1 << h));
    double e[3], z[2][3], raw[2][3];
    for (int h = 0; h < 3; h++) {
        e[h] = d[h].energy;
        for (int k = 0; k < 2; k++) {
            z[k][h] = d[h].defect[k];
            raw[k][h] = d[h].enstrophy[k];
        }
    }
    report("two layers", "energy", e);
    report("two layers", "enstrophy budget defect, layer 1", z[0]);
    report("two layers", "enstrophy budget defect, layer 2", z[1]);
    printf("val_convergence two layers: raw enstrophy drift (advection at the walls, not time "
           "error) layer 1 %.3e, %.3e, %.3e; layer 2 %.3e, %.3e, %.3e; max CFL %.3f; %.1f s\n",
           raw[0][0], raw[0][1], raw[0][2], raw[1][0], raw[1][1], raw[1][2], d[0].max_cfl,
           wall_seconds() - t0);
    fflush(stdout);
    check_ratios("two-layer energy", e);
    check_ratios("two-layer enstrophy defect, layer 1", z[0]);
    check_ratios("two-layer enstrophy defect, layer 2", z[1]);
}
END_TEST

START_TEST(one_layer_f_plane_energy_and_enstrophy)
{
    double t0 = wall_seconds();
    drift d[3];
    for (int h = 0; h < 3; h++)
        d[h] = run_case(0, DT0 / (1 << h));
    double e[3], z[3];
    for (int h = 0; h < 3; h++) {
        e[h] = d[h].energy;
        z[h] = d[h].enstrophy[0];
    }
    report("one layer f-plane", "energy", e);
    report("one layer f-plane", "enstrophy", z);
    printf("val_convergence one layer f-plane: max CFL %.3f; %.1f s\n", d[0].max_cfl,
           wall_seconds() - t0);
    fflush(stdout);
    check_ratios("one-layer energy", e);
    check_ratios("one-layer enstrophy", z);
}
END_TEST

static Suite *convergence_suite(void)
{
    Suite *s = suite_create("val_convergence");
    TCase *tc = tcase_create("rk3_order");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, two_layer_energy_and_enstrophy_budget);
    tcase_add_test(tc, one_layer_f_plane_energy_and_enstrophy);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(convergence_suite());
}
