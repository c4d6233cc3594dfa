/* val_periodic_equilibrium.c - validation: a forced-dissipative periodic
 * two-layer run reaches statistical equilibrium and its energy and enstrophy
 * budgets close at every step.
 *
 * Set-up (the physics of configs/eddies-64.ini, started from stronger noise
 * so that the run is short): two layers (1000 m over 3000 m, g' = 0.02,
 * f0 = 1e-4, R_d = 38.7 km), beta = 2e-11, imposed shear U = 0.15, -0.05 m/s
 * (1.67 times the Phillips critical shear beta/F2 = 0.12 m/s; Phillips 1954,
 * Tellus 6, 273-286), bottom drag 2e-6 s-1, biharmonic viscosity 2e10 m4/s,
 * 64 points on 1000 km, dt = 1500 s (CFL below about 0.33 at equilibrium),
 * 720 days from noise of 3e3 m2/s r.m.s. (energy 0.014 m2 s-2, rising to
 * about 0.085 by day 300). The baroclinic instability of the
 * imposed shear releases available potential energy (the mean-flow
 * conversion) that the drag and the viscosity remove.
 *
 * Each step is accounted as src/experiments/run.c does: tg_diag_compute before and
 * after tg_step, whose rates are the SSP-RK3-weighted term rates.
 * (a) Budget closure, every step (threshold of the issue; common practice):
 *       |(E^{n+1} - E^n)/dt - sum of the energy terms| < 1e-3 max |term|,
 *     the same for each layer's enstrophy, and tg_budget_relative_residual
 *     agrees.
 * (b) Statistical equilibrium over the second half of the run (days
 *     360-720); criteria of common practice, not from a publication:
 *     - the means of the energy over the third and fourth quarters differ by
 *       less than 30 % of their average;
 *     - the least-squares linear trend of the energy over the second half,
 *       times its length, is less than 50 % of the mean;
 *     - the time-mean energy tendency over the second half is less than 15 %
 *       of the time-mean mean-flow conversion, which is positive (the energy
 *       source balances the drag and the viscosity).
 *     The thresholds allow for the slow natural variability of a domain that
 *     holds only some ten eddies: over the 220 overlapping 300-day windows
 *     (slightly shorter than the 360 days here) of the equilibrated part of
 *     a 3000-day run of configs/eddies-64.ini the largest values were 0.25,
 *     0.39 and 0.094 (measured when the test was written), so another
 *     platform's (chaotic) trajectory should pass too. A window that still
 *     contains the spin-up fails them: in that run, started from weaker
 *     noise, every window starting before day 300 failed at least one.
 * The run must also stay finite with CFL below 0.5.
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

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* |tendency - sum of terms| / max |term| for energy (k = -1) or layer k. */
static double relative_residual(const tg_diag *b, const tg_diag *a, const tg_term_rates *r,
                                double dt, int k)
{
    double big = 0.0, sum = 0.0;
    for (int t = 0; t < TG_NTERMS; t++) {
        const double v = k < 0 ? r->energy[t] : r->enstrophy[t][k];
        big = fmax(big, fabs(v));
        sum += v;
    }
    const double tend =
        k < 0 ? (a->energy - b->energy) / dt : (a->enstrophy[k] - b->enstrophy[k]) / dt;
    return fabs(tend - sum) / big;
}

START_TEST(equilibrates_and_budget_closes)
{
    const double t0 = wall_seconds();
    tg_status st;
    tg_status_clear(&st);
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.geometry = TG_GEOM_PERIODIC;
    cfg.size_km = 1000.0;
    cfg.points = 64;
    cfg.nlayers = 2;
    cfg.thickness_m[0] = 1000.0;
    cfg.thickness_m[1] = 3000.0;
    cfg.n_reduced_gravity = 1;
    cfg.reduced_gravity_m_s2[0] = 0.02;
    cfg.coriolis_f0_per_s = 1.0e-4;
    cfg.beta_per_m_per_s = 2.0e-11;
    cfg.n_zonal_velocity = 2;
    cfg.zonal_velocity_m_s[0] = 0.15;
    cfg.zonal_velocity_m_s[1] = -0.05;
    cfg.wind_profile = TG_WIND_NONE;
    cfg.stress_amplitude_pa = 0.0;
    cfg.bottom_drag_per_s = 2.0e-6;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 2.0e10;
    cfg.step_s = 1500.0;
    cfg.duration_days = 720.0;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    ck_assert_msg(m->term_active[TG_TERM_MEAN_FLOW], "the mean-flow term is not active");
    tg_model_set_noise(m, 3e3, 3);
    const int nl = m->nl;
    const double dt = m->dt;
    const long nsteps = (long)llround(cfg.duration_days * 86400.0 / dt);

    double *energy = malloc(sizeof(double) * (size_t)(nsteps + 1));
    ck_assert(energy);
    tg_diag before, after;
    tg_term_rates rates;
    tg_diag_compute(m, &before);
    energy[0] = before.energy;
    double worst_e = 0.0, worst_z = 0.0, worst_cfl = 0.0;
    long at_e = 0, at_z = 0;
    double sum_tend = 0.0, sum_conv = 0.0, sum_drag = 0.0, sum_visc = 0.0;
    long nsecond = 0;
    for (long s = 1; s <= nsteps; s++) {
        ck_assert_msg(tg_step(m, &rates, &st) == TG_OK, "step %ld: %s", s, st.msg);
        tg_diag_compute(m, &after);
        ck_assert_msg(isfinite(after.energy), "non-finite energy at step %ld", s);
        worst_cfl = fmax(worst_cfl, after.max_cfl);
        ck_assert_msg(after.max_cfl < 0.5, "step %ld: CFL %.3f", s, after.max_cfl);
        energy[s] = after.energy;

        /* (a) budget closure, every step. */
        const double re = relative_residual(&before, &after, &rates, dt, -1);
        double rz = 0.0;
        for (int k = 0; k < nl; k++)
            rz = fmax(rz, relative_residual(&before, &after, &rates, dt, k));
        if (re > worst_e) {
            worst_e = re;
            at_e = s;
        }
        if (rz > worst_z) {
            worst_z = rz;
            at_z = s;
        }
        double lib_e, lib_z;
        tg_budget_relative_residual(nl, dt, &before, &after, &rates, &lib_e, &lib_z);
        ck_assert_msg(fabs(lib_e - re) <= 1e-9 * fmax(re, 1e-12) + 1e-15 &&
                          fabs(lib_z - rz) <= 1e-9 * fmax(rz, 1e-12) + 1e-15,
                      "step %ld: tg_budget_relative_residual %.6e/%.6e, here %.6e/%.6e", s, lib_e,
                      lib_z, re, rz);
        ck_assert_msg(re < 1e-3, "step %ld: energy residual %.3e of the largest term", s, re);
        ck_assert_msg(rz < 1e-3, "step %ld: enstrophy residual %.3e of the largest term", s, rz);

        if (2 * s > nsteps) {
            sum_tend += (after.energy - before.energy) / dt;
            sum_conv += rates.energy[TG_TERM_MEAN_FLOW];
            sum_drag += rates.energy[TG_TERM_BOTTOM_DRAG];
            sum_visc += rates.energy[TG_TERM_VISCOSITY];
            nsecond++;
        }
        before = after;
    }

    /* (b) statistical equilibrium over the second half. */
    const long q2 = nsteps / 2, q3 = 3 * nsteps / 4;
    double m3 = 0.0, m4 = 0.0;
    for (long s = q2 + 1; s <= q3; s++)
        m3 += energy[s];
    for (long s = q3 + 1; s <= nsteps; s++)
        m4 += energy[s];
    m3 /= (double)(q3 - q2);
    m4 /= (double)(nsteps - q3);
    double st_t = 0, st_tt = 0, st_y = 0, st_ty = 0;
    for (long s = q2 + 1; s <= nsteps; s++) {
        const double t = s * dt, y = energy[s];
        st_t += t;
        st_tt += t * t;
        st_y += y;
        st_ty += t * y;
    }
    const double nn = (double)(nsteps - q2);
    const double slope = (nn * st_ty - st_t * st_y) / (nn * st_tt - st_t * st_t);
    const double mean2 = st_y / nn;
    const double quarter_diff = fabs(m4 - m3) / (0.5 * (m3 + m4));
    const double trend = fabs(slope) * (nsteps - q2) * dt / mean2;
    const double mtend = sum_tend / nsecond, mconv = sum_conv / nsecond;
    const double tend_share = fabs(mtend) / mconv;
    printf("val_periodic_equilibrium %ld steps of %.0f s: energy day 0 %.4e, quarter means 3/4 "
           "%.4e %.4e m2 s-2 (difference %.3f, tolerance 0.3); trend over the second half %.3f "
           "of the mean (tolerance 0.5); second-half mean rates: tendency %.3e, mean-flow "
           "conversion %.3e, drag %.3e, viscosity %.3e m2 s-3 (|tendency|/conversion %.3f, "
           "tolerance 0.15); worst relative residual: energy %.2e (step %ld), enstrophy %.2e "
           "(step %ld), tolerance 1e-3; max CFL %.3f; %.1f s\n",
           nsteps, dt, energy[0], m3, m4, quarter_diff, trend, mtend, mconv, sum_drag / nsecond,
           sum_visc / nsecond, tend_share, worst_e, at_e, worst_z, at_z, worst_cfl,
           wall_seconds() - t0);
    fflush(stdout);
    ck_assert_msg(quarter_diff < 0.3, "energy means of the last two quarters differ by %.3f",
                  quarter_diff);
    ck_assert_msg(trend < 0.5, "energy trend over the second half is %.3f of the mean", trend);
    ck_assert_msg(mconv > 0.0, "the mean-flow conversion is not a source (%.3e)", mconv);
    ck_assert_msg(tend_share < 0.15, "mean energy tendency is %.3f of the conversion",
                  tend_share);
    free(energy);
    tg_model_destroy(m);
}
END_TEST

static Suite *equilibrium_suite(void)
{
    Suite *s = suite_create("val_periodic_equilibrium");
    TCase *tc = tcase_create("forced_dissipative");
    tcase_set_timeout(tc, 240);
    tcase_add_test(tc, equilibrates_and_budget_closes);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(equilibrium_suite());
}
