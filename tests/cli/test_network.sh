#!/bin/bash
# test_network.sh - command-line tests of the closure "network"
# (closures/network.c, closures/network_torch.cc, scripts/train-network).
# The networks are written at test time by tests/unit/make_network.py and
# scripts/train-network (Debian's python3-torch).
#   - `twingyre closures` lists network;
#   - bad networks: a missing file, a file that is not TorchScript, a channel
#     count that does not match the inputs, a wrong output shape: each exits
#     2 with its message and writes nothing; a network returning NaN during
#     a run exits 5 naming the closure;
#   - the Laplacian network in flux form: budget.nc has
#     energy_closure_network and the budget closes (residual below 1e-3 of
#     the largest term, the project's budget rule in README "Output";
#     common practice for a scheme with exact term-by-term accounting);
#   - checkpoint and resume with a network (every_stage true and false):
#     the resumed run's last snapshot equals the uninterrupted run's bitwise;
#     every_stage = false changes the run; two runs with 2 threads are
#     bitwise equal;
#   - vet: a viscous Laplacian network passes; an anti-viscous one (A2 < 0:
#     negative viscosity feeds every mode; Holland 1978, J. Phys. Oceanogr.
#     8, 363-392, for the dissipative sign) fails with exit 9 and its linear
#     check names a growing mode;
#   - training: scripts/train-network on a small twin gives a held-out
#     R^2 above zero in every layer; `[twin] compare = network:FILE.pt`
#     runs it with skill rows labelled network-NAME (a missing or broken
#     network file there exits 2 before the reference runs); its vet at the
#     twin's coarse resolution, with vet's default 30-day window, passes every
#     check, the linear check around the reference state included (the
#     network trained with train-network's defaults, its stability penalty
#     on); the same training with --stability 0 ends with a larger linear
#     energy production (train-network's estimate) and a larger growth rate
#     in vet's linear check; vet's linear check gives the same growth rates
#     for a float32 network and its float64 copy (its finite differences
#     follow the closure's declared precision).
# Skips (77) in a build without libtorch unless TG_REQUIRE_TORCH=1.
#
# Environment: TWINGYRE, TG_SRCDIR, PYTHON, TG_TEST_TMPDIR, TG_TORCH_BUILT.
# Last line: "N passed, M failed".
#
# Part of twingyre. GPL-3.0-or-later.
set -u
. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
if [ "${TG_TORCH_BUILT:-no}" != yes ]; then
    if [ "${TG_REQUIRE_TORCH:-0}" = 1 ]; then
        notok "TG_REQUIRE_TORCH=1 but this build has no libtorch (./configure --with-torch)"
        finish
    fi
    skip "this build has no libtorch (./configure --with-torch; Debian: libtorch-dev)"
fi
tg_scratch network
tg_need_program
MAKE_NET="$TG_SRCDIR/tests/unit/make_network.py"
TRAIN="$TG_SRCDIR/scripts/train-network"

tg closures
if [ "$rc" -eq 0 ] && grep -q '^network' out && ! has "not in this build" out; then
    ok "twingyre closures lists network as available"
else
    notok "twingyre closures lists network as available" "$(err_tail)"
fi

# ---------------------------------------------------------------- configs
# one_layer_basin (testlib.sh): one layer, 33 points over 1280 km, dx = 40 km.
DX=40000
for k in laplacian flux channels shape nan; do
    "$PYTHON" "$MAKE_NET" "$k" "$k.pt" --layers 1 --dx "$DX" --a2 200 >py 2>&1 ||
        { notok "make_network.py $k" "$(cat py)"; finish; }
done
"$PYTHON" "$MAKE_NET" laplacian anti.pt --layers 1 --dx "$DX" --a2 -2000 >py 2>&1 ||
    { notok "make_network.py anti" "$(cat py)"; finish; }
echo "not a network" >text.pt
{
    one_layer_basin
    printf '\n[output]\nsnapshot_every_days = 5\ncheckpoint_every_days = 5\n'
    printf '\n[closure]\nuse = network\n\n[network]\nfile = laplacian.pt\n'
} >net.ini

# ---------------------------------------------------------------- bad networks
bad() { # NAME FILE WANT_STATUS PHRASE
    tg run net.ini --out "bad_$1" --set "network.file=$2" --set time.duration_days=2
    if [ "$rc" -eq "$3" ] && has "$4" err && { [ "$3" -ne 2 ] || [ ! -e "bad_$1" ]; }; then
        ok "$1: exit $3, the message names the fault$([ "$3" -eq 2 ] && echo ', nothing written')"
    else
        notok "$1: exit $3 with '$4'" "$(err_tail)" "$(ls "bad_$1" 2>&1)"
    fi
}
bad missing nowhere.pt 2 "nowhere.pt: cannot open the network file"
bad not-torchscript text.pt 2 "not a TorchScript network"
bad channels channels.pt 2 "to have 2 channels, but got 1 channels instead"
bad shape shape.pt 2 "the network returned 29 x 29 values per channel"
bad nan nan.pt 5 "closure network at step"

# ---------------------------------------------------------------- budget (flux form)
tg run net.ini --out flux --set network.file=flux.pt --set time.duration_days=20 --quiet
cat >budget.py <<'PY'
import sys
import numpy as np
import netCDF4
b = netCDF4.Dataset(sys.argv[1])
assert "energy_closure_network" in b.variables, "no energy_closure_network"
g = lambda v: np.asarray(b[v][:], dtype=float)
assert np.abs(g("energy_closure_network")).max() > 0, "the network does nothing"
terms = [v for v in b.variables if v.startswith("energy_") and v not in
         ("energy_tendency", "energy_residual") and not v.startswith("energy_closure_")]
big = np.max(np.abs(np.stack([g(v) for v in terms])), axis=0)
worst = float(np.max(np.abs(g("energy_residual")) / big))
assert worst <= 1e-3, "energy residual %.2e of the largest term" % worst
print("worst residual %.1e" % worst)
PY
if [ "$rc" -eq 0 ] && py budget.py flux/budget.nc; then
    ok "flux-form network: energy_closure_network in budget.nc, budget closes ($(cat py))"
else
    notok "flux-form network: energy_closure_network in budget.nc, budget closes" "$(err_tail)" \
        "$(cat py)"
fi

# ---------------------------------------------------------------- restart, repeatability
cat >same.py <<'PY'
import sys
import numpy as np
import netCDF4
a, b = netCDF4.Dataset(sys.argv[1]), netCDF4.Dataset(sys.argv[2])
for v in ("psi", "q"):
    x, y = np.asarray(a[v][-1]), np.asarray(b[v][-1])
    assert x.tobytes() == y.tobytes(), "%s differs: max %.3e" % (v, np.abs(x - y).max())
assert float(a["time"][-1]) == float(b["time"][-1])
PY
for stage in true false; do
    set -- --set network.file=flux.pt --set "network.every_stage=$stage" --quiet
    tg run net.ini --out "full_$stage" --set time.duration_days=10 "$@"
    r1=$rc
    tg run net.ini --out "half_$stage" --set time.duration_days=5 "$@"
    r2=$rc
    tg run net.ini --out "rest_$stage" --set time.duration_days=10 \
        --set "initial.state=half_$stage/checkpoint.nc" "$@"
    if [ "$r1" -eq 0 ] && [ "$r2" -eq 0 ] && [ "$rc" -eq 0 ] &&
        py same.py "full_$stage/fields.nc" "rest_$stage/fields.nc"; then
        ok "every_stage = $stage: a run resumed from a checkpoint ends bitwise equal"
    else
        notok "every_stage = $stage: a run resumed from a checkpoint ends bitwise equal" \
            "$(err_tail)" "$(cat py)"
    fi
done
if py same.py full_true/fields.nc full_false/fields.nc; then
    notok "every_stage = false changes the run (it holds the closure over a step)"
else
    ok "every_stage = false changes the run (it holds the closure over a step)"
fi
tg run net.ini --out thr2a --set time.duration_days=5 --threads 2 --quiet
ra=$rc
tg run net.ini --out thr2b --set time.duration_days=5 --threads 2 --quiet
if [ "$ra" -eq 0 ] && [ "$rc" -eq 0 ] && py same.py thr2a/fields.nc thr2b/fields.nc; then
    ok "two runs with 2 threads are bitwise equal"
else
    notok "two runs with 2 threads are bitwise equal" "$(err_tail)" "$(cat py)"
fi

# ---------------------------------------------------------------- vet
{
    one_layer_basin
    printf '\n[closure]\nuse = network\n\n[network]\nfile = laplacian.pt\n'
    printf '\n[vet]\nspinup_days = 30\nwindow_days = 10\nstep_factors = 1\n'
    printf 'multipliers = 0.5, 1, 2\n'
} >vet.ini
tg vet vet.ini --out vet_good
if [ "$rc" -eq 0 ] && has "every check passed" out; then
    ok "vet: a viscous Laplacian network passes"
else
    notok "vet: a viscous Laplacian network passes" "$(err_tail)" "$(tail -n 20 out)"
fi
tg vet vet.ini --out vet_anti --set network.file=anti.pt
if [ "$rc" -eq 9 ] && has "a mode of the closure alone grows" out; then
    ok "vet: an anti-viscous network fails (exit 9) with a growing mode named"
else
    notok "vet: an anti-viscous network fails (exit 9) with a growing mode named" "$(err_tail)" \
        "$(tail -n 20 out)"
fi

# ---------------------------------------------------------------- training
# The twin: tiny_twin (testlib.sh) with a 65-point reference and the
# 33-point coarse grid.
tiny_twin 60 40 65 33 >twin.ini
tg twin twin.ini --out tw --quiet
if [ "$rc" -ne 0 ]; then
    notok "the small twin runs" "$(err_tail)"
    finish
fi
"$PYTHON" "$TRAIN" tw/subgrid.nc --out small.pt --epochs 200 --train 0:14 --test 15:20 \
    >train.out 2>&1
trc=$?
cat >r2.py <<'PY'
import json, sys
r = json.load(open(sys.argv[1]))
assert r["train"] == "0:14" and r["test"] == "15:20", r
assert min(r["r2_test"]) > 0, r["r2_test"]
print("held-out R2 " + ", ".join("%.3f" % x for x in r["r2_test"]))
PY
if [ "$trc" -eq 0 ] && [ -s small.pt ] && py r2.py small.json; then
    ok "train-network: held-out R2 above zero in every layer ($(cat py))"
else
    notok "train-network: held-out R2 above zero in every layer" "$(tail -n 5 train.out)" \
        "$(cat py)"
fi
for f in nowhere.pt text.pt; do
    tg twin twin.ini --out "twbad_$f" --set "twin.compare=network:$T/$f"
    if [ "$rc" -eq 2 ] && [ ! -e "twbad_$f" ] && has "$T/$f" err; then
        ok "[twin] compare = network:$f: exit 2 before the reference runs, nothing written"
    else
        notok "[twin] compare = network:$f: exit 2 before the reference runs, nothing written" \
            "$(err_tail)"
    fi
done
sed 's/^compare = none/compare = network:small.pt/' twin.ini >twin2.ini
tg twin twin2.ini --out tw2 --quiet
if [ "$rc" -eq 0 ] && [ -d tw2/coarse-network-small ] && grep -q '^network-small' out; then
    ok "[twin] compare = network:small.pt runs, skill rows labelled network-small"
else
    notok "[twin] compare = network:small.pt runs, skill rows labelled network-small" \
        "$(err_tail)" "$(cat out)"
fi
"$PYTHON" -c 'import sys, netCDF4
with netCDF4.Dataset(sys.argv[1]) as d: sys.stdout.write(d.getncattr("resolved_config"))' \
    tw/coarse-none/fields.nc >coarse.ini
tg vet coarse.ini --out vet_small --set closure.use=network --set "network.file=$T/small.pt" \
    --set "vet.reference_state=$T/tw/coarse_start.nc" --set vet.step_factors=1 \
    --set vet.multipliers=1,2 --set vet.finer_grid=no
cat >vetall.py <<'PY'
import json, sys
d = json.load(open(sys.argv[1]))
v = {c["name"]: c["verdict"] for c in d["checks"]}
for n in ("linear_growth_reference", "online", "stability_margin"):
    assert v.get(n) == "pass", "%s: %s" % (n, v.get(n))
print("linear growth around the reference: pass")
PY
if [ "$rc" -eq 0 ] && py vetall.py vet_small/vet.json; then
    ok "vet of the trained network at the coarse resolution: every check passes ($(cat py))"
else
    notok "vet of the trained network at the coarse resolution: every check passes" \
        "$(err_tail)" "$(cat py)" "$(grep -E 'FAIL|verdict' out)"
fi
# vet's finite differences follow the network's precision: the same weights
# in float64 give the same linear growth rates (within 5 % of vet's limit)
# as the float32 file. The step is the square root of the tendency's
# relative rounding error (Knoll & Keyes 2004, J. Comput. Phys. 193,
# 357-397, section 2.2, from memory); with double precision's step the
# float32 differences are rounding noise.
"$PYTHON" -c 'import sys, torch
torch.jit.load(sys.argv[1]).double().save(sys.argv[2])' small.pt small64.pt >py 2>&1 ||
    notok "a float64 copy of the trained network" "$(cat py)"
tg vet coarse.ini --out vet_small64 --set closure.use=network \
    --set "network.file=$T/small64.pt" --set "vet.reference_state=$T/tw/coarse_start.nc" \
    --set vet.step_factors=1 --set vet.multipliers=1,2 --set vet.finer_grid=no
cat >prec.py <<'PY'
import json, sys
a, b = (json.load(open(f)) for f in sys.argv[1:3])
lim = [c["limit"] for c in a["checks"] if c["name"] == "linear_growth_reference"][0]
for w in ("rest", "reference"):
    x, y = (d["linear"][w]["growth_rate_per_day"] for d in (a, b))
    assert abs(x - y) <= 0.05 * lim, "%s: float32 %.3g, float64 %.3g day-1" % (w, x, y)
    print("%s %.2e/%.2e" % (w, x, y), end="; ")
PY
if [ "$rc" -le 9 ] && py prec.py vet_small/vet.json vet_small64/vet.json; then
    ok "vet's linear check: float32 and float64 copies agree ($(cat py))"
else
    notok "vet's linear check: float32 and float64 copies agree" "$(err_tail)" "$(cat py)"
fi
# The stability penalty does something: the same training without it
# (--stability 0) leaves a larger linear energy production (train-network's
# own estimate, the numerical-range bound of Trefethen & Embree 2005,
# Spectra and Pseudospectra, chapter 17, from memory) and a larger growth
# rate around the reference state in vet's linear check.
"$PYTHON" "$TRAIN" tw/subgrid.nc --out small0.pt --epochs 200 --train 0:14 --test 15:20 \
    --stability 0 >train0.out 2>&1
trc=$?
tg vet coarse.ini --out vet_small0 --set closure.use=network --set "network.file=$T/small0.pt" \
    --set "vet.reference_state=$T/tw/coarse_start.nc" --set vet.step_factors=1 \
    --set vet.multipliers=1,2 --set vet.finer_grid=no
cat >pen.py <<'PY'
import json, sys
on, off = json.load(open(sys.argv[1])), json.load(open(sys.argv[2]))
assert on["stability"] > 0 and off["stability"] == 0, (on["stability"], off["stability"])
p1, p0 = on["production_train_per_day"], off["production_train_per_day"]
assert p1 < p0, "production with the penalty %.3g, without %.3g day-1" % (p1, p0)
g1, g0 = (json.load(open(f))["linear"]["reference"]["growth_rate_per_day"] for f in sys.argv[3:5])
assert g1 < g0, "vet growth with the penalty %.3g, without %.3g day-1" % (g1, g0)
print("production %.2e < %.2e, vet growth %.2e < %.2e day-1" % (p1, p0, g1, g0))
PY
if [ "$trc" -eq 0 ] && [ "$rc" -le 9 ] &&
    py pen.py small.json small0.json vet_small/vet.json vet_small0/vet.json; then
    ok "the stability penalty lowers the linear energy production and vet's growth ($(cat py))"
else
    notok "the stability penalty lowers the linear energy production and vet's growth" \
        "$(tail -n 3 train0.out)" "$(err_tail)" "$(cat py)"
fi
finish
