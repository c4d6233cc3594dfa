/* val_munk.c - validation: the steady Munk gyre (boundary-layer width and
 * Sverdrup interior).
 *
 * Sources:
 *  - Munk 1950, "On the wind-driven ocean circulation", J. Meteorol. 7,
 *    79-93: with lateral viscosity A2 and no bottom friction, the western
 *    boundary layer has the width delta_M = (A2/beta)^(1/3); with no-slip
 *    walls its shape is
 *      psi/psi_I = 1 - e^{-x/(2 delta)} [cos(sqrt3 x/(2 delta)) + sin(sqrt3 x/(2 delta))/sqrt3],
 *    whose first maximum (v = dpsi/dx = 0) lies at x = 2 pi delta_M / sqrt3
 *    (boundary-layer solution as in Pedlosky 1996, Ocean Circulation Theory,
 *    chapter 2, and Vallis 2017, Atmospheric and Oceanic Fluid Dynamics, 2nd
 *    ed., chapter 19; the formula from memory, the position of the maximum
 *    derived from it).
 *  - Sverdrup 1947, "Wind-driven currents in a baroclinic ocean",
 *    Proc. Natl. Acad. Sci. 33, 318-326: in the interior
 *    beta v = curl tau/(rho0 H), v = dpsi/dx.
 *
 * Set-up: one layer, L = 2000 km, 129 points (dx = 15.6 km), single-gyre
 * wind tau_x = -tau0 cos(pi y/L) with a tiny tau0 (1e-5 Pa: the flow is
 * linear), no bottom drag, NO-SLIP walls (the textbook form of the Munk
 * layer above; with no-slip walls the basin modes left by the spin-up decay
 * within a few hundred days, with free slip over years), start from rest.
 *
 * (a) Width scaling: A2 = 500 and 4000 m2 s-1 (factor 8; delta_M = 30.6 and
 *     61.1 km = 2.0 and 3.9 dx). The width is the distance from the western
 *     wall to the first zero of v at mid-basin latitude (linear
 *     interpolation of the centred difference), averaged over the last 200
 *     days. Required: the ratio of the widths equals 8^(1/3) = 2 within
 *     10 %, and each width is 2 pi delta_M/sqrt3 within 10 % (the
 *     O(delta/L) slope of the interior and the grid make it a few % short).
 * (b) Sverdrup interior (A2 = 4000): at mid-latitude, beta v equals
 *     curl tau/(rho0 H) within 3 % at x = L/2 and everywhere in
 *     L/2 <= x <= 3L/4 (further west the oscillating tail of the western
 *     layer, ~ (L/delta) e^{-x/(2 delta)} of the interior v, is still
 *     above 1 %); and psi(L/2, L/2) equals the Sverdrup streamfunction
 *     psi_S = -(1/beta) int_x^L curl tau/(rho0 H) dx' (psi = 0 on the
 *     eastern wall) within 3 % once the eastern no-slip layer is allowed
 *     for: that layer (one decaying solution e^{(x-L)/delta}) can meet only
 *     dpsi/dx = 0, so the interior is psi_S + delta_M dpsi_S/dx, i.e. the
 *     eastern wall moves west by delta_M (derived here from the Munk layer
 *     equation A2 psi'''' = beta psi'; without it psi(L/2) is short by
 *     2 delta_M/L = 6 %, which is printed).
 *
 * Time step: the steady state of the SSP-RK3 map is the model's steady
 * state for any stable step, so dt is the largest comfortably stable one:
 * 0.8 of the RK3 real-axis limit 2.51 for the viscous eigenvalue
 * -A2 8/dx^2, and at most 0.3/omega_max for the gravest basin mode
 * omega_max = beta/(2 sqrt2 pi/L) (common practice).
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
static const double L_KM = 2000.0, BETA = 1.75e-11, TAU0 = 1e-5, RHO0 = 1030.0, H = 4000.0;
static const double SPIN_DAYS = 800.0, AVG_DAYS = 200.0;

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

typedef struct {
    double delta;           /* (A2/beta)^(1/3), m */
    double width, wmin, wmax; /* mean, min, max of the first zero of v, m */
    double sv_mid;          /* beta v / W at (L/2, L/2) */
    double sv_band;         /* max |beta v / W - 1| over L/2..3L/4 at mid-latitude */
    double psi_ratio;       /* psi(L/2, L/2) / psi_S */
    double psi_ratio_east;  /* psi(L/2, L/2) / (psi_S with the eastern layer) */
    double steady;          /* relative change of psi over the last 100 days */
    long steps;
    double dt;
    double runtime;
} munk_result;

/* First zero of v = dpsi/dx from the western wall along row j, m. */
static double first_zero_of_v(const double *row, const double *xc, int no)
{
    for (int i = 1; i + 2 < no; i++) {
        double v1 = row[i + 1] - row[i - 1], v2 = row[i + 2] - row[i];
        if (v1 > 0.0 && v2 <= 0.0)
            return xc[i] + (xc[i + 1] - xc[i]) * v1 / (v1 - v2);
    }
    return NAN;
}

static munk_result run_munk(double A2)
{
    munk_result r = {0};
    double t0 = wall_seconds();
    tg_status st;
    tg_status_clear(&st);
    tg_config cfg;
    tg_config_defaults(&cfg);
    cfg.size_km = L_KM;
    cfg.points = 129;
    cfg.wall_condition = TG_WALL_NO_SLIP;
    cfg.nlayers = 1;
    cfg.thickness_m[0] = H;
    cfg.n_reduced_gravity = 0;
    cfg.beta_per_m_per_s = BETA;
    cfg.wind_profile = TG_WIND_SINGLE_GYRE;
    cfg.stress_amplitude_pa = TAU0;
    cfg.reference_density_kg_m3 = RHO0;
    cfg.bottom_drag_per_s = 0.0;
    cfg.viscosity_m2_per_s = A2;
    cfg.hyperviscosity_m4_per_s = 0.0;
    const double L = L_KM * 1e3, dx = L / (cfg.points - 1);
    const double omega_max = BETA / (2.0 * sqrt(2.0) * PI / L);
    cfg.step_s = fmin(0.8 * 2.51 * dx * dx / (8.0 * A2), 0.3 / omega_max);
    cfg.duration_days = SPIN_DAYS;
    ck_assert_msg(tg_config_check(&cfg, NULL, &st) == TG_OK, "config: %s", st.msg);
    tg_model *m = tg_model_create(&cfg, &st);
    ck_assert_msg(m != NULL, "model: %s", st.msg);

    const int no = m->nout, jc = (no - 1) / 2, ic = (no - 1) / 2;
    const long npts = (long)no * no;
    double *psi = calloc((size_t)npts, sizeof(double)), *prev = calloc((size_t)npts, sizeof(double));
    ck_assert(psi && prev);
    tg_model_set_psi(m, psi); /* rest */
    const double *xc = tg_model_out_coord(m);

    r.dt = cfg.step_s;
    r.steps = (long)ceil(SPIN_DAYS * 86400.0 / cfg.step_s);
    const long avg_from = r.steps - (long)floor(AVG_DAYS * 86400.0 / cfg.step_s);
    const long prev_at = r.steps - (long)floor(100.0 * 86400.0 / cfg.step_s);
    const long sample_every = (long)fmax(1.0, floor(5.0 * 86400.0 / cfg.step_s));
    double wsum = 0.0;
    long wn = 0;
    r.wmin = INFINITY;
    r.wmax = -INFINITY;
    for (long s = 1; s <= r.steps; s++) {
        ck_assert_msg(tg_step(m, NULL, &st) == TG_OK, "step %ld: %s", s, st.msg);
        if (s == prev_at)
            tg_model_pack(m, m->psi, prev);
        if (s >= avg_from && (r.steps - s) % sample_every == 0) {
            tg_model_pack(m, m->psi, psi);
            double w = first_zero_of_v(psi + (long)jc * no, xc, no);
            ck_assert_msg(isfinite(w), "A2 = %g: v has no zero crossing at mid-latitude", A2);
            wsum += w;
            wn++;
            r.wmin = fmin(r.wmin, w);
            r.wmax = fmax(r.wmax, w);
        }
    }
    tg_model_pack(m, m->psi, psi);
    r.delta = cbrt(A2 / BETA);
    r.width = wsum / wn;

    /* Steadiness over the last 100 days. */
    double d = 0.0, n2 = 0.0;
    for (long p = 0; p < npts; p++) {
        d += (psi[p] - prev[p]) * (psi[p] - prev[p]);
        n2 += psi[p] * psi[p];
    }
    r.steady = sqrt(d / n2);

    /* Sverdrup: W(y) = curl tau/(rho0 H) = -tau0 (pi/L) sin(pi y/L)/(rho0 H). */
    const double *row = psi + (long)jc * no;
    const double W = -TAU0 * (PI / L) * sin(PI * xc[jc] / L) / (RHO0 * H);
    double worst = 0.0;
    for (int i = ic; i <= 3 * (no - 1) / 4; i++) {
        double v = (row[i + 1] - row[i - 1]) / (2.0 * dx);
        worst = fmax(worst, fabs(BETA * v / W - 1.0));
        if (i == ic)
            r.sv_mid = BETA * v / W;
    }
    r.sv_band = worst;
    const double psiS = -(L - xc[ic]) * W / BETA;
    const double psiS_east = -(L - r.delta - xc[ic]) * W / BETA;
    r.psi_ratio = row[ic] / psiS;
    r.psi_ratio_east = row[ic] / psiS_east;
    r.runtime = wall_seconds() - t0;

    printf("val_munk A2 = %g m2/s: delta_M %.1f km (%.2f dx); width (first zero of v) %.2f km "
           "= %.4f delta_M (range %.2f..%.2f km over the last %.0f days; Munk 2 pi/sqrt3 = %.4f); "
           "beta v/W at L/2 %.5f, max |beta v/W - 1| on L/2..3L/4 %.4f; psi(L/2)/psi_S %.5f, "
           "with the eastern layer %.5f; change over the last 100 days %.1e; %ld steps of %.0f s, "
           "%.1f s\n",
           A2, r.delta / 1e3, r.delta / dx, r.width / 1e3, r.width / r.delta, r.wmin / 1e3,
           r.wmax / 1e3, AVG_DAYS, 2.0 * PI / sqrt(3.0), r.sv_mid, r.sv_band, r.psi_ratio,
           r.psi_ratio_east, r.steady, r.steps, r.dt, r.runtime);
    fflush(stdout);
    free(psi);
    free(prev);
    tg_model_destroy(m);
    return r;
}

START_TEST(munk_layer_and_sverdrup_interior)
{
    munk_result a = run_munk(500.0);
    munk_result b = run_munk(4000.0);
    const double munk_pos = 2.0 * PI / sqrt(3.0);

    /* The widths are steady: spread over the last 200 days below 2 %. */
    ck_assert_msg((a.wmax - a.wmin) < 0.02 * a.width && (b.wmax - b.wmin) < 0.02 * b.width,
                  "boundary-layer width not steady: %.2f..%.2f km, %.2f..%.2f km", a.wmin / 1e3,
                  a.wmax / 1e3, b.wmin / 1e3, b.wmax / 1e3);

    /* (a) Munk 1950: width ~ (A2/beta)^(1/3); A2 ratio 8 -> width ratio 2, within 10 %. */
    double ratio = b.width / a.width, expect = cbrt(4000.0 / 500.0);
    printf("val_munk width ratio %.4f, expected (A2 ratio)^(1/3) = %.4f, rel. error %.3e "
           "(tolerance 0.10)\n",
           ratio, expect, fabs(ratio / expect - 1.0));
    fflush(stdout);
    ck_assert_msg(fabs(ratio / expect - 1.0) < 0.10,
                  "width ratio %.4f, expected %.4f from delta_M = (A2/beta)^(1/3)", ratio, expect);
    /* Munk 1950 no-slip layer (from memory): first maximum of psi at
     * 2 pi delta_M/sqrt3, within 10 %. */
    ck_assert_msg(fabs(a.width / (munk_pos * a.delta) - 1.0) < 0.10,
                  "A2 = 500: width %.2f km, Munk layer %.2f km", a.width / 1e3,
                  munk_pos * a.delta / 1e3);
    ck_assert_msg(fabs(b.width / (munk_pos * b.delta) - 1.0) < 0.10,
                  "A2 = 4000: width %.2f km, Munk layer %.2f km", b.width / 1e3,
                  munk_pos * b.delta / 1e3);

    /* (b) Sverdrup 1947: beta v = curl tau/(rho0 H) in the interior, within 3 %. */
    ck_assert_msg(b.steady < 1e-3, "A2 = 4000 run not steady (change %.2e over 100 days)",
                  b.steady);
    ck_assert_msg(fabs(b.sv_mid - 1.0) < 0.03, "beta v/W = %.5f at the basin centre", b.sv_mid);
    ck_assert_msg(b.sv_band < 0.03, "max |beta v/W - 1| = %.4f on L/2..3L/4", b.sv_band);
    /* psi at the centre: Sverdrup with the eastern no-slip layer, within 3 %. */
    ck_assert_msg(fabs(b.psi_ratio_east - 1.0) < 0.03,
                  "psi(L/2, L/2) / psi_Sverdrup (eastern layer allowed for) = %.5f",
                  b.psi_ratio_east);
}
END_TEST

static Suite *munk_suite(void)
{
    Suite *s = suite_create("val_munk");
    TCase *tc = tcase_create("munk_gyre");
    tcase_set_timeout(tc, 180);
    tcase_add_test(tc, munk_layer_and_sverdrup_interior);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(munk_suite());
}
