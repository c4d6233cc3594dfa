/* config_check.c - the rules between keys (grid size of the geometry's
 * form, one reduced gravity per interface, geometry-specific keys, steps
 * against intervals, the state files), the quantities several keys give
 * (step count, deformation radii, the explicit diffusive limit), the
 * closure sections through the installed hooks (config_hooks.h), the
 * warnings about settings without effect, and the one validation entry
 * every command uses (tg_config_validate), which adds the [twin] rules
 * (config_twin.c) and the [vet] rules when the command or the config uses
 * them.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include "config_impl.h"
#include "constants.h"
#include "textfile.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Where key i got its value, as a message prefix (no trailing ": "). */
void tg_cfg_key_where(const tg_config *cfg, int i, const char *origin, char *out, size_t n)
{
    const key_row *r = &tg_cfg_rows[i];
    switch (cfg->set_by_user[i]) {
    case TG_SET_FILE:
        snprintf(out, n, "%s:%d: [%s] %s", origin ? origin : "config file", cfg->set_line[i],
                 r->info.section, r->info.key);
        return;
    case TG_SET_OPTION: {
        char v[TG_PATH_LEN + 64];
        tg_cfg_format_value(r, cfg, v, sizeof v);
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
void tg_cfg_key_note(const tg_config *cfg, int i, char *out, size_t n)
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

/* "WHERE: message" with code: WHERE names key i's place (tg_cfg_key_where). */
static tg_code key_vfail(const tg_config *cfg, int i, const char *origin, tg_status *st,
                         tg_code code, const char *fmt, va_list ap)
{
    char where[TG_MSG_LEN], msg[TG_MSG_LEN];
    vsnprintf(msg, sizeof msg, fmt, ap);
    tg_cfg_key_where(cfg, i, origin, where, sizeof where);
    return tg_fail(st, code, "%s: %s", where, msg);
}

tg_code tg_cfg_key_fail(const tg_config *cfg, int i, const char *origin, tg_status *st,
                        const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    tg_code rc = key_vfail(cfg, i, origin, st, TG_ERR_CONFIG, fmt, ap);
    va_end(ap);
    return rc;
}

/* The same with TG_ERR_IO: a file the key names cannot be used. */
static tg_code key_file_fail(const tg_config *cfg, int i, const char *origin, tg_status *st,
                             const char *fmt, ...) __attribute__((format(printf, 5, 6)));
static tg_code key_file_fail(const tg_config *cfg, int i, const char *origin, tg_status *st,
                             const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    tg_code rc = key_vfail(cfg, i, origin, st, TG_ERR_IO, fmt, ap);
    va_end(ap);
    return rc;
}

int tg_cfg_is_pow2(int v) { return v > 0 && (v & (v - 1)) == 0; }

/* A state file named by key `key` ([initial] state, [vet] reference_state):
 * a readable regular file with a netCDF signature (the light check of the
 * config: the reader verifies the whole file, ncverify.h). `what` names it in the
 * message ("initial state"), `hint` ends the message ("" or "; did you
 * mean ...?"). */
static tg_code state_file_rule(const tg_config *cfg, int key, const char *path, const char *what,
                               const char *hint, const char *origin, tg_status *st)
{
    /* Not opened unless regular: opening a FIFO would wait for a writer. */
    const char *kind = tg_not_regular(path);
    if (kind)
        return tg_cfg_key_fail(cfg, key, origin, st, "%s '%s' is not a regular file (%s)", what,
                               path, kind);
    FILE *f = fopen(path, "rb");
    if (!f)
        return tg_cfg_key_fail(cfg, key, origin, st, "cannot open %s file '%s': %s%s", what, path,
                               strerror(errno), hint);
    unsigned char head[8];
    size_t got = fread(head, 1, sizeof head, f);
    int e = errno, bad = ferror(f);
    fclose(f);
    if (bad)
        return key_file_fail(cfg, key, origin, st, "cannot read %s file '%s': %s", what, path,
                               strerror(e));
    if (got == 0)
        return tg_cfg_key_fail(cfg, key, origin, st, "cannot read %s file '%s': the file is empty",
                               what, path);
    /* The signatures of the netCDF formats: classic "CDF" with version 1, 2
     * or 5, and netCDF-4, which is HDF5 (netCDF Users Guide, "File Format
     * Specifications"; HDF5 File Format Specification, "Format Signature"). */
    static const unsigned char hdf5[8] = {0x89, 'H', 'D', 'F', '\r', '\n', 0x1a, '\n'};
    const int classic = got >= 4 && memcmp(head, "CDF", 3) == 0 &&
                        (head[3] == 1 || head[3] == 2 || head[3] == 5);
    const int netcdf4 = got == sizeof head && memcmp(head, hdf5, sizeof hdf5) == 0;
    if (!classic && !netcdf4)
        return key_file_fail(cfg, key, origin, st,
                               "%s file '%s' is not a netCDF file (expected fields.nc or "
                               "checkpoint.nc written by twingyre)%s", what, path, hint);
    return TG_OK;
}

/* Most steps a run may take: a run of more is a mistake (a step of 1e-3 s
 * for years), and every step count then fits in any integer type. */
#define MAX_STEPS 1e9

/* SSP-RK3 is stable for dt * lambda up to about 2.51 on the negative real
 * axis (Gottlieb, Shu & Tadmor 2001, SIAM Review 43(1), "Strong
 * stability-preserving high-order time discretization methods", the
 * stability region of the third-order scheme; the value 2.51 is from
 * memory). A step beyond ten times that is absurd and refused here; one
 * nearer is left to the run, whose blow-up checks say what happened (the
 * factor ten is a choice: the 5-point estimate of the grid-scale
 * eigenvalue is not exact on every grid). */
#define RK3_REAL_LIMIT 2.51
#define ABSURD_FACTOR 10.0

/* Quantities derived from several keys, checked here so that a value that
 * passes each key's range cannot break the run later: the step count, the
 * deformation radius of each interface, and the explicit diffusive limit. */
static tg_code derived_rules(const tg_config *cfg, const char *origin, tg_status *st)
{
    char note[64];
    const double steps = cfg->duration_days * TG_SECONDS_PER_DAY / cfg->step_s;
    if (!(steps <= MAX_STEPS)) {
        const int at = cfg->set_by_user[K_DURATION] ? K_DURATION : K_STEP;
        tg_cfg_key_note(cfg, at == K_DURATION ? K_STEP : K_DURATION, note, sizeof note);
        return tg_cfg_key_fail(cfg, at, origin, st,
                               "%g days in steps of %g s%s is %.3g steps; at most %.0e are allowed",
                               cfg->duration_days, cfg->step_s, note, steps, MAX_STEPS);
    }
    /* The deformation radius of interface i as if its two layers were
     * alone, sqrt(g'_i H_i H_{i+1} / (H_i + H_{i+1})) / |f0| (Vallis 2017,
     * Atmospheric and Oceanic Fluid Dynamics, 2nd ed., section 5.4). */
    for (int i = 0; i + 1 < cfg->nlayers && i < cfg->n_reduced_gravity; i++) {
        const double h1 = cfg->thickness_m[i], h2 = cfg->thickness_m[i + 1];
        const double r = sqrt(cfg->reduced_gravity_m_s2[i] * h1 * h2 / (h1 + h2)) /
                         fabs(cfg->coriolis_f0_per_s);
        if (!(isfinite(r) && r > 0.0))
            return tg_cfg_key_fail(cfg, K_F0, origin, st,
                                   "the deformation radius of interface %d is %g m; it must be "
                                   "finite and positive", i + 1, r);
    }
    /* The fastest damping of the explicit step: the grid-scale mode of the
     * 5-point Laplacian (eigenvalue -8/dx^2), of its square, and the bottom
     * drag. */
    const int periodic = cfg->geometry == TG_GEOM_PERIODIC;
    const double dx = cfg->size_km * 1e3 / (periodic ? cfg->points : cfg->points - 1);
    const double lam2 = 8.0 * cfg->viscosity_m2_per_s / (dx * dx);
    const double lam4 = 64.0 * cfg->hyperviscosity_m4_per_s / (dx * dx * dx * dx);
    const double lamr = cfg->bottom_drag_per_s;
    const double worst = cfg->step_s * (lam2 + lam4 + lamr);
    if (!(worst <= ABSURD_FACTOR * RK3_REAL_LIMIT)) {
        int at = lam2 >= lam4 && lam2 >= lamr ? K_VISCOSITY : lam4 >= lamr ? K_HYPERVISCOSITY
                                                                            : K_DRAG;
        if (!cfg->set_by_user[at] && cfg->set_by_user[K_STEP])
            at = K_STEP;
        tg_cfg_key_note(cfg, K_STEP, note, sizeof note);
        return tg_cfg_key_fail(cfg, at, origin, st,
                               "the explicit step is unstable at the grid scale: step_s%s = %g s "
                               "times the damping rate (8 A2/dx^2 + 64 A4/dx^4 + r = %.3g s-1 with "
                               "dx = %g m) is %.3g, more than ten times %.2f, the limit of the "
                               "RK3 step; shorten the step or lower the dissipation",
                               note, cfg->step_s, lam2 + lam4 + lamr, dx, worst, RK3_REAL_LIMIT);
    }
    return TG_OK;
}

/* [grid] points against the geometry: 2^k + 1 in a basin, 2^k periodic. */
static tg_code grid_rules(const tg_config *cfg, const char *origin, tg_status *st)
{
    char note[64];
    int periodic = cfg->geometry == TG_GEOM_PERIODIC;

    /* Grid size. When points keeps its default, blame the geometry line. */
    int p = cfg->points;
    int at = !cfg->set_by_user[K_POINTS] && cfg->set_by_user[K_GEOMETRY] ? K_GEOMETRY : K_POINTS;
    char got[128];
    if (at == K_POINTS) {
        snprintf(got, sizeof got, "got %d", p);
    } else {
        tg_cfg_key_note(cfg, K_POINTS, note, sizeof note);
        snprintf(got, sizeof got, "but [grid] points%s is %d", note, p);
    }
    if (!periodic && !(p >= 17 && p <= 4097 && tg_cfg_is_pow2(p - 1)))
        return tg_cfg_key_fail(cfg, at, origin, st,
                        "a basin needs 2^k + 1 points with 17 <= points <= 4097 "
                        "(e.g. 65, 129, 257, 513), %s", got);
    if (periodic && !(p >= 16 && p <= 4096 && tg_cfg_is_pow2(p))) {
        if (at == K_GEOMETRY)
            note[0] = '\0';
        else
            tg_cfg_key_note(cfg, K_GEOMETRY, note, sizeof note);
        return tg_cfg_key_fail(cfg, at, origin, st,
                        "periodic geometry%s needs 2^k points with 16 <= points <= 4096 "
                        "(e.g. 64, 128, 256, 512), %s", note, got);
    }
    return TG_OK;
}

/* Layers, their interfaces' reduced gravities and the background flow of
 * each layer. */
static tg_code layer_rules(const tg_config *cfg, const char *origin, tg_status *st)
{
    char note[64];
    int periodic = cfg->geometry == TG_GEOM_PERIODIC;

    /* Layers and interfaces. */
    if (cfg->nlayers < 1 || cfg->nlayers > TG_MAX_LAYERS)
        return tg_cfg_key_fail(cfg, K_THICKNESS, origin, st, "expected 1 to %d layers, got %d",
                        TG_MAX_LAYERS, cfg->nlayers);
    if (cfg->n_reduced_gravity != cfg->nlayers - 1 && !cfg->set_by_user[K_REDUCED_GRAVITY])
        return tg_cfg_key_fail(cfg, K_THICKNESS, origin, st,
                               "gives %d layers, which need %d values of reduced_gravity_m_s2 (one "
                               "per interface, top first); it has a default only for 1 layer "
                               "(none) and 2 layers (0.02), so give it for %d layers",
                               cfg->nlayers, cfg->nlayers - 1, cfg->nlayers);
    if (cfg->n_reduced_gravity != cfg->nlayers - 1) {
        char gnote[64];
        int gat = cfg->set_by_user[K_REDUCED_GRAVITY] ? K_REDUCED_GRAVITY : K_THICKNESS;
        int need = cfg->nlayers - 1;
        tg_cfg_key_note(cfg, K_THICKNESS, note, sizeof note);
        tg_cfg_key_note(cfg, K_REDUCED_GRAVITY, gnote, sizeof gnote);
        if (gat == K_THICKNESS)
            note[0] = '\0';  /* the message already starts with its place */
        return tg_cfg_key_fail(cfg, gat, origin, st,
                        "thickness_m%s gives %d layer%s, which need%s %d value%s of "
                        "reduced_gravity_m_s2 (one per interface), but reduced_gravity_m_s2%s has %d",
                        note, cfg->nlayers, cfg->nlayers == 1 ? "" : "s", cfg->nlayers == 1 ? "s" : "",
                        need, need == 1 ? "" : "s", gnote, cfg->n_reduced_gravity);
    }

    /* The imposed background flow: periodic geometry only, one per layer. */
    if (!periodic && cfg->set_by_user[K_BACKGROUND_U] && cfg->n_zonal_velocity > 0)
        return tg_cfg_key_fail(cfg, K_BACKGROUND_U, origin, st,
                        "a uniform background flow needs geometry = periodic (walls would block it)");
    if (periodic && cfg->n_zonal_velocity != 0 && cfg->n_zonal_velocity != cfg->nlayers)
        return tg_cfg_key_fail(cfg, K_BACKGROUND_U, origin, st,
                        "expected one value per layer (%d), got %d", cfg->nlayers,
                        cfg->n_zonal_velocity);
    return TG_OK;
}

/* Keys that apply only to one geometry. */
static tg_code geometry_rules(const tg_config *cfg, const char *origin, tg_status *st)
{
    char note[64];
    int periodic = cfg->geometry == TG_GEOM_PERIODIC;

    /* Geometry-specific keys. */
    if (periodic) {
        tg_cfg_key_note(cfg, K_GEOMETRY, note, sizeof note);
        const int wall_keys[] = {K_WALL_CONDITION, K_WALL_SLIP};
        for (size_t k = 0; k < sizeof wall_keys / sizeof wall_keys[0]; k++)
            if (cfg->set_by_user[wall_keys[k]])
                return tg_cfg_key_fail(cfg, wall_keys[k], origin, st,
                                "wall keys do not apply to periodic geometry%s; remove this key",
                                note);
        /* Its default follows the geometry (none), so only a set profile. */
        if (cfg->wind_profile != TG_WIND_NONE)
            return tg_cfg_key_fail(cfg, K_WIND_PROFILE, origin, st,
                                   "profile %s is not available in periodic geometry%s yet; "
                                   "use profile = none",
                                   tg_cfg_wind_names[cfg->wind_profile], note);
    }
    return TG_OK;
}

/* The time step against the run, adaptive-step bounds and output
 * intervals. */
static tg_code time_rules(const tg_config *cfg, const char *origin, tg_status *st)
{
    char note[64];

    /* Time stepping and output intervals. */
    double run_s = cfg->duration_days * TG_SECONDS_PER_DAY;
    if (cfg->step_s > run_s) {
        tg_cfg_key_note(cfg, K_DURATION, note, sizeof note);
        return tg_cfg_key_fail(cfg, K_STEP, origin, st,
                        "%g s is longer than the whole run: duration_days%s = %g, i.e. %g s",
                        cfg->step_s, note, cfg->duration_days, run_s);
    }
    /* Adaptive steps: the first step lies within the bounds, and the target
     * leaves room below the CFL number that stops the run. */
    if (cfg->step_choice == TG_STEP_ADAPTIVE) {
        if (cfg->target_cfl >= cfg->max_cfl) {
            tg_cfg_key_note(cfg, K_MAX_CFL, note, sizeof note);
            return tg_cfg_key_fail(cfg, K_TARGET_CFL, origin, st,
                                   "%g is not below max_cfl%s = %g, which stops the run",
                                   cfg->target_cfl, note, cfg->max_cfl);
        }
        if (cfg->smallest_step_s > cfg->step_s) {
            tg_cfg_key_note(cfg, K_STEP, note, sizeof note);
            return tg_cfg_key_fail(cfg, K_SMALLEST_STEP, origin, st,
                                   "%g s is longer than the first step step_s%s = %g s",
                                   cfg->smallest_step_s, note, cfg->step_s);
        }
        if (cfg->largest_step_s < cfg->step_s) {
            tg_cfg_key_note(cfg, K_STEP, note, sizeof note);
            return tg_cfg_key_fail(cfg, K_LARGEST_STEP, origin, st,
                                   "%g s is shorter than the first step step_s%s = %g s",
                                   cfg->largest_step_s, note, cfg->step_s);
        }
    }
    const int intervals[] = {K_SNAPSHOT_EVERY, K_CHECKPOINT_EVERY, K_LOG_EVERY};
    for (size_t k = 0; k < sizeof intervals / sizeof intervals[0]; k++) {
        double days;
        memcpy(&days, (const char *)cfg + tg_cfg_rows[intervals[k]].off, sizeof days);
        if (intervals[k] == K_CHECKPOINT_EVERY && days == 0.0)
            continue;
        if (days * TG_SECONDS_PER_DAY < cfg->step_s) {
            tg_cfg_key_note(cfg, K_STEP, note, sizeof note);
            return tg_cfg_key_fail(cfg, intervals[k], origin, st,
                            "%g days is shorter than one time step: step_s%s = %g s = %g days",
                            days, note, cfg->step_s, cfg->step_s / TG_SECONDS_PER_DAY);
        }
    }
    return TG_OK;
}

/* The rules between the keys a run uses (no closures, no warnings). */
static tg_code core_rules(const tg_config *cfg, const char *origin, tg_status *st)
{
    tg_code rc;
    if ((rc = grid_rules(cfg, origin, st)) != TG_OK ||
        (rc = layer_rules(cfg, origin, st)) != TG_OK ||
        (rc = geometry_rules(cfg, origin, st)) != TG_OK ||
        (rc = time_rules(cfg, origin, st)) != TG_OK ||
        (rc = derived_rules(cfg, origin, st)) != TG_OK)
        return rc;

    /* The initial state file. */
    if (cfg->initial_kind == TG_INIT_FILE) {
        const char *path = cfg->initial_path;
        const char *const names[] = {"rest", "noise", NULL};
        const char *close = tg_cfg_suggest_choice(names, path);
        char hint[64] = "";
        if (close)
            snprintf(hint, sizeof hint, "; did you mean %s?", close);
        return state_file_rule(cfg, K_INITIAL_STATE, path, "initial state", hint, origin, st);
    }
    return TG_OK;
}

/* The closure sections through the hooks (without them, only "none"). */
static tg_code check_closures(const tg_config *cfg, const char *origin,
                              char (*used)[TG_SECTION_LEN], int max, int *nused, tg_status *st)
{
    const tg_config_hooks *h = tg_config_get_hooks();
    if (h)
        return h->check_closures(cfg, origin, used, max, nused, st);
    /* Without the closure layer only "no closure" can be checked. */
    for (int r = 0; r < cfg->nraw; r++)
        if (strcmp(cfg->raw[r].section, "closure") != 0 || strcmp(cfg->raw[r].key, "use") != 0 ||
            strcmp(cfg->raw[r].value, "none") != 0)
            return tg_fail(st, TG_ERR_INTERNAL,
                           "%s: [%s] %s: closure settings cannot be checked: the closure layer's "
                           "checks are not installed (call tg_init first)",
                           origin ? origin : "config", cfg->raw[r].section, cfg->raw[r].key);
    return TG_OK;
}

/* Whether a warning about key i having no effect is worth giving: the user
 * set it, and not as part of a resolved config read back. */
static int warn_about(const tg_config *cfg, int i)
{
    return cfg->set_by_user[i] == TG_SET_OPTION ||
           (cfg->set_by_user[i] == TG_SET_FILE && !cfg->resolved);
}

/* Keys that are set but have no effect, and closure sections nothing uses:
 * worth a warning each, not an error. */
static void warn_unused(const tg_config *cfg, unsigned uses, const char *origin,
                        char (*used)[TG_SECTION_LEN], int nused)
{
    const char *file = origin ? origin : "config";
    if (cfg->geometry != TG_GEOM_PERIODIC && warn_about(cfg, K_WALL_SLIP) &&
        cfg->wall_condition != TG_WALL_PARTIAL_SLIP)
        tg_log(TG_LOG_WARN, "[grid] wall_slip_coefficient is ignored unless wall_condition = partial_slip");
    if (warn_about(cfg, K_NOISE) && cfg->initial_kind != TG_INIT_NOISE)
        tg_log(TG_LOG_WARN, "[initial] noise_amplitude_m2_per_s is ignored unless state = noise");
    if ((uses & TG_USE_TWIN) && warn_about(cfg, K_TWIN_WIDTH) &&
        cfg->twin_filter != TG_TWIN_FILTER_GAUSSIAN)
        tg_log(TG_LOG_WARN, "[twin] filter_width_factor is ignored unless filter = gaussian");
    if (cfg->resolved)
        return;
    for (int r = 0; r < cfg->nraw; r++) {
        const tg_raw_entry *e = &cfg->raw[r];
        if (!strcmp(e->section, "closure"))
            continue;
        int found = 0, first = 1;
        for (int u = 0; u < nused && !found; u++)
            found = !strcmp(used[u], e->section);
        for (int q = 0; q < r && first; q++)
            first = strcmp(cfg->raw[q].section, e->section) != 0;
        if (found || !first)
            continue;
        char at[TG_PATH_LEN + 32];
        if (e->line > 0)
            snprintf(at, sizeof at, "%s:%d", file, e->line);
        else
            snprintf(at, sizeof at, "--set %s.%s", e->section, e->key);
        if (uses & TG_USE_TWIN)
            tg_log(TG_LOG_WARN, "%s: [%s] is ignored: neither the reference ([closure] use) nor "
                   "[twin] compare uses it", at, e->section);
        else
            tg_log(TG_LOG_WARN, "%s: [%s] is ignored: [closure] use does not name it", at,
                   e->section);
    }
}

tg_code tg_cfg_check_run(const tg_config *cfg, const char *origin,
                         char (*used)[TG_SECTION_LEN], int max, int *nused, tg_status *st)
{
    tg_code rc = core_rules(cfg, origin, st);
    return rc != TG_OK ? rc : check_closures(cfg, origin, used, max, nused, st);
}

/* [vet] rules (`twingyre vet`, vet.h): a closure is configured, the window
 * holds at least one step, required_margin is at most the largest
 * multiplier, and a reference state file can be opened. */
static tg_code vet_rules(const tg_config *cfg, const char *origin, tg_status *st)
{
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
    double fmaxf = 0.0;
    for (int i = 0; i < cfg->n_vet_step_factors; i++)
        fmaxf = fmax(fmaxf, cfg->vet_step_factors[i]);
    if (cfg->vet_window_days * TG_SECONDS_PER_DAY < cfg->step_s * fmaxf)
        return tg_cfg_key_fail(cfg, K_VET_WINDOW, origin, st,
                               "the window of %g days is shorter than one step of the largest "
                               "step factor (%g x %g s)",
                               cfg->vet_window_days, fmaxf, cfg->step_s);
    double mmax = 0.0;
    for (int i = 0; i < cfg->n_vet_multipliers; i++)
        mmax = fmax(mmax, cfg->vet_multipliers[i]);
    if (cfg->vet_required_margin > mmax)
        return tg_cfg_key_fail(cfg, K_VET_MARGIN, origin, st,
                               "expected at most the largest of [vet] multipliers (%g), got %g: a "
                               "margin beyond the multipliers tried cannot be shown",
                               mmax, cfg->vet_required_margin);
    if (strcmp(cfg->vet_reference_state, "spinup") != 0) {
        const char *const names[] = {"spinup", NULL};
        const char *close = tg_cfg_suggest_choice(names, cfg->vet_reference_state);
        char hint[64] = "";
        if (close)
            snprintf(hint, sizeof hint, "; did you mean spinup?");
        tg_code rc = state_file_rule(cfg, K_VET_REFERENCE, cfg->vet_reference_state,
                                            "reference state", hint, origin, st);
        if (rc != TG_OK)
            return rc;
    }
    return TG_OK;
}

unsigned tg_config_uses(const tg_config *cfg)
{
    unsigned uses = 0;
    int twin = cfg->ntwin_raw > 0, vet = 0;
    for (int i = 0; i < K_COUNT; i++) {
        const int by_user = cfg->set_by_user[i] == TG_SET_OPTION ||
                            (cfg->set_by_user[i] == TG_SET_FILE && !cfg->resolved);
        if (!strcmp(tg_cfg_rows[i].info.section, "twin"))
            twin |= by_user;
        if (!strcmp(tg_cfg_rows[i].info.section, "vet"))
            vet |= by_user;
    }
    if (cfg->resolved && strcmp(cfg->twin_compare, tg_cfg_rows[K_TWIN_COMPARE].info.def) != 0)
        twin = 1;
    uses |= twin ? TG_USE_TWIN : TG_USE_RUN;
    if (vet)
        uses |= TG_USE_VET;
    return uses;
}

tg_code tg_config_validate(const tg_config *cfg, unsigned uses, const char *origin,
                           tg_status *st)
{
    if (!cfg)
        return tg_fail(st, TG_ERR_INTERNAL, "tg_config_validate: NULL config");
    if ((uses & ~(unsigned)TG_USE_QUIET) == 0)
        uses |= tg_config_uses(cfg);
    /* Sections the closure lists use: the reference's and every compared
     * closure's in a twin, at most a full list each. */
    enum { MAX_USED = TG_MAX_CLOSURES * (TG_MAX_CLOSURES + 1) };
    char (*used)[TG_SECTION_LEN] = calloc(MAX_USED, sizeof *used);
    if (!used)
        return tg_fail(st, TG_ERR_NOMEM, "no memory to check the config");
    int nused = 0;
    tg_code rc = TG_OK;
    if (uses & TG_USE_TWIN)
        rc = tg_cfg_check_twin(cfg, origin, used, MAX_USED, &nused, st);
    if (rc == TG_OK && (uses & (TG_USE_RUN | TG_USE_VET))) {
        int n = 0;
        rc = tg_cfg_check_run(cfg, origin, used + nused, MAX_USED - nused, &n, st);
        nused += n;
    }
    if (rc == TG_OK && (uses & TG_USE_VET))
        rc = vet_rules(cfg, origin, st);
    if (rc == TG_OK && !(uses & TG_USE_QUIET))
        warn_unused(cfg, uses, origin, used, nused);
    free(used);
    return rc;
}

tg_code tg_config_check(const tg_config *cfg, const char *origin, tg_status *st)
{
    return tg_config_validate(cfg, TG_USE_RUN, origin, st);
}
