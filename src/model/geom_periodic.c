/* geom_periodic.c - the doubly periodic square: Fourier basis, halo copies.
 *
 * P = points = 2^k points per side, spacing dx = L/P, point (i, j) at
 * x = i dx, y = j dx, i, j = 0..P-1. Stored arrays have ns = P + 2 points per
 * side: a one-node halo around the P x P active block, so stored index s
 * holds point s - 1 (coord[s] = (s - 1) dx; the halo sits at -dx and L) and
 * the halo holds copies of the points on the opposite side (corners
 * included), which lets the stencils of fdops.c run unchanged. Output files
 * get the P active points. Quadrature: dx^2 on every active node, 0 on the
 * halo (the rectangle rule, exact for the periodic trapezoid).
 *
 * Fields are expanded in complex exponentials (fourier.h). The five-point
 * Laplacian is diagonal in this basis with eigenvalues
 *   lambda(kx, ky) = -(4/dx^2) [sin^2(pi kx/P) + sin^2(pi ky/P)]
 * (common practice; e.g. Press et al. 2007, Numerical Recipes 3rd ed.,
 * section 20.4, from memory), so the Helmholtz solve (lap - F_m) phi = rhs
 * is forward transform, division by lambda - F_m, inverse transform, and it
 * inverts the finite-difference operator of the stencils to round-off. The
 * (0, 0) coefficient is set to zero for every mode: phi has zero mean (for
 * F = 0 the mean is undetermined; for F > 0 a zero mean is the mass
 * constraint of the baroclinic modes), and the mean of rhs is ignored.
 *
 * Gaussian filter: transfer function exp(-K^2 w^2/24) with
 * K^2 = (2 pi kx/L)^2 + (2 pi ky/L)^2 and kx, ky the signed integer
 * wavenumbers (Pope 2000, Turbulent Flows, section 13.2).
 *
 * Kinetic-energy spectrum (geometry.h, spectrum.h): with C the coefficients
 * of fourier.h, Parseval's relation gives
 *   -(1/(2A)) sum psi lap(psi) dx^2 = (1/(2 P^4)) sum_{all kx, ky} (-lambda) |C|^2,
 * and the half spectrum kx = 0..P/2 counts the rows 0 < kx < P/2 twice.
 *
 * Ownership: the geometry owns its transform, tables and work arrays;
 * periodic_destroy frees them.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "geometry.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "constants.h"
#include "fourier.h"
#include "spectrum.h"

typedef struct {
    int P, nc;              /* points per side, P/2 + 1 */
    long nspec;             /* coefficients kept, nc * P */
    tg_fft2 *fft;
    double *spec;           /* 2 nspec doubles: coefficients (fourier.h layout) */
    double *lam;            /* nspec Laplacian eigenvalues, [kx][ky] */
    double *k2;             /* nspec squared wavenumbers K^2, rad2 m-2 */
    int *bin;               /* nspec spectrum bin b - 1 of each coefficient; -1 for (0, 0) */
    double *keweight;       /* nspec: multiplicity (-lambda) / (2 P^4 dk) */
    int nmodes;
    double *invden[TG_MAX_LAYERS];  /* nspec: 1/(lambda - F_m), 0 at (0, 0) */
} periodic;

static void periodic_destroy(tg_geometry *g)
{
    if (!g)
        return;
    periodic *p = g->impl;
    if (p) {
        tg_fft2_destroy(p->fft);
        free(p->spec);
        free(p->lam);
        free(p->k2);
        free(p->bin);
        free(p->keweight);
        for (int m = 0; m < TG_MAX_LAYERS; m++)
            free(p->invden[m]);
        free(p);
    }
    free(g->coord);
    free(g->weight);
    free(g);
}

/* Copies the halo: columns first (active rows), then whole rows, which
 * carries the corners along. */
static void halo_copy(const tg_geometry *g, double *f)
{
    const int ns = g->ns, P = ns - 2;
    for (int j = 1; j <= P; j++) {
        double *row = f + (long)j * ns;
        row[0] = row[P];
        row[P + 1] = row[1];
    }
    memcpy(f, f + (long)P * ns, sizeof(double) * ns);
    memcpy(f + (long)(P + 1) * ns, f + ns, sizeof(double) * ns);
}

static void periodic_fill_ring(const tg_geometry *g, double *f, double wall_value)
{
    (void)wall_value; /* no walls */
    halo_copy(g, f);
}

static void periodic_fill_vorticity_ring(const tg_geometry *g, double *zeta, const double *psi)
{
    (void)psi;
    halo_copy(g, zeta);
}

static void periodic_fill_laplacian_ring(const tg_geometry *g, double *lap)
{
    halo_copy(g, lap);
}

static tg_code periodic_setup_modes(tg_geometry *g, int nmodes, const double *F, tg_status *st)
{
    periodic *p = g->impl;
    if (nmodes < 1 || nmodes > TG_MAX_LAYERS)
        return tg_fail(st, TG_ERR_INTERNAL,
                       "periodic: %d vertical modes requested (1 to %d allowed)", nmodes,
                       TG_MAX_LAYERS);
    p->nmodes = nmodes;
    /* The fused solves keep every mode's spectrum (solve_modes_rows). */
    if (tg_fft2_reserve(p->fft, nmodes, st) != TG_OK)
        return st->code;
    for (int m = 0; m < nmodes; m++) {
        if (!(F[m] >= 0.0) || !isfinite(F[m]))
            return tg_fail(st, TG_ERR_NUMERIC,
                           "periodic: mode %d has the inverse squared deformation radius %g m-2; "
                           "expected a finite value >= 0", m, F[m]);
        if (!p->invden[m])
            p->invden[m] = malloc(sizeof(double) * (size_t)p->nspec);
        if (!p->invden[m])
            return tg_fail(st, TG_ERR_NOMEM, "periodic: no memory for the Helmholtz tables");
        p->invden[m][0] = 0.0; /* (0, 0): zero-mean solution */
        for (long k = 1; k < p->nspec; k++)
            p->invden[m][k] = 1.0 / (p->lam[k] - F[m]); /* lam < 0 off (0, 0), F >= 0 */
    }
    return TG_OK;
}

/* The Helmholtz solve: forward transform, division by lambda - F_m (a
 * multiplication by invden[m]) and inverse transform in one pass
 * (tg_fft2_apply), in place. */
static double periodic_solve_mode(tg_geometry *g, int m, double *rhs, double *phi)
{
    periodic *p = g->impl;
    const int ns = g->ns;
    if (phi != rhs)
        memcpy(phi, rhs, sizeof(double) * (size_t)ns * ns);
    double *field = phi + ns + 1;
    const double *factor = p->invden[m];
    tg_fft2_apply(p->fft, 1, &field, ns, &factor);
    halo_copy(g, phi);
    return 0.0;
}

/* Every mode's solve in one parallel region (geometry.h, solve_modes_parts):
 * the same arithmetic as solve_mode, mode after mode. No wall correction. */
static void periodic_solve_modes_parts(tg_geometry *g, int nmodes, double *phi, long stride,
                                       double *c, const double **homog)
{
    periodic *p = g->impl;
    const int ns = g->ns;
    double *fields[TG_MAX_LAYERS] = {NULL};
    const double *factors[TG_MAX_LAYERS] = {NULL};
    for (int m = 0; m < nmodes; m++) {
        fields[m] = phi + m * stride + ns + 1;
        factors[m] = p->invden[m];
        c[m] = 0.0;
        homog[m] = NULL;
    }
    tg_fft2_apply(p->fft, nmodes, fields, ns, factors);
    for (int m = 0; m < nmodes; m++)
        halo_copy(g, phi + m * stride);
}

/* solve_modes_rows: the fused solves of tg_fft2_apply_fused, whose rows
 * 0..P-1 are the stored rows 1..P. */
typedef struct {
    tg_geometry_fill_fn fill;
    tg_geometry_rows_fn fn;
    void *ctx;
} rows_relay;

static void relay_fill(void *ctx, int j, double *const *rows)
{
    const rows_relay *r = ctx;
    r->fill(r->ctx, j + 1, rows);
}

static void relay_take(void *ctx, int j, const double *const *rows)
{
    const rows_relay *r = ctx;
    r->fn(r->ctx, j + 1, rows);
}

static void periodic_solve_modes_rows(tg_geometry *g, int nmodes, tg_geometry_fill_fn fill,
                                      tg_geometry_rows_fn fn, void *ctx)
{
    periodic *p = g->impl;
    const double *factors[TG_MAX_LAYERS] = {NULL};
    for (int m = 0; m < nmodes; m++)
        factors[m] = p->invden[m];
    rows_relay r = {fill, fn, ctx};
    tg_fft2_apply_fused(p->fft, nmodes, relay_fill, factors, relay_take, &r);
}

static void periodic_filter_gaussian(tg_geometry *g, double *f, double width)
{
    periodic *p = g->impl;
    const int ns = g->ns;
    tg_fft2_forward(p->fft, f + ns + 1, ns, p->spec);
    const double c = width * width / 24.0;
    double *s = p->spec;
    const double *k2 = p->k2;
    const long n = p->nspec;
#pragma omp parallel for schedule(static)
    for (long k = 0; k < n; k++) {
        double t = exp(-k2[k] * c);
        s[2 * k] *= t;
        s[2 * k + 1] *= t;
    }
    tg_fft2_inverse(p->fft, p->spec, f + ns + 1, ns);
    halo_copy(g, f);
}

static void periodic_ke_spectrum(tg_geometry *g, const double *psi, double wall_value,
                                 double *work, double *E)
{
    (void)wall_value; /* the mean does not enter: lambda(0, 0) = 0 */
    (void)work;
    periodic *p = g->impl;
    const int ns = g->ns;
    tg_fft2_forward(p->fft, psi + ns + 1, ns, p->spec);
    for (int b = 0; b < g->spectrum_nbins; b++)
        E[b] = 0.0;
    const double *s = p->spec;
    for (long k = 0; k < p->nspec; k++) {
        const int b = p->bin[k];
        if (b >= 0)
            E[b] += p->keweight[k] * (s[2 * k] * s[2 * k] + s[2 * k + 1] * s[2 * k + 1]);
    }
}

static void periodic_fill_ring_extend(const tg_geometry *g, double *f)
{
    halo_copy(g, f);
}

/* Coarse-graining filter (geometry.h, coarsen.h); defined at the end of the file. */
static void *periodic_filter_work_create(const tg_geometry *g, tg_status *st);
static void periodic_filter_work_destroy(void *work);
static void periodic_filter_field(const tg_geometry *g, void *work, double *f, int kind,
                                  double scale);

static const tg_geometry_ops periodic_ops = {
    .destroy = periodic_destroy,
    .setup_modes = periodic_setup_modes,
    .solve_mode = periodic_solve_mode,
    .solve_modes_parts = periodic_solve_modes_parts,
    .solve_modes_rows = periodic_solve_modes_rows,
    .fill_ring = periodic_fill_ring,
    .fill_vorticity_ring = periodic_fill_vorticity_ring,
    .fill_ring_extend = periodic_fill_ring_extend,
    .fill_laplacian_ring = periodic_fill_laplacian_ring,
    .filter_gaussian = periodic_filter_gaussian,
    .ke_spectrum = periodic_ke_spectrum,
    .filter_work_create = periodic_filter_work_create,
    .filter_work_destroy = periodic_filter_work_destroy,
    .filter_field = periodic_filter_field,
};

tg_geometry *tg_geom_periodic_create(const tg_config *cfg, tg_status *st)
{
    tg_geometry *g = calloc(1, sizeof *g);
    periodic *p = calloc(1, sizeof *p);
    if (!g || !p) {
        free(g);
        free(p);
        tg_fail(st, TG_ERR_NOMEM, "periodic: no memory");
        return NULL;
    }
    g->impl = p;
    g->ops = &periodic_ops;
    g->kind = TG_GEOM_PERIODIC;
    g->holds_planetary_pv = 0;
    g->zero_mean = 1;
    const int P = cfg->points;
    if (P < 4 || P > (1 << 16) || (P & (P - 1)) != 0) {
        tg_fail(st, TG_ERR_CONFIG, "periodic: points must be 2^k (4 to %d), got %d", 1 << 16, P);
        periodic_destroy(g);
        return NULL;
    }
    if (!(cfg->size_km > 0.0) || !isfinite(cfg->size_km)) {
        tg_fail(st, TG_ERR_CONFIG, "periodic: size_km must be a finite value > 0, got %g",
                cfg->size_km);
        periodic_destroy(g);
        return NULL;
    }
    const int ns = P + 2, nc = P / 2 + 1;
    p->P = P;
    p->nc = nc;
    p->nspec = (long)nc * P;
    g->ns = ns;
    g->a0 = 1;
    g->a1 = P + 1;
    g->o0 = 1;
    g->o1 = P + 1;
    g->length = cfg->size_km * 1e3;
    g->dx = g->length / P;
    g->area = g->length * g->length;
    g->spectrum_dk = 2.0 * TG_PI / g->length;
    g->spectrum_nbins = tg_spectrum_bin(2L * (P / 2) * (P / 2));

    g->coord = malloc(sizeof(double) * ns);
    g->weight = malloc(sizeof(double) * (size_t)ns * ns);
    p->spec = malloc(sizeof(double) * 2 * (size_t)p->nspec);
    p->lam = malloc(sizeof(double) * (size_t)p->nspec);
    p->k2 = malloc(sizeof(double) * (size_t)p->nspec);
    p->bin = malloc(sizeof(int) * (size_t)p->nspec);
    p->keweight = malloc(sizeof(double) * (size_t)p->nspec);
    if (!g->coord || !g->weight || !p->spec || !p->lam || !p->k2 || !p->bin || !p->keweight) {
        tg_fail(st, TG_ERR_NOMEM, "periodic: no memory for %d x %d grid tables", ns, ns);
        periodic_destroy(g);
        return NULL;
    }
    for (int s = 0; s < ns; s++)
        g->coord[s] = (s - 1) * g->dx;
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            int active = i >= g->a0 && i < g->a1 && j >= g->a0 && j < g->a1;
            g->weight[(long)j * ns + i] = active ? g->dx * g->dx : 0.0;
        }

    const double c = 4.0 / (g->dx * g->dx), kk = 2.0 * TG_PI / g->length;
    /* 2 P^4 exactly (P a power of two), times the bin width. */
    const double norm = 2.0 * (double)P * P * (double)P * P * g->spectrum_dk;
    for (int kx = 0; kx < nc; kx++) {
        const double sx = sin(TG_PI * kx / P);
        const double mult = (kx == 0 || kx == P / 2) ? 1.0 : 2.0;
        for (int ky = 0; ky < P; ky++) {
            const long k = (long)kx * P + ky;
            const int kys = ky <= P / 2 ? ky : ky - P; /* signed */
            const double sy = sin(TG_PI * kys / P);
            p->lam[k] = -c * (sx * sx + sy * sy);
            const long m2 = (long)kx * kx + (long)kys * kys;
            p->k2[k] = kk * kk * (double)m2;
            p->bin[k] = m2 == 0 ? -1 : tg_spectrum_bin(m2) - 1;
            p->keweight[k] = mult * (-p->lam[k]) / norm;
        }
    }
    p->fft = tg_fft2_create(P, st);
    if (!p->fft) {
        periodic_destroy(g);
        return NULL;
    }
    return g;
}

/* ------------------------------------------------------------------ */
/* Coarse-graining filter (geometry.h ops->filter_field)               */
/* ------------------------------------------------------------------ */

/* The filter's own transform and coefficients, so that filtering never
 * touches the arrays of the Helmholtz solves. */
typedef struct {
    int P;
    long nspec;
    tg_fft2 *fft;
    double *spec;   /* 2 nspec doubles */
} periodic_filter_work;

static void periodic_filter_work_destroy(void *work)
{
    periodic_filter_work *w = work;
    if (!w)
        return;
    tg_fft2_destroy(w->fft);
    free(w->spec);
    free(w);
}

static void *periodic_filter_work_create(const tg_geometry *g, tg_status *st)
{
    periodic_filter_work *w = calloc(1, sizeof *w);
    if (!w) {
        tg_fail(st, TG_ERR_NOMEM, "periodic: no memory for the coarse-graining filter");
        return NULL;
    }
    w->P = g->ns - 2;
    w->nspec = (long)(w->P / 2 + 1) * w->P;
    w->spec = malloc(sizeof(double) * 2 * (size_t)w->nspec);
    if (!w->spec) {
        tg_fail(st, TG_ERR_NOMEM, "periodic: no memory for the coarse-graining filter");
        periodic_filter_work_destroy(w);
        return NULL;
    }
    w->fft = tg_fft2_create(w->P, st);
    if (!w->fft) {
        periodic_filter_work_destroy(w);
        return NULL;
    }
    return w;
}

/* Sharp: keeps |kx|, |ky| < scale (signed integer wavenumbers times
 * 2 pi / L; the relative margin 1e-9 keeps a wavenumber that equals the
 * cutoff in exact arithmetic out whatever the rounding). Gaussian: the
 * transfer function exp(-K^2 scale^2 / 24) of Pope 2000, Turbulent Flows,
 * section 13.2. Both factors are even in kx and ky, as tg_fft2_inverse needs. */
static void periodic_filter_field(const tg_geometry *g, void *work, double *f, int kind,
                                  double scale)
{
    periodic_filter_work *w = work;
    const int ns = g->ns, P = w->P;
    const double dk = 2.0 * TG_PI / g->length, cut = scale * (1.0 - 1e-9);
    const double c = scale * scale / 24.0;
    tg_fft2_forward(w->fft, f + ns + 1, ns, w->spec);
    double *s = w->spec;
    for (int kx = 0; kx <= P / 2; kx++)
        for (int ky = 0; ky < P; ky++) {
            const int kys = ky <= P / 2 ? ky : P - ky; /* |signed ky| */
            const long k = (long)kx * P + ky;
            double t;
            if (kind == TG_FILTER_SHARP)
                t = (kx * dk < cut && kys * dk < cut) ? 1.0 : 0.0;
            else
                t = exp(-dk * dk * ((double)kx * kx + (double)kys * kys) * c);
            s[2 * k] *= t;
            s[2 * k + 1] *= t;
        }
    tg_fft2_inverse(w->fft, w->spec, f + ns + 1, ns);
    halo_copy(g, f);
}
