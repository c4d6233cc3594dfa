/* fit.c - normal-equation accumulator, the four solvers, skill from the sums
 * and the backward-elimination path (fit.h has the equations and sources).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "fit.h"

#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ */
/* Accumulator                                                         */
/* ------------------------------------------------------------------ */

tg_fit_acc *tg_fit_acc_create(int p, tg_status *st)
{
    if (p < 1 || p > TG_FIT_MAX_TERMS) {
        tg_fail(st, TG_ERR_INTERNAL, "fit: %d columns (1 to %d allowed)", p, TG_FIT_MAX_TERMS);
        return NULL;
    }
    tg_fit_acc *a = calloc(1, sizeof *a);
    if (!a) {
        tg_fail(st, TG_ERR_NOMEM, "fit: no memory for the normal equations");
        return NULL;
    }
    a->p = p;
    a->G = calloc((size_t)p * p, sizeof(double));
    a->cG = calloc((size_t)p * p, sizeof(double));
    a->b = calloc((size_t)p, sizeof(double));
    a->cb = calloc((size_t)p, sizeof(double));
    a->s = calloc((size_t)p, sizeof(double));
    a->cs = calloc((size_t)p, sizeof(double));
    if (!a->G || !a->cG || !a->b || !a->cb || !a->s || !a->cs) {
        tg_fit_acc_destroy(a);
        tg_fail(st, TG_ERR_NOMEM, "fit: no memory for the normal equations");
        return NULL;
    }
    return a;
}

void tg_fit_acc_destroy(tg_fit_acc *a)
{
    if (!a)
        return;
    free(a->G);
    free(a->cG);
    free(a->b);
    free(a->cb);
    free(a->s);
    free(a->cs);
    free(a);
}

void tg_fit_acc_clear(tg_fit_acc *a)
{
    const int p = a->p;
    memset(a->G, 0, sizeof(double) * (size_t)p * p);
    memset(a->b, 0, sizeof(double) * (size_t)p);
    memset(a->s, 0, sizeof(double) * (size_t)p);
    a->tt = a->ts = a->n = 0.0;
}

void tg_fit_acc_add_rows(tg_fit_acc *a, const double *X, const double *t, long nrows)
{
    const int p = a->p;
    memset(a->cG, 0, sizeof(double) * (size_t)p * p);
    memset(a->cb, 0, sizeof(double) * (size_t)p);
    memset(a->cs, 0, sizeof(double) * (size_t)p);
    double ctt = 0.0, cts = 0.0;
    for (long r = 0; r < nrows; r++) {
        const double *x = X + r * p;
        const double tr = t[r];
        for (int i = 0; i < p; i++) {
            const double xi = x[i];
            double *gi = a->cG + (long)i * p;
            for (int j = i; j < p; j++)
                gi[j] += xi * x[j];
            a->cb[i] += xi * tr;
            a->cs[i] += xi;
        }
        ctt += tr * tr;
        cts += tr;
    }
    for (int i = 0; i < p; i++) {
        for (int j = i; j < p; j++) {
            a->G[(long)i * p + j] += a->cG[(long)i * p + j];
            if (j != i)
                a->G[(long)j * p + i] = a->G[(long)i * p + j];
        }
        a->b[i] += a->cb[i];
        a->s[i] += a->cs[i];
    }
    a->tt += ctt;
    a->ts += cts;
    a->n += (double)nrows;
}

void tg_fit_acc_merge(tg_fit_acc *dst, const tg_fit_acc *src)
{
    const int p = dst->p;
    for (long i = 0; i < (long)p * p; i++)
        dst->G[i] += src->G[i];
    for (int i = 0; i < p; i++) {
        dst->b[i] += src->b[i];
        dst->s[i] += src->s[i];
    }
    dst->tt += src->tt;
    dst->ts += src->ts;
    dst->n += src->n;
}

/* ------------------------------------------------------------------ */
/* Solvers                                                             */
/* ------------------------------------------------------------------ */

const char *tg_fit_method_name(tg_fit_method m)
{
    switch (m) {
    case TG_FIT_OLS: return "ols";
    case TG_FIT_RIDGE: return "ridge";
    case TG_FIT_SEQ_THRESHOLD: return "sequential-threshold";
    case TG_FIT_RVM: return "rvm";
    }
    return "?";
}

void tg_fit_settings_default(tg_fit_settings *s)
{
    s->method = TG_FIT_OLS;
    s->ridge = 1e-6;
    s->threshold = 0.05;
    s->alpha_max = 1e8;
    s->max_iter = 1000;
}

/* Standardized problem of all p columns. */
typedef struct {
    int p;
    double Gh[TG_FIT_MAX_TERMS * TG_FIT_MAX_TERMS];
    double bh[TG_FIT_MAX_TERMS];
    double sigma[TG_FIT_MAX_TERMS];
    double tau, n;
} std_problem;

static tg_code standardize(const tg_fit_acc *a, const unsigned char *use,
                           const char *const *names, std_problem *sp, tg_status *st)
{
    const int p = a->p;
    sp->p = p;
    sp->n = a->n;
    if (!(a->n > 0))
        return tg_fail(st, TG_ERR_CONFIG, "fit: no training rows");
    sp->tau = sqrt(a->tt / a->n);
    if (!(sp->tau > 0) || !isfinite(sp->tau))
        return tg_fail(st, TG_ERR_CONFIG, "fit: the target is %s on every training node",
                       sp->tau == 0 ? "zero" : "not finite");
    for (int j = 0; j < p; j++) {
        sp->sigma[j] = sqrt(a->G[(long)j * p + j] / a->n);
        if ((!use || use[j]) && !(sp->sigma[j] > 0 && isfinite(sp->sigma[j])))
            return tg_fail(st, TG_ERR_CONFIG,
                           "fit: term %s is %s on every training node; leave it out (--terms)",
                           names ? names[j] : "?", sp->sigma[j] == 0 ? "zero" : "not finite");
        if (!(sp->sigma[j] > 0))
            sp->sigma[j] = 1.0;
    }
    for (int i = 0; i < p; i++) {
        for (int j = 0; j < p; j++)
            sp->Gh[i * p + j] = a->G[(long)i * p + j] / (a->n * sp->sigma[i] * sp->sigma[j]);
        sp->bh[i] = a->b[i] / (a->n * sp->sigma[i] * sp->tau);
    }
    return TG_OK;
}

/* Solves (Gh_KK + lambda I) x = bh_K on the columns idx[0..m-1]. Rank and
 * condition number from the eigenvalues (LAPACKE_dsyevd); full rank:
 * Cholesky (LAPACKE_dposv); otherwise the pseudo-inverse. */
static tg_code solve_block(const std_problem *sp, const int *idx, int m, double lambda,
                           double *x, int *rank, double *cond, double *null_vec, tg_status *st)
{
    const int p = sp->p;
    double A[TG_FIT_MAX_TERMS * TG_FIT_MAX_TERMS], E[TG_FIT_MAX_TERMS * TG_FIT_MAX_TERMS];
    double w[TG_FIT_MAX_TERMS], rhs[TG_FIT_MAX_TERMS];
    for (int i = 0; i < m; i++) {
        for (int j = 0; j < m; j++)
            A[i * m + j] = sp->Gh[idx[i] * p + idx[j]] + (i == j ? lambda : 0.0);
        rhs[i] = sp->bh[idx[i]];
    }
    memcpy(E, A, sizeof(double) * (size_t)m * m);
    lapack_int info = LAPACKE_dsyevd(LAPACK_ROW_MAJOR, 'V', 'U', m, E, m, w);
    if (info != 0)
        return tg_fail(st, TG_ERR_NUMERIC, "fit: LAPACKE_dsyevd failed (info %d) on the %d x %d "
                       "Gram matrix", (int)info, m, m);
    const double wmax = w[m - 1];
    const double tol = 1e-12 * (wmax > 0 ? wmax : 1.0);
    int r = 0;
    for (int i = 0; i < m; i++)
        r += w[i] > tol;
    *rank = r;
    *cond = (w[0] > 0) ? wmax / w[0] : INFINITY;
    if (null_vec) {
        for (int j = 0; j < sp->p; j++)
            null_vec[j] = 0.0;
        for (int i = 0; i < m; i++)
            null_vec[idx[i]] = E[i * m + 0]; /* eigenvalues ascend */
    }
    if (r == m) {
        memcpy(x, rhs, sizeof(double) * (size_t)m);
        info = LAPACKE_dposv(LAPACK_ROW_MAJOR, 'U', m, 1, A, m, x, 1);
        if (info == 0)
            return TG_OK;
        if (info < 0)
            return tg_fail(st, TG_ERR_NUMERIC, "fit: LAPACKE_dposv failed (info %d)", (int)info);
        /* info > 0: not positive definite in floating point; fall through. */
        *rank = r = m - 1;
    }
    /* Pseudo-inverse: x = V diag(1/w) V^T rhs over the eigenvalues above tol. */
    for (int i = 0; i < m; i++)
        x[i] = 0.0;
    for (int e = 0; e < m; e++) {
        if (!(w[e] > tol))
            continue;
        double d = 0.0;
        for (int i = 0; i < m; i++)
            d += E[i * m + e] * rhs[i];
        d /= w[e];
        for (int i = 0; i < m; i++)
            x[i] += d * E[i * m + e];
    }
    return TG_OK;
}

/* Physical coefficients of the kept columns, zeros elsewhere; a kept
 * column's std (set by rvm, else -1) is left as it is. */
static void finish(const std_problem *sp, tg_fit_result *r)
{
    r->p = sp->p;
    r->tscale = sp->tau;
    r->nkept = 0;
    for (int j = 0; j < sp->p; j++) {
        r->scale[j] = sp->sigma[j];
        if (!r->kept[j]) {
            r->chat[j] = 0.0;
            r->coef[j] = 0.0;
            r->std[j] = -1.0;
            continue;
        }
        r->nkept++;
        r->coef[j] = r->chat[j] * sp->tau / sp->sigma[j];
    }
}

static int kept_index(const unsigned char *kept, int p, int *idx)
{
    int m = 0;
    for (int j = 0; j < p; j++)
        if (kept[j])
            idx[m++] = j;
    return m;
}

static tg_code fit_ls(const std_problem *sp, double lambda, tg_fit_result *r, tg_status *st)
{
    int idx[TG_FIT_MAX_TERMS] = {0};
    double x[TG_FIT_MAX_TERMS];
    const int m = kept_index(r->kept, sp->p, idx);
    tg_code rc = solve_block(sp, idx, m, lambda, x, &r->rank, &r->cond, r->null_vec, st);
    if (rc != TG_OK)
        return rc;
    for (int i = 0; i < m; i++)
        r->chat[idx[i]] = x[i];
    return TG_OK;
}

static tg_code fit_seq_threshold(const std_problem *sp, const tg_fit_settings *s,
                                 tg_fit_result *r, tg_status *st)
{
    tg_code rc;
    for (int it = 0; it < s->max_iter; it++) {
        r->iterations = it + 1;
        if ((rc = fit_ls(sp, s->ridge, r, st)) != TG_OK)
            return rc;
        int changed = 0, left = 0;
        for (int j = 0; j < sp->p; j++) {
            if (!r->kept[j])
                continue;
            if (fabs(r->chat[j]) < s->threshold) {
                r->kept[j] = 0;
                r->chat[j] = 0.0;
                changed = 1;
            } else {
                left++;
            }
        }
        if (left == 0)
            return tg_fail(st, TG_ERR_CONFIG,
                           "fit: --drop-below %g removes every term (the largest standardized "
                           "coefficients are below it); lower --drop-below", s->threshold);
        if (!changed)
            return TG_OK;
    }
    return tg_fail(st, TG_ERR_NUMERIC,
                   "fit: sequential thresholding did not settle in %d iterations", s->max_iter);
}

/* The posterior of the kept terms idx[0..m) (Tipping 2001): Sigma =
 * (beta n Gh + diag alpha)^-1 into Sg (m x m, full; Cholesky, then its
 * inverse) and mu = beta Sigma Phi^T t = beta Sigma n bh into mu. `which`
 * ("" or "final ") goes into the message when the precision matrix is not
 * positive definite. */
static tg_code rvm_posterior(const std_problem *sp, const int *idx, int m, const double *alpha,
                             double beta, double *Sg, double *mu, const char *which,
                             tg_status *st)
{
    const int p = sp->p;
    const double n = sp->n;
    for (int i = 0; i < m; i++)
        for (int k = 0; k < m; k++)
            Sg[i * m + k] = beta * n * sp->Gh[idx[i] * p + idx[k]] + (i == k ? alpha[idx[i]] : 0.0);
    lapack_int info = LAPACKE_dpotrf(LAPACK_ROW_MAJOR, 'U', m, Sg, m);
    if (info == 0)
        info = LAPACKE_dpotri(LAPACK_ROW_MAJOR, 'U', m, Sg, m);
    if (info != 0)
        return tg_fail(st, TG_ERR_NUMERIC,
                       "fit: rvm: the %sposterior precision matrix is not positive definite "
                       "(LAPACKE_dpotrf/dpotri info %d)", which, (int)info);
    for (int i = 0; i < m; i++)
        for (int k = 0; k < i; k++)
            Sg[i * m + k] = Sg[k * m + i];
    for (int i = 0; i < m; i++) {
        double d = 0.0;
        for (int k = 0; k < m; k++)
            d += Sg[i * m + k] * n * sp->bh[idx[k]];
        mu[i] = beta * d;
    }
    return TG_OK;
}

/* Tipping (2001) re-estimation on the standardized problem: Phi^T Phi =
 * n Gh, Phi^T t = n bh, t^T t = n. */
static tg_code fit_rvm(const std_problem *sp, const tg_fit_settings *s, tg_fit_result *r,
                       tg_status *st)
{
    const int p = sp->p;
    const double n = sp->n;
    double alpha[TG_FIT_MAX_TERMS] = {0}, mu[TG_FIT_MAX_TERMS] = {0};
    double Sg[TG_FIT_MAX_TERMS * TG_FIT_MAX_TERMS];
    int idx[TG_FIT_MAX_TERMS] = {0};
    double beta = 10.0; /* noise variance 0.1 of the target's mean square at the start */
    for (int j = 0; j < p; j++)
        alpha[j] = 1.0;
    int m = 0, converged = 0;
    for (int it = 0; it < s->max_iter && !converged; it++) {
        r->iterations = it + 1;
        m = kept_index(r->kept, p, idx);
        if (m == 0)
            return tg_fail(st, TG_ERR_NUMERIC,
                           "fit: the relevance vector machine pruned every term (the target "
                           "looks like noise on these terms)");
        tg_code rc = rvm_posterior(sp, idx, m, alpha, beta, Sg, mu, "", st);
        if (rc != TG_OK)
            return rc;
        /* ||t - Phi mu||^2 = n (1 - 2 mu.bh + mu^T Gh mu) */
        double mb = 0.0, mgm = 0.0, sgamma = 0.0;
        for (int i = 0; i < m; i++) {
            mb += mu[i] * sp->bh[idx[i]];
            for (int k = 0; k < m; k++)
                mgm += mu[i] * sp->Gh[idx[i] * p + idx[k]] * mu[k];
        }
        double rss = n * (1.0 - 2.0 * mb + mgm);
        if (rss < 1e-300)
            rss = 1e-300;
        double change = 0.0;
        int pruned = 0;
        for (int i = 0; i < m; i++) {
            const int j = idx[i];
            const double gamma = 1.0 - alpha[j] * Sg[i * m + i];
            sgamma += gamma;
            double anew = gamma / (mu[i] * mu[i]);
            /* gamma_j <= 0 (round-off once the prior dominates) or a huge
             * alpha: the data do not determine the term; prune it. */
            if (!(anew > 0) || !(anew < s->alpha_max) || !isfinite(anew)) {
                r->kept[j] = 0;
                pruned = 1;
                continue;
            }
            change = fmax(change, fabs(log(anew) - log(alpha[j])));
            alpha[j] = anew;
        }
        beta = (n - sgamma) / rss;
        if (!(beta > 0) || !isfinite(beta))
            return tg_fail(st, TG_ERR_NUMERIC, "fit: rvm: the noise precision became %g", beta);
        converged = !pruned && change < 1e-8;
    }
    if (!converged)
        tg_log(TG_LOG_WARN, "fit: the relevance vector machine did not converge in %d iterations "
               "(the result of the last one is used)", s->max_iter);
    /* Final posterior with the settled alpha and beta. */
    m = kept_index(r->kept, p, idx);
    tg_code rc = rvm_posterior(sp, idx, m, alpha, beta, Sg, mu, "final ", st);
    if (rc != TG_OK)
        return rc;
    for (int i = 0; i < m; i++) {
        r->chat[idx[i]] = mu[i];
        r->std[idx[i]] = sqrt(Sg[i * m + i]) * sp->tau / sp->sigma[idx[i]];
    }
    r->noise_std = sp->tau / sqrt(beta);
    /* Rank and condition number of the kept block, for the report. */
    double x[TG_FIT_MAX_TERMS];
    return solve_block(sp, idx, m, 0.0, x, &r->rank, &r->cond, r->null_vec, st);
}

tg_code tg_fit_solve(const tg_fit_acc *a, const unsigned char *use, const char *const *names,
                     const tg_fit_settings *s, tg_fit_result *r, tg_status *st)
{
    memset(r, 0, sizeof *r);
    std_problem *sp = malloc(sizeof *sp);
    if (!sp)
        return tg_fail(st, TG_ERR_NOMEM, "fit: no memory");
    tg_code rc = standardize(a, use, names, sp, st);
    int m = 0;
    for (int j = 0; j < a->p; j++) {
        r->kept[j] = use ? use[j] : 1;
        r->std[j] = -1.0;
        m += r->kept[j];
    }
    if (rc == TG_OK && m == 0)
        rc = tg_fail(st, TG_ERR_CONFIG, "fit: no terms to fit");
    if (rc == TG_OK) {
        switch (s->method) {
        case TG_FIT_OLS: rc = fit_ls(sp, 0.0, r, st); break;
        case TG_FIT_RIDGE: rc = fit_ls(sp, s->ridge, r, st); break;
        case TG_FIT_SEQ_THRESHOLD: rc = fit_seq_threshold(sp, s, r, st); break;
        case TG_FIT_RVM: rc = fit_rvm(sp, s, r, st); break;
        }
    }
    if (rc == TG_OK)
        finish(sp, r);
    free(sp);
    return rc;
}

/* ------------------------------------------------------------------ */
/* Skill and path                                                      */
/* ------------------------------------------------------------------ */

tg_fit_skill tg_fit_skill_of(const tg_fit_acc *a, const double *c)
{
    const int p = a->p;
    tg_fit_skill k = {NAN, NAN, a->n};
    if (!(a->n > 0))
        return k;
    double cb = 0.0, cs = 0.0, cGc = 0.0;
    for (int i = 0; i < p; i++) {
        cb += c[i] * a->b[i];
        cs += c[i] * a->s[i];
        double d = 0.0;
        for (int j = 0; j < p; j++)
            d += a->G[(long)i * p + j] * c[j];
        cGc += c[i] * d;
    }
    const double sst = a->tt - a->ts * a->ts / a->n;
    const double sse = a->tt - 2.0 * cb + cGc;
    if (sst > 0)
        k.r2 = 1.0 - sse / sst;
    const double spp = cGc - cs * cs / a->n, spt = cb - cs * a->ts / a->n;
    if (sst > 0 && spp > 0)
        k.corr = spt / sqrt(spp * sst);
    return k;
}

/* Training R^2 of the least-squares fit (ridge lambda) on the columns
 * idx[0..m-1]. */
static tg_code set_r2(const tg_fit_acc *a, const std_problem *sp, const int *idx, int m,
                      double lambda, double *r2, tg_status *st)
{
    double x[TG_FIT_MAX_TERMS], coef[TG_FIT_MAX_TERMS] = {0};
    int rank;
    double cond;
    tg_code rc = solve_block(sp, idx, m, lambda, x, &rank, &cond, NULL, st);
    if (rc != TG_OK)
        return rc;
    for (int i = 0; i < m; i++)
        coef[idx[i]] = x[i] * sp->tau / sp->sigma[idx[i]];
    *r2 = tg_fit_skill_of(a, coef).r2;
    return TG_OK;
}

tg_code tg_fit_path_backward(const tg_fit_acc *a, const unsigned char *use, double lambda,
                             tg_fit_path *path, tg_status *st)
{
    memset(path, 0, sizeof *path);
    std_problem *sp = malloc(sizeof *sp);
    if (!sp)
        return tg_fail(st, TG_ERR_NOMEM, "fit: no memory");
    tg_code rc = standardize(a, use, NULL, sp, st);
    const int p = a->p;
    unsigned char kept[TG_FIT_MAX_TERMS];
    int idx[TG_FIT_MAX_TERMS] = {0};
    for (int j = 0; j < p; j++)
        kept[j] = use ? use[j] : 1;
    for (int step = 0; rc == TG_OK; step++) {
        int m = kept_index(kept, p, idx);
        if (m == 0)
            break;
        if ((rc = set_r2(a, sp, idx, m, lambda, &path->r2[step], st)) != TG_OK)
            break;
        path->nterms[step] = m;
        path->dropped[step] = -1;
        path->nsteps = step + 1;
        if (m == 1)
            break;
        /* The column whose removal keeps the highest R^2. */
        int best = -1;
        double best_r2 = -INFINITY;
        for (int d = 0; d < m && rc == TG_OK; d++) {
            int sub[TG_FIT_MAX_TERMS], ms = 0;
            for (int i = 0; i < m; i++)
                if (i != d)
                    sub[ms++] = idx[i];
            double r2;
            if ((rc = set_r2(a, sp, sub, ms, lambda, &r2, st)) != TG_OK)
                break;
            if (r2 > best_r2) {
                best_r2 = r2;
                best = idx[d];
            }
        }
        if (rc != TG_OK || best < 0)
            break;
        path->dropped[step] = best;
        kept[best] = 0;
    }
    free(sp);
    return rc;
}
