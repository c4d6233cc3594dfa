#!/usr/bin/python3
"""check_fit_numpy.py - the least-squares coefficients of `twingyre fit`
against numpy.linalg.lstsq (Debian python3-numpy) on the same design matrix.

Usage: check_fit_numpy.py DESIGN.nc COEFFS.txt separate|shared

DESIGN.nc is the file of `twingyre fit --dump-design` (variables design(row,
term), target(row), layer(row); attribute `terms`), COEFFS.txt the file the
same fit wrote with --method ols. For each layer (separate) or for all rows
(shared) the columns are scaled by their root-mean-square (the same problem;
lstsq's default cut-off for small singular values would otherwise act on
columns of very different units), solved by numpy's SVD least squares
(LAPACK gelsd), and un-scaled. Every coefficient must agree with the file's
to 1e-8 relative (the issue's tolerance). Prints "ok - ..."/"FAIL - ..."
lines and "N passed, M failed"; exits 0 only when nothing failed.

Part of twingyre. GPL-3.0-or-later.
"""
import sys

import netCDF4
import numpy as np


def main():
    design_path, coef_path, mode = sys.argv[1], sys.argv[2], sys.argv[3]
    with netCDF4.Dataset(design_path) as ds:
        X = np.array(ds.variables["design"][:], dtype=float)
        t = np.array(ds.variables["target"][:], dtype=float)
        layer = np.array(ds.variables["layer"][:], dtype=int)
        terms = ds.getncattr("terms").split()
    fitted = {}
    with open(coef_path) as f:
        for line in f:
            line = line.split("#", 1)[0].split()
            if len(line) >= 3:
                fitted[(line[0], line[1])] = float(line[2])
    npass = nfail = 0
    groups = [("all", np.ones_like(layer, dtype=bool))] if mode == "shared" else \
        [(str(k), layer == k) for k in sorted(set(layer.tolist()))]
    for name, rows in groups:
        A, b = X[rows], t[rows]
        scale = np.sqrt(np.mean(A * A, axis=0))
        c, _, rank, sv = np.linalg.lstsq(A / scale, b, rcond=None)
        c = c / scale
        worst, where = 0.0, ""
        for j, term in enumerate(terms):
            ours = fitted.get((name, term))
            if ours is None:
                print(f"FAIL - layer {name}: term {term} missing from {coef_path}")
                nfail += 1
                continue
            rel = abs(ours - c[j]) / max(abs(c[j]), 1e-300)
            if rel > worst:
                worst, where = rel, term
        cond = sv[0] / sv[-1]
        if worst <= 1e-8:
            print(f"ok - layer {name}: {len(terms)} coefficients agree with numpy.linalg.lstsq "
                  f"(largest relative difference {worst:.2e} at {where}; {rows.sum()} rows, "
                  f"condition number {cond:.3g})")
            npass += 1
        else:
            print(f"FAIL - layer {name}: relative difference {worst:.3e} at {where} "
                  f"(> 1e-8; condition number {cond:.3g})")
            nfail += 1
    print(f"{npass} passed, {nfail} failed")
    return 0 if nfail == 0 and npass > 0 else 1


if __name__ == "__main__":
    sys.exit(main())
