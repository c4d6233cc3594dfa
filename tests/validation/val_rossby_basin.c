/* val_rossby_basin.c - validation: frequencies of free Rossby basin modes.
 *
 * Source: Longuet-Higgins 1964, Proc. R. Soc. A 279, 446-473 (planetary
 * waves and the normal modes of a closed basin; title and pages from memory);
 * Pedlosky 1987, Geophysical Fluid Dynamics, 2nd ed., section 3.26
 * (Rossby normal modes in a closed basin; section number from memory).
 * In a square basin of side L with psi = 0 on the walls, the linear,
 * unforced, inviscid quasi-geostrophic equation for a vertical mode with
 * stretching parameter F (F = 0 barotropic, F = 1/R_d^2 baroclinic),
 *   d/dt (lap psi - F psi) + beta dpsi/dx = 0,
 * has the normal modes
 *   psi = sin(m pi x/L) sin(n pi y/L) cos(k0 x + omega t),  k0 = beta/(2 omega),
 *   omega = beta / (2 sqrt(K^2 + F)),  K^2 = (m pi/L)^2 + (n pi/L)^2.
 * (Substituting gives -2 omega k0 + beta = 0 for the terms in dPhi/dx and
 * K^2 + F = beta^2/(4 omega^2) for the rest.)
 *
 * The test starts the model from a mode of tiny amplitude (linear regime),
 * projects each later state by least squares onto the two quadrature
 * components Phi cos(k0 x) and Phi sin(k0 x), Phi = sin sin, so that
 * psi ~ c Phi cos(k0 x) + s Phi sin(k0 x) with c = cos(omega t),
 * s = -sin(omega t); the unwrapped phase atan2(-s, c) is fitted by a
 * straight line in t, whose slope is the measured frequency. Required:
 * within 1 % of the formula with the continuous K^2, for
 *   (a) one layer (F = 0), the modes (1,1) and (2,1);
 *   (b) the first baroclinic mode of two layers, mode (1,2): n even, so the
 *       domain integral of the mode vanishes and the mass constraint is
 *       inactive; psi_k = P[k][1] * mode, so only vertical mode 1 is excited.
 * The quality of the linear fit (r.m.s. phase misfit) and the amplitude in
 * the mode are checked as well, so a state that drifts away from the mode
 * shape fails. The remaining difference from the formula is the model's
 * second-order spatial error: 1.5e-3, 3.8e-4, 9.5e-5 for mode (1,1) at 65,
 * 129, 257 points; 5.3e-3 and 1.3e-3 for the baroclinic mode at 129 and
 * 257 points (measured when the test was written).
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
#include "stepper.h"
#include "../unit/unit_util.h"

static const double PI = 3.14159265358979323846;

typedef struct {
    const char *name;
    int nlayers;
    double size_km;
    double gprime;  /* two layers only */
    int m, n;       /* mode numbers in x and y */
    double periods; /* length of the run in periods */
    int steps_per_period;
} basin_case;

static const basin_case cases[] = {
    /* One layer, L = 3840 km, beta = 1.75e-11: period of (1,1) ~ 9.6 days. */
    {"one layer, mode (1,1)", 1, 3840.0, 0.0, 1, 1, 2.5, 400},
    {"one layer, mode (2,1)", 1, 3840.0, 0.0, 2, 1, 2.5, 400},
    /* Two layers, R_d ~ 83 km in a 2000 km basin: k0 ~ 1/R_d is resolved
     * by ~30 points per wavelength at 129 points; period ~ 100 days. */
    {"two layers, baroclinic mode 1, (1,2)", 2, 2000.0, 0.08, 1, 2, 2.5, 400},
};

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Frequency predicted by the basin-mode formula for the case. */
static double mode_frequency(double beta, double L, int m, int n, double F)
{
    double K2 = pow(m * PI / L, 2) + pow(n * PI / L, 2);
    return beta / (2.0 * sqrt(K2 + F));
}

START_TEST(basin_mode_frequency)
{
    const basin_case *bc = &cases[_i];
    tg_status st;
    tg_status_clear(&st);
    double t_start = wall_seconds();

    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.size_km = bc->size_km;
    cfg.points = 129;
    cfg.wall_condition = TG_WALL_FREE_SLIP;
    cfg.nlayers = bc->nlayers;
    if (bc->nlayers == 1) {
        cfg.thickness_m[0] = 4000.0;
        cfg.n_reduced_gravity = 0;
    } else {
        cfg.thickness_m[0] = 1000.0;
        cfg.thickness_m[1] = 3000.0;
        cfg.n_reduced_gravity = 1;
        cfg.reduced_gravity_m_s2[0] = bc->gprime;
    }
    cfg.coriolis_f0_per_s = 9.37e-5;
    cfg.beta_per_m_per_s = 1.75e-11;
    cfg.wind_profile = TG_WIND_NONE;
    cfg.stress_amplitude_pa = 0.0;
    cfg.bottom_drag_per_s = 0.0;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 0.0;

    /* The frequency needs F of the excited vertical mode: take it from the
     * model's vertical modes, then set the step from the period. */
    const double L = bc->size_km * 1e3, beta = cfg.beta_per_m_per_s;
    const int vmode = bc->nlayers == 1 ? 0 : 1;
    tg_modes md;
    ck_assert_msg(tg_modes_compute(&md, cfg.nlayers, cfg.thickness_m, cfg.reduced_gravity_m_s2,
                                   cfg.coriolis_f0_per_s, &st) == TG_OK,
                  "modes: %s", st.msg);
    const double F = md.F[vmode];
    const double omega = mode_frequency(beta, L, bc->m, bc->n, F);
    const double period = 2.0 * PI / omega;
    const long nsteps = (long)ceil(bc->periods * bc->steps_per_period);
    cfg.step_s = period / bc->steps_per_period;
    cfg.duration_days = nsteps * cfg.step_s / 86400.0;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    ck_assert_msg(m->modes.F[vmode] == F, "model modes differ from tg_modes_compute");
    const double k0 = beta / (2.0 * omega);

    /* Initial state and the quadrature components on the output grid. */
    const int no = m->nout, nl = m->nl;
    const double *xc = tg_model_out_coord(m);
    double *psi0 = calloc((size_t)nl * no * no, sizeof(double));
    double *pc = calloc((size_t)no * no, sizeof(double));
    double *ps = calloc((size_t)no * no, sizeof(double));
    double *psi = calloc((size_t)nl * no * no, sizeof(double));
    ck_assert(psi0 && pc && ps && psi);
    const double amp = 1.0; /* m2 s-1: velocities ~ 1e-5 m/s, strictly linear */
    for (int j = 0; j < no; j++)
        for (int i = 0; i < no; i++) {
            double x = xc[i], y = xc[j];
            double phi = sin(bc->m * PI * x / L) * sin(bc->n * PI * y / L);
            long p = (long)j * no + i;
            pc[p] = phi * cos(k0 * x);
            ps[p] = phi * sin(k0 * x);
            for (int k = 0; k < nl; k++)
                psi0[(long)k * no * no + p] = amp * m->modes.P[k][vmode] * pc[p];
        }
    tg_model_set_psi(m, psi0);

    /* Gram matrix of the two components (sums over the grid nodes). */
    double g11 = 0, g12 = 0, g22 = 0;
    for (long p = 0; p < (long)no * no; p++) {
        g11 += pc[p] * pc[p];
        g12 += pc[p] * ps[p];
        g22 += ps[p] * ps[p];
    }
    const double det = g11 * g22 - g12 * g12;

    /* Phase time series and least-squares line theta = a + omega t. */
    double prev = 0.0, unwrap = 0.0;
    double st_t = 0, st_tt = 0, st_th = 0, st_tth = 0, st_thth = 0;
    long count = 0;
    double amp_min = INFINITY, amp_max = 0.0;
    for (long s = 0; s <= nsteps; s++) {
        if (s > 0)
            ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
        tg_model_pack(m, m->psi, psi);
        /* Modal amplitude of the excited vertical mode. */
        double r1 = 0, r2 = 0;
        for (long p = 0; p < (long)no * no; p++) {
            double v = 0.0;
            for (int k = 0; k < nl; k++)
                v += m->modes.Pinv[vmode][k] * psi[(long)k * no * no + p];
            r1 += v * pc[p];
            r2 += v * ps[p];
        }
        double c = (g22 * r1 - g12 * r2) / det, sn = (g11 * r2 - g12 * r1) / det;
        double a = hypot(c, sn);
        amp_min = fmin(amp_min, a);
        amp_max = fmax(amp_max, a);
        double th = atan2(-sn, c);
        if (s > 0) {
            double d = th - prev;
            while (d > PI)
                d -= 2.0 * PI;
            while (d < -PI)
                d += 2.0 * PI;
            unwrap += d;
        } else {
            unwrap = th;
        }
        prev = th;
        double t = s * m->dt;
        st_t += t;
        st_tt += t * t;
        st_th += unwrap;
        st_tth += t * unwrap;
        st_thth += unwrap * unwrap;
        count++;
    }
    const double nn = (double)count;
    const double slope = (nn * st_tth - st_t * st_th) / (nn * st_tt - st_t * st_t);
    const double icpt = (st_th - slope * st_t) / nn;
    /* r.m.s. misfit of the line: sum (th - a - b t)^2 / n */
    double sse = st_thth - 2 * icpt * st_th - 2 * slope * st_tth + nn * icpt * icpt +
                 2 * icpt * slope * st_t + slope * slope * st_tt;
    const double rms_phase = sqrt(fmax(sse, 0.0) / nn);
    const double rel = fabs(slope - omega) / omega;
    const double runtime = wall_seconds() - t_start;

    printf("val_rossby_basin %s: F = %.4g m-2, omega formula %.6e s-1 (period %.3f days), "
           "measured %.6e s-1, rel. error %.3e (tolerance 1e-2); phase misfit %.2e rad; "
           "projected amplitude %.4f..%.4f of %.4f; %ld steps of %.0f s; %.1f s\n",
           bc->name, F, omega, period / 86400.0, slope, rel, rms_phase, amp_min, amp_max, amp,
           nsteps, m->dt, runtime);
    fflush(stdout);

    /* Longuet-Higgins 1964 / Pedlosky 1987 section 3.26: omega = beta/(2 sqrt(K^2 + F)). */
    ck_assert_msg(rel < 1e-2, "%s: measured omega %.6e, formula %.6e (rel. error %.3e > 1e-2)",
                  bc->name, slope, omega, rel);
    /* The state stays the mode: the phase is a straight line (well below one
     * time step's rotation, 2 pi / steps_per_period) and the amplitude in
     * the mode stays within 2 % (no dissipation, linear). */
    ck_assert_msg(rms_phase < 0.1 * 2.0 * PI / bc->steps_per_period,
                  "%s: phase is not linear in time (r.m.s. misfit %.3e rad)", bc->name, rms_phase);
    ck_assert_msg(amp_min > 0.98 * amp && amp_max < 1.02 * amp,
                  "%s: the projected amplitude varies %.4f..%.4f (initial %.4f)", bc->name, amp_min,
                  amp_max, amp);

    free(psi0);
    free(pc);
    free(ps);
    free(psi);
    tg_model_destroy(m);
}
END_TEST

static Suite *rossby_suite(void)
{
    Suite *s = suite_create("val_rossby_basin");
    TCase *tc = tcase_create("basin_modes");
    tcase_set_timeout(tc, 120);
    tcase_add_loop_test(tc, basin_mode_frequency, 0, (int)(sizeof cases / sizeof cases[0]));
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(rossby_suite());
}
