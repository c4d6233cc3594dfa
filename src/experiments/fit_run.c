/* fit_run.c - one closure fit from subgrid.nc to a coefficients file
 * (fit_run.h).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L
#include "fit_run.h"

#include <errno.h>
#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "basis.h"
#include "ncio_util.h"
#include "strbuf.h"
#include "textfile.h"

enum { W_TRAIN = 0, W_TEST = 1 };

void tg_fit_options_default(tg_fit_options *o)
{
    memset(o, 0, sizeof *o);
    o->target = TG_FIT_TARGET_FORCING;
    tg_fit_settings_default(&o->set);
    o->train_first = o->train_last = -1;
    o->test_first = o->test_last = -1;
    o->chunk_samples = 4;
}

typedef struct {
    const tg_fit_options *o;
    tg_fit_data *d;
    int p, nl;
    long na;
    int terms[TG_FIT_MAX_TERMS];
    const char *names[TG_FIT_MAX_TERMS];
    int first[2], last[2];       /* windows; first < 0: none */
    tg_fit_acc *acc[2][TG_MAX_LAYERS];
    double *X, *t;               /* one chunk: layer-major [layer][sample][node] */
    /* Design dump. */
    int dump_nc, d_row, v_design, v_target, v_layer, v_sample;
    size_t dump_rows;
    int *dump_layer, *dump_sample; /* one sample's layer and sample columns (na) */
    char dump_tmp[TG_PATH_LEN + 64];
    int done, total;             /* samples read, for progress */
    /* Results: one per layer (separate) or one (shared). */
    int nfits;
    tg_fit_result res[TG_MAX_LAYERS];
    tg_fit_path path[TG_MAX_LAYERS];
    tg_fit_skill skill[2][TG_MAX_LAYERS];
} fit_ctx;

/* ------------------------------------------------------------------ */
/* Design dump                                                         */
/* ------------------------------------------------------------------ */

#define NCTRY(call, what, var)                                                 \
    do {                                                                       \
        if ((rc = tg_nc_check((call), k->dump_tmp, (what), (var), st)) != TG_OK) \
            return rc;                                                         \
    } while (0)

static tg_code dump_open(fit_ctx *k, tg_status *st)
{
    tg_code rc;
    const tg_fit_options *o = k->o;
    int d_term, old;
    k->dump_layer = malloc(sizeof(int) * (size_t)k->na);
    k->dump_sample = malloc(sizeof(int) * (size_t)k->na);
    if (!k->dump_layer || !k->dump_sample)
        return tg_fail(st, TG_ERR_NOMEM, "fit: no memory for the design dump");
    snprintf(k->dump_tmp, sizeof k->dump_tmp, "%s.tmp-%ld", o->dump_path, (long)getpid());
    NCTRY(nc_create(k->dump_tmp, NC_CLOBBER | NC_64BIT_OFFSET, &k->dump_nc), "creating the file",
          NULL);
    NCTRY(nc_set_fill(k->dump_nc, NC_NOFILL, &old), "setting no-fill mode", NULL);
    NCTRY(nc_def_dim(k->dump_nc, "row", NC_UNLIMITED, &k->d_row), "defining dimension", "row");
    NCTRY(nc_def_dim(k->dump_nc, "term", (size_t)k->p, &d_term), "defining dimension", "term");
    const int dd[2] = {k->d_row, d_term};
    NCTRY(nc_def_var(k->dump_nc, "design", NC_DOUBLE, 2, dd, &k->v_design), "defining", "design");
    NCTRY(nc_def_var(k->dump_nc, "target", NC_DOUBLE, 1, &k->d_row, &k->v_target), "defining",
          "target");
    NCTRY(nc_def_var(k->dump_nc, "layer", NC_INT, 1, &k->d_row, &k->v_layer), "defining", "layer");
    NCTRY(nc_def_var(k->dump_nc, "sample", NC_INT, 1, &k->d_row, &k->v_sample), "defining",
          "sample");
    tg_strbuf names = {0}, units = {0};
    for (int c = 0; c < k->p; c++) {
        const tg_basis_term *bt = tg_basis_term_at(k->terms[c]);
        tg_sb_printf(&names, "%s%s", c ? " " : "", bt->name);
        tg_sb_printf(&units, "%s%s", c ? ", " : "", bt->term_unit);
    }
    if (names.oom || units.oom) {
        free(names.s);
        free(units.s);
        return tg_fail(st, TG_ERR_NOMEM, "fit: no memory");
    }
    rc = tg_nc_put_text(k->dump_nc, NC_GLOBAL, "terms", names.s, k->dump_tmp, NULL, st);
    if (!rc)
        rc = tg_nc_put_text(k->dump_nc, NC_GLOBAL, "term_units", units.s, k->dump_tmp, NULL, st);
    free(names.s);
    free(units.s);
    if (!rc)
        rc = tg_nc_put_text(k->dump_nc, NC_GLOBAL, "title",
                            "twingyre fit: training design matrix (basis terms per row) and "
                            "target, rows of every layer and training sample", k->dump_tmp, NULL,
                            st);
    if (!rc)
        rc = tg_nc_put_text(k->dump_nc, NC_GLOBAL, "source_file", o->input, k->dump_tmp, NULL, st);
    if (!rc)
        rc = tg_nc_put_text(k->dump_nc, k->v_target, "units", "s-2", k->dump_tmp, "target", st);
    if (!rc)
        rc = tg_nc_put_text(k->dump_nc, k->v_target, "long_name",
                            o->target == TG_FIT_TARGET_FLUX ? "minus the divergence of the "
                            "sub-grid PV flux" : "minus the sub-grid PV forcing", k->dump_tmp,
                            "target", st);
    if (rc)
        return rc;
    NCTRY(nc_enddef(k->dump_nc), "finishing the header", NULL);
    return TG_OK;
}

/* Appends the rows of samples [s0, s0 + ns) of the training chunk. */
static tg_code dump_chunk(fit_ctx *k, int s0, int ns, tg_status *st)
{
    tg_code rc;
    const long stride = (long)k->o->chunk_samples * k->na;
    int *lay = k->dump_layer, *smp = k->dump_sample;
    for (int l = 0; l < k->nl; l++)
        for (int s = 0; s < ns; s++) {
            const double *X = k->X + (l * stride + s * k->na) * k->p;
            const double *t = k->t + l * stride + s * k->na;
            for (long r = 0; r < k->na; r++) {
                lay[r] = l + 1;
                smp[r] = s0 + s;
            }
            const size_t st2[2] = {k->dump_rows, 0}, ct[2] = {(size_t)k->na, (size_t)k->p};
            if ((rc = tg_nc_check(nc_put_vara_double(k->dump_nc, k->v_design, st2, ct, X),
                                  k->dump_tmp, "writing", "design", st)) ||
                (rc = tg_nc_check(nc_put_vara_double(k->dump_nc, k->v_target, st2, ct, t),
                                  k->dump_tmp, "writing", "target", st)) ||
                (rc = tg_nc_check(nc_put_vara_int(k->dump_nc, k->v_layer, st2, ct, lay),
                                  k->dump_tmp, "writing", "layer", st)) ||
                (rc = tg_nc_check(nc_put_vara_int(k->dump_nc, k->v_sample, st2, ct, smp),
                                  k->dump_tmp, "writing", "sample", st)))
                return rc;
            k->dump_rows += (size_t)k->na;
        }
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* Reading                                                             */
/* ------------------------------------------------------------------ */

static tg_code flush(fit_ctx *k, int w, int s0, int ns, tg_status *st)
{
    const long stride = (long)k->o->chunk_samples * k->na;
    for (int l = 0; l < k->nl; l++)
        tg_fit_acc_add_rows(k->acc[w][l], k->X + l * stride * k->p, k->t + l * stride,
                            (long)ns * k->na);
    if (w == W_TRAIN && k->o->dump_path)
        return dump_chunk(k, s0, ns, st);
    return TG_OK;
}

static tg_code read_window(fit_ctx *k, int w, tg_status *st)
{
    tg_code rc;
    const int cs = k->o->chunk_samples;
    const long stride = (long)cs * k->na;
    int in_chunk = 0, s0 = k->first[w];
    for (int rec = k->first[w]; rec <= k->last[w]; rec++) {
        if ((rc = tg_fit_data_rows(k->d, rec, k->X + (long)in_chunk * k->na * k->p,
                                   k->t + (long)in_chunk * k->na, stride, st)) != TG_OK)
            return rc;
        in_chunk++;
        k->done++;
        if (k->o->progress)
            k->o->progress(k->done, k->total, k->o->progress_user);
        if (in_chunk == cs || rec == k->last[w]) {
            if ((rc = flush(k, w, s0, in_chunk, st)) != TG_OK)
                return rc;
            in_chunk = 0;
            s0 = rec + 1;
        }
    }
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* The coefficients file                                               */
/* ------------------------------------------------------------------ */

static void fmt_window(const fit_ctx *k, int w, char *buf, size_t n)
{
    if (k->first[w] < 0)
        snprintf(buf, n, "none");
    else
        snprintf(buf, n, "samples %d:%d (%d samples, %.0f rows per layer)", k->first[w],
                 k->last[w], k->last[w] - k->first[w] + 1,
                 k->acc[w][0] ? k->acc[w][0]->n : 0.0);
}

/* The layer column of the coefficient tables: "all" for a shared fit,
 * else the layer number from 1. */
static void layer_label(int shared, int fit, char *buf, size_t n)
{
    if (shared)
        snprintf(buf, n, "all");
    else
        snprintf(buf, n, "%d", fit + 1);
}

static void num(tg_strbuf *b, double v, const char *fmt)
{
    if (isfinite(v))
        tg_sb_printf(b, fmt, v);
    else
        tg_sb_printf(b, "%10s", "-");
}

/* The skill table and path as text, each line prefixed by `pre`. */
static void summary(const fit_ctx *k, tg_strbuf *b, const char *pre)
{
    tg_sb_printf(b, "%slayer   R2_train  corr_train     R2_test   corr_test\n", pre);
    for (int l = 0; l < k->nl; l++) {
        tg_sb_printf(b, "%s%5d ", pre, l + 1);
        num(b, k->skill[W_TRAIN][l].r2, " %10.4f");
        num(b, k->skill[W_TRAIN][l].corr, "  %10.4f");
        num(b, k->skill[W_TEST][l].r2, "  %10.4f");
        num(b, k->skill[W_TEST][l].corr, "  %10.4f");
        tg_sb_printf(b, "\n");
    }
}

static void path_text(const fit_ctx *k, tg_strbuf *b, const char *pre)
{
    for (int f = 0; f < k->nfits; f++) {
        const tg_fit_path *pa = &k->path[f];
        if (k->o->shared)
            tg_sb_printf(b, "%spath, all layers: terms  R2_train  then dropped\n", pre);
        else
            tg_sb_printf(b, "%spath, layer %d: terms  R2_train  then dropped\n", pre, f + 1);
        /* The path runs over every column; the one never dropped remains. */
        unsigned char gone[TG_FIT_MAX_TERMS] = {0};
        for (int s = 0; s < pa->nsteps; s++)
            if (pa->dropped[s] >= 0)
                gone[pa->dropped[s]] = 1;
        for (int s = 0; s < pa->nsteps; s++) {
            tg_sb_printf(b, "%s  %5d  ", pre, pa->nterms[s]);
            num(b, pa->r2[s], "%10.6f");
            if (pa->dropped[s] >= 0) {
                tg_sb_printf(b, "  %s\n", k->names[pa->dropped[s]]);
                continue;
            }
            tg_sb_printf(b, "  (remains:");
            for (int j = 0; j < k->p; j++)
                if (!gone[j])
                    tg_sb_printf(b, " %s", k->names[j]);
            tg_sb_printf(b, ")\n");
        }
    }
}

static const char *method_source(tg_fit_method m)
{
    switch (m) {
    case TG_FIT_OLS: return "ordinary least squares (normal equations, Cholesky)";
    case TG_FIT_RIDGE: return "ridge regression (Hoerl & Kennard 1970, Technometrics 12, 55-67)";
    case TG_FIT_STLSQ:
        return "sequentially thresholded least squares (Brunton, Proctor & Kutz 2016, "
               "Proc. Natl. Acad. Sci. 113, 3932-3937)";
    case TG_FIT_RVM:
        return "relevance vector machine (Tipping 2001, J. Mach. Learn. Res. 1, 211-244)";
    }
    return "";
}

/* The coefficients file's line of the method's settings (none for plain
 * least squares). */
static void settings_line(const tg_fit_settings *set, tg_strbuf *b)
{
    switch (set->method) {
    case TG_FIT_RIDGE:
        tg_sb_printf(b, "# settings: ridge %.6g (on the standardized Gram matrix)\n", set->ridge);
        break;
    case TG_FIT_STLSQ:
        tg_sb_printf(b, "# settings: threshold %.6g on standardized coefficients, ridge %.6g\n",
                     set->threshold, set->ridge);
        break;
    case TG_FIT_RVM:
        tg_sb_printf(b, "# settings: prune alpha above %.6g (standardized); std column: "
                        "posterior standard deviation\n", set->alpha_max);
        break;
    default:
        break;
    }
}

static char *file_text(const fit_ctx *k)
{
    const tg_fit_options *o = k->o;
    tg_strbuf b = {0};
    char win[128];
    tg_sb_printf(&b, "# twingyre fit: learned closure coefficients, for [closure] use = "
                     "coefficients\n");
    tg_sb_printf(&b, "%s\n", TG_BASIS_UNITS_LINE);
    const tg_model *m = tg_fit_data_model(k->d);
    tg_sb_printf(&b, "# source: %s (%d samples; coarse grid %d x %d points, spacing %.6g m, %d "
                     "layers; filter %s)\n", o->input, tg_fit_data_samples(k->d), m->nout,
                 m->nout, m->geom->dx, k->nl, tg_fit_data_attr(k->d, "filter"));
    if (tg_fit_data_attr(k->d, "command_line")[0])
        tg_sb_printf(&b, "# twin command: %s\n", tg_fit_data_attr(k->d, "command_line"));
    if (o->command_line)
        tg_sb_printf(&b, "# fit command: %s\n", o->command_line);
    tg_sb_printf(&b, "# target: %s\n",
                 o->target == TG_FIT_TARGET_FLUX
                     ? "-div(subgrid_flux_x, subgrid_flux_y), centred differences on the "
                       "coarse grid"
                     : "-subgrid_forcing (-S_q)");
    tg_sb_printf(&b, "# fields: psi of each sample set as the coarse model's state (q, zeta "
                     "derived on the coarse grid, as a coarse run sees them)\n");
    tg_sb_printf(&b, "# layers: %s\n", o->shared ? "shared (one set for every layer)"
                                                  : "separate (one set per layer)");
    tg_sb_printf(&b, "# method: %s: %s\n", tg_fit_method_name(o->set.method),
                 method_source(o->set.method));
    settings_line(&o->set, &b);
    tg_sb_printf(&b, "# standardization: each term column divided by its root-mean-square on "
                     "the training rows, target likewise, no centring\n");
    fmt_window(k, W_TRAIN, win, sizeof win);
    tg_sb_printf(&b, "# train: %s\n", win);
    fmt_window(k, W_TEST, win, sizeof win);
    tg_sb_printf(&b, "# test: %s\n", win);
    tg_sb_printf(&b, "# terms (term unit; coefficient unit):\n");
    for (int c = 0; c < k->p; c++) {
        const tg_basis_term *bt = tg_basis_term_at(k->terms[c]);
        tg_sb_printf(&b, "#   %-26s %-10s %s\n", bt->name, bt->term_unit, bt->coef_unit);
    }
    for (int f = 0; f < k->nfits; f++) {
        const tg_fit_result *r = &k->res[f];
        if (o->shared)
            tg_sb_printf(&b, "# fit, all layers:");
        else
            tg_sb_printf(&b, "# fit, layer %d:", f + 1);
        tg_sb_printf(&b, " %d of %d terms kept, rank %d, condition number %.3g", r->nkept, k->p,
                     r->rank, r->cond);
        if (o->set.method == TG_FIT_STLSQ || o->set.method == TG_FIT_RVM)
            tg_sb_printf(&b, ", %d iterations", r->iterations);
        if (o->set.method == TG_FIT_RVM)
            tg_sb_printf(&b, ", noise std %.6g s-2", r->noise_std);
        tg_sb_printf(&b, "\n");
    }
    tg_sb_printf(&b, "# skill (R2 = 1 - SSE/SST about the mean; Pearson correlation):\n");
    summary(k, &b, "#   ");
    tg_sb_printf(&b, "# path: backward elimination, least squares%s on the training rows\n",
                 o->set.method == TG_FIT_RIDGE ? " with the ridge" : "");
    path_text(k, &b, "#   ");
    tg_sb_printf(&b, "# layer  term                        coefficient               std\n");
    for (int f = 0; f < k->nfits; f++) {
        const tg_fit_result *r = &k->res[f];
        for (int c = 0; c < k->p; c++) {
            if (!r->kept[c])
                continue;
            char lay[16];
            layer_label(o->shared, f, lay, sizeof lay);
            tg_sb_printf(&b, "%-8s %-26s %-25.17g", lay, k->names[c], r->coef[c]);
            if (r->std[c] >= 0)
                tg_sb_printf(&b, " %.17g", r->std[c]);
            tg_sb_printf(&b, "\n");
        }
    }
    if (b.oom) {
        free(b.s);
        return NULL;
    }
    return b.s;
}

static tg_code write_output(fit_ctx *k, tg_status *st)
{
    const tg_fit_options *o = k->o;
    char *text = file_text(k);
    if (!text)
        return tg_fail(st, TG_ERR_NOMEM, "fit: no memory for the coefficients file");
    char tmp[TG_PATH_LEN + 64];
    snprintf(tmp, sizeof tmp, "%s.tmp-%ld", o->output, (long)getpid());
    FILE *f = fopen(tmp, "w");
    if (!f) {
        free(text);
        return tg_fail(st, TG_ERR_IO, "cannot create %s: %s", tmp, strerror(errno));
    }
    size_t len = strlen(text);
    int bad = fwrite(text, 1, len, f) != len;
    bad |= fclose(f) != 0;
    free(text);
    if (bad) {
        remove(tmp);
        return tg_fail(st, TG_ERR_IO, "cannot write %s: %s", tmp, strerror(errno));
    }
    /* The closure's reader must accept what was written. */
    tg_coef_list list;
    tg_status cs;
    tg_status_clear(&cs);
    if (tg_coef_read(tmp, k->nl, &list, &cs) != TG_OK) {
        remove(tmp);
        return tg_fail(st, TG_ERR_INTERNAL, "fit: the file written does not load: %s", cs.msg);
    }
    tg_coef_list_free(&list);
    if (!o->overwrite && access(o->output, F_OK) == 0) {
        remove(tmp);
        return tg_fail(st, TG_ERR_IO, "%s exists; give --overwrite to replace it", o->output);
    }
    if (rename(tmp, o->output) != 0) {
        int e = errno;
        remove(tmp);
        return tg_fail(st, TG_ERR_IO, "cannot rename %s to %s: %s", tmp, o->output, strerror(e));
    }
    return TG_OK;
}

/* A rank-deficient fit: the terms that carry the near-null combination. */
static void warn_rank(const fit_ctx *k, int f)
{
    const tg_fit_result *r = &k->res[f];
    double big = 0.0;
    for (int c = 0; c < k->p; c++)
        big = fmax(big, fabs(r->null_vec[c]));
    tg_strbuf b = {0};
    for (int c = 0; c < k->p; c++)
        if (fabs(r->null_vec[c]) > 0.1 * big)
            tg_sb_printf(&b, "%s%s", b.s ? ", " : "", k->names[c]);
    char where[32];
    if (k->o->shared)
        snprintf(where, sizeof where, "all layers");
    else
        snprintf(where, sizeof where, "layer %d", f + 1);
    tg_log(TG_LOG_WARN,
           "fit (%s): the Gram matrix of the %d terms has rank %d (condition number %.3g): "
           "a combination of %s is (nearly) zero on these data; the minimum-norm solution is "
           "used. Leave one of them out (--terms) or use --method ridge",
           where, r->nkept, r->rank, r->cond, b.s && !b.oom ? b.s : "some terms");
    free(b.s);
}

/* ------------------------------------------------------------------ */
/* The fit                                                             */
/* ------------------------------------------------------------------ */

static tg_code check_window(int first, int last, int nrec, const char *opt, tg_status *st,
                            const char *path)
{
    if (first < 0 || last < first || last >= nrec)
        return tg_fail(st, TG_ERR_USAGE,
                       "%s %d:%d: %s has samples 0 to %d; give FIRST:LAST with 0 <= FIRST <= "
                       "LAST <= %d", opt, first, last, path, nrec - 1, nrec - 1);
    return TG_OK;
}

/* Whether the directory of path can take a new file (checked before the
 * data are read, so that a long read does not end in a refusal). */
static tg_code dir_writable(const char *path, const char *opt, tg_status *st)
{
    char dir[TG_PATH_LEN];
    tg_dir_of(path, dir, sizeof dir);
    if (access(dir, W_OK | X_OK) != 0)
        return tg_fail(st, TG_ERR_IO, "%s %s: cannot write in directory %s: %s", opt, path, dir,
                       strerror(errno));
    return TG_OK;
}

static void ctx_free(fit_ctx *k)
{
    for (int w = 0; w < 2; w++)
        for (int l = 0; l < TG_MAX_LAYERS; l++)
            tg_fit_acc_destroy(k->acc[w][l]);
    free(k->X);
    free(k->t);
    free(k->dump_layer);
    free(k->dump_sample);
    tg_fit_data_close(k->d);
    if (k->dump_nc >= 0) { /* a failed fit leaves no partial dump */
        (void)nc_close(k->dump_nc);
        remove(k->dump_tmp);
    }
    free(k);
}

/* The fit's terms, its data (opened, windows checked against the samples),
 * a chunk's rows, the accumulators and, when asked, the dump file. */
static tg_code fit_setup(fit_ctx *k, tg_status *st)
{
    const tg_fit_options *o = k->o;
    tg_code rc;
    k->p = o->nterms > 0 ? o->nterms : tg_basis_count();
    if (k->p > TG_FIT_MAX_TERMS)
        return tg_fail(st, TG_ERR_INTERNAL, "fit: too many terms");
    for (int c = 0; c < k->p; c++) {
        k->terms[c] = o->nterms > 0 ? o->terms[c] : c;
        k->names[c] = tg_basis_term_at(k->terms[c])->name;
    }
    if (!(k->d = tg_fit_data_open(o->input, o->target, k->terms, k->p, st)))
        return st->code ? st->code : TG_ERR_IO;
    k->nl = tg_fit_data_layers(k->d);
    k->na = tg_fit_data_nodes(k->d);
    const int nrec = tg_fit_data_samples(k->d);
    if (nrec < 1)
        return tg_fail(st, TG_ERR_IO, "%s: no samples", o->input);
    k->first[W_TRAIN] = o->train_first < 0 ? 0 : o->train_first;
    k->last[W_TRAIN] = o->train_first < 0 ? nrec - 1 : o->train_last;
    k->first[W_TEST] = o->test_first;
    k->last[W_TEST] = o->test_last;
    if ((rc = check_window(k->first[W_TRAIN], k->last[W_TRAIN], nrec, "--train", st, o->input)) ||
        (o->test_first >= 0 &&
         (rc = check_window(o->test_first, o->test_last, nrec, "--test", st, o->input))))
        return rc;
    k->total = k->last[W_TRAIN] - k->first[W_TRAIN] + 1 +
               (k->first[W_TEST] >= 0 ? k->last[W_TEST] - k->first[W_TEST] + 1 : 0);
    const size_t rows = (size_t)o->chunk_samples * k->nl * k->na;
    k->X = malloc(sizeof(double) * rows * k->p);
    k->t = malloc(sizeof(double) * rows);
    if (!k->X || !k->t)
        return tg_fail(st, TG_ERR_NOMEM, "fit: no memory for a chunk of %d samples (%.3g MB); "
                       "lower --chunk-samples", o->chunk_samples,
                       rows * (k->p + 1) * 8.0 / 1e6);
    for (int w = 0; w < 2; w++)
        for (int l = 0; l < k->nl; l++)
            if (!(k->acc[w][l] = tg_fit_acc_create(k->p, st)))
                return st->code;
    return o->dump_path ? dump_open(k, st) : TG_OK;
}

/* The fits (per layer or one for every layer) on the training window with
 * their backward-elimination paths, then the skill of every layer in both
 * windows. */
static tg_code fit_all(fit_ctx *k, tg_status *st)
{
    const tg_fit_options *o = k->o;
    tg_code rc = TG_OK;
    k->nfits = o->shared ? 1 : k->nl;
    tg_fit_acc *pool = NULL;
    if (o->shared) {
        if (!(pool = tg_fit_acc_create(k->p, st)))
            rc = st->code;
        for (int l = 0; l < k->nl && rc == TG_OK; l++)
            tg_fit_acc_merge(pool, k->acc[W_TRAIN][l]);
    }
    const double lam = o->set.method == TG_FIT_RIDGE ? o->set.ridge : 0.0;
    for (int f = 0; f < k->nfits && rc == TG_OK; f++) {
        const tg_fit_acc *a = o->shared ? pool : k->acc[W_TRAIN][f];
        rc = tg_fit_solve(a, NULL, k->names, &o->set, &k->res[f], st);
        if (rc == TG_OK && k->res[f].rank < k->res[f].nkept)
            warn_rank(k, f);
        if (rc == TG_OK)
            rc = tg_fit_path_backward(a, NULL, lam, &k->path[f], st);
        if (rc != TG_OK && !o->shared)
            rc = tg_fail(st, rc, "layer %d: %s", f + 1, st->msg);
    }
    tg_fit_acc_destroy(pool);
    if (rc != TG_OK)
        return rc;
    for (int w = 0; w < 2; w++)
        for (int l = 0; l < k->nl; l++) {
            const tg_fit_result *r = &k->res[o->shared ? 0 : l];
            if (w == W_TEST && k->first[W_TEST] < 0)
                k->skill[w][l] = (tg_fit_skill){NAN, NAN, 0};
            else
                k->skill[w][l] = tg_fit_skill_of(k->acc[w][l], r->coef);
        }
    return TG_OK;
}

/* The printed summary: the fit, its skill, the kept coefficients with
 * their units and the elimination path; NULL when out of memory. */
static char *report_text(const fit_ctx *k)
{
    const tg_fit_options *o = k->o;
    tg_strbuf b = {0};
    tg_sb_printf(&b, "fit of %s: %s, %s layers, %d terms\n", o->input,
                 tg_fit_method_name(o->set.method), o->shared ? "shared" : "separate", k->p);
    summary(k, &b, "");
    tg_sb_printf(&b, "layer  term                        coefficient        std        "
                     "unit\n");
    for (int f = 0; f < k->nfits; f++)
        for (int c = 0; c < k->p; c++) {
            const tg_fit_result *r = &k->res[f];
            if (!r->kept[c])
                continue;
            char lay[16];
            layer_label(o->shared, f, lay, sizeof lay);
            tg_sb_printf(&b, "%-6s %-26s %13.6g  ", lay, k->names[c], r->coef[c]);
            if (r->std[c] >= 0)
                tg_sb_printf(&b, "%10.3g", r->std[c]);
            else
                tg_sb_printf(&b, "%10s", "-");
            tg_sb_printf(&b, "  %s\n", tg_basis_term_at(k->terms[c])->coef_unit);
        }
    path_text(k, &b, "");
    if (b.oom) {
        free(b.s);
        return NULL;
    }
    return b.s;
}

tg_code tg_fit_run(const tg_fit_options *o, char **report, tg_status *st)
{
    if (report)
        *report = NULL;
    if (!o || !o->input || !o->output || o->chunk_samples < 1)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_fit_run: bad options");
    if (!o->overwrite && access(o->output, F_OK) == 0)
        return tg_fail(st, TG_ERR_IO, "%s exists; give --overwrite to replace it", o->output);
    if (o->dump_path && !o->overwrite && access(o->dump_path, F_OK) == 0)
        return tg_fail(st, TG_ERR_IO, "--dump-design %s exists; give --overwrite to replace it",
                       o->dump_path);
    tg_code rc0 = dir_writable(o->output, "--out", st);
    if (rc0 == TG_OK && o->dump_path)
        rc0 = dir_writable(o->dump_path, "--dump-design", st);
    if (rc0 != TG_OK)
        return rc0;
    fit_ctx *k = calloc(1, sizeof *k);
    if (!k)
        return tg_fail(st, TG_ERR_NOMEM, "fit: no memory");
    k->o = o;
    k->dump_nc = -1;
    tg_code rc = fit_setup(k, st);
    if (rc == TG_OK)
        rc = read_window(k, W_TRAIN, st);
    if (rc == TG_OK && k->first[W_TEST] >= 0)
        rc = read_window(k, W_TEST, st);
    if (rc == TG_OK)
        rc = fit_all(k, st);
    if (rc == TG_OK && k->dump_nc >= 0) {
        rc = tg_nc_check(nc_close(k->dump_nc), k->dump_tmp, "closing the file", NULL, st);
        k->dump_nc = -1;
        if (rc == TG_OK && rename(k->dump_tmp, o->dump_path) != 0)
            rc = tg_fail(st, TG_ERR_IO, "cannot rename %s to %s: %s", k->dump_tmp, o->dump_path,
                         strerror(errno));
    }
    if (rc == TG_OK)
        rc = write_output(k, st);
    if (rc == TG_OK && report)
        *report = report_text(k);
    ctx_free(k);
    return rc;
}
