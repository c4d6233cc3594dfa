/* closure_host.h - the closure room: from [closure] settings to running components.
 *
 * Resolution: `[closure] use = NAME[, NAME...]` names registered schemes
 * (closures/registry.c) or plugins (`plugin:PATH.so`); each scheme's
 * section ([NAME], or [plugin.NAME] for a plugin) is validated against the
 * scheme's parameter table with file:line messages and "did you mean"
 * suggestions, and missing keys take their defaults.
 *
 * Running: the host owns every component's state, one tendency array per
 * component, the velocity arrays of the view, and the tools (closure.h)
 * built on the geometry and fdops. All of it is allocated at creation; the
 * evaluation at each stage allocates nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CLOSURE_HOST_H
#define TG_CLOSURE_HOST_H

#include "closure.h"
#include "config.h"
#include "config_hooks.h"
#include "geometry.h"
#include "modes.h"

typedef struct {
    const tg_closure_ops *ops;
    char label[64];                                   /* ops->name: budget names use it */
    char section[72];                                 /* its config section */
    char use[TG_RAW_TEXT];                            /* the entry of `use` as written */
    double params[TG_CLOSURE_MAX_PARAMS];
    char texts[TG_CLOSURE_MAX_PARAMS][TG_RAW_TEXT];
    int text_from_option;   /* 1: a text value (a file name) came from --set or an override */
} tg_closure_choice;

typedef struct {
    int n;
    tg_closure_choice c[TG_MAX_CLOSURES];
} tg_closure_spec;

/* Resolves the closure settings of cfg; `origin` names the config file
 * for messages (may be NULL). */
tg_code tg_closure_spec_resolve(const tg_config *cfg, const char *origin, tg_closure_spec *spec,
                                tg_status *st);

/* Keeps in cfg only the closure settings its [closure] use list needs
 * ([closure] and the sections of the components it names), checking them;
 * the names of those sections go into used (at most max, *nused of them).
 * Sections of other schemes are dropped silently (tg_config_validate warns
 * about them once). */
tg_code tg_closure_keep_used(tg_config *cfg, const char *origin, char (*used)[TG_SECTION_LEN],
                             int max, int *nused, tg_status *st);

/* The resolved closure sections as INI text (malloc'ed), for the resolved
 * config; "[closure]\nuse = none\n" without closures; NULL on failure. */
char *tg_closure_config_ini(const tg_config *cfg);

/* State handed to the components at one stage. */
typedef struct {
    const double *psi, *q, *zeta;  /* nl*ns*ns, rings filled */
    const double *wall;            /* psi's wall value per layer */
    long step;
    int stage;
} tg_closure_input;

typedef struct tg_closure_host tg_closure_host;

tg_closure_host *tg_closure_host_create(const tg_config *cfg, tg_geometry *g, const tg_modes *md,
                                        tg_status *st);
void tg_closure_host_destroy(tg_closure_host *h);

int tg_closure_host_count(const tg_closure_host *h);
const char *tg_closure_host_label(const tg_closure_host *h, int c);
const tg_closure_ops *tg_closure_host_ops(const tg_closure_host *h, int c);

/* Evaluates every component in `use` order; component c's tendency is then
 * tg_closure_host_tend(h, c) (nl*ns*ns, active nodes). */
tg_code tg_closure_host_eval(tg_closure_host *h, const tg_closure_input *in, tg_status *st);
const double *tg_closure_host_tend(const tg_closure_host *h, int c);

/* Multiplies every component's tendency by `scale` (1 after creation), after
 * all components are evaluated, so a component that acts on another's
 * tendency sees it unscaled. For a closure linear in its coefficient this
 * is a coefficient multiplier (`twingyre vet`). */
void tg_closure_host_set_scale(tg_closure_host *h, double scale);

/* Calls every component's per-step hook with the state after a step. */
tg_code tg_closure_host_advance(tg_closure_host *h, const tg_closure_input *in, tg_status *st);

/* The step the views report as dt (the step being taken); tg_step sets it. */
void tg_closure_host_set_step(tg_closure_host *h, double dt);

/* The smallest of the components' stable_step answers (closure.h) at the
 * state in `in`, s; INFINITY when none sets a bound. *rate_sum (may be
 * NULL) gets the sum of 1/answer over the components (their damping rates
 * add), *which (may be NULL) the component that binds, -1 for none.
 * Allocates nothing. */
double tg_closure_host_stable_step(tg_closure_host *h, const tg_closure_input *in,
                                   double *rate_sum, int *which);

/* The largest relative rounding error of the components' tendencies
 * (closure.h, precision); DBL_EPSILON when none declares one. */
double tg_closure_host_precision(const tg_closure_host *h);

/* Checkpoint support: component c's own state (0 doubles when it has none). */
size_t tg_closure_host_state_size(const tg_closure_host *h, int c);
void tg_closure_host_state_save(const tg_closure_host *h, int c, double *buf);
tg_code tg_closure_host_state_load(tg_closure_host *h, int c, const double *buf, size_t n,
                                   tg_status *st);

#endif
