/* val_periodic_invariants.c - validation: conservation of energy and
 * potential enstrophy by the inviscid, unforced model in the doubly
 * periodic geometry, and their drift under time stepping.
 *
 * Sources: Arakawa 1966, "Computational design for long-term numerical
 * integration of the equations of fluid motion: two-dimensional
 * incompressible flow. Part I", J. Comput. Phys. 1, 119-143 (the nine-point
 * Jacobian keeps sum psi J(psi, q) = 0 and sum q J(psi, q) = 0 on a periodic
 * grid, so the semi-discrete model conserves energy and enstrophy exactly);
 * Shu & Osher 1988, J. Comput. Phys. 77, 439-471 (the SSP-RK3 step, third
 * order, so the change of a conserved quantity over a fixed time shrinks
 * like dt^3).
 *
 * Set-up: two layers (1000 m over 3000 m, g' = 0.02, R_d = 39 km), beta =
 * 1.6e-11, no background flow (U = 0), no drag or viscosity, 64 points on
 * 1000 km, a noise start of 5e3 m2/s r.m.s. (energy 0.04 m2 s-2, velocities
 * of tens of cm/s, so advection dominates). With U = 0 the mean-flow term is -beta dpsi_k/dx:
 * its energy rate sum_k H_k psi_k dpsi_k/dx vanishes exactly with the
 * centred difference, and its enstrophy rate moves enstrophy between the
 * layers only: sum_k H_k q_k dpsi_k/dx = f0^2/g' sum (psi_2 dpsi_1/dx +
 * psi_1 dpsi_2/dx) = 0 because H_1 F_1 = H_2 F_2 = f0^2/g'. So the conserved
 * quantities are the energy E and the thickness-weighted enstrophy
 * Z = sum_k H_k Z_k / H (a background shear would make the mean-flow
 * conversion a source; val_periodic_equilibrium checks that budget).
 *
 * Checks:
 * (a) Spatial conservation, Arakawa 1966: at states along the run the
 *     advective energy rate and each layer's advective enstrophy rate
 *     (tg_model_tendency) are zero to round-off, |rate| < 1e-12 times the
 *     Cauchy-Schwarz bound (1/A) ||q_k|| ||J(psi_k, q_k)|| (for the energy,
 *     the H-weighted sum of ||psi_k|| ||J_k||) - unlike the basin, where the
 *     wall PV leaves a first-order term. Likewise the mean-flow energy rate
 *     and the H-weighted sum of its layer enstrophy rates, relative to the
 *     sum of the magnitudes. Threshold: round-off, common practice.
 * (b) Time stepping, Shu & Osher 1988: over 20 days the relative changes of
 *     E and Z with dt = 3600 s (CFL about 0.26), 1800 s and 900 s shrink by
 *     a factor 2^p per halving with the observed order p between 2.5 and
 *     3.5 (third order; the band is common practice), and are below 1e-4 at
 *     the largest step.
 *
 * A Check suite with its own main(). Part of twingyre. GPL-3.0-or-later.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "config.h"
#include "fdops.h"
#include "model.h"
#include "status.h"
#include "stepper.h"
#include "../unit/unit_util.h"

static const double DAYS = 20.0;

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static tg_model *make_model(double dt, tg_status *st)
{
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
    cfg.beta_per_m_per_s = 1.6e-11;
    cfg.n_zonal_velocity = 0;
    cfg.wind_profile = TG_WIND_NONE;
    cfg.stress_amplitude_pa = 0.0;
    cfg.bottom_drag_per_s = 0.0;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 0.0;
    cfg.step_s = dt;
    cfg.duration_days = DAYS;
    ck_assert_msg(tg_config_check(&cfg, NULL, st) == TG_OK, "config: %s", st->msg);
    tg_model *m = tg_model_create(&cfg, st);
    ck_assert_msg(m != NULL, "model: %s", st->msg);
    tg_model_set_noise(m, 5e3, 5);
    return m;
}

/* Thickness-weighted mean enstrophy sum_k H_k Z_k / H. */
static double weighted_enstrophy(tg_model *m)
{
    double z[TG_MAX_LAYERS], s = 0.0;
    tg_model_enstrophy(m, z);
    for (int k = 0; k < m->nl; k++)
        s += m->cfg.thickness_m[k] * z[k];
    return s / m->Htot;
}

typedef struct {
    double adv_energy, adv_enstrophy; /* worst |rate| / bound */
    double mean_energy, mean_enstrophy;
} roundoff_ratios;

/* (a) at the model's current state; jac is npl doubles of work space. */
static void check_spatial(tg_model *m, double *jac, roundoff_ratios *worst)
{
    tg_status st;
    tg_status_clear(&st);
    tg_term_rates r;
    ck_assert_msg(tg_model_tendency(m, 0, &r, &st) == TG_OK, "tendency: %s", st.msg);
    const tg_geometry *g = m->geom;
    double ebound = 0.0, mean_abs = 0.0, mean_sum = 0.0;
    for (int k = 0; k < m->nl; k++) {
        const double *psi = m->psi + k * m->npl, *q = m->q + k * m->npl;
        tg_jacobian(g, psi, q, jac);
        const double jj = tg_sum_prod(g, jac, jac, 0.0, m->rowbuf);
        const double qq = tg_sum_prod(g, q, q, 0.0, m->rowbuf);
        const double pp = tg_sum_prod(g, psi, psi, 0.0, m->rowbuf);
        const double zbound = sqrt(qq * jj) / g->area;
        const double zr = fabs(r.enstrophy[TG_TERM_ADVECTION][k]) / zbound;
        worst->adv_enstrophy = fmax(worst->adv_enstrophy, zr);
        ebound += m->cfg.thickness_m[k] * sqrt(pp * jj) / (m->Htot * g->area);
        const double zm = m->cfg.thickness_m[k] * r.enstrophy[TG_TERM_MEAN_FLOW][k];
        mean_abs += fabs(zm);
        mean_sum += zm;
    }
    worst->adv_energy = fmax(worst->adv_energy, fabs(r.energy[TG_TERM_ADVECTION]) / ebound);
    worst->mean_enstrophy = fmax(worst->mean_enstrophy, fabs(mean_sum) / mean_abs);
    /* Mean-flow energy rate against the advective bound's scale. */
    worst->mean_energy = fmax(worst->mean_energy, fabs(r.energy[TG_TERM_MEAN_FLOW]) / ebound);
}

START_TEST(invariants)
{
    const double t0 = wall_seconds();
    tg_status st;
    tg_status_clear(&st);
    const double dts[3] = {3600.0, 1800.0, 900.0};
    double de[3], dz[3], cfl_max = 0.0, e0 = 0.0, z0 = 0.0;
    roundoff_ratios worst = {0};
    for (int c = 0; c < 3; c++) {
        tg_model *m = make_model(dts[c], &st);
        double *jac = calloc((size_t)m->npl, sizeof(double));
        ck_assert(jac);
        const long nsteps = (long)llround(DAYS * 86400.0 / dts[c]);
        const double E0 = tg_model_energy(m), Z0 = weighted_enstrophy(m);
        for (long s = 1; s <= nsteps; s++) {
            ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
            if (c == 0) {
                cfl_max = fmax(cfl_max, tg_model_max_cfl(m, NULL, NULL, NULL));
                if (s % 48 == 0)
                    check_spatial(m, jac, &worst);
            }
        }
        const double E1 = tg_model_energy(m), Z1 = weighted_enstrophy(m);
        ck_assert_msg(isfinite(E1) && isfinite(Z1), "dt %.0f: non-finite result", dts[c]);
        de[c] = fabs(E1 - E0) / E0;
        dz[c] = fabs(Z1 - Z0) / Z0;
        if (c == 0) {
            e0 = E0;
            z0 = Z0;
        }
        free(jac);
        tg_model_destroy(m);
    }
    const double pe1 = log2(de[0] / de[1]), pe2 = log2(de[1] / de[2]);
    const double pz1 = log2(dz[0] / dz[1]), pz2 = log2(dz[1] / dz[2]);
    printf("val_periodic_invariants: E0 %.4e m2 s-2, Z0 %.4e s-2, max CFL %.3f at dt 3600 s.\n"
           "  (a) round-off ratios (tolerance 1e-12): advection energy %.2e, advection enstrophy "
           "(worst layer) %.2e; mean-flow energy %.2e, H-weighted mean-flow enstrophy %.2e\n"
           "  (b) relative change over %.0f days at dt 3600/1800/900 s: energy %.3e %.3e %.3e "
           "(order %.2f, %.2f), enstrophy %.3e %.3e %.3e (order %.2f, %.2f); tolerance: order "
           "2.5..3.5, change < 1e-4; %.1f s\n",
           e0, z0, cfl_max, worst.adv_energy, worst.adv_enstrophy, worst.mean_energy,
           worst.mean_enstrophy, DAYS, de[0], de[1], de[2], pe1, pe2, dz[0], dz[1], dz[2], pz1,
           pz2, wall_seconds() - t0);
    fflush(stdout);
    /* (a) Arakawa 1966: exact conservation by the spatial discretization. */
    ck_assert_msg(worst.adv_energy < 1e-12, "advective energy rate %.3e of its bound",
                  worst.adv_energy);
    ck_assert_msg(worst.adv_enstrophy < 1e-12, "advective enstrophy rate %.3e of its bound",
                  worst.adv_enstrophy);
    ck_assert_msg(worst.mean_energy < 1e-12, "mean-flow energy rate %.3e with U = 0",
                  worst.mean_energy);
    ck_assert_msg(worst.mean_enstrophy < 1e-12,
                  "H-weighted mean-flow enstrophy rate %.3e of its magnitude with U = 0",
                  worst.mean_enstrophy);
    /* (b) Shu & Osher 1988: third-order drift. */
    ck_assert_msg(de[0] < 1e-4 && dz[0] < 1e-4, "changes at dt 3600 s: energy %.3e, enstrophy %.3e",
                  de[0], dz[0]);
    const double p[4] = {pe1, pe2, pz1, pz2};
    for (int i = 0; i < 4; i++)
        ck_assert_msg(p[i] > 2.5 && p[i] < 3.5, "observed order %.2f (%s, halving %d)", p[i],
                      i < 2 ? "energy" : "enstrophy", i % 2 + 1);
}
END_TEST

static Suite *invariants_suite(void)
{
    Suite *s = suite_create("val_periodic_invariants");
    TCase *tc = tcase_create("inviscid");
    tcase_set_timeout(tc, 180);
    tcase_add_test(tc, invariants);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(invariants_suite());
}
