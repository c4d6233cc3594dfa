/* budget.c - budget record layout and packing (budget.h). */
#include "budget.h"

#include <math.h>
#include <stdio.h>

static const char *const term_names[TG_NTERMS] = {
    "advection", "wind", "bottom_drag", "viscosity", "mean_flow_conversion", "closure"};
static const char *const term_words[TG_NTERMS] = {
    "advection (zero up to round-off)", "wind forcing", "bottom drag", "lateral viscosity",
    "the imposed background flow and planetary PV gradient (release of available potential "
    "energy from the imposed shear)",
    "sub-grid closures (all components)"};

const char *tg_term_name(int t)
{
    return (t >= 0 && t < TG_NTERMS) ? term_names[t] : "?";
}

void tg_diag_compute(tg_model *m, tg_diag *d)
{
    d->energy = tg_model_energy(m);
    tg_model_enstrophy(m, d->enstrophy);
    tg_model_kinetic_energy(m, d->kinetic);
    tg_model_mass_error(m, d->mass_error);
    d->max_cfl = tg_model_max_cfl(m, &d->cfl_layer, &d->cfl_x, &d->cfl_y);
}

/* Terms listed when the caller gives no mask: those of a basin run. */
static int term_on(const int *active, int t)
{
    return active ? active[t] != 0 : t != TG_TERM_MEAN_FLOW;
}

void tg_budget_layout_init(tg_budget_layout *lay, int nl, const int *active)
{
    int n = 0;
    lay->nl = nl;
    lay->ncomp = 0;
    for (int t = 0; t < TG_NTERMS; t++)
        lay->active[t] = term_on(active, t);
#define ADD(nm, un, ln, pl)                                                                  \
    do {                                                                                     \
        snprintf(lay->name[n], sizeof lay->name[n], "%s", nm);                               \
        snprintf(lay->words[n], sizeof lay->words[n], "%s", ln);                             \
        lay->var[n] = (tg_budget_var){lay->name[n], un, lay->words[n], pl};                  \
        n++;                                                                                 \
    } while (0)
    char nm[48], ln[128];
    ADD("energy", "m2 s-2", "domain-mean energy per unit mass at the end of the step", 0);
    ADD("energy_tendency", "m2 s-3", "(energy after - energy before) / step", 0);
    for (int t = 0; t < TG_NTERMS; t++) {
        if (!lay->active[t])
            continue;
        snprintf(nm, sizeof nm, "energy_%s", term_names[t]);
        snprintf(ln, sizeof ln, "energy rate from %s", term_words[t]);
        ADD(nm, "m2 s-3", ln, 0);
    }
    ADD("energy_residual", "m2 s-3", "energy tendency minus the sum of its terms", 0);
    ADD("enstrophy", "s-2", "layer potential enstrophy at the end of the step", 1);
    ADD("enstrophy_tendency", "s-3", "(enstrophy after - enstrophy before) / step", 1);
    for (int t = 0; t < TG_NTERMS; t++) {
        if (!lay->active[t])
            continue;
        snprintf(nm, sizeof nm, "enstrophy_%s", term_names[t]);
        if (t == TG_TERM_ADVECTION)
            snprintf(ln, sizeof ln, "enstrophy rate from advection (zero in periodic domains; "
                                    "in a basin a wall term of first order in dx)");
        else
            snprintf(ln, sizeof ln, "enstrophy rate from %s", term_words[t]);
        ADD(nm, "s-3", ln, 1);
    }
    ADD("enstrophy_residual", "s-3", "enstrophy tendency minus the sum of its terms", 1);
    ADD("kinetic_energy", "m2 s-2", "layer kinetic energy per unit mass, domain mean", 1);
    ADD("max_cfl", "1", "largest advective CFL number (|u|+|v|) dt/dx", 0);
    ADD("time_step", "s", "length of the step that ends at this record", 0);
    if (nl > 1)
        ADD("mass_error", "1",
            "domain integral of psi_i - psi_(i+1) over the integral of its absolute value", 2);
#undef ADD
    lay->n = n;
}

void tg_budget_layout_components(tg_budget_layout *lay, int ncomp, const char *const *labels)
{
    int n = lay->n;
    for (int c = 0; c < ncomp && n + 2 <= TG_BUDGET_MAX_VARS; c++) {
        snprintf(lay->name[n], sizeof lay->name[n], "energy_closure_%s", labels[c]);
        snprintf(lay->words[n], sizeof lay->words[n], "energy rate from the closure component %s",
                 labels[c]);
        lay->var[n] = (tg_budget_var){lay->name[n], "m2 s-3", lay->words[n], 0};
        n++;
        snprintf(lay->name[n], sizeof lay->name[n], "enstrophy_closure_%s", labels[c]);
        snprintf(lay->words[n], sizeof lay->words[n],
                 "enstrophy rate from the closure component %s", labels[c]);
        lay->var[n] = (tg_budget_var){lay->name[n], "s-3", lay->words[n], 1};
        n++;
        lay->ncomp = c + 1;
    }
    lay->n = n;
}

int tg_budget_pack(const tg_budget_layout *lay, double dt, const tg_diag *b, const tg_diag *a,
                   const tg_term_rates *r, double *v)
{
    const int nl = lay->nl;
    int n = 0;
    double sum = 0.0;
    v[n++] = a->energy;
    v[n++] = (a->energy - b->energy) / dt;
    for (int t = 0; t < TG_NTERMS; t++) {
        if (lay->active[t])
            v[n++] = r->energy[t];
        sum += r->energy[t];
    }
    v[n++] = (a->energy - b->energy) / dt - sum;
    for (int k = 0; k < nl; k++)
        v[n++] = a->enstrophy[k];
    for (int k = 0; k < nl; k++)
        v[n++] = (a->enstrophy[k] - b->enstrophy[k]) / dt;
    for (int t = 0; t < TG_NTERMS; t++)
        if (lay->active[t])
            for (int k = 0; k < nl; k++)
                v[n++] = r->enstrophy[t][k];
    for (int k = 0; k < nl; k++) {
        double s = 0.0;
        for (int t = 0; t < TG_NTERMS; t++)
            s += r->enstrophy[t][k];
        v[n++] = (a->enstrophy[k] - b->enstrophy[k]) / dt - s;
    }
    for (int k = 0; k < nl; k++)
        v[n++] = a->kinetic[k];
    v[n++] = a->max_cfl;
    v[n++] = dt;
    for (int i = 0; i + 1 < nl; i++)
        v[n++] = a->mass_error[i];
    for (int c = 0; c < lay->ncomp; c++) {
        v[n++] = r->comp_energy[c];
        for (int k = 0; k < nl; k++)
            v[n++] = r->comp_enstrophy[c][k];
    }
    return n;
}

void tg_budget_relative_residual(int nl, double dt, const tg_diag *b, const tg_diag *a,
                                 const tg_term_rates *r, double *e, double *z)
{
    double big = 0.0, sum = 0.0;
    for (int t = 0; t < TG_NTERMS; t++) {
        big = fmax(big, fabs(r->energy[t]));
        sum += r->energy[t];
    }
    double res = (a->energy - b->energy) / dt - sum;
    *e = big > 0.0 ? fabs(res) / big : fabs(res);
    double zr = 0.0;
    for (int k = 0; k < nl; k++) {
        double bz = 0.0, sz = 0.0;
        for (int t = 0; t < TG_NTERMS; t++) {
            bz = fmax(bz, fabs(r->enstrophy[t][k]));
            sz += r->enstrophy[t][k];
        }
        double rz = (a->enstrophy[k] - b->enstrophy[k]) / dt - sz;
        zr = fmax(zr, bz > 0.0 ? fabs(rz) / bz : fabs(rz));
    }
    *z = zr;
}
