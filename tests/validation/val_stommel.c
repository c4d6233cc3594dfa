/* val_stommel.c - validation: the steady Stommel gyre against its exact solution.
 *
 * Source: Stommel 1948, "The westward intensification of wind-driven ocean
 * currents", Trans. Am. Geophys. Union 29, 202-206 (the linear basin with
 * bottom friction and its closed-form solution); the same solution in
 * Pedlosky 1996, Ocean Circulation Theory, chapter 2, and Vallis 2017,
 * Atmospheric and Oceanic Fluid Dynamics, 2nd ed., chapter 19 (section and
 * equation numbers from memory; the solution below is re-derived for the
 * sign conventions of src/model/model.h).
 *
 * One layer, no advection in practice (a tiny wind, tau0 = 1e-5 Pa: the
 * inertial ratio U/(beta delta_S^2) is ~1e-4), no viscosity, bottom drag r. The model's PV
 * equation dq/dt = -J(psi, q) + curl tau/(rho0 H) - r lap psi with
 * q = lap psi + beta (y - y0) is, at steady state and linearized,
 *   beta dpsi/dx + r lap psi = W(y),   psi = 0 on the walls,
 * with the single-gyre wind tau_x = -tau0 cos(pi y/L):
 *   W = curl tau/(rho0 H) = -W0 sin(pi y/L),  W0 = tau0 pi/(L rho0 H).
 * With a = pi/L and psi = sin(a y) X(x):
 *   r X'' + beta X' - r a^2 X = -W0,
 *   X = (W0/(r a^2)) (1 + p e^{s1 x} + q e^{s2 x}),
 *   s1,2 = (-beta +- sqrt(beta^2 + 4 r^2 a^2)) / (2 r),
 *   1 + p + q = 0,  1 + p e^{s1 L} + q e^{s2 L} = 0.
 *
 * The drag damps every deviation from the steady state at the rate r
 * exactly (one layer: (d/dt + r) lap psi' + beta psi'_x = 0), so after
 * 25/r the transient is ~e^-25 of the initial one. Required: relative L2
 * error below 2 % with the Stommel layer r/beta resolved by 3.7 points
 * (L = 2000 km, 129 points, r = 1e-6 s-1, beta = 1.75e-11 m-1 s-1). The
 * steady state of the time stepper is the exact discrete steady state, so
 * the error is the spatial discretization error of the model. The error at
 * 65 points must be larger (about 4x for a second-order scheme; required
 * > 2x), so the agreement is not an accident of one resolution.
 *
 * The spin-up starts from rest set explicitly with tg_model_set_psi(0). A
 * second, small check ("rest_state") verifies what src/experiments/run.c relies on for
 * [initial] state = rest: tg_model_create leaves psi = 0 and zero energy
 * (model.h; common practice, no published value).
 *
 * A Check suite with its own main(). Part of twingyre. GPL-3.0-or-later.
 */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <time.h>

#include "config.h"
#include "model.h"
#include "status.h"
#include "run_steps.h"
#include "stepper.h"
#include "../unit/unit_util.h"

static const double PI = 3.14159265358979323846;

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

typedef struct {
    double l2;          /* relative L2 error against the exact solution */
    double steady;      /* relative change over the last 1/r */
    double psi_max, exact_max;
    double x_max_km, exact_x_max_km;
    double runtime;
    double dt_min, dt_max; /* the steps taken */
} stommel_result;

static const double L_KM = 2000.0, R_DRAG = 1e-6, BETA = 1.75e-11, TAU0 = 1e-5, RHO0 = 1030.0,
                    H = 4000.0;

static stommel_result run_stommel(int points, int adaptive)
{
    stommel_result res = {.dt_min = INFINITY};
    double t0 = wall_seconds();
    tg_status st;
    tg_status_clear(&st);
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.size_km = L_KM;
    cfg.points = points;
    cfg.wall_condition = TG_WALL_FREE_SLIP;
    cfg.nlayers = 1;
    cfg.thickness_m[0] = H;
    cfg.n_reduced_gravity = 0;
    cfg.beta_per_m_per_s = BETA;
    cfg.wind_profile = TG_WIND_SINGLE_GYRE;
    cfg.stress_amplitude_pa = TAU0;
    cfg.reference_density_kg_m3 = RHO0;
    cfg.bottom_drag_per_s = R_DRAG;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 0.0;
    /* Gravest barotropic Rossby frequency beta/(2K) ~ 4e-6 s-1: a 6-hour
     * step resolves it (omega dt ~ 0.09); 25/r is 290 days. */
    cfg.step_s = 21600.0;
    cfg.duration_days = 25.0 / R_DRAG / 86400.0;
    if (adaptive) {
        /* From 1 h the step grows to largest_step_s (1 day; the wave
         * limit of step_limits.h, 0.5 2 sqrt(2) pi / (beta L), is 35 h
         * here); outputs every 1/r, so the state
         * 1/r before the end is an output time that a step lands on. */
        cfg.step_choice = TG_STEP_ADAPTIVE;
        cfg.step_s = 3600.0;
        cfg.smallest_step_s = 600.0;
        cfg.snapshot_every_days = cfg.log_every_days = 1.0 / R_DRAG / 86400.0;
        cfg.checkpoint_every_days = 0.0;
    }
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);

    /* Start from rest explicitly (psi = 0), independent of what
     * tg_model_create leaves in the state. */
    const int no = m->nout;
    const long npts = (long)no * no;
    double *psi = calloc((size_t)npts, sizeof(double)), *prev = malloc(sizeof(double) * npts);
    ck_assert(psi && prev);
    tg_model_set_psi(m, psi);

    long nsteps = (long)ceil(cfg.duration_days * 86400.0 / cfg.step_s);
    const long last_efold = (long)ceil(1.0 / R_DRAG / cfg.step_s);
    if (!adaptive) {
        for (long s = 1; s <= nsteps; s++) {
            ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
            if (s == nsteps - last_efold)
                tg_model_pack(m, m->psi, prev);
        }
        res.dt_min = res.dt_max = m->dt;
    } else {
        tg_run_steps rs;
        tg_run_steps_init(&rs, &cfg, m);
        while (!tg_run_steps_done(&rs, m)) {
            tg_run_steps_next(&rs, m);
            res.dt_min = fmin(res.dt_min, m->dt);
            res.dt_max = fmax(res.dt_max, m->dt);
            ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", m->step, st.msg);
            tg_run_events ev = tg_run_steps_after(&rs, m, tg_model_max_cfl(m, NULL, NULL, NULL));
            if (ev.snapshot && !ev.end)
                tg_model_pack(m, m->psi, prev); /* last at 24/r, 1/r before the end */
        }
        nsteps = m->step;
    }
    tg_model_pack(m, m->psi, psi);

    /* Exact solution. */
    const double L = L_KM * 1e3, a = PI / L;
    const double W0 = TAU0 * PI / (L * RHO0 * H);
    const double disc = sqrt(BETA * BETA + 4.0 * R_DRAG * R_DRAG * a * a);
    const double s1 = (-BETA + disc) / (2.0 * R_DRAG), s2 = (-BETA - disc) / (2.0 * R_DRAG);
    const double E1 = exp(s1 * L), E2 = exp(s2 * L);
    const double p = (E2 - 1.0) / (E1 - E2), q = -1.0 - p;
    const double Xp = W0 / (R_DRAG * a * a);
    const double *xc = tg_model_out_coord(m);

    double num = 0, den = 0, dsteady = 0;
    for (int j = 0; j < no; j++)
        for (int i = 0; i < no; i++) {
            double x = xc[i], y = xc[j];
            double ex = Xp * (1.0 + p * exp(s1 * x) + q * exp(s2 * x)) * sin(a * y);
            double v = psi[(long)j * no + i];
            num += (v - ex) * (v - ex);
            den += ex * ex;
            dsteady += (v - prev[(long)j * no + i]) * (v - prev[(long)j * no + i]);
            if (v > res.psi_max) {
                res.psi_max = v;
                res.x_max_km = x / 1e3;
            }
            if (ex > res.exact_max) {
                res.exact_max = ex;
                res.exact_x_max_km = x / 1e3;
            }
        }
    res.l2 = sqrt(num / den);
    res.steady = sqrt(dsteady / den);
    res.runtime = wall_seconds() - t0;
    printf("val_stommel %d points (dx %.1f km, r/beta %.1f km = %.2f dx): relative L2 error %.3e; "
           "max psi %.5g m2/s at x = %.0f km (exact %.5g at %.0f km); change over the last 1/r "
           "%.1e; %ld steps of %.0f..%.0f s, %.1f s\n",
           points, L / (points - 1) / 1e3, R_DRAG / BETA / 1e3, R_DRAG / BETA / (L / (points - 1)),
           res.l2, res.psi_max, res.x_max_km, res.exact_max, res.exact_x_max_km, res.steady, nsteps,
           res.dt_min, res.dt_max, res.runtime);
    fflush(stdout);
    free(psi);
    free(prev);
    tg_model_destroy(m);
    return res;
}

START_TEST(stommel_exact_solution)
{
    stommel_result fine = run_stommel(129, 0);
    stommel_result coarse = run_stommel(65, 0);
    /* Steady: the change over the last e-folding time is negligible. */
    ck_assert_msg(fine.steady < 1e-6, "not steady: relative change %.3e over the last 1/r",
                  fine.steady);
    /* Stommel 1948 exact solution (re-derived above): relative L2 error < 2 %. */
    ck_assert_msg(fine.l2 < 0.02, "relative L2 error %.4f against Stommel's solution exceeds 0.02",
                  fine.l2);
    /* The difference is discretization error: it shrinks with resolution
     * (second order expected; common practice). */
    ck_assert_msg(coarse.l2 > 2.0 * fine.l2,
                  "error does not shrink with resolution: %.4f at 65 points, %.4f at 129",
                  coarse.l2, fine.l2);
}
END_TEST

/* Adaptive steps ([time] step_choice = adaptive, run_steps.h) keep the
 * Stommel 1948 solution within the same 2 % while the step varies. */
START_TEST(stommel_adaptive_steps)
{
    stommel_result r = run_stommel(129, 1);
    ck_assert_msg(r.dt_max > 4.0 * r.dt_min, "the steps did not vary: %g..%g s", r.dt_min,
                  r.dt_max);
    ck_assert_msg(r.steady < 1e-6, "not steady: relative change %.3e over the last 1/r", r.steady);
    ck_assert_msg(r.l2 < 0.02, "relative L2 error %.4f against Stommel's solution exceeds 0.02",
                  r.l2);
}
END_TEST

/* A spin-up "from rest" (run.c, [initial] state = rest) relies on
 * tg_model_create leaving the state at rest, q = beta (y - y0), psi = 0
 * (model.h). Common practice; no published value. */
START_TEST(create_leaves_rest)
{
    tg_status st;
    tg_status_clear(&st);
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.size_km = L_KM;
    cfg.points = 65;
    cfg.nlayers = 1;
    cfg.thickness_m[0] = H;
    cfg.n_reduced_gravity = 0;
    cfg.beta_per_m_per_s = BETA;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    double big = 0.0;
    for (long p = 0; p < m->npl; p++)
        big = fmax(big, fabs(m->psi[p]));
    double e = tg_model_energy(m);
    tg_model_destroy(m);
    ck_assert_msg(big == 0.0 && e == 0.0,
                  "tg_model_create does not leave the state at rest: max |psi| = %.3e m2/s, "
                  "energy %.3e m2/s2 (q is not initialized to beta (y - y0))",
                  big, e);
}
END_TEST

static Suite *stommel_suite(void)
{
    Suite *s = suite_create("val_stommel");
    TCase *tc = tcase_create("steady_gyre");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, stommel_exact_solution);
    tcase_add_test(tc, stommel_adaptive_steps);
    suite_add_tcase(s, tc);
    tc = tcase_create("rest_state");
    tcase_add_test(tc, create_leaves_rest);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(stommel_suite());
}
