#!/bin/bash
# test_vet.sh - command-line tests of `twingyre vet` on 33-point basins.
#
#   - constant biharmonic viscosity (closure `viscosity`, one layer) passes
#     every check (exit 0), and its reported largest stable step around
#     rest agrees within 5 % with the analytic one: the largest eigenvalue
#     magnitude of the discrete bi-Laplacian, A4 (8/dx^2)^2 sin^4((N-2)pi/
#     (2(N-1))) (five-point Laplacian with Dirichlet walls: LeVeque 2007,
#     Finite Difference Methods for ODEs and PDEs, section 3.4, from memory),
#     times the step must stay inside third-order Runge-Kutta's stability
#     interval on the negative real axis, 2.5127 (Durran 2010, Numerical
#     Methods for Fluid Dynamics, ch. 2);
#   - a deliberately unstable closure (tests/unit/plugin_antiviscous.c:
#     negative viscosity with no sink, falsely declared dissipative) fails
#     (exit 9) with the failed checks named in vet.json and on stdout:
#     linear growth, energy input, the online run and the stability margin;
#   - vet.json holds the documented fields (read with /usr/bin/python3 json)
#     and the same figures with 1 and 2 threads;
#   - bad [vet] settings are refused with file:line and exit 2, an existing
#     vet.json is not replaced without --overwrite (exit 3), and nothing is
#     written in either case.
#
# Environment: TWINGYRE, TG_SRCDIR, TG_BUILDDIR (for the plugin), PYTHON,
# TG_TEST_TMPDIR (see Makefile.am). Prints "ok - ..." or "FAIL - ..." per
# check and "N passed, M failed" last; exits 0 only when no check failed.
# One OpenMP thread keeps it short on a busy machine (a few seconds).
#
# Part of twingyre. GPL-3.0-or-later.

set -u

. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
tg_scratch vet
tg_need_program

# ---------------------------------------------------------------- configs
# One layer, 33 points over 1280 km (dx = 40 km): one_layer_basin (testlib.sh).
base() { one_layer_basin; }

{
    one_layer_basin
    cat <<'EOF'

[closure]
use = viscosity

[viscosity]
viscosity_m2_per_s = 0
hyperviscosity_m4_per_s = 1e10

[vet]
spinup_days = 30
window_days = 10
step_factors = 1, 2
multipliers = 1, 2, 4
EOF
} >biharmonic.ini

# ---------------------------------------------------------------- a passing closure
tg vet biharmonic.ini --out vb
if [ "$rc" -eq 0 ] && [ -s vb/vet.json ] && has "every check passed" out; then
    ok "constant biharmonic viscosity passes (exit 0)"
else
    notok "constant biharmonic viscosity passes (exit 0)" "$(err_tail)" "$(tail -n 25 out)"
fi

cat >check_bih.py <<'EOF'
import json, math, sys
d = json.load(open(sys.argv[1]))
# Analytic largest stable step: 2.5127 / (A4 max|lambda(lap_h^2)|), five-point
# Dirichlet Laplacian on N = 33 points, dx = 1280 km / 32 (Durran 2010, ch. 2).
N, dx, A4 = 33, 1280e3 / 32, 1e10
lam = (8.0 / dx**2) * math.sin((N - 2) * math.pi / (2 * (N - 1)))**2
analytic = 2.5127 / (A4 * lam**2)
got = d["linear"]["rest"]["largest_stable_step_s"]
rel = abs(got - analytic) / analytic
print("largest stable step %.6g s, analytic %.6g s, relative difference %.2e" % (got, analytic, rel))
assert rel < 0.05, rel
assert d["passed"] is True
assert all(c["verdict"] in ("pass", "info") for c in d["checks"]), d["checks"]
EOF
if py check_bih.py vb/vet.json; then
    ok "biharmonic: reported largest stable step within 5 % of 2.5127/(A4 max|lambda|) ($(cat py))"
else
    notok "biharmonic: reported largest stable step within 5 % of the analytic one" "$(cat py)"
fi

cat >check_fields.py <<'EOF'
import json, sys
d = json.load(open(sys.argv[1]))
for k in ("program", "command_line", "passed", "seconds", "settings", "reference", "linear",
          "conservation", "online", "checks"):
    assert k in d, k
s = d["settings"]
assert s["closure"] == "viscosity" and s["points"] == 33 and s["window_days"] == 7, s
assert s["step_factors"] == [1, 2] and s["multipliers"] == [1, 2, 4], s
for w in ("rest", "reference"):
    l = d["linear"][w]
    for k in ("krylov_dimension_used", "largest_magnitude_s-1", "growth_rate_s-1",
              "largest_stable_step_s", "configured_step_s", "ritz_values_s-1"):
        assert k in l, (w, k)
    assert len(l["ritz_values_s-1"]) == l["krylov_dimension_used"] > 0
for w in ("random", "eddying"):
    c = d["conservation"][w]
    assert c["energy_input_m2_s-3"] < 0, c
    assert len(c["integral_ratio"]) == 1 and len(c["enstrophy_input_s-3"]) == 1
runs = d["online"]["runs"]
# per step factor: the run without the closure and one per multiplier; then the finer grid
assert len(runs) == 2 * (1 + 3) + (1 + 3), len(runs)
assert sum(r["grid"] == "finer" for r in runs) == 4
assert all(r["points"] == 65 and r["step_s"] == 1800 for r in runs if r["grid"] == "finer")
assert all(r["stable"] for r in runs), [r for r in runs if not r["stable"]]
names = {c["name"] for c in d["checks"]}
for n in ("linear_growth_rest", "linear_growth_reference", "linear_step_rest",
          "linear_step_reference", "tendency_integral", "energy_input_random",
          "energy_input_eddying", "online", "stability_margin", "finer_online",
          "finer_stability_margin"):
    assert n in names, n
EOF
tg vet biharmonic.ini --out vf --set vet.window_days=7 --set vet.krylov_dimension=12
if [ "$rc" -eq 0 ] && py check_fields.py vf/vet.json; then
    ok "vet.json holds the documented fields; --set vet.KEY applies"
else
    notok "vet.json holds the documented fields; --set vet.KEY applies" "$(err_tail)" "$(cat py)"
fi

# The same figures with two threads (the model's sums have a fixed order;
# the Arnoldi dot products run on one thread).
tg vet biharmonic.ini --out vf2 --set vet.window_days=7 --set vet.krylov_dimension=12 --threads 2
cat >same.py <<'EOF'
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
for d in (a, b):
    d.pop("seconds"); d.pop("command_line")
assert a == b, "vet.json differs between 1 and 2 threads"
EOF
if [ "$rc" -eq 0 ] && py same.py vf/vet.json vf2/vet.json; then
    ok "vet.json is the same with 1 and 2 threads"
else
    notok "vet.json is the same with 1 and 2 threads" "$(err_tail)" "$(cat py)"
fi

# ---------------------------------------------------------------- an unstable closure
la="$TG_BUILDDIR/tests/unit/plugin_antiviscous.la"
dl=$(sed -n "s/^dlname='\(.*\)'/\1/p" "$la" 2>/dev/null)
if [ -z "$dl" ]; then
    ok "# SKIP the unstable plugin: no shared objects in this build ($la)"
else
    so="$TG_BUILDDIR/tests/unit/.libs/$dl"
    {
        one_layer_basin
        cat <<EOF

[closure]
use = plugin:$so

[plugin.antiviscous]
antiviscosity_m2_per_s = 2000

[vet]
spinup_days = 30
window_days = 10
step_factors = 1
multipliers = 0.5, 1, 2
EOF
    } >anti.ini
    tg vet anti.ini --out va
    if [ "$rc" -eq 9 ] && [ -s va/vet.json ] && has "FAILED" out; then
        ok "negative viscosity with no sink fails (exit 9)"
    else
        notok "negative viscosity with no sink fails (exit 9)" "$(err_tail)" "$(tail -n 25 out)"
    fi
    cat >check_anti.py <<'EOF'
import json, sys
d = json.load(open(sys.argv[1]))
assert d["passed"] is False
failed = {c["name"]: c for c in d["checks"] if c["verdict"] == "fail"}
print(" ".join(sorted(failed)))
for n in ("linear_growth_rest", "linear_growth_reference", "energy_input_random",
          "energy_input_eddying", "online", "stability_margin"):
    assert n in failed, n
    assert failed[n]["reason"], n
assert "grows" in failed["linear_growth_reference"]["reason"]
assert "adds energy" in failed["energy_input_random"]["reason"]
assert d["linear"]["reference"]["growth_rate_s-1"] > 0
run = [r for r in d["online"]["runs"] if r["grid"] == "configured" and r["multiplier"] == 1][0]
assert not run["stable"] and run["reason"], run
EOF
    if py check_anti.py va/vet.json && has "declared dissipative but adds energy" out &&
        has "a mode of the closure alone grows" out; then
        ok "the failed checks are named with their reasons ($(cat py))"
    else
        notok "the failed checks are named with their reasons" "$(cat py)" "$(tail -n 25 out)"
    fi
fi

# ---------------------------------------------------------------- bad input
bad() { # NAME EXPECTED-STATUS PHRASE -- config in bad.ini
    tg vet bad.ini --out "vbad_$1"
    if [ "$rc" -eq "$2" ] && has "$3" err && [ ! -e "vbad_$1" ]; then
        ok "bad input ($1): exit $2, '$3', nothing written"
    else
        notok "bad input ($1): exit $2, '$3', nothing written" "$(err_tail)"
    fi
}
{ one_layer_basin; printf '\n[closure]\nuse = viscosity\n\n[vet]\nmultipliers = 0.5, -1\n'; } >bad.ini
bad multipliers 2 "bad.ini:29: [vet] multipliers"
{ one_layer_basin; printf '\n[closure]\nuse = viscosity\n\n[vet]\nrequired_margin = 8\n'; } >bad.ini
bad margin 2 "bad.ini:29: [vet] required_margin"
{ one_layer_basin; printf '\n[closure]\nuse = viscosity\n\n[vet]\nreference_state = nowhere.nc\n'; } >bad.ini
bad reference 2 "bad.ini:29: [vet] reference_state: cannot open reference state file"
{ one_layer_basin; printf '\n[vet]\nwindow_days = 5\n'; } >bad.ini
bad no_closure 2 "vet needs a closure"
{ one_layer_basin; printf '\n[closure]\nuse = viscosity\n\n[vet]\nwindow_dayz = 5\n'; } >bad.ini
bad unknown_key 2 "did you mean [vet] window_days"

sum_before=$(cksum <vb/vet.json)
tg vet biharmonic.ini --out vb
if [ "$rc" -eq 3 ] && has "exists" err && [ "$(cksum <vb/vet.json)" = "$sum_before" ]; then
    ok "an existing vet.json is kept without --overwrite (exit 3)"
else
    notok "an existing vet.json is kept without --overwrite (exit 3)" "$(err_tail)"
fi

finish
