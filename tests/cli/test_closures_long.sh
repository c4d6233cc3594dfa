#!/bin/bash
# test_closures_long.sh - every shipped closure scheme, at its documented
# defaults, runs two model years (730 days) of the 129-point Marrowind double
# gyre (configs/gyre-129.ini) without blowing up: exit status 0, a finite
# final energy, and a budget that still closes (|energy_residual| below 1e-3
# of the largest energy term in every record).
#
# The time step is raised to 3 hours (CFL stays below 0.2 in this flow) so
# that the whole set fits the test budget; two runs go at a time, one thread
# each. The stability claim is common practice for a closure test bench
# (a scheme must survive a long coarse run at its defaults); the budget rule
# is the one README states.
#
# Environment: TWINGYRE, TG_SRCDIR, PYTHON, TG_TEST_TMPDIR (see run_cli_tests.sh).
# The last line printed is "N passed, M failed".
#
# Part of twingyre. GPL-3.0-or-later.
set -u
. "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"
export OMP_WAIT_POLICY=passive
tg_scratch closures-long

CFG=$TG_SRCDIR/configs/gyre-129.ini
COMMON=(--set time.step_choice=fixed --set time.step_s=10800 --set time.duration_days=730 --set output.snapshot_every_days=365
        --set output.log_every_days=365 --set output.checkpoint_every_days=0 --quiet)

# name | extra --set options (the scheme at its defaults)
runs=()
while IFS= read -r name; do
    case "$name" in
        stochastic_scaling) runs+=("$name|closure.use=viscosity, stochastic_scaling|stochastic_scaling.target=viscosity") ;;
        coefficients) runs+=("$name|closure.use=coefficients|coefficients.file=$TG_SRCDIR/configs/coefficients-example.txt") ;;
        # A network needs its file: a Laplacian network (A2 = 200 m2 s-1 on
        # gyre-129's 30 km grid, two layers) made by tests/unit/make_network.py;
        # a build without libtorch has no network to run (test_network.sh
        # covers that build).
        network)
            [ "${TG_TORCH_BUILT:-no}" = yes ] || continue
            "$PYTHON" "$TG_SRCDIR/tests/unit/make_network.py" laplacian "$T/laplacian.pt" \
                --layers 2 --dx 30000 --a2 200 >"$T/make_network.log" 2>&1 ||
                { notok "make_network.py laplacian" "$(cat "$T/make_network.log")"; finish; }
            runs+=("$name|closure.use=network|network.file=$T/laplacian.pt") ;;
        *) runs+=("$name|closure.use=$name") ;;
    esac
done < <("$TWINGYRE" closures | sed -n 's/^\([a-z_0-9]*\)\( .*\)\{0,1\}$/\1/p' | grep -v '^$')

if [ "${#runs[@]}" -lt 1 ]; then
    notok "twingyre closures listed no scheme"
    finish
fi

start_run() {
    local spec=$1 name sets=() part
    IFS='|' read -r -a part <<<"$spec"
    name=${part[0]}
    for s in "${part[@]:1}"; do sets+=(--set "$s"); done
    "$TWINGYRE" run "$CFG" "${COMMON[@]}" "${sets[@]}" --out "$T/$name" >"$T/$name.log" 2>&1
    echo $? >"$T/$name.rc"
}

check_run() {
    local name=$1 rc
    rc=$(cat "$T/$name.rc")
    if [ "$rc" != 0 ]; then
        echo "FAIL - $name: two model years at its defaults (exit $rc)"
        tail -n 3 "$T/$name.log" | sed 's/^/#   /'
        nfail=$((nfail + 1))
        return
    fi
    if "$PYTHON" - "$T/$name/budget.nc" >"$T/$name.py" 2>&1 <<'PY'
import sys, math
import numpy as np
import netCDF4
b = netCDF4.Dataset(sys.argv[1])
e = np.asarray(b["energy"][:])
terms = [v for v in b.variables if v.startswith("energy_") and v not in ("energy_tendency", "energy_residual")
         and not v.startswith("energy_closure_")]
big = np.max(np.abs(np.stack([np.asarray(b[v][:]) for v in terms])), axis=0)
res = np.abs(np.asarray(b["energy_residual"][:]))
ok = math.isfinite(float(e[-1])) and np.all(res <= 1e-3 * big + 1e-300)
print("final energy %.4e, worst relative residual %.2e" % (e[-1], float(np.max(res / big))))
sys.exit(0 if ok else 1)
PY
    then
        echo "ok - $name: two model years at its defaults, $(cat "$T/$name.py")"
        npass=$((npass + 1))
    else
        echo "FAIL - $name: final energy finite and budget closed"
        sed 's/^/#   /' "$T/$name.py"
        nfail=$((nfail + 1))
    fi
}

# Two at a time.
i=0
while [ $i -lt ${#runs[@]} ]; do
    a=${runs[$i]}
    start_run "$a" &
    pa=$!
    if [ $((i + 1)) -lt ${#runs[@]} ]; then
        b=${runs[$((i + 1))]}
        start_run "$b" &
        pb=$!
        wait $pb
        check_run "${b%%|*}"
    fi
    wait $pa
    check_run "${a%%|*}"
    i=$((i + 2))
done
finish
