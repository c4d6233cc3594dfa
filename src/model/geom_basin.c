/* geom_basin.c - the closed square basin: sine basis, walls, mass constraint.
 *
 * Nodes i, j = 0..N include both walls (N = points - 1 = 2^k), spacing
 * dx = L/N, node (i, j) at x = i dx from the western wall, y = j dx from the
 * southern wall. Interior nodes 1..N-1 are prognostic. psi is constant on
 * the walls; the five-point Laplacian with zero wall values is diagonal in
 * the type-I sine basis (sinetf.h), with eigenvalues
 *   lambda(kx, ky) = -(4/dx^2) [sin^2(pi kx/(2N)) + sin^2(pi ky/(2N))]
 * (common practice; e.g. Press et al. 2007, Numerical Recipes 3rd ed., section 20.4).
 *
 * Mass constraint (McWilliams 1977, Dyn. Atmos. Oceans 1, 427-441): a
 * baroclinic mode phi_m = phi_p + c phi_h, where phi_p solves the Helmholtz
 * problem with phi_p = 0 on the walls and phi_h solves the homogeneous
 * problem with phi_h = 1 on the walls (computed once); c is chosen so that
 * the trapezoidal domain integral of phi_m vanishes. The barotropic mode
 * has phi = 0 on the walls (no net transport through the basin).
 *
 * Wall vorticity (ghost-node formula, common practice): with a ghost node
 * psi_g = psi_0 + (2 a - 1)(psi_1 - psi_0) beyond the wall,
 *   zeta_wall = 2 a (psi_1 - psi_0) / dx^2,
 * a = 0 free slip (zeta = 0), a = 1 no slip (zero tangential velocity),
 * 0 < a < 1 partial slip with a = wall_slip_coefficient. The Laplacian of
 * vorticity, needed by the biharmonic operator, is set to zero on the walls.
 *
 * Kinetic-energy spectrum (geometry.h, spectrum.h): psi - c vanishes on the
 * walls; with S its sine coefficients (sinetf.h) and the orthogonality
 * sum_{i=1}^{N-1} sin^2(pi i k/N) = N/2, Parseval's relation gives
 *   -(1/(2A)) sum_interior (psi - c) lap(psi) dx^2 = (2/N^4) sum_{kx,ky} (-lambda) S^2.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "geometry.h"

#include <math.h>
#include <omp.h>
#include <stdlib.h>
#include <string.h>

#include "constants.h"
#include "fdops.h"
#include "sinetf.h"
#include "spectrum.h"

/* What one Helmholtz solve works in: a transform with its spectrum (n*n)
 * and a row (ns) for fixed-order sums. */
typedef struct {
    tg_dst *dst;
    double *spec;
    double *rowbuf;
} solve_work;

typedef struct {
    int N, n;               /* N = points - 1, n = N - 1 interior points per side */
    tg_dst *dst;
    double *spec;           /* n*n work array */
    double *rowbuf;         /* ns work array for fixed-order sums */
    /* Work of the solves: work[0] is dst, spec and rowbuf above; setup_modes
     * adds one set for each further thread that may solve a mode while
     * another thread solves another (basin_solve_modes_parts). */
    solve_work work[TG_MAX_LAYERS];
    int nwork;
    double *lam;            /* n*n Laplacian eigenvalues in spec layout */
    int nmodes;
    double *invden[TG_MAX_LAYERS];  /* n*n, 1/(lambda - F_m) */
    double *phih[TG_MAX_LAYERS];    /* ns*ns homogeneous solution, baroclinic modes */
    double intph[TG_MAX_LAYERS];    /* domain integral of phih */
    double slip;                    /* a in the wall-vorticity formula */
    double *wint;                   /* n: cot(pi k/(2N)) for odd k, 0 for even (integrals) */
} basin;

static void basin_destroy(tg_geometry *g)
{
    if (!g)
        return;
    basin *b = g->impl;
    if (b) {
        tg_dst_destroy(b->dst);
        free(b->spec);
        free(b->rowbuf);
        for (int t = 1; t < b->nwork; t++) {
            tg_dst_destroy(b->work[t].dst);
            free(b->work[t].spec);
            free(b->work[t].rowbuf);
        }
        free(b->wint);
        free(b->lam);
        for (int m = 0; m < TG_MAX_LAYERS; m++) {
            free(b->invden[m]);
            free(b->phih[m]);
        }
        free(b);
    }
    free(g->coord);
    free(g->weight);
    free(g);
}

/* Solves (lap - F_m) phi = rhs with phi = 0 on the walls; returns the
 * trapezoidal domain integral of phi, formed from the sine coefficients:
 * sum_{i=1}^{N-1} sin(pi i k/N) = cot(pi k/(2N)) for odd k and 0 for even k
 * (common practice; e.g. Gradshteyn & Ryzhik 2007, 1.342.1), so
 *   int phi dA = dx^2 (2/N)^2 sum_{kx, ky odd} C(kx, ky) cot(pi kx/2N) cot(pi ky/2N).
 * The sum runs row by row in fixed order (thread-count independent). */
static double solve_dirichlet(tg_geometry *g, basin *b, const solve_work *sw, int m,
                              const double *rhs, double *phi)
{
    const int ns = g->ns, n = b->n;
    /* Transform and divide by (lambda - F_m) in one pass (times its inverse). */
    tg_dst_forward_times(sw->dst, rhs + ns + 1, ns, sw->spec, b->invden[m]);
    const double *w = b->wint;
    double *s = sw->spec, *rb = sw->rowbuf;
    /* The integral needs the odd wavenumbers only (even array indices kx,
     * ky: index = wavenumber - 1); w is 0 at the others. */
#pragma omp parallel for schedule(static)
    for (int kx = 0; kx < n; kx++) {
        const double *row = s + (long)kx * n;
        double acc = 0.0;
        if (kx % 2 == 0)
            for (int ky = 0; ky < n; ky += 2)
                acc += row[ky] * w[ky];
        rb[kx] = acc * w[kx];
    }
    double integral = 0.0;
    for (int kx = 0; kx < n; kx++)
        integral += rb[kx];
    tg_dst_inverse(sw->dst, sw->spec, phi + ns + 1, ns);
    g->ops->fill_ring(g, phi, 0.0);
    const double f = 2.0 * g->dx / b->N;
    return integral * f * f;
}

static void basin_fill_ring(const tg_geometry *g, double *f, double wall)
{
    const int ns = g->ns;
    for (int i = 0; i < ns; i++) {
        f[i] = wall;
        f[(long)(ns - 1) * ns + i] = wall;
        f[(long)i * ns] = wall;
        f[(long)i * ns + ns - 1] = wall;
    }
}

static tg_code basin_setup_modes(tg_geometry *g, int nmodes, const double *F, tg_status *st)
{
    basin *b = g->impl;
    const int n = b->n, ns = g->ns;
    b->nmodes = nmodes;
    /* Work for the threads that may solve modes at the same time: as many
     * as OpenMP would use, at most one per mode. */
    int nwork = omp_get_max_threads();
    if (nwork > nmodes)
        nwork = nmodes;
    b->work[0] = (solve_work){b->dst, b->spec, b->rowbuf};
    b->nwork = 1;
    for (int t = 1; t < nwork; t++, b->nwork++) {
        solve_work *w = &b->work[t];
        w->spec = malloc(sizeof(double) * (size_t)n * n);
        w->rowbuf = malloc(sizeof(double) * (size_t)ns);
        if (!w->spec || !w->rowbuf) {
            free(w->spec);
            free(w->rowbuf);
            return tg_fail(st, TG_ERR_NOMEM, "basin: no memory for the work of solve %d", t + 1);
        }
        w->dst = tg_dst_create(n, st);
        if (!w->dst) {
            free(w->spec);
            free(w->rowbuf);
            return st->code;
        }
    }
    for (int m = 0; m < nmodes; m++) {
        b->invden[m] = malloc(sizeof(double) * (size_t)n * n);
        if (!b->invden[m])
            return tg_fail(st, TG_ERR_NOMEM, "basin: no memory for the Helmholtz tables");
        for (long k = 0; k < (long)n * n; k++) {
            double d = b->lam[k] - F[m];
            b->invden[m][k] = 1.0 / d; /* d < 0 always: lam < 0 and F >= 0 */
        }
    }
    /* Homogeneous solutions phi_h = 1 + chi, (lap - F) chi = F, chi = 0 on the walls. */
    double *rhs = malloc(sizeof(double) * (size_t)ns * ns);
    if (!rhs)
        return tg_fail(st, TG_ERR_NOMEM, "basin: no memory for the homogeneous solutions");
    for (int m = 1; m < nmodes; m++) {
        b->phih[m] = malloc(sizeof(double) * (size_t)ns * ns);
        if (!b->phih[m]) {
            free(rhs);
            return tg_fail(st, TG_ERR_NOMEM, "basin: no memory for the homogeneous solutions");
        }
        for (long k = 0; k < (long)ns * ns; k++)
            rhs[k] = F[m];
        solve_dirichlet(g, b, &b->work[0], m, rhs, b->phih[m]);
        for (long k = 0; k < (long)ns * ns; k++)
            b->phih[m][k] += 1.0;
        b->intph[m] = tg_integral(g, b->phih[m], 0.0, 0, b->rowbuf);
        if (!(fabs(b->intph[m]) > 0.0)) {
            free(rhs);
            return tg_fail(st, TG_ERR_NUMERIC,
                           "basin: the homogeneous solution of mode %d has zero integral", m);
        }
    }
    free(rhs);
    return TG_OK;
}

/* Mode m's particular solution phi_p into phi, solved in work set sw, and
 * the mass-constraint constant c; *homog = phi_h (NULL for the barotropic
 * mode), so that phi_p + c phi_h is the mode (geometry.h). */
static double solve_parts(tg_geometry *g, basin *b, const solve_work *sw, int m, double *rhs,
                          double *phi, const double **homog)
{
    double ip = solve_dirichlet(g, b, sw, m, rhs, phi);
    *homog = NULL;
    if (m == 0)
        return 0.0;
    /* Mass constraint: choose c so that the integral of phi_p + c phi_h vanishes. */
    *homog = b->phih[m];
    return -ip / b->intph[m];
}

static double basin_solve_mode(tg_geometry *g, int m, double *rhs, double *phi)
{
    basin *b = g->impl;
    const double *h;
    double c = solve_parts(g, b, &b->work[0], m, rhs, phi, &h);
    if (!h)
        return c;
    const long tot = (long)g->ns * g->ns;
#pragma omp parallel for schedule(static)
    for (long k = 0; k < tot; k++)
        phi[k] += c * h[k];
    return c;
}

/* Every mode's solve (geometry.h, solve_modes_parts). With T threads and
 * work sets, the modes go in groups of T, one mode per thread, each solve
 * then running on its own thread: one parallel region for the group instead
 * of several per solve, and no barriers inside. The T-1 or fewer modes left
 * over are solved one after another, each with all threads. A solve gives
 * the same bits on one thread as on several (sinetf.h; fixed-order sums). */
static void basin_solve_modes_parts(tg_geometry *g, int nmodes, double *phi, long stride,
                                    double *c, const double **homog)
{
    basin *b = g->impl;
    int team = omp_get_max_threads();
    if (team > b->nwork)
        team = b->nwork;
    const int grouped = team > 1 ? nmodes - nmodes % team : 0;
    if (grouped > 0) {
#pragma omp parallel num_threads(team)
        {
            const int t = omp_get_thread_num(), nt = omp_get_num_threads();
            for (int m = t; m < grouped; m += nt)
                c[m] = solve_parts(g, b, &b->work[t], m, phi + m * stride, phi + m * stride,
                                   &homog[m]);
        }
    }
    for (int m = grouped; m < nmodes; m++)
        c[m] = solve_parts(g, b, &b->work[0], m, phi + m * stride, phi + m * stride, &homog[m]);
}

static void basin_fill_vorticity_ring(const tg_geometry *g, double *z, const double *psi)
{
    const basin *b = g->impl;
    const int ns = g->ns, N = b->N;
    const double f = 2.0 * b->slip / (g->dx * g->dx);
    for (int k = 1; k < N; k++) {
        z[k] = f * (psi[ns + k] - psi[k]);                                          /* south */
        z[(long)N * ns + k] = f * (psi[(long)(N - 1) * ns + k] - psi[(long)N * ns + k]); /* north */
        z[(long)k * ns] = f * (psi[(long)k * ns + 1] - psi[(long)k * ns]);              /* west */
        z[(long)k * ns + N] = f * (psi[(long)k * ns + N - 1] - psi[(long)k * ns + N]);  /* east */
    }
    /* Corners never enter a stencil of the interior with a nonzero weight
     * (psi is constant along the walls); keep them defined. */
    z[0] = z[N] = z[(long)N * ns] = z[(long)N * ns + N] = 0.0;
}

static void basin_fill_ring_extend(const tg_geometry *g, double *f)
{
    const int ns = g->ns, N = ns - 1;
    for (int k = 1; k < N; k++) {
        f[k] = f[ns + k];
        f[(long)N * ns + k] = f[(long)(N - 1) * ns + k];
        f[(long)k * ns] = f[(long)k * ns + 1];
        f[(long)k * ns + N] = f[(long)k * ns + N - 1];
    }
    f[0] = f[ns + 1];
    f[N] = f[ns + N - 1];
    f[(long)N * ns] = f[(long)(N - 1) * ns + 1];
    f[(long)N * ns + N] = f[(long)(N - 1) * ns + N - 1];
}

static void basin_fill_laplacian_ring(const tg_geometry *g, double *lap)
{
    basin_fill_ring(g, lap, 0.0);
}

static void basin_filter_gaussian(tg_geometry *g, double *f, double width)
{
    basin *b = g->impl;
    const int ns = g->ns, n = b->n;
    tg_dst_forward(b->dst, f + ns + 1, ns, b->spec);
    const double kk = TG_PI / g->length;
#pragma omp parallel for schedule(static)
    for (int kx = 1; kx <= n; kx++)
        for (int ky = 1; ky <= n; ky++) {
            double K2 = kk * kk * ((double)kx * kx + (double)ky * ky);
            b->spec[(long)(kx - 1) * n + (ky - 1)] *= exp(-K2 * width * width / 24.0);
        }
    tg_dst_inverse(b->dst, b->spec, f + ns + 1, ns);
}

static void basin_ke_spectrum(tg_geometry *g, const double *psi, double wall, double *work,
                              double *E)
{
    basin *b = g->impl;
    const int ns = g->ns, n = b->n;
    for (int j = 1; j <= n; j++)
        for (int i = 1; i <= n; i++)
            work[(long)j * ns + i] = psi[(long)j * ns + i] - wall;
    tg_dst_forward(b->dst, work + ns + 1, ns, b->spec);
    for (int k = 0; k < g->spectrum_nbins; k++)
        E[k] = 0.0;
    /* N^4 is exact (N a power of two). */
    const double N2 = (double)b->N * b->N, f = 2.0 / (N2 * N2 * g->spectrum_dk);
    for (int kx = 1; kx <= n; kx++)
        for (int ky = 1; ky <= n; ky++) {
            const long k = (long)(kx - 1) * n + (ky - 1);
            const double s = b->spec[k];
            E[tg_spectrum_bin((long)kx * kx + (long)ky * ky) - 1] += f * (-b->lam[k]) * s * s;
        }
}

/* Coarse-graining filter (geometry.h, coarsen.h); defined at the end of the file. */
static void *basin_filter_work_create(const tg_geometry *g, tg_status *st);
static void basin_filter_work_destroy(void *work);
static void basin_filter_field(const tg_geometry *g, void *work, double *f, int kind,
                               double scale);

static const tg_geometry_ops basin_ops = {
    .destroy = basin_destroy,
    .setup_modes = basin_setup_modes,
    .solve_mode = basin_solve_mode,
    .solve_modes_parts = basin_solve_modes_parts,
    .fill_ring = basin_fill_ring,
    .fill_vorticity_ring = basin_fill_vorticity_ring,
    .fill_ring_extend = basin_fill_ring_extend,
    .fill_laplacian_ring = basin_fill_laplacian_ring,
    .filter_gaussian = basin_filter_gaussian,
    .ke_spectrum = basin_ke_spectrum,
    .filter_work_create = basin_filter_work_create,
    .filter_work_destroy = basin_filter_work_destroy,
    .filter_field = basin_filter_field,
};

tg_geometry *tg_geom_basin_create(const tg_config *cfg, tg_status *st)
{
    tg_geometry *g = calloc(1, sizeof *g);
    basin *b = calloc(1, sizeof *b);
    if (!g || !b) {
        free(g);
        free(b);
        tg_fail(st, TG_ERR_NOMEM, "basin: no memory");
        return NULL;
    }
    g->impl = b;
    g->ops = &basin_ops;
    g->kind = TG_GEOM_BASIN;
    g->holds_planetary_pv = 1;
    const int ns = cfg->points, N = ns - 1, n = N - 1;
    if (ns < 5 || (N & (N - 1)) != 0) {
        tg_fail(st, TG_ERR_CONFIG, "basin: points must be 2^k + 1, got %d", ns);
        basin_destroy(g);
        return NULL;
    }
    b->N = N;
    b->n = n;
    g->ns = ns;
    g->a0 = 1;
    g->a1 = N;
    g->o0 = 0;
    g->o1 = ns;
    g->length = cfg->size_km * 1e3;
    g->dx = g->length / N;
    g->area = g->length * g->length;
    g->spectrum_dk = TG_PI / g->length;
    g->spectrum_nbins = tg_spectrum_bin(2L * n * n);
    switch (cfg->wall_condition) {
    case TG_WALL_FREE_SLIP: b->slip = 0.0; break;
    case TG_WALL_NO_SLIP: b->slip = 1.0; break;
    case TG_WALL_PARTIAL_SLIP: b->slip = cfg->wall_slip_coefficient; break;
    }
    g->coord = malloc(sizeof(double) * ns);
    g->weight = malloc(sizeof(double) * (size_t)ns * ns);
    b->spec = malloc(sizeof(double) * (size_t)n * n);
    b->lam = malloc(sizeof(double) * (size_t)n * n);
    b->rowbuf = malloc(sizeof(double) * ns);
    b->wint = malloc(sizeof(double) * ns);
    if (!g->coord || !g->weight || !b->spec || !b->lam || !b->rowbuf || !b->wint) {
        tg_fail(st, TG_ERR_NOMEM, "basin: no memory for %d x %d grid tables", ns, ns);
        basin_destroy(g);
        return NULL;
    }
    for (int i = 0; i < ns; i++)
        g->coord[i] = i * g->dx;
    /* Trapezoidal weights: half on the walls, a quarter in the corners. */
    for (int j = 0; j < ns; j++)
        for (int i = 0; i < ns; i++) {
            double wx = (i == 0 || i == N) ? 0.5 : 1.0, wy = (j == 0 || j == N) ? 0.5 : 1.0;
            g->weight[(long)j * ns + i] = wx * wy * g->dx * g->dx;
        }
    for (int k = 1; k <= n; k++)
        b->wint[k - 1] = (k % 2) ? 1.0 / tan(TG_PI * k / (2.0 * N)) : 0.0;
    const double c = 4.0 / (g->dx * g->dx);
    for (int kx = 1; kx <= n; kx++)
        for (int ky = 1; ky <= n; ky++) {
            double sx = sin(TG_PI * kx / (2.0 * N)), sy = sin(TG_PI * ky / (2.0 * N));
            b->lam[(long)(kx - 1) * n + (ky - 1)] = -c * (sx * sx + sy * sy);
        }
    b->dst = tg_dst_create(n, st);
    if (!b->dst) {
        basin_destroy(g);
        return NULL;
    }
    return g;
}

/* ------------------------------------------------------------------ */
/* Coarse-graining filter (geometry.h ops->filter_field)               */
/* ------------------------------------------------------------------ */
/*
 * A sine series can only hold a field that vanishes on the walls, and the
 * fields a twin coarse-grains do not (psi is a constant there, q carries
 * beta (y - y0), velocities and fluxes have wall values). The filter
 * therefore splits f = C[f_w] + d, where C[f_w] is the transfinite
 * (Coons) patch of the wall values f_w,
 *   C(s, t) = (1 - s) f_W(t) + s f_E(t) + (1 - t) f_S(s) + t f_N(s)
 *             - [(1-s)(1-t) f_SW + s(1-t) f_SE + (1-s) t f_NW + s t f_NE],
 * s = x/L, t = y/L (the bilinearly blended patch of Gordon & Hall 1973,
 * Int. J. Numer. Methods Eng. 7, 461-477), which reproduces every bilinear
 * field, and d
 * vanishes on the walls. d is filtered in the 2-D sine basis with
 * kx = pi mx/L, ky = pi my/L; each wall's values, minus the straight line
 * between its corners, in the 1-D sine basis along the wall; the corners
 * stay. The result is C[filtered walls] + filtered d. This is linear in f;
 * constants and affine fields (psi's wall constant, beta (y - y0)) pass
 * unchanged; and a field made of sine modes below the cutoff plus the
 * patch of walls made of such modes (a field the coarse grid resolves)
 * passes the sharp filter unchanged. For a wall term g(y)(1 - x/L) the
 * Gaussian acts on g alone, as the infinite-domain Gaussian does on a
 * field linear in x.
 */

typedef struct {
    int N, n;
    tg_dst *dst;
    double *spec;    /* n*n sine coefficients */
    double *d;       /* ns*ns: f minus the patch of its walls (interior) */
    double *sine;    /* n*n: sin(pi m i / N), [(m-1) n + (i-1)] */
    double *wall;    /* 4 (N+1): W, E, S, N walls as given, then filtered */
    double *wfilt;   /* 4 (N+1) */
    double *coef;    /* n */
} basin_filter_work;

static void basin_filter_work_destroy(void *work)
{
    basin_filter_work *w = work;
    if (!w)
        return;
    tg_dst_destroy(w->dst);
    free(w->spec);
    free(w->d);
    free(w->sine);
    free(w->wall);
    free(w->wfilt);
    free(w->coef);
    free(w);
}

static void *basin_filter_work_create(const tg_geometry *g, tg_status *st)
{
    basin_filter_work *w = calloc(1, sizeof *w);
    if (!w) {
        tg_fail(st, TG_ERR_NOMEM, "basin: no memory for the coarse-graining filter");
        return NULL;
    }
    const int ns = g->ns, N = ns - 1, n = N - 1;
    w->N = N;
    w->n = n;
    w->spec = malloc(sizeof(double) * (size_t)n * n);
    w->d = calloc((size_t)ns * ns, sizeof(double));
    w->sine = malloc(sizeof(double) * (size_t)n * n);
    w->wall = malloc(sizeof(double) * 4 * (size_t)(N + 1));
    w->wfilt = malloc(sizeof(double) * 4 * (size_t)(N + 1));
    w->coef = malloc(sizeof(double) * (size_t)n);
    if (!w->spec || !w->d || !w->sine || !w->wall || !w->wfilt || !w->coef) {
        tg_fail(st, TG_ERR_NOMEM, "basin: no memory for the coarse-graining filter (%d points)",
                ns);
        basin_filter_work_destroy(w);
        return NULL;
    }
    /* sin(pi m i / N) from the exact remainder of m i modulo 2N. */
    for (int m = 1; m <= n; m++)
        for (int i = 1; i <= n; i++)
            w->sine[(long)(m - 1) * n + (i - 1)] =
                sin(TG_PI * (double)(((long)m * i) % (2L * N)) / N);
    w->dst = tg_dst_create(n, st);
    if (!w->dst) {
        basin_filter_work_destroy(w);
        return NULL;
    }
    return w;
}

/* Transfer factor of wavenumber index m (k = pi m / L) in one direction. */
static double basin_transfer_1d(int kind, double k, double scale)
{
    if (kind == TG_FILTER_SHARP)
        return k < scale * (1.0 - 1e-9) ? 1.0 : 0.0;
    return exp(-k * k * scale * scale / 24.0);
}

/* Filters one wall v[0..N] in place: the line between v[0] and v[N] stays,
 * the rest is filtered in the 1-D sine basis. */
static void basin_filter_wall(basin_filter_work *w, double *v, int kind, double kk, double scale)
{
    const int N = w->N, n = w->n;
    const double v0 = v[0], vN = v[N];
    for (int m = 1; m <= n; m++) {
        const double *sr = w->sine + (long)(m - 1) * n;
        double acc = 0.0;
        for (int i = 1; i <= n; i++)
            acc += (v[i] - (v0 + (vN - v0) * i / N)) * sr[i - 1];
        w->coef[m - 1] = acc * basin_transfer_1d(kind, kk * m, scale) * (2.0 / N);
    }
    for (int i = 1; i <= n; i++) {
        double acc = 0.0;
        for (int m = 1; m <= n; m++)
            acc += w->coef[m - 1] * w->sine[(long)(m - 1) * n + (i - 1)];
        v[i] = v0 + (vN - v0) * i / N + acc;
    }
}

/* The Coons patch of walls W, E, S, N (each N+1 values) at node (i, j). */
static double coons(const double *W, const double *E, const double *S, const double *Nw, int N,
                    int i, int j)
{
    const double s = (double)i / N, t = (double)j / N;
    return (1.0 - s) * W[j] + s * E[j] + (1.0 - t) * S[i] + t * Nw[i] -
           ((1.0 - s) * (1.0 - t) * S[0] + s * (1.0 - t) * S[N] + (1.0 - s) * t * Nw[0] +
            s * t * Nw[N]);
}

static void basin_filter_field(const tg_geometry *g, void *work, double *f, int kind,
                               double scale)
{
    basin_filter_work *w = work;
    const int ns = g->ns, N = w->N, n = w->n;
    const double kk = TG_PI / g->length;
    double *W = w->wall, *E = W + (N + 1), *S = E + (N + 1), *Nw = S + (N + 1);
    for (int k = 0; k <= N; k++) {
        W[k] = f[(long)k * ns];
        E[k] = f[(long)k * ns + N];
        S[k] = f[k];
        Nw[k] = f[(long)N * ns + k];
    }
    /* d = f - patch of the walls, on the interior. */
    for (int j = 1; j < N; j++)
        for (int i = 1; i < N; i++)
            w->d[(long)j * ns + i] = f[(long)j * ns + i] - coons(W, E, S, Nw, N, i, j);
    tg_dst_forward(w->dst, w->d + ns + 1, ns, w->spec);
    for (int mx = 1; mx <= n; mx++) {
        const double tx = basin_transfer_1d(kind, kk * mx, scale);
        for (int my = 1; my <= n; my++) {
            double t;
            if (kind == TG_FILTER_SHARP)
                t = tx * basin_transfer_1d(kind, kk * my, scale);
            else
                t = exp(-kk * kk * ((double)mx * mx + (double)my * my) * scale * scale / 24.0);
            w->spec[(long)(mx - 1) * n + (my - 1)] *= t;
        }
    }
    tg_dst_inverse(w->dst, w->spec, w->d + ns + 1, ns);
    /* The walls, each along its own length. */
    double *fW = w->wfilt, *fE = fW + (N + 1), *fS = fE + (N + 1), *fN = fS + (N + 1);
    memcpy(w->wfilt, w->wall, sizeof(double) * 4 * (size_t)(N + 1));
    basin_filter_wall(w, fW, kind, kk, scale);
    basin_filter_wall(w, fE, kind, kk, scale);
    basin_filter_wall(w, fS, kind, kk, scale);
    basin_filter_wall(w, fN, kind, kk, scale);
    for (int j = 1; j < N; j++)
        for (int i = 1; i < N; i++)
            f[(long)j * ns + i] = w->d[(long)j * ns + i] + coons(fW, fE, fS, fN, N, i, j);
    for (int k = 0; k <= N; k++) {
        f[(long)k * ns] = fW[k];
        f[(long)k * ns + N] = fE[k];
        f[k] = fS[k];
        f[(long)N * ns + k] = fN[k];
    }
}
