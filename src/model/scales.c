/* scales.c - derived scales for `twingyre describe` (scales.h). */
#include "scales.h"

#include <math.h>

#include "constants.h"
#include "modes.h"

/* The periodic domain's scales. No walls, so no boundary layers, basin
 * modes or Sverdrup transport. With a uniform zonal flow U_k per layer
 * (psi_k = -U_k y), the background PV gradient of layer k is
 *     Q_k,y = beta - sum_j S_kj U_j
 * and a sign change of Q_y between layers is the necessary condition for
 * baroclinic instability (Charney & Stern 1962, J. Atmos. Sci. 19,
 * 159-172; Pedlosky 1987, Geophysical Fluid Dynamics, section 7.4). For
 * two layers, with F_k = f0^2/(g' H_k), Q_2,y = beta - F_2 (U1 - U2) and
 * Q_1,y = beta + F_1 (U1 - U2), so the gradient changes sign once
 * U1 - U2 > beta/F_2 = beta g' H_2 / f0^2 (or U2 - U1 > beta/F_1): the
 * critical shear of the two-layer model (Phillips 1954, Tellus 6,
 * 273-286; Pedlosky 1987, section 7.11). */
static void periodic_scales(const tg_config *cfg, const tg_modes *md, tg_scales *s)
{
    const double beta = cfg->beta_per_m_per_s;
    const int nl = cfg->nlayers;
    s->periodic = cfg->geometry == TG_GEOM_PERIODIC;
    s->has_background = s->periodic && cfg->n_zonal_velocity == nl;
    s->gradient_changes_sign = 0;
    s->critical_shear_m_s = NAN;
    s->shear_ratio = NAN;
    for (int k = 0; k < TG_MAX_LAYERS; k++)
        s->pv_gradient[k] = NAN;
    if (s->periodic) {
        s->munk_m = s->stommel_m = s->rossby_period_days = s->sverdrup_transport_sv = NAN;
    }
    if (s->has_background) {
        int pos = 0, neg = 0;
        for (int k = 0; k < nl; k++) {
            double g = beta;
            for (int j = 0; j < nl; j++)
                g -= md->S[k][j] * cfg->zonal_velocity_m_s[j];
            s->pv_gradient[k] = g;
            pos |= g > 0;
            neg |= g < 0;
        }
        s->gradient_changes_sign = pos && neg;
        if (nl == 2) {
            double shear = cfg->zonal_velocity_m_s[0] - cfg->zonal_velocity_m_s[1];
            double f2 = cfg->coriolis_f0_per_s * cfg->coriolis_f0_per_s;
            double gp = cfg->reduced_gravity_m_s2[0];
            double H = shear >= 0 ? cfg->thickness_m[1] : cfg->thickness_m[0];
            s->critical_shear_m_s = beta * gp * H / f2;
            s->shear_ratio = s->critical_shear_m_s > 0 ? fabs(shear) / s->critical_shear_m_s
                                                       : INFINITY;
        }
    }
}

tg_code tg_scales_compute(const tg_config *cfg, tg_scales *s, tg_status *st)
{
    tg_modes md;
    tg_code rc = tg_modes_compute(&md, cfg->nlayers, cfg->thickness_m, cfg->reduced_gravity_m_s2,
                                  cfg->coriolis_f0_per_s, st);
    if (rc != TG_OK)
        return rc;
    const double L = cfg->size_km * 1e3;
    const int N = cfg->geometry == TG_GEOM_BASIN ? cfg->points - 1 : cfg->points;
    const double beta = cfg->beta_per_m_per_s;
    s->dx_m = L / N;
    for (int m = 0; m < TG_MAX_LAYERS; m++)
        s->radius_m[m] = m > 0 && m < md.n ? tg_modes_radius(&md, m) : NAN;
    /* Munk (1950) and Stommel (1948) boundary-layer widths. */
    s->munk_m = beta > 0 ? cbrt(cfg->viscosity_m2_per_s / beta) : NAN;
    s->stommel_m = beta > 0 ? cfg->bottom_drag_per_s / beta : NAN;
    /* Gravest barotropic basin mode, Longuet-Higgins 1964 (Proc. R. Soc. A 279, 446-473):
     * omega = beta / (2 K), K^2 = (pi/L)^2 + (pi/L)^2 in a square basin. */
    double K = sqrt(2.0) * TG_PI / L;
    s->rossby_period_days = beta > 0 ? 2.0 * TG_PI / (beta / (2.0 * K)) / TG_SECONDS_PER_DAY : NAN;
    s->cfl_at_1ms = cfg->step_s / s->dx_m;
    /* Arrays: 7 per layer of (N+1)^2 plus 6 single ones, the Helmholtz tables
     * (one per mode), homogeneous solutions and output buffers. */
    double npl = (double)(N + 1) * (N + 1);
    int nl = cfg->nlayers;
    s->memory_mb = 8.0 * npl * (7.0 * nl + 6.0 + 2.0 * nl + (nl - 1) + 2.0 * nl) / 1e6;
    /* Sverdrup transport of the wind: beta V = curl tau / rho0 integrated
     * across the basin: max over y of |curl tau| L / (rho0 beta). */
    double curl = 0.0;
    if (cfg->wind_profile == TG_WIND_DOUBLE_GYRE)
        curl = cfg->stress_amplitude_pa * 2.0 * TG_PI / L;
    else if (cfg->wind_profile == TG_WIND_SINGLE_GYRE)
        curl = cfg->stress_amplitude_pa * TG_PI / L;
    s->sverdrup_transport_sv =
        beta > 0 ? curl * L / (cfg->reference_density_kg_m3 * beta) / 1e6 : NAN;
    s->steps = (long)llround(cfg->duration_days * TG_SECONDS_PER_DAY / cfg->step_s);

    periodic_scales(cfg, &md, s);
    return TG_OK;
}
