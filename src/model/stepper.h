/* stepper.h - third-order strong-stability-preserving Runge-Kutta step.
 *
 * Shu & Osher 1988 (J. Comput. Phys. 77, 439-471, eq. 2.18):
 *   q1      = q^n + dt L(q^n)
 *   q2      = 3/4 q^n + 1/4 (q1 + dt L(q1))
 *   q^{n+1} = 1/3 q^n + 2/3 (q2 + dt L(q2))
 * which is q^{n+1} = q^n + dt (L(q^n)/6 + L(q1)/6 + 2 L(q2)/3). Each term's
 * energy and enstrophy rates are combined with the same weights, so the
 * budget of a step is the rate each term contributed over that step.
 * After the step, closures with a per-step hook advance their own state
 * (e.g. the AR(1) noise, held fixed across the stages of a step).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_STEPPER_H
#define TG_STEPPER_H

#include "model.h"

/* Advances m by one step; *rates (may be NULL) gets the step-averaged rates. */
tg_code tg_step(tg_model *m, tg_term_rates *rates, tg_status *st);

#endif
