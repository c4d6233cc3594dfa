/* config.c - the table of every config key and everything it drives:
 * defaults, reading an INI file (libinih), --set overrides, cross-key checks,
 * the resolved-config dump and the Markdown reference for README.
 *
 * The key table `rows` is the single source of truth: each row carries the
 * documented default (tg_config_defaults applies it through the same parser
 * a config file goes through), the allowed range, the words used in error
 * messages and where the value lives in tg_config.
 *
 * Reading a file: the whole file is read into memory and handed to
 * ini_parse_stream through our own line reader, which counts lines (the
 * handler of the Debian libinih build gets no line number), rejects lines
 * longer than libinih's line buffer (it would split them silently), rejects
 * indented lines (libinih would glue them to the previous value) and checks
 * [section] headers as they pass. Values go into a working copy that
 * replaces the caller's config only when the whole file is good.
 *
 * Numbers are read with strtod/strtoll/strtoull after a full-string syntax
 * check (decimal only; no hex, NaN or infinity); they assume the "C" numeric
 * locale, which is what a program has unless it calls setlocale.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config.h"
#include "closure.h"
#include "basis.h"
#include "closure_host.h"
#include "strbuf.h"
#include "textfile.h"

#include <ini.h>

#include <ctype.h>
#include <errno.h>
#include <inttypes.h>
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------------ */
/* The key table                                                       */
/* ------------------------------------------------------------------ */

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
    const char *const *choices;         /* V_CHOICE: NULL-terminated, index = enum value */
    int (*get)(const tg_config *);      /* V_CHOICE */
    void (*put)(tg_config *, int);      /* V_CHOICE */
    const char *expect;                 /* "a real number > 0": used as "expected %s, got '...'" */
    const char *item_rule;              /* lists: the rule one value breaks, e.g. "> 0" */
} key_row;

static const char *const geometry_names[] = {
    [TG_GEOM_BASIN] = "basin", [TG_GEOM_PERIODIC] = "periodic", NULL};
static const char *const wall_names[] = {
    [TG_WALL_FREE_SLIP] = "free_slip", [TG_WALL_PARTIAL_SLIP] = "partial_slip",
    [TG_WALL_NO_SLIP] = "no_slip", NULL};
static const char *const wind_names[] = {
    [TG_WIND_DOUBLE_GYRE] = "double_gyre", [TG_WIND_SINGLE_GYRE] = "single_gyre",
    [TG_WIND_NONE] = "none", NULL};

static const char *const twin_filter_names[] = {
    [TG_TWIN_FILTER_SHARP] = "sharp", [TG_TWIN_FILTER_GAUSSIAN] = "gaussian", NULL};

static int get_geometry(const tg_config *c) { return (int)c->geometry; }
static void put_geometry(tg_config *c, int v) { c->geometry = (tg_geometry_kind)v; }
static int get_wall(const tg_config *c) { return (int)c->wall_condition; }
static void put_wall(tg_config *c, int v) { c->wall_condition = (tg_wall_kind)v; }
static int get_wind(const tg_config *c) { return (int)c->wind_profile; }
static void put_wind(tg_config *c, int v) { c->wind_profile = (tg_wind_kind)v; }
static const char *const yes_no_names[] = {"no", "yes", NULL};
static int get_vet_finer(const tg_config *c) { return c->vet_finer_grid != 0; }
static void put_vet_finer(tg_config *c, int v) { c->vet_finer_grid = v; }
static int get_twin_filter(const tg_config *c) { return (int)c->twin_filter; }
static void put_twin_filter(tg_config *c, int v) { c->twin_filter = (tg_twin_filter)v; }

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

#define OFF(field) offsetof(tg_config, field)
#define REAL_GT0(expect_) .kind = V_REAL, .lo_kind = B_EXCL, .lo = 0.0, .expect = expect_
#define REAL_GE0(expect_) .kind = V_REAL, .lo_kind = B_INCL, .lo = 0.0, .expect = expect_

static const key_row rows[K_COUNT] = {
    /* [grid] */
    [K_GEOMETRY] = {
        .info = {"grid", "geometry", "", "choice", "basin", "basin, periodic",
                 "closed square basin with walls on all four sides, or a doubly periodic square"},
        .kind = V_CHOICE, .choices = geometry_names, .get = get_geometry, .put = put_geometry,
        .expect = "one of basin, periodic"},
    [K_SIZE] = {
        .info = {"grid", "size_km", "km", "real", "3840", "> 0",
                 "side length of the square domain"},
        .off = OFF(size_km), REAL_GT0("a real number > 0")},
    [K_POINTS] = {
        .info = {"grid", "points", "", "integer", "129",
                 "basin: 2^k + 1 from 17 to 4097; periodic: 2^k from 16 to 4096",
                 "grid points along each side (in a basin both walls are grid points)"},
        .kind = V_INT, .off = OFF(points), .lo_kind = B_INCL, .lo = 16, .hi_kind = B_INCL, .hi = 4097,
        .expect = "an integer from 16 to 4097 (2^k + 1 for a basin, 2^k for periodic geometry)"},
    [K_WALL_CONDITION] = {
        .info = {"grid", "wall_condition", "", "choice", "free_slip",
                 "free_slip, partial_slip, no_slip (basin only)",
                 "condition on the along-wall velocity at the basin walls"},
        .kind = V_CHOICE, .choices = wall_names, .get = get_wall, .put = put_wall,
        .expect = "one of free_slip, partial_slip, no_slip"},
    [K_WALL_SLIP] = {
        .info = {"grid", "wall_slip_coefficient", "", "real", "0.5", "0 to 1 (basin only)",
                 "with partial_slip: 0 acts as free slip, 1 as no slip"},
        .kind = V_REAL, .off = OFF(wall_slip_coefficient),
        .lo_kind = B_INCL, .lo = 0.0, .hi_kind = B_INCL, .hi = 1.0,
        .expect = "a real number from 0 to 1"},

    /* [layers] */
    [K_THICKNESS] = {
        .info = {"layers", "thickness_m", "m", "list of reals", "1000, 3000",
                 "1 to 6 comma-separated values, each > 0",
                 "resting thickness of each layer, top first; the count sets the number of layers"},
        .kind = V_REAL_LIST, .off = OFF(thickness_m), .count_off = OFF(nlayers),
        .min_count = 1, .max_count = TG_MAX_LAYERS, .lo_kind = B_EXCL, .lo = 0.0,
        .expect = "a comma-separated list of 1 to 6 real numbers, each > 0", .item_rule = "> 0"},
    [K_REDUCED_GRAVITY] = {
        .info = {"layers", "reduced_gravity_m_s2", "m s-2", "list of reals", "0.02",
                 "one value per interface (layers - 1), each > 0",
                 "reduced gravity across each interface, top first"},
        .kind = V_REAL_LIST, .off = OFF(reduced_gravity_m_s2), .count_off = OFF(n_reduced_gravity),
        .min_count = 0, .max_count = TG_MAX_LAYERS - 1, .lo_kind = B_EXCL, .lo = 0.0,
        .expect = "a comma-separated list of 0 to 5 real numbers (one per interface), each > 0",
        .item_rule = "> 0"},

    /* [planet] */
    [K_F0] = {
        .info = {"planet", "coriolis_f0_per_s", "s-1", "real", "9.37e-5", "nonzero",
                 "Coriolis parameter at the middle latitude of the domain (negative in the south)"},
        .kind = V_REAL, .off = OFF(coriolis_f0_per_s), .nonzero = 1,
        .expect = "a nonzero real number"},
    [K_BETA] = {
        .info = {"planet", "beta_per_m_per_s", "m-1 s-1", "real", "1.75e-11", ">= 0",
                 "northward rate of change of the Coriolis parameter"},
        .off = OFF(beta_per_m_per_s), REAL_GE0("a real number >= 0")},

    /* [background] */
    [K_BACKGROUND_U] = {
        .info = {"background", "zonal_velocity_m_s", "m s-1", "list of reals", "",
                 "periodic only: one value per layer, any sign (empty: no background flow)",
                 "uniform imposed eastward velocity of each layer, top first; its vertical "
                 "shear drives baroclinic eddies"},
        .kind = V_REAL_LIST, .off = OFF(zonal_velocity_m_s), .count_off = OFF(n_zonal_velocity),
        .min_count = 0, .max_count = TG_MAX_LAYERS,
        .expect = "a comma-separated list of 0 to 6 real numbers (one per layer)",
        .item_rule = "a finite real number"},

    /* [wind] */
    [K_WIND_PROFILE] = {
        .info = {"wind", "profile", "", "choice", "double_gyre", "double_gyre, single_gyre, none",
                 "pattern of the steady zonal wind stress"},
        .kind = V_CHOICE, .choices = wind_names, .get = get_wind, .put = put_wind,
        .expect = "one of double_gyre, single_gyre, none"},
    [K_STRESS] = {
        .info = {"wind", "stress_amplitude_pa", "Pa", "real", "0.08", ">= 0",
                 "peak magnitude of the zonal wind stress"},
        .off = OFF(stress_amplitude_pa), REAL_GE0("a real number >= 0")},
    [K_DENSITY] = {
        .info = {"wind", "reference_density_kg_m3", "kg m-3", "real", "1030", "> 0",
                 "reference sea-water density that converts stress into forcing"},
        .off = OFF(reference_density_kg_m3), REAL_GT0("a real number > 0")},

    /* [dissipation] */
    [K_DRAG] = {
        .info = {"dissipation", "bottom_drag_per_s", "s-1", "real", "1e-7", ">= 0",
                 "linear drag rate on the bottom layer"},
        .off = OFF(bottom_drag_per_s), REAL_GE0("a real number >= 0")},
    [K_VISCOSITY] = {
        .info = {"dissipation", "viscosity_m2_per_s", "m2 s-1", "real", "200", ">= 0",
                 "harmonic (Laplacian) lateral viscosity"},
        .off = OFF(viscosity_m2_per_s), REAL_GE0("a real number >= 0")},
    [K_HYPERVISCOSITY] = {
        .info = {"dissipation", "hyperviscosity_m4_per_s", "m4 s-1", "real", "0", ">= 0",
                 "biharmonic lateral viscosity; 0 switches it off"},
        .off = OFF(hyperviscosity_m4_per_s), REAL_GE0("a real number >= 0")},

    /* [time] */
    [K_STEP] = {
        .info = {"time", "step_s", "s", "real", "1800", "> 0, at most the duration",
                 "fixed time step"},
        .off = OFF(step_s), REAL_GT0("a real number > 0")},
    [K_DURATION] = {
        .info = {"time", "duration_days", "days", "real", "360", "> 0",
                 "length of the run, counted from day 0"},
        .off = OFF(duration_days), REAL_GT0("a real number > 0")},
    [K_MAX_CFL] = {
        .info = {"time", "max_cfl", "", "real", "1.0", "> 0",
                 "largest advective CFL number allowed; a step above it stops the run"},
        .off = OFF(max_cfl), REAL_GT0("a real number > 0")},

    /* [initial] */
    [K_INITIAL_STATE] = {
        .info = {"initial", "state", "", "choice or path", "rest",
                 "rest, noise, or the path of a file to start from",
                 "starting state: fluid at rest, random streamfunction noise, or a saved state"},
        .kind = V_INITIAL,
        .expect = "rest, noise or the path of a readable file"},
    [K_NOISE] = {
        .info = {"initial", "noise_amplitude_m2_per_s", "m2 s-1", "real", "1000", "> 0",
                 "r.m.s. streamfunction of the initial noise (state = noise)"},
        .off = OFF(noise_amplitude_m2_per_s), REAL_GT0("a real number > 0")},
    [K_SEED] = {
        .info = {"initial", "seed", "", "integer", "1", "0 to 18446744073709551615",
                 "seed of every random number the run draws"},
        .kind = V_U64, .off = OFF(seed),
        .expect = "an unsigned 64-bit integer (0 to 18446744073709551615)"},

    /* [output] */
    [K_OUT_DIRECTORY] = {
        .info = {"output", "directory", "", "text", "output", "a directory path",
                 "directory that receives the output files"},
        .kind = V_TEXT, .off = OFF(out_directory),
        .expect = "a directory path"},
    [K_SNAPSHOT_EVERY] = {
        .info = {"output", "snapshot_every_days", "days", "real", "30", "> 0, at least one step",
                 "interval between field snapshots"},
        .off = OFF(snapshot_every_days), REAL_GT0("a real number > 0")},
    [K_CHECKPOINT_EVERY] = {
        .info = {"output", "checkpoint_every_days", "days", "real", "360",
                 ">= 0 (0: only at the end), at least one step",
                 "interval between checkpoint rewrites"},
        .off = OFF(checkpoint_every_days), REAL_GE0("a real number >= 0")},
    [K_LOG_EVERY] = {
        .info = {"output", "log_every_days", "days", "real", "30", "> 0, at least one step",
                 "interval between budget summary lines in the log"},
        .off = OFF(log_every_days), REAL_GT0("a real number > 0")},

    /* [twin]: read by `twingyre twin` only (twin.h) */
    [K_TWIN_REF_POINTS] = {
        .info = {"twin", "reference_points", "", "integer", "513",
                 "like [grid] points (basin 2^k + 1, periodic 2^k), more than coarse_points",
                 "grid points per side of the fine reference run of a twin experiment"},
        .kind = V_INT, .off = OFF(twin_reference_points), .lo_kind = B_INCL, .lo = 16,
        .hi_kind = B_INCL, .hi = 4097,
        .expect = "an integer from 16 to 4097 (2^k + 1 for a basin, 2^k for periodic geometry)"},
    [K_TWIN_COARSE_POINTS] = {
        .info = {"twin", "coarse_points", "", "integer", "129",
                 "like [grid] points; coarse spacing = r x reference spacing, r an integer >= 2",
                 "grid points per side of the coarse runs (e.g. 513 -> 129 is r = 4)"},
        .kind = V_INT, .off = OFF(twin_coarse_points), .lo_kind = B_INCL, .lo = 16,
        .hi_kind = B_INCL, .hi = 4097,
        .expect = "an integer from 16 to 4097 (2^k + 1 for a basin, 2^k for periodic geometry)"},
    [K_TWIN_SPINUP] = {
        .info = {"twin", "spinup_days", "days", "real", "3600",
                 ">= 0, a whole number of reference steps",
                 "reference run before the analysis window starts (from [initial] state)"},
        .off = OFF(twin_spinup_days), REAL_GE0("a real number >= 0")},
    [K_TWIN_ANALYSIS] = {
        .info = {"twin", "analysis_days", "days", "real", "1800",
                 "> 0, a whole number of sample intervals",
                 "length of the analysis window: sampled reference and coarse runs"},
        .off = OFF(twin_analysis_days), REAL_GT0("a real number > 0")},
    [K_TWIN_SAMPLE] = {
        .info = {"twin", "sample_every_days", "days", "real", "10",
                 "> 0, a whole number of steps of both the reference and the coarse runs",
                 "interval between samples (subgrid.nc records, coarse-run snapshots)"},
        .off = OFF(twin_sample_every_days), REAL_GT0("a real number > 0")},
    [K_TWIN_COMPARE] = {
        .info = {"twin", "compare", "", "text", "none",
                 "comma-separated closure names (`twingyre closures`), plugin:PATH.so, "
                 "coefficients:FILE (a fitted coefficients file, relative to the config's "
                 "directory), network:FILE.pt (a trained network) or none; at most 7 besides "
                 "none",
                 "closures of the coarse runs, one coarse run each; none (no closure) is always run"},
        .kind = V_TEXT, .off = OFF(twin_compare),
        .expect = "a comma-separated list of closure names"},
    [K_TWIN_MEMBERS] = {
        .info = {"twin", "members", "", "integer", "3", "1 to 100",
                 "ensemble members run for each stochastic closure (deterministic ones run once)"},
        .kind = V_INT, .off = OFF(twin_members), .lo_kind = B_INCL, .lo = 1, .hi_kind = B_INCL,
        .hi = 100, .expect = "an integer from 1 to 100"},
    [K_TWIN_FILTER] = {
        .info = {"twin", "filter", "", "choice", "gaussian", "sharp, gaussian",
                 "coarse-graining filter: sharp spectral cutoff at the coarse grid, or Gaussian"},
        .kind = V_CHOICE, .choices = twin_filter_names, .get = get_twin_filter,
        .put = put_twin_filter, .expect = "one of sharp, gaussian"},
    [K_TWIN_WIDTH] = {
        .info = {"twin", "filter_width_factor", "", "real", "2", "> 0, at most 16",
                 "Gaussian filter width in coarse grid spacings (filter = gaussian only)"},
        .kind = V_REAL, .off = OFF(twin_filter_width_factor), .lo_kind = B_EXCL, .lo = 0.0,
        .hi_kind = B_INCL, .hi = 16.0, .expect = "a real number > 0 and at most 16"},

    /* [vet]: read by `twingyre vet` only (vet.h) */
    [K_VET_REFERENCE] = {
        .info = {"vet", "reference_state", "", "text", "spinup",
                 "spinup, or the path of a state file (fields.nc or checkpoint.nc of this grid)",
                 "state the closure is vetted around: a spin-up from [initial] state, or a file"},
        .kind = V_TEXT, .off = OFF(vet_reference_state),
        .expect = "spinup or the path of a state file"},
    [K_VET_SPINUP] = {
        .info = {"vet", "spinup_days", "days", "real", "360", ">= 0",
                 "length of the spin-up that makes the reference state (reference_state = spinup)"},
        .off = OFF(vet_spinup_days), REAL_GE0("a real number >= 0")},
    [K_VET_WINDOW] = {
        .info = {"vet", "window_days", "days", "real", "30",
                 "> 0, at least one step of the largest step factor",
                 "length of each online run from the reference state"},
        .off = OFF(vet_window_days), REAL_GT0("a real number > 0")},
    [K_VET_STEP_FACTORS] = {
        .info = {"vet", "step_factors", "", "list of reals", "0.5, 1, 2",
                 "1 to 6 comma-separated values, each > 0 and at most 16",
                 "online runs use [time] step_s times each factor (1 is always added)"},
        .kind = V_REAL_LIST, .off = OFF(vet_step_factors), .count_off = OFF(n_vet_step_factors),
        .min_count = 1, .max_count = TG_MAX_LAYERS, .lo_kind = B_EXCL, .lo = 0.0,
        .hi_kind = B_INCL, .hi = 16.0,
        .expect = "a comma-separated list of 1 to 6 real numbers, each > 0 and at most 16",
        .item_rule = "> 0 and at most 16"},
    [K_VET_MULTIPLIERS] = {
        .info = {"vet", "multipliers", "", "list of reals", "0.5, 1, 2, 4",
                 "1 to 6 comma-separated values, each > 0 and at most 1000",
                 "online runs scale the closure's tendency by each multiplier (1 is always added)"},
        .kind = V_REAL_LIST, .off = OFF(vet_multipliers), .count_off = OFF(n_vet_multipliers),
        .min_count = 1, .max_count = TG_MAX_LAYERS, .lo_kind = B_EXCL, .lo = 0.0,
        .hi_kind = B_INCL, .hi = 1000.0,
        .expect = "a comma-separated list of 1 to 6 real numbers, each > 0 and at most 1000",
        .item_rule = "> 0 and at most 1000"},
    [K_VET_KRYLOV] = {
        .info = {"vet", "krylov_dimension", "", "integer", "40", "4 to 200",
                 "Arnoldi steps (Jacobian-vector products) of the linear check"},
        .kind = V_INT, .off = OFF(vet_krylov_dimension), .lo_kind = B_INCL, .lo = 4,
        .hi_kind = B_INCL, .hi = 200, .expect = "an integer from 4 to 200"},
    [K_VET_GROWTH] = {
        .info = {"vet", "growth_limit", "", "real", "2", "> 1",
                 "largest allowed ratio of the energy with the closure to the energy of the "
                 "run without it (online), and of exp(2 x growth rate x window_days) (linear)"},
        .kind = V_REAL, .off = OFF(vet_growth_limit), .lo_kind = B_EXCL, .lo = 1.0,
        .expect = "a real number > 1"},
    [K_VET_NOISE] = {
        .info = {"vet", "noise_limit", "", "real", "0.25", "> 0, below 1",
                 "largest allowed kinetic-energy fraction in the highest wavenumber band "
                 "(K > pi/(2 dx)) at the end of an online run (when also above the run without "
                 "the closure)"},
        .kind = V_REAL, .off = OFF(vet_noise_limit), .lo_kind = B_EXCL, .lo = 0.0,
        .hi_kind = B_EXCL, .hi = 1.0, .expect = "a real number > 0 and below 1"},
    [K_VET_MARGIN] = {
        .info = {"vet", "required_margin", "", "real", "2", ">= 1, at most the largest multiplier",
                 "the closure must stay stable online up to this multiplier"},
        .kind = V_REAL, .off = OFF(vet_required_margin), .lo_kind = B_INCL, .lo = 1.0,
        .expect = "a real number >= 1"},
    [K_VET_FINER] = {
        .info = {"vet", "finer_grid", "", "choice", "yes", "yes, no",
                 "repeat the online check on the next finer grid (twice the resolution)"},
        .kind = V_CHOICE, .choices = yes_no_names, .get = get_vet_finer, .put = put_vet_finer,
        .expect = "one of yes, no"},
};

#undef REAL_GT0
#undef REAL_GE0
#undef OFF

#define SECONDS_PER_DAY 86400.0

int tg_config_key_count(void) { return K_COUNT; }

const tg_key_info *tg_config_key(int i)
{
    if (i < 0 || i >= K_COUNT)
        return NULL;
    return &rows[i].info;
}

int tg_config_key_index(const char *section, const char *key)
{
    if (!section || !key)
        return -1;
    for (int i = 0; i < K_COUNT; i++)
        if (strcmp(rows[i].info.section, section) == 0 && strcmp(rows[i].info.key, key) == 0)
            return i;
    return -1;
}

/* True when row i is the first row of its section (rows are grouped by section). */
static int starts_section(int i)
{
    return i == 0 || strcmp(rows[i - 1].info.section, rows[i].info.section) != 0;
}

static int core_section_exists(const char *section)
{
    for (int i = 0; i < K_COUNT; i++)
        if (strcmp(rows[i].info.section, section) == 0)
            return 1;
    return 0;
}

/* Sections the closure layer validates later: [closure], a registered
 * scheme's name, or plugin.NAME. */
static int closure_section(const char *section)
{
    return strcmp(section, "closure") == 0 || tg_closure_find(section) != NULL ||
           (strncmp(section, "plugin.", 7) == 0 && section[7] != '\0');
}

/* [twin.reference] and [twin.coarse]: overrides kept as written. */
static int twin_override_section(const char *section)
{
    return strcmp(section, "twin.reference") == 0 || strcmp(section, "twin.coarse") == 0;
}

static int section_exists(const char *section)
{
    return core_section_exists(section) || closure_section(section) ||
           twin_override_section(section);
}

/* Stores one twin override "section.key = value"; returns 0 or writes why. */
static int store_twin_raw(tg_config *cfg, const char *section, const char *key,
                          const char *value, int line, char *why, size_t n)
{
    if (strlen(key) >= sizeof cfg->twin_raw[0].key ||
        strlen(value) >= sizeof cfg->twin_raw[0].value) {
        snprintf(why, n, "key or value too long (at most %zu and %zu characters)",
                 sizeof cfg->twin_raw[0].key - 1, sizeof cfg->twin_raw[0].value - 1);
        return -1;
    }
    const char *dot = strchr(key, '.');
    if (!dot || dot == key || dot[1] == '\0') {
        snprintf(why, n, "expected an override written as section.key = value "
                         "(e.g. dissipation.viscosity_m2_per_s = 500)");
        return -1;
    }
    for (int i = 0; i < cfg->ntwin_raw; i++) {
        tg_raw_entry *e = &cfg->twin_raw[i];
        if (strcmp(e->section, section) == 0 && strcmp(e->key, key) == 0) {
            if (line > 0 && e->line > 0) {
                snprintf(why, n, "set twice, on line %d and again on line %d; keep one", e->line,
                         line);
                return -1;
            }
            snprintf(e->value, sizeof e->value, "%s", value);
            e->line = line;
            return 0;
        }
    }
    if (cfg->ntwin_raw >= TG_MAX_TWIN_RAW) {
        snprintf(why, n, "too many twin overrides (at most %d)", TG_MAX_TWIN_RAW);
        return -1;
    }
    tg_raw_entry *e = &cfg->twin_raw[cfg->ntwin_raw++];
    snprintf(e->section, sizeof e->section, "%s", section);
    snprintf(e->key, sizeof e->key, "%s", key);
    snprintf(e->value, sizeof e->value, "%s", value);
    e->line = line;
    return 0;
}

/* Stores one closure key = value; returns 0 or writes why. */
static int store_raw(tg_config *cfg, const char *section, const char *key, const char *value,
                     int line, char *why, size_t n)
{
    if (strlen(section) >= sizeof cfg->raw[0].section || strlen(key) >= sizeof cfg->raw[0].key ||
        strlen(value) >= sizeof cfg->raw[0].value) {
        snprintf(why, n, "section, key or value too long");
        return -1;
    }
    for (int i = 0; i < cfg->nraw; i++) {
        tg_raw_entry *e = &cfg->raw[i];
        if (strcmp(e->section, section) == 0 && strcmp(e->key, key) == 0) {
            if (line > 0 && e->line > 0) {
                snprintf(why, n, "set twice, on line %d and again on line %d; keep one", e->line,
                         line);
                return -1;
            }
            snprintf(e->value, sizeof e->value, "%s", value); /* --set replaces */
            e->line = line;
            return 0;
        }
    }
    if (cfg->nraw >= TG_MAX_RAW) {
        snprintf(why, n, "too many closure settings (at most %d)", TG_MAX_RAW);
        return -1;
    }
    tg_raw_entry *e = &cfg->raw[cfg->nraw++];
    snprintf(e->section, sizeof e->section, "%s", section);
    snprintf(e->key, sizeof e->key, "%s", key);
    snprintf(e->value, sizeof e->value, "%s", value);
    e->line = line;
    return 0;
}

const tg_raw_entry *tg_config_raw(const tg_config *cfg, const char *section, const char *key)
{
    for (int i = 0; i < cfg->nraw; i++)
        if (strcmp(cfg->raw[i].section, section) == 0 && strcmp(cfg->raw[i].key, key) == 0)
            return &cfg->raw[i];
    return NULL;
}

/* ------------------------------------------------------------------ */
/* Suggestions ("did you mean ...")                                    */
/* ------------------------------------------------------------------ */

#define EDIT_MAX 63

/* Optimal-string-alignment distance (Damerau-Levenshtein with adjacent
 * transpositions); long strings count as far apart. */
static int edit_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > EDIT_MAX || lb > EDIT_MAX)
        return INT_MAX / 2;
    int d[EDIT_MAX + 1][EDIT_MAX + 1];
    for (size_t i = 0; i <= la; i++)
        d[i][0] = (int)i;
    for (size_t j = 0; j <= lb; j++)
        d[0][j] = (int)j;
    for (size_t i = 1; i <= la; i++) {
        for (size_t j = 1; j <= lb; j++) {
            int cost = a[i - 1] != b[j - 1];
            int best = d[i - 1][j] + 1;
            if (d[i][j - 1] + 1 < best)
                best = d[i][j - 1] + 1;
            if (d[i - 1][j - 1] + cost < best)
                best = d[i - 1][j - 1] + cost;
            if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1]
                && d[i - 2][j - 2] + 1 < best)
                best = d[i - 2][j - 2] + 1;
            d[i][j] = best;
        }
    }
    return d[la][lb];
}

/* "duration_s" and "duration_days" start with the same word "duration". */
static int same_first_word(const char *a, const char *b)
{
    size_t wa = strcspn(a, "_"), wb = strcspn(b, "_");
    return wa == wb && strncmp(a, b, wa) == 0;
}

/* Whether `cand` is worth suggesting for `given` at edit distance d: a small
 * distance relative to the length, a prefix of at least 3 characters, or the
 * same leading word (e.g. "duration_s" for "duration_days"). */
static int close_enough(const char *given, const char *cand, int d)
{
    size_t lg = strlen(given), lc = strlen(cand);
    size_t m = lg > lc ? lg : lc;
    int limit = m <= 4 ? 1 : m <= 8 ? 2 : (int)(m / 4) + 1;
    if (lg == 0)
        return 0;
    if (d <= limit)
        return 1;
    if (lg >= 3 && strncmp(given, cand, lg) == 0)
        return 1;
    return strcspn(given, "_") >= 4 && same_first_word(given, cand);
}

/* Best row for an unknown key `name` met in `section` (may be "" or unknown):
 * the same key name in another section first, then the closest key, with
 * keys of the same section preferred on ties. -1 when nothing is close. */
static int suggest_key(const char *section, const char *name)
{
    int best = -1, best_score = INT_MAX;
    for (int i = 0; i < K_COUNT; i++) {
        int d = edit_distance(name, rows[i].info.key);
        if (!close_enough(name, rows[i].info.key, d))
            continue;
        int score = 2 * d + (strcmp(rows[i].info.section, section) != 0);
        if (score < best_score) {
            best_score = score;
            best = i;
        }
    }
    return best;
}

int tg_config_suggest(const char *given, const char *const *cands, int n)
{
    int best = -1, best_d = INT_MAX;
    for (int i = 0; i < n; i++) {
        int d = edit_distance(given, cands[i]);
        if (close_enough(given, cands[i], d) && d < best_d) {
            best_d = d;
            best = i;
        }
    }
    return best;
}

static const char *suggest_section(const char *name)
{
    const char *best = NULL;
    int best_d = INT_MAX;
    for (int i = 0; i < K_COUNT; i++) {
        if (!starts_section(i))
            continue;
        int d = edit_distance(name, rows[i].info.section);
        if (close_enough(name, rows[i].info.section, d) && d < best_d) {
            best_d = d;
            best = rows[i].info.section;
        }
    }
    return best;
}

static const char *suggest_choice(const char *const *choices, const char *given)
{
    const char *best = NULL;
    int best_d = INT_MAX;
    for (int i = 0; choices[i]; i++) {
        int d = edit_distance(given, choices[i]);
        if (close_enough(given, choices[i], d) && d < best_d) {
            best_d = d;
            best = choices[i];
        }
    }
    return best;
}

/* How a key is written in a message: in a file "[time] step_s", on the
 * command line "time.step_s". */
typedef enum { STYLE_FILE, STYLE_SET } name_style;

static void key_name(int i, name_style style, char *out, size_t n)
{
    if (style == STYLE_FILE)
        snprintf(out, n, "[%s] %s", rows[i].info.section, rows[i].info.key);
    else
        snprintf(out, n, "%s.%s", rows[i].info.section, rows[i].info.key);
}

/* Appends to out (length n) with snprintf semantics. */
static void append(char *out, size_t n, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void append(char *out, size_t n, const char *fmt, ...)
{
    size_t used = strlen(out);
    if (used + 1 >= n)
        return;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(out + used, n - used, fmt, ap);
    va_end(ap);
}

static void list_sections(char *out, size_t n)
{
    int first = 1;
    for (int i = 0; i < K_COUNT; i++) {
        if (!starts_section(i))
            continue;
        append(out, n, "%s[%s]", first ? "" : ", ", rows[i].info.section);
        first = 0;
    }
}

static void list_keys_of(const char *section, char *out, size_t n)
{
    int first = 1;
    for (int i = 0; i < K_COUNT; i++) {
        if (strcmp(rows[i].info.section, section) != 0)
            continue;
        append(out, n, "%s%s", first ? "" : ", ", rows[i].info.key);
        first = 0;
    }
}

/* Explains an unknown section name into out. */
static void explain_unknown_section(const char *section, name_style style, char *out, size_t n)
{
    const char *s = suggest_section(section);
    out[0] = '\0';
    if (style == STYLE_FILE)
        append(out, n, "unknown section [%s]", section);
    else
        append(out, n, "unknown section '%s'", section);
    if (s) {
        append(out, n, style == STYLE_FILE ? "; did you mean [%s]?" : "; did you mean %s?", s);
    } else {
        append(out, n, "; the sections are ");
        list_sections(out, n);
    }
}

/* Explains an unknown key `name` of a known (or empty) section into out. */
static void explain_unknown_key(const char *section, const char *name, name_style style,
                                char *out, size_t n)
{
    char want[128];
    int s = suggest_key(section, name);
    out[0] = '\0';
    if (s >= 0) {
        key_name(s, style, want, sizeof want);
        if (strcmp(rows[s].info.key, name) == 0)
            append(out, n, style == STYLE_FILE ? "not a key of [%s]; did you mean %s?"
                                               : "not a key of %s; did you mean %s?",
                   section, want);
        else if (rows[s].info.unit[0] && same_first_word(name, rows[s].info.key))
            append(out, n, "unknown key; did you mean %s (unit: %s)?", want, rows[s].info.unit);
        else
            append(out, n, "unknown key; did you mean %s?", want);
    } else if (section[0]) {
        append(out, n, "unknown key; the keys of %s%s%s are ",
               style == STYLE_FILE ? "[" : "", section, style == STYLE_FILE ? "]" : "");
        list_keys_of(section, out, n);
    } else {
        append(out, n, "unknown key");
    }
}

/* ------------------------------------------------------------------ */
/* Reading one value                                                   */
/* ------------------------------------------------------------------ */

enum { NUM_OK = 0, NUM_SYNTAX, NUM_RANGE };

/* Decimal real: [sign] digits [. digits] [e [sign] digits], at least one digit. */
static int is_real_syntax(const char *s)
{
    const char *p = s;
    int digits = 0;
    if (*p == '+' || *p == '-')
        p++;
    while (isdigit((unsigned char)*p)) {
        p++;
        digits++;
    }
    if (*p == '.') {
        p++;
        while (isdigit((unsigned char)*p)) {
            p++;
            digits++;
        }
    }
    if (!digits)
        return 0;
    if (*p == 'e' || *p == 'E') {
        p++;
        if (*p == '+' || *p == '-')
            p++;
        if (!isdigit((unsigned char)*p))
            return 0;
        while (isdigit((unsigned char)*p))
            p++;
    }
    return *p == '\0';
}

static int parse_real(const char *s, double *out)
{
    if (!is_real_syntax(s))
        return NUM_SYNTAX;
    errno = 0;
    char *end = NULL;
    double v = strtod(s, &end);
    if (!end || *end != '\0')
        return NUM_SYNTAX;
    if (errno == ERANGE || !isfinite(v))
        return NUM_RANGE;
    *out = v;
    return NUM_OK;
}

static int parse_int(const char *s, long long *out)
{
    const char *p = s;
    if (*p == '+' || *p == '-')
        p++;
    if (!*p)
        return NUM_SYNTAX;
    for (const char *q = p; *q; q++)
        if (!isdigit((unsigned char)*q))
            return NUM_SYNTAX;
    errno = 0;
    char *end = NULL;
    long long v = strtoll(s, &end, 10);
    if (!end || *end != '\0')
        return NUM_SYNTAX;
    if (errno == ERANGE)
        return NUM_RANGE;
    *out = v;
    return NUM_OK;
}

static int parse_u64(const char *s, uint64_t *out)
{
    const char *p = s;
    if (*p == '+')
        p++;
    if (!*p)
        return NUM_SYNTAX;
    for (const char *q = p; *q; q++)
        if (!isdigit((unsigned char)*q))
            return NUM_SYNTAX;
    errno = 0;
    char *end = NULL;
    unsigned long long v = strtoull(p, &end, 10);
    if (!end || *end != '\0')
        return NUM_SYNTAX;
    if (errno == ERANGE)
        return NUM_RANGE;
#if ULLONG_MAX > UINT64_MAX
    if (v > UINT64_MAX)
        return NUM_RANGE;
#endif
    *out = (uint64_t)v;
    return NUM_OK;
}

static int in_bounds(const key_row *r, double v)
{
    if (r->lo_kind == B_INCL && !(v >= r->lo))
        return 0;
    if (r->lo_kind == B_EXCL && !(v > r->lo))
        return 0;
    if (r->hi_kind == B_INCL && !(v <= r->hi))
        return 0;
    if (r->hi_kind == B_EXCL && !(v < r->hi))
        return 0;
    if (r->nonzero && v == 0.0)
        return 0;
    return 1;
}

/* 'value' quoted for a message, shortened when long. */
static void quote(const char *value, char *out, size_t n)
{
    const int keep = 80;
    if (strlen(value) > (size_t)keep)
        snprintf(out, n, "'%.*s...'", keep, value);
    else
        snprintf(out, n, "'%s'", value);
}

/* A path or name given as text: it has to survive being written back into a
 * config file (tg_config_to_ini) and read again. Returns NULL when fine, else
 * the reason. */
static const char *text_problem(const char *v)
{
    size_t len = strlen(v);
    if (len == 0)
        return "it is empty";
    if (len >= TG_PATH_LEN)
        return "it is too long";
    if (isspace((unsigned char)v[0]) || isspace((unsigned char)v[len - 1]))
        return "it starts or ends with white space";
    for (size_t i = 0; i < len; i++) {
        if (iscntrl((unsigned char)v[i]))
            return "it contains a control character";
        if (i > 0 && v[i] == ';' && isspace((unsigned char)v[i - 1]))
            return "a ';' after white space would start a comment in a config file";
    }
    return NULL;
}

/* Parses `value` for row r and stores it into cfg. On failure cfg is left
 * untouched and `why` (size n) says what was expected and what was found. */
static int apply_value(const key_row *r, tg_config *cfg, const char *value, char *why, size_t n)
{
    char q[128];
    char *base = (char *)cfg;
    quote(value, q, sizeof q);

    switch (r->kind) {
    case V_REAL: {
        double v = 0.0;
        int rc = parse_real(value, &v);
        if (rc == NUM_RANGE) {
            snprintf(why, n, "expected %s, got %s, which is outside the range of a double", r->expect, q);
            return -1;
        }
        if (rc != NUM_OK || !in_bounds(r, v)) {
            snprintf(why, n, "expected %s, got %s", r->expect, q);
            return -1;
        }
        memcpy(base + r->off, &v, sizeof v);
        return 0;
    }
    case V_INT: {
        long long v = 0;
        int rc = parse_int(value, &v);
        if (rc != NUM_OK || !in_bounds(r, (double)v) || v < INT_MIN || v > INT_MAX) {
            snprintf(why, n, "expected %s, got %s", r->expect, q);
            return -1;
        }
        int iv = (int)v;
        memcpy(base + r->off, &iv, sizeof iv);
        return 0;
    }
    case V_U64: {
        uint64_t v = 0;
        if (parse_u64(value, &v) != NUM_OK) {
            snprintf(why, n, "expected %s, got %s", r->expect, q);
            return -1;
        }
        memcpy(base + r->off, &v, sizeof v);
        return 0;
    }
    case V_REAL_LIST: {
        double vals[TG_MAX_LAYERS] = {0};
        int total = 0;
        if (value[0] != '\0') {
            total = 1;
            for (const char *p = value; *p; p++)
                total += *p == ',';
        }
        if (total > r->max_count) {
            snprintf(why, n, "expected %s, got %s (%d values, at most %d are allowed)",
                     r->expect, q, total, r->max_count);
            return -1;
        }
        if (total < r->min_count) {
            snprintf(why, n, "expected %s, got %s (no values)", r->expect, q);
            return -1;
        }
        const char *p = value;
        for (int k = 0; k < total; k++) {
            char item[64];
            size_t len = strcspn(p, ",");
            const char *s = p, *e = p + len;
            while (s < e && isspace((unsigned char)*s))
                s++;
            while (e > s && isspace((unsigned char)e[-1]))
                e--;
            size_t ilen = (size_t)(e - s);
            int rc = NUM_SYNTAX;
            if (ilen < sizeof item) {
                memcpy(item, s, ilen);
                item[ilen] = '\0';
                rc = ilen ? parse_real(item, &vals[k]) : NUM_SYNTAX;
            } else {
                snprintf(item, sizeof item, "%.*s...", 40, s);
            }
            if (ilen == 0) {
                snprintf(why, n, "expected %s, got %s (value %d is empty)", r->expect, q, k + 1);
                return -1;
            }
            if (rc != NUM_OK) {
                snprintf(why, n, "expected %s, got %s (value %d, '%s', is not a real number%s)",
                         r->expect, q, k + 1, item,
                         rc == NUM_RANGE ? " that fits in a double" : "");
                return -1;
            }
            if (!in_bounds(r, vals[k])) {
                snprintf(why, n, "expected %s, got %s (value %d, '%s', is not %s)",
                         r->expect, q, k + 1, item, r->item_rule);
                return -1;
            }
            p += len + (p[len] == ',');
        }
        memcpy(base + r->off, vals, (size_t)r->max_count * sizeof vals[0]);
        memcpy(base + r->count_off, &total, sizeof total);
        return 0;
    }
    case V_CHOICE:
        for (int k = 0; r->choices[k]; k++) {
            if (strcmp(value, r->choices[k]) == 0) {
                r->put(cfg, k);
                return 0;
            }
        }
        {
            const char *s = suggest_choice(r->choices, value);
            if (s)
                snprintf(why, n, "expected %s, got %s; did you mean %s?", r->expect, q, s);
            else
                snprintf(why, n, "expected %s, got %s", r->expect, q);
        }
        return -1;
    case V_TEXT: {
        const char *bad = text_problem(value);
        if (bad) {
            snprintf(why, n, "expected %s, got %s (%s)", r->expect, q, bad);
            return -1;
        }
        memcpy(base + r->off, value, strlen(value) + 1);
        return 0;
    }
    case V_INITIAL: {
        if (strcmp(value, "rest") == 0 || strcmp(value, "noise") == 0) {
            cfg->initial_kind = value[0] == 'r' ? TG_INIT_REST : TG_INIT_NOISE;
            cfg->initial_path[0] = '\0';
            return 0;
        }
        const char *bad = text_problem(value);
        if (bad) {
            snprintf(why, n, "expected %s, got %s (%s)", r->expect, q, bad);
            return -1;
        }
        cfg->initial_kind = TG_INIT_FILE;
        memcpy(cfg->initial_path, value, strlen(value) + 1);
        return 0;
    }
    }
    snprintf(why, n, "internal error: key has no value kind");
    return -1;
}

/* Shortest "%.Ng" (N = 15..17) that reads back as exactly v. */
static void format_real(double v, char *out, size_t n)
{
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(out, n, "%.*g", prec, v);
        if (strtod(out, NULL) == v)
            return;
    }
}

/* The value of row r in cfg, written as it would appear in a config file. */
static void format_value(const key_row *r, const tg_config *cfg, char *out, size_t n)
{
    const char *base = (const char *)cfg;
    out[0] = '\0';
    switch (r->kind) {
    case V_REAL: {
        double v;
        memcpy(&v, base + r->off, sizeof v);
        format_real(v, out, n);
        return;
    }
    case V_INT: {
        int v;
        memcpy(&v, base + r->off, sizeof v);
        snprintf(out, n, "%d", v);
        return;
    }
    case V_U64: {
        uint64_t v;
        memcpy(&v, base + r->off, sizeof v);
        snprintf(out, n, "%" PRIu64, v);
        return;
    }
    case V_REAL_LIST: {
        int count;
        double vals[TG_MAX_LAYERS];
        memcpy(&count, base + r->count_off, sizeof count);
        memcpy(vals, base + r->off, (size_t)r->max_count * sizeof vals[0]);
        if (count < 0)
            count = 0;
        if (count > r->max_count)
            count = r->max_count;
        for (int k = 0; k < count; k++) {
            char item[40];
            format_real(vals[k], item, sizeof item);
            append(out, n, "%s%s", k ? ", " : "", item);
        }
        return;
    }
    case V_CHOICE: {
        int v = r->get(cfg);
        int count = 0;
        while (r->choices[count])
            count++;
        snprintf(out, n, "%s", v >= 0 && v < count ? r->choices[v] : "?");
        return;
    }
    case V_TEXT:
        snprintf(out, n, "%s", base + r->off);
        return;
    case V_INITIAL:
        if (cfg->initial_kind == TG_INIT_REST)
            snprintf(out, n, "rest");
        else if (cfg->initial_kind == TG_INIT_NOISE)
            snprintf(out, n, "noise");
        else
            snprintf(out, n, "%s", cfg->initial_path);
        return;
    }
}

/* ------------------------------------------------------------------ */
/* Defaults                                                            */
/* ------------------------------------------------------------------ */

void tg_config_defaults(tg_config *cfg)
{
    if (!cfg)
        return;
    memset(cfg, 0, sizeof *cfg);
    for (int i = 0; i < K_COUNT; i++) {
        char why[512];
        if (apply_value(&rows[i], cfg, rows[i].info.def, why, sizeof why) != 0)
            tg_log(TG_LOG_ERROR, "internal error: default of [%s] %s does not parse: %s",
                   rows[i].info.section, rows[i].info.key, why);
    }
}

/* ------------------------------------------------------------------ */
/* Reading a config file                                               */
/* ------------------------------------------------------------------ */

#define CONFIG_FILE_MAX (1024L * 1024L)

typedef struct {
    const char *path;
    const char *buf;          /* whole file, NUL-terminated */
    size_t len, pos;
    int lineno;               /* line most recently handed to libinih */
    char section[64];         /* last [section] header seen, for messages */
    int failed;               /* an error is recorded in st */
    int err_line;
    int line_of[K_COUNT];     /* line where each key was set in this file */
    tg_config *work;          /* values being read; copied out on success */
    tg_status *st;
} load_ctx;

static void load_fail(load_ctx *c, int line, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void load_fail(load_ctx *c, int line, const char *fmt, ...)
{
    if (c->failed)
        return;
    char msg[TG_MSG_LEN];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    tg_fail(c->st, TG_ERR_CONFIG, "%s:%d: %s", c->path, line, msg);
    c->failed = 1;
    c->err_line = line;
}

/* Copies line `lineno` (1-based) of buf without its line end into out. */
static void nth_line(const char *buf, size_t len, int lineno, char *out, size_t n)
{
    const char *p = buf, *end = buf + len;
    for (int k = 1; k < lineno && p < end; k++) {
        const char *nl = memchr(p, '\n', (size_t)(end - p));
        p = nl ? nl + 1 : end;
    }
    size_t l = strcspn(p, "\r\n");
    if (l > (size_t)(end - p))
        l = (size_t)(end - p);
    if (l + 1 > n)
        l = n - 1;
    memcpy(out, p, l);
    out[l] = '\0';
}

/* Best guess at "[section] key" for a line the reader rejects. */
static void describe_line_key(const char *line, const char *section, char *out, size_t n)
{
    const char *p = line;
    out[0] = '\0';
    while (*p == ' ' || *p == '\t')
        p++;
    size_t klen = strcspn(p, "=:;");
    if (p[klen] != '=' && p[klen] != ':')
        return;
    while (klen > 0 && isspace((unsigned char)p[klen - 1]))
        klen--;
    if (klen == 0 || klen > 60)
        return;
    if (section[0])
        snprintf(out, n, "[%s] %.*s: ", section, (int)klen, p);
    else
        snprintf(out, n, "%.*s: ", (int)klen, p);
}

/* The ini_reader given to libinih: hands out one line of the in-memory file,
 * counting lines and checking what libinih would mishandle. */
static char *reader(char *str, int num, void *stream)
{
    load_ctx *c = stream;
    if (c->failed || c->pos >= c->len || num < 4)
        return NULL;

    const char *start = c->buf + c->pos;
    size_t rest = c->len - c->pos;
    const char *nl = memchr(start, '\n', rest);
    size_t take = nl ? (size_t)(nl - start) + 1 : rest;
    size_t content = nl ? (size_t)(nl - start) : rest;
    if (content > 0 && start[content - 1] == '\r')
        content--;
    c->lineno++;
    c->pos += take;

    const char *text = start;
    size_t bom = 0;
    if (c->lineno == 1 && content >= 3 && memcmp(start, "\xEF\xBB\xBF", 3) == 0)
        bom = 3;
    text += bom;

    if (content > (size_t)num - 3) {
        char key[128], head[96];
        snprintf(head, sizeof head, "%.*s", (int)(content - bom < 90 ? content - bom : 90), text);
        describe_line_key(head, c->section, key, sizeof key);
        load_fail(c, c->lineno,
                  "%sline is %zu characters long; at most %d are allowed "
                  "(move a trailing comment onto its own line, or shorten the value)",
                  key, content - bom, num - 3);
        return NULL;
    }
    memcpy(str, start, take);
    str[take] = '\0';

    /* libinih glues an indented line to the previous value; refuse it. */
    const char *p = str + bom;
    if (*p == ' ' || *p == '\t') {
        while (*p == ' ' || *p == '\t')
            p++;
        if (*p != '\0' && *p != '\r' && *p != '\n' && *p != ';' && *p != '#') {
            load_fail(c, c->lineno,
                      "line is indented; start keys and [section] headers in the first column "
                      "(an indented line would be read as a continuation of the previous value)");
            return NULL;
        }
    }

    /* Check [section] headers here: libinih does not report empty sections. */
    if (*p == '[') {
        const char *close = strchr(p + 1, ']');
        if (close) {
            char name[64];
            size_t l = (size_t)(close - (p + 1));
            if (l >= sizeof name)
                l = sizeof name - 1;
            memcpy(name, p + 1, l);
            name[l] = '\0';
            if (!section_exists(name)) {
                char why[512];
                explain_unknown_section(name, STYLE_FILE, why, sizeof why);
                load_fail(c, c->lineno, "%s", why);
                return NULL;
            }
            memcpy(c->section, name, l + 1);
        }
    }
    return str;
}

/* The libinih handler: one key = value pair on line c->lineno. */
static int on_pair(void *user, const char *section, const char *name, const char *value)
{
    load_ctx *c = user;
    int line = c->lineno;
    char why[TG_MSG_LEN];

    if (c->failed)
        return 0;
    if (!value)
        value = "";
    if (name[0] == '\0') {
        load_fail(c, line, "no key name before '='");
        return 0;
    }
    if (section[0] == '\0') {
        int s = suggest_key("", name);
        if (s >= 0)
            load_fail(c, line, "%s: key comes before any [section] header; did you mean [%s] %s?",
                      name, rows[s].info.section, rows[s].info.key);
        else
            load_fail(c, line, "%s: key comes before any [section] header", name);
        return 0;
    }
    if (closure_section(section)) {
        if (store_raw(c->work, section, name, value, line, why, sizeof why) != 0) {
            load_fail(c, line, "[%s] %s: %s", section, name, why);
            return 0;
        }
        return 1;
    }
    if (twin_override_section(section)) {
        if (store_twin_raw(c->work, section, name, value, line, why, sizeof why) != 0) {
            load_fail(c, line, "[%s] %s: %s", section, name, why);
            return 0;
        }
        return 1;
    }
    int i = tg_config_key_index(section, name);
    if (i < 0) {
        explain_unknown_key(section, name, STYLE_FILE, why, sizeof why);
        load_fail(c, line, "[%s] %s: %s", section, name, why);
        return 0;
    }
    if (c->line_of[i]) {
        load_fail(c, line, "[%s] %s: set twice, on line %d and again on line %d; keep one",
                  section, name, c->line_of[i], line);
        return 0;
    }
    if (apply_value(&rows[i], c->work, value, why, sizeof why) != 0) {
        load_fail(c, line, "[%s] %s: %s", section, name, why);
        return 0;
    }
    c->line_of[i] = line;
    c->work->set_by_user[i] = TG_SET_FILE;
    c->work->set_line[i] = line;
    return 1;
}

/* Parses the INI text buf (len bytes, NUL-terminated, owned by the
 * caller) over cfg; `path` names it in messages. */
static tg_code load_buffer(tg_config *cfg, const char *path, char *buf, size_t len,
                           tg_status *st)
{
    tg_code rc;
    const char *nul = memchr(buf, '\0', len);
    if (nul) {
        int line = 1;
        for (const char *p = buf; p < nul; p++)
            line += *p == '\n';
        return tg_fail(st, TG_ERR_CONFIG, "%s:%d: contains a NUL byte; is this really a text file?",
                       path, line);
    }

    load_ctx *c = calloc(1, sizeof *c);
    tg_config *work = malloc(sizeof *work);
    if (!c || !work) {
        free(c);
        free(work);
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading config file '%s'", path);
    }
    *work = *cfg;
    c->path = path;
    c->buf = buf;
    c->len = len;
    c->work = work;
    c->st = st;

    int r = ini_parse_stream(reader, c, on_pair, c);
    if (r == -2) {
        rc = tg_fail(st, TG_ERR_NOMEM, "libinih could not allocate a line buffer for '%s'", path);
    } else if (r > 0 && (!c->failed || r < c->err_line)) {
        /* A line libinih could not read (the handler never saw it). */
        char text[128], q[160];
        nth_line(buf, len, r, text, sizeof text);
        quote(text, q, sizeof q);
        const char *t = text;
        while (isspace((unsigned char)*t))
            t++;
        if (*t == '[')
            rc = tg_fail(st, TG_ERR_CONFIG, "%s:%d: section header %s has no closing ']'", path, r, q);
        else
            rc = tg_fail(st, TG_ERR_CONFIG,
                         "%s:%d: expected 'key = value', a [section] header or a comment, got %s",
                         path, r, q);
    } else if (c->failed) {
        rc = TG_ERR_CONFIG;
    } else if (r != 0) {
        rc = tg_fail(st, TG_ERR_INTERNAL, "%s: libinih returned %d", path, r);
    } else {
        *cfg = *work;
        rc = TG_OK;
    }
    free(work);
    free(c);
    return rc;
}

tg_code tg_config_load_file(tg_config *cfg, const char *path, tg_status *st)
{
    if (!cfg || !path)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_load_file: NULL argument");
    char *buf = NULL;
    size_t len = 0;
    tg_code rc = tg_read_text(path, "config file", CONFIG_FILE_MAX, &buf, &len, st);
    if (rc != TG_OK)
        return rc;
    rc = load_buffer(cfg, path, buf, len, st);
    free(buf);
    if (rc == TG_OK)
        tg_dir_of(path, cfg->config_dir, sizeof cfg->config_dir);
    return rc;
}

tg_code tg_config_load_text(tg_config *cfg, const char *text, const char *name, tg_status *st)
{
    if (!cfg || !text || !name)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_load_text: NULL argument");
    size_t len = strlen(text);
    char *buf = malloc(len + 1);
    if (!buf)
        return tg_fail(st, TG_ERR_NOMEM, "out of memory reading the config text of %s", name);
    memcpy(buf, text, len + 1);
    tg_code rc = load_buffer(cfg, name, buf, len, st);
    free(buf);
    return rc;
}

/* ------------------------------------------------------------------ */
/* --set section.key=value                                             */
/* ------------------------------------------------------------------ */

/* Trims white space at both ends of [s, e) in place; returns the start. */
static char *trim(char *s, char *e)
{
    while (s < e && isspace((unsigned char)*s))
        s++;
    while (e > s && isspace((unsigned char)e[-1]))
        e--;
    *e = '\0';
    return s;
}

tg_code tg_config_set(tg_config *cfg, const char *assignment, tg_status *st)
{
    if (!cfg || !assignment)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_set: NULL argument");

    char buf[TG_PATH_LEN + 128];
    char why[TG_MSG_LEN];
    size_t len = strlen(assignment);
    if (len >= sizeof buf)
        return tg_fail(st, TG_ERR_CONFIG, "--set %.60s...: the assignment is too long (%zu characters)",
                       assignment, len);
    memcpy(buf, assignment, len + 1);

    char *eq = strchr(buf, '=');
    if (!eq)
        return tg_fail(st, TG_ERR_CONFIG,
                       "--set %s: expected section.key=value, found no '=' (e.g. --set time.step_s=900)",
                       assignment);
    char *lhs = trim(buf, eq);
    char *value = trim(eq + 1, eq + 1 + strlen(eq + 1));

    /* Plugin sections are named plugin.NAME: their key follows the last dot. */
    char *dot = strncmp(lhs, "plugin.", 7) == 0 ? strrchr(lhs, '.') : strchr(lhs, '.');
    if (!dot) {
        int s = suggest_key("", lhs);
        if (s >= 0)
            return tg_fail(st, TG_ERR_CONFIG,
                           "--set %s: expected section.key=value, found no '.' before '='; "
                           "did you mean %s.%s=%s?",
                           assignment, rows[s].info.section, rows[s].info.key, value);
        return tg_fail(st, TG_ERR_CONFIG,
                       "--set %s: expected section.key=value, found no '.' before '=' "
                       "(e.g. --set time.step_s=900)", assignment);
    }
    char *section = trim(lhs, dot);
    char *key = trim(dot + 1, dot + 1 + strlen(dot + 1));
    /* twin.reference.SECTION.KEY and twin.coarse.SECTION.KEY: overrides. */
    if (strcmp(section, "twin") == 0 &&
        (strncmp(key, "reference.", 10) == 0 || strncmp(key, "coarse.", 7) == 0)) {
        char tsec[32];
        size_t tl = strcspn(key, ".");
        snprintf(tsec, sizeof tsec, "twin.%.*s", (int)tl, key);
        if (store_twin_raw(cfg, tsec, key + tl + 1, value, 0, why, sizeof why) != 0)
            return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
        return TG_OK;
    }
    if (section[0] == '\0' || key[0] == '\0')
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: expected section.key=value, the %s is empty",
                       assignment, section[0] ? "key" : "section");
    if (!section_exists(section)) {
        int s = suggest_key(section, key);
        if (s >= 0 && strcmp(rows[s].info.key, key) == 0)
            return tg_fail(st, TG_ERR_CONFIG, "--set %s: unknown section '%s'; did you mean %s.%s?",
                           assignment, section, rows[s].info.section, key);
        explain_unknown_section(section, STYLE_SET, why, sizeof why);
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
    }
    if (closure_section(section)) {
        if (store_raw(cfg, section, key, value, 0, why, sizeof why) != 0)
            return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
        return TG_OK;
    }
    int i = tg_config_key_index(section, key);
    if (i < 0) {
        explain_unknown_key(section, key, STYLE_SET, why, sizeof why);
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
    }
    if (apply_value(&rows[i], cfg, value, why, sizeof why) != 0)
        return tg_fail(st, TG_ERR_CONFIG, "--set %s: %s", assignment, why);
    cfg->set_by_user[i] = TG_SET_OPTION;
    cfg->set_line[i] = 0;
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* Cross-key rules                                                     */
/* ------------------------------------------------------------------ */

/* Where key i got its value, as a message prefix (no trailing ": "). */
static void key_where(const tg_config *cfg, int i, const char *origin, char *out, size_t n)
{
    const key_row *r = &rows[i];
    switch (cfg->set_by_user[i]) {
    case TG_SET_FILE:
        snprintf(out, n, "%s:%d: [%s] %s", origin ? origin : "config file", cfg->set_line[i],
                 r->info.section, r->info.key);
        return;
    case TG_SET_OPTION: {
        char v[TG_PATH_LEN + 64];
        format_value(r, cfg, v, sizeof v);
        snprintf(out, n, "--set %s.%s=%.700s", r->info.section, r->info.key, v);
        return;
    }
    default:
        if (origin)
            snprintf(out, n, "%s: [%s] %s (default)", origin, r->info.section, r->info.key);
        else
            snprintf(out, n, "[%s] %s (default)", r->info.section, r->info.key);
        return;
    }
}

/* Short note on where key i came from, for naming a second key: " (line 5)". */
static void key_note(const tg_config *cfg, int i, char *out, size_t n)
{
    switch (cfg->set_by_user[i]) {
    case TG_SET_FILE:
        snprintf(out, n, " (line %d)", cfg->set_line[i]);
        return;
    case TG_SET_OPTION:
        snprintf(out, n, " (from --set)");
        return;
    default:
        snprintf(out, n, " (default)");
        return;
    }
}

static tg_code key_fail(const tg_config *cfg, int i, const char *origin, tg_status *st,
                        const char *fmt, ...) __attribute__((format(printf, 5, 6)));
static tg_code key_fail(const tg_config *cfg, int i, const char *origin, tg_status *st,
                        const char *fmt, ...)
{
    char where[TG_MSG_LEN], msg[TG_MSG_LEN];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    key_where(cfg, i, origin, where, sizeof where);
    return tg_fail(st, TG_ERR_CONFIG, "%s: %s", where, msg);
}

static int is_pow2(int v) { return v > 0 && (v & (v - 1)) == 0; }

tg_code tg_config_check(const tg_config *cfg, const char *origin, tg_status *st)
{
    char note[64];
    if (!cfg)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_check: NULL config");
    int periodic = cfg->geometry == TG_GEOM_PERIODIC;

    /* Grid size. When points keeps its default, blame the geometry line. */
    int p = cfg->points;
    int at = !cfg->set_by_user[K_POINTS] && cfg->set_by_user[K_GEOMETRY] ? K_GEOMETRY : K_POINTS;
    char got[128];
    if (at == K_POINTS) {
        snprintf(got, sizeof got, "got %d", p);
    } else {
        key_note(cfg, K_POINTS, note, sizeof note);
        snprintf(got, sizeof got, "but [grid] points%s is %d", note, p);
    }
    if (!periodic && !(p >= 17 && p <= 4097 && is_pow2(p - 1)))
        return key_fail(cfg, at, origin, st,
                        "a basin needs 2^k + 1 points with 17 <= points <= 4097 "
                        "(e.g. 65, 129, 257, 513), %s", got);
    if (periodic && !(p >= 16 && p <= 4096 && is_pow2(p))) {
        if (at == K_GEOMETRY)
            note[0] = '\0';
        else
            key_note(cfg, K_GEOMETRY, note, sizeof note);
        return key_fail(cfg, at, origin, st,
                        "periodic geometry%s needs 2^k points with 16 <= points <= 4096 "
                        "(e.g. 64, 128, 256, 512), %s", note, got);
    }

    /* Layers and interfaces. */
    if (cfg->nlayers < 1 || cfg->nlayers > TG_MAX_LAYERS)
        return key_fail(cfg, K_THICKNESS, origin, st, "expected 1 to %d layers, got %d",
                        TG_MAX_LAYERS, cfg->nlayers);
    if (cfg->n_reduced_gravity != cfg->nlayers - 1) {
        char gnote[64];
        int gat = cfg->set_by_user[K_REDUCED_GRAVITY] ? K_REDUCED_GRAVITY : K_THICKNESS;
        int need = cfg->nlayers - 1;
        key_note(cfg, K_THICKNESS, note, sizeof note);
        key_note(cfg, K_REDUCED_GRAVITY, gnote, sizeof gnote);
        if (gat == K_THICKNESS)
            note[0] = '\0';  /* the message already starts with its place */
        return key_fail(cfg, gat, origin, st,
                        "thickness_m%s gives %d layer%s, which need%s %d value%s of "
                        "reduced_gravity_m_s2 (one per interface), but reduced_gravity_m_s2%s has %d",
                        note, cfg->nlayers, cfg->nlayers == 1 ? "" : "s", cfg->nlayers == 1 ? "s" : "",
                        need, need == 1 ? "" : "s", gnote, cfg->n_reduced_gravity);
    }

    /* The imposed background flow: periodic geometry only, one per layer. */
    if (!periodic && cfg->set_by_user[K_BACKGROUND_U] && cfg->n_zonal_velocity > 0)
        return key_fail(cfg, K_BACKGROUND_U, origin, st,
                        "a uniform background flow needs geometry = periodic (walls would block it)");
    if (periodic && cfg->n_zonal_velocity != 0 && cfg->n_zonal_velocity != cfg->nlayers)
        return key_fail(cfg, K_BACKGROUND_U, origin, st,
                        "expected one value per layer (%d), got %d", cfg->nlayers,
                        cfg->n_zonal_velocity);

    /* Geometry-specific keys. */
    if (periodic) {
        key_note(cfg, K_GEOMETRY, note, sizeof note);
        const int wall_keys[] = {K_WALL_CONDITION, K_WALL_SLIP};
        for (size_t k = 0; k < sizeof wall_keys / sizeof wall_keys[0]; k++)
            if (cfg->set_by_user[wall_keys[k]])
                return key_fail(cfg, wall_keys[k], origin, st,
                                "wall keys do not apply to periodic geometry%s; remove this key",
                                note);
        if (cfg->wind_profile != TG_WIND_NONE) {
            const char *name = wind_names[cfg->wind_profile];
            if (cfg->set_by_user[K_WIND_PROFILE])
                return key_fail(cfg, K_WIND_PROFILE, origin, st,
                                "profile %s is not available in periodic geometry%s yet; "
                                "use profile = none", name, note);
            return key_fail(cfg, K_GEOMETRY, origin, st,
                            "periodic geometry needs [wind] profile = none for now "
                            "(the default profile is %s)", name);
        }
    }

    /* Time stepping and output intervals. */
    double run_s = cfg->duration_days * SECONDS_PER_DAY;
    if (cfg->step_s > run_s) {
        key_note(cfg, K_DURATION, note, sizeof note);
        return key_fail(cfg, K_STEP, origin, st,
                        "%g s is longer than the whole run: duration_days%s = %g, i.e. %g s",
                        cfg->step_s, note, cfg->duration_days, run_s);
    }
    const int intervals[] = {K_SNAPSHOT_EVERY, K_CHECKPOINT_EVERY, K_LOG_EVERY};
    for (size_t k = 0; k < sizeof intervals / sizeof intervals[0]; k++) {
        double days;
        memcpy(&days, (const char *)cfg + rows[intervals[k]].off, sizeof days);
        if (intervals[k] == K_CHECKPOINT_EVERY && days == 0.0)
            continue;
        if (days * SECONDS_PER_DAY < cfg->step_s) {
            key_note(cfg, K_STEP, note, sizeof note);
            return key_fail(cfg, intervals[k], origin, st,
                            "%g days is shorter than one time step: step_s%s = %g s = %g days",
                            days, note, cfg->step_s, cfg->step_s / SECONDS_PER_DAY);
        }
    }

    /* The initial state file. */
    if (cfg->initial_kind == TG_INIT_FILE) {
        const char *path = cfg->initial_path;
        const char *const names[] = {"rest", "noise", NULL};
        const char *close = suggest_choice(names, path);
        char hint[64] = "";
        if (close)
            snprintf(hint, sizeof hint, "; did you mean %s?", close);
        /* Not opened unless regular: opening a FIFO would wait for a writer. */
        const char *kind = tg_not_regular(path);
        if (kind)
            return key_fail(cfg, K_INITIAL_STATE, origin, st,
                            "initial state '%s' is not a regular file (%s)", path, kind);
        FILE *f = fopen(path, "rb");
        if (!f)
            return key_fail(cfg, K_INITIAL_STATE, origin, st,
                            "cannot open initial state file '%s': %s%s", path, strerror(errno), hint);
        unsigned char byte;
        size_t got = fread(&byte, 1, 1, f);
        int e = errno, bad = ferror(f);
        fclose(f);
        if (got != 1)
            return key_fail(cfg, K_INITIAL_STATE, origin, st, "cannot read initial state file '%s': %s",
                            path, bad ? strerror(e) : "the file is empty");
    }

    /* Closure sections, against the schemes' parameter tables. */
    tg_code crc = tg_closure_check_config(cfg, origin, st);
    if (crc != TG_OK)
        return crc;

    /* Keys that are set but have no effect: worth a warning, not an error. */
    if (!periodic && cfg->set_by_user[K_WALL_SLIP] && cfg->wall_condition != TG_WALL_PARTIAL_SLIP)
        tg_log(TG_LOG_WARN, "[grid] wall_slip_coefficient is ignored unless wall_condition = partial_slip");
    if (cfg->set_by_user[K_NOISE] && cfg->initial_kind != TG_INIT_NOISE)
        tg_log(TG_LOG_WARN, "[initial] noise_amplitude_m2_per_s is ignored unless state = noise");

    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* Resolved config and reference table                                 */
/* ------------------------------------------------------------------ */


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
    tg_sb_printf(&b, "; twingyre configuration, fully resolved: every key, in reference order\n");
    for (int i = 0; i < K_COUNT; i++) {
        const key_row *r = &rows[i];
        if (starts_section(i))
            tg_sb_printf(&b, "\n[%s]\n", r->info.section);
        format_value(r, cfg, value, sizeof value);
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
    char *cl = tg_closure_config_ini(cfg);
    if (cl) {
        tg_sb_printf(&b, "%s", cl);
        free(cl);
    }
    if (b.oom) {
        free(b.s);
        return NULL;
    }
    return b.s;
}

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
        const tg_key_info *k = &rows[i].info;
        char allowed[256];
        snprintf(allowed, sizeof allowed, "%s: %s", k->type, k->range);
        md_cell(out, k->section);
        md_cell(out, k->key);
        md_cell(out, k->unit[0] ? k->unit : "-");
        md_cell(out, k->def[0] ? k->def : "(required)");
        md_cell(out, allowed);
        md_cell(out, k->meaning);
        fputs("|\n", out);
    }
}

/* ------------------------------------------------------------------ */
/* Twin experiments: [twin] rules and the derived configs              */
/* ------------------------------------------------------------------ */

/* Keys a twin sets itself; `coarse_only` ones may still be overridden for
 * the reference. */
static const struct {
    const char *key;
    int coarse_only;
    const char *why;
} twin_fixed[] = {
    {"grid.geometry", 0, "both runs share the domain"},
    {"grid.size_km", 0, "both runs share the domain"},
    {"grid.points", 0, "use [twin] reference_points and coarse_points"},
    {"layers.thickness_m", 0, "both runs need the same layers"},
    {"layers.reduced_gravity_m_s2", 0, "both runs need the same layers"},
    {"time.duration_days", 0, "the twin sets it from [twin] spinup_days and analysis_days"},
    {"output.directory", 0, "the twin writes into its own output directory"},
    {"initial.state", 1, "coarse runs start from the coarse-grained reference"},
    {"output.snapshot_every_days", 1, "coarse runs write a snapshot at every [twin] sample"},
    {"closure.use", 1, "[twin] compare chooses the closure of each coarse run"},
};

tg_code tg_config_twin_derive(const tg_config *base, int coarse, const char *origin,
                              tg_config *out, tg_status *st)
{
    if (!base || !out)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_twin_derive: NULL argument");
    const char *sec = coarse ? "twin.coarse" : "twin.reference";
    const char *file = origin ? origin : "config file";
    *out = *base;
    out->points = coarse ? base->twin_coarse_points : base->twin_reference_points;
    out->ntwin_raw = 0;
    for (int r = 0; r < base->ntwin_raw; r++) {
        const tg_raw_entry *e = &base->twin_raw[r];
        if (strcmp(e->section, sec) != 0)
            continue;
        char where[TG_MSG_LEN];
        if (e->line > 0)
            snprintf(where, sizeof where, "%s:%d: [%s] %s", file, e->line, sec, e->key);
        else
            snprintf(where, sizeof where, "--set %s.%s=%s", sec, e->key, e->value);
        if (strncmp(e->key, "twin.", 5) == 0)
            return tg_fail(st, TG_ERR_CONFIG, "%s: [twin] keys cannot be overridden here", where);
        for (size_t k = 0; k < sizeof twin_fixed / sizeof twin_fixed[0]; k++)
            if (strcmp(e->key, twin_fixed[k].key) == 0 && (coarse || !twin_fixed[k].coarse_only))
                return tg_fail(st, TG_ERR_CONFIG, "%s: cannot be overridden (%s)", where,
                               twin_fixed[k].why);
        char assignment[sizeof e->key + sizeof e->value + 2];
        snprintf(assignment, sizeof assignment, "%s=%s", e->key, e->value);
        tg_status s2;
        tg_status_clear(&s2);
        if (tg_config_set(out, assignment, &s2) != TG_OK) {
            /* tg_config_set's message starts with "--set ASSIGNMENT: ". */
            const char *msg = s2.msg;
            char prefix[sizeof assignment + 16];
            snprintf(prefix, sizeof prefix, "--set %s: ", assignment);
            if (strncmp(msg, prefix, strlen(prefix)) == 0)
                msg += strlen(prefix);
            return tg_fail(st, TG_ERR_CONFIG, "%s: %s", where, msg);
        }
        char ksec[64];
        size_t sl = strcspn(e->key, ".");
        snprintf(ksec, sizeof ksec, "%.*s", (int)sl, e->key);
        int i = tg_config_key_index(ksec, e->key + sl + (e->key[sl] == '.'));
        if (i >= 0) {
            out->set_by_user[i] = e->line > 0 ? TG_SET_FILE : TG_SET_OPTION;
            out->set_line[i] = e->line;
        }
    }
    return TG_OK;
}

/* Whether x is a whole multiple of unit (to 1e-9 relative). */
static int whole_multiple(double x, double unit, long *n)
{
    double r = x / unit;
    double k = floor(r + 0.5);
    if (n)
        *n = (long)k;
    return fabs(r - k) <= 1e-9 * fmax(1.0, fabs(r));
}

const char *tg_config_fitted_entry(const tg_config *cfg, const char *entry, char *path, size_t n)
{
    /* Prefix and the scheme that reads the file through its key `file`. */
    static const char *const kinds[2][2] = {{"coefficients:", "coefficients"},
                                            {"network:", "network"}};
    for (int k = 0; k < 2; k++) {
        const size_t len = strlen(kinds[k][0]);
        if (strncmp(entry, kinds[k][0], len) != 0)
            continue;
        const char *p = entry + len;
        while (isspace((unsigned char)*p))
            p++;
        if (p[0] == '/' || p[0] == '\0' || cfg->config_dir[0] == '\0')
            snprintf(path, n, "%s", p);
        else
            snprintf(path, n, "%s/%s", cfg->config_dir, p);
        return kinds[k][1];
    }
    return NULL;
}

tg_code tg_config_check_twin(const tg_config *base, const char *origin, tg_status *st)
{
    if (!base)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_check_twin: NULL config");
    const int periodic = base->geometry == TG_GEOM_PERIODIC;
    const int keys[2] = {K_TWIN_REF_POINTS, K_TWIN_COARSE_POINTS};
    const int pts[2] = {base->twin_reference_points, base->twin_coarse_points};
    char note[64];
    key_note(base, K_GEOMETRY, note, sizeof note);
    for (int w = 0; w < 2; w++) {
        int p = pts[w];
        if (!periodic && !(p >= 17 && p <= 4097 && is_pow2(p - 1)))
            return key_fail(base, keys[w], origin, st,
                            "a basin needs 2^k + 1 points with 17 <= points <= 4097 "
                            "(e.g. 65, 129, 257, 513), got %d", p);
        if (periodic && !(p >= 16 && p <= 4096 && is_pow2(p)))
            return key_fail(base, keys[w], origin, st,
                            "periodic geometry%s needs 2^k points with 16 <= points <= 4096 "
                            "(e.g. 64, 128, 256, 512), got %d", note, p);
    }
    /* Spacing L/(points - 1) in a basin, L/points when periodic. */
    const int cells_ref = periodic ? pts[0] : pts[0] - 1;
    const int cells_coarse = periodic ? pts[1] : pts[1] - 1;
    key_note(base, K_TWIN_REF_POINTS, note, sizeof note);
    if (cells_ref % cells_coarse != 0 || cells_ref / cells_coarse < 2)
        return key_fail(base, K_TWIN_COARSE_POINTS, origin, st,
                        "the coarse grid spacing must be an integer multiple r >= 2 of the "
                        "reference spacing, but %d %s cells per side against the reference's "
                        "%d (reference_points%s = %d) gives r = %.6g; e.g. 513 -> 129 is r = 4",
                        cells_coarse, periodic ? "periodic" : "basin", cells_ref, note, pts[0],
                        (double)cells_ref / cells_coarse);

    tg_config *ref = malloc(sizeof *ref), *crs = malloc(sizeof *crs);
    if (!ref || !crs) {
        free(ref);
        free(crs);
        return tg_fail(st, TG_ERR_NOMEM, "no memory to check the twin settings");
    }
    tg_code rc = tg_config_twin_derive(base, 0, origin, ref, st);
    if (rc == TG_OK)
        rc = tg_config_twin_derive(base, 1, origin, crs, st);
    const double dref = ref->step_s, dcrs = crs->step_s;
    free(ref);
    free(crs);
    if (rc != TG_OK)
        return rc;

    long n;
    const double day = SECONDS_PER_DAY;
    if (!whole_multiple(base->twin_spinup_days * day, dref, &n))
        return key_fail(base, K_TWIN_SPINUP, origin, st,
                        "%g days is not a whole number of reference steps of %g s",
                        base->twin_spinup_days, dref);
    if (!whole_multiple(base->twin_sample_every_days * day, dref, &n) || n < 1)
        return key_fail(base, K_TWIN_SAMPLE, origin, st,
                        "%g days is not a whole number (>= 1) of reference steps of %g s",
                        base->twin_sample_every_days, dref);
    if (!whole_multiple(base->twin_sample_every_days * day, dcrs, &n) || n < 1)
        return key_fail(base, K_TWIN_SAMPLE, origin, st,
                        "%g days is not a whole number (>= 1) of coarse steps of %g s",
                        base->twin_sample_every_days, dcrs);
    if (!whole_multiple(base->twin_analysis_days, base->twin_sample_every_days, &n) || n < 1) {
        key_note(base, K_TWIN_SAMPLE, note, sizeof note);
        return key_fail(base, K_TWIN_ANALYSIS, origin, st,
                        "%g days is not a whole number (>= 1) of sample intervals "
                        "(sample_every_days%s = %g)",
                        base->twin_analysis_days, note, base->twin_sample_every_days);
    }

    /* The compare list: names separated by commas, no empty or repeated entry. */
    const char *p = base->twin_compare;
    char seen[TG_MAX_CLOSURES + 1][TG_RAW_TEXT];
    int nseen = 0;
    for (int item = 1;; item++) {
        size_t len = strcspn(p, ",");
        const char *s = p, *e = p + len;
        while (s < e && isspace((unsigned char)*s))
            s++;
        while (e > s && isspace((unsigned char)e[-1]))
            e--;
        size_t l = (size_t)(e - s);
        if (l == 0)
            return key_fail(base, K_TWIN_COMPARE, origin, st, "entry %d is empty", item);
        if (l >= TG_RAW_TEXT)
            return key_fail(base, K_TWIN_COMPARE, origin, st, "entry %d is too long", item);
        char name[TG_RAW_TEXT];
        memcpy(name, s, l);
        name[l] = '\0';
        for (int k = 0; k < nseen; k++)
            if (strcmp(seen[k], name) == 0)
                return key_fail(base, K_TWIN_COMPARE, origin, st, "'%s' is listed twice", name);
        char fitted[TG_PATH_LEN];
        const char *scheme = tg_config_fitted_entry(base, name, fitted, sizeof fitted);
        if (scheme && !strcmp(name + strlen(scheme) + 1, ""))
            return key_fail(base, K_TWIN_COMPARE, origin, st,
                            "entry %d: %s: needs a file, e.g. %s:fitted.%s", item, scheme, scheme,
                            strcmp(scheme, "network") ? "txt" : "pt");
        if (scheme && !strcmp(scheme, "coefficients")) {
            /* A coefficients file: it must load for this many layers. */
            tg_coef_list list;
            tg_status cs;
            tg_status_clear(&cs);
            if (tg_coef_read(fitted, base->nlayers, &list, &cs) != TG_OK)
                return key_fail(base, K_TWIN_COMPARE, origin, st,
                                "'%s': the coefficients file does not load: %s (relative paths "
                                "are taken from the config file's directory)", name, cs.msg);
            tg_coef_list_free(&list);
        } else if (scheme) {
            /* A network file: twin.c loads it with the coarse grid before the
             * reference runs; here it must at least open. */
            FILE *f = fopen(fitted, "rb");
            if (!f)
                return key_fail(base, K_TWIN_COMPARE, origin, st,
                                "'%s': cannot open the network file %s: %s (relative paths are "
                                "taken from the config file's directory)", name, fitted,
                                strerror(errno));
            fclose(f);
        } else if (strcmp(name, "none") != 0 && strncmp(name, "plugin:", 7) != 0 &&
            !tg_closure_find(name)) {
            const char *names[64];
            int nn = tg_closure_count();
            for (int i = 0; i < nn && i < 64; i++)
                names[i] = tg_closure_ops_at(i)->name;
            int sgi = tg_config_suggest(name, names, nn < 64 ? nn : 64);
            if (sgi >= 0)
                return key_fail(base, K_TWIN_COMPARE, origin, st,
                                "unknown closure '%s'; did you mean %s? (`twingyre closures` "
                                "lists them)", name, names[sgi]);
            return key_fail(base, K_TWIN_COMPARE, origin, st,
                            "unknown closure '%s' (`twingyre closures` lists them; a plugin is "
                            "plugin:PATH.so)", name);
        }
        memcpy(seen[nseen++], name, l + 1);
        int others = 0;
        for (int k = 0; k < nseen; k++)
            others += strcmp(seen[k], "none") != 0;
        if (others > TG_MAX_CLOSURES - 1)
            return key_fail(base, K_TWIN_COMPARE, origin, st,
                            "at most %d closures besides none can be compared in one twin",
                            TG_MAX_CLOSURES - 1);
        if (p[len] == '\0')
            break;
        p += len + 1;
    }
    if (base->set_by_user[K_TWIN_WIDTH] && base->twin_filter != TG_TWIN_FILTER_GAUSSIAN)
        tg_log(TG_LOG_WARN, "[twin] filter_width_factor is ignored unless filter = gaussian");
    return TG_OK;
}

/* ------------------------------------------------------------------ */
/* [vet]: the rules of `twingyre vet`                                  */
/* ------------------------------------------------------------------ */

tg_code tg_config_check_vet(const tg_config *cfg, const char *origin, tg_status *st)
{
    if (!cfg)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_check_vet: NULL config");
    const tg_raw_entry *use = tg_config_raw(cfg, "closure", "use");
    if (use && use->line > 0 && strcmp(use->value, "none") == 0)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s:%d: [closure] use: vet needs a closure to vet, got none (set it in the "
                       "file or with --set closure.use=NAME)",
                       origin ? origin : "config", use->line);
    if (!use || strcmp(use->value, "none") == 0)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: [closure] use: vet needs a closure to vet, got none (set it in the "
                       "file or with --set closure.use=NAME)",
                       use ? "--set closure.use=none" : origin ? origin : "config");
    const double day = SECONDS_PER_DAY;
    double fmaxf = 0.0;
    for (int i = 0; i < cfg->n_vet_step_factors; i++)
        fmaxf = fmax(fmaxf, cfg->vet_step_factors[i]);
    if (cfg->vet_window_days * day < cfg->step_s * fmaxf)
        return key_fail(cfg, K_VET_WINDOW, origin, st,
                        "the window of %g days is shorter than one step of the largest step "
                        "factor (%g x %g s)",
                        cfg->vet_window_days, fmaxf, cfg->step_s);
    double mmax = 0.0;
    for (int i = 0; i < cfg->n_vet_multipliers; i++)
        mmax = fmax(mmax, cfg->vet_multipliers[i]);
    if (cfg->vet_required_margin > mmax)
        return key_fail(cfg, K_VET_MARGIN, origin, st,
                        "expected at most the largest of [vet] multipliers (%g), got %g: a margin "
                        "beyond the multipliers tried cannot be shown",
                        mmax, cfg->vet_required_margin);
    if (strcmp(cfg->vet_reference_state, "spinup") != 0) {
        const char *path = cfg->vet_reference_state;
        FILE *f = fopen(path, "rb");
        if (!f) {
            const char *const names[] = {"spinup", NULL};
            const char *close = suggest_choice(names, path);
            return key_fail(cfg, K_VET_REFERENCE, origin, st,
                            "cannot open reference state file '%s': %s%s", path, strerror(errno),
                            close ? "; did you mean spinup?" : "");
        }
        fclose(f);
    }
    return TG_OK;
}
