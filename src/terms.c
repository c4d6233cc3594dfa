/* terms.c - the PV tendency, one term at a time, with each term's budget rates.
 *
 * Each term is computed into m->term, its energy and enstrophy rates are
 * formed from that array, and it is added to m->tend. The rates are
 *   energy:    -(1/(H A)) sum_k H_k sum_active (psi_k - c_k) T_k dx^2
 *   enstrophy:  (1/A) sum_active q_k T_k dx^2            (per layer)
 * where c_k is psi_k's wall value; with psi constant on the walls and the
 * mass constraint, the first is exactly the rate of change of the discrete
 * energy that tg_model_energy computes (DEVELOPERS.md, "Discrete energy").
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <string.h>

#include "fdops.h"
#include "model.h"

/* Row sums in row order, times dx^2, as tg_sum_prod forms them. */
static double rows_total(const tg_geometry *g, const double *rb)
{
    double s = 0.0;
    for (int j = g->a0; j < g->a1; j++)
        s += rb[j];
    return s * g->dx * g->dx;
}

/* The built-in terms of layer k in one pass over the active nodes:
 *   advection      -J(psi_k, q_k)                      Arakawa (1966)
 *   wind           curl(tau)/(rho0 H_1)                 top layer
 *   bottom drag    -r zeta_N                            bottom layer
 *   viscosity      A2 lap zeta_k - A4 lap^2 zeta_k
 *   mean flow      -U_k dq_k/dx - Qy_k dpsi_k/dx         periodic (model.h)
 * tend_k is their sum; each row's energy and enstrophy sums of each term go
 * to m->rowsums (8 rows of ns), added up in row order afterwards. The
 * stencils are fdops.h's point kernels. */
enum { F_ADV, F_WIND, F_DRAG, F_VISC, F_MEAN, F_N };
static const int fused_term[F_N] = {TG_TERM_ADVECTION, TG_TERM_WIND, TG_TERM_BOTTOM_DRAG,
                                    TG_TERM_VISCOSITY, TG_TERM_MEAN_FLOW};

static void builtin_layer(tg_model *m, int k, int present[F_N])
{
    const tg_geometry *g = m->geom;
    const tg_config *c = &m->cfg;
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    const long off = k * m->npl;
    const double *psi = m->psi + off, *q = m->q + off, *zeta = m->zeta + off;
    double *tend = m->tend + off, *rs = m->rowsums;
    const double wall = m->wall[k];
    const double rj = 1.0 / (12.0 * g->dx * g->dx), rl = 1.0 / (g->dx * g->dx);
    const int wind = k == 0 && c->wind_profile != TG_WIND_NONE && c->stress_amplitude_pa != 0.0;
    const int drag = k == m->nl - 1 && c->bottom_drag_per_s != 0.0;
    const double A2 = c->viscosity_m2_per_s, A4 = c->hyperviscosity_m4_per_s;
    present[F_ADV] = 1;
    present[F_WIND] = wind;
    present[F_DRAG] = drag;
    present[F_VISC] = A2 != 0.0 || A4 != 0.0;
    present[F_MEAN] = m->term_active[TG_TERM_MEAN_FLOW];
    const double rx = 1.0 / (2.0 * g->dx);
    const double cu = present[F_MEAN] ? -m->U[k] * rx : 0.0;
    const double cq = present[F_MEAN] ? -m->Qy[k] * rx : 0.0;
    if (A4 != 0.0) {
        tg_laplacian(g, zeta, m->lap1);
        g->ops->fill_laplacian_ring(g, m->lap1);
        tg_laplacian(g, m->lap1, m->lap2);
    }
    const double cw = wind ? 1.0 : 0.0, cd = drag ? -c->bottom_drag_per_s : 0.0;
    const double *wf = m->wind_forcing, *l2 = A4 != 0.0 ? m->lap2 : m->wind_forcing;
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long r0 = (long)j * ns;
        const double *pc = psi + r0, *qc = q + r0, *zc = zeta + r0, *w = wf + r0, *b2 = l2 + r0;
        double *o = tend + r0;
        double e0 = 0.0, z0 = 0.0, e1 = 0.0, z1 = 0.0, e2 = 0.0, z2 = 0.0, e3 = 0.0, z3 = 0.0;
        double e4 = 0.0, z4 = 0.0;
#pragma omp simd reduction(+ : e0, z0, e1, z1, e2, z2, e3, z3, e4, z4)
        for (int i = a0; i < a1; i++) {
            const double adv = -rj * tg_arakawa_at(pc, pc + ns, pc - ns, qc, qc + ns, qc - ns, i);
            const double vw = cw * w[i];
            const double vd = cd * zc[i];
            const double vv = tg_visc_at(zc, zc + ns, zc - ns, i, A2 * rl, A4, b2);
            const double vm = cu * tg_ddx2_at(qc, i) + cq * tg_ddx2_at(pc, i);
            const double dp = pc[i] - wall, qq = qc[i];
            o[i] = adv + vw + vd + vv + vm;
            e0 += adv * dp;
            z0 += adv * qq;
            e1 += vw * dp;
            z1 += vw * qq;
            e2 += vd * dp;
            z2 += vd * qq;
            e3 += vv * dp;
            z3 += vv * qq;
            e4 += vm * dp;
            z4 += vm * qq;
        }
        rs[j] = e0;
        rs[ns + j] = z0;
        rs[2 * ns + j] = e1;
        rs[3 * ns + j] = z1;
        rs[4 * ns + j] = e2;
        rs[5 * ns + j] = z2;
        rs[6 * ns + j] = e3;
        rs[7 * ns + j] = z3;
        rs[8 * ns + j] = e4;
        rs[9 * ns + j] = z4;
    }
}

tg_code tg_model_tendency(tg_model *m, int stage, tg_term_rates *rates, tg_status *st)
{
    const tg_geometry *g = m->geom;
    const tg_config *c = &m->cfg;
    const int nl = m->nl;
    const long npl = m->npl;
    if (rates)
        memset(rates, 0, sizeof *rates);
    for (int k = 0; k < nl; k++) {
        int present[F_N];
        builtin_layer(m, k, present);
        if (!rates)
            continue;
        for (int t = 0; t < F_N; t++) {
            if (!present[t])
                continue;
            double ek = rows_total(g, m->rowsums + 2 * t * g->ns);
            double zk = rows_total(g, m->rowsums + (2 * t + 1) * g->ns);
            rates->energy[fused_term[t]] += -c->thickness_m[k] * ek / (m->Htot * g->area);
            rates->enstrophy[fused_term[t]][k] += zk / g->area;
        }
    }

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
