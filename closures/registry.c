/* registry.c - the table of named closure schemes (closure.h).
 *
 * Adding a scheme: write closures/NAME.c defining a tg_closure_ops, declare
 * it here, and add one line to the table. The core ships the hook with no
 * scheme registered yet.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <string.h>

#include "../src/closure.h"

static const tg_closure_ops *const table[] = {
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
