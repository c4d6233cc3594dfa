/* config_dump.c - the resolved config: every key of the table with its
 * value, one per line with its unit as a trailing comment, then the [twin.*]
 * overrides and the closure sections (through the hooks); written into
 * every output file's attributes and by `describe`, and read back as is.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"
#include "strbuf.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>



/* The trailing comment of a key in the resolved config. */
static const char *ini_comment(const key_row *r)
{
    if (r->info.unit[0])
        return r->info.unit;
    switch (r->kind) {
    case V_CHOICE:
    case V_INITIAL:
        return r->info.range;
    case V_REAL:
        return "dimensionless";
    default:
        return "";
    }
}

char *tg_config_to_ini(const tg_config *cfg)
{
    if (!cfg)
        return NULL;
    tg_strbuf b = {0};
    char value[TG_PATH_LEN + 256], line[TG_PATH_LEN + 512];
    tg_sb_printf(&b, "%s\n", TG_CFG_RESOLVED_HEADER);
    for (int i = 0; i < K_COUNT; i++) {
        const key_row *r = &tg_cfg_rows[i];
        if (tg_cfg_starts_section(i))
            tg_sb_printf(&b, "\n[%s]\n", r->info.section);
        tg_cfg_format_value(r, cfg, value, sizeof value);
        snprintf(line, sizeof line, "%s = %s", r->info.key, value);
        const char *comment = ini_comment(r);
        if (comment[0])
            tg_sb_printf(&b, "%-40s ; %s\n", line, comment);
        else
            tg_sb_printf(&b, "%s\n", line);
    }
    for (int w = 0; w < 2; w++) {
        const char *sec = w ? "twin.coarse" : "twin.reference";
        int header = 0;
        for (int i = 0; i < cfg->ntwin_raw; i++) {
            const tg_raw_entry *e = &cfg->twin_raw[i];
            if (strcmp(e->section, sec) != 0)
                continue;
            if (!header)
                tg_sb_printf(&b, "\n[%s]\n", sec);
            header = 1;
            tg_sb_printf(&b, "%s = %s\n", e->key, e->value);
        }
    }
    const tg_config_hooks *h = tg_config_get_hooks();
    char *cl = h ? h->closures_ini(cfg) : NULL;
    if (cl) {
        tg_sb_printf(&b, "%s", cl);
        free(cl);
    } else if (!h) {
        /* Without the closure layer: the closure settings as written. */
        const char *sec = "";
        if (cfg->nraw == 0)
            tg_sb_printf(&b, "\n[closure]\nuse = none\n");
        for (int i = 0; i < cfg->nraw; i++) {
            if (strcmp(cfg->raw[i].section, sec) != 0)
                tg_sb_printf(&b, "\n[%s]\n", cfg->raw[i].section);
            sec = cfg->raw[i].section;
            tg_sb_printf(&b, "%s = %s\n", cfg->raw[i].key, cfg->raw[i].value);
        }
    }
    if (b.oom) {
        free(b.s);
        return NULL;
    }
    return b.s;
}

