/* cmd_describe.c - `twingyre describe CONFIG`: resolved config and derived scales. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "scales.h"
#include "cli.h"

static void width_line(const char *what, double w, double dx)
{
    if (isfinite(w) && w > 0)
        printf(";   %-34s %10.2f km  (%.1f grid spacings)\n", what, w / 1e3, w / dx);
    else
        printf(";   %-34s %10s\n", what, "none");
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
    printf("; derived scales\n");
    printf(";   %-34s %10.3f km\n", "grid spacing", s.dx_m / 1e3);
    for (int m = 1; m < cfg.nlayers; m++) {
        char what[64];
        snprintf(what, sizeof what, "deformation radius, mode %d", m);
        width_line(what, s.radius_m[m], s.dx_m);
    }
    if (!s.periodic) {
        width_line("Munk layer (A2/beta)^(1/3)", s.munk_m, s.dx_m);
        width_line("Stommel layer r/beta", s.stommel_m, s.dx_m);
    }
    if (s.has_background) {
        for (int k = 0; k < cfg.nlayers; k++) {
            char what[64];
            snprintf(what, sizeof what, "background PV gradient, layer %d", k + 1);
            printf(";   %-34s %10.3e m-1 s-1\n", what, s.pv_gradient[k]);
        }
        printf(";   %-34s %10s\n", "PV gradient changes sign",
               s.gradient_changes_sign ? "yes" : "no");
        if (isfinite(s.critical_shear_m_s))
            printf(";   %-34s %10.4f m s-1  (shear / critical = %.2f)\n",
                   "critical shear beta g' H/f0^2", s.critical_shear_m_s, s.shear_ratio);
    }
    if (isfinite(s.rossby_period_days))
        printf(";   %-34s %10.2f days\n", "gravest Rossby basin mode period", s.rossby_period_days);
    printf(";   %-34s %10.3f\n", "CFL at 1 m/s", s.cfl_at_1ms);
    if (isfinite(s.sverdrup_transport_sv))
        printf(";   %-34s %10.2f Sv\n", "peak Sverdrup transport", s.sverdrup_transport_sv);
    printf(";   %-34s %10ld\n", "steps", s.steps);
    printf(";   %-34s %10.1f MB\n", "memory estimate", s.memory_mb);
    return 0;
}
