#!/bin/bash
# run_crosscheck.sh - runs a tiny `twingyre run` (33 x 33 points, two layers,
# 48 steps) and checks its fields.nc and budget.nc with an independent
# reader: tests/crosscheck/check_fields_xarray.py (xarray + cftime; CF-1.8
# metadata, time decoding).
#
# Environment: TWINGYRE (the program; default /tmp/twingyre), TG_SRCDIR (top
# of the source tree; default this script's ../..), PYTHON (default
# /usr/bin/python3), TG_TEST_TMPDIR (where the scratch directory goes;
# default $TMPDIR or /tmp).
#
# Prints the checker's lines; the last line is "N passed, M failed". Exits 0
# only when the run and every check passed.
#
# Part of twingyre. GPL-3.0-or-later.

set -u

here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
TWINGYRE=${TWINGYRE:-/tmp/twingyre}
TG_SRCDIR=${TG_SRCDIR:-$(cd "$here/../.." && pwd)}
PYTHON=${PYTHON:-/usr/bin/python3}
CHECKER=$TG_SRCDIR/tests/crosscheck/check_fields_xarray.py

export OMP_NUM_THREADS=${OMP_NUM_THREADS:-1}
export OMP_WAIT_POLICY=${OMP_WAIT_POLICY:-passive}

scratch_parent=${TG_TEST_TMPDIR:-${TMPDIR:-/tmp}}
T=$(mktemp -d "$scratch_parent/twingyre-crosscheck.XXXXXX") || {
    echo "FAIL - create a scratch directory in $scratch_parent"
    echo "0 passed, 1 failed"
    exit 1
}
trap 'rm -rf "$T"' EXIT
cd "$T" || exit 1

for f in "$TWINGYRE" "$CHECKER"; do
    if [ ! -e "$f" ]; then
        echo "FAIL - $f exists"
        echo "0 passed, 1 failed"
        exit 1
    fi
done

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

"$TWINGYRE" run "$T/tiny.ini" --out "$T/out" --quiet >"$T/run.out" 2>"$T/run.err"
rc=$?
if [ "$rc" -ne 0 ]; then
    echo "FAIL - twingyre run of the tiny config (exit status $rc)"
    sed 's/^/#   /' "$T/run.err" | tail -n 5
    echo "0 passed, 1 failed"
    exit 1
fi

"$PYTHON" "$CHECKER" "$T/out/fields.nc" "$T/out/budget.nc"
