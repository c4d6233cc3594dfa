#!/bin/bash
# test_closure_budget.sh - a short eddying two-layer basin run with a
# composite closure (smagorinsky + backscatter + stochastic_additive +
# thickness_diffusion) keeps every per-component term and the total budget
# closed: in every budget.nc record,
#   - energy_closure equals the sum of energy_closure_NAME (round-off),
#     and likewise per layer for enstrophy;
#   - |energy_residual| <= 1e-3 of the largest energy term, and per layer
#     |enstrophy_residual| <= 1e-3 of the largest enstrophy term.
# The 1e-3 threshold is the project's stated budget rule (README, "Output");
# closing to the time-stepping error is common practice for a conservative
# scheme with exact term-by-term accounting.
#
# Environment: TWINGYRE, TG_SRCDIR, PYTHON, TG_TEST_TMPDIR. Last line:
# "N passed, M failed".
#
# Part of twingyre. GPL-3.0-or-later.
set -u
tg_omp_from_env=1
. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch closure-budget

cat >"$T/c.ini" <<'INI'
[grid]
size_km = 1920
points = 65
[wind]
stress_amplitude_pa = 0.2
[dissipation]
viscosity_m2_per_s = 400
[time]
step_s = 3600
duration_days = 40
[initial]
state = noise
noise_amplitude_m2_per_s = 20000
[output]
snapshot_every_days = 20
log_every_days = 40
[closure]
use = smagorinsky, backscatter, stochastic_additive, thickness_diffusion
[stochastic_additive]
noise_amplitude_per_s2 = 1e-12
INI
if ! "$TWINGYRE" run "$T/c.ini" --out "$T/out" --quiet >"$T/log" 2>&1; then
    notok "the composite-closure run completes" "$(tail -n 5 "$T/log")"
    finish
fi
"$PYTHON" - "$T/out/budget.nc" <<'PY'
import sys
import numpy as np
import netCDF4
b = netCDF4.Dataset(sys.argv[1])
names = ["smagorinsky", "backscatter", "stochastic_additive", "thickness_diffusion"]
npass = nfail = 0
def check(ok, what):
    global npass, nfail
    print(("ok - " if ok else "FAIL - ") + what)
    if ok: npass += 1
    else: nfail += 1
get = lambda v: np.asarray(b[v][:], dtype=float)
present = all("energy_closure_" + n in b.variables and "enstrophy_closure_" + n in b.variables for n in names)
check(present, "budget.nc has energy_closure_NAME and enstrophy_closure_NAME for every component")
if present:
    esum = sum(get("energy_closure_" + n) for n in names)
    etot = get("energy_closure")
    check(np.all(np.abs(esum - etot) <= 1e-12 * np.abs(etot).max() + 1e-300),
          "energy_closure is the sum of the components in every record")
    zsum = sum(get("enstrophy_closure_" + n) for n in names)
    ztot = get("enstrophy_closure")
    check(np.all(np.abs(zsum - ztot) <= 1e-12 * np.abs(ztot).max() + 1e-300),
          "enstrophy_closure is the sum of the components in every record and layer")
    for n in names:
        check(np.abs(get("energy_closure_" + n)).max() > 0, "component %s is active" % n)
eterms = [v for v in b.variables if v.startswith("energy_") and v not in ("energy_tendency", "energy_residual")
          and not v.startswith("energy_closure_")]
ebig = np.max(np.abs(np.stack([get(v) for v in eterms])), axis=0)
eres = np.abs(get("energy_residual"))
check(np.all(eres <= 1e-3 * ebig), "energy residual below 1e-3 of the largest term in every record (worst %.1e)"
      % float(np.max(eres / ebig)))
zterms = [v for v in b.variables if v.startswith("enstrophy_") and v not in ("enstrophy_tendency", "enstrophy_residual")
          and not v.startswith("enstrophy_closure_")]
zbig = np.max(np.abs(np.stack([get(v) for v in zterms])), axis=0)
zres = np.abs(get("enstrophy_residual"))
check(np.all(zres <= 1e-3 * zbig), "enstrophy residual below 1e-3 of the largest term in every record and layer (worst %.1e)"
      % float(np.max(zres / zbig)))
print("%d passed, %d failed" % (npass, nfail))
sys.exit(1 if nfail else 0)
PY
