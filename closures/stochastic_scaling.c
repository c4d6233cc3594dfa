/* stochastic_scaling.c - closure "stochastic_scaling": multiplicative noise on another component.
 *
 * Scales the tendency T of another closure component (the `target`, listed
 * earlier in [closure] use) by a random factor: this component's tendency is
 *
 *   xi T_k   in every layer k,   so that target + this = (1 + xi) T,
 *
 * the stochastically perturbed tendency of Buizza, Miller & Palmer 1999
 * (Q. J. R. Meteorol. Soc. 125, 2887-2908, section 2: the perturbed
 * parametrised tendency is (1 + r) times the unperturbed one, with r
 * uniform in [-0.5, 0.5], constant over boxes of 10 degrees and a few time
 * steps; details from memory). As in that scheme one random pattern
 * multiplies the tendency at every level (here every layer); unlike it, r
 * here is a smooth Gaussian AR(1) field rather than boxes. xi is an AR(1) field in time with a Gaussian spatial
 * correlation of length ell (closures/ar1_noise.h, common practice), of
 * standard deviation `noise_amplitude` (dimensionless), drawn once per
 * completed step and held over the Runge-Kutta stages. Its domain mean is
 * not removed (a multiplicative pattern with zero expectation needs no
 * constraint). It is clipped to [-1, 1] before use, so the perturbed
 * tendency (1 + xi) T keeps the sign of T and a dissipative target stays
 * dissipative; clipping lowers the standard deviation of the factor
 * slightly below noise_amplitude when that is not small (by 0.08% at
 * 0.3 and 8% at 0.6, computed for a Gaussian).
 *
 * The random numbers are Philox draws keyed by [initial] seed XOR a constant
 * of this scheme (a stream of its own, independent of stochastic_additive)
 * and counted by (member, step, node); the field is saved and loaded with
 * checkpoints. The target is found by name among the components evaluated
 * before this one; the first evaluation fails with a clear message when it
 * is not there.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "closure.h"
#include "ar1_noise.h"

/* XORed into [initial] seed: this scheme's own random stream. */
#define SCALING_KEY 0x7363616c696e6721ULL /* "scaling!" */

enum { P_TARGET, P_SIGMA, P_TAU, P_ELL, P_N };

static const tg_closure_param params[P_N] = {
    [P_TARGET] = {"target", "", TG_PARAM_TEXT, 0.0, 0.0, 0.0, "",
                  "name of the component whose tendency is scaled (listed earlier in use)"},
    [P_SIGMA] = {"noise_amplitude", "", TG_PARAM_REAL, 0.3, 0.0, 10.0, NULL,
                 "standard deviation of the random factor xi (clipped to [-1, 1])"},
    [P_TAU] = {"decorrelation_time_days", "days", TG_PARAM_REAL, 1.0, 0.0, 36500.0, NULL,
               "e-folding time tau of its autocorrelation (0: new every step)"},
    [P_ELL] = {"correlation_length_km", "km", TG_PARAM_REAL, 100.0, 0.0, 1e5, NULL,
               "length ell of its Gaussian spatial correlation exp(-r^2/(2 ell^2))"},
};

#define SCALING_NAME "stochastic_scaling"

typedef struct {
    tg_ar1 *noise;
    char target[128];
    int nl, ns, a0, a1;
    long npl;
} scaling_state;

static void scaling_destroy(void *state)
{
    scaling_state *a = state;
    if (!a)
        return;
    tg_ar1_destroy(a->noise);
    free(a);
}

static tg_code scaling_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    const char *target = s->texts[P_TARGET];
    if (!target || target[0] == '\0')
        return tg_fail(st, TG_ERR_CONFIG, "[%s] target is required", SCALING_NAME);
    if (strcmp(target, SCALING_NAME) == 0)
        return tg_fail(st, TG_ERR_CONFIG, "[%s] target cannot be %s itself", SCALING_NAME,
                       SCALING_NAME);
    scaling_state *a = calloc(1, sizeof *a);
    if (!a)
        return tg_fail(st, TG_ERR_NOMEM, "no memory");
    if (snprintf(a->target, sizeof a->target, "%s", target) >= (int)sizeof a->target) {
        free(a);
        return tg_fail(st, TG_ERR_CONFIG, "[%s] target: the name '%.40s...' is too long",
                       SCALING_NAME, target);
    }
    a->nl = s->nlayers;
    a->ns = s->ns;
    a->a0 = s->a0;
    a->a1 = s->a1;
    a->npl = (long)s->ns * s->ns;
    tg_code rc = tg_ar1_create(s, 1, s->params[P_SIGMA], s->params[P_TAU] * 86400.0,
                               s->params[P_ELL] * 1e3, 0, s->seed ^ SCALING_KEY, &a->noise, st);
    if (rc != TG_OK) {
        scaling_destroy(a);
        return rc;
    }
    *state = a;
    return TG_OK;
}

static tg_code scaling_tendency(void *state, const tg_closure_view *view, double *tend,
                                tg_status *st)
{
    scaling_state *a = state;
    const double *T = NULL;
    for (int c = 0; c < view->ndone; c++)
        if (strcmp(view->done_names[c], a->target) == 0)
            T = view->done_tend[c];
    if (!T) {
        char before[256] = "";
        for (int c = 0; c < view->ndone; c++) {
            size_t l = strlen(before);
            snprintf(before + l, sizeof before - l, "%s%s", c ? ", " : "", view->done_names[c]);
        }
        return tg_fail(st, TG_ERR_CONFIG,
                       "target '%s' is not listed before %s in [closure] use (listed before it: "
                       "%s)",
                       a->target, SCALING_NAME, view->ndone ? before : "nothing");
    }
    tg_ar1_sync(a->noise, view->tools, view->step, SCALING_NAME);
    const double *xi = tg_ar1_field(a->noise, 0);
    const int ns = a->ns, a0 = a->a0, a1 = a->a1;
    for (int k = 0; k < a->nl; k++) {
        double *t = tend + k * a->npl;
        const double *Tk = T + k * a->npl;
#pragma omp parallel for schedule(static)
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const long p = (long)j * ns + i;
                const double x = xi[p] > 1.0 ? 1.0 : (xi[p] < -1.0 ? -1.0 : xi[p]);
                t[p] = x * Tk[p];
            }
    }
    return TG_OK;
}

static tg_code scaling_advance(void *state, const tg_closure_view *view, tg_status *st)
{
    (void)st;
    scaling_state *a = state;
    tg_ar1_advance(a->noise, view->tools, view->step, view->dt);
    return TG_OK;
}

static size_t scaling_state_size(void *state)
{
    return tg_ar1_state_size(((scaling_state *)state)->noise);
}

static void scaling_state_save(void *state, double *buf)
{
    tg_ar1_state_save(((scaling_state *)state)->noise, buf);
}

static tg_code scaling_state_load(void *state, const double *buf, size_t n, tg_status *st)
{
    return tg_ar1_state_load(((scaling_state *)state)->noise, buf, n, st);
}

const tg_closure_ops tg_scheme_stochastic_scaling = {
    .abi = TG_CLOSURE_ABI,
    .name = SCALING_NAME,
    .summary = "multiplies another component's tendency by (1 + xi), xi a clipped AR(1) field",
    .source = "Buizza, Miller & Palmer 1999, Q. J. R. Meteorol. Soc. 125, 2887-2908 "
              "(stochastically perturbed tendencies); AR(1) in time: common practice",
    .dissipative = 0,
    .nparams = P_N,
    .params = params,
    .create = scaling_create,
    .tendency = scaling_tendency,
    .advance = scaling_advance,
    .state_size = scaling_state_size,
    .state_save = scaling_state_save,
    .state_load = scaling_state_load,
    .destroy = scaling_destroy,
};
