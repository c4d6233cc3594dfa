/* scales.h - derived scales of an experiment, for `twingyre describe`.
 *
 * In a basin: grid spacing, deformation radii, the western boundary-layer
 * widths, the gravest basin mode, the Sverdrup transport. In a periodic
 * domain the wall scales mean nothing; with an imposed zonal flow the
 * background PV gradient of each layer and, for two layers, the critical
 * shear of baroclinic instability are given instead.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_SCALES_H
#define TG_SCALES_H

#include "config.h"
#include "status.h"

typedef struct {
    double dx_m;                           /* grid spacing */
    double radius_m[TG_MAX_LAYERS];        /* deformation radius of baroclinic mode m (index m) */
    double munk_m;                         /* (A2/beta)^(1/3), Munk 1950 */
    double stommel_m;                      /* r/beta, Stommel 1948 */
    double rossby_period_days;             /* gravest basin mode, barotropic */
    double cfl_at_1ms;                     /* 1 m/s * dt / dx (|u| + |v| with one component) */
    double memory_mb;                      /* estimate of the model's arrays */
    double sverdrup_transport_sv;          /* max interior Sverdrup transport of the wind */
    long steps;                            /* steps in duration_days */
    int periodic;                          /* 1: doubly periodic domain (no walls) */
    /* Periodic domain with an imposed zonal flow ([background]): */
    int has_background;                    /* 1 when zonal velocities are set */
    double pv_gradient[TG_MAX_LAYERS];     /* background PV gradient per layer, m-1 s-1 */
    int gradient_changes_sign;             /* 1: the necessary condition for instability holds */
    double critical_shear_m_s;             /* two layers: Phillips critical shear (NAN otherwise) */
    double shear_ratio;                    /* |U1 - U2| / critical_shear_m_s */
} tg_scales;

tg_code tg_scales_compute(const tg_config *cfg, tg_scales *s, tg_status *st);

#endif
