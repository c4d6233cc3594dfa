/* network_bridge.h - the C face of the libtorch bridge (network_torch.cc)
 * that the closure "network" (network.c) calls.
 *
 * The bridge is the only code that sees C++ or libtorch. It is built as a
 * module of its own (twingyre_torch.so) that network.c loads with dlopen
 * and looks up by the names TG_NET_OPEN, TG_NET_EVAL and TG_NET_CLOSE, so
 * that libtwingyre does not link libtorch. It loads a
 * TorchScript file (torch.jit.save), reads the normalization stored in it,
 * evaluates the network on a block of double-precision channels and hands
 * back double-precision channels. Nothing crosses this header but C types;
 * every libtorch exception is caught inside the bridge and comes back as a
 * message in `err`.
 *
 * Normalization stored with the network (TorchScript attributes of the
 * saved module, written by scripts/train-network):
 *   input_mean, input_scale   1-D tensors, one value per input channel:
 *                             the network sees (x - input_mean) / input_scale
 *   output_scale              1-D tensor, one value per output channel: the
 *                             bridge returns network(...) * output_scale
 *   inputs, output            optional text: the input fields in channel
 *                             order ("q,zeta") and "tendency" or "flux"
 * The dtype of input_scale is the dtype the network computes in (float32
 * or float64).
 *
 * Part of twingyre. GPL-3.0-or-later.
 */
#ifndef TG_NETWORK_BRIDGE_H
#define TG_NETWORK_BRIDGE_H

#include <stddef.h>

#ifdef __cplusplus
extern "C" {
#endif

typedef struct tg_net tg_net;

/* What the file records besides its weights. */
typedef struct {
    int nin;              /* length of input_mean / input_scale */
    int nout;             /* length of output_scale */
    int double_precision; /* 1: the network computes in float64 */
    char inputs[128];     /* the file's `inputs` record, "" when absent */
    char output[32];      /* the file's `output` record, "" when absent */
} tg_net_info;

/* Loads PATH for input blocks of nin channels of ny x nx values, with
 * libtorch's intra-op and inter-op threads set to `threads`. `deterministic`
 * asks libtorch for deterministic algorithms. NULL on failure with a
 * message in err. */
typedef tg_net *tg_net_open_fn(const char *path, int threads, int deterministic,
                               tg_net_info *info, char *err, size_t nerr);

/* Evaluates the network on in[nin][ny][nx] (row-major, double). Writes
 * out[nout][oy][ox] and the output's spatial size into *oy, *ox; `cap` is
 * the number of doubles out can hold. Returns 0, or -1 with a message in
 * err (an exception, a shape that does not fit, a channel count other than
 * info.nout). */
typedef int tg_net_eval_fn(tg_net *net, const double *in, int nin, int ny, int nx, double *out,
                           size_t cap, int *oy, int *ox, char *err, size_t nerr);

typedef void tg_net_close_fn(tg_net *net);

#define TG_NET_OPEN "tg_net_open"
#define TG_NET_EVAL "tg_net_eval"
#define TG_NET_CLOSE "tg_net_close"
tg_net_open_fn tg_net_open;
tg_net_eval_fn tg_net_eval;
tg_net_close_fn tg_net_close;

#ifdef __cplusplus
}
#endif

#endif
