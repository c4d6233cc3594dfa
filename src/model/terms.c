/* terms.c - the PV tendency with each term's budget rates, and the fused
 * Runge-Kutta stage pass that uses it.
 *
 * The built-in terms are computed row by row (tendency_row) and added into
 * the total tendency; each term's energy and enstrophy rates are formed on
 * the way. The rates are
 *   energy:    -(1/(H A)) sum_k H_k sum_active (psi_k - c_k) T_k dx^2
 *   enstrophy:  (1/A) sum_active q_k T_k dx^2            (per layer)
 * where c_k is psi_k's wall value; with psi constant on the walls and the
 * mass constraint, the first is exactly the rate of change of the discrete
 * energy that tg_model_energy computes (DEVELOPERS.md, "Discrete energy").
 * Every sum is formed row by row (each row's sum the same whatever the
 * thread count) and the rows are then added in row order.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <omp.h>
#include <string.h>

#include "fdops.h"
#include "model.h"
#include "simdclone.h"

/* The built-in terms:
 *   advection      -J(psi_k, q_k)                      Arakawa (1966)
 *   wind           curl(tau)/(rho0 H_1)                 top layer
 *   bottom drag    -r zeta_N                            bottom layer
 *   viscosity      A2 lap zeta_k - A4 lap^2 zeta_k
 *   mean flow      -U_k dq_k/dx - Qy_k dpsi_k/dx         periodic (model.h) */
enum { F_ADV, F_WIND, F_DRAG, F_VISC, F_MEAN, F_N };
static const int fused_term[F_N] = {TG_TERM_ADVECTION, TG_TERM_WIND, TG_TERM_BOTTOM_DRAG,
                                    TG_TERM_VISCOSITY, TG_TERM_MEAN_FLOW};

/* What layer k's built-in terms need, set once per evaluation. */
typedef struct {
    int present[F_N];
    double rj;          /* 1/(12 dx^2): Arakawa */
    double A2rl, A4;    /* A2/dx^2 and A4: viscosity */
    double cd;          /* -r: bottom drag */
    double cu, cq;      /* -U_k/(2 dx), -Qy_k/(2 dx): mean flow */
    double wall;        /* psi_k's wall value */
    const double *psi, *q, *zeta, *wind, *lap2; /* layer k's fields; lap2 NULL without A4 */
} layer_terms;

static void layer_setup(tg_model *m, int k, layer_terms *t)
{
    const tg_geometry *g = m->geom;
    const tg_config *c = &m->cfg;
    const long off = k * m->npl;
    t->present[F_ADV] = 1;
    t->present[F_WIND] =
        k == 0 && c->wind_profile != TG_WIND_NONE && c->stress_amplitude_pa != 0.0;
    t->present[F_DRAG] = k == m->nl - 1 && c->bottom_drag_per_s != 0.0;
    t->present[F_VISC] = c->viscosity_m2_per_s != 0.0 || c->hyperviscosity_m4_per_s != 0.0;
    t->present[F_MEAN] = m->term_active[TG_TERM_MEAN_FLOW];
    t->rj = 1.0 / (12.0 * g->dx * g->dx);
    t->A2rl = c->viscosity_m2_per_s * (1.0 / (g->dx * g->dx));
    t->A4 = c->hyperviscosity_m4_per_s;
    t->cd = -c->bottom_drag_per_s;
    const double rx = 1.0 / (2.0 * g->dx);
    t->cu = -m->U[k] * rx;
    t->cq = -m->Qy[k] * rx;
    t->wall = m->wall[k];
    t->psi = m->psi + off;
    t->q = m->q + off;
    t->zeta = m->zeta + off;
    t->wind = m->wind_forcing;
    t->lap2 = t->A4 != 0.0 ? m->lap2 + off : NULL;
}

/* Sets up every layer; the biharmonic operator needs lap^2 zeta of every
 * layer before a pass: two Laplacians with the wall condition of lap zeta
 * in between. */
static void setup_terms(tg_model *m, layer_terms *lt)
{
    const tg_geometry *g = m->geom;
    for (int k = 0; k < m->nl; k++)
        layer_setup(m, k, &lt[k]);
    for (int k = 0; k < m->nl; k++) {
        if (!lt[k].lap2)
            continue;
        tg_laplacian(g, lt[k].zeta, m->lap1);
        g->ops->fill_laplacian_ring(g, m->lap1);
        tg_laplacian(g, m->lap1, m->lap2 + k * m->npl);
    }
}

/* Where row j's sum s of layer k goes in m->rowsums: s = 2 t for the
 * energy sum of term t, sum (psi - c) T_t, and 2 t + 1 for its enstrophy
 * sum, sum q T_t (0 for an absent term). */
static inline double *rowsum_slot(tg_model *m, int k, int s, int j)
{
    return m->rowsums + ((long)k * 2 * F_N + s) * m->geom->ns + j;
}

/* Row j of layer k's built-in tendency into o[a0..a1), and the row's
 * budget sums into m->rowsums. v is a scratch row of ns values. The stencils
 * are fdops.h's point kernels. The terms are added in the order of the
 * list above, each term present in a short loop of its own over the row (a
 * loop with every term and ten sums at once runs out of registers). Compiled
 * for AVX2 too (simdclone.h): there the row's sums differ at round-off. */
TG_SIMD_CLONES static void tendency_row(tg_model *m, const layer_terms *lt, int k, int j, double *restrict o,
                         double *restrict v)
{
    const tg_geometry *g = m->geom;
    const layer_terms *t = &lt[k];
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    double sums[2 * F_N];
    const long r0 = (long)j * ns;
    const double *pc = t->psi + r0, *pn = pc + ns, *ps = pc - ns;
    const double *qc = t->q + r0, *qn = qc + ns, *qs = qc - ns;
    const double *zc = t->zeta + r0, *zn = zc + ns, *zs = zc - ns;
    const double rj = t->rj, A2rl = t->A2rl, A4 = t->A4, wall = t->wall;
    for (int s = 0; s < 2 * F_N; s++)
        sums[s] = 0.0;

    /* Advection: o = adv. */
#pragma omp simd
    for (int i = a0; i < a1; i++)
        o[i] = -rj * tg_arakawa_at(pc, pn, ps, qc, qn, qs, i);

    /* Viscosity into v, with the sums of advection and viscosity. */
    double ea = 0.0, za = 0.0, ev = 0.0, zv = 0.0;
    if (t->lap2) {
        const double *l2 = t->lap2 + r0;
#pragma omp simd reduction(+ : ea, za, ev, zv)
        for (int i = a0; i < a1; i++) {
            const double adv = o[i], vv = tg_visc_at(zc, zn, zs, i, A2rl, A4, l2);
            const double dp = pc[i] - wall, qq = qc[i];
            v[i] = vv;
            ea += adv * dp;
            za += adv * qq;
            ev += vv * dp;
            zv += vv * qq;
        }
    } else {
        /* tg_visc_at without its biharmonic part. */
#pragma omp simd reduction(+ : ea, za, ev, zv)
        for (int i = a0; i < a1; i++) {
            const double adv = o[i], vv = A2rl * tg_lap5_at(zc, zn, zs, i);
            const double dp = pc[i] - wall, qq = qc[i];
            v[i] = vv;
            ea += adv * dp;
            za += adv * qq;
            ev += vv * dp;
            zv += vv * qq;
        }
    }
    sums[2 * F_ADV] = ea;
    sums[2 * F_ADV + 1] = za;
    if (t->present[F_VISC]) {
        sums[2 * F_VISC] = ev;
        sums[2 * F_VISC + 1] = zv;
    }

    /* Wind: o += curl(tau)/(rho0 H_1). */
    if (t->present[F_WIND]) {
        const double *w = t->wind + r0;
        double e = 0.0, z = 0.0;
#pragma omp simd reduction(+ : e, z)
        for (int i = a0; i < a1; i++) {
            o[i] += w[i];
            e += w[i] * (pc[i] - wall);
            z += w[i] * qc[i];
        }
        sums[2 * F_WIND] = e;
        sums[2 * F_WIND + 1] = z;
    }

    /* Bottom drag: o += -r zeta. */
    if (t->present[F_DRAG]) {
        const double cd = t->cd;
        double e = 0.0, z = 0.0;
#pragma omp simd reduction(+ : e, z)
        for (int i = a0; i < a1; i++) {
            const double vd = cd * zc[i];
            o[i] += vd;
            e += vd * (pc[i] - wall);
            z += vd * qc[i];
        }
        sums[2 * F_DRAG] = e;
        sums[2 * F_DRAG + 1] = z;
    }

    /* Viscosity: o += v, then mean flow: o += -U dq/dx - Qy dpsi/dx, in
     * one loop when the mean flow is present. */
    if (t->present[F_MEAN]) {
        const double cu = t->cu, cq = t->cq;
        double e = 0.0, z = 0.0;
#pragma omp simd reduction(+ : e, z)
        for (int i = a0; i < a1; i++) {
            const double vm = cu * tg_ddx2_at(qc, i) + cq * tg_ddx2_at(pc, i);
            o[i] = (o[i] + v[i]) + vm;
            e += vm * (pc[i] - wall);
            z += vm * qc[i];
        }
        sums[2 * F_MEAN] = e;
        sums[2 * F_MEAN + 1] = z;
    } else {
#pragma omp simd
        for (int i = a0; i < a1; i++)
            o[i] += v[i];
    }
    for (int s = 0; s < 2 * F_N; s++)
        *rowsum_slot(m, k, s, j) = sums[s];
}

/* The rates of the built-in terms from m->rowsums, rows added in order. */
static void add_builtin_rates(tg_model *m, const layer_terms *lt, tg_term_rates *rates)
{
    const tg_geometry *g = m->geom;
    for (int k = 0; k < m->nl; k++)
        for (int t = 0; t < F_N; t++) {
            if (!lt[k].present[t])
                continue;
            double ek = 0.0, zk = 0.0;
            for (int j = g->a0; j < g->a1; j++) {
                ek += *rowsum_slot(m, k, 2 * t, j);
                zk += *rowsum_slot(m, k, 2 * t + 1, j);
            }
            ek = ek * g->dx * g->dx;
            zk = zk * g->dx * g->dx;
            rates->energy[fused_term[t]] +=
                -m->cfg.thickness_m[k] * ek / (m->Htot * g->area);
            rates->enstrophy[fused_term[t]][k] += zk / g->area;
        }
}

/* Threads for a pass that uses m->rowwork: at most those with rows there. */
static int team_size(const tg_model *m)
{
    int nt = omp_get_max_threads();
    return nt < m->nwork ? nt : m->nwork;
}

/* The calling thread's two scratch rows (2 ns values) in m->rowwork. */
static double *thread_rows(tg_model *m)
{
    return m->rowwork + 2L * omp_get_thread_num() * m->geom->ns;
}

tg_code tg_model_tendency(tg_model *m, int stage, tg_term_rates *rates, tg_status *st)
{
    const tg_geometry *g = m->geom;
    const tg_config *c = &m->cfg;
    const int nl = m->nl;
    const long npl = m->npl;
    if (rates)
        memset(rates, 0, sizeof *rates);
    layer_terms lt[TG_MAX_LAYERS];
    setup_terms(m, lt);
    /* One pass over the rows, every layer. */
#pragma omp parallel num_threads(team_size(m))
    {
        double *v = thread_rows(m);
#pragma omp for schedule(static)
        for (int j = g->a0; j < g->a1; j++)
            for (int k = 0; k < nl; k++)
                tendency_row(m, lt, k, j, m->tend + k * npl + (long)j * g->ns, v);
    }
    if (rates)
        add_builtin_rates(m, lt, rates);

    /* Closures: the host evaluates every component (closure_host.h); each
     * component's rates are kept apart and summed into TG_TERM_CLOSURE. */
    const int nc = tg_closure_host_count(m->closures);
    if (nc > 0) {
        tg_closure_input in = {.psi = m->psi, .q = m->q, .zeta = m->zeta, .wall = m->wall,
                               .step = m->step, .stage = stage};
        tg_code rc = tg_closure_host_eval(m->closures, &in, st);
        if (rc != TG_OK)
            return rc;
        for (int ci = 0; ci < nc; ci++) {
            const double *t = tg_closure_host_tend(m->closures, ci);
            for (int k = 0; k < nl; k++) {
                const long off = k * npl;
                if (rates) {
                    double ek = tg_sum_prod(g, t + off, m->psi + off, m->wall[k], m->rowbuf);
                    double zk = tg_sum_prod(g, t + off, m->q + off, 0.0, m->rowbuf);
                    double e = -c->thickness_m[k] * ek / (m->Htot * g->area);
                    rates->comp_energy[ci] += e;
                    rates->energy[TG_TERM_CLOSURE] += e;
                    rates->comp_enstrophy[ci][k] += zk / g->area;
                    rates->enstrophy[TG_TERM_CLOSURE][k] += zk / g->area;
                }
                tg_axpby(g, 1.0, m->tend + off, 1.0, t + off);
            }
        }
    }
    return TG_OK;
}

/* The Runge-Kutta update of one row: qn = a q0 + b (q + dt t) on [a0, a1)
 * (compiled for AVX2 too: the same bits). */
TG_SIMD_CLONES static void rk_row(double *restrict qn, const double *q0, const double *q,
                          const double *t, double a, double b, double dt, int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++)
        qn[i] = a * q0[i] + b * (q[i] + dt * t[i]);
}

tg_code tg_model_stage_update(tg_model *m, int stage, const double *q0, double a, double b,
                              tg_term_rates *rates, tg_status *st)
{
    const tg_geometry *g = m->geom;
    const int nl = m->nl, ns = g->ns, a0 = g->a0, a1 = g->a1;
    const long npl = m->npl;
    const double dt = m->dt;
    double *qn = m->qnext;
    /* The modal right-hand sides, unless the inversion forms them itself. */
    const int project = !tg_model_projects_in_invert(m);

    if (tg_closure_host_count(m->closures) > 0) {
        /* Closures: the whole tendency first (closures need the state of
         * the stage as it is), then one pass that updates q and projects
         * it on the modes. */
        tg_code rc = tg_model_tendency(m, stage, rates, st);
        if (rc != TG_OK)
            return rc;
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++) {
            const long r0 = (long)j * ns;
            for (int k = 0; k < nl; k++) {
                const long o = k * npl + r0;
                rk_row(qn + o, q0 + o, m->q + o, m->tend + o, a, b, dt, a0, a1);
            }
            if (project)
                tg_model_project_row(m, qn, j);
        }
        return TG_OK;
    }

    /* No closures: one pass over the rows. For each row and layer, the
     * built-in tendency goes to this thread's row of m->rowwork (it never
     * exists as a whole field), q is updated from it, and the row's budget
     * sums are kept; then, unless the inversion forms them itself, the row
     * of every mode's right-hand side is formed from the new q. The row
     * reads rows j-1..j+1 of the current q, psi and zeta and writes only
     * qnext and phi, so rows are independent. */
    if (rates)
        memset(rates, 0, sizeof *rates);
    layer_terms lt[TG_MAX_LAYERS];
    setup_terms(m, lt);
#pragma omp parallel num_threads(team_size(m))
    {
        double *trow = thread_rows(m), *v = trow + ns;
#pragma omp for schedule(static)
        for (int j = a0; j < a1; j++) {
            const long r0 = (long)j * ns;
            for (int k = 0; k < nl; k++) {
                const long o = k * npl + r0;
                tendency_row(m, lt, k, j, trow, v);
                rk_row(qn + o, q0 + o, m->q + o, trow, a, b, dt, a0, a1);
            }
            if (project)
                tg_model_project_row(m, qn, j);
        }
    }
    if (rates)
        add_builtin_rates(m, lt, rates);
    return TG_OK;
}
