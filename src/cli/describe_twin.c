/* describe_twin.c - the parts of `twingyre describe` beyond the resolved
 * config and the scales of one grid: a twin config's phases, step counts
 * and both grids, and warnings about risky settings that can be seen
 * without running.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "closure.h"
#include "constants.h"
#include "scales.h"
#include "cli.h"

/* The speed of a western boundary current or an eddying jet, the stated
 * velocity of the CFL warning (of order 1 m/s in the wind-driven gyres:
 * Pedlosky 1996, Ocean Circulation Theory, section 2.1, from memory); in a
 * periodic domain the fastest imposed flow when that is faster. */
#define DESCRIBE_SPEED_M_S 1.0

/* One comment of describe's output, wrapped at 78 columns: "; " then the
 * text, continuation lines indented, so that the output stays a config
 * that reads back (its lines have a length limit). */
static void comment(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
static void comment(const char *fmt, ...)
{
    char text[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(text, sizeof text, fmt, ap);
    va_end(ap);
    const char *p = text;
    int first = 1;
    while (*p) {
        const int room = first ? 76 : 72;
        size_t n = strlen(p);
        if ((int)n > room) {
            n = (size_t)room;
            while (n > 0 && p[n] != ' ')
                n--;
            if (n == 0)
                n = (size_t)room;
        }
        printf("%s%.*s\n", first ? "; " : ";     ", (int)n, p);
        p += n;
        while (*p == ' ')
            p++;
        first = 0;
    }
}

void describe_warnings(const tg_config *cfg, const tg_scales *s, const char *grid)
{
    const double dx = s->dx_m, dt = cfg->step_s;
    double speed = DESCRIBE_SPEED_M_S;
    for (int k = 0; k < cfg->n_zonal_velocity; k++)
        speed = fmax(speed, 2.0 * fabs(cfg->zonal_velocity_m_s[k]));
    const double cfl = speed * dt / dx;
    if (cfl > cfg->max_cfl)
        comment("warning (%s): a current of %.2g m/s gives CFL %.3g, above max_cfl %g: "
               "boundary currents and jets reach about 1 m/s, and the run stops there; a step "
               "of at most %.0f s keeps it below",
               grid, speed, cfl, cfg->max_cfl, cfg->max_cfl * dx / speed);
    if (!s->periodic && isfinite(s->munk_m) && s->munk_m < 2.0 * dx)
        comment("warning (%s): the Munk layer (A2/beta)^(1/3) = %.1f km spans %.2f grid "
               "spacings; below about 2 the western boundary layer is under-resolved (grid-scale "
               "noise at the wall unless a closure damps it; common practice): "
               "viscosity_m2_per_s >= beta (2 dx)^3 = %.0f m2 s-1, or a finer grid",
               grid, s->munk_m / 1e3, s->munk_m / dx,
               cfg->beta_per_m_per_s * 8.0 * dx * dx * dx);
    /* The core's explicit stability bounds, as the adaptive steps use them
     * (closure.h, step_limits.h). */
    const struct {
        const char *what;
        double limit;
    } diff[] = {
        {"harmonic viscosity: 2.5 dx^2 / (8 A2)",
         tg_stable_step_harmonic(cfg->viscosity_m2_per_s, dx)},
        {"biharmonic viscosity: 2.5 dx^4 / (64 A4)",
         tg_stable_step_biharmonic(cfg->hyperviscosity_m4_per_s, dx)},
        {"bottom drag: 2.5 / r",
         cfg->bottom_drag_per_s > 0 ? TG_RK3_REAL_AXIS / cfg->bottom_drag_per_s : INFINITY},
    };
    for (size_t i = 0; i < sizeof diff / sizeof diff[0]; i++)
        if (dt > diff[i].limit)
            comment("warning (%s): step_s = %g s is above the explicit stability limit of the "
                   "%s = %.0f s; the run will blow up",
                   grid, dt, diff[i].what, diff[i].limit);
}

/* Steps of `days` at step dt (what the twin takes). */
static long steps_of(double days, double dt)
{
    return (long)llround(days * TG_SECONDS_PER_DAY / dt);
}

int describe_twin(const tg_config *cfg, const char *origin,
                  void (*print_scales)(const tg_config *, const tg_scales *))
{
    tg_status st;
    tg_status_clear(&st);
    tg_config *ref = malloc(sizeof *ref), *coarse = malloc(sizeof *coarse);
    tg_scales sr, sc;
    tg_code rc = ref && coarse ? TG_OK : tg_fail(&st, TG_ERR_NOMEM, "out of memory");
    if (rc == TG_OK)
        rc = tg_config_twin_reference(cfg, origin, ref, &st);
    if (rc == TG_OK)
        rc = tg_config_twin_coarse(cfg, origin, coarse, &st);
    if (rc == TG_OK)
        rc = tg_scales_compute(ref, &sr, &st);
    if (rc == TG_OK)
        rc = tg_scales_compute(coarse, &sc, &st);
    if (rc != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        free(ref);
        free(coarse);
        return cli_exit_code(rc);
    }
    const double dtr = ref->step_s, dtc = coarse->step_s;
    const long nspin = steps_of(cfg->twin_spinup_days, dtr);
    const long nwin = steps_of(cfg->twin_analysis_days, dtr);
    const long ncoarse = steps_of(cfg->twin_analysis_days, dtc);
    const long nsamples = (long)llround(cfg->twin_analysis_days / cfg->twin_sample_every_days);
    printf("; twin experiment ([time] duration_days is not used: the phases set the lengths)\n");
    comment("  1. reference spin-up: %g days, %ld steps of %g s on %d points",
            cfg->twin_spinup_days, nspin, dtr, ref->points);
    comment("  2. reference window: %g days, %ld steps of %g s, %ld samples every %g days",
            cfg->twin_analysis_days, nwin, dtr, nsamples, cfg->twin_sample_every_days);
    comment("  3. each coarse run: %g days, %ld steps of %g s on %d points, for none, %s%s",
            cfg->twin_analysis_days, ncoarse, dtc, coarse->points,
            cfg->twin_compare[0] ? cfg->twin_compare : "(no closure)",
            cfg->twin_members > 1 ? "; stochastic closures once per member" : "");
    printf("\n; derived scales of the reference grid\n");
    print_scales(ref, &sr);
    describe_warnings(ref, &sr, "reference grid");
    printf("\n; derived scales of the coarse grid\n");
    print_scales(coarse, &sc);
    describe_warnings(coarse, &sc, "coarse grid");
    free(ref);
    free(coarse);
    return 0;
}
