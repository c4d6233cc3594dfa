/* cmd_closures.c - `twingyre closures [NAME]`: the registered schemes, their
 * parameters (units, defaults, ranges) and published sources; for
 * `coefficients` also the basis terms that coefficients files name. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "basis.h"
#include "closure.h"
#include "cli.h"

/* One parameter row as text, so that every column can be as wide as its
 * widest cell. */
typedef struct {
    char key[96], unit[32], def[160], range[96];
    const char *meaning;
} param_row;

static void format_row(const tg_closure_ops *o, const tg_closure_param *pp, param_row *r)
{
    snprintf(r->key, sizeof r->key, "[%s] %s", o->name, pp->key);
    snprintf(r->unit, sizeof r->unit, "%s", pp->unit && pp->unit[0] ? pp->unit : "-");
    switch (pp->kind) {
    case TG_PARAM_TEXT:
        snprintf(r->def, sizeof r->def, "%s",
                 pp->def_text && pp->def_text[0] ? pp->def_text : "(required)");
        snprintf(r->range, sizeof r->range, "text");
        break;
    case TG_PARAM_BOOL:
        snprintf(r->def, sizeof r->def, "%s", pp->def != 0.0 ? "true" : "false");
        snprintf(r->range, sizeof r->range, "true or false");
        break;
    default:
        snprintf(r->def, sizeof r->def, "%g", pp->def);
        snprintf(r->range, sizeof r->range, "%s%g to %g",
                 pp->kind == TG_PARAM_INT ? "whole " : "", pp->lo, pp->hi);
    }
    r->meaning = pp->meaning;
}

typedef struct {
    int key, unit, def, range;
} widths;

static void widen(const tg_closure_ops *o, widths *w)
{
    for (int p = 0; p < o->nparams; p++) {
        param_row r;
        format_row(o, &o->params[p], &r);
        int n;
        if ((n = (int)strlen(r.key)) > w->key)
            w->key = n;
        if ((n = (int)strlen(r.unit)) > w->unit)
            w->unit = n;
        if ((n = (int)strlen(r.def)) > w->def)
            w->def = n;
        if ((n = (int)strlen(r.range)) > w->range)
            w->range = n;
    }
}

static void print_scheme(const tg_closure_ops *o, const widths *w)
{
    printf("%s%s\n  %s\n  source: %s\n", o->name, o->dissipative ? "  (dissipative)" : "",
           o->summary, o->source);
    if (o->nparams == 0)
        printf("  no parameters\n");
    for (int p = 0; p < o->nparams; p++) {
        param_row r;
        format_row(o, &o->params[p], &r);
        printf("  %-*s  %-*s  default %-*s  range %-*s  %s\n", w->key, r.key, w->unit, r.unit,
               w->def, r.def, w->range, r.range, r.meaning);
    }
}

/* The basis terms a coefficients file names (basis.h), one per line. */
static void print_terms(void)
{
    const int n = tg_basis_count();
    int wn = 4, wu = 4;
    for (int t = 0; t < n; t++) {
        const tg_basis_term *b = tg_basis_term_at(t);
        if ((int)strlen(b->name) > wn)
            wn = (int)strlen(b->name);
        if ((int)strlen(b->coef_unit) > wu)
            wu = (int)strlen(b->coef_unit);
    }
    printf("  basis terms (%d; `twingyre fit --terms` and coefficients files name them; the "
           "coefficient's unit is s-2 per term unit):\n", n);
    printf("    %-*s  %-*s  %s\n", wn, "term", wu, "coef", "definition: meaning");
    for (int t = 0; t < n; t++) {
        const tg_basis_term *b = tg_basis_term_at(t);
        printf("    %-*s  %-*s  %s: %s\n", wn, b->name, wu, b->coef_unit, b->formula,
               b->meaning);
    }
}

int cmd_closures(int argc, char **argv)
{
    const int n = tg_closure_count();
    const char *only = argc > 2 ? argv[2] : NULL;
    if (argc > 3) {
        fprintf(stderr, "twingyre: closures takes at most one scheme name (see twingyre "
                        "closures --help)\n");
        return cli_exit_code(TG_ERR_USAGE);
    }
    widths w = {0, 0, 0, 0};
    int shown = -1;
    for (int i = 0; i < n; i++) {
        const tg_closure_ops *o = tg_closure_ops_at(i);
        if (!only || !strcmp(only, o->name)) {
            widen(o, &w);
            shown = i;
        }
    }
    if (only && shown < 0) {
        const char **names = malloc((size_t)n * sizeof *names);
        int sg = -1;
        if (names) {
            for (int i = 0; i < n; i++)
                names[i] = tg_closure_ops_at(i)->name;
            sg = tg_config_suggest(only, names, n);
        }
        fprintf(stderr, "twingyre: no closure scheme named '%s'%s%s%s (`twingyre closures` "
                        "lists them)\n",
                only, sg >= 0 ? "; did you mean " : "", sg >= 0 ? names[sg] : "",
                sg >= 0 ? "?" : "");
        free(names);
        return cli_exit_code(TG_ERR_USAGE);
    }
    if (!only)
        printf("Closure schemes (use with [closure] use = NAME[, NAME...]; parameters go in "
               "the section [NAME]):\n\n");
    for (int i = 0; i < n; i++) {
        const tg_closure_ops *o = tg_closure_ops_at(i);
        if (only && strcmp(only, o->name) != 0)
            continue;
        print_scheme(o, &w);
        if (!strcmp(o->name, "coefficients"))
            print_terms();
        printf("\n");
    }
    if (!only)
        printf("A plugin is used as plugin:PATH.so; its parameters go in [plugin.NAME].\n");
    return fflush(stdout) == 0 ? 0 : cli_exit_code(TG_ERR_IO);
}
