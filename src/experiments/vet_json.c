/* vet_json.c - the outputs of `twingyre vet` (vet.h): the verdict table
 * printed at the end and DIR/vet.json (hand-written JSON: numbers with 17
 * significant digits, NaN and infinity as null, strings escaped per
 * RFC 8259).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "vet.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "textfile.h"

#ifndef PACKAGE_VERSION
#define PACKAGE_VERSION "unknown"
#endif

static void jstr(tg_strbuf *b, const char *s)
{
    char buf[8];
    tg_sb_printf(b, "\"");
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++)
        tg_sb_printf(b, "%s", tg_json_char(*p, buf));
    tg_sb_printf(b, "\"");
}

static void jnum(tg_strbuf *b, double v)
{
    if (isfinite(v))
        tg_sb_printf(b, "%.17g", v);
    else
        tg_sb_printf(b, "null");
}

static const char *verdict_word(tg_vet_verdict v)
{
    return v == TG_VET_PASS ? "pass" : v == TG_VET_FAIL ? "FAIL" : "info";
}

static void fmt_fig(double v, char *out, size_t n)
{
    if (isnan(v))
        snprintf(out, n, "-");
    else if (isinf(v))
        snprintf(out, n, v > 0 ? "inf" : "-inf");
    else
        snprintf(out, n, "%.4g", v);
}

void tg_vet_table(const tg_vet_report *r, tg_strbuf *b)
{
    tg_sb_printf(b, "online runs (window %g days; ratio = energy / energy without the closure at "
                    "the same time, largest over the samples; noise = kinetic-energy fraction in "
                    "K > pi/(2 dx) at the end)\n",
                 r->window_days);
    tg_sb_printf(b, "  %-6s %6s %8s %6s  %-8s %8s %8s %7s  %s\n", "grid", "points", "step_s",
                 "coef", "status", "ratio", "noise", "maxCFL", "reason");
    for (int i = 0; i < r->nruns; i++) {
        const tg_vet_run_result *x = &r->runs[i];
        char mult[16], ratio[16], noise[16];
        if (x->multiplier > 0.0)
            snprintf(mult, sizeof mult, "x%g", x->multiplier);
        else
            snprintf(mult, sizeof mult, "none");
        fmt_fig(x->energy_ratio, ratio, sizeof ratio);
        fmt_fig(x->noise_fraction, noise, sizeof noise);
        tg_sb_printf(b, "  %-6s %6d %8g %6s  %-8s %8s %8s %7.3f  %s\n",
                     x->finer ? "finer" : "config", x->points, x->step_s, mult,
                     x->stable ? "stable" : "UNSTABLE", ratio, noise, x->max_cfl, x->reason);
    }
    tg_sb_printf(b, "\nverdicts (closure %s, %d points, step %g s)\n", r->closure, r->points,
                 r->step_s);
    tg_sb_printf(b, "  %-64s %11s %-7s %11s  %-7s %s\n", "check", "figure", "unit", "limit",
                 "verdict", "reason");
    for (int i = 0; i < r->nchecks; i++) {
        const tg_vet_check *k = &r->checks[i];
        char fig[32], lim[40];
        if (isnan(k->figure) && k->figure_text[0])
            snprintf(fig, sizeof fig, "%s", k->figure_text);
        else
            fmt_fig(k->figure, fig, sizeof fig);
        if (k->relation[0] && !isnan(k->limit)) {
            char l[32];
            fmt_fig(k->limit, l, sizeof l);
            snprintf(lim, sizeof lim, "%s %s", k->relation, l);
        } else
            snprintf(lim, sizeof lim, "-");
        tg_sb_printf(b, "  %-64s %11s %-7s %11s  %-7s %s\n", k->title, fig,
                     k->unit[0] ? k->unit : "-", lim, verdict_word(k->verdict), k->reason);
    }
    if (r->stochastic)
        tg_sb_printf(b, "  (the linear and conservation checks evaluate stochastic components "
                        "with their noise frozen)\n");
    int nfail = 0;
    for (int i = 0; i < r->nchecks; i++)
        nfail += r->checks[i].verdict == TG_VET_FAIL;
    if (r->passed)
        tg_sb_printf(b, "\nverdict: every check passed (%.0f s)\n", r->seconds);
    else
        tg_sb_printf(b, "\nverdict: %d check%s FAILED (%.0f s)\n", nfail, nfail == 1 ? "" : "s",
                     r->seconds);
}

static void json_linear(tg_strbuf *b, const tg_vet_linear *l, double dt)
{
    tg_sb_printf(b, "{\"krylov_dimension_used\": %d, \"perturbation_s-1\": ", l->n);
    jnum(b, l->epsilon);
    tg_sb_printf(b, ", \"largest_magnitude_s-1\": ");
    jnum(b, l->largest_magnitude);
    tg_sb_printf(b, ", \"growth_rate_s-1\": ");
    jnum(b, l->growth_rate);
    tg_sb_printf(b, ", \"growth_rate_per_day\": ");
    jnum(b, l->growth_rate * 86400.0);
    tg_sb_printf(b, ", \"largest_stable_step_s\": ");
    jnum(b, l->step_limit);
    tg_sb_printf(b, ", \"configured_step_s\": ");
    jnum(b, dt);
    tg_sb_printf(b, ",\n      \"ritz_values_s-1\": [");
    for (int i = 0; i < l->n; i++) {
        tg_sb_printf(b, "%s[", i ? ", " : "");
        jnum(b, l->re[i]);
        tg_sb_printf(b, ", ");
        jnum(b, l->im[i]);
        tg_sb_printf(b, "]");
    }
    tg_sb_printf(b, "]}");
}

/* "settings": the vetted closure and the [vet] settings of the battery. */
static void json_settings(const tg_vet_report *r, const tg_config *cfg, tg_strbuf *b)
{
    tg_sb_printf(b, ",\n  \"settings\": {\"closure\": ");
    jstr(b, r->closure);
    tg_sb_printf(b, ", \"declared_dissipative\": %s, \"geometry\": ",
                 r->dissipative ? "true" : "false");
    jstr(b, cfg->geometry == TG_GEOM_PERIODIC ? "periodic" : "basin");
    tg_sb_printf(b, ", \"points\": %d, \"layers\": %d, \"step_s\": ", r->points, r->nlayers);
    jnum(b, r->step_s);
    tg_sb_printf(b, ", \"max_cfl\": ");
    jnum(b, cfg->max_cfl);
    tg_sb_printf(b, ",\n    \"reference_state\": ");
    jstr(b, cfg->vet_reference_state);
    tg_sb_printf(b, ", \"spinup_days\": ");
    jnum(b, cfg->vet_spinup_days);
    tg_sb_printf(b, ", \"window_days\": ");
    jnum(b, cfg->vet_window_days);
    tg_sb_printf(b, ", \"step_factors\": [");
    for (int i = 0; i < r->nfactors; i++) {
        tg_sb_printf(b, "%s", i ? ", " : "");
        jnum(b, r->factors[i]);
    }
    tg_sb_printf(b, "], \"multipliers\": [");
    for (int i = 0; i < r->nmultipliers; i++) {
        tg_sb_printf(b, "%s", i ? ", " : "");
        jnum(b, r->multipliers[i]);
    }
    tg_sb_printf(b, "],\n    \"krylov_dimension\": %d, \"growth_limit\": ",
                 cfg->vet_krylov_dimension);
    jnum(b, cfg->vet_growth_limit);
    tg_sb_printf(b, ", \"noise_limit\": ");
    jnum(b, cfg->vet_noise_limit);
    tg_sb_printf(b, ", \"required_margin\": ");
    jnum(b, cfg->vet_required_margin);
    tg_sb_printf(b, ", \"finer_grid\": %s", cfg->vet_finer_grid ? "true" : "false");
    if (r->stochastic)
        tg_sb_printf(b, ", \"stochastic_noise\": \"frozen during the linear and conservation "
                        "checks (same step and stage for every evaluation)\"");
    tg_sb_printf(b, "}");
}

/* "conservation": integral ratios and energy and enstrophy input at the
 * random and the eddying state. */
static void json_conservation(const tg_vet_report *r, tg_strbuf *b)
{
    tg_sb_printf(b, ",\n  \"conservation\": {");
    const char *states[2] = {"random", "eddying"};
    for (int s = 0; s < 2; s++) {
        tg_sb_printf(b, "%s\n    \"%s\": {\"integral_ratio\": [", s ? "," : "", states[s]);
        for (int k = 0; k < r->nlayers; k++) {
            tg_sb_printf(b, "%s", k ? ", " : "");
            jnum(b, r->integral_ratio[s][k]);
        }
        tg_sb_printf(b, "], \"energy_input_m2_s-3\": ");
        jnum(b, r->energy_rate[s]);
        tg_sb_printf(b, ", \"energy_input_abs_m2_s-3\": ");
        jnum(b, r->energy_rate_abs[s]);
        tg_sb_printf(b, ", \"enstrophy_input_s-3\": [");
        for (int k = 0; k < r->nlayers; k++) {
            tg_sb_printf(b, "%s", k ? ", " : "");
            jnum(b, r->enstrophy_rate[s][k]);
        }
        tg_sb_printf(b, "]}");
    }
    tg_sb_printf(b, "\n  }");
}

/* "online": the stability margins and every online run. */
static void json_online(const tg_vet_report *r, tg_strbuf *b)
{
    tg_sb_printf(b, ",\n  \"online\": {\"margins\": [");
    for (int i = 0; i < r->nfactors; i++) {
        tg_sb_printf(b, "%s{\"step_factor\": ", i ? ", " : "");
        jnum(b, r->factors[i]);
        tg_sb_printf(b, ", \"largest_stable_multiplier\": ");
        jnum(b, r->margin[i]);
        tg_sb_printf(b, "}");
    }
    tg_sb_printf(b, "], \"finer_points\": ");
    if (r->finer_points > 0)
        tg_sb_printf(b, "%d", r->finer_points);
    else
        tg_sb_printf(b, "null");
    tg_sb_printf(b, ", \"finer_largest_stable_multiplier\": ");
    jnum(b, r->margin_finer);
    tg_sb_printf(b, ",\n    \"runs\": [");
    for (int i = 0; i < r->nruns; i++) {
        const tg_vet_run_result *x = &r->runs[i];
        tg_sb_printf(b, "%s\n      {\"grid\": \"%s\", \"points\": %d, \"step_factor\": ",
                     i ? "," : "", x->finer ? "finer" : "configured", x->points);
        jnum(b, x->step_factor);
        tg_sb_printf(b, ", \"step_s\": ");
        jnum(b, x->step_s);
        tg_sb_printf(b, ", \"multiplier\": ");
        if (x->multiplier > 0.0)
            jnum(b, x->multiplier);
        else
            tg_sb_printf(b, "null");
        tg_sb_printf(b, ", \"closure\": %s, \"stable\": %s, \"reason\": ",
                     x->multiplier > 0.0 ? "true" : "false", x->stable ? "true" : "false");
        jstr(b, x->reason);
        tg_sb_printf(b, ", \"fault_day\": ");
        jnum(b, x->fail_day);
        tg_sb_printf(b, ", \"energy_ratio\": ");
        jnum(b, x->energy_ratio);
        tg_sb_printf(b, ", \"noise_fraction\": ");
        jnum(b, x->noise_fraction);
        tg_sb_printf(b, ", \"max_cfl\": ");
        jnum(b, x->max_cfl);
        tg_sb_printf(b, ", \"energy_start_m2_s-2\": ");
        jnum(b, x->energy_start);
        tg_sb_printf(b, ", \"energy_end_m2_s-2\": ");
        jnum(b, x->energy_end);
        tg_sb_printf(b, "}");
    }
    tg_sb_printf(b, "\n    ]\n  }");
}

/* "checks": each check with its figure, limit and verdict. */
static void json_checks(const tg_vet_report *r, tg_strbuf *b)
{
    tg_sb_printf(b, ",\n  \"checks\": [");
    for (int i = 0; i < r->nchecks; i++) {
        const tg_vet_check *k = &r->checks[i];
        tg_sb_printf(b, "%s\n    {\"name\": ", i ? "," : "");
        jstr(b, k->name);
        tg_sb_printf(b, ", \"title\": ");
        jstr(b, k->title);
        tg_sb_printf(b, ", \"figure\": ");
        jnum(b, k->figure);
        tg_sb_printf(b, ", \"unit\": ");
        jstr(b, k->unit);
        tg_sb_printf(b, ", \"relation\": ");
        jstr(b, k->relation);
        tg_sb_printf(b, ", \"limit\": ");
        jnum(b, k->limit);
        tg_sb_printf(b, ", \"verdict\": ");
        jstr(b, k->verdict == TG_VET_PASS ? "pass" : k->verdict == TG_VET_FAIL ? "fail" : "info");
        tg_sb_printf(b, ", \"reason\": ");
        jstr(b, k->reason);
        tg_sb_printf(b, "}");
    }
    tg_sb_printf(b, "\n  ]");
}

void tg_vet_json(const tg_vet_report *r, const tg_config *cfg, const char *command_line,
                 tg_strbuf *b)
{
    tg_sb_printf(b, "{\n  \"program\": ");
    jstr(b, "twingyre " PACKAGE_VERSION);
    tg_sb_printf(b, ",\n  \"command_line\": ");
    jstr(b, command_line ? command_line : "");
    tg_sb_printf(b, ",\n  \"passed\": %s,\n  \"seconds\": ", r->passed ? "true" : "false");
    jnum(b, r->seconds);

    json_settings(r, cfg, b);

    tg_sb_printf(b, ",\n  \"reference\": {\"made_by\": ");
    jstr(b, r->reference);
    tg_sb_printf(b, ", \"energy_m2_s-2\": ");
    jnum(b, r->reference_energy);
    tg_sb_printf(b, "}");

    tg_sb_printf(b, ",\n  \"linear\": {\n    \"rest\": ");
    json_linear(b, &r->linear[0], r->step_s);
    tg_sb_printf(b, ",\n    \"reference\": ");
    json_linear(b, &r->linear[1], r->step_s);
    tg_sb_printf(b, "\n  }");

    json_conservation(r, b);
    json_online(r, b);
    json_checks(r, b);
    tg_sb_printf(b, "\n}\n");
}
