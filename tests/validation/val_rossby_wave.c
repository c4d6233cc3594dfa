/* val_rossby_wave.c - validation: dispersion of free Rossby waves in the
 * doubly periodic geometry.
 *
 * Source: Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, 2nd ed.,
 * section 6.4 (Rossby waves; the dispersion relation of the single-layer
 * quasi-geostrophic equation with a finite deformation radius); Pedlosky
 * 1987, Geophysical Fluid Dynamics, 2nd ed., chapter 3 (Rossby waves) and
 * section 6.16 (vertical modes of the layered model); section numbers from
 * memory. The linear, unforced, inviscid quasi-geostrophic equation of a
 * vertical mode with stretching parameter F (F = 0 for one layer or the
 * barotropic mode, F = 1/R_d^2 for the first baroclinic mode) on a beta
 * plane at rest (U = 0),
 *   d/dt (lap psi - F psi) + beta dpsi/dx = 0,
 * has the plane waves psi = A cos(kx x + ky y - omega t) with
 *   omega = -beta kx / (kx^2 + ky^2 + F)                       (the check)
 * (westward phase propagation). A single plane wave is also an exact
 * nonlinear solution (its PV is a multiple of psi, so J(psi, q) = 0), but
 * the amplitude is tiny anyway (velocities ~1e-5 m/s).
 *
 * The model starts from one wave, each later state is projected by least
 * squares onto cos(theta0) and sin(theta0), theta0 = kx x + ky y, so that
 * psi = c cos(theta0) + s sin(theta0) with c = A cos(omega t),
 * s = A sin(omega t); the unwrapped phase atan2(s, c) is fitted by a straight
 * line in t, whose slope is the measured frequency. Required: within 0.5 %
 * of the formula with the continuous wavenumbers (tolerance of the issue),
 * for three wavevectors
 *   (a) one layer, F = 0;
 *   (b) two layers, the first baroclinic vertical mode (psi_k = P[k][1] times
 *       the wave, so only that mode is excited), F = F_1 of the model's modes;
 *       the wavevectors span K^2/F from 0.06 to 0.8, so both terms of the
 *       denominator matter.
 * The fit quality and the projected amplitude (within 1 %) are checked too,
 * so a state that leaves the wave shape fails.
 *
 * Resolution: the model's centred x-difference and five-point Laplacian
 * give omega_d = -beta sin(kx dx)/dx / (lambda + F) with
 * lambda = (4/dx^2)(sin^2(kx dx/2) + sin^2(ky dx/2)); with 256 points on
 * 1000 km (kx dx <= 0.074) omega_d differs from the continuous formula by
 * at most 0.1 % for these waves. The test prints both. The time step is
 * 1/100 of the period, where the phase error of SSP-RK3 is ~1e-5 (over 1.5
 * periods).
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
    int nx, ny;     /* integer wavenumbers: kx = 2 pi nx / L */
} wave_case;

static const wave_case cases[] = {
    {"one layer, wave (1,0)", 1, 1, 0},
    {"one layer, wave (2,1)", 1, 2, 1},
    {"one layer, wave (3,-2)", 1, 3, -2},
    {"two layers, baroclinic mode, wave (1,0)", 2, 1, 0},
    {"two layers, baroclinic mode, wave (2,1)", 2, 2, 1},
    {"two layers, baroclinic mode, wave (3,-2)", 2, 3, -2},
};

enum { POINTS = 256, STEPS_PER_PERIOD = 100 };
static const double SIZE_KM = 1000.0, PERIODS = 1.5;

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

START_TEST(rossby_wave_frequency)
{
    const wave_case *wc = &cases[_i];
    tg_status st;
    tg_status_clear(&st);
    double t_start = wall_seconds();

    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.geometry = TG_GEOM_PERIODIC;
    cfg.size_km = SIZE_KM;
    cfg.points = POINTS;
    cfg.nlayers = wc->nlayers;
    if (wc->nlayers == 1) {
        cfg.thickness_m[0] = 4000.0;
        cfg.n_reduced_gravity = 0;
    } else {
        cfg.thickness_m[0] = 1000.0;
        cfg.thickness_m[1] = 3000.0;
        cfg.n_reduced_gravity = 1;
        cfg.reduced_gravity_m_s2[0] = 0.02;
    }
    cfg.coriolis_f0_per_s = 1.0e-4;
    cfg.beta_per_m_per_s = 1.6e-11;
    cfg.n_zonal_velocity = 0; /* U = 0 */
    cfg.wind_profile = TG_WIND_NONE;
    cfg.stress_amplitude_pa = 0.0;
    cfg.bottom_drag_per_s = 0.0;
    cfg.viscosity_m2_per_s = 0.0;
    cfg.hyperviscosity_m4_per_s = 0.0;

    const double L = SIZE_KM * 1e3, beta = cfg.beta_per_m_per_s;
    const int vmode = wc->nlayers == 1 ? 0 : 1;
    tg_modes md;
    ck_assert_msg(tg_modes_compute(&md, cfg.nlayers, cfg.thickness_m, cfg.reduced_gravity_m_s2,
                                   cfg.coriolis_f0_per_s, &st) == TG_OK,
                  "modes: %s", st.msg);
    const double F = md.F[vmode];
    const double kx = 2.0 * PI * wc->nx / L, ky = 2.0 * PI * wc->ny / L;
    /* Vallis 2017 section 6.4: omega = -beta kx / (kx^2 + ky^2 + F). */
    const double omega = -beta * kx / (kx * kx + ky * ky + F);
    const double period = 2.0 * PI / fabs(omega);
    const long nsteps = (long)ceil(PERIODS * STEPS_PER_PERIOD);
    cfg.step_s = period / STEPS_PER_PERIOD;
    cfg.duration_days = nsteps * cfg.step_s / 86400.0;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);
    ck_assert_msg(m->modes.F[vmode] == F, "model modes differ from tg_modes_compute");
    ck_assert_msg(m->U[0] == 0.0 && m->Qy[0] == beta, "background flow is not at rest");

    /* The same relation with the model's discrete operators, for the record. */
    const double dx = m->geom->dx;
    const double lam = 4.0 / (dx * dx) *
                       (pow(sin(0.5 * kx * dx), 2) + pow(sin(0.5 * ky * dx), 2));
    const double omega_d = -beta * sin(kx * dx) / dx / (lam + F);

    const int no = m->nout, nl = m->nl;
    const long n2 = (long)no * no;
    const double *xc = tg_model_out_coord(m);
    double *psi0 = calloc((size_t)nl * n2, sizeof(double));
    double *pc = calloc((size_t)n2, sizeof(double));
    double *ps = calloc((size_t)n2, sizeof(double));
    double *psi = calloc((size_t)nl * n2, sizeof(double));
    ck_assert(psi0 && pc && ps && psi);
    const double amp = 1.0; /* m2 s-1 */
    for (int j = 0; j < no; j++)
        for (int i = 0; i < no; i++) {
            const double th = kx * xc[i] + ky * xc[j];
            const long p = (long)j * no + i;
            pc[p] = cos(th);
            ps[p] = sin(th);
            for (int k = 0; k < nl; k++)
                psi0[k * n2 + p] = amp * m->modes.P[k][vmode] * pc[p];
        }
    tg_model_set_psi(m, psi0);

    double g11 = 0, g12 = 0, g22 = 0;
    for (long p = 0; p < n2; p++) {
        g11 += pc[p] * pc[p];
        g12 += pc[p] * ps[p];
        g22 += ps[p] * ps[p];
    }
    const double det = g11 * g22 - g12 * g12;

    double prev = 0.0, unwrap = 0.0;
    double s_t = 0, s_tt = 0, s_th = 0, s_tth = 0, s_thth = 0;
    long count = 0;
    double amp_min = INFINITY, amp_max = 0.0;
    for (long s = 0; s <= nsteps; s++) {
        if (s > 0)
            ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
        tg_model_pack(m, m->psi, psi);
        double r1 = 0, r2 = 0;
        for (long p = 0; p < n2; p++) {
            double v = 0.0;
            for (int k = 0; k < nl; k++)
                v += m->modes.Pinv[vmode][k] * psi[k * n2 + p];
            r1 += v * pc[p];
            r2 += v * ps[p];
        }
        const double c = (g22 * r1 - g12 * r2) / det, sn = (g11 * r2 - g12 * r1) / det;
        const double a = hypot(c, sn);
        amp_min = fmin(amp_min, a);
        amp_max = fmax(amp_max, a);
        const double th = atan2(sn, c);
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
        const double t = s * m->dt;
        s_t += t;
        s_tt += t * t;
        s_th += unwrap;
        s_tth += t * unwrap;
        s_thth += unwrap * unwrap;
        count++;
    }
    const double nn = (double)count;
    const double slope = (nn * s_tth - s_t * s_th) / (nn * s_tt - s_t * s_t);
    const double icpt = (s_th - slope * s_t) / nn;
    const double sse = s_thth - 2 * icpt * s_th - 2 * slope * s_tth + nn * icpt * icpt +
                       2 * icpt * slope * s_t + slope * slope * s_tt;
    const double rms_phase = sqrt(fmax(sse, 0.0) / nn);
    const double rel = fabs(slope - omega) / fabs(omega);
    const double rel_d = fabs(omega_d - omega) / fabs(omega);

    printf("val_rossby_wave %s: F = %.4g m-2, K^2/F = %.3g; omega formula %.6e s-1 (period "
           "%.2f days), measured %.6e s-1, rel. error %.3e (tolerance 5e-3); discrete-operator "
           "omega %.6e (differs from the formula by %.2e); phase misfit %.2e rad; amplitude "
           "%.5f..%.5f of %.1f; %ld steps of %.0f s; %.1f s\n",
           wc->name, F, F > 0 ? (kx * kx + ky * ky) / F : INFINITY, omega, period / 86400.0,
           slope, rel, omega_d, rel_d, rms_phase, amp_min, amp_max, amp, nsteps, m->dt,
           wall_seconds() - t_start);
    fflush(stdout);

    /* Vallis 2017 section 6.4: omega = -beta kx / (K^2 + F), within 0.5 %
     * (the sign, westward propagation, is part of the check). */
    ck_assert_msg(rel < 5e-3, "%s: measured omega %.6e, formula %.6e (rel. error %.3e > 5e-3)",
                  wc->name, slope, omega, rel);
    /* The state stays the wave: a straight phase line (misfit well below
     * one step's rotation) and the amplitude within 1 % (linear, inviscid). */
    ck_assert_msg(rms_phase < 0.1 * 2.0 * PI / STEPS_PER_PERIOD,
                  "%s: phase is not linear in time (r.m.s. misfit %.3e rad)", wc->name, rms_phase);
    ck_assert_msg(amp_min > 0.99 * amp && amp_max < 1.01 * amp,
                  "%s: the projected amplitude varies %.5f..%.5f (initial %.1f)", wc->name,
                  amp_min, amp_max, amp);

    free(psi0);
    free(pc);
    free(ps);
    free(psi);
    tg_model_destroy(m);
}
END_TEST

static Suite *wave_suite(void)
{
    Suite *s = suite_create("val_rossby_wave");
    TCase *tc = tcase_create("plane_waves");
    tcase_set_timeout(tc, 120);
    tcase_add_loop_test(tc, rossby_wave_frequency, 0, (int)(sizeof cases / sizeof cases[0]));
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(wave_suite());
}
