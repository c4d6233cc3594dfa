/* val_budget.c - validation: closure of the per-step energy and enstrophy
 * budgets and the mass constraint in a forced, nonlinear two-layer run.
 *
 * Set-up: two layers (1000 m over 3000 m, g' = 0.02), 129 points in a
 * 3840 km basin (dx = 30 km, R_d = 41 km), double-gyre wind of 0.2 Pa,
 * bottom drag 1e-7 s-1, viscosity 200 m2/s, free-slip walls, noise start of
 * 2e4 m2/s r.m.s. (velocities of tens of cm/s, so advection dominates the
 * PV tendency), dt = 1800 s, 60 days.
 *
 * Each step is accounted as src/experiments/run.c does: tg_diag_compute before and
 * after tg_step, whose rates are the SSP-RK3-weighted term rates.
 * (a) Budget closure, every step (common practice: the threshold 1e-3 of
 *     the largest term is the issue's, not a published value):
 *       |(E^{n+1} - E^n)/dt - sum of the energy terms| < 1e-3 max |term|,
 *     and the same for each layer's potential enstrophy. The residual is
 *     computed here from the diagnostics and must agree with
 *     tg_budget_relative_residual and with the residual of the packed
 *     record (tg_budget_pack).
 * (b) Mass constraint (McWilliams 1977, "A note on a consistent
 *     quasigeostrophic model in a multiply connected domain", Dyn. Atmos.
 *     Oceans 1, 427-441): the domain integral of psi_1 - psi_2 vanishes;
 *     |mass_error| < 1e-10 every step (round-off level; common practice).
 * The run must also stay finite with CFL below 1.
 *
 * A Check suite with its own main(). Part of twingyre. GPL-3.0-or-later.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
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
    double big = 0.0, sum = 0.0, tend;
    for (int t = 0; t < TG_NTERMS; t++) {
        double v = k < 0 ? r->energy[t] : r->enstrophy[t][k];
        big = fmax(big, fabs(v));
        sum += v;
    }
    tend = k < 0 ? (a->energy - b->energy) / dt : (a->enstrophy[k] - b->enstrophy[k]) / dt;
    return fabs(tend - sum) / big;
}

START_TEST(budget_closes_every_step)
{
    double t0 = wall_seconds();
    tg_status st;
    tg_status_clear(&st);
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.size_km = 3840.0;
    cfg.points = 129;
    cfg.wall_condition = TG_WALL_FREE_SLIP;
    cfg.nlayers = 2;
    cfg.thickness_m[0] = 1000.0;
    cfg.thickness_m[1] = 3000.0;
    cfg.n_reduced_gravity = 1;
    cfg.reduced_gravity_m_s2[0] = 0.02;
    cfg.coriolis_f0_per_s = 9.37e-5;
    cfg.beta_per_m_per_s = 1.75e-11;
    cfg.wind_profile = TG_WIND_DOUBLE_GYRE;
    cfg.stress_amplitude_pa = 0.2;
    cfg.bottom_drag_per_s = 1e-7;
    cfg.viscosity_m2_per_s = 200.0;
    cfg.hyperviscosity_m4_per_s = 0.0;
    cfg.step_s = 1800.0;
    cfg.duration_days = 60.0;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    tg_model_set_noise(m, 2e4, 11);
    const int nl = m->nl;
    const double dt = m->dt;
    const long nsteps = (long)llround(cfg.duration_days * 86400.0 / dt);

    tg_diag before, after;
    tg_term_rates rates;
    tg_diag_compute(m, &before);
    double rec[64];
    tg_budget_layout lay;
    tg_budget_layout_init(&lay, nl, m->term_active);
    ck_assert_int_le(lay.n, 64);
    int ires_e = -1, ires_z = -1;
    for (int v = 0; v < lay.n; v++) {
        if (strcmp(lay.name[v], "energy_residual") == 0)
            ires_e = v;
        if (strcmp(lay.name[v], "enstrophy_residual") == 0)
            ires_z = v;
    }
    ck_assert_msg(ires_e >= 0 && ires_z >= 0, "budget layout has no residual variables");
    /* Offsets in the packed record: per-layer variables take nl slots. */
    int off_e = 0, off_z = 0;
    for (int v = 0; v < ires_e; v++)
        off_e += lay.var[v].per_layer == 1 ? nl : lay.var[v].per_layer == 2 ? nl - 1 : 1;
    for (int v = 0; v < ires_z; v++)
        off_z += lay.var[v].per_layer == 1 ? nl : lay.var[v].per_layer == 2 ? nl - 1 : 1;

    double worst_e = 0.0, worst_z[TG_MAX_LAYERS] = {0}, worst_mass = 0.0, worst_cfl = 0.0;
    long at_e = 0, at_z = 0;
    double adv_share = 0.0; /* largest |advective enstrophy rate| / max |term|, layer 1 */
    for (long s = 1; s <= nsteps; s++) {
        ck_assert_msg(tg_step(m, &rates, &st) == TG_OK, "step %ld: %s", s, st.msg);
        tg_diag_compute(m, &after);
        ck_assert_msg(isfinite(after.energy), "non-finite energy at step %ld", s);
        worst_cfl = fmax(worst_cfl, after.max_cfl);

        double re = relative_residual(&before, &after, &rates, dt, -1);
        if (re > worst_e) {
            worst_e = re;
            at_e = s;
        }
        double rz_max = 0.0;
        for (int k = 0; k < nl; k++) {
            double rz = relative_residual(&before, &after, &rates, dt, k);
            rz_max = fmax(rz_max, rz);
            if (rz > worst_z[k]) {
                worst_z[k] = rz;
                at_z = s;
            }
        }
        {
            double big = 0.0;
            for (int t = 0; t < TG_NTERMS; t++)
                big = fmax(big, fabs(rates.enstrophy[t][0]));
            adv_share = fmax(adv_share, fabs(rates.enstrophy[TG_TERM_ADVECTION][0]) / big);
        }
        /* The library's residuals agree with this one. */
        double lib_e, lib_z;
        tg_budget_relative_residual(nl, dt, &before, &after, &rates, &lib_e, &lib_z);
        ck_assert_msg(fabs(lib_e - re) <= 1e-9 * fmax(re, 1e-12) + 1e-15 &&
                          fabs(lib_z - rz_max) <= 1e-9 * fmax(rz_max, 1e-12) + 1e-15,
                      "step %ld: tg_budget_relative_residual %.6e/%.6e, here %.6e/%.6e", s, lib_e,
                      lib_z, re, rz_max);
        int n = tg_budget_pack(&lay, dt, &before, &after, &rates, rec);
        ck_assert_int_le(n, 64);
        double sum = 0.0;
        for (int t = 0; t < TG_NTERMS; t++)
            sum += rates.energy[t];
        double res_e = (after.energy - before.energy) / dt - sum;
        ck_assert_msg(rec[off_e] == res_e, "step %ld: packed energy_residual %.17g, expected %.17g",
                      s, rec[off_e], res_e);
        for (int k = 0; k < nl; k++) {
            double sz = 0.0;
            for (int t = 0; t < TG_NTERMS; t++)
                sz += rates.enstrophy[t][k];
            double res_z = (after.enstrophy[k] - before.enstrophy[k]) / dt - sz;
            ck_assert_msg(rec[off_z + k] == res_z,
                          "step %ld: packed enstrophy_residual[%d] %.17g, expected %.17g", s, k,
                          rec[off_z + k], res_z);
        }

        /* (a) budget closure, every step. */
        ck_assert_msg(re < 1e-3, "step %ld: energy residual %.3e of the largest term", s, re);
        for (int k = 0; k < nl; k++)
            ck_assert_msg(relative_residual(&before, &after, &rates, dt, k) < 1e-3,
                          "step %ld: enstrophy residual of layer %d is %.3e of the largest term",
                          s, k + 1, relative_residual(&before, &after, &rates, dt, k));
        /* (b) mass constraint, McWilliams 1977. */
        for (int i = 0; i + 1 < nl; i++) {
            worst_mass = fmax(worst_mass, fabs(after.mass_error[i]));
            ck_assert_msg(fabs(after.mass_error[i]) < 1e-10, "step %ld: mass error %.3e at interface %d",
                          s, after.mass_error[i], i + 1);
        }
        ck_assert_msg(after.max_cfl < 1.0, "step %ld: CFL %.3f", s, after.max_cfl);
        before = after;
    }
    double ke[TG_MAX_LAYERS];
    tg_model_kinetic_energy(m, ke);
    printf("val_budget %ld steps of %.0f s: worst energy residual %.3e (step %ld), worst enstrophy "
           "residual layer 1 %.3e, layer 2 %.3e (last worst at step %ld), tolerance 1e-3 of the "
           "largest term; worst |mass_error| %.2e (tolerance 1e-10); max CFL %.3f; largest "
           "advective share of the layer-1 enstrophy terms %.3f; final KE %.4g, %.4g m2/s2; %.1f s\n",
           nsteps, dt, worst_e, at_e, worst_z[0], worst_z[1], at_z, worst_mass, worst_cfl,
           adv_share, ke[0], ke[1], wall_seconds() - t0);
    fflush(stdout);
    tg_model_destroy(m);
}
END_TEST

static Suite *budget_suite(void)
{
    Suite *s = suite_create("val_budget");
    TCase *tc = tcase_create("forced_two_layer");
    tcase_set_timeout(tc, 180);
    tcase_add_test(tc, budget_closes_every_step);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(budget_suite());
}
