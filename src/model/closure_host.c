/* closure_host.c - resolving, creating and running closure components (closure_host.h). */
#include "closure_host.h"

#include <dlfcn.h>
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "closure_tools.h"
#include "fdops.h"
#include "strbuf.h"

/* ------------------------------------------------------------------ */
/* Plugins                                                             */
/* ------------------------------------------------------------------ */

const tg_closure_ops *tg_closure_load_plugin(const char *path, tg_status *st)
{
    /* The handle stays open for the life of the process: the ops table
     * and its functions live in the plugin. */
    void *h = dlopen(path, RTLD_NOW | RTLD_LOCAL);
    if (!h) {
        tg_fail(st, TG_ERR_CONFIG, "cannot load closure plugin %s: %s", path, dlerror());
        return NULL;
    }
    void *sym = dlsym(h, TG_CLOSURE_ENTRY);
    if (!sym) {
        tg_fail(st, TG_ERR_CONFIG, "closure plugin %s has no function %s()", path,
                TG_CLOSURE_ENTRY);
        dlclose(h);
        return NULL;
    }
    const tg_closure_ops *(*entry)(void);
    memcpy(&entry, &sym, sizeof entry); /* object to function pointer, POSIX-sanctioned */
    const tg_closure_ops *ops = entry();
    if (!ops || ops->abi < 1 || ops->abi > TG_CLOSURE_ABI || !ops->name || !ops->create ||
        !ops->tendency) {
        tg_fail(st, TG_ERR_CONFIG,
                "closure plugin %s: its table is incomplete or built for interface version %d "
                "(this program has %d); rebuild it against this closure.h",
                path, ops ? ops->abi : -1, TG_CLOSURE_ABI);
        return NULL;
    }
    return ops;
}

/* ------------------------------------------------------------------ */
/* Resolution                                                          */
/* ------------------------------------------------------------------ */

/* "ORIGIN:LINE: [section] key" or "--set section.key=value". */
static void where(const tg_raw_entry *e, const char *origin, char *out, size_t n)
{
    if (e->line > 0)
        snprintf(out, n, "%s:%d: [%s] %s", origin ? origin : "config", e->line, e->section,
                 e->key);
    else
        snprintf(out, n, "--set %s.%s=%s", e->section, e->key, e->value);
}

static char *trim(char *s)
{
    while (*s == ' ' || *s == '\t')
        s++;
    char *e = s + strlen(s);
    while (e > s && (e[-1] == ' ' || e[-1] == '\t'))
        *--e = '\0';
    return s;
}

static tg_code parse_param(const tg_closure_param *p, const char *value, double *num, char *text,
                           char *why, size_t n)
{
    char *end;
    switch (p->kind) {
    case TG_PARAM_TEXT:
        if (value[0] == '\0') {
            snprintf(why, n, "expected a value, got nothing");
            return TG_ERR_CONFIG;
        }
        snprintf(text, TG_RAW_TEXT, "%s", value);
        *num = 0.0;
        return TG_OK;
    case TG_PARAM_BOOL:
        if (!strcmp(value, "true") || !strcmp(value, "yes") || !strcmp(value, "1"))
            *num = 1.0;
        else if (!strcmp(value, "false") || !strcmp(value, "no") || !strcmp(value, "0"))
            *num = 0.0;
        else {
            snprintf(why, n, "expected true or false, got '%s'", value);
            return TG_ERR_CONFIG;
        }
        return TG_OK;
    case TG_PARAM_INT:
    case TG_PARAM_REAL: {
        double v = strtod(value, &end);
        if (value[0] == '\0' || *end != '\0' || !isfinite(v) ||
            (p->kind == TG_PARAM_INT && v != floor(v))) {
            snprintf(why, n, "expected %s from %g to %g, got '%s'",
                     p->kind == TG_PARAM_INT ? "a whole number" : "a real number", p->lo, p->hi,
                     value);
            return TG_ERR_CONFIG;
        }
        if (v < p->lo || v > p->hi) {
            snprintf(why, n, "expected %s from %g to %g, got '%s'",
                     p->kind == TG_PARAM_INT ? "a whole number" : "a real number", p->lo, p->hi,
                     value);
            return TG_ERR_CONFIG;
        }
        *num = v;
        return TG_OK;
    }
    }
    snprintf(why, n, "unknown parameter kind");
    return TG_ERR_INTERNAL;
}

/* The scheme a name of [closure] use picks: plugin:PATH.so or a registered
 * scheme (an unknown name gets the nearest known one as a suggestion). Sets
 * c->ops and c->section; at is "file:line: [closure] use". */
static tg_code spec_find_scheme(const char *name, const char *at, tg_closure_choice *c,
                                tg_status *st)
{
    if (!strncmp(name, "plugin:", 7)) {
        tg_status ps;
        tg_status_clear(&ps);
        c->ops = tg_closure_load_plugin(name + 7, &ps);
        if (!c->ops)
            return tg_fail(st, TG_ERR_CONFIG, "%s: %s", at, ps.msg);
        snprintf(c->section, sizeof c->section, "plugin.%s", c->ops->name);
        return TG_OK;
    }
    c->ops = tg_closure_find(name);
    if (!c->ops) {
        const char *names[64];
        int nn = tg_closure_count();
        for (int i = 0; i < nn && i < 64; i++)
            names[i] = tg_closure_ops_at(i)->name;
        int s = tg_config_suggest(name, names, nn < 64 ? nn : 64);
        if (s >= 0)
            return tg_fail(st, TG_ERR_CONFIG,
                           "%s: unknown closure '%s'; did you mean %s? "
                           "(`twingyre closures` lists them)",
                           at, name, names[s]);
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: unknown closure '%s' (`twingyre closures` lists them; "
                       "a plugin is plugin:PATH.so)",
                       at, name);
    }
    snprintf(c->section, sizeof c->section, "%s", c->ops->name);
    return TG_OK;
}

/* Appends the component NAME to spec with its parameters at their defaults. */
static tg_code spec_add(tg_closure_spec *spec, const char *name, const char *at, tg_status *st)
{
    if (spec->n >= TG_MAX_CLOSURES)
        return tg_fail(st, TG_ERR_CONFIG, "%s: at most %d components", at, TG_MAX_CLOSURES);
    tg_closure_choice *c = &spec->c[spec->n];
    snprintf(c->use, sizeof c->use, "%s", name);
    tg_code rc = spec_find_scheme(name, at, c, st);
    if (rc != TG_OK)
        return rc;
    snprintf(c->label, sizeof c->label, "%s", c->ops->name);
    for (int i = 0; i < spec->n; i++)
        if (!strcmp(spec->c[i].label, c->label))
            return tg_fail(st, TG_ERR_CONFIG, "%s: '%s' is used twice", at, c->label);
    if (c->ops->nparams > TG_CLOSURE_MAX_PARAMS)
        return tg_fail(st, TG_ERR_CONFIG, "%s: '%s' has %d parameters (at most %d)", at,
                       c->label, c->ops->nparams, TG_CLOSURE_MAX_PARAMS);
    for (int p = 0; p < c->ops->nparams; p++) {
        const tg_closure_param *pp = &c->ops->params[p];
        c->params[p] = pp->def;
        snprintf(c->texts[p], sizeof c->texts[p], "%s",
                 pp->kind == TG_PARAM_TEXT && pp->def_text ? pp->def_text : "");
    }
    spec->n++;
    return TG_OK;
}

/* Step 1: the list of components of [closure] use. */
static tg_code spec_read_use(const tg_raw_entry *use, const char *origin, tg_closure_spec *spec,
                             tg_status *st)
{
    char at[512];
    char list[TG_RAW_TEXT];
    snprintf(list, sizeof list, "%s", use->value);
    where(use, origin, at, sizeof at);
    int nnone = 0, nitems = 0;
    /* Split at every comma (strtok would skip empty names: "use = ,,,"
     * must be refused, not read as no closure). */
    for (char *tok = list, *next; tok; tok = next) {
        char *comma = strchr(tok, ',');
        next = comma ? comma + 1 : NULL;
        if (comma)
            *comma = '\0';
        char *name = trim(tok);
        nitems++;
        if (name[0] == '\0')
            return tg_fail(st, TG_ERR_CONFIG, "%s: an empty name in the list", at);
        if (!strcmp(name, "none")) {
            nnone++;
            continue;
        }
        tg_code rc = spec_add(spec, name, at, st);
        if (rc != TG_OK)
            return rc;
    }
    if (nnone && nitems > 1)
        return tg_fail(st, TG_ERR_CONFIG, "%s: 'none' cannot be combined with schemes", at);
    return TG_OK;
}

/* The error for a key that component c does not have: the nearest key as a
 * suggestion, or the list of its keys. */
static tg_code spec_unknown_key(const tg_raw_entry *e, const tg_closure_choice *c,
                                const char *at, tg_status *st)
{
    const char *names[TG_CLOSURE_MAX_PARAMS];
    for (int i = 0; i < c->ops->nparams; i++)
        names[i] = c->ops->params[i].key;
    int s = tg_config_suggest(e->key, names, c->ops->nparams);
    if (s >= 0)
        return tg_fail(st, TG_ERR_CONFIG, "%s: unknown key; did you mean [%s] %s?", at,
                       e->section, names[s]);
    char keys[512] = "";
    for (int i = 0; i < c->ops->nparams; i++) {
        size_t l = strlen(keys);
        snprintf(keys + l, sizeof keys - l, "%s%s", i ? ", " : "", names[i]);
    }
    return tg_fail(st, TG_ERR_CONFIG, "%s: unknown key; [%s] has: %s", at, e->section,
                   c->ops->nparams ? keys : "no keys");
}

/* Step 2: one config entry; a key of [closure] other than use is an error,
 * a key of a chosen component's section sets that parameter, other sections
 * are left alone. */
static tg_code spec_read_key(const tg_raw_entry *e, const char *origin, tg_closure_spec *spec,
                             tg_status *st)
{
    char at[512], why[512];
    where(e, origin, at, sizeof at);
    if (!strcmp(e->section, "closure")) {
        if (strcmp(e->key, "use") != 0) {
            const char *cand[] = {"use"};
            if (tg_config_suggest(e->key, cand, 1) == 0)
                return tg_fail(st, TG_ERR_CONFIG, "%s: unknown key; did you mean [closure] use?",
                               at);
            return tg_fail(st, TG_ERR_CONFIG, "%s: unknown key; [closure] has only 'use'", at);
        }
        return TG_OK;
    }
    tg_closure_choice *c = NULL;
    for (int i = 0; i < spec->n; i++)
        if (!strcmp(spec->c[i].section, e->section))
            c = &spec->c[i];
    if (!c)
        return TG_OK; /* not among [closure] use: tg_config_validate warns once */
    int p = -1;
    for (int i = 0; i < c->ops->nparams; i++)
        if (!strcmp(c->ops->params[i].key, e->key))
            p = i;
    if (p < 0)
        return spec_unknown_key(e, c, at, st);
    char value[TG_RAW_TEXT];
    snprintf(value, sizeof value, "%s", e->value);
    if (parse_param(&c->ops->params[p], trim(value), &c->params[p], c->texts[p], why,
                    sizeof why) != TG_OK)
        return tg_fail(st, TG_ERR_CONFIG, "%s: %s", at, why);
    if (c->ops->params[p].kind == TG_PARAM_TEXT && e->line <= 0)
        c->text_from_option = 1;
    return TG_OK;
}

tg_code tg_closure_spec_resolve(const tg_config *cfg, const char *origin, tg_closure_spec *spec,
                                tg_status *st)
{
    memset(spec, 0, sizeof *spec);
    const tg_raw_entry *use = tg_config_raw(cfg, "closure", "use");
    tg_code rc;

    /* 1. The list of components. */
    if (use && (rc = spec_read_use(use, origin, spec, st)) != TG_OK)
        return rc;

    /* 2. Every closure key = value. */
    for (int r = 0; r < cfg->nraw; r++)
        if ((rc = spec_read_key(&cfg->raw[r], origin, spec, st)) != TG_OK)
            return rc;

    /* 3. Required text values. */
    for (int i = 0; i < spec->n; i++) {
        const tg_closure_choice *c = &spec->c[i];
        for (int p = 0; p < c->ops->nparams; p++)
            if (c->ops->params[p].kind == TG_PARAM_TEXT && c->texts[p][0] == '\0')
                return tg_fail(st, TG_ERR_CONFIG, "%s: [%s] %s is required (%s)",
                               origin ? origin : "config", c->section, c->ops->params[p].key,
                               c->ops->params[p].meaning);
    }
    return TG_OK;
}

/* Whether raw section `sec` is named by the use list (a plugin's section is
 * named after the plugin, known only once loaded: with a plugin every
 * [plugin.*] section is kept). */
static int named_in_use(const char *sec, const char *list)
{
    const char *p = list;
    while (*p) {
        const size_t len = strcspn(p, ",");
        const char *a = p, *e = p + len;
        while (a < e && (*a == ' ' || *a == '\t'))
            a++;
        while (e > a && (e[-1] == ' ' || e[-1] == '\t'))
            e--;
        if (!strncmp(a, "plugin:", 7) ? !strncmp(sec, "plugin.", 7)
                                      : strlen(sec) == (size_t)(e - a) &&
                                            !strncmp(sec, a, (size_t)(e - a)))
            return 1;
        p += len + (p[len] == ',');
    }
    return 0;
}

tg_code tg_closure_keep_used(tg_config *cfg, const char *origin, char (*used)[TG_SECTION_LEN],
                             int max, int *nused, tg_status *st)
{
    *nused = 0;
    tg_config *tmp = malloc(sizeof *tmp);
    tg_closure_spec *spec = malloc(sizeof *spec);
    if (!tmp || !spec) {
        free(tmp);
        free(spec);
        return tg_fail(st, TG_ERR_NOMEM, "no memory to resolve closures");
    }
    *tmp = *cfg;
    tmp->nraw = 0;
    const tg_raw_entry *use = tg_config_raw(cfg, "closure", "use");
    for (int r = 0; r < cfg->nraw; r++) {
        const char *sec = cfg->raw[r].section;
        if (!strcmp(sec, "closure") || named_in_use(sec, use ? use->value : ""))
            tmp->raw[tmp->nraw++] = cfg->raw[r];
    }
    tg_code rc = tg_closure_spec_resolve(tmp, origin, spec, st);
    if (rc == TG_OK) {
        int n = 0;
        for (int r = 0; r < cfg->nraw; r++) {
            const tg_raw_entry *e = &cfg->raw[r];
            int keep = !strcmp(e->section, "closure");
            for (int c = 0; c < spec->n && !keep; c++)
                keep = !strcmp(spec->c[c].section, e->section);
            if (keep)
                cfg->raw[n++] = *e;
        }
        cfg->nraw = n;
        for (int c = 0; c < spec->n && *nused < max; c++)
            snprintf(used[(*nused)++], TG_SECTION_LEN, "%s", spec->c[c].section);
    }
    free(tmp);
    free(spec);
    return rc;
}

/* Shortest %g form that reads back to the same double. */
static void fmt_real(double v, char *out, size_t n)
{
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(out, n, "%.*g", prec, v);
        if (strtod(out, NULL) == v)
            return;
    }
}

char *tg_closure_config_ini(const tg_config *cfg)
{
    tg_closure_spec *spec = malloc(sizeof *spec);
    if (!spec)
        return NULL;
    tg_status st;
    if (tg_closure_spec_resolve(cfg, NULL, spec, &st) != TG_OK) {
        free(spec);
        return NULL;
    }
    tg_strbuf b = {0};
#define OUT(...) tg_sb_printf(&b, __VA_ARGS__)
    OUT("\n[closure]\nuse = ");
    if (spec->n == 0)
        OUT("none\n");
    for (int i = 0; i < spec->n; i++)
        OUT("%s%s", spec->c[i].use, i + 1 < spec->n ? ", " : "\n");
    for (int i = 0; i < spec->n; i++) {
        const tg_closure_choice *c = &spec->c[i];
        if (c->ops->nparams == 0)
            continue;
        OUT("\n[%s]\n", c->section);
        for (int p = 0; p < c->ops->nparams; p++) {
            const tg_closure_param *pp = &c->ops->params[p];
            char v[TG_RAW_TEXT + 8];
            if (pp->kind == TG_PARAM_TEXT)
                snprintf(v, sizeof v, "%s", c->texts[p]);
            else if (pp->kind == TG_PARAM_BOOL)
                snprintf(v, sizeof v, "%s", c->params[p] != 0.0 ? "true" : "false");
            else
                fmt_real(c->params[p], v, sizeof v);
            char line[TG_RAW_TEXT + 80];
            snprintf(line, sizeof line, "%s = %s", pp->key, v);
            if (pp->unit && pp->unit[0])
                OUT("%-40s ; %s\n", line, pp->unit);
            else
                OUT("%s\n", line);
        }
    }
#undef OUT
    free(spec);
    if (b.oom) {
        free(b.s);
        return NULL;
    }
    return b.s;
}

/* ------------------------------------------------------------------ */
/* Running                                                             */
/* ------------------------------------------------------------------ */

struct tg_closure_host {
    tg_geometry *g;
    int nl;
    long npl;
    double dt;                         /* the step being taken (tg_closure_host_set_step) */
    int n;
    tg_closure_spec spec;
    void *state[TG_MAX_CLOSURES];
    double *tend[TG_MAX_CLOSURES];     /* nl*npl each */
    const char *names[TG_MAX_CLOSURES];
    const double *tends[TG_MAX_CLOSURES];
    double *u, *v;                     /* nl*npl */
    double S[TG_MAX_LAYERS * TG_MAX_LAYERS];
    double scale;                      /* tg_closure_host_set_scale */
    tg_tools *tools;                   /* the operators the schemes use */
};

void tg_closure_host_destroy(tg_closure_host *h)
{
    if (!h)
        return;
    for (int c = 0; c < h->n; c++) {
        if (h->state[c] && h->spec.c[c].ops->destroy)
            h->spec.c[c].ops->destroy(h->state[c]);
        free(h->tend[c]);
    }
    free(h->u);
    free(h->v);
    tg_tools_destroy(h->tools);
    free(h);
}

tg_closure_host *tg_closure_host_create(const tg_config *cfg, tg_geometry *g, const tg_modes *md,
                                        tg_status *st)
{
    tg_closure_host *h = calloc(1, sizeof *h);
    if (!h) {
        tg_fail(st, TG_ERR_NOMEM, "closures: no memory");
        return NULL;
    }
    if (tg_closure_spec_resolve(cfg, NULL, &h->spec, st) != TG_OK) {
        free(h);
        return NULL;
    }
    h->g = g;
    h->nl = cfg->nlayers;
    h->npl = (long)g->ns * g->ns;
    const int adaptive = cfg->step_choice == TG_STEP_ADAPTIVE;
    h->dt = cfg->step_s;
    h->scale = 1.0;
    for (int k = 0; k < h->nl; k++)
        for (int j = 0; j < h->nl; j++)
            h->S[k * h->nl + j] = md->S[k][j];
    if (h->spec.n == 0)
        return h;
    const long nf = h->nl * h->npl;
    h->u = calloc((size_t)nf, sizeof(double));
    h->v = calloc((size_t)nf, sizeof(double));
    if (!h->u || !h->v) {
        tg_fail(st, TG_ERR_NOMEM, "closures: no memory for work arrays");
        tg_closure_host_destroy(h);
        return NULL;
    }
    h->tools = tg_tools_create(g, st);
    if (!h->tools) {
        tg_closure_host_destroy(h);
        return NULL;
    }
    for (int c = 0; c < h->spec.n; c++) {
        tg_closure_choice *ch = &h->spec.c[c];
        h->tend[c] = calloc((size_t)nf, sizeof(double));
        if (!h->tend[c]) {
            tg_fail(st, TG_ERR_NOMEM, "closures: no memory for the tendency of %s", ch->label);
            tg_closure_host_destroy(h);
            return NULL;
        }
        h->n = c + 1;
        h->names[c] = ch->label;
        h->tends[c] = h->tend[c];
        const char *texts[TG_CLOSURE_MAX_PARAMS];
        for (int p = 0; p < TG_CLOSURE_MAX_PARAMS; p++)
            texts[p] = ch->texts[p];
        tg_closure_setup s = {.nlayers = h->nl, .ns = g->ns, .a0 = g->a0, .a1 = g->a1,
                              .dx = g->dx, .length = g->length,
                              .dt = adaptive ? cfg->smallest_step_s : h->dt,
                              .thickness_m = cfg->thickness_m,
                              .reduced_gravity = cfg->reduced_gravity_m_s2,
                              .f0 = cfg->coriolis_f0_per_s, .beta = cfg->beta_per_m_per_s,
                              .stretching = h->S, .seed = cfg->seed, .member = cfg->member,
                              .params = ch->params, .texts = texts,
                              /* Relative file names: from the config file's directory,
                               * or the current one for --set values. */
                              .config_dir = ch->text_from_option ? "" : cfg->config_dir,
                              .tools = tg_tools_get(h->tools)};
        tg_status cs;
        tg_status_clear(&cs);
        if (ch->ops->create(&s, &h->state[c], &cs) != TG_OK) {
            tg_fail(st, cs.code ? cs.code : TG_ERR_CONFIG, "closure %s: %s", ch->label, cs.msg);
            tg_closure_host_destroy(h);
            return NULL;
        }
    }
    return h;
}

int tg_closure_host_count(const tg_closure_host *h)
{
    return h ? h->n : 0;
}

const char *tg_closure_host_label(const tg_closure_host *h, int c)
{
    return h->spec.c[c].label;
}

const tg_closure_ops *tg_closure_host_ops(const tg_closure_host *h, int c)
{
    return h->spec.c[c].ops;
}

const double *tg_closure_host_tend(const tg_closure_host *h, int c)
{
    return h->tend[c];
}

/* Velocities u = -psi_y, v = psi_x on the active nodes; rings extended. */
static void velocities(tg_closure_host *h, const double *psi)
{
    for (int k = 0; k < h->nl; k++) {
        double *u = h->u + k * h->npl, *v = h->v + k * h->npl;
        tg_ddy(h->g, psi + k * h->npl, u);
        tg_axpby(h->g, -1.0, u, 0.0, u);
        tg_ddx(h->g, psi + k * h->npl, v);
        h->g->ops->fill_ring_extend(h->g, u);
        h->g->ops->fill_ring_extend(h->g, v);
    }
}

static tg_closure_view make_view(tg_closure_host *h, const tg_closure_input *in, int ndone)
{
    const tg_geometry *g = h->g;
    return (tg_closure_view){.nlayers = h->nl, .ns = g->ns, .a0 = g->a0, .a1 = g->a1,
                             .dx = g->dx, .dt = h->dt, .step = in->step, .stage = in->stage,
                             .psi = in->psi, .q = in->q, .zeta = in->zeta, .u = h->u, .v = h->v,
                             .wall = in->wall, .ndone = ndone, .done_names = h->names,
                             .done_tend = h->tends, .tools = tg_tools_get(h->tools)};
}

tg_code tg_closure_host_eval(tg_closure_host *h, const tg_closure_input *in, tg_status *st)
{
    if (!h || h->n == 0)
        return TG_OK;
    velocities(h, in->psi);
    for (int c = 0; c < h->n; c++) {
        const tg_closure_choice *ch = &h->spec.c[c];
        tg_closure_view v = make_view(h, in, c);
        memset(h->tend[c], 0, sizeof(double) * h->nl * h->npl);
        tg_status cs;
        tg_status_clear(&cs);
        if (ch->ops->tendency(h->state[c], &v, h->tend[c], &cs) != TG_OK)
            return tg_fail(st, cs.code ? cs.code : TG_ERR_NUMERIC, "closure %s at step %ld: %s",
                           ch->label, in->step, cs.msg);
    }
    if (h->scale != 1.0)
        for (int c = 0; c < h->n; c++)
            for (int k = 0; k < h->nl; k++)
                tg_axpby(h->g, h->scale, h->tend[c] + k * h->npl, 0.0, h->tend[c] + k * h->npl);
    return TG_OK;
}

void tg_closure_host_set_scale(tg_closure_host *h, double scale)
{
    if (h)
        h->scale = scale;
}

tg_code tg_closure_host_advance(tg_closure_host *h, const tg_closure_input *in, tg_status *st)
{
    if (!h || h->n == 0)
        return TG_OK;
    int any = 0;
    for (int c = 0; c < h->n; c++)
        any |= h->spec.c[c].ops->advance != NULL;
    if (!any)
        return TG_OK;
    velocities(h, in->psi);
    for (int c = 0; c < h->n; c++) {
        const tg_closure_choice *ch = &h->spec.c[c];
        if (!ch->ops->advance)
            continue;
        tg_closure_view v = make_view(h, in, c);
        tg_status cs;
        tg_status_clear(&cs);
        if (ch->ops->advance(h->state[c], &v, &cs) != TG_OK)
            return tg_fail(st, cs.code ? cs.code : TG_ERR_NUMERIC, "closure %s after step %ld: %s",
                           ch->label, in->step, cs.msg);
    }
    return TG_OK;
}

size_t tg_closure_host_state_size(const tg_closure_host *h, int c)
{
    const tg_closure_ops *o = h->spec.c[c].ops;
    return (o->state_size && o->state_save && o->state_load) ? o->state_size(h->state[c]) : 0;
}

void tg_closure_host_state_save(const tg_closure_host *h, int c, double *buf)
{
    const tg_closure_ops *o = h->spec.c[c].ops;
    if (o->state_save)
        o->state_save(h->state[c], buf);
}

tg_code tg_closure_host_state_load(tg_closure_host *h, int c, const double *buf, size_t n,
                                   tg_status *st)
{
    const tg_closure_ops *o = h->spec.c[c].ops;
    if (!o->state_load)
        return TG_OK;
    return o->state_load(h->state[c], buf, n, st);
}

void tg_closure_host_set_step(tg_closure_host *h, double dt)
{
    if (h)
        h->dt = dt;
}

double tg_closure_host_precision(const tg_closure_host *h)
{
    double e = DBL_EPSILON;
    for (int c = 0; h && c < h->n; c++) {
        const tg_closure_ops *o = h->spec.c[c].ops;
        /* A plugin built for interface version 1 or 2 has no precision member. */
        if (o->abi >= 3 && o->precision)
            e = fmax(e, o->precision(h->state[c]));
    }
    return e;
}

/* A plugin built for interface version 1 has no stable_step member. */
static double (*stable_step_of(const tg_closure_ops *o))(void *, const tg_closure_view *)
{
    return o->abi >= 2 ? o->stable_step : NULL;
}

double tg_closure_host_stable_step(tg_closure_host *h, const tg_closure_input *in,
                                   double *rate_sum, int *which)
{
    double best = INFINITY;
    if (rate_sum)
        *rate_sum = 0.0;
    if (which)
        *which = -1;
    if (!h || h->n == 0)
        return best;
    int any = 0;
    for (int c = 0; c < h->n; c++)
        any |= stable_step_of(h->spec.c[c].ops) != NULL;
    if (!any)
        return best;
    velocities(h, in->psi);
    for (int c = 0; c < h->n; c++) {
        double (*f)(void *, const tg_closure_view *) = stable_step_of(h->spec.c[c].ops);
        if (!f)
            continue;
        tg_closure_view v = make_view(h, in, c);
        double s = f(h->state[c], &v);
        if (rate_sum)
            *rate_sum += 1.0 / s;
        if (s < best) {
            best = s;
            if (which)
                *which = c;
        }
    }
    return best;
}
