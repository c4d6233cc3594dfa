/* config_impl.h - private to the config layer (src/files/config_*.c): the
 * row type of the key table, the row indices, and the helpers the config
 * files share (value parsing and formatting, suggestions, messages that
 * name where a key was set). Not installed; nothing outside src/files
 * includes it.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CONFIG_IMPL_H
#define TG_CONFIG_IMPL_H

#include <stddef.h>

#include "config.h"
#include "config_hooks.h"

typedef enum {
    V_REAL,       /* double at `off` */
    V_INT,        /* int at `off` */
    V_U64,        /* uint64_t at `off` */
    V_REAL_LIST,  /* double[max_count] at `off`, count (int) at `count_off` */
    V_CHOICE,     /* enum through get/put, names in `choices` */
    V_TEXT,       /* char[TG_PATH_LEN] at `off` */
    V_INITIAL     /* [initial] state: rest | noise | path */
} value_kind;

typedef enum { B_NONE = 0, B_INCL, B_EXCL } bound_kind;

typedef struct {
    tg_key_info info;
    value_kind kind;
    size_t off;
    size_t count_off;
    int min_count, max_count;           /* lists */
    bound_kind lo_kind, hi_kind;        /* numbers (each list item) */
    double lo, hi;
    int nonzero;                        /* numbers: 0 is not allowed */
    /* Reals: the range a user could mean (|v| for a nonzero key), beyond
     * the rule in `expect`; `sane` words it after `expect` ("and at most
     * 1e6"). NULL: no more than `expect`. */
    const char *sane;
    double sane_lo, sane_hi;
    const char *const *choices;         /* V_CHOICE: NULL-terminated, index = enum value */
    int (*get)(const tg_config *);      /* V_CHOICE */
    void (*put)(tg_config *, int);      /* V_CHOICE */
    const char *expect;                 /* "a real number > 0": used as "expected %s, got '...'" */
    const char *item_rule;              /* lists: the rule one value breaks, e.g. "> 0" */
    /* A default that follows other keys: applied whenever the key is not
     * set by the user (tg_cfg_follow_defaults), described in `follows`
     * for README, e.g. "128 when geometry = periodic". NULL: a fixed default. */
    void (*follow)(tg_config *cfg);
    const char *follows;
} key_row;

/* Row indices; the table below is indexed by them, in reference order. */
enum {
    K_GEOMETRY, K_SIZE, K_POINTS, K_WALL_CONDITION, K_WALL_SLIP,
    K_THICKNESS, K_REDUCED_GRAVITY,
    K_F0, K_BETA,
    K_BACKGROUND_U,
    K_WIND_PROFILE, K_STRESS, K_DENSITY,
    K_DRAG, K_VISCOSITY, K_HYPERVISCOSITY,
    K_STEP, K_DURATION, K_MAX_CFL,
    K_INITIAL_STATE, K_NOISE, K_SEED,
    K_OUT_DIRECTORY, K_SNAPSHOT_EVERY, K_CHECKPOINT_EVERY, K_LOG_EVERY,
    K_TWIN_REF_POINTS, K_TWIN_COARSE_POINTS, K_TWIN_SPINUP, K_TWIN_ANALYSIS, K_TWIN_SAMPLE,
    K_TWIN_COMPARE, K_TWIN_MEMBERS, K_TWIN_FILTER, K_TWIN_WIDTH,
    K_VET_REFERENCE, K_VET_SPINUP, K_VET_WINDOW, K_VET_STEP_FACTORS, K_VET_MULTIPLIERS,
    K_VET_KRYLOV, K_VET_GROWTH, K_VET_NOISE, K_VET_MARGIN, K_VET_FINER,
    K_COUNT
};

_Static_assert(K_COUNT <= TG_CONFIG_MAX_KEYS, "raise TG_CONFIG_MAX_KEYS in config.h");

/* The first line of every resolved config (config_dump.c); the reader
 * marks a file that starts with it (tg_config.resolved). */
#define TG_CFG_RESOLVED_HEADER \
    "; twingyre configuration, fully resolved: every key, in reference order"

/* The key table (config_keys.c), indexed by the K_ values above. */
extern const key_row tg_cfg_rows[K_COUNT];

/* Names of the [wind] profiles, indexed by tg_wind_kind. */
extern const char *const tg_cfg_wind_names[];

/* Sections (config_keys.c). */
int tg_cfg_starts_section(int i);          /* row i is the first of its section */
int tg_cfg_section_exists(const char *section);
int tg_cfg_closure_section(const char *section);
int tg_cfg_twin_override_section(const char *section);
int tg_cfg_is_scheme(const char *name);     /* a registered closure scheme (hooks) */

/* Values (config_value.c). */
int tg_cfg_apply_value(const key_row *r, tg_config *cfg, const char *value, char *why, size_t n);
void tg_cfg_format_value(const key_row *r, const tg_config *cfg, char *out, size_t n);
void tg_cfg_format_real(double v, char *out, size_t n);
void tg_cfg_quote(const char *value, char *out, size_t n);

/* Suggestions and explanations (config_suggest.c). How a key is written
 * in a message: in a file "[time] step_s", on the command line "time.step_s". */
typedef enum { STYLE_FILE, STYLE_SET } name_style;
int tg_cfg_suggest_key(const char *section, const char *name);
const char *tg_cfg_suggest_choice(const char *const *choices, const char *given);
int tg_cfg_same_first_word(const char *a, const char *b);
void tg_cfg_explain_unknown_section(const char *section, name_style style, char *out, size_t n);
void tg_cfg_explain_unknown_key(const char *section, const char *name, name_style style,
                                char *out, size_t n);
void tg_cfg_append(char *out, size_t n, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

/* Messages naming where a key was set (config_check.c). */
void tg_cfg_key_where(const tg_config *cfg, int i, const char *origin, char *out, size_t n);
void tg_cfg_key_note(const tg_config *cfg, int i, char *out, size_t n);
tg_code tg_cfg_key_fail(const tg_config *cfg, int i, const char *origin, tg_status *st,
                        const char *fmt, ...) __attribute__((format(printf, 5, 6)));
int tg_cfg_is_pow2(int v);

/* The rules of a run and its closure sections, without warnings; the
 * sections the closure list uses go into used (config_check.c). */
tg_code tg_cfg_check_run(const tg_config *cfg, const char *origin,
                         char (*used)[TG_SECTION_LEN], int max, int *nused, tg_status *st);

/* The [twin] rules and every derived config of the twin (config_twin.c). */
tg_code tg_cfg_check_twin(const tg_config *base, const char *origin,
                          char (*used)[TG_SECTION_LEN], int max, int *nused, tg_status *st);

/* Settings whose default follows other keys (config_read.c): applied to
 * every key the user has not set, after each file and --set. */
void tg_cfg_follow_defaults(tg_config *cfg);

#endif
