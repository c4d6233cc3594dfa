/* model.c - set-up, PV inversion and state diagnostics of the layered model (model.h). */
#include "model.h"

#include <math.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

#include "constants.h"
#include "fdops.h"
#include "rng.h"
#include "simdclone.h"

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
    double *arrays[] = {m->q,    m->psi,     m->zeta,  m->beta_y, m->wind_forcing,
                        m->phi,  m->lap1,    m->lap2,  m->tend,   m->term,
                        m->q0,   m->qnext,   m->rowbuf, m->rowsums, m->rowwork};
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

/* The sizes and every work array of the model on its geometry (all the
 * step will use). */
static tg_code alloc_work(tg_model *m, tg_status *st)
{
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
    m->qnext = alloc_fields(nf);
    m->beta_y = alloc_fields(m->npl);
    m->wind_forcing = alloc_fields(m->npl);
    m->lap1 = alloc_fields(m->npl);
    m->lap2 = alloc_fields(nf);
    m->rowbuf = alloc_fields(ns);
    m->rowsums = alloc_fields(10L * m->nl * ns);
    /* Two scratch rows per thread that a parallel region may have (terms.c);
     * the regions that use them ask for no more threads than this. */
    m->nwork = omp_get_max_threads() > 0 ? omp_get_max_threads() : 1;
    m->rowwork = alloc_fields(2L * m->nwork * ns);
    m->rowidx = calloc((size_t)ns, sizeof(long));
    if (!m->q || !m->psi || !m->zeta || !m->phi || !m->tend || !m->term || !m->q0 ||
        !m->qnext || !m->beta_y || !m->wind_forcing || !m->lap1 || !m->lap2 || !m->rowbuf ||
        !m->rowsums || !m->rowwork || !m->rowidx) {
        tg_fail(st, TG_ERR_NOMEM, "model: no memory for %d layers of %d x %d points", m->nl, ns,
                ns);
        return TG_ERR_NOMEM;
    }
    return TG_OK;
}

/* The fields and constants the configuration fixes: planetary PV and wind
 * forcing per node, the background flow and its PV gradient, and which
 * terms the tendency has. */
static void fixed_fields(tg_model *m, const tg_config *cfg)
{
    const tg_geometry *g = m->geom;
    const int ns = g->ns;
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

    if (alloc_work(m, st) != TG_OK)
        goto fail;
    fixed_fields(m, cfg);
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

/* Modal right-hand sides of active row j: r[m][i - a0] = sum_k Pinv[m][k]
 * (q_k - beta (y - y0)) at the active nodes i, the layers added in order,
 * two per loop over the row. The one copy of this sum: tg_model_project_row
 * (into m->phi) and the fused solves of tg_model_invert (into the
 * geometry's rows) both use it, so a state reached by stepping and the same
 * state read back from a checkpoint invert to the same bits. Compiled for
 * AVX2 too (simdclone.h; the same bits). */
TG_SIMD_CLONES static void project_rows(const tg_model *m, const double *q, int j,
                                        double *const *rows)
{
    const tg_geometry *g = m->geom;
    const int nl = m->nl, a0 = g->a0, n = g->a1 - g->a0;
    const long npl = m->npl, r0 = (long)j * g->ns + a0;
    const double by = m->beta_y[r0]; /* the same on the whole row */
    for (int md = 0; md < nl; md++) {
        double *restrict r = rows[md];
        const double *q0 = q + r0, p0 = m->modes.Pinv[md][0];
        int k = 1;
        if (nl > 1) {
            const double *q1 = q + npl + r0, p1 = m->modes.Pinv[md][1];
#pragma omp simd
            for (int i = 0; i < n; i++)
                r[i] = p0 * (q0[i] - by) + p1 * (q1[i] - by);
            k = 2;
        } else {
#pragma omp simd
            for (int i = 0; i < n; i++)
                r[i] = p0 * (q0[i] - by);
        }
        for (; k + 1 < nl; k += 2) {
            const double pk = m->modes.Pinv[md][k], pl = m->modes.Pinv[md][k + 1];
            const double *qk = q + k * npl + r0, *ql = qk + npl;
#pragma omp simd
            for (int i = 0; i < n; i++)
                r[i] = (r[i] + pk * (qk[i] - by)) + pl * (ql[i] - by);
        }
        if (k < nl) {
            const double pk = m->modes.Pinv[md][k];
            const double *qk = q + k * npl + r0;
#pragma omp simd
            for (int i = 0; i < n; i++)
                r[i] += pk * (qk[i] - by);
        }
    }
}

void tg_model_project_row(tg_model *m, const double *q, int j)
{
    double *rows[TG_MAX_LAYERS];
    const long r0 = (long)j * m->geom->ns + m->geom->a0;
    for (int md = 0; md < m->nl; md++)
        rows[md] = m->phi + md * m->npl + r0;
    project_rows(m, q, j, rows);
}

/* One mode's share of a row of psi_k: o (=, or += unless first) pk * phi_m,
 * where phi_m = f + c h when the mode has a homogeneous part h (h may be
 * NULL), over n values. */
static inline void add_mode_row(double *restrict o, const double *f, const double *h, double c,
                                double pk, int first, int n)
{
    if (h && first) {
#pragma omp simd
        for (int i = 0; i < n; i++)
            o[i] = pk * (f[i] + c * h[i]);
    } else if (h) {
#pragma omp simd
        for (int i = 0; i < n; i++)
            o[i] += pk * (f[i] + c * h[i]);
    } else if (first) {
#pragma omp simd
        for (int i = 0; i < n; i++)
            o[i] = pk * f[i];
    } else {
#pragma omp simd
        for (int i = 0; i < n; i++)
            o[i] += pk * f[i];
    }
}

/* Relative vorticity on the active nodes of stored row j from the inverted
 * relation zeta_k = lap psi_k = q_k - beta (y - y0) - (S psi)_k, which the
 * Helmholtz solves satisfy to round-off (one pass instead of a stencil).
 * The layers with S[k][kk] != 0 are subtracted in order, two per loop over
 * the row (the first with q_k - beta (y - y0)), so the row is written once
 * or twice instead of once per layer; the arithmetic is the same. Compiled
 * for AVX2 too (simdclone.h; the same bits): layers_row's AVX2 copy calls it,
 * and AVX2 code must not hand over to SSE2 code without clearing the upper
 * halves of the vector registers, which a tail call may skip. */
TG_SIMD_CLONES static void vorticity_row(tg_model *m, int j)
{
    const tg_geometry *g = m->geom;
    const int nl = m->nl, a0 = g->a0, a1 = g->a1;
    const long npl = m->npl, r0 = (long)j * g->ns;
    const double by = m->beta_y[r0 + a0]; /* the same on the whole row */
    for (int k = 0; k < nl; k++) {
        double s[TG_MAX_LAYERS];
        const double *p[TG_MAX_LAYERS];
        int n = 0;
        for (int kk = 0; kk < nl; kk++)
            if (m->modes.S[k][kk] != 0.0) {
                s[n] = m->modes.S[k][kk];
                p[n++] = m->psi + kk * npl + r0;
            }
        double *restrict z = m->zeta + k * npl + r0;
        const double *qk = m->q + k * npl + r0;
        int t = 0;
        if (n == 0) {
#pragma omp simd
            for (int i = a0; i < a1; i++)
                z[i] = qk[i] - by;
        } else if (n == 1) {
            const double s0 = s[0], *p0 = p[0];
#pragma omp simd
            for (int i = a0; i < a1; i++)
                z[i] = (qk[i] - by) - s0 * p0[i];
            t = 1;
        } else {
            const double s0 = s[0], s1 = s[1], *p0 = p[0], *p1 = p[1];
#pragma omp simd
            for (int i = a0; i < a1; i++)
                z[i] = ((qk[i] - by) - s0 * p0[i]) - s1 * p1[i];
            t = 2;
        }
        for (; t < n; t += 2) {
            const double s0 = s[t], *p0 = p[t];
            if (t + 1 < n) {
                const double s1 = s[t + 1], *p1 = p[t + 1];
#pragma omp simd
                for (int i = a0; i < a1; i++)
                    z[i] = (z[i] - s0 * p0[i]) - s1 * p1[i];
            } else {
#pragma omp simd
                for (int i = a0; i < a1; i++)
                    z[i] -= s0 * p0[i];
            }
        }
    }
}

/* ops->solve_modes_rows: the modal right-hand sides of row j from m->q. */
static void modes_fill(void *ctx, int j, double *const *rhs)
{
    const tg_model *m = ctx;
    project_rows(m, m->q, j, rhs);
}

/* Two layers' rows of psi = sum_m p[m] phi_m over n values, for the
 * weights pa (into oa) and pb (into ob): the modes added in order, the
 * first two in one expression. */
static inline void layer_pair_row(double *restrict oa, double *restrict ob,
                                  const double *const *phi, const double *pa,
                                  const double *pb, int nmodes, int n)
{
    const double *f0 = phi[0], a0 = pa[0], b0 = pb[0];
    if (nmodes > 1) {
        const double *f1 = phi[1], a1 = pa[1], b1 = pb[1];
#pragma omp simd
        for (int i = 0; i < n; i++) {
            oa[i] = a0 * f0[i] + a1 * f1[i];
            ob[i] = b0 * f0[i] + b1 * f1[i];
        }
    } else {
#pragma omp simd
        for (int i = 0; i < n; i++) {
            oa[i] = a0 * f0[i];
            ob[i] = b0 * f0[i];
        }
    }
    for (int md = 2; md < nmodes; md++) {
        const double *f = phi[md], am = pa[md], bm = pb[md];
#pragma omp simd
        for (int i = 0; i < n; i++) {
            oa[i] += am * f[i];
            ob[i] += bm * f[i];
        }
    }
}

/* One layer's row of psi = sum_m p[m] phi_m (layer_pair_row's arithmetic). */
static inline void layer_row(double *restrict o, const double *const *phi, const double *p,
                             int nmodes, int n)
{
    const double *f0 = phi[0], p0 = p[0];
    if (nmodes > 1) {
        const double *f1 = phi[1], p1 = p[1];
#pragma omp simd
        for (int i = 0; i < n; i++)
            o[i] = p0 * f0[i] + p1 * f1[i];
    } else {
#pragma omp simd
        for (int i = 0; i < n; i++)
            o[i] = p0 * f0[i];
    }
    for (int md = 2; md < nmodes; md++) {
        const double *f = phi[md], pm = p[md];
#pragma omp simd
        for (int i = 0; i < n; i++)
            o[i] += pm * f[i];
    }
}

/* ops->solve_modes_rows: psi_k = sum_m P[k][m] phi_m on the active nodes of
 * row j (the sum, in the same order, of the pass of tg_model_invert; two
 * layers per loop), then the row's vorticity. Compiled for AVX2 too
 * (simdclone.h; the same bits). */
TG_SIMD_CLONES static void layers_row(void *ctx, int j, const double *const *phi)
{
    tg_model *m = ctx;
    const tg_geometry *g = m->geom;
    const int nl = m->nl, n = g->a1 - g->a0;
    const long r0 = (long)j * g->ns + g->a0;
    int k = 0;
    for (; k + 1 < nl; k += 2)
        layer_pair_row(m->psi + k * m->npl + r0, m->psi + (k + 1) * m->npl + r0, phi,
                       m->modes.P[k], m->modes.P[k + 1], nl, n);
    if (k < nl)
        layer_row(m->psi + k * m->npl + r0, phi, m->modes.P[k], nl, n);
    vorticity_row(m, j);
}

/* Row j of psi_k = sum_m P[k][m] (phi_m + c_m h_m) over every stored node
 * (h_m may be NULL), then on active rows the vorticity. Compiled for AVX2
 * too (simdclone.h; the same bits). */
TG_SIMD_CLONES static void modes_to_layers_row(tg_model *m, int j, const double *cwall,
                                               const double *const *homog)
{
    const tg_geometry *g = m->geom;
    const int nl = m->nl, ns = g->ns;
    const long npl = m->npl, r0 = (long)j * ns;
    for (int k = 0; k < nl; k++)
        for (int md = 0; md < nl; md++)
            add_mode_row(m->psi + k * npl + r0, m->phi + md * npl + r0,
                         homog[md] ? homog[md] + r0 : NULL, cwall[md], m->modes.P[k][md],
                         md == 0, ns);
    if (j >= g->a0 && j < g->a1)
        vorticity_row(m, j);
}

void tg_model_invert(tg_model *m)
{
    tg_geometry *g = m->geom;
    const int nl = m->nl, ns = g->ns;
    const long npl = m->npl;
    double cwall[TG_MAX_LAYERS];
    const double *homog[TG_MAX_LAYERS];

    if (g->ops->solve_modes_rows) {
        /* The solves take each row's right-hand sides from m->q
         * (modes_fill) and hand each row of every mode to layers_row: psi
         * and zeta of the active nodes without storing the modes; the
         * rings follow below. */
        g->ops->solve_modes_rows(g, nl, modes_fill, layers_row, m);
        for (int md = 0; md < nl; md++)
            cwall[md] = 0.0;
    } else {
        /* One Helmholtz solve per mode, in place (geometry.h). When the
         * geometry can, it solves them all in one call (possibly several
         * at once) and leaves the wall correction c phi_h to the pass
         * below instead of making a pass of its own. */
        if (g->ops->solve_modes_parts) {
            g->ops->solve_modes_parts(g, nl, m->phi, npl, cwall, homog);
        } else {
            for (int md = 0; md < nl; md++) {
                cwall[md] = g->ops->solve_mode(g, md, m->phi + md * npl, m->phi + md * npl);
                homog[md] = NULL;
            }
        }
        /* One pass over the rows: back to layers, psi_k = sum_m P[k][m]
         * phi_m with phi_m = phi_p + c_m phi_h (every stored node), and on
         * the active rows the vorticity. */
#pragma omp parallel for schedule(static)
        for (int j = 0; j < ns; j++)
            modes_to_layers_row(m, j, cwall, homog);
    }
    /* Rings: psi's wall value, the wall vorticity, then PV on the ring for
     * the stencils of the Jacobian. */
    for (int k = 0; k < nl; k++) {
        double s = 0.0;
        for (int md = 0; md < nl; md++)
            s += m->modes.P[k][md] * cwall[md];
        m->wall[k] = s;
        g->ops->fill_ring(g, m->psi + k * npl, s);
        g->ops->fill_vorticity_ring(g, m->zeta + k * npl, m->psi + k * npl);
    }
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
}

void tg_model_derive(tg_model *m)
{
    const tg_geometry *g = m->geom;
    if (!tg_model_projects_in_invert(m)) {
#pragma omp parallel for schedule(static)
        for (int j = g->a0; j < g->a1; j++)
            tg_model_project_row(m, m->q, j);
    }
    tg_model_invert(m);
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
        /* Where solutions have zero mean (periodic), a layer mean of the
         * given psi would leave a uniform PV that the inversion drops but
         * zeta = q - beta (y - y0) - S psi would keep: remove it first. */
        if (g->zero_mean) {
            double *f = m->psi + k * npl, s = 0.0;
            for (int j = g->a0; j < g->a1; j++)
                for (int i = g->a0; i < g->a1; i++)
                    s += f[(long)j * ns + i];
            s /= (double)(g->a1 - g->a0) * (g->a1 - g->a0);
            for (int j = g->a0; j < g->a1; j++)
                for (int i = g->a0; i < g->a1; i++)
                    f[(long)j * ns + i] -= s;
        }
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
    const int nl = m->nl, ns = g->ns, a0 = g->a0, a1 = g->a1;
    const long npl = m->npl;
    /* One pass: each layer's row sums of (q - beta (y - y0)) (psi - c) into
     * m->rowsums, formed as tg_sum_prod forms them; then the rows in order. */
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long r0 = (long)j * ns;
        const double *by = m->beta_y + r0;
        for (int k = 0; k < nl; k++) {
            const double *qk = m->q + k * npl + r0, *pk = m->psi + k * npl + r0;
            const double c = m->wall[k];
            double s = 0.0;
            for (int i = a0; i < a1; i++)
                s += (qk[i] - by[i]) * (pk[i] - c);
            m->rowsums[(long)k * ns + j] = s;
        }
    }
    double e = 0.0;
    for (int k = 0; k < nl; k++) {
        double s = 0.0;
        for (int j = a0; j < a1; j++)
            s += m->rowsums[(long)k * ns + j];
        e += m->cfg.thickness_m[k] * (s * g->dx * g->dx);
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

void tg_model_mass_row(const tg_model *m, int j, int i, double *sum, double *abssum)
{
    const tg_geometry *g = m->geom;
    const int ns = g->ns;
    const long r0 = (long)j * ns;
    const double *w = g->weight + r0;
    const double *a = m->psi + i * m->npl + r0, *b = a + m->npl;
    double s = 0.0, sa = 0.0;
    for (int x = 0; x < ns; x++) {
        if (w[x] == 0.0)
            continue;
        const double d = a[x] - b[x];
        s += w[x] * d;
        sa += w[x] * fabs(d);
    }
    *sum = s;
    *abssum = sa;
}

void tg_model_mass_error(tg_model *m, double *err)
{
    const tg_geometry *g = m->geom;
    const int ni = m->nl - 1, ns = g->ns;
    if (ni < 1)
        return;
    /* One pass: for d = psi_i - psi_{i+1}, each row's weighted sums of d and
     * of |d| (as tg_integral forms them) into m->rowsums; then the rows in
     * order. */
    double *num = m->rowsums, *den = m->rowsums + (long)ni * ns;
#pragma omp parallel for schedule(static)
    for (int j = 0; j < ns; j++) {
        for (int i = 0; i < ni; i++)
            tg_model_mass_row(m, j, i, &num[(long)i * ns + j], &den[(long)i * ns + j]);
    }
    for (int i = 0; i < ni; i++) {
        double s = 0.0, sa = 0.0;
        for (int j = 0; j < ns; j++) {
            s += num[(long)i * ns + j];
            sa += den[(long)i * ns + j];
        }
        err[i] = sa > 0.0 ? s / sa : 0.0;
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

tg_code tg_model_closures_stochastic(tg_model *m, const tg_config *cfg, int *stochastic,
                                     tg_status *st)
{
    *stochastic = 0;
    tg_config *c1 = malloc(sizeof *c1);
    if (!c1)
        return tg_fail(st, TG_ERR_NOMEM, "no memory for a config copy");
    *c1 = *cfg;
    c1->member = 1;
    tg_closure_host *h1 = tg_closure_host_create(c1, m->geom, &m->modes, st);
    free(c1);
    if (!h1)
        return st->code ? st->code : TG_ERR_INTERNAL;
    tg_model_set_noise(m, 1000.0, cfg->seed);
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, 0, 0};
    tg_code rc = tg_closure_host_advance(m->closures, &in, st);
    if (rc == TG_OK)
        rc = tg_closure_host_advance(h1, &in, st);
    if (rc == TG_OK)
        rc = tg_closure_host_eval(m->closures, &in, st);
    if (rc == TG_OK)
        rc = tg_closure_host_eval(h1, &in, st);
    if (rc == TG_OK) {
        const tg_geometry *g = m->geom;
        for (int c = 0; c < tg_closure_host_count(h1) && !*stochastic; c++) {
            const double *a = tg_closure_host_tend(m->closures, c), *b = tg_closure_host_tend(h1, c);
            for (int k = 0; k < m->nl && !*stochastic; k++)
                for (int j = g->a0; j < g->a1 && !*stochastic; j++)
                    for (int i = g->a0; i < g->a1; i++) {
                        const long p = k * m->npl + (long)j * g->ns + i;
                        if (a[p] != b[p]) {
                            *stochastic = 1;
                            break;
                        }
                    }
        }
    }
    tg_closure_host_destroy(h1);
    return rc;
}
