/* basis.c - the basis-term library and the coefficients-file reader (basis.h).
 *
 * Sources of the terms (each is a building block; the fitted coefficients
 * decide what the sum represents):
 *   - zeta, lap_zeta, lap2_zeta: linear damping and harmonic / biharmonic
 *     viscosity on vorticity (Holland 1978, J. Phys. Oceanogr. 8, 363-392);
 *   - lap_q, lap2_q: down-gradient PV diffusion (Green 1970, Q. J. R.
 *     Meteorol. Soc. 96, 157-185; Marshall 1981, J. Phys. Oceanogr. 11,
 *     1257-1271);
 *   - jac_psi_lapzeta, jac_psi_lapq, jac_zeta_lapzeta: the Jacobians of the
 *     second-order Taylor expansion of a filtered advection term (Leonard
 *     1974, Adv. Geophys. 18A, 237-248);
 *   - div_gradu_gradzeta, div_gradu_gradq: the divergence of the gradient
 *     (nonlinear) model of the sub-filter flux, tau_i = (Delta^2/12)
 *     d_k u_i d_k f for a scalar (Clark, Ferziger & Reynolds 1979, J. Fluid
 *     Mech. 91, 1-16); with a filter of width Delta the model tendency is
 *     the term times -Delta^2/12. The same model for momentum,
 *     tau_ij = (Delta^2/12) d_k u_i d_k u_j, is not a term of its own: for
 *     non-divergent flow (u_x = -v_y) G_xy = u_x v_x + u_y v_y =
 *     u_x (v_x - u_y) = zeta Dt / 2 and G_yy - G_xx = v_x^2 - u_y^2 =
 *     zeta Ds, so its curl-divergence is half of curl_div_zeta_deform,
 *     node by node on this grid too (the discrete velocity gradients are
 *     exactly non-divergent). Two equal columns would make every fit's
 *     Gram matrix singular; a coefficients file that names the former term
 *     curl_div_gradu_gradu is read as curl_div_zeta_deform with half the
 *     coefficient (tg_coef_read);
 *   - curl_div_zeta_deform: the curl of the divergence of the trace-free
 *     vorticity-deformation tensor [[-zeta Ds, zeta Dt], [zeta Dt, zeta Ds]]
 *     = 2 (W S - S W), with S and W the symmetric and antisymmetric parts
 *     of the velocity gradient d_j u_i: the commutator of the rotation-rate
 *     and strain-rate tensors, one of the basis tensors of nonlinear
 *     eddy-viscosity models (Pope 1975, J. Fluid Mech. 72, 331-340, from
 *     memory). In two-dimensional non-divergent flow it is twice the
 *     trace-free part of the gradient-model tensor G_ij = d_k u_i d_k u_j
 *     (the isotropic part of G has no curl), so this term is twice
 *     curl_div_gradu_gradu; with the compact differences below the identity
 *     holds on the grid to round-off (tests/unit/test_basis.c), so a fit
 *     should offer only one;
 *   - div_absgradzeta_gradzeta: diffusion of vorticity with a diffusivity
 *     proportional to |grad zeta| (Leith 1996, Physica D 98, 481-491);
 *   - div_strain_gradzeta: diffusion of vorticity with a diffusivity
 *     proportional to the strain rate (Smagorinsky 1963, Mon. Wea. Rev. 91,
 *     99-164).
 *
 * Discretisation (d = dx; every stencil reads one node beyond the active
 * block, whose ring is filled first):
 *   - Laplacian, Arakawa Jacobian, centred first derivatives, div(nu grad f)
 *     and the biharmonic operator are the closure tools (closure.h); lap2_zeta
 *     is the tools' viscosity operator with A2 = 0, A4 = -1, i.e. exactly the
 *     code path of the core's hyperviscosity;
 *   - the Laplacian of zeta or q that enters a further stencil gets a ZERO
 *     ring (in a basin: zero on the walls, the core's biharmonic wall
 *     condition; periodic: the halo);
 *   - velocity gradients come from psi by compact differences,
 *     psi_xx = (psi_E - 2 psi_C + psi_W)/d^2, psi_yy likewise,
 *     psi_xy = (psi_NE - psi_NW - psi_SE + psi_SW)/(4 d^2), and
 *     u_x = -psi_xy, u_y = -psi_yy, v_x = psi_xx, v_y = psi_xy, so that the
 *     discrete divergence u_x + v_y is zero and v_x - u_y is the five-point
 *     Laplacian of psi;
 *   - products that enter a further stencil get an EXTEND ring (in a basin:
 *     zero normal gradient; periodic: the halo);
 *   - divergences are in flux form on the cell faces, with no flux through
 *     a face that touches the ring where the ring is a wall (a mask of ones
 *     on the active nodes with a ZERO ring; common practice, as in the
 *     closure gradient_model): the x-face flux is the average of the two
 *     node values, so away from walls div F = (Fx_E - Fx_W + Fy_N - Fy_S)/(2d),
 *     the centred divergence, and the domain sum of every divergence and
 *     curl-divergence term is zero to round-off in both geometries (the
 *     terms move vorticity or PV about but create no circulation);
 *   - curl div A = (d_xx - d_yy) A_xy + d_xy B with B = A_yy - A_xx is the
 *     divergence of W = (d_x A_xy + d_y B/2, -d_y A_xy + d_x B/2), with
 *     d_x A_xy = (A_E - A_C)/d on the x-faces and d_y B the average of the
 *     centred node values; away from walls this is the compact form
 *     (A_E + A_W - A_N - A_S)/d^2 + (B_NE - B_NW - B_SE + B_SW)/(4 d^2).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "basis.h"
#include "simdclone.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"

enum {
    T_ZETA,
    T_LAP_ZETA,
    T_LAP2_ZETA,
    T_LAP_Q,
    T_LAP2_Q,
    T_JAC_PSI_LAPZETA,
    T_JAC_PSI_LAPQ,
    T_JAC_ZETA_LAPZETA,
    T_DIV_GRADU_GRADZETA,
    T_DIV_GRADU_GRADQ,
    T_CURL_DIV_ZETA_DEFORM,
    T_DIV_ABSGRADZETA_GRADZETA,
    T_DIV_STRAIN_GRADZETA,
    T_N
};

static const tg_basis_term table[T_N] = {
    [T_ZETA] = {"zeta", "zeta", "s-1", "s-1", "relative vorticity (linear damping)"},
    [T_LAP_ZETA] = {"lap_zeta", "lap zeta", "m-2 s-1", "m2 s-1",
                    "Laplacian of vorticity (harmonic viscosity)"},
    [T_LAP2_ZETA] = {"lap2_zeta", "lap lap zeta", "m-4 s-1", "m4 s-1",
                     "bi-Laplacian of vorticity (biharmonic viscosity: coefficient -A4)"},
    [T_LAP_Q] = {"lap_q", "lap q", "m-2 s-1", "m2 s-1", "Laplacian of PV (PV diffusion)"},
    [T_LAP2_Q] = {"lap2_q", "lap lap q", "m-4 s-1", "m4 s-1",
                  "bi-Laplacian of PV (biharmonic PV diffusion: coefficient -K4)"},
    [T_JAC_PSI_LAPZETA] = {"jac_psi_lapzeta", "J(psi, lap zeta)", "m-2 s-2", "m2",
                           "advection of the Laplacian of vorticity"},
    [T_JAC_PSI_LAPQ] = {"jac_psi_lapq", "J(psi, lap q)", "m-2 s-2", "m2",
                        "advection of the Laplacian of PV"},
    [T_JAC_ZETA_LAPZETA] = {"jac_zeta_lapzeta", "J(zeta, lap zeta)", "m-4 s-2", "m4",
                            "Jacobian of vorticity and its Laplacian"},
    [T_DIV_GRADU_GRADZETA] = {"div_gradu_gradzeta",
                              "d_x(u_x zeta_x + u_y zeta_y) + d_y(v_x zeta_x + v_y zeta_y)",
                              "m-2 s-2", "m2",
                              "divergence of the gradient-model vorticity flux"},
    [T_DIV_GRADU_GRADQ] = {"div_gradu_gradq",
                           "d_x(u_x q_x + u_y q_y) + d_y(v_x q_x + v_y q_y)", "m-2 s-2", "m2",
                           "divergence of the gradient-model PV flux"},
    [T_CURL_DIV_ZETA_DEFORM] = {"curl_div_zeta_deform",
                                "(d_xx - d_yy)(zeta Dt) + 2 d_xy (zeta Ds), "
                                "Ds = u_y + v_x, Dt = u_x - v_y",
                                "m-2 s-2", "m2",
                                "curl of the divergence of the vorticity-deformation tensor"},
    [T_DIV_ABSGRADZETA_GRADZETA] = {"div_absgradzeta_gradzeta",
                                    "div(|grad zeta| grad zeta)", "m-3 s-2", "m3",
                                    "vorticity diffusion with diffusivity ~ |grad zeta|"},
    [T_DIV_STRAIN_GRADZETA] = {"div_strain_gradzeta",
                               "div(|S| grad zeta), |S| = sqrt(Ds^2 + Dt^2)", "m-2 s-2", "m2",
                               "vorticity diffusion with diffusivity ~ strain rate"},
};

int tg_basis_count(void)
{
    return T_N;
}

const tg_basis_term *tg_basis_term_at(int i)
{
    return (i >= 0 && i < T_N) ? &table[i] : NULL;
}

int tg_basis_find(const char *name)
{
    for (int i = 0; i < T_N; i++)
        if (!strcmp(table[i].name, name))
            return i;
    return -1;
}

/* ------------------------------------------------------------------ */
/* Evaluation                                                          */
/* ------------------------------------------------------------------ */

struct tg_basis {
    int ns, a0, a1;
    double dx;
    const tg_closure_tools *tools;
    /* ns*ns each: velocity gradients, a scalar's gradient, two product
     * fields, one scratch field and the face mask (ones on the active
     * nodes, ZERO ring). */
    double *ux, *uy, *vx, *vy, *fx, *fy, *A, *B, *w, *mask;
};

void tg_basis_destroy(tg_basis *b)
{
    if (!b)
        return;
    free(b->ux);
    free(b->uy);
    free(b->vx);
    free(b->vy);
    free(b->fx);
    free(b->fy);
    free(b->A);
    free(b->B);
    free(b->w);
    free(b->mask);
    free(b);
}

tg_basis *tg_basis_create(int ns, int a0, int a1, double dx, const tg_closure_tools *tools,
                          tg_status *st)
{
    if (ns < 3 || a0 < 1 || a1 > ns - 1 || a0 >= a1 || !(dx > 0.0) || !tools) {
        tg_fail(st, TG_ERR_INTERNAL,
                "basis: bad grid (ns %d, active %d..%d, dx %g) or no tools", ns, a0, a1 - 1, dx);
        return NULL;
    }
    tg_basis *b = calloc(1, sizeof *b);
    if (!b) {
        tg_fail(st, TG_ERR_NOMEM, "basis: no memory");
        return NULL;
    }
    b->ns = ns;
    b->a0 = a0;
    b->a1 = a1;
    b->dx = dx;
    b->tools = tools;
    const size_t n = (size_t)ns * ns;
    double **arr[] = {&b->ux, &b->uy, &b->vx, &b->vy, &b->fx,
                      &b->fy, &b->A,  &b->B,  &b->w,  &b->mask};
    for (size_t k = 0; k < sizeof arr / sizeof arr[0]; k++) {
        *arr[k] = calloc(n, sizeof(double));
        if (!*arr[k]) {
            tg_fail(st, TG_ERR_NOMEM, "basis: no memory for %zu work arrays of %d x %d",
                    sizeof arr / sizeof arr[0], ns, ns);
            tg_basis_destroy(b);
            return NULL;
        }
    }
    for (int j = a0; j < a1; j++)
        for (int i = a0; i < a1; i++)
            b->mask[(long)j * ns + i] = 1.0;
    tools->fill_ring(tools->ctx, b->mask, TG_RING_ZERO);
    return b;
}

/* The row kernels below are compiled for AVX2 too (simdclone.h); every
 * value is formed element by element, so both copies give the same bits,
 * and rows are shared among threads (each row's values do not depend on
 * which thread forms them). */

/* The velocity gradients of the psi row at c (rows ns apart), into the
 * same row of ux, uy, vx, vy. */
TG_SIMD_CLONES static void velocity_row(const double *restrict c, int ns, double r, double r4,
                                        double *restrict ux, double *restrict uy,
                                        double *restrict vx, double *restrict vy, int a0,
                                        int a1)
{
    const double *n = c + ns, *s = c - ns;
#pragma omp simd
    for (int i = a0; i < a1; i++) {
        const double pxx = r * ((c[i + 1] + c[i - 1]) - 2.0 * c[i]);
        const double pyy = r * ((n[i] + s[i]) - 2.0 * c[i]);
        const double pxy = r4 * ((n[i + 1] - n[i - 1]) - (s[i + 1] - s[i - 1]));
        ux[i] = -pxy;
        uy[i] = -pyy;
        vx[i] = pxx;
        vy[i] = pxy;
    }
}

/* Velocity gradients from psi by compact differences (see the header). */
static void velocity_gradients(const tg_basis *b, const double *psi)
{
    const int ns = b->ns, a0 = b->a0, a1 = b->a1;
    const double r = 1.0 / (b->dx * b->dx), r4 = 0.25 * r;
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long c = (long)j * ns;
        velocity_row(psi + c, ns, r, r4, b->ux + c, b->uy + c, b->vx + c, b->vy + c, a0, a1);
    }
}

/* fx, fy = centred gradient of f (ring filled). */
static void gradient(const tg_basis *b, const double *f)
{
    const tg_closure_tools *t = b->tools;
    t->ddx(t->ctx, f, b->fx);
    t->ddy(t->ctx, f, b->fy);
}

TG_SIMD_CLONES static void flux_div_row(const double *restrict Fx, const double *restrict Fy,
                                        const double *restrict m, int ns, double h,
                                        double *restrict out, int a0, int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++) {
        const double fe = m[i] * m[i + 1] * (Fx[i] + Fx[i + 1]);
        const double fw = m[i] * m[i - 1] * (Fx[i - 1] + Fx[i]);
        const double fn = m[i] * m[i + ns] * (Fy[i] + Fy[i + ns]);
        const double fs = m[i] * m[i - ns] * (Fy[i - ns] + Fy[i]);
        out[i] = h * ((fe - fw) + (fn - fs));
    }
}

/* out = div (Fx, Fy) in flux form: face values are node averages, faces
 * next to a wall (mask 0) carry nothing. Fx, Fy with rings filled. */
static void flux_div(const tg_basis *b, const double *Fx, const double *Fy, double *out)
{
    const int ns = b->ns, a0 = b->a0, a1 = b->a1;
    const double h = 0.5 / b->dx;
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long c = (long)j * ns;
        flux_div_row(Fx + c, Fy + c, b->mask + c, ns, h, out + c, a0, a1);
    }
}

TG_SIMD_CLONES static void curl_div_row(const double *restrict A, const double *restrict Bx,
                                        const double *restrict By, const double *restrict m,
                                        int ns, double r, double *restrict out, int a0, int a1)
{
    const double q4 = 0.25;
#pragma omp simd
    for (int p = a0; p < a1; p++) {
        const int e = p + 1, w = p - 1, n = p + ns, s = p - ns;
        const double We = m[p] * m[e] * (r * (A[e] - A[p]) + q4 * (By[p] + By[e]));
        const double Ww = m[w] * m[p] * (r * (A[p] - A[w]) + q4 * (By[w] + By[p]));
        const double Wn = m[p] * m[n] * (-r * (A[n] - A[p]) + q4 * (Bx[p] + Bx[n]));
        const double Ws = m[s] * m[p] * (-r * (A[p] - A[s]) + q4 * (Bx[s] + Bx[p]));
        out[p] = r * ((We - Ww) + (Wn - Ws));
    }
}

/* out = (d_xx - d_yy) A + d_xy B as the flux-form divergence of
 * W = (d_x A + d_y B / 2, -d_y A + d_x B / 2) (see the header). A and B
 * with rings filled; uses fx, fy for the centred gradient of B. */
static void curl_div(const tg_basis *b, const double *A, const double *B, double *out)
{
    const tg_closure_tools *t = b->tools;
    const int ns = b->ns, a0 = b->a0, a1 = b->a1;
    const double r = 1.0 / b->dx;
    t->ddx(t->ctx, B, b->fx);
    t->ddy(t->ctx, B, b->fy);
    t->fill_ring(t->ctx, b->fx, TG_RING_EXTEND);
    t->fill_ring(t->ctx, b->fy, TG_RING_EXTEND);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long c = (long)j * ns;
        curl_div_row(A + c, b->fx + c, b->fy + c, b->mask + c, ns, r, out + c, a0, a1);
    }
}

TG_SIMD_CLONES static void gradu_grad_row(const double *restrict ux, const double *restrict uy,
                                          const double *restrict vx, const double *restrict vy,
                                          const double *restrict fx, const double *restrict fy,
                                          double *restrict A, double *restrict B, int a0,
                                          int a1)
{
#pragma omp simd
    for (int i = a0; i < a1; i++) {
        A[i] = ux[i] * fx[i] + uy[i] * fy[i];
        B[i] = vx[i] * fx[i] + vy[i] * fy[i];
    }
}

/* out = d_x (u_x f_x + u_y f_y) + d_y (v_x f_x + v_y f_y). */
static void div_gradu_grad(const tg_basis *b, const double *psi, const double *f, double *out)
{
    const tg_closure_tools *t = b->tools;
    const int ns = b->ns, a0 = b->a0, a1 = b->a1;
    velocity_gradients(b, psi);
    gradient(b, f);
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        const long c = (long)j * ns;
        gradu_grad_row(b->ux + c, b->uy + c, b->vx + c, b->vy + c, b->fx + c, b->fy + c,
                       b->A + c, b->B + c, a0, a1);
    }
    t->fill_ring(t->ctx, b->A, TG_RING_EXTEND);
    t->fill_ring(t->ctx, b->B, TG_RING_EXTEND);
    flux_div(b, b->A, b->B, out);
}

/* out = J(a, lap f), lap f with a ZERO ring. */
static void jac_lap(const tg_basis *b, const double *a, const double *f, double *out)
{
    const tg_closure_tools *t = b->tools;
    t->laplacian(t->ctx, f, b->w);
    t->fill_ring(t->ctx, b->w, TG_RING_ZERO);
    t->jacobian(t->ctx, a, b->w, out);
}

tg_code tg_basis_eval(const tg_basis *b, int term, const double *psi, const double *q,
                      const double *zeta, const double *u, const double *v, double *out,
                      tg_status *st)
{
    (void)u; /* see basis.h: the present terms take velocity gradients from psi */
    (void)v;
    if (!b || term < 0 || term >= T_N)
        return tg_fail(st, TG_ERR_INTERNAL, "basis: no term with index %d (there are %d)", term,
                       T_N);
    const tg_closure_tools *t = b->tools;
    const int ns = b->ns, a0 = b->a0, a1 = b->a1;
    switch (term) {
    case T_ZETA:
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++)
                out[(long)j * ns + i] = zeta[(long)j * ns + i];
        break;
    case T_LAP_ZETA:
        t->laplacian(t->ctx, zeta, out);
        break;
    case T_LAP2_ZETA:
        /* A2 lap zeta - A4 lap^2 zeta with A2 = 0, A4 = -1: lap^2 zeta exactly. */
        t->viscosity(t->ctx, zeta, 0.0, -1.0, out);
        break;
    case T_LAP_Q:
        t->laplacian(t->ctx, q, out);
        break;
    case T_LAP2_Q:
        t->laplacian(t->ctx, q, b->w);
        t->fill_ring(t->ctx, b->w, TG_RING_ZERO);
        t->laplacian(t->ctx, b->w, out);
        break;
    case T_JAC_PSI_LAPZETA:
        jac_lap(b, psi, zeta, out);
        break;
    case T_JAC_PSI_LAPQ:
        jac_lap(b, psi, q, out);
        break;
    case T_JAC_ZETA_LAPZETA:
        jac_lap(b, zeta, zeta, out);
        break;
    case T_DIV_GRADU_GRADZETA:
        div_gradu_grad(b, psi, zeta, out);
        break;
    case T_DIV_GRADU_GRADQ:
        div_gradu_grad(b, psi, q, out);
        break;
    case T_CURL_DIV_ZETA_DEFORM:
        velocity_gradients(b, psi);
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                const double ds = b->uy[p] + b->vx[p], dt = b->ux[p] - b->vy[p];
                b->A[p] = zeta[p] * dt;         /* T_xy */
                b->B[p] = 2.0 * zeta[p] * ds;   /* T_yy - T_xx */
            }
        t->fill_ring(t->ctx, b->A, TG_RING_EXTEND);
        t->fill_ring(t->ctx, b->B, TG_RING_EXTEND);
        curl_div(b, b->A, b->B, out);
        break;
    case T_DIV_ABSGRADZETA_GRADZETA:
        gradient(b, zeta);
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                b->w[p] = sqrt(b->fx[p] * b->fx[p] + b->fy[p] * b->fy[p]);
            }
        t->fill_ring(t->ctx, b->w, TG_RING_EXTEND);
        t->div_nu_grad(t->ctx, b->w, zeta, out);
        break;
    case T_DIV_STRAIN_GRADZETA:
        velocity_gradients(b, psi);
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                const double ds = b->uy[p] + b->vx[p], dt = b->ux[p] - b->vy[p];
                b->w[p] = sqrt(ds * ds + dt * dt);
            }
        t->fill_ring(t->ctx, b->w, TG_RING_EXTEND);
        t->div_nu_grad(t->ctx, b->w, zeta, out);
        break;
    default:
        return tg_fail(st, TG_ERR_INTERNAL, "basis: term %d has no evaluation", term);
    }
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* Coefficients files                                                  */
/* ------------------------------------------------------------------ */

void tg_coef_list_free(tg_coef_list *list)
{
    if (!list)
        return;
    free(list->e);
    list->e = NULL;
    list->n = 0;
}

/* Collapses runs of blanks to one space and trims both ends, in place. */
static void squeeze(char *s)
{
    char *w = s;
    int blank = 1;
    for (char *r = s; *r; r++) {
        if (isspace((unsigned char)*r)) {
            if (!blank)
                *w++ = ' ';
            blank = 1;
        } else {
            *w++ = *r;
            blank = 0;
        }
    }
    if (w > s && w[-1] == ' ')
        w--;
    *w = '\0';
}

static int parse_real(const char *s, double *v)
{
    char *end;
    errno = 0;
    *v = strtod(s, &end);
    return s[0] != '\0' && *end == '\0' && errno != ERANGE && isfinite(*v);
}

/* The former name of half of curl_div_zeta_deform (see the header). */
#define RENAMED_TERM "curl_div_gradu_gradu"

/* "lap_zeta, lap2_zeta, ..." into out. */
static void list_names(char *out, size_t n)
{
    out[0] = '\0';
    for (int i = 0; i < T_N; i++) {
        size_t l = strlen(out);
        snprintf(out + l, n - l, "%s%s", i ? ", " : "", table[i].name);
    }
}

/* A comment line (s after its '#'); a units line among the comments must
 * come before the first coefficient and read TG_BASIS_UNITS_LINE. */
static tg_code read_comment(const char *s, const char *units_ref, const tg_coef_list *list,
                            const char *path, int lineno, int *have_units, tg_status *st)
{
    char text[1024];
    snprintf(text, sizeof text, "%s", s);
    squeeze(text);
    if (strncmp(text, "units:", 6) != 0 && strncmp(text, "units :", 7) != 0)
        return TG_OK;
    if (list->n > 0)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s:%d: the units line must come before the first coefficient",
                       path, lineno);
    if (strcmp(text, units_ref) != 0)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s:%d: unsupported units line '# %.200s'; this version reads "
                       "only '%s' (each coefficient in the SI unit of its term's "
                       "coefficient, so that coefficient x term is in s-2)",
                       path, lineno, text, TG_BASIS_UNITS_LINE);
    *have_units = 1;
    return TG_OK;
}

/* The fields 'layer term coefficient [std]' of one line (nt of them, 3 or 4)
 * into e; *renamed tells that the term was the former curl_div_gradu_gradu,
 * read as half of curl_div_zeta_deform. */
static tg_code parse_entry(char *const *tok, int nt, int nlayers, const char *path, int lineno,
                           tg_coef_entry *e, int *renamed, tg_status *st)
{
    /* Layer. */
    if (strcmp(tok[0], "all") != 0) {
        char *end;
        errno = 0;
        long k = strtol(tok[0], &end, 10);
        if (tok[0][0] == '\0' || *end != '\0' || errno == ERANGE || k < 1 || k > nlayers)
            return tg_fail(st, TG_ERR_CONFIG,
                           "%s:%d: layer '%.60s' is not 'all' or a whole number from 1 to %d "
                           "(layers are numbered from the top)",
                           path, lineno, tok[0], nlayers);
        e->layer = (int)k - 1;
    }
    /* Term; the former term curl_div_gradu_gradu is half of
     * curl_div_zeta_deform (the header comment says why). */
    *renamed = !strcmp(tok[1], RENAMED_TERM);
    e->term = *renamed ? T_CURL_DIV_ZETA_DEFORM : tg_basis_find(tok[1]);
    if (e->term < 0) {
        const char *names[T_N];
        for (int i = 0; i < T_N; i++)
            names[i] = table[i].name;
        int sgt = tg_config_suggest(tok[1], names, T_N);
        if (sgt >= 0)
            return tg_fail(st, TG_ERR_CONFIG, "%s:%d: unknown term '%.60s'; did you mean %s?",
                           path, lineno, tok[1], names[sgt]);
        char all[600];
        list_names(all, sizeof all);
        return tg_fail(st, TG_ERR_CONFIG, "%s:%d: unknown term '%.60s'; the terms are: %s",
                       path, lineno, tok[1], all);
    }
    /* Numbers. */
    if (!parse_real(tok[2], &e->mean))
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s:%d: coefficient '%.60s' of %s is not a finite real number", path,
                       lineno, tok[2], table[e->term].name);
    if (nt == 4 && (!parse_real(tok[3], &e->std) || e->std < 0.0))
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s:%d: std '%.60s' of %s is not a finite real number >= 0", path,
                       lineno, tok[3], table[e->term].name);
    if (*renamed) {
        e->mean *= 0.5;
        if (e->std > 0.0)
            e->std *= 0.5;
        tg_log(TG_LOG_INFO, "%s:%d: note: %s is no longer a term of its own (it equals half "
               "of %s on the grid); read as %s with coefficient %.17g", path, lineno,
               RENAMED_TERM, table[e->term].name, table[e->term].name, e->mean);
    }
    return TG_OK;
}

/* Adds e to list (*nalloc entries allocated): the renamed term and its
 * replacement for the same layer add up; any other second line for the same
 * term and an overlapping layer is an error. */
static tg_code add_entry(tg_coef_list *list, int *nalloc, tg_coef_entry e, int renamed,
                         const char *path, int lineno, tg_status *st)
{
    for (int i = 0; i < list->n; i++) {
        tg_coef_entry *o = &list->e[i];
        if (o->term == e.term && o->layer == e.layer &&
            ((renamed && o->renamed == 0) || (!renamed && o->renamed == 1))) {
            o->mean += e.mean;
            o->std = (o->std < 0.0 && e.std < 0.0)
                         ? -1.0
                         : sqrt(fmax(o->std, 0.0) * fmax(o->std, 0.0) +
                                fmax(e.std, 0.0) * fmax(e.std, 0.0));
            o->renamed = 2; /* a third line for the pair is a duplicate */
            return TG_OK;
        }
    }
    e.renamed = renamed;
    for (int i = 0; i < list->n; i++) {
        const tg_coef_entry *o = &list->e[i];
        if (o->term == e.term && (o->layer == e.layer || o->layer < 0 || e.layer < 0)) {
            char which[32];
            if (e.layer < 0)
                snprintf(which, sizeof which, "all layers");
            else
                snprintf(which, sizeof which, "layer %d", e.layer + 1);
            return tg_fail(st, TG_ERR_CONFIG,
                           "%s:%d: %s for %s is already given at line %d", path, lineno,
                           table[e.term].name, which, o->line);
        }
    }
    if (list->n == *nalloc) {
        int nn = *nalloc ? 2 * *nalloc : 16;
        tg_coef_entry *ne = realloc(list->e, sizeof *ne * (size_t)nn);
        if (!ne)
            return tg_fail(st, TG_ERR_NOMEM, "%s:%d: no memory for the coefficients", path,
                           lineno);
        list->e = ne;
        *nalloc = nn;
    }
    list->e[list->n++] = e;
    return TG_OK;
}

/* The reader proper; f is open, list empty, line buffer handled here. */
static tg_code read_lines(FILE *f, const char *path, int nlayers, tg_coef_list *list,
                          tg_status *st)
{
    char *buf = NULL;
    size_t cap = 0;
    int lineno = 0, have_units = 0, nalloc = 0;
    tg_code rc = TG_OK;
    char units_ref[128];
    snprintf(units_ref, sizeof units_ref, "%s", TG_BASIS_UNITS_LINE + 1); /* without '#' */
    squeeze(units_ref);

    while (getline(&buf, &cap, f) >= 0) {
        lineno++;
        char *s = buf;
        while (*s && isspace((unsigned char)*s))
            s++;
        if (*s == '#') {
            rc = read_comment(s + 1, units_ref, list, path, lineno, &have_units, st);
            if (rc != TG_OK)
                break;
            continue;
        }
        char *hash = strchr(s, '#');
        if (hash)
            *hash = '\0';
        /* Fields. */
        char *tok[5];
        int nt = 0;
        char *save = NULL;
        for (char *w = strtok_r(s, " \t\r\n\v\f", &save); w; w = strtok_r(NULL, " \t\r\n\v\f", &save)) {
            if (nt < 5)
                tok[nt] = w;
            nt++;
        }
        if (nt == 0)
            continue;
        if (!have_units) {
            rc = tg_fail(st, TG_ERR_CONFIG,
                         "%s:%d: a coefficient before the units line; the header must contain "
                         "'%s'",
                         path, lineno, TG_BASIS_UNITS_LINE);
            break;
        }
        if (nt < 3 || nt > 4) {
            rc = tg_fail(st, TG_ERR_CONFIG,
                         "%s:%d: expected 'layer term coefficient [std]', got %d field%s", path,
                         lineno, nt, nt == 1 ? "" : "s");
            break;
        }
        tg_coef_entry e = {.layer = -1, .term = -1, .mean = 0.0, .std = -1.0, .line = lineno};
        int renamed = 0;
        if ((rc = parse_entry(tok, nt, nlayers, path, lineno, &e, &renamed, st)) != TG_OK ||
            (rc = add_entry(list, &nalloc, e, renamed, path, lineno, st)) != TG_OK)
            break;
    }
    if (rc == TG_OK && ferror(f))
        rc = tg_fail(st, TG_ERR_CONFIG, "%s: read error after line %d", path, lineno);
    if (rc == TG_OK && !have_units)
        rc = tg_fail(st, TG_ERR_CONFIG, "%s: no units line; the header must contain '%s'", path,
                     TG_BASIS_UNITS_LINE);
    if (rc == TG_OK && list->n == 0)
        rc = tg_fail(st, TG_ERR_CONFIG,
                     "%s: no coefficients (lines 'layer term coefficient [std]')", path);
    free(buf);
    return rc;
}

tg_code tg_coef_read(const char *path, int nlayers, tg_coef_list *list, tg_status *st)
{
    list->n = 0;
    list->e = NULL;
    FILE *f = fopen(path, "r");
    if (!f)
        return tg_fail(st, TG_ERR_CONFIG, "%s: cannot open the coefficients file: %s", path,
                       strerror(errno));
    tg_code rc = read_lines(f, path, nlayers, list, st);
    fclose(f);
    if (rc != TG_OK)
        tg_coef_list_free(list);
    return rc;
}
