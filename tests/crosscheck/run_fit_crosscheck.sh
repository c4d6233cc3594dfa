#!/bin/bash
# run_fit_crosscheck.sh - the least-squares coefficients of `twingyre fit`
# against numpy.linalg.lstsq (Debian python3-numpy) on the same design
# matrix, to 1e-8 relative: a tiny twin (65 -> 33 points, 6 samples) gives
# a subgrid.nc; `twingyre fit --method ols --dump-design` is run per layer
# on six terms, shared across layers on the same six, and per layer on the
# whole library (no two of its terms are equal on the grid, so its Gram
# matrix has full rank); tests/crosscheck/check_fit_numpy.py solves each dumped design
# matrix independently and compares.
#
# Environment: TWINGYRE, TG_SRCDIR, PYTHON (default /usr/bin/python3),
# TG_TEST_TMPDIR. The last line printed is "N passed, M failed".
#
# Part of twingyre. GPL-3.0-or-later.
set -u
. "$(dirname "${BASH_SOURCE[0]}")/../cli/testlib.sh"
tg_scratch fitcheck
{
    small_basin 65
    cat <<'EOF'

[initial]
state = noise
noise_amplitude_m2_per_s = 100

[twin]
reference_points = 65
coarse_points = 33
spinup_days = 10
analysis_days = 10
sample_every_days = 2
compare = none

[twin.coarse]
dissipation.viscosity_m2_per_s = 600
time.step_s = 7200
EOF
} >"$T/twin.ini"
if ! "$TWINGYRE" twin "$T/twin.ini" --out "$T/tw" --quiet >"$T/log" 2>&1; then
    cat "$T/log"
    notok "the tiny twin for the cross-check"
    finish
fi
terms=zeta,lap_zeta,lap2_zeta,jac_psi_lapzeta,div_gradu_gradzeta,div_absgradzeta_gradzeta
run_case() { # NAME MODE fit-options...
    local name=$1 mode=$2
    shift 2
    if ! "$TWINGYRE" fit "$T/tw/subgrid.nc" --out "$T/$name.txt" --method ols \
        --dump-design "$T/$name.nc" --quiet "$@" >"$T/log" 2>&1; then
        cat "$T/log"
        echo "FAIL - $name: twingyre fit"
        nfail=$((nfail + 1))
        return
    fi
    "$PYTHON" "$TG_SRCDIR/tests/crosscheck/check_fit_numpy.py" "$T/$name.nc" "$T/$name.txt" "$mode" >"$T/py" 2>&1
    local st=$?
    sed "s/^/$name: /" "$T/py"
    if [ $st -eq 0 ]; then npass=$((npass + 1)); else nfail=$((nfail + 1)); fi
}
run_case separate separate --terms "$terms"
run_case shared shared --terms "$terms" --layers shared
run_case library separate
finish
