/* config_hooks.h - how the layers above the config plug their checks into it.
 *
 * The config layer (src/files) knows the core keys; closure sections and
 * coefficient files belong to the model layer, which the config layer must
 * not include. Instead the model layer fills a tg_config_hooks table and
 * installs it once at start-up (tg_init in twingyre.h does it; the command
 * calls it first thing in main, and every test that reads closure
 * sections calls it too). Without hooks the config layer accepts only
 * [closure] use = none: any other closure setting is refused with a message
 * saying the closure checks are not installed.
 *
 * The table is the library's only global besides the log sink (status.c):
 * it is set before any thread starts and only read afterwards.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CONFIG_HOOKS_H
#define TG_CONFIG_HOOKS_H

#include "config.h"
#include "status.h"

/* Longest section name a closure layer reports as used ("plugin.NAME"). */
#define TG_SECTION_LEN 72

typedef struct {
    /* The registered closure schemes: their count and the i-th one's name
     * (also the name of its config section). */
    int (*scheme_count)(void);
    const char *(*scheme_name)(int i);

    /* Checks cfg's [closure] use and the section of every component it
     * names (parameter tables, ranges, required values), with FILE:LINE
     * messages (`origin` names the config file; may be NULL). Sections of
     * schemes the list does not use are left alone, and nothing is logged:
     * the config layer warns about unused sections once. The names of the
     * sections the list uses go into used[0 .. *nused - 1] (at most max). */
    tg_code (*check_closures)(const tg_config *cfg, const char *origin,
                              char (*used)[TG_SECTION_LEN], int max, int *nused, tg_status *st);

    /* The resolved closure sections of cfg as INI text ("\n[closure]\nuse =
     * ...\n" and each used scheme's section with every parameter),
     * malloc'ed; NULL when out of memory or the settings do not resolve. */
    char *(*closures_ini)(const tg_config *cfg);

    /* Checks that the coefficients file at `path` loads for nlayers layers;
     * the message says what is wrong with it. */
    tg_code (*check_coefficients)(const char *path, int nlayers, tg_status *st);
} tg_config_hooks;

/* Installs the hooks (the table is kept by pointer; NULL removes them). */
void tg_config_set_hooks(const tg_config_hooks *hooks);

/* The installed hooks, or NULL. */
const tg_config_hooks *tg_config_get_hooks(void);

#endif
