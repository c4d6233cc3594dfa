/* vet.h - `twingyre vet`: a battery of checks on the configured closure
 * (built-in scheme, coefficients file or plugin) at the configured (coarse)
 * resolution, with figures, limits and a verdict per check.
 *
 *   1. Linear: Arnoldi iteration (vet_linear.c) on finite-difference
 *      Jacobian-vector products of the closure's PV tendency around rest
 *      and around a reference state (a spin-up, or a file); the Ritz values
 *      give the largest growth rate and the largest step for which the
 *      third-order Runge-Kutta scheme stays stable with the closure alone.
 *   2. Conservation: domain integral of the tendency, its energy and
 *      enstrophy input on a random and on the eddying reference state; a
 *      closure declared dissipative that adds energy fails.
 *   3. Online: short runs from the reference state for every (step factor,
 *      coefficient multiplier) pair plus runs without the closure as the
 *      yardstick, watched for NaN/Inf, CFL above max_cfl, energy growth far
 *      beyond the yardstick and grid-scale noise; the stability margin is
 *      the largest multiplier that stays stable.
 *   4. Resolution: the online check at step factor 1 on the next finer grid
 *      from the reference state interpolated there.
 * The settings are the [vet] keys (config.h).
 *
 * Ownership: tg_vet_run allocates the report; tg_vet_report_free frees it.
 * Everything the battery needs is allocated per phase (a model per run);
 * the stepping itself allocates nothing.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_VET_H
#define TG_VET_H

#include <signal.h>
#include <stdint.h>

#include "config.h"
#include "model.h"
#include "status.h"
#include "strbuf.h"

#define TG_VET_MAX_KRYLOV 200
#define TG_VET_MAX_RUNS 64
#define TG_VET_MAX_CHECKS 24

/* ---- the linear check (vet_linear.c) ---- */

typedef struct {
    int n;                                  /* Ritz values found (Krylov dimension used) */
    double re[TG_VET_MAX_KRYLOV];           /* sorted by magnitude, largest first, s-1 */
    double im[TG_VET_MAX_KRYLOV];
    double largest_magnitude;               /* s-1 */
    double growth_rate;                     /* largest real part, s-1 */
    double step_limit;                      /* s; INFINITY when the tendency is zero */
    double epsilon;                         /* finite-difference perturbation size, s-1 */
} tg_vet_linear;

/* Largest t with |R(t e^{i theta})| <= 1 for all of (0, t], where
 * R(z) = 1 + z + z^2/2 + z^3/6 is the stability function of three-stage
 * third-order Runge-Kutta (Durran 2010, Numerical Methods for Fluid
 * Dynamics, ch. 2), found by a scan and bisection. theta is the direction
 * in the complex plane, pi/2 <= |theta| <= pi (the left half-plane); on the
 * negative real axis (theta = pi) this is about 2.5127, on the imaginary
 * axis sqrt(3). */
double tg_rk3_ray_limit(double theta);

/* The largest step for which RK3 is stable for every value in lin (each
 * eigenvalue lambda: tg_rk3_ray_limit(arg lambda) / |lambda|); values in the
 * right half-plane are left to the growth rate. INFINITY when none bounds it. */
double tg_vet_step_limit(const double *re, const double *im, int n);

/* Arnoldi iteration with kdim steps on v -> J v, J the Jacobian of the
 * summed closure tendency T(q) of model m (every component, at m's scale)
 * with respect to PV on the active nodes, around q0 (stored layout,
 * nl*npl), J v ~ [T(q0 + e v) - T(q0 - e v)] / (2 e). The start vector is
 * Philox normal noise from `seed` (reproducible). Leaves m's state at q0
 * (derived). Fills *out, including the step limit. */
tg_code tg_vet_linearize(tg_model *m, const double *q0, int kdim, uint64_t seed,
                         tg_vet_linear *out, tg_status *st);

/* ---- the battery ---- */

typedef struct {
    int finer;                 /* 0: configured grid, 1: next finer grid */
    int points;
    double step_factor;        /* step = factor x [time] step_s (finer grid: x 1/2) */
    double step_s;
    double multiplier;         /* closure tendency x multiplier; 0: the run without the closure */
    int stable;                /* 1: went through the window with no fault */
    char reason[256];          /* why not ("" when stable) */
    double fail_day;           /* day of the fault (NAN when stable) */
    double energy_ratio;       /* largest E / E(without closure) over the samples (NAN: none) */
    double noise_fraction;     /* energy fraction in K > pi/(2 dx) at the end (NAN: none) */
    double max_cfl;            /* largest advective CFL number seen */
    double energy_start, energy_end; /* m2 s-2 */
} tg_vet_run_result;

typedef enum { TG_VET_FAIL = 0, TG_VET_PASS = 1, TG_VET_INFO = 2 } tg_vet_verdict;

typedef struct {
    char name[48];             /* key in vet.json, e.g. "linear_growth_reference" */
    char title[96];            /* words for the table */
    double figure;             /* NAN: not measured */
    char unit[16];
    char relation[4];          /* "<=", ">=" or "" (information) */
    double limit;              /* NAN: no limit */
    tg_vet_verdict verdict;
    char reason[320];
} tg_vet_check;

typedef struct {
    /* what was vetted */
    char closure[TG_RAW_TEXT];  /* [closure] use as written */
    int dissipative;            /* every component declared dissipative */
    int points, nlayers;
    double step_s, window_days;
    char reference[TG_PATH_LEN + 64]; /* how the reference state was made */
    double reference_energy;    /* m2 s-2 */

    tg_vet_linear linear[2];    /* 0: around rest, 1: around the reference state */

    /* conservation, [0] random state, [1] reference state */
    double integral_ratio[2][TG_MAX_LAYERS]; /* |integral T| / integral |T| per layer */
    double energy_rate[2];                   /* m2 s-3 */
    double energy_rate_abs[2];               /* the same sum with |.| of every node, m2 s-3 */
    double enstrophy_rate[2][TG_MAX_LAYERS]; /* s-3 */

    int nfactors, nmultipliers;              /* the [vet] lists with 1 added, ascending */
    double factors[TG_MAX_LAYERS + 1], multipliers[TG_MAX_LAYERS + 1];
    int nruns;
    tg_vet_run_result runs[TG_VET_MAX_RUNS];
    double margin[TG_MAX_LAYERS + 1];        /* per step factor (configured grid) */
    double margin_finer;                     /* NAN when the finer grid was not run */
    int finer_points;

    int nchecks;
    tg_vet_check checks[TG_VET_MAX_CHECKS];
    int passed;                               /* no check failed */
    double seconds;                           /* wall time of the battery */
} tg_vet_report;

typedef struct {
    const char *phase;         /* "spin-up", "linear", "online step x1 coefficient x2", ... */
    int index, count;          /* this phase's number, 1 .. count */
    long step, nsteps;         /* steps of this phase (0, 0 for phases without steps) */
    double day, last_day;
    const char *fault;         /* NULL, or why the run stopped (then step = nsteps) */
} tg_vet_progress;

typedef struct {
    const char *origin;                     /* config file, for messages (may be NULL) */
    const char *command_line;               /* stored in vet.json (may be NULL) */
    volatile sig_atomic_t *stop_requested;  /* polled every step; may be NULL */
    int overwrite;                          /* replace an existing DIR/vet.json */
    void (*progress)(const tg_vet_progress *p, void *user); /* may be NULL */
    void *progress_user;
} tg_vet_options;

/* Checks the config for vet (tg_config_validate for a run and vet, the
 * output directory) without writing anything. */
tg_code tg_vet_validate(const tg_config *cfg, const tg_vet_options *opt, tg_status *st);

/* Runs the battery and writes cfg->out_directory/vet.json. *rep receives
 * the report (the caller frees it with tg_vet_report_free) also when a
 * check failed: failed checks are a verdict, not an error (TG_OK). */
tg_code tg_vet_run(const tg_config *cfg, const tg_vet_options *opt, tg_vet_report **rep,
                   tg_status *st);
void tg_vet_report_free(tg_vet_report *r);

/* ---- output (vet_json.c) ---- */

/* The verdict table (one line per check) and the online runs as text. */
void tg_vet_table(const tg_vet_report *r, tg_strbuf *b);
/* vet.json: settings, every figure, every run and every check. */
void tg_vet_json(const tg_vet_report *r, const tg_config *cfg, const char *command_line,
                 tg_strbuf *b);

#endif
