#!/usr/bin/python3
"""check_filter_scipy.py - checks twingyre's coarse-graining filters
(src/model/coarsen.c with ops->filter_field of src/model/geom_basin.c and
src/model/geom_periodic.c) against an independent implementation on scipy.fft.

Usage: /usr/bin/python3 check_filter_scipy.py [DATA]

DATA is the text file written by tests/unit/test_coarsen.c (case
"crosscheck"); default $TG_TEST_TMPDIR/twingyre-filter-crosscheck.txt (else
$TMPDIR or /tmp). Blocks are a line "name count" followed by count values,
one a line; lines starting with '#' are comments.

Checks (sources beside each):
- periodic: the sharp filter keeps the Fourier coefficients with
  |kx|, |ky| < pi/Dc and the Gaussian multiplies every coefficient by
  exp(-K^2 Delta^2/24) (Pope 2000, Turbulent Flows, section 13.2);
  recomputed with scipy.fft.fft2/ifft2;
- basin: the field minus the bilinearly blended (Coons) patch of its wall
  values (Gordon & Hall 1973, Int. J. Numer. Methods Eng. 7, 461-477) is
  filtered in the type-I sine basis with scipy.fft.dstn/idstn (type 1),
  each wall minus the line between its corners with scipy.fft.dst/idst
  (type 1), and the patch of the filtered walls is added back - the
  algorithm documented in geom_basin.c, implemented here independently;
- restriction: the coarse field is every r-th node of the filtered field.
Tolerance 1e-12 of the field's largest value (round-off of two different
transform implementations; common practice).

Prints one line per check, then "N passed, M failed" as the last line;
exits 1 when a check failed, 2 when the data cannot be read.

Part of twingyre. GPL-3.0-or-later.
"""
import os
import sys

try:
    import numpy as np
    import scipy.fft as sfft
except ImportError as exc:  # Debian packages python3-numpy, python3-scipy
    print(f"cannot import {exc.name}")
    print("0 passed, 1 failed")
    sys.exit(2)

TOL = 1e-12


def read_blocks(path):
    blocks = {}
    with open(path) as f:
        lines = [l.strip() for l in f if l.strip() and not l.startswith("#")]
    i = 0
    while i < len(lines):
        name, count = lines[i].split()
        count = int(count)
        blocks[name] = np.array([float(v) for v in lines[i + 1:i + 1 + count]])
        i += 1 + count
    return blocks


def transfer_1d(kind, k, scale):
    if kind == "sharp":
        return (k < scale * (1 - 1e-9)).astype(float)
    return np.exp(-k * k * scale * scale / 24.0)


def periodic_filter(f, L, kind, scale):
    P = f.shape[0]
    k = 2 * np.pi / L * np.fft.fftfreq(P, 1.0 / P)  # signed integer wavenumbers
    ky, kx = np.meshgrid(k, k, indexing="ij")
    if kind == "sharp":
        t = transfer_1d(kind, np.abs(kx), scale) * transfer_1d(kind, np.abs(ky), scale)
    else:
        t = np.exp(-(kx ** 2 + ky ** 2) * scale ** 2 / 24.0)
    return np.real(sfft.ifft2(sfft.fft2(f) * t))


def coons(W, E, S, N):
    n = len(W) - 1
    s = np.arange(n + 1) / n
    t = s[:, None]
    ss = s[None, :]
    return ((1 - ss) * W[:, None] + ss * E[:, None] + (1 - t) * S[None, :] + t * N[None, :]
            - ((1 - ss) * (1 - t) * S[0] + ss * (1 - t) * S[n] + (1 - ss) * t * N[0]
               + ss * t * N[n]))


def filter_wall(v, L, kind, scale):
    n = len(v) - 1
    line = v[0] + (v[n] - v[0]) * np.arange(n + 1) / n
    d = (v - line)[1:-1]
    m = np.arange(1, n)
    c = sfft.dst(d, type=1) * transfer_1d(kind, np.pi * m / L, scale)
    out = line.copy()
    out[1:-1] += sfft.idst(c, type=1)
    return out


def basin_filter(f, L, kind, scale):
    n = f.shape[0] - 1
    W, E, S, N = f[:, 0], f[:, n], f[0, :], f[n, :]
    d = (f - coons(W, E, S, N))[1:-1, 1:-1]
    m = np.pi * np.arange(1, n) / L
    my, mx = np.meshgrid(m, m, indexing="ij")
    if kind == "sharp":
        t = transfer_1d(kind, mx, scale) * transfer_1d(kind, my, scale)
    else:
        t = np.exp(-(mx ** 2 + my ** 2) * scale ** 2 / 24.0)
    dd = sfft.idstn(sfft.dstn(d, type=1) * t, type=1)
    fw = [filter_wall(v, L, kind, scale) for v in (W, E, S, N)]
    out = coons(*fw)
    out[1:-1, 1:-1] += dd
    return out


def main():
    d = os.environ.get("TG_TEST_TMPDIR") or os.environ.get("TMPDIR") or "/tmp"
    path = sys.argv[1] if len(sys.argv) > 1 else os.path.join(d, "twingyre-filter-crosscheck.txt")
    try:
        b = read_blocks(path)
    except (OSError, ValueError) as exc:
        print(f"cannot read {path}: {exc}")
        print("0 passed, 1 failed")
        sys.exit(2)
    passed = failed = 0
    for tag, filt in (("periodic", periodic_filter), ("basin", basin_filter)):
        P = int(b[f"{tag}_points"][0])
        Pc = int(b[f"{tag}_coarse_points"][0])
        L = float(b[f"{tag}_length_m"][0])
        n = P if tag == "periodic" else P
        f = b[f"{tag}_field"].reshape(n, n)
        r = P // Pc if tag == "periodic" else (P - 1) // (Pc - 1)
        scale_ref = np.max(np.abs(f))
        for kind in ("sharp", "gaussian"):
            scale = float(b[f"{tag}_{kind}_scale"][0])
            ours = b[f"{tag}_{kind}"].reshape(n, n)
            theirs = filt(f, L, kind, scale)
            err = np.max(np.abs(ours - theirs)) / scale_ref
            change = np.max(np.abs(theirs - f)) / scale_ref
            ok = err < TOL and change > 1e-3
            print(("PASS" if ok else "FAIL") +
                  f" {tag} {kind} filter against scipy.fft: relative difference {err:.2e}"
                  f" (the filter changes the field by {change:.2e})")
            passed += ok
            failed += not ok
            coarse = b[f"{tag}_{kind}_coarse"].reshape(Pc, Pc)
            err = np.max(np.abs(coarse - theirs[::r, ::r][:Pc, :Pc])) / scale_ref
            ok = err < TOL
            print(("PASS" if ok else "FAIL") +
                  f" {tag} {kind} restriction to every {r}th node: relative difference {err:.2e}")
            passed += ok
            failed += not ok
    print(f"{passed} passed, {failed} failed")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
