/* stochastic_additive.c - closure "stochastic_additive": additive random PV forcing.
 *
 * The PV tendency of layer k is a random field xi_k (s-2) that is red in
 * time and smooth in space (closures/ar1_noise.h):
 *
 *   xi_k^{n+1} = phi xi_k^n + sqrt(1 - phi^2) sigma eta_k^{n+1},   phi = exp(-dt/tau),
 *
 * eta_k white Gaussian noise smoothed by a Gaussian filter of correlation
 * length ell, with its domain mean removed and normalised to unit variance.
 * Stochastic tendencies as a representation of unresolved processes:
 * Buizza, Miller & Palmer 1999 (Q. J. R. Meteorol. Soc. 125, 2887-2908);
 * the AR(1) time correlation is common practice. xi is drawn once per
 * completed step (advance) and held fixed over the Runge-Kutta stages, so
 * the forcing is a piecewise-constant process in time.
 *
 * The domain mean of eta is removed on every draw, so the forcing adds no
 * net circulation (the integral of the PV tendency over the domain is zero,
 * in the periodic domain and in the basin), and in the basin it does not
 * feed the mean wall circulation. sigma is the standard deviation of xi at
 * nodes farther than about ell from any wall (everywhere when periodic);
 * the sine-series filter of the basin tapers it to zero at the walls.
 *
 * The random numbers are Philox draws keyed by [initial] seed XOR a constant
 * of this scheme and counted by (member, step, layer and node), so runs are
 * bitwise identical for any thread count, and a restart that restores the
 * saved field (state_save/state_load) continues the uninterrupted run
 * exactly. Each layer has its own field; with top_layer_only only layer 1
 * is forced.
 *
 * Defaults (our choice, not from a paper): sigma = 1e-13 s-2, tau = 1 day,
 * ell = 100 km. In configs/gyre-129.ini they inject energy at a rate of a
 * few per cent of the wind's input (sigma = 1e-12 injected six times the
 * wind's input there); the rate grows like sigma^2.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdlib.h>

#include "closure.h"
#include "ar1_noise.h"

/* XORed into [initial] seed: this scheme's own random stream. */
#define ADDITIVE_KEY 0x6164646974697665ULL /* "additive" */

enum { P_SIGMA, P_TAU, P_ELL, P_TOP, P_N };

static const tg_closure_param params[P_N] = {
    [P_SIGMA] = {"noise_amplitude_per_s2", "s-2", TG_PARAM_REAL, 1e-13, 0.0, 1e-6, NULL,
                 "standard deviation sigma of the random PV tendency"},
    [P_TAU] = {"decorrelation_time_days", "days", TG_PARAM_REAL, 1.0, 0.0, 36500.0, NULL,
               "e-folding time tau of its autocorrelation (0: new every step)"},
    [P_ELL] = {"correlation_length_km", "km", TG_PARAM_REAL, 100.0, 0.0, 1e5, NULL,
               "length ell of its Gaussian spatial correlation exp(-r^2/(2 ell^2))"},
    [P_TOP] = {"top_layer_only", "", TG_PARAM_BOOL, 0.0, 0.0, 1.0, NULL,
               "force the top layer only (otherwise every layer, each its own field)"},
};

typedef struct {
    tg_ar1 *noise;
    int nl, nf;
    int ns, a0, a1;
    long npl;
} additive_state;

static void additive_destroy(void *state)
{
    additive_state *a = state;
    if (!a)
        return;
    tg_ar1_destroy(a->noise);
    free(a);
}

static tg_code additive_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    additive_state *a = calloc(1, sizeof *a);
    if (!a)
        return tg_fail(st, TG_ERR_NOMEM, "no memory");
    a->nl = s->nlayers;
    a->nf = s->params[P_TOP] != 0.0 ? 1 : s->nlayers;
    a->ns = s->ns;
    a->a0 = s->a0;
    a->a1 = s->a1;
    a->npl = (long)s->ns * s->ns;
    tg_code rc = tg_ar1_create(s, a->nf, s->params[P_SIGMA], s->params[P_TAU] * 86400.0,
                               s->params[P_ELL] * 1e3, 1, s->seed ^ ADDITIVE_KEY, &a->noise, st);
    if (rc != TG_OK) {
        additive_destroy(a);
        return rc;
    }
    *state = a;
    return TG_OK;
}

static tg_code additive_tendency(void *state, const tg_closure_view *view, double *tend,
                                 tg_status *st)
{
    (void)st;
    additive_state *a = state;
    tg_ar1_sync(a->noise, view->tools, view->step, "stochastic_additive");
    const int ns = a->ns, a0 = a->a0, a1 = a->a1;
    for (int k = 0; k < a->nl; k++) {
        double *t = tend + k * a->npl;
        const double *xi = k < a->nf ? tg_ar1_field(a->noise, k) : NULL;
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                t[p] = xi ? xi[p] : 0.0;
            }
    }
    return TG_OK;
}

static tg_code additive_advance(void *state, const tg_closure_view *view, tg_status *st)
{
    (void)st;
    additive_state *a = state;
    tg_ar1_advance(a->noise, view->tools, view->step, view->dt);
    return TG_OK;
}

static size_t additive_state_size(void *state)
{
    return tg_ar1_state_size(((additive_state *)state)->noise);
}

static void additive_state_save(void *state, double *buf)
{
    tg_ar1_state_save(((additive_state *)state)->noise, buf);
}

static tg_code additive_state_load(void *state, const double *buf, size_t n, tg_status *st)
{
    return tg_ar1_state_load(((additive_state *)state)->noise, buf, n, st);
}

const tg_closure_ops tg_scheme_stochastic_additive = {
    .abi = TG_CLOSURE_ABI,
    .name = "stochastic_additive",
    .summary = "additive random PV tendency, AR(1) in time, Gaussian-correlated in space",
    .source = "Buizza, Miller & Palmer 1999, Q. J. R. Meteorol. Soc. 125, 2887-2908 (stochastic "
              "tendencies); AR(1) in time: common practice",
    .dissipative = 0,
    .nparams = P_N,
    .params = params,
    .create = additive_create,
    .tendency = additive_tendency,
    .advance = additive_advance,
    .state_size = additive_state_size,
    .state_save = additive_state_save,
    .state_load = additive_state_load,
    .destroy = additive_destroy,
};
