/* twin.c - the twin experiment driver (twin.h): derived configs, the
 * reference run with its samples, the coarse runs, then the skill stage
 * (twin_skill.c).
 *
 * The reference is stepped here with the model's own pieces (tg_step,
 * tg_diag_compute, the budget records of budget.h) so that its state is
 * sampled in memory; the coarse runs go through tg_run, exactly as
 * `twingyre run` would run them, from a starting file written here.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#define _POSIX_C_SOURCE 200809L
#include "twin.h"
#include "textfile.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "budget.h"
#include "closure_host.h"
#include "coarsen.h"
#include "constants.h"
#include "fdops.h"
#include "initial.h"
#include "geometry.h"
#include "model.h"
#include "ncio.h"
#include "spectrum.h"
#include "stepper.h"
#include "subgrid.h"
#include "twin_io.h"
#include "twin_skill.h"

#define MAX_RUNS (TG_MAX_CLOSURES * 100)

typedef struct {
    tg_config base, ref, coarse;
    int nclos;
    tg_skill_closure clos[TG_MAX_CLOSURES];
    tg_config clos_cfg[TG_MAX_CLOSURES];     /* coarse config with that closure */
    int nruns;
    tg_skill_run run[MAX_RUNS];
    char dir[TG_PATH_LEN];
    const char *origin;
    int ratio;                  /* set by the reference run */
    double width_m, cutoff;     /* the filter's width and sharp cutoff */
} twin_ctx;

/* ------------------------------------------------------------------ */
/* Configs                                                             */
/* ------------------------------------------------------------------ */

/* The label of one compare entry: "none", the scheme's name, or the
 * plugin's name. */
static tg_code entry_label(const tg_config *coarse, const char *use, const char *origin,
                           char *label, size_t n, tg_status *st)
{
    if (!strcmp(use, "none")) {
        snprintf(label, n, "none");
        return TG_OK;
    }
    tg_config *tmp = malloc(sizeof *tmp);
    tg_closure_spec *spec = malloc(sizeof *spec);
    if (!tmp || !spec) {
        free(tmp);
        free(spec);
        return tg_fail(st, TG_ERR_NOMEM, "twin: no memory to resolve closures");
    }
    *tmp = *coarse;
    tmp->nraw = 0;
    char a[TG_RAW_TEXT + 16];
    snprintf(a, sizeof a, "closure.use=%.*s", TG_RAW_TEXT - 1, use);
    tg_code rc = tg_config_set(tmp, a, st);
    if (rc == TG_OK)
        rc = tg_closure_spec_resolve(tmp, origin, spec, st);
    if (rc == TG_OK)
        snprintf(label, n, "%s", spec->n > 0 ? spec->c[0].label : "none");
    free(tmp);
    free(spec);
    return rc;
}

/* The label of a file entry "coefficients:PATH" or "network:PATH": the
 * scheme, '-', and the file's name without its directory and last
 * extension, with any character other than letters, digits, '-', '_' and
 * '.' replaced by '_' (it names the coarse run's directory). */
static void fitted_label(const char *scheme, const char *path, char *label, size_t n)
{
    const char *b = strrchr(path, '/');
    b = b ? b + 1 : path;
    const char *dot = strrchr(b, '.');
    size_t len = (dot && dot > b) ? (size_t)(dot - b) : strlen(b);
    int w = snprintf(label, n, "%s-", scheme);
    for (size_t i = 0; i < len && (size_t)w + 1 < n; i++) {
        char ch = b[i];
        int okc = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
                  (ch >= '0' && ch <= '9') || ch == '-' || ch == '_' || ch == '.';
        label[w++] = okc ? ch : '_';
    }
    label[w] = '\0';
}

/* Derives every config of the twin into c from cfg, which
 * tg_config_validate(TG_USE_TWIN) has passed: the reference and, for each
 * compared closure, its coarse run, each keeping only the closure sections
 * it uses. */
static tg_code prepare(twin_ctx *c, const tg_config *cfg, const char *origin, tg_status *st)
{
    tg_code rc;
    c->base = *cfg;
    c->origin = origin;
    snprintf(c->dir, sizeof c->dir, "%s", cfg->out_directory);
    if ((rc = tg_config_twin_reference(cfg, origin, &c->ref, st)) != TG_OK ||
        (rc = tg_config_twin_coarse(cfg, origin, &c->coarse, st)) != TG_OK)
        return rc;
    if (cfg->step_choice == TG_STEP_ADAPTIVE)
        tg_log(TG_LOG_INFO, "twin: the reference run takes fixed steps of step_s = %g s; "
                            "adaptive steps apply to the coarse runs",
               cfg->step_s);
    char used[TG_MAX_CLOSURES][TG_SECTION_LEN];
    int nused = 0;
    if ((rc = tg_closure_keep_used(&c->ref, origin, used, TG_MAX_CLOSURES, &nused, st)) != TG_OK)
        return tg_fail(st, rc, "the reference run: %s", st->msg);

    char entries[TG_MAX_CLOSURES][TG_RAW_TEXT];
    const int nent = tg_config_twin_entries(cfg, entries);
    c->nclos = nent;
    for (int i = 0; i < nent; i++) {
        tg_skill_closure *cl = &c->clos[i];
        memset(cl, 0, sizeof *cl);
        snprintf(cl->use, sizeof cl->use, "%.*s", TG_RAW_TEXT - 1, entries[i]);
        char fitted[TG_PATH_LEN];
        const char *is_fitted = tg_config_fitted_entry(cfg, entries[i], fitted, sizeof fitted);
        if (is_fitted)
            fitted_label(is_fitted, fitted, cl->label, sizeof cl->label);
        else if ((rc = entry_label(&c->coarse, entries[i], origin, cl->label, sizeof cl->label,
                                   st)) != TG_OK)
            return tg_fail(st, rc, "[twin] compare: %s", st->msg);
        for (int j = 0; j < i; j++)
            if (!strcmp(c->clos[j].label, cl->label))
                return tg_fail(st, TG_ERR_CONFIG, "%s: [twin] compare: '%s' names %s again",
                               origin ? origin : "config", entries[i], cl->label);
        tg_config *cc = &c->clos_cfg[i];
        if ((rc = tg_config_twin_entry(cfg, &c->coarse, entries[i], cc, st)) != TG_OK ||
            (rc = tg_closure_keep_used(cc, origin, used, TG_MAX_CLOSURES, &nused, st)) != TG_OK)
            return tg_fail(st, rc, "the coarse run with closure %s: %s", cl->label, st->msg);
        if (is_fitted && !strcmp(is_fitted, "network")) {
            /* A network is loaded and tried on the coarse grid now, not after
             * the reference has run. */
            tg_model *m = tg_model_create(cc, st);
            if (!m)
                return tg_fail(st, st->code, "the coarse run with closure %s: %s", cl->label,
                               st->msg);
            tg_model_destroy(m);
        }
    }
    return TG_OK;
}

/* The twin's resolved config for the files' attributes: the reference's
 * settings (with the closure sections it uses), then each compared
 * closure's resolved section (without repeating [closure] use). */
static char *config_text(const twin_ctx *c)
{
    tg_config *tmp = malloc(sizeof *tmp);
    if (!tmp)
        return NULL;
    *tmp = c->base;
    tmp->nraw = 0;
    for (int r = 0; r < c->ref.nraw; r++)
        tmp->raw[tmp->nraw++] = c->ref.raw[r];
    char *head = tg_config_to_ini(tmp);
    free(tmp);
    if (!head)
        return NULL;
    size_t len = strlen(head), cap = len + 1;
    char *out = malloc(cap);
    if (!out) {
        free(head);
        return NULL;
    }
    memcpy(out, head, len + 1);
    free(head);
    for (int i = 0; i < c->nclos; i++) {
        if (!c->clos[i].model && strcmp(c->clos[i].label, "none") == 0)
            continue;
        char *cl = tg_closure_config_ini(&c->clos_cfg[i]);
        if (!cl) {
            free(out);
            return NULL;
        }
        /* Skip the "[closure] use = ..." block: its sections start at the next "\n[". */
        const char *sec = strstr(cl + 1, "\n[");
        const char *use = strstr(cl, "\n[closure]");
        if (use && sec == use)
            sec = strstr(use + 1, "\n[");
        if (sec) {
            size_t add = strlen(sec);
            char *bigger = realloc(out, cap + add);
            if (!bigger) {
                free(cl);
                free(out);
                return NULL;
            }
            out = bigger;
            memcpy(out + len, sec, add + 1);
            len += add;
            cap += add;
        }
        free(cl);
    }
    return out;
}

/* ------------------------------------------------------------------ */
/* Files and directories                                               */
/* ------------------------------------------------------------------ */

/* Refuses to replace an earlier twin's outputs without overwrite. */
static tg_code outputs_free(const twin_ctx *c, tg_status *st)
{
    char path[TG_PATH_LEN + 256];
    const char *top[] = {"subgrid.nc", "skill.json", "skill.csv", "reference/budget.nc",
                         "reference/fields.nc"};
    for (size_t i = 0; i < sizeof top / sizeof top[0]; i++) {
        snprintf(path, sizeof path, "%s/%s", c->dir, top[i]);
        if (access(path, F_OK) == 0)
            return tg_fail(st, TG_ERR_IO,
                           "%s already exists; choose another output directory than %s or pass "
                           "--overwrite", path, c->dir);
    }
    for (int r = 0; r < c->nruns; r++)
        for (int f = 0; f < 2; f++) {
            snprintf(path, sizeof path, "%s/%s/%s", c->dir, c->run[r].dir,
                     f ? "budget.nc" : "fields.nc");
            if (access(path, F_OK) == 0)
                return tg_fail(st, TG_ERR_IO,
                               "%s already exists; choose another output directory than %s or "
                               "pass --overwrite", path, c->dir);
        }
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* Stochastic closures                                                 */
/* ------------------------------------------------------------------ */

/* Coarse models of the closures (offline skill) and the list of runs. */
static tg_code setup_runs(twin_ctx *c, tg_status *st)
{
    tg_code rc;
    c->nruns = 0;
    for (int i = 0; i < c->nclos; i++) {
        tg_skill_closure *cl = &c->clos[i];
        if (strcmp(cl->label, "none") != 0) {
            cl->model = tg_model_create(&c->clos_cfg[i], st);
            if (!cl->model)
                return st->code ? st->code : TG_ERR_INTERNAL;
            if ((rc = tg_model_closures_stochastic(cl->model, &c->clos_cfg[i], &cl->stochastic,
                                                   st)) != TG_OK)
                return rc;
        }
        const int members = cl->stochastic ? c->base.twin_members : 1;
        for (int mb = 0; mb < members; mb++) {
            if (c->nruns >= MAX_RUNS)
                return tg_fail(st, TG_ERR_CONFIG, "twin: more than %d coarse runs", MAX_RUNS);
            tg_skill_run *r = &c->run[c->nruns++];
            memset(r, 0, sizeof *r);
            r->closure = i;
            r->member = mb;
            if (cl->stochastic) {
                snprintf(r->name, sizeof r->name, "%s member %d", cl->label, mb);
                snprintf(r->dir, sizeof r->dir, "coarse-%s-member-%d", cl->label, mb);
            } else {
                snprintf(r->name, sizeof r->name, "%s", cl->label);
                snprintf(r->dir, sizeof r->dir, "coarse-%s", cl->label);
            }
        }
    }
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* The reference                                                       */
/* ------------------------------------------------------------------ */

typedef struct {
    twin_ctx *c;
    const tg_twin_options *opt;
    tg_model *m;
    tg_geometry *gc;            /* coarse geometry */
    tg_coarsen *cg;
    tg_subgrid *sg;
    tg_spectrum *spec;
    tg_record_file *sub;        /* subgrid.nc */
    tg_budget_file *bud;        /* reference/budget.nc */
    tg_fields_file *ff;         /* reference/fields.nc ([twin] reference_fields = yes), or NULL */
    tg_budget_layout lay;
    tg_nc_grid fine_grid, coarse_grid;
    double *fine_psi, *fine_q;  /* fine output layout, nl*nout_f^2 */
    double *out[8];             /* coarse output layout, nl*nout_c^2 each */
    double *spec_out;           /* nl*nbins */
    double *rec;                /* one budget record */
    char *cfg_text;
    int nout_c;
    long npc;
} ref_ctx;

static const tg_twin_var subgrid_vars[8] = {
    {"psi", "m2 s-1", "coarse-grained streamfunction", 0},
    {"q", "s-1", "coarse-grained potential vorticity (in a basin including the planetary term "
                 "beta (y - y0); periodic: the eddy potential vorticity)", 0},
    {"u", "m s-1", "coarse-grained eastward velocity -d(psi)/dy", 0},
    {"v", "m s-1", "coarse-grained northward velocity d(psi)/dx", 0},
    {"zeta", "s-1", "coarse-grained relative vorticity", 0},
    {"subgrid_forcing", "s-2",
     "sub-grid potential vorticity forcing S_q = bar(J(psi, q)) - J(bar psi, bar q); the "
     "coarse-grained PV changes by -S_q besides the resolved terms (defined on interior nodes)",
     1},
    {"subgrid_flux_x", "m s-2", "eastward sub-grid PV flux bar(u q) - bar(u) bar(q)", 0},
    {"subgrid_flux_y", "m s-2", "northward sub-grid PV flux bar(v q) - bar(v) bar(q)", 0},
};

static void ref_free(ref_ctx *r)
{
    for (int v = 0; v < 8; v++)
        free(r->out[v]);
    free(r->fine_psi);
    free(r->fine_q);
    free(r->spec_out);
    free(r->rec);
    free(r->cfg_text);
    tg_spectrum_destroy(r->spec);
    tg_subgrid_destroy(r->sg);
    tg_coarsen_destroy(r->cg);
    tg_geometry_destroy(r->gc);
    tg_model_destroy(r->m);
}

/* Coarse stored layout -> coarse output layout (one layer). */
static void pack_coarse(const tg_geometry *g, const double *f, double *out)
{
    const int no = g->o1 - g->o0;
    for (int j = 0; j < no; j++)
        memcpy(out + (long)j * no, f + (long)(j + g->o0) * g->ns + g->o0, sizeof(double) * no);
}

/* Coarse-grains the current reference state and appends it to subgrid.nc;
 * the first sample also writes the coarse runs' starting file. */
static tg_code sample(ref_ctx *r, double window_time_s, int first, tg_status *st)
{
    tg_model *m = r->m;
    tg_subgrid_compute(r->sg, m->psi, m->q, m->zeta);
    const tg_subgrid_fields *f = tg_subgrid_result(r->sg);
    const double *src[8] = {f->psi, f->q, f->u, f->v, f->zeta, f->forcing, f->flux_x, f->flux_y};
    const tg_geometry *g = r->gc;
    const int no = r->nout_c;
    const long no2 = (long)no * no;
    tg_code rc;
    for (int v = 0; v < 8; v++)
        for (int k = 0; k < m->nl; k++)
            pack_coarse(g, src[v] + k * r->npc, r->out[v] + k * no2);
    /* S_q is not defined on the ring (basin walls). */
    for (int k = 0; k < m->nl; k++)
        for (int j = 0; j < no; j++)
            for (int i = 0; i < no; i++) {
                const int gi = i + g->o0, gj = j + g->o0;
                if (gi < g->a0 || gi >= g->a1 || gj < g->a0 || gj >= g->a1)
                    r->out[5][k * no2 + (long)j * no + i] = TG_TWIN_FILL;
            }
    const int nb = r->spec->nbins;
    for (int k = 0; k < m->nl; k++) {
        const double *pk = f->psi + k * r->npc;
        if ((rc = tg_spectrum_compute(r->spec, r->gc, pk, pk[0], st)) != TG_OK)
            return rc;
        memcpy(r->spec_out + (long)k * nb, r->spec->e, sizeof(double) * nb);
    }
    const double *data[8];
    for (int v = 0; v < 8; v++)
        data[v] = r->out[v];
    if ((rc = tg_record_file_append(r->sub, window_time_s, data, r->spec_out, st)) != TG_OK)
        return rc;
    if (r->ff) {
        tg_model_pack(m, m->psi, r->fine_psi);
        tg_model_pack(m, m->q, r->fine_q);
        if ((rc = tg_fields_append(r->ff, m->time_s, r->fine_psi, r->fine_q, NULL, st)) != TG_OK)
            return rc;
    }
    if (first) {
        char path[TG_PATH_LEN + 32];
        snprintf(path, sizeof path, "%s/coarse_start.nc", r->c->dir);
        const tg_twin_var v = {"psi", "m2 s-1",
                               "coarse-grained reference streamfunction at the start of the "
                               "analysis window: the starting state of every coarse run", 0};
        const double *d[1] = {r->out[0]};
        tg_nc_grid gr = r->coarse_grid;
        gr.title = "twingyre twin: starting state of the coarse runs";
        if ((rc = tg_map_file_write(path, &gr, 0.0, &v, 1, d, NULL, 0, st)) != TG_OK)
            return rc;
    }
    return TG_OK;
}

static tg_code ref_checkpoint(ref_ctx *r, const char *name, double time_s, long step,
                              tg_status *st)
{
    char path[TG_PATH_LEN + 32];
    snprintf(path, sizeof path, "%s/reference/%s", r->c->dir, name);
    tg_model_pack(r->m, r->m->psi, r->fine_psi);
    tg_model_pack(r->m, r->m->q, r->fine_q);
    tg_checkpoint ck = {.time_s = time_s, .step = step, .psi = r->fine_psi, .q = r->fine_q};
    return tg_checkpoint_write(path, &r->fine_grid, &ck, st);
}

/* Initial state of the reference: rest, noise or a file (initial.h); the
 * twin's clock starts at 0 even from a checkpoint. */
static tg_code ref_initial(ref_ctx *r, tg_status *st)
{
    tg_model *m = r->m;
    tg_code rc = tg_state_initial(m, &r->c->ref, NULL, st);
    m->step = 0;
    m->time_s = 0.0;
    return rc;
}

static void report(const tg_twin_options *opt, const char *phase, int index, int count,
                   long step, long first, long last, double dt, const tg_diag *d,
                   const tg_model *m)
{
    if (!opt->progress)
        return;
    double ke = 0.0;
    for (int k = 0; k < m->nl; k++)
        ke += m->cfg.thickness_m[k] * d->kinetic[k] / m->Htot;
    tg_twin_progress p = {.phase = phase, .index = index, .count = count,
                          .p = {.step = step, .step_first = first, .step_last = last,
                                .day = step * dt / TG_SECONDS_PER_DAY,
                                .last_day = last * dt / TG_SECONDS_PER_DAY,
                                .kinetic_energy = ke, .max_cfl = d->max_cfl}};
    opt->progress(&p, opt->progress_user);
}

/* Builds the reference model, the coarse geometry, the coarsening and
 * sub-grid operators, the output buffers, and sets the initial state. */
static tg_code ref_setup(ref_ctx *r, tg_status *st)
{
    twin_ctx *c = r->c;
    r->m = tg_model_create(&c->ref, st);
    if (!r->m)
        return st->code ? st->code : TG_ERR_INTERNAL;
    tg_model *m = r->m;
    r->gc = tg_geometry_create(&c->coarse, st);
    if (!r->gc)
        return st->code ? st->code : TG_ERR_INTERNAL;
    r->cg = tg_coarsen_create(m->geom, r->gc,
                              c->base.twin_filter == TG_TWIN_FILTER_SHARP ? TG_FILTER_SHARP
                                                                          : TG_FILTER_GAUSSIAN,
                              c->base.twin_filter_width_factor, st);
    if (!r->cg || !(r->sg = tg_subgrid_create(r->cg, m->geom, r->gc, m->nl, st)) ||
        !(r->spec = tg_spectrum_create(r->gc, st)))
        return st->code ? st->code : TG_ERR_INTERNAL;
    c->ratio = tg_coarsen_ratio(r->cg);
    c->width_m = tg_coarsen_width(r->cg);
    c->cutoff = tg_coarsen_cutoff(r->cg);
    r->nout_c = r->gc->o1 - r->gc->o0;
    r->npc = (long)r->gc->ns * r->gc->ns;
    const long nf = (long)m->nl * m->nout * m->nout, ncs = (long)m->nl * r->nout_c * r->nout_c;
    r->fine_psi = malloc(sizeof(double) * nf);
    r->fine_q = malloc(sizeof(double) * nf);
    r->spec_out = malloc(sizeof(double) * (size_t)m->nl * r->spec->nbins);
    r->rec = malloc(sizeof(double) * TG_BUDGET_MAX_VARS * TG_MAX_LAYERS);
    r->cfg_text = config_text(c);
    int ok = r->fine_psi && r->fine_q && r->spec_out && r->rec && r->cfg_text;
    for (int v = 0; v < 8; v++)
        ok = ok && (r->out[v] = malloc(sizeof(double) * ncs)) != NULL;
    if (!ok)
        return tg_fail(st, TG_ERR_NOMEM, "twin: no memory for the reference's output buffers");
    return ref_initial(r, st);
}

/* Opens the reference's files: subgrid.nc (coarse grid), reference/budget.nc
 * and, with [twin] reference_fields, reference/fields.nc (fine grid). */
static tg_code ref_open_files(ref_ctx *r, tg_status *st)
{
    twin_ctx *c = r->c;
    tg_model *m = r->m;
    char path[TG_PATH_LEN + 64];
    char refdir[TG_PATH_LEN + 16];
    snprintf(refdir, sizeof refdir, "%s/reference", c->dir);
    tg_code rc = tg_make_dirs(refdir, st);
    if (rc != TG_OK)
        return rc;
    r->fine_grid = (tg_nc_grid){.nx = m->nout, .ny = m->nout, .nlayers = m->nl,
                                .x = tg_model_out_coord(m), .y = tg_model_out_coord(m),
                                .config_text = r->cfg_text,
                                .command_line = r->opt->command_line ? r->opt->command_line : "",
                                .title = "twingyre twin: the fine reference run"};
    r->coarse_grid = r->fine_grid;
    r->coarse_grid.nx = r->coarse_grid.ny = r->nout_c;
    r->coarse_grid.x = r->coarse_grid.y = r->gc->coord + r->gc->o0;
    r->coarse_grid.title = "twingyre twin: coarse-grained reference and sub-grid forcing";
    const tg_nc_wavenumbers wn = {.nbins = r->spec->nbins, .k = r->spec->k,
                                  .bin_width = r->spec->dk};
    const tg_twin_attr atts[] = {
        {"coarsening_ratio", NULL, (double)tg_coarsen_ratio(r->cg)},
        {"filter", c->base.twin_filter == TG_TWIN_FILTER_SHARP ? "sharp" : "gaussian", 0.0},
        {"filter_width_m", NULL, tg_coarsen_width(r->cg)},
        {"filter_cutoff_rad_m", NULL, tg_coarsen_cutoff(r->cg)},
        {"reference_points", NULL, (double)c->ref.points},
        {"reference_grid_spacing_m", NULL, m->geom->dx},
        {"coarse_grid_spacing_m", NULL, r->gc->dx},
        {"window_start_reference_day", NULL, c->base.twin_spinup_days},
        {"comment", "time counts from the start of the analysis window, which is "
                    "window_start_reference_day days into the reference run; an overbar is the "
                    "filter followed by restriction to the coarse nodes", 0.0},
    };
    snprintf(path, sizeof path, "%s/subgrid.nc", c->dir);
    r->sub = tg_record_file_create(path, &r->coarse_grid, &wn, subgrid_vars, 8, atts,
                                   (int)(sizeof atts / sizeof atts[0]), st);
    if (!r->sub)
        return st->code ? st->code : TG_ERR_IO;
    tg_budget_layout_init(&r->lay, m->nl, m->term_active);
    {
        const char *labels[TG_MAX_CLOSURES];
        int n = tg_closure_host_count(m->closures);
        for (int k = 0; k < n; k++)
            labels[k] = tg_closure_host_label(m->closures, k);
        tg_budget_layout_components(&r->lay, n, labels);
    }
    snprintf(path, sizeof path, "%s/reference/budget.nc", c->dir);
    r->bud = tg_budget_create(path, &r->fine_grid, r->lay.var, r->lay.n, st);
    if (!r->bud)
        return st->code ? st->code : TG_ERR_IO;
    if (c->base.twin_reference_fields) {
        snprintf(path, sizeof path, "%s/reference/fields.nc", c->dir);
        if (!(r->ff = tg_fields_create(path, &r->fine_grid, NULL, st)))
            return st->code ? st->code : TG_ERR_IO;
    }
    return TG_OK;
}

/* After a step: TG_OK when the state is finite and within [time] max_cfl;
 * otherwise steps back to the last good state, writes it to
 * reference/checkpoint.nc and fails with TG_ERR_BLOWUP. */
static tg_code ref_check_stable(ref_ctx *r, const tg_diag *after, tg_status *st)
{
    tg_model *m = r->m;
    long bad = tg_diag_nonfinite(m, after, NULL);
    if (!(bad >= 0 || !isfinite(after->energy) || after->max_cfl > r->c->ref.max_cfl))
        return TG_OK;
    const double day = m->time_s / TG_SECONDS_PER_DAY;
    memcpy(m->q, m->q0, sizeof(double) * m->nl * m->npl);
    m->step--;
    tg_model_derive(m);
    tg_status s2;
    tg_status_clear(&s2);
    tg_code crc = ref_checkpoint(r, "checkpoint.nc", m->time_s, m->step, &s2);
    return tg_fail(st, TG_ERR_BLOWUP,
                   "the reference run became unstable at model day %.4f (%s); %s",
                   day, bad >= 0 || !isfinite(after->energy) ? "non-finite PV" : "CFL",
                   crc == TG_OK ? "the last good state is in reference/checkpoint.nc"
                                : "the last good state could not be written");
}

/* Spin-up and analysis window: steps the reference, appends each step's
 * budget, samples the window every [twin] sample_every_days and writes
 * window_start.nc and the closing checkpoint.nc. */
static tg_code ref_integrate(ref_ctx *r, int nphases, tg_status *st)
{
    twin_ctx *c = r->c;
    const tg_twin_options *opt = r->opt;
    tg_model *m = r->m;
    tg_code rc;
    const double dt = c->ref.step_s;
    const long nspin = (long)llround(c->base.twin_spinup_days * TG_SECONDS_PER_DAY / dt);
    const long nwin = (long)llround(c->base.twin_analysis_days * TG_SECONDS_PER_DAY / dt);
    const long every = (long)llround(c->base.twin_sample_every_days * TG_SECONDS_PER_DAY / dt);
    tg_diag before, after;
    tg_term_rates rates;
    memset(&rates, 0, sizeof rates);
    tg_diag_compute(m, &before);
    tg_log(TG_LOG_INFO,
           "reference: %d x %d points, dx %.3f km; spin-up %ld steps, window %ld steps, a sample "
           "every %ld steps onto %d x %d points (r = %d)",
           m->nout, m->nout, m->geom->dx / 1e3, nspin, nwin, every, r->nout_c, r->nout_c,
           tg_coarsen_ratio(r->cg));
    if (nspin == 0) {
        if ((rc = ref_checkpoint(r, "window_start.nc", 0.0, 0, st)) != TG_OK ||
            (rc = sample(r, 0.0, 1, st)) != TG_OK)
            return rc;
    }
    const long total = nspin + nwin;
    while (m->step < total) {
        const int in_window = m->step >= nspin;
        if (opt->stop_requested && *opt->stop_requested) {
            tg_status s2;
            tg_status_clear(&s2);
            ref_checkpoint(r, "checkpoint.nc", m->time_s, m->step, &s2);
            return tg_fail(st, TG_ERR_INTERRUPTED,
                           "stopped on request in the reference run at day %.4g; its state is "
                           "in %s/reference/checkpoint.nc", m->time_s / TG_SECONDS_PER_DAY,
                           c->dir);
        }
        if ((rc = tg_step(m, &rates, st)) != TG_OK)
            return rc;
        tg_diag_compute(m, &after);
        if ((rc = ref_check_stable(r, &after, st)) != TG_OK)
            return rc;
        tg_budget_pack(&r->lay, dt, &before, &after, &rates, r->rec);
        if ((rc = tg_budget_append(r->bud, m->time_s, m->step, r->rec, st)) != TG_OK)
            return rc;
        if (m->step == nspin) {
            tg_log(TG_LOG_INFO, "reference: spin-up done at day %.2f, energy %.6e m2 s-2",
                   m->time_s / TG_SECONDS_PER_DAY, after.energy);
            if ((rc = ref_checkpoint(r, "window_start.nc", m->time_s, m->step, st)) != TG_OK ||
                (rc = sample(r, 0.0, 1, st)) != TG_OK || (rc = tg_budget_flush(r->bud, st)))
                return rc;
        } else if (m->step > nspin && (m->step - nspin) % every == 0) {
            if ((rc = sample(r, (m->step - nspin) * dt, 0, st)) != TG_OK ||
                (rc = tg_budget_flush(r->bud, st)) != TG_OK)
                return rc;
        }
        if (!in_window)
            report(opt, "spin-up", 1, nphases, m->step, 0, nspin, dt, &after, m);
        else
            report(opt, "reference window", 2, nphases, m->step, nspin, total, dt, &after, m);
        before = after;
    }
    tg_log(TG_LOG_INFO, "reference: window done at day %.2f, energy %.6e m2 s-2",
           m->time_s / TG_SECONDS_PER_DAY, before.energy);
    return ref_checkpoint(r, "checkpoint.nc", m->time_s, m->step, st);
}

/* The status a file's close reports into: st while rc is TG_OK, otherwise
 * a cleared scratch status, so that st keeps the first error's message. */
static tg_status *close_status(tg_code rc, tg_status *st, tg_status *scratch)
{
    if (rc == TG_OK)
        return st;
    tg_status_clear(scratch);
    return scratch;
}

static tg_code first_error(tg_code rc, tg_code later)
{
    return rc != TG_OK ? rc : later;
}

/* Closes the reference's open files; returns rc, or the first close error
 * when rc is TG_OK. */
static tg_code ref_close_files(ref_ctx *r, tg_code rc, tg_status *st)
{
    tg_status s2;
    if (r->bud)
        rc = first_error(rc, tg_budget_close(r->bud, close_status(rc, st, &s2)));
    if (r->sub)
        rc = first_error(rc, tg_record_file_close(r->sub, close_status(rc, st, &s2)));
    if (r->ff)
        rc = first_error(rc, tg_fields_close(r->ff, close_status(rc, st, &s2)));
    return rc;
}

/* The fine reference run of the twin: set-up, files, then spin-up and the
 * sampled analysis window (ref_integrate). */
static tg_code run_reference(twin_ctx *c, const tg_twin_options *opt, int nphases,
                             tg_status *st)
{
    ref_ctx r;
    memset(&r, 0, sizeof r);
    r.c = c;
    r.opt = opt;
    tg_code rc = ref_setup(&r, st);
    if (rc == TG_OK)
        rc = ref_open_files(&r, st);
    if (rc == TG_OK)
        rc = ref_integrate(&r, nphases, st);
    rc = ref_close_files(&r, rc, st);
    ref_free(&r);
    return rc;
}

/* ------------------------------------------------------------------ */
/* Coarse runs                                                         */
/* ------------------------------------------------------------------ */

typedef struct {
    const tg_twin_options *opt;
    const char *phase;
    int index, count;
} phase_cb;

static void coarse_progress(const tg_progress *p, void *user)
{
    const phase_cb *pc = user;
    tg_twin_progress tp = {.phase = pc->phase, .index = pc->index, .count = pc->count, .p = *p};
    pc->opt->progress(&tp, pc->opt->progress_user);
}

static tg_code run_coarse(twin_ctx *c, const tg_twin_options *opt, int nphases, tg_status *st)
{
    tg_config *cfg = malloc(sizeof *cfg);
    if (!cfg)
        return tg_fail(st, TG_ERR_NOMEM, "twin: no memory");
    tg_code rc = TG_OK;
    for (int i = 0; i < c->nruns && rc == TG_OK; i++) {
        tg_skill_run *r = &c->run[i];
        *cfg = c->clos_cfg[r->closure];
        cfg->member = r->member;
        cfg->initial_kind = TG_INIT_FILE;
        if (snprintf(cfg->initial_path, sizeof cfg->initial_path, "%s/coarse_start.nc", c->dir) >=
                (int)sizeof cfg->initial_path ||
            snprintf(cfg->out_directory, sizeof cfg->out_directory, "%s/%s", c->dir, r->dir) >=
                (int)sizeof cfg->out_directory) {
            rc = tg_fail(st, TG_ERR_IO, "output directory path too long: %s", c->dir);
            break;
        }
        char phase[200];
        snprintf(phase, sizeof phase, "coarse %s", r->name);
        phase_cb pc = {opt, phase, 3 + i, nphases};
        tg_run_options ro = {.command_line = opt->command_line,
                             .stop_requested = opt->stop_requested, .overwrite = opt->overwrite,
                             .progress = opt->progress ? coarse_progress : NULL,
                             .progress_user = &pc};
        tg_status rs;
        tg_status_clear(&rs);
        tg_code rr = tg_run(cfg, &ro, &rs);
        r->status = rr;
        if (rr == TG_ERR_BLOWUP) {
            snprintf(r->message, sizeof r->message, "%s", rs.msg);
            tg_log(TG_LOG_WARN, "coarse run %s became unstable: %s", r->name, rs.msg);
        } else if (rr != TG_OK) {
            rc = tg_fail(st, rr, "coarse run %s: %s", r->name, rs.msg);
        }
    }
    free(cfg);
    return rc;
}

/* ------------------------------------------------------------------ */
/* The whole twin                                                      */
/* ------------------------------------------------------------------ */

tg_code tg_twin_run(const tg_config *cfg, const tg_twin_options *opt, char **table,
                    tg_status *st)
{
    if (table)
        *table = NULL;
    twin_ctx *c = calloc(1, sizeof *c);
    if (!c)
        return tg_fail(st, TG_ERR_NOMEM, "twin: no memory");
    char *cfg_text = NULL;
    tg_code rc = tg_config_validate(cfg, TG_USE_TWIN, opt->origin, st);
    if (rc == TG_OK)
        rc = prepare(c, cfg, opt->origin, st);
    if (rc == TG_OK)
        rc = setup_runs(c, st);
    if (rc == TG_OK && !opt->overwrite)
        rc = outputs_free(c, st);
    if (rc == TG_OK)
        rc = tg_make_dirs(c->dir, st);
    const int nphases = 2 + c->nruns;
    if (rc == TG_OK)
        rc = run_reference(c, opt, nphases, st);
    if (rc == TG_OK)
        rc = run_coarse(c, opt, nphases, st);
    if (rc == TG_OK && !(cfg_text = config_text(c)))
        rc = tg_fail(st, TG_ERR_NOMEM, "twin: no memory for the resolved config");
    if (rc == TG_OK) {
        tg_skill_job job = {.dir = c->dir, .base = &c->base, .coarse = &c->coarse,
                            .config_text = cfg_text, .command_line = opt->command_line,
                            .ratio = c->ratio, .filter_width_m = c->width_m,
                            .cutoff_rad_m = c->cutoff, .nclosures = c->nclos,
                            .closure = c->clos, .nruns = c->nruns, .run = c->run};
        rc = tg_twin_skill(&job, table, st);
    }
    for (int i = 0; i < c->nclos; i++)
        tg_model_destroy(c->clos[i].model);
    free(cfg_text);
    free(c);
    return rc;
}
