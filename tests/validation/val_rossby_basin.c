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
#include "run_steps.h"
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
    int adaptive;   /* 1: [time] step_choice = adaptive, first step period/steps_per_period */
} basin_case;

static const basin_case cases[] = {
    /* One layer, L = 3840 km, beta = 1.75e-11: period of (1,1) ~ 9.6 days. */
    {"one layer, mode (1,1)", 1, 3840.0, 0.0, 1, 1, 2.5, 400, 0},
    {"one layer, mode (2,1)", 1, 3840.0, 0.0, 2, 1, 2.5, 400, 0},
    /* Two layers, R_d ~ 83 km in a 2000 km basin: k0 ~ 1/R_d is resolved
     * by ~30 points per wavelength at 129 points; period ~ 100 days. */
    {"two layers, baroclinic mode 1, (1,2)", 2, 2000.0, 0.08, 1, 2, 2.5, 400, 0},
    /* Adaptive steps (run_steps.h): from period/400 the step grows by 1.2 per
     * step to the wave limit target_cfl / omega_max (step_limits.h; the flow
     * is far too slow for the advective one), omega_max = this mode's
     * frequency beta / (2 sqrt(2) pi/L), 4 pi (about 12.6) steps per period;
     * sampled at output times every period/8, which are no multiples of
     * that step (a full step and a shorter one land on most). */
    {"one layer, mode (1,1), adaptive steps", 1, 3840.0, 0.0, 1, 1, 2.5, 400, 1},
};

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* |G(i theta)| of three-stage third-order Runge-Kutta, G(z) = 1 + z + z^2/2
 * + z^3/6, for a wave turning theta radians per step: sqrt((1 - theta^2/2)^2
 * + (theta - theta^3/6)^2) (Durran 2010, Numerical Methods for Fluid
 * Dynamics, section 2.4). */
static double rk3_amplification(double theta)
{
    const double re = 1.0 - 0.5 * theta * theta, im = theta - theta * theta * theta / 6.0;
    return sqrt(re * re + im * im);
}

/* Frequency predicted by the basin-mode formula for the case. */
static double mode_frequency(double beta, double L, int m, int n, double F)
{
    double K2 = pow(m * PI / L, 2) + pow(n * PI / L, 2);
    return beta / (2.0 * sqrt(K2 + F));
}

/* Sums of the least-squares line through the unwrapped phase of the mode. */
typedef struct {
    double prev, unwrap, t, tt, th, tth, thth, amp_min, amp_max;
    long count;
} phase_fit;

/* Projects the state on the two quadrature components and adds its phase
 * at time t to the fit. psi: output-layout scratch. */
static void add_sample(phase_fit *f, tg_model *m, int vmode, const double *pc, const double *ps,
                       double g11, double g12, double g22, double *psi, double t)
{
    const int no = m->nout, nl = m->nl;
    const double det = g11 * g22 - g12 * g12;
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
    f->amp_min = fmin(f->amp_min, a);
    f->amp_max = fmax(f->amp_max, a);
    double th = atan2(-sn, c);
    if (f->count > 0) {
        double d = th - f->prev;
        while (d > PI)
            d -= 2.0 * PI;
        while (d < -PI)
            d += 2.0 * PI;
        f->unwrap += d;
    } else {
        f->unwrap = th;
    }
    f->prev = th;
    f->t += t;
    f->tt += t * t;
    f->th += f->unwrap;
    f->tth += t * f->unwrap;
    f->thth += f->unwrap * f->unwrap;
    f->count++;
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
    if (bc->adaptive) {
        cfg.step_choice = TG_STEP_ADAPTIVE;
        cfg.smallest_step_s = cfg.step_s;
        cfg.largest_step_s = period;
        cfg.snapshot_every_days = cfg.log_every_days = period / 4.0 / 86400.0;
        cfg.checkpoint_every_days = 0.0;
    }
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

    /* Phase time series and least-squares line theta = a + omega t. */
    phase_fit f = {.amp_min = INFINITY};
    long steps = 0;
    double rk3_gain = 1.0; /* product of |G(i omega dt)| over the adaptive steps */
    if (!bc->adaptive) {
        for (long s = 0; s <= nsteps; s++) {
            if (s > 0)
                ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
            add_sample(&f, m, vmode, pc, ps, g11, g12, g22, psi, s * m->dt);
        }
        steps = nsteps;
    } else {
        tg_run_steps rs;
        tg_run_steps_init(&rs, &cfg, m);
        double dt_min = INFINITY, dt_max = 0.0;
        add_sample(&f, m, vmode, pc, ps, g11, g12, g22, psi, 0.0);
        while (!tg_run_steps_done(&rs, m)) {
            tg_run_steps_next(&rs, m);
            dt_min = fmin(dt_min, m->dt);
            dt_max = fmax(dt_max, m->dt);
            rk3_gain *= rk3_amplification(omega * m->dt);
            ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", m->step, st.msg);
            tg_run_events ev = tg_run_steps_after(&rs, m, tg_model_max_cfl(m, NULL, NULL, NULL));
            if (ev.snapshot)
                add_sample(&f, m, vmode, pc, ps, g11, g12, g22, psi, m->time_s);
        }
        steps = m->step;
        printf("val_rossby_basin %s: steps from %.0f to %.0f s, last chosen by the %s limit\n",
               bc->name, dt_min, dt_max, rs.binding);
        ck_assert_msg(dt_max > 2.0 * dt_min, "the steps did not vary (%g..%g s)", dt_min, dt_max);
        /* The wave limit is exact for a basin: its largest step turns the
         * gravest basin mode, which this is, by target_cfl radians
         * (step_limits.h; Longuet-Higgins 1964). */
        printf("val_rossby_basin %s: largest step turns the mode by %.6f rad (target_cfl %g); "
               "RK3 amplification over the run %.4f\n",
               bc->name, omega * dt_max, cfg.target_cfl, rk3_gain);
        ck_assert_msg(fabs(omega * dt_max - cfg.target_cfl) < 1e-6 * cfg.target_cfl,
                      "largest step %g s turns the mode by %g rad, not target_cfl %g", dt_max,
                      omega * dt_max, cfg.target_cfl);
        ck_assert_int_eq(f.count, 11); /* day 0 and 10 output times, each landed on */
    }
    double st_t = f.t, st_tt = f.tt, st_th = f.th, st_tth = f.tth, st_thth = f.thth;
    long count = f.count;
    double amp_min = f.amp_min, amp_max = f.amp_max;
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
           steps, m->dt, runtime);
    fflush(stdout);

    /* Longuet-Higgins 1964 / Pedlosky 1987 section 3.26: omega = beta/(2 sqrt(K^2 + F)). */
    ck_assert_msg(rel < 1e-2, "%s: measured omega %.6e, formula %.6e (rel. error %.3e > 1e-2)",
                  bc->name, slope, omega, rel);
    /* The state stays the mode: the phase is a straight line (well below one
     * time step's rotation, 2 pi / steps_per_period) and the amplitude in
     * the mode stays within 2 % (no dissipation, linear). */
    ck_assert_msg(rms_phase < 0.1 * 2.0 * PI / bc->steps_per_period,
                  "%s: phase is not linear in time (r.m.s. misfit %.3e rad)", bc->name, rms_phase);
    ck_assert_msg(amp_min > 0.98 * amp * rk3_gain && amp_max < 1.02 * amp,
                  "%s: the projected amplitude varies %.4f..%.4f (initial %.4f, RK3's own "
                  "damping %.4f)", bc->name, amp_min, amp_max, amp, rk3_gain);
    if (bc->adaptive)
        /* At a phase of target_cfl = 0.5 per step RK3 damps the wave by
         * 0.24 % per step; the mode's final amplitude is that damping. */
        ck_assert_msg(fabs(amp_min - amp * rk3_gain) < 0.005 * amp,
                      "%s: final amplitude %.4f, RK3's amplification over the steps %.4f",
                      bc->name, amp_min, amp * rk3_gain);

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
