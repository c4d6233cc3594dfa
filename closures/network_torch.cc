// network_torch.cc - the libtorch bridge of the closure "network"
// (network_bridge.h): the one C++ translation unit of twingyre and the only
// file that includes libtorch. Built as the module twingyre_torch.so, which
// network.c loads with dlopen.
//
// It loads a TorchScript module with torch::jit::load, reads the
// normalization stored in it as attributes (input_mean, input_scale,
// output_scale; optional text records inputs and output), and evaluates
//     y = network((x - input_mean) / input_scale) * output_scale
// per channel, with x the caller's channels (a batch of one, shape
// 1 x C x ny x nx). The scaled input goes into one tensor made at the
// first evaluation and reused; the output is scaled while it is copied out,
// so the bridge adds no tensors of its own to the network's. Every libtorch
// exception is caught here and returned as a message; no C++ exception
// crosses into the C library.
//
// Speed: once its normalization is read, the module is frozen and optimized
// for inference at load time (torch::jit::optimize_for_inference: weights
// folded in as constants, the convolutions run
// by oneDNN where libtorch has it), which halves the cost of a call of the
// demo's network at 65 points (README, "Speed"). glibc is asked to keep
// freed blocks in the heap (tg_net_open), because libtorch allocates every
// intermediate tensor afresh at each call and returning those blocks to
// the system made each call fault its pages in again: that took 40 % of a
// call at 65 points. What is left is the convolutions' arithmetic.
//
// Reproducibility: the graph executor's own optimizations are switched off
// (setGraphExecutorOptimize(false)) after that, because the profiling
// executor rewrites the graph after its first calls, so that a run resumed
// from a checkpoint would otherwise evaluate a different graph from the run
// it continues. The load-time optimization is done once, before the first
// call, so every process evaluates the same graph from its first call on.
// (Freezing needs the executor's optimization on while it runs: with it off
// the submodules' methods are not inlined and the frozen module, which no
// longer has them, cannot run.) libtorch's threads are set to the run's
// thread count.
//
// Part of twingyre. GPL-3.0-or-later.

#include "network_bridge.h"

#include <ATen/Parallel.h>
#include <torch/csrc/jit/python/update_graph_executor_opt.h>
#include <torch/script.h>

#include <cstdio>
#include <cstring>
#ifdef __GLIBC__
#include <malloc.h>
#endif
#include <exception>
#include <string>
#include <vector>

struct tg_net {
    torch::jit::script::Module module;
    std::vector<double> mean, scale, oscale; // per input / output channel
    at::ScalarType dtype;
    int nin, nout;
    at::Tensor x; // the network's input, made at the first evaluation and reused
};

// dst[i] = (src[i] - m) / s for n values, in the network's precision.
template <typename T> static void scale_in(T *dst, const double *src, size_t n, double m, double s)
{
    for (size_t i = 0; i < n; i++)
        dst[i] = (T)((src[i] - m) / s);
}

// dst[i] = src[i] * s for n values, back in double precision.
template <typename T> static void scale_out(double *dst, const T *src, size_t n, double s)
{
    for (size_t i = 0; i < n; i++)
        dst[i] = (double)src[i] * s;
}

static std::vector<double> to_vector(const at::Tensor &t)
{
    at::Tensor d = t.to(at::kDouble).contiguous();
    return std::vector<double>(d.data_ptr<double>(), d.data_ptr<double>() + d.numel());
}

static void put_err(char *err, size_t n, const std::string &msg)
{
    if (err && n > 0)
        std::snprintf(err, n, "%s", msg.c_str());
}

// The line of a libtorch message that says what went wrong: the first, or
// for an error inside the TorchScript interpreter (whose first line only
// says so, followed by the script's traceback) the last non-empty one.
static std::string first_line(const char *what)
{
    std::string s(what ? what : "unknown error");
    size_t e = s.find('\n');
    std::string first = e == std::string::npos ? s : s.substr(0, e);
    if (first.find("TorchScript interpreter") == std::string::npos)
        return first;
    while (!s.empty() && (s.back() == '\n' || s.back() == ' '))
        s.pop_back();
    size_t b = s.rfind('\n');
    return b == std::string::npos ? s : s.substr(b + 1);
}

// A 1-D floating-point attribute of the module, as a double tensor.
static at::Tensor vector_attr(const torch::jit::script::Module &m, const char *name,
                              std::string &why)
{
    if (!m.hasattr(name)) {
        why = std::string("has no attribute '") + name +
              "' (the normalization must be stored in the file; scripts/train-network writes "
              "input_mean, input_scale and output_scale)";
        return at::Tensor();
    }
    c10::IValue v = m.attr(name);
    if (!v.isTensor() || v.toTensor().dim() != 1 || !v.toTensor().is_floating_point()) {
        why = std::string("attribute '") + name + "' is not a 1-D floating-point tensor";
        return at::Tensor();
    }
    return v.toTensor();
}

static void text_attr(const torch::jit::script::Module &m, const char *name, char *out, size_t n)
{
    out[0] = '\0';
    if (m.hasattr(name)) {
        c10::IValue v = m.attr(name);
        if (v.isString())
            std::snprintf(out, n, "%s", v.toStringRef().c_str());
    }
}

// The graph executor's optimization on for the life of the guard (the load
// and freezing), off again however the load ends.
struct optimizing_while_loading {
    optimizing_while_loading() { torch::jit::setGraphExecutorOptimize(true); }
    ~optimizing_while_loading() { torch::jit::setGraphExecutorOptimize(false); }
};

extern "C" tg_net *tg_net_open(const char *path, int threads, int deterministic,
                               tg_net_info *info, char *err, size_t nerr)
{
    tg_net *net = nullptr;
#ifdef __GLIBC__
    // libtorch allocates each intermediate tensor afresh at every call
    // (0.3 MB per hidden layer of the demo's network at 65 points); with
    // glibc's default thresholds those blocks were mapped and unmapped, or
    // trimmed off the heap, at every call, and the page faults of zeroing
    // them again cost as much as the convolutions. Keeping freed blocks in
    // the heap makes later calls reuse them (README, "Speed").
    // A refusal (0) leaves glibc's defaults: slower, not wrong.
    const int kept = mallopt(M_MMAP_THRESHOLD, 32 << 20) && mallopt(M_TRIM_THRESHOLD, 64 << 20);
    (void)kept;
#endif
    try {
        if (threads > 0) {
            at::set_num_threads(threads);
            // The inter-op pool can be sized only before its first use; a
            // second network in the same process keeps the first size.
            try {
                at::set_num_interop_threads(threads);
            } catch (const std::exception &) {
            }
        }
        at::globalContext().setDeterministicAlgorithms(deterministic != 0, false);
        net = new tg_net;
        optimizing_while_loading guard;
        net->module = torch::jit::load(path, torch::kCPU);
        net->module.eval();
        std::string why;
        at::Tensor mean = vector_attr(net->module, "input_mean", why);
        at::Tensor scale = mean.defined() ? vector_attr(net->module, "input_scale", why)
                                          : at::Tensor();
        at::Tensor osc = scale.defined() ? vector_attr(net->module, "output_scale", why)
                                         : at::Tensor();
        if (!osc.defined()) {
            put_err(err, nerr, why);
            delete net;
            return nullptr;
        }
        if (mean.size(0) != scale.size(0)) {
            put_err(err, nerr, "input_mean and input_scale differ in length (" +
                                   std::to_string(mean.size(0)) + " and " +
                                   std::to_string(scale.size(0)) + ")");
            delete net;
            return nullptr;
        }
        net->dtype = scale.scalar_type();
        if (net->dtype != at::kFloat && net->dtype != at::kDouble) {
            put_err(err, nerr, "input_scale is neither float32 nor float64");
            delete net;
            return nullptr;
        }
        net->nin = (int)scale.size(0);
        net->nout = (int)osc.size(0);
        net->mean = to_vector(mean);
        net->scale = to_vector(scale);
        net->oscale = to_vector(osc);
        info->nin = net->nin;
        info->nout = net->nout;
        info->double_precision = net->dtype == at::kDouble;
        text_attr(net->module, "inputs", info->inputs, sizeof info->inputs);
        text_attr(net->module, "output", info->output, sizeof info->output);
        net->module = torch::jit::optimize_for_inference(net->module);
        return net;
    } catch (const c10::Error &e) {
        put_err(err, nerr, first_line(e.what_without_backtrace()));
    } catch (const std::exception &e) {
        put_err(err, nerr, first_line(e.what()));
    }
    delete net;
    return nullptr;
}

extern "C" int tg_net_eval(tg_net *net, const double *in, int nin, int ny, int nx, double *out,
                           size_t cap, int *oy, int *ox, char *err, size_t nerr)
{
    try {
        c10::InferenceMode guard;
        if (nin != net->nin) {
            put_err(err, nerr, "the input has " + std::to_string(nin) + " channels, the "
                                   "normalization " + std::to_string(net->nin));
            return -1;
        }
        if (!net->x.defined() || net->x.size(2) != ny || net->x.size(3) != nx)
            net->x = at::empty({1, nin, ny, nx}, at::TensorOptions().dtype(net->dtype));
        const size_t npl = (size_t)ny * (size_t)nx;
        for (int c = 0; c < nin; c++) {
            if (net->dtype == at::kFloat)
                scale_in(net->x.data_ptr<float>() + c * npl, in + c * npl, npl, net->mean[c],
                         net->scale[c]);
            else
                scale_in(net->x.data_ptr<double>() + c * npl, in + c * npl, npl, net->mean[c],
                         net->scale[c]);
        }
        const at::Tensor &x = net->x;
        std::vector<c10::IValue> args{x};
        c10::IValue r = net->module.forward(args);
        if (!r.isTensor()) {
            put_err(err, nerr, std::string("the network returned ") + r.tagKind() +
                                   ", not a tensor");
            return -1;
        }
        at::Tensor y = r.toTensor();
        if (y.dim() != 4 || y.size(0) != 1 || y.size(1) != net->nout) {
            std::string shape = "[";
            for (int64_t d = 0; d < y.dim(); d++)
                shape += (d ? ", " : "") + std::to_string(y.size(d));
            put_err(err, nerr, "the network returned a tensor of shape " + shape +
                                   "], expected [1, " + std::to_string(net->nout) +
                                   ", ny, nx] (output_scale has " +
                                   std::to_string(net->nout) + " channels)");
            return -1;
        }
        *oy = (int)y.size(2);
        *ox = (int)y.size(3);
        if ((size_t)y.numel() > cap) {
            put_err(err, nerr, "the network's output (" + std::to_string(*oy) + " x " +
                                   std::to_string(*ox) + " per channel) is larger than its input");
            return -1;
        }
        y = y.contiguous();
        const size_t opl = (size_t)*oy * (size_t)*ox;
        for (int c = 0; c < net->nout; c++) {
            if (y.scalar_type() == at::kFloat)
                scale_out(out + c * opl, y.data_ptr<float>() + c * opl, opl, net->oscale[c]);
            else if (y.scalar_type() == at::kDouble)
                scale_out(out + c * opl, y.data_ptr<double>() + c * opl, opl, net->oscale[c]);
            else {
                put_err(err, nerr, "the network returned neither float32 nor float64 values");
                return -1;
            }
        }
        return 0;
    } catch (const c10::Error &e) {
        put_err(err, nerr, first_line(e.what_without_backtrace()));
    } catch (const std::exception &e) {
        put_err(err, nerr, first_line(e.what()));
    }
    return -1;
}

extern "C" void tg_net_close(tg_net *net)
{
    delete net;
}
