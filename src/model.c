/* model.c - set-up, PV inversion and state diagnostics of the layered model (model.h). */
#include "model.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "constants.h"
#include "fdops.h"
#include "rng.h"

static double *alloc_fields(long n)
{
    return calloc((size_t)n, sizeof(double));
}

void tg_model_destroy(tg_model *m)
{
    if (!m)
        return;
    tg_closure_host_destroy(m->closures);
    tg_geometry_destroy(m->geom);
    double *arrays[] = {m->q,   m->psi,  m->zeta, m->beta_y, m->wind_forcing, m->phi,
                        m->lap1, m->lap2, m->tend, m->term,  m->q0,           m->rowbuf, m->rowsums};
    for (size_t i = 0; i < sizeof arrays / sizeof arrays[0]; i++)
        free(arrays[i]);
    free(m->rowidx);
    free(m);
}

/* Wind-stress curl over rho0 H_1 (s-2) for the configured profile:
 * double gyre tau_x = -tau0 cos(2 pi y/L), single gyre tau_x = -tau0 cos(pi y/L);
 * curl tau = -d tau_x/dy. */
static double wind_curl(const tg_config *cfg, double y, double L)
{
    const double tau0 = cfg->stress_amplitude_pa;
    switch (cfg->wind_profile) {
    case TG_WIND_DOUBLE_GYRE:
        return -tau0 * (2.0 * TG_PI / L) * sin(2.0 * TG_PI * y / L);
    case TG_WIND_SINGLE_GYRE:
        return -tau0 * (TG_PI / L) * sin(TG_PI * y / L);
    case TG_WIND_NONE:
        break;
    }
    return 0.0;
}

tg_model *tg_model_create(const tg_config *cfg, tg_status *st)
{
    tg_model *m = calloc(1, sizeof *m);
    if (!m) {
        tg_fail(st, TG_ERR_NOMEM, "model: no memory");
        return NULL;
    }
    m->cfg = *cfg;
    m->nl = cfg->nlayers;
    m->dt = cfg->step_s;
    for (int k = 0; k < m->nl; k++)
        m->Htot += cfg->thickness_m[k];

    if (tg_modes_compute(&m->modes, m->nl, cfg->thickness_m, cfg->reduced_gravity_m_s2,
                         cfg->coriolis_f0_per_s, st) != TG_OK)
        goto fail;
    m->geom = tg_geometry_create(cfg, st);
    if (!m->geom)
        goto fail;
    if (m->geom->ops->setup_modes(m->geom, m->nl, m->modes.F, st) != TG_OK)
        goto fail;

    const tg_geometry *g = m->geom;
    const int ns = g->ns;
    m->npl = (long)ns * ns;
    m->nout = g->o1 - g->o0;
    const long nf = m->nl * m->npl;
    m->q = alloc_fields(nf);
    m->psi = alloc_fields(nf);
    m->zeta = alloc_fields(nf);
    m->phi = alloc_fields(nf);
    m->tend = alloc_fields(nf);
    m->term = alloc_fields(nf);
    m->q0 = alloc_fields(nf);
    m->beta_y = alloc_fields(m->npl);
    m->wind_forcing = alloc_fields(m->npl);
    m->lap1 = alloc_fields(m->npl);
    m->lap2 = alloc_fields(m->npl);
    m->rowbuf = alloc_fields(ns);
    m->rowsums = alloc_fields(10L * ns);
    m->rowidx = calloc((size_t)ns, sizeof(long));
    if (!m->q || !m->psi || !m->zeta || !m->phi || !m->tend || !m->term || !m->q0 ||
        !m->beta_y || !m->wind_forcing || !m->lap1 || !m->lap2 || !m->rowbuf || !m->rowsums ||
        !m->rowidx) {
        tg_fail(st, TG_ERR_NOMEM, "model: no memory for %d layers of %d x %d points", m->nl, ns,
                ns);
        goto fail;
    }

    /* Planetary PV beta (y - y0), y0 the central latitude, when the grid
     * can hold it (basin); otherwise beta enters the mean-flow term. */
    const double y0 = 0.5 * g->length;
    const double rhoH = cfg->reference_density_kg_m3 * cfg->thickness_m[0];
    const double beta_in_q = g->holds_planetary_pv ? cfg->beta_per_m_per_s : 0.0;
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            double y = g->coord[j];
            m->beta_y[(long)j * ns + i] = beta_in_q * (y - y0);
            m->wind_forcing[(long)j * ns + i] = wind_curl(cfg, y, g->length) / rhoH;
        }
    /* Background flow and its PV gradient beta - (S U)_k (Phillips 1954). */
    int any_u = 0;
    for (int k = 0; k < m->nl; k++) {
        m->U[k] = k < cfg->n_zonal_velocity ? cfg->zonal_velocity_m_s[k] : 0.0;
        any_u |= m->U[k] != 0.0;
    }
    for (int k = 0; k < m->nl; k++) {
        double su = 0.0;
        for (int kk = 0; kk < m->nl; kk++)
            su += m->modes.S[k][kk] * m->U[kk];
        m->Qy[k] = (g->holds_planetary_pv ? 0.0 : cfg->beta_per_m_per_s) - su;
    }
    /* Terms this configuration has (budget.nc lists these). */
    m->term_active[TG_TERM_ADVECTION] = 1;
    m->term_active[TG_TERM_WIND] = 1;
    m->term_active[TG_TERM_BOTTOM_DRAG] = 1;
    m->term_active[TG_TERM_VISCOSITY] = 1;
    m->term_active[TG_TERM_MEAN_FLOW] = !g->holds_planetary_pv || any_u;
    m->term_active[TG_TERM_CLOSURE] = 1;
    m->closures = tg_closure_host_create(cfg, m->geom, &m->modes, st);
    if (!m->closures)
        goto fail;

    /* State of rest: psi = 0, so q = beta (y - y0) in every layer. */
    for (int k = 0; k < m->nl; k++)
        memcpy(m->q + k * m->npl, m->beta_y, sizeof(double) * m->npl);
    tg_model_derive(m);
    return m;
fail:
    tg_model_destroy(m);
    return NULL;
}

/* Calls fn(index) for every stored node outside the active block. */
#define FOR_RING(g, idx, body)                                                            \
    do {                                                                                  \
        for (int j_ = 0; j_ < (g)->ns; j_++) {                                            \
            int inner_ = (j_ >= (g)->a0 && j_ < (g)->a1);                                 \
            for (int i_ = 0; i_ < (g)->ns; i_++) {                                        \
                if (inner_ && i_ == (g)->a0)                                              \
                    i_ = (g)->a1;                                                         \
                if (i_ >= (g)->ns)                                                        \
                    break;                                                                \
                long idx = (long)j_ * (g)->ns + i_;                                       \
                body;                                                                     \
            }                                                                             \
        }                                                                                 \
    } while (0)

void tg_model_derive(tg_model *m)
{
    tg_geometry *g = m->geom;
    const int nl = m->nl, ns = g->ns, a0 = g->a0, a1 = g->a1;
    const long npl = m->npl;
    double cwall[TG_MAX_LAYERS];

    /* Modal right-hand sides Pinv (q - beta (y - y0)) of every mode in one
     * pass into phi, then one Helmholtz solve per mode, in place
     * (geometry.h), which also sets the wall constants. */
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long r0 = (long)j * ns;
        const double *by = m->beta_y + r0;
        for (int md = 0; md < nl; md++) {
            double *r = m->phi + md * npl + r0;
            for (int i = a0; i < a1; i++)
                r[i] = 0.0;
            for (int k = 0; k < nl; k++) {
                const double pk = m->modes.Pinv[md][k];
                const double *qk = m->q + k * npl + r0;
#pragma omp simd
                for (int i = a0; i < a1; i++)
                    r[i] += pk * (qk[i] - by[i]);
            }
        }
    }
    for (int md = 0; md < nl; md++)
        cwall[md] = g->ops->solve_mode(g, md, m->phi + md * npl, m->phi + md * npl);
    /* Back to layers: psi = P phi on every stored node; on the active nodes
     * of the same row, relative vorticity from the inverted relation
     * zeta_k = lap psi_k = q_k - beta (y - y0) - (S psi)_k, which the
     * Helmholtz solves satisfy to round-off (one pass instead of a stencil). */
#pragma omp parallel for schedule(static)
    for (int j = 0; j < ns; j++) {
        const long r0 = (long)j * ns;
        for (int k = 0; k < nl; k++) {
            double *o = m->psi + k * npl + r0;
            for (int i = 0; i < ns; i++)
                o[i] = 0.0;
            for (int md = 0; md < nl; md++) {
                const double pk = m->modes.P[k][md];
                const double *f = m->phi + md * npl + r0;
#pragma omp simd
                for (int i = 0; i < ns; i++)
                    o[i] += pk * f[i];
            }
        }
        if (j < a0 || j >= a1)
            continue;
        const double *by = m->beta_y + r0;
        for (int k = 0; k < nl; k++) {
            double *z = m->zeta + k * npl + r0;
            const double *qk = m->q + k * npl + r0;
#pragma omp simd
            for (int i = a0; i < a1; i++)
                z[i] = qk[i] - by[i];
            for (int kk = 0; kk < nl; kk++) {
                const double s = m->modes.S[k][kk];
                if (s == 0.0)
                    continue;
                const double *pk = m->psi + kk * npl + r0;
#pragma omp simd
                for (int i = a0; i < a1; i++)
                    z[i] -= s * pk[i];
            }
        }
    }
    for (int k = 0; k < nl; k++) {
        double s = 0.0;
        for (int md = 0; md < nl; md++)
            s += m->modes.P[k][md] * cwall[md];
        m->wall[k] = s;
        g->ops->fill_ring(g, m->psi + k * npl, s);
        g->ops->fill_vorticity_ring(g, m->zeta + k * npl, m->psi + k * npl);
    }
    /* PV on the ring, for the stencils of the Jacobian. */
    for (int k = 0; k < nl; k++) {
        double *qk = m->q + k * npl;
        const double *zk = m->zeta + k * npl;
        FOR_RING(g, p, {
            double s = 0.0;
            for (int kk = 0; kk < nl; kk++)
                s += m->modes.S[k][kk] * m->psi[kk * npl + p];
            qk[p] = zk[p] + s + m->beta_y[p];
        });
    }
    m->time_s = m->step * m->dt;
}

/* Copies an output-layout field into the stored layout of every layer. */
static void unpack(tg_model *m, const double *src, double *dst)
{
    const tg_geometry *g = m->geom;
    const int no = m->nout, ns = g->ns;
    for (int k = 0; k < m->nl; k++)
        for (int j = 0; j < no; j++)
            memcpy(dst + k * m->npl + (long)(j + g->o0) * ns + g->o0,
                   src + ((long)k * no + j) * no, sizeof(double) * no);
}

void tg_model_pack(const tg_model *m, const double *field, double *dest)
{
    const tg_geometry *g = m->geom;
    const int no = m->nout, ns = g->ns;
    for (int k = 0; k < m->nl; k++)
        for (int j = 0; j < no; j++)
            memcpy(dest + ((long)k * no + j) * no,
                   field + k * m->npl + (long)(j + g->o0) * ns + g->o0, sizeof(double) * no);
}

const double *tg_model_out_coord(const tg_model *m)
{
    return m->geom->coord + m->geom->o0;
}

/* q = lap psi + S psi + beta (y - y0) on the active nodes from m->psi, then derive. */
static void q_from_psi(tg_model *m)
{
    tg_geometry *g = m->geom;
    const int nl = m->nl, ns = g->ns;
    const long npl = m->npl;
    for (int k = 0; k < nl; k++) {
        /* When the output nodes do not include the ring (periodic), the
         * ring must come from the geometry before the stencil reads it. */
        if (g->o0 == g->a0)
            g->ops->fill_ring(g, m->psi + k * npl, 0.0);
        tg_laplacian(g, m->psi + k * npl, m->zeta + k * npl);
    }
    for (int k = 0; k < nl; k++)
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                long p = (long)j * ns + i;
                double s = 0.0;
                for (int kk = 0; kk < nl; kk++)
                    s += m->modes.S[k][kk] * m->psi[kk * npl + p];
                m->q[k * npl + p] = m->zeta[k * npl + p] + s + m->beta_y[p];
            }
    tg_model_derive(m);
}

void tg_model_set_psi(tg_model *m, const double *psi_out)
{
    memset(m->psi, 0, sizeof(double) * m->nl * m->npl);
    unpack(m, psi_out, m->psi);
    q_from_psi(m);
}

void tg_model_set_q(tg_model *m, const double *q_out)
{
    unpack(m, q_out, m->q);
    tg_model_derive(m);
}

void tg_model_set_noise(tg_model *m, double amplitude, uint64_t seed)
{
    tg_geometry *g = m->geom;
    const int ns = g->ns;
    const long npl = m->npl;
    memset(m->psi, 0, sizeof(double) * m->nl * npl);
    for (int k = 0; k < m->nl; k++) {
        double *f = m->psi + k * npl;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                double z[2];
                /* stream 1 = initial noise; counter (layer, j, i) */
                tg_normal2(seed, 1u, (uint32_t)k, (uint32_t)(j * ns + i), z);
                f[(long)j * ns + i] = z[0];
            }
        g->ops->filter_gaussian(g, f, 4.0 * g->dx);
        double ss = tg_sum_prod(g, f, f, 0.0, m->rowbuf);
        double cells = (double)(g->a1 - g->a0) * (g->a1 - g->a0) * g->dx * g->dx;
        double rms = sqrt(ss / cells);
        if (rms > 0.0)
            for (int j = g->a0; j < g->a1; j++)
                for (int i = g->a0; i < g->a1; i++)
                    f[(long)j * ns + i] *= amplitude / rms;
        g->ops->fill_ring(g, f, 0.0);
    }
    q_from_psi(m);
}

/* E = -(1/(2 H A)) sum_k H_k sum_active (psi_k - c_k)(q_k - beta (y - y0)) dx^2,
 * which equals (1/(H A)) [sum_k (H_k/2) |grad psi_k|^2 + sum_i f0^2/(2 g'_i)(psi_i - psi_{i+1})^2]
 * integrated over the domain (edge sums for the gradient, trapezoid for the
 * interfaces) because psi_k is constant on the walls and the mass constraint
 * holds (derivation in DEVELOPERS.md, "Discrete energy"). */
double tg_model_energy(tg_model *m)
{
    const tg_geometry *g = m->geom;
    double e = 0.0;
    for (int k = 0; k < m->nl; k++) {
        const double *qk = m->q + k * m->npl;
        double *r = m->lap1; /* q - beta (y - y0) */
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++) {
                long p = (long)j * g->ns + i;
                r[p] = qk[p] - m->beta_y[p];
            }
        e += m->cfg.thickness_m[k] * tg_sum_prod(g, r, m->psi + k * m->npl, m->wall[k], m->rowbuf);
    }
    return -0.5 * e / (m->Htot * g->area);
}

void tg_model_kinetic_energy(tg_model *m, double *ke)
{
    const tg_geometry *g = m->geom;
    for (int k = 0; k < m->nl; k++)
        ke[k] = -0.5 *
                tg_sum_prod(g, m->zeta + k * m->npl, m->psi + k * m->npl, m->wall[k], m->rowbuf) /
                g->area;
}

void tg_model_enstrophy(tg_model *m, double *z)
{
    const tg_geometry *g = m->geom;
    for (int k = 0; k < m->nl; k++)
        z[k] = 0.5 * tg_sum_prod(g, m->q + k * m->npl, m->q + k * m->npl, 0.0, m->rowbuf) /
               g->area;
}

void tg_model_mass_error(tg_model *m, double *err)
{
    const tg_geometry *g = m->geom;
    for (int i = 0; i + 1 < m->nl; i++) {
        double *d = m->lap1;
        const double *a = m->psi + i * m->npl, *b = m->psi + (i + 1) * m->npl;
        for (long p = 0; p < m->npl; p++)
            d[p] = a[p] - b[p];
        double num = tg_integral(g, d, 0.0, 0, m->rowbuf);
        double den = tg_integral(g, d, 0.0, 1, m->rowbuf);
        err[i] = den > 0.0 ? num / den : 0.0;
    }
}

double tg_model_max_cfl(tg_model *m, int *layer, double *x, double *y)
{
    double best = -1.0;
    long at = 0;
    int kbest = 0;
    for (int k = 0; k < m->nl; k++) {
        long w;
        double c = tg_max_cfl(m->geom, m->psi + k * m->npl, m->U[k], m->dt, &w, m->rowbuf,
                              m->rowidx);
        if (c > best || isnan(c)) {
            best = isnan(c) ? INFINITY : c;
            at = w;
            kbest = k;
        }
    }
    if (layer)
        *layer = kbest;
    if (x)
        *x = m->geom->coord[at % m->geom->ns];
    if (y)
        *y = m->geom->coord[at / m->geom->ns];
    return best;
}
