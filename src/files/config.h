/* config.h - typed experiment settings and the table of every config key.
 *
 * A config file is INI (read with libinih). Every key has one row in the key
 * table (config_keys.c): section, name, unit, type, default, allowed range
 * and a one-line meaning. The table drives parsing, validation, `--set`
 * overrides, "did you mean" suggestions, the resolved-config dump and the
 * README reference. The config layer's files (src/files/config_*.c):
 *   config_keys.c       the key table as data, lookups, sections
 *   config_value.c      one value: read from text, range-checked, written back
 *   config_suggest.c    "did you mean" and the unknown-name messages
 *   config_read.c       defaults, INI files and text, --set
 *   config_check.c      rules between keys and tg_config_validate
 *   config_twin.c       the twin's derived configs and the [twin] rules
 *   config_dump.c       the resolved config (tg_config_to_ini)
 *   config_reference.c  README's reference table
 *   config_hooks.c      the checks higher layers install (config_hooks.h)
 * Loading order: tg_config_defaults -> tg_config_load_file -> tg_config_set
 * (each --set) -> tg_config_validate (every rule of the commands given).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_CONFIG_H
#define TG_CONFIG_H

#include <stdint.h>
#include <stdio.h>

#include "status.h"

#define TG_MAX_LAYERS 6
#define TG_PATH_LEN 4096

typedef enum { TG_GEOM_BASIN = 0, TG_GEOM_PERIODIC = 1 } tg_geometry_kind;
typedef enum { TG_WALL_FREE_SLIP = 0, TG_WALL_PARTIAL_SLIP = 1, TG_WALL_NO_SLIP = 2 } tg_wall_kind;
typedef enum { TG_WIND_DOUBLE_GYRE = 0, TG_WIND_SINGLE_GYRE = 1, TG_WIND_NONE = 2 } tg_wind_kind;
typedef enum { TG_INIT_REST = 0, TG_INIT_NOISE = 1, TG_INIT_FILE = 2 } tg_init_kind;
typedef enum { TG_TWIN_FILTER_SHARP = 0, TG_TWIN_FILTER_GAUSSIAN = 1 } tg_twin_filter;
typedef enum { TG_STEP_FIXED = 0, TG_STEP_ADAPTIVE = 1 } tg_step_choice;

/* Where a key's value came from (tg_config.set_by_user[]). */
typedef enum { TG_SET_DEFAULT = 0, TG_SET_FILE = 1, TG_SET_OPTION = 2 } tg_set_origin;

/* Upper bound on the number of rows in the key table (checked in config_impl.h). */
#define TG_CONFIG_MAX_KEYS 64

/* Most components one [closure] use list may combine (the same value as
 * closure.h, which plugins include alone). */
#define TG_MAX_CLOSURES 8

#define TG_MAX_RAW 96
#define TG_RAW_TEXT 200
#define TG_MAX_TWIN_RAW 64

/* One key = value of a closure section, as written. */
typedef struct {
    char section[64];
    char key[64];
    char value[TG_RAW_TEXT];
    int line;            /* line in the config file; 0 when from --set */
} tg_raw_entry;

typedef struct tg_config {
    /* [grid] */
    tg_geometry_kind geometry;      /* geometry = basin | periodic */
    double size_km;                 /* side of the square domain, km */
    int points;                     /* grid points per side (basin: 2^k + 1, walls included) */
    tg_wall_kind wall_condition;    /* free_slip | partial_slip | no_slip */
    double wall_slip_coefficient;   /* 0 = free slip ... 1 = no slip (partial_slip only) */

    /* [layers] */
    int nlayers;                              /* set from the number of thicknesses */
    double thickness_m[TG_MAX_LAYERS];        /* H_k, top to bottom, m */
    int n_reduced_gravity;                    /* number of values given for reduced_gravity_m_s2 */
    double reduced_gravity_m_s2[TG_MAX_LAYERS - 1]; /* g'_i, interface i below layer i, m s-2 */

    /* [planet] */
    double coriolis_f0_per_s;       /* f0, s-1 */
    double beta_per_m_per_s;        /* beta, m-1 s-1 */

    /* [background] (periodic geometry only) */
    int n_zonal_velocity;                     /* 0 (none) or nlayers */
    double zonal_velocity_m_s[TG_MAX_LAYERS]; /* U_k, uniform imposed eastward flow, m s-1 */

    /* [wind] */
    tg_wind_kind wind_profile;      /* double_gyre | single_gyre | none */
    double stress_amplitude_pa;     /* tau0, Pa */
    double reference_density_kg_m3; /* rho0, kg m-3 */

    /* [dissipation] */
    double bottom_drag_per_s;       /* r, s-1 */
    double viscosity_m2_per_s;      /* A2, m2 s-1 */
    double hyperviscosity_m4_per_s; /* A4, m4 s-1 */

    /* [time] */
    double step_s;                  /* fixed time step (adaptive: the first step), s */
    double duration_days;           /* length of the experiment from day 0, days */
    double max_cfl;                 /* a step with a larger advective CFL stops the run */
    tg_step_choice step_choice;     /* fixed | adaptive (run_steps.h) */
    double target_cfl;              /* adaptive: advective CFL number each step aims at */
    double largest_step_s;          /* adaptive: bounds of the step, s */
    double smallest_step_s;
    double step_growth;             /* adaptive: largest ratio of a step to the one before */

    /* [initial] */
    tg_init_kind initial_kind;      /* state = rest | noise | PATH.nc */
    char initial_path[TG_PATH_LEN]; /* when initial_kind == TG_INIT_FILE */
    double noise_amplitude_m2_per_s;/* r.m.s. of the initial streamfunction noise */
    uint64_t seed;                  /* seed of every random number the run draws */

    /* [output] */
    char out_directory[TG_PATH_LEN];/* where fields.nc, budget.nc, checkpoint.nc go */
    double snapshot_every_days;     /* interval between fields.nc records, days */
    double checkpoint_every_days;   /* interval between checkpoint rewrites, days (0: only at the end) */
    double log_every_days;          /* interval between budget summary lines in the log, days */

    /* [closure] and each scheme's own section, kept as written; the
     * closure layer (closure_host.c) validates them against the schemes'
     * parameter tables in tg_config_validate. Sections accepted here: closure,
     * every registered scheme name, and plugin.NAME for plugins. */
    int nraw;
    tg_raw_entry raw[TG_MAX_RAW];

    /* [twin]: the twin experiment of `twingyre twin` (twin.h); `run` ignores it. */
    int twin_reference_points;      /* grid points per side of the reference */
    int twin_coarse_points;         /* grid points per side of the coarse runs */
    double twin_spinup_days;        /* reference spin-up before the analysis window, days */
    double twin_analysis_days;      /* length of the analysis window, days */
    double twin_sample_every_days;  /* interval between samples in the window, days */
    char twin_compare[TG_PATH_LEN]; /* closures compared: NAME[, NAME...] as written */
    int twin_members;               /* ensemble members of each stochastic closure */
    tg_twin_filter twin_filter;     /* coarse-graining filter */
    double twin_filter_width_factor;/* Gaussian filter width / coarse grid spacing */
    int twin_reference_fields;      /* 1: the reference writes reference/fields.nc at each sample */

    /* [twin.reference] and [twin.coarse]: overrides "section.key = value"
     * applied to the reference or to every coarse run, kept as written
     * (section is "twin.reference" or "twin.coarse", key is "section.key");
     * tg_config_twin_derive applies and checks them. */
    int ntwin_raw;
    tg_raw_entry twin_raw[TG_MAX_TWIN_RAW];

    /* [vet]: the closure battery of `twingyre vet` (vet.h); `run` ignores it. */
    char vet_reference_state[TG_PATH_LEN]; /* "spinup" or the path of a state file */
    double vet_spinup_days;         /* spin-up from [initial] state when reference_state = spinup */
    double vet_window_days;         /* length of each online run, days */
    int n_vet_step_factors;
    double vet_step_factors[TG_MAX_LAYERS];   /* online runs: step = factor x [time] step_s */
    int n_vet_multipliers;
    double vet_multipliers[TG_MAX_LAYERS];    /* online runs: closure tendency x multiplier */
    int vet_krylov_dimension;       /* Arnoldi steps of the linear check */
    double vet_growth_limit;        /* energy with the closure / without it, at most */
    double vet_noise_limit;         /* energy fraction in the highest wavenumber band, at most */
    double vet_required_margin;     /* largest stable multiplier must be at least this */
    int vet_finer_grid;             /* 1: repeat the online check on the next finer grid */

    /* Not a config key: the ensemble member (--member), 0 by default. */
    int member;

    /* Not a config key: 1 when the last file read was a resolved config that
     * twingyre wrote (tg_config_to_ini's first line). Such a file sets every
     * key, so its keys say nothing about intent: they raise no "ignored"
     * warnings and do not make tg_config_uses infer [vet]. */
    int resolved;

    /* Not a config key: the directory of the config file that
     * tg_config_load_file read last ("" before any, or for text), against
     * which closure files given in that file are resolved. */
    char config_dir[TG_PATH_LEN];

    /* Bookkeeping for messages, indexed by key-table row (tg_config_key). */
    unsigned char set_by_user[TG_CONFIG_MAX_KEYS]; /* tg_set_origin of each key */
    int set_line[TG_CONFIG_MAX_KEYS];              /* config-file line when TG_SET_FILE, else 0 */
} tg_config;

/* Fills every key with its documented default. */
void tg_config_defaults(tg_config *cfg);

/* Reads an INI file over the current values. On error: TG_ERR_CONFIG (or
 * TG_ERR_IO when the file cannot be opened) with a message of the form
 * "FILE:LINE: [section] key: ..." that names what was expected and what was
 * found, and "did you mean ..." for unknown sections and keys. */
tg_code tg_config_load_file(tg_config *cfg, const char *path, tg_status *st);

/* The same for INI text held in memory (e.g. the resolved_config attribute
 * of an output file); `name` stands for the file in messages. */
tg_code tg_config_load_text(tg_config *cfg, const char *text, const char *name, tg_status *st);

/* Applies one override "section.key=value" with the same checks as the file.
 * Messages start with "--set section.key=value: ". */
tg_code tg_config_set(tg_config *cfg, const char *assignment, tg_status *st);

/* What a config is checked for: the commands that will use it. */
enum {
    TG_USE_RUN = 1,   /* a run of this config (run, vet, a sweep's run members) */
    TG_USE_TWIN = 2,  /* a twin experiment (twin, a sweep's twin members) */
    TG_USE_VET = 4,   /* the closure battery (vet) */
    TG_USE_QUIET = 8  /* no warnings: for a config whose warnings were given already */
};

/* The uses a config is written for, as `describe` infers them: TG_USE_TWIN
 * when it sets a [twin] key or has [twin.reference]/[twin.coarse] overrides
 * (a resolved config: when its compare list or overrides differ from the
 * defaults), else TG_USE_RUN; TG_USE_VET besides when it sets a [vet] key
 * (not counting a resolved config's). */
unsigned tg_config_uses(const tg_config *cfg);

/* The one validation entry of every command. Checks every rule of the
 * given uses (a TG_USE_ mask; 0 means tg_config_uses(cfg)): each key's
 * rules against the others (basin points = 2^k + 1, one reduced gravity per
 * interface, wall keys only in a basin, steps against intervals, the step
 * count, deformation radii and diffusive limits, the initial state file),
 * the closure sections through the installed hooks (config_hooks.h);
 * with TG_USE_TWIN the [twin] rules and every derived config of the twin
 * (the reference and one coarse run per compared closure) instead of the
 * base config as a run; with TG_USE_VET the [vet] rules. Warnings about
 * settings without effect (a key ignored unless another is set, a closure
 * section nothing uses) are logged here, once each. `origin` names the
 * config file for messages (may be NULL). TG_USE_QUIET added to the mask
 * leaves the warnings out. */
tg_code tg_config_validate(const tg_config *cfg, unsigned uses, const char *origin,
                           tg_status *st);

/* tg_config_validate(cfg, TG_USE_RUN, origin, st). */
tg_code tg_config_check(const tg_config *cfg, const char *origin, tg_status *st);

/* Writes the fully resolved config as INI text (every key, one per line,
 * with its unit as a trailing comment) to a newly malloc'ed string. */
char *tg_config_to_ini(const tg_config *cfg);

/* One row of the key table, for listings and the README reference. */
typedef struct {
    const char *section;
    const char *key;
    const char *unit;       /* "" when dimensionless */
    const char *type;       /* "real", "integer", "list of reals", "choice", "text" */
    const char *def;        /* default as written in a config, "" when required */
    const char *range;      /* allowed values in words, e.g. "> 0", "2^k + 1, 17 to 4097" */
    const char *meaning;
} tg_key_info;

/* Number of keys and the i-th key's description. */
int tg_config_key_count(void);
const tg_key_info *tg_config_key(int i);

/* Row index of [section] key in the key table, or -1 when there is no such key. */
int tg_config_key_index(const char *section, const char *key);

/* Index of the candidate closest to `given` by edit distance when it is
 * close enough to suggest, else -1 (the "did you mean" rule of the config). */
int tg_config_suggest(const char *given, const char *const *cands, int n);

/* Finds a raw closure entry; NULL when absent. */
const tg_raw_entry *tg_config_raw(const tg_config *cfg, const char *section, const char *key);

/* Twin experiments (`twingyre twin`, twin.h): the configs a twin runs,
 * derived from its base config; tg_config_validate with TG_USE_TWIN checks
 * all of them, so these only fail on a config it has not passed.
 *
 * tg_config_twin_derive makes the config of the reference (coarse = 0) or
 * of the coarse runs (coarse = 1) from base: grid points from [twin], then
 * every override of [twin.reference] or [twin.coarse] in file order. An
 * override of a key the twin sets itself (grid geometry, size and points,
 * the layers, the run length, the output directory and, for coarse runs,
 * the initial state, snapshot interval and [closure] use) is refused.
 * Messages: "FILE:LINE: [twin.coarse] section.key: ...". */
tg_code tg_config_twin_derive(const tg_config *base, int coarse, const char *origin,
                              tg_config *out, tg_status *st);

/* The reference run: tg_config_twin_derive(base, 0) running spin-up plus
 * window into DIR/reference (DIR: base's output directory). */
tg_code tg_config_twin_reference(const tg_config *base, const char *origin, tg_config *out,
                                 tg_status *st);

/* The coarse runs before a closure is chosen: tg_config_twin_derive(base,
 * 1) running the window from rest (the starting file is written later),
 * a snapshot at every sample and one summary line. */
tg_code tg_config_twin_coarse(const tg_config *base, const char *origin, tg_config *out,
                              tg_status *st);

/* The entries a twin compares: "none" first, then [twin] compare's names
 * in order without "none"; returns their count (at most TG_MAX_CLOSURES). */
int tg_config_twin_entries(const tg_config *base, char entries[][TG_RAW_TEXT]);

/* The coarse run of one entry: coarse with [closure] use = entry, or for
 * "coefficients:PATH" use = coefficients with [coefficients] file = PATH
 * resolved against the config's directory ("network:PATH" likewise). */
tg_code tg_config_twin_entry(const tg_config *base, const tg_config *coarse, const char *entry,
                             tg_config *out, tg_status *st);

/* A [twin] compare entry "coefficients:PATH" names a coefficients file
 * (e.g. from `twingyre fit`) to run with the closure `coefficients`;
 * "network:PATH" a TorchScript file (scripts/train-network) for the closure
 * `network`. For such an entry returns the scheme's name (whose key `file`
 * takes PATH) and writes PATH resolved against the config file's directory
 * (cfg->config_dir; absolute paths unchanged), else NULL. */
const char *tg_config_fitted_entry(const tg_config *cfg, const char *entry, char *path, size_t n);

/* Prints the reference table (Markdown) used in README. */
void tg_config_print_reference(FILE *out);

#endif
