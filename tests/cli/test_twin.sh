#!/bin/bash
# test_twin.sh - command-line tests of `twingyre twin` and scripts/twin-report:
# a small twin completes in a basin and in the periodic domain; subgrid.nc,
# skill.csv and skill.json hold the documented variables and keys (read with
# Debian's python3-xarray and the json module); two skill values are
# recomputed from the files; the report builds with all its figures; bad
# [twin] settings (among them a coefficients: entry without a file or with
# one that does not load) are refused with file:line and exit status 2
# before anything is written; `run` ignores [twin].
#
# Environment: TWINGYRE (the program; default /tmp/twingyre), TG_SRCDIR (top
# of the source tree; default this script's ../..), PYTHON (default
# /usr/bin/python3), TG_TEST_TMPDIR (where the scratch directory goes).
#
# Prints "ok - ..." or "FAIL - ..." per check and as its last line
# "N passed, M failed"; exits 0 only when no check failed. Runs use one
# OpenMP thread so that the script stays short on a busy machine.
#
# Part of twingyre. GPL-3.0-or-later.

set -u

. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch twin
tg_need_program

# ---------------------------------------------------------------- configs
# A small invented basin: reference 65 points (15.6 km), coarse 17 (62.5 km).
{
    small_basin 65
    cat <<'EOF'

[initial]
state = noise
noise_amplitude_m2_per_s = 100
seed = 3

[stochastic_additive]
noise_amplitude_per_s2 = 1e-14

[twin]
reference_points = 65
coarse_points = 17
spinup_days = 20
analysis_days = 20
sample_every_days = 5
compare = smagorinsky, stochastic_additive
members = 2
filter = gaussian
filter_width_factor = 2

[twin.coarse]
dissipation.viscosity_m2_per_s = 1500
time.step_s = 7200
EOF
} >basin.ini

# A doubly periodic square with an imposed shear: 64 -> 16 points.
cat >periodic.ini <<'EOF'
[grid]
geometry = periodic
size_km = 1000
points = 64

[layers]
thickness_m = 1000, 3000
reduced_gravity_m_s2 = 0.02

[background]
zonal_velocity_m_s = 0.1, 0.0

[wind]
profile = none

[dissipation]
viscosity_m2_per_s = 0
hyperviscosity_m4_per_s = 1e10

[time]
step_s = 1800

[initial]
state = noise
noise_amplitude_m2_per_s = 1000

[twin]
reference_points = 64
coarse_points = 16
spinup_days = 10
analysis_days = 10
sample_every_days = 2.5
compare = leith
filter = sharp

[twin.coarse]
time.step_s = 3600
dissipation.hyperviscosity_m4_per_s = 1e11
EOF

# ---------------------------------------------------------------- a basin twin
tg twin basin.ini --out "$T/b"
if [ "$rc" -eq 0 ] && has "Skill of the coarse runs" "$T/out" && has "stochastic_additive member 1" "$T/out"; then
    ok "basin twin (65 -> 17 points) completes and prints the skill table"
else
    notok "basin twin (65 -> 17 points) completes and prints the skill table" "$(err_tail)"
fi
missing=""
for f in subgrid.nc skill.csv skill.json offline.nc coarse_start.nc reference/budget.nc \
    reference/window_start.nc reference/checkpoint.nc coarse-none/fields.nc \
    coarse-none/budget.nc coarse-smagorinsky/fields.nc coarse-stochastic_additive-member-0/fields.nc \
    coarse-stochastic_additive-member-1/budget.nc; do
    [ -s "$T/b/$f" ] || missing="$missing $f"
done
if [ -z "$missing" ]; then
    ok "basin twin writes subgrid.nc, the skill files, reference/ and one directory per coarse run and member"
else
    notok "basin twin writes subgrid.nc, the skill files, reference/ and one directory per coarse run and member" "missing:$missing"
fi
if ! grep -q "warning" "$T/err"; then
    ok "a [stochastic_additive] section used by [twin] compare draws no 'unused section' warning"
else
    notok "a [stochastic_additive] section used by [twin] compare draws no 'unused section' warning" "$(grep warning "$T/err")"
fi
if grep -q '^twingyre: \[1/6\] spin-up' "$T/err" && grep -q '^twingyre: \[2/6\] reference window' "$T/err" &&
    grep -q '^twingyre: \[6/6\] coarse stochastic_additive member 1: 100.0%' "$T/err" && has "left" "$T/err"; then
    ok "progress: lines per phase and member with the time left"
else
    notok "progress: lines per phase and member with the time left" "$(err_tail)"
fi

# subgrid.nc: the documented variables, units and CF metadata (xarray opens it).
cat >"$T/subgrid.py" <<'EOF'
import sys, numpy as np, xarray as xr
d = xr.open_dataset(sys.argv[1])
want = {"psi": "m2 s-1", "q": "s-1", "u": "m s-1", "v": "m s-1", "zeta": "s-1",
        "subgrid_forcing": "s-2", "subgrid_flux_x": "m s-2", "subgrid_flux_y": "m s-2",
        "ke_spectrum": "m3 s-2"}
for v, u in want.items():
    assert v in d.variables, f"missing {v}"
    assert d[v].attrs.get("units") == u, f"{v} units {d[v].attrs.get('units')}"
    assert d[v].attrs.get("long_name"), f"{v} has no long_name"
for v in ("psi", "q", "u", "v", "zeta", "subgrid_forcing", "subgrid_flux_x", "subgrid_flux_y"):
    assert d[v].dims == ("time", "layer", "y", "x"), f"{v} dims {d[v].dims}"
assert d.attrs["Conventions"] == "CF-1.8"
for a in ("coarsening_ratio", "filter", "filter_width_m", "resolved_config", "window_start_reference_day"):
    assert a in d.attrs, f"missing attribute {a}"
n = int(sys.argv[2])
assert d.sizes["time"] == n, f"{d.sizes['time']} samples, expected {n}"
assert d.sizes["x"] == int(sys.argv[3]) and d.sizes["layer"] == 2
assert int(d.attrs["coarsening_ratio"]) == 4
dx = float(d.x[1] - d.x[0])
assert abs(dx - float(sys.argv[4])) < 1e-6 * dx, f"coarse spacing {dx}"
S = d.subgrid_forcing.values
if sys.argv[5] == "basin":
    # S_q is defined on interior nodes only: the walls hold the fill value (NaN in xarray)
    assert np.isnan(S[:, :, 0, :]).all() and np.isnan(S[:, :, :, -1]).all()
    assert np.isfinite(S[:, :, 1:-1, 1:-1]).all()
else:
    assert np.isfinite(S).all()
assert np.abs(S[np.isfinite(S)]).max() > 0
days = d.time.dt.dayofyear.values - 1 + 365 * (d.time.dt.year.values - 1)
print("ok", days.tolist())
EOF
if py "$T/subgrid.py" "$T/b/subgrid.nc" 5 17 62500 basin; then
    ok "subgrid.nc opens in xarray with the documented variables, units, CF metadata and 5 samples"
else
    notok "subgrid.nc opens in xarray with the documented variables, units, CF metadata and 5 samples" "$(cat "$T/py")"
fi

# The coarse runs start from the coarse-grained reference and share its time axis.
cat >"$T/start.py" <<'EOF'
import sys, numpy as np
from netCDF4 import Dataset
top = sys.argv[1]
s = Dataset(f"{top}/subgrid.nc"); c = Dataset(f"{top}/coarse_start.nc")
f = Dataset(f"{top}/coarse-none/fields.nc")
a = s["psi"][0]; b = c["psi"][:]
assert np.max(np.abs(a - b)) == 0, "coarse_start.nc is not the first sample"
assert np.allclose(s["time"][:], f["time"][:], rtol=0, atol=1e-9), (s["time"][:], f["time"][:])
# the coarse run's first snapshot is that state (up to the inversion's wall and mass conditions)
d = np.max(np.abs(f["psi"][0] - a)) / np.max(np.abs(a))
assert d < 0.05, f"first snapshot differs by {d}"
print("ok", d)
EOF
if py "$T/start.py" "$T/b"; then
    ok "coarse runs start from the coarse-grained reference (coarse_start.nc = first sample) on the sample times"
else
    notok "coarse runs start from the coarse-grained reference (coarse_start.nc = first sample) on the sample times" "$(cat "$T/py")"
fi

# skill.json / skill.csv keys, and two metrics recomputed by hand from the files:
# the kinetic-energy ratio (sum of ke_spectrum times the bin width, time mean)
# and the pattern correlation of the time-mean psi with trapezoidal weights
# (definitions in src/numerics/skill.h; Wilks 2011, section 8.6.4, from memory).
cat >"$T/skill.py" <<'EOF'
import csv, json, math, sys
import numpy as np
from netCDF4 import Dataset
top, geometry, nruns = sys.argv[1], sys.argv[2], int(sys.argv[3])
j = json.load(open(f"{top}/skill.json"))
for k in ("format", "geometry", "layers", "reference_points", "coarse_points", "coarsening_ratio",
          "filter", "filter_width_m", "spinup_days", "analysis_days", "sample_every_days",
          "samples", "spectrum_bands_rad_per_m", "reference", "closures", "runs"):
    assert k in j, f"skill.json: no {k}"
assert j["geometry"] == geometry
assert len(j["runs"]) == nruns, len(j["runs"])
keys = ("layer", "kinetic_energy_ratio", "psi_pattern_correlation", "psi_normalized_rmse",
        "eke_pattern_correlation", "ke_spectrum_ratio", "jet_length_km", "jet_length_ratio",
        "offline_r2", "offline_correlation")
for r in j["runs"]:
    for k in ("name", "closure", "member", "directory", "status", "message", "layers"):
        assert k in r, f"run without {k}"
    assert r["status"] == "ok", r
    assert len(r["layers"]) == j["layers"]
    for L in r["layers"]:
        for k in keys:
            assert k in L, f"layer without {k}"
        assert len(L["ke_spectrum_ratio"]) == 4
        if geometry == "basin":
            assert L["jet_length_km"] is not None and L["jet_length_km"] > 0
        else:
            assert L["jet_length_km"] is None
        if r["closure"] != "none":
            assert L["offline_r2"] is not None and L["offline_correlation"] is not None
rows = list(csv.DictReader(open(f"{top}/skill.csv")))
assert len(rows) == nruns * j["layers"], len(rows)
for k in ("run", "directory", "closure", "member", "status", "layer", "kinetic_energy_ratio",
          "psi_pattern_correlation", "psi_normalized_rmse", "eke_pattern_correlation",
          "ke_spectrum_ratio_band1", "ke_spectrum_ratio_band4", "jet_length_km",
          "jet_length_reference_km", "jet_length_ratio", "offline_r2", "offline_correlation"):
    assert k in rows[0], f"skill.csv: no column {k}"
# By hand, for the run without closure, every layer.
s = Dataset(f"{top}/subgrid.nc"); f = Dataset(f"{top}/coarse-none/fields.nc")
dk = s["wavenumber"].bin_width
run = [r for r in j["runs"] if r["closure"] == "none"][0]
n = s["psi"].shape[-1]
w = np.ones(n)
if geometry == "basin":
    w[0] = w[-1] = 0.5
W = np.outer(w, w)
for l in range(j["layers"]):
    ke_ref = np.mean(np.sum(s["ke_spectrum"][:, l, :], axis=-1) * dk)
    ke_run = np.mean(np.sum(f["ke_spectrum"][:, l, :], axis=-1) * dk)
    ratio = ke_run / ke_ref
    got = run["layers"][l]["kinetic_energy_ratio"]
    assert abs(ratio - got) < 1e-8 * abs(ratio), (l, ratio, got)
    a = np.mean(f["psi"][:, l], axis=0); b = np.mean(s["psi"][:, l], axis=0)
    am = np.sum(W * a) / W.sum(); bm = np.sum(W * b) / W.sum()
    r = np.sum(W * (a - am) * (b - bm)) / math.sqrt(np.sum(W * (a - am) ** 2) * np.sum(W * (b - bm) ** 2))
    got = run["layers"][l]["psi_pattern_correlation"]
    assert abs(r - got) < 1e-8, (l, r, got)
print("ok")
EOF
if py "$T/skill.py" "$T/b" basin 4; then
    ok "skill.json and skill.csv hold the documented keys; KE ratio and psi correlation match a hand computation"
else
    notok "skill.json and skill.csv hold the documented keys; KE ratio and psi correlation match a hand computation" "$(cat "$T/py")"
fi

# The report: report.html with all its figures.
if "$PYTHON" "$TG_SRCDIR/scripts/twin-report" "$T/b" >"$T/rep" 2>&1; then
    bad=""
    for p in report-psi.png report-eke.png report-energy.png report-spectra.png report-offline.png; do
        if [ ! -s "$T/b/$p" ] || [ "$(head -c 4 "$T/b/$p" | tail -c 3)" != "PNG" ] || ! has "src=\"$p\"" "$T/b/report.html"; then
            bad="$bad $p"
        fi
    done
    if [ -z "$bad" ] && has "$T/b/report.html" "$T/rep" && has "offline R2" "$T/b/report.html"; then
        ok "scripts/twin-report writes report.html with its five figures and the skill table"
    else
        notok "scripts/twin-report writes report.html with its five figures and the skill table" "bad:$bad" "$(cat "$T/rep")"
    fi
else
    notok "scripts/twin-report writes report.html with its five figures and the skill table" "$(cat "$T/rep")"
fi

# A second twin into the same directory is refused without --overwrite.
tg twin basin.ini --out "$T/b" --quiet
if [ "$rc" -eq 3 ] && has "already exists" "$T/err" && has "--overwrite" "$T/err"; then
    ok "twin refuses to replace an earlier twin's output without --overwrite (exit 3)"
else
    notok "twin refuses to replace an earlier twin's output without --overwrite (exit 3)" "$(err_tail)"
fi

# ---------------------------------------------------------------- a periodic twin
tg twin periodic.ini --out "$T/p" --quiet
if [ "$rc" -eq 0 ] && py "$T/subgrid.py" "$T/p/subgrid.nc" 5 16 62500 periodic &&
    py "$T/skill.py" "$T/p" periodic 2; then
    ok "periodic twin (64 -> 16 points, sharp filter) completes; subgrid.nc and skill files as documented; no jet length"
else
    notok "periodic twin (64 -> 16 points, sharp filter) completes; subgrid.nc and skill files as documented; no jet length" "$(err_tail)" "$(cat "$T/py")"
fi

# ---------------------------------------------------------------- bad settings
# expect_bad NAME WHAT SED-EXPRESSION WORDS...: the edited basin config is
# refused with exit 2, the words in the message, and nothing written.
expect_bad() {
    local name=$1 what=$2 expr=$3
    shift 3
    sed "$expr" basin.ini >"$name.ini"
    tg twin "$name.ini" --out "$T/bad-$name"
    local missing="" w
    for w in "$@"; do
        has "$w" "$T/err" || missing="$missing '$w'"
    done
    if [ "$rc" -eq 2 ] && [ -z "$missing" ] && [ ! -e "$T/bad-$name" ]; then
        ok "$what: exit 2, message names it, nothing written"
    else
        notok "$what: exit 2, message names it, nothing written" "$(err_tail)" "missing words:$missing"
    fi
}
expect_bad same "coarse_points equal to reference_points" 's/^coarse_points = 17/coarse_points = 65/' \
    "same.ini:" "[twin] coarse_points" "integer multiple r >= 2"
expect_bad finer "coarse grid finer than the reference" 's/^coarse_points = 17/coarse_points = 129/' \
    "[twin] coarse_points" "integer multiple"
expect_bad form "coarse_points not 2^k + 1" 's/^coarse_points = 17/coarse_points = 20/' \
    "[twin] coarse_points" "2^k + 1" "20"
expect_bad fixed "[twin.coarse] overriding grid.points" 's/^time.step_s = 7200/grid.points = 17/' \
    "fixed.ini:" "[twin.coarse] grid.points" "cannot be overridden"
expect_bad unknown "[twin.coarse] override with an unknown key" \
    's/^dissipation.viscosity_m2_per_s = 1500/dissipation.viscosity = 1500/' \
    "unknown.ini:" "[twin.coarse] dissipation.viscosity" "did you mean"
expect_bad name "[twin] compare with a misspelt closure" \
    's/^compare = smagorinsky,/compare = smagorinksy,/' "[twin] compare" "did you mean smagorinsky"
expect_bad fitnone "[twin] compare entry coefficients: without a file" \
    's/^compare = smagorinsky,/compare = coefficients:, smagorinsky,/' "[twin] compare" \
    "coefficients: needs a file"
expect_bad fitmissing "[twin] compare with a coefficients file that does not load" \
    's/^compare = smagorinsky,/compare = coefficients:nowhere.txt, smagorinsky,/' \
    "[twin] compare" "nowhere.txt" "does not load"
expect_bad sample "sample interval not a whole number of coarse steps" \
    's/^sample_every_days = 5/sample_every_days = 0.125/' "[twin] sample_every_days" "coarse steps"
expect_bad window "window not a whole number of samples" \
    's/^analysis_days = 20/analysis_days = 22/' "[twin] analysis_days" "sample intervals"

# ---------------------------------------------------------------- run ignores [twin]
tg run basin.ini --out "$T/plain" --set time.duration_days=1 --set output.snapshot_every_days=1
if [ "$rc" -eq 0 ] && ! grep -qF "[twin" "$T/err" && ! grep -q "reference_points" "$T/err" &&
    [ -s "$T/plain/fields.nc" ]; then
    ok "run ignores the [twin] sections of a config without a message"
else
    notok "run ignores the [twin] sections of a config without a message" "$(err_tail)"
fi

finish
