/* ar1_noise.c - spatially correlated AR(1) random fields (ar1_noise.h).
 *
 * Equations and sources are in ar1_noise.h. Everything is allocated in
 * tg_ar1_create; the per-step work allocates nothing. Loops are
 * OpenMP-parallel over rows and every value is a function of its own
 * counters; the one domain sum (the mean) goes row by row into a buffer and
 * is added in row order, so results do not depend on the thread count.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "ar1_noise.h"

#include <math.h>
#include <stdlib.h>

#include "rng.h"

/* XORed into the key for draws that restart a field at a given step. */
#define AR1_RESYNC_KEY 0x726573796e63ULL /* "resync" */

/* Layout version of the saved state. */
#define AR1_STATE_FORMAT 1.0
#define AR1_HEADER 4

struct tg_ar1 {
    int nf;              /* number of fields */
    int ns, a0, a1, n;   /* stored side, active range, active nodes per side */
    long npl;            /* ns * ns */
    long nact;           /* n * n */
    int rowpairs;        /* normal pairs per row, ceil(n / 2) */
    uint32_t npairs;     /* normal pairs per field, n * rowpairs */
    uint32_t member;
    uint64_t key;
    double sigma;        /* stationary standard deviation */
    double tau;          /* decorrelation time, s (0: white in time) */
    double phi_dt;       /* the step phi and innov were made for, s */
    double phi;          /* lag-one autocorrelation exp(-dt/tau) of that step */
    double innov;        /* sqrt(1 - phi^2) sigma */
    double width;        /* Gaussian filter width, m */
    double gain;         /* 1 / standard deviation of the filtered white field */
    int remove_mean;
    long step;           /* the step the fields belong to */
    double *xi;          /* nf * npl */
    double *work;        /* npl */
    double *rowsum;      /* ns */
};

/* Smoothed unit-variance noise for field f keyed by (key, step) into a->work. */
static void draw_eta(tg_ar1 *a, const tg_closure_tools *t, uint64_t key, long step, int f)
{
    const int ns = a->ns, a0 = a->a0, a1 = a->a1, n = a->n;
    const int rp = a->rowpairs;
    const uint32_t base = (uint32_t)f * a->npairs, member = a->member;
    const uint32_t ustep = (uint32_t)step;
    double *w = a->work;
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++) {
        double *row = w + (long)j * ns + a0;
        const uint32_t rbase = base + (uint32_t)(j - a0) * (uint32_t)rp;
        for (int h = 0; h < rp; h++) {
            double z[2];
            tg_normal2(key, member, ustep, rbase + (uint32_t)h, z);
            row[2 * h] = z[0];
            if (2 * h + 1 < n)
                row[2 * h + 1] = z[1];
        }
    }
    t->filter_gaussian(t->ctx, w, a->width);
    double mean = 0.0;
    if (a->remove_mean) {
        double *rs = a->rowsum;
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++) {
            double s = 0.0;
            for (int i = a0; i < a1; i++)
                s += w[(long)j * ns + i];
            rs[j] = s;
        }
        double s = 0.0;
        for (int j = a0; j < a1; j++)
            s += rs[j];
        mean = s / (double)a->nact;
    }
    const double gain = a->gain;
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++)
        for (int i = a0; i < a1; i++) {
            const long p = (long)j * ns + i;
            w[p] = gain * (w[p] - mean);
        }
}

/* xi_f = c_old * xi_f + c_new * work on the active nodes. */
static void combine(tg_ar1 *a, int f, double c_old, double c_new)
{
    const int ns = a->ns, a0 = a->a0, a1 = a->a1;
    double *x = a->xi + (long)f * a->npl;
    const double *w = a->work;
#pragma omp parallel for schedule(static)
    for (int j = a0; j < a1; j++)
        for (int i = a0; i < a1; i++) {
            const long p = (long)j * ns + i;
            x[p] = c_old * x[p] + c_new * w[p];
        }
}

/* phi = exp(-dt/tau) and the innovation amplitude sqrt(1 - phi^2) sigma of
 * a step dt: the exact transition of the Ornstein-Uhlenbeck process over dt
 * (Gardiner, Handbook of Stochastic Methods, section 4.4.4; from memory),
 * so the stationary variance stays sigma^2 however the steps vary. */
static void set_step(tg_ar1 *a, double dt)
{
    a->phi_dt = dt;
    a->phi = a->tau > 0.0 ? exp(-dt / a->tau) : 0.0;
    a->innov = sqrt(1.0 - a->phi * a->phi) * a->sigma;
}

void tg_ar1_destroy(tg_ar1 *a)
{
    if (!a)
        return;
    free(a->xi);
    free(a->work);
    free(a->rowsum);
    free(a);
}

/* Exact variance of the filtered (and mean-free) white field at the
 * central active node: |K (e_c - m)|^2 (ar1_noise.h); uses a->work. */
static double central_variance(tg_ar1 *a, const tg_closure_tools *t)
{
    const int ns = a->ns, a0 = a->a0, a1 = a->a1, c = a0 + a->n / 2;
    const double m = a->remove_mean ? 1.0 / (double)a->nact : 0.0;
    for (int j = a0; j < a1; j++)
        for (int i = a0; i < a1; i++)
            a->work[(long)j * ns + i] = -m;
    a->work[(long)c * ns + c] += 1.0;
    t->filter_gaussian(t->ctx, a->work, a->width);
    double var = 0.0;
    for (int j = a0; j < a1; j++)
        for (int i = a0; i < a1; i++) {
            const double v = a->work[(long)j * ns + i];
            var += v * v;
        }
    return var;
}

tg_code tg_ar1_create(const tg_closure_setup *s, int nfields, double sigma, double tau_s,
                      double ell_m, int remove_mean, uint64_t key, tg_ar1 **out, tg_status *st)
{
    *out = NULL;
    if (nfields < 1 || !(sigma >= 0.0) || !(tau_s >= 0.0) || !(ell_m >= 0.0) || !(s->dt > 0.0))
        return tg_fail(st, TG_ERR_INTERNAL,
                       "random fields: bad set-up (fields %d, amplitude %g, time %g s, length "
                       "%g m, step %g s)",
                       nfields, sigma, tau_s, ell_m, s->dt);
    const long n = s->a1 - s->a0;
    const long nact = n * n;
    const uint64_t npairs = (uint64_t)n * (uint64_t)((n + 1) / 2);
    if (n < 1 || (uint64_t)nfields * npairs > UINT64_C(4294967296))
        return tg_fail(st, TG_ERR_CONFIG,
                       "random fields: %d fields of %ld x %ld nodes exceed the 2^32 counters of "
                       "the random number generator",
                       nfields, n, n);
    tg_ar1 *a = calloc(1, sizeof *a);
    if (!a)
        return tg_fail(st, TG_ERR_NOMEM, "random fields: no memory");
    a->nf = nfields;
    a->ns = s->ns;
    a->a0 = s->a0;
    a->a1 = s->a1;
    a->n = (int)n;
    a->npl = (long)s->ns * s->ns;
    a->nact = nact;
    a->rowpairs = (int)((n + 1) / 2);
    a->npairs = (uint32_t)npairs;
    a->member = (uint32_t)s->member;
    a->key = key;
    a->sigma = sigma;
    a->tau = tau_s;
    set_step(a, s->dt);
    /* Transfer exp(-K^2 w^2/24) squared is exp(-K^2 w^2/12), the spectrum of
     * the filtered white noise; its 2-D inverse Fourier transform is
     * proportional to exp(-3 r^2/w^2) = exp(-r^2/(2 ell^2)) for w^2 = 6 ell^2. */
    a->width = sqrt(6.0) * ell_m;
    a->remove_mean = remove_mean != 0;
    a->xi = calloc((size_t)nfields * (size_t)a->npl, sizeof(double));
    a->work = calloc((size_t)a->npl, sizeof(double));
    a->rowsum = calloc((size_t)a->ns, sizeof(double));
    if (!a->xi || !a->work || !a->rowsum) {
        tg_ar1_destroy(a);
        return tg_fail(st, TG_ERR_NOMEM, "random fields: no memory for %d fields of %d x %d",
                       nfields, s->ns, s->ns);
    }

    const double var = central_variance(a, s->tools);
    if (!(var > 0.0) || !isfinite(var)) {
        tg_ar1_destroy(a);
        return tg_fail(st, TG_ERR_CONFIG,
                       "random fields: the smoothed noise has variance %g (correlation length "
                       "%g km on a %ld x %ld grid); choose a shorter correlation length",
                       var, ell_m / 1e3, n, n);
    }
    a->gain = 1.0 / sqrt(var);

    /* xi^0 from the stationary distribution, keyed by step 0. */
    for (int f = 0; f < nfields; f++) {
        draw_eta(a, s->tools, a->key, 0, f);
        combine(a, f, 0.0, sigma);
    }
    a->step = 0;
    *out = a;
    return TG_OK;
}

void tg_ar1_advance(tg_ar1 *a, const tg_closure_tools *t, long step, double dt)
{
    if (dt != a->phi_dt)
        set_step(a, dt);
    for (int f = 0; f < a->nf; f++) {
        draw_eta(a, t, a->key, step, f);
        combine(a, f, a->phi, a->innov);
    }
    a->step = step;
}

int tg_ar1_sync(tg_ar1 *a, const tg_closure_tools *t, long step, const char *who)
{
    if (a->step == step)
        return 0;
    tg_log(TG_LOG_WARN,
           "%s: its random field belongs to step %ld but the model is at step %ld (a checkpoint "
           "without the closure's state?); drawing a fresh field for step %ld",
           who, a->step, step, step);
    for (int f = 0; f < a->nf; f++) {
        draw_eta(a, t, a->key ^ AR1_RESYNC_KEY, step, f);
        combine(a, f, 0.0, a->sigma);
    }
    a->step = step;
    return 1;
}

const double *tg_ar1_field(const tg_ar1 *a, int f)
{
    return a->xi + (long)f * a->npl;
}

long tg_ar1_step(const tg_ar1 *a)
{
    return a->step;
}

double tg_ar1_phi(const tg_ar1 *a)
{
    return a->phi;
}

size_t tg_ar1_state_size(const tg_ar1 *a)
{
    return AR1_HEADER + (size_t)a->nf * (size_t)a->nact;
}

void tg_ar1_state_save(const tg_ar1 *a, double *buf)
{
    buf[0] = AR1_STATE_FORMAT;
    buf[1] = a->nf;
    buf[2] = a->n;
    buf[3] = (double)a->step;
    double *b = buf + AR1_HEADER;
    for (int f = 0; f < a->nf; f++) {
        const double *x = tg_ar1_field(a, f);
        for (int j = a->a0; j < a->a1; j++)
            for (int i = a->a0; i < a->a1; i++)
                *b++ = x[(long)j * a->ns + i];
    }
}

tg_code tg_ar1_state_load(tg_ar1 *a, const double *buf, size_t n, tg_status *st)
{
    if (n != tg_ar1_state_size(a) || buf[0] != AR1_STATE_FORMAT || buf[1] != a->nf ||
        buf[2] != a->n || !(buf[3] >= 0.0) || buf[3] != floor(buf[3]))
        return tg_fail(st, TG_ERR_CONFIG,
                       "saved random fields do not fit this run: expected format %g with %d "
                       "fields of %d x %d nodes (%zu values), got %zu values%s",
                       AR1_STATE_FORMAT, a->nf, a->n, a->n, tg_ar1_state_size(a), n,
                       n == tg_ar1_state_size(a) ? " with a different header" : "");
    const double *b = buf + AR1_HEADER;
    for (long k = 0; k < (long)a->nf * a->nact; k++)
        if (!isfinite(b[k]))
            return tg_fail(st, TG_ERR_CONFIG, "saved random fields hold a non-finite value");
    a->step = (long)buf[3];
    for (int f = 0; f < a->nf; f++) {
        double *x = a->xi + (long)f * a->npl;
        for (int j = a->a0; j < a->a1; j++)
            for (int i = a->a0; i < a->a1; i++)
                x[(long)j * a->ns + i] = *b++;
    }
    return TG_OK;
}
