/* vet_linear.c - the linear check of `twingyre vet` (vet.h): Arnoldi
 * iteration on finite-difference Jacobian-vector products of a closure's
 * PV tendency, and the stability region of three-stage third-order
 * Runge-Kutta along a ray.
 *
 * The operator. T(q) is the summed PV tendency of the model's closure
 * components on the state derived from q by the model's inversion
 * (tg_model_derive): psi, zeta and the rings follow from q exactly as in a
 * run. The state vector is q on the active nodes of every layer. Its
 * Jacobian acts on v by the central difference
 *     J v ~ [T(q0 + e v) - T(q0 - e v)] / (2 e),
 *     e = sqrt(eps) * max(rms(q0 - mean), 1e-2 |f0|) / rms(v),
 * the Jacobian-free perturbation of Knoll & Keyes 2004 (J. Comput. Phys.
 * 193, 357-397, section 2.2; the form with a typical size of the state
 * instead of 1 + |u| is ours, because q is dimensional, s-1; the floor
 * 1e-2 |f0| is the vorticity of a Rossby number of 0.01, for a state at
 * rest with zero PV). eps is the relative rounding error of the tendency:
 * DBL_EPSILON, or the largest a component declares (closure.h, precision;
 * FLT_EPSILON for a network evaluated in single precision), since the
 * step must stay well above the function's own rounding (Knoll & Keyes
 * 2004, section 2.2, take the square root of the relative error in the
 * function's evaluation; from memory): with DBL_EPSILON a single-precision
 * network's differences were rounding noise, and its growth rate around the
 * demo's reference state read 0.022 day-1 where the same network in double
 * precision gave 0.0016. For a linear closure the difference is exact up to
 * round-off. Stochastic components are evaluated with the noise frozen: the
 * two evaluations use the same step and stage and no per-step hook runs
 * between them, so the difference sees only the state dependence.
 *
 * Arnoldi (Saad 2011, Numerical Methods for Large Eigenvalue Problems, 2nd
 * ed., section 6.2, algorithm 6.2, modified Gram-Schmidt), with a second
 * orthogonalization pass ("twice is enough": Giraud, Langou & Rozloznik
 * 2005, Comput. Math. Appl. 50, 1069-1075), from a Philox normal start
 * vector. The eigenvalues of the k x k upper Hessenberg matrix (the Ritz
 * values) come from LAPACKE_dhseqr.
 *
 * RK3 region. The stability function of the three-stage third-order
 * Runge-Kutta scheme (SSP-RK3 of stepper.h among them) applied to
 * dq/dt = lambda q is R(z) = 1 + z + z^2/2 + z^3/6, z = lambda dt; the
 * scheme is stable for |R(z)| <= 1 (Durran 2010, Numerical Methods for
 * Fluid Dynamics, 2nd ed., section 2.3, from memory for the section).
 * Along the ray z = t e^{i theta} the largest stable t is found by a scan
 * in steps of 1e-3 to the first t with |R| > 1, then bisection.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "vet.h"

#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "constants.h"
#include "rng.h"

/* |R(z)|^2 - 1 for z = t e^{i theta}. */
static double rk3_excess(double t, double theta)
{
    const double x = t * cos(theta), y = t * sin(theta);
    /* z^2 and z^3 */
    const double x2 = x * x - y * y, y2 = 2.0 * x * y;
    const double x3 = x2 * x - y2 * y, y3 = x2 * y + y2 * x;
    const double re = 1.0 + x + 0.5 * x2 + x3 / 6.0;
    const double im = y + 0.5 * y2 + y3 / 6.0;
    return re * re + im * im - 1.0;
}

double tg_rk3_ray_limit(double theta)
{
    const double h = 1e-3, tmax = 4.0;
    /* Round-off allowance on |R|^2 near the imaginary axis, where |R| = 1
     * to fourth order in t. */
    const double tol = 1e-14;
    double lo = 0.0, hi = -1.0;
    for (double t = h; t <= tmax + 0.5 * h; t += h) {
        if (rk3_excess(t, theta) > tol) {
            hi = t;
            break;
        }
        lo = t;
    }
    if (hi < 0.0)
        return tmax;
    for (int it = 0; it < 60; it++) {
        const double mid = 0.5 * (lo + hi);
        if (rk3_excess(mid, theta) > tol)
            hi = mid;
        else
            lo = mid;
    }
    return lo;
}

double tg_vet_step_limit(const double *re, const double *im, int n)
{
    double best = INFINITY;
    for (int i = 0; i < n; i++) {
        const double mag = hypot(re[i], im[i]);
        if (!(mag > 0.0))
            continue;
        /* Values in the right half-plane grow at any step: the growth rate
         * reports them. Values within round-off of the imaginary axis
         * count as on it. */
        if (re[i] > 1e-8 * mag)
            continue;
        double theta = atan2(im[i], fmin(re[i], 0.0));
        if (fabs(theta) < 0.5 * TG_PI)
            theta = theta < 0 ? -0.5 * TG_PI : 0.5 * TG_PI;
        const double h = tg_rk3_ray_limit(theta) / mag;
        if (h < best)
            best = h;
    }
    return best;
}

/* ------------------------------------------------------------------ */
/* Jacobian-vector products                                            */
/* ------------------------------------------------------------------ */

typedef struct {
    tg_model *m;
    const double *q0;   /* stored layout */
    int nl, na, a0;
    long n;             /* vector length nl * na * na */
    double eps;
    double *tp, *tm;    /* n each: T(q0 + e v), T(q0 - e v) */
} jvp_ctx;

/* Vector index of node (i, j) of layer k. */
static inline long vidx(const jvp_ctx *c, int k, int i, int j)
{
    return ((long)k * c->na + (j - c->a0)) * c->na + (i - c->a0);
}

/* out (n) = T(q0 + s v) on the active nodes. */
static tg_code eval_at(jvp_ctx *c, const double *v, double s, double *out, tg_status *st)
{
    tg_model *m = c->m;
    const int ns = m->geom->ns, a1 = c->a0 + c->na;
    memcpy(m->q, c->q0, sizeof(double) * (size_t)(m->nl * m->npl));
    if (v)
        for (int k = 0; k < c->nl; k++)
            for (int j = c->a0; j < a1; j++)
                for (int i = c->a0; i < a1; i++)
                    m->q[k * m->npl + (long)j * ns + i] += s * v[vidx(c, k, i, j)];
    tg_model_derive(m);
    tg_closure_input in = {.psi = m->psi, .q = m->q, .zeta = m->zeta, .wall = m->wall,
                           .step = m->step, .stage = 0};
    tg_code rc = tg_closure_host_eval(m->closures, &in, st);
    if (rc != TG_OK)
        return rc;
    memset(out, 0, sizeof(double) * (size_t)c->n);
    const int nc = tg_closure_host_count(m->closures);
    for (int ci = 0; ci < nc; ci++) {
        const double *t = tg_closure_host_tend(m->closures, ci);
        for (int k = 0; k < c->nl; k++)
            for (int j = c->a0; j < a1; j++)
                for (int i = c->a0; i < a1; i++)
                    out[vidx(c, k, i, j)] += t[k * m->npl + (long)j * ns + i];
    }
    return TG_OK;
}

static tg_code jvp(jvp_ctx *c, const double *v, double *w, tg_status *st)
{
    tg_code rc = eval_at(c, v, c->eps, c->tp, st);
    if (rc == TG_OK)
        rc = eval_at(c, v, -c->eps, c->tm, st);
    if (rc != TG_OK)
        return rc;
    const double r = 1.0 / (2.0 * c->eps);
    for (long p = 0; p < c->n; p++)
        w[p] = (c->tp[p] - c->tm[p]) * r;
    return TG_OK;
}

static double dot(const double *a, const double *b, long n)
{
    double s = 0.0;
    for (long p = 0; p < n; p++)
        s += a[p] * b[p];
    return s;
}

/* ------------------------------------------------------------------ */
/* Arnoldi                                                             */
/* ------------------------------------------------------------------ */

typedef struct {
    double re, im, mag;
} ritz;

static int by_magnitude(const void *a, const void *b)
{
    const ritz *x = a, *y = b;
    if (x->mag != y->mag)
        return x->mag < y->mag ? 1 : -1;
    if (x->re != y->re)
        return x->re < y->re ? 1 : -1;
    return (x->im < y->im) - (x->im > y->im);
}

/* Perturbation size of the finite differences from q0's spread about its
 * mean (the planetary part of a basin's q is a linear field, counted like
 * any other); n values on the active nodes. */
static double perturbation_size(const tg_model *m, const double *q0, long n)
{
    const tg_geometry *g = m->geom;
    double s = 0.0, s2 = 0.0;
    const int a1 = g->a1;
    for (int k = 0; k < m->nl; k++)
        for (int j = g->a0; j < a1; j++)
            for (int i = g->a0; i < a1; i++) {
                const double x = q0[k * m->npl + (long)j * g->ns + i];
                s += x;
                s2 += x * x;
            }
    const double mean = s / n;
    const double rms = sqrt(fmax(s2 / n - mean * mean, 0.0));
    const double floor = 1e-2 * fabs(m->cfg.coriolis_f0_per_s);
    /* v has unit 2-norm: rms(v) = 1 / sqrt(n). */
    return sqrt(tg_closure_host_precision(m->closures)) * fmax(rms, floor) * sqrt((double)n);
}

/* The start vector v0 (n values): Philox normal numbers, normalized. */
static void start_vector(double *v0, long n, uint64_t seed)
{
    for (long p = 0; p < n; p += 2) {
        double z[2];
        tg_normal2(seed, 0x7e7u, (uint32_t)(p >> 32), (uint32_t)p, z);
        v0[p] = z[0];
        if (p + 1 < n)
            v0[p + 1] = z[1];
    }
    const double nv = sqrt(dot(v0, v0, n));
    for (long p = 0; p < n; p++)
        v0[p] /= nv;
}

/* kdim steps of Arnoldi iteration (header comment: two Gram-Schmidt passes)
 * on the Jacobian-vector products from the unit start vector in V:
 * the basis in V (c->n x (kdim + 1)), the Hessenberg matrix in H
 * (column-major, ld kdim + 1). Stops early at an invariant subspace; *kused
 * receives the steps taken and *hnorm the largest |H| entry. */
static tg_code arnoldi(jvp_ctx *c, int kdim, double *V, double *w, double *H, int *kused,
                       double *hnorm, tg_status *st)
{
    const int k1 = kdim + 1;
    tg_code rc;
    for (int j = 0; j < kdim; j++) {
        if ((rc = jvp(c, V + (size_t)j * c->n, w, st)) != TG_OK)
            return rc;
        double wn0 = sqrt(dot(w, w, c->n));
        if (!isfinite(wn0))
            return tg_fail(st, TG_ERR_NUMERIC,
                           "linear check: the closure's tendency is not finite near the state "
                           "(Arnoldi step %d)",
                           j + 1);
        for (int pass = 0; pass < 2; pass++)
            for (int i = 0; i <= j; i++) {
                const double *vi = V + (size_t)i * c->n;
                const double hij = dot(vi, w, c->n);
                H[(size_t)j * k1 + i] += hij;
                for (long p = 0; p < c->n; p++)
                    w[p] -= hij * vi[p];
            }
        const double hn = sqrt(dot(w, w, c->n));
        H[(size_t)j * k1 + j + 1] = hn;
        for (int i = 0; i <= j + 1; i++)
            *hnorm = fmax(*hnorm, fabs(H[(size_t)j * k1 + i]));
        /* An invariant subspace (or a zero operator): stop here. */
        if (hn <= 1e-12 * *hnorm || hn == 0.0) {
            *kused = j + 1;
            break;
        }
        double *vn = V + (size_t)(j + 1) * c->n;
        for (long p = 0; p < c->n; p++)
            vn[p] = w[p] / hn;
    }
    return TG_OK;
}

/* The Ritz values: eigenvalues of the leading kused x kused block of H (ld
 * k1) by LAPACKE_dhseqr (all zero when H is), in rz by decreasing magnitude;
 * Hs, wr and wi are work arrays of kused^2, kused and kused values. */
static tg_code ritz_values(const double *H, int k1, int kused, double hnorm, double *Hs, double *wr,
                           double *wi, ritz *rz, tg_status *st)
{
    for (int jc = 0; jc < kused; jc++)
        for (int i = 0; i < kused; i++)
            Hs[(size_t)jc * kused + i] = H[(size_t)jc * k1 + i];
    if (hnorm == 0.0) {
        for (int i = 0; i < kused; i++)
            wr[i] = wi[i] = 0.0;
    } else {
        double zdummy = 0.0;
        lapack_int info = LAPACKE_dhseqr(LAPACK_COL_MAJOR, 'E', 'N', kused, 1, kused, Hs, kused,
                                         wr, wi, &zdummy, 1);
        if (info != 0)
            return tg_fail(st, TG_ERR_NUMERIC,
                           "linear check: LAPACKE_dhseqr failed on the %d x %d Hessenberg matrix "
                           "(info = %d)",
                           kused, kused, (int)info);
    }
    for (int i = 0; i < kused; i++)
        rz[i] = (ritz){wr[i], wi[i], hypot(wr[i], wi[i])};
    qsort(rz, (size_t)kused, sizeof *rz, by_magnitude);
    return TG_OK;
}

tg_code tg_vet_linearize(tg_model *m, const double *q0, int kdim, uint64_t seed,
                         tg_vet_linear *out, tg_status *st)
{
    memset(out, 0, sizeof *out);
    if (kdim < 1 || kdim > TG_VET_MAX_KRYLOV)
        return tg_fail(st, TG_ERR_INTERNAL, "linear check: Krylov dimension %d out of 1..%d",
                       kdim, TG_VET_MAX_KRYLOV);
    const tg_geometry *g = m->geom;
    jvp_ctx c = {.m = m, .q0 = q0, .nl = m->nl, .na = g->a1 - g->a0, .a0 = g->a0};
    c.n = (long)c.nl * c.na * c.na;
    if (kdim > c.n)
        kdim = (int)c.n;
    const int k1 = kdim + 1;
    double *V = malloc(sizeof(double) * (size_t)c.n * (size_t)k1);
    double *w = malloc(sizeof(double) * (size_t)c.n);
    c.tp = malloc(sizeof(double) * (size_t)c.n);
    c.tm = malloc(sizeof(double) * (size_t)c.n);
    double *H = calloc((size_t)k1 * (size_t)kdim, sizeof(double)); /* column-major, ld k1 */
    double *Hs = malloc(sizeof(double) * (size_t)kdim * (size_t)kdim);
    double *wr = malloc(sizeof(double) * (size_t)kdim), *wi = malloc(sizeof(double) * (size_t)kdim);
    ritz *rz = malloc(sizeof(ritz) * (size_t)kdim);
    tg_code rc = TG_OK;
    if (!V || !w || !c.tp || !c.tm || !H || !Hs || !wr || !wi || !rz) {
        rc = tg_fail(st, TG_ERR_NOMEM, "linear check: no memory for %d Krylov vectors of %ld",
                     k1, c.n);
        goto done;
    }

    c.eps = perturbation_size(m, q0, c.n);
    out->epsilon = c.eps;
    start_vector(V, c.n, seed);
    int kused = kdim;
    double hnorm = 0.0;
    if ((rc = arnoldi(&c, kdim, V, w, H, &kused, &hnorm, st)) != TG_OK ||
        (rc = ritz_values(H, k1, kused, hnorm, Hs, wr, wi, rz, st)) != TG_OK)
        goto done;
    out->n = kused;
    out->growth_rate = -INFINITY;
    for (int i = 0; i < kused; i++) {
        out->re[i] = rz[i].re;
        out->im[i] = rz[i].im;
        out->growth_rate = fmax(out->growth_rate, rz[i].re);
    }
    out->largest_magnitude = rz[0].mag;
    out->step_limit = tg_vet_step_limit(out->re, out->im, kused);

done:
    /* Leave the model at q0. */
    memcpy(m->q, q0, sizeof(double) * (size_t)(m->nl * m->npl));
    tg_model_derive(m);
    free(V);
    free(w);
    free(c.tp);
    free(c.tm);
    free(H);
    free(Hs);
    free(wr);
    free(wi);
    free(rz);
    return rc;
}
