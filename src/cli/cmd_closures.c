/* cmd_closures.c - `twingyre closures [NAME]`: the registered schemes, their
 * parameters (units, defaults, ranges) and published sources. */
#include <stdio.h>
#include <string.h>

#include "closure.h"
#include "cli.h"

static void print_scheme(const tg_closure_ops *o)
{
    printf("%s%s\n  %s\n  source: %s\n", o->name, o->dissipative ? "  (dissipative)" : "",
           o->summary, o->source);
    if (o->nparams == 0)
        printf("  no parameters\n");
    for (int p = 0; p < o->nparams; p++) {
        const tg_closure_param *pp = &o->params[p];
        char def[160], range[96];
        switch (pp->kind) {
        case TG_PARAM_TEXT:
            snprintf(def, sizeof def, "%s", pp->def_text && pp->def_text[0] ? pp->def_text : "(required)");
            snprintf(range, sizeof range, "text");
            break;
        case TG_PARAM_BOOL:
            snprintf(def, sizeof def, "%s", pp->def != 0.0 ? "true" : "false");
            snprintf(range, sizeof range, "true or false");
            break;
        default:
            snprintf(def, sizeof def, "%g", pp->def);
            snprintf(range, sizeof range, "%s %g to %g", pp->kind == TG_PARAM_INT ? "whole" : "",
                     pp->lo, pp->hi);
        }
        printf("  [%s] %-28s %-10s default %-12s range %-26s %s\n", o->name, pp->key,
               pp->unit && pp->unit[0] ? pp->unit : "-", def, range, pp->meaning);
    }
}

int cmd_closures(int argc, char **argv)
{
    int n = tg_closure_count(), shown = 0;
    const char *only = argc > 2 ? argv[2] : NULL;
    if (argc > 3) {
        fprintf(stderr, "twingyre: closures takes at most one scheme name (see --help)\n");
        return cli_exit_code(TG_ERR_USAGE);
    }
    if (!only)
        printf("Closure schemes (use with [closure] use = NAME[, NAME...]; parameters go in "
               "the section [NAME]):\n\n");
    for (int i = 0; i < n; i++) {
        const tg_closure_ops *o = tg_closure_ops_at(i);
        if (only && strcmp(only, o->name) != 0)
            continue;
        print_scheme(o);
        printf("\n");
        shown++;
    }
    if (only && !shown) {
        fprintf(stderr, "twingyre: no closure scheme named '%s' (`twingyre closures` lists them)\n",
                only);
        return cli_exit_code(TG_ERR_USAGE);
    }
    if (!only)
        printf("A plugin is used as plugin:PATH.so; its parameters go in [plugin.NAME].\n");
    return 0;
}
