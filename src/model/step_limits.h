/* step_limits.h - the largest step each explicit term allows, and the
 * adaptive choice of the next step from them.
 *
 * SSP-RK3 (stepper.h) is stable for an eigenvalue lambda of the linearised
 * tendency while lambda dt lies in its stability region, which holds the
 * imaginary axis up to sqrt(3) and the negative real axis up to 2.51
 * (Shu & Osher 1988, J. Comput. Phys. 77, 439-471; the region is drawn in
 * Durran 2010, Numerical Methods for Fluid Dynamics, section 2.4, from
 * memory). Advection (Arakawa Jacobian, centred: |lambda| <= (|u|+|v|)/dx,
 * common practice) is imaginary; viscosity, drag and the dissipative
 * closures are real and their rates add. The triangle between
 * (0, i sqrt(3)) and (-2.5, 0) lies in the region (checked numerically:
 * |R| <= 0.9993 on its long side), so a step with advective CFL number c
 * is stable when the damping rates satisfy
 *   dt sum_i (1 / bound_i) <= 1 - c / sqrt(3),
 * bound_i being each damping term's own stability bound. The bounds:
 *   harmonic viscosity A2        2.5 dx^2 / (8 A2)        (closure.h)
 *   biharmonic viscosity A4      2.5 dx^4 / (64 A4)       (closure.h)
 *   bottom drag r                2.5 / r   (the drag rate of q is r K^2/(K^2+F) <= r)
 *   each closure                 its stable_step answer (closure.h), none without one.
 * The advective limit at a speed s = |u|+|v| is target_cfl dx / s.
 * Linear Rossby waves are not advection. In a periodic domain their
 * frequency omega = Q_y k / (K^2 + F) (Pedlosky 1987, Geophysical Fluid
 * Dynamics, section 3.17) is at most |Q_y| / K_min, K_min = 2 pi/L the
 * smallest wavenumber that fits (the spectrum bin width dk of the geometry),
 * Q_y the largest planetary or background PV gradient. In a square basin
 * of side L the free linear modes are the basin modes of Longuet-Higgins
 * (1964, Proc. R. Soc. A 279, 446-473; Pedlosky 1987, section 3.21),
 * psi = sin(m pi x/L) sin(n pi y/L) exp(i(beta x/(2 omega) - omega t)) with
 * omega = beta / (2 sqrt((m pi/L)^2 + (n pi/L)^2 + F)), so the largest is
 * the gravest barotropic mode's, omega_max = beta / (2 sqrt(2) pi/L) (a
 * basin has no background flow, Q_y = beta): 2 sqrt(2) times below the
 * periodic bound with K_min = pi/L. The same target bounds the phase such
 * a wave turns in one step:
 * dt <= target_cfl / omega_max (the wave limit; with target 0.5 the RK3
 * phase error is 0.2 % and the damping 0.24 % per step).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_STEP_LIMITS_H
#define TG_STEP_LIMITS_H

#include "config.h"
#include "model.h"

typedef struct {
    double harmonic, biharmonic, drag; /* the core's own bounds, s (INFINITY: term off) */
    double closure;                    /* the smallest closure answer, s (INFINITY: none) */
    int closure_which;                 /* its component, -1 for none */
    double damping_rate;               /* sum of 1/bound over the core terms and closures, s-1 */
    double wave_frequency;             /* omega_max of the linear Rossby waves, s-1 */
} tg_step_limits;

/* The core's bounds of m (settings, grid, PV gradients); no closures. */
void tg_step_limits_core(const tg_model *m, tg_step_limits *L);

/* Adds the closures' answers at m's current state (stage 0 of the next step).
 * Allocates nothing. */
void tg_step_limits_closures(tg_model *m, tg_step_limits *L);

/* The largest step the damping terms together allow beside an advective
 * CFL number `cfl`: (1 - cfl/sqrt(3)) / damping_rate. */
double tg_step_limits_damping(const tg_step_limits *L, double cfl);

/* The advective limit target_cfl / rate, where rate = max (|u|+|v|)/dx
 * (s-1); INFINITY at rest. */
double tg_step_limits_advective(double target_cfl, double rate);

/* The wave limit target_cfl / omega_max (INFINITY without a PV gradient). */
double tg_step_limits_wave(const tg_step_limits *L, double target_cfl);

/* The adaptive choice (README, "Adaptive steps"): the smallest of the
 * advective limit at `rate`, the wave limit and the damping limit, grown by at most
 * cfg->step_growth from the previous choice `prev` (shrinking is not
 * bounded: the limits are stability limits), then kept within
 * [smallest_step_s, largest_step_s]. *binding (may be NULL) names what set
 * it: "advective", "wave", "damping", "growth", "largest" or "smallest". */
double tg_step_limits_choose(const tg_config *cfg, const tg_step_limits *L, double rate,
                             double prev, const char **binding);

#endif
