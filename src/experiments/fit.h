/* fit.h - linear regression of a target on basis-term columns from the
 * accumulated normal equations: the numerical core of `twingyre fit`.
 *
 * The data never need to be held whole: rows (x_1..x_p, t) are folded in
 * chunk by chunk into the sums
 *     G = X^T X (p x p),  b = X^T t,  s = X^T 1,  tt = t^T t,  ts = 1^T t,  n
 * and every solver, skill score and path below works from these alone.
 *
 * Standardization: column j is divided by its root-mean-square
 * sigma_j = sqrt(G_jj / n) and the target by tau = sqrt(tt / n), without
 * centring: the library has no intercept column, and an uncentred scaling
 * keeps exactly the model that the closure evaluates (c_j x_j summed).
 * Standardized coefficients chat_j relate to physical ones by
 * c_j = chat_j tau / sigma_j. Thresholds and ridge parameters act on the
 * standardized problem, where the Gram matrix Ghat = G / (n sigma sigma^T)
 * has unit diagonal.
 *
 * Methods (all on Ghat, bhat = b / (n sigma tau)):
 *   ols    Ghat chat = bhat by Cholesky (LAPACKE_dposv) after an eigenvalue
 *          check (LAPACKE_dsyevd) of the rank; a rank-deficient Gram matrix
 *          is reported and solved by the pseudo-inverse (eigenvalues below
 *          1e-12 of the largest dropped).
 *   ridge  (Ghat + lambda I) chat = bhat (Hoerl & Kennard 1970,
 *          Technometrics 12, 55-67), lambda dimensionless.
 *   sequential-threshold  sequentially thresholded least squares
 *          (Brunton, Proctor & Kutz 2016, Proc. Natl. Acad. Sci. 113,
 *          3932-3937, the algorithm of their Methods section): solve, set
 *          every |chat_j| < threshold (--drop-below) to zero, solve again
 *          on the remaining columns, until the set stops changing (ridge
 *          lambda is used in the inner solves when given).
 *   rvm    sparse Bayesian regression, the relevance vector machine
 *          (Tipping 2001, J. Mach. Learn. Res. 1, 211-244, section 2;
 *          the section from memory): prior w_j ~ N(0, 1/alpha_j), noise precision beta;
 *            Sigma = (beta Phi^T Phi + diag(alpha))^-1,  mu = beta Sigma Phi^T t
 *            gamma_j = 1 - alpha_j Sigma_jj,  alpha_j <- gamma_j / mu_j^2,
 *            beta <- (N - sum gamma_j) / ||t - Phi mu||^2
 *          (the posterior, then the re-estimation of the hyperparameters
 *          by type-II maximum likelihood), all from the standardized Gram
 *          matrix; a column whose alpha exceeds
 *          alpha_max is pruned. The posterior standard deviation of a kept
 *          coefficient is sqrt(Sigma_jj), un-standardized.
 *
 * Skill from the sums: with p = X c, sum p = c.s, sum p^2 = c^T G c,
 * sum p t = c.b, so R^2 = 1 - SSE/SST with SSE = tt - 2 c.b + c^T G c and
 * SST = tt - ts^2/n (the coefficient of determination about the mean,
 * common practice), and the Pearson correlation of p and t.
 *
 * Path: backward elimination (common practice; e.g. Hastie, Tibshirani &
 * Friedman 2009, The Elements of Statistical Learning, section 3.3.2):
 * from all columns, repeatedly drop the column whose removal lowers the
 * training R^2 of the least-squares fit the least, recording R^2 against
 * the number of columns.
 *
 * Ownership: an accumulator owns its sums and one chunk's scratch.
 * Solving allocates small p x p work arrays (once per fit, never per row).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_FIT_H
#define TG_FIT_H

#include "status.h"

#define TG_FIT_MAX_TERMS 32

typedef struct {
    int p;
    double n;          /* rows */
    double *G;         /* p*p, full symmetric, row-major */
    double *b;         /* p */
    double *s;         /* p */
    double tt, ts;
    double *cG, *cb, *cs;  /* one chunk's partial sums */
} tg_fit_acc;

tg_fit_acc *tg_fit_acc_create(int p, tg_status *st);
void tg_fit_acc_destroy(tg_fit_acc *a);
void tg_fit_acc_clear(tg_fit_acc *a);

/* Folds nrows rows in: X is nrows x p row-major, t nrows. The chunk's sums
 * are formed apart and then added to the totals. Allocates nothing. */
void tg_fit_acc_add_rows(tg_fit_acc *a, const double *X, const double *t, long nrows);

/* dst += src (same p). */
void tg_fit_acc_merge(tg_fit_acc *dst, const tg_fit_acc *src);

typedef enum { TG_FIT_OLS = 0, TG_FIT_RIDGE, TG_FIT_SEQ_THRESHOLD, TG_FIT_RVM } tg_fit_method;

const char *tg_fit_method_name(tg_fit_method m);

typedef struct {
    tg_fit_method method;
    double ridge;       /* lambda >= 0 (ridge; the inner solves of sequential-threshold) */
    double threshold;   /* sequential-threshold: --drop-below, on |chat| */
    double alpha_max;   /* rvm: prune bound on alpha (standardized units) */
    int max_iter;       /* sequential-threshold and rvm iterations */
} tg_fit_settings;

/* Defaults: ols, ridge 1e-6 (used only by ridge), threshold (--drop-below) 0.05,
 * alpha_max 1e8, max_iter 1000. */
void tg_fit_settings_default(tg_fit_settings *s);

typedef struct {
    int p;
    double coef[TG_FIT_MAX_TERMS];    /* physical units; 0 where not kept */
    double std[TG_FIT_MAX_TERMS];     /* rvm: posterior std, physical; else -1 */
    double chat[TG_FIT_MAX_TERMS];    /* standardized coefficients */
    double scale[TG_FIT_MAX_TERMS];   /* sigma_j */
    double tscale;                    /* tau */
    unsigned char kept[TG_FIT_MAX_TERMS];
    int nkept;
    int rank;                         /* rank of the final Gram block */
    double cond;                      /* its condition number (eigenvalue ratio) */
    int iterations;                   /* sequential-threshold / rvm */
    double noise_std;                 /* rvm: 1/sqrt(beta), physical units of t */
    /* When rank < nkept: the eigenvector of the smallest eigenvalue of the
     * standardized Gram block over all p columns (0 off the kept ones), the
     * combination of terms that is (nearly) zero on the data. */
    double null_vec[TG_FIT_MAX_TERMS];
} tg_fit_result;

/* Fits the columns marked in `use` (NULL: all). names[j] names column j in
 * messages (a column that is zero on every row, a target that is zero).
 * A rank-deficient Gram matrix is not an error (the minimum-norm solution
 * is used); the caller reports it from rank, nkept and null_vec. */
tg_code tg_fit_solve(const tg_fit_acc *a, const unsigned char *use, const char *const *names,
                     const tg_fit_settings *s, tg_fit_result *r, tg_status *st);

typedef struct {
    double r2;     /* NaN when the target has no variance or no rows */
    double corr;   /* NaN when either side has no variance */
    double n;
} tg_fit_skill;

tg_fit_skill tg_fit_skill_of(const tg_fit_acc *a, const double *coef);

typedef struct {
    int nsteps;                        /* nsteps entries, nterms descending */
    int nterms[TG_FIT_MAX_TERMS];
    double r2[TG_FIT_MAX_TERMS];
    int dropped[TG_FIT_MAX_TERMS];     /* column dropped after this step; -1 for the last */
} tg_fit_path;

/* Backward elimination over the columns in `use` (NULL: all), least
 * squares with ridge lambda (0 for ols). */
tg_code tg_fit_path_backward(const tg_fit_acc *a, const unsigned char *use, double lambda,
                             tg_fit_path *path, tg_status *st);

#endif
