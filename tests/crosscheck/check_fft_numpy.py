#!/usr/bin/python3
"""check_fft_numpy.py - checks twingyre's 2-D real FFT (src/numerics/fourier.c) and
kinetic-energy spectra (src/model/spectrum.c, ke_spectrum op of both geometries)
with numpy, independently of the C code.

Usage: /usr/bin/python3 check_fft_numpy.py [DATA]

DATA is the text file written by tests/unit/test_spectrum.c (test
write_crosscheck_data); default $TG_TEST_TMPDIR/twingyre-spectrum-crosscheck.txt
(else $TMPDIR or /tmp). Blocks are a line "name count" followed by count
values, one a line; lines starting with '#' are comments.

Checks (sources beside each):
- the forward transform equals numpy.fft.rfft2 (transposed, fourier.h
  layout) to 1e-12 of its largest coefficient, and numpy.fft.irfft2 of it
  gives the field back (definition of the DFT; numpy documentation of
  numpy.fft);
- each spectrum equals one recomputed here from numpy.fft.fft2 (periodic)
  or a sine-matrix transform (basin) with the same bins and weights, and
  Parseval's relation holds: sum_b E_b dk equals the discrete kinetic
  energy -(1/(2A)) sum (psi - c) lap5(psi) dx^2 computed here with numpy
  (Parseval's theorem for the DFT, Press et al. 2007, Numerical Recipes
  3rd ed., section 12.1, from memory), to 1e-12 relative.

Prints one line per check, then "N passed, M failed" as the last line;
exits 1 when a check failed, 2 when the data cannot be read.

Part of twingyre. GPL-3.0-or-later.
"""
import math
import os
import sys

try:
    import numpy as np
except ImportError as exc:  # Debian package python3-numpy
    print(f"cannot import numpy: {exc}")
    print("0 passed, 1 failed")
    sys.exit(2)

TOL = 1e-12


class Checks:
    def __init__(self):
        self.passed = 0
        self.failed = 0

    def check(self, ok, what, detail=""):
        if ok:
            self.passed += 1
            print(f"PASS {what}" + (f" ({detail})" if detail else ""))
        else:
            self.failed += 1
            print(f"FAIL {what}" + (f": {detail}" if detail else ""))


def default_path():
    d = os.environ.get("TG_TEST_TMPDIR") or os.environ.get("TMPDIR") or "/tmp"
    return os.path.join(d, "twingyre-spectrum-crosscheck.txt")


def read_blocks(path):
    blocks = {}
    with open(path, encoding="ascii") as f:
        lines = [ln.strip() for ln in f if ln.strip() and not ln.lstrip().startswith("#")]
    pos = 0
    while pos < len(lines):
        name, count = lines[pos].split()
        count = int(count)
        vals = np.array([float(v) for v in lines[pos + 1 : pos + 1 + count]])
        if vals.size != count:
            raise ValueError(f"block {name}: expected {count} values, found {vals.size}")
        blocks[name] = vals
        pos += 1 + count
    return blocks


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


def nearest_bin(m2):
    """Integer nearest to sqrt(m2), exactly (no ties for integer m2)."""
    b = np.floor(np.sqrt(m2.astype(float))).astype(np.int64)
    b -= (4 * b * b - 4 * b + 1 > 4 * m2).astype(np.int64)
    b += (4 * b * b + 4 * b + 1 <= 4 * m2).astype(np.int64)
    return np.where(m2 > 0, b, 0)


def check_spectrum(c, label, e, k, dk, dk_want, e_ref, ke_numpy, ke_c):
    c.check(rel(dk, dk_want) <= 1e-15, f"{label}: bin width dk", f"{dk:.17g} vs {dk_want:.17g}")
    nb = e.size
    c.check(
        k.size == nb and np.all(np.abs(k - dk * np.arange(1, nb + 1)) <= 1e-15 * k),
        f"{label}: bin centres are b dk, b = 1..{nb}",
    )
    c.check(e_ref.size == nb, f"{label}: number of bins", f"{nb} vs {e_ref.size}")
    if e_ref.size == nb:
        err = np.max(np.abs(e - e_ref)) / np.max(np.abs(e_ref))
        c.check(err <= TOL, f"{label}: spectrum equals the numpy recomputation", f"rel {err:.2e}")
    total = float(np.sum(e) * dk)
    c.check(
        rel(total, ke_numpy) <= TOL,
        f"{label}: Parseval, sum E dk equals the numpy kinetic energy",
        f"{total:.17g} vs {ke_numpy:.17g}, rel {rel(total, ke_numpy):.2e}",
    )
    c.check(
        rel(ke_c, ke_numpy) <= TOL,
        f"{label}: the C kinetic energy equals the numpy one",
        f"rel {rel(ke_c, ke_numpy):.2e}",
    )


def check_periodic(c, b):
    P = int(b["periodic_points"][0])
    L = float(b["periodic_length_m"][0])
    dx = L / P
    x = b["periodic_field"].reshape(P, P)  # [j, i]
    nc = P // 2 + 1
    s = b["periodic_fft"].reshape(nc, P, 2)  # [kx, ky, re/im]
    spec = (s[..., 0] + 1j * s[..., 1]).T  # [ky, kx] like numpy
    ref = np.fft.rfft2(x)
    err = np.max(np.abs(spec - ref)) / np.max(np.abs(ref))
    c.check(err <= TOL, f"periodic {P}x{P}: forward transform equals numpy.fft.rfft2",
            f"rel {err:.2e}")
    back = np.fft.irfft2(spec, s=(P, P))
    err = np.max(np.abs(back - x)) / np.max(np.abs(x))
    c.check(err <= TOL, "periodic: numpy.fft.irfft2 of it gives the field back", f"rel {err:.2e}")

    # Spectrum from the full numpy FFT: weights -lambda |C|^2 / (2 P^4 dk).
    full = np.fft.fft2(x)
    kk = np.rint(np.fft.fftfreq(P) * P).astype(np.int64)
    ky, kx = np.meshgrid(kk, kk, indexing="ij")
    lam = -(4.0 / dx**2) * (np.sin(np.pi * kx / P) ** 2 + np.sin(np.pi * ky / P) ** 2)
    bins = nearest_bin(kx * kx + ky * ky)
    dk = 2.0 * math.pi / L
    nb = int(bins.max())
    w = (-lam) * np.abs(full) ** 2 / (2.0 * float(P) ** 4 * dk)
    e_ref = np.bincount(bins.ravel(), weights=w.ravel(), minlength=nb + 1)[1:]
    # Kinetic energy with the five-point Laplacian on the periodic grid.
    lap = (np.roll(x, 1, 0) + np.roll(x, -1, 0) + np.roll(x, 1, 1) + np.roll(x, -1, 1) - 4 * x) / dx**2
    ke = float(-0.5 * np.sum(x * lap) * dx * dx / (L * L))
    check_spectrum(c, "periodic", b["periodic_e"], b["periodic_k"], float(b["periodic_dk"][0]),
                   dk, e_ref, ke, float(b["periodic_ke"][0]))


def check_basin(c, b):
    ns = int(b["basin_points"][0])
    L = float(b["basin_length_m"][0])
    wall = float(b["basin_wall"][0])
    N = ns - 1
    n = N - 1
    dx = L / N
    f = b["basin_field"].reshape(ns, ns)  # [j, i], walls included
    edges = np.concatenate([f[0, :], f[-1, :], f[:, 0], f[:, -1]])
    c.check(np.all(edges == wall), "basin: the field equals the wall value on the walls")
    y = f[1:-1, 1:-1] - wall
    idx = np.arange(1, n + 1)
    sine = np.sin(np.pi * np.outer(idx, idx) / N)  # [k, i]
    S = sine @ y.T @ sine.T  # [kx, ky] = sum_ij sin(pi i kx/N) y[j, i] sin(pi j ky/N)
    kx, ky = np.meshgrid(idx, idx, indexing="ij")
    lam = -(4.0 / dx**2) * (np.sin(np.pi * kx / (2 * N)) ** 2 + np.sin(np.pi * ky / (2 * N)) ** 2)
    dk = math.pi / L
    bins = nearest_bin(kx * kx + ky * ky)
    nb = int(bins.max())
    w = 2.0 * (-lam) * S**2 / (float(N) ** 4 * dk)
    e_ref = np.bincount(bins.ravel(), weights=w.ravel(), minlength=nb + 1)[1:]
    lap = (f[1:-1, 2:] + f[1:-1, :-2] + f[2:, 1:-1] + f[:-2, 1:-1] - 4 * f[1:-1, 1:-1]) / dx**2
    ke = float(-0.5 * np.sum(y * lap) * dx * dx / (L * L))
    check_spectrum(c, f"basin {ns}x{ns}", b["basin_e"], b["basin_k"], float(b["basin_dk"][0]),
                   dk, e_ref, ke, float(b["basin_ke"][0]))


def main():
    path = sys.argv[1] if len(sys.argv) > 1 else default_path()
    try:
        blocks = read_blocks(path)
    except (OSError, ValueError) as exc:
        print(f"cannot read {path}: {exc} (run tests/unit/test_spectrum first)")
        print("0 passed, 1 failed")
        sys.exit(2)
    c = Checks()
    need_p = ["periodic_points", "periodic_length_m", "periodic_field", "periodic_fft",
              "periodic_dk", "periodic_k", "periodic_e", "periodic_ke"]
    need_b = ["basin_points", "basin_length_m", "basin_wall", "basin_field", "basin_dk",
              "basin_k", "basin_e", "basin_ke"]
    for label, need, fn in (("periodic", need_p, check_periodic), ("basin", need_b, check_basin)):
        missing = [k for k in need if k not in blocks]
        if missing:
            c.check(False, f"{label}: data present", "missing " + ", ".join(missing))
        else:
            fn(c, blocks)
    print(f"{c.passed} passed, {c.failed} failed")
    sys.exit(1 if c.failed else 0)


if __name__ == "__main__":
    main()
