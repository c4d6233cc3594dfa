/* budget.c - budget record layout and packing (budget.h). */
#include "budget.h"
#include "fdops.h"

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

/* The per-step diagnostics in one pass over the rows (tg_diag_compute).
 * Each row's sums are those of tg_model_energy, tg_model_enstrophy,
 * tg_model_kinetic_energy and tg_model_mass_error (tg_model_mass_row),
 * formed with the same operations in the same order, and the rows are
 * then added in the same order; the largest CFL number is tg_max_cfl's (a
 * maximum is the same in any order): the results are the same bits. Each row sum is a chain of dependent additions; the separate
 * functions ran one chain per pass over the field, here the chains of a
 * row advance together (three per layer, two layers per loop), which is
 * most of the saving besides reading each field once. Row sums go to
 * m->rowsums, slot s of row j at s * ns + j:
 *   k: energy, nl + k: enstrophy, 2 nl + k: kinetic energy, 3 nl + k: CFL,
 *   4 nl + i and 5 nl + i: mass error numerator and denominator. */

/* Energy, enstrophy and kinetic energy chains of layers k0 .. k0 + nk - 1
 * (nk = 1 or 2) on active row j. */
static inline void diag_sums(const tg_model *m, int j, int k0, int nk, double *rs)
{
    const tg_geometry *g = m->geom;
    const int nl = m->nl, ns = g->ns, a0 = g->a0, a1 = g->a1;
    const long npl = m->npl, r0 = (long)j * ns;
    const double *by = m->beta_y + r0;
    const double *q0 = m->q + k0 * npl + r0, *p0 = m->psi + k0 * npl + r0,
                 *z0 = m->zeta + k0 * npl + r0;
    const double c0 = m->wall[k0];
    double e0 = 0.0, s0 = 0.0, t0 = 0.0;
    if (nk == 2) {
        const double *q1 = q0 + npl, *p1 = p0 + npl, *z1 = z0 + npl;
        const double c1 = m->wall[k0 + 1];
        double e1 = 0.0, s1 = 0.0, t1 = 0.0;
        for (int i = a0; i < a1; i++) {
            e0 += (q0[i] - by[i]) * (p0[i] - c0);
            s0 += q0[i] * (q0[i] - 0.0);
            t0 += z0[i] * (p0[i] - c0);
            e1 += (q1[i] - by[i]) * (p1[i] - c1);
            s1 += q1[i] * (q1[i] - 0.0);
            t1 += z1[i] * (p1[i] - c1);
        }
        rs[(long)(k0 + 1) * ns + j] = e1;
        rs[(long)(nl + k0 + 1) * ns + j] = s1;
        rs[(long)(2 * nl + k0 + 1) * ns + j] = t1;
    } else {
        for (int i = a0; i < a1; i++) {
            e0 += (q0[i] - by[i]) * (p0[i] - c0);
            s0 += q0[i] * (q0[i] - 0.0);
            t0 += z0[i] * (p0[i] - c0);
        }
    }
    rs[(long)k0 * ns + j] = e0;
    rs[(long)(nl + k0) * ns + j] = s0;
    rs[(long)(2 * nl + k0) * ns + j] = t0;
}

/* The CFL number of layer k at node i of stored row j, as tg_max_cfl forms it. */
static inline double cfl_at(const double *restrict pc, int ns, int i, double c, double twodxu)
{
    return c * (fabs(pc[i + ns] - pc[i - ns] - twodxu) + fabs(pc[i + 1] - pc[i - 1]));
}

/* Layer k's largest CFL number on active row j (INFINITY when the row has
 * a NaN). A maximum does not depend on the order it is taken in, so the
 * loop vectorizes and the value is tg_max_cfl's; the node, which only the
 * overall largest needs, is found afterwards (cfl_node). */
static inline void diag_cfl(const tg_model *m, int j, int k, double *rs)
{
    const tg_geometry *g = m->geom;
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double c = m->dt / (2.0 * g->dx * g->dx), twodxu = 2.0 * g->dx * m->U[k];
    const double *pc = m->psi + k * m->npl + (long)j * ns;
    double mx = -1.0;
    int nan = 0;
#pragma omp simd reduction(max : mx) reduction(| : nan)
    for (int i = a0; i < a1; i++) {
        const double v = cfl_at(pc, ns, i, c, twodxu);
        mx = v > mx ? v : mx;
        nan |= v != v;
    }
    rs[(long)(3 * m->nl + k) * ns + j] = nan ? INFINITY : mx;
}

/* The node of row j of layer k where tg_max_cfl's scan stops with the
 * row's largest value mx: the first NaN or infinity when mx is infinite,
 * else the first node equal to mx. */
static long cfl_node(const tg_model *m, int j, int k, double mx)
{
    const tg_geometry *g = m->geom;
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const double c = m->dt / (2.0 * g->dx * g->dx), twodxu = 2.0 * g->dx * m->U[k];
    const double *pc = m->psi + k * m->npl + (long)j * ns;
    for (int i = a0; i < a1; i++) {
        const double v = cfl_at(pc, ns, i, c, twodxu);
        if (isinf(mx) ? (isnan(v) || isinf(v)) : v == mx)
            return (long)j * ns + i;
    }
    return (long)j * ns + a0;
}

void tg_diag_compute(tg_model *m, tg_diag *d)
{
    const tg_geometry *g = m->geom;
    const int nl = m->nl, ns = g->ns, a0 = g->a0, a1 = g->a1;
    double *rs = m->rowsums;
#pragma omp parallel for schedule(static)
    for (int j = 0; j < ns; j++) {
        if (j >= a0 && j < a1) {
            int k = 0;
            for (; k + 1 < nl; k += 2)
                diag_sums(m, j, k, 2, rs);
            if (k < nl)
                diag_sums(m, j, k, 1, rs);
            for (k = 0; k < nl; k++)
                diag_cfl(m, j, k, rs);
        }
        for (int i = 0; i + 1 < nl; i++)
            tg_model_mass_row(m, j, i, &rs[(long)(4 * nl + i) * ns + j],
                              &rs[(long)(5 * nl + i) * ns + j]);
    }

    /* The rows in order, as the separate functions add them. */
    const double dx = g->dx;
    double e = 0.0;
    for (int k = 0; k < nl; k++) {
        double se = 0.0, sz = 0.0, sk = 0.0;
        for (int j = a0; j < a1; j++) {
            se += rs[(long)k * ns + j];
            sz += rs[(long)(nl + k) * ns + j];
            sk += rs[(long)(2 * nl + k) * ns + j];
        }
        e += m->cfg.thickness_m[k] * (se * dx * dx);
        d->enstrophy[k] = 0.5 * (sz * dx * dx) / g->area;
        d->kinetic[k] = -0.5 * (sk * dx * dx) / g->area;
    }
    d->energy = -0.5 * e / (m->Htot * g->area);
    for (int i = 0; i + 1 < nl; i++) {
        double s = 0.0, sa = 0.0;
        for (int j = 0; j < ns; j++) {
            s += rs[(long)(4 * nl + i) * ns + j];
            sa += rs[(long)(5 * nl + i) * ns + j];
        }
        d->mass_error[i] = sa > 0.0 ? s / sa : 0.0;
    }
    double best = -1.0;
    int kbest = 0, jbest = a0;
    for (int k = 0; k < nl; k++) {
        double c = -1.0;
        int w = a0;
        for (int j = a0; j < a1; j++)
            if (rs[(long)(3 * nl + k) * ns + j] > c) {
                c = rs[(long)(3 * nl + k) * ns + j];
                w = j;
            }
        if (c > best) {
            best = c;
            jbest = w;
            kbest = k;
        }
    }
    const long at = cfl_node(m, jbest, kbest, best);
    d->max_cfl = best;
    d->cfl_layer = kbest;
    d->cfl_x = g->coord[at % ns];
    d->cfl_y = g->coord[at / ns];
}

long tg_diag_nonfinite(const tg_model *m, const tg_diag *d, int *layer)
{
    for (int k = 0; k < m->nl; k++) {
        if (isfinite(d->enstrophy[k]))
            continue;
        long bad = tg_find_nonfinite(m->geom, m->q + k * m->npl);
        if (bad >= 0) {
            if (layer)
                *layer = k;
            return bad;
        }
    }
    return -1;
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
