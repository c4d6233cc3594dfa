/* config_keys.c - the key table as data: one row per config key (section,
 * name, unit, type, default, allowed range, meaning, where the value lives
 * in tg_config and how it is read), the lookups by name, and which
 * sections exist. Every other config file is driven by this table; to add
 * a key, add a K_ index in config_impl.h, a field in tg_config (config.h)
 * and a row here (DEVELOPERS.md, "How to add a config key").
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"

#include <stddef.h>
#include <string.h>

static const char *const geometry_names[] = {
    [TG_GEOM_BASIN] = "basin", [TG_GEOM_PERIODIC] = "periodic", NULL};
static const char *const wall_names[] = {
    [TG_WALL_FREE_SLIP] = "free_slip", [TG_WALL_PARTIAL_SLIP] = "partial_slip",
    [TG_WALL_NO_SLIP] = "no_slip", NULL};
const char *const tg_cfg_wind_names[] = {
    [TG_WIND_DOUBLE_GYRE] = "double_gyre", [TG_WIND_SINGLE_GYRE] = "single_gyre",
    [TG_WIND_NONE] = "none", NULL};

static const char *const twin_filter_names[] = {
    [TG_TWIN_FILTER_SHARP] = "sharp", [TG_TWIN_FILTER_GAUSSIAN] = "gaussian", NULL};

/* Defaults that follow other keys (key_row.follow). A default must never be
 * the cause of an error: a periodic domain gets periodic grid sizes and no
 * wind (the wind profiles need walls), one layer gets no reduced gravity
 * (there is no interface), and the required vet margin is never above the
 * largest multiplier tried. */
static void follow_points(tg_config *c) { c->points = c->geometry == TG_GEOM_PERIODIC ? 128 : 129; }
static void follow_ref_points(tg_config *c)
{
    c->twin_reference_points = c->geometry == TG_GEOM_PERIODIC ? 512 : 513;
}
static void follow_coarse_points(tg_config *c)
{
    c->twin_coarse_points = c->geometry == TG_GEOM_PERIODIC ? 128 : 129;
}
static void follow_wind(tg_config *c)
{
    c->wind_profile = c->geometry == TG_GEOM_PERIODIC ? TG_WIND_NONE : TG_WIND_DOUBLE_GYRE;
}
/* Two layers: 0.02 m s-2. Three or more have no default (the check asks
 * for one value per interface): no single value suits every stratification. */
static void follow_reduced_gravity(tg_config *c)
{
    c->n_reduced_gravity = c->nlayers == 2 ? 1 : 0;
    c->reduced_gravity_m_s2[0] = c->nlayers == 2 ? 0.02 : 0.0;
}
static void follow_margin(tg_config *c)
{
    double m = 1.0;
    for (int i = 0; i < c->n_vet_multipliers; i++)
        m = c->vet_multipliers[i] > m ? c->vet_multipliers[i] : m;
    c->vet_required_margin = m < 2.0 ? m : 2.0;
}

static int get_geometry(const tg_config *c) { return (int)c->geometry; }
static void put_geometry(tg_config *c, int v) { c->geometry = (tg_geometry_kind)v; }
static int get_wall(const tg_config *c) { return (int)c->wall_condition; }
static void put_wall(tg_config *c, int v) { c->wall_condition = (tg_wall_kind)v; }
static int get_wind(const tg_config *c) { return (int)c->wind_profile; }
static void put_wind(tg_config *c, int v) { c->wind_profile = (tg_wind_kind)v; }
static const char *const yes_no_names[] = {"no", "yes", NULL};
static int get_vet_finer(const tg_config *c) { return c->vet_finer_grid != 0; }
static void put_vet_finer(tg_config *c, int v) { c->vet_finer_grid = v; }
static const char *const step_choice_names[] = {
    [TG_STEP_FIXED] = "fixed", [TG_STEP_ADAPTIVE] = "adaptive", NULL};
static int get_step_choice(const tg_config *c) { return (int)c->step_choice; }
static void put_step_choice(tg_config *c, int v) { c->step_choice = (tg_step_choice)v; }
static int get_twin_ref_fields(const tg_config *c) { return c->twin_reference_fields != 0; }
static void put_twin_ref_fields(tg_config *c, int v) { c->twin_reference_fields = v; }
static int get_twin_filter(const tg_config *c) { return (int)c->twin_filter; }
static void put_twin_filter(tg_config *c, int v) { c->twin_filter = (tg_twin_filter)v; }


#define OFF(field) offsetof(tg_config, field)
#define REAL_GT0(expect_) .kind = V_REAL, .lo_kind = B_EXCL, .lo = 0.0, .expect = expect_
#define REAL_GE0(expect_) .kind = V_REAL, .lo_kind = B_INCL, .lo = 0.0, .expect = expect_
/* The same with an upper bound: every key has a range a user could mean,
 * so that a value like 1e308 is refused here and not met as a blow-up. */
#define REAL_GT0_TO(hi_) \
    .kind = V_REAL, .lo_kind = B_EXCL, .lo = 0.0, .expect = "a real number > 0", \
    .sane = "and at most " #hi_, .sane_hi = hi_
#define REAL_GE0_TO(hi_) \
    .kind = V_REAL, .lo_kind = B_INCL, .lo = 0.0, .expect = "a real number >= 0", \
    .sane = "and at most " #hi_, .sane_hi = hi_

const key_row tg_cfg_rows[K_COUNT] = {
    /* [grid] */
    [K_GEOMETRY] = {
        .info = {"grid", "geometry", "", "choice", "basin", "basin, periodic",
                 "closed square basin with walls on all four sides, or a doubly periodic square"},
        .kind = V_CHOICE, .choices = geometry_names, .get = get_geometry, .put = put_geometry,
        .expect = "one of basin, periodic"},
    [K_SIZE] = {
        .info = {"grid", "size_km", "km", "real", "3840", "> 0, at most 40000",
                 "side length of the square domain"},
        .off = OFF(size_km), REAL_GT0_TO(40000)},
    [K_POINTS] = {
        .info = {"grid", "points", "", "integer", "129",
                 "basin: 2^k + 1 from 17 to 4097; periodic: 2^k from 16 to 4096",
                 "grid points along each side (in a basin both walls are grid points)"},
        .kind = V_INT, .off = OFF(points), .lo_kind = B_INCL, .lo = 16, .hi_kind = B_INCL, .hi = 4097,
        .expect = "an integer from 16 to 4097 (2^k + 1 for a basin, 2^k for periodic geometry)",
        .follow = follow_points, .follows = "128 when geometry = periodic"},
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
                 "1 to 6 comma-separated values, each > 0 and at most 12000",
                 "resting thickness of each layer, top first; the count sets the number of layers"},
        .kind = V_REAL_LIST, .off = OFF(thickness_m), .count_off = OFF(nlayers),
        .min_count = 1, .max_count = TG_MAX_LAYERS, .lo_kind = B_EXCL, .lo = 0.0,
        .hi_kind = B_INCL, .hi = 12000.0,
        .expect = "a comma-separated list of 1 to 6 real numbers, each > 0 and at most 12000",
        .item_rule = "> 0 and at most 12000"},
    [K_REDUCED_GRAVITY] = {
        .info = {"layers", "reduced_gravity_m_s2", "m s-2", "list of reals", "0.02",
                 "one value per interface (layers - 1), each > 0 and at most 10",
                 "reduced gravity across each interface, top first"},
        .kind = V_REAL_LIST, .off = OFF(reduced_gravity_m_s2), .count_off = OFF(n_reduced_gravity),
        .min_count = 0, .max_count = TG_MAX_LAYERS - 1, .lo_kind = B_EXCL, .lo = 0.0,
        .hi_kind = B_INCL, .hi = 10.0,
        .expect = "a comma-separated list of 0 to 5 real numbers (one per interface), each > 0 "
                  "and at most 10",
        .item_rule = "> 0 and at most 10",
        .follow = follow_reduced_gravity, .follows = "none for 1 layer; required for 3 or more"},

    /* [planet] */
    [K_F0] = {
        .info = {"planet", "coriolis_f0_per_s", "s-1", "real", "9.37e-5",
                 "nonzero, magnitude from 1e-7 to 1e-2",
                 "Coriolis parameter at the middle latitude of the domain (negative in the southern "
                 "hemisphere)"},
        .kind = V_REAL, .off = OFF(coriolis_f0_per_s), .nonzero = 1,
        .expect = "a nonzero real number", .sane = "with a magnitude from 1e-7 to 1e-2",
        .sane_lo = 1e-7, .sane_hi = 1e-2},
    [K_BETA] = {
        .info = {"planet", "beta_per_m_per_s", "m-1 s-1", "real", "1.75e-11", "0 to 1e-9",
                 "northward rate of change of the Coriolis parameter"},
        .off = OFF(beta_per_m_per_s), REAL_GE0_TO(1e-9)},

    /* [background] */
    [K_BACKGROUND_U] = {
        .info = {"background", "zonal_velocity_m_s", "m s-1", "list of reals", "",
                 "periodic only: one value per layer, each from -100 to 100 (empty: no background flow)",
                 "uniform imposed eastward velocity of each layer, top first; its vertical "
                 "shear drives baroclinic eddies"},
        .kind = V_REAL_LIST, .off = OFF(zonal_velocity_m_s), .count_off = OFF(n_zonal_velocity),
        .min_count = 0, .max_count = TG_MAX_LAYERS,
        .lo_kind = B_INCL, .lo = -100.0, .hi_kind = B_INCL, .hi = 100.0,
        .expect = "a comma-separated list of 0 to 6 real numbers (one per layer), each from -100 to 100",
        .item_rule = "from -100 to 100"},

    /* [wind] */
    [K_WIND_PROFILE] = {
        .info = {"wind", "profile", "", "choice", "double_gyre", "double_gyre, single_gyre, none",
                 "pattern of the steady zonal wind stress"},
        .kind = V_CHOICE, .choices = tg_cfg_wind_names, .get = get_wind, .put = put_wind,
        .expect = "one of double_gyre, single_gyre, none",
        .follow = follow_wind, .follows = "none when geometry = periodic"},
    [K_STRESS] = {
        .info = {"wind", "stress_amplitude_pa", "Pa", "real", "0.08", "0 to 100",
                 "peak magnitude of the zonal wind stress"},
        .off = OFF(stress_amplitude_pa), REAL_GE0_TO(100)},
    [K_DENSITY] = {
        .info = {"wind", "reference_density_kg_m3", "kg m-3", "real", "1030", "> 0, at most 1e4",
                 "reference sea-water density that converts stress into forcing"},
        .off = OFF(reference_density_kg_m3), REAL_GT0_TO(1e4)},

    /* [dissipation] */
    [K_DRAG] = {
        .info = {"dissipation", "bottom_drag_per_s", "s-1", "real", "1e-7", "0 to 1e-2",
                 "linear drag rate on the bottom layer"},
        .off = OFF(bottom_drag_per_s), REAL_GE0_TO(1e-2)},
    [K_VISCOSITY] = {
        .info = {"dissipation", "viscosity_m2_per_s", "m2 s-1", "real", "200", "0 to 1e6",
                 "harmonic (Laplacian) lateral viscosity A2"},
        .off = OFF(viscosity_m2_per_s), REAL_GE0_TO(1e6)},
    [K_HYPERVISCOSITY] = {
        .info = {"dissipation", "hyperviscosity_m4_per_s", "m4 s-1", "real", "0", "0 to 1e16",
                 "biharmonic lateral viscosity A4; 0 switches it off"},
        .off = OFF(hyperviscosity_m4_per_s), REAL_GE0_TO(1e16)},

    /* [time] */
    [K_STEP] = {
        .info = {"time", "step_s", "s", "real", "1800", "1e-3 to 1e7, at most the duration",
                 "time step; with step_choice = adaptive the first step"},
        .off = OFF(step_s), REAL_GT0("a real number > 0"), .sane = "from 1e-3 to 1e7",
        .sane_lo = 1e-3, .sane_hi = 1e7},
    [K_DURATION] = {
        .info = {"time", "duration_days", "days", "real", "360", "> 0, at most 1e6; at most 1e9 steps",
                 "length of the experiment, counted from day 0"},
        .off = OFF(duration_days), REAL_GT0_TO(1e6)},
    [K_MAX_CFL] = {
        .info = {"time", "max_cfl", "", "real", "1.0", "> 0",
                 "largest advective CFL number (|u|+|v|)Δt/Δ allowed; a step above it stops the run"},
        .off = OFF(max_cfl), REAL_GT0("a real number > 0")},
    [K_STEP_CHOICE] = {
        .info = {"time", "step_choice", "", "choice", "fixed", "fixed, adaptive",
                 "fixed: every step is step_s; adaptive: each step aims at target_cfl within "
                 "the diffusive and closure limits (README, \"Adaptive steps\")"},
        .kind = V_CHOICE, .choices = step_choice_names, .get = get_step_choice,
        .put = put_step_choice, .expect = "one of fixed, adaptive"},
    [K_TARGET_CFL] = {
        .info = {"time", "target_cfl", "", "real", "0.5", "> 0, at most 10, below max_cfl",
                 "adaptive: advective CFL number (|u|+|v|)Δt/Δ each step aims at; also the phase a "
                 "Rossby wave may turn per step"},
        .off = OFF(target_cfl), REAL_GT0_TO(10)},
    [K_LARGEST_STEP] = {
        .info = {"time", "largest_step_s", "s", "real", "86400", "1e-3 to 1e7, at least step_s",
                 "adaptive: largest step"},
        .off = OFF(largest_step_s), REAL_GT0("a real number > 0"), .sane = "from 1e-3 to 1e7",
        .sane_lo = 1e-3, .sane_hi = 1e7},
    [K_SMALLEST_STEP] = {
        .info = {"time", "smallest_step_s", "s", "real", "60", "1e-3 to 1e7, at most step_s",
                 "adaptive: smallest step the limits may ask for (steps shortened to land on an "
                 "output time may be shorter)"},
        .off = OFF(smallest_step_s), REAL_GT0("a real number > 0"), .sane = "from 1e-3 to 1e7",
        .sane_lo = 1e-3, .sane_hi = 1e7},
    [K_STEP_GROWTH] = {
        .info = {"time", "step_growth", "", "real", "1.2", "> 1, at most 10",
                 "adaptive: largest ratio of a step to the one before (a step shrinks as far "
                 "as the limits ask at once)"},
        .kind = V_REAL, .lo_kind = B_EXCL, .lo = 1.0, .hi_kind = B_INCL, .hi = 10.0,
        .expect = "a real number > 1 and at most 10", .off = OFF(step_growth)},

    /* [initial] */
    [K_INITIAL_STATE] = {
        .info = {"initial", "state", "", "choice or path", "rest",
                 "rest, noise, or the path of a NetCDF file",
                 "starting state: fluid at rest, random streamfunction noise, or a saved state"},
        .kind = V_INITIAL,
        .expect = "rest, noise or the path of a readable file"},
    [K_NOISE] = {
        .info = {"initial", "noise_amplitude_m2_per_s", "m2 s-1", "real", "1000", "> 0, at most 1e9",
                 "r.m.s. streamfunction of the initial noise (state = noise), smoothed over 4 grid "
                 "spacings"},
        .off = OFF(noise_amplitude_m2_per_s), REAL_GT0_TO(1e9)},
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
        .info = {"output", "snapshot_every_days", "days", "real", "30", "> 0, at most 1e6, at least one step",
                 "interval between field snapshots"},
        .off = OFF(snapshot_every_days), REAL_GT0_TO(1e6)},
    [K_CHECKPOINT_EVERY] = {
        .info = {"output", "checkpoint_every_days", "days", "real", "360",
                 ">= 0 (0: only at the end), at most 1e6, at least one step",
                 "interval between checkpoint rewrites"},
        .off = OFF(checkpoint_every_days), REAL_GE0_TO(1e6)},
    [K_LOG_EVERY] = {
        .info = {"output", "log_every_days", "days", "real", "30", "> 0, at most 1e6, at least one step",
                 "interval between budget summary lines in the log"},
        .off = OFF(log_every_days), REAL_GT0_TO(1e6)},

    /* [twin]: read by `twingyre twin` only (twin.h) */
    [K_TWIN_REF_POINTS] = {
        .info = {"twin", "reference_points", "", "integer", "513",
                 "like [grid] points (basin 2^k + 1, periodic 2^k), more than coarse_points",
                 "grid points per side of the fine reference run of a twin experiment"},
        .kind = V_INT, .off = OFF(twin_reference_points), .lo_kind = B_INCL, .lo = 16,
        .hi_kind = B_INCL, .hi = 4097,
        .expect = "an integer from 16 to 4097 (2^k + 1 for a basin, 2^k for periodic geometry)",
        .follow = follow_ref_points, .follows = "512 when geometry = periodic"},
    [K_TWIN_COARSE_POINTS] = {
        .info = {"twin", "coarse_points", "", "integer", "129",
                 "like [grid] points; coarse spacing = r x reference spacing, r an integer >= 2",
                 "grid points per side of the coarse runs (e.g. 513 -> 129 is r = 4)"},
        .kind = V_INT, .off = OFF(twin_coarse_points), .lo_kind = B_INCL, .lo = 16,
        .hi_kind = B_INCL, .hi = 4097,
        .expect = "an integer from 16 to 4097 (2^k + 1 for a basin, 2^k for periodic geometry)",
        .follow = follow_coarse_points, .follows = "128 when geometry = periodic"},
    [K_TWIN_SPINUP] = {
        .info = {"twin", "spinup_days", "days", "real", "3600",
                 ">= 0, at most 1e6, a whole number of reference steps",
                 "reference run before the analysis window starts (from [initial] state)"},
        .off = OFF(twin_spinup_days), REAL_GE0_TO(1e6)},
    [K_TWIN_ANALYSIS] = {
        .info = {"twin", "analysis_days", "days", "real", "1800",
                 "> 0, at most 1e6, a whole number of sample intervals",
                 "length of the analysis window: sampled reference and coarse runs"},
        .off = OFF(twin_analysis_days), REAL_GT0_TO(1e6)},
    [K_TWIN_SAMPLE] = {
        .info = {"twin", "sample_every_days", "days", "real", "10",
                 "> 0, at most 1e6, a whole number of steps of both the reference and the "
                 "coarse runs",
                 "interval between samples (subgrid.nc records, coarse-run snapshots)"},
        .off = OFF(twin_sample_every_days), REAL_GT0_TO(1e6)},
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
    [K_TWIN_REF_FIELDS] = {
        .info = {"twin", "reference_fields", "", "choice", "no", "yes, no",
                 "yes: the reference also writes its fine-grid psi and q at every sample to "
                 "reference/fields.nc"},
        .kind = V_CHOICE, .choices = yes_no_names, .get = get_twin_ref_fields,
        .put = put_twin_ref_fields, .expect = "one of yes, no"},

    /* [vet]: read by `twingyre vet` only (vet.h) */
    [K_VET_REFERENCE] = {
        .info = {"vet", "reference_state", "", "text", "spinup",
                 "spinup, or the path of a state file (fields.nc or checkpoint.nc of this grid)",
                 "state the closure is vetted around: a spin-up from [initial] state, or a file"},
        .kind = V_TEXT, .off = OFF(vet_reference_state),
        .expect = "spinup or the path of a state file"},
    [K_VET_SPINUP] = {
        .info = {"vet", "spinup_days", "days", "real", "360", ">= 0, at most 1e6",
                 "length of the spin-up that makes the reference state (reference_state = spinup)"},
        .off = OFF(vet_spinup_days), REAL_GE0_TO(1e6)},
    [K_VET_WINDOW] = {
        .info = {"vet", "window_days", "days", "real", "30",
                 "> 0, at most 1e6, at least one step of the largest step factor",
                 "length of each online run from the reference state"},
        .off = OFF(vet_window_days), REAL_GT0_TO(1e6)},
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
        .info = {"vet", "required_margin", "", "real", "2",
                 ">= 1, at most the largest multiplier (at most 1000)",
                 "the closure must stay stable online up to this multiplier"},
        .kind = V_REAL, .off = OFF(vet_required_margin), .lo_kind = B_INCL, .lo = 1.0,
        .expect = "a real number >= 1", .sane = "and at most 1000",
        .sane_hi = 1000.0,
        .follow = follow_margin, .follows = "the largest multiplier when that is below 2"},
    [K_VET_FINER] = {
        .info = {"vet", "finer_grid", "", "choice", "yes", "yes, no",
                 "repeat the online check on the next finer grid (twice the resolution)"},
        .kind = V_CHOICE, .choices = yes_no_names, .get = get_vet_finer, .put = put_vet_finer,
        .expect = "one of yes, no"},
};

#undef REAL_GT0
#undef REAL_GE0
#undef REAL_GT0_TO
#undef REAL_GE0_TO
#undef OFF

int tg_config_key_count(void) { return K_COUNT; }

const tg_key_info *tg_config_key(int i)
{
    if (i < 0 || i >= K_COUNT)
        return NULL;
    return &tg_cfg_rows[i].info;
}

int tg_config_key_index(const char *section, const char *key)
{
    if (!section || !key)
        return -1;
    for (int i = 0; i < K_COUNT; i++)
        if (strcmp(tg_cfg_rows[i].info.section, section) == 0 && strcmp(tg_cfg_rows[i].info.key, key) == 0)
            return i;
    return -1;
}

/* True when row i is the first row of its section (rows are grouped by section). */
int tg_cfg_starts_section(int i)
{
    return i == 0 || strcmp(tg_cfg_rows[i - 1].info.section, tg_cfg_rows[i].info.section) != 0;
}

static int core_section_exists(const char *section)
{
    for (int i = 0; i < K_COUNT; i++)
        if (strcmp(tg_cfg_rows[i].info.section, section) == 0)
            return 1;
    return 0;
}

int tg_cfg_is_scheme(const char *name)
{
    const tg_config_hooks *h = tg_config_get_hooks();
    if (!h)
        return 0;
    for (int i = 0; i < h->scheme_count(); i++)
        if (strcmp(h->scheme_name(i), name) == 0)
            return 1;
    return 0;
}

/* Sections the closure layer validates (through its hooks, config_hooks.h):
 * [closure], a registered scheme's name, or plugin.NAME. */
int tg_cfg_closure_section(const char *section)
{
    return strcmp(section, "closure") == 0 || tg_cfg_is_scheme(section) ||
           (strncmp(section, "plugin.", 7) == 0 && section[7] != '\0');
}

/* [twin.reference] and [twin.coarse]: overrides kept as written. */
int tg_cfg_twin_override_section(const char *section)
{
    return strcmp(section, "twin.reference") == 0 || strcmp(section, "twin.coarse") == 0;
}

int tg_cfg_section_exists(const char *section)
{
    return core_section_exists(section) || tg_cfg_closure_section(section) ||
           tg_cfg_twin_override_section(section);
}
