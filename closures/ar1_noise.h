/* ar1_noise.h - spatially correlated AR(1) random fields for the stochastic closures.
 *
 * Not a scheme: the shared engine of closures/stochastic_additive.c and
 * closures/stochastic_scaling.c. It holds `nfields` two-dimensional fields
 * xi_f (stored ns x ns layout, active nodes used, ring zero) that evolve once
 * per completed model step as a first-order autoregressive process
 *
 *   xi^{n+1} = phi xi^n + sqrt(1 - phi^2) sigma eta^{n+1},  phi = exp(-dt/tau),
 *
 * whose stationary variance is sigma^2 and lag-one autocorrelation phi
 * (AR(1) as a discrete Ornstein-Uhlenbeck process: common practice; its
 * moments as in Box, Jenkins & Reinsel, Time Series Analysis, chapter 3,
 * section number from memory).
 * eta^n is white Gaussian noise smoothed by the geometry's Gaussian filter
 * (tools->filter_gaussian, transfer exp(-K^2 w^2/24)) with width
 * w = sqrt(6) ell, so that its correlation function is exp(-r^2 / (2 ell^2))
 * in an unbounded domain, optionally with its mean over the active nodes
 * removed, and multiplied by a constant that gives it unit variance.
 *
 * Normalisation (exact, computed once at set-up, no sampling): with K the
 * (symmetric) filter matrix and M the mean removal, the variance of
 * (M K w) at node p for unit white w is |K (e_p - m)|^2 with m = 1/N on
 * every active node (m = 0 without mean removal). It is evaluated at the
 * central active node. In periodic geometry every node has that variance;
 * in a basin the sine-series filter makes eta vanish on the walls, so the
 * variance is exact in the interior and falls to zero within about ell of
 * the walls.
 *
 * The white noise at the active node (a0 + 2h + e, a0 + r) of field f at
 * step n (e = 0, 1) is drawn by Philox (src/numerics/rng.h) as
 * tg_normal2(key, member, n, (f * nrows + r) * rowpairs + h)[e], rowpairs =
 * ceil(nrows / 2) (with an odd row length the last draw of a row uses one
 * of its two numbers): a pure function of
 * (seed, scheme, member, step, field, node), so the fields are bitwise the
 * same for any thread count and after a restart that restores the state.
 * xi^0 is drawn from the stationary distribution (sigma eta^0, step 0).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_AR1_NOISE_H
#define TG_AR1_NOISE_H

#include <stddef.h>
#include <stdint.h>

#include "closure.h"

typedef struct tg_ar1 tg_ar1;

/* Makes the fields and draws xi^0. key: the run's seed XOR a constant of
 * the calling scheme; tau_s >= 0 (0: white in time), ell_m >= 0 (0: white
 * in space). Owns everything it allocates; free with tg_ar1_destroy. */
tg_code tg_ar1_create(const tg_closure_setup *s, int nfields, double sigma, double tau_s,
                      double ell_m, int remove_mean, uint64_t key, tg_ar1 **out, tg_status *st);
void tg_ar1_destroy(tg_ar1 *a);

/* The AR(1) update to step `step` (the number of completed steps), keyed by
 * that step, over the step dt just taken (phi = exp(-dt/tau) of that step,
 * so varying steps keep the stationary variance sigma^2); called from a
 * scheme's advance() with the view's dt. Allocates nothing. */
void tg_ar1_advance(tg_ar1 *a, const tg_closure_tools *t, long step, double dt);

/* Makes sure the fields belong to step `step`. When they do not (a resumed
 * run whose checkpoint did not carry them), draws them afresh from the
 * stationary distribution with a key of their own for that step, logs a
 * warning and returns 1; otherwise returns 0. */
int tg_ar1_sync(tg_ar1 *a, const tg_closure_tools *t, long step, const char *who);

/* Field f (ns x ns, active nodes). */
const double *tg_ar1_field(const tg_ar1 *a, int f);

/* The step the fields belong to, and phi of the latest step. */
long tg_ar1_step(const tg_ar1 *a);
double tg_ar1_phi(const tg_ar1 *a);

/* Checkpoint: header (4 values) and the active nodes of every field. */
size_t tg_ar1_state_size(const tg_ar1 *a);
void tg_ar1_state_save(const tg_ar1 *a, double *buf);
tg_code tg_ar1_state_load(tg_ar1 *a, const double *buf, size_t n, tg_status *st);

#endif
