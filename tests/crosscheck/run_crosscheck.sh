#!/bin/bash
# run_crosscheck.sh - runs two tiny `twingyre run`s of two layers and 48
# steps each: a 33 x 33 basin with the default double-gyre wind, and a
# 32 x 32 doubly periodic domain with no wind and a vertically sheared
# background flow. Each run's fields.nc and budget.nc are checked with an
# independent reader, tests/crosscheck/check_fields_xarray.py (xarray +
# cftime: CF-1.8 metadata, time decoding, and the kinetic-energy spectrum
# summing to budget.nc's kinetic energy). The periodic case is run a second
# time with snapshots at the start and end only: its final state and final
# spectrum must be bitwise those of the first run, because taking snapshots
# (and computing their spectra) must not change the run (reproducibility;
# common practice).
#
# Environment: TWINGYRE (the program; default /tmp/twingyre), TG_SRCDIR (top
# of the source tree; default this script's ../..), PYTHON (default
# /usr/bin/python3), TG_TEST_TMPDIR (where the scratch directory goes;
# default $TMPDIR or /tmp).
#
# Prints the checker's lines prefixed by the case; the last line is
# "N passed, M failed" over all cases. Exits 0 only when every run and every
# check passed.
#
# Part of twingyre. GPL-3.0-or-later.

set -u

tg_omp_from_env=1
. "$(dirname "${BASH_SOURCE[0]}")/../cli/testlib.sh"
CHECKER=$TG_SRCDIR/tests/crosscheck/check_fields_xarray.py
tg_scratch crosscheck
tg_need_program "$CHECKER"

cat >"$T/tiny.ini" <<'EOF'
; tiny.ini - two days of a 33 x 33 two-layer basin, for the xarray cross-check.
[grid]
size_km = 1000
points = 33

[layers]
thickness_m = 1000, 3000
reduced_gravity_m_s2 = 0.02

[time]
step_s = 3600
duration_days = 2

[initial]
state = noise
seed = 5

[output]
directory = out
snapshot_every_days = 0.5
checkpoint_every_days = 0
log_every_days = 1
EOF

cat >"$T/tiny_periodic.ini" <<'EOF'
; tiny_periodic.ini - two days of a 32 x 32 doubly periodic two-layer domain
; with a vertically sheared background flow and no wind.
[grid]
geometry = periodic
size_km = 1000
points = 32

[layers]
thickness_m = 1000, 3000
reduced_gravity_m_s2 = 0.02

[background]
zonal_velocity_m_s = 0.05, 0.0

[wind]
profile = none

[time]
step_s = 3600
duration_days = 2

[initial]
state = noise
seed = 7

[output]
directory = out
snapshot_every_days = 0.5
checkpoint_every_days = 0
log_every_days = 1
EOF

passed=0
failed=0

# count_checker FILE: adds the "N passed, M failed" last line of FILE to the totals.
count_checker() {
    local last
    last=$(tail -n 1 "$1")
    if [[ $last =~ ^([0-9]+)\ passed,\ ([0-9]+)\ failed$ ]]; then
        passed=$((passed + BASH_REMATCH[1]))
        failed=$((failed + BASH_REMATCH[2]))
    else
        echo "FAIL - the checker's last line is a count (got: $last)"
        failed=$((failed + 1))
    fi
}

# run_case LABEL INI OUTDIR [ARGS...]: runs twingyre; returns 0 when it exited 0.
run_case() {
    local label=$1 ini=$2 out=$3
    shift 3
    "$TWINGYRE" run "$ini" --out "$out" --quiet "$@" >"$out.out" 2>"$out.err"
    local rc=$?
    if [ "$rc" -ne 0 ]; then
        echo "FAIL - $label: twingyre run (exit status $rc)"
        sed 's/^/#   /' "$out.err" | tail -n 5
        failed=$((failed + 1))
        return 1
    fi
    echo "PASS - $label: twingyre run"
    passed=$((passed + 1))
    return 0
}

# check_case LABEL OUTDIR: the xarray checks of OUTDIR/fields.nc and OUTDIR/budget.nc.
check_case() {
    "$PYTHON" "$CHECKER" "$2/fields.nc" "$2/budget.nc" >"$2.check" 2>&1
    sed "s/^/$1: /" "$2.check"
    count_checker "$2.check"
}

if run_case basin "$T/tiny.ini" "$T/out"; then
    check_case basin "$T/out"
fi

if run_case periodic "$T/tiny_periodic.ini" "$T/outp"; then
    check_case periodic "$T/outp"
    if run_case "periodic, snapshots at start and end only" "$T/tiny_periodic.ini" "$T/outp2" \
        --set output.snapshot_every_days=2; then
        "$PYTHON" - "$T/outp" "$T/outp2" >"$T/repro.check" 2>&1 <<'PYEOF'
import sys

import numpy as np
import xarray as xr

a, b = sys.argv[1], sys.argv[2]
npass = nfail = 0


def report(ok, what):
    global npass, nfail
    npass += ok
    nfail += not ok
    print(f"{'PASS' if ok else 'FAIL'} {what}")


with xr.open_dataset(a + "/checkpoint.nc", decode_times=False) as ca, \
        xr.open_dataset(b + "/checkpoint.nc", decode_times=False) as cb:
    for n in ("psi", "q", "time_seconds", "step"):
        report(bool(np.array_equal(ca[n].values, cb[n].values)), f"final {n} bitwise equal")
with xr.open_dataset(a + "/fields.nc", decode_times=False) as fa, \
        xr.open_dataset(b + "/fields.nc", decode_times=False) as fb:
    ta, tb = fa["time"].values, fb["time"].values
    report(ta.size == 5 and tb.size == 2 and ta[-1] == tb[-1] == 2.0,
           f"snapshot days {list(ta)} and {list(tb)} end together at day 2")
    report(bool(np.array_equal(fa["ke_spectrum"].values[-1], fb["ke_spectrum"].values[-1])),
           "final ke_spectrum bitwise equal")
print(f"{npass} passed, {nfail} failed")
PYEOF
        sed "s/^/periodic reproducibility: /" "$T/repro.check"
        count_checker "$T/repro.check"
    fi
fi

echo "$passed passed, $failed failed"
[ "$failed" -eq 0 ]
