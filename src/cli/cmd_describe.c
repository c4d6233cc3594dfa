/* cmd_describe.c - `twingyre describe CONFIG`: resolved config and derived scales. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "cli.h"
#include "closure_host.h"
#include "initial.h"
#include "model.h"
#include "scales.h"
#include "step_limits.h"

static void width_line(const char *what, double w, double dx)
{
    if (isfinite(w) && w > 0)
        printf(";   %-34s %10.2f km  (%.1f grid spacings)\n", what, w / 1e3, w / dx);
    else
        printf(";   %-34s %10s\n", what, "none");
}

static void limit_line(const char *what, double dt, double smallest)
{
    if (isfinite(dt))
        printf(";   %-46s %12.4g s%s\n", what, dt, dt == smallest ? "  <- binds" : "");
    else
        printf(";   %-46s %12s\n", what, "none");
}

/* The step each limit allows (step_limits.h), the closures' at the initial
 * state, so a user sees which one binds. Builds the model and its initial
 * state; returns non-zero (with the message in st) when that fails. */
static int print_step_limits(const tg_config *cfg, tg_status *st)
{
    tg_model *m = tg_model_create(cfg, st);
    if (!m)
        return 1;
    if (tg_state_initial(m, cfg, NULL, st) != TG_OK) {
        tg_model_destroy(m);
        return 1;
    }
    tg_step_limits L;
    tg_step_limits_core(m, &L);
    tg_step_limits_closures(m, &L);
    const double speed = 1.0; /* m s-1, |u| + |v| */
    const double rate_now = tg_model_max_cfl(m, NULL, NULL, NULL) / m->dt;
    const double adv = tg_step_limits_advective(cfg->target_cfl, speed / m->geom->dx);
    const double adv_now = tg_step_limits_advective(cfg->target_cfl, rate_now);
    const double wave = tg_step_limits_wave(&L, cfg->target_cfl);
    const double damp = tg_step_limits_damping(&L, cfg->target_cfl);
    double lim[] = {adv, adv_now, wave, L.harmonic, L.biharmonic, L.drag, L.closure, damp};
    double smallest = INFINITY;
    for (size_t i = 0; i < sizeof lim / sizeof lim[0]; i++)
        smallest = fmin(smallest, lim[i]);
    char what[96];
    printf("; step limits (step_limits.h; %s steps, step_s %g s%s)\n",
           cfg->step_choice == TG_STEP_ADAPTIVE ? "adaptive" : "fixed", cfg->step_s,
           cfg->step_choice == TG_STEP_ADAPTIVE ? " first" : "");
    snprintf(what, sizeof what, "advective, CFL %g at |u|+|v| = 1 m/s", cfg->target_cfl);
    limit_line(what, adv, smallest);
    snprintf(what, sizeof what, "advective, CFL %g at the initial state", cfg->target_cfl);
    limit_line(what, adv_now, smallest);
    snprintf(what, sizeof what, "Rossby waves, phase %g per step", cfg->target_cfl);
    limit_line(what, wave, smallest);
    limit_line("harmonic viscosity (stability)", L.harmonic, smallest);
    limit_line("biharmonic viscosity (stability)", L.biharmonic, smallest);
    limit_line("bottom drag (stability)", L.drag, smallest);
    if (L.closure_which >= 0)
        snprintf(what, sizeof what, "closure %s at the initial state",
                 tg_closure_host_label(m->closures, L.closure_which));
    else if (tg_closure_host_count(m->closures) == 0)
        snprintf(what, sizeof what, "closures (none in use)");
    else
        snprintf(what, sizeof what, "closures (%d, none with a limit of its own)",
                 tg_closure_host_count(m->closures));
    limit_line(what, L.closure, smallest);
    limit_line("damping terms together, beside the CFL target", damp, smallest);
    tg_model_destroy(m);
    return 0;
}

/* The scales of one grid (the steps of duration_days are the caller's). */
static void print_scales(const tg_config *cfg, const tg_scales *s)
{
    printf(";   %-34s %10.3f km\n", "grid spacing", s->dx_m / 1e3);
    for (int m = 1; m < cfg->nlayers; m++) {
        char what[64];
        snprintf(what, sizeof what, "deformation radius, mode %d", m);
        width_line(what, s->radius_m[m], s->dx_m);
    }
    if (!s->periodic) {
        width_line("Munk layer (A2/beta)^(1/3)", s->munk_m, s->dx_m);
        width_line("Stommel layer r/beta", s->stommel_m, s->dx_m);
    }
    if (s->has_background) {
        for (int k = 0; k < cfg->nlayers; k++) {
            char what[64];
            snprintf(what, sizeof what, "background PV gradient, layer %d", k + 1);
            printf(";   %-34s %10.3e m-1 s-1\n", what, s->pv_gradient[k]);
        }
        printf(";   %-34s %10s\n", "PV gradient changes sign",
               s->gradient_changes_sign ? "yes" : "no");
        if (isfinite(s->critical_shear_m_s))
            printf(";   %-34s %10.4f m s-1  (shear / critical = %.2f)\n",
                   "critical shear beta g' H/f0^2", s->critical_shear_m_s, s->shear_ratio);
    }
    if (isfinite(s->rossby_period_days))
        printf(";   %-34s %10.2f days\n", "gravest Rossby basin mode period", s->rossby_period_days);
    printf(";   %-34s %10.3f\n", "CFL at 1 m/s", s->cfl_at_1ms);
    if (isfinite(s->sverdrup_transport_sv))
        printf(";   %-34s %10.2f Sv\n", "peak Sverdrup transport", s->sverdrup_transport_sv);
    printf(";   %-34s %10.1f MB\n", "memory estimate", s->memory_mb);
}

int cmd_describe(int argc, char **argv)
{
    tg_status st;
    tg_status_clear(&st);
    cli_opts o;
    tg_config cfg;
    tg_set_log(cli_log_to_stderr, NULL);
    if (cli_parse(argc, argv, 2, "set out member", &o, &st) != TG_OK ||
        cli_load_config(&o, 0, &cfg, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code);
    }
    tg_scales s;
    if (tg_scales_compute(&cfg, &s, &st) != TG_OK) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code);
    }
    char *ini = tg_config_to_ini(&cfg);
    if (!ini) {
        fprintf(stderr, "twingyre: out of memory\n");
        return cli_exit_code(TG_ERR_NOMEM);
    }
    printf("; resolved config of %s\n%s\n", o.config_path, ini);
    free(ini);
    if (tg_config_uses(&cfg) & TG_USE_TWIN)
        return describe_twin(&cfg, o.config_path, print_scales);
    printf("; derived scales\n");
    print_scales(&cfg, &s);
    printf(";   %-34s %10ld\n", "steps", s.steps);
    if (print_step_limits(&cfg, &st) != 0) {
        fprintf(stderr, "twingyre: %s\n", st.msg);
        return cli_exit_code(st.code ? st.code : TG_ERR_INTERNAL);
    }
    describe_warnings(&cfg, &s, "grid");
    return 0;
}
