#!/bin/bash
# testlib.sh - the helpers every shell test of twingyre shares (tests/cli/*.sh
# and tests/crosscheck/run_*.sh); sourced, not run:
#     . "$(dirname "${BASH_SOURCE[0]}")/testlib.sh"            (tests/cli)
#     . "$(dirname "${BASH_SOURCE[0]}")/../cli/testlib.sh"     (tests/crosscheck)
#
# On sourcing it sets the environment defaults:
#   TWINGYRE        the program (default /tmp/twingyre)
#   TG_SRCDIR       top of the source tree (default this file's ../..)
#   TG_BUILDDIR     top of the build tree (default TG_SRCDIR)
#   PYTHON          default /usr/bin/python3 (Debian's numpy, netCDF4, xarray)
#   OMP_NUM_THREADS 1 (set tg_omp_from_env=1 before sourcing to keep the
#                   caller's value when it has one); OMP_WAIT_POLICY passive
#                   unless set
# and offers:
#   ok NAME / notok NAME [DETAIL...]   one TAP-like line ("ok - ..." or
#                   "FAIL - ..." with "#   " detail lines); counts npass/nfail
#   check NAME STATUS [DETAIL...]      ok when STATUS is 0, else notok
#   finish          prints "N passed, M failed" and exits 0 only when none failed
#   skip REASON     prints "SKIP - REASON" and exits 77 (automake's skip)
#   tg_scratch NAME makes the scratch folder $T (twingyre-NAME.XXXXXX under
#                   $TG_TEST_TMPDIR, else $TMPDIR or /tmp), removed at exit
#                   unless TG_KEEP_TMP=1, after running the functions listed
#                   in tg_cleanup_hooks; INT/TERM exit 130; cds into $T
#   tg_need_program [FILE...]          FAIL and finish unless $TWINGYRE is
#                   executable (and every FILE exists)
#   tg ARGS...      runs the program: status in rc, stdout $T/out, stderr $T/err
#   err_tail        the last run's status and its last $err_tail_lines
#                   (default 8) stderr lines, for failure details
#   has TEXT FILE   FILE holds TEXT (fixed string)
#   py ARGS...      runs $PYTHON, output in $T/py
#   ini_get FILE SECTION KEY           a value written in a config file
#   calc EXPR       floating-point arithmetic (awk, %.17g)
#   close_to GOT WANT RELTOL           |GOT - WANT| <= RELTOL |WANT|
#   dir_state DIR   names and checksums of every file in DIR (or "absent")
#   one_layer_basin the one-layer 33-point basin the vet, usability and network tests use
#   small_basin POINTS [VISCOSITY [STEP_S]]   the start of the small invented
#                   basin config the twin, fit and sweep tests share
#   tiny_twin SPINUP_DAYS ANALYSIS_DAYS       a whole twin config on it
#                   (33 -> 17 points) whose subgrid.nc takes a second
#   one_layer_basin the one-layer 33-point basin of the vet and usability
#                   tests
#
# Part of twingyre. GPL-3.0-or-later.

TWINGYRE=${TWINGYRE:-/tmp/twingyre}
TG_SRCDIR=${TG_SRCDIR:-$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)}
TG_BUILDDIR=${TG_BUILDDIR:-$TG_SRCDIR}
PYTHON=${PYTHON:-/usr/bin/python3}
if [ "${tg_omp_from_env:-0}" = 1 ]; then
    export OMP_NUM_THREADS=${OMP_NUM_THREADS:-1}
else
    export OMP_NUM_THREADS=1
fi
export OMP_WAIT_POLICY=${OMP_WAIT_POLICY:-passive}

# ---------------------------------------------------------------- reporting
npass=0
nfail=0
ok() { npass=$((npass + 1)); echo "ok - $1"; }
notok() {
    nfail=$((nfail + 1))
    echo "FAIL - $1"
    shift
    local l
    for l in "$@"; do
        printf '%s\n' "$l" | sed 's/^/#   /'
    done
}
check() { # check NAME CONDITION-STATUS [details...]
    local name=$1 st=$2
    shift 2
    if [ "$st" -eq 0 ]; then ok "$name"; else notok "$name" "$@"; fi
}
finish() {
    echo "$npass passed, $nfail failed"
    [ "$nfail" -eq 0 ]
    exit $?
}
skip() {
    echo "SKIP - $1"
    exit 77
}

# ---------------------------------------------------------------- scratch
tg_cleanup_hooks=()
tg_cleanup() {
    local h
    for h in "${tg_cleanup_hooks[@]}"; do
        "$h"
    done
    [ "${TG_KEEP_TMP:-0}" = 1 ] || rm -rf "$T"
}
tg_scratch() { # NAME
    local parent=${TG_TEST_TMPDIR:-${TMPDIR:-/tmp}}
    mkdir -p "$parent"
    T=$(mktemp -d "$parent/twingyre-$1.XXXXXX") || {
        notok "create a scratch directory in $parent"
        finish
    }
    trap tg_cleanup EXIT
    trap 'exit 130' INT TERM
    cd "$T" || exit 1
}
tg_need_program() { # [FILE...]: also required to exist
    if [ ! -x "$TWINGYRE" ]; then
        notok "the program $TWINGYRE exists and is executable"
        finish
    fi
    local f
    for f in "$@"; do
        if [ ! -e "$f" ]; then
            notok "$f exists"
            finish
        fi
    done
}

# ---------------------------------------------------------------- running
tg() {
    "$TWINGYRE" "$@" >"$T/out" 2>"$T/err"
    rc=$?
}
err_tail() { echo "exit status $rc; stderr:"; tail -n "${err_tail_lines:-8}" "$T/err"; }
has() { grep -qF -- "$1" "$2"; }
py() { "$PYTHON" "$@" >"$T/py" 2>&1; }

# ---------------------------------------------------------------- values
# ini_get FILE SECTION KEY: a value written in a config file.
ini_get() {
    awk -v sec="[$2]" -v key="$3" '
        /^\[/ { cur = $0; next }
        cur == sec {
            split($0, kv, "=")
            k = kv[1]; gsub(/[ \t]/, "", k)
            if (k == key) { v = substr($0, index($0, "=") + 1); gsub(/^[ \t]+|[ \t]+$/, "", v); print v }
        }' "$1"
}

# calc EXPR: floating-point arithmetic.
calc() { awk "BEGIN { printf \"%.17g\n\", $1 }"; }

# close_to GOT WANT RELTOL
close_to() {
    awk -v g="$1" -v w="$2" -v t="$3" 'BEGIN {
        if (g == "" || w == "") exit 1
        d = g - w; if (d < 0) d = -d; a = w < 0 ? -w : w
        exit !(d <= t * a) }'
}

# dir_state DIR: names and checksums of every file in DIR (or "absent").
dir_state() {
    if [ -e "$1" ]; then
        (cd "$1" && find . -type f | LC_ALL=C sort | xargs -r md5sum)
    else
        echo absent
    fi
}

# ---------------------------------------------------------------- configs
# small_basin POINTS [VISCOSITY [STEP_S]]: prints the start of the small
# invented basin the twin, fit and sweep tests share: 1000 km, two layers
# (1000 + 3000 m, reduced gravity 0.02 m s-2), double-gyre wind of 0.1 Pa,
# bottom drag 1e-7 s-1, viscosity (default 300 m2 s-1) and time step
# (default 3600 s). It ends inside [time], so the caller may add time keys
# before its own sections.
small_basin() {
    cat <<EOF
[grid]
geometry = basin
size_km = 1000
points = $1

[layers]
thickness_m = 1000, 3000
reduced_gravity_m_s2 = 0.02

[wind]
profile = double_gyre
stress_amplitude_pa = 0.1

[dissipation]
bottom_drag_per_s = 1e-7
viscosity_m2_per_s = ${2:-300}

[time]
step_s = ${3:-3600}
EOF
}

# tiny_twin SPINUP_DAYS ANALYSIS_DAYS [REFERENCE_POINTS COARSE_POINTS]:
# prints a whole twin config on small_basin REFERENCE_POINTS (noise start,
# seed 3): reference -> coarse points (default 33 -> 17), Gaussian filter
# of width factor 2, samples every 2 days, no closure compared, coarse
# viscosity 600 m2 s-1 and step 7200 s.
tiny_twin() {
    small_basin "${3:-33}"
    cat <<EOF

[initial]
state = noise
noise_amplitude_m2_per_s = 100
seed = 3

[twin]
reference_points = ${3:-33}
coarse_points = ${4:-17}
spinup_days = $1
analysis_days = $2
sample_every_days = 2
compare = none
filter = gaussian
filter_width_factor = 2

[twin.coarse]
dissipation.viscosity_m2_per_s = 600
time.step_s = 7200
EOF
}

# one_layer_basin: one layer, 33 points over 1280 km (dx = 40 km), a weak
# double-gyre wind, viscosity 200 m2 s-1, a 3600 s step, max_cfl 0.8 and a
# noise start (seed 5): a config small enough for the vet battery in
# seconds.
one_layer_basin() {
    cat <<'EOF'
[grid]
geometry = basin
size_km = 1280
points = 33

[layers]
thickness_m = 4000
reduced_gravity_m_s2 =

[wind]
stress_amplitude_pa = 0.05

[dissipation]
viscosity_m2_per_s = 200

[time]
step_s = 3600
max_cfl = 0.8

[initial]
state = noise
noise_amplitude_m2_per_s = 100
seed = 5
EOF
}
