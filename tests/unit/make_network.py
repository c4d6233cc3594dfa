#!/usr/bin/python3
"""make_network.py - writes the small TorchScript networks the tests of the
closure "network" use (tests/unit/test_closure_network.c,
tests/cli/test_network.sh), so that no binary network is committed.

    make_network.py KIND OUT.pt --layers NL --dx DX --a2 A2

KIND:
  laplacian     tendency = A2 times the five-point Laplacian of zeta, one
                3x3 convolution per layer (float64), inputs zeta
  flux          fluxes F = -A2 grad(zeta) by centred differences (float64),
                output flux, inputs zeta
  channels      its normalization says one channel per layer but its
                convolution takes NL + 1 channels
  shape         returns the tendency on a block two nodes smaller per side
  nan           A2 Laplacian plus sqrt(zeta) * 1e-30: finite while zeta >= 0
                (a state at rest), NaN once any zeta < 0
  unrecorded    the laplacian network without its `inputs` and `output`
                records
  nonorm        the laplacian network without its normalization

Every file carries input_mean, input_scale, output_scale (the normalization,
here 0, 1, 1) and the records inputs and output. Needs Debian's
python3-torch.

Part of twingyre. GPL-3.0-or-later.
"""
import argparse

import torch

STENCIL = [[0.0, 1.0, 0.0], [1.0, -4.0, 1.0], [0.0, 1.0, 0.0]]


class Stencil(torch.nn.Module):
    """A fixed 3x3 convolution per layer with zero padding."""

    def __init__(self, nl, weights, nin, nout, inputs, output, norm=True, shrink=0, nan=False):
        super().__init__()
        self.conv = torch.nn.Conv2d(nin, nout, 3, padding=1, bias=False, groups=1).double()
        with torch.no_grad():
            self.conv.weight.copy_(weights)
        if norm:
            self.register_buffer("input_mean", torch.zeros(nin if nin == nl else nl,
                                                           dtype=torch.float64))
            self.register_buffer("input_scale", torch.ones(nin if nin == nl else nl,
                                                           dtype=torch.float64))
            self.register_buffer("output_scale", torch.ones(nout, dtype=torch.float64))
        if inputs:
            self.inputs = inputs
            self.output = output
        self.shrink = shrink
        self.nan = nan

    def forward(self, x):
        y = self.conv(x)
        if self.nan:
            y = y + 1e-30 * torch.sqrt(x[:, 0:1])
        if self.shrink > 0:
            s = self.shrink
            y = y[:, :, s:-s, s:-s]
        return y


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("kind")
    ap.add_argument("out")
    ap.add_argument("--layers", type=int, default=2)
    ap.add_argument("--dx", type=float, required=True)
    ap.add_argument("--a2", type=float, default=300.0)
    a = ap.parse_args()
    nl, dx, a2 = a.layers, a.dx, a.a2
    lap = torch.tensor(STENCIL, dtype=torch.float64) * (a2 / (dx * dx))
    if a.kind == "flux":
        # Fx = -A2 (z[i+1] - z[i-1]) / (2 dx), Fy likewise; channels Fx_k then Fy_k.
        w = torch.zeros(2 * nl, nl, 3, 3, dtype=torch.float64)
        c = -a2 / (2 * dx)
        for k in range(nl):
            w[k, k, 1, 2], w[k, k, 1, 0] = c, -c
            w[nl + k, k, 2, 1], w[nl + k, k, 0, 1] = c, -c
        m = Stencil(nl, w, nl, 2 * nl, "zeta", "flux")
    else:
        nin = nl + 1 if a.kind == "channels" else nl
        w = torch.zeros(nl, nin, 3, 3, dtype=torch.float64)
        for k in range(nl):
            w[k, k] = lap
        m = Stencil(nl, w, nin, nl, "" if a.kind == "unrecorded" else "zeta", "tendency",
                    norm=a.kind != "nonorm", shrink=2 if a.kind == "shape" else 0,
                    nan=a.kind == "nan")
        if a.kind not in ("laplacian", "channels", "shape", "nan", "unrecorded", "nonorm"):
            ap.error("unknown kind " + a.kind)
    torch.jit.script(m).save(a.out)


if __name__ == "__main__":
    main()
