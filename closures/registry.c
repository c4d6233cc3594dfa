/* registry.c - the table of named closure schemes (closure.h).
 *
 * The schemes are listed once, in schemes.h; this file turns that list into
 * declarations and a table, and looks names up in it.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <string.h>

#include "closure.h"

#define TG_SCHEME(name) extern const tg_closure_ops tg_scheme_##name;
#include "schemes.h"
#undef TG_SCHEME

static const tg_closure_ops *const table[] = {
#define TG_SCHEME(name) &tg_scheme_##name,
#include "schemes.h"
#undef TG_SCHEME
    NULL /* end of table */
};

int tg_closure_count(void)
{
    int n = 0;
    while (table[n])
        n++;
    return n;
}

const tg_closure_ops *tg_closure_ops_at(int i)
{
    return (i >= 0 && i < tg_closure_count()) ? table[i] : NULL;
}

const tg_closure_ops *tg_closure_find(const char *name)
{
    for (int i = 0; table[i]; i++)
        if (strcmp(table[i]->name, name) == 0)
            return table[i];
    return NULL;
}
