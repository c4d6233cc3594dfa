/* config_reference.c - the Markdown table of every config key for README
 * ("Config reference"), printed from the key table; tests/unit/test_config_rules.c
 * fails when a row of it is missing from README.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"

#include <stdio.h>

/* Writes s with '|' escaped for a Markdown table cell. */
static void md_cell(FILE *out, const char *s)
{
    fputs("| ", out);
    for (; *s; s++) {
        if (*s == '|')
            fputc('\\', out);
        fputc(*s, out);
    }
    fputc(' ', out);
}

void tg_config_print_reference(FILE *out)
{
    if (!out)
        return;
    fputs("| Section | Key | Unit | Default | Allowed | Meaning |\n", out);
    fputs("|---|---|---|---|---|---|\n", out);
    for (int i = 0; i < K_COUNT; i++) {
        const tg_key_info *k = &tg_cfg_rows[i].info;
        char allowed[256];
        snprintf(allowed, sizeof allowed, "%s: %s", k->type, k->range);
        md_cell(out, k->section);
        md_cell(out, k->key);
        md_cell(out, k->unit[0] ? k->unit : "-");
        char def[256];
        if (tg_cfg_rows[i].follows)
            snprintf(def, sizeof def, "%s; %s", k->def[0] ? k->def : "none",
                     tg_cfg_rows[i].follows);
        else
            snprintf(def, sizeof def, "%s", k->def[0] ? k->def : "(none)");
        md_cell(out, def);
        md_cell(out, allowed);
        md_cell(out, k->meaning);
        fputs("|\n", out);
    }
}

