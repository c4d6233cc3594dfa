/* coefficients.c - closure "coefficients": a learned linear combination of basis terms.
 *
 * The PV tendency of layer k is
 *     dq_k/dt = s * sum_t c_{k,t} T_t(psi_k, q_k, zeta_k)
 * with T_t the named terms of the basis library (src/model/basis.h: Laplacians
 * and bi-Laplacians of zeta and q, Jacobians, divergences of products of
 * velocity gradients), c_{k,t} read from a coefficients file and s the
 * parameter coefficient_scale. The form is that of model discovery by
 * sparse regression: the sub-grid forcing is regressed on a library of
 * candidate terms, which selects the terms and fits the coefficients
 * (Brunton, Proctor & Kutz 2016, Proc. Natl. Acad. Sci. 113, 3932-3937).
 * The velocity-gradient terms of the library are those of the gradient
 * (tensor-diffusivity) model of sub-filter fluxes (Leonard 1974, Adv.
 * Geophys. 18A, 237-248; Clark, Ferziger & Reynolds 1979, J. Fluid Mech.
 * 91, 1-16). The file format is described in src/model/basis.h.
 *
 * Uncertain coefficients: with `sample = true`, each file line that gives
 * a standard deviation draws its coefficient once per ensemble member,
 *     c = mean + std * z,  z ~ N(0, 1)
 * (Box-Muller from Philox, src/numerics/rng.h), with z a pure function of
 * ([initial] seed, member, term, line's layer), so a member always gets the
 * same coefficients and members differ (parameter perturbation of an
 * ensemble; Palmer et al. 2009, ECMWF Tech. Memo. 598, section 4). A line
 * for `all` layers draws one value that every layer uses.
 *
 * The two linear vorticity terms lap_zeta and lap2_zeta are applied
 * together through the tools' viscosity operator (the core's code path):
 * c_lap_zeta = A2 and c_lap2_zeta = -A4 give the tendency of the built-in
 * scheme `viscosity` bit for bit. The other terms are added in the order of
 * the basis table.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "basis.h"
#include "closure.h"
#include "rng.h"

enum { P_FILE, P_SAMPLE, P_SCALE, P_N };

static const tg_closure_param params[P_N] = {
    [P_FILE] = {"file", "", TG_PARAM_TEXT, 0.0, 0.0, 0.0, "",
                "coefficients file: '# units:' header, then 'layer term coefficient [std]' lines"},
    [P_SAMPLE] = {"sample", "", TG_PARAM_BOOL, 0.0, 0.0, 1.0, NULL,
                  "draw each coefficient that has a std once per ensemble member"},
    [P_SCALE] = {"coefficient_scale", "", TG_PARAM_REAL, 1.0, -1e3, 1e3, NULL,
                 "multiplies every coefficient (1 = as in the file)"},
};

/* High bits of the Philox counter word that carries the term index, so
 * these draws never share a counter with other streams of the same seed. */
#define COEF_STREAM_TAG 0x7C0E0000u

typedef struct {
    int nl, nterms;
    long npl;
    int a0, a1, ns;
    int t_lap, t_lap2;          /* table indices of lap_zeta and lap2_zeta */
    double *coef;               /* nl*nterms, effective (scaled, sampled) */
    unsigned char *chosen;      /* nl*nterms */
    tg_basis *basis;
    double *work;               /* npl */
} coef_state;

static void coef_destroy(void *state)
{
    coef_state *c = state;
    if (!c)
        return;
    tg_basis_destroy(c->basis);
    free(c->coef);
    free(c->chosen);
    free(c->work);
    free(c);
}

/* dir/path when path is relative and dir is given. */
static void resolve_path(const char *dir, const char *path, char *out, size_t n)
{
    if (path[0] == '/' || !dir || dir[0] == '\0')
        snprintf(out, n, "%s", path);
    else
        snprintf(out, n, "%s/%s", dir, path);
}

static tg_code coef_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    coef_state *c = calloc(1, sizeof *c);
    if (!c)
        return tg_fail(st, TG_ERR_NOMEM, "no memory");
    c->nl = s->nlayers;
    c->nterms = tg_basis_count();
    c->ns = s->ns;
    c->a0 = s->a0;
    c->a1 = s->a1;
    c->npl = (long)s->ns * s->ns;
    c->t_lap = tg_basis_find("lap_zeta");
    c->t_lap2 = tg_basis_find("lap2_zeta");
    c->coef = calloc((size_t)c->nl * c->nterms, sizeof(double));
    c->chosen = calloc((size_t)c->nl * c->nterms, 1);
    c->work = calloc((size_t)c->npl, sizeof(double));
    if (!c->coef || !c->chosen || !c->work) {
        coef_destroy(c);
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the coefficients");
    }
    c->basis = tg_basis_create(s->ns, s->a0, s->a1, s->dx, s->tools, st);
    if (!c->basis) {
        coef_destroy(c);
        return st ? st->code : TG_ERR_NOMEM;
    }

    char path[4096];
    resolve_path(s->config_dir, s->texts[P_FILE], path, sizeof path);
    tg_coef_list list;
    tg_code rc = tg_coef_read(path, c->nl, &list, st);
    if (rc != TG_OK) {
        coef_destroy(c);
        return rc;
    }
    const int sample = s->params[P_SAMPLE] != 0.0;
    const double scale = s->params[P_SCALE];
    int nsampled = 0;
    for (int i = 0; i < list.n; i++) {
        const tg_coef_entry *e = &list.e[i];
        double value = e->mean;
        if (sample && e->std > 0.0) {
            /* One draw per (seed, member, term, layer of the line; 0 = all). */
            double z[2];
            tg_normal2(s->seed, (uint32_t)s->member, COEF_STREAM_TAG | (uint32_t)e->term,
                       (uint32_t)(e->layer + 1), z);
            value = e->mean + e->std * z[0];
            nsampled++;
        }
        const tg_basis_term *bt = tg_basis_term_at(e->term);
        char lay[16];
        if (e->layer < 0)
            snprintf(lay, sizeof lay, "all");
        else
            snprintf(lay, sizeof lay, "%d", e->layer + 1);
        tg_log(TG_LOG_INFO, "coefficients: layer %s %s = %.17g %s%s", lay, bt->name,
               scale * value, bt->coef_unit,
               (sample && e->std > 0.0) ? " (drawn for this member)" : "");
        for (int k = 0; k < c->nl; k++) {
            if (e->layer >= 0 && e->layer != k)
                continue;
            c->coef[k * c->nterms + e->term] = scale * value;
            c->chosen[k * c->nterms + e->term] = 1;
        }
    }
    if (sample && nsampled == 0)
        tg_log(TG_LOG_WARN, "coefficients: sample = true, but %s gives no std; nothing is drawn",
               path);
    tg_coef_list_free(&list);
    *state = c;
    return TG_OK;
}

static tg_code coef_tendency(void *state, const tg_closure_view *view, double *tend,
                             tg_status *st)
{
    const coef_state *c = state;
    const tg_closure_tools *t = view->tools;
    const int ns = c->ns, a0 = c->a0, a1 = c->a1, nt = c->nterms;
    for (int k = 0; k < c->nl; k++) {
        const long off = k * c->npl;
        double *out = tend + off;
        const double *ck = c->coef + k * nt;
        const unsigned char *on = c->chosen + k * nt;
        /* lap_zeta and lap2_zeta: the viscosity operator, A2 = c1, A4 = -c2. */
        if (on[c->t_lap] || on[c->t_lap2]) {
            const double A2 = on[c->t_lap] ? ck[c->t_lap] : 0.0;
            const double A4 = (on[c->t_lap2] && ck[c->t_lap2] != 0.0) ? -ck[c->t_lap2] : 0.0;
            t->viscosity(t->ctx, view->zeta + off, A2, A4, out);
        } else {
            for (int j = a0; j < a1; j++)
                memset(out + (long)j * ns + a0, 0, sizeof(double) * (size_t)(a1 - a0));
        }
        for (int term = 0; term < nt; term++) {
            if (!on[term] || term == c->t_lap || term == c->t_lap2)
                continue;
            tg_code rc = tg_basis_eval(c->basis, term, view->psi + off, view->q + off,
                                       view->zeta + off, view->u + off, view->v + off, c->work,
                                       st);
            if (rc != TG_OK)
                return rc;
            const double a = ck[term];
            for (int j = a0; j < a1; j++)
                for (int i = a0; i < a1; i++)
                    out[(long)j * ns + i] += a * c->work[(long)j * ns + i];
        }
    }
    return TG_OK;
}

const tg_closure_ops tg_scheme_coefficients = {
    .abi = TG_CLOSURE_ABI,
    .name = "coefficients",
    .summary = "learned coefficients times named basis terms (Laplacians, Jacobians, "
               "gradient-model divergences) read from a file",
    .source = "Brunton, Proctor & Kutz 2016, Proc. Natl. Acad. Sci. 113, 3932-3937 (sparse "
              "regression on a term library); Clark, Ferziger & Reynolds 1979, J. Fluid Mech. 91, "
              "1-16 (gradient model)",
    .dissipative = 0,
    .nparams = P_N,
    .params = params,
    .create = coef_create,
    .tendency = coef_tendency,
    .destroy = coef_destroy,
};
