/* network.c - closure "network": a trained convolutional network, saved as
 * TorchScript, evaluated inside the coarse model through libtorch.
 *
 * The network maps the resolved state to the sub-grid PV forcing, as in the
 * data-driven closures of Maulik, San, Rasheed & Vedula 2019 (J. Fluid Mech.
 * 858, 122-144) and the convolutional closures of Guan et al. 2022 (J.
 * Comput. Phys. 458, 111090; both from memory). Its input is one channel per (field, layer), fields in the order
 * of `inputs` (u, v, q, psi, zeta), layers inside each field: channel
 * f * nlayers + k. Each channel is the whole stored ns x ns array of the
 * view: the active nodes and the one-node ring the framework fills (in a
 * basin the wall values: psi's wall constant, the wall vorticity of the
 * wall condition, q and the velocities there; in a periodic domain the
 * copy of the opposite edge). Beyond that ring the network pads as it was
 * trained to (scripts/train-network: zero padding in a basin, wrap-around
 * when periodic). Its output is either
 *   output = tendency: one channel per layer, the PV tendency S_k, s-2; or
 *   output = flux:     2 nlayers channels, the sub-grid PV fluxes Fx_k then
 *                      Fy_k, m s-2, at the nodes; the tendency is the flux
 *                      form -div F on cell faces,
 *     S_k(i,j) = -[Fx(i+1/2,j) - Fx(i-1/2,j)]/dx - [Fy(i,j+1/2) - Fy(i,j-1/2)]/dx
 *     Fx(i+1/2,j) = w(i+1/2,j) (Fx(i,j) + Fx(i+1,j)) / 2,
 *                      with w = 0 on faces that touch a wall node (no flux
 *                      through walls) and 1 elsewhere, so the domain sum of
 *                      S_k telescopes to zero (finite-volume flux form,
 *                      LeVeque 2002, Finite Volume Methods for Hyperbolic
 *                      Problems, section 4.1). w comes from a field of ones
 *                      whose ring the tools fill with TG_RING_ZERO, so this
 *                      file never asks which geometry it runs on.
 * The output's spatial size is ns x ns (the active block is used) or the
 * active block itself. The normalization travels inside the file
 * (network_bridge.h); `multiplier` scales the tendency, `remove_mean`
 * subtracts its domain mean per layer (no net circulation is added).
 *
 * every_stage = false (the default) evaluates the network at the first
 * Runge-Kutta stage of each step and reuses that tendency at the other two:
 * the closure is then held fixed over the step, which makes its
 * contribution first-order accurate in time (an error O(dt) in the closure
 * term, against O(dt^3) for the resolved terms) at a third of the cost.
 * At every stage the demo's network made a 65-point run 4.1-5.3 times slower
 * than without it, against the target of at most 5 (README, "Speed").
 *
 * The libtorch side is the one C++ file network_torch.cc behind
 * network_bridge.h, built as the module twingyre_torch.so and loaded here
 * with dlopen when a run uses the closure; a build without libtorch keeps
 * the scheme in the registry, says so in its summary, and refuses a config
 * that uses it.
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#include <dlfcn.h>
#include <errno.h>
#include <float.h>
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "closure.h"
#include "network_bridge.h"

enum { P_FILE, P_INPUTS, P_OUTPUT, P_MULT, P_MEAN, P_STAGE, P_DET, P_N };

static const tg_closure_param params[P_N] = {
    [P_FILE] = {"file", "", TG_PARAM_TEXT, 0.0, 0.0, 0.0, "",
                "TorchScript file of the network (torch.jit.save) with its normalization, "
                "relative to the config's folder"},
    [P_INPUTS] = {"inputs", "", TG_PARAM_TEXT, 0.0, 0.0, 0.0, "recorded",
                  "input fields in channel order, from u, v, q, psi, zeta (e.g. q, zeta); "
                  "recorded = as the file records them"},
    [P_OUTPUT] = {"output", "", TG_PARAM_TEXT, 0.0, 0.0, 0.0, "recorded",
                  "tendency (PV tendency per layer) or flux (Fx, Fy per layer, applied as "
                  "-div F); recorded = as the file records it"},
    [P_MULT] = {"multiplier", "", TG_PARAM_REAL, 1.0, -1e3, 1e3, NULL,
                "multiplies the network's tendency"},
    [P_MEAN] = {"remove_mean", "", TG_PARAM_BOOL, 0.0, 0.0, 1.0, NULL,
                "subtract the domain mean of each layer's tendency"},
    [P_STAGE] = {"every_stage", "", TG_PARAM_BOOL, 0.0, 0.0, 1.0, NULL,
                 "evaluate at every Runge-Kutta stage (false: once per step, first-order "
                 "in time for the closure term)"},
    [P_DET] = {"deterministic", "", TG_PARAM_BOOL, 1.0, 0.0, 1.0, NULL,
               "ask libtorch for deterministic algorithms"},
};

/* The fields a network may read, in the words of the `inputs` key. */
enum { F_U, F_V, F_Q, F_PSI, F_ZETA, F_N };
static const char *const field_names[F_N] = {"u", "v", "q", "psi", "zeta"};

/* The bridge's functions, from the module loaded with dlopen. */
typedef struct {
    tg_net_open_fn *open;
    tg_net_eval_fn *eval;
    tg_net_close_fn *close;
} bridge;

typedef struct {
    bridge b;
    tg_net *net;
    int nl, ns, a0, a1;
    long npl;
    double dx, mult;
    int flux, remove_mean, every_stage, double_precision;
    int nfield, field[F_N];
    char path[4096];
    double *in;      /* nfield * nl * npl */
    double *out;     /* nout * npl */
    double *keep;    /* nl * npl: the tendency of the step's first stage */
    double *ones;    /* npl: ones on the active nodes, ring filled TG_RING_ZERO */
    double *fx, *fy; /* npl: one layer's fluxes with rings */
    double *rows;    /* ns: row sums of the domain mean */
} net_state;

static void net_destroy(void *state)
{
    net_state *n = state;
    if (!n)
        return;
    if (n->net)
        n->b.close(n->net);
    free(n->in);
    free(n->out);
    free(n->keep);
    free(n->ones);
    free(n->fx);
    free(n->fy);
    free(n->rows);
    free(n);
}

/* "q, zeta" -> field indices; 0, or -1 with the reason in why. */
static int parse_inputs(const char *text, int *field, int *nfield, char *why, size_t nwhy)
{
    *nfield = 0;
    const char *p = text;
    for (;;) {
        while (*p == ' ' || *p == '\t')
            p++;
        size_t len = strcspn(p, ", \t");
        int f = -1;
        for (int i = 0; i < F_N; i++)
            if (strlen(field_names[i]) == len && !strncmp(p, field_names[i], len))
                f = i;
        if (f < 0) {
            snprintf(why, nwhy, "'%.*s' is not one of u, v, q, psi, zeta", (int)len, p);
            return -1;
        }
        for (int i = 0; i < *nfield; i++)
            if (field[i] == f) {
                snprintf(why, nwhy, "'%s' is named twice", field_names[f]);
                return -1;
            }
        field[(*nfield)++] = f;
        p += len;
        while (*p == ' ' || *p == '\t')
            p++;
        if (*p == '\0')
            return 0;
        if (*p != ',' || *nfield == F_N) {
            snprintf(why, nwhy, "expected a comma-separated list of u, v, q, psi, zeta");
            return -1;
        }
        p++;
    }
}

/* Writes the field list as "q,zeta". */
static void inputs_text(const net_state *n, char *out, size_t len)
{
    out[0] = '\0';
    for (int i = 0; i < n->nfield; i++)
        snprintf(out + strlen(out), len - strlen(out), "%s%s", i ? "," : "",
                 field_names[n->field[i]]);
}

static tg_code setup_io(net_state *n, const tg_closure_setup *s, const tg_net_info *info,
                        tg_status *st)
{
    /* Inputs: the key, else the file's record; both must agree when both are given. */
    const char *key = s->texts[P_INPUTS];
    const int from_key = strcmp(key, "recorded") != 0;
    const char *text = from_key ? key : info->inputs;
    if (!text[0])
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s records no input fields; set [network] inputs (e.g. inputs = q, zeta)",
                       n->path);
    char why[160];
    if (parse_inputs(text, n->field, &n->nfield, why, sizeof why) != 0)
        return tg_fail(st, TG_ERR_CONFIG, "%s inputs '%s': %s",
                       from_key ? "[network]" : n->path, text, why);
    if (from_key && info->inputs[0]) {
        int ff[F_N], nf;
        char mine[64];
        inputs_text(n, mine, sizeof mine);
        if (parse_inputs(info->inputs, ff, &nf, why, sizeof why) != 0 || nf != n->nfield ||
            memcmp(ff, n->field, sizeof(int) * (size_t)nf) != 0)
            return tg_fail(st, TG_ERR_CONFIG,
                           "[network] inputs = %s, but %s was trained on %s (in that order)",
                           mine, n->path, info->inputs);
    }
    /* Output: the same rule. */
    const char *okey = s->texts[P_OUTPUT];
    const int ofrom_key = strcmp(okey, "recorded") != 0;
    const char *otext = ofrom_key ? okey : info->output;
    if (strcmp(otext, "tendency") != 0 && strcmp(otext, "flux") != 0)
        return tg_fail(st, TG_ERR_CONFIG, "%s output '%s': expected tendency or flux",
                       ofrom_key ? "[network]" : n->path, otext);
    if (ofrom_key && info->output[0] && strcmp(info->output, okey) != 0)
        return tg_fail(st, TG_ERR_CONFIG, "[network] output = %s, but %s records output %s",
                       okey, n->path, info->output);
    n->flux = !strcmp(otext, "flux");

    char mine[64];
    inputs_text(n, mine, sizeof mine);
    const int nin = n->nfield * n->nl, nout = (n->flux ? 2 : 1) * n->nl;
    if (info->nin != nin)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: its normalization has %d input channels, but inputs %s for %d "
                       "layers make %d", n->path, info->nin, mine, n->nl, nin);
    if (info->nout != nout)
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: its output_scale has %d channels, but output %s for %d layers "
                       "needs %d", n->path, info->nout, otext, n->nl, nout);
    return TG_OK;
}

/* One evaluation on the current inputs into n->out; checks the shape. */
static tg_code evaluate(net_state *n, int *off, tg_status *st)
{
    char err[512];
    int oy = 0, ox = 0;
    const int nout = (n->flux ? 2 : 1) * n->nl, nact = n->a1 - n->a0;
    if (n->b.eval(n->net, n->in, n->nfield * n->nl, n->ns, n->ns, n->out,
                    (size_t)nout * n->npl, &oy, &ox, err, sizeof err) != 0)
        return tg_fail(st, TG_ERR_CONFIG, "%s: %s", n->path, err);
    if (oy == n->ns && ox == n->ns)
        *off = 0;
    else if (oy == nact && ox == nact)
        *off = n->a0;
    else
        return tg_fail(st, TG_ERR_CONFIG,
                       "%s: the network returned %d x %d values per channel; expected %d x %d "
                       "(the input's size) or %d x %d (the active nodes)",
                       n->path, oy, ox, n->ns, n->ns, nact, nact);
    return TG_OK;
}

static void pack_inputs(net_state *n, const tg_closure_view *v)
{
    const double *src[F_N] = {v->u, v->v, v->q, v->psi, v->zeta};
    for (int f = 0; f < n->nfield; f++)
        memcpy(n->in + (long)f * n->nl * n->npl, src[n->field[f]],
               sizeof(double) * (size_t)(n->nl * n->npl));
}

/* Loads the bridge module: $TWINGYRE_TORCH_BRIDGE when set, else the build
 * tree's copy, else the installed one. The handle stays open for the
 * process (libtorch is not made to be unloaded). */
static tg_code load_bridge(bridge *b, tg_status *st)
{
#ifdef TG_WITH_TORCH
    const char *env = getenv("TWINGYRE_TORCH_BRIDGE");
    const char *paths[3] = {env, TG_TORCH_BRIDGE_BUILT, TG_TORCH_BRIDGE_INSTALLED};
    char why[512] = "";
    for (int i = 0; i < 3; i++) {
        if (!paths[i] || !paths[i][0])
            continue;
        void *h = dlopen(paths[i], RTLD_NOW | RTLD_LOCAL);
        if (!h) {
            snprintf(why, sizeof why, "%s", dlerror());
            if (i == 0)
                break; /* an explicit choice that fails is not silently replaced */
            continue;
        }
        *(void **)&b->open = dlsym(h, TG_NET_OPEN);
        *(void **)&b->eval = dlsym(h, TG_NET_EVAL);
        *(void **)&b->close = dlsym(h, TG_NET_CLOSE);
        if (b->open && b->eval && b->close)
            return TG_OK;
        snprintf(why, sizeof why, "%s lacks the bridge's functions", paths[i]);
        if (i == 0)
            break;
    }
    return tg_fail(st, TG_ERR_CONFIG,
                   "cannot load the libtorch bridge twingyre_torch.so (%s); reinstall twingyre "
                   "or set TWINGYRE_TORCH_BRIDGE to its path", why);
#else
    (void)b;
    return tg_fail(st, TG_ERR_CONFIG,
                   "this build of twingyre has no libtorch, which network closures need: "
                   "install the Debian packages with `apt-get install "
                   "--no-install-recommends libtorch-dev python3-torch`, then "
                   "./configure (it finds libtorch) && make");
#endif
}

static tg_code net_create(const tg_closure_setup *s, void **state, tg_status *st)
{
    bridge b;
    tg_code lrc = load_bridge(&b, st);
    if (lrc != TG_OK)
        return lrc;
    net_state *n = calloc(1, sizeof *n);
    if (!n)
        return tg_fail(st, TG_ERR_NOMEM, "no memory");
    n->b = b;
    n->nl = s->nlayers;
    n->ns = s->ns;
    n->a0 = s->a0;
    n->a1 = s->a1;
    n->npl = (long)s->ns * s->ns;
    n->dx = s->dx;
    n->mult = s->params[P_MULT];
    n->remove_mean = s->params[P_MEAN] != 0.0;
    n->every_stage = s->params[P_STAGE] != 0.0;
    const char *file = s->texts[P_FILE];
    if (file[0] == '/' || !s->config_dir || !s->config_dir[0])
        snprintf(n->path, sizeof n->path, "%s", file);
    else
        snprintf(n->path, sizeof n->path, "%s/%s", s->config_dir, file);

    /* A missing file gets the system's word, not libtorch's. */
    FILE *fp = fopen(n->path, "rb");
    if (!fp) {
        tg_code rc = tg_fail(st, TG_ERR_CONFIG, "%s: cannot open the network file: %s "
                             "(relative paths are taken from the config file's folder)",
                             n->path, strerror(errno));
        net_destroy(n);
        return rc;
    }
    fclose(fp);

    char err[512];
    tg_net_info info;
    memset(&info, 0, sizeof info);
    n->net = n->b.open(n->path, omp_get_max_threads(), s->params[P_DET] != 0.0, &info, err,
                         sizeof err);
    if (!n->net) {
        tg_code rc = tg_fail(st, TG_ERR_CONFIG,
                             "%s: not a TorchScript network with its normalization: %s", n->path,
                             err);
        net_destroy(n);
        return rc;
    }
    n->double_precision = info.double_precision;
    tg_code rc = setup_io(n, s, &info, st);
    if (rc != TG_OK) {
        net_destroy(n);
        return rc;
    }
    const size_t npl = (size_t)n->npl;
    n->in = calloc((size_t)n->nfield * n->nl * npl, sizeof(double));
    n->out = calloc((size_t)(n->flux ? 2 : 1) * n->nl * npl, sizeof(double));
    n->keep = calloc((size_t)n->nl * npl, sizeof(double));
    n->ones = calloc(npl, sizeof(double));
    n->fx = calloc(npl, sizeof(double));
    n->fy = calloc(npl, sizeof(double));
    n->rows = calloc((size_t)n->ns, sizeof(double));
    if (!n->in || !n->out || !n->keep || !n->ones || !n->fx || !n->fy || !n->rows) {
        net_destroy(n);
        return tg_fail(st, TG_ERR_NOMEM, "no memory for the network's buffers");
    }
    for (int j = n->a0; j < n->a1; j++)
        for (int i = n->a0; i < n->a1; i++)
            n->ones[(long)j * n->ns + i] = 1.0;
    s->tools->fill_ring(s->tools->ctx, n->ones, TG_RING_ZERO);

    /* One trial evaluation on zeros: a network that does not take this many
     * channels, or returns the wrong shape, is refused before the run. */
    int off;
    if ((rc = evaluate(n, &off, st)) != TG_OK) {
        char msg[sizeof st->msg];
        char mine[64];
        inputs_text(n, mine, sizeof mine);
        snprintf(msg, sizeof msg, "%.700s (the input has %d channels, fields %s for %d layers, "
                 "each %d x %d)", st->msg, n->nfield * n->nl, mine, n->nl, n->ns, n->ns);
        net_destroy(n);
        return tg_fail(st, TG_ERR_CONFIG, "%s", msg);
    }
    tg_log(TG_LOG_INFO, "network: %s, inputs %s, output %s, %s, %d thread(s)%s", n->path,
           info.inputs[0] ? info.inputs : s->texts[P_INPUTS], n->flux ? "flux" : "tendency",
           info.double_precision ? "float64" : "float32", omp_get_max_threads(),
           n->every_stage ? "" : ", once per step");
    *state = n;
    return TG_OK;
}

/* tend = -div F for one layer from the node fluxes in fx, fy (rings filled). */
static void flux_divergence(const net_state *n, double *tend)
{
    const int ns = n->ns;
    const double *w = n->ones, *fx = n->fx, *fy = n->fy;
    const double h = 0.5 / n->dx;
    for (int j = n->a0; j < n->a1; j++)
        for (int i = n->a0; i < n->a1; i++) {
            const long c = (long)j * ns + i;
            const double east = w[c] * w[c + 1] * (fx[c] + fx[c + 1]);
            const double west = w[c - 1] * w[c] * (fx[c - 1] + fx[c]);
            const double north = w[c] * w[c + ns] * (fy[c] + fy[c + ns]);
            const double south = w[c - ns] * w[c] * (fy[c - ns] + fy[c]);
            tend[c] = -h * ((east - west) + (north - south));
        }
}

/* The rounding of the network's arithmetic (vet's linear check sizes its
 * finite differences by it). */
static double net_precision(void *state)
{
    const net_state *n = state;
    return n->double_precision ? DBL_EPSILON : FLT_EPSILON;
}

static tg_code net_tendency(void *state, const tg_closure_view *v, double *tend, tg_status *st)
{
    net_state *n = state;
    const int ns = n->ns, a0 = n->a0, a1 = n->a1, nl = n->nl;
    const size_t bytes = sizeof(double) * (size_t)(nl * n->npl);
    if (!n->every_stage && v->stage != 0) {
        memcpy(tend, n->keep, bytes);
        return TG_OK;
    }
    pack_inputs(n, v);
    int off;
    tg_code rc = evaluate(n, &off, st);
    if (rc != TG_OK)
        return tg_fail(st, TG_ERR_NUMERIC, "%s", st->msg);
    /* Output node (i, j) is at out[(j - off) * os + (i - off)]. */
    const int os = off ? a1 - a0 : ns;
    const long opl = (long)os * os;
    for (int c = 0; c < (n->flux ? 2 : 1) * nl; c++)
        for (int j = a0; j < a1; j++)
            for (int i = a0; i < a1; i++) {
                const double x = n->out[c * opl + (long)(j - off) * os + (i - off)];
                if (!isfinite(x))
                    return tg_fail(st, TG_ERR_BLOWUP,
                                   "%s returned %g at node (%d, %d) of output channel %d",
                                   n->path, x, i - a0, j - a0, c + 1);
            }
    for (int k = 0; k < nl; k++) {
        double *t = tend + k * n->npl;
        if (n->flux) {
            const double *ox = n->out + k * opl, *oy = n->out + (nl + k) * opl;
            for (int j = a0; j < a1; j++)
                for (int i = a0; i < a1; i++) {
                    const long src = (long)(j - off) * os + (i - off), dst = (long)j * ns + i;
                    n->fx[dst] = ox[src];
                    n->fy[dst] = oy[src];
                }
            v->tools->fill_ring(v->tools->ctx, n->fx, TG_RING_ZERO);
            v->tools->fill_ring(v->tools->ctx, n->fy, TG_RING_ZERO);
            flux_divergence(n, t);
        } else {
            const double *o = n->out + k * opl;
            for (int j = a0; j < a1; j++)
                for (int i = a0; i < a1; i++)
                    t[(long)j * ns + i] = o[(long)(j - off) * os + (i - off)];
        }
        if (n->remove_mean) {
            /* Row sums, then the rows in order: the same mean for any thread count. */
            double sum = 0.0;
            for (int j = a0; j < a1; j++) {
                n->rows[j] = 0.0;
                for (int i = a0; i < a1; i++)
                    n->rows[j] += t[(long)j * ns + i];
            }
            for (int j = a0; j < a1; j++)
                sum += n->rows[j];
            const double mean = sum / ((double)(a1 - a0) * (a1 - a0));
            for (int j = a0; j < a1; j++)
                for (int i = a0; i < a1; i++)
                    t[(long)j * ns + i] -= mean;
        }
        if (n->mult != 1.0)
            for (int j = a0; j < a1; j++)
                for (int i = a0; i < a1; i++)
                    t[(long)j * ns + i] *= n->mult;
    }
    if (!n->every_stage)
        memcpy(n->keep, tend, bytes);
    return TG_OK;
}

#ifndef TG_WITH_TORCH
#define NET_SUMMARY_NOTE " (not in this build: needs libtorch-dev, see README)"
#else
#define NET_SUMMARY_NOTE ""
#endif

const tg_closure_ops tg_scheme_network = {
    .abi = TG_CLOSURE_ABI,
    .name = "network",
    .summary = "a trained convolutional network (TorchScript file with its normalization) giving "
               "the PV tendency or sub-grid PV fluxes" NET_SUMMARY_NOTE,
    .source = "Maulik et al. 2019, J. Fluid Mech. 858, 122-144; Guan et al. 2022, "
              "J. Comput. Phys. 458, 111090",
    .dissipative = 0,
    .nparams = P_N,
    .params = params,
    .create = net_create,
    .tendency = net_tendency,
    .destroy = net_destroy,
    .precision = net_precision,
};
