/* scales.h - derived scales of an experiment, for `twingyre describe`.
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
} tg_scales;

tg_code tg_scales_compute(const tg_config *cfg, tg_scales *s, tg_status *st);

#endif
