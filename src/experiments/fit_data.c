/* fit_data.c - design rows of a closure fit from subgrid.nc (fit_data.h).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L
#include "fit_data.h"

#include <math.h>
#include <netcdf.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "basis.h"
#include "closure_tools.h"
#include "fit.h"
#include "ncio_util.h"
#include "ncverify.h"
#include "twin.h"
#include "twin_io.h"

#define NATTR 2
static const char *const attr_names[NATTR] = {"filter", "command_line"};

struct tg_fit_data {
    char path[TG_PATH_LEN];
    tg_fit_target target;
    int p, terms[TG_FIT_MAX_TERMS];
    int nl, nrec, no;
    long na;
    tg_model *m;
    tg_tools *tools;
    tg_basis *basis;
    tg_record_reader *rd;
    double *in, *in2;        /* one record in output layout, nl*no*no */
    double *fx, *fy, *work, *work2;  /* ns*ns each */
    char *attr[NATTR];
};

void tg_fit_data_close(tg_fit_data *d)
{
    if (!d)
        return;
    tg_record_reader_close(d->rd);
    tg_basis_destroy(d->basis);
    tg_tools_destroy(d->tools);
    tg_model_destroy(d->m);
    free(d->in);
    free(d->in2);
    free(d->fx);
    free(d->fy);
    free(d->work);
    free(d->work2);
    for (int a = 0; a < NATTR; a++)
        free(d->attr[a]);
    free(d);
}

/* A text global attribute (malloc'ed) or NULL when absent. */
static char *get_text_attr(int ncid, const char *name)
{
    size_t len;
    nc_type type;
    if (nc_inq_att(ncid, NC_GLOBAL, name, &type, &len) != NC_NOERR || type != NC_CHAR)
        return NULL;
    char *s = malloc(len + 1);
    if (!s)
        return NULL;
    if (nc_get_att_text(ncid, NC_GLOBAL, name, s) != NC_NOERR) {
        free(s);
        return NULL;
    }
    s[len] = '\0';
    return s;
}

/* Reads the header: resolved config, dimensions, the variables needed. */
static tg_code read_header(tg_fit_data *d, char **config_text, int *nx, int *ny, int *nl,
                           tg_status *st)
{
    const char *path = d->path;
    int ncid = -1, dim, var;
    size_t len;
    tg_code code = tg_nc_open_verified(path, &ncid, st);
    if (code)
        return code;
    *config_text = get_text_attr(ncid, "resolved_config");
    if (!*config_text) {
        (void)nc_close(ncid);
        return tg_fail(st, TG_ERR_IO, "%s: no text attribute resolved_config: is this a "
                       "subgrid.nc written by `twingyre twin`?", path);
    }
    for (int a = 0; a < NATTR; a++)
        d->attr[a] = get_text_attr(ncid, attr_names[a]);
    const char *dn[3] = {"x", "y", "layer"};
    int *out[3] = {nx, ny, nl};
    for (int k = 0; k < 3 && !code; k++) {
        code = tg_nc_check(nc_inq_dimid(ncid, dn[k], &dim), path, "finding dimension", dn[k], st);
        if (!code)
            code = tg_nc_check(nc_inq_dimlen(ncid, dim, &len), path, "reading dimension", dn[k],
                               st);
        if (!code)
            *out[k] = (int)len;
    }
    const char *need[3] = {"psi", "subgrid_forcing", "subgrid_flux_y"};
    if (d->target == TG_FIT_TARGET_FLUX)
        need[1] = "subgrid_flux_x";
    for (int k = 0; k < 3 && !code; k++) {
        if (k == 2 && d->target != TG_FIT_TARGET_FLUX)
            break;
        if (nc_inq_varid(ncid, need[k], &var) != NC_NOERR)
            code = tg_fail(st, TG_ERR_IO, "%s: no variable %s (needed for --target %s)", path,
                           need[k], d->target == TG_FIT_TARGET_FLUX ? "flux" : "forcing");
    }
    (void)nc_close(ncid); /* read-only: nothing to lose */
    return code;
}

/* The coarse model of the twin that wrote path, from the file's
 * resolved_config (text), without closures; its grid must match the file's
 * dimensions nx, ny, nl. base and crs are scratch configs. */
static tg_code open_coarse_model(tg_fit_data *d, const char *path, const char *text, int nx,
                                 int ny, int nl, tg_config *base, tg_config *crs, tg_status *st)
{
    char name[TG_PATH_LEN + 40];
    snprintf(name, sizeof name, "%s (attribute resolved_config)", path);
    tg_config_defaults(base);
    tg_status cs;
    tg_status_clear(&cs);
    if (tg_config_load_text(base, text, name, &cs) != TG_OK ||
        tg_config_twin_coarse(base, name, crs, &cs) != TG_OK)
        return tg_fail(st, TG_ERR_IO, "%s", cs.msg);
    /* No closure: only the grid, layers and inversion are needed. The twin
     * checked these settings when it wrote the file (tg_config_check is
     * not repeated: it would only repeat its warnings). */
    crs->nraw = 0;
    if (tg_config_set(crs, "closure.use=none", &cs) != TG_OK)
        return tg_fail(st, TG_ERR_IO, "%s: the coarse config: %s", path, cs.msg);
    if (!(d->m = tg_model_create(crs, st)))
        return st->code ? st->code : TG_ERR_INTERNAL;
    d->nl = d->m->nl;
    d->no = d->m->nout;
    if (nx != d->no || ny != d->no || nl != d->nl)
        return tg_fail(st, TG_ERR_IO, "%s: dimensions x, y, layer are %d, %d, %d but its "
                       "resolved_config gives a coarse grid of %d points and %d layers", path,
                       nx, ny, nl, d->no, d->nl);
    return TG_OK;
}

tg_fit_data *tg_fit_data_open(const char *path, tg_fit_target target, const int *terms, int p,
                              tg_status *st)
{
    tg_fit_data *d = calloc(1, sizeof *d);
    tg_config *base = malloc(sizeof *base), *crs = malloc(sizeof *crs);
    char *text = NULL;
    if (!d || !base || !crs) {
        tg_fail(st, TG_ERR_NOMEM, "fit: no memory to open %s", path);
        goto fail;
    }
    if (p < 1 || p > TG_FIT_MAX_TERMS) {
        tg_fail(st, TG_ERR_INTERNAL, "fit: %d terms (1 to %d allowed)", p, TG_FIT_MAX_TERMS);
        goto fail;
    }
    if (snprintf(d->path, sizeof d->path, "%s", path) >= (int)sizeof d->path) {
        tg_fail(st, TG_ERR_IO, "%s: path too long", path);
        goto fail;
    }
    d->target = target;
    d->p = p;
    memcpy(d->terms, terms, sizeof(int) * (size_t)p);
    int nx = 0, ny = 0, nl = 0;
    if (read_header(d, &text, &nx, &ny, &nl, st) != TG_OK)
        goto fail;

    if (open_coarse_model(d, path, text, nx, ny, nl, base, crs, st) != TG_OK)
        goto fail;
    const tg_geometry *g = d->m->geom;
    d->na = (long)(g->a1 - g->a0) * (g->a1 - g->a0);
    if (!(d->tools = tg_tools_create(d->m->geom, st)) ||
        !(d->basis = tg_basis_create(g->ns, g->a0, g->a1, g->dx, tg_tools_get(d->tools), st)))
        goto fail;
    if (!(d->rd = tg_record_reader_open(path, d->no, d->no, d->nl, st)))
        goto fail;
    d->nrec = tg_record_reader_count(d->rd);
    const size_t nout = (size_t)d->nl * d->no * d->no, npl = (size_t)g->ns * g->ns;
    d->in = malloc(sizeof(double) * nout);
    d->in2 = malloc(sizeof(double) * nout);
    d->fx = calloc(npl, sizeof(double));
    d->fy = calloc(npl, sizeof(double));
    d->work = calloc(npl, sizeof(double));
    d->work2 = calloc(npl, sizeof(double));
    if (!d->in || !d->in2 || !d->fx || !d->fy || !d->work || !d->work2) {
        tg_fail(st, TG_ERR_NOMEM, "fit: no memory for the work arrays of %s", path);
        goto fail;
    }
    free(text);
    free(base);
    free(crs);
    return d;
fail:
    free(text);
    free(base);
    free(crs);
    tg_fit_data_close(d);
    return NULL;
}

int tg_fit_data_samples(const tg_fit_data *d) { return d->nrec; }
int tg_fit_data_layers(const tg_fit_data *d) { return d->nl; }
long tg_fit_data_nodes(const tg_fit_data *d) { return d->na; }
const tg_model *tg_fit_data_model(const tg_fit_data *d) { return d->m; }

const char *tg_fit_data_attr(const tg_fit_data *d, const char *name)
{
    for (int a = 0; a < NATTR; a++)
        if (!strcmp(attr_names[a], name))
            return d->attr[a] ? d->attr[a] : "";
    return "";
}

/* Layer k of an output-layout record into the stored layout f (ns*ns). */
static void unpack_layer(const tg_fit_data *d, const double *src, int k, double *f)
{
    const tg_geometry *g = d->m->geom;
    const int no = d->no, ns = g->ns;
    for (int j = 0; j < no; j++)
        memcpy(f + (long)(j + g->o0) * ns + g->o0, src + ((long)k * no + j) * no,
               sizeof(double) * (size_t)no);
}

static int bad_value(double v)
{
    return !isfinite(v) || fabs(v) >= 0.5 * TG_TWIN_FILL;
}

/* The basis terms of the model's state (set from a record) as the columns
 * of X, a row per active node, layer k's rows from X + k * layer_stride * p. */
static tg_code term_rows(tg_fit_data *d, double *X, long layer_stride, tg_status *st)
{
    const tg_model *m = d->m;
    const tg_geometry *g = m->geom;
    const int ns = g->ns, a0 = g->a0, a1 = g->a1, p = d->p;
    const long npl = m->npl;
    tg_code rc;
    for (int k = 0; k < d->nl; k++) {
        const long off = k * npl;
        double *Xk = X + (long)k * layer_stride * p;
        for (int c = 0; c < p; c++) {
            if ((rc = tg_basis_eval(d->basis, d->terms[c], m->psi + off, m->q + off,
                                    m->zeta + off, NULL, NULL, d->work, st)) != TG_OK)
                return rc;
            long r = 0;
            for (int j = a0; j < a1; j++)
                for (int i = a0; i < a1; i++, r++)
                    Xk[r * p + c] = d->work[(long)j * ns + i];
        }
    }
    return TG_OK;
}

/* For --target flux: div F of layer k of the record in d->in (F_x) and
 * d->in2 (F_y) into d->work on the active nodes; a fill value or non-finite
 * flux on a node the differences read is refused. */
static tg_code flux_divergence(tg_fit_data *d, int rec, int k, tg_status *st)
{
    const tg_geometry *g = d->m->geom;
    const tg_closure_tools *tl = tg_tools_get(d->tools);
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    unpack_layer(d, d->in, k, d->fx);
    unpack_layer(d, d->in2, k, d->fy);
    if (g->o0 == g->a0) { /* the ring is not in the file: the halo */
        tl->fill_ring(tl->ctx, d->fx, TG_RING_ZERO);
        tl->fill_ring(tl->ctx, d->fy, TG_RING_ZERO);
    }
    for (int j = a0 - 1; j <= a1; j++)
        for (int i = a0 - 1; i <= a1; i++) {
            const long q = (long)j * ns + i;
            if (bad_value(d->fx[q]) || bad_value(d->fy[q]))
                return tg_fail(st, TG_ERR_IO,
                               "%s: variable subgrid_flux_x or subgrid_flux_y, record %d, "
                               "layer %d, node (x %d, y %d): fill value or not finite",
                               d->path, rec, k + 1, i - g->o0, j - g->o0);
        }
    /* div F by the tools' centred differences: work = d_x F_x,
     * work2 = d_y F_y, summed into work on the active nodes. */
    tl->ddx(tl->ctx, d->fx, d->work);
    tl->ddy(tl->ctx, d->fy, d->work2);
    for (int j = a0; j < a1; j++)
        for (int i = a0; i < a1; i++)
            d->work[(long)j * ns + i] += d->work2[(long)j * ns + i];
    return TG_OK;
}

/* The target of every layer's rows (-S_q, or -div F for --target flux) of
 * record rec, layer k's from t + k * layer_stride. */
static tg_code target_rows(tg_fit_data *d, int rec, double *t, long layer_stride, tg_status *st)
{
    const tg_geometry *g = d->m->geom;
    const int ns = g->ns, a0 = g->a0, a1 = g->a1;
    tg_code rc;
    const char *tv = d->target == TG_FIT_TARGET_FLUX ? "subgrid_flux_x" : "subgrid_forcing";
    if ((rc = tg_record_reader_get(d->rd, tv, rec, 0, d->in, st)) != TG_OK)
        return rc;
    if (d->target == TG_FIT_TARGET_FLUX &&
        (rc = tg_record_reader_get(d->rd, "subgrid_flux_y", rec, 0, d->in2, st)) != TG_OK)
        return rc;
    for (int k = 0; k < d->nl; k++) {
        double *tk = t + (long)k * layer_stride;
        if (d->target == TG_FIT_TARGET_FORCING)
            unpack_layer(d, d->in, k, d->work);
        else if ((rc = flux_divergence(d, rec, k, st)) != TG_OK)
            return rc;
        long r = 0;
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++, r++) {
                const double v = d->work[(long)j * ns + i];
                if (bad_value(v))
                    return tg_fail(st, TG_ERR_IO,
                                   "%s: variable %s, record %d, layer %d, node (x %d, y %d): "
                                   "fill value or not finite on an interior node",
                                   d->path, tv, rec, k + 1, i - g->o0, j - g->o0);
                tk[r] = -v;
            }
    }
    return TG_OK;
}

tg_code tg_fit_data_rows(tg_fit_data *d, int rec, double *X, double *t, long layer_stride,
                         tg_status *st)
{
    tg_code rc;
    if (rec < 0 || rec >= d->nrec)
        return tg_fail(st, TG_ERR_INTERNAL, "%s: no record %d", d->path, rec);
    if ((rc = tg_record_reader_get(d->rd, "psi", rec, 0, d->in, st)) != TG_OK)
        return rc;
    const long nout = (long)d->nl * d->no * d->no;
    for (long i = 0; i < nout; i++)
        if (!isfinite(d->in[i]))
            return tg_fail(st, TG_ERR_IO, "%s: variable psi, record %d: value %ld is not finite",
                           d->path, rec, i);
    tg_model_set_psi(d->m, d->in);
    if ((rc = term_rows(d, X, layer_stride, st)) != TG_OK)
        return rc;
    return target_rows(d, rec, t, layer_stride, st);
}
