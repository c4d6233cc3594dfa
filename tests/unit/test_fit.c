/* test_fit.c - unit tests of the closure fit (src/experiments/fit.c, src/experiments/fit_data.c,
 * src/experiments/fit_run.c).
 *
 * Checks, each with its source:
 *   - recovery of known coefficients: a target built from basis terms of
 *     smooth random coarse states (read back through subgrid.nc files the
 *     test writes) plus 1 % Gaussian noise; ols, ridge (small lambda),
 *     stlsq (Brunton, Proctor & Kutz 2016, PNAS 113, 3932-3937: the
 *     thresholded fit keeps the active terms and drops the others) and the
 *     relevance vector machine (Tipping 2001, J. Mach. Learn. Res. 1,
 *     211-244: irrelevant weights pruned; posterior N(mu, Sigma)) recover
 *     them; the RVM's posterior standard deviations cover the truth within
 *     3 sigma (a 3-sigma credible interval: common practice);
 *   - skill from the sums: R^2 and the correlation from the accumulated
 *     normal equations equal the values computed from the rows (the
 *     definitions; common practice);
 *   - chunked accumulation equals the direct solve: the Gram matrix of
 *     chunks equals that of all rows at once to round-off, and its OLS
 *     solution equals a QR least-squares solve of the whole matrix
 *     (LAPACKE_dgels; Golub & Van Loan 2013, Matrix Computations, section
 *     5.3); the command's --chunk-samples 1 and 5 give the same file;
 *   - the backward-elimination path drops the irrelevant column first and
 *     its R^2 values are those of the least-squares fits on each set
 *     (Hastie, Tibshirani & Friedman 2009, section 3.3.2; the R^2
 *     definition, common practice);
 *   - the rows read from a file equal what a running `coefficients`
 *     closure computes on the same coarse state (sum c_t T_t), in a basin
 *     and in the periodic domain; the forcing target is -S_q exactly, the
 *     flux target -div F converges to the analytic divergence (centred
 *     differences, second order: common practice);
 *   - errors: a fill value on an interior node names the variable and
 *     record; bad windows name --train/--test; an existing output is kept
 *     without overwrite; a layer's failure is prefixed with its layer and
 *     the message comes out whole (tg_fail formatting its own message).
 * A Check suite with its own main().
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "basis.h"
#include "closure_host.h"
#include "constants.h"
#include "fit.h"
#include "fit_data.h"
#include "fit_run.h"
#include "model.h"
#include "ncio.h"
#include "rng.h"
#include "twin.h"
#include "twin_io.h"
#include "unit_util.h"

#include <check.h>
#include <lapacke.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

/* ---------------------------------------------------------------------- */
/* Helpers                                                                  */
/* ---------------------------------------------------------------------- */

static const char *tmpdir(void)
{
    const char *d = getenv("TG_TEST_TMPDIR");
    return (d && d[0]) ? d : ".";
}

/* The twin config of a small basin (65 -> 33) or periodic domain (64 -> 32). */
static void twin_config(tg_config *cfg, int periodic)
{
    tg_status st;
    tg_config_defaults(cfg);
    const char *basin[] = {"twin.reference_points=65", "twin.coarse_points=33",
                           "grid.size_km=1000", NULL};
    const char *per[] = {"grid.geometry=periodic", "grid.points=64", "wind.profile=none",
                         "twin.reference_points=64", "twin.coarse_points=32",
                         "grid.size_km=1000", "background.zonal_velocity_m_s=0.05, 0", NULL};
    for (const char *const *a = periodic ? per : basin; *a; a++)
        ck_assert_msg(tg_config_set(cfg, *a, &st) == TG_OK, "%s: %s", *a, st.msg);
}

/* The coarse model of that twin, with closure `use` (and its file). */
static tg_model *coarse_model(int periodic, const char *coef_file)
{
    tg_config *base = malloc(sizeof *base), *crs = malloc(sizeof *crs);
    tg_status st;
    twin_config(base, periodic);
    ck_assert_msg(tg_config_twin_coarse(base, NULL, crs, &st) == TG_OK, "%s", st.msg);
    crs->nraw = 0;
    char set[1024];
    if (coef_file) {
        ck_assert(tg_config_set(crs, "closure.use=coefficients", &st) == TG_OK);
        snprintf(set, sizeof set, "coefficients.file=%s", coef_file);
        ck_assert_msg(tg_config_set(crs, set, &st) == TG_OK, "%s", st.msg);
    } else {
        ck_assert(tg_config_set(crs, "closure.use=none", &st) == TG_OK);
    }
    tg_model *m = tg_model_create(crs, &st);
    ck_assert_msg(m != NULL, "coarse model: %s", st.msg);
    free(base);
    free(crs);
    return m;
}

/* How the test fills subgrid_forcing and the fluxes. */
enum { F_ZERO, F_SMOOTH, F_ANALYTIC };

/* Writes a subgrid.nc of nrec smooth random coarse states (psi r.m.s.
 * 2e4 m2 s-1) with the twin's resolved config; forcing and fluxes by
 * `kind` (F_ANALYTIC: F_x = A sin(kx) sin(ky)... see below). A fill value
 * goes to interior node (3, 4) of layer 2 in record bad_rec (-1: none). */
static void write_subgrid(const char *path, int periodic, int nrec, int kind, int bad_rec)
{
    tg_config *base = malloc(sizeof *base);
    tg_status st;
    twin_config(base, periodic);
    char *text = tg_config_to_ini(base);
    ck_assert(text != NULL);
    tg_model *m = coarse_model(periodic, NULL);
    const tg_geometry *g = m->geom;
    const int no = m->nout, nl = m->nl;
    const long nout = (long)nl * no * no;
    tg_nc_grid grid = {.nx = no, .ny = no, .nlayers = nl, .x = tg_model_out_coord(m),
                       .y = tg_model_out_coord(m), .config_text = text,
                       .command_line = "test_fit", .title = "test_fit sub-grid file"};
    const tg_twin_var vars[4] = {{"psi", "m2 s-1", "coarse psi", 0},
                                 {"subgrid_forcing", "s-2", "S_q", 1},
                                 {"subgrid_flux_x", "m s-2", "F_x", 0},
                                 {"subgrid_flux_y", "m s-2", "F_y", 0}};
    tg_record_file *f = tg_record_file_create(path, &grid, NULL, vars, 4, NULL, 0, &st);
    ck_assert_msg(f != NULL, "%s", st.msg);
    double *psi = malloc(sizeof(double) * nout), *forc = malloc(sizeof(double) * nout);
    double *fx = malloc(sizeof(double) * nout), *fy = malloc(sizeof(double) * nout);
    double *tmp = malloc(sizeof(double) * m->nl * m->npl);
    const double L = g->length, kk = 2.0 * TG_PI / L;
    const double *x = tg_model_out_coord(m);
    for (int r = 0; r < nrec; r++) {
        tg_model_set_noise(m, 2.0e4, 100 + r);
        tg_model_pack(m, m->psi, psi);
        /* A smooth forcing: the vorticity of another random state. */
        tg_model_set_noise(m, 1.0e4, 500 + r);
        for (long i = 0; i < m->nl * m->npl; i++)
            tmp[i] = kind == F_SMOOTH ? 1e-6 * m->zeta[i] : 0.0;
        tg_model_pack(m, tmp, forc);
        for (int k = 0; k < nl; k++)
            for (int j = 0; j < no; j++)
                for (int i = 0; i < no; i++) {
                    const long p = ((long)k * no + j) * no + i;
                    const int gi = i + g->o0, gj = j + g->o0;
                    const int wall = gi < g->a0 || gi >= g->a1 || gj < g->a0 || gj >= g->a1;
                    if (wall)
                        forc[p] = TG_TWIN_FILL;
                    if (kind == F_ANALYTIC) {
                        /* F = (sin(k x) cos(k y), cos(k x) sin(2 k y)) (k + 1) 1e-9:
                         * div F = k cos(kx) cos(ky) + 2k cos(kx) cos(2ky). */
                        fx[p] = (k + 1) * 1e-9 * sin(kk * x[i]) * cos(kk * x[j]);
                        fy[p] = (k + 1) * 1e-9 * cos(kk * x[i]) * sin(2 * kk * x[j]);
                    } else {
                        fx[p] = fy[p] = 0.0;
                    }
                }
        if (r == bad_rec)
            forc[((long)1 * no + 4 + (g->a0 - g->o0)) * no + 3 + (g->a0 - g->o0)] = TG_TWIN_FILL;
        const double *data[4] = {psi, forc, fx, fy};
        ck_assert_msg(tg_record_file_append(f, r * 86400.0, data, NULL, &st) == TG_OK, "%s",
                      st.msg);
    }
    ck_assert(tg_record_file_close(f, &st) == TG_OK);
    free(psi);
    free(forc);
    free(fx);
    free(fy);
    free(tmp);
    free(text);
    free(base);
    tg_model_destroy(m);
}

static void tmp_path(char *out, size_t n, const char *name)
{
    snprintf(out, n, "%s/fit_%ld_%s", tmpdir(), (long)getpid(), name);
}

/* All rows of samples [0, nrec) for `terms`; X and t malloc'ed. */
static long read_rows(const char *path, const int *terms, int p, double **X, double **t,
                      int *nl_out, long *na_out)
{
    tg_status st;
    tg_fit_data *d = tg_fit_data_open(path, TG_FIT_TARGET_FORCING, terms, p, &st);
    ck_assert_msg(d != NULL, "%s", st.msg);
    const int nrec = tg_fit_data_samples(d), nl = tg_fit_data_layers(d);
    const long na = tg_fit_data_nodes(d), per = nl * na;
    *X = malloc(sizeof(double) * per * nrec * p);
    *t = malloc(sizeof(double) * per * nrec);
    for (int r = 0; r < nrec; r++)
        ck_assert_msg(tg_fit_data_rows(d, r, *X + r * per * p, *t + r * per, na, &st) == TG_OK,
                      "%s", st.msg);
    tg_fit_data_close(d);
    *nl_out = nl;
    *na_out = na;
    return per * nrec;
}

/* ---------------------------------------------------------------------- */
/* Recovery of known coefficients                                          */
/* ---------------------------------------------------------------------- */

/* Five active terms and three with zero coefficient. */
static const char *const rec_terms[] = {"zeta", "lap_zeta", "jac_psi_lapzeta",
                                        "div_gradu_gradzeta", "div_absgradzeta_gradzeta",
                                        "lap2_zeta", "jac_psi_lapq", "div_strain_gradzeta"};
static const double rec_w[] = {1.0, -0.5, 0.8, 0.3, -0.6, 0.0, 0.0, 0.0};
#define NREC_T 8

START_TEST(test_recovery)
{
    const tg_fit_method method = (tg_fit_method)_i;
    char path[512];
    tmp_path(path, sizeof path, "recovery.nc");
    write_subgrid(path, 0, 6, F_ZERO, -1);
    int terms[NREC_T], nl;
    long na;
    for (int c = 0; c < NREC_T; c++)
        terms[c] = tg_basis_find(rec_terms[c]);
    double *X, *t;
    const long n = read_rows(path, terms, NREC_T, &X, &t, &nl, &na);
    remove(path);
    /* Truth: c_j = w_j / rms_j, so each active term contributes O(1). */
    double rms[NREC_T] = {0}, truth[NREC_T];
    for (long r = 0; r < n; r++)
        for (int c = 0; c < NREC_T; c++)
            rms[c] += X[r * NREC_T + c] * X[r * NREC_T + c];
    for (int c = 0; c < NREC_T; c++) {
        rms[c] = sqrt(rms[c] / n);
        ck_assert_msg(rms[c] > 0, "term %s is zero", rec_terms[c]);
        truth[c] = rec_w[c] / rms[c];
    }
    const double noise = 0.01;
    for (long r = 0; r < n; r++) {
        double s = 0.0, z[2];
        for (int c = 0; c < NREC_T; c++)
            s += truth[c] * X[r * NREC_T + c];
        tg_normal2(77, 9u, 0u, (uint32_t)r, z);
        t[r] = s + noise * z[0];
    }
    tg_status st;
    tg_fit_acc *a = tg_fit_acc_create(NREC_T, &st);
    tg_fit_acc_add_rows(a, X, t, n);
    tg_fit_settings set;
    tg_fit_settings_default(&set);
    set.method = method;
    set.ridge = method == TG_FIT_RIDGE ? 1e-8 : 0.0;
    set.threshold = 0.05;
    tg_fit_result res;
    ck_assert_msg(tg_fit_solve(a, NULL, rec_terms, &set, &res, &st) == TG_OK, "%s: %s",
                  tg_fit_method_name(method), st.msg);
    double worst_err = 0.0;
    for (int c = 0; c < NREC_T; c++)
        worst_err = fmax(worst_err, fabs(res.coef[c] - truth[c]) * rms[c]);
    fprintf(stderr, "%s: largest standardized coefficient error %.2e (noise 1e-2, %ld rows)\n",
            tg_fit_method_name(method), worst_err, n);
    for (int c = 0; c < NREC_T; c++) {
        /* Standardized error |c_fit - c_true| rms_j against w of order 1: the
         * noise (1e-2) over sqrt(rows) is 1e-4 before conditioning; 3e-3 is
         * the bound. */
        const double err = fabs(res.coef[c] - truth[c]) * rms[c];
        ck_assert_msg(err < 3e-3, "%s: term %s: fitted %.6g, truth %.6g (standardized error %.3g)",
                      tg_fit_method_name(method), rec_terms[c], res.coef[c], truth[c], err);
        /* STLSQ drops every zero term (threshold 0.05 far above the noise);
         * the RVM keeps every active term, and prunes a zero term unless a
         * chance correlation with the noise gives it a finite optimal alpha
         * (Tipping & Faul 2003, "Fast marginal likelihood maximisation for
         * sparse Bayesian models", section 3: q_i^2 > s_i; the section from
         * memory), in
         * which case its credible interval must hold 0 (checked below). */
        if (method == TG_FIT_STLSQ)
            ck_assert_msg(res.kept[c] == (rec_w[c] != 0.0), "%s: term %s kept = %d",
                          tg_fit_method_name(method), rec_terms[c], res.kept[c]);
        if (method == TG_FIT_RVM && rec_w[c] != 0.0)
            ck_assert_msg(res.kept[c], "rvm: active term %s pruned", rec_terms[c]);
        if (method == TG_FIT_RVM && res.kept[c]) {
            ck_assert_msg(res.std[c] > 0, "rvm: no std for %s", rec_terms[c]);
            if (rec_w[c] == 0.0)
                fprintf(stderr, "rvm kept zero term %s: %.3g +- %.3g (standardized)\n",
                        rec_terms[c], res.coef[c] * rms[c], res.std[c] * rms[c]);
            ck_assert_msg(fabs(res.coef[c] - truth[c]) <= 3.0 * res.std[c],
                          "rvm: term %s: truth %.9g outside %.9g +- 3 x %.3g", rec_terms[c],
                          truth[c], res.coef[c], res.std[c]);
        }
    }
    if (method == TG_FIT_RVM)
        ck_assert_msg(fabs(res.noise_std - noise) < 0.05 * noise,
                      "rvm: noise std %.6g, truth %.6g", res.noise_std, noise);
    /* Skill from the sums against the rows. */
    double sse = 0, sst = 0, mt = 0, mp = 0, spt = 0, spp = 0;
    for (long r = 0; r < n; r++) {
        double pr = 0.0;
        for (int c = 0; c < NREC_T; c++)
            pr += res.coef[c] * X[r * NREC_T + c];
        mt += t[r] / n;
        mp += pr / n;
    }
    for (long r = 0; r < n; r++) {
        double pr = 0.0;
        for (int c = 0; c < NREC_T; c++)
            pr += res.coef[c] * X[r * NREC_T + c];
        sse += (pr - t[r]) * (pr - t[r]);
        sst += (t[r] - mt) * (t[r] - mt);
        spt += (pr - mp) * (t[r] - mt);
        spp += (pr - mp) * (pr - mp);
    }
    tg_fit_skill sk = tg_fit_skill_of(a, res.coef);
    ck_assert_msg(fabs(sk.r2 - (1.0 - sse / sst)) < 1e-9, "R2 %.12g vs rows %.12g", sk.r2,
                  1.0 - sse / sst);
    ck_assert_msg(fabs(sk.corr - spt / sqrt(spp * sst)) < 1e-9, "corr %.12g vs rows %.12g",
                  sk.corr, spt / sqrt(spp * sst));
    tg_fit_acc_destroy(a);
    free(X);
    free(t);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Chunked accumulation against the direct solve                           */
/* ---------------------------------------------------------------------- */

START_TEST(test_chunked_equals_direct)
{
    char path[512];
    tmp_path(path, sizeof path, "chunk.nc");
    write_subgrid(path, 0, 5, F_SMOOTH, -1);
    const char *names[] = {"zeta", "lap_zeta", "jac_psi_lapzeta", "div_gradu_gradzeta",
                           "div_absgradzeta_gradzeta"};
    enum { P = 5 };
    int terms[P], nl;
    long na;
    for (int c = 0; c < P; c++)
        terms[c] = tg_basis_find(names[c]);
    double *X, *t;
    const long n = read_rows(path, terms, P, &X, &t, &nl, &na);
    tg_status st;
    tg_fit_acc *one = tg_fit_acc_create(P, &st), *many = tg_fit_acc_create(P, &st);
    tg_fit_acc_add_rows(one, X, t, n);
    for (long r0 = 0; r0 < n; r0 += na) /* one chunk per sample and layer */
        tg_fit_acc_add_rows(many, X + r0 * P, t + r0, na);
    /* Round-off of a sum of n products: relative to sqrt(G_ii G_jj). */
    for (int i = 0; i < P * P; i++) {
        const double ref = sqrt(one->G[(i / P) * (P + 1)] * one->G[(i % P) * (P + 1)]);
        ck_assert_msg(fabs(one->G[i] - many->G[i]) <= 1e-12 * ref, "G[%d]: %.17g vs %.17g", i,
                      one->G[i], many->G[i]);
    }
    ck_assert(one->n == many->n);
    tg_fit_settings set;
    tg_fit_settings_default(&set);
    tg_fit_result r1, r2;
    ck_assert(tg_fit_solve(one, NULL, names, &set, &r1, &st) == TG_OK);
    ck_assert(tg_fit_solve(many, NULL, names, &set, &r2, &st) == TG_OK);
    /* Direct: QR of the whole column-scaled matrix (LAPACKE_dgels). */
    double *A = malloc(sizeof(double) * n * P), *bvec = malloc(sizeof(double) * n);
    for (long r = 0; r < n; r++) {
        for (int c = 0; c < P; c++)
            A[r * P + c] = X[r * P + c] / r1.scale[c];
        bvec[r] = t[r];
    }
    lapack_int info = LAPACKE_dgels(LAPACK_ROW_MAJOR, 'N', (lapack_int)n, P, 1, A, P, bvec, 1);
    ck_assert_int_eq(info, 0);
    ck_assert_msg(r1.cond < 1e4, "condition number %.3g too large for this check", r1.cond);
    for (int c = 0; c < P; c++) {
        const double direct = bvec[c] / r1.scale[c];
        ck_assert_msg(fabs(r1.coef[c] - direct) <= 1e-9 * fabs(direct),
                      "%s: normal equations %.17g, QR %.17g", names[c], r1.coef[c], direct);
        ck_assert_msg(fabs(r2.coef[c] - r1.coef[c]) <= 1e-12 * fabs(r1.coef[c]),
                      "%s: chunked %.17g, one chunk %.17g", names[c], r2.coef[c], r1.coef[c]);
    }
    free(A);
    free(bvec);
    free(X);
    free(t);
    tg_fit_acc_destroy(one);
    tg_fit_acc_destroy(many);

    /* The command's chunks: --chunk-samples 1 and 5 give the same file. */
    char out1[512], out5[512];
    tmp_path(out1, sizeof out1, "chunk1.txt");
    tmp_path(out5, sizeof out5, "chunk5.txt");
    tg_fit_options o;
    tg_fit_options_default(&o);
    o.input = path;
    o.overwrite = 1;
    o.nterms = P;
    memcpy(o.terms, terms, sizeof terms);
    o.output = out1;
    o.chunk_samples = 1;
    ck_assert_msg(tg_fit_run(&o, NULL, &st) == TG_OK, "%s", st.msg);
    o.output = out5;
    o.chunk_samples = 5;
    ck_assert_msg(tg_fit_run(&o, NULL, &st) == TG_OK, "%s", st.msg);
    tg_coef_list l1, l5;
    ck_assert_msg(tg_coef_read(out1, 2, &l1, &st) == TG_OK, "%s", st.msg);
    ck_assert_msg(tg_coef_read(out5, 2, &l5, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(l1.n, 2 * P);
    ck_assert_int_eq(l5.n, l1.n);
    for (int i = 0; i < l1.n; i++)
        ck_assert_msg(fabs(l1.e[i].mean - l5.e[i].mean) <= 1e-12 * fabs(l1.e[i].mean),
                      "line %d: %.17g vs %.17g", i, l1.e[i].mean, l5.e[i].mean);
    tg_coef_list_free(&l1);
    tg_coef_list_free(&l5);
    remove(out1);
    remove(out5);
    remove(path);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Backward-elimination path                                                */
/* ---------------------------------------------------------------------- */

/* Three independent normal columns, t = 3 x0 + x1 + 0.05 noise (x2 not in
 * it): the path drops x2, then x1 (backward elimination, Hastie, Tibshirani
 * & Friedman 2009, The Elements of Statistical Learning, section 3.3.2);
 * its first R^2 is that of the full least-squares fit, and its last the
 * R^2 of the one-column least-squares fit on x0, 1 - SSE/SST with
 * SSE = t.t - (x0.t)^2 / (x0.x0) (the definitions; common practice). */
START_TEST(test_backward_path)
{
    enum { P = 3, N = 400 };
    double X[N * P], t[N];
    double x0t = 0.0, x0x0 = 0.0, tt = 0.0, ts = 0.0;
    for (int r = 0; r < N; r++) {
        double z[2], w[2];
        tg_normal2(5, 0x9a7u, 0, (uint32_t)r, z);
        tg_normal2(5, 0x9a8u, 0, (uint32_t)r, w);
        X[r * P + 0] = z[0];
        X[r * P + 1] = z[1];
        X[r * P + 2] = w[0];
        t[r] = 3.0 * z[0] + z[1] + 0.05 * w[1];
        x0t += z[0] * t[r];
        x0x0 += z[0] * z[0];
        tt += t[r] * t[r];
        ts += t[r];
    }
    tg_status st;
    tg_fit_acc *a = tg_fit_acc_create(P, &st);
    ck_assert_ptr_nonnull(a);
    tg_fit_acc_add_rows(a, X, t, N);
    tg_fit_path path;
    ck_assert_msg(tg_fit_path_backward(a, NULL, 0.0, &path, &st) == TG_OK, "%s", st.msg);
    ck_assert_int_eq(path.nsteps, 3);
    for (int s = 0; s < 3; s++)
        ck_assert_int_eq(path.nterms[s], 3 - s);
    ck_assert_int_eq(path.dropped[0], 2);
    ck_assert_int_eq(path.dropped[1], 1);
    ck_assert_int_eq(path.dropped[2], -1);
    tg_fit_settings set;
    tg_fit_settings_default(&set);
    tg_fit_result res;
    ck_assert_msg(tg_fit_solve(a, NULL, NULL, &set, &res, &st) == TG_OK, "%s", st.msg);
    const double full = tg_fit_skill_of(a, res.coef).r2;
    ck_assert_msg(fabs(path.r2[0] - full) <= 1e-12, "full set: path %.17g, fit %.17g",
                  path.r2[0], full);
    const double one = 1.0 - (tt - x0t * x0t / x0x0) / (tt - ts * ts / N);
    ck_assert_msg(fabs(path.r2[2] - one) <= 1e-10, "x0 alone: path %.17g, direct %.17g",
                  path.r2[2], one);
    ck_assert(path.r2[0] >= path.r2[1] && path.r2[1] >= path.r2[2]);
    tg_fit_acc_destroy(a);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Rows from a file against a running closure                               */
/* ---------------------------------------------------------------------- */

START_TEST(test_rows_equal_closure)
{
    const int periodic = _i;
    char path[512], coef[512];
    tmp_path(path, sizeof path, periodic ? "rows_p.nc" : "rows_b.nc");
    tmp_path(coef, sizeof coef, periodic ? "rows_p.txt" : "rows_b.txt");
    write_subgrid(path, periodic, 2, F_SMOOTH, -1);
    const int p = tg_basis_count();
    int terms[TG_FIT_MAX_TERMS], nl;
    long na;
    for (int c = 0; c < p; c++)
        terms[c] = c;
    double *X, *t;
    read_rows(path, terms, p, &X, &t, &nl, &na);
    /* Coefficients of order 1 / rms per term and layer. */
    double cf[2][TG_FIT_MAX_TERMS];
    FILE *f = fopen(coef, "w");
    ck_assert(f != NULL);
    fprintf(f, "%s\n", TG_BASIS_UNITS_LINE);
    for (int k = 0; k < nl; k++)
        for (int c = 0; c < p; c++) {
            double s = 0.0;
            for (long r = 0; r < na; r++)
                s += X[((long)k * na + r) * p + c] * X[((long)k * na + r) * p + c];
            cf[k][c] = (c % 3 ? 1.0 : -0.7) / sqrt(s / na);
            fprintf(f, "%d %s %.17g\n", k + 1, tg_basis_term_at(c)->name, cf[k][c]);
        }
    fclose(f);
    /* Sample 1 through the model and the closure. */
    tg_model *m = coarse_model(periodic, coef);
    tg_status st;
    tg_record_reader *rd = tg_record_reader_open(path, m->nout, m->nout, m->nl, &st);
    ck_assert_msg(rd != NULL, "%s", st.msg);
    double *psi = malloc(sizeof(double) * m->nl * m->nout * m->nout);
    double *forc = malloc(sizeof(double) * m->nl * m->nout * m->nout);
    ck_assert(tg_record_reader_get(rd, "psi", 1, 0, psi, &st) == TG_OK);
    ck_assert(tg_record_reader_get(rd, "subgrid_forcing", 1, 0, forc, &st) == TG_OK);
    tg_record_reader_close(rd);
    tg_model_set_psi(m, psi);
    tg_closure_input in = {m->psi, m->q, m->zeta, m->wall, 0, 0};
    ck_assert_msg(tg_closure_host_eval(m->closures, &in, &st) == TG_OK, "%s", st.msg);
    const double *tend = tg_closure_host_tend(m->closures, 0);
    const tg_geometry *g = m->geom;
    const long off1 = (long)nl * na; /* sample 1 */
    for (int k = 0; k < nl; k++) {
        double big = 0.0, worst = 0.0;
        long r = 0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++, r++) {
                double s = 0.0;
                for (int c = 0; c < p; c++)
                    s += cf[k][c] * X[(off1 + k * na + r) * p + c];
                const double v = tend[k * m->npl + (long)j * g->ns + i];
                big = fmax(big, fabs(v));
                worst = fmax(worst, fabs(v - s));
                /* The forcing target is -S_q, node for node. */
                const long po = ((long)k * m->nout + (j - g->o0)) * m->nout + (i - g->o0);
                ck_assert(t[off1 + k * na + r] == -forc[po]);
            }
        ck_assert_msg(worst <= 1e-12 * big, "layer %d: closure and rows differ by %.3g of %.3g",
                      k + 1, worst, big);
    }
    free(psi);
    free(forc);
    free(X);
    free(t);
    tg_model_destroy(m);
    remove(path);
    remove(coef);
}
END_TEST

START_TEST(test_flux_target)
{
    const int periodic = _i;
    char path[512];
    tmp_path(path, sizeof path, periodic ? "flux_p.nc" : "flux_b.nc");
    write_subgrid(path, periodic, 1, F_ANALYTIC, -1);
    int term = 0;
    tg_status st;
    tg_fit_data *d = tg_fit_data_open(path, TG_FIT_TARGET_FLUX, &term, 1, &st);
    ck_assert_msg(d != NULL, "%s", st.msg);
    const long na = tg_fit_data_nodes(d);
    const int nl = tg_fit_data_layers(d);
    double *X = malloc(sizeof(double) * nl * na), *t = malloc(sizeof(double) * nl * na);
    ck_assert_msg(tg_fit_data_rows(d, 0, X, t, na, &st) == TG_OK, "%s", st.msg);
    const tg_model *m = tg_fit_data_model(d);
    const tg_geometry *g = m->geom;
    const double kk = 2.0 * TG_PI / g->length;
    for (int k = 0; k < nl; k++) {
        double big = 0.0, worst = 0.0;
        long r = 0;
        for (int j = g->a0; j < g->a1; j++)
            for (int i = g->a0; i < g->a1; i++, r++) {
                const double x = g->coord[i], y = g->coord[j];
                const double div = (k + 1) * 1e-9 * (kk * cos(kk * x) * cos(kk * y) +
                                                     2 * kk * cos(kk * x) * cos(2 * kk * y));
                big = fmax(big, fabs(div));
                worst = fmax(worst, fabs(-t[k * na + r] - div));
            }
        /* Centred differences: error (k dx)^2 / 6 of the largest wavenumber 2k,
         * here 32 points per period of k: below 2 % (common practice). */
        ck_assert_msg(worst < 0.02 * big, "layer %d: -target vs div F: %.3g of %.3g", k + 1,
                      worst, big);
    }
    free(X);
    free(t);
    tg_fit_data_close(d);
    remove(path);
}
END_TEST

/* ---------------------------------------------------------------------- */
/* Errors                                                                   */
/* ---------------------------------------------------------------------- */

START_TEST(test_errors)
{
    char path[512], out[512];
    tmp_path(path, sizeof path, "bad.nc");
    tmp_path(out, sizeof out, "bad.txt");
    write_subgrid(path, 0, 3, F_SMOOTH, 2);
    tg_status st;
    tg_fit_options o;
    tg_fit_options_default(&o);
    o.input = path;
    o.output = out;
    o.nterms = 2;
    o.terms[0] = tg_basis_find("zeta");
    o.terms[1] = tg_basis_find("lap_zeta");
    /* A fill value on an interior node of record 2. */
    ck_assert_int_eq(tg_fit_run(&o, NULL, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "subgrid_forcing") && strstr(st.msg, "record 2") &&
                  strstr(st.msg, "layer 2"), "message: %s", st.msg);
    ck_assert(access(out, F_OK) != 0);
    /* Windows. */
    o.train_first = 0;
    o.train_last = 5;
    ck_assert_int_eq(tg_fit_run(&o, NULL, &st), TG_ERR_USAGE);
    ck_assert_msg(strstr(st.msg, "--train 0:5") != NULL, "message: %s", st.msg);
    o.train_last = 1;
    o.test_first = 2;
    o.test_last = 3;
    ck_assert_int_eq(tg_fit_run(&o, NULL, &st), TG_ERR_USAGE);
    ck_assert_msg(strstr(st.msg, "--test 2:3") != NULL, "message: %s", st.msg);
    /* Good windows; then the output exists and is kept without overwrite. */
    o.test_first = o.test_last = 1;
    ck_assert_msg(tg_fit_run(&o, NULL, &st) == TG_OK, "%s", st.msg);
    FILE *f = fopen(out, "a");
    fputs("# marker\n", f);
    fclose(f);
    ck_assert_int_eq(tg_fit_run(&o, NULL, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "--overwrite") != NULL, "message: %s", st.msg);
    char line[256] = "";
    f = fopen(out, "r");
    while (fgets(line, sizeof line, f)) {
    }
    fclose(f);
    ck_assert_str_eq(line, "# marker\n");
    /* A missing file and a file without resolved_config. */
    o.input = "/nonexistent/subgrid.nc";
    o.overwrite = 1;
    ck_assert_int_eq(tg_fit_run(&o, NULL, &st), TG_ERR_IO);
    ck_assert_msg(strstr(st.msg, "/nonexistent/subgrid.nc") != NULL, "message: %s", st.msg);
    remove(path);
    remove(out);
}
END_TEST

/* tg_fit_run prefixes a layer's failure with tg_fail(st, rc, "layer %d: %s",
 * f + 1, st->msg): the message must come out whole, not overwritten while
 * it is read. */
START_TEST(test_fail_prefixes_own_message)
{
    tg_status st;
    tg_status_clear(&st);
    tg_fail(&st, TG_ERR_NUMERIC, "fit: stlsq did not settle in %d iterations", 7);
    ck_assert_int_eq(tg_fail(&st, st.code, "layer %d: %s", 2, st.msg), TG_ERR_NUMERIC);
    ck_assert_str_eq(st.msg, "layer 2: fit: stlsq did not settle in 7 iterations");
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("fit");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 120);
    tcase_add_loop_test(tc, test_recovery, TG_FIT_OLS, TG_FIT_RVM + 1);
    tcase_add_test(tc, test_chunked_equals_direct);
    tcase_add_test(tc, test_backward_path);
    tcase_add_loop_test(tc, test_rows_equal_closure, 0, 2);
    tcase_add_loop_test(tc, test_flux_target, 0, 2);
    tcase_add_test(tc, test_errors);
    tcase_add_test(tc, test_fail_prefixes_own_message);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    return tg_unit_run(suite());
}
