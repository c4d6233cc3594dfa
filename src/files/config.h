/* config.h - typed experiment settings and the table of every config key.
 *
 * A config file is INI (read with libinih). Every key has one row in the key
 * table (config.c): section, name, unit, type, default, allowed range and a
 * one-line meaning. The table drives parsing, validation, `--set` overrides,
 * "did you mean" suggestions, the resolved-config dump and the README
 * reference. Loading order: tg_config_defaults -> tg_config_load_file ->
 * tg_config_set (each --set) -> tg_config_check (cross-key rules).
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

/* Where a key's value came from (tg_config.set_by_user[]). */
typedef enum { TG_SET_DEFAULT = 0, TG_SET_FILE = 1, TG_SET_OPTION = 2 } tg_set_origin;

/* Upper bound on the number of rows in the key table (checked in config.c). */
#define TG_CONFIG_MAX_KEYS 64

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
    double step_s;                  /* fixed time step, s */
    double duration_days;           /* length of the experiment from day 0, days */
    double max_cfl;                 /* a step with a larger advective CFL stops the run */

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
     * parameter tables in tg_config_check. Sections accepted here: closure,
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

/* Cross-key rules (e.g. basin points = 2^k + 1, one reduced gravity per
 * interface, wall keys only in a basin, the initial file exists).
 * `origin` names the config file for messages (may be NULL). */
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

/* Twin experiments (`twingyre twin`, twin.h). tg_config_check leaves [twin]
 * alone (a plain run ignores it); these apply its rules.
 *
 * tg_config_twin_derive makes the config of the reference (coarse = 0) or
 * of the coarse runs (coarse = 1) from base: grid points from [twin], then
 * every override of [twin.reference] or [twin.coarse] in file order. An
 * override of a key the twin sets itself (grid geometry, size and points,
 * the layers, the run length, the output directory and, for coarse runs,
 * the initial state, snapshot interval and [closure] use) is refused.
 * Messages: "FILE:LINE: [twin.coarse] section.key: ...". out is not checked
 * with tg_config_check (the caller does that). */
tg_code tg_config_twin_derive(const tg_config *base, int coarse, const char *origin,
                              tg_config *out, tg_status *st);

/* [twin] rules: reference and coarse points of the geometry's form, the
 * coarse spacing an integer multiple r >= 2 of the reference spacing, the
 * spin-up a whole number of reference steps, the sample interval a whole
 * number of steps of both runs, the window a whole number of samples, and
 * the compare list well formed (its names are resolved by twin.c). */
tg_code tg_config_check_twin(const tg_config *base, const char *origin, tg_status *st);

/* A [twin] compare entry "coefficients:PATH" names a coefficients file
 * (e.g. from `twingyre fit`) to run with the closure `coefficients`;
 * "network:PATH" a TorchScript file (scripts/train-network) for the closure
 * `network`. For such an entry returns the scheme's name (whose key `file`
 * takes PATH) and writes PATH resolved against the config file's directory
 * (cfg->config_dir; absolute paths unchanged), else NULL. */
const char *tg_config_fitted_entry(const tg_config *cfg, const char *entry, char *path, size_t n);
/* [vet] rules (`twingyre vet`, vet.h): a closure is configured, the window
 * holds at least one step, required_margin is at most the largest
 * multiplier, and a reference state file can be opened. Messages name the
 * file and line of the key. */
tg_code tg_config_check_vet(const tg_config *cfg, const char *origin, tg_status *st);

/* Prints the reference table (Markdown) used in README. */
void tg_config_print_reference(FILE *out);

#endif
